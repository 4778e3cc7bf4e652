//! One module per bound: the classical value and locality tests ([`classical`]), the
//! no-signalling value ([`nosignal`]), the quantum bounds ([`quantum`]) and entropy bounds
//! ([`entropy`]).

pub mod classical;
pub mod entropy;
pub mod nosignal;
pub mod quantum;
