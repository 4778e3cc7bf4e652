//! The game file schema, as written by users and by `bellgap family`.
//!
//! Fields whose shape varies (a count or a list of labels; a named, tabulated, product or
//! formula distribution; constants that are numbers, expressions or tables; Bell tables) are
//! kept as YAML values here and interpreted by the compiler (`formats/game/compile/`), where each error can be
//! placed at its line and column.

use serde::{Deserialize, Serialize};
use serde_yaml::{Mapping, Value};

/// A game file as written: players, optional constants and distribution, and one of `win`, `score`
/// or `bell`. Formulas and tables stay YAML values here and are interpreted by the compiler, where
/// each error can be located.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GameSpec {
    /// Name of the game (default: the file name).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// One line about the game.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    /// Named numbers, expressions or (nested) tables usable in every formula, in file order: an
    /// expression may use the constants above it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub constants: Option<Mapping>,
    /// The players, in order.
    pub players: Vec<PlayerSpec>,
    /// `uniform`, `sum`, or a mapping with one of `table`, `product`, `proportional`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub distribution: Option<Value>,
    /// Win predicate over question and answer variables.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub win: Option<String>,
    /// Real-valued score over question and answer variables.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub score: Option<String>,
    /// A Bell expression given by coefficients (terms, Collins–Gisin table or correlator table).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bell: Option<Value>,
}

/// One player as written.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlayerSpec {
    /// The player's name.
    pub name: String,
    /// Variable name formulas use for this player's question.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub question: Option<String>,
    /// Variable name formulas use for this player's answer.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub answer: Option<String>,
    /// A count n (labels 0..n-1) or a list of distinct integer labels.
    pub questions: Value,
    /// A count or a list of answer labels.
    pub answers: Value,
}

impl PlayerSpec {
    /// A player with count-labelled questions and answers.
    pub fn counted(
        name: &str,
        question: &str,
        answer: &str,
        questions: usize,
        answers: usize,
    ) -> Self {
        PlayerSpec {
            name: name.to_string(),
            question: Some(question.to_string()),
            answer: Some(answer.to_string()),
            questions: Value::from(questions as u64),
            answers: Value::from(answers as u64),
        }
    }
}

impl GameSpec {
    /// Renders the game as YAML, as `bellgap family` prints it.
    /// Lists of numbers (tables, matrices, label lists) are written inline, one row per line
    /// at most, so generated files stay readable.
    pub fn to_yaml(&self) -> String {
        readable_yaml(&serde_yaml::to_value(self).expect("a game spec always serialises"))
    }
}

/// YAML for people: mappings in block style, lists of numbers inline (one row per line for
/// large tables), short mappings of plain scalars inline. Used for every file the tool writes.
pub fn readable_yaml(value: &Value) -> String {
    let mut out = String::new();
    match value {
        Value::Mapping(m) => emit_mapping(m, 0, false, &mut out),
        other => {
            out.push_str(&flow(other));
            out.push('\n');
        }
    }
    out
}

/// A scalar as serde_yaml would write it (quoted when needed), on one line.
fn scalar(v: &Value) -> String {
    serde_yaml::to_string(v)
        .unwrap_or_default()
        .trim_end()
        .to_string()
}

/// Whether a sequence holds only scalars or such sequences (then it is written inline).
fn is_flow(v: &Value) -> bool {
    match v {
        Value::Sequence(items) => items.iter().all(is_flow),
        Value::Mapping(_) | Value::Tagged(_) => false,
        _ => true,
    }
}

fn flow(v: &Value) -> String {
    match v {
        Value::Sequence(items) => {
            format!(
                "[{}]",
                items.iter().map(flow).collect::<Vec<_>>().join(", ")
            )
        }
        other => scalar(other),
    }
}

/// Scalars that read the same inside `{...}` (no flow indicators to quote).
fn flow_safe(v: &Value) -> bool {
    match v {
        Value::Number(_) | Value::Bool(_) => true,
        Value::String(s) => {
            !s.is_empty() && s.chars().all(|c| c.is_alphanumeric() || "|_-.".contains(c))
        }
        _ => false,
    }
}

fn inline_mapping(m: &Mapping) -> String {
    let parts: Vec<String> = m
        .iter()
        .map(|(k, v)| format!("{}: {}", scalar(k), scalar(v)))
        .collect();
    format!("{{{}}}", parts.join(", "))
}

fn emit_mapping(m: &Mapping, indent: usize, first_inline: bool, out: &mut String) {
    for (i, (k, v)) in m.iter().enumerate() {
        if !(first_inline && i == 0) {
            out.push_str(&" ".repeat(indent));
        }
        out.push_str(&scalar(k));
        out.push(':');
        emit_value(v, indent, out);
    }
}

/// Writes the value after `key:` (a space and an inline value, or a nested block).
fn emit_value(v: &Value, indent: usize, out: &mut String) {
    match v {
        Value::Mapping(m)
            if !m.is_empty() && m.values().all(flow_safe) && inline_mapping(m).len() < 60 =>
        {
            out.push(' ');
            out.push_str(&inline_mapping(m));
            out.push('\n');
        }
        Value::Mapping(m) if !m.is_empty() => {
            out.push('\n');
            emit_mapping(m, indent + 2, false, out);
        }
        Value::Sequence(items) if !is_flow(v) => {
            out.push('\n');
            for item in items {
                out.push_str(&" ".repeat(indent + 2));
                out.push_str("- ");
                match item {
                    Value::Mapping(m) if !m.is_empty() => emit_mapping(m, indent + 4, true, out),
                    other => {
                        out.push_str(&flow(other));
                        out.push('\n');
                    }
                }
            }
        }
        Value::Sequence(items) if items.len() > 8 && items.iter().any(|x| x.is_sequence()) => {
            // A large table: one row per line.
            out.push_str(" [\n");
            for (i, item) in items.iter().enumerate() {
                out.push_str(&" ".repeat(indent + 4));
                out.push_str(&flow(item));
                out.push_str(if i + 1 < items.len() { ",\n" } else { "\n" });
            }
            out.push_str(&" ".repeat(indent + 2));
            out.push_str("]\n");
        }
        other => {
            out.push(' ');
            out.push_str(&flow(other));
            out.push('\n');
        }
    }
}
