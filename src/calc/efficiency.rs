//! Losses and efficiency over the load range at each DC point, the published weighted
//! efficiencies, and the ratings for the nameplate and the interconnection.
//!
//! At each load fraction k the leg current and its angle come from the filter's phasor
//! chain at that load ([`super::leg_current`]); the semiconductor losses from the same
//! model as `semiconductor` (a MOSFET's at the junction temperature they produce at the
//! highest ambient); the DC-link ESR loss from the bank's current at that load; the
//! inductor winding loss from the leg current; the bleeder, the damping resistor and
//! the auxiliary supplies as constant (assumption E13).

use super::dc_link::{bank_current, banks};
use super::given;
use super::leg_current::{leg_point, phases, LOAD_FRACTIONS};
use super::modulation::{short, DC_POINTS};
use super::thermal::StageModel;
use crate::record::Design;
use crate::sheet::{Sheet, Source};
use crate::standards::{efficiency::WEIGHTINGS, nec};
use crate::units::Unit;

/// The id suffix of a load fraction: `k5`, `k50`, `k100`.
pub fn load_tag(k: f64) -> String {
    format!("k{}", (k * 100.0).round() as i64)
}

/// The efficiency at DC point `point` and load fraction `k`, from the sheet.
pub fn efficiency_id(point: &str, k: f64) -> String {
    format!("efficiency.eta.{point}.{}", load_tag(k))
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    if let Some(model) = StageModel::of(d) {
        curve(d, s, &model);
    }
    ratings(s);
}

fn curve(d: &Design, s: &mut Sheet, model: &StageModel) {
    let t_a = d.thermal.as_ref().map_or(25.0, |t| t.ambient_max.value);
    if let Some(g) = &d.losses.inductor_resistance {
        given(
            s,
            "efficiency.r_l",
            "Filter inductor winding resistance, per phase",
            "R_L",
            g,
            Unit::Ohm,
        );
    }
    if let Some(g) = &d.losses.auxiliary_power {
        given(
            s,
            "efficiency.p_aux",
            "Auxiliary supplies: control, gate drives, fans",
            "P_\"aux\"",
            g,
            Unit::Watt,
        );
    }
    let p_rated = s.value("output.power");
    let n_ph = phases(d);
    let model_source = || {
        Source::common_practice(
            "the semiconductor loss model of this package at this load: the leg current and its angle from the filter's phasor chain at the load fraction, a MOSFET's losses at the junction temperature they reach at the highest ambient",
        )
    };
    for (key, label, _) in DC_POINTS {
        let sh = short(key);
        for &k in &LOAD_FRACTIONS {
            let tag = load_tag(k);
            let pct = (k * 100.0).round() as i64;
            let a = leg_point(d, s, key, k);
            let (_, l, _) = model.operate(&a, t_a);
            let semi_id = format!("efficiency.p_semi.{key}.{tag}");
            let p_semi = s
                .derive(
                    &semi_id,
                    &format!("Semiconductor loss at {pct} % load, {label}"),
                    &format!("P_(\"semi\",\"{sh},{pct}\")"),
                    Unit::Watt,
                )
                .formula(&format!("N_\"pos\" P_\"pos\"(k = {pct} %)"))
                .inputs(&["semi.positions"])
                .source(model_source())
                .value(model.positions * l.total());
            let mut parts = vec![(semi_id, p_semi)];
            if let Some(r) = &d.losses.inductor_resistance {
                let id = format!("efficiency.p_cu.{key}.{tag}");
                let ph = if n_ph > 1.0 { "3 " } else { "" };
                let v = s
                    .derive(&id, &format!("Inductor winding loss at {pct} % load, {label}"), &format!("P_(\"cu\",\"{sh},{pct}\")"), Unit::Watt)
                    .formula(&format!("{ph}(I_\"leg\"(k = {pct} %))^2 / 2 R_L"))
                    .inputs(&["efficiency.r_l"])
                    .source(Source::common_practice("winding loss of the fundamental current in the inductor's series resistance, per phase"))
                    .value(n_ph * a.i_pk * a.i_pk / 2.0 * r.value);
                parts.push((id, v));
            }
            if let Some(dc) = &d.dc_link {
                let id = format!("efficiency.p_cap.{key}.{tag}");
                let i = bank_current(d, s, key, k).total_rms();
                let two = if banks(d) > 1.0 { "2 " } else { "" };
                let v = s
                    .derive(&id, &format!("DC-link ESR loss at {pct} % load, {label}"), &format!("P_(\"ESR\",\"{sh},{pct}\")"), Unit::Watt)
                    .formula(&format!("{two}(I_C (k = {pct} %))^2 R_\"ESR\""))
                    .inputs(&["dclink.esr"])
                    .source(Source::common_practice("the DC-link bank's rms current at this load, computed as in the DC-link section, in its ESR"))
                    .value(banks(d) * i * i * dc.esr.value);
                parts.push((id, v));
                let bleed = format!("dclink.p_bleed.{key}");
                let v = s.value(&bleed);
                parts.push((bleed, v));
            }
            for id in ["filter.p_damping", "efficiency.p_aux"] {
                if let Some(q) = s.get(id) {
                    parts.push((id.to_string(), q.value));
                }
            }
            let loss_id = format!("efficiency.p_loss.{key}.{tag}");
            let syms: Vec<String> = parts.iter().map(|(id, _)| s.symbol(id)).collect();
            let ids: Vec<&str> = parts.iter().map(|(id, _)| id.as_str()).collect();
            let p_loss = s
                .derive(
                    &loss_id,
                    &format!("Total loss at {pct} % load, {label}"),
                    &format!("P_(\"loss\",\"{sh},{pct}\")"),
                    Unit::Watt,
                )
                .formula(&syms.join(" + "))
                .inputs(&ids)
                .value(parts.iter().map(|p| p.1).sum());
            let p_out = k * p_rated;
            s.derive(
                &efficiency_id(key, k),
                &format!("Efficiency at {pct} % load, {label}"),
                &format!("eta_(\"{sh}\",{pct})"),
                Unit::Percent,
            )
            .formula(&format!(
                "{pct} % P / ({pct} % P + P_(\"loss\",\"{sh},{pct}\"))"
            ))
            .inputs(&["output.power", &loss_id])
            .value(p_out / (p_out + p_loss));
        }
        for w in &WEIGHTINGS {
            let terms: Vec<(String, f64)> = w
                .points
                .iter()
                .map(|(k, wt)| (efficiency_id(key, *k), *wt))
                .collect();
            let formula: Vec<String> = terms
                .iter()
                .map(|(id, wt)| format!("{wt} {}", s.symbol(id)))
                .collect();
            let ids: Vec<&str> = terms.iter().map(|(id, _)| id.as_str()).collect();
            let value = w.weighted(|k| s.value(&efficiency_id(key, k)));
            let (name, sym) = match w.name {
                "cec" => ("CEC weighted efficiency", format!("eta_(\"CEC\",\"{sh}\")")),
                _ => (
                    "European weighted efficiency",
                    format!("eta_(\"EU\",\"{sh}\")"),
                ),
            };
            s.derive(
                &format!("efficiency.eta_{}.{key}", w.name),
                &format!("{name}, {label}"),
                &sym,
                Unit::Percent,
            )
            .formula(&formula.join(" + "))
            .inputs(&ids)
            .source(w.citation.source())
            .value(value);
        }
    }
}

/// The nameplate and interconnection ratings.
fn ratings(s: &mut Sheet) {
    let i_o = s.value("output.i_rms");
    s.derive("ratings.i_out", "Continuous output current (rms, per phase)", "I_\"cont\"", Unit::Ampere)
        .formula("I_o")
        .inputs(&["output.i_rms"])
        .source(Source::common_practice("the rated output current is the continuous current for the nameplate (the inverter may run at it for 3 h or more)"))
        .value(i_o);
    let v = s.value("dc.v_max");
    s.derive(
        "ratings.v_dc_max",
        "Maximum DC input voltage",
        "V_(\"dc\",\"np\")",
        Unit::Volt,
    )
    .formula("V_\"dc,max\"")
    .inputs(&["dc.v_max"])
    .value(v);
    let loss_id = "efficiency.p_loss.min.k100";
    let p = s.value("output.power");
    let v_min = s.value("dc.v_min");
    let name = "Maximum DC input current (rated power at the DC minimum)";
    match s.get(loss_id).map(|q| q.value) {
        Some(loss) => s
            .derive("ratings.i_dc_max", name, "I_(\"dc\",\"np\")", Unit::Ampere)
            .formula("(P + P_(\"loss\",\"min,100\")) / V_\"dc,min\"")
            .inputs(&["output.power", loss_id, "dc.v_min"])
            .value((p + loss) / v_min),
        None => s
            .derive("ratings.i_dc_max", name, "I_(\"dc\",\"np\")", Unit::Ampere)
            .formula("P / V_\"dc,min\"")
            .inputs(&["output.power", "dc.v_min"])
            .source(Source::common_practice("without the switches' data the losses are unknown: the output power over the DC minimum, an underestimate"))
            .value(p / v_min),
    };
    let needed = nec::CONTINUOUS * i_o;
    s.derive(
        "ratings.ocpd_min",
        "Least overcurrent device rating, 125 % of the continuous current",
        "I_(\"OCPD,min\")",
        Unit::Ampere,
    )
    .formula("1.25 I_\"cont\"")
    .inputs(&["ratings.i_out"])
    .source(nec::CONTINUOUS_FACTOR.source())
    .value(needed);
    let standard = nec::next_standard_rating(needed);
    if !standard.is_finite() {
        s.warn(
            "ratings.ocpd_min",
            "the overcurrent device needed is above the largest standard rating of NEC 240.6(A) (6000 A): it must be specified for this installation",
        );
        return;
    }
    s.derive(
        "ratings.ocpd",
        "Overcurrent device rating, next standard size (local codes govern)",
        "I_\"OCPD\"",
        Unit::Ampere,
    )
    .formula("\"next standard rating\" >= I_(\"OCPD,min\")")
    .inputs(&["ratings.ocpd_min"])
    .source(nec::STANDARD_RATINGS.source())
    .value(standard);
}
