//! The verified bound: any dual vector, from any backend or from a file, turned into an upper
//! bound on the SDP's optimum by weak duality with every error charged (see [`super::sdp`]'s
//! module notes). It needs no solver, so a saved certificate can be re-checked independently.

use nalgebra::DMatrix;

use super::sdp::{upper_index, Assembled};
use crate::error::{Error, Result};

impl Assembled {
    /// The certified upper bound on `c·y + c0` from a dual vector (any vector of the right
    /// length: nothing is assumed about how it was obtained).
    pub fn certified_bound(&self, z: &[f64]) -> Result<f64> {
        if z.len() != self.b.len() {
            return Err(Error::solver(
                "certificate check",
                format!(
                    "the dual vector has {} entries, the problem {}",
                    z.len(),
                    self.b.len()
                ),
            ));
        }
        if z.iter().any(|v| !v.is_finite()) {
            return Err(Error::solver(
                "certificate check",
                "the dual vector has non-finite entries",
            ));
        }
        // Project onto the dual cone's simple parts: free on equalities, ≥ 0 on inequalities.
        let mut z = z.to_vec();
        for v in &mut z[self.equalities..self.equalities + self.inequalities] {
            *v = v.max(0.0);
        }
        if self.variable_bounds.len() != self.q.len()
            || self
                .variable_bounds
                .iter()
                .any(|b| !b.is_finite() || *b < 0.0)
        {
            return Err(Error::solver(
                "certificate check",
                "the problem's variable bounds are missing or not finite",
            ));
        }
        // Each residual is charged at its variable's bound; the magnitudes (for the rounding
        // term) are weighted the same way.
        let mut residual = self.q.clone();
        let mut magnitude = 0.0;
        let mut longest_column = 0;
        for (j, r) in residual.iter_mut().enumerate() {
            longest_column = longest_column.max(self.a.colptr[j + 1] - self.a.colptr[j]);
            let mut column_magnitude = self.q[j].abs();
            for k in self.a.colptr[j]..self.a.colptr[j + 1] {
                let t = self.a.nzval[k] * z[self.a.rowval[k]];
                *r += t;
                column_magnitude += t.abs();
            }
            magnitude += column_magnitude * self.variable_bounds[j];
        }
        let zb: f64 = z.iter().zip(&self.b).map(|(z, b)| z * b).sum();
        let zb_magnitude: f64 = z.iter().zip(&self.b).map(|(z, b)| (z * b).abs()).sum();
        let slack: f64 = residual
            .iter()
            .zip(&self.variable_bounds)
            .map(|(r, b)| r.abs() * b)
            .sum();
        // Each PSD block: ⟨Z, Γ⟩ ≥ λ_min(Z)·tr Γ when λ_min(Z) < 0.
        let mut cone_charge = 0.0;
        let mut offset = self.equalities + self.inequalities;
        for (&n, &trace) in self.block_sizes.iter().zip(&self.trace_bounds) {
            let mut zm = DMatrix::zeros(n, n);
            for col in 0..n {
                for row in 0..=col {
                    let v = z[offset + upper_index(row, col)];
                    if row == col {
                        zm[(row, col)] = v;
                    } else {
                        zm[(row, col)] = v * std::f64::consts::FRAC_1_SQRT_2;
                        zm[(col, row)] = v * std::f64::consts::FRAC_1_SQRT_2;
                    }
                }
            }
            let norm = zm.norm();
            let lambda_min = zm
                .symmetric_eigenvalues()
                .iter()
                .cloned()
                .fold(f64::INFINITY, f64::min);
            // Eigenvalues computed in floating point are accurate to about n·ε·‖Z‖.
            let lambda_min = lambda_min - 4.0 * n as f64 * f64::EPSILON * norm;
            cone_charge += (-lambda_min).max(0.0) * trace;
            offset += n * (n + 1) / 2;
        }
        // Floating-point error of the sums above, by the standard bound for a sum of products
        // of length k: |fl(Σ aᵢbᵢ) − Σ aᵢbᵢ| ≤ γ_k Σ|aᵢbᵢ|, γ_k = ku/(1 − ku), u = 2⁻⁵³ (Higham,
        // Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, §3.1). Each residual
        // is a sum of at most `longest_column + 1` products; the slack and bᵀz add one sum each;
        // the final total adds four terms. Doubled, for margin.
        let gamma = |k: usize| {
            let ku = k as f64 * f64::EPSILON / 2.0;
            ku / (1.0 - ku)
        };
        let rounding = 2.0
            * (gamma(longest_column + 2) * magnitude
                + gamma(residual.len() + 1) * slack
                + gamma(z.len() + 1) * zb_magnitude
                + gamma(5) * (self.objective_constant.abs() + zb.abs() + slack + cone_charge));
        if std::env::var_os("BELLGAP_CERT_TRACE").is_some() {
            eprintln!(
                "cert zb {zb:.12} slack {slack:.3e} cone {cone_charge:.3e} rounding {rounding:.3e}"
            );
        }
        Ok(self.objective_constant + zb + slack + cone_charge + rounding)
    }
}

impl Assembled {
    /// `z` moved to satisfy `q + Aᵀz = 0` exactly (in exact arithmetic), when the columns of
    /// `A` have pairwise disjoint supports (as a full NPA problem's do): `z − Σ_j (r_j/‖A_j‖²) A_j`
    /// with `r = q + Aᵀz`. It trades the residual charge for a possible (small) cone charge;
    /// callers keep whichever of the two vectors proves the smaller bound. `None` when the
    /// supports overlap.
    pub fn without_residual(&self, z: &[f64]) -> Option<Vec<f64>> {
        if !self.columns_disjoint() {
            return None;
        }
        let mut out = z.to_vec();
        for j in 0..self.a.n {
            let range = self.a.colptr[j]..self.a.colptr[j + 1];
            let mut residual = self.q[j];
            let mut norm = 0.0;
            for k in range.clone() {
                residual += self.a.nzval[k] * z[self.a.rowval[k]];
                norm += self.a.nzval[k] * self.a.nzval[k];
            }
            if norm > 0.0 {
                for k in range {
                    out[self.a.rowval[k]] -= residual / norm * self.a.nzval[k];
                }
            }
        }
        Some(out)
    }

    /// Whether the columns of `A` have pairwise disjoint supports (every row holds at most one
    /// variable), as a full NPA problem's do.
    pub fn columns_disjoint(&self) -> bool {
        let mut used = vec![false; self.a.m];
        self.a
            .rowval
            .iter()
            .all(|&r| !std::mem::replace(&mut used[r], true))
    }

    /// The smaller of the verified bounds of `z` and of `z` moved onto the residual-free
    /// subspace ([`Assembled::without_residual`], when the columns are disjoint), with the
    /// vector that proves it.
    pub fn best_certified_bound(&self, z: &[f64]) -> Result<(f64, Vec<f64>)> {
        let mut best = (self.certified_bound(z)?, z.to_vec());
        if let Some(moved) = self.without_residual(z) {
            let bound = self.certified_bound(&moved)?;
            if bound < best.0 {
                best = (bound, moved);
            }
        }
        Ok(best)
    }
}

#[cfg(test)]
pub(crate) mod tests {

    use crate::optim::sdp::{AffineEntry, MatrixBlock, SdpProblem};

    /// maximise y subject to [[corner, y], [y, 1]] ⪰ 0 (optimum √corner), with every moment
    /// bounded by one (also the exact verification's test problem).
    pub(crate) fn two_by_two(corner: f64) -> SdpProblem {
        let entry = |constant: f64, terms: Vec<(usize, f64)>| AffineEntry { constant, terms };
        SdpProblem {
            variables: 1,
            objective: vec![1.0],
            blocks: vec![MatrixBlock {
                size: 2,
                upper: vec![
                    entry(corner, vec![]),
                    entry(0.0, vec![(0, 1.0)]),
                    entry(1.0, vec![]),
                ],
                trace_bound: corner + 1.0,
            }],
            variable_bound: 1.0,
            ..Default::default()
        }
    }

    #[test]
    fn two_by_two_psd_bound() {
        // maximise y subject to [[1, y], [y, 1]] ⪰ 0: optimum 1.
        let p = two_by_two(1.0);
        let s = crate::optim::clarabel::solve_sdp(&p, "test").unwrap();
        assert!((s.primal - 1.0).abs() < 1e-7, "{}", s.primal);
        assert!(
            s.certified >= 1.0 && s.certified < 1.0 + 1e-6,
            "{}",
            s.certified
        );
        // A deliberately bad certificate still gives a valid (looser) bound.
        let asm = p.assemble();
        let bad: Vec<f64> = s.z.iter().map(|v| v * 0.9).collect();
        assert!(asm.certified_bound(&bad).unwrap() >= 1.0);
    }

    #[test]
    fn per_variable_bounds_charge_the_residual_where_moments_exceed_one() {
        // maximise y subject to [[4, y], [y, 1]] ⪰ 0: optimum 2, so |y| ≤ 1 would be false and
        // the residual of an inexact dual must be charged at |y| ≤ 2.
        let mut p = SdpProblem {
            variable_bounds: vec![2.0],
            ..two_by_two(4.0)
        };
        let s = crate::optim::clarabel::solve_sdp(&p, "test").unwrap();
        assert!((s.primal - 2.0).abs() < 1e-7, "{}", s.primal);
        let bad: Vec<f64> = s.z.iter().map(|v| v * 0.9).collect();
        let charged = p.assemble().certified_bound(&bad).unwrap();
        assert!(charged >= 2.0, "{charged}");
        // The scalar bound of one, wrong for this problem, would under-charge the same vector.
        p.variable_bounds.clear();
        let under = p.assemble().certified_bound(&bad).unwrap();
        assert!(under < 2.0 - 0.05, "{under}");
    }
}
