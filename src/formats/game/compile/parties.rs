//! Players: names, question and answer label sets, and the names of the question and answer
//! variables the formulas use.

use std::collections::HashSet;

use super::super::spec::GameSpec;
use super::MAX_NAME_CHARS;
use crate::error::Result;
use crate::formats::fields::parse_labels_for;
use crate::formats::formula::Value;
use crate::formats::located::Context;
use crate::model::scenario::Party;

/// Names the formula language reserves.
const RESERVED: &[&str] = &[
    "if", "then", "else", "and", "or", "xor", "not", "true", "false", "pi", "min", "max", "abs",
    "sqrt", "sin", "cos",
];

pub(super) fn parse_parties(spec: &GameSpec, ctx: &Context) -> Result<Vec<Party>> {
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

pub(super) fn check_identifier(name: &str, ctx: &Context, field: &str) -> Result<()> {
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

pub(super) fn parse_variables(
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

#[cfg(test)]
mod tests {
    use super::super::testing::{located, parts, spec, two_by_two};
    use super::*;

    #[test]
    fn labels_come_from_counts_or_lists() {
        let (s, ctx) = spec(
            "players:\n  - {name: alice, questions: 3, answers: [1, -1]}\n  - {name: bob, questions: [10, 20], answers: 2}\nscore: '0'\n",
        );
        let parties = parse_parties(&s, &ctx).unwrap();
        assert_eq!(parties[0].question_labels, vec![0, 1, 2]);
        assert_eq!(parties[0].answer_labels, vec![1, -1]);
        assert_eq!(parties[1].question_labels, vec![10, 20]);
        assert_eq!(parties[1].answers(), 2);
    }

    #[test]
    fn a_second_player_of_the_same_name_is_located() {
        let (s, ctx) = spec(
            "players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: alice, questions: 2, answers: 2}\nscore: '0'\n",
        );
        let e = parse_parties(&s, &ctx).unwrap_err();
        assert_eq!(
            located(&e),
            (Some("players[1].name".into()), Some(3)),
            "{e}"
        );
    }

    #[test]
    fn variables_take_question_slots_then_answer_slots() {
        let (s, ctx) = spec(&two_by_two("win: 'true'\n"));
        let (_, _, variables) = parts(&s, &ctx);
        let mut v = variables.clone();
        v.sort_by_key(|(_, slot)| *slot);
        let names: Vec<(&str, usize)> = v.iter().map(|(n, k)| (n.as_str(), *k)).collect();
        assert_eq!(names, vec![("x", 0), ("y", 1), ("a", 2), ("b", 3)]);
    }

    #[test]
    fn reserved_and_malformed_names_are_refused() {
        assert!(check_identifier("if", &spec("players: []\n").1, "f").is_err());
        assert!(check_identifier("2x", &spec("players: []\n").1, "f").is_err());
        assert!(check_identifier("x_2", &spec("players: []\n").1, "f").is_ok());
        let (s, ctx) = spec(&two_by_two("win: 'true'\n").replace("question: x", "question: max"));
        let e = parse_variables(&s, &ctx, &[]).unwrap_err();
        assert_eq!(located(&e).0.as_deref(), Some("players[0].question"), "{e}");
    }
}
