//! Symmetry reduction of the entropy relaxations: the game's relabellings that keep the target
//! (each key player and its question) in place, with the key outcomes permuted as the target's
//! answers are, merge moments into orbits as they do for NPA ([`crate::bounds::quantum::symmetric`]).
//!
//! Why it is exact. Such a relabelling g maps the players' projectors to projectors and each
//! adversary operator Z_e to Z_{π(e)}, where π permutes the key outcomes as g permutes the
//! target's answers; it is a *-automorphism of the algebra the words live in. Each node's
//! objective Σ_e ⟨M̂_e (Z_e + Z_e* + (1 − t) Z_e* Z_e) + t Z_e Z_e*⟩ is invariant (the sum runs
//! over every e, and the preprocessing channel T(e|a) depends only on whether e = a), the score
//! is invariant on no-signalling behaviours, and the norm bounds on the Z_e are permuted among
//! themselves. When g maps the span of the generating words into itself, a feasible moment
//! vector's image is feasible with the same value, and the group average is an optimal point
//! constant on orbits of words. So merging each orbit into one variable keeps every node's
//! value (Gatermann & Parrilo 2004, J. Pure Appl. Algebra 192, 95–128).
//!
//! The verified bound does not rely on this argument: the reduced problem's dual is averaged
//! over the elements and checked on the full relaxation, every residual charged
//! ([`EntropyReduction::lift_dual`]).

use std::collections::HashMap;

use super::relaxation::{EntropyMatrix, EntropyWord, EveLetter};
use crate::bounds::quantum::symmetric::{self, Action};
use crate::error::Result;
use crate::model::scenario::{digits, Scenario};
use crate::model::symmetry::{symmetries, symmetries_modulo_no_signalling, Relabelling};
use crate::optim::sdp::{AffineEntry, MatrixBlock, SdpProblem, SdpSolution};

/// Most group elements looked at (the whole group is listed before the target's stabiliser is
/// taken from it).
const MAX_ELEMENTS: usize = 5_000;

/// Most entries of the elements' actions on the generating words held for the averaging.
const MAX_ACTION_TERMS: usize = 20_000_000;

/// A reduction of one hierarchy's relaxations (every node shares it).
pub struct EntropyReduction {
    /// Elements averaged over (the stabiliser of the target, identity included).
    pub order: usize,
    /// Variables after merging.
    pub moments: usize,
    /// Each moment as an affine expression of the free moments (the reduced variables):
    /// `(constant, terms)`.
    expressions: Vec<Affine>,
    /// Per reduced variable, the moment it is.
    free: Vec<usize>,
    /// A milder reduction by the same elements: moments merged when some element maps one's
    /// word to the other's (orbits of words), each orbit one variable. More variables than the
    /// affine reduction, but each a single moment, as in the full problem; `(expressions,
    /// free moments)`.
    orbits: (Vec<Affine>, Vec<usize>),
    /// Per element, its action on the generating words.
    actions: Vec<Action>,
    /// Per element, the image of each norm-bound word (indices into `norm_words`).
    norm_images: Vec<Vec<usize>>,
    /// The words Z_e and Z_e* whose squares the norm-bound blocks bound, in block order.
    norm_words: usize,
}

/// The permutation of the key outcomes that `g` induces, or `None` when `g` moves a target
/// player or question.
fn event_permutation(g: &Relabelling, s: &Scenario, parts: &[(usize, usize)]) -> Option<Vec<u32>> {
    if parts
        .iter()
        .any(|&(p, x)| g.players[p] != p || g.questions[p][x] != x)
    {
        return None;
    }
    let radices: Vec<usize> = parts
        .iter()
        .map(|&(p, _)| s.parties()[p].answers())
        .collect();
    let count: usize = radices.iter().product();
    let mut d = vec![0; radices.len()];
    Some(
        (0..count)
            .map(|e| {
                digits(e, &radices, &mut d);
                let mut image = 0;
                for (k, &(p, x)) in parts.iter().enumerate() {
                    image = image * radices[k] + g.answers[p][x][d[k]];
                }
                image as u32
            })
            .collect(),
    )
}

fn letters_image(letters: &[EveLetter], pi: &[u32]) -> Vec<EveLetter> {
    letters
        .iter()
        .map(|l| EveLetter {
            event: pi[l.event as usize],
            adjoint: l.adjoint,
        })
        .collect()
}

/// `g` on the generating words (`g(u) = Σ ρ_uv v`), or `None` when it leaves their span.
fn action(
    g: &Relabelling,
    pi: &[u32],
    words: &[EntropyWord],
    index: &HashMap<&EntropyWord, usize>,
    last: &[u32],
) -> Option<Action> {
    words
        .iter()
        .map(|u| {
            let eve = letters_image(&u.eve, pi);
            symmetric::expand(g, &u.players, last)?
                .into_iter()
                .map(|(v, c)| {
                    let w = EntropyWord {
                        players: v,
                        eve: eve.clone(),
                    };
                    index.get(&w).map(|&k| (k as u32, c))
                })
                .collect()
        })
        .collect()
}

impl EntropyReduction {
    /// The reduction of the hierarchy of the target `parts` ((player, question) of each key
    /// answer) on `matrix` (real moment matrices), or `None` when no relabelling of the game
    /// keeps the target and the generating words' span.
    pub fn new(
        s: &Scenario,
        parts: &[(usize, usize)],
        matrix: &EntropyMatrix,
    ) -> Option<EntropyReduction> {
        let group = symmetries_modulo_no_signalling(s)
            .filter(|g| !g.generators.is_empty())
            .or_else(|| symmetries(s))?;
        if group.generators.is_empty() {
            return None;
        }
        let elements = symmetric::closure(s, &group.generators, MAX_ELEMENTS)?;
        let last: Vec<u32> = s.parties().iter().map(|p| p.answers() as u32 - 1).collect();
        let words = &matrix.words;
        let index: HashMap<&EntropyWord, usize> =
            words.iter().enumerate().map(|(k, w)| (w, k)).collect();
        // The stabiliser of the target whose elements keep the span: both are subgroups, so
        // their intersection is one, and its elements are averaged over.
        let mut kept: Vec<(Relabelling, Vec<u32>, Action)> = Vec::new();
        let mut terms = 0usize;
        for g in elements {
            let Some(pi) = event_permutation(&g, s, parts) else {
                continue;
            };
            let Some(a) = action(&g, &pi, words, &index, &last) else {
                continue;
            };
            terms += a.iter().map(Vec::len).sum::<usize>();
            if terms > MAX_ACTION_TERMS {
                return None;
            }
            kept.push((g, pi, a));
        }
        if kept.len() < 2 {
            return None;
        }
        // The invariant moment vectors: y = T_g y + t_g for every kept g, where row k of the
        // affine map T_g is the expansion of g(w_k) in the moments (a projector sent to a last
        // answer becomes 1 − Σ others). For a group that is y = P y + p with P, p the averages
        // (the average is the projection onto the invariant set), solved per connected
        // component of the rows' supports into free moments and affine expressions of them.
        let moments = &matrix.moments;
        let m = moments.len();
        let scale = 1.0 / kept.len() as f64;
        let mut rows: Vec<HashMap<usize, f64>> = vec![HashMap::new(); m];
        let mut constants = vec![0.0; m];
        for (g, pi, _) in &kept {
            for (k, w) in moments.iter().enumerate() {
                let eve = letters_image(&w.eve, pi);
                for (v, c) in symmetric::expand(g, &w.players, &last)? {
                    let image = EntropyWord {
                        players: v,
                        eve: eve.clone(),
                    };
                    if image == EntropyWord::default() {
                        constants[k] += c * scale;
                        continue;
                    }
                    let (j, _) = matrix.find(&image)?;
                    *rows[k].entry(j).or_insert(0.0) += c * scale;
                }
            }
        }
        let expressions = solve_invariance(&rows, &constants)?;
        let reduced = expressions.free;
        if reduced == m {
            return None;
        }
        // The norm-bound words (Z_e and Z_e* alone), in the order their blocks are built.
        let norm: Vec<usize> = (0..words.len())
            .filter(|&k| words[k].players.is_empty() && words[k].eve.len() == 1)
            .collect();
        let position: HashMap<usize, usize> =
            norm.iter().enumerate().map(|(i, &k)| (k, i)).collect();
        let norm_images: Vec<Vec<usize>> = kept
            .iter()
            .map(|(_, _, a)| {
                norm.iter()
                    .map(|&k| match a[k].as_slice() {
                        [(j, c)] if *c == 1.0 => position.get(&(*j as usize)).copied(),
                        _ => None,
                    })
                    .collect::<Option<Vec<usize>>>()
            })
            .collect::<Option<_>>()?;
        let orbits = orbit_classes(&kept, moments);
        Some(EntropyReduction {
            order: kept.len(),
            moments: reduced,
            expressions: expressions.moments,
            free: expressions.free_moments,
            orbits,
            actions: kept.into_iter().map(|(_, _, a)| a).collect(),
            norm_images,
            norm_words: norm.len(),
        })
    }

    /// The milder reduction by orbits of words (see `orbits`), with the same dual averaging.
    pub fn by_orbits(&self) -> EntropyReduction {
        EntropyReduction {
            order: self.order,
            moments: self.orbits.1.len(),
            expressions: self.orbits.0.clone(),
            free: self.orbits.1.clone(),
            orbits: self.orbits.clone(),
            actions: self.actions.clone(),
            norm_images: self.norm_images.clone(),
            norm_words: self.norm_words,
        }
    }

    /// The node's problem in the free moments: every moment replaced by its expression.
    pub fn reduce(&self, problem: &SdpProblem) -> SdpProblem {
        let substitute = |terms: &[(usize, f64)]| -> (f64, Vec<(usize, f64)>) {
            let mut constant = 0.0;
            let mut out: HashMap<usize, f64> = HashMap::new();
            for &(k, c) in terms {
                let (k0, expression) = &self.expressions[k];
                constant += c * k0;
                for &(u, d) in expression {
                    *out.entry(u).or_insert(0.0) += c * d;
                }
            }
            let mut out: Vec<(usize, f64)> = out.into_iter().filter(|&(_, c)| c != 0.0).collect();
            out.sort_unstable_by_key(|&(u, _)| u);
            (constant, out)
        };
        let dense: Vec<(usize, f64)> = problem
            .objective
            .iter()
            .enumerate()
            .filter(|&(_, &c)| c != 0.0)
            .map(|(k, &c)| (k, c))
            .collect();
        let (objective_shift, objective_terms) = substitute(&dense);
        let mut objective = vec![0.0; self.moments];
        for (u, c) in objective_terms {
            objective[u] = c;
        }
        let rows = |rows: &[(Vec<(usize, f64)>, f64)]| -> Vec<(Vec<(usize, f64)>, f64)> {
            rows.iter()
                .map(|(terms, rhs)| {
                    let (k, t) = substitute(terms);
                    (t, rhs - k)
                })
                .collect()
        };
        SdpProblem {
            variables: self.moments,
            objective,
            objective_constant: problem.objective_constant + objective_shift,
            equalities: rows(&problem.equalities),
            inequalities: rows(&problem.inequalities),
            blocks: problem
                .blocks
                .iter()
                .map(|b| MatrixBlock {
                    size: b.size,
                    upper: b
                        .upper
                        .iter()
                        .map(|e| {
                            let (k, terms) = substitute(&e.terms);
                            AffineEntry {
                                constant: e.constant + k,
                                terms,
                            }
                        })
                        .collect(),
                    trace_bound: b.trace_bound,
                })
                .collect(),
            variable_bound: problem.variable_bound,
            variable_bounds: if problem.variable_bounds.is_empty() {
                Vec::new()
            } else {
                self.free
                    .iter()
                    .map(|&k| problem.variable_bounds[k])
                    .collect()
            },
        }
    }

    /// A reduced problem's solution as one of the full problem `full`: the moments copied from
    /// their orbits, the dual averaged ([`EntropyReduction::lift_dual`]) and the verified bound
    /// recomputed from it on the full problem.
    pub fn lift(&self, full: &SdpProblem, reduced: SdpSolution) -> Result<SdpSolution> {
        let y: Vec<f64> = self
            .expressions
            .iter()
            .map(|(k, terms)| k + terms.iter().map(|&(u, c)| c * reduced.y[u]).sum::<f64>())
            .collect();
        let z = self.lift_dual(full, &reduced.z);
        let assembled = full.assemble();
        let (certified, z) = assembled.best_certified_bound(&z)?;
        Ok(SdpSolution {
            primal: full.primal_value(&y),
            dual: assembled.dual_value(&z),
            certified,
            y,
            z,
            ..reduced
        })
    }

    /// The reduced problem's dual vector averaged over the elements: a dual vector of the full
    /// problem `full` (same rows and blocks as the reduced one). The moment matrix's dual by
    /// congruence; the norm-bound blocks' duals permuted as their words are; the rest (the
    /// constraints on the players' moments, invariant) carried over.
    pub fn lift_dual(&self, full: &SdpProblem, z: &[f64]) -> Vec<f64> {
        let n = full.blocks[0].size;
        let head = full.equalities.len() + full.inequalities.len();
        let packed = n * (n + 1) / 2;
        let sqrt2 = std::f64::consts::SQRT_2;
        let zm: Vec<f64> = (0..n * n)
            .map(|i| {
                let (r, c) = (i % n, i / n);
                let v = z[head + crate::optim::sdp::upper_index(r.min(c), r.max(c))];
                if r == c {
                    v
                } else {
                    v / sqrt2
                }
            })
            .collect();
        let mut out = z[..head].to_vec();
        out.extend(symmetric::averaged_matrix(&self.actions, &zm, n));
        // The 1×1 blocks: the constraints' first, then the norm bounds' (the last
        // `norm_words` blocks).
        let rest = &z[head + packed..];
        let first_norm = rest.len() - self.norm_words;
        out.extend_from_slice(&rest[..first_norm]);
        let scale = 1.0 / self.norm_images.len() as f64;
        let mut norms = vec![0.0; self.norm_words];
        for images in &self.norm_images {
            for (i, &j) in images.iter().enumerate() {
                norms[j] += rest[first_norm + i] * scale;
            }
        }
        out.extend(norms);
        out
    }
}

/// The orbits of the moments' words under the elements: two moments are merged when an element
/// maps one's word (its projectors as they stand, a last answer kept as itself) to the other's,
/// directly or through words outside the moments (equal at every invariant point either way).
fn orbit_classes(
    kept: &[(Relabelling, Vec<u32>, Action)],
    moments: &[EntropyWord],
) -> (Vec<Affine>, Vec<usize>) {
    let image = |g: &Relabelling, pi: &[u32], w: &EntropyWord| -> EntropyWord {
        let players = crate::bounds::quantum::words::canonical(
            w.players.iter().map(|&p| symmetric::image(g, p)),
        )
        .unwrap_or_default();
        EntropyWord {
            players,
            eve: letters_image(&w.eve, pi),
        }
        .key()
    };
    let classes = symmetric::orbit_classes(moments, |w: &EntropyWord| {
        kept.iter().map(|(g, pi, _)| image(g, pi, w)).collect()
    });
    let mut free = Vec::new();
    let expressions = classes
        .iter()
        .enumerate()
        .map(|(k, &c)| {
            if c == free.len() {
                free.push(k);
            }
            (0.0, vec![(c, 1.0)])
        })
        .collect();
    (expressions, free)
}

/// An affine expression `(constant, terms)` of some variables.
type Affine = (f64, Vec<(usize, f64)>);

/// The invariant moments as free moments and affine expressions of them.
struct Invariant {
    /// Per moment, `(constant, terms in the free moments)`.
    moments: Vec<Affine>,
    /// How many moments are free.
    free: usize,
    /// Per free variable, its moment.
    free_moments: Vec<usize>,
}

/// Pivots below this (relative to the row's largest entry) count as zero: the averaged maps'
/// entries are small rationals, so true pivots are far above it.
const PIVOT_TOLERANCE: f64 = 1e-9;

/// Most moments one connected component may have (its elimination is dense, cubic).
const MAX_COMPONENT: usize = 3_000;

/// Solves `y = P y + p` (P as sparse rows) by Gauss–Jordan elimination per connected
/// component of the rows' supports: the pivots' moments become affine expressions of the
/// others, which stay free. `None` when a component is too large or the system is inconsistent
/// (it never is for a group's average, whose fixed points include every invariant behaviour).
fn solve_invariance(rows: &[HashMap<usize, f64>], constants: &[f64]) -> Option<Invariant> {
    let m = rows.len();
    let mut parent: Vec<usize> = (0..m).collect();
    for (k, row) in rows.iter().enumerate() {
        for &j in row.keys() {
            let (a, b) = (
                symmetric::root(&mut parent, k),
                symmetric::root(&mut parent, j),
            );
            if a != b {
                parent[a.max(b)] = a.min(b);
            }
        }
    }
    let mut components: HashMap<usize, Vec<usize>> = HashMap::new();
    for k in 0..m {
        let r = symmetric::root(&mut parent, k);
        components.entry(r).or_default().push(k);
    }
    let mut components: Vec<Vec<usize>> = components.into_values().collect();
    components.sort_unstable_by_key(|c| c[0]);
    // Per moment: Some(pivot row's solved expression in component-local free columns) or free.
    let mut solved: Vec<Option<Affine>> = vec![None; m];
    for comp in &components {
        let c = comp.len();
        if c > MAX_COMPONENT {
            return None;
        }
        let local: HashMap<usize, usize> = comp.iter().enumerate().map(|(i, &k)| (k, i)).collect();
        // [I − P | p], row-major, c × (c + 1).
        let width = c + 1;
        let mut a = vec![0.0; c * width];
        for (i, &k) in comp.iter().enumerate() {
            a[i * width + i] += 1.0;
            for (&j, &v) in &rows[k] {
                a[i * width + local[&j]] -= v;
            }
            a[i * width + c] = constants[k];
        }
        let mut pivot_row = 0;
        let mut pivots: Vec<(usize, usize)> = Vec::new();
        for col in 0..c {
            if pivot_row == c {
                break;
            }
            let (best, value) = (pivot_row..c)
                .map(|r| (r, a[r * width + col].abs()))
                .fold((pivot_row, 0.0), |acc, x| if x.1 > acc.1 { x } else { acc });
            if value <= PIVOT_TOLERANCE {
                continue;
            }
            if best != pivot_row {
                for j in 0..width {
                    a.swap(best * width + j, pivot_row * width + j);
                }
            }
            let inv = 1.0 / a[pivot_row * width + col];
            for j in 0..width {
                a[pivot_row * width + j] *= inv;
            }
            a[pivot_row * width + col] = 1.0;
            for r in 0..c {
                if r == pivot_row {
                    continue;
                }
                let f = a[r * width + col];
                if f != 0.0 {
                    for j in 0..width {
                        a[r * width + j] -= f * a[pivot_row * width + j];
                    }
                    a[r * width + col] = 0.0;
                }
            }
            pivots.push((pivot_row, col));
            pivot_row += 1;
        }
        // Rows left over must read 0 = 0.
        for r in pivot_row..c {
            if a[r * width + c].abs() > 1e-7 {
                return None;
            }
        }
        for &(r, col) in &pivots {
            let is_pivot: Vec<bool> = {
                let mut v = vec![false; c];
                for &(_, pc) in &pivots {
                    v[pc] = true;
                }
                v
            };
            let terms: Vec<(usize, f64)> = (0..c)
                .filter(|&j| !is_pivot[j])
                .map(|j| (comp[j], -a[r * width + j]))
                .filter(|&(_, v)| v.abs() > 1e-14)
                .collect();
            solved[comp[col]] = Some((a[r * width + c], terms));
        }
    }
    let mut free_index = vec![usize::MAX; m];
    let mut free_moments = Vec::new();
    for k in 0..m {
        if solved[k].is_none() {
            free_index[k] = free_moments.len();
            free_moments.push(k);
        }
    }
    let moments = (0..m)
        .map(|k| match &solved[k] {
            None => (0.0, vec![(free_index[k], 1.0)]),
            Some((constant, terms)) => (
                *constant,
                terms.iter().map(|&(j, v)| (free_index[j], v)).collect(),
            ),
        })
        .collect();
    Some(Invariant {
        moments,
        free: free_moments.len(),
        free_moments,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(entries: &[(usize, f64)]) -> HashMap<usize, f64> {
        entries.iter().copied().collect()
    }

    #[test]
    fn invariant_moments_of_a_swap_and_a_flip() {
        // Moments y0, y1 swapped by the group {1, g}: P averages them; y2 = ⟨P⟩ of a binary
        // answer flipped (P ↦ 1 − P): its average is the constant 1/2; y3 is fixed.
        let rows = vec![
            row(&[(0, 0.5), (1, 0.5)]),
            row(&[(0, 0.5), (1, 0.5)]),
            row(&[]),
            row(&[(3, 1.0)]),
        ];
        let constants = [0.0, 0.0, 0.5, 0.0];
        let inv = solve_invariance(&rows, &constants).unwrap();
        assert_eq!(inv.free, 2);
        // Whatever the free values, the moments are invariant: y = P y + p.
        let free = [0.3, -0.7];
        let y: Vec<f64> = inv
            .moments
            .iter()
            .map(|(k, t)| k + t.iter().map(|&(u, c)| c * free[u]).sum::<f64>())
            .collect();
        for (k, r) in rows.iter().enumerate() {
            let image = constants[k] + r.iter().map(|(&j, &c)| c * y[j]).sum::<f64>();
            assert!((image - y[k]).abs() < 1e-15, "{k}: {} vs {}", image, y[k]);
        }
        assert!((y[0] - y[1]).abs() < 1e-15 && (y[2] - 0.5).abs() < 1e-15);
        // An inconsistent system (no fixed point) is refused rather than solved wrongly.
        assert!(solve_invariance(&[row(&[(0, 1.0)])], &[1.0]).is_none());
    }
}
