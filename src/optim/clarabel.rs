//! The clarabel backend: the SDP with its PSD cone as a dense triangle block (and the LP adapter's
//! runner). Accurate and general, but its cost grows as (n(n+1)/2)³ per block, so the automatic
//! choice in [`super::backend`] prefers the moment-matrix method on large moment matrices.

use std::time::Instant;

use clarabel::algebra::CscMatrix;
use clarabel::solver::{
    DefaultSettingsBuilder, DefaultSolver, IPSolver, SolverStatus, SupportedConeT,
};
use faer::Mat;

use super::sdp::{Backend, SdpProblem, SdpSolution};
use super::SolveStatus;
use crate::error::{Error, Result};

/// Solves with clarabel. A run that ends in any state but solved or almost solved is an
/// error: no number is reported as a bound unless it is one.
///
/// Redundant equality rows (the invariance equations of a symmetry reduction are) make
/// clarabel's KKT system singular; it then stops with a numerical error at its first
/// iteration. So clarabel sees only a numerically independent subset of the rows, and the
/// dropped rows get dual zero: they are combinations of the kept ones, so the dual vector in
/// the full layout has the same `Aᵀz` and the certified bound is checked on the full problem.
pub fn solve_sdp(problem: &SdpProblem, stage: &str) -> Result<SdpSolution> {
    let start = Instant::now();
    let kept = independent_equalities(problem);
    let reduced;
    let solved = if kept.len() < problem.equalities.len() {
        reduced = SdpProblem {
            equalities: kept
                .iter()
                .map(|&r| problem.equalities[r].clone())
                .collect(),
            ..problem.clone()
        };
        &reduced
    } else {
        problem
    };
    let asm = solved.assemble();
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
    let p = CscMatrix::zeros((problem.variables, problem.variables));
    let (solver, status) = run_clarabel(&p, &asm.q, &asm.a, &asm.b, &cones, 1e-9, stage)?;
    let y = solver.solution.x.clone();
    let (z, asm) = if kept.len() < problem.equalities.len() {
        let full = problem.assemble();
        let mut z = vec![0.0; full.b.len()];
        for (i, &r) in kept.iter().enumerate() {
            z[r] = solver.solution.z[i];
        }
        z[problem.equalities.len()..].copy_from_slice(&solver.solution.z[kept.len()..]);
        (z, full)
    } else {
        (solver.solution.z.clone(), asm)
    };
    let primal = problem.primal_value(&y);
    let dual = asm.dual_value(&z);
    let certified = asm.certified_bound(&z)?;
    Ok(SdpSolution {
        primal,
        dual,
        certified,
        status,
        iterations: solver.info.iterations,
        seconds: start.elapsed().as_secs_f64(),
        gap: solver.info.gap_rel,
        residual: solver.info.res_primal.max(solver.info.res_dual),
        solver: Backend::Clarabel,
        y,
        z,
    })
}

/// The equality rows to keep: a numerically independent subset spanning the others, from a
/// QR factorisation of Eᵀ with column pivoting ([`super::pivoted_qr_rank`]), in their original
/// order.
fn independent_equalities(problem: &SdpProblem) -> Vec<usize> {
    let k = problem.equalities.len();
    let m = problem.variables;
    // The factorisation is cubic; clarabel is chosen for small problems only, and a problem too
    // large to factorise here is passed on whole.
    if k < 2 || (k as f64) * (m as f64) * (k.min(m) as f64) > 2e10 {
        return (0..k).collect();
    }
    let mut et = Mat::<f64>::zeros(m, k);
    for (r, (terms, _)) in problem.equalities.iter().enumerate() {
        for &(j, c) in terms {
            et[(j, r)] += c;
        }
    }
    let qr = et.col_piv_qr();
    let r = qr.thin_R();
    let (forward, _) = qr.P().arrays();
    let rank = super::pivoted_qr_rank(r, m, k);
    let mut kept: Vec<usize> = forward[..rank].to_vec();
    kept.sort_unstable();
    kept
}

/// Runs clarabel with quiet settings and the given tolerances; a run that ends in any state but
/// solved or almost solved is an error. Shared by the LP and SDP adapters.
pub fn run_clarabel(
    p: &CscMatrix<f64>,
    q: &[f64],
    a: &CscMatrix<f64>,
    b: &[f64],
    cones: &[SupportedConeT<f64>],
    tolerance: f64,
    stage: &str,
) -> Result<(DefaultSolver<f64>, SolveStatus)> {
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
        SolverStatus::Solved => SolveStatus::Solved,
        SolverStatus::AlmostSolved => SolveStatus::AlmostSolved,
        other => {
            let status = match other {
                SolverStatus::PrimalInfeasible
                | SolverStatus::DualInfeasible
                | SolverStatus::AlmostPrimalInfeasible
                | SolverStatus::AlmostDualInfeasible => SolveStatus::Infeasible,
                SolverStatus::MaxIterations | SolverStatus::MaxTime => SolveStatus::IterationLimit,
                SolverStatus::InsufficientProgress => SolveStatus::Stalled,
                _ => SolveStatus::Failed,
            };
            return Err(Error::solver_stopped(
                stage,
                status,
                format!(
                    "the solver stopped with status {other:?} after {} iterations",
                    solver.info.iterations
                ),
            ));
        }
    };
    Ok((solver, status))
}

/// clarabel as an [`super::sdp::SdpBackend`].
pub struct ClarabelBackend;

impl super::sdp::SdpBackend for ClarabelBackend {
    fn backend(&self) -> Backend {
        Backend::Clarabel
    }

    fn solve(&self, problem: &SdpProblem, stage: &str) -> Result<SdpSolution> {
        solve_sdp(problem, stage)
    }
}
