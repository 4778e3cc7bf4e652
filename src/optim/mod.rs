//! Optimisation, knowing nothing of games: linear programmes ([`lp`]), semidefinite programmes
//! ([`sdp`]), the verified bound from any dual vector ([`certify`]) and its exact rational check
//! ([`exact`]), and the SDP backends behind
//! one trait ([`backend`]): the moment-matrix interior-point method (`moment_ipm`, an HKM
//! method on the Schur complement of the moment matrix) and clarabel. Swapping or adding a backend touches [`backend`] and the backend's own file.

pub mod backend;
pub mod certify;
pub(crate) mod clarabel;
pub mod exact;
pub mod first_order;
pub mod lp;
pub(crate) mod moment_ipm;
pub mod sdp;
pub mod sdpa;

pub use crate::error::SolveStatus;

/// The numerical rank of a matrix from the R factor of its QR factorisation with column
/// pivoting: the diagonal entries above 1e-12 × the largest × the larger dimension (Golub & Van
/// Loan, Matrix Computations, 4th ed. 2013, §5.4.1). The first `rank` pivoted columns are
/// numerically independent and span the others.
pub(crate) fn pivoted_qr_rank(r: faer::MatRef<'_, f64>, rows: usize, cols: usize) -> usize {
    let size = r.nrows().min(r.ncols());
    let largest = if size > 0 { r[(0, 0)].abs() } else { 0.0 };
    (0..size)
        .take_while(|&i| r[(i, i)].abs() > 1e-12 * largest * (rows.max(cols) as f64))
        .count()
}
