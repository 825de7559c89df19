//! The switches' stresses and the angle the loss integrals need: the peak blocking
//! voltage with its turn-off overshoot, the voltage and current utilisation of the
//! device with their derating checks, and the angle of the leg current behind the
//! switch-node voltage at rated load (for a stand-alone design, from the inductor
//! current and switch-node phasors traced here).

use super::{given, limit_quantity, limit_source};
use crate::record::{Design, Overshoot, Switches};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// The peak blocking voltage and device current against the derated ratings.
pub fn stresses(d: &Design, s: &mut Sheet, sw: &Switches, v_rat: f64, i_rat: f64) {
    let v_max = s.value("dc.v_max");
    let i_pk_id = if s.get("filter.i_l_peak").is_some() {
        "filter.i_l_peak"
    } else {
        "filter.i_l_f1"
    };
    let i_pk = if i_pk_id == "filter.i_l_peak" {
        s.value(i_pk_id)
    } else {
        2f64.sqrt() * s.value(i_pk_id)
    };
    let i_sym = s.symbol(i_pk_id);
    let v_pk = match &sw.overshoot {
        Overshoot::Margin(g) => {
            let k = given(
                s,
                "semi.overshoot",
                "Turn-off overshoot margin on the DC maximum",
                "k_\"os\"",
                g,
                Unit::Percent,
            );
            s.derive(
                "semi.v_peak",
                "Peak blocking voltage, with overshoot",
                "V_(T,\"pk\")",
                Unit::Volt,
            )
            .formula("V_\"dc,max\" (1 + k_\"os\")")
            .inputs(&["dc.v_max", "semi.overshoot"])
            .value(v_max * (1.0 + k))
        }
        Overshoot::StrayInductance(g) => {
            let l = given(
                s,
                "semi.l_stray",
                "Commutation loop stray inductance",
                "L_sigma",
                g,
                Unit::Henry,
            );
            let t_f = sw.device.fall_time.as_ref().map_or(f64::NAN, |f| f.value);
            if let Some(f) = &sw.device.fall_time {
                given(
                    s,
                    "semi.t_fall",
                    "Current fall time at turn-off",
                    "t_f",
                    f,
                    Unit::Second,
                );
            }
            let peak_formula = if i_pk_id == "filter.i_l_peak" {
                i_sym.clone()
            } else {
                format!("sqrt(2) {i_sym}")
            };
            s.derive("semi.v_peak", "Peak blocking voltage, with overshoot", "V_(T,\"pk\")", Unit::Volt)
                .formula(&format!("V_\"dc,max\" + L_sigma {peak_formula} / t_f"))
                .inputs(&["dc.v_max", "semi.l_stray", i_pk_id, "semi.t_fall"])
                .source(Source::common_practice("overshoot L di/dt of the commutation loop with the peak current falling linearly in the fall time"))
                .value(v_max + l * i_pk / t_f)
        }
    };
    let i_formula = if i_pk_id == "filter.i_l_peak" {
        i_sym
    } else {
        format!("sqrt(2) {i_sym}")
    };
    let l = &d.limits;
    s.derive(
        "semi.voltage_utilisation",
        "Peak blocking voltage over the rating",
        "u_V",
        Unit::Percent,
    )
    .formula("V_(T,\"pk\") / V_\"rat\"")
    .inputs(&["semi.v_peak", "semi.v_rating"])
    .value(v_pk / v_rat);
    s.derive(
        "semi.current_utilisation",
        "Peak device current over the continuous rating",
        "u_I",
        Unit::Percent,
    )
    .formula(&format!("{i_formula} / I_\"rat\""))
    .inputs(&[i_pk_id, "semi.i_rating"])
    .value(i_pk / i_rat);
    let u_v = limit_quantity(
        s,
        "limits.max_voltage_utilisation",
        "Largest voltage utilisation of a device",
        "u_(V,max)",
        &l.max_voltage_utilisation,
        Unit::Percent,
    );
    let u_i = limit_quantity(
        s,
        "limits.max_current_utilisation",
        "Largest current utilisation of a device",
        "u_(I,max)",
        &l.max_current_utilisation,
        Unit::Percent,
    );
    s.check("check.semi.voltage", "The peak blocking voltage, overshoot included, stays within the derated device rating at the DC maximum", "semi.voltage_utilisation", Relation::AtMost, u_v, limit_source(&l.max_voltage_utilisation));
    s.check(
        "check.semi.current",
        "The peak device current, ripple included, stays within the derated continuous rating",
        "semi.current_utilisation",
        Relation::AtMost,
        u_i,
        limit_source(&l.max_current_utilisation),
    );
}

/// The displacement angle between the switch-node voltage and the leg current.
pub fn angle(d: &Design, s: &mut Sheet) {
    let (v_re, v_im, i_re, i_im) = if d.output.grid() {
        let (i_re, i_im) = if s.get("filter.i_1_re").is_some() {
            ("filter.i_1_re", "filter.i_1_im")
        } else {
            ("grid.i_re", "grid.i_im")
        };
        ("filter.v_sw_re", "filter.v_sw_im", i_re, i_im)
    } else {
        standalone_phasors(d, s);
        ("semi.v_sw_re", "semi.v_sw_im", "semi.i_l_re", "semi.i_l_im")
    };
    let (vr, vi, ir, ii) = (s.value(v_re), s.value(v_im), s.value(i_re), s.value(i_im));
    let (svr, svi, sir, sii) = (
        s.symbol(v_re),
        s.symbol(v_im),
        s.symbol(i_re),
        s.symbol(i_im),
    );
    s.derive(
        "semi.phi",
        "Angle of the leg current behind the switch-node voltage, rated load",
        "phi_\"sw\"",
        Unit::Degree,
    )
    .formula(&format!("arctan({svi} / {svr}) - arctan({sii} / {sir})"))
    .inputs(&[v_re, v_im, i_re, i_im])
    .value(vi.atan2(vr) - ii.atan2(ir));
}

/// Stand-alone: the inductor current and switch-node voltage phasors at rated load,
/// with the output voltage real (the chain of `leg_current`).
fn standalone_phasors(d: &Design, s: &mut Sheet) {
    let (v_id, v_sym) = super::operating_point::phase_voltage(d);
    let v = 2f64.sqrt() * s.value(v_id);
    let (w, l, c, r) = (
        s.value("output.omega1"),
        s.value("filter.inductance"),
        s.value("filter.capacitance"),
        s.value("load.r.rated"),
    );
    let re = s
        .derive(
            "semi.i_l_re",
            "Inductor current, in-phase part (peak), rated load",
            "I_(L,\"re\")",
            Unit::Ampere,
        )
        .formula(&format!("sqrt(2) {v_sym} / R_\"ld\""))
        .inputs(&[v_id, "load.r.rated"])
        .value(v / r);
    let (formula, inputs, b) = match s.get("load.x.rated").map(|q| q.value) {
        Some(x) => (
            format!("sqrt(2) {v_sym} (omega_1 C - 1 / X_\"ld\")"),
            vec![v_id, "output.omega1", "filter.capacitance", "load.x.rated"],
            1.0 / x,
        ),
        None => (
            format!("sqrt(2) {v_sym} omega_1 C"),
            vec![v_id, "output.omega1", "filter.capacitance"],
            0.0,
        ),
    };
    let im = s
        .derive(
            "semi.i_l_im",
            "Inductor current, quadrature part (peak), rated load",
            "I_(L,\"im\")",
            Unit::Ampere,
        )
        .formula(&formula)
        .inputs(&inputs)
        .value(v * (w * c - b));
    s.derive(
        "semi.v_sw_re",
        "Switch-node fundamental, in-phase part (peak), rated load",
        "V_(\"sw\",\"re\")",
        Unit::Volt,
    )
    .formula(&format!("sqrt(2) {v_sym} - omega_1 L I_(L,\"im\")"))
    .inputs(&[v_id, "output.omega1", "filter.inductance", "semi.i_l_im"])
    .value(v - w * l * im);
    s.derive(
        "semi.v_sw_im",
        "Switch-node fundamental, quadrature part (peak), rated load",
        "V_(\"sw\",\"im\")",
        Unit::Volt,
    )
    .formula("omega_1 L I_(L,\"re\")")
    .inputs(&["output.omega1", "filter.inductance", "semi.i_l_re"])
    .value(w * l * re);
}
