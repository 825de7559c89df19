//! The engine's formulas against worked examples and independent evaluations, through
//! the whole record -> sheet path.

mod common;

use common::evaluate;
use num_complex::Complex64;
use std::f64::consts::PI;

/// A minimal valid record with the given sections' contents substituted.
fn record_text(dc: (&str, &str, &str), output: &str, bridge: &str, filter: &str) -> String {
    format!(
        "bridgebook: 1
project:
  id: T-1
  title: Formula test
  revision: A
  date: 2026-01-05
  prepared_by: Test
source:
  kind: fixed
  voltage: {{ min: {}, nominal: {}, max: {} }}
output:
{output}
bridge:
{bridge}
filter:
{filter}
",
        dc.0, dc.1, dc.2
    )
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn lc_sizing_rule_reproduces_the_worked_example() {
    // Common practice worked example: f0 = 10 f1 and zeta = 0.5 at Z0 = R_min
    // (Z0 = 2 zeta R) for 60 Hz and R_min = 12 ohm gives L ~ 3.2 mH and C ~ 22.1 uF.
    // 120 V rms into 1.2 kW resistive makes R = V^2/P = 12 ohm.
    let s = evaluate(&record_text(
        ("380 V", "400 V", "420 V"),
        "  voltage: 120 V\n  frequency: 60 Hz\n  power: 1.2 kW\n  power_factor: 1\n  connection: standalone",
        "  topology: full-bridge\n  pwm: bipolar\n  switching_frequency: 12 kHz",
        "  type: lc\n  design: { resonance_ratio: 10, damping: 0.5 }",
    ));
    assert!(rel(s.value("load.r.rated"), 12.0) < 1e-12);
    let l = s.value("filter.inductance");
    let c = s.value("filter.capacitance");
    assert!((l - 3.2e-3).abs() < 0.05e-3, "L = {l}");
    assert!((c - 22.1e-6).abs() < 0.05e-6, "C = {c}");
    // And the sized filter has the resonance and impedance it was sized for.
    assert!(rel(s.value("filter.f0"), 600.0) < 1e-9);
    assert!(rel(s.value("filter.z0"), 12.0) < 1e-9);
    assert!(rel(s.value("filter.zeta"), 0.5) < 1e-9);
}

#[test]
fn half_bridge_modulation_index_of_the_common_example() {
    // Common practice: a 170 V peak output from a 400 V DC half-bridge needs
    // m_a = 170 / (400 / 2) = 0.85.
    let v_rms = format!("{} V", 170.0 / 2f64.sqrt());
    let s = evaluate(&record_text(
        ("400 V", "400 V", "400 V"),
        &format!("  voltage: {v_rms}\n  frequency: 60 Hz\n  power: 1 kW\n  power_factor: 1\n  connection: standalone"),
        "  topology: half-bridge\n  pwm: bipolar\n  switching_frequency: 20 kHz",
        "  type: lc\n  inductance: 1 mH\n  capacitance: 10 uF",
    ));
    for point in ["min", "nominal", "max"] {
        let m = s.value(&format!("modulation.m_a_ideal.{point}"));
        assert!((m - 0.85).abs() < 1e-9, "{point}: {m}");
    }
    assert_eq!(
        s.get("modulation.region.min").unwrap().class.as_deref(),
        Some("linear")
    );
}

#[test]
fn full_bridge_index_is_referred_to_the_whole_dc_voltage() {
    // Mohan, Undeland, Robbins, Power Electronics, 3rd ed., 8-4 (from memory): a
    // full-bridge fundamental peak is m_a V_dc in the linear region.
    let s = evaluate(&record_text(
        ("340 V", "400 V", "450 V"),
        "  voltage: 230 V\n  frequency: 50 Hz\n  power: 2 kW\n  power_factor: 1\n  connection: standalone",
        "  topology: full-bridge\n  pwm: unipolar\n  switching_frequency: 16 kHz",
        "  type: lc\n  inductance: 1.5 mH\n  capacitance: 8 uF",
    ));
    let v_pk = 230.0 * 2f64.sqrt();
    assert!(rel(s.value("modulation.m_a_ideal.min"), v_pk / 340.0) < 1e-12);
    assert!(rel(s.value("modulation.m_a_ideal.max"), v_pk / 450.0) < 1e-12);
    // Unipolar PWM: the first carrier group at the output is at 2 f_sw.
    assert!(rel(s.value("filter.f_carrier"), 32e3) < 1e-12);
}

#[test]
fn switch_node_fundamental_matches_a_direct_circuit_evaluation() {
    // Circuit theory: v_sw = v_o (1 + Z_L / Z_par) for the L-C divider with the load
    // across C; Z_par = 1 / (jωC + 1/R + 1/(jωL_ld)), evaluated here independently.
    let s = evaluate(&record_text(
        ("720 V", "760 V", "820 V"),
        "  voltage: 230 V\n  frequency: 50 Hz\n  power: 2.2 kW\n  power_factor: 0.8\n  connection: standalone",
        "  topology: half-bridge\n  pwm: bipolar\n  switching_frequency: 20 kHz",
        "  type: lc\n  inductance: 1.8 mH\n  capacitance: 10 uF",
    ));
    let (v, p, pf, f) = (230.0, 2200.0, 0.8, 50.0);
    let w = 2.0 * PI * f;
    let r = v * v / p;
    let q = p * (1.0f64 / (pf * pf) - 1.0).sqrt();
    let l_ld = v * v / q / w;
    let j = Complex64::i();
    let z_par = 1.0 / (j * w * 10e-6 + 1.0 / r + 1.0 / (j * w * l_ld));
    let v_sw = v * 2f64.sqrt() * (1.0 + j * w * 1.8e-3 / z_par);
    assert!(rel(s.value("modulation.v_sw_pk"), v_sw.norm()) < 1e-9);
    assert!(rel(s.value("modulation.m_a.min"), v_sw.norm() / 360.0) < 1e-9);
    // Fundamental currents: I_C = V ω C; I_L is the input current of the divider.
    assert!(rel(s.value("filter.i_c_f1"), v * w * 10e-6) < 1e-12);
    let i_l = (v / z_par).norm();
    assert!(rel(s.value("filter.i_l_f1"), i_l) < 1e-9);
    // Rated current from S = P / pf (definition of power factor).
    assert!(rel(s.value("output.i_rms"), p / pf / v) < 1e-12);
}

#[test]
fn every_quantity_of_every_demo_is_traced() {
    // STYLE habit 7: one sweep over every quantity: unit, formula, source, known inputs.
    for name in common::demos() {
        let text = common::demo(&name);
        let s = evaluate(&text);
        assert!(
            s.quantities.len() > 30,
            "{name}: only {} quantities",
            s.quantities.len()
        );
        for q in &s.quantities {
            let at = format!("{name}: {}", q.id);
            assert!(!q.id.is_empty() && q.id.contains('.'), "{at}: id");
            assert!(!q.name.is_empty(), "{at}: name");
            assert!(!q.symbol.is_empty(), "{at}: symbol");
            assert!(!q.unit.code().is_empty(), "{at}: unit");
            assert!(!q.formula.is_empty(), "{at}: formula");
            assert!(!q.substituted.is_empty(), "{at}: substituted");
            assert!(q.value.is_finite(), "{at}: value {}", q.value);
            assert!(!q.source.describe().is_empty(), "{at}: source");
            for i in &q.inputs {
                assert!(s.get(i).is_some(), "{at}: unknown input {i}");
                // A derived formula must use the symbol of each input it names.
                let sym = &s.get(i).unwrap().symbol;
                assert!(
                    q.formula.contains(sym.as_str()),
                    "{at}: formula lacks {sym}"
                );
            }
            if let bridgebook::sheet::Source::Input { line, .. } = q.source {
                assert!(line > 0, "{at}: input without a line");
            }
        }
        for c in &s.checks {
            assert!(
                s.get(&c.quantity).is_some(),
                "{name}: {} checks nothing",
                c.id
            );
            assert!(
                !c.source.describe().is_empty(),
                "{name}: {} has no source",
                c.id
            );
        }
    }
}

#[test]
fn evaluation_is_deterministic() {
    for name in common::demos() {
        let text = common::demo(&name);
        let a = serde_json::to_string(&evaluate(&text)).unwrap();
        let b = serde_json::to_string(&evaluate(&text)).unwrap();
        assert_eq!(a, b, "{name}");
    }
}
