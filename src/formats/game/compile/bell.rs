//! Bell tables: coefficients of events, correlators, or a Collins–Gisin or correlator matrix,
//! added up into the score table with an offset.

use serde_yaml::Value as Yaml;

use crate::error::Result;
use crate::formats::fields::{label_index, real};
use crate::formats::formula::Value;
use crate::formats::located::{yaml_brief, Context};
use crate::model::scenario::{digits, Party};

/// Fills the table from Bell coefficients. Marginal terms (not every player involved) are spread
/// evenly over the other players' questions: every no-signalling behaviour gives the same
/// marginal whichever of those questions is asked, so the value is unchanged.
pub(super) fn build_bell(
    bell: &Yaml,
    ctx: &Context,
    parties: &[Party],
    constants: &[(String, Value)],
) -> Result<(Vec<f64>, f64)> {
    let Yaml::Mapping(map) = bell else {
        return Err(ctx.error("bell", "expected a mapping with `terms`, `collins_gisin` or `correlators` (and optionally `constant`)"));
    };
    let n = parties.len();
    let qr: Vec<usize> = parties.iter().map(Party::questions).collect();
    let ar: Vec<usize> = parties.iter().map(Party::answers).collect();
    let (nq, na) = (qr.iter().product::<usize>(), ar.iter().product::<usize>());
    let mut table = BellTable {
        parties,
        qr,
        ar,
        scores: vec![0.0; nq * na],
        offset: 0.0,
    };
    let mut forms = 0;
    for (k, v) in map {
        let key = k.as_str().unwrap_or("");
        let path = format!("bell.{key}");
        match key {
            "constant" => table.offset += real(v, ctx, &path, constants)?,
            "terms" => {
                forms += 1;
                let Some(terms) = v.as_sequence() else {
                    return Err(ctx.error(&path, "expected a list of terms"));
                };
                for (t, term) in terms.iter().enumerate() {
                    table.add_term(term, ctx, &format!("{path}[{t}]"), constants)?;
                }
            }
            "collins_gisin" | "correlators" => {
                forms += 1;
                if n != 2 {
                    return Err(ctx.error(&path, format!("the `{key}` table is for two players; with {n} players use `terms`")));
                }
                let rows = v
                    .as_sequence()
                    .ok_or_else(|| ctx.error(&path, "expected a matrix (a list of rows)"))?;
                let matrix = rows
                    .iter()
                    .enumerate()
                    .map(|(r, row)| {
                        let rf = format!("{path}[{r}]");
                        row.as_sequence()
                            .ok_or_else(|| ctx.error(&rf, "expected a row (a list of numbers)"))?
                            .iter()
                            .enumerate()
                            .map(|(c, x)| real(x, ctx, &format!("{rf}[{c}]"), constants))
                            .collect::<Result<Vec<f64>>>()
                    })
                    .collect::<Result<Vec<_>>>()?;
                if key == "collins_gisin" {
                    table.add_collins_gisin(&matrix, ctx, &path)?;
                } else {
                    table.add_correlator_matrix(&matrix, ctx, &path)?;
                }
            }
            _ => {
                return Err(ctx.error(&path, format!("unknown field `{key}` (expected `terms`, `collins_gisin`, `correlators`, `constant`)")))
            }
        }
    }
    if forms == 0 {
        return Err(ctx.error(
            "bell",
            "no coefficients: give `terms`, `collins_gisin` or `correlators`",
        ));
    }
    Ok((table.scores, table.offset))
}

struct BellTable<'a> {
    parties: &'a [Party],
    qr: Vec<usize>,
    ar: Vec<usize>,
    scores: Vec<f64>,
    offset: f64,
}

/// One player's part of a term: which question, and which answer (for probabilities) or none
/// (for correlators, which sum over both answers with signs).
#[derive(Clone, Copy)]
struct Factor {
    player: usize,
    question: usize,
    answer: Option<usize>,
}

impl BellTable<'_> {
    /// Adds `coefficient` times the probability (or correlator) of the event described by
    /// `factors`, spreading over the questions of players not mentioned.
    fn add(&mut self, factors: &[Factor], coefficient: f64) {
        let n = self.parties.len();
        let na: usize = self.ar.iter().product();
        let nq: usize = self.qr.iter().product();
        let mut involved = vec![None; n];
        for f in factors {
            involved[f.player] = Some(*f);
        }
        let spread: usize = (0..n)
            .filter(|&i| involved[i].is_none())
            .map(|i| self.qr[i])
            .product();
        let c = coefficient / spread as f64;
        let mut qd = vec![0; n];
        let mut ad = vec![0; n];
        for q in 0..nq {
            digits(q, &self.qr, &mut qd);
            if factors.iter().any(|f| qd[f.player] != f.question) {
                continue;
            }
            for a in 0..na {
                digits(a, &self.ar, &mut ad);
                let mut sign = 1.0;
                let mut matches = true;
                for f in factors {
                    match f.answer {
                        Some(ans) => matches &= ad[f.player] == ans,
                        None => {
                            if ad[f.player] == 1 {
                                sign = -sign;
                            }
                        }
                    }
                }
                if matches {
                    self.scores[q * na + a] += c * sign;
                }
            }
        }
    }

    fn player_index(&self, name: &str, ctx: &Context, field: &str) -> Result<usize> {
        self.parties
            .iter()
            .position(|p| p.name == name)
            .ok_or_else(|| ctx.error(field, format!("there is no player called `{name}`")))
    }

    fn question_index(
        &self,
        player: usize,
        label: i64,
        ctx: &Context,
        field: &str,
    ) -> Result<usize> {
        label_index(&self.parties[player].question_labels, label).ok_or_else(|| {
            ctx.error(
                field,
                format!("{} has no question {label}", self.parties[player].name),
            )
        })
    }

    fn require_two_answers(&self, player: usize, ctx: &Context, field: &str) -> Result<()> {
        if self.ar[player] != 2 {
            return Err(ctx.error(
                field,
                format!(
                    "correlators need two answers (+1 for the first, -1 for the second); {} has {}",
                    self.parties[player].name, self.ar[player]
                ),
            ));
        }
        Ok(())
    }

    fn add_term(
        &mut self,
        term: &Yaml,
        ctx: &Context,
        path: &str,
        constants: &[(String, Value)],
    ) -> Result<()> {
        let Yaml::Mapping(map) = term else {
            return Err(ctx.error(path, "expected a term {coefficient: c, event: {player: \"answer|question\", ...}} or {coefficient: c, correlator: {player: question, ...}}"));
        };
        let mut coefficient = None;
        let mut factors = Vec::new();
        let mut kinds = 0;
        for (k, v) in map {
            let key = k.as_str().unwrap_or("");
            let f = format!("{path}.{key}");
            match key {
                "coefficient" => coefficient = Some(real(v, ctx, &f, constants)?),
                "event" | "correlator" => {
                    kinds += 1;
                    let Some(m) = v.as_mapping() else {
                        return Err(ctx.error(&f, "expected a mapping from player name to its part of the term"));
                    };
                    if m.is_empty() {
                        return Err(ctx.error(&f, "the term names no player"));
                    }
                    for (pk, pv) in m {
                        let name = pk.as_str().unwrap_or("");
                        let pf = format!("{f}.{name}");
                        let player = self.player_index(name, ctx, &pf)?;
                        if key == "correlator" {
                            self.require_two_answers(player, ctx, &pf)?;
                            let label = pv.as_i64().ok_or_else(|| ctx.error(&pf, "expected the question label"))?;
                            let question = self.question_index(player, label, ctx, &pf)?;
                            factors.push(Factor { player, question, answer: None });
                        } else {
                            let text = match pv {
                                Yaml::String(s) => s.clone(),
                                other => return Err(ctx.error(&pf, format!("expected \"answer|question\", e.g. \"0|1\", found {}", yaml_brief(other)))),
                            };
                            let parsed = text.split_once('|').and_then(|(a, q)| {
                                Some((a.trim().parse::<i64>().ok()?, q.trim().parse::<i64>().ok()?))
                            });
                            let Some((alabel, qlabel)) = parsed else {
                                return Err(ctx.error(&pf, format!("expected \"answer|question\" with integer labels, e.g. \"0|1\", found \"{text}\"")));
                            };
                            let question = self.question_index(player, qlabel, ctx, &pf)?;
                            let answer = label_index(&self.parties[player].answer_labels, alabel)
                                .ok_or_else(|| ctx.error(&pf, format!("{} has no answer {alabel}", self.parties[player].name)))?;
                            factors.push(Factor { player, question, answer: Some(answer) });
                        }
                    }
                }
                _ => return Err(ctx.error(&f, format!("unknown field `{key}` (expected `coefficient` and one of `event`, `correlator`)"))),
            }
        }
        if kinds != 1 {
            return Err(ctx.error(path, "a term has exactly one of `event` and `correlator`"));
        }
        let Some(c) = coefficient else {
            return Err(ctx.error(path, "the term has no `coefficient`"));
        };
        self.add(&factors, c);
        Ok(())
    }

    /// Collins–Gisin table: row 0 / column 0 hold the constant and the single-player terms; the
    /// other rows (columns) run over Alice's (Bob's) question x and answer a < last, in that
    /// order, and hold coefficients of p(a b | x y).
    fn add_collins_gisin(&mut self, m: &[Vec<f64>], ctx: &Context, path: &str) -> Result<()> {
        let (qa, qb) = (self.qr[0], self.qr[1]);
        let (da, db) = (self.ar[0] - 1, self.ar[1] - 1);
        let (rows, cols) = (1 + qa * da, 1 + qb * db);
        self.check_shape(m, rows, cols, ctx, path, "1 + questions × (answers − 1)")?;
        let row_event = |r: usize| (((r - 1) / da), ((r - 1) % da));
        let col_event = |c: usize| (((c - 1) / db), ((c - 1) % db));
        self.offset += m[0][0];
        for (r, row) in m.iter().enumerate() {
            for (c, &coef) in row.iter().enumerate() {
                if coef == 0.0 || (r == 0 && c == 0) {
                    continue;
                }
                let mut factors = Vec::new();
                if r > 0 {
                    let (x, a) = row_event(r);
                    factors.push(Factor {
                        player: 0,
                        question: x,
                        answer: Some(a),
                    });
                }
                if c > 0 {
                    let (y, b) = col_event(c);
                    factors.push(Factor {
                        player: 1,
                        question: y,
                        answer: Some(b),
                    });
                }
                self.add(&factors, coef);
            }
        }
        Ok(())
    }

    /// Correlator table: [0][0] constant, [0][y] ⟨B_y⟩, [x][0] ⟨A_x⟩, [x][y] ⟨A_x B_y⟩.
    fn add_correlator_matrix(&mut self, m: &[Vec<f64>], ctx: &Context, path: &str) -> Result<()> {
        self.require_two_answers(0, ctx, path)?;
        self.require_two_answers(1, ctx, path)?;
        self.check_shape(
            m,
            1 + self.qr[0],
            1 + self.qr[1],
            ctx,
            path,
            "1 + questions",
        )?;
        self.offset += m[0][0];
        for (r, row) in m.iter().enumerate() {
            for (c, &coef) in row.iter().enumerate() {
                if coef == 0.0 || (r == 0 && c == 0) {
                    continue;
                }
                let mut factors = Vec::new();
                if r > 0 {
                    factors.push(Factor {
                        player: 0,
                        question: r - 1,
                        answer: None,
                    });
                }
                if c > 0 {
                    factors.push(Factor {
                        player: 1,
                        question: c - 1,
                        answer: None,
                    });
                }
                self.add(&factors, coef);
            }
        }
        Ok(())
    }

    fn check_shape(
        &self,
        m: &[Vec<f64>],
        rows: usize,
        cols: usize,
        ctx: &Context,
        path: &str,
        rule: &str,
    ) -> Result<()> {
        if m.len() != rows {
            return Err(ctx.error(
                path,
                format!(
                    "expected {rows} rows ({rule} of {}), found {}",
                    self.parties[0].name,
                    m.len()
                ),
            ));
        }
        for (r, row) in m.iter().enumerate() {
            if row.len() != cols {
                return Err(ctx.error(
                    &format!("{path}[{r}]"),
                    format!(
                        "expected {cols} columns ({rule} of {}), found {}",
                        self.parties[1].name,
                        row.len()
                    ),
                ));
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::super::testing::{located, spec};
    use super::*;

    /// The table and offset of `bell` for players with the given question and answer counts.
    fn bell(players: &[(usize, usize)], bell: &str) -> Result<(Vec<f64>, f64)> {
        let mut text = String::from("players:\n");
        for (i, (q, a)) in players.iter().enumerate() {
            text += &format!("  - {{name: p{i}, questions: {q}, answers: {a}}}\n");
        }
        text += &format!("bell: {bell}\n");
        let (s, ctx) = spec(&text);
        let parties = super::super::parties::parse_parties(&s, &ctx).unwrap();
        build_bell(s.bell.as_ref().unwrap(), &ctx, &parties, &[])
    }

    #[test]
    fn correlator_terms_and_matrices_agree() {
        let terms = bell(
            &[(2, 2), (2, 2)],
            "{constant: 0.5, terms: [{coefficient: 1, correlator: {p0: 0, p1: 0}}, {coefficient: -1, correlator: {p0: 1, p1: 1}}]}",
        )
        .unwrap();
        let matrix = bell(
            &[(2, 2), (2, 2)],
            "{correlators: [[0.5, 0, 0], [0, 1, 0], [0, 0, -1]]}",
        )
        .unwrap();
        assert_eq!(terms, matrix);
        let (t, offset) = terms;
        assert_eq!(offset, 0.5);
        // Joint question (0, 0): +1 for equal answers, −1 otherwise; (1, 1) the opposite.
        assert_eq!(&t[0..4], &[1.0, -1.0, -1.0, 1.0]);
        assert_eq!(&t[12..16], &[-1.0, 1.0, 1.0, -1.0]);
        assert_eq!(&t[4..12], &[0.0; 8]);
    }

    #[test]
    fn collins_gisin_entries_are_first_answer_events() {
        // One question each: c + pB·p(b=0) + pA·p(a=0) + pAB·p(a=0, b=0).
        let (t, offset) = bell(&[(1, 2), (1, 2)], "{collins_gisin: [[0.25, 2], [3, 5]]}").unwrap();
        assert_eq!(offset, 0.25);
        assert_eq!(t, vec![3.0 + 2.0 + 5.0, 3.0, 2.0, 0.0]);
    }

    #[test]
    fn marginal_events_spread_over_the_other_players_questions() {
        let (t, _) = bell(
            &[(1, 2), (2, 2)],
            "{terms: [{coefficient: 1, event: {p0: '0|0'}}]}",
        )
        .unwrap();
        // p(a=0 | x=0) counted once in total: half at each of bob's two questions.
        assert_eq!(t, vec![0.5, 0.5, 0.0, 0.0, 0.5, 0.5, 0.0, 0.0]);
    }

    #[test]
    fn shapes_and_answer_counts_are_checked_with_their_field() {
        let e = bell(
            &[(2, 3), (2, 2)],
            "{terms: [{coefficient: 1, correlator: {p0: 0, p1: 0}}]}",
        )
        .unwrap_err();
        assert!(located(&e).0.unwrap().starts_with("bell.terms[0]"), "{e}");
        let e = bell(&[(2, 2), (2, 2)], "{correlators: [[0, 0], [0, 1]]}").unwrap_err();
        assert!(
            located(&e).0.unwrap().starts_with("bell.correlators"),
            "{e}"
        );
        assert!(bell(
            &[(2, 2), (2, 2)],
            "{terms: [{coefficient: 1, event: {p9: '0|0'}}]}"
        )
        .is_err());
    }
}
