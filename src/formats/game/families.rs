//! The standard games and Bell expressions, as game specs written in our own formula language.
//! `bellgap family NAME` prints them; `games/` holds the instances it generated. Each
//! constructor returns a [`GameSpec`], so a family is exactly what a user could have typed.

use serde_yaml::{Mapping, Value};

use super::spec::{GameSpec, PlayerSpec};
use crate::error::{Error, Result};

fn two_players(qa: usize, aa: usize, qb: usize, ab: usize) -> Vec<PlayerSpec> {
    vec![
        PlayerSpec::counted("alice", "x", "a", qa, aa),
        PlayerSpec::counted("bob", "y", "b", qb, ab),
    ]
}

fn yaml_matrix(rows: &[Vec<i64>]) -> Value {
    Value::Sequence(
        rows.iter()
            .map(|r| Value::Sequence(r.iter().map(|&v| Value::from(v)).collect()))
            .collect(),
    )
}

fn mapping(entries: Vec<(&str, Value)>) -> Value {
    let mut m = Mapping::new();
    for (k, v) in entries {
        m.insert(Value::from(k), v);
    }
    Value::Mapping(m)
}

/// CHSH as a game: x, y uniform bits, win iff a ⊕ b = x·y.
pub fn chsh() -> GameSpec {
    GameSpec {
        name: Some("chsh".into()),
        description: Some("CHSH game: win iff a xor b equals x and y, questions uniform".into()),
        players: two_players(2, 2, 2, 2),
        distribution: Some(Value::from("uniform")),
        win: Some("(a + b) % 2 == x * y".into()),
        ..Default::default()
    }
}

/// CHSH as a correlator expression S = E00 + E01 + E10 − E11 (local bound 2).
pub fn chsh_expression() -> GameSpec {
    GameSpec {
        name: Some("chsh-expression".into()),
        description: Some("CHSH expression in correlators: E00 + E01 + E10 - E11".into()),
        players: two_players(2, 2, 2, 2),
        bell: Some(mapping(vec![(
            "correlators",
            yaml_matrix(&[vec![0, 0, 0], vec![0, 1, 1], vec![0, 1, -1]]),
        )])),
        ..Default::default()
    }
}

/// An XOR game from a sign table: question pair (x, y) is asked with probability proportional to
/// |s\[x\]\[y\]| and won iff (−1)^(a⊕b) = sign s\[x\]\[y\]. Entries must be −1, 0 or 1.
pub fn xor_game(signs: &[Vec<i64>]) -> Result<GameSpec> {
    let qa = signs.len();
    let qb = signs.first().map_or(0, Vec::len);
    if qa == 0 || qb == 0 || signs.iter().any(|r| r.len() != qb) {
        return Err(Error::InvalidArgument(
            "the sign table must be a non-empty rectangle, rows separated by `;`, e.g. \"1,1;1,-1\"".into(),
        ));
    }
    if signs.iter().flatten().any(|s| ![-1, 0, 1].contains(s)) {
        return Err(Error::InvalidArgument(
            "sign table entries must be -1, 0 or 1".into(),
        ));
    }
    if signs.iter().flatten().all(|&s| s == 0) {
        return Err(Error::InvalidArgument(
            "the sign table has no non-zero entry".into(),
        ));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("signs"), yaml_matrix(signs));
    Ok(GameSpec {
        name: Some(format!("xor-{qa}x{qb}")),
        description: Some(
            "XOR game: question pair (x, y) asked with weight |signs[x][y]|, won iff a xor b is 1 exactly when signs[x][y] is -1".into(),
        ),
        constants: Some(constants),
        players: two_players(qa, 2, qb, 2),
        distribution: Some(mapping(vec![(
            "proportional",
            Value::from("abs(signs[x][y])"),
        )])),
        win: Some("(a xor b) == (signs[x][y] < 0)".into()),
        ..Default::default()
    })
}

/// Odd cycle game on n vertices (n odd ≥ 3): x uniform, y = x or x+1 mod n with probability 1/2
/// each; win iff a = b when y = x and a ≠ b otherwise.
pub fn odd_cycle(n: usize) -> Result<GameSpec> {
    if n < 3 || n.is_multiple_of(2) {
        return Err(Error::InvalidArgument(format!(
            "the odd cycle needs an odd n >= 3, got {n}"
        )));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("n"), Value::from(n as u64));
    Ok(GameSpec {
        name: Some(format!("odd-cycle-{n}")),
        description: Some(
            "Odd cycle game: x uniform, y = x or x+1 mod n; answers equal iff y = x".into(),
        ),
        constants: Some(constants),
        players: two_players(n, 2, n, 2),
        distribution: Some(mapping(vec![(
            "proportional",
            Value::from("y == x or y == (x + 1) % n"),
        )])),
        win: Some("(a == b) == (x == y)".into()),
        ..Default::default()
    })
}

/// Magic square game. Alice gets a row r, Bob a column c (uniform). Alice's answer 0..3 encodes
/// the first two entries of her row as bits (the third makes the parity even); Bob's answer
/// encodes the first two entries of his column (the third makes the parity odd). They win iff they
/// agree on the shared cell.
pub fn magic_square() -> GameSpec {
    GameSpec {
        name: Some("magic-square".into()),
        description: Some(
            "Magic square game: rows have even parity, columns odd; win iff the shared cell agrees. Answer bits: entry k<2 is bit k of the answer, entry 2 is fixed by the parity".into(),
        ),
        players: vec![
            PlayerSpec::counted("alice", "r", "a", 3, 4),
            PlayerSpec::counted("bob", "c", "b", 3, 4),
        ],
        distribution: Some(Value::from("uniform")),
        win: Some(
            "(if c < 2 then a // 2 ** c % 2 else (a % 2 + a // 2) % 2) == (if r < 2 then b // 2 ** r % 2 else (b % 2 + b // 2 + 1) % 2)"
                .into(),
        ),
        ..Default::default()
    }
}

/// The n-player GHZ (Mermin parity) game: question bits with even total parity, uniform; win iff
/// the parity of the answers equals half the number of ones among the questions, mod 2.
pub fn ghz(players: usize) -> Result<GameSpec> {
    if !(3..=12).contains(&players) {
        return Err(Error::InvalidArgument(format!(
            "the GHZ game is defined here for 3 to 12 players, got {players}"
        )));
    }
    let specs: Vec<PlayerSpec> = (0..players)
        .map(|i| PlayerSpec::counted(&format!("p{i}"), &format!("x{i}"), &format!("a{i}"), 2, 2))
        .collect();
    let sum = |v: &str| {
        (0..players)
            .map(|i| format!("{v}{i}"))
            .collect::<Vec<_>>()
            .join(" + ")
    };
    Ok(GameSpec {
        name: Some(format!("ghz-{players}")),
        description: Some(
            "GHZ parity game: questions with even parity, uniform; win iff the answers' parity is half the questions' sum mod 2".into(),
        ),
        players: specs,
        distribution: Some(mapping(vec![(
            "proportional",
            Value::from(format!("({}) % 2 == 0", sum("x"))),
        )])),
        win: Some(format!("({}) % 2 == ({}) // 2 % 2", sum("a"), sum("x"))),
        ..Default::default()
    })
}

/// The CGLMP expression I_d for two players with two questions and d answers each, written as a
/// score: each question pair contributes 1 − 2k/(d−1) where k is a signed difference of the
/// answers mod d (summing the usual bracket form term by term gives exactly this weight).
/// Local bound 2, no-signalling bound 4.
pub fn cglmp(d: usize) -> Result<GameSpec> {
    if !(2..=64).contains(&d) {
        return Err(Error::InvalidArgument(format!(
            "CGLMP is built here for 2 to 64 outcomes, got {d}"
        )));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("d"), Value::from(d as u64));
    Ok(GameSpec {
        name: Some(format!("cglmp-{d}")),
        description: Some(
            "CGLMP expression I_d as a sum over the four question pairs (local bound 2)".into(),
        ),
        constants: Some(constants),
        players: two_players(2, d, 2, d),
        distribution: Some(Value::from("sum")),
        score: Some("1 - 2 * (((-1) ** (x + y) * (a - b) - x * (1 - y)) % d) / (d - 1)".into()),
        ..Default::default()
    })
}

/// I3322 in Collins–Gisin form: −p(A1) − 2p(B1) − p(B2) + Σ c_ij p(A_i B_j) with
/// c = \[\[1,1,1\],\[1,1,−1\],\[1,−1,0\]\] (probabilities of the first answer). Local bound 0.
pub fn i3322() -> GameSpec {
    GameSpec {
        name: Some("i3322".into()),
        description: Some(
            "I3322 in Collins-Gisin form (probabilities of answer 0); local bound 0".into(),
        ),
        players: two_players(3, 2, 3, 2),
        bell: Some(mapping(vec![(
            "collins_gisin",
            yaml_matrix(&[
                vec![0, -2, -1, 0],
                vec![-1, 1, 1, 1],
                vec![0, 1, 1, -1],
                vec![0, 1, -1, 0],
            ]),
        )])),
        ..Default::default()
    }
}

/// Chained Bell expression with m questions per player: Σ_k ⟨A_k B_k⟩ + ⟨A_{k+1} B_k⟩ with
/// A_{m} ≡ −A_0 (0-based). Local bound 2m − 2.
pub fn chained_bell(m: usize) -> Result<GameSpec> {
    if !(2..=256).contains(&m) {
        return Err(Error::InvalidArgument(format!(
            "the chained Bell expression needs 2 to 256 settings, got {m}"
        )));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("m"), Value::from(m as u64));
    Ok(GameSpec {
        name: Some(format!("chained-{m}")),
        description: Some(
            "Chained Bell expression: sum over k of E(k,k) + E(k+1,k), the last wrapping with a minus sign".into(),
        ),
        constants: Some(constants),
        players: two_players(m, 2, m, 2),
        distribution: Some(Value::from("sum")),
        score: Some(
            "(if x == y then 1 else if x == (y + 1) % m then (if x == 0 then -1 else 1) else 0) * (-1) ** (a + b)".into(),
        ),
        ..Default::default()
    })
}

/// Mermin's three-player expression ⟨A1B1C1⟩ − ⟨A1B2C2⟩ − ⟨A2B1C2⟩ − ⟨A2B2C1⟩ (questions 0/1
/// for settings 1/2). Local bound 2.
pub fn mermin() -> GameSpec {
    let term = |c: i64, x: i64, y: i64, z: i64| {
        mapping(vec![
            ("coefficient", Value::from(c)),
            (
                "correlator",
                mapping(vec![
                    ("alice", Value::from(x)),
                    ("bob", Value::from(y)),
                    ("carol", Value::from(z)),
                ]),
            ),
        ])
    };
    GameSpec {
        name: Some("mermin".into()),
        description: Some("Mermin expression <A0B0C0> - <A0B1C1> - <A1B0C1> - <A1B1C0>".into()),
        players: vec![
            PlayerSpec::counted("alice", "x", "a", 2, 2),
            PlayerSpec::counted("bob", "y", "b", 2, 2),
            PlayerSpec::counted("carol", "z", "c", 2, 2),
        ],
        bell: Some(mapping(vec![(
            "terms",
            Value::Sequence(vec![
                term(1, 0, 0, 0),
                term(-1, 0, 1, 1),
                term(-1, 1, 0, 1),
                term(-1, 1, 1, 0),
            ]),
        )])),
        ..Default::default()
    }
}

/// `n` players p0, p1, ... with question xi and answer ai, two of each.
fn binary_players(n: usize) -> Vec<PlayerSpec> {
    (0..n)
        .map(|i| PlayerSpec::counted(&format!("p{i}"), &format!("x{i}"), &format!("a{i}"), 2, 2))
        .collect()
}

/// `v0 + v1 + ... + v(n−1)`.
fn sum_of(v: &str, n: usize) -> String {
    (0..n)
        .map(|i| format!("{v}{i}"))
        .collect::<Vec<_>>()
        .join(" + ")
}

fn check_players(what: &str, players: usize) -> Result<()> {
    if !(3..=10).contains(&players) {
        return Err(Error::InvalidArgument(format!(
            "the {what} expression is built here for 3 to 10 players, got {players}"
        )));
    }
    Ok(())
}

/// Mermin's expression for `players` players, Re ∏_k (A_k⁰ + i·A_k¹) = Σ over question tuples
/// with an even number t of ones of (−1)^(t/2) ⟨∏_k A_k^(x_k)⟩ (Mermin 1990, PRL 65, 1838).
/// Local bound 2^((n−1)/2) for odd n and 2^(n/2) for even n, quantum value 2^(n−1) (from
/// memory). Three players give [`mermin`] itself.
pub fn mermin_players(players: usize) -> Result<GameSpec> {
    check_players("Mermin", players)?;
    if players == 3 {
        return Ok(mermin());
    }
    let (t, a) = (sum_of("x", players), sum_of("a", players));
    Ok(GameSpec {
        name: Some(format!("mermin-{players}")),
        description: Some(format!(
            "Mermin expression for {players} players: the sum over questions with an even number t of ones of (-1)^(t/2) times the correlator"
        )),
        players: binary_players(players),
        distribution: Some(Value::from("sum")),
        score: Some(format!(
            "(if ({t}) % 2 == 0 then (-1) ** (({t}) // 2) else 0) * (-1) ** ({a})"
        )),
        ..Default::default()
    })
}

/// Svetlichny's expression for `players` players: Σ over all question tuples of
/// (−1)^(t(t−1)/2) ⟨∏_k A_k^(x_k)⟩ with t the number of ones (Svetlichny 1987, PRD 35, 3066,
/// for three; Collins et al. 2002, PRL 88, 170405 and Seevinck & Svetlichny 2002, PRL 89,
/// 060401, for n). Its value is at most 2^(n−1) for every model in which some group of players
/// shares nonlocal resources only within itself, and 2^(n−1)·√2 for quantum players (from
/// memory): a violation witnesses genuine multipartite nonlocality.
pub fn svetlichny(players: usize) -> Result<GameSpec> {
    check_players("Svetlichny", players)?;
    let (t, a) = (sum_of("x", players), sum_of("a", players));
    Ok(GameSpec {
        name: Some(format!("svetlichny-{players}")),
        description: Some(format!(
            "Svetlichny expression for {players} players: the sum over all questions, with t ones, of (-1)^(t(t-1)/2) times the correlator"
        )),
        players: binary_players(players),
        distribution: Some(Value::from("sum")),
        score: Some(format!(
            "(-1) ** ((({t}) * ({t} - 1)) // 2) * (-1) ** ({a})"
        )),
        ..Default::default()
    })
}

/// CHSH modulo d: questions x, y and answers a, b in 0..d, uniform questions, won iff
/// a + b ≡ x·y (mod d) (d = 2 is the CHSH game).
pub fn chsh_mod(d: usize) -> Result<GameSpec> {
    if !(2..=16).contains(&d) {
        return Err(Error::InvalidArgument(format!(
            "CHSH modulo d is built here for d from 2 to 16, got {d}"
        )));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("d"), Value::from(d as u64));
    Ok(GameSpec {
        name: Some(format!("chsh-mod-{d}")),
        description: Some(format!(
            "CHSH modulo {d}: win iff a + b equals x times y modulo {d}, questions uniform"
        )),
        constants: Some(constants),
        players: two_players(d, d, d, d),
        distribution: Some(Value::from("uniform")),
        win: Some("(a + b) % d == (x * y) % d".into()),
        ..Default::default()
    })
}

/// The tilted CHSH expression β⟨A0⟩ + α⟨A0B0⟩ + α⟨A0B1⟩ + ⟨A1B0⟩ − ⟨A1B1⟩ (Acín, Massar &
/// Pironio 2012, PRL 108, 100402): local bound β + 2α (for α ≥ 1, β ≥ 0), quantum value
/// √((1 + α²)(4 + β²)) (from memory); β = 0, α = 1 is CHSH.
pub fn tilted_chsh(alpha: f64, beta: f64) -> Result<GameSpec> {
    if !alpha.is_finite() || !beta.is_finite() || alpha.abs() > 1e6 || beta.abs() > 1e6 {
        return Err(Error::InvalidArgument(format!(
            "the tilted CHSH expression needs finite α and β of at most 10^6 in size, got {alpha} and {beta}"
        )));
    }
    let mut constants = Mapping::new();
    constants.insert(Value::from("alpha"), Value::from(alpha));
    constants.insert(Value::from("beta"), Value::from(beta));
    Ok(GameSpec {
        name: Some("tilted-chsh".into()),
        description: Some(format!(
            "tilted CHSH expression: beta <A0> + alpha <A0B0> + alpha <A0B1> + <A1B0> - <A1B1>, alpha = {alpha}, beta = {beta}"
        )),
        constants: Some(constants),
        players: two_players(2, 2, 2, 2),
        distribution: Some(Value::from("sum")),
        // Each question pair carries its correlator; Alice's marginal at x = 0 is shared
        // between the two pairs (x, y) = (0, 0) and (0, 1), half each.
        score: Some(
            "(if x == 0 then alpha else (if y == 0 then 1 else -1)) * (-1) ** (a + b) + (if x == 0 then beta / 2 * (-1) ** a else 0)".into(),
        ),
        ..Default::default()
    })
}

/// Parses a sign table written as rows separated by `;` and entries by `,`.
pub fn parse_sign_table(text: &str) -> Result<Vec<Vec<i64>>> {
    text.split(';')
        .map(|row| {
            row.split(',')
                .map(|v| {
                    v.trim().parse::<i64>().map_err(|_| {
                        Error::InvalidArgument(format!(
                            "sign table entry `{}` is not an integer",
                            v.trim()
                        ))
                    })
                })
                .collect()
        })
        .collect()
}

/// A standard family member, by its parameters.
#[derive(Debug, Clone, PartialEq)]
pub enum Family {
    /// [`chsh`].
    Chsh,
    /// [`chsh_expression`].
    ChshExpression,
    /// [`xor_game`] from a sign table.
    Xor {
        /// Rows of signs −1, 0 or 1.
        signs: Vec<Vec<i64>>,
    },
    /// [`odd_cycle`] on `n` vertices.
    OddCycle {
        /// Vertices.
        n: usize,
    },
    /// [`magic_square`].
    MagicSquare,
    /// [`ghz`] with `players` players.
    Ghz {
        /// Players.
        players: usize,
    },
    /// [`cglmp`] with `d` outcomes.
    Cglmp {
        /// Outcomes.
        d: usize,
    },
    /// [`i3322`].
    I3322,
    /// [`chained_bell`] with `m` settings.
    Chained {
        /// Settings.
        m: usize,
    },
    /// [`mermin_players`] with `players` players ([`mermin`] for three).
    Mermin {
        /// Players.
        players: usize,
    },
    /// [`svetlichny`] with `players` players.
    Svetlichny {
        /// Players.
        players: usize,
    },
    /// [`chsh_mod`] modulo `d`.
    ChshMod {
        /// The modulus (questions and answers per player).
        d: usize,
    },
    /// [`tilted_chsh`] with its two weights.
    TiltedChsh {
        /// α, the weight of ⟨A0B0⟩ and ⟨A0B1⟩.
        alpha: f64,
        /// β, the weight of ⟨A0⟩.
        beta: f64,
    },
}

impl Family {
    /// The game file of this member (parameters out of range are an error).
    pub fn spec(&self) -> Result<GameSpec> {
        Ok(match self {
            Family::Chsh => chsh(),
            Family::ChshExpression => chsh_expression(),
            Family::Xor { signs } => xor_game(signs)?,
            Family::OddCycle { n } => odd_cycle(*n)?,
            Family::MagicSquare => magic_square(),
            Family::Ghz { players } => ghz(*players)?,
            Family::Cglmp { d } => cglmp(*d)?,
            Family::I3322 => i3322(),
            Family::Chained { m } => chained_bell(*m)?,
            Family::Mermin { players } => mermin_players(*players)?,
            Family::Svetlichny { players } => svetlichny(*players)?,
            Family::ChshMod { d } => chsh_mod(*d)?,
            Family::TiltedChsh { alpha, beta } => tilted_chsh(*alpha, *beta)?,
        })
    }
}
