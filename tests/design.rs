//! Designing devices under noise: the noise model's behaviour, the best implementations and
//! their thresholds, against published values (the source beside each).

use bellgap::bounds::quantum::design::{
    optimise, threshold, DesignOptions, NoiseParameter, StateChoice, ThresholdOptions,
};
use bellgap::bounds::quantum::seesaw::SeesawOptions;
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::model::noise::{NoClick, NoiseModel};
use bellgap::pipeline::{
    design, DesignFigure, DesignReport, DesignRequest, Observer, TargetChoice,
};
use std::sync::OnceLock;

#[path = "common/tsirelson.rs"]
mod tsirelson;
use tsirelson::tsirelson;

struct Silent;
impl Observer for Silent {}

fn chsh() -> Game {
    Game::from_file(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
        CompileOptions::default(),
    )
    .unwrap()
}

fn options(noise: NoiseModel, state: StateChoice) -> DesignOptions {
    DesignOptions {
        seesaw: SeesawOptions {
            dims: vec![2, 2],
            restarts: 4,
            seed: 3,
            ..Default::default()
        },
        noise,
        state,
    }
}

#[test]
fn the_noisy_behaviour_is_the_mixture_post_processed_and_its_score_is_the_pulled_back_one() {
    let game = chsh();
    let s = &game.scenario;
    let st = tsirelson();
    let noise = NoiseModel {
        visibility: 0.9,
        efficiency: vec![0.8, 0.7],
        dark_counts: 0.01,
        no_click: NoClick::Answer(1),
    };
    let f = noise.initial_assignment(s);
    let p = noise.behaviour(s, &st, &f);
    // Still a behaviour: every question's probabilities sum to 1.
    for q in 0..4 {
        let total: f64 = p[q * 4..q * 4 + 4].iter().sum();
        assert!((total - 1.0).abs() < 1e-12, "question {q}: {total}");
    }
    // By hand for the question pair (0, 0) and answers (1, 1): each player reports 1 when the
    // detector clicks and the answer is 1, or it misses and (no dark count) assigns 1, or a dark
    // count lands on 1. Joint: independent channels on the mixed behaviour.
    let ideal = st.behaviour(s);
    let white = st.noise_behaviour(s);
    let mixed: Vec<f64> = ideal
        .iter()
        .zip(&white)
        .map(|(a, b)| 0.9 * a + 0.1 * b)
        .collect();
    let k = |eta: f64, to: usize, from: usize| {
        let kept = if to == from { eta } else { 0.0 };
        kept + (1.0 - eta) * (0.01 / 2.0 + if to == 1 { 0.99 } else { 0.0 })
    };
    let expected: f64 = (0..2)
        .flat_map(|a| (0..2).map(move |b| (a, b)))
        .map(|(a, b)| k(0.8, 1, a) * k(0.7, 1, b) * mixed[a * 2 + b])
        .sum();
    assert!((p[3] - expected).abs() < 1e-14, "{} vs {expected}", p[3]);
    // The certified score is the behaviour's score, within its error term.
    let score = noise.certified_value(s, &st, &f);
    let direct = s.value_of_behaviour(&p);
    assert!((score.value - direct).abs() < 1e-13);
    assert!(score.lower <= direct && score.error < 1e-12);
}

#[test]
fn without_noise_the_best_implementation_reaches_tsirelsons_bound() {
    // cos²(π/8) ≈ 0.853553 (Tsirelson 1980; Cirel'son, Lett. Math. Phys. 4, 93 (1980)).
    let game = chsh();
    let found = optimise(
        &game.scenario,
        0.75,
        &options(NoiseModel::default(), StateChoice::Optimised),
        None,
    )
    .unwrap();
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    assert!(found.score.lower <= tsirelson + 1e-12);
    assert!(
        found.score.lower > tsirelson - 1e-7,
        "{}",
        found.score.lower
    );
    assert!(found.margin > 0.1);
}

#[test]
fn the_critical_visibility_of_chsh_is_one_over_root_two() {
    // 1/√2 ≈ 0.7071: below it the singlet's CHSH value 2√2·v falls under 2 (a textbook fact; see
    // e.g. Brunner et al., Rev. Mod. Phys. 86, 419 (2014), from memory).
    let game = chsh();
    let t = threshold(
        &game.scenario,
        0.75,
        &options(NoiseModel::default(), StateChoice::Optimised),
        &ThresholdOptions {
            parameter: NoiseParameter::Visibility,
            tolerance: 1e-3,
            curve_points: 3,
        },
        None,
    )
    .unwrap();
    let b = t.bracket.unwrap();
    let critical = std::f64::consts::FRAC_1_SQRT_2;
    assert!(b.above - b.below <= 1e-3 + 1e-12);
    assert!(b.above >= critical, "{b:?}");
    assert!(
        b.below <= critical + 2e-3 && b.above <= critical + 2e-3,
        "{b:?}"
    );
    assert!(t.at_upper.beats_classical());
}

#[test]
fn with_the_maximally_entangled_state_chsh_needs_the_garg_mermin_efficiency() {
    // 2/(1 + √2) = 2(√2 − 1) ≈ 0.8284 (Garg & Mermin, Phys. Rev. D 35, 3831 (1987)).
    let game = chsh();
    let t = threshold(
        &game.scenario,
        0.75,
        &options(NoiseModel::default(), StateChoice::MaximallyEntangled),
        &ThresholdOptions {
            parameter: NoiseParameter::Efficiency,
            tolerance: 1e-3,
            curve_points: 2,
        },
        None,
    )
    .unwrap();
    let b = t.bracket.unwrap();
    let garg_mermin = 2.0 * (2f64.sqrt() - 1.0);
    assert!(b.above >= garg_mermin - 1e-9, "{b:?}");
    assert!(b.above <= garg_mermin + 2e-3, "{b:?}");
}

#[test]
fn with_a_partially_entangled_state_chsh_needs_only_about_two_thirds_efficiency() {
    // Eberhard, Phys. Rev. A 47, R747 (1993): the threshold tends to 2/3 as the state approaches
    // a product state. Our optimised threshold must come within 0.01 of it (and never below).
    let game = chsh();
    let t = threshold(
        &game.scenario,
        0.75,
        &options(NoiseModel::default(), StateChoice::Optimised),
        &ThresholdOptions {
            parameter: NoiseParameter::Efficiency,
            tolerance: 1e-3,
            curve_points: 2,
        },
        None,
    )
    .unwrap();
    let b = t.bracket.unwrap();
    assert!(b.above > 2.0 / 3.0, "{b:?}");
    assert!(b.above < 2.0 / 3.0 + 0.01, "{b:?}");
    // The implementation at the upper end is partially entangled: its smaller Schmidt
    // coefficient is well below the maximally entangled state's 1/√2.
    let st = t.at_upper.strategy.in_schmidt_basis();
    let smaller = st
        .state
        .iter()
        .map(|a| a.norm())
        .fold(f64::INFINITY, |m, v| if v > 1e-9 { m.min(v) } else { m });
    assert!(smaller < 0.5, "{smaller}");
}

fn chsh_with_key_setting() -> Game {
    Game::from_file(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh-key-setting.yaml"),
        CompileOptions::default(),
    )
    .unwrap()
}

fn key_rate_request(state: StateChoice) -> DesignRequest {
    DesignRequest {
        figure: DesignFigure::KeyRate,
        design: options(
            NoiseModel {
                no_click: NoClick::Answer(0),
                ..Default::default()
            },
            state,
        ),
        threshold: Some(ThresholdOptions {
            parameter: NoiseParameter::Efficiency,
            tolerance: 1e-3,
            curve_points: 0,
        }),
        partner: Some(TargetChoice {
            player: Some("bob".into()),
            question: Some(2),
        }),
        tangents: 8,
        ..Default::default()
    }
}

#[test]
fn the_chsh_key_rate_needs_about_ninety_two_percent_efficiency() {
    // About 92.4 % with no-clicks assigned to an answer (quoted in Ma & Lütkenhaus,
    // arXiv:1109.1203). With the maximally entangled state and the standard measurements, the
    // analytic CHSH bound minus H(A|B) crosses zero at η = 0.92310 (our own evaluation of the
    // closed forms, by bisection in plain floating point).
    let game = chsh_with_key_setting();
    let r = design(
        &game,
        &key_rate_request(StateChoice::MaximallyEntangled),
        &Silent,
    )
    .unwrap();
    let t = r.threshold.unwrap();
    let b = t.bracket.unwrap();
    assert!(b.above > 0.9 && b.above < 0.926, "{b:?}");
    assert!(r.value.value > 0.0);
}

/// The key-rate design with optimised states, computed once for the tests that read it.
fn optimised_key_design() -> &'static DesignReport<'static> {
    static GAME: OnceLock<Game> = OnceLock::new();
    static REPORT: OnceLock<DesignReport<'static>> = OnceLock::new();
    REPORT.get_or_init(|| {
        let game = GAME.get_or_init(chsh_with_key_setting);
        design(game, &key_rate_request(StateChoice::Optimised), &Silent).unwrap()
    })
}

#[test]
fn optimised_states_and_noisy_preprocessing_lower_the_key_rates_threshold() {
    // Measured with the command's default 12 scores for the entropy bound: 0.9238 with the
    // maximally entangled state, 0.8848 optimised, 0.8496 with noisy preprocessing at
    // probability 0.1 (the optimised one rechecked in closed form below); these tests use 8.
    let game = chsh_with_key_setting();
    let fixed = design(
        &game,
        &key_rate_request(StateChoice::MaximallyEntangled),
        &Silent,
    )
    .unwrap();
    let optimised = optimised_key_design();
    let mut request = key_rate_request(StateChoice::Optimised);
    request.entropy.preprocessing =
        bellgap::bounds::entropy::Preprocessing::Noisy { probability: 0.1 };
    let noisy = design(&game, &request, &Silent).unwrap();
    let upper = |r: &DesignReport| r.threshold.as_ref().unwrap().bracket.unwrap().above;
    assert!(upper(optimised) <= upper(&fixed) + 1e-3);
    assert!(upper(&noisy) < upper(optimised));
}

#[test]
fn the_optimised_key_implementation_rechecks_with_the_closed_forms() {
    // Re-derived from the implementation's noisy behaviour alone: the CHSH value S, the analytic
    // bound H(A|E) ≥ 1 − h((1 + √((S/2)² − 1))/2) (Acín et al., PRL 98, 230501 (2007); Pironio et
    // al., NJP 11, 045021 (2009)) and H(A|B) of the key questions' table. The design's rate must
    // not exceed that closed-form rate, and must be positive at its threshold's upper end.
    let r = optimised_key_design();
    let s = &r.game.scenario;
    let imp = &r.implementation;
    let p = imp.noise.behaviour(s, &imp.strategy, &imp.no_click_answers);
    // Joint question x·3 + y, answers a·2 + b.
    let table = |x: usize, y: usize| &p[(x * 3 + y) * 4..(x * 3 + y) * 4 + 4];
    let correlator = |x: usize, y: usize| {
        let t = table(x, y);
        t[0] - t[1] - t[2] + t[3]
    };
    let chsh = correlator(0, 0) + correlator(0, 1) + correlator(1, 0) - correlator(1, 1);
    let h = |q: f64| {
        if q <= 0.0 || q >= 1.0 {
            0.0
        } else {
            -q * q.log2() - (1.0 - q) * (1.0 - q).log2()
        }
    };
    let analytic = 1.0 - h((1.0 + ((chsh / 2.0).powi(2) - 1.0).sqrt()) / 2.0);
    let key = table(0, 2);
    let joint: f64 = key
        .iter()
        .filter(|&&v| v > 0.0)
        .map(|v| -v * v.log2())
        .sum();
    let bob: f64 = [key[0] + key[2], key[1] + key[3]]
        .iter()
        .filter(|&&v| v > 0.0)
        .map(|v| -v * v.log2())
        .sum();
    let closed_form_rate = analytic - (joint - bob);
    assert!(r.value.value > 0.0);
    assert!(
        r.value.value <= closed_form_rate + 1e-9,
        "{} vs {closed_form_rate}",
        r.value.value
    );
    assert!((r.value.score - (chsh + 4.0) / 8.0).abs() < 1e-9);
    assert!(r.value.conditional_entropy.unwrap() <= analytic + 1e-9);
}

#[test]
fn with_the_no_click_as_an_answer_of_its_own_the_clauser_horne_expression_needs_two_thirds() {
    // The Clauser–Horne expression with the no-click as a third answer: local bound 0, quantum
    // maximum (√2 − 1)/2 (Clauser & Horne, PRD 10, 526 (1974); Tsirelson); with loss and
    // partially entangled qubits, violated down to η → 2/3 (Eberhard, PRA 47, R747 (1993)).
    let game = Game::from_file(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/ch-no-click.yaml"),
        CompileOptions::default(),
    )
    .unwrap();
    let s = &game.scenario;
    let noise = NoiseModel {
        no_click: NoClick::Extra,
        ..Default::default()
    };
    let top = optimise(
        s,
        0.0,
        &options(noise.clone(), StateChoice::Optimised),
        None,
    )
    .unwrap();
    assert!(
        (top.score.lower - (2f64.sqrt() - 1.0) / 2.0).abs() < 1e-7,
        "{:?}",
        top.score
    );
    // A clicking detector never reports the no-click answer.
    for povms in &top.strategy.measurements {
        for povm in povms {
            assert!(povm[2].norm() < 1e-12);
        }
    }
    let t = threshold(
        s,
        0.0,
        &options(noise, StateChoice::Optimised),
        &ThresholdOptions {
            parameter: NoiseParameter::Efficiency,
            tolerance: 1e-3,
            curve_points: 0,
        },
        None,
    )
    .unwrap();
    let b = t.bracket.unwrap();
    assert!(b.above > 2.0 / 3.0 && b.above < 2.0 / 3.0 + 0.01, "{b:?}");
    assert_eq!(t.at_upper.no_click_answers, vec![vec![2, 2], vec![2, 2]]);
}

#[test]
fn randomness_and_entropy_need_about_two_thirds_efficiency_on_chsh() {
    // Any CHSH score above 3/4 certifies some randomness of Alice's answer (and a positive
    // conditional entropy: 1 − h((1 + √((S/2)² − 1))/2) > 0 for S > 2, Pironio et al., NJP 11,
    // 045021 (2009)), so both thresholds sit at the violation's, 2/3 (Eberhard 1993), up to what
    // the relaxations can certify a hair above the classical value.
    let game = chsh();
    for (figure, within) in [
        (DesignFigure::MinEntropy, 0.01),
        (DesignFigure::Entropy, 0.02),
    ] {
        let r = design(
            &game,
            &DesignRequest {
                figure,
                design: options(NoiseModel::default(), StateChoice::Optimised),
                threshold: Some(ThresholdOptions {
                    parameter: NoiseParameter::Efficiency,
                    tolerance: 1e-3,
                    curve_points: 0,
                }),
                tangents: 8,
                ..Default::default()
            },
            &Silent,
        )
        .unwrap();
        let t = r.threshold.as_ref().unwrap();
        let b = t.bracket.unwrap();
        assert!(
            b.above > 2.0 / 3.0 && b.above < 2.0 / 3.0 + within,
            "{figure:?}: {b:?}"
        );
        assert!(r.value.value > 0.0);
        // Without loss the best implementation's figure is close to a full bit (the optimum
        // at Tsirelson's bound).
        let top = t.curve.last().unwrap();
        assert_eq!(top.parameter, 1.0);
        assert!(
            top.figure > 0.95 && top.figure <= 1.0 + 1e-12,
            "{figure:?}: {top:?}"
        );
    }
}
