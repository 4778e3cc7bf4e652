//! Bound tables to paste into papers: CSV and LaTeX (`bounds --table`, `npa --table`). Upper
//! bounds are written rounded up and lower bounds rounded down (by exact rational rounding);
//! every text from a file (a game's name) is escaped.

use serde::Serialize;

use crate::numbers::{num, num_down, num_up};
use crate::pipeline::GameReport;

/// The table formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TableFormat {
    /// Comma-separated values (RFC 4180 quoting).
    Csv,
    /// A LaTeX `tabular`.
    Latex,
}

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Escapes LaTeX's special characters.
pub fn latex_escape(s: &str) -> String {
    let mut out = String::new();
    for c in s.chars() {
        match c {
            '\\' => out.push_str("\\textbackslash{}"),
            '&' | '%' | '$' | '#' | '_' | '{' | '}' => {
                out.push('\\');
                out.push(c);
            }
            '~' => out.push_str("\\textasciitilde{}"),
            '^' => out.push_str("\\textasciicircum{}"),
            _ => out.push(c),
        }
    }
    out
}

fn render(format: TableFormat, header: &[&str], rows: &[Vec<String>]) -> String {
    match format {
        TableFormat::Csv => {
            let mut out = header.join(",") + "\n";
            for r in rows {
                out += &r.iter().map(|v| csv_field(v)).collect::<Vec<_>>().join(",");
                out.push('\n');
            }
            out
        }
        TableFormat::Latex => {
            let mut out = format!(
                "\\begin{{tabular}}{{l{}}}\n\\hline\n{} \\\\\n\\hline\n",
                "r".repeat(header.len() - 1),
                header
                    .iter()
                    .map(|h| latex_escape(h))
                    .collect::<Vec<_>>()
                    .join(" & ")
            );
            for r in rows {
                out += &r
                    .iter()
                    .map(|v| latex_escape(v))
                    .collect::<Vec<_>>()
                    .join(" & ");
                out += " \\\\\n";
            }
            out + "\\hline\n\\end{tabular}\n"
        }
    }
}

/// `bounds`: one row, the game and each bound obtained (empty when not obtained).
pub fn bounds(r: &GameReport, format: TableFormat) -> String {
    let row = vec![
        r.game.name.clone(),
        r.classical.as_ref().map_or(String::new(), |c| num(c.value)),
        r.seesaw
            .as_ref()
            .map_or(String::new(), |s| num_down(s.quantum_lower)),
        r.npa
            .as_ref()
            .map_or(String::new(), |n| num_up(n.verified_upper)),
        r.npa.as_ref().map_or(String::new(), |n| n.level.name()),
        r.no_signalling
            .as_ref()
            .map_or(String::new(), |n| num_up(n.value)),
    ];
    render(
        format,
        &[
            "game",
            "classical",
            "quantum lower (see-saw)",
            "quantum upper (NPA, verified)",
            "NPA level",
            "no-signalling",
        ],
        &[row],
    )
}

/// `npa`: one row per level, the verified bound rounded up.
pub fn npa_levels(r: &GameReport, format: TableFormat) -> String {
    let rows: Vec<Vec<String>> = r
        .npa_levels
        .iter()
        .chain(r.npa.as_ref())
        .map(|b| {
            vec![
                b.level.name(),
                b.matrix_size.to_string(),
                b.moments.to_string(),
                num_up(b.verified_upper),
            ]
        })
        .collect();
    render(
        format,
        &["level", "matrix side", "moments", "verified upper bound"],
        &rows,
    )
}
