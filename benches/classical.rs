//! Speed of the exact classical search, the no-signalling LP, the locality LP and the symmetry
//! search.
//!
//! Run with `cargo bench --bench classical`; prints one table row per case (median of several
//! runs). The numbers in BENCHMARKS.md come from this command. Speed is measured here, never in
//! tests.

use std::time::Instant;

use bellgap::bounds::classical::locality::{locality_test, Correlations};
use bellgap::bounds::classical::search;
use bellgap::bounds::nosignal::no_signalling_value;
use bellgap::formats::game::{families, product, Game, GameSpec, PlayerSpec};
use bellgap::Scenario;
use serde_yaml::{Mapping, Value};

fn compile(spec: &GameSpec) -> Scenario {
    Game::from_spec(spec, "bench").unwrap().scenario
}

fn repeated(spec: &GameSpec, rounds: usize) -> Scenario {
    let s = compile(spec);
    compile(&product::parallel_repetition(&s, "g", rounds).unwrap())
}

/// A two-player game with 8 questions and 4 answers each and seeded random scores in [0, 1):
/// no structure for the pruning to exploit.
fn random_8x4(seed: u64) -> Scenario {
    let mut state = seed;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 33) % 1000) as i64
    };
    let table = Value::Sequence(
        (0..8)
            .map(|_| {
                Value::Sequence(
                    (0..8)
                        .map(|_| {
                            Value::Sequence(
                                (0..4)
                                    .map(|_| {
                                        Value::Sequence(
                                            (0..4).map(|_| Value::from(next())).collect(),
                                        )
                                    })
                                    .collect(),
                            )
                        })
                        .collect(),
                )
            })
            .collect(),
    );
    let mut constants = Mapping::new();
    constants.insert(Value::from("v"), table);
    compile(&GameSpec {
        constants: Some(constants),
        players: vec![
            PlayerSpec::counted("alice", "x", "a", 8, 4),
            PlayerSpec::counted("bob", "y", "b", 8, 4),
        ],
        distribution: Some(Value::from("uniform")),
        score: Some("v[x][y][a][b] / 1000".into()),
        ..Default::default()
    })
}

fn time<T>(runs: usize, mut f: impl FnMut() -> T) -> (f64, T) {
    let mut times = Vec::new();
    let mut last = None;
    for _ in 0..runs {
        let t = Instant::now();
        last = Some(f());
        times.push(t.elapsed().as_secs_f64());
    }
    times.sort_by(f64::total_cmp);
    (times[times.len() / 2], last.expect("at least one run"))
}

fn main() {
    println!("| case | what | median seconds | result |");
    println!("|---|---|---|---|");
    let cases: Vec<(&str, Scenario, usize)> = vec![
        ("CHSH", compile(&families::chsh()), 20),
        ("CHSH x2", repeated(&families::chsh(), 2), 20),
        ("CHSH x3", repeated(&families::chsh(), 3), 3),
        ("random 8x4 (seed 1)", random_8x4(1), 5),
        ("random 8x4 (seed 2)", random_8x4(2), 5),
        ("magic square", compile(&families::magic_square()), 20),
        ("magic square x2", repeated(&families::magic_square(), 2), 1),
        ("CGLMP d=8", compile(&families::cglmp(8).unwrap()), 5),
        ("GHZ 6 players", compile(&families::ghz(6).unwrap()), 5),
    ];
    for (name, s, runs) in &cases {
        let (t, v) = time(*runs, || search(s, None));
        println!(
            "| {name} | classical search | {t:.4} | {:.6} ({} nodes) |",
            v.value, v.nodes
        );
    }
    for (name, s, runs) in &cases {
        if s.joint_questions() * s.joint_answers() > 30_000 {
            continue;
        }
        let (t, v) = time(*runs, || {
            no_signalling_value(s, &bellgap::Limits::default()).unwrap()
        });
        println!(
            "| {name} | no-signalling LP ({} variables) | {t:.4} | {:.6} |",
            v.variables, v.value
        );
    }
    let tsirelson = {
        let (hi, lo) = ("(1 + 1/sqrt(2))/4", "(1 - 1/sqrt(2))/4");
        let row = |q: &str, flip: bool| {
            let (p, m) = if flip { (lo, hi) } else { (hi, lo) };
            format!("  - questions: {q}\n    probabilities: [\"{p}\", \"{m}\", \"{m}\", \"{p}\"]\n")
        };
        let text = format!(
            "players:\n  - {{name: alice, questions: 2, answers: 2}}\n  - {{name: bob, questions: 2, answers: 2}}\nbehaviour:\n{}{}{}{}",
            row("[0, 0]", false),
            row("[0, 1]", false),
            row("[1, 0]", false),
            row("[1, 1]", true)
        );
        Correlations::from_yaml(&text, "tsirelson").unwrap()
    };
    let (t, r) = time(20, || {
        locality_test(&tsirelson, &bellgap::Limits::default()).unwrap()
    });
    println!(
        "| optimal CHSH correlations | locality LP (16 strategies) | {t:.4} | visibility {:.6} |",
        r.visibility
    );
    let mut symmetric: Vec<(String, Scenario)> = cases
        .iter()
        .map(|(name, s, _)| (name.to_string(), s.clone()))
        .collect();
    for d in [12, 16] {
        symmetric.push((
            format!("CGLMP d={d}"),
            compile(&families::cglmp(d).unwrap()),
        ));
    }
    symmetric.push(("GHZ 4 players".into(), compile(&families::ghz(4).unwrap())));
    for (name, s) in &symmetric {
        let (t, g) = time(5, || bellgap::model::symmetry::symmetries(s));
        match g {
            Some(g) => println!(
                "| {name} | symmetry search | {t:.4} | order {}{} ({} generators) |",
                if g.complete { "" } else { "≥ " },
                g.order,
                g.generators.len()
            ),
            None => {
                println!("| {name} | symmetry search | {t:.4} | not searched (table too large) |")
            }
        }
    }
}
