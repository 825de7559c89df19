//! A walker over the parsed YAML that collects every problem instead of stopping at
//! the first: each accessor records its key as known, reads and converts the value,
//! and on failure adds a [`Diagnostic`] and returns `None` so validation goes on.

use super::model::{Date, Given, InputLine};
use super::spans::{Span, Spans};
use crate::diag::{did_you_mean, Diagnostic, SourceText};
use crate::units::{input_symbol, parse_value, Unit, UnitError};
use serde_yaml::{Mapping, Value};
use std::cell::RefCell;

/// Reads the files a record includes by name (device libraries). Behind a trait so
/// that tests and in-memory builds can supply them without a file system.
pub trait Includes {
    /// The text of the file `name` as the record writes it, or why it cannot be read.
    fn read(&self, name: &str) -> Result<String, String>;

    /// How messages name the file: by default as the record writes it.
    fn display(&self, name: &str) -> String {
        name.to_string()
    }
}

/// No included files: a record given as text alone.
pub struct NoIncludes;

impl Includes for NoIncludes {
    fn read(&self, _name: &str) -> Result<String, String> {
        Err("a record given as text cannot include other files".into())
    }
}

/// Included files are read from the record's own folder.
pub struct FolderIncludes(pub std::path::PathBuf);

impl Includes for FolderIncludes {
    fn read(&self, name: &str) -> Result<String, String> {
        std::fs::read_to_string(self.0.join(name)).map_err(|e| e.to_string())
    }

    /// Beside the record's path as given, so that an editor can open it from the message.
    fn display(&self, name: &str) -> String {
        self.0.join(name).display().to_string()
    }
}

/// Shared state of one record's validation.
pub struct Reader<'a> {
    pub src: &'a SourceText,
    spans: Spans,
    errors: RefCell<Vec<Diagnostic>>,
    inputs: RefCell<Vec<InputLine>>,
    /// Put before every key of a [`Given`] and an input line: empty for the record,
    /// `file:` for an included library.
    prefix: String,
    includes: &'a dyn Includes,
    /// Values taken from included files, by the record key they stand in for, so that
    /// the canonical record carries them.
    resolved: RefCell<Vec<(String, Value)>>,
}

impl<'a> Reader<'a> {
    pub fn new(src: &'a SourceText) -> Reader<'a> {
        Reader::with_includes(src, &NoIncludes)
    }

    pub fn with_includes(src: &'a SourceText, includes: &'a dyn Includes) -> Reader<'a> {
        Reader {
            src,
            spans: Spans::index(&src.text),
            errors: RefCell::new(Vec::new()),
            inputs: RefCell::new(Vec::new()),
            prefix: String::new(),
            includes,
            resolved: RefCell::new(Vec::new()),
        }
    }

    /// A reader for an included file, whose keys are written `name:path` with the file's
    /// name as the record writes it (messages use `src.name`, which may be longer).
    pub fn included(src: &'a SourceText, name: &str) -> Reader<'a> {
        Reader {
            prefix: format!("{name}:"),
            ..Reader::new(src)
        }
    }

    pub fn includes(&self) -> &'a dyn Includes {
        self.includes
    }

    /// Takes over the errors and input lines of an included file's reader.
    pub fn absorb(&self, other: Reader<'_>) {
        let (errors, inputs) = other.into_parts();
        self.errors.borrow_mut().extend(errors);
        self.inputs.borrow_mut().extend(inputs);
    }

    /// Notes that `key` of the record stands for `value` taken from an included file.
    pub fn resolve(&self, key: &str, value: Value) {
        self.resolved.borrow_mut().push((key.to_string(), value));
    }

    pub fn resolved(&self) -> Vec<(String, Value)> {
        self.resolved.borrow().clone()
    }

    fn span(&self, path: &str) -> Span {
        self.spans.value(path).unwrap_or(Span {
            line: 0,
            column: 1,
            width: 1,
        })
    }

    /// The line of the value at `path` (0 if unknown).
    pub fn line(&self, path: &str) -> usize {
        self.span(path).line
    }

    /// Adds an error at the value of `path`.
    pub fn error(&self, path: &str, message: impl Into<String>, hint: Option<String>) {
        // A Given of an included file carries the file in its key; its place does not.
        let path = path.strip_prefix(self.prefix.as_str()).unwrap_or(path);
        let s = self.span(path);
        let mut d = self.src.at(s.line, s.column, s.width, path, message);
        d.hint = hint;
        self.errors.borrow_mut().push(d);
    }

    /// Adds an error at the key of `path` (for keys that should not be there).
    fn error_at_key(&self, path: &str, message: String, hint: Option<String>) {
        let s = self.spans.key(path).unwrap_or_else(|| self.span(path));
        let mut d = self.src.at(s.line, s.column, s.width, path, message);
        d.hint = hint;
        self.errors.borrow_mut().push(d);
    }

    /// Adds an error for a key missing from the mapping at `parent`, pointing at the
    /// parent's own key line where there is one.
    fn error_missing(&self, parent: &str, key: &str, hint: String) {
        let s = self
            .spans
            .key(parent)
            .or_else(|| self.spans.value(parent))
            .unwrap_or(Span {
                line: 0,
                column: 1,
                width: 1,
            });
        let path = join(parent, key);
        let place = if parent.is_empty() {
            "the record".to_string()
        } else {
            format!("`{parent}`")
        };
        let mut d = self.src.at(
            s.line,
            s.column,
            s.width,
            &path,
            format!("missing key `{key}` in {place}"),
        );
        d.hint = Some(hint);
        self.errors.borrow_mut().push(d);
    }

    /// Adds a diagnostic made elsewhere (a syntax error of an included file).
    pub fn push(&self, d: Diagnostic) {
        self.errors.borrow_mut().push(d);
    }

    pub fn has_errors(&self) -> bool {
        !self.errors.borrow().is_empty()
    }

    pub fn into_parts(self) -> (Vec<Diagnostic>, Vec<InputLine>) {
        (self.errors.into_inner(), self.inputs.into_inner())
    }

    fn note_input(&self, path: &str, text: String) {
        self.inputs.borrow_mut().push(InputLine {
            key: format!("{}{path}", self.prefix),
            text,
            line: self.line(path),
        });
    }

    /// The top-level mapping of the record.
    pub fn root<'r>(&'r self, value: &'r Value) -> Option<Section<'r, 'a>> {
        match value {
            Value::Mapping(map) => Some(Section::new(self, String::new(), map)),
            other => {
                self.error(
                    "",
                    format!(
                        "a design record must be a mapping of keys, got {}",
                        kind_name(other)
                    ),
                    Some("start from a demo in `designs/`".to_string()),
                );
                None
            }
        }
    }
}

fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// Text of a scalar as written (numbers and booleans as YAML prints them).
fn scalar_text(v: &Value) -> Option<String> {
    match v {
        Value::String(s) => Some(s.clone()),
        Value::Number(n) => Some(n.to_string()),
        Value::Bool(b) => Some(b.to_string()),
        _ => None,
    }
}

fn kind_name(v: &Value) -> &'static str {
    match v {
        Value::Null => "nothing",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a text",
        Value::Sequence(_) => "a list",
        Value::Mapping(_) => "a mapping",
        Value::Tagged(_) => "a tagged value",
    }
}

/// Example text for a key and its unit, used in hints; it must itself be valid there.
fn example(key: &str, unit: Unit) -> &'static str {
    match key {
        "frequency" => return "50 Hz",
        "carrier_peak" => return "5 V",
        "resonance_ratio" | "min_resonance_ratio" => return "20",
        "damping" | "max_resonance_fraction" => return "0.5",
        "min_light_load_damping" => return "0.02",
        "light_load" => return "10 %",
        "r_ds_on_coefficient" => return "0.6 %/K",
        "r_ds_on" | "r_ce" | "diode_r_f" => return "20 mohm",
        "esr" | "inductor_resistance" => return "40 mohm",
        "bleeder" => return "82 kohm",
        "fall_time" => return "120 ns",
        "dead_time" => return "1 us",
        "stray_inductance" => return "40 nH",
        "t_j_max" => return "175 degC",
        "v_ce0" | "diode_v_f0" => return "0.9 V",
        "max_voltage_utilisation" | "max_current_utilisation" => return "80 %",
        "overshoot" => return "10 %",
        _ => {}
    }
    match unit {
        Unit::Volt => "400 V",
        Unit::Ampere => "10 A",
        Unit::Hertz => "20 kHz",
        Unit::Watt => "2.2 kW",
        Unit::Henry => "1.8 mH",
        Unit::Farad => "10 uF",
        Unit::Ohm => "12 ohm",
        Unit::DegreeCelsius => "45 degC",
        Unit::Percent => "5 %",
        Unit::One => "0.95",
        Unit::Second => "10 ms",
        Unit::KelvinPerWatt => "0.5 K/W",
        Unit::Hour => "5000 h",
        Unit::Joule => "1.2 mJ",
        Unit::PercentPerKelvin => "-0.3 %/K",
        Unit::Kelvin => "20 K",
        _ => "1",
    }
}

/// One mapping of the record being read.
pub struct Section<'r, 'a> {
    reader: &'r Reader<'a>,
    pub path: String,
    map: &'r Mapping,
    known: RefCell<Vec<&'static str>>,
}

impl<'r, 'a> Section<'r, 'a> {
    fn new(reader: &'r Reader<'a>, path: String, map: &'r Mapping) -> Self {
        Section {
            reader,
            path,
            map,
            known: RefCell::new(Vec::new()),
        }
    }

    pub fn reader(&self) -> &'r Reader<'a> {
        self.reader
    }

    pub fn key_path(&self, key: &str) -> String {
        join(&self.path, key)
    }

    fn raw(&self, key: &'static str) -> Option<&'r Value> {
        self.known.borrow_mut().push(key);
        self.map.get(key).filter(|v| !v.is_null())
    }

    /// The value written at `key`, unconverted (marks it known); `None` if absent.
    pub fn value(&self, key: &'static str) -> Option<&'r Value> {
        self.raw(key)
    }

    /// A nested mapping under a key chosen by the record (a name), not marked known.
    pub fn named_section(&self, name: &str) -> Option<Section<'r, 'a>> {
        let v = self.map.get(name).filter(|v| !v.is_null())?;
        self.as_section(name, v)
    }

    /// The keys of this mapping that are texts, in written order.
    pub fn key_names(&self) -> Vec<String> {
        self.map
            .keys()
            .filter_map(|k| k.as_str().map(str::to_string))
            .collect()
    }

    /// Whether the record writes this key (and marks it known).
    pub fn has(&self, key: &'static str) -> bool {
        self.raw(key).is_some()
    }

    /// Marks keys as known without reading them (read in another branch).
    pub fn allow(&self, keys: &[&'static str]) {
        self.known.borrow_mut().extend_from_slice(keys);
    }

    fn require(&self, key: &'static str, what: &str) -> Option<&'r Value> {
        let v = self.raw(key);
        if v.is_none() {
            if self.map.contains_key(key) {
                // Written as `key:` with nothing after it (YAML null).
                self.reader.error_at_key(
                    &self.key_path(key),
                    format!("`{key}` has no value"),
                    Some(format!("write {what} after `{key}:`")),
                );
            } else {
                self.reader
                    .error_missing(&self.path, key, format!("add `{key}:` with {what}"));
            }
        }
        v
    }

    /// A nested mapping that must be present.
    pub fn section(&self, key: &'static str) -> Option<Section<'r, 'a>> {
        let v = self.require(key, "a mapping of keys")?;
        self.as_section(key, v)
    }

    /// A nested mapping that may be left out.
    pub fn optional_section(&self, key: &'static str) -> Option<Section<'r, 'a>> {
        let v = self.raw(key)?;
        self.as_section(key, v)
    }

    fn as_section(&self, key: &str, v: &'r Value) -> Option<Section<'r, 'a>> {
        let path = self.key_path(key);
        match v {
            Value::Mapping(m) => Some(Section::new(self.reader, path, m)),
            other => {
                self.reader.error(
                    &path,
                    format!(
                        "`{key}` must be a mapping of keys, got {}",
                        kind_name(other)
                    ),
                    Some(format!(
                        "write `{key}:` on its own line with indented keys below"
                    )),
                );
                None
            }
        }
    }

    /// A list that may be left out; each element handed to `each` with its path.
    pub fn list<T>(
        &self,
        key: &'static str,
        mut each: impl FnMut(&str, &'r Value) -> Option<T>,
    ) -> Vec<T> {
        let path = self.key_path(key);
        match self.raw(key) {
            None => Vec::new(),
            Some(Value::Sequence(items)) => items
                .iter()
                .enumerate()
                .filter_map(|(i, v)| each(&format!("{path}[{i}]"), v))
                .collect(),
            Some(other) => {
                self.reader.error(
                    &path,
                    format!("`{key}` must be a list, got {}", kind_name(other)),
                    Some("write each entry on a line starting with `- `".to_string()),
                );
                Vec::new()
            }
        }
    }

    /// A list element as a mapping.
    pub fn element(&self, path: &str, v: &'r Value) -> Option<Section<'r, 'a>> {
        match v {
            Value::Mapping(m) => Some(Section::new(self.reader, path.to_string(), m)),
            other => {
                self.reader.error(
                    path,
                    format!("each entry must be a mapping, got {}", kind_name(other)),
                    Some("write entries as `- { key: value, ... }`".to_string()),
                );
                None
            }
        }
    }

    fn text_of(&self, key: &'static str, v: &'r Value) -> Option<String> {
        match scalar_text(v) {
            Some(t) => Some(t),
            None => {
                self.reader.error(
                    &self.key_path(key),
                    format!("`{key}` must be a single value, got {}", kind_name(v)),
                    Some(format!(
                        "write one value on the line of `{key}:`, not a list or a mapping"
                    )),
                );
                None
            }
        }
    }

    /// A required text value.
    pub fn text(&self, key: &'static str) -> Option<String> {
        let v = self.require(key, "a text")?;
        let t = self.text_of(key, v)?;
        if t.trim().is_empty() {
            self.reader.error(
                &self.key_path(key),
                format!("`{key}` is empty"),
                Some(format!("write a text after `{key}:`")),
            );
            return None;
        }
        self.reader.note_input(&self.key_path(key), t.clone());
        Some(t)
    }

    /// An optional text value ("" when left out); not listed in the inputs table.
    pub fn optional_text(&self, key: &'static str) -> String {
        self.raw(key)
            .and_then(|v| self.text_of(key, v))
            .unwrap_or_default()
    }

    /// A required whole number.
    pub fn integer(&self, key: &'static str) -> Option<i64> {
        let v = self.require(key, "a whole number")?;
        match v.as_i64() {
            Some(n) => Some(n),
            None => {
                self.reader.error(
                    &self.key_path(key),
                    format!("`{key}` must be a whole number, got {}", kind_name(v)),
                    Some(format!("write digits only, e.g. `{key}: 1`")),
                );
                None
            }
        }
    }

    /// A required `YYYY-MM-DD` date.
    pub fn date(&self, key: &'static str) -> Option<Date> {
        let v = self.require(key, "a date like `2026-11-30`")?;
        let t = self.text_of(key, v)?;
        match parse_date(&t) {
            Some(d) => {
                self.reader.note_input(&self.key_path(key), t);
                Some(d)
            }
            None => {
                self.reader.error(
                    &self.key_path(key),
                    format!("`{t}` is not a date"),
                    Some(date_hint(&t)),
                );
                None
            }
        }
    }

    /// One of a fixed set of words.
    pub fn choice(&self, key: &'static str, options: &[&'static str]) -> Option<&'static str> {
        let v = self.require(key, &format!("one of {}", options.join(", ")))?;
        let t = self.text_of(key, v)?;
        match options.iter().find(|o| **o == t) {
            Some(o) => {
                self.reader.note_input(&self.key_path(key), t);
                Some(o)
            }
            None => {
                let hint = match did_you_mean(&t, options) {
                    Some(close) => format!("did you mean `{close}`?"),
                    None => format!("choose one of: {}", options.join(", ")),
                };
                self.reader.error(
                    &self.key_path(key),
                    format!("`{t}` is not a valid `{key}`"),
                    Some(hint),
                );
                None
            }
        }
    }

    fn convert(&self, key: &'static str, v: &'r Value, unit: Unit) -> Option<Given> {
        let path = self.key_path(key);
        let t = self.text_of(key, v)?;
        match parse_value(&t, unit) {
            Ok(value) if value.is_finite() => {
                self.reader.note_input(&path, t);
                Some(Given {
                    value,
                    line: self.reader.line(&path),
                    key: format!("{}{path}", self.reader.prefix),
                })
            }
            Ok(_) => {
                self.reader.error(
                    &path,
                    format!("`{t}` is not a finite number"),
                    Some(format!(
                        "write an ordinary number, e.g. `{key}: {}`",
                        example(key, unit)
                    )),
                );
                None
            }
            Err(e) => {
                let message = match &e {
                    UnitError::WrongDimension { expected, .. } => format!(
                        "expected {} ({}), got `{t}`",
                        expected.quantity_name(),
                        input_symbol(*expected)
                    ),
                    other => format!("{other}: `{t}`"),
                };
                let hint = if matches!(unit, Unit::One) {
                    // A ratio takes no unit (or `%`); "with a unit" would mislead.
                    format!("write a plain number, e.g. `{key}: {}`", example(key, unit))
                } else {
                    format!("write it with a unit, e.g. `{key}: {}`", example(key, unit))
                };
                self.reader.error(&path, message, Some(hint));
                None
            }
        }
    }

    /// A required value with a unit, e.g. `inductance: 1.8 mH`.
    pub fn quantity(&self, key: &'static str, unit: Unit) -> Option<Given> {
        let v = self.require(
            key,
            &format!("{} such as `{}`", unit.quantity_name(), example(key, unit)),
        )?;
        self.convert(key, v, unit)
    }

    /// An optional value with a unit.
    pub fn optional_quantity(&self, key: &'static str, unit: Unit) -> Option<Given> {
        let v = self.raw(key)?;
        self.convert(key, v, unit)
    }

    /// Reports keys of this mapping that no accessor asked for.
    pub fn finish(&self) {
        let known = self.known.borrow();
        for (k, _) in self.map {
            let Some(name) = k.as_str() else {
                self.reader.error(
                    &self.path,
                    format!("a key in `{}` is not a plain word", self.path),
                    Some("write keys as plain words, e.g. `inductance:`".to_string()),
                );
                continue;
            };
            if known.contains(&name) {
                continue;
            }
            let path = self.key_path(name);
            let hint = match did_you_mean(name, &known) {
                Some(close) => format!("did you mean `{close}`?"),
                None => format!("known keys here: {}", known.join(", ")),
            };
            let place = if self.path.is_empty() {
                "at the top of the record".to_string()
            } else {
                format!("in `{}`", self.path)
            };
            self.reader
                .error_at_key(&path, format!("unknown key `{name}` {place}"), Some(hint));
        }
    }
}

/// The numbers of `YYYY-MM-DD`, unchecked.
fn date_parts(text: &str) -> Option<(i32, u8, u8)> {
    let mut parts = text.trim().splitn(3, '-');
    let year: i32 = parts.next()?.parse().ok()?;
    let month: u8 = parts.next()?.parse().ok()?;
    let day: u8 = parts.next()?.parse().ok()?;
    Some((year, month, day))
}

/// Days in a month of the Gregorian calendar; `None` for a month that is not 1 to 12.
fn days_in_month(year: i32, month: u8) -> Option<u8> {
    let leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => Some(31),
        4 | 6 | 9 | 11 => Some(30),
        2 if leap => Some(29),
        2 => Some(28),
        _ => None,
    }
}

/// `2026-11-30` -> Date, with month and day ranges checked (leap years included).
pub fn parse_date(text: &str) -> Option<Date> {
    let (year, month, day) = date_parts(text)?;
    let days = days_in_month(year, month)?;
    if !(1..=days).contains(&day) || !(1900..=9999).contains(&year) {
        return None;
    }
    Some(Date { year, month, day })
}

/// Why a text is not a date, for the hint.
fn date_hint(text: &str) -> String {
    let shape = "write dates as YYYY-MM-DD, e.g. `2026-11-30`".to_string();
    let Some((year, month, day)) = date_parts(text) else {
        return shape;
    };
    if !(1900..=9999).contains(&year) {
        return format!("{shape}, with a year from 1900 to 9999");
    }
    match days_in_month(year, month) {
        None => format!("{shape}; months run from 01 to 12"),
        Some(days) if day == 0 || day > days => {
            format!("in the Gregorian calendar, month {month:02} of {year} has {days} days")
        }
        Some(_) => shape,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_follow_the_gregorian_calendar() {
        // Gregorian leap-year rule (ISO 8601-1:2019, 3.2.1): 2024 and 2000 leap, 1900 not.
        assert!(parse_date("2024-02-29").is_some());
        assert!(parse_date("2000-02-29").is_some());
        assert!(parse_date("2023-02-29").is_none());
        assert!(parse_date("1900-02-29").is_none());
        assert!(parse_date("2026-13-01").is_none());
        assert!(parse_date("2026-11-31").is_none());
        assert_eq!(
            parse_date("2026-11-30"),
            Some(Date {
                year: 2026,
                month: 11,
                day: 30
            })
        );
    }
}
