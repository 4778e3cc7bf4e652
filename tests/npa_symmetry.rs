//! The NPA relaxation reduced by the game's symmetries against the full one, both ways, on
//! every bundled game that has symmetries, with the certificate of the reduced solve checked
//! on the full problem.

use bellgap::bounds::quantum::npa::{certificate, npa_bound, verify, Level, NpaBound};
use bellgap::bounds::quantum::symmetric::SymmetryChoice;
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::{Limits, NpaOptions, Scenario};

fn load(path: &str) -> Game {
    Game::from_file(path, CompileOptions::default()).unwrap()
}

fn solve(s: &Scenario, level: &str, symmetry: SymmetryChoice) -> NpaBound {
    npa_bound(
        s,
        &NpaOptions {
            symmetry,
            ..NpaOptions::at(Level::parse(level).unwrap())
        },
    )
    .unwrap()
}

/// Both ways agree within 1e-7 (raw and verified), the reduced one really is reduced, and its
/// certificate, in the full problem's format, proves the bound it claims.
fn agree(game: &Game, level: &str) -> NpaBound {
    let s = &game.scenario;
    let full = solve(s, level, SymmetryChoice::Off);
    let reduced = solve(s, level, SymmetryChoice::Auto);
    let what = format!("{} at level {level}", game.name);
    assert!(full.symmetry.is_none(), "{what}");
    let used = reduced
        .symmetry
        .as_ref()
        .unwrap_or_else(|| panic!("{what}: no reduction"));
    assert!(
        used.order >= 2 && used.moments < used.full_moments,
        "{what}"
    );
    assert_eq!(used.full_moments, full.moments, "{what}");
    for (a, b, name) in [
        (reduced.quantum_upper, full.quantum_upper, "raw"),
        (reduced.verified_upper, full.verified_upper, "verified"),
    ] {
        assert!(
            (a - b).abs() <= 1e-7 * (1.0 + b.abs()),
            "{what}: {name} {a} reduced against {b} in full"
        );
    }
    assert!(reduced.verified_upper >= reduced.primal - 1e-9, "{what}");
    let cert = certificate(&game.name, s, &reduced).unwrap();
    assert_eq!(cert.matrix_size, full.matrix_size, "{what}");
    let checked = verify(s, &cert, &Limits::default()).unwrap();
    assert!(checked.matches_claim, "{what}");
    assert!(
        (checked.verified_upper - reduced.verified_upper).abs() <= 1e-12,
        "{what}"
    );
    reduced
}

#[test]
fn every_symmetric_bundled_game_gives_the_same_bound_reduced() {
    for (path, levels) in [
        ("games/chsh.yaml", &["1", "1+joint", "2"][..]),
        ("games/chsh-expression.yaml", &["1", "2"][..]),
        ("games/xor-chsh.yaml", &["1+joint"][..]),
        ("games/cglmp-3.yaml", &["1+joint", "2"][..]),
        ("games/chained-3.yaml", &["1+joint", "2"][..]),
        ("games/odd-cycle-3.yaml", &["1+joint", "2"][..]),
        ("games/ghz-3.yaml", &["1+joint", "2"][..]),
        ("games/mermin.yaml", &["1+joint", "2"][..]),
        ("games/magic-square.yaml", &["1+joint"][..]),
    ] {
        let game = load(path);
        for level in levels {
            agree(&game, level);
        }
    }
}

#[test]
fn a_game_without_symmetry_is_solved_in_full() {
    // Scores with no pattern: no relabelling keeps them, even modulo no-signalling.
    let yaml = "name: lopsided\nplayers:\n  - {name: alice, question: x, answer: a, questions: 2, answers: 2}\n  - {name: bob, question: y, answer: b, questions: 2, answers: 2}\nbell:\n  terms:\n    - {coefficient: 0.9, event: {alice: \"0|0\", bob: \"0|0\"}}\n    - {coefficient: 0.3, event: {alice: \"0|0\", bob: \"1|1\"}}\n    - {coefficient: 0.7, event: {alice: \"1|1\", bob: \"0|0\"}}\n    - {coefficient: -0.2, event: {alice: \"1|1\", bob: \"1|1\"}}\n    - {coefficient: 0.45, event: {alice: \"0|1\"}}\n";
    let game = Game::from_yaml(yaml, "lopsided", CompileOptions::default()).unwrap();
    let b = solve(&game.scenario, "2", SymmetryChoice::Auto);
    assert!(b.symmetry.is_none());
}

#[test]
fn i3322_is_reduced_by_its_symmetries_modulo_no_signalling() {
    // In Collins–Gisin form the table of I3322 has no symmetry, but its value on no-signalling
    // behaviours is kept by swapping the players and flipping every answer, and by a
    // relabelling of questions: 8 relabellings, which act on correlator words by signed
    // permutations (see `bounds::quantum::flips`).
    let game = load("games/i3322.yaml");
    for level in ["2", "3"] {
        let used = agree(&game, level).symmetry.unwrap();
        assert_eq!(used.order, 8, "level {level}");
        assert!(used.blocks.len() >= 2, "level {level}");
    }
}

#[test]
fn a_level_a_symmetry_does_not_preserve_uses_the_rest_of_the_group() {
    // Pattern `1 A AB` holds Alice's pairs of operators but not Bob's: swapping the players
    // leaves the level's words, so only the relabellings within each player may be used.
    let game = load("games/chsh.yaml");
    let reduced = agree(&game, "1 A B AB AA");
    let used = reduced.symmetry.unwrap();
    assert!(used.order < 16, "order {}", used.order);
}

#[test]
fn the_reduced_problem_splits_into_blocks() {
    // CHSH at 1+joint: a 9×9 matrix; its 16 symmetries split it into five blocks.
    let game = load("games/chsh.yaml");
    let b = solve(&game.scenario, "1+joint", SymmetryChoice::Auto);
    let used = b.symmetry.unwrap();
    assert_eq!(used.order, 16);
    assert!(used.blocks.len() >= 2);
    assert!(used.blocks.iter().all(|&n| n < 9));
    // Tsirelson's bound in the win-probability form, (2 + √2)/4 (Tsirelson 1980, Lett. Math.
    // Phys. 4, 93).
    let want = (2.0 + 2f64.sqrt()) / 4.0;
    assert!((b.quantum_upper - want).abs() < 1e-8);
    assert!(b.verified_upper >= want - 1e-12);
}

#[test]
fn the_lift_of_a_split_with_invariance_equations_keeps_the_bound_tight() {
    // CGLMP with 8 answers at 1+joint: the group moves last answers, so the reduced problem
    // carries invariance equations and overlapping constraint matrices. Its interior-point
    // iterate is kept on those constraints by a projection through their Gram matrix; without
    // it the lifted dual's residual cost 2.9e-8 here (5.7e-7 at 10 answers).
    let spec = bellgap::formats::game::families::cglmp(8).unwrap();
    let game = Game::from_spec(&spec, "cglmp-8").unwrap();
    let b = solve(&game.scenario, "1+joint", SymmetryChoice::Auto);
    let used = b.symmetry.as_ref().unwrap();
    assert!(used.blocks.len() >= 2 && used.order >= 16);
    assert!(b.verified_upper >= b.primal - 1e-12);
    assert!(
        b.verified_upper - b.quantum_upper <= 1e-9,
        "verified {} raw {}",
        b.verified_upper,
        b.quantum_upper
    );
}

#[test]
fn a_split_whose_invariance_equations_outgrow_the_problem_is_declined() {
    // A small game (2×2 answers against 2×3) at level 3: its two relabellings move last
    // answers, and the invariance equations reach 17,554 rows in 3,195 variables against the
    // merged problem's 235 — minutes of dense elimination for a problem that solves in a
    // fraction of a second. The reduction keeps the merge and declines the split.
    let text = "constants:\n  t: [[[[0, 1, 1], [1, 0, 0]], [[0, 0, 0], [0, 0, 0]]], \
                [[[1, 0, 1], [1, 1, 1]], [[0, 0, 0], [0, 0, 1]]]]\nplayers:\n  \
                - {name: alice, question: x, answer: a, questions: 2, answers: 2}\n  \
                - {name: bob, question: y, answer: b, questions: 2, answers: 3}\n\
                win: \"t[x][y][a][b] == 1\"\n";
    let game = Game::from_yaml(text, "split-declined.yaml", CompileOptions::default()).unwrap();
    let reduced = agree(&game, "3");
    let used = reduced.symmetry.unwrap();
    assert_eq!((used.full_moments, used.moments), (421, 235));
    assert_eq!(used.blocks, vec![67]);
    // The game is won with probability 3/4 classically, and no-signalling boxes do no better.
    assert!((reduced.quantum_upper - 0.75).abs() < 1e-7);
}

#[test]
fn clarabel_solves_reduced_problems_with_redundant_invariance_equations() {
    // A 2×4 against 2×3 game with a non-uniform distribution: its reduction carries 354
    // invariance equations on 111 variables, and clarabel's KKT system was singular
    // ("NumericalError after 1 iterations"). Its value is 1 (both always answer 0).
    let game = Game::from_yaml(
        "name: small-uneven\nplayers:\n  - {name: alice, question: x, answer: a, questions: 2, answers: 4}\n  - {name: bob, question: y, answer: b, questions: 2, answers: 3}\ndistribution:\n  table: [[0, 0, \"1/3\"], [1, 0, \"2/9\"], [1, 1, \"4/9\"]]\nwin: \"a == abs(b)\"\n",
        "small-uneven.yaml",
        CompileOptions::default(),
    )
    .unwrap();
    for backend in [bellgap::Backend::Clarabel, bellgap::Backend::MomentIpm] {
        let b = npa_bound(
            &game.scenario,
            &NpaOptions {
                backend,
                symmetry: SymmetryChoice::Auto,
                ..NpaOptions::at(Level::parse("1+joint").unwrap())
            },
        )
        .unwrap();
        assert!(b.symmetry.is_some(), "{backend:?}: the reduction was used");
        assert!(
            b.verified_upper >= 1.0 - 1e-12 && b.verified_upper <= 1.0 + 1e-6,
            "{backend:?}: {}",
            b.verified_upper
        );
    }
}
