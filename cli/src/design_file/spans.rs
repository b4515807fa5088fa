//! File positions: a spanned copy of the parsed TOML tree and the user-facing [`InputError`].
//!
//! The tree keeps, for every key and value, the byte range it came from, so any later check
//! can point at the exact place in the file. Invariant: spans are byte ranges into the text
//! that was parsed; line and column are computed from them only when an error is made
//! (line and column are 1-based, columns count characters).

use std::fmt;
use std::ops::Range;

/// A byte range in the design text, when the parser recorded one.
pub(crate) type Span = Option<Range<usize>>;

/// One value of the parsed file with its position.
#[derive(Clone, Debug)]
pub(crate) struct Node {
    pub kind: Kind,
    pub span: Span,
}

/// The shape of a value. Standard tables, inline tables and arrays of tables are unified.
#[derive(Clone, Debug)]
pub(crate) enum Kind {
    Table(Vec<Entry>),
    Array(Vec<Node>),
    Str(String),
    Int(i64),
    Float(f64),
    Bool(bool),
    Datetime,
}

/// A key of a table with its position and value.
#[derive(Clone, Debug)]
pub(crate) struct Entry {
    pub key: String,
    pub key_span: Span,
    pub node: Node,
}

impl Node {
    /// The spanned tree of a parsed document.
    pub fn from_document<S>(doc: &toml_edit::ImDocument<S>) -> Node {
        table_node(doc.as_table())
    }

    /// The entries of a table, if this is one.
    pub fn entries(&self) -> Option<&[Entry]> {
        match &self.kind {
            Kind::Table(e) => Some(e),
            _ => None,
        }
    }

    /// How the user would call this kind of value, for "expected X, found Y" messages.
    pub fn type_name(&self) -> &'static str {
        match self.kind {
            Kind::Table(_) => "a table",
            Kind::Array(_) => "an array",
            Kind::Str(_) => "a string",
            Kind::Int(_) => "an integer",
            Kind::Float(_) => "a number",
            Kind::Bool(_) => "a boolean",
            Kind::Datetime => "a date-time",
        }
    }
}

/// The entry of `entries` named `key`.
pub(crate) fn get<'n>(entries: &'n [Entry], key: &str) -> Option<&'n Entry> {
    entries.iter().find(|e| e.key == key)
}

fn table_node(t: &toml_edit::Table) -> Node {
    let entries = t
        .iter()
        .map(|(k, item)| Entry {
            key: k.to_string(),
            key_span: t.key(k).and_then(|k| k.span()),
            node: item_node(item),
        })
        .collect();
    Node {
        kind: Kind::Table(entries),
        span: t.span(),
    }
}

fn item_node(item: &toml_edit::Item) -> Node {
    match item {
        toml_edit::Item::Value(v) => value_node(v),
        toml_edit::Item::Table(t) => table_node(t),
        toml_edit::Item::ArrayOfTables(a) => Node {
            kind: Kind::Array(a.iter().map(table_node).collect()),
            span: a.span(),
        },
        toml_edit::Item::None => Node {
            kind: Kind::Datetime,
            span: None,
        },
    }
}

fn value_node(v: &toml_edit::Value) -> Node {
    use toml_edit::Value as V;
    let kind = match v {
        V::String(s) => Kind::Str(s.value().clone()),
        V::Integer(i) => Kind::Int(*i.value()),
        V::Float(f) => Kind::Float(*f.value()),
        V::Boolean(b) => Kind::Bool(*b.value()),
        V::Datetime(_) => Kind::Datetime,
        V::Array(a) => Kind::Array(a.iter().map(value_node).collect()),
        V::InlineTable(t) => Kind::Table(
            t.iter()
                .map(|(k, v)| Entry {
                    key: k.to_string(),
                    key_span: t.key(k).and_then(|k| k.span()),
                    node: value_node(v),
                })
                .collect(),
        ),
    };
    Node {
        kind,
        span: v.span(),
    }
}

/// A bad design, located in its file: what the CLI prints before exiting with code 2.
///
/// `line` and `column` are 1-based; `line == 0` means the error is not tied to a place in the
/// file (for example a command-line override naming an unknown parameter).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct InputError {
    /// The file name as given by the user.
    pub file: String,
    /// 1-based line, or 0 when the error has no position in the file.
    pub line: usize,
    /// 1-based column in characters (0 with `line == 0`).
    pub column: usize,
    /// Dotted path of the offending key, e.g. `conductor.rect.x`; empty for syntax errors.
    pub key: String,
    /// What is wrong, one sentence.
    pub message: String,
    /// The offending source line, for the excerpt (empty when there is none).
    pub source_line: String,
    /// Length of the caret mark under `source_line`, characters (at least 1 when shown).
    pub caret_len: usize,
}

impl InputError {
    /// An error with no position in the file.
    pub fn unplaced(file: &str, key: &str, message: impl Into<String>) -> Self {
        InputError {
            file: file.to_string(),
            line: 0,
            column: 0,
            key: one_line(key),
            message: one_line(&message.into()),
            source_line: String::new(),
            caret_len: 0,
        }
    }

    /// An error at byte range `span` of `text` (the start of the file when `span` is `None`).
    pub(crate) fn at(
        text: &str,
        file: &str,
        span: &Span,
        key: &str,
        message: impl Into<String>,
    ) -> Self {
        let range = span.clone().unwrap_or(0..0);
        let start = floor_char_boundary(text, range.start.min(text.len()));
        let end = floor_char_boundary(text, range.end.clamp(start, text.len()));
        let line_start = text[..start].rfind('\n').map_or(0, |i| i + 1);
        let line_end = text[start..].find('\n').map_or(text.len(), |i| start + i);
        let line = text[..start].matches('\n').count() + 1;
        let column = text[line_start..start].chars().count() + 1;
        let source_line = text[line_start..line_end]
            .trim_end_matches('\r')
            .to_string();
        let caret_end = end.min(line_end).max(start);
        let caret_len = text[start..caret_end].chars().count().max(1);
        InputError {
            file: file.to_string(),
            line,
            column,
            key: one_line(key),
            message: one_line(&message.into()),
            source_line,
            caret_len,
        }
    }
}

/// `s` with control characters written as escapes (`\n`, `\t`, `\u{1b}`), so that a
/// message quoting the user's text stays one line.
fn one_line(s: &str) -> String {
    if !s.chars().any(char::is_control) {
        return s.to_string();
    }
    s.chars()
        .map(|c| {
            if c.is_control() {
                c.escape_default().to_string()
            } else {
                c.to_string()
            }
        })
        .collect()
}

fn floor_char_boundary(text: &str, mut i: usize) -> usize {
    while i > 0 && !text.is_char_boundary(i) {
        i -= 1;
    }
    i
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "error: {}", self.file)?;
        if self.line > 0 {
            write!(f, ":{}:{}", self.line, self.column)?;
        }
        write!(f, ": ")?;
        if !self.key.is_empty() {
            write!(f, "`{}`: ", self.key)?;
        }
        write!(f, "{}", self.message)?;
        if self.line > 0 && !self.source_line.is_empty() {
            let number = self.line.to_string();
            let gutter = " ".repeat(number.len());
            // Pad with the line's own tabs so the caret stays aligned under tabs.
            let pad: String = self
                .source_line
                .chars()
                .take(self.column.saturating_sub(1))
                .map(|c| if c == '\t' { '\t' } else { ' ' })
                .collect();
            write!(
                f,
                "\n{gutter} |\n{number} | {}\n{gutter} | {pad}{}",
                self.source_line,
                "^".repeat(self.caret_len.max(1))
            )?;
        }
        Ok(())
    }
}

impl std::error::Error for InputError {}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_and_column_count_characters_from_one() {
        let text = "a = 1\nbé = \"x\"\n";
        let start = text.find('=').unwrap();
        let e = InputError::at(text, "f.toml", &Some(start..start + 1), "a", "m");
        assert_eq!((e.line, e.column), (1, 3));
        let start = text.find('"').unwrap();
        let e = InputError::at(text, "f.toml", &Some(start..start + 3), "b", "m");
        assert_eq!((e.line, e.column, e.caret_len), (2, 6, 3));
        assert_eq!(e.source_line, "bé = \"x\"");
    }

    #[test]
    fn display_names_file_line_key_and_marks_the_place() {
        let text = "x = 1\ny = oops\n";
        let start = text.find("oops").unwrap();
        let e = InputError::at(text, "d.toml", &Some(start..start + 4), "y", "bad value");
        let shown = e.to_string();
        assert!(
            shown.starts_with("error: d.toml:2:5: `y`: bad value\n"),
            "{shown}"
        );
        assert!(shown.ends_with("2 | y = oops\n  |     ^^^^"), "{shown}");
    }

    #[test]
    fn out_of_range_span_does_not_panic() {
        let text = "aé";
        let e = InputError::at(text, "f", &Some(2..99), "k", "m");
        assert_eq!(e.line, 1);
        let e = InputError::unplaced("f", "k", "m");
        assert_eq!(e.to_string(), "error: f: `k`: m");
    }
}
