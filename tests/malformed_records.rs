//! Malformed design records through the real binary. Each case edits a demo record as
//! text, builds it into a scratch folder and expects exit code 2, a diagnostic that
//! names the file, line, column and key path, quotes the source line, gives a hint,
//! and nothing written. Expected lines are found in the edited text, never hard-coded.

mod common;

use common::{demo, edit, Scratch};
use std::process::{Command, Output};

/// 1-based number of the one line that contains `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    let hits: Vec<usize> = text
        .lines()
        .enumerate()
        .filter(|(_, l)| l.contains(needle))
        .map(|(i, _)| i + 1)
        .collect();
    assert_eq!(hits.len(), 1, "`{needle}` on lines {hits:?}, expected one");
    hits[0]
}

/// 1-based column of `needle` on the line that holds `line_needle`.
fn col_of(text: &str, line_needle: &str, needle: &str) -> usize {
    let line = text.lines().nth(line_of(text, line_needle) - 1).unwrap();
    let byte = line
        .find(needle)
        .unwrap_or_else(|| panic!("`{needle}` not on line `{line}`"));
    line[..byte].chars().count() + 1
}

/// What one run of the binary left behind.
struct Run {
    code: Option<i32>,
    stderr: String,
    stdout: String,
    /// The record's path as given on the command line (and so as named in messages).
    file: String,
    text: String,
    /// Whether `<tempdir>/out` exists after the run.
    out_exists: bool,
    /// Everything in the temp dir other than the record itself.
    stray: Vec<String>,
}

fn output_of(o: Output) -> (Option<i32>, String, String) {
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stderr).to_string(),
        String::from_utf8_lossy(&o.stdout).to_string(),
    )
}

/// Writes `text` as a record into a fresh temp dir and runs `bridgebook <command>` on it.
fn run_on(command: &str, text: &str) -> Run {
    let dir = Scratch::new("malformed").with_parts();
    let file = dir.path().join("design.yaml");
    std::fs::write(&file, text).expect("write record");
    let out = dir.path().join("out");
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_bridgebook"));
    cmd.arg(command).arg(&file);
    if command == "build" {
        cmd.arg("--out").arg(&out);
    }
    let (code, stderr, stdout) = output_of(cmd.output().expect("run bridgebook"));
    let stray = std::fs::read_dir(dir.path())
        .expect("list temp dir")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n != "design.yaml" && n != "parts")
        .collect();
    Run {
        code,
        stderr,
        stdout,
        file: file.display().to_string(),
        text: text.to_string(),
        out_exists: out.exists(),
        stray,
    }
}

fn build(text: &str) -> Run {
    run_on("build", text)
}

/// Where a diagnostic must point.
struct At<'a> {
    /// A fragment of the line it points at, used to find that line in the edited text.
    line: &'a str,
    /// A fragment of that line whose start is the column; `None` checks the line only.
    col: Option<&'a str>,
    /// The dotted key path (empty for the whole file).
    key: &'a str,
}

impl Run {
    /// Exit 2, nothing written, and the summary counts `n` errors.
    fn assert_rejected(&self, n: usize) {
        assert_eq!(self.code, Some(2), "exit code; stderr:\n{}", self.stderr);
        assert!(!self.out_exists, "the output folder was created");
        assert!(
            self.stray.is_empty(),
            "files were written: {:?}",
            self.stray
        );
        let summary = format!(
            "{n} error{}; nothing was written",
            if n == 1 { "" } else { "s" }
        );
        assert!(
            self.stderr.trim_end().ends_with(&summary),
            "expected `{summary}` last in:\n{}",
            self.stderr
        );
        assert_eq!(
            self.stderr.matches("\nerror: ").count() + self.stderr.starts_with("error: ") as usize,
            n,
            "number of diagnostics in:\n{}",
            self.stderr
        );
    }

    /// The diagnostic whose `error:` line contains `message`.
    fn block(&self, message: &str) -> &str {
        self.stderr
            .split("\n\n")
            .find(|b| b.lines().next().is_some_and(|l| l.contains(message)))
            .unwrap_or_else(|| panic!("no error containing `{message}` in:\n{}", self.stderr))
    }

    /// Asserts one diagnostic: its message, its place, the quoted line, and its hint.
    fn assert_error(&self, message: &str, at: At, hint: &str) {
        let block = self.block(message);
        let line = line_of(&self.text, at.line);
        let place = match at.col {
            Some(c) => format!("{}:{line}:{}", self.file, col_of(&self.text, at.line, c)),
            None => format!("{}:{line}:", self.file),
        };
        let arrow = block
            .lines()
            .find(|l| l.trim_start().starts_with("--> "))
            .unwrap_or_else(|| panic!("no `-->` line in:\n{block}"));
        assert!(
            arrow.contains(&place),
            "expected `{place}` in `{arrow}`\n{block}"
        );
        if at.key.is_empty() {
            assert!(!arrow.contains(" at `"), "unexpected key path: {arrow}");
        } else {
            assert!(
                arrow.ends_with(&format!(" at `{}`", at.key)),
                "expected key path `{}` in `{arrow}`",
                at.key
            );
        }
        let source_line = self.text.lines().nth(line - 1).unwrap();
        assert!(
            block.contains(&format!("{line} | {source_line}")),
            "source line {line} not quoted in:\n{block}"
        );
        let hint_line = block
            .lines()
            .find(|l| l.trim_start().starts_with("= hint: "))
            .unwrap_or_else(|| panic!("no hint in:\n{block}"));
        assert!(
            hint_line.contains(hint),
            "expected hint `{hint}`, got `{hint_line}`"
        );
    }
}

fn ridge() -> String {
    demo("ridge-pump-b.yaml")
}

// bridgebook record format 1: unknown keys are errors, with the closest known key offered.
#[test]
fn misspelt_key_suggests_the_known_one() {
    let text = edit(&ridge(), "  inductance: 1.8 mH", "  inductanse: 1.8 mH");
    let r = build(&text);
    // The misspelling also leaves `inductance` missing; both are reported.
    r.assert_rejected(2);
    r.assert_error(
        "unknown key `inductanse` in `filter`",
        At {
            line: "inductanse:",
            col: Some("inductanse"),
            key: "filter.inductanse",
        },
        "did you mean `inductance`?",
    );
    r.assert_error(
        "missing key `inductance` in `filter`",
        At {
            line: "filter:",
            col: Some("filter"),
            key: "filter.inductance",
        },
        "add `inductance:`",
    );
}

// bridgebook record format 1: unknown keys are errors, at the top level too.
#[test]
fn unknown_top_level_key() {
    let text = edit(&ridge(), "\nnotes: |", "\nowner: Water board\nnotes: |");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "unknown key `owner` at the top of the record",
        At {
            line: "owner: Water board",
            col: Some("owner"),
            key: "owner",
        },
        "known keys here: bridgebook, project, source, output, bridge, filter",
    );
}

// bridgebook record format 1: `output.frequency` is required; the error stands at the
// mapping that lacks it.
#[test]
fn missing_required_key() {
    let text = edit(&ridge(), "  frequency: 50 Hz\n", "");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "missing key `frequency` in `output`",
        At {
            line: "output:",
            col: Some("output"),
            key: "output.frequency",
        },
        // The example offered must itself be a valid output frequency.
        "add `frequency:` with a frequency such as `50 Hz`",
    );
}

// bridgebook record format 1: a key written with nothing after it is an error at that key.
#[test]
fn key_without_a_value() {
    let text = edit(
        &ridge(),
        "  title: Ridge pumping station, 2.2 kW inverter",
        "  title:",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`title` has no value",
        At {
            line: "  title:",
            col: Some("title"),
            key: "project.title",
        },
        "write a text after `title:`",
    );
}

// bridgebook record format 1: values carry units, and the unit must measure the key's
// quantity (an inductance in H, not a voltage).
#[test]
fn wrong_dimension() {
    let text = edit(&ridge(), "inductance: 1.8 mH", "inductance: 3.2 mV");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "expected an inductance (H), got `3.2 mV`",
        At {
            line: "inductance: 3.2 mV",
            col: Some("3.2 mV"),
            key: "filter.inductance",
        },
        "write it with a unit, e.g. `inductance: 1.8 mH`",
    );
}

// bridgebook record format 1: a bare number is not accepted where a unit is needed.
#[test]
fn missing_unit() {
    let text = edit(
        &ridge(),
        "switching_frequency: 20 kHz",
        "switching_frequency: 20000",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "missing unit: expected a frequency (Hz): `20000`",
        At {
            line: "switching_frequency: 20000",
            col: Some("20000"),
            key: "bridge.switching_frequency",
        },
        "write it with a unit, e.g. `switching_frequency: 20 kHz`",
    );
}

// bridgebook record format 1: only the listed unit symbols and SI prefixes are read.
#[test]
fn unknown_unit() {
    let text = edit(&ridge(), "carrier_peak: 5 V", "carrier_peak: 5 Volts");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "unknown unit `Volts`: `5 Volts`",
        At {
            line: "carrier_peak: 5 Volts",
            col: Some("5 Volts"),
            key: "bridge.carrier_peak",
        },
        "e.g. `carrier_peak: 5 V`",
    );
}

// bridgebook record format 1: a quantity starts with a number.
#[test]
fn not_a_number() {
    let text = edit(&ridge(), "power: 2.2 kW", "power: lots");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "not a number: `lots`",
        At {
            line: "power: lots",
            col: Some("lots"),
            key: "output.power",
        },
        "e.g. `power: 2.2 kW`",
    );
}

// bridgebook record format 1: the rated power is above 0 W.
#[test]
fn zero_power() {
    let text = edit(&ridge(), "power: 2.2 kW", "power: 0 W");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`power` = 0 W is outside the accepted range: above 0 W, at most 10 MW",
        At {
            line: "power: 0 W",
            col: Some("0 W"),
            key: "output.power",
        },
        "above 0 W",
    );
}

// bridgebook record format 1: DC input voltages are above 0 V.
#[test]
fn negative_dc_voltage() {
    let text = edit(&ridge(), "min: 720 V", "min: -720 V");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`min` = -720 V is outside the accepted range: above 0 V, at most 2 kV",
        At {
            line: "min: -720 V",
            col: Some("-720 V"),
            key: "source.voltage.min",
        },
        "above 0 V and at most 2 kV",
    );
}

// bridgebook record format 1: filter capacitors are at most 0.1 F; 5 F is a typo.
#[test]
fn absurd_capacitance() {
    let text = edit(&ridge(), "capacitance: 10 uF", "capacitance: 5 F");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`capacitance` = 5 F is outside the accepted range: above 0 F, at most 100 mF",
        At {
            line: "capacitance: 5 F",
            col: Some("5 F"),
            key: "filter.capacitance",
        },
        "between nF and a few mF",
    );
}

// bridgebook record format 1: the DC window satisfies min <= nominal <= max.
#[test]
fn dc_window_out_of_order() {
    let text = edit(&ridge(), "nominal: 760 V", "nominal: 700 V");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "DC voltages out of order: min 720 V, nominal 700 V, max 820 V",
        At {
            line: "nominal: 700 V",
            col: Some("700 V"),
            key: "source.voltage.nominal",
        },
        "min <= nominal <= max",
    );
}

// bridgebook record format 1: unipolar PWM needs two legs, so only a full-bridge.
#[test]
fn unipolar_pwm_on_a_half_bridge() {
    let text = edit(&ridge(), "pwm: bipolar", "pwm: unipolar");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "unipolar PWM needs two legs; a half-bridge has one",
        At {
            line: "pwm: unipolar",
            col: Some("unipolar"),
            key: "bridge.pwm",
        },
        "use `pwm: bipolar`, or `topology: full-bridge`",
    );
}

// bridgebook record format 1: `topology` is one of a fixed set of words.
#[test]
fn misspelt_choice() {
    let text = edit(&ridge(), "topology: half-bridge", "topology: half-brige");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`half-brige` is not a valid `topology`",
        At {
            line: "topology: half-brige",
            col: Some("half-brige"),
            key: "bridge.topology",
        },
        "did you mean `half-bridge`?",
    );
}

// Gregorian calendar (ISO 8601): February has 28 days in a common year; 2026 is one.
#[test]
fn impossible_date() {
    let text = edit(&ridge(), "  date: 2026-11-30\n", "  date: 2026-02-30\n");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`2026-02-30` is not a date",
        At {
            line: "  date: 2026-02-30",
            col: Some("2026-02-30"),
            key: "project.date",
        },
        "month 02 of 2026 has 28 days",
    );
}

// Gregorian calendar (ISO 8601): a century year is a leap year only when divisible by
// 400, so 2100-02-29 does not exist.
#[test]
fn century_leap_day_in_a_revision() {
    let text = edit(
        &ridge(),
        "{ rev: A, date: 2026-10-02",
        "{ rev: A, date: 2100-02-29",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`2100-02-29` is not a date",
        At {
            line: "rev: A, date: 2100-02-29",
            col: Some("2100-02-29"),
            key: "project.revisions[0].date",
        },
        "month 02 of 2100 has 28 days",
    );
}

// bridgebook record format 1: revisions are listed oldest first.
#[test]
fn revisions_out_of_order() {
    let text = edit(
        &ridge(),
        "{ rev: A, date: 2026-10-02",
        "{ rev: A, date: 2026-12-02",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "revision `B` is dated 2026-11-30 before revision `A` (2026-12-02)",
        At {
            line: "{ rev: B, date: 2026-11-30",
            col: Some("2026-11-30"),
            key: "project.revisions[1].date",
        },
        "list revisions oldest first",
    );
}

// bridgebook record format 1: assumption ids are unique within a record.
#[test]
fn duplicate_assumption_ids() {
    let text = edit(&ridge(), "{ id: A2,", "{ id: A1,");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "assumption id `A1` is used twice",
        At {
            line: "{ id: A1, text: \"The pump motor",
            col: Some("A1"),
            key: "assumptions[1].id",
        },
        "give each assumption its own id",
    );
}

// bridgebook record format 1 is YAML; a key indented deeper than its siblings is a
// syntax error on its own line.
#[test]
fn yaml_bad_indentation() {
    let text = edit(&ridge(), "\n  power: 2.2 kW", "\n    power: 2.2 kW");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "the record is not valid YAML: mapping values are not allowed in this context",
        At {
            line: "    power: 2.2 kW",
            col: None,
            key: "",
        },
        "check the indentation",
    );
}

// bridgebook record format 1 is YAML; a flow mapping left open is reported at the line
// of its `{`, where the fix goes, not where the parser gave up.
#[test]
fn yaml_unclosed_flow_mapping() {
    let text = edit(&ridge(), "max: 820 V }", "max: 820 V");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "did not find expected ',' or '}' in the flow mapping that starts here",
        At {
            line: "voltage: { min: 720 V",
            col: Some("{"),
            key: "",
        },
        "close it with `}`",
    );
}

// bridgebook record format 1 is YAML; each key appears once per mapping, and every
// repetition is reported at its own line.
#[test]
fn duplicate_keys() {
    let text = edit(
        &ridge(),
        "  power: 2.2 kW\n",
        "  power: 2.2 kW\n  power: 3 kW\n",
    );
    let text = edit(
        &text,
        "  pwm: bipolar\n",
        "  pwm: bipolar\n  pwm: unipolar\n",
    );
    let r = build(&text);
    r.assert_rejected(2);
    let first = line_of(&text, "power: 2.2 kW");
    r.assert_error(
        "key `power` appears twice in `output`",
        At {
            line: "power: 3 kW",
            col: Some("power"),
            key: "output.power",
        },
        &format!("`power` is first written on line {first}"),
    );
    r.assert_error(
        "key `pwm` appears twice in `bridge`",
        At {
            line: "pwm: unipolar",
            col: Some("pwm"),
            key: "bridge.pwm",
        },
        "remove or rename one of them",
    );
}

// bridgebook record format 1: `bridgebook:` names the format version; this engine reads 1.
#[test]
fn unsupported_format_version() {
    let text = edit(&ridge(), "bridgebook: 1", "bridgebook: 2");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "record format version 2 is not supported",
        At {
            line: "bridgebook: 2",
            col: Some("2"),
            key: "bridgebook",
        },
        "this engine reads format `bridgebook: 1`",
    );
}

// bridgebook record format 1: a filter gives either its values or a sizing rule.
#[test]
fn filter_with_values_and_design() {
    let text = edit(
        &ridge(),
        "  capacitance: 10 uF\n",
        "  capacitance: 10 uF\n  design: { resonance_ratio: 20, damping: 0.5 }\n",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "the filter gives both values and a sizing rule",
        At {
            line: "design: { resonance_ratio",
            col: Some("{"),
            key: "filter.design",
        },
        "keep either the values (`inductance`, `capacitance`) or `design`",
    );
}

// bridgebook record format 1: a filter gives either its values or a sizing rule; the error
// stands at the `filter:` key.
#[test]
fn filter_with_neither() {
    let text = edit(&ridge(), "  inductance: 1.8 mH\n", "");
    let text = edit(&text, "  capacitance: 10 uF\n", "");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "the filter has neither values nor a sizing rule",
        At {
            line: "filter:",
            col: Some("filter"),
            key: "filter",
        },
        "add `inductance:` and `capacitance:`, or `design:",
    );
}

// bridgebook record format 1: a power factor is above 0 and at most 1.
#[test]
fn power_factor_above_one() {
    let text = edit(&ridge(), "power_factor: 0.8", "power_factor: 1.2");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`power_factor` = 1.2 is outside the accepted range: above 0, at most 1",
        At {
            line: "power_factor: 1.2",
            col: Some("1.2"),
            key: "output.power_factor",
        },
        "at most 1",
    );
}

// bridgebook record format 1: a ratio is a plain number; the hint must not ask for a unit
// and its example must be a valid resonance ratio (above 1).
#[test]
fn ratio_written_with_a_unit() {
    let text = edit(
        &demo("alder-hut.yaml"),
        "resonance_ratio: 20,",
        "resonance_ratio: 20 Hz,",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "expected a ratio (no unit), got `20 Hz`",
        At {
            line: "resonance_ratio: 20 Hz",
            col: Some("20 Hz"),
            key: "filter.design.resonance_ratio",
        },
        "write a plain number, e.g. `resonance_ratio: 20`",
    );
}

// bridgebook record format 1: a quantity is one value, not a list.
#[test]
fn list_where_a_value_belongs() {
    let text = edit(&ridge(), "inductance: 1.8 mH", "inductance: [1.8 mH, 2 mH]");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`inductance` must be a single value, got a list",
        At {
            line: "inductance: [",
            col: Some("["),
            key: "filter.inductance",
        },
        "not a list or a mapping",
    );
}

// bridgebook record format 1: the carrier runs well above the output frequency (at
// least three times it).
#[test]
fn carrier_too_slow() {
    let text = edit(
        &ridge(),
        "switching_frequency: 20 kHz",
        "switching_frequency: 100 Hz",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "the switching frequency 100 Hz is less than three times the output frequency 50 Hz",
        At {
            line: "switching_frequency: 100 Hz",
            col: Some("100 Hz"),
            key: "bridge.switching_frequency",
        },
        "carrier well above the output frequency",
    );
}

// bridgebook record format 1: `@{id}` in the Markdown of `notes` names a result; a wrong
// id is reported at the record line of the notes text that holds it.
#[test]
fn bad_reference_in_notes() {
    let text = edit(&ridge(), "@{modulation.m_a.min}", "@{filter.f00}");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "unknown result id `filter.f00`",
        At {
            line: "@{filter.f00}",
            col: Some("@{filter.f00}"),
            key: "notes",
        },
        "did you mean `filter.f0`?",
    );
}

// bridgebook record format 1: a record is a mapping of keys; here it is only the demo's
// list of assumptions.
#[test]
fn record_that_is_a_list() {
    let ridge = ridge();
    let items: Vec<&str> = ridge
        .lines()
        .filter(|l| l.starts_with("  - { id: "))
        .map(|l| &l[2..])
        .collect();
    assert_eq!(items.len(), 2, "the demo's assumptions");
    let text = items.join("\n") + "\n";
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "a design record must be a mapping of keys, got a list",
        At {
            line: "- { id: A1",
            col: Some("{"),
            key: "",
        },
        "start from a demo in `designs/`",
    );
}

// bridgebook CLI: a record that cannot be read is bad input (exit 2), named in the error.
#[test]
fn nonexistent_file() {
    let dir = Scratch::new("malformed");
    let missing = dir.path().join("no-such-record.yaml");
    let out = dir.path().join("out");
    let (code, stderr, _) = output_of(
        Command::new(env!("CARGO_BIN_EXE_bridgebook"))
            .arg("build")
            .arg(&missing)
            .arg("--out")
            .arg(&out)
            .output()
            .expect("run bridgebook"),
    );
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("error: cannot read the design record"),
        "{stderr}"
    );
    assert!(
        stderr.contains(&format!("--> {}", missing.display())),
        "{stderr}"
    );
    assert!(stderr.contains("= hint: check the path"), "{stderr}");
    assert!(stderr.contains("1 error; nothing was written"), "{stderr}");
    assert!(!out.exists(), "the output folder was created");
}

// bridgebook CLI: every error of a record is reported in one run, not only the first.
#[test]
fn three_errors_at_once() {
    let text = edit(&ridge(), "inductance: 1.8 mH", "inductance: 3.2 mV");
    let text = edit(&text, "power_factor: 0.8", "power_factor: 1.2");
    let text = edit(&text, "topology: half-bridge", "topology: half-brige");
    let r = build(&text);
    r.assert_rejected(3);
    r.assert_error(
        "expected an inductance (H), got `3.2 mV`",
        At {
            line: "inductance: 3.2 mV",
            col: Some("3.2 mV"),
            key: "filter.inductance",
        },
        "e.g. `inductance: 1.8 mH`",
    );
    r.assert_error(
        "`power_factor` = 1.2 is outside the accepted range",
        At {
            line: "power_factor: 1.2",
            col: Some("1.2"),
            key: "output.power_factor",
        },
        "at most 1",
    );
    r.assert_error(
        "`half-brige` is not a valid `topology`",
        At {
            line: "topology: half-brige",
            col: Some("half-brige"),
            key: "bridge.topology",
        },
        "did you mean `half-bridge`?",
    );
    assert!(
        r.stderr.contains("3 errors; nothing was written"),
        "{}",
        r.stderr
    );
}

// bridgebook CLI: `check` validates like `build`; bad input exits 2 and prints no checks.
#[test]
fn check_rejects_a_bad_record() {
    let text = edit(&ridge(), "pwm: bipolar", "pwm: unipolar");
    let r = run_on("check", &text);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(r.stdout.is_empty(), "checks printed: {}", r.stdout);
    r.assert_error(
        "unipolar PWM needs two legs; a half-bridge has one",
        At {
            line: "pwm: unipolar",
            col: Some("unipolar"),
            key: "bridge.pwm",
        },
        "use `pwm: bipolar`",
    );
}

// bridgebook CLI: exit code 2 is bad input or usage; an unknown subcommand is bad usage.
#[test]
fn unknown_subcommand_is_a_usage_error() {
    let (code, stderr, stdout) = output_of(
        Command::new(env!("CARGO_BIN_EXE_bridgebook"))
            .arg("frobnicate")
            .output()
            .expect("run bridgebook"),
    );
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("frobnicate"), "{stderr}");
    assert!(stderr.contains("Usage:"), "{stderr}");
    assert!(stdout.is_empty(), "{stdout}");
}

// bridgebook record format 1: a hint's example must itself be valid where it is offered;
// following the hint must not lead to another error.
#[test]
fn hint_examples_are_valid_values() {
    let cases = [
        ("ridge-pump-b.yaml", "  voltage: 230 V"),
        ("ridge-pump-b.yaml", "  frequency: 50 Hz"),
        ("ridge-pump-b.yaml", "  power: 2.2 kW"),
        ("ridge-pump-b.yaml", "  switching_frequency: 20 kHz"),
        ("ridge-pump-b.yaml", "  carrier_peak: 5 V"),
        ("ridge-pump-b.yaml", "  inductance: 1.8 mH"),
        ("ridge-pump-b.yaml", "  capacitance: 10 uF"),
        ("ridge-pump-b.yaml", "  max_modulation_index: 0.95"),
        ("alder-hut.yaml", "  max_gain_deviation: 6 %"),
    ];
    for (name, line) in cases {
        let (key, _) = line.trim().split_once(": ").unwrap();
        let bad = format!("  {key}: 7 furlongs");
        let r = build(&edit(&demo(name), line, &bad));
        r.assert_rejected(1);
        let block = r.block("unknown unit `furlongs`");
        let hint = block
            .lines()
            .find(|l| l.contains("= hint: "))
            .unwrap_or_else(|| panic!("{name} {key}: no hint in\n{block}"));
        let start = format!("e.g. `{key}: ");
        let at = hint
            .find(&start)
            .unwrap_or_else(|| panic!("{name} {key}: no example in `{hint}`"));
        let example = &hint[at + start.len()..];
        let example = &example[..example.find('`').unwrap()];
        let fixed = run_on(
            "check",
            &edit(&demo(name), line, &format!("  {key}: {example}")),
        );
        assert_ne!(
            fixed.code,
            Some(2),
            "{name}: following the hint `{key}: {example}` gives\n{}",
            fixed.stderr
        );
    }
}

// bridgebook record format 1 (issue 3): a stand-alone output is evaluated with an LC
// filter; an L filter there points at `filter.type`.
#[test]
fn standalone_output_with_an_l_filter() {
    let text = edit(
        &ridge(),
        "  type: lc\n  inductance: 1.8 mH\n  capacitance: 10 uF\n",
        "  type: l\n  inductance: 1.8 mH\n",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "a stand-alone output needs a capacitor across it to hold its voltage; this engine evaluates `lc` there",
        At {
            line: "type: l",
            col: Some("l"),
            key: "filter.type",
        },
        "use `type: lc`, or `connection: grid`",
    );
}

// bridgebook record format 1 (issue 3): the LC sizing rule is for stand-alone loads.
#[test]
fn grid_connection_with_the_lc_sizing_rule() {
    let text = edit(
        &common::demo("alder-hut.yaml"),
        "connection: standalone",
        "connection: grid",
    );
    let r = build(&text);
    r.assert_rejected(1);
    assert!(
        r.stderr
            .contains("the LC sizing rule places the resonance against a stand-alone load"),
        "{}",
        r.stderr
    );
    assert!(r.stderr.contains("filter.design"), "{}", r.stderr);
}

// bridgebook record format 1 (issue 3): a three-phase bridge takes sine-triangle or
// third-harmonic PWM only.
#[test]
fn unipolar_pwm_on_a_three_phase_bridge() {
    let text = edit(
        &edit(&ridge(), "topology: half-bridge", "topology: three-phase"),
        "pwm: bipolar",
        "pwm: unipolar",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`unipolar` PWM is not a modulation of the three-phase bridge",
        At {
            line: "pwm: unipolar",
            col: Some("unipolar"),
            key: "bridge.pwm",
        },
        "use `pwm: sine-triangle` or `pwm: third-harmonic`",
    );
}

// bridgebook record format 1 (issue 3): an LCL filter with values needs all three.
#[test]
fn lcl_filter_without_its_grid_side_inductor() {
    let text = edit(
        &edit(&ridge(), "connection: standalone", "connection: grid"),
        "  type: lc\n  inductance: 1.8 mH\n  capacitance: 10 uF\n",
        "  type: lcl\n  inverter_side_inductance: 1.8 mH\n  capacitance: 10 uF\n",
    );
    let r = build(&text);
    r.assert_rejected(1);
    assert!(r.stderr.contains("grid_side_inductance"), "{}", r.stderr);
    assert!(r.stderr.contains("filter"), "{}", r.stderr);
}

// bridgebook record format 1 (issue 3): a grid inductance belongs to a grid connection.
#[test]
fn grid_inductance_on_a_standalone_output() {
    let text = edit(
        &ridge(),
        "connection: standalone",
        "connection: standalone\n  grid_inductance: 50 uH",
    );
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "a grid inductance is given for a stand-alone output",
        At {
            line: "grid_inductance: 50 uH",
            col: Some("50 uH"),
            key: "output.grid_inductance",
        },
        "remove `grid_inductance`, or set `connection: grid`",
    );
}

// bridgebook record format 1, power stage: every wrong value of the new sections is
// reported in one run at its own line and key, with a hint, and nothing is written.
#[test]
fn power_stage_sections_report_every_error() {
    let text = edit(&ridge(), "  esr: 40 mohm", "  esr: 40 mV");
    let text = edit(
        &text,
        "  heatsink_to_ambient: 0.8 K/W",
        "  heatsink_to_ambient: 0.8",
    );
    let text = edit(&text, "  rated_life: 8000 h", "  rated_lif: 8000 h");
    let r = build(&text);
    // The misspelt key is also a missing `rated_life`: four errors.
    r.assert_rejected(4);
    r.assert_error(
        "expected a resistance (ohm), got `40 mV`",
        At {
            line: "esr: 40 mV",
            col: Some("40 mV"),
            key: "dc_link.esr",
        },
        "write it with a unit, e.g. `esr: 40 mohm`",
    );
    r.assert_error(
        "missing unit: expected a thermal resistance (K/W)",
        At {
            line: "heatsink_to_ambient: 0.8",
            col: Some("0.8"),
            key: "thermal.heatsink_to_ambient",
        },
        "write it with a unit, e.g. `heatsink_to_ambient: 0.5 K/W`",
    );
    r.assert_error(
        "unknown key `rated_lif` in `dc_link`",
        At {
            line: "rated_lif: 8000 h",
            col: Some("rated_lif"),
            key: "dc_link.rated_lif",
        },
        "did you mean `rated_life`?",
    );
}

// bridgebook record format 1, power stage: a device value out of range names its key
// inside the inline device, and the inline/library forms cannot be mixed.
#[test]
fn inline_device_errors() {
    let text = edit(&ridge(), "    t_j_max: 175 degC", "    t_j_max: 400 degC");
    let text = edit(
        &text,
        "  overshoot: 10 %",
        "  overshoot: 10 %\n  library: parts/devices.yaml",
    );
    let r = build(&text);
    r.assert_rejected(2);
    r.assert_error(
        "`t_j_max` = 400 °C is outside the accepted range",
        At {
            line: "t_j_max: 400 degC",
            col: Some("400 degC"),
            key: "switches.device.t_j_max",
        },
        "the maximum junction temperature is 125 degC to 200 degC",
    );
    r.assert_error(
        "`library` is for a device named from a library",
        At {
            line: "library: parts/devices.yaml",
            col: Some("parts/devices.yaml"),
            key: "switches.library",
        },
        "either write `device: NAME` with `library: FILE`",
    );
}

// bridgebook record format 1: a bound that allows zero is printed as "at least 0".
#[test]
fn negative_dead_time() {
    let text = edit(&ridge(), "  dead_time: 1 us", "  dead_time: -1 us");
    let r = build(&text);
    r.assert_rejected(1);
    r.assert_error(
        "`dead_time` = -1 µs is outside the accepted range: at least 0 s, at most 20 µs",
        At {
            line: "dead_time: -1 us",
            col: Some("-1 us"),
            key: "switches.dead_time",
        },
        "dead times are a few hundred ns to a few µs",
    );
}
