//! Text output: compact aligned tables for people, read from the same report structs the JSON
//! renderer reads.

use crate::bounds::classical::{ClassicalStatus, DeterministicStrategy};
use crate::bounds::entropy::Preprocessing;
use crate::bounds::quantum::analysis::StrategyAnalysis;
use crate::model::scenario::Scenario;
use crate::model::symmetry::Relabelling;
use crate::numbers::{
    bits_text, count_text, fixed6, num, num_down, num_sig, num_up, with_fraction,
};
use crate::pipeline::{
    BoundKind, EntropyReport, Extracting, FiniteSizeReport, GameReport, KeyReport, Leakage,
    LocalReport, MarginReport, RandomnessReport, VerifyReport, COMMON_EFFICIENCY,
    QUANTUM_SETTLED_TOLERANCE,
};
use crate::protocol::accumulation::Statement;
use crate::protocol::finite::Margin;
use crate::protocol::CAUTION;

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

/// A game report as an aligned table for people.
pub fn game_report(r: &GameReport) -> String {
    let s = &r.game.scenario;
    let mut out = String::new();
    let mut rows: Vec<(String, String)> = vec![
        (
            "game".into(),
            format!("{} ({})", r.game.name, r.game.source),
        ),
        (
            "players".into(),
            s.parties()
                .iter()
                .map(|p| format!("{} {}×{}", p.name, p.questions(), p.answers()))
                .collect::<Vec<_>>()
                .join(", ")
                + "  (questions × answers)",
        ),
    ];
    if let Some(d) = &r.game.description {
        rows.insert(1, ("about".into(), d.clone()));
    }
    if let Some(sizes) = &r.sizes {
        let (z, e) = (&sizes.sizes, &sizes.classical);
        let (lo, hi) = sizes.value_range;
        rows.push(("kind".into(), format!("{:?}", s.kind()).to_lowercase()));
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
                s.parties()[e.responder].name
            ),
        ));
        rows.push(("value range".into(), format!("[{}, {}]", num(lo), num(hi))));
        let (rlo, rhi) = sizes.per_round_score_range;
        rows.push((
            "per-round score range".into(),
            format!(
                "[{}, {}]  (one round's score, whose mean is the value; used by margin, review and finite-size)",
                num(rlo),
                num(rhi)
            ),
        ));
        rows.push((
            "symmetry".into(),
            match &sizes.symmetry {
                None => "not searched (the table is too large)".into(),
                Some(g) if g.complete => format!(
                    "order {} ({} generators; relabellings that leave the weighted table unchanged)",
                    g.order,
                    g.generators.len()
                ),
                Some(g) => format!(
                    "order ≥ {} (the search stopped at its work limit; {} generators found)",
                    if g.order == u128::MAX {
                        "3.4×10^38".to_string()
                    } else {
                        g.order.to_string()
                    },
                    g.generators.len()
                ),
            },
        ));
        if let Some(g) = sizes.wider_symmetry() {
            rows.push((
                "  no-signalling".into(),
                format!(
                    "order {}{} modulo no-signalling (relabellings that keep the value on every no-signalling behaviour; the NPA reduction uses these)",
                    if g.complete { "" } else { "≥ " },
                    g.order
                ),
            ));
        }
    }
    if let Some(c) = &r.classical {
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
    if let Some(ns) = &r.no_signalling {
        let mut v = with_fraction(ns.value);
        if let Some(up) = ns.certified_upper {
            v += &format!("  ({}, {}; certified ≤ {})", ns.method, ns.status, num(up));
        }
        rows.push(("no-signalling".into(), v));
    }
    for b in &r.npa_levels {
        rows.push((
            format!("quantum ≤ (NPA {})", b.level),
            format!(
                "{}  (verified; {}×{} matrix, {:.2} s)",
                num_up(b.verified_upper),
                b.matrix_size,
                b.matrix_size,
                b.seconds
            ),
        ));
    }
    if let Some(b) = &r.npa {
        // A converged run's raw value is its dual objective; a run stopped early has only its
        // last primal value, which is no bound.
        let raw = if b.converged() {
            format!("raw {}", num(b.quantum_upper))
        } else {
            format!("stopped early, last primal value {}", num(b.primal))
        };
        let raw_value = if b.converged() {
            b.quantum_upper
        } else {
            b.primal
        };
        rows.push((
            "quantum ≤ (NPA)".into(),
            format!(
                "{}  (verified; {raw}, verified − raw {:.1e}; level {}, {}×{} matrix, {} moments, {} {}, {} iterations, {:.2} s)",
                num_up(b.verified_upper),
                b.verified_upper - raw_value,
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
        if let Some(u) = &b.symmetry {
            rows.push((
                "  symmetry".into(),
                {
                    let largest = u.blocks.iter().max().unwrap_or(&0);
                    let split = match u.blocks.len() {
                        0 | 1 => "matrix not split into blocks".to_string(),
                        k => format!("matrix split into {k} blocks (largest {largest}×{largest})"),
                    };
                    format!(
                        "{} relabellings: {} moments merged into {}, {split}; bound checked on the full matrix",
                        u.order, u.full_moments, u.moments,
                    )
                },
            ));
        }
    }
    if let Some(sw) = &r.seesaw {
        rows.push((
            "quantum ≥ (see-saw)".into(),
            format!(
                "{}  (dims {:?}, {} restarts, seed {}, {:.2} s)",
                num_down(sw.quantum_lower),
                sw.dims,
                sw.restarts,
                sw.seed,
                sw.seconds
            ),
        ));
    }
    if let Some(v) = r.evaluated {
        rows.push((
            "value (Born rule)".into(),
            format!("{}  (error ≤ {:.1e})", num(v.value), v.error),
        ));
        rows.push(("quantum ≥".into(), num_down(v.lower)));
    }
    if let Some(n) = &r.noisy {
        let efficiency = if n.noise.efficiency.is_empty() {
            "1".to_string()
        } else {
            n.noise
                .efficiency
                .iter()
                .map(|e| num(*e))
                .collect::<Vec<_>>()
                .join(", ")
        };
        rows.push((
            "under noise".into(),
            format!(
                "score ≥ {} at visibility {}, detection efficiency {}, dark counts {} (the file's `noise:`){}",
                num_down(n.score.lower),
                num(n.noise.visibility),
                efficiency,
                num(n.noise.dark_counts),
                n.margin
                    .map(|m| format!("; margin over the classical value {}", num_down(m)))
                    .unwrap_or_default()
            ),
        ));
    }
    if let (Some(sw), Some(b)) = (&r.seesaw, &r.npa) {
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
    if let (Some(c), Some(b)) = (&r.classical, &r.npa) {
        rows.push((
            "gap quantum − classical".into(),
            format!("≤ {}", num(b.verified_upper - c.value)),
        ));
    }
    if let (Some(ns), Some(b)) = (&r.no_signalling, &r.npa) {
        rows.push((
            "gap ns − quantum".into(),
            format!("≥ {}", num(ns.value - b.verified_upper)),
        ));
    }
    if let (Some(c), Some(ns)) = (&r.classical, &r.no_signalling) {
        rows.push(("gap ns − classical".into(), num(ns.value - c.value)));
    }
    out += &table(&rows);
    if let Some(g) = r.sizes.as_ref().and_then(|z| z.symmetry.as_ref()) {
        for (k, generator) in g.generators.iter().enumerate() {
            out += &format!(
                "  generator {}: {}\n",
                k + 1,
                relabelling_text(s, generator)
            );
        }
    }
    if let Some(g) = r.sizes.as_ref().and_then(|z| z.wider_symmetry()) {
        for (k, generator) in g.generators.iter().enumerate() {
            out += &format!(
                "  generator {} modulo no-signalling: {}\n",
                k + 1,
                relabelling_text(s, generator)
            );
        }
    }
    for f in &r.not_obtained {
        out += &format!("not obtained: {f}\n");
    }
    for note in &r.notes {
        out += &format!("note: {note}\n");
    }
    if let Some(a) = &r.strategy_analysis {
        out += &analysis_text(a);
    }
    if let Some(c) = &r.classical {
        out += match c.status {
            ClassicalStatus::Exact => {
                "\noptimal deterministic strategy (answer to each question):\n"
            }
            ClassicalStatus::Incumbent => {
                "\nbest deterministic strategy found (answer to each question):\n"
            }
        };
        out += &strategy_text(s, &c.strategy);
        out += &format!("({:?}, {} nodes, {:.3} s)\n", c.method, c.nodes, c.seconds).to_lowercase();
    }
    out
}

/// One line for a bound as soon as `bounds` has it (or has given up on it), for stderr while
/// the other bounds are still being computed.
pub fn bound_obtained(r: &GameReport, bound: BoundKind) -> String {
    let line = match bound {
        BoundKind::Classical => r.classical.as_ref().map(|c| match c.status {
            ClassicalStatus::Exact => format!("classical {} ({:.2} s)", num(c.value), c.seconds),
            ClassicalStatus::Incumbent => {
                format!("classical ≥ {} (a lower bound only)", num(c.value))
            }
        }),
        BoundKind::NoSignalling => r
            .no_signalling
            .as_ref()
            .map(|ns| format!("no-signalling {}", num(ns.value))),
        BoundKind::Npa => r.npa.as_ref().map(|b| {
            format!(
                "quantum ≤ {} (NPA {}, verified, {:.2} s)",
                num_up(b.verified_upper),
                b.level,
                b.seconds
            )
        }),
        BoundKind::Seesaw => r.seesaw.as_ref().map(|sw| {
            format!(
                "quantum ≥ {} (see-saw, dims {:?}, {} restarts, {:.2} s)",
                num_down(sw.quantum_lower),
                sw.dims,
                sw.restarts,
                sw.seconds
            )
        }),
    };
    let label = match bound {
        BoundKind::Classical => "classical value",
        BoundKind::NoSignalling => "no-signalling value",
        BoundKind::Npa => "NPA upper bound",
        BoundKind::Seesaw => "see-saw lower bound",
    };
    match line {
        Some(l) => format!("obtained: {l}"),
        None => format!("not obtained: {label} (see the report)"),
    }
}

fn strategy_text(s: &Scenario, st: &DeterministicStrategy) -> String {
    let width = s.parties().iter().map(|p| p.name.len()).max().unwrap_or(0);
    let mut out = String::new();
    for (p, ans) in s.parties().iter().zip(&st.answers) {
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

/// A locality test; `saved` is where the separating expression was written.
pub fn local(report: &LocalReport, saved: Option<&str>) -> String {
    let (name, r) = (report.name.as_str(), &report.test);
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
        (
            "signalling".to_string(),
            format!(
                "{} (the largest difference between a player's marginal under two questions of the others; 0 for no-signalling correlations)",
                num(r.signalling)
            ),
        ),
    ];
    if let Some(sep) = &r.separating {
        rows.push((
            "separating expression".to_string(),
            format!(
                "local bound {}, value on the input {}{}",
                num(clean_zero(sep.local_bound)),
                num(sep.value),
                // The integer form, when there is one, is what the file holds.
                saved
                    .filter(|_| sep.integer.is_none())
                    .map(|f| format!(" (saved to {f})"))
                    .unwrap_or_default()
            ),
        ));
    }
    if let Some(int) = r.separating.as_ref().and_then(|s| s.integer.as_ref()) {
        let largest = int.coefficients.iter().copied().max().unwrap_or(0);
        rows.push((
            "integer form".to_string(),
            format!(
                "coefficients 0 to {largest}: local bound {} (every deterministic strategy), value {} ≥ {}, violation ≥ {} (exact){}",
                int.local_bound,
                int.value_fraction,
                num_down(int.value),
                num_down(int.violation),
                saved
                    .map(|f| format!("; saved to {f}"))
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

/// A certificate re-checked.
pub fn verify(report: &VerifyReport) -> String {
    let (game, certificate, v) = (
        report.game,
        report.certificate.as_str(),
        &report.verification,
    );
    let mut out = table(&[
        ("game".into(), format!("{} ({})", game.name, game.source)),
        ("certificate".into(), certificate.to_string()),
        ("level".into(), v.level.name()),
        ("verified quantum ≤".into(), num_up(v.verified_upper)),
        ("claimed in file".into(), num(v.claimed)),
    ]);
    if !v.matches_claim {
        out += "warning: the recomputed bound is larger than the one the file claims; the recomputed one holds\n";
    }
    if let Some(e) = &report.exact {
        out += &table(&[
            (
                "proven exactly ≤".into(),
                format!("{} (rounded up)", num_up(e.exact.rounded_up)),
            ),
            ("as a fraction".into(), e.exact.fraction.clone()),
            (
                "PSD shifts".into(),
                e.exact
                    .shifts
                    .iter()
                    .map(|v| format!("{v:.1e}"))
                    .collect::<Vec<_>>()
                    .join(", "),
            ),
            (
                "residual charge".into(),
                format!("{:.1e}", e.exact.residual_charge),
            ),
        ]);
    }
    out
}

/// What an observed run certifies.
pub fn margin(report: &MarginReport) -> String {
    let (game, m) = (report.game, &report.margin);
    let mut rows = vec![
        (
            "game".to_string(),
            format!("{} ({})", game.name, game.source),
        ),
        ("rounds".to_string(), m.rounds.to_string()),
        ("observed mean".to_string(), num(m.observed_mean)),
    ];
    if let Some(e) = &report.estimator {
        rows.push(("per-round estimator".into(), e.clone()));
    }
    rows.extend([
        (
            "per-round score range".to_string(),
            format!("[{}, {}]", num(m.score_range[0]), num(m.score_range[1])),
        ),
        (
            format!(
                "lower confidence ({}, α={:e})",
                m.confidence_method, m.alpha
            ),
            num(m.certified_score),
        ),
    ]);
    rows.push(("classical value".into(), num(m.classical)));
    rows.push((format!("margin ({})", m.confidence_method), num(m.margin)));
    rows.push((
        "p-value (classical devices)".into(),
        format!("{}  ({})", p_value_text(m), m.p_value_bound),
    ));
    rows.push((
        format!(
            "rounds needed (p ≤ {:e} at the {} mean {})",
            m.target_p_value,
            m.expected_from,
            num(m.expected_mean)
        ),
        m.rounds_needed
            .map(|n| n.to_string())
            .unwrap_or_else(|| "never (no advantage)".into()),
    ));
    let mut out = table(&rows);
    out += &assumptions_and_caution(&m.assumptions);
    out
}

/// Certified randomness at one or more scores.
pub fn randomness(report: &RandomnessReport) -> String {
    let (game, rs) = (report.game, &report.results);
    let mut out = format!(
        "game     {} ({})\nguessed  {}\n",
        game.name, game.source, report.target_name
    );
    if let Some(g) = &report.given {
        out += &format!("given    {g}\n");
    }
    out += "\n";
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
        // Every printed bound is verified from the dual whatever the solver's status; the
        // status says how close to optimal the bound is, not whether it holds.
        let status = match r.score_multiplier {
            Some(mu) => format!(
                "verified; {}, score as a Lagrangian term (μ = {mu:.3e})",
                r.status
            ),
            None => format!("verified; {}", r.status),
        };
        out += &format!(
            "{:>14}  {:>22}  {:>18}  {status} (level {}{used})\n",
            num(r.score),
            num_up(r.guessing_probability),
            num_down(r.min_entropy),
            r.level
        );
    }
    for r in rs {
        if let Some(e) = &r.exact {
            out += &format!(
                "proven exactly at score {}: guessing probability ≤ {} (rounded up), min-entropy ≥ {} bits; as a fraction {}\n",
                num(r.score),
                num_up(e.bound.rounded_up),
                num_down(e.min_entropy),
                e.bound.fraction
            );
        }
    }
    for f in &report.not_obtained {
        out += &format!("not obtained: {f}\n");
    }
    out += &format!(
        "\nassumptions: quantum adversary, i.i.d. rounds, asymptotic per-round figure.\n{}\n",
        CAUTION
    );
    out
}

/// Entropy bounds, per score or for a behaviour, with the key rate when asked.
pub fn entropy(report: &EntropyReport) -> String {
    let mut out = format!(
        "game     {} ({})\nanswers  {}\ngiven    {}\n",
        report.game.name, report.game.source, report.target_name, report.given
    );
    if let Some(first) = report.results.first() {
        out += &format!("method   {}\n", first.entropy.method);
    }
    out += "\n";
    let key = report.results.iter().any(|r| r.key.is_some());
    out += &format!(
        "{:>14}  {:>18}  {:>14}{}\n",
        "score",
        "H(A|X,E) ≥ (bits)",
        "solvers' sum",
        if key {
            "   H(A|B) (bits)   key rate ≥"
        } else {
            ""
        }
    );
    for r in &report.results {
        let score = r.score.map_or("behaviour".to_string(), num);
        out += &format!(
            "{:>14}  {:>18}  {:>14}",
            score,
            num_down(r.entropy.bits),
            num(r.entropy.solver_bits)
        );
        if let Some(k) = &r.key {
            out += &format!(
                "   {:>13}   {}",
                num_up(k.error_correction),
                num_down(k.key_rate)
            );
        }
        out += &format!("  ({:.2} s)\n", r.entropy.seconds);
    }
    for r in &report.results {
        if let Some(f) = &r.entropy.min_tradeoff {
            out += &format!(
                "min-tradeoff: f(S) = {} + {}·(S − {}) bits, valid for every S from {} to {} (f = {} and {} there)\n",
                num(f.at(f.score)),
                num(f.slope),
                num(f.score),
                num(f.lowest),
                num(f.highest),
                num(f.at_lowest),
                num(f.at_highest)
            );
        }
    }
    out += "(solvers' sum: the same sum from the relaxations' own values, before the verification's margin; not a bound)\n";
    if let Some(k) = report.results.iter().find_map(|r| r.key.as_ref()) {
        out += &format!("\nerror correction: {}\n", k.error_correction_from);
    }
    for f in &report.not_obtained {
        out += &format!("not obtained: {f}\n");
    }
    out += &assumptions_and_caution(&report.assumptions);
    out
}

/// `verify --sdpa-level`: an external solver's dual checked on our relaxation.
pub fn sdpa_import(
    game: &crate::formats::game::Game,
    source: &str,
    r: &crate::bounds::quantum::npa::SdpaImport,
) -> String {
    let mut rows = vec![
        (
            "game".to_string(),
            format!("{} ({})", game.name, game.source),
        ),
        (
            "SDPA solution".into(),
            format!("{source} ({} as the dual)", r.bound.matrix),
        ),
        ("level".into(), r.level.name()),
        ("verified quantum ≤".into(), num_up(r.bound.verified_upper)),
    ];
    if let Some(e) = &r.bound.exact {
        rows.push((
            "proven exactly ≤".into(),
            format!("{} (rounded up)", num_up(e.rounded_up)),
        ));
        rows.push(("as a fraction".into(), e.fraction.clone()));
    }
    table(&rows)
}

/// An external solver's solution of the guessing-probability SDP, verified.
pub fn guessing_import(r: &crate::pipeline::GuessingImportReport, source: &str) -> String {
    let i = &r.import;
    let mut rows = vec![
        (
            "game".to_string(),
            format!("{} ({})", r.game.name, r.game.source),
        ),
        ("guessed".into(), r.guessed.clone()),
        (
            "SDPA solution".into(),
            format!("{source} ({} as the dual)", i.bound.matrix),
        ),
        ("score at least".into(), num(i.score)),
        ("level".into(), i.level.name()),
        (
            "guessing probability ≤".into(),
            if i.bound.verified_upper > 1.0 {
                format!(
                    "1 (the solution proves only {} for the SDP, which says nothing)",
                    num_up(i.bound.verified_upper)
                )
            } else {
                format!("{} (verified)", num_up(i.guessing_probability))
            },
        ),
        ("min-entropy ≥ (bits)".into(), num_down(i.min_entropy)),
    ];
    if let Some(e) = &i.bound.exact {
        rows.push((
            "proven exactly ≤".into(),
            format!("{} (rounded up)", num_up(e.rounded_up)),
        ));
        rows.push(("as a fraction".into(), e.fraction.clone()));
    }
    let mut out = table(&rows);
    out += &format!(
        "\nassumptions: quantum adversary, i.i.d. rounds, asymptotic per-round figure.\n{CAUTION}\n"
    );
    out
}

/// Where `nosignal --save` wrote its behaviour, and in what form.
pub fn saved_behaviour(saved: &crate::pipeline::SavedBehaviour, file: &str) -> String {
    match (&saved.value_fraction, saved.largest_denominator) {
        (Some(value), Some(d)) => format!(
            "\noptimal behaviour saved to {file}: exact fractions (denominators up to {d}), non-negative, normalised and no-signalling; its value is {value} exactly (≈ {})\n",
            num(saved.value)
        ),
        _ => format!(
            "\noptimal behaviour saved to {file}: the LP's floating-point solution (it does not read as exact fractions)\n"
        ),
    }
}

/// External solutions of the entropy nodes, verified and summed.
pub fn entropy_import(r: &crate::pipeline::EntropyImportReport) -> String {
    let mut out = format!(
        "game     {} ({})\nanswers  {}\ngiven    every quantum behaviour scoring at least {}\n\n",
        r.game.name,
        r.game.source,
        r.answers,
        num(r.score)
    );
    out += &format!(
        "{:>4}  {:>12}  {:>12}  {:>20}  solution\n",
        "node", "t", "weight", "infimum ≥"
    );
    for (k, n) in r.imported.nodes.iter().enumerate() {
        out += &format!(
            "{:>4}  {:>12.6e}  {:>12.6e}  {:>20}  {}\n",
            k + 1,
            n.t,
            n.weight,
            num_down(n.infimum),
            n.matrix
        );
    }
    let exact = r.imported.nodes.iter().all(|n| n.exact.is_some());
    out += &format!(
        "\nH(A|X,E) ≥ {} bits (each node's solution verified on the node rebuilt here{}, the sum's rounding charged)\n\n{CAUTION}\n",
        num_down(r.imported.bits),
        if exact {
            " and its bound proven in exact rationals"
        } else {
            ""
        }
    );
    out
}

/// The `self-test` command's report.
pub fn self_test(report: &crate::pipeline::SelfTestReport) -> String {
    let b = &report.bound;
    let s = &report.game.scenario;
    let mut out = format!(
        "game        {} ({})\ngiven       {}\n",
        report.game.name, report.game.source, report.given
    );
    let names: Vec<String> = s
        .parties()
        .iter()
        .zip(&report.questions)
        .map(|(p, q)| format!("{} questions {} (Z) and {} (X)", p.name, q[0], q[1]))
        .collect();
    out += &format!(
        "isometry    partial SWAP per player: {}\n",
        names.join("; ")
    );
    out += &format!(
        "target      {} [{}] ({})\n",
        "|00⟩, |01⟩, |10⟩, |11⟩ amplitudes",
        b.target
            .iter()
            .map(|a| num_sig(*a, 6))
            .collect::<Vec<_>>()
            .join(", "),
        report.target_from
    );
    out += &format!(
        "fidelity    ≥ {}  (verified; solver's value {}, NPA level {}, {}×{} matrix, {:?}, {:.2} s)\n",
        num_down(b.fidelity),
        num(b.solver_value),
        b.level.name(),
        b.matrix_size,
        b.matrix_size,
        b.status,
        b.seconds
    );
    if let (Some(k), Some(chsh)) = (b.chsh_analytic, b.chsh_value) {
        out += &format!(
            "CHSH        S {} {}: Kaniewski's analytic bound F ≥ {} with the maximally entangled state under the best local channels (PRL 117, 070402 (2016); formula quoted from memory){}\n",
            if b.region_score_floor.is_some() { "≥" } else { "=" },
            num(chsh),
            num_down(k),
            if k <= 0.5 { ", which says nothing at or below S* ≈ 2.1058" } else { "" }
        );
    }
    out += &assumptions_and_caution(&report.assumptions);
    out
}

/// The `design` command's report.
pub fn design(report: &crate::pipeline::DesignReport) -> String {
    use crate::bounds::quantum::design::StateChoice;
    let imp = &report.implementation;
    let noise = &imp.noise;
    let s = &report.game.scenario;
    let mut out = format!(
        "game        {} ({})\nfigure      {}\n",
        report.game.name,
        report.game.source,
        report.figure.describe()
    );
    if let Some(about) = &report.about {
        out += &format!("about       {about}\n");
    }
    let efficiency = if noise.efficiency.is_empty() {
        "1".to_string()
    } else {
        noise
            .efficiency
            .iter()
            .map(|e| num(*e))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if let Some(t) = &report.threshold {
        out += &format!("\nthreshold of the {}\n", t.parameter.name());
        match &t.bracket {
            Some(b) => out += &format!(
                "  between     {} and {}: positive at {} (implementation below), none found at {}\n",
                num(b.below),
                num(b.above),
                num(b.above),
                num(b.below)
            ),
            None => out += "  none: no implementation found has a positive figure even at 1\n",
        }
        out += &format!(
            "  searches    {} implementations, {:.1} s\n\n  {:>12}  {}\n",
            t.searches,
            t.seconds,
            t.parameter.name(),
            report.figure.describe()
        );
        for p in &t.curve {
            out += &format!(
                "  {:>12}  {}\n",
                num_sig(p.parameter, 6),
                if p.figure > 0.0 {
                    num_down(p.figure)
                } else {
                    "none found (≤ 0)".to_string()
                }
            );
        }
    }
    out += &format!(
        "\nnoise       visibility {}, detection efficiency {}, dark counts {}\n",
        num(noise.visibility),
        efficiency,
        num(noise.dark_counts)
    );
    if !noise.lossless() {
        let answers: Vec<String> = imp
            .no_click_answers
            .iter()
            .zip(s.parties())
            .map(|(row, p)| {
                format!(
                    "{} {}",
                    p.name,
                    row.iter()
                        .map(|&a| p.answer_labels[a].to_string())
                        .collect::<Vec<_>>()
                        .join(",")
                )
            })
            .collect();
        out += &format!(
            "no-click    reported as: {} (per question){}\n",
            answers.join("; "),
            if noise.no_click == crate::model::noise::NoClick::Best {
                ", the best assignment found"
            } else {
                ""
            }
        );
    }
    out += &format!(
        "state       {}, dims {:?}, {} restarts, seed {}\n",
        match imp.state {
            StateChoice::Optimised => "optimised",
            StateChoice::MaximallyEntangled => "maximally entangled (fixed)",
        },
        imp.dims,
        imp.restarts,
        imp.seed
    );
    out += &format!(
        "score       ≥ {} under this noise (certified; classical value {}, margin {})\n",
        num_down(imp.score.lower),
        num(imp.classical),
        num_down(imp.margin)
    );
    let v = &report.value;
    if let Some(g) = v.guessing_probability {
        out += &format!("guessing    ≤ {} (verified)\n", num_up(g));
    }
    if let Some(h) = v.conditional_entropy {
        out += &format!("H(A|X,E)    ≥ {} bits\n", num_down(h));
    }
    if let Some(ec) = v.error_correction {
        out += &format!(
            "H(A|B)      ≤ {} bits (the noisy behaviour's, rounded up)\n",
            num_up(ec)
        );
    }
    out += &format!(
        "figure      {} {}\n",
        num_down(v.value),
        if v.value > 0.0 {
            "(positive: the goal is met)"
        } else {
            "(not positive: the goal is not met at this noise)"
        }
    );
    if report.figure != crate::pipeline::DesignFigure::Margin {
        out += &format!(
            "            certified at the score {} (the implementation's noisy score, rounded down)\n",
            num(v.score)
        );
    }
    let schmidt: Vec<String> = crate::bounds::quantum::analysis::bipartitions(s, &imp.strategy)
        .first()
        .map(|b| b.schmidt.iter().map(|c| num_sig(*c, 6)).collect())
        .unwrap_or_default();
    if !schmidt.is_empty() {
        out += &format!("Schmidt     {}\n", schmidt.join(", "));
    }
    out += &assumptions_and_caution(&report.assumptions);
    out
}

/// A small probability in scientific notation (`1.234e-12`), 0 as `0`.
fn probability_text(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x >= 1e-3 {
        num_sig(x, 4)
    } else {
        format!("{x:.3e}")
    }
}

/// A number of bits that may be large: ten significant digits.
fn many_bits(x: f64) -> String {
    format!("{} bits", num_sig(x, 10))
}

/// A statement's bound: never printed negative (0 with the reason).
fn signed_bits(x: f64) -> String {
    if x > 0.0 {
        many_bits(x)
    } else {
        "0 bits (its correction exceeds the first-order term)".into()
    }
}

/// A certified bit count, never negative: 0 is said with its reason.
fn certified_bits(x: f64) -> String {
    if x > 0.0 {
        many_bits(x)
    } else {
        "0 bits (nothing certified at this length)".into()
    }
}

/// What a spot-checking run certifies (`finite-size`).
pub fn finite_size(report: &FiniteSizeReport) -> String {
    let run = &report.run;
    let p = &run.protocol;
    let f = &run.tradeoff;
    let t = &run.second_order;
    let what = match report.extracting {
        Extracting::Randomness => "randomness (every player's answers)",
        Extracting::Key => "key (the target player's answers)",
    };
    let mut rows = vec![
        (
            "game".to_string(),
            format!("{} ({})", report.game.name, report.game.source),
        ),
        ("entropy of".into(), report.target_name.clone()),
        ("extracting".into(), what.into()),
        ("rounds".into(), count_text(p.rounds as f64)),
        ("testing probability".into(), num(p.testing)),
        (
            "per-round score range".into(),
            format!("[{}, {}]", num(p.score_range.0), num(p.score_range.1)),
        ),
        (
            "pass condition".into(),
            format!(
                "the test rounds' total shortfall Σ ({} − score) is at most {} (score ≥ {} per test round on average)",
                num(p.score_range.1),
                num_sig(run.shortfall_allowed, 8),
                num(p.threshold)
            ),
        ),
        (
            "tangent score".into(),
            format!(
                "{}: H(A|X,E) ≥ {} there ({}); tried {}",
                num(report.entropy.min_tradeoff.as_ref().map_or(p.threshold, |m| m.score)),
                bits_text(report.entropy.bits),
                report.entropy.method,
                report
                    .tangents
                    .iter()
                    .map(|t| format!("{} → {}", num(t.score), bits_text(t.output_bits)))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        ),
        (
            "min-tradeoff g(S)".into(),
            format!(
                "{} + {}·S bits per round (with the factor 1 − γ for generation rounds)",
                num(f.intercept),
                num(f.slope)
            ),
        ),
        (
            "f: Max, Min, Min_Σ, Var ≤".into(),
            format!(
                "{}, {}, {}, {}",
                num(f.max),
                num(f.min),
                num(f.min_achievable),
                num_sig(f.variance, 6)
            ),
        ),
        ("output register d_O".into(), num(p.output_dimension)),
        (
            "ε_s, ε_EA, ε_ext".into(),
            format!(
                "{}, {}, {}",
                probability_text(run.security.smoothing),
                probability_text(run.security.pass_floor),
                probability_text(run.security.extraction)
            ),
        ),
        (
            "Rényi α chosen".into(),
            format!("{} (V = {}, K_α = {})", num_sig(t.alpha, 8), num_sig(t.v, 6), num_sig(t.k_alpha, 6)),
        ),
        ("first order n·h".into(), many_bits(run.first_order)),
        (
            "second-order terms".into(),
            format!(
                "{} (variance) + {} (ε) + {} (third order)",
                many_bits(t.variance_term),
                many_bits(t.error_term),
                many_bits(t.third_order_term)
            ),
        ),
        (
            "original statement".into(),
            format!(
                "n·h − v·√n with v = {} (‖∇f‖∞ ≤ {}): {}",
                num_sig(run.original.v, 6),
                num_sig(run.original.gradient_bound, 6),
                signed_bits(run.by_original)
            ),
        ),
        (
            "improved second-order statement".into(),
            signed_bits(run.by_improved_second_order),
        ),
        (
            "certified by".into(),
            match run.certified_by {
                Statement::Original => "the original statement",
                Statement::ImprovedSecondOrder => "the improved second-order statement",
                Statement::Smaller => "the smaller of both",
            }
            .to_string()
                + match run.security.statement {
                    Statement::Smaller => " (the smaller of both, the default)",
                    _ => " (as asked)",
                },
        ),
        ("H_min^ε_s ≥".into(), certified_bits(run.smooth_min_entropy)),
    ];
    if report.extracting == Extracting::Key {
        rows.push((
            "test rounds allowed".into(),
            report
                .max_test_rounds
                .map_or("-".into(), |m| count_text(m as f64)),
        ));
        rows.push((
            "others' test answers".into(),
            many_bits(run.disclosure.test_answers),
        ));
        rows.push((
            "error correction".into(),
            match report.key_disclosure.map(|k| k.leakage) {
                Some(Leakage::ErrorRate {
                    error_rate,
                    efficiency,
                }) => format!(
                    "{} (n·f·Fano at Q = {}, efficiency f = {}{})",
                    many_bits(run.disclosure.error_correction),
                    num(error_rate),
                    num(efficiency),
                    if efficiency == COMMON_EFFICIENCY {
                        ", common practice"
                    } else {
                        ""
                    }
                ),
                _ => format!(
                    "{} (as disclosed)",
                    many_bits(run.disclosure.error_correction)
                ),
            },
        ));
        rows.push((
            "verification hash".into(),
            format!(
                "{} (ε_EC = {})",
                many_bits(run.disclosure.verification_hash),
                report
                    .key_disclosure
                    .map_or("-".into(), |k| probability_text(k.verification_error))
            ),
        ));
    }
    rows.push(("certified output".into(), certified_bits(run.output_bits)));
    rows.push((
        "rate per round".into(),
        format!(
            "{} (limit as n grows: {})",
            bits_text(run.rate_per_round),
            bits_text(report.asymptotic_output_rate)
        ),
    ));
    rows.push((
        format!("rounds for {}% of the limit", num(100.0 * report.fraction)),
        report.rounds_for_fraction.map_or_else(
            || "not within 10^18 rounds (or nothing is certified)".to_string(),
            |n| count_text(n as f64),
        ),
    ));
    rows.push((
        "security parameter (sum)".into(),
        format!(
            "{} = {}",
            probability_text(report.security_total()),
            report
                .security_parts
                .iter()
                .map(|(name, e)| format!("{} ({name})", probability_text(*e)))
                .collect::<Vec<_>>()
                .join(" + ")
        ),
    ));
    if let Some(c) = report.completeness_error_log10 {
        rows.push((
            "honest runs fail the test with probability ≤".into(),
            if c > -3.0 {
                num_sig(10f64.powf(c), 4)
            } else {
                format!("10^{}", num_sig(c, 5))
            },
        ));
    }
    if let Some(f) = report.key_disclosure.and_then(|k| k.correction_failure) {
        rows.push((
            "error correction fails with probability ≤".into(),
            format!("{} (as stated for the code)", probability_text(f)),
        ));
    }
    if let Some(total) = report.completeness_total() {
        rows.push(("completeness error (sum)".into(), probability_text(total)));
    }
    let mut out = table(&rows);
    out += "\nrate per round against n:\n";
    for (n, r) in report.curve.iter().filter(|(n, _)| {
        let l = (*n as f64).log10();
        (l - l.round()).abs() < 1e-9
    }) {
        out += &format!(
            "  n = 10^{:<3} {}\n",
            (*n as f64).log10().round(),
            bits_text(*r)
        );
    }
    out += &format!("\nstatement: {}\n", run.statement);
    out += &assumptions_and_caution(&report.assumptions);
    out
}

/// A value that rounds to zero at the printed precision, shown as 0 (never as -0.000000).
fn clean_zero(v: f64) -> f64 {
    if v.abs() < 5e-11 {
        0.0
    } else {
        v
    }
}

/// The assumptions as a list, then the caution once: the list's own "not a security proof"
/// item says what the caution says, so the text leaves it to the caution (JSON keeps both).
fn assumptions_and_caution<S: AsRef<str>>(assumptions: &[S]) -> String {
    let mut out = "\nassumptions:\n".to_string();
    for a in assumptions
        .iter()
        .map(AsRef::as_ref)
        .filter(|a| !a.starts_with("not a security proof"))
    {
        out += &format!("  - {a}\n");
    }
    out + &format!("\n{CAUTION}\n")
}

/// CHSH key figures.
pub fn key(report: &KeyReport) -> String {
    let (k, threshold) = (&report.rate, report.threshold_qber);
    let mut out = table(&[
        ("CHSH value".into(), num(k.score)),
        ("QBER".into(), num(k.qber)),
        (
            "QBER of the key (after preprocessing)".into(),
            num(k.key_qber),
        ),
        ("H(A|E) ≥".into(), bits_text(k.conditional_entropy)),
        (
            "key rate ≥".into(),
            format!("{} per round", bits_text(k.key_rate)),
        ),
        (
            "threshold QBER (depolarising, same preprocessing)".into(),
            threshold.map_or_else(
                || "none: no error rate gives a key with this preprocessing".into(),
                num,
            ),
        ),
        (
            "best noisy preprocessing".into(),
            format!(
                "flip probability {} → key rate {} per round",
                num_sig(report.best_flip.probability, 4),
                bits_text(report.best_flip.key_rate)
            ),
        ),
        ("bound".into(), k.bound.to_string()),
    ]);
    out += "\nassumptions: collective attacks, i.i.d. rounds, asymptotic limit, one-way error correction at the Shannon limit";
    if let Preprocessing::Noisy { probability } = report.preprocessing {
        out += &format!(", the key bit flipped with probability {probability} by private randomness that is never announced");
    }
    out += ".\n";
    out += &format!("{}\n", CAUTION);
    out
}

/// A p-value, always in one format: plain for p ≥ 0.001, else `m×10^e` with four significant
/// digits (from the logarithm, so it also covers p-values that underflow a double).
pub fn p_value_text(m: &Margin) -> String {
    if m.p_value >= 1e-3 {
        return num_sig(m.p_value, 4);
    }
    let e = m.p_value_log10.floor();
    let mantissa = 10f64.powf(m.p_value_log10 - e);
    format!("{}×10^{}", num_sig(mantissa, 4), e as i64)
}

/// What a relabelling moves, in the game's labels: `players alice→bob bob→alice; alice
/// questions 0→1 1→0; bob answers at question 1: 0→1 1→0` (identity parts left out).
fn relabelling_text(s: &Scenario, r: &Relabelling) -> String {
    let p = s.parties();
    let mut parts = Vec::new();
    if r.players.iter().enumerate().any(|(i, &j)| i != j) {
        let moved: Vec<String> = (0..p.len())
            .map(|i| format!("{}→{}", p[i].name, p[r.players[i]].name))
            .collect();
        parts.push(format!("players {}", moved.join(" ")));
    }
    for i in 0..p.len() {
        let image = &p[r.players[i]];
        if r.questions[i].iter().enumerate().any(|(x, &y)| x != y) || r.players[i] != i {
            let moved: Vec<String> = (0..p[i].questions())
                .map(|x| {
                    format!(
                        "{}→{}",
                        p[i].question_labels[x], image.question_labels[r.questions[i][x]]
                    )
                })
                .collect();
            parts.push(format!("{} questions {}", p[i].name, moved.join(" ")));
        }
        for x in 0..p[i].questions() {
            let t = &r.answers[i][x];
            if t.iter().enumerate().any(|(a, &b)| a != b) {
                let moved: Vec<String> = (0..t.len())
                    .map(|a| format!("{}→{}", p[i].answer_labels[a], image.answer_labels[t[a]]))
                    .collect();
                parts.push(format!(
                    "{} answers at question {}: {}",
                    p[i].name,
                    p[i].question_labels[x],
                    moved.join(" ")
                ));
            }
        }
    }
    if parts.is_empty() {
        "identity".into()
    } else {
        parts.join("; ")
    }
}
