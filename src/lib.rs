//! bellgap: trustworthy bounds for nonlocal games and Bell expressions.
//!
//! The pipeline, in module order: a game file is parsed and validated ([`game`]) into the flat
//! table every solver reads ([`scenario`]); then one module per bound: the exact classical value
//! and locality tests ([`classical`]), the no-signalling value ([`nosignal`]); the results are
//! collected in a [`report`]. The `bellgap` binary is a thin layer over this API.
//!
//! ```
//! use bellgap::formats::game::{families, Game};
//! use bellgap::bounds::nosignal::no_signalling_value;
//!
//! let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
//! let classical = bellgap::bounds::classical::search(&game.scenario, None);
//! let ns = no_signalling_value(&game.scenario, false).unwrap();
//! assert!((classical.value - 0.75).abs() < 1e-12); // CHSH 1969
//! assert!((ns.value - 1.0).abs() < 1e-9); // Popescu–Rohrlich 1994
//! ```

pub mod bounds;
pub mod error;
pub mod formats;
pub mod limits;
pub mod model;
pub(crate) mod numbers;
pub mod optim;
pub mod pipeline;
pub mod protocol;
pub mod render;
pub mod stats;

pub use bounds::classical::{classical_value, ClassicalOptions, ClassicalValue};
pub use bounds::nosignal::{no_signalling_value, NoSignallingValue};
pub use bounds::quantum::npa::{npa_bound, Level, NpaBound, NpaOptions};
pub use bounds::quantum::seesaw::{seesaw, SeesawOptions, SeesawResult};
pub use error::{Error, IoOp, Location, Result};
pub use formats::game::{CompileOptions, Game, GameSpec};
pub use limits::Limits;
pub use model::correlations::Correlations;
pub use model::scenario::Scenario;
pub use model::strategy::QuantumStrategy;
pub use optim::backend::Backend;
pub use optim::SolveStatus;
pub use pipeline::{BoundsOptions, GameReport, Observer, Silent};
