//! A first-order method for SDPs too large for the interior-point method: the alternating
//! direction method of multipliers on the dual, in the form of Wen, Goldfarb & Yin (Math. Prog.
//! Comp. 2, 203–230 (2010), "Alternating direction augmented Lagrangian methods for
//! semidefinite programming", their Algorithm 1), with the penalty balanced by residuals
//! (Boyd et al., Found. Trends Mach. Learn. 3, 1–122 (2011), §3.4.1).
//!
//! In the layout of [`super::sdp::SdpProblem::assemble`] (minimise `qᵀy` with `A y + s = b`, `s`
//! in the cone `K` of zero, non-negative and PSD-triangle parts, `K` self-dual), one iteration
//! with penalty μ is
//!
//! ```text
//! y ← (AᵀA)⁻¹ (−Aᵀ(μ z + S − b) − μ q)
//! V ← b − A y − μ z
//! S ← Π_K(V)            (one eigendecomposition per PSD block)
//! z ← (S − V) / μ       (= Π_K(−V)/μ, so z stays in K: every iterate is a dual point)
//! ```
//!
//! The map `(z, S) ↦ (z', S')` is a fixed-point iteration, accelerated by type-II Anderson
//! acceleration with a safeguard (`Anderson` below): on well-posed problems it cuts the
//! iterations several-fold; on degenerate ones (I3322, whose NPA optimum is far from strictly
//! complementary) convergence stays slow, and a run is best given a budget.
//!
//! For a full NPA matrix every entry carries one moment, so the columns of `A` have disjoint
//! supports and `AᵀA` is diagonal; otherwise the `y` step is solved by conjugate gradients with a
//! Jacobi preconditioner, warm-started at the previous `y`. Either way the method stores `A`, the
//! vectors and one dense matrix per PSD block: nothing of size m² (m = variables).
//!
//! The dual iterate `z` goes through the same verified-bound step as every backend's
//! ([`super::certify`]), so a run stopped early (iteration or time limit) still proves a
//! rigorous, if looser, bound; it is then reported with that status, never as solved.

use std::time::Instant;

use faer::linalg::matmul::matmul;
use faer::{Accum, Mat, Par};
use rayon::prelude::*;

use super::sdp::{Assembled, Backend, SdpProblem, SdpSolution};
use super::SolveStatus;
use crate::error::{Error, Result};

/// Default iteration limit: five times the iterations the time estimate plans for (see
/// `npa::FIRST_ORDER_PLANNED_ITERATIONS`), so a run never takes more than five times its
/// announced estimate.
pub const MAX_ITERATIONS: u32 = 10_000;

/// Tolerances and limits of the method.
#[derive(Debug, Clone, Copy)]
pub struct FirstOrderOptions {
    /// Relative primal and dual residuals and duality gap to reach.
    pub tolerance: f64,
    /// Iterations before the run stops with what it has.
    pub max_iterations: u32,
    /// Seconds before the run stops with what it has.
    pub max_seconds: f64,
    /// Seconds between two verified-bound checks reported as progress.
    pub report_every_seconds: f64,
    /// Give up (status [`SolveStatus::Stalled`]) as soon as the run's own convergence predicts
    /// it would need more seconds than this in all (default: never). The automatic choice sets
    /// it to the other method's expected time, so a run that would lose the race stops early.
    pub give_up_beyond_seconds: f64,
}

impl Default for FirstOrderOptions {
    fn default() -> Self {
        FirstOrderOptions {
            tolerance: 1e-9,
            max_iterations: MAX_ITERATIONS,
            max_seconds: f64::INFINITY,
            report_every_seconds: 2.0,
            give_up_beyond_seconds: f64::INFINITY,
        }
    }
}

/// Where a running solver stands, for progress reports.
#[derive(Debug, Clone, Copy)]
pub struct IterationReport {
    /// Iterations done.
    pub iteration: u32,
    /// Primal objective at the current point (not a bound by itself).
    pub primal: f64,
    /// Dual objective at the current point (not a bound by itself).
    pub dual: f64,
    /// The verified bound of the current dual point.
    pub verified: f64,
    /// Largest relative residual.
    pub residual: f64,
    /// Seconds since the start.
    pub seconds: f64,
}

/// A progress callback.
pub type IterationProgress<'a> = &'a (dyn Fn(&IterationReport) + Sync);

/// A starting point: the primal `y` and the dual vector in the assembled layout (for instance a
/// previous, looser run's solution).
#[derive(Debug, Clone, Copy)]
pub struct WarmStart<'a> {
    /// Primal variables.
    pub y: &'a [f64],
    /// Dual vector.
    pub z: &'a [f64],
}

/// How to solve `y`'s normal equations `AᵀA y = r`.
enum Normal {
    /// Disjoint column supports: `AᵀA` is diagonal.
    Diagonal(Vec<f64>),
    /// Conjugate gradients with the diagonal as preconditioner.
    Iterative(Vec<f64>),
}

/// Offsets of the cone parts in the assembled layout.
struct Layout {
    zero_end: usize,
    nonneg_end: usize,
    /// (offset, side) of each PSD block.
    blocks: Vec<(usize, usize)>,
}

impl Layout {
    fn of(asm: &Assembled) -> Layout {
        let zero_end = asm.equalities;
        let nonneg_end = zero_end + asm.inequalities;
        let mut offset = nonneg_end;
        let blocks = asm
            .block_sizes
            .iter()
            .map(|&n| {
                let b = (offset, n);
                offset += n * (n + 1) / 2;
                b
            })
            .collect();
        Layout {
            zero_end,
            nonneg_end,
            blocks,
        }
    }
}

/// `out = A x` (rows of the assembled layout).
fn apply(asm: &Assembled, x: &[f64], out: &mut [f64]) {
    out.iter_mut().for_each(|v| *v = 0.0);
    for (j, &xj) in x.iter().enumerate() {
        if xj == 0.0 {
            continue;
        }
        for k in asm.a.colptr[j]..asm.a.colptr[j + 1] {
            out[asm.a.rowval[k]] += asm.a.nzval[k] * xj;
        }
    }
}

/// `out = Aᵀ v` (one entry per variable).
fn apply_transpose(asm: &Assembled, v: &[f64], out: &mut [f64]) {
    let column = |j: usize| -> f64 {
        (asm.a.colptr[j]..asm.a.colptr[j + 1])
            .map(|k| asm.a.nzval[k] * v[asm.a.rowval[k]])
            .sum()
    };
    // Below this many nonzeros waking the second core costs more than the product.
    if asm.a.nzval.len() < PARALLEL_PRODUCT_NONZEROS {
        out.iter_mut().enumerate().for_each(|(j, o)| *o = column(j));
    } else {
        out.par_iter_mut()
            .enumerate()
            .for_each(|(j, o)| *o = column(j));
    }
}

/// Nonzeros of A from which `Aᵀv` is computed on both cores.
const PARALLEL_PRODUCT_NONZEROS: usize = 1 << 18;

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

impl Normal {
    fn of(asm: &Assembled) -> Normal {
        let diagonal: Vec<f64> = (0..asm.a.n)
            .map(|j| {
                (asm.a.colptr[j]..asm.a.colptr[j + 1])
                    .map(|k| asm.a.nzval[k] * asm.a.nzval[k])
                    .sum()
            })
            .collect();
        if asm.columns_disjoint() {
            Normal::Diagonal(diagonal)
        } else {
            Normal::Iterative(diagonal)
        }
    }

    /// Solves `AᵀA y = r` into `y` (which holds the previous solution as the starting point).
    /// A variable in no constraint gets 0.
    fn solve(&self, asm: &Assembled, r: &[f64], y: &mut [f64]) {
        match self {
            Normal::Diagonal(d) => {
                for ((y, r), d) in y.iter_mut().zip(r).zip(d) {
                    *y = if *d > 0.0 { r / d } else { 0.0 };
                }
            }
            Normal::Iterative(d) => conjugate_gradients(asm, d, r, y),
        }
    }
}

/// Preconditioned conjugate gradients on `AᵀA y = r`, to a relative residual of 1e-13 or 500
/// steps (the ADMM step tolerates an inexact solve; the next iteration corrects it).
fn conjugate_gradients(asm: &Assembled, d: &[f64], r: &[f64], y: &mut [f64]) {
    let m = y.len();
    let mut work = vec![0.0; asm.a.m];
    let mut normal = |x: &[f64], out: &mut [f64]| {
        apply(asm, x, &mut work);
        apply_transpose(asm, &work, out);
    };
    let precondition = |res: &[f64], out: &mut [f64]| {
        for ((o, r), d) in out.iter_mut().zip(res).zip(d) {
            *o = if *d > 0.0 { r / d } else { 0.0 };
        }
    };
    for (yj, dj) in y.iter_mut().zip(d) {
        if *dj == 0.0 {
            *yj = 0.0;
        }
    }
    let mut ax = vec![0.0; m];
    normal(y, &mut ax);
    let mut res: Vec<f64> = r.iter().zip(&ax).map(|(r, a)| r - a).collect();
    let target = 1e-13 * norm(r).max(f64::MIN_POSITIVE);
    let mut pre = vec![0.0; m];
    precondition(&res, &mut pre);
    let mut dir = pre.clone();
    let mut rho = dot(&res, &pre);
    for _ in 0..500 {
        if norm(&res) <= target {
            break;
        }
        normal(&dir, &mut ax);
        let curvature = dot(&dir, &ax);
        if curvature <= 0.0 {
            break;
        }
        let alpha = rho / curvature;
        for j in 0..m {
            y[j] += alpha * dir[j];
            res[j] -= alpha * ax[j];
        }
        precondition(&res, &mut pre);
        let next = dot(&res, &pre);
        let beta = next / rho;
        rho = next;
        for j in 0..m {
            dir[j] = pre[j] + beta * dir[j];
        }
    }
}

/// Symmetric matrix from its scaled upper triangle (off-diagonals carry √2).
fn unpack(v: &[f64], n: usize) -> Mat<f64> {
    let mut m = Mat::<f64>::zeros(n, n);
    let mut k = 0;
    for col in 0..n {
        for row in 0..=col {
            if row == col {
                m[(row, col)] = v[k];
            } else {
                let x = v[k] * std::f64::consts::FRAC_1_SQRT_2;
                m[(row, col)] = x;
                m[(col, row)] = x;
            }
            k += 1;
        }
    }
    m
}

/// The scaled upper triangle of a symmetric matrix, into `out`.
fn pack(m: &Mat<f64>, out: &mut [f64]) {
    let n = m.nrows();
    let mut k = 0;
    for col in 0..n {
        for row in 0..=col {
            out[k] = if row == col {
                m[(row, col)]
            } else {
                // Average the two triangles: products are symmetric only up to rounding.
                (m[(row, col)] + m[(col, row)]) * std::f64::consts::FRAC_1_SQRT_2
            };
            k += 1;
        }
    }
}

/// Eigendecomposition of a symmetric matrix given by its scaled upper triangle: eigenvalues
/// (ascending) and eigenvectors as columns.
fn eigen(v: &[f64], n: usize, par: Par) -> Result<(Vec<f64>, Mat<f64>)> {
    let a = unpack(v, n);
    let mut values = faer::diag::Diag::<f64>::zeros(n);
    let mut vectors = Mat::<f64>::zeros(n, n);
    let mut memory =
        faer::dyn_stack::MemBuffer::new(faer::linalg::evd::self_adjoint_evd_scratch::<f64>(
            n,
            faer::linalg::evd::ComputeEigenvectors::Yes,
            par,
            Default::default(),
        ));
    faer::linalg::evd::self_adjoint_evd(
        a.as_ref(),
        values.as_mut(),
        Some(vectors.as_mut()),
        par,
        faer::dyn_stack::MemStack::new(&mut memory),
        Default::default(),
    )
    .map_err(|_| {
        Error::solver(
            "first-order method",
            "an eigendecomposition did not converge",
        )
    })?;
    Ok(((0..n).map(|i| values[i]).collect(), vectors))
}

/// `Σ_{i ∈ chosen} |λ_i| u_i u_iᵀ` as a dense matrix.
fn spectral_part(values: &[f64], vectors: &Mat<f64>, chosen: &[usize], par: Par) -> Mat<f64> {
    let n = vectors.nrows();
    let mut w = Mat::<f64>::zeros(n, chosen.len());
    for (c, &i) in chosen.iter().enumerate() {
        let s = values[i].abs().sqrt();
        for r in 0..n {
            w[(r, c)] = vectors[(r, i)] * s;
        }
    }
    let mut part = Mat::<f64>::zeros(n, n);
    if !chosen.is_empty() {
        matmul(
            part.as_mut(),
            Accum::Replace,
            w.as_ref(),
            w.transpose(),
            1.0,
            par,
        );
    }
    part
}

/// Splits a symmetric `v` (scaled upper triangle) into its PSD part, written to `plus`, and
/// `minus = plus − v` (the PSD part of −v), by one eigendecomposition; the smaller of the two
/// spectral parts is multiplied out and the other follows by difference.
fn split_psd(v: &[f64], n: usize, par: Par, plus: &mut [f64], minus: &mut [f64]) -> Result<()> {
    let (values, vectors) = eigen(v, n, par)?;
    let positive: Vec<usize> = (0..n).filter(|&i| values[i] > 0.0).collect();
    let negative: Vec<usize> = (0..n).filter(|&i| values[i] < 0.0).collect();
    if positive.len() <= negative.len() {
        pack(&spectral_part(&values, &vectors, &positive, par), plus);
        for k in 0..v.len() {
            minus[k] = plus[k] - v[k];
        }
    } else {
        pack(&spectral_part(&values, &vectors, &negative, par), minus);
        for k in 0..v.len() {
            plus[k] = v[k] + minus[k];
        }
    }
    Ok(())
}

/// `plus = Π_K(v)` and `minus = Π_K(−v) = plus − v` over every cone part.
fn split_cone(layout: &Layout, v: &[f64], plus: &mut [f64], minus: &mut [f64]) -> Result<()> {
    for k in 0..layout.zero_end {
        plus[k] = 0.0;
        minus[k] = -v[k];
    }
    for k in layout.zero_end..layout.nonneg_end {
        plus[k] = v[k].max(0.0);
        minus[k] = (-v[k]).max(0.0);
    }
    let start = layout.nonneg_end;
    // Split the PSD parts of the three vectors into per-block slices.
    let mut plus_parts = Vec::with_capacity(layout.blocks.len());
    let mut minus_parts = Vec::with_capacity(layout.blocks.len());
    let (mut p_rest, mut m_rest) = (&mut plus[start..], &mut minus[start..]);
    for &(_, n) in &layout.blocks {
        let len = n * (n + 1) / 2;
        let (p, pr) = std::mem::take(&mut p_rest).split_at_mut(len);
        let (m, mr) = std::mem::take(&mut m_rest).split_at_mut(len);
        plus_parts.push(p);
        minus_parts.push(m);
        p_rest = pr;
        m_rest = mr;
    }
    if layout.blocks.len() == 1 {
        let (offset, n) = layout.blocks[0];
        let par = if n < PARALLEL_EIGEN_SIDE {
            Par::Seq
        } else {
            Par::rayon(0)
        };
        return split_psd(
            &v[offset..offset + n * (n + 1) / 2],
            n,
            par,
            plus_parts.pop().expect("one block"),
            minus_parts.pop().expect("one block"),
        );
    }
    layout
        .blocks
        .par_iter()
        .zip(plus_parts.into_par_iter())
        .zip(minus_parts.into_par_iter())
        .map(|((&(offset, n), p), m)| {
            split_psd(&v[offset..offset + n * (n + 1) / 2], n, Par::Seq, p, m)
        })
        .collect::<Result<Vec<()>>>()?;
    Ok(())
}

/// Smallest block whose eigendecomposition uses both cores: below it faer's parallel
/// tridiagonal reduction costs more in synchronisation than it saves (measured on 2 cores:
/// 3.2 against 4.2 ms at side 169, 231 against 250 ms at 1000, 801 against 671 ms at 1500).
const PARALLEL_EIGEN_SIDE: usize = 1200;

/// Anderson acceleration's memory (past iterates kept). Measured over nine check relaxations
/// (2026-12-02, with the monotone safeguard): 19,413 iterations in all with memory 5, 17,213 with 10, 14,430 with 20,
/// 14,118 with 30, 14,353 with 40. Each stored pair costs two vectors of the state's length, so
/// 20 takes nearly all of the gain at two thirds of 30's memory.
pub const ANDERSON_MEMORY: usize = 20;

/// How far an accelerated point's fixed-point residual may rise above the smallest one since
/// the acceleration last started before it is rejected. A strictly monotone test (1.0)
/// rejected one accelerated step in five on the random 4×4 game at `1+joint` and took 659
/// iterations; 1.2 takes 422 there and 14,158 over the nine check relaxations against 14,430
/// (1.5: 14,167; 2: 14,217). The envelope only shrinks between restarts, so accepted residuals
/// stay bounded, in the spirit of the non-monotone safeguard of Zhang, O'Donoghue & Boyd (2020).
const SAFEGUARD_GROWTH: f64 = 1.2;

/// Iterations between two adjustments of the penalty μ.
const PENALTY_PERIOD: u32 = 50;

/// Measures of one iteration's result.
#[derive(Debug, Clone, Copy)]
struct Step {
    primal_residual: f64,
    dual_residual: f64,
    gap: f64,
    primal: f64,
    dual: f64,
}

/// The data and work vectors of the ADMM iteration.
struct Admm<'a> {
    asm: &'a Assembled,
    layout: Layout,
    normal: Normal,
    /// The primal point of the latest iteration.
    y: Vec<f64>,
    ay: Vec<f64>,
    rows_work: Vec<f64>,
    variables_work: Vec<f64>,
    norm_b: f64,
    norm_q: f64,
}

impl<'a> Admm<'a> {
    fn new(asm: &'a Assembled) -> Admm<'a> {
        let (rows, m) = (asm.b.len(), asm.q.len());
        Admm {
            asm,
            layout: Layout::of(asm),
            normal: Normal::of(asm),
            y: vec![0.0; m],
            ay: vec![0.0; rows],
            rows_work: vec![0.0; rows],
            variables_work: vec![0.0; m],
            norm_b: norm(&asm.b),
            norm_q: norm(&asm.q),
        }
    }

    /// One iteration from `(z, s)` with penalty μ into `(z_out, s_out)` (see the module notes);
    /// `z_out` is in `K` whatever `z` is.
    fn step(
        &mut self,
        z: &[f64],
        s: &[f64],
        mu: f64,
        z_out: &mut [f64],
        s_out: &mut [f64],
    ) -> Result<Step> {
        let asm = self.asm;
        let rows = z.len();
        for (k, w) in self.rows_work.iter_mut().enumerate() {
            *w = mu * z[k] + s[k] - asm.b[k];
        }
        apply_transpose(asm, &self.rows_work, &mut self.variables_work);
        for (r, q) in self.variables_work.iter_mut().zip(&asm.q) {
            *r = -*r - mu * q;
        }
        self.normal.solve(asm, &self.variables_work, &mut self.y);
        apply(asm, &self.y, &mut self.ay);
        for (k, w) in self.rows_work.iter_mut().enumerate() {
            *w = asm.b[k] - self.ay[k] - mu * z[k];
        }
        split_cone(&self.layout, &self.rows_work, s_out, z_out)?;
        // z_out = Π_K(−V)/μ; and b − A y − S = μ (z − z_out).
        let mut change = 0.0;
        for k in 0..rows {
            z_out[k] /= mu;
            change += (z[k] - z_out[k]) * (z[k] - z_out[k]);
        }
        apply_transpose(asm, z_out, &mut self.variables_work);
        let dual_residual = self
            .variables_work
            .iter()
            .zip(&asm.q)
            .map(|(a, q)| (a + q) * (a + q))
            .sum::<f64>()
            .sqrt()
            / (1.0 + self.norm_q);
        let primal = -dot(&asm.q, &self.y) + asm.objective_constant;
        let dual = dot(&asm.b, z_out) + asm.objective_constant;
        Ok(Step {
            primal_residual: mu * change.sqrt() / (1.0 + self.norm_b),
            dual_residual,
            gap: (primal - dual).abs() / (1.0 + primal.abs() + dual.abs()),
            primal,
            dual,
        })
    }
}

/// Type-II Anderson acceleration of a fixed-point iteration `x ← T(x)` (Walker & Ni, SIAM J.
/// Numer. Anal. 49, 1715–1735 (2011)), with the safeguard of Zhang, O'Donoghue & Boyd (SIAM J.
/// Optim. 30, 3170–3197 (2020)): an extrapolated point whose residual grew is dropped for the
/// plain step, and the memory cleared.
struct Anderson {
    /// Differences of iterates and of residuals, oldest first.
    dx: Vec<Vec<f64>>,
    df: Vec<Vec<f64>>,
    /// Inner products of the residual differences, kept up to date as they come and go.
    gram: Vec<Vec<f64>>,
    last_x: Option<Vec<f64>>,
    last_f: Option<Vec<f64>>,
}

impl Anderson {
    fn new() -> Anderson {
        Anderson {
            dx: Vec::new(),
            df: Vec::new(),
            gram: Vec::new(),
            last_x: None,
            last_f: None,
        }
    }

    fn clear(&mut self) {
        *self = Anderson::new();
    }

    /// The next iterate from `x` and its residual `f = T(x) − x`.
    fn next(&mut self, x: &[f64], f: &[f64]) -> Vec<f64> {
        if let (Some(lx), Some(lf)) = (&self.last_x, &self.last_f) {
            if self.dx.len() == ANDERSON_MEMORY {
                self.dx.remove(0);
                self.df.remove(0);
                self.gram.remove(0);
                for row in &mut self.gram {
                    row.remove(0);
                }
            }
            self.dx.push(x.iter().zip(lx).map(|(a, b)| a - b).collect());
            let new: Vec<f64> = f.iter().zip(lf).map(|(a, b)| a - b).collect();
            let products: Vec<f64> = self.df.iter().map(|d| dot(d, &new)).collect();
            for (row, p) in self.gram.iter_mut().zip(&products) {
                row.push(*p);
            }
            let mut row = products;
            row.push(dot(&new, &new));
            self.gram.push(row);
            self.df.push(new);
        }
        self.last_x = Some(x.to_vec());
        self.last_f = Some(f.to_vec());
        let k = self.df.len();
        let plain: Vec<f64> = x.iter().zip(f).map(|(x, f)| x + f).collect();
        if k == 0 {
            return plain;
        }
        // γ = argmin ‖f − ΔF γ‖ by the normal equations, lightly regularised.
        let rhs = nalgebra::DVector::from_iterator(k, self.df.iter().map(|d| dot(d, f)));
        let mut gram = nalgebra::DMatrix::from_fn(k, k, |i, j| self.gram[i][j]);
        let trace = gram.trace();
        if trace.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) || !trace.is_finite() {
            return plain;
        }
        for i in 0..k {
            gram[(i, i)] += 1e-10 * trace;
        }
        let Some(gamma) = gram
            .lu()
            .solve(&rhs)
            .filter(|g| g.iter().all(|v| v.is_finite()))
        else {
            return plain;
        };
        let mut out = plain;
        for (i, g) in gamma.iter().enumerate() {
            for (o, (dx, df)) in out.iter_mut().zip(self.dx[i].iter().zip(&self.df[i])) {
                *o -= g * (dx + df);
            }
        }
        out
    }
}

/// Solves `problem` by the first-order method (see the module notes). `warm_start` starts from a
/// previous point; `progress` receives the iteration count and the current verified bound
/// every [`FirstOrderOptions::report_every_seconds`].
pub fn solve(
    problem: &SdpProblem,
    stage: &str,
    options: &FirstOrderOptions,
    warm_start: Option<WarmStart>,
    progress: Option<IterationProgress>,
) -> Result<SdpSolution> {
    let start = Instant::now();
    let asm = problem.assemble();
    let mut admm = Admm::new(&asm);
    let rows = asm.b.len();
    // The state x = (z, S), iterated by the ADMM map T and accelerated.
    let mut x = vec![0.0; 2 * rows];
    if let Some(w) = warm_start {
        if w.y.len() != problem.variables || w.z.len() != rows {
            return Err(Error::solver(
                stage,
                "the warm start does not match the problem's size",
            ));
        }
        let (z, s) = x.split_at_mut(rows);
        let mut scratch = vec![0.0; rows];
        split_cone(&admm.layout, w.z, z, &mut scratch)?;
        apply(&asm, w.y, &mut admm.ay);
        let slack: Vec<f64> = (0..rows).map(|k| asm.b[k] - admm.ay[k]).collect();
        split_cone(&admm.layout, &slack, s, &mut scratch)?;
        admm.y.copy_from_slice(w.y);
    }
    let mut tx = vec![0.0; 2 * rows];
    let mut anderson = Anderson::new();
    // The plain step from the last accepted point, kept in case an extrapolation is rejected.
    let mut fallback: Option<(Vec<f64>, f64)> = None;
    let mut mu = 1.0;
    let trace = std::env::var_os("BELLGAP_FO_TRACE").is_some();
    let mut last_report = Instant::now();
    let mut iteration = 0u32;
    let mut status = SolveStatus::IterationLimit;
    let mut last = Step {
        primal_residual: f64::INFINITY,
        dual_residual: f64::INFINITY,
        gap: 1.0,
        primal: f64::NAN,
        dual: f64::NAN,
    };
    // The latest z in K (the dual point every bound is computed from).
    let mut z_in_cone = vec![0.0; rows];
    let mut rejected = 0u32;
    let mut envelope = f64::INFINITY;
    let mut forecast = Forecast::default();
    while iteration < options.max_iterations {
        if start.elapsed().as_secs_f64() > options.max_seconds || crate::limits::stop_requested() {
            status = SolveStatus::TimeLimit;
            break;
        }
        iteration += 1;
        {
            let (z, s) = x.split_at(rows);
            let (tz, ts) = tx.split_at_mut(rows);
            last = admm.step(z, s, mu, tz, ts)?;
            z_in_cone.copy_from_slice(tz);
        }
        let f: Vec<f64> = tx.iter().zip(&x).map(|(t, x)| t - x).collect();
        let f_norm = norm(&f);
        if trace && (iteration.is_multiple_of(50) || iteration < 5) {
            eprintln!(
                "fo {iteration:6} mu {mu:.2e} P {:.10} D {:.10} pres {:.2e} dres {:.2e} gap {:.2e} |f| {f_norm:.2e} rej {rejected} {:.2}s",
                last.primal,
                last.dual,
                last.primal_residual,
                last.dual_residual,
                last.gap,
                start.elapsed().as_secs_f64()
            );
        }
        if last.primal_residual <= options.tolerance
            && last.dual_residual <= options.tolerance
            && last.gap <= options.tolerance
        {
            status = SolveStatus::Solved;
            break;
        }
        if options.give_up_beyond_seconds.is_finite()
            && forecast.would_exceed(
                start.elapsed().as_secs_f64(),
                &last,
                options.tolerance,
                options.give_up_beyond_seconds,
            )
        {
            status = SolveStatus::Stalled;
            break;
        }
        if let Some(report) = progress {
            if last_report.elapsed().as_secs_f64() >= options.report_every_seconds {
                let (bound, _) = asm.best_certified_bound(&z_in_cone)?;
                report(&IterationReport {
                    iteration,
                    primal: last.primal,
                    dual: last.dual,
                    verified: bound,
                    residual: last.primal_residual.max(last.dual_residual),
                    seconds: start.elapsed().as_secs_f64(),
                });
                last_report = Instant::now();
            }
        }
        // Safeguard: an extrapolated point whose residual exceeds the envelope (a little above
        // the smallest residual since the acceleration last started) gives way to the plain
        // step.
        if let Some((plain, plain_norm)) = fallback.take() {
            envelope = envelope.min(plain_norm);
            if f_norm > SAFEGUARD_GROWTH * envelope {
                rejected += 1;
                x = plain;
                anderson.clear();
                envelope = f64::INFINITY;
                continue;
            }
        }
        // Residual balancing of the penalty (a large primal residual asks for a larger 1/μ);
        // the map changes with μ, so the acceleration starts afresh.
        if iteration.is_multiple_of(PENALTY_PERIOD) {
            let ratio = last.primal_residual / last.dual_residual.max(f64::MIN_POSITIVE);
            let new_mu = if ratio > 5.0 {
                (mu / 2.0).max(1e-6)
            } else if ratio < 0.2 {
                (mu * 2.0).min(1e6)
            } else {
                mu
            };
            if new_mu != mu {
                mu = new_mu;
                anderson.clear();
                envelope = f64::INFINITY;
                x.copy_from_slice(&tx);
                continue;
            }
        }
        let next = anderson.next(&x, &f);
        fallback = Some((tx.clone(), f_norm));
        x = next;
    }
    let (certified, z) = asm.best_certified_bound(&z_in_cone)?;
    let primal = problem.primal_value(&admm.y);
    Ok(SdpSolution {
        primal,
        dual: asm.dual_value(&z),
        certified,
        status,
        iterations: iteration,
        seconds: start.elapsed().as_secs_f64(),
        gap: last.gap,
        residual: last.primal_residual.max(last.dual_residual),
        solver: Backend::FirstOrder,
        y: admm.y,
        z,
    })
}

/// The run's time to convergence, forecast from its own progress: how many orders of magnitude
/// the worst of the relative residuals and gap still has to fall to reach the tolerance, over
/// the rate at which their best value so far has fallen since the first iteration.
#[derive(Debug, Default)]
struct Forecast {
    /// (seconds, orders of magnitude above the tolerance) at the first iteration.
    first: Option<(f64, f64)>,
    /// The fewest orders of magnitude above the tolerance so far.
    best: f64,
    /// Iterations seen.
    iterations: usize,
    /// When the forecast was last made.
    last_check: f64,
}

/// The share of the allowed time after which the first forecast is made, and between two.
const FORECAST_FIRST: f64 = 0.25;
const FORECAST_EVERY: f64 = 0.1;

impl Forecast {
    /// Whether the run, at `seconds` and at the point `last`, is forecast to need more than
    /// `allowed` seconds in all.
    fn would_exceed(&mut self, seconds: f64, last: &Step, tolerance: f64, allowed: f64) -> bool {
        let worst = last
            .primal_residual
            .max(last.dual_residual)
            .max(last.gap)
            .max(tolerance);
        let orders = (worst / tolerance).log10();
        let (t0, b0) = *self.first.get_or_insert((seconds, orders));
        self.best = if self.iterations == 0 {
            orders
        } else {
            self.best.min(orders)
        };
        self.iterations += 1;
        if seconds < FORECAST_FIRST * allowed
            || seconds < self.last_check + FORECAST_EVERY * allowed
            || self.iterations < 50
        {
            return false;
        }
        self.last_check = seconds;
        // The rate since the first iteration: plateaus that end in an abrupt drop (the
        // acceleration finding the fixed point) are common, and a recent window would mistake
        // them for a stall; the rate over the whole run only catches runs far off pace.
        let rate = (b0 - self.best) / (seconds - t0).max(f64::MIN_POSITIVE);
        let remaining = if rate > 0.0 {
            self.best / rate
        } else {
            f64::INFINITY
        };
        seconds + remaining > allowed
    }
}

/// The first-order method as a backend, with the default options.
pub struct FirstOrderBackend;

impl super::sdp::SdpBackend for FirstOrderBackend {
    fn backend(&self) -> Backend {
        Backend::FirstOrder
    }

    fn solve(&self, problem: &SdpProblem, stage: &str) -> Result<SdpSolution> {
        solve(problem, stage, &FirstOrderOptions::default(), None, None)
    }
}
