//! Semidefinite programmes of the form the quantum bounds build, solved with clarabel's PSD cone,
//! and the certified bound derived from a dual solution.
//!
//! ```text
//! maximise  c·y + c0   subject to   E y = e,   G y ≤ g,   Γ_b(y) = F0_b + Σ_m y_m F_bm ⪰ 0 for each block b
//! ```
//!
//! [`SdpProblem::assemble`] writes this in clarabel's form (minimise qᵀx with Ax + s = b, s in
//! zero, non-negative and PSD-triangle cones; PSD entries stacked by columns of the upper triangle
//! with off-diagonals scaled by √2). [`Assembled::certified_bound`] turns any dual vector z into
//! a bound by weak duality with every error charged: projecting z onto its cone, recomputing the
//! residual `r = q + Aᵀz` exactly as stated, charging `|r_m|` times a bound on `|y_m|`, and the
//! negative part of each dual block's smallest eigenvalue times a bound on that block's trace. It
//! needs no solver, so a saved certificate can be re-checked independently.

use std::time::Instant;

use clarabel::algebra::CscMatrix;
use clarabel::solver::{
    DefaultSettingsBuilder, DefaultSolver, IPSolver, SolverStatus, SupportedConeT,
};
use nalgebra::DMatrix;
use serde::Serialize;

use crate::error::{Error, Result};

/// Which SDP solver to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SdpSolver {
    /// Chosen by size, with the other as fallback.
    #[default]
    Auto,
    Clarabel,
    MomentIpm,
}

/// An entry of a matrix block: `constant + Σ coefficient · y[variable]`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AffineEntry {
    pub constant: f64,
    pub terms: Vec<(usize, f64)>,
}

/// A symmetric matrix affine in the variables; `upper[k]` is the entry at the k-th position of
/// the upper triangle stacked by columns ((0,0), (0,1), (1,1), (0,2), ...).
#[derive(Debug, Clone, Default)]
pub struct MatrixBlock {
    pub size: usize,
    pub upper: Vec<AffineEntry>,
    /// A bound on the trace of this block over every point the certified bound must cover.
    pub trace_bound: f64,
}

#[derive(Debug, Clone, Default)]
pub struct SdpProblem {
    pub variables: usize,
    /// `c` (maximised) and `c0`.
    pub objective: Vec<f64>,
    pub objective_constant: f64,
    pub equalities: Vec<(Vec<(usize, f64)>, f64)>,
    pub inequalities: Vec<(Vec<(usize, f64)>, f64)>,
    pub blocks: Vec<MatrixBlock>,
    /// A bound on `|y_m|` over every point the certified bound must cover.
    pub variable_bound: f64,
}

/// The problem in clarabel's form, kept for certificate checks.
pub struct Assembled {
    pub a: CscMatrix<f64>,
    pub b: Vec<f64>,
    pub q: Vec<f64>,
    pub equalities: usize,
    pub inequalities: usize,
    pub block_sizes: Vec<usize>,
    pub trace_bounds: Vec<f64>,
    pub variable_bound: f64,
    pub objective_constant: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct SdpSolution {
    /// Primal objective (including the constant), as the solver found it.
    pub primal: f64,
    /// Dual objective (including the constant), as the solver found it.
    pub dual: f64,
    /// Bound that holds despite solver and rounding error (see the module notes).
    pub certified: f64,
    pub status: String,
    pub iterations: u32,
    pub seconds: f64,
    /// Relative duality gap and largest relative residual at the returned point.
    pub gap: f64,
    pub residual: f64,
    /// Which solver produced the point: `clarabel` or `moment-ipm`.
    pub solver: String,
    #[serde(skip)]
    pub y: Vec<f64>,
    /// clarabel's dual vector, the certificate.
    #[serde(skip)]
    pub z: Vec<f64>,
}

/// Position of (row, col), row ≤ col, in the column-stacked upper triangle.
pub fn upper_index(row: usize, col: usize) -> usize {
    col * (col + 1) / 2 + row
}

impl SdpProblem {
    pub fn assemble(&self) -> Assembled {
        let (mut rows, mut cols, mut vals, mut b) =
            (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut push = |terms: &[(usize, f64)], scale: f64, rhs: f64, b: &mut Vec<f64>| {
            let r = b.len();
            for &(j, c) in terms {
                if c != 0.0 {
                    rows.push(r);
                    cols.push(j);
                    vals.push(scale * c);
                }
            }
            b.push(rhs);
        };
        for (terms, rhs) in &self.equalities {
            push(terms, 1.0, *rhs, &mut b);
        }
        for (terms, rhs) in &self.inequalities {
            push(terms, 1.0, *rhs, &mut b);
        }
        for block in &self.blocks {
            for col in 0..block.size {
                for row in 0..=col {
                    let e = &block.upper[upper_index(row, col)];
                    let scale = if row == col {
                        1.0
                    } else {
                        std::f64::consts::SQRT_2
                    };
                    // s = scale·(constant + Σ c y) = b − (A y)  ⇒  b = scale·constant, A = −scale·c.
                    push(&e.terms, -scale, scale * e.constant, &mut b);
                }
            }
        }
        let m = b.len();
        Assembled {
            a: CscMatrix::new_from_triplets(m, self.variables, rows, cols, vals),
            b,
            q: self.objective.iter().map(|c| -c).collect(),
            equalities: self.equalities.len(),
            inequalities: self.inequalities.len(),
            block_sizes: self.blocks.iter().map(|b| b.size).collect(),
            trace_bounds: self.blocks.iter().map(|b| b.trace_bound).collect(),
            variable_bound: self.variable_bound,
            objective_constant: self.objective_constant,
        }
    }

    /// Solves with the chosen method ([`SdpSolver::Auto`]: whichever the size estimate says is
    /// cheaper, falling back to the other if it fails).
    pub fn solve_with(&self, solver: SdpSolver, stage: &str) -> Result<SdpSolution> {
        match solver {
            SdpSolver::Clarabel => self.solve(stage),
            SdpSolver::MomentIpm => {
                crate::optim::moment_ipm::solve(self, stage, Default::default())
            }
            SdpSolver::Auto => {
                // Picked by size: clarabel factorises a dense block of side n(n+1)/2 per PSD
                // block, the moment-matrix method an m×m Schur complement plus ~4n⁴ assembly.
                let m = self.variables as f64;
                let clarabel: f64 = self
                    .blocks
                    .iter()
                    .map(|b| (b.size as f64 * (b.size as f64 + 1.0) / 2.0).powi(3))
                    .sum();
                let ipm = m.powi(3) / 3.0
                    + self
                        .blocks
                        .iter()
                        .map(|b| 4.0 * (b.size as f64).powi(4))
                        .sum::<f64>();
                if ipm <= clarabel {
                    // The fallback runs only if it fits: clarabel's dense KKT block needs
                    // about 16·d² bytes and 5·d³ flops (d = Σ n(n+1)/2) at ~1.6 GFLOP/s.
                    crate::optim::moment_ipm::solve(self, stage, Default::default()).or_else(|e| {
                        let d: f64 = self
                            .blocks
                            .iter()
                            .map(|b| b.size as f64 * (b.size as f64 + 1.0) / 2.0)
                            .sum();
                        let (bytes, seconds) = (16.0 * d * d, 5.0 * d * d * d / 1.6e9);
                        if bytes > FALLBACK_MEMORY_LIMIT || seconds > FALLBACK_SECONDS_LIMIT {
                            Err(Error::solver(
                                stage,
                                format!(
                                    "{e}; the clarabel fallback was not tried (it would need about {:.1} GiB and {:.0} s)",
                                    bytes / (1u64 << 30) as f64,
                                    seconds
                                ),
                            ))
                        } else {
                            self.solve(stage)
                        }
                    })
                } else {
                    self.solve(stage).or_else(|_| {
                        crate::optim::moment_ipm::solve(self, stage, Default::default())
                    })
                }
            }
        }
    }

    /// Solves with clarabel. A run that ends in any state but solved or almost solved is an
    /// error: no number is reported as a bound unless it is one.
    pub fn solve(&self, stage: &str) -> Result<SdpSolution> {
        let start = Instant::now();
        let asm = self.assemble();
        let mut cones = Vec::new();
        if asm.equalities > 0 {
            cones.push(SupportedConeT::ZeroConeT(asm.equalities));
        }
        if asm.inequalities > 0 {
            cones.push(SupportedConeT::NonnegativeConeT(asm.inequalities));
        }
        for &n in &asm.block_sizes {
            cones.push(SupportedConeT::PSDTriangleConeT(n));
        }
        let p = CscMatrix::zeros((self.variables, self.variables));
        let (solver, status) = run_clarabel(&p, &asm.q, &asm.a, &asm.b, &cones, 1e-9, stage)?;
        let y = solver.solution.x.clone();
        let z = solver.solution.z.clone();
        let primal = self.objective_constant
            + y.iter()
                .zip(&self.objective)
                .map(|(y, c)| y * c)
                .sum::<f64>();
        let dual = self.objective_constant + z.iter().zip(&asm.b).map(|(z, b)| z * b).sum::<f64>();
        let certified = asm.certified_bound(&z)?;
        Ok(SdpSolution {
            primal,
            dual,
            certified,
            status: status.to_string(),
            iterations: solver.info.iterations,
            seconds: start.elapsed().as_secs_f64(),
            gap: solver.info.gap_rel,
            residual: solver.info.res_primal.max(solver.info.res_dual),
            solver: "clarabel".into(),
            y,
            z,
        })
    }
}

/// Runs clarabel with quiet settings and the given tolerances; a run that ends in any state but
/// solved or almost solved is an error. Shared by the LP and SDP adapters.
pub(crate) fn run_clarabel(
    p: &CscMatrix<f64>,
    q: &[f64],
    a: &CscMatrix<f64>,
    b: &[f64],
    cones: &[SupportedConeT<f64>],
    tolerance: f64,
    stage: &str,
) -> Result<(DefaultSolver<f64>, &'static str)> {
    let settings = DefaultSettingsBuilder::default()
        .verbose(false)
        .max_iter(200)
        .tol_gap_abs(tolerance)
        .tol_gap_rel(tolerance)
        .tol_feas(tolerance)
        .build()
        .map_err(|e| Error::solver(stage, format!("{e:?}")))?;
    let mut solver = DefaultSolver::new(p, q, a, b, cones, settings)
        .map_err(|e| Error::solver(stage, format!("{e:?}")))?;
    solver.solve();
    let status = match solver.solution.status {
        SolverStatus::Solved => "solved",
        SolverStatus::AlmostSolved => "almost solved",
        other => {
            return Err(Error::solver(
                stage,
                format!(
                    "the solver stopped with status {other:?} after {} iterations",
                    solver.info.iterations
                ),
            ))
        }
    };
    Ok((solver, status))
}

/// Largest memory and time a fallback solver may take without being asked for.
const FALLBACK_MEMORY_LIMIT: f64 = 4.0 * (1u64 << 30) as f64;
const FALLBACK_SECONDS_LIMIT: f64 = 600.0;

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
        let mut residual = self.q.clone();
        let mut magnitude = 0.0;
        for (j, r) in residual.iter_mut().enumerate() {
            for k in self.a.colptr[j]..self.a.colptr[j + 1] {
                let t = self.a.nzval[k] * z[self.a.rowval[k]];
                *r += t;
                magnitude += t.abs();
            }
        }
        let zb: f64 = z.iter().zip(&self.b).map(|(z, b)| z * b).sum();
        let zb_magnitude: f64 = z.iter().zip(&self.b).map(|(z, b)| (z * b).abs()).sum();
        let slack: f64 = residual.iter().map(|r| r.abs()).sum::<f64>() * self.variable_bound;
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
        let rounding =
            1e-14 * (magnitude * self.variable_bound + zb_magnitude) * (self.a.m + self.a.n) as f64;
        Ok(self.objective_constant + zb + slack + cone_charge + rounding)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_by_two_psd_bound() {
        // maximise y subject to [[1, y], [y, 1]] ⪰ 0: optimum 1.
        let entry = |constant: f64, terms: Vec<(usize, f64)>| AffineEntry { constant, terms };
        let p = SdpProblem {
            variables: 1,
            objective: vec![1.0],
            blocks: vec![MatrixBlock {
                size: 2,
                upper: vec![
                    entry(1.0, vec![]),
                    entry(0.0, vec![(0, 1.0)]),
                    entry(1.0, vec![]),
                ],
                trace_bound: 2.0,
            }],
            variable_bound: 1.0,
            ..Default::default()
        };
        let s = p.solve("test").unwrap();
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
}
