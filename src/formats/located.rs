//! Source positions of the fields of a YAML document, and errors located with them.
//!
//! serde gives us typed values but no positions for them, so validation that happens after
//! deserialisation (a formula with an unknown name, probabilities that do not sum to one) would
//! otherwise only be able to name the field. This module walks the document once with an
//! event parser and records where each field path starts, so every error can name file, line,
//! column and field.

use std::collections::HashMap;

use serde_yaml::Value as Yaml;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::{Marker, TScalarStyle};

use super::formula::FormulaError;
use crate::error::{Error, Location};

/// Position of a value in the source: 1-based line and column, and whether the value is a
/// single-line quoted scalar (then its text starts one column later).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
    /// Column where the scalar's text begins, if the scalar is on one line and its characters
    /// map one-to-one to columns (plain or quoted without escapes).
    pub text_column: Option<usize>,
}

/// Field path → position of the value at that path (`players[1].questions`).
#[derive(Debug, Default)]
pub struct SourceMap {
    positions: HashMap<String, Position>,
}

impl SourceMap {
    /// Builds the map; a document that fails to parse yields an empty map (serde reports the
    /// syntax error itself, with its own position).
    pub fn new(text: &str) -> Self {
        let mut builder = Builder {
            text,
            stack: Vec::new(),
            map: SourceMap::default(),
            cursor: (0, 0),
        };
        let mut parser = Parser::new_from_str(text);
        if parser.load(&mut builder, false).is_err() {
            return SourceMap::default();
        }
        builder.map
    }

    /// Position of the value at `path`, or of the nearest enclosing field that has one.
    pub fn find(&self, path: &str) -> Option<Position> {
        let mut p = path.to_string();
        loop {
            if let Some(pos) = self.positions.get(&p) {
                return Some(*pos);
            }
            let cut = p.rfind(['.', '['])?;
            p.truncate(cut);
        }
    }
}

enum Frame {
    /// Inside a mapping: the path of the mapping and, once a key was read, the key awaiting its
    /// value.
    Mapping {
        path: String,
        key: Option<String>,
    },
    Sequence {
        path: String,
        next: usize,
    },
}

struct Builder<'a> {
    text: &'a str,
    stack: Vec<Frame>,
    map: SourceMap,
    /// (character index, byte offset) of the last marker converted: the parser's markers count
    /// characters, slicing needs bytes, and markers arrive in document order.
    cursor: (usize, usize),
}

impl Builder<'_> {
    /// Byte offset of character `index` (clamped to the end of the text).
    fn byte_offset(&mut self, index: usize) -> usize {
        let (mut chars, mut bytes) = if index >= self.cursor.0 {
            self.cursor
        } else {
            (0, 0)
        };
        for c in self.text[bytes..].chars() {
            if chars == index {
                break;
            }
            chars += 1;
            bytes += c.len_utf8();
        }
        self.cursor = (chars, bytes);
        bytes
    }

    /// The path of the value that begins now, advancing the parent's cursor. Returns `None`
    /// when the event is a mapping key rather than a value.
    fn next_value_path(&mut self, key_text: Option<&str>) -> Option<String> {
        match self.stack.last_mut() {
            None => Some(String::new()),
            Some(Frame::Sequence { path, next }) => {
                let p = format!("{path}[{next}]");
                *next += 1;
                Some(p)
            }
            Some(Frame::Mapping { path, key }) => match key.take() {
                Some(k) => Some(if path.is_empty() {
                    k
                } else {
                    format!("{path}.{k}")
                }),
                None => {
                    *key = Some(key_text.unwrap_or("?").to_string());
                    None
                }
            },
        }
    }

    fn record(&mut self, path: String, mark: Marker, text_column: Option<usize>) {
        self.map.positions.entry(path).or_insert(Position {
            line: mark.line(),
            column: mark.col() + 1,
            text_column,
        });
    }
}

impl MarkedEventReceiver for Builder<'_> {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        match ev {
            Event::Scalar(value, style, _, _) => {
                if let Some(path) = self.next_value_path(Some(&value)) {
                    let at = self.byte_offset(mark.index());
                    let raw = &self.text[at..];
                    // Whether the value stands in the text as written, on one line. (Not by
                    // taking the rest of the line first: on a one-line JSON document that is
                    // the whole rest of the file for every scalar, quadratic in its size.)
                    let one_line = !value.contains(['\n', '\r']);
                    let text_column = match style {
                        TScalarStyle::Plain if one_line && raw.starts_with(value.as_str()) => {
                            Some(mark.col() + 1)
                        }
                        TScalarStyle::SingleQuoted | TScalarStyle::DoubleQuoted
                            if one_line
                                && raw
                                    .get(1..)
                                    .is_some_and(|rest| rest.starts_with(value.as_str())) =>
                        {
                            Some(mark.col() + 2)
                        }
                        _ => None,
                    };
                    self.record(path, mark, text_column);
                }
            }
            Event::SequenceStart(..) => {
                let path = self.next_value_path(None).unwrap_or_default();
                self.record(path.clone(), mark, None);
                self.stack.push(Frame::Sequence { path, next: 0 });
            }
            Event::MappingStart(..) => {
                let path = self.next_value_path(None).unwrap_or_default();
                self.record(path.clone(), mark, None);
                self.stack.push(Frame::Mapping { path, key: None });
            }
            Event::SequenceEnd | Event::MappingEnd => {
                self.stack.pop();
            }
            Event::Alias(_) => {
                let _ = self.next_value_path(None);
            }
            _ => {}
        }
    }
}

/// Where a document came from, for error messages: the file name and a map from field paths to
/// positions.
pub struct Context {
    /// The file, as named in errors.
    pub file: String,
    /// Field paths to positions.
    pub map: SourceMap,
}

impl Context {
    /// An input error at `field` (a path such as `players[1].questions`).
    pub fn error(&self, field: &str, message: impl Into<String>) -> Error {
        let pos = self.map.find(field);
        Error::Input {
            location: Location {
                file: self.file.clone(),
                line: pos.map(|p| p.line),
                column: pos.map(|p| p.column),
                field: (!field.is_empty()).then(|| field.to_string()),
            },
            message: message.into(),
        }
    }

    /// An error inside a formula string: the column is that of the offending character when the
    /// formula sits on one line.
    pub fn formula_error(&self, field: &str, e: &FormulaError, what: &str) -> Error {
        let pos = self.map.find(field);
        let column = pos.map(|p| match p.text_column {
            Some(c) => c + e.pos,
            None => p.column,
        });
        Error::Input {
            location: Location {
                file: self.file.clone(),
                line: pos.map(|p| p.line),
                column,
                field: Some(field.to_string()),
            },
            message: format!("{what}: {}", e.message),
        }
    }
}

/// A short description of a YAML value for error messages (never its whole content).
pub fn yaml_brief(v: &Yaml) -> String {
    match v {
        Yaml::Null => "nothing".into(),
        Yaml::Bool(b) => format!("`{b}`"),
        Yaml::Number(n) => format!("`{n}`"),
        Yaml::String(s) => format!("\"{s}\""),
        Yaml::Sequence(_) => "a list".into(),
        Yaml::Mapping(_) => "a mapping".into(),
        Yaml::Tagged(_) => "a tagged value".into(),
    }
}

/// A serde_yaml error as a located input error (the parser's quotations of the file cut short).
pub fn yaml_error(e: serde_yaml::Error, file: &str) -> Error {
    let loc = e.location();
    let mut message = e.to_string();
    // serde_yaml appends " at line L column C"; we print the position ourselves.
    if let Some(cut) = message.find(" at line ") {
        message.truncate(cut);
    }
    let message = redact_quoted(&message);
    let (field, message) = match message.split_once(": ") {
        Some((path, rest)) if !path.contains(' ') => (Some(path.to_string()), rest.to_string()),
        _ => (None, message),
    };
    Error::Input {
        location: Location {
            file: file.to_string(),
            line: loc.as_ref().map(|l| l.line()),
            column: loc.as_ref().map(|l| l.column()),
            field,
        },
        message,
    }
}

/// The parser quotes what it found (`invalid type: string "..."`, or a name or number in
/// backticks): a long quotation is cut, so that pointing a command at a foreign file (say, a
/// password file) never echoes its content, and control characters are shown escaped.
fn redact_quoted(message: &str) -> String {
    const KEEP: usize = 16;
    let shown = |quoted: &str| {
        if quoted.chars().count() > KEEP {
            "…".to_string()
        } else {
            quoted.escape_default().to_string()
        }
    };
    let mut out = String::new();
    let mut quoted = String::new();
    // The open quotation's delimiter: the parser quotes strings with `"` and names and numbers
    // with backticks, and either may come from the file.
    let mut open: Option<char> = None;
    for c in message.chars() {
        match open {
            Some(q) if c == q => {
                out.push_str(&shown(&quoted));
                out.push(c);
                quoted.clear();
                open = None;
            }
            Some(_) => quoted.push(c),
            None if c == '"' || c == '`' => {
                out.push(c);
                open = Some(c);
            }
            None => out.push(c),
        }
    }
    if open.is_some() {
        out.push_str(&shown(&quoted));
    }
    out.chars().take(400).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_nested_fields_and_formula_text() {
        let text = "name: t\nplayers:\n  - name: alice\n    questions: 2\n  - name: bob\n    questions: [0, 5]\nwin: \"a == b\"\n";
        let map = SourceMap::new(text);
        let q = map.find("players[0].questions").unwrap();
        assert_eq!((q.line, q.column), (4, 16));
        let q = map.find("players[1].questions[1]").unwrap();
        assert_eq!((q.line, q.column), (6, 20));
        let w = map.find("win").unwrap();
        assert_eq!((w.line, w.text_column), (7, Some(7)));
        // A path below a scalar falls back to the scalar.
        assert_eq!(map.find("win.inner").unwrap().line, 7);
    }
}
