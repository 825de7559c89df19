//! The generated sections a template places, and the inline references it inserts.
//!
//! Sections hand their data to functions of the template's `style.typ` as typst
//! values (strings, booleans, arrays); the look of the package lives in the style file,
//! the numbers here.

use super::markup::{content, string, text};
use super::template::{self, Origin, Resolver};
use crate::diag::{Diagnostic, SourceText};
use crate::package::Stamp;
use crate::record::Design;
use crate::sheet::{math_value, plain_number, Quantity, Sheet, Source};
use crate::units::{format_value, Unit};
use std::collections::BTreeSet;

/// A plot available to `@place plot NAME`.
pub struct PlotRef {
    pub name: &'static str,
    pub caption: String,
    /// Path of the SVG in the typst world.
    pub asset: String,
}

/// The subjects of the calculation sections, in package order: (name, title, id prefixes).
pub const SUBJECTS: &[(&str, &str, &[&str])] = &[
    (
        "operating-points",
        "Operating points and load",
        &["dc.", "output.", "bridge.", "load.", "limits.light_load"],
    ),
    ("filter", "Output filter", &["filter.", "grid."]),
    (
        "modulation",
        "Modulation",
        &["modulation.", "limits.max_modulation_index"],
    ),
    ("spectrum", "Switch-node spectrum", &["spectrum."]),
    (
        "quality",
        "Output quality and harmonic compliance",
        &["quality.", "limits.max_voltage_"],
    ),
    (
        "ripple",
        "Ripple current and filter stresses",
        &["ripple.", "limits.max_ripple_fraction"],
    ),
    (
        "semiconductors",
        "Semiconductor stresses and losses",
        &[
            "semi.",
            "limits.max_voltage_utilisation",
            "limits.max_current_utilisation",
        ],
    ),
    (
        "thermal",
        "Thermal path and junction temperatures",
        &["thermal.", "limits.min_junction_margin"],
    ),
    (
        "dc-link",
        "DC link",
        &[
            "dclink.",
            "limits.min_capacitor_life",
            "limits.safe_touch_voltage",
            "limits.max_discharge_time",
        ],
    ),
    ("efficiency", "Losses and efficiency", &["efficiency."]),
    ("ratings", "Ratings", &["ratings."]),
    ("limits", "Design limits", &["limits."]),
];

/// Which subject a quantity belongs to: the first whose prefixes match.
pub fn subject_of(id: &str) -> &'static str {
    SUBJECTS
        .iter()
        .find(|(_, _, prefixes)| prefixes.iter().any(|p| id.starts_with(p)))
        .map_or("limits", |(name, _, _)| name)
}

/// The assumptions every evaluation makes, stated in every package.
pub const ENGINE_ASSUMPTIONS: &[(&str, &str)] = &[
    ("E1", "For the modulation, the spectrum and the filter, switches and diodes are ideal: no forward drops, no dead time, instantaneous transitions. Losses use the device model of the semiconductor section."),
    ("E2", "Filter components are ideal and lossless; L and C do not change with current, voltage, frequency or temperature."),
    ("E3", "The load is a constant impedance: a resistance for the real power in parallel with an inductance for the reactive power of the lagging power factor."),
    ("E4", "Modulation is sine-triangle PWM; modulation indices follow from switching-period averages of the bridge output."),
    ("E5", "The DC voltage is constant at each operating point (no ripple at the output or switching frequency)."),
    ("E6", "The inductor ripple current is that of the inductor between the switch node and a sinusoidal voltage (the filter capacitor's, or the grid's behind an L filter), integrated over each carrier period of the exact PWM waveform."),
    ("E7", "The switching spectrum is that of ideal naturally sampled PWM at a constant DC voltage: low-order harmonics from dead time, device drops, DC ripple, sampling delay and control are not in it, and must be covered by measurement."),
    ("E8", "A grid-connected bridge sees a stiff sinusoidal grid source free of harmonics behind the stated grid inductance (zero where none is stated)."),
    ("E9", "The grid current is at the rated power and power factor, lagging the voltage at the connection point by arccos of the power factor; a balanced three-phase output is evaluated per phase."),
    ("E10", "A battery's or PV string's DC power is taken as the rated output power (the bridge's losses are not in it), and a battery's open-circuit voltage sits behind a constant internal resistance."),
    ("E11", "Device losses: every switch position carries the same device; the leg current is its fundamental, constant over a carrier period; conduction follows a threshold and a slope resistance (an IGBT's and a diode's at the hot junction as entered, a MOSFET's R_ds,on rising linearly from 25 °C); switching and recovery energies scale linearly with voltage and current from the datasheet's reference point; the gate drive's own losses are in the auxiliary power."),
    ("E12", "Thermal: steady state, one heatsink shared by all positions, each switch with its diode in one package; the DC-link bank carries the bridge's input current less its mean (the source delivers only the mean), the inductor ripple left out; capacitor life follows the 10 K rule from the rated life."),
    ("E13", "Efficiency: the losses of the semiconductors, the DC-link ESR, the inductor windings, the bleeder, the damping resistor and the auxiliary supplies; core losses, the grid-side inductor's winding and the capacitors' dielectric losses are not included; all at the highest ambient."),
];

/// Everything the sections need.
pub struct Context<'a> {
    pub design: &'a Design,
    pub sheet: &'a Sheet,
    pub stamp: &'a Stamp,
    pub plots: &'a [PlotRef],
    pub record: &'a SourceText,
    /// Sections placed so far; the cautions and assumptions are appended if a template
    /// leaves them out, because no package may go without them.
    pub placed: BTreeSet<String>,
    /// Problems in the record's own Markdown (`description`, `notes`), at record lines.
    pub record_errors: Vec<Diagnostic>,
}

pub(super) fn err(message: String, hint: &str) -> (String, String) {
    (message, hint.to_string())
}

const BLOCKS: &[&str] = &[
    "title",
    "revisions",
    "checks",
    "inputs",
    "assumptions",
    "cautions",
    "description",
    "notes",
    "calculations",
    "calculation",
    "plot",
    "pagebreak",
    "contents",
    "findings",
];

impl Resolver for Context<'_> {
    fn block(&mut self, name: &str, arg: Option<&str>) -> Result<String, (String, String)> {
        let placed = match arg {
            Some(a) => format!("{name} {a}"),
            None => name.to_string(),
        };
        let out = match (name, arg) {
            ("title", None) => self.title(),
            ("revisions", None) => self.revisions(),
            ("checks", None) => self.checks(),
            ("inputs", None) => self.inputs(),
            ("assumptions", None) => self.assumptions(),
            ("cautions", None) => self.cautions(),
            ("description", None) => self.record_markdown("project.description"),
            ("notes", None) => self.record_markdown("notes"),
            ("calculations", None) => {
                let mut all = String::new();
                for (subject, _, _) in SUBJECTS {
                    all.push_str(&self.calculation(subject)?);
                    self.placed.insert(format!("calculation {subject}"));
                }
                Ok(all)
            }
            ("calculation", Some(subject)) => self.calculation(subject),
            ("plot", Some(plot)) => self.plot(plot),
            ("findings", Some(subject)) => {
                super::findings::findings(self.design, self.sheet, subject)
            }
            ("pagebreak", None) => Ok("#pagebreak(weak: true)".to_string()),
            ("contents", None) => Ok("#contents-block()".to_string()),
            (known, _) if BLOCKS.contains(&known) => Err(err(
                format!(
                    "`@place {placed}` takes {}",
                    if arg.is_some() {
                        "no argument"
                    } else {
                        "an argument"
                    }
                ),
                "see the directive list in the README, e.g. `@place calculation filter`",
            )),
            (unknown, _) => Err(match crate::diag::did_you_mean(unknown, BLOCKS) {
                Some(close) => err(
                    format!("unknown section `{unknown}`"),
                    &format!("did you mean `{close}`?"),
                ),
                None => err(
                    format!("unknown section `{unknown}`"),
                    &format!("sections: {}", BLOCKS.join(", ")),
                ),
            }),
        }?;
        self.placed.insert(placed);
        Ok(out)
    }

    fn inline(&mut self, reference: &str) -> Result<String, (String, String)> {
        let (id, form) = match reference.split_once('|') {
            Some((id, form)) => (id.trim(), Some(form.trim())),
            None => (reference, None),
        };
        let p = &self.design.project;
        let field = match id {
            "project.id" => Some(p.id.clone()),
            "project.title" => Some(p.title.clone()),
            "project.revision" => Some(p.revision.clone()),
            "project.date" => Some(p.date.to_string()),
            "project.prepared_by" => Some(p.prepared_by.clone()),
            _ => None,
        };
        if let Some(f) = field {
            return match form {
                None => Ok(text(&f)),
                Some(other) => Err(err(
                    format!("`{id}` is record text and has no `{other}` form"),
                    "write it without `|...`",
                )),
            };
        }
        if let Some(c) = self.sheet.checks.iter().find(|c| c.id == id) {
            if let Some(other) = form {
                return Err(err(
                    format!("`{id}` is a check and has no `{other}` form"),
                    "write it as `@{check.ID}` for its verdict and margin",
                ));
            }
            return Ok(text(&format!(
                "{} (margin {})",
                if c.pass { "pass" } else { "FAIL" },
                format_value(c.margin, Unit::Percent)
            )));
        }
        let Some(q) = self.sheet.get(id) else {
            let hint = self.sheet.unknown_id_hint(id);
            return Err((format!("unknown result id `{id}`"), hint));
        };
        match form {
            None => Ok(value_markup(q)),
            Some("value") => Ok(text(&plain_number(q.value * q.unit.display_scale()))),
            Some("symbol") => Ok(format!("${}$", q.symbol)),
            Some("formula") => Ok(format!("${}$", equation_line(q))),
            Some(other) => Err(err(
                format!("unknown reference form `{other}`"),
                "use `@{ID}`, `@{ID|value}`, `@{ID|symbol}` or `@{ID|formula}`",
            )),
        }
    }
}

/// A spectral line other than the fundamental: an id segment `h<digit>...` other
/// than `h1` (`spectrum.switch.h41.min`, `quality.v.h399`).
pub fn is_spectral_line(id: &str) -> bool {
    id.split('.').any(|seg| {
        seg.len() > 1
            && seg.starts_with('h')
            && seg[1..].chars().all(|c| c.is_ascii_digit() || c == '_')
            && seg != "h1"
    })
}

/// A result at a load point below rated (`efficiency.eta.nominal.k50`): listed in one
/// line table per kind, like the spectral lines, while the rated-load result (`k100`)
/// keeps its full entry with the formula the others share.
pub fn is_load_line(id: &str) -> bool {
    id.split('.')
        .any(|seg| load_percent(seg).is_some_and(|p| p != "100"))
}

/// The percentage of a load segment: `k50` -> `50`.
fn load_percent(seg: &str) -> Option<&str> {
    seg.strip_prefix('k')
        .filter(|d| !d.is_empty() && d.chars().all(|c| c.is_ascii_digit()))
}

/// The id with its order (or load) segment replaced by `h*` (`k*`): the kind of line.
fn line_stem(id: &str) -> String {
    id.split('.')
        .map(|seg| {
            if seg.len() > 1
                && seg.starts_with('h')
                && seg[1..].starts_with(|c: char| c.is_ascii_digit())
            {
                "h*"
            } else if load_percent(seg).is_some() {
                "k*"
            } else {
                seg
            }
        })
        .collect::<Vec<_>>()
        .join(".")
}

/// A source as printed in the package: the terminal's backticks around keys dropped.
fn pdf_source(source: &Source) -> String {
    source.describe().replace('`', "")
}

/// A result as text with a non-breaking space before its unit: `1.186~kHz`.
pub(super) fn value_markup(q: &Quantity) -> String {
    if let Some(class) = &q.class {
        return text(class);
    }
    let shown = q.display();
    match shown.split_once(' ') {
        Some((n, u)) => format!("{}~{}", text(n), text(u)),
        None => text(&shown),
    }
}

/// The result in typst math: `1.186 "kHz"`, or the class in quotes.
fn math_result(q: &Quantity) -> String {
    match &q.class {
        Some(class) => format!("\"{class}\""),
        None => {
            let v = math_value(q.value, q.unit);
            v.strip_prefix('(')
                .and_then(|v| v.strip_suffix(')'))
                .map_or(v.clone(), str::to_string)
        }
    }
}

/// `symbol = formula = substituted = result` on one line (inline use).
fn equation_line(q: &Quantity) -> String {
    let mut parts = vec![q.symbol.clone()];
    if !q.is_input() {
        parts.push(q.formula.clone());
        if q.substituted != q.formula {
            parts.push(q.substituted.clone());
        }
    }
    parts.push(math_result(q));
    parts.join(" = ")
}

/// The aligned display equation of a calculation entry, one step per line.
fn equation_block(q: &Quantity) -> String {
    if q.is_input() || matches!(q.source, Source::CommonPractice { .. }) && q.inputs.is_empty() {
        return format!("$ {} = {} $", q.symbol, math_result(q));
    }
    let mut lines = vec![format!("{} &= {}", q.symbol, q.formula)];
    if q.substituted != q.formula {
        lines.push(format!("&= {}", q.substituted));
    }
    lines.push(format!("&= {}", math_result(q)));
    format!("$ {} $", lines.join(" \\\n"))
}

impl Context<'_> {
    fn title(&self) -> Result<String, (String, String)> {
        let p = &self.design.project;
        let failing = self.sheet.checks.iter().filter(|c| !c.pass).count();
        Ok(format!(
            "#title-block(id: {}, title: {}, revision: {}, date: {}, prepared-by: {}, engine: {}, checks: {}, failing: {})",
            string(&p.id),
            string(&p.title),
            string(&p.revision),
            string(&p.date.to_string()),
            string(&p.prepared_by),
            string(&self.stamp.engine_version),
            self.sheet.checks.len(),
            failing
        ))
    }

    fn revisions(&self) -> Result<String, (String, String)> {
        let p = &self.design.project;
        let mut rows: Vec<String> = p
            .revisions
            .iter()
            .map(|r| {
                format!(
                    "({}, {}, {}, {})",
                    string(&r.rev),
                    string(&r.date.to_string()),
                    string(&r.by),
                    string(&r.change)
                )
            })
            .collect();
        if !p.revisions.iter().any(|r| r.rev == p.revision) {
            rows.push(format!(
                "({}, {}, {}, {})",
                string(&p.revision),
                string(&p.date.to_string()),
                string(&p.prepared_by),
                string("(this revision)")
            ));
        }
        Ok(format!(
            "#revision-block(current: {}, history: ({},), package-id: {}, record-hash: {}, engine-hash: {}, engine: {}, prepared-by: {})",
            string(&p.revision),
            rows.join(", "),
            string(&self.stamp.package_id),
            string(&self.stamp.record_sha256),
            string(&self.stamp.engine_sha256),
            string(&self.stamp.engine_version),
            string(&p.prepared_by),
        ))
    }

    fn checks(&self) -> Result<String, (String, String)> {
        let rows: Vec<String> = self
            .sheet
            .checks
            .iter()
            .map(|c| {
                format!(
                    "({}, {}, {}, {}, {}, {}, {})",
                    string(&c.id),
                    string(&c.statement),
                    string(&format_value(c.value, c.unit)),
                    string(&format!(
                        "{} {}",
                        c.relation.symbol(),
                        format_value(c.limit, c.unit)
                    )),
                    string(&format_value(c.margin, Unit::Percent)),
                    c.pass,
                    string(&pdf_source(&c.source)),
                )
            })
            .collect();
        let warnings: Vec<String> = self
            .sheet
            .warnings
            .iter()
            .map(|w| string(&w.text))
            .collect();
        Ok(format!(
            "#check-summary(({},), warnings: ({}))",
            rows.join(", "),
            if warnings.is_empty() {
                String::new()
            } else {
                format!("{},", warnings.join(", "))
            }
        ))
    }

    fn inputs(&self) -> Result<String, (String, String)> {
        // Revision history and assumptions have their own sections.
        let rows: Vec<String> = self
            .design
            .inputs
            .iter()
            .filter(|i| {
                !i.key.starts_with("project.revisions") && !i.key.starts_with("assumptions")
            })
            .map(|i| {
                format!(
                    "({}, {}, {})",
                    string(&i.key),
                    string(&i.text),
                    string(&i.line.to_string())
                )
            })
            .collect();
        Ok(format!(
            "#inputs-table(({},), file: {})",
            rows.join(", "),
            // The file name alone: the package must not depend on the path typed.
            string(
                &std::path::Path::new(&self.record.name)
                    .file_name()
                    .map_or(self.record.name.clone(), |n| n
                        .to_string_lossy()
                        .to_string())
            )
        ))
    }

    fn assumptions(&self) -> Result<String, (String, String)> {
        let mut rows: Vec<String> = self
            .design
            .assumptions
            .iter()
            .map(|a| format!("({}, {})", string(&a.id), content(&a.text)))
            .collect();
        rows.extend(
            ENGINE_ASSUMPTIONS
                .iter()
                .map(|(id, t)| format!("({}, {})", string(id), content(t))),
        );
        Ok(format!("#assumptions-list(({},))", rows.join(", ")))
    }

    fn cautions(&self) -> Result<String, (String, String)> {
        let s = self.sheet;
        let v_dc = format_value(s.value("dc.v_max"), Unit::Volt);
        let v = s.value("output.v_peak");
        let three = self.design.bridge.topology == crate::record::Topology::ThreePhase;
        let v_pk = if three {
            format!(
                "{} line-to-line ({} line-to-neutral)",
                format_value(3f64.sqrt() * v, Unit::Volt),
                format_value(v, Unit::Volt)
            )
        } else {
            format_value(v, Unit::Volt)
        };
        let output = if self.design.output.grid() {
            "the grid connection peaks at"
        } else {
            "the output peaks at"
        };
        let filter_energy = match s.get("filter.capacitance") {
            Some(c) if three => format!(
                "the three output filter capacitors together hold up to {} at the output peak (star-connected), and ",
                format_value(1.5 * c.value * v * v, Unit::Joule)
            ),
            Some(c) => format!(
                "the output filter capacitor alone holds up to {} at the output peak, and ",
                format_value(0.5 * c.value * v * v, Unit::Joule)
            ),
            None => String::new(),
        };
        let grid = if self.design.output.grid() {
            " A grid-connected inverter is also energised from the grid side: isolate and lock out the grid connection as well as the DC source."
        } else {
            ""
        };
        let bus = match (s.get("dclink.energy"), s.get("dclink.t_discharge")) {
            (Some(e), Some(t)) => format!(
                "the DC-link capacitors hold {} at the DC maximum, and their bleeder takes {} to bring them below {}",
                format_value(e.value, Unit::Joule),
                format_value(t.value, Unit::Second),
                format_value(s.value("limits.safe_touch_voltage"), Unit::Volt),
            ),
            _ => "the DC-link capacitors (not evaluated in this package) usually hold far more, and how long they take to discharge is not known here".to_string(),
        };
        let wait = if s.get("dclink.t_discharge").is_some() {
            "Wait at least that long, then measure before touching"
        } else {
            "Measure before touching"
        };
        let items = [
            format!("Hazardous voltage. The DC input reaches {v_dc} and {output} {v_pk}; both can kill. Work on this equipment only de-energised, isolated and verified dead, by qualified persons.{grid}"),
            format!("Stored energy. Capacitors stay charged after the source is disconnected: {filter_energy}{bus}. {wait}; a bleeder can fail open, so never rely on it alone."),
            "This package does not replace review and sealing by a licensed professional engineer. Its numbers are only as good as the record's inputs and the stated assumptions.".to_string(),
            "Local electrical codes, the authority having jurisdiction and the utility's interconnection rules prevail over anything in this package.".to_string(),
        ];
        let list: Vec<String> = items.iter().map(|i| content(i)).collect();
        Ok(format!("#cautions-block(({},))", list.join(", ")))
    }

    fn record_markdown(&mut self, key: &str) -> Result<String, (String, String)> {
        let md = match key {
            "notes" => self.design.notes.clone(),
            _ => self.design.project.description.clone(),
        };
        if md.trim().is_empty() {
            return Ok(String::new());
        }
        let (first_line, indent) = block_position(self.record, key);
        let record = self.record;
        let origin = Origin {
            source: record,
            first_line,
            indent,
            key,
        };
        let mut inline = InlineOnly(self);
        match template::to_typst(&md, &origin, &mut inline) {
            Ok(markup) => Ok(markup),
            Err(errors) => {
                self.record_errors.extend(errors);
                Ok(String::new())
            }
        }
    }

    fn calculation(&self, subject: &str) -> Result<String, (String, String)> {
        let Some((name, title, _)) = SUBJECTS.iter().find(|(n, _, _)| *n == subject) else {
            let names: Vec<&str> = SUBJECTS.iter().map(|s| s.0).collect();
            return Err(err(
                format!("unknown calculation `{subject}`"),
                &format!("subjects: {}", names.join(", ")),
            ));
        };
        let (lines, entries): (Vec<&Quantity>, Vec<&Quantity>) = self
            .sheet
            .quantities
            .iter()
            .filter(|q| subject_of(&q.id) == *name)
            .partition(|q| is_spectral_line(&q.id) || is_load_line(&q.id));
        if lines.is_empty() && entries.is_empty() {
            // A subject the record does not describe (no switches, no DC link).
            return Ok(String::new());
        }
        let mut out = format!("#calc-section({})[\n", string(title));
        for q in entries {
            out.push_str(&format!(
                "#calc-entry(id: {}, name: {}, source: {}, input: {})[{}]\n",
                string(&q.id),
                string(&q.name),
                string(&pdf_source(&q.source)),
                q.is_input(),
                equation_block(q)
            ));
        }
        // Lines of one kind (same id stem) share a formula: one table per stem.
        let mut stems: Vec<(String, Vec<&Quantity>)> = Vec::new();
        for q in lines {
            let stem = line_stem(&q.id);
            match stems.iter_mut().find(|(s, _)| *s == stem) {
                Some((_, v)) => v.push(q),
                None => stems.push((stem, vec![q])),
            }
        }
        for (stem, qs) in stems {
            let first = qs[0];
            if stem.contains("k*") {
                // "Efficiency at 50 % load, DC nominal" -> "Efficiency by load, DC nominal".
                let pct = |q: &Quantity| {
                    q.id.split('.')
                        .find_map(load_percent)
                        .unwrap_or_default()
                        .to_string()
                };
                let family =
                    first
                        .name
                        .replacen(&format!("at {} % load", pct(first)), "by load", 1);
                let rows: Vec<String> = qs
                    .iter()
                    .map(|q| {
                        format!(
                            "({}, {})",
                            string(&format!("{} %", pct(q))),
                            string(&q.display())
                        )
                    })
                    .collect();
                out.push_str(&format!(
                    "#line-table(title: {}, id: {}, key: {}, source: {}, ({},))\n",
                    string(&family),
                    string(&stem),
                    string("k the load; the formula is that of the rated-load entry"),
                    string(&pdf_source(&first.source)),
                    rows.join(", ")
                ));
                continue;
            }
            let order = |q: &Quantity| {
                q.id.split('.')
                    .find(|seg| {
                        seg.starts_with('h') && seg[1..].starts_with(|c: char| c.is_ascii_digit())
                    })
                    .map_or(String::new(), |seg| seg[1..].replace('_', "."))
            };
            // "Switch-node harmonic 397 (peak), DC maximum" -> "... harmonic h (peak) ...".
            let first_order = order(first);
            let family = first.name.replacen(&first_order, "h", 1);
            let rows: Vec<String> = qs
                .iter()
                .map(|q| format!("({}, {})", string(&order(q)), string(&q.display())))
                .collect();
            out.push_str(&format!(
                "#line-table(title: {}, id: {}, source: {}, ({},))\n",
                string(&family),
                string(&stem),
                string(&pdf_source(&first.source)),
                rows.join(", ")
            ));
        }
        out.push(']');
        Ok(out)
    }

    fn plot(&self, name: &str) -> Result<String, (String, String)> {
        match self.plots.iter().find(|p| p.name == name) {
            Some(p) => Ok(format!(
                "#plot-figure({}, caption: {})",
                string(&p.asset),
                content(&p.caption)
            )),
            // A plot the engine knows but could not draw for this design (no spectrum,
            // no ripple envelope): the package says so where the figure would be.
            None if super::figures::PLOT_NAMES.contains(&name) => Ok(format!(
                "#block(inset: 6pt, stroke: 0.5pt + gray)[{}]",
                text(&format!(
                    "Figure `{name}` is not drawn for this design: its data could not be computed, or the record does not describe what it shows (see the warnings in the check summary, and the record's optional sections)."
                ))
            )),
            None => {
                let names: Vec<&str> = super::figures::PLOT_NAMES.to_vec();
                Err(err(
                    format!("unknown plot `{name}`"),
                    &format!("plots: {}", names.join(", ")),
                ))
            }
        }
    }

    /// Typst for the sections a template must not omit, where it did.
    pub fn mandatory_tail(&mut self) -> Result<String, (String, String)> {
        let mut out = String::new();
        for section in ["assumptions", "cautions"] {
            if !self.placed.contains(section) {
                out.push_str("\n\n");
                out.push_str(&self.block(section, None)?);
            }
        }
        Ok(out)
    }
}

/// Where a YAML block scalar's text starts: the line after its key, and its indent.
fn block_position(src: &SourceText, key: &str) -> (usize, usize) {
    let leaf = key.rsplit('.').next().unwrap_or(key);
    let needle = format!("{leaf}:");
    for (i, line) in src.text.lines().enumerate() {
        if line.trim_start().starts_with(&needle) {
            let next = src.text.lines().nth(i + 1).unwrap_or("");
            let indent = next.len() - next.trim_start().len();
            return (i + 2, indent);
        }
    }
    (1, 0)
}

/// Resolver for record text: inline references only.
struct InlineOnly<'c, 'a>(&'c mut Context<'a>);

impl Resolver for InlineOnly<'_, '_> {
    fn block(&mut self, name: &str, _arg: Option<&str>) -> Result<String, (String, String)> {
        Err(err(
            format!("`@place {name}` is for templates, not for record text"),
            "use inline references such as `@{filter.f0}` in the record",
        ))
    }
    fn inline(&mut self, reference: &str) -> Result<String, (String, String)> {
        self.0.inline(reference)
    }
}

/// Problems in the inline references of the record's own Markdown, found without
/// rendering a package (for `check` and `explain`).
pub fn record_text_errors(record: &crate::record::Record, sheet: &Sheet) -> Vec<Diagnostic> {
    let stamp = Stamp {
        record_sha256: String::new(),
        engine_sha256: String::new(),
        templates_sha256: String::new(),
        engine_version: String::new(),
        package_id: String::new(),
    };
    let mut ctx = Context {
        design: &record.design,
        sheet,
        stamp: &stamp,
        plots: &[],
        record: &record.source,
        placed: BTreeSet::new(),
        record_errors: Vec::new(),
    };
    for key in ["project.description", "notes"] {
        let _ = ctx.record_markdown(key);
    }
    ctx.record_errors
}
