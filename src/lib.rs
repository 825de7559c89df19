//! bridgebook: traced, hash-stamped calculation packages for the DC-to-AC stage of
//! solar and battery inverters.
//!
//! The pipeline, one stage per module:
//!
//! 1. [`record::load_file`]: the YAML design record, parsed with positions, validated
//!    into a typed [`record::Design`] in SI units; every problem is reported at once.
//! 2. [`calc::evaluate`]: each engineering subject appends traced quantities and
//!    checks to a [`sheet::Sheet`].
//! 3. [`report::render`]: Markdown templates and the sheet become typst source and
//!    SVG plots, typeset in memory into a PDF.
//! 4. [`package::build`]: canonical hashes, the revision block, `results.json`, and
//!    the files written atomically to the output folder.
//!
//! [`cli`] ties the stages to the command line; `main` only maps outcomes to exit codes.

#![forbid(unsafe_code)]

pub mod calc;
pub mod cli;
pub mod diag;
pub mod lifecycle;
pub mod package;
pub mod record;
pub mod report;
pub mod sheet;
pub mod standards;
pub mod units;
