//! Quantum lower bounds by see-saw: explicit strategies in fixed local dimensions.
//!
//! Each round replaces the state by the top eigenvector of the Bell operator (the exact optimum
//! for fixed measurements), then each player's measurements by the exact optimum for the fixed
//! rest: for two answers the projector onto the positive part of `B_0 − B_1` (a closed form), for
//! more answers the POVM semidefinite programme `max Σ_a tr(M_a B_a)` solved with clarabel. A
//! step is kept only if it does not lower the value, so the value never decreases. Random
//! restarts run in parallel, each seeded from the run's seed, and the best strategy is kept;
//! its reported value is recomputed by the Born rule ([`QuantumStrategy::value`]).

use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::Limits;
use crate::model::scenario::{digits, index_of, Scenario};
pub use crate::model::strategy::clean_povm;
use crate::model::strategy::{apply_on_axis, CMatrix, CVector, QuantumStrategy};
use crate::optim::backend::Backend;
use crate::optim::sdp::{upper_index, AffineEntry, MatrixBlock, SdpProblem};

/// How the see-saw searches (see the defaults).
#[derive(Debug, Clone)]
pub struct SeesawOptions {
    /// Local dimension per player; empty means [`default_dims`].
    pub dims: Vec<usize>,
    /// Random restarts, run in parallel; the best is kept.
    pub restarts: usize,
    /// Seed of the random starts (reported: runs are reproducible).
    pub seed: u64,
    /// Stop a run when a round improves the value by less than this.
    pub tolerance: f64,
    /// Most rounds of one run.
    pub max_rounds: usize,
    /// Wall-clock seconds after which no restart starts and running ones finish their round
    /// (default: no limit). The best strategy so far is kept; its value is a lower bound all
    /// the same, and the report says how many restarts ran.
    pub max_seconds: f64,
    /// Run even when the estimate says it would take more than an hour.
    pub limits: Limits,
}

impl Default for SeesawOptions {
    fn default() -> Self {
        SeesawOptions {
            dims: Vec::new(),
            restarts: DEFAULT_RESTARTS,
            seed: 1,
            tolerance: 1e-10,
            max_rounds: 500,
            max_seconds: f64::INFINITY,
            limits: Limits::default(),
        }
    }
}

/// Random restarts when none are asked for (`seesaw` and `bounds` alike).
pub const DEFAULT_RESTARTS: usize = 10;

/// Estimated seconds before a see-saw is refused without `force`.
pub const SECONDS_LIMIT: f64 = 3600.0;

/// A rule-of-thumb estimate of a see-saw's wall-clock time (common practice, calibrated on the
/// bench: `cargo bench --bench seesaw`): per round, the Bell operator (terms × D² with D the
/// joint dimension), its top eigenvector (about 10·D³ flops) and, for players with more than two
/// answers, a POVM SDP per question (CGLMP d=5: about 0.5 s per restart for 25 parameters per
/// element); about 50 rounds per restart, restarts shared over the cores.
pub fn estimate_seconds(s: &Scenario, opts: &SeesawOptions) -> f64 {
    let dims = if opts.dims.is_empty() {
        default_dims(s)
    } else {
        opts.dims.clone()
    };
    let joint: f64 = dims.iter().map(|&d| d as f64).product();
    let terms = s.objective().iter().filter(|c| **c != 0.0).count() as f64;
    let per_round =
        (terms * joint * joint + 10.0 * joint.powi(3) * (1.0 + s.players() as f64)) / 1e9;
    let povm: f64 = s
        .parties()
        .iter()
        .zip(&dims)
        .filter(|(p, _)| p.answers() > 2)
        .map(|(p, &d)| (p.questions() * p.answers() * d * d) as f64 / 100.0 * 0.5)
        .sum();
    let cores = rayon::current_num_threads().max(1) as f64;
    let batches = (opts.restarts as f64 / cores).ceil();
    batches * (50.0 * per_round + povm)
}

/// The best strategy found and its certified value.
#[derive(Debug, Clone, Serialize)]
pub struct SeesawResult {
    /// Value of the best strategy, recomputed by the Born rule and rounded down by its error
    /// term ([`QuantumStrategy::certified_value`]).
    pub quantum_lower: f64,
    /// The error term subtracted.
    pub value_error: f64,
    /// Local dimensions used.
    pub dims: Vec<usize>,
    /// Seed of the random starts.
    pub seed: u64,
    /// Restarts run.
    pub restarts: usize,
    /// Rounds the best run took.
    pub rounds: usize,
    /// Wall-clock time.
    pub seconds: f64,
    /// The strategy (state and measurements).
    #[serde(skip)]
    pub strategy: QuantumStrategy,
}

/// Largest joint dimension accepted (the Bell operator is a dense D×D matrix).
pub const MAX_JOINT_DIMENSION: usize = 4096;

/// splitmix64: small, seedable, reproducible.
pub(crate) struct Rng(pub(crate) u64);

impl Rng {
    pub(crate) fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn gaussian(&mut self) -> f64 {
        (-2.0 * self.uniform().ln()).sqrt() * (std::f64::consts::TAU * self.uniform()).cos()
    }
    fn complex(&mut self) -> Complex64 {
        Complex64::new(self.gaussian(), self.gaussian())
    }
}

pub(crate) fn random_state(dim: usize, rng: &mut Rng) -> CVector {
    let v = CVector::from_fn(dim, |_, _| rng.complex());
    let n = v.norm();
    v / Complex64::new(n, 0.0)
}

/// A random projective measurement: the columns of a random unitary, dealt to the answers in
/// a random order (so that with fewer columns than answers, different restarts give weight to
/// different answers: a fixed order could leave the only winning answers empty in every start).
pub(crate) fn random_measurement(d: usize, answers: usize, rng: &mut Rng) -> Vec<CMatrix> {
    let g = CMatrix::from_fn(d, d, |_, _| rng.complex());
    let q = g.qr().q();
    let mut order: Vec<usize> = (0..answers).collect();
    for i in (1..answers).rev() {
        order.swap(i, (rng.next() % (i as u64 + 1)) as usize);
    }
    let mut povm = vec![CMatrix::zeros(d, d); answers];
    for j in 0..d {
        let col = q.column(j);
        povm[order[j % answers]] += col * col.adjoint();
    }
    povm
}

/// A random full-rank POVM: `M_a = S^{-1/2} G_a G_a† S^{-1/2}` with Gaussian `G_a` and
/// `S = Σ G_a G_a†`. Every answer starts with weight, so none can trap the run at zero.
pub(crate) fn random_povm(d: usize, answers: usize, rng: &mut Rng) -> Vec<CMatrix> {
    let povm: Vec<CMatrix> = (0..answers)
        .map(|_| {
            let g = CMatrix::from_fn(d, d, |_, _| rng.complex());
            &g * g.adjoint()
        })
        .collect();
    clean_povm(povm)
}

/// `Σ_q Σ_a c(q, a) ⊗_i M^i_{a_i|q_i}`: the operator whose expectation is the value (less the
/// constant).
pub fn bell_operator(s: &Scenario, st: &QuantumStrategy) -> CMatrix {
    let dim = st.total_dim();
    let mut w = CMatrix::zeros(dim, dim);
    s.for_each_term(|qd, ad, c| {
        let mut k = st.measurements[0][qd[0]][ad[0]].clone();
        for i in 1..s.players() {
            k = k.kronecker(&st.measurements[i][qd[i]][ad[i]]);
        }
        w += k * Complex64::new(c, 0.0);
    });
    w
}

/// Replaces the state by the top eigenvector of the Bell operator; returns the new value.
pub(crate) fn optimise_state(s: &Scenario, st: &mut QuantumStrategy) -> f64 {
    let w = bell_operator(s, st);
    let w = (&w + w.adjoint()) * Complex64::new(0.5, 0.0);
    let eig = w.symmetric_eigen();
    let (top, value) =
        eig.eigenvalues
            .iter()
            .enumerate()
            .fold(
                (0, f64::NEG_INFINITY),
                |acc, (i, &v)| if v > acc.1 { (i, v) } else { acc },
            );
    st.state = eig.eigenvectors.column(top).into_owned();
    s.offset() + value
}

/// `B_{a|x}` for `player`: the value is `Σ_{x,a} tr(M_{a|x} B_{a|x})` with everyone else fixed.
pub(crate) fn effective_operators(
    s: &Scenario,
    st: &QuantumStrategy,
    player: usize,
) -> Vec<Vec<CMatrix>> {
    let n = s.players();
    let d = st.dims[player];
    let p = &s.parties()[player];
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let left: usize = st.dims[..player].iter().product();
    let right: usize = st.dims[player + 1..].iter().product();
    let mut b = vec![vec![CMatrix::zeros(d, d); p.answers()]; p.questions()];
    // Answers of the others, with this player's digit fixed to 0.
    let mut other_ar = ar.clone();
    other_ar[player] = 1;
    let others: usize = other_ar.iter().product();
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    for q in 0..s.joint_questions() {
        if s.weights()[q] == 0.0 {
            continue;
        }
        digits(q, &qr, &mut qd);
        for o in 0..others {
            digits(o, &other_ar, &mut ad);
            let coefs: Vec<f64> = (0..p.answers())
                .map(|a| {
                    ad[player] = a;
                    s.objective()[q * na + index_of(&ad, &ar)]
                })
                .collect();
            if coefs.iter().all(|&c| c == 0.0) {
                continue;
            }
            let mut phi = st.state.clone();
            for i in (0..n).filter(|&i| i != player) {
                phi = apply_on_axis(&phi, &st.dims, i, &st.measurements[i][qd[i]][ad[i]]);
            }
            // Y[c][r] = Σ_e φ[c, e] conj(ψ[r, e]), e running over the other factors.
            let mut y = CMatrix::zeros(d, d);
            for l in 0..left {
                for c in 0..d {
                    for r in 0..d {
                        let mut acc = Complex64::new(0.0, 0.0);
                        let (co, ro) = ((l * d + c) * right, (l * d + r) * right);
                        for t in 0..right {
                            acc += phi[co + t] * st.state[ro + t].conj();
                        }
                        y[(c, r)] += acc;
                    }
                }
            }
            for (a, &c) in coefs.iter().enumerate() {
                if c != 0.0 {
                    b[qd[player]][a] += &y * Complex64::new(c, 0.0);
                }
            }
        }
    }
    // Only the Hermitian part matters for Hermitian measurements.
    for per_q in &mut b {
        for m in per_q.iter_mut() {
            *m = (&*m + m.adjoint()) * Complex64::new(0.5, 0.0);
        }
    }
    b
}

/// The best POVM for `max Σ_a tr(M_a B_a)`.
pub(crate) fn best_povm(b: &[CMatrix]) -> Result<Vec<CMatrix>> {
    let d = b[0].nrows();
    if b.len() == 1 {
        return Ok(vec![CMatrix::identity(d, d)]);
    }
    if b.len() == 2 {
        let diff = &b[0] - &b[1];
        let eig = diff.symmetric_eigen();
        let mut m0 = CMatrix::zeros(d, d);
        for k in 0..d {
            if eig.eigenvalues[k] > 0.0 {
                let v = eig.eigenvectors.column(k);
                m0 += v * v.adjoint();
            }
        }
        let m1 = CMatrix::identity(d, d) - &m0;
        return Ok(vec![m0, m1]);
    }
    povm_sdp(b)
}

/// `max Σ_a tr(M_a B_a)` over POVMs, as a real SDP: each Hermitian M = X + iY enters through
/// the real symmetric embedding [[X, −Y], [Y, X]], which is PSD exactly when M is.
fn povm_sdp(b: &[CMatrix]) -> Result<Vec<CMatrix>> {
    let d = b[0].nrows();
    let k = b.len();
    // Parameters of each element: d diagonal reals, then for r < c the real and imaginary parts.
    let per = d * d;
    let diag = |a: usize, r: usize| a * per + r;
    let pair = |a: usize, r: usize, c: usize| {
        // index of (r, c), r < c, among the d(d−1)/2 pairs
        let idx = r * d - r * (r + 1) / 2 + (c - r - 1);
        (a * per + d + 2 * idx, a * per + d + 2 * idx + 1)
    };
    let mut objective = vec![0.0; k * per];
    for (a, ba) in b.iter().enumerate() {
        for r in 0..d {
            objective[diag(a, r)] = ba[(r, r)].re;
            for c in r + 1..d {
                let (xr, yi) = pair(a, r, c);
                // M_rc B_cr + M_cr B_rc = 2 (x Re B_cr − y Im B_cr)
                objective[xr] = 2.0 * ba[(c, r)].re;
                objective[yi] = -2.0 * ba[(c, r)].im;
            }
        }
    }
    // Σ_a M_a = I, parameter by parameter.
    let mut equalities = Vec::new();
    for r in 0..d {
        equalities.push(((0..k).map(|a| (diag(a, r), 1.0)).collect(), 1.0));
        for c in r + 1..d {
            let re: Vec<(usize, f64)> = (0..k).map(|a| (pair(a, r, c).0, 1.0)).collect();
            let im: Vec<(usize, f64)> = (0..k).map(|a| (pair(a, r, c).1, 1.0)).collect();
            equalities.push((re, 0.0));
            equalities.push((im, 0.0));
        }
    }
    let x_entry = |a: usize, r: usize, c: usize| -> (usize, f64) {
        if r == c {
            (diag(a, r), 1.0)
        } else {
            (pair(a, r.min(c), r.max(c)).0, 1.0)
        }
    };
    // Y is antisymmetric: Y[r][c] = y_rc for r < c, −y_cr for r > c.
    let y_entry = |a: usize, r: usize, c: usize| -> Option<(usize, f64)> {
        match r.cmp(&c) {
            std::cmp::Ordering::Less => Some((pair(a, r, c).1, 1.0)),
            std::cmp::Ordering::Greater => Some((pair(a, c, r).1, -1.0)),
            std::cmp::Ordering::Equal => None,
        }
    };
    let blocks = (0..k)
        .map(|a| {
            let n2 = 2 * d;
            let mut upper = vec![AffineEntry::default(); n2 * (n2 + 1) / 2];
            for col in 0..n2 {
                for row in 0..=col {
                    let term = if col < d {
                        Some(x_entry(a, row, col))
                    } else if row >= d {
                        Some(x_entry(a, row - d, col - d))
                    } else {
                        // top-right block: −Y[row][col − d]
                        y_entry(a, row, col - d).map(|(v, s)| (v, -s))
                    };
                    upper[upper_index(row, col)] = AffineEntry {
                        constant: 0.0,
                        terms: term.into_iter().collect(),
                    };
                }
            }
            MatrixBlock {
                size: n2,
                upper,
                trace_bound: 2.0 * d as f64,
            }
        })
        .collect();
    let problem = SdpProblem {
        variables: k * per,
        objective,
        equalities,
        blocks,
        variable_bound: 1.0,
        ..Default::default()
    };
    let sol =
        crate::optim::backend::solve(&problem, Backend::Clarabel, "see-saw measurement step")?;
    let mut povm = Vec::with_capacity(k);
    for a in 0..k {
        let mut m = CMatrix::zeros(d, d);
        for r in 0..d {
            m[(r, r)] = Complex64::new(sol.y[diag(a, r)], 0.0);
            for c in r + 1..d {
                let (xr, yi) = pair(a, r, c);
                m[(r, c)] = Complex64::new(sol.y[xr], sol.y[yi]);
                m[(c, r)] = Complex64::new(sol.y[xr], -sol.y[yi]);
            }
        }
        povm.push(m);
    }
    Ok(clean_povm(povm))
}

/// One see-saw run from a random start: projective measurements in even restarts, full-rank
/// POVMs in odd ones (different kinds of starting points reach different local optima).
fn run(
    s: &Scenario,
    opts: &SeesawOptions,
    rng: &mut Rng,
    restart: usize,
    deadline: Option<Instant>,
) -> Result<(QuantumStrategy, usize)> {
    let out_of_time = || deadline.is_some_and(|d| Instant::now() > d);
    let start = if restart.is_multiple_of(2) {
        random_measurement
    } else {
        random_povm
    };
    let mut st = QuantumStrategy {
        dims: opts.dims.clone(),
        state: random_state(opts.dims.iter().product(), rng),
        measurements: s
            .parties()
            .iter()
            .enumerate()
            .map(|(i, p)| {
                (0..p.questions())
                    .map(|_| start(opts.dims[i], p.answers(), rng))
                    .collect()
            })
            .collect(),
    };
    let mut value = optimise_state(s, &mut st);
    let mut rounds = 0;
    while rounds < opts.max_rounds && !crate::limits::stop_requested() && !out_of_time() {
        rounds += 1;
        let before = value;
        for player in 0..s.players() {
            let b = effective_operators(s, &st, player);
            let mut candidate = st.clone();
            for (x, bx) in b.iter().enumerate() {
                // A measurement SDP that fails numerically leaves that measurement as it
                // was: the step is then not optimal, but the value still cannot decrease.
                if let Ok(povm) = best_povm(bx) {
                    candidate.measurements[player][x] = povm;
                }
            }
            let v = candidate.value(s);
            if v >= value - 1e-12 {
                st = candidate;
                value = v;
            }
        }
        let v = optimise_state(s, &mut st);
        if v >= value - 1e-12 {
            value = v;
        }
        if value - before < opts.tolerance {
            break;
        }
    }
    Ok((st, rounds))
}

/// Runs the see-saw with random restarts in parallel; `progress` gets (done, total).
pub fn seesaw(
    s: &Scenario,
    opts: &SeesawOptions,
    progress: Option<&(dyn Fn(usize, usize) + Sync)>,
) -> Result<SeesawResult> {
    let start = Instant::now();
    let chosen;
    let opts = if opts.dims.is_empty() {
        chosen = SeesawOptions {
            dims: default_dims(s),
            ..opts.clone()
        };
        &chosen
    } else {
        opts
    };
    if opts.dims.len() != s.players() {
        return Err(Error::InvalidArgument(format!(
            "give one dimension per player ({}), got {}",
            s.players(),
            opts.dims.len()
        )));
    }
    if opts.dims.contains(&0) || opts.restarts == 0 {
        return Err(Error::InvalidArgument(
            "dimensions and restarts must be at least 1".into(),
        ));
    }
    let total: usize = opts.dims.iter().product();
    if total > MAX_JOINT_DIMENSION {
        return Err(Error::TooLarge {
            what: "the see-saw".into(),
            estimate: format!(
                "joint dimension {total}: a dense {total}×{total} Bell operator per round"
            ),
            hint: format!("use smaller local dimensions (joint at most {MAX_JOINT_DIMENSION})"),
        });
    }
    let seconds = estimate_seconds(s, opts);
    if seconds > SECONDS_LIMIT && !opts.limits.force {
        return Err(Error::TooLarge {
            what: "the see-saw".into(),
            estimate: format!(
                "dims {:?}, {} restarts: roughly {} (rule of thumb)",
                opts.dims,
                opts.restarts,
                crate::limits::human_seconds(seconds)
            ),
            hint: "use smaller dimensions or fewer restarts, or pass --force".into(),
        });
    }
    let done = AtomicUsize::new(0);
    if opts.max_seconds.is_nan() || opts.max_seconds <= 0.0 {
        return Err(Error::InvalidArgument(format!(
            "the see-saw's time limit must be a positive number of seconds (found {})",
            opts.max_seconds
        )));
    }
    // A limit too far ahead to represent is no limit.
    let deadline = std::time::Duration::try_from_secs_f64(opts.max_seconds)
        .ok()
        .and_then(|d| start.checked_add(d));
    // Restarts after the first are skipped once the computation is asked to stop or the time
    // is up.
    let runs: Vec<Option<Result<(QuantumStrategy, usize)>>> = (0..opts.restarts)
        .into_par_iter()
        .map(|r| {
            let late = deadline.is_some_and(|d| Instant::now() > d);
            if r > 0 && (crate::limits::stop_requested() || late) {
                return None;
            }
            let mut rng = Rng(opts.seed ^ (r as u64).wrapping_mul(0xA076_1D64_78BD_642F));
            let out = run(s, opts, &mut rng, r, deadline);
            let k = done.fetch_add(1, Ordering::Relaxed) + 1;
            if let Some(p) = progress {
                p(k, opts.restarts);
            }
            Some(out)
        })
        .collect();
    let restarts = runs.iter().filter(|r| r.is_some()).count();
    let mut best: Option<(f64, QuantumStrategy, usize)> = None;
    for r in runs.into_iter().flatten() {
        let (st, rounds) = r?;
        let v = st.value(s);
        if best.as_ref().is_none_or(|b| v > b.0 + 1e-12) {
            best = Some((v, st, rounds));
        }
    }
    let (_, strategy, rounds) = best.expect("at least one restart");
    // The reported lower bound is the strategy's value rounded down by its error term, so that
    // rounding can never lift it above the value of a valid strategy.
    let certified = strategy.certified_value(s);
    if !certified.lower.is_finite() {
        return Err(Error::solver(
            "see-saw",
            "the strategy's value is not a finite number",
        ));
    }
    Ok(SeesawResult {
        quantum_lower: certified.lower,
        value_error: certified.error,
        dims: opts.dims.clone(),
        seed: opts.seed,
        restarts,
        rounds,
        seconds: start.elapsed().as_secs_f64(),
        strategy,
    })
}

/// Largest joint dimension [`default_dims`] chooses.
pub const DEFAULT_JOINT_DIMENSION: usize = 64;

/// Local dimensions chosen from the game when none are given: one dimension per answer (optimal
/// strategies for d-answer games often need d dimensions, e.g. CGLMP), at least a qubit and at
/// most 8, then the largest reduced until the joint dimension is at most
/// [`DEFAULT_JOINT_DIMENSION`].
pub fn default_dims(s: &Scenario) -> Vec<usize> {
    let mut dims: Vec<usize> = s
        .parties()
        .iter()
        .map(|p| p.answers().clamp(2, 8))
        .collect();
    while dims.iter().product::<usize>() > DEFAULT_JOINT_DIMENSION {
        let Some(k) = (0..dims.len())
            .filter(|&k| dims[k] > 2)
            .max_by_key(|&k| dims[k])
        else {
            break;
        };
        dims[k] -= 1;
    }
    dims
}
