//! The automatic choice between the SDP backends, in one function ([`choose`]), and the solve
//! with fallback ([`solve`]). Adding a backend means a variant of [`Backend`] and an
//! implementation of [`SdpBackend`] (both in [`super::sdp`]) in the backend's own file, and a
//! line in `backend_for` and [`choose`] here.

use super::clarabel::ClarabelBackend;
use super::first_order::FirstOrderBackend;
use super::moment_ipm::MomentIpmBackend;
pub use super::sdp::{Backend, SdpBackend};
use super::sdp::{SdpProblem, SdpSolution};
use crate::error::{Error, Result};

/// The implementation of a concrete backend (`Auto` is resolved by [`choose`] first).
fn backend_for(backend: Backend) -> &'static dyn SdpBackend {
    match backend {
        Backend::Clarabel => &ClarabelBackend,
        Backend::FirstOrder => &FirstOrderBackend,
        Backend::MomentIpm | Backend::Auto => &MomentIpmBackend,
    }
}

/// The automatic choice, by the size of the work: clarabel factorises a dense block of side
/// n(n+1)/2 per PSD block (cost ~ (n(n+1)/2)³), the moment-matrix method an m×m Schur
/// complement (m³/3) plus an assembly of ~4n⁴ per block. The cheaper one is tried first.
pub fn choose(problem: &SdpProblem) -> Backend {
    let m = problem.variables as f64;
    let clarabel: f64 = problem
        .blocks
        .iter()
        .map(|b| (b.size as f64 * (b.size as f64 + 1.0) / 2.0).powi(3))
        .sum();
    let ipm = m.powi(3) / 3.0
        + problem
            .blocks
            .iter()
            .map(|b| 4.0 * (b.size as f64).powi(4))
            .sum::<f64>();
    if ipm <= clarabel {
        Backend::MomentIpm
    } else {
        Backend::Clarabel
    }
}

/// Largest memory and time a fallback to clarabel may take without being asked for.
const FALLBACK_MEMORY_LIMIT: f64 = 4.0 * (1u64 << 30) as f64;
const FALLBACK_SECONDS_LIMIT: f64 = 600.0;

/// clarabel's memory (bytes) and time (seconds) on `problem`: its dense KKT block needs about
/// 16·d² bytes and 5·d³ flops (d = Σ n(n+1)/2) at ~1.6 GFLOP/s (measured on the check machine).
pub fn clarabel_cost(problem: &SdpProblem) -> (f64, f64) {
    let d: f64 = problem
        .blocks
        .iter()
        .map(|b| b.size as f64 * (b.size as f64 + 1.0) / 2.0)
        .sum();
    (16.0 * d * d, 5.0 * d * d * d / 1.6e9)
}

/// Solves with the given backend; [`Backend::Auto`] tries [`choose`]'s pick first and falls back
/// to the other if it fails (clarabel only when it fits the fallback limits).
pub fn solve(problem: &SdpProblem, backend: Backend, stage: &str) -> Result<SdpSolution> {
    if backend != Backend::Auto {
        return backend_for(backend).solve(problem, stage);
    }
    match choose(problem) {
        Backend::Clarabel => ClarabelBackend
            .solve(problem, stage)
            .or_else(|_| MomentIpmBackend.solve(problem, stage)),
        _ => MomentIpmBackend.solve(problem, stage).or_else(|e| {
            let (bytes, seconds) = clarabel_cost(problem);
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
                ClarabelBackend.solve(problem, stage)
            }
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::optim::sdp::{AffineEntry, MatrixBlock};

    fn problem(variables: usize, block_sizes: &[usize]) -> SdpProblem {
        SdpProblem {
            variables,
            objective: vec![0.0; variables],
            blocks: block_sizes
                .iter()
                .map(|&n| MatrixBlock {
                    size: n,
                    upper: vec![AffineEntry::default(); n * (n + 1) / 2],
                    trace_bound: 1.0,
                })
                .collect(),
            ..Default::default()
        }
    }

    #[test]
    fn small_blocks_with_many_moments_go_to_clarabel() {
        // One 3×3 block: clarabel's KKT side is 6; 50 variables make m³/3 ≈ 41667 > 216.
        assert_eq!(choose(&problem(50, &[3])), Backend::Clarabel);
    }

    #[test]
    fn large_moment_matrices_go_to_the_moment_method() {
        // NPA level 2 of CHSH-like sizes: a 13×13 matrix with 30 moments. clarabel: 91³ ≈ 7.5e5;
        // moment method: 9000 + 4·13⁴ ≈ 1.2e5.
        assert_eq!(choose(&problem(30, &[13])), Backend::MomentIpm);
        // I3322 level 4 sizes: 244×244 with 5,000 moments.
        assert_eq!(choose(&problem(5000, &[244])), Backend::MomentIpm);
    }

    #[test]
    fn the_choice_is_made_on_total_work_over_blocks() {
        // Two 12×12 blocks with 100 moments: clarabel 2·78³ ≈ 9.5e5, moment method
        // 3.3e5 + 2·4·12⁴ ≈ 4.99e5.
        assert_eq!(choose(&problem(100, &[12, 12])), Backend::MomentIpm);
        // The same blocks with 140 moments: 9.1e5 + 1.7e5 > 9.5e5.
        assert_eq!(choose(&problem(140, &[12, 12])), Backend::Clarabel);
    }

    #[test]
    fn fallback_cost_grows_with_the_triangle_side() {
        let (bytes, seconds) = clarabel_cost(&problem(10, &[100]));
        let d = 5050.0_f64;
        assert_eq!(bytes, 16.0 * d * d);
        assert!((seconds - 5.0 * d * d * d / 1.6e9).abs() < 1e-9);
    }

    #[test]
    fn backend_names_are_the_json_names() {
        assert_eq!(
            serde_json::to_string(&Backend::MomentIpm).unwrap(),
            "\"moment-ipm\""
        );
        assert_eq!(
            serde_json::to_string(&Backend::Clarabel).unwrap(),
            "\"clarabel\""
        );
        assert_eq!(Backend::Auto.to_string(), "auto");
    }
}
