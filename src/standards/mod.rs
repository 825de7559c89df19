//! Published limit tables as cited data, in one place.
//!
//! Every limit here is returned together with its [`Citation`]: the document, the
//! table (and clause) it comes from, and a note on how the value was obtained. The
//! values of this folder were entered from memory of the published tables, not checked
//! against a copy of them, and each citation says so; whoever checks an entry against
//! the standard should change its note to say that it was checked, and by whom.
//!
//! Limits are fractions (0.04, not 4 %), like every ratio in the engine
//! (DEVELOPERS.md, units at the edges). Voltages are in volts.
//!
//! - [`ieee1547`]: IEEE Std 1547-2018, clause 7.3, current distortion of a DER at its
//!   reference point of applicability: [`ieee1547_current_limit`] per harmonic order,
//!   [`ieee1547_trd_limit`] for the total rated-current distortion, [`ieee1547_mask`]
//!   for plotting the limit under a spectrum.
//! - [`ieee519`]: IEEE Std 519-2014, Table 1, voltage distortion at the point of common
//!   coupling by bus voltage: [`ieee519_voltage_limits`].
//! - [`efficiency`]: the California Energy Commission's and the European (EN 50530)
//!   load-point weightings of efficiency.
//! - [`nec`]: NFPA 70, 240.6(A) standard overcurrent device ratings and the 125 %
//!   continuous-current factor.

pub mod efficiency;
pub mod ieee1547;
pub mod ieee519;
pub mod nec;

pub use ieee1547::{ieee1547_current_limit, ieee1547_mask, ieee1547_trd_limit, HarmonicLimit};
pub use ieee519::{ieee519_voltage_limits, VoltageLimits};

use crate::sheet::Source;
use std::fmt;

/// Where a published value comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Citation {
    /// The document with its edition, e.g. "IEEE Std 1547-2018".
    pub document: &'static str,
    /// The table and clause within it, e.g. "Table 26 (clause 7.3)".
    pub table: &'static str,
    /// How the value was obtained, e.g. "from memory".
    pub note: &'static str,
}

impl Citation {
    /// The citation as the [`Source`] of a sheet quantity or check: the document, and
    /// the table with the note as its clause.
    pub fn source(&self) -> Source {
        Source::reference(self.document, &self.clause())
    }

    /// The table followed by the note in parentheses (the note left out when empty).
    fn clause(&self) -> String {
        if self.note.is_empty() {
            self.table.to_string()
        } else {
            format!("{} ({})", self.table, self.note)
        }
    }
}

/// "IEEE Std 1547-2018, Table 26 (clause 7.3) (from memory)".
impl fmt::Display for Citation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}, {}", self.document, self.clause())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_citation_becomes_a_reference_source_with_its_note() {
        // The form of `Source::describe` for a reference: "document, clause".
        let (_, c) = ieee1547_trd_limit();
        assert_eq!(
            c.source().describe(),
            "IEEE Std 1547-2018, Table 26 (clause 7.3) (from memory)"
        );
        assert_eq!(c.to_string(), c.source().describe());
        let bare = Citation { note: "", ..*c };
        assert_eq!(
            bare.to_string(),
            "IEEE Std 1547-2018, Table 26 (clause 7.3)"
        );
    }
}
