//! Bad game files give errors that name the file, line, column and field; good ones with odd
//! content give warnings.

use bellgap::formats::game::{CompileOptions, Game};
use bellgap::Error;

const PLAYERS: &str = "players:
  - name: alice
    question: x
    answer: a
    questions: 2
    answers: 2
  - name: bob
    question: y
    answer: b
    questions: 2
    answers: 2
";

fn load(text: &str) -> Result<Game, Error> {
    Game::from_yaml(text, "bad.yaml", CompileOptions::default())
}

/// Asserts an input error at `line:column` whose field and message contain the given text.
fn expect_error(text: &str, line: usize, column: Option<usize>, field: &str, message: &str) {
    let err = load(text).expect_err("the file must be rejected");
    let Error::Input {
        location,
        message: got,
    } = &err
    else {
        panic!("expected an input error, got {err:?}");
    };
    assert_eq!(location.file, "bad.yaml");
    assert_eq!(location.line, Some(line), "line of {err}");
    if let Some(c) = column {
        assert_eq!(location.column, Some(c), "column of {err}");
    }
    assert!(
        location.field.as_deref().unwrap_or("").contains(field),
        "field of {err}"
    );
    assert!(got.contains(message), "message of {err}");
    assert_eq!(err.exit_code(), 2);
}

#[test]
fn a_correct_file_loads() {
    let g = load(&format!("{PLAYERS}win: \"(a + b) % 2 == x * y\"\n")).unwrap();
    assert_eq!(g.scenario.joint_questions(), 4);
    assert!(g.warnings.is_empty());
}

#[test]
fn unknown_variable_points_at_its_column() {
    // `z` is the 16th character of the formula, which starts in column 7 after the quote.
    expect_error(
        &format!("{PLAYERS}win: \"(a + b) % 2 == z * y\"\n"),
        12,
        Some(22),
        "win",
        "unknown name `z`",
    );
}

#[test]
fn players_without_variable_names_get_a_hint_to_declare_them() {
    expect_error(
        "players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\nwin: \"(a + b) % 2 == x * y\"\n",
        4,
        Some(8),
        "win",
        "question: x, answer: a",
    );
    // With the names declared, an unknown name gets the list of known ones, not the hint.
    let err = load(&format!("{PLAYERS}win: \"(a + b) % 2 == z * y\"\n")).unwrap_err();
    assert!(!err.to_string().contains("named in its entry"), "{err}");
}

#[test]
fn formula_syntax_error_points_at_its_column() {
    expect_error(
        &format!("{PLAYERS}win: (a + b) % 2 = x * y\n"),
        12,
        Some(18),
        "win",
        "`==`",
    );
}

#[test]
fn broken_yaml_is_located() {
    let text = "players:\n  - name: alice\n    questions: [1, 2\n";
    let err = load(text).unwrap_err();
    let loc = err.location().expect("located");
    assert_eq!(loc.file, "bad.yaml");
    assert!(loc.line.is_some());
}

#[test]
fn unknown_field_is_rejected() {
    let err = load(&format!("{PLAYERS}wins: \"a == b\"\n")).unwrap_err();
    assert!(err.to_string().contains("unknown field `wins`"), "{err}");
    assert_eq!(err.location().unwrap().line, Some(12));
}

#[test]
fn duplicate_player_names() {
    let text = PLAYERS.replace("name: bob", "name: alice");
    expect_error(
        &format!("{text}win: \"a == b\"\n"),
        7,
        Some(11),
        "players[1].name",
        "two players",
    );
}

#[test]
fn duplicate_variable_names() {
    let text = PLAYERS.replace("answer: b", "answer: a");
    expect_error(
        &format!("{text}win: \"a == x\"\n"),
        9,
        None,
        "players[1].answer",
        "used twice",
    );
}

#[test]
fn empty_question_set() {
    let text = PLAYERS.replacen("questions: 2", "questions: 0", 1);
    expect_error(
        &format!("{text}win: \"a == b\"\n"),
        5,
        Some(16),
        "players[0].questions",
        "empty",
    );
    let text = PLAYERS.replacen("questions: 2", "questions: []", 1);
    expect_error(
        &format!("{text}win: \"a == b\"\n"),
        5,
        None,
        "players[0].questions",
        "empty",
    );
}

#[test]
fn duplicate_labels() {
    let text = PLAYERS.replacen("answers: 2", "answers: [0, 1, 0]", 1);
    expect_error(
        &format!("{text}win: \"a == b\"\n"),
        6,
        None,
        "players[0].answers[2]",
        "twice",
    );
}

#[test]
fn negative_probability() {
    let text = format!(
        "{PLAYERS}distribution:\n  table:\n    - [0, 0, 0.5]\n    - [1, 1, -0.5]\nwin: \"a == b\"\n"
    );
    expect_error(&text, 15, None, "distribution.table[1][2]", "negative");
}

#[test]
fn probabilities_must_sum_to_one_unless_normalised() {
    let table = "distribution:\n  table:\n    - [0, 0, 0.5]\n    - [1, 1, 0.3]\n";
    expect_error(
        &format!("{PLAYERS}{table}win: \"a == b\"\n"),
        14,
        None,
        "distribution.table",
        "sum to 0.8",
    );
    let g = load(&format!(
        "{PLAYERS}{table}  normalise: true\nwin: \"a == b\"\n"
    ))
    .unwrap();
    assert!((g.scenario.weights()[0] - 0.625).abs() < 1e-12);
    assert!((g.scenario.weights()[3] - 0.375).abs() < 1e-12);
}

#[test]
fn probabilities_may_be_expressions() {
    let text = format!(
        "{PLAYERS}distribution:\n  product:\n    alice: [\"1/3\", \"2/3\"]\n    bob: [0.5, 0.5]\nwin: \"a == b\"\n"
    );
    let g = load(&text).unwrap();
    assert!((g.scenario.weights()[2] - 1.0 / 3.0).abs() < 1e-12);
}

#[test]
fn unknown_question_label_in_table() {
    let text = format!("{PLAYERS}distribution:\n  table:\n    - [0, 7, 1]\nwin: \"a == b\"\n");
    expect_error(
        &text,
        14,
        Some(11),
        "distribution.table[0][1]",
        "bob has no question 7",
    );
}

#[test]
fn win_predicate_must_be_boolean() {
    expect_error(
        &format!("{PLAYERS}win: \"a + b\"\n"),
        12,
        None,
        "win",
        "must be true/false",
    );
}

#[test]
fn division_by_zero_names_the_questions_and_answers() {
    let err = load(&format!("{PLAYERS}score: \"1 / (a - b)\"\n")).unwrap_err();
    let msg = err.to_string();
    assert!(msg.contains("division by zero"), "{msg}");
    assert!(msg.contains("x=0, y=0, a=0, b=0"), "{msg}");
}

#[test]
fn one_objective_only() {
    expect_error(
        &format!("{PLAYERS}win: \"a == b\"\nscore: \"a\"\n"),
        1,
        None,
        "",
        "only one of",
    );
}

#[test]
fn bell_table_shape_is_checked() {
    let text = format!("{PLAYERS}bell:\n  collins_gisin: [[0, 1], [1, 1]]\n");
    expect_error(&text, 13, None, "bell.collins_gisin", "expected 3 rows");
}

#[test]
fn correlators_need_two_answers() {
    let text = PLAYERS.replacen("answers: 2", "answers: 3", 1);
    let text = format!("{text}bell:\n  correlators: [[0, 0, 0], [0, 1, 1], [0, 1, -1]]\n");
    expect_error(&text, 13, None, "bell.correlators", "two answers");
}

#[test]
fn constant_predicate_warns() {
    let g = load(&format!("{PLAYERS}win: \"x >= 0\"\n")).unwrap();
    assert_eq!(g.warnings.len(), 1);
    assert!(g.warnings[0].contains("always true"));
}

#[test]
fn oversized_table_is_refused_with_an_estimate() {
    let text = "players:
  - {name: p, question: x, answer: a, questions: 1000, answers: 100}
  - {name: q, question: y, answer: b, questions: 1000, answers: 100}
win: \"a == b\"
";
    let err = load(text).unwrap_err();
    assert!(matches!(err, Error::TooLarge { .. }), "{err}");
    assert!(err.to_string().contains("GiB"), "{err}");
    assert_eq!(err.exit_code(), 2);
}

#[test]
fn a_single_player_is_not_a_game() {
    let text = "players:\n  - {name: p, question: x, answer: a, questions: 2, answers: 2}\nwin: \"a == x\"\n";
    expect_error(text, 2, None, "players", "two or more players");
}

#[test]
fn explicit_labels_are_what_formulas_see() {
    let text = "players:
  - {name: p, question: x, answer: a, questions: [10, 20], answers: [-1, 1]}
  - {name: q, question: y, answer: b, questions: [10, 20], answers: [-1, 1]}
score: \"a * b * (if x == 20 and y == 20 then -1 else 1)\"
";
    let g = load(text).unwrap();
    // Correlator form of CHSH with ±1 answers: local bound 2 (CHSH 1969).
    let v = bellgap::bounds::classical::search(&g.scenario, None);
    assert!((v.value - 2.0).abs() < 1e-12);
}
