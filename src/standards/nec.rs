//! NFPA 70, National Electrical Code: the standard ampere ratings of fuses and
//! inverse-time circuit breakers (240.6(A)) and the 125 % factor on continuous current
//! for the overcurrent device of an inverter's output circuit (entered from memory, not
//! checked against the code; local codes and the utility's rules govern).

use super::Citation;

/// Standard ampere ratings.
pub static STANDARD_RATINGS: Citation = Citation {
    document: "NFPA 70 (National Electrical Code)",
    table: "240.6(A), standard ampere ratings",
    note: "from memory",
};

/// The continuous-current factor.
pub static CONTINUOUS_FACTOR: Citation = Citation {
    document: "NFPA 70 (National Electrical Code)",
    table: "690.9(B) and 705.30(B): overcurrent devices at 125 % of the continuous output current",
    note: "from memory",
};

/// The factor on the continuous current.
pub const CONTINUOUS: f64 = 1.25;

/// 240.6(A) standard ratings of fuses and inverse-time breakers, A.
pub const RATINGS: [f64; 37] = [
    15.0, 20.0, 25.0, 30.0, 35.0, 40.0, 45.0, 50.0, 60.0, 70.0, 80.0, 90.0, 100.0, 110.0, 125.0,
    150.0, 175.0, 200.0, 225.0, 250.0, 300.0, 350.0, 400.0, 450.0, 500.0, 600.0, 700.0, 800.0,
    1000.0, 1200.0, 1600.0, 2000.0, 2500.0, 3000.0, 4000.0, 5000.0, 6000.0,
];

/// The smallest standard rating at or above `amperes`; NaN above the table.
pub fn next_standard_rating(amperes: f64) -> f64 {
    RATINGS
        .iter()
        .copied()
        .find(|r| *r >= amperes - 1e-9)
        .unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounds_up_to_the_standard_ratings() {
        // 240.6(A) (from memory): 15, 20, 25, 30, 35, 40, 45, 50, 60, ... 6000 A.
        assert_eq!(next_standard_rating(27.1), 30.0);
        assert_eq!(next_standard_rating(30.0), 30.0);
        assert_eq!(next_standard_rating(52.0), 60.0);
        assert_eq!(next_standard_rating(10.0), 15.0);
        assert_eq!(next_standard_rating(126.0), 150.0);
        assert!(next_standard_rating(7000.0).is_nan());
        // 125 % of a 21.65 A continuous output (15 kW at 400 V three-phase) is 27.06 A,
        // which takes a 30 A device (common practice worked example).
        let i = 15e3 / (3f64.sqrt() * 400.0);
        assert_eq!(next_standard_rating(CONTINUOUS * i), 30.0);
    }
}
