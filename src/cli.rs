//! The command line. Each `///` comment below is the help text of its command or option.
//!
//! Exit codes: 0 every design check passes; 1 a design check fails (a package is still
//! written, and marked as failing); 2 bad input or usage (nothing is written). The
//! lifecycle commands use 0 and 1 for "unchanged / changed" (`diff`) and "current /
//! drifted" (`verify`), and add 3 (tampered or damaged) and 4 (a signature invalid or
//! untrusted).

use crate::calc;
use crate::diag::Diagnostics;
use crate::package::{self, BuildError};
use crate::record::{self, Record};
use crate::report::{sections, Templates};
use crate::sheet::{Quantity, Sheet};
use crate::units::{format_value, Unit};
use clap::{Parser, Subcommand};
use std::collections::BTreeSet;
use std::io::Write;
use std::path::PathBuf;

/// Every check passes.
pub const EXIT_PASS: u8 = 0;
/// At least one design check fails.
pub const EXIT_CHECK_FAILED: u8 = 1;
/// Bad input or usage; nothing was written.
pub const EXIT_BAD_INPUT: u8 = 2;

/// Traced calculation packages for the DC-to-AC stage of inverters.
///
/// Exit codes: 0 all design checks pass, 1 a design check fails, 2 bad input or usage.
#[derive(Debug, Parser)]
#[command(
    name = "bridgebook",
    version,
    about,
    long_about = None,
    after_help = "Exit codes: 0 all design checks pass, 1 a design check fails (the package is still written, marked as failing), 2 bad input or usage (nothing is written). diff: 0 no change, 1 changed. verify: 0 intact and current, 1 drifted, 3 tampered, 4 signature invalid or untrusted. archive verify: 3 damaged."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Evaluate a design record and write its package: package.pdf (PDF/A-3b with the
    /// record and results attached), results.json, record.json, plots and manifest.json.
    ///
    /// A package that has been signed is never overwritten by a rebuild that differs.
    Build {
        /// The design record (YAML).
        design: PathBuf,
        /// Folder under which the package goes, as OUT/<project id>/<revision>/.
        #[arg(long, default_value = "out")]
        out: PathBuf,
        /// A folder with your own package.md and style.typ (copy `templates/` to start).
        #[arg(long)]
        templates: Option<PathBuf>,
    },
    /// Evaluate a design record and print its design checks.
    Check {
        /// The design record (YAML).
        design: PathBuf,
        /// Print every quantity and check as JSON (the results.json contract) instead.
        #[arg(long)]
        json: bool,
        /// Templates whose hash goes into the JSON stamp, as `build --templates` would use.
        #[arg(long)]
        templates: Option<PathBuf>,
    },
    /// Show how one result was obtained: formula, numbers, source, and its inputs as a tree.
    Explain {
        /// The design record (YAML).
        design: PathBuf,
        /// A result or check id, e.g. `modulation.m_a.min` (`check --json` lists them all).
        id: String,
    },
    /// Show what changed between two revisions: inputs, quantities, flipped checks.
    ///
    /// Each side is a design record, a built package folder or a package PDF. Exit code
    /// 0 when nothing changed beyond the tolerance, 1 when something did.
    Diff {
        /// The older revision.
        old: PathBuf,
        /// The newer revision.
        new: PathBuf,
        /// Relative change below which a quantity counts as unchanged, e.g. `1e-6` or `0.1 %`.
        #[arg(long)]
        tolerance: Option<String>,
        /// Print the delta as JSON.
        #[arg(long)]
        json: bool,
        /// Also write the delta as a PDF document for a submission.
        #[arg(long)]
        pdf: Option<PathBuf>,
    },
    /// Make an ed25519 key pair for signing packages: KEYFILE (private) and KEYFILE.pub.
    Keygen {
        /// Where the private key goes (written readable by its owner only).
        #[arg(long)]
        out: PathBuf,
    },
    /// Sign a built package as checker or approver (adds to its signatures.json).
    Sign {
        /// The package folder, e.g. out/PS-204/B.
        package: PathBuf,
        /// The private key file from `keygen`.
        #[arg(long)]
        key: PathBuf,
        /// The role of the signature.
        #[arg(long, value_parser = crate::package::signature::ROLES)]
        role: String,
        /// The signer's name as it should appear in the record.
        #[arg(long)]
        name: String,
        /// The date of signing (YYYY-MM-DD); today if left out.
        #[arg(long)]
        date: Option<String>,
    },
    /// Prove a package untouched, check its signatures, and re-check its numbers.
    ///
    /// Exit codes: 0 intact and current, 1 intact but the numbers drifted under today's
    /// engine, 2 not a package, 3 tampered, 4 a signature invalid or untrusted.
    Verify {
        /// The package folder.
        package: PathBuf,
        /// A trusted public key (file or 64 hex digits); repeat for several.
        #[arg(long)]
        trust: Vec<String>,
        /// Relative change below which a re-evaluated quantity counts as unchanged.
        #[arg(long)]
        tolerance: Option<String>,
    },
    /// Keep signed-off packages in an append-only, content-addressed archive.
    Archive {
        #[command(subcommand)]
        action: ArchiveAction,
    },
}

#[derive(Debug, Subcommand)]
pub enum ArchiveAction {
    /// Add a package folder to the archive (refuses a tampered or already archived one).
    Add {
        /// The package folder.
        package: PathBuf,
        /// The archive folder (created if missing).
        #[arg(long)]
        to: PathBuf,
        /// Require a signature by this public key (file or 64 hex digits); repeat for several.
        #[arg(long)]
        trust: Vec<String>,
    },
    /// List the archive's entries in the order they were added.
    List {
        /// The archive folder.
        #[arg(long = "in", default_value = "archive")]
        archive: PathBuf,
    },
    /// Show one entry: its files, hashes and signatures.
    Show {
        /// An entry id or package id, or the start of one.
        id: String,
        /// The archive folder.
        #[arg(long = "in", default_value = "archive")]
        archive: PathBuf,
    },
    /// Verify every entry, hash and signature, and the log's chain. Exit 3 on damage.
    Verify {
        /// The archive folder.
        #[arg(long = "in", default_value = "archive")]
        archive: PathBuf,
    },
}

/// Loads, validates and evaluates a record, including the references in its Markdown.
fn evaluate(path: &std::path::Path) -> Result<(Record, Sheet), Diagnostics> {
    let record = record::load_file(path)?;
    let sheet = calc::evaluate(&record.design);
    let text_errors = sections::record_text_errors(&record, &sheet);
    if !text_errors.is_empty() {
        return Err(Diagnostics(text_errors));
    }
    Ok((record, sheet))
}

/// Runs a parsed command line, writing results to `out` and messages to `err`.
pub fn run(cli: &Cli, out: &mut dyn Write, err: &mut dyn Write) -> u8 {
    match run_inner(cli, out, err) {
        Ok(code) => code,
        Err(message) => {
            if !message.is_empty() {
                let _ = writeln!(err, "{message}");
            }
            EXIT_BAD_INPUT
        }
    }
}

fn verdict_code(sheet: &Sheet) -> u8 {
    if sheet.all_pass() {
        EXIT_PASS
    } else {
        EXIT_CHECK_FAILED
    }
}

fn run_inner(cli: &Cli, out: &mut dyn Write, err: &mut dyn Write) -> Result<u8, String> {
    // A closed pipe (`bridgebook explain ... | head`) is not worth a message.
    let io = |e: std::io::Error| {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            String::new()
        } else {
            format!("error: cannot write output: {e}")
        }
    };
    match &cli.command {
        Command::Build {
            design,
            out: out_dir,
            templates,
        } => {
            let templates = load_templates(templates.as_deref())?;
            let (record, sheet) = evaluate(design).map_err(|d| d.to_string())?;
            let built =
                package::build(&record, &sheet, &templates, out_dir).map_err(|e| match e {
                    BuildError::Input(d) => d.to_string(),
                    other => other.to_string(),
                })?;
            print_warnings(&sheet, err).map_err(io)?;
            let p = &record.design.project;
            writeln!(
                out,
                "built {} rev {}: {} pages, {}",
                p.id,
                p.revision,
                built.pages,
                check_count(&sheet)
            )
            .map_err(io)?;
            writeln!(out, "  {}", built.dir.join("package.pdf").display()).map_err(io)?;
            Ok(verdict_code(&sheet))
        }
        Command::Check {
            design,
            json,
            templates,
        } => {
            let templates = load_templates(templates.as_deref())?;
            let (record, sheet) = evaluate(design).map_err(|d| d.to_string())?;
            if *json {
                let stamp = package::stamp(&record, &templates);
                let doc = package::results_json(&record, &sheet, &stamp);
                let text = serde_json::to_string_pretty(&doc)
                    .map_err(|e| format!("internal error: {e}, please report"))?;
                writeln!(out, "{text}").map_err(io)?;
            } else {
                print_checks(&record, &sheet, out).map_err(io)?;
                print_warnings(&sheet, err).map_err(io)?;
            }
            Ok(verdict_code(&sheet))
        }
        Command::Explain { design, id } => {
            let (_, sheet) = evaluate(design).map_err(|d| d.to_string())?;
            if let Some(c) = sheet.checks.iter().find(|c| c.id == *id) {
                writeln!(out, "{}  {}", c.id, c.statement).map_err(io)?;
                writeln!(
                    out,
                    "  {}: {} {} {} (margin {})",
                    c.verdict(),
                    format_value(c.value, c.unit),
                    c.relation.symbol(),
                    format_value(c.limit, c.unit),
                    format_value(c.margin, Unit::Percent)
                )
                .map_err(io)?;
                writeln!(out, "  limit from: {}", c.source.describe()).map_err(io)?;
                writeln!(out, "  checked value:").map_err(io)?;
                if let Some(q) = sheet.get(&c.quantity) {
                    explain(&sheet, q, out).map_err(io)?;
                }
                return Ok(EXIT_PASS);
            }
            let Some(q) = sheet.get(id) else {
                let hint = sheet.unknown_id_hint(id);
                return Err(format!(
                    "error: no result `{id}` in this design\n  = hint: {hint}"
                ));
            };
            explain(&sheet, q, out).map_err(io)?;
            Ok(EXIT_PASS)
        }
        Command::Diff {
            old,
            new,
            tolerance,
            json,
            pdf,
        } => crate::lifecycle::diff(old, new, tolerance.as_deref(), *json, pdf.as_deref(), out)
            .map_err(|e| e.or_io(io)),
        Command::Keygen { out: key } => crate::lifecycle::keygen(key, out).map_err(|e| e.or_io(io)),
        Command::Sign {
            package,
            key,
            role,
            name,
            date,
        } => crate::lifecycle::sign(package, key, role, name, date.as_deref(), out)
            .map_err(|e| e.or_io(io)),
        Command::Verify {
            package,
            trust,
            tolerance,
        } => crate::lifecycle::verify(package, trust, tolerance.as_deref(), out)
            .map_err(|e| e.or_io(io)),
        Command::Archive { action } => {
            crate::lifecycle::archive(action, out).map_err(|e| e.or_io(io))
        }
    }
}

fn load_templates(dir: Option<&std::path::Path>) -> Result<Templates, String> {
    match dir {
        Some(dir) => Templates::from_dir(dir).map_err(|d| d.to_string()),
        None => Ok(Templates::builtin()),
    }
}

fn check_count(sheet: &Sheet) -> String {
    let failing = sheet.checks.iter().filter(|c| !c.pass).count();
    if failing == 0 {
        format!("{} checks, all pass", sheet.checks.len())
    } else {
        format!("{} checks, {failing} FAIL", sheet.checks.len())
    }
}

fn print_warnings(sheet: &Sheet, err: &mut dyn Write) -> std::io::Result<()> {
    for w in &sheet.warnings {
        writeln!(err, "warning: {} ({})", w.text, w.id)?;
    }
    Ok(())
}

fn print_checks(record: &Record, sheet: &Sheet, out: &mut dyn Write) -> std::io::Result<()> {
    let p = &record.design.project;
    writeln!(out, "{} rev {}: {}", p.id, p.revision, p.title)?;
    let width = sheet.checks.iter().map(|c| c.id.len()).max().unwrap_or(0);
    for c in &sheet.checks {
        writeln!(
            out,
            "  {:<4}  {:<width$}  {} {} {}  (margin {})",
            c.verdict(),
            c.id,
            format_value(c.value, c.unit),
            c.relation.symbol(),
            format_value(c.limit, c.unit),
            format_value(c.margin, Unit::Percent),
        )?;
    }
    writeln!(out, "{}", check_count(sheet))
}

/// Prints a quantity, then its inputs as a tree; a quantity shown once is not expanded again.
fn explain(sheet: &Sheet, q: &Quantity, out: &mut dyn Write) -> std::io::Result<()> {
    writeln!(out, "{}  {}", q.id, q.name)?;
    writeln!(out, "  {} = {}", q.symbol, q.formula)?;
    if q.substituted != q.formula {
        writeln!(out, "  {:w$} = {}", "", q.substituted, w = q.symbol.len())?;
    }
    let result = match &q.class {
        Some(c) => format!("{c} ({})", q.display()),
        None => q.display(),
    };
    writeln!(out, "  {:w$} = {result}", "", w = q.symbol.len())?;
    writeln!(out, "  source: {}", q.source.describe())?;
    if !q.inputs.is_empty() {
        writeln!(out, "  inputs:")?;
    }
    let mut seen = BTreeSet::new();
    tree(sheet, q, "  ", &mut seen, out)
}

fn tree(
    sheet: &Sheet,
    q: &Quantity,
    prefix: &str,
    seen: &mut BTreeSet<String>,
    out: &mut dyn Write,
) -> std::io::Result<()> {
    let n = q.inputs.len();
    for (i, id) in q.inputs.iter().enumerate() {
        let Some(child) = sheet.get(id) else { continue };
        let last = i + 1 == n;
        let (branch, carry) = if last {
            ("└── ", "    ")
        } else {
            ("├── ", "│   ")
        };
        let repeat = !seen.insert(id.clone()) && !child.inputs.is_empty();
        let how = if child.is_input() || child.inputs.is_empty() {
            format!("[{}]", child.source.describe())
        } else if repeat {
            "(expanded above)".to_string()
        } else {
            format!("= {}", child.formula)
        };
        writeln!(
            out,
            "{prefix}{branch}{} = {}  {how}",
            child.id,
            child.display()
        )?;
        if !repeat {
            tree(sheet, child, &format!("{prefix}{carry}"), seen, out)?;
        }
    }
    Ok(())
}
