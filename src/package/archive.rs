//! The archive of signed-off packages: content-addressed, read-only entries and an
//! append-only log whose every line carries the hash of the line before it.
//!
//! ```text
//! ARCHIVE/
//!   log.jsonl                 one JSON object a line, chained by `previous`
//!   entries/<id>/             a package's files; <id> = SHA-256 of its manifest
//!   .staging/                 entries being copied (never read as entries)
//! ```
//!
//! Adding is crash-safe: the files are copied into `.staging`, synced, and the whole
//! folder renamed into `entries/` (a rename is atomic); only then is the log replaced by
//! a synced copy with the new line (again by rename). A crash before the entry's rename
//! leaves only staging debris; between the rename and the log, an entry that the log
//! does not list yet, which `verify` reports and the next `add` of the same package
//! completes. Nothing ever rewrites an entry or a logged line.

use super::manifest::Manifest;
use super::signature::{self, Verdict};
use super::{sha256_hex, sync_dir, write_file_atomic};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

pub const LOG: &str = "log.jsonl";
pub const ENTRIES: &str = "entries";
pub const STAGING: &str = ".staging";
const GENESIS: &str = "0000000000000000000000000000000000000000000000000000000000000000";

/// A signature as the log records it.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Signer {
    pub role: String,
    pub name: String,
    pub public_key: String,
}

/// One line of the log.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct LogLine {
    pub seq: u64,
    /// The entry's folder name: SHA-256 of the package's manifest.
    pub entry: String,
    pub package_id: String,
    pub project: String,
    pub revision: String,
    /// The day the entry was added (UTC).
    pub added: String,
    pub signatures: Vec<Signer>,
    /// SHA-256 of the previous line's text; 64 zeros for the first.
    pub previous: String,
}

/// The steps of an add, for failure injection in tests (the hook runs after each).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Step {
    /// Every file copied and synced into staging.
    Copied,
    /// The staging folder renamed into `entries/`.
    Renamed,
    /// The log replaced with the new line.
    Logged,
}

fn io_err(what: &str, path: &Path, e: std::io::Error) -> String {
    format!("cannot {what} `{}`: {e}", path.display())
}

/// The log's lines, with the text of each (for the chain).
pub fn read_log(archive: &Path) -> Result<Vec<(String, LogLine)>, String> {
    let path = archive.join(LOG);
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => return Err(io_err("read", &path, e)),
    };
    text.lines()
        .enumerate()
        .map(|(i, l)| {
            serde_json::from_str::<LogLine>(l)
                .map(|line| (l.to_string(), line))
                .map_err(|e| format!("`{}` line {}: not a log line: {e}", path.display(), i + 1))
        })
        .collect()
}

/// Problems of the log's chain: each line must name the hash of the one before.
pub fn chain_problems(lines: &[(String, LogLine)]) -> Vec<String> {
    let mut problems = Vec::new();
    let mut previous = GENESIS.to_string();
    for (i, (text, line)) in lines.iter().enumerate() {
        if line.previous != previous {
            problems.push(format!(
                "log line {} does not follow line {}: the log was edited or lines were removed",
                i + 1,
                i
            ));
        }
        if line.seq != i as u64 + 1 {
            problems.push(format!(
                "log line {} has sequence number {}",
                i + 1,
                line.seq
            ));
        }
        previous = sha256_hex(text.as_bytes());
    }
    problems
}

fn entry_dir(archive: &Path, id: &str) -> PathBuf {
    archive.join(ENTRIES).join(id)
}

/// Adds the package folder `package` to `archive`. `hook` runs after each step; an
/// error from it stops the add there (tests inject failures this way).
pub fn add(
    package: &Path,
    archive: &Path,
    hook: &mut dyn FnMut(Step) -> std::io::Result<()>,
) -> Result<LogLine, String> {
    let (manifest, manifest_bytes) = Manifest::read(package)?;
    let problems = manifest.check_files(package);
    if !problems.is_empty() {
        return Err(format!(
            "the package does not match its manifest: {}",
            problems.join("; ")
        ));
    }
    let sigs = signature::read(package)?;
    for e in &sigs.signatures {
        if let Verdict::Invalid(why) = signature::check(e, &manifest_bytes, &[]) {
            return Err(format!(
                "the signature of {} as {} is invalid: {why}",
                e.name, e.role
            ));
        }
    }
    std::fs::create_dir_all(archive.join(ENTRIES)).map_err(|e| io_err("create", archive, e))?;
    let lines = read_log(archive)?;
    let chain = chain_problems(&lines);
    if !chain.is_empty() {
        return Err(format!(
            "the archive's log is damaged, nothing was added: {}\n  = hint: run `bridgebook archive verify --in {}` and restore the log from a copy",
            chain.join("; "),
            archive.display()
        ));
    }
    let id = sha256_hex(&manifest_bytes);
    if lines.iter().any(|(_, l)| l.entry == id) {
        return Err(format!(
            "package {} is already archived as entry {id}\n  = hint: an entry is never replaced; a changed design is a new revision, built and archived as its own package",
            manifest.package_id
        ));
    }
    let target = entry_dir(archive, &id);
    if target.exists() {
        // An add interrupted after the rename: the entry is complete if it matches.
        let (m, b) = Manifest::read(&target)?;
        if sha256_hex(&b) != id || !m.check_files(&target).is_empty() {
            return Err(format!(
                "entry {id} exists but is damaged; it is left as it is for inspection"
            ));
        }
    } else {
        copy_into_entries(package, archive, &id, &manifest, hook)?;
    }
    let line = LogLine {
        seq: lines.len() as u64 + 1,
        entry: id.clone(),
        package_id: manifest.package_id.clone(),
        project: manifest.project.clone(),
        revision: manifest.revision.clone(),
        added: signature::today(),
        signatures: sigs
            .signatures
            .iter()
            .map(|s| Signer {
                role: s.role.clone(),
                name: s.name.clone(),
                public_key: s.public_key.clone(),
            })
            .collect(),
        previous: lines
            .last()
            .map_or(GENESIS.to_string(), |(t, _)| sha256_hex(t.as_bytes())),
    };
    let mut text: String = lines.iter().map(|(t, _)| format!("{t}\n")).collect();
    text.push_str(&serde_json::to_string(&line).map_err(|e| e.to_string())?);
    text.push('\n');
    let log = archive.join(LOG);
    write_file_atomic(&log, text.as_bytes()).map_err(|e| io_err("write", &log, e))?;
    hook(Step::Logged).map_err(|e| io_err("finish the log", &log, e))?;
    Ok(line)
}

fn copy_into_entries(
    package: &Path,
    archive: &Path,
    id: &str,
    manifest: &Manifest,
    hook: &mut dyn FnMut(Step) -> std::io::Result<()>,
) -> Result<(), String> {
    let staging_root = archive.join(STAGING);
    std::fs::create_dir_all(&staging_root).map_err(|e| io_err("create", &staging_root, e))?;
    let staging = staging_root.join(format!("{id}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&staging);
    std::fs::create_dir(&staging).map_err(|e| io_err("create", &staging, e))?;
    let result = (|| {
        let mut names: Vec<String> = manifest.files.iter().map(|f| f.name.clone()).collect();
        names.push(super::manifest::MANIFEST.to_string());
        if package.join(signature::SIGNATURES).exists() {
            names.push(signature::SIGNATURES.to_string());
        }
        for name in &names {
            let from = package.join(name);
            let to = staging.join(name);
            let bytes = std::fs::read(&from).map_err(|e| io_err("read", &from, e))?;
            let mut f = std::fs::File::create(&to).map_err(|e| io_err("write", &to, e))?;
            use std::io::Write;
            f.write_all(&bytes).map_err(|e| io_err("write", &to, e))?;
            f.sync_all().map_err(|e| io_err("sync", &to, e))?;
            read_only(&to, false).map_err(|e| io_err("protect", &to, e))?;
        }
        sync_dir(&staging).map_err(|e| io_err("sync", &staging, e))?;
        hook(Step::Copied).map_err(|e| io_err("copy into", &staging, e))?;
        let target = entry_dir(archive, id);
        std::fs::rename(&staging, &target).map_err(|e| io_err("move into place", &target, e))?;
        sync_dir(&archive.join(ENTRIES)).map_err(|e| io_err("sync", archive, e))?;
        read_only(&target, true).map_err(|e| io_err("protect", &target, e))?;
        hook(Step::Renamed).map_err(|e| io_err("finish", &target, e))?;
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&staging);
    }
    result
}

/// Takes the write permission away from a file (or an entry folder).
fn read_only(path: &Path, dir: bool) -> std::io::Result<()> {
    let mut p = std::fs::metadata(path)?.permissions();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        p.set_mode(if dir { 0o555 } else { 0o444 });
    }
    #[cfg(not(unix))]
    {
        let _ = dir;
        p.set_readonly(true);
    }
    std::fs::set_permissions(path, p)
}

/// What `archive verify` found: problems (damage) and notes (harmless leftovers).
#[derive(Debug, Default)]
pub struct ArchiveReport {
    pub entries: usize,
    pub problems: Vec<String>,
    pub notes: Vec<String>,
}

/// Verifies the whole archive: the log's chain, every logged entry's files and
/// signatures, and entries or staging left by interrupted adds.
pub fn verify(archive: &Path) -> Result<ArchiveReport, String> {
    if !archive.join(LOG).exists() && !archive.join(ENTRIES).exists() {
        return Err(format!(
            "`{}` is not a bridgebook archive (no `{LOG}`)",
            archive.display()
        ));
    }
    let lines = read_log(archive)?;
    let mut r = ArchiveReport {
        entries: lines.len(),
        problems: chain_problems(&lines),
        ..ArchiveReport::default()
    };
    for (_, l) in &lines {
        let dir = entry_dir(archive, &l.entry);
        let at = format!(
            "entry {} ({} rev {})",
            &l.entry[..12.min(l.entry.len())],
            l.project,
            l.revision
        );
        match Manifest::read(&dir) {
            Err(e) => r.problems.push(format!("{at}: {e}")),
            Ok((m, bytes)) => {
                if sha256_hex(&bytes) != l.entry {
                    r.problems.push(format!(
                        "{at}: `manifest.json` has changed (its SHA-256 no longer names the entry)"
                    ));
                }
                for p in m.check_files(&dir) {
                    r.problems.push(format!("{at}: {p}"));
                }
                match signature::read(&dir) {
                    Err(e) => r.problems.push(format!("{at}: {e}")),
                    Ok(s) => {
                        for e in &s.signatures {
                            if let Verdict::Invalid(why) = signature::check(e, &bytes, &[]) {
                                r.problems.push(format!(
                                    "{at}: the signature of {} as {} is invalid: {why}",
                                    e.name, e.role
                                ));
                            }
                        }
                        let logged: Vec<(&str, &str)> = l
                            .signatures
                            .iter()
                            .map(|x| (x.role.as_str(), x.public_key.as_str()))
                            .collect();
                        let present: Vec<(&str, &str)> = s
                            .signatures
                            .iter()
                            .map(|x| (x.role.as_str(), x.public_key.as_str()))
                            .collect();
                        if logged != present {
                            r.problems.push(format!(
                                "{at}: its signatures differ from those the log recorded"
                            ));
                        }
                    }
                }
            }
        }
    }
    if let Ok(dirs) = std::fs::read_dir(archive.join(ENTRIES)) {
        let mut orphans: Vec<String> = dirs
            .flatten()
            .map(|e| e.file_name().to_string_lossy().to_string())
            .filter(|n| !lines.iter().any(|(_, l)| &l.entry == n))
            .collect();
        orphans.sort();
        for o in orphans {
            r.notes.push(format!(
                "entry {} is not in the log: an add was interrupted; `archive add` of the same package completes it",
                &o[..12.min(o.len())]
            ));
        }
    }
    if let Ok(st) = std::fs::read_dir(archive.join(STAGING)) {
        let n = st.count();
        if n > 0 {
            r.notes.push(format!("{n} unfinished cop(ies) in `{STAGING}` from interrupted adds; they are not entries and can be removed"));
        }
    }
    Ok(r)
}

/// The log line whose entry id or package id starts with `id`.
pub fn find(archive: &Path, id: &str) -> Result<LogLine, String> {
    let lines = read_log(archive)?;
    let hits: Vec<&LogLine> = lines
        .iter()
        .map(|(_, l)| l)
        .filter(|l| !id.is_empty() && (l.entry.starts_with(id) || l.package_id.starts_with(id)))
        .collect();
    match hits.as_slice() {
        [one] => Ok((*one).clone()),
        [] => Err(format!("no archive entry or package id starts with `{id}`")),
        _ => Err(format!(
            "`{id}` matches {} entries; give more of the id",
            hits.len()
        )),
    }
}

/// The folder of an entry.
pub fn entry_path(archive: &Path, line: &LogLine) -> PathBuf {
    entry_dir(archive, &line.entry)
}
