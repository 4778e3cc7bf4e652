//! From a parsed [`GameSpec`] to the flat [`Scenario`]: label sets, constants, the question
//! distribution, and the score table (from a formula or a Bell table). Every error carries the
//! field path, which [`crate::formats::located::Context`] turns into file, line and column.

mod bell;
mod constants;
mod parties;
mod scores;
mod weights;

use super::spec::GameSpec;
use crate::error::{Error, Result};
use crate::formats::formula::{Scope, Value};
use crate::formats::located::Context;
use crate::model::scenario::{Scenario, ScoreKind};
use bell::build_bell;
use constants::parse_constants;
use parties::{parse_parties, parse_variables};
use scores::{build_scores, constant_score_warning};
use weights::build_weights;

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

/// How a game is compiled.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct CompileOptions {
    /// Build tables larger than [`DEFAULT_TABLE_LIMIT`].
    pub allow_large: bool,
}

/// The result of compiling: the table plus warnings worth showing the user.
pub struct Compiled {
    /// The flat table.
    pub scenario: Scenario,
    /// Warnings worth showing.
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
        crate::formats::formula::constant_named(self.constants, name)
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

/// Compiles a spec: players and labels, constants, the size check, the question distribution and
/// the score table, in that order.
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
                crate::limits::human_seconds(entries * SECONDS_PER_ENTRY)
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

/// Helpers for the compile steps' unit tests: a spec and its located context from YAML text.
#[cfg(test)]
mod testing {
    use super::*;
    use crate::formats::located::SourceMap;
    use crate::model::scenario::Party;

    /// The spec and context of `text` (the file is called `t.yaml`).
    pub(super) fn spec(text: &str) -> (GameSpec, Context) {
        let spec = crate::formats::game::parse_spec(text, "t.yaml").unwrap();
        let ctx = Context {
            file: "t.yaml".into(),
            map: SourceMap::new(text),
        };
        (spec, ctx)
    }

    /// Two players with two questions and two answers each, then `rest`.
    pub(super) fn two_by_two(rest: &str) -> String {
        format!(
            "players:\n  - {{name: alice, question: x, answer: a, questions: 2, answers: 2}}\n  - {{name: bob, question: y, answer: b, questions: 2, answers: 2}}\n{rest}"
        )
    }

    /// Named constants, and formula variables with their slots.
    type Named<T> = Vec<(String, T)>;

    /// Players, constants and the formula scope of a spec, as [`compile`] builds them.
    pub(super) fn parts(
        spec: &GameSpec,
        ctx: &Context,
    ) -> (Vec<Party>, Named<Value>, Named<usize>) {
        let parties = parse_parties(spec, ctx).unwrap();
        let constants = parse_constants(spec, ctx).unwrap();
        let variables = parse_variables(spec, ctx, &constants).unwrap();
        (parties, constants, variables)
    }

    /// The located field and line of an input error.
    pub(super) fn located(e: &Error) -> (Option<String>, Option<usize>) {
        match e {
            Error::Input { location, .. } => (location.field.clone(), location.line),
            other => panic!("not an input error: {other}"),
        }
    }
}
