//! A computation asked to stop (the Python package does so on Ctrl-C) winds down at once and
//! never passes off what it has as a finished result: the interior-point method fails, the
//! first-order method reports a time limit with its still-verified bound, the see-saw keeps its
//! starting strategy (a valid lower bound) and the classical search reports an incumbent.

use bellgap::bounds::classical::{classical_value_or_incumbent, ClassicalStatus};
use bellgap::bounds::quantum::npa::{npa_bound, Level};
use bellgap::formats::game::{families, Game};
use bellgap::limits::{run_stoppable, StopSignal};
use bellgap::{Backend, Error, NpaOptions, SeesawOptions, SolveStatus};

fn chsh() -> Game {
    Game::from_spec(&families::chsh(), "chsh").unwrap()
}

fn raised() -> StopSignal {
    let signal = StopSignal::new();
    signal.raise();
    signal
}

fn at(level: &str, backend: Backend) -> NpaOptions {
    NpaOptions {
        backend,
        ..NpaOptions::at(Level::parse(level).unwrap())
    }
}

#[test]
fn a_stopped_interior_point_solve_is_an_error_not_a_bound() {
    let g = chsh();
    let out = run_stoppable(&raised(), || {
        npa_bound(&g.scenario, &at("2", Backend::MomentIpm))
    })
    .unwrap();
    match out {
        Err(Error::Solver { message, .. }) => assert!(message.contains("stopped"), "{message}"),
        other => panic!("expected a solver error, got {other:?}"),
    }
    // The same solve without the request finishes: Tsirelson's bound (Tsirelson 1980).
    let done = run_stoppable(&StopSignal::new(), || {
        npa_bound(&g.scenario, &at("2", Backend::MomentIpm))
    })
    .unwrap()
    .unwrap();
    assert!((done.verified_upper - 0.8535533906).abs() < 1e-7);
}

#[test]
fn a_stopped_first_order_solve_reports_a_time_limit_and_a_valid_bound() {
    let g = chsh();
    let b = run_stoppable(&raised(), || {
        npa_bound(&g.scenario, &at("1+joint", Backend::FirstOrder))
    })
    .unwrap()
    .unwrap();
    assert_eq!(b.status, SolveStatus::TimeLimit);
    assert_eq!(b.iterations, 0);
    // Whatever the point, the verified bound is an upper bound on Tsirelson's value.
    assert!(b.verified_upper >= 0.5 + 0.5 / 2f64.sqrt());
}

#[test]
fn a_stopped_seesaw_keeps_its_starting_strategy_and_its_value_is_still_a_lower_bound() {
    let g = chsh();
    let o = SeesawOptions {
        dims: vec![2, 2],
        restarts: 1000,
        ..Default::default()
    };
    let r = run_stoppable(&raised(), || {
        bellgap::bounds::quantum::seesaw::seesaw(&g.scenario, &o, None)
    })
    .unwrap()
    .unwrap();
    assert_eq!(r.rounds, 0);
    // Only the restarts already under way run: the first, and at most one more per thread.
    assert!(
        r.restarts >= 1 && r.restarts <= 1 + rayon::current_num_threads(),
        "{}",
        r.restarts
    );
    assert!(r.quantum_lower <= 0.5 + 0.5 / 2f64.sqrt());
    assert!((r.strategy.value(&g.scenario) - r.quantum_lower).abs() <= r.value_error + 1e-12);
}

#[test]
fn a_stopped_classical_search_is_an_incumbent_never_exact() {
    let g = Game::from_spec(&families::cglmp(4).unwrap(), "cglmp-4").unwrap();
    let v = run_stoppable(&raised(), || {
        classical_value_or_incumbent(&g.scenario, &Default::default(), None)
    })
    .unwrap()
    .unwrap();
    assert_eq!(v.status, ClassicalStatus::Incumbent);
    assert!(v.note.unwrap().contains("stopped"));
}

#[test]
fn a_seesaw_out_of_time_runs_only_its_first_restart_and_says_so() {
    // The see-saw's time limit (what `bounds --budget` sets): once it has passed no restart
    // starts; the first always runs, so there is a strategy and a valid lower bound.
    let g = chsh();
    let o = SeesawOptions {
        dims: vec![2, 2],
        restarts: 1000,
        max_seconds: 1e-9,
        ..Default::default()
    };
    let r = bellgap::bounds::quantum::seesaw::seesaw(&g.scenario, &o, None).unwrap();
    assert_eq!(r.restarts, 1);
    assert!(r.quantum_lower <= 0.5 + 0.5 / 2f64.sqrt());
    for bad in [0.0, -1.0, f64::NAN] {
        let o = SeesawOptions {
            max_seconds: bad,
            ..Default::default()
        };
        assert!(bellgap::bounds::quantum::seesaw::seesaw(&g.scenario, &o, None).is_err());
    }
}
