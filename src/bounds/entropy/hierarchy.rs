//! The sum over quadrature nodes: a verified lower bound on H(A|X=x*, E) (or on a pair's
//! H(AB|X=x*, Y=y*, E)) from one relaxation per node.
//!
//! For a classical-quantum state ρ_AE and σ = 1_A ⊗ ρ_E, H(A|E) = −D(ρ_AE‖σ). With the relative
//! modular operator Δ (X ↦ σ X ρ⁻¹) and v = ρ^{1/2}, −D = ⟨v, ln Δ v⟩ (in nats), and
//! ln x = ∫₀¹ (x − 1)/(t(x − 1) + 1) dt. At each t the integrand g(t) is
//! (1/t)(1 − ⟨v, (tΔ + 1 − t)⁻¹ v⟩), and completing the square,
//! −⟨v, A⁻¹ v⟩ = inf_Z ⟨Z, AZ⟩ + 2 Re⟨v, Z⟩, which after Z → Z ρ^{1/2} reads
//!
//! ```text
//!   g(t) = (1/t) (1 + inf_Z Σ_e ⟨M_e (Z_e + Z_e* + (1 − t) Z_e* Z_e) + t Z_e Z_e*⟩).
//! ```
//!
//! This is the representation of Brown, Fawzi & Fawzi (Quantum 8, 1445 (2024);
//! arXiv:2106.13692), derived here again so that each step can be checked. A Gauss–Radau rule
//! with its last node at t = 1 under-estimates the integral: for every eigenvalue λ of Δ the
//! integrand (λ − 1)/(1 + t(λ − 1)) has a non-positive derivative of order 2m − 1, and the
//! rule's error is that derivative times ∫ (t − 1) Π (t − t_i)² dt < 0, so the integral minus
//! the rule is non-negative. The term at t = 1 is 1 − Σ_e Tr(ρ_{E,e}² ρ_E⁻¹) ≥ 0 (as
//! ρ_{E,e} ≤ ρ_E) and is replaced by that floor, 0 (or by a positive floor after noisy
//! preprocessing, below). So, in bits,
//!
//! ```text
//!   H(A|E) ≥ Σ_{i<m} w_i / (t_i ln 2) · (1 + inf_Z …(t_i)),
//! ```
//!
//! and each infimum is bounded below by the verified bound of its relaxation (solving the
//! nodes separately only lowers the sum).
//!
//! The verified bound charges residuals at a bound on each moment, so the Z_e need a norm
//! bound. The minimiser solves t ρ_E Z + (1 − t) Z ρ_{E,e} = −ρ_{E,e}, so
//! Z = −∫₀^∞ e^{−utρ_E} ρ_{E,e} e^{−u(1−t)ρ_{E,e}} du. With ρ_{E,e} ≤ ρ_E, Douglas' lemma gives
//! ρ_{E,e}^{1/2} = C ρ_E^{1/2} with ‖C‖ ≤ 1, and the Cauchy–Schwarz inequality for operator
//! integrals gives ‖Z‖ ≤ ‖∫ρ_E e^{−2utρ_E}du‖^{1/2} ‖∫ρ_{E,e} e^{−2u(1−t)ρ_{E,e}}du‖^{1/2}
//! = 1/(2√(t(1 − t))). Restricting the Z_e to that ball leaves every infimum unchanged, and then
//! |⟨w⟩| ≤ α^{(number of Z letters in w)} for every word (our derivation; it is tighter than
//! the bound the paper states).
//!
//! Nothing above needs the M_e to be projectors: any POVM with ρ_{E,e} = Tr_Q(M_e ρ_QE) ≤ ρ_E
//! gives the same formula and the same norm bound. So noisy preprocessing (the key player
//! replaces its answer a by e with probability T(e|a); Ho et al., PRL 124, 230502 (2020)) is the
//! same programme with M̂_e = Σ_a T(e|a) M_a, a combination of the players' projectors.
//!
//! The term at t = 1 then has a positive floor (our derivation). Write ρ_a for the raw answers'
//! conditional states and G_{aa'} = Tr(ρ_a ρ_E⁻¹ ρ_{a'}): Σ_{a'} G_{aa'} = Tr ρ_a, so the
//! entries of G sum to 1, and s = Tr G ≤ 1 as above. The symmetric channel of d answers is
//! T = β·1 + γ·J with γ = q/(d − 1), β = 1 − dγ, and TᵀT = β²·1 + (2βγ + dγ²)·J, so
//! Σ_e Tr(ρ_{E,e}² ρ_E⁻¹) = Tr(TᵀT G) = β² s + 2βγ + dγ² ≤ β² + 2βγ + dγ² = 1 − 2q + dq²/(d − 1),
//! and the term is at least 2q − dq²/(d − 1) (2q(1 − q) for a bit flip: the whole term at
//! q = 1/2, where the answer is uniform and the entropy is exactly 1 bit).

use rayon::prelude::*;
use serde::Serialize;

use super::quadrature::RadauRule;
use super::relaxation::{
    node_problem, players_only, with_letters, AdversaryWords, EntropyMatrix, EntropyWord,
    EveLetter, MomentField, MomentTerms, NodeProblem,
};
use super::symmetry::EntropyReduction;
use crate::bounds::quantum::membership;
use crate::bounds::quantum::npa::{self, Level};
use crate::bounds::quantum::symmetric::SymmetryChoice;
use crate::bounds::quantum::words::{Projector, Word};
use crate::error::{Error, Result};
use crate::limits::Limits;
use crate::model::collins_gisin::CollinsGisin;
use crate::model::region::BehaviourRegion;
use crate::model::scenario::{digits, Scenario};
use crate::optim::backend::{self, Backend};
use crate::optim::moment_ipm::{self, IpmOptions, StallPolicy};
use crate::optim::sdp::{SdpProblem, SdpSolution};
use crate::optim::SolveStatus;

/// Whose answers the entropy (or the adversary's guess) is about: one or two
/// (player, question index) pairs.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Target {
    /// (player, question index) of each answer.
    pub parts: Vec<(usize, usize)>,
}

impl Target {
    /// Checks the target against the scenario: one or two parts, different players, indices in
    /// range.
    pub fn check(&self, s: &Scenario) -> Result<()> {
        if self.parts.is_empty() || self.parts.len() > 2 {
            return Err(Error::InvalidArgument(
                "choose the answers of one or two players".into(),
            ));
        }
        if self.parts.len() == 2 && self.parts[0].0 == self.parts[1].0 {
            return Err(Error::InvalidArgument(
                "the two answers must belong to different players".into(),
            ));
        }
        for &(p, x) in &self.parts {
            let Some(party) = s.parties().get(p) else {
                return Err(Error::InvalidArgument(format!(
                    "there is no player {p} (the game has {})",
                    s.players()
                )));
            };
            if x >= party.questions() {
                return Err(Error::InvalidArgument(format!(
                    "player {} has no question {x} (it has {})",
                    party.name,
                    party.questions()
                )));
            }
        }
        Ok(())
    }

    /// The joint answers of the parts, each as (player, question, answer) triples, in mixed
    /// radix order (first part most significant).
    pub fn events(&self, s: &Scenario) -> Vec<Vec<(usize, usize, usize)>> {
        let radices: Vec<usize> = self
            .parts
            .iter()
            .map(|&(p, _)| s.parties()[p].answers())
            .collect();
        let count: usize = radices.iter().product();
        let mut d = vec![0; radices.len()];
        (0..count)
            .map(|e| {
                digits(e, &radices, &mut d);
                self.parts
                    .iter()
                    .zip(&d)
                    .map(|(&(p, x), &a)| (p, x, a))
                    .collect()
            })
            .collect()
    }
}

/// `Π_i f_i` for the event "player i answers a_i to question x_i" in Collins–Gisin form: a
/// combination of words (the empty word is the identity; a last answer is the identity minus
/// the others).
pub fn event_terms(s: &Scenario, parts: &[(usize, usize, usize)]) -> Vec<(Word, f64)> {
    let mut terms: Vec<(Word, f64)> = vec![(Vec::new(), 1.0)];
    for &(player, question, answer) in parts {
        let last = s.parties()[player].answers() - 1;
        let op = |a: usize| Projector {
            player: player as u16,
            setting: question as u32,
            outcome: a as u32,
        };
        let factor: Vec<(Option<Projector>, f64)> = if answer < last {
            vec![(Some(op(answer)), 1.0)]
        } else {
            std::iter::once((None, 1.0))
                .chain((0..last).map(|a| (Some(op(a)), -1.0)))
                .collect()
        };
        let mut next = Vec::new();
        for (w, c) in &terms {
            for (p, f) in &factor {
                let mut w2 = w.clone();
                w2.extend(p.iter().copied());
                w2.sort_by_key(|p| p.player);
                next.push((w2, c * f));
            }
        }
        terms = next;
    }
    terms
}

/// What the adversary's devices are known to do.
#[derive(Debug, Clone)]
pub enum EntropyConstraint {
    /// The game's value (win probability or expression value) is at least this.
    Score(f64),
    /// Every behaviour in a region: an interval for each probability `p(a|q)` (a behaviour
    /// given to a tolerance, a strategy's within its evaluation error, or counts' confidence
    /// region). The intervals are the constraints, so slightly signalling data need no
    /// projection; a region proven to hold no quantum behaviour is refused.
    Region(BehaviourRegion),
}

/// What the key player does to its answer before the entropy is counted.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Preprocessing {
    /// The answer as it is.
    #[default]
    None,
    /// Noisy preprocessing: the answer is kept with probability 1 − `probability` and otherwise
    /// replaced by each of the other answers with probability `probability`/(d − 1) (for two
    /// answers, a bit flip with probability `probability`). The randomness is the player's own,
    /// private, and never announced.
    Noisy {
        /// The probability of changing the answer, in [0, 1].
        probability: f64,
    },
}

impl Preprocessing {
    /// Noisy preprocessing with the probability given, or none.
    pub fn noisy_if(probability: Option<f64>) -> Preprocessing {
        match probability {
            None => Preprocessing::None,
            Some(probability) => Preprocessing::Noisy { probability },
        }
    }

    /// T(e|a) for answers e and a out of `d` (with a single answer there is nothing to change
    /// to, and the channel is the identity).
    pub fn channel(&self, e: usize, a: usize, d: usize) -> f64 {
        match *self {
            _ if d <= 1 => f64::from(u8::from(e == a)),
            Preprocessing::None => f64::from(u8::from(e == a)),
            Preprocessing::Noisy { probability } if e == a => 1.0 - probability,
            Preprocessing::Noisy { probability } => probability / (d - 1) as f64,
        }
    }

    /// A floor on the quadrature's term at t = 1, 1 − Σ_e Tr(ρ_{E,e}² ρ_E⁻¹), for d answers
    /// (see the module notes): 0 without preprocessing, 2q − dq²/(d − 1) with it.
    pub fn last_node_floor(&self, d: usize) -> f64 {
        match *self {
            Preprocessing::Noisy { probability: q } if d > 1 => {
                (2.0 * q - d as f64 * q * q / (d - 1) as f64).max(0.0)
            }
            _ => 0.0,
        }
    }

    /// Refuses a probability outside [0, 1] (or not a number).
    pub fn check(&self) -> Result<()> {
        match *self {
            Preprocessing::Noisy { probability } if !(0.0..=1.0).contains(&probability) => {
                Err(Error::InvalidArgument(format!(
                    "the noisy preprocessing probability must be in [0, 1], got {probability}"
                )))
            }
            _ => Ok(()),
        }
    }

    /// `p(e, ·)` from `p(a, ·)`: the rows of a joint table with the key answer first, passed
    /// through the channel.
    pub fn apply_to_rows(&self, table: &[Vec<f64>]) -> Vec<Vec<f64>> {
        let d = table.len();
        (0..d)
            .map(|e| {
                let width = table.first().map_or(0, Vec::len);
                (0..width)
                    .map(|b| (0..d).map(|a| self.channel(e, a, d) * table[a][b]).sum())
                    .collect()
            })
            .collect()
    }

    /// The probability that the preprocessed answer differs from the other player's, from the
    /// raw one's `q` (d answers): a differing answer becomes equal with probability p/(d − 1),
    /// an equal one differs with probability p.
    pub fn error_rate(&self, q: f64, d: usize) -> f64 {
        match *self {
            Preprocessing::Noisy { probability } if d > 1 => {
                (1.0 - q) * probability + q * (1.0 - probability / (d - 1) as f64)
            }
            _ => q,
        }
    }
}

/// Options of [`conditional_entropy`].
#[derive(Debug, Clone)]
pub struct EntropyOptions {
    /// Gauss–Radau nodes m (m − 1 relaxations are solved; the node at t = 1 is replaced by a
    /// floor).
    pub nodes: usize,
    /// The players' NPA level of each relaxation (None: [`default_level`], which depends on
    /// the target and the size).
    pub level: Option<Level>,
    /// Which of the adversary's words join it.
    pub adversary: AdversaryWords,
    /// Real symmetric or complex Hermitian moment matrices.
    pub field: MomentField,
    /// SDP backend.
    pub backend: Backend,
    /// What the key player does to its answer first (one player's answer only).
    pub preprocessing: Preprocessing,
    /// Whether the relaxations are reduced by the game's relabellings that keep the target in
    /// place (real moment matrices and a score constraint only: a behaviour or region is in
    /// general not invariant).
    pub symmetry: SymmetryChoice,
    /// Work limits: a hierarchy estimated above an hour is refused unless forced.
    pub limits: Limits,
}

/// How the relaxations were reduced by symmetry.
#[derive(Debug, Clone, Serialize)]
pub struct EntropySymmetry {
    /// Relabellings averaged over: those keeping the target's players and questions in place
    /// (the identity included).
    pub order: usize,
    /// Moments of each full relaxation.
    pub full_moments: usize,
    /// Variables after merging orbits.
    pub moments: usize,
}

/// What one hierarchy (one score or behaviour) is expected to cost.
#[derive(Debug, Clone, Serialize)]
pub struct EntropyEstimate {
    /// The players' level used.
    pub level: Level,
    /// Side of each relaxation's moment matrix.
    pub matrix_size: usize,
    /// Distinct moments of each.
    pub moments: usize,
    /// Variables of each after the symmetry reduction (the moments when not reduced).
    pub variables: usize,
    /// Relaxations solved (one per node but the last).
    pub relaxations: usize,
    /// Estimated seconds for all of them (the interior-point estimate of one relaxation, times
    /// their number).
    pub seconds: f64,
}

impl EntropyEstimate {
    /// The estimate in words, for warnings and refusals.
    pub fn describe(&self) -> String {
        format!(
            "{} relaxations at level {} ({}×{} moment matrix, {} moments{}): about {} per score",
            self.relaxations,
            self.level.name(),
            self.matrix_size,
            self.matrix_size,
            self.moments,
            if self.variables < self.moments {
                format!(", {} after symmetry", self.variables)
            } else {
                String::new()
            },
            crate::limits::human_seconds(self.seconds)
        )
    }
}

/// The cost of one hierarchy with a score constraint, from its moment matrix (built, not
/// solved) and its symmetry reduction.
pub fn estimate(
    s: &Scenario,
    target: &Target,
    options: &EntropyOptions,
) -> Result<EntropyEstimate> {
    Ok(PreparedHierarchy::new(s, target, options)?.score_estimate())
}

/// The symmetry reduction the options allow for a score constraint (real moment matrices), if
/// the game has one that keeps the target.
fn reduction_of(
    s: &Scenario,
    target: &Target,
    matrix: &EntropyMatrix,
    options: &EntropyOptions,
) -> Option<EntropyReduction> {
    (options.symmetry == SymmetryChoice::Auto && options.field == MomentField::Real)
        .then(|| EntropyReduction::new(s, &target.parts, matrix))
        .flatten()
}

/// The quadrature rule, the players' level and the moment matrix every node shares.
fn hierarchy_matrix(
    s: &Scenario,
    target: &Target,
    options: &EntropyOptions,
) -> Result<(RadauRule, Level, EntropyMatrix)> {
    let rule = RadauRule::new(options.nodes)?;
    let level = match &options.level {
        Some(level) => level.clone(),
        None => default_level(s, target, options.adversary)?,
    };
    let events = target.events(s).len();
    let matrix = EntropyMatrix::new(s, &level, events, options.adversary)?;
    Ok((rule, level, matrix))
}

fn estimate_of(
    matrix: &EntropyMatrix,
    level: Level,
    rule: &RadauRule,
    field: MomentField,
    reduction: Option<&EntropyReduction>,
) -> EntropyEstimate {
    // Complex moments have a real and an imaginary part each, and the Hermitian matrix is
    // solved as a real one of twice the side.
    let variables = reduction.map_or(matrix.moments.len(), |r| r.moments);
    let (m, n) = match field {
        MomentField::Real => (variables as f64, matrix.size() as f64),
        MomentField::Complex => (
            2.0 * matrix.moments.len() as f64,
            2.0 * matrix.size() as f64,
        ),
    };
    let relaxations = rule.nodes.len().saturating_sub(1).max(1);
    EntropyEstimate {
        level,
        matrix_size: matrix.size(),
        moments: matrix.moments.len(),
        variables,
        relaxations,
        seconds: relaxations as f64 * npa::ipm_seconds_estimate(m, n),
    }
}

/// Default node count: near the top of the CHSH range the rule's own error matters. With the
/// default level, 16 nodes fall 3.0e-4 short of the analytic curve at S = 2.82; at S = 2.828
/// (within 4e-4 of 2√2) 16 nodes fall 2.2e-3 short and 28 nodes 5.5e-4 (measured).
pub const DEFAULT_NODES: usize = 16;

impl Default for EntropyOptions {
    fn default() -> Self {
        EntropyOptions {
            nodes: DEFAULT_NODES,
            level: None,
            adversary: AdversaryWords::default(),
            field: MomentField::default(),
            backend: Backend::Auto,
            preprocessing: Preprocessing::None,
            symmetry: SymmetryChoice::Auto,
            limits: Limits::default(),
        }
    }
}

/// The side of the entropy moment matrix up to which [`default_level`] adds the target
/// players' own products (each node's work grows with about the fourth power of the side).
pub const DEFAULT_LEVEL_MAX_SIDE: usize = 120;

/// The default players' level for a target: 1+joint (every player's operators and the
/// products of one operator of each of two or more players) and, for each target player, the
/// products of two of its own operators, when the moment matrix stays within
/// [`DEFAULT_LEVEL_MAX_SIDE`] (otherwise 1+joint alone). Those products are what the CHSH
/// comparison needs at low scores: at S = 2.1 (16 nodes) 1+joint alone falls 4.1e-3 short of the
/// analytic curve, with them 3.0e-5, in about the same time (measured). On CGLMP with three
/// answers they would make each relaxation several times larger and slower (it ran for more
/// than ten minutes), hence the cap.
pub fn default_level(s: &Scenario, target: &Target, adversary: AdversaryWords) -> Result<Level> {
    let players = s.players();
    let mut patterns: Vec<Vec<usize>> = vec![Vec::new()];
    patterns.extend((0..players).map(|p| vec![p]));
    for mask in 1usize..(1 << players) {
        if mask.count_ones() >= 2 {
            patterns.push((0..players).filter(|p| mask >> p & 1 == 1).collect());
        }
    }
    let mut own: Vec<usize> = target.parts.iter().map(|&(p, _)| p).collect();
    own.sort_unstable();
    own.dedup();
    patterns.extend(own.into_iter().map(|p| vec![p, p]));
    let with_products = Level::Patterns(patterns);
    let events = target.events(s).len();
    match EntropyMatrix::new(s, &with_products, events, adversary) {
        Ok(m) if m.words.len() <= DEFAULT_LEVEL_MAX_SIDE => Ok(with_products),
        Ok(_) | Err(Error::TooLarge { .. }) => Ok(Level::Joint),
        Err(e) => Err(e),
    }
}

/// One node's share of the bound.
#[derive(Debug, Clone, Serialize)]
pub struct NodeBound {
    /// The node t_i.
    pub t: f64,
    /// Its Gauss–Radau weight w_i.
    pub weight: f64,
    /// The norm bound on the Z_e at this node, 1/(2√(t(1 − t))).
    pub norm_bound: f64,
    /// Verified lower bound on the node's infimum.
    pub infimum: f64,
    /// The solver's value of the infimum (without the verification margin).
    pub solver_value: f64,
    /// How the relaxation ended.
    pub status: SolveStatus,
    /// Iterations of the SDP solver.
    pub iterations: u32,
}

/// A verified lower bound on a conditional von Neumann entropy.
#[derive(Debug, Clone, Serialize)]
pub struct ConditionalEntropy {
    /// Lower bound on H(A|X=x*, E) in bits (verified: every node's dual certificate checked,
    /// the rounding charged).
    pub bits: f64,
    /// The same sum from the solvers' values (not a bound: shows the verification's margin).
    pub solver_bits: f64,
    /// The method, for reports.
    pub method: String,
    /// Gauss–Radau nodes m.
    pub nodes: usize,
    /// The players' NPA level.
    pub level: Level,
    /// Which adversary words.
    pub adversary: AdversaryWords,
    /// Real or complex moment matrices.
    pub field: MomentField,
    /// Side of each node's moment matrix (before a complex embedding doubles it).
    pub matrix_size: usize,
    /// What the key player did to its answer before the entropy was counted.
    pub preprocessing: Preprocessing,
    /// How the relaxations were reduced by symmetry (none when not).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub symmetry: Option<EntropySymmetry>,
    /// Per node (t_i < 1).
    pub terms: Vec<NodeBound>,
    /// With a score constraint: the affine lower bound on H as a function of the score that the
    /// same dual certificates prove (the min-tradeoff function of entropy accumulation).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub min_tradeoff: Option<MinTradeoff>,
    /// Wall-clock time.
    pub seconds: f64,
}

/// An affine function of the score, f(S) = `at_lowest` + `slope`·(S − `lowest`), with
/// H(A|X=x*, E) ≥ f(S) for every quantum behaviour scoring at least S, for every S up to
/// `highest`.
///
/// Each node's dual certificate was found at one score, but it is dual feasible at every score:
/// only the right-hand side of the score block changes, so its verified bound, re-evaluated with
/// the same dual vector at another score, is valid there. That bound is affine in the score (the
/// dual objective is, and so is the charge of the score block, whose trace bound is the highest
/// value minus the score) plus a floating-point charge that is convex in it (sums of absolute
/// values of affine terms); so the verified upper bounds are convex in the score, lie below their
/// chord, and the entropy bound, one minus them, lies above the line through its values at the
/// ends: that line is the min-tradeoff function.
#[derive(Debug, Clone, Serialize)]
pub struct MinTradeoff {
    /// The score the certificates were found at (where the line touches the bound).
    pub score: f64,
    /// The lowest score of the range: the game's lowest value.
    pub lowest: f64,
    /// The highest score of the range: the NPA level's verified upper bound.
    pub highest: f64,
    /// f at `lowest`.
    pub at_lowest: f64,
    /// f at `highest`.
    pub at_highest: f64,
    /// The gradient, bits per unit of score.
    pub slope: f64,
}

impl MinTradeoff {
    /// f(S).
    pub fn at(&self, score: f64) -> f64 {
        self.at_lowest + self.slope * (score - self.lowest)
    }
}

/// The game's value as a functional of the players' moments: (words and coefficients,
/// including the constant as the empty word).
pub fn value_terms(s: &Scenario, level: &Level) -> Result<MomentTerms> {
    let r = npa::relaxation(s, level)?;
    let mut terms: MomentTerms = vec![(EntropyWord::default(), r.problem.objective_constant)];
    for (k, &c) in r.problem.objective.iter().enumerate() {
        if c != 0.0 {
            terms.push((players_only(r.matrix.moments[k].clone()), c));
        }
    }
    Ok(terms)
}

/// The region's intervals as constraints on the players' moments: each full probability
/// `P(a|q) ≥ lower` and `−P(a|q) ≥ −upper` (as 1×1 blocks, whose slack at any point of the
/// region is at most `upper − lower`).
fn region_constraints(
    s: &Scenario,
    region: &BehaviourRegion,
) -> Result<Vec<(MomentTerms, f64, f64)>> {
    let nq: usize = s.question_radices().iter().product();
    let na: usize = s.answer_radices().iter().product();
    if region.lower.len() != nq * na || region.upper.len() != nq * na {
        return Err(Error::InvalidArgument(format!(
            "the behaviour has {} probabilities, the game's players need {}",
            region.lower.len(),
            nq * na
        )));
    }
    let cg = CollinsGisin::new(s);
    let mut rows = Vec::with_capacity(2 * nq * na);
    for q in 0..nq {
        for a in 0..na {
            let k = q * na + a;
            let (lo, hi) = (region.lower[k], region.upper[k]);
            if lo.partial_cmp(&hi) == Some(std::cmp::Ordering::Greater)
                || !lo.is_finite()
                || !hi.is_finite()
            {
                return Err(Error::InvalidArgument(format!(
                    "the behaviour's interval {k} is empty or not a number"
                )));
            }
            let (words, constant) = membership::full_probability_terms(s, &cg, q, a);
            let mut plus: MomentTerms = vec![(EntropyWord::default(), constant)];
            let mut minus: MomentTerms = vec![(EntropyWord::default(), -constant)];
            for (w, c) in words {
                plus.push((players_only(w.clone()), c));
                minus.push((players_only(w), -c));
            }
            rows.push((plus, lo, hi));
            rows.push((minus, -hi, -lo));
        }
    }
    Ok(rows)
}

/// The refusal of a behaviour (or region) that holds no quantum behaviour.
fn outside_quantum_set(level: &Level, distance: f64) -> Error {
    Error::InvalidArgument(if distance > 0.0 {
        format!(
            "the behaviour is outside the quantum set: every behaviour of the NPA relaxation at level {} differs from it by at least {} beyond its tolerance in some probability (verified)",
            level.name(),
            crate::numbers::num_sig(distance, 3)
        )
    } else {
        format!(
            "the behaviour is outside the quantum set: the entropy relaxations at NPA level {} prove that no quantum behaviour lies within its tolerance",
            level.name()
        )
    })
}

/// The objective of node t: Σ_e ⟨M̂_e (Z_e + Z_e* + (1 − t) Z_e* Z_e) + t Z_e Z_e*⟩, with
/// M̂_e = Σ_a T(e|a) M_a after preprocessing (M̂_e = M_e without).
fn node_objective(
    s: &Scenario,
    target: &Target,
    preprocessing: Preprocessing,
    t: f64,
) -> MomentTerms {
    let events = target.events(s);
    let d = events.len();
    let mut terms = Vec::new();
    for e in 0..d {
        let z = EveLetter {
            event: e as u32,
            adjoint: false,
        };
        let zs = EveLetter {
            event: e as u32,
            adjoint: true,
        };
        for (a, parts) in events.iter().enumerate() {
            let weight = preprocessing.channel(e, a, d);
            if weight == 0.0 {
                continue;
            }
            for (w, c) in event_terms(s, parts) {
                let c = c * weight;
                terms.push((with_letters(&w, &[z]), c));
                terms.push((with_letters(&w, &[zs]), c));
                terms.push((with_letters(&w, &[zs, z]), c * (1.0 - t)));
            }
        }
        terms.push((with_letters(&[], &[z, zs]), t));
    }
    terms
}

/// One node's share, before the sum.
struct NodeOutcome {
    bound: NodeBound,
    /// The verified upper bounds of the node's maximisation with the score constraint at the
    /// lowest and highest score (with a score constraint).
    certified_at_ends: Option<[f64; 2]>,
}

/// Most memory the dense systems of the nodes solved at once may take: nodes run side by side
/// only while two of them fit (2 GiB each at about 16,000 moments).
const PARALLEL_NODES_BYTES: f64 = 4.0 * (1u64 << 30) as f64;

/// Largest loss of a node's verified bound against its solver's own primal value that is kept
/// without trying the other solver (about 4e-5 bits at the first of 8 nodes, whose factor
/// w/(t ln 2) is the largest, 3.7).
const NODE_LOSS_KEPT: f64 = 1e-5;

/// The interior-point method's target accuracy on a node (relative gap and residuals). The
/// nodes' iterations typically stall between 2e-8 and 5e-8 and spent five more iterations (a
/// quarter of the run) before giving up on 1e-9; each node's loss from stopping at this
/// accuracy is below 1e-7 times its factor w/(t ln 2), under 1e-6 bits in all.
const NODE_TOLERANCE: f64 = 5e-8;

/// Most moments of a full relaxation that a stalled reduced node is also solved in full at
/// (CHSH's 383 take milliseconds; I3322's 1,905 about a second; CGLMP-3's 3,720 are left to
/// the orbit reduction, which did better there).
const FULL_RETRY_MOMENTS: usize = 2000;

/// Which form of a node's SDP a run solves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NodeForm {
    /// Reduced by the symmetries' affine reduction.
    Reduced,
    /// Reduced by orbits of words.
    Orbits,
    /// In full.
    Full,
}

/// Where a node's interior-point run starts ([`IpmOptions::start_scale`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NodeStart {
    /// Near the solutions' scale: the nodes' F0 carries the norm bounds' constants (‖F0‖ up
    /// to 45 on I3322's first node, whose optimum is near 1), which put the standard start
    /// about thirty times too far out. Measured on the check games: about a fifth fewer
    /// iterations (I3322 at 0.2: 312 instead of 381 over its 15 reduced nodes).
    Near,
    /// The method's standard start: a different path, tried when a node stalls from the
    /// other (where a run stalls depends on its path).
    Standard,
}

impl NodeStart {
    fn scale(self) -> f64 {
        match self {
            NodeStart::Near => 0.03,
            NodeStart::Standard => 1.0,
        }
    }
}

/// Most estimated seconds ([`backend::clarabel_cost`]) for which clarabel is tried on a node.
const CLARABEL_SECONDS: f64 = 5.0;

/// One node's SDP. With `auto`, the moment-matrix method first; it may stall short of its
/// tolerance on these relaxations (the small-t nodes are badly conditioned), and then its best
/// iterate still gives a verified bound (from its dual vector, every residual charged). That
/// bound is kept when it is within [`NODE_LOSS_KEPT`] of the iterate's own value; otherwise
/// clarabel is tried too and the smaller (better) verified bound kept: both are valid.
fn solve_node(
    problem: &SdpProblem,
    solver: Backend,
    stage: &str,
    start: NodeStart,
) -> Result<SdpSolution> {
    if !matches!(solver, Backend::Auto | Backend::MomentIpm) {
        return backend::solve(problem, solver, stage);
    }
    let options = IpmOptions {
        on_stall: StallPolicy::KeepBest,
        tolerance: NODE_TOLERANCE,
        start_scale: start.scale(),
        ..Default::default()
    };
    let ipm = moment_ipm::solve(problem, stage, options);
    if solver == Backend::MomentIpm {
        return ipm;
    }
    // clarabel's dense KKT system makes it slow on these relaxations (minutes at side 80):
    // tried only when its estimated time is modest.
    let clarabel_affordable = backend::clarabel_cost(problem).1 <= CLARABEL_SECONDS;
    match ipm {
        Ok(sol)
            if !clarabel_affordable
                || sol.certified - sol.primal <= NODE_LOSS_KEPT * (1.0 + sol.primal.abs()) =>
        {
            Ok(sol)
        }
        Ok(sol) => match backend::solve(problem, Backend::Clarabel, stage) {
            Ok(other) if other.certified < sol.certified => Ok(other),
            _ => Ok(sol),
        },
        Err(e) if clarabel_affordable => {
            backend::solve(problem, Backend::Clarabel, stage).map_err(|_| e)
        }
        Err(e) => Err(e),
    }
}

/// The entropy bound external solutions of the nodes prove
/// ([`PreparedHierarchy::bound_from_solutions`]).
#[derive(Debug, Clone, Serialize)]
pub struct ImportedEntropy {
    /// Lower bound on H(A|X=x*, E) in bits.
    pub bits: f64,
    /// Per node (t < 1).
    pub nodes: Vec<ImportedNode>,
}

/// One node's verified infimum from an external solution.
#[derive(Debug, Clone, Serialize)]
pub struct ImportedNode {
    /// The node t.
    pub t: f64,
    /// Its weight.
    pub weight: f64,
    /// The verified lower bound on the node's infimum (proven exactly when `exact` is given).
    pub infimum: f64,
    /// When asked: the exact upper bound on the node's SDP (minus the infimum's bound), as a
    /// fraction.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exact: Option<String>,
    /// The matrix of the solution file that proved it (`xMat` or `yMat`).
    pub matrix: String,
}

/// A constraint's rows in the node problems (see [`PreparedHierarchy::bound`]).
struct ConstraintRows {
    equalities: Vec<(MomentTerms, f64)>,
    at_least: Vec<(MomentTerms, f64, f64)>,
    tradeoff_ends: Option<(f64, f64, f64)>,
}

/// One node's objective, norm bound α and SDP ([`PreparedHierarchy::bound`]).
struct NodeAt {
    objective: Vec<(EntropyWord, f64)>,
    alpha: f64,
    node: NodeProblem,
}

/// One node's SDP, for export ([`PreparedHierarchy::node_sdps`]).
#[derive(Debug, Clone)]
pub struct NodeSdp {
    /// The node t.
    pub t: f64,
    /// Its Gauss–Radau weight.
    pub weight: f64,
    /// The SDP: maximise minus the node's objective.
    pub problem: SdpProblem,
    /// Each variable's name: `re` or `im`, the moment's word (players' projectors
    /// `player:question:answer`, the adversary's `Z<e>` and `Z<e>*`), and its bound.
    pub variables: Vec<String>,
}

/// A word in text: the players' projectors, then the adversary's letters.
fn word_text(w: &EntropyWord) -> String {
    let mut parts: Vec<String> = w
        .players
        .iter()
        .map(|p| format!("{}:{}:{}", p.player, p.setting, p.outcome))
        .collect();
    parts.extend(
        w.eve
            .iter()
            .map(|l| format!("Z{}{}", l.event, if l.adjoint { "*" } else { "" })),
    );
    parts.join(" ")
}

/// A verified lower bound on H(A|X=x*, E) (one part) or H(AB|X=x*, Y=y*, E) (two parts), in
/// bits, over every quantum strategy meeting `constraint`, by the Gauss–Radau hierarchy.
pub fn conditional_entropy(
    s: &Scenario,
    target: &Target,
    constraint: &EntropyConstraint,
    options: &EntropyOptions,
) -> Result<ConditionalEntropy> {
    conditional_entropy_reporting(s, target, constraint, options, &|_, _| {})
}

/// As [`conditional_entropy`], calling `solved(done, total)` as each node's relaxation is
/// finished (from the thread that solved it).
pub fn conditional_entropy_reporting(
    s: &Scenario,
    target: &Target,
    constraint: &EntropyConstraint,
    options: &EntropyOptions,
    solved: &(dyn Fn(usize, usize) + Sync),
) -> Result<ConditionalEntropy> {
    PreparedHierarchy::new(s, target, options)?.bound(constraint, solved)
}

/// What every constraint of one hierarchy shares (the rule, the level, the moment matrix, the
/// symmetry reduction, the NPA bound that scores are checked against, the game's value as a
/// functional), built once: a sweep of scores or a finite-size tangent search bounds many
/// constraints with it.
pub struct PreparedHierarchy<'a> {
    s: &'a Scenario,
    target: &'a Target,
    options: &'a EntropyOptions,
    rule: RadauRule,
    level: Level,
    matrix: EntropyMatrix,
    /// The reduction for score constraints, built on first use.
    reduction: std::sync::OnceLock<Option<EntropyReduction>>,
    /// For score constraints: the NPA level's verified bound and the value's moment terms, on
    /// first use.
    score_context: std::sync::OnceLock<(f64, MomentTerms)>,
}

impl<'a> PreparedHierarchy<'a> {
    /// Checks the request and builds what every constraint shares.
    pub fn new(
        s: &'a Scenario,
        target: &'a Target,
        options: &'a EntropyOptions,
    ) -> Result<PreparedHierarchy<'a>> {
        target.check(s)?;
        options.preprocessing.check()?;
        if options.preprocessing != Preprocessing::None && target.parts.len() != 1 {
            return Err(Error::InvalidArgument(
                "noisy preprocessing is for one player's key answer: leave out the second player"
                    .into(),
            ));
        }
        let (rule, level, matrix) = hierarchy_matrix(s, target, options)?;
        Ok(PreparedHierarchy {
            s,
            target,
            options,
            rule,
            level,
            matrix,
            reduction: std::sync::OnceLock::new(),
            score_context: std::sync::OnceLock::new(),
        })
    }

    /// The NPA level's verified bound and the value's terms (computed once).
    fn score_context(&self) -> Result<&(f64, MomentTerms)> {
        if let Some(c) = self.score_context.get() {
            return Ok(c);
        }
        let quantum = npa::npa_bound(self.s, &npa::NpaOptions::at(self.level.clone()))?;
        let terms = value_terms(self.s, &self.level)?;
        let _ = self.score_context.set((quantum.verified_upper, terms));
        Ok(self.score_context.get().expect("just set"))
    }

    /// The reduction for score constraints (built on first use).
    fn score_reduction(&self) -> Option<&EntropyReduction> {
        self.reduction
            .get_or_init(|| reduction_of(self.s, self.target, &self.matrix, self.options))
            .as_ref()
    }

    /// What one hierarchy with a score constraint is expected to cost.
    pub fn score_estimate(&self) -> EntropyEstimate {
        estimate_of(
            &self.matrix,
            self.level.clone(),
            &self.rule,
            self.options.field,
            self.score_reduction(),
        )
    }

    /// The constraint's rows in the node problems: equalities, "at least" functionals, and for
    /// a score the ends of the min-tradeoff line's range (lowest, highest, score). Checks first
    /// that some quantum behaviour meets the constraint.
    fn constraint_rows(&self, constraint: &EntropyConstraint) -> Result<ConstraintRows> {
        let (s, level) = (self.s, &self.level);
        let mut tradeoff_ends: Option<(f64, f64, f64)> = None;
        let (equalities, at_least) = match constraint {
            EntropyConstraint::Score(v) => {
                if !v.is_finite() {
                    return Err(Error::InvalidArgument(format!(
                        "the score {v} is not a finite number"
                    )));
                }
                // A score above every quantum behaviour's leaves nothing to bound: said here, so
                // that a solver's failure below is never mistaken for it (or the reverse).
                let (quantum_upper, value) = self.score_context()?;
                if *v > *quantum_upper {
                    return Err(Error::InvalidArgument(format!(
                        "the score {v} is above the quantum bound {} (NPA level {}): no quantum behaviour reaches it",
                        quantum_upper,
                        level.name()
                    )));
                }
                let (lowest, highest_value) = s.value_range();
                if *v < lowest - 1e-9 * (1.0 + lowest.abs()) {
                    return Err(Error::InvalidArgument(format!(
                        "the score {v} is below the game's lowest value {lowest}: no behaviour scores that little, so the bound would be about nothing"
                    )));
                }
                tradeoff_ends = Some((lowest, quantum_upper.min(highest_value), *v));
                (Vec::new(), vec![(value.clone(), *v, highest_value)])
            }
            EntropyConstraint::Region(region) => {
                // A region with no quantum behaviour would make every figure vacuous (the
                // relaxations are infeasible and their duals unbounded): proven here and refused.
                let distance = membership::region_distance(s, region, level, self.options.backend)?;
                if distance.proven_outside() {
                    return Err(outside_quantum_set(level, distance.verified_lower));
                }
                (Vec::new(), region_constraints(s, region)?)
            }
        };
        Ok(ConstraintRows {
            equalities,
            at_least,
            tradeoff_ends,
        })
    }

    /// The node at `t`: its objective, the norm bound α = 1/(2√(t(1 − t))) of the adversary's
    /// operators, and its SDP.
    fn node_at(
        &self,
        t: f64,
        equalities: &[(MomentTerms, f64)],
        at_least: &[(MomentTerms, f64, f64)],
    ) -> Result<NodeAt> {
        let alpha = 1.0 / (2.0 * (t * (1.0 - t)).sqrt());
        let objective = node_objective(self.s, self.target, self.options.preprocessing, t);
        let node = node_problem(
            &self.matrix,
            &objective,
            equalities,
            at_least,
            self.options.field,
            alpha,
        )?;
        Ok(NodeAt {
            objective,
            alpha,
            node,
        })
    }

    /// Each node's SDP (t < 1) under `constraint`, in full (no symmetry reduction), with a
    /// name for each variable, for export: what [`PreparedHierarchy::bound`] solves at each
    /// node, its verified infimum −(the SDP's maximum) entering the sum with the weight
    /// w/(t ln 2).
    pub fn node_sdps(&self, constraint: &EntropyConstraint) -> Result<Vec<NodeSdp>> {
        let rows = self.constraint_rows(constraint)?;
        let m = self.rule.nodes.len();
        let names: Vec<String> = self.matrix.moments.iter().map(word_text).collect();
        let mut out = Vec::with_capacity(m - 1);
        for (&t, &weight) in self.rule.nodes[..m - 1].iter().zip(&self.rule.weights) {
            let node = self.node_at(t, &rows.equalities, &rows.at_least)?.node;
            let bounds = &node.problem.variable_bounds;
            let mut variables = vec![String::new(); node.problem.variables];
            for (k, name) in names.iter().enumerate() {
                let re = node.real[k];
                variables[re] = format!("re {name} (|·| ≤ {:?})", bounds[re]);
                if let Some(im) = node.imaginary[k] {
                    variables[im] = format!("im {name} (|·| ≤ {:?})", bounds[im]);
                }
            }
            out.push(NodeSdp {
                t,
                weight,
                problem: node.problem,
                variables,
            });
        }
        Ok(out)
    }

    /// The entropy bound from the nodes' verified infima (t < 1, in the rule's order):
    /// Σ w/(t ln 2)·(1 + infimum), plus the node t = 1's floor, less the charge for rounding.
    pub fn node_sum(&self, infima: &[f64]) -> f64 {
        let (sum, charge) = self.node_sum_and_charge(infima);
        sum - charge
    }

    /// [`PreparedHierarchy::node_sum`] before its charge, and the charge: the sum's rounding,
    /// and the nodes' and weights' own (each within a few units in the last place of the exact
    /// rule; the quadrature tests check 1e-14), charged generously.
    fn node_sum_and_charge(&self, infima: &[f64]) -> (f64, f64) {
        let m = self.rule.nodes.len();
        let (mut sum, mut magnitude) = (0.0, 0.0);
        for ((&t, &w), infimum) in self.rule.nodes.iter().zip(&self.rule.weights).zip(infima) {
            let factor = w / (t * std::f64::consts::LN_2);
            sum += factor * (1.0 + infimum);
            magnitude += factor * (1.0 + infimum.abs());
        }
        let events = self.target.events(self.s).len();
        let last = self.rule.weights[m - 1] / std::f64::consts::LN_2
            * self.options.preprocessing.last_node_floor(events);
        (sum + last, 1e-12 * (magnitude + last))
    }

    /// The entropy bound that external solvers' solutions of the nodes' SDPs prove (SDPA
    /// output format, one per node in [`PreparedHierarchy::node_sdps`]'s order, each with the
    /// name of its source for errors): each verified
    /// on the node rebuilt here, then summed as [`PreparedHierarchy::bound`] sums its own.
    ///
    /// With `exact`, each node's bound is proven in exact rationals ([`crate::optim::exact`])
    /// and that bound is the one summed; the sum itself stays in floating point with its
    /// rounding charged, as the quadrature's nodes and weights are.
    pub fn bound_from_solutions(
        &self,
        constraint: &EntropyConstraint,
        solutions: &[(String, String)],
        exact: bool,
    ) -> Result<ImportedEntropy> {
        let nodes = self.node_sdps(constraint)?;
        if solutions.len() != nodes.len() {
            return Err(Error::InvalidArgument(format!(
                "{} solutions for {} nodes (t < 1)",
                solutions.len(),
                nodes.len()
            )));
        }
        let mut imported = Vec::with_capacity(nodes.len());
        for (k, (node, (source, text))) in nodes.iter().zip(solutions).enumerate() {
            let b = crate::optim::sdpa::import_dual(&node.problem, text, exact).map_err(
                |e| match e {
                    Error::Input { location, message } => Error::Input {
                        location,
                        message: format!("node {} (t = {:.6e}): {message}", k + 1, node.t),
                    }
                    .in_file(source),
                    other => other,
                },
            )?;
            imported.push(ImportedNode {
                t: node.t,
                weight: node.weight,
                infimum: -b.exact.as_ref().map_or(b.verified_upper, |e| e.rounded_up),
                exact: b.exact.map(|e| e.fraction),
                matrix: b.matrix,
            });
        }
        let infima: Vec<f64> = imported.iter().map(|n| n.infimum).collect();
        let events = self.target.events(self.s).len();
        let bits = self.node_sum(&infima);
        if imported.iter().any(|n| n.infimum > 0.0) || bits > (events as f64).log2() {
            return Err(Error::InvalidArgument(
                "the solutions prove that no quantum behaviour meets the constraint: every figure would be vacuous".into(),
            ));
        }
        Ok(ImportedEntropy {
            bits: bits.max(0.0),
            nodes: imported,
        })
    }

    /// A verified lower bound on the entropy under `constraint` (see [`conditional_entropy`]).
    pub fn bound(
        &self,
        constraint: &EntropyConstraint,
        solved: &(dyn Fn(usize, usize) + Sync),
    ) -> Result<ConditionalEntropy> {
        let (s, target, options) = (self.s, self.target, self.options);
        let (rule, level, matrix) = (&self.rule, &self.level, &self.matrix);
        let start = std::time::Instant::now();
        let events = target.events(s).len();
        let score_constraint = matches!(constraint, EntropyConstraint::Score(_));
        let reduction = if score_constraint {
            self.score_reduction()
        } else {
            None
        };
        let cost = estimate_of(matrix, level.clone(), rule, options.field, reduction);
        if !options.limits.force && cost.seconds > npa::SECONDS_LIMIT {
            return Err(Error::TooLarge {
                what: "the entropy hierarchy".into(),
                estimate: cost.describe(),
                hint: "choose a lower level, fewer nodes or fewer adversary words, or pass --force"
                    .into(),
            });
        }
        let ConstraintRows {
            equalities,
            at_least,
            tradeoff_ends,
        } = self.constraint_rows(constraint)?;
        let m = rule.nodes.len();
        let finished = std::sync::atomic::AtomicUsize::new(0);
        let node_at = |(&t, &w): (&f64, &f64)| -> Result<NodeOutcome> {
            let NodeAt {
                objective,
                alpha,
                node,
            } = self.node_at(t, &equalities, &at_least)?;
            let stage = format!("entropy relaxation at t = {t:.4}");
            // The smallest-t nodes are badly conditioned and a run may stall short of its
            // optimum, where depending on its path: a stalled node is solved again along other
            // paths, cheapest first, and the best verified bound kept (each is valid). First the
            // same problem from the standard start (without this retry the 50-score CHSH curve
            // averaged 1.3e-6 bits lower); then, for a reduced problem (whose stall can end
            // further from the optimum than the full one's: CGLMP-3 at 2.8, 1.7e-5 at
            // t = 0.0056, 6e-5 bits in all), the milder reduction by orbits of words (each
            // variable one moment, as in the full problem, which it matched or beat there at a
            // third of the full problem's cost), from the standard start too (CGLMP-3: 1.1432597
            // bits against 1.1432539 from the near one); last the full relaxation, when it is
            // cheap (CHSH at S = 2.333, first node: 2.4e-6).
            let attempt = |kind: NodeForm, start: NodeStart| -> Result<SdpSolution> {
                let backend = options.backend;
                match (kind, &reduction) {
                    (NodeForm::Reduced, Some(red)) => {
                        solve_node(&red.reduce(&node.problem), backend, &stage, start)
                            .and_then(|s| red.lift(&node.problem, s))
                    }
                    (NodeForm::Orbits, Some(red)) => {
                        let orbits = red.by_orbits();
                        solve_node(&orbits.reduce(&node.problem), backend, &stage, start)
                            .and_then(|s| orbits.lift(&node.problem, s))
                    }
                    _ => solve_node(&node.problem, backend, &stage, start),
                }
            };
            let first = if reduction.is_some() {
                NodeForm::Reduced
            } else {
                NodeForm::Full
            };
            let mut retries = Vec::new();
            // Only the interior-point method has a starting point to change.
            if matches!(options.backend, Backend::Auto | Backend::MomentIpm) {
                retries.push((first, NodeStart::Standard));
            }
            if reduction.is_some() {
                retries.push((NodeForm::Orbits, NodeStart::Standard));
                if matrix.moments.len() <= FULL_RETRY_MOMENTS {
                    retries.push((NodeForm::Full, NodeStart::Near));
                }
            }
            let mut solved_node = attempt(first, NodeStart::Near);
            for (kind, start) in retries {
                match &solved_node {
                    Ok(best) if best.status == SolveStatus::Stalled => {
                        if let Ok(other) = attempt(kind, start) {
                            if other.certified < best.certified {
                                solved_node = Ok(other);
                            }
                        }
                    }
                    // A failed first run (not an infeasible problem, which fails from any
                    // start) is tried once from the standard start, as before the near start.
                    Err(Error::Solver { status, .. })
                        if kind == first && status != &Some(SolveStatus::Infeasible) =>
                    {
                        if let Ok(other) = attempt(kind, start) {
                            solved_node = Ok(other);
                        }
                    }
                    _ => break,
                }
            }
            let sol = solved_node.map_err(|e| match (e, constraint) {
                (
                    Error::Solver {
                        status: Some(SolveStatus::Infeasible),
                        ..
                    },
                    EntropyConstraint::Region(_),
                ) => outside_quantum_set(level, 0.0),
                (other, _) => other,
            })?;
            // The same dual vector's verified bound with the score constraint moved to each end of
            // the range (see [`MinTradeoff`]).
            let mut at_ends = None;
            if let Some((lowest, highest, _)) = tradeoff_ends {
                let mut ends = [0.0; 2];
                for (end, out) in [lowest, highest].into_iter().zip(&mut ends) {
                    let moved: Vec<(MomentTerms, f64, f64)> = at_least
                        .iter()
                        .map(|(terms, _, most)| (terms.clone(), end, *most))
                        .collect();
                    let there = node_problem(
                        matrix,
                        &objective,
                        &equalities,
                        &moved,
                        options.field,
                        alpha,
                    )?;
                    *out = there.problem.assemble().certified_bound(&sol.z)?;
                }
                at_ends = Some(ends);
            }
            let done = finished.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            solved(done, m - 1);
            Ok(NodeOutcome {
                bound: NodeBound {
                    t,
                    weight: w,
                    norm_bound: alpha,
                    // The SDP maximised minus the objective: its verified upper bound is minus a
                    // verified lower bound on the infimum.
                    infimum: -sol.certified,
                    solver_value: -sol.dual,
                    status: sol.status,
                    iterations: sol.iterations,
                },
                certified_at_ends: at_ends,
            })
        };
        // The nodes are independent: solved side by side when two of them fit in memory at once
        // (each interior-point solve holds a dense matrix of side the number of moments), one after
        // the other otherwise. The sums below run in node order either way.
        let pairs = rule.nodes[..m - 1].iter().zip(&rule.weights[..m - 1]);
        let node_bytes = (matrix.moments.len() as f64).powi(2) * 8.0;
        let outcomes: Vec<NodeOutcome> = if node_bytes * 2.0 <= PARALLEL_NODES_BYTES {
            pairs
                .collect::<Vec<_>>()
                .into_par_iter()
                .map(node_at)
                .collect::<Result<_>>()?
        } else {
            pairs.map(node_at).collect::<Result<_>>()?
        };
        let mut terms = Vec::with_capacity(outcomes.len());
        let (mut at_ends, mut ends_magnitude) = ((0.0, 0.0), 0.0);
        for outcome in outcomes {
            let b = &outcome.bound;
            let factor = b.weight / (b.t * std::f64::consts::LN_2);
            if let Some([lowest, highest]) = outcome.certified_at_ends {
                at_ends.0 += factor * (1.0 - lowest);
                at_ends.1 += factor * (1.0 - highest);
                ends_magnitude += factor * (2.0 + lowest.abs() + highest.abs());
            }
            terms.push(outcome.bound);
        }
        let infima: Vec<f64> = terms.iter().map(|b| b.infimum).collect();
        let solver_values: Vec<f64> = terms.iter().map(|b| b.solver_value).collect();
        let bits = self.node_sum(&infima);
        let solver_bits = self.node_sum_and_charge(&solver_values).0;
        // The node at t = 1 contributes at least its floor (0 without preprocessing).
        let last = rule.weights[m - 1] / std::f64::consts::LN_2
            * options.preprocessing.last_node_floor(events);
        at_ends = (at_ends.0 + last, at_ends.1 + last);
        ends_magnitude += 2.0 * last;
        let most = (events as f64).log2();
        let min_tradeoff = tradeoff_ends.and_then(|(lowest, highest, score)| {
            let charge = 1e-12 * ends_magnitude;
            let (at_lowest, at_highest) = (at_ends.0 - charge, at_ends.1 - charge);
            (highest > lowest).then(|| MinTradeoff {
                score,
                lowest,
                highest,
                at_lowest,
                at_highest,
                slope: (at_highest - at_lowest) / (highest - lowest),
            })
        });
        // For any quantum behaviour meeting the constraint, bits ≤ H(A|X=x*, E) ≤ log₂ |A|. A node
        // whose verified infimum is positive proves its relaxation infeasible (every feasible point
        // extends with Z = 0, where the objective is 0), and a sum above log₂ |A| proves that no
        // quantum behaviour meets the constraint: either way every figure would be vacuous.
        let infeasible_node = terms.iter().any(|b| b.infimum > 0.0);
        if infeasible_node || bits > most {
            return Err(match constraint {
            EntropyConstraint::Region(_) => outside_quantum_set(level, 0.0),
            EntropyConstraint::Score(v) => Error::InvalidArgument(format!(
                "no quantum behaviour reaches the score {v}: the entropy relaxations prove it (a bound of {bits:.6} bits exceeds log₂ {events})"
            )),
        });
        }
        Ok(ConditionalEntropy {
        // H(A|E) of a classical A is at least 0, so a negative bound is replaced by 0.
        bits: bits.max(0.0),
        solver_bits,
        method: format!(
            "Gauss–Radau hierarchy (Brown, Fawzi & Fawzi 2024), {} nodes, NPA level {} with the adversary's operators{}",
            options.nodes,
            level.name(),
            match options.preprocessing {
                Preprocessing::None => String::new(),
                Preprocessing::Noisy { probability } => format!(
                    "; the answer after noisy preprocessing with probability {probability} (Ho et al. 2020)"
                ),
            }
        ),
        nodes: options.nodes,
        level: level.clone(),
        adversary: options.adversary,
        field: options.field,
        matrix_size: matrix.size(),
        preprocessing: options.preprocessing,
        symmetry: reduction.as_ref().map(|r| EntropySymmetry {
            order: r.order,
            full_moments: matrix.moments.len(),
            moments: r.moments,
        }),
        terms,
        min_tradeoff,
        seconds: start.elapsed().as_secs_f64(),
    })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{DMatrix, DVector};

    /// A small deterministic generator of numbers in [−1, 1).
    fn numbers(mut seed: u64) -> impl FnMut() -> f64 {
        move || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 52) as f64 - 1.0
        }
    }

    #[test]
    fn a_node_reduced_either_way_proves_what_the_full_node_proves() {
        // CHSH (expression) at S = 2.6, the default words, the node at t = 0.3: the full
        // relaxation, the affine reduction and the reduction by orbits, each dual checked on
        // the full relaxation, agree to the solvers' accuracy.
        let game = crate::formats::game::Game::from_spec(
            &crate::formats::game::families::chsh_expression(),
            "chsh-expression",
        )
        .unwrap();
        let s = &game.scenario;
        let target = Target {
            parts: vec![(0, 0)],
        };
        let options = EntropyOptions::default();
        let (_, level, matrix) = hierarchy_matrix(s, &target, &options).unwrap();
        let (t, score): (f64, f64) = (0.3, 2.6);
        let alpha = 1.0 / (2.0 * (t * (1.0 - t)).sqrt());
        let objective = node_objective(s, &target, Preprocessing::None, t);
        let at_least = vec![(value_terms(s, &level).unwrap(), score, 4.0)];
        let node = node_problem(
            &matrix,
            &objective,
            &[],
            &at_least,
            MomentField::Real,
            alpha,
        )
        .unwrap();
        let full = solve_node(&node.problem, Backend::Auto, "test", NodeStart::Near).unwrap();
        // From the standard start too: the same bound, in more iterations (18 against 15).
        let standard =
            solve_node(&node.problem, Backend::Auto, "test", NodeStart::Standard).unwrap();
        assert!(
            (standard.certified - full.certified).abs() < 1e-6,
            "{} against {}",
            standard.certified,
            full.certified
        );
        assert!(full.iterations < standard.iterations);
        let red = EntropyReduction::new(s, &target.parts, &matrix).expect("CHSH is reduced");
        let orbits = red.by_orbits();
        assert!(red.moments < orbits.moments && orbits.moments < matrix.moments.len());
        for (name, r) in [("affine", &red), ("orbits", &orbits)] {
            let sol = solve_node(
                &r.reduce(&node.problem),
                Backend::Auto,
                "test",
                NodeStart::Near,
            )
            .and_then(|sol| r.lift(&node.problem, sol))
            .unwrap();
            assert!(
                (sol.certified - full.certified).abs() < 1e-6,
                "{name}: {} against {}",
                sol.certified,
                full.certified
            );
            // The lifted moments are the full problem's, invariant and feasible to rounding.
            assert_eq!(sol.y.len(), matrix.moments.len());
        }
    }

    #[test]
    fn the_last_node_floor_holds_on_random_states_and_is_met_by_a_uniform_answer() {
        // 1 − Σ_e Tr(ρ_{E,e}² ρ_E⁻¹) ≥ 2q − dq²/(d − 1) for the symmetric channel, on random
        // classical-quantum states (Eve's dimension 3, d = 2, 3, 4 answers).
        let mut next = numbers(7);
        for d in [2usize, 3, 4] {
            for q in [0.0, 0.05, 0.3, 0.5, (d - 1) as f64 / d as f64, 1.0] {
                let noisy = Preprocessing::Noisy { probability: q };
                for _ in 0..20 {
                    let raw: Vec<DMatrix<f64>> = (0..d)
                        .map(|_| {
                            let a = DMatrix::from_fn(3, 2, |_, _| next());
                            &a * a.transpose()
                        })
                        .collect();
                    let total: DMatrix<f64> = raw.iter().sum();
                    let scale = total.trace();
                    let raw: Vec<DMatrix<f64>> = raw.iter().map(|r| r / scale).collect();
                    let inverse = (total / scale).try_inverse().unwrap();
                    let collision: f64 = (0..d)
                        .map(|e| {
                            let rho_e: DMatrix<f64> =
                                (0..d).map(|a| &raw[a] * noisy.channel(e, a, d)).sum();
                            (&rho_e * &rho_e * &inverse).trace()
                        })
                        .sum();
                    let floor = noisy.last_node_floor(d);
                    assert!(
                        1.0 - collision >= floor - 1e-10,
                        "d = {d}, q = {q}: {} < {floor}",
                        1.0 - collision
                    );
                }
            }
            // A uniform answer (q = (d − 1)/d) has ρ_{E,e} = ρ_E/d: the term is 1 − 1/d exactly.
            let uniform = Preprocessing::Noisy {
                probability: (d - 1) as f64 / d as f64,
            };
            assert!((uniform.last_node_floor(d) - (1.0 - 1.0 / d as f64)).abs() < 1e-15);
        }
        assert_eq!(Preprocessing::None.last_node_floor(3), 0.0);
        // A single answer has nothing to change to: the identity, no floor, the same error rate.
        let flip = Preprocessing::Noisy { probability: 0.3 };
        assert_eq!(flip.channel(0, 0, 1), 1.0);
        assert_eq!(flip.last_node_floor(1), 0.0);
        assert_eq!(flip.error_rate(0.0, 1), 0.0);
    }

    #[test]
    fn the_minimiser_lies_in_the_norm_ball_on_random_states() {
        // The relaxations constrain ⟨Z_e* Z_e⟩ and ⟨Z_e Z_e*⟩ by α² = 1/(4t(1 − t)), which is
        // valid because the minimiser Z of t ρ_E Z + (1 − t) Z ρ_e = −ρ_e (ρ_e ≤ ρ_E) has
        // ‖Z‖ ≤ α (module notes). Checked on random full-rank states: the Sylvester equation
        // solved through its Kronecker form, the norm from the singular values.
        let mut next = numbers(11);
        let mut worst: f64 = 0.0;
        for trial in 0..400 {
            let n = 2 + trial % 3;
            let d = 2 + trial % 2;
            let raw: Vec<DMatrix<f64>> = (0..d)
                .map(|_| {
                    let a = DMatrix::from_fn(n, n, |_, _| next());
                    let scale = (next() + 1.0).powi(3) + 1e-3;
                    &a * a.transpose() * scale + DMatrix::identity(n, n) * 1e-6
                })
                .collect();
            let total: DMatrix<f64> = raw.iter().sum();
            let trace = total.trace();
            let rho = total / trace;
            let t = 0.002 + 0.996 * (next() + 1.0) / 2.0;
            let alpha = 1.0 / (2.0 * (t * (1.0 - t)).sqrt());
            for part in &raw {
                let rho_e = part / trace;
                // vec(A Z B) = (Bᵀ ⊗ A) vec(Z), column-major.
                let system = DMatrix::identity(n, n).kronecker(&(&rho * t))
                    + rho_e.transpose().kronecker(&DMatrix::identity(n, n)) * (1.0 - t);
                let rhs = -DVector::from_column_slice(rho_e.as_slice());
                let z = system
                    .lu()
                    .solve(&rhs)
                    .expect("invertible for full-rank states");
                let z = DMatrix::from_column_slice(n, n, z.as_slice());
                let norm = z.singular_values().max();
                worst = worst.max(norm / alpha);
            }
        }
        assert!(worst <= 1.0 + 1e-9, "‖Z‖/α reached {worst}");
        // The bound is nearly met (measured 0.99974): it is the least that holds.
        assert!(worst > 0.99, "{worst}");
    }

    #[test]
    fn the_error_rate_after_preprocessing_is_the_tables() {
        // A symmetric binary table with error rate Q: after the flip, the table's error rate
        // is the one `error_rate` gives, and its rows still sum to the key's marginals.
        let (qber, flip) = (0.07, 0.2);
        let table = vec![
            vec![(1.0 - qber) / 2.0, qber / 2.0],
            vec![qber / 2.0, (1.0 - qber) / 2.0],
        ];
        let noisy = Preprocessing::Noisy { probability: flip };
        let after = noisy.apply_to_rows(&table);
        let differ = after[0][1] + after[1][0];
        assert!((differ - noisy.error_rate(qber, 2)).abs() < 1e-15);
        assert!(
            (noisy.error_rate(qber, 2) - (qber * (1.0 - flip) + (1.0 - qber) * flip)).abs() < 1e-15
        );
        // Three answers: an answer equal to the other player's differs with probability q, a
        // different one becomes equal with probability q/2.
        let third = Preprocessing::Noisy { probability: 0.3 };
        let t3: Vec<Vec<f64>> = (0..3)
            .map(|a| {
                (0..3)
                    .map(|b| if a == b { 0.9 / 3.0 } else { 0.05 / 3.0 })
                    .collect()
            })
            .collect();
        let after = third.apply_to_rows(&t3);
        let differ: f64 = (0..3)
            .flat_map(|a| (0..3).map(move |b| (a, b)))
            .filter(|(a, b)| a != b)
            .map(|(a, b)| after[a][b])
            .sum();
        assert!((differ - third.error_rate(0.1, 3)).abs() < 1e-15);
        let total: f64 = after.iter().flatten().sum();
        assert!((total - 1.0).abs() < 1e-15);
        assert!(matches!(
            Preprocessing::Noisy {
                probability: f64::NAN
            }
            .check(),
            Err(Error::InvalidArgument(_))
        ));
    }
}
