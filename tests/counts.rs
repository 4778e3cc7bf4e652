//! Counts in: simulated lab runs (sampled from a noisy CHSH strategy with no-clicks) through the
//! counts file, the margin, the confidence region and the entropy bound; and sampling tests
//! that the figures computed from data hold for the true behaviour as often as they claim.

use bellgap::bounds::entropy::{
    conditional_entropy, AdversaryWords, EntropyConstraint, EntropyOptions, Target,
};
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::model::counts::Counts;
use bellgap::model::region::BehaviourRegion;
use bellgap::pipeline::{self, MarginOptions, RunData, Silent};
use bellgap::protocol::finite::ObservedRun;

mod common;
use common::{bellgap, json_of};

fn chsh() -> Game {
    Game::from_file(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
        CompileOptions::default(),
    )
    .unwrap()
}

/// splitmix64: a small seeded generator of uniform numbers in [0, 1).
struct Uniform(u64);

impl Uniform {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e3779b97f4a7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58476d1ce4e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d049bb133111eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// The noisy Tsirelson behaviour with visibility `v`, each detector clicking with probability
/// `eta` independently: per joint question, the 3 × 3 outcomes (answers 0, 1, then no-click).
fn lossy_tsirelson(v: f64, eta: f64) -> Vec<Vec<f64>> {
    let mut rows = Vec::new();
    for x in 0..2 {
        for y in 0..2 {
            let mut row = Vec::new();
            for oa in 0..3 {
                for ob in 0..3 {
                    let p = match (oa < 2, ob < 2) {
                        (true, true) => {
                            let sign = if (oa ^ ob) == (x & y) { 1.0 } else { -1.0 };
                            eta * eta * (1.0 + sign * v / 2f64.sqrt()) / 4.0
                        }
                        (true, false) | (false, true) => eta * (1.0 - eta) / 2.0,
                        (false, false) => (1.0 - eta) * (1.0 - eta),
                    };
                    row.push(p);
                }
            }
            rows.push(row);
        }
    }
    rows
}

/// The behaviour after binning both no-clicks into answer 0, in the game's layout.
fn binned(rows: &[Vec<f64>]) -> Vec<f64> {
    let mut p = Vec::new();
    for row in rows {
        let mut out = [0.0; 4];
        for (o, &v) in row.iter().enumerate() {
            let (oa, ob) = (o / 3, o % 3);
            let (a, b) = (oa % 2 * usize::from(oa < 2), ob % 2 * usize::from(ob < 2));
            out[a * 2 + b] += v;
        }
        p.extend(out);
    }
    p
}

/// A counts file sampled from `rows` with `n` rounds per joint question.
fn sampled_counts(rows: &[Vec<f64>], n: u64, seed: u64) -> String {
    let mut u = Uniform(seed);
    let mut text = String::from(
        "name: simulated run (invented)\nplayers:\n  - {name: alice, questions: 2, answers: 2, no_click: 0}\n  - {name: bob, questions: 2, answers: 2, no_click: 0}\ncounts:\n",
    );
    for (k, row) in rows.iter().enumerate() {
        let mut counts = vec![0u64; row.len()];
        for _ in 0..n {
            let mut r = u.next();
            let mut pick = row.len() - 1;
            for (o, &p) in row.iter().enumerate() {
                if r < p {
                    pick = o;
                    break;
                }
                r -= p;
            }
            counts[pick] += 1;
        }
        text += &format!(
            "  - questions: [{}, {}]\n    answers: [{}]\n",
            k / 2,
            k % 2,
            counts
                .iter()
                .map(u64::to_string)
                .collect::<Vec<_>>()
                .join(", ")
        );
    }
    text
}

fn light() -> EntropyOptions {
    EntropyOptions {
        nodes: 4,
        adversary: AdversaryWords::WithProjectors,
        ..Default::default()
    }
}

fn alice_first() -> Target {
    Target {
        parts: vec![(0, 0)],
    }
}

#[test]
fn a_simulated_lab_run_gives_the_same_margin_by_counts_and_by_wins_and_an_honest_entropy() {
    let game = chsh();
    let s = &game.scenario;
    let rows = lossy_tsirelson(0.97, 0.985);
    let text = sampled_counts(&rows, 20_000, 11);
    let counts = Counts::from_yaml(&text, "sim.yaml").unwrap();
    assert_eq!(counts.total_rounds(), 80_000);
    // The wins by hand: the binned counts where a ⊕ b = x·y.
    let wins: u64 = (0..16)
        .filter(|&k| {
            let (q, a) = (k / 4, k % 4);
            ((a >> 1) ^ (a & 1)) == ((q >> 1) & (q & 1))
        })
        .map(|k| counts.counts[k])
        .sum();
    let options = MarginOptions::default();
    let by_counts =
        pipeline::margin(&game, &RunData::Counts(counts.clone()), &options, &Silent).unwrap();
    let by_wins = pipeline::margin(
        &game,
        &RunData::Summary(ObservedRun {
            rounds: 80_000,
            wins: Some(wins),
            ..Default::default()
        }),
        &options,
        &Silent,
    )
    .unwrap();
    assert_eq!(
        by_counts.margin.certified_score,
        by_wins.margin.certified_score
    );
    assert_eq!(by_counts.margin.confidence_method, "Clopper–Pearson");
    assert!(by_counts.estimator.unwrap().contains("game's distribution"));
    // The entropy over the confidence region is positive and no more than the true behaviour's.
    let region = counts.confidence_region(1e-3).unwrap();
    let truth = binned(&rows);
    assert!(region.contains(&truth));
    let from_data = conditional_entropy(
        s,
        &alice_first(),
        &EntropyConstraint::Region(region),
        &light(),
    )
    .unwrap();
    let exact = BehaviourRegion::around(&truth, 1e-12, "truth".into()).unwrap();
    let of_truth = conditional_entropy(
        s,
        &alice_first(),
        &EntropyConstraint::Region(exact),
        &light(),
    )
    .unwrap();
    assert!(from_data.bits > 0.1, "{}", from_data.bits);
    assert!(
        from_data.bits <= of_truth.bits + 1e-6,
        "{} {}",
        from_data.bits,
        of_truth.bits
    );
}

#[test]
fn figures_from_data_exceed_the_truth_no_more_often_than_their_error() {
    // Over many simulated runs, the confidence region must miss the true behaviour, and the
    // lower confidence score exceed the true win probability, in at most a share ε of runs
    // (the union bound makes the region conservative: the share seen is far below ε).
    let game = chsh();
    let s = &game.scenario;
    let rows = lossy_tsirelson(0.9, 0.97);
    let truth = binned(&rows);
    let true_value = s.value_of_behaviour(&truth);
    let (runs, error) = (600u64, 0.05);
    let (mut region_misses, mut score_misses) = (0, 0);
    let options = MarginOptions {
        alpha: error,
        ..Default::default()
    };
    for seed in 0..runs {
        let counts =
            Counts::from_yaml(&sampled_counts(&rows, 150, 1000 + seed), "sim.yaml").unwrap();
        if !counts.confidence_region(error).unwrap().contains(&truth) {
            region_misses += 1;
        }
        let m = pipeline::margin(&game, &RunData::Counts(counts), &options, &Silent).unwrap();
        if m.margin.certified_score > true_value {
            score_misses += 1;
        }
    }
    assert!(
        (region_misses as f64) <= error * runs as f64,
        "{region_misses} of {runs}"
    );
    assert!(
        (score_misses as f64) <= error * runs as f64,
        "{score_misses} of {runs}"
    );
    // The entropy figure itself, on fewer runs (each is an SDP hierarchy): a run's bound above
    // the true behaviour's would mean its region missed the truth.
    let exact = BehaviourRegion::around(&truth, 1e-12, "truth".into()).unwrap();
    let of_truth = conditional_entropy(
        s,
        &alice_first(),
        &EntropyConstraint::Region(exact),
        &light(),
    )
    .unwrap()
    .bits;
    let (few, mut above) = (12u64, 0);
    for seed in 0..few {
        let counts =
            Counts::from_yaml(&sampled_counts(&rows, 4000, 5000 + seed), "sim.yaml").unwrap();
        let region = counts.confidence_region(error).unwrap();
        match conditional_entropy(
            s,
            &alice_first(),
            &EntropyConstraint::Region(region),
            &light(),
        ) {
            Ok(h) if h.bits > of_truth + 1e-6 => above += 1,
            _ => {}
        }
    }
    assert!(
        (above as f64) <= error * few as f64 + 1.0,
        "{above} of {few}"
    );
}

#[test]
fn counts_through_the_command_line() {
    let rows = lossy_tsirelson(0.97, 0.985);
    let dir = std::env::temp_dir().join(format!("bellgap-counts-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("sim.yaml");
    std::fs::write(&path, sampled_counts(&rows, 20_000, 11)).unwrap();
    let p = path.to_str().unwrap();
    let margin = json_of(&bellgap(&[
        "margin",
        "games/chsh.yaml",
        "--counts",
        p,
        "--json",
    ]));
    assert_eq!(margin["rounds"].as_u64(), Some(80_000));
    assert_eq!(margin["confidence_method"], "Clopper–Pearson");
    assert!(margin["estimator"]
        .as_str()
        .unwrap()
        .contains("game's distribution"));
    let out = bellgap(&[
        "entropy",
        "games/chsh.yaml",
        "--counts",
        p,
        "--alpha",
        "1e-3",
        "--nodes",
        "4",
        "--adversary-words",
        "with-projectors",
        "--key-with",
        "bob",
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert!(j["given"].as_str().unwrap().contains("confidence region"));
    let r = &j["results"][0];
    assert!(r["entropy"]["bits"].as_f64().unwrap() > 0.1);
    // H(A|B) over the region is at least at its centre.
    assert!(r["key"]["error_correction"].as_f64().unwrap() > 0.0);
    // Bad counts exit 2 naming the field.
    for (text, field) in [
        ("players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\ncounts:\n  - {questions: [0, 0], answers: [1, -2, 3, 4]}\n", "counts[0].answers[1]"),
        ("players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\ncounts:\n  - {questions: [0, 0], answers: [1, 2, 3, 4]}\n", "no row for joint question"),
        ("players:\n  - {name: alice, questions: 2, answers: 2}\n  - {name: bob, questions: 2, answers: 2}\ncounts:\n  - {questions: [0, 0], answers: [1, .nan, 3, 4]}\n", "counts[0].answers[1]"),
    ] {
        let bad = dir.join("bad.yaml");
        std::fs::write(&bad, text).unwrap();
        let out = bellgap(&["margin", "games/chsh.yaml", "--counts", bad.to_str().unwrap()]);
        assert_eq!(out.status.code(), Some(2));
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains(field) && err.contains("bad.yaml"), "{err}");
    }
    // An error probability outside (0, 1) for the region or the score is refused.
    for (command, alpha) in [
        ("entropy", "0"),
        ("entropy", "1"),
        ("randomness", "2"),
        ("randomness", "nan"),
    ] {
        let out = bellgap(&[command, "games/chsh.yaml", "--counts", p, "--alpha", alpha]);
        assert_eq!(out.status.code(), Some(2), "{command} --alpha {alpha}");
    }
    // Counts whose players differ from the game's are refused too.
    let out = bellgap(&["margin", "games/cglmp-3.yaml", "--counts", p]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn a_review_from_counts_uses_them_throughout() {
    // The invented lab's counts as the run: the margin from them, and a finite-size key whose
    // error correction leaks n·f·h(Q) with Q observed in the counts at the key questions.
    let root = env!("CARGO_MANIFEST_DIR");
    let counts_path = format!("{root}/examples/data/lab-counts.yaml");
    let dir = std::env::temp_dir().join(format!("bellgap-counts-review-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let protocol = dir.join("run.yaml");
    std::fs::write(
        &protocol,
        format!(
            "name: quarry-mill run\ngame: {root}/games/chsh.yaml\ncounts: {counts_path}\nfinite_size: {{rounds: 1000000000, testing: 0.01, threshold: 0.82, key_with: bob, nodes: 6, tangent_points: 1, statement: improved-second-order}}\n"
        ),
    )
    .unwrap();
    let out = bellgap(&["review", protocol.to_str().unwrap(), "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert_eq!(j["margin"]["rounds"].as_u64(), Some(240_000));
    assert!(j["estimator"]
        .as_str()
        .unwrap()
        .contains("game's distribution"));
    let counts = Counts::from_file(&counts_path).unwrap();
    let f = counts.frequencies();
    // Question (0, 0) is row 0: answers (0,1) and (1,0) differ.
    let q = f[1] + f[2];
    let leak = &j["finite_size"]["figures"]["key_disclosure"]["leakage"];
    assert_eq!(leak["kind"], "error-rate");
    assert!((leak["error_rate"].as_f64().unwrap() - q).abs() < 1e-15);
    let h = -(q * q.log2() + (1.0 - q) * (1.0 - q).log2());
    let disclosed = j["finite_size"]["figures"]["run"]["disclosure"]["error_correction"]
        .as_f64()
        .unwrap();
    assert!((disclosed - 1e9 * 1.16 * h).abs() < 1e-3 * disclosed.abs().max(1.0));
    assert!(
        j["finite_size"]["figures"]["security_total"]
            .as_f64()
            .unwrap()
            > 3.9e-9
    );
    // Counts together with rounds, or key_with without counts, are refused.
    let both = dir.join("both.yaml");
    std::fs::write(
        &both,
        format!("game: {root}/games/chsh.yaml\ncounts: {counts_path}\nrounds: 10\nwins: 8\n"),
    )
    .unwrap();
    assert_eq!(
        bellgap(&["review", both.to_str().unwrap()]).status.code(),
        Some(2)
    );
    let no_counts = dir.join("no-counts.yaml");
    std::fs::write(
        &no_counts,
        format!("game: {root}/games/chsh.yaml\nrounds: 1000\nwins: 845\nfinite_size: {{rounds: 1000000, testing: 0.01, threshold: 0.84, key_with: bob}}\n"),
    )
    .unwrap();
    assert_eq!(
        bellgap(&["review", no_counts.to_str().unwrap()])
            .status
            .code(),
        Some(2)
    );
}
