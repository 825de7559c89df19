//! The package on disk: canonical hashes, `results.json`, and the atomic write of the
//! package folder `OUT/<project id>/<revision>/`.
//!
//! The record hash is taken over the record's canonical form: the parsed document as
//! compact JSON with keys sorted, so that comments, whitespace, quoting and key order
//! do not change it while any change of a value does.

pub mod archive;
pub mod attachments;
pub mod diff;
pub mod manifest;
pub mod signature;
pub mod verify;

use crate::record::{Design, Record};
use crate::report::{self, Templates};
use crate::sheet::Sheet;
use serde_json::{json, Map, Value as Json};
use sha2::{Digest, Sha256};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The engine's name and version, part of every stamp.
pub const ENGINE_VERSION: &str = concat!("bridgebook ", env!("CARGO_PKG_VERSION"));

/// SHA-256 of the engine's source files, computed when it was compiled (`src/build.rs`).
pub const SOURCE_SHA256: &str = env!("BRIDGEBOOK_SOURCE_SHA256");

/// The hashes that identify what a package was made from.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Stamp {
    /// SHA-256 of the canonical record.
    pub record_sha256: String,
    /// SHA-256 of the engine version, the engine's source and every template file.
    pub engine_sha256: String,
    /// SHA-256 of the template files alone.
    pub templates_sha256: String,
    pub engine_version: String,
    /// A short id derived from the record and engine hashes, printed in the revision
    /// block so that a paper copy can be matched to its package and archive entry.
    pub package_id: String,
}

/// The package id of a record hash and an engine hash: the first 80 bits of
/// SHA-256("bridgebook package" | record | engine) as five groups of four hex digits.
pub fn package_id(record_sha256: &str, engine_sha256: &str) -> String {
    let h = sha256_hex(format!("bridgebook package|{record_sha256}|{engine_sha256}").as_bytes());
    let groups: Vec<&str> = (0..5).map(|i| &h[4 * i..4 * i + 4]).collect();
    groups.join("-")
}

pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

fn hex(bytes: &[u8]) -> String {
    let mut s = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        let _ = write!(s, "{b:02x}");
    }
    s
}

/// The canonical JSON of a YAML document: keys sorted, compact.
pub fn canonical_json(doc: &serde_yaml::Value) -> Json {
    use serde_yaml::Value as Y;
    match doc {
        Y::Null => Json::Null,
        Y::Bool(b) => Json::Bool(*b),
        Y::Number(n) => {
            if let Some(i) = n.as_i64() {
                json!(i)
            } else if let Some(u) = n.as_u64() {
                json!(u)
            } else {
                n.as_f64()
                    .and_then(serde_json::Number::from_f64)
                    .map_or(Json::Null, Json::Number)
            }
        }
        Y::String(s) => Json::String(s.clone()),
        Y::Sequence(items) => Json::Array(items.iter().map(canonical_json).collect()),
        Y::Mapping(m) => {
            let mut entries: Vec<(String, Json)> = m
                .iter()
                .map(|(k, v)| {
                    let key = match k {
                        Y::String(s) => s.clone(),
                        other => serde_json::to_string(&canonical_json(other)).unwrap_or_default(),
                    };
                    (key, canonical_json(v))
                })
                .collect();
            entries.sort_by(|a, b| a.0.cmp(&b.0));
            Json::Object(entries.into_iter().collect::<Map<String, Json>>())
        }
        Y::Tagged(t) => json!({ format!("!{}", t.tag): canonical_json(&t.value) }),
    }
}

/// The templates' hash and the engine hash (version, source and templates).
pub fn engine_hashes(templates: &Templates) -> (String, String) {
    let mut tpl = Sha256::new();
    for (name, bytes) in &templates.files {
        // Length-prefixed so that moving bytes between names changes the hash.
        tpl.update((name.len() as u64).to_le_bytes());
        tpl.update(name.as_bytes());
        tpl.update((bytes.len() as u64).to_le_bytes());
        tpl.update(bytes);
    }
    let templates_sha256 = hex(&tpl.finalize());
    let engine_sha256 =
        sha256_hex(format!("{ENGINE_VERSION}|{SOURCE_SHA256}|{templates_sha256}").as_bytes());
    (templates_sha256, engine_sha256)
}

/// Hashes a record and the templates it is rendered with.
pub fn stamp(record: &Record, templates: &Templates) -> Stamp {
    let canonical = canonical_json(&record.document).to_string();
    let (templates_sha256, engine_sha256) = engine_hashes(templates);
    let record_sha256 = sha256_hex(canonical.as_bytes());
    Stamp {
        package_id: package_id(&record_sha256, &engine_sha256),
        record_sha256,
        engine_sha256,
        templates_sha256,
        engine_version: ENGINE_VERSION.to_string(),
    }
}

/// The results document: the canonical record, every quantity and every check.
pub fn results_json(record: &Record, sheet: &Sheet, stamp: &Stamp) -> Json {
    let d: &Design = &record.design;
    json!({
        "design": canonical_json(&record.document),
        "stamp": {
            "project": d.project.id,
            "revision": d.project.revision,
            "package_id": stamp.package_id,
            "record_sha256": stamp.record_sha256,
            "engine_sha256": stamp.engine_sha256,
            "templates_sha256": stamp.templates_sha256,
            "engine": stamp.engine_version,
        },
        "quantities": sheet.quantities,
        "checks": sheet.checks,
        "warnings": sheet.warnings,
        "all_pass": sheet.all_pass(),
    })
}

/// A package as built: where it went and what it contains.
#[derive(Debug)]
pub struct Built {
    pub dir: PathBuf,
    pub pages: usize,
    pub files: Vec<String>,
}

/// Why a build failed.
#[derive(Debug)]
pub enum BuildError {
    /// A template or record text problem: bad input, exit code 2.
    Input(crate::diag::Diagnostics),
    /// The output folder could not be written.
    Io {
        path: PathBuf,
        error: std::io::Error,
    },
    /// typst rejected the generated source: a defect of a template or of the engine.
    Typeset(String),
    /// The folder holds a signed package that this build would change.
    Signed { dir: PathBuf, signatures: usize },
}

impl std::fmt::Display for BuildError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            BuildError::Input(d) => write!(f, "{d}"),
            BuildError::Io { path, error } => write!(
                f,
                "error: cannot write `{}`: {error}\n  = hint: check that the output folder is writable and the disk has space; nothing was changed",
                path.display()
            ),
            BuildError::Signed { dir, signatures } => write!(
                f,
                "error: `{}` holds a signed package ({signatures} signature(s)) that this build would change; nothing was written\n  = hint: a signed package is never overwritten: archive it with `bridgebook archive add`, give the changed design its own revision, or build into another `--out`",
                dir.display()
            ),
            BuildError::Typeset(t) => write!(
                f,
                "error: the package could not be typeset\n{t}\n  = hint: if the templates are your own, check `style.typ`; otherwise this is an internal error, please report"
            ),
        }
    }
}

/// The package's PDF.
pub const PDF_FILE: &str = "package.pdf";
/// The package's results document.
pub const RESULTS_FILE: &str = "results.json";
/// The package's design record in canonical form.
pub const RECORD_FILE: &str = "record.json";

/// The canonical record as a file: pretty JSON, keys sorted. It reads back as a record
/// (JSON is YAML), which is how `verify` and `diff` re-evaluate a package.
pub fn record_json(record: &Record) -> Vec<u8> {
    let mut v = serde_json::to_vec_pretty(&canonical_json(&record.document)).unwrap_or_default();
    v.push(b'\n');
    v
}

/// Evaluated and rendered package contents, ready to write.
pub struct Contents {
    pub files: Vec<(String, Vec<u8>)>,
    pub pages: usize,
}

/// Renders everything in memory.
pub fn assemble(
    record: &Record,
    sheet: &Sheet,
    templates: &Templates,
) -> Result<Contents, BuildError> {
    let stamp = stamp(record, templates);
    let results = serde_json::to_vec_pretty(&results_json(record, sheet, &stamp))
        .map_err(|e| BuildError::Typeset(format!("internal error: results: {e}")))?;
    let canonical = record_json(record);
    let attachments = [
        report::Attachment {
            name: RECORD_FILE.to_string(),
            description: "The design record in canonical form (keys sorted, values as written)"
                .to_string(),
            bytes: canonical.clone(),
        },
        report::Attachment {
            name: RESULTS_FILE.to_string(),
            description: "Every quantity and check of this package".to_string(),
            bytes: results.clone(),
        },
    ];
    let rendered = report::render_attached(record, sheet, &stamp, templates, &attachments)
        .map_err(|e| match e {
            report::RenderError::Input(d) => BuildError::Input(d),
            report::RenderError::Typeset(t) => BuildError::Typeset(t),
        })?;
    let mut files = vec![
        (PDF_FILE.to_string(), rendered.pdf),
        (RESULTS_FILE.to_string(), results),
        (RECORD_FILE.to_string(), canonical),
    ];
    for (name, svg) in rendered.plots {
        files.push((name, svg.into_bytes()));
    }
    let p = &record.design.project;
    let m = manifest::Manifest::of(&stamp, &p.id, &p.revision, &p.date.to_string(), &files);
    files.push((manifest::MANIFEST.to_string(), m.to_bytes()));
    Ok(Contents {
        files,
        pages: rendered.pages,
    })
}

/// The package folder of a design under `out`.
pub fn package_dir(out: &Path, design: &Design) -> PathBuf {
    out.join(&design.project.id).join(&design.project.revision)
}

/// Writes the files into `dir` atomically: all of them appear, or none changes.
///
/// Files go to a hidden sibling folder first; it is then renamed into place, and an
/// earlier package of the same revision is moved aside and removed only after.
pub fn write_atomic(dir: &Path, files: &[(String, Vec<u8>)]) -> Result<(), BuildError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |error| BuildError::Io { path, error }
    };
    let parent = dir.parent().unwrap_or(Path::new("."));
    std::fs::create_dir_all(parent).map_err(io(parent))?;
    let leaf = dir
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "package".into());
    let staging = parent.join(format!(".{leaf}.partial-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&staging);
    std::fs::create_dir(&staging).map_err(io(&staging))?;
    let result = (|| {
        for (name, bytes) in files {
            let path = staging.join(name);
            let mut f = std::fs::File::create(&path).map_err(io(&path))?;
            use std::io::Write;
            f.write_all(bytes).map_err(io(&path))?;
            f.sync_all().map_err(io(&path))?;
        }
        let old = parent.join(format!(".{leaf}.old-{}", std::process::id()));
        let had_old = dir.exists();
        if had_old {
            std::fs::rename(dir, &old).map_err(io(dir))?;
        }
        if let Err(e) = std::fs::rename(&staging, dir) {
            if had_old {
                let _ = std::fs::rename(&old, dir);
            }
            return Err(io(dir)(e));
        }
        if had_old {
            let _ = std::fs::remove_dir_all(&old);
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&staging);
    }
    result
}

/// Replaces one file atomically: written beside it under a temporary name, synced,
/// then renamed over it, and the folder synced, so a crash leaves the old file or the
/// new one, never half of either.
pub fn write_file_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    // A bare file name has an empty parent: the current folder.
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .map_or("file".into(), |n| n.to_string_lossy().to_string());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)?;
        sync_dir(dir)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Syncs a folder, so that a rename in it survives a power cut.
pub fn sync_dir(dir: &Path) -> std::io::Result<()> {
    match std::fs::File::open(dir) {
        Ok(f) => f.sync_all().or(Ok(())),
        Err(e) => Err(e),
    }
}

/// A rebuild of a signed package: byte for byte the same manifest keeps its
/// signatures (they still hold); a different one is refused, since replacing the
/// folder would throw the signed-off package away.
fn keep_signatures(dir: &Path, files: &mut Vec<(String, Vec<u8>)>) -> Result<(), BuildError> {
    let Ok(old) = std::fs::read(dir.join(signature::SIGNATURES)) else {
        return Ok(());
    };
    let count =
        serde_json::from_slice::<signature::Signatures>(&old).map_or(0, |s| s.signatures.len());
    let new_manifest = files
        .iter()
        .find(|(n, _)| n == manifest::MANIFEST)
        .map(|(_, b)| b.as_slice());
    let old_manifest = std::fs::read(dir.join(manifest::MANIFEST)).ok();
    if count > 0 && old_manifest.as_deref() != new_manifest {
        return Err(BuildError::Signed {
            dir: dir.to_path_buf(),
            signatures: count,
        });
    }
    files.push((signature::SIGNATURES.to_string(), old));
    Ok(())
}

/// Builds the package of a record into `out` and returns where it went.
pub fn build(
    record: &Record,
    sheet: &Sheet,
    templates: &Templates,
    out: &Path,
) -> Result<Built, BuildError> {
    let mut contents = assemble(record, sheet, templates)?;
    let dir = package_dir(out, &record.design);
    keep_signatures(&dir, &mut contents.files)?;
    write_atomic(&dir, &contents.files)?;
    Ok(Built {
        dir,
        pages: contents.pages,
        files: contents.files.into_iter().map(|(n, _)| n).collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_matches_the_published_test_vector() {
        // FIPS 180-2, Appendix B.1: SHA-256("abc").
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn canonical_form_ignores_order_comments_and_spacing() {
        let a: serde_yaml::Value =
            serde_yaml::from_str("b: 1\na: { y: \"2 V\", x: 3 }  # note\n").unwrap();
        let b: serde_yaml::Value = serde_yaml::from_str("a:\n  x: 3\n  y: 2 V\nb: 1\n").unwrap();
        assert_eq!(
            canonical_json(&a).to_string(),
            canonical_json(&b).to_string()
        );
        assert_eq!(
            canonical_json(&a).to_string(),
            r#"{"a":{"x":3,"y":"2 V"},"b":1}"#
        );
        let c: serde_yaml::Value = serde_yaml::from_str("a: { x: 3, y: 2.1 V }\nb: 1\n").unwrap();
        assert_ne!(
            canonical_json(&a).to_string(),
            canonical_json(&c).to_string()
        );
    }
}
