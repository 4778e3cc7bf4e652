//! The `design` command's work: the best honest implementation under a noise model for a
//! chosen figure (the margin over the classical value, the certified min-entropy, the von
//! Neumann entropy bound or the Devetak–Winter key rate), and the least detection efficiency or
//! visibility at which that figure is positive.
//!
//! Every figure is certified from the implementation's noisy score (rounded down), as a protocol
//! certifies from an observed score: the min-entropy and entropy bounds hold for every quantum
//! behaviour scoring at least that. Both only grow with the score, so the implementation that
//! maximises the noisy score maximises them too. The key rate also pays the error-correction
//! term H(A|B) of the noisy behaviour, so it is optimised by alternation: at the current
//! implementation, the rate is linearised (the entropy bound's slope in the score, from its
//! min-tradeoff line, times the game's table, plus H(A|B)'s gradient `log₂ p(a|b)` on the key
//! questions), the see-saw improves the implementation for that table, and the step is kept
//! only when the certified rate grows.

use serde::Serialize;

use super::figures::{entropy_assumptions, key_pair_table, preprocessing_assumption, TargetChoice};
use super::{Observer, Stage};
use crate::bounds::classical::{classical_value, ClassicalOptions};
use crate::bounds::entropy::{
    EntropyConstraint, EntropyOptions, MinTradeoff, PreparedHierarchy, Target,
};
use crate::bounds::quantum::design::{
    implementation, improve, optimise, planned_searches, threshold_of, DesignOptions,
    Implementation, Threshold, ThresholdOptions,
};
use crate::bounds::quantum::npa::Level;
use crate::bounds::quantum::seesaw::estimate_seconds;
use crate::error::{Error, Result};
use crate::formats::game::Game;
use crate::model::noise::NoiseModel;
use crate::model::scenario::{index_of, Scenario, ScoreKind};
use crate::model::strategy::QuantumStrategy;
use crate::protocol::key::error_correction_entropy_within;
use crate::protocol::randomness::guessing_probability;

/// The figure an implementation is designed for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum DesignFigure {
    /// The noisy score's margin over the classical value.
    #[default]
    Margin,
    /// The certified min-entropy of the key player's answer, −log₂ of the guessing probability.
    MinEntropy,
    /// The bound on the conditional von Neumann entropy H(A|X=x*, E).
    Entropy,
    /// The Devetak–Winter key rate: the entropy bound minus H(A|B) on the key questions.
    KeyRate,
}

impl DesignFigure {
    /// The figure in words.
    pub fn describe(self) -> &'static str {
        match self {
            DesignFigure::Margin => "margin over the classical value",
            DesignFigure::MinEntropy => "certified min-entropy (bits per round)",
            DesignFigure::Entropy => "conditional von Neumann entropy bound (bits per round)",
            DesignFigure::KeyRate => "Devetak–Winter key rate (bits per round)",
        }
    }
}

/// Everything the `design` command is asked.
#[derive(Debug, Clone, Default)]
pub struct DesignRequest {
    /// The figure to maximise (and whose threshold is sought).
    pub figure: DesignFigure,
    /// The search and the noise model.
    pub design: DesignOptions,
    /// A threshold search instead of one noise level.
    pub threshold: Option<ThresholdOptions>,
    /// Whose answer the entropy figures are about (default: the first player's first question).
    pub key: TargetChoice,
    /// The key rate's other player and question (required for the key rate).
    pub partner: Option<TargetChoice>,
    /// The NPA level of the min-entropy's guessing-probability SDP (default 2).
    pub randomness_level: Option<Level>,
    /// The entropy hierarchy (nodes, level, noisy preprocessing) for the entropy and key rate.
    pub entropy: EntropyOptions,
    /// Scores at which the entropy bound's min-tradeoff lines are computed for the search.
    pub tangents: usize,
}

/// Scores of the entropy bound's min-tradeoff lines when none are asked for.
pub const DEFAULT_TANGENTS: usize = 12;

/// An implementation's figure and its parts.
#[derive(Debug, Clone, Serialize)]
pub struct FigureValue {
    /// Which figure.
    pub figure: DesignFigure,
    /// Its certified value (bits per round, or score units for the margin); 0 or below means
    /// the goal is not met.
    pub value: f64,
    /// The score it is certified from: the implementation's noisy score, rounded down.
    pub score: f64,
    /// The verified guessing probability (min-entropy).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub guessing_probability: Option<f64>,
    /// The bound on H(A|X=x*, E) (entropy and key rate).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub conditional_entropy: Option<f64>,
    /// H(A|B) of the noisy behaviour on the key questions, rounded up (key rate).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error_correction: Option<f64>,
}

/// The `design` command's answer.
#[derive(Debug, Clone)]
pub struct DesignReport<'a> {
    /// The game.
    pub game: &'a Game,
    /// The figure designed for.
    pub figure: DesignFigure,
    /// The key player's answer (and the key partner's), in words, for the entropy figures.
    pub about: Option<String>,
    /// The implementation at the noise asked (or at the threshold's upper end).
    pub implementation: Implementation,
    /// Its figure.
    pub value: FigureValue,
    /// The threshold search, when asked.
    pub threshold: Option<Threshold>,
    /// What the figures assume.
    pub assumptions: Vec<String>,
}

/// What the search needs besides the implementation search itself.
struct Figures<'a> {
    /// The game's table.
    s: &'a Scenario,
    classical: f64,
    request: &'a DesignRequest,
    target: Target,
    /// The key pair's (player, question) parts, for the key rate.
    pair: Option<((usize, usize), (usize, usize))>,
    /// The min-tradeoff lines (entropy and key rate).
    lines: Vec<MinTradeoff>,
    /// The hierarchy itself, for a direct bound where the lines certify nothing (near the
    /// classical value, below the lowest line's reach).
    hierarchy: Option<PreparedHierarchy<'a>>,
    level: Level,
}

impl Figures<'_> {
    /// The entropy bound at `score`: the lines', and where they certify nothing above the
    /// classical value, the hierarchy's own bound there (both verified; the larger is kept).
    fn entropy_bound(&self, score: f64) -> Result<f64> {
        let (from_lines, _) = self.entropy_at(score);
        if from_lines > 0.0 || score <= self.classical {
            return Ok(from_lines);
        }
        match &self.hierarchy {
            Some(h) => Ok(h
                .bound(&EntropyConstraint::Score(score), &|_, _| {})?
                .bits
                .max(from_lines)),
            None => Ok(from_lines),
        }
    }

    /// The entropy bound at `score` from the lines (each valid at every score up to its
    /// `highest`), floored at 0 (H(A|E) ≥ 0 for a classical A); and the slope of the best line.
    fn entropy_at(&self, score: f64) -> (f64, f64) {
        self.lines
            .iter()
            .filter(|l| score <= l.highest && score >= l.lowest)
            .map(|l| (l.at(score), l.slope))
            .fold(
                (0.0, 0.0),
                |best, (v, slope)| {
                    if v > best.0 {
                        (v, slope)
                    } else {
                        best
                    }
                },
            )
    }

    /// The figure of `imp` (and, for the key rate, H(A|B)'s table for the linearisation).
    fn value(&self, imp: &Implementation) -> Result<FigureValue> {
        let score = imp.score.lower;
        let mut out = FigureValue {
            figure: self.request.figure,
            value: 0.0,
            score,
            guessing_probability: None,
            conditional_entropy: None,
            error_correction: None,
        };
        match self.request.figure {
            DesignFigure::Margin => out.value = imp.margin,
            DesignFigure::MinEntropy => {
                if imp.margin > 0.0 {
                    let r = guessing_probability(self.s, &self.target, score, &self.level)?;
                    out.guessing_probability = Some(r.guessing_probability);
                    out.value = r.min_entropy.max(0.0);
                } else {
                    // At or below the classical value a deterministic answer is possible.
                    out.guessing_probability = Some(1.0);
                }
            }
            DesignFigure::Entropy => {
                let h = self.entropy_bound(score)?;
                out.conditional_entropy = Some(h);
                out.value = h;
            }
            DesignFigure::KeyRate => {
                let h = self.entropy_bound(score)?;
                let ec = self.error_correction(imp)?.0;
                out.conditional_entropy = Some(h);
                out.error_correction = Some(ec);
                out.value = h - ec;
            }
        }
        Ok(out)
    }

    /// H(A|B) of the noisy behaviour on the key questions after any preprocessing, rounded up
    /// over every table within the evaluation's error; and the table itself.
    fn error_correction(&self, imp: &Implementation) -> Result<(f64, Vec<Vec<f64>>)> {
        let (a, b) = self.pair.expect("the key rate has a key pair");
        let valid = imp.strategy.made_valid();
        let (_, per_probability) = valid.certified_behaviour(self.s);
        let p = imp.noise.behaviour(self.s, &valid, &imp.no_click_answers);
        let table = self
            .request
            .entropy
            .preprocessing
            .apply_to_rows(&key_pair_table(self.s, &p, a, b));
        let entries = table.iter().map(Vec::len).sum::<usize>() as f64;
        // Each ideal probability is within per_probability of the exact one; the channels add
        // up to Σ_a K(a'|a) ≤ |A| of them into one noisy probability, per player (and a few
        // roundings of their own).
        let amplification: f64 = self
            .s
            .parties()
            .iter()
            .map(|p| p.answers() as f64)
            .product();
        let distance = entries * (amplification * per_probability + 8.0 * f64::EPSILON) / 2.0;
        Ok((error_correction_entropy_within(&table, distance)?, table))
    }

    /// The key rate's linearisation at `imp`: the entropy bound's slope times the game's table,
    /// plus `Σ_e K(e|a) log₂ T'(e|b)` at the key questions (the gradient of −H(E|B) in p(a, b),
    /// with `K` the preprocessing channel and `T'` the preprocessed table).
    ///
    /// With `agreement`, the key questions' part is instead the probability that the two
    /// answers agree: where they are independent (a key measurement not yet chosen) the gradient
    /// is flat and gives no direction, and agreement is what the error correction rewards.
    fn key_rate_table(&self, imp: &Implementation, agreement: bool) -> Result<Scenario> {
        let s = self.s;
        let (slope, (_, table)) = (
            self.entropy_at(imp.score.lower).1,
            self.error_correction(imp)?,
        );
        let ((pa, xa), (pb, yb)) = self.pair.expect("the key rate has a key pair");
        let na = s.joint_answers();
        let mut scores: Vec<f64> = s.objective().iter().map(|c| slope * c).collect();
        let mut qd = vec![0; 2];
        qd[pa] = xa;
        qd[pb] = yb;
        let q = index_of(&qd, &s.question_radices());
        let d = table.len();
        let column_totals: Vec<f64> = (0..table.first().map_or(0, Vec::len))
            .map(|b| table.iter().map(|r| r[b]).sum())
            .collect();
        let pre = self.request.entropy.preprocessing;
        let mut ad = vec![0; 2];
        for (a, score) in scores[q * na..(q + 1) * na].iter_mut().enumerate() {
            crate::model::scenario::digits(a, &s.answer_radices(), &mut ad);
            let (ka, kb) = (ad[pa], ad[pb]);
            let gradient: f64 = if agreement {
                if ka == kb {
                    1.0
                } else {
                    0.0
                }
            } else {
                (0..d)
                    .map(|e| {
                        let conditional = (table[e][kb] / column_totals[kb].max(1e-300)).max(1e-12);
                        pre.channel(e, ka, d) * conditional.log2()
                    })
                    .sum()
            };
            *score += gradient;
        }
        Ok(Scenario::from_parts(
            s.parties().to_vec(),
            vec![1.0; s.joint_questions()],
            scores,
            0.0,
            ScoreKind::Score,
        ))
    }

    /// The best implementation for the figure at `noise`, from `start` and random starts.
    fn search(
        &self,
        noise: &NoiseModel,
        start: Option<&QuantumStrategy>,
    ) -> Result<(Implementation, FigureValue)> {
        let opts = DesignOptions {
            noise: noise.clone(),
            ..self.request.design.clone()
        };
        let best_score = optimise(self.s, self.classical, &opts, start)?;
        let mut current = (self.value(&best_score)?, best_score);
        if self.request.figure != DesignFigure::KeyRate {
            return Ok((current.1, current.0));
        }
        // Alternation on the key rate's linearisation, from the best-score implementation and
        // from the start (the bracket's upper end): the better is kept.
        let mut starts = vec![current.1.clone()];
        if let Some(st) = start {
            starts.push(implementation(
                self.s,
                self.classical,
                &opts,
                st.clone(),
                noise.initial_assignment(self.s),
            )?);
        }
        for from in starts {
            let mut here = (self.value(&from)?, from);
            for step in 0..KEY_RATE_STEPS {
                if crate::limits::stop_requested() {
                    break;
                }
                let table = self.key_rate_table(&here.1, step == 0)?;
                let (st, f) = improve(&table, &opts, &here.1.strategy, 3)?;
                let next = implementation(self.s, self.classical, &opts, st, f)?;
                let value = self.value(&next)?;
                if value.value > here.0.value + 1e-9 {
                    here = (value, next);
                } else {
                    break;
                }
            }
            if here.0.value > current.0.value {
                current = here;
            }
        }
        Ok((current.1, current.0))
    }
}

/// Most linearisation steps of the key-rate alternation per search.
const KEY_RATE_STEPS: usize = 40;

/// The `design` command.
pub fn design<'a>(
    game: &'a Game,
    request: &DesignRequest,
    observer: &dyn Observer,
) -> Result<DesignReport<'a>> {
    let s = &game.scenario;
    request
        .design
        .noise
        .check(s)
        .map_err(|(field, message)| Error::InvalidArgument(format!("{field}: {message}")))?;
    let classical = classical_value(s, &ClassicalOptions::default(), None)?.value;
    let target = TargetChoice::target(s, &request.key, None)?;
    let pair = match request.figure {
        DesignFigure::KeyRate => {
            let Some(partner) = &request.partner else {
                return Err(Error::InvalidArgument(
                    "the key rate needs the other player's key question (--key-with PLAYER:QUESTION)"
                        .into(),
                ));
            };
            if s.players() != 2 {
                return Err(Error::InvalidArgument(
                    "the key rate's design is for two-player games".into(),
                ));
            }
            let b = partner.resolve(s, 1)?;
            if b.0 == target.parts[0].0 {
                return Err(Error::InvalidArgument(
                    "the key pair needs the other player".into(),
                ));
            }
            Some((target.parts[0], b))
        }
        _ => None,
    };
    // Cost: the implementation searches, one per planned point (a single one without a
    // threshold search), each the see-saw's estimate.
    let searches = request.threshold.as_ref().map_or(1, planned_searches);
    let seconds = estimate_seconds(s, &request.design.seesaw) * searches as f64;
    if seconds > crate::bounds::quantum::seesaw::SECONDS_LIMIT
        && !request.design.seesaw.limits.force
    {
        return Err(Error::TooLarge {
            what: "the implementation search".into(),
            estimate: format!(
                "{searches} see-saw searches: roughly {} (rule of thumb)",
                crate::limits::human_seconds(seconds)
            ),
            hint: "use smaller dimensions, fewer restarts or a wider tolerance, or pass --force"
                .into(),
        });
    }
    let mut figures = Figures {
        s,
        classical,
        request,
        target: target.clone(),
        pair,
        lines: Vec::new(),
        hierarchy: None,
        level: request.randomness_level.clone().unwrap_or(Level::Length(2)),
    };
    if matches!(
        request.figure,
        DesignFigure::Entropy | DesignFigure::KeyRate
    ) {
        figures.lines = tangent_lines(s, &target, request, classical, observer)?;
        figures.hierarchy = Some(PreparedHierarchy::new(
            s,
            &figures.target,
            &request.entropy,
        )?);
    }
    let (implementation, value, threshold) = match &request.threshold {
        None => {
            let (imp, value) = figures.search(&request.design.noise, None)?;
            (imp, value, None)
        }
        Some(t) => {
            let evaluate = |noise: &NoiseModel, start: Option<&QuantumStrategy>| {
                let (imp, value) = figures.search(noise, start)?;
                Ok((imp, value.value))
            };
            let progress = |done: usize, total: usize| {
                if observer.wants_progress() {
                    observer.progress(Stage::DesignSearches, done, total);
                }
            };
            let found = threshold_of(&request.design.noise, t, &evaluate, Some(&progress))?;
            // The bisection may end before the searches planned: the progress line is closed.
            let planned = planned_searches(t);
            progress(planned, planned);
            let value = figures.value(&found.at_upper)?;
            (found.at_upper.clone(), value, Some(found))
        }
    };
    let key = request.figure == DesignFigure::KeyRate;
    let mut assumptions = vec![
        "noise model: white noise on the state at the stated visibility; each detector clicks independently with its efficiency, a no-click round is reported as the stated answer (or registers a uniformly random answer with the dark-count probability)".to_string(),
        "the implementation is a search result (see-saw with restarts), not proven optimal: a threshold's lower end is where the search found nothing, not a proof that nothing exists".to_string(),
    ];
    if request.figure != DesignFigure::Margin {
        assumptions.push("figures are certified from the implementation's noisy score alone, as a protocol certifies from an observed score".to_string());
        assumptions.extend(entropy_assumptions(key));
        if let Some(p) = preprocessing_assumption(request.entropy.preprocessing) {
            assumptions.push(p);
        }
    }
    let about = (request.figure != DesignFigure::Margin).then(|| {
        let (p, x) = target.parts[0];
        let party = &s.parties()[p];
        let mut text = format!(
            "{}'s answer to question {}",
            party.name, party.question_labels[x]
        );
        if let Some((_, (pb, yb))) = pair {
            let other = &s.parties()[pb];
            text.push_str(&format!(
                ", reconciled with {}'s answer to question {}",
                other.name, other.question_labels[yb]
            ));
        }
        text
    });
    Ok(DesignReport {
        game,
        figure: request.figure,
        about,
        implementation,
        value,
        threshold,
        assumptions,
    })
}

/// The entropy bound's min-tradeoff lines at scores spread from the classical value to the
/// noiseless implementation's score (each line is valid at every score, and touches the bound
/// near its own).
fn tangent_lines(
    s: &Scenario,
    target: &Target,
    request: &DesignRequest,
    classical: f64,
    observer: &dyn Observer,
) -> Result<Vec<MinTradeoff>> {
    let noiseless = DesignOptions {
        noise: NoiseModel::default(),
        ..request.design.clone()
    };
    let top = optimise(s, classical, &noiseless, None)?.score.lower;
    if top <= classical {
        return Ok(Vec::new());
    }
    let hierarchy = PreparedHierarchy::new(s, target, &request.entropy)?;
    let count = request.tangents.max(2);
    let mut lines = Vec::with_capacity(count);
    for k in 1..=count {
        let score = classical + (top - classical) * k as f64 / count as f64;
        let bound = hierarchy.bound(&EntropyConstraint::Score(score), &|_, _| {})?;
        if observer.wants_progress() {
            observer.progress(Stage::TangentLines, k, count);
        }
        if let Some(line) = bound.min_tradeoff {
            lines.push(line);
        }
    }
    Ok(lines)
}
