//! Finite-size figures by entropy accumulation: the rate grows with n towards its limit, the
//! limit is the hierarchy's bound at the threshold (times 1 − γ), nothing is certified at the
//! classical value, key costs what it discloses, and bad requests are refused.

use bellgap::bounds::entropy::{AdversaryWords, EntropyOptions, Preprocessing};
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::pipeline::{finite_size, FiniteSizeOptions, KeyDisclosure, Leakage, Silent, Tangent};
use bellgap::protocol::accumulation::{
    accumulate, crossover, CrossoverTradeoff, Disclosure, SecurityParameters, SpotChecking,
    Statement,
};
use bellgap::protocol::key::{ChshEntropyBound, EntropyBound};

mod common;
use common::{bellgap, json_of};

fn chsh_game() -> Game {
    Game::from_file("games/chsh.yaml", CompileOptions::default()).unwrap()
}

/// A quick relaxation (valid, a little looser): enough for the invariants. The improved
/// second-order statement alone (the default certifies the smaller of both statements, which
/// here is the original's, with nothing at n = 10⁹ for these light relaxations).
fn quick(threshold: f64, rounds: u64) -> FiniteSizeOptions {
    FiniteSizeOptions {
        rounds,
        testing: 0.01,
        threshold,
        security: SecurityParameters {
            statement: Statement::ImprovedSecondOrder,
            ..Default::default()
        },
        tangent: Tangent::Search(1),
        hierarchy: EntropyOptions {
            nodes: 6,
            adversary: AdversaryWords::WithProjectors,
            ..Default::default()
        },
        ..Default::default()
    }
}

#[test]
fn the_rate_grows_with_n_towards_the_bound_at_the_threshold() {
    let game = chsh_game();
    let r = finite_size(&game, &quick(0.84, 1_000_000_000), &Silent).unwrap();
    // The limit is (1 − γ) times the hierarchy's bound at the threshold (the tangent is there),
    // which is at most the analytic CHSH curve at S = 8·0.84 − 4 = 2.72 (Acín et al. 2007,
    // PRL 98, 230501): 1 − h(1/2 + 1/2·√((2.72/2)² − 1)) = 0.7636 (computed here).
    let curve = ChshEntropyBound.entropy(8.0 * 0.84 - 4.0);
    assert!((r.asymptotic_output_rate - 0.99 * r.entropy.bits).abs() < 1e-9);
    assert!(r.entropy.bits <= curve + 1e-9 && r.entropy.bits > curve - 0.02);
    // Monotone increasing in n, below the limit, and zero for short runs.
    for w in r.curve.windows(2) {
        assert!(w[1].1 >= w[0].1, "{:?}", r.curve);
    }
    assert!(r
        .curve
        .iter()
        .all(|&(_, rate)| rate < r.asymptotic_output_rate));
    assert_eq!(r.curve[0], (1000, 0.0));
    let last = r.curve.last().unwrap().1;
    assert!(last > 0.99 * r.asymptotic_output_rate, "{last}");
    // The run's own figures: output = ⌊H_min − 2·log₂(1/ε_ext)⌋, rate = output / n.
    let run = &r.run;
    assert_eq!(
        run.output_bits,
        (run.smooth_min_entropy - 2.0 * (1e9f64).log2()).floor()
    );
    assert!((run.rate_per_round - run.output_bits / 1e9).abs() < 1e-15);
    // The rounds for 90 %: the curve crosses 90 % of the limit between its neighbours.
    let n90 = r.rounds_for_fraction.unwrap();
    let goal = 0.9 * r.asymptotic_output_rate;
    assert!(r
        .curve
        .iter()
        .all(|&(n, rate)| (n >= n90) == (rate >= goal)));
    let at_n90 = finite_size(&game, &quick(0.84, n90), &Silent).unwrap();
    assert!(at_n90.run.rate_per_round >= goal);
    let before = finite_size(&game, &quick(0.84, n90 - 1), &Silent).unwrap();
    assert!(before.run.rate_per_round < goal);
}

#[test]
fn a_higher_threshold_certifies_more_and_the_classical_value_nothing() {
    let game = chsh_game();
    let low = finite_size(&game, &quick(0.80, 10_000_000_000), &Silent).unwrap();
    let high = finite_size(&game, &quick(0.84, 10_000_000_000), &Silent).unwrap();
    assert!(high.run.output_bits > low.run.output_bits);
    let classical = finite_size(&game, &quick(0.75, 10_000_000_000), &Silent).unwrap();
    assert_eq!(classical.run.output_bits, 0.0);
    assert_eq!(classical.rounds_for_fraction, None);
}

#[test]
fn the_tangent_search_keeps_the_best_line() {
    let game = chsh_game();
    let mut options = quick(0.84, 10_000_000);
    options.tangent = Tangent::Search(3);
    let r = finite_size(&game, &options, &Silent).unwrap();
    assert_eq!(r.tangents.len(), 3);
    assert_eq!(r.tangents[0].score, 0.84);
    let best = r
        .tangents
        .iter()
        .map(|t| t.output_bits)
        .fold(f64::NEG_INFINITY, f64::max);
    assert_eq!(r.run.output_bits, best);
    // Every tried line is a valid bound: each is at most the threshold's own entropy bound.
    let at = |score: f64| {
        let mut o = quick(0.84, 10_000_000);
        o.tangent = Tangent::At(score);
        finite_size(&game, &o, &Silent).unwrap()
    };
    let lower = at(r.tangents[2].score);
    assert!(lower.run.asymptotic_rate <= 0.99 * r.tangents[0].entropy + 1e-9);
}

#[test]
fn key_subtracts_the_test_answers_and_the_disclosure() {
    let game = chsh_game();
    let randomness = finite_size(&game, &quick(0.84, 1_000_000_000), &Silent).unwrap();
    let mut options = quick(0.84, 1_000_000_000);
    options.key = Some(KeyDisclosure {
        leakage: Leakage::Bits { bits: 1e8 },
        ..Default::default()
    });
    let key = finite_size(&game, &options, &Silent).unwrap();
    // d_O = |A|·(|B| + 1) = 6 for key against 4 for randomness: a slightly larger V.
    assert_eq!(key.run.protocol.output_dimension, 6.0);
    let cap = key.max_test_rounds.unwrap();
    // The Chernoff cap: μ = nγ = 10⁷, L = ln 10⁹ = 20.72, δ = (L + √(L² + 8μL))/(2μ) ≈ 0.002037
    // (by hand), so about 10,020,370.
    assert!(cap > 10_020_000 && cap < 10_021_000, "{cap}");
    assert_eq!(key.run.disclosure.test_answers, cap as f64);
    assert_eq!(key.run.disclosure.error_correction, 1e8);
    // The verification hash at ε_EC = 1e-9: ⌈log₂ 10⁹⌉ = 30 bits.
    assert_eq!(key.run.disclosure.verification_hash, 30.0);
    assert_eq!(
        key.run.output_bits,
        (key.run.smooth_min_entropy - cap as f64 - 1e8 - 30.0 - 2.0 * (1e9f64).log2())
            .floor()
            .max(0.0)
    );
    // The security parameter is the sum of its four parts.
    assert_eq!(key.security_parts.len(), 4);
    assert!((key.security_total() - 4e-9).abs() < 1e-24);
    // Leakage from an error rate: n·f·h(Q), here with f = 1.2 and Q = 0.02.
    let mut by_rate = quick(0.84, 1_000_000_000);
    by_rate.key = Some(KeyDisclosure {
        leakage: Leakage::ErrorRate {
            error_rate: 0.02,
            efficiency: 1.2,
        },
        correction_failure: Some(1e-7),
        ..Default::default()
    });
    by_rate.expected = Some(0.845);
    let r = finite_size(&game, &by_rate, &Silent).unwrap();
    let h02 = -(0.02f64 * 0.02f64.log2() + 0.98 * 0.98f64.log2());
    assert!((r.run.disclosure.error_correction - 1e9 * 1.2 * h02).abs() < 1e-3);
    // Completeness: the test's failure (about 10^-346 here) plus the code's stated 1e-7.
    assert!((r.completeness_total().unwrap() - 1e-7).abs() < 1e-15);
    assert!(key.run.output_bits < randomness.run.output_bits - 1e8);
    // The limit: h − γ·log₂|B| − leak per round.
    assert!((key.asymptotic_output_rate - (key.run.asymptotic_rate - 0.01 - 0.1)).abs() < 1e-12);
    // With noisy preprocessing the raw key holds more entropy (the disclosure, given, is the
    // same here; in practice error correction then discloses more).
    options.hierarchy.preprocessing = Preprocessing::Noisy { probability: 0.1 };
    let noisy = finite_size(&game, &options, &Silent).unwrap();
    assert!(
        noisy.entropy.bits > key.entropy.bits + 0.05,
        "{} {}",
        noisy.entropy.bits,
        key.entropy.bits
    );
    assert!(noisy.run.output_bits > key.run.output_bits);
}

#[test]
fn bad_requests_are_refused() {
    let game = chsh_game();
    let refused = |f: &dyn Fn(&mut FiniteSizeOptions)| {
        let mut o = quick(0.84, 1_000_000);
        f(&mut o);
        assert!(finite_size(&game, &o, &Silent).is_err());
    };
    refused(&|o| o.testing = 0.0);
    refused(&|o| o.testing = 1.5);
    refused(&|o| o.testing = f64::NAN);
    refused(&|o| o.rounds = 0);
    refused(&|o| o.threshold = f64::NAN);
    refused(&|o| o.threshold = 1.2);
    // Above Tsirelson's bound (cos²(π/8) ≈ 0.8536): no quantum device passes.
    refused(&|o| o.threshold = 0.9);
    refused(&|o| o.security.smoothing = 0.0);
    refused(&|o| o.security.pass_floor = 1.0);
    refused(&|o| o.security.extraction = -1e-9);
    refused(&|o| o.fraction = 1.0);
    refused(&|o| o.tangent = Tangent::Search(0));
    refused(&|o| o.tangent = Tangent::Search(33));
    refused(&|o| o.tangent = Tangent::At(f64::INFINITY));
    refused(&|o| o.expected = Some(2.0));
    refused(&|o| {
        o.key = Some(KeyDisclosure {
            leakage: Leakage::Bits { bits: f64::NAN },
            ..Default::default()
        })
    });
    for (error_rate, efficiency) in [
        (f64::NAN, 1.16),
        (1.5, 1.16),
        (0.02, 0.9),
        (0.02, f64::INFINITY),
    ] {
        refused(&|o| {
            o.key = Some(KeyDisclosure {
                leakage: Leakage::ErrorRate {
                    error_rate,
                    efficiency,
                },
                ..Default::default()
            })
        });
    }
    refused(&|o| {
        o.key = Some(KeyDisclosure {
            verification_error: 0.0,
            ..Default::default()
        })
    });
    refused(&|o| {
        o.key = Some(KeyDisclosure {
            leakage: Leakage::Bits { bits: 0.0 },
            ..Default::default()
        });
        o.with = Some(Default::default());
    });
    // Randomness with noisy preprocessing would count the flip's own randomness as certified.
    refused(&|o| o.hierarchy.preprocessing = Preprocessing::Noisy { probability: 0.1 });
}

#[test]
fn the_command_prints_json_and_writes_the_plot() {
    let dir = std::env::temp_dir().join(format!("bellgap-finite-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let svg = dir.join("rate.svg");
    let svg_path = svg.to_string_lossy().to_string();
    let out = bellgap(&[
        "finite-size",
        "games/chsh.yaml",
        "--rounds",
        "100000000",
        "--testing",
        "0.05",
        "--threshold",
        "0.83",
        "--expected",
        "0.845",
        "--nodes",
        "6",
        "--adversary-words",
        "with-projectors",
        "--tangent-points",
        "1",
        "--json",
        "--svg",
        &svg_path,
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    assert_eq!(j["command"], "finite-size");
    assert_eq!(j["extracting"], "randomness");
    let run = &j["run"];
    assert!(run["output_bits"].as_f64().unwrap() > 0.0);
    assert!(run["smooth_min_entropy"].as_f64().unwrap() < run["first_order"].as_f64().unwrap());
    assert!(run["statement"]
        .as_str()
        .unwrap()
        .contains("Dupuis & Fawzi"));
    assert!(j["completeness_error_log10"].as_f64().unwrap() < -9.0);
    assert_eq!(j["curve"].as_array().unwrap().len(), 56);
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));
    // Bad numbers are usage errors (exit 2).
    for bad in [
        ["--testing", "nan"],
        ["--rounds", "-5"],
        ["--smoothing", "inf"],
    ] {
        let mut args = vec![
            "finite-size",
            "games/chsh.yaml",
            "--threshold",
            "0.83",
            "--rounds",
            "1000",
            "--testing",
            "0.1",
        ];
        args.extend(bad);
        let out = bellgap(&args);
        assert_eq!(out.status.code(), Some(2), "{bad:?}");
    }
}

#[test]
fn the_review_adds_the_finite_size_section_and_a_general_game_key_rate() {
    let dir = std::env::temp_dir().join(format!("bellgap-finite-review-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let root = env!("CARGO_MANIFEST_DIR");
    // A CHSH run with a finite-size section.
    let chsh_run = dir.join("chsh-run.yaml");
    std::fs::write(
        &chsh_run,
        format!(
            "game: {root}/games/chsh.yaml\nrounds: 100000\nwins: 84500\nfinite_size: {{rounds: 1000000000, testing: 0.01, threshold: 0.84, nodes: 6, tangent_points: 1, statement: improved-second-order}}\n"
        ),
    )
    .unwrap();
    let out = bellgap(&["review", chsh_run.to_str().unwrap(), "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json_of(&out);
    let f = &j["finite_size"];
    assert_eq!(f["observed_passes"], true);
    // The same figures as the library computes with the same options.
    let mut options = quick(0.84, 1_000_000_000);
    options.hierarchy.adversary = AdversaryWords::WithPlayerWords;
    let game = chsh_game();
    let direct = finite_size(&game, &options, &Silent).unwrap();
    assert_eq!(
        f["figures"]["run"]["output_bits"].as_f64().unwrap(),
        direct.run.output_bits
    );
    assert!(j["assumptions"]
        .as_array()
        .unwrap()
        .iter()
        .any(|a| a.as_str().unwrap().contains("Dupuis & Fawzi")));
    // Bad numbers in the finite-size section are input errors of the protocol file (exit 2).
    for bad in [
        "testing: .nan, threshold: 0.84",
        "testing: 0.01, threshold: .inf",
        "testing: 2, threshold: 0.84",
        "testing: 0.01, threshold: 0.84, smoothing: 0",
        "testing: 0.01, threshold: 0.84, key_disclosed_bits: -1",
        "testing: 0.01, threshold: 0.84, nodes: 100000",
        "testing: 0.01, threshold: 0.84, statement: newest",
        "testing: 0.01, threshold: 0.84, key_error_rate: 0.02, key_disclosed_bits: 5",
        "testing: 0.01, threshold: 0.84, key_error_rate: 0.02, ec_efficiency: 0.5",
        "testing: 0.01, threshold: 0.84, key_error_rate: 0.02, verification_error: 0",
    ] {
        let file = dir.join("bad-run.yaml");
        std::fs::write(
            &file,
            format!(
                "game: {root}/games/chsh.yaml\nrounds: 1000\nwins: 845\nfinite_size: {{rounds: 1000000, {bad}}}\n"
            ),
        )
        .unwrap();
        let out = bellgap(&["review", file.to_str().unwrap(), "--json"]);
        assert_eq!(out.status.code(), Some(2), "{bad}");
        assert!(json_of(&out)["error"]["message"]
            .as_str()
            .unwrap()
            .contains("finite_size"));
    }
    // A game other than CHSH with a key section: the entropy hierarchy and Fano's bound.
    let depot_run = dir.join("depot-run.yaml");
    std::fs::write(
        &depot_run,
        format!(
            "game: {root}/examples/data/depot-game.yaml\nrounds: 200000\nwins: 172000\nkey: {{qber: 0.01, player: north, question: 0, nodes: 4}}\n"
        ),
    )
    .unwrap();
    let out = bellgap(&["review", depot_run.to_str().unwrap(), "--markdown", "-o"]);
    assert_eq!(out.status.code(), Some(2), "-o needs a file");
    let md = dir.join("depot.md");
    let out = bellgap(&[
        "review",
        depot_run.to_str().unwrap(),
        "--markdown",
        "-o",
        md.to_str().unwrap(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&md).unwrap();
    assert!(
        text.contains("Key figures \\(entropy hierarchy\\)"),
        "{text}"
    );
    let out = bellgap(&["review", depot_run.to_str().unwrap(), "--json"]);
    let j = json_of(&out);
    let k = &j["entropy_key"];
    let h = k["rate"]["conditional_entropy"].as_f64().unwrap();
    // Fano at Q = 0.01 with binary answers: h(0.01) = 0.0807931 (computed here).
    let fano = k["rate"]["error_correction"].as_f64().unwrap();
    assert!((fano - 0.080_793_1).abs() < 1e-6, "{fano}");
    assert!((k["rate"]["key_rate"].as_f64().unwrap() - (h - fano).max(0.0)).abs() < 1e-15);
    // The lower confidence score is above the classical value 4/5, so the bound is positive.
    assert!(k["score"].as_f64().unwrap() > 0.8 && h > 0.0);
}

/// The worked example of docs/finite-size-statement.md: fixed inputs, no hierarchy.
fn worked_example(rounds: u64, testing: f64) -> (SpotChecking, CrossoverTradeoff) {
    let p = SpotChecking {
        rounds,
        testing,
        threshold: 0.84,
        score_range: (0.0, 1.0),
        lowest_score: 0.0,
        output_dimension: 4.0,
    };
    let f = crossover(&p, -4.0, 5.5, 0.86).unwrap();
    (p, f)
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * (1.0 + b.abs())
}

#[test]
fn the_statements_reproduce_their_formulas() {
    // Every constant and term by plain arithmetic, as docs/finite-size-statement.md states
    // them (both statements from memory; the document lists what a reviewer should check).
    let n = 1e9;
    let (p, f) = worked_example(1_000_000_000, 0.01);
    let (keep, gamma, d) = (0.99, 0.01, 4.0f64);
    let g = |s: f64| keep * (-4.0 + 5.5 * s);
    assert!(close(f.intercept, -3.96, 1e-15) && close(f.slope, 5.445, 1e-15));
    assert!(close(f.max, g(1.0), 1e-15));
    assert!(close(f.min, g(1.0) - 5.445 / gamma, 1e-15));
    assert!(close(f.min_achievable, g(0.0), 1e-15));
    assert!(close(f.variance, 5.445f64.powi(2) / gamma, 1e-15));
    let s = SecurityParameters::default();
    let run = accumulate(&p, &f, &s, Disclosure::default()).unwrap();
    let h = g(0.84);
    assert!(close(run.first_order, n * h, 1e-15));
    // Statement A at the α the code chose.
    let t = &run.second_order;
    let al = t.alpha;
    let r = (al - 1.0) / (2.0 - al);
    let ln2 = std::f64::consts::LN_2;
    let v = (f.variance + 2.0).sqrt() + (2.0 * d * d + 1.0).log2();
    let spread = 2.0 * d.log2() + f.max - f.min_achievable;
    let k = (2.0 - al).powi(3) / (6.0 * (3.0 - 2.0 * al).powi(3) * ln2)
        * 2f64.powf(r * spread)
        * (2f64.powf(spread) + std::f64::consts::E.powi(2))
            .ln()
            .powi(3);
    let g_eps = -(1.0 - (1.0 - 1e-18f64).sqrt()).log2();
    // (1 − √(1 − ε²) underflows for ε = 1e-9 in this naive form; the code's stable form gives
    // log₂(2/ε²) to 1e-9: compare with that.)
    let g_eps = if g_eps.is_finite() {
        g_eps
    } else {
        (2.0 / 1e-18f64).log2()
    };
    assert!(close(t.v, v, 1e-14), "{} {v}", t.v);
    assert!(close(t.k_alpha, k, 1e-10), "{} {k}", t.k_alpha);
    assert!(close(t.variance_term, n * r * ln2 / 2.0 * v * v, 1e-12));
    assert!(close(
        t.error_term,
        (g_eps + al * 1e9f64.log2()) / (al - 1.0),
        1e-9
    ));
    assert!(close(t.third_order_term, n * r * r * k, 1e-10));
    let penalty = t.variance_term + t.error_term + t.third_order_term;
    // The α chosen is the best on a fine grid (to 1e-7 of the penalty).
    for j in 0..4000 {
        let a = 1.0 + (-27.6 + 26.9 * j as f64 / 4000.0).exp();
        let r = (a - 1.0) / (2.0 - a);
        let k = (2.0 - a).powi(3) / (6.0 * (3.0 - 2.0 * a).powi(3) * ln2)
            * 2f64.powf(r * spread)
            * (2f64.powf(spread) + std::f64::consts::E.powi(2))
                .ln()
                .powi(3);
        let other =
            n * r * ln2 / 2.0 * v * v + (g_eps + a * 1e9f64.log2()) / (a - 1.0) + n * r * r * k;
        assert!(
            penalty <= other * (1.0 + 1e-7),
            "α = {a}: {other} < {penalty}"
        );
    }
    // The golden values of the document.
    assert!(
        (run.by_improved_second_order - 592_697_932.0).abs() < 2.0,
        "{}",
        run.by_improved_second_order
    );
    // Statement B.
    let vb = 2.0
        * ((1.0 + 2.0 * d).log2() + (543.015f64).ceil())
        * (1.0 - 2.0 * (1e-18f64).log2()).sqrt();
    assert!(close(run.original.v, vb, 1e-14), "{} {vb}", run.original.v);
    assert!(close(run.original.correction, vb * n.sqrt(), 1e-14));
    assert!(
        (run.by_original - 233_779_695.0).abs() < 2.0,
        "{}",
        run.by_original
    );
    // The default certifies the smaller, here statement B; less 2·log₂(1/ε_ext) for extraction.
    assert_eq!(run.certified_by, Statement::Original);
    assert_eq!(run.smooth_min_entropy, run.by_original);
    assert_eq!(
        run.output_bits,
        (run.by_original - 2.0 * 1e9f64.log2()).floor()
    );
    // Asked for statement A, it certifies A's bound.
    let a_only = SecurityParameters {
        statement: Statement::ImprovedSecondOrder,
        ..s
    };
    let run_a = accumulate(&p, &f, &a_only, Disclosure::default()).unwrap();
    assert_eq!(run_a.smooth_min_entropy, run_a.by_improved_second_order);
    // Key: the verification hash and the leakage are subtracted as stated.
    let key = accumulate(
        &p,
        &f,
        &s,
        Disclosure {
            test_answers: 1000.0,
            error_correction: 5e7,
            verification_hash: 30.0,
        },
    )
    .unwrap();
    assert_eq!(
        key.output_bits,
        (run.by_original - 1000.0 - 5e7 - 30.0 - 2.0 * 1e9f64.log2()).floor()
    );
}

#[test]
fn the_figures_are_monotone_and_never_above_the_register() {
    let s = SecurityParameters::default();
    // In n: more rounds, more bits (each statement's correction grows slower than n·h).
    let mut last = 0.0;
    for e in 5..=12 {
        let (p, f) = worked_example(10u64.pow(e), 0.01);
        let run = accumulate(&p, &f, &s, Disclosure::default()).unwrap();
        assert!(run.output_bits >= last, "n = 10^{e}");
        last = run.output_bits;
        assert!(run.smooth_min_entropy <= p.rounds as f64 * 2.0);
    }
    // In ε: a looser smoothing or pass floor certifies more, under either statement.
    for statement in [
        Statement::Original,
        Statement::ImprovedSecondOrder,
        Statement::Smaller,
    ] {
        let (p, f) = worked_example(1_000_000_000, 0.01);
        let mut last = f64::NEG_INFINITY;
        for eps in [1e-15, 1e-12, 1e-9, 1e-6, 1e-3] {
            let sec = SecurityParameters {
                smoothing: eps,
                pass_floor: eps,
                extraction: eps,
                statement,
            };
            let run = accumulate(&p, &f, &sec, Disclosure::default()).unwrap();
            assert!(run.smooth_min_entropy >= last, "{statement:?} ε = {eps}");
            last = run.smooth_min_entropy;
        }
    }
    // In γ, for the same line: both statements' corrections shrink as more rounds are tested
    // (Var(f) and ‖∇f‖∞ scale as 1/γ), while the first-order term (1 − γ)·n·h shrinks too.
    let (mut last_penalty, mut last_correction, mut last_first) =
        (f64::INFINITY, f64::INFINITY, f64::INFINITY);
    for gamma in [0.001, 0.01, 0.05, 0.2] {
        let (p, f) = worked_example(1_000_000_000, gamma);
        let run = accumulate(&p, &f, &s, Disclosure::default()).unwrap();
        let t = &run.second_order;
        let penalty = t.variance_term + t.error_term + t.third_order_term;
        assert!(penalty <= last_penalty && run.original.correction <= last_correction);
        assert!(run.first_order <= last_first);
        (last_penalty, last_correction, last_first) =
            (penalty, run.original.correction, run.first_order);
    }
    // Never above n·log₂ d_O, even for a line claiming more than the register holds.
    let p = SpotChecking {
        rounds: 1_000_000_000_000,
        testing: 0.5,
        threshold: 0.84,
        score_range: (0.0, 1.0),
        lowest_score: 0.0,
        output_dimension: 4.0,
    };
    let f = crossover(&p, 9.0, 0.0, 1.0).unwrap();
    let run = accumulate(&p, &f, &s, Disclosure::default()).unwrap();
    assert!(run.smooth_min_entropy <= 2e12, "{}", run.smooth_min_entropy);
}
