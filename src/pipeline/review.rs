//! The review of a protocol run: every bound (by [`super::bounds`], the same sequence as the
//! `bounds` command), the finite-statistics margins, certified randomness and key figures, with
//! the assumptions behind each. Rendering it as HTML or Markdown is
//! [`crate::render::document`]'s job.

use serde::Serialize;

use super::{bounds, BoundsOptions, GameReport, Observer};
use crate::bounds::quantum::npa::Level;
use crate::error::{Error, Location, Result};
use crate::formats::game::{families, Game};
use crate::formats::protocol_file::ProtocolFile;
use crate::protocol::finite::{margin, observation, Margin, ObservedRun};
use crate::protocol::key::{chsh_threshold_qber, key_rate, ChshEntropyBound, KeyRate};
use crate::protocol::randomness::{guessing_probability, Randomness, Target};
use crate::protocol::CAUTION;

/// Certified randomness in a review: at the lower confidence score, and a curve for the plot.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewRandomness {
    /// Whose answer, e.g. `alice, question 0`.
    pub target: String,
    /// At the lower confidence bound of the score.
    pub at_lower_confidence: Randomness,
    /// From the classical value to just below the see-saw value.
    pub sweep: Vec<Randomness>,
}

/// CHSH key figures in a review.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewKey {
    /// The CHSH correlator value at the lower confidence bound of the score.
    pub chsh_value: f64,
    /// Entropy and key rate there.
    pub figures: KeyRate,
    /// The depolarising-noise threshold QBER.
    pub threshold_qber: f64,
}

/// Everything a review shows.
#[derive(Debug, Clone)]
pub struct Review<'a> {
    /// Name of the run.
    pub name: String,
    /// The bounds, as the `bounds` command computes them (with `not_obtained` and notes).
    pub bounds: GameReport<'a>,
    /// The exact classical value (a review needs it: the margin is measured against it).
    pub classical: f64,
    /// Confidence bounds, margin and p-value of the observed run.
    pub margin: Margin,
    /// Certified randomness, when the file asks for it.
    pub randomness: Option<ReviewRandomness>,
    /// Key figures, when the file asks for them.
    pub key: Option<ReviewKey>,
    /// Tool version and the UTC date the report was made.
    pub generated: String,
    /// The command that made the report (set by the caller; empty when unknown).
    pub command_line: String,
}

/// Today's UTC date as YYYY-MM-DD (civil-from-days, Hinnant's algorithm), without a date crate.
fn utc_date() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    let z = secs.div_euclid(86_400) + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    format!("{year:04}-{month:02}-{day:02}")
}

/// The CHSH correlator value S for a score of this game, if the game is CHSH in one of its two
/// standard forms (as a game, p = 1/2 + S/8; as the correlator expression, S itself).
fn chsh_correlator(game: &Game, score: f64) -> Option<f64> {
    let as_game = Game::from_spec(&families::chsh(), "chsh").ok()?;
    let as_expression = Game::from_spec(&families::chsh_expression(), "chsh").ok()?;
    let same = |a: &Game| {
        a.scenario.objective().len() == game.scenario.objective().len()
            && a.scenario
                .objective()
                .iter()
                .zip(game.scenario.objective())
                .all(|(x, y)| (x - y).abs() < 1e-12)
            && (a.scenario.offset() - game.scenario.offset()).abs() < 1e-12
    };
    if same(&as_game) {
        Some(8.0 * score - 4.0)
    } else if same(&as_expression) {
        Some(score)
    } else {
        None
    }
}

/// Reviews the run a protocol file describes, on its game (loaded by the caller from
/// [`ProtocolFile::game_path`]). Problems with the file's observation or requests are input
/// errors located at the protocol file.
pub fn review<'a>(
    protocol: &ProtocolFile,
    game: &'a Game,
    observer: &dyn Observer,
) -> Result<Review<'a>> {
    let p = &protocol.spec;
    let path = &protocol.path;
    let s = &game.scenario;
    let bad = |m: String| Error::Input {
        location: Location {
            file: path.to_string(),
            ..Default::default()
        },
        message: m,
    };
    let obs = observation(
        s,
        &ObservedRun {
            rounds: p.rounds,
            wins: p.wins,
            score_sum: p.score_sum,
            score_range: p.score_range.map(|[lo, hi]| (lo, hi)),
        },
    )
    .map_err(|e| bad(e.to_string()))?;
    let report = bounds(game, &BoundsOptions::default(), observer)?;
    let Some(classical) = report.classical.as_ref().map(|c| c.value) else {
        return Err(Error::solver(
            "review",
            format!(
                "the margin needs the exact classical value: {}",
                report.not_obtained.join("; ")
            ),
        ));
    };
    let see_saw = report.seesaw.as_ref().map(|sw| sw.quantum_lower);
    let alpha = p.alpha.unwrap_or(1e-6);
    let target = p.target_p_value.unwrap_or(1e-9);
    let m = margin(&obs, classical, alpha, target, see_saw)?;
    let certified_score = m.lower_confidence_exact.unwrap_or(m.lower_confidence);

    let randomness = match &p.randomness {
        None => None,
        Some(r) => {
            let player = s
                .parties()
                .iter()
                .position(|q| q.name == r.player)
                .ok_or_else(|| bad(format!("randomness: there is no player `{}`", r.player)))?;
            let question = s.parties()[player]
                .question_labels
                .iter()
                .position(|&l| l == r.question)
                .ok_or_else(|| {
                    bad(format!(
                        "randomness: {} has no question {}",
                        r.player, r.question
                    ))
                })?;
            let level = Level::parse(r.level.as_deref().unwrap_or("2"))?;
            let target = Target {
                parts: vec![(player, question)],
            };
            let at = guessing_probability(s, &target, certified_score.max(classical), &level)?;
            // The curve from the classical value to just below the quantum maximum (the
            // see-saw's value; no curve without one).
            let top = see_saw.unwrap_or(classical);
            let sweep = (0..=10)
                .map(|k| classical + (top - classical) * (k as f64 / 10.0) * 0.999)
                .filter_map(|score| guessing_probability(s, &target, score, &level).ok())
                .collect();
            Some(ReviewRandomness {
                target: format!("{}, question {}", r.player, r.question),
                at_lower_confidence: at,
                sweep,
            })
        }
    };
    let key = match (&p.key, chsh_correlator(game, certified_score)) {
        (Some(k), Some(sv)) => Some(ReviewKey {
            chsh_value: sv,
            figures: key_rate(&ChshEntropyBound, sv, k.qber)
                .map_err(|e| bad(format!("key: {e}")))?,
            threshold_qber: chsh_threshold_qber(),
        }),
        (Some(_), None) => {
            return Err(bad(
                "key figures are available for the CHSH game or the CHSH expression only".into(),
            ))
        }
        _ => None,
    };
    Ok(Review {
        name: p.name.clone().unwrap_or_else(|| path.to_string()),
        bounds: report,
        classical,
        margin: m,
        randomness,
        key,
        generated: format!(
            "bellgap {} on {} (UTC)",
            env!("CARGO_PKG_VERSION"),
            utc_date()
        ),
        command_line: String::new(),
    })
}

impl Review<'_> {
    /// The assumptions behind the review's figures, with the caution.
    pub fn assumptions(&self) -> Vec<String> {
        let mut a: Vec<String> = self
            .margin
            .assumptions
            .iter()
            .map(|s| s.to_string())
            .collect();
        a.push("The quantum upper bound holds for every quantum strategy of any dimension (verified from the SDP's dual solution, accounting for floating-point error); the see-saw value is that of an explicit strategy and can be reproduced from its seed.".into());
        if self.randomness.is_some() {
            a.push("Certified randomness is evaluated at the lower confidence bound of the score and assumes i.i.d. rounds and an adversary limited to quantum side information; it is an asymptotic per-round figure, not a finite-size extraction rate.".into());
        }
        if self.key.is_some() {
            a.push("Key figures assume collective attacks, i.i.d. rounds, the asymptotic limit and one-way error correction at the Shannon limit.".into());
        }
        a.push(CAUTION.into());
        a
    }
}
