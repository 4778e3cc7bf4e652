//! The no-signalling value: the best score of any behaviour `p(a|q)` whose marginals for every
//! group of players do not depend on the other players' questions. It bounds every quantum
//! (indeed every physical, relativistically causal) strategy from above.
//!
//! The LP is written in Collins–Gisin coordinates (marginals of every group of players, last
//! answers left out), where no-signalling holds by construction and only positivity of every
//! `p(a|q)` is imposed. [`add_no_signalling_rows`] states the same set directly on full
//! probabilities; it serves to measure how much given correlations signal.

use std::time::Instant;

use num_rational::BigRational;
use num_traits::{ToPrimitive, Zero};
use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::Limits;
use crate::model::collins_gisin::CollinsGisin;
use crate::model::scenario::{digits, index_of, Scenario};
use crate::optim::lp::{LinearProgram, LpMethod, Relation, VarBounds};
use crate::optim::SolveStatus;

/// Largest LP (variables) solved without `force`.
pub const VARIABLE_LIMIT: usize = 200_000;

/// Up to this many positivity rows the simplex is used (exact vertex, fast enough); above, the
/// interior-point method, which measured 50 to 200 times faster on the large bench cases.
pub const SIMPLEX_ROW_LIMIT: usize = 2048;

/// The no-signalling value and how it was obtained.
#[derive(Debug, Clone, Serialize)]
pub struct NoSignallingValue {
    /// The optimum found (exact vertex for the simplex; within about 1e-8 for interior point).
    pub value: f64,
    /// Interior point only: an upper bound that holds despite solver and rounding error, from
    /// the dual solution (weak duality with the residual charged at its worst).
    pub certified_upper: Option<f64>,
    /// Simplex or interior point.
    pub method: LpMethod,
    /// The LP's status.
    pub status: SolveStatus,
    /// An optimal behaviour, `p(a|q)` at `q * joint_answers + a`.
    #[serde(skip)]
    pub behaviour: Vec<f64>,
    /// The same behaviour's Collins–Gisin coordinates (the LP's solution).
    #[serde(skip)]
    pub coordinates: Vec<f64>,
    /// LP variables (Collins–Gisin coordinates).
    pub variables: usize,
    /// LP constraints.
    pub constraints: usize,
    /// Wall-clock time.
    pub seconds: f64,
}

/// Builds the no-signalling constraints (for each player i, the marginal of the others does not
/// depend on i's question; together with normalisation this makes every marginal well defined) on variables `p[q * joint_answers + a]` (indices start at
/// `first`): normalisation per joint question and, for each player, independence of the others'
/// marginal from that player's question.
pub fn add_no_signalling_rows(s: &Scenario, lp: &mut LinearProgram, first: usize) {
    let n = s.players();
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let nq = s.joint_questions();
    for q in 0..nq {
        lp.add_row(
            (0..na).map(|a| (first + q * na + a, 1.0)).collect(),
            Relation::Eq,
            1.0,
        );
    }
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    for i in 0..n {
        if qr[i] < 2 {
            continue;
        }
        // For each question of the others (with i's question 0 as reference) and each answer of
        // the others: Σ_{a_i} p(a|q with x_i = x) = Σ_{a_i} p(a|q with x_i = 0).
        let mut other_qr = qr.clone();
        other_qr[i] = 1;
        let mut other_ar = ar.clone();
        other_ar[i] = 1;
        let others_q: usize = other_qr.iter().product();
        let others_a: usize = other_ar.iter().product();
        for oq in 0..others_q {
            digits(oq, &other_qr, &mut qd);
            for oa in 0..others_a {
                digits(oa, &other_ar, &mut ad);
                let marginal = |x: usize, sign: f64, qd: &mut Vec<usize>, ad: &mut Vec<usize>| {
                    qd[i] = x;
                    let q = index_of(qd, &qr);
                    (0..ar[i])
                        .map(|ai| {
                            ad[i] = ai;
                            (first + q * na + index_of(ad, &ar), sign)
                        })
                        .collect::<Vec<_>>()
                };
                let reference = marginal(0, -1.0, &mut qd, &mut ad);
                for x in 1..qr[i] {
                    let mut terms = marginal(x, 1.0, &mut qd, &mut ad);
                    terms.extend_from_slice(&reference);
                    lp.add_row(terms, Relation::Eq, 0.0);
                }
            }
        }
    }
}

/// Most constraint nonzeros built without `force`.
pub const NONZERO_LIMIT: f64 = 2e7;

/// The no-signalling value by LP in Collins–Gisin coordinates, refused above the size limits
/// unless `limits.force`.
pub fn no_signalling_value(s: &Scenario, limits: &Limits) -> Result<NoSignallingValue> {
    let force = limits.force;
    let start = Instant::now();
    let rows = s.joint_questions() * s.joint_answers();
    if rows > VARIABLE_LIMIT && !force {
        return Err(Error::TooLarge {
            what: "the no-signalling LP".into(),
            estimate: format!("{rows} positivity constraints"),
            hint: "pass --force to try anyway (the pure-Rust simplex may take very long)".into(),
        });
    }
    // Each positivity row expands into up to Π (1 + k_i) Collins–Gisin terms over the players
    // answering their last answer (k_i = answers − 1); over all rows that is Π q_i(2k_i + 1)
    // nonzeros, which grows as 3^players even for tiny tables.
    let nonzeros: f64 = s
        .parties()
        .iter()
        .map(|p| p.questions() as f64 * (2.0 * p.answers() as f64 - 1.0))
        .product();
    if nonzeros > NONZERO_LIMIT && !force {
        return Err(Error::TooLarge {
            what: "the no-signalling LP".into(),
            estimate: format!(
                "{rows} positivity constraints with about {nonzeros:.2e} nonzeros ({} players)",
                s.players()
            ),
            hint: "pass --force to try anyway".into(),
        });
    }
    let cg = CollinsGisin::new(s);
    let mut lp = LinearProgram::new(true);
    for _ in 0..cg.variables {
        lp.add_var(VarBounds::FREE, 0.0);
    }
    let n = s.players();
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    let mut terms = Vec::new();
    let mut constant_value = s.offset();
    let mut expansions = Vec::with_capacity(rows);
    for q in 0..s.joint_questions() {
        digits(q, &qr, &mut qd);
        for a in 0..na {
            digits(a, &ar, &mut ad);
            let constant = cg.expand(&qd, &ad, &mut terms);
            let c = s.objective()[q * na + a];
            constant_value += c * constant;
            if c != 0.0 {
                for &(v, coef) in &terms {
                    lp.objective[v] += c * coef;
                }
            }
            lp.add_row(terms.clone(), Relation::Ge, -constant);
            expansions.push(constant);
        }
    }
    // Collins–Gisin coordinates are probabilities, so they lie in [0, 1].
    lp.variable_box = Some(1.0);
    let use_simplex = rows <= SIMPLEX_ROW_LIMIT;
    let sol = if use_simplex {
        lp.solve("no-signalling LP")?
    } else {
        lp.solve_interior_point("no-signalling LP")?
    };
    // The optimal behaviour, back in full probabilities.
    let behaviour = lp
        .rows
        .iter()
        .zip(&expansions)
        .map(|(row, constant)| constant + row.terms.iter().map(|&(v, c)| c * sol.x[v]).sum::<f64>())
        .collect();
    let value = constant_value + sol.objective;
    if !value.is_finite() {
        return Err(Error::solver(
            "no-signalling LP",
            format!("the value came out as {value}: the table's numbers overflow double precision"),
        ));
    }
    Ok(NoSignallingValue {
        value,
        certified_upper: sol.certified_bound.map(|b| constant_value + b),
        method: if use_simplex {
            LpMethod::Simplex
        } else {
            LpMethod::InteriorPoint
        },
        status: sol.status,
        behaviour,
        coordinates: sol.x.clone(),
        variables: cg.variables,
        constraints: rows,
        seconds: start.elapsed().as_secs_f64(),
    })
}

/// An optimal no-signalling behaviour in exact fractions, checked exactly.
#[derive(Debug, Clone)]
pub struct ExactBehaviour {
    /// `p(a|q)` at `q * joint_answers + a`, as reduced fractions `n/d` (or `n`).
    pub probabilities: Vec<String>,
    /// Its value in the game (the table as stored, binary64 numbers taken exactly).
    pub value: BigRational,
    /// The largest denominator.
    pub largest_denominator: u64,
}

/// Largest denominator tried when the LP's solution is read as fractions.
pub const MAX_DENOMINATOR: u64 = 10_000;

/// The LP's optimal behaviour read as fractions: each Collins–Gisin coordinate replaced by the
/// simplest fraction (denominator at most [`MAX_DENOMINATOR`]) within 1e-11 of it (a vertex's
/// coordinates are fractions with small denominators; a number that is not one is rarely that
/// close to one). A behaviour
/// built from Collins–Gisin coordinates is normalised and no-signalling by construction, so it is
/// kept when every probability is exactly non-negative and its exact value is within 1e-9 of the
/// LP's (None otherwise, e.g. after an interior-point solve that ended between vertices).
pub fn exact_behaviour(s: &Scenario, ns: &NoSignallingValue) -> Option<ExactBehaviour> {
    let x: Vec<BigRational> = ns
        .coordinates
        .iter()
        .map(|&v| simplest_fraction(v, 1e-11, MAX_DENOMINATOR))
        .collect::<Option<_>>()?;
    let cg = CollinsGisin::new(s);
    if x.len() != cg.variables {
        return None;
    }
    let n = s.players();
    let (qr, ar, na) = (s.question_radices(), s.answer_radices(), s.joint_answers());
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    let mut terms = Vec::new();
    let exact = |v: f64| BigRational::from_float(v);
    let mut value = exact(s.offset())?;
    let mut probabilities = Vec::with_capacity(s.joint_questions() * na);
    let mut largest_denominator = 1u64;
    for q in 0..s.joint_questions() {
        digits(q, &qr, &mut qd);
        for a in 0..na {
            digits(a, &ar, &mut ad);
            let mut p = exact(cg.expand(&qd, &ad, &mut terms))?;
            for &(v, c) in &terms {
                p += &x[v] * exact(c)?;
            }
            if p < BigRational::zero() {
                return None;
            }
            let c = s.objective()[q * na + a];
            if c != 0.0 {
                value += &p * exact(c)?;
            }
            largest_denominator = largest_denominator.max(p.denom().to_u64()?);
            probabilities.push(crate::numbers::fraction_text(&p));
        }
    }
    let close = (value.to_f64()? - ns.value).abs() <= 1e-9 * (1.0 + ns.value.abs());
    close.then_some(ExactBehaviour {
        probabilities,
        value,
        largest_denominator,
    })
}

/// The fraction with the smallest denominator (at most `most`) within `tolerance` of `v`, by
/// the continued fraction's convergents.
fn simplest_fraction(v: f64, tolerance: f64, most: u64) -> Option<BigRational> {
    if !v.is_finite() || v.abs() > 1e6 {
        return None;
    }
    let (mut h0, mut h1) = (0i128, 1i128);
    let (mut k0, mut k1) = (1i128, 0i128);
    let mut rest = v;
    for _ in 0..64 {
        let a = rest.floor();
        let ai = a as i128;
        let (h2, k2) = (ai * h1 + h0, ai * k1 + k0);
        if k2 > most as i128 {
            return None;
        }
        (h0, h1, k0, k1) = (h1, h2, k1, k2);
        if ((h1 as f64) / (k1 as f64) - v).abs() <= tolerance {
            return Some(BigRational::new(h1.into(), k1.into()));
        }
        let frac = rest - a;
        if frac <= 0.0 {
            return None;
        }
        rest = 1.0 / frac;
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fractions_are_the_simplest_within_the_tolerance() {
        let q = |v: f64| simplest_fraction(v, 1e-11, MAX_DENOMINATOR).map(|r| r.to_string());
        assert_eq!(q(0.5).as_deref(), Some("1/2"));
        assert_eq!(q(1.0 / 3.0 + 1e-12).as_deref(), Some("1/3"));
        assert_eq!(q(0.0).as_deref(), Some("0"));
        assert_eq!(q(-0.25).as_deref(), Some("-1/4"));
        assert_eq!(q(2.0 / 7.0).as_deref(), Some("2/7"));
        // 1/√2's convergents are 5741/8119 (5e-9 away), then 13860/19601: none qualifies.
        assert_eq!(q(std::f64::consts::FRAC_1_SQRT_2), None);
        assert_eq!(q(f64::NAN), None);
        assert_eq!(q(1e300), None);
    }
}
