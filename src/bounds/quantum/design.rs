//! Designing devices: the best honest implementation under a noise model
//! ([`crate::model::noise`]) and the least detection efficiency or visibility at which it still
//! beats the classical value.
//!
//! The search is the see-saw of [`super::seesaw`] run on the noisy score. Loss and dark counts
//! post-process each player's answer locally, so the noisy score of a strategy is its ideal score
//! in the game pulled back through those channels; white noise adds `(1 − v)` times the score of
//! the maximally mixed state, which is linear in each player's measurements (through their
//! traces) and independent of the state. Each step is therefore still an exact optimum for the
//! rest fixed: the state is the top eigenvector of the pulled-back Bell operator, a player's
//! measurements the best POVM for `v·B_a + (1 − v)·N_a`, and the no-click assignment the best
//! one for the strategy. The reported score is recomputed and rounded down by its error term.
//!
//! Thresholds are found by bisection with the implementation re-optimised at every point,
//! starting from the one found at the bracket's upper end (a continuation: the optimal state
//! changes smoothly with the noise, e.g. it becomes less entangled as the efficiency falls, as
//! Eberhard found for CHSH) as well as from random starts. The lower end of the bracket is
//! where the search found no implementation that beats the classical value: a search result,
//! not a proof that none exists.

use std::time::Instant;

use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;

use super::seesaw::{
    best_povm, default_dims, effective_operators, estimate_seconds, optimise_state,
    random_measurement, random_povm, random_state, Rng, SeesawOptions, MAX_JOINT_DIMENSION,
    SECONDS_LIMIT,
};
use crate::error::{Error, Result};
use crate::model::noise::{Assignment, NoClick, NoiseModel};
use crate::model::scenario::{digits, Scenario};
use crate::model::strategy::{CMatrix, CVector, CertifiedValue, QuantumStrategy};

/// Which states the search may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StateChoice {
    /// Any state of the local dimensions (optimised with the measurements).
    #[default]
    Optimised,
    /// The maximally entangled state `Σ_k |kk⟩/√d` (two players of equal dimension), kept fixed.
    MaximallyEntangled,
}

/// How to search for an implementation.
#[derive(Debug, Clone, Default)]
pub struct DesignOptions {
    /// Dimensions, restarts, seed, rounds and limits of the see-saw.
    pub seesaw: SeesawOptions,
    /// The noise the implementation must withstand.
    pub noise: NoiseModel,
    /// Which states may be used.
    pub state: StateChoice,
}

/// The best implementation found under a noise model, and what it scores.
#[derive(Debug, Clone, Serialize)]
pub struct Implementation {
    /// The noise model (the no-click assignment as used, below).
    pub noise: NoiseModel,
    /// The answer index each player reports for a no-click, per question.
    pub no_click_answers: Assignment,
    /// The noisy implementation's score with its error term; `lower` is what it certainly
    /// reaches.
    pub score: CertifiedValue,
    /// The game's classical value.
    pub classical: f64,
    /// `score.lower` minus the classical value (rounded up): positive means the noisy
    /// implementation certainly beats every classical strategy.
    pub margin: f64,
    /// Which states were allowed.
    pub state: StateChoice,
    /// Local dimensions.
    pub dims: Vec<usize>,
    /// Restarts run.
    pub restarts: usize,
    /// Seed of the random starts.
    pub seed: u64,
    /// Wall-clock seconds.
    pub seconds: f64,
    /// The implementation (state and measurements, before noise).
    #[serde(skip)]
    pub strategy: QuantumStrategy,
}

impl Implementation {
    /// Whether the noisy implementation certainly beats the classical value.
    pub fn beats_classical(&self) -> bool {
        self.margin > 0.0
    }
}

/// The classical value rounded up by its summation's error (it is a sum of table entries).
pub fn classical_ceiling(s: &Scenario, classical: f64) -> f64 {
    let weight: f64 = s.objective().iter().map(|c| c.abs()).sum::<f64>() + s.offset().abs();
    classical + 8.0 * f64::EPSILON * (weight + classical.abs())
}

fn maximally_entangled(dims: &[usize]) -> Result<CVector> {
    match dims {
        [a, b] if a == b => {
            let d = *a;
            let amp = Complex64::new(1.0 / (d as f64).sqrt(), 0.0);
            Ok(CVector::from_fn(d * d, |k, _| {
                if k / d == k % d {
                    amp
                } else {
                    Complex64::new(0.0, 0.0)
                }
            }))
        }
        _ => Err(Error::InvalidArgument(format!(
            "the maximally entangled state needs two players of equal dimension (dimensions {dims:?})"
        ))),
    }
}

/// The noisy score of `st` with assignment `f` (not rounded: for the search's comparisons).
fn noisy_score(s: &Scenario, noise: &NoiseModel, st: &QuantumStrategy, f: &Assignment) -> f64 {
    let pulled = noise.pulled_back(s, f);
    let v = noise.visibility;
    let ideal = if v > 0.0 { st.value(&pulled) } else { 0.0 };
    let white = if v < 1.0 {
        st.noise_value(&pulled)
    } else {
        0.0
    };
    v * ideal + (1.0 - v) * white
}

/// `N_{a|x}` for `player`: the white-noise part of the score is `Σ_{x,a} tr(M_{a|x} N_{a|x})`
/// with everyone else fixed, `N_{a|x} = (𝟙/d) Σ_{q: q_i = x} Σ_{b: b_i = a} c(q, b) Π_{j≠i}
/// tr(M^j_{b_j|q_j})/d_j`.
fn white_operators(s: &Scenario, st: &QuantumStrategy, player: usize) -> Vec<Vec<CMatrix>> {
    let n = s.players();
    let (qr, ar) = (s.question_radices(), s.answer_radices());
    let na = s.joint_answers();
    let p = &s.parties()[player];
    let mut coef = vec![vec![0.0; p.answers()]; p.questions()];
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    for q in 0..s.joint_questions() {
        digits(q, &qr, &mut qd);
        for a in 0..na {
            let c = s.objective()[q * na + a];
            if c == 0.0 {
                continue;
            }
            digits(a, &ar, &mut ad);
            let others: f64 = (0..n)
                .filter(|&j| j != player)
                .map(|j| st.measurements[j][qd[j]][ad[j]].trace().re / st.dims[j] as f64)
                .product();
            coef[qd[player]][ad[player]] += c * others;
        }
    }
    let d = st.dims[player];
    coef.into_iter()
        .map(|row| {
            row.into_iter()
                .map(|c| CMatrix::identity(d, d) * Complex64::new(c / d as f64, 0.0))
                .collect()
        })
        .collect()
}

/// One search from a start (given, or random as the see-saw's).
fn run(
    s: &Scenario,
    opts: &DesignOptions,
    dims: &[usize],
    fixed_state: Option<&CVector>,
    rng: &mut Rng,
    restart: usize,
    start: Option<&QuantumStrategy>,
) -> Result<(QuantumStrategy, Assignment)> {
    let noise = &opts.noise;
    let mut st = match start {
        Some(st) => st.clone(),
        None => {
            let make = if restart.is_multiple_of(2) {
                random_measurement
            } else {
                random_povm
            };
            QuantumStrategy {
                dims: dims.to_vec(),
                state: random_state(dims.iter().product(), rng),
                measurements: s
                    .parties()
                    .iter()
                    .enumerate()
                    .map(|(i, p)| {
                        (0..p.questions())
                            .map(|_| make(dims[i], p.answers(), rng))
                            .collect()
                    })
                    .collect(),
            }
        }
    };
    if let Some(state) = fixed_state {
        st.state = state.clone();
    }
    let extra = noise.no_click == NoClick::Extra;
    if extra && start.is_none() {
        // A clicking detector never reports the no-click answer: the start's measurements
        // use the other answers only.
        for (i, p) in s.parties().iter().enumerate() {
            for x in 0..p.questions() {
                let make = if restart.is_multiple_of(2) {
                    random_measurement
                } else {
                    random_povm
                };
                let mut povm = make(dims[i], p.answers() - 1, rng);
                povm.push(CMatrix::zeros(dims[i], dims[i]));
                st.measurements[i][x] = povm;
            }
        }
    }
    let mut f = noise.best_assignment(s, &st, &noise.initial_assignment(s));
    let mut pulled = noise.pulled_back(s, &f);
    if fixed_state.is_none() && noise.visibility > 0.0 {
        optimise_state(&pulled, &mut st);
    }
    let mut value = noisy_score(s, noise, &st, &f);
    let v = noise.visibility;
    for _ in 0..opts.seesaw.max_rounds {
        if crate::limits::stop_requested() {
            break;
        }
        let before = value;
        for player in 0..s.players() {
            let ideal = effective_operators(&pulled, &st, player);
            let white = (v < 1.0).then(|| white_operators(&pulled, &st, player));
            let mut candidate = st.clone();
            for (x, bx) in ideal.iter().enumerate() {
                let combined: Vec<CMatrix> = bx
                    .iter()
                    .enumerate()
                    .map(|(a, b)| {
                        let mut m = b * Complex64::new(v, 0.0);
                        if let Some(w) = &white {
                            m += &w[x][a] * Complex64::new(1.0 - v, 0.0);
                        }
                        m
                    })
                    .collect();
                // A failed measurement step leaves the measurement as it was. With the no-click
                // answer of its own, the measurement is over the other answers only.
                let kept = if extra {
                    combined.len() - 1
                } else {
                    combined.len()
                };
                if let Ok(mut povm) = best_povm(&combined[..kept]) {
                    if extra {
                        let d = st.dims[player];
                        povm.push(CMatrix::zeros(d, d));
                    }
                    candidate.measurements[player][x] = povm;
                }
            }
            let next = noisy_score(s, noise, &candidate, &f);
            if next >= value - 1e-12 {
                st = candidate;
                value = next;
            }
        }
        if fixed_state.is_none() && v > 0.0 {
            let mut candidate = st.clone();
            optimise_state(&pulled, &mut candidate);
            let next = noisy_score(s, noise, &candidate, &f);
            if next >= value - 1e-12 {
                st = candidate;
                value = next;
            }
        }
        let g = noise.best_assignment(s, &st, &f);
        if g != f {
            let next = noisy_score(s, noise, &st, &g);
            if next >= value - 1e-12 {
                f = g;
                pulled = noise.pulled_back(s, &f);
                value = next;
            }
        }
        if value - before < opts.seesaw.tolerance {
            break;
        }
    }
    Ok((st, f))
}

/// The dimensions the search uses, checked.
fn resolved_dims(s: &Scenario, opts: &SeesawOptions) -> Result<Vec<usize>> {
    let dims = if opts.dims.is_empty() {
        default_dims(s)
    } else {
        opts.dims.clone()
    };
    if dims.len() != s.players() {
        return Err(Error::InvalidArgument(format!(
            "give one dimension per player ({}), got {}",
            s.players(),
            dims.len()
        )));
    }
    if dims.contains(&0) || opts.restarts == 0 {
        return Err(Error::InvalidArgument(
            "dimensions and restarts must be at least 1".into(),
        ));
    }
    let total = dims.iter().try_fold(1usize, |a, &d| a.checked_mul(d));
    if total.is_none_or(|t| t > MAX_JOINT_DIMENSION) {
        return Err(Error::TooLarge {
            what: "the implementation search".into(),
            estimate: format!(
                "dimensions {dims:?}: a dense Bell operator of that joint dimension per step"
            ),
            hint: format!("use smaller local dimensions (joint at most {MAX_JOINT_DIMENSION})"),
        });
    }
    Ok(dims)
}

/// The best implementation found under `opts.noise`: restarts in parallel (the first from
/// `start` when given), the best noisy score kept, recomputed and rounded down.
pub fn optimise(
    s: &Scenario,
    classical: f64,
    opts: &DesignOptions,
    start: Option<&QuantumStrategy>,
) -> Result<Implementation> {
    let began = Instant::now();
    opts.noise
        .check(s)
        .map_err(|(field, message)| Error::InvalidArgument(format!("{field}: {message}")))?;
    let dims = resolved_dims(s, &opts.seesaw)?;
    let fixed_state = match opts.state {
        StateChoice::Optimised => None,
        StateChoice::MaximallyEntangled => Some(maximally_entangled(&dims)?),
    };
    let start = start.filter(|st| st.dims == dims);
    let seed = opts.seesaw.seed;
    let runs: Vec<Result<(QuantumStrategy, Assignment)>> = (0..opts.seesaw.restarts
        + usize::from(start.is_some()))
        .into_par_iter()
        .map(|r| {
            let mut rng = Rng(seed ^ (r as u64).wrapping_mul(0xA076_1D64_78BD_642F));
            let from = if r == opts.seesaw.restarts {
                start
            } else {
                None
            };
            run(s, opts, &dims, fixed_state.as_ref(), &mut rng, r, from)
        })
        .collect();
    let mut best: Option<(f64, QuantumStrategy, Assignment)> = None;
    for r in runs {
        let (st, f) = r?;
        let v = noisy_score(s, &opts.noise, &st, &f);
        if best.as_ref().is_none_or(|b| v > b.0 + 1e-15) {
            best = Some((v, st, f));
        }
    }
    let (_, strategy, f) =
        best.ok_or_else(|| Error::solver("implementation search", "no restart ran"))?;
    let mut found = implementation(s, classical, opts, strategy, f)?;
    found.seconds = began.elapsed().as_secs_f64();
    Ok(found)
}

/// The report of `strategy` under `opts.noise` with no-click answers `f`: its certified noisy
/// score and margin.
pub fn implementation(
    s: &Scenario,
    classical: f64,
    opts: &DesignOptions,
    strategy: QuantumStrategy,
    f: Assignment,
) -> Result<Implementation> {
    let score = opts.noise.certified_value(s, &strategy, &f);
    if !score.lower.is_finite() {
        return Err(Error::solver(
            "implementation search",
            "the implementation's score is not a finite number",
        ));
    }
    Ok(Implementation {
        noise: opts.noise.clone(),
        no_click_answers: f,
        score,
        classical,
        margin: score.lower - classical_ceiling(s, classical),
        state: opts.state,
        dims: strategy.dims.clone(),
        restarts: opts.seesaw.restarts,
        seed: opts.seesaw.seed,
        seconds: 0.0,
        strategy,
    })
}

/// Improves `start` for another score table of the game's shape (`table`, e.g. a figure's
/// linearisation) under `opts.noise`: at most `rounds` rounds of the see-saw's exact steps, each
/// kept only if it does not lower the table's noisy score.
pub fn improve(
    table: &Scenario,
    opts: &DesignOptions,
    start: &QuantumStrategy,
    rounds: usize,
) -> Result<(QuantumStrategy, Assignment)> {
    let fixed_state = match opts.state {
        StateChoice::Optimised => None,
        StateChoice::MaximallyEntangled => Some(maximally_entangled(&start.dims)?),
    };
    let o = DesignOptions {
        seesaw: SeesawOptions {
            max_rounds: rounds,
            ..opts.seesaw.clone()
        },
        ..opts.clone()
    };
    let mut rng = Rng(opts.seesaw.seed);
    run(
        table,
        &o,
        &start.dims,
        fixed_state.as_ref(),
        &mut rng,
        0,
        Some(start),
    )
}

/// The noise parameter a threshold varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum NoiseParameter {
    /// Every player's detection efficiency (the same for all).
    Efficiency,
    /// The visibility.
    Visibility,
}

impl NoiseParameter {
    /// The noise model with this parameter set to `value`.
    pub fn set(self, noise: &NoiseModel, value: f64) -> NoiseModel {
        let mut out = noise.clone();
        match self {
            NoiseParameter::Efficiency => out.efficiency = vec![value],
            NoiseParameter::Visibility => out.visibility = value,
        }
        out
    }

    /// The name, as the report prints it.
    pub fn name(self) -> &'static str {
        match self {
            NoiseParameter::Efficiency => "detection efficiency",
            NoiseParameter::Visibility => "visibility",
        }
    }
}

/// How a threshold is searched.
#[derive(Debug, Clone, Copy)]
pub struct ThresholdOptions {
    /// The parameter varied.
    pub parameter: NoiseParameter,
    /// Width of the final bracket.
    pub tolerance: f64,
    /// Points of the margin-against-noise curve (besides the bisection's own).
    pub curve_points: usize,
}

impl Default for ThresholdOptions {
    fn default() -> Self {
        ThresholdOptions {
            parameter: NoiseParameter::Efficiency,
            tolerance: 1e-3,
            curve_points: 10,
        }
    }
}

/// One point of the figure-against-noise curve.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct CurvePoint {
    /// The parameter's value.
    pub parameter: f64,
    /// The best implementation's figure there (certified: rounded down; positive means the
    /// goal is met).
    pub figure: f64,
}

/// The bracket around the threshold.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Bracket {
    /// Where the search found no implementation meeting the goal (a search result, not a
    /// proof).
    pub below: f64,
    /// Where it found one, with a certified positive figure (the implementation is reported).
    pub above: f64,
}

/// The least noise parameter at which an implementation meets the goal.
#[derive(Debug, Clone, Serialize)]
pub struct Threshold {
    /// The parameter varied.
    pub parameter: NoiseParameter,
    /// The bracket; None when no implementation meets the goal even without that noise (at
    /// parameter 1).
    pub bracket: Option<Bracket>,
    /// The implementation at the bracket's upper end (at 1 when there is no bracket).
    pub at_upper: Implementation,
    /// Its figure.
    pub figure_at_upper: f64,
    /// The figure against the parameter, sorted by the parameter.
    pub curve: Vec<CurvePoint>,
    /// Implementations optimised.
    pub searches: usize,
    /// Wall-clock seconds.
    pub seconds: f64,
}

/// What a threshold search evaluates at one noise level: the best implementation found (from
/// the given start, when there is one, and from random starts) and its figure, positive when
/// the goal is met.
pub type Evaluator<'a> =
    dyn Fn(&NoiseModel, Option<&QuantumStrategy>) -> Result<(Implementation, f64)> + Sync + 'a;

/// The number of implementation searches a threshold search runs at most.
pub fn planned_searches(t: &ThresholdOptions) -> usize {
    // Saturating: a huge point count is refused by the estimate, never overflows.
    ((1.0 / t.tolerance.max(1e-12)).log2().ceil().max(1.0) as usize + 1)
        .saturating_add(t.curve_points)
}

/// Estimated seconds of a threshold search on the margin: the see-saw's estimate per search
/// times the searches planned.
pub fn estimate_threshold_seconds(s: &Scenario, opts: &DesignOptions, t: &ThresholdOptions) -> f64 {
    estimate_seconds(s, &opts.seesaw) * planned_searches(t) as f64
}

/// The threshold of the margin over the classical value.
pub fn threshold(
    s: &Scenario,
    classical: f64,
    opts: &DesignOptions,
    t: &ThresholdOptions,
    progress: Option<&(dyn Fn(usize, usize) + Sync)>,
) -> Result<Threshold> {
    let seconds = estimate_threshold_seconds(s, opts, t);
    if seconds > SECONDS_LIMIT && !opts.seesaw.limits.force {
        return Err(Error::TooLarge {
            what: "the threshold search".into(),
            estimate: format!(
                "roughly {} (rule of thumb: the see-saw's estimate per point)",
                crate::limits::human_seconds(seconds)
            ),
            hint: "use smaller dimensions, fewer restarts or a wider tolerance, or pass --force"
                .into(),
        });
    }
    let evaluate = |noise: &NoiseModel, start: Option<&QuantumStrategy>| {
        let o = DesignOptions {
            noise: noise.clone(),
            ..opts.clone()
        };
        let found = optimise(s, classical, &o, start)?;
        let margin = found.margin;
        Ok((found, margin))
    };
    threshold_of(&opts.noise, t, &evaluate, progress)
}

/// Bisects for the least value of `t.parameter` at which `evaluate` finds a positive figure,
/// re-optimising at each point from the bracket's upper end's implementation; then evaluates
/// the curve from a little below the bracket to 1. `progress` gets (searches done, planned).
pub fn threshold_of(
    base: &NoiseModel,
    t: &ThresholdOptions,
    evaluate: &Evaluator,
    progress: Option<&(dyn Fn(usize, usize) + Sync)>,
) -> Result<Threshold> {
    let began = Instant::now();
    if !(t.tolerance > 0.0 && t.tolerance < 0.5) {
        return Err(Error::InvalidArgument(format!(
            "the threshold's tolerance must lie in (0, 0.5) (found {})",
            t.tolerance
        )));
    }
    let planned = planned_searches(t);
    let mut searches = 0;
    let tick = |searches: &mut usize| {
        *searches += 1;
        if let Some(p) = progress {
            p(*searches, planned);
        }
    };
    let at = |value: f64, start: Option<&QuantumStrategy>| {
        evaluate(&t.parameter.set(base, value), start)
    };
    let (top, top_figure) = at(1.0, None)?;
    tick(&mut searches);
    let mut curve = vec![CurvePoint {
        parameter: 1.0,
        figure: top_figure,
    }];
    if top_figure <= 0.0 {
        return Ok(Threshold {
            parameter: t.parameter,
            bracket: None,
            at_upper: top,
            figure_at_upper: top_figure,
            curve,
            searches,
            seconds: began.elapsed().as_secs_f64(),
        });
    }
    let (mut below, mut above, mut upper) = (0.0, 1.0, (top, top_figure));
    while above - below > t.tolerance && !crate::limits::stop_requested() {
        let mid = 0.5 * (below + above);
        let (found, figure) = at(mid, Some(&upper.0.strategy))?;
        tick(&mut searches);
        curve.push(CurvePoint {
            parameter: mid,
            figure,
        });
        if figure > 0.0 {
            above = mid;
            upper = (found, figure);
        } else {
            below = mid;
        }
    }
    // The curve from a little below the threshold to 1, each point continued from the last.
    let from = (below - 0.25 * (1.0 - below)).max(t.tolerance);
    let mut previous = upper.0.strategy.clone();
    for k in 0..t.curve_points {
        if crate::limits::stop_requested() {
            break;
        }
        let value = 1.0 - (1.0 - from) * (k + 1) as f64 / t.curve_points as f64;
        let (found, figure) = at(value, Some(&previous))?;
        tick(&mut searches);
        curve.push(CurvePoint {
            parameter: value,
            figure,
        });
        previous = found.strategy;
    }
    curve.sort_by(|a, b| a.parameter.total_cmp(&b.parameter));
    // A point searched twice (a curve point on a bisection point) keeps its better figure.
    curve.dedup_by(|later, kept| {
        let same = later.parameter == kept.parameter;
        if same {
            kept.figure = kept.figure.max(later.figure);
        }
        same
    });
    Ok(Threshold {
        parameter: t.parameter,
        bracket: Some(Bracket { below, above }),
        at_upper: upper.0,
        figure_at_upper: upper.1,
        curve,
        searches,
        seconds: began.elapsed().as_secs_f64(),
    })
}
