//! Symmetry reduction when relabellings flip the answers of two-answer measurements.
//!
//! Why a second construction. In Collins–Gisin words a flip sends `P₀` to `1 − P₀`, an affine
//! map: moments are not permuted, and the invariant points of the relaxation are cut out by
//! many equations (completeness at every letter of every orbit), which make the reduced
//! problem larger and harder than the full one (I3322 is the standard case: swapping the
//! players and every answer leaves its value on no-signalling behaviours unchanged).
//! In the correlator basis `A = P₀ − P₁ = 2P₀ − 1` a flip is `A ↦ −A`, so every relabelling
//! that fixes the last answer of the measurements with more than two answers acts on words by
//! a *signed permutation*. Hence:
//! - the generating words' span is the same in both bases (`ũ = Σ S_uv v`, S invertible, from
//!   `A = 2P₀ − 1`), so `Γ ⪰ 0` iff `Γ_c = S Γ Sᵀ ⪰ 0`, where `Γ_c(u, v) = ⟨ũ† ṽ⟩` is the
//!   moment matrix in correlator words (`A² = 1`);
//! - a point invariant under the group has one value per orbit of correlator moments, up to the
//!   sign the group carries, and zero on an orbit that maps a moment to its negative: one
//!   variable per orbit, no equations;
//! - the signed permutations are orthogonal, so `Γ_c` commutes with them on invariant points and
//!   splits into isotypic blocks (Serre, Linear Representations of Finite Groups, 1977, §2.6),
//!   whose bases can be taken inside the span of each orbit of generating words: the eigenvectors
//!   of one random central element restricted to each orbit, grouped by eigenvalue across orbits
//!   (the element acts as one scalar per isotypic type). The blocks are sparse.
//!
//! The verified bound does not rely on any of this (see [`super::symmetric`]): the blocks'
//! dual is mapped back to the Collins–Gisin side by `U_k = Sᵀ Q_k`, averaged over the group and
//! checked on the full problem.

use std::collections::HashMap;

use nalgebra::DMatrix;

use super::words::{adjoint, canonical, canonical_with, moment_key, Projector, Word};
use crate::model::symmetry::Relabelling;
use crate::optim::sdp::{upper_index, AffineEntry, MatrixBlock, SdpProblem};

/// Most two-answer letters a word may have for its change of basis (2^letters terms).
const MAX_BINARY_LETTERS: usize = 16;
/// Largest orbit of generating words whose isotypic split is computed (one dense
/// eigendecomposition of its side).
const MAX_ORBIT: usize = 2000;

/// The players whose measurements have two answers (correlator letters), and every player's
/// last answer.
pub(super) struct Letters {
    pub binary: Vec<bool>,
    pub last: Vec<u32>,
}

impl Letters {
    /// Whether the group acts by signed permutations on correlator words: every generator
    /// fixes the last answer of the measurements with more than two answers, and at least one
    /// flips a two-answer measurement (else the Collins–Gisin words are already permuted).
    pub fn applies(&self, generators: &[Relabelling]) -> bool {
        let fixes_last = generators.iter().all(|g| {
            g.answers.iter().enumerate().all(|(i, per_question)| {
                self.binary[i]
                    || per_question
                        .iter()
                        .all(|a| a[self.last[i] as usize] as u32 == self.last[i])
            })
        });
        let flips = generators.iter().any(|g| {
            g.answers
                .iter()
                .enumerate()
                .any(|(i, per_question)| self.binary[i] && per_question.iter().any(|a| a[0] != 0))
        });
        fixes_last && flips
    }

    /// Canonical form of a product of correlator letters (two-answer players, `A² = 1`) and
    /// projectors (the others); `None` when zero.
    fn canonical(&self, ops: impl IntoIterator<Item = Projector>) -> Option<Word> {
        canonical_with(ops, &self.binary)
    }

    /// `g(w)` for a correlator word, as `(word, sign)`; `None` when a projector is sent to a
    /// last answer (excluded by [`Letters::applies`]).
    fn image(&self, g: &Relabelling, w: &[Projector]) -> Option<(Word, f64)> {
        let mut sign = 1.0;
        let mut letters = Vec::with_capacity(w.len());
        for &p in w {
            let (i, x) = (p.player as usize, p.setting as usize);
            let player = g.players[i];
            let a = g.answers[i][x][p.outcome as usize] as u32;
            let outcome = if self.binary[i] {
                if a != 0 {
                    sign = -sign;
                }
                0
            } else if a == self.last[player] {
                return None;
            } else {
                a
            };
            letters.push(Projector {
                player: player as u16,
                setting: g.questions[i][x] as u32,
                outcome,
            });
        }
        Some((self.canonical(letters)?, sign))
    }

    /// A word in one basis as a combination of words of the other: to correlators by
    /// `P₀ = (1 + A)/2`, back by `A = 2P₀ − 1`; other letters stay. `None` when too long.
    fn change_basis(&self, w: &[Projector], to_correlators: bool) -> Option<Vec<(Word, f64)>> {
        let binary_letters = w.iter().filter(|p| self.binary[p.player as usize]).count();
        if binary_letters > MAX_BINARY_LETTERS {
            return None;
        }
        let (kept, dropped) = if to_correlators {
            (0.5, 0.5)
        } else {
            (2.0, -1.0)
        };
        let mut terms: Vec<(Vec<Projector>, f64)> = vec![(Vec::new(), 1.0)];
        for &p in w {
            if self.binary[p.player as usize] {
                let mut next = Vec::with_capacity(2 * terms.len());
                for (t, c) in terms {
                    let mut with = t.clone();
                    with.push(p);
                    next.push((with, c * kept));
                    next.push((t, c * dropped));
                }
                terms = next;
            } else {
                terms.iter_mut().for_each(|(t, _)| t.push(p));
            }
        }
        let mut merged: HashMap<Word, f64> = HashMap::new();
        for (t, c) in terms {
            let word = if to_correlators {
                self.canonical(t)
            } else {
                canonical(t)
            };
            if let Some(word) = word {
                *merged.entry(word).or_insert(0.0) += c;
            }
        }
        Some(merged.into_iter().filter(|(_, c)| *c != 0.0).collect())
    }
}

/// How a full moment is read back from the reduced variables: its entry `(row, col)` of the
/// full matrix (coefficient `scale`) through `Γ = T Γ_c Tᵀ`.
pub(super) struct CorrelatorLift {
    /// Rows of T: each generating word in correlator words.
    to_correlators: Vec<Vec<(usize, f64)>>,
    /// `Γ_c` in the reduced variables (upper triangle).
    gamma: Vec<AffineEntry>,
    /// Per full moment: `(row, col, coefficient)` of one entry that holds it alone.
    positions: Vec<(usize, usize, f64)>,
}

impl CorrelatorLift {
    /// The full entry at `(row, col)` as an affine function of the reduced variables, fed to
    /// `add(variable or None for the constant, coefficient)`.
    fn entry(&self, row: usize, col: usize, add: &mut impl FnMut(Option<usize>, f64)) {
        for &(a, ta) in &self.to_correlators[row] {
            for &(b, tb) in &self.to_correlators[col] {
                let e = &self.gamma[upper_index(a.min(b), a.max(b))];
                let w = ta * tb;
                if e.constant != 0.0 {
                    add(None, w * e.constant);
                }
                for &(v, c) in &e.terms {
                    add(Some(v), w * c);
                }
            }
        }
    }

    /// The full moment vector at reduced variables `x`.
    pub fn lift(&self, x: &[f64]) -> Vec<f64> {
        self.positions
            .iter()
            .map(|&(row, col, scale)| {
                let mut value = 0.0;
                self.entry(row, col, &mut |v, c| {
                    value += c * v.map_or(1.0, |v| x[v]);
                });
                value / scale
            })
            .collect()
    }
}

/// The reduced problem in correlator words (split into isotypic blocks when the action has
/// more than one type), the bases `U_k` that carry its blocks' dual back to the Collins–Gisin
/// side, and the primal lift; `index` maps each generating word to its position. `None` when a
/// word or moment leaves the level under the action, or the problem is not one block (the
/// relaxation is then solved in full: the Collins–Gisin construction would need the equations
/// this one avoids).
pub(super) fn reduce(
    letters: &Letters,
    elements: &[Relabelling],
    generators: &[Relabelling],
    weights: Option<&[f64]>,
    words: &[Word],
    index: &HashMap<&Word, usize>,
    problem: &SdpProblem,
) -> Option<(SdpProblem, Vec<DMatrix<f64>>, CorrelatorLift)> {
    if problem.blocks.len() != 1
        || !problem.equalities.is_empty()
        || !problem.inequalities.is_empty()
    {
        return None;
    }
    let n = words.len();
    let lookup = |terms: Vec<(Word, f64)>| -> Option<Vec<(usize, f64)>> {
        terms
            .into_iter()
            .map(|(w, c)| index.get(&w).map(|&k| (k, c)))
            .collect()
    };
    // S (correlator words in Collins–Gisin words) and T = S⁻¹ (the other way), row by row.
    let to_projectors: Vec<Vec<(usize, f64)>> = words
        .iter()
        .map(|u| lookup(letters.change_basis(u, false)?))
        .collect::<Option<_>>()?;
    let to_correlators: Vec<Vec<(usize, f64)>> = words
        .iter()
        .map(|u| lookup(letters.change_basis(u, true)?))
        .collect::<Option<_>>()?;
    // The group on correlator words: a signed permutation per element (image, sign).
    let act = |g: &Relabelling| -> Option<Vec<(usize, f64)>> {
        words
            .iter()
            .map(|u| {
                let (w, sign) = letters.image(g, u)?;
                index.get(&w).map(|&k| (k, sign))
            })
            .collect()
    };
    let actions: Vec<Vec<(usize, f64)>> = elements.iter().map(act).collect::<Option<_>>()?;
    let generator_actions: Vec<Vec<(usize, f64)>> =
        generators.iter().map(act).collect::<Option<_>>()?;

    // Γ_c's entries as correlator moments, and the moments' signed orbits.
    let mut moment_id: HashMap<Word, usize> = HashMap::new();
    let mut moment_words: Vec<Word> = Vec::new();
    let mut cells: Vec<Option<Option<usize>>> = Vec::with_capacity(n * (n + 1) / 2);
    for col in 0..n {
        for row in 0..=col {
            let product = letters.canonical(
                adjoint(&words[row])
                    .into_iter()
                    .chain(words[col].iter().copied()),
            );
            cells.push(product.map(|w| {
                (!w.is_empty()).then(|| {
                    let key = moment_key(w);
                    let next = moment_words.len();
                    *moment_id.entry(key.clone()).or_insert_with(|| {
                        moment_words.push(key);
                        next
                    })
                })
            }));
        }
    }
    const UNSET: usize = usize::MAX;
    let mut orbit = vec![UNSET; moment_words.len()];
    let mut sign = vec![0.0; moment_words.len()];
    let mut vanishes: Vec<bool> = Vec::new();
    for start in 0..moment_words.len() {
        if orbit[start] != UNSET {
            continue;
        }
        let id = vanishes.len();
        let mut zero = false;
        orbit[start] = id;
        sign[start] = 1.0;
        let mut stack = vec![start];
        while let Some(k) = stack.pop() {
            for g in generators {
                let (w, s) = letters.image(g, &moment_words[k])?;
                let j = *moment_id.get(&moment_key(w))?;
                let s = s * sign[k];
                if orbit[j] == UNSET {
                    orbit[j] = id;
                    sign[j] = s;
                    stack.push(j);
                } else if sign[j] != s {
                    zero = true;
                }
            }
        }
        vanishes.push(zero);
    }
    // One variable per orbit that does not vanish.
    let mut variable = vec![UNSET; vanishes.len()];
    let mut reduced = 0;
    for (o, &z) in vanishes.iter().enumerate() {
        if !z {
            variable[o] = reduced;
            reduced += 1;
        }
    }
    let gamma: Vec<AffineEntry> = cells
        .iter()
        .map(|cell| match cell {
            None => AffineEntry::default(),
            Some(None) => AffineEntry {
                constant: 1.0,
                terms: Vec::new(),
            },
            Some(Some(k)) => match variable[orbit[*k]] {
                UNSET => AffineEntry::default(),
                v => AffineEntry {
                    constant: 0.0,
                    terms: vec![(v, sign[*k])],
                },
            },
        })
        .collect();

    // The primal lift and the objective, through one entry per full moment.
    let mut positions = vec![(UNSET, UNSET, 0.0); problem.variables];
    let block = &problem.blocks[0];
    for col in 0..n {
        for row in 0..=col {
            let e = &block.upper[upper_index(row, col)];
            if let [(k, c)] = e.terms[..] {
                if e.constant == 0.0 && c != 0.0 && positions[k].0 == UNSET {
                    positions[k] = (row, col, c);
                }
            }
        }
    }
    if positions.iter().any(|p| p.0 == UNSET) {
        return None;
    }
    let lift = CorrelatorLift {
        to_correlators,
        gamma,
        positions,
    };
    let mut objective = vec![0.0; reduced];
    let mut objective_constant = problem.objective_constant;
    for (k, &c) in problem.objective.iter().enumerate() {
        if c == 0.0 {
            continue;
        }
        let (row, col, scale) = lift.positions[k];
        lift.entry(row, col, &mut |v, w| match v {
            Some(v) => objective[v] += c * w / scale,
            None => objective_constant += c * w / scale,
        });
    }

    // Isotypic bases inside each orbit of generating words (Q, sparse columns), or one block.
    let columns = weights
        .and_then(|w| isotypic_columns(&actions, &generator_actions, w, n))
        .unwrap_or_else(|| vec![(0..n).map(|k| vec![(k, 1.0)]).collect()]);
    // Γ_c has diagonal entries ⟨ũ†ũ⟩ ≤ 1 (products of unitaries and projectors), so every
    // block of an orthogonal basis has trace at most n.
    let blocks: Vec<MatrixBlock> = columns
        .iter()
        .map(|q| sparse_block(&lift.gamma, q, n as f64))
        .collect();
    // U_k = Sᵀ Q_k: column a is Σ_r q_ra (row r of S)ᵀ.
    let bases: Vec<DMatrix<f64>> = columns
        .iter()
        .map(|q| {
            let mut u = DMatrix::<f64>::zeros(n, q.len());
            for (a, column) in q.iter().enumerate() {
                for &(r, qr) in column {
                    for &(v, s) in &to_projectors[r] {
                        u[(v, a)] += qr * s;
                    }
                }
            }
            u
        })
        .collect();
    let reduced_problem = SdpProblem {
        variables: reduced,
        objective,
        objective_constant,
        equalities: Vec::new(),
        inequalities: Vec::new(),
        blocks,
        // Correlator moments are expectations of contractions.
        variable_bound: problem.variable_bound.max(1.0),
        // Per-variable bounds are never reduced (`symmetric::reduce` declines them).
        variable_bounds: Vec::new(),
    };
    Some((reduced_problem, bases, lift))
}

/// Columns of a basis, each as `(word, coefficient)` pairs.
type SparseColumns = Vec<Vec<(usize, f64)>>;

/// `Qᵀ Γ_c Q` for sparse columns `q`, as a block.
fn sparse_block(gamma: &[AffineEntry], q: &SparseColumns, trace_bound: f64) -> MatrixBlock {
    let nk = q.len();
    let mut upper = Vec::with_capacity(nk * (nk + 1) / 2);
    let mut acc: HashMap<usize, f64> = HashMap::new();
    for b in 0..nk {
        for a in 0..=b {
            acc.clear();
            let mut constant = 0.0;
            for &(r, qr) in &q[a] {
                for &(c, qc) in &q[b] {
                    let e = &gamma[upper_index(r.min(c), r.max(c))];
                    let w = qr * qc;
                    constant += w * e.constant;
                    for &(v, coefficient) in &e.terms {
                        *acc.entry(v).or_insert(0.0) += w * coefficient;
                    }
                }
            }
            let mut terms: Vec<(usize, f64)> = acc
                .iter()
                .filter(|(_, c)| c.abs() > 1e-14)
                .map(|(&v, &c)| (v, c))
                .collect();
            terms.sort_by_key(|t| t.0);
            upper.push(AffineEntry {
                constant: if constant.abs() > 1e-14 {
                    constant
                } else {
                    0.0
                },
                terms,
            });
        }
    }
    MatrixBlock {
        size: nk,
        upper,
        trace_bound,
    }
}

/// The isotypic components of a signed-permutation action, each as a list of orthonormal
/// columns supported on one orbit of words; `None` when there is a single component, an orbit
/// is too large, or the check fails (every generator must map each orbit's part of each
/// component into itself).
fn isotypic_columns(
    actions: &[Vec<(usize, f64)>],
    generators: &[Vec<(usize, f64)>],
    weights: &[f64],
    n: usize,
) -> Option<Vec<SparseColumns>> {
    // Orbits of words.
    let mut orbit_of = vec![usize::MAX; n];
    let mut orbits: Vec<Vec<usize>> = Vec::new();
    for start in 0..n {
        if orbit_of[start] != usize::MAX {
            continue;
        }
        let id = orbits.len();
        orbit_of[start] = id;
        let mut members = vec![start];
        let mut next = 0;
        while next < members.len() {
            let u = members[next];
            next += 1;
            for g in generators {
                let v = g[u].0;
                if orbit_of[v] == usize::MAX {
                    orbit_of[v] = id;
                    members.push(v);
                }
            }
        }
        if members.len() > MAX_ORBIT {
            return None;
        }
        orbits.push(members);
    }
    // Per orbit: the central element C = Σ_g w_g ρ_g restricted to it (ρ_g e_u = s e_g(u)),
    // symmetrised, and its eigenvectors.
    let mut pieces: Vec<(f64, usize, Vec<f64>)> = Vec::new();
    let mut local: Vec<HashMap<usize, usize>> = Vec::with_capacity(orbits.len());
    for (o, members) in orbits.iter().enumerate() {
        let position: HashMap<usize, usize> =
            members.iter().enumerate().map(|(k, &u)| (u, k)).collect();
        let size = members.len();
        let mut c = DMatrix::<f64>::zeros(size, size);
        for (rho, &w) in actions.iter().zip(weights) {
            for (k, &u) in members.iter().enumerate() {
                let (v, s) = rho[u];
                c[(position[&v], k)] += w * s;
            }
        }
        let h = (&c + c.transpose()) * 0.5;
        let eig = h.symmetric_eigen();
        for k in 0..size {
            pieces.push((
                eig.eigenvalues[k],
                o,
                eig.eigenvectors.column(k).iter().copied().collect(),
            ));
        }
        local.push(position);
    }
    pieces.sort_by(|a, b| a.0.total_cmp(&b.0));
    let scale = pieces.iter().fold(1.0f64, |m, p| m.max(p.0.abs()));
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for k in 0..pieces.len() {
        match groups.last_mut() {
            Some(g) if (pieces[k].0 - pieces[*g.last().unwrap()].0).abs() <= 1e-8 * scale => {
                g.push(k)
            }
            _ => groups.push(vec![k]),
        }
    }
    if groups.len() < 2 {
        return None;
    }
    // Check: per generator, orbit and component, the image of each vector stays in the span of
    // that component's vectors on the orbit (orthonormal, so the residual after projection).
    for group in &groups {
        let mut by_orbit: HashMap<usize, Vec<usize>> = HashMap::new();
        for &k in group {
            by_orbit.entry(pieces[k].1).or_default().push(k);
        }
        for (&o, ks) in &by_orbit {
            let members = &orbits[o];
            for g in generators {
                for &k in ks {
                    let mut image = vec![0.0; members.len()];
                    for (i, &u) in members.iter().enumerate() {
                        let (v, s) = g[u];
                        image[local[o][&v]] += s * pieces[k].2[i];
                    }
                    let mut residual = image.clone();
                    for &j in ks {
                        let dot: f64 = image.iter().zip(&pieces[j].2).map(|(a, b)| a * b).sum();
                        residual
                            .iter_mut()
                            .zip(&pieces[j].2)
                            .for_each(|(r, b)| *r -= dot * b);
                    }
                    if residual.iter().fold(0.0f64, |m, r| m.max(r.abs())) > 1e-8 {
                        return None;
                    }
                }
            }
        }
    }
    Some(
        groups
            .iter()
            .map(|group| {
                group
                    .iter()
                    .map(|&k| {
                        let (_, o, v) = &pieces[k];
                        orbits[*o]
                            .iter()
                            .zip(v)
                            .filter(|(_, c)| c.abs() > 1e-15)
                            .map(|(&u, &c)| (u, c))
                            .collect()
                    })
                    .collect()
            })
            .collect(),
    )
}
