//! Symmetries of a game: the relabellings of players (with equal question and answer counts),
//! of each player's questions, and of each player's answers to each question, that leave the
//! weighted score table `w(q)·V(a|q)` unchanged. Averaging an NPA relaxation over such a group
//! leaves its value unchanged (Gatermann & Parrilo 2004, J. Pure Appl. Algebra 192, 95–128),
//! which is what makes them worth finding.
//!
//! Method: the table becomes a coloured graph — a vertex per player, per (player, question), per
//! (player, question, answer) event, and per non-zero table entry coloured by its exact value and
//! joined to its events — whose automorphisms are exactly the game's symmetries (an entry's
//! neighbours are its events, so an automorphism maps each entry to the entry of the relabelled
//! events, of equal value; zero entries map to zero entries because the map is a bijection).
//! The automorphism group is found by individualisation and refinement (the method of McKay's
//! practical graph isomorphism, 1981): colour refinement to an equitable partition, a first path
//! of individualised vertices to a discrete leaf, and for each level the orbit of the path's
//! vertex under the stabiliser of the earlier ones, each new orbit point by a search for a leaf
//! equivalent to the first. The group order is the product of those orbit sizes. Every
//! generator is checked on the table itself before it is accepted.

use serde::Serialize;

use super::scenario::{digits, index_of, Scenario};

/// Most non-zero table entries searched (the graph has one vertex per entry).
pub const MAX_ENTRIES: usize = 1 << 18;
/// Most work (vertex and edge visits of colour refinement) the search may spend before it
/// reports what it has found so far, with `complete: false`: about half a second on the project
/// machine.
pub const MAX_WORK: usize = 50_000_000;

/// A relabelling of a game: player `i` becomes player `players[i]`, its question index `x`
/// becomes `questions[i][x]` (of the new player) and its answer index `a` to question `x`
/// becomes `answers[i][x][a]`.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Relabelling {
    /// Image of each player.
    pub players: Vec<usize>,
    /// Image of each question, per player.
    pub questions: Vec<Vec<usize>>,
    /// Image of each answer, per player and question.
    pub answers: Vec<Vec<Vec<usize>>>,
}

/// The symmetry group found: its order and generators (each checked on the table).
#[derive(Debug, Clone, Serialize)]
pub struct SymmetryGroup {
    /// Number of symmetries (the identity included); a lower bound when `complete` is false.
    #[serde(serialize_with = "crate::numbers::serialize_count")]
    pub order: u128,
    /// Whether the search finished (else `order` counts only what was found).
    pub complete: bool,
    /// Generators of the group.
    #[serde(skip)]
    pub generators: Vec<Relabelling>,
}

impl Relabelling {
    /// The relabelling that changes nothing.
    pub fn identity(s: &Scenario) -> Relabelling {
        let parties = s.parties();
        Relabelling {
            players: (0..parties.len()).collect(),
            questions: parties
                .iter()
                .map(|p| (0..p.questions()).collect())
                .collect(),
            answers: parties
                .iter()
                .map(|p| vec![(0..p.answers()).collect(); p.questions()])
                .collect(),
        }
    }

    /// The relabelling that undoes `self`.
    pub fn inverse(&self) -> Relabelling {
        let mut out = self.clone();
        for (i, &j) in self.players.iter().enumerate() {
            out.players[j] = i;
            for (x, &x2) in self.questions[i].iter().enumerate() {
                out.questions[j][x2] = x;
                for (a, &a2) in self.answers[i][x].iter().enumerate() {
                    out.answers[j][x2][a2] = a;
                }
            }
        }
        out
    }

    /// `self` after `first`: the relabelling that applies `first`, then `self`.
    pub fn after(&self, first: &Relabelling) -> Relabelling {
        let n = first.players.len();
        let mut out = first.clone();
        for i in 0..n {
            let j = first.players[i];
            out.players[i] = self.players[j];
            for (x, &x2) in first.questions[i].iter().enumerate() {
                out.questions[i][x] = self.questions[j][x2];
                for (a, &a2) in first.answers[i][x].iter().enumerate() {
                    out.answers[i][x][a] = self.answers[j][x2][a2];
                }
            }
        }
        out
    }

    /// The image of entry (joint question `q`, joint answer `a`).
    pub fn apply(&self, s: &Scenario, q: usize, a: usize) -> (usize, usize) {
        self.apply_with(&s.question_radices(), &s.answer_radices(), q, a)
    }

    /// [`Relabelling::apply`] with the radices given (they are the same for every entry).
    fn apply_with(&self, qr: &[usize], ar: &[usize], q: usize, a: usize) -> (usize, usize) {
        let n = qr.len();
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        digits(q, qr, &mut qd);
        digits(a, ar, &mut ad);
        let (mut q2, mut a2) = (vec![0; n], vec![0; n]);
        for i in 0..n {
            let j = self.players[i];
            q2[j] = self.questions[i][qd[i]];
            a2[j] = self.answers[i][qd[i]][ad[i]];
        }
        (index_of(&q2, qr), index_of(&a2, ar))
    }

    /// Whether the relabelling is a bijection of the right shape that leaves the weighted
    /// score table exactly unchanged.
    pub fn is_symmetry_of(&self, s: &Scenario) -> bool {
        let parties = s.parties();
        let n = parties.len();
        let is_perm = |v: &[usize], len: usize| {
            let mut seen = vec![false; len];
            v.len() == len
                && v.iter()
                    .all(|&k| k < len && !std::mem::replace(&mut seen[k], true))
        };
        if !is_perm(&self.players, n) || self.questions.len() != n || self.answers.len() != n {
            return false;
        }
        for i in 0..n {
            let (p, img) = (&parties[i], &parties[self.players[i]]);
            if p.questions() != img.questions() || p.answers() != img.answers() {
                return false;
            }
            if !is_perm(&self.questions[i], p.questions())
                || self.answers[i].len() != p.questions()
                || !self.answers[i].iter().all(|t| is_perm(t, p.answers()))
            {
                return false;
            }
        }
        let (nq, na) = (s.joint_questions(), s.joint_answers());
        let (qr, ar) = (s.question_radices(), s.answer_radices());
        let obj = s.objective();
        (0..nq * na).all(|k| {
            let (q2, a2) = self.apply_with(&qr, &ar, k / na, k % na);
            obj[q2 * na + a2] == obj[k]
        })
    }
}

/// The coloured graph of a game (see the module notes), as adjacency lists.
struct Graph {
    adjacency: Vec<Vec<usize>>,
    /// Initial colour of each vertex (its kind, and for entries its value class).
    colour: Vec<usize>,
    /// First vertex of each kind: players, questions, events, entries.
    question_base: usize,
    event_base: usize,
    /// `question_offset[i]`: index of player i's first question among the question vertices;
    /// `event_offset[i][x]`: index of (i, x)'s first answer among the event vertices.
    question_offset: Vec<usize>,
    event_offset: Vec<Vec<usize>>,
    /// Sum of the adjacency lists' lengths (each refinement pass visits them all).
    edges: usize,
    /// Vertex and edge visits spent in refinement so far (checked against [`MAX_WORK`]).
    work: std::cell::Cell<usize>,
}

impl Graph {
    fn of(s: &Scenario) -> Option<Graph> {
        let parties = s.parties();
        let n = parties.len();
        let mut question_offset = Vec::with_capacity(n);
        let mut event_offset = Vec::with_capacity(n);
        let (mut nquestions, mut nevents) = (0, 0);
        for p in parties {
            question_offset.push(nquestions);
            nquestions += p.questions();
            let mut per = Vec::with_capacity(p.questions());
            for _ in 0..p.questions() {
                per.push(nevents);
                nevents += p.answers();
            }
            event_offset.push(per);
        }
        let obj = s.objective();
        let entries = obj.iter().filter(|v| **v != 0.0).count();
        if entries > MAX_ENTRIES {
            return None;
        }
        let question_base = n;
        let event_base = n + nquestions;
        let entry_base = event_base + nevents;
        let total = entry_base + entries;
        let mut adjacency = vec![Vec::new(); total];
        let mut colour = vec![0; total];
        let link = |u: usize, v: usize, adjacency: &mut Vec<Vec<usize>>| {
            adjacency[u].push(v);
            adjacency[v].push(u);
        };
        for (i, p) in parties.iter().enumerate() {
            for (x, &first_event) in event_offset[i].iter().enumerate() {
                let qv = question_base + question_offset[i] + x;
                colour[qv] = 1;
                link(i, qv, &mut adjacency);
                for a in 0..p.answers() {
                    let ev = event_base + first_event + a;
                    colour[ev] = 2;
                    link(qv, ev, &mut adjacency);
                }
            }
        }
        // Value classes by exact value, in increasing order (an invariant labelling).
        let mut values: Vec<f64> = obj.iter().copied().filter(|v| *v != 0.0).collect();
        values.sort_by(f64::total_cmp);
        values.dedup();
        let (qr, ar) = (s.question_radices(), s.answer_radices());
        let na = s.joint_answers();
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        let mut v = entry_base;
        for (k, &value) in obj.iter().enumerate() {
            if value == 0.0 {
                continue;
            }
            colour[v] = 3 + values
                .binary_search_by(|x| x.total_cmp(&value))
                .unwrap_or(0);
            digits(k / na, &qr, &mut qd);
            digits(k % na, &ar, &mut ad);
            for i in 0..n {
                link(
                    v,
                    event_base + event_offset[i][qd[i]] + ad[i],
                    &mut adjacency,
                );
            }
            v += 1;
        }
        for list in &mut adjacency {
            list.sort_unstable();
        }
        let adjacency_sum = adjacency.iter().map(Vec::len).sum();
        Some(Graph {
            adjacency,
            colour,
            question_base,
            event_base,
            question_offset,
            event_offset,
            edges: adjacency_sum,
            work: std::cell::Cell::new(0),
        })
    }

    /// Whether the refinements so far have used up [`MAX_WORK`].
    fn over_budget(&self) -> bool {
        self.work.get() >= MAX_WORK
    }

    /// Colour refinement: split cells by (old colour, multiset of neighbour colours) until the
    /// number of cells stops growing. The multiset is summarised by a sum of per-colour hashes
    /// (a collision can only leave a partition coarser, which costs search, never a wrong
    /// symmetry: every candidate is checked). New colours are numbered by sorting the
    /// signatures, an isomorphism-invariant numbering, so equivalent nodes of the search get
    /// equal partitions.
    fn refine(&self, mut colours: Vec<usize>) -> Vec<usize> {
        let mut cells = count_cells(&colours);
        loop {
            self.work
                .set(self.work.get().saturating_add(colours.len() + self.edges));
            let mut signatures: Vec<(usize, u64, usize)> = (0..colours.len())
                .map(|v| {
                    let around = self.adjacency[v]
                        .iter()
                        .fold(0u64, |h, &u| h.wrapping_add(mix(colours[u] as u64)));
                    (colours[v], around, v)
                })
                .collect();
            signatures.sort_unstable();
            let mut next = vec![0; colours.len()];
            let mut colour = 0;
            for k in 0..signatures.len() {
                if k > 0
                    && (signatures[k].0, signatures[k].1)
                        != (signatures[k - 1].0, signatures[k - 1].1)
                {
                    colour += 1;
                }
                next[signatures[k].2] = colour;
            }
            colours = next;
            let now = count_cells(&colours);
            if now == cells {
                return colours;
            }
            cells = now;
        }
    }

    /// `colours` with `v` split off its cell (placed first), then refined.
    fn individualise(&self, colours: &[usize], v: usize) -> Vec<usize> {
        let split: Vec<usize> = colours
            .iter()
            .enumerate()
            .map(|(u, &c)| 2 * c + usize::from(u != v))
            .collect();
        self.refine(split)
    }

    /// Whether the vertex map `g` preserves colours and adjacency.
    fn is_automorphism(&self, g: &[usize]) -> bool {
        (0..g.len()).all(|v| {
            self.colour[v] == self.colour[g[v]] && {
                let mut image: Vec<usize> = self.adjacency[v].iter().map(|&u| g[u]).collect();
                image.sort_unstable();
                image == self.adjacency[g[v]]
            }
        })
    }

    /// The game relabelling an automorphism induces.
    fn relabelling(&self, s: &Scenario, g: &[usize]) -> Relabelling {
        let parties = s.parties();
        let n = parties.len();
        let players: Vec<usize> = (0..n).map(|i| g[i]).collect();
        let mut questions = Vec::with_capacity(n);
        let mut answers = Vec::with_capacity(n);
        for (i, p) in parties.iter().enumerate() {
            let j = players[i];
            let mut qs = Vec::with_capacity(p.questions());
            let mut per_question = Vec::with_capacity(p.questions());
            for x in 0..p.questions() {
                let image = g[self.question_base + self.question_offset[i] + x];
                let y = image - self.question_base - self.question_offset[j];
                qs.push(y);
                per_question.push(
                    (0..p.answers())
                        .map(|a| {
                            g[self.event_base + self.event_offset[i][x] + a]
                                - self.event_base
                                - self.event_offset[j][y]
                        })
                        .collect(),
                );
            }
            questions.push(qs);
            answers.push(per_question);
        }
        Relabelling {
            players,
            questions,
            answers,
        }
    }
}

/// A well-mixed 64-bit value of a colour (splitmix64's finaliser).
fn mix(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

fn count_cells(colours: &[usize]) -> usize {
    colours.iter().copied().max().map_or(0, |m| m + 1)
}

/// The first non-singleton cell (by colour) of a partition, as its vertices.
fn target_cell(colours: &[usize]) -> Option<Vec<usize>> {
    let mut size = vec![0usize; count_cells(colours)];
    for &c in colours {
        size[c] += 1;
    }
    let c = size.iter().position(|&k| k > 1)?;
    Some((0..colours.len()).filter(|&v| colours[v] == c).collect())
}

/// The search state: the first path and its leaf, the generators and the work done.
struct Search<'a> {
    graph: &'a Graph,
    scenario: &'a Scenario,
    first_leaf: Vec<usize>,
    /// Cell-size profile of the first path's partition at each depth (a node whose profile
    /// differs cannot lead to an equivalent leaf).
    profiles: Vec<Vec<usize>>,
    generators: Vec<Vec<usize>>,
    exhausted: bool,
}

fn profile(colours: &[usize]) -> Vec<usize> {
    let mut size = vec![0usize; count_cells(colours)];
    for &c in colours {
        size[c] += 1;
    }
    size
}

impl Search<'_> {
    /// A leaf below `colours` (at `depth`) equivalent to the first leaf, as the automorphism
    /// mapping the first leaf to it.
    ///
    /// `fixed` holds the vertices individualised on the way here. Children in one orbit of the
    /// known automorphisms that fix `fixed` pointwise head isomorphic subtrees (one holds an
    /// equivalent leaf iff the other does), so only the first of each orbit is explored.
    fn equivalent_leaf(
        &mut self,
        colours: Vec<usize>,
        depth: usize,
        fixed: &mut Vec<usize>,
    ) -> Option<Vec<usize>> {
        if self.profiles.get(depth) != Some(&profile(&colours)) {
            return None;
        }
        let Some(cell) = target_cell(&colours) else {
            // Discrete: vertex v has colour c here and the vertex with colour c in the first
            // leaf is first_inverse[c]; the automorphism maps that vertex to v.
            let mut g = vec![0; colours.len()];
            let mut first_inverse = vec![0; colours.len()];
            for (v, &c) in self.first_leaf.iter().enumerate() {
                first_inverse[c] = v;
            }
            for (v, &c) in colours.iter().enumerate() {
                g[first_inverse[c]] = v;
            }
            return (self.graph.is_automorphism(&g)
                && self
                    .graph
                    .relabelling(self.scenario, &g)
                    .is_symmetry_of(self.scenario))
            .then_some(g);
        };
        let stabiliser: Vec<Vec<usize>> = self
            .generators
            .iter()
            .filter(|g| fixed.iter().all(|&p| g[p] == p))
            .cloned()
            .collect();
        // Vertices in the orbit of a child already explored (the generators do not change
        // during this loop: they are only added between the searches at the top level).
        let n = colours.len();
        let mut covered = vec![false; n];
        for w in cell {
            if self.graph.over_budget() {
                self.exhausted = true;
                return None;
            }
            if covered[w] {
                continue;
            }
            for (u, c) in orbits(&[w], &stabiliser, n).into_iter().enumerate() {
                covered[u] |= c;
            }
            let next = self.graph.individualise(&colours, w);
            fixed.push(w);
            let found = self.equivalent_leaf(next, depth + 1, fixed);
            fixed.pop();
            if found.is_some() {
                return found;
            }
        }
        None
    }
}

/// The union of the orbits of `points` under the group generated by `generators`, as a mask
/// over the `n` vertices.
fn orbits(points: &[usize], generators: &[Vec<usize>], n: usize) -> Vec<bool> {
    let mut seen = vec![false; n];
    let mut stack: Vec<usize> = Vec::new();
    for &p in points {
        if !std::mem::replace(&mut seen[p], true) {
            stack.push(p);
        }
    }
    while let Some(u) = stack.pop() {
        for g in generators {
            if !std::mem::replace(&mut seen[g[u]], true) {
                stack.push(g[u]);
            }
        }
    }
    seen
}

/// The symmetry group of a game (None when the table has more than [`MAX_ENTRIES`] non-zero
/// entries).
pub fn symmetries(s: &Scenario) -> Option<SymmetryGroup> {
    let graph = Graph::of(s)?;
    // The first path: individualise the first vertex of the target cell until discrete.
    let mut path = Vec::new();
    let mut partitions = vec![graph.refine(graph.colour.clone())];
    while let Some(cell) = target_cell(partitions.last().unwrap()) {
        if graph.over_budget() {
            // Not even a first leaf within the budget: only the identity is known.
            return Some(SymmetryGroup {
                order: 1,
                complete: false,
                generators: Vec::new(),
            });
        }
        let v = cell[0];
        path.push((v, cell));
        let next = graph.individualise(partitions.last().unwrap(), v);
        partitions.push(next);
    }
    let mut search = Search {
        graph: &graph,
        scenario: s,
        first_leaf: partitions.last().unwrap().clone(),
        profiles: partitions.iter().map(|p| profile(p)).collect(),
        generators: Vec::new(),
        exhausted: false,
    };
    let mut order: u128 = 1;
    // Deepest level first: the generators found there fix the earlier path vertices, so each
    // level's orbit is under the stabiliser of the vertices before it.
    for depth in (0..path.len()).rev() {
        let (v, cell) = &path[depth];
        let n = graph.colour.len();
        let mut current = orbits(&[*v], &search.generators, n);
        // Images already shown to be unreachable: their orbits are too.
        let mut failed: Vec<usize> = Vec::new();
        let mut ruled_out = vec![false; n];
        let mut fixed: Vec<usize> = path[..depth].iter().map(|(u, _)| *u).collect();
        for &w in cell {
            if current[w] || ruled_out[w] {
                continue;
            }
            let next = graph.individualise(&partitions[depth], w);
            fixed.push(w);
            let found = search.equivalent_leaf(next, depth + 1, &mut fixed);
            fixed.pop();
            match found {
                Some(g) => {
                    search.generators.push(g);
                    current = orbits(&[*v], &search.generators, n);
                    ruled_out = orbits(&failed, &search.generators, n);
                }
                None => {
                    failed.push(w);
                    ruled_out = orbits(&failed, &search.generators, n);
                }
            }
            if graph.over_budget() {
                search.exhausted = true;
            }
            if search.exhausted {
                break;
            }
        }
        let orbit_size = current.iter().filter(|&&c| c).count();
        order = order.saturating_mul(orbit_size as u128);
        if search.exhausted {
            break;
        }
    }
    Some(SymmetryGroup {
        order,
        complete: !search.exhausted,
        generators: search
            .generators
            .iter()
            .map(|g| graph.relabelling(s, g))
            .collect(),
    })
}

/// Largest table (entries) and most Collins–Gisin coordinates for which the value is put in
/// its canonical form modulo no-signalling ([`no_signalling_canonical`]).
pub const MAX_CANONICAL_ENTRIES: usize = 1 << 16;
/// See [`MAX_CANONICAL_ENTRIES`].
pub const MAX_CANONICAL_COORDINATES: usize = 2000;

/// The game's value as a function on no-signalling behaviours, as a table that relabellings
/// permute: two tables give the same value on every no-signalling behaviour (up to a
/// constant) exactly when their canonical tables are equal.
///
/// The span V of the no-signalling behaviours is invariant under every relabelling, so the
/// orthogonal projection onto V commutes with them; V is the image of the Collins–Gisin
/// parametrisation `M` (a basis, so `MᵀM` is positive definite), and the projection of the
/// weighted table `f` is `M (MᵀM)⁻¹ Mᵀ f`. The all-ones table lies in V and is invariant, so
/// the projection's mean is removed too (a constant on every behaviour). Entries are rounded to
/// 2⁻³⁶ of the largest so that rounding error cannot split equal values (a missed or spurious
/// symmetry only changes how the NPA problem is reduced; its bound is checked in full).
/// `None` when the table is too large or the value is constant.
pub fn no_signalling_canonical(s: &Scenario) -> Option<Scenario> {
    use super::collins_gisin::CollinsGisin;
    let (nq, na) = (s.joint_questions(), s.joint_answers());
    let cg = CollinsGisin::new(s);
    let d = cg.variables + 1;
    if nq.saturating_mul(na) > MAX_CANONICAL_ENTRIES || d > MAX_CANONICAL_COORDINATES {
        return None;
    }
    let (qr, ar) = (s.question_radices(), s.answer_radices());
    let (mut qd, mut ad) = (vec![0; qr.len()], vec![0; ar.len()]);
    let mut terms = Vec::new();
    // Rows of M: coordinate 0 is the constant.
    let mut rows: Vec<Vec<(usize, f64)>> = Vec::with_capacity(nq * na);
    for q in 0..nq {
        digits(q, &qr, &mut qd);
        for a in 0..na {
            digits(a, &ar, &mut ad);
            let constant = cg.expand(&qd, &ad, &mut terms);
            let mut row = Vec::with_capacity(terms.len() + 1);
            if constant != 0.0 {
                row.push((0, constant));
            }
            row.extend(terms.iter().map(|&(v, c)| (v + 1, c)));
            rows.push(row);
        }
    }
    let f = s.objective();
    let mut gram = nalgebra::DMatrix::<f64>::zeros(d, d);
    let mut rhs = nalgebra::DVector::<f64>::zeros(d);
    for (row, &fk) in rows.iter().zip(f) {
        for &(i, ci) in row {
            rhs[i] += ci * fk;
            for &(j, cj) in row {
                gram[(i, j)] += ci * cj;
            }
        }
    }
    let c = gram.cholesky()?.solve(&rhs);
    let mut projected: Vec<f64> = rows
        .iter()
        .map(|row| row.iter().map(|&(i, ci)| ci * c[i]).sum())
        .collect();
    let mean = projected.iter().sum::<f64>() / projected.len() as f64;
    projected.iter_mut().for_each(|v| *v -= mean);
    let scale = projected.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if !(scale.is_finite() && scale > 0.0) {
        return None;
    }
    let grid = (1u64 << 36) as f64;
    let table: Vec<f64> = projected
        .iter()
        .map(|v| (v / scale * grid).round())
        .collect();
    Some(Scenario::from_parts(
        s.parties().to_vec(),
        vec![1.0; nq],
        table,
        0.0,
        s.kind(),
    ))
}

/// The relabellings that leave the game's value unchanged on every no-signalling behaviour:
/// the symmetries of [`no_signalling_canonical`]'s table. They include the table's own
/// ([`symmetries`]) and can be more, when the table writes a marginal one way and its image
/// another (I3322 in Collins–Gisin form: swapping the players and every answer). These are the
/// symmetries an NPA relaxation may be averaged over, since its value depends on the game only
/// through the Collins–Gisin form. `None` as for [`symmetries`], or when the table is too large
/// to put in canonical form.
pub fn symmetries_modulo_no_signalling(s: &Scenario) -> Option<SymmetryGroup> {
    symmetries(&no_signalling_canonical(s)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::{families, Game};

    fn group(spec: &crate::formats::game::GameSpec) -> SymmetryGroup {
        let g = Game::from_spec(spec, "t").unwrap();
        let found = symmetries(&g.scenario).unwrap();
        for r in &found.generators {
            assert!(r.is_symmetry_of(&g.scenario));
        }
        assert!(found.complete);
        found
    }

    /// The image of a deterministic strategy (`answers[player][question]`) under `g`.
    fn relabelled_strategy(g: &Relabelling, answers: &[Vec<usize>]) -> Vec<Vec<usize>> {
        let mut out = answers.to_vec();
        for (i, per_question) in answers.iter().enumerate() {
            for (x, &a) in per_question.iter().enumerate() {
                out[g.players[i]][g.questions[i][x]] = g.answers[i][x][a];
            }
        }
        out
    }

    #[test]
    fn i3322_has_eight_symmetries_modulo_no_signalling_that_keep_every_deterministic_value() {
        // The deterministic behaviours span the no-signalling affine space, so a relabelling
        // keeps the value on every no-signalling behaviour iff it keeps it on each of them.
        let g = Game::from_spec(&families::i3322(), "t").unwrap();
        let s = &g.scenario;
        assert_eq!(symmetries(s).unwrap().order, 1);
        let group = symmetries_modulo_no_signalling(s).unwrap();
        assert!(group.complete);
        assert_eq!(group.order, 8);
        for r in &group.generators {
            assert!(!r.is_symmetry_of(s));
            for k in 0..64usize {
                let answers: Vec<Vec<usize>> = (0..2)
                    .map(|i| (0..3).map(|x| (k >> (3 * i + x)) & 1).collect())
                    .collect();
                let (v, w) = (
                    s.value_of_strategy(&answers),
                    s.value_of_strategy(&relabelled_strategy(r, &answers)),
                );
                assert!((v - w).abs() < 1e-12, "{v} {w}");
            }
        }
        // The table's own symmetries are among them.
        for spec in [
            families::chsh(),
            families::cglmp(3).unwrap(),
            families::mermin(),
        ] {
            let g = Game::from_spec(&spec, "t").unwrap();
            let table = symmetries(&g.scenario).unwrap().order;
            let modulo = symmetries_modulo_no_signalling(&g.scenario).unwrap().order;
            assert!(
                modulo >= table && modulo.is_multiple_of(table),
                "{table} {modulo}"
            );
        }
    }

    /// Every permutation of 0..n.
    fn permutations(n: usize) -> Vec<Vec<usize>> {
        if n == 0 {
            return vec![Vec::new()];
        }
        let mut out = Vec::new();
        for p in permutations(n - 1) {
            for k in 0..n {
                let mut q = p.clone();
                q.insert(k, n - 1);
                out.push(q);
            }
        }
        out
    }

    /// The number of symmetries of a two-player game, by trying every relabelling.
    fn brute_force_order(s: &Scenario) -> u128 {
        let p = s.parties();
        let (qs, as_) = (p[0].questions(), p[0].answers());
        let player_perms: Vec<Vec<usize>> = if p[1].questions() == qs && p[1].answers() == as_ {
            vec![vec![0, 1], vec![1, 0]]
        } else {
            vec![vec![0, 1]]
        };
        let answer_choices = |i: usize| -> Vec<Vec<Vec<usize>>> {
            // One answer permutation per question of player i: all combinations.
            let per = permutations(p[i].answers());
            let mut out = vec![Vec::new()];
            for _ in 0..p[i].questions() {
                out = out
                    .into_iter()
                    .flat_map(|prefix: Vec<Vec<usize>>| {
                        per.iter().map(move |t| {
                            let mut v = prefix.clone();
                            v.push(t.clone());
                            v
                        })
                    })
                    .collect();
            }
            out
        };
        let (a0, a1) = (answer_choices(0), answer_choices(1));
        let mut count = 0;
        for players in &player_perms {
            for q0 in permutations(p[0].questions()) {
                for q1 in permutations(p[1].questions()) {
                    for t0 in &a0 {
                        for t1 in &a1 {
                            let r = Relabelling {
                                players: players.clone(),
                                questions: vec![q0.clone(), q1.clone()],
                                answers: vec![t0.clone(), t1.clone()],
                            };
                            if r.is_symmetry_of(s) {
                                count += 1;
                            }
                        }
                    }
                }
            }
        }
        count
    }

    #[test]
    fn orders_match_a_brute_force_count_of_every_relabelling() {
        for spec in [
            families::chsh(),
            families::chsh_expression(),
            families::i3322(),
            families::cglmp(3).unwrap(),
            families::odd_cycle(3).unwrap(),
        ] {
            let s = Game::from_spec(&spec, "t").unwrap().scenario;
            let found = group(&spec);
            assert_eq!(found.order, brute_force_order(&s), "{:?}", spec.name);
        }
    }

    #[test]
    fn a_game_without_structure_has_only_the_identity() {
        // Scores 0..15 in table order: no two entries are equal, so only the identity fixes it.
        let mut spec = families::chsh_expression();
        spec.bell = Some(serde_yaml::from_str(
            "terms: [{coefficient: 1, event: {alice: '0|0', bob: '0|0'}}, {coefficient: 2, event: {alice: '1|0', bob: '0|0'}}, {coefficient: 3, event: {alice: '0|1', bob: '0|1'}}, {coefficient: 5, event: {alice: '0|0', bob: '1|1'}}]",
        )
        .unwrap());
        assert_eq!(group(&spec).order, 1);
    }

    #[test]
    fn orders_are_products_of_orbits_and_invariants_hold() {
        for spec in [
            families::magic_square(),
            families::ghz(3).unwrap(),
            families::cglmp(8).unwrap(),
        ] {
            let g = group(&spec);
            assert!(g.order >= 2, "{}", g.order);
            assert!(!g.generators.is_empty());
        }
        // A relabelling that is not a symmetry is refused.
        let s = Game::from_spec(&families::i3322(), "t").unwrap().scenario;
        let swap_alice_answers = Relabelling {
            players: vec![0, 1],
            questions: vec![vec![0, 1, 2], vec![0, 1, 2]],
            answers: vec![
                vec![vec![1, 0], vec![0, 1], vec![0, 1]],
                vec![vec![0, 1], vec![0, 1], vec![0, 1]],
            ],
        };
        assert!(!swap_alice_answers.is_symmetry_of(&s));
    }

    #[test]
    fn a_reported_order_never_exceeds_the_true_one() {
        // Win iff a = b, five questions and answers each: a symmetry relabels each player's
        // questions freely, applies one common answer permutation to every question of both
        // players (so that a = b is kept), and may swap the players: 2·(5!)³ = 3,456,000.
        let text = "players:\n  - {name: alice, question: x, answer: a, questions: 5, answers: 5}\n  - {name: bob, question: y, answer: b, questions: 5, answers: 5}\nwin: a == b\n";
        let g = Game::from_yaml(text, "t.yaml", Default::default()).unwrap();
        let found = symmetries(&g.scenario).unwrap();
        for r in &found.generators {
            assert!(r.is_symmetry_of(&g.scenario));
        }
        let truth = 2 * 120u128.pow(3);
        assert!(found.order <= truth, "{}", found.order);
        if found.complete {
            assert_eq!(found.order, truth);
        }
    }
}
