//! NPA upper bounds against published quantum values; the source of each is named beside it.

use bellgap::bounds::classical::search;
use bellgap::bounds::nosignal::no_signalling_value;
use bellgap::bounds::quantum::npa::{npa_bound, Level};
use bellgap::formats::game::{families, Game, GameSpec};
use bellgap::Scenario;

fn compile(spec: &GameSpec) -> Scenario {
    Game::from_spec(spec, "test").unwrap().scenario
}

fn npa(s: &Scenario, level: &str) -> bellgap::bounds::quantum::npa::NpaBound {
    npa_bound(
        s,
        &bellgap::NpaOptions::at(Level::parse(level).unwrap().clone()),
    )
    .unwrap()
}

/// The raw bound is close to the expected value, and the verified bound is an upper bound at
/// most 1e-6 above the raw one.
fn assert_bound(b: &bellgap::bounds::quantum::npa::NpaBound, want: f64, tol: f64, what: &str) {
    assert!(
        (b.quantum_upper - want).abs() < tol,
        "{what}: got {}, expected {want}",
        b.quantum_upper
    );
    assert!(
        b.verified_upper >= b.quantum_upper - 1e-9,
        "{what}: verified {} below raw {}",
        b.verified_upper,
        b.quantum_upper
    );
    assert!(
        b.verified_upper <= b.quantum_upper + 1e-6,
        "{what}: verified {} too loose",
        b.verified_upper
    );
}

#[test]
fn chsh_level_1_is_tsirelson() {
    // cos²(π/8): Cirel'son 1980 (Lett. Math. Phys. 4, 93).
    let b = npa(&compile(&families::chsh()), "1");
    assert_bound(&b, (std::f64::consts::PI / 8.0).cos().powi(2), 1e-7, "CHSH");
    // The correlator form: 2√2.
    let b = npa(&compile(&families::chsh_expression()), "1");
    assert_bound(&b, 2.0 * 2f64.sqrt(), 1e-6, "CHSH expression");
}

#[test]
fn xor_games_are_exact_at_level_1() {
    // Odd cycle: cos²(π/4n), Cleve–Høyer–Toner–Watrous 2004 (quant-ph/0404076); XOR games are
    // exact at level 1 (Tsirelson 1987; CHTW 2004).
    for n in [3usize, 5] {
        let b = npa(&compile(&families::odd_cycle(n).unwrap()), "1");
        let want = (std::f64::consts::PI / (4.0 * n as f64)).cos().powi(2);
        assert_bound(&b, want, 1e-6, &format!("odd cycle {n}"));
    }
    // Chained Bell: 2m cos(π/2m), Braunstein–Caves 1990 (Ann. Phys. 202, 22); Wehner 2006.
    let b = npa(&compile(&families::chained_bell(3).unwrap()), "1");
    assert_bound(
        &b,
        6.0 * (std::f64::consts::PI / 6.0).cos(),
        1e-6,
        "chained m=3",
    );
}

#[test]
fn cglmp_3_at_the_joint_level() {
    // 1 + √(11/3) ≈ 2.914854: Acín–Durt–Gisin–Latorre 2002 (PRA 65, 052325); tight at 1+AB
    // (Navascués–Pironio–Acín 2008, NJP 10, 073013).
    let b = npa(&compile(&families::cglmp(3).unwrap()), "1+joint");
    assert_bound(&b, 1.0 + (11.0f64 / 3.0).sqrt(), 1e-6, "CGLMP d=3");
}

#[test]
fn i3322_decreases_with_the_level() {
    // Level 1: 0.375; 1+AB: 0.251471; level 2: 0.2509397 (Navascués–Pironio–Acín 2008, NJP 10,
    // 073013; recomputed). All above the qubit value 0.25 (Collins–Gisin 2004).
    let s = compile(&families::i3322());
    let l1 = npa(&s, "1");
    let joint = npa(&s, "1+joint");
    let l2 = npa(&s, "2");
    assert_bound(&l1, 0.375, 1e-6, "I3322 level 1");
    assert_bound(&joint, 0.251471, 2e-6, "I3322 1+joint");
    assert_bound(&l2, 0.2509397, 2e-6, "I3322 level 2");
    assert!(
        l1.verified_upper >= joint.quantum_upper && joint.quantum_upper >= l2.quantum_upper - 1e-8
    );
}

#[test]
fn ghz_and_magic_square_reach_one() {
    // GHZ game: quantum value 1 (Mermin 1990, Am. J. Phys. 58, 731).
    let b = npa(&compile(&families::ghz(3).unwrap()), "1+joint");
    assert_bound(&b, 1.0, 1e-6, "GHZ");
    // Magic square: quantum value 1 (Aravind 2002; Brassard–Broadbent–Tapp 2005).
    let b = npa(&compile(&families::magic_square()), "1");
    assert_bound(&b, 1.0, 1e-6, "magic square");
}

#[test]
fn npa_lies_between_classical_and_no_signalling() {
    for spec in [
        families::chsh(),
        families::i3322(),
        families::cglmp(3).unwrap(),
        families::mermin(),
    ] {
        let s = compile(&spec);
        let c = search(&s, None).value;
        let ns = no_signalling_value(&s, &bellgap::Limits::default())
            .unwrap()
            .value;
        let b = npa(&s, "1+joint");
        assert!(
            c <= b.quantum_upper + 1e-6 && b.quantum_upper <= ns + 1e-6,
            "{:?}: {c} {} {ns}",
            spec.name,
            b.quantum_upper
        );
    }
}

#[test]
fn i3322_level_3() {
    // ≈ 0.250876 (Navascués–Pironio–Acín 2008; recomputed), above the best known quantum value
    // 0.250875384514 (Pál–Vértesi 2010, PRA 82, 022116; digits from memory).
    let b = npa(&compile(&families::i3322()), "3");
    assert_bound(&b, 0.250876, 2e-6, "I3322 level 3");
    assert!(b.verified_upper >= 0.250875384514);
}

#[test]
fn i3322_level_4_meets_the_best_known_strategy() {
    // Level 4 (244×244, 4491 moments) is within 1e-8 of the best known quantum value
    // 0.250875384514 (Pál–Vértesi 2010, PRA 82, 022116; digits from memory), which it must not
    // undercut. Solved reduced by its 8 symmetries modulo no-signalling (a few seconds; about
    // a minute in full).
    let b = npa(&compile(&families::i3322()), "4");
    assert_eq!(b.symmetry.as_ref().map(|u| u.order), Some(8));
    assert!(b.verified_upper >= 0.250875384514, "{}", b.verified_upper);
    assert!(
        (b.quantum_upper - 0.250875384514).abs() < 1e-8,
        "{}",
        b.quantum_upper
    );
}

#[test]
fn a_relaxation_that_would_not_fit_in_memory_is_refused_with_an_estimate() {
    // I3322 level 6 (1540×1540): the interior-point method's Schur complement would not fit.
    let err = npa_bound(
        &compile(&families::i3322()),
        &bellgap::NpaOptions {
            backend: bellgap::Backend::MomentIpm,
            // Reduced by its symmetries the level fits (see `npa_symmetry`); in full it does not.
            symmetry: bellgap::bounds::quantum::symmetric::SymmetryChoice::Off,
            ..bellgap::NpaOptions::at(Level::Length(6))
        },
    )
    .unwrap_err();
    assert!(matches!(err, bellgap::Error::TooLarge { .. }), "{err}");
    assert!(err.to_string().contains("GiB"), "{err}");
    // `auto` would take the first-order method there, whose estimate (about half an hour for
    // its planned iterations) is within the limits: it is not refused, and says so in advance.
    let r =
        bellgap::bounds::quantum::npa::relaxation(&compile(&families::i3322()), &Level::Length(6))
            .unwrap();
    let est = bellgap::bounds::quantum::npa::estimate_for(&r, bellgap::Backend::Auto);
    assert_eq!(est.solver, bellgap::Backend::FirstOrder);
    assert!(
        est.seconds > 600.0 && est.seconds < 3600.0,
        "{}",
        est.seconds
    );
}

#[test]
fn a_moment_matrix_too_large_to_build_is_refused_before_allocation() {
    // Magic square played twice: level 2 would need tens of thousands of generating words.
    let ms = compile(&families::magic_square());
    let twice =
        compile(&bellgap::formats::game::product::parallel_repetition(&ms, "ms", 2).unwrap());
    let err = npa_bound(&twice, &bellgap::NpaOptions::at(Level::Length(2).clone())).unwrap_err();
    assert!(matches!(err, bellgap::Error::TooLarge { .. }), "{err}");
    let text = err.to_string();
    assert!(
        text.contains("moment matrix") || text.contains("generating words"),
        "{err}"
    );
}

fn classical_of(s: &Scenario) -> f64 {
    bellgap::bounds::classical::classical_value(s, &Default::default(), None)
        .unwrap()
        .value
}

#[test]
fn the_added_families_meet_their_published_values() {
    // Mermin with n players (Mermin 1990, PRL 65, 1838): local bound 2^(n/2) for even n and
    // 2^((n−1)/2) for odd n, quantum value 2^(n−1) (from memory; the local bounds recomputed by
    // the exact search here, the quantum value by NPA level 2).
    for (n, local) in [(4, 4.0), (5, 4.0)] {
        let s = compile(&families::mermin_players(n).unwrap());
        let c = classical_of(&s);
        assert!((c - local).abs() < 1e-9, "Mermin-{n}: classical {c}");
        if n == 4 {
            assert_bound(&npa(&s, "2"), 8.0, 1e-6, "Mermin-4");
        }
    }
    // Svetlichny (Svetlichny 1987, PRD 35, 3066): 4 without genuine tripartite nonlocality,
    // 4√2 for quantum players (Collins et al. 2002, PRL 88, 170405; from memory).
    let s = compile(&families::svetlichny(3).unwrap());
    assert!((classical_of(&s) - 4.0).abs() < 1e-9);
    assert_bound(&npa(&s, "2"), 4.0 * 2f64.sqrt(), 1e-6, "Svetlichny-3");
    // Tilted CHSH (Acín, Massar & Pironio 2012, PRL 108, 100402; from memory): local bound
    // 2α + β, quantum value √((1 + α²)(4 + β²)); α = 1, β = 0.5 and α = 1.2, β = 0.3.
    for (alpha, beta) in [(1.0f64, 0.5f64), (1.2, 0.3)] {
        let s = compile(&families::tilted_chsh(alpha, beta).unwrap());
        let c = classical_of(&s);
        assert!(
            (c - (2.0 * alpha + beta)).abs() < 1e-9,
            "tilted: classical {c}"
        );
        let want = ((1.0 + alpha * alpha) * (4.0 + beta * beta)).sqrt();
        assert_bound(&npa(&s, "3"), want, 1e-5, "tilted CHSH");
    }
    // CHSH modulo d: d = 2 is the CHSH game; d = 3 has classical value 2/3 (Bavarian & Shor
    // 2015, ITCS; from memory) and a quantum value above it.
    let s = compile(&families::chsh_mod(2).unwrap());
    assert!((classical_of(&s) - 0.75).abs() < 1e-12);
    assert_bound(&npa(&s, "1"), 0.5 + 8f64.sqrt() / 8.0, 1e-6, "CHSH mod 2");
    let s = compile(&families::chsh_mod(3).unwrap());
    assert!((classical_of(&s) - 2.0 / 3.0).abs() < 1e-12);
    assert!(npa(&s, "1+joint").verified_upper > 0.7);
    // Parameters out of range are refused.
    assert!(families::svetlichny(2).is_err() && families::mermin_players(11).is_err());
    assert!(families::chsh_mod(1).is_err() && families::tilted_chsh(f64::NAN, 0.0).is_err());
}
