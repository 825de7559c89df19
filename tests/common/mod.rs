//! Helpers shared by the integration tests: scratch folders and running the binary.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::atomic::{AtomicUsize, Ordering};

/// A scratch folder removed when dropped.
pub struct Scratch(pub PathBuf);

impl Scratch {
    pub fn new(tag: &str) -> Scratch {
        static COUNTER: AtomicUsize = AtomicUsize::new(0);
        let n = COUNTER.fetch_add(1, Ordering::SeqCst);
        let dir =
            std::env::temp_dir().join(format!("bridgebook-test-{tag}-{}-{n}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("create scratch dir");
        Scratch(dir)
    }

    pub fn path(&self) -> &Path {
        &self.0
    }

    /// Copies the demos' device library (`designs/parts/`) into the folder, so that a
    /// demo record written here finds it.
    pub fn with_parts(self) -> Scratch {
        let from = Path::new(env!("CARGO_MANIFEST_DIR")).join("designs/parts");
        let to = self.0.join("parts");
        std::fs::create_dir_all(&to).expect("create parts dir");
        for e in std::fs::read_dir(from).expect("designs/parts").flatten() {
            std::fs::copy(e.path(), to.join(e.file_name())).expect("copy library");
        }
        self
    }

    /// Writes a file into the folder and returns its path.
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.0.join(name);
        std::fs::write(&p, text).expect("write scratch file");
        p
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Runs the bridgebook binary with arguments.
pub fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_bridgebook"))
        .args(args)
        .output()
        .expect("run bridgebook")
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).to_string()
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

/// Loads a record text (it must be valid) and evaluates it; device libraries are read
/// from `designs/`, as for the demos.
pub fn evaluate(text: &str) -> bridgebook::sheet::Sheet {
    bridgebook::calc::evaluate(&load(text).design)
}

/// Loads a record text (it must be valid), reading its libraries from `designs/`.
pub fn load(text: &str) -> bridgebook::record::Record {
    load_named("test.yaml", text)
}

/// As [`load`], with the name the messages give the record.
pub fn load_named(name: &str, text: &str) -> bridgebook::record::Record {
    let designs = bridgebook::record::reader::FolderIncludes(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("designs"),
    );
    bridgebook::record::load_str_with(name, text, &designs).unwrap_or_else(|e| panic!("{e}"))
}

/// `text` with `from` replaced by `to`; panics unless `from` stands in it exactly
/// once, so that a drifting demo fails the test instead of leaving the record valid.
pub fn edit(text: &str, from: &str, to: &str) -> String {
    let n = text.matches(from).count();
    assert_eq!(
        n, 1,
        "expected `{from}` exactly once in the record, found {n}"
    );
    text.replacen(from, to, 1)
}

/// The text of a demo record in `designs/`.
pub fn demo(name: &str) -> String {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("designs")
        .join(name);
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// Every demo record, by file name.
pub fn demos() -> Vec<String> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("designs");
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("designs/")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".yaml"))
        .collect();
    names.sort();
    names
}
