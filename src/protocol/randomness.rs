//! Certified randomness: the largest probability that an adversary holding quantum side
//! information guesses one player's answer (or a pair of players' answers) to a chosen
//! question, over every quantum behaviour with a given score.
//!
//! The adversary's strategy splits the behaviour into sub-behaviours p_e, one per guess e, each
//! unnormalised and quantum; the guessing probability is `Σ_e p_e(answer = e)`. Relaxing each
//! p_e to the NPA level gives a semidefinite programme with one moment matrix per guess, a
//! shared normalisation `Σ_e λ_e = 1` and the score constraint `Σ_e value(p_e) ≥ S` (any
//! behaviour scoring at least the certified score is open to the adversary). Its verified
//! bound (the dual certificate, as for NPA) bounds the guessing probability from above, so
//! `−log₂` of it bounds the min-entropy per round from below.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::bounds::entropy::event_terms;
pub use crate::bounds::entropy::Target;
use crate::bounds::quantum::npa::{self, Entry, Level, Relaxation};
use crate::bounds::quantum::words::{moment_key, Word};
use crate::error::{Error, Result};
use crate::model::scenario::Scenario;
use crate::optim::backend::{self, Backend};
use crate::optim::exact::{exact_bound, ExactBound};
use crate::optim::moment_ipm::{self, IpmOptions, StallPolicy};
use crate::optim::sdp::{AffineEntry, MatrixBlock, SdpProblem};
use crate::optim::SolveStatus;

/// A bound on the guessing probability at one score.
#[derive(Debug, Clone, Serialize)]
pub struct Randomness {
    /// The score asked for.
    pub score: f64,
    /// The score the SDP was solved at: `score`, or slightly below it when the solver failed on
    /// the nearly flat feasible set at the edge of the quantum set. A lower score only enlarges
    /// the adversary's options, so the bound stays valid (and gets a little looser).
    pub score_used: f64,
    /// Verified upper bound on the guessing probability.
    pub guessing_probability: f64,
    /// Lower bound on the min-entropy per round, −log₂ of the above, in bits.
    pub min_entropy: f64,
    /// The solver's value (without the verification margin).
    pub solver_value: f64,
    /// The NPA level of the relaxation.
    pub level: Level,
    /// How the guessing-probability SDP ended.
    pub status: SolveStatus,
    /// When the score entered as a Lagrangian term μ·(value − score) instead of a constraint
    /// (near the edge of the quantum set), the multiplier μ; the bound is valid either way.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub score_multiplier: Option<f64>,
    /// The bound proven in exact rational arithmetic, when asked ([`prove_exactly`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exact: Option<ExactGuess>,
    /// The dual vector that proves the bound (for [`prove_exactly`]).
    #[serde(skip)]
    pub dual: Vec<f64>,
    /// Wall-clock time.
    pub seconds: f64,
}

/// A stalled run's verified bound within this of its solver's value is reported as it is.
const TIGHT_ENOUGH: f64 = 1e-6;

/// What bounding the guessing probability at one score is expected to cost.
#[derive(Debug, Clone, Copy)]
pub struct RandomnessEstimate {
    /// Moment matrices in one SDP (one per guess).
    pub guesses: usize,
    /// Side of each.
    pub matrix_size: usize,
    /// Seconds of one SDP (the interior-point estimate, which overshoots by a few times).
    pub seconds_per_solve: f64,
    /// Memory of one SDP.
    pub memory_bytes: f64,
}

impl RandomnessEstimate {
    /// SDPs solved per score when the score constraint can be imposed: the NPA bound that
    /// checks the score is reachable, then the guessing SDP.
    pub const SOLVES: f64 = 2.0;
    /// SDPs per score at worst, near the quantum maximum, where the constraint gives way to a
    /// search over the Lagrange multiplier of the score.
    pub const SOLVES_AT_WORST: f64 = 18.0;
}

/// The cost of the guessing-probability SDP for `target` at `level` (no SDP is solved).
pub fn estimate(s: &Scenario, target: &Target, level: &Level) -> Result<RandomnessEstimate> {
    target.check(s)?;
    Ok(sized(s, target, level)?.1)
}

/// The players' relaxation the guessing SDP is built on, and the SDP's cost (one moment matrix
/// per guess). The guessing-probability SDPs are not symmetric under the game's group: solved
/// in full.
fn sized(s: &Scenario, target: &Target, level: &Level) -> Result<(Relaxation, RandomnessEstimate)> {
    let guesses: usize = target
        .parts
        .iter()
        .map(|&(p, _)| s.parties().get(p).map_or(1, |q| q.answers()))
        .product();
    let options = npa::NpaOptions {
        symmetry: crate::bounds::quantum::symmetric::SymmetryChoice::Off,
        ..npa::NpaOptions::at(level.clone())
    };
    let (base, est) = npa::sized_relaxation(s, &options)?;
    let g = guesses as f64;
    let estimate = RandomnessEstimate {
        guesses,
        matrix_size: est.matrix_size,
        seconds_per_solve: est.seconds * g * g * g,
        memory_bytes: est.memory_bytes * g * g,
    };
    Ok((base, estimate))
}

/// The guessing probability at one score. Near the quantum maximum the feasible set becomes
/// nearly a point and the interior-point method can fail; then the score is lowered in small
/// steps (a weaker constraint, so still a valid upper bound) and the score used is reported.
pub fn guessing_probability(
    s: &Scenario,
    target: &Target,
    score: f64,
    level: &Level,
) -> Result<Randomness> {
    // The relaxation is built once, size-checked (one moment matrix per guess) before any SDP
    // is solved, and shared by every solve below.
    let (base, est) = sized(s, target, level)?;
    let (seconds, bytes) = (est.seconds_per_solve, est.memory_bytes);
    if seconds > npa::SECONDS_LIMIT || bytes > npa::MEMORY_LIMIT {
        return Err(Error::TooLarge {
            what: format!("the guessing-probability SDP at level {}", level.name()),
            estimate: format!(
                "{} moment matrices of side {}: about {} and {:.1} GiB",
                est.guesses,
                est.matrix_size,
                crate::limits::human_seconds(seconds),
                bytes / (1u64 << 30) as f64
            ),
            hint: "choose a lower level".into(),
        });
    }
    // A score above every quantum behaviour's leaves nothing to certify: say so rather than
    // bound the guessing probability over an empty set.
    let npa = npa::solve_relaxation(
        &base,
        &npa::NpaOptions::default(),
        &npa::SolveControl::default(),
        0.0,
    )?;
    if score > npa.verified_upper {
        return Err(Error::InvalidArgument(format!(
            "the score {score} is above the quantum bound {} (NPA level {}): no quantum behaviour reaches it",
            npa.verified_upper,
            level.name()
        )));
    }
    // Near the edge of the quantum set the interior-point method can stall short of its
    // tolerance; its best point still gives a verified bound, kept when tight.
    let mut best: Option<Randomness> = None;
    let mut multiplier = None;
    match guessing_probability_at(s, target, score, Mode::Constraint(score), &base) {
        Ok(a) if a.result.status.converged() => return Ok(a.result),
        Ok(a) => {
            if a.result.guessing_probability - a.solver_value <= TIGHT_ENOUGH {
                return Ok(a.result);
            }
            multiplier = a.multiplier;
            best = Some(a.result);
        }
        Err(Error::Solver { .. }) => {}
        Err(e) => return Err(e),
    }
    // Weak duality gives a bound for every μ ≥ 0 without the constraint:
    // P_guess(p) ≤ P_guess(p) + μ (value(p) − S) ≤ max over the relaxation. Every μ tried gives
    // a valid (verified) bound and the smallest is kept.
    let mut evaluate = |log_mu: f64| -> f64 {
        match guessing_probability_at(s, target, score, Mode::Penalty(10f64.powf(log_mu)), &base) {
            Ok(a) => {
                let p = a.result.guessing_probability;
                if best.as_ref().is_none_or(|b| p < b.guessing_probability) {
                    best = Some(a.result);
                }
                p
            }
            Err(_) => f64::INFINITY,
        }
    };
    // The stalled run's multiplier of the score is close to the best μ: a short search around
    // it (a factor of two each way) usually settles the bound in three solves.
    let settled = multiplier.is_some_and(|mu| {
        let centre = mu.log10();
        let values: Vec<f64> = [-0.3, 0.0, 0.3]
            .iter()
            .map(|d| evaluate(centre + d))
            .collect();
        values.iter().any(|v| v.is_finite())
    });
    // Otherwise the best μ is found by a golden-section search on log μ.
    if !settled {
        golden_section(&mut evaluate, -2.0, 5.0);
    }
    if let Some(r) = best {
        return Ok(r);
    }
    // Last resort: a slightly lower score (a weaker constraint, so still a valid bound).
    let (lo, hi) = s.value_range();
    let mut last = None;
    for step in [1e-6, 1e-5, 1e-4, 1e-3] {
        let used = score - step * (hi - lo);
        match guessing_probability_at(s, target, score, Mode::Constraint(used), &base) {
            Ok(a) => return Ok(a.result),
            Err(e @ Error::Solver { .. }) => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.expect("at least one attempt"))
}

/// Evaluates `f` along a golden-section search for its minimum on [lo, hi] (to a width of 0.01,
/// at most 32 evaluations); the caller keeps what it needs from the evaluations.
fn golden_section(f: &mut impl FnMut(f64) -> f64, lo: f64, hi: f64) {
    let (mut a, mut b) = (lo, hi);
    let phi = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - phi * (b - a), a + phi * (b - a));
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..30 {
        if fc <= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - phi * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + phi * (b - a);
            fd = f(d);
        }
        if (b - a).abs() < 0.01 {
            break;
        }
    }
}

/// How the score enters the SDP.
#[derive(Debug, Clone, Copy)]
enum Mode {
    /// `value ≥ S` as a constraint, at this score.
    Constraint(f64),
    /// `+ μ (value − S)` in the objective (Lagrangian relaxation of the constraint).
    Penalty(f64),
}

/// The guessing-probability SDP in one of its two forms, with a name for each variable (for an
/// export's moment map).
struct GuessingProblem {
    problem: SdpProblem,
    names: Vec<String>,
}

fn guessing_problem(
    s: &Scenario,
    target: &Target,
    score: f64,
    mode: Mode,
    r: &Relaxation,
) -> Result<GuessingProblem> {
    let level = &r.level;
    target.check(s)?;
    let m = r.matrix.moments.len();
    let index: BTreeMap<&Word, usize> = r
        .matrix
        .moments
        .iter()
        .enumerate()
        .map(|(i, w)| (w, i))
        .collect();
    // Guesses: every combination of the targets' answers.
    let radices: Vec<usize> = target
        .parts
        .iter()
        .map(|&(p, _)| s.parties()[p].answers())
        .collect();
    let guesses: usize = radices.iter().product();
    let per = m + 1; // λ_e, then the moments
    let var = |e: usize, k: usize| e * per + 1 + k;
    let lambda = |e: usize| e * per;
    let mut objective = vec![0.0; guesses * per];
    let mut names = Vec::with_capacity(guesses * per);
    let mut digits = vec![0; radices.len()];
    for e in 0..guesses {
        crate::model::scenario::digits(e, &radices, &mut digits);
        let parts: Vec<(usize, usize, usize)> = target
            .parts
            .iter()
            .zip(&digits)
            .map(|(&(p, x), &a)| (p, x, a))
            .collect();
        let guess: Vec<String> = parts
            .iter()
            .map(|(p, x, a)| format!("{p}:{x}:{a}"))
            .collect();
        let guess = format!("guess {}", guess.join(" "));
        names.push(format!("{guess} | weight"));
        for w in &r.matrix.moments {
            let text: Vec<String> = w
                .iter()
                .map(|p| format!("{}:{}:{}", p.player, p.setting, p.outcome))
                .collect();
            names.push(format!("{guess} | {}", text.join(" ")));
        }
        for (w, c) in event_terms(s, &parts) {
            if w.is_empty() {
                objective[lambda(e)] += c;
            } else {
                let Some(&k) = index.get(&moment_key(w)) else {
                    return Err(Error::InvalidArgument(format!(
                        "level {} does not contain the moments of the guessed answers; use a higher level",
                        level.name()
                    )));
                };
                objective[var(e, k)] += c;
            }
        }
    }
    let normalisation = ((0..guesses).map(|e| (lambda(e), 1.0)).collect(), 1.0);
    // Score at least S, written −Σ_e value(p_e) ≤ −S: an adversary may supply any behaviour
    // that scores at least what was certified.
    let mut value_terms = Vec::new();
    for e in 0..guesses {
        value_terms.push((lambda(e), -r.problem.objective_constant));
        for (k, &c) in r.problem.objective.iter().enumerate() {
            if c != 0.0 {
                value_terms.push((var(e, k), -c));
            }
        }
    }
    let size = r.matrix.size();
    let blocks = (0..guesses)
        .map(|e| MatrixBlock {
            size,
            upper: r
                .matrix
                .entries
                .iter()
                .map(|entry| match entry {
                    Entry::Zero => AffineEntry::default(),
                    Entry::Identity => AffineEntry {
                        constant: 0.0,
                        terms: vec![(lambda(e), 1.0)],
                    },
                    Entry::Moment(k) => AffineEntry {
                        constant: 0.0,
                        terms: vec![(var(e, *k), 1.0)],
                    },
                })
                .collect(),
            // Each sub-behaviour is λ_e times a normalised one, λ_e ≤ 1.
            trace_bound: size as f64,
        })
        .collect();
    let (objective_constant, inequalities) = match mode {
        Mode::Constraint(v) => (0.0, vec![(value_terms, -v)]),
        Mode::Penalty(mu) => {
            // value_terms hold −value; the objective gains μ·value − μ·S.
            for &(k, c) in &value_terms {
                objective[k] -= mu * c;
            }
            (-mu * score, Vec::new())
        }
    };
    Ok(GuessingProblem {
        problem: SdpProblem {
            variables: guesses * per,
            objective,
            objective_constant,
            equalities: vec![normalisation],
            inequalities,
            blocks,
            variable_bound: 1.0,
            variable_bounds: Vec::new(),
        },
        names,
    })
}

fn guessing_probability_at(
    s: &Scenario,
    target: &Target,
    score: f64,
    mode: Mode,
    r: &Relaxation,
) -> Result<Attempt> {
    let level = &r.level;
    let score_used = match mode {
        Mode::Constraint(v) => v,
        Mode::Penalty(_) => score,
    };
    let start = std::time::Instant::now();
    let problem = guessing_problem(s, target, score, mode, r)?.problem;
    let stage = "guessing probability SDP";
    // Only the verified bound is reported, which holds for any dual point: a run of the
    // moment-matrix method that stalls near the edge of the quantum set keeps its best point
    // (reported as stalled) rather than failing.
    let keep_best = IpmOptions {
        on_stall: StallPolicy::KeepBest,
        ..IpmOptions::default()
    };
    let sol = moment_ipm::solve(&problem, stage, keep_best)
        .or_else(|_| backend::solve(&problem, Backend::Auto, stage))
        .map_err(|e| match e {
        Error::Solver {
            status: Some(SolveStatus::Infeasible),
            ..
        } => Error::InvalidArgument(format!(
            "no behaviour in the NPA level-{} set reaches the score {score}: it is above the quantum bound",
            level.name()
        )),
        other => other,
    })?;
    let p = sol.certified.min(1.0);
    // The score row's dual is the Lagrange multiplier of the score (equalities come first in
    // the dual layout: one, the normalisation).
    let multiplier = match mode {
        Mode::Constraint(_) => sol.z.get(1).copied().filter(|m| m.is_finite() && *m > 0.0),
        Mode::Penalty(_) => None,
    };
    let result = Randomness {
        score,
        score_used,
        guessing_probability: p,
        min_entropy: -p.log2(),
        solver_value: sol.primal,
        level: level.clone(),
        status: sol.status,
        score_multiplier: match mode {
            Mode::Constraint(_) => None,
            Mode::Penalty(mu) => Some(mu),
        },
        exact: None,
        dual: sol.z,
        seconds: start.elapsed().as_secs_f64(),
    };
    Ok(Attempt {
        result,
        solver_value: sol.primal,
        multiplier,
    })
}

/// A guessing-probability bound proven in exact rational arithmetic
/// ([`crate::optim::exact`]).
#[derive(Debug, Clone, Serialize)]
pub struct ExactGuess {
    /// The exact bound on the guessing probability.
    #[serde(flatten)]
    pub bound: ExactBound,
    /// −log₂ of its rounded-up value, rounded down: a lower bound on the min-entropy in bits.
    pub min_entropy: f64,
}

impl ExactGuess {
    fn from_bound(bound: ExactBound) -> ExactGuess {
        ExactGuess {
            min_entropy: min_entropy_below(bound.rounded_up),
            bound,
        }
    }
}

/// −log₂ of a bound on the guessing probability (capped at 1), rounded down: log₂ is within an
/// ulp or so of exact, and two steps down keep the figure on its side.
fn min_entropy_below(guessing_probability: f64) -> f64 {
    (-guessing_probability.min(1.0).log2())
        .next_down()
        .next_down()
        .max(0.0)
}

/// Proves `r`'s bound (a result of [`guessing_probability`] for `target`) in exact rational
/// arithmetic: the SDP it came from is rebuilt and its dual vector checked exactly.
pub fn prove_exactly(s: &Scenario, target: &Target, r: &Randomness) -> Result<ExactGuess> {
    let (base, _) = sized(s, target, &r.level)?;
    let mode = match r.score_multiplier {
        Some(mu) => Mode::Penalty(mu),
        None => Mode::Constraint(r.score_used),
    };
    let g = guessing_problem(s, target, r.score, mode, &base)?;
    exact_bound(&g.problem, &r.dual).map(ExactGuess::from_bound)
}

/// The guessing-probability SDP at `score` with the score as a constraint (the problem whose
/// dual [`Randomness::dual`] is when no Lagrangian term was used).
pub fn guessing_sdp(
    s: &Scenario,
    target: &Target,
    score: f64,
    level: &Level,
) -> Result<SdpProblem> {
    let (base, _) = sized(s, target, level)?;
    Ok(guessing_problem(s, target, score, Mode::Constraint(score), &base)?.problem)
}

/// The guessing-probability SDP at `score` (the score as a constraint) in the SDPA sparse
/// format, and its variable map (one line per variable: its 1-based index, the guess and either
/// the guess's weight λ_e or a moment's word, `player:question:answer` projectors).
pub fn sdpa_export(
    s: &Scenario,
    target: &Target,
    score: f64,
    level: &Level,
) -> Result<(String, String)> {
    let (base, _) = sized(s, target, level)?;
    let g = guessing_problem(s, target, score, Mode::Constraint(score), &base)?;
    let sdpa = crate::optim::sdpa::SdpaProblem::from_problem(&g.problem);
    let comment = vec![
        format!(
            "bellgap guessing-probability SDP, NPA level {}, score at least {score:?}: maximise Σ b_i y_i is minimise Σ c_i x_i with c = −b",
            level.name()
        ),
        "one moment matrix per guess, scaled by the guess's weight; every variable lies in [−1, 1]; the variable map is in the .words file".into(),
    ];
    let mut words = String::from(
        "# variable (1-based), its guess and its word (player:question:answer projectors) or the guess's weight\n",
    );
    for (i, name) in g.names.iter().enumerate() {
        words.push_str(&format!("{} {name}\n", i + 1));
    }
    Ok((sdpa.to_text(&comment), words))
}

/// A dual solution of the SDP [`sdpa_export`] writes, from an external solver in SDPA output
/// format, checked on the SDP rebuilt here.
#[derive(Debug, Clone, Serialize)]
pub struct GuessingImport {
    /// The score.
    pub score: f64,
    /// The NPA level.
    pub level: Level,
    /// The bound on the SDP's optimum it proves.
    #[serde(flatten)]
    pub bound: crate::optim::sdpa::ImportedBound,
    /// The guessing probability's bound: the verified bound, or 1 when that is above 1.
    pub guessing_probability: f64,
    /// −log₂ of `guessing_probability`, rounded down.
    pub min_entropy: f64,
}

/// Checks an SDPA output's dual on the guessing-probability SDP at `score` (see
/// [`GuessingImport`]).
pub fn sdpa_import(
    s: &Scenario,
    target: &Target,
    score: f64,
    level: &Level,
    text: &str,
    exact: bool,
) -> Result<GuessingImport> {
    let problem = guessing_sdp(s, target, score, level)?;
    let bound = crate::optim::sdpa::import_dual(&problem, text, exact)?;
    Ok(GuessingImport {
        score,
        level: level.clone(),
        guessing_probability: bound.verified_upper.min(1.0),
        min_entropy: min_entropy_below(bound.verified_upper),
        bound,
    })
}

/// One guessing-probability SDP: the result, the solver's own value (how far the verified
/// bound sits above it says how tight it is) and, with the score as a constraint, its
/// multiplier.
struct Attempt {
    result: Randomness,
    solver_value: f64,
    multiplier: Option<f64>,
}
