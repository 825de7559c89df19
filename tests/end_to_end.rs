//! End to end: each demo builds a package through the real binary; the results honour
//! the contract; `explain` prints a chain; failing checks exit 1 with a marked package.

mod common;

use common::{run, stderr, stdout, Scratch};
use serde_json::Value;
use std::path::Path;

/// The ids other tools and tests rely on (the results contract of the foundation issue).
const CONTRACT: &[&str] = &[
    "output.v_peak",
    "output.i_rms",
    "modulation.m_f",
    "modulation.m_a_ideal.min",
    "modulation.m_a_ideal.nominal",
    "modulation.m_a_ideal.max",
    "modulation.m_a.min",
    "modulation.m_a.nominal",
    "modulation.m_a.max",
    "filter.inductance",
    "filter.capacitance",
];

/// The contract's LC results, for stand-alone designs.
const STANDALONE_CONTRACT: &[&str] = &["filter.f0", "filter.z0", "filter.zeta"];

/// What a grid-connected LCL design carries instead.
const GRID_CONTRACT: &[&str] = &[
    "filter.grid_side_inductance",
    "filter.f_res",
    "grid.inductance",
    "modulation.v_sw_pk",
];

/// The power stage's part of the contract, for records with `switches` and `dc_link`
/// (every demo).
const POWER_CONTRACT: &[&str] = &[
    "semi.v_peak",
    "semi.voltage_utilisation",
    "semi.current_utilisation",
    "semi.p_bridge.nominal",
    "thermal.t_j_hot",
    "dclink.i_rms.nominal",
    "dclink.life",
    "dclink.energy",
    "dclink.t_discharge",
    "efficiency.eta.nominal.k50",
    "efficiency.eta_cec.nominal",
    "efficiency.eta_eu.nominal",
    "ratings.i_out",
    "ratings.i_dc_max",
    "ratings.ocpd",
];

fn design_path(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("designs")
        .join(name)
        .display()
        .to_string()
}

/// A templates folder in `scratch` with this `package.md`, and the shipped `style.typ`
/// unless another style text is given.
fn template_dir(scratch: &Scratch, package_md: &str, style: Option<&str>) -> std::path::PathBuf {
    let dir = scratch.path().join("tpl");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("package.md"), package_md).unwrap();
    let style = match style {
        Some(text) => text.to_string(),
        None => std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("templates/style.typ"),
        )
        .unwrap(),
    };
    std::fs::write(dir.join("style.typ"), style).unwrap();
    dir
}

fn assert_contract(doc: &Value, at: &str) {
    assert!(doc["design"].is_object(), "{at}: design");
    let quantities = doc["quantities"].as_array().expect("quantities");
    let grid = doc["design"]["output"]["connection"] == "grid";
    let extra = if grid {
        GRID_CONTRACT
    } else {
        STANDALONE_CONTRACT
    };
    let power: &[&str] =
        if doc["design"]["switches"].is_object() && doc["design"]["dc_link"].is_object() {
            POWER_CONTRACT
        } else {
            &[]
        };
    for id in CONTRACT.iter().chain(extra).chain(power) {
        let q = quantities
            .iter()
            .find(|q| q["id"] == *id)
            .unwrap_or_else(|| panic!("{at}: missing {id}"));
        for key in ["symbol", "unit", "formula", "substituted"] {
            assert!(
                q[key].as_str().is_some_and(|s| !s.is_empty()),
                "{at}: {id}.{key}"
            );
        }
        assert!(
            q["value"].as_f64().is_some_and(f64::is_finite),
            "{at}: {id}.value"
        );
        assert!(q["inputs"].is_array(), "{at}: {id}.inputs");
        assert!(q["source"]["kind"].is_string(), "{at}: {id}.source");
    }
    let checks = doc["checks"].as_array().expect("checks");
    assert!(!checks.is_empty(), "{at}: no checks");
    for c in checks {
        for key in [
            "id",
            "statement",
            "value",
            "limit",
            "pass",
            "margin",
            "source",
        ] {
            assert!(!c[key].is_null(), "{at}: check field {key}");
        }
    }
}

#[test]
fn every_demo_builds_a_package() {
    for name in common::demos() {
        let scratch = Scratch::new("demo");
        let out = scratch.path().join("out");
        let o = run(&["build", &design_path(&name), "--out", out.to_str().unwrap()]);
        // Revision A of the pumping station is the demo's failing revision: at 16 kHz its
        // inductor ripple is over the limit, which revision B's 20 kHz fixes. Exit code 1
        // still writes the package, marked as failing.
        let want = if name == "ridge-pump-a.yaml" { 1 } else { 0 };
        assert_eq!(o.status.code(), Some(want), "{name}: {}", stderr(&o));
        let text = stdout(&o);
        assert!(text.contains("package.pdf"), "{name}: {text}");
        let rec = common::load_named(&name, &common::demo(&name));
        let dir = out
            .join(&rec.design.project.id)
            .join(&rec.design.project.revision);
        let pdf = std::fs::read(dir.join("package.pdf")).expect("package.pdf");
        assert!(pdf.starts_with(b"%PDF"), "{name}: not a PDF");
        assert!(pdf.len() > 20_000, "{name}: PDF suspiciously small");
        let svg =
            std::fs::read_to_string(dir.join("filter-bode.svg")).expect("plot beside the PDF");
        assert!(svg.starts_with("<svg"));
        let svg = std::fs::read_to_string(dir.join("modulation-window.svg")).expect("second plot");
        assert!(
            svg.contains("regulation limit"),
            "{name}: limit line missing"
        );
        for plot in [
            "switch-spectrum",
            "output-spectrum",
            "switch-waveform",
            "output-waveform",
            "ripple-envelope",
        ] {
            let svg = std::fs::read_to_string(dir.join(format!("{plot}.svg")))
                .unwrap_or_else(|_| panic!("{name}: {plot}.svg"));
            assert!(svg.starts_with("<svg"), "{name}: {plot}");
        }
        let results: Value =
            serde_json::from_slice(&std::fs::read(dir.join("results.json")).unwrap()).unwrap();
        assert_contract(&results, &name);
        let failing: Vec<&str> = results["checks"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|c| c["pass"] == false)
            .map(|c| c["id"].as_str().unwrap())
            .collect();
        if want == 1 {
            assert_eq!(failing, ["check.filter.ripple"], "{name}");
        }
        // The spectrum and compliance results are in the contract of every demo.
        let ids: Vec<&str> = results["quantities"]
            .as_array()
            .unwrap()
            .iter()
            .map(|q| q["id"].as_str().unwrap())
            .collect();
        let compliance = if rec.design.output.grid() {
            "quality.i_trd_worst"
        } else {
            "quality.v_thd_worst"
        };
        for id in [
            "spectrum.switch.h1.nominal",
            "spectrum.switch.thd.nominal",
            "spectrum.switch.wthd.max",
            "spectrum.switch.group1.min",
            "ripple.i_pp_max",
            compliance,
        ] {
            assert!(ids.contains(&id), "{name}: no {id}");
        }
        assert!(
            ids.iter()
                .any(|id| id.starts_with("spectrum.switch.h")
                    && !id.starts_with("spectrum.switch.h1.")),
            "{name}: no switching harmonics"
        );
        assert_eq!(results["stamp"]["project"], rec.design.project.id.as_str());
        // No staging folders are left behind.
        let leftovers: Vec<_> = std::fs::read_dir(dir.parent().unwrap())
            .unwrap()
            .filter_map(|e| e.ok())
            .filter(|e| e.file_name().to_string_lossy().starts_with('.'))
            .collect();
        assert!(leftovers.is_empty(), "{name}: leftovers {leftovers:?}");
    }
}

#[test]
fn the_package_has_every_section() {
    let name = "ridge-pump-b.yaml";
    let rec = common::load_named(name, &common::demo(name));
    let sheet = bridgebook::calc::evaluate(&rec.design);
    let templates = bridgebook::report::Templates::builtin();
    let stamp = bridgebook::package::stamp(&rec, &templates);
    let r = bridgebook::report::render(&rec, &sheet, &stamp, &templates).expect("render");
    for section in [
        "#title-block(",
        "#cautions-block(",
        "#check-summary(",
        "#revision-block(",
        "#inputs-table(",
        "#assumptions-list(",
        "#calc-section(\"Operating points and load\")",
        "#calc-section(\"Output filter\")",
        "#calc-section(\"Modulation\")",
        "#plot-figure(\"/plots/filter-bode.svg\"",
        "#plot-figure(\"/plots/modulation-window.svg\"",
    ] {
        assert!(r.typst.contains(section), "missing {section}");
    }
    assert!(
        r.typst.contains(&stamp.record_sha256),
        "record hash not in the revision block"
    );
    assert!(
        r.typst.contains(&stamp.engine_sha256),
        "engine hash not in the revision block"
    );
    // Cautions required of every package.
    for phrase in [
        "Hazardous voltage",
        "Stored energy",
        "licensed professional engineer",
        "Local electrical codes",
    ] {
        assert!(r.typst.contains(phrase), "caution missing: {phrase}");
    }
    // The notes' inline references were resolved to values.
    assert!(!r.typst.contains("@{"), "unresolved reference");
    assert!(r.pages >= 5, "only {} pages", r.pages);
}

#[test]
fn a_template_without_cautions_still_gets_them() {
    // bridgebook rule: no package goes out without its cautions and assumptions.
    let scratch = Scratch::new("tpl");
    let tdir = template_dir(
        &scratch,
        "@place title\n\n# Only this\n\n@place calculation filter\n",
        None,
    );
    let templates = bridgebook::report::Templates::from_dir(&tdir).unwrap();
    let name = "alder-hut.yaml";
    let rec = common::load_named(name, &common::demo(name));
    let sheet = bridgebook::calc::evaluate(&rec.design);
    let stamp = bridgebook::package::stamp(&rec, &templates);
    let r = bridgebook::report::render(&rec, &sheet, &stamp, &templates).expect("render");
    assert!(r.typst.contains("#cautions-block("));
    assert!(r.typst.contains("#assumptions-list("));
    assert_ne!(
        stamp,
        bridgebook::package::stamp(&rec, &bridgebook::report::Templates::builtin())
    );
}

#[test]
fn rebuilding_gives_identical_bytes() {
    // STYLE habit 12: same input, same bytes.
    let scratch = Scratch::new("repro");
    let out = scratch.path().join("out");
    let design = design_path("alder-hut.yaml");
    let read = || std::fs::read(out.join("AH-031/A/package.pdf")).unwrap();
    assert_eq!(
        run(&["build", &design, "--out", out.to_str().unwrap()])
            .status
            .code(),
        Some(0)
    );
    let first = read();
    assert_eq!(
        run(&["build", &design, "--out", out.to_str().unwrap()])
            .status
            .code(),
        Some(0)
    );
    assert_eq!(first, read());
}

#[test]
fn check_json_honours_the_results_contract() {
    let o = run(&["check", &design_path("ridge-pump-b.yaml"), "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let doc: Value = serde_json::from_str(&stdout(&o)).expect("JSON on stdout");
    assert_contract(&doc, "check --json");
    let plain = run(&["check", &design_path("ridge-pump-b.yaml")]);
    let text = stdout(&plain);
    assert!(text.contains("check.modulation.headroom_dc_min"), "{text}");
    assert!(text.contains("all pass"), "{text}");
}

#[test]
fn explain_prints_the_chain_of_inputs() {
    let o = run(&[
        "explain",
        &design_path("ridge-pump-b.yaml"),
        "modulation.m_a.min",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = stdout(&o);
    for part in [
        "modulation.m_a.min",
        "V_(\"sw\",1) / (V_\"dc,min\" / 2)",
        "├── modulation.v_sw_pk",
        "dc.v_min = 720 V",
        "output.v_rms = 230 V",
        "filter.inductance = 1.8 mH",
        "design record, `source.voltage.min` (line 20)",
    ] {
        assert!(text.contains(part), "missing {part:?} in\n{text}");
    }
    let bad = run(&[
        "explain",
        &design_path("ridge-pump-b.yaml"),
        "modulation.m_a.mni",
    ]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(
        stderr(&bad).contains("did you mean `modulation.m_a.min`?"),
        "{}",
        stderr(&bad)
    );
}

#[test]
fn a_failing_check_exits_1_and_still_writes_a_marked_package() {
    let scratch = Scratch::new("fail");
    // Tighten the modulation limit below what DC minimum needs (about 0.918).
    let text = common::demo("ridge-pump-b.yaml")
        .replace("max_modulation_index: 0.95", "max_modulation_index: 0.9");
    let design = scratch.write("tight.yaml", &text);
    let out = scratch.path().join("out");
    let o = run(&[
        "build",
        design.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stdout(&o).contains("1 FAIL"), "{}", stdout(&o));
    let results: Value =
        serde_json::from_slice(&std::fs::read(out.join("PS-204/B/results.json")).unwrap()).unwrap();
    assert_eq!(results["all_pass"], false);
    let failing: Vec<&str> = results["checks"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| c["pass"] == false)
        .map(|c| c["id"].as_str().unwrap())
        .collect();
    assert_eq!(failing, vec!["check.modulation.headroom_dc_min"]);
    let check = run(&["check", design.to_str().unwrap()]);
    assert_eq!(check.status.code(), Some(1));
}

#[test]
fn revisions_a_and_b_differ_where_the_record_changed() {
    // Demo revision pair: B raised f_sw from 16 to 20 kHz and C from 6.8 to 10 uF.
    let eval = |name: &str| {
        let rec = common::load_named(name, &common::demo(name));
        (bridgebook::calc::evaluate(&rec.design), rec)
    };
    let (a, ra) = eval("ridge-pump-a.yaml");
    let (b, rb) = eval("ridge-pump-b.yaml");
    assert_eq!(a.value("modulation.m_f"), 320.0);
    assert_eq!(b.value("modulation.m_f"), 400.0);
    assert!(a.value("filter.f0") > b.value("filter.f0"));
    let ta = bridgebook::report::Templates::builtin();
    assert_ne!(
        bridgebook::package::stamp(&ra, &ta).record_sha256,
        bridgebook::package::stamp(&rb, &ta).record_sha256
    );
}

#[test]
fn a_bad_template_is_reported_at_its_line_and_nothing_is_written() {
    // bridgebook template rules: unknown sections and result ids are errors.
    let scratch = Scratch::new("badtpl");
    let tdir = template_dir(
        &scratch,
        "@place title\n\nThe resonance is @{filter.f00}.\n\n@place chekcs\n",
        None,
    );
    let out = scratch.path().join("out");
    let o = run(&[
        "build",
        &design_path("ridge-pump-b.yaml"),
        "--out",
        out.to_str().unwrap(),
        "--templates",
        tdir.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    assert!(err.contains("package.md:3:18"), "{err}");
    assert!(err.contains("unknown result id `filter.f00`"), "{err}");
    assert!(err.contains("did you mean `filter.f0`?"), "{err}");
    assert!(err.contains("package.md:5:1"), "{err}");
    assert!(err.contains("did you mean `checks`?"), "{err}");
    assert!(!out.exists(), "output written despite template errors");
}

#[test]
fn a_broken_style_file_is_an_error_not_a_panic() {
    let scratch = Scratch::new("badstyle");
    let shipped =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("templates/package.md"))
            .unwrap();
    let tdir = template_dir(&scratch, &shipped, Some("#let package(body) = { body\n"));
    let out = scratch.path().join("out");
    let o = run(&[
        "build",
        &design_path("alder-hut.yaml"),
        "--out",
        out.to_str().unwrap(),
        "--templates",
        tdir.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.contains("could not be typeset"), "{err}");
    assert!(err.contains("/style.typ"), "{err}");
    assert!(!out.exists());
    // A templates folder without its files is bad usage too.
    let empty = scratch.path().join("empty");
    std::fs::create_dir_all(&empty).unwrap();
    let o = run(&[
        "build",
        &design_path("alder-hut.yaml"),
        "--templates",
        empty.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("cannot read template `package.md`"),
        "{}",
        stderr(&o)
    );
}
