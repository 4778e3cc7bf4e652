//! The `self-test` command's work: the target state resolved (typed, from a strategy file, or
//! from the see-saw's best strategy), the question labels turned into indices, and the verified
//! SWAP fidelity bound at the score.

use super::figures::{check_same_parties, region_of_correlations};
use super::Observer;
use crate::bounds::quantum::npa::Level;
use crate::bounds::quantum::seesaw::{seesaw, SeesawOptions};
use crate::bounds::quantum::selftest::{
    checked_target, fidelity_bound_given, target_from, FidelityBound, FidelityGiven,
    SelfTestOptions,
};
use crate::error::{Error, Result};
use crate::formats::game::Game;
use crate::model::correlations::Correlations;
use crate::model::counts::Counts;
use crate::model::scenario::Scenario;
use crate::model::strategy::QuantumStrategy;

/// Where the target state comes from.
#[derive(Debug, Clone)]
pub enum SelfTestTarget {
    /// The state the see-saw's best strategy (found with these options) extracts to.
    Seesaw(SeesawOptions),
    /// Four real amplitudes.
    Amplitudes(Vec<f64>),
    /// A strategy's extracted state (its name for the report).
    Strategy(QuantumStrategy, String),
}

/// What the fidelity bound is conditioned on.
#[derive(Debug, Clone)]
pub enum SelfTestGiven {
    /// Every quantum behaviour scoring at least this.
    Score(f64),
    /// A behaviour (a correlations file: with rounds, the confidence region of the counts they
    /// stand for; without, every behaviour within the typed tolerance).
    Behaviour(Correlations),
    /// A lab's counts: every quantum behaviour in their confidence region of this error.
    Counts(Counts, f64),
}

/// What the `self-test` command is asked.
#[derive(Debug, Clone)]
pub struct SelfTestRequest {
    /// What the bound is conditioned on.
    pub given: SelfTestGiven,
    /// The target.
    pub target: SelfTestTarget,
    /// Question labels: the first player's two, then the second's (default: the first two).
    pub questions: Option<Vec<i64>>,
    /// The NPA level (default [`crate::bounds::quantum::selftest::default_level`]).
    pub level: Option<Level>,
}

/// The `self-test` command's answer.
#[derive(Debug, Clone)]
pub struct SelfTestReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// The bound.
    pub bound: FidelityBound,
    /// What it is conditioned on, in words.
    pub given: String,
    /// Where the target came from, in words.
    pub target_from: String,
    /// The questions used, by label, per player.
    pub questions: [[i64; 2]; 2],
    /// What the bound assumes.
    pub assumptions: Vec<String>,
}

/// The assumptions of a fidelity bound.
pub fn self_test_assumptions() -> Vec<String> {
    vec![
        "the devices are quantum, with the players' measurements commuting, and every round is the same (i.i.d.): the bound is about the state of one round".to_string(),
        "the fidelity is that of the state extracted by each player's partial SWAP isometry built from the two chosen measurements, with the target; the bound holds for every quantum behaviour scoring at least the score".to_string(),
        "a score estimated from finitely many rounds needs its own confidence statement (use the lower confidence score from `margin`)".to_string(),
    ]
}

/// Per player, the two questions of the SWAP construction (indices, or labels).
type QuestionPairs<T> = [[T; 2]; 2];

fn question_indices(
    s: &Scenario,
    labels: Option<&Vec<i64>>,
) -> Result<(QuestionPairs<usize>, QuestionPairs<i64>)> {
    if s.players() != 2 {
        return Err(Error::InvalidArgument(format!(
            "self-testing is for two-player games ({} players here)",
            s.players()
        )));
    }
    let mut indices = [[0, 1], [0, 1]];
    let mut names = [[0i64; 2]; 2];
    for (p, party) in s.parties().iter().enumerate() {
        if party.questions() < 2 {
            return Err(Error::InvalidArgument(format!(
                "{} has one question: the SWAP construction needs two",
                party.name
            )));
        }
        for k in 0..2 {
            let index = match labels {
                None => k,
                Some(l) => {
                    if l.len() != 4 {
                        return Err(Error::InvalidArgument(format!(
                            "--questions needs four labels (two per player), found {}",
                            l.len()
                        )));
                    }
                    let label = l[2 * p + k];
                    party
                        .question_labels
                        .iter()
                        .position(|&q| q == label)
                        .ok_or_else(|| {
                            Error::InvalidArgument(format!(
                                "--questions: {} has no question {label}",
                                party.name
                            ))
                        })?
                }
            };
            indices[p][k] = index;
            names[p][k] = party.question_labels[index];
        }
    }
    Ok((indices, names))
}

/// The `self-test` command.
pub fn self_test<'a>(
    game: &'a Game,
    request: &SelfTestRequest,
    _observer: &dyn Observer,
) -> Result<SelfTestReport<'a>> {
    let s = &game.scenario;
    let (questions, labels) = question_indices(s, request.questions.as_ref())?;
    let (target, target_from) = match &request.target {
        SelfTestTarget::Amplitudes(a) => (checked_target(a)?, "given".to_string()),
        SelfTestTarget::Strategy(st, name) => {
            st.check(s)
                .map_err(|e| Error::InvalidArgument(format!("the strategy `{name}`: {e}")))?;
            (
                target_from(s, &st.made_valid(), &questions)?,
                format!("the state the strategy `{name}` extracts to"),
            )
        }
        SelfTestTarget::Seesaw(options) => {
            let found = seesaw(s, options, None)?;
            (
                target_from(s, &found.strategy, &questions)?,
                format!(
                    "the state the see-saw's best strategy (value ≥ {}, dims {:?}) extracts to",
                    crate::numbers::num(found.quantum_lower),
                    found.dims
                ),
            )
        }
    };
    let (given, described) = match &request.given {
        SelfTestGiven::Score(v) => (
            FidelityGiven::Score(*v),
            format!(
                "every quantum behaviour scoring at least {}",
                crate::numbers::num(*v)
            ),
        ),
        SelfTestGiven::Behaviour(c) => {
            let (region, text) = region_of_correlations(s, c)?;
            (FidelityGiven::Region(region), text)
        }
        SelfTestGiven::Counts(counts, error) => {
            check_same_parties(s, &counts.parties, &counts.name)?;
            if !(*error > 0.0 && *error < 1.0) {
                return Err(Error::InvalidArgument(format!(
                    "the error probability must lie strictly between 0 and 1, got {error}"
                )));
            }
            let region = counts.confidence_region(*error)?;
            let text = region.description.clone();
            (FidelityGiven::Region(region), text)
        }
    };
    let bound = fidelity_bound_given(
        s,
        &given,
        &target,
        &SelfTestOptions {
            questions,
            level: request.level.clone(),
            ..Default::default()
        },
    )?;
    Ok(SelfTestReport {
        game,
        bound,
        given: described,
        target_from,
        questions: labels,
        assumptions: self_test_assumptions(),
    })
}
