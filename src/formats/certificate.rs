//! The NPA dual certificate file (JSON): the contract of `npa --certificate` and `verify`. Its
//! format string carries the version; CHANGELOG.md records the fields. Everything in a file read
//! here is untrusted: [`crate::bounds::quantum::npa::verify`] checks it against the game.

use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::error::{Error, Location, Result};

/// A dual certificate: enough to re-check the verified bound without the solver.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Certificate {
    /// [`CERTIFICATE_FORMAT`].
    pub format: String,
    /// The game's name (for people; the fingerprint is what binds).
    pub game: String,
    /// [`crate::Scenario::fingerprint`] of the game's flat table.
    #[serde(default)]
    pub game_fingerprint: String,
    /// The NPA level, as written on the command line.
    pub level: String,
    /// Side of the moment matrix.
    pub matrix_size: usize,
    /// Number of distinct moments.
    pub moments: usize,
    /// The bound the certificate claims to prove.
    pub verified_upper: f64,
    /// The dual vector in the order of [`crate::optim::sdp::SdpProblem::assemble`]'s rows.
    pub dual: Vec<f64>,
}

/// The format string of the current certificate version.
pub const CERTIFICATE_FORMAT: &str = "bellgap NPA dual certificate, version 2";

impl Certificate {
    /// Reads a certificate file; a file that is not one is an input error with line and column.
    pub fn from_file(path: &Path) -> Result<Certificate> {
        let file = path.to_string_lossy().to_string();
        let text = super::files::read_text(path)?;
        Certificate::from_json(&text, &file)
    }

    /// Parses certificate text; `file` names it in error messages.
    pub fn from_json(text: &str, file: &str) -> Result<Certificate> {
        serde_json::from_str(text).map_err(|e| Error::Input {
            location: Location {
                file: file.to_string(),
                line: Some(e.line()),
                column: Some(e.column()),
                field: None,
            },
            message: format!("not a certificate: {e}"),
        })
    }

    /// The certificate as JSON text (what `npa --certificate` writes).
    pub fn to_json(&self) -> String {
        serde_json::to_string(self).expect("a certificate always serialises")
    }
}
