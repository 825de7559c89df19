//! The power stage through the whole record path: semiconductor losses against the
//! closed forms, energy balance, the thermal network by hand, the DC-link ripple and
//! rms current against a switched simulation, the capacitor life rule, the weighted
//! efficiencies, the ratings, and the device library's errors. Each check names where
//! its expected value comes from.

mod common;

use common::{demo, edit, evaluate, run, stderr, Scratch};
use std::f64::consts::PI;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

// Semiconductor makers' application manuals, averaged conduction losses of a PWM
// inverter leg with sinusoidal modulation (from memory):
//   P_T = V0 I (1/(2 pi) + m cos(phi)/8) + r I^2 (1/8 + m cos(phi)/(3 pi)),
//   P_D = VF0 I (1/(2 pi) - m cos(phi)/8) + rF I^2 (1/8 - m cos(phi)/(3 pi)).
#[test]
fn igbt_conduction_losses_match_the_closed_forms_within_one_percent() {
    for name in ["ridge-pump-b.yaml", "fen-barn.yaml"] {
        let s = evaluate(&demo(name));
        let third = name == "fen-barn.yaml";
        for key in ["min", "nominal", "max"] {
            let (i, phi) = (s.value("semi.i_leg"), s.value("semi.phi"));
            let m = s.value(&format!("modulation.m_a.{key}"));
            let (v0, r) = (s.value("semi.v_ce0"), s.value("semi.r_ce"));
            let (vf, rf) = (s.value("semi.v_f0"), s.value("semi.r_f"));
            let c = phi.cos();
            // With a sixth of third harmonic in the reference the slope terms change by
            // -+ m I^2 cos(3 phi) / (90 pi) (derived by integrating sin(3 theta) against
            // the current over its half period; see calc/bridge_leg.rs).
            let c3 = if third {
                m * (3.0 * phi).cos() / (90.0 * PI)
            } else {
                0.0
            };
            let p_t = v0 * i * (1.0 / (2.0 * PI) + m * c / 8.0)
                + r * i * i * (1.0 / 8.0 + m * c / (3.0 * PI) - c3);
            let p_d = vf * i * (1.0 / (2.0 * PI) - m * c / 8.0)
                + rf * i * i * (1.0 / 8.0 - m * c / (3.0 * PI) + c3);
            let got_t = s.value(&format!("semi.p_switch_cond.{key}"));
            let got_d = s.value(&format!("semi.p_diode_cond.{key}"));
            assert!(
                rel(got_t, p_t) < 0.01,
                "{name} {key}: switch {got_t} vs {p_t}"
            );
            assert!(
                rel(got_d, p_d) < 0.01,
                "{name} {key}: diode {got_d} vs {p_d}"
            );
            // Switching: f_sw E (V/V_ref) I / (pi I_ref), the mean of |sin| over the
            // half period being 2/pi (same manuals, from memory).
            let v_dc = s.value(&format!(
                "dc.v_{}",
                if key == "nominal" { "nominal" } else { key }
            ));
            let want =
                s.value("bridge.f_sw") * (s.value("semi.e_on") + s.value("semi.e_off")) * v_dc
                    / s.value("semi.v_ref")
                    * i
                    / (PI * s.value("semi.i_ref"));
            assert!(
                rel(s.value(&format!("semi.p_switch_sw.{key}")), want) < 1e-4,
                "{name} {key}"
            );
        }
    }
}

#[test]
fn the_phasor_chain_at_rated_load_is_the_sheets() {
    // leg_current redoes the filter's fundamental chain for any load; at rated load it
    // must give the sheet's modulation indices and the switch-node angle traced in
    // `semi.phi` from the filter's own phasors (the same circuit, written twice).
    for name in common::demos() {
        let rec = common::load(&demo(&name));
        let s = bridgebook::calc::evaluate(&rec.design);
        for key in ["min", "nominal", "max"] {
            let p = bridgebook::calc::leg_current::leg_point(&rec.design, &s, key, 1.0);
            let m = s.value(&format!("modulation.m_a.{key}"));
            assert!(rel(p.m, m) < 1e-9, "{name} {key}: m {} vs {m}", p.m);
            assert!(rel(p.i_pk, s.value("semi.i_leg")) < 1e-9, "{name} {key}");
            assert!((p.phi - s.value("semi.phi")).abs() < 1e-9, "{name} {key}");
        }
    }
}

#[test]
fn mosfet_losses_sit_at_the_junction_temperature_they_produce() {
    // Fixed point: R_ds,on at T_j gives losses that give T_j again through the thermal
    // network (steady-state thermal resistances; common practice).
    let s = evaluate(&demo("alder-hut.yaml"));
    for key in ["min", "nominal", "max"] {
        let t_est = s.value(&format!("semi.t_j_est.{key}"));
        let t_net = s.value(&format!("thermal.t_j_switch.{key}"));
        assert!((t_est - t_net).abs() < 0.01, "{key}: {t_est} vs {t_net}");
        // R(T) = R25 (1 + alpha (T - 25)) by hand.
        let r =
            s.value("semi.r_ds_on") * (1.0 + s.value("semi.r_ds_on_coefficient") * (t_est - 25.0));
        assert!(rel(s.value(&format!("semi.r_ds_on_hot.{key}")), r) < 1e-12);
        // Channel loss without dead time would be R I^2 / 4 (each switch conducts half
        // of the time in both directions); the dead times take 2 t_d f_sw of it away.
        let i = s.value("semi.i_leg");
        let dead = 2.0 * s.value("semi.t_dead") * s.value("bridge.f_sw");
        let want = r * i * i / 4.0 * (1.0 - dead);
        assert!(rel(s.value(&format!("semi.p_switch_cond.{key}")), want) < 0.01);
    }
}

#[test]
fn thermal_network_by_hand() {
    // Series thermal network, junction-case-heatsink-ambient, one shared heatsink
    // (electrical analogy of thermal resistance; common practice).
    let s = evaluate(&demo("fen-barn.yaml"));
    let p_t = s.value("semi.p_switch.nominal");
    let p_d = s.value("semi.p_diode.nominal");
    let p_all = 6.0 * (p_t + p_d); // three legs, two positions each
    let t_s = 50.0 + p_all * 0.15;
    let t_c = t_s + (p_t + p_d) * 0.25;
    let t_jt = t_c + p_t * 0.30;
    let t_jd = t_c + p_d * 0.50;
    assert!((s.value("thermal.t_j_switch.nominal") - t_jt).abs() < 1e-9);
    assert!((s.value("thermal.t_j_diode.nominal") - t_jd).abs() < 1e-9);
    // IGBT losses do not depend on temperature here, so the highest ambient is the
    // present ambient plus the junction's distance to its maximum.
    let hot = s.value("thermal.t_j_hot");
    assert!((s.value("thermal.t_a_max") - (50.0 + 175.0 - hot)).abs() < 1e-6);
    assert!((s.value("thermal.j_margin") - (175.0 - hot)).abs() < 1e-9);
    // The heatsink found for the margin puts the hottest junction exactly on it.
    let key = ["min", "nominal", "max"]
        .into_iter()
        .max_by(|a, b| {
            let t = |k: &str| {
                s.value(&format!("thermal.t_j_switch.{k}"))
                    .max(s.value(&format!("thermal.t_j_diode.{k}")))
            };
            t(a).total_cmp(&t(b))
        })
        .unwrap();
    let (pt, pd) = (
        s.value(&format!("semi.p_switch.{key}")),
        s.value(&format!("semi.p_diode.{key}")),
    );
    let r_sa = s.value("thermal.r_sa_needed");
    let t_j = 50.0 + 6.0 * (pt + pd) * r_sa + (pt + pd) * 0.25 + (pt * 0.30).max(pd * 0.50);
    assert!((t_j - (175.0 - 20.0)).abs() < 1e-6, "{t_j}");
}

#[test]
fn standalone_energy_balance() {
    // A lossless LC filter (assumption E2) passes the bridge's DC power to the load:
    // V_dc I_dc = P at every DC point (conservation of energy).
    for name in ["ridge-pump-b.yaml", "alder-hut.yaml"] {
        let s = evaluate(&demo(name));
        let p = s.value("output.power");
        for (key, dc) in [
            ("min", "dc.v_min"),
            ("nominal", "dc.v_nominal"),
            ("max", "dc.v_max"),
        ] {
            let p_dc = s.value(dc) * s.value(&format!("dclink.i_dc.{key}"));
            assert!(rel(p_dc, p) < 1e-4, "{name} {key}: {p_dc} vs {p}");
        }
        // And the input current rating carries the losses on top:
        // V_dc,min I_dc,max = P + P_loss at the DC minimum.
        let i = s.value("ratings.i_dc_max");
        let want = (p + s.value("efficiency.p_loss.min.k100")) / s.value("dc.v_min");
        assert!(rel(i, want) < 1e-12);
    }
}

#[test]
fn grid_energy_balance_includes_the_damping_resistor() {
    // Grid LCL with a series damping resistor: the bridge delivers P to the grid plus
    // the damping resistor's loss at f1, |I_C,1|^2 R_d per phase (conservation of
    // energy; the capacitor current at f1 is the sheet's own).
    let s = evaluate(&demo("fen-barn.yaml"));
    let i_c = s.value("filter.i_c_f1");
    let r_d = s.value("filter.damping_resistance");
    let want = s.value("output.power") + 3.0 * i_c * i_c * r_d;
    let got = s.value("dc.v_nominal") * s.value("dclink.i_dc.nominal");
    assert!(rel(got, want) < 1e-4, "{got} vs {want}");
}

/// A direct simulation of the switched bridge: each leg compared with one triangular
/// carrier (leg b of a bipolar bridge the complement of leg a), the leg currents their
/// fundamentals, the capacitor current the input current less its mean. Returns the
/// capacitor current sampled `per_carrier` times per carrier period over one
/// fundamental period.
fn simulate(
    refs: &[(f64, f64, bool)],
    m: f64,
    i: f64,
    phi: f64,
    m_f: usize,
    per_carrier: usize,
) -> (Vec<f64>, Vec<Vec<(bool, f64)>>) {
    let n = m_f * per_carrier;
    let mut legs = vec![Vec::with_capacity(n); refs.len()];
    let mut i_in = Vec::with_capacity(n);
    for k in 0..n {
        let theta = 2.0 * PI * (k as f64 + 0.5) / n as f64;
        // Triangle from -1 (at the start of each carrier period) to +1 and back.
        let x = ((k as f64 + 0.5) / per_carrier as f64).fract();
        let carrier = if x < 0.5 {
            1.0 - 4.0 * x
        } else {
            -3.0 + 4.0 * x
        };
        let mut sum = 0.0;
        for (j, &(shift, sign, complement)) in refs.iter().enumerate() {
            let r = m * (theta - shift).sin();
            let on = if complement {
                m * (theta).sin() <= carrier
            } else {
                r > carrier
            };
            let current = sign * i * (theta - shift - phi).sin();
            legs[j].push((on, current));
            if on {
                sum += current;
            }
        }
        i_in.push(sum);
    }
    let mean = i_in.iter().sum::<f64>() / n as f64;
    (i_in.iter().map(|x| mean - x).collect(), legs)
}

fn rms(v: &[f64]) -> f64 {
    (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
}

/// Peak-to-peak of the integral of `i` (a period sampled evenly) over a capacitance,
/// after averaging over each carrier period to drop the switching ripple.
fn low_frequency_pp(i: &[f64], per_carrier: usize, c: f64, f1: f64) -> f64 {
    let dt = 1.0 / (f1 * i.len() as f64);
    let means: Vec<f64> = i
        .chunks(per_carrier)
        .map(|ch| ch.iter().sum::<f64>() / ch.len() as f64)
        .collect();
    let mut v = 0.0_f64;
    let (mut lo, mut hi) = (0.0_f64, 0.0_f64);
    for m in means {
        v += m * dt * per_carrier as f64 / c;
        lo = lo.min(v);
        hi = hi.max(v);
    }
    hi - lo
}

#[test]
fn full_bridge_2f1_ripple_and_capacitor_rms_against_a_switched_simulation() {
    // alder-hut: unipolar full bridge at 16 kHz, 50 Hz (m_f = 320).
    let s = evaluate(&demo("alder-hut.yaml"));
    let (m, i, phi) = (
        s.value("modulation.m_a.nominal"),
        s.value("semi.i_leg"),
        s.value("semi.phi"),
    );
    let per = 400;
    let (i_c, _) = simulate(&[(0.0, 1.0, false), (PI, 1.0, false)], m, i, phi, 320, per);
    // Total rms of the simulated capacitor current against the overlap method.
    assert!(
        rel(s.value("dclink.i_rms.nominal"), rms(&i_c)) < 0.01,
        "{} vs {}",
        s.value("dclink.i_rms.nominal"),
        rms(&i_c)
    );
    // The 2 f1 ripple formula m I / (2 omega C) against the simulated bus voltage.
    let c = s.value("dclink.c");
    let sim = low_frequency_pp(&i_c, per, c, 50.0);
    assert!(
        rel(s.value("dclink.v_2f_pp"), sim) < 0.02,
        "{} vs {sim}",
        s.value("dclink.v_2f_pp")
    );
}

#[test]
fn half_bridge_midpoint_ripple_against_a_switched_simulation() {
    // ridge-pump-b: half-bridge at 20 kHz (m_f = 400), split capacitors of C each. The
    // source delivers its mean current: i_C1 = I_dc - s i, i_C2 = I_dc + (1 - s) i;
    // the midpoint moves by (v_C2 - v_C1) / 2 (Kirchhoff's current law).
    let s = evaluate(&demo("ridge-pump-b.yaml"));
    let (m, i, phi) = (
        s.value("modulation.m_a.nominal"),
        s.value("semi.i_leg"),
        s.value("semi.phi"),
    );
    let per = 300;
    let (_, legs) = simulate(&[(0.0, 1.0, false)], m, i, phi, 400, per);
    let leg = &legs[0];
    let i_dc = leg
        .iter()
        .map(|(on, x)| if *on { *x } else { 0.0 })
        .sum::<f64>()
        / leg.len() as f64;
    let c1: Vec<f64> = leg
        .iter()
        .map(|(on, x)| i_dc - if *on { *x } else { 0.0 })
        .collect();
    let c2: Vec<f64> = leg
        .iter()
        .map(|(on, x)| i_dc + if *on { 0.0 } else { *x })
        .collect();
    let mid: Vec<f64> = c1.iter().zip(&c2).map(|(a, b)| (b - a) / 2.0).collect();
    let c = s.value("dclink.c");
    let sim = low_frequency_pp(&mid, per, c, 50.0);
    assert!(
        rel(s.value("dclink.v_mid_pp"), sim) < 0.02,
        "{} vs {sim}",
        s.value("dclink.v_mid_pp")
    );
    assert!(
        rel(s.value("dclink.i_rms.nominal"), rms(&c2)) < 0.01,
        "{} vs {}",
        s.value("dclink.i_rms.nominal"),
        rms(&c2)
    );
}

#[test]
fn three_phase_capacitor_rms_against_a_switched_simulation() {
    // fen-barn with its third harmonic taken out of the comparison: the overlap method
    // for three legs on one carrier against direct comparison (sine references).
    let text = edit(
        &demo("fen-barn.yaml"),
        "pwm: third-harmonic",
        "pwm: sine-triangle",
    );
    let text = edit(
        &text,
        "switching_frequency: 10.05 kHz",
        "switching_frequency: 10 kHz",
    );
    let s = evaluate(&text);
    let (m, i, phi) = (
        s.value("modulation.m_a.nominal"),
        s.value("semi.i_leg"),
        s.value("semi.phi"),
    );
    let per = 300;
    let refs = [
        (0.0, 1.0, false),
        (2.0 * PI / 3.0, 1.0, false),
        (4.0 * PI / 3.0, 1.0, false),
    ];
    let (i_c, _) = simulate(&refs, m.min(1.0), i, phi, 200, per);
    assert!(
        rel(s.value("dclink.i_rms.nominal"), rms(&i_c)) < 0.01,
        "{} vs {}",
        s.value("dclink.i_rms.nominal"),
        rms(&i_c)
    );
    // A balanced three-phase bridge draws constant power: no low-frequency part
    // (circuit theory).
    assert!(s.value("dclink.i_lf.nominal") < 1e-6 * s.value("dclink.i_rms.nominal"));
}

#[test]
fn capacitor_life_doubles_every_10_kelvin() {
    // The 10 K rule (Arrhenius rule of thumb for electrolytic capacitors; common
    // practice): 5000 h at 105 degC becomes 80 000 h at a 65 degC hot spot.
    let text = demo("alder-hut.yaml");
    let text = edit(&text, "rated_life: 10000 h", "rated_life: 5000 h");
    let text = edit(
        &text,
        "hotspot_to_ambient: 3 K/W",
        "hotspot_to_ambient: 0.000001 K/W",
    );
    let text = edit(&text, "ambient_max: 40 degC", "ambient_max: 65 degC");
    let s = evaluate(&text);
    assert!((s.value("dclink.t_hotspot") - 65.0).abs() < 1e-3);
    assert!(rel(s.value("dclink.life") / 3600.0, 80_000.0) < 1e-4);
}

#[test]
fn weighted_efficiencies_by_hand() {
    // California Energy Commission weights 0.04/0.05/0.12/0.21/0.53/0.05 at
    // 10/20/30/50/75/100 %; European (EN 50530) 0.03/0.06/0.13/0.10/0.48/0.20 at
    // 5/10/20/30/50/100 % (both from memory), applied to the sheet's own curve.
    let s = evaluate(&demo("fen-barn.yaml"));
    let eta = |k: u32| s.value(&format!("efficiency.eta.nominal.k{k}"));
    let cec = 0.04 * eta(10)
        + 0.05 * eta(20)
        + 0.12 * eta(30)
        + 0.21 * eta(50)
        + 0.53 * eta(75)
        + 0.05 * eta(100);
    let eu = 0.03 * eta(5)
        + 0.06 * eta(10)
        + 0.13 * eta(20)
        + 0.10 * eta(30)
        + 0.48 * eta(50)
        + 0.20 * eta(100);
    assert!(rel(s.value("efficiency.eta_cec.nominal"), cec) < 1e-12);
    assert!(rel(s.value("efficiency.eta_eu.nominal"), eu) < 1e-12);
    // Efficiency falls at light load, where the fixed losses weigh more.
    assert!(eta(5) < eta(50));
    // At rated load the semiconductor loss is the semiconductor section's own.
    assert!(
        rel(
            s.value("efficiency.p_semi.nominal.k100"),
            s.value("semi.p_bridge.nominal")
        ) < 1e-12
    );
}

#[test]
fn overcurrent_device_by_the_125_percent_rule() {
    // NEC 690.9(B)/705.30(B) 125 % of continuous output current, rounded up to the
    // 240.6(A) standard ratings (from memory): 15 kW at 400 V three-phase is 21.65 A,
    // 27.06 A at 125 %, so 30 A.
    let s = evaluate(&demo("fen-barn.yaml"));
    assert!(rel(s.value("ratings.i_out"), 15e3 / (3f64.sqrt() * 400.0)) < 1e-9);
    assert!(
        rel(
            s.value("ratings.ocpd_min"),
            1.25 * 15e3 / (3f64.sqrt() * 400.0)
        ) < 1e-9
    );
    assert_eq!(s.value("ratings.ocpd"), 30.0);
    // 2.2 kW at 230 V and power factor 0.8 is 11.96 A; 14.95 A at 125 %: 15 A.
    let s = evaluate(&demo("ridge-pump-b.yaml"));
    assert_eq!(s.value("ratings.ocpd"), 15.0);
}

#[test]
fn bleeder_time_and_stored_energy_by_hand() {
    // Exponential discharge through the bleeder, t = R C ln(V0 / V1), and E = C V^2 / 2
    // (circuit theory). ridge-pump: two 2.2 mF halves in series, 82 kohm, 820 V to 60 V.
    let s = evaluate(&demo("ridge-pump-b.yaml"));
    let c = 2.2e-3 / 2.0;
    assert!(
        rel(
            s.value("dclink.t_discharge"),
            82e3 * c * (820.0f64 / 60.0).ln()
        ) < 1e-12
    );
    assert!(rel(s.value("dclink.energy"), c * 820.0 * 820.0 / 2.0) < 1e-12);
}

#[test]
fn check_json_and_the_package_carry_the_power_stage() {
    let path = format!("{}/designs/alder-hut.yaml", env!("CARGO_MANIFEST_DIR"));
    let o = run(&["check", &path, "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let doc: serde_json::Value = serde_json::from_str(&common::stdout(&o)).unwrap();
    let ids: Vec<&str> = doc["checks"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|c| c["id"].as_str())
        .collect();
    for id in [
        "check.semi.voltage",
        "check.semi.current",
        "check.semi.crosscheck",
        "check.thermal.junction",
        "check.dclink.life",
        "check.dclink.voltage",
        "check.dclink.discharge",
    ] {
        assert!(ids.contains(&id), "{id} missing from check --json");
    }
    // The package: its sections, its plots, and the bus energy and bleeder time in
    // the cautions (the stored-energy caution every package must give).
    let rec = common::load_named("alder-hut.yaml", &demo("alder-hut.yaml"));
    let sheet = bridgebook::calc::evaluate(&rec.design);
    let templates = bridgebook::report::Templates::builtin();
    let stamp = bridgebook::package::stamp(&rec, &templates);
    let r = bridgebook::report::render(&rec, &sheet, &stamp, &templates).expect("render");
    for part in [
        "#calc-section(\"Semiconductor stresses and losses\")",
        "#calc-section(\"Thermal path and junction temperatures\")",
        "#calc-section(\"DC link\")",
        "#calc-section(\"Losses and efficiency\")",
        "#calc-section(\"Ratings\")",
        "/plots/efficiency-curve.svg",
        "/plots/loss-breakdown.svg",
        "/plots/junction-temperature.svg",
        "efficiency.eta.nominal.k*",
    ] {
        assert!(r.typst.contains(part), "missing {part}");
    }
    let energy = bridgebook::units::format_value(
        sheet.value("dclink.energy"),
        bridgebook::units::Unit::Joule,
    );
    let time = bridgebook::units::format_value(
        sheet.value("dclink.t_discharge"),
        bridgebook::units::Unit::Second,
    );
    let cautions = r.typst.split("#cautions-block(").nth(1).unwrap();
    let cautions = cautions.split("#check-summary(").next().unwrap();
    assert!(cautions.contains(&energy), "{energy} not in the cautions");
    assert!(cautions.contains(&time), "{time} not in the cautions");
}

fn write_with_library(s: &Scratch, record: &str, library: &str) -> String {
    std::fs::create_dir_all(s.path().join("parts")).unwrap();
    std::fs::write(s.path().join("parts/devices.yaml"), library).unwrap();
    s.write("design.yaml", record).display().to_string()
}

#[test]
fn library_errors_point_at_the_library_file_and_line() {
    let s = Scratch::new("library");
    let lib = std::fs::read_to_string(format!(
        "{}/designs/parts/devices.yaml",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap();
    let broken = edit(&lib, "r_ds_on: 25 mohm", "r_ds_on: 25 mV");
    let path = write_with_library(&s, &demo("alder-hut.yaml"), &broken);
    let o = run(&["check", &path]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    let line = broken
        .lines()
        .position(|l| l.contains("r_ds_on: 25 mV"))
        .unwrap()
        + 1;
    assert!(
        err.contains(&format!("parts/devices.yaml:{line}:")),
        "{err}"
    );
    assert!(err.contains("devices.BB-SM0725.r_ds_on"), "{err}");
    assert!(err.contains("hint:"), "{err}");

    // A name that is not in the library: did-you-mean, at the record's line.
    let path = write_with_library(
        &s,
        &edit(
            &demo("alder-hut.yaml"),
            "device: BB-SM0725",
            "device: BB-SM0752",
        ),
        &lib,
    );
    let err = stderr(&run(&["check", &path]));
    assert!(
        err.contains("device `BB-SM0752` is not in the library"),
        "{err}"
    );
    assert!(err.contains("did you mean `BB-SM0725`?"), "{err}");
    assert!(err.contains("design.yaml:"), "{err}");

    // A library that is not there.
    let path = write_with_library(
        &s,
        &edit(
            &demo("alder-hut.yaml"),
            "library: parts/devices.yaml",
            "library: parts/missing.yaml",
        ),
        &lib,
    );
    let o = run(&["check", &path]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("cannot read the device library `parts/missing.yaml`"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn switch_section_errors() {
    let s = Scratch::new("switches");
    let lib = std::fs::read_to_string(format!(
        "{}/designs/parts/devices.yaml",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap();
    // No overshoot given at all.
    let path = write_with_library(
        &s,
        &edit(&demo("alder-hut.yaml"), "  overshoot: 10 %\n", ""),
        &lib,
    );
    let err = stderr(&run(&["check", &path]));
    assert!(err.contains("turn-off overshoot is not given"), "{err}");
    // A stray inductance needs the device's fall time: the ridge pump's inline IGBT
    // has none.
    let path = write_with_library(
        &s,
        &edit(
            &demo("ridge-pump-b.yaml"),
            "overshoot: 10 %",
            "stray_inductance: 40 nH",
        ),
        &lib,
    );
    let err = stderr(&run(&["check", &path]));
    assert!(
        err.contains("needs the device's current fall time"),
        "{err}"
    );
    // Switches without a thermal path.
    let text = demo("ridge-pump-b.yaml");
    let start = text.find("thermal:").unwrap();
    let end = text.find("dc_link:").unwrap();
    let text = format!("{}{}", &text[..start], &text[end..]);
    let path = write_with_library(&s, &text, &lib);
    let o = run(&["check", &path]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("`thermal` is missing"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn the_record_hash_covers_the_library_device() {
    // The canonical record carries the device written out, so a changed library entry
    // changes the hash and the record reads back on its own.
    let text = demo("alder-hut.yaml");
    let a = common::load(&text);
    let doc = &a.document["switches"]["device"];
    assert_eq!(doc["r_ds_on"].as_str(), Some("25 mohm"));
    assert!(a.document["switches"].get("library").is_none());
    let canonical = serde_yaml::to_string(&a.document).unwrap();
    let again = bridgebook::record::load_str("canonical.yaml", &canonical).expect("reads back");
    let (x, y) = (
        a.design.switches.unwrap().device,
        again.design.switches.unwrap().device,
    );
    assert_eq!(x.e_on.value, y.e_on.value);
    assert_eq!(x.t_j_max.value, y.t_j_max.value);
    let a = common::load(&text);
    let s1 = bridgebook::package::stamp(&a, &bridgebook::report::Templates::builtin());
    let s = Scratch::new("hash");
    let lib = std::fs::read_to_string(format!(
        "{}/designs/parts/devices.yaml",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap();
    write_with_library(
        &s,
        &text,
        &edit(&lib, "r_ds_on: 25 mohm", "r_ds_on: 26 mohm"),
    );
    let b = bridgebook::record::load_file(&s.path().join("design.yaml")).unwrap();
    let s2 = bridgebook::package::stamp(&b, &bridgebook::report::Templates::builtin());
    assert_ne!(s1.record_sha256, s2.record_sha256);
}

#[test]
fn a_thermal_section_without_switches_still_sets_the_capacitor_ambient() {
    // The bank's hot spot is the ambient plus I^2 ESR R_th (steady state; common
    // practice): with `thermal` but no `switches`, that ambient is the record's.
    let text = demo("alder-hut.yaml");
    let start = text.find("switches:").unwrap();
    let end = text.find("thermal:").unwrap();
    let text = format!("{}{}", &text[..start], &text[end..]);
    let s = evaluate(&text);
    assert!(s.get("semi.p_bridge.nominal").is_none());
    assert_eq!(s.value("thermal.t_a"), 40.0);
    let i = s
        .value("dclink.i_rms.min")
        .max(s.value("dclink.i_rms.nominal"))
        .max(s.value("dclink.i_rms.max"));
    let want = 40.0 + i * i * 0.060 * 3.0;
    assert!((s.value("dclink.t_hotspot") - want).abs() < 1e-9);
}

#[test]
fn no_standard_overcurrent_rating_above_6000_a_gives_a_warning() {
    // NEC 240.6(A) ends at 6000 A (from memory): 5 MW at 400 V three-phase is 7217 A,
    // 9021 A at 125 %, beyond the list.
    let text = edit(&demo("fen-barn.yaml"), "power: 15 kW", "power: 5 MW");
    let s = evaluate(&text);
    assert!(s.get("ratings.ocpd").is_none());
    assert!(
        rel(
            s.value("ratings.ocpd_min"),
            1.25 * 5e6 / (3f64.sqrt() * 400.0)
        ) < 1e-9
    );
    assert!(s.warnings.iter().any(|w| w.text.contains("240.6(A)")));
}
