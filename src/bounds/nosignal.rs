//! The no-signalling value: the best score of any behaviour `p(a|q)` whose marginals for every
//! group of players do not depend on the other players' questions. It bounds every quantum
//! (indeed every physical, relativistically causal) strategy from above.
//!
//! The LP is written in Collins–Gisin coordinates (marginals of every group of players, last
//! answers left out), where no-signalling holds by construction and only positivity of every
//! `p(a|q)` is imposed. [`add_no_signalling_rows`] states the same set directly on full
//! probabilities; it serves to measure how much given correlations signal.

use std::time::Instant;

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
        variables: cg.variables,
        constraints: rows,
        seconds: start.elapsed().as_secs_f64(),
    })
}
