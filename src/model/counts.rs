//! A lab's counts: for each joint question, the rounds it was asked and how often each joint
//! answer came out (no-clicks already binned into the answer the file names). Reading them from
//! a file is [`crate::formats::counts`]'s job.
//!
//! Two things are made from counts, each valid for i.i.d. rounds:
//! - the per-round score estimator whose mean is the game's value ([`Counts::score_estimate`]),
//!   under the game's question distribution or, when the file states the lab's own question
//!   probabilities λ(q), with importance weights w(q)/λ(q) whose range enters the bound;
//! - a confidence region for the behaviour ([`Counts::confidence_region`]): a two-sided
//!   Clopper–Pearson interval for every probability p(a|q) (each count is binomial given its
//!   question's rounds), each at error ε/(2K) per side for the K probabilities, so that by the
//!   union bound the true behaviour lies in the region except with probability at most ε.

use serde::Serialize;

use super::correlations::Correlations;
use super::region::BehaviourRegion;
use super::scenario::{Party, Scenario, ScoreKind};
use crate::error::{Error, Result};
use crate::stats::clopper_pearson_lower;

/// Counts `n(a|q)` for every joint question, in the scenario's layout.
#[derive(Debug, Clone)]
pub struct Counts {
    /// Name for reports (the file name when the file gives none).
    pub name: String,
    /// Players with their question and answer labels (after binning no-clicks).
    pub parties: Vec<Party>,
    /// Rounds in which each joint question was asked.
    pub rounds: Vec<u64>,
    /// `counts[q * joint_answers + a]`.
    pub counts: Vec<u64>,
    /// The lab's probability of asking each joint question, when the file states it (else the
    /// game's distribution is assumed).
    pub design: Option<Vec<f64>>,
    /// Per player: the answer index its no-clicks were binned into, if it had any.
    pub no_click: Vec<Option<usize>>,
}

/// The per-round score estimator of a run and its sum.
#[derive(Debug, Clone, Serialize)]
pub struct ScoreEstimate {
    /// Rounds in all.
    pub rounds: u64,
    /// Σ over rounds of the estimator.
    pub score_sum: f64,
    /// The estimator's range, [min, max] over every question asked and answer.
    pub range: (f64, f64),
    /// Rounds won, for a win/lose game under its own question distribution (the exact
    /// binomial bound applies).
    pub wins: Option<u64>,
    /// The estimator in words, for reports.
    pub estimator: String,
}

impl Counts {
    /// Rounds in all.
    pub fn total_rounds(&self) -> u64 {
        self.rounds.iter().sum()
    }

    /// Joint answers per joint question.
    fn joint_answers(&self) -> usize {
        self.parties.iter().map(Party::answers).product()
    }

    /// The observed frequencies `n(a|q)/n(q)`.
    pub fn frequencies(&self) -> Vec<f64> {
        let na = self.joint_answers();
        self.counts
            .iter()
            .enumerate()
            .map(|(k, &c)| c as f64 / self.rounds[k / na] as f64)
            .collect()
    }

    /// The counts that measured frequencies with their rounds stand for: each frequency times
    /// its row's rounds, rounded (a row's rounds become its rounded counts' sum, at least 1).
    /// The caller widens the region by the rounding (see `entropy --behaviour`).
    pub fn of_measured(c: &Correlations) -> Result<Counts> {
        let Some(rounds) = &c.rounds else {
            return Err(Error::InvalidArgument(format!(
                "the correlations `{}` state no rounds: they are not measured counts",
                c.name
            )));
        };
        let na: usize = c.parties.iter().map(Party::answers).product();
        let counts: Vec<u64> =
            c.p.iter()
                .enumerate()
                .map(|(k, &p)| (p * rounds[k / na] as f64).round().max(0.0) as u64)
                .collect();
        Ok(Counts {
            name: c.name.clone(),
            parties: c.parties.clone(),
            rounds: (0..rounds.len())
                .map(|q| counts[q * na..(q + 1) * na].iter().sum::<u64>().max(1))
                .collect(),
            counts,
            design: None,
            no_click: vec![None; c.parties.len()],
        })
    }

    /// The observed frequencies as correlations, with the rounds behind each row.
    pub fn as_correlations(&self) -> Correlations {
        Correlations {
            name: self.name.clone(),
            parties: self.parties.clone(),
            p: self.frequencies(),
            rounds: Some(self.rounds.clone()),
        }
    }

    /// The confidence region (module notes): the true behaviour lies outside it with probability
    /// at most `error`, for i.i.d. rounds.
    pub fn confidence_region(&self, error: f64) -> Result<BehaviourRegion> {
        if !(error > 0.0 && error < 1.0) {
            return Err(Error::InvalidArgument(format!(
                "the confidence region's error must lie strictly between 0 and 1, got {error}"
            )));
        }
        let na = self.joint_answers();
        let k = self.counts.len() as f64;
        let per_side = error / (2.0 * k);
        let mut lower = Vec::with_capacity(self.counts.len());
        let mut upper = Vec::with_capacity(self.counts.len());
        for (i, &c) in self.counts.iter().enumerate() {
            let n = self.rounds[i / na];
            lower.push(clopper_pearson_lower(n, c, per_side));
            upper.push(1.0 - clopper_pearson_lower(n, n - c, per_side));
        }
        Ok(BehaviourRegion {
            centre: self.frequencies(),
            lower,
            upper,
            error,
            description: format!(
                "every behaviour in the {}-confidence region of the counts `{}` (two-sided Clopper–Pearson intervals for each of the {} probabilities, union bound; i.i.d. rounds)",
                1.0 - error,
                self.name,
                self.counts.len()
            ),
        })
    }

    /// The per-round estimator of the game's value and its sum over the run (module notes):
    /// `offset + w(q)/λ(q)·V(a|q)` in a round that asked q and got a, with λ the lab's question
    /// probabilities (the game's own, w/W, when the file states none).
    pub fn score_estimate(&self, s: &Scenario) -> Result<ScoreEstimate> {
        let weights = s.weights();
        let na = s.joint_answers();
        if weights.len() != self.rounds.len() || self.counts.len() != weights.len() * na {
            return Err(Error::InvalidArgument(format!(
                "the counts `{}` do not have the game's shape",
                self.name
            )));
        }
        let total: f64 = weights.iter().sum();
        let scores = s.scores();
        let mut range = (f64::INFINITY, f64::NEG_INFINITY);
        let mut sum = 0.0;
        for (q, &w) in weights.iter().enumerate() {
            let lambda = match &self.design {
                Some(d) => d[q],
                None => w / total,
            };
            if self.rounds[q] > 0 && lambda <= 0.0 {
                return Err(Error::InvalidArgument(format!(
                    "joint question {q} was asked {} times but its stated probability is 0",
                    self.rounds[q]
                )));
            }
            // A question never asked contributes no rounds (without a design, λ = 0 iff w = 0).
            if lambda <= 0.0 {
                continue;
            }
            let factor = w / lambda;
            for a in 0..na {
                let x = s.offset() + factor * scores[q * na + a];
                range = (range.0.min(x), range.1.max(x));
                sum += x * self.counts[q * na + a] as f64;
            }
        }
        if range.0 > range.1 {
            return Err(Error::InvalidArgument(
                "no question of the game was asked".into(),
            ));
        }
        // Win/lose with the game's own distribution: the estimator is 0 or 1 per round.
        let binary = s.kind() == ScoreKind::Win
            && s.weights_are_probabilities()
            && self.design.is_none()
            && s.offset() == 0.0;
        let wins = binary.then(|| {
            (0..self.counts.len())
                .filter(|&k| scores[k] == 1.0 && weights[k / na] > 0.0)
                .map(|k| self.counts[k])
                .sum()
        });
        Ok(ScoreEstimate {
            rounds: self.total_rounds(),
            score_sum: sum,
            range,
            wins,
            estimator: match &self.design {
                None => "the score of each round, questions drawn from the game's distribution"
                    .into(),
                Some(_) => "the score of each round weighted by w(q)/λ(q) (importance weights: the game's question weight over the lab's stated probability), whose range enters the bounds".into(),
            },
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::{families, Game};

    fn chsh_counts(game: &Game, rows: [[u64; 4]; 4]) -> Counts {
        Counts {
            name: "t".into(),
            parties: game.scenario.parties().to_vec(),
            rounds: rows.iter().map(|r| r.iter().sum()).collect(),
            counts: rows.iter().flatten().copied().collect(),
            design: None,
            no_click: vec![None, None],
        }
    }

    #[test]
    fn the_estimator_counts_wins_and_the_region_holds_the_frequencies() {
        let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
        let c = chsh_counts(
            &game,
            [
                [40, 10, 10, 40],
                [40, 10, 10, 40],
                [40, 10, 10, 40],
                [10, 40, 40, 10],
            ],
        );
        let e = c.score_estimate(&game.scenario).unwrap();
        assert_eq!(e.rounds, 400);
        assert_eq!(e.wins, Some(320));
        assert!((e.score_sum - 320.0).abs() < 1e-12);
        assert_eq!(e.range, (0.0, 1.0));
        let r = c.confidence_region(1e-3).unwrap();
        assert!(r.contains(&c.frequencies()));
        // Each interval is the two-sided Clopper–Pearson interval at 1e-3/32 per side.
        let lo = clopper_pearson_lower(100, 40, 1e-3 / 32.0);
        assert!((r.lower[0] - lo).abs() < 1e-15);
        let hi = 1.0 - clopper_pearson_lower(100, 60, 1e-3 / 32.0);
        assert!((r.upper[0] - hi).abs() < 1e-15);
        assert!(r.lower[0] < 0.4 && r.upper[0] > 0.4 && r.upper[0] < 0.7);
        // A zero count's upper end has the closed form 1 − (ε/2K)^(1/n) (the exact binomial
        // interval for no successes).
        let mut z = c.clone();
        z.counts[..4].copy_from_slice(&[0, 50, 20, 30]);
        let r = z.confidence_region(1e-3).unwrap();
        let closed = 1.0 - (1e-3f64 / 32.0).powf(1.0 / 100.0);
        assert!(
            (r.upper[0] - closed).abs() < 1e-9,
            "{} {closed}",
            r.upper[0]
        );
        assert_eq!(r.lower[0], 0.0);
        // A stated design of (1/2, 1/6, 1/6, 1/6) weights the rounds by (1/4)/λ(q).
        let mut d = c.clone();
        d.design = Some(vec![0.5, 1.0 / 6.0, 1.0 / 6.0, 1.0 / 6.0]);
        let e = d.score_estimate(&game.scenario).unwrap();
        assert_eq!(e.wins, None);
        assert!((e.range.1 - 1.5).abs() < 1e-12);
        assert!((e.score_sum - (80.0 * 0.5 + 240.0 * 1.5)).abs() < 1e-9);
    }
}
