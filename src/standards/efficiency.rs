//! Weighted efficiency: the published load-point weightings that turn an efficiency
//! curve into one number (entered from memory, not checked against the documents):
//!
//! | load (% of rated) | 5 | 10 | 20 | 30 | 50 | 75 | 100 |
//! |---|---|---|---|---|---|---|---|
//! | California Energy Commission | | 0.04 | 0.05 | 0.12 | 0.21 | 0.53 | 0.05 |
//! | European (EN 50530) | 0.03 | 0.06 | 0.13 | 0.10 | 0.48 | | 0.20 |
//!
//! Each row sums to 1. The Californian weighting reflects sunnier sites, where an
//! inverter spends more of its energy near 75 % load.

use super::Citation;

/// The California Energy Commission's weighting.
pub static CEC: Citation = Citation {
    document:
        "California Energy Commission, performance test protocol for grid-connected PV inverters",
    table: "weighted (CEC) efficiency",
    note: "from memory",
};

/// The European weighting.
pub static EUROPEAN: Citation = Citation {
    document: "EN 50530:2010",
    table: "European efficiency weighting",
    note: "from memory",
};

/// A weighting: (load fraction, weight) pairs, and its citation.
pub struct Weighting {
    pub name: &'static str,
    pub points: &'static [(f64, f64)],
    pub citation: &'static Citation,
}

impl Weighting {
    /// The weighted efficiency of a curve given as efficiency by load fraction.
    pub fn weighted(&self, eta: impl Fn(f64) -> f64) -> f64 {
        self.points.iter().map(|(k, w)| w * eta(*k)).sum()
    }
}

pub static WEIGHTINGS: [Weighting; 2] = [
    Weighting {
        name: "cec",
        points: &[
            (0.10, 0.04),
            (0.20, 0.05),
            (0.30, 0.12),
            (0.50, 0.21),
            (0.75, 0.53),
            (1.00, 0.05),
        ],
        citation: &CEC,
    },
    Weighting {
        name: "eu",
        points: &[
            (0.05, 0.03),
            (0.10, 0.06),
            (0.20, 0.13),
            (0.30, 0.10),
            (0.50, 0.48),
            (1.00, 0.20),
        ],
        citation: &EUROPEAN,
    },
];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_weighting_sums_to_one() {
        // A weighted efficiency of a flat curve is that efficiency (definition).
        for w in &WEIGHTINGS {
            let sum: f64 = w.points.iter().map(|p| p.1).sum();
            assert!((sum - 1.0).abs() < 1e-12, "{}", w.name);
        }
    }

    #[test]
    fn a_hand_computed_curve() {
        // Worked by hand (common practice): an inverter at 90.0 / 94.0 / 96.0 / 97.0 /
        // 97.5 / 97.6 / 97.4 % at 5 / 10 / 20 / 30 / 50 / 75 / 100 % load.
        // CEC: .04(.94) + .05(.96) + .12(.97) + .21(.975) + .53(.976) + .05(.974) = .97273
        // EU:  .03(.90) + .06(.94) + .13(.96) + .10(.97) + .48(.975) + .20(.974) = .96800
        let curve = |k: f64| match (k * 100.0).round() as u32 {
            5 => 0.90,
            10 => 0.94,
            20 => 0.96,
            30 => 0.97,
            50 => 0.975,
            75 => 0.976,
            100 => 0.974,
            _ => f64::NAN,
        };
        assert!((WEIGHTINGS[0].weighted(curve) - 0.97273).abs() < 1e-12);
        assert!((WEIGHTINGS[1].weighted(curve) - 0.968).abs() < 1e-12);
    }

    #[test]
    fn rows_as_published() {
        // CEC: 4/5/12/21/53/5 % at 10/20/30/50/75/100 % load; European: 3/6/13/10/48/20 %
        // at 5/10/20/30/50/100 % (EN 50530, from memory).
        assert_eq!(WEIGHTINGS[0].points[4], (0.75, 0.53));
        assert_eq!(WEIGHTINGS[1].points[4], (0.50, 0.48));
        assert_eq!(WEIGHTINGS[1].points[0], (0.05, 0.03));
    }
}
