//! The score table from a `win` predicate or a `score` formula, evaluated at every joint
//! question and answer, and the warning for a score that never changes.

use super::weights::describe_slots;
use super::GameScope;
use crate::error::Result;
use crate::formats::formula::{self, Expr, Value};
use crate::formats::located::Context;
use crate::model::scenario::{digits, Party, Scenario, ScoreKind};

pub(super) fn build_scores(
    field: &str,
    src: &str,
    ctx: &Context,
    parties: &[Party],
    scope: &GameScope,
    weights: &[f64],
    kind: ScoreKind,
) -> Result<Vec<f64>> {
    let what = if kind == ScoreKind::Win {
        "in the win predicate"
    } else {
        "in the score formula"
    };
    let expr: Expr = formula::parse(src)
        .and_then(|e| e.bind(scope))
        .map_err(|e| ctx.formula_error(field, &e, what))?;
    let n = parties.len();
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let ar: Vec<usize> = parties.iter().map(Party::answers).collect();
    let (nq, na) = (weights.len(), ar.iter().product::<usize>());
    let mut scores = vec![0.0; nq * na];
    let mut qd = vec![0; n];
    let mut ad = vec![0; n];
    let mut slots = vec![0i64; 2 * n];
    for q in 0..nq {
        // Questions that are never asked do not enter any value; skipping them also spares the
        // user errors from combinations that cannot occur.
        if weights[q] == 0.0 {
            continue;
        }
        digits(q, &qr, &mut qd);
        for i in 0..n {
            slots[i] = parties[i].question_labels[qd[i]];
        }
        for a in 0..na {
            digits(a, &ar, &mut ad);
            for i in 0..n {
                slots[n + i] = parties[i].answer_labels[ad[i]];
            }
            let v = expr.eval(&slots).map_err(|e| {
                ctx.formula_error(
                    field,
                    &e,
                    &format!(
                        "{what} at {}",
                        describe_slots(parties, scope, &slots, 2 * n)
                    ),
                )
            })?;
            let x = match (kind, &v) {
                (ScoreKind::Win, Value::Bool(b)) => *b as u8 as f64,
                (ScoreKind::Win, Value::Int(i @ (0 | 1))) => *i as f64,
                (ScoreKind::Win, other) => {
                    return Err(ctx.error(field, format!(
                        "the win predicate gives {other} at {}; it must be true/false (or 0/1). For real-valued scores use `score`",
                        describe_slots(parties, scope, &slots, 2 * n)
                    )))
                }
                (ScoreKind::Score, v) => v.as_f64().map_err(|m| ctx.error(field, m))?,
            };
            if !x.is_finite() {
                return Err(ctx.error(
                    field,
                    format!(
                        "the score is {x} at {}",
                        describe_slots(parties, scope, &slots, 2 * n)
                    ),
                ));
            }
            scores[q * na + a] = x;
        }
    }
    Ok(scores)
}

/// A game whose score is the same for every asked question and answer has nothing to decide;
/// usually a typo in the predicate.
pub(super) fn constant_score_warning(s: &Scenario) -> Option<String> {
    let na = s.joint_answers();
    let mut values = s
        .weights()
        .iter()
        .enumerate()
        .filter(|(_, w)| **w != 0.0)
        .flat_map(|(q, _)| s.scores()[q * na..(q + 1) * na].iter());
    let first = *values.next()?;
    if values.all(|v| *v == first) {
        let what = if s.kind() == ScoreKind::Win {
            format!(
                "the win predicate is always {}",
                if first == 1.0 { "true" } else { "false" }
            )
        } else {
            format!("the score is always {first}")
        };
        Some(format!("{what}: every strategy has the same value"))
    } else {
        None
    }
}
