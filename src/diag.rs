//! Diagnostics that point at the source: file, line, column, key path, the source line
//! with a caret under the offending text, and a hint that says how to fix it.

use std::fmt;

/// One problem found in an input file.
#[derive(Clone, Debug, PartialEq)]
pub struct Diagnostic {
    pub file: String,
    /// 1-based; 0 when the problem has no single place (e.g. an empty file).
    pub line: usize,
    /// 1-based column of the first character.
    pub column: usize,
    /// Dotted key path into the record, e.g. `filter.inductance`; empty for the whole file.
    pub key: String,
    pub message: String,
    pub hint: Option<String>,
    /// The text of the source line, kept so the message can show it.
    pub snippet: Option<String>,
    /// How many characters to underline from `column`.
    pub width: usize,
}

impl Diagnostic {
    pub fn with_hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "error: {}", self.message)?;
        let key = if self.key.is_empty() {
            String::new()
        } else {
            format!(" at `{}`", self.key)
        };
        if self.line > 0 {
            writeln!(f, "  --> {}:{}:{}{key}", self.file, self.line, self.column)?;
        } else {
            writeln!(f, "  --> {}{key}", self.file)?;
        }
        if let Some(text) = &self.snippet {
            let number = self.line.to_string();
            let pad = " ".repeat(number.len());
            writeln!(f, "{pad} |")?;
            writeln!(f, "{number} | {text}")?;
            let lead: String = text
                .chars()
                .take(self.column.saturating_sub(1))
                .map(|c| if c == '\t' { '\t' } else { ' ' })
                .collect();
            writeln!(f, "{pad} | {lead}{}", "^".repeat(self.width.max(1)))?;
        }
        if let Some(hint) = &self.hint {
            writeln!(f, "  = hint: {hint}")?;
        }
        Ok(())
    }
}

/// All problems of one input, reported together.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Diagnostics(pub Vec<Diagnostic>);

impl fmt::Display for Diagnostics {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for d in &self.0 {
            writeln!(f, "{d}")?;
        }
        let n = self.0.len();
        write!(
            f,
            "{n} error{}; nothing was written",
            if n == 1 { "" } else { "s" }
        )
    }
}

impl std::error::Error for Diagnostics {}

/// The source text of one file, kept to quote lines in diagnostics.
#[derive(Clone, Debug)]
pub struct SourceText {
    pub name: String,
    pub text: String,
}

impl SourceText {
    pub fn line(&self, line: usize) -> Option<&str> {
        if line == 0 {
            return None;
        }
        self.text.lines().nth(line - 1)
    }

    /// A diagnostic at `line:column`, underlining `width` characters.
    pub fn at(
        &self,
        line: usize,
        column: usize,
        width: usize,
        key: &str,
        message: impl Into<String>,
    ) -> Diagnostic {
        Diagnostic {
            file: self.name.clone(),
            line,
            column: column.max(1),
            key: key.to_string(),
            message: message.into(),
            hint: None,
            snippet: self.line(line).map(str::to_string),
            width,
        }
    }
}

/// Levenshtein distance, for did-you-mean hints on misspelt keys.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = if ca == *cb {
                prev
            } else {
                1 + prev.min(row[j]).min(row[j + 1])
            };
            prev = cur;
        }
    }
    row[b.len()]
}

/// The closest of `candidates` to `word`, if it is close enough to be a likely typo.
pub fn did_you_mean<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    let word_l = word.to_lowercase();
    candidates
        .iter()
        .map(|c| (edit_distance(&word_l, &c.to_lowercase()), *c))
        .filter(|(d, c)| *d <= (c.len() / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_matches_known_values() {
        // The textbook pair: kitten -> sitting takes three edits (Levenshtein, 1966).
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn suggests_close_keys_only() {
        let keys = ["inductance", "capacitance", "type", "design"];
        assert_eq!(did_you_mean("inductanse", &keys), Some("inductance"));
        assert_eq!(did_you_mean("capacitence", &keys), Some("capacitance"));
        assert_eq!(did_you_mean("colour", &keys), None);
    }

    #[test]
    fn renders_snippet_with_caret() {
        let src = SourceText {
            name: "d.yaml".into(),
            text: "filter:\n  inductance: 3.2 mV\n".into(),
        };
        let d = src
            .at(2, 15, 6, "filter.inductance", "expected an inductance (H)")
            .with_hint("write e.g. `3.2 mH`");
        let text = d.to_string();
        assert!(
            text.contains("d.yaml:2:15 at `filter.inductance`"),
            "{text}"
        );
        assert!(text.contains("2 |   inductance: 3.2 mV"), "{text}");
        assert!(text.contains("  |               ^^^^^^"), "{text}");
        assert!(text.contains("hint: write e.g."), "{text}");
    }
}
