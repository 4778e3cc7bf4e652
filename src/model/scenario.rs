//! The flat game table every solver reads.
//!
//! After parsing, a game is nothing but: for each joint question `q` its weight `w(q)` (a
//! probability for a game, 1 for a plain Bell expression) and, for each joint answer `a`, the
//! score `V(a|q)`. The value of a behaviour `p(a|q)` is `offset + Σ_q w(q) Σ_a V(a|q) p(a|q)`.
//! Joint questions and answers are indexed in mixed radix with player 0 the most significant
//! digit. Solvers use [`Scenario::objective`], the product `w(q)·V(a|q)`, and never re-evaluate a
//! formula.

use serde::Serialize;

use crate::error::{Error, Result};

/// One player's question and answer sets. Labels are what the game file calls them; solvers
/// work with indices `0..len`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Party {
    /// The player's name.
    pub name: String,
    /// Question labels, in index order.
    pub question_labels: Vec<i64>,
    /// Answer labels, in index order.
    pub answer_labels: Vec<i64>,
}

impl Party {
    /// Number of questions.
    pub fn questions(&self) -> usize {
        self.question_labels.len()
    }
    /// Number of answers.
    pub fn answers(&self) -> usize {
        self.answer_labels.len()
    }
}

/// Whether scores are win/lose (a game) or real (a Bell expression). Only affects reporting and
/// warnings; the solvers treat both the same way.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ScoreKind {
    /// Win/lose scores (0 or 1) weighted by a question distribution: a game.
    Win,
    /// Real scores: a Bell expression or a scored game.
    Score,
}

/// The flat table every bound reads: players, question weights, the score of every joint question
/// and answer, and a constant term.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    parties: Vec<Party>,
    /// Weight of each joint question.
    weights: Vec<f64>,
    /// `V(a|q)` at `q * joint_answers + a`.
    scores: Vec<f64>,
    /// Constant term of a Bell expression.
    offset: f64,
    kind: ScoreKind,
    /// `weights[q] · scores[q·A + a]`, computed once (the tables are private so it never goes
    /// stale).
    objective: Vec<f64>,
}

/// `x ≤ limit`, false when x is NaN (unlike `!(x > limit)`).
pub fn at_most(x: f64, limit: f64) -> bool {
    matches!(
        x.partial_cmp(&limit),
        Some(std::cmp::Ordering::Less | std::cmp::Ordering::Equal)
    )
}

/// Mixed-radix helper: the digits of an index with radices `radices` (first most significant).
pub fn digits(mut index: usize, radices: &[usize], out: &mut [usize]) {
    for k in (0..radices.len()).rev() {
        out[k] = index % radices[k];
        index /= radices[k];
    }
}

/// Inverse of [`digits`].
pub fn index_of(digits: &[usize], radices: &[usize]) -> usize {
    digits
        .iter()
        .zip(radices)
        .fold(0, |acc, (&d, &r)| acc * r + d)
}

/// The largest coefficient (weight × score, or the constant) a game's value may have; see
/// [`Scenario::checked`].
pub const MOST_COEFFICIENT: f64 = 1e100;

impl Scenario {
    /// Builds a scenario; `weights` has one entry per joint question, `scores` one per joint
    /// question and answer (first player most significant). Every table is checked as for
    /// untrusted input ([`Scenario::checked`]); a wrong one is an [`Error::InvalidArgument`].
    pub fn new(
        parties: Vec<Party>,
        weights: Vec<f64>,
        scores: Vec<f64>,
        offset: f64,
        kind: ScoreKind,
    ) -> Result<Self> {
        Scenario::checked(parties, weights, scores, offset, kind).map_err(Error::InvalidArgument)
    }

    /// The scenario of tables whose lengths the caller has made right (no other check).
    pub(crate) fn from_parts(
        parties: Vec<Party>,
        weights: Vec<f64>,
        scores: Vec<f64>,
        offset: f64,
        kind: ScoreKind,
    ) -> Self {
        let mut s = Scenario {
            parties,
            weights,
            scores,
            offset,
            kind,
            objective: Vec::new(),
        };
        let na = s.joint_answers();
        s.objective = s
            .scores
            .iter()
            .enumerate()
            .map(|(i, v)| s.weights[i / na] * v)
            .collect();
        s
    }

    /// Builds a scenario from untrusted tables: the lengths must match the parties, every
    /// weight must be finite and non-negative, every score and the offset finite, and the
    /// range of values finite too (scores of 1e308 can each be finite and still sum to
    /// infinity). The message says what is wrong; the caller adds the location.
    pub fn checked(
        parties: Vec<Party>,
        weights: Vec<f64>,
        scores: Vec<f64>,
        offset: f64,
        kind: ScoreKind,
    ) -> std::result::Result<Scenario, String> {
        let nq: Option<usize> = parties
            .iter()
            .try_fold(1usize, |acc, p| acc.checked_mul(p.questions()));
        let na: Option<usize> = parties
            .iter()
            .try_fold(1usize, |acc, p| acc.checked_mul(p.answers()));
        let (Some(nq), Some(na)) = (nq, na) else {
            return Err("the table's size overflows".into());
        };
        if weights.len() != nq || Some(scores.len()) != nq.checked_mul(na) {
            return Err(format!(
                "the tables have {} weights and {} scores; the players need {nq} and {}",
                weights.len(),
                scores.len(),
                nq.saturating_mul(na)
            ));
        }
        if let Some(w) = weights.iter().find(|w| !w.is_finite() || **w < 0.0) {
            return Err(format!(
                "a question weight is {w}: weights must be finite and non-negative"
            ));
        }
        if let Some(v) = scores.iter().find(|v| !v.is_finite()) {
            return Err(format!("a score is {v}: scores must be finite"));
        }
        if !offset.is_finite() {
            return Err(format!("the constant term is {offset}: it must be finite"));
        }
        let s = Scenario::from_parts(parties, weights, scores, offset, kind);
        // Solvers square, sum and expand these coefficients (the Collins–Gisin expansion alone
        // multiplies them by up to 2ⁿ terms): beyond this size double precision overflows to
        // inf and NaN inside them, so such tables are refused here rather than reported as NaN.
        let largest = s
            .objective
            .iter()
            .chain(std::iter::once(&s.offset))
            .fold(0.0f64, |m, c| m.max(c.abs()));
        if largest > MOST_COEFFICIENT {
            return Err(format!(
                "a coefficient of the value is {largest:e} in magnitude; at most {MOST_COEFFICIENT:e} is accepted (larger ones overflow double precision inside the solvers): rescale the game"
            ));
        }
        let (lo, hi) = s.value_range();
        if !lo.is_finite() || !hi.is_finite() || s.objective.iter().any(|c| !c.is_finite()) {
            return Err(format!(
                "the values range over [{lo}, {hi}]: coefficients this large overflow double precision"
            ));
        }
        Ok(s)
    }

    /// Number of players.
    /// The players with their question and answer labels.
    pub fn parties(&self) -> &[Party] {
        &self.parties
    }

    /// Weight of each joint question.
    pub fn weights(&self) -> &[f64] {
        &self.weights
    }

    /// `V(a|q)` at `q * joint_answers + a`.
    pub fn scores(&self) -> &[f64] {
        &self.scores
    }

    /// Constant term (of a Bell expression; 0 for a game).
    pub fn offset(&self) -> f64 {
        self.offset
    }

    /// Win/lose or real scores.
    pub fn kind(&self) -> ScoreKind {
        self.kind
    }

    /// Number of players.
    pub fn players(&self) -> usize {
        self.parties.len()
    }
    /// Questions per player (the radices of joint question indices).
    pub fn question_radices(&self) -> Vec<usize> {
        self.parties.iter().map(Party::questions).collect()
    }
    /// Answers per player (the radices of joint answer indices).
    pub fn answer_radices(&self) -> Vec<usize> {
        self.parties.iter().map(Party::answers).collect()
    }
    /// Number of joint questions.
    pub fn joint_questions(&self) -> usize {
        self.parties.iter().map(Party::questions).product()
    }
    /// Number of joint answers.
    pub fn joint_answers(&self) -> usize {
        self.parties.iter().map(Party::answers).product()
    }

    /// `w(q)·V(a|q)` at `q * joint_answers + a`: the linear functional every solver maximises.
    pub fn objective(&self) -> &[f64] {
        &self.objective
    }

    /// Calls `f(question digits, answer digits, w(q)·V(a|q))` for every non-zero entry of the
    /// objective, questions outermost.
    pub fn for_each_term(&self, mut f: impl FnMut(&[usize], &[usize], f64)) {
        let qr = self.question_radices();
        let ar = self.answer_radices();
        let na = self.joint_answers();
        let (mut qd, mut ad) = (vec![0; qr.len()], vec![0; qr.len()]);
        for q in 0..self.joint_questions() {
            digits(q, &qr, &mut qd);
            for (a, &c) in self.objective[q * na..(q + 1) * na].iter().enumerate() {
                if c != 0.0 {
                    digits(a, &ar, &mut ad);
                    f(&qd, &ad, c);
                }
            }
        }
    }

    /// The value of a behaviour given as `p(a|q)` in the same layout as [`Scenario::scores`].
    pub fn value_of_behaviour(&self, p: &[f64]) -> f64 {
        self.offset
            + self
                .objective
                .iter()
                .zip(p)
                .map(|(c, p)| c * p)
                .sum::<f64>()
    }

    /// The value of a deterministic strategy: `answers[i][x]` is player i's answer index to
    /// question index x. Recomputed from the table, independently of any search.
    pub fn value_of_strategy(&self, answers: &[Vec<usize>]) -> f64 {
        let qr = self.question_radices();
        let ar = self.answer_radices();
        let na = self.joint_answers();
        let mut qd = vec![0; qr.len()];
        let mut ad = vec![0; qr.len()];
        let mut total = self.offset;
        for q in 0..self.joint_questions() {
            digits(q, &qr, &mut qd);
            for (i, d) in ad.iter_mut().enumerate() {
                *d = answers[i][qd[i]];
            }
            total += self.objective[q * na + index_of(&ad, &ar)];
        }
        total
    }

    /// The same game with questions, answers and players renamed by permutations: `players[k]`
    /// is the old index of the new player k; `questions[i][x]` the old question index of player
    /// i's new question x (i in old numbering); likewise `answers[i][x][a]` per question.
    /// Used to check that nothing depends on labels.
    pub fn relabelled(
        &self,
        players: &[usize],
        questions: &[Vec<usize>],
        answers: &[Vec<Vec<usize>>],
    ) -> Scenario {
        let n = self.players();
        let parties: Vec<Party> = players.iter().map(|&i| self.parties[i].clone()).collect();
        let new_qr: Vec<usize> = parties.iter().map(Party::questions).collect();
        let new_ar: Vec<usize> = parties.iter().map(Party::answers).collect();
        let old_qr = self.question_radices();
        let old_ar = self.answer_radices();
        let (nq, na) = (self.joint_questions(), self.joint_answers());
        let mut weights = vec![0.0; nq];
        let mut scores = vec![0.0; nq * na];
        let (mut nqd, mut nad) = (vec![0; n], vec![0; n]);
        let (mut oqd, mut oad) = (vec![0; n], vec![0; n]);
        for q in 0..nq {
            digits(q, &new_qr, &mut nqd);
            for k in 0..n {
                let old = players[k];
                oqd[old] = questions[old][nqd[k]];
            }
            let oq = index_of(&oqd, &old_qr);
            weights[q] = self.weights[oq];
            for a in 0..na {
                digits(a, &new_ar, &mut nad);
                for k in 0..n {
                    let old = players[k];
                    oad[old] = answers[old][nqd[k]][nad[k]];
                }
                scores[q * na + a] = self.scores[oq * na + index_of(&oad, &old_ar)];
            }
        }
        Scenario::from_parts(parties, weights, scores, self.offset, self.kind)
    }

    /// Smallest and largest possible value over all behaviours (each question's best and worst
    /// answer). Bounds every value any model can reach.
    pub fn value_range(&self) -> (f64, f64) {
        let na = self.joint_answers();
        let (mut lo, mut hi) = (self.offset, self.offset);
        for row in self.objective.chunks(na) {
            lo += row.iter().cloned().fold(f64::INFINITY, f64::min);
            hi += row.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        }
        (lo, hi)
    }
}

impl Scenario {
    /// The range of one round's score when questions are drawn with probability `w(q)/W`
    /// (`W = Σ w`) and the round scores `offset + W·V(a|q)`: the unbiased per-round estimator of
    /// the value, whose mean is the value. For a game (`W = 1`) this is the range of `V`; for a
    /// plain Bell expression over `Q` joint questions it is `offset + Q·[min V, max V]` (for
    /// the CHSH expression, [−4, 4]). Questions of weight 0 are never asked and do not count.
    pub fn per_round_score_range(&self) -> (f64, f64) {
        let total: f64 = self.weights.iter().sum();
        let na = self.joint_answers();
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for (q, &w) in self.weights.iter().enumerate() {
            if w > 0.0 {
                for &v in &self.scores[q * na..(q + 1) * na] {
                    lo = lo.min(v);
                    hi = hi.max(v);
                }
            }
        }
        if lo > hi {
            return (self.offset, self.offset);
        }
        (self.offset + total * lo, self.offset + total * hi)
    }

    /// A fingerprint of the flat table (sizes, weights, scores, offset, bit for bit): two 64-bit
    /// FNV-1a hashes with different offsets, as 32 hex digits. Binds a certificate to the game
    /// it was computed for; it detects a different or edited game, and is not a cryptographic
    /// commitment.
    pub fn fingerprint(&self) -> String {
        let mut words: Vec<u64> = Vec::with_capacity(4 + self.weights.len() + self.scores.len());
        words.push(self.players() as u64);
        for p in &self.parties {
            words.push(p.questions() as u64);
            words.push(p.answers() as u64);
        }
        words.push(self.offset.to_bits());
        words.extend(self.weights.iter().map(|w| w.to_bits()));
        words.extend(self.scores.iter().map(|v| v.to_bits()));
        let fnv = |basis: u64| {
            let mut h = basis;
            for w in &words {
                for byte in w.to_le_bytes() {
                    h ^= byte as u64;
                    h = h.wrapping_mul(0x0000_0100_0000_01B3);
                }
            }
            h
        };
        format!(
            "{:016x}{:016x}",
            fnv(0xcbf2_9ce4_8422_2325),
            fnv(0x6c62_272e_07bb_0142)
        )
    }

    /// Whether the question weights form a probability distribution (sum 1 within 1e-9).
    pub fn weights_are_probabilities(&self) -> bool {
        (self.weights.iter().sum::<f64>() - 1.0).abs() <= 1e-9
    }
}

/// Sizes and cost estimates shown by `check` and used to refuse work that would not finish.
#[derive(Debug, Clone, Serialize)]
pub struct Sizes {
    /// Number of players.
    pub players: usize,
    /// Questions per player.
    pub questions: Vec<usize>,
    /// Answers per player.
    pub answers: Vec<usize>,
    /// Joint questions.
    pub joint_questions: usize,
    /// Joint answers.
    pub joint_answers: usize,
    /// Entries of the score table.
    pub table_entries: usize,
    /// Number of deterministic strategies (as a float: it overflows integers quickly).
    pub deterministic_strategies: f64,
}

impl Sizes {
    /// The sizes of `s`.
    pub fn of(s: &Scenario) -> Self {
        Sizes {
            players: s.players(),
            questions: s.question_radices(),
            answers: s.answer_radices(),
            joint_questions: s.joint_questions(),
            joint_answers: s.joint_answers(),
            table_entries: s.joint_questions() * s.joint_answers(),
            deterministic_strategies: s
                .parties
                .iter()
                .map(|p| (p.answers() as f64).powi(p.questions() as i32))
                .product(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn party(name: &str, q: usize, a: usize) -> Party {
        Party {
            name: name.into(),
            question_labels: (0..q as i64).collect(),
            answer_labels: (0..a as i64).collect(),
        }
    }

    #[test]
    fn mixed_radix_round_trips() {
        let r = [2, 3, 4];
        let mut d = [0; 3];
        for i in 0..24 {
            digits(i, &r, &mut d);
            assert_eq!(index_of(&d, &r), i);
        }
        digits(23, &r, &mut d);
        assert_eq!(d, [1, 2, 3]);
    }

    #[test]
    fn strategy_value_matches_hand_computation() {
        // CHSH: win iff a xor b == x and y, uniform questions.
        let mut scores = vec![0.0; 16];
        for x in 0..2 {
            for y in 0..2 {
                for a in 0..2 {
                    for b in 0..2 {
                        scores[(x * 2 + y) * 4 + a * 2 + b] = ((a ^ b) == (x & y)) as u8 as f64;
                    }
                }
            }
        }
        let s = Scenario::new(
            vec![party("a", 2, 2), party("b", 2, 2)],
            vec![0.25; 4],
            scores,
            0.0,
            ScoreKind::Win,
        )
        .unwrap();
        assert_eq!(s.value_of_strategy(&[vec![0, 0], vec![0, 0]]), 0.75);
        assert_eq!(s.value_of_strategy(&[vec![0, 1], vec![1, 1]]), 0.25);
        assert_eq!(s.value_range(), (0.0, 1.0));
    }

    #[test]
    fn new_refuses_tables_that_do_not_fit_the_players() {
        let parties = || vec![party("a", 2, 2), party("b", 2, 2)];
        let wrong_length =
            Scenario::new(parties(), vec![0.25; 3], vec![0.0; 16], 0.0, ScoreKind::Win);
        assert!(matches!(wrong_length, Err(Error::InvalidArgument(m)) if m.contains("3 weights")));
        let nan = Scenario::new(
            parties(),
            vec![0.25; 4],
            vec![f64::NAN; 16],
            0.0,
            ScoreKind::Score,
        );
        assert!(matches!(nan, Err(Error::InvalidArgument(_))));
        let negative = Scenario::new(
            parties(),
            vec![-0.25; 4],
            vec![0.0; 16],
            0.0,
            ScoreKind::Win,
        );
        assert!(matches!(negative, Err(Error::InvalidArgument(_))));
        let s = Scenario::new(
            parties(),
            vec![0.25; 4],
            vec![1.0; 16],
            0.5,
            ScoreKind::Score,
        )
        .unwrap();
        assert_eq!(s.objective(), &[0.25; 16][..]);
        assert_eq!(
            (s.offset(), s.kind(), s.players()),
            (0.5, ScoreKind::Score, 2)
        );
    }
}
