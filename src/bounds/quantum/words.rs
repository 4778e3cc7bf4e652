//! Operator words over the players' projectors in Collins–Gisin form (each measurement's last
//! outcome is left out: it is the identity minus the others), and their canonical forms.
//!
//! Rules: projectors are idempotent (P P = P), different outcomes of one measurement are
//! orthogonal (P_a P_b = 0 for a ≠ b), operators of different players commute. A canonical word
//! lists each player's operators in player order, and within a player no two neighbours belong
//! to the same measurement. Moments of a word and of its adjoint are identified (see
//! [`moment_key`]).

use std::collections::BTreeSet;

/// One projector: `player`'s measurement `setting` with outcome `outcome` (never the last).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Projector {
    /// The player.
    pub player: u16,
    /// The question index.
    pub setting: u32,
    /// The answer index.
    pub outcome: u32,
}

/// A canonical word; the empty word is the identity.
pub type Word = Vec<Projector>;

impl Projector {
    /// `player`'s projector for `outcome` of question `setting`.
    pub fn new(player: usize, setting: usize, outcome: usize) -> Projector {
        Projector {
            player: player as u16,
            setting: setting as u32,
            outcome: outcome as u32,
        }
    }
}

/// The word of a Collins–Gisin coordinate: one projector for each player in `mask`, at that
/// player's question and answer in `q` and `a`.
pub fn collins_gisin_word(mask: usize, q: &[usize], a: &[usize]) -> Word {
    (0..q.len())
        .filter(|i| mask >> i & 1 == 1)
        .map(|i| Projector::new(i, q[i], a[i]))
        .collect()
}

/// Canonical form of a product, or `None` when it is zero.
pub fn canonical(ops: impl IntoIterator<Item = Projector>) -> Option<Word> {
    canonical_with(ops, &[])
}

/// [`canonical`] where the letters of the players flagged in `involutions` are ±1-valued
/// observables (`A² = 1`, so equal neighbours cancel and may expose new neighbours) rather than
/// projectors; unflagged players (and every player beyond the slice) keep the projector rules.
pub fn canonical_with(
    ops: impl IntoIterator<Item = Projector>,
    involutions: &[bool],
) -> Option<Word> {
    let mut ops: Vec<Projector> = ops.into_iter().collect();
    // Different players commute: a stable sort keeps each player's own order.
    ops.sort_by_key(|p| p.player);
    let mut out: Word = Vec::with_capacity(ops.len());
    for p in ops {
        if let Some(last) = out.last() {
            if last.player == p.player && last.setting == p.setting {
                if involutions.get(p.player as usize).copied().unwrap_or(false) {
                    out.pop(); // A A = 1
                    continue;
                }
                if last.outcome == p.outcome {
                    continue; // idempotent
                }
                return None; // orthogonal outcomes
            }
        }
        out.push(p);
    }
    Some(out)
}

/// The adjoint: each player's operators in reverse order (players stay in order).
pub fn adjoint(w: &[Projector]) -> Word {
    let mut out = Vec::with_capacity(w.len());
    let mut start = 0;
    while start < w.len() {
        let mut end = start;
        while end < w.len() && w[end].player == w[start].player {
            end += 1;
        }
        out.extend(w[start..end].iter().rev());
        start = end;
    }
    out
}

/// The representative of a moment. For a real Bell functional we may take the moment matrix
/// real symmetric: if a complex moment matrix is feasible, so is its complex conjugate, and their
/// average is real, positive semidefinite, and has the same (real) objective. A real moment
/// matrix has ⟨w⟩ = ⟨w†⟩, so a word and its adjoint share one variable.
pub fn moment_key(w: Word) -> Word {
    let a = adjoint(&w);
    if a < w {
        a
    } else {
        w
    }
}

/// The product `u† v` in canonical form.
pub fn product(u: &[Projector], v: &[Projector]) -> Option<Word> {
    canonical(adjoint(u).into_iter().chain(v.iter().copied()))
}

/// Every projector of a player, in setting-major order.
pub fn projectors_of(player: usize, settings: usize, kept_outcomes: usize) -> Vec<Projector> {
    (0..settings)
        .flat_map(|s| {
            (0..kept_outcomes).map(move |o| Projector {
                player: player as u16,
                setting: s as u32,
                outcome: o as u32,
            })
        })
        .collect()
}

/// All canonical, non-zero words whose players follow `pattern` (e.g. [0, 0, 1] for "AAB") and
/// whose length equals the pattern's (no operator absorbed), deduplicated and sorted.
pub fn words_of_pattern(pattern: &[usize], ops_per_player: &[Vec<Projector>]) -> Vec<Word> {
    let mut found = BTreeSet::new();
    let mut current = Vec::with_capacity(pattern.len());
    fn rec(
        pattern: &[usize],
        ops: &[Vec<Projector>],
        current: &mut Vec<Projector>,
        found: &mut BTreeSet<Word>,
    ) {
        if current.len() == pattern.len() {
            if let Some(w) = canonical(current.iter().copied()) {
                if w.len() == pattern.len() {
                    found.insert(w);
                }
            }
            return;
        }
        for &p in &ops[pattern[current.len()]] {
            current.push(p);
            rec(pattern, ops, current, found);
            current.pop();
        }
    }
    rec(pattern, ops_per_player, &mut current, &mut found);
    found.into_iter().collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(player: u16, setting: u32, outcome: u32) -> Projector {
        Projector {
            player,
            setting,
            outcome,
        }
    }

    #[test]
    fn reduction_rules() {
        let a = p(0, 0, 0);
        let a2 = p(0, 0, 1);
        let a_other = p(0, 1, 0);
        let b = p(1, 0, 0);
        assert_eq!(canonical([a, a]), Some(vec![a]));
        assert_eq!(canonical([a, a2]), None);
        assert_eq!(canonical([b, a]), Some(vec![a, b]));
        // A B A = A A B = A B (commuting across players, then idempotent).
        assert_eq!(canonical([a, b, a]), Some(vec![a, b]));
        // A A' stays: different settings of one player do not commute.
        assert_eq!(canonical([a, a_other]), Some(vec![a, a_other]));
        assert_ne!(canonical([a_other, a]), canonical([a, a_other]));
        assert_eq!(adjoint(&[a, a_other, b]), vec![a_other, a, b]);
        assert_eq!(moment_key(vec![a_other, a]), vec![a, a_other]);
    }

    #[test]
    fn patterns_enumerate_non_degenerate_words() {
        let ops = vec![projectors_of(0, 2, 1), projectors_of(1, 2, 1)];
        assert_eq!(words_of_pattern(&[0], &ops).len(), 2);
        assert_eq!(words_of_pattern(&[0, 1], &ops).len(), 4);
        // A A: only the two words with different settings survive.
        assert_eq!(words_of_pattern(&[0, 0], &ops).len(), 2);
    }
}
