//! Collins–Gisin coordinates of a scenario, shared by the no-signalling LP and the NPA
//! hierarchy.
//!
//! Every no-signalling behaviour is fixed by the marginals `p(a_S|q_S)` of every non-empty group
//! S of players with every answer but each player's last; conversely every assignment of these
//! numbers is no-signalling, and full probabilities are affine in them:
//! `p(a|q) = Π_i f_i` with `f_i` the event `a_i` when it is not the last answer and
//! `1 − Σ_{a' < last} a'` when it is. In the NPA hierarchy the same variables are the moments
//! of products of one projector per player in S.

use crate::model::scenario::Scenario;

/// Collins–Gisin coordinates: one variable per marginal probability `p(a_S|q_S)` for every
/// non-empty group S of players, with every player's last answer left out.
pub struct CollinsGisin {
    /// Per player: questions and answers minus one (the answers that get variables).
    q: Vec<usize>,
    kept: Vec<usize>,
    /// First variable of each group, by bit mask.
    offset: Vec<usize>,
    /// Number of Collins–Gisin coordinates.
    pub variables: usize,
}

impl CollinsGisin {
    /// The coordinates of `s`.
    pub fn new(s: &Scenario) -> Self {
        let n = s.players();
        let q: Vec<usize> = s.question_radices();
        let kept: Vec<usize> = s.answer_radices().iter().map(|a| a - 1).collect();
        let mut offset = vec![0; 1 << n];
        let mut next = 0;
        for (mask, o) in offset.iter_mut().enumerate().skip(1) {
            *o = next;
            next += (0..n)
                .filter(|i| mask >> i & 1 == 1)
                .map(|i| q[i] * kept[i])
                .product::<usize>();
        }
        CollinsGisin {
            q,
            kept,
            offset,
            variables: next,
        }
    }

    /// Index of `p(a_S|q_S)`; `answers[i]` must be below `kept[i]` for i in the mask.
    pub fn index(&self, mask: usize, questions: &[usize], answers: &[usize]) -> usize {
        let mut k = 0;
        for i in 0..self.q.len() {
            if mask >> i & 1 == 1 {
                k = k * self.q[i] * self.kept[i] + questions[i] * self.kept[i] + answers[i];
            }
        }
        self.offset[mask] + k
    }

    /// `p(a|q)` as a constant plus a combination of variables: each player with its last answer
    /// contributes (1 − Σ of its other answers), the others their own event.
    pub fn expand(
        &self,
        questions: &[usize],
        answers: &[usize],
        out: &mut Vec<(usize, f64)>,
    ) -> f64 {
        out.clear();
        let mut constant = 0.0;
        let mut chosen = answers.to_vec();
        self.expand_from(
            0,
            0,
            1.0,
            questions,
            answers,
            &mut chosen,
            out,
            &mut constant,
        );
        constant
    }

    #[allow(clippy::too_many_arguments)]
    fn expand_from(
        &self,
        player: usize,
        mask: usize,
        sign: f64,
        questions: &[usize],
        answers: &[usize],
        chosen: &mut Vec<usize>,
        out: &mut Vec<(usize, f64)>,
        constant: &mut f64,
    ) {
        if player == self.q.len() {
            if mask == 0 {
                *constant += sign;
            } else {
                out.push((self.index(mask, questions, chosen), sign));
            }
            return;
        }
        let bit = 1 << player;
        if answers[player] < self.kept[player] {
            chosen[player] = answers[player];
            self.expand_from(
                player + 1,
                mask | bit,
                sign,
                questions,
                answers,
                chosen,
                out,
                constant,
            );
        } else {
            self.expand_from(
                player + 1,
                mask,
                sign,
                questions,
                answers,
                chosen,
                out,
                constant,
            );
            for other in 0..self.kept[player] {
                chosen[player] = other;
                self.expand_from(
                    player + 1,
                    mask | bit,
                    -sign,
                    questions,
                    answers,
                    chosen,
                    out,
                    constant,
                );
            }
        }
    }
}

impl CollinsGisin {
    /// The group (bit mask), questions and answers of variable `v` (entries of players outside
    /// the group are 0).
    pub fn describe(&self, v: usize) -> (usize, Vec<usize>, Vec<usize>) {
        let n = self.q.len();
        let mask = (1..self.offset.len())
            .rev()
            .find(|&m| self.offset[m] <= v && self.group_size(m) > 0)
            .unwrap_or(1);
        let mut k = v - self.offset[mask];
        let (mut questions, mut answers) = (vec![0; n], vec![0; n]);
        for i in (0..n).rev() {
            if mask >> i & 1 == 1 {
                let digit = k % (self.q[i] * self.kept[i]);
                k /= self.q[i] * self.kept[i];
                questions[i] = digit / self.kept[i];
                answers[i] = digit % self.kept[i];
            }
        }
        (mask, questions, answers)
    }

    fn group_size(&self, mask: usize) -> usize {
        (0..self.q.len())
            .filter(|i| mask >> i & 1 == 1)
            .map(|i| self.q[i] * self.kept[i])
            .product()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::{families, Game};

    #[test]
    fn describe_inverts_index() {
        let s = Game::from_spec(&families::ghz(3).unwrap(), "t")
            .unwrap()
            .scenario;
        let cg = CollinsGisin::new(&s);
        assert_eq!(cg.variables, 3usize.pow(3) - 1);
        for v in 0..cg.variables {
            let (mask, q, a) = cg.describe(v);
            assert_eq!(cg.index(mask, &q, &a), v);
        }
    }
}
