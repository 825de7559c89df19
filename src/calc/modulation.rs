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
use super::switching;
use crate::record::{Design, Limit, Topology};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::{format_number, Unit};
use std::f64::consts::PI;

/// The DC operating points: id suffix, label, and the id of the DC voltage.
pub const DC_POINTS: [(&str, &str, &str); 3] = [
    ("min", "DC minimum", "dc.v_min"),
    ("nominal", "DC nominal", "dc.v_nominal"),
    ("max", "DC maximum", "dc.v_max"),
];

/// Operating region of sine-triangle PWM for a required modulation index, with the
/// linear limit of the modulation (1, or 2/sqrt(3) with third-harmonic injection).
pub fn region(m_a: f64, linear: f64) -> &'static str {
    if m_a <= linear {
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
        "linear for m_a <= 1 (2/sqrt(3) with a sixth of third harmonic injected; J. A. Houldsworth, D. A. Grant, IEEE Trans. Ind. Appl., 1984, from memory); overmodulation up to the square-wave fundamental 4/pi of the half DC voltage",
    )
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    // Per-unit output of one phase: V_dc / 2 for a half-bridge leg or a three-phase leg
    // against the load neutral, V_dc for a full-bridge.
    let base_factor = switching::base_factor(d);
    let half = base_factor == 0.5;
    let base_text = if half { " / 2" } else { "" };
    let linear = switching::linear_limit(d);

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
    if d.bridge.topology == Topology::ThreePhase
        && m_f < 21.0
        && (m_f.fract() != 0.0 || m_f as i64 % 2 == 0 || m_f as i64 % 3 != 0)
    {
        s.warn(
            "modulation.m_f",
            &format!(
                "m_f = {} is below 21 and not an odd multiple of 3: the line-to-line voltage then carries subharmonics or even and triplen-cancelling lines are lost; keep m_f an odd multiple of 3 (common practice)",
                format_number(m_f, 4)
            ),
        );
    } else if d.bridge.topology != Topology::ThreePhase
        && m_f < 21.0
        && (m_f.fract() != 0.0 || m_f as i64 % 2 == 0)
    {
        s.warn(
            "modulation.m_f",
            &format!(
                "m_f = {} is below 21 and not an odd integer: asynchronous PWM then makes subharmonics; keep the carrier synchronised with an odd integer m_f (common practice)",
                format_number(m_f, 4)
            ),
        );
    }

    let v_sw = if d.output.grid() {
        let re = s.value("filter.v_sw_re");
        let im = s.value("filter.v_sw_im");
        s.derive(
            "modulation.v_sw_pk",
            "Switch-node fundamental needed at rated current (peak)",
            "V_(\"sw\",1)",
            Unit::Volt,
        )
        .formula("sqrt(V_(\"sw\",\"re\")^2 + V_(\"sw\",\"im\")^2)")
        .inputs(&["filter.v_sw_re", "filter.v_sw_im"])
        .value(re.hypot(im))
    } else {
        let h = s.value("filter.gain_f1.rated");
        let v_pk = s.value("output.v_peak");
        s.derive(
            "modulation.v_sw_pk",
            "Switch-node fundamental needed at rated load (peak)",
            "V_(\"sw\",1)",
            Unit::Volt,
        )
        .formula("V_(o,\"pk\") / abs(H(j omega_1))_\"rated\"")
        .inputs(&["output.v_peak", "filter.gain_f1.rated"])
        .value(v_pk / h)
    };
    let v_pk = s.value("output.v_peak");

    // With third-harmonic injection the default headroom is kept below its own
    // linear limit.
    let limit = match (&d.limits.max_modulation_index.given, linear > 1.0) {
        (None, true) => Limit {
            value: d.limits.max_modulation_index.value * linear,
            given: None,
            default_basis: "about 5 % of modulation kept in reserve below the linear limit 2/sqrt(3) of third-harmonic injection, for the voltage and current regulators",
        },
        _ => d.limits.max_modulation_index.clone(),
    };
    let m_max = limit_quantity(
        s,
        "limits.max_modulation_index",
        "Maximum modulation index (regulation headroom)",
        "m_(a,\"max\")",
        &limit,
        Unit::One,
    );

    for (key, label, dc_id) in DC_POINTS {
        let v_dc = s.value(dc_id);
        let dc_sym = s.symbol(dc_id);
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
        let class = region(m_a, linear);
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
        // Leg A: D = 1/2 + (m_a / 2) sin(ω1 t), clipped at 1 past linear; with a sixth of
        // third harmonic the reference peaks at sqrt(3)/2 of m_a (at 60 degrees).
        let (duty_formula, duty) = if linear > 1.0 {
            (
                format!("min(1, 1 / 2 + sqrt(3) {m_sym} / 4)"),
                (0.5 + 3f64.sqrt() * m_a / 4.0).min(1.0),
            )
        } else {
            (
                format!("min(1, 1 / 2 + {m_sym} / 2)"),
                0.5 + m_a.min(1.0) / 2.0,
            )
        };
        s.derive(
            &format!("modulation.duty_peak.{key}"),
            &format!("Peak leg duty cycle, {label}"),
            &format!("D_(\"pk\",\"{}\")", short(key)),
            Unit::One,
        )
        .formula(&duty_formula)
        .inputs(&[&format!("modulation.m_a.{key}")])
        .value(duty);
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
        limit_source(&limit),
    );
}

/// The short form of a DC point key used in symbols.
pub fn short(key: &str) -> &str {
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
        assert_eq!(region(0.85, 1.0), "linear");
        assert_eq!(region(1.0, 1.0), "linear");
        assert_eq!(region(1.2, 1.0), "overmodulation");
        assert_eq!(region(4.0 / PI, 1.0), "square-wave");
        assert_eq!(region(1.5, 1.0), "unreachable");
        // Third-harmonic injection: linear up to 2/sqrt(3) (Houldsworth and Grant 1984,
        // from memory).
        assert_eq!(region(1.15, 2.0 / 3f64.sqrt()), "linear");
        assert_eq!(region(1.2, 2.0 / 3f64.sqrt()), "overmodulation");
    }
}
