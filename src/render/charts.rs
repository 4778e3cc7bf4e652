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

/// A reference line across the plot: the run's number of rounds, the observed score.
pub struct Marker {
    /// Vertical (at an x value) or horizontal (at a y value).
    pub axis: MarkerAxis,
    /// Where, in the data's units.
    pub at: f64,
    /// Its label, drawn beside it.
    pub label: String,
}

/// Which way a [`Marker`] runs.
#[derive(Clone, Copy, PartialEq, Eq)]
pub enum MarkerAxis {
    /// A vertical line at an x value.
    X,
    /// A horizontal line at a y value.
    Y,
}

/// How a chart draws its axes.
#[derive(Default)]
pub struct ChartOptions {
    /// Logarithmic x axis (points with x ≤ 0 are left out), ticks at powers of ten.
    pub log_x: bool,
    /// Logarithmic y axis (points with y ≤ 0 are left out), ticks at powers of ten.
    pub log_y: bool,
    /// Reference lines.
    pub markers: Vec<Marker>,
}

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
    chart(
        title,
        x_label,
        y_label,
        series,
        None,
        &ChartOptions::default(),
    )
}

/// [`line_chart`] with options (log axes, reference lines).
pub fn line_chart_with(
    title: &str,
    x_label: &str,
    y_label: &str,
    series: &[Series],
    options: &ChartOptions,
) -> String {
    chart(title, x_label, y_label, series, None, options)
}

/// A chart whose x axis is a list of categories (e.g. NPA levels): point k of each series is
/// drawn at category k (x = k + 1), and the axis is labelled with the category names only.
pub fn category_chart(
    title: &str,
    x_label: &str,
    categories: &[String],
    y_label: &str,
    series: &[Series],
    options: &ChartOptions,
) -> String {
    chart(title, x_label, y_label, series, Some(categories), options)
}

fn chart(
    title: &str,
    x_label: &str,
    y_label: &str,
    series: &[Series],
    categories: Option<&[String]>,
    options: &ChartOptions,
) -> String {
    // On a log axis values are drawn at their logarithm; points that have none are left out.
    let to_x = |x: f64| if options.log_x { x.log10() } else { x };
    let to_y = |y: f64| if options.log_y { y.log10() } else { y };
    let drawn = |&(x, y): &(f64, f64)| {
        (!options.log_x || x > 0.0) && (!options.log_y || y > 0.0) && x.is_finite() && y.is_finite()
    };
    let series: Vec<Series> = series
        .iter()
        .map(|s| Series {
            name: s.name.clone(),
            points: s
                .points
                .iter()
                .filter(|p| drawn(p))
                .map(|&(x, y)| (to_x(x), to_y(y)))
                .collect(),
        })
        .collect();
    let series = &series[..];
    // The legend sits in a band above the plot, clear of the curves.
    let legend = series.len() > 1;
    let (w, h, left, right, bottom) = (640.0, 400.0, 70.0, 20.0, 50.0);
    let top = if legend { 58.0 } else { 40.0 };
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
        None if options.log_x => power_ticks(x0, x1),
        None => ticks(x0, x1).into_iter().map(|t| (t, short(t))).collect(),
    };
    let y_ticks: Vec<(f64, String)> = if options.log_y {
        power_ticks(y0, y1)
    } else {
        ticks(y0, y1).into_iter().map(|t| (t, short(t))).collect()
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
    for (t, label) in y_ticks {
        let _ = write!(
            svg,
            r##"<line x1="{0}" y1="{1:.1}" x2="{2}" y2="{1:.1}" stroke="#ddd"/><text x="{3}" y="{4:.1}" text-anchor="end">{5}</text>"##,
            left,
            py(t),
            w - right,
            left - 6.0,
            py(t) + 4.0,
            label
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
        if legend {
            // One row above the plot, entries side by side.
            let lx = left + 150.0 * k as f64;
            let ly = top - 10.0;
            let _ = write!(
                svg,
                r#"<line x1="{lx}" y1="{0}" x2="{1}" y2="{0}" stroke="{colour}" stroke-width="2"/><text x="{2}" y="{3}" fill="{colour}">{4}</text>"#,
                ly - 4.0,
                lx + 18.0,
                lx + 22.0,
                ly,
                escape(&s.name)
            );
        }
    }
    for m in &options.markers {
        let (log, value) = match m.axis {
            MarkerAxis::X => (options.log_x, m.at),
            MarkerAxis::Y => (options.log_y, m.at),
        };
        if (log && value <= 0.0) || !value.is_finite() {
            continue;
        }
        let v = if log { value.log10() } else { value };
        match m.axis {
            MarkerAxis::X if (x0..=x1).contains(&v) => {
                let x = px(v);
                let _ = write!(
                    svg,
                    r##"<line x1="{x:.1}" y1="{top}" x2="{x:.1}" y2="{0}" stroke="#555" stroke-dasharray="5,4"/><text x="{1:.1}" y="{2}" fill="#333">{3}</text>"##,
                    h - bottom,
                    x + 4.0,
                    h - bottom - 8.0,
                    escape(&m.label)
                );
            }
            MarkerAxis::Y if (y0..=y1).contains(&v) => {
                let y = py(v);
                let _ = write!(
                    svg,
                    r##"<line x1="{left}" y1="{y:.1}" x2="{0}" y2="{y:.1}" stroke="#555" stroke-dasharray="5,4"/><text x="{1}" y="{2:.1}" fill="#333" text-anchor="end">{3}</text>"##,
                    w - right,
                    w - right - 4.0,
                    y - 4.0,
                    escape(&m.label)
                );
            }
            _ => {}
        }
    }
    svg.push_str("</svg>\n");
    svg
}

/// Ticks at the integer powers of ten within [lo, hi] (in log₁₀ units), labelled 10ᵏ; when the
/// range holds fewer than two, the linear ticks, labelled as powers.
fn power_ticks(lo: f64, hi: f64) -> Vec<(f64, String)> {
    let (first, last) = (lo.ceil() as i64, hi.floor() as i64);
    let label = |t: f64| {
        if (t - t.round()).abs() < 1e-9 {
            format!(
                r#"10<tspan dy="-6" font-size="9">{}</tspan>"#,
                t.round() as i64
            )
        } else {
            short(10f64.powf(t))
        }
    };
    if last - first >= 1 {
        let step = ((last - first) as f64 / 6.0).ceil().max(1.0) as i64;
        (first..=last)
            .step_by(step as usize)
            .map(|k| (k as f64, label(k as f64)))
            .collect()
    } else {
        ticks(lo, hi).into_iter().map(|t| (t, label(t))).collect()
    }
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

/// The verified NPA bounds of a report comparing levels. The bounds usually agree to several
/// digits after the first level, so on a linear axis every later level looks flat: the chart
/// shows each level's excess over the best verified bound, on a log axis (the best level, whose
/// excess is 0, is named in the title).
pub fn npa_levels(report: &crate::pipeline::GameReport) -> String {
    let bounds: Vec<&crate::bounds::quantum::npa::NpaBound> = report
        .npa_levels
        .iter()
        .chain(report.npa.as_ref())
        .collect();
    let best = bounds
        .iter()
        .min_by(|a, b| a.verified_upper.total_cmp(&b.verified_upper));
    let title = match best {
        Some(b) => format!(
            "NPA bound by level, {} (best: level {}, {})",
            report.game.name,
            b.level.name(),
            crate::numbers::num(b.verified_upper)
        ),
        None => format!("NPA bound by level, {}", report.game.name),
    };
    let best_value = best.map_or(0.0, |b| b.verified_upper);
    category_chart(
        &title,
        "level",
        &bounds.iter().map(|b| b.level.name()).collect::<Vec<_>>(),
        "verified bound minus the best (log scale)",
        &[Series {
            name: "excess over the best verified bound".into(),
            points: bounds
                .iter()
                .enumerate()
                .map(|(k, b)| ((k + 1) as f64, b.verified_upper - best_value))
                .collect(),
        }],
        &ChartOptions {
            log_y: true,
            ..Default::default()
        },
    )
}

/// Certified min-entropy against the score, for a randomness sweep; `observed` marks a score
/// (a run's lower confidence score) with a vertical line.
pub fn min_entropy(report: &crate::pipeline::RandomnessReport) -> String {
    min_entropy_curve(
        &format!("Certified min-entropy, {}", report.game.name),
        &report
            .results
            .iter()
            .map(|r| (r.score, r.min_entropy))
            .collect::<Vec<_>>(),
        None,
    )
}

/// The min-entropy curve with an optional marked score.
pub fn min_entropy_curve(
    title: &str,
    points: &[(f64, f64)],
    observed: Option<(f64, &str)>,
) -> String {
    line_chart_with(
        title,
        "score",
        "min-entropy per round (bits)",
        &[Series {
            name: "min-entropy".into(),
            points: points.to_vec(),
        }],
        &ChartOptions {
            markers: observed
                .map(|(at, label)| Marker {
                    axis: MarkerAxis::X,
                    at,
                    label: label.to_string(),
                })
                .into_iter()
                .collect(),
            ..Default::default()
        },
    )
}

/// A review's noise thresholds: the best implementation's margin over the classical value
/// against detection efficiency and visibility (None without a curve).
pub fn review_noise(review: &crate::pipeline::Review) -> Option<String> {
    let series: Vec<Series> = review
        .devices
        .thresholds
        .iter()
        .filter(|t| t.curve.len() >= 2)
        .map(|t| Series {
            name: t.parameter.name().into(),
            points: t
                .curve
                .iter()
                .map(|p| (p.parameter, p.figure.max(0.0)))
                .collect(),
        })
        .collect();
    if series.is_empty() {
        return None;
    }
    Some(line_chart(
        &format!(
            "Margin over the classical value against noise, {}",
            review.bounds.game.name
        ),
        "detection efficiency / visibility",
        "margin of the best implementation found",
        &series,
    ))
}

/// A design's figure against the noise parameter of its threshold search, with the bracket's
/// upper end marked.
pub fn design_threshold(report: &crate::pipeline::DesignReport) -> String {
    let Some(t) = &report.threshold else {
        return String::new();
    };
    line_chart_with(
        &format!(
            "{} against {}, {}",
            report.figure.describe(),
            t.parameter.name(),
            report.game.name
        ),
        t.parameter.name(),
        report.figure.describe(),
        &[Series {
            name: "best implementation found".into(),
            points: t.curve.iter().map(|p| (p.parameter, p.figure)).collect(),
        }],
        &ChartOptions {
            markers: t
                .bracket
                .iter()
                .map(|b| Marker {
                    axis: MarkerAxis::X,
                    at: b.above,
                    label: format!("threshold ≤ {}", crate::numbers::num_sig(b.above, 4)),
                })
                .chain(std::iter::once(Marker {
                    axis: MarkerAxis::Y,
                    at: 0.0,
                    label: "0".into(),
                }))
                .collect(),
            ..Default::default()
        },
    )
}

/// Certified rate per round against the number of rounds (log axis), with the run's own number
/// of rounds marked, for a finite-size report.
pub fn finite_size_rate(report: &crate::pipeline::FiniteSizeReport) -> String {
    let n = report.run.protocol.rounds as f64;
    line_chart_with(
        &format!("Certified rate against rounds, {}", report.game.name),
        "number of rounds",
        "certified bits per round",
        &[
            Series {
                name: "certified rate".into(),
                points: report.curve.iter().map(|&(n, r)| (n as f64, r)).collect(),
            },
            Series {
                name: "limit as n grows".into(),
                points: report
                    .curve
                    .iter()
                    .map(|&(n, _)| (n as f64, report.asymptotic_output_rate))
                    .collect(),
            },
        ],
        &ChartOptions {
            log_x: true,
            markers: vec![Marker {
                axis: MarkerAxis::X,
                at: n,
                label: format!("this run: n = {}", crate::numbers::num_sig(n, 3)),
            }],
            ..Default::default()
        },
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

#[cfg(test)]
mod more_tests {
    use super::*;

    #[test]
    fn log_axes_markers_and_the_legend_above_the_plot() {
        let svg = line_chart_with(
            "t",
            "rounds",
            "rate",
            &[
                Series {
                    name: "a".into(),
                    points: vec![(1e3, 0.1), (1e6, 0.5), (1e9, 0.7), (0.0, 0.9)],
                },
                Series {
                    name: "b".into(),
                    points: vec![(1e3, 0.8), (1e9, 0.8)],
                },
            ],
            &ChartOptions {
                log_x: true,
                markers: vec![Marker {
                    axis: MarkerAxis::X,
                    at: 1e7,
                    label: "this run".into(),
                }],
                ..Default::default()
            },
        );
        // The point at x = 0 has no logarithm and is left out; ticks are powers of ten.
        assert_eq!(svg.matches("<circle").count(), 5);
        assert!(
            svg.contains(r#"10<tspan dy="-6" font-size="9">6</tspan>"#),
            "{svg}"
        );
        assert!(svg.contains("stroke-dasharray") && svg.contains("this run"));
        // The legend entries sit in the band above the plot's frame, which starts at y = 58.
        assert!(svg.contains(r##"y="48" fill="#1f5fa8">a</text>"##), "{svg}");
        assert!(svg.contains(r#"<rect x="70" y="58""#), "{svg}");
    }
}
