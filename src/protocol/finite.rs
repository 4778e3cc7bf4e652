//! Finite statistics: what an observed score over n rounds certifies.
//!
//! Assumptions are stated with each figure. Bounds for i.i.d. rounds: Hoeffding's lower
//! confidence bound and the exact binomial (Clopper–Pearson) bound. The p-value of the
//! hypothesis "a classical strategy played every round" is the Azuma–Hoeffding bound for the
//! martingale of per-round scores, which stays valid when the devices adapt their strategy to
//! earlier rounds (each round's conditional expectation is at most the classical value).

use serde::Serialize;

use crate::error::{Error, Result};
use crate::stats::clopper_pearson_lower;

use crate::model::counts::{Counts, ScoreEstimate};
use crate::model::scenario::{Scenario, ScoreKind};

/// Observed data: the number of rounds and the sum of per-round scores, each in [low, high]
/// (for a game: wins, with scores in [0, 1]).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Observation {
    /// Rounds played.
    pub rounds: u64,
    /// Sum of the per-round scores.
    pub score_sum: f64,
    /// Smallest possible per-round score.
    pub low: f64,
    /// Largest possible per-round score.
    pub high: f64,
    /// Whether scores are 0/1 (then the exact binomial bound applies).
    pub binary: bool,
}

/// What an observation certifies against the classical value.
#[derive(Debug, Clone, Serialize)]
pub struct Margin {
    /// Rounds played.
    pub rounds: u64,
    /// Observed mean score per round.
    pub observed_mean: f64,
    /// The error probability α of the confidence bounds (confidence 1 − α).
    pub alpha: f64,
    /// Hoeffding lower confidence bound on the per-round expected score (i.i.d. rounds).
    pub lower_confidence: f64,
    /// Exact binomial (Clopper–Pearson) lower confidence bound, for win/lose scores.
    pub lower_confidence_exact: Option<f64>,
    /// The one lower confidence bound every figure of a report uses: the exact binomial bound
    /// for win/lose scores (never below Hoeffding's, and exact), Hoeffding's otherwise.
    pub certified_score: f64,
    /// The method of `certified_score`, named in every row that uses it.
    pub confidence_method: &'static str,
    /// The per-round score range the bounds use (the game's own, from
    /// [`Scenario::per_round_score_range`], or a wider one the user gave).
    pub score_range: [f64; 2],
    /// The classical value.
    pub classical: f64,
    /// `certified_score − classical`: positive when the data certify a score above every
    /// classical strategy at confidence 1 − α.
    pub margin: f64,
    /// Probability that a classical strategy (adaptive or not) scores at least this much.
    pub p_value: f64,
    /// log₁₀ of `p_value` (useful when it underflows to 0).
    pub p_value_log10: f64,
    /// Which bound gives `p_value`.
    pub p_value_bound: &'static str,
    /// Rounds needed for `p_value ≤ target_p_value` if the devices score `expected_mean` on
    /// average (None when that is not above the classical value).
    pub rounds_needed: Option<u64>,
    /// The p-value the rounds needed aim at.
    pub target_p_value: f64,
    /// The mean score the rounds needed assume.
    pub expected_mean: f64,
    /// Where that mean comes from: `observed` (the run's mean) or `expected` (given).
    pub expected_from: &'static str,
    /// The assumptions behind these figures, in words.
    pub assumptions: Vec<&'static str>,
}

/// What the user reported of a run, before it is checked against the game.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct ObservedRun {
    /// Rounds played.
    pub rounds: u64,
    /// Rounds won (a game with win/lose scores only).
    pub wins: Option<u64>,
    /// Sum of the per-round scores (a Bell expression or a scored game).
    pub score_sum: Option<f64>,
    /// The per-round score range the user vouches for; the game's own range when absent.
    pub score_range: Option<(f64, f64)>,
}

/// Turns a reported run into an [`Observation`] after checking it against the game: wins only
/// for a win/lose game whose question weights are probabilities; a score sum that is finite;
/// a score range that is finite and contains the game's own per-round range
/// ([`Scenario::per_round_score_range`]), since Hoeffding's and Azuma's bounds are false for
/// scores outside the range they are given. A wider range is valid (only looser).
pub fn observation(s: &Scenario, run: &ObservedRun) -> Result<Observation> {
    if run.rounds == 0 {
        return Err(Error::InvalidArgument(
            "the number of rounds must be positive".into(),
        ));
    }
    let (game_lo, game_hi) = s.per_round_score_range();
    match (run.wins, run.score_sum) {
        (Some(w), None) => {
            if s.kind() != ScoreKind::Win || !s.weights_are_probabilities() {
                return Err(Error::InvalidArgument(
                    "wins apply to a game with a win predicate and a question distribution; for a Bell expression or a score give the score sum".into(),
                ));
            }
            if w > run.rounds {
                return Err(Error::InvalidArgument(format!(
                    "{w} wins in {} rounds",
                    run.rounds
                )));
            }
            if run.score_range.is_some() {
                return Err(Error::InvalidArgument(
                    "a score range goes with a score sum, not with wins".into(),
                ));
            }
            Ok(Observation {
                rounds: run.rounds,
                score_sum: w as f64,
                low: 0.0,
                high: 1.0,
                binary: true,
            })
        }
        (None, Some(sum)) => {
            if !sum.is_finite() {
                return Err(Error::InvalidArgument(format!(
                    "the score sum must be a finite number, got {sum}"
                )));
            }
            let (lo, hi) = run.score_range.unwrap_or((game_lo, game_hi));
            if !lo.is_finite() || !hi.is_finite() {
                return Err(Error::InvalidArgument(format!(
                    "the score range must be finite, got [{lo}, {hi}]"
                )));
            }
            let slack = 1e-9 * (1.0 + game_lo.abs().max(game_hi.abs()));
            if lo > game_lo + slack || hi < game_hi - slack {
                return Err(Error::InvalidArgument(format!(
                    "the score range [{lo}, {hi}] does not contain the game's per-round score range [{game_lo}, {game_hi}]: the confidence bounds and p-value would not hold"
                )));
            }
            if hi <= lo {
                return Err(Error::InvalidArgument(format!(
                    "the score range [{lo}, {hi}] is empty: every round scores {lo}, so nothing can be certified"
                )));
            }
            Ok(Observation {
                rounds: run.rounds,
                score_sum: sum,
                low: lo,
                high: hi,
                binary: false,
            })
        }
        (Some(_), Some(_)) => Err(Error::InvalidArgument(
            "give either wins or a score sum, not both".into(),
        )),
        (None, None) => Err(Error::InvalidArgument(
            "give the wins (a game) or the score sum (a Bell expression)".into(),
        )),
    }
}

/// The rounds after which devices scoring `gap` above the classical value on average reach an
/// Azuma–Hoeffding p-value of `target_p_value` (per-round range `width`): ⌈ln(1/p)·width²/(2
/// gap²)⌉. None when there is no advantage, or when the count exceeds u64 (reported as "not
/// reachable" rather than saturated).
pub fn rounds_needed(width: f64, gap: f64, target_p_value: f64) -> Option<u64> {
    (gap > 0.0)
        .then(|| ((1.0 / target_p_value).ln() * width * width / (2.0 * gap * gap)).ceil())
        .filter(|r| r.is_finite() && *r < u64::MAX as f64)
        .map(|r| r as u64)
}

/// The observation of a run given as counts: the per-round estimator of
/// [`Counts::score_estimate`] (wins when the game is win/lose under its own distribution, so the
/// exact binomial bound applies), with the estimator's own range.
pub fn observation_of_counts(
    s: &Scenario,
    counts: &Counts,
) -> Result<(Observation, ScoreEstimate)> {
    let e = counts.score_estimate(s)?;
    let (low, high) = e.range;
    if high.partial_cmp(&low) != Some(std::cmp::Ordering::Greater) {
        return Err(Error::InvalidArgument(format!(
            "every round of the counts `{}` scores {low}: nothing can be certified",
            counts.name
        )));
    }
    Ok((
        Observation {
            rounds: e.rounds,
            score_sum: e.wins.map_or(e.score_sum, |w| w as f64),
            low: if e.wins.is_some() { 0.0 } else { low },
            high: if e.wins.is_some() { 1.0 } else { high },
            binary: e.wins.is_some(),
        },
        e,
    ))
}

/// Hoeffding's lower confidence bound on the per-round expected score (Hoeffding 1963:
/// P(mean − E ≥ t) ≤ exp(−2 n t² / width²)), and for 0/1 scores the exact binomial
/// (Clopper–Pearson) one; i.i.d. rounds, error `alpha`.
pub fn lower_confidence_bounds(obs: &Observation, alpha: f64) -> (f64, Option<f64>) {
    let n = obs.rounds as f64;
    let mean = obs.score_sum / n;
    let width = obs.high - obs.low;
    let hoeffding_t = width * ((1.0 / alpha).ln() / (2.0 * n)).sqrt();
    let exact = obs.binary.then(|| {
        let wins = obs.score_sum.round() as u64;
        clopper_pearson_lower(obs.rounds, wins, alpha)
    });
    (mean - hoeffding_t, exact)
}

/// The one lower confidence bound a report uses, with its method's name: the exact binomial
/// bound for 0/1 scores, Hoeffding's otherwise.
pub fn certified_lower_confidence(obs: &Observation, alpha: f64) -> (f64, &'static str) {
    match lower_confidence_bounds(obs, alpha) {
        (_, Some(exact)) => (exact, "Clopper–Pearson"),
        (hoeffding, None) => (hoeffding, "Hoeffding"),
    }
}

/// Margins, p-value and rounds needed for an observation against a classical value.
pub fn margin(
    obs: &Observation,
    classical: f64,
    alpha: f64,
    target_p_value: f64,
    expected_mean: Option<f64>,
) -> Result<Margin> {
    if obs.rounds == 0 {
        return Err(Error::InvalidArgument(
            "the number of rounds must be positive".into(),
        ));
    }
    if !obs.score_sum.is_finite() || !obs.low.is_finite() || !obs.high.is_finite() {
        return Err(Error::InvalidArgument(
            "the score sum and range must be finite numbers".into(),
        ));
    }
    if !classical.is_finite() || classical < obs.low || classical > obs.high {
        return Err(Error::InvalidArgument(format!(
            "the classical value {classical} lies outside the score range [{}, {}]",
            obs.low, obs.high
        )));
    }
    if let Some(e) = expected_mean {
        if !e.is_finite() || e < obs.low || e > obs.high {
            return Err(Error::InvalidArgument(format!(
                "the expected mean score {e} lies outside the score range [{}, {}]",
                obs.low, obs.high
            )));
        }
    }
    if obs.high.partial_cmp(&obs.low) != Some(std::cmp::Ordering::Greater) {
        return Err(Error::InvalidArgument(format!(
            "the score range [{}, {}] is empty",
            obs.low, obs.high
        )));
    }
    let open_unit = |v: f64| v > 0.0 && v < 1.0;
    if !open_unit(alpha) || !open_unit(target_p_value) {
        return Err(Error::InvalidArgument(
            "error probabilities must lie strictly between 0 and 1".into(),
        ));
    }
    let n = obs.rounds as f64;
    let mean = obs.score_sum / n;
    if mean < obs.low - 1e-12 || mean > obs.high + 1e-12 {
        return Err(Error::InvalidArgument(format!(
            "the mean score {mean} lies outside the score range [{}, {}]",
            obs.low, obs.high
        )));
    }
    let width = obs.high - obs.low;
    let (lower_confidence, lower_confidence_exact) = lower_confidence_bounds(obs, alpha);
    // Azuma–Hoeffding for the martingale of per-round scores under any classical (adaptive)
    // strategy: P(sum ≥ observed) ≤ exp(−2 n (mean − classical)² / width²).
    let excess = mean - classical;
    let exponent = if excess <= 0.0 {
        0.0
    } else {
        -2.0 * n * excess * excess / (width * width)
    };
    let p_value = exponent.exp();
    let p_value_log10 = exponent / std::f64::consts::LN_10;
    let expected_from = if expected_mean.is_some() {
        "expected"
    } else {
        "observed"
    };
    let expected_mean = expected_mean.unwrap_or(mean);
    let rounds_needed = rounds_needed(width, expected_mean - classical, target_p_value);
    let (certified_score, confidence_method) = certified_lower_confidence(obs, alpha);
    Ok(Margin {
        rounds: obs.rounds,
        observed_mean: mean,
        alpha,
        lower_confidence,
        lower_confidence_exact,
        certified_score,
        confidence_method,
        score_range: [obs.low, obs.high],
        classical,
        margin: certified_score - classical,
        p_value,
        p_value_log10,
        p_value_bound: "Azuma–Hoeffding, valid for adaptive strategies",
        rounds_needed,
        target_p_value,
        expected_mean,
        expected_from,
        assumptions: vec![
            "the lower confidence bounds (Hoeffding, Clopper–Pearson) assume independent, identically distributed rounds",
            "the p-value holds for any classical strategy, including one that adapts to earlier rounds, if each round's questions are drawn afresh from the game's distribution",
            "the rounds needed assume the devices' mean score equals the expected mean and use the same Azuma–Hoeffding bound",
        ],
    })
}
