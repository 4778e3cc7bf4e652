//! Bounds that are theorems: NPA certificates re-proven in exact rational arithmetic, against
//! published values (the source beside each), and tampered certificates refused.

use bellgap::bounds::quantum::npa::{self, Level, NpaOptions};
use bellgap::formats::game::{families, CompileOptions, Game};
use bellgap::Limits;

fn game(name: &str) -> Game {
    Game::from_file(
        &format!("{}/games/{name}.yaml", env!("CARGO_MANIFEST_DIR")),
        CompileOptions::default(),
    )
    .unwrap()
}

/// The exact bound of a fresh certificate at `level`, with the floating verified bound.
fn proven(g: &Game, level: &str) -> (f64, f64, npa::ExactVerification) {
    let bound = npa::npa_bound(&g.scenario, &NpaOptions::at(Level::parse(level).unwrap())).unwrap();
    let cert = npa::certificate(&g.name, &g.scenario, &bound).unwrap();
    let exact = npa::verify_exact(&g.scenario, &cert, &Limits::default()).unwrap();
    (exact.exact.rounded_up, bound.verified_upper, exact)
}

#[test]
fn published_bounds_are_proven_exactly_within_1e_8_of_the_floating_ones() {
    let cglmp = |d: usize| Game::from_spec(&families::cglmp(d).unwrap(), "cglmp").unwrap();
    // (game, level, the true quantum value or a published lower bound on it)
    let cases: Vec<(Game, &str, f64)> = vec![
        // Tsirelson (1980): cos²(π/8).
        (
            game("chsh"),
            "2",
            (std::f64::consts::PI / 8.0).cos().powi(2),
        ),
        // CGLMP, Collins et al., PRL 88, 040404 (2002); the maximal violations 2.9149, 2.9727,
        // 3.0157 for d = 3, 4, 5 (Navascués, Pironio, Acín 2008; from memory).
        (game("cglmp-3"), "1+joint", 2.914_854),
        (cglmp(4), "1+joint", 2.972_698),
        (cglmp(5), "1+joint", 3.015_710),
        // The magic square is won with certainty by quantum players (Mermin 1990; Peres 1990).
        (game("magic-square"), "1+joint", 1.0),
        // I3322: 0.25087538 (Pál & Vértesi, PRA 82, 022116 (2010); from memory).
        (game("i3322"), "3", 0.250_875_3),
        (game("i3322"), "4", 0.250_875_3),
    ];
    for (g, level, truth) in cases {
        let (exact, float, e) = proven(&g, level);
        assert!(
            exact >= truth - 1e-12,
            "{} {level}: {exact} below {truth}",
            g.name
        );
        assert!(
            (exact - float).abs() < 1e-8,
            "{} {level}: exact {exact} vs {float}",
            g.name
        );
        // The fraction is the exact bound; its decimal is rounded up.
        let (num, den) = e.exact.fraction.split_once('/').unwrap();
        assert!(!num.is_empty() && !den.is_empty());
    }
}

#[test]
fn tampered_or_foreign_certificates_are_refused() {
    let g = game("chsh");
    let bound = npa::npa_bound(&g.scenario, &NpaOptions::at(Level::Length(2))).unwrap();
    let cert = npa::certificate(&g.name, &g.scenario, &bound).unwrap();
    let limits = Limits::default();
    // One dual entry changed.
    let mut tampered = cert.clone();
    let k = tampered.dual.len() - 1;
    tampered.dual[k] += 0.01;
    assert!(npa::verify_exact(&g.scenario, &tampered, &limits).is_err());
    // A claim below the true value (Tsirelson's cos²(π/8) = 0.853553390593…) never verifies.
    let mut greedy = cert.clone();
    greedy.verified_upper = 0.853_553_390_5;
    assert!(npa::verify_exact(&g.scenario, &greedy, &limits).is_err());
    // Another game's table.
    let other = game("odd-cycle-3");
    assert!(npa::verify_exact(&other.scenario, &cert, &limits).is_err());
    // A dual vector one entry short.
    let mut short = cert.clone();
    short.dual.pop();
    assert!(npa::verify_exact(&g.scenario, &short, &limits).is_err());
    // I3322 below its value: 0.2508753 is under the true 0.25087538.
    let i = game("i3322");
    let b = npa::npa_bound(&i.scenario, &NpaOptions::at(Level::Length(3))).unwrap();
    let mut low = npa::certificate(&i.name, &i.scenario, &b).unwrap();
    low.verified_upper = 0.250_875_3;
    assert!(npa::verify_exact(&i.scenario, &low, &limits).is_err());
}

#[test]
fn a_plain_certificate_holds_the_table_the_words_and_a_claim_just_above_the_exact_bound() {
    let g = game("chsh");
    let bound = npa::npa_bound(&g.scenario, &NpaOptions::at(Level::Length(2))).unwrap();
    let plain = npa::plain_certificate(&g.name, &g.scenario, &bound).unwrap();
    let text = plain.to_text();
    assert!(text.starts_with("bellgap plain certificate 1\n") && text.ends_with("end\n"));
    // 16 table entries, each w(q)·V(a|q) ∈ {0, 1/4} for CHSH; 13 generating words at level 2.
    assert_eq!(text.lines().filter(|l| l.starts_with("c ")).count(), 16);
    assert!(text
        .lines()
        .filter(|l| l.starts_with("c "))
        .all(|l| l == "c 0" || l == "c 1/4"));
    assert_eq!(text.lines().filter(|l| l.starts_with('w')).count(), 14); // `words 13` + 13
    let cert = npa::certificate(&g.name, &g.scenario, &bound).unwrap();
    let exact = npa::verify_exact(&g.scenario, &cert, &Limits::default()).unwrap();
    let (n, d) = plain.claim.split_once('/').unwrap();
    let claim = n.parse::<f64>().unwrap() / d.parse::<f64>().unwrap();
    assert!(
        claim >= exact.exact.rounded_up && claim < exact.exact.rounded_up + 1e-11,
        "{claim}"
    );
    // The claim never undercuts Tsirelson's bound.
    assert!(claim > (std::f64::consts::PI / 8.0).cos().powi(2));
}

#[test]
fn an_sdpa_export_reads_back_and_an_external_dual_is_verified_on_our_relaxation() {
    use bellgap::optim::sdpa::SdpaProblem;
    let g = game("i3322");
    let level = Level::Length(2);
    let (text, words) = npa::sdpa_export(&g.scenario, &level, &Limits::default()).unwrap();
    // Read back by our own parser: the same problem as exported.
    let r = npa::relaxation(&g.scenario, &level).unwrap();
    let exported = SdpaProblem::from_problem(&r.problem);
    assert_eq!(SdpaProblem::parse(&text).unwrap(), exported);
    assert_eq!(words.lines().count(), r.matrix.moments.len() + 1);
    // c = −b, and the identity entries are F_0 = −1.
    assert!(exported
        .c
        .iter()
        .zip(&r.problem.objective)
        .all(|(c, b)| *c == -b));
    // A dual in SDPA's output format (here our own solver's, written as an external solver
    // would) is verified on our relaxation: the same bound as our own certificate's.
    let bound = npa::npa_bound(
        &g.scenario,
        &NpaOptions {
            symmetry: bellgap::bounds::quantum::symmetric::SymmetryChoice::Off,
            ..NpaOptions::at(level.clone())
        },
    )
    .unwrap();
    let cert = npa::certificate(&g.name, &g.scenario, &bound).unwrap();
    let n = r.matrix.size();
    // The dual matrix from the triangle (off-diagonal entries carry √2 in our layout).
    let mut z = vec![vec![0.0; n]; n];
    let positions = (0..n).flat_map(|col| (0..=col).map(move |row| (row, col)));
    for ((row, col), &v) in positions.zip(&cert.dual) {
        let v = if row == col {
            v
        } else {
            v / std::f64::consts::SQRT_2
        };
        z[row][col] = v;
        z[col][row] = v;
    }
    let rows: Vec<String> = z
        .iter()
        .map(|r| {
            format!(
                "{{{}}}",
                r.iter()
                    .map(|v| format!("{v:e}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        })
        .collect();
    let garbage: Vec<String> = (0..n)
        .map(|_| format!("{{{}}}", vec!["1.0"; n].join(", ")))
        .collect();
    let output = format!(
        "objValPrimal = 0.25\nxVec = \n{{0}}\nxMat = \n{{\n{{ {} }}\n}}\nyMat = \n{{\n{{ {} }}\n}}\n",
        garbage.join(", "),
        rows.join(", ")
    );
    let imported =
        npa::sdpa_import(&g.scenario, &level, &output, true, &Limits::default()).unwrap();
    assert_eq!(imported.bound.matrix, "yMat");
    assert!(
        (imported.bound.verified_upper - bound.verified_upper).abs() < 1e-9,
        "{imported:?}"
    );
    let exact = imported.bound.exact.unwrap().rounded_up;
    // I3322 at level 2 is above the true value 0.2508753 (Pál & Vértesi 2010, from memory).
    assert!(exact >= 0.250_875_3 && (exact - bound.verified_upper).abs() < 1e-8);
    // A solution of another shape is refused.
    assert!(npa::sdpa_import(
        &g.scenario,
        &Level::Length(3),
        &output,
        false,
        &Limits::default()
    )
    .is_err());
}

#[test]
fn a_guessing_probability_is_proven_exactly_and_its_sdp_exported_and_reimported() {
    use bellgap::protocol::randomness::{self, Target};
    let g = game("chsh");
    let s = &g.scenario;
    let target = Target {
        parts: vec![(0, 0)],
    };
    // At CHSH value S = 8·0.85 − 4 = 2.8 the guessing probability of one answer is
    // 1/2 + 1/2·√(2 − S²/4) = 0.6 (Pironio et al., Nature 464, 1021 (2010)).
    let r = randomness::guessing_probability(s, &target, 0.85, &Level::Length(2)).unwrap();
    let exact = randomness::prove_exactly(s, &target, &r).unwrap();
    assert!(exact.bound.rounded_up >= 0.6 - 1e-12, "{exact:?}");
    assert!(
        (exact.bound.rounded_up - r.guessing_probability).abs() < 1e-8,
        "{exact:?} against {}",
        r.guessing_probability
    );
    assert!(exact.min_entropy <= -(0.6f64.log2()) + 1e-12 && exact.min_entropy > 0.73);
    // A dual entry changed proves less (or nothing).
    let mut tampered = r.clone();
    tampered.dual[3] += 0.25;
    let worse = randomness::prove_exactly(s, &target, &tampered).unwrap();
    assert!(worse.bound.rounded_up > exact.bound.rounded_up + 1e-3);
    tampered.dual.pop();
    assert!(randomness::prove_exactly(s, &target, &tampered).is_err());

    // The SDP written in SDPA format reads back to the same problem (two 13×13 moment matrices,
    // one per guess, and a diagonal block for the score and the normalisation).
    let (text, words) = randomness::sdpa_export(s, &target, 0.85, &Level::Length(2)).unwrap();
    let problem = randomness::guessing_sdp(s, &target, 0.85, &Level::Length(2)).unwrap();
    let read = bellgap::optim::sdpa::SdpaProblem::parse(&text).unwrap();
    assert_eq!(
        read,
        bellgap::optim::sdpa::SdpaProblem::from_problem(&problem)
    );
    assert_eq!(read.blocks, vec![13, 13, -3]);
    assert_eq!(words.lines().count(), problem.variables + 1);
    // Our own dual, written as an external solver's output, proves the same bound on the SDP
    // rebuilt from the options, and exactly.
    let solution = bellgap::optim::sdpa::solution_text(&problem, &r.dual);
    let imported =
        randomness::sdpa_import(s, &target, 0.85, &Level::Length(2), &solution, true).unwrap();
    assert!(
        (imported.bound.verified_upper - r.guessing_probability).abs() < 1e-9,
        "{imported:?}"
    );
    assert_eq!(imported.guessing_probability, imported.bound.verified_upper);
    assert!(imported.min_entropy > 0.73 && imported.min_entropy <= -(0.6f64.log2()) + 1e-7);
    let e = imported.bound.exact.unwrap();
    assert!(e.rounded_up >= 0.6 - 1e-12 && e.rounded_up < 0.6 + 1e-7);
    // At another level the shapes differ and the solution is refused.
    assert!(randomness::sdpa_import(s, &target, 0.85, &Level::Joint, &solution, false).is_err());
}
