//! From a parsed [`GameSpec`] to the flat [`Scenario`]: label sets, constants, the question
//! distribution, and the score table (from a formula or a Bell table). Every error carries the
//! field path, which [`Context`] turns into file, line and column.

use std::collections::HashSet;
use std::rc::Rc;

use serde_yaml::Value as Yaml;

use super::formula::{self, ConstantScope, Expr, FormulaError, Scope, Value};
use super::located::SourceMap;
use super::spec::GameSpec;
use crate::error::{Error, Location, Result};
use crate::model::scenario::{digits, index_of, Party, Scenario, ScoreKind};

/// Probabilities must sum to one within this tolerance unless the file asks to normalise.
pub const PROBABILITY_TOLERANCE: f64 = 1e-9;

/// Largest table (joint questions × joint answers) built without `allow_large`: 2^22 entries
/// take 64 MiB with the objective copy and a few seconds of formula evaluation.
pub const DEFAULT_TABLE_LIMIT: usize = 1 << 22;
/// Largest table built even with `allow_large` (16 GiB of weights and scores).
pub const HARD_TABLE_LIMIT: usize = 1 << 30;
/// Seconds per table entry to evaluate a formula (measured: 64 M entries of a short formula in
/// 57 s on the project machine; a rule of thumb for the estimate, not a promise).
const SECONDS_PER_ENTRY: f64 = 1e-6;

/// Largest label set of one player.
pub const MAX_LABELS: usize = 1 << 20;

/// Names the formula language reserves.
const RESERVED: &[&str] = &[
    "if", "then", "else", "and", "or", "xor", "not", "true", "false", "pi", "min", "max", "abs",
    "sqrt", "sin", "cos",
];

#[derive(Debug, Clone, Copy, Default)]
pub struct CompileOptions {
    /// Build tables larger than [`DEFAULT_TABLE_LIMIT`].
    pub allow_large: bool,
}

/// Where the game came from, for error messages: the file name and a map from field paths to
/// positions.
pub struct Context {
    pub file: String,
    pub map: SourceMap,
}

impl Context {
    pub fn error(&self, field: &str, message: impl Into<String>) -> Error {
        let pos = self.map.find(field);
        Error::Input {
            location: Location {
                file: self.file.clone(),
                line: pos.map(|p| p.line),
                column: pos.map(|p| p.column),
                field: (!field.is_empty()).then(|| field.to_string()),
            },
            message: message.into(),
        }
    }

    /// An error inside a formula string: the column is that of the offending character when the
    /// formula sits on one line.
    pub fn formula_error(&self, field: &str, e: &FormulaError, what: &str) -> Error {
        let pos = self.map.find(field);
        let column = pos.map(|p| match p.text_column {
            Some(c) => c + e.pos,
            None => p.column,
        });
        Error::Input {
            location: Location {
                file: self.file.clone(),
                line: pos.map(|p| p.line),
                column,
                field: Some(field.to_string()),
            },
            message: format!("{what}: {}", e.message),
        }
    }
}

/// The result of compiling: the table plus warnings worth showing the user.
pub struct Compiled {
    pub scenario: Scenario,
    pub warnings: Vec<String>,
}

/// Names in scope for the game's formulas.
struct GameScope<'a> {
    /// (name, slot): question variables take slots 0..n, answer variables n..2n.
    variables: Vec<(String, usize)>,
    constants: &'a [(String, Value)],
    /// Slots at or above this index are not visible (used to keep answers out of distributions).
    visible_below: usize,
}

impl Scope for GameScope<'_> {
    fn slot(&self, name: &str) -> Option<usize> {
        self.variables
            .iter()
            .find(|(n, s)| n == name && *s < self.visible_below)
            .map(|(_, s)| *s)
    }
    fn constant(&self, name: &str) -> Option<Value> {
        self.constants
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, v)| v.clone())
    }
    fn names(&self) -> Vec<String> {
        self.variables
            .iter()
            .filter(|(_, s)| *s < self.visible_below)
            .map(|(n, _)| n.clone())
            .chain(self.constants.iter().map(|(n, _)| n.clone()))
            .collect()
    }
}

/// Most players a game may have.
pub const MAX_PLAYERS: usize = 16;
/// Longest player name (names appear in tables, reports and file names of outputs).
pub const MAX_NAME_CHARS: usize = 64;

pub fn compile(spec: &GameSpec, ctx: &Context, options: CompileOptions) -> Result<Compiled> {
    let mut warnings = Vec::new();
    if spec.players.len() < 2 {
        return Err(ctx.error(
            "players",
            format!(
                "a game needs two or more players, found {}",
                spec.players.len()
            ),
        ));
    }
    if spec.players.len() > MAX_PLAYERS {
        return Err(ctx.error(
            "players",
            format!(
                "{} players: at most {MAX_PLAYERS} are supported (the no-signalling and NPA constructions have 2^players marginal groups)",
                spec.players.len()
            ),
        ));
    }
    let parties = parse_parties(spec, ctx)?;
    let constants = parse_constants(spec, ctx)?;
    let variables = parse_variables(spec, ctx, &constants)?;

    let joint_q: f64 = parties.iter().map(|p| p.questions() as f64).product();
    let joint_a: f64 = parties.iter().map(|p| p.answers() as f64).product();
    let entries = joint_q * joint_a;
    if entries > HARD_TABLE_LIMIT as f64
        || (entries > DEFAULT_TABLE_LIMIT as f64 && !options.allow_large)
    {
        return Err(Error::TooLarge {
            what: "the game table".into(),
            estimate: format!(
                "{joint_q:.0} joint questions × {joint_a:.0} joint answers = {entries:.3e} entries, about {:.1} GiB and {} to build",
                entries * 16.0 / (1u64 << 30) as f64,
                crate::bounds::classical::human_seconds(entries * SECONDS_PER_ENTRY)
            ),
            hint: if entries > HARD_TABLE_LIMIT as f64 {
                format!("at most {HARD_TABLE_LIMIT} entries can be built")
            } else {
                "pass --allow-large to build it anyway".into()
            },
        });
    }

    let n = parties.len();
    let scope = GameScope {
        variables,
        constants: &constants,
        visible_below: 2 * n,
    };
    let has = [
        spec.win.is_some(),
        spec.score.is_some(),
        spec.bell.is_some(),
    ];
    let kind = match has {
        [true, false, false] => ScoreKind::Win,
        [false, true, false] | [false, false, true] => ScoreKind::Score,
        [false, false, false] => {
            return Err(ctx.error(
                "",
                "the game needs one of `win` (a predicate), `score` (a formula) or `bell` (a table of coefficients)",
            ))
        }
        _ => {
            return Err(ctx.error(
                "",
                "give only one of `win`, `score` and `bell`",
            ))
        }
    };

    let weights = if spec.bell.is_some() && spec.distribution.is_some() {
        return Err(ctx.error(
            "distribution",
            "a `bell` table gives its coefficients directly; remove `distribution` (its value is the plain sum of the terms)",
        ));
    } else {
        build_weights(spec, ctx, &parties, &scope, kind)?
    };

    let (scores, offset) = if let Some(bell) = &spec.bell {
        build_bell(bell, ctx, &parties, &constants)?
    } else {
        let (field, src) = match (&spec.win, &spec.score) {
            (Some(w), _) => ("win", w),
            (_, Some(s)) => ("score", s),
            _ => unreachable!("checked above"),
        };
        (
            build_scores(field, src, ctx, &parties, &scope, &weights, kind)?,
            0.0,
        )
    };

    let table_field = if spec.bell.is_some() {
        "bell"
    } else if spec.win.is_some() {
        "win"
    } else {
        "score"
    };
    let scenario = Scenario::checked(parties, weights, scores, offset, kind)
        .map_err(|m| ctx.error(table_field, m))?;
    if let Some(w) = constant_score_warning(&scenario) {
        warnings.push(w);
    }
    Ok(Compiled { scenario, warnings })
}

pub(crate) fn parse_labels_for(value: &Yaml, ctx: &Context, field: &str) -> Result<Vec<i64>> {
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

fn parse_parties(spec: &GameSpec, ctx: &Context) -> Result<Vec<Party>> {
    let mut names = HashSet::new();
    let mut parties = Vec::new();
    for (i, p) in spec.players.iter().enumerate() {
        let base = format!("players[{i}]");
        if p.name.trim().is_empty() {
            return Err(ctx.error(&format!("{base}.name"), "a player needs a name"));
        }
        if p.name.chars().count() > MAX_NAME_CHARS {
            return Err(ctx.error(
                &format!("{base}.name"),
                format!("a player name may have at most {MAX_NAME_CHARS} characters"),
            ));
        }
        if p.name.chars().any(char::is_control) {
            return Err(ctx.error(
                &format!("{base}.name"),
                "a player name may not contain control characters (newlines, tabs, ...)",
            ));
        }
        if !names.insert(p.name.clone()) {
            return Err(ctx.error(
                &format!("{base}.name"),
                format!("two players are called `{}`", p.name),
            ));
        }
        parties.push(Party {
            name: p.name.clone(),
            question_labels: parse_labels_for(&p.questions, ctx, &format!("{base}.questions"))?,
            answer_labels: parse_labels_for(&p.answers, ctx, &format!("{base}.answers"))?,
        });
    }
    Ok(parties)
}

fn check_identifier(name: &str, ctx: &Context, field: &str) -> Result<()> {
    let mut chars = name.chars();
    let ok = chars.next().is_some_and(|c| c.is_alphabetic() || c == '_')
        && chars.all(|c| c.is_alphanumeric() || c == '_');
    if !ok {
        return Err(ctx.error(
            field,
            format!(
                "`{name}` is not a valid name (letters, digits and _, not starting with a digit)"
            ),
        ));
    }
    if RESERVED.contains(&name) {
        return Err(ctx.error(
            field,
            format!("`{name}` is reserved by the formula language"),
        ));
    }
    Ok(())
}

fn parse_variables(
    spec: &GameSpec,
    ctx: &Context,
    constants: &[(String, Value)],
) -> Result<Vec<(String, usize)>> {
    let n = spec.players.len();
    let mut variables: Vec<(String, usize)> = Vec::new();
    for (i, p) in spec.players.iter().enumerate() {
        for (name, slot, key) in [(&p.question, i, "question"), (&p.answer, n + i, "answer")] {
            let Some(name) = name else { continue };
            let field = format!("players[{i}].{key}");
            check_identifier(name, ctx, &field)?;
            if variables.iter().any(|(v, _)| v == name) {
                return Err(ctx.error(&field, format!("the variable `{name}` is used twice")));
            }
            if constants.iter().any(|(c, _)| c == name) {
                return Err(ctx.error(
                    &field,
                    format!("`{name}` is both a variable and a constant"),
                ));
            }
            variables.push((name.clone(), slot));
        }
    }
    Ok(variables)
}

fn parse_constants(spec: &GameSpec, ctx: &Context) -> Result<Vec<(String, Value)>> {
    let mut constants: Vec<(String, Value)> = Vec::new();
    let Some(map) = &spec.constants else {
        return Ok(constants);
    };
    for (key, value) in map {
        let Some(name) = key.as_str() else {
            return Err(ctx.error(
                "constants",
                format!("constant names are words, found {}", yaml_brief(key)),
            ));
        };
        let field = format!("constants.{name}");
        check_identifier(name, ctx, &field)?;
        if constants.iter().any(|(c, _)| c == name) {
            return Err(ctx.error(&field, format!("the constant `{name}` is defined twice")));
        }
        let v = constant_value(value, ctx, &field, &constants)?;
        constants.push((name.to_string(), v));
    }
    Ok(constants)
}

/// A number, a constant expression, or a (nested) list of those.
fn constant_value(
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
fn number(
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

fn real(value: &Yaml, ctx: &Context, field: &str, constants: &[(String, Value)]) -> Result<f64> {
    let v = number(value, ctx, field, constants)?
        .as_f64()
        .map_err(|m| ctx.error(field, m))?;
    if !v.is_finite() {
        return Err(ctx.error(field, format!("expected a finite number, found {v}")));
    }
    Ok(v)
}

/// A number or constant expression (no constants in scope), e.g. a probability `"1/3"`.
pub(crate) fn constant_number(value: &Yaml, ctx: &Context, field: &str) -> Result<f64> {
    real(value, ctx, field, &[])
}

fn label_index(labels: &[i64], label: i64) -> Option<usize> {
    labels.iter().position(|&l| l == label)
}

fn build_weights(
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
    match &dist {
        Yaml::String(s) if s == "uniform" => return Ok(vec![1.0 / nq as f64; nq]),
        Yaml::String(s) if s == "sum" => return Ok(vec![1.0; nq]),
        Yaml::Mapping(_) => {}
        other => {
            return Err(ctx.error(
                field,
                format!(
                    "expected `uniform`, `sum`, or a mapping with `table`, `product` or `proportional`; found {}",
                    yaml_brief(other)
                ),
            ))
        }
    }
    let Yaml::Mapping(map) = &dist else {
        unreachable!()
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
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let mut weights = vec![0.0; nq];
    let path = format!("distribution.{key}");
    match key {
        "table" => {
            let Yaml::Sequence(rows) = value else {
                return Err(ctx.error(
                    &path,
                    "expected a list of rows [question of each player..., probability]",
                ));
            };
            let mut seen = vec![false; nq];
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
                            parties.iter().map(|p| p.name.as_str()).collect::<Vec<_>>().join(", ")
                        ),
                    ));
                }
                for (i, p) in parties.iter().enumerate() {
                    let cf = format!("{rf}[{i}]");
                    let label = cells[i]
                        .as_i64()
                        .ok_or_else(|| ctx.error(&cf, "expected an integer question label"))?;
                    digits_buf[i] = label_index(&p.question_labels, label).ok_or_else(|| {
                        ctx.error(&cf, format!("{} has no question {label}", p.name))
                    })?;
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
        }
        "product" => {
            let Yaml::Mapping(per_player) = value else {
                return Err(ctx.error(
                    &path,
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
                    return Err(
                        ctx.error(&pf, "expected a list of probabilities, one per question")
                    );
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
                    return Err(ctx.error(&pf, format!("probabilities sum to {total}, not 1 (add `normalise: true` to rescale)")));
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
                        &path,
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
        }
        "proportional" => {
            let Some(src) = value.as_str() else {
                return Err(ctx.error(&path, "expected a formula over the question variables"));
            };
            let question_scope = GameScope {
                variables: scope.variables.clone(),
                constants: scope.constants,
                visible_below: parties.len(),
            };
            let expr = formula::parse(src)
                .and_then(|e| e.bind(&question_scope))
                .map_err(|e| ctx.formula_error(&path, &e, "in the distribution formula"))?;
            let mut d = vec![0; parties.len()];
            let mut slots = vec![0i64; parties.len()];
            for (q, w) in weights.iter_mut().enumerate() {
                digits(q, &qr, &mut d);
                for i in 0..parties.len() {
                    slots[i] = parties[i].question_labels[d[i]];
                }
                let v = expr.eval(&slots).map_err(|e| {
                    ctx.formula_error(
                        &path,
                        &e,
                        &format!(
                            "in the distribution formula at {}",
                            describe_questions(parties, scope, &slots)
                        ),
                    )
                })?;
                *w = v.as_f64().map_err(|m| ctx.error(&path, m))?;
                if !(*w >= 0.0 && w.is_finite()) {
                    return Err(ctx.error(
                        &path,
                        format!(
                            "the weight at {} is {}, weights must be finite and non-negative",
                            describe_questions(parties, scope, &slots),
                            w
                        ),
                    ));
                }
            }
            normalise = true;
        }
        _ => unreachable!(),
    }
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

fn describe_questions(parties: &[Party], scope: &GameScope, slots: &[i64]) -> String {
    describe_slots(parties, scope, slots, parties.len())
}

/// "x=1, y=0, a=2, b=1", using the variable names (or player names when a variable is unnamed).
fn describe_slots(parties: &[Party], scope: &GameScope, slots: &[i64], count: usize) -> String {
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

fn build_scores(
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

/// Fills the table from Bell coefficients. Marginal terms (not every player involved) are spread
/// evenly over the other players' questions: every no-signalling behaviour gives the same
/// marginal whichever of those questions is asked, so the value is unchanged.
fn build_bell(
    bell: &Yaml,
    ctx: &Context,
    parties: &[Party],
    constants: &[(String, Value)],
) -> Result<(Vec<f64>, f64)> {
    let Yaml::Mapping(map) = bell else {
        return Err(ctx.error("bell", "expected a mapping with `terms`, `collins_gisin` or `correlators` (and optionally `constant`)"));
    };
    let n = parties.len();
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let ar: Vec<usize> = parties.iter().map(Party::answers).collect();
    let (nq, na) = (qr.iter().product::<usize>(), ar.iter().product::<usize>());
    let mut table = BellTable {
        parties,
        qr,
        ar,
        scores: vec![0.0; nq * na],
        offset: 0.0,
    };
    let mut forms = 0;
    for (k, v) in map {
        let key = k.as_str().unwrap_or("");
        let path = format!("bell.{key}");
        match key {
            "constant" => table.offset += real(v, ctx, &path, constants)?,
            "terms" => {
                forms += 1;
                let Some(terms) = v.as_sequence() else {
                    return Err(ctx.error(&path, "expected a list of terms"));
                };
                for (t, term) in terms.iter().enumerate() {
                    table.add_term(term, ctx, &format!("{path}[{t}]"), constants)?;
                }
            }
            "collins_gisin" | "correlators" => {
                forms += 1;
                if n != 2 {
                    return Err(ctx.error(&path, format!("the `{key}` table is for two players; with {n} players use `terms`")));
                }
                let rows = v
                    .as_sequence()
                    .ok_or_else(|| ctx.error(&path, "expected a matrix (a list of rows)"))?;
                let matrix = rows
                    .iter()
                    .enumerate()
                    .map(|(r, row)| {
                        let rf = format!("{path}[{r}]");
                        row.as_sequence()
                            .ok_or_else(|| ctx.error(&rf, "expected a row (a list of numbers)"))?
                            .iter()
                            .enumerate()
                            .map(|(c, x)| real(x, ctx, &format!("{rf}[{c}]"), constants))
                            .collect::<Result<Vec<f64>>>()
                    })
                    .collect::<Result<Vec<_>>>()?;
                if key == "collins_gisin" {
                    table.add_collins_gisin(&matrix, ctx, &path)?;
                } else {
                    table.add_correlator_matrix(&matrix, ctx, &path)?;
                }
            }
            _ => {
                return Err(ctx.error(&path, format!("unknown field `{key}` (expected `terms`, `collins_gisin`, `correlators`, `constant`)")))
            }
        }
    }
    if forms == 0 {
        return Err(ctx.error(
            "bell",
            "no coefficients: give `terms`, `collins_gisin` or `correlators`",
        ));
    }
    Ok((table.scores, table.offset))
}

struct BellTable<'a> {
    parties: &'a [Party],
    qr: Vec<usize>,
    ar: Vec<usize>,
    scores: Vec<f64>,
    offset: f64,
}

/// One player's part of a term: which question, and which answer (for probabilities) or none
/// (for correlators, which sum over both answers with signs).
#[derive(Clone, Copy)]
struct Factor {
    player: usize,
    question: usize,
    answer: Option<usize>,
}

impl BellTable<'_> {
    /// Adds `coefficient` times the probability (or correlator) of the event described by
    /// `factors`, spreading over the questions of players not mentioned.
    fn add(&mut self, factors: &[Factor], coefficient: f64) {
        let n = self.parties.len();
        let na: usize = self.ar.iter().product();
        let nq: usize = self.qr.iter().product();
        let mut involved = vec![None; n];
        for f in factors {
            involved[f.player] = Some(*f);
        }
        let spread: usize = (0..n)
            .filter(|&i| involved[i].is_none())
            .map(|i| self.qr[i])
            .product();
        let c = coefficient / spread as f64;
        let mut qd = vec![0; n];
        let mut ad = vec![0; n];
        for q in 0..nq {
            digits(q, &self.qr, &mut qd);
            if factors.iter().any(|f| qd[f.player] != f.question) {
                continue;
            }
            for a in 0..na {
                digits(a, &self.ar, &mut ad);
                let mut sign = 1.0;
                let mut matches = true;
                for f in factors {
                    match f.answer {
                        Some(ans) => matches &= ad[f.player] == ans,
                        None => {
                            if ad[f.player] == 1 {
                                sign = -sign;
                            }
                        }
                    }
                }
                if matches {
                    self.scores[q * na + a] += c * sign;
                }
            }
        }
    }

    fn player_index(&self, name: &str, ctx: &Context, field: &str) -> Result<usize> {
        self.parties
            .iter()
            .position(|p| p.name == name)
            .ok_or_else(|| ctx.error(field, format!("there is no player called `{name}`")))
    }

    fn question_index(
        &self,
        player: usize,
        label: i64,
        ctx: &Context,
        field: &str,
    ) -> Result<usize> {
        label_index(&self.parties[player].question_labels, label).ok_or_else(|| {
            ctx.error(
                field,
                format!("{} has no question {label}", self.parties[player].name),
            )
        })
    }

    fn require_two_answers(&self, player: usize, ctx: &Context, field: &str) -> Result<()> {
        if self.ar[player] != 2 {
            return Err(ctx.error(
                field,
                format!(
                    "correlators need two answers (+1 for the first, -1 for the second); {} has {}",
                    self.parties[player].name, self.ar[player]
                ),
            ));
        }
        Ok(())
    }

    fn add_term(
        &mut self,
        term: &Yaml,
        ctx: &Context,
        path: &str,
        constants: &[(String, Value)],
    ) -> Result<()> {
        let Yaml::Mapping(map) = term else {
            return Err(ctx.error(path, "expected a term {coefficient: c, event: {player: \"answer|question\", ...}} or {coefficient: c, correlator: {player: question, ...}}"));
        };
        let mut coefficient = None;
        let mut factors = Vec::new();
        let mut kinds = 0;
        for (k, v) in map {
            let key = k.as_str().unwrap_or("");
            let f = format!("{path}.{key}");
            match key {
                "coefficient" => coefficient = Some(real(v, ctx, &f, constants)?),
                "event" | "correlator" => {
                    kinds += 1;
                    let Some(m) = v.as_mapping() else {
                        return Err(ctx.error(&f, "expected a mapping from player name to its part of the term"));
                    };
                    if m.is_empty() {
                        return Err(ctx.error(&f, "the term names no player"));
                    }
                    for (pk, pv) in m {
                        let name = pk.as_str().unwrap_or("");
                        let pf = format!("{f}.{name}");
                        let player = self.player_index(name, ctx, &pf)?;
                        if key == "correlator" {
                            self.require_two_answers(player, ctx, &pf)?;
                            let label = pv.as_i64().ok_or_else(|| ctx.error(&pf, "expected the question label"))?;
                            let question = self.question_index(player, label, ctx, &pf)?;
                            factors.push(Factor { player, question, answer: None });
                        } else {
                            let text = match pv {
                                Yaml::String(s) => s.clone(),
                                other => return Err(ctx.error(&pf, format!("expected \"answer|question\", e.g. \"0|1\", found {}", yaml_brief(other)))),
                            };
                            let parsed = text.split_once('|').and_then(|(a, q)| {
                                Some((a.trim().parse::<i64>().ok()?, q.trim().parse::<i64>().ok()?))
                            });
                            let Some((alabel, qlabel)) = parsed else {
                                return Err(ctx.error(&pf, format!("expected \"answer|question\" with integer labels, e.g. \"0|1\", found \"{text}\"")));
                            };
                            let question = self.question_index(player, qlabel, ctx, &pf)?;
                            let answer = label_index(&self.parties[player].answer_labels, alabel)
                                .ok_or_else(|| ctx.error(&pf, format!("{} has no answer {alabel}", self.parties[player].name)))?;
                            factors.push(Factor { player, question, answer: Some(answer) });
                        }
                    }
                }
                _ => return Err(ctx.error(&f, format!("unknown field `{key}` (expected `coefficient` and one of `event`, `correlator`)"))),
            }
        }
        if kinds != 1 {
            return Err(ctx.error(path, "a term has exactly one of `event` and `correlator`"));
        }
        let Some(c) = coefficient else {
            return Err(ctx.error(path, "the term has no `coefficient`"));
        };
        self.add(&factors, c);
        Ok(())
    }

    /// Collins–Gisin table: row 0 / column 0 hold the constant and the single-player terms; the
    /// other rows (columns) run over Alice's (Bob's) question x and answer a < last, in that
    /// order, and hold coefficients of p(a b | x y).
    fn add_collins_gisin(&mut self, m: &[Vec<f64>], ctx: &Context, path: &str) -> Result<()> {
        let (qa, qb) = (self.qr[0], self.qr[1]);
        let (da, db) = (self.ar[0] - 1, self.ar[1] - 1);
        let (rows, cols) = (1 + qa * da, 1 + qb * db);
        self.check_shape(m, rows, cols, ctx, path, "1 + questions × (answers − 1)")?;
        let row_event = |r: usize| (((r - 1) / da), ((r - 1) % da));
        let col_event = |c: usize| (((c - 1) / db), ((c - 1) % db));
        self.offset += m[0][0];
        for (r, row) in m.iter().enumerate() {
            for (c, &coef) in row.iter().enumerate() {
                if coef == 0.0 || (r == 0 && c == 0) {
                    continue;
                }
                let mut factors = Vec::new();
                if r > 0 {
                    let (x, a) = row_event(r);
                    factors.push(Factor {
                        player: 0,
                        question: x,
                        answer: Some(a),
                    });
                }
                if c > 0 {
                    let (y, b) = col_event(c);
                    factors.push(Factor {
                        player: 1,
                        question: y,
                        answer: Some(b),
                    });
                }
                self.add(&factors, coef);
            }
        }
        Ok(())
    }

    /// Correlator table: [0][0] constant, [0][y] ⟨B_y⟩, [x][0] ⟨A_x⟩, [x][y] ⟨A_x B_y⟩.
    fn add_correlator_matrix(&mut self, m: &[Vec<f64>], ctx: &Context, path: &str) -> Result<()> {
        self.require_two_answers(0, ctx, path)?;
        self.require_two_answers(1, ctx, path)?;
        self.check_shape(
            m,
            1 + self.qr[0],
            1 + self.qr[1],
            ctx,
            path,
            "1 + questions",
        )?;
        self.offset += m[0][0];
        for (r, row) in m.iter().enumerate() {
            for (c, &coef) in row.iter().enumerate() {
                if coef == 0.0 || (r == 0 && c == 0) {
                    continue;
                }
                let mut factors = Vec::new();
                if r > 0 {
                    factors.push(Factor {
                        player: 0,
                        question: r - 1,
                        answer: None,
                    });
                }
                if c > 0 {
                    factors.push(Factor {
                        player: 1,
                        question: c - 1,
                        answer: None,
                    });
                }
                self.add(&factors, coef);
            }
        }
        Ok(())
    }

    fn check_shape(
        &self,
        m: &[Vec<f64>],
        rows: usize,
        cols: usize,
        ctx: &Context,
        path: &str,
        rule: &str,
    ) -> Result<()> {
        if m.len() != rows {
            return Err(ctx.error(
                path,
                format!(
                    "expected {rows} rows ({rule} of {}), found {}",
                    self.parties[0].name,
                    m.len()
                ),
            ));
        }
        for (r, row) in m.iter().enumerate() {
            if row.len() != cols {
                return Err(ctx.error(
                    &format!("{path}[{r}]"),
                    format!(
                        "expected {cols} columns ({rule} of {}), found {}",
                        self.parties[1].name,
                        row.len()
                    ),
                ));
            }
        }
        Ok(())
    }
}

/// A game whose score is the same for every asked question and answer has nothing to decide;
/// usually a typo in the predicate.
fn constant_score_warning(s: &Scenario) -> Option<String> {
    let na = s.joint_answers();
    let mut values = s
        .weights
        .iter()
        .enumerate()
        .filter(|(_, w)| **w != 0.0)
        .flat_map(|(q, _)| s.scores[q * na..(q + 1) * na].iter());
    let first = *values.next()?;
    if values.all(|v| *v == first) {
        let what = if s.kind == ScoreKind::Win {
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

pub(crate) fn yaml_brief(v: &Yaml) -> String {
    match v {
        Yaml::Null => "nothing".into(),
        Yaml::Bool(b) => format!("`{b}`"),
        Yaml::Number(n) => format!("`{n}`"),
        Yaml::String(s) => format!("\"{s}\""),
        Yaml::Sequence(_) => "a list".into(),
        Yaml::Mapping(_) => "a mapping".into(),
        Yaml::Tagged(_) => "a tagged value".into(),
    }
}
