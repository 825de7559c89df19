//! The bridge's switches: device data from the record (or its device library), the
//! voltage and current stresses with their derating checks, and the losses of each
//! switch position at every DC point at rated load, integrated numerically over the
//! fundamental period ([`super::bridge_leg`]) with the closed forms as a cross-check.
//! The stresses and the switch-node angle are in [`super::switch_stress`]. A MOSFET's
//! losses are taken at the junction temperature they produce at the
//! highest ambient ([`super::thermal::StageModel::operate`]).

use super::bridge_leg::{closed_form_losses, position_rms};
use super::given;
use super::leg_current::leg_point;
use super::modulation::{short, DC_POINTS};
use super::thermal::StageModel;
use crate::record::{Design, DeviceKind, Pwm};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// The relative agreement asked of the numerical and closed-form conduction losses at
/// DC nominal: both are averages of the same duty and current, so any larger gap is an
/// error in one of them.
pub const CROSSCHECK_TOLERANCE: f64 = 0.01;

pub fn evaluate(d: &Design, s: &mut Sheet) {
    let (Some(sw), Some(model)) = (&d.switches, StageModel::of(d)) else {
        return;
    };
    let dev = &sw.device;
    let mosfet = matches!(dev.kind, DeviceKind::Mosfet { .. });
    let v_rat = given(
        s,
        "semi.v_rating",
        "Device blocking voltage rating",
        "V_\"rat\"",
        &dev.voltage_rating,
        Unit::Volt,
    );
    let i_rat = given(
        s,
        "semi.i_rating",
        "Device continuous current rating",
        "I_\"rat\"",
        &dev.current_rating,
        Unit::Ampere,
    );
    match &dev.kind {
        DeviceKind::Igbt { v_ce0, r_ce } => {
            given(
                s,
                "semi.v_ce0",
                "IGBT on-state threshold voltage",
                "V_\"CE0\"",
                v_ce0,
                Unit::Volt,
            );
            given(
                s,
                "semi.r_ce",
                "IGBT on-state slope resistance",
                "r_\"CE\"",
                r_ce,
                Unit::Ohm,
            );
        }
        DeviceKind::Mosfet {
            r_ds_on,
            r_ds_on_coefficient,
        } => {
            given(
                s,
                "semi.r_ds_on",
                "MOSFET on-resistance at 25 °C",
                "R_\"DS,25\"",
                r_ds_on,
                Unit::Ohm,
            );
            given(
                s,
                "semi.r_ds_on_coefficient",
                "Rise of R_ds,on per kelvin",
                "alpha_R",
                r_ds_on_coefficient,
                Unit::PercentPerKelvin,
            );
        }
    }
    given(
        s,
        "semi.e_on",
        "Turn-on energy at the reference point",
        "E_\"on\"",
        &dev.e_on,
        Unit::Joule,
    );
    given(
        s,
        "semi.e_off",
        "Turn-off energy at the reference point",
        "E_\"off\"",
        &dev.e_off,
        Unit::Joule,
    );
    given(
        s,
        "semi.e_rec",
        "Diode recovery energy at the reference point",
        "E_\"rec\"",
        &dev.e_rec,
        Unit::Joule,
    );
    given(
        s,
        "semi.v_ref",
        "Reference voltage of the switching energies",
        "V_\"ref\"",
        &dev.reference_voltage,
        Unit::Volt,
    );
    given(
        s,
        "semi.i_ref",
        "Reference current of the switching energies",
        "I_\"ref\"",
        &dev.reference_current,
        Unit::Ampere,
    );
    given(
        s,
        "semi.v_f0",
        "Diode threshold voltage",
        "V_\"F0\"",
        &dev.diode_v_f0,
        Unit::Volt,
    );
    given(
        s,
        "semi.r_f",
        "Diode slope resistance",
        "r_\"F\"",
        &dev.diode_r_f,
        Unit::Ohm,
    );
    if let Some(t) = &sw.dead_time {
        given(s, "semi.t_dead", "Dead time", "t_d", t, Unit::Second);
    }
    let legs = super::switching::modulation_of(d).legs();
    s.derive(
        "semi.positions",
        "Switch positions (a switch with its diode), two per leg",
        "N_\"pos\"",
        Unit::One,
    )
    .formula(&format!("2 dot {legs}"))
    .value(2.0 * legs as f64);

    super::switch_stress::stresses(d, s, sw, v_rat, i_rat);

    // The leg current and its angle at the switch node, rated load.
    let i_l1 = s.value("filter.i_l_f1");
    s.derive(
        "semi.i_leg",
        "Leg current, peak of the fundamental, rated load",
        "I_\"leg\"",
        Unit::Ampere,
    )
    .formula("sqrt(2) I_(L,1)")
    .inputs(&["filter.i_l_f1"])
    .value(2f64.sqrt() * i_l1);
    super::switch_stress::angle(d, s);

    let t_a = d.thermal.as_ref().map_or(25.0, |t| t.ambient_max.value);
    let duty = |m: &str| super::leg_current::duty_formula(d, m);
    let current = "quad i = I_\"leg\" sin(theta - phi_\"sw\")";
    let integral = || {
        Source::common_practice(
            "average over the fundamental period of the local duty cycle times the device's conduction or switching loss at the local current (sine-triangle PWM, current constant over a carrier period), integrated numerically",
        )
    };
    let scaling = || {
        Source::common_practice(
            "switching energies scaled from the datasheet's reference point linearly in voltage and current, per carrier period, integrated numerically over the half period the device commutates",
        )
    };
    for (key, label, dc_id) in DC_POINTS {
        let sh = short(key);
        let m_id = format!("modulation.m_a.{key}");
        let (m_sym, v_sym) = (s.symbol(&m_id), s.symbol(dc_id));
        let a = leg_point(d, s, key, 1.0);
        // The losses at the junction temperature they produce (as entered for an IGBT).
        let (t_j, l, _) = model.operate(&a, t_a);
        let dev_at = model.device_at(t_j);
        let cf = closed_form_losses(&a, &dev_at);
        let r_id = format!("semi.r_ds_on_hot.{key}");
        let (cond_t, cond_d, cond_inputs): (String, String, Vec<String>) = if mosfet {
            s.derive(&format!("semi.t_j_est.{key}"), &format!("Switch junction temperature the losses are taken at, {label}"), &format!("T_(j,\"est,{sh}\")"), Unit::DegreeCelsius)
                .formula("\"losses and junction temperature solved together\"")
                .source(Source::common_practice("the fixed point of losses and junction temperature at the highest ambient, iterated until it moves less than 0.001 K (the thermal network of this package)"))
                .value(t_j);
            s.derive(
                &r_id,
                &format!("MOSFET on-resistance at its junction temperature, {label}"),
                &format!("R_(\"DS\",\"{sh}\")"),
                Unit::Ohm,
            )
            .formula(&format!(
                "R_\"DS,25\" (1 + alpha_R (T_(j,\"est,{sh}\") - 25 °C))"
            ))
            .inputs(&[
                "semi.r_ds_on",
                "semi.r_ds_on_coefficient",
                &format!("semi.t_j_est.{key}"),
            ])
            .source(Source::common_practice(
                "on-resistance rising linearly with junction temperature from its 25 °C value",
            ))
            .value(match dev_at.channel {
                super::bridge_leg::Channel::Mosfet { r } => r,
                super::bridge_leg::Channel::Igbt { .. } => f64::NAN,
            });
            let dead = if sw.dead_time.is_some() {
                " - 2 t_d f_\"sw\""
            } else {
                ""
            };
            let diode = if sw.dead_time.is_some() {
                format!("1 / (2 pi) integral_(i < 0) min({}, 2 t_d f_\"sw\") (V_\"F0\" abs(i) + r_\"F\" i^2) dif theta, {current}", duty(&m_sym))
            } else {
                "0".to_string()
            };
            let mut inputs: Vec<String> = vec![
                r_id.clone(),
                m_id.clone(),
                "semi.i_leg".into(),
                "semi.phi".into(),
                "bridge.f_sw".into(),
                "semi.v_f0".into(),
                "semi.r_f".into(),
            ];
            if sw.dead_time.is_some() {
                inputs.push("semi.t_dead".into());
            }
            (
                format!("1 / (2 pi) integral_0^(2 pi) ({}{dead}) R_(\"DS\",\"{sh}\") i^2 dif theta, {current}", duty(&m_sym)),
                diode,
                inputs,
            )
        } else {
            (
                format!("1 / (2 pi) integral_(i > 0) {} (V_\"CE0\" i + r_\"CE\" i^2) dif theta, {current}", duty(&m_sym)),
                format!("1 / (2 pi) integral_(i < 0) {} (V_\"F0\" abs(i) + r_\"F\" i^2) dif theta, {current}", duty(&m_sym)),
                vec!["semi.v_ce0".into(), "semi.r_ce".into(), "semi.v_f0".into(), "semi.r_f".into(), m_id.clone(), "semi.i_leg".into(), "semi.phi".into()],
            )
        };
        let used = |s: &Sheet, formula: &str| -> Vec<String> {
            cond_inputs
                .iter()
                .filter(|id| formula_uses(s, formula, id))
                .cloned()
                .collect()
        };
        let ids = [
            format!("semi.p_switch_cond.{key}"),
            format!("semi.p_switch_sw.{key}"),
            format!("semi.p_diode_cond.{key}"),
            format!("semi.p_diode_rec.{key}"),
        ];
        let sw_formula = format!("f_\"sw\" (E_\"on\" + E_\"off\") {v_sym} / V_\"ref\" 1 / (2 pi) integral_(i > 0) i / I_\"ref\" dif theta, {current}");
        let rec_formula = format!("f_\"sw\" E_\"rec\" {v_sym} / V_\"ref\" 1 / (2 pi) integral_(i < 0) abs(i) / I_\"ref\" dif theta, {current}");
        let strings = |v: &[&str]| -> Vec<String> { v.iter().map(|x| x.to_string()).collect() };
        // The four parts of a position's loss: (name, symbol, formula, inputs, source, value).
        let parts = [
            (
                "Switch conduction loss",
                "T,c",
                cond_t.clone(),
                used(s, &cond_t),
                integral(),
                l.switch_conduction,
            ),
            (
                "Switch switching loss",
                "T,s",
                sw_formula,
                strings(&[
                    "bridge.f_sw",
                    "semi.e_on",
                    "semi.e_off",
                    dc_id,
                    "semi.v_ref",
                    "semi.i_ref",
                    "semi.i_leg",
                    "semi.phi",
                ]),
                scaling(),
                l.switch_switching,
            ),
            (
                "Diode conduction loss",
                "D,c",
                cond_d.clone(),
                used(s, &cond_d),
                integral(),
                l.diode_conduction,
            ),
            (
                "Diode recovery loss",
                "D,r",
                rec_formula,
                strings(&[
                    "bridge.f_sw",
                    "semi.e_rec",
                    dc_id,
                    "semi.v_ref",
                    "semi.i_ref",
                    "semi.i_leg",
                    "semi.phi",
                ]),
                scaling(),
                l.diode_recovery,
            ),
        ];
        for (id, (name, sub, formula, inputs, source, value)) in ids.iter().zip(parts) {
            let inputs: Vec<&str> = inputs.iter().map(String::as_str).collect();
            s.derive(
                id,
                &format!("{name}, per position, {label}"),
                &format!("P_(\"{sub}\",\"{sh}\")"),
                Unit::Watt,
            )
            .formula(&formula)
            .inputs(&inputs)
            .source(source)
            .value(value);
        }
        let syms: Vec<String> = ids.iter().map(|id| s.symbol(id)).collect();
        s.derive(
            &format!("semi.p_switch.{key}"),
            &format!("Switch loss, per position, {label}"),
            &format!("P_(T,\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&format!("{} + {}", syms[0], syms[1]))
        .inputs(&[&ids[0], &ids[1]])
        .value(l.switch());
        s.derive(
            &format!("semi.p_diode.{key}"),
            &format!("Diode loss, per position, {label}"),
            &format!("P_(D,\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&format!("{} + {}", syms[2], syms[3]))
        .inputs(&[&ids[2], &ids[3]])
        .value(l.diode());
        s.derive(
            &format!("semi.p_position.{key}"),
            &format!("Loss of one position (switch and diode), {label}"),
            &format!("P_(\"pos\",\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&format!("P_(T,\"{sh}\") + P_(D,\"{sh}\")"))
        .inputs(&[
            &format!("semi.p_switch.{key}"),
            &format!("semi.p_diode.{key}"),
        ])
        .value(l.total());
        s.derive(
            &format!("semi.p_bridge.{key}"),
            &format!("Semiconductor loss of the bridge, {label}"),
            &format!("P_(\"br\",\"{sh}\")"),
            Unit::Watt,
        )
        .formula(&format!("N_\"pos\" P_(\"pos\",\"{sh}\")"))
        .inputs(&["semi.positions", &format!("semi.p_position.{key}")])
        .value(model.positions * l.total());

        // Rms currents with the ripple of this DC point.
        let ripple_id = format!("ripple.i_pp_max.{key}");
        let ripple = s.get(&ripple_id).map_or(0.0, |q| q.value);
        let (rms_t, rms_d) = position_rms(&a, mosfet, model.device.dead_time, ripple);
        let mut rms_inputs = vec![m_id.as_str(), "semi.i_leg", "semi.phi"];
        let ripple_term = if s.get(&ripple_id).is_some() {
            rms_inputs.push(&ripple_id);
            format!(" (i^2 + {}^2 / 12)", s.symbol(&ripple_id))
        } else {
            " i^2".to_string()
        };
        let rms_src = || {
            Source::common_practice("rms over the fundamental period of the device's share of the leg current, with a triangular ripple of the DC point's largest peak-to-peak over each conduction interval")
        };
        s.derive(
            &format!("semi.i_rms_switch.{key}"),
            &format!("Switch rms current, {label}"),
            &format!("I_(T,\"rms,{sh}\")"),
            Unit::Ampere,
        )
        .formula(&format!(
            "sqrt(1 / (2 pi) integral_(i > 0) {}{ripple_term} dif theta), {current}",
            duty(&m_sym)
        ))
        .inputs(&rms_inputs)
        .source(rms_src())
        .value(rms_t);
        s.derive(
            &format!("semi.i_rms_diode.{key}"),
            &format!("Diode rms current, {label}"),
            &format!("I_(D,\"rms,{sh}\")"),
            Unit::Ampere,
        )
        .formula(&format!(
            "sqrt(1 / (2 pi) integral_(i < 0) {}{ripple_term} dif theta), {current}",
            duty(&m_sym)
        ))
        .inputs(&rms_inputs)
        .source(rms_src())
        .value(rms_d);

        if key == "nominal" {
            crosscheck(d, s, mosfet, &m_sym, &m_id, &cf, &l, sw.dead_time.is_some());
            if let Some(t) = &sw.dead_time {
                let m = s.value(&m_id);
                s.derive("semi.dead_time_error", "Dead-time error of the fundamental, DC nominal", "epsilon_d", Unit::Percent)
                    .formula(&format!("8 t_d f_\"sw\" / (pi {m_sym})"))
                    .inputs(&["semi.t_dead", "bridge.f_sw", &m_id])
                    .source(Source::common_practice("a leg's average voltage error V_dc t_d f_sw with the sign of the current, a square wave whose fundamental 4/pi of it is compared with the leg's fundamental m_a V_dc / 2"))
                    .value(8.0 * t.value * a.f_sw / (std::f64::consts::PI * m));
            }
        }
    }
}

/// Whether a formula writes the symbol of quantity `id` (for inputs shared by forms).
fn formula_uses(s: &Sheet, formula: &str, id: &str) -> bool {
    let sym = s.symbol(id);
    formula.contains(&sym)
}

#[allow(clippy::too_many_arguments)]
fn crosscheck(
    d: &Design,
    s: &mut Sheet,
    mosfet: bool,
    m_sym: &str,
    m_id: &str,
    cf: &super::bridge_leg::PositionLosses,
    l: &super::bridge_leg::PositionLosses,
    dead: bool,
) {
    let c3 = if d.bridge.pwm == Pwm::ThirdHarmonic {
        format!(" - {m_sym} cos(3 phi_\"sw\") / (90 pi)")
    } else {
        String::new()
    };
    let c3_minus = c3.replace(" - ", " + ");
    let reference = || {
        Source::reference(
            "semiconductor makers' application manuals, averaged losses of a PWM inverter leg with sinusoidal modulation",
            "closed forms for conduction losses (from memory); the third-harmonic term derived by integrating sin(3 theta) against the current",
        )
    };
    let (t_formula, t_inputs, d_formula, d_inputs): (String, Vec<&str>, String, Vec<&str>) =
        if mosfet {
            let dead_t = if dead { " (1 - 2 t_d f_\"sw\")" } else { "" };
            let r_sym = "R_(\"DS\",\"nom\")";
            (
                format!("{r_sym} I_\"leg\"^2{dead_t} / 4"),
                if dead {
                    vec![
                        "semi.r_ds_on_hot.nominal",
                        "semi.i_leg",
                        "semi.t_dead",
                        "bridge.f_sw",
                    ]
                } else {
                    vec!["semi.r_ds_on_hot.nominal", "semi.i_leg"]
                },
                if dead {
                    "2 t_d f_\"sw\" (V_\"F0\" I_\"leg\" / pi + r_\"F\" I_\"leg\"^2 / 4)".to_string()
                } else {
                    "0".to_string()
                },
                if dead {
                    vec![
                        "semi.t_dead",
                        "bridge.f_sw",
                        "semi.v_f0",
                        "semi.i_leg",
                        "semi.r_f",
                    ]
                } else {
                    vec![]
                },
            )
        } else {
            (
            format!("V_\"CE0\" I_\"leg\" (1 / (2 pi) + {m_sym} cos phi_\"sw\" / 8) + r_\"CE\" I_\"leg\"^2 (1 / 8 + {m_sym} cos phi_\"sw\" / (3 pi){c3})"),
            vec!["semi.v_ce0", "semi.i_leg", m_id, "semi.phi", "semi.r_ce"],
            format!("V_\"F0\" I_\"leg\" (1 / (2 pi) - {m_sym} cos phi_\"sw\" / 8) + r_\"F\" I_\"leg\"^2 (1 / 8 - {m_sym} cos phi_\"sw\" / (3 pi){c3_minus})"),
            vec!["semi.v_f0", "semi.i_leg", m_id, "semi.phi", "semi.r_f"],
        )
        };
    s.derive(
        "semi.p_switch_cond_cf.nominal",
        "Switch conduction loss, closed form, DC nominal",
        "P_(\"T,c\",\"cf\")",
        Unit::Watt,
    )
    .formula(&t_formula)
    .inputs(&t_inputs)
    .source(reference())
    .value(cf.switch_conduction);
    s.derive(
        "semi.p_diode_cond_cf.nominal",
        "Diode conduction loss, closed form, DC nominal",
        "P_(\"D,c\",\"cf\")",
        Unit::Watt,
    )
    .formula(&d_formula)
    .inputs(&d_inputs)
    .source(reference())
    .value(cf.diode_conduction);
    let num = l.switch_conduction + l.diode_conduction;
    let closed = cf.switch_conduction + cf.diode_conduction;
    s.derive("semi.cond_deviation", "Numerical against closed-form conduction loss, DC nominal", "epsilon_\"cond\"", Unit::Percent)
        .formula("abs(P_(\"T,c\",\"nom\") + P_(\"D,c\",\"nom\") - P_(\"T,c\",\"cf\") - P_(\"D,c\",\"cf\")) / (P_(\"T,c\",\"cf\") + P_(\"D,c\",\"cf\"))")
        .inputs(&["semi.p_switch_cond.nominal", "semi.p_diode_cond.nominal", "semi.p_switch_cond_cf.nominal", "semi.p_diode_cond_cf.nominal"])
        .value((num - closed).abs() / closed);
    let linear = super::switching::linear_limit(d);
    if s.value(m_id) <= linear {
        s.check(
            "check.semi.crosscheck",
            "The numerically integrated conduction losses agree with the closed forms, DC nominal",
            "semi.cond_deviation",
            Relation::AtMost,
            CROSSCHECK_TOLERANCE,
            Source::common_practice("1 %: both are averages of the same duty cycle and current in linear modulation, so a larger gap is an error"),
        );
    } else {
        s.warn(
            "semi.cond_deviation",
            "the bridge overmodulates at DC nominal, where the closed-form losses do not hold; the numerically integrated losses stand alone",
        );
    }
}
