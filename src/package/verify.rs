//! `verify`: is this the package that was signed off, and does today's engine still
//! give its numbers? Recomputes every file's hash against the manifest, checks every
//! signature (and whether its key is trusted), then re-evaluates the package's own
//! record with the current engine and compares the quantities with its results.

use super::diff::{compare, Delta, Side};
use super::manifest::Manifest;
use super::signature::{self, SignatureEntry, Verdict};
use super::{results_json, stamp, RECORD_FILE};
use crate::report::Templates;
use std::path::Path;

/// The verdict on a package, most serious first; also the exit code.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// Every hash matches, every signature verifies, and the numbers are current.
    Current = 0,
    /// Intact and validly signed, but today's engine gives other numbers.
    Drifted = 1,
    /// A file differs from the manifest, or is missing, or was added.
    Tampered = 3,
    /// A signature does not verify, or none is by a trusted key.
    SignatureProblem = 4,
}

/// Everything `verify` found.
#[derive(Debug)]
pub struct Report {
    pub manifest: Manifest,
    pub file_problems: Vec<String>,
    pub signatures: Vec<(SignatureEntry, Verdict)>,
    /// A trust list was given but no valid signature is by a key on it.
    pub no_trusted_signature: bool,
    /// The signatures file exists but cannot be read.
    pub signature_file_error: Option<String>,
    /// Quantities and checks that differ between the package and a re-evaluation.
    pub drift: Option<Delta>,
    /// Why the record could not be re-evaluated, if it could not.
    pub reevaluation_error: Option<String>,
    /// The engine hash now, to set beside the package's.
    pub engine_now: String,
}

impl Report {
    pub fn outcome(&self) -> Outcome {
        if !self.file_problems.is_empty() {
            Outcome::Tampered
        } else if self.no_trusted_signature
            || self.signature_file_error.is_some()
            || self
                .signatures
                .iter()
                .any(|(_, v)| !matches!(v, Verdict::Valid { trusted: true }))
        {
            Outcome::SignatureProblem
        } else if self.reevaluation_error.is_some()
            || self.drift.as_ref().is_some_and(Delta::changed)
        {
            Outcome::Drifted
        } else {
            Outcome::Current
        }
    }
}

/// Verifies the package folder `dir`; an error means it is not a package at all.
pub fn verify(dir: &Path, trusted: &[String], tolerance: f64) -> Result<Report, String> {
    let (manifest, manifest_bytes) = Manifest::read(dir)?;
    // An archive entry also holds its own log line, which is not a package file.
    let file_problems = manifest.check_files_allowing(dir, &[super::archive::LINE_FILE]);
    let (sigs, signature_file_error) = match signature::read(dir) {
        Ok(s) => (s.signatures, None),
        Err(e) => (Vec::new(), Some(e)),
    };
    let signatures: Vec<(SignatureEntry, Verdict)> = sigs
        .into_iter()
        .map(|e| {
            let v = signature::check(&e, &manifest_bytes, trusted);
            (e, v)
        })
        .collect();
    let no_trusted_signature = !trusted.is_empty()
        && !signatures
            .iter()
            .any(|(_, v)| *v == Verdict::Valid { trusted: true });
    // The engine now, with the templates the package was built with: a package built
    // with its own templates is not "another engine".
    let engine_now = super::sha256_hex(
        format!(
            "{}|{}|{}",
            super::ENGINE_VERSION,
            super::SOURCE_SHA256,
            manifest.templates_sha256
        )
        .as_bytes(),
    );
    let (drift, reevaluation_error) = if file_problems.is_empty() {
        match reevaluate(dir, tolerance) {
            Ok(d) => (Some(d), None),
            Err(e) => (None, Some(e)),
        }
    } else {
        // A tampered package's numbers mean nothing; do not compare them.
        (None, None)
    };
    Ok(Report {
        manifest,
        file_problems,
        signatures,
        no_trusted_signature,
        signature_file_error,
        drift,
        reevaluation_error,
        engine_now,
    })
}

/// Re-evaluates the package's record and compares with its results.
fn reevaluate(dir: &Path, tolerance: f64) -> Result<Delta, String> {
    let old = Side::load(dir).map_err(|e| match e {
        super::diff::SideError::Record(d) => d.to_string(),
        super::diff::SideError::Other { message, .. } => message,
    })?;
    // The record as the package holds it (`record.json`, already read by `Side::load`).
    let text = serde_json::to_string_pretty(&old.record).map_err(|e| e.to_string())?;
    let rec = crate::record::load_str(RECORD_FILE, &text)
        .map_err(|d| format!("today's engine cannot read the package's record:\n{d}"))?;
    let sheet = crate::calc::evaluate(&rec.design);
    let st = stamp(&rec, &Templates::builtin());
    let now = Side {
        label: "re-evaluated now".into(),
        record: old.record.clone(),
        results: results_json(&rec, &sheet, &st),
    };
    Ok(compare(&old, &now, tolerance))
}

/// The report as text for the terminal.
pub fn describe(r: &Report) -> String {
    let m = &r.manifest;
    let mut out = format!(
        "package {} ({} rev {}, {}), {} files\n",
        m.package_id,
        m.project,
        m.revision,
        m.date,
        m.files.len()
    );
    if r.file_problems.is_empty() {
        out.push_str("  files: every file matches its SHA-256 in the manifest\n");
    } else {
        out.push_str("  files: TAMPERED\n");
        for p in &r.file_problems {
            out.push_str(&format!("    {p}\n"));
        }
    }
    if r.signatures.is_empty() {
        out.push_str("  signatures: none (the package is not signed)\n");
    }
    for (e, v) in &r.signatures {
        let verdict = match v {
            Verdict::Valid { trusted: true } => "valid".to_string(),
            Verdict::Valid { trusted: false } => "valid but UNTRUSTED key".to_string(),
            Verdict::Invalid(why) => format!("INVALID: {why}"),
        };
        out.push_str(&format!(
            "  signature: {} as {} on {} (key {}…): {verdict}\n",
            e.name,
            e.role,
            e.date,
            &e.public_key[..16.min(e.public_key.len())]
        ));
    }
    if let Some(e) = &r.signature_file_error {
        out.push_str(&format!("  signatures: UNREADABLE: {e}\n"));
    }
    if r.no_trusted_signature {
        out.push_str("  signatures: none by a trusted key\n");
    }
    if m.engine_sha256 != r.engine_now {
        out.push_str(&format!(
            "  engine: built by {} ({}…), re-evaluated by the current engine ({}…)\n",
            m.engine,
            &m.engine_sha256[..12],
            &r.engine_now[..12]
        ));
    }
    match (&r.drift, &r.reevaluation_error) {
        (_, Some(e)) => out.push_str(&format!("  numbers: cannot re-evaluate: {e}\n")),
        (Some(d), None) if d.changed() => {
            out.push_str(&format!(
                "  numbers: DRIFTED since sign-off: {} quantities, {} checks flipped, {} added, {} removed\n",
                d.quantities.len(),
                d.checks_flipped.len(),
                d.quantities_added.len() + d.checks_added.len(),
                d.quantities_removed.len() + d.checks_removed.len()
            ));
            for line in super::diff::table(d).lines().skip(2) {
                out.push_str(&format!("    {line}\n"));
            }
        }
        (Some(_), None) => out.push_str("  numbers: today's engine gives the package's numbers\n"),
        (None, None) => {
            out.push_str("  numbers: not compared (the files do not match the manifest)\n")
        }
    }
    let verdict = match r.outcome() {
        Outcome::Current => "intact and current",
        Outcome::Drifted => "intact, but the numbers drifted",
        Outcome::Tampered => "TAMPERED",
        Outcome::SignatureProblem => "signature invalid or untrusted",
    };
    out.push_str(&format!("verdict: {verdict}\n"));
    out
}
