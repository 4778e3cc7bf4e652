//! The protocol file of `review` (YAML): which game was played, what was observed, and which
//! figures to add.
//!
//! ```yaml
//! name: beacon-run-7            # optional
//! game: ../games/chsh.yaml      # relative to this file
//! rounds: 200000
//! wins: 170000                  # a game; for a Bell expression: score_sum and score_range
//! alpha: 1e-6                   # error probability of the confidence bounds (default 1e-6)
//! target_p_value: 1e-9          # for `rounds needed` (default 1e-9)
//! randomness: {player: alice, question: 0, level: 2}   # optional
//! key: {qber: 0.02}             # optional; CHSH-type games only
//! ```

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::files::read_text;
use super::located::yaml_error;
use crate::error::Result;

/// A protocol run as the file describes it (unchecked against the game: the review does that).
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProtocolSpec {
    /// Name of the run (default: the file's path).
    #[serde(default)]
    pub name: Option<String>,
    /// The game file, relative to the protocol file.
    pub game: String,
    /// Rounds played.
    pub rounds: u64,
    /// Rounds won (a game).
    #[serde(default)]
    pub wins: Option<u64>,
    /// Sum of the per-round scores (a Bell expression or a scored game).
    #[serde(default)]
    pub score_sum: Option<f64>,
    /// Smallest and largest per-round score.
    #[serde(default)]
    pub score_range: Option<[f64; 2]>,
    /// Error probability of the confidence bounds.
    #[serde(default)]
    pub alpha: Option<f64>,
    /// p-value for the rounds needed.
    #[serde(default)]
    pub target_p_value: Option<f64>,
    /// Certified randomness of one answer.
    #[serde(default)]
    pub randomness: Option<RandomnessSpec>,
    /// CHSH key figures.
    #[serde(default)]
    pub key: Option<KeySpec>,
}

/// Whose answer's randomness the review certifies.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RandomnessSpec {
    /// The player's name.
    pub player: String,
    /// The question's label.
    pub question: i64,
    /// NPA level (default 2).
    #[serde(default)]
    pub level: Option<String>,
}

/// The key figures' inputs.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct KeySpec {
    /// Quantum bit error rate of the key rounds.
    pub qber: f64,
}

/// A protocol file read, with where its game file is.
#[derive(Debug, Clone)]
pub struct ProtocolFile {
    /// The file's path.
    pub path: String,
    /// Its content.
    pub spec: ProtocolSpec,
    /// The game file, resolved against the protocol file's folder.
    pub game_path: PathBuf,
}

impl ProtocolFile {
    /// Reads and parses a protocol file (located errors).
    pub fn from_file(path: &str) -> Result<ProtocolFile> {
        let text = read_text(path)?;
        let spec: ProtocolSpec = serde_yaml::from_str(&text).map_err(|e| yaml_error(e, path))?;
        let base = Path::new(path).parent().unwrap_or(Path::new("."));
        let game_path = base.join(&spec.game);
        Ok(ProtocolFile {
            path: path.to_string(),
            spec,
            game_path,
        })
    }
}
