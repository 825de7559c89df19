//! Hashes the engine's source files into `BRIDGEBOOK_SOURCE_SHA256`, so that a package's
//! engine hash changes with any change of the code that computed it, not only with the
//! version number.

use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};

fn files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

fn main() {
    println!("cargo:rerun-if-changed=src");
    let mut list = Vec::new();
    files(Path::new("src"), &mut list);
    // Sorted by path, with forward slashes, so the hash does not depend on the order
    // the file system lists them in or on the platform.
    let mut named: Vec<(String, PathBuf)> = list
        .into_iter()
        .map(|p| (p.to_string_lossy().replace('\\', "/"), p))
        .collect();
    named.sort();
    let mut h = Sha256::new();
    for (name, path) in named {
        let bytes = std::fs::read(&path).unwrap_or_default();
        h.update((name.len() as u64).to_le_bytes());
        h.update(name.as_bytes());
        h.update((bytes.len() as u64).to_le_bytes());
        h.update(&bytes);
    }
    let hex: String = h.finalize().iter().map(|b| format!("{b:02x}")).collect();
    println!("cargo:rustc-env=BRIDGEBOOK_SOURCE_SHA256={hex}");
}
