//! The review document: one self-contained report (HTML, or Markdown with the plot embedded)
//! of a [`Review`], every bound, margin, randomness and key figure side by side with the
//! assumptions behind each. Everything that comes from a file is escaped.

use std::fmt::Write;

use super::charts::finite_size_rate;
use super::text::p_value_text;
use crate::numbers::{bits_text, bits_up_text, count_text, num, num_down, num_sig, num_up};
use crate::pipeline::{Extracting, Review};

/// The headline: whether the run certifies a score above every classical strategy (at the one
/// confidence method of the report), and what it certifies in bits: the finite-size output of
/// this run when the file asks for it (or that there is none at this length, with about how many
/// rounds would give some), else the asymptotic figures per round. It agrees with every section
/// below it because it reads the same fields.
pub fn verdict(r: &Review) -> String {
    let m = &r.margin;
    let confidence = format!("{}", 1.0 - m.alpha);
    let mut parts = Vec::new();
    if m.margin > 0.0 {
        parts.push(format!(
            "Nonlocal at confidence {confidence}: the {} lower confidence bound {} exceeds the classical value {} by {} (i.i.d. rounds); classical devices, even adaptive ones, score this much with probability at most {}.",
            m.confidence_method,
            num_down(m.certified_score),
            num(m.classical),
            num_down(m.margin),
            p_value_text(m)
        ));
    } else {
        parts.push(format!(
            "Not certified at confidence {confidence}: the {} lower confidence bound {} does not exceed the classical value {} (margin {}); classical devices score this much with probability up to {}.",
            m.confidence_method,
            num_down(m.certified_score),
            num(m.classical),
            num_down(m.margin),
            p_value_text(m)
        ));
    }
    if let Some(f) = &r.finite_size {
        let rep = &f.report;
        let what = match rep.extracting {
            Extracting::Randomness => "randomness",
            Extracting::Key => "key",
        };
        let n = rep.run.protocol.rounds;
        if !f.observed_passes {
            parts.push(format!(
                "Finite size: the observed mean score {} is below the test's threshold {}, so the protocol aborts and certifies no {what}.",
                num(m.observed_mean),
                num(rep.run.protocol.threshold)
            ));
        } else if rep.run.output_bits > 0.0 {
            parts.push(format!(
                "Finite size: {} bits of {what} certified from these {} rounds (entropy accumulation, constants from memory; total error {:e}).",
                count_text(rep.run.output_bits),
                count_text(n as f64),
                rep.security_total()
            ));
        } else {
            let needed = rep.curve.iter().find(|(_, rate)| *rate > 0.0).map_or(
                "not within 10^14 rounds".to_string(),
                |(k, _)| {
                    let e = (*k as f64).log10().floor();
                    format!(
                        "about {}×10^{} rounds are needed",
                        num_sig(*k as f64 / 10f64.powf(e), 2),
                        e
                    )
                },
            );
            parts.push(format!(
                "Finite size: no bits of {what} are certified at this length ({} rounds): {needed} at the same test rate and threshold.",
                count_text(n as f64)
            ));
        }
    } else {
        if let Some(rr) = &r.randomness {
            parts.push(format!(
                "Asymptotic randomness: min-entropy ≥ {} per round of {} (i.i.d. rounds; no finite-size statement requested).",
                bits_text(rr.at_lower_confidence.min_entropy),
                rr.target
            ));
        }
        let rate = r
            .key
            .as_ref()
            .map(|k| k.figures.key_rate)
            .or(r.entropy_key.as_ref().map(|k| k.rate.key_rate));
        if let Some(rate) = rate {
            parts.push(format!(
                "Asymptotic key rate ≥ {} per round (collective attacks; no finite-size statement requested).",
                bits_text(rate)
            ));
        }
    }
    parts.join(" ")
}

/// A bit count that is never printed negative: a lower bound below zero certifies nothing, and
/// 0 is said with that reason.
fn nonnegative_bits(bits: f64) -> String {
    if bits > 0.0 {
        format!("{} bits", num_sig(bits, 10))
    } else {
        "0 bits (nothing certified at this length: the finite-size corrections exceed the first-order term)".into()
    }
}

fn provenance(r: &Review) -> String {
    if r.command_line.is_empty() {
        format!("Made by {}.", r.generated)
    } else {
        format!(
            "Made by {} with the command: {}",
            r.generated, r.command_line
        )
    }
}

fn tables(r: &Review) -> Vec<(String, Vec<(String, String)>)> {
    let m = &r.margin;
    let b = &r.bounds;
    let mut bounds = vec![("classical value".to_string(), num(r.classical))];
    if let Some(sw) = &b.seesaw {
        bounds.push((
            "quantum lower bound (see-saw)".into(),
            format!(
                "{} (dims {:?}, seed {})",
                num_down(sw.quantum_lower),
                sw.dims,
                sw.seed
            ),
        ));
    }
    if let Some(n) = &b.npa {
        bounds.push((
            "quantum upper bound (NPA, verified)".into(),
            format!(
                "{} (level {}, {})",
                num_up(n.verified_upper),
                n.level,
                n.status
            ),
        ));
    }
    if let Some(ns) = &b.no_signalling {
        bounds.push(("no-signalling value".into(), num(ns.value)));
    }
    // The bounds were reconciled (classical ≤ lower ≤ upper ≤ no-signalling), so both ends of
    // the gap are honest as they stand.
    let lower = b.seesaw.as_ref().map_or(r.classical, |sw| sw.quantum_lower);
    let upper = match (&b.npa, &b.no_signalling) {
        (Some(n), Some(ns)) => Some(n.verified_upper.min(ns.value)),
        (Some(n), None) => Some(n.verified_upper),
        (None, Some(ns)) => Some(ns.value),
        (None, None) => None,
    };
    if let Some(upper) = upper {
        bounds.push((
            "quantum − classical".into(),
            format!(
                "between {} and {}",
                num_down(lower - r.classical),
                num_up(upper - r.classical)
            ),
        ));
    }
    for f in &b.not_obtained {
        bounds.push(("not obtained".into(), f.clone()));
    }
    for n in &b.notes {
        bounds.push(("note".into(), n.clone()));
    }
    let mut out = vec![("Bounds".to_string(), bounds)];
    let mut stats = vec![
        ("rounds".into(), m.rounds.to_string()),
        ("observed mean score".into(), num(m.observed_mean)),
        (
            "per-round estimator".into(),
            r.estimator.clone().unwrap_or_else(|| {
                "the score of each round (as the protocol file reports the run)".into()
            }),
        ),
        (
            "per-round score range".into(),
            format!("[{}, {}]", num(m.score_range[0]), num(m.score_range[1])),
        ),
        (
            format!(
                "lower confidence bound ({}, α = {:e})",
                m.confidence_method, m.alpha
            ),
            num_down(m.certified_score),
        ),
    ];
    stats.push((
        format!("margin over the classical value ({})", m.confidence_method),
        num_down(m.margin),
    ));
    stats.push((
        format!("p-value of \"classical devices\" ({})", m.p_value_bound),
        p_value_text(m),
    ));
    stats.push((
        format!(
            "rounds needed for p ≤ {:e} at the observed mean {}",
            m.target_p_value,
            num(m.expected_mean)
        ),
        m.rounds_needed
            .map(|n| n.to_string())
            .unwrap_or_else(|| "never (no advantage)".into()),
    ));
    if let Some((score, needed)) = r.rounds_needed_at_see_saw {
        stats.push((
            format!(
                "rounds needed for p ≤ {:e} at the see-saw score {} (devices as good as the best strategy found)",
                m.target_p_value,
                num(score)
            ),
            needed
                .map(|n| n.to_string())
                .unwrap_or_else(|| "never (no advantage)".into()),
        ));
    }
    out.push(("Finite statistics".into(), stats));
    if let Some(rr) = &r.randomness {
        let (who, r) = (&rr.target, &rr.at_lower_confidence);
        out.push((
            "Certified randomness".into(),
            vec![
                ("guessed answer".into(), who.clone()),
                (
                    format!("at score ({} lower confidence bound)", m.confidence_method),
                    if (r.score_used - r.score).abs() > 0.0 {
                        format!(
                            "{} (solved at {}, a weaker constraint)",
                            num(r.score),
                            num(r.score_used)
                        )
                    } else {
                        num(r.score)
                    },
                ),
                (
                    "guessing probability ≤".into(),
                    num_up(r.guessing_probability),
                ),
                ("min-entropy per round ≥".into(), bits_text(r.min_entropy)),
                ("NPA level".into(), r.level.name()),
            ],
        ));
    }
    if let Some(rk) = &r.key {
        let (sv, k, threshold) = (&rk.chsh_value, &rk.figures, &rk.threshold_qber);
        out.push((
            "Key figures (CHSH-based DIQKD)".into(),
            vec![
                (
                    format!(
                        "CHSH value at the {} lower confidence bound",
                        m.confidence_method
                    ),
                    num(*sv),
                ),
                (
                    "H(A|E) ≥".into(),
                    format!("{} ({})", bits_text(k.conditional_entropy), k.bound),
                ),
                ("QBER".into(), num(k.qber)),
                (
                    "QBER of the key (after preprocessing)".into(),
                    num(k.key_qber),
                ),
                (
                    "asymptotic key rate ≥".into(),
                    format!("{} per round", bits_text(k.key_rate)),
                ),
                (
                    "threshold QBER (depolarising noise)".into(),
                    threshold.map_or_else(
                        || "none: no error rate gives a key with this preprocessing".into(),
                        num,
                    ),
                ),
            ],
        ));
    }
    if let Some(k) = &r.entropy_key {
        let rate = &k.rate;
        out.push((
            "Key figures (entropy hierarchy)".into(),
            vec![
                ("key answers".into(), k.target.clone()),
                (
                    format!("at score ({} lower confidence bound)", m.confidence_method),
                    num(k.score),
                ),
                (
                    "H(A|X=x*, E) ≥".into(),
                    format!("{} ({})", bits_text(rate.conditional_entropy), k.method),
                ),
                (
                    "H(A|B) ≤".into(),
                    format!(
                        "{} ({})",
                        bits_up_text(rate.error_correction),
                        rate.error_correction_from
                    ),
                ),
                (
                    "asymptotic key rate ≥".into(),
                    format!("{} per round", bits_text(rate.key_rate)),
                ),
            ],
        ));
    }
    {
        let d = &r.devices;
        let mut rows = Vec::new();
        if let Some(b) = &d.state {
            rows.push((
                format!(
                    "fidelity of the extracted state ≥ (SWAP isometries, at the {} lower confidence bound {})",
                    m.confidence_method,
                    b.score.map_or_else(String::new, num)
                ),
                format!(
                    "{} (verified; target {} from the see-saw's best strategy; NPA level {})",
                    num_down(b.fidelity),
                    b.target.iter().map(|a| num_sig(*a, 6)).collect::<Vec<_>>().join(", "),
                    b.level.name()
                ),
            ));
            if let (Some(k), Some(sv)) = (b.chsh_analytic, b.chsh_value) {
                rows.push((
                    format!("Kaniewski's CHSH bound at S = {}", num(sv)),
                    format!(
                        "F ≥ {} with the maximally entangled state under the best local channels (PRL 117, 070402 (2016); formula quoted from memory)",
                        num_down(k)
                    ),
                ));
            }
        }
        for t in &d.thresholds {
            rows.push((
                format!("{} needed to beat the classical value", t.parameter.name()),
                t.bracket.map_or(
                    "none found: no implementation found beats the classical value".into(),
                    |(lo, hi)| {
                        format!(
                            "between {} and {} (best implementation found; `bellgap design` gives it)",
                            num_sig(lo, 4),
                            num_sig(hi, 4)
                        )
                    },
                ),
            ));
        }
        for n in &d.notes {
            rows.push(("note".into(), n.clone()));
        }
        out.push(("Devices: state and noise".into(), rows));
    }
    if let Some(f) = &r.finite_size {
        let (rep, run) = (&f.report, &f.report.run);
        let p = &run.protocol;
        out.push((
            "Finite size (entropy accumulation)".into(),
            vec![
                ("entropy of".into(), rep.target_name.clone()),
                ("rounds".into(), count_text(p.rounds as f64)),
                ("testing probability".into(), num(p.testing)),
                ("threshold score per test round".into(), num(p.threshold)),
                (
                    "observed mean reaches the threshold".into(),
                    if f.observed_passes {
                        "yes"
                    } else {
                        "no: the run would abort"
                    }
                    .into(),
                ),
                (
                    "ε_s, ε_EA, ε_ext".into(),
                    format!(
                        "{:e}, {:e}, {:e}",
                        run.security.smoothing, run.security.pass_floor, run.security.extraction
                    ),
                ),
                (
                    "smooth min-entropy ≥".into(),
                    nonnegative_bits(run.smooth_min_entropy),
                ),
                ("certified output".into(), nonnegative_bits(run.output_bits)),
                (
                    "rate per round".into(),
                    format!(
                        "{} (limit {})",
                        bits_text(run.rate_per_round),
                        bits_text(rep.asymptotic_output_rate)
                    ),
                ),
                (
                    format!("rounds for {}% of the limit", num(100.0 * rep.fraction)),
                    rep.rounds_for_fraction
                        .map_or("not within 10^18 rounds".into(), |n| count_text(n as f64)),
                ),
                ("statement".into(), run.statement.into()),
            ],
        ));
    }
    out
}

fn plot(r: &Review) -> Option<String> {
    let rr = r.randomness.as_ref()?;
    let (who, sweep) = (&rr.target, &rr.sweep);
    if sweep.len() < 2 {
        return None;
    }
    // The run's own score (its lower confidence bound, which every figure uses) is marked.
    Some(super::charts::min_entropy_curve(
        &format!("Certified min-entropy of {who}"),
        &sweep
            .iter()
            .map(|r| (r.score, r.min_entropy))
            .collect::<Vec<_>>(),
        Some((
            r.margin.certified_score,
            "this run (lower confidence score)",
        )),
    ))
}

/// The review as one self-contained HTML page (every text escaped).
pub fn html(r: &Review) -> String {
    let mut h = String::new();
    let _ = write!(h, "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>Review: {0}</title><style>body{{font-family:sans-serif;max-width:60em;margin:2em auto}}table{{border-collapse:collapse}}td{{border:1px solid #ccc;padding:.3em .6em}}</style></head><body>\n<h1>Review: {0}</h1>\n<p><strong>{3}</strong></p>\n<p>Game: {1} ({2})</p>\n<p>{4}</p>\n", esc(&r.name), esc(&r.bounds.game.name), esc(&r.bounds.game.source), superscripts(&esc(&verdict(r))), esc(&provenance(r)));
    for (title, rows) in tables(r) {
        let _ = write!(h, "<h2>{}</h2>\n<table>\n", esc(&title));
        for (k, v) in rows {
            let _ = writeln!(
                h,
                "<tr><td>{}</td><td>{}</td></tr>",
                esc(&k),
                superscripts(&esc(&v))
            );
        }
        h.push_str("</table>\n");
    }
    if let Some(svg) = plot(r) {
        h.push_str("<h2>Min-entropy against score</h2>\n");
        h.push_str(&svg);
    }
    if let Some(svg) = super::charts::review_noise(r) {
        h.push_str("<h2>Margin against noise</h2>\n");
        h.push_str(&svg);
    }
    if let Some(f) = &r.finite_size {
        h.push_str("<h2>Certified rate against rounds</h2>\n");
        h.push_str(&finite_size_rate(&f.report));
    }
    h.push_str("<h2>Assumptions and cautions</h2>\n<ul>\n");
    for a in r.assumptions() {
        let _ = writeln!(h, "<li>{}</li>", esc(&a));
    }
    h.push_str("</ul>\n</body></html>\n");
    h
}

/// The review as Markdown (every text escaped), and its plots as SVG files to write beside it:
/// `(file name, content)`, each named `{stem}-….svg` and linked by that relative name (common
/// Markdown renderers show linked images but not data URIs). Without a stem (the report goes to
/// stdout) no plot is written and the report says how to get them.
pub fn markdown(r: &Review, stem: Option<&str>) -> (String, Vec<(String, String)>) {
    let mut files: Vec<(String, String)> = Vec::new();
    let mut md = format!(
        "# Review: {}\n\n**{}**\n\nGame: {} ({})\n\n{}\n",
        md_escape(&r.name),
        md_escape(&verdict(r)),
        md_escape(&r.bounds.game.name),
        md_escape(&r.bounds.game.source),
        md_escape(&provenance(r))
    );
    for (title, rows) in tables(r) {
        let _ = write!(md, "\n## {}\n\n| | |\n|---|---|\n", md_escape(&title));
        for (k, v) in rows {
            let _ = writeln!(md, "| {} | {} |", md_escape(&k), md_escape(&v));
        }
    }
    let mut plots: Vec<(&str, &str, String)> = Vec::new();
    if let Some(svg) = plot(r) {
        plots.push(("Min-entropy against score", "min-entropy", svg));
    }
    if let Some(svg) = super::charts::review_noise(r) {
        plots.push(("Margin against noise", "noise", svg));
    }
    if let Some(f) = &r.finite_size {
        plots.push((
            "Certified rate against rounds",
            "rate",
            finite_size_rate(&f.report),
        ));
    }
    for (title, suffix, svg) in plots {
        let _ = write!(md, "\n## {title}\n\n");
        match stem {
            Some(stem) => {
                let name = format!("{stem}-{suffix}.svg");
                let _ = writeln!(md, "![{}]({})", md_escape(title), md_escape(&name));
                files.push((name, svg));
            }
            None => {
                md.push_str("(The plot is written beside the report when it goes to a file: `-o FILE.md`.)\n");
            }
        }
    }
    md.push_str("\n## Assumptions and cautions\n\n");
    for a in r.assumptions() {
        let _ = writeln!(md, "- {}", md_escape(&a));
    }
    (md, files)
}

/// Text for a Markdown document, inert whatever it contains: HTML is escaped (Markdown
/// renderers pass raw HTML through, so `<script>` would run), Markdown's own punctuation is
/// backslash-escaped (no links, images, emphasis or table breaks), and line breaks and other
/// control characters become spaces (no new headings or rows).
pub fn md_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\\' | '`' | '*' | '_' | '{' | '}' | '[' | ']' | '(' | ')' | '#' | '+' | '!' | '|'
            | '~' => {
                out.push('\\');
                out.push(c);
            }
            c if c.is_control() => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// Powers of ten written `10^e` (e an optionally signed integer) as `10<sup>e</sup>`, in text
/// already escaped: only digits and a sign go inside the tag.
fn superscripts(escaped: &str) -> String {
    let mut out = String::with_capacity(escaped.len());
    let mut rest = escaped;
    while let Some(at) = rest.find("10^") {
        out.push_str(&rest[..at + 2]);
        let after = &rest[at + 3..];
        let sign = usize::from(after.starts_with(['-', '+', '−']));
        let sign_len = after
            .chars()
            .next()
            .filter(|_| sign == 1)
            .map_or(0, char::len_utf8);
        let digits = after[sign_len..]
            .chars()
            .take_while(char::is_ascii_digit)
            .count();
        if digits == 0 {
            out.push('^');
            rest = after;
            continue;
        }
        let end = sign_len + digits;
        out.push_str(&format!("<sup>{}</sup>", &after[..end]));
        rest = &after[end..];
    }
    out.push_str(rest);
    out
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

#[cfg(test)]
mod tests {
    #[test]
    fn powers_of_ten_become_superscripts_in_html() {
        assert_eq!(
            super::superscripts("p 1.234×10^-1635 (bound)"),
            "p 1.234×10<sup>-1635</sup> (bound)"
        );
        assert_eq!(
            super::superscripts("not within 10^14 rounds"),
            "not within 10<sup>14</sup> rounds"
        );
        // Anything else after the caret is left as it was.
        assert_eq!(super::superscripts("10^x and 10^"), "10^x and 10^");
        assert_eq!(super::superscripts("&lt;b&gt;"), "&lt;b&gt;");
    }
}
