//! The review report: one self-contained document (HTML, or Markdown with the plots embedded)
//! that puts every bound, the finite-statistics margins, certified randomness and key figures
//! for an observed protocol run side by side, with the assumptions behind each figure.
//!
//! Protocol file schema:
//!
//! ```yaml
//! name: beacon-run-7            # optional
//! game: ../games/chsh.yaml      # relative to this file
//! rounds: 200000
//! wins: 170000                  # a game; for a Bell expression: score_sum and score_range
//! alpha: 1e-6                   # error probability of the confidence bounds (default 1e-6)
//! target_p_value: 1e-9          # for `rounds needed` (default 1e-9)
//! randomness: {player: alice, question: 0, level: 2}   # optional
//! key: {qber: 0.02}             # optional; CHSH-type games only
//! ```

use std::fmt::Write;
use std::path::Path;

use serde::Deserialize;
use serde_json::{json, Value};

use super::finite::{margin, observation, Margin, ObservedRun};
use super::key::{chsh_threshold_qber, key_rate, ChshEntropyBound, KeyRate};
use super::randomness::{guessing_probability, Randomness, Target};
use super::CAUTION;
use crate::bounds::classical::classical_value;
use crate::bounds::nosignal::no_signalling_value;
use crate::bounds::quantum::npa::{default_level, npa_bound, Level, NpaBound, NpaOptions};
use crate::bounds::quantum::seesaw::{seesaw, SeesawOptions, SeesawResult};
use crate::error::{Error, Result};
use crate::formats::game::{families, CompileOptions, Game};
use crate::render::charts::{line_chart, Series};
use crate::render::report::num;

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct ProtocolFile {
    #[serde(default)]
    name: Option<String>,
    game: String,
    rounds: u64,
    #[serde(default)]
    wins: Option<u64>,
    #[serde(default)]
    score_sum: Option<f64>,
    #[serde(default)]
    score_range: Option<[f64; 2]>,
    #[serde(default)]
    alpha: Option<f64>,
    #[serde(default)]
    target_p_value: Option<f64>,
    #[serde(default)]
    randomness: Option<RandomnessSpec>,
    #[serde(default)]
    key: Option<KeySpec>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RandomnessSpec {
    player: String,
    question: i64,
    #[serde(default)]
    level: Option<String>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct KeySpec {
    qber: f64,
}

/// Everything the report shows.
pub struct Review {
    pub name: String,
    pub game: Game,
    pub classical: f64,
    pub no_signalling: f64,
    pub npa: NpaBound,
    pub seesaw: SeesawResult,
    pub margin: Margin,
    /// Randomness at the lower confidence score, and a sweep for the plot.
    pub randomness: Option<(String, Randomness, Vec<Randomness>)>,
    /// CHSH correlator value at the lower confidence bound and the key figures there.
    pub key: Option<(f64, KeyRate, f64)>,
    /// Tool version and the UTC date the report was made.
    pub generated: String,
    /// The command that made the report (set by the caller; empty when unknown).
    pub command_line: String,
}

/// Today's UTC date as YYYY-MM-DD (civil-from-days, Hinnant's algorithm), without a date crate.
fn utc_date() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    let z = secs.div_euclid(86_400) + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    format!("{year:04}-{month:02}-{day:02}")
}

/// The CHSH correlator value S for a score of this game, if the game is CHSH in one of its two
/// standard forms (as a game, p = 1/2 + S/8; as the correlator expression, S itself).
fn chsh_correlator(game: &Game, score: f64) -> Option<f64> {
    let as_game = Game::from_spec(&families::chsh(), "chsh").ok()?;
    let as_expression = Game::from_spec(&families::chsh_expression(), "chsh").ok()?;
    let same = |a: &Game| {
        a.scenario.objective().len() == game.scenario.objective().len()
            && a.scenario
                .objective()
                .iter()
                .zip(game.scenario.objective())
                .all(|(x, y)| (x - y).abs() < 1e-12)
            && (a.scenario.offset - game.scenario.offset).abs() < 1e-12
    };
    if same(&as_game) {
        Some(8.0 * score - 4.0)
    } else if same(&as_expression) {
        Some(score)
    } else {
        None
    }
}

pub fn review(path: &str) -> Result<Review> {
    let text = crate::formats::files::read_text(path)?;
    let p: ProtocolFile =
        serde_yaml::from_str(&text).map_err(|e| crate::formats::located::yaml_error(e, path))?;
    let base = Path::new(path).parent().unwrap_or(Path::new("."));
    let game_path = base.join(&p.game);
    let game = Game::from_file(&game_path.to_string_lossy(), CompileOptions::default())?;
    let s = &game.scenario;
    let bad = |m: String| Error::Input {
        location: crate::error::Location {
            file: path.to_string(),
            ..Default::default()
        },
        message: m,
    };
    let obs = observation(
        s,
        &ObservedRun {
            rounds: p.rounds,
            wins: p.wins,
            score_sum: p.score_sum,
            score_range: p.score_range.map(|[lo, hi]| (lo, hi)),
        },
    )
    .map_err(|e| bad(e.to_string()))?;
    let classical = classical_value(s, &Default::default(), None)?.value;
    let no_signalling = no_signalling_value(s, &Default::default())?.value;
    let npa = npa_bound(s, &NpaOptions::at(default_level(s)?))?;
    let seesaw = seesaw(s, &SeesawOptions::default(), None)?;
    let alpha = p.alpha.unwrap_or(1e-6);
    let target = p.target_p_value.unwrap_or(1e-9);
    let m = margin(&obs, classical, alpha, target, Some(seesaw.quantum_lower))?;
    let certified_score = m.lower_confidence_exact.unwrap_or(m.lower_confidence);

    let randomness = match &p.randomness {
        None => None,
        Some(r) => {
            let player = s
                .parties
                .iter()
                .position(|q| q.name == r.player)
                .ok_or_else(|| bad(format!("randomness: there is no player `{}`", r.player)))?;
            let question = s.parties[player]
                .question_labels
                .iter()
                .position(|&l| l == r.question)
                .ok_or_else(|| {
                    bad(format!(
                        "randomness: {} has no question {}",
                        r.player, r.question
                    ))
                })?;
            let level = Level::parse(r.level.as_deref().unwrap_or("2"))?;
            let target = Target {
                parts: vec![(player, question)],
            };
            let at = guessing_probability(s, &target, certified_score.max(classical), &level)?;
            // The curve from the classical value to just below the quantum maximum.
            let top = seesaw.quantum_lower;
            let sweep = (0..=10)
                .map(|k| classical + (top - classical) * (k as f64 / 10.0) * 0.999)
                .filter_map(|score| guessing_probability(s, &target, score, &level).ok())
                .collect();
            Some((format!("{}, question {}", r.player, r.question), at, sweep))
        }
    };
    let key = match (&p.key, chsh_correlator(&game, certified_score)) {
        (Some(k), Some(sv)) => Some((
            sv,
            key_rate(&ChshEntropyBound, sv, k.qber).map_err(|e| bad(format!("key: {e}")))?,
            chsh_threshold_qber(),
        )),
        (Some(_), None) => {
            return Err(bad(
                "key figures are available for the CHSH game or the CHSH expression only".into(),
            ))
        }
        _ => None,
    };
    Ok(Review {
        name: p.name.unwrap_or_else(|| path.to_string()),
        game,
        classical,
        no_signalling,
        npa,
        seesaw,
        margin: m,
        randomness,
        key,
        generated: format!(
            "bellgap {} on {} (UTC)",
            env!("CARGO_PKG_VERSION"),
            utc_date()
        ),
        command_line: String::new(),
    })
}

impl Review {
    /// The headline: whether the run certifies a score above every classical strategy.
    pub fn verdict(&self) -> String {
        let m = &self.margin;
        let confidence = format!("{}", 1.0 - m.alpha);
        if m.margin > 0.0 {
            format!(
                "Nonlocal at confidence {confidence}: the lower confidence bound {} exceeds the classical value {} by {} (i.i.d. rounds); classical devices, even adaptive ones, score this much with probability at most {}.",
                num(m.lower_confidence),
                num(m.classical),
                num(m.margin),
                crate::render::report::p_value_text(m)
            )
        } else {
            format!(
                "Not certified at confidence {confidence}: the lower confidence bound {} does not exceed the classical value {} (margin {}); classical devices score this much with probability up to {}.",
                num(m.lower_confidence),
                num(m.classical),
                num(m.margin),
                crate::render::report::p_value_text(m)
            )
        }
    }

    fn provenance(&self) -> String {
        if self.command_line.is_empty() {
            format!("Made by {}.", self.generated)
        } else {
            format!(
                "Made by {} with the command: {}",
                self.generated, self.command_line
            )
        }
    }

    fn tables(&self) -> Vec<(String, Vec<(String, String)>)> {
        let m = &self.margin;
        let mut out = vec![(
            "Bounds".to_string(),
            vec![
                ("classical value".into(), num(self.classical)),
                (
                    "quantum lower bound (see-saw)".into(),
                    format!(
                        "{} (dims {:?}, seed {})",
                        num(self.seesaw.quantum_lower),
                        self.seesaw.dims,
                        self.seesaw.seed
                    ),
                ),
                (
                    "quantum upper bound (NPA, verified)".into(),
                    format!(
                        "{} (level {}, {})",
                        num(self.npa.verified_upper),
                        self.npa.level,
                        self.npa.status
                    ),
                ),
                ("no-signalling value".into(), num(self.no_signalling)),
                (
                    "quantum − classical".into(),
                    format!(
                        "between {} and {}",
                        num((self.seesaw.quantum_lower - self.classical).max(0.0)),
                        num(
                            (self.npa.verified_upper.min(self.no_signalling) - self.classical)
                                .max(0.0)
                        )
                    ),
                ),
            ],
        )];
        let mut stats = vec![
            ("rounds".into(), m.rounds.to_string()),
            ("observed mean score".into(), num(m.observed_mean)),
            (
                format!("lower confidence bound (Hoeffding, α = {:e})", m.alpha),
                num(m.lower_confidence),
            ),
        ];
        if let Some(e) = m.lower_confidence_exact {
            stats.push((
                format!(
                    "lower confidence bound (Clopper–Pearson, α = {:e})",
                    m.alpha
                ),
                num(e),
            ));
        }
        stats.push(("margin over the classical value".into(), num(m.margin)));
        stats.push((
            format!("p-value of \"classical devices\" ({})", m.p_value_bound),
            crate::render::report::p_value_text(m),
        ));
        stats.push((
            format!(
                "rounds needed for p ≤ {:e} at the see-saw score",
                m.target_p_value
            ),
            m.rounds_needed
                .map(|n| n.to_string())
                .unwrap_or_else(|| "never (no advantage)".into()),
        ));
        out.push(("Finite statistics".into(), stats));
        if let Some((who, r, _)) = &self.randomness {
            out.push((
                "Certified randomness".into(),
                vec![
                    ("guessed answer".into(), who.clone()),
                    (
                        "at score (lower confidence bound)".into(),
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
                    ("guessing probability ≤".into(), num(r.guessing_probability)),
                    (
                        "min-entropy per round ≥".into(),
                        crate::render::report::bits_text(r.min_entropy),
                    ),
                    ("NPA level".into(), r.level.name()),
                ],
            ));
        }
        if let Some((sv, k, threshold)) = &self.key {
            out.push((
                "Key figures (CHSH-based DIQKD)".into(),
                vec![
                    ("CHSH value at the lower confidence bound".into(), num(*sv)),
                    (
                        "H(A|E) ≥".into(),
                        format!(
                            "{} ({})",
                            crate::render::report::bits_text(k.conditional_entropy),
                            k.bound
                        ),
                    ),
                    ("QBER".into(), num(k.qber)),
                    (
                        "asymptotic key rate ≥".into(),
                        format!("{} per round", crate::render::report::bits_text(k.key_rate)),
                    ),
                    (
                        "threshold QBER (depolarising noise)".into(),
                        num(*threshold),
                    ),
                ],
            ));
        }
        out
    }

    fn assumptions(&self) -> Vec<String> {
        let mut a: Vec<String> = self
            .margin
            .assumptions
            .iter()
            .map(|s| s.to_string())
            .collect();
        a.push("The quantum upper bound holds for every quantum strategy of any dimension (verified from the SDP's dual solution, accounting for floating-point error); the see-saw value is that of an explicit strategy and can be reproduced from its seed.".into());
        if self.randomness.is_some() {
            a.push("Certified randomness is evaluated at the lower confidence bound of the score and assumes i.i.d. rounds and an adversary limited to quantum side information; it is an asymptotic per-round figure, not a finite-size extraction rate.".into());
        }
        if self.key.is_some() {
            a.push("Key figures assume collective attacks, i.i.d. rounds, the asymptotic limit and one-way error correction at the Shannon limit.".into());
        }
        a.push(CAUTION.into());
        a
    }

    fn plot(&self) -> Option<String> {
        let (who, _, sweep) = self.randomness.as_ref()?;
        if sweep.len() < 2 {
            return None;
        }
        Some(line_chart(
            &format!("Certified min-entropy of {who}"),
            "score",
            "min-entropy per round (bits)",
            &[Series {
                name: "min-entropy".into(),
                points: sweep.iter().map(|r| (r.score, r.min_entropy)).collect(),
            }],
        ))
    }

    pub fn to_html(&self) -> String {
        let mut h = String::new();
        let _ = write!(h, "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>Review: {0}</title><style>body{{font-family:sans-serif;max-width:60em;margin:2em auto}}table{{border-collapse:collapse}}td{{border:1px solid #ccc;padding:.3em .6em}}</style></head><body>\n<h1>Review: {0}</h1>\n<p><strong>{3}</strong></p>\n<p>Game: {1} ({2})</p>\n<p>{4}</p>\n", esc(&self.name), esc(&self.game.name), esc(&self.game.source), esc(&self.verdict()), esc(&self.provenance()));
        for (title, rows) in self.tables() {
            let _ = write!(h, "<h2>{}</h2>\n<table>\n", esc(&title));
            for (k, v) in rows {
                let _ = writeln!(h, "<tr><td>{}</td><td>{}</td></tr>", esc(&k), esc(&v));
            }
            h.push_str("</table>\n");
        }
        if let Some(svg) = self.plot() {
            h.push_str("<h2>Min-entropy against score</h2>\n");
            h.push_str(&svg);
        }
        h.push_str("<h2>Assumptions and cautions</h2>\n<ul>\n");
        for a in self.assumptions() {
            let _ = writeln!(h, "<li>{}</li>", esc(&a));
        }
        h.push_str("</ul>\n</body></html>\n");
        h
    }

    pub fn to_markdown(&self) -> String {
        let mut md = format!(
            "# Review: {}\n\n**{}**\n\nGame: {} ({})\n\n{}\n",
            md_escape(&self.name),
            md_escape(&self.verdict()),
            md_escape(&self.game.name),
            md_escape(&self.game.source),
            md_escape(&self.provenance())
        );
        for (title, rows) in self.tables() {
            let _ = write!(md, "\n## {}\n\n| | |\n|---|---|\n", md_escape(&title));
            for (k, v) in rows {
                let _ = writeln!(md, "| {} | {} |", md_escape(&k), md_escape(&v));
            }
        }
        if let Some(svg) = self.plot() {
            let _ = write!(
                md,
                "\n## Min-entropy against score\n\n![min-entropy](data:image/svg+xml;base64,{})\n",
                base64(svg.as_bytes())
            );
        }
        md.push_str("\n## Assumptions and cautions\n\n");
        for a in self.assumptions() {
            let _ = writeln!(md, "- {}", md_escape(&a));
        }
        md
    }

    pub fn to_json(&self) -> Value {
        json!({
            "command": "review",
            "name": self.name,
            "verdict": self.verdict(),
            "generated": self.generated,
            "game": self.game.name,
            "classical": self.classical,
            "quantum_lower": self.seesaw.quantum_lower,
            "quantum_upper": self.npa.quantum_upper,
            "verified_upper": self.npa.verified_upper,
            "no_signalling": self.no_signalling,
            "margin": self.margin,
            "randomness": self.randomness.as_ref().map(|(who, r, sweep)| json!({"target": who, "at_lower_confidence": r, "sweep": sweep})),
            "key": self.key.as_ref().map(|(s, k, t)| json!({"chsh_value": s, "figures": k, "threshold_qber": t})),
            "assumptions": self.assumptions(),
        })
    }
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

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

fn base64(bytes: &[u8]) -> String {
    const T: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk[0],
            *chunk.get(1).unwrap_or(&0),
            *chunk.get(2).unwrap_or(&0),
        ];
        let n = (b[0] as u32) << 16 | (b[1] as u32) << 8 | b[2] as u32;
        out.push(T[(n >> 18) as usize & 63] as char);
        out.push(T[(n >> 12) as usize & 63] as char);
        out.push(if chunk.len() > 1 {
            T[(n >> 6) as usize & 63] as char
        } else {
            '='
        });
        out.push(if chunk.len() > 2 {
            T[n as usize & 63] as char
        } else {
            '='
        });
    }
    out
}

#[cfg(test)]
mod tests {
    #[test]
    fn base64_matches_the_standard_examples() {
        // RFC 4648 test vectors.
        assert_eq!(super::base64(b"foobar"), "Zm9vYmFy");
        assert_eq!(super::base64(b"fooba"), "Zm9vYmE=");
        assert_eq!(super::base64(b"foob"), "Zm9vYg==");
    }
}
