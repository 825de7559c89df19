//! Output quality and harmonic compliance: the switch-node spectrum of
//! [`super::switching`] carried through the filter to the output voltage (stand-alone,
//! each load case) or the grid current (grid-connected), its distortion at each DC
//! point, and the checks against the published limits of [`crate::standards`] or the
//! record's own.
//!
//! Every line of the spectrum counts in THD and TRD, interharmonics included, up to
//! the highest order computed; individual-harmonic limits apply to the integer orders
//! the tables cover (stand-alone: every computed order, stricter than IEEE 519's range).

use super::filter::filter_of;
use super::grid_filter::grid_filter_of;
use super::modulation::short;
use super::operating_point::{load_cases, LoadCase};
use super::switching::{order_tag, order_text, phase_factor, PointSpectrum};
use crate::record::Design;
use crate::sheet::{Relation, Sheet, Source};
use crate::standards;
use crate::units::{format_value, Unit};

/// Output lines below this fraction of the fundamental are left out of the sheet.
pub const OUTPUT_LINE_FLOOR: f64 = 1e-3;

/// Most output lines listed in the sheet for the worst case, largest first.
pub const OUTPUT_LINES_LISTED: usize = 24;

/// One filtered line: order, amplitude (peak, V or A), frequency.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OutputLine {
    pub order: f64,
    pub amplitude: f64,
}

/// The output voltage lines of one DC point and load case (stand-alone), peak volts,
/// of the same kind as the bridge output (line-to-line for three-phase).
pub fn output_voltage_lines(s: &Sheet, p: &PointSpectrum, case: &LoadCase) -> Vec<OutputLine> {
    let lc = filter_of(s);
    let f1 = s.value("output.f1");
    p.lines
        .iter()
        .map(|l| OutputLine {
            order: l.order,
            amplitude: lc.response(case, l.order * f1).norm() * l.amplitude * p.scale(),
        })
        .collect()
}

/// The grid current lines of one DC point (grid-connected), peak amperes per phase.
/// The fundamental is the rated current; the others are driven by the switch-node
/// lines into the grid shorted behind its inductance.
pub fn grid_current_lines(d: &Design, s: &Sheet, p: &PointSpectrum) -> Vec<OutputLine> {
    let gf = grid_filter_of(s);
    let f1 = s.value("output.f1");
    let k = phase_factor(d);
    let i_pk = s.value("output.i_peak");
    p.lines
        .iter()
        .map(|l| OutputLine {
            order: l.order,
            amplitude: if (l.order - 1.0).abs() < 1e-9 {
                i_pk
            } else {
                gf.admittances(l.order * f1).grid.norm() * k * l.amplitude * p.scale()
            },
        })
        .collect()
}

fn fundamental_of(lines: &[OutputLine]) -> f64 {
    lines
        .iter()
        .find(|l| (l.order - 1.0).abs() < 1e-9)
        .map_or(0.0, |l| l.amplitude)
}

fn harmonic_rss(lines: &[OutputLine]) -> f64 {
    lines
        .iter()
        .filter(|l| (l.order - 1.0).abs() > 1e-9)
        .map(|l| l.amplitude * l.amplitude)
        .sum::<f64>()
        .sqrt()
}

pub fn evaluate(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    if spectra.is_empty() {
        return;
    }
    if d.output.grid() {
        grid_current(d, s, spectra);
    } else {
        output_voltage(d, s, spectra);
    }
    trend_region(d, s, spectra);
}

/// The region in which distortion behaves as engineers expect: the filter resonance
/// below half the switching frequency and linear modulation at every DC point. There,
/// more inductance or a faster carrier does not raise distortion (tested in
/// `tests/output_quality.rs`); outside it a carrier group can land on the resonance,
/// and the package says so.
pub fn in_trend_region(d: &Design, s: &Sheet, spectra: &[PointSpectrum]) -> bool {
    let fraction = s
        .get("filter.f_res_fraction")
        .or_else(|| s.get("filter.f0_fraction"))
        .map_or(0.0, |q| q.value);
    let linear = super::switching::linear_limit(d);
    fraction < 0.5 && spectra.iter().all(|p| p.pwm.m_a <= linear)
}

fn trend_region(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    if in_trend_region(d, s, spectra) {
        return;
    }
    let id = if d.output.grid() {
        "quality.i_trd_worst"
    } else {
        "quality.v_thd_worst"
    };
    s.warn(
        id,
        "the design sits outside the region where the filter resonance is below half the switching frequency and modulation is linear: there a carrier group or overmodulation sideband can meet the resonance, so more inductance or a higher switching frequency may raise distortion instead of lowering it; evaluate each change rather than relying on the trend",
    );
}

/// Where the worst value was found.
struct Worst {
    value: f64,
    id: String,
    point: usize,
    case: usize,
}

fn output_voltage(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    let cases = load_cases(s);
    let f1 = s.value("output.f1");
    let mut worst_thd = Worst {
        value: -1.0,
        id: String::new(),
        point: 0,
        case: 0,
    };
    // Largest single line as a fraction of the fundamental: (ratio, order, point, case).
    let mut worst_h = (-1.0, 0.0, 0, 0);
    let mut thd_ids = Vec::new();
    for (pi, p) in spectra.iter().enumerate() {
        for (ci, case) in cases.iter().enumerate() {
            let lines = output_voltage_lines(s, p, case);
            let v1 = fundamental_of(&lines);
            let thd = harmonic_rss(&lines) / v1;
            let id = format!("quality.v_thd.{}.{}", p.key, case.key);
            let h_id = format!("spectrum.switch.h1.{}", p.key);
            let h_sym = s.symbol(&h_id);
            let (h_text, mut h_inputs) = lc_transfer_text(s, case);
            h_inputs.push(h_id.clone());
            let h_refs: Vec<&str> = h_inputs.iter().map(String::as_str).collect();
            s.derive(
                &id,
                &format!("Output voltage THD, {}, {}", p.label, case.label),
                &format!(
                    "\"THD\"_(v,\"{}\",\"{}\")",
                    short(p.key),
                    case.key.replace('_', " ")
                ),
                Unit::Percent,
            )
            .formula(&format!(
                "sqrt(sum_(h != 1) (abs({h_text}) V_(\"sw\",h))^2) / (abs(H(j omega_1)) {h_sym})"
            ))
            .inputs(&h_refs)
            .source(Source::reference(
                "IEC 61000-2-2",
                "THD as the rms of the harmonics over the rms of the fundamental (from memory); each switch-node line through the filter with this load",
            ))
            .value(thd);
            thd_ids.push(id.clone());
            if thd > worst_thd.value {
                worst_thd = Worst {
                    value: thd,
                    id,
                    point: pi,
                    case: ci,
                };
            }
            for l in &lines {
                if (l.order - 1.0).abs() > 1e-9 && l.amplitude / v1 > worst_h.0 {
                    worst_h = (l.amplitude / v1, l.order, pi, ci);
                }
            }
        }
    }
    let v_nominal = s.value("output.v_rms");
    let table = standards::ieee519_voltage_limits(v_nominal);
    let (thd_limit, thd_source) = match (&d.limits.max_voltage_thd, &table) {
        (Some(g), _) => (g.value, super::limit_source_given(g)),
        (None, Some(t)) => (
            t.thd,
            table_source(t.citation, "THD limit for the bus voltage"),
        ),
        (None, None) => (0.08, Source::common_practice("8 % voltage THD")),
    };
    let (h_limit, h_source) = match (&d.limits.max_voltage_harmonic, &table) {
        (Some(g), _) => (g.value, super::limit_source_given(g)),
        (None, Some(t)) => (
            t.individual,
            table_source(t.citation, "individual harmonic limit for the bus voltage"),
        ),
        (None, None) => (0.05, Source::common_practice("5 % individual harmonic")),
    };
    s.input(
        "limits.max_voltage_thd",
        "Output voltage THD limit",
        "\"THD\"_(v,\"max\")",
        thd_limit,
        Unit::Percent,
        thd_source.clone(),
    );
    s.input(
        "limits.max_voltage_harmonic",
        "Output voltage individual harmonic limit",
        "h_(v,\"max\")",
        h_limit,
        Unit::Percent,
        h_source.clone(),
    );
    let refs: Vec<&str> = thd_ids.iter().map(String::as_str).collect();
    let (p, c) = (&spectra[worst_thd.point], &cases[worst_thd.case]);
    s.derive(
        "quality.v_thd_worst",
        &format!("Output voltage THD, worst case: {}, {}", p.label, c.label),
        "\"THD\"_(v,\"worst\")",
        Unit::Percent,
    )
    .formula(&format!(
        "\"THD\"_(v,\"{}\",\"{}\")",
        short(p.key),
        c.key.replace('_', " ")
    ))
    .inputs(&[&worst_thd.id])
    .value(worst_thd.value);
    let _ = refs;
    s.check(
        "check.quality.v_thd",
        &format!(
            "Output voltage THD within the limit at every DC point and load case (worst: {}, {})",
            p.label, c.label
        ),
        "quality.v_thd_worst",
        Relation::AtMost,
        thd_limit,
        thd_source,
    );
    let (ratio, order, pi, ci) = worst_h;
    let (p, c) = (&spectra[pi], &cases[ci]);
    let o = order_text(order);
    s.derive(
        "quality.v_h_worst",
        &format!(
            "Largest output voltage line, fraction of the fundamental: order {o}, {}, {}",
            p.label, c.label
        ),
        "h_(v,\"worst\")",
        Unit::Percent,
    )
    .formula(&format!(
        "abs(H(j {o} omega_1)) V_(\"sw\",{o}) / (abs(H(j omega_1)) V_(\"sw\",1))"
    ))
    .inputs(&[])
    .value(ratio);
    s.check(
        "check.quality.v_harmonic",
        &format!(
            "Largest output voltage harmonic within the individual limit (order {o} at {}, {}, {})",
            format_value(order * f1, Unit::Hertz),
            p.label,
            c.label
        ),
        "quality.v_h_worst",
        Relation::AtMost,
        h_limit,
        h_source,
    );
    // The lines of the worst THD case, largest first.
    let (p, c) = (&spectra[worst_thd.point], &cases[worst_thd.case]);
    let lines = output_voltage_lines(s, p, c);
    list_lines(
        s,
        &lines,
        "quality.v",
        "Output voltage",
        "V_(o",
        Unit::Volt,
        &format!("{}, {}", p.label, c.label),
        f1,
    );
}

/// The grid filter's admittance written with its components, so the trace names them:
/// `underline(Y)_g (j h omega_1; L_1, C_f, R_d, L_2')`, and the ids of those inputs.
fn grid_admittance_text(s: &Sheet) -> (String, Vec<&'static str>) {
    let mut ids: Vec<&'static str> = vec!["output.omega1", "filter.inductance"];
    for id in ["filter.capacitance", "filter.damping_resistance"] {
        if s.get(id).is_some() {
            ids.push(id);
        }
    }
    ids.push(if s.get("filter.l2_total").is_some() {
        "filter.l2_total"
    } else {
        "grid.inductance"
    });
    let names: Vec<String> = ids[1..].iter().map(|i| s.symbol(i)).collect();
    (
        format!("underline(Y)_g (j h omega_1; {})", names.join(", ")),
        ids,
    )
}

/// The LC filter's transfer function with its load written out, and the inputs.
fn lc_transfer_text(s: &Sheet, case: &LoadCase) -> (String, Vec<String>) {
    let (r, x) = super::operating_point::load_ids(case.key);
    let mut ids = vec![
        "output.omega1".to_string(),
        "filter.inductance".to_string(),
        "filter.capacitance".to_string(),
    ];
    for id in [r, x] {
        if s.get(&id).is_some() {
            ids.push(id);
        }
    }
    let names: Vec<String> = ids[1..].iter().map(|i| s.symbol(i)).collect();
    (format!("H(j h omega_1; {})", names.join(", ")), ids)
}

fn table_source(c: &standards::Citation, what: &str) -> Source {
    Source::reference(c.document, &format!("{}, {what} ({})", c.table, c.note))
}

#[allow(clippy::too_many_arguments)]
fn list_lines(
    s: &mut Sheet,
    lines: &[OutputLine],
    prefix: &str,
    name: &str,
    sym: &str,
    unit: Unit,
    where_: &str,
    f1: f64,
) {
    let v1 = fundamental_of(lines);
    let mut big: Vec<&OutputLine> = lines
        .iter()
        .filter(|l| (l.order - 1.0).abs() > 1e-9 && l.amplitude >= OUTPUT_LINE_FLOOR * v1)
        .collect();
    big.sort_by(|a, b| b.amplitude.total_cmp(&a.amplitude));
    big.truncate(OUTPUT_LINES_LISTED);
    big.sort_by(|a, b| a.order.total_cmp(&b.order));
    for l in big {
        let o = order_text(l.order);
        s.derive(
            &format!("{prefix}.{}", order_tag(l.order)),
            &format!(
                "{name} line {o} at {} (peak), {where_}",
                format_value(l.order * f1, Unit::Hertz)
            ),
            &format!("{sym},{})", o.replace('.', ",")),
            unit,
        )
        .formula("abs(underline(Y)(j h omega_1)) V_(\"sw\",h)")
        .inputs(&[])
        .value(l.amplitude);
    }
}

fn grid_current(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    let f1 = s.value("output.f1");
    let i_pk = s.value("output.i_peak");
    let (trd_limit, trd_cite) = standards::ieee1547_trd_limit();
    let mut worst_trd = (-1.0, 0usize, String::new());
    // Worst use of an individual limit: (use, ratio, order, limit, point).
    let mut worst_h: Option<(f64, f64, u32, standards::HarmonicLimit, usize)> = None;
    let mut above_table = (0.0, 0.0);
    let (y_text, y_inputs) = grid_admittance_text(s);
    let trd_inputs = |key: &str, y: &[&'static str]| -> Vec<String> {
        let mut v: Vec<String> = y.iter().map(|i| i.to_string()).collect();
        v.push(format!("modulation.m_a.{key}"));
        v.push("modulation.m_f".into());
        v.push("output.i_peak".into());
        v
    };
    for (pi, p) in spectra.iter().enumerate() {
        let lines = grid_current_lines(d, s, p);
        let trd = harmonic_rss(&lines) / i_pk;
        let id = format!("quality.i_trd.{}", p.key);
        let m_sym = s.symbol(&format!("modulation.m_a.{}", p.key));
        s.derive(
            &id,
            &format!("Total rated-current distortion, {}", p.label),
            &format!("\"TRD\"_\"{}\"", short(p.key)),
            Unit::Percent,
        )
        .formula(&format!(
            "sqrt(sum_(h != 1) (abs({y}) V_(\"sw\",h)({m_sym}, m_f){k})^2) / I_(o,\"pk\")",
            y = y_text,
            k = if phase_factor(d) < 1.0 { " / sqrt(3)" } else { "" },
        ))
        .inputs(
            &trd_inputs(p.key, &y_inputs)
                .iter()
                .map(String::as_str)
                .collect::<Vec<_>>(),
        )
        .source(table_source(
            trd_cite,
            "total rated-current distortion; every computed line counts, interharmonics and orders above 50 included",
        ))
        .value(trd);
        if trd > worst_trd.0 {
            worst_trd = (trd, pi, id);
        }
        for l in &lines {
            let h = l.order.round();
            if (l.order - h).abs() > 1e-9 || h < 2.0 {
                continue;
            }
            let ratio = l.amplitude / i_pk;
            match standards::ieee1547_current_limit(h as u32) {
                Some(lim) => {
                    let used = ratio / lim.limit;
                    if worst_h.as_ref().is_none_or(|w| used > w.0) {
                        worst_h = Some((used, ratio, h as u32, lim, pi));
                    }
                }
                None => {
                    if ratio > above_table.0 {
                        above_table = (ratio, h);
                    }
                }
            }
        }
    }
    let (trd, pi, id) = worst_trd;
    let p = &spectra[pi];
    s.derive(
        "quality.i_trd_worst",
        &format!("Total rated-current distortion, worst case: {}", p.label),
        "\"TRD\"_\"worst\"",
        Unit::Percent,
    )
    .formula(&format!("\"TRD\"_\"{}\"", short(p.key)))
    .inputs(&[&id])
    .value(trd);
    s.check(
        "check.quality.trd",
        &format!(
            "Total rated-current distortion within the limit at every DC point (worst: {})",
            p.label
        ),
        "quality.i_trd_worst",
        Relation::AtMost,
        trd_limit,
        table_source(trd_cite, "total rated-current distortion limit"),
    );
    match worst_h {
        Some((_, ratio, h, lim, pi)) => {
            let p = &spectra[pi];
            s.derive(
                "quality.i_h_worst",
                &format!("Grid current harmonic nearest its limit, fraction of rated current: order {h}, {}", p.label),
                "I_(g,h) / I_(o,\"pk\")",
                Unit::Percent,
            )
            .formula("I_(g,h) / I_(o,\"pk\")")
            .inputs(&["output.i_peak"])
            .value(ratio);
            s.check(
                "check.quality.i_harmonic",
                &format!(
                    "Grid current harmonics within the individual limits; nearest: order {h} at {} ({}, limit for {}), {}",
                    format_value(f64::from(h) * f1, Unit::Hertz),
                    if h % 2 == 0 { "even" } else { "odd" },
                    lim.range,
                    p.label
                ),
                "quality.i_h_worst",
                Relation::AtMost,
                lim.limit,
                table_source(lim.citation, "individual current harmonic limit"),
            );
        }
        None => s.warn(
            "quality.i_trd_worst",
            "no integer harmonic below order 50 carries current in this spectrum, so the individual limits of IEEE Std 1547-2018 are met trivially; low-order harmonics from dead time, DC ripple and grid background distortion are outside this analysis (assumption E7)",
        ),
    }
    if above_table.0 > 0.0 {
        s.derive(
            "quality.i_h_above_table",
            &format!(
                "Largest integer harmonic above order 49, fraction of rated current: order {}",
                above_table.1
            ),
            "I_(g,h>49) / I_(o,\"pk\")",
            Unit::Percent,
        )
        .formula("max_(h >= 50) I_(g,h) / I_(o,\"pk\")")
        .inputs(&["output.i_peak"])
        .value(above_table.0);
    }
    let p = &spectra[pi];
    let lines = grid_current_lines(d, s, p);
    list_lines(
        s,
        &lines,
        "quality.i",
        "Grid current",
        "I_(g",
        Unit::Ampere,
        p.label,
        f1,
    );
}
