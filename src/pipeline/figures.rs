//! The commands that read an observation, a certificate or correlations: `margin`,
//! `randomness`, `key`, `verify` and `local`.

use super::{classical_observed, Observer};
use crate::bounds::classical::locality::{locality_test, LocalityReport};
use crate::bounds::classical::{classical_value, ClassicalOptions};
use crate::bounds::quantum::npa::{self, Level, Verification};
use crate::error::{Error, Result};
use crate::formats::certificate::Certificate;
use crate::formats::game::Game;
use crate::limits::Limits;
use crate::model::correlations::Correlations;
use crate::model::scenario::Scenario;
use crate::protocol::finite::{self, Margin, ObservedRun};
use crate::protocol::key::{chsh_threshold_qber, key_rate, ChshEntropyBound, KeyRate};
use crate::protocol::randomness::{guessing_probability, Randomness, Target};

/// Options of [`margin`].
#[derive(Debug, Clone, Copy)]
pub struct MarginOptions {
    /// Error probability of the confidence bounds (default 1e-6).
    pub alpha: f64,
    /// p-value to reach when computing the rounds needed (default 1e-9).
    pub target_p_value: f64,
    /// Expected mean score for the rounds needed (default: the observed mean).
    pub expected: Option<f64>,
    /// How the classical value is computed.
    pub classical: ClassicalOptions,
}

impl Default for MarginOptions {
    fn default() -> Self {
        MarginOptions {
            alpha: 1e-6,
            target_p_value: 1e-9,
            expected: None,
            classical: ClassicalOptions::default(),
        }
    }
}

/// What an observed run certifies (the `margin` command).
#[derive(Debug, Clone)]
pub struct MarginReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Confidence bounds, margin, p-value and rounds needed.
    pub margin: Margin,
}

/// The `margin` command: the run checked against the game, then its figures against the exact
/// classical value.
pub fn margin<'a>(
    game: &'a Game,
    run: &ObservedRun,
    options: &MarginOptions,
    observer: &dyn Observer,
) -> Result<MarginReport<'a>> {
    let obs = finite::observation(&game.scenario, run)?;
    let classical = classical_observed(
        &game.scenario,
        &options.classical,
        observer,
        classical_value,
    )?
    .value;
    let margin = finite::margin(
        &obs,
        classical,
        options.alpha,
        options.target_p_value,
        options.expected,
    )?;
    Ok(MarginReport { game, margin })
}

/// A player and question chosen by name and label (defaults: the first player or the given
/// default, and the player's first question).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TargetChoice {
    /// The player's name.
    pub player: Option<String>,
    /// The question's label.
    pub question: Option<i64>,
}

impl TargetChoice {
    /// The (player, question index) pair this choice names in `s`.
    fn resolve(&self, s: &Scenario, default_player: usize) -> Result<(usize, usize)> {
        let p = match &self.player {
            Some(n) => s
                .parties()
                .iter()
                .position(|p| &p.name == n)
                .ok_or_else(|| Error::InvalidArgument(format!("there is no player `{n}`")))?,
            None => default_player,
        };
        let party = s
            .parties()
            .get(p)
            .ok_or_else(|| Error::InvalidArgument(format!("there is no player number {p}")))?;
        let x = match self.question {
            Some(l) => party
                .question_labels
                .iter()
                .position(|&k| k == l)
                .ok_or_else(|| {
                    Error::InvalidArgument(format!("{} has no question {l}", party.name))
                })?,
            None => 0,
        };
        Ok((p, x))
    }
}

/// Options of [`randomness`].
#[derive(Debug, Clone)]
pub struct RandomnessOptions {
    /// Whose answer is guessed (default: the first player's answer to its first question).
    pub guessed: TargetChoice,
    /// A second player's answer guessed together with the first (the pair of answers).
    pub with: Option<TargetChoice>,
    /// The scores (one, or a sweep).
    pub scores: Vec<f64>,
    /// NPA level of the relaxation (default 2).
    pub level: Level,
}

impl Default for RandomnessOptions {
    fn default() -> Self {
        RandomnessOptions {
            guessed: TargetChoice::default(),
            with: None,
            scores: Vec::new(),
            level: Level::Length(2),
        }
    }
}

/// Certified randomness at one or more scores (the `randomness` command).
#[derive(Debug, Clone)]
pub struct RandomnessReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Whose answers are guessed.
    pub target: Target,
    /// The guessed answers in words, e.g. `alice (question 0)`.
    pub target_name: String,
    /// One result per score that could be certified, in order.
    pub results: Vec<Randomness>,
    /// Scores of a sweep that could not be certified, with the reason.
    pub not_obtained: Vec<String>,
}

/// The `randomness` command. In a sweep, a score that cannot be certified (e.g. above the
/// quantum maximum) is listed and the sweep goes on; a single score that fails is an error.
pub fn randomness<'a>(game: &'a Game, options: &RandomnessOptions) -> Result<RandomnessReport<'a>> {
    let s = &game.scenario;
    let mut parts = vec![options.guessed.resolve(s, 0)?];
    if let Some(with) = &options.with {
        parts.push(with.resolve(s, 1)?);
    }
    let target = Target { parts };
    if options.scores.is_empty() {
        return Err(Error::InvalidArgument("no score given".into()));
    }
    let mut results = Vec::new();
    let mut not_obtained = Vec::new();
    for &v in &options.scores {
        match guessing_probability(s, &target, v, &options.level) {
            Ok(r) => results.push(r),
            Err(e) if options.scores.len() > 1 && !matches!(e, Error::TooLarge { .. }) => {
                not_obtained.push(format!("score {v}: {e}"))
            }
            Err(e) => return Err(e),
        }
    }
    if results.is_empty() {
        return Err(Error::InvalidArgument(format!(
            "no score of the sweep could be certified: {}",
            not_obtained.join("; ")
        )));
    }
    let target_name = target
        .parts
        .iter()
        .map(|&(p, x)| {
            format!(
                "{} (question {})",
                s.parties()[p].name,
                s.parties()[p].question_labels[x]
            )
        })
        .collect::<Vec<_>>()
        .join(" and ");
    Ok(RandomnessReport {
        game,
        target,
        target_name,
        results,
        not_obtained,
    })
}

/// CHSH key figures (the `key` command).
#[derive(Debug, Clone)]
pub struct KeyReport {
    /// Entropy and key rate at the given S and QBER.
    pub rate: KeyRate,
    /// The QBER at which the key rate of the optimal CHSH devices under depolarising noise
    /// reaches zero.
    pub threshold_qber: f64,
}

/// The `key` command: the analytic CHSH bound at correlator value `chsh` and error rate `qber`.
pub fn key(chsh: f64, qber: f64) -> Result<KeyReport> {
    Ok(KeyReport {
        rate: key_rate(&ChshEntropyBound, chsh, qber)?,
        threshold_qber: chsh_threshold_qber(),
    })
}

/// A certificate re-checked (the `verify` command).
#[derive(Debug, Clone)]
pub struct VerifyReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Where the certificate came from.
    pub certificate: String,
    /// The recomputed bound.
    pub verification: Verification,
}

/// The `verify` command: recompute the bound a certificate proves, without any solver.
pub fn verify<'a>(
    game: &'a Game,
    certificate: &Certificate,
    source: &str,
    limits: &Limits,
) -> Result<VerifyReport<'a>> {
    let verification =
        npa::verify(&game.scenario, certificate, limits).map_err(|e| e.in_file(source))?;
    Ok(VerifyReport {
        game,
        certificate: source.to_string(),
        verification,
    })
}

/// A locality test (the `local` command).
#[derive(Debug, Clone)]
pub struct LocalReport {
    /// The correlations' name.
    pub name: String,
    /// The test's outcome.
    pub test: LocalityReport,
}

/// The `local` command.
pub fn local(correlations: &Correlations, limits: &Limits) -> Result<LocalReport> {
    Ok(LocalReport {
        name: correlations.name.clone(),
        test: locality_test(correlations, limits)?,
    })
}
