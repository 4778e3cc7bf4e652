//! Optimisation, knowing nothing of games: linear programmes ([`lp`]), semidefinite programmes
//! ([`sdp`]), the verified bound from any dual vector ([`certify`]), and the SDP backends behind
//! one trait ([`backend`]): the moment-matrix interior-point method (`moment_ipm`, an HKM
//! method on the Schur complement of the moment matrix) and clarabel. Swapping or adding a backend touches [`backend`] and the backend's own file.

pub mod backend;
pub mod certify;
pub(crate) mod clarabel;
pub mod first_order;
pub mod lp;
pub(crate) mod moment_ipm;
pub mod sdp;

pub use crate::error::SolveStatus;
