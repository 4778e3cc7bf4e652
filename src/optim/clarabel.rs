//! The clarabel backend: the SDP with its PSD cone as a dense triangle block (and the LP adapter's
//! runner). Accurate and general, but its cost grows as (n(n+1)/2)³ per block, so the automatic
//! choice in [`super::backend`] prefers the moment-matrix method on large moment matrices.

use std::time::Instant;

use clarabel::algebra::CscMatrix;
use clarabel::solver::{
    DefaultSettingsBuilder, DefaultSolver, IPSolver, SolverStatus, SupportedConeT,
};

use super::sdp::{Backend, SdpProblem, SdpSolution};
use super::SolveStatus;
use crate::error::{Error, Result};

/// Solves with clarabel. A run that ends in any state but solved or almost solved is an
/// error: no number is reported as a bound unless it is one.
pub fn solve_sdp(problem: &SdpProblem, stage: &str) -> Result<SdpSolution> {
    let start = Instant::now();
    let asm = problem.assemble();
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
    let z = solver.solution.z.clone();
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
