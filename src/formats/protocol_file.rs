//! The protocol file of `review` (YAML): which game was played, what was observed, and which
//! figures to add.
//!
//! ```yaml
//! name: beacon-run-7            # optional
//! game: ../games/chsh.yaml      # relative to this file
//! rounds: 200000
//! wins: 170000                  # a game; for a Bell expression: score_sum and score_range
//!                               # (or instead of rounds and wins: counts: FILE, a counts file
//!                               # relative to this file)
//! alpha: 1e-6                   # error probability of the confidence bounds (default 1e-6)
//! target_p_value: 1e-9          # for `rounds needed` (default 1e-9)
//! randomness: {player: alice, question: 0, level: 2}   # optional
//! key: {qber: 0.02}             # optional; analytic for CHSH, the entropy hierarchy otherwise
//!                               # (then also player, question, nodes); noisy_preprocessing
//!                               # (the key bit flipped with that probability first)
//! finite_size:                  # optional: a spot-checking run by entropy accumulation
//!   rounds: 1000000000
//!   testing: 0.01
//!   threshold: 0.84
//!   # player, question, smoothing, pass_floor, extractor_error, key_disclosed_bits, nodes,
//!   # tangent_points, noisy_preprocessing
//! ```

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::files::read_text;
use super::located::yaml_error;
use crate::error::Result;
use crate::model::counts::Counts;

/// A protocol run as the file describes it (unchecked against the game: the review does that).
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProtocolSpec {
    /// Name of the run (default: the file's path).
    #[serde(default)]
    pub name: Option<String>,
    /// The game file, relative to the protocol file.
    pub game: String,
    /// Rounds played (with `wins` or `score_sum`; not with `counts`).
    #[serde(default)]
    pub rounds: Option<u64>,
    /// The lab's counts file instead of a summary, relative to this file.
    #[serde(default)]
    pub counts: Option<String>,
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
    /// Key figures.
    #[serde(default)]
    pub key: Option<KeySpec>,
    /// Finite-size figures of a spot-checking run.
    #[serde(default)]
    pub finite_size: Option<FiniteSizeSpec>,
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
    /// Probability that the key answers differ (the QBER for binary answers).
    pub qber: f64,
    /// The key player (games other than CHSH; default: the first player).
    #[serde(default)]
    pub player: Option<String>,
    /// The key question's label (default: the first).
    #[serde(default)]
    pub question: Option<i64>,
    /// Gauss–Radau nodes of the entropy hierarchy (default 8).
    #[serde(default)]
    pub nodes: Option<usize>,
    /// Noisy preprocessing: the probability with which the key player changes its answer
    /// before error correction.
    #[serde(default)]
    pub noisy_preprocessing: Option<f64>,
}

/// A spot-checking run's parameters for the finite-size figures.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FiniteSizeSpec {
    /// Rounds n of the run.
    pub rounds: u64,
    /// Probability γ of a test round.
    pub testing: f64,
    /// The score per test round the run must reach.
    pub threshold: f64,
    /// Whose answer (default: the first player).
    #[serde(default)]
    pub player: Option<String>,
    /// Which question (label; default: the first).
    #[serde(default)]
    pub question: Option<i64>,
    /// Smoothing parameter ε_s (default 1e-9).
    #[serde(default)]
    pub smoothing: Option<f64>,
    /// Pass floor ε_EA (default 1e-9).
    #[serde(default)]
    pub pass_floor: Option<f64>,
    /// Extractor error ε_ext (default 1e-9).
    #[serde(default)]
    pub extractor_error: Option<f64>,
    /// Key instead of randomness: the bits error correction disclosed.
    #[serde(default)]
    pub key_disclosed_bits: Option<f64>,
    /// Key instead of randomness: the key pair's error rate (leakage n·f·Fano).
    #[serde(default)]
    pub key_error_rate: Option<f64>,
    /// Key: the player whose answers the key is reconciled with; the key error rate is then the
    /// one observed in the counts at the key questions (needs `counts`).
    #[serde(default)]
    pub key_with: Option<String>,
    /// That player's key question (default: its first).
    #[serde(default)]
    pub key_question: Option<i64>,
    /// Error-correction efficiency f (default 1.16, common practice).
    #[serde(default)]
    pub ec_efficiency: Option<f64>,
    /// ε_EC, the verification hash's collision probability (default 1e-9).
    #[serde(default)]
    pub verification_error: Option<f64>,
    /// Error correction's failure probability on honest devices, as its designer states it.
    #[serde(default)]
    pub correction_failure: Option<f64>,
    /// Gauss–Radau nodes (default 8).
    #[serde(default)]
    pub nodes: Option<usize>,
    /// Noisy preprocessing of the answer before extraction (the key player's, for key).
    #[serde(default)]
    pub noisy_preprocessing: Option<f64>,
    /// Tangent scores the min-tradeoff search tries (default 4).
    #[serde(default)]
    pub tangent_points: Option<usize>,
    /// Which entropy accumulation statement certifies: `smaller` (the default),
    /// `improved-second-order` or `original` (checked by the review).
    #[serde(default)]
    pub statement: Option<String>,
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
    /// The counts, when the file names a counts file (resolved against its folder and read).
    pub counts: Option<Counts>,
    /// Where the counts file is.
    pub counts_path: Option<PathBuf>,
}

impl ProtocolFile {
    /// Reads and parses a protocol file (located errors).
    pub fn from_file(path: &str) -> Result<ProtocolFile> {
        let text = read_text(path)?;
        let spec: ProtocolSpec = serde_yaml::from_str(&text).map_err(|e| yaml_error(e, path))?;
        let base = Path::new(path).parent().unwrap_or(Path::new("."));
        let game_path = base.join(&spec.game);
        let counts_path = spec.counts.as_ref().map(|file| base.join(file));
        let counts = match &counts_path {
            None => None,
            Some(file) => Some(Counts::from_file(&file.to_string_lossy())?),
        };
        Ok(ProtocolFile {
            path: path.to_string(),
            spec,
            game_path,
            counts,
            counts_path,
        })
    }
}
