//! bellgap: trustworthy bounds for nonlocal games and Bell expressions.
//!
//! The pipeline, in module order: a game file is parsed and validated ([`game`]) into the flat
//! table every solver reads ([`scenario`]); then one module per bound: the exact classical value
//! and locality tests ([`classical`]), the no-signalling value ([`nosignal`]); the results are
//! collected in a [`report`]. The `bellgap` binary is a thin layer over this API.
//!
//! ```
//! use bellgap::game::{families, Game};
//! use bellgap::nosignal::no_signalling_value;
//!
//! let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
//! let classical = bellgap::classical::search(&game.scenario, None);
//! let ns = no_signalling_value(&game.scenario, false).unwrap();
//! assert!((classical.value - 0.75).abs() < 1e-12); // CHSH 1969
//! assert!((ns.value - 1.0).abs() < 1e-9); // Popescu–Rohrlich 1994
//! ```

pub mod classical;
pub mod collins_gisin;
pub mod error;
pub mod files;
pub mod game;
pub mod ipm;
pub mod lp;
pub mod nosignal;
pub mod plot;
pub mod protocol;
pub mod quantum;
pub mod report;
pub mod scenario;
pub mod sdp;

pub use error::{Error, Result};
pub use game::{CompileOptions, Game, GameSpec};
pub use scenario::Scenario;
