//! One function per command's work, called alike by the command line, the examples and (later)
//! the Python package: each takes a loaded input and an options struct, runs the bounds in order,
//! and returns an output struct that the renderers ([`crate::render`]) turn into text, JSON or a
//! document. The sequence of bounds is written once, in [`bounds`]; [`review`] builds on it.
//!
//! Long work reports through an [`Observer`]: warnings before it starts (estimates) and
//! progress while it runs. The library prints nothing itself.

mod design;
mod figures;
mod finite_size;
mod review;
mod selftest;

pub use design::{
    design, DesignFigure, DesignReport, DesignRequest, FigureValue, DEFAULT_TANGENTS,
};
pub use figures::{
    entropy, entropy_assumptions, entropy_node_count, entropy_sdpa_export, entropy_sdpa_import,
    key, local, margin, randomness, randomness_sdpa_export, randomness_sdpa_import, verify,
    BestFlip, DevetakWinter, EntropyCommandOptions, EntropyGiven, EntropyImportReport,
    EntropyNodeExport, EntropyReport, EntropyResult, ErrorCorrection, GuessingImportReport,
    KeyOptions, KeyReport, LocalReport, MarginOptions, MarginReport, RandomnessOptions,
    RandomnessReport, RunData, TargetChoice, VerifyReport, MAX_SCORES,
};
pub use finite_size::{
    finite_size, finite_size_assumptions, Extracting, FiniteSizeOptions, FiniteSizeReport,
    KeyDisclosure, KeyParts, Leakage, Tangent, TangentTried, COMMON_EFFICIENCY,
    DEFAULT_TANGENT_POINTS, DEFAULT_TEST_CAP_ABORT, MAX_TANGENT_POINTS,
};
pub use review::{
    review, Review, ReviewDevices, ReviewEntropyKey, ReviewFiniteSize, ReviewKey, ReviewRandomness,
    ReviewThreshold, REVIEW_NODES,
};
pub use selftest::{
    self_test, self_test_assumptions, SelfTestGiven, SelfTestReport, SelfTestRequest,
    SelfTestTarget,
};

use serde::Serialize;

use crate::bounds::classical::{
    self, classical_value, classical_value_or_incumbent, Choice, ClassicalEstimate,
    ClassicalOptions, ClassicalStatus, ClassicalValue,
};
use crate::bounds::nosignal::{no_signalling_value, NoSignallingValue};
use crate::bounds::quantum::analysis::{analyse, StrategyAnalysis};
use crate::bounds::quantum::npa::{self, Level, NpaBound, NpaOptions};
use crate::bounds::quantum::seesaw::{self, SeesawOptions, SeesawResult};
use crate::bounds::quantum::symmetric::SymmetryChoice;
use crate::error::{Error, Result};
use crate::formats::game::Game;
use crate::limits::{human_seconds, Limits};
use crate::model::scenario::{Scenario, Sizes};
use crate::model::strategy::{CertifiedValue, QuantumStrategy};
use crate::model::symmetry::{symmetries, symmetries_modulo_no_signalling, SymmetryGroup};
use crate::optim::backend::Backend;
use crate::optim::first_order::{FirstOrderOptions, IterationReport};

/// The quantum value counts as settled when the verified upper bound and the see-saw's lower
/// bound are this close.
pub const QUANTUM_SETTLED_TOLERANCE: f64 = 1e-6;

/// A stage of long work that reports progress.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// Subtrees of the classical branch and bound.
    ClassicalSearch,
    /// Restarts of the see-saw.
    SeesawRestarts,
    /// Quadrature nodes of the entropy hierarchy (each one relaxation).
    EntropyNodes,
    /// Scores at which the entropy bound's min-tradeoff lines are computed.
    TangentLines,
    /// Implementation searches of a threshold search.
    DesignSearches,
}

/// Receives what long work has to say while it runs. Every method has a silent default.
pub trait Observer: Sync {
    /// A heads-up before work estimated to take long.
    fn warn(&self, _message: &str) {}
    /// Whether [`Observer::progress`] is wanted (progress callbacks cost a little).
    fn wants_progress(&self) -> bool {
        false
    }
    /// `done` of `total` units of `stage` are finished.
    fn progress(&self, _stage: Stage, _done: usize, _total: usize) {}
    /// An iterative solver's progress on `stage` (e.g. "NPA level 5"): iterations so far and
    /// the verified bound of its current point.
    fn solver_progress(&self, _stage: &str, _report: &IterationReport) {}
    /// The iterative solver on `stage` has finished (a progress line may be cleared).
    fn solver_done(&self, _stage: &str) {}
    /// `bounds` has obtained (or given up on) `bound`; `so_far` is the report up to here, for
    /// printing each bound as soon as it is known.
    fn obtained(&self, _bound: BoundKind, _so_far: &GameReport<'_>) {}
}

/// One of the bounds the `bounds` command computes, in the order it computes them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BoundKind {
    /// The exact classical value.
    Classical,
    /// The no-signalling value.
    NoSignalling,
    /// The NPA upper bound.
    Npa,
    /// The see-saw lower bound.
    Seesaw,
}

impl BoundKind {
    /// Every bound, in the order `bounds` computes them.
    pub const ALL: [BoundKind; 4] = [
        BoundKind::Classical,
        BoundKind::NoSignalling,
        BoundKind::Npa,
        BoundKind::Seesaw,
    ];

    /// The name used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            BoundKind::Classical => "classical",
            BoundKind::NoSignalling => "no-signalling",
            BoundKind::Npa => "npa",
            BoundKind::Seesaw => "seesaw",
        }
    }
}

/// An observer that ignores everything.
pub struct Silent;

impl Observer for Silent {}

/// Which command a [`GameReport`] answers; it decides which parts are filled in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CommandKind {
    /// Sizes and estimates of a game.
    Check,
    /// The classical value.
    Classical,
    /// The no-signalling value.
    Nosignal,
    /// Every bound and the gaps.
    Bounds,
    /// NPA upper bounds at one or more levels.
    Npa,
    /// A see-saw strategy.
    Seesaw,
    /// A given strategy's value.
    Evaluate,
}

/// Sizes of a game and the cost estimates of its classical value (the `check` command).
#[derive(Debug, Clone, Serialize)]
pub struct GameSizes {
    /// Table and strategy counts.
    pub sizes: Sizes,
    /// Cost of the classical search and MILP.
    pub classical: ClassicalEstimate,
    /// Smallest and largest value any behaviour can have.
    pub value_range: (f64, f64),
    /// The range of one round's score, the estimator whose mean is the value
    /// ([`Scenario::per_round_score_range`]): what `margin`, `review` and `finite-size` use.
    pub per_round_score_range: (f64, f64),
    /// The relabellings of players, questions and answers that leave the weighted score table
    /// unchanged (None when the table is too large to search).
    pub symmetry: Option<SymmetryGroup>,
    /// The relabellings that leave the value unchanged on every no-signalling behaviour (a
    /// supergroup of `symmetry`; what the NPA reduction uses). None when the table is too large
    /// to put in canonical form.
    pub symmetry_modulo_no_signalling: Option<SymmetryGroup>,
}

impl GameSizes {
    /// The group modulo no-signalling when it is larger than the table's own (what a report
    /// adds to the table's group; `None` when it says nothing more).
    pub fn wider_symmetry(&self) -> Option<&SymmetryGroup> {
        self.symmetry_modulo_no_signalling
            .as_ref()
            .filter(|g| self.symmetry.as_ref().is_none_or(|t| t.order != g.order))
    }
}

/// Everything computed for one game by `check`, `classical`, `nosignal`, `bounds`, `npa`,
/// `seesaw` or `evaluate`: each bound that was obtained, the bounds that could not be (with the
/// reason, never replaced by a number), and how reported bounds were reconciled.
#[derive(Debug, Clone)]
pub struct GameReport<'a> {
    /// The command answered.
    pub command: CommandKind,
    /// The game.
    pub game: &'a Game,
    /// Sizes and estimates (`check`).
    pub sizes: Option<GameSizes>,
    /// The classical value (or, from `classical`, an incumbent).
    pub classical: Option<ClassicalValue>,
    /// The no-signalling value.
    pub no_signalling: Option<NoSignallingValue>,
    /// The NPA bound of the last (or only) level.
    pub npa: Option<NpaBound>,
    /// Lower levels computed for comparison (`npa --level "1;2"`), in the order given.
    pub npa_levels: Vec<NpaBound>,
    /// The see-saw result.
    pub seesaw: Option<SeesawResult>,
    /// The Born-rule value of a given strategy (`evaluate`).
    pub evaluated: Option<CertifiedValue>,
    /// Its score under the strategy file's noise model (`evaluate`, with a `noise:` section).
    pub noisy: Option<NoisyValue>,
    /// Entanglement and robustness of the strategy found or given.
    pub strategy_analysis: Option<StrategyAnalysis>,
    /// Bounds that could not be obtained, with the reason.
    pub not_obtained: Vec<String>,
    /// How reported bounds were reconciled with each other ([`GameReport::reconcile_bounds`]).
    pub notes: Vec<String>,
}

/// A strategy's score under a noise model (`evaluate` of a file with a `noise:` section).
#[derive(Debug, Clone, Serialize)]
pub struct NoisyValue {
    /// The noise model.
    pub noise: crate::model::noise::NoiseModel,
    /// The no-click answer index per player and question used (the best, when not fixed).
    pub no_click_answers: crate::model::noise::Assignment,
    /// The noisy score with its error term; `lower` is certain.
    pub score: CertifiedValue,
    /// `score.lower` minus the classical value rounded up, when the classical value is known.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub margin: Option<f64>,
}

/// Differences between the bounds, each present when both of its bounds are.
#[derive(Debug, Clone, Copy, Default, Serialize)]
pub struct Gaps {
    /// See-saw lower bound minus the classical value.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantum_lower_minus_classical: Option<f64>,
    /// Verified NPA bound minus the see-saw lower bound.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantum_upper_minus_lower: Option<f64>,
    /// No-signalling value minus the classical value.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub no_signalling_minus_classical: Option<f64>,
    /// Verified NPA bound minus the classical value.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantum_upper_minus_classical: Option<f64>,
    /// No-signalling value minus the verified NPA bound.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub no_signalling_minus_quantum_upper: Option<f64>,
}

impl Gaps {
    /// Whether no gap is known.
    pub fn is_empty(&self) -> bool {
        self.quantum_lower_minus_classical.is_none()
            && self.quantum_upper_minus_lower.is_none()
            && self.no_signalling_minus_classical.is_none()
            && self.quantum_upper_minus_classical.is_none()
            && self.no_signalling_minus_quantum_upper.is_none()
    }
}

impl<'a> GameReport<'a> {
    /// An empty report for `command` on `game`.
    pub fn new(command: CommandKind, game: &'a Game) -> Self {
        GameReport {
            command,
            game,
            sizes: None,
            classical: None,
            no_signalling: None,
            npa: None,
            npa_levels: Vec::new(),
            seesaw: None,
            evaluated: None,
            noisy: None,
            strategy_analysis: None,
            not_obtained: Vec::new(),
            notes: Vec::new(),
        }
    }

    /// The smallest verified NPA bound over the levels computed.
    pub fn best_npa(&self) -> Option<&NpaBound> {
        self.npa_levels
            .iter()
            .chain(self.npa.as_ref())
            .min_by(|a, b| a.verified_upper.total_cmp(&b.verified_upper))
    }

    /// Whether the verified upper bound and the see-saw lower bound meet (None unless both
    /// are known).
    pub fn quantum_settled(&self) -> Option<bool> {
        let (sw, b) = (self.seesaw.as_ref()?, self.npa.as_ref()?);
        Some(b.verified_upper - sw.quantum_lower < QUANTUM_SETTLED_TOLERANCE)
    }

    /// The gaps between the bounds obtained.
    pub fn gaps(&self) -> Gaps {
        let classical = self.classical.as_ref().map(|c| c.value);
        let lower = self.seesaw.as_ref().map(|s| s.quantum_lower);
        let upper = self.npa.as_ref().map(|b| b.verified_upper);
        let ns = self.no_signalling.as_ref().map(|n| n.value);
        let minus = |a: Option<f64>, b: Option<f64>| Some(a? - b?);
        Gaps {
            quantum_lower_minus_classical: minus(lower, classical),
            quantum_upper_minus_lower: minus(upper, lower),
            no_signalling_minus_classical: minus(ns, classical),
            quantum_upper_minus_classical: minus(upper, classical),
            no_signalling_minus_quantum_upper: minus(ns, upper),
        }
    }

    /// With several NPA levels: every level's bound is valid, so the best (smallest) verified
    /// one is the quantum upper bound; noted when it is not the last level's (higher levels can
    /// come out looser through the residual charge).
    pub fn note_best_level(&mut self) {
        let Some(last) = &self.npa else { return };
        if let Some(best) = self
            .npa_levels
            .iter()
            .filter(|b| b.verified_upper < last.verified_upper)
            .min_by(|a, b| a.verified_upper.total_cmp(&b.verified_upper))
        {
            self.notes.push(format!(
                "the best verified bound is level {}'s: quantum ≤ {} (level {} gives {})",
                best.level,
                crate::numbers::num(best.verified_upper),
                last.level,
                crate::numbers::num(last.verified_upper)
            ));
        }
    }

    /// Makes the reported bounds obey `classical ≤ quantum lower ≤ quantum upper ≤
    /// no-signalling`, using only facts that hold for the true values: the quantum value is at
    /// least the (exact) classical value, so the quantum lower bound starts from the larger of
    /// the two; the no-signalling value bounds the quantum value from above, so a verified NPA
    /// bound above it (solver tolerance) is replaced by it; and the no-signalling value is at
    /// least every lower bound, so a simplex value a rounding error below one is raised to it.
    /// Each change is recorded in `notes`.
    pub fn reconcile_bounds(&mut self) {
        use crate::numbers::num;
        let classical = self
            .classical
            .as_ref()
            .filter(|c| c.status == ClassicalStatus::Exact)
            .map(|c| c.value);
        if let (Some(c), Some(sw)) = (classical, self.seesaw.as_mut()) {
            if sw.quantum_lower < c {
                self.notes.push(format!(
                    "the see-saw strategy scores {} (dims {:?}), below the classical value: the quantum lower bound is the classical value",
                    num(sw.quantum_lower),
                    sw.dims
                ));
                sw.quantum_lower = c;
            }
        }
        let lower = self
            .seesaw
            .as_ref()
            .map(|sw| sw.quantum_lower)
            .into_iter()
            .chain(classical)
            .fold(f64::NEG_INFINITY, f64::max);
        if let Some(ns) = self.no_signalling.as_mut() {
            if ns.value < lower {
                self.notes.push(format!(
                    "the no-signalling LP gave {}, a rounding error below a lower bound: raised to {}",
                    num(ns.value),
                    num(lower)
                ));
                ns.value = lower;
            }
        }
        let ns_upper = self
            .no_signalling
            .as_ref()
            .map(|ns| ns.certified_upper.unwrap_or(ns.value).max(ns.value));
        if let (Some(up), Some(b)) = (ns_upper, self.npa.as_mut()) {
            if b.verified_upper > up {
                self.notes.push(format!(
                    "the verified NPA bound {} lies above the no-signalling value (solver tolerance): the quantum upper bound is the no-signalling value {}",
                    num(b.verified_upper),
                    num(up)
                ));
                b.verified_upper = up;
            }
        }
    }
}

/// Options of [`bounds`].
#[derive(Debug, Clone, Default)]
pub struct BoundsOptions {
    /// NPA level (None: [`npa::default_level`], the largest standard level that stays cheap).
    pub npa_level: Option<Level>,
    /// SDP backend of the NPA bound.
    pub backend: Backend,
    /// Whether the NPA relaxation is reduced by the game's symmetries.
    pub symmetry: SymmetryChoice,
    /// Tolerance and limits of the first-order method, when it runs.
    pub first_order: FirstOrderOptions,
    /// The see-saw (its `limits` are replaced by [`BoundsOptions::limits`]).
    pub seesaw: SeesawOptions,
    /// Work limits of every bound.
    pub limits: Limits,
    /// Bounds not to compute.
    pub skip: Vec<BoundKind>,
    /// Wall-clock seconds for the whole command (default: none). A bound estimated to need more
    /// than what is left is not started (and listed as not obtained); the NPA bound then runs
    /// the first-order method, stopped at the time left with the verified bound it has reached,
    /// and the see-saw starts no restart once the time is up.
    pub budget: Option<f64>,
}

/// The `check` command: sizes and estimates, no solving.
pub fn check(game: &Game) -> GameReport<'_> {
    let s = &game.scenario;
    let mut r = GameReport::new(CommandKind::Check, game);
    r.sizes = Some(GameSizes {
        sizes: Sizes::of(s),
        classical: ClassicalEstimate::of(s),
        value_range: s.value_range(),
        per_round_score_range: s.per_round_score_range(),
        symmetry: symmetries(s),
        symmetry_modulo_no_signalling: symmetries_modulo_no_signalling(s),
    });
    r
}

/// A heads-up before a classical search estimated to take long (but not so long it is
/// refused).
fn warn_long_search(s: &Scenario, limits: &Limits, observer: &dyn Observer) {
    if ClassicalEstimate::of(s).search_work < 1e9 {
        return;
    }
    let p = classical::estimate_search(s);
    if p.seconds > 30.0 && (limits.force || p.seconds <= classical::SEARCH_SECONDS_LIMIT) {
        observer.warn(&format!(
            "the classical search may take about {} (estimate from random probes: {:.1e} nodes)",
            human_seconds(p.seconds),
            p.nodes
        ));
    }
}

/// Estimated seconds above which an NPA solve is announced with its estimate.
const LONG_NPA_SECONDS: f64 = 30.0;

/// Solves a built relaxation with its estimate announced first when long, and the first-order
/// method's progress (iterations, bound so far) passed to `observer`.
fn npa_observed(
    relaxation: &npa::Relaxation,
    est: &npa::NpaEstimate,
    options: &NpaOptions,
    build_seconds: f64,
    observer: &dyn Observer,
) -> Result<NpaBound> {
    let stage = format!("NPA level {}", relaxation.level);
    if est.seconds > LONG_NPA_SECONDS {
        let planned = if est.solver == Backend::FirstOrder {
            let limit = options.first_order.max_iterations as f64;
            format!(
                " (planned {:.0} iterations; at most {} at its {limit:.0}-iteration limit{}; progress below)",
                npa::FIRST_ORDER_PLANNED_ITERATIONS,
                human_seconds(est.seconds * limit / npa::FIRST_ORDER_PLANNED_ITERATIONS),
                if options.first_order.max_seconds.is_finite() {
                    format!("; budget {}", human_seconds(options.first_order.max_seconds))
                } else {
                    String::new()
                }
            )
        } else {
            String::new()
        };
        let solver = if options.backend == Backend::Auto
            && npa::first_order_race(relaxation).is_some()
        {
            "interior-point method's estimate; the first-order method goes first, expected to be faster, and gives way to it only if it falls far behind".to_string()
        } else {
            format!("{} solver", est.solver)
        };
        observer.warn(&format!(
            "{stage} ({}×{} matrix, {} moments) may take about {} and {:.1} GiB ({solver}){planned}",
            est.matrix_size,
            est.matrix_size,
            est.moments,
            human_seconds(est.seconds),
            est.memory_bytes / (1u64 << 30) as f64,
        ));
    }
    let report = |r: &IterationReport| observer.solver_progress(&stage, r);
    let control = npa::SolveControl {
        progress: observer
            .wants_progress()
            .then_some(&report as &(dyn Fn(&IterationReport) + Sync)),
        warm_start: None,
    };
    let solved = npa::solve_relaxation(relaxation, options, &control, build_seconds);
    observer.solver_done(&stage);
    solved
}

/// A heads-up before a see-saw estimated to take long (a rule of thumb, see
/// [`seesaw::estimate_seconds`]); runs estimated above an hour are refused by the see-saw.
fn warn_slow_seesaw(s: &Scenario, options: &SeesawOptions, observer: &dyn Observer) {
    let seconds = seesaw::estimate_seconds(s, options);
    if seconds > 30.0 {
        observer.warn(&format!(
            "the see-saw may take roughly {} (rule of thumb)",
            human_seconds(seconds)
        ));
    }
}

/// Which classical function a command calls: [`classical_value`] (exact only) or
/// [`classical_value_or_incumbent`].
type ClassicalFn =
    fn(&Scenario, &ClassicalOptions, Option<classical::Progress>) -> Result<ClassicalValue>;

/// `compute` with progress reported to `observer`.
fn classical_observed(
    s: &Scenario,
    options: &ClassicalOptions,
    observer: &dyn Observer,
    compute: ClassicalFn,
) -> Result<ClassicalValue> {
    let report = |done: usize, total: usize| observer.progress(Stage::ClassicalSearch, done, total);
    let progress: Option<classical::Progress> = observer
        .wants_progress()
        .then_some(&report as classical::Progress);
    compute(s, options, progress)
}

/// The see-saw with progress reported to `observer`.
fn seesaw_observed(
    s: &Scenario,
    options: &SeesawOptions,
    observer: &dyn Observer,
) -> Result<SeesawResult> {
    let report = |done: usize, total: usize| observer.progress(Stage::SeesawRestarts, done, total);
    let progress: Option<&(dyn Fn(usize, usize) + Sync)> = observer
        .wants_progress()
        .then_some(&report as &(dyn Fn(usize, usize) + Sync));
    seesaw::seesaw(s, options, progress)
}

/// The `classical` command: the exact value, or an incumbent the solver could not prove
/// optimal (reported as a lower bound).
pub fn classical<'a>(
    game: &'a Game,
    options: &ClassicalOptions,
    observer: &dyn Observer,
) -> Result<GameReport<'a>> {
    if options.method != Choice::Milp {
        warn_long_search(&game.scenario, &options.limits, observer);
    }
    let mut r = GameReport::new(CommandKind::Classical, game);
    r.classical = Some(classical_observed(
        &game.scenario,
        options,
        observer,
        classical_value_or_incumbent,
    )?);
    Ok(r)
}

/// The `nosignal` command.
pub fn nosignal<'a>(game: &'a Game, limits: &Limits) -> Result<GameReport<'a>> {
    let mut r = GameReport::new(CommandKind::Nosignal, game);
    r.no_signalling = Some(no_signalling_value(&game.scenario, limits)?);
    Ok(r)
}

/// An optimal no-signalling behaviour written out (`nosignal --save`): the correlations file,
/// and whether its probabilities are exact fractions (with their exact value) or the LP's
/// floating-point solution.
#[derive(Debug, Clone, Serialize)]
pub struct SavedBehaviour {
    /// The file's text.
    #[serde(skip)]
    pub text: String,
    /// Whether the probabilities are exact fractions, checked exactly (non-negative, and
    /// normalised and no-signalling by construction).
    pub exact: bool,
    /// With exact fractions: the behaviour's exact value in the game, as a fraction.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value_fraction: Option<String>,
    /// The behaviour's value (nearest binary64 to the exact one, or the LP's).
    pub value: f64,
    /// With exact fractions: the largest denominator.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub largest_denominator: Option<u64>,
}

/// The optimal behaviour of `report`'s no-signalling value as a correlations file, in exact
/// fractions when the LP's solution reads as one ([`crate::bounds::nosignal::exact_behaviour`]).
pub fn nosignal_behaviour(game: &Game, report: &GameReport) -> Result<SavedBehaviour> {
    let s = &game.scenario;
    let ns = report
        .no_signalling
        .as_ref()
        .ok_or_else(|| Error::solver("no-signalling LP", "no behaviour to write"))?;
    let exact = crate::bounds::nosignal::exact_behaviour(s, ns);
    let (probabilities, description) = match &exact {
        Some(e) => (
            e.probabilities.clone(),
            format!(
                "an optimal no-signalling behaviour of {}, in exact fractions (non-negative, normalised and no-signalling, checked exactly); its value is {} (the table's binary64 numbers taken exactly)",
                game.name,
                crate::numbers::fraction_text(&e.value)
            ),
        ),
        None => (
            ns.behaviour.iter().map(|v| format!("{:?}", v.max(0.0))).collect(),
            format!(
                "an optimal no-signalling behaviour of {} as the LP solved it (floating point); its value is about {}",
                game.name, ns.value
            ),
        ),
    };
    Ok(SavedBehaviour {
        text: crate::formats::correlations::behaviour_file(
            &format!("nosignal-{}", game.name),
            &description,
            s.parties(),
            &probabilities,
        ),
        exact: exact.is_some(),
        value_fraction: exact
            .as_ref()
            .map(|e| crate::numbers::fraction_text(&e.value)),
        value: exact.as_ref().map_or(ns.value, |e| {
            num_traits::ToPrimitive::to_f64(&e.value).unwrap_or(ns.value)
        }),
        largest_denominator: exact.as_ref().map(|e| e.largest_denominator),
    })
}

/// Every bound, in order: the classical value, the no-signalling value, the NPA upper bound and
/// the see-saw lower bound with its strategy's analysis; then the bounds are reconciled. A
/// classical value, NPA bound or see-saw that cannot be obtained (too large, solver stopped) is
/// listed under `not_obtained` and the others are still reported; bad input is an error.
pub fn bounds<'a>(
    game: &'a Game,
    options: &BoundsOptions,
    observer: &dyn Observer,
) -> Result<GameReport<'a>> {
    let s = &game.scenario;
    let start = std::time::Instant::now();
    if let Some(b) = options.budget {
        if !(b.is_finite() && b > 0.0) {
            return Err(Error::InvalidArgument(format!(
                "the budget must be a positive number of seconds (found {b})"
            )));
        }
    }
    // Seconds left of the budget (infinite without one).
    let left = || match options.budget {
        Some(b) => b - start.elapsed().as_secs_f64(),
        None => f64::INFINITY,
    };
    let wanted = |k: BoundKind| !options.skip.contains(&k);
    let mut r = GameReport::new(CommandKind::Bounds, game);
    if wanted(BoundKind::Classical) {
        classical_within(s, options, left(), observer, &mut r)?;
        observer.obtained(BoundKind::Classical, &r);
    }
    if wanted(BoundKind::NoSignalling) {
        r.no_signalling = Some(no_signalling_value(s, &options.limits)?);
        observer.obtained(BoundKind::NoSignalling, &r);
    }
    if wanted(BoundKind::Npa) {
        npa_within(s, options, left(), observer, &mut r);
        observer.obtained(BoundKind::Npa, &r);
    }
    if wanted(BoundKind::Seesaw) {
        let seconds = left();
        if seconds <= 0.0 {
            r.not_obtained
                .push("see-saw lower bound: the budget was used up before it started".into());
        } else {
            let seesaw_options = SeesawOptions {
                limits: options.limits,
                max_seconds: options.seesaw.max_seconds.min(seconds),
                ..options.seesaw.clone()
            };
            warn_slow_seesaw(s, &seesaw_options, observer);
            match seesaw_observed(s, &seesaw_options, observer) {
                Ok(found) => {
                    if found.restarts < seesaw_options.restarts {
                        r.notes.push(format!(
                            "the see-saw ran {} of {} restarts within the budget",
                            found.restarts, seesaw_options.restarts
                        ));
                    }
                    let classical = r.classical.as_ref().map(|c| c.value);
                    r.strategy_analysis = Some(analyse(s, &found.strategy, classical));
                    r.seesaw = Some(found);
                }
                Err(e) => r.not_obtained.push(format!("see-saw lower bound: {e}")),
            }
        }
        observer.obtained(BoundKind::Seesaw, &r);
    }
    r.reconcile_bounds();
    Ok(r)
}

/// The classical value for [`bounds`], unless its search is estimated to need more than
/// `seconds`.
fn classical_within(
    s: &Scenario,
    options: &BoundsOptions,
    seconds: f64,
    observer: &dyn Observer,
    r: &mut GameReport<'_>,
) -> Result<()> {
    if seconds.is_finite() && ClassicalEstimate::of(s).search_work > classical::CHEAP_SEARCH_WORK {
        let estimate = classical::estimate_search(s);
        if estimate.seconds > seconds {
            r.not_obtained.push(format!(
                "classical value: the search is estimated to take {}, more than the {} left of the budget",
                human_seconds(estimate.seconds),
                human_seconds(seconds)
            ));
            return Ok(());
        }
    }
    warn_long_search(s, &options.limits, observer);
    let classical_options = ClassicalOptions {
        limits: options.limits,
        ..Default::default()
    };
    match classical_observed(s, &classical_options, observer, classical_value) {
        Ok(c) => r.classical = Some(c),
        Err(e @ (Error::Solver { .. } | Error::TooLarge { .. })) => {
            r.not_obtained.push(format!("classical value: {e}"))
        }
        Err(e) => return Err(e),
    }
    Ok(())
}

/// The NPA bound for [`bounds`] within `seconds`: a relaxation the automatic choice would solve
/// by the interior-point method in more than that runs the first-order method instead, stopped
/// at the time left.
fn npa_within(
    s: &Scenario,
    options: &BoundsOptions,
    seconds: f64,
    observer: &dyn Observer,
    r: &mut GameReport<'_>,
) {
    let Some(level) = (match &options.npa_level {
        Some(l) => Some(l.clone()),
        None => npa::default_level(s).ok(),
    }) else {
        r.not_obtained
            .push("NPA upper bound: no standard level fits this game".into());
        return;
    };
    if seconds <= 0.0 {
        r.not_obtained
            .push("NPA upper bound: the budget was used up before it started".into());
        return;
    }
    let mut npa_options = NpaOptions {
        level,
        backend: options.backend,
        symmetry: options.symmetry,
        first_order: options.first_order,
        limits: options.limits,
    };
    npa_options.first_order.max_seconds = npa_options.first_order.max_seconds.min(seconds);
    let start = std::time::Instant::now();
    let solved = npa::sized_relaxation(s, &npa_options).and_then(|(relaxation, est)| {
        let (options, est) = if options.backend == Backend::Auto
            && est.solver != Backend::FirstOrder
            && est.seconds > seconds
        {
            let o = NpaOptions {
                backend: Backend::FirstOrder,
                ..npa_options.clone()
            };
            (o, npa::estimate_for(&relaxation, Backend::FirstOrder))
        } else {
            (npa_options.clone(), est)
        };
        let build_seconds = start.elapsed().as_secs_f64();
        npa_observed(&relaxation, &est, &options, build_seconds, observer)
    });
    match solved {
        Ok(b) => r.npa = Some(b),
        Err(e) => r.not_obtained.push(format!("NPA upper bound: {e}")),
    }
}

/// Options of [`npa_levels`].
#[derive(Debug, Clone)]
pub struct NpaLevelsOptions {
    /// The levels, solved in this order; the last is the report's main bound.
    pub levels: Vec<Level>,
    /// SDP backend.
    pub backend: Backend,
    /// Whether each relaxation is reduced by the game's symmetries.
    pub symmetry: SymmetryChoice,
    /// Tolerance and limits of the first-order method, when it runs.
    pub first_order: FirstOrderOptions,
    /// Work limits (every level is size-checked before any is solved).
    pub limits: Limits,
}

impl Default for NpaLevelsOptions {
    fn default() -> Self {
        NpaLevelsOptions {
            levels: vec![Level::Joint],
            backend: Backend::Auto,
            symmetry: SymmetryChoice::Auto,
            first_order: FirstOrderOptions::default(),
            limits: Limits::default(),
        }
    }
}

/// The `npa` command: every level is built and size-checked before any is solved (so a refusal
/// comes first, not after hours of work on the others); with several levels, a level whose
/// solver fails is listed under `not_obtained` and the others are kept, and the best verified
/// bound is noted.
pub fn npa_levels<'a>(
    game: &'a Game,
    options: &NpaLevelsOptions,
    observer: &dyn Observer,
) -> Result<GameReport<'a>> {
    if options.levels.is_empty() {
        return Err(Error::InvalidArgument("no NPA level given".into()));
    }
    let s = &game.scenario;
    let mut r = GameReport::new(CommandKind::Npa, game);
    let relaxations = options
        .levels
        .iter()
        .map(|level| {
            let start = std::time::Instant::now();
            let at = NpaOptions {
                level: level.clone(),
                backend: options.backend,
                symmetry: options.symmetry,
                first_order: options.first_order,
                limits: options.limits,
            };
            npa::sized_relaxation(s, &at)
                .map(|(r, est)| (r, est, at, start.elapsed().as_secs_f64()))
        })
        .collect::<Result<Vec<_>>>()?;
    let mut bounds = Vec::new();
    for (relaxation, est, at, build_seconds) in &relaxations {
        match npa_observed(relaxation, est, at, *build_seconds, observer) {
            Ok(b) => bounds.push(b),
            Err(e) if options.levels.len() > 1 => r
                .not_obtained
                .push(format!("NPA level {}: {e}", relaxation.level)),
            Err(e) => return Err(e),
        }
    }
    let Some(last) = bounds.pop() else {
        return Err(Error::solver("NPA", r.not_obtained.join("; ")));
    };
    r.npa_levels = bounds;
    r.npa = Some(last);
    r.note_best_level();
    Ok(r)
}

/// The `seesaw` command: the strategy found, with its analysis against the classical value
/// (computed when it is cheap; the analysis omits robustness otherwise).
pub fn seesaw<'a>(
    game: &'a Game,
    options: &SeesawOptions,
    observer: &dyn Observer,
) -> Result<GameReport<'a>> {
    let s = &game.scenario;
    warn_slow_seesaw(s, options, observer);
    let found = seesaw_observed(s, options, observer)?;
    let classical = classical_value(s, &ClassicalOptions::default(), None)
        .ok()
        .map(|c| c.value);
    let mut r = GameReport::new(CommandKind::Seesaw, game);
    r.strategy_analysis = Some(analyse(s, &found.strategy, classical));
    r.seesaw = Some(found);
    Ok(r)
}

/// Options of [`evaluate`].
#[derive(Debug, Clone, Default)]
pub struct EvaluateOptions {
    /// Skip the classical value (and so the robustness figures, which are measured against
    /// it); on a large game computing it can take long.
    pub skip_classical: bool,
    /// Work limits of the classical value.
    pub limits: Limits,
    /// A noise model to score the strategy under as well (a strategy file's `noise:`).
    pub noise: Option<crate::model::noise::NoiseModel>,
}

/// The `evaluate` command: a given strategy's Born-rule value (of the strategy made exactly
/// valid within the file check's tolerances, with the evaluation's error term) and its analysis.
pub fn evaluate<'a>(
    game: &'a Game,
    strategy: &QuantumStrategy,
    options: &EvaluateOptions,
    observer: &dyn Observer,
) -> Result<GameReport<'a>> {
    let s = &game.scenario;
    let strategy = strategy.made_valid();
    let classical = if options.skip_classical {
        None
    } else {
        if ClassicalEstimate::of(s).search_work > 1e9 {
            observer.warn("computing the exact classical value for the robustness figures (pass --no-classical to skip)");
        }
        warn_long_search(s, &options.limits, observer);
        let classical_options = ClassicalOptions {
            limits: options.limits,
            ..Default::default()
        };
        classical_value(s, &classical_options, None)
            .ok()
            .map(|c| c.value)
    };
    let mut r = GameReport::new(CommandKind::Evaluate, game);
    r.evaluated = Some(strategy.certified_value(s));
    if let Some(noise) = &options.noise {
        noise.check(s).map_err(|(field, message)| {
            Error::InvalidArgument(format!("noise.{field}: {message}"))
        })?;
        let f = noise.best_assignment(s, &strategy, &noise.initial_assignment(s));
        let score = noise.certified_value(s, &strategy, &f);
        r.noisy = Some(NoisyValue {
            noise: noise.clone(),
            no_click_answers: f,
            score,
            margin: classical
                .map(|c| score.lower - crate::bounds::quantum::design::classical_ceiling(s, c)),
        });
    }
    r.strategy_analysis = Some(analyse(s, &strategy, classical));
    Ok(r)
}
