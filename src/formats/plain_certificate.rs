//! The plain certificate: a bound anyone can re-prove with exact fractions and nothing of
//! bellgap (`scripts/check_certificate.py` does, in the standard library only). Line-based
//! text; `#` starts a comment. Written by `bellgap npa --exact-certificate FILE`.
//!
//! ```text
//! bellgap plain certificate 1
//! game chsh
//! player alice 2 2                 # name, questions, answers (one line per player, in order)
//! player bob 2 2
//! offset 0                         # the value's constant
//! table 16                         # w(q)·V(a|q) per joint question and answer, question-major,
//! c 1/4                            #   first player's index most significant; exact fractions
//! ...
//! words 13                         # the moment matrix's generating words, in order:
//! w                                #   the empty word (identity)
//! w 0:0:0                          #   player:question:answer projectors, left to right
//! ...
//! claim 246020027264051255/288230376151711744    # the bound proven
//! zbits 122                        # Z = z/2^zbits: the dual moment matrix, upper triangle
//! z 0 0 123456...                  #   row column numerator (entries not listed are 0)
//! lbits 61                         # L = l/2^lbits
//! l 0 0 987...                     #   row column numerator
//! rho 42                           # ρ = rho/2^zbits: Z + ρI − LLᵀ is diagonally dominant
//! end
//! ```
//!
//! The check: every product `u†v` of generating words is reduced (players commute, a projector
//! is idempotent, two answers of one question are orthogonal, each measurement's last answer is
//! the identity minus the others) to a moment, identified with its adjoint's (real moment
//! matrices). With `Z' = Z + ρI` (PSD: `Z' − LLᵀ` is diagonally dominant with a non-negative
//! diagonal), the game's value, `c0 + Σ c_m y_m`, is at most
//! `c0 + ⟨Z', F_identity⟩ + Σ_m |c_m + ⟨Z', F_m⟩|` over every quantum behaviour, since every moment
//! of projectors lies in [−1, 1] (weak duality).

use std::fmt::Write;

use num_rational::BigRational;

/// Everything a plain certificate holds (see the module notes).
#[derive(Debug, Clone)]
pub struct PlainCertificate {
    /// The game's name.
    pub game: String,
    /// (name, questions, answers) per player.
    pub players: Vec<(String, usize, usize)>,
    /// The value's constant.
    pub offset: f64,
    /// `w(q)·V(a|q)` per joint question and answer.
    pub table: Vec<f64>,
    /// Generating words: (player, question, answer) projectors, left to right.
    pub words: Vec<Vec<(usize, usize, usize)>>,
    /// The proven bound, "numerator/denominator".
    pub claim: String,
    /// Bits of Z's (and ρ's) denominator.
    pub z_bits: u32,
    /// Z's upper-triangle numerators (row, column, numerator), non-zero ones.
    pub z: Vec<(usize, usize, i128)>,
    /// Bits of L's denominator.
    pub l_bits: u32,
    /// L's numerators (row, column, numerator), non-zero ones.
    pub l: Vec<(usize, usize, i128)>,
    /// ρ's numerator (over 2^z_bits).
    pub rho: i128,
}

fn fraction(x: f64) -> String {
    match BigRational::from_float(x) {
        Some(r) if r.denom() == &1.into() => r.numer().to_string(),
        Some(r) => format!("{}/{}", r.numer(), r.denom()),
        None => "nan".into(),
    }
}

impl PlainCertificate {
    /// The certificate as text.
    pub fn to_text(&self) -> String {
        let mut out = String::from("bellgap plain certificate 1\n");
        let _ = writeln!(out, "game {}", self.game.replace(char::is_whitespace, "_"));
        for (name, q, a) in &self.players {
            let _ = writeln!(
                out,
                "player {} {q} {a}",
                name.replace(char::is_whitespace, "_")
            );
        }
        let _ = writeln!(out, "offset {}", fraction(self.offset));
        let _ = writeln!(out, "table {}", self.table.len());
        for c in &self.table {
            let _ = writeln!(out, "c {}", fraction(*c));
        }
        let _ = writeln!(out, "words {}", self.words.len());
        for w in &self.words {
            out.push('w');
            for (p, q, a) in w {
                let _ = write!(out, " {p}:{q}:{a}");
            }
            out.push('\n');
        }
        let _ = writeln!(out, "claim {}", self.claim);
        let _ = writeln!(out, "zbits {}", self.z_bits);
        for (r, c, v) in &self.z {
            let _ = writeln!(out, "z {r} {c} {v}");
        }
        let _ = writeln!(out, "lbits {}", self.l_bits);
        for (r, c, v) in &self.l {
            let _ = writeln!(out, "l {r} {c} {v}");
        }
        let _ = writeln!(out, "rho {}", self.rho);
        out.push_str("end\n");
        out
    }
}
