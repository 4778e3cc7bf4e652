//! One module per bound: the classical value and locality tests ([`classical`]), the
//! no-signalling value ([`nosignal`]) and the quantum bounds ([`quantum`]).

pub mod classical;
pub mod nosignal;
pub mod quantum;
