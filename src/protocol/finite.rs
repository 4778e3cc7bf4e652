//! Finite statistics: what an observed score over n rounds certifies.
//!
//! Assumptions are stated with each figure. Bounds for i.i.d. rounds: Hoeffding's lower
//! confidence bound and the exact binomial (Clopper–Pearson) bound. The p-value of the
//! hypothesis "a classical strategy played every round" is the Azuma–Hoeffding bound for the
//! martingale of per-round scores, which stays valid when the devices adapt their strategy to
//! earlier rounds (each round's conditional expectation is at most the classical value).

use serde::Serialize;

use crate::error::{Error, Result};
use crate::model::scenario::{Scenario, ScoreKind};

/// Observed data: the number of rounds and the sum of per-round scores, each in [low, high]
/// (for a game: wins, with scores in [0, 1]).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Observation {
    pub rounds: u64,
    pub score_sum: f64,
    pub low: f64,
    pub high: f64,
    /// Whether scores are 0/1 (then the exact binomial bound applies).
    pub binary: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct Margin {
    pub rounds: u64,
    pub observed_mean: f64,
    /// The error probability α of the confidence bounds (confidence 1 − α).
    pub alpha: f64,
    /// Hoeffding lower confidence bound on the per-round expected score (i.i.d. rounds).
    pub lower_confidence: f64,
    /// Exact binomial (Clopper–Pearson) lower confidence bound, for win/lose scores.
    pub lower_confidence_exact: Option<f64>,
    pub classical: f64,
    /// `lower_confidence − classical`: positive when the data certify a score above every
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
    pub target_p_value: f64,
    pub expected_mean: f64,
    pub assumptions: Vec<&'static str>,
}

/// ln Γ(x), Lanczos approximation (g = 7, 9 terms), accurate to about 1e-15 for x > 0.
pub fn ln_gamma(x: f64) -> f64 {
    const G: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        return (std::f64::consts::PI / (std::f64::consts::PI * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = G[0];
    let t = x + 7.5;
    for (i, g) in G.iter().enumerate().skip(1) {
        a += g / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Continued fraction of the incomplete beta function (modified Lentz).
fn beta_fraction(a: f64, b: f64, x: f64) -> f64 {
    let tiny = 1e-300;
    let guard = |v: f64| if v.abs() < tiny { tiny } else { v };
    let (qab, qap, qam) = (a + b, a + 1.0, a - 1.0);
    let mut c = 1.0;
    let mut d = 1.0 / guard(1.0 - qab * x / qap);
    let mut h = d;
    // One Lentz update with coefficient `aa`; returns the factor applied to h.
    let step = |aa: f64, c: &mut f64, d: &mut f64| {
        *d = 1.0 / guard(1.0 + aa * *d);
        *c = guard(1.0 + aa / *c);
        *d * *c
    };
    for m in 1..10_000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        h *= step(m * (b - m) * x / ((qam + m2) * (a + m2)), &mut c, &mut d);
        let del = step(
            -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2)),
            &mut c,
            &mut d,
        );
        h *= del;
        if (del - 1.0).abs() < 1e-15 {
            break;
        }
    }
    h
}

/// Regularised incomplete beta function I_x(a, b).
pub fn incomplete_beta(a: f64, b: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let front =
        (ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * x.ln() + b * (1.0 - x).ln()).exp();
    if x < (a + 1.0) / (a + b + 2.0) {
        front * beta_fraction(a, b, x) / a
    } else {
        1.0 - front * beta_fraction(b, a, 1.0 - x) / b
    }
}

/// Upper tail of the χ² distribution, P(X ≥ x) for `dof` degrees of freedom: the regularised
/// upper incomplete gamma Q(dof/2, x/2), by its series below a + 1 and Lentz's continued
/// fraction above (the standard pair of expansions).
pub fn chi_square_upper_tail(x: f64, dof: f64) -> f64 {
    if x <= 0.0 || dof <= 0.0 {
        return 1.0;
    }
    let (a, z) = (dof / 2.0, x / 2.0);
    let log_front = a * z.ln() - z - ln_gamma(a);
    if z < a + 1.0 {
        // P(a, z) = e^{-z} z^a / Γ(a) Σ z^n / (a (a+1) ... (a+n)).
        let (mut term, mut sum, mut ap) = (1.0 / a, 1.0 / a, a);
        for _ in 0..10_000 {
            ap += 1.0;
            term *= z / ap;
            sum += term;
            if term.abs() < sum.abs() * 1e-16 {
                break;
            }
        }
        (1.0 - sum * log_front.exp()).clamp(0.0, 1.0)
    } else {
        let tiny = 1e-300;
        let mut b = z + 1.0 - a;
        let mut c = 1.0 / tiny;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..10_000 {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < tiny {
                d = tiny;
            }
            c = b + an / c;
            if c.abs() < tiny {
                c = tiny;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < 1e-16 {
                break;
            }
        }
        (log_front.exp() * h).clamp(0.0, 1.0)
    }
}

/// P(X ≥ k) for X ~ Binomial(n, p).
pub fn binomial_upper_tail(n: u64, k: u64, p: f64) -> f64 {
    if k == 0 {
        1.0
    } else if k > n {
        0.0
    } else {
        incomplete_beta(k as f64, (n - k + 1) as f64, p)
    }
}

/// Clopper–Pearson one-sided lower bound: the p with P(X ≥ k | p) = α (0 when k = 0).
pub fn clopper_pearson_lower(n: u64, k: u64, alpha: f64) -> f64 {
    if k == 0 {
        return 0.0;
    }
    let (mut lo, mut hi) = (0.0, k as f64 / n as f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if binomial_upper_tail(n, k, mid) < alpha {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// What the user reported of a run, before it is checked against the game.
#[derive(Debug, Clone, Copy, Default)]
pub struct ObservedRun {
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
        return Err(Error::Usage("the number of rounds must be positive".into()));
    }
    let (game_lo, game_hi) = s.per_round_score_range();
    match (run.wins, run.score_sum) {
        (Some(w), None) => {
            if s.kind != ScoreKind::Win || !s.weights_are_probabilities() {
                return Err(Error::Usage(
                    "wins apply to a game with a win predicate and a question distribution; for a Bell expression or a score give the score sum".into(),
                ));
            }
            if w > run.rounds {
                return Err(Error::Usage(format!("{w} wins in {} rounds", run.rounds)));
            }
            if run.score_range.is_some() {
                return Err(Error::Usage(
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
                return Err(Error::Usage(format!(
                    "the score sum must be a finite number, got {sum}"
                )));
            }
            let (lo, hi) = run.score_range.unwrap_or((game_lo, game_hi));
            if !lo.is_finite() || !hi.is_finite() {
                return Err(Error::Usage(format!(
                    "the score range must be finite, got [{lo}, {hi}]"
                )));
            }
            let slack = 1e-9 * (1.0 + game_lo.abs().max(game_hi.abs()));
            if lo > game_lo + slack || hi < game_hi - slack {
                return Err(Error::Usage(format!(
                    "the score range [{lo}, {hi}] does not contain the game's per-round score range [{game_lo}, {game_hi}]: the confidence bounds and p-value would not hold"
                )));
            }
            if hi <= lo {
                return Err(Error::Usage(format!(
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
        (Some(_), Some(_)) => Err(Error::Usage(
            "give either wins or a score sum, not both".into(),
        )),
        (None, None) => Err(Error::Usage(
            "give the wins (a game) or the score sum (a Bell expression)".into(),
        )),
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
        return Err(Error::Usage("the number of rounds must be positive".into()));
    }
    if !obs.score_sum.is_finite() || !obs.low.is_finite() || !obs.high.is_finite() {
        return Err(Error::Usage(
            "the score sum and range must be finite numbers".into(),
        ));
    }
    if !classical.is_finite() || classical < obs.low || classical > obs.high {
        return Err(Error::Usage(format!(
            "the classical value {classical} lies outside the score range [{}, {}]",
            obs.low, obs.high
        )));
    }
    if let Some(e) = expected_mean {
        if !e.is_finite() || e < obs.low || e > obs.high {
            return Err(Error::Usage(format!(
                "the expected mean score {e} lies outside the score range [{}, {}]",
                obs.low, obs.high
            )));
        }
    }
    if obs.high.partial_cmp(&obs.low) != Some(std::cmp::Ordering::Greater) {
        return Err(Error::Usage(format!(
            "the score range [{}, {}] is empty",
            obs.low, obs.high
        )));
    }
    let open_unit = |v: f64| v > 0.0 && v < 1.0;
    if !open_unit(alpha) || !open_unit(target_p_value) {
        return Err(Error::Usage(
            "error probabilities must lie strictly between 0 and 1".into(),
        ));
    }
    let n = obs.rounds as f64;
    let mean = obs.score_sum / n;
    if mean < obs.low - 1e-12 || mean > obs.high + 1e-12 {
        return Err(Error::Usage(format!(
            "the mean score {mean} lies outside the score range [{}, {}]",
            obs.low, obs.high
        )));
    }
    let width = obs.high - obs.low;
    // Hoeffding (1963): P(mean − E ≥ t) ≤ exp(−2 n t² / width²).
    let hoeffding_t = width * ((1.0 / alpha).ln() / (2.0 * n)).sqrt();
    let lower_confidence = mean - hoeffding_t;
    let lower_confidence_exact = obs.binary.then(|| {
        let wins = obs.score_sum.round() as u64;
        clopper_pearson_lower(obs.rounds, wins, alpha)
    });
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
    let expected_mean = expected_mean.unwrap_or(mean);
    let gap = expected_mean - classical;
    // Saturating conversion: a gap so small that the count exceeds u64 is reported as None
    // ("not reachable") rather than as 2⁶⁴ − 1.
    let rounds_needed = (gap > 0.0)
        .then(|| ((1.0 / target_p_value).ln() * width * width / (2.0 * gap * gap)).ceil())
        .filter(|r| r.is_finite() && *r < u64::MAX as f64)
        .map(|r| r as u64);
    Ok(Margin {
        rounds: obs.rounds,
        observed_mean: mean,
        alpha,
        lower_confidence,
        lower_confidence_exact,
        classical,
        margin: lower_confidence - classical,
        p_value,
        p_value_log10,
        p_value_bound: "Azuma–Hoeffding (valid for adaptive strategies)",
        rounds_needed,
        target_p_value,
        expected_mean,
        assumptions: vec![
            "the lower confidence bounds (Hoeffding, Clopper–Pearson) assume independent, identically distributed rounds",
            "the p-value holds for any classical strategy, including one that adapts to earlier rounds, if each round's questions are drawn afresh from the game's distribution",
            "the rounds needed assume the devices' mean score equals the expected mean and use the same Azuma–Hoeffding bound",
        ],
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn special_functions_match_known_values() {
        // ln Γ(5) = ln 24; Γ(1/2) = √π.
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-13);
        // P(X ≥ 2) for Binomial(3, 1/2) = 4/8.
        assert!((binomial_upper_tail(3, 2, 0.5) - 0.5).abs() < 1e-12);
        // P(X ≥ 8) for Binomial(10, 0.3), summed by hand.
        let direct: f64 = (8..=10u64)
            .map(|k| {
                let c = (1..=k).fold(1.0, |acc, i| acc * (10 - k + i) as f64 / i as f64);
                c * 0.3f64.powi(k as i32) * 0.7f64.powi(10 - k as i32)
            })
            .sum();
        assert!((binomial_upper_tail(10, 8, 0.3) - direct).abs() < 1e-13);
        // χ² upper tails: with 2 degrees of freedom P(X ≥ x) = e^{−x/2}; with 1, P(X ≥ 3.841459)
        // = 0.05 (the familiar 95% point, from memory).
        for x in [0.1, 1.0, 5.0, 30.0] {
            assert!((chi_square_upper_tail(x, 2.0) - (-x / 2.0f64).exp()).abs() < 1e-12);
        }
        assert!((chi_square_upper_tail(3.841459, 1.0) - 0.05).abs() < 1e-6);
        // Clopper–Pearson: all n successes give α^(1/n).
        assert!((clopper_pearson_lower(20, 20, 0.05) - 0.05f64.powf(1.0 / 20.0)).abs() < 1e-10);
    }
}
