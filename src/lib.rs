//! bellgap: trustworthy bounds for nonlocal games and Bell expressions.
//!
//! The crate follows the data flow, one way ([`formats`] → [`model`] → [`optim`] → [`bounds`] →
//! [`protocol`] → [`pipeline`] → [`render`]): a game file is parsed and validated into the flat
//! table every solver reads ([`Scenario`]); each bound has its own module (the exact classical
//! value, the no-signalling value, NPA upper bounds verified from the dual, see-saw strategies);
//! [`pipeline`] runs each command's work and [`render`] writes it as text, JSON or a document.
//! The `bellgap` binary is a thin layer over this API.
//!
//! Every function with a cost takes an options struct with `Default`; work above its limits is
//! refused with an estimate unless [`Limits::force`] is set. Upper bounds are rounded up and
//! lower bounds down after floating-point error.
//!
//! ```
//! use bellgap::formats::game::families;
//! use bellgap::pipeline::{self, BoundsOptions, Silent};
//! use bellgap::{classical_value, no_signalling_value, npa_bound, Game, Level, Limits, NpaOptions};
//!
//! let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
//! let s = &game.scenario;
//! let classical = classical_value(s, &Default::default(), None).unwrap();
//! let quantum = npa_bound(s, &NpaOptions::at(Level::Length(1))).unwrap();
//! let ns = no_signalling_value(s, &Limits::default()).unwrap();
//! assert!((classical.value - 0.75).abs() < 1e-12); // CHSH 1969
//! let tsirelson = 0.5 + 0.5 / 2f64.sqrt(); // Tsirelson 1980
//! assert!(quantum.verified_upper >= tsirelson && quantum.verified_upper < tsirelson + 1e-6);
//! assert!((ns.value - 1.0).abs() < 1e-9); // Popescu–Rohrlich 1994
//!
//! // Or every bound at once, as `bellgap bounds` computes them:
//! let report = pipeline::bounds(&game, &BoundsOptions::default(), &Silent).unwrap();
//! assert!(report.not_obtained.is_empty());
//! assert_eq!(report.quantum_settled(), Some(true));
//! ```

#![warn(missing_docs)]

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
