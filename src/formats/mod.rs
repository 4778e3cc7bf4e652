//! File formats: games ([`game`], with the [`formula`] language), correlations
//! ([`correlations`]), strategies ([`strategy_file`]), NPA certificates ([`certificate`]) and
//! protocol runs ([`protocol_file`]), and reading and writing files safely ([`files`]). Each
//! parser turns untrusted text into a model type, with a file, line, column and field on every
//! error.

pub mod certificate;
pub mod correlations;
pub mod counts;
pub(crate) mod fields;
pub mod files;
pub mod formula;
pub mod game;
pub(crate) mod located;
pub mod plain_certificate;
pub mod protocol_file;
pub mod strategy_file;
