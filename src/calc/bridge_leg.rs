//! The currents and losses of one bridge leg over a fundamental period, by numerical
//! integration of the local duty cycle and current, with the classic closed forms of
//! sine-triangle PWM beside them as a cross-check. Pure functions: nothing here writes
//! to a sheet.
//!
//! The model, for a leg of two switch positions (upper and lower), each a switch with
//! its antiparallel (or body) diode:
//!
//! - the leg's upper switch is on for the local duty d(theta) = (1 + r(theta)) / 2 of
//!   each carrier period, r the leg's reference per unit of the carrier peak, clamped to
//!   [0, 1] in overmodulation: r = m sin(theta), or m (sin(theta) + sin(3 theta) / 6)
//!   with third-harmonic injection (the cosine form of `spectrum` moved by a quarter
//!   turn);
//! - the leg current is its fundamental, i = I sin(theta - phi), constant over each
//!   carrier period (the ripple is left out of the losses; it is added to the rms
//!   currents), phi the angle by which it lags the leg voltage's fundamental;
//! - current out of the leg (i > 0) flows in the upper switch while it is on and in the
//!   lower diode otherwise; into the leg (i < 0), in the upper diode while the upper
//!   position is on and in the lower switch otherwise. A MOSFET conducts in its channel
//!   both ways (synchronous rectification); its body diode takes the current only in
//!   the two dead times of each carrier period.
//! - Each carrier period the switch that takes the current over turns on and off hard
//!   and the opposite diode recovers, with energies scaled from the datasheet's
//!   reference point linearly in voltage and current (common practice).
//!
//! The lower position carries the same losses as the upper one half a period later
//! (r and i are odd about a half period), so one position is computed and multiplied.

use std::f64::consts::PI;

/// Samples per fundamental period of the numerical integrals. The integrands are
/// smooth except at the current's zero crossings, where they have a kink in value
/// (switching losses) or slope; the periodic rectangle rule with this many points
/// stays within 1e-6 of the closed forms (tests below).
pub const SAMPLES: usize = 7200;

/// Samples per period of the DC-link current. Its integrands have no kink sharper
/// than the losses' and it is evaluated for every load point of the efficiency curve,
/// so it takes fewer: the rms stays within 1e-5 of the 7200-point value for the demos
/// (and the balanced three-phase cancellation is exact at any count).
pub const BUS_SAMPLES: usize = 1800;

/// The conduction characteristic of a switch.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Channel {
    /// IGBT: v = V_0 + r i, one direction only.
    Igbt { v0: f64, r: f64 },
    /// MOSFET: v = R i, both directions.
    Mosfet { r: f64 },
}

/// A switch position's device data as the loss integrals need it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DeviceData {
    pub channel: Channel,
    /// Turn-on plus turn-off energy at the reference point, J.
    pub e_sw: f64,
    /// Diode recovery energy at the reference point, J.
    pub e_rec: f64,
    pub v_ref: f64,
    pub i_ref: f64,
    pub diode_v0: f64,
    pub diode_r: f64,
    /// Dead time, s (MOSFET body-diode conduction only).
    pub dead_time: f64,
}

/// One leg's operating point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LegPoint {
    pub v_dc: f64,
    /// Amplitude of the leg's sinusoidal reference per unit of the carrier peak (m_a).
    pub m: f64,
    pub third_harmonic: bool,
    /// Peak of the leg current's fundamental, A.
    pub i_pk: f64,
    /// Angle by which the current lags the leg voltage's fundamental, rad.
    pub phi: f64,
    pub f_sw: f64,
    /// How far this leg lags leg a, rad: 0 for leg a, pi for leg b of a full bridge,
    /// 2 pi / 3 and 4 pi / 3 for legs b and c of a three-phase bridge.
    pub shift: f64,
}

impl LegPoint {
    /// The same leg point for leg `k` of `n` legs spaced evenly over the period.
    pub fn leg(&self, k: usize, n: usize) -> LegPoint {
        LegPoint {
            shift: 2.0 * PI * k as f64 / n as f64,
            ..*self
        }
    }

    /// The leg reference at theta, before clamping.
    pub fn reference(&self, theta: f64) -> f64 {
        let theta = theta - self.shift;
        let third = if self.third_harmonic {
            (3.0 * theta).sin() / 6.0
        } else {
            0.0
        };
        self.m * (theta.sin() + third)
    }

    /// Local duty of the upper switch, in [0, 1].
    pub fn duty(&self, theta: f64) -> f64 {
        ((1.0 + self.reference(theta)) / 2.0).clamp(0.0, 1.0)
    }

    pub fn current(&self, theta: f64) -> f64 {
        self.i_pk * (theta - self.shift - self.phi).sin()
    }
}

/// Average losses of one switch position (upper switch and upper diode), W.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PositionLosses {
    pub switch_conduction: f64,
    pub switch_switching: f64,
    pub diode_conduction: f64,
    pub diode_recovery: f64,
}

impl PositionLosses {
    pub fn switch(&self) -> f64 {
        self.switch_conduction + self.switch_switching
    }
    pub fn diode(&self) -> f64 {
        self.diode_conduction + self.diode_recovery
    }
    pub fn total(&self) -> f64 {
        self.switch() + self.diode()
    }
}

/// The mean over a period of `f(theta)`, by the periodic rectangle rule.
fn period_mean(mut f: impl FnMut(f64) -> f64) -> f64 {
    let n = SAMPLES;
    let h = 2.0 * PI / n as f64;
    // Offset by half a step so that no sample sits on a zero crossing of the current
    // at phi = 0.
    (0..n).map(|k| f((k as f64 + 0.5) * h)).sum::<f64>() / n as f64
}

/// The averages over a fundamental period that a position's losses are made of, each
/// independent of the device's data, so that one pass over the period serves any
/// device and any junction temperature (a MOSFET's losses are linear in R_ds,on).
/// `i+` is the current out of the leg, `i-` into it; `d` the upper duty; `dead` the
/// dead-time fraction 2 t_d f_sw.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct LegIntegrals {
    /// mean of d i+ and of d i+^2 (upper switch forward, IGBT or MOSFET channel).
    pub forward: f64,
    pub forward_sq: f64,
    /// mean of d |i-| and of d i-^2 (upper diode of an IGBT leg).
    pub reverse: f64,
    pub reverse_sq: f64,
    /// mean of max(0, d - dead) i-^2 (MOSFET channel conducting backwards).
    pub channel_back_sq: f64,
    /// mean of min(d, dead) |i-| and of min(d, dead) i-^2 (body diode in dead time).
    pub dead_lin: f64,
    pub dead_sq: f64,
    /// mean of i+ and of |i-| (switching events weighted by the current).
    pub commutated_out: f64,
    pub commutated_in: f64,
}

impl LegIntegrals {
    /// One pass over the period for leg point `p` with dead time `dead_time`.
    pub fn of(p: &LegPoint, dead_time: f64) -> LegIntegrals {
        let dead = 2.0 * dead_time * p.f_sw;
        let n = SAMPLES;
        let h = 2.0 * PI / n as f64;
        let mut s = LegIntegrals::default();
        // Offset by half a step so that no sample sits on a zero crossing at phi = 0.
        for k in 0..n {
            let t = (k as f64 + 0.5) * h;
            let (d, i) = (p.duty(t), p.current(t));
            if i > 0.0 {
                s.forward += d * i;
                s.forward_sq += d * i * i;
                s.commutated_out += i;
            } else {
                let a = -i;
                s.reverse += d * a;
                s.reverse_sq += d * a * a;
                s.channel_back_sq += (d - dead).max(0.0) * a * a;
                s.dead_lin += d.min(dead) * a;
                s.dead_sq += d.min(dead) * a * a;
                s.commutated_in += a;
            }
        }
        let scale = 1.0 / n as f64;
        for v in [
            &mut s.forward,
            &mut s.forward_sq,
            &mut s.reverse,
            &mut s.reverse_sq,
            &mut s.channel_back_sq,
            &mut s.dead_lin,
            &mut s.dead_sq,
            &mut s.commutated_out,
            &mut s.commutated_in,
        ] {
            *v *= scale;
        }
        s
    }

    /// The losses of the upper position with device `dev` at this leg point.
    pub fn losses(&self, p: &LegPoint, dev: &DeviceData) -> PositionLosses {
        let events = p.f_sw * (p.v_dc / dev.v_ref) / dev.i_ref;
        let (switch_conduction, diode_conduction) = match dev.channel {
            Channel::Igbt { v0, r } => (
                v0 * self.forward + r * self.forward_sq,
                dev.diode_v0 * self.reverse + dev.diode_r * self.reverse_sq,
            ),
            // The channel conducts both ways, less the dead times in the body diode.
            Channel::Mosfet { r } => (
                r * (self.forward_sq + self.channel_back_sq),
                dev.diode_v0 * self.dead_lin + dev.diode_r * self.dead_sq,
            ),
        };
        PositionLosses {
            switch_conduction,
            switch_switching: events * dev.e_sw * self.commutated_out,
            diode_conduction,
            diode_recovery: events * dev.e_rec * self.commutated_in,
        }
    }
}

/// The losses of the upper position, integrated numerically.
pub fn position_losses(p: &LegPoint, dev: &DeviceData) -> PositionLosses {
    LegIntegrals::of(p, dev.dead_time).losses(p, dev)
}

/// The closed forms of the same averages for linear sine-triangle PWM. For an IGBT
/// (semiconductor makers' application manuals for sinusoidal PWM; from memory):
///
///   P_T,cond = V_0 I (1/(2 pi) + m cos(phi) / 8) + r I^2 (1/8 + m cos(phi) / (3 pi))
///   P_D,cond = V_F0 I (1/(2 pi) - m cos(phi) / 8) + r_F I^2 (1/8 - m cos(phi) / (3 pi))
///   P_T,sw = f_sw E_sw (V_dc / V_ref) I / (pi I_ref),  P_D,rec likewise with E_rec.
///
/// A sixth of third harmonic adds -+ m I^2 cos(3 phi) / (90 pi) to the slope terms and
/// nothing to the threshold terms (derived by integrating sin(3 theta) against the
/// current over its half period). A MOSFET's channel carries r I^2 / 4 less the dead
/// times, its body diode the dead-time share of the diode terms.
pub fn closed_form_losses(p: &LegPoint, dev: &DeviceData) -> PositionLosses {
    let (m, i, c) = (p.m, p.i_pk, p.phi.cos());
    let c3 = if p.third_harmonic {
        (3.0 * p.phi).cos() / (90.0 * PI)
    } else {
        0.0
    };
    let lin_plus = 1.0 / (2.0 * PI) + m * c / 8.0;
    let lin_minus = 1.0 / (2.0 * PI) - m * c / 8.0;
    let sq_plus = 1.0 / 8.0 + m * c / (3.0 * PI) - m * c3;
    let sq_minus = 1.0 / 8.0 - m * c / (3.0 * PI) + m * c3;
    let sw = p.f_sw * (p.v_dc / dev.v_ref) * i / (PI * dev.i_ref);
    let dead = 2.0 * dev.dead_time * p.f_sw;
    let (switch_conduction, diode_conduction) = match dev.channel {
        Channel::Igbt { v0, r } => (
            v0 * i * lin_plus + r * i * i * sq_plus,
            dev.diode_v0 * i * lin_minus + dev.diode_r * i * i * sq_minus,
        ),
        Channel::Mosfet { r } => (
            r * i * i * (sq_plus + sq_minus) - r * i * i * dead / 4.0,
            dead * (dev.diode_v0 * i / PI + dev.diode_r * i * i / 4.0),
        ),
    };
    PositionLosses {
        switch_conduction,
        switch_switching: sw * dev.e_sw,
        diode_conduction,
        diode_recovery: sw * dev.e_rec,
    }
}

/// The rms currents of the upper switch and the upper diode from the fundamental, and
/// with a triangular ripple of peak-to-peak `ripple_pp` added over each conduction
/// interval (its mean square over a carrier period is d ripple_pp^2 / 12).
pub fn position_rms(p: &LegPoint, mosfet: bool, dead_time: f64, ripple_pp: f64) -> (f64, f64) {
    let dead = 2.0 * dead_time * p.f_sw;
    let ripple_sq = ripple_pp * ripple_pp / 12.0;
    let switch = period_mean(|t| {
        let (d, i) = (p.duty(t), p.current(t));
        match (i > 0.0, mosfet) {
            (true, _) => d * (i * i + ripple_sq),
            (false, false) => 0.0,
            (false, true) => (d - dead).max(0.0) * (i * i + ripple_sq),
        }
    });
    let diode = period_mean(|t| {
        let (d, i) = (p.duty(t), p.current(t));
        match (i < 0.0, mosfet) {
            (false, _) => 0.0,
            (true, false) => d * (i * i + ripple_sq),
            (true, true) => d.min(dead) * (i * i + ripple_sq),
        }
    });
    (switch.sqrt(), diode.sqrt())
}

/// How the legs of a bridge share the DC bus, for the DC-link current.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BusKind {
    /// One leg against split capacitors; the load returns to their midpoint.
    SplitHalfBridge,
    /// Leg b the complement of leg a (bipolar full bridge).
    Complementary,
    /// Every leg compared with the same carrier, on-intervals centred together
    /// (unipolar full bridge, three-phase).
    CommonCarrier,
}

/// The DC-link capacitor current over a period, taking the DC source as delivering
/// only its mean current (the capacitors carry everything else; common practice).
#[derive(Clone, Debug, PartialEq)]
pub struct CapacitorCurrent {
    /// Mean DC input current of the bridge, A.
    pub i_dc: f64,
    /// Rms of the carrier-period means (the low-frequency part), per capacitor, A.
    pub low_frequency_rms: f64,
    /// Rms of the rest (the switching-frequency part), per capacitor, A.
    pub switching_rms: f64,
    /// The carrier-period mean of the capacitor current at each sample (of the lower
    /// capacitor for a split half-bridge), A.
    pub means: Vec<f64>,
}

impl CapacitorCurrent {
    pub fn total_rms(&self) -> f64 {
        self.low_frequency_rms.hypot(self.switching_rms)
    }
}

/// The capacitor current of a bridge whose legs are `points` (all at one DC voltage).
/// For leg currents constant over a carrier period, the product of two legs' switch
/// states averages to the overlap of their on-intervals: min(d_j, d_k) when the
/// intervals are centred together (one carrier), and max(0, d_j + d_k - 1) when
/// centred half a carrier period apart (a complementary leg).
pub fn capacitor_current(kind: BusKind, points: &[LegPoint]) -> CapacitorCurrent {
    capacitor_current_at(kind, points, BUS_SAMPLES)
}

/// As [`capacitor_current`], with `n` samples over the period.
pub fn capacitor_current_at(kind: BusKind, points: &[LegPoint], n: usize) -> CapacitorCurrent {
    let h = 2.0 * PI / n as f64;
    let thetas: Vec<f64> = (0..n).map(|k| (k as f64 + 0.5) * h).collect();
    // A complementary leg b (bipolar) has duty 1 - d_a = d_a half a period later, so
    // its shifted point gives its duty; only its carrier alignment differs.
    let leg = |t: f64| -> Vec<(f64, f64, bool)> {
        points
            .iter()
            .enumerate()
            .map(|(k, p)| {
                let complement = kind == BusKind::Complementary && k % 2 == 1;
                (p.duty(t), p.current(t), complement)
            })
            .collect()
    };
    // Mean and mean square of the bridge's input current over one carrier period.
    let input = |t: f64| -> (f64, f64) {
        let legs = leg(t);
        let mean: f64 = legs.iter().map(|(d, i, _)| d * i).sum();
        let mut square = 0.0;
        for (dj, ij, cj) in &legs {
            for (dk, ik, ck) in &legs {
                let overlap = if cj == ck {
                    dj.min(*dk)
                } else {
                    (dj + dk - 1.0).max(0.0)
                };
                square += overlap * ij * ik;
            }
        }
        (mean, square)
    };
    let samples: Vec<(f64, f64)> = thetas.iter().map(|&t| input(t)).collect();
    let i_dc = samples.iter().map(|s| s.0).sum::<f64>() / n as f64;
    let (means, squares): (Vec<f64>, Vec<f64>) = match kind {
        BusKind::SplitHalfBridge => {
            // The lower capacitor: i_C2 = I_dc + (1 - s) i; its carrier-period mean and
            // mean square (s^2 = s).
            thetas
                .iter()
                .zip(&samples)
                .map(|(&t, _)| {
                    let p = &points[0];
                    let (d, i) = (p.duty(t), p.current(t));
                    let mean = i_dc + (1.0 - d) * i;
                    let square = i_dc * i_dc + 2.0 * i_dc * (1.0 - d) * i + (1.0 - d) * i * i;
                    (mean, square)
                })
                .unzip()
        }
        _ => samples
            .iter()
            .map(|&(mean_in, sq_in)| {
                // i_C = I_dc - i_in.
                (i_dc - mean_in, i_dc * i_dc - 2.0 * i_dc * mean_in + sq_in)
            })
            .unzip(),
    };
    let lf = means.iter().map(|m| m * m).sum::<f64>() / n as f64;
    let total = squares.iter().sum::<f64>() / n as f64;
    CapacitorCurrent {
        i_dc,
        low_frequency_rms: lf.sqrt(),
        switching_rms: (total - lf).max(0.0).sqrt(),
        means,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Peak-to-peak of the voltage a capacitor `c` builds from the current `means`
    /// sampled evenly over a period of frequency `f1` (its integral, mean removed).
    fn ripple_voltage_pp(means: &[f64], c: f64, f1: f64) -> f64 {
        let n = means.len() as f64;
        let dt = 1.0 / (f1 * n);
        let mean = means.iter().sum::<f64>() / n;
        let mut v = 0.0_f64;
        let (mut lo, mut hi) = (0.0_f64, 0.0_f64);
        for m in means {
            v += (m - mean) * dt / c;
            lo = lo.min(v);
            hi = hi.max(v);
        }
        hi - lo
    }

    fn igbt() -> DeviceData {
        DeviceData {
            channel: Channel::Igbt { v0: 0.9, r: 0.012 },
            e_sw: 4.2e-3,
            e_rec: 1.1e-3,
            v_ref: 600.0,
            i_ref: 75.0,
            diode_v0: 0.95,
            diode_r: 0.009,
            dead_time: 0.0,
        }
    }

    fn point(m: f64, phi: f64, third: bool) -> LegPoint {
        LegPoint {
            v_dc: 700.0,
            m,
            third_harmonic: third,
            i_pk: 42.0,
            phi,
            f_sw: 12e3,
            shift: 0.0,
        }
    }

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn numerical_losses_match_the_closed_forms_in_linear_modulation() {
        // Closed forms: semiconductor makers' application manuals for sinusoidal PWM
        // (from memory), and the third-harmonic term derived in `closed_form_losses`.
        // Tolerance 1e-5: far inside the 1 % the package's cross-check asks.
        for &third in &[false, true] {
            for &m in &[0.3, 0.8, 1.0] {
                for &phi in &[-1.2, -0.4, 0.0, 0.5, 1.3, 2.6] {
                    let p = point(m, phi, third);
                    let a = position_losses(&p, &igbt());
                    let b = closed_form_losses(&p, &igbt());
                    for (x, y) in [
                        (a.switch_conduction, b.switch_conduction),
                        (a.diode_conduction, b.diode_conduction),
                        (a.switch_switching, b.switch_switching),
                        (a.diode_recovery, b.diode_recovery),
                    ] {
                        assert!(
                            rel(x, y) < 1e-5,
                            "m {m} phi {phi} third {third}: {x} vs {y}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn mosfet_channel_carries_a_quarter_of_r_i_squared_without_dead_time() {
        // I_rms^2 R / 2 per switch: each conducts half the time on average at any m
        // and phi (circuit theory: d + (1 - d) over the two positions).
        let dev = DeviceData {
            channel: Channel::Mosfet { r: 0.025 },
            dead_time: 0.0,
            ..igbt()
        };
        for &phi in &[0.0, 0.7] {
            let l = position_losses(&point(0.85, phi, false), &dev);
            assert!(rel(l.switch_conduction, 0.025 * 42.0 * 42.0 / 4.0) < 1e-9);
            assert_eq!(l.diode_conduction, 0.0);
        }
        let dev = DeviceData {
            dead_time: 500e-9,
            ..dev
        };
        let p = point(0.85, 0.3, false);
        let (a, b) = (position_losses(&p, &dev), closed_form_losses(&p, &dev));
        assert!(rel(a.diode_conduction, b.diode_conduction) < 1e-4);
        assert!(rel(a.switch_conduction, b.switch_conduction) < 1e-4);
    }

    #[test]
    fn unipolar_full_bridge_capacitor_current_has_the_2f1_ripple_of_the_power() {
        // Single-phase power pulsates at 2 f1 with amplitude S = V_pk I_pk / 2 (circuit
        // theory); the capacitor carries S / V_dc of it as current.
        let (m, phi) = (0.8, 0.5);
        let a = point(m, phi, false);
        let c = capacitor_current(BusKind::CommonCarrier, &[a.leg(0, 2), a.leg(1, 2)]);
        let s = m * a.v_dc * a.i_pk / 2.0;
        assert!(rel(c.low_frequency_rms, s / a.v_dc / 2f64.sqrt()) < 1e-6);
        assert!(rel(c.i_dc, s * phi.cos() / a.v_dc) < 1e-6);
    }

    #[test]
    fn bipolar_full_bridge_capacitor_rms_is_the_leg_current_rms_less_the_dc() {
        // (2s - 1) i has mean square i^2 in each carrier period, so the capacitor's
        // total mean square is I^2 / 2 - I_dc^2 (circuit theory).
        let a = point(0.9, 0.2, false);
        let c = capacitor_current(BusKind::Complementary, &[a.leg(0, 2), a.leg(1, 2)]);
        let want = (a.i_pk * a.i_pk / 2.0 - c.i_dc * c.i_dc).sqrt();
        assert!(rel(c.total_rms(), want) < 1e-9);
        assert!(rel(c.i_dc, 0.9 * a.i_pk * 0.2f64.cos() / 2.0) < 1e-6);
    }

    #[test]
    fn balanced_three_phase_bus_has_no_low_frequency_ripple() {
        // Constant instantaneous power of a balanced three-phase set (circuit theory),
        // with or without a common third harmonic in the references.
        for &third in &[false, true] {
            let a = point(0.95, 0.3, third);
            let legs: Vec<LegPoint> = (0..3).map(|k| a.leg(k, 3)).collect();
            let c = capacitor_current(BusKind::CommonCarrier, &legs);
            assert!(
                c.low_frequency_rms < 1e-9 * c.i_dc,
                "{}",
                c.low_frequency_rms
            );
            // P = 3/2 (m V_dc / 2) I cos(phi) for three legs against the star point.
            assert!(
                rel(
                    c.i_dc * a.v_dc,
                    1.5 * 0.95 * a.v_dc / 2.0 * a.i_pk * 0.3f64.cos()
                ) < 1e-9
            );
        }
    }

    #[test]
    fn the_bus_sample_count_is_enough() {
        // The rms at BUS_SAMPLES against a count eight times finer, for every bus kind
        // at a lagging and a leading current (convergence of the rectangle rule).
        for &phi in &[0.6, -0.4] {
            let a = point(0.9, phi, false);
            let cases: [(BusKind, Vec<LegPoint>); 4] = [
                (BusKind::SplitHalfBridge, vec![a]),
                (BusKind::Complementary, vec![a.leg(0, 2), a.leg(1, 2)]),
                (BusKind::CommonCarrier, vec![a.leg(0, 2), a.leg(1, 2)]),
                (
                    BusKind::CommonCarrier,
                    (0..3).map(|k| a.leg(k, 3)).collect(),
                ),
            ];
            for (kind, legs) in cases {
                let coarse = capacitor_current(kind, &legs).total_rms();
                let fine = capacitor_current_at(kind, &legs, 8 * BUS_SAMPLES).total_rms();
                assert!(rel(coarse, fine) < 1e-5, "{kind:?}: {coarse} vs {fine}");
            }
        }
    }

    #[test]
    fn half_bridge_midpoint_swings_by_the_output_current_over_both_capacitors() {
        // The midpoint moves by (i_C2 - i_C1) / 2 = i / 2 into each capacitor: its f1
        // swing is I / (omega_1 C) peak to peak (derived in `dc_link`).
        let a = point(0.85, 0.4, false);
        let c = capacitor_current(BusKind::SplitHalfBridge, &[a]);
        let (cap, f1) = (2.2e-3, 50.0);
        let mid: Vec<f64> = (0..SAMPLES)
            .map(|k| {
                let t = 2.0 * PI * (k as f64 + 0.5) / SAMPLES as f64;
                a.current(t) / 2.0
            })
            .collect();
        let want = a.i_pk / (2.0 * PI * f1 * cap);
        assert!(rel(ripple_voltage_pp(&mid, cap, f1), want) < 1e-4);
        // The lower capacitor alone also carries the 2 f1 part of the bus ripple.
        assert!(ripple_voltage_pp(&c.means, cap, f1) > 0.9 * want);
    }
}
