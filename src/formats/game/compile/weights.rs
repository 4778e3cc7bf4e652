//! The question distribution: weights of the joint questions (from a table, a formula, or
//! uniform), checked to be a probability distribution unless the file asks to normalise.

use serde_yaml::Value as Yaml;

use super::super::spec::GameSpec;
use super::GameScope;
use super::PROBABILITY_TOLERANCE;
use crate::error::Result;
use crate::formats::fields::{label_index, real};
use crate::formats::formula::{self};
use crate::formats::located::{yaml_brief, Context};
use crate::model::scenario::{digits, index_of, Party, ScoreKind};

/// The question weights, from the `distribution` field (or the default for the kind: uniform
/// for a game, a plain sum for a score), checked to be a probability distribution unless the
/// file asks to normalise (a `proportional` formula is always normalised).
pub(super) fn build_weights(
    spec: &GameSpec,
    ctx: &Context,
    parties: &[Party],
    scope: &GameScope,
    kind: ScoreKind,
) -> Result<Vec<f64>> {
    let nq: usize = parties.iter().map(Party::questions).product();
    let field = "distribution";
    let default = if kind == ScoreKind::Win {
        "uniform"
    } else {
        "sum"
    };
    let dist = spec
        .distribution
        .clone()
        .unwrap_or(Yaml::String(default.into()));
    let map = match &dist {
        Yaml::String(s) if s == "uniform" => return Ok(vec![1.0 / nq as f64; nq]),
        Yaml::String(s) if s == "sum" => return Ok(vec![1.0; nq]),
        Yaml::Mapping(map) => map,
        other => {
            return Err(ctx.error(
                field,
                format!(
                    "expected `uniform`, `sum`, or a mapping with `table`, `product` or `proportional`; found {}",
                    yaml_brief(other)
                ),
            ))
        }
    };
    let mut normalise = false;
    let mut chosen: Option<(&str, &Yaml)> = None;
    for (k, v) in map {
        let key = k.as_str().unwrap_or("");
        match key {
            "normalise" => {
                normalise = v
                    .as_bool()
                    .ok_or_else(|| ctx.error("distribution.normalise", "expected true or false"))?
            }
            "table" | "product" | "proportional" => {
                if let Some((other, _)) = chosen {
                    return Err(ctx.error(
                        &format!("distribution.{key}"),
                        format!("give only one of `table`, `product`, `proportional` (found `{other}` too)"),
                    ));
                }
                chosen = Some((key, v));
            }
            _ => {
                return Err(ctx.error(
                    &format!("distribution.{key}"),
                    format!("unknown field `{key}` (expected `table`, `product`, `proportional` or `normalise`)"),
                ))
            }
        }
    }
    let Some((key, value)) = chosen else {
        return Err(ctx.error(
            field,
            "expected one of `table`, `product` or `proportional`",
        ));
    };
    let path = format!("distribution.{key}");
    let mut weights = match key {
        "table" => table_weights(value, ctx, parties, scope, &path)?,
        "product" => product_weights(value, ctx, parties, scope, &path, normalise)?,
        _ => {
            normalise = true;
            proportional_weights(value, ctx, parties, scope, &path)?
        }
    };
    let total: f64 = weights.iter().sum();
    if total <= 0.0 {
        return Err(ctx.error(&path, "every joint question has probability zero"));
    }
    if (total - 1.0).abs() > PROBABILITY_TOLERANCE {
        if !normalise {
            return Err(ctx.error(&path, format!("probabilities sum to {total}, not 1 (add `normalise: true` under `distribution` to rescale)")));
        }
        for w in &mut weights {
            *w /= total;
        }
    }
    Ok(weights)
}

/// The question radices and a zero weight per joint question.
fn zero_weights(parties: &[Party]) -> (Vec<usize>, Vec<f64>) {
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let nq: usize = qr.iter().product();
    (qr, vec![0.0; nq])
}

/// `table: [[question of each player..., probability], ...]`; unlisted joint questions weigh 0.
fn table_weights(
    value: &Yaml,
    ctx: &Context,
    parties: &[Party],
    scope: &GameScope,
    path: &str,
) -> Result<Vec<f64>> {
    let (qr, mut weights) = zero_weights(parties);
    let Yaml::Sequence(rows) = value else {
        return Err(ctx.error(
            path,
            "expected a list of rows [question of each player..., probability]",
        ));
    };
    let mut seen = vec![false; weights.len()];
    let mut digits_buf = vec![0; parties.len()];
    for (r, row) in rows.iter().enumerate() {
        let rf = format!("{path}[{r}]");
        let Some(cells) = row.as_sequence() else {
            return Err(ctx.error(
                &rf,
                "expected a row [question of each player..., probability]",
            ));
        };
        if cells.len() != parties.len() + 1 {
            return Err(ctx.error(
                &rf,
                format!(
                    "a row has {} entries: one question label per player ({}) and the probability",
                    parties.len() + 1,
                    parties
                        .iter()
                        .map(|p| p.name.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            ));
        }
        for (i, p) in parties.iter().enumerate() {
            let cf = format!("{rf}[{i}]");
            let label = cells[i]
                .as_i64()
                .ok_or_else(|| ctx.error(&cf, "expected an integer question label"))?;
            digits_buf[i] = label_index(&p.question_labels, label)
                .ok_or_else(|| ctx.error(&cf, format!("{} has no question {label}", p.name)))?;
        }
        let q = index_of(&digits_buf, &qr);
        if seen[q] {
            return Err(ctx.error(&rf, "this joint question is listed twice"));
        }
        seen[q] = true;
        let pf = format!("{rf}[{}]", parties.len());
        weights[q] = real(&cells[parties.len()], ctx, &pf, scope.constants)?;
        if weights[q] < 0.0 {
            return Err(ctx.error(&pf, format!("probability {} is negative", weights[q])));
        }
    }
    Ok(weights)
}

/// `product: {player: [probability of each question], ...}`: independent questions, each
/// player's list checked (or normalised) on its own.
fn product_weights(
    value: &Yaml,
    ctx: &Context,
    parties: &[Party],
    scope: &GameScope,
    path: &str,
    normalise: bool,
) -> Result<Vec<f64>> {
    let (qr, mut weights) = zero_weights(parties);
    let Yaml::Mapping(per_player) = value else {
        return Err(ctx.error(
            path,
            "expected a mapping from player name to the list of its question probabilities",
        ));
    };
    let mut marginals: Vec<Option<Vec<f64>>> = vec![None; parties.len()];
    for (k, v) in per_player {
        let name = k.as_str().unwrap_or("");
        let pf = format!("{path}.{name}");
        let Some(i) = parties.iter().position(|p| p.name == name) else {
            return Err(ctx.error(&pf, format!("there is no player called `{name}`")));
        };
        let Some(list) = v.as_sequence() else {
            return Err(ctx.error(&pf, "expected a list of probabilities, one per question"));
        };
        if list.len() != parties[i].questions() {
            return Err(ctx.error(
                &pf,
                format!(
                    "{} has {} questions but {} probabilities are given",
                    name,
                    parties[i].questions(),
                    list.len()
                ),
            ));
        }
        let probs = list
            .iter()
            .enumerate()
            .map(|(j, x)| {
                let f = format!("{pf}[{j}]");
                let p = real(x, ctx, &f, scope.constants)?;
                if p < 0.0 {
                    return Err(ctx.error(&f, format!("probability {p} is negative")));
                }
                Ok(p)
            })
            .collect::<Result<Vec<_>>>()?;
        let total: f64 = probs.iter().sum();
        if !normalise && (total - 1.0).abs() > PROBABILITY_TOLERANCE {
            return Err(ctx.error(
                &pf,
                format!("probabilities sum to {total}, not 1 (add `normalise: true` to rescale)"),
            ));
        }
        if total <= 0.0 {
            return Err(ctx.error(&pf, "probabilities are all zero"));
        }
        marginals[i] = Some(probs.iter().map(|p| p / total).collect());
    }
    let mut d = vec![0; parties.len()];
    for (i, m) in marginals.iter().enumerate() {
        if m.is_none() {
            return Err(ctx.error(
                path,
                format!("no probabilities for player `{}`", parties[i].name),
            ));
        }
    }
    for (q, w) in weights.iter_mut().enumerate() {
        digits(q, &qr, &mut d);
        *w = (0..parties.len())
            .map(|i| marginals[i].as_ref().map_or(0.0, |m| m[d[i]]))
            .product();
    }
    Ok(weights)
}

/// `proportional: "formula over the question variables"`: finite non-negative weights, to be
/// normalised.
fn proportional_weights(
    value: &Yaml,
    ctx: &Context,
    parties: &[Party],
    scope: &GameScope,
    path: &str,
) -> Result<Vec<f64>> {
    let (qr, mut weights) = zero_weights(parties);
    let Some(src) = value.as_str() else {
        return Err(ctx.error(path, "expected a formula over the question variables"));
    };
    let question_scope = GameScope {
        variables: scope.variables.clone(),
        constants: scope.constants,
        visible_below: parties.len(),
    };
    let expr = formula::parse(src)
        .and_then(|e| e.bind(&question_scope))
        .map_err(|e| ctx.formula_error(path, &e, "in the distribution formula"))?;
    let mut d = vec![0; parties.len()];
    let mut slots = vec![0i64; parties.len()];
    for (q, w) in weights.iter_mut().enumerate() {
        digits(q, &qr, &mut d);
        for i in 0..parties.len() {
            slots[i] = parties[i].question_labels[d[i]];
        }
        let v = expr.eval(&slots).map_err(|e| {
            ctx.formula_error(
                path,
                &e,
                &format!(
                    "in the distribution formula at {}",
                    describe_questions(parties, scope, &slots)
                ),
            )
        })?;
        *w = v.as_f64().map_err(|m| ctx.error(path, m))?;
        if !(*w >= 0.0 && w.is_finite()) {
            return Err(ctx.error(
                path,
                format!(
                    "the weight at {} is {}, weights must be finite and non-negative",
                    describe_questions(parties, scope, &slots),
                    w
                ),
            ));
        }
    }
    Ok(weights)
}

fn describe_questions(parties: &[Party], scope: &GameScope, slots: &[i64]) -> String {
    describe_slots(parties, scope, slots, parties.len())
}

/// "x=1, y=0, a=2, b=1", using the variable names (or player names when a variable is unnamed).
pub(super) fn describe_slots(
    parties: &[Party],
    scope: &GameScope,
    slots: &[i64],
    count: usize,
) -> String {
    let n = parties.len();
    (0..count)
        .map(|s| {
            let name = scope
                .variables
                .iter()
                .find(|(_, slot)| *slot == s)
                .map(|(n, _)| n.clone())
                .unwrap_or_else(|| {
                    if s < n {
                        format!("question of {}", parties[s].name)
                    } else {
                        format!("answer of {}", parties[s - n].name)
                    }
                });
            format!("{name}={}", slots[s])
        })
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::super::testing::{located, parts, spec, two_by_two};
    use super::*;

    /// The weights of a two-player, two-question game with this `distribution` (and kind).
    fn weights(distribution: &str, kind: ScoreKind) -> Result<Vec<f64>> {
        let body = if kind == ScoreKind::Win {
            "win: 'true'"
        } else {
            "score: '1'"
        };
        let (s, ctx) = spec(&two_by_two(&format!("{distribution}{body}\n")));
        let (parties, constants, variables) = parts(&s, &ctx);
        let scope = GameScope {
            variables,
            constants: &constants,
            visible_below: 2 * parties.len(),
        };
        build_weights(&s, &ctx, &parties, &scope, kind)
    }

    #[test]
    fn defaults_are_uniform_for_games_and_a_plain_sum_for_scores() {
        assert_eq!(weights("", ScoreKind::Win).unwrap(), vec![0.25; 4]);
        assert_eq!(weights("", ScoreKind::Score).unwrap(), vec![1.0; 4]);
        assert_eq!(
            weights("distribution: sum\n", ScoreKind::Win).unwrap(),
            vec![1.0; 4]
        );
    }

    #[test]
    fn tables_products_and_formulas() {
        let table = weights(
            "distribution: {table: [[0, 0, 0.5], [1, 1, '1/2']]}\n",
            ScoreKind::Win,
        );
        assert_eq!(table.unwrap(), vec![0.5, 0.0, 0.0, 0.5]);
        let product = weights(
            "distribution: {product: {alice: [0.25, 0.75], bob: [0.5, 0.5]}}\n",
            ScoreKind::Win,
        );
        assert_eq!(product.unwrap(), vec![0.125, 0.125, 0.375, 0.375]);
        let formula = weights(
            "distribution: {proportional: 'x + y + 1'}\n",
            ScoreKind::Win,
        );
        assert_eq!(
            formula.unwrap(),
            vec![1.0 / 8.0, 2.0 / 8.0, 2.0 / 8.0, 3.0 / 8.0]
        );
    }

    #[test]
    fn probabilities_must_sum_to_one_unless_normalised() {
        let e = weights(
            "distribution: {table: [[0, 0, 1], [1, 1, 1]]}\n",
            ScoreKind::Win,
        )
        .unwrap_err();
        assert_eq!(
            located(&e),
            (Some("distribution.table".into()), Some(4)),
            "{e}"
        );
        assert!(e.to_string().contains("sum to 2"), "{e}");
        let rescaled = weights(
            "distribution: {table: [[0, 0, 1], [1, 1, 1]], normalise: true}\n",
            ScoreKind::Win,
        );
        assert_eq!(rescaled.unwrap(), vec![0.5, 0.0, 0.0, 0.5]);
        assert!(weights("distribution: {table: [[0, 0, -1]]}\n", ScoreKind::Win).is_err());
    }
}
