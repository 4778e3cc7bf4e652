//! The classical value: the best score of players who share randomness but nothing quantum.
//! Shared randomness never beats the best deterministic strategy (the value is linear in the
//! strategy), so the value is a maximum over deterministic strategies, and we return one that
//! attains it.
//!
//! Two exact methods:
//! - [`search`]: all players but one (the *responder*) are enumerated slot by slot (a slot is one
//!   player's answer to one question) in a depth-first branch and bound; the responder plays the
//!   best response to each question. The bound at a node takes, for every responder question and
//!   answer, the exact contribution of the completed question rows and the best possible one of
//!   the others. Subtrees are searched in parallel (rayon) sharing the best value found.
//! - [`milp`]: a mixed-integer programme over the players' answer indicators, for games whose
//!   enumeration would be too long.
//!
//! [`locality`] decides whether given correlations have a local model.

pub mod locality;

use std::sync::atomic::{AtomicU64, AtomicUsize, Ordering};
use std::time::Instant;

use rayon::prelude::*;
use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::{human_seconds, Limits};
use crate::model::scenario::{digits, index_of, Scenario};
use crate::optim::lp::{LinearProgram, Relation, VarBounds};

/// A deterministic strategy: `answers[i][x]` is player i's answer index to question index x.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct DeterministicStrategy {
    /// `answers[i][x]`: player i's answer index to question index x.
    pub answers: Vec<Vec<usize>>,
}

/// Which method produced a classical value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Branch and bound over strategies.
    Search,
    /// A mixed-integer linear programme.
    Milp,
}

/// Whether a classical figure is the classical value or only a lower bound on it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ClassicalStatus {
    /// Proven optimal: the search finished, or the MILP proved optimality (and no strategy
    /// found by hill climbing beats it).
    Exact,
    /// The best strategy found when the solver stopped early (time limit) or disagreed with an
    /// independent check: a lower bound on the classical value, never the value.
    Incumbent,
}

/// A classical value (or incumbent) with the strategy that attains it.
#[derive(Debug, Clone, Serialize)]
pub struct ClassicalValue {
    /// The value of the strategy below, recomputed from the table. The classical value itself
    /// when `status` is `exact`, else only a lower bound on it.
    pub value: f64,
    /// An optimal (or the best found) deterministic strategy.
    pub strategy: DeterministicStrategy,
    /// How it was computed.
    pub method: Method,
    /// Exact, or an incumbent.
    pub status: ClassicalStatus,
    /// Why the status is not exact.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// Search nodes visited (branch and bound only).
    pub nodes: u64,
    /// Wall-clock time.
    pub seconds: f64,
}

/// How to compute the value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Choice {
    /// Branch and bound when its worst case is affordable, else the MILP, else refuse.
    #[default]
    Auto,
    /// Branch and bound.
    Search,
    /// The MILP.
    Milp,
}

/// Estimated search time (seconds) above which `Auto` does not start the search: "hours".
pub const SEARCH_SECONDS_LIMIT: f64 = 3600.0;
/// Worst-case work below which the search starts without probing its size.
pub const CHEAP_SEARCH_WORK: f64 = 1e8;
/// MILP size (variables) above which `Auto` refuses.
pub const MILP_VARIABLE_LIMIT: f64 = 20_000.0;
/// Seconds per search node and per (responder question × answer) pair on one core, measured on
/// the bench suite (`cargo bench --bench classical`) on the project machine.
const SECONDS_PER_NODE_ENTRY: f64 = 3e-8;

/// Cost estimates for the two methods.
#[derive(Debug, Clone, Serialize)]
pub struct ClassicalEstimate {
    /// The player whose answers are best responses (not enumerated).
    pub responder: usize,
    /// Worst-case number of enumerated strategies (before pruning).
    pub enumerated_strategies: f64,
    /// Worst-case floating-point operations of the search.
    pub search_work: f64,
    /// Variables of the MILP.
    pub milp_variables: f64,
}

impl ClassicalEstimate {
    /// The estimates for `s`.
    pub fn of(s: &Scenario) -> Self {
        let log_strategies: Vec<f64> = s
            .parties()
            .iter()
            .map(|p| p.questions() as f64 * (p.answers() as f64).ln())
            .collect();
        let responder = (0..s.players())
            .max_by(|&i, &j| {
                log_strategies[i]
                    .total_cmp(&log_strategies[j])
                    .then(j.cmp(&i))
            })
            .unwrap_or(0);
        let enumerated: f64 = (0..s.players())
            .filter(|&i| i != responder)
            .map(|i| log_strategies[i])
            .sum::<f64>()
            .exp();
        let r = &s.parties()[responder];
        let per_leaf = (r.questions() * r.answers()) as f64;
        ClassicalEstimate {
            responder,
            enumerated_strategies: enumerated,
            search_work: enumerated * per_leaf * 2.0,
            milp_variables: (s.joint_questions() * s.joint_answers()) as f64
                + s.parties()
                    .iter()
                    .map(|p| (p.questions() * p.answers()) as f64)
                    .sum::<f64>(),
        }
    }
}

/// A realistic size estimate of the pruned search: a good strategy found by best-response
/// hill climbing fixes the pruning threshold, and random dives into the tree (Knuth's
/// estimator) measure how much of it survives pruning.
#[derive(Debug, Clone, Serialize)]
pub struct SearchEstimate {
    /// Value of the best strategy found by hill climbing (a lower bound on the classical value).
    pub incumbent: f64,
    /// Estimated nodes of the pruned tree.
    pub nodes: f64,
    /// Estimated wall-clock seconds on this machine's cores.
    pub seconds: f64,
}

/// Reports finished parallel tasks: (done, total).
pub type Progress<'a> = &'a (dyn Fn(usize, usize) + Sync);

/// How the classical value is computed.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ClassicalOptions {
    /// Branch and bound, MILP, or chosen by size (default).
    pub method: Choice,
    /// Refuse searches estimated above [`SEARCH_SECONDS_LIMIT`] (or MILPs above
    /// [`MILP_VARIABLE_LIMIT`]) unless forced.
    pub limits: Limits,
}

/// Computes the classical value with the chosen method. Only an exact value is returned: a MILP stopped at its time limit is an error (naming the best
/// strategy it found), so no caller can mistake a lower bound for the value.
pub fn classical_value(
    s: &Scenario,
    options: &ClassicalOptions,
    progress: Option<Progress>,
) -> Result<ClassicalValue> {
    let c = classical_value_or_incumbent(s, options, progress)?;
    match c.status {
        ClassicalStatus::Exact => Ok(c),
        ClassicalStatus::Incumbent => Err(Error::solver(
            "classical value",
            format!(
                "{}; the best strategy found scores {} (a lower bound on the classical value only)",
                c.note.as_deref().unwrap_or("not proven optimal"),
                c.value
            ),
        )),
    }
}

/// As [`classical_value`], but a MILP that stopped early returns its best strategy with status
/// [`ClassicalStatus::Incumbent`] (for the `classical` command, which prints it as a lower bound).
pub fn classical_value_or_incumbent(
    s: &Scenario,
    options: &ClassicalOptions,
    progress: Option<Progress>,
) -> Result<ClassicalValue> {
    let (choice, force) = (options.method, options.limits.force);
    let est = ClassicalEstimate::of(s);
    let probe = || estimate_search(s);
    match choice {
        Choice::Search => {
            if !force && est.search_work > CHEAP_SEARCH_WORK {
                let p = probe();
                if p.seconds > SEARCH_SECONDS_LIMIT {
                    return Err(too_large_search(&est, &p));
                }
            }
            Ok(search(s, progress))
        }
        Choice::Milp => {
            if !force && est.milp_variables > MILP_VARIABLE_LIMIT {
                return Err(too_large_milp(&est));
            }
            milp(s)
        }
        Choice::Auto => {
            if force || est.search_work <= CHEAP_SEARCH_WORK {
                return Ok(search(s, progress));
            }
            let p = probe();
            if p.seconds <= SEARCH_SECONDS_LIMIT {
                Ok(search(s, progress))
            } else if est.milp_variables <= MILP_VARIABLE_LIMIT {
                milp(s)
            } else {
                Err(too_large_search(&est, &p))
            }
        }
    }
}

fn too_large_search(est: &ClassicalEstimate, p: &SearchEstimate) -> Error {
    Error::TooLarge {
        what: "the exact classical search".into(),
        estimate: format!(
            "about {:.1e} nodes after pruning, roughly {} on this machine (worst case {:.2e} strategies of the enumerated players); the MILP would have {:.0} variables",
            p.nodes,
            human_seconds(p.seconds),
            est.enumerated_strategies,
            est.milp_variables
        ),
        hint: "the estimate comes from random probes and can be off by orders of magnitude: pass --force to try anyway".into(),
    }
}

fn too_large_milp(est: &ClassicalEstimate) -> Error {
    Error::TooLarge {
        what: "the classical MILP".into(),
        estimate: format!("{:.0} variables", est.milp_variables),
        hint: "pass --force to try anyway".into(),
    }
}

/// Small deterministic generator for the seeded random choices of the estimator (xorshift64*).
struct Rng(u64);

impl Rng {
    fn below(&mut self, n: usize) -> usize {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 33) as usize % n
    }
}

/// Best-response hill climbing from a few seeded random starts: a good (not necessarily
/// optimal) deterministic strategy and its value.
pub fn hill_climb(s: &Scenario, restarts: usize, seed: u64) -> (f64, Vec<Vec<usize>>) {
    let mut rng = Rng(seed.max(1));
    let mut best = (f64::NEG_INFINITY, Vec::new());
    for _ in 0..restarts {
        let mut answers: Vec<Vec<usize>> = s
            .parties()
            .iter()
            .map(|p| (0..p.questions()).map(|_| rng.below(p.answers())).collect())
            .collect();
        let mut value = s.value_of_strategy(&answers);
        loop {
            for i in 0..s.players() {
                answers[i] = best_response(s, &answers, i);
            }
            let v = s.value_of_strategy(&answers);
            if v <= value + 1e-12 {
                break;
            }
            value = v;
        }
        if value > best.0 {
            best = (value, answers);
        }
    }
    best
}

/// Estimates the pruned search tree by random dives (Knuth 1975, "Estimating the efficiency of
/// backtrack programs", Math. Comp. 29, 121), with the hill-climbing value as pruning threshold.
pub fn estimate_search(s: &Scenario) -> SearchEstimate {
    let est = ClassicalEstimate::of(s);
    let lay = Layout::new(s, est.responder);
    let (incumbent, _) = hill_climb(s, 8, 0x5eed);
    let shared = SharedBest(AtomicU64::new((incumbent - s.offset()).to_bits()));
    let mut sr = Searcher::new(&lay, &shared, 1e-12);
    let mut rng = Rng(0x0dd5_eed5);
    let start = Instant::now();
    let mut total = 0.0;
    let mut probes = 0;
    while probes < 16 || (probes < 4096 && start.elapsed().as_secs_f64() < 0.3) {
        total += sr.dive(&mut rng);
        probes += 1;
    }
    let nodes = total / probes as f64;
    let cores = rayon::current_num_threads().max(1) as f64;
    SearchEstimate {
        incumbent,
        nodes,
        seconds: nodes * SECONDS_PER_NODE_ENTRY * (lay.y * lay.b) as f64 / cores,
    }
}

/// The game seen from the responder: rows are joint questions of the enumerated players.
struct Layout {
    responder: usize,
    /// Enumerated players, in order.
    others: Vec<usize>,
    other_q: Vec<usize>,
    other_a: Vec<usize>,
    rows: usize,
    y: usize,
    b: usize,
    other_answers: usize,
    /// `coef[((row * y + yq) * other_answers + ao) * b + bb]`.
    coef: Vec<f64>,
    /// `best[(row * y + yq) * b + bb]`: max over the enumerated players' answers.
    best: Vec<f64>,
    /// Slots in search order: (index into `others`, question).
    slots: Vec<(usize, usize)>,
    /// Rows whose last slot is slot d.
    completes: Vec<Vec<usize>>,
    /// Per row, the question of each enumerated player.
    row_questions: Vec<Vec<usize>>,
}

impl Layout {
    fn new(s: &Scenario, responder: usize) -> Self {
        let n = s.players();
        let others: Vec<usize> = (0..n).filter(|&i| i != responder).collect();
        let other_q: Vec<usize> = others.iter().map(|&i| s.parties()[i].questions()).collect();
        let other_a: Vec<usize> = others.iter().map(|&i| s.parties()[i].answers()).collect();
        let rows: usize = other_q.iter().product();
        let other_answers: usize = other_a.iter().product();
        let (y, b) = (
            s.parties()[responder].questions(),
            s.parties()[responder].answers(),
        );
        let qr = s.question_radices();
        let ar = s.answer_radices();
        let na = s.joint_answers();
        let obj = s.objective();
        let mut coef = vec![0.0; rows * y * other_answers * b];
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        let (mut rd, mut od) = (vec![0; others.len()], vec![0; others.len()]);
        for q in 0..s.joint_questions() {
            digits(q, &qr, &mut qd);
            for (k, &i) in others.iter().enumerate() {
                rd[k] = qd[i];
            }
            let row = index_of(&rd, &other_q);
            for a in 0..na {
                digits(a, &ar, &mut ad);
                for (k, &i) in others.iter().enumerate() {
                    od[k] = ad[i];
                }
                let ao = index_of(&od, &other_a);
                coef[((row * y + qd[responder]) * other_answers + ao) * b + ad[responder]] =
                    obj[q * na + a];
            }
        }
        let mut best = vec![f64::NEG_INFINITY; rows * y * b];
        for row in 0..rows {
            for yq in 0..y {
                for ao in 0..other_answers {
                    for bb in 0..b {
                        let c = coef[((row * y + yq) * other_answers + ao) * b + bb];
                        let m = &mut best[(row * y + yq) * b + bb];
                        *m = m.max(c);
                    }
                }
            }
        }
        // Interleave players by question index so question rows complete early and the bound
        // tightens near the root.
        let max_q = other_q.iter().copied().max().unwrap_or(0);
        let mut slots = Vec::new();
        let mut slot_of = vec![vec![0; max_q]; others.len()];
        for x in 0..max_q {
            for (k, &questions) in other_q.iter().enumerate() {
                if x < questions {
                    slots.push((k, x));
                }
            }
        }
        for (position, &(k, x)) in slots.iter().enumerate() {
            slot_of[k][x] = position;
        }
        let mut completes = vec![Vec::new(); slots.len()];
        let mut row_questions = Vec::with_capacity(rows);
        for row in 0..rows {
            digits(row, &other_q, &mut rd);
            let last = (0..others.len())
                .map(|k| slot_of[k][rd[k]])
                .max()
                .unwrap_or(0);
            completes[last].push(row);
            row_questions.push(rd.clone());
        }
        Layout {
            responder,
            others,
            other_q,
            other_a,
            rows,
            y,
            b,
            other_answers,
            coef,
            best,
            slots,
            completes,
            row_questions,
        }
    }
}

/// What one parallel task found: its best value, the enumerated players' answers reaching it,
/// and the nodes it visited.
type TaskResult = (f64, Option<Vec<Vec<usize>>>, u64);

/// Shared best value, as f64 bits (the search only ever raises it).
struct SharedBest(AtomicU64);

impl SharedBest {
    fn get(&self) -> f64 {
        f64::from_bits(self.0.load(Ordering::Relaxed))
    }
    fn raise(&self, v: f64) {
        let mut cur = self.0.load(Ordering::Relaxed);
        while v > f64::from_bits(cur) {
            match self.0.compare_exchange_weak(
                cur,
                v.to_bits(),
                Ordering::Relaxed,
                Ordering::Relaxed,
            ) {
                Ok(_) => break,
                Err(actual) => cur = actual,
            }
        }
    }
}

/// One depth-first searcher: the current partial assignment and running sums.
struct Searcher<'a> {
    lay: &'a Layout,
    /// Current answer per (enumerated player, question).
    assign: Vec<Vec<usize>>,
    /// `acc[yq * b + bb]`: Σ over rows of the exact (completed) or optimistic contribution.
    acc: Vec<f64>,
    tolerance: f64,
    own_best: f64,
    best_assign: Option<Vec<Vec<usize>>>,
    shared: &'a SharedBest,
    nodes: u64,
}

impl<'a> Searcher<'a> {
    fn new(lay: &'a Layout, shared: &'a SharedBest, tolerance: f64) -> Self {
        let mut acc = vec![0.0; lay.y * lay.b];
        for row in 0..lay.rows {
            for (k, a) in acc.iter_mut().enumerate() {
                *a += lay.best[row * lay.y * lay.b + k];
            }
        }
        Searcher {
            lay,
            assign: lay.other_q.iter().map(|&q| vec![0; q]).collect(),
            acc,
            tolerance,
            own_best: f64::NEG_INFINITY,
            best_assign: None,
            shared,
            nodes: 0,
        }
    }

    fn bound(&self) -> f64 {
        self.acc
            .chunks(self.lay.b)
            .map(|c| c.iter().cloned().fold(f64::NEG_INFINITY, f64::max))
            .sum()
    }

    /// Adds (sign = 1) or removes (sign = -1) the exact contribution of rows completed at slot d.
    fn apply(&mut self, d: usize, sign: f64) {
        let lay = self.lay;
        for &row in &lay.completes[d] {
            let rq = &lay.row_questions[row];
            let ao = (0..lay.others.len())
                .fold(0, |acc, k| acc * lay.other_a[k] + self.assign[k][rq[k]]);
            for yq in 0..lay.y {
                let c0 = ((row * lay.y + yq) * lay.other_answers + ao) * lay.b;
                let m0 = (row * lay.y + yq) * lay.b;
                for bb in 0..lay.b {
                    self.acc[yq * lay.b + bb] += sign * (lay.coef[c0 + bb] - lay.best[m0 + bb]);
                }
            }
        }
    }

    /// Whether a node with this bound can still beat what is known. Ties with the shared best
    /// are kept so each task finds its own first optimum (the result is then deterministic).
    fn promising(&self, bound: f64) -> bool {
        bound > self.own_best + self.tolerance && bound >= self.shared.get() - self.tolerance
    }

    /// One random dive of Knuth's estimator: follows a random surviving child at each level and
    /// returns 1 + Σ (product of the numbers of surviving children along the path).
    fn dive(&mut self, rng: &mut Rng) -> f64 {
        let mut estimate = 1.0;
        let mut width = 1.0;
        let mut path = Vec::new();
        for d in 0..self.lay.slots.len() {
            let (k, x) = self.lay.slots[d];
            let mut alive = Vec::new();
            for alpha in 0..self.lay.other_a[k] {
                self.assign[k][x] = alpha;
                self.apply(d, 1.0);
                if self.promising(self.bound()) {
                    alive.push(alpha);
                }
                self.apply(d, -1.0);
            }
            if alive.is_empty() {
                break;
            }
            width *= alive.len() as f64;
            estimate += width;
            self.assign[k][x] = alive[rng.below(alive.len())];
            self.apply(d, 1.0);
            path.push(d);
        }
        for &d in path.iter().rev() {
            self.apply(d, -1.0);
        }
        estimate
    }

    fn descend(&mut self, d: usize) {
        self.nodes += 1;
        if d == self.lay.slots.len() {
            let v = self.bound();
            if v > self.own_best + self.tolerance {
                self.own_best = v;
                self.best_assign = Some(self.assign.clone());
                self.shared.raise(v);
            }
            return;
        }
        let (k, x) = self.lay.slots[d];
        for alpha in 0..self.lay.other_a[k] {
            self.assign[k][x] = alpha;
            self.apply(d, 1.0);
            if self.promising(self.bound()) {
                self.descend(d + 1);
            }
            self.apply(d, -1.0);
        }
    }
}

/// Exact classical value by parallel branch and bound.
pub fn search(s: &Scenario, progress: Option<Progress>) -> ClassicalValue {
    let start = Instant::now();
    let est = ClassicalEstimate::of(s);
    let lay = Layout::new(s, est.responder);
    let scale: f64 = s
        .objective()
        .chunks(s.joint_answers())
        .map(|c| c.iter().fold(0.0f64, |m, v| m.max(v.abs())))
        .sum();
    // Pruning keeps every node within `tolerance` of the best known value, so the rounding of
    // the incremental bounds (a few units in the last place per row summed, and the drift of
    // repeated add/remove pairs) can never prune the optimum: relative 1e-9 is far above both
    // for any search that finishes, and the terms' count is charged for very wide tables.
    let unit = f64::EPSILON / 2.0;
    let tolerance =
        (1e-9 * (1.0 + scale)).max(8.0 * unit * s.joint_questions() as f64 * (1.0 + scale));
    // A good strategy from hill climbing prunes from the first node on. Ties with it are kept,
    // so the optimum (which is at least as good) is never pruned.
    let (incumbent, climbed) = hill_climb(s, 4, 0x5eed);
    let results = search_tasks(&lay, incumbent - s.offset(), tolerance, progress);
    // Should rounding still have pruned every leaf, the search is repeated without the seed
    // (then the first leaf is always reached).
    let results = if results.iter().any(|r| r.1.is_some()) {
        results
    } else {
        search_tasks(&lay, f64::NEG_INFINITY, tolerance, progress)
    };
    let top = results
        .iter()
        .map(|r| r.0)
        .fold(f64::NEG_INFINITY, f64::max);
    // The first task (in tree order) reaching the optimum gives the reported strategy.
    let winner = results
        .iter()
        .find(|r| r.1.is_some() && r.0 >= top - tolerance)
        .and_then(|r| r.1.clone());
    let nodes = results.iter().map(|r| r.2).sum();
    if crate::limits::stop_requested() {
        // Tasks skipped on the request prove nothing: the climbed strategy is all we have.
        return ClassicalValue {
            value: s.value_of_strategy(&climbed),
            strategy: DeterministicStrategy { answers: climbed },
            method: Method::Search,
            status: ClassicalStatus::Incumbent,
            note: Some("stopped on request before the search finished".into()),
            nodes,
            seconds: start.elapsed().as_secs_f64(),
        };
    }
    let Some(winner) = winner else {
        // Unreachable after the unseeded rerun; never reported as exact all the same.
        return ClassicalValue {
            value: s.value_of_strategy(&climbed),
            strategy: DeterministicStrategy { answers: climbed },
            method: Method::Search,
            status: ClassicalStatus::Incumbent,
            note: Some("the search reached no complete strategy (internal error)".into()),
            nodes,
            seconds: start.elapsed().as_secs_f64(),
        };
    };
    let strategy = complete_with_best_response(s, &lay, &winner);
    ClassicalValue {
        value: s.value_of_strategy(&strategy.answers),
        strategy,
        method: Method::Search,
        status: ClassicalStatus::Exact,
        note: None,
        nodes,
        seconds: start.elapsed().as_secs_f64(),
    }
}

/// The parallel branch and bound from a seed value (the best known, or −∞).
fn search_tasks(
    lay: &Layout,
    seed: f64,
    tolerance: f64,
    progress: Option<Progress>,
) -> Vec<TaskResult> {
    let shared = SharedBest(AtomicU64::new(seed.to_bits()));

    // Split the tree at a depth with enough subtrees to keep both cores busy.
    let mut split = 0;
    let mut tasks = 1usize;
    while split < lay.slots.len() && tasks < 256 {
        tasks *= lay.other_a[lay.slots[split].0];
        split += 1;
    }
    let radices: Vec<usize> = lay.slots[..split]
        .iter()
        .map(|&(k, _)| lay.other_a[k])
        .collect();
    let done = AtomicUsize::new(0);
    (0..tasks)
        .into_par_iter()
        .map(|t| {
            let mut sr = Searcher::new(lay, &shared, tolerance);
            let mut prefix = vec![0; split];
            digits(t, &radices, &mut prefix);
            let mut alive = !crate::limits::stop_requested();
            for (d, &alpha) in prefix.iter().enumerate() {
                let (k, x) = lay.slots[d];
                sr.assign[k][x] = alpha;
                sr.apply(d, 1.0);
                if !sr.promising(sr.bound()) {
                    alive = false;
                    break;
                }
            }
            if alive {
                sr.descend(split);
            }
            let finished = done.fetch_add(1, Ordering::Relaxed) + 1;
            if let Some(p) = progress {
                p(finished, tasks);
            }
            (sr.own_best, sr.best_assign, sr.nodes)
        })
        .collect()
}

/// Adds the responder's best response to the enumerated players' answers.
fn complete_with_best_response(
    s: &Scenario,
    lay: &Layout,
    assign: &[Vec<usize>],
) -> DeterministicStrategy {
    let mut answers = vec![Vec::new(); s.players()];
    for (k, &i) in lay.others.iter().enumerate() {
        answers[i] = assign[k].clone();
    }
    answers[lay.responder] = best_response(s, &answers, lay.responder);
    DeterministicStrategy { answers }
}

/// Player `who`'s best answer to each of its questions against the others' fixed answers (its
/// own entry in `answers` is ignored). Ties go to the smallest answer index.
pub fn best_response(s: &Scenario, answers: &[Vec<usize>], who: usize) -> Vec<usize> {
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let p = &s.parties()[who];
    let mut gain = vec![0.0; p.questions() * p.answers()];
    let (mut qd, mut ad) = (vec![0; qr.len()], vec![0; qr.len()]);
    for q in 0..s.joint_questions() {
        digits(q, &qr, &mut qd);
        for i in 0..qr.len() {
            if i != who {
                ad[i] = answers[i][qd[i]];
            }
        }
        for bb in 0..p.answers() {
            ad[who] = bb;
            gain[qd[who] * p.answers() + bb] += s.objective()[q * na + index_of(&ad, &ar)];
        }
    }
    gain.chunks(p.answers())
        .map(|g| {
            let mut best = 0;
            for (k, v) in g.iter().enumerate() {
                if *v > g[best] {
                    best = k;
                }
            }
            best
        })
        .collect()
}

/// Exact classical value by a mixed-integer programme: binary answer indicators `s_i(x, a)`
/// (one answer per question) and behaviour variables `w(a|q) ≤ s_i(q_i, a_i)` with
/// `Σ_a w(a|q) = 1`, which forces `w` to the product of the indicators.
pub fn milp(s: &Scenario) -> Result<ClassicalValue> {
    milp_with_time_limit(s, crate::optim::lp::SIMPLEX_TIME_LIMIT_SECONDS)
}

/// [`milp`] with its own time limit (seconds); a run stopped by it returns the best strategy
/// found with status [`ClassicalStatus::Incumbent`].
pub fn milp_with_time_limit(s: &Scenario, seconds: f64) -> Result<ClassicalValue> {
    let start = Instant::now();
    let n = s.players();
    let mut lp = LinearProgram::new(true);
    let indicator: Vec<Vec<Vec<usize>>> = s
        .parties()
        .iter()
        .map(|p| {
            (0..p.questions())
                .map(|_| {
                    (0..p.answers())
                        .map(|_| lp.add_var(VarBounds::BINARY, 0.0))
                        .collect()
                })
                .collect()
        })
        .collect();
    for player in &indicator {
        for per_q in player {
            lp.add_row(per_q.iter().map(|&v| (v, 1.0)).collect(), Relation::Eq, 1.0);
        }
    }
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    for q in 0..s.joint_questions() {
        digits(q, &qr, &mut qd);
        let mut row = Vec::with_capacity(na);
        for a in 0..na {
            digits(a, &ar, &mut ad);
            let w = lp.add_var(
                VarBounds {
                    lower: 0.0,
                    upper: 1.0,
                    integer: false,
                },
                s.objective()[q * na + a],
            );
            row.push((w, 1.0));
            for i in 0..n {
                lp.add_row(
                    vec![(w, 1.0), (indicator[i][qd[i]][ad[i]], -1.0)],
                    Relation::Le,
                    0.0,
                );
            }
        }
        lp.add_row(row, Relation::Eq, 1.0);
    }
    lp.time_limit_seconds = Some(seconds);
    let sol = lp.solve("classical MILP")?;
    let answers: Vec<Vec<usize>> = indicator
        .iter()
        .map(|player| {
            player
                .iter()
                .map(|per_q| {
                    per_q
                        .iter()
                        .enumerate()
                        .max_by(|a, b| sol.x[*a.1].total_cmp(&sol.x[*b.1]))
                        .map(|(k, _)| k)
                        .unwrap_or(0)
                })
                .collect()
        })
        .collect();
    let value = s.value_of_strategy(&answers);
    let proven = sol.status == crate::optim::SolveStatus::Solved;
    if proven && (value - (sol.objective + s.offset())).abs() > 1e-6 * (1.0 + value.abs()) {
        return Err(Error::solver(
            "classical MILP",
            format!(
                "the rounded strategy scores {value} but the solver reported {}",
                sol.objective + s.offset()
            ),
        ));
    }
    // An independent check: best-response hill climbing. A strategy it finds that beats the
    // MILP's means the MILP's answer is not the optimum, whatever it claims.
    let (climbed, climbed_answers) = hill_climb(s, 8, 0x5eed);
    let scale = 1e-9 * (1.0 + value.abs());
    let (value, answers, note) = if climbed > value + scale {
        let note = if proven {
            format!("the MILP claimed optimality at {value}, but hill climbing found a better strategy: solver failure")
        } else {
            format!("the MILP stopped at its time limit ({seconds} s) at {value}; hill climbing found a better strategy")
        };
        (climbed, climbed_answers, Some(note))
    } else if !proven {
        let note =
            format!("the MILP stopped at its time limit ({seconds} s) before proving optimality");
        (value, answers, Some(note))
    } else {
        (value, answers, None)
    };
    Ok(ClassicalValue {
        value,
        strategy: DeterministicStrategy { answers },
        method: Method::Milp,
        status: if note.is_none() {
            ClassicalStatus::Exact
        } else {
            ClassicalStatus::Incumbent
        },
        note,
        nodes: 0,
        seconds: start.elapsed().as_secs_f64(),
    })
}
