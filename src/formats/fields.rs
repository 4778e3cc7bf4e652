//! Fields every file format reads the same way: label sets (a count or a list of integers) and
//! numbers (a YAML number or a constant expression of the formula language such as `"1/3"`),
//! each checked and located.

use std::collections::HashSet;
use std::rc::Rc;

use serde_yaml::Value as Yaml;

use super::formula::{self, ConstantScope, Value};
use super::located::{yaml_brief, Context};
use crate::error::Result;
use crate::model::scenario::{index_of, Party};

/// A number, a constant expression, or a (nested) list of those.
pub fn constant_value(
    value: &Yaml,
    ctx: &Context,
    field: &str,
    constants: &[(String, Value)],
) -> Result<Value> {
    match value {
        Yaml::Sequence(items) => {
            let vals = items
                .iter()
                .enumerate()
                .map(|(i, v)| constant_value(v, ctx, &format!("{field}[{i}]"), constants))
                .collect::<Result<Vec<_>>>()?;
            Ok(Value::List(Rc::new(vals)))
        }
        Yaml::Bool(b) => Ok(Value::Bool(*b)),
        _ => {
            let x = number(value, ctx, field, constants)?;
            Ok(match value {
                Yaml::Number(n) if n.is_i64() => Value::Int(n.as_i64().unwrap_or_default()),
                _ => x,
            })
        }
    }
}

/// A number written as a YAML number or as a constant expression such as `"1/3"`.
pub fn number(
    value: &Yaml,
    ctx: &Context,
    field: &str,
    constants: &[(String, Value)],
) -> Result<Value> {
    match value {
        Yaml::Number(n) => {
            if let Some(i) = n.as_i64() {
                Ok(Value::Int(i))
            } else {
                Ok(Value::Real(n.as_f64().unwrap_or(f64::NAN)))
            }
        }
        Yaml::String(s) => {
            let scope = ConstantScope { constants };
            let e = formula::parse(s)
                .and_then(|e| e.bind(&scope))
                .map_err(|e| ctx.formula_error(field, &e, "in this expression"))?;
            let v = e
                .eval(&[])
                .map_err(|e| ctx.formula_error(field, &e, "in this expression"))?;
            match v {
                Value::List(_) => {
                    Err(ctx.error(field, "expected a number, the expression gives a table"))
                }
                v => Ok(v),
            }
        }
        other => Err(ctx.error(
            field,
            format!("expected a number, found {}", yaml_brief(other)),
        )),
    }
}

/// A finite real number or constant expression, with the constants in scope.
pub fn real(
    value: &Yaml,
    ctx: &Context,
    field: &str,
    constants: &[(String, Value)],
) -> Result<f64> {
    let v = number(value, ctx, field, constants)?
        .as_f64()
        .map_err(|m| ctx.error(field, m))?;
    if !v.is_finite() {
        return Err(ctx.error(field, format!("expected a finite number, found {v}")));
    }
    Ok(v)
}

/// A number or constant expression (no constants in scope), e.g. a probability `"1/3"`.
pub fn constant_number(value: &Yaml, ctx: &Context, field: &str) -> Result<f64> {
    real(value, ctx, field, &[])
}

/// Index of a label.
pub fn label_index(labels: &[i64], label: i64) -> Option<usize> {
    labels.iter().position(|&l| l == label)
}

/// A label set: a positive count `n` (labels 0..n) or a list of distinct integers.
pub fn parse_labels_for(value: &Yaml, ctx: &Context, field: &str) -> Result<Vec<i64>> {
    match value {
        Yaml::Number(n) => {
            let Some(count) = n.as_u64() else {
                return Err(ctx.error(
                    field,
                    format!("expected a positive count or a list of integer labels, found {n}"),
                ));
            };
            if count == 0 {
                return Err(ctx.error(field, "the set is empty: give a count of at least 1"));
            }
            if count as usize > MAX_LABELS {
                return Err(ctx.error(
                    field,
                    format!("{count} labels is more than the limit of {MAX_LABELS}"),
                ));
            }
            Ok((0..count as i64).collect())
        }
        Yaml::Sequence(items) => {
            if items.is_empty() {
                return Err(ctx.error(field, "the set is empty: list at least one label"));
            }
            if items.len() > MAX_LABELS {
                return Err(ctx.error(
                    field,
                    format!(
                        "{} labels is more than the limit of {MAX_LABELS}",
                        items.len()
                    ),
                ));
            }
            let mut seen = HashSet::new();
            let mut labels = Vec::with_capacity(items.len());
            for (i, item) in items.iter().enumerate() {
                let f = format!("{field}[{i}]");
                let Some(label) = item.as_i64() else {
                    return Err(ctx.error(
                        &f,
                        format!("labels are integers, found {}", yaml_brief(item)),
                    ));
                };
                if !seen.insert(label) {
                    return Err(ctx.error(&f, format!("label {label} appears twice")));
                }
                labels.push(label);
            }
            Ok(labels)
        }
        other => Err(ctx.error(
            field,
            format!(
                "expected a count or a list of integer labels, found {}",
                yaml_brief(other)
            ),
        )),
    }
}

/// Largest label set of one player.
pub const MAX_LABELS: usize = 1 << 20;

/// The joint question a data row names by one question label per player (field
/// `{row}.questions`), in the scenario's mixed radix; refused with a location when a label is
/// unknown, the count is wrong, or an earlier row named the same joint question (`seen`).
pub(crate) fn row_question(
    labels: &[i64],
    parties: &[Party],
    ctx: &Context,
    row: &str,
    seen: &mut [bool],
) -> Result<usize> {
    if labels.len() != parties.len() {
        return Err(ctx.error(
            &format!("{row}.questions"),
            format!("expected one question label per player ({})", parties.len()),
        ));
    }
    let mut digits = vec![0; parties.len()];
    for (i, &label) in labels.iter().enumerate() {
        digits[i] = parties[i]
            .question_labels
            .iter()
            .position(|&l| l == label)
            .ok_or_else(|| {
                ctx.error(
                    &format!("{row}.questions[{i}]"),
                    format!("{} has no question {label}", parties[i].name),
                )
            })?;
    }
    let radices: Vec<usize> = parties.iter().map(Party::questions).collect();
    let q = index_of(&digits, &radices);
    if seen[q] {
        return Err(ctx.error(row, "this joint question is listed twice"));
    }
    seen[q] = true;
    Ok(q)
}
