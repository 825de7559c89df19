//! Cross-checks between the analytic series and the numerical spectrum, and the
//! published properties of each bridge. Tests of one method alone sit beside it.

use super::*;

const BRIDGES: [Modulation; 4] = [
    Modulation::HalfBridge,
    Modulation::FullBridgeBipolar,
    Modulation::FullBridgeUnipolar,
    Modulation::ThreePhase,
];

fn pwm(modulation: Modulation, m_a: f64, m_f: f64) -> Pwm {
    Pwm {
        modulation,
        m_a,
        m_f,
    }
}

fn phasor(l: &Line) -> Complex64 {
    Complex64::from_polar(l.amplitude, l.phase)
}

/// The largest phasor difference between two line lists, a missing line counting as 0.
fn worst_difference(a: &[Line], b: &[Line]) -> (f64, f64) {
    let key = |l: &Line| (l.order * 64.0).round() as i64;
    let mut all: BTreeMap<i64, (Complex64, Complex64)> = BTreeMap::new();
    for l in a {
        all.entry(key(l)).or_default().0 += phasor(l);
    }
    for l in b {
        all.entry(key(l)).or_default().1 += phasor(l);
    }
    all.iter()
        .map(|(k, (x, y))| (*k as f64 / 64.0, (x - y).norm()))
        .fold((0.0, 0.0), |w, d| if d.1 > w.1 { d } else { w })
}

#[test]
fn analytic_and_numerical_spectra_agree_for_every_bridge() {
    // Two independent evaluations of the same waveform: the double Fourier series
    // (Holmes and Lipo 2003, chapter 3; from memory) and the FFT of the exact crossings.
    // Compared as phasors, so that the phase conventions must agree too. 1e-3 per unit
    // of V/2 would do for design; the methods agree to about 3e-6 here (the aliasing
    // left by the box average at order 5 m_f), so 1e-5 is asserted.
    for modulation in BRIDGES {
        for m_f in [9.0, 15.0, 21.0, 39.0, 10.0, 20.0] {
            for m_a in [0.3, 0.6, 0.9, 1.0] {
                let p = pwm(modulation, m_a, m_f);
                let max = 5.0 * m_f;
                let a = lines(&p, max).unwrap();
                let n = numerical_lines(&p, max, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
                let (order, d) = worst_difference(&a, &n);
                assert!(
                    d < 1e-5,
                    "{modulation:?}, m_a {m_a}, m_f {m_f}: order {order} differs by {d:e}"
                );
            }
        }
    }
}

#[test]
fn non_integer_carrier_ratios_agree_over_their_window() {
    // m_f = p/q repeats after q fundamental periods; lines then fall at orders k/q.
    for (m_f, q) in [(10.5, 2), (20.0 / 3.0, 3), (15.25, 4)] {
        for modulation in [Modulation::HalfBridge, Modulation::ThreePhase] {
            let p = pwm(modulation, 0.8, m_f);
            assert_eq!(edges(&p).unwrap().periods, q);
            let max = 5.0 * m_f;
            let a = lines(&p, max).unwrap();
            let n = numerical_lines(&p, max, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            assert_eq!(n.len(), (max * f64::from(q)).floor() as usize + 1);
            let (order, d) = worst_difference(&a, &n);
            assert!(d < 1e-5, "{modulation:?}, m_f {m_f}: order {order}: {d:e}");
            // Interharmonics are really there: the first carrier group of m_f = 10.5 sits
            // at half-integer orders (m_f + 2: the carrier itself cancels in v_ab).
            if q == 2 {
                let sideband = n.iter().find(|l| l.order == m_f + 2.0).unwrap();
                assert!(sideband.amplitude > 0.1, "{modulation:?}: {sideband:?}");
            }
        }
    }
}

#[test]
fn parseval_the_spectrum_carries_the_mean_square_of_the_waveform() {
    // Parseval's theorem: mean square = DC^2 + sum A_h^2 / 2. The mean square comes
    // from the edges alone (exactly 1 for a two-level leg). The sum cannot reach 1e-6
    // with any affordable FFT: a jump d makes |c_h| ~ d / (2 pi h), so the energy above
    // order K is T_K = (sum over jumps of d^2) / (2 pi^2) * sum_(h>K) 1/h^2, about
    // 4 m_f / (pi^2 K) for a leg: 4e-4 at m_f = 9 and K = 8192, and 1e-6 would need
    // K ~ 4e6. So the sum goes to K = N/16 with N = 2^18 per period, and T_K is added;
    // what is left is the cross terms of the jumps (which average out only as 1/K^2)
    // and aliasing, a few 1e-6. Asserted: the deficit is T_K within 2 %, and the
    // balance within 1e-5. Third-harmonic injection is included: its waveform has
    // the same two-level legs, so the same bounds hold.
    let spp = 1 << 18;
    for modulation in BRIDGES
        .into_iter()
        .chain([Modulation::ThreePhaseThirdHarmonic])
    {
        for (m_a, m_f) in [(0.6, 9.0), (0.9, 39.0), (1.3, 15.0), (0.8, 10.5)] {
            let p = pwm(modulation, m_a, m_f);
            let w = edges(&p).unwrap();
            let q = f64::from(w.periods);
            let k_max = spp / 16;
            let l = numerical_lines(&p, k_max as f64 / q, spp).unwrap();
            let energy: f64 = l
                .iter()
                .map(|l| {
                    if l.order == 0.0 {
                        l.amplitude.powi(2)
                    } else {
                        l.amplitude.powi(2) / 2.0
                    }
                })
                .sum();
            let mut before = w.initial;
            let mut jumps = 0.0;
            for e in &w.edges {
                jumps += (e.level - before).powi(2);
                before = e.level;
            }
            jumps += (w.initial - before).powi(2); // the wrap to the next window
            let k = (l.len() - 1) as f64;
            // sum_(h>K) 1/h^2 = 1/K - 1/(2K^2) + 1/(6K^3) - ... (Euler-Maclaurin).
            let tail =
                jumps / (2.0 * PI * PI) * (1.0 / k - 0.5 / (k * k) + 1.0 / (6.0 * k.powi(3)));
            let ms = w.mean_square();
            if modulation == Modulation::HalfBridge {
                assert!((ms - 1.0).abs() < 1e-12, "{ms}");
            }
            let deficit = ms - energy;
            let case = format!("{modulation:?}, m_a {m_a}, m_f {m_f}");
            assert!(
                (deficit / tail - 1.0).abs() < 0.02,
                "{case}: {deficit:e} vs {tail:e}"
            );
            assert!(
                (deficit - tail).abs() < 1e-5,
                "{case}: {ms} vs {energy} + {tail}"
            );
        }
    }
}

#[test]
fn square_wave_limit_has_the_square_wave_series() {
    // With m_a far above 1 the leg is a square wave of the fundamental,
    // (4/pi) sum_(h odd) (-1)^((h-1)/2) cos(h theta) / h, amplitudes 4/(pi h) (Fourier
    // series of a square wave, any text on Fourier series). The bipolar bridge doubles
    // it; the three-phase v_ab becomes the six-step wave, fundamental (4/pi) sqrt(3),
    // harmonics 1/h of it, no triplens (Mohan et al., section 8-4, square-wave
    // operation; from memory). The crossings of m_a = 1e4 also exercise the turning
    // points of r - c inside a carrier half-period.
    let h = |modulation| {
        numerical_harmonics(&pwm(modulation, 1e4, 15.0), 9, DEFAULT_SAMPLES_PER_PERIOD).unwrap()
    };
    let leg = h(Modulation::HalfBridge);
    for order in [1u32, 3, 5, 7, 9] {
        let want = 4.0 / (PI * f64::from(order));
        assert!(
            (leg[order as usize].1 - want).abs() < 1e-7,
            "{order}: {:?}",
            leg[order as usize]
        );
    }
    for order in [0usize, 2, 4, 6, 8] {
        assert!(leg[order].1 < 1e-7, "{order}: {:?}", leg[order]);
    }
    let bipolar = h(Modulation::FullBridgeBipolar);
    assert!((bipolar[1].1 - 8.0 / PI).abs() < 1e-7);
    let six_step = h(Modulation::ThreePhase);
    assert!((six_step[1].1 - 4.0 / PI * 3f64.sqrt()).abs() < 1e-7);
    assert!((six_step[5].1 - 4.0 / PI * 3f64.sqrt() / 5.0).abs() < 1e-7);
    assert!(six_step[3].1 < 1e-7 && six_step[9].1 < 1e-7);
}

#[test]
fn unipolar_bridge_has_no_groups_about_odd_carrier_multiples() {
    // Unipolar PWM cancels the carrier groups at odd multiples of m_f, so the first
    // group sits at 2 m_f (Holmes and Lipo 2003, chapter 3, three-level full bridge;
    // from memory). Analytic: no term of an odd group at all, odd and even m_f.
    for m_f in [9u32, 10, 15, 20, 39, 40] {
        for m_a in [0.3, 0.9] {
            let p = pwm(Modulation::FullBridgeUnipolar, m_a, f64::from(m_f));
            let c = components(&p, f64::from(5 * m_f)).unwrap();
            assert!(c.iter().all(|c| c.carrier % 2 == 0), "{c:?}");
            assert!(c.iter().all(|c| c.carrier == 0 || c.sideband % 2 != 0));
        }
    }
    // Numerical: around m_f, 3 m_f and 5 m_f (within m_f / 4) the waveform has nothing,
    // where a single leg has its largest lines. m_f = 39 and 40 keep the tails of the
    // even groups, 29 orders away, below 1e-12 there; at small m_f they reach over.
    for m_f in [39u32, 40] {
        for m_a in [0.3, 0.9] {
            let p = pwm(Modulation::FullBridgeUnipolar, m_a, f64::from(m_f));
            let n = numerical_harmonics(&p, 6 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            for k in [1, 3, 5] {
                for order in k * m_f - m_f / 4..=k * m_f + m_f / 4 {
                    let a = n[order as usize].1;
                    // Zero to the accuracy of the FFT (aliasing, about 1e-6 at 5 m_f).
                    assert!(a < 5e-6, "m_f {m_f}, m_a {m_a}: order {order} has {a:e}");
                }
            }
            let leg = pwm(Modulation::HalfBridge, m_a, f64::from(m_f));
            let leg = numerical_harmonics(&leg, 2 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            assert!(leg[m_f as usize].1 > 0.5);
            // The even groups are there: 2 m_f +- 1 carries most of the ripple.
            assert!(n[(2 * m_f + 1) as usize].1 > 0.1);
            assert!((n[1].1 - 2.0 * m_a).abs() < 1e-6);
        }
    }
}

#[test]
fn three_phase_line_voltage_has_no_triplens() {
    // With m_f a multiple of 3 every triplen order h = m m_f + n has n a multiple of 3,
    // where the leg factor 2 |sin(n pi / 3)| vanishes; the fundamental is sqrt(3) m_a
    // (Mohan et al., section 8-4, m_f an odd multiple of 3; from memory).
    for m_f in [9u32, 15, 21, 39] {
        for m_a in [0.3, 0.6, 0.9, 1.0] {
            let p = pwm(Modulation::ThreePhase, m_a, f64::from(m_f));
            let a = harmonics(&p, 5 * m_f).unwrap();
            let n = numerical_harmonics(&p, 5 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            for h in (0..=5 * m_f as usize).step_by(3) {
                assert!(
                    a[h].1 < 1e-12,
                    "m_f {m_f}, m_a {m_a}: analytic {h}: {:e}",
                    a[h].1
                );
                // Zero to the accuracy of the FFT (aliasing: 1e-7 to 1e-6 here).
                assert!(
                    n[h].1 < 5e-6,
                    "m_f {m_f}, m_a {m_a}: numerical {h}: {:e}",
                    n[h].1
                );
            }
            // Order 1 also collects far sidebands such as 1 m_f - 8 at m_f = 9
            // ((4/pi) J_8(pi/2) sqrt(3) ~ 8e-6); the baseband term alone is exactly
            // sqrt(3) m_a (`fundamental_of_each_bridge`).
            assert!((a[1].1 - 3f64.sqrt() * m_a).abs() < 2e-5);
            assert!((n[1].1 - a[1].1).abs() < 5e-6);
            // The sidebands m_f +- 2 survive (n = 2 is not a multiple of 3).
            assert!(a[(m_f + 2) as usize].1 > 0.01);
        }
    }
}

#[test]
fn fundamental_of_each_bridge() {
    // Per unit of V/2: m_a for a leg, 2 m_a for either full bridge (output V_dc m_a),
    // sqrt(3) m_a leading by 30 degrees for v_ab (Mohan et al., sections 8-3 and 8-4;
    // from memory).
    let m_a = 0.7;
    let want = [
        (Modulation::HalfBridge, m_a, 0.0),
        (Modulation::FullBridgeBipolar, 2.0 * m_a, 0.0),
        (Modulation::FullBridgeUnipolar, 2.0 * m_a, 0.0),
        (Modulation::ThreePhase, 3f64.sqrt() * m_a, PI / 6.0),
    ];
    for (modulation, amplitude, phase) in want {
        let c = components(&pwm(modulation, m_a, 21.0), 21.0).unwrap();
        let f = c.iter().find(|c| c.carrier == 0).unwrap();
        assert_eq!((f.sideband, f.order), (1, 1.0));
        assert!((f.amplitude - amplitude).abs() < 1e-14, "{modulation:?}");
        assert!((f.phase - phase).abs() < 1e-14, "{modulation:?}");
    }
}

#[test]
fn distortion_definitions() {
    // THD = sqrt(sum_(h>=2) A_h^2) / A_1, WTHD = sqrt(sum_(h>=2) (A_h / h)^2) / A_1,
    // written out by hand; DC is no harmonic.
    let h = [(0, 0.5), (1, 2.0), (2, 0.6), (3, 0.8)];
    assert!((thd(&h) - 0.5).abs() < 1e-15);
    let w = ((0.3f64).powi(2) + (0.8f64 / 3.0).powi(2)).sqrt() / 2.0;
    assert!((wthd(&h) - w).abs() < 1e-15);
}

#[test]
fn carrier_groups_of_a_small_carrier_ratio_overlap_and_are_added_as_phasors() {
    // At m_f = 3 the groups overlap heavily: order 7 collects 1 m_f + 4, 2 m_f + 1,
    // 3 m_f - 2, 4 m_f - 5, ... The phasor sum must equal the FFT of the waveform; the
    // sum of the amplitudes (0.55) would be fifteen times too large.
    let p = pwm(Modulation::HalfBridge, 0.9, 3.0);
    let c = components(&p, 30.0).unwrap();
    let at_7: Vec<&Component> = c
        .iter()
        .filter(|c| c.order == 7.0 && c.amplitude > 1e-3)
        .collect();
    assert!(at_7.len() >= 5, "{at_7:?}");
    let sum: f64 = at_7.iter().map(|c| c.amplitude).sum();
    let n = numerical_harmonics(&p, 30, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
    assert!(sum - n[7].1 > 0.3, "{sum} vs {}", n[7].1);
    // And every order agrees, down to the smallest carrier ratio the series accepts,
    // where the truncation in m reaches furthest.
    for (modulation, m_a, m_f) in [
        (Modulation::HalfBridge, 0.9, 3u32),
        (Modulation::HalfBridge, 1.0, 3),
        (Modulation::ThreePhase, 1.0, 3),
        (Modulation::FullBridgeUnipolar, 1.0, 4),
        (Modulation::HalfBridge, 1.0, 5),
    ] {
        let p = pwm(modulation, m_a, f64::from(m_f));
        let a = harmonics(&p, 10 * m_f).unwrap();
        let n = numerical_harmonics(&p, 10 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
        for ((h, a), (_, n)) in a.iter().zip(&n) {
            assert!(
                (a - n).abs() < 1e-6,
                "{modulation:?}, m_f {m_f}: order {h}: {a} vs {n}"
            );
        }
    }
}

// Third-harmonic injection (`Modulation::ThreePhaseThirdHarmonic`): numerical spectrum
// only, checked against the properties Houldsworth and Grant (1984; from memory) give
// it, and against the double Fourier integral of Black (1953) evaluated by quadrature
// (`thi_series`) instead of in Bessel functions.

const THI: Modulation = Modulation::ThreePhaseThirdHarmonic;

/// The third-harmonic reference written independently of `numerical`: with
/// cos 3x = 4 cos^3 x - 3 cos x (trigonometric identity), cos x - cos(3x)/6 is
/// (3/2) c - (2/3) c^3 in c = cos x.
fn thi_reference(m_a: f64, x: f64) -> f64 {
    let c = x.cos();
    m_a * (1.5 * c - 2.0 / 3.0 * c.powi(3))
}

/// The carrier written independently of `Comparator`: a triangle between -1 and +1 with
/// its minimum at every whole carrier period.
fn carrier(m_f: f64, theta: f64) -> f64 {
    let u = m_f * theta / (2.0 * PI);
    -1.0 + 4.0 * (u - u.round()).abs()
}

/// The phasor 2 c_k of order k of a waveform, c_k = (1/W) int v e^(-j k theta) dtheta
/// integrated exactly between its edges.
fn fourier(w: &Waveform, k: f64) -> Complex64 {
    let mut starts = vec![(0.0, w.initial)];
    starts.extend(w.edges.iter().map(|e| (e.angle, e.level)));
    let mut c = Complex64::new(0.0, 0.0);
    for (i, &(a, v)) in starts.iter().enumerate() {
        let b = starts.get(i + 1).map_or(w.window(), |s| s.0);
        let e = |t: f64| Complex64::from_polar(1.0, -k * t);
        c += v * (e(b) - e(a)) / Complex64::new(0.0, -k);
    }
    2.0 * c / w.window()
}

/// The v_ab spectrum of third-harmonic injection at integer m_f, from the double Fourier
/// integral of a naturally sampled leg (H. S. Black, Modulation Theory, 1953; Holmes and
/// Lipo 2003, section 3.3 for its setting up; from memory): with x = m_f theta and
/// y = theta the leg is +1 for |x| < a(y) = (pi/2)(1 + r(y)), so the term
/// cos(m x + n y) has the phasor (2 / (pi^2 m)) int_(-pi)^(pi) sin(m a(y)) e^(-j n y) dy
/// for m >= 1, and the baseband is r(y) itself. The y integral is taken by the
/// trapezoidal rule, exact to rounding here: the integrand is smooth and periodic and
/// its content beyond |n| ~ 60 is below 1e-15. Leg b is leg a with y + delta,
/// delta = -2 pi / 3, so v_ab takes the factor 1 - e^(-j 2 pi n / 3). Carrier groups
/// m <= 12, sidebands |n| <= 60: entry h is order h.
fn thi_series(m_a: f64, m_f: u32, max_order: u32) -> Vec<Complex64> {
    const POINTS: usize = 2048;
    let mut out = vec![Complex64::new(0.0, 0.0); max_order as usize + 1];
    let ys: Vec<f64> = (0..POINTS)
        .map(|k| 2.0 * PI * k as f64 / POINTS as f64)
        .collect();
    let factor = |n: i64| 1.0 - Complex64::from_polar(1.0, -2.0 * PI * n as f64 / 3.0);
    let mut add = |order: i64, p: Complex64| {
        let (h, p) = if order < 0 {
            (-order, p.conj())
        } else {
            (order, p)
        };
        if let Some(slot) = out.get_mut(h as usize) {
            *slot += p;
        }
    };
    // Baseband: m_a cos y - (m_a / 6) cos 3y; the second term has factor 0.
    add(1, m_a * factor(1));
    add(3, -m_a / 6.0 * factor(3));
    for m in 1..=12i64 {
        let s: Vec<f64> = ys
            .iter()
            .map(|&y| (m as f64 * PI / 2.0 * (1.0 + thi_reference(m_a, y))).sin())
            .collect();
        for n in -60..=60i64 {
            let order = m * i64::from(m_f) + n;
            if order.unsigned_abs() > u64::from(max_order) {
                continue;
            }
            let integral: Complex64 = ys
                .iter()
                .zip(&s)
                .map(|(&y, &s)| s * Complex64::from_polar(1.0, -(n as f64) * y))
                .sum::<Complex64>()
                * (2.0 * PI / POINTS as f64);
            add(order, 2.0 / (PI * PI * m as f64) * integral * factor(n));
        }
    }
    out
}

#[test]
fn third_harmonic_injection_linear_limit_is_where_the_reference_peaks_at_one() {
    // The flattened reference peaks at (sqrt(3)/2) m_a, so linear modulation reaches
    // m_a = 2/sqrt(3) (Houldsworth and Grant 1984; from memory); a sinusoid peaks at
    // m_a. Peak found on a grid of 1e6 points, within 1e-9.
    let peak = |m_a: f64| {
        (0..1_000_000)
            .map(|k| thi_reference(m_a, 2.0 * PI * k as f64 / 1e6).abs())
            .fold(0.0, f64::max)
    };
    let limit = THI.linear_limit();
    assert!((limit - 1.154_700_538_379_251_5).abs() < 1e-15, "{limit}");
    assert!((peak(limit) - 1.0).abs() < 1e-9, "{}", peak(limit));
    for modulation in BRIDGES {
        assert_eq!(modulation.linear_limit(), 1.0, "{modulation:?}");
    }
    assert_eq!(THI.legs(), 3);
}

#[test]
fn third_harmonic_injection_crossings_are_where_reference_meets_carrier() {
    // Natural sampling (Holmes and Lipo 2003, section 3.3; from memory): each edge of
    // each leg has r - c of opposite signs 1e-12 of a period either side, in the sense
    // of its new level, with r from `thi_reference`. And the edges are all of them: a
    // scan of r - c at 2^21 points per window finds as many sign changes. Cases with
    // small m_f and large m_a have turning points of r - c inside carrier half-periods;
    // in (1.4, 3) and (3, 7) some half-periods hold two crossings (found by a finer
    // scan while writing this test), which only the turning points separate.
    let eps = 2.0 * PI * 1e-12;
    let cases = [
        (0.9, 21.0),
        (THI.linear_limit(), 15.0),
        (0.5, 10.5),
        (1.6, 3.0),
        (1.4, 3.0),
        (3.0, 7.0),
        (1.1, 1.0),
        (3.0, 2.0),
        (40.0, 5.0),
    ];
    for (m_a, m_f) in cases {
        let p = pwm(THI, m_a, m_f);
        for leg in 0..3 {
            let delta = -2.0 * PI * [0.0, 1.0 / 3.0, -1.0 / 3.0][leg];
            let w = leg_edges(&p, leg).unwrap();
            let r_minus_c = |t: f64| thi_reference(m_a, t + delta) - carrier(m_f, t);
            let case = format!("m_a {m_a}, m_f {m_f}, leg {leg}");
            let mut level = w.initial;
            for e in &w.edges {
                assert_eq!(e.level, -level, "{case}: levels alternate");
                level = e.level;
                let (before, after) = (r_minus_c(e.angle - eps), r_minus_c(e.angle + eps));
                assert!(
                    before * after < 0.0 && (after > 0.0) == (e.level > 0.0),
                    "{case}: edge at {}: {before:e} {after:e}",
                    e.angle
                );
            }
            let n = 1usize << 21;
            let mut changes = 0;
            let mut last = r_minus_c(0.0) > 0.0;
            assert_eq!(last, w.initial > 0.0, "{case}: initial level");
            for k in 1..=n {
                let now = r_minus_c(w.window() * (k as f64 + 0.5) / n as f64) > 0.0;
                changes += usize::from(now != last);
                last = now;
            }
            assert_eq!(w.edges.len(), changes, "{case}");
            if m_a <= THI.linear_limit() && m_f >= 3.0 {
                let q = f64::from(w.periods);
                assert_eq!(w.edges.len() as f64, 2.0 * m_f * q, "{case}: linear");
            }
        }
    }
}

#[test]
fn third_harmonic_injection_matches_its_double_fourier_integral() {
    // The FFT of the exact crossings against Black's double Fourier integral by
    // quadrature (`thi_series`), as phasors, every order to 5 m_f; the same 1e-5 as
    // the Bessel series of the sinusoidal bridges (aliasing of the box average).
    for m_f in [9u32, 15, 20, 21, 39] {
        for m_a in [0.3, 0.7, 1.0, THI.linear_limit()] {
            let p = pwm(THI, m_a, f64::from(m_f));
            let n = numerical_lines(&p, f64::from(5 * m_f), DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            let want = thi_series(m_a, m_f, 5 * m_f);
            for l in &n {
                let d = (phasor(l) - want[l.order as usize]).norm();
                assert!(
                    d < 1e-5,
                    "m_f {m_f}, m_a {m_a}: order {}: {} vs {}",
                    l.order,
                    phasor(l),
                    want[l.order as usize]
                );
            }
        }
    }
}

#[test]
fn third_harmonic_injection_fundamental_is_sqrt3_m_a_up_to_its_linear_limit() {
    // The injected third harmonic cancels line to line, and the baseband of natural
    // sampling is the reference itself while |r| <= 1, so v_ab has sqrt(3) m_a at
    // +30 degrees up to m_a = 2/sqrt(3) (Houldsworth and Grant 1984; Mohan et al.,
    // section 8-4, for the sqrt(3) and 30 degrees; from memory). Within 1e-6: the
    // order-1 line also collects far sidebands such as m_f - 20 at m_f = 21 (1e-8
    // here; 2e-5 at m_f = 15 and 7e-3 at m_f = 9, which the double Fourier test covers).
    // Plain sine-triangle at m_a = 1.1 already falls short, pulses dropped: by 0.062
    // for large m_f by the clipped-reference model of the `numerical` tests; asserted
    // more than 0.01.
    for m_f in [21.0, 39.0, 20.0] {
        for m_a in [0.2, 0.5, 0.8, 1.0, 1.1, THI.linear_limit()] {
            let l = numerical_lines(&pwm(THI, m_a, m_f), 1.0, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            let f = l[1];
            assert_eq!(f.order, 1.0);
            assert!(
                (f.amplitude - 3f64.sqrt() * m_a).abs() < 1e-6,
                "m_f {m_f}, m_a {m_a}: {}",
                f.amplitude
            );
            assert!((f.phase - PI / 6.0).abs() < 1e-6, "m_f {m_f}, m_a {m_a}");
        }
        let plain =
            numerical_harmonics(&pwm(Modulation::ThreePhase, 1.1, m_f), 1, 1 << 12).unwrap();
        assert!(
            plain[1].1 < 3f64.sqrt() * 1.1 - 0.01,
            "m_f {m_f}: {plain:?}"
        );
    }
}

#[test]
fn third_harmonic_injection_overmodulates_above_its_linear_limit() {
    // Above m_a = 2/sqrt(3) the reference peaks pass the carrier and pulses drop. For
    // large m_f the carrier-period average of each leg is the reference clipped at +-1
    // (as for the sinusoid, `numerical` tests), so the v_ab fundamental is sqrt(3) times
    // the fundamental of the clipped reference, here by the trapezoidal rule on 2^20
    // points (error below 1e-9 for the kinks of the clipping). At m_f = 201 within
    // 2e-4, and below sqrt(3) m_a by more than 1e-3.
    let m_f = 201.0;
    for m_a in [1.17, 1.2, 1.3, 1.6] {
        let n = 1usize << 20;
        let clipped: f64 = (0..n)
            .map(|k| {
                let y = 2.0 * PI * k as f64 / n as f64;
                thi_reference(m_a, y).clamp(-1.0, 1.0) * y.cos()
            })
            .sum::<f64>()
            * 2.0
            / n as f64;
        let want = 3f64.sqrt() * clipped;
        let h = numerical_harmonics(&pwm(THI, m_a, m_f), 1, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
        assert!(
            (h[1].1 - want).abs() < 2e-4,
            "m_a {m_a}: {} vs {want}",
            h[1].1
        );
        assert!(
            h[1].1 < 3f64.sqrt() * m_a - 1e-3,
            "m_a {m_a}: {} vs {}",
            h[1].1,
            3f64.sqrt() * m_a
        );
    }
    // At the limit itself nothing is lost yet.
    let m_a = THI.linear_limit();
    let h = numerical_harmonics(&pwm(THI, m_a, m_f), 1, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
    assert!((h[1].1 - 3f64.sqrt() * m_a).abs() < 1e-5, "{}", h[1].1);
}

#[test]
fn third_harmonic_injection_v_ab_has_no_triplens() {
    // With m_f a multiple of 3 each leg is leg a shifted by a third of a period, so the
    // triplens, the injected third harmonic among them, are the same in every leg and
    // cancel in v_ab (Houldsworth and Grant 1984; Mohan et al., section 8-4; from
    // memory). Zero to the accuracy of the FFT, 5e-6, where the other lines are not.
    for m_f in [9u32, 15, 21, 39] {
        for m_a in [0.5, 1.0, THI.linear_limit(), 1.4] {
            let p = pwm(THI, m_a, f64::from(m_f));
            let n = numerical_harmonics(&p, 5 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
            for h in (0..=5 * m_f as usize).step_by(3) {
                assert!(n[h].1 < 5e-6, "m_f {m_f}, m_a {m_a}: {h}: {:e}", n[h].1);
            }
            assert!(n[(m_f + 2) as usize].1 > 0.01, "m_f {m_f}, m_a {m_a}");
        }
    }
}

#[test]
fn third_harmonic_injection_is_in_each_leg_and_cancels_in_v_ab() {
    // Each leg's baseband is its reference (natural sampling, linear range), so each
    // leg carries m_a / 6 at order 3 with phase pi (the - cos 3x / 6 of the reference),
    // all three alike (Houldsworth and Grant 1984; from memory); v_ab has none. The leg
    // lines come from the exact Fourier integral of its edges (`fourier`), within 1e-6
    // (far sidebands folded onto order 3). Plain sine-triangle legs have no third
    // harmonic, which shows the injection is really there. m_f = 20 is no multiple of
    // 3: the legs are then not shifted copies, and the baseband still cancels.
    for m_f in [21.0, 20.0, 39.0] {
        for m_a in [0.4, 1.0, THI.linear_limit()] {
            let p = pwm(THI, m_a, m_f);
            let want = Complex64::new(-m_a / 6.0, 0.0);
            for leg in 0..3 {
                let got = fourier(&leg_edges(&p, leg).unwrap(), 3.0);
                assert!(
                    (got - want).norm() < 1e-6,
                    "m_f {m_f}, m_a {m_a}, leg {leg}: {got} vs {want}"
                );
                let plain = pwm(Modulation::ThreePhase, m_a.min(1.0), m_f);
                let none = fourier(&leg_edges(&plain, leg).unwrap(), 3.0);
                assert!(none.norm() < 1e-6, "plain leg {leg}: {none}");
            }
            let v_ab = fourier(&edges(&p).unwrap(), 3.0);
            assert!(v_ab.norm() < 1e-6, "m_f {m_f}, m_a {m_a}: v_ab {v_ab}");
        }
    }
}

#[test]
fn third_harmonic_injection_changes_the_carrier_groups() {
    // At m_a = 1 the two modulations have the same fundamental but not the same
    // switching lines: the flattened reference moves the pulse edges. The sinusoidal
    // lines are the Bessel series (Holmes and Lipo 2003, chapter 3; from memory), the
    // injected ones Black's integral by quadrature (`thi_series`); the numerical
    // spectrum of each matches its own within 1e-5, and the two differ by more than
    // 0.01 at the largest lines of the first two carrier groups.
    let m_f = 21u32;
    let plain = harmonics(&pwm(Modulation::ThreePhase, 1.0, f64::from(m_f)), 3 * m_f).unwrap();
    let p = pwm(THI, 1.0, f64::from(m_f));
    let thi = numerical_harmonics(&p, 3 * m_f, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
    let series = thi_series(1.0, m_f, 3 * m_f);
    let mut total = 0.0;
    for h in [m_f - 2, m_f + 2, m_f - 4, m_f + 4, 2 * m_f - 1, 2 * m_f + 1] {
        let (a, b) = (plain[h as usize].1, thi[h as usize].1);
        assert!(
            (b - series[h as usize].norm()).abs() < 1e-5,
            "order {h}: {b}"
        );
        total += (a - b).abs();
        assert!((a - b).abs() > 0.01, "order {h}: plain {a}, injected {b}");
    }
    assert!(total > 0.1, "{total}");
    assert!((plain[1].1 - thi[1].1).abs() < 1e-5, "same fundamental");
}

#[test]
fn third_harmonic_injection_square_wave_limit_is_six_step() {
    // Far above its linear limit the reference is positive exactly where cos x is
    // ((3/2) c - (2/3) c^3 has the sign of c), so each leg becomes the square wave and
    // v_ab the six-step wave: fundamental (4/pi) sqrt(3), harmonic h at 1/h of it, no
    // triplens (Mohan et al., section 8-4, square-wave operation; from memory). The
    // crossings of m_a = 1e4 run through the bracketed turning points.
    let h = numerical_harmonics(&pwm(THI, 1e4, 15.0), 11, DEFAULT_SAMPLES_PER_PERIOD).unwrap();
    let six = 4.0 / PI * 3f64.sqrt();
    for order in [1usize, 5, 7, 11] {
        assert!(
            (h[order].1 - six / order as f64).abs() < 1e-6,
            "{order}: {:?}",
            h[order]
        );
    }
    for order in [0usize, 2, 3, 4, 6, 9] {
        assert!(h[order].1 < 1e-6, "{order}: {:?}", h[order]);
    }
}

#[test]
fn the_analytic_series_rejects_third_harmonic_injection() {
    // The Bessel series holds for sinusoidal references only (`analytic`).
    let p = pwm(THI, 0.9, 21.0);
    assert_eq!(components(&p, 100.0), Err(SpectrumError::NoSeries(THI)));
    assert_eq!(lines(&p, 100.0), Err(SpectrumError::NoSeries(THI)));
    assert_eq!(harmonics(&p, 100), Err(SpectrumError::NoSeries(THI)));
    let text = SpectrumError::NoSeries(THI).to_string();
    assert!(text.contains("numerical spectrum"), "{text}");
}

/// Every bridge, third-harmonic injection included.
const ALL: [Modulation; 5] = [
    Modulation::HalfBridge,
    Modulation::FullBridgeBipolar,
    Modulation::FullBridgeUnipolar,
    Modulation::ThreePhase,
    THI,
];

/// Leg `leg` of `modulation` by the direct comparison of its reference with the
/// carrier, written from the module text and independently of `numerical`: the
/// reference phase delta of the leg, whether the leg is the complement of its
/// comparator, and r - c at theta (r from `thi_reference` with injection).
fn direct_leg(modulation: Modulation, m_a: f64, m_f: f64, leg: usize, theta: f64) -> (f64, f64) {
    let third = 2.0 * PI / 3.0;
    let (delta, sign) = match (modulation, leg) {
        (_, 0) => (0.0, 1.0),
        (Modulation::FullBridgeBipolar, 1) => (0.0, -1.0),
        (Modulation::FullBridgeUnipolar, 1) => (PI, 1.0),
        (_, 1) => (-third, 1.0),
        _ => (third, 1.0),
    };
    let x = theta + delta;
    let r = if modulation == THI {
        thi_reference(m_a, x)
    } else {
        m_a * x.cos()
    };
    (sign, r - carrier(m_f, theta))
}

/// Points of a fine grid over the window of `w` where `w` disagrees with `want`, which
/// gives the expected level or None where the direct comparison is too close to call
/// (|r - c| below 1e-9). Points within 1e-9 rad of an edge of `w` are left out, where
/// the edge's own 1e-12 accuracy and the rounding of the test's carrier could decide.
fn disagreements(w: &Waveform, want: impl Fn(f64) -> Option<f64>) -> Vec<f64> {
    let n = 64 * w.edges.len().max(64);
    let mut wrong = Vec::new();
    for k in 0..n {
        // An irrational offset keeps the grid off the carrier's corners.
        let t = w.window() * (k as f64 + 0.5 / 2f64.sqrt()) / n as f64;
        let i = w.edges.partition_point(|e| e.angle <= t);
        let near = |j: usize| w.edges.get(j).is_some_and(|e| (e.angle - t).abs() < 1e-9);
        if (i > 0 && near(i - 1)) || near(i) {
            continue;
        }
        if want(t).is_some_and(|v| v != w.level_at(t)) {
            wrong.push(t);
        }
    }
    wrong
}

/// Edges of `w` not at a crossing: 1e-11 rad either side of each edge the direct
/// comparison `want` (None where too close to call) must give the levels before and
/// after it. The test's carrier is good to about 2e-13 over the longest window, and
/// r - c moves by at least 1e-11 times the carrier slope there except at a touch.
fn misplaced_edges(w: &Waveform, want: impl Fn(f64) -> Option<f64>) -> Vec<f64> {
    let eps = 1e-11;
    let mut before = w.initial;
    let mut wrong = Vec::new();
    for e in &w.edges {
        let bad = |t: f64, level: f64| want(t).is_some_and(|v| v != level);
        if bad(e.angle - eps, before) || bad(e.angle + eps, e.level) {
            wrong.push(e.angle);
        }
        before = e.level;
    }
    wrong
}

/// Why the edges are no proper switching waveform, if they are not: they must be
/// strictly increasing within the window, each one a change of level, so that no
/// pulse has zero width.
fn malformed(w: &Waveform) -> Option<String> {
    let mut level = w.initial;
    let mut last = -1.0;
    for e in &w.edges {
        if !(e.angle > last && e.angle >= 0.0 && e.angle < w.window()) {
            return Some(format!("edge out of order at {}", e.angle));
        }
        if e.level == level {
            return Some(format!("edge at {} changes nothing", e.angle));
        }
        level = e.level;
        last = e.angle;
    }
    None
}

#[test]
fn every_leg_is_the_direct_comparison_of_reference_and_carrier() {
    // Wherever r - c is clearly nonzero the leg is +1 if the reference is above the
    // carrier and -1 below (the module's definition), and the bridge output is its legs
    // combined: leg a, 2 v_a, v_a - v_b or v_ab. Each edge must also sit at a crossing
    // (`misplaced_edges`), which rules out spurious pulses of rounding width. The sweep
    // takes in the reference reaching the carrier extreme exactly where the carrier
    // turns: m_a = 1 (and 1e-15 either side) with m_f = 400/3 (the reference's -1 on
    // the carrier minimum at theta = 3 pi) or 402 (the shifted legs' +-1 on carrier
    // corners), m_a = 2 with m_f = 21 (the reference passes +-1 at theta = pi/3,
    // 2 pi/3, ..., all carrier corners), and 2/sqrt(3), the third-harmonic linear
    // limit, whose +-1 fall on corners at m_f = 402 as well. Each such touch used to
    // leave a whole stretch of the leg at the wrong level, up to the next true crossing.
    let m_as = [
        0.5,
        1.0,
        1.0 - 1e-15,
        1.0 + 1e-15,
        1.2,
        2.0,
        2.0 / 3f64.sqrt(),
    ];
    let mut failures = Vec::new();
    for modulation in ALL {
        for m_a in m_as {
            for m_f in [3.0, 20.0, 21.0, 400.0 / 3.0, 402.0] {
                let p = pwm(modulation, m_a, m_f);
                let legs: Vec<Waveform> = (0..modulation.legs())
                    .map(|leg| leg_edges(&p, leg).unwrap())
                    .collect();
                // The level by direct comparison, None where |r - c| < tol.
                let compare = |leg: usize, t: f64, tol: f64| {
                    let (sign, d) = direct_leg(modulation, m_a, m_f, leg, t);
                    (d.abs() >= tol).then(|| sign * d.signum())
                };
                let direct = |leg: usize, t: f64| compare(leg, t, 1e-9);
                for (leg, w) in legs.iter().enumerate() {
                    let case = format!("{modulation:?}, m_a {m_a:e}, m_f {m_f}, leg {leg}");
                    failures.extend(malformed(w).map(|m| format!("{case}: {m}")));
                    let wrong = disagreements(w, |t| direct(leg, t));
                    if !wrong.is_empty() {
                        failures.push(format!("{case}: {} points from {}", wrong.len(), wrong[0]));
                    }
                    let moved = misplaced_edges(w, |t| compare(leg, t, 1e-12));
                    if !moved.is_empty() {
                        failures.push(format!(
                            "{case}: {} edges off, first {}",
                            moved.len(),
                            moved[0]
                        ));
                    }
                }
                let out = edges(&p).unwrap();
                let case = format!("{modulation:?}, m_a {m_a:e}, m_f {m_f}, output");
                failures.extend(malformed(&out).map(|m| format!("{case}: {m}")));
                let weights: &[f64] = match modulation {
                    Modulation::HalfBridge => &[1.0],
                    _ => &[1.0, -1.0],
                };
                let wrong = disagreements(&out, |t| {
                    weights
                        .iter()
                        .enumerate()
                        .map(|(leg, w)| direct(leg, t).map(|v| w * v))
                        .sum::<Option<f64>>()
                });
                if !wrong.is_empty() {
                    failures.push(format!("{case}: {} points from {}", wrong.len(), wrong[0]));
                }
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn reported_touching_cases_are_right_over_the_whole_window() {
    // The three reports, by the measure of the window at the wrong level: m_a = 1 with
    // m_f = 400/3 (half-bridge leg a) and 402 (three-phase leg b), wrong over about
    // 0.25 %, and m_a = 2 with m_f = 21 (half-bridge), over about a third. The measure
    // is counted on the fine grid of `disagreements`.
    for (modulation, m_a, m_f, leg) in [
        (Modulation::HalfBridge, 1.0, 400.0 / 3.0, 0),
        (Modulation::ThreePhase, 1.0, 402.0, 1),
        (Modulation::HalfBridge, 2.0, 21.0, 0),
    ] {
        let w = leg_edges(&pwm(modulation, m_a, m_f), leg).unwrap();
        let wrong = disagreements(&w, |t| {
            let (sign, d) = direct_leg(modulation, m_a, m_f, leg, t);
            (d.abs() >= 1e-9).then(|| sign * d.signum())
        });
        assert!(
            wrong.is_empty(),
            "{modulation:?}, m_a {m_a}, m_f {m_f}, leg {leg}: {} of {} points",
            wrong.len(),
            64 * w.edges.len().max(64)
        );
    }
}
