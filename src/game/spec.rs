//! The game file schema, as written by users and by `bellgap family`.
//!
//! Fields whose shape varies (a count or a list of labels; a named, tabulated, product or
//! formula distribution; constants that are numbers, expressions or tables; Bell tables) are
//! kept as YAML values here and interpreted in [`super::compile`], where each error can be
//! placed at its line and column.

use serde::{Deserialize, Serialize};
use serde_yaml::{Mapping, Value};

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GameSpec {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    /// Named numbers, expressions or (nested) tables usable in every formula, in file order: an
    /// expression may use the constants above it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub constants: Option<Mapping>,
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

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlayerSpec {
    pub name: String,
    /// Variable name formulas use for this player's question.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub question: Option<String>,
    /// Variable name formulas use for this player's answer.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub answer: Option<String>,
    /// A count n (labels 0..n-1) or a list of distinct integer labels.
    pub questions: Value,
    pub answers: Value,
}

impl PlayerSpec {
    /// A player with count-labelled questions and answers.
    pub fn counted(name: &str, question: &str, answer: &str, questions: usize, answers: usize) -> Self {
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
    pub fn to_yaml(&self) -> String {
        serde_yaml::to_string(self).expect("a game spec always serialises")
    }
}
