//! One quadrature node's relaxation: the moment matrix over the players' projectors and the
//! adversary's operators, and its semidefinite programme.
//!
//! At a node t ∈ (0, 1) the entropy hierarchy needs
//!
//! ```text
//!   inf over strategies and Z_e of  Σ_e ⟨M_e (Z_e + Z_e* + (1 − t) Z_e* Z_e) + t Z_e Z_e*⟩,
//! ```
//!
//! where M_e is the projector of key outcome e and the Z_e are arbitrary (non-Hermitian)
//! operators of the adversary: they commute with every player's projector but not with each
//! other. Words therefore have two parts: the players' projectors in canonical Collins–Gisin
//! form ([`crate::bounds::quantum::words`]), then the adversary's letters in their order, with
//! no rule between them. The relaxation is a minimisation; it is solved as the maximisation of
//! minus the objective, so the verified upper bound of that maximisation is a verified lower
//! bound on the infimum.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::bounds::quantum::npa::{self, Level};
use crate::bounds::quantum::words::{self as players_words, Projector, Word};
use crate::error::{Error, Result};
use crate::model::scenario::Scenario;
use crate::optim::sdp::{AffineEntry, MatrixBlock, SdpProblem};

/// One of the adversary's letters: Z_e, or its adjoint Z_e*.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct EveLetter {
    /// The key outcome e the operator belongs to.
    pub event: u32,
    /// Whether this is Z_e* rather than Z_e.
    pub adjoint: bool,
}

/// A canonical word: the players' projectors (canonical, Collins–Gisin), then the adversary's
/// letters in order. The empty word is the identity.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
pub struct EntropyWord {
    /// The players' part.
    pub players: Word,
    /// The adversary's part.
    pub eve: Vec<EveLetter>,
}

impl EntropyWord {
    /// The adjoint: the players' part by its own rule, the adversary's reversed and starred.
    pub fn adjoint(&self) -> EntropyWord {
        EntropyWord {
            players: players_words::adjoint(&self.players),
            eve: self
                .eve
                .iter()
                .rev()
                .map(|l| EveLetter {
                    event: l.event,
                    adjoint: !l.adjoint,
                })
                .collect(),
        }
    }

    /// Whether the word equals its adjoint (its moment is real in every relaxation).
    pub fn is_self_adjoint(&self) -> bool {
        *self == self.adjoint()
    }

    /// The product `self · other`, or `None` when it is zero: the players' projectors commute
    /// with the adversary's letters, so the players' parts multiply by their rules and the
    /// adversary's parts are concatenated.
    pub fn times(&self, other: &EntropyWord) -> Option<EntropyWord> {
        let players = players_words::canonical(self.players.iter().chain(&other.players).copied())?;
        let mut eve = self.eve.clone();
        eve.extend(&other.eve);
        Some(EntropyWord { players, eve })
    }

    /// The representative of the word's moment: the smaller of the word and its adjoint.
    pub fn key(&self) -> EntropyWord {
        let a = self.adjoint();
        if a < *self {
            a
        } else {
            self.clone()
        }
    }

    /// How many of the adversary's letters the word has.
    pub fn eve_degree(&self) -> usize {
        self.eve.len()
    }
}

/// Which of the adversary's words join the players' generating words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum AdversaryWords {
    /// Z_e and Z_e* only.
    Letters,
    /// Z_e, Z_e*, and every single projector times each (P Z_e, P Z_e*): the fewest words that
    /// hold the objective's terms M_e Z_e* Z_e for a key event of one or two players.
    WithProjectors,
    /// Every generating word of the players' level times each of Z_e and Z_e*. The default:
    /// at S = 2.5 with the default level it comes within 2.4e-5 of the CHSH curve (16 nodes),
    /// where [`AdversaryWords::WithProjectors`] falls 0.012 short (8 nodes; measured).
    #[default]
    WithPlayerWords,
    /// As [`AdversaryWords::WithPlayerWords`], and the products of two of the adversary's
    /// letters.
    WithPairs,
}

/// Whether the moment matrix is real symmetric or complex Hermitian.
///
/// Both give the same bound. For a real objective and real constraints, if a complex moment
/// matrix Γ is feasible then so is its transpose Γᵀ (the functional w ↦ ⟨w*⟩, also positive),
/// and (Γ + Γᵀ)/2 = Re Γ is real, positive semidefinite, feasible and has the same value; so
/// the real relaxation, with ⟨w⟩ = ⟨w*⟩, loses nothing. The complex one is kept as a check.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum MomentField {
    /// Real symmetric, one variable per moment and its adjoint.
    #[default]
    Real,
    /// Complex Hermitian, solved through the real embedding [[Re, −Im], [Im, Re]] ⪰ 0 (positive
    /// semidefinite exactly when the Hermitian matrix is), with the real and imaginary part of
    /// each moment as variables.
    Complex,
}

/// The generating words and moments of an entropy relaxation.
#[derive(Debug, Clone)]
pub struct EntropyMatrix {
    /// Generating words, indexing rows and columns.
    pub words: Vec<EntropyWord>,
    /// Moment representatives ([`EntropyWord::key`]), one per real variable (without the
    /// identity).
    pub moments: Vec<EntropyWord>,
    /// Per upper-triangle entry: `None` for zero, `Some((k, adjoint))` for the moment `k`
    /// ([`IDENTITY`] for the identity), read as its adjoint when `adjoint` is set.
    pub entries: Vec<Option<(usize, bool)>>,
    /// Representative → variable.
    index: BTreeMap<EntropyWord, usize>,
}

/// Marks the identity in [`EntropyMatrix::entries`].
pub const IDENTITY: usize = usize::MAX;

/// Most generating words an entropy relaxation may have (its moment matrix is dense).
pub const MAX_ENTROPY_WORDS: usize = 2000;

/// Most moments (variables) an entropy relaxation may have: the interior-point method forms a
/// dense matrix of that side (40,000 moments: 12 GiB, below the 16 GiB every SDP may take).
pub const MAX_ENTROPY_MOMENTS: usize = 40_000;

impl EntropyMatrix {
    /// The players' words of `level` and the adversary's words for `events` key outcomes.
    pub fn new(
        s: &Scenario,
        level: &Level,
        events: usize,
        adversary: AdversaryWords,
    ) -> Result<EntropyMatrix> {
        let players = npa::generating_words(s, level)?;
        // The players' words that multiply each adversary letter (the identity first).
        let multipliers: Vec<Word> = match adversary {
            AdversaryWords::Letters => vec![Vec::new()],
            AdversaryWords::WithProjectors => {
                players.iter().filter(|w| w.len() <= 1).cloned().collect()
            }
            AdversaryWords::WithPlayerWords | AdversaryWords::WithPairs => players.clone(),
        };
        let pairs = if adversary == AdversaryWords::WithPairs {
            (2 * events) * (2 * events)
        } else {
            0
        };
        let total = players.len() + 2 * events * multipliers.len() + pairs;
        if total > MAX_ENTROPY_WORDS {
            return Err(Error::TooLarge {
                what: format!("the entropy relaxation at level {}", level.name()),
                estimate: format!("{total} generating words (at most {MAX_ENTROPY_WORDS})"),
                hint: "choose a lower level or fewer adversary words".into(),
            });
        }
        let mut words: Vec<EntropyWord> = players
            .into_iter()
            .map(|players| EntropyWord {
                players,
                eve: Vec::new(),
            })
            .collect();
        let letters: Vec<EveLetter> = (0..events as u32)
            .flat_map(|event| [false, true].map(|adjoint| EveLetter { event, adjoint }))
            .collect();
        for &letter in &letters {
            for p in &multipliers {
                words.push(EntropyWord {
                    players: p.clone(),
                    eve: vec![letter],
                });
            }
        }
        if pairs > 0 {
            for &first in &letters {
                for &second in &letters {
                    words.push(EntropyWord {
                        players: Vec::new(),
                        eve: vec![first, second],
                    });
                }
            }
        }
        let n = words.len();
        let mut index: BTreeMap<EntropyWord, usize> = BTreeMap::new();
        let mut moments = Vec::new();
        let mut entries = Vec::with_capacity(n * (n + 1) / 2);
        let adjoints: Vec<EntropyWord> = words.iter().map(EntropyWord::adjoint).collect();
        for (col, word) in words.iter().enumerate() {
            for adjoint_row in &adjoints[..=col] {
                let entry = adjoint_row.times(word).map(|w| {
                    if w == EntropyWord::default() {
                        return (IDENTITY, false);
                    }
                    let key = w.key();
                    let adjoint = key != w;
                    let next = moments.len();
                    let k = *index.entry(key.clone()).or_insert_with(|| {
                        moments.push(key);
                        next
                    });
                    (k, adjoint)
                });
                entries.push(entry);
            }
        }
        if moments.len() > MAX_ENTROPY_MOMENTS {
            return Err(Error::TooLarge {
                what: format!("the entropy relaxation at level {}", level.name()),
                estimate: format!(
                    "{} moments: the interior-point method's dense system alone would need {:.1} GiB",
                    moments.len(),
                    (moments.len() as f64).powi(2) * 8.0 / (1u64 << 30) as f64
                ),
                hint: "choose a lower level or fewer adversary words".into(),
            });
        }
        Ok(EntropyMatrix {
            words,
            moments,
            entries,
            index,
        })
    }

    /// The side of the moment matrix.
    pub fn size(&self) -> usize {
        self.words.len()
    }

    /// The variable of a moment, if the matrix holds it, and whether the word is the adjoint of
    /// the stored representative.
    pub fn find(&self, w: &EntropyWord) -> Option<(usize, bool)> {
        let key = w.key();
        self.index.get(&key).map(|&k| (k, key != *w))
    }
}

/// A linear functional of the moments: `constant + Σ c · ⟨word⟩`, as a list of words.
pub type MomentTerms = Vec<(EntropyWord, f64)>;

/// The semidefinite programme of one node, with the layout of its variables.
pub struct NodeProblem {
    /// Maximise minus the node's objective over the relaxation.
    pub problem: SdpProblem,
    /// Real part of each moment's variable.
    pub real: Vec<usize>,
    /// Imaginary part of each moment's variable (complex field, not self-adjoint words).
    pub imaginary: Vec<Option<usize>>,
}

/// Builds the node's SDP. `objective` is minimised (a Hermitian combination, so its value is
/// real); `equalities` and `at_least` are constraints on real functionals of the players'
/// moments, each `at_least` entry (functional, least value, most the functional can be). `alpha` bounds the norm of every Z_e at this node: it gives |⟨w⟩| ≤ α^{deg w} for
/// the verified bound's charges.
pub fn node_problem(
    matrix: &EntropyMatrix,
    objective: &[(EntropyWord, f64)],
    equalities: &[(MomentTerms, f64)],
    at_least: &[(MomentTerms, f64, f64)],
    field: MomentField,
    alpha: f64,
) -> Result<NodeProblem> {
    let m = matrix.moments.len();
    let mut real = Vec::with_capacity(m);
    let mut imaginary = Vec::with_capacity(m);
    let mut variables = 0;
    let mut bounds = Vec::new();
    for w in &matrix.moments {
        let bound = alpha.powi(w.eve_degree() as i32);
        real.push(variables);
        bounds.push(bound);
        variables += 1;
        if field == MomentField::Complex && !w.is_self_adjoint() {
            imaginary.push(Some(variables));
            bounds.push(bound);
            variables += 1;
        } else {
            imaginary.push(None);
        }
    }
    // Re⟨w⟩ of a word (through its representative): the real part is shared by a word and its
    // adjoint, so only the real variable enters a real functional of Hermitian combinations.
    let real_terms = |terms: &[(EntropyWord, f64)],
                      what: &str|
     -> Result<(Vec<(usize, f64)>, f64)> {
        let mut out: Vec<(usize, f64)> = Vec::new();
        let mut constant = 0.0;
        for (w, c) in terms {
            if *w == EntropyWord::default() {
                constant += c;
                continue;
            }
            let Some((k, _)) = matrix.find(w) else {
                return Err(Error::InvalidArgument(format!(
                    "the entropy relaxation does not contain a moment its {what} needs; use a higher level"
                )));
            };
            out.push((real[k], *c));
        }
        Ok((out, constant))
    };
    let (terms, constant) = real_terms(objective, "objective")?;
    let mut c = vec![0.0; variables];
    for (v, coef) in terms {
        c[v] -= coef;
    }
    let mut eq_rows = Vec::new();
    for (terms, value) in equalities {
        let (t, k) = real_terms(terms, "constraints")?;
        eq_rows.push((t, value - k));
    }
    // Σ c ⟨w⟩ + k ≥ value as a 1×1 block: the constraint matrices then overlap, and the
    // interior-point method keeps its iterates on them by the Gram projection (as an
    // inequality row it would not, and its residual would be charged at the moments' bounds).
    let mut extra_blocks = Vec::new();
    for (terms, value, most) in at_least {
        let (t, k) = real_terms(terms, "constraints")?;
        extra_blocks.push(MatrixBlock {
            size: 1,
            upper: vec![AffineEntry {
                constant: k - value,
                terms: t,
            }],
            trace_bound: (most - value).max(0.0),
        });
    }
    // ‖Z_e‖ ≤ α, so ⟨Z_e* Z_e⟩ ≤ α² and ⟨Z_e Z_e*⟩ ≤ α² (a restriction that leaves the infimum
    // unchanged, see the hierarchy's notes). Said to the solver as 1×1 blocks: without them the
    // parts of Z_e the objective does not weigh are free, the optimal face is unbounded, and
    // the interior-point method stalls with a gap near 1e-4.
    for w in &matrix.words {
        if !w.players.is_empty() || w.eve.len() != 1 {
            continue;
        }
        let Some(square) = w.adjoint().times(w) else {
            continue;
        };
        let (terms, k) = real_terms(&[(square, 1.0)], "norm bound")?;
        extra_blocks.push(MatrixBlock {
            size: 1,
            upper: vec![AffineEntry {
                constant: alpha * alpha - k,
                terms: terms.into_iter().map(|(v, c)| (v, -c)).collect(),
            }],
            trace_bound: alpha * alpha,
        });
    }
    let n = matrix.size();
    let diagonal_bound: f64 = matrix
        .words
        .iter()
        .map(|w| alpha.powi(2 * w.eve_degree() as i32))
        .sum();
    let entry = |row: usize, col: usize, part: Part| -> AffineEntry {
        let (r, c) = if row <= col { (row, col) } else { (col, row) };
        // Γ_{row,col} = ⟨row* col⟩; the stored entry is for row ≤ col, and Γ_{col,row} is its
        // conjugate.
        let conjugated = row > col;
        match matrix.entries[crate::optim::sdp::upper_index(r, c)] {
            None => AffineEntry::default(),
            Some((IDENTITY, _)) => match part {
                Part::Real => AffineEntry {
                    constant: 1.0,
                    terms: Vec::new(),
                },
                Part::Imaginary => AffineEntry::default(),
            },
            Some((k, adjoint)) => match part {
                Part::Real => AffineEntry {
                    constant: 0.0,
                    terms: vec![(real[k], 1.0)],
                },
                Part::Imaginary => match imaginary[k] {
                    None => AffineEntry::default(),
                    Some(v) => AffineEntry {
                        constant: 0.0,
                        terms: vec![(v, if adjoint ^ conjugated { -1.0 } else { 1.0 })],
                    },
                },
            },
        }
    };
    let block = match field {
        MomentField::Real => MatrixBlock {
            size: n,
            upper: (0..n)
                .flat_map(|col| (0..=col).map(move |row| (row, col)))
                .map(|(row, col)| entry(row, col, Part::Real))
                .collect(),
            trace_bound: diagonal_bound,
        },
        MomentField::Complex => {
            // [[R, −I], [I, R]] with R = Re Γ and I = Im Γ; its upper triangle holds R in both
            // diagonal blocks and −I in the upper-right one.
            let size = 2 * n;
            let upper = (0..size)
                .flat_map(|col| (0..=col).map(move |row| (row, col)))
                .map(|(row, col)| {
                    let (rb, cb) = (row / n, col / n);
                    let (r, c) = (row % n, col % n);
                    match (rb, cb) {
                        (0, 0) | (1, 1) => entry(r, c, Part::Real),
                        _ => {
                            let mut e = entry(r, c, Part::Imaginary);
                            for t in &mut e.terms {
                                t.1 = -t.1;
                            }
                            e
                        }
                    }
                })
                .collect();
            MatrixBlock {
                size,
                upper,
                trace_bound: 2.0 * diagonal_bound,
            }
        }
    };
    Ok(NodeProblem {
        problem: SdpProblem {
            variables,
            objective: c,
            objective_constant: -constant,
            equalities: eq_rows,
            inequalities: Vec::new(),
            blocks: std::iter::once(block).chain(extra_blocks).collect(),
            variable_bound: 1.0,
            variable_bounds: bounds,
        },
        real,
        imaginary,
    })
}

#[derive(Clone, Copy)]
enum Part {
    Real,
    Imaginary,
}

/// A projector word as an entropy word without adversary letters.
pub fn players_only(w: Word) -> EntropyWord {
    EntropyWord {
        players: w,
        eve: Vec::new(),
    }
}

/// `w · letters`, for a players' word `w` (already canonical).
pub fn with_letters(w: &[Projector], letters: &[EveLetter]) -> EntropyWord {
    EntropyWord {
        players: w.to_vec(),
        eve: letters.to_vec(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(player: usize, setting: usize, outcome: usize) -> Projector {
        Projector::new(player, setting, outcome)
    }

    const Z0: EveLetter = EveLetter {
        event: 0,
        adjoint: false,
    };
    const Z0S: EveLetter = EveLetter {
        event: 0,
        adjoint: true,
    };
    const Z1: EveLetter = EveLetter {
        event: 1,
        adjoint: false,
    };

    #[test]
    fn words_multiply_commute_across_and_star_within() {
        let a = with_letters(&[p(0, 0, 0)], &[Z0]);
        let b = with_letters(&[p(1, 1, 0)], &[Z0S, Z1]);
        // The players' projectors pass the adversary's letters; those keep their order.
        let ab = a.times(&b).unwrap();
        assert_eq!(ab.players, vec![p(0, 0, 0), p(1, 1, 0)]);
        assert_eq!(ab.eve, vec![Z0, Z0S, Z1]);
        // (Z0 Z0* Z1)* = Z1* Z0 Z0*.
        let adj = ab.adjoint();
        assert_eq!(
            adj.eve,
            vec![
                EveLetter {
                    event: 1,
                    adjoint: true
                },
                Z0,
                Z0S
            ]
        );
        assert_eq!(adj.adjoint(), ab);
        // Orthogonal outcomes of one measurement give zero, whatever the letters.
        let c = with_letters(&[p(0, 0, 1)], &[Z1]);
        assert!(a.times(&c).is_none());
        // Z0* Z0 is self-adjoint, Z0 Z1 is not; a word and its adjoint share one key.
        assert!(with_letters(&[p(0, 0, 0)], &[Z0S, Z0]).is_self_adjoint());
        let w = with_letters(&[], &[Z0, Z1]);
        assert!(!w.is_self_adjoint());
        assert_eq!(w.key(), w.adjoint().key());
    }

    #[test]
    fn the_moment_matrix_holds_the_objective_words_and_its_embedding_doubles() {
        let party = |name: &str| crate::model::scenario::Party {
            name: name.into(),
            question_labels: vec![0, 1],
            answer_labels: vec![0, 1],
        };
        let s = Scenario::from_parts(
            vec![party("a"), party("b")],
            vec![0.25; 4],
            vec![0.0; 16],
            0.0,
            crate::model::scenario::ScoreKind::Score,
        );
        let m = EntropyMatrix::new(&s, &Level::Joint, 2, AdversaryWords::WithProjectors).unwrap();
        // 1 + 4 projectors + 4 products, then (Z, Z*) × (1 + 4 projectors) for 2 events.
        assert_eq!(m.size(), 9 + 2 * 2 * 5);
        for w in [
            with_letters(&[p(0, 0, 0)], &[Z0]),
            with_letters(&[p(0, 0, 0)], &[Z0S, Z0]),
            with_letters(&[], &[Z0, Z0S]),
        ] {
            assert!(m.find(&w).is_some(), "{w:?}");
        }
        let objective = vec![(with_letters(&[], &[Z0, Z0S]), 1.0)];
        let real = node_problem(&m, &objective, &[], &[], MomentField::Real, 2.0).unwrap();
        let complex = node_problem(&m, &objective, &[], &[], MomentField::Complex, 2.0).unwrap();
        assert_eq!(
            complex.problem.blocks[0].size,
            2 * real.problem.blocks[0].size
        );
        assert!(complex.problem.variables > real.problem.variables);
        // Too many generating words is refused before anything is built.
        assert!(matches!(
            EntropyMatrix::new(&s, &Level::Joint, 1000, AdversaryWords::Letters),
            Err(Error::TooLarge { .. })
        ));
        // Bounds: α^(number of letters) per moment.
        let k = m.find(&with_letters(&[], &[Z0, Z0S])).unwrap().0;
        assert_eq!(real.problem.variable_bounds[real.real[k]], 4.0);
    }
}
