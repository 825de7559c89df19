//! The archive of signed-off packages: content-addressed, read-only entries and an
//! append-only log whose every line carries the hash of the line before it.
//!
//! ```text
//! ARCHIVE/
//!   log.jsonl                 one JSON object a line, chained by `previous`
//!   entries/<id>/             a package's files and its log line; <id> = SHA-256 of its manifest
//!   .staging/                 entries being copied (never read as entries)
//!   .lock                     present while an add runs
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
/// Each entry's own copy of its log line, written with the entry before the log: an
/// entry whose line the log lacks shows that the log was cut or edited.
pub const LINE_FILE: &str = "log-line.json";
/// Taken for the length of an add, so that two adds never race for the log.
pub const LOCK: &str = ".lock";
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

/// The log's lines as text (none if there is no log yet).
fn log_texts(archive: &Path) -> Result<Vec<String>, String> {
    let path = archive.join(LOG);
    match std::fs::read_to_string(&path) {
        Ok(t) => Ok(t.lines().map(str::to_string).collect()),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Vec::new()),
        Err(e) => Err(io_err("read", &path, e)),
    }
}

/// The log's lines, with the text of each (for the chain); any line that is not a
/// log line is an error.
pub fn read_log(archive: &Path) -> Result<Vec<(String, LogLine)>, String> {
    let path = archive.join(LOG);
    log_texts(archive)?
        .iter()
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

/// Held while an add runs: the lock file, removed when dropped.
struct AddLock(PathBuf);

impl AddLock {
    fn take(archive: &Path) -> Result<AddLock, String> {
        let path = archive.join(LOCK);
        match std::fs::OpenOptions::new().write(true).create_new(true).open(&path) {
            Ok(_) => Ok(AddLock(path)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(format!(
                "another `archive add` is running on `{}`, or one was stopped and left `{LOCK}`\n  = hint: if no add is running, remove `{}` and add again",
                archive.display(),
                path.display()
            )),
            Err(e) => Err(io_err("lock", &path, e)),
        }
    }
}

impl Drop for AddLock {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.0);
    }
}

/// Adds the package folder `package` to `archive`. With a non-empty `trusted` list, at
/// least one signature must be by a trusted key. `hook` runs after each step; an error
/// from it stops the add there (tests inject failures this way).
pub fn add(
    package: &Path,
    archive: &Path,
    trusted: &[String],
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
    let mut trusted_found = false;
    for e in &sigs.signatures {
        match signature::check(e, &manifest_bytes, trusted) {
            Verdict::Invalid(why) => {
                return Err(format!(
                    "the signature of {} as {} is invalid: {why}",
                    e.name, e.role
                ))
            }
            Verdict::Valid { trusted } => trusted_found |= trusted,
        }
    }
    if !trusted.is_empty() && !trusted_found {
        return Err("no signature of the package is by a trusted key\n  = hint: sign it with a key given to `--trust`, or archive it without `--trust`".to_string());
    }
    std::fs::create_dir_all(archive.join(ENTRIES)).map_err(|e| io_err("create", archive, e))?;
    let _lock = AddLock::take(archive)?;
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
    let head = lines
        .last()
        .map_or(GENESIS.to_string(), |(t, _)| sha256_hex(t.as_bytes()));
    let target = entry_dir(archive, &id);
    let text = if target.exists() {
        // An add interrupted after the rename: complete it with the entry's own line,
        // which must still be the next one.
        let (m, b) = Manifest::read(&target)?;
        let stored = std::fs::read_to_string(target.join(LINE_FILE)).unwrap_or_default();
        let fits = serde_json::from_str::<LogLine>(stored.trim_end())
            .is_ok_and(|l| l.seq == lines.len() as u64 + 1 && l.previous == head && l.entry == id);
        if sha256_hex(&b) != id
            || !m.check_files_allowing(&target, &[LINE_FILE]).is_empty()
            || !fits
        {
            return Err(format!(
                "entry {id} exists from an earlier add but is damaged or no longer fits the log; it is left as it is\n  = hint: run `bridgebook archive verify --in {}`",
                archive.display()
            ));
        }
        stored.trim_end().to_string()
    } else {
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
            previous: head,
        };
        let text = serde_json::to_string(&line).map_err(|e| e.to_string())?;
        copy_into_entries(package, archive, &id, &manifest, &text, hook)?;
        text
    };
    let mut log: String = lines.iter().map(|(t, _)| format!("{t}\n")).collect();
    log.push_str(&text);
    log.push('\n');
    let path = archive.join(LOG);
    write_file_atomic(&path, log.as_bytes()).map_err(|e| io_err("write", &path, e))?;
    hook(Step::Logged).map_err(|e| io_err("finish the log", &path, e))?;
    serde_json::from_str(&text).map_err(|e| e.to_string())
}

fn copy_into_entries(
    package: &Path,
    archive: &Path,
    id: &str,
    manifest: &Manifest,
    line: &str,
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
        let to = staging.join(LINE_FILE);
        std::fs::write(&to, format!("{line}\n")).map_err(|e| io_err("write", &to, e))?;
        std::fs::File::open(&to)
            .and_then(|f| f.sync_all())
            .map_err(|e| io_err("sync", &to, e))?;
        read_only(&to, false).map_err(|e| io_err("protect", &to, e))?;
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
/// signatures, each entry's own copy of its log line against the log (which finds a
/// log cut short or edited), and entries or staging left by interrupted adds.
pub fn verify(archive: &Path) -> Result<ArchiveReport, String> {
    if !archive.join(LOG).exists() && !archive.join(ENTRIES).exists() {
        return Err(format!(
            "`{}` is not a bridgebook archive (no `{LOG}`)",
            archive.display()
        ));
    }
    let texts = log_texts(archive)?;
    let mut r = ArchiveReport::default();
    let mut lines = Vec::new();
    for (i, text) in texts.iter().enumerate() {
        match serde_json::from_str::<LogLine>(text) {
            Ok(l) => lines.push((text.clone(), l)),
            Err(_) => r.problems.push(format!(
                "log line {} is not a log line: the log was edited or damaged",
                i + 1
            )),
        }
    }
    r.entries = lines.len();
    if r.problems.is_empty() {
        r.problems.extend(chain_problems(&lines));
    }
    for (_, l) in &lines {
        entry_problems(archive, l, &mut r.problems);
    }
    let head = texts
        .last()
        .map_or(GENESIS.to_string(), |t| sha256_hex(t.as_bytes()));
    let mut dirs: Vec<String> = std::fs::read_dir(archive.join(ENTRIES))
        .map(|d| {
            d.flatten()
                .map(|e| e.file_name().to_string_lossy().to_string())
                .collect()
        })
        .unwrap_or_default();
    dirs.sort();
    for name in dirs {
        let short = &name[..12.min(name.len())];
        let stored = std::fs::read_to_string(entry_dir(archive, &name).join(LINE_FILE));
        let Ok(stored) = stored else {
            r.problems.push(format!("entry {short} has no `{LINE_FILE}`: it was not made by `archive add`, or it was altered"));
            continue;
        };
        let stored = stored.trim_end();
        if texts.iter().any(|t| t == stored) {
            continue;
        }
        match serde_json::from_str::<LogLine>(stored) {
            Ok(l) if l.seq == texts.len() as u64 + 1 && l.previous == head => r.notes.push(format!(
                "entry {short} is not in the log yet: an add was interrupted; `archive add` of the same package completes it"
            )),
            Ok(l) => r.problems.push(format!(
                "entry {short} ({} rev {}) was logged as line {}, which the log no longer has: the log was cut short or edited",
                l.project, l.revision, l.seq
            )),
            Err(_) => r.problems.push(format!("entry {short}: `{LINE_FILE}` is damaged")),
        }
    }
    if let Ok(st) = std::fs::read_dir(archive.join(STAGING)) {
        let n = st.count();
        if n > 0 {
            r.notes.push(format!("{n} unfinished cop(ies) in `{STAGING}` from interrupted adds; they are not entries and can be removed"));
        }
    }
    if archive.join(LOCK).exists() {
        r.notes.push(format!("`{LOCK}` is present: an add is running, or one was stopped; remove it if none is running"));
    }
    Ok(r)
}

/// The problems of one logged entry: its manifest, files and signatures.
fn entry_problems(archive: &Path, l: &LogLine, problems: &mut Vec<String>) {
    let dir = entry_dir(archive, &l.entry);
    let at = format!(
        "entry {} ({} rev {})",
        &l.entry[..12.min(l.entry.len())],
        l.project,
        l.revision
    );
    let (m, bytes) = match Manifest::read(&dir) {
        Ok(x) => x,
        Err(e) => return problems.push(format!("{at}: {e}")),
    };
    if sha256_hex(&bytes) != l.entry {
        problems.push(format!(
            "{at}: `manifest.json` has changed (its SHA-256 no longer names the entry)"
        ));
    }
    for p in m.check_files_allowing(&dir, &[LINE_FILE]) {
        problems.push(format!("{at}: {p}"));
    }
    let s = match signature::read(&dir) {
        Ok(s) => s,
        Err(e) => return problems.push(format!("{at}: {e}")),
    };
    for e in &s.signatures {
        if let Verdict::Invalid(why) = signature::check(e, &bytes, &[]) {
            problems.push(format!(
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
        problems.push(format!(
            "{at}: its signatures differ from those the log recorded"
        ));
    }
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
