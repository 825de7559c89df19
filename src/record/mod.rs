//! The design record: YAML text in, a validated [`Design`] out, or every problem at once.
//!
//! Two layers, kept apart: the raw layer is `serde_yaml`'s document tree plus the
//! position index of [`spans`]; the typed layer is [`model`]. [`load_str`] walks the raw
//! tree with a [`reader::Section`] per mapping, converting units at the edge.

pub mod model;
pub mod power_stage;
pub mod reader;
pub mod spans;

pub use model::*;

use crate::diag::{Diagnostic, Diagnostics, SourceText};
use crate::units::Unit;
use reader::{Reader, Section};
use spans::Spans;
use std::path::Path;

/// The record format version this engine reads.
pub const FORMAT_VERSION: i64 = 1;

/// A loaded record: the typed design and the parsed document (for canonical hashing).
#[derive(Clone, Debug)]
pub struct Record {
    pub design: Design,
    pub document: serde_yaml::Value,
    pub source: SourceText,
}

/// Reads and validates a record file.
pub fn load_file(path: &Path) -> Result<Record, Diagnostics> {
    let name = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| {
        Diagnostics(vec![Diagnostic {
            file: name.clone(),
            line: 0,
            column: 1,
            key: String::new(),
            message: format!("cannot read the design record: {e}"),
            hint: Some("check the path; records are YAML files such as `designs/*.yaml`".into()),
            snippet: None,
            width: 1,
        }])
    })?;
    let folder = path.parent().map(Path::to_path_buf).unwrap_or_default();
    load_str_with(&name, &text, &reader::FolderIncludes(folder))
}

/// Parses and validates record text; `name` is used in messages. A record that names a
/// device library cannot be read this way: see [`load_str_with`].
pub fn load_str(name: &str, text: &str) -> Result<Record, Diagnostics> {
    load_str_with(name, text, &reader::NoIncludes)
}

/// Parses and validates record text, reading the files it includes through `includes`.
/// The returned document has every included value in place of its reference, so that
/// the canonical record (and its hash) covers the device data too.
pub fn load_str_with(
    name: &str,
    text: &str,
    includes: &dyn reader::Includes,
) -> Result<Record, Diagnostics> {
    let source = SourceText {
        name: name.to_string(),
        text: text.to_string(),
    };
    let document: serde_yaml::Value = match serde_yaml::from_str(text) {
        Ok(v) => v,
        Err(e) => return Err(Diagnostics(syntax_errors(&source, &e))),
    };
    let reader = Reader::with_includes(&source, includes);
    let design = reader.root(&document).and_then(|root| read_design(root));
    let resolved = reader.resolved();
    let (errors, inputs) = reader.into_parts();
    let mut document = document;
    for (key, value) in resolved {
        splice(&mut document, &key, value);
    }
    match design {
        Some(mut design) if errors.is_empty() => {
            design.inputs = inputs;
            Ok(Record {
                design,
                document,
                source,
            })
        }
        _ if errors.is_empty() => Err(Diagnostics(vec![source.at(
            0,
            1,
            1,
            "",
            "internal error: the record was rejected without a reason, please report",
        )])),
        _ => Err(Diagnostics(errors)),
    }
}

/// Puts `value` at the dotted `key` of a document of mappings.
fn splice(document: &mut serde_yaml::Value, key: &str, value: serde_yaml::Value) {
    let mut at = document;
    let parts: Vec<&str> = key.split('.').collect();
    for (i, part) in parts.iter().enumerate() {
        let serde_yaml::Value::Mapping(m) = at else {
            return;
        };
        let k = serde_yaml::Value::String((*part).to_string());
        if i + 1 == parts.len() {
            m.insert(k, value);
            // The device now stands written out; its library reference goes with it, so
            // that the canonical record reads back on its own.
            m.remove("library");
            return;
        }
        match m.get_mut(&k) {
            Some(next) => at = next,
            None => return,
        }
    }
}

fn syntax_errors(source: &SourceText, e: &serde_yaml::Error) -> Vec<Diagnostic> {
    let (line, column) = e
        .location()
        .map(|l| (l.line(), l.column()))
        .unwrap_or((0, 1));
    // serde_yaml appends " at line L column C" to its message, then libyaml's context
    // (", while parsing a flow mapping at line L column C"); the place is shown apart.
    let text = e.to_string();
    let tabs = text.contains("tab");
    let (message, context) = match text.find(" at line ") {
        Some(i) => {
            let rest = &text[i..];
            let context = rest.find(", ").map(|j| rest[j + 2..].to_string());
            (text[..i].to_string(), context)
        }
        None => (text.clone(), None),
    };
    if message.contains("duplicate entry") {
        let repeated = duplicate_keys(source);
        if !repeated.is_empty() {
            return repeated;
        }
    }
    let context_place = context.as_deref().and_then(|c| {
        let i = c.find(" at line ")?;
        let mut words = c[i + 9..].split(' ');
        let l: usize = words.next()?.parse().ok()?;
        let col: usize = words.nth(1)?.parse().ok()?;
        Some((c[..i].to_string(), l, col))
    });
    // A flow collection that is not closed is found only where the parser gives up,
    // often lines later; the line to fix is the one with its `{` or `[`.
    if let Some((what, l, col)) = &context_place {
        if let Some(kind) = what.strip_prefix("while parsing a flow ") {
            let close = if kind.starts_with("mapping") {
                '}'
            } else {
                ']'
            };
            return vec![source
                .at(
                    *l,
                    *col,
                    1,
                    "",
                    format!(
                        "the record is not valid YAML: {message} in the flow {kind} that starts here (the parser stopped at line {line}, column {column})"
                    ),
                )
                .with_hint(format!(
                    "separate its entries with `, ` and close it with `{close}` on the same line"
                ))];
        }
    }
    let message = match &context_place {
        Some((what, l, col)) => format!("{message} ({what} that starts at line {l}, column {col})"),
        None => message,
    };
    let hint = if message.contains("duplicate entry") {
        "each key may appear once per mapping; remove or rename one of them"
    } else if tabs {
        "indent with spaces; YAML does not allow tabs for indentation"
    } else {
        "check the indentation and the `key: value` form on this line and the one above"
    };
    vec![source
        .at(
            line,
            column,
            1,
            "",
            format!("the record is not valid YAML: {message}"),
        )
        .with_hint(hint)]
}

/// Every key written twice in one mapping, each at its second writing. serde_yaml
/// stops at the first and places it at the start of the mapping.
fn duplicate_keys(source: &SourceText) -> Vec<Diagnostic> {
    let spans = Spans::index(&source.text);
    spans
        .duplicates()
        .iter()
        .map(|(path, s)| {
            let parent = spans::parent(path).unwrap_or("");
            let key = path[parent.len()..].trim_start_matches('.');
            let place = if parent.is_empty() {
                "at the top of the record".to_string()
            } else {
                format!("in `{parent}`")
            };
            let first = spans.key(path).map_or(0, |k| k.line);
            source
                .at(
                    s.line,
                    s.column,
                    s.width,
                    path,
                    format!("the record is not valid YAML: key `{key}` appears twice {place}"),
                )
                .with_hint(format!(
                    "each key may appear once per mapping; `{key}` is first written on line {first}; remove or rename one of them"
                ))
        })
        .collect()
}

fn read_design(root: Section) -> Option<Design> {
    let r = root.reader();
    let format = root.integer("bridgebook");
    if let Some(v) = format {
        if v != FORMAT_VERSION {
            r.error(
                "bridgebook",
                format!("record format version {v} is not supported"),
                Some(format!(
                    "this engine reads format `bridgebook: {FORMAT_VERSION}`"
                )),
            );
        }
    }
    let project = root.section("project").and_then(read_project);
    let source = root.section("source").and_then(read_source);
    let output = root.section("output").and_then(read_output);
    let bridge = root.section("bridge").and_then(read_bridge);
    let filter = root.section("filter").and_then(read_filter);
    let spectrum = read_spectrum(root.optional_section("spectrum"));
    let switches = root
        .optional_section("switches")
        .map(power_stage::read_switches);
    let thermal = root
        .optional_section("thermal")
        .map(power_stage::read_thermal);
    let dc_link = root
        .optional_section("dc_link")
        .map(power_stage::read_dc_link);
    let losses = power_stage::read_losses(root.optional_section("losses"));
    if switches.is_some() && thermal.is_none() {
        r.error(
            "switches",
            "the switches' losses need their thermal path: `thermal` is missing",
            Some(
                "add `thermal:` with `ambient_max`, `case_to_heatsink` and `heatsink_to_ambient`"
                    .into(),
            ),
        );
    }
    let limits = read_limits(root.optional_section("limits"));
    let assumptions = read_assumptions(&root);
    let notes = root.optional_text("notes");
    root.finish();

    let design = Design {
        format: format? as u32,
        project: project?,
        source: source?,
        output: output?,
        bridge: bridge?,
        filter: filter?,
        spectrum,
        switches: switches.map(|s| s.ok_or(())).transpose().ok()?,
        thermal: thermal.map(|s| s.ok_or(())).transpose().ok()?,
        dc_link: dc_link.map(|s| s.ok_or(())).transpose().ok()?,
        losses: losses?,
        limits: limits?,
        assumptions,
        notes,
        inputs: Vec::new(),
    };
    cross_checks(r, &design);
    Some(design)
}

/// A name that becomes a folder of the output: letters, digits, `-`, `_`, `.`.
fn folder_safe(r: &Reader, path: &str, text: &str) -> bool {
    let ok = !text.starts_with('.')
        && text
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'));
    if !ok {
        r.error(
            path,
            format!("`{text}` cannot name an output folder"),
            Some("use letters, digits, `-`, `_` and `.` only, e.g. `PS-204`".into()),
        );
    }
    ok
}

fn read_project(s: Section) -> Option<Project> {
    let r = s.reader();
    let id = s.text("id");
    let title = s.text("title");
    let revision = s.text("revision");
    let date = s.date("date");
    let prepared_by = s.text("prepared_by");
    let description = s.optional_text("description");
    let revisions = s.list("revisions", |path, v| {
        let e = s.element(path, v)?;
        let (rev, date, by, change) = (
            e.text("rev"),
            e.date("date"),
            e.text("by"),
            e.text("change"),
        );
        e.finish();
        Some(RevisionEntry {
            rev: rev?,
            date: date?,
            by: by?,
            change: change?,
        })
    });
    s.finish();
    let (id, revision) = (id?, revision?);
    let id_ok = folder_safe(r, &s.key_path("id"), &id);
    let rev_ok = folder_safe(r, &s.key_path("revision"), &revision);
    let date = date?;
    for (i, pair) in revisions.windows(2).enumerate() {
        if pair[1].date < pair[0].date {
            r.error(
                &format!("{}[{}].date", s.key_path("revisions"), i + 1),
                format!(
                    "revision `{}` is dated {} before revision `{}` ({})",
                    pair[1].rev, pair[1].date, pair[0].rev, pair[0].date
                ),
                Some("list revisions oldest first".into()),
            );
        }
    }
    if let Some(last) = revisions.last() {
        if last.date > date {
            r.error(
                &s.key_path("date"),
                format!(
                    "the record is dated {date}, before its revision `{}` ({})",
                    last.rev, last.date
                ),
                Some("the record's date is the date of its current revision".into()),
            );
        }
    }
    if !(id_ok && rev_ok) {
        return None;
    }
    Some(Project {
        id,
        title: title?,
        revision,
        date,
        prepared_by: prepared_by?,
        description,
        revisions,
    })
}

/// Checks `lo < value <= hi`, reporting an absurd value at its key.
fn in_range(r: &Reader, g: &Given, lo: f64, hi: f64, unit: Unit, why: &str) -> bool {
    use crate::units::format_value;
    let ok = g.value > lo && g.value <= hi;
    if !ok {
        // A lower bound a hair below zero (`-1e-30`) stands for "zero allowed".
        let low = if lo < 0.0 && lo > -1e-20 {
            format!("at least {}", format_value(0.0, unit))
        } else {
            format!("above {}", format_value(lo, unit))
        };
        r.error(
            &g.key,
            format!(
                "`{}` = {} is outside the accepted range: {low}, at most {}",
                g.key.rsplit('.').next().unwrap_or(&g.key),
                format_value(g.value, unit),
                format_value(hi, unit)
            ),
            Some(why.to_string()),
        );
    }
    ok
}

fn read_source(s: Section) -> Option<DcSource> {
    let kind = s.choice("kind", &["fixed", "battery", "pv-string"]);
    let source = match kind {
        Some("fixed") => read_fixed_source(&s),
        Some("battery") => read_battery(&s),
        Some(_) => read_pv_string(&s),
        None => None,
    };
    s.finish();
    source
}

fn read_fixed_source(s: &Section) -> Option<DcSource> {
    let r = s.reader();
    let v = s.section("voltage");
    let volts = v.map(|v| {
        let t = (
            v.quantity("min", Unit::Volt),
            v.quantity("nominal", Unit::Volt),
            v.quantity("max", Unit::Volt),
        );
        v.finish();
        t
    });
    let (min, nominal, max) = volts?;
    let (min, nominal, max) = (min?, nominal?, max?);
    let why = "DC inputs of this engine are above 0 V and at most 2 kV";
    // Collected first so that every absurd value is reported, not only the first.
    let in_window: Vec<bool> = [&min, &nominal, &max]
        .iter()
        .map(|g| in_range(r, g, 0.0, 2000.0, Unit::Volt, why))
        .collect();
    let all_ok = in_window.iter().all(|ok| *ok);
    if all_ok && !(min.value <= nominal.value && nominal.value <= max.value) {
        r.error(
            &nominal.key,
            format!(
                "DC voltages out of order: min {} V, nominal {} V, max {} V",
                min.value, nominal.value, max.value
            ),
            Some("the DC window must satisfy min <= nominal <= max".into()),
        );
    }
    Some(DcSource::Fixed {
        v_min: min,
        v_nominal: nominal,
        v_max: max,
    })
}

fn read_battery(s: &Section) -> Option<DcSource> {
    let r = s.reader();
    let empty = s.quantity("empty", Unit::Volt);
    let full = s.quantity("full", Unit::Volt);
    let nominal = s.optional_quantity("nominal", Unit::Volt);
    let resistance = s.quantity("internal_resistance", Unit::Ohm);
    let why = "battery voltages of this engine are above 0 V and at most 2 kV";
    let mut ok = true;
    for g in [&empty, &full, &nominal].into_iter().flatten() {
        ok &= in_range(r, g, 0.0, 2000.0, Unit::Volt, why);
    }
    if let Some(g) = &resistance {
        ok &= in_range(
            r,
            g,
            -1e-30,
            100.0,
            Unit::Ohm,
            "a battery's internal resistance is between 0 and a few ohms",
        );
    }
    let (empty, full, resistance) = (empty?, full?, resistance?);
    if ok {
        let n = nominal.as_ref().map_or(empty.value, |g| g.value);
        if !(empty.value < full.value && empty.value <= n && n <= full.value) {
            r.error(
                &full.key,
                format!(
                    "battery voltages out of order: empty {} V, full {} V",
                    empty.value, full.value
                ),
                Some("the battery must satisfy empty < full, with any nominal between them".into()),
            );
            ok = false;
        }
    }
    ok.then_some(DcSource::Battery(Battery {
        empty,
        full,
        nominal,
        internal_resistance: resistance,
    }))
}

fn read_pv_string(s: &Section) -> Option<DcSource> {
    let r = s.reader();
    let series = s.quantity("modules_in_series", Unit::One);
    let parallel = s.quantity("strings_in_parallel", Unit::One);
    let module = s.section("module").map(|m| {
        let t = (
            m.quantity("voc", Unit::Volt),
            m.quantity("vmp", Unit::Volt),
            m.quantity("isc", Unit::Ampere),
            m.quantity("imp", Unit::Ampere),
            m.quantity("voc_coefficient", Unit::PercentPerKelvin),
            m.quantity("vmp_coefficient", Unit::PercentPerKelvin),
        );
        m.finish();
        t
    });
    let site = s.section("site").map(|m| {
        let t = (
            m.quantity("record_low", Unit::DegreeCelsius),
            m.quantity("design_high", Unit::DegreeCelsius),
            m.quantity("cell_rise", Unit::Kelvin),
        );
        m.finish();
        t
    });
    let whole = |g: &Option<Given>, hi: f64, what: &str| {
        g.as_ref().is_some_and(|g| {
            let ok = in_range(r, g, 0.0, hi, Unit::One, what);
            if ok && g.value.fract() != 0.0 {
                r.error(
                    &g.key,
                    format!("`{}` is not a whole number", g.value),
                    Some(format!("{what}; write a whole number such as `16`")),
                );
                return false;
            }
            ok
        })
    };
    let counts_ok = whole(
        &series,
        200.0,
        "a string has between 1 and 200 modules in series",
    ) & whole(
        &parallel,
        1000.0,
        "an array has between 1 and 1000 strings in parallel",
    );
    let (voc, vmp, isc, imp, bv, bm) = module?;
    let (low, high, rise) = site?;
    let (voc, vmp, isc, imp, bv, bm) = (voc?, vmp?, isc?, imp?, bv?, bm?);
    let (low, high, rise) = (low?, high?, rise?);
    let mut ok = counts_ok;
    ok &= in_range(
        r,
        &voc,
        0.0,
        200.0,
        Unit::Volt,
        "a module's open-circuit voltage is a few tens of volts",
    );
    ok &= in_range(
        r,
        &vmp,
        0.0,
        200.0,
        Unit::Volt,
        "a module's maximum-power voltage is a few tens of volts",
    );
    ok &= in_range(
        r,
        &isc,
        0.0,
        100.0,
        Unit::Ampere,
        "a module's short-circuit current is a few amperes to a few tens",
    );
    ok &= in_range(
        r,
        &imp,
        0.0,
        100.0,
        Unit::Ampere,
        "a module's maximum-power current is a few amperes to a few tens",
    );
    for g in [&bv, &bm] {
        ok &= in_range(
            r,
            g,
            -0.02,
            0.0,
            Unit::PercentPerKelvin,
            "a silicon module's voltage falls as it warms: its coefficient is negative, about -0.25 %/K to -0.45 %/K",
        );
    }
    ok &= in_range(
        r,
        &low,
        -80.0,
        40.0,
        Unit::DegreeCelsius,
        "the record-low ambient of a site is between -80 degC and 40 degC",
    );
    ok &= in_range(
        r,
        &high,
        -20.0,
        70.0,
        Unit::DegreeCelsius,
        "the high design ambient of a site is between -20 degC and 70 degC",
    );
    ok &= in_range(
        r,
        &rise,
        -1e-30,
        80.0,
        Unit::Kelvin,
        "cells run 20 K to 35 K above ambient in full sun on an open rack, more on a roof",
    );
    if ok && vmp.value >= voc.value {
        r.error(
            &vmp.key,
            "the maximum-power voltage is not below the open-circuit voltage",
            Some("check `vmp` and `voc` against the module datasheet".into()),
        );
        ok = false;
    }
    if ok && imp.value >= isc.value {
        r.error(
            &imp.key,
            "the maximum-power current is not below the short-circuit current",
            Some("check `imp` and `isc` against the module datasheet".into()),
        );
        ok = false;
    }
    if ok && low.value >= high.value {
        r.error(
            &low.key,
            "the record-low temperature is not below the high design temperature",
            Some("`record_low` is the coldest morning, `design_high` the hottest afternoon".into()),
        );
        ok = false;
    }
    let (series, parallel) = (series?, parallel?);
    ok.then(|| {
        DcSource::PvString(Box::new(PvString {
            modules_in_series: series,
            strings_in_parallel: parallel,
            voc,
            vmp,
            isc,
            imp,
            voc_coefficient: bv,
            vmp_coefficient: bm,
            record_low: low,
            design_high: high,
            cell_rise: rise,
        }))
    })
}

fn read_output(s: Section) -> Option<Output> {
    let r = s.reader();
    let voltage = s.quantity("voltage", Unit::Volt);
    let frequency = s.quantity("frequency", Unit::Hertz);
    let power = s.quantity("power", Unit::Watt);
    let power_factor = s.quantity("power_factor", Unit::One);
    let connection = s.choice("connection", &["standalone", "grid"]);
    let grid_inductance = s.optional_quantity("grid_inductance", Unit::Henry);
    s.finish();
    let (voltage, frequency, power, power_factor) = (voltage?, frequency?, power?, power_factor?);
    let ok = [
        in_range(
            r,
            &voltage,
            0.0,
            1000.0,
            Unit::Volt,
            "the output is an rms voltage of at most 1 kV",
        ),
        in_range(
            r,
            &frequency,
            1.0,
            1000.0,
            Unit::Hertz,
            "the output frequency is a mains-like frequency such as 50 Hz, 60 Hz or 400 Hz",
        ),
        in_range(
            r,
            &power,
            0.0,
            10e6,
            Unit::Watt,
            "the rated power is the real power at full load, above 0 W",
        ),
        in_range(
            r,
            &power_factor,
            0.0,
            1.0,
            Unit::One,
            "the power factor is a number above 0 and at most 1 (1 = resistive load)",
        ),
    ];
    let connection = match connection? {
        "standalone" => Connection::Standalone,
        _ => Connection::Grid,
    };
    if let Some(g) = &grid_inductance {
        if connection == Connection::Standalone {
            r.error(
                &g.key,
                "a grid inductance is given for a stand-alone output",
                Some("remove `grid_inductance`, or set `connection: grid`".into()),
            );
        } else {
            in_range(
                r,
                g,
                -1e-30,
                0.1,
                Unit::Henry,
                "the grid inductance behind the connection point is between 0 and a few mH",
            );
        }
    }
    if ok.iter().any(|ok| !ok) {
        return None;
    }
    Some(Output {
        voltage,
        frequency,
        power,
        power_factor,
        connection,
        grid_inductance,
    })
}

fn read_bridge(s: Section) -> Option<Bridge> {
    let r = s.reader();
    let topology = s.choice("topology", &["half-bridge", "full-bridge", "three-phase"]);
    let pwm = s.choice(
        "pwm",
        &["bipolar", "unipolar", "sine-triangle", "third-harmonic"],
    );
    let f_sw = s.quantity("switching_frequency", Unit::Hertz);
    let carrier_peak = s.optional_quantity("carrier_peak", Unit::Volt);
    s.finish();
    let topology = match topology? {
        "half-bridge" => Topology::HalfBridge,
        "full-bridge" => Topology::FullBridge,
        _ => Topology::ThreePhase,
    };
    let pwm = match pwm? {
        "bipolar" => Pwm::Bipolar,
        "unipolar" => Pwm::Unipolar,
        "sine-triangle" => Pwm::SineTriangle,
        _ => Pwm::ThirdHarmonic,
    };
    let allowed: &[Pwm] = match topology {
        Topology::HalfBridge => &[Pwm::Bipolar],
        Topology::FullBridge => &[Pwm::Bipolar, Pwm::Unipolar],
        Topology::ThreePhase => &[Pwm::SineTriangle, Pwm::ThirdHarmonic],
    };
    if !allowed.contains(&pwm) {
        let names: Vec<String> = allowed
            .iter()
            .map(|p| format!("`pwm: {}`", p.name()))
            .collect();
        let why = match (topology, pwm) {
            (Topology::HalfBridge, Pwm::Unipolar) => {
                "unipolar PWM needs two legs; a half-bridge has one".to_string()
            }
            _ => format!(
                "`{}` PWM is not a modulation of the {} bridge",
                pwm.name(),
                topology.name()
            ),
        };
        let hint = match (topology, pwm) {
            (Topology::HalfBridge, Pwm::Unipolar) => {
                "use `pwm: bipolar`, or `topology: full-bridge`".to_string()
            }
            _ => format!("use {}", names.join(" or ")),
        };
        r.error(&s.key_path("pwm"), why, Some(hint));
        return None;
    }
    let f_sw = f_sw?;
    let ok = in_range(
        r,
        &f_sw,
        0.0,
        1e6,
        Unit::Hertz,
        "switching frequencies of silicon and SiC bridges are between a few hundred Hz and 1 MHz",
    );
    if let Some(c) = &carrier_peak {
        in_range(
            r,
            c,
            0.0,
            100.0,
            Unit::Volt,
            "the carrier is a modulator signal, a few volts or a normalised 1 V",
        );
    }
    ok.then_some(Bridge {
        topology,
        pwm,
        switching_frequency: f_sw,
        carrier_peak,
    })
}

fn read_filter(s: Section) -> Option<Filter> {
    let r = s.reader();
    let kind = match s.choice("type", &["l", "lc", "lcl"])? {
        "l" => FilterKind::L,
        "lc" => FilterKind::Lc,
        _ => FilterKind::Lcl,
    };
    let value_keys: &[&'static str] = match kind {
        FilterKind::L => &["inductance"],
        FilterKind::Lc => &["inductance", "capacitance"],
        FilterKind::Lcl => &[
            "inverter_side_inductance",
            "capacitance",
            "grid_side_inductance",
            "damping_resistance",
        ],
    };
    let has_values = value_keys.iter().any(|k| s.has(k));
    let design = s.optional_section("design");
    s.allow(value_keys);
    let sizing = match (has_values, design) {
        (true, Some(_)) => {
            r.error(
                &s.key_path("design"),
                "the filter gives both values and a sizing rule",
                Some(format!(
                    "keep either the values ({}) or `design`",
                    value_keys
                        .iter()
                        .map(|k| format!("`{k}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                )),
            );
            None
        }
        (true, None) => read_filter_values(&s, kind).map(FilterSizing::Given),
        (false, Some(d)) => match kind {
            FilterKind::Lc => read_lc_rule(r, &d),
            FilterKind::Lcl => read_lcl_rule(r, &d),
            FilterKind::L => {
                r.error(
                    &d.path,
                    "an `l` filter has no sizing rule",
                    Some("write `inductance:`; or use `type: lcl` with a `design` rule".into()),
                );
                None
            }
        },
        (false, None) => {
            let hint = match kind {
                FilterKind::L => "add `inductance: 2 mH`".to_string(),
                FilterKind::Lc => "add `inductance:` and `capacitance:`, or `design: { resonance_ratio: 10, damping: 0.5 }`".to_string(),
                FilterKind::Lcl => "add `inverter_side_inductance:`, `capacitance:` and `grid_side_inductance:`, or `design: { capacitor_fraction: 5 %, ripple_fraction: 25 %, attenuation: 20 % }`".to_string(),
            };
            r.error(
                &s.path,
                "the filter has neither values nor a sizing rule",
                Some(hint),
            );
            None
        }
    };
    s.finish();
    Some(Filter {
        kind,
        sizing: sizing?,
    })
}

fn inductance_ok(r: &Reader, g: &Given) -> bool {
    in_range(
        r,
        g,
        0.0,
        1.0,
        Unit::Henry,
        "output filter inductors are between µH and a few hundred mH",
    )
}

fn read_filter_values(s: &Section, kind: FilterKind) -> Option<FilterValues> {
    let r = s.reader();
    let (l, c, l2, rd) = match kind {
        FilterKind::L => (s.quantity("inductance", Unit::Henry), None, None, None),
        FilterKind::Lc => (
            s.quantity("inductance", Unit::Henry),
            Some(s.quantity("capacitance", Unit::Farad)),
            None,
            None,
        ),
        FilterKind::Lcl => (
            s.quantity("inverter_side_inductance", Unit::Henry),
            Some(s.quantity("capacitance", Unit::Farad)),
            Some(s.quantity("grid_side_inductance", Unit::Henry)),
            s.optional_quantity("damping_resistance", Unit::Ohm),
        ),
    };
    let missing =
        c.as_ref().is_some_and(Option::is_none) || l2.as_ref().is_some_and(Option::is_none);
    let (l, c, l2) = (l?, c.flatten(), l2.flatten());
    if missing {
        return None;
    }
    // `&` rather than `&&`: every absurd value is reported.
    let mut ok = inductance_ok(r, &l);
    if let Some(c) = &c {
        ok &= in_range(
            r,
            c,
            0.0,
            0.1,
            Unit::Farad,
            "output filter capacitors are between nF and a few mF",
        );
    }
    if let Some(l2) = &l2 {
        ok &= inductance_ok(r, l2);
    }
    if let Some(rd) = &rd {
        ok &= in_range(
            r,
            rd,
            -1e-30,
            1000.0,
            Unit::Ohm,
            "a damping resistor in series with the filter capacitor is a few ohms",
        );
    }
    ok.then_some(FilterValues {
        inductance: l,
        capacitance: c,
        grid_side_inductance: l2,
        damping_resistance: rd,
    })
}

fn read_lc_rule(r: &Reader, d: &Section) -> Option<FilterSizing> {
    let k = d.quantity("resonance_ratio", Unit::One);
    let z = d.quantity("damping", Unit::One);
    d.finish();
    let k_ok = k.as_ref().is_some_and(|k| {
        in_range(
            r,
            k,
            1.0,
            1000.0,
            Unit::One,
            "the resonance ratio f0/f1 must be above 1; 10 to 40 is usual",
        )
    });
    let z_ok = z.as_ref().is_some_and(|z| {
        in_range(
            r,
            z,
            0.0,
            5.0,
            Unit::One,
            "the damping ratio at rated load is above 0; 0.3 to 1 is usual",
        )
    });
    match (k, z) {
        (Some(k), Some(z)) if k_ok && z_ok => Some(FilterSizing::Rule {
            resonance_ratio: k,
            damping: z,
        }),
        _ => None,
    }
}

fn read_lcl_rule(r: &Reader, d: &Section) -> Option<FilterSizing> {
    let x = d.quantity("capacitor_fraction", Unit::Percent);
    let k = d.quantity("ripple_fraction", Unit::Percent);
    let a = d.quantity("attenuation", Unit::Percent);
    let damped = if d.has("damping") {
        d.choice("damping", &["resistor", "none"])
            .map(|c| c == "resistor")
    } else {
        Some(false)
    };
    d.finish();
    let ok = [
        (&x, 0.0, 0.5, "the capacitor's reactive power is a small fraction of rated power; at most 5 % is the usual guideline"),
        (&k, 0.0, 1.0, "the inverter-side ripple is a fraction of rated peak current; 10 % to 40 % is usual"),
        (&a, 0.0, 1.0, "the ripple reaching the grid is a fraction of the inverter-side ripple, e.g. 20 %"),
    ]
    .map(|(g, lo, hi, why)| g.as_ref().is_some_and(|g| in_range(r, g, lo, hi, Unit::Percent, why)));
    if !ok.iter().all(|ok| *ok) {
        return None;
    }
    Some(FilterSizing::LclRule(LclRule {
        capacitor_fraction: x?,
        ripple_fraction: k?,
        attenuation: a?,
        damping_resistor: damped?,
    }))
}

fn read_spectrum(section: Option<Section>) -> SpectrumSettings {
    let Some(s) = section else {
        return SpectrumSettings { max_order: None };
    };
    let r = s.reader();
    let max_order = s.optional_quantity("max_order", Unit::One);
    s.finish();
    if let Some(g) = &max_order {
        in_range(
            r,
            g,
            1.0,
            100_000.0,
            Unit::One,
            "the highest harmonic order is a number such as 2000 (the default is 5.5 m_f)",
        );
    }
    SpectrumSettings { max_order }
}

fn limit(
    s: Option<&Section>,
    key: &'static str,
    unit: Unit,
    default: f64,
    basis: &'static str,
) -> Limit {
    let given = s.and_then(|s| s.optional_quantity(key, unit));
    Limit {
        value: given.as_ref().map_or(default, |g| g.value),
        given,
        default_basis: basis,
    }
}

fn read_limits(section: Option<Section>) -> Option<Limits> {
    let s = section.as_ref();
    let limits = Limits {
        max_modulation_index: limit(
            s,
            "max_modulation_index",
            Unit::One,
            0.95,
            "about 5 % of modulation kept in reserve for the voltage and current regulators",
        ),
        min_resonance_ratio: limit(
            s,
            "min_resonance_ratio",
            Unit::One,
            10.0,
            "f0 at least ten times f1 keeps the filter's gain and phase error at f1 small",
        ),
        max_resonance_fraction: limit(
            s,
            "max_resonance_fraction",
            Unit::One,
            0.5,
            "f0 below half the switching frequency, so the first carrier group is attenuated",
        ),
        max_gain_deviation: limit(
            s,
            "max_gain_deviation",
            Unit::Percent,
            0.05,
            "the gain at f1 within 5 % of unity, so regulation needs little extra modulation",
        ),
        min_light_load_damping: limit(
            s,
            "min_light_load_damping",
            Unit::One,
            0.02,
            "damping ratio at light load of at least 0.02 (resonant peak Q = 1/(2 zeta) of at most 25); below that, active damping is needed",
        ),
        light_load: limit(
            s,
            "light_load",
            Unit::Percent,
            0.10,
            "10 % of rated power as the light-load case",
        ),
        max_system_voltage: limit(
            s,
            "max_system_voltage",
            Unit::Volt,
            1000.0,
            "1000 V, the usual voltage rating of PV modules, connectors and inverter inputs outside dwellings; local codes may set less (e.g. 600 V on dwellings under NEC 690.7, from memory)",
        ),
        max_ripple_fraction: limit(
            s,
            "max_ripple_fraction",
            Unit::Percent,
            0.40,
            "inverter-side ripple of at most 40 % of rated peak current (peak-to-peak), the usual upper end for core loss and current sensing",
        ),
        max_voltage_thd: s.and_then(|s| s.optional_quantity("max_voltage_thd", Unit::Percent)),
        max_voltage_harmonic: s.and_then(|s| s.optional_quantity("max_voltage_harmonic", Unit::Percent)),
        max_voltage_utilisation: limit(
            s,
            "max_voltage_utilisation",
            Unit::Percent,
            0.80,
            "the peak blocking voltage, overshoot included, at most 80 % of the device rating, leaving room for transients and cosmic-ray failure rates that rise steeply near the rating",
        ),
        max_current_utilisation: limit(
            s,
            "max_current_utilisation",
            Unit::Percent,
            0.80,
            "the peak device current, ripple included, at most 80 % of the continuous current rating",
        ),
        min_junction_margin: limit(
            s,
            "min_junction_margin",
            Unit::Kelvin,
            20.0,
            "the hottest junction at least 20 K below its maximum at the highest ambient, for tolerances of losses and thermal resistances",
        ),
        min_capacitor_life: limit(
            s,
            "min_capacitor_life",
            Unit::Hour,
            50_000.0 * 3600.0,
            "an expected DC-link life of at least 50 000 h, about ten years at 14 h of operation a day",
        ),
        safe_touch_voltage: limit(
            s,
            "safe_touch_voltage",
            Unit::Volt,
            60.0,
            "60 V DC taken as safe to touch in dry conditions (the ES1 DC limit of IEC 62368-1, from memory)",
        ),
        max_discharge_time: limit(
            s,
            "max_discharge_time",
            Unit::Second,
            300.0,
            "the bus below the safe touch voltage within 5 minutes, the waiting time commonly marked on inverter enclosures",
        ),
    };
    if let Some(s) = s {
        let r = s.reader();
        for g in [&limits.max_voltage_thd, &limits.max_voltage_harmonic]
            .into_iter()
            .flatten()
        {
            in_range(
                r,
                g,
                0.0,
                1.0,
                Unit::Percent,
                "a voltage distortion limit is a percentage of the fundamental above 0 %",
            );
        }
        let bounds: [(&Limit, f64, f64, Unit, &str); 14] = [
            (
                &limits.max_voltage_utilisation,
                0.0,
                1.0,
                Unit::Percent,
                "the voltage utilisation is a fraction of the rating above 0 % and at most 100 %",
            ),
            (
                &limits.max_current_utilisation,
                0.0,
                2.0,
                Unit::Percent,
                "the current utilisation is a fraction of the rating above 0 % and at most 200 %",
            ),
            (
                &limits.min_junction_margin,
                -1e-30,
                150.0,
                Unit::Kelvin,
                "the junction margin is 0 K or more, e.g. `20 K`",
            ),
            (
                &limits.min_capacitor_life,
                0.0,
                1e6 * 3600.0,
                Unit::Hour,
                "the life target is in hours, e.g. `50000 h`",
            ),
            (
                &limits.safe_touch_voltage,
                0.0,
                1000.0,
                Unit::Volt,
                "the safe touch voltage is a few tens of volts, e.g. `60 V`",
            ),
            (
                &limits.max_discharge_time,
                0.0,
                3600.0,
                Unit::Second,
                "the discharge time limit is a few seconds to a few minutes, e.g. `300 s`",
            ),
            (
                &limits.max_system_voltage,
                0.0,
                2000.0,
                Unit::Volt,
                "the system voltage rating is above 0 V and at most 2 kV",
            ),
            (
                &limits.max_modulation_index,
                0.0,
                4.0 / std::f64::consts::PI,
                Unit::One,
                "the modulation index limit is above 0 and at most 4/pi (square wave)",
            ),
            (
                &limits.min_resonance_ratio,
                1.0,
                1000.0,
                Unit::One,
                "the minimum f0/f1 ratio is above 1",
            ),
            (
                &limits.max_resonance_fraction,
                0.0,
                1.0,
                Unit::One,
                "the maximum f0/f_sw fraction is above 0 and at most 1",
            ),
            (
                &limits.max_gain_deviation,
                0.0,
                1.0,
                Unit::Percent,
                "the gain deviation limit is above 0 % and at most 100 %",
            ),
            (
                &limits.min_light_load_damping,
                0.0,
                5.0,
                Unit::One,
                "the damping floor is above 0",
            ),
            (
                &limits.light_load,
                0.0,
                1.0,
                Unit::Percent,
                "the light-load case is a fraction of rated power above 0 % and at most 100 %",
            ),
            (
                &limits.max_ripple_fraction,
                0.0,
                2.0,
                Unit::Percent,
                "the ripple limit is a fraction of rated peak current above 0 %",
            ),
        ];
        for (l, lo, hi, unit, why) in bounds {
            if let Some(g) = &l.given {
                in_range(r, g, lo, hi, unit, why);
            }
        }
    }
    if let Some(s) = section {
        s.finish();
    }
    Some(limits)
}

fn read_assumptions(root: &Section) -> Vec<Assumption> {
    let r = root.reader();
    let list = root.list("assumptions", |path, v| {
        let e = root.element(path, v)?;
        let id = e.text("id");
        let text = e.text("text");
        e.finish();
        Some(Assumption {
            id: id?,
            text: text?,
            line: r.line(path),
        })
    });
    let mut seen: Vec<&str> = Vec::new();
    for (i, a) in list.iter().enumerate() {
        if seen.contains(&a.id.as_str()) {
            r.error(
                &format!("assumptions[{i}].id"),
                format!("assumption id `{}` is used twice", a.id),
                Some("give each assumption its own id, e.g. A1, A2".into()),
            );
        }
        seen.push(&a.id);
    }
    list
}

/// Consistency between sections, once each section is valid on its own.
fn cross_checks(r: &Reader, d: &Design) {
    let standalone = d.output.connection == Connection::Standalone;
    if standalone && d.filter.kind != FilterKind::Lc {
        r.error(
            "filter.type",
            "a stand-alone output needs a capacitor across it to hold its voltage; this engine evaluates `lc` there",
            Some("use `type: lc`, or `connection: grid`".into()),
        );
    }
    if !standalone && matches!(d.filter.sizing, FilterSizing::Rule { .. }) {
        r.error(
            "filter.design",
            "the LC sizing rule places the resonance against a stand-alone load; a grid-connected LC is given by its values",
            Some(
                "write `inductance:` and `capacitance:`, or use `type: lcl` with its `design` rule"
                    .into(),
            ),
        );
    }
    let f1 = d.output.frequency.value;
    let fsw = d.bridge.switching_frequency.value;
    if fsw < 3.0 * f1 {
        r.error(
            &d.bridge.switching_frequency.key,
            format!("the switching frequency {fsw} Hz is less than three times the output frequency {f1} Hz"),
            Some("sine-triangle PWM needs a carrier well above the output frequency (usually over 20 times)".into()),
        );
    }
}
