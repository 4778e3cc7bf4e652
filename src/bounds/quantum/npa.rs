//! Quantum upper bounds by the NPA hierarchy: the moments of a quantum strategy, indexed by a
//! generating set of operator words, form a positive semidefinite matrix; maximising the game's
//! value over all such matrices bounds every quantum strategy of any dimension from above.
//!
//! Levels ([`Level`]): `k` takes all words of length at most k; `1+joint` takes the words of
//! length at most 1 and the products of one operator for each of two or more players (the
//! intermediate level between 1 and 2); custom generating sets are lists of patterns such as
//! `1 A B AB AA`, where each letter names a player (A the first) and a pattern stands for all
//! non-degenerate words whose operators belong to those players in that order. Larger
//! generating sets give smaller or equal bounds.
//!
//! The bound reported as verified is [`crate::optim::sdp::Assembled::certified_bound`] of the solver's
//! dual vector: it holds for every quantum strategy even though the solver is a floating-point
//! method, because moments of projector products have modulus at most 1 and the moment
//! matrix of a normalised state has trace at most its size.

use std::collections::{BTreeMap, BTreeSet};
use std::time::Instant;

use serde::Serialize;

use super::symmetric::{self, Reduction, SymmetryChoice, SymmetryUse};
use super::words::{
    collins_gisin_word, moment_key, product, projectors_of, words_of_pattern, Projector, Word,
};
use crate::error::{Error, Result};
use crate::formats::certificate::{Certificate, CERTIFICATE_FORMAT};
use crate::limits::{human_seconds, Limits};
use crate::model::collins_gisin::CollinsGisin;
use crate::model::scenario::Scenario;
use crate::optim::backend::{self, Backend};
use crate::optim::first_order::{self, FirstOrderOptions, IterationProgress, WarmStart};
use crate::optim::sdp::{upper_index, AffineEntry, MatrixBlock, SdpProblem, SdpSolution};
use crate::optim::SolveStatus;

/// A level of the hierarchy: which words index the moment matrix. Written and serialised as its
/// name ([`Level::name`]): `2`, `1+joint`, `1 A B AB`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Level {
    /// All words of length at most k.
    Length(usize),
    /// Length at most 1 plus the products of one operator for each of two or more players.
    Joint,
    /// Patterns of players, e.g. `[[], [0], [1], [0, 1]]` for `1 A B AB`.
    Patterns(Vec<Vec<usize>>),
}

impl Level {
    /// Parses `2`, `1+joint`, or a pattern list like `1 A B AB AAB` (spaces or commas).
    pub fn parse(text: &str) -> Result<Level> {
        let t = text.trim();
        if let Ok(k) = t.parse::<usize>() {
            if k == 0 {
                return Err(Error::InvalidArgument(
                    "the NPA level must be at least 1".into(),
                ));
            }
            return Ok(Level::Length(k));
        }
        if t.eq_ignore_ascii_case("1+joint") {
            return Ok(Level::Joint);
        }
        let mut patterns = Vec::new();
        for token in t.split([' ', ',']).filter(|s| !s.is_empty()) {
            if token == "1" {
                patterns.push(Vec::new());
                continue;
            }
            let mut p = Vec::new();
            for c in token.chars() {
                if !c.is_ascii_uppercase() {
                    return Err(Error::InvalidArgument(format!(
                        "level `{text}`: expected a number, `1+joint`, or patterns of player letters like `1 A B AB` (found `{token}`)"
                    )));
                }
                p.push((c as u8 - b'A') as usize);
            }
            patterns.push(p);
        }
        if patterns.is_empty() {
            return Err(Error::InvalidArgument("the NPA level is empty".into()));
        }
        Ok(Level::Patterns(patterns))
    }

    /// The level as users write it (and as [`Level::parse`] reads it back).
    pub fn name(&self) -> String {
        match self {
            Level::Length(k) => k.to_string(),
            Level::Joint => "1+joint".into(),
            Level::Patterns(ps) => ps
                .iter()
                .map(|p| {
                    if p.is_empty() {
                        "1".to_string()
                    } else {
                        p.iter().map(|&i| (b'A' + i as u8) as char).collect()
                    }
                })
                .collect::<Vec<_>>()
                .join(" "),
        }
    }
}

impl std::fmt::Display for Level {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.name())
    }
}

impl Serialize for Level {
    fn serialize<S: serde::Serializer>(
        &self,
        serializer: S,
    ) -> std::result::Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.name())
    }
}

impl std::str::FromStr for Level {
    type Err = Error;
    fn from_str(text: &str) -> Result<Level> {
        Level::parse(text)
    }
}

/// What an NPA bound is computed with: the level, the SDP backend and the work limits.
#[derive(Debug, Clone)]
pub struct NpaOptions {
    /// Level of the hierarchy (default `1+joint`).
    pub level: Level,
    /// SDP backend (default: chosen by size, with fallback).
    pub backend: Backend,
    /// Whether the relaxation is reduced by the game's symmetries (default: when it has some).
    pub symmetry: SymmetryChoice,
    /// Tolerance and limits of the first-order method, when it runs.
    pub first_order: FirstOrderOptions,
    /// Refuse work above the default limits unless forced.
    pub limits: Limits,
}

impl Default for NpaOptions {
    fn default() -> Self {
        NpaOptions {
            level: Level::Joint,
            backend: Backend::Auto,
            symmetry: SymmetryChoice::Auto,
            first_order: FirstOrderOptions::default(),
            limits: Limits::default(),
        }
    }
}

/// What a solve is handed beyond its options: a receiver for the first-order method's progress
/// (iterations and the bound so far) and a starting point.
#[derive(Default, Clone, Copy)]
pub struct SolveControl<'a> {
    /// Receives the first-order method's progress every few seconds.
    pub progress: Option<IterationProgress<'a>>,
    /// A previous solution of the same relaxation (for instance a run stopped at its time
    /// limit) for the first-order method to start from.
    pub warm_start: Option<&'a SdpSolution>,
}

impl NpaOptions {
    /// The default options at `level`.
    pub fn at(level: Level) -> Self {
        NpaOptions {
            level,
            ..Default::default()
        }
    }
}

/// The moment matrix of a level: its generating words, its distinct moments (the variables),
/// and each upper-triangle entry.
pub struct MomentMatrix {
    /// Generating words, indexing rows and columns.
    pub words: Vec<Word>,
    /// Variable index → the moment's representative word.
    pub moments: Vec<Word>,
    /// Upper-triangle entries (see [`upper_index`]).
    pub entries: Vec<Entry>,
}

/// An entry of the moment matrix.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Entry {
    /// Zero (orthogonal projectors).
    Zero,
    /// The identity (the normalisation).
    Identity,
    /// A moment variable.
    Moment(usize),
}

fn projectors(s: &Scenario) -> Vec<Vec<Projector>> {
    s.parties()
        .iter()
        .enumerate()
        .map(|(i, p)| projectors_of(i, p.questions(), p.answers() - 1))
        .collect()
}

/// Most generating words ever enumerated, even with `force`: a moment matrix of this side has
/// 2.5·10⁹ entries, beyond any machine this tool runs on. Enumeration stops as soon as it is
/// passed, so the refusal itself costs little memory.
pub const WORD_CEILING: usize = 50_000;

fn too_many_words(level: &Level, what: String) -> Error {
    Error::TooLarge {
        what: format!("NPA level {}", level.name()),
        estimate: what,
        hint: format!(
            "choose a lower level (at most {WORD_CEILING} generating words can be built)"
        ),
    }
}

/// Generating words of a level, identity first, deduplicated. Refuses (before allocating
/// more) a level with more than [`WORD_CEILING`] words.
pub fn generating_words(s: &Scenario, level: &Level) -> Result<Vec<Word>> {
    let ops = projectors(s);
    let n = s.players();
    let mut set: BTreeSet<Word> = BTreeSet::new();
    // Products over players or pattern letters are estimated before they are enumerated.
    let ops_count: Vec<f64> = ops.iter().map(|o| o.len() as f64).collect();
    match level {
        Level::Joint => {
            let joint: f64 = ops_count.iter().map(|c| 1.0 + c).product();
            if joint > WORD_CEILING as f64 {
                return Err(too_many_words(
                    level,
                    format!("about {joint:.2e} generating words ({n} players)"),
                ));
            }
        }
        Level::Patterns(patterns) => {
            let work: f64 = patterns
                .iter()
                .map(|p| {
                    p.iter()
                        .map(|&i| ops_count.get(i).copied().unwrap_or(0.0))
                        .product::<f64>()
                })
                .sum();
            if work > WORD_CEILING as f64 * 20.0 {
                return Err(too_many_words(
                    level,
                    format!("the patterns expand to about {work:.2e} products"),
                ));
            }
        }
        Level::Length(_) => {}
    }
    match level {
        Level::Length(k) => {
            let all: Vec<Projector> = ops.iter().flatten().copied().collect();
            let mut frontier: Vec<Word> = vec![Vec::new()];
            set.insert(Vec::new());
            for len in 1..=*k {
                let mut next = BTreeSet::new();
                for w in &frontier {
                    for &p in &all {
                        if let Some(c) = super::words::canonical(w.iter().copied().chain([p])) {
                            if c.len() == len && !set.contains(&c) {
                                next.insert(c);
                                if set.len() + next.len() > WORD_CEILING {
                                    return Err(too_many_words(
                                        level,
                                        format!("more than {WORD_CEILING} generating words (stopped counting at length {len})"),
                                    ));
                                }
                            }
                        }
                    }
                }
                if next.is_empty() {
                    break;
                }
                set.extend(next.iter().cloned());
                frontier = next.into_iter().collect();
            }
        }
        Level::Joint => {
            set.insert(Vec::new());
            for p in ops.iter().flatten() {
                set.insert(vec![*p]);
            }
            // Players without operators (one answer) add no words: the masks run over the
            // others only (fewer than 60 of them, by the estimate above).
            let active: Vec<usize> = (0..n).filter(|&i| !ops[i].is_empty()).collect();
            for mask in 1usize..(1usize << active.len()) {
                if mask.count_ones() >= 2 {
                    let pattern: Vec<usize> = (0..active.len())
                        .filter(|k| mask >> k & 1 == 1)
                        .map(|k| active[k])
                        .collect();
                    set.extend(words_of_pattern(&pattern, &ops));
                }
            }
        }
        Level::Patterns(patterns) => {
            set.insert(Vec::new());
            for p in patterns {
                if let Some(&bad) = p.iter().find(|&&i| i >= n) {
                    return Err(Error::InvalidArgument(format!(
                        "level pattern names player {} but the game has {n}",
                        (b'A' + bad as u8) as char
                    )));
                }
                set.extend(words_of_pattern(p, &ops));
            }
        }
    }
    // Identity first, then by length, then lexicographically: a stable, readable order.
    let mut words: Vec<Word> = set.into_iter().collect();
    words.sort_by(|a, b| a.len().cmp(&b.len()).then(a.cmp(b)));
    Ok(words)
}

impl MomentMatrix {
    /// The moment matrix indexed by `words`: its distinct moments and entries.
    pub fn new(words: Vec<Word>) -> Self {
        let n = words.len();
        let mut index: BTreeMap<Word, usize> = BTreeMap::new();
        let mut moments = Vec::new();
        let mut entries = vec![Entry::Zero; n * (n + 1) / 2];
        for col in 0..n {
            for row in 0..=col {
                entries[upper_index(row, col)] = match product(&words[row], &words[col]) {
                    None => Entry::Zero,
                    Some(w) => {
                        let key = moment_key(w);
                        if key.is_empty() {
                            Entry::Identity
                        } else {
                            let next = moments.len();
                            let id = *index.entry(key.clone()).or_insert(next);
                            if id == next {
                                moments.push(key);
                            }
                            Entry::Moment(id)
                        }
                    }
                };
            }
        }
        MomentMatrix {
            words,
            moments,
            entries,
        }
    }

    /// Side of the matrix.
    pub fn size(&self) -> usize {
        self.words.len()
    }
}

/// The NPA relaxation of a game at a level, ready to solve or to check a certificate against.
pub struct Relaxation {
    /// The level.
    pub level: Level,
    /// The moment matrix.
    pub matrix: MomentMatrix,
    /// The SDP: maximise the value over moment matrices that are PSD.
    pub problem: SdpProblem,
    /// The problem reduced by the game's symmetries, when it is solved that way
    /// ([`sized_relaxation`] with [`SymmetryChoice::Auto`]).
    pub reduction: Option<Reduction>,
}

/// Builds the moment matrix and the SDP. Fails (as a usage error) when the level does not
/// contain a moment the game's value needs.
pub fn relaxation(s: &Scenario, level: &Level) -> Result<Relaxation> {
    // Expanding the value into Collins–Gisin coordinates costs Π (1 + k_i) over the players at
    // their last answer, per table entry: checked before it is done.
    let answers_last: Vec<usize> = s.parties().iter().map(|p| p.answers() - 1).collect();
    let mut expansion = 0.0;
    s.for_each_term(|_, ad, _| {
        expansion += ad
            .iter()
            .zip(&answers_last)
            .filter(|(a, last)| a == last)
            .map(|(_, &k)| 1.0 + k as f64)
            .product::<f64>();
    });
    if expansion > crate::bounds::nosignal::NONZERO_LIMIT {
        return Err(Error::TooLarge {
            what: format!("NPA level {}", level.name()),
            estimate: format!("the value expands into about {expansion:.2e} Collins–Gisin terms"),
            hint: "this game is too large for the NPA relaxation".into(),
        });
    }
    let matrix = MomentMatrix::new(generating_words(s, level)?);
    let cg = CollinsGisin::new(s);
    // The game's value in Collins–Gisin coordinates.
    let mut cg_objective = vec![0.0; cg.variables];
    let mut constant = s.offset();
    let mut terms = Vec::new();
    s.for_each_term(|qd, ad, c| {
        constant += c * cg.expand(qd, ad, &mut terms);
        for &(v, coef) in &terms {
            cg_objective[v] += c * coef;
        }
    });
    let mut index: BTreeMap<&Word, usize> = BTreeMap::new();
    for (i, m) in matrix.moments.iter().enumerate() {
        index.insert(m, i);
    }
    let mut objective = vec![0.0; matrix.moments.len()];
    for (v, &c) in cg_objective.iter().enumerate() {
        if c.abs() < 1e-15 {
            continue;
        }
        let (mask, q, a) = cg.describe(v);
        let word = collins_gisin_word(mask, &q, &a);
        let Some(&id) = index.get(&moment_key(word)) else {
            return Err(Error::InvalidArgument(format!(
                "level {} does not contain the products of one operator for each of {} players that this game's value needs; use `1+joint` or a higher level",
                level.name(),
                mask.count_ones()
            )));
        };
        objective[id] += c;
    }
    let size = matrix.size();
    let upper = matrix
        .entries
        .iter()
        .map(|e| match e {
            Entry::Zero => AffineEntry::default(),
            Entry::Identity => AffineEntry {
                constant: 1.0,
                terms: Vec::new(),
            },
            Entry::Moment(m) => AffineEntry {
                constant: 0.0,
                terms: vec![(*m, 1.0)],
            },
        })
        .collect();
    let problem = SdpProblem {
        variables: matrix.moments.len(),
        objective,
        objective_constant: constant,
        blocks: vec![MatrixBlock {
            size,
            upper,
            // Every diagonal entry is ⟨ψ|w†w|ψ⟩ ≤ 1 for a quantum strategy.
            trace_bound: size as f64,
        }],
        // |⟨ψ|w|ψ⟩| ≤ ‖w‖ ≤ 1 for a product of projectors.
        variable_bound: 1.0,
        ..Default::default()
    };
    Ok(Relaxation {
        level: level.clone(),
        matrix,
        problem,
        reduction: None,
    })
}

/// Rough cost of a solve. clarabel's KKT system carries the PSD cone as a dense block of side
/// n(n+1)/2, factorised at each of about 15 iterations; the moment-matrix method factorises the
/// m×m Schur complement (m moments) and assembles it in about 4n⁴ operations, about 30 times.
#[derive(Debug, Clone, Serialize)]
pub struct NpaEstimate {
    /// Side of the moment matrix.
    pub matrix_size: usize,
    /// Variables of the SDP solved (distinct moments, or their orbits when reduced).
    pub moments: usize,
    /// Estimated seconds and memory with the solver that would run.
    pub seconds: f64,
    /// Estimated memory with the solver that would run.
    pub memory_bytes: f64,
    /// clarabel's estimated time.
    pub clarabel_seconds: f64,
    /// clarabel's estimated memory.
    pub clarabel_memory_bytes: f64,
    /// The moment-matrix method's estimated time.
    pub ipm_seconds: f64,
    /// The moment-matrix method's estimated memory.
    pub ipm_memory_bytes: f64,
    /// The first-order method's estimated time for [`FIRST_ORDER_PLANNED_ITERATIONS`].
    pub first_order_seconds: f64,
    /// The first-order method's estimated memory (nothing of size m²).
    pub first_order_memory_bytes: f64,
    /// The solver the estimate is for (`auto` resolved by [`automatic_backend`], except that
    /// `auto` without the first-order method stays `auto`: the interior-point method or
    /// clarabel, chosen when the problem is assembled).
    pub solver: Backend,
}

/// Flop rate of the dense block factorisation, measured on the project machine (I3322 level 3:
/// 88×88, 15 iterations, 189 s).
const FLOPS_PER_SECOND: f64 = 1.6e9;

/// Measured rates of the moment-matrix method on the project machine (I3322 level 4: m = 4491,
/// n = 244, 30 iterations in 25 s): dense Cholesky and Schur assembly.
const IPM_CHOLESKY_FLOPS: f64 = 3e10;
const IPM_ASSEMBLY_FLOPS: f64 = 1e10;

/// Measured seconds per iteration of the first-order method on the project machine: about
/// `1e-10·n³` per block of side n (eigendecomposition and products) plus `5e-7` per row of the
/// assembled problem (vectors, acceleration). I3322 level 4 (n = 244, 29,890 rows): 17 ms;
/// level 5 (n = 628, 197,506 rows): 125 ms; a random 4×4 game at `1+joint` (n = 169): 7 ms.
const FIRST_ORDER_SECONDS_PER_CUBE: f64 = 1e-10;
const FIRST_ORDER_SECONDS_PER_ROW: f64 = 5e-7;

/// Iterations the time estimate of the first-order method plans for. It is a planning figure,
/// not a promise: well-posed problems reach 1e-9 in about 800–1,200 (a random 4×4 game at
/// `1+joint`: 833; CGLMP d=4: 1,137), degenerate ones converge more slowly and stop at their
/// limit with a looser verified bound.
pub const FIRST_ORDER_PLANNED_ITERATIONS: f64 = 2000.0;

/// Above this estimated memory the interior-point method is not chosen by `auto`.
pub const IPM_MEMORY_CEILING: f64 = 4.0 * (1u64 << 30) as f64;
/// `auto` takes the first-order method when the interior-point method's estimate is above
/// this many seconds and this many times the first-order method's.
const FIRST_ORDER_SECONDS_THRESHOLD: f64 = 120.0;
/// How much the interior-point estimate overshoots the measured time on full problems (2.4–4.7×
/// on six random two-player games from 3×4 to 6×3 at `1+joint`, BENCHMARKS.md); the race below
/// uses the estimate divided by this.
const IPM_ESTIMATE_OVERSHOOT: f64 = 3.5;
/// How much the first-order estimate (planned for [`FIRST_ORDER_PLANNED_ITERATIONS`]) overshoots
/// the measured time on full problems: 5–18× on the same six random games, magic square and
/// CHSH ×2 (400–950 iterations); 2.5–3.4× on CGLMP d = 5, 6 without symmetry (850–1,400
/// iterations), where the interior-point method is the faster.
const FIRST_ORDER_ESTIMATE_OVERSHOOT: f64 = 8.0;
/// Full problems the interior-point method is expected to need at least this many seconds on
/// are raced when the first-order method is expected to be faster (below, the interior-point
/// method is quick and more accurate).
const RACE_FROM_SECONDS: f64 = 0.3;
/// The first-order method goes on while its forecast total stays below this multiple of the
/// interior-point method's expected time. Its convergence is irregular (plateaus ended by a
/// sudden drop when the acceleration finds the fixed point), so the forecast only catches runs
/// far off their expected pace: it is first made at a quarter of this allowance, which bounds
/// the cost of a lost race.
const RACE_SHARE: f64 = 2.0;
const FIRST_ORDER_ADVANTAGE: f64 = 8.0;

/// What `auto` runs for a relaxation, from the estimates: the first-order method when the
/// interior-point method would not fit in [`IPM_MEMORY_CEILING`], or would take over two
/// minutes and eight times longer (both estimates overshoot; the interior-point one by about 3.7× on a random 4×4 game and on CGLMP d=8); otherwise `auto` stays (the interior-point method or
/// clarabel, by [`backend::choose`], with fallback). Reduced problems keep the
/// interior-point method unless it does not fit: their blocks are small.
pub fn automatic_backend(r: &Relaxation) -> Backend {
    estimate_for(r, Backend::Auto).solver
}

fn automatic_backend_from(
    ipm_seconds: f64,
    ipm_memory_bytes: f64,
    first_order_seconds: f64,
    reduced: bool,
) -> Backend {
    let too_big = ipm_memory_bytes > IPM_MEMORY_CEILING;
    let too_slow = ipm_seconds > FIRST_ORDER_SECONDS_THRESHOLD
        && ipm_seconds > FIRST_ORDER_ADVANTAGE * first_order_seconds;
    if too_big || (too_slow && !reduced) {
        Backend::FirstOrder
    } else {
        Backend::Auto
    }
}

/// Whether `auto` starts a full problem with the first-order method (when the interior-point
/// method is expected to take at least 0.3 s and longer than it), and if so the
/// seconds after which the first-order run gives up if its forecast exceeds them. Reduced
/// problems, and problems [`automatic_backend`] sends to the first-order method outright, are
/// not raced.
pub fn first_order_race(r: &Relaxation) -> Option<f64> {
    if r.reduction.is_some() || automatic_backend(r) != Backend::Auto {
        return None;
    }
    let ipm_expected = estimate_for(r, Backend::MomentIpm).seconds / IPM_ESTIMATE_OVERSHOOT;
    let first_order_expected =
        estimate_for(r, Backend::FirstOrder).seconds / FIRST_ORDER_ESTIMATE_OVERSHOOT;
    (ipm_expected >= RACE_FROM_SECONDS && first_order_expected < ipm_expected)
        .then_some(RACE_SHARE * ipm_expected)
}

/// The estimate with the backend `auto` would run first.
pub fn estimate(r: &Relaxation) -> NpaEstimate {
    estimate_for(r, Backend::Auto)
}

/// The moment-matrix method's estimated seconds for `moments` variables and a matrix of side
/// `side` (the formula of [`estimate_for`] for a full problem).
pub fn ipm_seconds_estimate(moments: f64, side: f64) -> f64 {
    30.0 * (moments.powi(3) / 3.0 / IPM_CHOLESKY_FLOPS + 4.0 * side.powi(4) / IPM_ASSEMBLY_FLOPS)
}

/// The estimate with the given backend.
pub fn estimate_for(r: &Relaxation, solver: Backend) -> NpaEstimate {
    let n = r.matrix.size() as f64;
    let d = n * (n + 1.0) / 2.0;
    // A reduced problem has fewer variables, each spread over more matrix entries.
    let (m, assembly) = match &r.reduction {
        Some(red) => (red.summary.moments as f64, red.assembly_flops),
        None => (r.matrix.moments.len() as f64, 4.0 * n.powi(4)),
    };
    let clarabel_seconds = 15.0 * d * d * d / 3.0 / FLOPS_PER_SECOND;
    let clarabel_memory_bytes = 8.0 * d * d * 2.0;
    let ipm_seconds = 30.0 * (m * m * m / 3.0 / IPM_CHOLESKY_FLOPS + assembly / IPM_ASSEMBLY_FLOPS);
    let ipm_memory_bytes = 8.0 * m * m * 3.0 + 8.0 * n * n * 12.0;
    let problem = match &r.reduction {
        Some(red) => &red.problem,
        None => &r.problem,
    };
    let sides = problem.blocks.iter().map(|b| b.size as f64);
    let rows = problem.conic_rows() as f64;
    let first_order_seconds = FIRST_ORDER_PLANNED_ITERATIONS
        * (FIRST_ORDER_SECONDS_PER_CUBE * sides.clone().map(|n| n.powi(3)).sum::<f64>()
            + FIRST_ORDER_SECONDS_PER_ROW * rows);
    // The accelerated state and its history (2·rows each, twice the memory), a dozen work
    // vectors of the rows, the sparse constraint matrix, and per block a few dense matrices.
    let first_order_memory_bytes = 8.0
        * (rows * (4.0 * first_order::ANDERSON_MEMORY as f64 + 16.0)
            + 6.0 * sides.map(|n| n * n).sum::<f64>());
    let solver = match solver {
        Backend::Auto => automatic_backend_from(
            ipm_seconds,
            ipm_memory_bytes,
            first_order_seconds,
            r.reduction.is_some(),
        ),
        other => other,
    };
    let (seconds, memory_bytes) = match solver {
        Backend::Clarabel => (clarabel_seconds, clarabel_memory_bytes),
        Backend::FirstOrder => (first_order_seconds, first_order_memory_bytes),
        _ => (ipm_seconds, ipm_memory_bytes),
    };
    NpaEstimate {
        matrix_size: r.matrix.size(),
        moments: m as usize,
        seconds,
        memory_bytes,
        clarabel_seconds,
        clarabel_memory_bytes,
        ipm_seconds,
        ipm_memory_bytes,
        first_order_seconds,
        first_order_memory_bytes,
        solver,
    }
}

/// The result of one NPA solve.
#[derive(Debug, Clone, Serialize)]
pub struct NpaBound {
    /// The level solved.
    pub level: Level,
    /// The solver's dual objective: an upper bound up to solver tolerance.
    pub quantum_upper: f64,
    /// A bound every quantum strategy respects, whatever the solver's errors.
    pub verified_upper: f64,
    /// The solver's primal objective (the relaxation's value from below).
    pub primal: f64,
    /// Side of the moment matrix.
    pub matrix_size: usize,
    /// Distinct moments.
    pub moments: usize,
    /// How the solver ended (solved or almost solved).
    pub status: SolveStatus,
    /// Solver iterations.
    pub iterations: u32,
    /// Wall-clock time, building included.
    pub seconds: f64,
    /// Time spent building the relaxation.
    pub build_seconds: f64,
    /// Relative duality gap and residual at the returned point (in JSON `duality_gap`: not a
    /// gap between bounds).
    #[serde(rename = "duality_gap")]
    pub gap: f64,
    /// Largest relative residual at the returned point.
    pub residual: f64,
    /// The backend that produced the bound.
    pub solver: Backend,
    /// How the relaxation was reduced by the game's symmetries (`None`: solved in full).
    pub symmetry: Option<SymmetryUse>,
    /// The solution, with the dual vector for a certificate.
    #[serde(skip)]
    pub solution: Option<SdpSolution>,
}

impl NpaBound {
    /// Whether the solver reached its tolerances (solved or almost solved), as opposed to
    /// stopping at an iteration or time limit with only its verified bound to show.
    pub fn converged(&self) -> bool {
        self.status.converged()
    }
}

/// Largest moment matrix built without `force` (its side); larger ones are refused before
/// anything is allocated.
pub const MAX_WORDS: usize = 5000;

/// Largest estimated solve time accepted without `force`.
pub const SECONDS_LIMIT: f64 = 3600.0;
/// Largest estimated memory accepted without `force`.
pub const MEMORY_LIMIT: f64 = 16.0 * (1u64 << 30) as f64;

/// Builds the relaxation at `level` after checking its size: the number of generating words
/// before the matrix is built, then the time and memory estimate of `solver` (for `auto`, of
/// both solvers it may use, since the fallback must fit too). Refuses with the estimate unless
/// `force`.
pub fn sized_relaxation(s: &Scenario, options: &NpaOptions) -> Result<(Relaxation, NpaEstimate)> {
    let (level, force, solver) = (&options.level, options.limits.force, options.backend);
    let words = generating_words(s, level)?.len();
    if words > MAX_WORDS && !force {
        let n = words as f64;
        return Err(Error::TooLarge {
            what: format!("NPA level {}", level.name()),
            estimate: format!(
                "a {words}×{words} moment matrix ({:.1e} entries) with up to {:.1e} moments",
                n * n,
                n * (n + 1.0) / 2.0
            ),
            hint: "choose a lower level, or pass --force".into(),
        });
    }
    let mut r = relaxation(s, level)?;
    if options.symmetry == SymmetryChoice::Auto {
        r.reduction = symmetric::reduce(s, &r.matrix.words, &r.matrix.moments, &r.problem);
        // A reduction that the estimate says costs more than the full problem (few symmetries,
        // wide merged variables) is not used.
        if let Some(red) = r.reduction.take() {
            let full = estimate_for(&r, solver).seconds;
            r.reduction = Some(red);
            if estimate_for(&r, solver).seconds > full {
                r.reduction = None;
            }
        }
    }
    let est = estimate_for(&r, solver);
    if !force && (est.seconds > SECONDS_LIMIT || est.memory_bytes > MEMORY_LIMIT) {
        return Err(Error::TooLarge {
            what: format!("NPA level {}", level.name()),
            estimate: format!(
                "moment matrix {}×{} with {} moments: about {} and {:.1} GiB with the chosen solver",
                est.matrix_size,
                est.matrix_size,
                est.moments,
                human_seconds(est.seconds),
                est.memory_bytes / (1u64 << 30) as f64
            ),
            hint: "choose a lower level, or pass --force".into(),
        });
    }
    Ok((r, est))
}

/// Builds (after the size check of [`sized_relaxation`]) and solves the relaxation.
pub fn npa_bound(s: &Scenario, options: &NpaOptions) -> Result<NpaBound> {
    npa_bound_with(s, options, &SolveControl::default())
}

/// [`npa_bound`] with progress reports and a starting point ([`SolveControl`]).
pub fn npa_bound_with(
    s: &Scenario,
    options: &NpaOptions,
    control: &SolveControl,
) -> Result<NpaBound> {
    let start = Instant::now();
    let (r, _) = sized_relaxation(s, options)?;
    solve_relaxation(&r, options, control, start.elapsed().as_secs_f64())
}

/// Solves a relaxation already built (and size-checked, see [`sized_relaxation`]) with the
/// backend and first-order settings of `options`; `build_seconds` is the time its building
/// took, added to the reported time.
pub fn solve_relaxation(
    r: &Relaxation,
    options: &NpaOptions,
    control: &SolveControl,
    build_seconds: f64,
) -> Result<NpaBound> {
    let start = Instant::now();
    let stage = format!("NPA level {}", r.level.name());
    let solver = match options.backend {
        Backend::Auto => automatic_backend(r),
        other => other,
    };
    let problem = match &r.reduction {
        Some(red) => &red.problem,
        None => &r.problem,
    };
    let sol = match solver {
        Backend::FirstOrder => {
            let rows = problem.conic_rows();
            // A start from another problem (another level, or the full problem when this one
            // is reduced) is ignored.
            let warm = control.warm_start.and_then(|w| {
                (w.y.len() == problem.variables && w.z.len() == rows)
                    .then_some(WarmStart { y: &w.y, z: &w.z })
            });
            first_order::solve(
                problem,
                &stage,
                &options.first_order,
                warm,
                control.progress,
            )?
        }
        // The reduced problem's blocks are small and dense, where the work estimate of
        // `backend::choose` favours clarabel although it often stops at "almost solved"; the
        // moment-matrix method goes first for `auto`, with the usual choice as the fallback.
        Backend::Auto if r.reduction.is_some() => {
            backend::solve(problem, Backend::MomentIpm, &stage)
                .or_else(|_| backend::solve(problem, Backend::Auto, &stage))?
        }
        // A full problem the interior-point method would take a while on, and the first-order
        // method is expected to solve sooner: the first-order method goes first, and gives up
        // as soon as its own convergence forecasts that it would take much longer than the
        // interior-point method (see `RACE_SHARE`); then the usual choice runs.
        Backend::Auto => {
            let first = first_order_race(r).map(|allowed| {
                let o = FirstOrderOptions {
                    give_up_beyond_seconds: allowed,
                    ..options.first_order
                };
                first_order::solve(problem, &stage, &o, None, control.progress)
            });
            // A run stopped at the user's own budget reports what it has reached, as the
            // first-order method always does; one that gave up leaves the problem to the other.
            let budget_reached = |sol: &SdpSolution| {
                sol.status == SolveStatus::TimeLimit && options.first_order.max_seconds.is_finite()
            };
            match first {
                Some(Ok(sol)) if sol.status == SolveStatus::Solved || budget_reached(&sol) => sol,
                _ => backend::solve(problem, Backend::Auto, &stage)?,
            }
        }
        other => backend::solve(problem, other, &stage)?,
    };
    let sol = match &r.reduction {
        Some(red) => lift(r, red, sol)?,
        None => sol,
    };
    let converged = sol.status.converged();
    Ok(NpaBound {
        level: r.level.clone(),
        // A run stopped early has no dual value worth the name: only the verified bound.
        quantum_upper: if converged { sol.dual } else { sol.certified },
        verified_upper: sol.certified,
        primal: sol.primal,
        matrix_size: r.matrix.size(),
        moments: r.matrix.moments.len(),
        status: sol.status,
        iterations: sol.iterations,
        seconds: build_seconds + start.elapsed().as_secs_f64(),
        build_seconds,
        gap: sol.gap,
        residual: sol.residual,
        solver: sol.solver,
        symmetry: r.reduction.as_ref().map(|red| red.summary.clone()),
        solution: Some(sol),
    })
}

/// A reduced problem's solution as a solution of the full one: the moments copied from their
/// orbits, the dual averaged over the group, and the verified bound recomputed from that dual
/// on the full problem (see [`symmetric`]'s notes), so the reduction is not trusted.
fn lift(r: &Relaxation, red: &Reduction, reduced: SdpSolution) -> Result<SdpSolution> {
    let y = red.lift_primal(&reduced.y);
    let z = red.lift_dual(r.matrix.size(), &reduced.z);
    let assembled = r.problem.assemble();
    // The averaged dual's residual is at the solver's accuracy but summed over every moment of
    // the full problem; the same dual moved onto the residual-free subspace often proves more.
    let (certified, z) = assembled.best_certified_bound(&z)?;
    Ok(SdpSolution {
        primal: r.problem.primal_value(&y),
        dual: assembled.dual_value(&z),
        certified,
        y,
        z,
        ..reduced
    })
}

/// The smallest standard level whose moments contain the game's value, and the largest one
/// (among 1, 1+joint, 2, 3) that stays cheap; `bounds` uses the latter.
pub fn default_level(s: &Scenario) -> Result<Level> {
    let candidates = [
        Level::Length(1),
        Level::Joint,
        Level::Length(2),
        Level::Length(3),
    ];
    let mut chosen = None;
    for level in candidates {
        // Count the generating words first: building a matrix that could never be solved
        // would itself exhaust memory.
        let words = generating_words(s, &level)?.len();
        if words > MAX_WORDS {
            break;
        }
        let Ok(r) = relaxation(s, &level) else {
            continue;
        };
        let est = estimate(&r);
        if chosen.is_none() || est.seconds <= 2.0 {
            chosen = Some((level, est));
        } else {
            break;
        }
    }
    chosen.map(|(l, _)| l).ok_or_else(|| {
        Error::InvalidArgument("no standard NPA level contains this game's value".into())
    })
}

/// The dual certificate of a bound (`None` when the bound carries no dual solution).
pub fn certificate(game: &str, s: &Scenario, bound: &NpaBound) -> Option<Certificate> {
    let sol = bound.solution.as_ref()?;
    // The claim is the larger of the floating verified bound and the exact one, so that the
    // certificate passes both checks (they differ by rounding charges, about 1e-13).
    let exact = relaxation(s, &bound.level)
        .ok()
        .and_then(|r| crate::optim::exact::exact_bound(&r.problem, &sol.z).ok())
        .map_or(f64::NEG_INFINITY, |e| e.rounded_up);
    Some(Certificate {
        format: CERTIFICATE_FORMAT.into(),
        game: game.into(),
        game_fingerprint: s.fingerprint(),
        level: bound.level.name(),
        matrix_size: bound.matrix_size,
        moments: bound.moments,
        verified_upper: bound.verified_upper.max(exact),
        dual: sol.z.clone(),
    })
}

/// The plain certificate of an NPA bound (see [`crate::formats::plain_certificate`]): the
/// relaxation rebuilt in full, the bound proven exactly from the solution's dual, the game's
/// table and the generating words written out.
pub fn plain_certificate(
    game: &str,
    s: &Scenario,
    bound: &NpaBound,
) -> Result<crate::formats::plain_certificate::PlainCertificate> {
    let sol = bound
        .solution
        .as_ref()
        .ok_or_else(|| Error::solver("NPA", "no dual solution to write"))?;
    let r = relaxation(s, &bound.level)?;
    let (exact, mut proofs) = crate::optim::exact::exact_bound_with_proofs(&r.problem, &sol.z)?;
    let proof = proofs
        .pop()
        .filter(|_| proofs.is_empty())
        .ok_or_else(|| Error::solver("NPA", "expected one moment matrix"))?;
    Ok(crate::formats::plain_certificate::PlainCertificate {
        game: game.to_string(),
        players: s
            .parties()
            .iter()
            .map(|p| (p.name.clone(), p.questions(), p.answers()))
            .collect(),
        offset: s.offset(),
        table: s.objective().to_vec(),
        words: r
            .matrix
            .words
            .iter()
            .map(|w| {
                w.iter()
                    .map(|p| (p.player as usize, p.setting as usize, p.outcome as usize))
                    .collect()
            })
            .collect(),
        // A hair above the exact bound (1e-12 relative), so that an independent exact check
        // that rebuilds the value from the table (summing it in another order) meets it.
        claim: {
            let claim = (exact.rounded_up + 1e-12 * (1.0 + exact.rounded_up.abs())).next_up();
            let q = num_rational::BigRational::from_float(claim)
                .ok_or_else(|| Error::solver("NPA", "the exact bound is not finite"))?;
            format!("{}/{}", q.numer(), q.denom())
        },
        z_bits: proof.z_bits,
        z: proof.z,
        l_bits: proof.l_bits,
        l: proof.l,
        rho: proof.rho,
    })
}

/// The relaxation at `level` without any symmetry reduction, size-checked first (for
/// certificates, exports and objectives of our own that need every moment).
pub fn full_relaxation(s: &Scenario, level: &Level, limits: &Limits) -> Result<Relaxation> {
    sized_relaxation(
        s,
        &NpaOptions {
            level: level.clone(),
            symmetry: SymmetryChoice::Off,
            limits: *limits,
            ..Default::default()
        },
    )
    .map(|(r, _)| r)
}

/// The full relaxation at `level` in the SDPA sparse format, and its moment map (one line per
/// variable: its 1-based index in the SDPA file and the operator word, `player:question:answer`
/// projectors left to right).
pub fn sdpa_export(s: &Scenario, level: &Level, limits: &Limits) -> Result<(String, String)> {
    let r = full_relaxation(s, level, limits)?;
    let sdpa = crate::optim::sdpa::SdpaProblem::from_problem(&r.problem);
    let comment = vec![
        format!(
            "bellgap NPA relaxation, level {}: maximise c0 + Σ b_i y_i is minimise Σ c_i x_i with c = −b; c0 = {:?}",
            level.name(),
            r.problem.objective_constant
        ),
        "every variable is a moment of projectors, in [−1, 1]; the moment map is in the .words file".into(),
    ];
    let mut words =
        String::from("# variable (1-based) and its word, player:question:answer projectors\n");
    for (i, w) in r.matrix.moments.iter().enumerate() {
        let text: Vec<String> = w
            .iter()
            .map(|p| format!("{}:{}:{}", p.player, p.setting, p.outcome))
            .collect();
        words.push_str(&format!("{} {}\n", i + 1, text.join(" ")));
    }
    Ok((sdpa.to_text(&comment), words))
}

/// A dual solution written by an external solver (SDPA output format), checked on our own
/// relaxation at `level` (see [`crate::optim::sdpa::import_dual`]).
#[derive(Debug, Clone, Serialize)]
pub struct SdpaImport {
    /// The level.
    pub level: Level,
    /// The bound it proves.
    #[serde(flatten)]
    pub bound: crate::optim::sdpa::ImportedBound,
}

/// Checks an SDPA output's dual on the relaxation at `level` (see [`SdpaImport`]).
pub fn sdpa_import(
    s: &Scenario,
    level: &Level,
    text: &str,
    exact: bool,
    limits: &Limits,
) -> Result<SdpaImport> {
    let r = full_relaxation(s, level, limits)?;
    Ok(SdpaImport {
        level: level.clone(),
        bound: crate::optim::sdpa::import_dual(&r.problem, text, exact)?,
    })
}

/// Result of re-checking a certificate.
#[derive(Debug, Clone, Serialize)]
pub struct Verification {
    /// The level the certificate is for.
    pub level: Level,
    /// The bound recomputed from the certificate: this is the number that counts.
    pub verified_upper: f64,
    /// The bound written in the file.
    pub claimed: f64,
    /// Whether the recomputed bound is at most the claimed one (up to 1e-12 relative).
    pub matches_claim: bool,
}

/// Rebuilds the relaxation named in the certificate and recomputes the bound from its dual
/// vector, without any solver. Everything in the certificate is untrusted: it must name this
/// game (fingerprint of the flat table), a level whose size is checked before anything is
/// built, and a finite dual vector of the right length; a recomputed bound above the claimed
/// one is an error, not a success.
pub fn verify(s: &Scenario, cert: &Certificate, limits: &Limits) -> Result<Verification> {
    let (level, r) = certificate_relaxation(s, cert, limits)?;
    let bad = |message: String| Error::Input {
        location: crate::error::Location::default(),
        message,
    };
    let assembled = r.problem.assemble();
    let bound = assembled.certified_bound(&cert.dual)?;
    if !bound.is_finite() {
        return Err(bad(
            "the dual vector's entries are so large that the bound it proves is not finite".into(),
        ));
    }
    let matches_claim = bound <= cert.verified_upper + 1e-12 * (1.0 + cert.verified_upper.abs());
    if !matches_claim {
        return Err(bad(format!(
            "the certificate proves only quantum ≤ {bound}, not the claimed {}",
            cert.verified_upper
        )));
    }
    Ok(Verification {
        level,
        verified_upper: bound,
        claimed: cert.verified_upper,
        matches_claim,
    })
}

/// A certificate re-proven in exact rational arithmetic ([`crate::optim::exact`]).
#[derive(Debug, Clone, Serialize)]
pub struct ExactVerification {
    /// The level the certificate is for.
    pub level: Level,
    /// The exact bound.
    pub exact: crate::optim::exact::ExactBound,
    /// The bound written in the file.
    pub claimed: f64,
}

/// Rebuilds the relaxation named in the certificate (with every check of [`verify`]) and proves
/// its bound in exact rational arithmetic; a certificate whose exact bound exceeds its claim
/// (beyond 1e-12 relative) is an error. Certificates written by [`certificate`] claim at least
/// their exact bound.
pub fn verify_exact(
    s: &Scenario,
    cert: &Certificate,
    limits: &Limits,
) -> Result<ExactVerification> {
    let (level, r) = certificate_relaxation(s, cert, limits)?;
    let exact = crate::optim::exact::exact_bound(&r.problem, &cert.dual)?;
    if exact.rounded_up > cert.verified_upper + 1e-12 * (1.0 + cert.verified_upper.abs()) {
        return Err(Error::Input {
            location: crate::error::Location::default(),
            message: format!(
                "the certificate proves exactly only quantum ≤ {} ({}), not the claimed {}",
                exact.rounded_up, exact.fraction, cert.verified_upper
            ),
        });
    }
    Ok(ExactVerification {
        level,
        exact,
        claimed: cert.verified_upper,
    })
}

/// The relaxation a certificate names, after checking everything in it but its bound.
fn certificate_relaxation(
    s: &Scenario,
    cert: &Certificate,
    limits: &Limits,
) -> Result<(Level, Relaxation)> {
    let force = limits.force;
    let bad = |message: String| Error::Input {
        location: crate::error::Location::default(),
        message,
    };
    if cert.format != CERTIFICATE_FORMAT {
        return Err(bad(format!(
            "not a certificate this version can check (format `{}`, expected `{CERTIFICATE_FORMAT}`): save it again with `npa --certificate`",
            cert.format
        )));
    }
    if cert.game_fingerprint != s.fingerprint() {
        return Err(bad(format!(
            "the certificate was computed for another game (`{}`, fingerprint {}; this game's is {})",
            cert.game,
            cert.game_fingerprint,
            s.fingerprint()
        )));
    }
    if !cert.verified_upper.is_finite() {
        return Err(bad(format!(
            "the claimed bound {} is not a finite number",
            cert.verified_upper
        )));
    }
    let level = Level::parse(&cert.level)?;
    // Sizes first: a certificate may claim a level whose matrix would exhaust memory.
    let words = generating_words(s, &level)?.len();
    if words != cert.matrix_size {
        return Err(bad(format!(
            "the certificate is for a {0}×{0} moment matrix; this game at level {1} gives {2}×{2}",
            cert.matrix_size, cert.level, words
        )));
    }
    if words > MAX_WORDS && !force {
        return Err(Error::TooLarge {
            what: format!("checking a certificate at NPA level {}", cert.level),
            estimate: format!("a {words}×{words} moment matrix"),
            hint: "pass --force to check it anyway".into(),
        });
    }
    let r = relaxation(s, &level)?;
    if r.matrix.moments.len() != cert.moments {
        return Err(bad(format!(
            "the certificate is for {} moments; this game at level {} gives {}",
            cert.moments,
            cert.level,
            r.matrix.moments.len()
        )));
    }
    let assembled = r.problem.assemble();
    if cert.dual.len() != assembled.b.len() {
        return Err(bad(format!(
            "the dual vector has {} entries; the problem at level {} has {}",
            cert.dual.len(),
            cert.level,
            assembled.b.len()
        )));
    }
    if let Some(k) = cert.dual.iter().position(|v| !v.is_finite()) {
        return Err(bad(format!("dual entry {k} is not a finite number")));
    }
    Ok((level, r))
}
