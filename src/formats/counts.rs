//! The counts file (YAML or JSON): a lab's raw counts, one row per joint question with the rounds
//! it was asked and the count of each joint answer. A player whose detector can fail to click
//! names the answer its no-clicks were binned into (`no_click: LABEL`); its outcomes in the rows
//! then have one more entry, the no-click, listed last, which is added to that answer.
//!
//! ```yaml
//! name: harbour-ridge run 8            # optional
//! players:
//!   - {name: alice, questions: 2, answers: 2, no_click: 0}
//!   - {name: bob, questions: 2, answers: 2, no_click: 0}
//! counts:
//!   - questions: [0, 0]
//!     rounds: 250000                   # optional: must equal the sum of the counts
//!     probability: 0.25                # optional, all rows or none: the lab's question design
//!     answers: [96000, 20000, 9000, 21000, 95000, 9000, 0, 0, 0]   # 3 × 3 outcomes with no-clicks
//! ```
//!
//! Every count must be a whole number from 0 to 2⁵³ (exact in double precision), every joint
//! question must have exactly one row with at least one round, and the total must stay within
//! 2⁵³ rounds; each violation is an input error naming the field.

use serde::Deserialize;
use serde_yaml::Value as Yaml;

use super::fields::{parse_labels_for, row_question};
use super::files::read_text;
use super::located::{yaml_error, Context, SourceMap};
use crate::error::Result;
use crate::model::counts::Counts;
use crate::model::scenario::{digits, index_of, Party};

/// Largest count or total (2⁵³: every integer up to it is exact in double precision).
pub const MOST_ROUNDS: u64 = 1 << 53;

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct CountsFile {
    #[serde(default)]
    name: Option<String>,
    #[serde(default)]
    description: Option<String>,
    players: Vec<CountsPlayer>,
    counts: Vec<CountsRow>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct CountsPlayer {
    name: String,
    questions: Yaml,
    answers: Yaml,
    #[serde(default)]
    no_click: Option<i64>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct CountsRow {
    questions: Vec<i64>,
    #[serde(default)]
    rounds: Option<Yaml>,
    #[serde(default)]
    probability: Option<Yaml>,
    answers: Vec<Yaml>,
}

/// A whole number from 0 to [`MOST_ROUNDS`], or a located error.
fn whole(v: &Yaml, ctx: &Context, field: &str) -> Result<u64> {
    match v.as_u64() {
        Some(n) if n <= MOST_ROUNDS => Ok(n),
        Some(n) => Err(ctx.error(
            field,
            format!("the count {n} exceeds 2^53, the largest this tool counts exactly"),
        )),
        None => Err(ctx.error(
            field,
            "expected a whole number of rounds (0 or more, no sign, fraction or expression)",
        )),
    }
}

impl Counts {
    /// Reads and validates a counts file.
    pub fn from_file(path: &str) -> Result<Self> {
        let text = read_text(path)?;
        Self::from_yaml(&text, path)
    }

    /// Parses the counts schema (module notes).
    pub fn from_yaml(text: &str, file: &str) -> Result<Self> {
        let raw: CountsFile = serde_yaml::from_str(text).map_err(|e| yaml_error(e, file))?;
        let ctx = Context {
            file: file.to_string(),
            map: SourceMap::new(text),
        };
        let _ = &raw.description;
        if raw.players.len() < 2 {
            return Err(ctx.error("players", "counts need two or more players"));
        }
        if raw.players.len() > 16 {
            return Err(ctx.error("players", "at most 16 players"));
        }
        let mut parties: Vec<Party> = Vec::new();
        let mut no_click = Vec::new();
        for (i, p) in raw.players.iter().enumerate() {
            if parties.iter().any(|q| q.name == p.name) {
                return Err(ctx.error(
                    &format!("players[{i}].name"),
                    format!("two players are called `{}`", p.name),
                ));
            }
            let party = Party {
                name: p.name.clone(),
                question_labels: parse_labels_for(
                    &p.questions,
                    &ctx,
                    &format!("players[{i}].questions"),
                )?,
                answer_labels: parse_labels_for(
                    &p.answers,
                    &ctx,
                    &format!("players[{i}].answers"),
                )?,
            };
            no_click.push(match p.no_click {
                None => None,
                Some(label) => Some(
                    party
                        .answer_labels
                        .iter()
                        .position(|&l| l == label)
                        .ok_or_else(|| {
                            ctx.error(
                                &format!("players[{i}].no_click"),
                                format!("{} has no answer {label} to bin no-clicks into", p.name),
                            )
                        })?,
                ),
            });
            parties.push(party);
        }
        let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
        let ar: Vec<usize> = parties.iter().map(Party::answers).collect();
        // The rows' outcomes: each player's answers, plus the no-click where it has one.
        let outcomes: Vec<usize> = ar
            .iter()
            .zip(&no_click)
            .map(|(&a, n)| a + usize::from(n.is_some()))
            .collect();
        let nq = qr.iter().try_fold(1usize, |acc, &q| acc.checked_mul(q));
        let no = outcomes
            .iter()
            .try_fold(1usize, |acc, &a| acc.checked_mul(a));
        let (Some(nq), Some(no)) = (nq, no) else {
            return Err(ctx.error("players", "the count table would exceed 10^8 entries"));
        };
        if (nq as f64) * (no as f64) > 1e8 {
            return Err(ctx.error("players", "the count table would exceed 10^8 entries"));
        }
        let na: usize = ar.iter().product();
        let mut counts = vec![0u64; nq * na];
        let mut rounds = vec![0u64; nq];
        let mut design: Vec<Option<f64>> = vec![None; nq];
        let mut seen = vec![false; nq];
        let mut total: u64 = 0;
        let (mut d, mut od, mut ad) = (
            vec![0; parties.len()],
            vec![0; parties.len()],
            vec![0; parties.len()],
        );
        for (r, row) in raw.counts.iter().enumerate() {
            let rf = format!("counts[{r}]");
            let q = row_question(&row.questions, &parties, &ctx, &rf, &mut seen)?;
            if row.answers.len() != no {
                return Err(ctx.error(
                    &format!("{rf}.answers"),
                    format!(
                        "expected {no} counts (one per joint outcome{}), found {}",
                        if no_click.iter().any(Option::is_some) {
                            ", no-clicks last for each player that has them"
                        } else {
                            ""
                        },
                        row.answers.len()
                    ),
                ));
            }
            let mut sum: u64 = 0;
            for (o, v) in row.answers.iter().enumerate() {
                let field = format!("{rf}.answers[{o}]");
                let c = whole(v, &ctx, &field)?;
                sum = sum
                    .checked_add(c)
                    .filter(|s| *s <= MOST_ROUNDS)
                    .ok_or_else(|| ctx.error(&field, "the row's total exceeds 2^53 rounds"))?;
                // Bin each player's no-click into its named answer.
                digits(o, &outcomes, &mut od);
                for i in 0..parties.len() {
                    ad[i] = if od[i] == ar[i] {
                        no_click[i].unwrap_or(0)
                    } else {
                        od[i]
                    };
                }
                counts[q * na + index_of(&ad, &ar)] += c;
            }
            if let Some(v) = &row.rounds {
                let stated = whole(v, &ctx, &format!("{rf}.rounds"))?;
                if stated != sum {
                    return Err(ctx.error(
                        &format!("{rf}.rounds"),
                        format!("the row says {stated} rounds but its counts add up to {sum}"),
                    ));
                }
            }
            if sum == 0 {
                return Err(ctx.error(
                    &format!("{rf}.answers"),
                    "this joint question was never asked: every joint question needs at least one round",
                ));
            }
            rounds[q] = sum;
            total = total
                .checked_add(sum)
                .filter(|t| *t <= MOST_ROUNDS)
                .ok_or_else(|| ctx.error(&rf, "the run's total exceeds 2^53 rounds"))?;
            if let Some(v) = &row.probability {
                let field = format!("{rf}.probability");
                let x = super::fields::constant_number(v, &ctx, &field)?;
                if !(x > 0.0 && x <= 1.0) {
                    return Err(ctx.error(
                        &field,
                        format!("the probability of asking a question must lie in (0, 1], got {x}"),
                    ));
                }
                design[q] = Some(x);
            }
        }
        if let Some(missing) = seen.iter().position(|s| !s) {
            digits(missing, &qr, &mut d);
            let labels: Vec<String> = d
                .iter()
                .enumerate()
                .map(|(i, &k)| parties[i].question_labels[k].to_string())
                .collect();
            return Err(ctx.error(
                "counts",
                format!(
                    "no row for joint question [{}]; every joint question needs one",
                    labels.join(", ")
                ),
            ));
        }
        let design = if design.iter().all(Option::is_some) {
            let d: Vec<f64> = design.into_iter().flatten().collect();
            let sum: f64 = d.iter().sum();
            if (sum - 1.0).abs() > 1e-9 {
                return Err(ctx.error(
                    "counts",
                    format!("the rows' question probabilities sum to {sum}, not 1"),
                ));
            }
            Some(d)
        } else if design.iter().any(Option::is_some) {
            return Err(ctx.error(
                "counts",
                "question probabilities are given for some rows only: give them for all or none",
            ));
        } else {
            None
        };
        Ok(Counts {
            name: raw.name.unwrap_or_else(|| file.to_string()),
            parties,
            rounds,
            counts,
            design,
            no_click,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const PLAYERS: &str = "players:\n  - {name: alice, questions: 2, answers: 2, no_click: 1}\n  - {name: bob, questions: 2, answers: 2}\n";

    fn file(rows: &str) -> String {
        format!("{PLAYERS}counts:\n{rows}")
    }

    fn row(q: &str, answers: &str) -> String {
        format!("  - questions: {q}\n    answers: {answers}\n")
    }

    #[test]
    fn no_clicks_are_binned_and_bad_counts_are_located() {
        // Alice has three outcomes (0, 1, no-click) and Bob two: six per row.
        let good = [
            row("[0, 0]", "[10, 1, 2, 9, 3, 4]"),
            row("[0, 1]", "[10, 1, 2, 9, 3, 4]"),
            row("[1, 0]", "[10, 1, 2, 9, 3, 4]"),
            row("[1, 1]", "[10, 1, 2, 9, 3, 4]"),
        ]
        .concat();
        let c = Counts::from_yaml(&file(&good), "c.yaml").unwrap();
        // Alice's no-clicks (3, 4) are added to her answer 1: (0,0)=10 (0,1)=1 (1,0)=2+3 (1,1)=9+4.
        assert_eq!(&c.counts[..4], &[10, 1, 5, 13]);
        assert_eq!(c.rounds, vec![29; 4]);
        assert_eq!(c.no_click, vec![Some(1), None]);
        let bad = |rows: &str, field: &str| {
            let e = Counts::from_yaml(&file(rows), "c.yaml")
                .unwrap_err()
                .to_string();
            assert!(e.contains(field), "{e} (wanted {field})");
        };
        let rest = [
            row("[0, 1]", "[10, 1, 2, 9, 3, 4]"),
            row("[1, 0]", "[10, 1, 2, 9, 3, 4]"),
            row("[1, 1]", "[10, 1, 2, 9, 3, 4]"),
        ]
        .concat();
        for (first, field) in [
            ("[10, -1, 2, 9, 3, 4]", "counts[0].answers[1]"),
            ("[10, 1.5, 2, 9, 3, 4]", "counts[0].answers[1]"),
            ("[10, .nan, 2, 9, 3, 4]", "counts[0].answers[1]"),
            ("[10, \"3\", 2, 9, 3, 4]", "counts[0].answers[1]"),
            ("[10, 1, 2, 9, 3]", "counts[0].answers"),
            ("[10, 9007199254740993, 2, 9, 3, 4]", "counts[0].answers[1]"),
            ("[0, 0, 0, 0, 0, 0]", "counts[0].answers"),
        ] {
            bad(&(row("[0, 0]", first) + &rest), field);
        }
        bad(&rest, "no row for joint question [0, 0]");
        bad(
            &(row("[0, 0]", "[10, 1, 2, 9, 3, 4]") + &row("[0, 0]", "[1, 1, 1, 1, 1, 1]") + &rest),
            "listed twice",
        );
        bad(
            &("  - questions: [0, 0]\n    rounds: 30\n    answers: [10, 1, 2, 9, 3, 4]\n"
                .to_string()
                + &rest),
            "counts[0].rounds",
        );
        bad(
            &(row("[0, 2]", "[10, 1, 2, 9, 3, 4]") + &rest),
            "counts[0].questions[1]",
        );
        // Two rows that together pass 2^53.
        let huge = format!(
            "{}{}",
            row("[0, 0]", "[4503599627370496, 0, 0, 0, 0, 0]"),
            row("[0, 1]", "[4503599627370496, 1, 0, 0, 0, 0]")
        );
        bad(&huge, "2^53");
    }
}
