//! The calculation engine: one file per engineering subject, each appending traced
//! quantities and checks to a [`Sheet`]. [`evaluate`] runs them in dependency order;
//! it is deterministic (no clocks, no hash-map order) and never panics on a validated
//! design.

pub mod bridge_leg;
pub mod dc_link;
pub mod dc_source;
pub mod efficiency;
pub mod filter;
pub mod filter_stress;
pub mod grid_filter;
pub mod lcl_design;
pub mod leg_current;
pub mod modulation;
pub mod operating_point;
pub mod output_quality;
pub mod ripple;
pub mod semiconductor;
pub mod spectrum;
pub mod switch_stress;
pub mod switching;
pub mod thermal;

use crate::record::{Design, Given, Limit};
use crate::sheet::{Sheet, Source};
use crate::units::Unit;

/// Evaluates a validated design.
pub fn evaluate(design: &Design) -> Sheet {
    let mut sheet = Sheet::new();
    operating_point::evaluate(design, &mut sheet);
    if design.output.grid() {
        grid_filter::evaluate(design, &mut sheet);
    } else {
        filter::evaluate(design, &mut sheet);
    }
    modulation::evaluate(design, &mut sheet);
    let spectra = switching::evaluate(design, &mut sheet);
    output_quality::evaluate(design, &mut sheet, &spectra);
    filter_stress::evaluate(design, &mut sheet, &spectra);
    semiconductor::evaluate(design, &mut sheet);
    thermal::evaluate(design, &mut sheet);
    dc_link::evaluate(design, &mut sheet);
    efficiency::evaluate(design, &mut sheet);
    sheet
}

/// Records a value written in the record as an input quantity.
pub(crate) fn given(
    s: &mut Sheet,
    id: &str,
    name: &str,
    symbol: &str,
    g: &Given,
    unit: Unit,
) -> f64 {
    s.input(id, name, symbol, g.value, unit, input_source(g))
}

fn input_source(g: &Given) -> Source {
    Source::Input {
        key: g.key.clone(),
        line: g.line,
    }
}

/// The source of a limit written in the record.
pub(crate) fn limit_source_given(g: &Given) -> Source {
    input_source(g)
}

/// Records a design limit: from the record where written, else its common-practice default.
pub(crate) fn limit_quantity(
    s: &mut Sheet,
    id: &str,
    name: &str,
    symbol: &str,
    l: &Limit,
    unit: Unit,
) -> f64 {
    s.input(id, name, symbol, l.value, unit, limit_source(l))
}

/// Where a limit comes from, for the check that uses it.
pub(crate) fn limit_source(l: &Limit) -> Source {
    match &l.given {
        Some(g) => input_source(g),
        None => Source::common_practice(l.default_basis),
    }
}
