//! Bessel functions of the first kind of integer order, J_n(x), for the sideband
//! amplitudes of the PWM double Fourier series.
//!
//! Method: Miller's backward recurrence. The three-term recurrence
//! J_(k-1)(x) = (2k / x) J_k(x) - J_(k+1)(x) (M. Abramowitz, I. Stegun, Handbook of
//! Mathematical Functions, 9.1.27; from memory) is run downwards from an order well above
//! both n and |x|, starting from the arbitrary values 0 and 1. Downwards, J is the
//! dominant solution for k > |x| and neither solution dominates for k < |x|, so the
//! sequence settles onto a multiple of J_k; the multiple follows from the sum identity
//! 1 = J_0(x) + 2 sum_(k>=1) J_(2k)(x) (A&S 9.1.46; from memory). Forward recurrence
//! from J_0 and J_1 is not used because it loses every digit once k exceeds |x|.

/// Below this |x| the power series is used: the downward recurrence multiplies by
/// 2k / x, which would overflow for a vanishing argument.
const SERIES_BELOW: f64 = 1e-6;

/// Rescaling threshold of the unnormalised backward recurrence, far from overflow.
const RESCALE_ABOVE: f64 = 1e250;

/// Bessel function of the first kind J_n(x) of integer order n.
///
/// Accurate to about 1e-13 absolute for |x| <= 60 and |n| <= 200 (the tests check
/// 1e-12 against Bessel's integral). Negative orders use J_(-n) = (-1)^n J_n, negative
/// arguments J_n(-x) = (-1)^n J_n(x) (A&S 9.1.5; from memory).
pub fn bessel_j(n: i32, x: f64) -> f64 {
    let order = n.unsigned_abs() as usize;
    let j = orders(order, x)[order];
    if n < 0 && order % 2 == 1 {
        -j
    } else {
        j
    }
}

/// J_0(x) ..= J_(n_max)(x), all from one backward recurrence: the PWM series needs
/// every sideband order of a carrier group at the same argument.
pub(crate) fn orders(n_max: usize, x: f64) -> Vec<f64> {
    let ax = x.abs();
    let mut j = if ax < SERIES_BELOW {
        series(n_max, ax)
    } else {
        miller(n_max, ax)
    };
    if x < 0.0 {
        // J_k(-x) = (-1)^k J_k(x).
        for v in j.iter_mut().skip(1).step_by(2) {
            *v = -*v;
        }
    }
    j
}

/// Power series J_k(x) = sum_i (-1)^i (x/2)^(2i+k) / (i! (i+k)!) (A&S 9.1.10; from
/// memory), three terms: for x < 1e-6 the next term is below 1e-36 of the first.
fn series(n_max: usize, x: f64) -> Vec<f64> {
    let h = x / 2.0;
    let mut lead = 1.0; // (x/2)^k / k!
    (0..=n_max)
        .map(|k| {
            if k > 0 {
                lead *= h / k as f64;
            }
            let k = k as f64;
            let q = h * h;
            lead * (1.0 - q / (k + 1.0) + q * q / (2.0 * (k + 1.0) * (k + 2.0)))
        })
        .collect()
}

/// Miller's algorithm for x > 0.
fn miller(n_max: usize, x: f64) -> Vec<f64> {
    // Start order: the error at low orders shrinks like (J_N / Y_N)(x), which for N
    // beyond x falls as exp(-(4/3) t^(3/2)) with t = (N - x) / (x/2)^(1/3) in the
    // transition region (Airy asymptotics of J and Y). A margin of 30 + 12 (x/2)^(1/3)
    // orders makes t > 12 everywhere: far below 1e-17. Checked against Bessel's
    // integral in the tests.
    let top = (n_max as f64).max(x) + 30.0 + 12.0 * (x / 2.0).cbrt();
    let mut k = top.ceil() as usize;
    k += k % 2; // even, so that the sum identity pairs start cleanly
    let mut j = vec![0.0; n_max + 1];
    let (mut above, mut here) = (0.0_f64, 1e-30_f64); // J_(k+1), J_k, unnormalised
    let mut sum = 0.0; // J_0 + 2 sum J_2i, unnormalised
    loop {
        if k <= n_max {
            j[k] = here;
        }
        if k.is_multiple_of(2) {
            sum += if k == 0 { here } else { 2.0 * here };
        }
        if k == 0 {
            break;
        }
        let below = (2.0 * k as f64 / x) * here - above;
        above = here;
        here = below;
        k -= 1;
        if here.abs() > RESCALE_ABOVE {
            // Keep the unnormalised values finite; the ratio is all that matters.
            let s = 1.0 / RESCALE_ABOVE;
            here *= s;
            above *= s;
            sum *= s;
            for v in j.iter_mut().skip(k + 1) {
                *v *= s;
            }
        }
    }
    for v in &mut j {
        *v /= sum;
    }
    j
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// Bessel's integral J_n(x) = (1/pi) int_0^pi cos(n t - x sin t) dt (A&S 9.1.21;
    /// from memory), by composite Simpson. The integrand is a smooth, periodic and even
    /// function of t, so the rule converges geometrically once the step resolves its
    /// highest frequency (about |n| + |x|): 8192 intervals leave only rounding.
    fn bessel_integral(n: i32, x: f64) -> f64 {
        let intervals = 8192;
        let h = PI / intervals as f64;
        let f = |t: f64| (n as f64 * t - x * t.sin()).cos();
        let mut s = f(0.0) + f(PI);
        for i in 1..intervals {
            let w = if i % 2 == 1 { 4.0 } else { 2.0 };
            s += w * f(i as f64 * h);
        }
        s * h / 3.0 / PI
    }

    #[test]
    fn matches_bessels_integral() {
        let xs = [
            -37.5, -7.3, -0.5, 1e-9, 1e-3, 0.1, 1.0, 2.4048, 5.0, 10.0, 25.0, 40.0, 59.9, 60.0,
        ];
        let ns = [
            0, 1, 2, 3, 5, 10, 29, 30, 31, 59, 60, 61, 100, 150, 200, -1, -2, -7, -200,
        ];
        for &x in &xs {
            for &n in &ns {
                let (got, want) = (bessel_j(n, x), bessel_integral(n, x));
                assert!(
                    (got - want).abs() < 1e-12,
                    "J_{n}({x}) = {got:e}, Bessel's integral gives {want:e}"
                );
            }
        }
    }

    #[test]
    fn matches_tabulated_values() {
        // A&S Table 9.1, ten decimals (from memory; each also agrees with the integral
        // above to 1e-12).
        let table = [
            (0, 1.0, 0.7651976866),
            (1, 1.0, 0.4400505857),
            (2, 1.0, 0.1149034849),
            (0, 5.0, -0.1775967713),
            (1, 5.0, -0.3275791376),
            (0, 10.0, -0.2459357645),
            (1, 10.0, 0.0434727462),
        ];
        for (n, x, want) in table {
            let got = bessel_j(n, x);
            assert!(
                (got - want).abs() < 6e-11,
                "J_{n}({x}) = {got}, table {want}"
            );
        }
        // J_n(0) is 1 for n = 0 and 0 otherwise (the series, A&S 9.1.10).
        assert_eq!(bessel_j(0, 0.0), 1.0);
        assert_eq!(bessel_j(3, 0.0), 0.0);
    }

    #[test]
    fn all_orders_at_once_agree_with_single_orders() {
        let x = 13.7;
        let all = orders(40, x);
        for (n, v) in all.iter().enumerate() {
            assert!((v - bessel_j(n as i32, x)).abs() < 1e-15, "J_{n}({x})");
        }
        // The sum identity 1 = J_0 + 2 sum J_2k holds by construction; the addition
        // theorem sum_k J_k^2 over all k = 1 (A&S 9.1.76; from memory) does not and checks
        // the normalisation independently.
        let all = orders(80, x);
        let s: f64 = all[0] * all[0] + 2.0 * all[1..].iter().map(|v| v * v).sum::<f64>();
        assert!((s - 1.0).abs() < 1e-14, "{s}");
    }
}
