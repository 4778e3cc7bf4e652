//! The first-order NPA path against the interior-point method: the same bounds on well-posed
//! relaxations, a rigorous bound however early it stops, certificates that re-verify, a warm
//! start that saves work, reduced (non-diagonal) problems, and the automatic choice.

use bellgap::bounds::quantum::npa::{
    automatic_backend, certificate, npa_bound, npa_bound_with, relaxation, verify, Level, NpaBound,
    SolveControl,
};
use bellgap::bounds::quantum::symmetric::SymmetryChoice;
use bellgap::formats::game::{families, CompileOptions, Game};
use bellgap::optim::first_order::{FirstOrderOptions, IterationReport};
use bellgap::{Backend, Limits, NpaOptions, Scenario, SolveStatus};

fn load(path: &str) -> Game {
    Game::from_file(path, CompileOptions::default()).unwrap()
}

fn options(level: &str, backend: Backend, symmetry: SymmetryChoice) -> NpaOptions {
    NpaOptions {
        backend,
        symmetry,
        ..NpaOptions::at(Level::parse(level).unwrap())
    }
}

fn solve(s: &Scenario, level: &str, backend: Backend, symmetry: SymmetryChoice) -> NpaBound {
    npa_bound(s, &options(level, backend, symmetry)).unwrap()
}

/// The first-order bound is verified, at or above the interior-point method's primal value
/// (a feasible point: the verified bound must cover it), and within `tolerance` of its
/// verified bound.
fn agrees(game: &Game, level: &str, symmetry: SymmetryChoice, tolerance: f64) -> NpaBound {
    let s = &game.scenario;
    let ipm = solve(s, level, Backend::MomentIpm, symmetry);
    let fo = solve(s, level, Backend::FirstOrder, symmetry);
    let what = format!("{} at level {level}", game.name);
    assert_eq!(fo.solver, Backend::FirstOrder, "{what}");
    assert_eq!(fo.status, SolveStatus::Solved, "{what}");
    assert!(
        fo.verified_upper >= ipm.primal - 1e-9,
        "{what}: {} below the feasible value {}",
        fo.verified_upper,
        ipm.primal
    );
    assert!(
        (fo.verified_upper - ipm.verified_upper).abs() <= tolerance,
        "{what}: first-order {} against interior-point {}",
        fo.verified_upper,
        ipm.verified_upper
    );
    fo
}

#[test]
fn first_order_matches_the_interior_point_method_on_bundled_games() {
    // Tsirelson's bound for the CHSH game, cos²(π/8) (Tsirelson 1980, Lett. Math. Phys. 4, 93).
    let chsh = agrees(&load("games/chsh.yaml"), "2", SymmetryChoice::Off, 1e-7);
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    assert!(chsh.verified_upper >= tsirelson && chsh.verified_upper <= tsirelson + 1e-7);
    for (path, level) in [
        ("games/cglmp-3.yaml", "1+joint"),
        ("games/chained-3.yaml", "1+joint"),
        ("games/mermin.yaml", "1+joint"),
        ("games/magic-square.yaml", "1"),
    ] {
        agrees(&load(path), level, SymmetryChoice::Off, 1e-6);
    }
}

#[test]
fn first_order_on_a_reduced_problem_uses_the_iterative_normal_equations() {
    // The symmetry-reduced problem has equalities and blocks that share variables, so the
    // y step is solved by conjugate gradients; the bound is still lifted and checked in full.
    let game = load("games/cglmp-3.yaml");
    let fo = agrees(&game, "1+joint", SymmetryChoice::Auto, 1e-6);
    assert!(fo.symmetry.is_some());
    let cert = certificate(&game.name, &game.scenario, &fo).unwrap();
    let checked = verify(&game.scenario, &cert, &Limits::default()).unwrap();
    assert!(checked.matches_claim);
    assert!((checked.verified_upper - fo.verified_upper).abs() <= 1e-12);
}

#[test]
fn a_run_stopped_early_still_proves_a_bound_and_says_so() {
    let game = load("games/i3322.yaml");
    let s = &game.scenario;
    let reference = solve(s, "3", Backend::MomentIpm, SymmetryChoice::Off);
    for iterations in [1, 20, 300] {
        let mut o = options("3", Backend::FirstOrder, SymmetryChoice::Off);
        o.first_order = FirstOrderOptions {
            max_iterations: iterations,
            ..Default::default()
        };
        let b = npa_bound(s, &o).unwrap();
        assert_eq!(b.status, SolveStatus::IterationLimit, "{iterations}");
        assert!(!b.converged());
        // A valid bound: above the relaxation's optimum, whatever the iterate.
        assert!(
            b.verified_upper >= reference.primal,
            "{iterations} iterations: {} below {}",
            b.verified_upper,
            reference.primal
        );
        // Stopped early, the reported upper value is the verified one, never the raw dual.
        assert_eq!(b.quantum_upper, b.verified_upper);
        // The certificate proves what it claims.
        let cert = certificate(&game.name, s, &b).unwrap();
        assert!(verify(s, &cert, &Limits::default()).unwrap().matches_claim);
    }
}

#[test]
fn a_warm_start_from_a_solution_finishes_at_once_and_progress_is_reported() {
    let game = load("games/cglmp-3.yaml");
    let s = &game.scenario;
    let o = options("1+joint", Backend::FirstOrder, SymmetryChoice::Off);
    let reports = std::sync::Mutex::new(Vec::<IterationReport>::new());
    let record = |r: &IterationReport| reports.lock().unwrap().push(*r);
    let mut slow = o.clone();
    slow.first_order.report_every_seconds = 0.0;
    let cold = npa_bound_with(
        s,
        &slow,
        &SolveControl {
            progress: Some(&record),
            warm_start: None,
        },
    )
    .unwrap();
    let reports = reports.into_inner().unwrap();
    assert!(!reports.is_empty());
    for r in &reports {
        // Every reported bound is a verified one: at or above the optimum.
        assert!(r.verified >= cold.primal - 1e-6, "{r:?}");
    }
    assert!(reports.windows(2).all(|w| w[0].iteration < w[1].iteration));
    let warm = npa_bound_with(
        s,
        &o,
        &SolveControl {
            progress: None,
            warm_start: cold.solution.as_ref(),
        },
    )
    .unwrap();
    assert_eq!(warm.status, SolveStatus::Solved);
    assert!(
        warm.iterations * 4 <= cold.iterations,
        "warm {} against cold {}",
        warm.iterations,
        cold.iterations
    );
    assert!((warm.verified_upper - cold.verified_upper).abs() <= 1e-7);
}

#[test]
fn auto_picks_the_first_order_method_only_for_what_the_interior_point_method_cannot_hold() {
    let i3322 = Game::from_spec(&families::i3322(), "i3322")
        .unwrap()
        .scenario;
    // Level 2 is small: the interior-point method (or clarabel) stays.
    let small = relaxation(&i3322, &Level::Length(2)).unwrap();
    assert_eq!(automatic_backend(&small), Backend::Auto);
    // Level 5 (628×628, 22,179 moments): the Schur complement alone would need ~11 GiB.
    let large = relaxation(&i3322, &Level::Length(5)).unwrap();
    assert_eq!(automatic_backend(&large), Backend::FirstOrder);
    let est = bellgap::bounds::quantum::npa::estimate_for(&large, Backend::Auto);
    assert_eq!(est.solver, Backend::FirstOrder);
    assert!(est.ipm_memory_bytes > 8.0 * (1u64 << 30) as f64);
    // Nothing of size m² on the first-order path: its memory is a small multiple of the
    // matrix (197,506 triangle entries), far below one m×m matrix (3.9 GB).
    assert!(est.first_order_memory_bytes < 0.2 * (1u64 << 30) as f64);
    assert!(est.first_order_memory_bytes < 8.0 * (est.moments as f64).powi(2) / 20.0);
}

#[path = "common/random_game.rs"]
mod random_game;

/// A random game of the benchmark set's kind (no symmetry), loaded.
fn random_game(q: usize, a: usize, seed: u64) -> Game {
    let yaml = random_game::random_game_yaml(q, a, seed);
    Game::from_yaml(&yaml, "random.yaml", CompileOptions::default()).unwrap()
}

#[test]
fn auto_races_the_first_order_method_where_it_is_expected_to_win() {
    use bellgap::bounds::quantum::npa::first_order_race;
    // Random 4×3 game at 1+joint (1,664 moments): the interior-point method took 0.85 s, the
    // first-order method 0.23 s (BENCHMARKS.md): raced.
    let random = random_game(4, 3, 11);
    let r = relaxation(&random.scenario, &Level::parse("1+joint").unwrap()).unwrap();
    let allowed = first_order_race(&r).expect("raced");
    assert!(allowed > 0.0 && allowed.is_finite());
    // CGLMP d = 5 without symmetry (880 moments): the interior-point method is the faster
    // (0.23 s against 0.62 s): not raced. With symmetry the reduced problem is never raced.
    let cglmp = Game::from_spec(&families::cglmp(5).unwrap(), "cglmp-5").unwrap();
    let full = relaxation(&cglmp.scenario, &Level::parse("1+joint").unwrap()).unwrap();
    assert_eq!(first_order_race(&full), None);
    let reduced = bellgap::bounds::quantum::npa::sized_relaxation(
        &cglmp.scenario,
        &NpaOptions::at(Level::parse("1+joint").unwrap()),
    )
    .unwrap()
    .0;
    assert!(reduced.reduction.is_some());
    assert_eq!(first_order_race(&reduced), None);
    // Whichever method finishes, `auto` gives the interior-point bound within 1e-7.
    let s = &random.scenario;
    let auto = solve(s, "1+joint", Backend::Auto, SymmetryChoice::Auto);
    let ipm = solve(s, "1+joint", Backend::MomentIpm, SymmetryChoice::Off);
    assert_eq!(auto.status, SolveStatus::Solved);
    assert!(auto.verified_upper >= ipm.primal - 1e-9);
    assert!((auto.verified_upper - ipm.verified_upper).abs() < 1e-7);
}
