//! See-saw lower bounds and strategy analysis against published values; the source of each
//! value is named beside it.

use bellgap::bounds::quantum::analysis::{bipartitions, robustness};
use bellgap::bounds::quantum::seesaw::{seesaw, SeesawOptions, SeesawResult};
use bellgap::formats::game::{families, Game, GameSpec};
use bellgap::model::strategy::{CMatrix, CVector, QuantumStrategy};
use bellgap::Scenario;
use num_complex::Complex64;

fn compile(spec: &GameSpec) -> Scenario {
    Game::from_spec(spec, "test").unwrap().scenario
}

fn run(s: &Scenario, d: usize, restarts: usize) -> SeesawResult {
    let opts = SeesawOptions {
        dims: vec![d; s.players()],
        restarts,
        seed: 7,
        tolerance: 1e-10,
        max_rounds: 300,
        ..Default::default()
    };
    let r = seesaw(s, &opts, None).unwrap();
    // The reported value is the Born-rule value of a valid strategy.
    r.strategy.check(s).unwrap();
    assert!((r.strategy.value(s) - r.quantum_lower).abs() < 1e-12);
    r
}

#[test]
fn chsh_reaches_tsirelson_with_qubits() {
    // cos²(π/8): Cirel'son 1980 (Lett. Math. Phys. 4, 93).
    let s = compile(&families::chsh());
    let r = run(&s, 2, 4);
    assert!(
        (r.quantum_lower - (std::f64::consts::PI / 8.0).cos().powi(2)).abs() < 1e-7,
        "{}",
        r.quantum_lower
    );
    // Its state is maximally entangled: Schmidt coefficients 1/√2, one ebit, not PPT.
    let b = &bipartitions(&s, &r.strategy)[0];
    assert!((b.schmidt[0] - 0.5f64.sqrt()).abs() < 1e-5 && (b.entropy_bits - 1.0).abs() < 1e-6);
    assert_eq!(b.ppt, Some(false));
    assert!((b.negativity.unwrap() - 0.5).abs() < 1e-6);
    // Critical visibility 1/√2 (Acín–Gisin–Toner 2006, quant-ph/0606138; common practice).
    let rb = robustness(&s, &r.strategy, 0.75);
    assert!((rb.critical_visibility.unwrap() - 0.5f64.sqrt()).abs() < 1e-6);
}

/// The textbook Tsirelson strategy: |Φ+⟩, Alice Z / X, Bob (Z ± X)/√2.
fn tsirelson_strategy() -> QuantumStrategy {
    let h = std::f64::consts::FRAC_1_SQRT_2;
    let c = |re: f64| Complex64::new(re, 0.0);
    let projectors = |angle: f64| {
        // Projectors onto ±1 eigenspaces of cos(θ) Z + sin(θ) X.
        let (co, si) = (angle.cos(), angle.sin());
        let plus = CMatrix::from_row_slice(
            2,
            2,
            &[
                c((1.0 + co) / 2.0),
                c(si / 2.0),
                c(si / 2.0),
                c((1.0 - co) / 2.0),
            ],
        );
        let minus = CMatrix::identity(2, 2) - &plus;
        vec![plus, minus]
    };
    let pi = std::f64::consts::PI;
    QuantumStrategy {
        dims: vec![2, 2],
        state: CVector::from_vec(vec![c(h), c(0.0), c(0.0), c(h)]),
        measurements: vec![
            vec![projectors(0.0), projectors(pi / 2.0)],
            vec![projectors(pi / 4.0), projectors(-pi / 4.0)],
        ],
    }
}

#[test]
fn chsh_critical_detection_efficiency() {
    // 2(√2 − 1) ≈ 0.8284 for the maximally entangled state with no-clicks mapped to a fixed
    // answer: Garg–Mermin 1987 (PRD 35, 3831).
    let s = compile(&families::chsh());
    let st = tsirelson_strategy();
    st.check(&s).unwrap();
    assert!((st.value(&s) - (std::f64::consts::PI / 8.0).cos().powi(2)).abs() < 1e-12);
    let rb = robustness(&s, &st, 0.75);
    let eta = rb.critical_detection_efficiency.unwrap();
    assert!((eta - 2.0 * (2f64.sqrt() - 1.0)).abs() < 1e-6, "{eta}");
}

#[test]
fn i3322_reaches_a_quarter_with_qubits() {
    // 0.25 with qubits: Collins–Gisin 2004 (J. Phys. A 37, 1775; quant-ph/0306129).
    let r = run(&compile(&families::i3322()), 2, 8);
    assert!((r.quantum_lower - 0.25).abs() < 1e-6, "{}", r.quantum_lower);
}

#[test]
fn ghz_wins_with_qubits() {
    // GHZ game won with certainty: Mermin 1990 (Am. J. Phys. 58, 731).
    let r = run(&compile(&families::ghz(3).unwrap()), 2, 4);
    assert!((r.quantum_lower - 1.0).abs() < 1e-6, "{}", r.quantum_lower);
}

#[test]
fn cglmp_3_reaches_its_optimum_in_dimension_3() {
    // 1 + √(11/3) ≈ 2.914854 with a non-maximally entangled state: Acín–Durt–Gisin–Latorre
    // 2002 (PRA 65, 052325).
    let s = compile(&families::cglmp(3).unwrap());
    let r = run(&s, 3, 6);
    assert!(
        (r.quantum_lower - (1.0 + (11.0f64 / 3.0).sqrt())).abs() < 1e-5,
        "{}",
        r.quantum_lower
    );
    let schmidt = &bipartitions(&s, &r.strategy)[0].schmidt;
    // Not maximally entangled: the Schmidt coefficients differ.
    assert!(schmidt[0] - schmidt[2] > 0.05, "{schmidt:?}");
}

#[test]
fn magic_square_wins_with_two_qubit_pairs() {
    // Won with certainty with two EPR pairs (local dimension 4): Aravind 2002; Brassard–
    // Broadbent–Tapp 2005 (quant-ph/0407221).
    let r = run(&compile(&families::magic_square()), 4, 6);
    assert!((r.quantum_lower - 1.0).abs() < 1e-5, "{}", r.quantum_lower);
}

#[test]
fn saved_strategy_re_evaluates_to_the_reported_value() {
    let s = compile(&families::chsh());
    let r = run(&s, 2, 2);
    let text = bellgap::formats::game::spec::readable_yaml(&r.strategy.to_yaml_value(&s));
    let back = QuantumStrategy::from_yaml(&text, "saved.yaml", &s).unwrap();
    assert!((back.value(&s) - r.quantum_lower).abs() < 1e-12);
}

#[test]
fn invalid_strategies_are_rejected_with_locations() {
    let s = compile(&families::chsh());
    let good = bellgap::formats::game::spec::readable_yaml(&tsirelson_strategy().to_yaml_value(&s));
    // Not normalised.
    assert!(
        good.contains("state: [0.7071067811865476, 0, 0, 0.7071067811865476]"),
        "{good}"
    );
    let bad = good.replacen("0.7071067811865476", "0.8", 1);
    let e = QuantumStrategy::from_yaml(&bad, "s.yaml", &s).unwrap_err();
    assert!(e.to_string().contains("norm"), "{e}");
    // Elements that do not sum to the identity.
    let bad = good.replacen("[[1, 0], [0, 0]]", "[[0.9, 0], [0, 0]]", 1);
    let e = QuantumStrategy::from_yaml(&bad, "s.yaml", &s).unwrap_err();
    assert!(e.to_string().contains("identity"), "{e}");
    // Wrong number of amplitudes.
    let e = QuantumStrategy::from_yaml(
        "dims: [2, 2]\nstate: [1, 0]\nmeasurements: {}\n",
        "s.yaml",
        &s,
    )
    .unwrap_err();
    assert!(e.to_string().contains("s.yaml:2"), "{e}");
}

#[test]
fn a_strategy_in_its_schmidt_basis_has_the_same_behaviour_and_reads_plainly() {
    // CHSH (maximally entangled: the first measurement diagonal, everything real) and CGLMP
    // with three answers (a partially entangled optimum): the behaviour is the same to
    // rounding, and the state has the Schmidt form Σ σ_k |kk⟩ with σ_k ≥ 0.
    for (spec, d) in [(families::chsh(), 2usize), (families::cglmp(3).unwrap(), 3)] {
        let s = compile(&spec);
        let found = run(&s, d, 3).strategy;
        let plain = found.in_schmidt_basis();
        plain.check(&s).unwrap();
        let (before, after) = (found.behaviour(&s), plain.behaviour(&s));
        let moved = before
            .iter()
            .zip(&after)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        assert!(moved < 1e-12, "behaviour moved by {moved}");
        for i in 0..d {
            for j in 0..d {
                let z = plain.state[i * d + j];
                if i == j {
                    assert!(z.im == 0.0 && z.re >= 0.0, "{z}");
                } else {
                    assert_eq!(z, Complex64::new(0.0, 0.0));
                }
            }
        }
        if d == 2 {
            let all_real = plain
                .measurements
                .iter()
                .flatten()
                .flatten()
                .all(|m| m.iter().all(|z| z.im == 0.0));
            assert!(all_real);
            let first = &plain.measurements[0][0][0];
            assert!(first[(0, 1)].norm() < 1e-12, "{first}");
        }
    }
}
