//! Optimisation, knowing nothing of games: linear programmes ([`lp`]), semidefinite programmes
//! ([`sdp`]), the verified bound from any dual vector ([`certify`]), and the SDP backends behind
//! one trait ([`backend`]): the moment-matrix interior-point method ([`moment_ipm`]) and clarabel
//! ([`clarabel`]). Swapping or adding a backend touches [`backend`] and the backend's own file.

pub mod backend;
pub mod certify;
pub mod clarabel;
pub mod lp;
pub mod moment_ipm;
pub mod sdp;

use serde::{Deserialize, Serialize};

/// How a solver run ended. The first three come with a point; the rest are failures, carried by
/// [`crate::Error::Solver`]. Serialised as the strings the JSON output has always used.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum SolveStatus {
    /// Optimal within the solver's full tolerances.
    #[serde(rename = "solved")]
    Solved,
    /// Optimal within relaxed tolerances only (the verified bound still holds: it is computed
    /// from the dual point with every residual charged).
    #[serde(rename = "almost solved")]
    AlmostSolved,
    /// Stopped by its time limit with a feasible point not proven optimal (an incumbent).
    #[serde(rename = "stopped at the time limit")]
    TimeLimit,
    /// Stopped by its iteration limit without an answer.
    #[serde(rename = "iteration limit")]
    IterationLimit,
    /// Made no more progress before reaching its tolerances.
    #[serde(rename = "stalled")]
    Stalled,
    /// The problem has no feasible point (as the solver judged it).
    #[serde(rename = "infeasible")]
    Infeasible,
    /// Any other failure (numerical trouble, bad settings).
    #[serde(rename = "failed")]
    Failed,
}

impl SolveStatus {
    /// The name used in JSON and text output.
    pub fn name(self) -> &'static str {
        match self {
            SolveStatus::Solved => "solved",
            SolveStatus::AlmostSolved => "almost solved",
            SolveStatus::TimeLimit => "stopped at the time limit",
            SolveStatus::IterationLimit => "iteration limit",
            SolveStatus::Stalled => "stalled",
            SolveStatus::Infeasible => "infeasible",
            SolveStatus::Failed => "failed",
        }
    }
}

impl std::fmt::Display for SolveStatus {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}
