//! Where each key and value stands in the YAML text.
//!
//! `serde_yaml` parses the record but keeps no positions; this index is built from
//! the marked events of `yaml-rust2` over the same text, keyed by the dotted path
//! the validator uses (`project.revisions[0].rev`), so every error can name a line.

use std::collections::BTreeMap;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// A place in the source: 1-based line and column, and how many characters to underline.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Span {
    pub line: usize,
    pub column: usize,
    pub width: usize,
}

/// Positions of keys and values by dotted path.
#[derive(Debug, Default)]
pub struct Spans {
    keys: BTreeMap<String, Span>,
    values: BTreeMap<String, Span>,
    /// Keys written a second time in the same mapping, in text order.
    duplicates: Vec<(String, Span)>,
}

impl Spans {
    /// Indexes `text`; a text that does not parse gives an empty index (the syntax error
    /// itself is reported from `serde_yaml`).
    pub fn index(text: &str) -> Spans {
        let mut builder = Builder {
            spans: Spans::default(),
            stack: Vec::new(),
            pending: Vec::new(),
            text,
        };
        let mut parser = Parser::new_from_str(text);
        if parser.load(&mut builder, false).is_err() {
            return Spans::default();
        }
        builder.spans
    }

    /// The span of the key itself (`inductance:`), for unknown or misplaced keys.
    pub fn key(&self, path: &str) -> Option<Span> {
        self.keys.get(path).copied()
    }

    /// Keys that a mapping repeats, by path, at their second (or later) writing.
    pub fn duplicates(&self) -> &[(String, Span)] {
        &self.duplicates
    }

    /// The span of the value at `path`, falling back to its key, then to the nearest
    /// enclosing value that has a position.
    pub fn value(&self, path: &str) -> Option<Span> {
        let mut p = path;
        loop {
            if let Some(s) = self.values.get(p).or_else(|| self.keys.get(p)) {
                return Some(*s);
            }
            p = parent(p)?;
        }
    }
}

/// `a.b[2].c` -> `a.b[2]` -> `a.b` -> `a`.
pub fn parent(path: &str) -> Option<&str> {
    let cut = path.rfind(['.', '['])?;
    Some(&path[..cut])
}

enum Frame {
    Map {
        path: String,
        key: Option<String>,
        seen: Vec<String>,
    },
    Seq {
        path: String,
        next: usize,
    },
}

struct Builder<'t> {
    spans: Spans,
    stack: Vec<Frame>,
    /// Block collections without a key of their own (the root, list entries) that take
    /// the place of the first thing written in them.
    pending: Vec<String>,
    text: &'t str,
}

fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

impl Builder<'_> {
    /// The path of the value that starts now, advancing the enclosing container.
    fn next_value_path(&mut self) -> Option<String> {
        match self.stack.last_mut() {
            None => Some(String::new()),
            Some(Frame::Map { path, key, .. }) => key.take().map(|k| join(path, &k)),
            Some(Frame::Seq { path, next }) => {
                let p = format!("{path}[{next}]");
                *next += 1;
                Some(p)
            }
        }
    }

    /// Width of the scalar as written, quotes included, clipped to its line.
    fn written_width(&self, mark: &Marker, value: &str) -> usize {
        let rest = self.text.get(mark.index()..).unwrap_or("");
        let line_rest = rest.lines().next().unwrap_or("");
        let shown = value.lines().next().unwrap_or("").chars().count();
        let quoted = line_rest.starts_with(['"', '\'']) as usize * 2;
        (shown + quoted).clamp(1, line_rest.chars().count().max(1))
    }
}

impl MarkedEventReceiver for Builder<'_> {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        // yaml-rust2 counts lines from 1 but columns from 0 (whatever its docs say).
        let span = |width| Span {
            line: mark.line(),
            column: mark.col() + 1,
            width,
        };
        match ev {
            Event::Scalar(value, ..) => {
                let width = self.written_width(&mark, &value);
                for p in self.pending.drain(..) {
                    self.spans.values.entry(p).or_insert(span(width));
                }
                if let Some(Frame::Map { path, key, seen }) = self.stack.last_mut() {
                    if key.is_none() {
                        let full = join(path, &value);
                        if seen.contains(&value) {
                            self.spans.duplicates.push((full, span(width)));
                        } else {
                            seen.push(value.clone());
                            self.spans.keys.insert(full, span(width));
                        }
                        *key = Some(value);
                        return;
                    }
                }
                if let Some(p) = self.next_value_path() {
                    self.spans.values.insert(p, span(width));
                }
            }
            Event::MappingStart(..) | Event::SequenceStart(..) => {
                let path = self.next_value_path().unwrap_or_default();
                // Only a flow collection's mark is its own (`{` or `[`); yaml-rust2 marks a
                // block collection somewhere inside its first entry. A block collection
                // under a key is shown at its key; one without a key at its first entry.
                let flow = self
                    .text
                    .get(mark.index()..)
                    .unwrap_or("")
                    .starts_with(['{', '[']);
                if flow {
                    let width = 1;
                    for p in self.pending.drain(..) {
                        self.spans.values.entry(p).or_insert(span(width));
                    }
                    self.spans.values.entry(path.clone()).or_insert(span(width));
                } else if !self.spans.keys.contains_key(&path) {
                    self.pending.push(path.clone());
                }
                self.stack.push(if matches!(ev, Event::MappingStart(..)) {
                    Frame::Map {
                        path,
                        key: None,
                        seen: Vec::new(),
                    }
                } else {
                    Frame::Seq { path, next: 0 }
                });
            }
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
            }
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "\
bridgebook: 1
filter:
  type: lc
  inductance: 1.8 mH
project:
  revisions:
    - { rev: A, date: 2026-10-02 }
    - rev: B
      date: 2026-11-30
";

    #[test]
    fn finds_keys_and_values() {
        let s = Spans::index(TEXT);
        assert_eq!(
            s.value("filter.inductance"),
            Some(Span {
                line: 4,
                column: 15,
                width: 6
            })
        );
        assert_eq!(
            s.key("filter.inductance").map(|s| (s.line, s.column)),
            Some((4, 3))
        );
        assert_eq!(s.value("project.revisions[0].rev").map(|s| s.line), Some(7));
        assert_eq!(
            s.value("project.revisions[1].date").map(|s| s.line),
            Some(9)
        );
        assert_eq!(s.value("bridgebook").map(|s| s.line), Some(1));
    }

    #[test]
    fn missing_paths_fall_back_to_the_parent() {
        let s = Spans::index(TEXT);
        // A block mapping is shown at its key, `filter:` on line 2.
        assert_eq!(s.value("filter.capacitance").map(|s| s.line), Some(2));
        assert_eq!(s.value("filter").map(|s| (s.line, s.column)), Some((2, 1)));
        // A flow mapping at its `{`; a block list entry at its first key.
        assert_eq!(
            s.value("project.revisions[0]").map(|s| (s.line, s.column)),
            Some((7, 7))
        );
        assert_eq!(
            s.value("project.revisions[1]").map(|s| (s.line, s.column)),
            Some((8, 7))
        );
        // The root at the first key written.
        assert_eq!(s.value("").map(|s| (s.line, s.column)), Some((1, 1)));
        assert_eq!(parent("a.b[2].c"), Some("a.b[2]"));
        assert_eq!(parent("a.b[2]"), Some("a.b"));
        assert_eq!(parent("a"), None);
    }

    #[test]
    fn finds_repeated_keys_of_one_mapping() {
        let s = Spans::index("a:\n  b: 1\n  c: 2\n  b: 3\nd: { b: 1 }\n");
        let dups: Vec<(&str, usize, usize)> = s
            .duplicates()
            .iter()
            .map(|(p, s)| (p.as_str(), s.line, s.column))
            .collect();
        assert_eq!(dups, vec![("a.b", 4, 3)]);
        // The first writing keeps its place.
        assert_eq!(s.key("a.b").map(|s| s.line), Some(2));
    }
}
