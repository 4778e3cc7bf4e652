//! What the commands print: one report type per command, rendered as a compact aligned table for
//! people or as exactly one JSON object for programs. Value keys in JSON are stable:
//! `classical`, `no_signalling` (later: quantum bounds).

use serde_json::{json, Map, Value};

use crate::bounds::classical::locality::LocalityReport;
use crate::bounds::classical::{
    ClassicalEstimate, ClassicalStatus, ClassicalValue, DeterministicStrategy,
};
use crate::bounds::nosignal::NoSignallingValue;
use crate::bounds::quantum::analysis::{Bipartition, Robustness};
use crate::bounds::quantum::npa::{NpaBound, Verification};
use crate::bounds::quantum::seesaw::SeesawResult;
use crate::formats::game::Game;

/// The quantum value counts as settled when the verified upper bound and the see-saw's lower
/// bound are this close.
pub const QUANTUM_SETTLED_TOLERANCE: f64 = 1e-6;

/// Entanglement and robustness of a strategy.
#[derive(Debug, Clone)]
pub struct StrategyAnalysis {
    pub bipartitions: Vec<Bipartition>,
    pub robustness: Option<Robustness>,
    pub classical: Option<f64>,
}

fn analysis_text(a: &StrategyAnalysis) -> String {
    let mut out = String::from("\nstrategy state:\n");
    for b in &a.bipartitions {
        let schmidt: Vec<String> = b.schmidt.iter().map(|v| fixed6(*v)).collect();
        out += &format!(
            "  {} | rest: Schmidt [{}], entropy {} bits{}\n",
            b.side.join(" "),
            schmidt.join(", "),
            fixed6(b.entropy_bits),
            match (b.ppt, b.negativity) {
                (Some(ppt), Some(n)) => format!(
                    ", negativity {}, {}",
                    fixed6(n),
                    if ppt { "PPT" } else { "not PPT" }
                ),
                _ => String::new(),
            }
        );
    }
    if let Some(r) = &a.robustness {
        out += &format!(
            "robustness (against the classical value {}):\n  critical visibility {}\n  critical detection efficiency {} (no-click reported as the first answer)\n",
            a.classical.map(num).unwrap_or_default(),
            r.critical_visibility.map(num).unwrap_or_else(|| "none (no advantage)".into()),
            r.critical_detection_efficiency.map(num).unwrap_or_else(|| "none (no advantage)".into()),
        );
    }
    out
}
use crate::model::scenario::{Scenario, Sizes};

/// Everything computed for one game by `check`, `classical`, `nosignal` or `bounds`.
#[derive(Debug, Clone)]
pub struct Report<'a> {
    pub command: &'static str,
    pub game: &'a Game,
    pub classical: Option<ClassicalValue>,
    pub no_signalling: Option<NoSignallingValue>,
    pub npa: Option<NpaBound>,
    /// Lower levels computed for comparison (`npa --level "1;2"`), in the order given.
    pub npa_levels: Vec<NpaBound>,
    pub seesaw: Option<SeesawResult>,
    /// The Born-rule value of a given strategy (`evaluate`).
    pub evaluated: Option<crate::model::strategy::CertifiedValue>,
    pub strategy_analysis: Option<StrategyAnalysis>,
    /// Bounds that could not be obtained, with the reason (reported, never replaced by a number).
    pub failures: Vec<String>,
    /// Include sizes and estimates (the `check` command).
    pub sizes: bool,
    /// How reported bounds were reconciled with each other ([`Report::reconcile_bounds`]).
    pub notes: Vec<String>,
}

impl<'a> Report<'a> {
    pub fn new(command: &'static str, game: &'a Game) -> Self {
        Report {
            command,
            game,
            classical: None,
            no_signalling: None,
            npa: None,
            npa_levels: Vec::new(),
            seesaw: None,
            evaluated: None,
            strategy_analysis: None,
            failures: Vec::new(),
            sizes: false,
            notes: Vec::new(),
        }
    }

    /// With several NPA levels: every level's bound is valid, so the best (smallest) verified
    /// one is the quantum upper bound; noted when it is not the last level's (higher levels can
    /// come out looser through the residual charge).
    pub fn note_best_level(&mut self) {
        let Some(last) = &self.npa else { return };
        if let Some(best) = self
            .npa_levels
            .iter()
            .filter(|b| b.verified_upper < last.verified_upper)
            .min_by(|a, b| a.verified_upper.total_cmp(&b.verified_upper))
        {
            self.notes.push(format!(
                "the best verified bound is level {}'s: quantum ≤ {} (level {} gives {})",
                best.level,
                num(best.verified_upper),
                last.level,
                num(last.verified_upper)
            ));
        }
    }

    /// The smallest verified NPA bound over the levels computed, with its level.
    pub fn best_npa(&self) -> Option<&NpaBound> {
        self.npa_levels
            .iter()
            .chain(self.npa.as_ref())
            .min_by(|a, b| a.verified_upper.total_cmp(&b.verified_upper))
    }

    /// Makes the reported bounds obey `classical ≤ quantum lower ≤ quantum upper ≤
    /// no-signalling`, using only facts that hold for the true values: the quantum value is at
    /// least the (exact) classical value, so the quantum lower bound starts from the larger of
    /// the two; the no-signalling value bounds the quantum value from above, so a verified NPA
    /// bound above it (solver tolerance) is replaced by it; and the no-signalling value is at
    /// least every lower bound, so a simplex value a rounding error below one is raised to it.
    /// Each change is recorded in `notes`.
    pub fn reconcile_bounds(&mut self) {
        let classical = self
            .classical
            .as_ref()
            .filter(|c| c.status == ClassicalStatus::Exact)
            .map(|c| c.value);
        if let (Some(c), Some(sw)) = (classical, self.seesaw.as_mut()) {
            if sw.quantum_lower < c {
                self.notes.push(format!(
                    "the see-saw strategy scores {} (dims {:?}), below the classical value: the quantum lower bound is the classical value",
                    num(sw.quantum_lower),
                    sw.dims
                ));
                sw.quantum_lower = c;
            }
        }
        let lower = self
            .seesaw
            .as_ref()
            .map(|sw| sw.quantum_lower)
            .into_iter()
            .chain(classical)
            .fold(f64::NEG_INFINITY, f64::max);
        if let Some(ns) = self.no_signalling.as_mut() {
            if ns.value < lower {
                self.notes.push(format!(
                    "the no-signalling LP gave {}, a rounding error below a lower bound: raised to {}",
                    num(ns.value),
                    num(lower)
                ));
                ns.value = lower;
            }
        }
        let ns_upper = self
            .no_signalling
            .as_ref()
            .map(|ns| ns.certified_upper.unwrap_or(ns.value).max(ns.value));
        if let (Some(up), Some(b)) = (ns_upper, self.npa.as_mut()) {
            if b.verified_upper > up {
                self.notes.push(format!(
                    "the verified NPA bound {} lies above the no-signalling value (solver tolerance): the quantum upper bound is the no-signalling value {}",
                    num(b.verified_upper),
                    num(up)
                ));
                b.verified_upper = up;
            }
        }
    }

    pub fn to_json(&self) -> Value {
        let s = &self.game.scenario;
        let mut m = Map::new();
        m.insert("command".into(), json!(self.command));
        m.insert("game".into(), json!(self.game.name));
        m.insert("source".into(), json!(self.game.source));
        m.insert("kind".into(), json!(s.kind));
        m.insert(
            "players".into(),
            json!(s
                .parties
                .iter()
                .map(|p| json!({"name": p.name, "questions": p.question_labels, "answers": p.answer_labels}))
                .collect::<Vec<_>>()),
        );
        if self.sizes {
            m.insert("sizes".into(), json!(Sizes::of(s)));
            m.insert(
                "estimates".into(),
                json!({"classical": ClassicalEstimate::of(s)}),
            );
            m.insert("value_range".into(), json!(s.value_range()));
        }
        if let Some(c) = &self.classical {
            // A lower bound is never published under the value's key.
            let key = match c.status {
                ClassicalStatus::Exact => "classical",
                ClassicalStatus::Incumbent => "classical_lower",
            };
            m.insert(key.into(), json!(c.value));
            m.insert(
                "classical_details".into(),
                json!({
                    "status": c.status,
                    "note": c.note,
                    "method": c.method,
                    "nodes": c.nodes,
                    "seconds": c.seconds,
                    "strategy": strategy_json(s, &c.strategy),
                }),
            );
        }
        if let Some(ns) = &self.no_signalling {
            m.insert("no_signalling".into(), json!(ns.value));
            m.insert(
                "no_signalling_details".into(),
                json!({
                    "method": ns.method,
                    "status": ns.status,
                    "certified_upper": ns.certified_upper,
                    "variables": ns.variables,
                    "constraints": ns.constraints,
                    "seconds": ns.seconds,
                }),
            );
        }
        if let Some(b) = &self.npa {
            m.insert("quantum_upper".into(), json!(b.quantum_upper));
            m.insert("verified_upper".into(), json!(b.verified_upper));
            m.insert("level".into(), json!(b.level));
            m.insert("matrix_size".into(), json!(b.matrix_size));
            m.insert("moments".into(), json!(b.moments));
            m.insert("status".into(), json!(b.status));
            m.insert("iterations".into(), json!(b.iterations));
            m.insert("seconds".into(), json!(b.seconds));
            m.insert("npa_primal".into(), json!(b.primal));
            m.insert("gap".into(), json!(b.gap));
            m.insert("residual".into(), json!(b.residual));
            m.insert("solver".into(), json!(b.solver));
            if !self.npa_levels.is_empty() {
                let all: Vec<&NpaBound> =
                    self.npa_levels.iter().chain(std::iter::once(b)).collect();
                m.insert("levels".into(), json!(all));
                if let Some(best) = self.best_npa() {
                    m.insert(
                        "best_verified_upper".into(),
                        json!({"level": best.level, "verified_upper": best.verified_upper}),
                    );
                }
            }
        }
        if let Some(sw) = &self.seesaw {
            m.insert("quantum_lower".into(), json!(sw.quantum_lower));
            m.insert("dims".into(), json!(sw.dims));
            m.insert("seed".into(), json!(sw.seed));
            m.insert("restarts".into(), json!(sw.restarts));
            m.insert(
                "seesaw_details".into(),
                json!({"rounds": sw.rounds, "seconds": sw.seconds}),
            );
            if self.command == "seesaw" {
                m.insert("seconds".into(), json!(sw.seconds));
            }
        }
        if let Some(v) = self.evaluated {
            m.insert("value".into(), json!(v.value));
            m.insert("value_error".into(), json!(v.error));
            m.insert("quantum_lower".into(), json!(v.lower));
        }
        if let Some(a) = &self.strategy_analysis {
            m.insert("entanglement".into(), json!(a.bipartitions));
            m.insert("robustness".into(), json!(a.robustness));
        }
        if let (Some(sw), Some(b)) = (&self.seesaw, &self.npa) {
            m.insert(
                "quantum_settled".into(),
                json!(b.verified_upper - sw.quantum_lower < QUANTUM_SETTLED_TOLERANCE),
            );
        }
        let mut gaps = Map::new();
        if let (Some(c), Some(sw)) = (&self.classical, &self.seesaw) {
            gaps.insert(
                "quantum_lower_minus_classical".into(),
                json!(sw.quantum_lower - c.value),
            );
        }
        if let (Some(sw), Some(b)) = (&self.seesaw, &self.npa) {
            gaps.insert(
                "quantum_upper_minus_lower".into(),
                json!(b.verified_upper - sw.quantum_lower),
            );
        }
        if let (Some(c), Some(ns)) = (&self.classical, &self.no_signalling) {
            gaps.insert(
                "no_signalling_minus_classical".into(),
                json!(ns.value - c.value),
            );
        }
        if let (Some(c), Some(b)) = (&self.classical, &self.npa) {
            gaps.insert(
                "quantum_upper_minus_classical".into(),
                json!(b.verified_upper - c.value),
            );
        }
        if let (Some(ns), Some(b)) = (&self.no_signalling, &self.npa) {
            gaps.insert(
                "no_signalling_minus_quantum_upper".into(),
                json!(ns.value - b.verified_upper),
            );
        }
        if !gaps.is_empty() {
            m.insert("gaps".into(), Value::Object(gaps));
        }
        m.insert("warnings".into(), json!(self.game.warnings));
        if !self.notes.is_empty() {
            m.insert("notes".into(), json!(self.notes));
        }
        if !self.failures.is_empty() {
            m.insert("not_obtained".into(), json!(self.failures));
        }
        Value::Object(m)
    }

    pub fn to_text(&self) -> String {
        let s = &self.game.scenario;
        let mut out = String::new();
        let mut rows: Vec<(String, String)> = vec![
            (
                "game".into(),
                format!("{} ({})", self.game.name, self.game.source),
            ),
            (
                "players".into(),
                s.parties
                    .iter()
                    .map(|p| format!("{} {}×{}", p.name, p.questions(), p.answers()))
                    .collect::<Vec<_>>()
                    .join(", ")
                    + "  (questions × answers)",
            ),
        ];
        if let Some(d) = &self.game.description {
            rows.insert(1, ("about".into(), d.clone()));
        }
        if self.sizes {
            let z = Sizes::of(s);
            let e = ClassicalEstimate::of(s);
            let (lo, hi) = s.value_range();
            rows.push(("kind".into(), format!("{:?}", s.kind).to_lowercase()));
            rows.push((
                "table".into(),
                format!(
                    "{} joint questions × {} joint answers = {} entries",
                    z.joint_questions, z.joint_answers, z.table_entries
                ),
            ));
            rows.push((
                "strategies".into(),
                format!(
                    "{} deterministic; search enumerates {} (responder: {})",
                    count_text(z.deterministic_strategies),
                    count_text(e.enumerated_strategies),
                    s.parties[e.responder].name
                ),
            ));
            rows.push(("value range".into(), format!("[{}, {}]", num(lo), num(hi))));
        }
        if let Some(c) = &self.classical {
            match c.status {
                ClassicalStatus::Exact => rows.push(("classical".into(), with_fraction(c.value))),
                ClassicalStatus::Incumbent => rows.push((
                    "classical ≥".into(),
                    format!(
                        "{}  (a lower bound only, not the classical value: {})",
                        num(c.value),
                        c.note.as_deref().unwrap_or("not proven optimal")
                    ),
                )),
            }
        }
        if let Some(ns) = &self.no_signalling {
            let mut v = with_fraction(ns.value);
            if let Some(up) = ns.certified_upper {
                v += &format!("  ({}, {}; certified ≤ {})", ns.method, ns.status, num(up));
            }
            rows.push(("no-signalling".into(), v));
        }
        for b in &self.npa_levels {
            rows.push((
                format!("quantum ≤ (NPA {})", b.level),
                format!(
                    "{}  (verified; {}×{} matrix, {:.2} s)",
                    num(b.verified_upper),
                    b.matrix_size,
                    b.matrix_size,
                    b.seconds
                ),
            ));
        }
        if let Some(b) = &self.npa {
            rows.push((
                "quantum ≤ (NPA)".into(),
                format!(
                    "{}  (verified; raw {}, level {}, {}×{} matrix, {} moments, {} {}, {} iterations, {:.2} s)",
                    num(b.verified_upper),
                    num(b.quantum_upper),
                    b.level,
                    b.matrix_size,
                    b.matrix_size,
                    b.moments,
                    b.solver,
                    b.status,
                    b.iterations,
                    b.seconds
                ),
            ));
        }
        if let Some(sw) = &self.seesaw {
            rows.push((
                "quantum ≥ (see-saw)".into(),
                format!(
                    "{}  (dims {:?}, {} restarts, seed {}, {:.2} s)",
                    num(sw.quantum_lower),
                    sw.dims,
                    sw.restarts,
                    sw.seed,
                    sw.seconds
                ),
            ));
        }
        if let Some(v) = self.evaluated {
            rows.push((
                "value (Born rule)".into(),
                format!("{}  (error ≤ {:.1e})", num(v.value), v.error),
            ));
            rows.push(("quantum ≥".into(), num(v.lower)));
        }
        if let (Some(sw), Some(b)) = (&self.seesaw, &self.npa) {
            let gap = b.verified_upper - sw.quantum_lower;
            rows.push((
                "quantum value".into(),
                if gap < QUANTUM_SETTLED_TOLERANCE {
                    format!(
                        "settled: verified upper − lower = {} < {:e}",
                        num(gap),
                        QUANTUM_SETTLED_TOLERANCE
                    )
                } else {
                    format!(
                        "open: verified upper − lower = {} (the see-saw tried dims {:?} with {} restarts; larger dimensions, more restarts or a higher NPA level may close it)",
                        num(gap),
                        sw.dims,
                        sw.restarts
                    )
                },
            ));
        }
        if let (Some(c), Some(b)) = (&self.classical, &self.npa) {
            rows.push((
                "gap quantum − classical".into(),
                format!("≤ {}", num(b.verified_upper - c.value)),
            ));
        }
        if let (Some(ns), Some(b)) = (&self.no_signalling, &self.npa) {
            rows.push((
                "gap ns − quantum".into(),
                format!("≥ {}", num(ns.value - b.verified_upper)),
            ));
        }
        if let (Some(c), Some(ns)) = (&self.classical, &self.no_signalling) {
            rows.push(("gap ns − classical".into(), num(ns.value - c.value)));
        }
        out += &table(&rows);
        for f in &self.failures {
            out += &format!("not obtained: {f}\n");
        }
        for note in &self.notes {
            out += &format!("note: {note}\n");
        }
        if let Some(a) = &self.strategy_analysis {
            out += &analysis_text(a);
        }
        if let Some(c) = &self.classical {
            out += match c.status {
                ClassicalStatus::Exact => {
                    "\noptimal deterministic strategy (answer to each question):\n"
                }
                ClassicalStatus::Incumbent => {
                    "\nbest deterministic strategy found (answer to each question):\n"
                }
            };
            out += &strategy_text(s, &c.strategy);
            out += &format!("({:?}, {} nodes, {:.3} s)\n", c.method, c.nodes, c.seconds)
                .to_lowercase();
        }
        out
    }
}

/// `{player: {"questions": [...labels], "answers": [...labels]}}`.
pub fn strategy_json(s: &Scenario, st: &DeterministicStrategy) -> Value {
    let mut m = Map::new();
    for (p, ans) in s.parties.iter().zip(&st.answers) {
        m.insert(
            p.name.clone(),
            json!({
                "questions": p.question_labels,
                "answers": ans.iter().map(|&a| p.answer_labels[a]).collect::<Vec<_>>(),
            }),
        );
    }
    Value::Object(m)
}

fn strategy_text(s: &Scenario, st: &DeterministicStrategy) -> String {
    let width = s.parties.iter().map(|p| p.name.len()).max().unwrap_or(0);
    let mut out = String::new();
    for (p, ans) in s.parties.iter().zip(&st.answers) {
        let cells: Vec<String> = p
            .question_labels
            .iter()
            .zip(ans)
            .map(|(q, &a)| format!("{q}→{}", p.answer_labels[a]))
            .collect();
        out += &format!("  {:width$}  {}\n", p.name, cells.join("  "));
    }
    out
}

/// Two aligned columns.
pub fn table(rows: &[(String, String)]) -> String {
    let width = rows
        .iter()
        .map(|(k, _)| k.chars().count())
        .max()
        .unwrap_or(0);
    rows.iter()
        .map(|(k, v)| format!("{k:<width$}  {v}\n"))
        .collect()
}

/// A value with ten significant digits.
pub fn num(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let s = format!("{:.10}", x);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// The value, plus `= p/q` when it is within 1e-12 of a fraction with a small denominator
/// (exact values of games with rational probabilities are such fractions).
pub fn with_fraction(x: f64) -> String {
    match rational_hint(x) {
        Some((p, q)) if q > 1 => format!("{}  (= {p}/{q})", num(x)),
        _ => num(x),
    }
}

pub fn rational_hint(x: f64) -> Option<(i64, i64)> {
    if !x.is_finite() || x.abs() > 1e6 {
        return None;
    }
    (1..=1000i64).find_map(|q| {
        let p = (x * q as f64).round();
        ((x - p / q as f64).abs() < 1e-12).then_some((p as i64, q))
    })
}

/// Locality-test report.
pub fn locality_json(name: &str, r: &LocalityReport) -> Value {
    json!({
        "command": "local",
        "correlations": name,
        "local": r.local,
        "visibility": if r.visibility.is_finite() { json!(r.visibility) } else { Value::Null },
        "signalling": r.signalling,
        "deterministic_strategies": r.deterministic_strategies,
        "separating": r.separating,
        "projection": r.projection,
        "seconds": r.seconds,
    })
}

pub fn locality_text(name: &str, r: &LocalityReport, saved: Option<&str>) -> String {
    let mut rows = vec![
        ("correlations".to_string(), name.to_string()),
        (
            "local model".to_string(),
            match &r.projection {
                None => if r.local { "yes" } else { "no" }.to_string(),
                Some(p) => format!(
                    "no (the correlations signal); their no-signalling projection: {}",
                    if p.local { "yes" } else { "no" }
                ),
            },
        ),
        (
            "critical visibility".to_string(),
            if r.visibility.is_finite() {
                num(r.visibility)
            } else {
                "unbounded (pure noise)".into()
            },
        ),
        ("signalling".to_string(), num(r.signalling)),
    ];
    if let Some(sep) = &r.separating {
        rows.push((
            "separating expression".to_string(),
            format!(
                "local bound {}, value on the input {}{}",
                num(sep.local_bound),
                num(sep.value),
                saved
                    .map(|f| format!(" (saved to {f})"))
                    .unwrap_or_default()
            ),
        ));
    }
    if let Some(p) = &r.projection {
        rows.push((
            "no-signalling projection".to_string(),
            format!(
                "{}: distance {}, largest change {}",
                p.method,
                num_sig(p.distance, 4),
                num_sig(p.max_change, 4)
            ),
        ));
        if let (Some(t), Some(pv)) = (p.chi_square, p.p_value) {
            rows.push((
                "signalling test".to_string(),
                format!(
                    "χ² = {} with {} degrees of freedom, p-value {} (asymptotic)",
                    num_sig(t, 4),
                    p.degrees_of_freedom,
                    num_sig(pv, 4)
                ),
            ));
        }
    }
    let mut out = table(&rows);
    if r.projection.is_some() {
        out += "note: the correlations signal (frequencies from finitely many rounds usually do), so the test ran on their projection onto the no-signalling set; the visibility and the separating expression are those of the projection.";
        if r.projection.as_ref().is_some_and(|p| p.p_value.is_none()) {
            out += " Give `rounds` in the correlations file for a signalling p-value.";
        }
        out.push('\n');
    }
    out
}

/// `bellgap verify` report.
pub fn verification_json(game: &Game, certificate: &str, v: &Verification) -> Value {
    json!({
        "command": "verify",
        "game": game.name,
        "certificate": certificate,
        "level": v.level,
        "verified_upper": v.verified_upper,
        "claimed": v.claimed,
        "matches_claim": v.matches_claim,
    })
}

pub fn verification_text(game: &Game, certificate: &str, v: &Verification) -> String {
    let mut out = table(&[
        ("game".into(), format!("{} ({})", game.name, game.source)),
        ("certificate".into(), certificate.to_string()),
        ("level".into(), v.level.name()),
        ("verified quantum ≤".into(), num(v.verified_upper)),
        ("claimed in file".into(), num(v.claimed)),
    ]);
    if !v.matches_claim {
        out += "warning: the recomputed bound is larger than the one the file claims; the recomputed one holds\n";
    }
    out
}

/// `bellgap margin` report.
pub fn margin_json(game: &Game, m: &crate::protocol::finite::Margin) -> Value {
    let mut v =
        json!({"command": "margin", "game": game.name, "caution": crate::protocol::CAUTION});
    if let (Value::Object(o), Ok(Value::Object(extra))) = (&mut v, serde_json::to_value(m)) {
        o.extend(extra);
    }
    v
}

pub fn margin_text(game: &Game, m: &crate::protocol::finite::Margin) -> String {
    let mut rows = vec![
        (
            "game".to_string(),
            format!("{} ({})", game.name, game.source),
        ),
        ("rounds".to_string(), m.rounds.to_string()),
        ("observed mean".to_string(), num(m.observed_mean)),
        (
            format!("lower confidence (Hoeffding, α={:e})", m.alpha),
            num(m.lower_confidence),
        ),
    ];
    if let Some(e) = m.lower_confidence_exact {
        rows.push((
            format!("lower confidence (Clopper–Pearson, α={:e})", m.alpha),
            num(e),
        ));
    }
    rows.push(("classical value".into(), num(m.classical)));
    rows.push(("margin".into(), num(m.margin)));
    rows.push((
        "p-value (classical devices)".into(),
        format!("{}  ({})", p_value_text(m), m.p_value_bound),
    ));
    rows.push((
        format!(
            "rounds needed (p ≤ {:e} at mean {})",
            m.target_p_value,
            num(m.expected_mean)
        ),
        m.rounds_needed
            .map(|n| n.to_string())
            .unwrap_or_else(|| "never (no advantage)".into()),
    ));
    let mut out = table(&rows);
    out += "\nassumptions:\n";
    for a in &m.assumptions {
        out += &format!("  - {a}\n");
    }
    out += &format!("\n{}\n", crate::protocol::CAUTION);
    out
}

fn target_name(game: &Game, t: &crate::protocol::randomness::Target) -> String {
    t.parts
        .iter()
        .map(|&(p, x)| {
            format!(
                "{} (question {})",
                game.scenario.parties[p].name, game.scenario.parties[p].question_labels[x]
            )
        })
        .collect::<Vec<_>>()
        .join(" and ")
}

/// `bellgap randomness` report.
pub fn randomness_json(
    game: &Game,
    t: &crate::protocol::randomness::Target,
    rs: &[crate::protocol::randomness::Randomness],
) -> Value {
    let mut v = json!({
        "command": "randomness",
        "game": game.name,
        "target": target_name(game, t),
        "caution": crate::protocol::CAUTION,
    });
    if let [one] = rs {
        v["score"] = json!(one.score);
        v["score_used"] = json!(one.score_used);
        v["guessing_probability"] = json!(one.guessing_probability);
        v["min_entropy"] = json!(one.min_entropy);
        v["level"] = json!(one.level);
        v["status"] = json!(one.status);
        v["seconds"] = json!(one.seconds);
    } else {
        v["sweep"] = json!(rs);
    }
    v
}

pub fn randomness_text(
    game: &Game,
    t: &crate::protocol::randomness::Target,
    rs: &[crate::protocol::randomness::Randomness],
) -> String {
    let mut out = format!(
        "game     {} ({})\nguessed  {}\n\n",
        game.name,
        game.source,
        target_name(game, t)
    );
    out += &format!(
        "{:>14}  {:>22}  {:>18}  {}\n",
        "score", "guessing probability ≤", "min-entropy ≥ (bits)", "solver"
    );
    for r in rs {
        let used = if r.score_used < r.score {
            format!(", solved at score {}", num(r.score_used))
        } else {
            String::new()
        };
        out += &format!(
            "{:>14}  {:>22}  {:>18}  {} (level {}{used})\n",
            num(r.score),
            num(r.guessing_probability),
            num(r.min_entropy),
            r.status,
            r.level
        );
    }
    out += &format!(
        "\nassumptions: quantum adversary, i.i.d. rounds, asymptotic per-round figure.\n{}\n",
        crate::protocol::CAUTION
    );
    out
}

/// `bellgap key` report.
pub fn key_json(k: &crate::protocol::key::KeyRate, threshold: f64) -> Value {
    json!({
        "command": "key",
        "chsh": k.score,
        "qber": k.qber,
        "conditional_entropy": k.conditional_entropy,
        "key_rate": k.key_rate,
        "threshold_qber": threshold,
        "bound": k.bound,
        "caution": crate::protocol::CAUTION,
    })
}

pub fn key_text(k: &crate::protocol::key::KeyRate, threshold: f64) -> String {
    let mut out = table(&[
        ("CHSH value".into(), num(k.score)),
        ("QBER".into(), num(k.qber)),
        ("H(A|E) ≥".into(), bits_text(k.conditional_entropy)),
        (
            "key rate ≥".into(),
            format!("{} per round", bits_text(k.key_rate)),
        ),
        ("threshold QBER (depolarising)".into(), num(threshold)),
        ("bound".into(), k.bound.to_string()),
    ]);
    out += "\nassumptions: collective attacks, i.i.d. rounds, asymptotic limit, one-way error correction at the Shannon limit.\n";
    out += &format!("{}\n", crate::protocol::CAUTION);
    out
}

/// A p-value, always in one format: plain for p ≥ 0.001, else `m×10^e` with four significant
/// digits (from the logarithm, so it also covers p-values that underflow a double).
pub fn p_value_text(m: &crate::protocol::finite::Margin) -> String {
    if m.p_value >= 1e-3 {
        return num_sig(m.p_value, 4);
    }
    let e = m.p_value_log10.floor();
    let mantissa = 10f64.powf(m.p_value_log10 - e);
    format!("{}×10^{}", num_sig(mantissa, 4), e as i64)
}

/// A number with `digits` significant digits, trailing zeros dropped.
pub fn num_sig(x: f64, digits: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return num(x);
    }
    let magnitude = x.abs().log10().floor() as i64;
    let decimals = (digits as i64 - 1 - magnitude).max(0) as usize;
    let s = format!("{x:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// A count that may be astronomically large: exact up to 10^15, then `m×10^e`.
pub fn count_text(x: f64) -> String {
    if x < 1e15 {
        format!("{}", x.round() as u64)
    } else {
        let e = x.log10().floor();
        format!("{}×10^{}", num_sig(x / 10f64.powf(e), 4), e as i64)
    }
}

/// `1 bit`, `0.5 bits`.
pub fn bits_text(x: f64) -> String {
    let n = num(x);
    if n == "1" {
        "1 bit".into()
    } else {
        format!("{n} bits")
    }
}

/// Fixed six decimals, with a negative zero shown as 0.
fn fixed6(x: f64) -> String {
    let s = format!("{x:.6}");
    if s == "-0.000000" {
        "0.000000".into()
    } else {
        s
    }
}
