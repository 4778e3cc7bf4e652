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
    /// Wall-clock time.
    pub seconds: f64,
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
    let guesses: usize = target
        .parts
        .iter()
        .map(|&(p, _)| s.parties().get(p).map_or(1, |q| q.answers()))
        .product();
    // The guessing-probability SDPs are not symmetric under the game's group: solved in full.
    let options = npa::NpaOptions {
        symmetry: crate::bounds::quantum::symmetric::SymmetryChoice::Off,
        ..npa::NpaOptions::at(level.clone())
    };
    let (base, est) = npa::sized_relaxation(s, &options)?;
    let g = guesses as f64;
    let (seconds, bytes) = (est.seconds * g * g * g, est.memory_bytes * g * g);
    if seconds > npa::SECONDS_LIMIT || bytes > npa::MEMORY_LIMIT {
        return Err(Error::TooLarge {
            what: format!("the guessing-probability SDP at level {}", level.name()),
            estimate: format!(
                "{guesses} moment matrices of side {}: about {} and {:.1} GiB",
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
    match guessing_probability_at(s, target, score, Mode::Constraint(score), &base) {
        Ok(r) => return Ok(r),
        Err(Error::Solver { .. }) => {}
        Err(e) => return Err(e),
    }
    // At the edge of the quantum set the constraint leaves a feasible set without interior and
    // the interior-point method can fail. Weak duality gives a bound for every μ ≥ 0 without
    // that constraint: P_guess(p) ≤ P_guess(p) + μ (value(p) − S) ≤ max over the relaxation.
    // The best μ is found by a golden-section search on log μ; every μ tried gives a valid
    // (verified) bound and the smallest is kept.
    let mut best: Option<Randomness> = None;
    let mut evaluate = |log_mu: f64| -> f64 {
        match guessing_probability_at(s, target, score, Mode::Penalty(10f64.powf(log_mu)), &base) {
            Ok(r) => {
                let p = r.guessing_probability;
                if best.as_ref().is_none_or(|b| p < b.guessing_probability) {
                    best = Some(r);
                }
                p
            }
            Err(_) => f64::INFINITY,
        }
    };
    let (mut a, mut b) = (-2.0f64, 5.0f64);
    let phi = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - phi * (b - a), a + phi * (b - a));
    let (mut fc, mut fd) = (evaluate(c), evaluate(d));
    for _ in 0..30 {
        if fc <= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - phi * (b - a);
            fc = evaluate(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + phi * (b - a);
            fd = evaluate(d);
        }
        if (b - a).abs() < 0.01 {
            break;
        }
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
            Ok(r) => return Ok(r),
            Err(e @ Error::Solver { .. }) => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.expect("at least one attempt"))
}

/// How the score enters the SDP.
#[derive(Debug, Clone, Copy)]
enum Mode {
    /// `value ≥ S` as a constraint, at this score.
    Constraint(f64),
    /// `+ μ (value − S)` in the objective (Lagrangian relaxation of the constraint).
    Penalty(f64),
}

fn guessing_probability_at(
    s: &Scenario,
    target: &Target,
    score: f64,
    mode: Mode,
    r: &Relaxation,
) -> Result<Randomness> {
    let level = &r.level;
    let score_used = match mode {
        Mode::Constraint(v) => v,
        Mode::Penalty(_) => score,
    };
    let start = std::time::Instant::now();
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
    let mut digits = vec![0; radices.len()];
    for e in 0..guesses {
        crate::model::scenario::digits(e, &radices, &mut digits);
        let parts: Vec<(usize, usize, usize)> = target
            .parts
            .iter()
            .zip(&digits)
            .map(|(&(p, x), &a)| (p, x, a))
            .collect();
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
    let problem = SdpProblem {
        variables: guesses * per,
        objective,
        objective_constant,
        equalities: vec![normalisation],
        inequalities,
        blocks,
        variable_bound: 1.0,
        variable_bounds: Vec::new(),
    };
    let sol = backend::solve(&problem, Backend::Auto, "guessing probability SDP").map_err(|e| match e {
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
    Ok(Randomness {
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
        seconds: start.elapsed().as_secs_f64(),
    })
}
