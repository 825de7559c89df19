//! The life of a package: deterministic build with a manifest and PDF attachments,
//! revision diff, sign-off, verification (tampering, untrusted keys, drift) and the
//! archive (tamper detection, interrupted adds). Regression tests for issue 5.

mod common;

use bridgebook::package::{archive, attachments, manifest::Manifest, sha256_hex};
use common::{run, stderr, stdout, Scratch};
use std::path::{Path, PathBuf};

fn design(name: &str) -> String {
    format!("{}/designs/{name}", env!("CARGO_MANIFEST_DIR"))
}

/// Builds a demo into `out` and returns its package folder.
fn build(name: &str, out: &Path) -> PathBuf {
    let o = run(&["build", &design(name), "--out", out.to_str().unwrap()]);
    assert!(
        matches!(o.status.code(), Some(0) | Some(1)),
        "{}",
        stderr(&o)
    );
    let line = stdout(&o);
    let pdf = line.lines().nth(1).unwrap().trim();
    Path::new(pdf).parent().unwrap().to_path_buf()
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn keygen(dir: &Path, name: &str) -> (PathBuf, PathBuf) {
    let key = dir.join(name);
    let o = run(&["keygen", "--out", s(&key)]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    (key.clone(), dir.join(format!("{name}.pub")))
}

/// The hex key of a public key file (`bridgebook-public-key 1`, then `ed25519-public HEX`).
fn key_hex(public: &Path) -> String {
    let text = std::fs::read_to_string(public).unwrap();
    text.lines()
        .nth(1)
        .unwrap()
        .split(' ')
        .nth(1)
        .unwrap()
        .to_string()
}

fn sign(pkg: &Path, key: &Path, role: &str, name: &str) {
    let o = run(&[
        "sign",
        s(pkg),
        "--key",
        s(key),
        "--role",
        role,
        "--name",
        name,
        "--date",
        "2026-12-01",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

/// Flips one byte of a file in place (the middle byte), keeping its permissions usable.
fn flip_byte(path: &Path) {
    let mut p = std::fs::metadata(path).unwrap().permissions();
    #[allow(clippy::permissions_set_readonly_false)]
    p.set_readonly(false);
    std::fs::set_permissions(path, p).unwrap();
    let mut bytes = std::fs::read(path).unwrap();
    let i = bytes.len() / 2;
    bytes[i] ^= 0x01;
    std::fs::write(path, bytes).unwrap();
}

/// Flips a byte in each file the manifest lists, one at a time, and runs `args`: each
/// run must exit 3 (tampered) and name the file; the file is restored after.
fn each_flipped_byte_is_named(dir: &Path, m: &Manifest, args: &[&str]) {
    for f in &m.files {
        let path = dir.join(&f.name);
        let original = std::fs::read(&path).unwrap();
        flip_byte(&path);
        let o = run(args);
        assert_eq!(o.status.code(), Some(3), "{}: {}", f.name, stdout(&o));
        let named = format!("`{}` has changed", f.name);
        assert!(stdout(&o).contains(&named), "{}", stdout(&o));
        std::fs::write(&path, original).unwrap();
    }
}

#[test]
fn issue_5_rebuilds_are_byte_identical_with_manifest_and_archival_pdf() {
    let sc = Scratch::new("lc-repro");
    let a = build("fen-barn.yaml", &sc.path().join("a"));
    let b = build("fen-barn.yaml", &sc.path().join("b"));
    let (ma, bytes_a) = Manifest::read(&a).unwrap();
    let (_, bytes_b) = Manifest::read(&b).unwrap();
    assert_eq!(bytes_a, bytes_b, "manifests differ between two builds");
    for f in &ma.files {
        assert_eq!(
            std::fs::read(a.join(&f.name)).unwrap(),
            std::fs::read(b.join(&f.name)).unwrap(),
            "{} differs between two builds",
            f.name
        );
        // FIPS 180-4 SHA-256 of each file as the manifest lists it.
        assert_eq!(
            sha256_hex(&std::fs::read(a.join(&f.name)).unwrap()),
            f.sha256
        );
    }
    let names: Vec<&str> = ma.files.iter().map(|f| f.name.as_str()).collect();
    for n in [
        "package.pdf",
        "results.json",
        "record.json",
        "loss-breakdown.svg",
    ] {
        assert!(names.contains(&n), "{n} not in the manifest");
    }
    // PDF/A-3b (ISO 19005-3): the XMP identification schema says part 3, conformance B.
    let pdf = std::fs::read(a.join("package.pdf")).unwrap();
    let text = String::from_utf8_lossy(&pdf);
    assert!(text.contains("<pdfaid:part>3</pdfaid:part>"));
    assert!(text.contains("<pdfaid:conformance>B</pdfaid:conformance>"));
    // The attachments are the package's own record and results, byte for byte in meaning.
    let (record, results) = attachments::record_and_results(&pdf).unwrap();
    let on_disk: serde_json::Value =
        serde_json::from_slice(&std::fs::read(a.join("record.json")).unwrap()).unwrap();
    assert_eq!(record, on_disk);
    let on_disk: serde_json::Value =
        serde_json::from_slice(&std::fs::read(a.join("results.json")).unwrap()).unwrap();
    assert_eq!(results, on_disk);
    // The package id of the manifest is the stamp's, and the revision block prints it.
    assert_eq!(
        results["stamp"]["package_id"].as_str().unwrap(),
        ma.package_id
    );
    let rec = common::load(&common::demo("fen-barn.yaml"));
    let sheet = bridgebook::calc::evaluate(&rec.design);
    let templates = bridgebook::report::Templates::builtin();
    let stamp = bridgebook::package::stamp(&rec, &templates);
    let r = bridgebook::report::render(&rec, &sheet, &stamp, &templates).unwrap();
    assert!(
        r.typst
            .contains(&format!("package-id: \"{}\"", ma.package_id)),
        "package id not in the revision block"
    );
}

#[test]
fn issue_5_revisions_a_and_b_diff_to_the_expected_changes() {
    let sc = Scratch::new("lc-diff");
    let out = sc.path().join("out");
    let a = build("ridge-pump-a.yaml", &out);
    let b = build("ridge-pump-b.yaml", &out);
    let o = run(&[
        "diff",
        s(&a),
        s(&b),
        "--json",
        "--pdf",
        s(&sc.path().join("delta.pdf")),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let d: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let input = |key: &str| {
        d["inputs"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["key"] == key)
            .cloned()
    };
    // What rev B's revision entry says changed (designs/ridge-pump-b.yaml).
    let f = input("bridge.switching_frequency").expect("switching frequency change");
    assert_eq!(
        (f["old"].as_str(), f["new"].as_str()),
        (Some("16 kHz"), Some("20 kHz"))
    );
    let c = input("filter.capacitance").expect("capacitance change");
    assert_eq!(
        (c["old"].as_str(), c["new"].as_str()),
        (Some("6.8 uF"), Some("10 uF"))
    );
    assert!(
        input("filter.inductance").is_none(),
        "the inductance did not change"
    );
    let q = d["quantities"].as_array().unwrap();
    let fsw = q.iter().find(|x| x["id"] == "bridge.f_sw").unwrap();
    assert!((fsw["relative"].as_f64().unwrap() - 0.25).abs() < 1e-12);
    // f0 = 1 / (2 pi sqrt(L C)) moves by sqrt(6.8 / 10) - 1 (circuit theory).
    let f0 = q.iter().find(|x| x["id"] == "filter.f0").unwrap();
    assert!((f0["relative"].as_f64().unwrap() - ((6.8f64 / 10.0).sqrt() - 1.0)).abs() < 1e-9);
    assert!(
        q.iter().all(|x| x["id"] != "output.v_rms"),
        "the output voltage did not change"
    );
    let flipped = d["checks_flipped"].as_array().unwrap();
    assert_eq!(flipped.len(), 1, "{flipped:?}");
    assert_eq!(flipped[0]["id"], "check.filter.ripple");
    assert_eq!(
        (
            flipped[0]["old_pass"].as_bool(),
            flipped[0]["new_pass"].as_bool()
        ),
        (Some(false), Some(true))
    );
    let pdf = std::fs::read(sc.path().join("delta.pdf")).unwrap();
    assert!(pdf.starts_with(b"%PDF"));
    // The same delta from the PDFs (their attachments) and from the records.
    let from_pdf = run(&[
        "diff",
        s(&a.join("package.pdf")),
        s(&b.join("package.pdf")),
        "--json",
    ]);
    let p: serde_json::Value = serde_json::from_str(&stdout(&from_pdf)).unwrap();
    assert_eq!(p["inputs"], d["inputs"]);
    assert_eq!(p["quantities"], d["quantities"]);
    let from_records = run(&[
        "diff",
        &design("ridge-pump-a.yaml"),
        &design("ridge-pump-b.yaml"),
        "--json",
    ]);
    let r: serde_json::Value = serde_json::from_str(&stdout(&from_records)).unwrap();
    assert_eq!(r["checks_flipped"], d["checks_flipped"]);
    // A package against itself: nothing changed, exit 0.
    let same = run(&["diff", s(&b), s(&b)]);
    assert_eq!(same.status.code(), Some(0), "{}", stdout(&same));
    assert!(stdout(&same).contains("no change"));
    // A tolerance that is not a number is bad usage.
    let bad = run(&["diff", s(&a), s(&b), "--tolerance", "lots"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(stderr(&bad).contains("hint:"), "{}", stderr(&bad));
}

#[test]
fn issue_5_a_byte_flipped_in_any_file_is_detected_and_named() {
    let sc = Scratch::new("lc-tamper");
    let pkg = build("alder-hut.yaml", &sc.path().join("out"));
    let (key, public) = keygen(sc.path(), "checker");
    sign(&pkg, &key, "checked", "C. Checker");
    let ok = run(&["verify", s(&pkg), "--trust", s(&public)]);
    assert_eq!(ok.status.code(), Some(0), "{}", stdout(&ok));
    assert!(stdout(&ok).contains("intact and current"));
    let (m, _) = Manifest::read(&pkg).unwrap();
    each_flipped_byte_is_named(&pkg, &m, &["verify", s(&pkg), "--trust", s(&public)]);
    // The manifest itself: every signature then signs another manifest.
    let mpath = pkg.join("manifest.json");
    let original = std::fs::read(&mpath).unwrap();
    let edited = String::from_utf8(original.clone())
        .unwrap()
        .replace("\"revision\": \"A\"", "\"revision\": \"B\"");
    std::fs::write(&mpath, edited).unwrap();
    let o = run(&["verify", s(&pkg), "--trust", s(&public)]);
    assert_eq!(o.status.code(), Some(4), "{}", stdout(&o));
    assert!(
        stdout(&o).contains("signs a different manifest"),
        "{}",
        stdout(&o)
    );
    std::fs::write(&mpath, original).unwrap();
    // A file added beside the listed ones.
    std::fs::write(pkg.join("extra.txt"), "x").unwrap();
    let o = run(&["verify", s(&pkg)]);
    assert_eq!(o.status.code(), Some(3));
    assert!(stdout(&o).contains("`extra.txt` is in the package but not in its manifest"));
}

#[test]
fn issue_5_untrusted_or_wrong_keys_fail() {
    let sc = Scratch::new("lc-keys");
    let pkg = build("ridge-pump-b.yaml", &sc.path().join("out"));
    let (key_a, pub_a) = keygen(sc.path(), "alice");
    let (_, pub_b) = keygen(sc.path(), "bob");
    sign(&pkg, &key_a, "approved", "A. Approver");
    // Signed by A, only B trusted.
    let o = run(&["verify", s(&pkg), "--trust", s(&pub_b)]);
    assert_eq!(o.status.code(), Some(4), "{}", stdout(&o));
    assert!(stdout(&o).contains("UNTRUSTED"));
    // A signature whose signed fields were edited (the name), or whose key was swapped.
    let sigs = pkg.join("signatures.json");
    let original = std::fs::read_to_string(&sigs).unwrap();
    std::fs::write(&sigs, original.replace("A. Approver", "M. Allory")).unwrap();
    let o = run(&["verify", s(&pkg), "--trust", s(&pub_a)]);
    assert_eq!(o.status.code(), Some(4));
    assert!(stdout(&o).contains("INVALID"), "{}", stdout(&o));
    let (a_hex, b_hex) = (key_hex(&pub_a), key_hex(&pub_b));
    std::fs::write(&sigs, original.replace(&a_hex, &b_hex)).unwrap();
    let o = run(&["verify", s(&pkg), "--trust", s(&pub_b)]);
    assert_eq!(o.status.code(), Some(4), "{}", stdout(&o));
    std::fs::write(&sigs, &original).unwrap();
    let o = run(&["verify", s(&pkg), "--trust", &a_hex]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));
    // The private key is the owner's alone, and a key is never overwritten.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(&key_a).unwrap().permissions().mode();
        assert_eq!(mode & 0o077, 0, "private key mode {mode:o}");
    }
    let again = run(&["keygen", "--out", s(&key_a)]);
    assert_eq!(again.status.code(), Some(2));
}

#[test]
fn issue_5_a_package_signed_under_an_older_engine_reports_drift_not_tampering() {
    // Simulate an older engine: its results differ from today's in one quantity, and
    // its manifest and signature are consistent with those results.
    let sc = Scratch::new("lc-drift");
    let pkg = build("ridge-pump-b.yaml", &sc.path().join("out"));
    let results_path = pkg.join("results.json");
    let mut results: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&results_path).unwrap()).unwrap();
    let q = results["quantities"]
        .as_array_mut()
        .unwrap()
        .iter_mut()
        .find(|q| q["id"] == "filter.f0")
        .unwrap();
    let old = q["value"].as_f64().unwrap();
    q["value"] = serde_json::json!(old * 1.02);
    std::fs::write(&results_path, serde_json::to_vec_pretty(&results).unwrap()).unwrap();
    let (mut m, _) = Manifest::read(&pkg).unwrap();
    for f in &mut m.files {
        let bytes = std::fs::read(pkg.join(&f.name)).unwrap();
        f.sha256 = sha256_hex(&bytes);
        f.bytes = bytes.len() as u64;
    }
    std::fs::write(pkg.join("manifest.json"), m.to_bytes()).unwrap();
    let (key, public) = keygen(sc.path(), "checker");
    sign(&pkg, &key, "checked", "C. Checker");
    let o = run(&["verify", s(&pkg), "--trust", s(&public)]);
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    let text = stdout(&o);
    assert!(text.contains("DRIFTED"), "{text}");
    assert!(text.contains("filter.f0"), "{text}");
    assert!(!text.contains("TAMPERED"), "{text}");
}

#[test]
fn issue_5_archive_detects_tampering_and_survives_interrupted_adds() {
    let sc = Scratch::new("lc-archive");
    let out = sc.path().join("out");
    let vault = sc.path().join("vault");
    let a = build("ridge-pump-a.yaml", &out);
    let b = build("ridge-pump-b.yaml", &out);
    let c = build("alder-hut.yaml", &out);
    let (key, _) = keygen(sc.path(), "approver");
    sign(&b, &key, "approved", "P. Approver");
    let o = run(&["archive", "add", s(&a), "--to", s(&vault)]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let first = archive::read_log(&vault).unwrap();

    // Interrupt the add of B after each step in turn: the archive stays verifiable,
    // entry A stays intact, and a later add completes B.
    for (k, step) in [
        archive::Step::Copied,
        archive::Step::Renamed,
        archive::Step::Logged,
    ]
    .into_iter()
    .enumerate()
    {
        let fail_at = step;
        let r = archive::add(&b, &vault, &[], &mut |s| {
            if s == fail_at {
                Err(std::io::Error::other("injected failure"))
            } else {
                Ok(())
            }
        });
        assert!(
            r.is_err(),
            "step {k}: the injected failure was not reported"
        );
        let report = archive::verify(&vault).unwrap();
        assert!(
            report.problems.is_empty(),
            "step {k}: {:?}",
            report.problems
        );
        let lines = archive::read_log(&vault).unwrap();
        assert_eq!(lines[0], first[0], "step {k}: entry A's log line changed");
        if step == archive::Step::Logged {
            // The failure came after the log was written: B is archived.
            assert_eq!(lines.len(), 2);
        } else {
            assert_eq!(lines.len(), 1, "step {k}");
            if step == archive::Step::Renamed {
                assert!(
                    report.notes.iter().any(|n| n.contains("not in the log")),
                    "{:?}",
                    report.notes
                );
            }
        }
    }
    // Adding B again is refused: entries are never replaced.
    let again = run(&["archive", "add", s(&b), "--to", s(&vault)]);
    assert_eq!(again.status.code(), Some(2));
    assert!(
        stderr(&again).contains("already archived"),
        "{}",
        stderr(&again)
    );
    let o = run(&["archive", "add", s(&c), "--to", s(&vault)]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));

    // list and show by package id.
    let list = stdout(&run(&["archive", "list", "--in", s(&vault)]));
    assert_eq!(list.lines().count(), 3, "{list}");
    assert!(list.contains("approved: P. Approver"), "{list}");
    let (mb, _) = Manifest::read(&b).unwrap();
    let show = run(&["archive", "show", &mb.package_id[..9], "--in", s(&vault)]);
    assert_eq!(show.status.code(), Some(0), "{}", stderr(&show));
    assert!(
        stdout(&show).contains("signed approved by P. Approver"),
        "{}",
        stdout(&show)
    );

    // Entries are read-only on disk.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let entry = archive::entry_path(&vault, &archive::find(&vault, &mb.package_id).unwrap());
        for e in std::fs::read_dir(&entry).unwrap().flatten() {
            assert_eq!(
                e.metadata().unwrap().permissions().mode() & 0o222,
                0,
                "{:?} is writable",
                e.path()
            );
        }
    }

    // An entry is itself a package that `verify` accepts (its log line aside).
    let entry = archive::entry_path(&vault, &archive::find(&vault, &mb.package_id).unwrap());
    let o = run(&["verify", s(&entry)]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));

    // A byte flipped in any file of an entry is found and the file named.
    let ok = run(&["archive", "verify", "--in", s(&vault)]);
    assert_eq!(ok.status.code(), Some(0), "{}", stdout(&ok));
    let entry = archive::entry_path(&vault, &archive::find(&vault, &mb.package_id).unwrap());
    each_flipped_byte_is_named(&entry, &mb, &["archive", "verify", "--in", s(&vault)]);
    // An edited log line breaks the chain.
    let log = vault.join("log.jsonl");
    let text = std::fs::read_to_string(&log).unwrap();
    std::fs::write(
        &log,
        text.replacen("\"revision\":\"A\"", "\"revision\":\"Z\"", 1),
    )
    .unwrap();
    let o = run(&["archive", "verify", "--in", s(&vault)]);
    assert_eq!(o.status.code(), Some(3), "{}", stdout(&o));
    assert!(
        stdout(&o).contains("does not follow line 1"),
        "{}",
        stdout(&o)
    );
}

#[test]
fn issue_5_signed_packages_are_kept_and_damaged_signatures_fail() {
    let sc = Scratch::new("lc-signed");
    let out = sc.path().join("out");
    let pkg = build("ridge-pump-b.yaml", &out);
    let (key, public) = keygen(sc.path(), "checker");
    sign(&pkg, &key, "checked", "C. Checker");
    // The same record rebuilt: the same bytes, so the signatures stay and still hold.
    build("ridge-pump-b.yaml", &out);
    let o = run(&["verify", s(&pkg), "--trust", s(&public)]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));
    // A changed record built into the signed folder is refused, and nothing is written.
    let text =
        common::demo("ridge-pump-b.yaml").replace("auxiliary_power: 15 W", "auxiliary_power: 16 W");
    let changed = sc.write("changed.yaml", &text);
    std::fs::create_dir_all(sc.path().join("parts")).unwrap();
    std::fs::copy(
        format!("{}/designs/parts/devices.yaml", env!("CARGO_MANIFEST_DIR")),
        sc.path().join("parts/devices.yaml"),
    )
    .unwrap();
    let before = std::fs::read(pkg.join("manifest.json")).unwrap();
    let o = run(&["build", s(&changed), "--out", s(&out)]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("holds a signed package"),
        "{}",
        stderr(&o)
    );
    assert_eq!(std::fs::read(pkg.join("manifest.json")).unwrap(), before);
    // A signatures file that is not one: a signature problem (4), not bad usage.
    let sigs = pkg.join("signatures.json");
    let original = std::fs::read(&sigs).unwrap();
    std::fs::write(&sigs, "{ not json").unwrap();
    let o = run(&["verify", s(&pkg)]);
    assert_eq!(o.status.code(), Some(4), "{}", stdout(&o));
    assert!(stdout(&o).contains("UNREADABLE"), "{}", stdout(&o));
    std::fs::write(&sigs, original).unwrap();
    // The archive can require a trusted signature.
    let (_, other) = keygen(sc.path(), "stranger");
    let vault = sc.path().join("vault");
    let o = run(&[
        "archive",
        "add",
        s(&pkg),
        "--to",
        s(&vault),
        "--trust",
        s(&other),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("no signature of the package is by a trusted key"));
    let o = run(&[
        "archive",
        "add",
        s(&pkg),
        "--to",
        s(&vault),
        "--trust",
        s(&public),
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

#[test]
fn issue_5_a_log_cut_short_is_found_and_adds_take_turns() {
    let sc = Scratch::new("lc-cut");
    let out = sc.path().join("out");
    let vault = sc.path().join("vault");
    for name in ["ridge-pump-a.yaml", "ridge-pump-b.yaml", "alder-hut.yaml"] {
        let pkg = build(name, &out);
        let o = run(&["archive", "add", s(&pkg), "--to", s(&vault)]);
        assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    }
    let log = vault.join("log.jsonl");
    let text = std::fs::read_to_string(&log).unwrap();
    // The last two lines cut off: the chain of what is left is sound, but entry 2's own
    // copy of its line is no longer in the log.
    let kept: String = text.lines().take(1).map(|l| format!("{l}\n")).collect();
    std::fs::write(&log, kept).unwrap();
    let o = run(&["archive", "verify", "--in", s(&vault)]);
    assert_eq!(o.status.code(), Some(3), "{}", stdout(&o));
    assert!(
        stdout(&o).contains("which the log no longer has"),
        "{}",
        stdout(&o)
    );
    // A line that is not JSON is damage (3), not bad usage.
    std::fs::write(&log, format!("{text}garbage\n")).unwrap();
    let o = run(&["archive", "verify", "--in", s(&vault)]);
    assert_eq!(o.status.code(), Some(3), "{}", stdout(&o));
    std::fs::write(&log, &text).unwrap();
    // A second add while one runs (its lock present) is refused.
    std::fs::write(vault.join(".lock"), "").unwrap();
    let pkg = build("fen-barn.yaml", &out);
    let o = run(&["archive", "add", s(&pkg), "--to", s(&vault)]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("another `archive add` is running"),
        "{}",
        stderr(&o)
    );
    std::fs::remove_file(vault.join(".lock")).unwrap();
    let o = run(&["archive", "add", s(&pkg), "--to", s(&vault)]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let o = run(&["archive", "verify", "--in", s(&vault)]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));
}

#[test]
fn issue_5_diff_pdf_to_a_bare_file_name() {
    // `--pdf delta.pdf` in the current folder (a path with no folder part).
    let sc = Scratch::new("lc-bare");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_bridgebook"))
        .current_dir(sc.path())
        .args([
            "diff",
            &design("ridge-pump-a.yaml"),
            &design("ridge-pump-b.yaml"),
            "--pdf",
            "delta.pdf",
        ])
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(std::fs::read(sc.path().join("delta.pdf"))
        .unwrap()
        .starts_with(b"%PDF"));
}
