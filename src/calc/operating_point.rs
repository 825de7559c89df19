//! Operating points: the DC window, the rated output and the load cases.
//!
//! The rated load is modelled as a constant impedance: a resistance that takes the
//! rated real power in parallel with an inductance that takes the reactive power of
//! the lagging power factor. The parallel form is the one that damps an LC filter
//! (the load sits across the capacitor), so zeta = Z0 / (2 R) uses this R directly.

use super::{given, limit_quantity};
use crate::record::{Design, Topology};
use crate::sheet::{Sheet, Source};
use crate::units::Unit;

/// The three load cases evaluated throughout: open circuit, light and rated.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LoadCase {
    pub key: &'static str,
    pub label: &'static str,
    /// Parallel resistance, ohm; `None` for no load.
    pub r: Option<f64>,
    /// Parallel reactance at f1, ohm; `None` for a resistive or absent load.
    pub x: Option<f64>,
}

/// Ids of the load resistances and reactances, by case.
/// The id and symbol of the voltage across one phase of the output: V_o itself, or
/// the line-to-neutral voltage of a three-phase output.
pub fn phase_voltage(d: &Design) -> (&'static str, &'static str) {
    if d.bridge.topology == Topology::ThreePhase {
        ("output.v_phase", "V_\"ph\"")
    } else {
        ("output.v_rms", "V_o")
    }
}

pub fn load_ids(case: &str) -> (String, String) {
    (format!("load.r.{case}"), format!("load.x.{case}"))
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    let v = given(
        s,
        "output.v_rms",
        "Output voltage (rms)",
        "V_o",
        &d.output.voltage,
        Unit::Volt,
    );
    let f1 = given(
        s,
        "output.f1",
        "Output frequency",
        "f_1",
        &d.output.frequency,
        Unit::Hertz,
    );
    let p = given(
        s,
        "output.power",
        "Rated real power",
        "P",
        &d.output.power,
        Unit::Watt,
    );
    let pf = given(
        s,
        "output.power_factor",
        "Rated power factor (lagging)",
        "lambda",
        &d.output.power_factor,
        Unit::One,
    );
    // The DC window: written, or from the battery or PV string (it needs P).
    super::dc_source::evaluate(d, s);

    given(
        s,
        "bridge.f_sw",
        "Switching frequency",
        "f_\"sw\"",
        &d.bridge.switching_frequency,
        Unit::Hertz,
    );
    s.derive(
        "output.omega1",
        "Output angular frequency",
        "omega_1",
        Unit::RadianPerSecond,
    )
    .formula("2 pi f_1")
    .inputs(&["output.f1"])
    .value(2.0 * std::f64::consts::PI * f1);
    let three_phase = d.bridge.topology == Topology::ThreePhase;
    if three_phase {
        s.derive(
            "output.v_phase",
            "Output phase voltage, line-to-neutral (rms)",
            "V_\"ph\"",
            Unit::Volt,
        )
        .formula("V_o / sqrt(3)")
        .inputs(&["output.v_rms"])
        .source(Source::common_practice(
            "balanced three-phase output: line-to-line voltage sqrt(3) times line-to-neutral",
        ))
        .value(v / 3f64.sqrt());
        s.derive(
            "output.v_peak",
            "Output phase voltage, peak",
            "V_(o,\"pk\")",
            Unit::Volt,
        )
        .formula("sqrt(2) V_\"ph\"")
        .inputs(&["output.v_phase"])
        .value(2f64.sqrt() * v / 3f64.sqrt());
    } else {
        s.derive(
            "output.v_peak",
            "Output voltage, peak",
            "V_(o,\"pk\")",
            Unit::Volt,
        )
        .formula("sqrt(2) V_o")
        .inputs(&["output.v_rms"])
        .value(2f64.sqrt() * v);
    }
    let apparent = s
        .derive("output.s", "Rated apparent power", "S", Unit::VoltAmpere)
        .formula("P / lambda")
        .inputs(&["output.power", "output.power_factor"])
        .value(p / pf);
    let q = s
        .derive("output.q", "Rated reactive power", "Q", Unit::Var)
        .formula("sqrt(S^2 - P^2)")
        .inputs(&["output.s", "output.power"])
        .value((apparent * apparent - p * p).max(0.0).sqrt());
    let (i_formula, i_value) = if three_phase {
        ("S / (sqrt(3) V_o)", apparent / (3f64.sqrt() * v))
    } else {
        ("S / V_o", apparent / v)
    };
    let i = s
        .derive(
            "output.i_rms",
            if d.output.grid() {
                "Rated grid current (rms)"
            } else {
                "Rated output current (rms)"
            },
            "I_o",
            Unit::Ampere,
        )
        .formula(i_formula)
        .inputs(&["output.s", "output.v_rms"])
        .value(i_value);
    s.derive(
        "output.i_peak",
        "Rated output current, peak",
        "I_(o,\"pk\")",
        Unit::Ampere,
    )
    .formula("sqrt(2) I_o")
    .inputs(&["output.i_rms"])
    .value(2f64.sqrt() * i);
    if d.output.grid() {
        // A grid-connected bridge sets its current; there is no load to model.
        return;
    }
    s.derive(
        "load.z.rated",
        "Rated-load impedance magnitude",
        "abs(Z_\"ld\")",
        Unit::Ohm,
    )
    .formula("V_o^2 / S")
    .inputs(&["output.v_rms", "output.s"])
    .value(v * v / apparent);

    let light = limit_quantity(
        s,
        "limits.light_load",
        "Light-load case, fraction of rated power",
        "k_\"light\"",
        &d.limits.light_load,
        Unit::Percent,
    );
    let (r_id, x_id) = load_ids("rated");
    let r = s
        .derive(
            &r_id,
            "Rated load, parallel resistance",
            "R_\"ld\"",
            Unit::Ohm,
        )
        .formula("V_o^2 / P")
        .inputs(&["output.v_rms", "output.power"])
        .source(load_model_source())
        .value(v * v / p);
    let (lr_id, lx_id) = load_ids("light");
    s.derive(
        &lr_id,
        "Light load, parallel resistance",
        "R_\"ld,light\"",
        Unit::Ohm,
    )
    .formula("R_\"ld\" / k_\"light\"")
    .inputs(&[&r_id, "limits.light_load"])
    .value(r / light);
    if q > 0.0 {
        let x = s
            .derive(
                &x_id,
                "Rated load, parallel reactance at f1",
                "X_\"ld\"",
                Unit::Ohm,
            )
            .formula("V_o^2 / Q")
            .inputs(&["output.v_rms", "output.q"])
            .source(load_model_source())
            .value(v * v / q);
        s.derive(
            &lx_id,
            "Light load, parallel reactance at f1",
            "X_\"ld,light\"",
            Unit::Ohm,
        )
        .formula("X_\"ld\" / k_\"light\"")
        .inputs(&[&x_id, "limits.light_load"])
        .value(x / light);
    }
}

fn load_model_source() -> Source {
    Source::common_practice(
        "constant-impedance load, a resistance for P in parallel with an inductance for Q",
    )
}

/// The load cases as evaluated, from the sheet.
pub fn load_cases(s: &Sheet) -> Vec<LoadCase> {
    let pick = |case: &'static str, label: &'static str| {
        let (r, x) = load_ids(case);
        LoadCase {
            key: case,
            label,
            r: s.get(&r).map(|q| q.value),
            x: s.get(&x).map(|q| q.value),
        }
    };
    vec![
        LoadCase {
            key: "no_load",
            label: "no load",
            r: None,
            x: None,
        },
        pick("light", "light load"),
        pick("rated", "rated load"),
    ]
}
