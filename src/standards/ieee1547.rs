//! IEEE Std 1547-2018, clause 7.3, limitation of current distortion: the harmonic
//! current a distributed energy resource (DER) may inject at its reference point of
//! applicability, in percent of its rated current (entered from memory of Tables 26
//! and 27, not checked against the standard).
//!
//! - Table 26, odd harmonics: h < 11: 4.0 %; 11 <= h < 17: 2.0 %; 17 <= h < 23: 1.5 %;
//!   23 <= h < 35: 0.6 %; 35 <= h < 50: 0.3 %; total rated-current distortion (TRD):
//!   5.0 %.
//! - Table 27, even harmonics: h = 2: 1.0 %; h = 4: 2.0 %; h = 6: 3.0 %;
//!   8 <= h < 50: the limit of the range of Table 26 that h falls in.
//!
//! The tables stop below order 50: for h >= 50 there is no individual limit here, and
//! [`ieee1547_current_limit`] returns `None`. Orders 0 (DC) and 1 (the fundamental) are
//! no harmonics and get `None` too.

use super::Citation;

/// IEEE Std 1547-2018, Table 26: odd harmonics, and the TRD.
pub static TABLE_26: Citation = Citation {
    document: "IEEE Std 1547-2018",
    table: "Table 26 (clause 7.3)",
    note: "from memory",
};

/// IEEE Std 1547-2018, Table 27: even harmonics.
pub static TABLE_27: Citation = Citation {
    document: "IEEE Std 1547-2018",
    table: "Table 27 (clause 7.3)",
    note: "from memory",
};

/// The individual current distortion limit of one harmonic order.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HarmonicLimit {
    /// Harmonic order h, 2 <= h < 50.
    pub order: u32,
    /// Largest harmonic current as a fraction of the DER's rated current (0.04 for
    /// 4.0 %).
    pub limit: f64,
    /// The row of the table that sets the limit, as printed there, e.g. "11 <= h < 17";
    /// for even orders from 8 on also the Table 26 range whose value applies.
    pub range: &'static str,
    /// Table 26 for odd orders, Table 27 for even ones.
    pub citation: &'static Citation,
}

/// One row of Table 26: orders below `below` (and from the previous row's `below` on).
struct OddRow {
    below: u32,
    /// Fraction of rated current: the table's percent divided by 100.
    limit: f64,
    range: &'static str,
    /// The Table 27 row for even orders from 8 on, which takes this row's value.
    even_range: &'static str,
}

/// IEEE Std 1547-2018, Table 26 (from memory), in order.
const ODD_ROWS: [OddRow; 5] = [
    OddRow {
        below: 11,
        limit: 0.040,
        range: "h < 11",
        even_range: "8 <= h < 50, as Table 26 h < 11",
    },
    OddRow {
        below: 17,
        limit: 0.020,
        range: "11 <= h < 17",
        even_range: "8 <= h < 50, as Table 26 11 <= h < 17",
    },
    OddRow {
        below: 23,
        limit: 0.015,
        range: "17 <= h < 23",
        even_range: "8 <= h < 50, as Table 26 17 <= h < 23",
    },
    OddRow {
        below: 35,
        limit: 0.006,
        range: "23 <= h < 35",
        even_range: "8 <= h < 50, as Table 26 23 <= h < 35",
    },
    OddRow {
        below: 50,
        limit: 0.003,
        range: "35 <= h < 50",
        even_range: "8 <= h < 50, as Table 26 35 <= h < 50",
    },
];

/// IEEE Std 1547-2018, Table 27 (from memory): the even orders with a value of their
/// own; the others, 8 <= h < 50, take Table 26's.
const EVEN_ROWS: [(u32, f64, &str); 3] = [
    (2, 0.010, "h = 2"),
    (4, 0.020, "h = 4"),
    (6, 0.030, "h = 6"),
];

/// Total rated-current distortion limit, IEEE Std 1547-2018, Table 26 (from memory):
/// 5.0 % of rated current.
const TRD: f64 = 0.05;

/// The harmonic current limit of order `order` as a fraction of the DER's rated current,
/// IEEE Std 1547-2018, clause 7.3, Tables 26 (odd) and 27 (even); from memory.
///
/// `None` for orders 0 and 1, which are no harmonics, and for orders 50 and above, which
/// the tables do not cover.
pub fn ieee1547_current_limit(order: u32) -> Option<HarmonicLimit> {
    if order < 2 {
        return None;
    }
    let row = ODD_ROWS.iter().find(|r| order < r.below)?;
    if order % 2 == 1 {
        return Some(HarmonicLimit {
            order,
            limit: row.limit,
            range: row.range,
            citation: &TABLE_26,
        });
    }
    let (limit, range) = EVEN_ROWS
        .iter()
        .find(|(h, ..)| *h == order)
        .map_or((row.limit, row.even_range), |&(_, l, r)| (l, r));
    Some(HarmonicLimit {
        order,
        limit,
        range,
        citation: &TABLE_27,
    })
}

/// The total rated-current distortion (TRD) limit as a fraction of rated current, with
/// its citation: 0.05, IEEE Std 1547-2018, Table 26 (from memory). TRD is the RMS of
/// the harmonic currents (including interharmonics) over the rated current.
pub fn ieee1547_trd_limit() -> (f64, &'static Citation) {
    (TRD, &TABLE_26)
}

/// The individual limit of every order 2..=min(`max_order`, 49), in order, as
/// (order, fraction of rated current): the mask to draw under a current spectrum.
/// Empty for `max_order` < 2. The citations are those of [`ieee1547_current_limit`].
pub fn ieee1547_mask(max_order: u32) -> Vec<(u32, f64)> {
    (2..=max_order.min(49))
        .filter_map(|h| ieee1547_current_limit(h).map(|l| (h, l.limit)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// IEEE Std 1547-2018, Table 26 as printed, in percent of rated current (from
    /// memory): (lowest order, order below which the row ends, percent).
    const TABLE_26_PERCENT: [(u32, u32, f64); 5] = [
        (2, 11, 4.0),
        (11, 17, 2.0),
        (17, 23, 1.5),
        (23, 35, 0.6),
        (35, 50, 0.3),
    ];

    /// IEEE Std 1547-2018, Table 27 as printed (from memory): h = 2, 4, 6.
    const TABLE_27_PERCENT: [(u32, f64); 3] = [(2, 1.0), (4, 2.0), (6, 3.0)];

    /// The printed percent as the fraction the module returns; the tables have one
    /// decimal, so 1e-12 leaves only rounding of the division.
    fn close(got: f64, percent: f64) -> bool {
        (got - percent / 100.0).abs() < 1e-12
    }

    fn limit(h: u32) -> HarmonicLimit {
        ieee1547_current_limit(h).unwrap_or_else(|| panic!("order {h} has no limit"))
    }

    #[test]
    fn every_odd_order_has_its_table_26_row() {
        for (lo, below, percent) in TABLE_26_PERCENT {
            for h in (lo..below).filter(|h| h % 2 == 1) {
                let l = limit(h);
                assert!(close(l.limit, percent), "Table 26, h = {h}: {}", l.limit);
                assert_eq!(l.citation, &TABLE_26, "h = {h}");
                assert_eq!(l.order, h);
            }
        }
        assert_eq!(limit(13).range, "11 <= h < 17", "Table 26 row text");
        assert_eq!(limit(3).range, "h < 11", "Table 26 row text");
    }

    #[test]
    fn even_orders_follow_table_27() {
        for (h, percent) in TABLE_27_PERCENT {
            let l = limit(h);
            assert!(close(l.limit, percent), "Table 27, h = {h}: {}", l.limit);
            assert_eq!(l.citation, &TABLE_27, "h = {h}");
        }
        // Table 27, 8 <= h < 50: the associated range of Table 26.
        for (lo, below, percent) in TABLE_26_PERCENT {
            for h in (lo.max(8)..below).filter(|h| h % 2 == 0) {
                let l = limit(h);
                assert!(
                    close(l.limit, percent),
                    "Table 27 via 26, h = {h}: {}",
                    l.limit
                );
                assert_eq!(l.citation, &TABLE_27, "h = {h}");
            }
        }
        assert_eq!(limit(8).range, "8 <= h < 50, as Table 26 h < 11");
        assert_eq!(limit(2).range, "h = 2");
    }

    #[test]
    fn range_boundaries_of_table_26() {
        // Each range of Table 26 includes its lower bound and excludes its upper one.
        let cases = [
            (10, 4.0),
            (11, 2.0),
            (16, 2.0),
            (17, 1.5),
            (22, 1.5),
            (23, 0.6),
            (34, 0.6),
            (35, 0.3),
            (49, 0.3),
        ];
        for (h, percent) in cases {
            assert!(close(limit(h).limit, percent), "Table 26/27, h = {h}");
        }
        // Even 2, 4, 6 have values of their own (Table 27); 8 falls back to h < 11.
        for (h, percent) in [(2, 1.0), (4, 2.0), (6, 3.0), (8, 4.0)] {
            assert!(close(limit(h).limit, percent), "Table 27, h = {h}");
        }
        // The tables end below 50; DC and the fundamental are no harmonics.
        for h in [0, 1, 50, 51, 100, u32::MAX] {
            assert_eq!(ieee1547_current_limit(h), None, "h = {h}");
        }
    }

    #[test]
    fn trd_limit_is_table_26s() {
        let (trd, citation) = ieee1547_trd_limit();
        assert!(close(trd, 5.0), "Table 26, TRD: {trd}");
        assert_eq!(citation, &TABLE_26);
    }

    #[test]
    fn mask_lists_each_order_from_2_to_49() {
        let mask = ieee1547_mask(100);
        assert_eq!(
            mask.len(),
            48,
            "orders 2..=49 (Tables 26 and 27 end below 50)"
        );
        assert_eq!(mask.first(), Some(&(2, 0.010)), "Table 27, h = 2");
        assert_eq!(mask.last().map(|m| m.0), Some(49));
        for &(h, l) in &mask {
            assert_eq!(Some(l), ieee1547_current_limit(h).map(|l| l.limit));
        }
        assert_eq!(ieee1547_mask(12).len(), 11);
        assert!(ieee1547_mask(1).is_empty() && ieee1547_mask(0).is_empty());
        assert!(close(ieee1547_mask(3)[1].1, 4.0), "Table 26, h = 3");
    }
}
