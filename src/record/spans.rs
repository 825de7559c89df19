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
}

impl Spans {
    /// Indexes `text`; a text that does not parse gives an empty index (the syntax error
    /// itself is reported from `serde_yaml`).
    pub fn index(text: &str) -> Spans {
        let mut builder = Builder {
            spans: Spans::default(),
            stack: Vec::new(),
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
    Map { path: String, key: Option<String> },
    Seq { path: String, next: usize },
}

struct Builder<'t> {
    spans: Spans,
    stack: Vec<Frame>,
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
            Some(Frame::Map { path, key }) => key.take().map(|k| join(path, &k)),
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
                if let Some(Frame::Map { path, key }) = self.stack.last_mut() {
                    if key.is_none() {
                        let full = join(path, &value);
                        *key = Some(value);
                        self.spans.keys.insert(full, span(width));
                        return;
                    }
                }
                if let Some(p) = self.next_value_path() {
                    self.spans.values.insert(p, span(width));
                }
            }
            Event::MappingStart(..) | Event::SequenceStart(..) => {
                let path = self.next_value_path().unwrap_or_default();
                self.spans.values.entry(path.clone()).or_insert(span(1));
                self.stack.push(if matches!(ev, Event::MappingStart(..)) {
                    Frame::Map { path, key: None }
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
        assert_eq!(s.value("filter.capacitance").map(|s| s.line), Some(3));
        assert_eq!(parent("a.b[2].c"), Some("a.b[2]"));
        assert_eq!(parent("a.b[2]"), Some("a.b"));
        assert_eq!(parent("a"), None);
    }
}
#[cfg(test)]
mod scratch_marks {
    use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
    use yaml_rust2::scanner::Marker;
    struct P;
    impl MarkedEventReceiver for P {
        fn on_event(&mut self, ev: Event, m: Marker) {
            println!("{:?} {}:{} idx {}", ev, m.line(), m.col(), m.index());
        }
    }
    #[test]
    fn scratch() {
        let t = "a: 1\nfilter:\n  type: lc\n  x: [1, 2]\nl:\n  - 1\n  - { q: 1 }\nm:\n- 3\n";
        Parser::new_from_str(t).load(&mut P, false).unwrap();
    }
}
