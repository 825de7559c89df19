//! The traced calculation sheet: every number the engine produces is a [`Quantity`]
//! that carries its formula, the formula with the numbers substituted, the ids of its
//! inputs and its [`Source`]; every verdict is a [`Check`] with its limit and margin.
//!
//! Formulas are written in typst math (`1 / (2 pi sqrt(L dot C))`), which also reads
//! well as plain text on a terminal. The substituted form is made from the formula by
//! replacing each input's symbol with its value, so the two can never disagree.

use crate::units::{format_number, format_value, split_display, Unit};
use serde::Serialize;
use std::collections::BTreeMap;

/// Where a number comes from.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Source {
    /// Written in the design record at this key and line.
    Input { key: String, line: usize },
    /// Taken from a stated assumption of the record.
    Assumption { id: String },
    /// A published document: standard, handbook or paper, with the clause or table.
    Reference { document: String, clause: String },
    /// A rule of thumb that engineers apply without a single authoritative source.
    CommonPractice { note: String },
    /// Follows from its inputs by the formula shown (circuit theory, definitions).
    Derived,
}

impl Source {
    pub fn reference(document: &str, clause: &str) -> Source {
        Source::Reference {
            document: document.to_string(),
            clause: clause.to_string(),
        }
    }

    pub fn common_practice(note: &str) -> Source {
        Source::CommonPractice {
            note: note.to_string(),
        }
    }

    /// One line for a package or a terminal.
    pub fn describe(&self) -> String {
        match self {
            Source::Input { key, line } => match key.split_once(':') {
                Some((file, path)) => format!("device library `{file}`, `{path}` (line {line})"),
                None => format!("design record, `{key}` (line {line})"),
            },
            Source::Assumption { id } => format!("assumption {id}"),
            Source::Reference { document, clause } => format!("{document}, {clause}"),
            Source::CommonPractice { note } => format!("common practice: {note}"),
            Source::Derived => "derived from its inputs".to_string(),
        }
    }
}

/// One traced number.
#[derive(Clone, Debug, Serialize)]
pub struct Quantity {
    /// Stable dotted id, e.g. `filter.f0`; the results contract relies on these.
    pub id: String,
    /// A short name for people: "Resonance frequency".
    #[serde(skip)]
    pub name: String,
    /// The symbol in typst math, e.g. `f_0`.
    pub symbol: String,
    /// The value in SI base units (ratios as fractions, angles in radians).
    pub value: f64,
    #[serde(serialize_with = "serialize_unit")]
    pub unit: Unit,
    /// The symbolic formula in typst math; for a record input, the symbol itself.
    pub formula: String,
    /// The formula with the input values put in.
    pub substituted: String,
    /// Ids of the quantities the formula uses.
    pub inputs: Vec<String>,
    pub source: Source,
    /// For a classification (operating region), the class it falls in.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub class: Option<String>,
}

fn serialize_unit<S: serde::Serializer>(unit: &Unit, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_str(unit.code())
}

impl Quantity {
    pub fn display(&self) -> String {
        format_value(self.value, self.unit)
    }

    /// Whether this quantity was read from the record rather than computed.
    pub fn is_input(&self) -> bool {
        matches!(self.source, Source::Input { .. })
    }
}

/// How a checked value must relate to its limit.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Relation {
    AtMost,
    AtLeast,
}

impl Relation {
    pub fn symbol(self) -> &'static str {
        match self {
            Relation::AtMost => "≤",
            Relation::AtLeast => "≥",
        }
    }
}

/// A design check: one value against one limit.
#[derive(Clone, Debug, Serialize)]
pub struct Check {
    pub id: String,
    /// What is checked, as a sentence: "Modulation stays linear with headroom at DC minimum".
    pub statement: String,
    /// The quantity whose value is checked.
    pub quantity: String,
    pub value: f64,
    pub relation: Relation,
    pub limit: f64,
    #[serde(serialize_with = "serialize_unit")]
    pub unit: Unit,
    pub pass: bool,
    /// Distance to the limit as a fraction of the limit; negative when failing.
    pub margin: f64,
    /// Where the limit comes from.
    pub source: Source,
}

impl Check {
    pub fn verdict(&self) -> &'static str {
        if self.pass {
            "pass"
        } else {
            "FAIL"
        }
    }
}

/// A warning raised during evaluation: not a failed check, but something a reviewer must see.
#[derive(Clone, Debug, Serialize)]
pub struct Warning {
    pub id: String,
    pub text: String,
}

/// All quantities and checks of one evaluation, in the order they were made.
#[derive(Clone, Debug, Default, Serialize)]
pub struct Sheet {
    pub quantities: Vec<Quantity>,
    pub checks: Vec<Check>,
    pub warnings: Vec<Warning>,
    #[serde(skip)]
    index: BTreeMap<String, usize>,
}

/// A quantity under construction; finished by [`Derivation::value`].
#[must_use = "a derivation adds nothing until `.value(..)` is called"]
pub struct Derivation<'s> {
    sheet: &'s mut Sheet,
    id: String,
    name: String,
    symbol: String,
    unit: Unit,
    formula: String,
    inputs: Vec<String>,
    source: Source,
    class: Option<String>,
}

impl<'s> Derivation<'s> {
    /// The formula in typst math, written with the symbols of the inputs.
    pub fn formula(mut self, formula: &str) -> Self {
        self.formula = formula.to_string();
        self
    }

    /// The quantities the formula uses; their symbols are replaced by their values.
    pub fn inputs(mut self, ids: &[&str]) -> Self {
        self.inputs = ids.iter().map(|s| s.to_string()).collect();
        self
    }

    pub fn source(mut self, source: Source) -> Self {
        self.source = source;
        self
    }

    pub fn class(mut self, class: &str) -> Self {
        self.class = Some(class.to_string());
        self
    }

    /// Adds the quantity and returns its value.
    pub fn value(self, value: f64) -> f64 {
        let substituted = self.sheet.substitute(&self.formula, &self.inputs);
        let q = Quantity {
            id: self.id,
            name: self.name,
            symbol: self.symbol,
            value,
            unit: self.unit,
            formula: self.formula,
            substituted,
            inputs: self.inputs,
            source: self.source,
            class: self.class,
        };
        self.sheet.push(q);
        value
    }
}

impl Sheet {
    pub fn new() -> Sheet {
        Sheet::default()
    }

    /// Records a value read from the design record.
    pub fn input(
        &mut self,
        id: &str,
        name: &str,
        symbol: &str,
        value: f64,
        unit: Unit,
        source: Source,
    ) -> f64 {
        self.push(Quantity {
            id: id.to_string(),
            name: name.to_string(),
            symbol: symbol.to_string(),
            value,
            unit,
            formula: symbol.to_string(),
            substituted: math_value(value, unit),
            inputs: Vec::new(),
            source,
            class: None,
        });
        value
    }

    /// Starts a derived quantity; its source defaults to [`Source::Derived`].
    pub fn derive(&mut self, id: &str, name: &str, symbol: &str, unit: Unit) -> Derivation<'_> {
        Derivation {
            sheet: self,
            id: id.to_string(),
            name: name.to_string(),
            symbol: symbol.to_string(),
            unit,
            formula: String::new(),
            inputs: Vec::new(),
            source: Source::Derived,
            class: None,
        }
    }

    fn push(&mut self, q: Quantity) {
        assert!(
            !self.index.contains_key(&q.id),
            "internal error: quantity `{}` defined twice, please report",
            q.id
        );
        for input in &q.inputs {
            assert!(
                self.index.contains_key(input),
                "internal error: `{}` uses `{input}` before it is defined, please report",
                q.id
            );
        }
        self.index.insert(q.id.clone(), self.quantities.len());
        self.quantities.push(q);
    }

    pub fn get(&self, id: &str) -> Option<&Quantity> {
        self.index.get(id).map(|&i| &self.quantities[i])
    }

    /// The symbol of a quantity, for writing it into another's formula; empty if the
    /// sheet has no such quantity.
    pub fn symbol(&self, id: &str) -> String {
        self.get(id).map(|q| q.symbol.clone()).unwrap_or_default()
    }

    /// The value of a quantity the engine itself defined earlier.
    pub fn value(&self, id: &str) -> f64 {
        match self.get(id) {
            Some(q) => q.value,
            None => panic!("internal error: quantity `{id}` is not defined, please report"),
        }
    }

    /// Adds a check of the quantity `quantity` against `limit`.
    pub fn check(
        &mut self,
        id: &str,
        statement: &str,
        quantity: &str,
        relation: Relation,
        limit: f64,
        source: Source,
    ) -> bool {
        let q = self
            .get(quantity)
            .unwrap_or_else(|| panic!("internal error: check `{id}` names unknown `{quantity}`"));
        let (value, unit) = (q.value, q.unit);
        let scale = if limit != 0.0 { limit.abs() } else { 1.0 };
        let margin = match relation {
            Relation::AtMost => (limit - value) / scale,
            Relation::AtLeast => (value - limit) / scale,
        };
        let pass = margin >= 0.0 && value.is_finite();
        self.checks.push(Check {
            id: id.to_string(),
            statement: statement.to_string(),
            quantity: quantity.to_string(),
            value,
            relation,
            limit,
            unit,
            pass,
            margin,
            source,
        });
        pass
    }

    pub fn warn(&mut self, id: &str, text: &str) {
        self.warnings.push(Warning {
            id: id.to_string(),
            text: text.to_string(),
        });
    }

    /// The hint for an id that is neither a quantity nor a check: the closest id, if any.
    pub fn unknown_id_hint(&self, id: &str) -> String {
        let ids: Vec<&str> = self
            .quantities
            .iter()
            .map(|q| q.id.as_str())
            .chain(self.checks.iter().map(|c| c.id.as_str()))
            .collect();
        match crate::diag::did_you_mean(id, &ids) {
            Some(close) => format!("did you mean `{close}`?"),
            None => "`bridgebook check DESIGN --json` lists every id".to_string(),
        }
    }

    pub fn all_pass(&self) -> bool {
        self.checks.iter().all(|c| c.pass)
    }

    /// Replaces each input's symbol in `formula` by its value, whole symbols only.
    fn substitute(&self, formula: &str, inputs: &[String]) -> String {
        let mut pairs: Vec<(&str, String)> = inputs
            .iter()
            .map(|id| {
                let q = &self.quantities[self.index[id]];
                (q.symbol.as_str(), math_value(q.value, q.unit))
            })
            .collect();
        // Longest symbols first, so that `V_"dc"` is not taken for `V`.
        pairs.sort_by_key(|(s, _)| std::cmp::Reverse(s.len()));
        let bytes = formula.as_bytes();
        let mut out = String::with_capacity(formula.len() * 2);
        let mut i = 0;
        'scan: while i < formula.len() {
            if !formula.is_char_boundary(i) {
                i += 1;
                continue;
            }
            let at_start = i == 0 || !is_symbol_char(bytes[i - 1]);
            if at_start {
                for (symbol, value) in &pairs {
                    if formula[i..].starts_with(symbol) {
                        let end = i + symbol.len();
                        let at_end = end == formula.len() || !is_symbol_char(bytes[end]);
                        if at_end {
                            out.push_str(value);
                            i = end;
                            continue 'scan;
                        }
                    }
                }
            }
            let ch = formula[i..].chars().next().unwrap_or(' ');
            out.push(ch);
            i += ch.len_utf8();
        }
        out
    }
}

fn is_symbol_char(b: u8) -> bool {
    b.is_ascii_alphanumeric() || b == b'_' || b == b'.' || b == b'"' || b == b'\''
}

/// A value in typst math: `(1.8 "mH")`, `0.9043`, `(-3 "V")`. Values with a unit are
/// bracketed so that fractions and products keep them whole.
pub fn math_value(value: f64, unit: Unit) -> String {
    let (number, symbol) = split_display(value, unit);
    let number = math_number(&number);
    if symbol.is_empty() {
        if value < 0.0 {
            format!("({number})")
        } else {
            number
        }
    } else {
        format!("({number} \"{symbol}\")")
    }
}

/// `1.2e-7` in typst math is `1.2 times 10^(-7)`.
fn math_number(text: &str) -> String {
    match text.split_once('e') {
        Some((m, e)) => format!("{m} times 10^({e})"),
        None => text.to_string(),
    }
}

/// A plain number for tables: 4 significant figures.
pub fn plain_number(value: f64) -> String {
    format_number(value, 4)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Sheet {
        let mut s = Sheet::new();
        let input = |key: &str| Source::Input {
            key: key.to_string(),
            line: 3,
        };
        s.input("l", "Inductance", "L", 1.8e-3, Unit::Henry, input("l"));
        s.input("c", "Capacitance", "C", 10e-6, Unit::Farad, input("c"));
        s.input(
            "v_dc",
            "DC voltage",
            "V_\"dc\"",
            400.0,
            Unit::Volt,
            input("v"),
        );
        s.input("v", "Voltage", "V", 170.0, Unit::Volt, input("v2"));
        s
    }

    #[test]
    fn substitution_replaces_whole_symbols_only() {
        let mut s = sample();
        let f0 = 1.0 / (2.0 * std::f64::consts::PI * (1.8e-3f64 * 10e-6).sqrt());
        s.derive("f0", "Resonance", "f_0", Unit::Hertz)
            .formula("1 / (2 pi sqrt(L dot C))")
            .inputs(&["l", "c"])
            .value(f0);
        let q = s.get("f0").unwrap();
        assert_eq!(
            q.substituted,
            "1 / (2 pi sqrt((1.8 \"mH\") dot (10 \"µF\")))"
        );
        s.derive("m", "Index", "m_a", Unit::One)
            .formula("V / (V_\"dc\" / 2)")
            .inputs(&["v", "v_dc"])
            .value(0.85);
        assert_eq!(
            s.get("m").unwrap().substituted,
            "(170 \"V\") / ((400 \"V\") / 2)"
        );
    }

    #[test]
    fn check_margins_have_the_right_sign() {
        let mut s = sample();
        assert!(s.check(
            "a",
            "v below 200",
            "v",
            Relation::AtMost,
            200.0,
            Source::Derived
        ));
        assert!(!s.check(
            "b",
            "v above 200",
            "v",
            Relation::AtLeast,
            200.0,
            Source::Derived
        ));
        assert!((s.checks[0].margin - 0.15).abs() < 1e-12);
        assert!((s.checks[1].margin + 0.15).abs() < 1e-12);
        assert!(!s.all_pass());
    }

    #[test]
    #[should_panic(expected = "defined twice")]
    fn a_quantity_cannot_be_defined_twice() {
        let mut s = sample();
        s.input("l", "again", "L", 1.0, Unit::Henry, Source::Derived);
    }

    #[test]
    fn math_values_bracket_units_and_negatives() {
        assert_eq!(math_value(-3.0, Unit::One), "(-3)");
        assert_eq!(math_value(1.2e-13, Unit::One), "1.2 times 10^(-13)");
        assert_eq!(math_value(0.05, Unit::Percent), "(5 \"%\")");
    }
}
