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
    // balance within 1e-5.
    let spp = 1 << 18;
    for modulation in BRIDGES {
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
