//! The `finite-size` command: what a spot-checking run of n rounds certifies by entropy
//! accumulation ([`crate::protocol::accumulation`]), from the entropy hierarchy's min-tradeoff
//! function at the run's threshold score.

use serde::Serialize;

use super::figures::{preprocessing_assumption, target_name, TargetChoice};
use super::{Observer, Stage};
use crate::bounds::classical::{classical_value, ClassicalOptions};
use crate::bounds::entropy::{
    ConditionalEntropy, EntropyConstraint, EntropyOptions, PreparedHierarchy, Preprocessing,
};
use crate::error::{Error, Result};
use crate::formats::game::Game;
use crate::protocol::accumulation::{
    accumulate, completeness_error_log10, crossover, max_test_rounds, rate_curve,
    rounds_for_fraction, Accumulation, CrossoverTradeoff, Disclosure, SecurityParameters,
    SpotChecking,
};
use crate::protocol::key::fano_bound;

/// Key extraction instead of randomness: what the run disclosed.
#[derive(Debug, Clone, Copy)]
pub struct KeyDisclosure {
    /// What error correction disclosed.
    pub leakage: Leakage,
    /// ε_EC, the verification hash's collision probability (the key's correctness error):
    /// the hash discloses ⌈log₂(1/ε_EC)⌉ bits and ε_EC enters the total security parameter.
    pub verification_error: f64,
    /// The probability that error correction fails on honest devices, as its designer states
    /// it for the code and leakage used (not computed here; added to the completeness error
    /// when given).
    pub correction_failure: Option<f64>,
    /// The most test rounds the protocol allows before aborting (default: the Chernoff cap at
    /// [`DEFAULT_TEST_CAP_ABORT`]).
    pub max_test_rounds: Option<u64>,
}

impl Default for KeyDisclosure {
    fn default() -> Self {
        KeyDisclosure {
            leakage: Leakage::ErrorRate {
                error_rate: 0.0,
                efficiency: COMMON_EFFICIENCY,
            },
            verification_error: 1e-9,
            correction_failure: None,
            max_test_rounds: None,
        }
    }
}

/// The optional parts of a key disclosure, as typed (see [`KeyDisclosure::from_parts`]).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct KeyParts {
    /// Bits error correction disclosed in the whole run.
    pub disclosed_bits: Option<f64>,
    /// The key pair's error rate.
    pub error_rate: Option<f64>,
    /// The code's efficiency factor (default [`COMMON_EFFICIENCY`]).
    pub efficiency: Option<f64>,
    /// ε_EC (default 1e-9).
    pub verification_error: Option<f64>,
    /// Error correction's failure probability on honest devices.
    pub correction_failure: Option<f64>,
    /// The cap on test rounds.
    pub max_test_rounds: Option<u64>,
}

/// How error correction's leakage is counted.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Leakage {
    /// The bits the run disclosed, as counted by the lab (for the whole run).
    Bits {
        /// The bits.
        bits: f64,
    },
    /// From the key pair's error rate Q: n·f·(h(Q) + Q·log₂(d − 1)) bits, Fano's bound on
    /// H(A|B) per round times the code's efficiency f ≥ 1.
    ErrorRate {
        /// The probability that the key pair's answers differ.
        error_rate: f64,
        /// The efficiency factor f.
        efficiency: f64,
    },
}

/// The efficiency factor of practical error-correcting codes relative to the Shannon limit:
/// 1.16 is common practice in reports of experiments (not a standard; state your code's own).
pub const COMMON_EFFICIENCY: f64 = 1.16;

impl KeyDisclosure {
    /// The leakage of a run of n rounds (with `answers` key answers per round) without the hash.
    pub fn leakage_bits(&self, n: u64, rounds: u64, answers: usize) -> f64 {
        match self.leakage {
            // A lab's count scales with the run, per round as in the run given.
            Leakage::Bits { bits } => bits / rounds as f64 * n as f64,
            Leakage::ErrorRate {
                error_rate,
                efficiency,
            } => n as f64 * efficiency * fano_bound(error_rate, answers),
        }
    }

    /// The key disclosure from its optional parts, as a command line or a file gives them:
    /// None (randomness) when neither disclosed bits nor an error rate is given; both at once
    /// are refused.
    pub fn from_parts(parts: KeyParts) -> Result<Option<KeyDisclosure>> {
        let leakage = match (parts.disclosed_bits, parts.error_rate) {
            (Some(_), Some(_)) => {
                return Err(Error::InvalidArgument(
                    "give the disclosed error-correction bits or the key error rate, not both"
                        .into(),
                ))
            }
            (Some(bits), None) => Leakage::Bits { bits },
            (None, Some(error_rate)) => Leakage::ErrorRate {
                error_rate,
                efficiency: parts.efficiency.unwrap_or(COMMON_EFFICIENCY),
            },
            (None, None) => return Ok(None),
        };
        let defaults = KeyDisclosure::default();
        let k = KeyDisclosure {
            leakage,
            verification_error: parts
                .verification_error
                .unwrap_or(defaults.verification_error),
            correction_failure: parts.correction_failure,
            max_test_rounds: parts.max_test_rounds,
        };
        k.check()?;
        Ok(Some(k))
    }

    /// The verification hash's length, ⌈log₂(1/ε_EC)⌉.
    pub fn hash_bits(&self) -> f64 {
        (1.0 / self.verification_error).log2().ceil()
    }

    /// Refuses values outside their domains.
    pub fn check(&self) -> Result<()> {
        match self.leakage {
            Leakage::Bits { bits } => {
                if !(bits.is_finite() && bits >= 0.0) {
                    return Err(Error::InvalidArgument(format!(
                        "the error-correction disclosure must be a finite number of bits ≥ 0, got {bits}"
                    )));
                }
            }
            Leakage::ErrorRate {
                error_rate,
                efficiency,
            } => {
                if !(0.0..=1.0).contains(&error_rate) {
                    return Err(Error::InvalidArgument(format!(
                        "the key error rate must be a probability, got {error_rate}"
                    )));
                }
                if !(efficiency >= 1.0 && efficiency.is_finite()) {
                    return Err(Error::InvalidArgument(format!(
                        "the error-correction efficiency must be a finite number ≥ 1 (the Shannon limit), got {efficiency}"
                    )));
                }
            }
        }
        if !(self.verification_error > 0.0 && self.verification_error < 1.0) {
            return Err(Error::InvalidArgument(format!(
                "the verification error must lie strictly between 0 and 1, got {}",
                self.verification_error
            )));
        }
        if let Some(f) = self.correction_failure {
            if !(0.0..=1.0).contains(&f) {
                return Err(Error::InvalidArgument(format!(
                    "the error-correction failure probability must be a probability, got {f}"
                )));
            }
        }
        Ok(())
    }
}

/// Honest runs exceed the default cap on test rounds with at most this probability.
pub const DEFAULT_TEST_CAP_ABORT: f64 = 1e-9;

/// Where the min-tradeoff line touches the entropy bound. Any score gives a valid line (the
/// line lies below the bound everywhere); a tangent below the threshold has a smaller slope,
/// hence a smaller variance and second-order penalty, at the cost of a lower first-order rate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Tangent {
    /// Try this many scores evenly from the threshold down towards the classical value (the
    /// threshold first) and keep the line certifying the most bits.
    Search(usize),
    /// At this score.
    At(f64),
}

impl Default for Tangent {
    fn default() -> Self {
        Tangent::Search(DEFAULT_TANGENT_POINTS)
    }
}

/// Scores tried by the default tangent search.
pub const DEFAULT_TANGENT_POINTS: usize = 4;

/// The most scores a tangent search may try (each is one entropy computation).
pub const MAX_TANGENT_POINTS: usize = 32;

/// One tangent score tried.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TangentTried {
    /// The score the line touches the bound at.
    pub score: f64,
    /// The entropy bound there.
    pub entropy: f64,
    /// The certified output of the run with that line.
    pub output_bits: f64,
}

/// Options of [`finite_size`].
#[derive(Debug, Clone)]
pub struct FiniteSizeOptions {
    /// Whose answer is the randomness or key (default: the first player's first question).
    pub target: TargetChoice,
    /// A second player's answer, for randomness from the pair.
    pub with: Option<TargetChoice>,
    /// Rounds n.
    pub rounds: u64,
    /// Testing probability γ.
    pub testing: f64,
    /// Threshold score per test round S_thr.
    pub threshold: f64,
    /// Error parameters.
    pub security: SecurityParameters,
    /// The honest devices' expected score, for the completeness error.
    pub expected: Option<f64>,
    /// The fraction of the asymptotic rate whose round count is reported (default 0.9).
    pub fraction: f64,
    /// Key instead of randomness.
    pub key: Option<KeyDisclosure>,
    /// Where the min-tradeoff line touches the bound.
    pub tangent: Tangent,
    /// The entropy hierarchy's options.
    pub hierarchy: EntropyOptions,
}

impl Default for FiniteSizeOptions {
    fn default() -> Self {
        FiniteSizeOptions {
            target: TargetChoice::default(),
            with: None,
            rounds: 1_000_000_000,
            testing: 0.01,
            threshold: f64::NAN,
            security: SecurityParameters::default(),
            expected: None,
            fraction: 0.9,
            key: None,
            tangent: Tangent::default(),
            hierarchy: EntropyOptions::default(),
        }
    }
}

/// What the run is for.
#[derive(Debug, Clone, Copy, Serialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Extracting {
    /// Randomness: every player's answers are output.
    Randomness,
    /// Key: the target player's answers, the others' test answers removed.
    Key,
}

/// The `finite-size` command's result.
#[derive(Debug, Clone)]
pub struct FiniteSizeReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Whose answers, in words.
    pub target_name: String,
    /// Randomness or key.
    pub extracting: Extracting,
    /// The entropy bound at the chosen tangent score, with its min-tradeoff function.
    pub entropy: ConditionalEntropy,
    /// Every tangent score tried (the chosen one is `entropy`'s).
    pub tangents: Vec<TangentTried>,
    /// The finite-size figures for the run.
    pub run: Accumulation,
    /// The limit of the output rate per round as n grows: the entropy rate h less, for key,
    /// the others' test answers (γ·log₂|B|) and the error-correction bits per round.
    pub asymptotic_output_rate: f64,
    /// For key: the cap on test rounds used.
    pub max_test_rounds: Option<u64>,
    /// The parts of the security parameter, each with its name; the total is their sum
    /// ([`FiniteSizeReport::security_total`]).
    pub security_parts: Vec<(String, f64)>,
    /// For key: the disclosure (leakage, verification hash, error correction's failure).
    pub key_disclosure: Option<KeyDisclosure>,
    /// log₁₀ of the probability that honest devices at the expected score fail the test (when
    /// given).
    pub completeness_error_log10: Option<f64>,
    /// The fraction of the asymptotic rate asked about.
    pub fraction: f64,
    /// The fewest rounds reaching that fraction (None: not within 10¹⁸ rounds, or nothing is
    /// certified at any n).
    pub rounds_for_fraction: Option<u64>,
    /// Rate per round against n (10³ to 10¹⁴ rounds, five points a decade).
    pub curve: Vec<(u64, f64)>,
    /// The assumptions.
    pub assumptions: Vec<String>,
}

impl FiniteSizeReport<'_> {
    /// The total security parameter: the sum of its parts (every failure event is charged
    /// once, by the union bound).
    pub fn security_total(&self) -> f64 {
        self.security_parts.iter().map(|(_, e)| e).sum()
    }

    /// The total completeness error of honest devices: failing the test (with an expected
    /// score) plus error correction's stated failure (for key), when either is known.
    pub fn completeness_total(&self) -> Option<f64> {
        let test = self.completeness_error_log10.map(|l| 10f64.powf(l));
        let correction = self.key_disclosure.and_then(|k| k.correction_failure);
        match (test, correction) {
            (None, None) => None,
            (a, b) => Some((a.unwrap_or(0.0) + b.unwrap_or(0.0)).min(1.0)),
        }
    }
}

/// The assumptions of the finite-size figures.
pub fn finite_size_assumptions(extracting: Extracting) -> Vec<String> {
    let mut a = vec![
        "adversary: quantum side information; the devices may keep memory and adapt between rounds (sequential rounds), but do not signal to each other during a round or learn future questions".to_string(),
        "questions and the test flag of each round are drawn independently from trusted public randomness".to_string(),
        "statement: entropy accumulation, the improved second-order statement (Dupuis & Fawzi 2019) and the original one (Dupuis, Fawzi & Renner 2020), both with the constants as recalled from memory; the smaller bound is certified unless one is chosen; compare them with the published theorems (docs/finite-size-statement.md lists what to check) before relying on them".to_string(),
        "the bound holds for runs that pass the test, unless the pass probability is below the pass floor ε_EA".to_string(),
    ];
    match extracting {
        Extracting::Randomness => a.push(
            "randomness: all players' answers are the raw output; extraction by a quantum-proof two-universal hash (leftover hash lemma), costing 2·log₂(1/ε_ext) bits".to_string(),
        ),
        Extracting::Key => a.push(
            "key: the target player's answers are the raw key; the others' test answers are removed by the chain rule (log₂ of their answer count per test round, at most the cap on test rounds) the error-correction leakage (as given, or n·f·Fano from the key error rate) and the verification hash ⌈log₂(1/ε_EC)⌉ are subtracted; privacy amplification costs 2·log₂(1/ε_PA) bits; the security parameter is the sum ε_s + ε_EA + ε_PA + ε_EC".to_string(),
        ),
    }
    a.push("not a security proof: defer to the peer-reviewed proof of the protocol and the certification practice that applies".to_string());
    a
}

/// Run lengths of the rate curve: 10³ to 10¹⁴, five a decade.
fn curve_rounds() -> Vec<u64> {
    (15..=70)
        .map(|k| 10f64.powf(k as f64 / 5.0).round() as u64)
        .collect()
}

/// The tangent scores to try, the threshold first.
fn tangent_scores(game: &Game, options: &FiniteSizeOptions) -> Result<Vec<f64>> {
    let threshold = options.threshold;
    match options.tangent {
        Tangent::At(score) if score.is_finite() => Ok(vec![score]),
        Tangent::At(score) => Err(Error::InvalidArgument(format!(
            "the tangent score must be a finite number, got {score}"
        ))),
        Tangent::Search(points) if points == 0 || points > MAX_TANGENT_POINTS => {
            Err(Error::InvalidArgument(format!(
                "the tangent search tries 1 to {MAX_TANGENT_POINTS} scores, got {points}"
            )))
        }
        Tangent::Search(1) => Ok(vec![threshold]),
        Tangent::Search(points) => {
            let classical =
                classical_value(&game.scenario, &ClassicalOptions::default(), None)?.value;
            if threshold <= classical {
                return Ok(vec![threshold]);
            }
            Ok((0..points)
                .map(|k| threshold - (threshold - classical) * k as f64 / points as f64)
                .collect())
        }
    }
}

/// The `finite-size` command.
pub fn finite_size<'a>(
    game: &'a Game,
    options: &FiniteSizeOptions,
    observer: &dyn Observer,
) -> Result<FiniteSizeReport<'a>> {
    let s = &game.scenario;
    let target = TargetChoice::target(s, &options.target, options.with.as_ref())?;
    target.check(s)?;
    let extracting = if options.key.is_some() {
        if target.parts.len() != 1 {
            return Err(Error::InvalidArgument(
                "a key is one player's answers: leave out the second player".into(),
            ));
        }
        Extracting::Key
    } else {
        if options.hierarchy.preprocessing != Preprocessing::None {
            // The flip's own randomness would be counted among the certified bits: it comes
            // from the user's local source, not from the devices.
            return Err(Error::InvalidArgument(
                "noisy preprocessing is for key: in randomness generation the flip's own randomness would be counted as certified; give the key disclosure or leave out the preprocessing".into(),
            ));
        }
        Extracting::Randomness
    };
    let answers: Vec<f64> = s.parties().iter().map(|p| p.answers() as f64).collect();
    let all: f64 = answers.iter().product();
    let key_player = target.parts[0].0;
    let others = all / answers[key_player];
    // One round's output register: every answer (randomness), or the key answer and the others'
    // answers in test rounds (⊥ otherwise) for key.
    let output_dimension = match extracting {
        Extracting::Randomness => all,
        Extracting::Key => answers[key_player] * (others + 1.0),
    };
    let protocol = SpotChecking {
        rounds: options.rounds,
        testing: options.testing,
        threshold: options.threshold,
        score_range: s.per_round_score_range(),
        lowest_score: s.value_range().0,
        output_dimension,
    };
    protocol.check()?;
    options.security.check()?;
    if let Some(k) = &options.key {
        k.check()?;
        if let Some(m) = k.max_test_rounds {
            // A cap below the expected number of test rounds makes honest runs abort more often
            // than not: the key it certifies is for a run that almost never happens.
            let expected = options.rounds as f64 * options.testing;
            if (m as f64) < expected {
                return Err(Error::InvalidArgument(format!(
                    "the cap of {m} test rounds is below the expected number of test rounds n·γ = {expected}: honest runs would abort more often than not"
                )));
            }
        }
    }
    let key_answers = s.parties()[target.parts[0].0].answers();
    // What a run of n rounds with at most `tests` test rounds discloses.
    let disclosed = |n: u64, tests: u64| -> Disclosure {
        match extracting {
            Extracting::Randomness => Disclosure::default(),
            Extracting::Key => {
                let k = options.key.unwrap_or_default();
                Disclosure {
                    test_answers: tests as f64 * others.log2(),
                    error_correction: k.leakage_bits(n, options.rounds, key_answers),
                    verification_hash: k.hash_bits(),
                }
            }
        }
    };
    let chernoff_cap = |n: u64| max_test_rounds(n, options.testing, DEFAULT_TEST_CAP_ABORT);
    // The run uses the protocol's own cap when given; the curve, whose n varies, the Chernoff
    // cap.
    let cap = |n: u64| -> u64 {
        options
            .key
            .and_then(|k| k.max_test_rounds)
            .unwrap_or_else(|| chernoff_cap(n))
    };
    let disclosure = |n: u64| disclosed(n, cap(n));
    let scores = tangent_scores(game, options)?;
    let prepared = PreparedHierarchy::new(s, &target, &options.hierarchy)?;
    super::figures::warn_slow_entropy(&prepared, scores.len(), observer)?;
    let mut tangents = Vec::new();
    let mut best: Option<(ConditionalEntropy, CrossoverTradeoff, Accumulation)> = None;
    let count = scores.len();
    for (k, score) in scores.into_iter().enumerate() {
        let solved = |done: usize, total: usize| {
            if observer.wants_progress() {
                observer.progress(Stage::EntropyNodes, k * total + done, count * total);
            }
        };
        let entropy = prepared.bound(&EntropyConstraint::Score(score), &solved)?;
        let line = entropy.min_tradeoff.clone().ok_or_else(|| {
            Error::solver(
                "finite-size",
                "the entropy bound came without its min-tradeoff function",
            )
        })?;
        let intercept = line.at_lowest - line.slope * line.lowest;
        let tradeoff = crossover(&protocol, intercept, line.slope, line.highest)?;
        let run = accumulate(
            &protocol,
            &tradeoff,
            &options.security,
            disclosure(options.rounds),
        )?;
        tangents.push(TangentTried {
            score,
            entropy: entropy.bits,
            output_bits: run.output_bits,
        });
        let better = best.as_ref().is_none_or(|(_, _, b)| {
            (run.output_bits, run.smooth_min_entropy) > (b.output_bits, b.smooth_min_entropy)
        });
        if better {
            best = Some((entropy, tradeoff, run));
        }
    }
    let (entropy, tradeoff, run) =
        best.ok_or_else(|| Error::InvalidArgument("no tangent score to try".into()))?;
    let completeness = options
        .expected
        .map(|e| completeness_error_log10(&protocol, e))
        .transpose()?;
    // With a fixed cap the disclosure per round falls with n only if the cap is proportional
    // to n; a fixed user cap is used for the run only, the curve uses the Chernoff cap.
    let curve_disclosure = |n: u64| disclosed(n, chernoff_cap(n));
    // The certified rate is floored at 0, and so is its limit.
    let limit = (run.asymptotic_rate
        - match extracting {
            Extracting::Randomness => 0.0,
            Extracting::Key => {
                options.testing * others.log2()
                    + options.key.map_or(0.0, |k| {
                        k.leakage_bits(options.rounds, options.rounds, key_answers)
                            / options.rounds as f64
                    })
            }
        })
    .max(0.0);
    let curve = rate_curve(
        &curve_rounds(),
        &protocol,
        &tradeoff,
        &options.security,
        &curve_disclosure,
    )?;
    let rounds_for_fraction = rounds_for_fraction(
        options.fraction,
        limit,
        &protocol,
        &tradeoff,
        &options.security,
        &curve_disclosure,
    )?;
    Ok(FiniteSizeReport {
        game,
        target_name: target_name(s, &target),
        extracting,
        entropy,
        tangents,
        run,
        asymptotic_output_rate: limit,
        max_test_rounds: (extracting == Extracting::Key).then(|| cap(options.rounds)),
        security_parts: {
            let sec = &options.security;
            let mut parts = vec![
                ("smoothing ε_s".to_string(), sec.smoothing),
                ("pass floor ε_EA".to_string(), sec.pass_floor),
                (
                    match extracting {
                        Extracting::Randomness => "extractor ε_ext".to_string(),
                        Extracting::Key => "privacy amplification ε_PA".to_string(),
                    },
                    sec.extraction,
                ),
            ];
            if let (Extracting::Key, Some(k)) = (extracting, options.key) {
                parts.push((
                    "verification (correctness) ε_EC".into(),
                    k.verification_error,
                ));
            }
            parts
        },
        key_disclosure: options.key.filter(|_| extracting == Extracting::Key),
        completeness_error_log10: completeness,
        fraction: options.fraction,
        rounds_for_fraction,
        curve,
        assumptions: {
            let mut a = finite_size_assumptions(extracting);
            if let Some(line) = preprocessing_assumption(options.hierarchy.preprocessing) {
                a.insert(a.len() - 1, line);
            }
            a
        },
    })
}
