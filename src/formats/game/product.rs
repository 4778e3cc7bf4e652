//! The k-fold parallel repetition (product) of a game, written back as a game spec.
//!
//! Each player of the product receives k questions at once and gives k answers. A joint label is
//! encoded in mixed radix with round 0 the least significant digit: question label
//! `Σ_r index_r · Q^r`, where `index_r` is the index of the round-r question in the original
//! label list (likewise answers). The original game enters as constant tables indexed by those
//! indices, so any game, formula or table, can be repeated:
//! - a game (`win`) is won iff every round is won, with the product question distribution;
//! - a Bell expression (`score`/`bell`) becomes the product of the per-round scores (the tensor
//!   product of the expressions), a constant term folded into the scores first.

use serde_yaml::{Mapping, Value};

use super::spec::{GameSpec, PlayerSpec};
use crate::error::{Error, Result};
use crate::model::scenario::{Scenario, ScoreKind};

/// Largest product table produced, in entries.
const MAX_PRODUCT_ENTRIES: f64 = 1e7;

/// Nested YAML table of `f(question indices..., answer indices...)` over the given radices.
fn nested_table(radices: &[usize], f: &dyn Fn(&[usize]) -> f64) -> Value {
    fn rec(radices: &[usize], prefix: &mut Vec<usize>, f: &dyn Fn(&[usize]) -> f64) -> Value {
        if prefix.len() == radices.len() {
            let x = f(prefix);
            return if x == x.round() && x.abs() < 1e15 {
                Value::from(x as i64)
            } else {
                Value::from(x)
            };
        }
        let r = radices[prefix.len()];
        let mut items = Vec::with_capacity(r);
        for i in 0..r {
            prefix.push(i);
            items.push(rec(radices, prefix, f));
            prefix.pop();
        }
        Value::Sequence(items)
    }
    rec(radices, &mut Vec::new(), f)
}

/// The k-fold product of `scenario` (named `name`) as a game spec.
pub fn parallel_repetition(scenario: &Scenario, name: &str, rounds: usize) -> Result<GameSpec> {
    if rounds == 0 {
        return Err(Error::InvalidArgument(
            "the number of rounds must be at least 1".into(),
        ));
    }
    let n = scenario.players();
    let qr = scenario.question_radices();
    let ar = scenario.answer_radices();
    let entries =
        (scenario.joint_questions() as f64 * scenario.joint_answers() as f64).powi(rounds as i32);
    if entries > MAX_PRODUCT_ENTRIES {
        return Err(Error::TooLarge {
            what: format!("the {rounds}-fold product of {name}"),
            estimate: format!("{entries:.3e} table entries"),
            hint: format!("use fewer rounds (the limit is {MAX_PRODUCT_ENTRIES:.0e} entries)"),
        });
    }
    let na = scenario.joint_answers();
    let total_weight: f64 = scenario.weights().iter().sum();
    // Fold a constant term into the scores so the product of scores is the product of values.
    let shift = scenario.offset() / total_weight;
    let q_index = |d: &[usize]| crate::model::scenario::index_of(&d[..n], &qr);
    let a_index = |d: &[usize]| crate::model::scenario::index_of(&d[n..], &ar);
    let mut radices = qr.clone();
    radices.extend(&ar);
    let table = nested_table(&radices, &|d| {
        scenario.scores()[q_index(d) * na + a_index(d)] + shift
    });
    let weight_table = nested_table(&qr, &|d| scenario.weights()[q_index(d)]);

    let qvar = |i: usize| format!("q{i}");
    let avar = |i: usize| format!("a{i}");
    // Index of player i's round-r question (answer) inside its product label.
    let digit = |var: String, radix: usize, r: usize| {
        if rounds == 1 {
            var
        } else {
            format!("{var} // {} % {radix}", radix.pow(r as u32))
        }
    };
    let round_ref = |table: &str, r: usize, with_answers: bool| {
        let mut s = table.to_string();
        for (i, &radix) in qr.iter().enumerate() {
            s += &format!("[{}]", digit(qvar(i), radix, r));
        }
        if with_answers {
            for (i, &radix) in ar.iter().enumerate() {
                s += &format!("[{}]", digit(avar(i), radix, r));
            }
        }
        s
    };

    let players = scenario
        .parties()
        .iter()
        .enumerate()
        .map(|(i, p)| {
            PlayerSpec::counted(
                &p.name,
                &qvar(i),
                &avar(i),
                qr[i].pow(rounds as u32),
                ar[i].pow(rounds as u32),
            )
        })
        .collect();
    let mut constants = Mapping::new();
    constants.insert(Value::from("round_score"), table);
    let all_ones = scenario.weights().iter().all(|&w| w == 1.0);
    let distribution = if all_ones {
        Value::from("sum")
    } else {
        constants.insert(Value::from("round_weight"), weight_table);
        let mut m = Mapping::new();
        let formula = (0..rounds)
            .map(|r| round_ref("round_weight", r, false))
            .collect::<Vec<_>>()
            .join(" * ");
        m.insert(Value::from("proportional"), Value::from(formula));
        Value::Mapping(m)
    };
    let per_round: Vec<String> = (0..rounds)
        .map(|r| round_ref("round_score", r, true))
        .collect();
    let (win, score) = match scenario.kind() {
        ScoreKind::Win => (Some(per_round.join(" and ")), None),
        ScoreKind::Score => (None, Some(per_round.join(" * "))),
    };
    Ok(GameSpec {
        name: Some(format!("{name}-x{rounds}")),
        description: Some(format!(
            "{rounds}-fold parallel repetition of {name}; labels encode the rounds in mixed radix, round 0 least significant"
        )),
        constants: Some(constants),
        players,
        distribution: Some(distribution),
        win,
        score,
        bell: None,
    })
}
