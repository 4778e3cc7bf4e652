//! Finite-size figures by entropy accumulation, for spot-checking protocols.
//!
//! The protocol: n rounds in sequence; in each, independently, a test round with probability
//! γ (questions drawn from the game's question distribution, every player's answers announced
//! and scored) or a generation round (the target questions). The run is accepted when the test
//! rounds' total shortfall Σ (w_max − score) is at most n·γ·(w_max − S_thr), which says the
//! tests scored about S_thr per test round or more.
//!
//! **Min-tradeoff function.** The entropy hierarchy gives an affine bound H(A|X=x*, E) ≥
//! a + b·S valid at every quantum score S (its [`MinTradeoff`](crate::bounds::entropy::MinTradeoff)).
//! Per round, the entropy of all players' answers given the questions, the test flag and E is
//! at least (1 − γ)·H(A|X=x*, E) (test rounds contribute ≥ 0), so g(S) = (1 − γ)(a + b·S) is a
//! per-round bound. On the round's register C ∈ {⊥} ∪ {scores}, the affine function
//! f(δ_⊥) = g(w_max), f(δ_c) = g(w_max) + b'(c − w_max)/γ (b' the slope of g) has f(q) = g(S)
//! on every distribution the protocol produces (C = ⊥ with probability 1 − γ), so it is a
//! min-tradeoff function. Its constants:
//! Max(f) = g(w_max), Min(f) = g(w_max) − b'Δ/γ with Δ = w_max − w_min,
//! Min_Σ(f) = g(S_min) (the lowest score any behaviour reaches), and
//! Var(f) ≤ E[(f − g(w_max))²] ≤ b'²Δ²/γ. On the accepted event f(freq) ≥ g(S_thr) = h.
//! This crossover construction is the standard one for spot-checking (Dupuis & Fawzi 2019,
//! section on applications; Arnon-Friedman, Renner & Vidick 2019), reconstructed here.
//!
//! **The statement used** ([`EAT_STATEMENT`]), with d_O the dimension of one round's output
//! register, ε_s the smoothing and ε_EA the pass floor (either the run passes with probability
//! below ε_EA, or the bound holds with p_Ω ≥ ε_EA): for every α ∈ (1, 3/2),
//!
//! H_min^{ε_s}(O^n | I^n E)_{|Ω} ≥ n·h − n·(α−1)/(2−α)·(ln 2/2)·V²
//!     − (g(ε_s) + α·log₂(1/ε_EA))/(α − 1) − n·((α−1)/(2−α))²·K_α,
//!
//! V = √(Var(f) + 2) + log₂(2·d_O² + 1), g(ε) = −log₂(1 − √(1 − ε²)),
//! K_α = (2−α)³ / (6·(3−2α)³·ln 2) · 2^{(α−1)/(2−α)·(2 log₂ d_O + Max(f) − Min_Σ(f))}
//!       · ln³(2^{2 log₂ d_O + Max(f) − Min_Σ(f)} + e²).
//!
//! This is the theorem of Dupuis & Fawzi (IEEE Trans. Inf. Theory 65, 7596 (2019);
//! arXiv:1805.11652) as recalled (from memory): the paper's text could not be consulted when
//! this was written, so a reviewer should compare the constants with the published theorem.
//! Every α gives a valid bound; the code picks the best α numerically.
//!
//! **The original statement** ([`Statement::Original`]), also from memory: for the same f,
//!
//! H_min^{ε_s}(O^n | I^n E)_{|Ω} > n·h − v·√n,  v = 2(log₂(1 + 2 d_O) + ⌈‖∇f‖∞⌉)·√(1 − 2 log₂(ε_s·ε_EA)),
//!
//! with ‖∇f‖∞ the largest |f(δ_c)| over the register's values (Dupuis, Fawzi & Renner 2020;
//! in this form in Arnon-Friedman, Dupuis, Fawzi, Renner & Vidick 2018, Nat. Commun. 9, 459).
//! By default both bounds are computed and the smaller is certified ([`Statement::Smaller`]):
//! a wrong recollection of one statement's constants can then only lower the figure.
//! docs/finite-size-statement.md states both for a reviewer, term by term.
//!
//! Output lengths: randomness ℓ = H_min − 2·log₂(1/ε_ext) (the leftover hash lemma with
//! quantum side information, two-universal hashing); key ℓ = H_min − m·log₂|B| − leak −
//! 2·log₂(1/ε_PA), where the output register also holds the other players' test answers
//! (at most m test rounds are allowed, an abort condition of the protocol) and removing them
//! costs log₂|B| bits each (the chain rule for a classical register), and leak is what error
//! correction and its check disclosed.

use serde::Serialize;

use crate::error::{Error, Result};

/// The entropy accumulation statement the figures use, in words, for the output.
pub const EAT_STATEMENT: &str = "entropy accumulation: the improved second-order statement (Dupuis & Fawzi 2019, IEEE Trans. Inf. Theory 65, 7596; arXiv:1805.11652) and the original statement (Dupuis, Fawzi & Renner 2020, Commun. Math. Phys. 379, 867; arXiv:1607.01796), both with constants as recalled from memory and stated in docs/finite-size-statement.md; crossover min-tradeoff function for spot-checking";

/// The spot-checking protocol the figures are for.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct SpotChecking {
    /// Rounds n.
    pub rounds: u64,
    /// Probability γ that a round is a test round.
    pub testing: f64,
    /// The score per test round the run must reach, S_thr.
    pub threshold: f64,
    /// One test round's score range [w_min, w_max].
    pub score_range: (f64, f64),
    /// The lowest score any behaviour reaches (where Min_Σ(f) is taken).
    pub lowest_score: f64,
    /// Dimension of one round's output register d_O.
    pub output_dimension: f64,
}

/// Which entropy accumulation statement certifies the smooth min-entropy. Both are recalled
/// from memory (module notes); by default both are evaluated and the smaller bound certified.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Statement {
    /// The smaller of the two bounds (the default: a wrong recollection of either constant
    /// can then only lower the figure, unless both are wrong).
    #[default]
    Smaller,
    /// The improved second-order statement (Dupuis & Fawzi 2019).
    ImprovedSecondOrder,
    /// The original statement, first-order term minus a √n correction (Dupuis, Fawzi & Renner
    /// 2020; Arnon-Friedman, Dupuis, Fawzi, Renner & Vidick 2018).
    Original,
}

impl Statement {
    /// From its name: `smaller`, `improved-second-order` or `original`.
    pub fn parse(name: &str) -> Result<Statement> {
        match name {
            "smaller" => Ok(Statement::Smaller),
            "improved-second-order" => Ok(Statement::ImprovedSecondOrder),
            "original" => Ok(Statement::Original),
            other => Err(Error::InvalidArgument(format!(
                "unknown statement `{other}` (expected smaller, improved-second-order or original)"
            ))),
        }
    }
}

/// The original statement's correction (module notes): H_min ≥ n·h − v·√n with
/// v = 2(log₂(1 + 2 d_O) + ⌈‖∇f‖∞⌉)·√(1 − 2 log₂(ε_s·ε_EA)).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct OriginalTerms {
    /// ‖∇f‖∞, taken as max(|Max(f)|, |Min(f)|) (the largest value of the affine f on a
    /// vertex: an upper bound on any gradient representation's largest entry that the
    /// statement could mean, so at worst too cautious).
    pub gradient_bound: f64,
    /// v.
    pub v: f64,
    /// v·√n.
    pub correction: f64,
}

/// The original statement's terms for n rounds.
pub fn original_terms(
    n: f64,
    tradeoff: &CrossoverTradeoff,
    d: f64,
    security: &SecurityParameters,
) -> OriginalTerms {
    let gradient_bound = tradeoff.max.abs().max(tradeoff.min.abs());
    let v = 2.0
        * ((1.0 + 2.0 * d).log2() + gradient_bound.ceil())
        * (1.0 - 2.0 * (security.smoothing.log2() + security.pass_floor.log2())).sqrt();
    OriginalTerms {
        gradient_bound,
        v,
        correction: v * n.sqrt(),
    }
}

/// The protocol's error parameters.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct SecurityParameters {
    /// Smoothing parameter ε_s of the smooth min-entropy.
    pub smoothing: f64,
    /// Pass floor ε_EA: the bound is claimed for runs that pass with probability at least this.
    pub pass_floor: f64,
    /// Error of the randomness extractor or privacy amplification, ε_ext.
    pub extraction: f64,
    /// Which statement certifies (default: the smaller of both).
    pub statement: Statement,
}

impl Default for SecurityParameters {
    /// 10⁻⁹ each: our default, not a standard; protocols state their own.
    fn default() -> Self {
        SecurityParameters {
            smoothing: 1e-9,
            pass_floor: 1e-9,
            extraction: 1e-9,
            statement: Statement::Smaller,
        }
    }
}

/// What is subtracted from the smooth min-entropy besides the extractor's 2·log₂(1/ε_ext).
#[derive(Debug, Clone, Copy, Serialize, Default)]
pub struct Disclosure {
    /// Bits for removing the other players' test answers from the output register
    /// (m·log₂|B|; 0 for randomness, where every answer is output).
    pub test_answers: f64,
    /// Bits disclosed by error correction (0 for randomness).
    pub error_correction: f64,
    /// Bits of the verification hash that checks error correction (0 for randomness).
    pub verification_hash: f64,
}

/// The crossover min-tradeoff function's constants.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct CrossoverTradeoff {
    /// Intercept of g(S) = intercept + slope·S, the per-round bound including the (1 − γ)
    /// factor, in bits.
    pub intercept: f64,
    /// Slope of g, bits per unit of score (≥ 0).
    pub slope: f64,
    /// Max(f) = f(δ_⊥) = g(w_max).
    pub max: f64,
    /// Min(f) over all of C.
    pub min: f64,
    /// Min_Σ(f): the least f over the distributions the protocol can produce.
    pub min_achievable: f64,
    /// The bound on Var(f) used: slope²·Δ²/γ.
    pub variance: f64,
}

/// The terms of the finite-size bound, in bits.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct SecondOrder {
    /// The Rényi parameter α chosen.
    pub alpha: f64,
    /// V.
    pub v: f64,
    /// K_α.
    pub k_alpha: f64,
    /// n·(α−1)/(2−α)·(ln 2/2)·V².
    pub variance_term: f64,
    /// (g(ε_s) + α·log₂(1/ε_EA))/(α − 1).
    pub error_term: f64,
    /// n·((α−1)/(2−α))²·K_α.
    pub third_order_term: f64,
}

/// What a run of n rounds certifies.
#[derive(Debug, Clone, Serialize)]
pub struct Accumulation {
    /// The statement used.
    pub statement: &'static str,
    /// The protocol.
    pub protocol: SpotChecking,
    /// The error parameters.
    pub security: SecurityParameters,
    /// The most total shortfall Σ (w_max − score) over test rounds an accepted run may have.
    pub shortfall_allowed: f64,
    /// The min-tradeoff function.
    pub tradeoff: CrossoverTradeoff,
    /// h = g(S_thr): the per-round entropy the accepted run is credited with, and the limit of
    /// the rate per round as n grows.
    pub asymptotic_rate: f64,
    /// n·h, the first-order term.
    pub first_order: f64,
    /// The second-order terms at the α chosen.
    pub second_order: SecondOrder,
    /// The original statement's terms.
    pub original: OriginalTerms,
    /// n·h minus the improved second-order terms (before the floor at 0).
    pub by_improved_second_order: f64,
    /// n·h minus the original statement's correction (before the floor at 0).
    pub by_original: f64,
    /// The statement whose bound was certified.
    pub certified_by: Statement,
    /// Lower bound on H_min^{ε_s}(O^n | I^n E) given the run passed, in bits (0 when the
    /// second-order terms exceed the first-order term: nothing certified).
    pub smooth_min_entropy: f64,
    /// What is subtracted besides the extractor's term.
    pub disclosure: Disclosure,
    /// Certified output length ⌊H_min − disclosure − 2·log₂(1/ε_ext)⌋, at least 0.
    pub output_bits: f64,
    /// `output_bits / n`.
    pub rate_per_round: f64,
}

fn finite(name: &str, x: f64) -> Result<f64> {
    if x.is_finite() {
        Ok(x)
    } else {
        Err(Error::InvalidArgument(format!(
            "{name} must be a finite number, got {x}"
        )))
    }
}

fn probability_open(name: &str, x: f64) -> Result<f64> {
    if x > 0.0 && x < 1.0 {
        Ok(x)
    } else {
        Err(Error::InvalidArgument(format!(
            "{name} must be strictly between 0 and 1, got {x}"
        )))
    }
}

impl SpotChecking {
    /// Refuses a protocol the figures cannot be computed for: no rounds, γ outside (0, 1], a
    /// non-finite or out-of-range threshold, a degenerate score range, d_O < 2.
    pub fn check(&self) -> Result<()> {
        if self.rounds == 0 {
            return Err(Error::InvalidArgument(
                "the number of rounds must be positive".into(),
            ));
        }
        if !(self.testing > 0.0 && self.testing <= 1.0) {
            return Err(Error::InvalidArgument(format!(
                "the testing probability must be in (0, 1], got {}",
                self.testing
            )));
        }
        let (lo, hi) = self.score_range;
        finite("the score range", lo)?;
        finite("the score range", hi)?;
        finite("the lowest score", self.lowest_score)?;
        finite("the threshold", self.threshold)?;
        if hi <= lo {
            return Err(Error::InvalidArgument(format!(
                "the test rounds' score range [{lo}, {hi}] is empty: tests cannot tell strategies apart"
            )));
        }
        if self.threshold < lo || self.threshold > hi {
            return Err(Error::InvalidArgument(format!(
                "the threshold {} is outside the test rounds' score range [{lo}, {hi}]",
                self.threshold
            )));
        }
        if !self.output_dimension.is_finite() || self.output_dimension < 2.0 {
            return Err(Error::InvalidArgument(format!(
                "the output register needs at least 2 values, got {}",
                self.output_dimension
            )));
        }
        Ok(())
    }
}

impl SecurityParameters {
    /// Each parameter strictly between 0 and 1.
    pub fn check(&self) -> Result<()> {
        probability_open("the smoothing parameter", self.smoothing)?;
        probability_open("the pass floor", self.pass_floor)?;
        probability_open("the extractor error", self.extraction)?;
        Ok(())
    }
}

/// The crossover min-tradeoff function of a protocol from the hierarchy's line
/// H(A|X=x*, E) ≥ `intercept + slope·S` (valid at every quantum score). A negative slope (no
/// gain from a higher score) is replaced by the flat line at the lower of the line's values at
/// the lowest and highest scores, which is still below the bound there.
pub fn crossover(
    protocol: &SpotChecking,
    line_intercept: f64,
    line_slope: f64,
    highest_score: f64,
) -> Result<CrossoverTradeoff> {
    protocol.check()?;
    finite("the min-tradeoff intercept", line_intercept)?;
    finite("the min-tradeoff slope", line_slope)?;
    let (mut a, mut b) = (line_intercept, line_slope);
    if b < 0.0 {
        a = (a + b * protocol.lowest_score).min(a + b * highest_score);
        b = 0.0;
    }
    let keep = 1.0 - protocol.testing;
    let (intercept, slope) = (keep * a, keep * b);
    let g = |s: f64| intercept + slope * s;
    let (lo, hi) = protocol.score_range;
    let range = hi - lo;
    Ok(CrossoverTradeoff {
        intercept,
        slope,
        max: g(hi),
        min: g(hi) - slope * range / protocol.testing,
        min_achievable: g(protocol.lowest_score.max(lo)),
        variance: slope * slope * range * range / protocol.testing,
    })
}

/// g(ε) = −log₂(1 − √(1 − ε²)), with 1 − √(1 − ε²) written as ε²/(1 + √(1 − ε²)) so that a
/// tiny ε does not cancel (or underflow) to 0: g(ε) = −2·log₂ε + log₂(1 + √(1 − ε²)).
fn smoothing_cost(eps: f64) -> f64 {
    -2.0 * eps.log2() + (1.0 + (1.0 - eps * eps).sqrt()).log2()
}

/// ln(2^x + e²) without overflow for large x.
fn ln_two_power_plus_e2(x: f64) -> f64 {
    let e2 = std::f64::consts::E * std::f64::consts::E;
    if x * std::f64::consts::LN_2 > 40.0 {
        x * std::f64::consts::LN_2 + (e2 * (-x * std::f64::consts::LN_2).exp()).ln_1p()
    } else {
        (2f64.powf(x) + e2).ln()
    }
}

/// The second-order terms at one α.
fn terms_at(
    alpha: f64,
    n: f64,
    tradeoff: &CrossoverTradeoff,
    d: f64,
    security: &SecurityParameters,
) -> SecondOrder {
    let ln2 = std::f64::consts::LN_2;
    let v = (tradeoff.variance + 2.0).sqrt() + (2.0 * d * d + 1.0).log2();
    let spread = 2.0 * d.log2() + (tradeoff.max - tradeoff.min_achievable).max(0.0);
    let r = (alpha - 1.0) / (2.0 - alpha);
    let k_alpha = (2.0 - alpha).powi(3) / (6.0 * (3.0 - 2.0 * alpha).powi(3) * ln2)
        * 2f64.powf(r * spread)
        * ln_two_power_plus_e2(spread).powi(3);
    let error_term = (smoothing_cost(security.smoothing)
        + alpha * (1.0 / security.pass_floor).log2())
        / (alpha - 1.0);
    SecondOrder {
        alpha,
        v,
        k_alpha,
        variance_term: n * r * ln2 / 2.0 * v * v,
        error_term,
        third_order_term: n * r * r * k_alpha,
    }
}

fn penalty(t: &SecondOrder) -> f64 {
    t.variance_term + t.error_term + t.third_order_term
}

/// The α ∈ (1, 3/2) with the smallest second-order penalty: a log-spaced scan of α − 1 over
/// [10⁻¹², 0.4999], refined by golden-section search. Any α gives a valid bound, so the search's
/// accuracy affects only how tight the figure is.
fn best_terms(
    n: f64,
    tradeoff: &CrossoverTradeoff,
    d: f64,
    security: &SecurityParameters,
) -> SecondOrder {
    let at = |log_beta: f64| terms_at(1.0 + log_beta.exp(), n, tradeoff, d, security);
    let (lo, hi) = ((1e-12f64).ln(), (0.4999f64).ln());
    let steps = 240;
    let grid = |k: usize| lo + (hi - lo) * k as f64 / steps as f64;
    let best_k = (0..=steps)
        .min_by(|&i, &j| penalty(&at(grid(i))).total_cmp(&penalty(&at(grid(j)))))
        .unwrap_or(0);
    let (mut a, mut b) = (
        grid(best_k.saturating_sub(1)),
        grid((best_k + 1).min(steps)),
    );
    let phi = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..80 {
        let c = b - phi * (b - a);
        let e = a + phi * (b - a);
        if penalty(&at(c)) <= penalty(&at(e)) {
            b = e;
        } else {
            a = c;
        }
    }
    let refined = at((a + b) / 2.0);
    let scanned = at(grid(best_k));
    if penalty(&refined) <= penalty(&scanned) {
        refined
    } else {
        scanned
    }
}

/// What a run of `protocol.rounds` rounds certifies, with the min-tradeoff function
/// `tradeoff` (from [`crossover`]), given what is disclosed.
pub fn accumulate(
    protocol: &SpotChecking,
    tradeoff: &CrossoverTradeoff,
    security: &SecurityParameters,
    disclosure: Disclosure,
) -> Result<Accumulation> {
    protocol.check()?;
    security.check()?;
    finite("the disclosed bits", disclosure.error_correction)?;
    finite("the verification hash", disclosure.verification_hash)?;
    if disclosure.error_correction < 0.0
        || disclosure.test_answers < 0.0
        || disclosure.verification_hash < 0.0
    {
        return Err(Error::InvalidArgument(
            "disclosed bits cannot be negative".into(),
        ));
    }
    let n = protocol.rounds as f64;
    let (_, hi) = protocol.score_range;
    let h = tradeoff.intercept + tradeoff.slope * protocol.threshold;
    let second_order = best_terms(n, tradeoff, protocol.output_dimension, security);
    let original = original_terms(n, tradeoff, protocol.output_dimension, security);
    let first_order = n * h;
    let finite_terms = [
        second_order.variance_term,
        second_order.error_term,
        second_order.third_order_term,
        original.correction,
        first_order,
    ];
    if finite_terms.iter().any(|x| !x.is_finite()) {
        return Err(Error::InvalidArgument(format!(
            "the statements' terms overflow double precision (testing probability {:e}, {} rounds): use a testing probability whose rounds' tests are not vanishingly few",
            protocol.testing, protocol.rounds
        )));
    }
    // Floating-point slack: a relative 1e-12 of every term (each is computed to ~1e-15).
    let by_improved_second_order = first_order
        - penalty(&second_order)
        - (1e-12 * (first_order.abs() + penalty(&second_order)) + 1e-9);
    let by_original = first_order
        - original.correction
        - (1e-12 * (first_order.abs() + original.correction) + 1e-9);
    let (raw, certified_by) = match security.statement {
        Statement::ImprovedSecondOrder => {
            (by_improved_second_order, Statement::ImprovedSecondOrder)
        }
        Statement::Original => (by_original, Statement::Original),
        Statement::Smaller if by_original < by_improved_second_order => {
            (by_original, Statement::Original)
        }
        Statement::Smaller => (by_improved_second_order, Statement::ImprovedSecondOrder),
    };
    // A min-entropy is never negative: a bound below 0 certifies nothing and is stated as 0.
    // Nor is it above n·log₂ d_O, the register's size.
    let smooth_min_entropy = raw.max(0.0).min(n * protocol.output_dimension.log2());
    let extractor = 2.0 * (1.0 / security.extraction).log2();
    let output = smooth_min_entropy
        - disclosure.test_answers
        - disclosure.error_correction
        - disclosure.verification_hash
        - extractor;
    let output_bits = output.floor().max(0.0);
    Ok(Accumulation {
        statement: EAT_STATEMENT,
        protocol: *protocol,
        security: *security,
        shortfall_allowed: n * protocol.testing * (hi - protocol.threshold),
        tradeoff: *tradeoff,
        asymptotic_rate: h,
        first_order,
        second_order,
        original,
        by_improved_second_order,
        by_original,
        certified_by,
        smooth_min_entropy,
        disclosure,
        output_bits,
        rate_per_round: output_bits / n,
    })
}

/// What is disclosed in a run of n rounds (grows with n; see [`rate_curve`]).
pub type DisclosureAt<'a> = &'a dyn Fn(u64) -> Disclosure;

/// The certified rate per round at n rounds.
fn rate_at(
    rounds: u64,
    protocol: &SpotChecking,
    tradeoff: &CrossoverTradeoff,
    security: &SecurityParameters,
    disclosure: DisclosureAt,
) -> Result<f64> {
    let p = SpotChecking {
        rounds,
        ..*protocol
    };
    Ok(accumulate(&p, tradeoff, security, disclosure(rounds))?.rate_per_round)
}

/// The rate per round at each of `rounds`.
pub fn rate_curve(
    rounds: &[u64],
    protocol: &SpotChecking,
    tradeoff: &CrossoverTradeoff,
    security: &SecurityParameters,
    disclosure: DisclosureAt,
) -> Result<Vec<(u64, f64)>> {
    rounds
        .iter()
        .map(|&n| Ok((n, rate_at(n, protocol, tradeoff, security, disclosure)?)))
        .collect()
}

/// The largest run the search for [`rounds_for_fraction`] considers.
pub const MAX_ROUNDS_SEARCHED: u64 = 1_000_000_000_000_000;

/// The fewest rounds at which the certified rate reaches `fraction` of its limit
/// `limit_rate`; None when the limit is not positive or more than [`MAX_ROUNDS_SEARCHED`]
/// rounds would be needed. The rate is increasing in n when the disclosure per round does not
/// grow with n (every second-order term per round decreases), which bisection relies on.
pub fn rounds_for_fraction(
    fraction: f64,
    limit_rate: f64,
    protocol: &SpotChecking,
    tradeoff: &CrossoverTradeoff,
    security: &SecurityParameters,
    disclosure: DisclosureAt,
) -> Result<Option<u64>> {
    probability_open("the fraction of the asymptotic rate", fraction)?;
    if limit_rate.is_nan() || limit_rate <= 0.0 {
        return Ok(None);
    }
    let goal = fraction * limit_rate;
    let reaches = |n: u64| -> Result<bool> {
        Ok(rate_at(n, protocol, tradeoff, security, disclosure)? >= goal)
    };
    if !reaches(MAX_ROUNDS_SEARCHED)? {
        return Ok(None);
    }
    let (mut lo, mut hi) = (1u64, MAX_ROUNDS_SEARCHED);
    if reaches(lo)? {
        return Ok(Some(lo));
    }
    // Geometric bisection while the bracket spans more than a factor 2, then arithmetic.
    while hi - lo > 1 {
        let mid = if hi / lo > 2 {
            ((lo as f64).sqrt() * (hi as f64).sqrt()) as u64
        } else {
            lo + (hi - lo) / 2
        }
        .clamp(lo + 1, hi - 1);
        if reaches(mid)? {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Ok(Some(hi))
}

/// The most test rounds m a protocol of n rounds allows before aborting, chosen so that honest
/// runs exceed it with probability at most `abort`: the number of test rounds is binomial with
/// mean μ = nγ, and P(X ≥ (1 + δ)μ) ≤ exp(−δ²μ/(2 + δ)) (multiplicative Chernoff bound), so
/// δ = (L + √(L² + 8μL))/(2μ) with L = ln(1/abort) suffices. Never more than n.
pub fn max_test_rounds(rounds: u64, testing: f64, abort: f64) -> u64 {
    let mu = rounds as f64 * testing;
    let l = (1.0 / abort).ln();
    if mu <= 0.0 {
        return 0;
    }
    let delta = (l + (l * l + 8.0 * mu * l).sqrt()) / (2.0 * mu);
    ((mu * (1.0 + delta)).ceil() as u64).min(rounds)
}

/// log₁₀ of an upper bound on the probability that honest devices scoring `expected` per test
/// round on average fail the test (a logarithm, since the bound underflows for long runs): the
/// test shortfalls D_i = [test]·(w_max − score) are i.i.d. in [0, Δ] with mean γ(w_max − S)
/// and E(D²) ≤ γΔ(w_max − S); the lesser of Hoeffding's and Bernstein's inequalities for
/// Σ D_i exceeding n·γ·(w_max − S_thr). 0 (probability 1) when S ≤ S_thr.
pub fn completeness_error_log10(protocol: &SpotChecking, expected: f64) -> Result<f64> {
    protocol.check()?;
    finite("the expected score", expected)?;
    let (lo, hi) = protocol.score_range;
    if expected < lo || expected > hi {
        return Err(Error::InvalidArgument(format!(
            "the expected score {expected} is outside the test rounds' score range [{lo}, {hi}]"
        )));
    }
    if expected <= protocol.threshold {
        return Ok(0.0);
    }
    let n = protocol.rounds as f64;
    let range = hi - lo;
    let t = n * protocol.testing * (expected - protocol.threshold);
    let hoeffding = -2.0 * t * t / (n * range * range);
    let variance = protocol.testing * range * (hi - expected);
    let bernstein = -t * t / (2.0 * (n * variance + range * t / 3.0));
    Ok((hoeffding.min(bernstein) / std::f64::consts::LN_10).min(0.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chsh_like(rounds: u64, testing: f64) -> SpotChecking {
        SpotChecking {
            rounds,
            testing,
            threshold: 0.84,
            score_range: (0.0, 1.0),
            lowest_score: 0.0,
            output_dimension: 4.0,
        }
    }

    #[test]
    fn crossover_matches_the_line_on_protocol_distributions() {
        let p = chsh_like(1000, 0.1);
        // A line a + b·S, and a test-round score distribution with mean S.
        let (a, b) = (-4.0, 5.5);
        let f = crossover(&p, a, b, 0.86).unwrap();
        let q_win = 0.83;
        let f_win = f.max; // f(δ_1) = g(1) = Max(f)
        let f_lose = f.max - f.slope * 1.0 / p.testing;
        let f_none = f.max;
        let value =
            (1.0 - p.testing) * f_none + p.testing * (q_win * f_win + (1.0 - q_win) * f_lose);
        let g = 0.9 * (a + b * q_win);
        assert!((value - g).abs() < 1e-12, "{value} vs {g}");
        assert!((f.min - f_lose).abs() < 1e-12);
        // Var(f) under that distribution is below the bound used.
        let mean = value;
        let var = (1.0 - p.testing) * (f_none - mean).powi(2)
            + p.testing * q_win * (f_win - mean).powi(2)
            + p.testing * (1.0 - q_win) * (f_lose - mean).powi(2);
        assert!(var <= f.variance + 1e-12, "{var} vs {}", f.variance);
    }

    #[test]
    fn smoothing_cost_does_not_cancel() {
        // 1 − √(1 − ε²) ≈ ε²/2 for small ε: g(ε) ≈ log₂(2/ε²).
        let eps: f64 = 1e-12;
        assert!((smoothing_cost(eps) - (2.0 / (eps * eps)).log2()).abs() < 1e-9);
        assert!(smoothing_cost(1e-200).is_finite());
    }

    #[test]
    fn rate_grows_with_rounds_towards_the_limit() {
        let p = chsh_like(1, 0.05);
        let f = crossover(&p, -4.0, 5.5, 0.86).unwrap();
        let s = SecurityParameters::default();
        let h = f.intercept + f.slope * p.threshold;
        let none = |_: u64| Disclosure::default();
        let curve = rate_curve(
            &[
                1_000_000,
                10_000_000,
                100_000_000,
                1_000_000_000,
                100_000_000_000,
            ],
            &p,
            &f,
            &s,
            &none,
        )
        .unwrap();
        for w in curve.windows(2) {
            assert!(w[1].1 >= w[0].1, "{curve:?}");
        }
        let last = curve.last().unwrap().1;
        assert!(last < h && last > 0.9 * h, "{last} vs {h}");
        let n90 = rounds_for_fraction(0.9, h, &p, &f, &s, &none)
            .unwrap()
            .unwrap();
        assert!(rate_at(n90, &p, &f, &s, &none).unwrap() >= 0.9 * h);
        assert!(rate_at(n90 - 1, &p, &f, &s, &none).unwrap() < 0.9 * h);
    }

    #[test]
    fn test_round_cap_holds_with_the_chernoff_margin() {
        // μ = 10⁶·0.01 = 10⁴; with L = ln 10⁹ ≈ 20.7, δ ≈ 0.0656 (by hand), so m ≈ 10,656.
        let m = max_test_rounds(1_000_000, 0.01, 1e-9);
        assert!((10_600..=10_700).contains(&m), "{m}");
        assert_eq!(max_test_rounds(10, 0.5, 1e-9), 10);
    }

    #[test]
    fn completeness_shrinks_with_rounds() {
        let small = completeness_error_log10(&chsh_like(10_000, 0.1), 0.85).unwrap();
        let large = completeness_error_log10(&chsh_like(10_000_000, 0.1), 0.85).unwrap();
        assert!(large < small && large < -9.0, "{small} {large}");
        assert_eq!(
            completeness_error_log10(&chsh_like(100, 0.1), 0.80).unwrap(),
            0.0
        );
        // Hoeffding by hand at n = 10⁴, γ = 0.1, S − S_thr = 0.01, Δ = 1: t = 10,
        // exponent −2·100/10⁴ = −0.02; Bernstein: variance 0.1·0.15 = 0.015,
        // −100/(2·(150 + 10/3)) = −0.3261; the lesser is Bernstein's.
        assert!(
            (small - (-100.0 / (2.0 * (150.0 + 10.0 / 3.0))) / std::f64::consts::LN_10).abs()
                < 1e-12
        );
    }

    #[test]
    fn bad_parameters_are_refused() {
        let mut p = chsh_like(100, 0.1);
        p.testing = 0.0;
        assert!(p.check().is_err());
        p.testing = f64::NAN;
        assert!(p.check().is_err());
        let p = chsh_like(0, 0.1);
        assert!(p.check().is_err());
        let mut p = chsh_like(100, 0.1);
        p.threshold = 1.5;
        assert!(p.check().is_err());
        let s = SecurityParameters {
            smoothing: 0.0,
            ..Default::default()
        };
        assert!(s.check().is_err());
    }
}
