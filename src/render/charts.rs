//! Minimal SVG line charts (no dependency): min-entropy against score, bound against level,
//! value against visibility or efficiency. Text stays the default output; plots are written on
//! request or embedded in review reports.

use std::fmt::Write;

/// One line of a chart.
pub struct Series {
    /// Legend text.
    pub name: String,
    /// (x, y) points, in order.
    pub points: Vec<(f64, f64)>,
}

const COLOURS: [&str; 4] = ["#1f5fa8", "#c0392b", "#27864a", "#8e44ad"];

fn ticks(lo: f64, hi: f64) -> Vec<f64> {
    let span = (hi - lo).max(1e-12);
    let raw = span / 5.0;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| span / s <= 6.0)
        .unwrap_or(10.0 * mag);
    let mut t = (lo / step).ceil() * step;
    let mut out = Vec::new();
    while t <= hi + 1e-9 * span {
        out.push(t);
        t += step;
    }
    out
}

/// A chart of one or more series, 640×400 pixels.
pub fn line_chart(title: &str, x_label: &str, y_label: &str, series: &[Series]) -> String {
    chart(title, x_label, y_label, series, None)
}

/// A chart whose x axis is a list of categories (e.g. NPA levels): point k of each series is
/// drawn at category k (x = k + 1), and the axis is labelled with the category names only.
pub fn category_chart(
    title: &str,
    x_label: &str,
    categories: &[String],
    y_label: &str,
    series: &[Series],
) -> String {
    chart(title, x_label, y_label, series, Some(categories))
}

fn chart(
    title: &str,
    x_label: &str,
    y_label: &str,
    series: &[Series],
    categories: Option<&[String]>,
) -> String {
    let (w, h, left, right, top, bottom) = (640.0, 400.0, 70.0, 20.0, 40.0, 50.0);
    let all = series.iter().flat_map(|s| s.points.iter());
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for &(x, y) in all {
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    if !x0.is_finite() || !y0.is_finite() || !x1.is_finite() || !y1.is_finite() {
        (x0, x1, y0, y1) = (0.0, 1.0, 0.0, 1.0);
    }
    if let Some(c) = categories {
        (x0, x1) = (0.5, c.len() as f64 + 0.5);
    }
    if x1 - x0 < 1e-12 {
        x1 = x0 + 1.0;
    }
    if y1 - y0 < 1e-12 {
        y1 = y0 + 1.0;
    }
    let pad = 0.05 * (y1 - y0);
    let (y0, y1) = (y0 - pad, y1 + pad);
    let px = |x: f64| left + (x - x0) / (x1 - x0) * (w - left - right);
    let py = |y: f64| h - bottom - (y - y0) / (y1 - y0) * (h - top - bottom);
    let mut svg = String::new();
    let _ = write!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="sans-serif" font-size="12">"#
    );
    let _ = write!(svg, r#"<rect width="{w}" height="{h}" fill="white"/>"#);
    let _ = write!(
        svg,
        r#"<text x="{}" y="22" text-anchor="middle" font-size="15">{}</text>"#,
        w / 2.0,
        escape(title)
    );
    let x_ticks: Vec<(f64, String)> = match categories {
        Some(c) => c
            .iter()
            .enumerate()
            .map(|(k, name)| ((k + 1) as f64, escape(name)))
            .collect(),
        None => ticks(x0, x1).into_iter().map(|t| (t, short(t))).collect(),
    };
    for (t, label) in x_ticks {
        let _ = write!(
            svg,
            r##"<line x1="{0:.1}" y1="{1}" x2="{0:.1}" y2="{2}" stroke="#ddd"/><text x="{0:.1}" y="{3}" text-anchor="middle">{4}</text>"##,
            px(t),
            top,
            h - bottom,
            h - bottom + 16.0,
            label
        );
    }
    for t in ticks(y0, y1) {
        let _ = write!(
            svg,
            r##"<line x1="{0}" y1="{1:.1}" x2="{2}" y2="{1:.1}" stroke="#ddd"/><text x="{3}" y="{4:.1}" text-anchor="end">{5}</text>"##,
            left,
            py(t),
            w - right,
            left - 6.0,
            py(t) + 4.0,
            short(t)
        );
    }
    let _ = write!(
        svg,
        r##"<rect x="{left}" y="{top}" width="{}" height="{}" fill="none" stroke="#333"/>"##,
        w - left - right,
        h - top - bottom
    );
    let _ = write!(
        svg,
        r#"<text x="{}" y="{}" text-anchor="middle">{}</text>"#,
        (left + w - right) / 2.0,
        h - 12.0,
        escape(x_label)
    );
    let _ = write!(
        svg,
        r#"<text transform="translate(16,{}) rotate(-90)" text-anchor="middle">{}</text>"#,
        (top + h - bottom) / 2.0,
        escape(y_label)
    );
    for (k, s) in series.iter().enumerate() {
        let colour = COLOURS[k % COLOURS.len()];
        let pts: Vec<String> = s
            .points
            .iter()
            .map(|&(x, y)| format!("{:.2},{:.2}", px(x), py(y)))
            .collect();
        let _ = write!(
            svg,
            r#"<polyline fill="none" stroke="{colour}" stroke-width="2" points="{}"/>"#,
            pts.join(" ")
        );
        for &(x, y) in &s.points {
            let _ = write!(
                svg,
                r#"<circle cx="{:.2}" cy="{:.2}" r="2.5" fill="{colour}"/>"#,
                px(x),
                py(y)
            );
        }
        if series.len() > 1 {
            let ly = top + 16.0 + 16.0 * k as f64;
            let _ = write!(
                svg,
                r#"<text x="{}" y="{ly}" fill="{colour}">{}</text>"#,
                left + 10.0,
                escape(&s.name)
            );
        }
    }
    svg.push_str("</svg>\n");
    svg
}

fn short(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    // A tick that rounds to zero from below is "0", not "-0".
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A strategy's value against white-noise visibility and detection efficiency, with the
/// classical value when known.
pub fn robustness(
    game: &crate::formats::game::Game,
    st: &crate::model::strategy::QuantumStrategy,
    classical: Option<f64>,
) -> String {
    let s = &game.scenario;
    let (value, noise) = (st.value(s), st.noise_value(s));
    let grid: Vec<f64> = (0..=50).map(|k| k as f64 / 50.0).collect();
    let mut series = vec![
        Series {
            name: "white-noise visibility".into(),
            points: grid
                .iter()
                .map(|&v| (v, v * value + (1.0 - v) * noise))
                .collect(),
        },
        Series {
            name: "detection efficiency".into(),
            points: grid.iter().map(|&e| (e, st.lossy(e).value(s))).collect(),
        },
    ];
    if let Some(c) = classical {
        series.push(Series {
            name: "classical value".into(),
            points: vec![(0.0, c), (1.0, c)],
        });
    }
    line_chart(
        &format!("Strategy value, {}", game.name),
        "visibility / detection efficiency",
        "value",
        &series,
    )
}

/// The verified NPA bound against the level, for a report comparing levels.
pub fn npa_levels(report: &crate::pipeline::GameReport) -> String {
    let bounds: Vec<&crate::bounds::quantum::npa::NpaBound> = report
        .npa_levels
        .iter()
        .chain(report.npa.as_ref())
        .collect();
    category_chart(
        &format!("NPA bound by level, {}", report.game.name),
        "level",
        &bounds.iter().map(|b| b.level.name()).collect::<Vec<_>>(),
        "verified upper bound",
        &[Series {
            name: "verified".into(),
            points: bounds
                .iter()
                .enumerate()
                .map(|(k, b)| ((k + 1) as f64, b.verified_upper))
                .collect(),
        }],
    )
}

/// Certified min-entropy against the score, for a randomness sweep.
pub fn min_entropy(report: &crate::pipeline::RandomnessReport) -> String {
    line_chart(
        &format!("Certified min-entropy, {}", report.game.name),
        "score",
        "min-entropy per round (bits)",
        &[Series {
            name: "min-entropy".into(),
            points: report
                .results
                .iter()
                .map(|r| (r.score, r.min_entropy))
                .collect(),
        }],
    )
}

/// Certified rate per round against log₁₀ n, for a finite-size report.
pub fn finite_size_rate(report: &crate::pipeline::FiniteSizeReport) -> String {
    line_chart(
        &format!("Certified rate against rounds, {}", report.game.name),
        "log10 of the number of rounds",
        "certified bits per round",
        &[
            Series {
                name: "certified rate".into(),
                points: report
                    .curve
                    .iter()
                    .map(|&(n, r)| ((n as f64).log10(), r))
                    .collect(),
            },
            Series {
                name: "limit as n grows".into(),
                points: report
                    .curve
                    .iter()
                    .map(|&(n, _)| ((n as f64).log10(), report.asymptotic_output_rate))
                    .collect(),
            },
        ],
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chart_contains_every_point() {
        let svg = line_chart(
            "t",
            "x",
            "y",
            &[Series {
                name: "a".into(),
                points: vec![(0.0, 1.0), (1.0, 0.5), (2.0, 0.25)],
            }],
        );
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert_eq!(svg.matches("<circle").count(), 3);
    }
}
