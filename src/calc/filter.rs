//! The LC output filter with its load: resonance, characteristic impedance, damping,
//! gain and phase at the output frequency and at the first carrier group, the
//! fundamental currents, sizing by rule, and the filter checks.
//!
//! Circuit: series inductor L from the switch node, capacitor C across the output, the
//! load (parallel R and inductive X, see [`super::operating_point`]) across C:
//!
//!   H(jω) = v_o / v_sw = 1 / (1 + jωL (jωC + 1/R + 1/(jω L_ld)))
//!
//! With X = ω1 L_ld the reactance at f1, the denominator's real part is
//! 1 - ω²LC + ω1 L / X at every ω, and its imaginary part is ωL / R.

use super::operating_point::{load_cases, load_ids, phase_voltage, LoadCase};
use super::{given, limit_quantity, limit_source};
use crate::record::{Design, FilterSizing, Pwm};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;
use num_complex::Complex64;
use std::f64::consts::PI;

/// An LC filter and the output frequency at which load reactances are given.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LcFilter {
    pub l: f64,
    pub c: f64,
    pub f1: f64,
}

impl LcFilter {
    /// The voltage transfer from switch node to output at frequency `f` with `load`.
    pub fn response(&self, load: &LoadCase, f: f64) -> Complex64 {
        let w = 2.0 * PI * f;
        let j = Complex64::i();
        let mut y = j * w * self.c;
        if let Some(r) = load.r {
            y += 1.0 / r;
        }
        if let Some(x) = load.x {
            // The load inductance L_ld = X / ω1 has admittance 1 / (jω L_ld).
            let l_ld = x / (2.0 * PI * self.f1);
            y += 1.0 / (j * w * l_ld);
        }
        1.0 / (1.0 + j * w * self.l * y)
    }

    pub fn f0(&self) -> f64 {
        1.0 / (2.0 * PI * (self.l * self.c).sqrt())
    }
}

/// The filter of an evaluated sheet.
pub fn filter_of(s: &Sheet) -> LcFilter {
    LcFilter {
        l: s.value("filter.inductance"),
        c: s.value("filter.capacitance"),
        f1: s.value("output.f1"),
    }
}

/// Frequency of the first carrier group at the output: f_sw for two-level PWM, 2 f_sw
/// for unipolar (three-level) PWM, whose odd carrier groups cancel between the legs.
pub fn carrier_frequency(d: &Design, f_sw: f64) -> f64 {
    match d.bridge.pwm {
        Pwm::Unipolar => 2.0 * f_sw,
        _ => f_sw,
    }
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    let (r_rated, _) = load_ids("rated");
    match &d.filter.sizing {
        FilterSizing::Given(values) => {
            let Some(capacitance) = &values.capacitance else {
                // The record reader lets an LC filter through only with both values.
                return;
            };
            given(
                s,
                "filter.inductance",
                "Filter inductance",
                "L",
                &values.inductance,
                Unit::Henry,
            );
            given(
                s,
                "filter.capacitance",
                "Filter capacitance",
                "C",
                capacitance,
                Unit::Farad,
            );
        }
        // The record reader keeps LCL rules away from stand-alone LC filters.
        FilterSizing::LclRule(_) => return,
        FilterSizing::Rule {
            resonance_ratio,
            damping,
        } => {
            let rule = Source::common_practice(
                "LC sizing by resonance placement f0 = k f1 and characteristic impedance Z0 = 2 zeta R at the heaviest rated load",
            );
            let k = given(
                s,
                "filter.design.resonance_ratio",
                "Design resonance ratio",
                "k_0",
                resonance_ratio,
                Unit::One,
            );
            let zeta = given(
                s,
                "filter.design.damping",
                "Design damping ratio at rated load",
                "zeta_\"d\"",
                damping,
                Unit::One,
            );
            let f1 = s.value("output.f1");
            let r = s.value(&r_rated);
            let f0 = s
                .derive(
                    "filter.design.f0",
                    "Design resonance frequency",
                    "f_(0,\"d\")",
                    Unit::Hertz,
                )
                .formula("k_0 f_1")
                .inputs(&["filter.design.resonance_ratio", "output.f1"])
                .source(rule.clone())
                .value(k * f1);
            let z0 = s
                .derive(
                    "filter.design.z0",
                    "Design characteristic impedance",
                    "Z_(0,\"d\")",
                    Unit::Ohm,
                )
                .formula("2 zeta_\"d\" R_\"ld\"")
                .inputs(&["filter.design.damping", &r_rated])
                .source(rule)
                .value(2.0 * zeta * r);
            s.derive("filter.inductance", "Filter inductance", "L", Unit::Henry)
                .formula("Z_(0,\"d\") / (2 pi f_(0,\"d\"))")
                .inputs(&["filter.design.z0", "filter.design.f0"])
                .value(z0 / (2.0 * PI * f0));
            s.derive("filter.capacitance", "Filter capacitance", "C", Unit::Farad)
                .formula("1 / (2 pi f_(0,\"d\") Z_(0,\"d\"))")
                .inputs(&["filter.design.f0", "filter.design.z0"])
                .value(1.0 / (2.0 * PI * f0 * z0));
        }
    }
    let lc = filter_of(s);
    let f0 = s
        .derive("filter.f0", "Resonance frequency", "f_0", Unit::Hertz)
        .formula("1 / (2 pi sqrt(L C))")
        .inputs(&["filter.inductance", "filter.capacitance"])
        .value(lc.f0());
    let z0 = s
        .derive("filter.z0", "Characteristic impedance", "Z_0", Unit::Ohm)
        .formula("sqrt(L / C)")
        .inputs(&["filter.inductance", "filter.capacitance"])
        .value((lc.l / lc.c).sqrt());
    let (r_light, _) = load_ids("light");
    let (r_rated_v, r_light_v) = (s.value(&r_rated), s.value(&r_light));
    s.derive(
        "filter.zeta",
        "Damping ratio at rated load",
        "zeta",
        Unit::One,
    )
    .formula("Z_0 / (2 R_\"ld\")")
    .inputs(&["filter.z0", &r_rated])
    .value(z0 / (2.0 * r_rated_v));
    s.derive(
        "filter.zeta_light",
        "Damping ratio at light load",
        "zeta_\"light\"",
        Unit::One,
    )
    .formula("Z_0 / (2 R_\"ld,light\")")
    .inputs(&["filter.z0", &r_light])
    .value(z0 / (2.0 * r_light_v));

    let cases = load_cases(s);
    for case in &cases {
        gain_at(s, &lc, case, Point::Fundamental);
    }
    let f_sw = s.value("bridge.f_sw");
    let f_c = carrier_frequency(d, f_sw);
    let (formula, note) = match d.bridge.pwm {
        Pwm::Bipolar | Pwm::SineTriangle | Pwm::ThirdHarmonic => {
            ("f_\"sw\"", "two-level PWM: first carrier group at f_sw")
        }
        Pwm::Unipolar => (
            "2 f_\"sw\"",
            "unipolar PWM: the odd carrier groups cancel, the first group is at 2 f_sw",
        ),
    };
    s.derive(
        "filter.f_carrier",
        "First carrier group at the output",
        "f_c",
        Unit::Hertz,
    )
    .formula(formula)
    .inputs(&["bridge.f_sw"])
    .source(Source::reference(
        "D. G. Holmes, T. A. Lipo, Pulse Width Modulation for Power Converters, 2003",
        note,
    ))
    .value(f_c);
    s.derive(
        "filter.omega_c",
        "Carrier angular frequency",
        "omega_c",
        Unit::RadianPerSecond,
    )
    .formula("2 pi f_c")
    .inputs(&["filter.f_carrier"])
    .value(2.0 * PI * f_c);
    let rated = cases[2];
    let g_c = gain_at(s, &lc, &rated, Point::Carrier);
    s.derive(
        "filter.attenuation_carrier_db",
        "Attenuation at the first carrier group",
        "A_c",
        Unit::Decibel,
    )
    .formula("-20 log_10 abs(H(j omega_c))_\"rated\"")
    .inputs(&["filter.gain_carrier.rated"])
    .value(-20.0 * g_c.log10());

    let (v_id, v_sym) = phase_voltage(d);
    let v = s.value(v_id);
    let w1 = s.value("output.omega1");
    s.derive(
        "filter.i_c_f1",
        "Capacitor current at f1 (rms)",
        "I_(C,1)",
        Unit::Ampere,
    )
    .formula(&format!("{v_sym} omega_1 C"))
    .inputs(&[v_id, "output.omega1", "filter.capacitance"])
    .value(v * w1 * lc.c);
    let r = s.value(&r_rated);
    let (_, x_rated) = load_ids("rated");
    let b_load = s.get(&x_rated).map_or(0.0, |q| 1.0 / q.value);
    let (formula, inputs): (String, Vec<&str>) = if s.get(&x_rated).is_some() {
        (
            format!("{v_sym} sqrt((1 / R_\"ld\")^2 + (omega_1 C - 1 / X_\"ld\")^2)"),
            vec![
                v_id,
                &r_rated,
                "output.omega1",
                "filter.capacitance",
                &x_rated,
            ],
        )
    } else {
        (
            format!("{v_sym} sqrt((1 / R_\"ld\")^2 + (omega_1 C)^2)"),
            vec![v_id, &r_rated, "output.omega1", "filter.capacitance"],
        )
    };
    s.derive(
        "filter.i_l_f1",
        "Inductor current at f1, rated load (rms)",
        "I_(L,1)",
        Unit::Ampere,
    )
    .formula(&formula)
    .inputs(&inputs)
    .value(v * ((1.0 / r).powi(2) + (w1 * lc.c - b_load).powi(2)).sqrt());

    checks(d, s, f0, &cases);
}

#[derive(Clone, Copy, PartialEq)]
enum Point {
    Fundamental,
    Carrier,
}

/// Adds the gain (and at f1 the phase) of the filter with one load case; returns the gain.
fn gain_at(s: &mut Sheet, lc: &LcFilter, case: &LoadCase, point: Point) -> f64 {
    let (r_id, x_id) = load_ids(case.key);
    let (w_sym, w_id, f, where_) = match point {
        Point::Fundamental => ("omega_1", "output.omega1", lc.f1, "f1"),
        Point::Carrier => (
            "omega_c",
            "filter.omega_c",
            s.value("filter.f_carrier"),
            "the first carrier group",
        ),
    };
    let (r_sym, x_sym) = match case.key {
        "rated" => ("R_\"ld\"", "X_\"ld\""),
        _ => ("R_\"ld,light\"", "X_\"ld,light\""),
    };
    let tag = match point {
        Point::Fundamental => "f1",
        Point::Carrier => "carrier",
    };
    let case_text = case.key.replace('_', " ");
    let sub = match point {
        Point::Fundamental => "1",
        Point::Carrier => "c",
    };
    let h = lc.response(case, f);
    // The denominator 1 + jωL·Y_load, split into its real part a and imaginary part b
    // so that each line of the package stays short enough to read.
    let mut re_inputs = vec![w_id, "filter.inductance", "filter.capacitance"];
    let mut re_formula = format!("1 - {w_sym}^2 L C");
    if case.x.is_some() {
        if !re_inputs.contains(&"output.omega1") {
            re_inputs.push("output.omega1");
        }
        re_inputs.push(&x_id);
        re_formula.push_str(&format!(" + omega_1 L / {x_sym}"));
    }
    let re_id = format!("filter.den_re_{tag}.{}", case.key);
    let re_sym = format!("a_({sub},\"{case_text}\")");
    s.derive(
        &re_id,
        &format!("Real part of 1 + jωL·Y at {where_}, {}", case.label),
        &re_sym,
        Unit::One,
    )
    .formula(&re_formula)
    .inputs(&re_inputs)
    .value((1.0 / h).re);
    let im = case.r.map(|_| {
        let im_id = format!("filter.den_im_{tag}.{}", case.key);
        let im_sym = format!("b_({sub},\"{case_text}\")");
        s.derive(
            &im_id,
            &format!("Imaginary part of 1 + jωL·Y at {where_}, {}", case.label),
            &im_sym,
            Unit::One,
        )
        .formula(&format!("{w_sym} L / {r_sym}"))
        .inputs(&[w_id, "filter.inductance", &r_id])
        .value((1.0 / h).im);
        (im_id, im_sym)
    });
    let (formula, inputs, phase_formula) = match &im {
        Some((im_id, im_sym)) => (
            format!("1 / sqrt({re_sym}^2 + {im_sym}^2)"),
            vec![re_id.clone(), im_id.clone()],
            format!("-arg({re_sym} + j {im_sym})"),
        ),
        None => (
            format!("1 / abs({re_sym})"),
            vec![re_id.clone()],
            format!("-arg({re_sym})"),
        ),
    };
    let refs: Vec<&str> = inputs.iter().map(String::as_str).collect();
    let symbol = format!("abs(H(j {w_sym}))_\"{case_text}\"");
    let g = s
        .derive(
            &format!("filter.gain_{tag}.{}", case.key),
            &format!("Filter gain at {where_}, {}", case.label),
            &symbol,
            Unit::One,
        )
        .formula(&formula)
        .inputs(&refs)
        .value(h.norm());
    if point == Point::Fundamental {
        s.derive(
            &format!("filter.phase_f1.{}", case.key),
            &format!("Filter phase at f1, {}", case.label),
            &format!("phi_(1,\"{case_text}\")"),
            Unit::Degree,
        )
        .formula(&phase_formula)
        .inputs(&refs)
        .value(low_pass_phase(h));
    }
    g
}

/// The phase of a low-pass response in (-360°, 0°]: a lossless LC past resonance is at
/// -180°, which `arg` would report as +180°.
pub fn low_pass_phase(h: Complex64) -> f64 {
    let phi = h.arg();
    if phi > 1e-12 {
        phi - 2.0 * PI
    } else {
        phi
    }
}

fn checks(d: &Design, s: &mut Sheet, f0: f64, cases: &[LoadCase]) {
    let l = &d.limits;
    let f1 = s.value("output.f1");
    let f_sw = s.value("bridge.f_sw");
    s.derive(
        "filter.f0_ratio",
        "Resonance ratio f0/f1",
        "f_0 / f_1",
        Unit::One,
    )
    .formula("f_0 / f_1")
    .inputs(&["filter.f0", "output.f1"])
    .value(f0 / f1);
    let k_min = limit_quantity(
        s,
        "limits.min_resonance_ratio",
        "Minimum resonance ratio",
        "k_(0,\"min\")",
        &l.min_resonance_ratio,
        Unit::One,
    );
    s.check(
        "check.filter.f0_above_f1",
        "The filter resonance lies well above the output frequency",
        "filter.f0_ratio",
        Relation::AtLeast,
        k_min,
        limit_source(&l.min_resonance_ratio),
    );
    s.derive(
        "filter.f0_fraction",
        "Resonance as a fraction of f_sw",
        "f_0 / f_\"sw\"",
        Unit::One,
    )
    .formula("f_0 / f_\"sw\"")
    .inputs(&["filter.f0", "bridge.f_sw"])
    .value(f0 / f_sw);
    let frac = limit_quantity(
        s,
        "limits.max_resonance_fraction",
        "Maximum resonance fraction of f_sw",
        "r_(0,\"max\")",
        &l.max_resonance_fraction,
        Unit::One,
    );
    s.check(
        "check.filter.f0_below_fsw",
        "The filter resonance lies below half the switching frequency",
        "filter.f0_fraction",
        Relation::AtMost,
        frac,
        limit_source(&l.max_resonance_fraction),
    );
    let dev = limit_quantity(
        s,
        "limits.max_gain_deviation",
        "Maximum gain deviation at f1",
        "delta_(H,\"max\")",
        &l.max_gain_deviation,
        Unit::Percent,
    );
    for case in cases {
        let gid = format!("filter.gain_f1.{}", case.key);
        let g = s.value(&gid);
        let eid = format!("filter.gain_error_f1.{}", case.key);
        let sym = s.symbol(&gid);
        s.derive(
            &eid,
            &format!("Gain deviation from unity at f1, {}", case.label),
            &format!("delta_(H,\"{}\")", case.key.replace('_', " ")),
            Unit::Percent,
        )
        .formula(&format!("abs({sym} - 1)"))
        .inputs(&[&gid])
        .value((g - 1.0).abs());
        s.check(
            &format!("check.filter.gain_f1.{}", case.key),
            &format!(
                "The filter passes f1 within the gain tolerance, {}",
                case.label
            ),
            &eid,
            Relation::AtMost,
            dev,
            limit_source(&l.max_gain_deviation),
        );
    }
    let floor = limit_quantity(
        s,
        "limits.min_light_load_damping",
        "Minimum damping ratio at light load",
        "zeta_\"min\"",
        &l.min_light_load_damping,
        Unit::One,
    );
    s.check(
        "check.filter.light_load_damping",
        "The filter resonance is damped enough at light load",
        "filter.zeta_light",
        Relation::AtLeast,
        floor,
        limit_source(&l.min_light_load_damping),
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn case(r: Option<f64>, x: Option<f64>) -> LoadCase {
        LoadCase {
            key: "rated",
            label: "rated load",
            r,
            x,
        }
    }

    /// The closed-form second-order response, written independently of `response`.
    fn second_order(f: f64, f0: f64, zeta: f64) -> Complex64 {
        let x = f / f0;
        1.0 / Complex64::new(1.0 - x * x, 2.0 * zeta * x)
    }

    #[test]
    fn resistive_load_matches_the_standard_second_order_response() {
        // Standard second-order low-pass H = 1 / (1 - x^2 + j 2 zeta x), x = f/f0, with
        // zeta = Z0 / (2R) for a parallel-loaded LC (circuit theory; e.g. any network
        // analysis text's series-RLC/parallel-load derivation).
        let lc = LcFilter {
            l: 1.8e-3,
            c: 10e-6,
            f1: 50.0,
        };
        let r = 24.0;
        let zeta = (lc.l / lc.c).sqrt() / (2.0 * r);
        for f in [10.0, 50.0, 500.0, 1186.0, 3000.0, 20e3, 100e3] {
            let h = lc.response(&case(Some(r), None), f);
            let want = second_order(f, lc.f0(), zeta);
            assert!(
                (h - want).norm() <= 1e-12 * want.norm().max(1.0),
                "{f}: {h} vs {want}"
            );
        }
    }

    #[test]
    fn inductive_load_matches_a_direct_circuit_evaluation() {
        // Direct complex evaluation of the circuit: Z_par = 1 / (jωC + 1/R + 1/(jωL_ld)),
        // H = Z_par / (jωL + Z_par) (voltage divider).
        let lc = LcFilter {
            l: 1.8e-3,
            c: 10e-6,
            f1: 50.0,
        };
        let (r, x) = (24.04, 32.06);
        let l_ld = x / (2.0 * PI * 50.0);
        for f in [50.0, 400.0, 1186.0, 20e3] {
            let w = 2.0 * PI * f;
            let j = Complex64::i();
            let z_par = 1.0 / (j * w * lc.c + 1.0 / r + 1.0 / (j * w * l_ld));
            let want = z_par / (j * w * lc.l + z_par);
            let h = lc.response(&case(Some(r), Some(x)), f);
            assert!((h - want).norm() <= 1e-12, "{f}: {h} vs {want}");
        }
    }

    #[test]
    fn open_circuit_gain_rises_towards_resonance() {
        let lc = LcFilter {
            l: 1.8e-3,
            c: 10e-6,
            f1: 50.0,
        };
        let no_load = case(None, None);
        let g50 = lc.response(&no_load, 50.0).norm();
        // 1 / (1 - (f/f0)^2) for an unloaded LC (circuit theory).
        let x = 50.0 / lc.f0();
        assert!((g50 - 1.0 / (1.0 - x * x)).abs() < 1e-12);
        assert!(lc.response(&no_load, 1000.0).norm() > g50);
    }
}
