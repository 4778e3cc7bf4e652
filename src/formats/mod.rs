//! File formats: games ([`game`]), and reading and writing files safely ([`files`]). Each
//! parser turns untrusted text into a model type, with a file, line, column and field on every
//! error.

pub mod files;
pub mod game;
