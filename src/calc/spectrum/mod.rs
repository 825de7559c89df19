//! Harmonic spectrum of naturally sampled sine-triangle PWM, per unit of V/2 (half the
//! DC-link voltage), computed two independent ways:
//!
//! - [`components`], [`lines`], [`harmonics`]: the analytic double Fourier series of
//!   H. S. Black, Modulation Theory (1953), as given for a two-level leg by D. G. Holmes,
//!   T. A. Lipo, Pulse Width Modulation for Power Converters (2003), chapter 3, with
//!   Bessel functions from [`bessel_j`]; linear modulation only (m_a <= 1), sinusoidal
//!   references only.
//! - [`edges`], [`leg_edges`], [`numerical_lines`], [`numerical_harmonics`]: the exact
//!   switching waveform from the carrier/reference crossings, and its spectrum by FFT;
//!   valid in overmodulation too, and the only method for third-harmonic injection
//!   ([`Modulation::ThreePhaseThirdHarmonic`]).
//!
//! Conventions shared by both, so that phases agree: angles are of the fundamental,
//! theta = omega_o t in radians; leg a has the reference m_a cos(theta) (with
//! third-harmonic injection m_a (cos(theta) - cos(3 theta) / 6)); the triangular
//! carrier runs between -1 and +1 with its minimum at theta = 0; a leg is at +1 (upper
//! switch on) while the reference is above the carrier. A component of amplitude A and
//! phase phi contributes A cos(order theta + phi). Each function states its own range.
//!
//! Groundwork for the switching-spectrum subject: nothing here writes to a sheet yet.

mod analytic;
mod bessel;
mod numerical;
mod regular;

pub use analytic::{components, harmonics, lines};
pub use bessel::bessel_j;
pub use numerical::{
    combine_legs, edges, leg_edges, numerical_harmonics, numerical_lines, Edge, Waveform,
    DEFAULT_SAMPLES_PER_PERIOD,
};
pub use regular::{regular_edges, regular_harmonics, regular_leg_edges, regular_lines};

use num_complex::Complex64;
use std::collections::BTreeMap;
use std::f64::consts::PI;
use std::fmt;

/// Most fundamental periods over which a non-integer m_f may repeat: m_f = p / q with
/// q up to this many. 16 kHz on a 60 Hz reference is 800/3, 16 kHz on 55 Hz is 3200/11.
pub const MAX_PERIODS: u32 = 64;

/// Smallest carrier ratio the analytic series is evaluated for: its truncation rule
/// (`analytic`) is tested down to here. Below it the carrier groups overlap so much
/// that the series is of little use anyway.
pub const MIN_ANALYTIC_CARRIER_RATIO: f64 = 3.0;

/// How the legs of a two-level bridge are modulated, and which voltage is meant.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Modulation {
    /// One leg against the DC-link midpoint.
    HalfBridge,
    /// Full bridge, legs switched diagonally: leg b is the complement of leg a, so the
    /// output is twice the leg voltage.
    FullBridgeBipolar,
    /// Full bridge, leg b with the inverted reference and the same carrier; the output
    /// is leg a minus leg b (three-level).
    FullBridgeUnipolar,
    /// Line-to-line voltage v_ab of a two-level three-phase bridge; legs b and c have
    /// their references shifted by -120 and +120 degrees, one common carrier.
    ThreePhase,
    /// As [`Modulation::ThreePhase`] (same legs, carrier and v_ab), with a sixth of the
    /// third harmonic injected into each leg's reference: m_a (cos(x) - cos(3 x) / 6),
    /// x = theta + delta. The third harmonic is the same in all three legs (3 delta is a
    /// whole number of turns), so it cancels in v_ab, while it flattens the reference:
    /// its peak is (sqrt(3)/2) m_a, at x = +-30 degrees, and the linear range extends to
    /// m_a = 2/sqrt(3) (J. A. Houldsworth, D. A. Grant, "The use of harmonic distortion
    /// to increase the output voltage of a three-phase PWM inverter", IEEE Trans. Ind.
    /// Appl., 1984; from memory). The sign is that of the sine form
    /// sin(x) + sin(3 x) / 6 moved to cosines: with + cos(3 x) / 6 the peak would rise
    /// to (7/6) m_a instead. Numerical spectrum only.
    ThreePhaseThirdHarmonic,
}

/// One leg of a bridge, as seen by the comparator.
#[derive(Clone, Copy, Debug)]
struct Leg {
    /// Reference phase as a fraction of a turn, `num / den`: the reference is
    /// m_a cos(theta + 2 pi num / den). Kept as a fraction so that the leg factors of
    /// `Modulation::leg_factor` cancel exactly where they must.
    num: i64,
    den: i64,
    /// The leg is the complement of its comparator output (leg b, bipolar).
    inverted: bool,
}

const LEG_A: Leg = Leg {
    num: 0,
    den: 1,
    inverted: false,
};

impl Modulation {
    /// The legs, leg a first.
    fn leg_set(self) -> &'static [Leg] {
        match self {
            Modulation::HalfBridge => &[LEG_A],
            Modulation::FullBridgeBipolar => &[
                LEG_A,
                Leg {
                    inverted: true,
                    ..LEG_A
                },
            ],
            Modulation::FullBridgeUnipolar => &[
                LEG_A,
                Leg {
                    num: 1,
                    den: 2,
                    inverted: false,
                },
            ],
            Modulation::ThreePhase | Modulation::ThreePhaseThirdHarmonic => &[
                LEG_A,
                Leg {
                    num: -1,
                    den: 3,
                    inverted: false,
                },
                Leg {
                    num: 1,
                    den: 3,
                    inverted: false,
                },
            ],
        }
    }

    /// How many legs the bridge has: the valid `leg` arguments of [`leg_edges`].
    pub fn legs(self) -> usize {
        self.leg_set().len()
    }

    /// The largest m_a of linear modulation, where the reference's peak just reaches
    /// the carrier's (|r| <= 1): 1 for a sinusoidal reference, 2/sqrt(3) with
    /// third-harmonic injection, whose reference peaks at (sqrt(3)/2) m_a (Houldsworth
    /// and Grant 1984; from memory). Above it pulses drop (overmodulation).
    pub fn linear_limit(self) -> f64 {
        match self {
            Modulation::HalfBridge
            | Modulation::FullBridgeBipolar
            | Modulation::FullBridgeUnipolar
            | Modulation::ThreePhase => 1.0,
            Modulation::ThreePhaseThirdHarmonic => 2.0 / 3f64.sqrt(),
        }
    }

    /// Whether each leg's reference carries the injected third harmonic.
    fn third_harmonic(self) -> bool {
        match self {
            Modulation::ThreePhaseThirdHarmonic => true,
            Modulation::HalfBridge
            | Modulation::FullBridgeBipolar
            | Modulation::FullBridgeUnipolar
            | Modulation::ThreePhase => false,
        }
    }

    /// The output voltage as a combination of leg voltages: (leg index, weight).
    fn output(self) -> &'static [(usize, f64)] {
        match self {
            Modulation::HalfBridge => &[(0, 1.0)],
            _ => &[(0, 1.0), (1, -1.0)],
        }
    }

    /// The factor by which the output multiplies the (m, n) term of leg a.
    ///
    /// A leg whose reference is shifted by delta has every term cos(m x + n y) of leg a
    /// turned into cos(m x + n (y + delta)) (the carrier is common), i.e. its phasor times
    /// e^(j n delta); an inverted leg is the negative of its comparator output. Hence the
    /// output phasor of term (m, n) is C_mn sum_legs w s e^(j n delta). This gives:
    /// half-bridge 1; bipolar 1 - (-1) = 2; unipolar 1 - e^(j n pi), which is 2 for odd n
    /// and 0 for even n; three-phase v_ab: 1 - e^(-j 2 pi n / 3)
    /// = 2 sin(n pi / 3) e^(j (pi/2 - n pi/3)), of magnitude 2 |sin(n pi / 3)|, zero for
    /// n a multiple of 3. The m = 0 term (n = 1, the fundamental) follows the same rule:
    /// 2 m_a for both full bridges, sqrt(3) m_a at +30 degrees for v_ab. Third-harmonic
    /// injection has the legs and output of three-phase, so the same factors; its leg b
    /// is leg a's waveform in y + delta too, as 3 delta is whole turns.
    fn leg_factor(self, n: i32) -> Complex64 {
        self.output()
            .iter()
            .map(|&(i, w)| {
                let leg = self.leg_set()[i];
                let sign = if leg.inverted { -w } else { w };
                // Reduce n num / den modulo one turn in integers first, so that whole
                // turns give exactly e^(j 0) = 1.
                let turns = (i64::from(n) * leg.num).rem_euclid(leg.den);
                if turns == 0 {
                    Complex64::new(sign, 0.0)
                } else {
                    Complex64::from_polar(sign, 2.0 * PI * turns as f64 / leg.den as f64)
                }
            })
            .sum()
    }
}

/// A sine-triangle modulator: the kind of bridge, the amplitude modulation index m_a
/// (reference peak over carrier peak) and the frequency modulation index m_f (carrier
/// frequency over fundamental frequency).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Pwm {
    pub modulation: Modulation,
    pub m_a: f64,
    pub m_f: f64,
}

impl Pwm {
    /// The default highest order: 5.5 m_f, which takes in the fifth carrier group with
    /// its upper sidebands and stops halfway to the sixth.
    pub fn default_max_order(&self) -> f64 {
        (5.5 * self.m_f).floor()
    }
}

/// One term (m, n) of the double Fourier series: A cos(order theta + phase), per unit
/// of V/2. `order` is |m m_f + n| (a term of negative frequency is folded over, with its
/// phase negated). The fundamental is carrier 0, sideband 1.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Component {
    /// Carrier group m.
    pub carrier: u32,
    /// Sideband n about m m_f.
    pub sideband: i32,
    /// Order of the fundamental, |m m_f + n|.
    pub order: f64,
    /// Amplitude per unit of V/2, never negative.
    pub amplitude: f64,
    /// Phase in radians, in (-pi, pi].
    pub phase: f64,
}

/// A spectral line: every term at one frequency combined, A cos(order theta + phase),
/// per unit of V/2. At order 0 the amplitude is |DC| and the phase 0 or pi.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Line {
    pub order: f64,
    pub amplitude: f64,
    pub phase: f64,
}

/// Why a spectrum cannot be computed for these inputs.
#[derive(Clone, Debug, PartialEq)]
pub enum SpectrumError {
    /// m_a is negative or not finite.
    ModulationIndex(f64),
    /// The analytic series holds only for linear modulation, m_a <= 1.
    Overmodulation(f64),
    /// m_f is not finite or below the method's minimum (the second field).
    CarrierRatio(f64, f64),
    /// Integer harmonics were asked for, but m_f is not an integer.
    NotSynchronous(f64),
    /// m_f is not p/q with q <= [`MAX_PERIODS`]: carrier and reference do not repeat.
    NotPeriodic(f64),
    /// The highest order is negative or not finite.
    MaxOrder(f64),
    /// The samples per period are not a power of two, or too few for the highest order
    /// (it must stay below a quarter of the samples of the window).
    Samples(usize),
    /// There is no leg with this index.
    Leg(usize),
    /// The analytic series does not cover this modulation (third-harmonic injection);
    /// the numerical spectrum does.
    NoSeries(Modulation),
}

/// The values stay in the variants for the caller to print with its units: the engine
/// formats no numbers (DEVELOPERS.md, units at the edges).
impl fmt::Display for SpectrumError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let text = match self {
            SpectrumError::ModulationIndex(_) => "the modulation index is negative or not finite",
            SpectrumError::Overmodulation(_) => {
                "the modulation index is above 1, where the analytic series does not hold"
            }
            SpectrumError::CarrierRatio(..) => {
                "the carrier ratio is below the method's minimum or not finite"
            }
            SpectrumError::NotSynchronous(_) => {
                "the carrier ratio is not an integer, so the spectrum has lines between the harmonics"
            }
            SpectrumError::NotPeriodic(_) => {
                "the carrier ratio does not repeat within `MAX_PERIODS` fundamental periods"
            }
            SpectrumError::MaxOrder(_) => "the highest order is negative or not finite",
            SpectrumError::Samples(_) => {
                "the samples per period are not a power of two above four times the highest order"
            }
            SpectrumError::Leg(_) => "the bridge has no leg of that index",
            SpectrumError::NoSeries(_) => {
                "the analytic series covers sinusoidal references only, not this modulation; the numerical spectrum does"
            }
        };
        f.write_str(text)
    }
}

impl std::error::Error for SpectrumError {}

/// Whether the analytic series (natural or regular sampling) describe this modulation:
/// sinusoidal references only; third-harmonic injection has no series here.
fn series_covers(modulation: Modulation) -> Result<(), SpectrumError> {
    match modulation {
        Modulation::HalfBridge
        | Modulation::FullBridgeBipolar
        | Modulation::FullBridgeUnipolar
        | Modulation::ThreePhase => Ok(()),
        Modulation::ThreePhaseThirdHarmonic => Err(SpectrumError::NoSeries(modulation)),
    }
}

/// Integer-order amplitudes 0..=max_order of an integer m_f from a series' `lines`:
/// entry h is order h.
fn series_harmonics(
    pwm: &Pwm,
    max_order: u32,
    lines: impl Fn(&Pwm, f64) -> Result<Vec<Line>, SpectrumError>,
) -> Result<Vec<(u32, f64)>, SpectrumError> {
    check(pwm, MIN_ANALYTIC_CARRIER_RATIO)?;
    series_covers(pwm.modulation)?;
    if !synchronous(pwm.m_f) {
        return Err(SpectrumError::NotSynchronous(pwm.m_f));
    }
    let lines = lines(pwm, f64::from(max_order))?;
    Ok(integer_orders(&lines, max_order))
}

/// Checks the modulation index and carrier ratio shared by both methods.
fn check(pwm: &Pwm, min_m_f: f64) -> Result<(), SpectrumError> {
    if !(pwm.m_a.is_finite() && pwm.m_a >= 0.0) {
        return Err(SpectrumError::ModulationIndex(pwm.m_a));
    }
    if !(pwm.m_f.is_finite() && pwm.m_f >= min_m_f) {
        return Err(SpectrumError::CarrierRatio(pwm.m_f, min_m_f));
    }
    Ok(())
}

fn check_order(max_order: f64) -> Result<(), SpectrumError> {
    if max_order.is_finite() && max_order >= 0.0 {
        Ok(())
    } else {
        Err(SpectrumError::MaxOrder(max_order))
    }
}

/// The window over which carrier and reference repeat: m_f = p / q in lowest terms
/// with the smallest q <= [`MAX_PERIODS`] within 1e-9 relative; returns (p, q).
fn window(m_f: f64) -> Option<(u64, u32)> {
    (1..=MAX_PERIODS).find_map(|q| {
        let p = (m_f * f64::from(q)).round();
        ((m_f - p / f64::from(q)).abs() <= 1e-9 * m_f && p >= 1.0).then_some((p as u64, q))
    })
}

/// Whether carrier and reference repeat within [`MAX_PERIODS`] fundamental periods,
/// which the time-domain methods ([`edges`], [`numerical_lines`]) need.
pub fn repeats(m_f: f64) -> bool {
    m_f.is_finite() && window(m_f).is_some()
}

/// Whether m_f is an integer (to the same 1e-9 as [`window`]).
fn synchronous(m_f: f64) -> bool {
    window(m_f).is_some_and(|(_, q)| q == 1)
}

/// Adds phasors that land on the same frequency: orders k / q are keyed by k, so that
/// rounding in m m_f + n cannot split a line. A DC term A cos(phi) is real, so only
/// the real part of its phasor counts.
fn combine(terms: impl Iterator<Item = (f64, Complex64)>, q: u32) -> Vec<Line> {
    let mut by_key: BTreeMap<u64, Complex64> = BTreeMap::new();
    for (order, phasor) in terms {
        let key = (order * f64::from(q)).round() as u64;
        *by_key.entry(key).or_default() += phasor;
    }
    by_key
        .into_iter()
        .map(|(k, p)| line(k as f64 / f64::from(q), p))
        .collect()
}

/// A line from its phasor; at order 0 the phasor is the (real) DC value.
fn line(order: f64, p: Complex64) -> Line {
    if order == 0.0 {
        Line {
            order,
            amplitude: p.re.abs(),
            phase: if p.re < 0.0 { PI } else { 0.0 },
        }
    } else {
        Line {
            order,
            amplitude: p.norm(),
            phase: p.arg(),
        }
    }
}

/// Integer-order amplitudes 0..=max_order from lines at integer orders; orders without
/// a line get 0, so entry h is order h.
fn integer_orders(lines: &[Line], max_order: u32) -> Vec<(u32, f64)> {
    let mut out: Vec<(u32, f64)> = (0..=max_order).map(|h| (h, 0.0)).collect();
    for l in lines {
        let h = l.order.round();
        if (l.order - h).abs() < 1e-9 && h <= f64::from(max_order) {
            out[h as usize].1 = l.amplitude;
        }
    }
    out
}

/// Total harmonic distortion sqrt(sum_(h>=2) A_h^2) / A_1 (IEC 61000-2-2 definition of
/// THD as the ratio of the RMS of the harmonics to the RMS of the fundamental; from
/// memory). DC (order 0) is not a harmonic and is left out. Infinite or NaN without a
/// fundamental.
pub fn thd(harmonics: &[(u32, f64)]) -> f64 {
    distortion(harmonics, |_| 1.0)
}

/// Weighted THD, sqrt(sum_(h>=2) (A_h / h)^2) / A_1: each harmonic weighted by 1/h, as an
/// inductive filter or load attenuates it, so that it tracks the current ripple
/// (common practice; used so by Holmes and Lipo 2003, chapter 3, from memory).
pub fn wthd(harmonics: &[(u32, f64)]) -> f64 {
    distortion(harmonics, |h| 1.0 / f64::from(h))
}

fn distortion(harmonics: &[(u32, f64)], weight: impl Fn(u32) -> f64) -> f64 {
    let fundamental: f64 = harmonics
        .iter()
        .filter(|(h, _)| *h == 1)
        .map(|(_, a)| a)
        .sum();
    let sum: f64 = harmonics
        .iter()
        .filter(|(h, _)| *h >= 2)
        .map(|&(h, a)| (a * weight(h)).powi(2))
        .sum();
    sum.sqrt() / fundamental
}

#[cfg(test)]
mod tests;
