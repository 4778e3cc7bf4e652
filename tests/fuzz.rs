//! Fuzzing every input format and the formula language (proptest). Each property asserts that
//! nothing panics and that what is accepted is honest; the binary runs assert the CLI contract
//! (exit 0 or 2, exactly one JSON object on stdout with `--json`) and the order of the bounds
//! as reported, classical ≤ see-saw ≤ verified NPA ≤ no-signalling.
//!
//! `cargo test` runs a bounded number of cases (a few seconds per property). A longer campaign:
//! `BELLGAP_FUZZ_CASES=5000 cargo test --release --test fuzz` (README, "Fuzzing").

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::process::Command;

use bellgap::bounds::classical::locality::Correlations;
use bellgap::bounds::quantum::npa::{certificate, verify};
use bellgap::formats::formula;
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::model::strategy::QuantumStrategy;
use proptest::prelude::*;
use proptest::test_runner::Config;

/// Cases per property: `BELLGAP_FUZZ_CASES` if set, else `default`.
fn cases(default: u32) -> Config {
    let n = std::env::var("BELLGAP_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default);
    Config {
        cases: n,
        failure_persistence: None,
        ..Config::default()
    }
}

// ---------------------------------------------------------------------------------------------
// Generators

/// Numbers as a file may spell them, hostile ones included.
fn number() -> impl Strategy<Value = String> {
    prop_oneof![
        (-5i64..=5).prop_map(|v| v.to_string()),
        (-2.0f64..2.0).prop_map(|v| format!("{v}")),
        Just(".nan".to_string()),
        Just(".inf".to_string()),
        Just("-.inf".to_string()),
        Just("1e308".to_string()),
        Just("-1e308".to_string()),
        Just("1e-320".to_string()),
        Just("9223372036854775807".to_string()),
        Just("-9223372036854775808".to_string()),
        Just("\"1/3\"".to_string()),
        Just("\"sqrt(2)/2\"".to_string()),
        Just("[]".to_string()),
        Just("{}".to_string()),
        Just("x".to_string()),
    ]
}

/// Formula text from the language's tokens, in grammatical and ungrammatical orders.
fn formula_text() -> impl Strategy<Value = String> {
    let token = prop_oneof![
        Just("a"),
        Just("b"),
        Just("x"),
        Just("y"),
        Just("1"),
        Just("0"),
        Just("2"),
        Just("0.5"),
        Just("1e308"),
        Just("9223372036854775807"),
        Just("+"),
        Just("-"),
        Just("*"),
        Just("/"),
        Just("//"),
        Just("%"),
        Just("**"),
        Just("=="),
        Just("!="),
        Just("<"),
        Just("<="),
        Just("and"),
        Just("or"),
        Just("xor"),
        Just("not"),
        Just("if"),
        Just("then"),
        Just("else"),
        Just("("),
        Just(")"),
        Just("["),
        Just("]"),
        Just(","),
        Just("min("),
        Just("max("),
        Just("abs("),
        Just("sqrt("),
        Just("sin("),
        Just("cos("),
        Just("pi"),
        Just("true"),
        Just("t[0]"),
        Just("^"),
        Just("é"),
        Just("\""),
    ];
    proptest::collection::vec(token, 1..24).prop_map(|t| t.join(" "))
}

/// A well-formed formula from the grammar (so that many cases reach evaluation).
fn well_formed() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        Just("a".to_string()),
        Just("b".to_string()),
        Just("x".to_string()),
        Just("y".to_string()),
        (-3i64..=3).prop_map(|v| format!("({v})")),
        Just("0.5".to_string()),
        Just("1e300".to_string()),
        Just("9223372036854775807".to_string()),
    ];
    leaf.prop_recursive(5, 40, 3, |inner| {
        prop_oneof![
            (
                inner.clone(),
                inner.clone(),
                prop_oneof![
                    Just("+"),
                    Just("-"),
                    Just("*"),
                    Just("/"),
                    Just("//"),
                    Just("%"),
                    Just("**"),
                    Just("=="),
                    Just("<"),
                    Just("and"),
                    Just("or"),
                    Just("xor")
                ]
            )
                .prop_map(|(l, r, op)| format!("({l} {op} {r})")),
            inner.clone().prop_map(|e| format!("(-{e})")),
            inner.clone().prop_map(|e| format!("(not {e})")),
            (inner.clone(), inner.clone(), inner.clone())
                .prop_map(|(c, t, e)| format!("(if {c} then {t} else {e})")),
            (inner.clone(), inner.clone()).prop_map(|(l, r)| format!("min({l}, {r})")),
            inner.clone().prop_map(|e| format!("sqrt(abs({e}))")),
            inner.prop_map(|e| format!("sin({e})")),
        ]
    })
}

/// A game file: sizes, distribution and a formula or table, each sometimes hostile.
fn game_text() -> impl Strategy<Value = String> {
    let count = prop_oneof![
        4 => (1usize..=3).prop_map(|v| v.to_string()),
        1 => Just("0".to_string()),
        1 => Just("-1".to_string()),
        1 => Just("[0, 2, 5]".to_string()),
        1 => Just("[1, 1]".to_string()),
        1 => Just("100000".to_string()),
        1 => number(),
    ];
    let distribution = prop_oneof![
        3 => Just("uniform".to_string()),
        2 => Just("sum".to_string()),
        1 => Just("{proportional: \"x + y + 1\"}".to_string()),
        1 => (number(), number()).prop_map(|(p, q)| format!("{{product: {{alice: [{p}, {q}], bob: [0.5, 0.5]}}}}")),
        1 => Just("{table: [[0, 0, 1]]}".to_string()),
        1 => number(),
    ];
    let body = prop_oneof![
        3 => well_formed().prop_map(|f| format!("score: \"{f}\"")),
        2 => well_formed().prop_map(|f| format!("win: \"{f}\"")),
        1 => formula_text().prop_map(|f| format!("score: \"{}\"", f.replace('"', "'"))),
        1 => (number(), number()).prop_map(|(c, d)| format!(
            "bell:\n  constant: {d}\n  terms:\n    - {{coefficient: {c}, event: {{alice: \"0|0\", bob: \"0|0\"}}}}\n    - {{coefficient: {c}, correlator: {{alice: 0, bob: 0}}}}"
        )),
        1 => (number(), number()).prop_map(|(c, d)| format!("bell:\n  correlators: [[0, 0, 0], [0, {c}, 1], [0, 1, {d}]]")),
    ];
    (count.clone(), count.clone(), count.clone(), count, distribution, body, any::<bool>()).prop_map(
        |(q1, a1, q2, a2, dist, body, with_distribution)| {
            let mut text = format!(
                "players:\n  - {{name: alice, question: x, answer: a, questions: {q1}, answers: {a1}}}\n  - {{name: bob, question: y, answer: b, questions: {q2}, answers: {a2}}}\n"
            );
            if with_distribution && !body.starts_with("bell") {
                text += &format!("distribution: {dist}\n");
            }
            text += &body;
            text.push('\n');
            text
        },
    )
}

/// Cuts, duplicates or garbles part of a text (structure-level mutations of a valid file).
fn mutated(text: String) -> impl Strategy<Value = String> {
    let len = text.len();
    (
        0..=len,
        0..=len,
        0usize..4,
        proptest::collection::vec(any::<u8>(), 0..6),
    )
        .prop_map(move |(i, j, kind, junk)| {
            let (i, j) = (i.min(j), i.max(j));
            let safe = |k: usize| {
                let mut k = k;
                while !text.is_char_boundary(k) {
                    k -= 1;
                }
                k
            };
            let (i, j) = (safe(i), safe(j));
            match kind {
                0 => format!("{}{}", &text[..i], &text[j..]),
                1 => format!("{}{}{}", &text[..j], &text[i..j], &text[j..]),
                2 => format!(
                    "{}{}{}",
                    &text[..i],
                    String::from_utf8_lossy(&junk),
                    &text[i..]
                ),
                _ => text.clone(),
            }
        })
}

// ---------------------------------------------------------------------------------------------
// Library properties: no panic, honest acceptance

proptest! {
    #![proptest_config(cases(400))]

    #[test]
    fn the_formula_language_never_panics(f in prop_oneof![formula_text(), well_formed()]) {
        let r = catch_unwind(AssertUnwindSafe(|| {
            if let Ok(e) = formula::parse(&f) {
                let scope = formula::ConstantScope { constants: &[] };
                if let Ok(bound) = e.bind(&scope) {
                    // Whatever is accepted is a finite number or a truth value.
                    if let Ok(formula::Value::Real(x)) = bound.eval(&[]) {
                        assert!(x.is_finite(), "{f} = {x}");
                    }
                }
            }
        }));
        prop_assert!(r.is_ok(), "panic on formula {f:?}");
    }

    #[test]
    fn game_files_compile_or_fail_with_a_location(text in game_text()) {
        let r = catch_unwind(AssertUnwindSafe(|| {
            Game::from_yaml(&text, "fuzz.yaml", CompileOptions::default())
        }));
        prop_assert!(r.is_ok(), "panic on\n{text}");
        match r.unwrap() {
            Ok(g) => {
                let s = &g.scenario;
                prop_assert!(s.weights().iter().all(|w| w.is_finite() && *w >= 0.0));
                prop_assert!(s.scores().iter().all(|v| v.is_finite()));
                let (lo, hi) = s.value_range();
                prop_assert!(lo.is_finite() && hi.is_finite());
            }
            Err(e) => {
                if let bellgap::Error::Input { location, .. } = &e {
                    prop_assert_eq!(&location.file, "fuzz.yaml");
                }
            }
        }
    }

    #[test]
    fn mutated_game_files_never_panic(text in mutated(std::fs::read_to_string(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/cglmp-3.yaml")).unwrap())) {
        let r = catch_unwind(AssertUnwindSafe(|| {
            let _ = Game::from_yaml(&text, "fuzz.yaml", CompileOptions::default());
        }));
        prop_assert!(r.is_ok(), "panic on\n{text}");
    }

    #[test]
    fn strategy_files_are_checked_without_panics(
        amplitudes in proptest::collection::vec(number(), 4),
        element in number(),
        dims in prop_oneof![Just("[2, 2]"), Just("[2]"), Just("[0, 2]"), Just("[65, 65]"), Just("[2, 2, 2]")],
    ) {
        let chsh = Game::from_file(
            concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
            CompileOptions::default(),
        ).unwrap();
        let text = format!(
            "dims: {dims}\nstate: [{}]\nmeasurements:\n  alice:\n    - question: 0\n      elements: [[[{element}, 0], [0, 0]], [[0, 0], [0, 1]]]\n    - question: 1\n      elements: [[[1, 0], [0, 0]], [[0, 0], [0, 1]]]\n  bob:\n    - question: 0\n      elements: [[[1, 0], [0, 0]], [[0, 0], [0, 1]]]\n    - question: 1\n      elements: [[[0.5, 0.5], [0.5, 0.5]], [[0.5, -0.5], [-0.5, 0.5]]]\n",
            amplitudes.join(", ")
        );
        let r = catch_unwind(AssertUnwindSafe(|| QuantumStrategy::from_yaml(&text, "s.yaml", &chsh.scenario)));
        prop_assert!(r.is_ok(), "panic on\n{text}");
        if let Ok(st) = r.unwrap() {
            // Anything accepted has a value no quantum strategy can beat (Tsirelson).
            let v = st.certified_value(&chsh.scenario);
            prop_assert!(v.lower <= (std::f64::consts::PI / 8.0).cos().powi(2) + 1e-12, "{v:?}");
        }
    }

    #[test]
    fn strategy_files_noise_sections_are_checked_without_panics(
        visibility in number(),
        efficiency in number(),
        dark in number(),
        no_click in prop_oneof![
            Just("best".to_string()),
            Just("extra".to_string()),
            Just("0".to_string()),
            Just("7".to_string()),
            Just("{alice: [0, 1], bob: [1, 0]}".to_string()),
            Just("{alice: [0], bob: [1, 0]}".to_string()),
            Just("{alice: [0, 1], carol: [1, 0]}".to_string()),
            Just("[0, 1]".to_string()),
        ],
    ) {
        let chsh = Game::from_file(
            concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
            CompileOptions::default(),
        ).unwrap();
        let text = format!(
            "dims: [2, 2]\nstate: [\"1/sqrt(2)\", 0, 0, \"1/sqrt(2)\"]\nmeasurements:\n  alice:\n    - question: 0\n      elements: [[[1, 0], [0, 0]], [[0, 0], [0, 1]]]\n    - question: 1\n      elements: [[[0.5, 0.5], [0.5, 0.5]], [[0.5, -0.5], [-0.5, 0.5]]]\n  bob:\n    - question: 0\n      elements: [[[1, 0], [0, 0]], [[0, 0], [0, 1]]]\n    - question: 1\n      elements: [[[0.5, 0.5], [0.5, 0.5]], [[0.5, -0.5], [-0.5, 0.5]]]\nnoise:\n  visibility: {visibility}\n  efficiency: {efficiency}\n  dark_counts: {dark}\n  no_click: {no_click}\n"
        );
        let r = catch_unwind(AssertUnwindSafe(|| QuantumStrategy::noise_from_yaml(&text, "s.yaml", &chsh.scenario)));
        prop_assert!(r.is_ok(), "panic on\n{text}");
        match r.unwrap() {
            Ok(Some(noise)) => {
                // Anything accepted is a valid model, and the noisy score a probability.
                prop_assert!(noise.check(&chsh.scenario).is_ok());
                let st = QuantumStrategy::from_yaml(&text, "s.yaml", &chsh.scenario).unwrap();
                let f = noise.best_assignment(&chsh.scenario, &st, &noise.initial_assignment(&chsh.scenario));
                let v = noise.certified_value(&chsh.scenario, &st, &f);
                prop_assert!(v.lower.is_finite() && v.lower >= -1e-12 && v.lower <= 1.0, "{v:?}");
            }
            Ok(None) => prop_assert!(false, "the section was not read"),
            Err(e) => {
                // Located at the file and a field under `noise`.
                let bellgap::Error::Input { location, .. } = &e else {
                    return Err(TestCaseError::fail(format!("not an input error: {e}")));
                };
                prop_assert_eq!(&location.file, "s.yaml");
                prop_assert!(location.field.as_deref().unwrap_or("").starts_with("noise"), "{e}");
            }
        }
    }

    #[test]
    fn sdpa_files_and_solutions_never_panic(text in mutated(
        "\"comment\n2 = mDIM\n1 = nBLOCK\n2 = bLOCKsTRUCT\n-1.0 0.5\n0 1 1 1 -1.0\n1 1 1 2 1.0\n2 1 2 2 1.0\nxMat = \n{\n{ {1, 0}, {0, 1} }\n}\nyMat = {\n{ {0.5, -0.5}, {-0.5, 0.5} }\n}\n".to_string())) {
        let r = catch_unwind(AssertUnwindSafe(|| {
            let _ = bellgap::optim::sdpa::SdpaProblem::parse(&text);
            let _ = bellgap::optim::sdpa::parse_solution(&text);
        }));
        prop_assert!(r.is_ok(), "panic on\n{text}");
    }

    #[test]
    fn correlations_files_are_checked_without_panics(
        row in proptest::collection::vec(number(), 4),
        questions in prop_oneof![Just("[0, 0]"), Just("[0]"), Just("[5, 0]"), Just("[-1, 0]")],
    ) {
        let text = format!(
            "players:\n  - {{name: east, questions: 1, answers: 2}}\n  - {{name: west, questions: 1, answers: 2}}\nbehaviour:\n  - questions: {questions}\n    probabilities: [{}]\n",
            row.join(", ")
        );
        let r = catch_unwind(AssertUnwindSafe(|| Correlations::from_yaml(&text, "c.yaml")));
        prop_assert!(r.is_ok(), "panic on\n{text}");
        if let Ok(c) = r.unwrap() {
            prop_assert!(c.p.iter().all(|v| v.is_finite() && *v >= -1e-6));
        }
    }

    /// What `nosignal --save` writes reads back to the same behaviour, with any player names
    /// and labels (the writer quotes what YAML would misread).
    #[test]
    fn written_behaviours_read_back(
        names in proptest::collection::vec("[a-z: #'\"-]{1,8}", 2),
        labels in proptest::collection::vec(-5i64..5, 2),
        numerators in proptest::collection::vec(0u32..4, 16),
    ) {
        use bellgap::model::scenario::Party;
        prop_assume!(names[0] != names[1]);
        let parties: Vec<Party> = names
            .iter()
            .zip(&labels)
            .map(|(n, &l)| Party {
                name: n.clone(),
                question_labels: vec![l, l + 7],
                answer_labels: vec![0, 1],
            })
            .collect();
        // Four rows of four, each k_i/Σk (a uniform row when all are 0).
        let mut texts = Vec::new();
        let mut expected = Vec::new();
        for row in numerators.chunks(4) {
            let total: u32 = row.iter().sum();
            for &k in row {
                let (n, d) = if total == 0 { (1, 4) } else { (k, total) };
                texts.push(if n == 0 { "0".to_string() } else { format!("{n}/{d}") });
                expected.push(n as f64 / d as f64);
            }
        }
        let text = bellgap::formats::correlations::behaviour_file("b", "d: 'x'", &parties, &texts);
        let c = Correlations::from_yaml(&text, "b.yaml").map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        prop_assert_eq!(&c.parties[0].name, &names[0]);
        for (a, b) in c.p.iter().zip(&expected) {
            prop_assert!((a - b).abs() < 1e-15, "{} against {}\n{}", a, b, text);
        }
    }
}

proptest! {
    #![proptest_config(cases(120))]

    /// Tampered certificates never prove a false bound: whatever `verify` accepts is at least
    /// Tsirelson's bound cos²(π/8) (Cirel'son 1980).
    #[test]
    fn tampered_certificates_never_prove_a_false_bound(
        scale in prop_oneof![Just(1.0), -2.0f64..2.0, Just(1e308), Just(0.0)],
        shift in prop_oneof![Just(0.0), -0.1f64..0.1],
        entry in 0usize..64,
        value in prop_oneof![Just(f64::NAN), Just(1e300), -1.0f64..1.0],
        claim in prop_oneof![Just(None), (0.5f64..1.0).prop_map(Some)],
    ) {
        let chsh = Game::from_file(
            concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
            CompileOptions::default(),
        ).unwrap();
        let s = &chsh.scenario;
        let level = bellgap::bounds::quantum::npa::Level::Length(1);
        let bound = bellgap::bounds::quantum::npa::npa_bound(s, &bellgap::NpaOptions::at(level.clone())).unwrap();
        let mut cert = certificate("chsh", s, &bound).unwrap();
        for z in cert.dual.iter_mut() {
            *z = *z * scale + shift;
        }
        let k = entry % cert.dual.len();
        cert.dual[k] = value;
        if let Some(c) = claim {
            cert.verified_upper = c;
        }
        let r = catch_unwind(AssertUnwindSafe(|| verify(s, &cert, &bellgap::Limits::default())));
        prop_assert!(r.is_ok());
        if let Ok(v) = r.unwrap() {
            prop_assert!(v.verified_upper >= (std::f64::consts::PI / 8.0).cos().powi(2) - 1e-12);
            prop_assert!(v.verified_upper <= cert.verified_upper + 1e-9);
        }
    }
}

/// A counts entry as a file may spell it: whole numbers, and hostile ones.
fn count() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => (0u64..50).prop_map(|v| v.to_string()),
        1 => number(),
        1 => Just("9007199254740992".to_string()),
        1 => Just("9007199254740993".to_string()),
        1 => Just("18446744073709551615".to_string()),
        1 => Just("18446744073709551616".to_string()),
        1 => Just("-0".to_string()),
        1 => Just("3.0".to_string()),
    ]
}

/// Counts files of two players (2 questions × 2 answers, optionally a no-click for Alice), with
/// hostile entries and structure-level mutations.
fn counts_text() -> impl Strategy<Value = String> {
    (
        any::<bool>(),
        proptest::collection::vec(proptest::collection::vec(count(), 4..8), 3..6),
        proptest::collection::vec(prop_oneof![Just(None), count().prop_map(Some)], 4),
    )
        .prop_map(|(no_click, rows, rounds)| {
            let mut text = format!(
                "players:\n  - {{name: alice, questions: 2, answers: 2{}}}\n  - {{name: bob, questions: 2, answers: 2}}\ncounts:\n",
                if no_click { ", no_click: 1" } else { "" }
            );
            for (k, row) in rows.iter().enumerate() {
                text += &format!(
                    "  - questions: [{}, {}]\n",
                    (k / 2) % 3,
                    k % 2
                );
                if let Some(Some(r)) = rounds.get(k) {
                    text += &format!("    rounds: {r}\n");
                }
                text += &format!("    answers: [{}]\n", row.join(", "));
            }
            text
        })
        .prop_flat_map(|text| prop_oneof![Just(text.clone()), mutated(text)])
}

proptest! {
    #![proptest_config(cases(400))]

    /// Hostile counts files are accepted or refused with a location, never a panic; what is
    /// accepted has whole counts adding up to each row's rounds, and its confidence region
    /// contains the frequencies with every interval inside [0, 1].
    #[test]
    fn counts_files_parse_or_fail_with_a_location(text in counts_text()) {
        let r = catch_unwind(AssertUnwindSafe(|| bellgap::model::counts::Counts::from_yaml(&text, "c.yaml")));
        prop_assert!(r.is_ok(), "panic on {text}");
        match r.unwrap() {
            Ok(c) => {
                let na = 4;
                for (q, &n) in c.rounds.iter().enumerate() {
                    prop_assert!(n > 0);
                    prop_assert_eq!(c.counts[q * na..(q + 1) * na].iter().sum::<u64>(), n);
                }
                let region = c.confidence_region(1e-3).unwrap();
                prop_assert!(region.contains(&c.frequencies()));
                prop_assert!(region.lower.iter().all(|v| (0.0..=1.0).contains(v)));
                prop_assert!(region.upper.iter().all(|v| (0.0..=1.0).contains(v)));
            }
            Err(e) => {
                let shown = e.to_string();
                prop_assert!(shown.contains("c.yaml"), "{shown}");
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// The binary: exit codes, one JSON object, bounds in order

fn run_json(args: &[&str]) -> (i32, serde_json::Value) {
    let out = Command::new(env!("CARGO_BIN_EXE_bellgap"))
        .args(args)
        .arg("--json")
        .arg("--quiet")
        .output()
        .expect("the binary runs");
    let code = out.status.code().unwrap_or(-1);
    let text = String::from_utf8_lossy(&out.stdout);
    let json: serde_json::Value = serde_json::from_str(&text)
        .unwrap_or_else(|e| panic!("{args:?}: not one JSON object ({e}): {text}"));
    (code, json)
}

/// Small valid games (2 players, up to 3 questions and answers) with random integer scores.
fn small_valid_game() -> impl Strategy<Value = String> {
    (1usize..=3, 2usize..=3, 1usize..=3, 2usize..=3, proptest::collection::vec(-3i32..=3, 81), any::<bool>())
        .prop_map(|(q1, a1, q2, a2, table, win)| {
            let n = q1 * a1 * q2 * a2;
            let rows: Vec<String> = (0..q1).map(|x| {
                let cols: Vec<String> = (0..q2).map(|y| {
                    let ans: Vec<String> = (0..a1).map(|a| {
                        let bs: Vec<String> = (0..a2).map(|b| {
                            let k = ((x * q2 + y) * a1 + a) * a2 + b;
                            let v = table[k % 81.min(n.max(1))];
                            if win { ((v > 0) as i32).to_string() } else { v.to_string() }
                        }).collect();
                        format!("[{}]", bs.join(", "))
                    }).collect();
                    format!("[{}]", ans.join(", "))
                }).collect();
                format!("[{}]", cols.join(", "))
            }).collect();
            let kind = if win { "win" } else { "score" };
            let expr = if win { "t[x][y][a][b] == 1" } else { "t[x][y][a][b]" };
            format!(
                "constants:\n  t: [{}]\nplayers:\n  - {{name: alice, question: x, answer: a, questions: {q1}, answers: {a1}}}\n  - {{name: bob, question: y, answer: b, questions: {q2}, answers: {a2}}}\n{kind}: \"{expr}\"\n",
                rows.join(", ")
            )
        })
}

proptest! {
    #![proptest_config(cases(12))]

    #[test]
    fn the_binary_keeps_its_contract_and_the_bounds_in_order(text in small_valid_game()) {
        let dir = std::env::temp_dir().join(format!("bellgap-fuzz-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("game.yaml");
        std::fs::write(&path, &text).unwrap();
        let p = path.to_string_lossy();
        let (code, j) = run_json(&["bounds", &p]);
        prop_assert_eq!(code, 0, "{}\n{}", text, j);
        let c = j["classical"].as_f64().unwrap();
        let ns = j["no_signalling"].as_f64().unwrap();
        let tol = 1e-9 * (1.0 + c.abs().max(ns.abs()));
        let mut chain = vec![("classical", c)];
        if let Some(l) = j["quantum_lower"].as_f64() {
            chain.push(("see-saw", l));
        }
        if let Some(u) = j["verified_upper"].as_f64() {
            chain.push(("verified NPA", u));
        }
        let ns_upper = j["no_signalling_details"]["certified_upper"].as_f64().unwrap_or(ns).max(ns);
        chain.push(("no-signalling", ns_upper));
        for w in chain.windows(2) {
            prop_assert!(w[0].1 <= w[1].1 + tol, "{} {} > {} {}\n{}", w[0].0, w[0].1, w[1].0, w[1].1, text);
        }
    }

    #[test]
    fn hostile_game_files_exit_0_or_2_with_one_json_object(text in game_text()) {
        let dir = std::env::temp_dir().join(format!("bellgap-fuzz-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("hostile.yaml");
        std::fs::write(&path, &text).unwrap();
        let p = path.to_string_lossy();
        for cmd in ["check", "classical", "nosignal"] {
            let (code, _) = run_json(&[cmd, &p]);
            prop_assert!(code == 0 || code == 2, "{cmd} exit {code} on\n{text}");
        }
    }

    #[test]
    fn hostile_protocol_files_exit_0_or_2(
        rounds in number(), wins in number(), qber in number(),
        range in (number(), number()), flip in number(),
    ) {
        let dir = std::env::temp_dir().join(format!("bellgap-fuzz-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let game = concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh-expression.yaml");
        let text = format!(
            "game: {game}\nrounds: {rounds}\nscore_sum: {wins}\nscore_range: [{}, {}]\nkey: {{qber: {qber}, noisy_preprocessing: {flip}}}\n",
            range.0, range.1
        );
        let path = dir.join("protocol.yaml");
        std::fs::write(&path, &text).unwrap();
        let (code, _) = run_json(&["review", &path.to_string_lossy()]);
        prop_assert!(code == 0 || code == 2, "exit {code} on\n{text}");
    }
}

/// A sweep list line from hostile pieces: commands, the files around the sweep (the list, its
/// output, a protected input, a device, a symbolic link) as inputs and as outputs, and garbage.
fn sweep_line() -> impl Strategy<Value = String> {
    let command = prop_oneof![
        Just("check games/chsh.yaml"),
        Just("classical games/chsh.yaml"),
        Just("npa games/chsh.yaml --level 1"),
        Just("evaluate games/chsh.yaml @input"),
        Just("local @input"),
        Just("sweep @list"),
        Just("sweep-merge @list"),
        Just("family chsh"),
        Just("\"unclosed"),
        Just(""),
    ];
    let output = prop_oneof![
        Just(""),
        Just(" --certificate @list"),
        Just(" --certificate @input"),
        Just(" --certificate @out"),
        Just(" --certificate /dev/null"),
        Just(" --certificate @link"),
        Just(" --svg @list"),
        Just(" --json"),
        Just(" --level \"1;2\""),
    ];
    (command, output).prop_map(|(c, o)| format!("{c}{o}"))
}

proptest! {
    #![proptest_config(cases(24))]

    /// Whatever a list says, `sweep` keeps its contract (exit 0, 2 or 3, one JSON object) and
    /// never writes over the list, its output (except as the sweep's own output), an input of
    /// any line, a device or a symbolic link's target; shards of it merge or are refused.
    #[test]
    fn hostile_sweep_lists_never_damage_files(
        lines in proptest::collection::vec(sweep_line(), 1..6),
        shards in 1usize..=3,
    ) {
        let dir = std::env::temp_dir().join(format!("bellgap-fuzz-sweep-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let (list, out, input, target, link) = (
            dir.join("list.txt"),
            dir.join("out.jsonl"),
            dir.join("input.yaml"),
            dir.join("target.txt"),
            dir.join("link.txt"),
        );
        std::fs::write(&input, "name: kept\n").unwrap();
        std::fs::write(&target, "kept\n").unwrap();
        #[cfg(unix)]
        std::os::unix::fs::symlink(&target, &link).unwrap();
        let text: String = lines
            .iter()
            .map(|l| {
                l.replace("@list", list.to_str().unwrap())
                    .replace("@input", input.to_str().unwrap())
                    .replace("@out", out.to_str().unwrap())
                    .replace("@link", link.to_str().unwrap())
                    + "\n"
            })
            .collect();
        std::fs::write(&list, &text).unwrap();
        let mut outputs = Vec::new();
        for i in 1..=shards {
            let shard_out = dir.join(format!("shard-{i}.jsonl"));
            let (code, j) = run_json(&[
                "sweep",
                list.to_str().unwrap(),
                "--shard",
                &format!("{i}/{shards}"),
                "-o",
                shard_out.to_str().unwrap(),
            ]);
            prop_assert!(code == 0 || code == 2 || code == 3, "exit {code}: {j}\n{text}");
            outputs.push(shard_out);
        }
        prop_assert_eq!(std::fs::read_to_string(&list).unwrap(), text.clone());
        // The input file is protected when a line that surely parses reads it (a line that
        // does not parse never runs, so its words are nobody's input; a line may then write
        // its certificate there, as asked).
        let input_read = lines.iter().any(|l| {
            ["evaluate games/chsh.yaml @input", "local @input"]
                .iter()
                .any(|c| l == c || *l == format!("{c} --json"))
        });
        if input_read {
            prop_assert_eq!(std::fs::read_to_string(&input).unwrap(), "name: kept\n");
        }
        prop_assert_eq!(std::fs::read_to_string(&target).unwrap(), "kept\n");
        #[cfg(unix)]
        prop_assert!(std::fs::symlink_metadata(&link).unwrap().file_type().is_symlink());
        prop_assert!(!std::fs::metadata("/dev/null").unwrap().file_type().is_file());
        let mut args = vec!["sweep-merge".to_string()];
        args.extend(outputs.iter().map(|p| p.to_string_lossy().into_owned()));
        let refs: Vec<&str> = args.iter().map(String::as_str).collect();
        let (code, j) = run_json(&refs);
        prop_assert!(code == 0 || code == 2 || code == 3, "merge exit {code}: {j}");
    }
}
