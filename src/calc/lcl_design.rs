//! LCL sizing by the published guideline (M. Liserre, F. Blaabjerg, S. Hansen, IEEE
//! Trans. Ind. Appl., 2005, from memory): the capacitor from a fraction of the base
//! capacitance, the inverter-side inductor from the largest ripple over the DC window,
//! the grid-side inductor from the ripple attenuation towards the grid, and the
//! damping resistor from the capacitor's impedance at resonance.

use super::grid_filter::liserre;
use super::{given, ripple, switching};
use crate::record::{Design, LclRule};
use crate::sheet::{Sheet, Source};
use crate::units::Unit;
use std::f64::consts::PI;

/// LCL values by the guideline: C from a fraction of the base capacitance, L1 from
/// the largest inverter-side ripple, L2 from the ripple attenuation towards the grid,
/// R_d as a third of the capacitor's impedance at resonance.
pub fn size_lcl(d: &Design, s: &mut Sheet, rule: &LclRule) {
    let src = || Source::reference(liserre(), "section III, design procedure");
    let x = given(
        s,
        "filter.design.capacitor_fraction",
        "Capacitor reactive power, fraction of rated power",
        "x_C",
        &rule.capacitor_fraction,
        Unit::Percent,
    );
    let k_r = given(
        s,
        "filter.design.ripple_fraction",
        "Inverter-side ripple, fraction of rated peak current",
        "k_r",
        &rule.ripple_fraction,
        Unit::Percent,
    );
    let k_a = given(
        s,
        "filter.design.attenuation",
        "Ripple reaching the grid, fraction of inverter-side ripple",
        "k_a",
        &rule.attenuation,
        Unit::Percent,
    );
    let v = s.value("output.v_rms");
    let p = s.value("output.power");
    let w1 = s.value("output.omega1");
    let z_b = s
        .derive("filter.design.z_base", "Base impedance", "Z_b", Unit::Ohm)
        .formula("V_o^2 / P")
        .inputs(&["output.v_rms", "output.power"])
        .source(src())
        .value(v * v / p);
    let c_b = s
        .derive(
            "filter.design.c_base",
            "Base capacitance",
            "C_b",
            Unit::Farad,
        )
        .formula("1 / (omega_1 Z_b)")
        .inputs(&["output.omega1", "filter.design.z_base"])
        .source(src())
        .value(1.0 / (w1 * z_b));
    let c = s
        .derive(
            "filter.capacitance",
            "Filter capacitance",
            "C_f",
            Unit::Farad,
        )
        .formula("x_C C_b")
        .inputs(&["filter.design.capacitor_fraction", "filter.design.c_base"])
        .source(src())
        .value(x * c_b);

    // Ripple of the inverter-side inductor at the DC maximum, where a two-level or
    // three-level bridge ripples most, with the ideal modulation index there.
    let v_pk = s.value("output.v_peak");
    let v_dc = s.value("dc.v_max");
    let m_ideal = v_pk / (v_dc * switching::base_factor(d));
    let pwm = switching::pwm_of(
        d,
        m_ideal.min(switching::linear_limit(d)),
        s.value("bridge.f_sw") / s.value("output.f1"),
    );
    let k_n = ripple::ripple_envelope(&switching::periodic(&pwm).0).map_or(f64::NAN, |e| e.max);
    s.derive(
        "filter.design.ripple_factor",
        "Normalised largest ripple at DC maximum",
        "k_n",
        Unit::One,
    )
    .formula(if switching::base_factor(d) == 0.5 {
        "max_theta Delta i_\"pp\"(m_a = V_(o,\"pk\") / (V_\"dc,max\" / 2)) L f_\"sw\" / V_\"dc,max\""
    } else {
        "max_theta Delta i_\"pp\"(m_a = V_(o,\"pk\") / V_\"dc,max\") L f_\"sw\" / V_\"dc,max\""
    })
    .inputs(&["dc.v_max", "output.v_peak"])
    .source(Source::common_practice(
        "ripple envelope of the exact PWM waveform against a sinusoidal capacitor voltage (assumption E6), at the ideal modulation index",
    ))
    .value(k_n);
    let f_sw = s.value("bridge.f_sw");
    let i_pk = s.value("output.i_peak");
    s.derive(
        "filter.inductance",
        "Inverter-side inductance",
        "L_1",
        Unit::Henry,
    )
    .formula("k_n V_\"dc,max\" / (f_\"sw\" k_r I_(o,\"pk\"))")
    .inputs(&[
        "filter.design.ripple_factor",
        "dc.v_max",
        "bridge.f_sw",
        "filter.design.ripple_fraction",
        "output.i_peak",
    ])
    .source(src())
    .value(k_n * v_dc / (f_sw * k_r * i_pk));
    let f_c = super::filter::carrier_frequency(d, f_sw);
    let w_c = 2.0 * PI * f_c;
    s.derive(
        "filter.design.omega_c",
        "Angular frequency of the first carrier group",
        "omega_c",
        Unit::RadianPerSecond,
    )
    .formula(if f_c > f_sw {
        "4 pi f_\"sw\""
    } else {
        "2 pi f_\"sw\""
    })
    .inputs(&["bridge.f_sw"])
    .value(w_c);
    // |i_g / i_1| = 1 / |1 - omega^2 L2' C| at the carrier, undamped: solve for L2'.
    let l2_total = s
        .derive(
            "filter.design.l2_total",
            "Grid-side inductance needed with the grid's",
            "L_(2,\"d\")'",
            Unit::Henry,
        )
        .formula("(1 + 1 / k_a) / (omega_c^2 C_f)")
        .inputs(&[
            "filter.design.attenuation",
            "filter.design.omega_c",
            "filter.capacitance",
        ])
        .source(src())
        .value((1.0 + 1.0 / k_a) / (w_c * w_c * c));
    let l_g = s.value("grid.inductance");
    let l2 = s
        .derive(
            "filter.grid_side_inductance",
            "Grid-side inductance",
            "L_2",
            Unit::Henry,
        )
        .formula("max(0, L_(2,\"d\")' - L_g)")
        .inputs(&["filter.design.l2_total", "grid.inductance"])
        .value((l2_total - l_g).max(0.0));
    if l2 == 0.0 {
        s.warn(
            "filter.grid_side_inductance",
            "the grid inductance alone gives the attenuation asked for; the grid-side inductor is sized to zero, and the design then depends on the grid's inductance being at least that large",
        );
    }
    if rule.damping_resistor {
        let l1 = s.value("filter.inductance");
        let lt = l2 + l_g;
        let w_res = s
            .derive(
                "filter.design.omega_res",
                "Angular resonance frequency of the sized LCL",
                "omega_\"res\"",
                Unit::RadianPerSecond,
            )
            .formula("sqrt((L_1 + L_2 + L_g) / (L_1 (L_2 + L_g) C_f))")
            .inputs(&[
                "filter.inductance",
                "filter.grid_side_inductance",
                "grid.inductance",
                "filter.capacitance",
            ])
            .value(((l1 + lt) / (l1 * lt * c)).sqrt());
        s.derive(
            "filter.damping_resistance",
            "Damping resistance (in series with C_f)",
            "R_d",
            Unit::Ohm,
        )
        .formula("1 / (3 omega_\"res\" C_f)")
        .inputs(&["filter.design.omega_res", "filter.capacitance"])
        .source(Source::reference(
            liserre(),
            "section III: R_d one third of the capacitor's impedance at resonance",
        ))
        .value(1.0 / (3.0 * w_res * c));
    }
}
