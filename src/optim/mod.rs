//! Optimisation: linear programmes ([`lp`]), semidefinite programmes and their verified bounds
//! ([`sdp`]), and the moment-matrix interior-point method ([`moment_ipm`]).

pub mod lp;
pub mod moment_ipm;
pub mod sdp;
