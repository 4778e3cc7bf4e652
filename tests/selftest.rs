//! Self-testing bounds: the SWAP-isometry fidelity against explicit realisations and published
//! values (the source beside each).

use bellgap::bounds::quantum::selftest::{
    checked_target, chsh_form, extracted_state, fidelity_bound, kaniewski_bound, target_from,
    SelfTestOptions,
};
use bellgap::formats::game::{CompileOptions, Game};
use bellgap::model::strategy::CVector;

#[path = "common/tsirelson.rs"]
mod tsirelson;
use num_complex::Complex64;
use tsirelson::tsirelson;

fn chsh() -> Game {
    Game::from_file(
        concat!(env!("CARGO_MANIFEST_DIR"), "/games/chsh.yaml"),
        CompileOptions::default(),
    )
    .unwrap()
}

#[test]
fn the_chsh_game_is_recognised_in_correlator_form() {
    // Win probability ω = 1/2 + S/8 for the CHSH game (uniform questions).
    let (kappa, lambda) = chsh_form(&chsh().scenario).unwrap();
    assert!((kappa - 0.5).abs() < 1e-15 && (lambda - 0.125).abs() < 1e-15);
}

#[test]
fn kaniewskis_bound_is_one_at_tsirelson_and_one_half_at_its_threshold() {
    // Kaniewski, PRL 117, 070402 (2016), from memory: F ≥ 1/2 + (1/2)(S − S*)/(2√2 − S*),
    // S* = (16 + 14√2)/17 ≈ 2.1058.
    assert!((kaniewski_bound(2.0 * 2f64.sqrt()) - 1.0).abs() < 1e-15);
    assert_eq!(kaniewski_bound(2.1), 0.5);
    let mid = kaniewski_bound(2.5);
    assert!((mid - (0.5 + 0.5 * (2.5 - 2.105_822_9) / (2.828_427_1 - 2.105_822_9))).abs() < 1e-6);
}

#[test]
fn the_swap_bound_reaches_one_at_maximal_violation_and_never_exceeds_a_noisy_singlet() {
    let game = chsh();
    let s = &game.scenario;
    let ideal = tsirelson();
    let questions = [[0, 1], [0, 1]];
    let target = target_from(s, &ideal, &questions).unwrap();
    // The ideal strategy's extracted state is pure and equals the target.
    let rho = extracted_state(s, &ideal, &questions).unwrap();
    let t = CVector::from_iterator(4, target.iter().map(|&a| Complex64::new(a, 0.0)));
    let fidelity_ideal = t.dotc(&(&rho * &t)).re;
    assert!((fidelity_ideal - 1.0).abs() < 1e-12, "{fidelity_ideal}");
    let options = SelfTestOptions::default();
    let tsirelson = (std::f64::consts::PI / 8.0).cos().powi(2);
    // At the top (a hair below it, rounding), the fidelity is certified close to 1.
    let top = fidelity_bound(s, tsirelson - 1e-9, &target, &options).unwrap();
    assert!(top.fidelity > 0.999, "{top:?}");
    // The singlet with white noise at visibility v scores 1/2 + (√2/4)v, and its extracted state
    // has fidelity (1 + 3v)/4 with the target (white noise extracts to white noise): no valid
    // bound may exceed it.
    for v in [0.8, 0.9, 0.95, 0.99] {
        let score = 0.5 + 2f64.sqrt() / 4.0 * v;
        let b = fidelity_bound(s, score, &target, &options).unwrap();
        let realisation = (1.0 + 3.0 * v) / 4.0;
        assert!(
            b.fidelity <= realisation + 1e-9,
            "v = {v}: {} > {realisation}",
            b.fidelity
        );
        assert!(b.chsh_analytic.unwrap() <= realisation + 1e-12);
        assert!((b.chsh_value.unwrap() - 2.0 * 2f64.sqrt() * v).abs() < 1e-9);
    }
    // And the bound grows with the score.
    let low = fidelity_bound(s, 0.5 + 2f64.sqrt() / 4.0 * 0.95, &target, &options).unwrap();
    let high = fidelity_bound(s, 0.5 + 2f64.sqrt() / 4.0 * 0.99, &target, &options).unwrap();
    assert!(
        high.fidelity > low.fidelity && low.fidelity > 0.5,
        "{low:?} {high:?}"
    );
}

#[test]
fn bad_targets_and_games_are_refused() {
    assert!(checked_target(&[1.0, 0.0, 0.0]).is_err());
    assert!(checked_target(&[1.0, 0.0, 0.0, f64::NAN]).is_err());
    assert!(checked_target(&[1.0, 1.0, 0.0, 0.0]).is_err());
    let game = chsh();
    let options = SelfTestOptions {
        questions: [[0, 0], [0, 1]],
        ..Default::default()
    };
    assert!(fidelity_bound(&game.scenario, 0.8, &[1.0, 0.0, 0.0, 0.0], &options).is_err());
    // Above the quantum value nothing is certified: refused.
    assert!(fidelity_bound(
        &game.scenario,
        0.9,
        &[1.0, 0.0, 0.0, 0.0],
        &SelfTestOptions::default()
    )
    .is_err());
}

#[test]
fn a_behaviour_certifies_at_least_what_its_score_does() {
    use bellgap::bounds::quantum::selftest::{fidelity_bound_given, FidelityGiven};
    use bellgap::model::region::BehaviourRegion;
    // The noisy singlet at visibility 0.95 with Tsirelson's measurements: its whole behaviour
    // leaves the adversary fewer options than its score alone, so the bound is at least the
    // score's, and still at most the realisation's own fidelity (1 + 3v)/4.
    let game = chsh();
    let s = &game.scenario;
    let ideal = tsirelson();
    let v = 0.95;
    let p: Vec<f64> = ideal
        .behaviour(s)
        .iter()
        .zip(ideal.noise_behaviour(s))
        .map(|(a, b)| v * a + (1.0 - v) * b)
        .collect();
    let target = target_from(s, &ideal, &[[0, 1], [0, 1]]).unwrap();
    let options = SelfTestOptions::default();
    let region = BehaviourRegion::around(&p, 1e-9, "the noisy singlet".into()).unwrap();
    let from_behaviour =
        fidelity_bound_given(s, &FidelityGiven::Region(region), &target, &options).unwrap();
    let from_score = fidelity_bound(s, s.value_of_behaviour(&p) - 1e-8, &target, &options).unwrap();
    let realisation = (1.0 + 3.0 * v) / 4.0;
    assert!(
        from_behaviour.fidelity >= from_score.fidelity - 1e-7,
        "{from_behaviour:?} {from_score:?}"
    );
    assert!(
        from_behaviour.fidelity <= realisation + 1e-7,
        "{from_behaviour:?}"
    );
    assert!(from_behaviour.region_score_floor.unwrap() <= s.value_of_behaviour(&p));
    // A behaviour no quantum device shows (a Popescu–Rohrlich box) is refused.
    let mut pr = vec![0.0; 16];
    for q in 0..4 {
        let (x, y) = (q / 2, q % 2);
        for a in 0..2 {
            for b in 0..2 {
                if (a + b) % 2 == x * y {
                    pr[q * 4 + a * 2 + b] = 0.5;
                }
            }
        }
    }
    let region = BehaviourRegion::around(&pr, 1e-9, "a PR box".into()).unwrap();
    assert!(fidelity_bound_given(s, &FidelityGiven::Region(region), &target, &options).is_err());
}
