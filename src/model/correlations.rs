//! Correlations `p(answers | questions)` as measured or as claimed, in the scenario's layout.
//! Reading them from a file is [`crate::formats::correlations`]'s job.

use super::scenario::{Party, Scenario, ScoreKind};

/// Correlations `p(a|q)` for every joint question, in the scenario's layout.
#[derive(Debug, Clone)]
pub struct Correlations {
    /// Name for reports (the file name when the file gives none).
    pub name: String,
    /// Players with their question and answer labels.
    pub parties: Vec<Party>,
    /// `p[q * joint_answers + a]`.
    pub p: Vec<f64>,
    /// Rounds behind each joint question's row, when the file gives them (measured data).
    pub rounds: Option<Vec<u64>>,
}

impl Correlations {
    /// A scenario with these parties and a zero table, for shared indexing helpers.
    pub fn scenario_shape(&self) -> Scenario {
        let nq: usize = self.parties.iter().map(Party::questions).product();
        let na: usize = self.parties.iter().map(Party::answers).product();
        Scenario::from_parts(
            self.parties.clone(),
            vec![1.0; nq],
            vec![0.0; nq * na],
            0.0,
            ScoreKind::Score,
        )
    }
}
