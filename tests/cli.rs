//! The `bellgap` binary end to end: JSON output, exit codes, error locations, families and the
//! locality test.

use std::path::PathBuf;

use bellgap::protocol::key::{EntropyBound, NoisyChshEntropyBound};
use serde_json::Value;

mod common;
use common::{bellgap, json_of};

fn temp_file(name: &str, content: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, content).unwrap();
    path
}

#[test]
fn bounds_json_has_the_value_keys() {
    let out = bellgap(&["bounds", "games/chsh.yaml", "--json"]);
    assert!(out.status.success());
    let j = json_of(&out);
    // CHSH 1969 (classical 3/4); Popescu–Rohrlich 1994 (no-signalling 1).
    assert!((j["classical"].as_f64().unwrap() - 0.75).abs() < 1e-9);
    assert!((j["no_signalling"].as_f64().unwrap() - 1.0).abs() < 1e-9);
    assert!((j["gaps"]["no_signalling_minus_classical"].as_f64().unwrap() - 0.25).abs() < 1e-9);
    assert_eq!(
        j["classical_details"]["strategy"]["alice"]["answers"]
            .as_array()
            .unwrap()
            .len(),
        2
    );
}

#[test]
fn every_game_command_prints_one_json_object() {
    for cmd in ["check", "classical", "nosignal", "bounds"] {
        let out = bellgap(&[cmd, "games/magic-square.yaml", "--json"]);
        assert!(out.status.success(), "{cmd}");
        let j = json_of(&out);
        assert_eq!(j["command"], cmd);
        assert_eq!(j["game"], "magic-square");
    }
    let j = json_of(&bellgap(&["check", "games/magic-square.yaml", "--json"]));
    assert_eq!(j["sizes"]["table_entries"], 9 * 16);
}

#[test]
fn human_output_is_a_table() {
    let out = bellgap(&["bounds", "games/odd-cycle-3.yaml"]);
    let text = String::from_utf8_lossy(&out.stdout);
    // Cleve–Høyer–Toner–Watrous 2004: classical 5/6.
    assert!(text.contains("classical"), "{text}");
    assert!(text.contains("(= 5/6)"), "{text}");
    assert!(text.contains("no-signalling"), "{text}");
}

#[test]
fn bad_input_exits_2_with_file_line_and_column() {
    let bad = temp_file(
        "bad.yaml",
        "players:\n  - {name: a, question: x, answer: a, questions: 2, answers: 2}\n  - {name: b, question: y, answer: b, questions: 2, answers: 2}\nwin: \"a == w\"\n",
    );
    let path = bad.to_string_lossy().to_string();
    let out = bellgap(&["classical", &path]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains(&format!("{path}:4:12")), "{err}");
    assert!(err.contains("unknown name `w`"), "{err}");
    // With --json the error is the one JSON object on stdout.
    let out = bellgap(&["classical", &path, "--json"]);
    assert_eq!(out.status.code(), Some(2));
    let j = json_of(&out);
    assert_eq!(j["error"]["kind"], "input");
    assert_eq!(j["error"]["location"]["line"], 4);
}

#[test]
fn missing_file_and_usage_errors_exit_2() {
    assert_eq!(
        bellgap(&["classical", "no/such/file.yaml"]).status.code(),
        Some(2)
    );
    assert_eq!(bellgap(&["frobnicate"]).status.code(), Some(2));
    assert_eq!(
        bellgap(&["family", "odd-cycle", "--n", "4"]).status.code(),
        Some(2)
    );
}

#[test]
fn family_output_is_a_game_file() {
    let out = bellgap(&["family", "odd-cycle", "--n", "5"]);
    assert!(out.status.success());
    let path = temp_file("odd5.yaml", &String::from_utf8_lossy(&out.stdout));
    let j = json_of(&bellgap(&["classical", &path.to_string_lossy(), "--json"]));
    // Cleve–Høyer–Toner–Watrous 2004: 1 − 1/(2n) = 0.9 for n = 5.
    assert!((j["classical"].as_f64().unwrap() - 0.9).abs() < 1e-9);
    // JSON output of a family is a game file too.
    let out = bellgap(&["family", "xor", "--signs", "1,1;1,-1", "--json"]);
    let path = temp_file("xor.json", &String::from_utf8_lossy(&out.stdout));
    let j = json_of(&bellgap(&["classical", &path.to_string_lossy(), "--json"]));
    assert!((j["classical"].as_f64().unwrap() - 0.75).abs() < 1e-9);
}

#[test]
fn family_product_of_a_file() {
    let out = bellgap(&[
        "family",
        "product",
        "--game",
        "games/chsh.yaml",
        "--rounds",
        "2",
    ]);
    assert!(out.status.success());
    let path = temp_file("chsh2.yaml", &String::from_utf8_lossy(&out.stdout));
    let j = json_of(&bellgap(&["bounds", &path.to_string_lossy(), "--json"]));
    // 10/16 (from memory; recomputed by brute force in published_values.rs).
    assert!((j["classical"].as_f64().unwrap() - 0.625).abs() < 1e-9);
}

fn two_bit_correlations(name: &str, rows: [[&str; 4]; 4]) -> PathBuf {
    let mut text = String::from(
        "players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\nbehaviour:\n",
    );
    for (k, row) in rows.iter().enumerate() {
        text += &format!(
            "  - questions: [{}, {}]\n    probabilities: [\"{}\", \"{}\", \"{}\", \"{}\"]\n",
            k / 2,
            k % 2,
            row[0],
            row[1],
            row[2],
            row[3]
        );
    }
    temp_file(name, &text)
}

/// The optimal CHSH correlations, p(ab|xy) = (1 + (−1)^(a+b+xy)/√2)/4, as a file.
fn tsirelson_box(name: &str) -> PathBuf {
    let (hi, lo) = ("(1 + 1/sqrt(2))/4", "(1 - 1/sqrt(2))/4");
    two_bit_correlations(
        name,
        [
            [hi, lo, lo, hi],
            [hi, lo, lo, hi],
            [hi, lo, lo, hi],
            [lo, hi, hi, lo],
        ],
    )
}

#[test]
fn locality_test_of_the_tsirelson_box() {
    // The optimal CHSH correlations: p(ab|xy) = (1 + (-1)^(a+b+xy)/√2)/4. Their critical white
    // noise visibility is 1/√2, where the CHSH value 2√2·v reaches the local bound 2 (CHSH 1969;
    // Cirel'son 1980).
    let path = tsirelson_box("tsirelson.yaml");
    let save = std::env::temp_dir().join(format!("bellgap-cli-{}/sep.yaml", std::process::id()));
    let out = bellgap(&[
        "local",
        &path.to_string_lossy(),
        "--json",
        "--save",
        &save.to_string_lossy(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert_eq!(j["local"], false);
    assert!((j["visibility"].as_f64().unwrap() - 1.0 / 2f64.sqrt()).abs() < 1e-7);
    assert!(j["signalling"].as_f64().unwrap() < 1e-12);
    let value = j["separating"]["value"].as_f64().unwrap();
    assert!((value - (1.0 - 1.0 / 2f64.sqrt())).abs() < 1e-7);
    // Scaled to small integers it is the CHSH game's win count (the correlated answers at
    // three question pairs, the anti-correlated ones at the fourth): local bound 3, value
    // 2 + √2 on the box, proven exactly.
    let int = &j["separating"]["integer"];
    let coefficients: Vec<i64> = int["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_i64().unwrap())
        .collect();
    assert_eq!(
        coefficients,
        [1, 0, 0, 1, 1, 0, 0, 1, 1, 0, 0, 1, 0, 1, 1, 0]
    );
    assert_eq!(int["local_bound"], 3);
    let v = int["value"].as_f64().unwrap();
    assert!(v <= 2.0 + 2f64.sqrt() + 1e-9 && v > 3.414, "{int}");
    // The saved file is that integer expression: its classical value is its local bound.
    let c = json_of(&bellgap(&["classical", &save.to_string_lossy(), "--json"]));
    assert_eq!(c["classical"].as_f64().unwrap(), 3.0, "{c}");
}

#[test]
fn locality_test_of_pr_box_and_local_box() {
    // PR box (Popescu–Rohrlich 1994): CHSH value 4, so the visibility is 2/4 = 1/2.
    let path = two_bit_correlations(
        "pr.yaml",
        [
            ["1/2", "0", "0", "1/2"],
            ["1/2", "0", "0", "1/2"],
            ["1/2", "0", "0", "1/2"],
            ["0", "1/2", "1/2", "0"],
        ],
    );
    let j = json_of(&bellgap(&["local", &path.to_string_lossy(), "--json"]));
    assert_eq!(j["local"], false);
    assert!((j["visibility"].as_f64().unwrap() - 0.5).abs() < 1e-7);
    // Both always answer 0: a deterministic (local) behaviour.
    let path = two_bit_correlations("det.yaml", [["1", "0", "0", "0"]; 4]);
    let j = json_of(&bellgap(&["local", &path.to_string_lossy(), "--json"]));
    assert_eq!(j["local"], true);
    assert!(j["visibility"].as_f64().unwrap() >= 1.0 - 1e-9);
}

#[test]
fn signalling_correlations_are_flagged() {
    // Bob's answer copies Alice's question: signalling, hence not local.
    let path = two_bit_correlations(
        "signal.yaml",
        [
            ["1", "0", "0", "0"],
            ["1", "0", "0", "0"],
            ["0", "1", "0", "0"],
            ["0", "1", "0", "0"],
        ],
    );
    let j = json_of(&bellgap(&["local", &path.to_string_lossy(), "--json"]));
    assert_eq!(j["local"], false);
    assert!(j["signalling"].as_f64().unwrap() > 0.5);
}

#[test]
fn correlations_rows_must_be_normalised() {
    let path = two_bit_correlations("unnorm.yaml", [["1", "0", "0", "1"]; 4]);
    let out = bellgap(&["local", &path.to_string_lossy()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("sum to 2"));
}

#[test]
fn npa_json_keys_and_certificate_round_trip() {
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let cert = dir.join("chsh-cert.json");
    let out = bellgap(&[
        "npa",
        "games/chsh.yaml",
        "--level",
        "1",
        "--json",
        "--certificate",
        &cert.to_string_lossy(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    // Cirel'son 1980: cos²(π/8).
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    for key in [
        "quantum_upper",
        "verified_upper",
        "level",
        "matrix_size",
        "moments",
        "status",
        "seconds",
    ] {
        assert!(j.get(key).is_some(), "missing {key}");
    }
    assert!((j["quantum_upper"].as_f64().unwrap() - tsirelson).abs() < 1e-7);
    let verified = j["verified_upper"].as_f64().unwrap();
    assert!(verified >= tsirelson && verified < tsirelson + 1e-6);
    assert_eq!(j["matrix_size"], 5);
    // The certificate re-checks without the solver to the same bound.
    let v = json_of(&bellgap(&[
        "verify",
        "games/chsh.yaml",
        &cert.to_string_lossy(),
        "--json",
    ]));
    assert_eq!(v["matches_claim"], true);
    assert!((v["verified_upper"].as_f64().unwrap() - verified).abs() < 1e-12);
    // A tampered certificate still proves only true bounds (it gets looser, never wrong).
    let mut c: Value = serde_json::from_str(&std::fs::read_to_string(&cert).unwrap()).unwrap();
    for z in c["dual"].as_array_mut().unwrap() {
        *z = Value::from(z.as_f64().unwrap() * 0.8 + 0.01);
    }
    let tampered = dir.join("tampered.json");
    std::fs::write(&tampered, c.to_string()).unwrap();
    // It no longer proves the claim, so verification fails (exit 2) and says what it proves.
    let out = bellgap(&[
        "verify",
        "games/chsh.yaml",
        &tampered.to_string_lossy(),
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let v = json_of(&out);
    let message = v["error"]["message"].as_str().unwrap().to_string();
    let proved: f64 = message
        .split("proves only quantum ≤ ")
        .nth(1)
        .and_then(|t| t.split(',').next())
        .and_then(|t| t.trim().parse().ok())
        .unwrap_or_else(|| panic!("unexpected message: {message}"));
    assert!(proved >= tsirelson, "{message}");
    // A certificate for another game is refused.
    assert_eq!(
        bellgap(&["verify", "games/i3322.yaml", &cert.to_string_lossy()])
            .status
            .code(),
        Some(2)
    );
}

#[test]
fn bounds_reports_quantum_gaps() {
    let j = json_of(&bellgap(&[
        "bounds",
        "games/cglmp-3.yaml",
        "--level",
        "1+joint",
        "--json",
    ]));
    // Acín–Durt–Gisin–Latorre 2002: 1 + √(11/3).
    assert!((j["quantum_upper"].as_f64().unwrap() - (1.0 + (11.0f64 / 3.0).sqrt())).abs() < 1e-6);
    let gaps = &j["gaps"];
    assert!(gaps["quantum_upper_minus_classical"].as_f64().unwrap() > 0.9);
    assert!(gaps["no_signalling_minus_quantum_upper"].as_f64().unwrap() > 1.0);
}

#[test]
fn npa_level_errors_are_usage_errors() {
    assert_eq!(
        bellgap(&["npa", "games/chsh.yaml", "--level", "0"])
            .status
            .code(),
        Some(2)
    );
    assert_eq!(
        bellgap(&["npa", "games/chsh.yaml", "--level", "1 A C"])
            .status
            .code(),
        Some(2)
    );
    // Three-body terms need products of three operators: level 1 cannot express them.
    let out = bellgap(&["npa", "games/mermin.yaml", "--level", "1"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("1+joint"));
}

#[test]
fn seesaw_saves_a_strategy_that_evaluates_to_its_value() {
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("chsh-strategy.yaml");
    let out = bellgap(&[
        "seesaw",
        "games/chsh.yaml",
        "--dim",
        "2",
        "--restarts",
        "3",
        "--seed",
        "5",
        "--save",
        &file.to_string_lossy(),
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    for key in ["quantum_lower", "dims", "seed", "restarts", "seconds"] {
        assert!(j.get(key).is_some(), "missing {key}");
    }
    assert_eq!(j["seed"], 5);
    // Cirel'son 1980.
    let lower = j["quantum_lower"].as_f64().unwrap();
    assert!((lower - (std::f64::consts::PI / 8.0).cos().powi(2)).abs() < 1e-7);
    let e = json_of(&bellgap(&[
        "evaluate",
        "games/chsh.yaml",
        &file.to_string_lossy(),
        "--json",
    ]));
    assert!((e["value"].as_f64().unwrap() - lower).abs() < 1e-12);
    // Critical visibility 1/√2 (common practice; Acín–Gisin–Toner 2006).
    assert!(
        (e["robustness"]["critical_visibility"].as_f64().unwrap() - 0.5f64.sqrt()).abs() < 1e-6
    );
    // A strategy for the wrong game is a clear input error.
    let out = bellgap(&["evaluate", "games/i3322.yaml", &file.to_string_lossy()]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn bounds_reports_whether_the_quantum_value_is_settled() {
    // CHSH: the see-saw meets the verified NPA bound, so the quantum value is settled.
    let j = json_of(&bellgap(&["bounds", "games/chsh.yaml", "--json"]));
    assert_eq!(j["quantum_settled"], true);
    assert!(j["gaps"]["quantum_upper_minus_lower"].as_f64().unwrap() < 1e-6);
    // I3322 with qubits (0.25) stays below its level-2 bound (0.25094): open.
    let j = json_of(&bellgap(&["bounds", "games/i3322.yaml", "--json"]));
    assert_eq!(j["quantum_settled"], false);
}

#[test]
fn margin_json_keys_and_values() {
    let j = json_of(&bellgap(&[
        "margin",
        "games/chsh.yaml",
        "--wins",
        "800",
        "--rounds",
        "1000",
        "--alpha",
        "1e-3",
        "--target-p-value",
        "1e-6",
        "--expected",
        "0.85",
        "--json",
    ]));
    for key in [
        "p_value",
        "lower_confidence",
        "margin",
        "rounds_needed",
        "caution",
        "assumptions",
    ] {
        assert!(j.get(key).is_some(), "missing {key}");
    }
    // Hoeffding 1963: e^-5 and 691 rounds (hand-computed in protocol_values.rs).
    assert!((j["p_value"].as_f64().unwrap() - (-5f64).exp()).abs() < 1e-15);
    assert_eq!(j["rounds_needed"], 691);
    assert!(
        bellgap(&[
            "margin",
            "games/chsh.yaml",
            "--wins",
            "2000",
            "--rounds",
            "1000"
        ])
        .status
        .code()
            == Some(2)
    );
}

#[test]
fn randomness_json_keys_and_the_chsh_curve() {
    let j = json_of(&bellgap(&[
        "randomness",
        "games/chsh-expression.yaml",
        "--score",
        "2.5",
        "--json",
    ]));
    // Pironio et al. 2010: 1/2 + 1/2·√(2 − I²/4) = 0.8307189 at I = 2.5.
    let p = j["guessing_probability"].as_f64().unwrap();
    assert!((0.8307189 - 1e-6..0.8307189 + 1e-5).contains(&p), "{p}");
    assert!((j["min_entropy"].as_f64().unwrap() + p.log2()).abs() < 1e-12);
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let svg = dir.join("h.svg");
    let j = json_of(&bellgap(&[
        "randomness",
        "games/chsh-expression.yaml",
        "--sweep",
        "2.2:2.8:3",
        "--svg",
        &svg.to_string_lossy(),
        "--json",
    ]));
    assert_eq!(j["sweep"].as_array().unwrap().len(), 3);
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));
}

/// `entropy` of the Tsirelson box with Bob as the key partner (light relaxation, four nodes).
fn tsirelson_key_entropy(file: &str, extra: &[&str]) -> std::process::Output {
    let path = tsirelson_box(file);
    let path = path.to_string_lossy();
    let mut args = vec![
        "entropy",
        "games/chsh-expression.yaml",
        "--behaviour",
        &path,
        "--key-with",
        "bob",
        "--adversary-words",
        "with-projectors",
        "--nodes",
        "4",
        "--json",
    ];
    args.extend_from_slice(extra);
    bellgap(&args)
}

#[test]
fn entropy_of_the_tsirelson_box_and_its_key_rate() {
    // The optimal CHSH behaviour certifies one full bit of H(A|X=0,E) (Acín et al. 2007, PRL 98,
    // 230501), and no bound may exceed it; Bob's answers to his first question differ from Alice's with probability
    // Q = (1 − 1/√2)/2, so the Devetak–Winter rate is 1 − h(Q) ≈ 0.3991.
    let out = tsirelson_key_entropy("tsirelson-key.yaml", &[]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert_eq!(j["command"], "entropy");
    let r = &j["results"][0];
    let h = r["entropy"]["bits"].as_f64().unwrap();
    // Four nodes under-estimate even a perfectly secret bit (the rule's own error): 0.9549
    // measured.
    assert!((0.95..=1.0).contains(&h), "{h}");
    let q: f64 = (1.0 - 1.0 / 2f64.sqrt()) / 2.0;
    let hq = -q * q.log2() - (1.0 - q) * (1.0 - q).log2();
    // The typed behaviour stands for every behaviour within 1e-6 of it in each probability: the
    // error-correction term is H(A|B) at the box plus the continuity term over that tolerance
    // (2ε + (1 + ε)h(ε/(1 + ε)) with ε = 2e-6, about 4.5e-5 bits).
    let ec = r["key"]["error_correction"].as_f64().unwrap();
    assert!(ec >= hq && ec <= hq + 5e-5, "{ec} {hq}");
    assert!((r["key"]["key_rate"].as_f64().unwrap() - (h - ec)).abs() < 1e-12);
    assert_eq!(r["entropy"]["nodes"], 4);
    assert!(j["assumptions"].as_array().unwrap().len() >= 4);
    // A score and a key pair cannot go together (the pair's statistics come from a behaviour).
    let out = bellgap(&[
        "entropy",
        "games/chsh-expression.yaml",
        "--score",
        "2.5",
        "--key-with",
        "bob",
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn a_single_answer_key_has_no_entropy_and_no_error_correction() {
    // A key player with one answer: H(A|E) = 0 and H(A|B) = 0 whatever the error rate or the
    // flip (there is nothing to change to); every figure stays finite. (The flip used to scale
    // the only answer's POVM by 1 − q and gave 2.19 bits from the solvers, and Fano's bound
    // used to read log₂ 0.)
    let game = temp_file(
        "one-answer.yaml",
        "name: one\nplayers:\n  - {name: alice, question: x, answer: a, questions: 2, answers: 1}\n  - {name: bob, question: y, answer: b, questions: 2, answers: 2}\nwin: b == x*y\n",
    );
    let game = game.to_string_lossy().to_string();
    for flip in [None, Some("0.2")] {
        let mut args = vec![
            "entropy",
            &game,
            "--score",
            "0.75",
            "--error-rate",
            "0.1",
            "--nodes",
            "4",
            "--json",
        ];
        if let Some(f) = flip {
            args.extend(["--noisy-preprocessing", f]);
        }
        let j = json_of(&bellgap(&args));
        let r = &j["results"][0];
        assert_eq!(r["entropy"]["bits"].as_f64(), Some(0.0), "{flip:?}");
        assert!(
            r["entropy"]["solver_bits"].as_f64().unwrap() < 1e-6,
            "{flip:?}"
        );
        assert_eq!(r["key"]["error_correction"].as_f64(), Some(0.0), "{flip:?}");
        assert_eq!(r["key"]["key_rate"].as_f64(), Some(0.0), "{flip:?}");
        let line = &r["entropy"]["min_tradeoff"];
        let at = line["at_lowest"].as_f64().unwrap()
            + line["slope"].as_f64().unwrap() * (0.75 - line["lowest"].as_f64().unwrap());
        assert!(
            at <= 1e-7,
            "{flip:?}: the line claims {at} bits of a constant"
        );
    }
}

#[test]
fn entropy_of_a_strategy_file() {
    // The see-saw's CHSH strategy, saved and given back: its behaviour (Born rule) is the
    // Tsirelson box's, so the bound and the key pair's term equal the box's (Acín et al. 2007:
    // a full secret bit; Q = (1 − 1/√2)/2).
    let dir = std::env::temp_dir().join(format!("bellgap-strategy-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let saved = dir.join("chsh-strategy.yaml");
    let out = bellgap(&[
        "seesaw",
        "games/chsh-expression.yaml",
        "--restarts",
        "4",
        "--seed",
        "7",
        "--save",
        &saved.to_string_lossy(),
        "--quiet",
    ]);
    assert!(out.status.success());
    let light = ["--adversary-words", "with-projectors", "--nodes", "4"];
    let mut args = vec![
        "entropy",
        "games/chsh-expression.yaml",
        "--key-with",
        "bob",
        "--json",
    ];
    args.extend_from_slice(&light);
    let saved_name = saved.to_string_lossy().to_string();
    let mut with_strategy = args.clone();
    with_strategy.extend(["--strategy", &saved_name]);
    let j = json_of(&bellgap(&with_strategy));
    let box_json = json_of(&tsirelson_key_entropy("tsirelson-strategy.yaml", &[]));
    let (a, b) = (&j["results"][0], &box_json["results"][0]);
    // The typed box stands for every behaviour within 1e-6 of it, the strategy for those within
    // its evaluation error (about 1e-14): the box's bound may only be lower, and slightly.
    let h = a["entropy"]["bits"].as_f64().unwrap();
    let h_box = b["entropy"]["bits"].as_f64().unwrap();
    assert!(h >= h_box - 1e-6 && h - h_box < 1e-3, "{h} {h_box}");
    let ec = a["key"]["error_correction"].as_f64().unwrap();
    let ec_box = b["key"]["error_correction"].as_f64().unwrap();
    assert!(ec <= ec_box + 1e-9 && ec_box - ec < 5e-5, "{ec} {ec_box}");
    assert!(j["given"].as_str().unwrap().contains("strategy"));
    // A strategy with a score, or with a behaviour, is a usage error; a strategy file that
    // does not fit the game is an input error; both exit 2.
    for extra in [
        vec!["--strategy", &saved_name, "--score", "2.5"],
        vec!["--strategy", &saved_name, "--behaviour", &saved_name],
        vec!["--strategy", "games/chsh.yaml"],
    ] {
        let mut a = vec!["entropy", "games/chsh-expression.yaml"];
        a.extend(extra.iter().copied());
        assert_eq!(bellgap(&a).status.code(), Some(2), "{extra:?}");
    }
}

#[test]
fn noisy_preprocessing_in_the_entropy_and_key_commands() {
    // The Tsirelson box with Alice's key bit flipped with probability 0.1: the error-correction
    // term is h of the flipped bit's error rate Q' = Q(1 − q) + (1 − Q)q, from the behaviour's
    // table; the entropy stays at most 1 bit.
    let out = tsirelson_key_entropy("tsirelson-noisy.yaml", &["--noisy-preprocessing", "0.1"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    let r = &j["results"][0];
    let h = r["entropy"]["bits"].as_f64().unwrap();
    assert!((0.95..=1.0).contains(&h), "{h}");
    assert_eq!(r["entropy"]["preprocessing"]["kind"], "noisy");
    let q: f64 = (1.0 - 1.0 / 2f64.sqrt()) / 2.0;
    let noisy = q * 0.9 + (1.0 - q) * 0.1;
    let hq = -noisy * noisy.log2() - (1.0 - noisy) * (1.0 - noisy).log2();
    // The typed behaviour stands for every behaviour within 1e-6 of it in each probability: the
    // error-correction term is H(A|B) at the box plus the continuity term over that tolerance
    // (2ε + (1 + ε)h(ε/(1 + ε)) with ε = 2e-6, about 4.5e-5 bits).
    let ec = r["key"]["error_correction"].as_f64().unwrap();
    assert!(ec >= hq && ec <= hq + 5e-5, "{ec} {hq}");
    assert!(j["assumptions"]
        .as_array()
        .unwrap()
        .iter()
        .any(|a| a.as_str().unwrap().contains("noisy preprocessing")));
    // A pair of answers, or a probability outside [0, 1], is refused with exit 2.
    for extra in [
        &["--with", "bob", "--noisy-preprocessing", "0.1"][..],
        &["--noisy-preprocessing", "1.5"][..],
        &["--noisy-preprocessing", "nan"][..],
    ] {
        let mut args = vec!["entropy", "games/chsh-expression.yaml", "--score", "2.5"];
        args.extend_from_slice(extra);
        let out = bellgap(&args);
        assert_eq!(out.status.code(), Some(2), "{extra:?}");
    }
    // The analytic key figures: S = 2.5, Q = 0.03, q = 0.1 gives H(Â|E) = 0.703571 and the key
    // error rate 0.124 (our computation from the bound of Ho et al. 2020).
    let key_with_flip = |flip: &str| {
        bellgap(&[
            "key",
            "--chsh",
            "2.5",
            "--qber",
            "0.03",
            "--noisy-preprocessing",
            flip,
            "--json",
        ])
    };
    let j = json_of(&key_with_flip("0.1"));
    assert!((j["conditional_entropy"].as_f64().unwrap() - 0.703_571_4).abs() < 1e-6);
    assert!((j["key_qber"].as_f64().unwrap() - 0.124).abs() < 1e-12);
    assert_eq!(j["noisy_preprocessing"].as_f64(), Some(0.1));
    assert_eq!(key_with_flip("0.6").status.code(), Some(2));
    // The best flip: under depolarising noise, S = 2√2(1 − 2Q), a QBER of 7.5 % is above the
    // threshold without preprocessing (7.15 %) and below the one with the best flip (8.08 %,
    // our computation): no key without the flip, some with it; at 8.5 % none either way.
    let at = |qber: f64, flip: Option<&str>| {
        let s = format!("{}", 2.0 * 2f64.sqrt() * (1.0 - 2.0 * qber));
        let q = format!("{qber}");
        let mut args = vec!["key", "--chsh", &s, "--qber", &q, "--json"];
        if let Some(f) = flip {
            args.extend(["--noisy-preprocessing", f]);
        }
        json_of(&bellgap(&args))
    };
    let plain = at(0.075, None);
    assert_eq!(plain["key_rate"].as_f64(), Some(0.0));
    let best = &plain["best_noisy_preprocessing"];
    let best_rate = best["key_rate"].as_f64().unwrap();
    assert!(best_rate > 1e-3, "{best}");
    let q = best["probability"].as_f64().unwrap();
    assert!(q > 0.0 && q <= 0.5);
    for flip in ["0.1", "0.3", "0.45"] {
        assert!(at(0.075, Some(flip))["key_rate"].as_f64().unwrap() <= best_rate);
    }
    let there = at(0.075, Some(&format!("{q}")));
    assert!((there["key_rate"].as_f64().unwrap() - best_rate).abs() < 1e-15);
    assert_eq!(
        at(0.085, None)["best_noisy_preprocessing"]["key_rate"].as_f64(),
        Some(0.0)
    );
    // The review's key section takes the same preprocessing (CHSH: the analytic bound).
    let dir = std::env::temp_dir().join(format!("bellgap-noisy-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let game = std::fs::canonicalize("games/chsh.yaml").unwrap();
    for (flip, ok) in [("0.1", true), ("0.7", false)] {
        let protocol = dir.join(format!("run-{flip}.yaml"));
        std::fs::write(
            &protocol,
            format!(
                "game: {}\nrounds: 200000\nwins: 169400\nkey: {{qber: 0.03, noisy_preprocessing: {flip}}}\n",
                game.display()
            ),
        )
        .unwrap();
        let out = bellgap(&["review", &protocol.to_string_lossy(), "--json"]);
        if !ok {
            assert_eq!(out.status.code(), Some(2));
            assert!(String::from_utf8_lossy(&out.stderr).contains("noisy_preprocessing"));
            continue;
        }
        let j = json_of(&out);
        let k = &j["key"];
        assert_eq!(k["preprocessing"]["kind"], "noisy");
        assert!((k["figures"]["key_qber"].as_f64().unwrap() - 0.124).abs() < 1e-12);
        let sv = k["chsh_value"].as_f64().unwrap();
        let want = NoisyChshEntropyBound::new(0.1).unwrap().entropy(sv);
        assert!((k["figures"]["conditional_entropy"].as_f64().unwrap() - want).abs() < 1e-12);
    }
}

#[test]
fn key_and_review_reports() {
    let j = json_of(&bellgap(&["key", "--chsh", "2.5", "--qber", "0", "--json"]));
    // Pironio et al. 2009: H(A|E) ≥ 0.456436 at S = 2.5; threshold QBER 0.071492.
    assert!((j["conditional_entropy"].as_f64().unwrap() - 0.456436).abs() < 1e-6);
    assert!((j["threshold_qber"].as_f64().unwrap() - 0.071492).abs() < 1e-6);
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let html = dir.join("review.html");
    let out = bellgap(&[
        "review",
        "examples/data/beacon-protocol.yaml",
        "--output",
        &html.to_string_lossy(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc = std::fs::read_to_string(&html).unwrap();
    for needle in [
        "<svg",
        "not a security proof",
        "Clopper",
        "min-entropy",
        "Azuma",
    ] {
        assert!(doc.contains(needle), "report lacks {needle}");
    }
    let j = json_of(&bellgap(&[
        "review",
        "examples/data/beacon-protocol.yaml",
        "--json",
    ]));
    assert!(j["margin"]["margin"].as_f64().unwrap() > 0.08);
    assert!(
        j["randomness"]["at_lower_confidence"]["min_entropy"]
            .as_f64()
            .unwrap()
            > 0.5
    );
}

#[test]
fn npa_compares_levels_and_plots() {
    let dir = std::env::temp_dir().join(format!("bellgap-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let svg = dir.join("levels.svg");
    let j = json_of(&bellgap(&[
        "npa",
        "games/i3322.yaml",
        "--level",
        "1;1+joint;2",
        "--svg",
        &svg.to_string_lossy(),
        "--json",
    ]));
    let levels = j["levels"].as_array().unwrap();
    assert_eq!(levels.len(), 3);
    // Navascués–Pironio–Acín 2008: 0.375, 0.251471, 0.2509397, decreasing with the level.
    let v: Vec<f64> = levels
        .iter()
        .map(|l| l["verified_upper"].as_f64().unwrap())
        .collect();
    assert!(
        v[0] > v[1] && v[1] > v[2] && (v[2] - 0.2509397).abs() < 2e-6,
        "{v:?}"
    );
    assert_eq!(j["level"], "2");
    // Each level's excess over the best verified bound, on a log axis (0.12, 5.3e-4: two
    // decades apart, flat on a linear axis); the best level is named in the title.
    let plot = std::fs::read_to_string(&svg).unwrap();
    assert_eq!(plot.matches("<circle").count(), 2, "{plot}");
    assert!(plot.contains("best: level 2"), "{plot}");
    assert!(plot.contains("<tspan"), "{plot}");
}

#[test]
fn first_order_solver_and_its_budget() {
    // Converged: the CHSH game at level 2, Tsirelson's cos²(π/8) (Tsirelson 1980).
    let out = bellgap(&[
        "npa",
        "games/chsh.yaml",
        "--level",
        "2",
        "--symmetry",
        "off",
        "--solver",
        "first-order",
        "--json",
    ]);
    assert!(out.status.success());
    let j = json_of(&out);
    assert_eq!(j["solver"], "first-order");
    assert_eq!(j["status"], "solved");
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    let verified = j["verified_upper"].as_f64().unwrap();
    assert!(
        verified >= tsirelson && verified < tsirelson + 1e-7,
        "{verified}"
    );
    // Stopped by its budget: still a verified bound, never called solved.
    let out = bellgap(&[
        "npa",
        "games/i3322.yaml",
        "--level",
        "3",
        "--solver",
        "first-order",
        "--budget",
        "0.05",
    ]);
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("stopped at the time limit"), "{text}");
    assert!(text.contains("stopped early, last primal value"), "{text}");
    assert!(!text.contains("first-order solved"), "{text}");
    // A budget must be a positive, finite number of seconds.
    for bad in ["-1", "0", "nan", "inf"] {
        let out = bellgap(&["npa", "games/chsh.yaml", &format!("--budget={bad}")]);
        assert_eq!(out.status.code(), Some(2), "{bad}");
        assert!(
            String::from_utf8_lossy(&out.stderr).contains("--budget"),
            "{bad}"
        );
    }
}

#[test]
fn check_reports_the_symmetries_modulo_no_signalling() {
    // I3322 in Collins–Gisin form: no symmetry of the table, 8 of its value on no-signalling
    // behaviours (each checked on every deterministic strategy in `model::symmetry`'s tests).
    let j = json_of(&bellgap(&["check", "games/i3322.yaml", "--json"]));
    assert_eq!(j["symmetry"]["order"], 1);
    assert_eq!(j["symmetry_modulo_no_signalling"]["order"], 8);
    assert_eq!(j["symmetry_modulo_no_signalling"]["complete"], true);
    let generators = j["symmetry_modulo_no_signalling"]["generators"]
        .as_array()
        .unwrap();
    assert!(!generators.is_empty());
    let text = String::from_utf8_lossy(&bellgap(&["check", "games/i3322.yaml"]).stdout).to_string();
    assert!(text.contains("order 8 modulo no-signalling"), "{text}");
    assert!(text.contains("generator 1 modulo no-signalling"), "{text}");
    // When the group is no larger than the table's own, the text adds nothing.
    let text = String::from_utf8_lossy(&bellgap(&["check", "games/chsh.yaml"]).stdout).to_string();
    assert!(!text.contains("modulo no-signalling"), "{text}");
}

#[test]
fn a_sharded_sweep_merges_into_the_whole() {
    let list = temp_file(
        "sweep-list.txt",
        "# three tasks and a bad one\nclassical games/chsh.yaml\nnosignal games/chsh.yaml\n\nnpa games/chsh.yaml --level 0\nclassical games/odd-cycle-3.yaml\n",
    );
    let dir = list.parent().unwrap().to_path_buf();
    let list = list.to_str().unwrap().to_string();
    let whole = dir.join("whole.jsonl");
    // One line fails: every record is written, and the exit code (3) tells a batch scheduler.
    let out = bellgap(&["sweep", &list, "-o", whole.to_str().unwrap(), "--quiet"]);
    assert_eq!(
        out.status.code(),
        Some(3),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("1 line of the list failed"));
    let mut shards = Vec::new();
    for i in 1..=3 {
        let file = dir.join(format!("shard-{i}.jsonl"));
        let shard = format!("{i}/3");
        let out = bellgap(&[
            "sweep",
            &list,
            "--shard",
            &shard,
            "-o",
            file.to_str().unwrap(),
        ]);
        // Tasks 1 and 4, task 2, task 3 (the bad one): shards count from 1 like tasks.
        assert_eq!(
            out.status.code(),
            Some(if i == 3 { 3 } else { 0 }),
            "shard {i}"
        );
        shards.push(file.to_str().unwrap().to_string());
    }
    let merged = dir.join("merged.jsonl");
    let mut args = vec!["sweep-merge"];
    args.extend(shards.iter().map(String::as_str));
    args.extend(["-o", merged.to_str().unwrap(), "-q"]);
    let out = bellgap(&args);
    assert_eq!(
        out.status.code(),
        Some(3),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let read = |p: &std::path::Path| -> Vec<Value> {
        std::fs::read_to_string(p)
            .unwrap()
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect()
    };
    let (whole, merged) = (read(&whole), read(&merged));
    assert_eq!(whole.len(), 4);
    assert_eq!(merged.len(), 4);
    for (a, b) in whole.iter().zip(&merged) {
        assert_eq!(a["task"], b["task"]);
        assert_eq!(a["line"], b["line"]);
        assert_eq!(a["error"], b["error"]);
        assert_eq!(a["result"]["classical"], b["result"]["classical"]);
        assert_eq!(a["result"]["no_signalling"], b["result"]["no_signalling"]);
    }
    // The values are those of the commands run alone.
    assert_eq!(merged[0]["result"]["classical"], 0.75);
    assert_eq!(merged[1]["result"]["no_signalling"].as_f64().unwrap(), 1.0);
    assert_eq!(merged[2]["error"]["kind"], "usage");
    assert_eq!(merged[2]["list_line"], 5);
    assert_eq!(merged[2]["task"], 3);
    let alone = json_of(&bellgap(&["classical", "games/odd-cycle-3.yaml", "--json"]));
    assert_eq!(merged[3]["result"]["classical"], alone["classical"]);
    // A missing shard or a shard given twice is an error (exit 2).
    let out = bellgap(&["sweep-merge", &shards[0], &shards[1]]);
    assert_eq!(out.status.code(), Some(2));
    let out = bellgap(&[
        "sweep-merge",
        &shards[0],
        &shards[0],
        &shards[1],
        &shards[2],
    ]);
    assert_eq!(out.status.code(), Some(2));
    let out = bellgap(&["sweep", &list, "--shard", "0/3"]);
    assert_eq!(out.status.code(), Some(2));
    // Hostile lists and shards: a device, a folder, a missing file, a shard that is not JSON.
    for path in ["/dev/zero", dir.to_str().unwrap(), "/nonexistent/list.txt"] {
        assert_eq!(bellgap(&["sweep", path]).status.code(), Some(2), "{path}");
        assert_eq!(
            bellgap(&["sweep-merge", path]).status.code(),
            Some(2),
            "{path}"
        );
    }
    let garbage = temp_file("garbage.jsonl", "not json\n");
    let out = bellgap(&["sweep-merge", garbage.to_str().unwrap(), "--json"]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(json_of(&out)["error"]["location"]["line"], 1);
}

/// The tilted-CHSH strategy with state cos θ|00⟩ + sin θ|11⟩, A₀ = Z, A₁ = X and Bob's
/// observables cos μ Z ± sin μ X (tan μ = sin 2θ), every amplitude scaled by `scale`.
fn tilted_strategy(name: &str, theta: f64, scale: f64) -> PathBuf {
    let mu = (2.0 * theta).sin().atan();
    let projectors = |cz: f64, sx: f64| {
        format!(
            "[[[{}, {}], [{}, {}]], [[{}, {}], [{}, {}]]]",
            (1.0 + cz) / 2.0,
            sx / 2.0,
            sx / 2.0,
            (1.0 - cz) / 2.0,
            (1.0 - cz) / 2.0,
            -sx / 2.0,
            -sx / 2.0,
            (1.0 + cz) / 2.0
        )
    };
    let text = format!(
        "dims: [2, 2]\nstate: [{}, 0, 0, {}]\nmeasurements:\n  alice:\n    - {{question: 0, elements: {}}}\n    - {{question: 1, elements: {}}}\n  bob:\n    - {{question: 0, elements: {}}}\n    - {{question: 1, elements: {}}}\n",
        theta.cos() * scale,
        theta.sin() * scale,
        projectors(1.0, 0.0),
        projectors(0.0, 1.0),
        projectors(mu.cos(), mu.sin()),
        projectors(mu.cos(), -mu.sin()),
    );
    temp_file(name, &text)
}

/// The tilted strategy's Born-rule behaviour, every probability scaled by `scale`.
fn tilted_behaviour(name: &str, theta: f64, scale: f64) -> PathBuf {
    let mu = (2.0 * theta).sin().atan();
    // ⟨ψ|P_a ⊗ Q_b|ψ⟩ for ψ = (c, 0, 0, s) and projectors (1 ± n·σ)/2 with n in the x–z plane.
    let (c, s) = (theta.cos(), theta.sin());
    let alice = [(1.0, 0.0), (0.0, 1.0)];
    let bob = [(mu.cos(), mu.sin()), (mu.cos(), -mu.sin())];
    let mut text = String::from(
        "players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\nbehaviour:\n",
    );
    for (x, &(az, ax)) in alice.iter().enumerate() {
        for (y, &(bz, bx)) in bob.iter().enumerate() {
            let mut row = Vec::new();
            for a in 0..2 {
                for b in 0..2 {
                    let (sa, sb) = (1.0 - 2.0 * a as f64, 1.0 - 2.0 * b as f64);
                    // ⟨Z⊗1⟩ = ⟨1⊗Z⟩ = c² − s², ⟨Z⊗Z⟩ = 1, ⟨X⊗X⟩ = 2cs, mixed terms 0.
                    let z = c * c - s * s;
                    let p = (1.0
                        + sa * az * z
                        + sb * bz * z
                        + sa * sb * (az * bz + ax * bx * 2.0 * c * s))
                        / 4.0;
                    row.push(format!("{}", p * scale));
                }
            }
            text += &format!(
                "  - questions: [{x}, {y}]\n    probabilities: [{}]\n",
                row.join(", ")
            );
        }
    }
    temp_file(name, &text)
}

fn entropy_bits(args: &[&str]) -> f64 {
    let out = bellgap(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    json_of(&out)["results"][0]["entropy"]["bits"]
        .as_f64()
        .unwrap()
}

#[test]
fn entropy_never_certifies_more_than_the_devices_have() {
    // A pure state cos θ|00⟩ + sin θ|11⟩ measured by A₀ = Z leaves Eve nothing but gives
    // H(A|X=0, E) ≤ H(A|X=0) = h(cos² θ). Inputs within the accepted tolerances (amplitudes
    // scaled by 1 + 9.5e-7, rows summing to 1 + 9e-7) once gave 0.4701 and 0.4332 bits at θ = 0.3
    // (h = 0.42750) and 0.6342 at θ = 0.4 (h = 0.61395).
    let h = |p: f64| -p * p.log2() - (1.0 - p) * (1.0 - p).log2();
    for (theta, scale) in [(0.3, 1.0), (0.3, 1.0 + 9.5e-7)] {
        let file = tilted_strategy(&format!("tilted-{theta}-{scale}.yaml"), theta, scale);
        let bits = entropy_bits(&[
            "entropy",
            "games/chsh.yaml",
            "--strategy",
            file.to_str().unwrap(),
            "--nodes",
            "8",
            "--json",
        ]);
        let most = h(theta.cos().powi(2));
        assert!(bits <= most, "θ = {theta}, scale {scale}: {bits} > {most}");
        assert!(bits > most - 0.01, "θ = {theta}, scale {scale}: {bits}");
    }
    for theta in [0.3, 0.4] {
        let file = tilted_behaviour(&format!("tilted-behaviour-{theta}.yaml"), theta, 1.0 + 9e-7);
        let bits = entropy_bits(&[
            "entropy",
            "games/chsh.yaml",
            "--behaviour",
            file.to_str().unwrap(),
            "--nodes",
            "8",
            "--json",
        ]);
        let most = h(theta.cos().powi(2));
        assert!(bits <= most, "θ = {theta}: {bits} > {most}");
        assert!(bits > most - 0.02, "θ = {theta}: {bits}");
    }
}

#[test]
fn behaviours_outside_the_quantum_set_are_refused_never_capped() {
    // The PR box (S = 4) once printed 1 bit and a key rate of 1; Tsirelson's box moved outwards
    // by 1e-4 printed 1 bit with 8 nodes and 0.563 with 4.
    let pr = two_bit_correlations(
        "pr-box.yaml",
        [
            ["1/2", "0", "0", "1/2"],
            ["1/2", "0", "0", "1/2"],
            ["1/2", "0", "0", "1/2"],
            ["0", "1/2", "1/2", "0"],
        ],
    );
    let (hi, lo) = ("(1 + 1/sqrt(2) + 1e-4)/4", "(1 - 1/sqrt(2) - 1e-4)/4");
    let beyond = two_bit_correlations(
        "beyond-tsirelson.yaml",
        [
            [hi, lo, lo, hi],
            [hi, lo, lo, hi],
            [hi, lo, lo, hi],
            [lo, hi, hi, lo],
        ],
    );
    for file in [&pr, &beyond] {
        for extra in [&[][..], &["--key-with", "bob"][..]] {
            let mut args = vec![
                "entropy",
                "games/chsh.yaml",
                "--behaviour",
                file.to_str().unwrap(),
                "--nodes",
                "4",
            ];
            args.extend_from_slice(extra);
            let out = bellgap(&args);
            assert_eq!(out.status.code(), Some(2), "{file:?} {extra:?}");
            let err = String::from_utf8_lossy(&out.stderr);
            assert!(err.contains("outside the quantum set"), "{err}");
        }
    }
    // At the classical score no key: exactly 0, and no flip is "best".
    let out = bellgap(&[
        "key",
        "--chsh",
        "2",
        "--qber",
        "0",
        "--noisy-preprocessing",
        "0.1",
        "--json",
    ]);
    let j = json_of(&out);
    assert_eq!(j["key_rate"].as_f64(), Some(0.0));
    assert_eq!(
        j["best_noisy_preprocessing"]["probability"].as_f64(),
        Some(0.0)
    );
    assert_eq!(
        j["best_noisy_preprocessing"]["key_rate"].as_f64(),
        Some(0.0)
    );
}

#[test]
fn a_review_says_one_consistent_thing() {
    // An invented beacon on a tilted CHSH expression (0.5·A0 + CHSH): 5·10⁶ rounds pass their
    // test but certify nothing at this length. The headline once said only "Nonlocal …" while
    // the finite-size table printed a smooth min-entropy of −325118.59 bits.
    let game = temp_file(
        "tilted.yaml",
        "name: tilted\nplayers:\n  - {name: alice, question: x, answer: a, questions: 2, answers: 2}\n  - {name: bob, question: y, answer: b, questions: 2, answers: 2}\nbell:\n  correlators: [[0, 0, 0], [0.5, 1, 1], [0, 1, -1]]\n",
    );
    let beacon = temp_file(
        "tilted-beacon.yaml",
        "name: beacon\ngame: tilted.yaml\nrounds: 5000000\nscore_sum: 13750000\nfinite_size: {rounds: 5000000, testing: 0.05, threshold: 2.7}\n",
    );
    let j = json_of(&bellgap(&["review", beacon.to_str().unwrap(), "--json"]));
    let verdict = j["verdict"].as_str().unwrap();
    assert!(verdict.starts_with("Nonlocal"), "{verdict}");
    assert!(
        verdict.contains("Hoeffding lower confidence bound"),
        "{verdict}"
    );
    assert!(
        verdict.contains("no bits of randomness are certified at this length")
            && verdict.contains("rounds are needed"),
        "{verdict}"
    );
    let run = &j["finite_size"]["figures"]["run"];
    assert_eq!(run["smooth_min_entropy"].as_f64(), Some(0.0));
    assert_eq!(run["output_bits"].as_f64(), Some(0.0));
    // One score range, the per-round one, in check, margin and review alike: one round of the
    // expression scores 4·V(a|q) ∈ [−5, 5] (the value itself lies in [−4.5, 4.5]).
    assert_eq!(j["margin"]["score_range"], serde_json::json!([-5.0, 5.0]));
    let check = json_of(&bellgap(&["check", game.to_str().unwrap(), "--json"]));
    assert_eq!(
        check["per_round_score_range"],
        serde_json::json!([-5.0, 5.0])
    );
    assert_eq!(check["value_range"], serde_json::json!([-4.5, 4.5]));

    // A failing CHSH run (760 wins of 1000): one confidence method (Clopper–Pearson) in the
    // headline and under it, and the rounds needed at the observed mean: ⌈ln(10⁹)/(2·0.01²)⌉ =
    // 103,617; the see-saw's ideal score has its own labelled figure.
    let chsh = format!("{}/games/chsh.yaml", env!("CARGO_MANIFEST_DIR"));
    let failing = temp_file(
        "failing-run.yaml",
        &format!("name: failing\ngame: {chsh}\nrounds: 1000\nwins: 760\nrandomness: {{player: alice, question: 0, level: 1}}\n"),
    );
    let j = json_of(&bellgap(&["review", failing.to_str().unwrap(), "--json"]));
    let m = &j["margin"];
    assert_eq!(m["confidence_method"], "Clopper–Pearson");
    assert_eq!(m["certified_score"], m["lower_confidence_exact"]);
    assert_eq!(m["expected_from"], "observed");
    assert_eq!(m["rounds_needed"].as_u64(), Some(103_617));
    assert!(j["rounds_needed_at_see_saw"]["rounds"].as_u64().unwrap() < 1000);
    let verdict = j["verdict"].as_str().unwrap();
    assert!(verdict.starts_with("Not certified"), "{verdict}");
    assert!(verdict.contains("Clopper–Pearson"), "{verdict}");
    let h = j["randomness"]["at_lower_confidence"]["min_entropy"]
        .as_f64()
        .unwrap();
    assert!((0.0..1e-6).contains(&h), "{h}");
}

#[test]
fn measured_frequencies_with_rounds_stand_for_their_confidence_region() {
    // Frequencies that signal a little (Alice's marginal at x = 0 differs by 0.003 between Bob's
    // questions) once got "the behaviour signals" from `entropy` while `local` projected them.
    // With each row's rounds they stand for their confidence region, no projection; without,
    // the typed tolerance holds no quantum behaviour and the refusal says what to give.
    let rows = [
        ["0.418", "0.082", "0.085", "0.415"],
        ["0.405", "0.095", "0.095", "0.405"],
        ["0.415", "0.085", "0.085", "0.415"],
        ["0.09", "0.41", "0.41", "0.09"],
    ];
    let typed = two_bit_correlations("signalling-typed.yaml", rows);
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--behaviour",
        typed.to_str().unwrap(),
        "--nodes",
        "4",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("outside the quantum set") && err.contains("rounds"),
        "{err}"
    );
    let text = std::fs::read_to_string(&typed).unwrap();
    let measured = temp_file(
        "signalling-measured.yaml",
        &text.replacen("players:", "rounds: 50000\nplayers:", 1),
    );
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--behaviour",
        measured.to_str().unwrap(),
        "--nodes",
        "4",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert!(j["given"].as_str().unwrap().contains("confidence region"));
    let bits = j["results"][0]["entropy"]["bits"].as_f64().unwrap();
    assert!(bits > 0.2 && bits < 1.0, "{bits}");
}

#[test]
fn a_sweep_protects_its_list_and_inputs_and_never_mixes_lists() {
    // A line writing its certificate over the list itself once overwrote the list, and shards
    // of two different lists with the same number of lines merged without complaint.
    let dir = std::env::temp_dir().join(format!("bellgap-sweep-safety-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let list = dir.join("list.txt");
    let strategy = dir.join("kept-strategy.yaml");
    std::fs::write(&strategy, "not touched\n").unwrap();
    let text = format!(
        "npa games/chsh.yaml --level 1 --certificate {list}\nseesaw games/chsh.yaml --restarts 1 --save {strategy}\nevaluate games/chsh.yaml {strategy}\n",
        list = list.display(),
        strategy = strategy.display()
    );
    std::fs::write(&list, &text).unwrap();
    let out = bellgap(&["sweep", list.to_str().unwrap(), "--json"]);
    let j = json_of(&out);
    assert_eq!(
        std::fs::read_to_string(&list).unwrap(),
        text,
        "the list was overwritten"
    );
    assert_eq!(std::fs::read_to_string(&strategy).unwrap(), "not touched\n");
    let items = j["items"].as_array().unwrap();
    assert!(
        items[0]["error"]["message"]
            .as_str()
            .unwrap()
            .contains("input"),
        "{}",
        items[0]
    );
    assert!(
        items[1]["error"]["message"]
            .as_str()
            .unwrap()
            .contains("input"),
        "{}",
        items[1]
    );
    // Records carry their list's hash; shards of two lists of one line each do not merge.
    let (a, b) = (dir.join("a.txt"), dir.join("b.txt"));
    std::fs::write(&a, "classical games/chsh.yaml\n").unwrap();
    std::fs::write(&b, "nosignal games/chsh.yaml\n").unwrap();
    let (sa, sb) = (dir.join("a.jsonl"), dir.join("b.jsonl"));
    for (l, s) in [(&a, &sa), (&b, &sb)] {
        let out = bellgap(&["sweep", l.to_str().unwrap(), "-o", s.to_str().unwrap()]);
        assert!(out.status.success());
    }
    let out = bellgap(&["sweep-merge", sa.to_str().unwrap(), sb.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("different lists"));
}

#[test]
fn bounds_takes_the_seesaw_options_and_skips_bounds() {
    // The see-saw of `bounds` is the `seesaw` command's, options and defaults alike.
    let alone = json_of(&bellgap(&[
        "seesaw",
        "games/chsh.yaml",
        "--dims",
        "2,2",
        "--restarts",
        "3",
        "--seed",
        "7",
        "--json",
    ]));
    let out = bellgap(&[
        "bounds",
        "games/chsh.yaml",
        "--dims",
        "2,2",
        "--restarts",
        "3",
        "--seed",
        "7",
        "--skip",
        "classical,npa",
        "--json",
        "--quiet",
    ]);
    assert!(out.status.success());
    let j = json_of(&out);
    assert_eq!(j["quantum_lower"], alone["quantum_lower"]);
    assert_eq!(j["restarts"], 3);
    assert_eq!(j["seed"], 7);
    assert!(
        j.get("classical").is_none() && j.get("verified_upper").is_none(),
        "{j}"
    );
    assert!((j["no_signalling"].as_f64().unwrap() - 1.0).abs() < 1e-9);
    // Defaults: 10 restarts in both.
    let defaults = json_of(&bellgap(&[
        "bounds",
        "games/chsh.yaml",
        "--json",
        "--quiet",
    ]));
    assert_eq!(defaults["restarts"], 10);
}

#[test]
fn bounds_streams_each_bound_as_a_json_line() {
    let out = bellgap(&[
        "bounds",
        "games/chsh.yaml",
        "--json-lines",
        "--restarts",
        "2",
    ]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    // One line per bound as obtained, then the report.
    let obtained: Vec<&str> = lines
        .iter()
        .filter_map(|l| l.get("obtained").and_then(Value::as_str))
        .collect();
    assert_eq!(obtained, ["classical", "no-signalling", "npa", "seesaw"]);
    assert_eq!(lines.len(), 5);
    assert!(lines[0].get("verified_upper").is_none());
    assert!((lines[0]["classical"].as_f64().unwrap() - 0.75).abs() < 1e-12);
    let last = &lines[4];
    assert!(last.get("obtained").is_none());
    assert_eq!(last["command"], "bounds");
    assert_eq!(last["verified_upper"], lines[2]["verified_upper"]);
    assert_eq!(last["quantum_lower"], lines[3]["quantum_lower"]);
}

#[test]
fn a_bounds_budget_used_up_leaves_the_later_bounds_not_obtained() {
    // A budget of a nanosecond is used up by the time the NPA bound would start: the classical
    // and no-signalling values (always computed when cheap) are reported, the NPA and see-saw
    // bounds are listed as not obtained, and nothing is made up. (No time is asserted.)
    let out = bellgap(&[
        "bounds",
        "games/chsh.yaml",
        "--budget",
        "1e-9",
        "--json",
        "--quiet",
    ]);
    assert!(out.status.success());
    let j = json_of(&out);
    assert!((j["classical"].as_f64().unwrap() - 0.75).abs() < 1e-12);
    assert!((j["no_signalling"].as_f64().unwrap() - 1.0).abs() < 1e-9);
    assert!(
        j.get("verified_upper").is_none() && j.get("quantum_lower").is_none(),
        "{j}"
    );
    let missing = j["not_obtained"].to_string();
    assert!(
        missing.contains("NPA upper bound: the budget was used up"),
        "{missing}"
    );
    assert!(
        missing.contains("see-saw lower bound: the budget was used up"),
        "{missing}"
    );
    for bad in ["0", "-1", "nan"] {
        let out = bellgap(&["bounds", "games/chsh.yaml", "--budget", bad]);
        assert_eq!(out.status.code(), Some(2), "{bad}");
    }
}

#[test]
fn randomness_estimates_its_cost_and_refuses_with_the_estimate() {
    // A three-player game at level 3: three moment matrices of side 389 per SDP. Refused before
    // any SDP is solved, with the estimate and a lighter level offered.
    let game = temp_file(
        "trident.yaml",
        "name: trident\nplayers:\n  - {name: north, question: x, answer: a, questions: 2, answers: 3}\n  - {name: south, question: y, answer: b, questions: 2, answers: 3}\n  - {name: west, question: z, answer: c, questions: 2, answers: 3}\ndistribution: uniform\nwin: \"(a + b + c) % 3 == (x*y + y*z + z*x) % 3\"\n",
    );
    let game = game.to_str().unwrap();
    let out = bellgap(&[
        "randomness",
        game,
        "--score",
        "0.76",
        "--level",
        "3",
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let e = json_of(&out);
    assert_eq!(e["error"]["kind"], "too_large");
    let message = e["error"]["message"].as_str().unwrap();
    assert!(
        message.contains("side 389") && message.contains("lower level"),
        "{message}"
    );
}

#[test]
fn entropy_and_finite_size_refuse_hierarchies_estimated_above_an_hour() {
    // CHSH at level 7: fifteen relaxations of side 565 (4,772 moments). Once this ran for
    // minutes with no word; now refused with the estimate before any SDP is solved.
    for command in [
        vec!["entropy", "games/chsh.yaml", "--score", "0.8"],
        vec![
            "finite-size",
            "games/chsh.yaml",
            "--rounds",
            "1000000000",
            "--testing",
            "0.01",
            "--threshold",
            "0.84",
        ],
    ] {
        let mut args = command.clone();
        args.extend(["--level", "7", "--json"]);
        let out = bellgap(&args);
        assert_eq!(out.status.code(), Some(2), "{command:?}");
        let e = json_of(&out);
        assert_eq!(e["error"]["kind"], "too_large", "{command:?}");
        let message = e["error"]["message"].as_str().unwrap();
        assert!(
            message.contains("565×565") && message.contains("per score"),
            "{message}"
        );
    }
}

/// The optimal CHSH strategy written by hand, with expressions for its amplitudes and entries.
const CHSH_STRATEGY_BY_HAND: &str = r#"dims: [2, 2]
state: ["1/sqrt(2)", 0, 0, "1/sqrt(2)"]
measurements:
  alice:
    - question: 0
      elements: [[[1, 0], [0, 0]], [[0, 0], [0, 1]]]
    - question: 1
      elements: [[["1/2", "1/2"], ["1/2", "1/2"]], [["1/2", "-1/2"], ["-1/2", "1/2"]]]
  bob:
    - question: 0
      elements:
        - [["(1 + 1/sqrt(2))/2", "1/(2*sqrt(2))"], ["1/(2*sqrt(2))", "(1 - 1/sqrt(2))/2"]]
        - [["(1 - 1/sqrt(2))/2", "-1/(2*sqrt(2))"], ["-1/(2*sqrt(2))", "(1 + 1/sqrt(2))/2"]]
    - question: 1
      elements:
        - [["(1 + 1/sqrt(2))/2", "-1/(2*sqrt(2))"], ["-1/(2*sqrt(2))", "(1 - 1/sqrt(2))/2"]]
        - [["(1 - 1/sqrt(2))/2", "1/(2*sqrt(2))"], ["1/(2*sqrt(2))", "(1 + 1/sqrt(2))/2"]]
"#;

#[test]
fn strategy_files_take_expressions_and_rounded_states_get_a_hint() {
    let exact = temp_file("chsh-by-hand.yaml", CHSH_STRATEGY_BY_HAND);
    let j = json_of(&bellgap(&[
        "evaluate",
        "games/chsh.yaml",
        exact.to_str().unwrap(),
        "--json",
    ]));
    let tsirelson = 0.5 + 2f64.sqrt() / 4.0;
    assert!(
        (j["value"].as_f64().unwrap() - tsirelson).abs() < 1e-12,
        "{j}"
    );
    // Amplitudes rounded to four digits miss the norm by 1e-5: refused with the hint, and
    // accepted with --normalise.
    let rounded = temp_file(
        "chsh-rounded.yaml",
        &CHSH_STRATEGY_BY_HAND
            .replace("\"1/sqrt(2)\", 0, 0, \"1/sqrt(2)\"", "0.7071, 0, 0, 0.7071"),
    );
    let out = bellgap(&["evaluate", "games/chsh.yaml", rounded.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("look rounded") && err.contains("--normalise"),
        "{err}"
    );
    let j = json_of(&bellgap(&[
        "evaluate",
        "games/chsh.yaml",
        rounded.to_str().unwrap(),
        "--normalise",
        "--json",
    ]));
    assert!(
        (j["value"].as_f64().unwrap() - tsirelson).abs() < 1e-9,
        "{j}"
    );
    // A state far from unit norm gets no hint, and a bad expression is located.
    let far = temp_file(
        "chsh-far.yaml",
        &CHSH_STRATEGY_BY_HAND.replace("\"1/sqrt(2)\", 0, 0, \"1/sqrt(2)\"", "0.5, 0, 0, 0.5"),
    );
    let out = bellgap(&["evaluate", "games/chsh.yaml", far.to_str().unwrap()]);
    assert!(!String::from_utf8_lossy(&out.stderr).contains("look rounded"));
    let bad = temp_file(
        "chsh-bad.yaml",
        &CHSH_STRATEGY_BY_HAND.replace("\"1/sqrt(2)\", 0, 0", "\"1/sqrt(\", 0, 0"),
    );
    let out = bellgap(&["evaluate", "games/chsh.yaml", bad.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("state[0]"));
}

#[test]
fn the_reference_pages_in_the_repository_are_the_generated_ones() {
    // docs/reference holds what `bellgap reference` writes (man pages and completions, from the
    // command definitions); a changed option without regenerated pages fails here. To refresh:
    // `cargo run --release -- reference docs/reference`.
    let dir = std::env::temp_dir().join(format!("bellgap-reference-{}", std::process::id()));
    let out = bellgap(&["reference", dir.to_str().unwrap(), "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    let files = j["files"].as_array().unwrap();
    assert!(files.len() >= 20, "{j}");
    let mut names: Vec<String> = Vec::new();
    for f in files {
        let path = std::path::PathBuf::from(f.as_str().unwrap());
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let committed = std::fs::read_to_string(format!("docs/reference/{name}"))
            .unwrap_or_else(|_| panic!("docs/reference/{name} is missing: regenerate the pages"));
        assert_eq!(
            std::fs::read_to_string(&path).unwrap(),
            committed,
            "docs/reference/{name} is stale: regenerate the pages"
        );
        names.push(name);
    }
    for expected in [
        "bellgap.1",
        "bellgap-npa.1",
        "bellgap-entropy.1",
        "bellgap.bash",
        "_bellgap",
        "bellgap.fish",
    ] {
        assert!(names.iter().any(|n| n == expected), "{expected}");
    }
    // Nothing else lies in the folder.
    let committed = std::fs::read_dir("docs/reference").unwrap().count();
    assert_eq!(committed, names.len());
}

#[test]
fn markdown_reviews_write_their_plots_beside_them_and_link_them() {
    // Common Markdown renderers show linked images but not data URIs.
    let dir = std::env::temp_dir().join(format!("bellgap-md-plots-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let report = dir.join("quarry.md");
    let out = bellgap(&[
        "review",
        "examples/data/lab-counts-protocol.yaml",
        "--markdown",
        "-o",
        report.to_str().unwrap(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let md = std::fs::read_to_string(&report).unwrap();
    assert!(md.contains("](quarry-min-entropy.svg)"), "{md}");
    assert!(!md.contains("data:image"), "{md}");
    let svg = std::fs::read_to_string(dir.join("quarry-min-entropy.svg")).unwrap();
    // The run's own score is marked on the curve.
    assert!(svg.contains("this run (lower confidence score)") && svg.contains("stroke-dasharray"));
    // To stdout there is nowhere to put a plot: the report says how to get them.
    let out = bellgap(&[
        "review",
        "examples/data/lab-counts-protocol.yaml",
        "--markdown",
    ]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("-o FILE.md") && !text.contains("data:image"),
        "{text}"
    );
}

#[test]
fn text_outputs_read_well() {
    let text = |args: &[&str]| {
        let out = bellgap(args);
        assert!(
            out.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8_lossy(&out.stdout).into_owned()
    };
    // The caution once, not also as the last assumption; Fano's bound for two answers is h(Q).
    let t = text(&[
        "entropy",
        "games/chsh-expression.yaml",
        "--score",
        "2.6",
        "--error-rate",
        "0.03",
        "--nodes",
        "4",
        "--adversary-words",
        "with-projectors",
        "-q",
    ]);
    assert_eq!(t.matches("not a security proof").count(), 1, "{t}");
    assert!(t.contains("error rate 0.03: h(Q)\n"), "{t}");
    assert!(!t.contains("log₂(2 − 1)"), "{t}");
    assert!(t.contains("solvers' sum: the same sum"), "{t}");
    // No flip advised where none does measurably better; no threshold where no QBER gives a
    // key (a flip of 1/2 makes the key answer uniform).
    let t = text(&["key", "--chsh", "2.7", "--qber", "0.02", "-q"]);
    assert!(t.contains("flip probability 0 → key rate"), "{t}");
    let t = text(&[
        "key",
        "--chsh",
        "2.7",
        "--qber",
        "0.02",
        "--noisy-preprocessing",
        "0.5",
        "-q",
    ]);
    assert!(t.contains("none: no error rate gives a key"), "{t}");
    // The margin's p-value bound without nested brackets; local's signalling explained.
    let t = text(&[
        "margin",
        "games/chsh.yaml",
        "--counts",
        "examples/data/lab-counts.yaml",
        "-q",
    ]);
    assert!(
        t.contains("(Azuma–Hoeffding, valid for adaptive strategies)"),
        "{t}"
    );
    let t = text(&["local", "examples/data/lab-frequencies.yaml", "-q"]);
    assert!(
        t.contains("signalling") && t.contains("0 for no-signalling correlations"),
        "{t}"
    );
    assert!(!t.contains("-0.000000"), "{t}");
}

#[test]
fn normalise_and_reference_refuse_hostile_input() {
    // A state of norm 0 (or not a number) has nothing to normalise: exit 2, located.
    for state in ["0, 0, 0, 0", "\".nan\", 0, 0, 1", "1e308, 1e308, 0, 0"] {
        let file = temp_file(
            "chsh-hostile-state.yaml",
            &CHSH_STRATEGY_BY_HAND.replace("\"1/sqrt(2)\", 0, 0, \"1/sqrt(2)\"", state),
        );
        let out = bellgap(&[
            "evaluate",
            "games/chsh.yaml",
            file.to_str().unwrap(),
            "--normalise",
        ]);
        assert_eq!(out.status.code(), Some(2), "{state}");
        assert!(
            String::from_utf8_lossy(&out.stderr).contains("state"),
            "{state}"
        );
    }
    // A folder that cannot be made, or a device, is an I/O error, not a panic.
    for folder in ["/dev/null/pages", "/proc/bellgap-no"] {
        let out = bellgap(&["reference", folder, "--json"]);
        assert_eq!(out.status.code(), Some(2), "{folder}");
        assert!(json_of(&out)["error"]["kind"].is_string(), "{folder}");
    }
}

#[test]
fn design_and_self_test_answer_in_json_and_refuse_bad_noise() {
    // The visibility threshold of CHSH: 1/√2 (textbook; e.g. Brunner et al., RMP 86, 419 (2014),
    // from memory).
    let out = bellgap(&[
        "design",
        "games/chsh.yaml",
        "--threshold",
        "visibility",
        "--curve-points",
        "2",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert_eq!(j["command"], "design");
    let above = j["threshold"]["bracket"]["above"].as_f64().unwrap();
    assert!(
        (std::f64::consts::FRAC_1_SQRT_2..0.709).contains(&above),
        "{above}"
    );
    assert!(j["value"]["value"].as_f64().unwrap() > 0.0);
    // A saved implementation is a strategy file that `evaluate` reads back.
    let saved = std::env::temp_dir().join(format!("bellgap-design-{}.yaml", std::process::id()));
    let out = bellgap(&[
        "design",
        "games/chsh.yaml",
        "--efficiency",
        "0.9",
        "--no-click",
        "0",
        "--save",
        saved.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = bellgap(&[
        "evaluate",
        "games/chsh.yaml",
        saved.to_str().unwrap(),
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let _ = std::fs::remove_file(&saved);
    // Bad noise parameters exit 2 and name the field.
    for (flag, value, field) in [
        ("--efficiency", "0", "efficiency"),
        ("--efficiency", "1.5", "efficiency"),
        ("--efficiency", "NaN", "efficiency"),
        ("--visibility", "-0.1", "visibility"),
        ("--dark-counts", "2", "dark_counts"),
        ("--no-click", "7", "no-click"),
    ] {
        let out = bellgap(&["design", "games/chsh.yaml", flag, value]);
        assert_eq!(out.status.code(), Some(2), "{flag} {value}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            err.contains(field) || err.contains(flag),
            "{flag} {value}: {err}"
        );
    }
    // Dimensions too large for the machine are refused with an estimate.
    let out = bellgap(&["design", "games/chsh.yaml", "--dims", "100,100"]);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // The key rate needs the key partner.
    let out = bellgap(&["design", "games/chsh.yaml", "--figure", "key-rate"]);
    assert_eq!(out.status.code(), Some(2));
    // Self-testing: at Tsirelson's bound the fidelity is close to 1; a target of the wrong size
    // or norm exits 2.
    let out = bellgap(&[
        "self-test",
        "games/chsh.yaml",
        "--score",
        "0.8535533",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert!(j["bound"]["fidelity"].as_f64().unwrap() > 0.99);
    assert!(j["bound"]["chsh_analytic"].as_f64().unwrap() > 0.99);
    for target in ["1,0,0", "1,1,0,0", "1,0,0,inf"] {
        let out = bellgap(&[
            "self-test",
            "games/chsh.yaml",
            "--score",
            "0.8",
            "--target",
            target,
        ]);
        assert_eq!(out.status.code(), Some(2), "{target}");
    }
    // Three players: no SWAP construction of two.
    let out = bellgap(&["self-test", "games/ghz-3.yaml", "--score", "0.8"]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn the_review_says_what_the_score_certifies_about_the_devices() {
    let out = bellgap(&["review", "examples/data/lab-counts-protocol.yaml", "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    let d = &j["devices"];
    let state = &d["state"];
    let score = state["score"].as_f64().unwrap();
    // At the run's lower confidence score, the same one as the margin's.
    assert!((score - j["margin"]["certified_score"].as_f64().unwrap()).abs() < 1e-12);
    let fidelity = state["fidelity"].as_f64().unwrap();
    // A noisy singlet with this CHSH score has fidelity (1 + 3v)/4 at v = S/(2√2): no valid
    // bound exceeds it; Kaniewski's bound is reported beside it.
    let v = state["chsh_value"].as_f64().unwrap() / (2.0 * 2f64.sqrt());
    assert!(
        fidelity > 0.5 && fidelity <= (1.0 + 3.0 * v) / 4.0,
        "{fidelity} at v = {v}"
    );
    assert!(state["chsh_analytic"].as_f64().unwrap() <= (1.0 + 3.0 * v) / 4.0 + 1e-12);
    // Eberhard's 2/3 and 1/√2 (see tests/design.rs for the sources).
    let brackets: Vec<(String, f64)> = d["thresholds"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| {
            (
                t["parameter"].as_str().unwrap().to_string(),
                t["bracket"][1].as_f64().unwrap(),
            )
        })
        .collect();
    assert_eq!(brackets.len(), 2);
    assert!((brackets[0].1 - 2.0 / 3.0).abs() < 0.01, "{brackets:?}");
    assert!(
        (brackets[1].1 - std::f64::consts::FRAC_1_SQRT_2).abs() < 0.01,
        "{brackets:?}"
    );
}

#[test]
fn bound_tables_for_papers_are_escaped_and_rounded_on_their_side() {
    let game = temp_file(
        "tabled.yaml",
        "name: \"odd_name & 50%\"\nplayers:\n  - {name: alice, question: x, answer: a, questions: 2, answers: 2}\n  - {name: bob, question: y, answer: b, questions: 2, answers: 2}\ndistribution: uniform\nwin: \"(a + b) % 2 == x * y\"\n",
    );
    let out = bellgap(&[
        "bounds",
        game.to_str().unwrap(),
        "--table",
        "latex",
        "--quiet",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("odd\\_name \\& 50\\%"), "{text}");
    // Tsirelson's cos²(π/8) = 0.85355339059…: the see-saw's lower bound is written at most
    // that, the verified upper bound at least that.
    let row = text.lines().find(|l| l.starts_with("odd")).unwrap();
    let cells: Vec<&str> = row.trim_end_matches(" \\\\").split(" & ").collect();
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    assert!(cells[2].parse::<f64>().unwrap() <= tsirelson, "{row}");
    assert!(cells[3].parse::<f64>().unwrap() >= tsirelson, "{row}");
    let out = bellgap(&[
        "npa",
        "games/i3322.yaml",
        "--level",
        "2;3",
        "--table",
        "csv",
        "--quiet",
    ]);
    let text = String::from_utf8_lossy(&out.stdout);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "level,matrix side,moments,verified upper bound");
    assert!(
        lines[1].starts_with("2,28,") && lines[2].starts_with("3,88,"),
        "{text}"
    );
    // I3322: 0.25087538 at the limit (Pál & Vértesi 2010, from memory); level 3 bounds it above.
    let level3: f64 = lines[2].rsplit(',').next().unwrap().parse().unwrap();
    assert!(level3 >= 0.250_875_38, "{level3}");
}

/// The number printed after `label` on the line that holds it.
fn printed_after(text: &str, label: &str) -> f64 {
    let line = text
        .lines()
        .find(|l| l.contains(label))
        .unwrap_or_else(|| panic!("no `{label}` in\n{text}"));
    let rest = &line[line.find(label).unwrap() + label.len()..];
    rest.split_whitespace()
        .next()
        .and_then(|t| {
            t.trim_end_matches(|c: char| !c.is_ascii_digit())
                .parse()
                .ok()
        })
        .unwrap_or_else(|| panic!("no number after `{label}` in `{line}`"))
}

#[test]
fn design_self_test_and_exact_figures_are_printed_on_their_side() {
    // Each text figure against the full-precision JSON: lower bounds at most, upper at least.
    let args = [
        "design",
        "games/chsh.yaml",
        "--efficiency",
        "0.9",
        "--quiet",
    ];
    let text = String::from_utf8_lossy(&bellgap(&args).stdout).to_string();
    let j = json_of(&bellgap(&[&args[..], &["--json"]].concat()));
    assert!(
        printed_after(&text, "score       ≥")
            <= j["implementation"]["score"]["lower"].as_f64().unwrap()
    );
    assert!(printed_after(&text, ", margin") <= j["implementation"]["margin"].as_f64().unwrap());
    let args = ["self-test", "games/chsh.yaml", "--score", "0.84", "--quiet"];
    let text = String::from_utf8_lossy(&bellgap(&args).stdout).to_string();
    let j = json_of(&bellgap(&[&args[..], &["--json"]].concat()));
    assert!(printed_after(&text, "fidelity    ≥") <= j["bound"]["fidelity"].as_f64().unwrap());
    assert!(printed_after(&text, "bound F ≥") <= j["bound"]["chsh_analytic"].as_f64().unwrap());
    let cert = std::env::temp_dir().join(format!("bellgap-exact-{}.json", std::process::id()));
    let out = bellgap(&[
        "npa",
        "games/chsh.yaml",
        "--level",
        "2",
        "--certificate",
        cert.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(out.status.success());
    let args = [
        "verify",
        "games/chsh.yaml",
        cert.to_str().unwrap(),
        "--exact",
    ];
    let text = String::from_utf8_lossy(&bellgap(&args).stdout).to_string();
    let j = json_of(&bellgap(&[&args[..], &["--json"]].concat()));
    let _ = std::fs::remove_file(&cert);
    assert!(printed_after(&text, "proven exactly ≤") >= j["exact"]["rounded_up"].as_f64().unwrap());
    // A point count whose searches would overflow is refused by the estimate (exit 2).
    let out = bellgap(&[
        "design",
        "games/chsh.yaml",
        "--threshold",
        "efficiency",
        "--curve-points",
        "18446744073709551615",
    ]);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn randomness_exports_its_sdp_verifies_an_external_solution_and_proves_exactly() {
    let dir = std::env::temp_dir().join(format!("bellgap-guess-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let sdpa = dir.join("guess.dat-s");
    let args = [
        "randomness",
        "games/chsh.yaml",
        "--score",
        "0.85",
        "--exact",
        "--sdpa",
        sdpa.to_str().unwrap(),
        "--quiet",
    ];
    let out = bellgap(&args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    let j = json_of(&bellgap(&[&args[..], &["--json"]].concat()));
    let exact = &j["exact"];
    let rounded_up = exact["rounded_up"].as_f64().unwrap();
    // 0.6 at CHSH value 2.8 (Pironio et al., Nature 464, 1021 (2010)).
    assert!((0.6 - 1e-12..0.6 + 1e-7).contains(&rounded_up), "{j}");
    assert!(printed_after(&text, ": guessing probability ≤") >= rounded_up);
    assert!(text.contains("proven exactly at score 0.85"));
    let words = std::fs::read_to_string(format!("{}.words", sdpa.display())).unwrap();
    assert!(words.contains("guess 0:0:1 | weight"), "{words}");
    // A solution file in SDPA output format: the diagonal block and two 13×13 blocks, all zero
    // except the normalisation's multiplier of 1 (Z = 0 and μ = 1 prove P_guess ≤ 1 + charges).
    let zero_row = format!("{{{}}}", vec!["0"; 13].join(", "));
    let zero_block = format!("{{ {} }}", vec![zero_row.as_str(); 13].join(", "));
    let solution = dir.join("guess.out");
    std::fs::write(
        &solution,
        format!("yMat =\n{{\n{zero_block},\n{zero_block},\n{{0, 1, 0}}\n}}\n"),
    )
    .unwrap();
    let out = bellgap(&[
        "randomness",
        "games/chsh.yaml",
        "--score",
        "0.85",
        "--sdpa-solution",
        solution.to_str().unwrap(),
        "--exact",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    // λ_0 + λ_1 = 1 with μ = 1 leaves residuals on the guessed moments, charged at their
    // bounds: a valid bound, just a weak one.
    assert!(j["verified_upper"].as_f64().unwrap() >= 1.0, "{j}");
    // As a probability it says nothing: reported as 1, with no min-entropy.
    assert_eq!(j["guessing_probability"], 1.0);
    assert_eq!(j["min_entropy"], 0.0);
    assert_eq!(j["matrix"], "yMat");
    assert!(j["exact"]["rounded_up"].as_f64().unwrap() >= 1.0);
    // A solution of another shape is refused with exit 2, naming the file.
    std::fs::write(&solution, "yMat =\n{\n{1, 2}\n}\n").unwrap();
    let out = bellgap(&[
        "randomness",
        "games/chsh.yaml",
        "--score",
        "0.85",
        "--sdpa-solution",
        solution.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("guess.out"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn entropy_writes_each_node_sdp_with_its_variable_map() {
    let dir = std::env::temp_dir().join(format!("bellgap-nodes-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let prefix = dir.join("chsh");
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--score",
        "0.84",
        "--nodes",
        "4",
        "--sdpa",
        prefix.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            "chsh-node-01.dat-s",
            "chsh-node-01.dat-s.words",
            "chsh-node-02.dat-s",
            "chsh-node-02.dat-s.words",
            "chsh-node-03.dat-s",
            "chsh-node-03.dat-s.words"
        ]
    );
    let text = std::fs::read_to_string(dir.join("chsh-node-01.dat-s")).unwrap();
    assert!(text.contains("node 1 of 3"), "{text}");
    let parsed = bellgap::optim::sdpa::SdpaProblem::parse(&text).unwrap();
    let words = std::fs::read_to_string(dir.join("chsh-node-01.dat-s.words")).unwrap();
    assert_eq!(words.lines().count(), parsed.variables + 1);
    assert!(words.contains(" Z0"), "{words}");
    // Solutions of the nodes (our own solver's, written in SDPA output format as an external
    // solver would) are verified and summed into the bound the hierarchy itself proves.
    let g =
        bellgap::Game::from_file("games/chsh.yaml", bellgap::CompileOptions::default()).unwrap();
    let target = bellgap::bounds::entropy::Target {
        parts: vec![(0, 0)],
    };
    let options = bellgap::bounds::entropy::EntropyOptions {
        nodes: 4,
        ..Default::default()
    };
    let prepared =
        bellgap::bounds::entropy::PreparedHierarchy::new(&g.scenario, &target, &options).unwrap();
    let nodes = prepared
        .node_sdps(&bellgap::bounds::entropy::EntropyConstraint::Score(0.84))
        .unwrap();
    for (k, node) in nodes.iter().enumerate() {
        let sol =
            bellgap::optim::backend::solve(&node.problem, bellgap::Backend::Auto, "node").unwrap();
        std::fs::write(
            dir.join(format!("chsh-node-{:02}.out", k + 1)),
            bellgap::optim::sdpa::solution_text(&node.problem, &sol.z),
        )
        .unwrap();
    }
    let common = [
        "entropy",
        "games/chsh.yaml",
        "--score",
        "0.84",
        "--nodes",
        "4",
        "--json",
    ];
    let imported = json_of(&bellgap(
        &[&common[..], &["--sdpa-solutions", prefix.to_str().unwrap()]].concat(),
    ));
    let solved = json_of(&bellgap(&common));
    let (a, b) = (
        imported["bits"].as_f64().unwrap(),
        solved["results"][0]["entropy"]["bits"].as_f64().unwrap(),
    );
    assert!((a - b).abs() < 1e-6, "{imported} against {solved}");
    // Each node's bound proven in exact rationals: the same bound.
    let exact = json_of(&bellgap(
        &[
            &common[..],
            &["--sdpa-solutions", prefix.to_str().unwrap(), "--exact"],
        ]
        .concat(),
    ));
    assert!(
        (exact["bits"].as_f64().unwrap() - a).abs() < 1e-9,
        "{exact}"
    );
    assert!(exact["nodes"][0]["exact"].as_str().unwrap().contains('/'));
    // The printed bound is written down.
    let out = bellgap(
        &[
            &common[..common.len() - 1],
            &["--sdpa-solutions", prefix.to_str().unwrap(), "--exact"],
        ]
        .concat(),
    );
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    assert!(printed_after(&text, "H(A|X,E) ≥") <= exact["bits"].as_f64().unwrap());
    assert_eq!(imported["nodes"].as_array().unwrap().len(), 3);
    // A missing solution file is an error naming it.
    std::fs::remove_file(dir.join("chsh-node-02.out")).unwrap();
    let out = bellgap(&[&common[..], &["--sdpa-solutions", prefix.to_str().unwrap()]].concat());
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stdout).contains("chsh-node-02.out"));
    // Without a single score there is nothing to export.
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--sweep",
        "0.8:0.84:2",
        "--sdpa",
        prefix.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn nosignal_writes_an_optimal_behaviour_in_exact_fractions() {
    let dir = std::env::temp_dir().join(format!("bellgap-ns-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    // (game, its no-signalling value): the PR box wins CHSH always (Popescu & Rohrlich 1994);
    // CGLMP's no-signalling maximum is 4 (Barrett et al., PRA 71, 022101 (2005); from memory).
    for (game, value) in [("chsh", "1"), ("cglmp-3", "4")] {
        let file = dir.join(format!("{game}-box.yaml"));
        let out = bellgap(&[
            "nosignal",
            &format!("games/{game}.yaml"),
            "--save",
            file.to_str().unwrap(),
            "--json",
        ]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let j = json_of(&out);
        assert_eq!(j["saved_behaviour"]["exact"], true, "{j}");
        assert_eq!(j["saved_behaviour"]["value_fraction"], value);
        // The file is a correlations file: read back, it scores the value in the game.
        let c = bellgap::Correlations::from_file(file.to_str().unwrap()).unwrap();
        let g = bellgap::Game::from_file(
            &format!("games/{game}.yaml"),
            bellgap::CompileOptions::default(),
        )
        .unwrap();
        let scored: f64 = g
            .scenario
            .objective()
            .iter()
            .zip(&c.p)
            .map(|(w, p)| w * p)
            .sum::<f64>()
            + g.scenario.offset();
        assert!(
            (scored - value.parse::<f64>().unwrap()).abs() < 1e-12,
            "{scored}"
        );
        assert!(c.signalling() < 1e-15);
    }
    // The PR box's critical visibility is 1/2 (its CHSH value 4 against the local 2).
    let local = json_of(&bellgap(&[
        "local",
        dir.join("chsh-box.yaml").to_str().unwrap(),
        "--json",
    ]));
    assert!((local["visibility"].as_f64().unwrap() - 0.5).abs() < 1e-9);
    // The game file itself is never overwritten.
    let game = dir.join("g.yaml");
    std::fs::copy("games/chsh.yaml", &game).unwrap();
    let out = bellgap(&[
        "nosignal",
        game.to_str().unwrap(),
        "--save",
        game.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        std::fs::read_to_string(&game).unwrap(),
        std::fs::read_to_string("games/chsh.yaml").unwrap()
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn exact_and_imported_figures_are_printed_on_their_side() {
    use bellgap::protocol::randomness::{self, Target};
    let dir = std::env::temp_dir().join(format!("bellgap-sides-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let text_and_json = |args: &[&str]| {
        let out = bellgap(args);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = String::from_utf8_lossy(&out.stdout).to_string();
        (text, json_of(&bellgap(&[args, &["--json"]].concat())))
    };
    // randomness --exact: the exact min-entropy is a lower bound, written down.
    let (text, j) = text_and_json(&[
        "randomness",
        "games/chsh.yaml",
        "--score",
        "0.85",
        "--exact",
    ]);
    assert!(printed_after(&text, ", min-entropy ≥") <= j["exact"]["min_entropy"].as_f64().unwrap());
    // An imported solution (our own dual in SDPA output form): the guessing probability up,
    // the min-entropy down.
    let g =
        bellgap::Game::from_file("games/chsh.yaml", bellgap::CompileOptions::default()).unwrap();
    let target = Target {
        parts: vec![(0, 0)],
    };
    let level = bellgap::Level::Length(2);
    let r = randomness::guessing_probability(&g.scenario, &target, 0.85, &level).unwrap();
    let problem = randomness::guessing_sdp(&g.scenario, &target, 0.85, &level).unwrap();
    let solution = dir.join("guess.out");
    std::fs::write(
        &solution,
        bellgap::optim::sdpa::solution_text(&problem, &r.dual),
    )
    .unwrap();
    let (text, j) = text_and_json(&[
        "randomness",
        "games/chsh.yaml",
        "--score",
        "0.85",
        "--sdpa-solution",
        solution.to_str().unwrap(),
        "--exact",
    ]);
    assert!(
        printed_after(&text, "guessing probability ≤")
            >= j["guessing_probability"].as_f64().unwrap()
    );
    assert!(printed_after(&text, "min-entropy ≥ (bits)") <= j["min_entropy"].as_f64().unwrap());
    assert!(printed_after(&text, "proven exactly ≤") >= j["exact"]["rounded_up"].as_f64().unwrap());
    // local's integer form: its value and violation are lower bounds, written down.
    let path = tsirelson_box("sides-tsirelson.yaml");
    let (text, j) = text_and_json(&["local", path.to_str().unwrap()]);
    let int = &j["separating"]["integer"];
    let value_label = format!("{} ≥", int["value_fraction"].as_str().unwrap());
    assert!(printed_after(&text, &value_label) <= int["value"].as_f64().unwrap());
    assert!(printed_after(&text, "violation ≥") <= int["violation"].as_f64().unwrap());
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn hostile_sdpa_solutions_are_refused_with_exit_2() {
    let dir = std::env::temp_dir().join(format!("bellgap-hostile-sdpa-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let block = |v: &str| {
        let row = format!("{{{}}}", vec![v; 13].join(", "));
        format!("{{ {} }}", vec![row.as_str(); 13].join(", "))
    };
    // Not-a-number, infinite and overflowing entries, and a diagonal block of the wrong length:
    // no matrix of this shape proves anything, so the file is refused, never a bound.
    for (name, entry, diagonal) in [
        ("nan.out", "nan", "{0, 1, 0}"),
        ("inf.out", "inf", "{0, 1, 0}"),
        ("huge.out", "1e308", "{1e308, 1e308, 1e308}"),
        ("short.out", "0", "{0, 1}"),
    ] {
        let file = dir.join(name);
        std::fs::write(
            &file,
            format!(
                "yMat =\n{{\n{},\n{},\n{diagonal}\n}}\n",
                block(entry),
                block(entry)
            ),
        )
        .unwrap();
        for exact in [false, true] {
            let mut args = vec![
                "randomness",
                "games/chsh.yaml",
                "--score",
                "0.85",
                "--sdpa-solution",
                file.to_str().unwrap(),
            ];
            if exact {
                args.push("--exact");
            }
            let out = bellgap(&args);
            assert_eq!(
                out.status.code(),
                Some(2),
                "{name}: {}{}",
                String::from_utf8_lossy(&out.stdout),
                String::from_utf8_lossy(&out.stderr)
            );
            assert!(String::from_utf8_lossy(&out.stderr).contains(name));
        }
    }
    // The same for the entropy nodes' solutions.
    let prefix = dir.join("chsh");
    for k in 1..=3 {
        std::fs::write(
            dir.join(format!("chsh-node-{k:02}.out")),
            "yMat =\n{\n{ {nan} }\n}\n",
        )
        .unwrap();
    }
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--score",
        "0.84",
        "--nodes",
        "4",
        "--sdpa-solutions",
        prefix.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("chsh-node-01.out"));
    let _ = std::fs::remove_dir_all(&dir);
}
