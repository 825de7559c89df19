//! The DC-link capacitor bank: its ripple current (low-frequency and switching parts,
//! computed numerically from the switch currents over the period, [`super::bridge_leg`]),
//! the low-frequency voltage ripple (the half-bridge midpoint at f1, the single-phase
//! full bridge's 2 f1 power ripple), the hot spot and expected life, the voltage against
//! the rating, the stored energy and the bleeder's discharge time.
//!
//! Assumptions (stated in the package, E12): the DC source delivers only its mean
//! current, so the bank carries every other part of the bridge's input current; leg
//! currents are constant over a carrier period (the inductor ripple is left out of the
//! bank's current); for a half-bridge the two halves are equal and each carries half
//! the output current at f1.

use super::bridge_leg::{capacitor_current, BusKind, CapacitorCurrent};
use super::leg_current::{bus_kind, leg_point, legs};
use super::modulation::{short, DC_POINTS};
use super::{given, limit_quantity, limit_source};
use crate::record::{DcLink, Design, Topology};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// The bank's current at one DC point and load fraction.
pub fn bank_current(d: &Design, s: &Sheet, point: &str, k: f64) -> CapacitorCurrent {
    let a = leg_point(d, s, point, k);
    capacitor_current(bus_kind(d), &legs(d, &a))
}

/// How many equal capacitor banks carry the computed current (two halves of a
/// half-bridge, else one).
pub fn banks(d: &Design) -> f64 {
    if d.bridge.topology == Topology::HalfBridge {
        2.0
    } else {
        1.0
    }
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    let Some(dc) = &d.dc_link else {
        return;
    };
    inputs(s, dc);
    let half = d.bridge.topology == Topology::HalfBridge;
    let c = dc.capacitance.value;
    let c_bus = if half { c / 2.0 } else { c };
    if half {
        s.derive(
            "dclink.c_bus",
            "Capacitance across the bus (two halves in series)",
            "C_\"bus\"",
            Unit::Farad,
        )
        .formula("C_\"dc\" / 2")
        .inputs(&["dclink.c"])
        .value(c_bus);
    } else {
        s.derive(
            "dclink.c_bus",
            "Capacitance across the bus",
            "C_\"bus\"",
            Unit::Farad,
        )
        .formula("C_\"dc\"")
        .inputs(&["dclink.c"])
        .value(c_bus);
    }
    let numerical = || {
        Source::common_practice(
            "the bank carries the bridge's input current less its mean (the source delivers only the mean); the product of two legs' switch states averages over a carrier period to the overlap of their on-intervals; integrated numerically over the fundamental period",
        )
    };
    let mut worst = ("nominal", f64::NEG_INFINITY);
    for (key, label, dc_id) in DC_POINTS {
        let sh = short(key);
        let m_id = format!("modulation.m_a.{key}");
        let cc = bank_current(d, s, key, 1.0);
        let inputs = [m_id.as_str(), "semi.i_leg", "semi.phi"];
        let inputs: Vec<&str> = inputs
            .into_iter()
            .filter(|id| s.get(id).is_some())
            .collect();
        let sym = |id: &str| s.symbol(id);
        let i_leg = if s.get("semi.i_leg").is_some() {
            sym("semi.i_leg")
        } else {
            "I_\"leg\"".into()
        };
        let phi = if s.get("semi.phi").is_some() {
            sym("semi.phi")
        } else {
            "phi_\"sw\"".into()
        };
        let m_sym = sym(&m_id);
        let duty = super::leg_current::duty_formula(d, &m_sym);
        let ins = format!("{duty} \"and\" {i_leg} sin(theta - {phi}) \"of each leg\"");
        let what = if half { "each half" } else { "the bank" };
        s.derive(
            &format!("dclink.i_dc.{key}"),
            &format!("Bridge DC input current without losses, {label}"),
            &format!("I_(\"dc\",\"{sh}\")"),
            Unit::Ampere,
        )
        .formula(&format!("\"mean of\" sum s_k i_k, {ins}"))
        .inputs(&inputs)
        .source(numerical())
        .value(cc.i_dc);
        s.derive(
            &format!("dclink.i_lf.{key}"),
            &format!("Capacitor rms current, low-frequency part, {what}, {label}"),
            &format!("I_(C,\"lf,{sh}\")"),
            Unit::Ampere,
        )
        .formula(&format!("\"rms of carrier-period means of\" i_C, {ins}"))
        .inputs(&inputs)
        .source(numerical())
        .value(cc.low_frequency_rms);
        s.derive(
            &format!("dclink.i_hf.{key}"),
            &format!("Capacitor rms current, switching part, {what}, {label}"),
            &format!("I_(C,\"sw,{sh}\")"),
            Unit::Ampere,
        )
        .formula(&format!(
            "sqrt(\"mean of\" i_C^2 - I_(C,\"lf,{sh}\")^2), {ins}"
        ))
        .inputs(&[inputs.as_slice(), &[&format!("dclink.i_lf.{key}")]].concat())
        .source(numerical())
        .value(cc.switching_rms);
        let rms = s
            .derive(
                &format!("dclink.i_rms.{key}"),
                &format!("Capacitor rms current, {what}, {label}"),
                &format!("I_(C,\"{sh}\")"),
                Unit::Ampere,
            )
            .formula(&format!("sqrt(I_(C,\"lf,{sh}\")^2 + I_(C,\"sw,{sh}\")^2)"))
            .inputs(&[&format!("dclink.i_lf.{key}"), &format!("dclink.i_hf.{key}")])
            .value(cc.total_rms());
        if rms > worst.1 {
            worst = (key, rms);
        }
        let esr_formula = if half {
            format!("2 I_(C,\"{sh}\")^2 R_\"ESR\"")
        } else {
            format!("I_(C,\"{sh}\")^2 R_\"ESR\"")
        };
        s.derive(
            &format!("dclink.p_esr.{key}"),
            &format!("Capacitor ESR loss, {label}"),
            &format!("P_(\"ESR\",\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&esr_formula)
        .inputs(&[&format!("dclink.i_rms.{key}"), "dclink.esr"])
        .value(banks(d) * rms * rms * dc.esr.value);
        let v = s.value(dc_id);
        let v_sym = s.symbol(dc_id);
        s.derive(
            &format!("dclink.p_bleed.{key}"),
            &format!("Bleeder loss, {label}"),
            &format!("P_(\"bl\",\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&format!("{v_sym}^2 / R_\"bl\""))
        .inputs(&[dc_id, "dclink.r_bleed"])
        .value(v * v / dc.bleeder.value);
    }
    voltage_ripple(d, s, c);
    life(d, s, dc, worst.0);
    voltage_and_discharge(d, s, dc, c_bus);
}

fn inputs(s: &mut Sheet, dc: &DcLink) {
    given(
        s,
        "dclink.c",
        "DC-link capacitance (each half of a half-bridge)",
        "C_\"dc\"",
        &dc.capacitance,
        Unit::Farad,
    );
    given(
        s,
        "dclink.esr",
        "DC-link equivalent series resistance (each half)",
        "R_\"ESR\"",
        &dc.esr,
        Unit::Ohm,
    );
    given(
        s,
        "dclink.v_rating",
        "DC-link capacitor voltage rating (each half)",
        "V_(C,\"rat\")",
        &dc.voltage_rating,
        Unit::Volt,
    );
    given(
        s,
        "dclink.r_th",
        "Capacitor hot-spot-to-ambient thermal resistance",
        "R_(\"th\",C)",
        &dc.r_th_ha,
        Unit::KelvinPerWatt,
    );
    given(
        s,
        "dclink.life_rated",
        "Capacitor rated life at its rated temperature",
        "L_0",
        &dc.rated_life,
        Unit::Hour,
    );
    given(
        s,
        "dclink.t_rated",
        "Capacitor rated temperature",
        "T_0",
        &dc.rated_temperature,
        Unit::DegreeCelsius,
    );
    given(
        s,
        "dclink.r_bleed",
        "Bleeder resistance across the bus",
        "R_\"bl\"",
        &dc.bleeder,
        Unit::Ohm,
    );
}

/// The low-frequency voltage ripple in closed form, where the bridge has one.
fn voltage_ripple(d: &Design, s: &mut Sheet, c: f64) {
    if s.get("semi.i_leg").is_none() {
        return;
    }
    let w = s.value("output.omega1");
    let i = s.value("semi.i_leg");
    match (d.bridge.topology, bus_kind(d)) {
        (Topology::HalfBridge, _) => {
            // The midpoint moves against the bus centre by (v_C2 - v_C1) / 2, whose
            // derivative is (i_C2 - i_C1) / (2 C) = i / (2 C) (KCL at the midpoint).
            s.derive("dclink.v_mid_pp", "Midpoint voltage ripple at f1, peak to peak", "Delta V_\"mid\"", Unit::Volt)
                .formula("I_\"leg\" / (omega_1 C_\"dc\")")
                .inputs(&["semi.i_leg", "output.omega1", "dclink.c"])
                .source(Source::common_practice("derived from Kirchhoff's current law at the midpoint of two equal split capacitors: the output current divides equally between them, so the midpoint swings by I_pk / (omega_1 C) peak to peak"))
                .value(i / (w * c));
        }
        (Topology::FullBridge, BusKind::CommonCarrier | BusKind::Complementary) => {
            // Single-phase power pulsates at 2 f1 with amplitude S_sw = V_sw,pk I_pk / 2,
            // V_sw,pk = m_a V_dc; the bank carries S_sw / V_dc of it as current, of
            // amplitude m_a I_pk / 2, which makes m_a I_pk / (2 omega_1 C) peak to peak.
            let m = s.value("modulation.m_a.nominal");
            let m_sym = s.symbol("modulation.m_a.nominal");
            s.derive("dclink.v_2f_pp", "Bus voltage ripple at 2 f1, peak to peak, DC nominal", "Delta V_(2 f)", Unit::Volt)
                .formula(&format!("{m_sym} I_\"leg\" / (2 omega_1 C_\"dc\")"))
                .inputs(&["modulation.m_a.nominal", "semi.i_leg", "output.omega1", "dclink.c"])
                .source(Source::common_practice("derived from the instantaneous power of a single-phase output, which pulsates at 2 f1 with the apparent power S = m_a V_dc I_pk / 2 as amplitude; the bank supplies S / V_dc of current at 2 f1"))
                .value(m * i / (2.0 * w * c));
        }
        _ => {}
    }
}

fn life(d: &Design, s: &mut Sheet, dc: &DcLink, worst: &str) {
    let label = DC_POINTS.iter().find(|p| p.0 == worst).map_or("", |p| p.1);
    let t_a_id = match (s.get("thermal.t_a"), &d.thermal) {
        (Some(_), _) => "thermal.t_a".to_string(),
        // A thermal section without switches: its ambient still holds for the bank.
        (None, Some(th)) => {
            given(
                s,
                "thermal.t_a",
                "Highest ambient temperature",
                "T_a",
                &th.ambient_max,
                Unit::DegreeCelsius,
            );
            "thermal.t_a".to_string()
        }
        // No thermal section: the capacitor's ambient is needed anyway.
        (None, None) => "dclink.t_a".to_string(),
    };
    if t_a_id == "dclink.t_a" {
        s.input(
            "dclink.t_a",
            "Capacitor ambient temperature",
            "T_a",
            40.0,
            Unit::DegreeCelsius,
            Source::common_practice(
                "40 °C inside the enclosure where the record gives no thermal section",
            ),
        );
    }
    let t_a = s.value(&t_a_id);
    let i_id = format!("dclink.i_rms.{worst}");
    let i = s.value(&i_id);
    let i_sym = s.symbol(&i_id);
    let t_hs = s
        .derive("dclink.t_hotspot", &format!("Capacitor hot-spot temperature, {label}"), "T_\"hs\"", Unit::DegreeCelsius)
        .formula(&format!("T_a + {i_sym}^2 R_\"ESR\" R_(\"th\",C)"))
        .inputs(&[&t_a_id, &i_id, "dclink.esr", "dclink.r_th"])
        .source(Source::common_practice("steady-state hot-spot rise of the ESR loss over the capacitor's hot-spot-to-ambient thermal resistance"))
        .value(t_a + i * i * dc.esr.value * dc.r_th_ha.value);
    let life = dc.rated_life.value * 2f64.powf((dc.rated_temperature.value - t_hs) / 10.0);
    s.derive("dclink.life", "Expected capacitor life", "L_C", Unit::Hour)
        .formula("L_0 dot 2^((T_0 - T_\"hs\") / (10 K))")
        .inputs(&["dclink.life_rated", "dclink.t_rated", "dclink.t_hotspot"])
        .source(Source::common_practice("the life of an electrolytic capacitor doubles for every 10 K its hot spot runs below the rated temperature (Arrhenius rule of thumb)"))
        .value(life);
    let l = &d.limits;
    let target = limit_quantity(
        s,
        "limits.min_capacitor_life",
        "Least expected DC-link capacitor life",
        "L_(C,\"min\")",
        &l.min_capacitor_life,
        Unit::Hour,
    );
    s.check(
        "check.dclink.life",
        "The DC-link capacitors' expected life reaches the target at the highest ambient",
        "dclink.life",
        Relation::AtLeast,
        target,
        limit_source(&l.min_capacitor_life),
    );
}

fn voltage_and_discharge(d: &Design, s: &mut Sheet, dc: &DcLink, c_bus: f64) {
    let half = d.bridge.topology == Topology::HalfBridge;
    let v_max = s.value("dc.v_max");
    let (ripple_id, ripple) = match (s.get("dclink.v_mid_pp"), s.get("dclink.v_2f_pp")) {
        (Some(q), _) => ("dclink.v_mid_pp", q.value),
        (_, Some(q)) => ("dclink.v_2f_pp", q.value),
        _ => ("", 0.0),
    };
    let (formula, value) = match (half, ripple_id.is_empty()) {
        (true, false) => (
            format!("V_\"dc,max\" / 2 + {} / 2", s.symbol(ripple_id)),
            v_max / 2.0 + ripple / 2.0,
        ),
        (true, true) => ("V_\"dc,max\" / 2".to_string(), v_max / 2.0),
        (false, false) => (
            format!("V_\"dc,max\" + {} / 2", s.symbol(ripple_id)),
            v_max + ripple / 2.0,
        ),
        (false, true) => ("V_\"dc,max\"".to_string(), v_max),
    };
    let mut inputs = vec!["dc.v_max"];
    if !ripple_id.is_empty() {
        inputs.push(ripple_id);
    }
    s.derive(
        "dclink.v_peak",
        if half {
            "Peak voltage of each half"
        } else {
            "Peak bus voltage"
        },
        "V_(C,\"pk\")",
        Unit::Volt,
    )
    .formula(&formula)
    .inputs(&inputs)
    .value(value);
    s.check(
        "check.dclink.voltage",
        "The DC-link capacitors' peak voltage stays within their rating",
        "dclink.v_peak",
        Relation::AtMost,
        dc.voltage_rating.value,
        super::limit_source_given(&dc.voltage_rating),
    );
    s.derive(
        "dclink.energy",
        "Energy stored in the DC link at the DC maximum",
        "E_\"dc\"",
        Unit::Joule,
    )
    .formula("C_\"bus\" V_\"dc,max\"^2 / 2")
    .inputs(&["dclink.c_bus", "dc.v_max"])
    .value(c_bus * v_max * v_max / 2.0);
    let l = &d.limits;
    let v_safe = limit_quantity(
        s,
        "limits.safe_touch_voltage",
        "Safe touch voltage of the discharged bus",
        "V_\"safe\"",
        &l.safe_touch_voltage,
        Unit::Volt,
    );
    s.derive("dclink.t_discharge", "Time for the bleeder to bring the bus below the safe touch voltage", "t_\"dis\"", Unit::Second)
        .formula("R_\"bl\" C_\"bus\" ln(V_\"dc,max\" / V_\"safe\")")
        .inputs(&["dclink.r_bleed", "dclink.c_bus", "dc.v_max", "limits.safe_touch_voltage"])
        .source(Source::common_practice("exponential discharge of the bus capacitance through the bleeder alone, from the DC maximum"))
        .value(dc.bleeder.value * c_bus * (v_max / v_safe).ln().max(0.0));
    let t_max = limit_quantity(
        s,
        "limits.max_discharge_time",
        "Longest discharge time to the safe touch voltage",
        "t_(\"dis\",max)",
        &l.max_discharge_time,
        Unit::Second,
    );
    s.check(
        "check.dclink.discharge",
        "The bleeder brings the bus below the safe touch voltage in time",
        "dclink.t_discharge",
        Relation::AtMost,
        t_max,
        limit_source(&l.max_discharge_time),
    );
}
