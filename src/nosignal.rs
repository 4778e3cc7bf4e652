//! The no-signalling value: the best score of any behaviour `p(a|q)` whose marginals for every
//! group of players do not depend on the other players' questions. It bounds every quantum
//! (indeed every physical, relativistically causal) strategy from above.
//!
//! Linear programme over `p(a|q) ≥ 0` for every joint question, normalised per question. It is
//! enough to require, for each player i, that summing over i's answer gives something
//! independent of i's question: those conditions imply that every marginal is well defined.

use std::time::Instant;

use serde::Serialize;

use crate::error::{Error, Result};
use crate::lp::{LinearProgram, Relation, VarBounds};
use crate::scenario::{digits, index_of, Scenario};

/// Largest LP (variables) solved without `force`.
pub const VARIABLE_LIMIT: usize = 200_000;

#[derive(Debug, Clone, Serialize)]
pub struct NoSignallingValue {
    pub value: f64,
    /// An optimal behaviour, `p(a|q)` at `q * joint_answers + a`.
    #[serde(skip)]
    pub behaviour: Vec<f64>,
    pub variables: usize,
    pub constraints: usize,
    pub seconds: f64,
}

/// Builds the no-signalling constraints on variables `p[q * joint_answers + a]` (indices start at
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

/// The no-signalling value by LP. `force` skips the size refusal.
pub fn no_signalling_value(s: &Scenario, force: bool) -> Result<NoSignallingValue> {
    let start = Instant::now();
    let vars = s.joint_questions() * s.joint_answers();
    if vars > VARIABLE_LIMIT && !force {
        return Err(Error::TooLarge {
            what: "the no-signalling LP".into(),
            estimate: format!("{vars} variables"),
            hint: "pass --force to try anyway (the pure-Rust simplex may take very long)".into(),
        });
    }
    let mut lp = LinearProgram::new(true);
    for &c in s.objective() {
        lp.add_var(VarBounds::NONNEGATIVE, c);
    }
    add_no_signalling_rows(s, &mut lp, 0);
    let sol = lp.solve("no-signalling LP")?;
    Ok(NoSignallingValue {
        value: s.offset + sol.objective,
        behaviour: sol.x,
        variables: vars,
        constraints: lp.rows.len(),
        seconds: start.elapsed().as_secs_f64(),
    })
}
