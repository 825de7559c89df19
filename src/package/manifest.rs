//! `manifest.json`: every file of a package with its SHA-256 and size, and the hashes
//! the package was made from. Signatures are made over the manifest's bytes, so a
//! signature covers every file through it.

use super::{sha256_hex, Stamp};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The file name of the manifest in a package folder.
pub const MANIFEST: &str = "manifest.json";
/// The format tag of the manifest.
pub const FORMAT: &str = "bridgebook-manifest 1";

#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct FileEntry {
    pub name: String,
    pub sha256: String,
    pub bytes: u64,
}

#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Manifest {
    pub format: String,
    pub package_id: String,
    pub project: String,
    pub revision: String,
    /// The record's date: a package carries no wall-clock time.
    pub date: String,
    pub engine: String,
    pub engine_sha256: String,
    pub templates_sha256: String,
    pub record_sha256: String,
    /// Sorted by name; the manifest itself is not listed.
    pub files: Vec<FileEntry>,
}

impl Manifest {
    /// The manifest of a package's files (the manifest itself left out).
    pub fn of(
        stamp: &Stamp,
        project: &str,
        revision: &str,
        date: &str,
        files: &[(String, Vec<u8>)],
    ) -> Manifest {
        let mut entries: Vec<FileEntry> = files
            .iter()
            .filter(|(n, _)| n != MANIFEST)
            .map(|(name, bytes)| FileEntry {
                name: name.clone(),
                sha256: sha256_hex(bytes),
                bytes: bytes.len() as u64,
            })
            .collect();
        entries.sort_by(|a, b| a.name.cmp(&b.name));
        Manifest {
            format: FORMAT.to_string(),
            package_id: stamp.package_id.clone(),
            project: project.to_string(),
            revision: revision.to_string(),
            date: date.to_string(),
            engine: stamp.engine_version.clone(),
            engine_sha256: stamp.engine_sha256.clone(),
            templates_sha256: stamp.templates_sha256.clone(),
            record_sha256: stamp.record_sha256.clone(),
            files: entries,
        }
    }

    /// The manifest's bytes as written (pretty JSON, fields in declaration order).
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut v = serde_json::to_vec_pretty(self).unwrap_or_default();
        v.push(b'\n');
        v
    }

    /// Reads the manifest of the package folder `dir`: its parsed form and its bytes.
    pub fn read(dir: &Path) -> Result<(Manifest, Vec<u8>), String> {
        let path = dir.join(MANIFEST);
        let bytes =
            std::fs::read(&path).map_err(|e| format!("cannot read `{}`: {e}", path.display()))?;
        let m: Manifest = serde_json::from_slice(&bytes)
            .map_err(|e| format!("`{}` is not a bridgebook manifest: {e}", path.display()))?;
        if m.format != FORMAT {
            return Err(format!(
                "`{}` has format `{}`, this engine reads `{FORMAT}`",
                path.display(),
                m.format
            ));
        }
        for f in &m.files {
            if !safe_name(&f.name) {
                return Err(format!(
                    "`{}` lists a file outside the package: `{}`",
                    path.display(),
                    f.name
                ));
            }
        }
        Ok((m, bytes))
    }

    /// What differs between the listed files and the files in `dir`: each problem
    /// names the file. Files present but not listed count too (a manifest and the
    /// signatures file excepted).
    pub fn check_files(&self, dir: &Path) -> Vec<String> {
        self.check_files_allowing(dir, &[])
    }

    /// As [`Manifest::check_files`], with more file names that may stand beside the
    /// listed ones (an archive entry's own log line).
    pub fn check_files_allowing(&self, dir: &Path, allowed: &[&str]) -> Vec<String> {
        let mut problems = Vec::new();
        for f in &self.files {
            match std::fs::read(dir.join(&f.name)) {
                Err(_) => problems.push(format!(
                    "`{}` is listed in the manifest but missing",
                    f.name
                )),
                Ok(bytes) => {
                    let h = sha256_hex(&bytes);
                    if h != f.sha256 {
                        problems.push(format!(
                            "`{}` has changed: SHA-256 {} where the manifest has {}",
                            f.name,
                            &h[..16],
                            &f.sha256[..16.min(f.sha256.len())]
                        ));
                    }
                }
            }
        }
        if let Ok(entries) = std::fs::read_dir(dir) {
            let mut extra: Vec<String> = entries
                .flatten()
                .map(|e| e.file_name().to_string_lossy().to_string())
                .filter(|n| {
                    n != MANIFEST
                        && n != super::signature::SIGNATURES
                        && !allowed.contains(&n.as_str())
                        && !self.files.iter().any(|f| &f.name == n)
                })
                .collect();
            extra.sort();
            for n in extra {
                problems.push(format!("`{n}` is in the package but not in its manifest"));
            }
        }
        problems
    }
}

/// A plain file name: no folders, no parent references.
pub fn safe_name(name: &str) -> bool {
    !name.is_empty()
        && !name.starts_with('.')
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
}
