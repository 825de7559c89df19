//! Sine-triangle modulation: the switch-node average relation, the amplitude
//! modulation index at each DC operating point (ideal, and at rated load through the
//! filter), the frequency modulation index, the operating region, the lowest DC
//! voltage for linear modulation with headroom, and the modulator reference peak.
//!
//! Averaged over a switching period, a half-bridge leg with duty D gives
//! v_o = (D - 1/2) V_dc; a full-bridge with legs at D and 1 - D gives v_o = (2D - 1) V_dc.
//! With D = 1/2 + (m_a / 2) sin(ω1 t) the fundamental peak is m_a V_dc / 2 (half-bridge)
//! or m_a V_dc (full-bridge) while m_a <= 1 (N. Mohan, T. Undeland, W. Robbins, Power
//! Electronics, 3rd ed., section 8-3; from memory).

use super::limit_quantity;
use super::limit_source;
use crate::record::{Design, Topology};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::{format_number, Unit};
use std::f64::consts::PI;

/// The DC operating points: id suffix, label, and the id of the DC voltage.
pub const DC_POINTS: [(&str, &str, &str); 3] = [
    ("min", "DC minimum", "dc.v_min"),
    ("nominal", "DC nominal", "dc.v_nominal"),
    ("max", "DC maximum", "dc.v_max"),
];

/// Operating region of sine-triangle PWM for a required modulation index.
pub fn region(m_a: f64) -> &'static str {
    if m_a <= 1.0 {
        "linear"
    } else if m_a < 4.0 / PI {
        "overmodulation"
    } else if m_a <= 4.0 / PI + 1e-12 {
        "square-wave"
    } else {
        "unreachable"
    }
}

fn region_source() -> Source {
    Source::reference(
        "N. Mohan, T. Undeland, W. Robbins, Power Electronics, 3rd ed., section 8-3-1 (from memory)",
        "linear for m_a <= 1; overmodulation up to the square-wave fundamental 4/pi of the half DC voltage",
    )
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    let half = d.bridge.topology == Topology::HalfBridge;
    // Per-unit output of the bridge: V_dc / 2 for a half-bridge, V_dc for a full-bridge.
    let (base_factor, base_text) = if half { (0.5, " / 2") } else { (1.0, "") };

    let f_sw = s.value("bridge.f_sw");
    let f1 = s.value("output.f1");
    let m_f = s
        .derive(
            "modulation.m_f",
            "Frequency modulation index",
            "m_f",
            Unit::One,
        )
        .formula("f_\"sw\" / f_1")
        .inputs(&["bridge.f_sw", "output.f1"])
        .value(f_sw / f1);
    if m_f < 21.0 && (m_f.fract() != 0.0 || m_f as i64 % 2 == 0) {
        s.warn(
            "modulation.m_f",
            &format!(
                "m_f = {} is below 21 and not an odd integer: asynchronous PWM then makes subharmonics; keep the carrier synchronised with an odd integer m_f (common practice)",
                format_number(m_f, 4)
            ),
        );
    }

    let h = s.value("filter.gain_f1.rated");
    let v_pk = s.value("output.v_peak");
    let v_sw = s
        .derive(
            "modulation.v_sw_pk",
            "Switch-node fundamental needed at rated load (peak)",
            "V_(\"sw\",1)",
            Unit::Volt,
        )
        .formula("V_(o,\"pk\") / abs(H(j omega_1))_\"rated\"")
        .inputs(&["output.v_peak", "filter.gain_f1.rated"])
        .value(v_pk / h);

    let m_max = limit_quantity(
        s,
        "limits.max_modulation_index",
        "Maximum modulation index (regulation headroom)",
        "m_(a,\"max\")",
        &d.limits.max_modulation_index,
        Unit::One,
    );

    for (key, label, dc_id) in DC_POINTS {
        let v_dc = s.value(dc_id);
        let dc_sym = s.get(dc_id).map(|q| q.symbol.clone()).unwrap_or_default();
        s.derive(
            &format!("modulation.m_a_ideal.{key}"),
            &format!("Modulation index, ideal, {label}"),
            &format!("m_(a,\"id,{}\")", short(key)),
            Unit::One,
        )
        .formula(&format!("V_(o,\"pk\") / ({dc_sym}{base_text})"))
        .inputs(&["output.v_peak", dc_id])
        .value(v_pk / (v_dc * base_factor));
        let m_a = s
            .derive(
                &format!("modulation.m_a.{key}"),
                &format!("Modulation index at rated load, {label}"),
                &format!("m_(a,\"{}\")", short(key)),
                Unit::One,
            )
            .formula(&format!("V_(\"sw\",1) / ({dc_sym}{base_text})"))
            .inputs(&["modulation.v_sw_pk", dc_id])
            .value(v_sw / (v_dc * base_factor));
        let m_sym = format!("m_(a,\"{}\")", short(key));
        let class = region(m_a);
        s.derive(
            &format!("modulation.region.{key}"),
            &format!("Operating region, {label}"),
            &format!("\"region\"_\"{}\"", short(key)),
            Unit::One,
        )
        .formula(&format!("\"region\"({m_sym})"))
        .inputs(&[&format!("modulation.m_a.{key}")])
        .source(region_source())
        .class(class)
        .value(m_a);
        // Leg A of either bridge: D = 1/2 + (m_a / 2) sin(ω1 t); clipped at 1 past linear.
        let duty_formula = format!("min(1, 1 / 2 + {m_sym} / 2)");
        s.derive(
            &format!("modulation.duty_peak.{key}"),
            &format!("Peak leg duty cycle, {label}"),
            &format!("D_(\"pk\",\"{}\")", short(key)),
            Unit::One,
        )
        .formula(&duty_formula)
        .inputs(&[&format!("modulation.m_a.{key}")])
        .value(0.5 + m_a.min(1.0) / 2.0);
        if let Some(c) = &d.bridge.carrier_peak {
            if key == "min" {
                super::given(
                    s,
                    "bridge.carrier_peak",
                    "Carrier peak",
                    "V_(\"tri\",\"pk\")",
                    c,
                    Unit::Volt,
                );
            }
            s.derive(
                &format!("modulation.v_ref_pk.{key}"),
                &format!("Modulator reference peak, {label}"),
                &format!("V_(\"ref\",\"{}\")", short(key)),
                Unit::Volt,
            )
            .formula(&format!("{m_sym} V_(\"tri\",\"pk\")"))
            .inputs(&[&format!("modulation.m_a.{key}"), "bridge.carrier_peak"])
            .value(m_a * c.value);
        }
    }

    s.derive(
        "modulation.v_dc_min_linear",
        "Lowest DC voltage for linear modulation within the limit",
        "V_(\"dc,lin\")",
        Unit::Volt,
    )
    .formula(&if half {
        "2 V_(\"sw\",1) / m_(a,\"max\")".to_string()
    } else {
        "V_(\"sw\",1) / m_(a,\"max\")".to_string()
    })
    .inputs(&["modulation.v_sw_pk", "limits.max_modulation_index"])
    .value(v_sw / (base_factor * m_max));

    s.check(
        "check.modulation.headroom_dc_min",
        "Modulation stays linear with regulation headroom at DC minimum, rated load",
        "modulation.m_a.min",
        Relation::AtMost,
        m_max,
        limit_source(&d.limits.max_modulation_index),
    );
}

fn short(key: &str) -> &str {
    match key {
        "nominal" => "nom",
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn regions_follow_the_published_boundaries() {
        // Linear up to m_a = 1, square wave at 4/pi (Mohan et al., 3rd ed., 8-3-1; from memory).
        assert_eq!(region(0.85), "linear");
        assert_eq!(region(1.0), "linear");
        assert_eq!(region(1.2), "overmodulation");
        assert_eq!(region(4.0 / PI), "square-wave");
        assert_eq!(region(1.5), "unreachable");
    }
}
