//! The commands that read an observation, a certificate or correlations: `margin`,
//! `randomness`, `entropy`, `key`, `verify` and `local`.

use super::{classical_observed, Observer, Stage};
use crate::bounds::classical::locality::{locality_test, LocalityReport};
use crate::bounds::classical::{classical_value, ClassicalOptions};
use crate::bounds::entropy::{
    ConditionalEntropy, EntropyConstraint, EntropyOptions, PreparedHierarchy, Preprocessing,
};
use crate::bounds::quantum::npa::{self, Level, Verification};
use crate::error::{Error, Result};
use crate::formats::certificate::Certificate;
use crate::formats::correlations::ROW_TOLERANCE;
use crate::formats::game::Game;
use crate::limits::{human_seconds, Limits};
use crate::model::correlations::Correlations;
use crate::model::counts::Counts;
use crate::model::region::BehaviourRegion;
use crate::model::scenario::{Party, Scenario};
use crate::model::strategy::QuantumStrategy;
use crate::protocol::finite::{self, Margin, ObservedRun};
use crate::protocol::key::{
    chsh_bound, differ_probability, error_correction_entropy_within, fano_bound, key_rate,
    threshold_qber, KeyRate, NoisyChshEntropyBound,
};
use crate::protocol::randomness::{guessing_probability, Randomness, Target};
use serde::Serialize;

/// Options of [`margin`].
#[derive(Debug, Clone, Copy)]
pub struct MarginOptions {
    /// Error probability of the confidence bounds (default 1e-6).
    pub alpha: f64,
    /// p-value to reach when computing the rounds needed (default 1e-9).
    pub target_p_value: f64,
    /// Expected mean score for the rounds needed (default: the observed mean).
    pub expected: Option<f64>,
    /// How the classical value is computed.
    pub classical: ClassicalOptions,
}

impl Default for MarginOptions {
    fn default() -> Self {
        MarginOptions {
            alpha: 1e-6,
            target_p_value: 1e-9,
            expected: None,
            classical: ClassicalOptions::default(),
        }
    }
}

/// What an observed run certifies (the `margin` command).
#[derive(Debug, Clone)]
pub struct MarginReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Confidence bounds, margin, p-value and rounds needed.
    pub margin: Margin,
    /// With counts: the per-round estimator used, in words.
    pub estimator: Option<String>,
}

/// What a run's data are: a summary (rounds and wins or a score sum), or the lab's counts.
#[derive(Debug, Clone)]
pub enum RunData {
    /// Rounds with wins or a score sum.
    Summary(ObservedRun),
    /// Counts per joint question and joint answer.
    Counts(Counts),
}

impl RunData {
    /// The observation the margin is computed from, and the estimator in words (with counts).
    pub fn observation(&self, s: &Scenario) -> Result<(finite::Observation, Option<String>)> {
        match self {
            RunData::Summary(run) => Ok((finite::observation(s, run)?, None)),
            RunData::Counts(c) => {
                check_same_parties(s, &c.parties, &c.name)?;
                let (obs, e) = finite::observation_of_counts(s, c)?;
                Ok((obs, Some(e.estimator)))
            }
        }
    }
}

/// The `margin` command: the run checked against the game, then its figures against the exact
/// classical value.
pub fn margin<'a>(
    game: &'a Game,
    run: &RunData,
    options: &MarginOptions,
    observer: &dyn Observer,
) -> Result<MarginReport<'a>> {
    let (obs, estimator) = run.observation(&game.scenario)?;
    let classical = classical_observed(
        &game.scenario,
        &options.classical,
        observer,
        classical_value,
    )?
    .value;
    let margin = finite::margin(
        &obs,
        classical,
        options.alpha,
        options.target_p_value,
        options.expected,
    )?;
    Ok(MarginReport {
        game,
        margin,
        estimator,
    })
}

/// A player and question chosen by name and label (defaults: the first player or the given
/// default, and the player's first question).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TargetChoice {
    /// The player's name.
    pub player: Option<String>,
    /// The question's label.
    pub question: Option<i64>,
}

impl TargetChoice {
    /// The target of one answer (`first`, default the first player) or of a pair (with
    /// `second`, default the second player).
    pub(crate) fn target(
        s: &Scenario,
        first: &TargetChoice,
        second: Option<&TargetChoice>,
    ) -> Result<Target> {
        let mut parts = vec![first.resolve(s, 0)?];
        if let Some(with) = second {
            parts.push(with.resolve(s, 1)?);
        }
        Ok(Target { parts })
    }

    /// The (player, question index) pair this choice names in `s`.
    pub(crate) fn resolve(&self, s: &Scenario, default_player: usize) -> Result<(usize, usize)> {
        let p = match &self.player {
            Some(n) => s
                .parties()
                .iter()
                .position(|p| &p.name == n)
                .ok_or_else(|| Error::InvalidArgument(format!("there is no player `{n}`")))?,
            None => default_player,
        };
        let party = s
            .parties()
            .get(p)
            .ok_or_else(|| Error::InvalidArgument(format!("there is no player number {p}")))?;
        let x = match self.question {
            Some(l) => party
                .question_labels
                .iter()
                .position(|&k| k == l)
                .ok_or_else(|| {
                    Error::InvalidArgument(format!("{} has no question {l}", party.name))
                })?,
            None => 0,
        };
        Ok((p, x))
    }
}

/// Options of [`randomness`].
#[derive(Debug, Clone)]
pub struct RandomnessOptions {
    /// Whose answer is guessed (default: the first player's answer to its first question).
    pub guessed: TargetChoice,
    /// A second player's answer guessed together with the first (the pair of answers).
    pub with: Option<TargetChoice>,
    /// The scores (one, or a sweep).
    pub scores: Vec<f64>,
    /// NPA level of the relaxation (default 2).
    pub level: Level,
    /// A lab's counts and an error α instead of scores: the bound at their lower confidence
    /// score (the region "score at least that", which holds except with probability α).
    pub from_counts: Option<(Counts, f64)>,
    /// Work limits: a run estimated above an hour is refused unless forced.
    pub limits: Limits,
    /// Also prove each bound in exact rational arithmetic.
    pub exact: bool,
}

impl Default for RandomnessOptions {
    fn default() -> Self {
        RandomnessOptions {
            guessed: TargetChoice::default(),
            with: None,
            scores: Vec::new(),
            level: Level::Length(2),
            from_counts: None,
            limits: Limits::default(),
            exact: false,
        }
    }
}

/// Certified randomness at one or more scores (the `randomness` command).
#[derive(Debug, Clone)]
pub struct RandomnessReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Whose answers are guessed.
    pub target: Target,
    /// The guessed answers in words, e.g. `alice (question 0)`.
    pub target_name: String,
    /// One result per score that could be certified, in order.
    pub results: Vec<Randomness>,
    /// Scores of a sweep that could not be certified, with the reason.
    pub not_obtained: Vec<String>,
    /// With counts: where the score came from, in words.
    pub given: Option<String>,
}

/// The `randomness` command. In a sweep, a score that cannot be certified (e.g. above the
/// quantum maximum) is listed and the sweep goes on; a single score that fails is an error.
pub fn randomness<'a>(
    game: &'a Game,
    options: &RandomnessOptions,
    observer: &dyn Observer,
) -> Result<RandomnessReport<'a>> {
    let s = &game.scenario;
    let target = TargetChoice::target(s, &options.guessed, options.with.as_ref())?;
    let mut given = None;
    let mut scores = options.scores.clone();
    if let Some((counts, alpha)) = &options.from_counts {
        if !(*alpha > 0.0 && *alpha < 1.0) {
            return Err(Error::InvalidArgument(format!(
                "the error probability must lie strictly between 0 and 1, got {alpha}"
            )));
        }
        let (obs, estimator) = RunData::Counts(counts.clone()).observation(s)?;
        let (score, method) = finite::certified_lower_confidence(&obs, *alpha);
        given = Some(format!(
            "every quantum behaviour scoring at least {score}, the {method} lower confidence bound (α = {alpha:e}, i.i.d. rounds) of the counts `{}` ({})",
            counts.name,
            estimator.unwrap_or_default()
        ));
        scores = vec![score];
    }
    if scores.is_empty() {
        return Err(Error::InvalidArgument("no score given".into()));
    }
    check_score_count(scores.len())?;
    randomness_cost(s, &target, options, scores.len(), observer)?;
    let mut results = Vec::new();
    let mut not_obtained = Vec::new();
    for &v in &scores {
        match guessing_probability(s, &target, v, &options.level) {
            Ok(mut r) => {
                if options.exact {
                    r.exact = Some(crate::protocol::randomness::prove_exactly(s, &target, &r)?);
                }
                results.push(r)
            }
            Err(e) if scores.len() > 1 && !matches!(e, Error::TooLarge { .. }) => {
                not_obtained.push(format!("score {v}: {e}"))
            }
            Err(e) => return Err(e),
        }
    }
    if results.is_empty() {
        return Err(Error::InvalidArgument(format!(
            "no score of the sweep could be certified: {}",
            not_obtained.join("; ")
        )));
    }
    let target_name = target_name(s, &target);
    Ok(RandomnessReport {
        game,
        target,
        target_name,
        results,
        not_obtained,
        given,
    })
}

/// An external solver's solution of the guessing-probability SDP, verified here (the
/// `randomness --sdpa-solution` command).
#[derive(Debug, Clone, Serialize)]
pub struct GuessingImportReport<'a> {
    /// The game.
    #[serde(skip)]
    pub game: &'a Game,
    /// The guessed answers in words.
    pub guessed: String,
    /// The verified bound.
    #[serde(flatten)]
    pub import: crate::protocol::randomness::GuessingImport,
}

/// The guessing-probability SDP at the options' one score in the SDPA sparse format, and its
/// variable map.
pub fn randomness_sdpa_export(
    game: &Game,
    options: &RandomnessOptions,
) -> Result<(String, String)> {
    let s = &game.scenario;
    let target = TargetChoice::target(s, &options.guessed, options.with.as_ref())?;
    crate::protocol::randomness::sdpa_export(s, &target, one_score(options)?, &options.level)
}

/// Verifies an external solver's SDPA output `text` as a dual solution of the SDP that
/// [`randomness_sdpa_export`] writes with the same options.
pub fn randomness_sdpa_import<'a>(
    game: &'a Game,
    options: &RandomnessOptions,
    text: &str,
) -> Result<GuessingImportReport<'a>> {
    let s = &game.scenario;
    let target = TargetChoice::target(s, &options.guessed, options.with.as_ref())?;
    let import = crate::protocol::randomness::sdpa_import(
        s,
        &target,
        one_score(options)?,
        &options.level,
        text,
        options.exact,
    )?;
    Ok(GuessingImportReport {
        game,
        guessed: target_name(s, &target),
        import,
    })
}

fn one_score(options: &RandomnessOptions) -> Result<f64> {
    match options.scores[..] {
        [v] => Ok(v),
        _ => Err(Error::InvalidArgument(
            "an SDPA export or import is for one score: give --score".into(),
        )),
    }
}

/// The run's cost, announced before any SDP is solved: refused above an hour (unless forced),
/// with the estimate and a lighter level; a heads-up above half a minute.
fn randomness_cost(
    s: &Scenario,
    target: &Target,
    options: &RandomnessOptions,
    scores: usize,
    observer: &dyn Observer,
) -> Result<()> {
    use crate::protocol::randomness::{estimate, RandomnessEstimate};
    let est = estimate(s, target, &options.level)?;
    let n = scores as f64;
    let typical = est.seconds_per_solve * RandomnessEstimate::SOLVES * n;
    let worst = est.seconds_per_solve * RandomnessEstimate::SOLVES_AT_WORST * n;
    let what = format!(
        "{scores} score{} at level {}: {} moment matrices of side {} per SDP, about {} per SDP ({:.1} GiB); {} SDPs per score, up to {} near the quantum maximum: about {} in all, up to {}",
        if scores == 1 { "" } else { "s" },
        options.level.name(),
        est.guesses,
        est.matrix_size,
        human_seconds(est.seconds_per_solve),
        est.memory_bytes / (1u64 << 30) as f64,
        RandomnessEstimate::SOLVES,
        RandomnessEstimate::SOLVES_AT_WORST,
        human_seconds(typical),
        human_seconds(worst),
    );
    if !options.limits.force && typical > npa::SECONDS_LIMIT {
        return Err(Error::TooLarge {
            what: "the randomness bound".into(),
            estimate: what,
            hint: "choose a lower level (e.g. 1+joint), fewer scores, or pass --force".into(),
        });
    }
    if worst > 30.0 {
        observer.warn(&format!("the randomness bound may take long: {what}"));
    }
    Ok(())
}

/// CHSH key figures (the `key` command).
#[derive(Debug, Clone)]
pub struct KeyReport {
    /// Entropy and key rate at the given S and QBER.
    pub rate: KeyRate,
    /// The QBER at which the key rate of the optimal CHSH devices under depolarising noise
    /// reaches zero (with the same preprocessing); `None` when no QBER gives a key.
    pub threshold_qber: Option<f64>,
    /// The key player's preprocessing.
    pub preprocessing: Preprocessing,
    /// The flip probability that maximises the key rate at this S and QBER (searched over
    /// [0, 1/2]: a grid, then a golden-section search), and that rate.
    pub best_flip: BestFlip,
}

/// The best noisy preprocessing for the analytic CHSH key rate.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct BestFlip {
    /// The flip probability q.
    pub probability: f64,
    /// The key rate with it, bits per round.
    pub key_rate: f64,
}

/// The flip probability that maximises the analytic CHSH key rate at S and Q: a grid over
/// [0, 1/2] (steps of 0.001, and 10⁻⁶ to 10⁻³ by factors of √10, where the optimum sits when the
/// error rate is small), then a golden-section search between the best point's neighbours. Any
/// q's rate is a valid figure, so the search only needs to be good, not exact.
fn best_flip(chsh: f64, qber: f64) -> Result<BestFlip> {
    let rate = |q: f64| -> Result<f64> {
        Ok(key_rate(&NoisyChshEntropyBound::new(q)?, chsh, qber)?.key_rate)
    };
    let mut grid: Vec<f64> = (0..=6).map(|k| 10f64.powf(-6.0 + 0.5 * k as f64)).collect();
    grid.extend((1..=500).map(|k| k as f64 / 1000.0));
    grid.push(0.0);
    grid.sort_by(f64::total_cmp);
    grid.dedup();
    let rates = grid
        .iter()
        .map(|&q| rate(q))
        .collect::<Result<Vec<f64>>>()?;
    let best = (0..grid.len())
        .max_by(|&i, &j| rates[i].total_cmp(&rates[j]).then(j.cmp(&i)))
        .unwrap_or(0);
    let (mut lo, mut hi) = (
        grid[best.saturating_sub(1)],
        grid[(best + 1).min(grid.len() - 1)],
    );
    let mut found = BestFlip {
        probability: grid[best],
        key_rate: rates[best],
    };
    let golden = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..60 {
        let (a, b) = (hi - golden * (hi - lo), lo + golden * (hi - lo));
        let (ra, rb) = (rate(a)?, rate(b)?);
        for (q, r) in [(a, ra), (b, rb)] {
            if r > found.key_rate {
                found = BestFlip {
                    probability: q,
                    key_rate: r,
                };
            }
        }
        if ra >= rb {
            hi = b;
        } else {
            lo = a;
        }
    }
    // Where no flip gives a key, none is best: say 0, not the search's last probe. Where no
    // flip does measurably better than none (within 1e-8 bits per round), none is best too:
    // a probability of 4e-9 is the search's noise, not advice.
    if found.key_rate <= 0.0 {
        found = BestFlip {
            probability: 0.0,
            key_rate: 0.0,
        };
    } else if rates[grid.iter().position(|&q| q == 0.0).unwrap_or(0)] >= found.key_rate - 1e-8 {
        found = BestFlip {
            probability: 0.0,
            key_rate: rate(0.0)?,
        };
    }
    Ok(found)
}

/// What the `key` command is asked.
#[derive(Debug, Clone, Default)]
pub struct KeyOptions {
    /// The CHSH correlator value S.
    pub chsh: f64,
    /// The raw answers' error rate.
    pub qber: f64,
    /// The key player's noisy preprocessing, if any.
    pub preprocessing: Preprocessing,
}

/// The `key` command: the analytic CHSH bound (with noisy preprocessing when asked) at the
/// correlator value and error rate.
pub fn key(options: &KeyOptions) -> Result<KeyReport> {
    let bound = chsh_bound(options.preprocessing)?;
    let rate = key_rate(bound.as_ref(), options.chsh, options.qber)?;
    Ok(KeyReport {
        rate,
        threshold_qber: threshold_qber(bound.as_ref()),
        preprocessing: options.preprocessing,
        best_flip: best_flip(options.chsh, options.qber)?,
    })
}

/// A certificate re-checked (the `verify` command).
#[derive(Debug, Clone)]
pub struct VerifyReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Where the certificate came from.
    pub certificate: String,
    /// The recomputed bound.
    pub verification: Verification,
    /// The bound proven in exact rational arithmetic, when asked.
    pub exact: Option<crate::bounds::quantum::npa::ExactVerification>,
}

/// The `verify` command: recompute the bound a certificate proves, without any solver.
pub fn verify<'a>(
    game: &'a Game,
    certificate: &Certificate,
    source: &str,
    limits: &Limits,
    exact: bool,
) -> Result<VerifyReport<'a>> {
    let verification =
        npa::verify(&game.scenario, certificate, limits).map_err(|e| e.in_file(source))?;
    let exact = if exact {
        Some(
            npa::verify_exact(&game.scenario, certificate, limits)
                .map_err(|e| e.in_file(source))?,
        )
    } else {
        None
    };
    Ok(VerifyReport {
        game,
        certificate: source.to_string(),
        verification,
        exact,
    })
}

/// A locality test (the `local` command).
#[derive(Debug, Clone)]
pub struct LocalReport {
    /// The correlations' name.
    pub name: String,
    /// The test's outcome.
    pub test: LocalityReport,
}

/// The `local` command.
pub fn local(correlations: &Correlations, limits: &Limits) -> Result<LocalReport> {
    Ok(LocalReport {
        name: correlations.name.clone(),
        test: locality_test(correlations, limits)?,
    })
}

/// What an entropy bound is conditioned on: scores, or one observed behaviour.
#[derive(Debug, Clone)]
pub enum EntropyGiven {
    /// The game's value is at least each of these (one bound per score).
    Scores(Vec<f64>),
    /// The devices' full behaviour (a correlations file with the game's players).
    Behaviour(Correlations),
    /// Every behaviour in a region (a typed tolerance, or any region built by the caller).
    Region(BehaviourRegion),
    /// A lab's counts: every behaviour in their confidence region of error `error`
    /// ([`Counts::confidence_region`]).
    Counts {
        /// The counts.
        counts: Counts,
        /// The probability that the true behaviour lies outside the region.
        error: f64,
    },
    /// The behaviour of an explicit quantum strategy (by the Born rule), e.g. the see-saw's.
    Strategy {
        /// The strategy (checked against the game before use).
        strategy: QuantumStrategy,
        /// Where it came from, for reports.
        name: String,
    },
}

/// A heads-up before entropy hierarchies estimated to take over half a minute in all (one
/// hierarchy above the limit is refused by the hierarchy itself).
pub(crate) fn warn_slow_entropy(
    prepared: &PreparedHierarchy,
    hierarchies: usize,
    observer: &dyn Observer,
) -> Result<()> {
    let est = prepared.score_estimate();
    let total = est.seconds * hierarchies as f64;
    if total > 30.0 {
        observer.warn(&format!(
            "the entropy bound may take long: {}, {} hierarch{} (an interior-point estimate, which overshoots by a few times): about {} in all",
            est.describe(),
            hierarchies,
            if hierarchies == 1 { "y" } else { "ies" },
            human_seconds(total)
        ));
    }
    Ok(())
}

/// Fano's bound on H(A|B) for `d` answers in words: h(Q) alone for two answers (the second
/// term, Q·log₂(d − 1), vanishes), else with d − 1 written out.
fn fano_formula(d: f64) -> String {
    if d <= 2.0 {
        "h(Q)".into()
    } else {
        format!("h(Q) + Q·log₂ {}", d - 1.0)
    }
}

/// Most scores one `randomness` or `entropy` run bounds (a sweep's points): the same limit for
/// the command line and the library (the Python package included), where each score costs one
/// relaxation (randomness) or one hierarchy (entropy, about a second to minutes each).
pub const MAX_SCORES: usize = 1000;

/// Refuses more scores than [`MAX_SCORES`].
fn check_score_count(count: usize) -> Result<()> {
    if count > MAX_SCORES {
        return Err(Error::TooLarge {
            what: format!("{count} scores"),
            estimate: format!("one relaxation or hierarchy per score; at most {MAX_SCORES} are bounded in one run"),
            hint: "split the scores over several runs (or a sweep list)".into(),
        });
    }
    Ok(())
}

/// The error of the confidence region that measured frequencies (a correlations file with
/// rounds) stand for in `entropy --behaviour`; `--counts` takes its own `--alpha`.
pub const MEASURED_BEHAVIOUR_ERROR: f64 = 1e-6;

/// The error-correction term of the key rate: from the behaviour's key pair, or an error rate.
#[derive(Debug, Clone)]
pub enum ErrorCorrection {
    /// Bob's player and question whose answers Alice's key is reconciled with; the joint
    /// distribution comes from the behaviour.
    KeyPair(TargetChoice),
    /// The probability that the key pair's answers differ; H(A|B) is bounded by Fano's
    /// inequality, h(Q) + Q log₂(|A| − 1).
    ErrorRate(f64),
}

/// Options of [`entropy`].
#[derive(Debug, Clone)]
pub struct EntropyCommandOptions {
    /// Whose answer's entropy (default: the first player's answer to its first question).
    pub target: TargetChoice,
    /// A second player's answer, for the entropy of the pair.
    pub with: Option<TargetChoice>,
    /// The constraint.
    pub given: EntropyGiven,
    /// The key rate's error-correction term, when a key rate is asked for.
    pub key: Option<ErrorCorrection>,
    /// The hierarchy's options.
    pub hierarchy: EntropyOptions,
}

/// The asymptotic Devetak–Winter key rate at one bound.
#[derive(Debug, Clone, Serialize)]
pub struct DevetakWinter {
    /// The lower bound on H(A|X=x*, E) used, in bits.
    pub conditional_entropy: f64,
    /// The error-correction term H(A|B, X=x*, Y=y*) (or its Fano bound), in bits.
    pub error_correction: f64,
    /// Where that term came from.
    pub error_correction_from: String,
    /// The key rate per round, H(A|X=x*, E) − H(A|B, …), floored at 0.
    pub key_rate: f64,
}

/// One bound of the `entropy` command.
#[derive(Debug, Clone, Serialize)]
pub struct EntropyResult {
    /// The score the bound assumes (absent for a behaviour).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub score: Option<f64>,
    /// The bound.
    pub entropy: ConditionalEntropy,
    /// The key rate, when asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub key: Option<DevetakWinter>,
}

/// Bounds on a conditional von Neumann entropy (the `entropy` command).
#[derive(Debug, Clone)]
pub struct EntropyReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// Whose answers.
    pub target: Target,
    /// The answers in words, e.g. `alice (question 0)`.
    pub target_name: String,
    /// What the bounds are conditioned on, in words.
    pub given: String,
    /// One result per score, or one for the behaviour.
    pub results: Vec<EntropyResult>,
    /// Scores of a sweep that could not be bounded, with the reason.
    pub not_obtained: Vec<String>,
    /// The assumptions behind every figure.
    pub assumptions: Vec<String>,
}

/// The assumptions the entropy and key figures rest on.
pub fn entropy_assumptions(key: bool) -> Vec<String> {
    let mut a = vec![
        "adversary: quantum side information E on the devices' source (collective attacks: i.i.d. rounds, each with the same strategy)".to_string(),
        "asymptotic: a per-round figure for infinitely many rounds; the finite-size statement is separate".to_string(),
        "the devices' behaviour is quantum, with the players' measurements commuting (no communication during a round), and nothing else is assumed about them".to_string(),
    ];
    if key {
        a.push("key rate: Devetak–Winter rate with one-way error correction at the Shannon limit (Devetak & Winter 2005, Proc. R. Soc. A 461, 207)".to_string());
    }
    a.push("not a security proof: defer to the peer-reviewed proof of the protocol and the certification practice that applies".to_string());
    a
}

/// What noisy preprocessing assumes, for the assumption lists (None without it).
pub(crate) fn preprocessing_assumption(preprocessing: Preprocessing) -> Option<String> {
    match preprocessing {
        Preprocessing::None => None,
        Preprocessing::Noisy { probability } => Some(format!(
            "noisy preprocessing: the key player changes each key answer with probability {probability} using private randomness that is never announced and that the adversary does not know (Ho et al. 2020, PRL 124, 230502); the error-correction term is that of the changed answers"
        )),
    }
}

/// One node's SDP of the entropy hierarchy in the SDPA sparse format (`entropy --sdpa`).
#[derive(Debug, Clone)]
pub struct EntropyNodeExport {
    /// The node t.
    pub t: f64,
    /// The SDPA file.
    pub sdpa: String,
    /// Its variable map, with each variable's bound.
    pub words: String,
}

/// Every node's SDP (t < 1) of the entropy hierarchy at the options' one score, in full (no
/// symmetry reduction), in the SDPA sparse format with a variable map each. Each file's comment
/// says how its optimum enters the bound.
pub fn entropy_sdpa_export(
    game: &Game,
    options: &EntropyCommandOptions,
) -> Result<Vec<EntropyNodeExport>> {
    let s = &game.scenario;
    let score = one_entropy_score(options)?;
    let target = TargetChoice::target(s, &options.target, options.with.as_ref())?;
    let prepared = PreparedHierarchy::new(s, &target, &options.hierarchy)?;
    let nodes = prepared.node_sdps(&EntropyConstraint::Score(score))?;
    let count = nodes.len() + 1;
    Ok(nodes
        .into_iter()
        .enumerate()
        .map(|(i, node)| {
            let comment = vec![
                format!(
                    "bellgap entropy hierarchy (Gauss–Radau, {count} nodes), node {} of {}: t = {:?}, weight w = {:?}; score at least {score:?}",
                    i + 1,
                    count - 1,
                    node.t,
                    node.weight
                ),
                format!(
                    "maximise c0 + Σ b_i y_i is minimise Σ c_i x_i with c = −b; c0 = {:?}; the node's infimum is minus the maximum, and H ≥ Σ_nodes w/(t ln 2)·(1 + infimum) + the node t = 1's floor",
                    node.problem.objective_constant
                ),
                "each variable's bound (not part of the format) is in the .words file with its word".into(),
            ];
            let mut words = String::from(
                "# variable (1-based), real or imaginary part, word (player:question:answer projectors, then the adversary's Z<e> and Z<e>*) and its bound\n",
            );
            for (k, name) in node.variables.iter().enumerate() {
                words.push_str(&format!("{} {name}\n", k + 1));
            }
            EntropyNodeExport {
                t: node.t,
                sdpa: crate::optim::sdpa::SdpaProblem::from_problem(&node.problem)
                    .to_text(&comment),
                words,
            }
        })
        .collect())
}

fn one_entropy_score(options: &EntropyCommandOptions) -> Result<f64> {
    match &options.given {
        EntropyGiven::Scores(scores) if scores.len() == 1 => Ok(scores[0]),
        _ => Err(Error::InvalidArgument(
            "the entropy nodes are exported and imported at one score: give --score".into(),
        )),
    }
}

/// External solvers' solutions of the nodes [`entropy_sdpa_export`] writes, verified here
/// (`entropy --sdpa-solutions`).
#[derive(Debug, Clone, Serialize)]
pub struct EntropyImportReport<'a> {
    /// The game.
    #[serde(skip)]
    pub game: &'a Game,
    /// The answers in words.
    pub answers: String,
    /// The score.
    pub score: f64,
    /// The bound they prove.
    #[serde(flatten)]
    pub imported: crate::bounds::entropy::hierarchy::ImportedEntropy,
}

/// Verifies `solutions` (SDPA output format, one per node in order, with their sources' names)
/// as solutions of the nodes
/// that [`entropy_sdpa_export`] writes with the same options, and sums the bound they prove.
pub fn entropy_sdpa_import<'a>(
    game: &'a Game,
    options: &EntropyCommandOptions,
    solutions: &[(String, String)],
    exact: bool,
) -> Result<EntropyImportReport<'a>> {
    let s = &game.scenario;
    let score = one_entropy_score(options)?;
    let target = TargetChoice::target(s, &options.target, options.with.as_ref())?;
    let prepared = PreparedHierarchy::new(s, &target, &options.hierarchy)?;
    let imported =
        prepared.bound_from_solutions(&EntropyConstraint::Score(score), solutions, exact)?;
    Ok(EntropyImportReport {
        game,
        answers: target_name(s, &target),
        score,
        imported,
    })
}

/// How many node files an entropy export writes with these options (the nodes t < 1).
pub fn entropy_node_count(options: &EntropyCommandOptions) -> usize {
    options.hierarchy.nodes.saturating_sub(1)
}

/// The `entropy` command: a verified lower bound on H(A|X=x*, E) at each score, or for the
/// behaviour, and optionally the Devetak–Winter key rate.
pub fn entropy<'a>(
    game: &'a Game,
    options: &EntropyCommandOptions,
    observer: &dyn Observer,
) -> Result<EntropyReport<'a>> {
    let s = &game.scenario;
    let target = TargetChoice::target(s, &options.target, options.with.as_ref())?;
    target.check(s)?;
    if options.key.is_some() && target.parts.len() != 1 {
        return Err(Error::InvalidArgument(
            "a key rate is for one player's key answers: leave out the second player".into(),
        ));
    }
    // Built once for every constraint (the level, the matrix, the reduction, the bound that
    // scores are checked against), and for the estimate.
    let prepared = PreparedHierarchy::new(s, &target, &options.hierarchy)?;
    if let EntropyGiven::Scores(scores) = &options.given {
        warn_slow_entropy(&prepared, scores.len(), observer)?;
    }
    let (constraints, given): (Vec<(Option<f64>, EntropyConstraint)>, String) = match &options.given
    {
        EntropyGiven::Scores(scores) => {
            if scores.is_empty() {
                return Err(Error::InvalidArgument("no score given".into()));
            }
            check_score_count(scores.len())?;
            (
                scores
                    .iter()
                    .map(|&v| (Some(v), EntropyConstraint::Score(v)))
                    .collect(),
                "every quantum behaviour scoring at least the row's score".into(),
            )
        }
        EntropyGiven::Behaviour(c) => {
            let (region, given) = region_of_correlations(s, c)?;
            (vec![(None, EntropyConstraint::Region(region))], given)
        }
        EntropyGiven::Counts { counts, error } => {
            check_same_parties(s, &counts.parties, &counts.name)?;
            let region = counts.confidence_region(*error)?;
            let given = region.description.clone();
            (vec![(None, EntropyConstraint::Region(region))], given)
        }
        EntropyGiven::Region(region) => (
            vec![(None, EntropyConstraint::Region(region.clone()))],
            region.description.clone(),
        ),
        EntropyGiven::Strategy { strategy, name } => {
            strategy
                .check(s)
                .map_err(|e| Error::InvalidArgument(format!("the strategy `{name}`: {e}")))?;
            // The strategy is made exactly valid first; its behaviour then stands for every
            // behaviour within the evaluation's error bound.
            let (p, error) = strategy.certified_behaviour(s);
            let region = BehaviourRegion::around(
                &p,
                error,
                format!("the behaviour of the strategy `{name}` made exactly valid (Born rule), within its evaluation error {error:.1e}"),
            )?;
            (
                vec![(None, EntropyConstraint::Region(region))],
                format!("the behaviour of the strategy `{name}` (made exactly valid; Born rule)"),
            )
        }
    };
    let error_correction = match &options.key {
        None => None,
        Some(ErrorCorrection::ErrorRate(q)) => {
            if !(0.0..=1.0).contains(q) {
                return Err(Error::InvalidArgument(format!(
                    "the error rate must be a probability, got {q}"
                )));
            }
            let answers = s.parties()[target.parts[0].0].answers();
            let d = answers as f64;
            let noisy = options.hierarchy.preprocessing.error_rate(*q, answers);
            let fano = fano_bound(noisy, answers);
            Some((
                fano,
                match options.hierarchy.preprocessing {
                    Preprocessing::None => {
                        format!("Fano's bound at error rate {q}: {}", fano_formula(d))
                    }
                    Preprocessing::Noisy { probability } => format!(
                        "Fano's bound at the preprocessed answers' error rate {noisy} (raw {q}, noisy preprocessing {probability}): {}",
                        fano_formula(d)
                    ),
                },
            ))
        }
        Some(ErrorCorrection::KeyPair(choice)) => {
            // A behaviour or a strategy gives exactly one constraint, the behaviour itself.
            let Some((_, EntropyConstraint::Region(region))) = constraints.first() else {
                return Err(Error::InvalidArgument(
                    "the key pair's error-correction term needs the behaviour (or a strategy); with a score, give the error rate instead".into(),
                ));
            };
            let (pa, xa) = target.parts[0];
            let (pb, yb) = choice.resolve(s, 1)?;
            if pb == pa {
                return Err(Error::InvalidArgument(
                    "the key pair needs a second player".into(),
                ));
            }
            // H(A|B) over the whole region: at its centre, plus the continuity term for the
            // table's largest distance from the centre (the preprocessing channel only
            // contracts it).
            let half_widths: Vec<f64> = region
                .centre
                .iter()
                .zip(region.lower.iter().zip(&region.upper))
                .map(|(c, (l, u))| (c - l).max(u - c).max(0.0))
                .collect();
            let distance: f64 = key_pair_table(s, &half_widths, (pa, xa), (pb, yb))
                .iter()
                .flatten()
                .sum::<f64>()
                / 2.0;
            let table = options
                .hierarchy
                .preprocessing
                .apply_to_rows(&key_pair_table(s, &region.centre, (pa, xa), (pb, yb)));
            let by_continuity = error_correction_entropy_within(&table, distance)?;
            // Fano's inequality at the largest error rate the region allows is a second valid
            // bound (often tighter for a wide confidence region): H(A|B) ≤ h(Q) + Q log₂(d − 1),
            // increasing in Q up to 1 − 1/d, with Q the sum of the upper ends of the table's
            // off-diagonal entries (the flip maps it to its own, larger-is-worse, error rate).
            let upper = key_pair_table(s, &region.upper, (pa, xa), (pb, yb));
            let d = upper.len();
            let q = options
                .hierarchy
                .preprocessing
                .error_rate(differ_probability(&upper).min(1.0), d)
                .min(1.0 - 1.0 / d as f64);
            let by_fano = (fano_bound(q, d) * (1.0 + 1e-12)).min((d as f64).log2());
            let h = by_continuity.min(by_fano);
            Some((
                h,
                format!(
                    "H(A|B) of the behaviour's answers of {} (question {}{}) and {} (question {}), bounded over the whole region (continuity or Fano at the largest error rate, the smaller)",
                    s.parties()[pa].name,
                    s.parties()[pa].question_labels[xa],
                    match options.hierarchy.preprocessing {
                        Preprocessing::None => String::new(),
                        Preprocessing::Noisy { probability } =>
                            format!(", after noisy preprocessing {probability}"),
                    },
                    s.parties()[pb].name,
                    s.parties()[pb].question_labels[yb]
                ),
            ))
        }
    };
    let mut results = Vec::new();
    let mut not_obtained = Vec::new();
    let sweep = constraints.len() > 1;
    let count = constraints.len();
    for (k, (score, constraint)) in constraints.into_iter().enumerate() {
        let solved = |done: usize, total: usize| {
            if observer.wants_progress() {
                observer.progress(Stage::EntropyNodes, k * total + done, count * total);
            }
        };
        let typed = matches!(&options.given, EntropyGiven::Behaviour(c) if c.rounds.is_none());
        match prepared
            .bound(&constraint, &solved)
            .map_err(|e| match e {
                Error::InvalidArgument(m) if typed && m.contains("outside the quantum set") => {
                    Error::InvalidArgument(format!(
                        "{m}. Measured frequencies signal and scatter: give each row's `rounds` in the correlations file, or the counts with --counts, for a confidence region"
                    ))
                }
                other => other,
            }) {
            Ok(entropy) => {
                let key = error_correction.as_ref().map(|(h, from)| DevetakWinter {
                    conditional_entropy: entropy.bits,
                    error_correction: *h,
                    error_correction_from: from.clone(),
                    key_rate: (entropy.bits - h).max(0.0),
                });
                results.push(EntropyResult {
                    score,
                    entropy,
                    key,
                });
            }
            Err(e) if sweep && !matches!(e, Error::TooLarge { .. }) => {
                not_obtained.push(format!("score {}: {e}", score.unwrap_or(f64::NAN)))
            }
            Err(e) => return Err(e),
        }
    }
    if results.is_empty() {
        return Err(Error::InvalidArgument(format!(
            "no score of the sweep could be bounded: {}",
            not_obtained.join("; ")
        )));
    }
    Ok(EntropyReport {
        game,
        target_name: target_name(s, &target),
        target,
        given,
        results,
        not_obtained,
        assumptions: {
            let mut a = entropy_assumptions(options.key.is_some());
            if let Some(line) = preprocessing_assumption(options.hierarchy.preprocessing) {
                a.insert(a.len() - 1, line);
            }
            a
        },
    })
}

/// The answers of a target in words, e.g. `alice (question 0) and bob (question 1)`.
pub(crate) fn target_name(s: &Scenario, target: &Target) -> String {
    target
        .parts
        .iter()
        .map(|&(p, x)| {
            format!(
                "{} (question {})",
                s.parties()[p].name,
                s.parties()[p].question_labels[x]
            )
        })
        .collect::<Vec<_>>()
        .join(" and ")
}

/// Refuses correlations whose players differ from the game's (names, question and answer counts).
/// The region a correlations file stands for, and its description: with rounds, the confidence
/// region of the counts they stand for (each frequency times its rounds, rounded), each interval
/// widened by the rounding and the file's tolerance, no projection; without, every behaviour
/// within the tolerance a typed behaviour is read to.
pub(crate) fn region_of_correlations(
    s: &Scenario,
    c: &Correlations,
) -> Result<(BehaviourRegion, String)> {
    check_same_players(s, c)?;
    if c.rounds.is_some() {
        let as_counts = Counts::of_measured(c)?;
        let mut region = as_counts.confidence_region(MEASURED_BEHAVIOUR_ERROR)?;
        let fitted = as_counts.frequencies();
        for (k, &p) in c.p.iter().enumerate() {
            let slack = (p - fitted[k]).abs() + ROW_TOLERANCE;
            region.lower[k] = (region.lower[k] - slack).max(0.0);
            region.upper[k] = (region.upper[k] + slack).min(1.0);
        }
        region.centre = c.p.clone();
        let given = region.description.clone();
        return Ok((region, given));
    }
    let region = BehaviourRegion::around(
        &c.p,
        ROW_TOLERANCE,
        format!(
            "every behaviour within {ROW_TOLERANCE:e} of `{}` in each probability (the tolerance a typed behaviour is read to)",
            c.name
        ),
    )?;
    Ok((
        region,
        format!(
            "the behaviour `{}`, as every behaviour within {ROW_TOLERANCE:e} of it in each probability",
            c.name
        ),
    ))
}

fn check_same_players(s: &Scenario, c: &Correlations) -> Result<()> {
    check_same_parties(s, &c.parties, &c.name)
}

/// Refuses data whose players differ from the game's (names, question and answer counts).
pub(crate) fn check_same_parties(s: &Scenario, parties: &[Party], name: &str) -> Result<()> {
    let same = parties.len() == s.players()
        && parties.iter().zip(s.parties()).all(|(a, b)| {
            a.name == b.name && a.questions() == b.questions() && a.answers() == b.answers()
        });
    if same {
        Ok(())
    } else {
        Err(Error::InvalidArgument(format!(
            "the data `{name}` do not have the game's players (names, question and answer counts, in order)"
        )))
    }
}

/// p(a, b | x*, y*) of two players, the others' answers summed out at their first question.
pub(crate) fn key_pair_table(
    s: &Scenario,
    p: &[f64],
    a: (usize, usize),
    b: (usize, usize),
) -> Vec<Vec<f64>> {
    let parties = s.parties();
    let qr: Vec<usize> = parties.iter().map(|q| q.questions()).collect();
    let ar: Vec<usize> = parties.iter().map(|q| q.answers()).collect();
    let na: usize = ar.iter().product();
    let mut qd = vec![0; parties.len()];
    qd[a.0] = a.1;
    qd[b.0] = b.1;
    let qi = crate::model::scenario::index_of(&qd, &qr);
    let mut table = vec![vec![0.0; ar[b.0]]; ar[a.0]];
    let mut ad = vec![0; parties.len()];
    for ai in 0..na {
        crate::model::scenario::digits(ai, &ar, &mut ad);
        table[ad[a.0]][ad[b.0]] += p[qi * na + ai];
    }
    table
}
