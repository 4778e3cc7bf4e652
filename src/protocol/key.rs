//! Key figures for device-independent QKD. The trait [`EntropyBound`] is the seam for bounds on
//! the conditional von Neumann entropy H(A|E) as a function of an observed score; today it has
//! the analytic CHSH bound, and a general-game bound (e.g. from an SDP hierarchy) can implement
//! the same trait later.

use serde::Serialize;

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
    fn name(&self) -> &'static str;
    fn entropy(&self, score: f64) -> f64;
}

/// The analytic bound for the CHSH correlator value S ∈ [2, 2√2] (collective attacks, i.i.d.
/// rounds, asymptotic): H(A|E) ≥ 1 − h((1 + √((S/2)² − 1))/2) (Acín et al. 2007, PRL 98,
/// 230501; Pironio et al. 2009, NJP 11, 045021). Zero at or below the local bound 2.
pub struct ChshEntropyBound;

impl EntropyBound for ChshEntropyBound {
    fn name(&self) -> &'static str {
        "CHSH analytic bound (Acín et al. 2007; Pironio et al. 2009)"
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

#[derive(Debug, Clone, Serialize)]
pub struct KeyRate {
    pub score: f64,
    pub qber: f64,
    /// Lower bound on H(A|E) per round.
    pub conditional_entropy: f64,
    /// Asymptotic key rate per round, H(A|E) − h(Q) (error correction at the Shannon limit),
    /// floored at 0.
    pub key_rate: f64,
    pub bound: &'static str,
}

pub fn key_rate(bound: &dyn EntropyBound, score: f64, qber: f64) -> KeyRate {
    let h = bound.entropy(score);
    KeyRate {
        score,
        qber,
        conditional_entropy: h,
        key_rate: (h - binary_entropy(qber)).max(0.0),
        bound: bound.name(),
    }
}

/// For depolarising noise, where S = 2√2(1 − 2Q): the QBER at which the CHSH key rate reaches
/// zero (bisection on the rate).
pub fn chsh_threshold_qber() -> f64 {
    let rate = |q: f64| {
        let s = 2.0 * std::f64::consts::SQRT_2 * (1.0 - 2.0 * q);
        ChshEntropyBound.entropy(s) - binary_entropy(q)
    };
    let (mut lo, mut hi) = (1e-9, 0.146);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if rate(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chsh_key_figures() {
        // S = 2.5 → H(A|E) ≥ 0.456436; threshold QBER 0.071492 (Pironio et al. 2009, NJP 11,
        // 045021; recomputed).
        assert!((ChshEntropyBound.entropy(2.5) - 0.456436).abs() < 1e-6);
        assert!((chsh_threshold_qber() - 0.071492).abs() < 1e-6);
        assert!((ChshEntropyBound.entropy(2.0 * std::f64::consts::SQRT_2) - 1.0).abs() < 1e-12);
        assert_eq!(ChshEntropyBound.entropy(1.9), 0.0);
        let r = key_rate(&ChshEntropyBound, 2.5, 0.02);
        assert!((r.key_rate - (0.456436 - binary_entropy(0.02))).abs() < 1e-6);
    }
}
