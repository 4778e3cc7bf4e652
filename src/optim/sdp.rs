//! Semidefinite programmes of the form the quantum bounds build, and their solutions. Solving
//! is [`super::backend`]'s; the verified bound from a dual vector is [`super::certify`]'s.
//!
//! ```text
//! maximise  c·y + c0   subject to   E y = e,   G y ≤ g,   Γ_b(y) = F0_b + Σ_m y_m F_bm ⪰ 0 for each block b
//! ```
//!
//! [`SdpProblem::assemble`] writes this in clarabel's form (minimise qᵀx with Ax + s = b, s in
//! zero, non-negative and PSD-triangle cones; PSD entries stacked by columns of the upper triangle
//! with off-diagonals scaled by √2); every backend reports its dual vector in that layout.
//! [`Assembled::certified_bound`] turns any dual vector z into
//! a bound by weak duality with every error charged: projecting z onto its cone, recomputing the
//! residual `r = q + Aᵀz` exactly as stated, charging `|r_m|` times a bound on `|y_m|`, and the
//! negative part of each dual block's smallest eigenvalue times a bound on that block's trace. It
//! needs no solver, so a saved certificate can be re-checked independently.

use clarabel::algebra::CscMatrix;
use serde::{Deserialize, Serialize};

use super::SolveStatus;
use crate::error::Result;

/// An entry of a matrix block: `constant + Σ coefficient · y[variable]`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AffineEntry {
    /// The constant part.
    pub constant: f64,
    /// `(variable, coefficient)` pairs.
    pub terms: Vec<(usize, f64)>,
}

/// A symmetric matrix affine in the variables; `upper[k]` is the entry at the k-th position of
/// the upper triangle stacked by columns ((0,0), (0,1), (1,1), (0,2), ...).
#[derive(Debug, Clone, Default)]
pub struct MatrixBlock {
    /// Side of the matrix.
    pub size: usize,
    /// Entries of the upper triangle, stacked by columns.
    pub upper: Vec<AffineEntry>,
    /// A bound on the trace of this block over every point the certified bound must cover.
    pub trace_bound: f64,
}

/// `maximise c·y + c0 subject to E y = e, G y ≤ g, Γ_b(y) ⪰ 0` (see the module notes).
#[derive(Debug, Clone, Default)]
pub struct SdpProblem {
    /// Number of variables `y`.
    pub variables: usize,
    /// `c` (maximised) and `c0`.
    pub objective: Vec<f64>,
    /// `c0`.
    pub objective_constant: f64,
    /// Rows `(terms, e)` of `E y = e`.
    pub equalities: Vec<(Vec<(usize, f64)>, f64)>,
    /// Rows `(terms, g)` of `G y ≤ g`.
    pub inequalities: Vec<(Vec<(usize, f64)>, f64)>,
    /// The matrices that must be positive semidefinite.
    pub blocks: Vec<MatrixBlock>,
    /// A bound on `|y_m|` over every point the certified bound must cover.
    pub variable_bound: f64,
    /// Per-variable bounds on `|y_m|`, replacing [`SdpProblem::variable_bound`] when not empty
    /// (then one per variable): for relaxations whose moments are not all bounded by one, such
    /// as those with operators of norm above one.
    pub variable_bounds: Vec<f64>,
}

/// The problem in conic form (minimise `qᵀy` with `A y + s = b`, `s` in the zero, non-negative
/// and PSD-triangle cones, in that order), kept for certificate checks.
pub struct Assembled {
    /// The constraint matrix `A`.
    pub a: CscMatrix<f64>,
    /// The right-hand side `b`.
    pub b: Vec<f64>,
    /// The (minimised) objective `q = −c`.
    pub q: Vec<f64>,
    /// Rows of the zero cone.
    pub equalities: usize,
    /// Rows of the non-negative cone.
    pub inequalities: usize,
    /// Side of each PSD block, in order.
    pub block_sizes: Vec<usize>,
    /// [`MatrixBlock::trace_bound`] of each block.
    pub trace_bounds: Vec<f64>,
    /// The bound on `|y_m|` of each variable ([`SdpProblem::variable_bounds`], or
    /// [`SdpProblem::variable_bound`] for every variable).
    pub variable_bounds: Vec<f64>,
    /// `c0`.
    pub objective_constant: f64,
}

/// A backend's answer: the objective values, the verified bound and the point.
#[derive(Debug, Clone, Serialize)]
pub struct SdpSolution {
    /// Primal objective (including the constant), as the solver found it.
    pub primal: f64,
    /// Dual objective (including the constant), as the solver found it.
    pub dual: f64,
    /// Bound that holds despite solver and rounding error (see the module notes).
    pub certified: f64,
    /// How the run ended (always [`SolveStatus::Solved`] or [`SolveStatus::AlmostSolved`]: a
    /// backend that ends otherwise returns an error).
    pub status: SolveStatus,
    /// Iterations taken.
    pub iterations: u32,
    /// Wall-clock time.
    pub seconds: f64,
    /// Relative duality gap and largest relative residual at the returned point.
    pub gap: f64,
    /// Largest relative residual at the returned point.
    pub residual: f64,
    /// Which backend produced the point.
    pub solver: Backend,
    /// The primal point.
    #[serde(skip)]
    pub y: Vec<f64>,
    /// The dual vector in the layout of [`SdpProblem::assemble`]: the certificate.
    #[serde(skip)]
    pub z: Vec<f64>,
}

/// Position of (row, col), row ≤ col, in the column-stacked upper triangle.
pub fn upper_index(row: usize, col: usize) -> usize {
    col * (col + 1) / 2 + row
}

impl SdpProblem {
    /// `c·y + c0` at a primal point.
    pub fn primal_value(&self, y: &[f64]) -> f64 {
        self.objective_constant
            + y.iter()
                .zip(&self.objective)
                .map(|(y, c)| y * c)
                .sum::<f64>()
    }

    /// Rows of the conic form ([`SdpProblem::assemble`]): equalities, inequalities and each
    /// block's upper triangle; the length of every dual vector.
    pub fn conic_rows(&self) -> usize {
        self.equalities.len()
            + self.inequalities.len()
            + self
                .blocks
                .iter()
                .map(|b| b.size * (b.size + 1) / 2)
                .sum::<usize>()
    }

    /// The problem in conic form (the layout of every backend's dual vector).
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
            variable_bounds: if self.variable_bounds.len() == self.variables {
                self.variable_bounds.clone()
            } else {
                vec![self.variable_bound; self.variables]
            },
            objective_constant: self.objective_constant,
        }
    }
}

/// Which SDP solver to use (or which one produced a solution). Serialised in kebab case:
/// `auto`, `clarabel`, `moment-ipm`, `first-order`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Backend {
    /// Chosen by size ([`super::backend::choose`]), with the other as fallback.
    #[default]
    Auto,
    /// clarabel, with the PSD cone as a dense triangle block.
    Clarabel,
    /// The moment-matrix interior-point method (HKM with Mehrotra steps on the m×m Schur
    /// complement, m = number of moments).
    MomentIpm,
    /// The first-order method (ADMM on the dual, one eigendecomposition per block and
    /// iteration; nothing of size m²), for what the interior-point method cannot hold.
    FirstOrder,
}

impl Backend {
    /// The name used in JSON and text output.
    pub fn name(self) -> &'static str {
        match self {
            Backend::Auto => "auto",
            Backend::Clarabel => "clarabel",
            Backend::MomentIpm => "moment-ipm",
            Backend::FirstOrder => "first-order",
        }
    }
}

impl std::fmt::Display for Backend {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// A solver of [`SdpProblem`]s. A backend returns a solution only when it ended solved or almost
/// solved, with its dual vector in [`SdpProblem::assemble`]'s layout and the verified bound
/// computed from it ([`super::certify`]); any other end is an error.
pub trait SdpBackend {
    /// Which backend this is.
    fn backend(&self) -> Backend;
    /// Solves `problem`; `stage` names it in error messages.
    fn solve(&self, problem: &SdpProblem, stage: &str) -> Result<SdpSolution>;
}

impl Assembled {
    /// `bᵀz + c0` at a dual vector (the solver's dual objective; not a bound by itself, see
    /// [`Assembled::certified_bound`]).
    pub fn dual_value(&self, z: &[f64]) -> f64 {
        self.objective_constant + z.iter().zip(&self.b).map(|(z, b)| z * b).sum::<f64>()
    }
}
