//! Filter component stresses from the switching spectrum: the inverter-side inductor's
//! ripple current over the fundamental period (its envelope and maximum at each DC
//! point), its peak current, the capacitor's rms current (fundamental plus switching
//! lines) and the damping resistor's loss.
//!
//! The ripple is that of the inductor between the switch node and a sinusoidal
//! voltage (the capacitor voltage, or the grid source behind an L filter and the grid
//! inductance), assumption E6; it scales as V_dc / (L f_sw) by a factor k_n from the
//! exact PWM waveform ([`super::ripple`]).

use super::filter::filter_of;
use super::grid_filter::grid_filter_of;
use super::modulation::short;
use super::operating_point::load_cases;
use super::ripple;
use super::switching::{self, phase_factor, PointSpectrum};
use crate::record::{Design, FilterKind, Topology};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// The inductance that carries the ripple, its id list and its symbol.
fn ripple_inductance(d: &Design, s: &Sheet) -> (f64, Vec<&'static str>, &'static str) {
    match (d.output.grid(), d.filter.kind) {
        (true, FilterKind::L) => (
            s.value("filter.inductance") + s.value("grid.inductance"),
            vec!["filter.inductance", "grid.inductance"],
            "(L + L_g)",
        ),
        (true, _) => (
            s.value("filter.inductance"),
            vec!["filter.inductance"],
            "L_1",
        ),
        (false, _) => (s.value("filter.inductance"), vec!["filter.inductance"], "L"),
    }
}

fn envelope_source() -> Source {
    Source::common_practice(
        "ripple of the exact PWM waveform integrated over each carrier period against a sinusoidal filter voltage (assumption E6)",
    )
}

pub fn evaluate(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    if spectra.is_empty() {
        return;
    }
    let (l, l_ids, l_sym) = ripple_inductance(d, s);
    let f_sw = s.value("bridge.f_sw");
    let mut worst = (-1.0, String::new());
    for p in spectra {
        let (pwm, rounded) = switching::periodic(&p.pwm);
        let env = match ripple::ripple_envelope(&pwm) {
            Ok(env) => env,
            Err(e) => {
                s.warn(
                    "ripple.i_pp_max",
                    &format!(
                        "the ripple current was not evaluated at the {}: {e}",
                        p.label
                    ),
                );
                continue;
            }
        };
        if rounded && p.key == "nominal" {
            s.warn(
                "modulation.m_f",
                &format!(
                    "the carrier does not repeat within {} fundamental periods; the ripple and the waveform plots use the nearest carrier ratio that does, m_f = {}",
                    crate::calc::spectrum::MAX_PERIODS,
                    crate::units::format_number(pwm.m_f, 6)
                ),
            );
        }
        let tag = short(p.key);
        let k_id = format!("ripple.k_n.{}", p.key);
        let m_id = format!("modulation.m_a.{}", p.key);
        let m_sym = s.symbol(&m_id);
        s.derive(
            &k_id,
            &format!("Normalised largest ripple, {}", p.label),
            &format!("k_(n,\"{tag}\")"),
            Unit::One,
        )
        .formula(&format!(
            "max_theta Delta i_\"pp\"(theta, {m_sym}) L f_\"sw\" / V_\"dc\""
        ))
        .inputs(&[&m_id])
        .source(envelope_source())
        .value(env.max);
        let dc_id = p.dc_id;
        let dc_sym = s.symbol(dc_id);
        let id = format!("ripple.i_pp_max.{}", p.key);
        let mut inputs = vec![k_id.as_str(), dc_id, "bridge.f_sw"];
        inputs.extend(l_ids.iter().copied());
        let i_pp = env.max * p.v_dc / (l * f_sw);
        s.derive(
            &id,
            &format!(
                "Largest inductor ripple current (peak-to-peak), {}",
                p.label
            ),
            &format!("Delta i_(\"pp\",\"{tag}\")"),
            Unit::Ampere,
        )
        .formula(&format!("k_(n,\"{tag}\") {dc_sym} / ({l_sym} f_\"sw\")"))
        .inputs(&inputs)
        .value(i_pp);
        if i_pp > worst.0 {
            worst = (i_pp, id);
        }
    }
    if worst.0 < 0.0 {
        return;
    }
    let (i_pp, worst_id) = worst;
    let worst_sym = s.symbol(&worst_id);
    s.derive(
        "ripple.i_pp_max",
        "Largest inductor ripple current over the DC window (peak-to-peak)",
        "Delta i_\"pp,max\"",
        Unit::Ampere,
    )
    .formula(&worst_sym)
    .inputs(&[&worst_id])
    .value(i_pp);
    let i_pk = s.value("output.i_peak");
    s.derive(
        "ripple.fraction",
        "Largest ripple as a fraction of rated peak current",
        "k_\"ripple\"",
        Unit::Percent,
    )
    .formula("Delta i_\"pp,max\" / I_(o,\"pk\")")
    .inputs(&["ripple.i_pp_max", "output.i_peak"])
    .value(i_pp / i_pk);
    let lim = super::limit_quantity(
        s,
        "limits.max_ripple_fraction",
        "Largest ripple, fraction of rated peak current",
        "k_(\"ripple\",\"max\")",
        &d.limits.max_ripple_fraction,
        Unit::Percent,
    );
    s.check(
        "check.filter.ripple",
        "The inductor ripple current stays within its share of the rated peak current over the DC window",
        "ripple.fraction",
        Relation::AtMost,
        lim,
        super::limit_source(&d.limits.max_ripple_fraction),
    );
    let i_l1 = s.value("filter.i_l_f1");
    s.derive(
        "filter.i_l_peak",
        "Inductor peak current, rated load, with ripple",
        "I_(L,\"pk\")",
        Unit::Ampere,
    )
    .formula("sqrt(2) I_(L,1) + (Delta i_\"pp,max\") / 2")
    .inputs(&["filter.i_l_f1", "ripple.i_pp_max"])
    .value(2f64.sqrt() * i_l1 + i_pp / 2.0);

    capacitor(d, s, spectra);
}

/// Capacitor rms current at rated load/current at the DC point with the largest
/// switching content, and the damping resistor's loss.
fn capacitor(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    if s.get("filter.capacitance").is_none() {
        return;
    }
    let f1 = s.value("output.f1");
    let k = phase_factor(d);
    // Switching part of the capacitor current (rms) at each DC point.
    let switching: Vec<f64> = spectra
        .iter()
        .map(|p| {
            let sum: f64 = p
                .lines
                .iter()
                .filter(|l| (l.order - 1.0).abs() > 1e-9)
                .map(|l| {
                    let v = k * l.amplitude * p.scale();
                    let y = if d.output.grid() {
                        grid_filter_of(s).admittances(l.order * f1).capacitor.norm()
                    } else {
                        let lc = filter_of(s);
                        let rated = load_cases(s)[2];
                        let w = 2.0 * std::f64::consts::PI * l.order * f1;
                        lc.response(&rated, l.order * f1).norm() * w * lc.c
                    };
                    (y * v).powi(2) / 2.0
                })
                .sum();
            sum.sqrt()
        })
        .collect();
    let (wi, i_sw) = switching
        .iter()
        .copied()
        .enumerate()
        .fold((0, -1.0), |a, (i, v)| if v > a.1 { (i, v) } else { a });
    let p = &spectra[wi];
    s.derive(
        "filter.i_c_switching",
        &format!("Capacitor current, switching lines (rms), {}", p.label),
        "I_(C,\"sw\")",
        Unit::Ampere,
    )
    .formula("sqrt(sum_(h != 1) (abs(underline(Y)_C (j h omega_1)) V_(\"sw\",h))^2 / 2)")
    .inputs(&[])
    .source(Source::common_practice(
        "each switch-node line through the filter's capacitor admittance at rated load, added in rms",
    ))
    .value(i_sw);
    let i_c1 = s.value("filter.i_c_f1");
    let i_c = s
        .derive(
            "filter.i_c_rms",
            "Capacitor current (rms), fundamental and switching",
            "I_(C,\"rms\")",
            Unit::Ampere,
        )
        .formula("sqrt(I_(C,1)^2 + I_(C,\"sw\")^2)")
        .inputs(&["filter.i_c_f1", "filter.i_c_switching"])
        .value(i_c1.hypot(i_sw));
    if let Some(r) = s.get("filter.damping_resistance").map(|q| q.value) {
        if r > 0.0 {
            let (n, formula) = if d.bridge.topology == Topology::ThreePhase {
                (3.0, "3 R_d I_(C,\"rms\")^2")
            } else {
                (1.0, "R_d I_(C,\"rms\")^2")
            };
            s.derive(
                "filter.p_damping",
                "Damping resistor loss, all phases",
                "P_(R_d)",
                Unit::Watt,
            )
            .formula(formula)
            .inputs(&["filter.damping_resistance", "filter.i_c_rms"])
            .value(n * r * i_c * i_c);
        }
    }
}
