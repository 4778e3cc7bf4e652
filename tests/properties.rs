//! Invariants on random small games: the search agrees with brute force and with the MILP,
//! classical ≤ no-signalling ≤ the table's maximum, the reported strategy re-evaluates to the
//! reported value, and renaming questions, answers or players changes nothing.

use bellgap::bounds::classical::{milp, search};
use bellgap::bounds::nosignal::{add_no_signalling_rows, no_signalling_value};
use bellgap::model::scenario::{Party, Scenario, ScoreKind};
use bellgap::optim::lp::{LinearProgram, VarBounds};
use proptest::prelude::*;

const TOL: f64 = 1e-7;

#[derive(Debug, Clone)]
struct RandomGame {
    scenario: Scenario,
    /// Permutations for the relabelling check.
    players: Vec<usize>,
    questions: Vec<Vec<usize>>,
    answers: Vec<Vec<Vec<usize>>>,
}

/// Players p0, p1, … with (questions, answers) each, labelled 0, 1, ….
fn parties_of(sizes: &[(usize, usize)]) -> Vec<Party> {
    sizes
        .iter()
        .enumerate()
        .map(|(i, &(q, a))| Party {
            name: format!("p{i}"),
            question_labels: (0..q as i64).collect(),
            answer_labels: (0..a as i64).collect(),
        })
        .collect()
}

fn permutation(n: usize) -> impl Strategy<Value = Vec<usize>> {
    Just((0..n).collect::<Vec<_>>()).prop_shuffle()
}

fn random_game(max_players: usize) -> impl Strategy<Value = RandomGame> {
    (2..=max_players)
        .prop_flat_map(|n| proptest::collection::vec((1usize..=3, 1usize..=3), n))
        .prop_flat_map(|sizes| {
            let nq: usize = sizes.iter().map(|s| s.0).product();
            let na: usize = sizes.iter().map(|s| s.1).product();
            let n = sizes.len();
            let question_perms: Vec<_> = sizes.iter().map(|s| permutation(s.0)).collect();
            let answer_perms: Vec<_> = sizes
                .iter()
                .map(|s| proptest::collection::vec(permutation(s.1), s.0))
                .collect();
            (
                Just(sizes),
                proptest::collection::vec(0u8..=3, nq),
                proptest::collection::vec(-3i8..=3, nq * na),
                any::<bool>(),
                permutation(n),
                question_perms,
                answer_perms,
            )
        })
        .prop_filter("some question must be asked", |t| {
            t.1.iter().any(|&w| w > 0)
        })
        .prop_map(
            |(sizes, weights, scores, win, players, questions, answers)| {
                let parties = parties_of(&sizes);
                let total: f64 = weights.iter().map(|&w| w as f64).sum();
                let weights = weights.iter().map(|&w| w as f64 / total).collect();
                let (scores, kind) = if win {
                    (
                        scores.iter().map(|&v| (v > 0) as u8 as f64).collect(),
                        ScoreKind::Win,
                    )
                } else {
                    (scores.iter().map(|&v| v as f64).collect(), ScoreKind::Score)
                };
                RandomGame {
                    scenario: Scenario::new(parties, weights, scores, 0.0, kind).unwrap(),
                    players,
                    questions,
                    answers,
                }
            },
        )
}

/// Every joint deterministic strategy, evaluated directly.
fn brute_force(s: &Scenario) -> f64 {
    let radices: Vec<usize> = s
        .parties()
        .iter()
        .flat_map(|p| std::iter::repeat_n(p.answers(), p.questions()))
        .collect();
    let total: usize = radices.iter().product();
    let mut best = f64::NEG_INFINITY;
    let mut digits = vec![0; radices.len()];
    for k in 0..total {
        bellgap::model::scenario::digits(k, &radices, &mut digits);
        let mut at = 0;
        let strategy: Vec<Vec<usize>> = s
            .parties()
            .iter()
            .map(|p| {
                let v = digits[at..at + p.questions()].to_vec();
                at += p.questions();
                v
            })
            .collect();
        best = best.max(s.value_of_strategy(&strategy));
    }
    best
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    #[test]
    fn search_is_exact_and_below_no_signalling(g in random_game(3)) {
        let s = &g.scenario;
        let c = search(s, None);
        prop_assert!((c.value - brute_force(s)).abs() < TOL, "search {} vs brute force {}", c.value, brute_force(s));
        prop_assert!((s.value_of_strategy(&c.strategy.answers) - c.value).abs() < TOL);
        let ns = no_signalling_value(s, &bellgap::Limits::default()).unwrap().value;
        let (_, hi) = s.value_range();
        prop_assert!(c.value <= ns + TOL, "classical {} > no-signalling {}", c.value, ns);
        prop_assert!(ns <= hi + TOL, "no-signalling {} > table maximum {}", ns, hi);
    }

    #[test]
    fn relabelling_changes_nothing(g in random_game(3)) {
        let s = &g.scenario;
        let r = s.relabelled(&g.players, &g.questions, &g.answers);
        let (c1, c2) = (search(s, None).value, search(&r, None).value);
        prop_assert!((c1 - c2).abs() < TOL, "classical {} vs relabelled {}", c1, c2);
        let n1 = no_signalling_value(s, &bellgap::Limits::default()).unwrap().value;
        let n2 = no_signalling_value(&r, &bellgap::Limits::default()).unwrap().value;
        prop_assert!((n1 - n2).abs() < TOL, "no-signalling {} vs relabelled {}", n1, n2);
    }
}

/// The no-signalling LP on full probabilities with explicit no-signalling equalities: a second,
/// independent formulation of the same value.
fn no_signalling_full(s: &Scenario) -> f64 {
    let mut lp = LinearProgram::new(true);
    for &c in s.objective() {
        lp.add_var(VarBounds::NONNEGATIVE, c);
    }
    add_no_signalling_rows(s, &mut lp, 0);
    s.offset() + lp.solve("full no-signalling LP").unwrap().objective
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn no_signalling_formulations_agree(g in random_game(3)) {
        let s = &g.scenario;
        let ns = no_signalling_value(s, &bellgap::Limits::default()).unwrap();
        let full = no_signalling_full(s);
        prop_assert!((ns.value - full).abs() < 1e-6, "Collins-Gisin {} vs full {}", ns.value, full);
        // The optimal behaviour is a behaviour, reaches the value, and does not signal.
        prop_assert!(ns.behaviour.iter().all(|&p| p > -1e-9));
        prop_assert!((s.value_of_behaviour(&ns.behaviour) - ns.value).abs() < 1e-6);
        let mut check = LinearProgram::new(true);
        add_no_signalling_rows(s, &mut check, 0);
        for row in &check.rows {
            let lhs: f64 = row.terms.iter().map(|&(i, c)| c * ns.behaviour[i]).sum();
            prop_assert!((lhs - row.rhs).abs() < 1e-6);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn milp_agrees_with_search(g in random_game(2)) {
        let s = &g.scenario;
        let a = search(s, None).value;
        let b = milp(s).unwrap().value;
        prop_assert!((a - b).abs() < 1e-6, "search {} vs MILP {}", a, b);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    #[test]
    fn npa_sits_between_classical_and_no_signalling_and_shrinks_with_the_level(g in random_game(2)) {
        use bellgap::bounds::quantum::npa::{npa_bound, Level};
        let s = &g.scenario;
        let c = search(s, None).value;
        let ns = no_signalling_value(s, &bellgap::Limits::default()).unwrap().value;
        let l1 = npa_bound(s, &bellgap::NpaOptions::at(Level::Length(1).clone())).unwrap();
        let joint = npa_bound(s, &bellgap::NpaOptions::at(Level::Joint.clone())).unwrap();
        // Tolerance: the solver's (1e-6 covers "almost solved" runs).
        prop_assert!(c <= joint.verified_upper + 1e-6, "classical {} > NPA {}", c, joint.verified_upper);
        prop_assert!(joint.quantum_upper <= ns + 1e-6, "NPA {} > no-signalling {}", joint.quantum_upper, ns);
        prop_assert!(joint.quantum_upper <= l1.quantum_upper + 1e-6, "1+joint {} > level 1 {}", joint.quantum_upper, l1.quantum_upper);
        prop_assert!(joint.verified_upper >= joint.quantum_upper - 1e-9);
        let r = s.relabelled(&g.players, &g.questions, &g.answers);
        let jr = npa_bound(&r, &bellgap::NpaOptions::at(Level::Joint.clone())).unwrap();
        prop_assert!((jr.quantum_upper - joint.quantum_upper).abs() < 1e-6, "relabelled {} vs {}", jr.quantum_upper, joint.quantum_upper);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    #[test]
    fn seesaw_sits_between_classical_and_npa(g in random_game(2)) {
        use bellgap::bounds::quantum::npa::{npa_bound, Level};
        use bellgap::bounds::quantum::seesaw::{seesaw, SeesawOptions};
        let s = &g.scenario;
        let opts = SeesawOptions { dims: vec![2; s.players()], restarts: 3, seed: 11, tolerance: 1e-10, max_rounds: 200, ..Default::default() };
        let lower = seesaw(s, &opts, None).unwrap().quantum_lower;
        let upper = npa_bound(s, &bellgap::NpaOptions::at(Level::Joint.clone())).unwrap().verified_upper;
        prop_assert!(lower <= upper + 1e-6, "see-saw {} > NPA {}", lower, upper);
        // Qubits can play any deterministic strategy, and the see-saw only climbs, but from
        // random starts it may stop at a local optimum: it is only asserted not to be absurd.
        let (lo, _) = s.value_range();
        prop_assert!(lower >= lo - 1e-9);
    }
}

/// A qubit projective measurement with `answers` outcomes: the columns of a real rotation by
/// `angle`, dealt to answers 0 and 1 (any further answer gets zero).
fn qubit_measurement(angle: f64, answers: usize) -> Vec<bellgap::model::strategy::CMatrix> {
    use bellgap::model::strategy::CMatrix;
    use num_complex::Complex64;
    let (c, s) = (angle.cos(), angle.sin());
    let p = CMatrix::from_row_slice(
        2,
        2,
        &[c * c, c * s, c * s, s * s].map(|v| Complex64::new(v, 0.0)),
    );
    let q = CMatrix::identity(2, 2) - &p;
    let mut out = vec![CMatrix::zeros(2, 2); answers];
    out[0] = p;
    if answers > 1 {
        out[1] = q;
    } else {
        out[0] = CMatrix::identity(2, 2);
    }
    out
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    /// The noise model on random two-player games and qubit strategies: the noisy behaviour is a
    /// behaviour, the certified score is its score rounded down, no noise changes nothing, and
    /// the best no-click assignment is at least every single-answer one.
    #[test]
    fn the_noise_model_keeps_behaviours_and_scores_honest(
        g in random_game(2),
        angles in proptest::collection::vec(0.0f64..std::f64::consts::PI, 12),
        theta in 0.0f64..std::f64::consts::FRAC_PI_2,
        visibility in 0.0f64..=1.0,
        efficiency in proptest::collection::vec(0.05f64..=1.0, 2),
        dark in 0.0f64..=1.0,
    ) {
        use bellgap::model::noise::{NoClick, NoiseModel};
        use bellgap::model::strategy::{CVector, QuantumStrategy};
        use num_complex::Complex64;
        let s = &g.scenario;
        let mut k = 0;
        let measurements = s
            .parties()
            .iter()
            .map(|p| {
                (0..p.questions())
                    .map(|_| {
                        k += 1;
                        qubit_measurement(angles[k % angles.len()], p.answers())
                    })
                    .collect()
            })
            .collect();
        let st = QuantumStrategy {
            dims: vec![2, 2],
            state: CVector::from_vec(
                [theta.cos(), 0.0, 0.0, theta.sin()].map(|v| Complex64::new(v, 0.0)).to_vec(),
            ),
            measurements,
        };
        prop_assert!(st.check(s).is_ok());
        let noise = NoiseModel {
            visibility,
            efficiency: efficiency.clone(),
            dark_counts: dark,
            no_click: NoClick::Best,
        };
        prop_assert!(noise.check(s).is_ok());
        let f = noise.best_assignment(s, &st, &noise.initial_assignment(s));
        let p = noise.behaviour(s, &st, &f);
        let na = s.joint_answers();
        for q in 0..s.joint_questions() {
            let total: f64 = p[q * na..(q + 1) * na].iter().sum();
            prop_assert!((total - 1.0).abs() < 1e-12, "question {q} sums to {total}");
            prop_assert!(p[q * na..(q + 1) * na].iter().all(|&v| (-1e-12..=1.0 + 1e-12).contains(&v)));
        }
        let certified = noise.certified_value(s, &st, &f);
        let direct = s.value_of_behaviour(&p);
        prop_assert!(certified.lower <= direct + 1e-12, "{certified:?} vs {direct}");
        prop_assert!((certified.value - direct).abs() < 1e-9 * (1.0 + direct.abs()));
        // The best assignment scores at least any one answer for everyone.
        let answers = s.parties().iter().map(|p| p.answers()).min().unwrap();
        for a in 0..answers {
            let fixed = NoiseModel { no_click: NoClick::Answer(a), ..noise.clone() };
            let g = fixed.initial_assignment(s);
            let v = s.value_of_behaviour(&fixed.behaviour(s, &st, &g));
            prop_assert!(direct >= v - 1e-9, "best {direct} < answer {a}: {v}");
        }
        // No noise: the ideal behaviour.
        let none = NoiseModel::default();
        let ideal = st.behaviour(s);
        let same = none.behaviour(s, &st, &none.initial_assignment(s));
        prop_assert!(ideal.iter().zip(&same).all(|(a, b)| (a - b).abs() < 1e-15));
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    /// A separating expression scaled to integers is re-checked by brute force: its local
    /// bound is the best deterministic strategy's value, and the correlations exceed it.
    #[test]
    fn integer_separating_expressions_separate(
        sizes in proptest::collection::vec((2usize..=3, 2usize..=3), 2),
        table in proptest::collection::vec(-3i8..=3, 81),
        visibility in 0.7f64..1.0,
    ) {
        use bellgap::bounds::classical::locality::locality_test;
        use bellgap::Correlations;
        let parties = parties_of(&sizes);
        let nq = sizes[0].0 * sizes[1].0;
        let cells = nq * sizes[0].1 * sizes[1].1;
        let s = &Scenario::new(
            parties,
            vec![1.0 / nq as f64; nq],
            table[..cells].iter().map(|&v| v as f64).collect(),
            0.0,
            ScoreKind::Score,
        )
        .unwrap();
        let ns = no_signalling_value(s, &bellgap::Limits::default()).unwrap();
        let na: usize = s.parties().iter().map(|p| p.answers()).product();
        // The game's optimal no-signalling behaviour with white noise.
        let p: Vec<f64> = ns
            .behaviour
            .iter()
            .map(|v| visibility * v.max(0.0) + (1.0 - visibility) / na as f64)
            .collect();
        let c = Correlations {
            name: "random".into(),
            parties: s.parties().to_vec(),
            p,
            rounds: None,
        };
        let Ok(report) = locality_test(&c, &bellgap::Limits::default()) else {
            return Ok(());
        };
        let Some(int) = report.separating.and_then(|sep| sep.integer) else {
            return Ok(());
        };
        let nq = c.p.len() / na;
        let expression = Scenario::new(
            s.parties().to_vec(),
            vec![1.0 / nq as f64; nq],
            int.coefficients.iter().map(|&k| k as f64).collect(),
            0.0,
            ScoreKind::Score,
        )
        .unwrap();
        let local = brute_force(&expression) * nq as f64;
        prop_assert!((local - int.local_bound as f64).abs() < 1e-6, "{local} against {int:?}");
        let value: f64 = int.coefficients.iter().zip(&c.p).map(|(&k, p)| k as f64 * p).sum();
        prop_assert!(value > int.local_bound as f64, "{value} against {int:?}");
        prop_assert!(int.coefficients.iter().all(|&k| (0..=1000).contains(&k)));
    }
}
