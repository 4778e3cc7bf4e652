//! Seeded random two-player games without symmetry, shared by the tests and `benches/npa.rs`
//! (included by path in both).

/// A two-player game with `q` questions and `a` answers each, scores drawn uniformly from
/// [0, 1) (three decimals) by a xorshift sequence from `seed`, as a game file.
pub fn random_game_yaml(q: usize, a: usize, seed: u64) -> String {
    let mut state: u64 = seed.max(1);
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut yaml = format!(
        "name: random-{q}x{a}\ndescription: seeded random game, {q} questions and {a} answers each\nplayers:\n  - {{name: alice, question: x, answer: a, questions: {q}, answers: {a}}}\n  - {{name: bob, question: y, answer: b, questions: {q}, answers: {a}}}\nbell:\n  terms:\n",
    );
    for x in 0..q {
        for y in 0..q {
            for i in 0..a {
                for j in 0..a {
                    let c = (next() * 1000.0).floor() / 1000.0;
                    yaml += &format!(
                        "    - {{coefficient: {c}, event: {{alice: \"{i}|{x}\", bob: \"{j}|{y}\"}}}}\n"
                    );
                }
            }
        }
    }
    yaml
}
