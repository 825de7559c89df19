//! Switching ripple of the output-filter inductor current over the fundamental period,
//! from the exact PWM edges of [`super::spectrum`], with the closed forms of the
//! single-phase bridges beside it.
//!
//! The model: an inductor L joins the phase voltage v(theta) of the bridge to a voltage
//! equal to v's own fundamental v_1(theta), i.e. the filter capacitor (or grid) voltage
//! is taken as sinusoidal over a switching period (common practice for sizing the
//! inductor). With v per unit of V_dc/2 and theta = omega_1 t,
//!
//!   L di/dt = (V_dc / 2) (v - v_0 - v_1)  =>  i = V_dc / (2 omega_1 L) F(theta),
//!   F(theta) = integral from 0 to theta of (v - v_0 - v_1) d theta,
//!
//! where v_0 is the waveform's mean over the window. It is zero for every sine-triangle
//! waveform here up to rounding (no carrier sideband lands on order 0 above ~1e-15), but
//! it is removed anyway, so that F is periodic over the window as the current of a
//! real circuit is (its resistance holds any DC).
//!
//! Normalisation: k = delta_i_pp L f_sw / V_dc with f_sw = m_f f_1 the carrier
//! frequency, so that delta_i_pp = k V_dc / (L f_sw). From the above,
//! k = delta_F f_sw / (2 omega_1) = delta_F m_f / (4 pi), delta_F the peak-to-peak of F.
//!
//! v is piecewise constant and v_1 a sinusoid, so F is known in closed form on every
//! stretch between two edges: the envelope and the rms are computed stretch by stretch,
//! with no time sampling. Valid wherever [`super::spectrum::edges`] is (overmodulation
//! included; there the low-order harmonics of v count as ripple too).

use super::spectrum::{combine_legs, edges, leg_edges, Modulation, Pwm, SpectrumError, Waveform};
use num_complex::Complex64;
use std::f64::consts::{FRAC_PI_2, PI};

/// The voltage one phase of the output filter sees, per unit of V_dc/2, over the window
/// of [`super::spectrum::leg_edges`]:
///
/// - half-bridge: the leg against the DC-link midpoint;
/// - full bridge (bipolar or unipolar): v_a - v_b, as [`super::spectrum::edges`];
/// - three-phase, and any other bridge of three legs or more: the leg voltage against the
///   star point of a balanced three-wire load, v_aN = v_a - (v_a + v_b + v_c) / 3
///   = (2 v_a - v_b - v_c) / 3. The load's star point floats, so the zero-sequence part
///   of the leg voltages (the common mode, with every triplen component) drops out
///   (Mohan, Undeland, Robbins, Power Electronics, 3rd ed., section 8-4; from memory).
///   Levels 0, +-2/3, +-4/3.
///
/// A bridge of one or two legs not listed here is taken as single-phase: the output of
/// [`super::spectrum::edges`].
pub fn phase_waveform(pwm: &Pwm) -> Result<Waveform, SpectrumError> {
    match pwm.modulation {
        Modulation::HalfBridge | Modulation::FullBridgeBipolar | Modulation::FullBridgeUnipolar => {
            edges(pwm)
        }
        m if m.legs() < 3 => edges(pwm),
        _ => star_point_voltage(pwm),
    }
}

/// v_aN = v_a - (sum of all legs) / n for a balanced star load of the n legs.
fn star_point_voltage(pwm: &Pwm) -> Result<Waveform, SpectrumError> {
    let legs = (0..pwm.modulation.legs())
        .map(|i| leg_edges(pwm, i))
        .collect::<Result<Vec<_>, _>>()?;
    let periods = legs.first().ok_or(SpectrumError::Leg(0))?.periods;
    let n = legs.len() as f64;
    // The numerator n v_a - sum is a sum of +-1 terms, exact in floating point, so that
    // equal leg states always give bit-equal levels and no edge without a step appears.
    Ok(combine_legs(&legs, periods, |levels| {
        (n * levels[0] - levels.iter().sum::<f64>()) / n
    }))
}

/// The Fourier component of a waveform at `order` (of the fundamental, k / periods for
/// a window of several periods) as a phasor P: the component is |P| cos(order theta +
/// arg P), per unit of V/2, the convention of [`super::spectrum::Line`]. At order 0 it
/// is the mean.
///
/// Exact from the stretches: P = (2 / W) integral of v e^(-j h theta) over the window W,
/// and on a stretch [a, b] of level v the integral is v j (e^(-j h b) - e^(-j h a)) / h.
pub fn fourier_coefficient(w: &Waveform, order: f64) -> Complex64 {
    if order == 0.0 {
        return Complex64::new(w.mean(), 0.0);
    }
    let turn = |t: f64| Complex64::from_polar(1.0, -order * t);
    let mut sum = Complex64::new(0.0, 0.0);
    let mut at_start = turn(0.0);
    for (_, b, v) in w.segments() {
        let at_end = turn(b);
        sum += v * (at_end - at_start);
        at_start = at_end;
    }
    2.0 * Complex64::i() * sum / (order * w.window())
}

/// The fundamental v_1 = a cos(theta) + b sin(theta), per unit of V/2.
#[derive(Clone, Copy, Debug)]
struct Fundamental {
    a: f64,
    b: f64,
}

impl Fundamental {
    fn of(w: &Waveform) -> Self {
        // |P| cos(theta + arg P) = Re(P) cos(theta) - Im(P) sin(theta).
        let p = fourier_coefficient(w, 1.0);
        Fundamental { a: p.re, b: -p.im }
    }

    fn value(self, theta: f64) -> f64 {
        self.a * theta.cos() + self.b * theta.sin()
    }

    /// The antiderivative S of v_1 that is -b at theta = 0.
    fn integral(self, theta: f64) -> f64 {
        self.a * theta.sin() - self.b * theta.cos()
    }

    /// Where v_1 equals `level` strictly inside (lo, hi), appended in order: there
    /// F' = level - v_1 changes sign, so F has a turning point. With
    /// v_1 = R cos(theta - phi) these are phi +- arccos(level / R) + 2 pi n. A tangent
    /// (|level| = R) is no sign change and is left out.
    fn crossings(self, level: f64, lo: f64, hi: f64, out: &mut Vec<f64>) {
        let r = self.a.hypot(self.b);
        // A NaN level or R yields NaN angles, which the loop below never takes.
        if level.abs() >= r {
            return;
        }
        let phi = self.b.atan2(self.a);
        let alpha = (level / r).acos();
        let start = out.len();
        for base in [phi - alpha, phi + alpha] {
            let mut t = base + 2.0 * PI * ((lo - base) / (2.0 * PI)).ceil();
            while t < hi {
                if t > lo {
                    out.push(t);
                }
                t += 2.0 * PI;
            }
        }
        out[start..].sort_by(f64::total_cmp);
    }
}

/// One constant stretch [a, b] of v, with `level` = v - v_0 and F(a) known.
#[derive(Clone, Copy, Debug)]
struct Stretch {
    a: f64,
    b: f64,
    level: f64,
    f_a: f64,
}

impl Stretch {
    /// F(theta) = F(a) + level (theta - a) - (S(theta) - S(a)), theta in [a, b].
    fn at(&self, v1: Fundamental, theta: f64) -> f64 {
        self.f_a + self.level * (theta - self.a) - (v1.integral(theta) - v1.integral(self.a))
    }

    /// The integrals of F - shift and (F - shift)^2 over the stretch, in closed form.
    ///
    /// About the midpoint m, with u = theta - m in [-H, H] and S(m + u)
    /// = S(m) cos u + v_1(m) sin u,
    ///   F = d + g u + c1 (sin u - u) + c2 (cos u - 1),
    ///   d = F(m) - shift, g = level - v_1(m), c1 = -v_1(m), c2 = -S(m).
    /// The terms u and sin u - u are odd, cos u - 1 is even, so the odd cross terms
    /// integrate to zero. Written with the small differences sin u - u and cos u - 1,
    /// no large constant cancels (S alone is of order 1, F only of order 1/m_f).
    fn moments(&self, v1: Fundamental, shift: f64) -> (f64, f64) {
        let m = 0.5 * (self.a + self.b);
        let h = 0.5 * (self.b - self.a);
        let (d, g) = (self.at(v1, m) - shift, self.level - v1.value(m));
        let (c1, c2) = (-v1.value(m), -v1.integral(m));
        let (sin_h, cos_h) = h.sin_cos();
        let h3 = h * h * h;
        // Integrals over [-H, H]:
        let uu = 2.0 * h3 / 3.0; // u^2
        let c = 2.0 * (sin_h - h); // cos u - 1
        let u_sin = 2.0 * (sin_h - h * cos_h); // u sin u
        let us = u_sin - uu; // u (sin u - u)
        let ss = (h - sin_h * cos_h) - 2.0 * u_sin + uu; // (sin u - u)^2
        let cc = (h + sin_h * cos_h) - 4.0 * sin_h + 2.0 * h; // (cos u - 1)^2
        let first = 2.0 * h * d + c2 * c;
        let second = 2.0 * h * d * d
            + g * g * uu
            + c1 * c1 * ss
            + c2 * c2 * cc
            + 2.0 * d * c2 * c
            + 2.0 * g * c1 * us;
        (first, second)
    }
}

/// F over the window, stretch by stretch.
struct RippleCurrent {
    stretches: Vec<Stretch>,
    v1: Fundamental,
    window: f64,
}

impl RippleCurrent {
    fn of(w: &Waveform) -> Self {
        let v0 = w.mean();
        let v1 = Fundamental::of(w);
        let mut f = 0.0;
        let stretches = w
            .segments()
            .map(|(a, b, v)| {
                let s = Stretch {
                    a,
                    b,
                    level: v - v0,
                    f_a: f,
                };
                f = s.at(v1, b);
                s
            })
            .collect();
        RippleCurrent {
            stretches,
            v1,
            window: w.window(),
        }
    }

    /// The rms of F about its mean over the window (two passes: mean, then spread).
    fn rms(&self) -> f64 {
        let sum = |shift: f64| {
            self.stretches
                .iter()
                .map(|s| s.moments(self.v1, shift))
                .fold((0.0, 0.0), |acc, m| (acc.0 + m.0, acc.1 + m.1))
        };
        let mean = sum(0.0).0 / self.window;
        (sum(mean).1 / self.window).max(0.0).sqrt()
    }

    /// The peak-to-peak of F within each of `carriers` equal carrier periods of the
    /// window, as (centre angle, peak-to-peak). F is extreme only at edges, at carrier
    /// period boundaries (where the window cuts it) or where v_1 crosses the level of a
    /// stretch, so those points give the exact maximum and minimum.
    fn peak_to_peak(&self, carriers: usize) -> Vec<(f64, f64)> {
        let period = self.window / carriers as f64;
        let end_of = |j: usize| {
            if j + 1 == carriers {
                self.window
            } else if j + 1 > carriers {
                f64::INFINITY
            } else {
                (j + 1) as f64 * period
            }
        };
        let mut out = Vec::with_capacity(carriers);
        let (mut j, mut boundary) = (0, end_of(0));
        let (mut lo, mut hi) = (0.0_f64, 0.0_f64); // F(0) = 0
        let mut points = Vec::new();
        for s in &self.stretches {
            points.clear();
            self.v1.crossings(s.level, s.a, s.b, &mut points);
            points.push(s.b);
            for &t in &points {
                while boundary <= t {
                    let f = s.at(self.v1, boundary);
                    out.push(((j as f64 + 0.5) * period, hi.max(f) - lo.min(f)));
                    (lo, hi) = (f, f);
                    j += 1;
                    boundary = end_of(j);
                }
                let f = s.at(self.v1, t);
                (lo, hi) = (lo.min(f), hi.max(f));
            }
        }
        out
    }
}

/// The ripple of the filter inductor current over one window, normalised as
/// k = delta_i_pp L f_sw / V_dc (see the module documentation): multiply by
/// V_dc / (L f_sw) for amperes.
#[derive(Clone, Debug, PartialEq)]
pub struct RippleEnvelope {
    /// One entry per carrier period of the window, in order: (theta at the carrier
    /// period's centre in radians, the peak-to-peak k within that period).
    pub points: Vec<(f64, f64)>,
    /// The largest k over the window.
    pub max: f64,
    /// The centre angle of the carrier period where `max` occurs (the first, if several).
    pub max_at: f64,
    /// The rms over the window of the ripple current about its mean, in the same
    /// normalisation: rms(i - mean(i)) L f_sw / V_dc. The fundamental is not in i
    /// (v_1 is taken out), so this is the switching ripple alone, for inductor and
    /// capacitor heating.
    pub rms: f64,
}

/// The ripple envelope of the phase voltage of [`phase_waveform`]. Same range as
/// [`super::spectrum::edges`]: any finite m_a >= 0, m_f >= 1 that is p / q with
/// q <= [`super::spectrum::MAX_PERIODS`]; the window then holds p carrier periods.
pub fn ripple_envelope(pwm: &Pwm) -> Result<RippleEnvelope, SpectrumError> {
    let w = phase_waveform(pwm)?;
    Ok(envelope_of(&w, pwm.m_f))
}

fn envelope_of(w: &Waveform, m_f: f64) -> RippleEnvelope {
    let carriers = ((m_f * f64::from(w.periods)).round() as usize).max(1);
    let current = RippleCurrent::of(w);
    let scale = m_f / (4.0 * PI);
    let points: Vec<(f64, f64)> = current
        .peak_to_peak(carriers)
        .into_iter()
        .map(|(theta, pp)| (theta, pp * scale))
        .collect();
    let (max_at, max) = points
        .iter()
        .fold((0.0, f64::NEG_INFINITY), |best, &(t, k)| {
            if k > best.1 {
                (t, k)
            } else {
                best
            }
        });
    RippleEnvelope {
        points,
        max,
        max_at,
        rms: current.rms() * scale,
    }
}

/// Checks an m_a for the closed forms, which hold in linear modulation only.
fn check_linear(m_a: f64) -> Result<(), SpectrumError> {
    if !(m_a.is_finite() && m_a >= 0.0) {
        Err(SpectrumError::ModulationIndex(m_a))
    } else if m_a > 1.0 {
        Err(SpectrumError::Overmodulation(m_a))
    } else {
        Ok(())
    }
}

/// The ripple k at angle theta (reference m_a cos theta) in closed form, for
/// 0 <= m_a <= 1; `None` for a bridge without one here (three-phase).
///
/// Derived here from the volt-seconds over one carrier period T_s, with the reference
/// x = m_a cos theta and the filter-side voltage taken constant over the period (the
/// quasi-static assumption; exact as m_f grows). The carrier runs from -1 to +1, so a
/// leg is on (reference above carrier) for the duty d = (1 + x) / 2, in one pulse
/// centred on the carrier minimum, and the period's mean output is its fundamental.
///
/// - Half-bridge: the leg is +-V_dc/2, the mean x V_dc/2. While on, L di/dt
///   = (V_dc/2)(1 - x), for d T_s: delta_i = V_dc (1 - x)(1 + x) T_s / (4 L), so
///   k = (1 - x^2) / 4.
/// - Full bridge, bipolar: +-V_dc, mean x V_dc: delta_i = V_dc (1 - x) d T_s / L, so
///   k = (1 - x^2) / 2.
/// - Full bridge, unipolar (x >= 0; x < 0 mirrors): leg a is on for (1 + x)/2, leg b
///   (reference -x) for (1 - x)/2, both centred on the carrier minimum. The output is
///   +V_dc while a is on and b off, x T_s in all, as two pulses of x T_s / 2, and 0
///   otherwise, in two stretches of (1 - x) T_s / 2 each (both legs on; both off): the
///   current repeats twice a carrier period. Each pulse lifts it by
///   V_dc (1 - x) x T_s / (2 L), so k = |x| (1 - |x|) / 2.
pub fn closed_form_ripple(
    modulation: Modulation,
    m_a: f64,
    theta: f64,
) -> Result<Option<f64>, SpectrumError> {
    check_linear(m_a)?;
    let x = m_a * theta.cos();
    Ok(match modulation {
        Modulation::HalfBridge => Some((1.0 - x * x) / 4.0),
        Modulation::FullBridgeBipolar => Some((1.0 - x * x) / 2.0),
        Modulation::FullBridgeUnipolar => Some(x.abs() * (1.0 - x.abs()) / 2.0),
        _ => None,
    })
}

/// The largest k over theta of [`closed_form_ripple`], as (k_max, theta_max) with
/// theta_max in [0, pi/2] (the first quarter; the envelope is even in theta and
/// symmetric about pi/2 in |cos theta|); `None` where there is no closed form.
///
/// From the forms above, over |x| = m_a |cos theta| in [0, m_a]: the half-bridge and
/// bipolar forms fall with |x|, so their maxima 1/4 and 1/2 are at x = 0, theta = pi/2.
/// The unipolar |x| (1 - |x|) / 2 peaks at |x| = 1/2 with 1/8, reached at
/// theta = arccos(1 / (2 m_a)) if m_a >= 1/2; below, it rises over the whole range and
/// the maximum m_a (1 - m_a) / 2 is at the reference peak, theta = 0.
pub fn closed_form_max(
    modulation: Modulation,
    m_a: f64,
) -> Result<Option<(f64, f64)>, SpectrumError> {
    check_linear(m_a)?;
    Ok(match modulation {
        Modulation::HalfBridge => Some((0.25, FRAC_PI_2)),
        Modulation::FullBridgeBipolar => Some((0.5, FRAC_PI_2)),
        Modulation::FullBridgeUnipolar if m_a >= 0.5 => Some((0.125, (0.5 / m_a).acos())),
        Modulation::FullBridgeUnipolar => Some((m_a * (1.0 - m_a) / 2.0, 0.0)),
        _ => None,
    })
}

#[cfg(test)]
mod tests {
    use super::super::spectrum::{components, lines, numerical_lines, DEFAULT_SAMPLES_PER_PERIOD};
    use super::*;
    use std::collections::BTreeMap;

    const SINGLE_PHASE: [Modulation; 3] = [
        Modulation::HalfBridge,
        Modulation::FullBridgeBipolar,
        Modulation::FullBridgeUnipolar,
    ];

    fn pwm(modulation: Modulation, m_a: f64, m_f: f64) -> Pwm {
        Pwm {
            modulation,
            m_a,
            m_f,
        }
    }

    #[test]
    fn closed_forms_match_the_envelope_and_improve_with_the_carrier_ratio() {
        // The closed forms (derived in `closed_form_ripple` from the volt-seconds of one
        // carrier period) take the reference as constant over the period; it moves by
        // up to 2 pi m_a / m_f there. Half-bridge and bipolar: the pulse is centred in
        // the period, so the first-order change cancels between its two edges and the
        // error is second order, observed at about (2 pi / m_f)^2 / 6 of the maximum
        // at m_a = 1 (1.5% at m_f = 21, 2e-4 at 201); a quarter is asserted. Unipolar:
        // the two pulses sit a quarter period either side of the centre, where x
        // differs from the centre's by up to m_a pi / (2 m_f), and |dk/dx| <= 1/2, so
        // the error is first order, up to m_a pi / (4 m_f) (reached near the zero
        // crossings, where |x| has its kink: 3% of the maximum at m_f = 201), plus the
        // same second-order allowance.
        for modulation in SINGLE_PHASE {
            for m_f in [21.0, 41.0, 201.0] {
                for m_a in [0.3, 0.6, 0.9, 1.0] {
                    let e = ripple_envelope(&pwm(modulation, m_a, m_f)).unwrap();
                    let (k_max, theta_max) = closed_form_max(modulation, m_a).unwrap().unwrap();
                    let second = 0.25 * (2.0 * PI / m_f).powi(2) * k_max;
                    let tol = match modulation {
                        Modulation::FullBridgeUnipolar => m_a * PI / (4.0 * m_f) + second,
                        _ => second,
                    };
                    assert_eq!(e.points.len(), m_f as usize);
                    for &(theta, k) in &e.points {
                        let want = closed_form_ripple(modulation, m_a, theta).unwrap().unwrap();
                        assert!(
                            (k - want).abs() <= tol,
                            "{modulation:?}, m_a {m_a}, m_f {m_f}, theta {theta}: {k} vs {want}"
                        );
                    }
                    // The maxima agree closer: the envelope is flat there. The envelope
                    // samples the closed form at carrier centres only, so near its peak it
                    // may sit below by the curvature over half a period, again within the
                    // second-order allowance for these cases.
                    assert!(
                        (e.max - k_max).abs() <= second,
                        "{modulation:?}, m_a {m_a}, m_f {m_f}: max {} vs {k_max}",
                        e.max
                    );
                    // ... and where the closed form puts it, folded into the first quarter,
                    // within a carrier period (or anywhere on the flat top at m_a = 1/2).
                    let folded = {
                        let t = e.max_at.rem_euclid(PI);
                        if t > FRAC_PI_2 {
                            PI - t
                        } else {
                            t
                        }
                    };
                    assert!(
                        (folded - theta_max).abs() <= 2.0 * PI / m_f + 0.02,
                        "{modulation:?}, m_a {m_a}, m_f {m_f}: at {folded} vs {theta_max}"
                    );
                }
            }
        }
    }

    /// The phase voltage from the leg levels, written out per bridge in the tests.
    type Combine = fn(&[f64]) -> f64;

    /// The inductor current stepped through independently of the module: leg waveforms
    /// combined by `level_at` at each step's midpoint (`combine`), v_1 = V_1
    /// cos(theta + phi) given as `fundamental` = (V_1, phi) (no DC), and i integrated
    /// exactly on each step, i += v (t1 - t0) - V_1 (sin(t1 + phi) - sin(t0 + phi)).
    /// The steps are every leg edge plus `per_carrier` equal steps a carrier period.
    /// Returns k for each carrier period and the normalised rms (Simpson's rule on each
    /// step, whose error is negligible here as i is linear plus a slow sinusoid on
    /// each).
    fn simulate(
        p: &Pwm,
        combine: Combine,
        (v_1, phi): (f64, f64),
        per_carrier: usize,
    ) -> (Vec<f64>, f64) {
        let legs: Vec<Waveform> = (0..p.modulation.legs())
            .map(|i| leg_edges(p, i).unwrap())
            .collect();
        let window = legs[0].window();
        let carriers = (p.m_f * f64::from(legs[0].periods)).round() as usize;
        let period = window / carriers as f64;
        let mut steps: Vec<f64> = (0..=carriers * per_carrier)
            .map(|i| i as f64 * window / (carriers * per_carrier) as f64)
            .chain(legs.iter().flat_map(|w| w.edges.iter().map(|e| e.angle)))
            .collect();
        steps.sort_by(f64::total_cmp);
        steps.dedup();
        let mut lo = vec![f64::INFINITY; carriers];
        let mut hi = vec![f64::NEG_INFINITY; carriers];
        let mut visit = |t: f64, i: f64| {
            // A point on a carrier boundary belongs to both periods.
            let r = t / period;
            for j in [(r - 1e-9).floor(), (r + 1e-9).floor()] {
                if j >= 0.0 && (j as usize) < carriers {
                    lo[j as usize] = lo[j as usize].min(i);
                    hi[j as usize] = hi[j as usize].max(i);
                }
            }
        };
        let (mut i, mut s1, mut s2) = (0.0, 0.0, 0.0);
        visit(0.0, 0.0);
        let mut levels = vec![0.0; legs.len()];
        for w in steps.windows(2) {
            let (t0, t1) = (w[0], w[1]);
            let mid = 0.5 * (t0 + t1);
            for (l, leg) in levels.iter_mut().zip(&legs) {
                *l = leg.level_at(mid);
            }
            let v = combine(&levels);
            let at = |t: f64| i + v * (t - t0) - v_1 * ((t + phi).sin() - (t0 + phi).sin());
            let (i_mid, i_end) = (at(mid), at(t1));
            s1 += (t1 - t0) / 6.0 * (i + 4.0 * i_mid + i_end);
            s2 += (t1 - t0) / 6.0 * (i * i + 4.0 * i_mid * i_mid + i_end * i_end);
            i = i_end;
            visit(t1, i);
        }
        let scale = p.m_f / (4.0 * PI);
        let k = lo.iter().zip(&hi).map(|(l, h)| (h - l) * scale).collect();
        let mean = s1 / window;
        (k, (s2 / window - mean * mean).sqrt() * scale)
    }

    #[test]
    fn envelope_matches_a_step_by_step_simulation_for_every_bridge() {
        // Published fundamentals, per unit of V_dc/2, of naturally sampled PWM in
        // linear modulation: m_a for a leg (Holmes and Lipo 2003, section 3.3: no
        // baseband harmonics; from memory), 2 m_a for both full bridges (leg a minus
        // leg b, b with the inverted reference or the inverted leg), and m_a for v_aN,
        // as the zero sequence carries no fundamental (Mohan, Undeland, Robbins, 3rd
        // ed., section 8-4; from memory). In overmodulation (m_a = 1.9, where i turns
        // inside the long pulses and the turning points between edges set the
        // envelope) the fundamental is taken from the FFT of `spectrum`, good to about
        // 1e-7. The phase voltage is rebuilt from the legs. The steps sample i between
        // edges, so they can miss a turning point of i by half a step, T / (2 N): i is
        // off there by at most V_1 (T / (2 N))^2 / 2, which is V_1 pi / (8 m_f N^2) in
        // k, below 2e-7 for the cases here. 1e-6 is asserted on k, 1e-6 relative on
        // the rms.
        let leg = |l: &[f64]| l[0];
        let bridge = |l: &[f64]| l[0] - l[1];
        let star = |l: &[f64]| (2.0 * l[0] - l[1] - l[2]) / 3.0;
        let cases: [(Modulation, f64, f64, Combine, Option<f64>); 7] = [
            (Modulation::HalfBridge, 0.8, 21.0, leg, Some(1.0)),
            (Modulation::HalfBridge, 1.9, 21.0, leg, None),
            (Modulation::FullBridgeBipolar, 0.9, 21.0, bridge, Some(2.0)),
            (Modulation::FullBridgeUnipolar, 0.6, 21.0, bridge, Some(2.0)),
            (Modulation::ThreePhase, 0.8, 21.0, star, Some(1.0)),
            (Modulation::ThreePhase, 1.0, 20.0, star, Some(1.0)),
            (Modulation::ThreePhase, 0.9, 400.0 / 3.0, star, Some(1.0)),
        ];
        for (modulation, m_a, m_f, combine, gain) in cases {
            let p = pwm(modulation, m_a, m_f);
            let fundamental = match gain {
                Some(g) => (g * m_a, 0.0),
                None => {
                    let l = numerical_lines(&p, 1.0, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
                    (l[1].amplitude, l[1].phase)
                }
            };
            let e = ripple_envelope(&p).unwrap();
            let (k, rms) = simulate(&p, combine, fundamental, 500);
            assert_eq!(e.points.len(), k.len(), "{modulation:?}, m_f {m_f}");
            let period = 2.0 * PI / m_f;
            for (j, (&(theta, got), want)) in e.points.iter().zip(&k).enumerate() {
                assert!(
                    (theta - (j as f64 + 0.5) * period).abs() < 1e-9,
                    "{modulation:?}: centre of period {j} at {theta}"
                );
                assert!(
                    (got - want).abs() < 1e-6,
                    "{modulation:?}, m_a {m_a}, m_f {m_f}, period {j}: {got} vs {want}"
                );
            }
            assert!(
                (e.rms - rms).abs() < 1e-6 * rms,
                "{modulation:?}, m_a {m_a}, m_f {m_f}: rms {} vs {rms}",
                e.rms
            );
        }
    }

    /// The rms of the ripple by Parseval's theorem from spectral lines (order,
    /// amplitude): a line A cos(h theta + phi) of v gives (A / h) sin(h theta + phi) in
    /// F, of mean square (A / h)^2 / 2. DC and the fundamental are left out, as in F.
    fn parseval_rms(lines: impl Iterator<Item = (f64, f64)>, m_f: f64) -> f64 {
        let ms: f64 = lines
            .filter(|&(h, _)| h > 1.5)
            .map(|(h, a)| (a / h).powi(2) / 2.0)
            .sum();
        ms.sqrt() * m_f / (4.0 * PI)
    }

    #[test]
    fn rms_agrees_with_parseval_over_the_analytic_series() {
        // The double Fourier series of naturally sampled PWM (H. S. Black 1953, as in
        // Holmes and Lipo 2003, section 3.3; from memory), evaluated by `spectrum`,
        // summed with Parseval's theorem: independent of the stretch-by-stretch
        // integral here. For v_aN the leg terms C_mn are combined as in
        // `Modulation::leg_factor`: leg k multiplies term (m, n) by e^(j n delta_k),
        // delta = 0, -+2 pi / 3, whose sum over the legs is 3 for n a multiple of 3
        // and 0 otherwise, so v_aN = v_a - sum / 3 keeps the term with factor 1 - 3/3
        // = 0 or 1 - 0 = 1. Up to order M m_f with M = 80: group m carries about 1/m^2
        // of the energy, weighted by 1/(m m_f)^2, so the groups left out fall as 1/M^3
        // (seen: 1e-5 of the rms at M = 20 for the half-bridge, 2e-4 for the unipolar,
        // whose first group is absent; 3e-6 at most at M = 80); 2e-5 is asserted.
        for m_f in [21.0, 39.0] {
            for m_a in [0.3, 0.9, 1.0] {
                let max = 80.0 * m_f;
                for modulation in SINGLE_PHASE {
                    let p = pwm(modulation, m_a, m_f);
                    let want = parseval_rms(
                        lines(&p, max)
                            .unwrap()
                            .iter()
                            .map(|l| (l.order, l.amplitude)),
                        m_f,
                    );
                    let got = ripple_envelope(&p).unwrap().rms;
                    assert!(
                        (got - want).abs() < 2e-5 * want,
                        "{modulation:?}, m_a {m_a}, m_f {m_f}: {got} vs {want}"
                    );
                }
                let leg = components(&pwm(Modulation::HalfBridge, m_a, m_f), max).unwrap();
                let mut by_order: BTreeMap<u64, Complex64> = BTreeMap::new();
                for c in leg.iter().filter(|c| c.sideband.rem_euclid(3) != 0) {
                    *by_order.entry(c.order.round() as u64).or_default() +=
                        Complex64::from_polar(c.amplitude, c.phase);
                }
                let want = parseval_rms(by_order.iter().map(|(&h, p)| (h as f64, p.norm())), m_f);
                let got = ripple_envelope(&pwm(Modulation::ThreePhase, m_a, m_f))
                    .unwrap()
                    .rms;
                assert!(
                    (got - want).abs() < 2e-5 * want,
                    "three-phase, m_a {m_a}, m_f {m_f}: {got} vs {want}"
                );
            }
        }
    }

    #[test]
    fn fourier_coefficient_matches_the_analytic_series() {
        // The closed-form coefficient of the stretches against the double Fourier
        // series (Black 1953; Holmes and Lipo 2003, chapter 3; from memory), compared
        // as phasors at every order up to 3 m_f. Both are exact up to the crossing
        // precision (~1e-14 rad) and the series' tail (~1e-14); 1e-9 is asserted.
        for modulation in [Modulation::FullBridgeUnipolar, Modulation::ThreePhase] {
            let p = pwm(modulation, 0.85, 15.0);
            let w = edges(&p).unwrap();
            for l in lines(&p, 45.0).unwrap() {
                let got = fourier_coefficient(&w, l.order);
                let want = if l.order == 0.0 {
                    Complex64::new(0.0, 0.0)
                } else {
                    Complex64::from_polar(l.amplitude, l.phase)
                };
                assert!(
                    (got - want).norm() < 1e-9,
                    "{modulation:?}, order {}: {got} vs {want}",
                    l.order
                );
            }
        }
    }

    #[test]
    fn bipolar_ripple_is_twice_the_half_bridge_ripple() {
        // The bipolar output is exactly twice the leg voltage (leg b is the complement
        // of leg a; Mohan, Undeland, Robbins, 3rd ed., section 8-3; from memory) and F
        // is linear in v, so every k and the rms double. Overmodulation included.
        for (m_a, m_f) in [(0.7, 21.0), (1.4, 21.0), (0.9, 400.0 / 3.0)] {
            let half = ripple_envelope(&pwm(Modulation::HalfBridge, m_a, m_f)).unwrap();
            let full = ripple_envelope(&pwm(Modulation::FullBridgeBipolar, m_a, m_f)).unwrap();
            for (h, f) in half.points.iter().zip(&full.points) {
                assert_eq!(h.0, f.0);
                assert!((f.1 - 2.0 * h.1).abs() < 1e-12, "m_a {m_a}: {f:?} vs {h:?}");
            }
            assert!((full.rms - 2.0 * half.rms).abs() < 1e-12 * full.rms);
            assert!((full.max - 2.0 * half.max).abs() < 1e-12);
        }
    }

    #[test]
    fn three_phase_phase_voltage_has_no_zero_sequence() {
        // v_aN of a balanced three-wire load: zero mean, fundamental equal to the leg's,
        // m_a per unit of V_dc/2 in linear modulation (Mohan, Undeland, Robbins, 3rd
        // ed., section 8-4; from memory), at phase 0 with the reference, and levels
        // 0, +-2/3, +-4/3 ((2 v_a - v_b - v_c) / 3 with legs at +-1). The legs'
        // triplen harmonics are zero sequence and must vanish from it: in
        // overmodulation the clipped leg reference has a large third harmonic (here
        // above 0.05), which v_aN must not (below 1e-12; m_f a multiple of 3 makes legs
        // b and c exact shifted copies of leg a, so the legs' thirds are equal).
        for m_a in [0.3, 0.6, 0.9, 1.0] {
            let w = phase_waveform(&pwm(Modulation::ThreePhase, m_a, 21.0)).unwrap();
            assert!(w.mean().abs() < 1e-12, "m_a {m_a}: mean {}", w.mean());
            let v1 = fourier_coefficient(&w, 1.0);
            assert!(
                (v1 - Complex64::new(m_a, 0.0)).norm() < 1e-9,
                "m_a {m_a}: {v1}"
            );
            for e in &w.edges {
                let thirds = e.level * 1.5;
                assert!(
                    thirds.round() == thirds && thirds.abs() <= 2.0,
                    "level {}",
                    e.level
                );
            }
        }
        for m_a in [1.2, 1.5, 2.5] {
            let p = pwm(Modulation::ThreePhase, m_a, 21.0);
            let leg_third = fourier_coefficient(&leg_edges(&p, 0).unwrap(), 3.0).norm();
            let w = phase_waveform(&p).unwrap();
            assert!(leg_third > 0.05, "m_a {m_a}: leg third {leg_third}");
            for h in [3.0, 9.0] {
                let c = fourier_coefficient(&w, h).norm();
                assert!(c < 1e-12, "m_a {m_a}: order {h} is {c}");
            }
            assert!(w.mean().abs() < 1e-12);
        }
    }

    #[test]
    fn ripple_scales_with_the_switching_period_only() {
        // k is normalised by L f_sw / V_dc, so for a fine carrier it depends on the
        // modulation index alone: raising m_f from 201 to 402 (halving the raw
        // peak-to-peak in radians) must leave the largest k and the rms of the
        // three-phase bridge, which has no closed form here, unchanged to the second
        // order in the carrier period (as the closed forms of the single-phase bridges
        // are), and so must m_f = 400/3, over its window of three periods. The margin
        // is (2 pi / m_f)^2 relative for the coarser carrier, 400/3: 2.2e-3.
        for m_a in [0.3, 0.6, 0.9] {
            let at = |m_f: f64| ripple_envelope(&pwm(Modulation::ThreePhase, m_a, m_f)).unwrap();
            let (a, b, c) = (at(201.0), at(402.0), at(400.0 / 3.0));
            let tol = (2.0 * PI / (400.0 / 3.0)).powi(2);
            for (x, y) in [(&a, &b), (&a, &c)] {
                assert!(
                    (x.max - y.max).abs() < tol * x.max,
                    "m_a {m_a}: {} vs {}",
                    x.max,
                    y.max
                );
                assert!(
                    (x.rms - y.rms).abs() < tol * x.rms,
                    "m_a {m_a}: {} vs {}",
                    x.rms,
                    y.rms
                );
            }
            assert_eq!(
                c.points.len(),
                400,
                "400 carrier periods in 3 fundamental periods"
            );
        }
    }

    #[test]
    fn non_integer_carrier_ratio_works_over_its_window() {
        // m_f = 400/3 (16 kHz on 120 Hz, say) repeats after three fundamental periods:
        // 400 carrier periods of 6 pi / 400, the last centred half of one before 6 pi,
        // and the closed forms hold in every one as in the first test (half-bridge and
        // bipolar: second order, a quarter of (2 pi / m_f)^2 of the maximum).
        let m_f = 400.0 / 3.0;
        for modulation in [Modulation::HalfBridge, Modulation::FullBridgeBipolar] {
            let m_a = 0.8;
            let e = ripple_envelope(&pwm(modulation, m_a, m_f)).unwrap();
            assert_eq!(e.points.len(), 400);
            assert!((e.points[399].0 - (6.0 * PI - 3.0 * PI / 400.0)).abs() < 1e-9);
            let (k_max, _) = closed_form_max(modulation, m_a).unwrap().unwrap();
            let tol = 0.25 * (2.0 * PI / m_f).powi(2) * k_max;
            for &(theta, k) in &e.points {
                let want = closed_form_ripple(modulation, m_a, theta).unwrap().unwrap();
                assert!(
                    (k - want).abs() <= tol,
                    "{modulation:?} at {theta}: {k} vs {want}"
                );
            }
        }
    }

    #[test]
    fn rejects_what_it_cannot_compute() {
        assert_eq!(
            closed_form_ripple(Modulation::HalfBridge, 1.2, 0.0),
            Err(SpectrumError::Overmodulation(1.2))
        );
        assert_eq!(
            closed_form_max(Modulation::FullBridgeUnipolar, -0.1),
            Err(SpectrumError::ModulationIndex(-0.1))
        );
        assert!(matches!(
            closed_form_ripple(Modulation::HalfBridge, f64::NAN, 0.0),
            Err(SpectrumError::ModulationIndex(_))
        ));
        assert_eq!(
            closed_form_ripple(Modulation::ThreePhase, 0.8, 0.3),
            Ok(None)
        );
        assert_eq!(closed_form_max(Modulation::ThreePhase, 0.8), Ok(None));
        assert_eq!(
            ripple_envelope(&pwm(Modulation::ThreePhase, 0.8, 7.0 * PI)),
            Err(SpectrumError::NotPeriodic(7.0 * PI))
        );
        assert!(matches!(
            ripple_envelope(&pwm(Modulation::HalfBridge, -1.0, 21.0)),
            Err(SpectrumError::ModulationIndex(_))
        ));
        // The ends of the range still give an envelope. At m_a = 0 the half-bridge is
        // a square wave at the carrier against a zero fundamental: F rises and falls
        // by T/2 = pi / m_f, k = 1/4 in every period (the closed form at x = 0); the
        // unipolar legs then switch together and the output is zero throughout.
        // Overmodulation has no closed form, but a finite envelope.
        let square = ripple_envelope(&pwm(Modulation::HalfBridge, 0.0, 21.0)).unwrap();
        assert!(square.points.iter().all(|p| (p.1 - 0.25).abs() < 1e-12));
        let zero = ripple_envelope(&pwm(Modulation::FullBridgeUnipolar, 0.0, 21.0)).unwrap();
        assert!(zero.max.abs() < 1e-12 && zero.rms.abs() < 1e-12);
        let over = ripple_envelope(&pwm(Modulation::ThreePhase, 3.0, 21.0)).unwrap();
        assert!(over.max.is_finite() && over.rms.is_finite());
    }
}
