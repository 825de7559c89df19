//! Times one operating point's switch-node spectrum: the analytic double Fourier series
//! up to 5.5 m_f (natural and symmetric regular sampling), and the numerical spectrum
//! from the exact crossings with FFTs of 2^16 to 2^20 points per period; prints
//! medians beside the targets. Run with
//! `cargo bench --bench spectrum`; figures, not pass/fail.

use bridgebook::calc::ripple::ripple_envelope;
use bridgebook::calc::spectrum::{lines, numerical_lines, regular_lines, Modulation, Pwm};
use std::time::{Duration, Instant};

const ANALYTIC_TARGET: Duration = Duration::from_millis(1);
const NUMERICAL_TARGET: Duration = Duration::from_millis(20);

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn time(runs: usize, mut f: impl FnMut()) -> Duration {
    median(
        (0..runs)
            .map(|_| {
                let t = Instant::now();
                f();
                t.elapsed()
            })
            .collect(),
    )
}

fn main() {
    let cases = [
        ("half-bridge, m_f 400", Modulation::HalfBridge, 0.92, 400.0),
        (
            "full-bridge unipolar, m_f 320",
            Modulation::FullBridgeUnipolar,
            0.87,
            320.0,
        ),
        ("three-phase, m_f 201", Modulation::ThreePhase, 0.93, 201.0),
        (
            "three-phase third-harmonic, m_f 201",
            Modulation::ThreePhaseThirdHarmonic,
            1.05,
            201.0,
        ),
    ];
    println!(
        "{:<38} {:>10} {:>7} {:>10} {:>12} {:>12} {:>12} {:>7} {:>10}",
        "operating point",
        "analytic",
        "ratio",
        "regular",
        "FFT 2^16",
        "FFT 2^18",
        "FFT 2^20",
        "ratio",
        "ripple"
    );
    for (name, modulation, m_a, m_f) in cases {
        let pwm = Pwm {
            modulation,
            m_a,
            m_f,
        };
        let top = pwm.default_max_order();
        let analytic = if modulation == Modulation::ThreePhaseThirdHarmonic {
            None
        } else {
            Some(time(201, || {
                std::hint::black_box(lines(&pwm, top).expect("linear"));
            }))
        };
        let regular = if modulation == Modulation::ThreePhaseThirdHarmonic {
            None
        } else {
            Some(time(201, || {
                std::hint::black_box(regular_lines(&pwm, top).expect("linear"));
            }))
        };
        let fft: Vec<Duration> = [16, 18, 20]
            .iter()
            .map(|&b| {
                time(if b == 20 { 5 } else { 21 }, || {
                    std::hint::black_box(numerical_lines(&pwm, top, 1 << b).expect("periodic"));
                })
            })
            .collect();
        let ripple = time(51, || {
            std::hint::black_box(ripple_envelope(&pwm).expect("periodic"));
        });
        println!(
            "{:<38} {:>7} ms {:>7} {:>7} ms {:>9.2} ms {:>9.2} ms {:>9.2} ms {:>7.2} {:>7.2} ms",
            name,
            analytic.map_or("-".into(), |a| format!("{:.3}", ms(a))),
            analytic.map_or("-".into(), |a| format!(
                "{:.2}",
                ms(a) / ms(ANALYTIC_TARGET)
            )),
            regular.map_or("-".into(), |a| format!("{:.3}", ms(a))),
            ms(fft[0]),
            ms(fft[1]),
            ms(fft[2]),
            ms(fft[0]) / ms(NUMERICAL_TARGET),
            ms(ripple),
        );
    }
    println!(
        "targets: analytic {} ms, numerical {} ms (ratio of the 2^16 FFT, the engine's default)",
        ms(ANALYTIC_TARGET),
        ms(NUMERICAL_TARGET)
    );
}
