//! The correlations file (YAML or JSON): players with their question and answer sets, and one row
//! of probabilities per joint question; optionally the rounds behind each row (measured data).
//! Also the writer of a separating Bell expression as a game file.

use serde::Deserialize;
use serde_yaml::{Mapping, Value as Yaml};

use super::fields::{constant_number, parse_labels_for, row_question};
use super::files::read_text;
use super::game::spec::{GameSpec, PlayerSpec};
use super::located::{yaml_error, Context, SourceMap};
use crate::error::Result;
use crate::model::correlations::Correlations;
use crate::model::scenario::{at_most, digits, Party};

/// Rows must sum to one within this tolerance (typed probabilities carry rounding).
pub const ROW_TOLERANCE: f64 = 1e-6;

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct CorrelationsFile {
    #[serde(default)]
    name: Option<String>,
    #[serde(default)]
    description: Option<String>,
    players: Vec<CorrelationPlayer>,
    behaviour: Vec<BehaviourRow>,
    /// Rounds played per joint question, when the probabilities are measured frequencies (for
    /// the signalling test).
    #[serde(default)]
    rounds: Option<u64>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct CorrelationPlayer {
    name: String,
    questions: Yaml,
    answers: Yaml,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct BehaviourRow {
    questions: Vec<i64>,
    probabilities: Vec<Yaml>,
    /// Rounds played with this joint question (overrides the file's `rounds`).
    #[serde(default)]
    rounds: Option<u64>,
}

impl Correlations {
    /// Reads and validates a correlations file.
    pub fn from_file(path: &str) -> Result<Self> {
        let text = read_text(path)?;
        Self::from_yaml(&text, path)
    }

    /// Parses our correlations schema (YAML or JSON): players with question and answer sets, and
    /// one row per joint question listing `p(a|q)` over joint answers in mixed radix (first
    /// player most significant).
    pub fn from_yaml(text: &str, file: &str) -> Result<Self> {
        let raw: CorrelationsFile = serde_yaml::from_str(text).map_err(|e| yaml_error(e, file))?;
        let ctx = Context {
            file: file.to_string(),
            map: SourceMap::new(text),
        };
        let _ = &raw.description;
        if raw.players.len() < 2 {
            return Err(ctx.error("players", "correlations need two or more players"));
        }
        let mut parties = Vec::new();
        for (i, p) in raw.players.iter().enumerate() {
            if parties.iter().any(|q: &Party| q.name == p.name) {
                return Err(ctx.error(
                    &format!("players[{i}].name"),
                    format!("two players are called `{}`", p.name),
                ));
            }
            parties.push(Party {
                name: p.name.clone(),
                question_labels: parse_labels_for(
                    &p.questions,
                    &ctx,
                    &format!("players[{i}].questions"),
                )?,
                answer_labels: parse_labels_for(
                    &p.answers,
                    &ctx,
                    &format!("players[{i}].answers"),
                )?,
            });
        }
        let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
        let nq: usize = qr.iter().product();
        let na: usize = parties.iter().map(Party::answers).product();
        if (nq as f64) * (na as f64) > 1e8 {
            return Err(ctx.error("players", "the correlation table would exceed 10^8 entries"));
        }
        let mut p = vec![f64::NAN; nq * na];
        let mut seen = vec![false; nq];
        let mut rounds: Vec<Option<u64>> = vec![raw.rounds; nq];
        let mut d = vec![0; parties.len()];
        for (r, row) in raw.behaviour.iter().enumerate() {
            let rf = format!("behaviour[{r}]");
            let q = row_question(&row.questions, &parties, &ctx, &rf, &mut seen)?;
            if row.rounds.is_some() {
                rounds[q] = row.rounds;
            }
            if rounds[q] == Some(0) {
                // Point at the row's own `rounds`, or at the file-wide one it inherits.
                let field = if row.rounds.is_some() {
                    format!("{rf}.rounds")
                } else {
                    "rounds".to_string()
                };
                return Err(ctx.error(&field, "the number of rounds must be positive"));
            }
            if row.probabilities.len() != na {
                return Err(ctx.error(
                    &format!("{rf}.probabilities"),
                    format!(
                        "expected {na} probabilities (one per joint answer), found {}",
                        row.probabilities.len()
                    ),
                ));
            }
            let mut total = 0.0;
            for (a, v) in row.probabilities.iter().enumerate() {
                let f = format!("{rf}.probabilities[{a}]");
                let x = constant_number(v, &ctx, &f)?;
                if !x.is_finite() {
                    return Err(ctx.error(&f, format!("probability {x} is not a finite number")));
                }
                if x < -1e-12 {
                    return Err(ctx.error(&f, format!("probability {x} is negative")));
                }
                p[q * na + a] = x.max(0.0);
                total += x;
            }
            if !at_most((total - 1.0).abs(), ROW_TOLERANCE) {
                return Err(ctx.error(
                    &format!("{rf}.probabilities"),
                    format!("probabilities sum to {total}, not 1"),
                ));
            }
        }
        if let Some(missing) = seen.iter().position(|s| !s) {
            digits(missing, &qr, &mut d);
            let labels: Vec<String> = d
                .iter()
                .enumerate()
                .map(|(i, &k)| parties[i].question_labels[k].to_string())
                .collect();
            return Err(ctx.error(
                "behaviour",
                format!(
                    "no row for joint question [{}]; every joint question needs one",
                    labels.join(", ")
                ),
            ));
        }
        let rounds = if rounds.iter().all(Option::is_some) {
            Some(rounds.into_iter().flatten().collect())
        } else if rounds.iter().any(Option::is_some) {
            return Err(ctx.error(
                "rounds",
                "rounds are given for some joint questions only: give them for all (or a file-wide `rounds`)",
            ));
        } else {
            None
        };
        Ok(Correlations {
            name: raw.name.unwrap_or_else(|| file.to_string()),
            parties,
            p,
            rounds,
        })
    }
}

/// A behaviour as a correlations file that [`Correlations::from_yaml`] reads back: one row per
/// joint question, `probabilities[k]` the text of `p(a|q)` at `q * joint_answers + a` (a number
/// or a fraction `n/d`).
pub fn behaviour_file(
    name: &str,
    description: &str,
    parties: &[Party],
    probabilities: &[String],
) -> String {
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let nq: usize = qr.iter().product();
    let na: usize = parties.iter().map(Party::answers).product();
    let labels = |l: &[i64]| Yaml::Sequence(l.iter().map(|&v| Yaml::from(v)).collect());
    let mut players = Vec::new();
    for p in parties {
        let mut m = Mapping::new();
        m.insert(Yaml::from("name"), Yaml::from(p.name.clone()));
        m.insert(Yaml::from("questions"), labels(&p.question_labels));
        m.insert(Yaml::from("answers"), labels(&p.answer_labels));
        players.push(Yaml::Mapping(m));
    }
    let mut qd = vec![0; qr.len()];
    let mut rows = Vec::new();
    for q in 0..nq {
        digits(q, &qr, &mut qd);
        let questions: Vec<i64> = qd
            .iter()
            .zip(parties)
            .map(|(&k, p)| p.question_labels[k])
            .collect();
        let values = probabilities[q * na..(q + 1) * na]
            .iter()
            .map(|t| match t.parse::<i64>() {
                // Whole numbers as numbers; fractions and decimals as written.
                Ok(k) => Yaml::from(k),
                Err(_) => match t.parse::<f64>() {
                    Ok(v) => Yaml::from(v),
                    Err(_) => Yaml::from(t.clone()),
                },
            })
            .collect();
        let mut m = Mapping::new();
        m.insert(Yaml::from("questions"), labels(&questions));
        m.insert(Yaml::from("probabilities"), Yaml::Sequence(values));
        rows.push(Yaml::Mapping(m));
    }
    let mut file = Mapping::new();
    file.insert(Yaml::from("name"), Yaml::from(name));
    file.insert(Yaml::from("description"), Yaml::from(description));
    file.insert(Yaml::from("players"), Yaml::Sequence(players));
    file.insert(Yaml::from("behaviour"), Yaml::Sequence(rows));
    serde_yaml::to_string(&Yaml::Mapping(file)).unwrap_or_default()
}

/// A Bell expression over the correlations' full events (`coefficients` in their layout) as a game
/// file, so that the classical value of the file confirms `local_bound`; `value` is the
/// expression's value on the correlations (for the description).
pub fn expression_as_game(
    c: &Correlations,
    coefficients: &[f64],
    local_bound: f64,
    value: f64,
) -> GameSpec {
    let s = c.scenario_shape();
    let qr = s.question_radices();
    let ar = s.answer_radices();
    let na = s.joint_answers();
    let (mut qd, mut ad) = (vec![0; qr.len()], vec![0; qr.len()]);
    let mut terms = Vec::new();
    for (k, &coef) in coefficients.iter().enumerate() {
        if coef == 0.0 {
            continue;
        }
        digits(k / na, &qr, &mut qd);
        digits(k % na, &ar, &mut ad);
        let mut event = Mapping::new();
        for (i, p) in c.parties.iter().enumerate() {
            event.insert(
                Yaml::from(p.name.clone()),
                Yaml::from(format!(
                    "{}|{}",
                    p.answer_labels[ad[i]], p.question_labels[qd[i]]
                )),
            );
        }
        let mut term = Mapping::new();
        // Whole numbers are written as integers (an integer expression reads as one).
        let coefficient = if coef.fract() == 0.0 && coef.abs() < 1e15 {
            Yaml::from(coef as i64)
        } else {
            Yaml::from(coef)
        };
        term.insert(Yaml::from("coefficient"), coefficient);
        term.insert(Yaml::from("event"), Yaml::Mapping(event));
        terms.push(Yaml::Mapping(term));
    }
    let mut bell = Mapping::new();
    bell.insert(Yaml::from("terms"), Yaml::Sequence(terms));
    let labels = |l: &[i64]| Yaml::Sequence(l.iter().map(|&v| Yaml::from(v)).collect());
    GameSpec {
        name: Some(format!("separating-{}", c.name)),
        description: Some(format!(
            "Bell expression separating {} from the local set: local bound {}, value on the correlations {:.6}",
            c.name,
            if local_bound.fract() == 0.0 {
                format!("{local_bound}")
            } else {
                // Rounding residue below the printed precision reads 0, never -0.000000.
                format!("{:.6}", if local_bound.abs() < 5e-7 { 0.0 } else { local_bound })
            },
            if value.abs() < 5e-7 { 0.0 } else { value }
        )),
        players: c
            .parties
            .iter()
            .map(|p| PlayerSpec {
                name: p.name.clone(),
                question: None,
                answer: None,
                questions: labels(&p.question_labels),
                answers: labels(&p.answer_labels),
            })
            .collect(),
        bell: Some(Yaml::Mapping(bell)),
        ..Default::default()
    }
}
