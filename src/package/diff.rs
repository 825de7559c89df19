//! The revision delta between two packages (or records): what changed in the inputs,
//! which quantities moved beyond a relative tolerance, which checks flipped between
//! pass and fail, and what appeared or went. Each side is a design record (evaluated
//! now), a built package folder (its own `record.json` and `results.json`, as signed),
//! or a package PDF (the same two files, from its attachments).

use super::{attachments, canonical_json, results_json, stamp, RECORD_FILE, RESULTS_FILE};
use crate::diag::Diagnostics;
use crate::report::markup::content;
use crate::report::Templates;
use crate::units::{format_number, format_value, Unit};
use serde::Serialize;
use serde_json::Value as Json;
use std::collections::BTreeMap;
use std::path::Path;

/// The default relative tolerance: changes smaller than this are rounding, not change.
pub const DEFAULT_TOLERANCE: f64 = 1e-6;

/// One side of a diff: the canonical record and the results, with a label.
#[derive(Clone, Debug)]
pub struct Side {
    pub label: String,
    pub record: Json,
    pub results: Json,
}

/// Why a side could not be read.
#[derive(Debug)]
pub enum SideError {
    /// The record has errors (exit 2, shown as diagnostics).
    Record(Diagnostics),
    /// Anything else, with a hint.
    Other { message: String, hint: String },
}

impl Side {
    /// Reads a record file, a package folder or a package PDF.
    pub fn load(path: &Path) -> Result<Side, SideError> {
        let label = path.display().to_string();
        let other = |message: String, hint: &str| SideError::Other {
            message,
            hint: hint.to_string(),
        };
        if path.is_dir() {
            let read = |name: &str| -> Result<Json, SideError> {
                let p = path.join(name);
                let bytes = std::fs::read(&p).map_err(|e| {
                    other(
                        format!("cannot read `{}`: {e}", p.display()),
                        "a package folder holds `record.json` and `results.json` as `bridgebook build` writes them",
                    )
                })?;
                serde_json::from_slice(&bytes).map_err(|e| {
                    other(
                        format!("`{}` is not JSON: {e}", p.display()),
                        "rebuild the package",
                    )
                })
            };
            let results = read(RESULTS_FILE)?;
            let record = match read(RECORD_FILE) {
                Ok(r) => r,
                Err(_) => results.get("design").cloned().unwrap_or(Json::Null),
            };
            return Ok(Side {
                label,
                record,
                results,
            });
        }
        let bytes = std::fs::read(path).map_err(|e| {
            other(
                format!("cannot read `{label}`: {e}"),
                "give a design record (`.yaml`), a package folder or a package PDF",
            )
        })?;
        if bytes.starts_with(b"%PDF") {
            let (record, results) = attachments::record_and_results(&bytes).map_err(|e| {
                other(
                    format!("`{label}`: {e}"),
                    "diff the package folder or its record instead",
                )
            })?;
            return Ok(Side {
                label,
                record,
                results,
            });
        }
        let rec = crate::record::load_file(path).map_err(SideError::Record)?;
        let sheet = crate::calc::evaluate(&rec.design);
        let st = stamp(&rec, &Templates::builtin());
        Ok(Side {
            label,
            record: canonical_json(&rec.document),
            results: results_json(&rec, &sheet, &st),
        })
    }

    fn title(&self) -> String {
        let s = &self.results["stamp"];
        format!(
            "{} rev {}",
            s["project"].as_str().unwrap_or("?"),
            s["revision"].as_str().unwrap_or("?")
        )
    }
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InputChange {
    pub key: String,
    pub old: Option<String>,
    pub new: Option<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct QuantityChange {
    pub id: String,
    pub unit: String,
    pub old: Option<f64>,
    pub new: Option<f64>,
    /// (new - old) / |old|; `None` where old is zero, either is not a number, or the
    /// unit is a Celsius reading (whose zero is arbitrary).
    pub relative: Option<f64>,
    /// new - old, in the stored unit (kelvin for a Celsius reading).
    pub absolute: Option<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CheckChange {
    pub id: String,
    pub statement: String,
    pub old_pass: Option<bool>,
    pub new_pass: Option<bool>,
    pub old_value: Option<f64>,
    pub new_value: Option<f64>,
    pub unit: String,
}

/// Everything that differs between two sides.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Delta {
    pub old: String,
    pub new: String,
    pub tolerance: f64,
    pub inputs: Vec<InputChange>,
    pub quantities: Vec<QuantityChange>,
    pub quantities_added: Vec<String>,
    pub quantities_removed: Vec<String>,
    /// Checks that flipped between pass and fail.
    pub checks_flipped: Vec<CheckChange>,
    pub checks_added: Vec<String>,
    pub checks_removed: Vec<String>,
}

impl Delta {
    /// Whether anything changed beyond the tolerance (the exit code: 0 if not).
    pub fn changed(&self) -> bool {
        !(self.inputs.is_empty()
            && self.quantities.is_empty()
            && self.quantities_added.is_empty()
            && self.quantities_removed.is_empty()
            && self.checks_flipped.is_empty()
            && self.checks_added.is_empty()
            && self.checks_removed.is_empty())
    }
}

/// Leaves of a JSON document by dotted path (`filter.inductance`, `project.revisions[1].rev`).
fn leaves(doc: &Json, path: &str, out: &mut BTreeMap<String, String>) {
    match doc {
        Json::Object(m) => {
            for (k, v) in m {
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                leaves(v, &p, out);
            }
        }
        Json::Array(items) => {
            for (i, v) in items.iter().enumerate() {
                leaves(v, &format!("{path}[{i}]"), out);
            }
        }
        Json::String(s) => {
            out.insert(path.to_string(), s.clone());
        }
        other => {
            out.insert(path.to_string(), other.to_string());
        }
    }
}

fn by_id(list: &Json) -> BTreeMap<String, &Json> {
    list.as_array()
        .map(|a| {
            a.iter()
                .filter_map(|q| q["id"].as_str().map(|id| (id.to_string(), q)))
                .collect()
        })
        .unwrap_or_default()
}

/// Whether two values differ beyond a relative tolerance.
pub fn differs(old: Option<f64>, new: Option<f64>, tolerance: f64) -> bool {
    match (old, new) {
        (Some(a), Some(b)) => {
            let scale = a.abs().max(b.abs());
            scale > 1e-300 && (a - b).abs() > tolerance * scale
        }
        (None, None) => false,
        _ => true,
    }
}

/// Compares two sides.
pub fn compare(old: &Side, new: &Side, tolerance: f64) -> Delta {
    let (mut a, mut b) = (BTreeMap::new(), BTreeMap::new());
    leaves(&old.record, "", &mut a);
    leaves(&new.record, "", &mut b);
    let keys: std::collections::BTreeSet<&String> = a.keys().chain(b.keys()).collect();
    let inputs = keys
        .into_iter()
        .filter(|k| a.get(*k) != b.get(*k))
        .map(|k| InputChange {
            key: k.clone(),
            old: a.get(k).cloned(),
            new: b.get(k).cloned(),
        })
        .collect();

    let (qa, qb) = (
        by_id(&old.results["quantities"]),
        by_id(&new.results["quantities"]),
    );
    let mut quantities = Vec::new();
    for (id, q) in &qa {
        if let Some(r) = qb.get(id) {
            let (x, y) = (q["value"].as_f64(), r["value"].as_f64());
            let unit = r["unit"].as_str().unwrap_or("1").to_string();
            // A Celsius reading is compared on the absolute (kelvin) scale.
            let celsius = unit == "degC";
            let offset = |v: Option<f64>| v.map(|v| if celsius { v + 273.15 } else { v });
            if differs(offset(x), offset(y), tolerance) {
                quantities.push(QuantityChange {
                    id: id.clone(),
                    old: x,
                    new: y,
                    relative: match (x, y) {
                        (Some(x), Some(y)) if x != 0.0 && !celsius => Some((y - x) / x.abs()),
                        _ => None,
                    },
                    absolute: x.zip(y).map(|(x, y)| y - x),
                    unit,
                });
            }
        }
    }
    let quantities_added = qb
        .keys()
        .filter(|k| !qa.contains_key(*k))
        .cloned()
        .collect();
    let quantities_removed = qa
        .keys()
        .filter(|k| !qb.contains_key(*k))
        .cloned()
        .collect();

    let (ca, cb) = (by_id(&old.results["checks"]), by_id(&new.results["checks"]));
    let checks_flipped = ca
        .iter()
        .filter_map(|(id, c)| {
            let d = cb.get(id)?;
            (c["pass"].as_bool() != d["pass"].as_bool()).then(|| CheckChange {
                id: id.clone(),
                statement: d["statement"].as_str().unwrap_or_default().to_string(),
                old_pass: c["pass"].as_bool(),
                new_pass: d["pass"].as_bool(),
                old_value: c["value"].as_f64(),
                new_value: d["value"].as_f64(),
                unit: d["unit"].as_str().unwrap_or("1").to_string(),
            })
        })
        .collect();
    Delta {
        old: format!("{} ({})", old.title(), old.label),
        new: format!("{} ({})", new.title(), new.label),
        tolerance,
        inputs,
        quantities,
        quantities_added,
        quantities_removed,
        checks_flipped,
        checks_added: cb
            .keys()
            .filter(|k| !ca.contains_key(*k))
            .cloned()
            .collect(),
        checks_removed: ca
            .keys()
            .filter(|k| !cb.contains_key(*k))
            .cloned()
            .collect(),
    }
}

/// A stored value as people read it. Lives are stored in seconds under the code `s`;
/// anything of 100 h or more is shown in hours.
fn shown(v: Option<f64>, unit: &str) -> String {
    v.map_or("-".to_string(), |v| {
        let u = match Unit::from_code(unit) {
            Unit::Second if v.abs() >= 100.0 * 3600.0 => Unit::Hour,
            other => other,
        };
        format_value(v, u)
    })
}

/// The change of a quantity: relative in percent, or for a Celsius reading the
/// difference in kelvin.
fn change(q: &QuantityChange) -> String {
    let signed = |x: f64| if x > 0.0 { "+" } else { "" };
    match (q.relative, q.absolute) {
        (Some(r), _) => format!("{}{} %", signed(r), format_number(100.0 * r, 4)),
        (None, Some(a)) if q.unit == "degC" => format!("{}{} K", signed(a), format_number(a, 4)),
        _ => "new".to_string(),
    }
}

fn verdict(p: Option<bool>) -> &'static str {
    match p {
        Some(true) => "pass",
        Some(false) => "FAIL",
        None => "-",
    }
}

/// The delta as a terminal table.
pub fn table(d: &Delta) -> String {
    let mut out = format!(
        "revision delta: {} -> {}\nrelative tolerance {}\n",
        d.old,
        d.new,
        format_number(d.tolerance, 3)
    );
    let or_dash = |s: &Option<String>| s.clone().unwrap_or_else(|| "-".into());
    if !d.inputs.is_empty() {
        out.push_str(&format!("\ninputs changed ({})\n", d.inputs.len()));
        for c in &d.inputs {
            out.push_str(&format!(
                "  {:<40} {:>16} -> {}\n",
                c.key,
                or_dash(&c.old),
                or_dash(&c.new)
            ));
        }
    }
    if !d.checks_flipped.is_empty() {
        out.push_str(&format!("\nchecks flipped ({})\n", d.checks_flipped.len()));
        for c in &d.checks_flipped {
            out.push_str(&format!(
                "  {:<40} {} -> {}   {} -> {}\n",
                c.id,
                verdict(c.old_pass),
                verdict(c.new_pass),
                shown(c.old_value, &c.unit),
                shown(c.new_value, &c.unit)
            ));
        }
    }
    if !d.quantities.is_empty() {
        out.push_str(&format!(
            "\nquantities changed beyond the tolerance ({})\n",
            d.quantities.len()
        ));
        out.push_str(&format!(
            "  {:<40} {:>14} {:>14} {:>12}\n",
            "id", "old", "new", "change"
        ));
        for q in &d.quantities {
            out.push_str(&format!(
                "  {:<40} {:>14} {:>14} {:>12}\n",
                q.id,
                shown(q.old, &q.unit),
                shown(q.new, &q.unit),
                change(q)
            ));
        }
    }
    for (title, list) in [
        ("quantities added", &d.quantities_added),
        ("quantities removed", &d.quantities_removed),
        ("checks added", &d.checks_added),
        ("checks removed", &d.checks_removed),
    ] {
        if !list.is_empty() {
            out.push_str(&format!("\n{title} ({})\n", list.len()));
            for id in list {
                out.push_str(&format!("  {id}\n"));
            }
        }
    }
    out.push_str(&format!(
        "\n{} input(s), {} quantit(ies) beyond tolerance, {} check(s) flipped, {} added, {} removed{}\n",
        d.inputs.len(),
        d.quantities.len(),
        d.checks_flipped.len(),
        d.quantities_added.len() + d.checks_added.len(),
        d.quantities_removed.len() + d.checks_removed.len(),
        if d.changed() { "" } else { ": no change" }
    ));
    out
}

/// The delta as a typst document (a revision-delta sheet for a submission).
pub fn typst_source(d: &Delta, date: &str) -> String {
    let mut s = String::from(
        "#set page(paper: \"a4\", margin: 2cm, numbering: \"1 / 1\")\n#set text(font: \"Libertinus Serif\", size: 9.5pt)\n#set table(stroke: 0.4pt + luma(170), inset: 4pt)\n",
    );
    s.push_str("= Revision delta\n\n");
    s.push_str(&format!(
        "#table(columns: (auto, 1fr), [From], {}, [To], {}, [Relative tolerance], {}, [Date of the newer record], {})\n\n",
        content(&d.old),
        content(&d.new),
        content(&format_number(d.tolerance, 3)),
        content(date)
    ));
    let cell = |t: &str| content(t);
    let or_dash = |v: &Option<String>| v.clone().unwrap_or_else(|| "-".into());
    s.push_str(&format!("== Inputs changed ({})\n", d.inputs.len()));
    if !d.inputs.is_empty() {
        let rows: Vec<String> = d
            .inputs
            .iter()
            .map(|c| {
                format!(
                    "{}, {}, {}",
                    cell(&c.key),
                    cell(&or_dash(&c.old)),
                    cell(&or_dash(&c.new))
                )
            })
            .collect();
        s.push_str(&format!(
            "#table(columns: (auto, 1fr, 1fr), table.header([*Key*], [*Old*], [*New*]), {})\n",
            rows.join(", ")
        ));
    }
    s.push_str(&format!("== Checks flipped ({})\n", d.checks_flipped.len()));
    if !d.checks_flipped.is_empty() {
        let rows: Vec<String> = d
            .checks_flipped
            .iter()
            .map(|c| {
                format!(
                    "{}, {}, {}, {}",
                    cell(&c.id),
                    cell(&c.statement),
                    cell(&format!(
                        "{} → {}",
                        verdict(c.old_pass),
                        verdict(c.new_pass)
                    )),
                    cell(&format!(
                        "{} → {}",
                        shown(c.old_value, &c.unit),
                        shown(c.new_value, &c.unit)
                    ))
                )
            })
            .collect();
        s.push_str(&format!(
            "#table(columns: (auto, 1fr, auto, auto), table.header([*Check*], [*Statement*], [*Verdict*], [*Value*]), {})\n",
            rows.join(", ")
        ));
    }
    s.push_str(&format!(
        "== Quantities changed beyond the tolerance ({})\n",
        d.quantities.len()
    ));
    if !d.quantities.is_empty() {
        let rows: Vec<String> = d
            .quantities
            .iter()
            .map(|q| {
                format!(
                    "{}, {}, {}, {}",
                    cell(&q.id),
                    cell(&shown(q.old, &q.unit)),
                    cell(&shown(q.new, &q.unit)),
                    cell(&change(q))
                )
            })
            .collect();
        s.push_str(&format!(
            "#table(columns: (1fr, auto, auto, auto), table.header([*Quantity*], [*Old*], [*New*], [*Change*]), {})\n",
            rows.join(", ")
        ));
    }
    for (title, list) in [
        ("Quantities added", &d.quantities_added),
        ("Quantities removed", &d.quantities_removed),
        ("Checks added", &d.checks_added),
        ("Checks removed", &d.checks_removed),
    ] {
        if !list.is_empty() {
            s.push_str(&format!("== {title} ({})\n", list.len()));
            let items: Vec<String> = list
                .iter()
                .map(|id| format!("- {}", crate::report::markup::text(id)))
                .collect();
            s.push_str(&items.join("\n"));
            s.push('\n');
        }
    }
    s
}
