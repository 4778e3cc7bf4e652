//! Locality test of given correlations: does `p(a|q)` have a local (shared-randomness) model?
//!
//! We compute the critical white-noise visibility `v*`, the largest `v` for which
//! `v·P + (1−v)·U` (U: uniformly random answers) is a mixture of deterministic strategies. `P` is
//! local iff `v* ≥ 1`. We solve the dual LP directly,
//!
//! ```text
//! minimise  U·β   subject to   D_λ·β ≥ 0 for every deterministic strategy λ,   (U − P)·β = 1,
//! ```
//!
//! whose optimum is `v*` by LP duality and whose solution is a separating Bell expression: with
//! `c = −β`, every local behaviour has `c·p ≤ 0` while `c·P = 1 − v*`.

use std::time::Instant;

use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::Limits;
pub use crate::model::correlations::Correlations;
use crate::model::scenario::{digits, index_of};
use crate::optim::lp::{LinearProgram, Relation, VarBounds};

/// Largest number of deterministic strategies enumerated without `force`.
pub const STRATEGY_LIMIT: f64 = 200_000.0;

/// The outcome of a locality test.
#[derive(Debug, Clone, Serialize)]
pub struct LocalityReport {
    /// Whether the correlations as given have a local model (never when they signal).
    pub local: bool,
    /// Critical white-noise visibility v* (≥ 1 iff local; above 1, P is inside the local set).
    pub visibility: f64,
    /// Largest violation of the no-signalling conditions by the input.
    pub signalling: f64,
    /// Deterministic strategies enumerated.
    pub deterministic_strategies: usize,
    /// When the input signals: its projection onto the no-signalling set, on which the test ran.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub projection: Option<NoSignallingProjection>,
    /// Separating Bell expression `c(a|q)` (present when not local): local bound 0.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub separating: Option<SeparatingExpression>,
    /// Wall-clock time.
    pub seconds: f64,
}

impl Correlations {
    /// Largest violation of the no-signalling conditions (0 for physical correlations).
    pub fn signalling(&self) -> f64 {
        let s = self.scenario_shape();
        let mut lp = LinearProgram::new(true);
        for _ in 0..self.p.len() {
            lp.add_var(VarBounds::NONNEGATIVE, 0.0);
        }
        crate::bounds::nosignal::add_no_signalling_rows(&s, &mut lp, 0);
        lp.rows
            .iter()
            .map(|r| (r.terms.iter().map(|&(i, c)| c * self.p[i]).sum::<f64>() - r.rhs).abs())
            .fold(0.0, f64::max)
    }
}

/// A Bell expression that separates the correlations from the local set.
#[derive(Debug, Clone, Serialize)]
pub struct SeparatingExpression {
    /// `c[q * joint_answers + a]`.
    pub coefficients: Vec<f64>,
    /// max over deterministic strategies of c·D (0 up to solver tolerance).
    pub local_bound: f64,
    /// c·P = 1 − v*.
    pub value: f64,
    /// The same separation with small integer coefficients, its local bound and its value on
    /// the correlations proven exactly (absent when no scale up to [`MAX_INTEGER_COEFFICIENT`]
    /// keeps the violation).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub integer: Option<IntegerExpression>,
}

/// A Bell expression with integer coefficients that separates the correlations from the local
/// set, checked in exact arithmetic: `local_bound` is the largest value of any deterministic
/// strategy (every one enumerated, in integers), and `value` the expression's exact value on the
/// correlations as read (each probability the binary64 number the file's decimal became).
#[derive(Debug, Clone, Serialize)]
pub struct IntegerExpression {
    /// `c[q * joint_answers + a]`, integers with no common factor, the smallest of each
    /// question's coefficients 0 (adding a constant to one question's coefficients shifts the
    /// local bound and the value alike).
    pub coefficients: Vec<i64>,
    /// The exact local bound: every local behaviour has `c·p ≤ local_bound`.
    pub local_bound: i64,
    /// `c·P` exactly, as a reduced fraction.
    pub value_fraction: String,
    /// `c·P` rounded down.
    pub value: f64,
    /// `value − local_bound`, rounded down (positive).
    pub violation: f64,
}

/// Largest coefficient an integer separating expression may have.
pub const MAX_INTEGER_COEFFICIENT: i64 = 1000;

/// Signalling below this (in the largest violated no-signalling condition) counts as rounding.
pub const SIGNALLING_TOLERANCE: f64 = 1e-9;

/// The nearest no-signalling behaviour to measured correlations, and how far they were from it.
#[derive(Debug, Clone, Serialize)]
pub struct NoSignallingProjection {
    /// `least squares`, or `minimum Neyman chi-square` when rounds per question are known.
    pub method: ProjectionMethod,
    /// Euclidean distance between the input and the projection (over all p(a|q)).
    pub distance: f64,
    /// Largest change of one probability.
    pub max_change: f64,
    /// Neyman's χ² statistic `Σ_q n_q Σ_a (p̂ − p)² / p̂` at the projection (rounds known only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chi_square: Option<f64>,
    /// Degrees of freedom: the number of independent no-signalling conditions.
    pub degrees_of_freedom: usize,
    /// Asymptotic p-value of "the devices do not signal" (χ² upper tail; rounds known only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub p_value: Option<f64>,
    /// Whether the projection has a local model (the report's visibility and separating
    /// expression are the projection's).
    pub local: bool,
    /// The projected behaviour, `p[q * joint_answers + a]`.
    #[serde(skip)]
    pub behaviour: Vec<f64>,
}

/// How correlations that signal are projected onto the no-signalling set. Serialised as
/// `least squares` or `minimum Neyman chi-square`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum ProjectionMethod {
    /// Euclidean distance over all p(a|q) (no rounds known).
    #[serde(rename = "least squares")]
    LeastSquares,
    /// Neyman's modified χ², weighting each row by its rounds.
    #[serde(rename = "minimum Neyman chi-square")]
    NeymanChiSquare,
}

impl std::fmt::Display for ProjectionMethod {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            ProjectionMethod::LeastSquares => "least squares",
            ProjectionMethod::NeymanChiSquare => "minimum Neyman chi-square",
        })
    }
}

/// Projects correlations onto the no-signalling set. With rounds per question the projection
/// minimises Neyman's modified χ², `Σ_q n_q Σ_a (p̂ − p)²/p̂` (Neyman 1949, "Contribution to the
/// theory of the χ² test", Proc. Berkeley Symp. 1, 239), a weighted least-squares problem whose
/// minimum is asymptotically χ²-distributed with as many degrees of freedom as independent
/// linear conditions under the hypothesis (here: no signalling); empty cells are given
/// p̂ = 1/(2 n_q) in the weights (a common-practice continuity correction). Without rounds it
/// is the plain least-squares projection, and no p-value is given.
pub fn project_no_signalling(c: &Correlations) -> Result<NoSignallingProjection> {
    let s = c.scenario_shape();
    let na = s.joint_answers();
    let mut lp = LinearProgram::new(true);
    for _ in 0..c.p.len() {
        lp.add_var(VarBounds::NONNEGATIVE, 0.0);
    }
    crate::bounds::nosignal::add_no_signalling_rows(&s, &mut lp, 0);
    let weights: Vec<f64> = match &c.rounds {
        Some(n) => {
            c.p.iter()
                .enumerate()
                .map(|(k, &p)| {
                    let nq = n[k / na] as f64;
                    nq / p.max(0.5 / nq)
                })
                .collect()
        }
        None => vec![1.0; c.p.len()],
    };
    let projected = lp.weighted_projection(&c.p, &weights, "no-signalling projection")?;
    let projected: Vec<f64> = projected.iter().map(|v| v.max(0.0)).collect();
    let distance =
        c.p.iter()
            .zip(&projected)
            .map(|(a, b)| (a - b) * (a - b))
            .sum::<f64>()
            .sqrt();
    let max_change =
        c.p.iter()
            .zip(&projected)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
    let free = s.joint_questions() * (na - 1);
    let degrees_of_freedom =
        free.saturating_sub(crate::model::collins_gisin::CollinsGisin::new(&s).variables);
    let chi_square = c.rounds.as_ref().map(|_| {
        c.p.iter()
            .zip(&projected)
            .zip(&weights)
            .map(|((a, b), w)| w * (a - b) * (a - b))
            .sum::<f64>()
    });
    let p_value =
        chi_square.map(|t| crate::stats::chi_square_upper_tail(t, degrees_of_freedom as f64));
    Ok(NoSignallingProjection {
        method: if c.rounds.is_some() {
            ProjectionMethod::NeymanChiSquare
        } else {
            ProjectionMethod::LeastSquares
        },
        distance,
        max_change,
        chi_square,
        degrees_of_freedom,
        p_value,
        local: false,
        behaviour: projected,
    })
}

/// The locality test. Correlations that signal (measured frequencies always do a little) are
/// first projected onto the no-signalling set ([`project_no_signalling`]) and the test runs on
/// the projection; the report carries the distance and, with rounds, the signalling p-value.
pub fn locality_test(c: &Correlations, limits: &Limits) -> Result<LocalityReport> {
    let force = limits.force;
    let signalling = c.signalling();
    if signalling <= SIGNALLING_TOLERANCE {
        let mut report = locality_test_as_given(c, force)?;
        report.signalling = signalling;
        return Ok(report);
    }
    let mut projection = project_no_signalling(c)?;
    let projected = Correlations {
        p: projection.behaviour.clone(),
        ..c.clone()
    };
    let mut report = locality_test_as_given(&projected, force)?;
    // Correlations that signal have no local model themselves, whatever their projection has.
    projection.local = report.local;
    report.local = false;
    report.signalling = signalling;
    report.projection = Some(projection);
    Ok(report)
}

/// How many deterministic strategies the players have (Π answers^questions).
fn deterministic_strategies(c: &Correlations) -> f64 {
    c.parties
        .iter()
        .map(|p| (p.answers() as f64).powi(p.questions() as i32))
        .product()
}

/// Calls `f` with each deterministic strategy's cells: for every joint question q, the index
/// `q * joint_answers + a` of the joint answer a the strategy gives.
fn for_each_deterministic(c: &Correlations, mut f: impl FnMut(&[usize])) {
    for_each_deterministic_while(c, |cells| {
        f(cells);
        true
    });
}

/// [`for_each_deterministic`], stopping as soon as `f` returns false.
fn for_each_deterministic_while(c: &Correlations, mut f: impl FnMut(&[usize]) -> bool) {
    let s = c.scenario_shape();
    let na = s.joint_answers();
    let nq = s.joint_questions();
    let strategy_radices: Vec<usize> = c
        .parties
        .iter()
        .flat_map(|p| std::iter::repeat_n(p.answers(), p.questions()))
        .collect();
    let n_strategies: usize = strategy_radices.iter().product();
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let mut flat = vec![0; strategy_radices.len()];
    let (mut qd, mut ad) = (vec![0; qr.len()], vec![0; qr.len()]);
    let offsets: Vec<usize> = c
        .parties
        .iter()
        .scan(0, |acc, p| {
            let o = *acc;
            *acc += p.questions();
            Some(o)
        })
        .collect();
    let mut cells = vec![0; nq];
    for lambda in 0..n_strategies {
        digits(lambda, &strategy_radices, &mut flat);
        for (q, cell) in cells.iter_mut().enumerate() {
            digits(q, &qr, &mut qd);
            for i in 0..qr.len() {
                ad[i] = flat[offsets[i] + qd[i]];
            }
            *cell = q * na + index_of(&ad, &ar);
        }
        if !f(&cells) {
            return;
        }
    }
}

/// The separating expression `coefficients` scaled to small integers that still separate, the
/// smallest scale first (largest coefficient 1, 2, 3, 4, 5, 6, 8, 10, … up to
/// [`MAX_INTEGER_COEFFICIENT`]), each candidate's local bound and value proven exactly.
pub fn integer_expression(c: &Correlations, coefficients: &[f64]) -> Option<IntegerExpression> {
    use num_rational::BigRational;
    let na = c.scenario_shape().joint_answers();
    // Each question's smallest coefficient moved to 0 (the separation is unchanged).
    let shifted: Vec<f64> = coefficients
        .chunks(na)
        .flat_map(|row| {
            let least = row.iter().copied().fold(f64::INFINITY, f64::min);
            row.iter().map(move |v| v - least)
        })
        .collect();
    // Each candidate enumerates every deterministic strategy again: only within the size the
    // locality test takes without being forced.
    let strategies = deterministic_strategies(c);
    if strategies > STRATEGY_LIMIT {
        return None;
    }
    let largest = shifted.iter().copied().fold(0.0, f64::max);
    if !(largest.is_finite() && largest > 0.0) {
        return None;
    }
    let p: Vec<BigRational> =
        c.p.iter()
            .map(|&v| BigRational::from_float(v))
            .collect::<Option<_>>()?;
    let mut scales = vec![1i64, 2, 3, 4, 5, 6, 8];
    while let Some(&last) = scales.last() {
        if last >= MAX_INTEGER_COEFFICIENT {
            break;
        }
        scales.push((last * 5 / 4).min(MAX_INTEGER_COEFFICIENT));
    }
    let mut tried: Option<Vec<i64>> = None;
    for scale in scales {
        let mut ints: Vec<i64> = shifted
            .iter()
            .map(|v| (v / largest * scale as f64).round() as i64)
            .collect();
        let divisor = ints.iter().fold(0i64, |g, &v| gcd(g, v));
        if divisor > 1 {
            ints.iter_mut().for_each(|v| *v /= divisor);
        }
        if tried.as_ref() == Some(&ints) {
            continue;
        }
        let value: BigRational = ints
            .iter()
            .zip(&p)
            .filter(|(k, _)| **k != 0)
            .map(|(&k, q)| q * BigRational::from_integer(k.into()))
            .sum();
        // A strategy reaching the value rules the candidate out: the enumeration stops there.
        let reach = value.ceil().to_integer();
        let mut local_bound = i64::MIN;
        for_each_deterministic_while(c, |cells| {
            local_bound = local_bound.max(cells.iter().map(|&k| ints[k]).sum());
            num_bigint::BigInt::from(local_bound) < reach
        });
        let margin = &value - BigRational::from_integer(local_bound.into());
        if margin > BigRational::from_integer(0.into()) {
            return Some(IntegerExpression {
                value_fraction: format!("{}/{}", value.numer(), value.denom()),
                value: crate::optim::exact::round_down(&value),
                violation: crate::optim::exact::round_down(&margin),
                coefficients: ints,
                local_bound,
            });
        }
        tried = Some(ints);
    }
    None
}

fn gcd(a: i64, b: i64) -> i64 {
    let (mut a, mut b) = (a.abs(), b.abs());
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

/// Runs the locality LP on correlations taken as given; the caller fills in `signalling`.
/// `force` skips the refusal on very many deterministic strategies.
fn locality_test_as_given(c: &Correlations, force: bool) -> Result<LocalityReport> {
    let start = Instant::now();
    let s = c.scenario_shape();
    let strategies = deterministic_strategies(c);
    if strategies > STRATEGY_LIMIT && !force {
        return Err(Error::TooLarge {
            what: "the locality LP".into(),
            estimate: format!("{strategies:.3e} deterministic strategies, one constraint each"),
            hint: "pass --force to try anyway".into(),
        });
    }
    let na = s.joint_answers();
    let nq = s.joint_questions();
    let uniform = 1.0 / na as f64;
    let diff: Vec<f64> = c.p.iter().map(|p| uniform - p).collect();
    if diff.iter().all(|d| d.abs() < 1e-15) {
        // Pure noise: local, and every visibility stays local.
        return Ok(LocalityReport {
            local: true,
            visibility: f64::INFINITY,
            signalling: 0.0,
            deterministic_strategies: strategies as usize,
            projection: None,
            separating: None,
            seconds: start.elapsed().as_secs_f64(),
        });
    }
    let mut lp = LinearProgram::new(false);
    for _ in 0..nq * na {
        lp.add_var(VarBounds::FREE, uniform);
    }
    lp.add_row(
        diff.iter().enumerate().map(|(i, &d)| (i, d)).collect(),
        Relation::Eq,
        1.0,
    );
    let n_strategies = strategies as usize;
    for_each_deterministic(c, |cells| {
        lp.add_row(cells.iter().map(|&k| (k, 1.0)).collect(), Relation::Ge, 0.0);
    });
    // The dual has whole lines of optimal solutions (e.g. shifting all coefficients of one
    // question by a constant and another by minus it), which makes the simplex cycle; the
    // interior-point method is indifferent to that.
    let sol = lp.solve_interior_point("locality LP")?;
    let visibility = sol.objective;
    let local = visibility >= 1.0 - 1e-9;
    let separating = if local {
        None
    } else {
        let coefficients: Vec<f64> = sol
            .x
            .iter()
            .map(|b| if b.abs() < 1e-12 { 0.0 } else { -b })
            .collect();
        let mut local_bound = f64::NEG_INFINITY;
        for_each_deterministic(c, |cells| {
            local_bound = local_bound.max(cells.iter().map(|&k| coefficients[k]).sum());
        });
        let value = coefficients.iter().zip(&c.p).map(|(c, p)| c * p).sum();
        let integer = integer_expression(c, &coefficients);
        Some(SeparatingExpression {
            coefficients,
            local_bound,
            value,
            integer,
        })
    };
    Ok(LocalityReport {
        local,
        visibility,
        signalling: 0.0,
        deterministic_strategies: n_strategies,
        projection: None,
        separating,
        seconds: start.elapsed().as_secs_f64(),
    })
}
