//! Honest implementations under noise: what a strategy's behaviour becomes when the source's
//! state is mixed with white noise and the detectors miss some rounds.
//!
//! The model (common practice in photonic Bell tests, stated here because every threshold
//! depends on it):
//! - **Visibility** `v`: the devices share `v·|ψ⟩⟨ψ| + (1 − v)·𝟙/D` instead of `|ψ⟩⟨ψ|`.
//! - **Detection efficiency** `η_i` per player: each round, independently, player i's detector
//!   clicks with probability `η_i` and the measurement's answer is reported; otherwise the round
//!   is a no-click.
//! - **Dark counts** `δ`: a no-click round still registers, with probability `δ`, a spurious
//!   click whose answer is uniformly random.
//! - **No-click assignment**: a round without a click is reported as a fixed answer chosen per
//!   player and question (the assignment), either given or the best one for the figure.
//!
//! Loss and dark counts act on each player's answer as a classical channel
//! `K(a'|a) = η δ_{a'a} + (1 − η)(δ/|A| + (1 − δ) δ_{a' f(x)})`, so the noisy behaviour is a
//! quantum behaviour post-processed locally, and its score is the ideal behaviour's score in the
//! game whose table is pulled back through the channels ([`NoiseModel::pulled_back`]).

use serde::Serialize;

use crate::model::scenario::{digits, index_of, Scenario};
use crate::model::strategy::{CertifiedValue, QuantumStrategy};

/// What a round without a click is reported as.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum NoClick {
    /// The assignment (one answer per player and question) that maximises the figure: every
    /// assignment is tried when there are at most [`EXHAUSTIVE_ASSIGNMENTS`] of them,
    /// otherwise the best is sought one player and question at a time.
    #[default]
    Best,
    /// The given answer index for every player and question.
    Answer(usize),
    /// The given answer index per player and question.
    Table(Vec<Vec<usize>>),
    /// Kept as an answer of its own: each player's last answer means "no click" (as in
    /// Eberhard's and Clauser–Horne's inequalities), and a clicking detector never reports it
    /// (the measurement's last element is zero).
    Extra,
}

impl NoClick {
    /// The answer labelled `label` for every player and question (each player's own index of
    /// that label: [`NoClick::Answer`] when it is the same for all); the error names the player
    /// without it.
    pub fn from_label(s: &Scenario, label: i64) -> std::result::Result<NoClick, String> {
        let indices: Vec<usize> = s
            .parties()
            .iter()
            .map(|p| {
                p.answer_labels
                    .iter()
                    .position(|&l| l == label)
                    .ok_or_else(|| format!("{} has no answer {label}", p.name))
            })
            .collect::<std::result::Result<_, _>>()?;
        Ok(match indices.first() {
            Some(&first) if indices.iter().all(|&i| i == first) => NoClick::Answer(first),
            _ => NoClick::Table(
                s.parties()
                    .iter()
                    .zip(&indices)
                    .map(|(p, &i)| vec![i; p.questions()])
                    .collect(),
            ),
        })
    }
}

/// Most assignments tried one by one when the best is sought.
pub const EXHAUSTIVE_ASSIGNMENTS: usize = 4096;

/// The noise acting on an honest implementation (see the module's text for the model).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseModel {
    /// Weight of the intended state against white noise, in [0, 1].
    pub visibility: f64,
    /// Detection efficiency per player, in (0, 1]; an empty list means 1 for everyone, a single
    /// entry applies to every player.
    pub efficiency: Vec<f64>,
    /// Probability that a no-click round registers a uniformly random answer, in [0, 1].
    pub dark_counts: f64,
    /// What a no-click round is reported as.
    pub no_click: NoClick,
}

impl Default for NoiseModel {
    fn default() -> Self {
        NoiseModel {
            visibility: 1.0,
            efficiency: Vec::new(),
            dark_counts: 0.0,
            no_click: NoClick::Best,
        }
    }
}

/// A no-click answer per player and question.
pub type Assignment = Vec<Vec<usize>>;

impl NoiseModel {
    /// Player `i`'s detection efficiency.
    pub fn efficiency_of(&self, i: usize) -> f64 {
        match self.efficiency.as_slice() {
            [] => 1.0,
            [one] => *one,
            many => many[i],
        }
    }

    /// Checks every parameter against the game; the error names the field and the value.
    pub fn check(&self, s: &Scenario) -> std::result::Result<(), (String, String)> {
        let field = |f: &str, m: String| Err((f.to_string(), m));
        if !(0.0..=1.0).contains(&self.visibility) {
            return field(
                "visibility",
                format!(
                    "the visibility must lie in [0, 1] (found {})",
                    self.visibility
                ),
            );
        }
        let n = s.players();
        if self.efficiency.len() > 1 && self.efficiency.len() != n {
            return field(
                "efficiency",
                format!(
                    "give one detection efficiency, or one per player ({n}); found {}",
                    self.efficiency.len()
                ),
            );
        }
        for &e in &self.efficiency {
            if !(e > 0.0 && e <= 1.0) {
                return field(
                    "efficiency",
                    format!("a detection efficiency must lie in (0, 1] (found {e})"),
                );
            }
        }
        if !(0.0..=1.0).contains(&self.dark_counts) {
            return field(
                "dark_counts",
                format!(
                    "the dark-count probability must lie in [0, 1] (found {})",
                    self.dark_counts
                ),
            );
        }
        match &self.no_click {
            NoClick::Best => {}
            NoClick::Extra => {
                if let Some(p) = s.parties().iter().find(|p| p.answers() < 2) {
                    return field(
                        "no_click",
                        format!(
                            "{} has one answer: a no-click answer of its own needs another",
                            p.name
                        ),
                    );
                }
            }
            NoClick::Answer(a) => {
                if let Some(p) = s.parties().iter().find(|p| *a >= p.answers()) {
                    return field(
                        "no_click",
                        format!(
                            "answer index {a} is not one of {}'s {} answers",
                            p.name,
                            p.answers()
                        ),
                    );
                }
            }
            NoClick::Table(t) => {
                let shape_ok = t.len() == n
                    && t.iter()
                        .zip(s.parties())
                        .all(|(row, p)| row.len() == p.questions());
                if !shape_ok {
                    return field(
                        "no_click",
                        "give one answer per player and question".to_string(),
                    );
                }
                for (row, p) in t.iter().zip(s.parties()) {
                    if let Some(a) = row.iter().find(|&&a| a >= p.answers()) {
                        return field(
                            "no_click",
                            format!(
                                "answer index {a} is not one of {}'s {} answers",
                                p.name,
                                p.answers()
                            ),
                        );
                    }
                }
            }
        }
        Ok(())
    }

    /// Whether every detector is perfect (the assignment then plays no part).
    pub fn lossless(&self) -> bool {
        (0..self.efficiency.len().max(1)).all(|i| self.efficiency_of(i) == 1.0)
    }

    /// The fixed assignment, or the all-first-answer one to start a search for the best.
    pub fn initial_assignment(&self, s: &Scenario) -> Assignment {
        match &self.no_click {
            NoClick::Table(t) => t.clone(),
            NoClick::Answer(a) => s
                .parties()
                .iter()
                .map(|p| vec![*a; p.questions()])
                .collect(),
            NoClick::Best => s.parties().iter().map(|p| vec![0; p.questions()]).collect(),
            NoClick::Extra => s
                .parties()
                .iter()
                .map(|p| vec![p.answers() - 1; p.questions()])
                .collect(),
        }
    }

    /// `K(a'|a)` of player `i` at question `x`.
    fn channel(
        &self,
        s: &Scenario,
        i: usize,
        x: usize,
        f: &Assignment,
        to: usize,
        from: usize,
    ) -> f64 {
        let eta = self.efficiency_of(i);
        let answers = s.parties()[i].answers() as f64;
        let kept = if to == from { eta } else { 0.0 };
        let assigned = if to == f[i][x] {
            1.0 - self.dark_counts
        } else {
            0.0
        };
        kept + (1.0 - eta) * (self.dark_counts / answers + assigned)
    }

    /// Applies the players' channels to a behaviour (indexed as the scenario's tables), one
    /// player at a time.
    fn through_channels(&self, s: &Scenario, p: &[f64], f: &Assignment) -> Vec<f64> {
        self.contract(s, p, f, false)
    }

    /// Contracts each player's answer index with its channel: `K p` (forward) or `Kᵀ c`
    /// (pulling a table back).
    fn contract(&self, s: &Scenario, table: &[f64], f: &Assignment, transpose: bool) -> Vec<f64> {
        let n = s.players();
        let (qr, ar) = (s.question_radices(), s.answer_radices());
        let na = s.joint_answers();
        let mut current = table.to_vec();
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        for i in 0..n {
            if self.efficiency_of(i) == 1.0 {
                continue;
            }
            let mut next = vec![0.0; current.len()];
            for q in 0..s.joint_questions() {
                digits(q, &qr, &mut qd);
                for a in 0..na {
                    let v = current[q * na + a];
                    if v == 0.0 {
                        continue;
                    }
                    digits(a, &ar, &mut ad);
                    let own = ad[i];
                    for other in 0..ar[i] {
                        let k = if transpose {
                            self.channel(s, i, qd[i], f, own, other)
                        } else {
                            self.channel(s, i, qd[i], f, other, own)
                        };
                        if k != 0.0 {
                            ad[i] = other;
                            next[q * na + index_of(&ad, &ar)] += k * v;
                        }
                    }
                }
            }
            current = next;
        }
        current
    }

    /// The game whose score of the ideal behaviour is the real game's score of the lossy one:
    /// each score `V(a|q)` replaced by `Σ_{a'} V(a'|q) Π_i K_i(a'_i|a_i)`. Weights and the
    /// constant are unchanged.
    pub fn pulled_back(&self, s: &Scenario, f: &Assignment) -> Scenario {
        let pulled = self.contract(s, s.scores(), f, true);
        Scenario::from_parts(
            s.parties().to_vec(),
            s.weights().to_vec(),
            pulled,
            s.offset(),
            s.kind(),
        )
    }

    /// The behaviour the noisy implementation of `st` shows, with no-clicks assigned by `f`.
    pub fn behaviour(&self, s: &Scenario, st: &QuantumStrategy, f: &Assignment) -> Vec<f64> {
        self.through_channels(s, &self.mixed(s, st), f)
    }

    /// The behaviour of `v·|ψ⟩⟨ψ| + (1 − v)·𝟙/D` with the strategy's measurements (before the
    /// detectors' channels).
    fn mixed(&self, s: &Scenario, st: &QuantumStrategy) -> Vec<f64> {
        st.behaviour(s)
            .iter()
            .zip(st.noise_behaviour(s))
            .map(|(p, w)| self.visibility * p + (1.0 - self.visibility) * w)
            .collect()
    }

    /// The noisy implementation's score with its error term: a lower bound (`lower`) that
    /// rounding cannot lift above the score of the exactly valid strategy under this noise.
    /// The mixture's and the channels' probabilities are each within the ideal behaviour's
    /// per-probability error ([`QuantumStrategy::certified_behaviour`]; the white-noise part,
    /// products of traces of the same valid elements, has fewer roundings), so the score is
    /// within `Σ|V'|` times it in the pulled-back game `V'`, whose own rounding (at most
    /// `Σ_i |A_i|` multiply-adds per entry) is charged as well.
    pub fn certified_value(
        &self,
        s: &Scenario,
        st: &QuantumStrategy,
        f: &Assignment,
    ) -> CertifiedValue {
        let valid = st.made_valid();
        let pulled = self.pulled_back(s, f);
        let (ideal, per_probability) = valid.certified_behaviour(s);
        let white = valid.noise_behaviour(s);
        let unit = f64::EPSILON / 2.0;
        let answers: usize = s.parties().iter().map(|p| p.answers()).sum();
        let (mut value, mut weight, mut magnitude) = (s.offset(), 0.0, s.offset().abs());
        for ((c, p), w) in pulled.objective().iter().zip(&ideal).zip(&white) {
            if *c != 0.0 {
                let mixed = self.visibility * p + (1.0 - self.visibility) * w;
                value += c * mixed;
                weight += c.abs();
                magnitude += (c * mixed).abs();
            }
        }
        let error = if value.is_finite() && per_probability.is_finite() {
            weight * (per_probability + 4.0 * unit)
                + 4.0 * unit * (answers as f64 + 4.0) * (magnitude + weight)
                + unit * value.abs()
        } else {
            f64::INFINITY
        };
        CertifiedValue {
            value,
            error,
            lower: value - error,
        }
    }

    /// The assignment with the highest score for `st`: every one when there are at most
    /// [`EXHAUSTIVE_ASSIGNMENTS`], otherwise one player and question at a time from `start`
    /// until none improves. A fixed assignment is returned as it is.
    pub fn best_assignment(
        &self,
        s: &Scenario,
        st: &QuantumStrategy,
        start: &Assignment,
    ) -> Assignment {
        if self.no_click != NoClick::Best || self.lossless() {
            return self.initial_assignment(s);
        }
        let mixed = self.mixed(s, st);
        let score = |f: &Assignment| s.value_of_behaviour(&self.through_channels(s, &mixed, f));
        let slots: Vec<(usize, usize, usize)> = s
            .parties()
            .iter()
            .enumerate()
            .flat_map(|(i, p)| (0..p.questions()).map(move |x| (i, x, p.answers())))
            .collect();
        let count = slots
            .iter()
            .try_fold(1usize, |acc, &(_, _, a)| acc.checked_mul(a))
            .filter(|&c| c <= EXHAUSTIVE_ASSIGNMENTS);
        let mut best = (score(start), start.clone());
        if let Some(count) = count {
            let radices: Vec<usize> = slots.iter().map(|s| s.2).collect();
            let mut d = vec![0; slots.len()];
            for k in 0..count {
                digits(k, &radices, &mut d);
                let mut f = start.clone();
                for (&(i, x, _), &a) in slots.iter().zip(&d) {
                    f[i][x] = a;
                }
                let v = score(&f);
                if v > best.0 + 1e-15 {
                    best = (v, f);
                }
            }
            return best.1;
        }
        loop {
            let before = best.0;
            for &(i, x, answers) in &slots {
                for a in 0..answers {
                    let mut f = best.1.clone();
                    f[i][x] = a;
                    let v = score(&f);
                    if v > best.0 + 1e-15 {
                        best = (v, f);
                    }
                }
            }
            if best.0 <= before {
                return best.1;
            }
        }
    }
}
