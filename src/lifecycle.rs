//! The revision lifecycle commands: `diff`, `keygen`, `sign`, `verify` and `archive`.
//! Each returns its exit code, or a message for standard error (bad input, exit 2).
//! The work is in [`crate::package`]; this file only reads arguments and prints.

use crate::cli::ArchiveAction;
use crate::package::archive;
use crate::package::diff::{self, Side, SideError, DEFAULT_TOLERANCE};
use crate::package::signature::{self, Verdict};
use crate::package::verify;
use crate::units::{parse_value, Unit};
use std::io::Write;
use std::path::Path;

/// A command's failure: a message (exit 2) or an output error.
pub enum Failure {
    Message(String),
    Io(std::io::Error),
}

impl Failure {
    /// The message to print, with output errors worded by `io`.
    pub fn or_io(self, io: impl Fn(std::io::Error) -> String) -> String {
        match self {
            Failure::Message(m) => m,
            Failure::Io(e) => io(e),
        }
    }
}

impl From<std::io::Error> for Failure {
    fn from(e: std::io::Error) -> Self {
        Failure::Io(e)
    }
}

/// An error with a hint; a message that carries its own hint keeps it.
fn fail(message: impl Into<String>, hint: &str) -> Failure {
    let message = message.into();
    if message.contains("\n  = hint: ") {
        Failure::Message(format!("error: {message}"))
    } else {
        Failure::Message(format!("error: {message}\n  = hint: {hint}"))
    }
}

/// Exit code of a damaged package or archive.
pub const EXIT_TAMPERED: u8 = 3;

fn tolerance(text: Option<&str>) -> Result<f64, Failure> {
    match text {
        None => Ok(DEFAULT_TOLERANCE),
        Some(t) => match parse_value(t, Unit::One) {
            Ok(v) if v >= 0.0 && v.is_finite() => Ok(v),
            _ => Err(fail(
                format!("`--tolerance {t}` is not a relative tolerance"),
                "write a fraction such as `1e-6` or a percentage such as `0.1 %`",
            )),
        },
    }
}

fn side(path: &Path) -> Result<Side, Failure> {
    Side::load(path).map_err(|e| match e {
        SideError::Record(d) => Failure::Message(d.to_string()),
        SideError::Other { message, hint } => fail(message, &hint),
    })
}

pub fn diff(
    old: &Path,
    new: &Path,
    tol: Option<&str>,
    json: bool,
    pdf: Option<&Path>,
    out: &mut dyn Write,
) -> Result<u8, Failure> {
    let tol = tolerance(tol)?;
    let (a, b) = (side(old)?, side(new)?);
    let delta = diff::compare(&a, &b, tol);
    if let Some(path) = pdf {
        let date = b.record["project"]["date"]
            .as_str()
            .unwrap_or("2000-01-01")
            .to_string();
        let parts: Vec<u32> = date.split('-').filter_map(|x| x.parse().ok()).collect();
        let ymd = match parts.as_slice() {
            [y, m, d] => (*y as i32, *m as u8, *d as u8),
            _ => (2000, 1, 1),
        };
        let source = diff::typst_source(&delta, &date);
        let ident = format!("delta/{}", crate::package::sha256_hex(source.as_bytes()));
        let doc = crate::report::typeset::Typesetter::shared()
            .compile(&source, &[], ymd, &ident)
            .map_err(|e| Failure::Message(format!("error: the delta could not be typeset\n{e}\n  = hint: this is an internal error, please report")))?;
        crate::package::write_file_atomic(path, &doc.bytes).map_err(|e| {
            fail(
                format!("cannot write `{}`: {e}", path.display()),
                "check that the folder exists and is writable",
            )
        })?;
    }
    if json {
        let text = serde_json::to_string_pretty(&delta)
            .map_err(|e| Failure::Message(format!("internal error: {e}, please report")))?;
        writeln!(out, "{text}")?;
    } else {
        write!(out, "{}", diff::table(&delta))?;
        if let Some(p) = pdf {
            writeln!(out, "delta written to {}", p.display())?;
        }
    }
    Ok(u8::from(delta.changed()))
}

pub fn keygen(path: &Path, out: &mut dyn Write) -> Result<u8, Failure> {
    let public_path = path.with_file_name(format!(
        "{}.pub",
        path.file_name()
            .map_or("key".into(), |n| n.to_string_lossy().to_string())
    ));
    for p in [path, public_path.as_path()] {
        if p.exists() {
            return Err(fail(
                format!("`{}` exists; a key is never overwritten", p.display()),
                "choose another `--out`, or move the old key away first",
            ));
        }
    }
    let (private, public) = signature::new_key_files();
    write_private(path, private.as_bytes()).map_err(|e| {
        fail(
            format!("cannot write `{}`: {e}", path.display()),
            "check that the folder exists and is writable",
        )
    })?;
    std::fs::write(&public_path, public.as_bytes()).map_err(|e| {
        fail(
            format!("cannot write `{}`: {e}", public_path.display()),
            "check that the folder is writable",
        )
    })?;
    writeln!(
        out,
        "private key: {} (keep it secret; readable by you only)",
        path.display()
    )?;
    writeln!(
        out,
        "public key:  {} (give it to whoever verifies your signatures)",
        public_path.display()
    )?;
    Ok(0)
}

/// Creates a file readable and writable by its owner only, refusing to replace one.
fn write_private(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut options = std::fs::OpenOptions::new();
    options.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.mode(0o600);
    }
    let mut f = options.open(path)?;
    f.write_all(bytes)?;
    f.sync_all()
}

pub fn sign(
    package: &Path,
    key: &Path,
    role: &str,
    name: &str,
    date: Option<&str>,
    out: &mut dyn Write,
) -> Result<u8, Failure> {
    let key = signature::read_signing_key(key).map_err(|e| {
        fail(
            e,
            "give the private key file that `bridgebook keygen --out` wrote",
        )
    })?;
    let date = match date {
        Some(d) if crate::record::reader::parse_date(d).is_some() => d.to_string(),
        Some(d) => {
            return Err(fail(
                format!("`--date {d}` is not a date"),
                "write it as YYYY-MM-DD, e.g. 2026-12-02",
            ))
        }
        None => signature::today(),
    };
    if name.trim().is_empty() {
        return Err(fail(
            "the signer's name is empty",
            "give `--name \"A. Checker\"`",
        ));
    }
    let e = signature::sign(package, &key, role, name.trim(), &date).map_err(|e| {
        fail(
            e,
            "sign the package folder that `bridgebook build` wrote, unchanged",
        )
    })?;
    writeln!(
        out,
        "signed package {} as {} by {} on {} (key {}…)",
        e.package_id,
        e.role,
        e.name,
        e.date,
        &e.public_key[..16]
    )?;
    Ok(0)
}

/// The public keys given with `--trust`, as hex.
fn trusted_keys(trust: &[String]) -> Result<Vec<String>, Failure> {
    trust
        .iter()
        .map(|t| signature::read_public_key(t))
        .collect::<Result<Vec<_>, _>>()
        .map_err(|e| {
            fail(
                e,
                "give `--trust` a `.pub` file from `keygen` or 64 hex digits",
            )
        })
}

pub fn verify(
    package: &Path,
    trust: &[String],
    tol: Option<&str>,
    out: &mut dyn Write,
) -> Result<u8, Failure> {
    let tol = tolerance(tol)?;
    let trusted = trusted_keys(trust)?;
    let report = verify::verify(package, &trusted, tol)
        .map_err(|e| fail(e, "give the package folder that holds `manifest.json`"))?;
    write!(out, "{}", verify::describe(&report))?;
    Ok(report.outcome() as u8)
}

pub fn archive(action: &ArchiveAction, out: &mut dyn Write) -> Result<u8, Failure> {
    match action {
        ArchiveAction::Add { package, to, trust } => {
            let trusted = trusted_keys(trust)?;
            let line = archive::add(package, to, &trusted, &mut |_| Ok(()))
                .map_err(|e| fail(e, "archive a package folder as built and signed; `bridgebook verify` tells what is wrong with it"))?;
            writeln!(
                out,
                "archived package {} ({} rev {}) as entry {} (log line {})",
                line.package_id, line.project, line.revision, line.entry, line.seq
            )?;
            Ok(0)
        }
        ArchiveAction::List { archive: dir } => {
            let lines = archive::read_log(dir).map_err(|e| {
                fail(
                    e,
                    "`bridgebook archive verify` tells what is wrong with the archive",
                )
            })?;
            if lines.is_empty() {
                writeln!(out, "the archive `{}` is empty", dir.display())?;
            }
            for (_, l) in &lines {
                let signers: Vec<String> = l
                    .signatures
                    .iter()
                    .map(|s| format!("{}: {}", s.role, s.name))
                    .collect();
                writeln!(
                    out,
                    "{:>4}  {}  {}  {} rev {:<4} entry {}…  {}",
                    l.seq,
                    l.added,
                    l.package_id,
                    l.project,
                    l.revision,
                    &l.entry[..16],
                    if signers.is_empty() {
                        "unsigned".to_string()
                    } else {
                        signers.join(", ")
                    }
                )?;
            }
            Ok(0)
        }
        ArchiveAction::Show { id, archive: dir } => {
            let line =
                archive::find(dir, id).map_err(|e| fail(e, "`archive list` shows the ids"))?;
            let entry = archive::entry_path(dir, &line);
            let (m, bytes) = crate::package::manifest::Manifest::read(&entry)
                .map_err(|e| fail(e, "run `archive verify` to see what is damaged"))?;
            writeln!(out, "entry {}", line.entry)?;
            writeln!(
                out,
                "  package id {}  ({} rev {}, record date {})",
                m.package_id, m.project, m.revision, m.date
            )?;
            writeln!(out, "  added {} as log line {}", line.added, line.seq)?;
            writeln!(out, "  engine {} ({})", m.engine, m.engine_sha256)?;
            writeln!(out, "  record SHA-256 {}", m.record_sha256)?;
            writeln!(out, "  files:")?;
            for f in &m.files {
                writeln!(out, "    {:<28} {:>9} bytes  {}", f.name, f.bytes, f.sha256)?;
            }
            let problems = m.check_files_allowing(&entry, &[archive::LINE_FILE]);
            let sigs = signature::read(&entry).map_err(|e| fail(e, "run `archive verify`"))?;
            for s in &sigs.signatures {
                let v = match signature::check(s, &bytes, &[]) {
                    Verdict::Valid { .. } => "valid".to_string(),
                    Verdict::Invalid(w) => format!("INVALID: {w}"),
                };
                writeln!(
                    out,
                    "  signed {} by {} on {} (key {}): {v}",
                    s.role, s.name, s.date, s.public_key
                )?;
            }
            if sigs.signatures.is_empty() {
                writeln!(out, "  unsigned")?;
            }
            if problems.is_empty() {
                writeln!(out, "  every file matches its hash")?;
                Ok(0)
            } else {
                for p in problems {
                    writeln!(out, "  DAMAGED: {p}")?;
                }
                Ok(EXIT_TAMPERED)
            }
        }
        ArchiveAction::Verify { archive: dir } => {
            let r =
                archive::verify(dir).map_err(|e| fail(e, "give the archive folder with `--in`"))?;
            for p in &r.problems {
                writeln!(out, "DAMAGED: {p}")?;
            }
            for n in &r.notes {
                writeln!(out, "note: {n}")?;
            }
            if r.problems.is_empty() {
                writeln!(
                    out,
                    "archive `{}`: {} entries, log chain intact, every hash and signature verifies",
                    dir.display(),
                    r.entries
                )?;
                Ok(0)
            } else {
                writeln!(
                    out,
                    "archive `{}`: {} problem(s) in {} entries",
                    dir.display(),
                    r.problems.len(),
                    r.entries
                )?;
                Ok(EXIT_TAMPERED)
            }
        }
    }
}
