//! File formats: games ([`game`]), and reading and writing files safely ([`files`]). Each
//! parser turns untrusted text into a model type, with a file, line, column and field on every
//! error.

pub mod certificate;
pub mod correlations;
pub mod fields;
pub mod files;
pub mod formula;
pub mod game;
pub mod located;
pub mod protocol_file;
pub mod strategy_file;
