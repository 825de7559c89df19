//! IEEE Std 519-2014, Table 1: voltage distortion limits at the point of common
//! coupling (PCC), by the nominal bus voltage there (entered from memory, not checked
//! against the standard):
//!
//! | Bus voltage V at the PCC | Individual harmonic | Total harmonic distortion |
//! |---|---|---|
//! | V <= 1.0 kV | 5.0 % | 8.0 % |
//! | 1 kV < V <= 69 kV | 3.0 % | 5.0 % |
//! | 69 kV < V <= 161 kV | 1.5 % | 2.5 % |
//! | 161 kV < V | 1.0 % | 1.5 % |
//!
//! The percentages are of the fundamental voltage. The bus voltage is the nominal RMS
//! system voltage, line-to-line in a three-phase system (IEEE Std 519-2014, clause 5.1;
//! from memory). The table's footnote on high-voltage systems with HVDC terminals,
//! which may reach 2.0 % THD, is not represented.

use super::Citation;

/// IEEE Std 519-2014, Table 1.
pub static TABLE_1: Citation = Citation {
    document: "IEEE Std 519-2014",
    table: "Table 1 (clause 5.1)",
    note: "from memory",
};

/// The voltage distortion limits of one row of Table 1.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct VoltageLimits {
    /// Largest individual harmonic voltage as a fraction of the fundamental.
    pub individual: f64,
    /// Largest total harmonic distortion as a fraction of the fundamental.
    pub thd: f64,
    /// The row's bus voltage range as printed, e.g. "1 kV < V <= 69 kV".
    pub bus_range: &'static str,
    pub citation: &'static Citation,
}

/// Table 1 (from memory): (upper bus voltage of the row in volts, inclusive; individual;
/// THD; range). The last row has no upper bound.
const ROWS: [(f64, f64, f64, &str); 4] = [
    (1.0e3, 0.050, 0.080, "V <= 1.0 kV"),
    (69.0e3, 0.030, 0.050, "1 kV < V <= 69 kV"),
    (161.0e3, 0.015, 0.025, "69 kV < V <= 161 kV"),
    (f64::INFINITY, 0.010, 0.015, "161 kV < V"),
];

/// The limits for a bus of nominal RMS voltage `v_rms` (volts, line-to-line for three
/// phases) at the PCC, IEEE Std 519-2014, Table 1 (from memory). Each row includes its
/// upper voltage: 1000 V is the first row. `None` unless `v_rms` is finite and positive.
pub fn ieee519_voltage_limits(v_rms: f64) -> Option<VoltageLimits> {
    if !(v_rms.is_finite() && v_rms > 0.0) {
        return None;
    }
    ROWS.iter()
        .find(|row| v_rms <= row.0)
        .map(|&(_, individual, thd, bus_range)| VoltageLimits {
            individual,
            thd,
            bus_range,
            citation: &TABLE_1,
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The printed percent as the fraction returned, to rounding of the division.
    fn close(got: f64, percent: f64) -> bool {
        (got - percent / 100.0).abs() < 1e-12
    }

    fn limits(v: f64) -> VoltageLimits {
        ieee519_voltage_limits(v).unwrap_or_else(|| panic!("{v} V has no row"))
    }

    #[test]
    fn every_row_of_table_1() {
        // IEEE Std 519-2014, Table 1 as printed in percent (from memory): a bus voltage
        // inside each row, the individual and the THD limit.
        let rows = [
            (400.0, 5.0, 8.0, "V <= 1.0 kV"),
            (13.8e3, 3.0, 5.0, "1 kV < V <= 69 kV"),
            (115e3, 1.5, 2.5, "69 kV < V <= 161 kV"),
            (345e3, 1.0, 1.5, "161 kV < V"),
        ];
        for (v, individual, thd, range) in rows {
            let l = limits(v);
            assert!(close(l.individual, individual), "Table 1, {v} V: {l:?}");
            assert!(close(l.thd, thd), "Table 1, {v} V: {l:?}");
            assert_eq!(l.bus_range, range, "Table 1, {v} V");
            assert_eq!(l.citation, &TABLE_1);
        }
    }

    #[test]
    fn row_boundaries_of_table_1() {
        // Table 1: V <= 1.0 kV is the first row, and just above it the second; likewise
        // 69 kV and 161 kV belong to the row they close.
        let cases = [
            (1.0e3, 5.0, 8.0),
            (1.0e3 * (1.0 + 1e-12), 3.0, 5.0),
            (1000.001, 3.0, 5.0),
            (69.0e3, 3.0, 5.0),
            (69.0e3 + 1.0, 1.5, 2.5),
            (161.0e3, 1.5, 2.5),
            (161.0e3 + 1.0, 1.0, 1.5),
            (1e-3, 5.0, 8.0),
            (1e9, 1.0, 1.5),
        ];
        for (v, individual, thd) in cases {
            let l = limits(v);
            assert!(
                close(l.individual, individual) && close(l.thd, thd),
                "Table 1, {v} V: {l:?}"
            );
        }
        for v in [0.0, -230.0, f64::NAN, f64::INFINITY] {
            assert_eq!(ieee519_voltage_limits(v), None, "{v} V");
        }
    }
}
