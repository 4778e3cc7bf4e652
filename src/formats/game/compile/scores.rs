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
        .map_err(|mut e| {
            // A formula can only name the variables the players declare; a player without
            // `question:` or `answer:` declares none, and the error should say how to.
            if e.message.starts_with("unknown name") && scope.variables.len() < 2 * parties.len()
            {
                e.message += "; a player's question and answer are named in its entry, e.g. `{name: alice, question: x, answer: a, questions: 2, answers: 2}`, and only then usable in formulas";
            }
            ctx.formula_error(field, &e, what)
        })?;
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

#[cfg(test)]
mod tests {
    use super::super::testing::{located, parts, spec, two_by_two};
    use super::*;

    /// The score table of a two-player, two-question game with `field: formula`.
    fn scores(field: &str, formula: &str, kind: ScoreKind) -> Result<Vec<f64>> {
        let (s, ctx) = spec(&two_by_two(&format!("{field}: '{formula}'\n")));
        let (parties, constants, variables) = parts(&s, &ctx);
        let scope = GameScope {
            variables,
            constants: &constants,
            visible_below: 2 * parties.len(),
        };
        build_scores(field, formula, &ctx, &parties, &scope, &[0.25; 4], kind)
    }

    #[test]
    fn the_chsh_predicate_fills_the_table_question_major() {
        let t = scores("win", "(a + b) % 2 == x * y", ScoreKind::Win).unwrap();
        for (x, y, a, b) in (0..16).map(|k| (k >> 3 & 1, k >> 2 & 1, k >> 1 & 1, k & 1)) {
            let want = ((a + b) % 2 == x * y) as u8 as f64;
            assert_eq!(t[(x * 2 + y) * 4 + a * 2 + b], want, "x{x} y{y} a{a} b{b}");
        }
    }

    #[test]
    fn real_scores_and_located_formula_errors() {
        let t = scores("score", "(-1)**(a + b) * (1 - 2 * x * y)", ScoreKind::Score).unwrap();
        assert_eq!(&t[12..16], &[-1.0, 1.0, 1.0, -1.0]);
        assert_eq!(&t[0..4], &[1.0, -1.0, -1.0, 1.0]);
        let e = scores("win", "a + + b", ScoreKind::Win).unwrap_err();
        assert_eq!(located(&e), (Some("win".into()), Some(4)), "{e}");
        let e = scores("win", "a == z", ScoreKind::Win).unwrap_err();
        assert!(e.to_string().contains('z'), "{e}");
    }

    #[test]
    fn a_score_that_never_changes_is_warned_about() {
        let parties = |n: &str| Party {
            name: n.into(),
            question_labels: vec![0, 1],
            answer_labels: vec![0, 1],
        };
        let constant = Scenario::new(
            vec![parties("a"), parties("b")],
            vec![0.25; 4],
            vec![1.0; 16],
            0.0,
            ScoreKind::Win,
        )
        .unwrap();
        assert!(constant_score_warning(&constant)
            .unwrap()
            .contains("always true"));
        let chsh = scores("win", "(a + b) % 2 == x * y", ScoreKind::Win).unwrap();
        let s = Scenario::new(
            vec![parties("a"), parties("b")],
            vec![0.25; 4],
            chsh,
            0.0,
            ScoreKind::Win,
        )
        .unwrap();
        assert_eq!(constant_score_warning(&s), None);
    }
}
