//! The switching waveform itself, from the carrier/reference crossings, and its spectrum
//! by FFT: the independent check of the analytic series, and the only method in
//! overmodulation.
//!
//! Each leg compares its reference m_a cos(theta + delta) with the common triangular
//! carrier (minimum -1 at theta = 0, period 2 pi / m_f). Within one carrier half-period
//! the carrier is linear, so r - c is smooth there and its turning points solve
//! sin(theta + delta) = -c' / m_a in closed form; between them r - c is monotone and has
//! at most one root, found by a safeguarded Newton iteration to about 1e-14 rad, far
//! inside 1e-12 of the period. With m_f = p / q the waveform repeats after q
//! fundamental periods, which is the window used.
//!
//! With third-harmonic injection the reference is r = m_a (cos x - cos(3 x) / 6),
//! x = theta + delta, and the turning points of r - c, the roots of r' - c', have no
//! such simple closed form. They are bracketed instead by the turning points of r'
//! itself: r'' = m_a (-cos x + (3/2) cos 3x) = m_a cos x (6 cos^2 x - 11/2) (with
//! cos 3x = 4 cos^3 x - 3 cos x) vanishes exactly where cos x = 0 or
//! cos x = +-sqrt(11/12), six fixed points a turn. Between two of them r' - c' is
//! monotone, so it has at most one root there, which the same safeguarded Newton
//! iteration finds; none can be missed, however close two roots are.

use super::{
    check, check_order, integer_orders, line, synchronous, window, Leg, Line, Pwm, SpectrumError,
};
use num_complex::Complex64;
use rustfft::FftPlanner;
use std::f64::consts::{FRAC_PI_2, PI};

/// Samples per fundamental period of the FFT. The aliases left after the rectangle
/// correction grow with (h / N)^2; against the analytic series the lines agree to about
/// 1e-7 (per unit of V/2) up to order 45, 3e-6 up to order 200, and 1e-4 up to order
/// 2000 (m_f = 400). Raise it for more.
pub const DEFAULT_SAMPLES_PER_PERIOD: usize = 1 << 16;

/// The carrier must be at least as fast as the reference for the window logic below.
const MIN_CARRIER_RATIO: f64 = 1.0;

/// Root-finding stops when the bracket is this narrow (radians of the fundamental).
const ANGLE_TOLERANCE: f64 = 1e-14;

/// One switching instant: from `angle` (theta = omega_o t, radians, within the window)
/// on, the voltage is `level` per unit of V/2.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Edge {
    pub angle: f64,
    pub level: f64,
}

/// A piecewise-constant voltage over one window of `periods` fundamental periods,
/// after which it repeats: `initial` from angle 0 to the first edge, then each edge's
/// level to the next edge, the last one to the end of the window.
#[derive(Clone, Debug, PartialEq)]
pub struct Waveform {
    pub periods: u32,
    pub initial: f64,
    pub edges: Vec<Edge>,
}

impl Waveform {
    /// The window length in radians of the fundamental, 2 pi `periods`.
    pub fn window(&self) -> f64 {
        2.0 * PI * f64::from(self.periods)
    }

    /// (start, end, level) of each constant stretch, in order.
    pub fn segments(&self) -> impl Iterator<Item = (f64, f64, f64)> + '_ {
        let starts = std::iter::once((0.0, self.initial))
            .chain(self.edges.iter().map(|e| (e.angle, e.level)));
        let ends = self
            .edges
            .iter()
            .map(|e| e.angle)
            .chain(std::iter::once(self.window()));
        starts.zip(ends).map(|((a, level), b)| (a, b, level))
    }

    /// Mean value over the window, per unit of V/2.
    pub fn mean(&self) -> f64 {
        self.segments().map(|(a, b, v)| v * (b - a)).sum::<f64>() / self.window()
    }

    /// Mean square over the window, per unit of (V/2)^2: exactly 1 for a two-level leg.
    pub fn mean_square(&self) -> f64 {
        self.segments()
            .map(|(a, b, v)| v * v * (b - a))
            .sum::<f64>()
            / self.window()
    }

    /// The level at an angle within the window (the new level at an edge itself).
    pub fn level_at(&self, angle: f64) -> f64 {
        let i = self.edges.partition_point(|e| e.angle <= angle);
        if i == 0 {
            self.initial
        } else {
            self.edges[i - 1].level
        }
    }
}

/// One leg's comparator over the window.
struct Comparator {
    m_a: f64,
    /// Reference phase delta, radians.
    phase: f64,
    /// Carrier half-period, radians of the fundamental.
    half: f64,
    /// The reference carries the injected third harmonic: m_a (cos x - cos(3 x) / 6).
    third: bool,
}

/// The injected third harmonic relative to the fundamental of the reference (Houldsworth
/// and Grant 1984; from memory). Negative in the cosine form: see
/// `Modulation::ThreePhaseThirdHarmonic`.
const THIRD: f64 = -1.0 / 6.0;

impl Comparator {
    fn bound(&self, j: u64) -> f64 {
        j as f64 * self.half
    }

    /// Carrier slope in half-period j: rising from -1 in even halves, falling in odd.
    fn carrier_slope(&self, j: u64) -> f64 {
        if j.is_multiple_of(2) {
            2.0 / self.half
        } else {
            -2.0 / self.half
        }
    }

    /// The reference at theta.
    fn reference(&self, theta: f64) -> f64 {
        let x = theta + self.phase;
        if self.third {
            self.m_a * (x.cos() + THIRD * (3.0 * x).cos())
        } else {
            self.m_a * x.cos()
        }
    }

    /// The reference's slope dr/dtheta.
    fn reference_slope(&self, theta: f64) -> f64 {
        let x = theta + self.phase;
        if self.third {
            -self.m_a * (x.sin() + 3.0 * THIRD * (3.0 * x).sin())
        } else {
            -self.m_a * x.sin()
        }
    }

    /// The reference's curvature d2r/dtheta2, of the third-harmonic reference only.
    fn reference_curvature(&self, theta: f64) -> f64 {
        let x = theta + self.phase;
        -self.m_a * (x.cos() + 9.0 * THIRD * (3.0 * x).cos())
    }

    /// r - c within half-period j.
    fn diff(&self, j: u64, theta: f64) -> f64 {
        let u = (theta - self.bound(j)) / self.half;
        let carrier = if j.is_multiple_of(2) {
            -1.0 + 2.0 * u
        } else {
            1.0 - 2.0 * u
        };
        self.reference(theta) - carrier
    }

    fn diff_slope(&self, j: u64, theta: f64) -> f64 {
        self.reference_slope(theta) - self.carrier_slope(j)
    }

    /// Turning points of r - c strictly inside half-period j, in order.
    fn turning_points(&self, j: u64) -> Vec<f64> {
        if self.third {
            self.bracketed_turning_points(j)
        } else {
            self.sine_turning_points(j)
        }
    }

    /// The angles in (a, b) where x = theta + delta is congruent to one of `bases`
    /// modulo `turn`, in order.
    fn angles_in(&self, a: f64, b: f64, bases: &[f64], turn: f64) -> Vec<f64> {
        let mut out = Vec::new();
        for &x0 in bases {
            let base = x0 - self.phase;
            let mut t = base + turn * ((a - base) / turn).ceil();
            while t < b {
                if t > a {
                    out.push(t);
                }
                t += turn;
            }
        }
        out.sort_by(f64::total_cmp);
        out
    }

    /// Turning points of r - c for the third-harmonic reference (see the module text):
    /// the interval is cut at the zeros of r'', x = pi/2 and x = +-arccos(sqrt(11/12))
    /// modulo pi; on each piece r' - c' is monotone and changes sign at most once.
    fn bracketed_turning_points(&self, j: u64) -> Vec<f64> {
        let (a, b) = (self.bound(j), self.bound(j + 1));
        let alpha = (11.0f64 / 12.0).sqrt().acos();
        let mut cuts = vec![a];
        cuts.extend(self.angles_in(a, b, &[FRAC_PI_2, alpha, PI - alpha], PI));
        cuts.push(b);
        let slope = |t: f64| self.diff_slope(j, t);
        let mut out = Vec::new();
        for w in cuts.windows(2) {
            let (lo, hi) = (w[0], w[1]);
            let (s_lo, s_hi) = (slope(lo), slope(hi));
            if s_lo == 0.0 && lo > a {
                out.push(lo);
            } else if (s_lo > 0.0 && s_hi < 0.0) || (s_lo < 0.0 && s_hi > 0.0) {
                out.push(root(slope, |t| self.reference_curvature(t), lo, hi));
            }
        }
        out
    }

    /// Turning points of r - c for the sinusoidal reference, in closed form: where
    /// -m_a sin(theta + delta) equals the carrier slope.
    fn sine_turning_points(&self, j: u64) -> Vec<f64> {
        let (a, b) = (self.bound(j), self.bound(j + 1));
        let s = -self.carrier_slope(j) / self.m_a;
        if s.abs() < 1.0 {
            let alpha = s.asin();
            self.angles_in(a, b, &[alpha, PI - alpha], 2.0 * PI)
        } else {
            Vec::new()
        }
    }

    /// The root of r - c in [lo, hi] of half-period j, where r - c is monotone and
    /// changes sign (in the sense of `> 0`).
    fn crossing(&self, j: u64, lo: f64, hi: f64) -> f64 {
        root(|t| self.diff(j, t), |t| self.diff_slope(j, t), lo, hi)
    }

    /// The leg's switching function over `halves` carrier half-periods: +1 while the
    /// reference is above the carrier.
    ///
    /// Each half-period is cut at its turning points and at the roots found between
    /// them, and every stretch between two consecutive cuts takes the sign of r - c at
    /// its midpoint, where r - c is well away from zero. Deciding levels by toggling at
    /// the roots instead goes wrong where r - c is zero at a cut: where the reference
    /// reaches +-1 on a carrier corner (m_a = 1 with a reference extreme on a carrier
    /// extreme, or |r| passing 1 where the carrier turns in overmodulation), r - c at
    /// the half-period boundary rounds to +1e-13 with one half's carrier formula and to
    /// 0 or below with the next one's, so a change entered in one half was never undone
    /// in the next, and the leg kept the wrong level up to the next true crossing.
    fn waveform(&self, halves: u64, periods: u32) -> Waveform {
        let mut out = Levels::default();
        let mut points = Vec::new();
        let mut cuts = Vec::new();
        for j in 0..halves {
            points.clear();
            points.push(self.bound(j));
            points.extend(self.turning_points(j));
            points.push(self.bound(j + 1));
            cuts.clear();
            cuts.push(points[0]);
            for w in points.windows(2) {
                let (lo, hi) = (w[0], w[1]);
                if (self.diff(j, lo) > 0.0) != (self.diff(j, hi) > 0.0) {
                    cuts.push(self.crossing(j, lo, hi));
                }
                cuts.push(hi);
            }
            for w in cuts.windows(2) {
                let (lo, hi) = (w[0], w[1]);
                // A root on a turning point or a boundary leaves a stretch of zero
                // width, with no level of its own.
                if hi > lo {
                    let level = if self.diff(j, 0.5 * (lo + hi)) > 0.0 {
                        1.0
                    } else {
                        -1.0
                    };
                    out.push(lo, level);
                }
            }
        }
        out.finish(periods)
    }
}

/// Pulses narrower than this (radians of the fundamental) are dropped: a couple of
/// units in the last place of an angle of the longest window (6.3e-14 at 64 periods),
/// the width of the spurious pulses that rounding makes where the reference only
/// touches the carrier. A true pulse this narrow (the reference passing a carrier peak
/// by less than about 1e-11) carries no measurable volt-seconds.
const MIN_PULSE: f64 = 2e-13;

/// The level of each stretch in angle order, gathered into a [`Waveform`]: equal
/// neighbours merge, so each edge is a change, and a pulse narrower than [`MIN_PULSE`]
/// is taken out again with the edge that opened it.
#[derive(Default)]
struct Levels {
    initial: Option<f64>,
    edges: Vec<Edge>,
}

impl Levels {
    /// The level is `level` from `angle` on.
    fn push(&mut self, angle: f64, level: f64) {
        let current = match self.edges.last() {
            Some(e) => e.level,
            None => match self.initial {
                Some(v) => v,
                None => {
                    self.initial = Some(level);
                    return;
                }
            },
        };
        if level == current {
            return;
        }
        match self.edges.last() {
            // Two levels only: closing a narrow pulse restores the level before it.
            Some(e) if angle - e.angle < MIN_PULSE => {
                self.edges.pop();
            }
            Some(_) => self.edges.push(Edge { angle, level }),
            None if angle < MIN_PULSE => self.initial = Some(level),
            None => self.edges.push(Edge { angle, level }),
        }
    }

    fn finish(mut self, periods: u32) -> Waveform {
        let window = 2.0 * PI * f64::from(periods);
        // A change just before the window's end is a pulse too narrow to keep.
        if self
            .edges
            .last()
            .is_some_and(|e| window - e.angle < MIN_PULSE)
        {
            self.edges.pop();
        }
        Waveform {
            periods,
            initial: self.initial.unwrap_or(-1.0),
            edges: self.edges,
        }
    }
}

/// The root of `f` in [lo, hi], where `f` is monotone and changes sign (in the sense of
/// `> 0`), with `df` its derivative. Newton steps from the chord, falling back to
/// bisection whenever a step would leave the bracket or does not at least halve the
/// previous one, so the step count stays bounded even where Newton would stall (a
/// safeguarded Newton iteration, a standard root-finding technique).
fn root(f: impl Fn(f64) -> f64, df: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let (f_lo, f_hi) = (f(lo), f(hi));
    let lo_up = f_lo > 0.0;
    // The chord is the exact root if f were straight.
    let mut x = lo + (hi - lo) * (f_lo / (f_lo - f_hi)).clamp(0.0, 1.0);
    let mut last_step = hi - lo;
    for _ in 0..200 {
        let fx = f(x);
        if fx == 0.0 {
            return x;
        }
        if (fx > 0.0) == lo_up {
            lo = x;
        } else {
            hi = x;
        }
        let step = fx / df(x);
        if step.abs() <= ANGLE_TOLERANCE {
            return (x - step).clamp(lo, hi);
        }
        let newton = x - step;
        if newton > lo && newton < hi && step.abs() <= 0.5 * last_step {
            last_step = step.abs();
            x = newton;
        } else {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi || hi - lo <= ANGLE_TOLERANCE {
                return mid;
            }
            last_step = 0.5 * (hi - lo);
            x = mid;
        }
    }
    x
}

/// The window (p carrier periods in q fundamental periods) and the checked inputs.
fn setup(pwm: &Pwm) -> Result<(u64, u32), SpectrumError> {
    check(pwm, MIN_CARRIER_RATIO)?;
    window(pwm.m_f).ok_or(SpectrumError::NotPeriodic(pwm.m_f))
}

fn leg_waveform(pwm: &Pwm, leg: Leg, (p, q): (u64, u32)) -> Waveform {
    let comparator = Comparator {
        m_a: pwm.m_a,
        phase: 2.0 * PI * leg.num as f64 / leg.den as f64,
        half: 2.0 * PI * f64::from(q) / (2 * p) as f64,
        third: pwm.modulation.third_harmonic(),
    };
    let mut w = comparator.waveform(2 * p, q);
    if leg.inverted {
        w.initial = -w.initial;
        for e in &mut w.edges {
            e.level = -e.level;
        }
    }
    w
}

/// The switching function of one leg (index 0 is leg a; see [`super::Modulation::legs`])
/// over the window: levels +1 and -1, per unit of V/2 about the DC midpoint. For later
/// use by the ripple and loss subjects, which need each leg's instants.
///
/// Valid for any finite m_a >= 0 (overmodulation and square-wave included) and m_f >= 1
/// that is p/q with q <= [`super::MAX_PERIODS`].
pub fn leg_edges(pwm: &Pwm, leg: usize) -> Result<Waveform, SpectrumError> {
    let win = setup(pwm)?;
    let legs = pwm.modulation.leg_set();
    let spec = *legs.get(leg).ok_or(SpectrumError::Leg(leg))?;
    Ok(leg_waveform(pwm, spec, win))
}

/// The bridge output voltage over the window, per unit of V/2: the leg voltage, twice
/// it (bipolar), leg a minus leg b (unipolar), or v_ab (three-phase). Same range as
/// [`leg_edges`].
pub fn edges(pwm: &Pwm) -> Result<Waveform, SpectrumError> {
    let win = setup(pwm)?;
    Ok(bridge_output(pwm, win.1, |leg| leg_waveform(pwm, leg, win)))
}

/// The bridge output of `pwm` from each leg's waveform as `leg_waveform` builds it
/// (naturally or regularly sampled): the legs combined by [`Modulation::output`].
pub(super) fn bridge_output(
    pwm: &Pwm,
    periods: u32,
    leg_waveform: impl Fn(Leg) -> Waveform,
) -> Waveform {
    let legs: Vec<Waveform> = pwm
        .modulation
        .leg_set()
        .iter()
        .map(|&leg| leg_waveform(leg))
        .collect();
    let output = pwm.modulation.output();
    combine_legs(&legs, periods, |levels| {
        output.iter().map(|&(i, w)| w * levels[i]).sum::<f64>()
    })
}

/// One waveform from several legs' waveforms over the same window of `periods`
/// fundamental periods: at every instant the level is `level_of` the legs' levels (in
/// leg order). Every leg's edges are taken in angle order; legs switching at the same
/// angle (the complementary legs of a bipolar bridge) make one edge, and an instant at
/// which the combined level does not change makes none.
pub fn combine_legs(legs: &[Waveform], periods: u32, level_of: impl Fn(&[f64]) -> f64) -> Waveform {
    let mut levels: Vec<f64> = legs.iter().map(|w| w.initial).collect();
    let mut all: Vec<(f64, usize, f64)> = legs
        .iter()
        .enumerate()
        .flat_map(|(i, w)| w.edges.iter().map(move |e| (e.angle, i, e.level)))
        .collect();
    all.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let initial = level_of(&levels);
    let mut out = Vec::with_capacity(all.len());
    let mut current = initial;
    let mut k = 0;
    while k < all.len() {
        let angle = all[k].0;
        while k < all.len() && all[k].0 == angle {
            levels[all[k].1] = all[k].2;
            k += 1;
        }
        let level = level_of(&levels);
        if level != current {
            out.push(Edge { angle, level });
            current = level;
        }
    }
    Waveform {
        periods,
        initial,
        edges: out,
    }
}

/// Sample k is the exact mean of the waveform over [k D, (k+1) D], D = window / n,
/// integrated from the edges.
fn box_samples(w: &Waveform, n: usize) -> Vec<Complex64> {
    let window = w.window();
    let width = window / n as f64;
    let mut out = Vec::with_capacity(n);
    let mut level = w.initial;
    let mut next = 0;
    for k in 0..n {
        let a = k as f64 * width;
        let b = if k + 1 == n {
            window
        } else {
            (k + 1) as f64 * width
        };
        let (mut area, mut pos) = (0.0, a);
        while next < w.edges.len() && w.edges[next].angle < b {
            let e = w.edges[next];
            area += level * (e.angle - pos);
            pos = e.angle;
            level = e.level;
            next += 1;
        }
        area += level * (b - pos);
        out.push(Complex64::new(area / width, 0.0));
    }
    out
}

/// The spectral lines of [`edges`] at orders k / q up to `max_order`, per unit of V/2,
/// with `samples_per_period` a power of two (use [`DEFAULT_SAMPLES_PER_PERIOD`]).
///
/// The FFT of box averages, not of point samples: the mean over a sample interval is
/// the waveform convolved with a rectangle, which multiplies the Fourier coefficient
/// c_k by B_k = e^(j pi k / N) sin(pi k / N) / (pi k / N) (rectangle of width window/N
/// centred half a sample after the sample instant; sampling theory). Dividing by B_k
/// leaves only the aliases of the coefficients near multiples of N, each scaled down by
/// k / (N - k): the jumps of the waveform do not fold back as they would with point
/// samples. The order must stay below a quarter of the N samples of the window.
pub fn numerical_lines(
    pwm: &Pwm,
    max_order: f64,
    samples_per_period: usize,
) -> Result<Vec<Line>, SpectrumError> {
    check_order(max_order)?;
    let w = edges(pwm)?;
    let q = w.periods as usize;
    let k_max = (max_order * q as f64 + 1e-9).floor() as usize;
    let n = samples_per_period * q;
    if !samples_per_period.is_power_of_two() || 4 * k_max >= n {
        return Err(SpectrumError::Samples(samples_per_period));
    }
    let mut x = box_samples(&w, n);
    FftPlanner::new().plan_fft_forward(n).process(&mut x);
    Ok((0..=k_max)
        .map(|k| {
            let c = x[k] / n as f64;
            let c = if k == 0 {
                c
            } else {
                let a = PI * k as f64 / n as f64;
                c / Complex64::from_polar(a.sin() / a, a)
            };
            // v = c_0 + sum_k 2 |c_k| cos(k theta / q + arg c_k) for a real waveform.
            let phasor = if k == 0 { c } else { 2.0 * c };
            line(k as f64 / q as f64, phasor)
        })
        .collect())
}

/// Amplitudes per unit of V/2 at orders 0 (|DC|), 1, ..., `max_order` of an integer
/// m_f, from [`numerical_lines`]: entry h is order h.
pub fn numerical_harmonics(
    pwm: &Pwm,
    max_order: u32,
    samples_per_period: usize,
) -> Result<Vec<(u32, f64)>, SpectrumError> {
    check(pwm, MIN_CARRIER_RATIO)?;
    if !synchronous(pwm.m_f) {
        return Err(SpectrumError::NotSynchronous(pwm.m_f));
    }
    let lines = numerical_lines(pwm, f64::from(max_order), samples_per_period)?;
    Ok(integer_orders(&lines, max_order))
}

#[cfg(test)]
mod tests {
    use super::super::{Modulation, MAX_PERIODS};
    use super::*;

    fn pwm(modulation: Modulation, m_a: f64, m_f: f64) -> Pwm {
        Pwm {
            modulation,
            m_a,
            m_f,
        }
    }

    /// The carrier written independently of `Comparator`: a triangle between -1 and +1
    /// with its minimum at every whole carrier period.
    fn carrier(m_f: f64, theta: f64) -> f64 {
        let u = m_f * theta / (2.0 * PI);
        -1.0 + 4.0 * (u - u.round()).abs()
    }

    #[test]
    fn crossings_are_where_reference_meets_carrier() {
        // Natural sampling: the leg switches exactly where m_a cos(theta) equals the
        // carrier (Holmes and Lipo 2003, section 3.3; from memory). Each edge must have
        // the reference below the carrier 1e-12 of a period before it and above after
        // it (or the reverse), and in the linear range there are two per carrier period.
        let eps = 2.0 * PI * 1e-12;
        for (m_a, m_f) in [(0.9, 21.0), (1.0, 15.0), (0.3, 400.0), (0.8, 10.5)] {
            let w = leg_edges(&pwm(Modulation::HalfBridge, m_a, m_f), 0).unwrap();
            let q = f64::from(w.periods);
            assert_eq!(w.edges.len() as f64, 2.0 * m_f * q, "m_a {m_a}, m_f {m_f}");
            assert_eq!(w.initial, 1.0, "reference above the carrier minimum at 0");
            let mut level = w.initial;
            for e in &w.edges {
                assert_eq!(e.level, -level, "levels alternate");
                level = e.level;
                let r_minus_c = |t: f64| m_a * t.cos() - carrier(m_f, t);
                let (before, after) = (r_minus_c(e.angle - eps), r_minus_c(e.angle + eps));
                assert!(
                    before * after < 0.0 && (after > 0.0) == (e.level > 0.0),
                    "m_a {m_a}, m_f {m_f}: edge at {}: {before:e} {after:e}",
                    e.angle
                );
            }
        }
    }

    #[test]
    fn overmodulation_drops_pulses_and_tends_to_the_clipped_reference() {
        // Past m_a = 1 the reference stays above (below) the carrier near its peaks, so
        // pulses vanish. For large m_f the carrier-period average of the leg is the
        // reference clipped at +-1, whose fundamental, derived here with
        // theta_0 = arccos(1/m_a), is (4/pi) (sin(theta_0)/2 + m_a (pi/4 - theta_0/2)):
        // it is m_a at m_a = 1 and 4/pi as m_a grows. At m_f = 201 the leg is within
        // 5e-5 of it.
        for m_a in [1.05, 1.2, 1.5, 3.0] {
            let p = pwm(Modulation::HalfBridge, m_a, 201.0);
            assert!(leg_edges(&p, 0).unwrap().edges.len() < 2 * 201);
            let t0 = (1.0 / m_a).acos();
            let want = 4.0 / PI * (t0.sin() / 2.0 + m_a * (PI / 4.0 - t0 / 2.0));
            let h = numerical_harmonics(&p, 1, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            assert!(
                (h[1].1 - want).abs() < 2e-4,
                "m_a {m_a}: {} vs {want}",
                h[1].1
            );
        }
    }

    #[test]
    fn box_average_spectrum_matches_the_direct_fourier_integral() {
        // c_k = (1/W) int v e^(-j k theta / q) dtheta, integrated exactly stretch by
        // stretch from the edges: an independent check of the rectangle correction.
        let p = pwm(Modulation::ThreePhase, 0.8, 15.0);
        let w = edges(&p).unwrap();
        let lines = numerical_lines(&p, 75.0, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
        for l in lines.iter().skip(1) {
            let k = l.order;
            let mut c = Complex64::new(0.0, 0.0);
            for (a, b, v) in w.segments() {
                let e = |t: f64| Complex64::from_polar(1.0, -k * t);
                c += v * (e(b) - e(a)) / Complex64::new(0.0, -k);
            }
            let c = 2.0 * c / w.window();
            let got = Complex64::from_polar(l.amplitude, l.phase);
            assert!((got - c).norm() < 2e-6, "order {k}: {got} vs {c}");
        }
    }

    #[test]
    fn bridge_outputs_combine_their_legs() {
        // Bipolar: leg b is the complement, output 2 v_a; unipolar: v_a - v_b with b on
        // the inverted reference; three-phase: v_ab = v_a - v_b, and with m_f a multiple
        // of 3 each leg is leg a delayed by a third of a period (b) or advanced (c),
        // since the carrier then repeats after a third; so too with third-harmonic
        // injection, whose third harmonic repeats after a third as well.
        let m_f = 15.0;
        let third = 2.0 * PI / 3.0;
        let cases = [
            Modulation::FullBridgeBipolar,
            Modulation::FullBridgeUnipolar,
            Modulation::ThreePhase,
            Modulation::ThreePhaseThirdHarmonic,
        ];
        for modulation in cases {
            let p = pwm(modulation, 0.85, m_f);
            let out = edges(&p).unwrap();
            let legs: Vec<Waveform> = (0..modulation.legs())
                .map(|i| leg_edges(&p, i).unwrap())
                .collect();
            for i in 0..2000 {
                let t = (i as f64 + 0.37) * out.window() / 2000.0;
                let (a, b) = (legs[0].level_at(t), legs[1].level_at(t));
                assert_eq!(out.level_at(t), a - b, "{modulation:?} at {t}");
                match modulation {
                    Modulation::FullBridgeBipolar => assert_eq!(b, -a),
                    Modulation::ThreePhase | Modulation::ThreePhaseThirdHarmonic => {
                        let wrap = |x: f64| x.rem_euclid(out.window());
                        // Skip the instants within 1e-9 of an edge of leg a.
                        let near =
                            |x: f64| legs[0].edges.iter().any(|e| (e.angle - x).abs() < 1e-9);
                        if !near(wrap(t - third)) && !near(wrap(t + third)) {
                            assert_eq!(b, legs[0].level_at(wrap(t - third)));
                            assert_eq!(legs[2].level_at(t), legs[0].level_at(wrap(t + third)));
                        }
                    }
                    _ => {}
                }
            }
        }
        assert_eq!(Modulation::ThreePhase.legs(), 3);
        assert_eq!(Modulation::HalfBridge.legs(), 1);
    }

    #[test]
    fn rejects_what_it_cannot_compute() {
        let p = pwm(Modulation::HalfBridge, 0.8, 21.0);
        assert_eq!(leg_edges(&p, 1), Err(SpectrumError::Leg(1)));
        assert_eq!(
            numerical_lines(&p, 50.0, 1000),
            Err(SpectrumError::Samples(1000))
        );
        // Order 50 needs more than 4 * 50 samples per period.
        assert_eq!(
            numerical_lines(&p, 50.0, 128),
            Err(SpectrumError::Samples(128))
        );
        assert!(numerical_lines(&p, 50.0, 256).is_ok());
        // pi is no ratio p/q with q <= MAX_PERIODS.
        let irrational = pwm(Modulation::HalfBridge, 0.8, PI * 7.0);
        assert_eq!(
            edges(&irrational),
            Err(SpectrumError::NotPeriodic(PI * 7.0))
        );
        let slow = f64::from(MAX_PERIODS) + 0.5;
        assert!(edges(&pwm(Modulation::HalfBridge, 0.8, 21.0 + 1.0 / slow)).is_err());
        assert!(matches!(
            numerical_harmonics(&pwm(Modulation::HalfBridge, 0.8, 10.5), 20, 1 << 12),
            Err(SpectrumError::NotSynchronous(_))
        ));
        assert!(matches!(
            edges(&pwm(Modulation::HalfBridge, -0.1, 21.0)),
            Err(SpectrumError::ModulationIndex(_))
        ));
        assert!(matches!(
            edges(&pwm(Modulation::HalfBridge, 0.5, 0.5)),
            Err(SpectrumError::CarrierRatio(..))
        ));
    }
}
