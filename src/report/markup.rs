//! Writing typst source safely: text from records and templates is escaped so that it
//! can never be read as typst code, and strings are quoted for typst's code mode.

/// Escapes text for typst markup (inside a paragraph or a `[...]` content block).
pub fn text(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            // Every character that starts markup, code, math, a label, a reference,
            // a comment or a list/heading marker is written with a backslash.
            '\\' | '[' | ']' | '#' | '$' | '*' | '_' | '`' | '<' | '>' | '@' | '~' | '/' | '='
            | '-' | '+' | '"' | '\'' => {
                out.push('\\');
                out.push(c);
            }
            '\n' | '\r' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A typst string literal: `"..."` with quotes, backslashes and controls escaped.
pub fn string(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// Content block of escaped text: `[...]`.
pub fn content(s: &str) -> String {
    format!("[{}]", text(s))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_every_markup_character() {
        assert_eq!(text("a*b_c"), "a\\*b\\_c");
        assert_eq!(text("// not a comment"), "\\/\\/ not a comment");
        assert_eq!(text("#let x = 1"), "\\#let x \\= 1");
        assert_eq!(text("$5 @ref <lbl>"), "\\$5 \\@ref \\<lbl\\>");
    }

    #[test]
    fn quotes_strings() {
        assert_eq!(string("say \"hi\"\\"), "\"say \\\"hi\\\"\\\\\"");
        assert_eq!(string("a\nb"), "\"a\\nb\"");
    }
}
