//! The fundamental voltage and current at the switch node at any fraction of rated
//! load, from the filter's phasor chain, as the loss, DC-link and efficiency subjects
//! need them: one [`LegPoint`] per DC point and load.
//!
//! The chain is the one `filter` and `grid_filter` trace at rated load, written here
//! once more for other loads:
//!
//! - stand-alone: the output voltage V_o (real, regulated at every load) across C and a
//!   constant-impedance load scaled with the load fraction k (R / k in parallel with
//!   X / k); I_L = V_o (k / R + j (omega C - k / X)), V_sw = V_o + j omega L I_L;
//! - grid: the grid current k I_g at the connection point V_g (real); with a capacitor,
//!   V_C = V_g + j omega L_2 k I_g, I_1 = k I_g + V_C / (R_d + 1 / (j omega C)); then
//!   V_sw = V_C + j omega L_1 I_1 (the grid inductance behind the connection point does
//!   not enter the fundamental, as in `grid_filter`).
//!
//! The rated-load result equals the sheet's own phasors (tests in `tests/power_stage.rs`).

use super::bridge_leg::{BusKind, LegPoint};
use super::modulation::DC_POINTS;
use super::operating_point::phase_voltage;
use super::switching::{base_factor, modulation_of};
use crate::record::{Design, Pwm, Topology};
use crate::sheet::Sheet;
use num_complex::Complex64;

/// The load fractions of the efficiency curve: those of the California Energy
/// Commission's and the European weightings together.
pub const LOAD_FRACTIONS: [f64; 7] = [0.05, 0.10, 0.20, 0.30, 0.50, 0.75, 1.00];

/// Switch-node voltage and inverter-side current of one phase at load fraction `k`, as
/// peak phasors with the output (or grid) voltage real.
pub fn phasors(d: &Design, s: &Sheet, k: f64) -> (Complex64, Complex64) {
    let j = Complex64::i();
    let w = s.value("output.omega1");
    let l1 = s.value("filter.inductance");
    if d.output.grid() {
        let v_g = Complex64::new(s.value("output.v_peak"), 0.0);
        let i_g = k * Complex64::new(s.value("grid.i_re"), s.value("grid.i_im"));
        let (v_node, i_1) = match s.get("filter.capacitance") {
            Some(c) => {
                let l2 = s
                    .get("filter.grid_side_inductance")
                    .map_or(0.0, |q| q.value);
                let r_d = s.get("filter.damping_resistance").map_or(0.0, |q| q.value);
                let v_c = v_g + j * w * l2 * i_g;
                let i_c = v_c / (r_d + 1.0 / (j * w * c.value));
                (v_c, i_g + i_c)
            }
            None => (v_g, i_g),
        };
        (v_node + j * w * l1 * i_1, i_1)
    } else {
        let (v_id, _) = phase_voltage(d);
        let v_o = Complex64::new(2f64.sqrt() * s.value(v_id), 0.0);
        let c = s.value("filter.capacitance");
        let r = s.value("load.r.rated");
        let b = s.get("load.x.rated").map_or(0.0, |q| 1.0 / q.value);
        let i_l = v_o * (k / r + j * (w * c - k * b));
        (v_o + j * w * l1 * i_l, i_l)
    }
}

/// Leg a's operating point at DC point `point` (`min`, `nominal`, `max`) and load
/// fraction `k`.
pub fn leg_point(d: &Design, s: &Sheet, point: &str, k: f64) -> LegPoint {
    let dc_id = DC_POINTS
        .iter()
        .find(|(key, _, _)| *key == point)
        .map_or("dc.v_nominal", |(_, _, id)| *id);
    let v_dc = s.value(dc_id);
    let (v_sw, i_1) = phasors(d, s, k);
    LegPoint {
        v_dc,
        m: v_sw.norm() / (base_factor(d) * v_dc),
        third_harmonic: d.bridge.pwm == Pwm::ThirdHarmonic,
        i_pk: i_1.norm(),
        phi: v_sw.arg() - i_1.arg(),
        f_sw: s.value("bridge.f_sw"),
        shift: 0.0,
    }
}

/// The local duty of leg a as typst math, with the modulation index's symbol `m`.
pub fn duty_formula(d: &Design, m: &str) -> String {
    if d.bridge.pwm == Pwm::ThirdHarmonic {
        format!("(1 + {m} (sin theta + sin 3 theta / 6)) / 2")
    } else {
        format!("(1 + {m} sin theta) / 2")
    }
}

/// Every leg of the bridge at one operating point, leg a first.
pub fn legs(d: &Design, a: &LegPoint) -> Vec<LegPoint> {
    let n = modulation_of(d).legs();
    (0..n).map(|k| a.leg(k, n)).collect()
}

/// How the bridge's legs share the DC bus.
pub fn bus_kind(d: &Design) -> BusKind {
    match (d.bridge.topology, d.bridge.pwm) {
        (Topology::HalfBridge, _) => BusKind::SplitHalfBridge,
        (Topology::FullBridge, Pwm::Bipolar) => BusKind::Complementary,
        _ => BusKind::CommonCarrier,
    }
}

/// Number of phases whose inductor carries the leg current (for winding losses).
pub fn phases(d: &Design) -> f64 {
    if d.bridge.topology == Topology::ThreePhase {
        3.0
    } else {
        1.0
    }
}
