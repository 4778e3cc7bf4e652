//! Self-testing: a verified lower bound on how close the devices' state is to a target state,
//! from an observed score, by the SWAP-isometry relaxation (Yang, Vértesi, Bancal, Scarani &
//! Navascués, PRL 113, 040401 (2014); Bancal et al., PRA 91, 022115 (2015); from memory).
//!
//! Each of two players takes two of its measurements, with answer-0 projectors `P` and `Q` (for
//! more than two answers, answer 0 against the rest), and builds the involutions `Z = 2P − 1` and `X = 2Q − 1`. The partial SWAP circuit with
//! a qubit ancilla maps the player's system to `|0⟩ ⊗ K₀|ψ⟩ + |1⟩ ⊗ K₁|ψ⟩` with `K₀ = (1 + Z)/2 =
//! P` and `K₁ = X(1 − Z)/2`; since `K₀†K₀ + K₁†K₁ = P + (1 − P) = 1`, that is an isometry for any
//! devices. The two ancillas then hold `ρ_(ij),(kl) = ⟨(K_k ⊗ K_l)†(K_i ⊗ K_j)⟩`, and its fidelity
//! with a (real) target `t` is `F = Σ t_ij t_kl ⟨O^A_ki O^B_lj⟩` with `O_00 = P`,
//! `O_01 = 2PQ − 2PQP`, `O_10 = 2QP − 2PQP`, `O_11 = 1 − P`: linear in moments of words with up to
//! three letters per player. Minimising it over an NPA relaxation that contains those words,
//! with the score at least the observed one, bounds from below the fidelity that the devices'
//! state, extracted by these local isometries, has with the target. The minimum is verified
//! from the dual as every NPA bound is.
//!
//! For games equivalent to CHSH, Kaniewski's analytic bound on the fidelity with the maximally
//! entangled state under the best local extraction channels, `F ≥ 1/2 + (1/2)(S − S*)/(2√2 − S*)`
//! with `S* = (16 + 14√2)/17` (Kaniewski, PRL 117, 070402 (2016); quoted from memory), is
//! reported beside it.

use std::collections::HashMap;

use num_complex::Complex64;
use serde::Serialize;

use super::npa::{self, Entry, Level};
use super::words::{adjoint, canonical, moment_key, Projector, Word};
use crate::error::{Error, Result};
use crate::model::collins_gisin::CollinsGisin;
use crate::model::region::BehaviourRegion;
use crate::model::scenario::{digits, Scenario};
use crate::model::strategy::{CMatrix, CVector, QuantumStrategy};
use crate::optim::backend::{self, Backend};
use crate::optim::sdp::upper_index;
use crate::optim::SolveStatus;

/// How the fidelity bound is computed.
#[derive(Debug, Clone)]
pub struct SelfTestOptions {
    /// The two questions (indices) of each player whose measurements build `Z` and `X`.
    pub questions: [[usize; 2]; 2],
    /// The NPA level (default: every word with at most two letters per player,
    /// `1 A B AA AB BB AAB ABB AABB`).
    pub level: Option<Level>,
    /// The SDP solver.
    pub backend: Backend,
}

impl Default for SelfTestOptions {
    fn default() -> Self {
        SelfTestOptions {
            questions: [[0, 1], [0, 1]],
            level: None,
            backend: Backend::Auto,
        }
    }
}

/// The default level: words with at most two letters of each player.
pub fn default_level() -> Level {
    Level::parse("1 A B AA AB BB AAB ABB AABB").expect("a valid level")
}

/// What the fidelity bound is conditioned on.
#[derive(Debug, Clone)]
pub enum FidelityGiven {
    /// Every quantum behaviour scoring at least this.
    Score(f64),
    /// Every quantum behaviour in this region (a behaviour with its tolerance, or counts'
    /// confidence region).
    Region(BehaviourRegion),
}

/// A verified fidelity bound.
#[derive(Debug, Clone, Serialize)]
pub struct FidelityBound {
    /// The score the bound assumes (every quantum behaviour scoring at least this), when it
    /// is conditioned on a score.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub score: Option<f64>,
    /// Verified lower bound on the extracted state's fidelity with the target.
    pub fidelity: f64,
    /// The solver's value, before the verification's margin (not a bound).
    pub solver_value: f64,
    /// How the SDP ended.
    pub status: SolveStatus,
    /// The NPA level.
    pub level: Level,
    /// Side of the moment matrix.
    pub matrix_size: usize,
    /// The target, amplitudes of |00⟩, |01⟩, |10⟩, |11⟩ (ancilla qubits, first player first).
    pub target: [f64; 4],
    /// Kaniewski's analytic bound with the maximally entangled state, for games equivalent to
    /// CHSH (its own target and extraction: best local channels).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chsh_analytic: Option<f64>,
    /// The score as a CHSH value S, for such games (for a region, the least S of any behaviour
    /// in it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chsh_value: Option<f64>,
    /// For a region: the least score of any behaviour in it (each probability at the end of its
    /// interval that lowers the score).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub region_score_floor: Option<f64>,
    /// Wall-clock seconds.
    pub seconds: f64,
}

/// Checks that the game and the chosen questions allow the SWAP construction: two players, two
/// different questions per player, each with at least two answers (with more, `P` is the
/// projector of answer 0 against the rest: any projector builds an involution).
fn check_shape(s: &Scenario, questions: &[[usize; 2]; 2]) -> Result<()> {
    if s.players() != 2 {
        return Err(Error::InvalidArgument(format!(
            "self-testing is for two-player games ({} players here)",
            s.players()
        )));
    }
    for (p, qs) in s.parties().iter().zip(questions) {
        if qs[0] == qs[1] {
            return Err(Error::InvalidArgument(format!(
                "{}: the two questions of the SWAP construction must differ",
                p.name
            )));
        }
        for &x in qs {
            if x >= p.questions() {
                return Err(Error::InvalidArgument(format!(
                    "{} has no question number {x}",
                    p.name
                )));
            }
            if p.answers() < 2 {
                return Err(Error::InvalidArgument(format!(
                    "{} has one answer: the SWAP construction needs two",
                    p.name
                )));
            }
        }
    }
    Ok(())
}

/// `O_ki = K_k† K_i` of one player as (coefficient, word) terms.
fn one_player_terms(player: usize, qs: [usize; 2], k: usize, i: usize) -> Vec<(f64, Word)> {
    let p = Projector::new(player, qs[0], 0);
    let q = Projector::new(player, qs[1], 0);
    match (k, i) {
        (0, 0) => vec![(1.0, vec![p])],
        (0, 1) => vec![(2.0, vec![p, q]), (-2.0, vec![p, q, p])],
        (1, 0) => vec![(2.0, vec![q, p]), (-2.0, vec![p, q, p])],
        _ => vec![(1.0, vec![]), (-1.0, vec![p])],
    }
}

/// The fidelity `Σ t_ij t_kl ⟨O^A_ki O^B_lj⟩` as (coefficient, moment word) terms.
fn fidelity_terms(questions: &[[usize; 2]; 2], t: &[f64; 4]) -> Vec<(f64, Word)> {
    let mut out = Vec::new();
    for (ij, &tij) in t.iter().enumerate() {
        for (kl, &tkl) in t.iter().enumerate() {
            let c = tij * tkl;
            if c == 0.0 {
                continue;
            }
            let (i, j, k, l) = (ij / 2, ij % 2, kl / 2, kl % 2);
            for (ca, wa) in one_player_terms(0, questions[0], k, i) {
                for (cb, wb) in one_player_terms(1, questions[1], l, j) {
                    if let Some(w) = canonical(wa.iter().chain(&wb).copied()) {
                        out.push((c * ca * cb, w));
                    }
                }
            }
        }
    }
    out
}

/// The extracted two-qubit state `ρ_(ij),(kl)` of a strategy (Born rule), for the default
/// target and for checks.
pub fn extracted_state(
    s: &Scenario,
    st: &QuantumStrategy,
    questions: &[[usize; 2]; 2],
) -> Result<CMatrix> {
    check_shape(s, questions)?;
    let kraus = |player: usize| -> [CMatrix; 2] {
        let d = st.dims[player];
        let id = CMatrix::identity(d, d);
        let p = st.measurements[player][questions[player][0]][0].clone();
        let q = &st.measurements[player][questions[player][1]][0];
        let x = q * Complex64::new(2.0, 0.0) - &id;
        let k1 = &x * (&id - &p);
        [p, k1]
    };
    let (ka, kb) = (kraus(0), kraus(1));
    let vectors: Vec<CVector> = (0..4)
        .map(|ij| ka[ij / 2].kronecker(&kb[ij % 2]) * &st.state)
        .collect();
    Ok(CMatrix::from_fn(4, 4, |r, c| vectors[c].dotc(&vectors[r])))
}

/// The default target: the leading eigenvector of the extracted state of `st`, made real (the
/// relaxation is real, so the target must be: a complex one is refused).
pub fn target_from(
    s: &Scenario,
    st: &QuantumStrategy,
    questions: &[[usize; 2]; 2],
) -> Result<[f64; 4]> {
    let rho = extracted_state(s, st, questions)?;
    let eig = rho.symmetric_eigen();
    let top = (0..4)
        .max_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]))
        .expect("four eigenvalues");
    let v = eig.eigenvectors.column(top).into_owned();
    // Remove the global phase of the largest amplitude.
    // The first of the largest amplitudes (within rounding) is made real and positive.
    let largest = v.iter().map(|a| a.norm()).fold(0.0, f64::max);
    let big = (0..4)
        .find(|&a| v[a].norm() >= largest - 1e-12)
        .expect("four amplitudes");
    let phase = v[big].conj() / v[big].norm();
    let v = v * phase;
    if v.iter().any(|a| a.im.abs() > 1e-9) {
        return Err(Error::InvalidArgument(
            "the strategy's extracted state is complex: give a real target".into(),
        ));
    }
    let mut t = [0.0; 4];
    for (out, a) in t.iter_mut().zip(v.iter()) {
        *out = a.re;
    }
    Ok(t)
}

/// Checks a target given by the user: four finite amplitudes of unit norm (within 1e-6), then
/// normalised exactly.
pub fn checked_target(amplitudes: &[f64]) -> Result<[f64; 4]> {
    if amplitudes.len() != 4 {
        return Err(Error::InvalidArgument(format!(
            "the target state needs 4 amplitudes (two qubits: |00⟩, |01⟩, |10⟩, |11⟩), found {}",
            amplitudes.len()
        )));
    }
    if amplitudes.iter().any(|a| !a.is_finite()) {
        return Err(Error::InvalidArgument(
            "the target state has an amplitude that is not a finite number".into(),
        ));
    }
    let norm = amplitudes.iter().map(|a| a * a).sum::<f64>().sqrt();
    if (norm - 1.0).abs() > 1e-6 {
        return Err(Error::InvalidArgument(format!(
            "the target state's norm is {norm}, not 1"
        )));
    }
    let mut t = [0.0; 4];
    for (out, a) in t.iter_mut().zip(amplitudes) {
        *out = a / norm;
    }
    Ok(t)
}

/// For a two-player game with two binary questions each whose value is `κ + λ·S` for every
/// no-signalling behaviour, S the CHSH correlator sum up to relabelling (λ > 0): (κ, λ).
pub fn chsh_form(s: &Scenario) -> Option<(f64, f64)> {
    let shape = s.players() == 2
        && s.parties()
            .iter()
            .all(|p| p.questions() == 2 && p.answers() == 2);
    if !shape {
        return None;
    }
    // p(ab|xy) = (1 + (−1)^a A_x + (−1)^b B_y + (−1)^(a+b) E_xy)/4.
    let (mut kappa, mut alpha, mut beta, mut gamma) = (s.offset(), [0.0; 2], [0.0; 2], [0.0; 4]);
    let mut d = [0usize; 2];
    let mut ad = [0usize; 2];
    for (q, g) in gamma.iter_mut().enumerate() {
        digits(q, &[2, 2], &mut d);
        for a in 0..4 {
            digits(a, &[2, 2], &mut ad);
            let c = s.objective()[q * 4 + a] / 4.0;
            let (sa, sb) = (
                if ad[0] == 0 { 1.0 } else { -1.0 },
                if ad[1] == 0 { 1.0 } else { -1.0 },
            );
            kappa += c;
            alpha[d[0]] += sa * c;
            beta[d[1]] += sb * c;
            *g += sa * sb * c;
        }
    }
    let tiny = 1e-12 * (1.0 + gamma.iter().map(|g| g.abs()).sum::<f64>());
    if alpha.iter().chain(&beta).any(|v| v.abs() > tiny) {
        return None;
    }
    let lambda = gamma[0].abs();
    if lambda <= tiny || gamma.iter().any(|g| (g.abs() - lambda).abs() > tiny) {
        return None;
    }
    let negatives = gamma.iter().filter(|g| **g < 0.0).count();
    // An odd number of minus signs is CHSH up to relabelling; an even number is not (its
    // maximum is reached classically).
    (negatives % 2 == 1).then_some((kappa, lambda))
}

/// Kaniewski's bound at CHSH value `chsh` (1/2 at or below S*, where it says nothing).
pub fn kaniewski_bound(chsh: f64) -> f64 {
    let root2 = std::f64::consts::SQRT_2;
    let threshold = (16.0 + 14.0 * root2) / 17.0;
    let top = 2.0 * root2;
    if chsh <= threshold {
        return 0.5;
    }
    (0.5 + 0.5 * (chsh.min(top) - threshold) / (top - threshold)).min(1.0)
}

/// The verified lower bound on the SWAP-extracted state's fidelity with `target`, over every
/// quantum behaviour scoring at least `score`.
pub fn fidelity_bound(
    s: &Scenario,
    score: f64,
    target: &[f64; 4],
    options: &SelfTestOptions,
) -> Result<FidelityBound> {
    fidelity_bound_given(s, &FidelityGiven::Score(score), target, options)
}

/// The verified lower bound on the SWAP-extracted state's fidelity with `target`, over every
/// quantum behaviour scoring at least a score, or in a region of behaviours (each probability
/// within its interval; a region with no quantum behaviour is refused, proven from an SDP's
/// dual, since every bound would then be vacuous).
pub fn fidelity_bound_given(
    s: &Scenario,
    given: &FidelityGiven,
    target: &[f64; 4],
    options: &SelfTestOptions,
) -> Result<FidelityBound> {
    let start = std::time::Instant::now();
    check_shape(s, &options.questions)?;
    let level = options.level.clone().unwrap_or_else(default_level);
    let score = match given {
        FidelityGiven::Score(score) => {
            if !score.is_finite() {
                return Err(Error::InvalidArgument(format!(
                    "the score {score} is not a finite number"
                )));
            }
            Some(*score)
        }
        FidelityGiven::Region(region) => {
            let distance = super::membership::region_distance(s, region, &level, options.backend)?;
            if distance.proven_outside() {
                return Err(Error::InvalidArgument(format!(
                    "no quantum behaviour (NPA level {}) lies in the region: it is at least {:.3e} away, proven from the dual",
                    level.name(),
                    distance.verified_lower
                )));
            }
            None
        }
    };
    let r = npa::full_relaxation(s, &level, &crate::limits::Limits::default())?;
    // Every product u†v of generating words, by its moment key: the moments the fidelity can
    // use.
    let words = &r.matrix.words;
    let mut by_key: HashMap<Word, Entry> = HashMap::new();
    for c in 0..words.len() {
        for row in 0..=c {
            let entry = r.matrix.entries[upper_index(row, c)];
            if let Some(w) = canonical(
                adjoint(&words[row])
                    .into_iter()
                    .chain(words[c].iter().copied()),
            ) {
                by_key.entry(moment_key(w)).or_insert(entry);
            }
        }
    }
    let mut problem = r.problem.clone();
    let mut objective = vec![0.0; problem.variables];
    let mut constant = 0.0;
    for (c, w) in fidelity_terms(&options.questions, target) {
        match by_key.get(&moment_key(w.clone())) {
            Some(Entry::Moment(k)) => objective[*k] -= c,
            Some(Entry::Identity) => constant -= c,
            Some(Entry::Zero) => {}
            None => {
                return Err(Error::InvalidArgument(format!(
                    "NPA level {} does not contain the moments the SWAP fidelity needs (a word of {} letters): choose a level with products of two letters of each player, such as the default",
                    level.name(),
                    w.len()
                )))
            }
        }
    }
    match given {
        FidelityGiven::Score(score) => {
            // The score constraint: value(y) = c·y + c0 ≥ score.
            let value_terms: Vec<(usize, f64)> = r
                .problem
                .objective
                .iter()
                .enumerate()
                .filter(|(_, c)| **c != 0.0)
                .map(|(k, &c)| (k, -c))
                .collect();
            problem
                .inequalities
                .push((value_terms, r.problem.objective_constant - score));
        }
        FidelityGiven::Region(region) => {
            // lo ≤ p(a|q) ≤ hi for every probability, p(a|q) in Collins–Gisin moments.
            let na = s.joint_answers();
            if region.lower.len() != s.joint_questions() * na
                || region.upper.len() != region.lower.len()
            {
                return Err(Error::InvalidArgument(format!(
                    "the behaviour has {} probabilities, the game's players need {}",
                    region.lower.len(),
                    s.joint_questions() * na
                )));
            }
            let cg = CollinsGisin::new(s);
            for q in 0..s.joint_questions() {
                for a in 0..na {
                    let k = q * na + a;
                    let (lo, hi) = (region.lower[k], region.upper[k]);
                    if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
                        return Err(Error::InvalidArgument(format!(
                            "the behaviour's interval {k} is empty or not a number"
                        )));
                    }
                    let (words, mut constant) =
                        super::membership::full_probability_terms(s, &cg, q, a);
                    let mut terms: Vec<(usize, f64)> = Vec::new();
                    for (w, c) in words {
                        match by_key.get(&moment_key(w)) {
                            Some(Entry::Moment(m)) => terms.push((*m, c)),
                            Some(Entry::Identity) => constant += c,
                            Some(Entry::Zero) => {}
                            None => {
                                return Err(Error::InvalidArgument(format!(
                                    "NPA level {} does not contain the behaviour's moments",
                                    level.name()
                                )))
                            }
                        }
                    }
                    let negated: Vec<(usize, f64)> = terms.iter().map(|&(m, c)| (m, -c)).collect();
                    problem.inequalities.push((terms, hi - constant));
                    problem.inequalities.push((negated, constant - lo));
                }
            }
        }
    }
    problem.objective = objective;
    problem.objective_constant = constant;
    let stage = match score {
        Some(v) => format!("SWAP fidelity at score {v}"),
        None => "SWAP fidelity of the behaviour".to_string(),
    };
    let sol = backend::solve(&problem, options.backend, &stage).map_err(|e| match e {
        Error::Solver {
            status: Some(SolveStatus::Infeasible),
            ..
        } => Error::InvalidArgument(match score {
            Some(v) => format!(
                "no quantum behaviour (NPA level {}) reaches the score {v}",
                level.name()
            ),
            None => format!(
                "no quantum behaviour (NPA level {}) lies in the region",
                level.name()
            ),
        }),
        other => other,
    })?;
    let region_score_floor = match given {
        FidelityGiven::Score(_) => None,
        FidelityGiven::Region(region) => Some(
            s.offset()
                + s.objective()
                    .iter()
                    .zip(region.lower.iter().zip(&region.upper))
                    .map(|(&c, (&lo, &hi))| if c >= 0.0 { c * lo } else { c * hi })
                    .sum::<f64>(),
        ),
    };
    let chsh_value = score
        .or(region_score_floor)
        .and_then(|v| chsh_form(s).map(|(kappa, lambda)| (v - kappa) / lambda));
    Ok(FidelityBound {
        score,
        // The SDP maximised −F: its verified upper bound is minus a verified lower bound on F.
        fidelity: (-sol.certified).clamp(0.0, 1.0),
        solver_value: -sol.dual,
        status: sol.status,
        level,
        matrix_size: words.len(),
        target: *target,
        chsh_analytic: chsh_value.map(kaniewski_bound),
        chsh_value,
        region_score_floor,
        seconds: start.elapsed().as_secs_f64(),
    })
}
