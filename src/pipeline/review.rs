//! The review of a protocol run: every bound (by [`super::bounds`], the same sequence as the
//! `bounds` command), the finite-statistics margins, certified randomness and key figures, with
//! the assumptions behind each. Rendering it as HTML or Markdown is
//! [`crate::render::document`]'s job.

use serde::Serialize;

use super::figures::{
    entropy, preprocessing_assumption, DevetakWinter, EntropyCommandOptions, EntropyGiven,
    ErrorCorrection, TargetChoice,
};
use super::figures::{key_pair_table, RunData};
use super::finite_size::{
    finite_size, FiniteSizeOptions, FiniteSizeReport, KeyDisclosure, KeyParts, Tangent,
    DEFAULT_TANGENT_POINTS,
};
use super::{bounds, BoundsOptions, GameReport, Observer};
use crate::bounds::entropy::{EntropyOptions, Preprocessing};
use crate::bounds::quantum::npa::Level;
use crate::error::{Error, Location, Result};
use crate::formats::game::{families, Game};
use crate::formats::protocol_file::ProtocolFile;
use crate::protocol::accumulation::{SecurityParameters, Statement};
use crate::protocol::finite::{margin, rounds_needed, Margin, ObservedRun};
use crate::protocol::key::{chsh_bound, differ_probability, key_rate, threshold_qber, KeyRate};
use crate::protocol::randomness::{guessing_probability, Randomness, Target};
use crate::protocol::CAUTION;

/// Gauss–Radau nodes of the review's entropy bounds unless the file says otherwise.
pub const REVIEW_NODES: usize = 8;

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
    /// The depolarising-noise threshold QBER (`None`: no QBER gives a key).
    pub threshold_qber: Option<f64>,
    /// The key player's preprocessing.
    pub preprocessing: Preprocessing,
}

/// Key figures of a game other than CHSH: the entropy hierarchy at the lower confidence score
/// and Fano's bound on the error-correction term.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewEntropyKey {
    /// Whose answers are the key, e.g. `alice (question 0)`.
    pub target: String,
    /// The score the entropy bound assumes (the lower confidence bound).
    pub score: f64,
    /// The method of the entropy bound.
    pub method: String,
    /// The Devetak–Winter rate.
    pub rate: DevetakWinter,
    /// The key player's preprocessing.
    pub preprocessing: Preprocessing,
}

/// What the run's score certifies about the devices' state (two-player games whose first two
/// questions of each player are binary), and the honest implementation the game needs.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewDevices {
    /// The verified SWAP fidelity bound at the lower confidence score, with the target the
    /// see-saw's best strategy extracts to (and Kaniewski's bound for CHSH); None when the game
    /// does not allow the construction.
    pub state: Option<crate::bounds::quantum::selftest::FidelityBound>,
    /// The least detection efficiency (all players alike) and visibility at which the best
    /// implementation found beats the classical value, each computed when affordable.
    pub thresholds: Vec<ReviewThreshold>,
    /// Why a figure is missing, in words.
    pub notes: Vec<String>,
}

/// One noise threshold of a review.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewThreshold {
    /// The noise parameter.
    pub parameter: crate::bounds::quantum::design::NoiseParameter,
    /// The bracket (below, above); None when no implementation found beats the classical
    /// value even without that noise.
    pub bracket: Option<(f64, f64)>,
    /// The best implementation's margin against the parameter (for the plot).
    pub curve: Vec<crate::bounds::quantum::design::CurvePoint>,
}

/// The finite-size figures in a review.
#[derive(Debug, Clone)]
pub struct ReviewFiniteSize<'a> {
    /// The figures.
    pub report: FiniteSizeReport<'a>,
    /// Whether the observed mean score reaches the threshold (read as the run's test rounds).
    pub observed_passes: bool,
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
    /// Confidence bounds, margin and p-value of the observed run (rounds needed at its mean).
    pub margin: Margin,
    /// With counts: the per-round estimator, in words.
    pub estimator: Option<String>,
    /// The see-saw's score and the rounds needed there for the target p-value (devices as good
    /// as the best strategy found).
    pub rounds_needed_at_see_saw: Option<(f64, Option<u64>)>,
    /// Certified randomness, when the file asks for it.
    pub randomness: Option<ReviewRandomness>,
    /// Key figures, when the file asks for them (analytic for CHSH).
    pub key: Option<ReviewKey>,
    /// Key figures of another game, from the entropy hierarchy.
    pub entropy_key: Option<ReviewEntropyKey>,
    /// Finite-size figures, when the file asks for them.
    pub finite_size: Option<ReviewFiniteSize<'a>>,
    /// The devices: the state's certified fidelity and the noise the game tolerates.
    pub devices: ReviewDevices,
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
    let run = match (&protocol.counts, p.rounds) {
        (Some(counts), None) if p.wins.is_none() && p.score_sum.is_none() => {
            RunData::Counts(counts.clone())
        }
        (Some(_), _) => {
            return Err(bad(
                "give counts, or rounds with wins or a score sum, not both".into(),
            ))
        }
        (None, Some(rounds)) => RunData::Summary(ObservedRun {
            rounds,
            wins: p.wins,
            score_sum: p.score_sum,
            score_range: p.score_range.map(|[lo, hi]| (lo, hi)),
        }),
        (None, None) => {
            return Err(bad(
                "give rounds (with wins or a score sum) or counts".into()
            ))
        }
    };
    let (obs, estimator) = run.observation(s).map_err(|e| bad(e.to_string()))?;
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
    // Rounds needed at the observed mean (what this run's devices did); the see-saw's ideal
    // score gets its own, labelled, figure.
    let m = margin(&obs, classical, alpha, target, None)?;
    let rounds_needed_at_see_saw = see_saw.map(|v| {
        (
            v,
            rounds_needed(m.score_range[1] - m.score_range[0], v - classical, target),
        )
    });
    // One lower confidence bound for every figure of the report.
    let certified_score = m.certified_score;

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
    let (mut key, mut entropy_key) = (None, None);
    match (&p.key, chsh_correlator(game, certified_score)) {
        (Some(k), Some(sv)) => {
            let bound = chsh_bound(Preprocessing::noisy_if(k.noisy_preprocessing))
                .map_err(|e| bad(format!("key: noisy_preprocessing: {e}")))?;
            key = Some(ReviewKey {
                chsh_value: sv,
                figures: key_rate(bound.as_ref(), sv, k.qber)
                    .map_err(|e| bad(format!("key: {e}")))?,
                threshold_qber: threshold_qber(bound.as_ref()),
                preprocessing: Preprocessing::noisy_if(k.noisy_preprocessing),
            })
        }
        (Some(k), None) => {
            let options = EntropyCommandOptions {
                target: TargetChoice {
                    player: k.player.clone(),
                    question: k.question,
                },
                with: None,
                given: EntropyGiven::Scores(vec![certified_score]),
                key: Some(ErrorCorrection::ErrorRate(k.qber)),
                hierarchy: EntropyOptions {
                    nodes: k.nodes.unwrap_or(REVIEW_NODES),
                    preprocessing: Preprocessing::noisy_if(k.noisy_preprocessing),
                    ..Default::default()
                },
            };
            let r = entropy(game, &options, observer).map_err(|e| bad(format!("key: {e}")))?;
            let result = r
                .results
                .into_iter()
                .next()
                .ok_or_else(|| bad("key: the entropy bound was not obtained".into()))?;
            entropy_key = Some(ReviewEntropyKey {
                target: r.target_name,
                score: certified_score,
                method: result.entropy.method.clone(),
                preprocessing: result.entropy.preprocessing,
                rate: result
                    .key
                    .ok_or_else(|| bad("key: no key rate was computed".into()))?,
            });
        }
        _ => {}
    }
    let finite_size = match &p.finite_size {
        None => None,
        Some(f) => {
            let defaults = SecurityParameters::default();
            // The key error rate observed in the counts at the key pair's questions.
            let observed_error_rate = match (&f.key_with, &protocol.counts) {
                (None, _) => None,
                (Some(_), None) => {
                    return Err(bad(
                        "finite_size: key_with takes the error rate from the counts: give counts".into(),
                    ))
                }
                (Some(_), Some(_)) if f.key_error_rate.is_some() || f.key_disclosed_bits.is_some() => {
                    return Err(bad(
                        "finite_size: give key_with (the observed error rate), key_error_rate or key_disclosed_bits, one of them".into(),
                    ))
                }
                (Some(player), Some(counts)) => {
                    let (pa, xa) = TargetChoice {
                        player: f.player.clone(),
                        question: f.question,
                    }
                    .resolve(s, 0)
                    .map_err(|e| bad(format!("finite_size: {e}")))?;
                    let (pb, yb) = TargetChoice {
                        player: Some(player.clone()),
                        question: f.key_question,
                    }
                    .resolve(s, 1)
                    .map_err(|e| bad(format!("finite_size: key_with: {e}")))?;
                    if pa == pb {
                        return Err(bad("finite_size: key_with needs a second player".into()));
                    }
                    let table = key_pair_table(s, &counts.frequencies(), (pa, xa), (pb, yb));
                    Some(differ_probability(&table).clamp(0.0, 1.0))
                }
            };
            let options = FiniteSizeOptions {
                target: TargetChoice {
                    player: f.player.clone(),
                    question: f.question,
                },
                rounds: f.rounds,
                testing: f.testing,
                threshold: f.threshold,
                security: SecurityParameters {
                    smoothing: f.smoothing.unwrap_or(defaults.smoothing),
                    pass_floor: f.pass_floor.unwrap_or(defaults.pass_floor),
                    extraction: f.extractor_error.unwrap_or(defaults.extraction),
                    statement: match &f.statement {
                        Some(name) => Statement::parse(name)
                            .map_err(|e| bad(format!("finite_size: statement: {e}")))?,
                        None => defaults.statement,
                    },
                },
                key: KeyDisclosure::from_parts(KeyParts {
                    disclosed_bits: f.key_disclosed_bits,
                    error_rate: f.key_error_rate.or(observed_error_rate),
                    efficiency: f.ec_efficiency,
                    verification_error: f.verification_error,
                    correction_failure: f.correction_failure,
                    max_test_rounds: None,
                })
                .map_err(|e| bad(format!("finite_size: {e}")))?,
                tangent: Tangent::Search(f.tangent_points.unwrap_or(DEFAULT_TANGENT_POINTS)),
                hierarchy: EntropyOptions {
                    nodes: f.nodes.unwrap_or(REVIEW_NODES),
                    preprocessing: Preprocessing::noisy_if(f.noisy_preprocessing),
                    ..Default::default()
                },
                ..Default::default()
            };
            let report = finite_size(game, &options, observer)
                .map_err(|e| bad(format!("finite_size: {e}")))?;
            Some(ReviewFiniteSize {
                observed_passes: m.observed_mean >= f.threshold,
                report,
            })
        }
    };
    let devices = review_devices(game, &report, certified_score, classical);
    Ok(Review {
        name: p.name.clone().unwrap_or_else(|| path.to_string()),
        bounds: report,
        classical,
        margin: m,
        estimator,
        rounds_needed_at_see_saw,
        randomness,
        key,
        entropy_key,
        finite_size,
        devices,
        generated: format!(
            "bellgap {} on {} (UTC)",
            env!("CARGO_PKG_VERSION"),
            utc_date()
        ),
        command_line: String::new(),
    })
}

/// Seconds of implementation searches a review spends on thresholds at most (estimated):
/// beyond that, the thresholds are left to the `design` command.
const REVIEW_DESIGN_SECONDS: f64 = 30.0;

/// The devices' section: never fatal (a figure that cannot be had is noted).
fn review_devices(
    game: &Game,
    report: &GameReport,
    certified_score: f64,
    classical: f64,
) -> ReviewDevices {
    use crate::bounds::quantum::design::{
        estimate_threshold_seconds, threshold, DesignOptions, NoiseParameter, ThresholdOptions,
    };
    use crate::bounds::quantum::selftest::{fidelity_bound, target_from, SelfTestOptions};
    let s = &game.scenario;
    let mut out = ReviewDevices {
        state: None,
        thresholds: Vec::new(),
        notes: Vec::new(),
    };
    let binary = s.players() == 2
        && s.parties()
            .iter()
            .all(|p| p.questions() >= 2 && p.answers() >= 2);
    match (&report.seesaw, binary) {
        (Some(sw), true) => {
            let options = SelfTestOptions::default();
            let bound = target_from(s, &sw.strategy, &options.questions)
                .and_then(|t| fidelity_bound(s, certified_score, &t, &options));
            match bound {
                Ok(b) => out.state = Some(b),
                Err(e) => out.notes.push(format!("state fidelity: {e}")),
            }
        }
        (None, true) => out
            .notes
            .push("state fidelity: needs the see-saw's strategy for its target".into()),
        (_, false) => out.notes.push(
            "state fidelity: the SWAP construction needs two players with two questions each"
                .into(),
        ),
    }
    let design = DesignOptions {
        seesaw: crate::bounds::quantum::seesaw::SeesawOptions {
            dims: report
                .seesaw
                .as_ref()
                .map(|sw| sw.dims.clone())
                .unwrap_or_default(),
            ..Default::default()
        },
        ..Default::default()
    };
    for parameter in [NoiseParameter::Efficiency, NoiseParameter::Visibility] {
        let t = ThresholdOptions {
            parameter,
            tolerance: 1e-3,
            curve_points: 6,
        };
        if estimate_threshold_seconds(s, &design, &t) > REVIEW_DESIGN_SECONDS {
            out.notes.push(format!(
                "{} threshold: estimated above {REVIEW_DESIGN_SECONDS} s, left to `bellgap design`",
                parameter.name()
            ));
            continue;
        }
        match threshold(s, classical, &design, &t, None) {
            Ok(found) => out.thresholds.push(ReviewThreshold {
                parameter,
                bracket: found.bracket.map(|b| (b.below, b.above)),
                curve: found.curve,
            }),
            Err(e) => out
                .notes
                .push(format!("{} threshold: {e}", parameter.name())),
        }
    }
    out
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
        let preprocessing = [
            self.key.as_ref().map(|k| k.preprocessing),
            self.entropy_key.as_ref().map(|k| k.preprocessing),
        ];
        if let Some(line) = preprocessing
            .into_iter()
            .flatten()
            .find_map(preprocessing_assumption)
        {
            a.push(line);
        }
        if self.entropy_key.is_some() {
            a.push("The key rate of this game is the Devetak–Winter rate with a verified lower bound on H(A|X=x*, E) from the Gauss–Radau entropy hierarchy at the lower confidence score, and Fano's bound on H(A|B) at the stated error rate: collective attacks, i.i.d. rounds, asymptotic, one-way error correction at the Shannon limit.".into());
        }
        if self.devices.state.is_some() {
            a.push("The state's fidelity is that of the state each player's partial SWAP isometry (built from its first two measurements) extracts, with the state the see-saw's best strategy extracts to; it holds for every quantum behaviour scoring at least the lower confidence score, for one round of i.i.d. rounds.".into());
        }
        if !self.devices.thresholds.is_empty() {
            a.push("Noise thresholds are those of the best honest implementation found (see-saw with restarts, no-click answers chosen best, white noise on the state): search results, not proofs that nothing better exists.".into());
        }
        if let Some(f) = &self.finite_size {
            a.extend(
                f.report
                    .assumptions
                    .iter()
                    .filter(|s| !s.starts_with("not a security proof"))
                    .map(|s| format!("Finite size: {s}.")),
            );
        }
        a.push(CAUTION.into());
        a
    }
}
