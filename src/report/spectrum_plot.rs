//! Harmonic spectrum plots: one thin bar per harmonic line on a logarithmic
//! amplitude axis over a linear harmonic-order axis, a limit mask drawn as a
//! step line over the bars, and labelled vertical markers (e.g. at m_f and
//! 2 m_f).
//!
//! The figure belongs to the family of [`super::plot`]: it uses the same page
//! grammar (title, legend, marker label row, panel, x tick labels, axis
//! titles), fonts, colours and sizes, laid out in pixel space by the same
//! helpers. Only the axes, the bars and the mask are this module's own.
//!
//! # Layout
//!
//! Coordinates are in drawing units (the oversampled grid plot.rs draws on;
//! the SVG viewBox maps them back to the requested size).
//!
//! - x: `order` maps linearly to
//!   `panel.left + (order - x_lo) / (x_hi - x_lo) * (panel.right - panel.left)`.
//!   `x_lo` is 0, or a margin below the lowest order when some bar or marker
//!   sits at order 0 (a DC component) or below (negative-sequence orders in a
//!   space-vector spectrum), so no bar hides under the frame. `x_hi` is the
//!   highest bar or marker plus 4 % of the span from the lowest order or 0
//!   (at least half an order). Mask steps do not widen the axis: a limit
//!   table that runs past the last bar says nothing about the figure.
//! - y: a value maps to `log10(max(value, floor))`, linear in that from
//!   `log10(floor)` at the panel bottom to the top decade at the panel top.
//!   The top decade is the smallest power of ten at or above every bar, every
//!   visible mask step and ten times the floor (so at least one decade shows).

use plotters::element::{Rectangle, Text};
use plotters::style::text_anchor::{HPos, VPos};
use plotters::style::{Color, RGBColor};

use super::plot::{
    canvas, check_size, draw_frame, draw_line, draw_markers, draw_title, draw_v_grid_line,
    draw_x_title, draw_y_title, footer, grid_style, header, panels_left, place_marker_labels, px,
    render_svg, right_margin, stroke, superscript_power, text_style, text_width, y_title_x, Area,
    DrawResult, LegendEntry, LineStyle, Marker, MarkerLabel, NumberFormat, Panel, PlotError, Sizes,
    Step, YAxis, BACKGROUND, GRID_MAJOR, GRID_MINOR, INK, LINE_MARGIN, MAX_LIN_X_INTERVALS,
    MIN_STEP_EXP, MIN_X_TICK_SPACING, MIN_Y_TICK_SPACING, PALETTE,
};

/// One harmonic line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bar {
    /// Order relative to the fundamental (1 is the fundamental); may be
    /// non-integer (interharmonics) or negative (negative sequence).
    pub order: f64,
    /// Amplitude in the unit the y axis title names (e.g. % of the
    /// fundamental). Values at or below the plot's floor, zero and negative
    /// ones included, are clipped to the floor: they have no height on the
    /// log axis and draw nothing, but still count for the x range.
    pub value: f64,
    /// The caller's verdict that this line exceeds its limit. The plot does
    /// not recompute it from the mask: the calculation owns the verdict, the
    /// figure shows it.
    pub over_limit: bool,
}

/// Everything one spectrum figure shows. An empty `title` leaves out the
/// title line; an empty axis title leaves out that title.
#[derive(Debug, Clone, Copy)]
pub struct SpectrumPlot<'a> {
    pub title: &'a str,
    /// x axis title, e.g. "Harmonic order h".
    pub x_label: &'a str,
    /// y axis title with its unit, e.g. "Amplitude (% of fundamental)". Tick
    /// labels are plain numbers in that unit.
    pub y_label: &'a str,
    /// The lines, in any order. At least one is required.
    pub bars: &'a [Bar],
    /// The limit as steps `(order from which it applies, limit value)`; the
    /// last step runs to the right edge, and nothing is drawn left of the
    /// first. Meant in ascending order; steps given out of order are sorted
    /// (stably, so of two steps at one order the later one applies). Values
    /// at or below the floor are drawn along the floor, except a limit of 0 or
    /// less, which means "no limit from this order on" and ends the mask there
    /// (meant for the last step). Empty: no mask.
    pub mask: &'a [(f64, f64)],
    /// Legend text of the mask, e.g. "IEEE 1547-2018 limit"; empty leaves
    /// the mask out of the legend.
    pub mask_label: &'a str,
    /// Lowest value shown on the log axis (the panel bottom), e.g. 0.001 for
    /// 0.001 %. Must be finite and above zero (1e-280 ..= 1e299), else the
    /// plot is refused with [`PlotError::UnusableRange`] on 'y'.
    pub floor: f64,
    /// Vertical labelled reference lines at harmonic orders.
    pub markers: &'a [Marker],
}

/// Legend text for bars drawn in the over-the-limit colour.
pub const OVER_LIMIT_LABEL: &str = "over the limit";

/// Draws the spectrum as an SVG document, `width` x `height` in px (e.g.
/// 720 x 440).
///
/// Dense spectra (thousands of lines) are thinned losslessly for the eye:
/// bars that fall in the same bar-wide pixel column are merged, keeping the
/// tallest, separately for compliant and over-limit bars, so an over-limit
/// line is never hidden behind a taller compliant neighbour.
pub fn spectrum_svg(plot: &SpectrumPlot, width: u32, height: u32) -> Result<String, PlotError> {
    let view = validate(plot)?;
    check_size(width, height)?;
    let layout = SpectrumLayout::new(plot, &view, width, height)?;
    render_svg(width, height, |root| draw(root, plot, &view, &layout))
}

// ---------------------------------------------------------------------------
// Style

/// Compliant bars: the family's first curve colour.
const BAR: RGBColor = PALETTE[0];
/// Over-limit bars: the orange of the palette, which stays apart from its
/// blue for the common colour-vision deficiencies and is lighter in
/// greyscale print.
const OVER: RGBColor = PALETTE[1];
/// The mask: near black, so it reads against both bar colours.
const MASK: RGBColor = PALETTE[5];
/// Mask stroke (output px): heavier than the bars' outlines and the grid.
const MASK_WIDTH: f64 = 1.6;
/// Bar width bounds (output px): at least a pixel so every line shows, at
/// most three so sparse spectra still read as lines, not columns.
const BAR_WIDTH_PX: (f64, f64) = (1.0, 3.0);
/// A bar is this share of one harmonic order's width, within the bounds.
const BAR_FILL: f64 = 0.5;

/// Share of the order span left free right of the last bar (and left of
/// the first when that is at or below order 0): the line plots' margin.
const X_MARGIN: f64 = LINE_MARGIN;
/// The margin is at least this many orders, so a spectrum of the
/// fundamental alone still has an axis of some width.
const MIN_X_PAD: f64 = 0.5;
/// Highest decade exponent; 10^300 keeps `10 * value` far from overflow.
const MAX_DECADE: i32 = 300;
/// Decades written as plain decimals (0.0001 .. 100000); an axis with any
/// labelled decade outside is written in powers of ten throughout, so the
/// label column reads one way.
const PLAIN_DECADES: std::ops::RangeInclusive<i32> = -4..=5;
/// Decade spacing (output px) from which the 2..9 minor grid lines are
/// drawn, and below which unlabelled decade lines are left out as mush.
const MINOR_GRID_MIN: f64 = 48.0;
const DECADE_GRID_MIN: f64 = 4.0;

/// Name of the bars in error messages.
const BARS_NAME: &str = "spectrum";

// ---------------------------------------------------------------------------
// Input checking

/// Validated input and the visible window.
#[derive(Debug, Clone, PartialEq)]
struct View {
    x_lo: f64,
    x_hi: f64,
    /// log10 of the floor (snapped to a whole decade when within rounding).
    log_floor: f64,
    /// Exponent of the top decade.
    top_exp: i32,
    /// The mask steps sorted by order.
    mask: Vec<(f64, f64)>,
    /// Some mask step lies within the x window.
    mask_visible: bool,
    any_over: bool,
}

fn validate(plot: &SpectrumPlot) -> Result<View, PlotError> {
    if plot.bars.is_empty() {
        return Err(PlotError::NoCurves);
    }
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut top = f64::NEG_INFINITY;
    for (index, b) in plot.bars.iter().enumerate() {
        if !(b.order.is_finite() && b.value.is_finite()) {
            return Err(PlotError::NonFinite {
                label: BARS_NAME.into(),
                index,
            });
        }
        lo = lo.min(b.order);
        hi = hi.max(b.order);
        top = top.max(b.value);
    }
    // A marker beyond the last bar (2 m_f over a spectrum cut at 1.5 m_f) is
    // still worth showing, so the axis grows to it, as in the line plots.
    for m in plot.markers {
        if !m.at.is_finite() {
            return Err(PlotError::BadMarker {
                label: m.label.clone(),
            });
        }
        lo = lo.min(m.at);
        hi = hi.max(m.at);
    }
    let mask_name = if plot.mask_label.is_empty() {
        "mask"
    } else {
        plot.mask_label
    };
    for (index, &(order, limit)) in plot.mask.iter().enumerate() {
        if !(order.is_finite() && limit.is_finite()) {
            return Err(PlotError::NonFinite {
                label: mask_name.into(),
                index,
            });
        }
    }
    let bad_y = PlotError::UnusableRange { axis: 'y' };
    if !(plot.floor.is_finite() && plot.floor > 0.0) {
        return Err(bad_y);
    }
    let mut log_floor = plot.floor.log10();
    if !(f64::from(MIN_STEP_EXP)..=f64::from(MAX_DECADE - 1)).contains(&log_floor) {
        return Err(bad_y);
    }
    // log10 of an exact decade can land a hair off the integer; snapping
    // keeps the floor's own decade on the panel edge and labelled.
    if (log_floor - log_floor.round()).abs() < 1e-9 {
        log_floor = log_floor.round();
    }

    // The axis always shows order 0 (harmonic order is counted from DC).
    let (left, right) = (lo.min(0.0), hi.max(0.0));
    let pad = (X_MARGIN * (right - left)).max(MIN_X_PAD);
    let x_lo = if lo > 0.0 { 0.0 } else { left - pad };
    let x_hi = right + pad;
    if !((x_hi - x_lo).is_finite() && x_lo.is_finite() && x_hi.is_finite()) {
        return Err(PlotError::UnusableRange { axis: 'x' });
    }

    // Stable, so the caller's order decides between steps at one order.
    let mut mask = plot.mask.to_vec();
    mask.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut mask_visible = false;
    for (i, &(start, limit)) in mask.iter().enumerate() {
        let end = mask.get(i + 1).map_or(f64::INFINITY, |s| s.0);
        if start < x_hi && end > x_lo && end > start {
            mask_visible = true;
            top = top.max(limit);
        }
    }

    // The allowance keeps 100.00000001 (rounding noise) from opening a
    // whole decade above 100.
    let top_log = (top.max(plot.floor * 10.0).log10() - 1e-9).ceil();
    if top_log > f64::from(MAX_DECADE) {
        return Err(bad_y);
    }
    Ok(View {
        x_lo,
        x_hi,
        log_floor,
        top_exp: top_log as i32,
        mask,
        mask_visible,
        any_over: plot.bars.iter().any(|b| b.over_limit),
    })
}

// ---------------------------------------------------------------------------
// Layout

/// One bar after merging: centre x and top y, drawing units.
#[derive(Debug, Clone, Copy, PartialEq)]
struct BarMark {
    x: f64,
    top: f64,
}

struct SpectrumLayout {
    s: Sizes,
    x_lo: f64,
    x_hi: f64,
    title_y: f64,
    /// Entries name index 0 (the mask) or 1 (over-limit bars); see
    /// [`legend_labels`].
    legend: Vec<LegendEntry>,
    marker_labels: Vec<MarkerLabel>,
    marker_label_y: f64,
    /// The panel; its axis runs in log10 of the value, its ticks are the
    /// labelled decade exponents.
    panel: Panel,
    /// Every n-th decade (by exponent) is labelled, so labels never crowd.
    decade_stride: i32,
    /// Decade labels as powers of ten rather than decimals.
    power_labels: bool,
    x_ticks: Vec<f64>,
    x_format: NumberFormat,
    /// Bar width, a whole number of drawing units.
    bar_width: f64,
    /// Merged bars: `[compliant, over the limit]`, each in x order.
    bars: [Vec<BarMark>; 2],
    x_label_y: f64,
    x_title_y: f64,
    y_title_x: f64,
}

impl SpectrumLayout {
    fn new(
        plot: &SpectrumPlot,
        view: &View,
        width: u32,
        height: u32,
    ) -> Result<SpectrumLayout, PlotError> {
        // The decade label stride depends on the panel height, which depends
        // on the legend rows, which depend on the width the decade labels
        // leave: a trial pass measures the panel, as the line plots do.
        let trial = SpectrumLayout::build(plot, view, width, height, None)?;
        let room = trial.panel.bottom - trial.panel.top;
        SpectrumLayout::build(plot, view, width, height, Some(room))
    }

    fn build(
        plot: &SpectrumPlot,
        view: &View,
        width: u32,
        height: u32,
        panel_h: Option<f64>,
    ) -> Result<SpectrumLayout, PlotError> {
        let s = Sizes::new(width, height);
        let (w, h) = canvas(width, height);
        let too_small = PlotError::BadSize { width, height };
        let foot = footer(&s, h);

        let (lo, hi) = (view.log_floor, f64::from(view.top_exp));
        let room = panel_h.unwrap_or(foot.panel_bottom - s.margin);
        let decade_stride = decade_stride(room / (hi - lo), MIN_Y_TICK_SPACING * s.k);
        let labelled: Vec<i32> = decades(lo, hi)
            .filter(|e| e.rem_euclid(decade_stride) == 0)
            .collect();
        let power_labels = labelled.iter().any(|e| !PLAIN_DECADES.contains(e));
        let tick_label_w = labelled
            .iter()
            .map(|&e| text_width(&decade_label(e, power_labels), s.tick))
            .fold(0.0, f64::max);
        let plot_left = panels_left(&s, tick_label_w);

        // x ticks: as in the line plots, the finest 1-2-5 step that keeps
        // ticks apart, coarsened until the labels do not touch.
        let span = view.x_hi - view.x_lo;
        let widest_panel = w - plot_left - (s.margin + 8.0 * s.k);
        let max_x = (widest_panel / (MIN_X_TICK_SPACING * s.k))
            .floor()
            .clamp(2.0, MAX_LIN_X_INTERVALS);
        // Harmonics come at whole orders: a finer step would label orders
        // no line can have.
        let mut x_step = Step::at_least((span / max_x).max(1.0))
            .ok_or(PlotError::UnusableRange { axis: 'x' })?;
        let (x_ticks, x_format, plot_right) = loop {
            let ticks = x_step.ticks(view.x_lo, view.x_hi);
            let format = NumberFormat::new(x_step, &ticks);
            let widths: Vec<f64> = ticks
                .iter()
                .map(|&v| text_width(&format.label(v), s.tick))
                .collect();
            let widest = widths.iter().copied().fold(0.0, f64::max);
            let last_w = widths.last().copied().unwrap_or(0.0);
            let right = w - right_margin(&s, last_w);
            if right - plot_left < 120.0 * s.k {
                return Err(too_small);
            }
            let spacing = x_step.value() / span * (right - plot_left);
            // Each coarsening at least doubles the step, so this ends.
            if ticks.len() < 2 || spacing >= widest + 12.0 * s.k {
                break (ticks, format, right);
            }
            x_step = x_step.next();
        };
        let x_of = |v: f64| plot_left + (v - view.x_lo) / span * (plot_right - plot_left);

        let marker_labels = place_marker_labels(&s, plot.markers, x_of, w);
        let labels = legend_labels(plot, view);
        let head = header(
            &s,
            plot.title,
            &labels,
            plot_left,
            plot_right,
            !marker_labels.is_empty(),
        );
        if foot.panel_bottom - head.panel_top < 120.0 * s.k {
            return Err(too_small);
        }
        let panel = Panel {
            left: plot_left,
            right: plot_right,
            top: head.panel_top,
            bottom: foot.panel_bottom,
            axis: YAxis {
                lo,
                hi,
                ticks: labelled.iter().map(|&e| f64::from(e)).collect(),
            },
        };

        let per_order = (plot_right - plot_left) / span;
        let bar_width = (BAR_FILL * per_order).round().clamp(
            f64::from(stroke(s.k, BAR_WIDTH_PX.0)),
            f64::from(stroke(s.k, BAR_WIDTH_PX.1)),
        );
        let bars = merge_bars(plot.bars, plot.floor, x_of, &panel, bar_width);

        Ok(SpectrumLayout {
            x_lo: view.x_lo,
            x_hi: view.x_hi,
            title_y: head.title_y,
            legend: head.legend,
            marker_labels,
            marker_label_y: head.marker_label_y,
            panel,
            decade_stride,
            power_labels,
            x_ticks,
            x_format,
            bar_width,
            bars,
            x_label_y: foot.x_label_y,
            x_title_y: foot.x_title_y,
            y_title_x: y_title_x(&s),
            s,
        })
    }

    /// Pixel x of a harmonic order.
    fn x(&self, order: f64) -> f64 {
        let (l, r) = (self.panel.left, self.panel.right);
        l + (order - self.x_lo) / (self.x_hi - self.x_lo) * (r - l)
    }

    /// Pixel y of a value, clipped to the floor (and, against rounding, to
    /// the top).
    fn y(&self, value: f64) -> f64 {
        let log = if value > 0.0 {
            value.log10().max(self.panel.axis.lo)
        } else {
            self.panel.axis.lo
        };
        self.panel.y(log).max(self.panel.top)
    }
}

/// Legend labels by index: 0 the mask, 1 the over-limit bars; empty ones
/// get no entry.
fn legend_labels<'a>(plot: &SpectrumPlot<'a>, view: &View) -> [&'a str; 2] {
    let mask = if view.mask_visible {
        plot.mask_label
    } else {
        ""
    };
    // Listed whenever a bar is flagged, even one clipped away under the
    // floor: a failing line must not vanish from the figure's key.
    let over = if view.any_over { OVER_LIMIT_LABEL } else { "" };
    [mask, over]
}

/// Whole decade exponents within `lo..=hi` (log10 units).
fn decades(lo: f64, hi: f64) -> impl Iterator<Item = i32> {
    // Validation keeps both within -280..=300, so the casts are exact.
    ((lo - 1e-9).ceil() as i32)..=((hi + 1e-9).floor() as i32)
}

/// The smallest stride from 1, 2, 3, 5, 10, 20, 30, 50, ... that puts
/// labelled decades at least `min` apart when decades are `spacing` apart.
/// Labels then fall on exponents divisible by the stride (10⁻⁶, 10⁻³, 10⁰),
/// not on whichever decade happens to be lowest.
fn decade_stride(spacing: f64, min: f64) -> i32 {
    if !(spacing.is_finite() && spacing > 0.0) {
        return 1;
    }
    let mut stride = 1;
    let mut scale = 1;
    let mut i = 0;
    // 1000 decades exceed any axis validation allows (-280..=300).
    while spacing * f64::from(stride) < min && stride < 1000 {
        i += 1;
        if i == 4 {
            i = 0;
            scale *= 10;
        }
        stride = [1, 2, 3, 5][i] * scale;
    }
    stride
}

/// "0.001", "1", "100" for decades in [`PLAIN_DECADES`], else "10⁻⁶". Built
/// from digits rather than formatted floats, so there is no rounding noise.
fn decade_label(exp: i32, power: bool) -> String {
    if power {
        return superscript_power(exp).trim_start_matches('×').to_string();
    }
    let zeros = "0".repeat(exp.unsigned_abs() as usize);
    if exp >= 0 {
        format!("1{zeros}")
    } else {
        format!("0.{}1", &zeros[1..])
    }
}

/// Bars at or above the floor as marks, merged per pixel column.
///
/// Thousands of lines over a few hundred pixels would each be written to the
/// SVG yet show as one column; so bars whose centres fall in the same
/// bar-wide column keep only the tallest (first in input order on a tie).
/// Compliant and over-limit bars are merged apart and the over-limit ones
/// drawn last, so a failure shows in its colour even beside a taller
/// compliant line. The result depends only on the input.
fn merge_bars(
    bars: &[Bar],
    floor: f64,
    x_of: impl Fn(f64) -> f64,
    panel: &Panel,
    col_w: f64,
) -> [Vec<BarMark>; 2] {
    let n_cols = ((panel.right - panel.left) / col_w).ceil() as usize + 1;
    let mut cols: [Vec<Option<BarMark>>; 2] = [vec![None; n_cols], vec![None; n_cols]];
    for b in bars {
        // On the log axis a value at or below the floor (zero and negative
        // ones included) is clipped to the floor, where it has no height.
        if b.value <= floor {
            continue;
        }
        let x = x_of(b.order);
        let top = panel.y(b.value.log10()).max(panel.top);
        let col = (((x - panel.left) / col_w).round().max(0.0) as usize).min(n_cols - 1);
        let slot = &mut cols[usize::from(b.over_limit)][col];
        if slot.is_none_or(|kept| top < kept.top) {
            *slot = Some(BarMark { x, top });
        }
    }
    cols.map(|c| c.into_iter().flatten().collect())
}

// ---------------------------------------------------------------------------
// Drawing

fn mask_style(k: f64) -> LineStyle {
    LineStyle::solid(&MASK, stroke(k, MASK_WIDTH))
}

fn draw(root: &Area, plot: &SpectrumPlot, view: &View, l: &SpectrumLayout) -> DrawResult {
    let s = &l.s;
    let p = &l.panel;
    root.fill(&BACKGROUND)?;

    for &v in &l.x_ticks {
        draw_v_grid_line(root, s, p, l.x(v), &GRID_MAJOR)?;
    }
    draw_decade_grid(root, l)?;
    // References under the bars, as in the other plots.
    draw_markers(
        root,
        s,
        plot.markers,
        &l.marker_labels,
        |v| l.x(v),
        l.marker_label_y,
        &[p],
    )?;
    let bottom = p.bottom.round() as i32;
    for (marks, color) in l.bars.iter().zip([BAR, OVER]) {
        for m in marks {
            let left = (m.x - l.bar_width / 2.0).round() as i32;
            let top = m.top.round() as i32;
            if top < bottom {
                root.draw(&Rectangle::new(
                    [(left, top), (left + l.bar_width as i32, bottom)],
                    color.filled(),
                ))?;
            }
        }
    }
    draw_frame(root, s, p)?;
    // The mask goes over the frame: a limit on the top decade would
    // otherwise disappear into it.
    draw_line(root, &mask_points(view, l), &mask_style(s.k))?;

    for &e in &p.axis.ticks {
        root.draw(&Text::new(
            decade_label(e as i32, l.power_labels),
            px(p.left - 6.0 * s.k, p.y(e)),
            text_style(s.tick, &INK, HPos::Right, VPos::Center),
        ))?;
    }
    for &v in &l.x_ticks {
        root.draw(&Text::new(
            l.x_format.label(v),
            px(l.x(v), l.x_label_y),
            text_style(s.tick, &INK, HPos::Center, VPos::Top),
        ))?;
    }
    let mid_x = (p.left + p.right) / 2.0;
    draw_x_title(root, s, plot.x_label, mid_x, l.x_title_y)?;
    draw_y_title(root, s, plot.y_label, l.y_title_x, p)?;
    draw_title(root, s, plot.title, mid_x, l.title_y)?;
    draw_legend(root, l, &legend_labels(plot, view))
}

/// Decade lines: labelled ones major, the others minor (left out when
/// decades crowd), and 2..9 minor lines when decades are far apart.
fn draw_decade_grid(root: &Area, l: &SpectrumLayout) -> DrawResult {
    let (s, p) = (&l.s, &l.panel);
    let (lo, hi) = (p.axis.lo, p.axis.hi);
    let spacing = (p.bottom - p.top) / (hi - lo);
    let h_line = |log: f64, color: &RGBColor| {
        let y = p.y(log);
        draw_line(root, &[(p.left, y), (p.right, y)], &grid_style(s, color))
    };
    for e in decades(lo, hi) {
        if e.rem_euclid(l.decade_stride) == 0 {
            h_line(f64::from(e), &GRID_MAJOR)?;
        } else if spacing >= DECADE_GRID_MIN * s.k {
            h_line(f64::from(e), &GRID_MINOR)?;
        }
    }
    if spacing >= MINOR_GRID_MIN * s.k {
        // From the decade below the floor, so a floor such as 0.002 still
        // gets its 3..9 lines.
        for e in (lo.floor() as i32)..(hi as i32) {
            for m in 2..=9 {
                let log = f64::from(e) + f64::from(m).log10();
                if log > lo && log < hi {
                    h_line(log, &GRID_MINOR)?;
                }
            }
        }
    }
    Ok(())
}

/// The mask as one step polyline across the visible steps: flat at each
/// limit from its order to the next step's, with the risers between.
fn mask_points(view: &View, l: &SpectrumLayout) -> Vec<(f64, f64)> {
    let mut pts = Vec::new();
    for (i, &(start, limit)) in view.mask.iter().enumerate() {
        let end = view.mask.get(i + 1).map_or(view.x_hi, |s| s.0);
        let (a, b) = (start.max(view.x_lo), end.min(view.x_hi));
        if b <= a {
            // Outside the window, or a zero-width step overridden by the
            // next one at the same order.
            continue;
        }
        if limit <= 0.0 {
            // No limit from this order on (e.g. orders no table covers): the mask
            // ends here instead of running along the floor.
            continue;
        }
        let y = l.y(limit);
        pts.push((l.x(a), y));
        pts.push((l.x(b), y));
    }
    pts
}

/// Legend entries with samples that look like what they name: a small step
/// for the mask, three bars for the over-limit lines.
fn draw_legend(root: &Area, l: &SpectrumLayout, labels: &[&str; 2]) -> DrawResult {
    let s = &l.s;
    for e in &l.legend {
        let (x0, x1) = (e.x, e.x + s.legend_sample);
        if e.curve == 0 {
            let dy = 0.2 * s.legend_row;
            let xm = (x0 + x1) / 2.0;
            let step = [
                (x0, e.y - dy),
                (xm, e.y - dy),
                (xm, e.y + dy),
                (x1, e.y + dy),
            ];
            draw_line(root, &step, &mask_style(s.k))?;
        } else {
            let bottom = (e.y + 0.35 * s.legend_row).round() as i32;
            let bw = stroke(s.k, BAR_WIDTH_PX.1) as i32;
            for (at, height) in [(0.25, 0.45), (0.5, 0.7), (0.75, 0.3)] {
                let cx = x0 + at * s.legend_sample;
                let left = (cx - f64::from(bw) / 2.0).round() as i32;
                let top = bottom - (height * s.legend_row).round() as i32;
                root.draw(&Rectangle::new(
                    [(left, top), (left + bw, bottom)],
                    OVER.filled(),
                ))?;
            }
        }
        root.draw(&Text::new(
            labels[e.curve],
            px(x1 + s.legend_text_gap, e.y),
            text_style(s.legend, &INK, HPos::Left, VPos::Center),
        ))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::super::plot::svg_probe::{polylines, texts};
    use super::*;

    const W: u32 = 720;
    const H: u32 = 440;

    /// A two-level PWM-like spectrum at m_f = 40: low-order residue, and
    /// sideband clusters at m_f and 2 m_f, of which m_f ± 2 break the mask.
    fn sample_bars() -> Vec<Bar> {
        let mut bars = vec![Bar {
            order: 1.0,
            value: 100.0,
            over_limit: false,
        }];
        let table = [
            (3.0, 0.8, false),
            (5.0, 1.2, false),
            (7.0, 0.6, false),
            (11.0, 0.25, false),
            (13.0, 0.2, false),
            (36.0, 0.1, false),
            (38.0, 2.1, true),
            (40.0, 0.05, false),
            (42.0, 2.1, true),
            (44.0, 0.1, false),
            (79.0, 0.2, false),
            (81.0, 0.2, false),
            (83.0, 0.02, false),
            // At and under the floor: clipped, not errors.
            (60.0, 0.0, false),
            (61.0, -1.0, false),
            (62.0, 1e-9, false),
            (120.0, 0.004, false),
        ];
        bars.extend(table.iter().map(|&(order, value, over_limit)| Bar {
            order,
            value,
            over_limit,
        }));
        bars
    }

    const SAMPLE_MASK: [(f64, f64); 5] = [
        (1.0, 4.0),
        (11.0, 2.0),
        (17.0, 1.5),
        (23.0, 0.6),
        (35.0, 0.3),
    ];

    fn sample_markers() -> Vec<Marker> {
        [("m_f", 40.0), ("2 m_f", 80.0)]
            .iter()
            .map(|&(l, at)| Marker {
                label: l.into(),
                at,
            })
            .collect()
    }

    fn plot<'a>(
        bars: &'a [Bar],
        mask: &'a [(f64, f64)],
        markers: &'a [Marker],
    ) -> SpectrumPlot<'a> {
        SpectrumPlot {
            title: "Output current spectrum",
            x_label: "Harmonic order h",
            y_label: "Amplitude (% of fundamental)",
            bars,
            mask,
            mask_label: "Limit",
            floor: 1e-3,
            markers,
        }
    }

    fn sample_svg() -> String {
        let (bars, markers) = (sample_bars(), sample_markers());
        spectrum_svg(&plot(&bars, &SAMPLE_MASK, &markers), W, H).expect("sample renders")
    }

    fn layout_of(p: &SpectrumPlot) -> (View, SpectrumLayout) {
        let view = validate(p).unwrap();
        let layout = SpectrumLayout::new(p, &view, W, H).unwrap();
        (view, layout)
    }

    fn attr(line: &str, name: &str) -> i32 {
        let key = format!(" {name}=\"");
        let rest = &line[line.find(&key).unwrap() + key.len()..];
        rest[..rest.find('"').unwrap()].parse().unwrap()
    }

    /// `(x, y, width, height)` of every `<rect>` filled with `fill`.
    fn rects(svg: &str, fill: &str) -> Vec<(i32, i32, i32, i32)> {
        svg.lines()
            .filter(|l| l.contains("<rect") && l.contains(&format!("fill=\"{fill}\"")))
            .map(|l| {
                (
                    attr(l, "x"),
                    attr(l, "y"),
                    attr(l, "width"),
                    attr(l, "height"),
                )
            })
            .collect()
    }

    const BAR_HEX: &str = "#005AAA";
    const OVER_HEX: &str = "#CD5500";
    const MASK_HEX: &str = "#191919";

    #[test]
    fn colours_are_the_ones_the_tests_look_for() {
        let hex = |c: RGBColor| format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2);
        assert_eq!(hex(BAR), BAR_HEX);
        assert_eq!(hex(OVER), OVER_HEX);
        assert_eq!(hex(MASK), MASK_HEX);
    }

    #[test]
    fn same_input_gives_identical_bytes() {
        let a = sample_svg();
        assert_eq!(a, sample_svg());
        assert!(a.starts_with("<svg") && a.trim_end().ends_with("</svg>"));
        assert!(a.contains(r#"width="720" height="440" viewBox="0 0 2880 1760""#));
        // Different input gives different bytes, so the check above is not
        // comparing two constants.
        let mut bars = sample_bars();
        bars[3].value = 0.7;
        let markers = sample_markers();
        let b = spectrum_svg(&plot(&bars, &SAMPLE_MASK, &markers), W, H).unwrap();
        assert_ne!(a, b);
    }

    #[test]
    fn figure_is_labelled() {
        let t = texts(&sample_svg());
        for label in [
            "Output current spectrum",
            "Harmonic order h",
            "Amplitude (% of fundamental)",
            "Limit",
            OVER_LIMIT_LABEL,
            "m_f",
            "2 m_f",
            "0",
            "0.001",
            "100",
        ] {
            assert!(t.iter().any(|s| s == label), "missing {label:?} in {t:?}");
        }
    }

    #[test]
    fn over_limit_bars_get_their_colour_and_legend_entry() {
        let (bars, markers) = (sample_bars(), sample_markers());
        let p = plot(&bars, &SAMPLE_MASK, &markers);
        let (_, l) = layout_of(&p);
        let svg = sample_svg();
        assert!(texts(&svg).iter().any(|t| t == OVER_LIMIT_LABEL));
        // Two over-limit bars in the panel (orders 38 and 42, 2.1 %), each
        // centred on its order and reaching its value; the others are the
        // legend sample above the panel.
        let over: Vec<_> = rects(&svg, OVER_HEX)
            .into_iter()
            .filter(|r| f64::from(r.1) > l.panel.top - 1.0)
            .collect();
        assert_eq!(over.len(), 2, "{over:?}");
        for (r, order) in over.iter().zip([38.0, 42.0]) {
            let centre = f64::from(r.0) + f64::from(r.2) / 2.0;
            assert!((centre - l.x(order)).abs() <= 1.0, "{r:?}");
            assert_eq!(r.1, l.y(2.1).round() as i32);
            assert_eq!(r.1 + r.3, l.panel.bottom.round() as i32);
        }

        // Without a flagged bar: no entry and nothing in that colour.
        let clean: Vec<Bar> = bars
            .iter()
            .map(|b| Bar {
                over_limit: false,
                ..*b
            })
            .collect();
        let svg = spectrum_svg(&plot(&clean, &SAMPLE_MASK, &markers), W, H).unwrap();
        assert!(!texts(&svg).iter().any(|t| t == OVER_LIMIT_LABEL));
        assert!(!svg.contains(OVER_HEX));
        // The former over-limit bars are drawn as compliant ones instead.
        assert!(rects(&svg, BAR_HEX).len() > rects(&sample_svg(), BAR_HEX).len());
    }

    #[test]
    fn decades_cover_the_data() {
        let bars: Vec<Bar> = [(1.0, 100.0), (5.0, 0.02), (7.0, 3.0)]
            .iter()
            .map(|&(order, value)| Bar {
                order,
                value,
                over_limit: false,
            })
            .collect();
        let p = SpectrumPlot {
            floor: 0.01,
            ..plot(&bars, &[], &[])
        };
        let (view, l) = layout_of(&p);
        assert_eq!((view.log_floor, view.top_exp), (-2.0, 2));
        assert_eq!(l.panel.axis.ticks, vec![-2.0, -1.0, 0.0, 1.0, 2.0]);
        let svg = spectrum_svg(&p, W, H).unwrap();
        let t = texts(&svg);
        for label in ["0.01", "0.1", "1", "10", "100"] {
            assert!(t.iter().any(|s| s == label), "missing {label:?} in {t:?}");
        }
        for absent in ["0.001", "1000"] {
            assert!(!t.iter().any(|s| s == absent), "{absent:?} in {t:?}");
        }
        // The fundamental reaches the top decade, which is the panel top.
        let fundamental = rects(&svg, BAR_HEX).into_iter().map(|r| r.1).min().unwrap();
        assert_eq!(fundamental, l.panel.top.round() as i32);

        // A value a rounding error over 100 opens no decade above it; one
        // clearly over does; a mask above the data raises the top too.
        let top_for = |value: f64, mask: &[(f64, f64)]| {
            let bars = [Bar {
                order: 1.0,
                value,
                over_limit: false,
            }];
            validate(&SpectrumPlot {
                floor: 0.01,
                ..plot(&bars, mask, &[])
            })
            .unwrap()
            .top_exp
        };
        assert_eq!(top_for(100.000_000_01, &[]), 2);
        assert_eq!(top_for(101.0, &[]), 3);
        assert_eq!(top_for(5.0, &[(0.0, 20.0)]), 2);
        // Everything under the floor still shows one decade above it.
        assert_eq!(top_for(0.0, &[]), -1);
        // A mask step beyond the last bar neither widens x nor raises y.
        assert_eq!(top_for(5.0, &[(0.0, 8.0), (50.0, 500.0)]), 1);
    }

    #[test]
    fn many_decades_are_labelled_sparsely_as_powers() {
        let bars = [Bar {
            order: 1.0,
            value: 100.0,
            over_limit: false,
        }];
        // 32 decades on a ~370 px panel: too tight to label each one.
        let p = SpectrumPlot {
            floor: 1e-30,
            ..plot(&bars, &[], &[])
        };
        let (_, l) = layout_of(&p);
        assert!(l.decade_stride > 1, "{}", l.decade_stride);
        assert!(l.power_labels);
        let ticks = &l.panel.axis.ticks;
        assert!(ticks.len() >= 2, "{ticks:?}");
        for pair in ticks.windows(2) {
            let gap = l.panel.y(pair[0]) - l.panel.y(pair[1]);
            assert!(gap >= MIN_Y_TICK_SPACING * l.s.k - 1e-9, "{gap}");
        }
        assert!(ticks.iter().all(|&e| (e as i32) % l.decade_stride == 0));
        let t = texts(&spectrum_svg(&p, W, H).unwrap());
        assert!(t.iter().any(|s| s == "10⁰"), "{t:?}");
        // One way of writing throughout: no decimals beside the powers.
        assert!(!t.iter().any(|s| s == "0.001" || s == "100"), "{t:?}");

        assert_eq!(decade_label(-3, false), "0.001");
        assert_eq!(decade_label(-1, false), "0.1");
        assert_eq!(decade_label(0, false), "1");
        assert_eq!(decade_label(2, false), "100");
        assert_eq!(decade_label(-6, true), "10⁻⁶");
        assert_eq!(decade_stride(50.0, 32.0), 1);
        assert_eq!(decade_stride(20.0, 32.0), 2);
        assert_eq!(decade_stride(12.0, 32.0), 3);
        assert_eq!(decade_stride(10.0, 32.0), 5);
        assert_eq!(decade_stride(1.0, 32.0), 50);
        assert_eq!(decade_stride(f64::NAN, 32.0), 1);
    }

    #[test]
    fn mask_steps_land_on_their_orders() {
        let (bars, markers) = (sample_bars(), sample_markers());
        let p = plot(&bars, &SAMPLE_MASK, &markers);
        let (view, l) = layout_of(&p);
        // Bars reach order 120, so the axis runs 0 .. 120 + 4 %.
        assert_eq!(view.x_lo, 0.0);
        assert!((view.x_hi - 124.8).abs() < 1e-9, "{}", view.x_hi);
        let svg = sample_svg();
        let in_panel: Vec<Vec<(i32, i32)>> = polylines(&svg, MASK_HEX)
            .into_iter()
            .filter(|pts| f64::from(pts[0].1) > l.panel.top - 1.0)
            .collect();
        assert_eq!(in_panel.len(), 1, "{in_panel:?}");
        let got = &in_panel[0];

        // Expected from the documented mapping, computed independently of
        // the layout's own x(): left + (h - 0) / (x_hi - 0) * width.
        let width = l.panel.right - l.panel.left;
        let xp = |h: f64| (l.panel.left + h / 124.8 * width).round() as i32;
        let yp = |v: f64| {
            let frac = (f64::log10(v) + 3.0) / 5.0;
            (l.panel.bottom - frac * (l.panel.bottom - l.panel.top)).round() as i32
        };
        let mut want = Vec::new();
        let ends = [11.0, 17.0, 23.0, 35.0, 124.8];
        for (&(start, limit), end) in SAMPLE_MASK.iter().zip(ends) {
            want.push((xp(start), yp(limit)));
            want.push((xp(end), yp(limit)));
        }
        assert_eq!(got, &want);
        assert_eq!(got.last().unwrap().0, l.panel.right.round() as i32);
        // Lower limits lie lower, and the risers are vertical.
        assert!(got.windows(2).all(|w| w[1].1 >= w[0].1 && w[1].0 >= w[0].0));

        // Out of order and clipped at both ends: same picture as sorted;
        // a step before order 0 starts at the left edge.
        let shuffled = [
            (35.0, 0.3),
            (-5.0, 4.0),
            (17.0, 1.5),
            (11.0, 2.0),
            (23.0, 0.6),
        ];
        let v2 = validate(&plot(&bars, &shuffled, &markers)).unwrap();
        assert_eq!(v2.mask.first(), Some(&(-5.0, 4.0)));
        let pts = mask_points(&v2, &l);
        assert_eq!(pts[0].0, l.panel.left);
        assert_eq!(pts.len(), 10);
    }

    /// 3000 lines: a falling envelope, clusters every 40 orders, every
    /// 97th line flagged.
    fn dense_bars() -> Vec<Bar> {
        (1..=3000)
            .map(|h| {
                let hf = f64::from(h);
                let near = (hf - 40.0 * (hf / 40.0).round()).abs();
                let value = if h == 1 {
                    100.0
                } else {
                    30.0 / hf.sqrt() * (-near / 3.0).exp() + 0.002
                };
                Bar {
                    order: hf,
                    value,
                    over_limit: h % 97 == 0,
                }
            })
            .collect()
    }

    #[test]
    fn dense_spectrum_stays_small_and_keeps_peaks() {
        let bars = dense_bars();
        let mask = [(0.0, 4.0), (35.0, 0.3)];
        let markers = [Marker {
            label: "m_f".into(),
            at: 40.0,
        }];
        let p = plot(&bars, &mask, &markers);
        let svg = spectrum_svg(&p, W, H).unwrap();
        assert!(svg.len() < 150_000, "{} bytes", svg.len());
        let (_, l) = layout_of(&p);
        let panel_cols = ((l.panel.right - l.panel.left) / l.bar_width).ceil() as usize + 1;
        let normal = rects(&svg, BAR_HEX);
        assert!(normal.len() <= panel_cols, "{} bars", normal.len());
        assert!(normal.len() > panel_cols / 2, "{} bars", normal.len());
        // Each of the 30 flagged lines is drawn (they are 97 orders apart).
        let over = rects(&svg, OVER_HEX)
            .into_iter()
            .filter(|r| f64::from(r.1) > l.panel.top - 1.0)
            .count();
        assert_eq!(over, 30);
        // Merging keeps the tallest: the fundamental still reaches the top.
        assert!(normal.iter().any(|r| r.1 == l.panel.top.round() as i32));
        // The x axis has whole-order ticks, a handful of them.
        assert!(
            l.x_ticks.len() >= 4 && l.x_ticks.len() <= 13,
            "{:?}",
            l.x_ticks
        );
        assert!(l.x_ticks.iter().all(|t| t.fract() == 0.0));
        assert!(texts(&svg).iter().any(|t| t == "3000"));
    }

    #[test]
    fn merging_never_hides_an_over_limit_line() {
        let bars = [
            Bar {
                order: 1000.0,
                value: 10.0,
                over_limit: false,
            },
            Bar {
                order: 1000.2,
                value: 1.0,
                over_limit: true,
            },
            Bar {
                order: 1000.1,
                value: 5.0,
                over_limit: false,
            },
        ];
        let p = plot(&bars, &[], &[]);
        let (_, l) = layout_of(&p);
        let [normal, over] = &l.bars;
        assert_eq!(normal.len(), 1);
        assert_eq!(normal[0].x, l.x(1000.0));
        assert_eq!(normal[0].top, l.y(10.0));
        assert_eq!(over.len(), 1);
        assert_eq!(over[0].top, l.y(1.0));
        // Drawn after the compliant bars, so on top of them.
        let svg = spectrum_svg(&p, W, H).unwrap();
        let (first_over, last_bar) = (
            svg.find(&format!("fill=\"{OVER_HEX}\"")).unwrap(),
            svg.rfind(&format!("fill=\"{BAR_HEX}\"")).unwrap(),
        );
        assert!(first_over > last_bar);
    }

    #[test]
    fn sparse_bars_are_wider_but_thin() {
        let (bars, markers) = (sample_bars(), sample_markers());
        let (_, l) = layout_of(&plot(&bars, &SAMPLE_MASK, &markers));
        // 125 orders over ~2400 units: bars at the 3 px cap.
        assert_eq!(l.bar_width, f64::from(stroke(l.s.k, BAR_WIDTH_PX.1)));
        // Under-floor bars (0, -1, 1e-9 at orders 60..62) draw nothing.
        let drawn: Vec<f64> = l.bars[0].iter().map(|m| m.x).collect();
        for h in [60.0, 61.0, 62.0] {
            assert!(!drawn.contains(&l.x(h)));
        }
        assert!(drawn.contains(&l.x(120.0)));
    }

    #[test]
    fn dc_and_negative_orders_get_a_left_margin() {
        let bars = [
            Bar {
                order: 0.0,
                value: 1.0,
                over_limit: false,
            },
            Bar {
                order: 50.0,
                value: 1.0,
                over_limit: false,
            },
        ];
        let v = validate(&plot(&bars, &[], &[])).unwrap();
        assert!(v.x_lo < 0.0 && v.x_lo > -5.0, "{v:?}");
        let single = [Bar {
            order: 1.0,
            value: 100.0,
            over_limit: false,
        }];
        let v = validate(&plot(&single, &[], &[])).unwrap();
        assert_eq!((v.x_lo, v.x_hi), (0.0, 1.5));
        assert!(spectrum_svg(&plot(&single, &[], &[]), W, H).is_ok());
    }

    #[test]
    fn bad_input_is_an_error_not_a_panic() {
        let render = |p: SpectrumPlot| spectrum_svg(&p, W, H);
        assert_eq!(render(plot(&[], &[], &[])), Err(PlotError::NoCurves));
        let mut bars = sample_bars();
        bars[4].value = f64::NAN;
        assert_eq!(
            render(plot(&bars, &[], &[])),
            Err(PlotError::NonFinite {
                label: BARS_NAME.into(),
                index: 4
            })
        );
        bars[4].value = 1.0;
        bars[2].order = f64::INFINITY;
        assert!(matches!(
            render(plot(&bars, &[], &[])),
            Err(PlotError::NonFinite { index: 2, .. })
        ));
        let ok = sample_bars();
        assert_eq!(
            render(plot(&ok, &[(1.0, 4.0), (11.0, f64::NAN)], &[])),
            Err(PlotError::NonFinite {
                label: "Limit".into(),
                index: 1
            })
        );
        let bad_marker = [Marker {
            label: "m_f".into(),
            at: f64::NAN,
        }];
        assert_eq!(
            render(plot(&ok, &[], &bad_marker)),
            Err(PlotError::BadMarker {
                label: "m_f".into()
            })
        );
        for floor in [0.0, -1.0, f64::NAN, f64::INFINITY, 1e-300, 1e300] {
            assert_eq!(
                render(SpectrumPlot {
                    floor,
                    ..plot(&ok, &[], &[])
                }),
                Err(PlotError::UnusableRange { axis: 'y' }),
                "floor {floor}"
            );
        }
        let huge = [Bar {
            order: 1.0,
            value: 1e305,
            over_limit: false,
        }];
        assert_eq!(
            render(plot(&huge, &[], &[])),
            Err(PlotError::UnusableRange { axis: 'y' })
        );
        let far = [
            Bar {
                order: -1e308,
                value: 1.0,
                over_limit: false,
            },
            Bar {
                order: 1e308,
                value: 1.0,
                over_limit: false,
            },
        ];
        assert_eq!(
            render(plot(&far, &[], &[])),
            Err(PlotError::UnusableRange { axis: 'x' })
        );
        for (w, h) in [(60, 40), (720, 90), (30_000, 440)] {
            assert_eq!(
                spectrum_svg(&plot(&ok, &[], &[]), w, h),
                Err(PlotError::BadSize {
                    width: w,
                    height: h
                })
            );
        }
    }

    /// Writes the samples for a visual check:
    /// `cargo test --lib report::spectrum_plot -- --ignored`.
    #[test]
    #[ignore]
    fn write_sample_svgs() {
        let dir = std::env::temp_dir();
        std::fs::write(dir.join("spectrum_sample.svg"), sample_svg()).unwrap();
        let bars = dense_bars();
        let markers = [Marker {
            label: "m_f".into(),
            at: 40.0,
        }];
        let dense = spectrum_svg(&plot(&bars, &[(0.0, 4.0), (35.0, 0.3)], &markers), W, H);
        std::fs::write(dir.join("spectrum_dense.svg"), dense.unwrap()).unwrap();
    }

    #[test]
    fn a_zero_limit_ends_the_mask_instead_of_running_along_the_floor() {
        // The grid-current mask stops where the IEEE 1547 tables stop (order 50).
        let bars = [
            Bar {
                order: 1.0,
                value: 100.0,
                over_limit: false,
            },
            Bar {
                order: 200.0,
                value: 0.5,
                over_limit: false,
            },
        ];
        static WITH_END: [(f64, f64); 2] = [(1.5, 4.0), (49.5, 0.0)];
        static OPEN: [(f64, f64); 1] = [(1.5, 4.0)];
        let plot = |mask: &'static [(f64, f64)]| SpectrumPlot {
            title: "",
            x_label: "h",
            y_label: "%",
            bars: &bars,
            mask,
            mask_label: "limit",
            floor: 1e-3,
            markers: &[],
        };
        let (a, b) = (plot(&WITH_END), plot(&OPEN));
        let (va, vb) = (validate(&a).unwrap(), validate(&b).unwrap());
        let la = SpectrumLayout::new(&a, &va, 720, 440).unwrap();
        let lb = SpectrumLayout::new(&b, &vb, 720, 440).unwrap();
        let (pa, pb) = (mask_points(&va, &la), mask_points(&vb, &lb));
        // Both start at order 1.5; the ended mask stops at order 49.5, the open one
        // runs to the right edge.
        assert_eq!(pa.len(), 2);
        assert!((pa[1].0 - la.x(49.5)).abs() < 1e-9);
        assert!(pb[1].0 > pa[1].0 + 100.0);
    }
}
