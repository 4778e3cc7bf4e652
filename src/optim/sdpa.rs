//! The SDPA sparse format, an open standard read by most SDP solvers (including
//! extended-precision ones): export of any [`SdpProblem`], and import of a dual solution written
//! by an external solver, turned into our verified bound.
//!
//! SDPA's primal: minimise `Σ c_i x_i` subject to `X = Σ x_i F_i − F_0 ⪰ 0` (block diagonal);
//! its dual: maximise `⟨F_0, Y⟩` subject to `⟨F_i, Y⟩ = c_i`, `Y ⪰ 0`. Ours (maximise `b·y + c0`,
//! `Γ(y) = G_0 + Σ y_i G_i ⪰ 0`, `E y = e`, `G y ≤ g`) maps to it with `x = y`, `c = −b`,
//! `F_i = G_i` and `F_0 = −G_0` on each matrix block, and one diagonal block holding
//! `g − G y ≥ 0` and `E y − e ≥ 0`, `e − E y ≥ 0` (an equality as two inequalities). The
//! constant `c0` and the moments' bounds are not part of the format; the constant is written in
//! a comment, and the bound is re-verified on our own problem, so nothing from the file is
//! trusted. A dual `Y` maps back to our dual vector: `Z = Y` on each matrix block, `ν_j` the
//! diagonal entry of `g_j`'s row, `μ_j` that of `−(E y − e)`'s row minus that of `(E y − e)`'s.

use std::fmt::Write;

use serde::Serialize;

use super::exact::ExactBound;
use super::sdp::{upper_index, SdpProblem};
use crate::error::{Error, Result};

/// A problem in SDPA's terms.
#[derive(Debug, Clone, PartialEq)]
pub struct SdpaProblem {
    /// Number of variables `m`.
    pub variables: usize,
    /// Block sizes; a negative size is a diagonal block.
    pub blocks: Vec<i64>,
    /// `c_1 … c_m`.
    pub c: Vec<f64>,
    /// Entries (matrix 0..=m, block 1-based, row ≤ column 1-based, value), in file order.
    pub entries: Vec<(usize, usize, usize, usize, f64)>,
}

/// Writes a number so that it reads back to the same binary64 value.
fn number(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else {
        format!("{v:?}")
    }
}

impl SdpaProblem {
    /// Our problem in SDPA's terms (see the module notes).
    pub fn from_problem(p: &SdpProblem) -> SdpaProblem {
        let m = p.variables;
        let mut entries = Vec::new();
        let mut blocks: Vec<i64> = Vec::new();
        for (k, block) in p.blocks.iter().enumerate() {
            blocks.push(block.size as i64);
            for col in 0..block.size {
                for row in 0..=col {
                    let e = &block.upper[upper_index(row, col)];
                    if e.constant != 0.0 {
                        entries.push((0, k + 1, row + 1, col + 1, -e.constant));
                    }
                    for &(i, c) in &e.terms {
                        if c != 0.0 {
                            entries.push((i + 1, k + 1, row + 1, col + 1, c));
                        }
                    }
                }
            }
        }
        let rows = p.inequalities.len() + 2 * p.equalities.len();
        if rows > 0 {
            let block = p.blocks.len() + 1;
            blocks.push(-(rows as i64));
            let mut row = 0;
            let mut push = |terms: &[(usize, f64)], rhs: f64, sign: f64, row: &mut usize| {
                *row += 1;
                // sign·(rhs − terms·y) ≥ 0: F_i = −sign·term, F_0 = −sign·rhs.
                if rhs != 0.0 {
                    entries.push((0, block, *row, *row, -sign * rhs));
                }
                for &(i, c) in terms {
                    if c != 0.0 {
                        entries.push((i + 1, block, *row, *row, -sign * c));
                    }
                }
            };
            for (terms, rhs) in &p.inequalities {
                push(terms, *rhs, 1.0, &mut row);
            }
            for (terms, rhs) in &p.equalities {
                push(terms, *rhs, 1.0, &mut row);
                push(terms, *rhs, -1.0, &mut row);
            }
        }
        SdpaProblem {
            variables: m,
            blocks,
            c: p.objective.iter().map(|b| -b).collect(),
            entries,
        }
    }

    /// The file (`.dat-s`), with `comment` lines first.
    pub fn to_text(&self, comment: &[String]) -> String {
        let mut out = String::new();
        for c in comment {
            let _ = writeln!(out, "\"{}", c.replace('\n', " "));
        }
        let _ = writeln!(out, "{} = mDIM", self.variables);
        let _ = writeln!(out, "{} = nBLOCK", self.blocks.len());
        let sizes: Vec<String> = self.blocks.iter().map(|b| b.to_string()).collect();
        let _ = writeln!(out, "{} = bLOCKsTRUCT", sizes.join(" "));
        let c: Vec<String> = self.c.iter().map(|v| number(*v)).collect();
        let _ = writeln!(out, "{}", c.join(" "));
        for (mat, block, row, col, v) in &self.entries {
            let _ = writeln!(out, "{mat} {block} {row} {col} {}", number(*v));
        }
        out
    }

    /// Reads a `.dat-s` file (comments `"` or `*`; separators spaces, commas, braces).
    pub fn parse(text: &str) -> Result<SdpaProblem> {
        let bad = |m: String| Error::InvalidArgument(format!("SDPA file: {m}"));
        let mut lines = text
            .lines()
            .filter(|l| !l.starts_with('"') && !l.starts_with('*') && !l.trim().is_empty());
        let mut numbers = |what: &str| -> Result<Vec<String>> {
            let line = lines.next().ok_or_else(|| bad(format!("missing {what}")))?;
            let cut = line.split('=').next().unwrap_or(line);
            Ok(cut
                .split(|c: char| {
                    c.is_whitespace() || c == ',' || c == '{' || c == '}' || c == '(' || c == ')'
                })
                .filter(|t| !t.is_empty())
                .map(str::to_string)
                .collect())
        };
        let first = |v: Vec<String>, what: &str| -> Result<i64> {
            v.first()
                .and_then(|t| t.parse().ok())
                .ok_or_else(|| bad(format!("expected {what}")))
        };
        let m =
            usize::try_from(first(numbers("mDIM")?, "mDIM")?).map_err(|_| bad("mDIM".into()))?;
        let nb = usize::try_from(first(numbers("nBLOCK")?, "nBLOCK")?)
            .map_err(|_| bad("nBLOCK".into()))?;
        let blocks: Vec<i64> = numbers("bLOCKsTRUCT")?
            .iter()
            .take(nb)
            .map(|t| t.parse().map_err(|_| bad(format!("block size `{t}`"))))
            .collect::<Result<_>>()?;
        if blocks.len() != nb || blocks.contains(&0) {
            return Err(bad("the block structure does not match nBLOCK".into()));
        }
        let c: Vec<f64> = numbers("c")?
            .iter()
            .map(|t| t.parse().map_err(|_| bad(format!("number `{t}`"))))
            .collect::<Result<_>>()?;
        if c.len() != m {
            return Err(bad(format!(
                "{} objective numbers for {m} variables",
                c.len()
            )));
        }
        let mut entries = Vec::new();
        for line in lines {
            let t: Vec<&str> = line.split_whitespace().collect();
            if t.len() != 5 {
                return Err(bad(format!("an entry line needs 5 numbers: `{line}`")));
            }
            let int = |s: &str| {
                s.parse::<usize>()
                    .map_err(|_| bad(format!("`{s}` in `{line}`")))
            };
            let (mat, block, row, col) = (int(t[0])?, int(t[1])?, int(t[2])?, int(t[3])?);
            let v: f64 = t[4]
                .parse()
                .map_err(|_| bad(format!("`{}` in `{line}`", t[4])))?;
            let size = blocks
                .get(block.wrapping_sub(1))
                .map(|b| b.unsigned_abs() as usize);
            if mat > m
                || size.is_none_or(|n| row == 0 || col == 0 || row > n || col > n)
                || !v.is_finite()
            {
                return Err(bad(format!("entry out of range: `{line}`")));
            }
            entries.push((mat, block, row, col, v));
        }
        Ok(SdpaProblem {
            variables: m,
            blocks,
            c,
            entries,
        })
    }
}

/// One matrix of an SDPA output: its name and its blocks, each as dense rows.
pub type SolutionMatrix = (String, Vec<Vec<Vec<f64>>>);

/// The matrices `xMat` and `yMat` of an SDPA output file.
pub fn parse_solution(text: &str) -> Result<Vec<SolutionMatrix>> {
    let mut out = Vec::new();
    for name in ["xMat", "yMat"] {
        let Some(start) = text.find(name) else {
            continue;
        };
        let rest = &text[start + name.len()..];
        let Some(open) = rest.find('{') else { continue };
        // The matching closing brace of the matrix list.
        let (mut depth, mut end) = (0usize, None);
        for (k, ch) in rest[open..].char_indices() {
            match ch {
                '{' => depth += 1,
                '}' => {
                    depth = depth.saturating_sub(1);
                    if depth == 0 {
                        end = Some(open + k);
                        break;
                    }
                }
                _ => {}
            }
        }
        let Some(end) = end else { continue };
        let body = &rest[open + 1..end];
        // Blocks are `{ {row}, {row} }` (dense) or `{ a, b, c }` (a diagonal block).
        let mut blocks = Vec::new();
        let mut depth = 0usize;
        let mut current = String::new();
        for ch in body.chars() {
            match ch {
                '{' => {
                    depth += 1;
                    current.push(ch);
                }
                '}' => {
                    depth = depth.saturating_sub(1);
                    current.push(ch);
                    if depth == 0 {
                        blocks.push(std::mem::take(&mut current));
                    }
                }
                _ if depth > 0 => current.push(ch),
                _ => {}
            }
        }
        let mut parsed = Vec::new();
        for b in blocks {
            let inner = b.trim().trim_start_matches('{').trim_end_matches('}');
            let rows: Vec<Vec<f64>> = if inner.contains('{') {
                inner
                    .split('}')
                    .map(|r| r.replace(['{', ','], " "))
                    .filter(|r| !r.trim().is_empty())
                    .map(|r| {
                        r.split_whitespace()
                            .map(|t| t.parse().unwrap_or(f64::NAN))
                            .collect()
                    })
                    .collect()
            } else {
                let diag: Vec<f64> = inner
                    .replace(',', " ")
                    .split_whitespace()
                    .map(|t| t.parse().unwrap_or(f64::NAN))
                    .collect();
                let n = diag.len();
                (0..n)
                    .map(|r| (0..n).map(|c| if r == c { diag[r] } else { 0.0 }).collect())
                    .collect()
            };
            parsed.push(rows);
        }
        out.push((name.to_string(), parsed));
    }
    if out.is_empty() {
        return Err(Error::InvalidArgument(
            "SDPA output: no `xMat` or `yMat` matrices found".into(),
        ));
    }
    Ok(out)
}

/// Our dual vector `z` (in [`SdpProblem::assemble`]'s layout) written as an SDPA output's `yMat`
/// (blocks as exported by [`SdpaProblem::from_problem`]): the inverse of [`dual_vector`], for
/// handing a solution to other tools.
pub fn solution_text(p: &SdpProblem, z: &[f64]) -> String {
    let (ne, ni) = (p.equalities.len(), p.inequalities.len());
    let mut out = String::from("yMat =\n{\n");
    let mut blocks = Vec::new();
    let mut offset = ne + ni;
    for block in &p.blocks {
        let n = block.size;
        let entry = |row: usize, col: usize| {
            let (r, c) = (row.min(col), row.max(col));
            let v = z.get(offset + upper_index(r, c)).copied().unwrap_or(0.0);
            if r == c {
                v
            } else {
                v * std::f64::consts::FRAC_1_SQRT_2
            }
        };
        let rows: Vec<String> = (0..n)
            .map(|row| {
                let v: Vec<String> = (0..n).map(|col| format!("{:e}", entry(row, col))).collect();
                format!("{{{}}}", v.join(", "))
            })
            .collect();
        blocks.push(format!("{{ {} }}", rows.join(", ")));
        offset += n * (n + 1) / 2;
    }
    if ne + ni > 0 {
        let mut diag = Vec::new();
        for k in 0..ni {
            diag.push(z.get(ne + k).copied().unwrap_or(0.0).max(0.0));
        }
        for j in 0..ne {
            let mu = z.get(j).copied().unwrap_or(0.0);
            diag.push(mu.max(0.0));
            diag.push((-mu).max(0.0));
        }
        let d: Vec<String> = diag.iter().map(|v| format!("{v:e}")).collect();
        blocks.push(format!("{{{}}}", d.join(", ")));
    }
    out += &blocks.join(",\n");
    out += "\n}\n";
    out
}

/// An external solver's solution checked on one of our problems: the matrix of the SDPA output
/// that proves the smallest verified bound (each of `xMat` and `yMat` is tried as the dual;
/// any of them gives a valid bound), and the bound proven exactly when asked.
#[derive(Debug, Clone, Serialize)]
pub struct ImportedBound {
    /// The verified bound (rounding charged, floating point).
    pub verified_upper: f64,
    /// The matrix that proved it.
    pub matrix: String,
    /// The bound proven exactly, when asked.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exact: Option<ExactBound>,
}

/// Verifies the SDPA output `text` as a dual solution of `problem` (see [`ImportedBound`]).
/// Nothing in the file is trusted: the bound is recomputed on our own problem.
pub fn import_dual(problem: &SdpProblem, text: &str, exact: bool) -> Result<ImportedBound> {
    // Said of the file (the caller names it), not of the options.
    let bad = |message: String| Error::Input {
        location: crate::error::Location::default(),
        message,
    };
    let assembled = problem.assemble();
    let mut best: Option<(f64, Vec<f64>, String)> = None;
    let solution = parse_solution(text).map_err(|e| match e {
        Error::InvalidArgument(m) => bad(m),
        other => other,
    })?;
    for (name, matrices) in solution {
        let Some(z) = dual_vector(problem, &matrices) else {
            continue;
        };
        if z.iter().any(|v| !v.is_finite()) {
            continue;
        }
        if let Ok(bound) = assembled.certified_bound(&z) {
            if bound.is_finite() && best.as_ref().is_none_or(|b| bound < b.0) {
                best = Some((bound, z, name));
            }
        }
    }
    let sizes: Vec<String> = problem
        .blocks
        .iter()
        .map(|b| format!("{0}×{0}", b.size))
        .collect();
    let (verified_upper, z, matrix) = best.ok_or_else(|| {
        bad(format!(
            "the SDPA solution has no matrix of this problem's shape (blocks {}{})",
            sizes.join(", "),
            if problem.equalities.is_empty() && problem.inequalities.is_empty() {
                ""
            } else {
                " and one diagonal block"
            }
        ))
    })?;
    let exact = if exact {
        Some(super::exact::exact_bound(problem, &z)?)
    } else {
        None
    };
    Ok(ImportedBound {
        verified_upper,
        matrix,
        exact,
    })
}

/// Our dual vector (in [`SdpProblem::assemble`]'s layout) from an SDPA dual matrix `Y` (blocks
/// as exported by [`SdpaProblem::from_problem`]); None when the shapes differ.
pub fn dual_vector(p: &SdpProblem, y: &[Vec<Vec<f64>>]) -> Option<Vec<f64>> {
    let rows = p.inequalities.len() + 2 * p.equalities.len();
    let expected = p.blocks.len() + usize::from(rows > 0);
    if y.len() != expected {
        return None;
    }
    let diag = |k: usize| -> Option<f64> { y.last()?.get(k)?.get(k).copied() };
    let mut z = Vec::new();
    let ni = p.inequalities.len();
    for j in 0..p.equalities.len() {
        // μ_j = Y(e − E y row, written first) − Y(E y − e row).
        z.push(diag(ni + 2 * j)? - diag(ni + 2 * j + 1)?);
    }
    for j in 0..ni {
        z.push(diag(j)?);
    }
    for (block, ym) in p.blocks.iter().zip(y) {
        let n = block.size;
        if ym.len() != n || ym.iter().any(|r| r.len() != n) {
            return None;
        }
        for (col, column_row) in ym.iter().enumerate() {
            for (row, upper_row) in ym.iter().enumerate().take(col + 1) {
                let v = 0.5 * (upper_row[col] + column_row[row]);
                z.push(if row == col {
                    v
                } else {
                    v * std::f64::consts::SQRT_2
                });
            }
        }
    }
    Some(z)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::optim::sdp::{AffineEntry, MatrixBlock};

    #[test]
    fn a_dual_written_as_a_solution_reads_back_to_itself() {
        let entry = |constant: f64, terms: Vec<(usize, f64)>| AffineEntry { constant, terms };
        let p = SdpProblem {
            variables: 2,
            objective: vec![1.0, 0.5],
            equalities: vec![(vec![(0, 1.0)], 0.25)],
            inequalities: vec![(vec![(1, 1.0)], 0.75)],
            blocks: vec![MatrixBlock {
                size: 2,
                upper: vec![
                    entry(1.0, vec![]),
                    entry(0.0, vec![(0, 1.0), (1, 1.0)]),
                    entry(1.0, vec![]),
                ],
                trace_bound: 2.0,
            }],
            variable_bound: 1.0,
            ..Default::default()
        };
        // μ (negative: written on the second row of its pair), ν, then Z's svec.
        let z = [-0.375, 0.125, 0.5, -0.3 * std::f64::consts::SQRT_2, 0.625];
        let text = solution_text(&p, &z);
        let parsed = parse_solution(&text).unwrap();
        assert_eq!(parsed.len(), 1);
        let back = dual_vector(&p, &parsed[0].1).unwrap();
        for (a, b) in back.iter().zip(&z) {
            assert!((a - b).abs() < 1e-15, "{back:?} against {z:?}");
        }
        // The exported problem has the matrix block and a diagonal one of three rows.
        assert_eq!(SdpaProblem::from_problem(&p).blocks, vec![2, -3]);
    }
}
