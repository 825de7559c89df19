//! Markdown templates to typst, with bridgebook's two directives:
//!
//! - `@place NAME [ARG]` on a paragraph of its own places a generated section
//!   (`@place checks`, `@place calculation filter`, `@place plot filter-bode`).
//! - `@{ID}` anywhere in text inserts a result by id with its unit (`@{filter.f0}`),
//!   `@{ID|formula}` the whole equation, `@{ID|value}` the number alone,
//!   `@{ID|symbol}` the symbol; `@{project.title}` and the other project fields insert
//!   record text.
//!
//! What a directive produces is decided by a [`Resolver`]; this module only finds the
//! directives and turns the rest of the Markdown into escaped typst markup.

use super::markup;
use crate::diag::{Diagnostic, SourceText};
use pulldown_cmark::{CodeBlockKind, Event, Options, Parser, Tag, TagEnd};
use std::ops::Range;

/// Produces the typst markup for directives.
pub trait Resolver {
    /// A block directive; `Err` carries the message and a hint.
    fn block(&mut self, name: &str, arg: Option<&str>) -> Result<String, (String, String)>;
    /// An inline reference, the text between `@{` and `}`.
    fn inline(&mut self, reference: &str) -> Result<String, (String, String)>;
}

/// Where a Markdown text sits, for messages: its source and the line it starts on.
pub struct Origin<'a> {
    pub source: &'a SourceText,
    /// Line of the source on which the Markdown text starts (1 for a whole file).
    pub first_line: usize,
    /// Columns to add to positions on every line (the indentation of a YAML block).
    pub indent: usize,
    /// Key path named in messages (empty for a template file).
    pub key: &'a str,
}

/// Converts Markdown with directives to typst markup, or reports every bad directive.
pub fn to_typst(
    md: &str,
    origin: &Origin,
    resolver: &mut dyn Resolver,
) -> Result<String, Vec<Diagnostic>> {
    let mut w = Writer {
        out: String::with_capacity(md.len() * 2),
        pending: String::new(),
        pending_at: 0,
        md,
        origin,
        errors: Vec::new(),
        code: None,
        in_table_head: false,
    };
    let options =
        Options::ENABLE_TABLES | Options::ENABLE_STRIKETHROUGH | Options::ENABLE_TASKLISTS;
    let events: Vec<(Event, Range<usize>)> =
        Parser::new_ext(md, options).into_offset_iter().collect();
    let mut i = 0;
    while i < events.len() {
        if matches!(events[i].0, Event::Start(Tag::Paragraph)) {
            if let Some((end, text, at)) = paragraph_text(&events, i) {
                if let Some(rest) = text.trim().strip_prefix("@place") {
                    if rest.is_empty() || rest.starts_with(char::is_whitespace) {
                        w.place(rest.trim(), at, resolver);
                        i = end + 1;
                        continue;
                    }
                }
            }
        }
        let (ev, range) = &events[i];
        w.event(ev, range.clone(), resolver);
        i += 1;
    }
    w.flush(resolver);
    if w.errors.is_empty() {
        Ok(w.out)
    } else {
        Err(w.errors)
    }
}

/// If the paragraph starting at `start` holds only text, its text, end index and offset.
fn paragraph_text(
    events: &[(Event, Range<usize>)],
    start: usize,
) -> Option<(usize, String, usize)> {
    let mut text = String::new();
    let mut at = None;
    for (j, (ev, range)) in events.iter().enumerate().skip(start + 1) {
        match ev {
            Event::Text(t) => {
                at.get_or_insert(range.start);
                text.push_str(t);
            }
            Event::End(TagEnd::Paragraph) => return Some((j, text, at.unwrap_or(range.start))),
            _ => return None,
        }
    }
    None
}

struct Writer<'a, 'o> {
    out: String,
    /// Adjacent text events, merged so that a directive split by the parser is whole.
    pending: String,
    pending_at: usize,
    md: &'a str,
    origin: &'o Origin<'o>,
    errors: Vec<Diagnostic>,
    /// Text of a code block being collected.
    code: Option<String>,
    in_table_head: bool,
}

impl Writer<'_, '_> {
    fn error(&mut self, offset: usize, width: usize, message: String, hint: String) {
        let before = &self.md[..offset.min(self.md.len())];
        let line_in = before.matches('\n').count();
        let col = before
            .rfind('\n')
            .map_or(before.len(), |p| before.len() - p - 1);
        let line = self.origin.first_line + line_in;
        let d = self
            .origin
            .source
            .at(
                line,
                self.origin.indent + col + 1,
                width,
                self.origin.key,
                message,
            )
            .with_hint(hint);
        self.errors.push(d);
    }

    fn place(&mut self, directive: &str, at: usize, resolver: &mut dyn Resolver) {
        self.flush(resolver);
        let mut parts = directive.splitn(2, char::is_whitespace);
        let name = parts.next().unwrap_or("");
        let arg = parts.next().map(str::trim).filter(|a| !a.is_empty());
        match resolver.block(name, arg) {
            Ok(markup) => {
                self.out.push_str(&markup);
                self.out.push_str("\n\n");
            }
            Err((message, hint)) => self.error(at, directive.len() + 7, message, hint),
        }
    }

    /// Writes pending text, replacing inline references.
    fn flush(&mut self, resolver: &mut dyn Resolver) {
        if self.pending.is_empty() {
            return;
        }
        let text = std::mem::take(&mut self.pending);
        let base = self.pending_at;
        if let Some(at) = text.find("@place") {
            self.error(
                base + at,
                6,
                "`@place` must stand alone in its paragraph".into(),
                "put the directive on its own line with blank lines around it".into(),
            );
        }
        let mut rest = text.as_str();
        let mut consumed = 0;
        while let Some(start) = rest.find("@{") {
            self.out.push_str(&markup::text(&rest[..start]));
            let after = &rest[start + 2..];
            match after.find('}') {
                Some(end) => {
                    let reference = after[..end].trim();
                    match resolver.inline(reference) {
                        Ok(m) => self.out.push_str(&m),
                        Err((message, hint)) => {
                            self.error(base + consumed + start, end + 3, message, hint)
                        }
                    }
                    let used = start + 2 + end + 1;
                    consumed += used;
                    rest = &rest[used..];
                }
                None => {
                    self.error(
                        base + consumed + start,
                        2,
                        "unclosed reference `@{`".into(),
                        "close it with `}`, e.g. `@{filter.f0}`".into(),
                    );
                    rest = "";
                }
            }
        }
        self.out.push_str(&markup::text(rest));
    }

    fn event(&mut self, ev: &Event, range: Range<usize>, resolver: &mut dyn Resolver) {
        if let Some(code) = &mut self.code {
            match ev {
                Event::Text(t) => code.push_str(t),
                Event::End(TagEnd::CodeBlock) => {
                    let code = self.code.take().unwrap_or_default();
                    self.out.push_str(&format!(
                        "#raw(block: true, {})\n\n",
                        markup::string(code.trim_end_matches('\n'))
                    ));
                }
                _ => {}
            }
            return;
        }
        if let Event::Text(t) = ev {
            if self.pending.is_empty() {
                self.pending_at = range.start;
            }
            self.pending.push_str(t);
            return;
        }
        self.flush(resolver);
        let out = &mut self.out;
        match ev {
            Event::Start(tag) => match tag {
                Tag::Paragraph => {}
                Tag::Heading { level, .. } => {
                    out.push('\n');
                    out.push_str(&"=".repeat(*level as usize));
                    out.push(' ');
                }
                Tag::BlockQuote(_) => out.push_str("#quote(block: true)["),
                Tag::CodeBlock(kind) => {
                    let _ = matches!(kind, CodeBlockKind::Fenced(_));
                    self.code = Some(String::new());
                }
                Tag::List(None) => out.push_str("#list(\n"),
                Tag::List(Some(n)) => out.push_str(&format!("#enum(start: {n},\n")),
                Tag::Item => out.push('['),
                Tag::Emphasis => out.push_str("#emph["),
                Tag::Strong => out.push_str("#strong["),
                Tag::Strikethrough => out.push_str("#strike["),
                Tag::Link { dest_url, .. } => {
                    out.push_str(&format!("#link({})[", markup::string(dest_url)))
                }
                Tag::Table(aligns) => {
                    out.push_str(&format!("#table(columns: {},\n", aligns.len().max(1)))
                }
                Tag::TableHead => self.in_table_head = true,
                Tag::TableRow => {}
                Tag::TableCell => out.push_str(if self.in_table_head {
                    "table.header(["
                } else {
                    "["
                }),
                Tag::Image { .. } => {
                    self.error(
                        range.start,
                        range.len().min(40),
                        "images are not supported in templates".into(),
                        "plots are placed with `@place plot NAME`".into(),
                    );
                }
                _ => {}
            },
            Event::End(tag) => match tag {
                TagEnd::Paragraph => out.push_str("\n\n"),
                TagEnd::Heading(_) => out.push_str("\n\n"),
                TagEnd::BlockQuote(_) => out.push_str("]\n\n"),
                TagEnd::List(_) => out.push_str(")\n\n"),
                TagEnd::Item => out.push_str("],\n"),
                TagEnd::Emphasis | TagEnd::Strong | TagEnd::Strikethrough | TagEnd::Link => {
                    out.push(']')
                }
                TagEnd::Table => out.push_str(")\n\n"),
                TagEnd::TableHead => {
                    self.in_table_head = false;
                }
                TagEnd::TableCell => out.push_str(if self.in_table_head { "]), " } else { "], " }),
                TagEnd::TableRow => out.push('\n'),
                _ => {}
            },
            Event::Code(t) => out.push_str(&format!("#raw({})", markup::string(t))),
            Event::SoftBreak => out.push(' '),
            Event::HardBreak => out.push_str(" #linebreak() "),
            Event::Rule => out.push_str("#line(length: 100%)\n\n"),
            Event::Html(t) | Event::InlineHtml(t) => out.push_str(&markup::text(t)),
            Event::TaskListMarker(done) => out.push_str(if *done { "☒ " } else { "☐ " }),
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Echo;
    impl Resolver for Echo {
        fn block(&mut self, name: &str, arg: Option<&str>) -> Result<String, (String, String)> {
            match name {
                "checks" => Ok(format!("<BLOCK {name} {arg:?}>")),
                _ => Err((format!("unknown section `{name}`"), "see README".into())),
            }
        }
        fn inline(&mut self, reference: &str) -> Result<String, (String, String)> {
            if reference.starts_with("filter.") {
                Ok(format!("<{reference}>"))
            } else {
                Err((format!("unknown id `{reference}`"), "hint".into()))
            }
        }
    }

    fn convert(md: &str) -> Result<String, Vec<Diagnostic>> {
        let src = SourceText {
            name: "t.md".into(),
            text: md.into(),
        };
        let origin = Origin {
            source: &src,
            first_line: 1,
            indent: 0,
            key: "",
        };
        to_typst(md, &origin, &mut Echo)
    }

    #[test]
    fn converts_markdown_and_directives() {
        let out = convert("# Title\n\nSome *em* and **strong** with `code`.\n\n@place checks\n\nThe resonance is @{filter.f0} here.\n\n- one\n- two\n").unwrap();
        assert!(out.contains("= Title"), "{out}");
        assert!(out.contains("#emph[em]"), "{out}");
        assert!(out.contains("#strong[strong]"), "{out}");
        assert!(out.contains("#raw(\"code\")"), "{out}");
        assert!(out.contains("<BLOCK checks None>"), "{out}");
        assert!(out.contains("The resonance is <filter.f0> here."), "{out}");
        assert!(out.contains("#list(\n[one],\n[two],\n)"), "{out}");
    }

    #[test]
    fn reports_bad_directives_with_line_and_column() {
        let errs = convert("intro\n\n@place nonsense\n\nsee @{bogus.id} now\n").unwrap_err();
        assert_eq!(errs.len(), 2);
        assert_eq!((errs[0].line, errs[0].column), (3, 1));
        assert!(errs[0].message.contains("nonsense"));
        assert_eq!((errs[1].line, errs[1].column), (5, 5));
        assert!(errs[1].message.contains("bogus.id"));
    }

    #[test]
    fn escapes_text_that_looks_like_typst() {
        let out = convert("Price: $5 #hash // slash\n").unwrap();
        assert!(out.contains("\\$5 \\#hash \\/\\/ slash"), "{out}");
    }
}
