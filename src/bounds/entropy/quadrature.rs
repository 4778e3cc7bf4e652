//! Gauss–Radau quadrature on [0, 1] (weight 1) with the last node fixed at t = 1: the nodes and
//! weights the entropy hierarchy sums over.
//!
//! Computed by the Golub–Welsch method with Golub's Radau modification (G. H. Golub, SIAM
//! Review 15, 318–334 (1973), §6; G. H. Golub & J. H. Welsch, Math. Comp. 23, 221–230 (1969)):
//! the nodes are the eigenvalues of the Jacobi matrix of the shifted Legendre polynomials,
//! with its last diagonal entry changed so that 1 is an eigenvalue, and the weights are the
//! squared first components of the normalised eigenvectors. An m-node rule integrates every
//! polynomial of degree at most 2m − 2 exactly.

use nalgebra::DMatrix;
use serde::Serialize;

use crate::error::{Error, Result};

/// Most nodes a rule may have (beyond it the entropy relaxations would be far too many, and
/// the smallest weights fall towards rounding level).
pub const MAX_NODES: usize = 64;

/// An m-node Gauss–Radau rule on [0, 1]: nodes ascending, the last equal to 1.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RadauRule {
    /// Nodes t_1 < … < t_m = 1.
    pub nodes: Vec<f64>,
    /// Positive weights, summing to 1 (the length of the interval).
    pub weights: Vec<f64>,
}

impl RadauRule {
    /// The rule with `m` nodes (2 ≤ m ≤ [`MAX_NODES`]; with one node the only node is t = 1,
    /// which carries no entropy term).
    pub fn new(m: usize) -> Result<RadauRule> {
        if !(2..=MAX_NODES).contains(&m) {
            return Err(Error::InvalidArgument(format!(
                "a Gauss–Radau rule needs between 2 and {MAX_NODES} nodes, not {m}"
            )));
        }
        // Monic shifted Legendre polynomials on [0, 1]: p_{k+1} = (t − 1/2) p_k − β_k p_{k−1},
        // β_k = k² / (4 (4k² − 1)).
        let beta = |k: usize| {
            let k = k as f64;
            k * k / (4.0 * (4.0 * k * k - 1.0))
        };
        let mut jacobi = DMatrix::<f64>::zeros(m, m);
        for i in 0..m {
            jacobi[(i, i)] = 0.5;
        }
        for k in 1..m {
            let b = beta(k).sqrt();
            jacobi[(k - 1, k)] = b;
            jacobi[(k, k - 1)] = b;
        }
        // Radau: the last diagonal entry becomes 1 + δ_{m−1}, with (J_{m−1} − I) δ = β_{m−1} e_{m−1}
        // (a tridiagonal solve, J_{m−1} the leading block).
        let n = m - 1;
        let diagonal: Vec<f64> = (0..n).map(|_| 0.5 - 1.0).collect();
        let off: Vec<f64> = (1..n).map(|k| beta(k).sqrt()).collect();
        let mut rhs = vec![0.0; n];
        rhs[n - 1] = beta(n);
        let delta = tridiagonal_solve(&diagonal, &off, &rhs);
        jacobi[(n, n)] = 1.0 + delta[n - 1];
        let eigen = jacobi.symmetric_eigen();
        let mut pairs: Vec<(f64, f64)> = (0..m)
            .map(|i| (eigen.eigenvalues[i], eigen.eigenvectors[(0, i)].powi(2)))
            .collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut rule = RadauRule {
            nodes: pairs.iter().map(|p| p.0).collect(),
            weights: pairs.iter().map(|p| p.1).collect(),
        };
        // The fixed node is 1 exactly (the eigensolver returns it to rounding).
        rule.nodes[m - 1] = 1.0;
        Ok(rule)
    }

    /// `Σ_i w_i f(t_i)`.
    pub fn integrate(&self, f: impl Fn(f64) -> f64) -> f64 {
        self.nodes
            .iter()
            .zip(&self.weights)
            .map(|(&t, &w)| w * f(t))
            .sum()
    }
}

/// Solves a symmetric tridiagonal system (diagonal `d`, off-diagonal `e`) by Gaussian
/// elimination without pivoting (the matrix here, J − I with J's spectrum inside (0, 1), is
/// negative definite, so no pivot vanishes).
fn tridiagonal_solve(d: &[f64], e: &[f64], rhs: &[f64]) -> Vec<f64> {
    let n = d.len();
    let mut diag = d.to_vec();
    let mut x = rhs.to_vec();
    for i in 1..n {
        let factor = e[i - 1] / diag[i - 1];
        diag[i] -= factor * e[i - 1];
        x[i] -= factor * x[i - 1];
    }
    x[n - 1] /= diag[n - 1];
    for i in (0..n - 1).rev() {
        x[i] = (x[i] - e[i] * x[i + 1]) / diag[i];
    }
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_nodes_are_one_third_and_one() {
        // The 2-point Radau rule on [−1, 1] with fixed node 1 has nodes −1/3, 1 and weights
        // 3/2, 1/2 (Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, 25.4.31, from
        // memory);
        // on [0, 1]: 1/3, 1 with 3/4, 1/4.
        let r = RadauRule::new(2).unwrap();
        assert!((r.nodes[0] - 1.0 / 3.0).abs() < 1e-15);
        assert_eq!(r.nodes[1], 1.0);
        assert!((r.weights[0] - 0.75).abs() < 1e-15);
        assert!((r.weights[1] - 0.25).abs() < 1e-15);
    }

    #[test]
    fn three_nodes_match_the_closed_form() {
        // On [−1, 1] with fixed node 1: nodes (−1 ∓ √6)/5 with weights (16 ∓ √6)/18, and 1 with
        // weight 2/9 (Abramowitz & Stegun 25.4.31, written for the fixed node −1; mirrored;
        // from memory, and checked here by the exactness test below).
        let r = RadauRule::new(3).unwrap();
        let s6 = 6f64.sqrt();
        let nodes = [(-1.0 - s6) / 5.0, (-1.0 + s6) / 5.0, 1.0];
        let weights = [(16.0 - s6) / 18.0, (16.0 + s6) / 18.0, 2.0 / 9.0];
        for i in 0..3 {
            assert!((r.nodes[i] - (nodes[i] + 1.0) / 2.0).abs() < 1e-14, "{r:?}");
            assert!((r.weights[i] - weights[i] / 2.0).abs() < 1e-14, "{r:?}");
        }
    }

    #[test]
    fn rules_are_exact_to_degree_two_m_minus_two_and_not_beyond() {
        for m in [2, 4, 8, 16, 32] {
            let r = RadauRule::new(m).unwrap();
            assert_eq!(r.nodes.len(), m);
            assert!(r.weights.iter().all(|&w| w > 0.0));
            assert!(r.nodes.windows(2).all(|p| p[0] < p[1]));
            assert!(r.nodes[0] > 0.0);
            for degree in 0..=(2 * m - 2) {
                let exact = 1.0 / (degree as f64 + 1.0);
                let got = r.integrate(|t| t.powi(degree as i32));
                assert!((got - exact).abs() < 1e-13, "m {m} degree {degree}: {got}");
            }
            if m <= 4 {
                // One degree more is not integrated exactly (for larger m the error of t^(2m−1)
                // falls below rounding, its error constant being tiny).
                let degree = 2 * m - 1;
                let got = r.integrate(|t| t.powi(degree as i32));
                assert!((got - 1.0 / (degree as f64 + 1.0)).abs() > 1e-6, "m {m}");
            }
        }
    }

    #[test]
    fn the_integral_behind_the_logarithm_converges() {
        // ln x = ∫_0^1 (x − 1) / (t (x − 1) + 1) dt: the integrand behind the relative-entropy
        // expansion, integrated by the rule, converges to the logarithm as nodes are added.
        let x: f64 = 0.3;
        let f = |t: f64| (x - 1.0) / (t * (x - 1.0) + 1.0);
        let mut last = f64::INFINITY;
        for m in [2, 4, 8, 16] {
            let error = (RadauRule::new(m).unwrap().integrate(f) - x.ln()).abs();
            assert!(error < last, "m {m}");
            last = error;
        }
        assert!(last < 1e-12);
    }

    #[test]
    fn bad_node_counts_are_refused() {
        assert!(RadauRule::new(0).is_err());
        assert!(RadauRule::new(1).is_err());
        assert!(RadauRule::new(MAX_NODES + 1).is_err());
    }
}
