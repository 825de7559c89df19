//! Horizontal grouped bars, written as SVG text directly: one group per category (a
//! loss component), one bar per series (a DC point) within it, on a linear value axis
//! from zero. Every coordinate is a pure function of the input, so the same data gives
//! the same bytes. Text uses the family typst embeds, as the other plots do.

use super::plot::{text_width, PlotError, PALETTE};
use std::fmt::Write;

/// One category and its values, one per series.
#[derive(Clone, Debug, PartialEq)]
pub struct BarGroup {
    pub label: String,
    pub values: Vec<f64>,
}

#[derive(Clone, Copy, Debug)]
pub struct BarPlot<'a> {
    pub title: &'a str,
    /// The value axis title with its unit, e.g. "Loss (W)".
    pub value_label: &'a str,
    pub series: &'a [String],
    pub groups: &'a [BarGroup],
}

const FONT: &str = "Libertinus Serif";
const TEXT: f64 = 13.0;
const BAR: f64 = 9.0;
const GROUP_GAP: f64 = 10.0;

/// A step of 1, 2 or 5 times a power of ten giving at most `max` intervals to `hi`.
fn nice_step(hi: f64, max: f64) -> f64 {
    let raw = hi / max;
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| hi / s <= max)
        .unwrap_or(10.0 * p)
}

fn escape(t: &str) -> String {
    t.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

fn colour(k: usize) -> String {
    let c = PALETTE[k % PALETTE.len()];
    format!("#{:02x}{:02x}{:02x}", c.0, c.1, c.2)
}

/// Draws the bars; `width` is the SVG width, the height follows from the groups.
pub fn bars_svg(plot: &BarPlot, width: u32) -> Result<String, PlotError> {
    if plot.groups.is_empty() || plot.series.is_empty() {
        return Err(PlotError::NoCurves);
    }
    let n = plot.series.len();
    let mut hi = 0.0_f64;
    for g in plot.groups {
        if g.values.len() != n {
            return Err(PlotError::EmptyCurve {
                label: g.label.clone(),
            });
        }
        for (i, v) in g.values.iter().enumerate() {
            if !v.is_finite() || *v < 0.0 {
                return Err(PlotError::NonFinite {
                    label: g.label.clone(),
                    index: i,
                });
            }
            hi = hi.max(*v);
        }
    }
    if hi <= 0.0 {
        hi = 1.0;
    }
    let w = f64::from(width);
    let label_w = plot
        .groups
        .iter()
        .map(|g| text_width(&g.label, TEXT))
        .fold(0.0, f64::max);
    let left = (label_w + 16.0).min(w * 0.45);
    let right = 56.0;
    let top = 52.0;
    let group_h = n as f64 * BAR + GROUP_GAP;
    let panel_h = plot.groups.len() as f64 * group_h;
    let height = top + panel_h + 46.0;
    let step = nice_step(hi, 6.0);
    let x_max = (hi / step).ceil() * step;
    let scale = (w - left - right) / x_max;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height:.0}\" viewBox=\"0 0 {w:.0} {height:.0}\">"
    );
    let _ = writeln!(
        s,
        "<rect x=\"0\" y=\"0\" width=\"{w:.0}\" height=\"{height:.0}\" fill=\"#ffffff\"/>"
    );
    let _ = writeln!(
        s,
        "<text x=\"{:.1}\" y=\"18\" font-family=\"{FONT}\" font-size=\"15\" text-anchor=\"middle\" fill=\"#1e1e1e\">{}</text>",
        w / 2.0,
        escape(plot.title)
    );
    // Legend: a swatch and a label per series, in one row.
    let mut x = left;
    for (k, name) in plot.series.iter().enumerate() {
        let _ = writeln!(
            s,
            "<rect x=\"{x:.1}\" y=\"30\" width=\"12\" height=\"10\" fill=\"{}\"/>",
            colour(k)
        );
        let _ = writeln!(
            s,
            "<text x=\"{:.1}\" y=\"39\" font-family=\"{FONT}\" font-size=\"{TEXT}\" fill=\"#1e1e1e\">{}</text>",
            x + 16.0,
            escape(name)
        );
        x += 16.0 + text_width(name, TEXT) + 18.0;
    }
    // Grid and value axis.
    let mut v = 0.0;
    while v <= x_max * (1.0 + 1e-9) {
        let gx = left + v * scale;
        let _ = writeln!(
            s,
            "<line x1=\"{gx:.1}\" y1=\"{top:.1}\" x2=\"{gx:.1}\" y2=\"{:.1}\" stroke=\"#c4c4c4\" stroke-width=\"0.8\"/>",
            top + panel_h
        );
        let _ = writeln!(
            s,
            "<text x=\"{gx:.1}\" y=\"{:.1}\" font-family=\"{FONT}\" font-size=\"{TEXT}\" text-anchor=\"middle\" fill=\"#1e1e1e\">{}</text>",
            top + panel_h + 16.0,
            crate::units::format_number(v, 4)
        );
        v += step;
    }
    let _ = writeln!(
        s,
        "<text x=\"{:.1}\" y=\"{:.1}\" font-family=\"{FONT}\" font-size=\"{TEXT}\" text-anchor=\"middle\" fill=\"#1e1e1e\">{}</text>",
        left + (w - left - right) / 2.0,
        top + panel_h + 36.0,
        escape(plot.value_label)
    );
    for (gi, g) in plot.groups.iter().enumerate() {
        let y0 = top + gi as f64 * group_h + GROUP_GAP / 2.0;
        let _ = writeln!(
            s,
            "<text x=\"{:.1}\" y=\"{:.1}\" font-family=\"{FONT}\" font-size=\"{TEXT}\" text-anchor=\"end\" fill=\"#1e1e1e\">{}</text>",
            left - 8.0,
            y0 + n as f64 * BAR / 2.0 + TEXT * 0.35,
            escape(&g.label)
        );
        for (k, value) in g.values.iter().enumerate() {
            let y = y0 + k as f64 * BAR;
            let _ = writeln!(
                s,
                "<rect x=\"{left:.1}\" y=\"{y:.1}\" width=\"{:.2}\" height=\"{:.1}\" fill=\"{}\"/>",
                value * scale,
                BAR - 1.0,
                colour(k)
            );
        }
    }
    let _ = writeln!(
        s,
        "<line x1=\"{left:.1}\" y1=\"{top:.1}\" x2=\"{left:.1}\" y2=\"{:.1}\" stroke=\"#3c3c3c\" stroke-width=\"1\"/>",
        top + panel_h
    );
    s.push_str("</svg>\n");
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plot_of(groups: &[BarGroup]) -> String {
        let series = vec!["a".to_string(), "b".to_string()];
        bars_svg(
            &BarPlot {
                title: "t",
                value_label: "Loss (W)",
                series: &series,
                groups,
            },
            600,
        )
        .unwrap()
    }

    #[test]
    fn bar_lengths_are_proportional_to_the_values() {
        let svg = plot_of(&[
            BarGroup {
                label: "x".into(),
                values: vec![10.0, 20.0],
            },
            BarGroup {
                label: "y".into(),
                values: vec![5.0, 0.0],
            },
        ]);
        let widths: Vec<f64> = svg
            .lines()
            .filter(|l| l.starts_with("<rect x=") && l.contains("height=\"8.0\""))
            .map(|l| {
                l.split("width=\"")
                    .nth(1)
                    .unwrap()
                    .split('"')
                    .next()
                    .unwrap()
                    .parse()
                    .unwrap()
            })
            .collect();
        assert_eq!(widths.len(), 4);
        assert!((widths[1] / widths[0] - 2.0).abs() < 1e-2);
        assert!((widths[2] / widths[0] - 0.5).abs() < 1e-2);
        assert_eq!(widths[3], 0.0);
        // Same data, same bytes.
        assert_eq!(
            svg,
            plot_of(&[
                BarGroup {
                    label: "x".into(),
                    values: vec![10.0, 20.0]
                },
                BarGroup {
                    label: "y".into(),
                    values: vec![5.0, 0.0]
                },
            ])
        );
    }

    #[test]
    fn bad_values_are_errors_not_drawings() {
        let series = vec!["a".to_string()];
        let bad = [BarGroup {
            label: "x".into(),
            values: vec![f64::NAN],
        }];
        let p = BarPlot {
            title: "t",
            value_label: "W",
            series: &series,
            groups: &bad,
        };
        assert!(bars_svg(&p, 600).is_err());
        let short = [BarGroup {
            label: "x".into(),
            values: vec![],
        }];
        let p = BarPlot {
            title: "t",
            value_label: "W",
            series: &series,
            groups: &short,
        };
        assert!(bars_svg(&p, 600).is_err());
    }

    #[test]
    fn steps_are_one_two_five() {
        assert_eq!(nice_step(47.0, 6.0), 10.0);
        assert_eq!(nice_step(9.0, 6.0), 2.0);
        assert_eq!(nice_step(230.0, 6.0), 50.0);
    }
}
