//! Classical and no-signalling values of the standard games, checked against the literature.
//! The source of each value is named beside it; "from memory" marks values recalled rather than
//! read, which are then also recomputed independently here.

use bellgap::bounds::classical::{classical_value, search};
use bellgap::bounds::nosignal::no_signalling_value;
use bellgap::formats::game::{families, product, Game, GameSpec};
use bellgap::Scenario;

const TOL: f64 = 1e-9;

fn compile(spec: &GameSpec) -> Scenario {
    Game::from_spec(spec, "test").unwrap().scenario
}

fn classical(s: &Scenario) -> f64 {
    let v = classical_value(s, &Default::default(), None).unwrap();
    // The reported strategy re-evaluates to the reported value.
    assert!((s.value_of_strategy(&v.strategy.answers) - v.value).abs() < TOL);
    v.value
}

fn nosignal(s: &Scenario) -> f64 {
    no_signalling_value(s, &bellgap::Limits::default())
        .unwrap()
        .value
}

fn assert_close(got: f64, want: f64, what: &str) {
    assert!(
        (got - want).abs() < 1e-7,
        "{what}: got {got}, expected {want}"
    );
}

#[test]
fn chsh_game() {
    // Classical 3/4: Clauser–Horne–Shimony–Holt 1969 (PRL 23, 880), as p_win = 1/2 + S/8 with S ≤ 2.
    // No-signalling 1: Popescu–Rohrlich 1994 (Found. Phys. 24, 379), the PR box wins always.
    let s = compile(&families::chsh());
    assert_close(classical(&s), 0.75, "CHSH classical");
    assert_close(nosignal(&s), 1.0, "CHSH no-signalling");
}

#[test]
fn chsh_expression() {
    // Local bound 2 (CHSH 1969), no-signalling 4 (Popescu–Rohrlich 1994).
    let s = compile(&families::chsh_expression());
    assert_close(classical(&s), 2.0, "CHSH expression local bound");
    assert_close(nosignal(&s), 4.0, "CHSH expression no-signalling");
}

#[test]
fn xor_game_from_signs_is_chsh() {
    // The sign table [[1,1],[1,-1]] is CHSH: classical 3/4 (CHSH 1969).
    let s = compile(&families::xor_game(&[vec![1, 1], vec![1, -1]]).unwrap());
    assert_close(classical(&s), 0.75, "XOR CHSH classical");
    assert_close(nosignal(&s), 1.0, "XOR CHSH no-signalling");
}

#[test]
fn magic_square() {
    // Classical 8/9: Aravind 2002; Brassard–Broadbent–Tapp 2005 (quant-ph/0407221).
    let s = compile(&families::magic_square());
    assert_close(classical(&s), 8.0 / 9.0, "magic square classical");
    assert_close(nosignal(&s), 1.0, "magic square no-signalling");
}

#[test]
fn ghz_game() {
    // Three players: classical 3/4, Mermin 1990 (Am. J. Phys. 58, 731).
    let s = compile(&families::ghz(3).unwrap());
    assert_close(classical(&s), 0.75, "GHZ classical");
    assert_close(nosignal(&s), 1.0, "GHZ no-signalling");
    // n players: 1/2 + 2^-ceil(n/2) (from memory), recomputed here by the search for n = 4, 5.
    for n in [4usize, 5] {
        let s = compile(&families::ghz(n).unwrap());
        let want = 0.5 + 0.5f64.powi(n.div_ceil(2) as i32);
        assert_close(classical(&s), want, &format!("GHZ {n} classical"));
    }
}

#[test]
fn mermin_expression() {
    // Local bound 2: Mermin 1990 (PRL 65, 1838).
    let s = compile(&families::mermin());
    assert_close(classical(&s), 2.0, "Mermin local bound");
    assert_close(nosignal(&s), 4.0, "Mermin no-signalling");
}

#[test]
fn odd_cycle() {
    // Classical 1 − 1/(2n): Cleve–Høyer–Toner–Watrous 2004 (quant-ph/0404076). n=3 gives 5/6.
    for n in [3usize, 5, 7] {
        let s = compile(&families::odd_cycle(n).unwrap());
        assert_close(
            classical(&s),
            1.0 - 1.0 / (2.0 * n as f64),
            &format!("odd cycle {n}"),
        );
        assert_close(nosignal(&s), 1.0, &format!("odd cycle {n} no-signalling"));
    }
}

#[test]
fn cglmp() {
    // Local bound 2 and no-signalling bound 4 for every d: Collins–Gisin–Linden–Massar–Popescu
    // 2002 (PRL 88, 040404); definition from memory, recomputed (d=2 is the CHSH expression).
    for d in 2..=5 {
        let s = compile(&families::cglmp(d).unwrap());
        assert_close(classical(&s), 2.0, &format!("CGLMP d={d} local bound"));
        assert_close(nosignal(&s), 4.0, &format!("CGLMP d={d} no-signalling"));
    }
}

#[test]
fn i3322() {
    // Local bound 0, no-signalling 1: Collins–Gisin 2004 (J. Phys. A 37, 1775; quant-ph/0306129).
    let s = compile(&families::i3322());
    assert_close(classical(&s), 0.0, "I3322 local bound");
    assert_close(nosignal(&s), 1.0, "I3322 no-signalling");
}

#[test]
fn chained_bell() {
    // Local bound 2m − 2: Braunstein–Caves 1990 (Ann. Phys. 202, 22).
    for m in 2..=6 {
        let s = compile(&families::chained_bell(m).unwrap());
        assert_close(
            classical(&s),
            2.0 * m as f64 - 2.0,
            &format!("chained m={m}"),
        );
    }
}

/// Brute force over every pair of deterministic strategies, independent of the search.
fn brute_force_two_player(s: &Scenario) -> f64 {
    let (pa, pb) = (&s.parties()[0], &s.parties()[1]);
    let count = |q: usize, a: usize| (a as u64).pow(q as u32);
    let decode = |mut k: u64, q: usize, a: usize| {
        (0..q)
            .map(|_| {
                let d = (k % a as u64) as usize;
                k /= a as u64;
                d
            })
            .collect::<Vec<_>>()
    };
    let mut best = f64::NEG_INFINITY;
    for i in 0..count(pa.questions(), pa.answers()) {
        for j in 0..count(pb.questions(), pb.answers()) {
            let st = [
                decode(i, pa.questions(), pa.answers()),
                decode(j, pb.questions(), pb.answers()),
            ];
            best = best.max(s.value_of_strategy(&st));
        }
    }
    best
}

#[test]
fn chsh_played_twice_in_parallel() {
    // 10/16 > (3/4)^2: the classical value of CHSH repeated twice in parallel (from memory, no
    // source checked), recomputed here by brute force over all 65536 strategy pairs.
    // No-signalling: two PR boxes (Popescu–Rohrlich 1994) win always.
    let chsh = compile(&families::chsh());
    let twice = compile(&product::parallel_repetition(&chsh, "chsh", 2).unwrap());
    let v = search(&twice, None);
    assert_close(v.value, 10.0 / 16.0, "CHSH x2 classical");
    assert_close(
        brute_force_two_player(&twice),
        10.0 / 16.0,
        "CHSH x2 brute force",
    );
    assert_close(nosignal(&twice), 1.0, "CHSH x2 no-signalling");
}

#[test]
fn product_of_expressions_multiplies_values_of_product_strategies() {
    // The product of the CHSH expression with itself: local strategies of the product include
    // products of local strategies, so the local bound is at least 2·2 = 4; no-signalling 16.
    let e = compile(&families::chsh_expression());
    let twice = compile(&product::parallel_repetition(&e, "chsh-expression", 2).unwrap());
    assert!(classical(&twice) >= 4.0 - TOL);
    assert_close(
        nosignal(&twice),
        16.0,
        "CHSH expression squared no-signalling",
    );
}

#[test]
fn bundled_games_match_their_families() {
    // games/ is generated by `bellgap family`; the files must compile to the same tables.
    let pairs: Vec<(&str, GameSpec)> = vec![
        ("chsh", families::chsh()),
        ("chsh-expression", families::chsh_expression()),
        ("magic-square", families::magic_square()),
        ("i3322", families::i3322()),
        ("mermin", families::mermin()),
        ("odd-cycle-3", families::odd_cycle(3).unwrap()),
        ("ghz-3", families::ghz(3).unwrap()),
        ("cglmp-3", families::cglmp(3).unwrap()),
        ("chained-3", families::chained_bell(3).unwrap()),
    ];
    for (file, spec) in pairs {
        let path = format!("{}/games/{file}.yaml", env!("CARGO_MANIFEST_DIR"));
        let from_file = Game::from_file(&path, Default::default()).unwrap();
        assert_eq!(from_file.scenario, compile(&spec), "{file}");
    }
}

#[test]
fn large_no_signalling_lps_take_the_interior_point_route_with_a_certified_bound() {
    // GHZ with 6 players (4096 positivity rows) and CHSH three times in parallel (4096 rows):
    // both are won with certainty by no-signalling boxes (the quantum GHZ strategy, Mermin 1990;
    // three PR boxes, Popescu–Rohrlich 1994), so the value is 1.
    let chsh = compile(&families::chsh());
    for s in [
        compile(&families::ghz(6).unwrap()),
        compile(&product::parallel_repetition(&chsh, "chsh", 3).unwrap()),
    ] {
        let ns = no_signalling_value(&s, &bellgap::Limits::default()).unwrap();
        assert_eq!(ns.method.to_string(), "interior point");
        assert_close(ns.value, 1.0, "no-signalling value");
        let up = ns.certified_upper.expect("certified bound");
        assert!((1.0..1.0 + 1e-5).contains(&up), "certified {up}");
    }
}
