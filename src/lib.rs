//! bellgap: trustworthy bounds for nonlocal games and Bell expressions.
//!
//! The pipeline, in module order: a game file is parsed and validated ([`game`]) into the flat
//! table every solver reads ([`scenario`]); then one module per bound: the exact classical value
//! and locality tests ([`classical`]), the no-signalling value ([`nosignal`]); the results are
//! collected in a [`report`]. The `bellgap` binary is a thin layer over this API.

pub mod classical;
pub mod error;
pub mod game;
pub mod lp;
pub mod nosignal;
pub mod report;
pub mod scenario;

pub use error::{Error, Result};
pub use game::{CompileOptions, Game, GameSpec};
pub use scenario::Scenario;
