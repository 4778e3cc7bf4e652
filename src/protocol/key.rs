//! Key figures for device-independent QKD. The trait [`EntropyBound`] is the seam for analytic
//! bounds on the conditional von Neumann entropy H(A|E) as a function of an observed score: the
//! CHSH bound, with and without noisy preprocessing. Other games go through the entropy
//! hierarchy ([`crate::bounds::entropy`]) instead.

use serde::Serialize;

use crate::bounds::entropy::Preprocessing;
use crate::error::{Error, Result};

/// Binary entropy in bits.
pub fn binary_entropy(p: f64) -> f64 {
    if p <= 0.0 || p >= 1.0 {
        0.0
    } else {
        -p * p.log2() - (1.0 - p) * (1.0 - p).log2()
    }
}

/// A lower bound on H(A|E) per round, given the score in the bound's own convention.
pub trait EntropyBound {
    /// Name and source of the bound.
    fn name(&self) -> &'static str;
    /// The scores the bound is defined for (finite, and no higher than any quantum device can
    /// reach): anything outside is refused rather than extrapolated.
    fn score_range(&self) -> (f64, f64);
    /// The bound on H(A|E) in bits at `score` (0 where nothing is certified).
    fn entropy(&self, score: f64) -> f64;
    /// The highest score classical devices reach (no key at or below it).
    fn classical_score(&self) -> f64;
    /// The error rate between the key (after any preprocessing the bound assumes) and the other
    /// player's answers, from the raw answers' error rate.
    fn key_error_rate(&self, qber: f64) -> f64 {
        qber
    }
}

/// The analytic bound for the CHSH correlator value S ∈ [2, 2√2] (collective attacks, i.i.d.
/// rounds, asymptotic): H(A|E) ≥ 1 − h((1 + √((S/2)² − 1))/2) (Acín et al. 2007, PRL 98,
/// 230501; Pironio et al. 2009, NJP 11, 045021). Zero at or below the local bound 2.
pub struct ChshEntropyBound;

impl EntropyBound for ChshEntropyBound {
    fn name(&self) -> &'static str {
        "CHSH analytic bound (Acín et al. 2007; Pironio et al. 2009)"
    }
    fn score_range(&self) -> (f64, f64) {
        // |S| ≤ 2√2 for every quantum strategy (Tsirelson 1980); the tiny allowance absorbs
        // the rounding of a value computed at the maximum.
        let tsirelson = 2.0 * std::f64::consts::SQRT_2;
        (-tsirelson * (1.0 + 1e-12), tsirelson * (1.0 + 1e-12))
    }
    fn classical_score(&self) -> f64 {
        2.0
    }
    fn entropy(&self, s: f64) -> f64 {
        if s <= 2.0 {
            return 0.0;
        }
        let s = s.min(2.0 * std::f64::consts::SQRT_2);
        let x = ((s / 2.0).powi(2) - 1.0).max(0.0).sqrt();
        (1.0 - binary_entropy((1.0 + x) / 2.0)).max(0.0)
    }
}

/// The CHSH bound after noisy preprocessing: the key player flips its bit with probability
/// q before error correction, and
///
/// ```text
///   H(Â|E) ≥ 1 − h((1 + C)/2) + h((1 + √(1 − q(1 − q)(8 − S²)))/2),   C = √((S/2)² − 1)
/// ```
///
/// (Ho et al. 2020, PRL 124, 230502, from memory). We derived that this is the value of the
/// attack that meets the noiseless curve, the state ((1 + C)/2)|Φ+⟩⟨Φ+| + ((1 − C)/2)|Φ−⟩⟨Φ−|
/// with A₀ = Z, whose two conditional states of Eve are pure with overlap C (so no valid bound
/// lies above it); the entropy hierarchy with the same preprocessing comes within 1e-6 of it at
/// the points tested (tests/entropy.rs). At S ≤ 2 a deterministic answer is possible, and the flip alone leaves h(q).
pub struct NoisyChshEntropyBound {
    /// The flip probability q, in [0, 1/2].
    pub probability: f64,
}

impl NoisyChshEntropyBound {
    /// The bound with flip probability `probability`, refused outside [0, 1/2] (past 1/2 a flip
    /// is a relabelling followed by a flip with 1 − q).
    pub fn new(probability: f64) -> Result<NoisyChshEntropyBound> {
        if !(0.0..=0.5).contains(&probability) {
            return Err(Error::InvalidArgument(format!(
                "the noisy preprocessing probability must be in [0, 0.5], got {probability}"
            )));
        }
        Ok(NoisyChshEntropyBound { probability })
    }
}

impl EntropyBound for NoisyChshEntropyBound {
    fn name(&self) -> &'static str {
        "CHSH analytic bound with noisy preprocessing (Ho et al. 2020)"
    }
    fn score_range(&self) -> (f64, f64) {
        ChshEntropyBound.score_range()
    }
    fn classical_score(&self) -> f64 {
        ChshEntropyBound.classical_score()
    }
    fn entropy(&self, s: f64) -> f64 {
        let q = self.probability;
        let s = s.clamp(2.0, 2.0 * std::f64::consts::SQRT_2);
        let x = ((s / 2.0).powi(2) - 1.0).max(0.0).sqrt();
        let y = (1.0 - q * (1.0 - q) * (8.0 - s * s)).max(0.0).sqrt();
        (1.0 - binary_entropy((1.0 + x) / 2.0) + binary_entropy((1.0 + y) / 2.0)).clamp(0.0, 1.0)
    }
    fn key_error_rate(&self, qber: f64) -> f64 {
        let q = self.probability;
        qber * (1.0 - q) + (1.0 - qber) * q
    }
}

/// The analytic CHSH bound for a key player's preprocessing: [`ChshEntropyBound`] without it,
/// [`NoisyChshEntropyBound`] with it (refused outside [0, 1/2]).
pub fn chsh_bound(preprocessing: Preprocessing) -> Result<Box<dyn EntropyBound>> {
    Ok(match preprocessing {
        Preprocessing::None => Box::new(ChshEntropyBound),
        Preprocessing::Noisy { probability } => Box::new(NoisyChshEntropyBound::new(probability)?),
    })
}

/// Key figures at a score and error rate.
#[derive(Debug, Clone, Serialize)]
pub struct KeyRate {
    /// The score (CHSH correlator value).
    pub score: f64,
    /// The quantum bit error rate.
    pub qber: f64,
    /// The error rate error correction faces: `qber` after any preprocessing of the key.
    pub key_qber: f64,
    /// Lower bound on H(A|E) per round.
    pub conditional_entropy: f64,
    /// Asymptotic key rate per round, H(A|E) − h(key QBER) (error correction at the Shannon
    /// limit), floored at 0.
    pub key_rate: f64,
    /// Which entropy bound.
    pub bound: &'static str,
}

/// Key figures at a score and QBER. Refuses a score outside the bound's range (a score above
/// the quantum maximum would otherwise give a key rate no device can have) and a QBER that is
/// not a probability in [0, 1/2].
pub fn key_rate(bound: &dyn EntropyBound, score: f64, qber: f64) -> Result<KeyRate> {
    let (lo, hi) = bound.score_range();
    if !score.is_finite() || score < lo || score > hi {
        return Err(Error::InvalidArgument(format!(
            "the score {score} is outside [{lo:.10}, {hi:.10}], the range of quantum devices for the {}",
            bound.name()
        )));
    }
    if !(0.0..=0.5).contains(&qber) {
        return Err(Error::InvalidArgument(format!(
            "the QBER must be a number in [0, 0.5], got {qber}"
        )));
    }
    let h = bound.entropy(score);
    let key_qber = bound.key_error_rate(qber);
    // Each closed form is evaluated to a few units in the last place (common practice for
    // log₂ and √ of the platform's libm): the difference is rounded down by 16 units of the
    // larger term. At or below the classical score no key is possible
    // (a deterministic strategy reproduces the score; a flip's own randomness is no secret the
    // other player shares), so the rate is 0 there whatever the rounding says.
    let rate = h - binary_entropy(key_qber) - 16.0 * f64::EPSILON * (1.0 + h);
    let classical = score <= bound.classical_score();
    Ok(KeyRate {
        score,
        qber,
        key_qber,
        conditional_entropy: h,
        key_rate: if classical { 0.0 } else { rate.max(0.0) },
        bound: bound.name(),
    })
}

/// For depolarising noise, where S = 2√2(1 − 2Q): the QBER at which the CHSH key rate reaches
/// zero (bisection on the rate).
pub fn chsh_threshold_qber() -> f64 {
    threshold_qber(&ChshEntropyBound).unwrap_or(0.0)
}

/// For depolarising noise, where S = 2√2(1 − 2Q): the QBER at which the key rate of a CHSH
/// bound reaches zero (bisection on the rate, which falls with Q); `None` when no error rate
/// gives a positive rate (a flip probability of 1/2 makes the key answer uniform: H(A|E) = 1 but
/// H(A|B) = 1 too).
pub fn threshold_qber(bound: &dyn EntropyBound) -> Option<f64> {
    let rate = |q: f64| {
        let s = 2.0 * std::f64::consts::SQRT_2 * (1.0 - 2.0 * q);
        bound.entropy(s) - binary_entropy(bound.key_error_rate(q))
    };
    let (mut lo, mut hi) = (1e-9, 0.146);
    if rate(lo) <= 0.0 {
        return None;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if rate(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

/// The error-correction term of the Devetak–Winter rate, H(A|B) in bits, from the joint
/// distribution `p[a][b]` of the key pair's answers (rows Alice's answers, columns Bob's): one-way
/// error correction at the Shannon limit leaks H(A|B) bits per round (Devetak & Winter 2005,
/// Proc. R. Soc. A 461, 207). The table must be rectangular, finite, non-negative and sum to 1
/// within 1e-9; anything else is refused.
pub fn error_correction_entropy(p: &[Vec<f64>]) -> Result<f64> {
    let bad = |why: String| {
        Err(Error::InvalidArgument(format!(
            "the key pair's joint distribution {why}"
        )))
    };
    let columns = p.first().map_or(0, |r| r.len());
    if p.is_empty() || columns == 0 {
        return bad("is empty".into());
    }
    if p.iter().any(|r| r.len() != columns) {
        return bad("has rows of different lengths".into());
    }
    if let Some(v) = p.iter().flatten().find(|v| !v.is_finite() || **v < 0.0) {
        return bad(format!("has the entry {v}, not a probability"));
    }
    let total: f64 = p.iter().flatten().sum();
    if (total - 1.0).abs() > 1e-9 {
        return bad(format!("sums to {total}, not 1"));
    }
    // H(A|B) = H(A, B) − H(B).
    let plogp = |x: f64| if x > 0.0 { -x * x.log2() } else { 0.0 };
    let joint: f64 = p.iter().flatten().map(|&x| plogp(x)).sum();
    let marginal: f64 = (0..columns)
        .map(|b| plogp(p.iter().map(|r| r[b]).sum()))
        .sum();
    Ok((joint - marginal).max(0.0))
}

/// Fano's bound on H(A|B) for a key of `answers` values whose pair differs with probability
/// `error_rate`: h(Q) + Q·log₂(d − 1), capped at log₂ d (H(A|B) ≤ H(A)); 0 for a single answer.
pub fn fano_bound(error_rate: f64, answers: usize) -> f64 {
    if answers <= 1 {
        return 0.0;
    }
    let d = answers as f64;
    (binary_entropy(error_rate) + error_rate * (d - 1.0).log2()).min(d.log2())
}

/// The probability that a key pair's answers differ, from their joint table: the sum of the
/// off-diagonal entries (negative entries, from a region's lower ends, counted as 0).
pub fn differ_probability(table: &[Vec<f64>]) -> f64 {
    table
        .iter()
        .enumerate()
        .flat_map(|(a, row)| {
            row.iter()
                .enumerate()
                .filter(move |(b, _)| *b != a)
                .map(|(_, v)| v.max(0.0))
        })
        .sum()
}

/// An upper bound on H(A|B) over every distribution within `distance` (half the L1 norm) of
/// `centre`, which need not sum to 1 exactly (a typed or estimated table): the centre is
/// clipped at 0 and normalised (its total's distance from 1 is added), then the continuity
/// bound of Alicki–Fannes–Winter for a classical A, |H(A|B)_p − H(A|B)_q| ≤ 2ε log₂ |A| +
/// (1 + ε) h(ε/(1 + ε)) when ½‖p − q‖₁ ≤ ε (Winter, Commun. Math. Phys. 347, 291 (2016),
/// Lemma 2; from memory, in its form for quantum B, which covers a classical one) is added, and
/// the sum capped at log₂ |A|.
pub fn error_correction_entropy_within(centre: &[Vec<f64>], distance: f64) -> Result<f64> {
    if !(distance >= 0.0 && distance.is_finite()) {
        return Err(Error::InvalidArgument(format!(
            "the key pair's distance must be a non-negative number, got {distance}"
        )));
    }
    if centre.iter().flatten().any(|v| !v.is_finite()) {
        return Err(Error::InvalidArgument(
            "the key pair's joint distribution has an entry that is not a finite number".into(),
        ));
    }
    let clipped: Vec<Vec<f64>> = centre
        .iter()
        .map(|r| r.iter().map(|v| v.max(0.0)).collect())
        .collect();
    let total: f64 = clipped.iter().flatten().sum();
    if total.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return Err(Error::InvalidArgument(
            "the key pair's joint distribution is zero".into(),
        ));
    }
    let normalised: Vec<Vec<f64>> = clipped
        .iter()
        .map(|r| r.iter().map(|v| v / total).collect())
        .collect();
    let at_centre = error_correction_entropy(&normalised)?;
    let answers = centre.len() as f64;
    let most = answers.log2();
    let eps = (distance + (total - 1.0).abs() / 2.0).min(1.0);
    if eps == 0.0 {
        return Ok(at_centre);
    }
    let continuity = 2.0 * eps * most + (1.0 + eps) * binary_entropy(eps / (1.0 + eps));
    // Rounding of the sums above is far below the continuity term's own size; a relative
    // 1e-12 is charged for it.
    Ok(((at_centre + continuity) * (1.0 + 1e-12)).min(most))
}

#[cfg(test)]
mod tests {

    #[test]
    fn the_error_correction_term_is_the_conditional_shannon_entropy() {
        // Perfectly correlated answers leak nothing; independent uniform ones leak log2 d.
        let d = 3;
        let correlated: Vec<Vec<f64>> = (0..d)
            .map(|a| {
                (0..d)
                    .map(|b| if a == b { 1.0 / 3.0 } else { 0.0 })
                    .collect()
            })
            .collect();
        assert!(error_correction_entropy(&correlated).unwrap().abs() < 1e-15);
        let independent = vec![vec![1.0 / 9.0; 3]; 3];
        assert!((error_correction_entropy(&independent).unwrap() - 3f64.log2()).abs() < 1e-14);
        // A binary pair with error rate Q: h(Q), the term `key_rate` subtracts.
        let q = 0.07;
        let binary = vec![
            vec![(1.0 - q) / 2.0, q / 2.0],
            vec![q / 2.0, (1.0 - q) / 2.0],
        ];
        assert!((error_correction_entropy(&binary).unwrap() - binary_entropy(q)).abs() < 1e-14);
        // Untrusted tables are refused.
        for bad in [
            vec![],
            vec![vec![0.5, 0.5], vec![0.0]],
            vec![vec![0.5, f64::NAN], vec![0.0, 0.5]],
            vec![vec![1.2, -0.2], vec![0.0, 0.0]],
            vec![vec![0.5, 0.4], vec![0.0, 0.0]],
        ] {
            assert!(error_correction_entropy(&bad).is_err(), "{bad:?}");
        }
    }
    use super::*;

    #[test]
    fn chsh_key_figures() {
        // S = 2.5 → H(A|E) ≥ 0.456436; threshold QBER 0.071492 (Pironio et al. 2009, NJP 11,
        // 045021; recomputed).
        assert!((ChshEntropyBound.entropy(2.5) - 0.456436).abs() < 1e-6);
        assert!((chsh_threshold_qber() - 0.071492).abs() < 1e-6);
        assert!((ChshEntropyBound.entropy(2.0 * std::f64::consts::SQRT_2) - 1.0).abs() < 1e-12);
        assert_eq!(ChshEntropyBound.entropy(1.9), 0.0);
        let r = key_rate(&ChshEntropyBound, 2.5, 0.02).unwrap();
        assert!((r.key_rate - (0.456436 - binary_entropy(0.02))).abs() < 1e-6);
    }

    #[test]
    fn fano_and_the_error_rate_of_a_table() {
        // Binary: h(Q); three answers: h(Q) + Q; never above log₂ d; none for one answer.
        assert!((fano_bound(0.1, 2) - binary_entropy(0.1)).abs() < 1e-15);
        assert!((fano_bound(0.1, 3) - (binary_entropy(0.1) + 0.1)).abs() < 1e-15);
        assert_eq!(fano_bound(0.9, 2), 1.0f64.min(binary_entropy(0.9)));
        assert!(fano_bound(2.0 / 3.0, 3) <= 3f64.log2() + 1e-15);
        assert_eq!(fano_bound(0.3, 1), 0.0);
        let table = vec![vec![0.4, 0.1], vec![-0.05, 0.45]];
        assert!((differ_probability(&table) - 0.1).abs() < 1e-15);
    }

    #[test]
    fn refuses_impossible_scores_and_error_rates() {
        for s in [2.9, 4.0, f64::INFINITY, f64::NAN, f64::NEG_INFINITY, -3.0] {
            assert!(key_rate(&ChshEntropyBound, s, 0.02).is_err(), "S = {s}");
        }
        for q in [-0.1, 0.6, f64::NAN, f64::INFINITY] {
            assert!(key_rate(&ChshEntropyBound, 2.5, q).is_err(), "Q = {q}");
        }
        let top = key_rate(&ChshEntropyBound, 2.0 * std::f64::consts::SQRT_2, 0.0).unwrap();
        assert!((top.key_rate - 1.0).abs() < 1e-12);
    }
}
