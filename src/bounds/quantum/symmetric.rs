//! Symmetry reduction of an NPA relaxation: moments merged into orbits of the game's symmetry
//! group, with the dual of the smaller problem lifted back to a dual of the full one.
//!
//! Why it is exact. A symmetry g of the game ([`crate::model::symmetry`]) relabels projectors,
//! so it acts on the operator algebra as a *-automorphism, and on moment vectors by
//! `(g·y)(w) = y(g(w))`. When g maps the span of the generating words into itself
//! (`g(u) = Σ ρ_uv v`), the moment matrix transforms by congruence, `Γ(g·y) = ρ Γ(y) ρᵀ`, so
//! g·y is feasible with the same value, and averaging over the group gives an optimal point
//! that is invariant (Gatermann & Parrilo 2004, J. Pure Appl. Algebra 192, 95–128). An
//! invariant point has `y(w) = y(w')` whenever a group element maps the word w to w'. In the
//! Collins–Gisin coordinates the moments use, a relabelling that moves a last answer sends a
//! projector to `1 − Σ others`, an affine map; but it *permutes* full-projector words, and every
//! Collins–Gisin word is one. So the classes below are the orbits of full-projector words, and
//! two moments in one class get one variable. Points constant on classes form a subset of the
//! feasible set that still contains the invariant optimum, hence the same value.
//!
//! The verified bound does not trust any of this: the smaller problem's dual matrix Z (same
//! side as the full one) is averaged over the group, `Z̄ = |G|⁻¹ Σ ρ_gᵀ Z ρ_g`, which keeps it
//! positive semidefinite and makes the full problem's dual residual vanish up to the solver's
//! accuracy; the bound is then [`crate::optim::sdp::Assembled::certified_bound`] of Z̄ on the
//! *full* problem, every residual charged, and the certificate is saved in the full format.
//!
//! The group is the one that keeps the value on no-signalling behaviours
//! ([`crate::model::symmetry::symmetries_modulo_no_signalling`]). When it flips the answers of
//! two-answer measurements the classes below would need many equations; the private `flips`
//! module builds the reduction in correlator words instead, where the same group permutes
//! words up to sign.

use std::collections::{HashMap, HashSet, VecDeque};

use nalgebra::DMatrix;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::flips::{self, CorrelatorLift, Letters};
use super::words::{canonical, moment_key, Projector, Word};
use crate::model::scenario::Scenario;
use crate::model::symmetry::{symmetries, symmetries_modulo_no_signalling, Relabelling};
use crate::optim::sdp::{upper_index, AffineEntry, SdpProblem};

/// Most group elements averaged over; a larger group is replaced by a subgroup that fits.
pub const MAX_ELEMENTS: usize = 20_000;
/// Most entries of the group's action on the generating words held for the averaging
/// (elements × words × terms).
pub const MAX_ACTION_TERMS: usize = 10_000_000;
/// Most terms the image of one generating word may expand into.
const MAX_EXPANSION: usize = 4096;

/// Whether the NPA relaxation is reduced by the game's symmetries. Serialised in kebab case.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SymmetryChoice {
    /// Reduce when the game has symmetries that the level's generating words respect.
    #[default]
    Auto,
    /// Solve the full relaxation.
    Off,
}

impl SymmetryChoice {
    /// The name used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            SymmetryChoice::Auto => "auto",
            SymmetryChoice::Off => "off",
        }
    }
}

/// How a relaxation was reduced.
#[derive(Debug, Clone, Serialize)]
pub struct SymmetryUse {
    /// Order of the game's symmetry group as detected (a lower bound when
    /// `detection_complete` is false).
    #[serde(serialize_with = "crate::numbers::serialize_count")]
    pub detected_order: u128,
    /// Whether the symmetry search finished.
    pub detection_complete: bool,
    /// Elements of the group the relaxation was averaged over (the whole detected group, or a
    /// subgroup when the whole is too large to average or moves the level's words out of it).
    pub order: usize,
    /// Moments of the full relaxation.
    pub full_moments: usize,
    /// Variables of the reduced relaxation (orbits of moments).
    pub moments: usize,
    /// Sides of the diagonal blocks the moment matrix splits into (one block, the full
    /// side, when it is not split).
    pub blocks: Vec<usize>,
}

/// A reduced relaxation and what it takes to lift its solution back.
pub struct Reduction {
    /// What was reduced, for the report.
    pub summary: SymmetryUse,
    /// How the full moments are read from the reduced variables.
    primal: PrimalLift,
    /// The reduced problem (merged variables; split into blocks, and in correlator words when
    /// the group flips two-answer measurements).
    pub problem: SdpProblem,
    /// Per group element, per generating word u, the expansion `g(u) = Σ ρ_uv v` as `(v, ρ_uv)`.
    actions: Vec<Vec<Vec<(u32, f64)>>>,
    /// With the matrix split: per block k, the n × n_k matrix U_k with block `U_kᵀ Γ U_k`.
    bases: Option<Vec<DMatrix<f64>>>,
    /// Estimated flops of one Schur-complement assembly of the reduced problem (its merged
    /// variables have wider supports than single moments).
    pub assembly_flops: f64,
}

/// How a reduced solution's moments give the full problem's.
enum PrimalLift {
    /// Moment of the full relaxation → variable of the reduced one.
    Classes(Vec<usize>),
    /// Through the moment matrix in correlator words ([`flips`]).
    Correlators(CorrelatorLift),
}

/// The image of one projector (its outcome may be the last).
pub(crate) fn image(g: &Relabelling, p: Projector) -> Projector {
    let (i, x) = (p.player as usize, p.setting as usize);
    Projector {
        player: g.players[i] as u16,
        setting: g.questions[i][x] as u32,
        outcome: g.answers[i][x][p.outcome as usize] as u32,
    }
}

/// The image of a word as a full-projector moment (canonical, identified with its adjoint).
fn full_image(g: &Relabelling, w: &[Projector]) -> Word {
    // An automorphism maps a non-zero canonical word to a non-zero word of the same length.
    moment_key(canonical(w.iter().map(|&p| image(g, p))).unwrap_or_default())
}

/// `g(w)` in Collins–Gisin words: each projector sent to a last answer becomes `1 − Σ others`.
/// `None` when the expansion is too large.
pub(crate) fn expand(g: &Relabelling, w: &[Projector], last: &[u32]) -> Option<Vec<(Word, f64)>> {
    let mut terms: Vec<(Vec<Projector>, f64)> = vec![(Vec::new(), 1.0)];
    for &p in w {
        let q = image(g, p);
        let l = last[q.player as usize];
        if q.outcome == l {
            let mut next = Vec::with_capacity(terms.len() * (l as usize + 1));
            for (t, c) in &terms {
                next.push((t.clone(), *c));
                for b in 0..l {
                    let mut t2 = t.clone();
                    t2.push(Projector { outcome: b, ..q });
                    next.push((t2, -c));
                }
            }
            terms = next;
        } else {
            for (t, _) in &mut terms {
                t.push(q);
            }
        }
        if terms.len() > MAX_EXPANSION {
            return None;
        }
    }
    let mut merged: HashMap<Word, f64> = HashMap::new();
    for (t, c) in terms {
        if let Some(word) = canonical(t) {
            *merged.entry(word).or_insert(0.0) += c;
        }
    }
    Some(merged.into_iter().filter(|(_, c)| *c != 0.0).collect())
}

/// A group element's action on the generating words: per word u, `g(u) = Σ ρ_uv v` as `(v, ρ_uv)`.
pub(crate) type Action = Vec<Vec<(u32, f64)>>;

/// The action of every element ([`action`]), or `None` when one leaves the span or the whole
/// table would exceed [`MAX_ACTION_TERMS`] (a smaller subgroup would have been needed, which is
/// rare enough to simply not reduce).
fn element_actions(
    elements: &[Relabelling],
    words: &[Word],
    index: &HashMap<&Word, usize>,
    last: &[u32],
) -> Option<Vec<Action>> {
    let mut terms = 0usize;
    let mut actions = Vec::with_capacity(elements.len());
    for g in elements {
        let a = action(g, words, index, last)?;
        terms += a.iter().map(Vec::len).sum::<usize>();
        if terms > MAX_ACTION_TERMS {
            return None;
        }
        actions.push(a);
    }
    Some(actions)
}

impl SymmetryUse {
    fn of(
        group: &crate::model::symmetry::SymmetryGroup,
        order: usize,
        full_moments: usize,
        moments: usize,
        reduced: &SdpProblem,
    ) -> SymmetryUse {
        SymmetryUse {
            detected_order: group.order,
            detection_complete: group.complete,
            order,
            full_moments,
            moments,
            blocks: reduced.blocks.iter().map(|b| b.size).collect(),
        }
    }
}

/// The action of `g` on the generating words, or `None` when it leaves their span.
fn action(
    g: &Relabelling,
    words: &[Word],
    index: &HashMap<&Word, usize>,
    last: &[u32],
) -> Option<Vec<Vec<(u32, f64)>>> {
    words
        .iter()
        .map(|u| {
            expand(g, u, last)?
                .into_iter()
                .map(|(v, c)| index.get(&v).map(|&k| (k as u32, c)))
                .collect()
        })
        .collect()
}

/// All products of `generators`, or `None` when there are more than `cap`.
pub(crate) fn closure(
    s: &Scenario,
    generators: &[Relabelling],
    cap: usize,
) -> Option<Vec<Relabelling>> {
    let identity = Relabelling::identity(s);
    let mut seen: HashSet<Relabelling> = HashSet::from([identity.clone()]);
    let mut elements = vec![identity];
    let mut next = 0;
    while next < elements.len() {
        let e = elements[next].clone();
        next += 1;
        for g in generators {
            let h = g.after(&e);
            if seen.insert(h.clone()) {
                if elements.len() >= cap {
                    return None;
                }
                elements.push(h);
            }
        }
    }
    Some(elements)
}

/// The class of each of `moments` (numbered from 0 in order of first appearance): two are in one
/// class when a chain of `images` (the words the group's generators map a word to) joins them,
/// possibly through words outside the moments, which are visited too (breadth first). At every
/// point invariant under the group, moments of one class are equal.
pub(crate) fn orbit_classes<W, F>(moments: &[W], images: F) -> Vec<usize>
where
    W: Clone + Eq + std::hash::Hash,
    F: Fn(&W) -> Vec<W>,
{
    let mut id: HashMap<W, usize> = HashMap::new();
    let mut parent: Vec<usize> = Vec::new();
    let mut queue: VecDeque<W> = VecDeque::new();
    for m in moments {
        id.insert(m.clone(), parent.len());
        parent.push(parent.len());
        queue.push_back(m.clone());
    }
    while let Some(f) = queue.pop_front() {
        let a = id[&f];
        for f2 in images(&f) {
            let b = match id.get(&f2) {
                Some(&b) => b,
                None => {
                    let b = parent.len();
                    id.insert(f2.clone(), b);
                    parent.push(b);
                    queue.push_back(f2);
                    b
                }
            };
            let (ra, rb) = (root(&mut parent, a), root(&mut parent, b));
            if ra != rb {
                parent[ra.max(rb)] = ra.min(rb);
            }
        }
    }
    let mut class_of_root: HashMap<usize, usize> = HashMap::new();
    (0..moments.len())
        .map(|k| {
            let r = root(&mut parent, k);
            let next = class_of_root.len();
            *class_of_root.entry(r).or_insert(next)
        })
        .collect()
}

/// Union–find root with path halving.
pub(crate) fn root(parent: &mut [usize], mut x: usize) -> usize {
    while parent[x] != x {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    x
}

/// The reduction of the relaxation with generating `words`, `moments` (variable → word) and
/// `problem`, or `None` when the game has no symmetry the level respects.
pub fn reduce(
    s: &Scenario,
    words: &[Word],
    moments: &[Word],
    problem: &SdpProblem,
) -> Option<Reduction> {
    // The symmetries of the value on no-signalling behaviours (which the Collins–Gisin
    // objective sees), or the table's own when the table is too large for the canonical form or
    // its rounding hid them (the canonical group contains the table's in exact arithmetic).
    // Merged variables would need their bounds merged too; no relaxation with per-variable
    // bounds is reduced.
    if !problem.variable_bounds.is_empty() {
        return None;
    }
    let group = symmetries_modulo_no_signalling(s)
        .filter(|g| !g.generators.is_empty())
        .or_else(|| symmetries(s))?;
    if group.generators.is_empty() {
        return None;
    }
    let last: Vec<u32> = s.parties().iter().map(|p| p.answers() as u32 - 1).collect();
    let index: HashMap<&Word, usize> = words.iter().enumerate().map(|(k, w)| (w, k)).collect();
    // Generators that keep the level's span, added while the group they generate stays small
    // enough to average over.
    let mut chosen: Vec<Relabelling> = Vec::new();
    let mut elements = vec![Relabelling::identity(s)];
    for g in &group.generators {
        if action(g, words, &index, &last).is_none() {
            continue;
        }
        chosen.push(g.clone());
        match closure(s, &chosen, MAX_ELEMENTS) {
            Some(all) => elements = all,
            None => {
                chosen.pop();
            }
        }
    }
    if elements.len() < 2 {
        return None;
    }
    let letters = Letters {
        binary: s.parties().iter().map(|p| p.answers() == 2).collect(),
        last: last.clone(),
    };
    if letters.applies(&chosen) {
        // Through correlator words, where the group permutes words up to sign ([`flips`]).
        let weights = (words.len() <= MAX_SPLIT_SIDE)
            .then(|| central_weights(&elements, &chosen))
            .flatten();
        let (reduced_problem, bases, lift) = flips::reduce(
            &letters,
            &elements,
            &chosen,
            weights.as_deref(),
            words,
            &index,
            problem,
        )?;
        // The Collins–Gisin action of every element, for the dual averaging.
        let actions = element_actions(&elements, words, &index, &last)?;
        return Some(Reduction {
            summary: SymmetryUse::of(
                &group,
                elements.len(),
                moments.len(),
                reduced_problem.variables,
                &reduced_problem,
            ),
            assembly_flops: assembly_flops(&reduced_problem),
            primal: PrimalLift::Correlators(lift),
            problem: reduced_problem,
            actions,
            bases: Some(bases),
        });
    }
    // Classes: orbits of full-projector words through the moments.
    let classes = orbit_classes(moments, |f: &Word| {
        chosen.iter().map(|g| full_image(g, f)).collect()
    });
    let reduced = classes.iter().max().map_or(0, |&c| c + 1);
    if reduced == moments.len() {
        return None;
    }
    // The action of every element, for the dual averaging; too large a table means a smaller
    // subgroup would have been needed, which is rare enough to simply not reduce.
    let actions = element_actions(&elements, words, &index, &last)?;
    let merged = merge(problem, &classes, reduced);
    let n = words.len();
    let split = (n <= MAX_SPLIT_SIDE
        && problem.blocks.len() == 1
        && problem.equalities.is_empty()
        && problem.inequalities.is_empty())
    .then(|| isotypic_bases(&elements, &chosen, &actions, n))
    .flatten()
    .and_then(|bases| {
        let (equalities, extra) = invariance(&chosen, moments, &classes, reduced, &last)?;
        // The solvers eliminate these equations densely (rows × variables × rank); when the
        // orbits outside the moments are many, that work dwarfs the merged problem's solve.
        let (rows, variables) = (equalities.len() as f64, (reduced + extra) as f64);
        if rows * variables * rows.min(variables) > MAX_INVARIANCE_ELIMINATION_FLOPS {
            return None;
        }
        let mut widened = merged.clone();
        widened.variables += extra;
        widened.objective.resize(widened.variables, 0.0);
        Some((block_problem(&widened, &bases, equalities), bases))
    });
    let (reduced_problem, bases) = match split {
        Some((p, bases)) => (p, Some(bases)),
        None => (merged, None),
    };
    let assembly_flops = assembly_flops(&reduced_problem);
    Some(Reduction {
        summary: SymmetryUse::of(
            &group,
            elements.len(),
            moments.len(),
            reduced,
            &reduced_problem,
        ),
        primal: PrimalLift::Classes(classes),
        problem: reduced_problem,
        actions,
        bases,
        assembly_flops,
    })
}

/// Largest moment matrix split into blocks (the split takes a few dense n×n products and one
/// symmetric eigendecomposition).
pub const MAX_SPLIT_SIDE: usize = 2000;

/// Most work (flops) the dense elimination of the invariance equations may take before the
/// split is declined and the merged problem solved instead: about a second on the check machine.
/// A small game at level 3 (2×2 against 2×3 answers) once produced 17,554 equations in 3,195
/// variables, half a minute of elimination and two and a half minutes in all, where its merged
/// problem (235 variables) solves in a fraction of a second.
const MAX_INVARIANCE_ELIMINATION_FLOPS: f64 = 2e9;

/// Most full-projector words the invariance equations may visit, per moment.
const MAX_WORDS_PER_MOMENT: usize = 64;

/// The invariance equations, in the variables of the reduced problem: `classes` for the moments
/// (one per orbit of full-projector words), plus one new variable per orbit of full words that
/// holds no moment; returns the rows and the new variable count.
///
/// A functional is invariant iff it is constant on orbits of full-projector words and respects
/// completeness, `Σ_b f[i := b] = f with letter i removed`, at every letter of every full word
/// (the only linear relation among full words besides the reductions canonical forms apply).
/// One relation per orbit and letter suffices, as the group maps relations to relations. So
/// the equations are sparse (answers + 2 terms), where expanding `g(w)` in Collins–Gisin words
/// would take up to answers^length terms. Points constant on classes alone need not be
/// invariant when a relabelling moves a last answer; the split into blocks is exact only on
/// invariant points, so these equations come with it. `None` when the words would exceed
/// [`MAX_WORDS_PER_MOMENT`] per moment.
#[allow(clippy::type_complexity)]
fn invariance(
    generators: &[Relabelling],
    moments: &[Word],
    classes: &[usize],
    reduced: usize,
    last: &[u32],
) -> Option<(Vec<(Vec<(usize, f64)>, f64)>, usize)> {
    let cap = MAX_WORDS_PER_MOMENT * moments.len().max(1000);
    let mut id: HashMap<Word, usize> = HashMap::new();
    let mut nodes: Vec<Word> = Vec::new();
    let mut parent: Vec<usize> = Vec::new();
    // The completions of each node: (the words f[i := b] for every b, f without letter i).
    let mut relations: Vec<Vec<(Vec<usize>, Option<usize>)>> = Vec::new();
    let node = |w: Word,
                id: &mut HashMap<Word, usize>,
                nodes: &mut Vec<Word>,
                parent: &mut Vec<usize>|
     -> usize {
        *id.entry(w.clone()).or_insert_with(|| {
            nodes.push(w);
            parent.push(parent.len());
            parent.len() - 1
        })
    };
    for m in moments {
        node(m.clone(), &mut id, &mut nodes, &mut parent);
    }
    let mut next = 0;
    while next < nodes.len() {
        if nodes.len() > cap {
            return None;
        }
        let f = nodes[next].clone();
        for g in generators {
            let b = node(full_image(g, &f), &mut id, &mut nodes, &mut parent);
            let (ra, rb) = (root(&mut parent, next), root(&mut parent, b));
            if ra != rb {
                parent[ra.max(rb)] = ra.min(rb);
            }
        }
        let mut mine = Vec::with_capacity(f.len());
        for i in 0..f.len() {
            let answers = last[f[i].player as usize] + 1;
            let filled: Vec<usize> = (0..answers)
                .filter_map(|b| {
                    let mut w = f.clone();
                    w[i].outcome = b;
                    // Replacing an outcome keeps the word canonical and non-zero.
                    canonical(w).map(|w| node(moment_key(w), &mut id, &mut nodes, &mut parent))
                })
                .collect();
            let mut rest = f.clone();
            rest.remove(i);
            let removed =
                canonical(rest).map(|w| node(moment_key(w), &mut id, &mut nodes, &mut parent));
            mine.push((filled, removed));
        }
        relations.push(mine);
        next += 1;
    }
    // Variables: the moments' classes, then a new one per other orbit; the identity is 1.
    let identity = id.get(&Vec::new()).copied();
    let mut variable: HashMap<usize, usize> = HashMap::new();
    for (k, &c) in classes.iter().enumerate() {
        let r = root(&mut parent, k);
        variable.insert(r, c);
    }
    let mut extra = 0;
    let mut term = |k: usize, parent: &mut Vec<usize>| -> Option<usize> {
        if Some(k) == identity {
            return None;
        }
        let r = root(parent, k);
        Some(*variable.entry(r).or_insert_with(|| {
            extra += 1;
            reduced + extra - 1
        }))
    };
    let mut rows = Vec::new();
    let mut done: HashSet<usize> = HashSet::new();
    for (k, mine) in relations.iter().enumerate() {
        if !done.insert(root(&mut parent, k)) {
            continue;
        }
        for (filled, removed) in mine {
            let mut terms: Vec<(usize, f64)> = Vec::new();
            let mut constant = 0.0;
            let mut add = |t: Option<usize>, c: f64| match t {
                None => constant -= c,
                Some(v) => match terms.iter_mut().find(|(j, _)| *j == v) {
                    Some((_, d)) => *d += c,
                    None => terms.push((v, c)),
                },
            };
            for &w in filled {
                add(term(w, &mut parent), 1.0);
            }
            if let Some(w) = removed {
                add(term(*w, &mut parent), -1.0);
            }
            terms.retain(|(_, d)| *d != 0.0);
            if !terms.is_empty() || constant != 0.0 {
                rows.push((terms, constant));
            }
        }
    }
    Some((rows, extra))
}

/// A weight per group element, equal on each conjugacy class and random otherwise (from a
/// fixed generator, so results are reproducible): `Σ_g weight_g ρ(g)` is then central, and acts
/// as one scalar on each isotypic component, different components getting different scalars
/// with probability one. `None` when a conjugate falls outside `elements`.
pub(super) fn central_weights(
    elements: &[Relabelling],
    generators: &[Relabelling],
) -> Option<Vec<f64>> {
    // Conjugacy classes, by conjugating with the generators.
    let position: HashMap<&Relabelling, usize> =
        elements.iter().enumerate().map(|(k, g)| (g, k)).collect();
    let inverses: Vec<Relabelling> = generators.iter().map(Relabelling::inverse).collect();
    let mut class = vec![usize::MAX; elements.len()];
    let mut classes = 0;
    for start in 0..elements.len() {
        if class[start] != usize::MAX {
            continue;
        }
        class[start] = classes;
        let mut stack = vec![start];
        while let Some(k) = stack.pop() {
            for (g, gi) in generators.iter().zip(&inverses) {
                let c = g.after(&elements[k]).after(gi);
                let j = *position.get(&c)?;
                if class[j] == usize::MAX {
                    class[j] = classes;
                    stack.push(j);
                }
            }
        }
        classes += 1;
    }
    // Deterministic "random" weights per class (a fixed generator: results are reproducible).
    let mut state = 0x9e37_79b9_7f4a_7c15u64;
    let weights: Vec<f64> = (0..classes)
        .map(|_| {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            1.0 + (state >> 11) as f64 / (1u64 << 53) as f64
        })
        .collect();
    Some(class.iter().map(|&c| weights[c]).collect())
}

/// Bases of the isotypic components of the group's action on the generating words, as
/// matrices U_k (n × n_k) such that, for every invariant moment matrix Γ, Γ ⪰ 0 iff every
/// `U_kᵀ Γ U_k ⪰ 0`. The action ρ is not orthogonal in Collins–Gisin words, so it is made so
/// first: with `P = |G|⁻¹ Σ_g ρ_gᵀ ρ_g = LLᵀ`, `O_g = Lᵀ ρ_g L⁻ᵀ` is orthogonal and `Γ' = LᵀΓL`
/// commutes with it. A random combination of class sums, symmetrised, is central, so it acts
/// as one scalar on each real isotypic component: its eigenspaces are the components, which
/// are orthogonal and which Γ' preserves (Serre, Linear Representations of Finite Groups,
/// 1977, §2.6; the numerical use of a random central element follows Murota et al. 2010,
/// Japan J. Ind. Appl. Math. 27, 125–160). The split is checked on the generators; `None`
/// when it fails or yields a single block.
fn isotypic_bases(
    elements: &[Relabelling],
    generators: &[Relabelling],
    actions: &[Vec<Vec<(u32, f64)>>],
    n: usize,
) -> Option<Vec<DMatrix<f64>>> {
    let dense = |rho: &Vec<Vec<(u32, f64)>>, scale: f64, out: &mut DMatrix<f64>| {
        for (u, row) in rho.iter().enumerate() {
            for &(v, c) in row {
                out[(u, v as usize)] += scale * c;
            }
        }
    };
    let weights = central_weights(elements, generators)?;
    let mut p = DMatrix::<f64>::zeros(n, n);
    let mut central = DMatrix::<f64>::zeros(n, n);
    for (k, rho) in actions.iter().enumerate() {
        for row in rho {
            for &(i, a) in row {
                for &(j, b) in row {
                    p[(i as usize, j as usize)] += a * b;
                }
            }
        }
        dense(rho, weights[k], &mut central);
    }
    // Scaled to the group's average, so that the blocks keep the moment matrix's scale.
    p /= actions.len() as f64;
    let l = p.cholesky()?.l();
    // O-side central element: H = Lᵀ C L⁻ᵀ, i.e. Hᵀ = L⁻¹ (Lᵀ C)ᵀ.
    let lt_c = l.transpose() * &central;
    let ht = l.solve_lower_triangular(&lt_c.transpose())?;
    let h = (&ht + ht.transpose()) * 0.5;
    let eig = h.symmetric_eigen();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]));
    let scale = eig.eigenvalues.iter().fold(1.0f64, |m, v| m.max(v.abs()));
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for &k in &order {
        match groups.last_mut() {
            Some(g)
                if (eig.eigenvalues[k] - eig.eigenvalues[*g.last().unwrap()]).abs()
                    <= 1e-8 * scale =>
            {
                g.push(k)
            }
            _ => groups.push(vec![k]),
        }
    }
    if groups.len() < 2 {
        return None;
    }
    let q: Vec<DMatrix<f64>> = groups
        .iter()
        .map(|g| DMatrix::from_fn(n, g.len(), |r, c| eig.eigenvectors[(r, g[c])]))
        .collect();
    // Check: every generator's O maps each component into itself.
    let linv_t = l.clone().try_inverse()?.transpose();
    for (g, rho) in elements.iter().zip(actions) {
        if !generators.contains(g) {
            continue;
        }
        let mut r = DMatrix::<f64>::zeros(n, n);
        dense(rho, 1.0, &mut r);
        let o = l.transpose() * r * &linv_t;
        for (a, qa) in q.iter().enumerate() {
            let image = &o * qa;
            for (b, qb) in q.iter().enumerate() {
                if a != b && (qb.transpose() * &image).amax() > 1e-7 {
                    return None;
                }
            }
        }
    }
    Some(q.into_iter().map(|qk| &l * qk).collect())
}

/// The merged problem (one block) split into the blocks `U_kᵀ Γ U_k`, with the invariance
/// equations.
fn block_problem(
    merged: &SdpProblem,
    bases: &[DMatrix<f64>],
    equalities: Vec<(Vec<(usize, f64)>, f64)>,
) -> SdpProblem {
    let block = &merged.blocks[0];
    let n = block.size;
    let m = merged.variables;
    let blocks = bases
        .par_iter()
        .map(|u| {
            let nk = u.ncols();
            let tri = nk * (nk + 1) / 2;
            // Coefficients: [entry of the block's triangle][variable + 1], the last the constant.
            let mut coef = vec![0.0; tri * (m + 1)];
            let mut add = |r: usize, c: usize, var: usize, v: f64| {
                for b in 0..nk {
                    let (urb, ucb) = (u[(r, b)], u[(c, b)]);
                    for a in 0..=b {
                        // (UᵀFU)_ab for F = v(e_r e_cᵀ + e_c e_rᵀ) (or v e_r e_rᵀ).
                        let x = if r == c {
                            v * u[(r, a)] * urb
                        } else {
                            v * (u[(r, a)] * ucb + u[(c, a)] * urb)
                        };
                        coef[upper_index(a, b) * (m + 1) + var] += x;
                    }
                }
            };
            for col in 0..n {
                for row in 0..=col {
                    let e = &block.upper[upper_index(row, col)];
                    if e.constant != 0.0 {
                        add(row, col, m, e.constant);
                    }
                    for &(v, c) in &e.terms {
                        add(row, col, v, c);
                    }
                }
            }
            let largest = coef.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            let tiny = 1e-14 * largest;
            let upper = coef
                .chunks(m + 1)
                .map(|row| AffineEntry {
                    constant: if row[m].abs() > tiny { row[m] } else { 0.0 },
                    terms: row[..m]
                        .iter()
                        .enumerate()
                        .filter(|(_, c)| c.abs() > tiny)
                        .map(|(v, &c)| (v, c))
                        .collect(),
                })
                .collect();
            crate::optim::sdp::MatrixBlock {
                size: nk,
                upper,
                // tr(UᵀΓU) = ⟨Γ, UUᵀ⟩ ≤ ‖U‖²_F · λ_max(Γ) ≤ ‖U‖²_F · tr Γ.
                trace_bound: u.norm_squared() * block.trace_bound,
            }
        })
        .collect();
    SdpProblem {
        equalities,
        blocks,
        ..merged.clone()
    }
}

/// The problem with variable `m` replaced by variable `classes[m]`.
pub(crate) fn merge(problem: &SdpProblem, classes: &[usize], reduced: usize) -> SdpProblem {
    let remap = |terms: &[(usize, f64)]| -> Vec<(usize, f64)> {
        let mut out: Vec<(usize, f64)> = Vec::with_capacity(terms.len());
        for &(v, c) in terms {
            let k = classes[v];
            match out.iter_mut().find(|(j, _)| *j == k) {
                Some((_, d)) => *d += c,
                None => out.push((k, c)),
            }
        }
        out
    };
    let mut objective = vec![0.0; reduced];
    for (v, &c) in problem.objective.iter().enumerate() {
        objective[classes[v]] += c;
    }
    SdpProblem {
        variables: reduced,
        objective,
        objective_constant: problem.objective_constant,
        equalities: problem
            .equalities
            .iter()
            .map(|(t, e)| (remap(t), *e))
            .collect(),
        inequalities: problem
            .inequalities
            .iter()
            .map(|(t, e)| (remap(t), *e))
            .collect(),
        blocks: problem
            .blocks
            .iter()
            .map(|b| crate::optim::sdp::MatrixBlock {
                size: b.size,
                upper: b
                    .upper
                    .iter()
                    .map(|e| AffineEntry {
                        constant: e.constant,
                        terms: remap(&e.terms),
                    })
                    .collect(),
                trace_bound: b.trace_bound,
            })
            .collect(),
        variable_bound: problem.variable_bound,
        variable_bounds: Vec::new(),
    }
}

/// Flops of one Schur-complement assembly by the moment-matrix method: per variable and block,
/// a product of side n by the number of rows and columns its entries touch, times n, plus a
/// pass over the block's entries.
fn assembly_flops(problem: &SdpProblem) -> f64 {
    let mut flops = 0.0;
    for block in &problem.blocks {
        let mut touched: Vec<HashSet<usize>> = vec![HashSet::new(); problem.variables];
        for col in 0..block.size {
            for row in 0..=col {
                for &(v, _) in &block.upper[upper_index(row, col)].terms {
                    touched[v].insert(row);
                    touched[v].insert(col);
                }
            }
        }
        let n = block.size as f64;
        let columns: f64 = touched.iter().map(|t| t.len() as f64).sum();
        flops += 2.0 * n * n * columns + n * n * problem.variables as f64;
    }
    flops
}

/// `|G|⁻¹ Σ_g ρ_gᵀ Z ρ_g` for the n×n matrix `zm` (column-major) and the group's actions on
/// the generating words, as the packed upper triangle of a dual vector (off-diagonal entries
/// times √2, the layout of [`SdpProblem::assemble`]). Congruence keeps it positive
/// semidefinite, and it is invariant, so the merged constraints' residuals become the full
/// ones'.
pub(crate) fn averaged_matrix(actions: &[Action], zm: &[f64], n: usize) -> Vec<f64> {
    let sqrt2 = std::f64::consts::SQRT_2;
    // ρᵀ Z ρ for one element: W = Z ρ column by column, then (Wᵀ ρ) = (ρᵀ Z ρ)ᵀ.
    let congruence = |rho: &Vec<Vec<(u32, f64)>>, acc: &mut Vec<f64>| {
        let mut w = vec![0.0; n * n];
        for (l, row) in rho.iter().enumerate() {
            for &(j, c) in row {
                let (dst, src) = (j as usize * n, l * n);
                for r in 0..n {
                    w[dst + r] += c * zm[src + r];
                }
            }
        }
        let mut wt = vec![0.0; n * n];
        for c in 0..n {
            for r in 0..n {
                wt[r * n + c] = w[c * n + r];
            }
        }
        for (l, row) in rho.iter().enumerate() {
            for &(j, c) in row {
                let (dst, src) = (j as usize * n, l * n);
                for r in 0..n {
                    acc[dst + r] += c * wt[src + r];
                }
            }
        }
    };
    let sum = actions
        .par_iter()
        .fold(
            || vec![0.0; n * n],
            |mut acc, rho| {
                congruence(rho, &mut acc);
                acc
            },
        )
        .reduce(
            || vec![0.0; n * n],
            |mut a, b| {
                for (x, y) in a.iter_mut().zip(b) {
                    *x += y;
                }
                a
            },
        );
    let scale = 1.0 / actions.len() as f64;
    let mut out = vec![0.0; n * (n + 1) / 2];
    for col in 0..n {
        for row in 0..=col {
            let v = 0.5 * (sum[col * n + row] + sum[row * n + col]) * scale;
            out[upper_index(row, col)] = if row == col { v } else { v * sqrt2 };
        }
    }
    out
}

impl Reduction {
    /// The full moment vector of a reduced one.
    pub fn lift_primal(&self, y: &[f64]) -> Vec<f64> {
        match &self.primal {
            PrimalLift::Classes(classes) => classes.iter().map(|&c| y[c]).collect(),
            PrimalLift::Correlators(lift) => lift.lift(y),
        }
    }

    /// The reduced problem's dual vector (layout of [`SdpProblem::assemble`], which has the
    /// same rows for both problems) averaged over the group: a dual vector of the full problem.
    pub fn lift_dual(&self, size: usize, z: &[f64]) -> Vec<f64> {
        let n = size;
        let sqrt2 = std::f64::consts::SQRT_2;
        let unpack = |z: &[f64], nk: usize| {
            DMatrix::from_fn(nk, nk, |r, c| {
                let v = z[upper_index(r.min(c), r.max(c))];
                if r == c {
                    v
                } else {
                    v / sqrt2
                }
            })
        };
        // The reduced dual's matrix part, as one n×n matrix Z = Σ_k U_k Z_k U_kᵀ.
        let mut offset = self.problem.equalities.len() + self.problem.inequalities.len();
        let full = match &self.bases {
            None => unpack(&z[offset..], n),
            Some(bases) => {
                let mut full = DMatrix::<f64>::zeros(n, n);
                for u in bases {
                    let nk = u.ncols();
                    let zk = unpack(&z[offset..], nk);
                    full += u * zk * u.transpose();
                    offset += nk * (nk + 1) / 2;
                }
                full
            }
        };
        // The full problem's dual vector: its equality and inequality rows (the same as the
        // reduced problem's before the split, none for NPA) carried over, then the matrix.
        let mut out = match &self.bases {
            None => z[..self.problem.equalities.len() + self.problem.inequalities.len()].to_vec(),
            Some(_) => Vec::new(),
        };
        out.extend(averaged_matrix(&self.actions, full.as_slice(), n));
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::{families, Game};

    fn chsh() -> Scenario {
        Game::from_spec(&families::chsh(), "chsh").unwrap().scenario
    }

    #[test]
    fn relabellings_compose_and_invert() {
        let s = chsh();
        let group = symmetries(&s).unwrap();
        let id = Relabelling::identity(&s);
        for g in &group.generators {
            assert_eq!(g.after(&g.inverse()), id);
            assert_eq!(g.inverse().after(g), id);
            assert!(g.after(g).is_symmetry_of(&s));
        }
        // The generators close to the whole group, of the order the search reports.
        let all = closure(&s, &group.generators, 100).unwrap();
        assert_eq!(all.len() as u128, group.order);
        assert_eq!(all.len(), 16);
        assert!(closure(&s, &group.generators, 10).is_none());
    }

    #[test]
    fn a_projector_sent_to_the_last_answer_expands_to_one_minus_the_others() {
        let s = chsh();
        // Flip Alice's answers to question 0: P(0|0) becomes P(1|0) = 1 − P(0|0).
        let mut g = Relabelling::identity(&s);
        g.answers[0][0] = vec![1, 0];
        let p = Projector {
            player: 0,
            setting: 0,
            outcome: 0,
        };
        let mut terms = expand(&g, &[p], &[1, 1]).unwrap();
        terms.sort_by(|a, b| a.0.cmp(&b.0));
        assert_eq!(terms, vec![(vec![], 1.0), (vec![p], -1.0)]);
        assert_eq!(full_image(&g, &[p]), vec![Projector { outcome: 1, ..p }]);
    }
}
