//! The analytic spectrum of naturally sampled sine-triangle PWM.
//!
//! For a leg switching between +1 and -1 (per unit of V/2) with reference
//! m_a cos(y), y = theta, and a triangular carrier whose minimum is at x = m_f theta = 0,
//! the double Fourier series is (H. S. Black, Modulation Theory, 1953; D. G. Holmes,
//! T. A. Lipo, Pulse Width Modulation for Power Converters, 2003, section 3.3 for the
//! two-level leg; from memory):
//!
//!   v = m_a cos(y) + sum_(m>=1) sum_(n=-inf..inf) C_mn cos(m x + n y),
//!   C_mn = (4 / (m pi)) J_n(m pi m_a / 2) sin((m + n) pi / 2).
//!
//! Re-derived here to fix the carrier phase: with the carrier -1 + 2|x|/pi on
//! [-pi, pi], the leg is +1 for |x| < a(y) = (pi/2)(1 + m_a cos y), which is valid while
//! m_a <= 1 (a stays within [0, pi]); the x integral of the switching function is
//! 4 sin(m a) / m, and the y integral of sin(m pi/2 + z cos y) e^(j n y), by the
//! Jacobi-Anger expansion e^(j z cos y) = sum_k j^k J_k(z) e^(j k y), is
//! 2 pi J_n(z) sin((m + n) pi / 2) with z = m pi m_a / 2. There are no baseband
//! harmonics, and sin((m + n) pi/2) keeps only m + n odd: even sidebands about odd
//! carrier multiples and odd sidebands about even ones.
//!
//! The other bridges combine legs whose references are shifted (see
//! `Modulation::leg_factor`). A reference with an injected third harmonic
//! (`Modulation::ThreePhaseThirdHarmonic`) has no such closed form in single Bessel
//! functions (the y integral of sin(m pi/2 + z cos y - (z/6) cos 3y) is a sum of
//! products of them), so it is left to the numerical spectrum and rejected here with
//! [`SpectrumError::NoSeries`].

use super::bessel;
use super::{
    check, check_order, combine, window, Component, Line, Pwm, SpectrumError,
    MIN_ANALYTIC_CARRIER_RATIO,
};
use super::{series_covers, series_harmonics};
use num_complex::Complex64;
use std::f64::consts::PI;

/// A term whose Bessel bound is below this is left out. The sideband amplitude is
/// (4 / (m pi)) |J_n| <= 1.28 |J_n|, so each omitted term is below 1.3e-14 and, as the
/// bound falls faster than geometrically in |n|, so is their sum at any order: far
/// inside the 1e-9 asked for.
const TAIL: f64 = 1e-14;

/// Carrier groups with nothing in range, one after another, before the sum stops. The
/// sideband reach of group m (`sideband_reach`, at m_a = 1: 16, 20, 24, 27, 30, ...)
/// grows by at most 4 from one group to the next and by 3 or less from the third on,
/// while the group centre moves by m_f >= 3. From there on the lowest order a group
/// reaches never falls, so once a group misses the range every later one does; eight
/// in a row is margin.
const EMPTY_GROUPS_TO_STOP: u32 = 8;

/// The largest |n| whose term can matter at argument z: the first n past z/2 where the
/// bound |J_n(z)| <= (z/2)^n / n! (A&S 9.1.62; from memory) is below [`TAIL`]. Past z/2
/// the bound decreases monotonically, so every larger |n| is negligible too.
fn sideband_reach(z: f64) -> usize {
    let half = z / 2.0;
    let mut bound = 1.0;
    let mut n = 0usize;
    while (n as f64) <= half || bound >= TAIL {
        n += 1;
        bound *= half / n as f64;
    }
    n
}

/// Every term of the double Fourier series up to `max_order` (inclusive) for the bridge
/// output, per unit of V/2, sorted by order, then carrier, then sideband. Terms whose
/// amplitude is exactly zero (by sin((m+n) pi/2) or a leg factor) are left out.
///
/// Valid for 0 <= m_a <= 1 and m_f >= 3, integer or not, and sinusoidal references:
/// every modulation but [`Modulation::ThreePhaseThirdHarmonic`], which gets
/// [`SpectrumError::NoSeries`].
pub fn components(pwm: &Pwm, max_order: f64) -> Result<Vec<Component>, SpectrumError> {
    check(pwm, MIN_ANALYTIC_CARRIER_RATIO)?;
    series_covers(pwm.modulation)?;
    check_order(max_order)?;
    if pwm.m_a > 1.0 {
        return Err(SpectrumError::Overmodulation(pwm.m_a));
    }
    let (m_a, m_f) = (pwm.m_a, pwm.m_f);
    let mut out = Vec::new();
    // The fundamental: m = 0, n = 1, coefficient m_a.
    if max_order >= 1.0 {
        push(&mut out, 0, 1, 1.0, m_a * pwm.modulation.leg_factor(1));
    }
    let mut empty = 0;
    let mut m = 1u32;
    while empty < EMPTY_GROUPS_TO_STOP {
        let centre = f64::from(m) * m_f;
        let z = f64::from(m) * PI * m_a / 2.0;
        let reach = sideband_reach(z) as i64;
        // Orders |centre + n| <= max_order: n from -max_order - centre to
        // max_order - centre, within the sideband reach.
        let lo = ((-max_order - centre).ceil() as i64).max(-reach);
        let hi = ((max_order - centre).floor() as i64).min(reach);
        if lo > hi {
            empty += 1;
        } else {
            empty = 0;
            let j = bessel::orders(reach as usize, z);
            for n in lo..=hi {
                let n = n as i32;
                let odd = (i64::from(m) + i64::from(n)).rem_euclid(2) == 1;
                if !odd {
                    continue; // sin((m + n) pi / 2) = 0
                }
                // sin((m + n) pi / 2) = (-1)^((m + n - 1) / 2) for m + n odd.
                let s = if (i64::from(m) + i64::from(n) - 1).rem_euclid(4) == 0 {
                    1.0
                } else {
                    -1.0
                };
                // J_(-n) = (-1)^n J_n (A&S 9.1.5; from memory).
                let jn = j[n.unsigned_abs() as usize];
                let jn = if n < 0 && n % 2 != 0 { -jn } else { jn };
                let c = 4.0 / (f64::from(m) * PI) * jn * s;
                let k = c * pwm.modulation.leg_factor(n);
                push(&mut out, m, n, centre + f64::from(n), k);
            }
        }
        m += 1;
    }
    out.sort_by(|a, b| {
        a.order
            .total_cmp(&b.order)
            .then(a.carrier.cmp(&b.carrier))
            .then(a.sideband.cmp(&b.sideband))
    });
    Ok(out)
}

/// Adds the term Re[k e^(j order theta)], folding a negative order onto the positive
/// one with the conjugate phasor.
fn push(out: &mut Vec<Component>, carrier: u32, sideband: i32, order: f64, k: Complex64) {
    let amplitude = k.norm();
    if amplitude == 0.0 {
        return;
    }
    let (order, k) = if order < 0.0 {
        (-order, k.conj())
    } else {
        (order, k)
    };
    out.push(Component {
        carrier,
        sideband,
        order,
        amplitude,
        phase: k.arg(),
    });
}

/// The spectral lines up to `max_order`: [`components`] at the same frequency added as
/// phasors. With m_f = p/q (q <= [`super::MAX_PERIODS`]) terms coincide at orders k/q;
/// for any other m_f no two terms share a frequency. Sorted by order.
pub fn lines(pwm: &Pwm, max_order: f64) -> Result<Vec<Line>, SpectrumError> {
    let terms = components(pwm, max_order)?;
    Ok(match window(pwm.m_f) {
        Some((_, q)) => combine(
            terms
                .iter()
                .map(|c| (c.order, Complex64::from_polar(c.amplitude, c.phase))),
            q,
        ),
        // m m_f + n = m' m_f + n' (or its negative) with (m, n) != (m', n') needs a
        // rational m_f, so here every term is a line of its own.
        None => terms
            .iter()
            .map(|c| Line {
                order: c.order,
                amplitude: c.amplitude,
                phase: c.phase,
            })
            .collect(),
    })
}

/// Amplitudes per unit of V/2 at orders 0 (|DC|), 1, ..., `max_order` of an integer
/// m_f, every term of the series at that order added as a phasor: entry h is order h.
pub fn harmonics(pwm: &Pwm, max_order: u32) -> Result<Vec<(u32, f64)>, SpectrumError> {
    series_harmonics(pwm, max_order, lines)
}

#[cfg(test)]
mod tests {
    use super::super::{thd, Modulation};
    use super::*;

    fn leg(m_a: f64, m_f: f64) -> Pwm {
        Pwm {
            modulation: Modulation::HalfBridge,
            m_a,
            m_f,
        }
    }

    /// N. Mohan, T. Undeland, W. Robbins, Power Electronics, 3rd ed., Table 8-1:
    /// generalised harmonics of a two-level leg per unit of V_d/2, m_f large (from
    /// memory, not checked against the book). Rows: (carrier m, sideband n, values at
    /// m_a = 0.2, 0.4, 0.6, 0.8, 1.0); `None` is the table's dash.
    // 0.318 in the table is an amplitude that happens to be close to 1/pi.
    #[allow(clippy::type_complexity, clippy::approx_constant)]
    const MOHAN_8_1: [(u32, i32, [Option<f64>; 5]); 17] = [
        (
            0,
            1,
            [Some(0.2), Some(0.4), Some(0.6), Some(0.8), Some(1.0)],
        ),
        (
            1,
            0,
            [
                Some(1.242),
                Some(1.15),
                Some(1.006),
                Some(0.818),
                Some(0.601),
            ],
        ),
        (
            1,
            2,
            [
                Some(0.016),
                Some(0.061),
                Some(0.131),
                Some(0.220),
                Some(0.318),
            ],
        ),
        (1, 4, [None, None, None, None, Some(0.018)]),
        (
            2,
            1,
            [
                Some(0.190),
                Some(0.326),
                Some(0.370),
                Some(0.314),
                Some(0.181),
            ],
        ),
        (
            2,
            3,
            [None, Some(0.024), Some(0.071), Some(0.139), Some(0.212)],
        ),
        (2, 5, [None, None, None, Some(0.013), Some(0.033)]),
        (
            3,
            0,
            [
                Some(0.335),
                Some(0.123),
                Some(0.083),
                Some(0.171),
                Some(0.113),
            ],
        ),
        (
            3,
            2,
            [
                Some(0.044),
                Some(0.139),
                Some(0.203),
                Some(0.176),
                Some(0.062),
            ],
        ),
        (
            3,
            4,
            [None, Some(0.012), Some(0.047), Some(0.104), Some(0.157)],
        ),
        (3, 6, [None, None, None, Some(0.016), Some(0.044)]),
        (
            4,
            1,
            [
                Some(0.163),
                Some(0.157),
                Some(0.008),
                Some(0.105),
                Some(0.068),
            ],
        ),
        (
            4,
            3,
            [
                Some(0.012),
                Some(0.070),
                Some(0.132),
                Some(0.115),
                Some(0.009),
            ],
        ),
        (4, 5, [None, None, Some(0.034), Some(0.084), Some(0.119)]),
        (4, 7, [None, None, None, Some(0.017), Some(0.050)]),
        // Rows the table does not list at all: all dashes.
        (1, 6, [None, None, None, None, None]),
        (2, 7, [None, None, None, None, None]),
    ];

    const M_A: [f64; 5] = [0.2, 0.4, 0.6, 0.8, 1.0];

    #[test]
    fn leg_matches_mohan_table_8_1() {
        let m_f = 201u32;
        for (i, &m_a) in M_A.iter().enumerate() {
            let h = harmonics(&leg(m_a, f64::from(m_f)), 5 * m_f).unwrap();
            for &(m, n, values) in &MOHAN_8_1 {
                // The table gives one value for m m_f + n and m m_f - n: |J_-n| = |J_n|.
                let orders = if m == 0 {
                    vec![1]
                } else {
                    vec![m * m_f + n as u32, m * m_f - n as u32]
                };
                for order in orders {
                    let got = h[order as usize].1;
                    match values[i] {
                        // Every entry agrees within 0.001: the table's rounding to three
                        // decimals (two for 1.15).
                        Some(want) => assert!(
                            (got - want).abs() < 0.001,
                            "m_a {m_a}, {m} m_f {n:+}: series {got:.4}, table {want}"
                        ),
                        // The dashes are the entries too small to print: all below 0.01.
                        None => assert!(got < 0.01, "m_a {m_a}, {m} m_f {n:+}: {got:.4}"),
                    }
                }
            }
        }
    }

    #[test]
    fn leg_spectrum_lies_only_in_the_tables_sideband_groups() {
        // sin((m + n) pi / 2) removes m + n even: about odd multiples of m_f only even
        // sidebands (m_f, m_f +- 2, 3 m_f +- 4...), about even ones only odd sidebands
        // (2 m_f +- 1, 4 m_f +- 3...), and nothing between the fundamental and the first
        // group beyond the Bessel tails (Mohan et al., Table 8-1; from memory).
        let m_f = 201u32;
        for m_a in M_A {
            let h = harmonics(&leg(m_a, f64::from(m_f)), 5 * m_f).unwrap();
            for &(order, a) in &h {
                let m = (order + m_f / 2) / m_f; // nearest carrier group
                let n = order as i64 - i64::from(m * m_f);
                if order == 1 {
                    assert!((a - m_a).abs() < 1e-15);
                } else if m == 0 || (i64::from(m) + n) % 2 == 0 {
                    assert!(a < 1e-12, "m_a {m_a}: order {order} has {a:e}");
                }
            }
        }
    }

    #[test]
    fn sideband_terms_follow_the_closed_form() {
        // The carrier term of the series, (4/pi) J_0(pi m_a / 2) cos(m_f theta) (Holmes
        // and Lipo 2003, section 3.3; from memory), with J_0 from its power series
        // sum (-1)^k (z/2)^(2k) / k!^2 (A&S 9.1.10; from memory) rather than the
        // recurrence under test.
        let m_a = 0.8;
        let z = PI * m_a / 2.0;
        let j0: f64 = (0..30)
            .map(|k| {
                let f: f64 = (1..=k).map(f64::from).product();
                (-1f64).powi(k) * (z / 2.0).powi(2 * k) / (f * f)
            })
            .sum();
        let c = components(&leg(m_a, 21.5), 30.0).unwrap();
        let carrier = c
            .iter()
            .find(|c| c.carrier == 1 && c.sideband == 0)
            .unwrap();
        assert!((carrier.amplitude - 4.0 / PI * j0).abs() < 1e-14);
        assert_eq!(carrier.order, 21.5);
        assert!(carrier.phase.abs() < 1e-15, "sin(pi/2) = 1: in phase");
        // m_f = 21.5: the odd carrier groups sit at half-integer orders, the even ones
        // and the fundamental at integers.
        assert!(c
            .iter()
            .all(|c| c.order.fract() == 0.5 || c.carrier % 2 == 0));
    }

    #[test]
    fn an_irrational_carrier_ratio_keeps_every_term_apart() {
        // No two terms of m_f = 7 pi share a frequency, so the lines are the terms.
        let p = leg(0.9, 7.0 * PI);
        let c = components(&p, 100.0).unwrap();
        let l = lines(&p, 100.0).unwrap();
        assert_eq!(c.len(), l.len());
        for (c, l) in c.iter().zip(&l) {
            assert_eq!(
                (c.order, c.amplitude, c.phase),
                (l.order, l.amplitude, l.phase)
            );
        }
    }

    #[test]
    fn rejects_what_the_series_cannot_describe() {
        assert_eq!(
            components(&leg(1.2, 21.0), 100.0),
            Err(SpectrumError::Overmodulation(1.2))
        );
        assert!(matches!(
            harmonics(&leg(0.8, 20.5), 100),
            Err(SpectrumError::NotSynchronous(_))
        ));
        assert!(matches!(
            components(&leg(0.8, 2.0), 100.0),
            Err(SpectrumError::CarrierRatio(..))
        ));
        assert!(matches!(
            components(&leg(f64::NAN, 21.0), 100.0),
            Err(SpectrumError::ModulationIndex(_))
        ));
        assert!(matches!(
            components(&leg(0.5, 21.0), -1.0),
            Err(SpectrumError::MaxOrder(_))
        ));
    }

    #[test]
    fn distortion_of_a_leg_is_finite_and_falls_with_m_a() {
        // Relative distortion of a two-level leg falls as m_a rises towards 1: the
        // carrier groups shrink while the fundamental grows (Mohan et al., Table 8-1;
        // from memory). A weak but failing-capable ordering check.
        let m_f = 21u32;
        let t: Vec<f64> = [0.3, 0.6, 0.9]
            .iter()
            .map(|&m_a| thd(&harmonics(&leg(m_a, f64::from(m_f)), 6 * m_f).unwrap()))
            .collect();
        assert!(t[0] > t[1] && t[1] > t[2], "{t:?}");
    }
}
