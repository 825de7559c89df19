//! Plots for the typst report, written as SVG documents: Bode plots of the
//! output filter (gain above phase on a shared logarithmic frequency axis,
//! one line per load case) and general x-y line plots on linear axes (e.g.
//! modulation index against DC voltage) with horizontal limit lines.
//!
//! plotters supplies the drawing primitives and the SVG writer, but the
//! layout is computed here in pixel space instead of through plotters'
//! chart/mesh builder. The mesh builder chooses its own ticks and places
//! labels where it likes; a calculation package needs decade grid lines
//! with engineering labels, fixed 20 dB / 45° grids, and a legend, marker
//! labels and limit labels that can never sit on top of the curves. Doing
//! the layout ourselves also keeps every coordinate a pure function of the
//! input, which is what makes the output byte-reproducible.
//!
//! Both plot kinds share one page grammar (title, legend, marker label row,
//! panel(s), x tick labels, x axis title) and the helpers that lay it out
//! and draw it, so the figures of a package look like one family.

use std::error::Error;
use std::fmt;

use plotters::backend::SVGBackend;
use plotters::coord::Shift;
use plotters::drawing::{DrawingArea, IntoDrawingArea};
use plotters::element::{Circle, PathElement, Text};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{FontStyle, FontTransform, IntoFont, RGBColor, ShapeStyle, TextStyle};

/// One load case: `(frequency Hz, gain dB, phase deg)` samples.
///
/// Points may come in any order (they are sorted by frequency before
/// drawing). Phase should be unwrapped by the caller: a jump from -180° to
/// +180° is drawn as the jump it is.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    pub label: String,
    pub points: Vec<(f64, f64, f64)>,
}

/// A vertical reference line at x = `at`, labelled above the plot: in a Bode
/// plot a frequency in Hz (the fundamental, the filter corner, the switching
/// frequency), in a line plot a value on its x axis (e.g. a DC voltage).
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    pub label: String,
    pub at: f64,
}

/// Everything one Bode figure shows. An empty `title` leaves out the title
/// line; a curve with an empty label is drawn but left out of the legend.
#[derive(Debug, Clone, Copy)]
pub struct BodePlot<'a> {
    pub title: &'a str,
    pub curves: &'a [Curve],
    pub markers: &'a [Marker],
}

/// One line of an x-y plot. Points are joined in the order given, so a
/// curve that doubles back (a locus, a hysteresis loop) is drawn as such; a
/// line whose points all land on one spot is drawn as a dot. A series with
/// an empty label is drawn but left out of the legend.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub label: String,
    pub points: Vec<(f64, f64)>,
}

/// A horizontal reference line at `y`, e.g. a limit, drawn dashed across the
/// panel with its label just outside the right edge.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    pub label: String,
    pub y: f64,
}

/// Everything one x-y line figure shows: a single panel with linear axes
/// whose ranges cover the series, levels and markers. An empty `title`
/// leaves out the title line.
#[derive(Debug, Clone, Copy)]
pub struct LinePlot<'a> {
    pub title: &'a str,
    /// Axis titles with their unit, e.g. "DC voltage (V)".
    pub x_label: &'a str,
    pub y_label: &'a str,
    pub series: &'a [Series],
    pub levels: &'a [Level],
    pub markers: &'a [Marker],
}

/// Why a plot could not be drawn. Bad data is reported, never drawn as
/// garbage and never a panic.
#[derive(Debug, Clone, PartialEq)]
pub enum PlotError {
    /// The plot has no curves (Bode) or series (line plot) at all.
    NoCurves,
    /// A curve or series has no points.
    EmptyCurve { label: String },
    /// A point has a NaN or infinite coordinate.
    NonFinite { label: String, index: usize },
    /// A point's frequency is zero or negative, which a log axis cannot show.
    NonPositiveFrequency { label: String, index: usize },
    /// A marker's position is not finite (or, on a log frequency axis, not
    /// above zero).
    BadMarker { label: String },
    /// A level's value is not finite.
    BadLevel { label: String },
    /// Every x value, markers included, is the same (to nine significant
    /// digits): a linear x axis needs some width to draw.
    ZeroWidthRange { x: f64 },
    /// The values on `axis` ('x' or 'y') span a range that overflows, or
    /// one too small for the tick arithmetic (below about 1e-280).
    UnusableRange { axis: char },
    /// The canvas is too small to lay out the text and readable panels, or
    /// absurdly large.
    BadSize { width: u32, height: u32 },
    /// The SVG writer failed (not expected when writing to a string).
    Drawing(String),
}

impl fmt::Display for PlotError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PlotError::NoCurves => write!(f, "the plot has no curves to draw"),
            PlotError::EmptyCurve { label } => write!(f, "curve '{label}' has no points"),
            PlotError::NonFinite { label, index } => {
                write!(f, "curve '{label}' point {index} is not a finite number")
            }
            PlotError::NonPositiveFrequency { label, index } => write!(
                f,
                "curve '{label}' point {index} has a frequency <= 0, which a log axis cannot show"
            ),
            PlotError::BadMarker { label } => write!(
                f,
                "marker '{label}' needs a finite position (above zero on a frequency axis)"
            ),
            PlotError::BadLevel { label } => {
                write!(f, "level '{label}' needs a finite value")
            }
            PlotError::ZeroWidthRange { x } => write!(
                f,
                "every point and marker is at x = {x}: the x axis needs a range of some width"
            ),
            PlotError::UnusableRange { axis } => write!(
                f,
                "the {axis} values span a range too wide (overflowing) or too small \
                 (below about 1e-280) to put ticks on"
            ),
            PlotError::BadSize { width, height } => write!(
                f,
                "canvas {width} x {height} px cannot hold the plot: too small for \
                 its text and readable panels, or over {MAX_SIDE} px a side"
            ),
            PlotError::Drawing(msg) => write!(f, "drawing the plot failed: {msg}"),
        }
    }
}

impl Error for PlotError {}

/// Log-spaced frequencies from `f_lo` to `f_hi` with (at least)
/// `per_decade` points per decade; both ends are included exactly.
///
/// The points are evenly spaced in log frequency, so for whole-decade spans
/// they land on the usual 10^(k/n) grid (10 Hz..100 kHz at 10 per decade
/// gives 41 points). For a fractional span the step is shortened slightly
/// rather than leaving a short last interval. Invalid input (non-finite or
/// non-positive bounds, `f_hi < f_lo`, `per_decade == 0`, or more than
/// [`LOG_SPACE_MAX_POINTS`] points) gives an empty vector; `f_lo == f_hi`
/// gives that single frequency.
pub fn log_space(f_lo: f64, f_hi: f64, per_decade: usize) -> Vec<f64> {
    if !(f_lo.is_finite() && f_hi.is_finite()) || f_lo <= 0.0 || f_hi < f_lo || per_decade == 0 {
        return Vec::new();
    }
    if f_hi == f_lo {
        return vec![f_lo];
    }
    let (lo, hi) = (f_lo.log10(), f_hi.log10());
    let exact = (hi - lo) * per_decade as f64;
    if exact > LOG_SPACE_MAX_POINTS as f64 {
        // Refuse rather than abort on an impossible allocation.
        return Vec::new();
    }
    // The small allowance keeps 4.0000000001 decades (rounding noise in
    // log10) from gaining a spurious extra interval.
    let intervals = ((exact - 1e-9).ceil() as usize).max(1);
    let mut out: Vec<f64> = (0..=intervals)
        .map(|i| 10f64.powf(lo + (hi - lo) * i as f64 / intervals as f64))
        .collect();
    // powf(log10(x)) need not round-trip; callers rely on exact endpoints.
    out[0] = f_lo;
    out[intervals] = f_hi;
    out
}

/// Upper bound on the number of points [`log_space`] will produce.
pub const LOG_SPACE_MAX_POINTS: usize = 10_000_000;

/// Draws the plot as an SVG document, `width` x `height` in px (e.g. 720 x 560).
pub fn bode_svg(plot: &BodePlot, width: u32, height: u32) -> Result<String, PlotError> {
    let data = validate(plot)?;
    check_size(width, height)?;
    let layout = Layout::new(plot, &data, width, height)?;
    render_svg(width, height, |root| draw(root, plot, &data, &layout))
}

/// Draws the line plot as an SVG document, `width` x `height` in px (e.g.
/// 720 x 440).
pub fn line_svg(plot: &LinePlot, width: u32, height: u32) -> Result<String, PlotError> {
    let view = validate_line(plot)?;
    check_size(width, height)?;
    let layout = LineLayout::new(plot, &view, width, height)?;
    render_svg(width, height, |root| draw_line_plot(root, plot, &layout))
}

/// Refuses sizes whose oversampled drawing grid would overflow `u32`
/// (checked before any layout multiplies by [`OVERSAMPLE`]).
pub(crate) fn check_size(width: u32, height: u32) -> Result<(), PlotError> {
    if width > MAX_SIDE || height > MAX_SIDE {
        return Err(PlotError::BadSize { width, height });
    }
    Ok(())
}

/// Runs `paint` on an oversampled plotters SVG canvas and returns the
/// document sized `width` x `height`.
pub(crate) fn render_svg(
    width: u32,
    height: u32,
    paint: impl FnOnce(&Area) -> DrawResult,
) -> Result<String, PlotError> {
    let (iw, ih) = (width * OVERSAMPLE, height * OVERSAMPLE);
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, (iw, ih)).into_drawing_area();
        paint(&root).map_err(|e| PlotError::Drawing(e.to_string()))?;
        root.present()
            .map_err(|e| PlotError::Drawing(e.to_string()))?;
    }
    // plotters sized the document in internal units; the caller asked for
    // width x height, so the root element is rewritten to that size with the
    // internal grid as its viewBox.
    let body = buf
        .split_once('\n')
        .filter(|(head, _)| head.starts_with("<svg "))
        .map(|(_, body)| body)
        .ok_or_else(|| PlotError::Drawing("unexpected SVG header from plotters".into()))?;
    Ok(format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height}\" \
         viewBox=\"0 0 {iw} {ih}\">\n{body}"
    ))
}

// ---------------------------------------------------------------------------
// Style constants

/// A family typst ships in its embedded fonts: typst resolves SVG text
/// against its own font book (lower-cased family name), so a family it does
/// not have would silently fall back to something else.
const FONT_FAMILY: &str = "Libertinus Serif";

/// plotters-svg writes `font-size = size / 1.24`; sizes below are the
/// intended SVG font sizes and are multiplied back up before handing them
/// to plotters.
const PLOTTERS_FONT_SCALE: f64 = 1.24;

/// plotters' backend coordinates are whole numbers. Drawing on a grid four
/// times finer than the requested size (and scaling back with the viewBox)
/// keeps smooth curves free of visible pixel stairs in the PDF, and allows
/// sub-pixel line widths.
pub(crate) const OVERSAMPLE: u32 = 4;
/// Upper bound on either side (px) so the oversampled size cannot overflow.
const MAX_SIDE: u32 = 20_000;

/// Advance widths (1/1000 em) of Libertinus Serif Regular for ASCII 32..=126,
/// read from the font typst embeds. plotters' own estimate (0.56 em for
/// every byte) is far off for a proportional serif, and these widths decide
/// legend spacing, marker-label collisions and the left margin.
const ASCII_ADVANCE: [u16; 95] = [
    250, 288, 336, 465, 465, 637, 705, 190, 298, 298, 369, 550, 220, 338, 220, 323, 465, 465, 465,
    465, 465, 465, 465, 465, 465, 465, 236, 236, 550, 550, 550, 435, 895, 695, 588, 646, 701, 557,
    485, 685, 730, 297, 322, 637, 528, 839, 699, 702, 541, 702, 587, 485, 597, 661, 652, 951, 660,
    575, 604, 356, 287, 356, 518, 486, 392, 457, 493, 428, 506, 447, 310, 500, 538, 271, 272, 512,
    264, 790, 542, 504, 519, 503, 372, 390, 316, 531, 497, 747, 490, 515, 424, 277, 205, 277, 449,
];
/// Non-ASCII glyphs (ζ, Ω, °, −) are mostly 0.27..0.70 em; assume the wide end.
const OTHER_ADVANCE: u16 = 650;
/// Kerning and hinting are ignored; a few percent spare covers them.
const WIDTH_SPARE: f64 = 1.05;

/// Gain axis limits: a lightly damped LC peak (+40 dB) still fits with
/// headroom, and nothing below -100 dB matters for a filter's stop band.
const GAIN_CLIP_DB: (f64, f64) = (-100.0, 60.0);
const GAIN_STEPS_DB: [f64; 3] = [20.0, 40.0, 100.0];
const PHASE_STEPS_DEG: [f64; 3] = [45.0, 90.0, 180.0];
/// More grid intervals than this crowd the tick labels on a 200 px panel.
const MAX_Y_INTERVALS: f64 = 8.0;

/// Line plots: share of the data span left free on each side, so no line
/// or marker sits on the frame, which would hide it.
pub(crate) const LINE_MARGIN: f64 = 0.04;
/// A span below this fraction of the values' magnitude counts as zero
/// width: tick labels could not tell its ticks apart.
const FLAT_RELATIVE: f64 = 1e-9;
/// Linear tick steps are kept above this size: 10^-280 still leaves the
/// tick arithmetic (and 10^-exponent) far from subnormals.
pub(crate) const MIN_STEP_EXP: i32 = -280;
/// Linear axes: at most this many tick intervals, and ticks at least this
/// far apart (output px), so the grid guides the eye without crowding.
pub(crate) const MAX_LIN_X_INTERVALS: f64 = 12.0;
const MAX_LIN_Y_INTERVALS: f64 = 8.0;
pub(crate) const MIN_X_TICK_SPACING: f64 = 64.0;
pub(crate) const MIN_Y_TICK_SPACING: f64 = 32.0;
/// Level labels: gap (output px) between leader end and text, and the
/// height (in font sizes) kept clear around each label.
const LEVEL_TEXT_GAP: f64 = 3.0;
const LEVEL_ROW: f64 = 1.25;

pub(crate) const INK: RGBColor = RGBColor(30, 30, 30);
const FRAME: RGBColor = RGBColor(60, 60, 60);
pub(crate) const GRID_MAJOR: RGBColor = RGBColor(196, 196, 196);
pub(crate) const GRID_MINOR: RGBColor = RGBColor(232, 232, 232);
const GRID_ZERO: RGBColor = RGBColor(140, 140, 140);
const MARKER: RGBColor = RGBColor(90, 90, 90);
pub(crate) const BACKGROUND: RGBColor = RGBColor(255, 255, 255);

/// Curve colours: hues that stay apart for common colour-vision
/// deficiencies, with lightness spread so they also separate in greyscale.
pub(crate) const PALETTE: [RGBColor; 7] = [
    RGBColor(0, 90, 170),
    RGBColor(205, 85, 0),
    RGBColor(0, 135, 95),
    RGBColor(120, 60, 160),
    RGBColor(185, 135, 0),
    RGBColor(25, 25, 25),
    RGBColor(200, 60, 130),
];

/// Dash patterns (on, off, ... in output px; empty is solid). Seven colours
/// against five patterns repeat only after 35 curves, and the pattern alone
/// tells the first five apart in greyscale print.
const DASHES: [&[f64]; 5] = [
    &[],
    &[10.0, 4.0],
    &[2.0, 3.0],
    &[10.0, 3.0, 2.0, 3.0],
    &[18.0, 3.0, 2.0, 3.0, 2.0, 3.0],
];

// ---------------------------------------------------------------------------
// Input checking

/// Validated input: curves sorted by frequency, and the frequency span.
struct Data {
    curves: Vec<Vec<(f64, f64, f64)>>,
    f_lo: f64,
    f_hi: f64,
}

fn validate(plot: &BodePlot) -> Result<Data, PlotError> {
    if plot.curves.is_empty() {
        return Err(PlotError::NoCurves);
    }
    let mut f_lo = f64::INFINITY;
    let mut f_hi = f64::NEG_INFINITY;
    let mut curves = Vec::with_capacity(plot.curves.len());
    for curve in plot.curves {
        if curve.points.is_empty() {
            return Err(PlotError::EmptyCurve {
                label: curve.label.clone(),
            });
        }
        for (index, &(f, g, p)) in curve.points.iter().enumerate() {
            if !(f.is_finite() && g.is_finite() && p.is_finite()) {
                return Err(PlotError::NonFinite {
                    label: curve.label.clone(),
                    index,
                });
            }
            if f <= 0.0 {
                return Err(PlotError::NonPositiveFrequency {
                    label: curve.label.clone(),
                    index,
                });
            }
            f_lo = f_lo.min(f);
            f_hi = f_hi.max(f);
        }
        let mut pts = curve.points.clone();
        // Stable sort keeps the caller's order for equal frequencies, so the
        // output stays a function of the input alone.
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        curves.push(pts);
    }
    for m in plot.markers {
        if !m.at.is_finite() || m.at <= 0.0 {
            return Err(PlotError::BadMarker {
                label: m.label.clone(),
            });
        }
        // A marker outside the data is still worth showing (e.g. fsw above
        // a sweep that stops short), so the axis grows to include it.
        f_lo = f_lo.min(m.at);
        f_hi = f_hi.max(m.at);
    }
    if f_hi / f_lo < 1.001 {
        // A single frequency has no span to draw; centre it in one decade.
        let c = f_lo;
        f_lo = c / 10f64.sqrt();
        f_hi = c * 10f64.sqrt();
    }
    Ok(Data { curves, f_lo, f_hi })
}

/// The visible window of a line plot, data plus margins, in data units.
#[derive(Debug, Clone, Copy, PartialEq)]
struct View {
    x_lo: f64,
    x_hi: f64,
    y_lo: f64,
    y_hi: f64,
}

fn validate_line(plot: &LinePlot) -> Result<View, PlotError> {
    if plot.series.is_empty() {
        return Err(PlotError::NoCurves);
    }
    let (mut x_lo, mut x_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut y_lo, mut y_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for series in plot.series {
        if series.points.is_empty() {
            return Err(PlotError::EmptyCurve {
                label: series.label.clone(),
            });
        }
        for (index, &(x, y)) in series.points.iter().enumerate() {
            if !(x.is_finite() && y.is_finite()) {
                return Err(PlotError::NonFinite {
                    label: series.label.clone(),
                    index,
                });
            }
            x_lo = x_lo.min(x);
            x_hi = x_hi.max(x);
            y_lo = y_lo.min(y);
            y_hi = y_hi.max(y);
        }
    }
    // References outside the data still matter (a limit the design stays
    // well clear of is the point of the figure), so the axes grow to them.
    for level in plot.levels {
        if !level.y.is_finite() {
            return Err(PlotError::BadLevel {
                label: level.label.clone(),
            });
        }
        y_lo = y_lo.min(level.y);
        y_hi = y_hi.max(level.y);
    }
    for m in plot.markers {
        if !m.at.is_finite() {
            return Err(PlotError::BadMarker {
                label: m.label.clone(),
            });
        }
        x_lo = x_lo.min(m.at);
        x_hi = x_hi.max(m.at);
    }
    let (x_lo, x_hi) = match padded(x_lo, x_hi, 'x')? {
        Some(range) => range,
        None => return Err(PlotError::ZeroWidthRange { x: x_lo }),
    };
    // A constant series (a flat limit, an unregulated output) is a normal
    // result, so a flat y range gets a window of its own around the value.
    let (y_lo, y_hi) = match padded(y_lo, y_hi, 'y')? {
        Some(range) => range,
        None => {
            let c = (y_lo + y_hi) / 2.0;
            let half = if c == 0.0 { 1.0 } else { 0.1 * c.abs() };
            (c - half, c + half)
        }
    };
    Ok(View {
        x_lo,
        x_hi,
        y_lo,
        y_hi,
    })
}

/// `lo..hi` widened by [`LINE_MARGIN`] on each side; `None` if the span is
/// zero (see [`FLAT_RELATIVE`]), an error if it overflows.
fn padded(lo: f64, hi: f64, axis: char) -> Result<Option<(f64, f64)>, PlotError> {
    let span = hi - lo;
    let pad = span * LINE_MARGIN;
    let (l, h) = (lo - pad, hi + pad);
    if !(span.is_finite() && l.is_finite() && h.is_finite()) {
        return Err(PlotError::UnusableRange { axis });
    }
    if span <= FLAT_RELATIVE * lo.abs().max(hi.abs()) {
        return Ok(None);
    }
    Ok(Some((l, h)))
}

// ---------------------------------------------------------------------------
// Axes

/// A vertical axis: range, grid step, and the tick values.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct YAxis {
    pub(crate) lo: f64,
    pub(crate) hi: f64,
    pub(crate) ticks: Vec<f64>,
}

/// Rounds the data range outwards to a multiple of the first step in
/// `steps` that keeps the grid uncrowded, then applies `clip`.
fn y_axis(min: f64, max: f64, steps: &[f64], clip: Option<(f64, f64)>) -> YAxis {
    let mut chosen = None;
    for &step in steps {
        let mut lo = (min / step).floor() * step;
        let mut hi = (max / step).ceil() * step;
        // A curve lying on the frame is hidden by it, so data within a few
        // percent of an edge gets one more grid step of headroom.
        let pad = 0.04 * (hi - lo).max(step);
        if max > hi - pad {
            hi += step;
        }
        if min < lo + pad {
            lo -= step;
        }
        if let Some((clip_lo, clip_hi)) = clip {
            let (l, h) = (lo.max(clip_lo), hi.min(clip_hi));
            // If all the data lies outside the clip window, clipping would
            // leave nothing to show; keep the data's own range instead.
            if h > l {
                lo = l;
                hi = h;
            }
        }
        chosen = Some((lo, hi, step));
        if (hi - lo) / step <= MAX_Y_INTERVALS {
            break;
        }
    }
    // `steps` is never empty at the call sites; the fallback only keeps
    // this total.
    let (lo, hi, step) = chosen.unwrap_or((min - 1.0, max + 1.0, (max - min + 2.0) / 2.0));
    let n = ((hi - lo) / step).round() as usize;
    let ticks = (0..=n).map(|i| lo + step * i as f64).collect();
    YAxis { lo, hi, ticks }
}

/// Frequencies of the labelled x ticks: decades, or 1-2-5 (then every
/// integer multiple) when the span holds fewer than two decades.
fn x_ticks(f_lo: f64, f_hi: f64) -> Vec<f64> {
    const SETS: [&[f64]; 3] = [
        &[1.0],
        &[1.0, 2.0, 5.0],
        &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0],
    ];
    let mut best = Vec::new();
    for set in SETS {
        best = multiples_in(f_lo, f_hi, set);
        if best.len() >= 2 {
            break;
        }
    }
    best
}

/// All `m * 10^k` (m from `mantissas`) within `[f_lo, f_hi]`, ascending.
fn multiples_in(f_lo: f64, f_hi: f64, mantissas: &[f64]) -> Vec<f64> {
    let tol = 1e-9;
    let (lo, hi) = (f_lo.log10(), f_hi.log10());
    let mut out = Vec::new();
    let first = lo.floor() as i32 - 1;
    let last = hi.ceil() as i32 + 1;
    for k in first..=last {
        for &m in mantissas {
            let f = m * 10f64.powi(k);
            let lf = f.log10();
            if lf >= lo - tol && lf <= hi + tol {
                out.push(f);
            }
        }
    }
    out
}

/// "10 Hz", "2.5 kHz", "1 MHz": SI prefix chosen by thousands, at most
/// three significant digits, trailing zeros dropped.
fn format_hz(f: f64) -> String {
    const PREFIXES: [(i32, &str); 6] =
        [(-3, "m"), (0, ""), (3, "k"), (6, "M"), (9, "G"), (12, "T")];
    // The small allowance keeps a tick computed as 999.99999... Hz (log
    // noise) from being labelled "1000 Hz" instead of "1 kHz".
    let exp = if f > 0.0 {
        (f.log10() + 1e-9).floor() as i32
    } else {
        0
    };
    let mut chosen = PREFIXES[0];
    for p in PREFIXES {
        if exp >= p.0 {
            chosen = p;
        }
    }
    let mantissa = f / 10f64.powi(chosen.0);
    let decimals = (2 - (mantissa.abs().log10().floor() as i32)).clamp(0, 3) as usize;
    let mut s = format!("{mantissa:.decimals$}");
    if s.contains('.') {
        s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    format!("{s} {}Hz", chosen.1)
}

/// Integer tick label with a typographic minus, as set in print.
fn format_tick(v: f64) -> String {
    let r = v.round() as i64;
    if r < 0 {
        format!("\u{2212}{}", -r)
    } else {
        format!("{r}")
    }
}

/// A 1-2-5 tick step, `mantissa * 10^exp`, kept symbolic so that every tick
/// is computed from an exact integer and one power of ten: `lo + i * step`
/// would accumulate rounding error into the labels (0.30000000000000004).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Step {
    mantissa: i64,
    exp: i32,
}

impl Step {
    /// The smallest 1-2-5 step not below `raw`, or `None` when `raw` is not
    /// a positive number in the range the tick arithmetic handles.
    pub(crate) fn at_least(raw: f64) -> Option<Step> {
        if !(raw.is_finite() && raw > 0.0) {
            return None;
        }
        // log10 can land a hair below an exact power of ten; starting one
        // candidate low and walking up never skips the right step.
        let mut step = Step {
            mantissa: 1,
            exp: raw.log10().floor() as i32,
        };
        if !(MIN_STEP_EXP..=300).contains(&step.exp) {
            return None;
        }
        // The allowance keeps division noise (0.05000000000000001) from
        // pushing the choice one step coarser than intended.
        while step.value() < raw * (1.0 - 1e-9) {
            step = step.next();
        }
        Some(step)
    }

    pub(crate) fn next(self) -> Step {
        match self.mantissa {
            1 => Step {
                mantissa: 2,
                ..self
            },
            2 => Step {
                mantissa: 5,
                ..self
            },
            _ => Step {
                mantissa: 1,
                exp: self.exp + 1,
            },
        }
    }

    pub(crate) fn value(self) -> f64 {
        self.times(1)
    }

    /// `k` steps, rounded once: dividing by an exact 10^n is correctly
    /// rounded, multiplying by an inexact 10^-n is not.
    fn times(self, k: i64) -> f64 {
        let n = (k * self.mantissa) as f64;
        if self.exp >= 0 {
            n * 10f64.powi(self.exp)
        } else {
            n / 10f64.powi(-self.exp)
        }
    }

    /// The multiples of the step within `lo..=hi`, ascending. Callers keep
    /// `(hi - lo) / step` small, so the count and `k` stay small too.
    pub(crate) fn ticks(self, lo: f64, hi: f64) -> Vec<f64> {
        let v = self.value();
        // A tick a billionth of a step outside (rounding) still counts.
        let first = (lo / v - 1e-9).ceil() as i64;
        let last = (hi / v + 1e-9).floor() as i64;
        (first..=last).map(|k| self.times(k)).collect()
    }
}

/// The finest 1-2-5 step that divides `lo..hi` into at most `max_intervals`.
fn lin_step(lo: f64, hi: f64, max_intervals: f64, axis: char) -> Result<Step, PlotError> {
    Step::at_least((hi - lo) / max_intervals).ok_or(PlotError::UnusableRange { axis })
}

/// How one linear axis writes its tick labels: every label with the same
/// number of decimals, exactly as many as the step needs (50 V steps give
/// "650", 0.05 steps "0.75", "0.80"), so a column of labels lines up at
/// the decimal point. Values of a million and up, or below 0.001 with a
/// step finer than 0.0001, would be long strings of digits or of leading
/// zeros; those axes are written as mantissa × 10ⁿ with one exponent for
/// the whole axis, a multiple of three so it reads as an SI prefix
/// (2×10⁻⁶ s is 2 µs). A fine step on values near 1 (1.00001, 1.00002)
/// stays plain: there every digit carries information.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct NumberFormat {
    decimals: usize,
    /// Power of ten factored out of every label, if any.
    exp: Option<i32>,
}

impl NumberFormat {
    pub(crate) fn new(step: Step, ticks: &[f64]) -> NumberFormat {
        let top = ticks.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if top < 1e6 && (top >= 1e-3 || step.exp >= -4) {
            return NumberFormat {
                decimals: (-step.exp).max(0) as usize,
                exp: None,
            };
        }
        // Same allowance as format_hz: 999999.99999 (noise) is 10^6.
        let exp = if top > 0.0 {
            (top.log10() + 1e-9).floor() as i32
        } else {
            step.exp
        }
        .div_euclid(3)
            * 3;
        NumberFormat {
            decimals: (exp - step.exp).max(0) as usize,
            exp: Some(exp),
        }
    }

    pub(crate) fn label(&self, v: f64) -> String {
        let (mantissa, suffix) = match self.exp {
            // A bare "0" reads better than "0.0×10⁶".
            Some(_) if v == 0.0 => return "0".to_string(),
            Some(e) if e >= 0 => (v / 10f64.powi(e), superscript_power(e)),
            Some(e) => (v * 10f64.powi(-e), superscript_power(e)),
            None => (v, String::new()),
        };
        let d = self.decimals;
        let mut s = format!("{mantissa:.d$}");
        if let Some(digits) = s.strip_prefix('-') {
            // Rounding can leave "-0.00", which would read as a value below
            // zero; anything else gets the typographic minus used in print.
            s = if digits.chars().all(|c| c == '0' || c == '.') {
                digits.to_string()
            } else {
                format!("\u{2212}{digits}")
            };
        }
        s + &suffix
    }
}

/// "×10⁶", "×10⁻⁵" for `exp`.
pub(crate) fn superscript_power(exp: i32) -> String {
    const DIGITS: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::from("×10");
    if exp < 0 {
        s.push('⁻');
    }
    for c in exp.unsigned_abs().to_string().bytes() {
        s.push(DIGITS[usize::from(c - b'0')]);
    }
    s
}

/// Estimated rendered width of `text` at SVG font size `size`.
pub(crate) fn text_width(text: &str, size: f64) -> f64 {
    let per_mille: u32 = text
        .chars()
        .map(|c| {
            let i = (c as u32).wrapping_sub(32) as usize;
            u32::from(*ASCII_ADVANCE.get(i).unwrap_or(&OTHER_ADVANCE))
        })
        .sum();
    f64::from(per_mille) / 1000.0 * size * WIDTH_SPARE
}

/// Places labels of widths `w` as near as possible to their wanted centres
/// `x` (`items` sorted by `x`) without overlap (`pad` apart), inside
/// `lo..hi`. Returns the centres.
///
/// Overlapping labels are merged into clusters laid side by side; each
/// cluster is centred so its labels' displacements average to zero, then
/// kept inside the bounds, merging again until nothing overlaps. Isolated
/// labels stay exactly over their markers.
fn spread_labels(items: &[(f64, f64)], pad: f64, lo: f64, hi: f64) -> Vec<f64> {
    struct Cluster {
        first: usize,
        end: usize,
        left: f64,
        width: f64,
    }
    let place = |first: usize, end: usize, width: f64| {
        let mut off = 0.0;
        let mut shift = 0.0;
        for &(x, w) in &items[first..end] {
            shift += x - (off + w / 2.0);
            off += w + pad;
        }
        let left = shift / (end - first) as f64;
        // Too wide for the bounds: the left edge wins, the rest overflows.
        left.min(hi - width).max(lo)
    };
    let mut clusters: Vec<Cluster> = Vec::new();
    for (i, &(_, w)) in items.iter().enumerate() {
        clusters.push(Cluster {
            first: i,
            end: i + 1,
            left: place(i, i + 1, w),
            width: w,
        });
        while let [.., a, b] = clusters.as_slice() {
            if a.left + a.width + pad <= b.left {
                break;
            }
            let (first, end, width) = (a.first, b.end, a.width + pad + b.width);
            clusters.truncate(clusters.len() - 2);
            clusters.push(Cluster {
                first,
                end,
                left: place(first, end, width),
                width,
            });
        }
    }
    let mut out = Vec::with_capacity(items.len());
    for c in &clusters {
        let mut x = c.left;
        for &(_, w) in &items[c.first..c.end] {
            out.push(x + w / 2.0);
            x += w + pad;
        }
    }
    out
}

// ---------------------------------------------------------------------------
// Layout

/// One panel's rectangle (pixels) and its value axis.
pub(crate) struct Panel {
    pub(crate) left: f64,
    pub(crate) right: f64,
    pub(crate) top: f64,
    pub(crate) bottom: f64,
    pub(crate) axis: YAxis,
}

impl Panel {
    pub(crate) fn y(&self, v: f64) -> f64 {
        self.bottom - (v - self.axis.lo) / (self.axis.hi - self.axis.lo) * (self.bottom - self.top)
    }
}

/// A legend entry: which curve (or series) it names, and where its line
/// sample starts (left end, vertical centre).
pub(crate) struct LegendEntry {
    pub(crate) curve: usize,
    pub(crate) x: f64,
    pub(crate) y: f64,
}

pub(crate) struct MarkerLabel {
    pub(crate) marker: usize,
    pub(crate) cx: f64,
}

/// Font sizes (SVG px) and spacings, all scaled with the canvas.
pub(crate) struct Sizes {
    pub(crate) k: f64,
    pub(crate) margin: f64,
    pub(crate) title: f64,
    pub(crate) legend: f64,
    pub(crate) tick: f64,
    pub(crate) axis_title: f64,
    pub(crate) marker: f64,
    pub(crate) legend_row: f64,
    pub(crate) legend_sample: f64,
    pub(crate) legend_text_gap: f64,
    pub(crate) legend_gap: f64,
    pub(crate) marker_row: f64,
    pub(crate) leader: f64,
}

impl Sizes {
    pub(crate) fn new(width: u32, height: u32) -> Sizes {
        // Designed at 720 x 560; scaling keeps the proportions at other
        // sizes, within bounds where text stays readable.
        let k = (f64::from(width) / 720.0)
            .min(f64::from(height) / 560.0)
            .clamp(0.7, 3.0)
            * f64::from(OVERSAMPLE);
        Sizes {
            k,
            margin: 12.0 * k,
            title: 16.0 * k,
            legend: 13.0 * k,
            tick: 12.5 * k,
            axis_title: 13.5 * k,
            marker: 12.5 * k,
            legend_row: 20.0 * k,
            legend_sample: 34.0 * k,
            legend_text_gap: 6.0 * k,
            legend_gap: 24.0 * k,
            marker_row: 16.0 * k,
            leader: 9.0 * k,
        }
    }
}

/// The canvas in drawing units. All layout is done on the oversampled grid.
pub(crate) fn canvas(width: u32, height: u32) -> (f64, f64) {
    (
        f64::from(width * OVERSAMPLE),
        f64::from(height * OVERSAMPLE),
    )
}

/// Centre of the rotated y-axis title column.
pub(crate) fn y_title_x(s: &Sizes) -> f64 {
    s.margin + 0.6 * s.axis_title
}

/// Left edge of the panels: the y-axis title column, tick labels up to
/// `tick_label_w` wide, and a gap.
pub(crate) fn panels_left(s: &Sizes, tick_label_w: f64) -> f64 {
    s.margin + 1.4 * s.axis_title + tick_label_w + 8.0 * s.k
}

/// Space right of the panels: a margin, or half the last x tick label if
/// that is wider (the label is centred on its tick, which may be the edge).
pub(crate) fn right_margin(s: &Sizes, last_label_w: f64) -> f64 {
    (s.margin + 8.0 * s.k).max(last_label_w / 2.0 + s.margin * 0.5)
}

/// Everything above the panels: title, legend, marker label row.
pub(crate) struct Header {
    pub(crate) title_y: f64,
    pub(crate) legend: Vec<LegendEntry>,
    /// Vertical centre of the marker label row.
    pub(crate) marker_label_y: f64,
    /// Where the (first) panel starts.
    pub(crate) panel_top: f64,
}

/// Stacks title, legend and marker label row from the top of the canvas.
/// `labels` are the curves' legend labels (empty ones get no entry).
pub(crate) fn header(
    s: &Sizes,
    title: &str,
    labels: &[&str],
    plot_left: f64,
    plot_right: f64,
    has_markers: bool,
) -> Header {
    // Legend: one row if it fits, else a balanced grid (4 entries as
    // 2 x 2 rather than 3 + 1) with each column as wide as its widest
    // entry; centred over the plot.
    let avail = plot_right - plot_left;
    let entries: Vec<(usize, f64)> = labels
        .iter()
        .enumerate()
        .filter(|(_, label)| !label.is_empty())
        .map(|(i, label)| {
            let w = s.legend_sample + s.legend_text_gap + text_width(label, s.legend);
            (i, w)
        })
        .collect();
    let mut legend_cols = entries.len().max(1);
    let mut col_widths = Vec::new();
    for cols in (1..=entries.len()).rev() {
        let cols = entries.len().div_ceil(entries.len().div_ceil(cols));
        col_widths = (0..cols)
            .map(|c| {
                entries
                    .iter()
                    .skip(c)
                    .step_by(cols)
                    .map(|e| e.1)
                    .fold(0.0, f64::max)
            })
            .collect();
        legend_cols = cols;
        let total: f64 = col_widths.iter().sum::<f64>() + s.legend_gap * (cols - 1) as f64;
        if total <= avail {
            break;
        }
    }
    let legend_w: f64 =
        col_widths.iter().sum::<f64>() + s.legend_gap * legend_cols.saturating_sub(1) as f64;
    let legend_rows = entries.len().div_ceil(legend_cols);
    let col_x: Vec<f64> = col_widths
        .iter()
        .scan(0.0, |x, w| {
            let here = *x;
            *x += w + s.legend_gap;
            Some(here)
        })
        .collect();

    let mut y = s.margin;
    let title_y = y + 0.5 * s.title * 1.3;
    if !title.is_empty() {
        y += s.title * 1.3 + 4.0 * s.k;
    }
    let legend_left = plot_left + ((avail - legend_w) / 2.0).max(0.0);
    let legend: Vec<LegendEntry> = entries
        .iter()
        .enumerate()
        .map(|(j, &(curve, _))| LegendEntry {
            curve,
            x: legend_left + col_x[j % legend_cols],
            y: y + ((j / legend_cols) as f64 + 0.5) * s.legend_row,
        })
        .collect();
    y += legend_rows as f64 * s.legend_row;
    y += 6.0 * s.k;
    let marker_label_y = y + 0.5 * s.marker_row;
    if has_markers {
        y += s.marker_row + s.leader;
    }
    Header {
        title_y,
        legend,
        marker_label_y,
        panel_top: y,
    }
}

/// Everything below the panels: x tick labels, then the x axis title.
pub(crate) struct Footer {
    /// Where the (last) panel ends.
    pub(crate) panel_bottom: f64,
    /// Top of the x tick labels.
    pub(crate) x_label_y: f64,
    /// Vertical centre of the x axis title.
    pub(crate) x_title_y: f64,
}

pub(crate) fn footer(s: &Sizes, h: f64) -> Footer {
    let bottom_margin = s.margin * 0.6;
    let x_title_h = s.axis_title * 1.5;
    let x_label_h = s.tick * 1.6;
    let panel_bottom = h - bottom_margin - x_title_h - x_label_h;
    Footer {
        panel_bottom,
        x_label_y: panel_bottom + 5.0 * s.k,
        x_title_y: panel_bottom + x_label_h + 0.5 * x_title_h,
    }
}

/// Marker labels sit in one row above the panels, left to right in x
/// order. Labels of close markers (f0 next to a second resonance) are
/// pushed apart sideways and joined to their lines by slanted leaders,
/// rather than overprinting. `x_of` maps a marker position to pixels; `w`
/// is the canvas width.
pub(crate) fn place_marker_labels(
    s: &Sizes,
    markers: &[Marker],
    x_of: impl Fn(f64) -> f64,
    w: f64,
) -> Vec<MarkerLabel> {
    let mut order: Vec<usize> = (0..markers.len()).collect();
    order.sort_by(|&a, &b| markers[a].at.total_cmp(&markers[b].at));
    let wanted: Vec<(f64, f64)> = order
        .iter()
        .map(|&i| {
            let m = &markers[i];
            (x_of(m.at), text_width(&m.label, s.marker))
        })
        .collect();
    let centres = spread_labels(&wanted, 8.0 * s.k, s.margin, w - s.margin);
    order
        .iter()
        .zip(centres)
        .map(|(&marker, cx)| MarkerLabel { marker, cx })
        .collect()
}

struct Layout {
    s: Sizes,
    log_lo: f64,
    log_hi: f64,
    title_y: f64,
    legend: Vec<LegendEntry>,
    marker_labels: Vec<MarkerLabel>,
    /// Vertical centre of the marker label row.
    marker_label_y: f64,
    gain: Panel,
    phase: Panel,
    x_ticks: Vec<f64>,
    /// Every n-th x tick is labelled, so labels never collide.
    x_label_stride: usize,
    x_label_y: f64,
    x_title_y: f64,
    y_title_x: f64,
}

impl Layout {
    fn new(plot: &BodePlot, data: &Data, width: u32, height: u32) -> Result<Layout, PlotError> {
        let s = Sizes::new(width, height);
        let (w, h) = canvas(width, height);
        let too_small = PlotError::BadSize { width, height };

        let (mut g_min, mut g_max) = (f64::INFINITY, f64::NEG_INFINITY);
        let (mut p_min, mut p_max) = (f64::INFINITY, f64::NEG_INFINITY);
        for &(_, g, p) in data.curves.iter().flatten() {
            g_min = g_min.min(g);
            g_max = g_max.max(g);
            p_min = p_min.min(p);
            p_max = p_max.max(p);
        }
        let gain_axis = y_axis(g_min, g_max, &GAIN_STEPS_DB, Some(GAIN_CLIP_DB));
        let phase_axis = y_axis(p_min, p_max, &PHASE_STEPS_DEG, None);

        let tick_label_w = gain_axis
            .ticks
            .iter()
            .chain(&phase_axis.ticks)
            .map(|&v| text_width(&format_tick(v), s.tick))
            .fold(0.0, f64::max);
        let plot_left = panels_left(&s, tick_label_w);
        let ticks = x_ticks(data.f_lo, data.f_hi);
        let last_label_w = ticks
            .last()
            .map(|&f| text_width(&format_hz(f), s.tick))
            .unwrap_or(0.0);
        let plot_right = w - right_margin(&s, last_label_w);
        if plot_right - plot_left < 120.0 * s.k {
            return Err(too_small);
        }
        let log_lo = data.f_lo.log10();
        let log_hi = data.f_hi.log10();
        let x_of = |f: f64| {
            plot_left + (f.log10() - log_lo) / (log_hi - log_lo) * (plot_right - plot_left)
        };

        // Label every decade if they fit, else every second one, and so on.
        let widest = ticks
            .iter()
            .map(|&f| text_width(&format_hz(f), s.tick))
            .fold(0.0, f64::max);
        let spacing = ticks
            .windows(2)
            .map(|p| x_of(p[1]) - x_of(p[0]))
            .fold(f64::INFINITY, f64::min);
        let mut x_label_stride = 1;
        while spacing.is_finite() && spacing * (x_label_stride as f64) < widest + 10.0 * s.k {
            x_label_stride += 1;
        }

        let marker_labels = place_marker_labels(&s, plot.markers, x_of, w);
        let labels: Vec<&str> = plot.curves.iter().map(|c| c.label.as_str()).collect();
        let head = header(
            &s,
            plot.title,
            &labels,
            plot_left,
            plot_right,
            !marker_labels.is_empty(),
        );

        // Vertically: the header, gain panel, gap, phase panel, footer.
        let gain_top = head.panel_top;
        let foot = footer(&s, h);
        let phase_bottom = foot.panel_bottom;
        let gap_panels = 18.0 * s.k;
        let both = phase_bottom - gain_top - gap_panels;
        if both < 120.0 * s.k {
            return Err(too_small);
        }
        // The gain panel carries the interesting detail (peak, roll-off),
        // so it gets the larger share.
        let gain_bottom = gain_top + both * 0.55;
        let phase_top = gain_bottom + gap_panels;

        Ok(Layout {
            log_lo,
            log_hi,
            title_y: head.title_y,
            legend: head.legend,
            marker_labels,
            marker_label_y: head.marker_label_y,
            gain: Panel {
                left: plot_left,
                right: plot_right,
                top: gain_top,
                bottom: gain_bottom,
                axis: gain_axis,
            },
            phase: Panel {
                left: plot_left,
                right: plot_right,
                top: phase_top,
                bottom: phase_bottom,
                axis: phase_axis,
            },
            x_ticks: ticks,
            x_label_stride,
            x_label_y: foot.x_label_y,
            x_title_y: foot.x_title_y,
            y_title_x: y_title_x(&s),
            s,
        })
    }

    fn x(&self, f: f64) -> f64 {
        let (l, r) = (self.gain.left, self.gain.right);
        l + (f.log10() - self.log_lo) / (self.log_hi - self.log_lo) * (r - l)
    }
}

/// A level's label right of the panel, vertically centred at `cy`.
struct LevelLabel {
    level: usize,
    cy: f64,
}

struct LineLayout {
    s: Sizes,
    view: View,
    title_y: f64,
    legend: Vec<LegendEntry>,
    marker_labels: Vec<MarkerLabel>,
    marker_label_y: f64,
    level_labels: Vec<LevelLabel>,
    /// Per series: drawn as a dot, since all its points share one pixel.
    dots: Vec<bool>,
    panel: Panel,
    x_ticks: Vec<f64>,
    x_format: NumberFormat,
    y_format: NumberFormat,
    x_label_y: f64,
    x_title_y: f64,
    y_title_x: f64,
}

impl LineLayout {
    fn new(plot: &LinePlot, view: &View, width: u32, height: u32) -> Result<LineLayout, PlotError> {
        // How many y ticks fit depends on the panel height, which depends
        // on the legend rows, which depend on the width the y tick labels
        // leave. A trial layout with a generous height guess measures the
        // panel; the real one picks its y ticks for that height.
        let trial = LineLayout::build(plot, view, width, height, None)?;
        let room = trial.panel.bottom - trial.panel.top;
        LineLayout::build(plot, view, width, height, Some(room))
    }

    /// One layout pass; `panel_h` is the panel height to choose y ticks
    /// for (`None`: as if the panel took the whole canvas height).
    fn build(
        plot: &LinePlot,
        view: &View,
        width: u32,
        height: u32,
        panel_h: Option<f64>,
    ) -> Result<LineLayout, PlotError> {
        let s = Sizes::new(width, height);
        let (w, h) = canvas(width, height);
        let too_small = PlotError::BadSize { width, height };
        let foot = footer(&s, h);

        let room = panel_h.unwrap_or(foot.panel_bottom - s.margin);
        let max_y = (room / (MIN_Y_TICK_SPACING * s.k))
            .floor()
            .clamp(2.0, MAX_LIN_Y_INTERVALS);
        let y_step = lin_step(view.y_lo, view.y_hi, max_y, 'y')?;
        let y_ticks = y_step.ticks(view.y_lo, view.y_hi);
        let y_format = NumberFormat::new(y_step, &y_ticks);
        let tick_label_w = y_ticks
            .iter()
            .map(|&v| text_width(&y_format.label(v), s.tick))
            .fold(0.0, f64::max);
        let plot_left = panels_left(&s, tick_label_w);

        // Level labels go right of the panel, after a short leader, where
        // no curve can run through them.
        let level_w = plot
            .levels
            .iter()
            .map(|l| text_width(&l.label, s.marker))
            .fold(0.0, f64::max);
        let level_room = if plot.levels.is_empty() {
            0.0
        } else {
            s.leader + LEVEL_TEXT_GAP * s.k + level_w + s.margin
        };

        // x ticks: the finest 1-2-5 step that keeps ticks apart on the
        // widest panel the margins allow, coarsened until labels do not
        // touch (they and the right margin depend on the step).
        let span = view.x_hi - view.x_lo;
        let widest_panel = w - plot_left - (s.margin + 8.0 * s.k).max(level_room);
        let max_x = (widest_panel / (MIN_X_TICK_SPACING * s.k))
            .floor()
            .clamp(2.0, MAX_LIN_X_INTERVALS);
        let mut x_step = lin_step(view.x_lo, view.x_hi, max_x, 'x')?;
        let (x_ticks, x_format, plot_right) = loop {
            let ticks = x_step.ticks(view.x_lo, view.x_hi);
            let format = NumberFormat::new(x_step, &ticks);
            let widths: Vec<f64> = ticks
                .iter()
                .map(|&v| text_width(&format.label(v), s.tick))
                .collect();
            let widest = widths.iter().copied().fold(0.0, f64::max);
            let last_w = widths.last().copied().unwrap_or(0.0);
            let right = w - right_margin(&s, last_w).max(level_room);
            if right - plot_left < 120.0 * s.k {
                return Err(too_small);
            }
            let spacing = x_step.value() / span * (right - plot_left);
            // Each coarsening at least doubles the step, so this ends after
            // a few rounds: one tick left has nothing to collide with.
            if ticks.len() < 2 || spacing >= widest + 12.0 * s.k {
                break (ticks, format, right);
            }
            x_step = x_step.next();
        };
        let x_of = |v: f64| plot_left + (v - view.x_lo) / span * (plot_right - plot_left);

        let marker_labels = place_marker_labels(&s, plot.markers, x_of, w);
        let labels: Vec<&str> = plot.series.iter().map(|c| c.label.as_str()).collect();
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
                lo: view.y_lo,
                hi: view.y_hi,
                ticks: y_ticks,
            },
        };

        // Level labels top to bottom; close levels (a limit just under
        // another) are pushed apart vertically, as marker labels are
        // sideways.
        let mut order: Vec<usize> = (0..plot.levels.len()).collect();
        order.sort_by(|&a, &b| plot.levels[b].y.total_cmp(&plot.levels[a].y));
        let wanted: Vec<(f64, f64)> = order
            .iter()
            .map(|&i| (panel.y(plot.levels[i].y), LEVEL_ROW * s.marker))
            .collect();
        let centres = spread_labels(&wanted, 2.0 * s.k, panel.top, panel.bottom);
        let level_labels = order
            .iter()
            .zip(centres)
            .map(|(&level, cy)| LevelLabel { level, cy })
            .collect();
        let dots = plot
            .series
            .iter()
            .map(|series| {
                let pixel = |&(x, y): &(f64, f64)| px(x_of(x), panel.y(y));
                let first = series.points.first().map(pixel);
                series.points.iter().all(|p| Some(pixel(p)) == first)
            })
            .collect();

        Ok(LineLayout {
            view: *view,
            title_y: head.title_y,
            legend: head.legend,
            marker_labels,
            marker_label_y: head.marker_label_y,
            level_labels,
            dots,
            panel,
            x_ticks,
            x_format,
            y_format,
            x_label_y: foot.x_label_y,
            x_title_y: foot.x_title_y,
            y_title_x: y_title_x(&s),
            s,
        })
    }

    fn x(&self, v: f64) -> f64 {
        let (l, r) = (self.panel.left, self.panel.right);
        l + (v - self.view.x_lo) / (self.view.x_hi - self.view.x_lo) * (r - l)
    }
}

// ---------------------------------------------------------------------------
// Drawing

pub(crate) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;
pub(crate) type DrawResult = Result<(), plotters::drawing::DrawingAreaErrorKind<std::io::Error>>;

pub(crate) fn px(x: f64, y: f64) -> (i32, i32) {
    (x.round() as i32, y.round() as i32)
}

/// Stroke width in drawing units for a width given in output px.
pub(crate) fn stroke(k: f64, width_px: f64) -> u32 {
    (width_px * k).round().max(1.0) as u32
}

pub(crate) fn text_style(size: f64, color: &RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    (FONT_FAMILY, size * PLOTTERS_FONT_SCALE)
        .into_font()
        .color(color)
        .pos(Pos::new(h, v))
}

fn draw(root: &Area, plot: &BodePlot, data: &Data, l: &Layout) -> DrawResult {
    let s = &l.s;
    root.fill(&BACKGROUND)?;

    for panel in [&l.gain, &l.phase] {
        draw_grid(root, l, panel)?;
    }
    // Markers go under the curves: they are references, the curves are the
    // result.
    draw_markers(
        root,
        s,
        plot.markers,
        &l.marker_labels,
        |f| l.x(f),
        l.marker_label_y,
        &[&l.gain, &l.phase],
    )?;
    for (i, pts) in data.curves.iter().enumerate() {
        let style = curve_style(i, s.k);
        let gain: Vec<(f64, f64)> = pts.iter().map(|&(f, g, _)| (l.x(f), l.gain.y(g))).collect();
        let phase: Vec<(f64, f64)> = pts
            .iter()
            .map(|&(f, _, p)| (l.x(f), l.phase.y(p)))
            .collect();
        for (panel, line) in [(&l.gain, gain), (&l.phase, phase)] {
            for run in clip_to_band(&line, panel.top, panel.bottom) {
                draw_line(root, &run, &style)?;
            }
        }
    }
    for panel in [&l.gain, &l.phase] {
        draw_frame(root, s, panel)?;
        draw_y_tick_labels(root, s, panel, format_tick)?;
    }

    // Shared frequency axis: labels under the phase panel only.
    for (n, &f) in l.x_ticks.iter().enumerate() {
        if n % l.x_label_stride == 0 {
            root.draw(&Text::new(
                format_hz(f),
                px(l.x(f), l.x_label_y),
                text_style(s.tick, &INK, HPos::Center, VPos::Top),
            ))?;
        }
    }
    let mid_x = (l.gain.left + l.gain.right) / 2.0;
    draw_x_title(root, s, "Frequency", mid_x, l.x_title_y)?;
    for (panel, title) in [(&l.gain, "Gain (dB)"), (&l.phase, "Phase (°)")] {
        draw_y_title(root, s, title, l.y_title_x, panel)?;
    }
    draw_title(root, s, plot.title, mid_x, l.title_y)?;
    let labels: Vec<&str> = plot.curves.iter().map(|c| c.label.as_str()).collect();
    draw_legend(root, s, &l.legend, &labels, |_| false)
}

fn draw_grid(root: &Area, l: &Layout, panel: &Panel) -> DrawResult {
    let f_lo = 10f64.powf(l.log_lo);
    let f_hi = 10f64.powf(l.log_hi);
    let minor = multiples_in(f_lo, f_hi, &[2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0]);
    for f in minor {
        draw_v_grid_line(root, &l.s, panel, l.x(f), &GRID_MINOR)?;
    }
    for &f in &l.x_ticks {
        draw_v_grid_line(root, &l.s, panel, l.x(f), &GRID_MAJOR)?;
    }
    draw_h_grid(root, &l.s, panel)
}

fn draw_line_plot(root: &Area, plot: &LinePlot, l: &LineLayout) -> DrawResult {
    let s = &l.s;
    let p = &l.panel;
    root.fill(&BACKGROUND)?;

    for &v in &l.x_ticks {
        // x = 0 is as much a reference as y = 0.
        let color = if v == 0.0 { &GRID_ZERO } else { &GRID_MAJOR };
        draw_v_grid_line(root, s, p, l.x(v), color)?;
    }
    draw_h_grid(root, s, p)?;
    // References under the series, as in the Bode plot.
    for level in plot.levels {
        let y = p.y(level.y);
        draw_line(root, &[(p.left, y), (p.right, y)], &reference_style(s))?;
    }
    draw_markers(
        root,
        s,
        plot.markers,
        &l.marker_labels,
        |v| l.x(v),
        l.marker_label_y,
        &[p],
    )?;
    for (i, series) in plot.series.iter().enumerate() {
        let style = curve_style(i, s.k);
        let pts: Vec<(f64, f64)> = series
            .points
            .iter()
            .map(|&(x, y)| (l.x(x), p.y(y)))
            .collect();
        if l.dots[i] {
            // A line of one point (or of points closer than the drawing
            // grid) has no length to stroke; a dot keeps it visible.
            draw_dot(root, s, pts[0], &style)?;
        } else {
            draw_line(root, &pts, &style)?;
        }
    }
    draw_frame(root, s, p)?;
    draw_y_tick_labels(root, s, p, |v| l.y_format.label(v))?;
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
    let labels: Vec<&str> = plot.series.iter().map(|c| c.label.as_str()).collect();
    draw_legend(root, s, &l.legend, &labels, |i| l.dots[i])?;

    // Level labels, each joined to its line's right end by a leader that
    // slants only when the label had to move away from a close neighbour.
    let solid = LineStyle::solid(&MARKER, stroke(s.k, 1.0));
    for ll in &l.level_labels {
        let level = &plot.levels[ll.level];
        let end = p.right + s.leader;
        draw_line(root, &[(p.right, p.y(level.y)), (end, ll.cy)], &solid)?;
        root.draw(&Text::new(
            level.label.as_str(),
            px(end + LEVEL_TEXT_GAP * s.k, ll.cy),
            text_style(s.marker, &INK, HPos::Left, VPos::Center),
        ))?;
    }
    Ok(())
}

/// Thin grid line style.
pub(crate) fn grid_style(s: &Sizes, color: &RGBColor) -> LineStyle {
    LineStyle::solid(color, stroke(s.k, 0.75))
}

pub(crate) fn draw_v_grid_line(
    root: &Area,
    s: &Sizes,
    panel: &Panel,
    x: f64,
    color: &RGBColor,
) -> DrawResult {
    draw_line(
        root,
        &[(x, panel.top), (x, panel.bottom)],
        &grid_style(s, color),
    )
}

/// Horizontal grid lines at the panel's y ticks.
fn draw_h_grid(root: &Area, s: &Sizes, panel: &Panel) -> DrawResult {
    for &v in &panel.axis.ticks {
        // 0 dB / 0° / zero is the reference a reader looks for first.
        let color = if v == 0.0 { &GRID_ZERO } else { &GRID_MAJOR };
        let y = panel.y(v);
        draw_line(
            root,
            &[(panel.left, y), (panel.right, y)],
            &grid_style(s, color),
        )?;
    }
    Ok(())
}

/// The panel outline, drawn after the curves so curve ends at the edges
/// are tidied by it. One polyline starting mid-edge, so all four corners
/// are mitred joins (plotters' rectangle has no stroke width).
pub(crate) fn draw_frame(root: &Area, s: &Sizes, panel: &Panel) -> DrawResult {
    let mid = (panel.left + panel.right) / 2.0;
    let frame = [
        (mid, panel.top),
        (panel.right, panel.top),
        (panel.right, panel.bottom),
        (panel.left, panel.bottom),
        (panel.left, panel.top),
        (mid, panel.top),
    ];
    draw_line(root, &frame, &LineStyle::solid(&FRAME, stroke(s.k, 1.0)))
}

/// Tick labels left of the panel, right-aligned against it.
fn draw_y_tick_labels(
    root: &Area,
    s: &Sizes,
    panel: &Panel,
    label: impl Fn(f64) -> String,
) -> DrawResult {
    for &v in &panel.axis.ticks {
        root.draw(&Text::new(
            label(v),
            px(panel.left - 6.0 * s.k, panel.y(v)),
            text_style(s.tick, &INK, HPos::Right, VPos::Center),
        ))?;
    }
    Ok(())
}

/// Axis titles; an empty one is left out (its space stays, so figures
/// with and without it line up).
pub(crate) fn draw_x_title(root: &Area, s: &Sizes, title: &str, x: f64, y: f64) -> DrawResult {
    if title.is_empty() {
        return Ok(());
    }
    root.draw(&Text::new(
        title,
        px(x, y),
        text_style(s.axis_title, &INK, HPos::Center, VPos::Center),
    ))
}

pub(crate) fn draw_y_title(
    root: &Area,
    s: &Sizes,
    title: &str,
    x: f64,
    panel: &Panel,
) -> DrawResult {
    if title.is_empty() {
        return Ok(());
    }
    root.draw(&Text::new(
        title,
        px(x, (panel.top + panel.bottom) / 2.0),
        text_style(s.axis_title, &INK, HPos::Center, VPos::Center)
            .transform(FontTransform::Rotate270),
    ))
}

pub(crate) fn draw_title(root: &Area, s: &Sizes, title: &str, x: f64, y: f64) -> DrawResult {
    if title.is_empty() {
        return Ok(());
    }
    let style = (FONT_FAMILY, s.title * PLOTTERS_FONT_SCALE)
        .into_font()
        .style(FontStyle::Bold)
        .color(&INK)
        .pos(Pos::new(HPos::Center, VPos::Center));
    root.draw(&Text::new(title, px(x, y), style))
}

/// Legend entries: a sample in the curve's style, then its label
/// (`labels` indexed by curve). The sample is a line, or a dot for curves
/// `is_dot` says are drawn as one, so the key looks like what it names.
fn draw_legend(
    root: &Area,
    s: &Sizes,
    entries: &[LegendEntry],
    labels: &[&str],
    is_dot: impl Fn(usize) -> bool,
) -> DrawResult {
    for e in entries {
        let style = curve_style(e.curve, s.k);
        if is_dot(e.curve) {
            draw_dot(root, s, (e.x + s.legend_sample / 2.0, e.y), &style)?;
        } else {
            draw_line(root, &[(e.x, e.y), (e.x + s.legend_sample, e.y)], &style)?;
        }
        root.draw(&Text::new(
            labels[e.curve],
            px(e.x + s.legend_sample + s.legend_text_gap, e.y),
            text_style(s.legend, &INK, HPos::Left, VPos::Center),
        ))?;
    }
    Ok(())
}

/// A filled dot in the curve's colour, for a curve with no length.
fn draw_dot(root: &Area, s: &Sizes, (x, y): (f64, f64), style: &LineStyle) -> DrawResult {
    root.draw(&Circle::new(
        px(x, y),
        stroke(s.k, 3.0),
        style.shape.filled(),
    ))
}

/// Dashed grey: marker and level lines, references rather than results.
fn reference_style(s: &Sizes) -> LineStyle {
    LineStyle {
        shape: ShapeStyle::from(&MARKER).stroke_width(stroke(s.k, 1.0)),
        dash: vec![5.0 * s.k, 3.0 * s.k],
    }
}

/// Marker lines through every panel in `panels` (top to bottom), and their
/// labels in the row above the first.
pub(crate) fn draw_markers(
    root: &Area,
    s: &Sizes,
    markers: &[Marker],
    labels: &[MarkerLabel],
    x_of: impl Fn(f64) -> f64,
    label_y: f64,
    panels: &[&Panel],
) -> DrawResult {
    let dashed = reference_style(s);
    let solid = LineStyle::solid(&MARKER, stroke(s.k, 1.0));
    let top = panels.first().map_or(label_y, |p| p.top);
    for ml in labels {
        let m = &markers[ml.marker];
        let x = x_of(m.at);
        for panel in panels {
            draw_line(root, &[(x, panel.top), (x, panel.bottom)], &dashed)?;
        }
        // Leader from under the label to the line's top end; slanted only
        // when the label had to move aside.
        let leader_top = label_y + 0.5 * s.marker_row;
        draw_line(root, &[(ml.cx, leader_top), (x, top)], &solid)?;
        root.draw(&Text::new(
            m.label.as_str(),
            px(ml.cx, label_y),
            text_style(s.marker, &INK, HPos::Center, VPos::Center),
        ))?;
    }
    Ok(())
}

/// Colour and width, plus a dash pattern (on, off, on, off, ... in drawing
/// units; empty for a solid line).
pub(crate) struct LineStyle {
    pub(crate) shape: ShapeStyle,
    pub(crate) dash: Vec<f64>,
}

impl LineStyle {
    pub(crate) fn solid(color: &RGBColor, width: u32) -> LineStyle {
        LineStyle {
            shape: ShapeStyle::from(color).stroke_width(width),
            dash: Vec::new(),
        }
    }
}

fn curve_style(i: usize, k: f64) -> LineStyle {
    LineStyle {
        shape: ShapeStyle::from(&PALETTE[i % PALETTE.len()]).stroke_width(stroke(k, 1.8)),
        dash: DASHES[i % DASHES.len()].iter().map(|d| d * k).collect(),
    }
}

pub(crate) fn draw_line(root: &Area, pts: &[(f64, f64)], style: &LineStyle) -> DrawResult {
    let pieces = if style.dash.is_empty() {
        vec![pts.to_vec()]
    } else {
        dash_segments(pts, &style.dash)
    };
    for piece in pieces {
        let mut coords: Vec<(i32, i32)> = piece.iter().map(|&(x, y)| px(x, y)).collect();
        // Dense sweeps map many samples to one point; repeats only bloat
        // the SVG.
        coords.dedup();
        if coords.len() >= 2 {
            root.draw(&PathElement::new(coords, style.shape))?;
        }
    }
    Ok(())
}

/// Cuts a polyline into the "on" pieces of a dash pattern, measured along
/// the line so the pattern runs on evenly through closely spaced samples.
///
/// plotters-svg cannot emit `stroke-dasharray`, and its own dashed element
/// only knows a single dash/gap pair, so dash-dot patterns (which stay
/// distinguishable in greyscale print) are cut here.
fn dash_segments(pts: &[(f64, f64)], pattern: &[f64]) -> Vec<Vec<(f64, f64)>> {
    // A zero or negative entry would never advance; such a pattern is a bug
    // in the constants, so fall back to a solid line rather than loop.
    if pattern.is_empty() || !pattern.iter().all(|&d| d > 0.0) {
        return vec![pts.to_vec()];
    }
    let mut out = Vec::new();
    let mut idx = 0;
    let mut left = pattern[0];
    let mut cur: Vec<(f64, f64)> = pts.first().copied().into_iter().collect();
    for w in pts.windows(2) {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        let len = (x1 - x0).hypot(y1 - y0);
        let mut done = 0.0;
        while len - done > left {
            done += left;
            let t = done / len;
            let p = (x0 + (x1 - x0) * t, y0 + (y1 - y0) * t);
            if idx % 2 == 0 {
                cur.push(p);
                out.push(std::mem::take(&mut cur));
            } else {
                cur = vec![p];
            }
            idx = (idx + 1) % pattern.len();
            left = pattern[idx];
        }
        left -= len - done;
        if idx % 2 == 0 {
            cur.push((x1, y1));
        }
    }
    if idx % 2 == 0 && cur.len() > 1 {
        out.push(cur);
    }
    out
}

/// Splits a polyline into the runs that lie within `top..=bottom`
/// (pixel y), cutting segments exactly at the band edges so a clipped
/// resonance peak leaves the panel at the frame instead of overdrawing the
/// title or the other panel.
fn clip_to_band(pts: &[(f64, f64)], top: f64, bottom: f64) -> Vec<Vec<(f64, f64)>> {
    let inside = |y: f64| y >= top && y <= bottom;
    let mut runs = Vec::new();
    let mut run: Vec<(f64, f64)> = Vec::new();
    if let Some(&p) = pts.first() {
        if inside(p.1) {
            run.push(p);
        }
    }
    for w in pts.windows(2) {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        // Parametric range of the segment inside the band (Liang-Barsky in y).
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        let dy = y1 - y0;
        if dy == 0.0 {
            if !inside(y0) {
                (t0, t1) = (1.0, 0.0);
            }
        } else {
            let (ta, tb) = ((top - y0) / dy, (bottom - y0) / dy);
            t0 = t0.max(ta.min(tb));
            t1 = t1.min(ta.max(tb));
        }
        if t0 > t1 {
            if run.len() > 1 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
            continue;
        }
        let at = |t: f64| (x0 + (x1 - x0) * t, y0 + dy * t);
        if t0 > 0.0 || run.is_empty() {
            // Entering the band (or starting fresh): begin a new run.
            if run.len() > 1 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
            run.push(at(t0));
        }
        run.push(at(t1));
        if t1 < 1.0 {
            // Leaving the band: this run is done.
            runs.push(std::mem::take(&mut run));
        }
    }
    if run.len() > 1 {
        runs.push(run);
    }
    runs
}

/// Readers of the SVG documents the plot tests inspect (shared by the plot kinds).
#[cfg(test)]
pub(crate) mod svg_probe {
    /// Text content of every `<text>` element, in document order.
    pub fn texts(svg: &str) -> Vec<String> {
        svg.split("<text")
            .skip(1)
            .filter_map(|chunk| {
                let body = &chunk[chunk.find('>')? + 1..];
                Some(body[..body.find("</text>")?].trim().to_string())
            })
            .collect()
    }

    /// Pixel vertices of every polyline drawn in `stroke`, in drawing units.
    pub fn polylines(svg: &str, stroke: &str) -> Vec<Vec<(i32, i32)>> {
        svg.lines()
            .filter(|l| l.contains(&format!("stroke=\"{stroke}\"")) && l.contains("points="))
            .map(|l| {
                let pts = l
                    .split("points=\"")
                    .nth(1)
                    .unwrap()
                    .split('"')
                    .next()
                    .unwrap();
                pts.split_whitespace()
                    .map(|xy| {
                        let (x, y) = xy.split_once(',').unwrap();
                        (x.parse().unwrap(), y.parse().unwrap())
                    })
                    .collect()
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::svg_probe::{polylines, texts};
    use super::*;

    /// Second-order low-pass H(s) = w0² / (s² + 2ζw0 s + w0²) at `f`.
    fn lowpass(f: f64, f0: f64, zeta: f64) -> (f64, f64, f64) {
        let x = f / f0;
        let mag = 1.0 / ((1.0 - x * x).powi(2) + (2.0 * zeta * x).powi(2)).sqrt();
        let phase = (-2.0 * zeta * x).atan2(1.0 - x * x).to_degrees();
        (f, 20.0 * mag.log10(), phase)
    }

    fn lowpass_curve(label: &str, f0: f64, zeta: f64) -> Curve {
        Curve {
            label: label.to_string(),
            points: log_space(10.0, 100e3, 40)
                .into_iter()
                .map(|f| lowpass(f, f0, zeta))
                .collect(),
        }
    }

    fn sample_curves() -> Vec<Curve> {
        vec![
            lowpass_curve("No load (ζ = 0.02)", 2e3, 0.02),
            lowpass_curve("Half load (ζ = 0.18)", 2e3, 0.18),
            lowpass_curve("Rated load (ζ = 0.35)", 2e3, 0.35),
            lowpass_curve("Overload 150 % (ζ = 0.53)", 2e3, 0.53),
        ]
    }

    fn sample_markers() -> Vec<Marker> {
        [("f1", 50.0), ("f0", 2e3), ("fsw", 20e3)]
            .iter()
            .map(|&(l, f)| Marker {
                label: l.to_string(),
                at: f,
            })
            .collect()
    }

    fn sample_svg() -> String {
        let curves = sample_curves();
        let markers = sample_markers();
        let plot = BodePlot {
            title: "Output filter transfer function",
            curves: &curves,
            markers: &markers,
        };
        bode_svg(&plot, 720, 560).expect("sample plot renders")
    }

    #[test]
    fn svg_document_is_well_formed_and_labelled() {
        let svg = sample_svg();
        assert!(svg.starts_with("<svg"), "{}", &svg[..40]);
        assert!(svg.trim_end().ends_with("</svg>"));
        assert_eq!(svg.matches("<svg").count(), 1);
        let t = texts(&svg);
        for label in [
            "No load (ζ = 0.02)",
            "Half load (ζ = 0.18)",
            "Rated load (ζ = 0.35)",
            "Overload 150 % (ζ = 0.53)",
            "f1",
            "f0",
            "fsw",
            "10 Hz",
            "100 Hz",
            "1 kHz",
            "10 kHz",
            "100 kHz",
            "Output filter transfer function",
            "Gain (dB)",
            "Phase (°)",
            "Frequency",
        ] {
            assert!(
                t.iter().any(|s| s == label),
                "missing text {label:?} in {t:?}"
            );
        }
        // A family typst embeds, and no generic family it would ignore.
        assert!(svg.contains(r#"font-family="Libertinus Serif""#));
        assert!(!svg.contains("sans-serif"));
    }

    #[test]
    fn markup_in_labels_is_escaped() {
        let curves = vec![Curve {
            label: "R < 1 Ω & \"hot\"".into(),
            points: vec![(10.0, 0.0, 0.0), (1e3, -20.0, -90.0)],
        }];
        let svg = bode_svg(
            &BodePlot {
                title: "",
                curves: &curves,
                markers: &[],
            },
            720,
            560,
        )
        .unwrap();
        assert!(svg.contains("R &lt; 1 Ω &amp; &quot;hot&quot;"));
    }

    #[test]
    fn log_space_endpoints_and_count() {
        let f = log_space(10.0, 100e3, 10);
        assert_eq!(f.len(), 41);
        assert_eq!(f[0], 10.0);
        assert_eq!(f[40], 100e3);
        assert!((f[10] - 100.0).abs() < 1e-9, "{}", f[10]);
        assert!((f[1] - 10f64.powf(1.1)).abs() < 1e-9);
        assert!(f.windows(2).all(|w| w[1] > w[0]));

        // Fractional span: at least the requested density, exact ends.
        let g = log_space(20.0, 150e3, 10);
        assert_eq!(g[0], 20.0);
        assert_eq!(*g.last().unwrap(), 150e3);
        let decades = (150e3f64 / 20.0).log10();
        assert!((g.len() - 1) as f64 >= decades * 10.0);
        assert!(((g.len() - 2) as f64) < decades * 10.0);

        assert_eq!(log_space(5.0, 5.0, 10), vec![5.0]);
        assert!(log_space(0.0, 10.0, 10).is_empty());
        assert!(log_space(100.0, 10.0, 10).is_empty());
        assert!(log_space(10.0, 100.0, 0).is_empty());
        assert!(log_space(f64::NAN, 100.0, 10).is_empty());
        assert!(log_space(1.0, 1e9, usize::MAX).is_empty());
    }

    #[test]
    fn same_input_gives_identical_bytes() {
        assert_eq!(sample_svg(), sample_svg());
    }

    #[test]
    fn bad_data_is_an_error_not_a_panic() {
        let plot = |curves: &[Curve], markers: &[Marker]| {
            bode_svg(
                &BodePlot {
                    title: "t",
                    curves,
                    markers,
                },
                720,
                560,
            )
        };
        let mut nan = lowpass_curve("nan", 1e3, 0.3);
        nan.points[7].1 = f64::NAN;
        assert_eq!(
            plot(std::slice::from_ref(&nan), &[]),
            Err(PlotError::NonFinite {
                label: "nan".into(),
                index: 7
            })
        );
        let mut inf = lowpass_curve("inf", 1e3, 0.3);
        inf.points[3].2 = f64::INFINITY;
        assert!(matches!(
            plot(&[inf], &[]),
            Err(PlotError::NonFinite { index: 3, .. })
        ));
        let mut nanf = lowpass_curve("nanf", 1e3, 0.3);
        nanf.points[0].0 = f64::NAN;
        assert!(matches!(
            plot(&[nanf], &[]),
            Err(PlotError::NonFinite { index: 0, .. })
        ));
        let mut zero = lowpass_curve("dc", 1e3, 0.3);
        zero.points[0].0 = 0.0;
        assert!(matches!(
            plot(&[zero], &[]),
            Err(PlotError::NonPositiveFrequency { index: 0, .. })
        ));
        assert_eq!(plot(&[], &[]), Err(PlotError::NoCurves));
        let empty = Curve {
            label: "empty".into(),
            points: vec![],
        };
        assert!(matches!(
            plot(&[empty], &[]),
            Err(PlotError::EmptyCurve { .. })
        ));
        let ok = lowpass_curve("ok", 1e3, 0.3);
        let bad_marker = Marker {
            label: "fsw".into(),
            at: f64::NAN,
        };
        assert_eq!(
            plot(std::slice::from_ref(&ok), &[bad_marker]),
            Err(PlotError::BadMarker {
                label: "fsw".into()
            })
        );
        let e = bode_svg(
            &BodePlot {
                title: "",
                curves: &[ok],
                markers: &[],
            },
            50,
            40,
        );
        assert!(matches!(e, Err(PlotError::BadSize { .. })));
        // Display gives a message a user can act on.
        assert!(PlotError::NonFinite {
            label: "x".into(),
            index: 2
        }
        .to_string()
        .contains("point 2"));
    }

    #[test]
    fn second_order_lowpass_renders_with_sensible_axes() {
        // ζ = 0.005 peaks at +40 dB; the stop band reaches -80 dB at 100x f0.
        let curve = Curve {
            label: "LC, ζ = 0.005".into(),
            points: log_space(10.0, 100e3, 20)
                .into_iter()
                .map(|f| lowpass(f, 1e3, 0.005))
                .collect(),
        };
        let peak = curve.points.iter().map(|p| p.1).fold(f64::MIN, f64::max);
        assert!(peak > 39.0 && peak < 40.1, "{peak}");
        let data = validate(&BodePlot {
            title: "",
            curves: std::slice::from_ref(&curve),
            markers: &[],
        })
        .unwrap();
        let plot = BodePlot {
            title: "LC low-pass",
            curves: std::slice::from_ref(&curve),
            markers: &[],
        };
        let layout = Layout::new(&plot, &data, 720, 560).unwrap();
        assert_eq!(layout.gain.axis.lo, -100.0);
        assert_eq!(layout.gain.axis.hi, 60.0);
        assert!(layout.gain.axis.ticks.iter().all(|t| t % 20.0 == 0.0));
        assert!(layout.phase.axis.ticks.iter().all(|t| t % 45.0 == 0.0));
        assert!(layout.phase.axis.lo <= -180.0 && layout.phase.axis.hi >= 0.0);

        let svg = bode_svg(&plot, 720, 560).unwrap();
        assert!(texts(&svg).iter().any(|t| t == "LC, ζ = 0.005"));
        // The curve is drawn with the first palette colour in both panels,
        // and every vertex stays inside its panel.
        let stroke = "stroke=\"#005AAA\"";
        let lines: Vec<&str> = svg.lines().filter(|l| l.contains(stroke)).collect();
        assert!(lines.len() >= 3, "curve polylines missing");
        let (gt, pb) = (
            layout.gain.top.round() as i32,
            layout.phase.bottom.round() as i32,
        );
        for line in lines.iter().filter(|l| l.contains("points=")) {
            let pts = line
                .split("points=\"")
                .nth(1)
                .unwrap()
                .split('"')
                .next()
                .unwrap();
            for xy in pts.split_whitespace() {
                let y: i32 = xy.split(',').nth(1).unwrap().parse().unwrap();
                let in_legend = y < gt;
                assert!(in_legend || y <= pb, "vertex {xy} below the phase panel");
            }
        }
    }

    #[test]
    fn gain_axis_clips_and_rounds() {
        // Plain data: rounded out to 20 dB with headroom off the frame.
        let a = y_axis(-63.0, 12.0, &GAIN_STEPS_DB, Some(GAIN_CLIP_DB));
        assert_eq!((a.lo, a.hi), (-80.0, 20.0));
        assert_eq!(a.ticks.len(), 6);
        // Way out of range: clipped to the window.
        let b = y_axis(-250.0, 45.0, &GAIN_STEPS_DB, Some(GAIN_CLIP_DB));
        assert_eq!((b.lo, b.hi), (-100.0, 60.0));
        // Flat 0 dB still gets a span.
        let c = y_axis(0.0, 0.0, &GAIN_STEPS_DB, Some(GAIN_CLIP_DB));
        assert_eq!((c.lo, c.hi), (-20.0, 20.0));
        // Phase of a second-order section: 45° grid, curve off the frame.
        let p = y_axis(-179.5, -0.3, &PHASE_STEPS_DEG, None);
        assert_eq!((p.lo, p.hi), (-225.0, 45.0));
        // Long phase sweeps coarsen the grid instead of crowding it.
        let q = y_axis(-700.0, 0.0, &PHASE_STEPS_DEG, None);
        assert!((q.hi - q.lo) / (q.ticks[1] - q.ticks[0]) <= MAX_Y_INTERVALS);
    }

    #[test]
    fn frequency_labels() {
        assert_eq!(format_hz(10.0), "10 Hz");
        assert_eq!(format_hz(100.0), "100 Hz");
        assert_eq!(format_hz(1e3), "1 kHz");
        assert_eq!(format_hz(10e3), "10 kHz");
        assert_eq!(format_hz(100e3), "100 kHz");
        assert_eq!(format_hz(1e6), "1 MHz");
        assert_eq!(format_hz(2.5e3), "2.5 kHz");
        assert_eq!(format_hz(0.1), "100 mHz");
        assert_eq!(format_hz(999.999_999_999_9), "1 kHz");
        assert_eq!(format_hz(20e3), "20 kHz");
        assert_eq!(x_ticks(10.0, 100e3), vec![10.0, 100.0, 1e3, 10e3, 100e3]);
        // Less than two decades: 1-2-5 ticks instead.
        assert_eq!(x_ticks(30.0, 400.0), vec![50.0, 100.0, 200.0]);
        assert_eq!(format_tick(-40.0), "\u{2212}40");
        assert_eq!(format_tick(0.0), "0");
    }

    #[test]
    fn clipping_cuts_at_band_edges() {
        // Rises out of the band at y = 0 and comes back.
        let pts = [(0.0, 50.0), (10.0, -50.0), (20.0, 50.0)];
        let runs = clip_to_band(&pts, 0.0, 100.0);
        assert_eq!(runs.len(), 2);
        assert_eq!(runs[0], vec![(0.0, 50.0), (5.0, 0.0)]);
        assert_eq!(runs[1], vec![(15.0, 0.0), (20.0, 50.0)]);
        // Fully inside: unchanged.
        let inside = [(0.0, 10.0), (1.0, 20.0), (2.0, 30.0)];
        assert_eq!(clip_to_band(&inside, 0.0, 100.0), vec![inside.to_vec()]);
        // Fully outside: nothing.
        assert!(clip_to_band(&[(0.0, -5.0), (1.0, -6.0)], 0.0, 100.0).is_empty());
    }

    #[test]
    fn close_markers_are_spread_apart() {
        let curves = sample_curves();
        let markers: Vec<Marker> = [("fsw", 20e3), ("f0", 2e3), ("f0'", 2.1e3), ("f1", 50.0)]
            .iter()
            .map(|&(l, f)| Marker {
                label: l.into(),
                at: f,
            })
            .collect();
        let plot = BodePlot {
            title: "",
            curves: &curves,
            markers: &markers,
        };
        let data = validate(&plot).unwrap();
        let layout = Layout::new(&plot, &data, 720, 560).unwrap();
        let s = &layout.s;
        // Left to right in frequency order, and no two labels overlap.
        let order: Vec<usize> = layout.marker_labels.iter().map(|m| m.marker).collect();
        assert_eq!(order, vec![3, 1, 2, 0]);
        for pair in layout.marker_labels.windows(2) {
            let wa = text_width(&markers[pair[0].marker].label, s.marker);
            let wb = text_width(&markers[pair[1].marker].label, s.marker);
            assert!(pair[1].cx - pair[0].cx >= (wa + wb) / 2.0, "labels overlap");
        }
        // Isolated labels stay centred on their lines.
        for m in layout
            .marker_labels
            .iter()
            .filter(|m| m.marker == 0 || m.marker == 3)
        {
            let x = layout.x(markers[m.marker].at);
            assert!((m.cx - x).abs() < 1e-9);
        }
    }

    #[test]
    fn label_spreading_keeps_bounds_and_balance() {
        // Two labels wanting the same spot split evenly around it.
        let c = spread_labels(&[(100.0, 20.0), (100.0, 20.0)], 4.0, 0.0, 1000.0);
        assert_eq!(c, vec![88.0, 112.0]);
        // Pushed against the left bound, they stay inside it.
        let c = spread_labels(&[(0.0, 20.0), (5.0, 20.0)], 4.0, 0.0, 1000.0);
        assert_eq!(c, vec![10.0, 34.0]);
        // A cluster forced right by the bound merges with its neighbour.
        let c = spread_labels(
            &[(960.0, 30.0), (990.0, 30.0), (1000.0, 30.0)],
            4.0,
            0.0,
            1000.0,
        );
        assert_eq!(c.len(), 3);
        assert!(c[2] + 15.0 <= 1000.0 + 1e-9);
        assert!(c.windows(2).all(|p| p[1] - p[0] >= 34.0 - 1e-9));
    }

    // -- Line plots ---------------------------------------------------------

    fn modulation_series(label: &str, v_peak: f64) -> Series {
        Series {
            label: label.to_string(),
            points: (0..=50)
                .map(|i| {
                    let v_dc = 650.0 + 5.0 * f64::from(i);
                    (v_dc, 2.0 * v_peak / v_dc)
                })
                .collect(),
        }
    }

    fn sample_series() -> Vec<Series> {
        vec![
            modulation_series("Rated output (330.5 V peak)", 330.5),
            modulation_series("Light load (325.3 V peak)", 325.3),
        ]
    }

    fn sample_levels() -> Vec<Level> {
        vec![
            Level {
                label: "limit".into(),
                y: 0.95,
            },
            Level {
                label: "linear limit".into(),
                y: 1.0,
            },
        ]
    }

    fn voltage_markers() -> Vec<Marker> {
        [("min", 720.0), ("nom", 760.0), ("max", 820.0)]
            .iter()
            .map(|&(l, at)| Marker {
                label: l.into(),
                at,
            })
            .collect()
    }

    fn line_plot<'a>(
        series: &'a [Series],
        levels: &'a [Level],
        markers: &'a [Marker],
    ) -> LinePlot<'a> {
        LinePlot {
            title: "Modulation index over the DC link range",
            x_label: "DC voltage (V)",
            y_label: "Modulation index",
            series,
            levels,
            markers,
        }
    }

    fn sample_line_svg() -> String {
        let (series, levels, markers) = (sample_series(), sample_levels(), voltage_markers());
        line_svg(&line_plot(&series, &levels, &markers), 720, 440).expect("sample renders")
    }

    #[test]
    fn line_plot_is_labelled() {
        let svg = sample_line_svg();
        assert!(svg.starts_with("<svg"));
        assert!(svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains(r#"width="720" height="440" viewBox="0 0 2880 1760""#));
        let t = texts(&svg);
        for label in [
            "Modulation index over the DC link range",
            "DC voltage (V)",
            "Modulation index",
            "Rated output (330.5 V peak)",
            "Light load (325.3 V peak)",
            "limit",
            "linear limit",
            "min",
            "nom",
            "max",
            "650",
            "900",
            "0.75",
            "1.00",
        ] {
            assert!(
                t.iter().any(|s| s == label),
                "missing text {label:?} in {t:?}"
            );
        }
        // Consistent decimals, no float noise, no unneeded ".0" on volts.
        assert!(
            !t.iter().any(|s| s.contains("000000") || s == "650.0"),
            "{t:?}"
        );
        assert!(svg.contains(r#"font-family="Libertinus Serif""#));
    }

    #[test]
    fn line_plot_same_input_gives_identical_bytes() {
        assert_eq!(sample_line_svg(), sample_line_svg());
        // ...and different input gives different bytes, so the check above
        // is not comparing two constants.
        let series = vec![modulation_series("only", 330.5)];
        let other = line_svg(&line_plot(&series, &[], &[]), 720, 440).unwrap();
        assert_ne!(other, sample_line_svg());
    }

    #[test]
    fn line_plot_layout_covers_data_and_references() {
        let (series, levels, markers) = (sample_series(), sample_levels(), voltage_markers());
        let plot = line_plot(&series, &levels, &markers);
        let view = validate_line(&plot).unwrap();
        // Data 650..900 V and m = 0.72..1.02, with a margin on every side.
        assert!(view.x_lo < 650.0 && view.x_lo > 630.0, "{view:?}");
        assert!(view.x_hi > 900.0 && view.x_hi < 920.0, "{view:?}");
        assert!(view.y_lo < 2.0 * 325.3 / 900.0 && view.y_hi > 2.0 * 330.5 / 650.0);
        let l = LineLayout::new(&plot, &view, 720, 440).unwrap();
        assert_eq!(l.x_ticks, vec![650.0, 700.0, 750.0, 800.0, 850.0, 900.0]);
        let y: Vec<String> = l
            .panel
            .axis
            .ticks
            .iter()
            .map(|&v| l.y_format.label(v))
            .collect();
        assert_eq!(y, ["0.75", "0.80", "0.85", "0.90", "0.95", "1.00"]);

        // Series vertices stay inside the panel.
        let svg = line_svg(&plot, 720, 440).unwrap();
        let lines = polylines(&svg, "#005AAA");
        assert!(!lines.is_empty());
        for (x, y) in lines.iter().flatten() {
            let in_legend = f64::from(*y) < l.panel.top;
            assert!(
                in_legend
                    || (f64::from(*x) > l.panel.left
                        && f64::from(*x) < l.panel.right
                        && f64::from(*y) < l.panel.bottom),
                "vertex {x},{y} outside the panel"
            );
        }
        // Level labels start right of the panel; isolated ones sit level
        // with their lines, top to bottom in value order.
        let order: Vec<usize> = l.level_labels.iter().map(|ll| ll.level).collect();
        assert_eq!(order, vec![1, 0]);
        for ll in &l.level_labels {
            assert!((ll.cy - l.panel.y(levels[ll.level].y)).abs() < 1e-9);
        }
        // Markers in x order, centred on their lines.
        for ml in &l.marker_labels {
            assert!((ml.cx - l.x(markers[ml.marker].at)).abs() < 1e-9);
        }
    }

    #[test]
    fn close_levels_are_spread_apart() {
        let series = sample_series();
        let levels: Vec<Level> = [("a", 0.95), ("b", 0.951), ("c", 0.9505)]
            .iter()
            .map(|&(l, y)| Level { label: l.into(), y })
            .collect();
        let plot = line_plot(&series, &levels, &[]);
        let l = LineLayout::new(&plot, &validate_line(&plot).unwrap(), 720, 440).unwrap();
        let order: Vec<usize> = l.level_labels.iter().map(|ll| ll.level).collect();
        assert_eq!(order, vec![1, 2, 0]);
        for pair in l.level_labels.windows(2) {
            assert!(pair[1].cy - pair[0].cy >= LEVEL_ROW * l.s.marker - 1e-9);
        }
    }

    #[test]
    fn constant_series_still_renders() {
        let flat = vec![Series {
            label: "flat".into(),
            points: vec![(0.0, 0.95), (10.0, 0.95), (20.0, 0.95)],
        }];
        let plot = line_plot(&flat, &[], &[]);
        let view = validate_line(&plot).unwrap();
        assert!(view.y_lo < 0.95 && view.y_hi > 0.95, "{view:?}");
        let svg = line_svg(&plot, 720, 440).unwrap();
        assert!(texts(&svg).iter().any(|t| t == "flat"));
        // The line is drawn, horizontally, off the frame.
        let l = LineLayout::new(&plot, &view, 720, 440).unwrap();
        let body: Vec<_> = polylines(&svg, "#005AAA")
            .into_iter()
            .filter(|pts| f64::from(pts[0].1) > l.panel.top)
            .collect();
        assert_eq!(body.len(), 1);
        assert!(body[0].iter().all(|p| p.1 == body[0][0].1));
        assert!(f64::from(body[0][0].1) < l.panel.bottom - 10.0);

        // All zeros: a window around zero, not a division by zero.
        let zeros = vec![Series {
            label: "zero".into(),
            points: vec![(0.0, 0.0), (1.0, 0.0)],
        }];
        let view = validate_line(&line_plot(&zeros, &[], &[])).unwrap();
        assert!(view.y_lo < 0.0 && view.y_hi > 0.0);
        assert!(line_svg(&line_plot(&zeros, &[], &[]), 720, 440).is_ok());
    }

    #[test]
    fn single_point_series_is_a_dot() {
        let series = vec![
            modulation_series("sweep", 330.5),
            Series {
                label: "design point".into(),
                points: vec![(760.0, 0.87)],
            },
        ];
        let svg = line_svg(&line_plot(&series, &[], &[]), 720, 440).unwrap();
        // One in the panel, one as its legend sample.
        assert_eq!(svg.matches("<circle").count(), 2);
        assert!(svg.contains(r##"fill="#CD5500""##));
    }

    #[test]
    fn line_plot_bad_input_is_an_error_not_a_panic() {
        let render = |series: &[Series], levels: &[Level], markers: &[Marker]| {
            line_svg(&line_plot(series, levels, markers), 720, 440)
        };
        assert_eq!(render(&[], &[], &[]), Err(PlotError::NoCurves));
        let empty = Series {
            label: "empty".into(),
            points: vec![],
        };
        assert_eq!(
            render(&[empty], &[], &[]),
            Err(PlotError::EmptyCurve {
                label: "empty".into()
            })
        );
        let mut nan = modulation_series("nan", 330.5);
        nan.points[4].1 = f64::NAN;
        assert_eq!(
            render(&[nan], &[], &[]),
            Err(PlotError::NonFinite {
                label: "nan".into(),
                index: 4
            })
        );
        let mut inf = modulation_series("inf", 330.5);
        inf.points[9].0 = f64::NEG_INFINITY;
        assert!(matches!(
            render(&[inf], &[], &[]),
            Err(PlotError::NonFinite { index: 9, .. })
        ));
        let ok = vec![modulation_series("ok", 330.5)];
        let bad_level = Level {
            label: "limit".into(),
            y: f64::NAN,
        };
        assert_eq!(
            render(&ok, &[bad_level], &[]),
            Err(PlotError::BadLevel {
                label: "limit".into()
            })
        );
        let bad_marker = Marker {
            label: "max".into(),
            at: f64::INFINITY,
        };
        assert_eq!(
            render(&ok, &[], &[bad_marker]),
            Err(PlotError::BadMarker {
                label: "max".into()
            })
        );
        // A vertical line has no x range...
        let vertical = vec![Series {
            label: "v".into(),
            points: vec![(700.0, 0.8), (700.0, 0.9)],
        }];
        assert_eq!(
            render(&vertical, &[], &[]),
            Err(PlotError::ZeroWidthRange { x: 700.0 })
        );
        // ...unless a marker gives it one.
        let marker = Marker {
            label: "m".into(),
            at: 750.0,
        };
        assert!(render(&vertical, &[], &[marker]).is_ok());
        // Spans that overflow, or that tick arithmetic cannot resolve.
        let huge = vec![Series {
            label: "huge".into(),
            points: vec![(0.0, -1e308), (1.0, 1e308)],
        }];
        assert_eq!(
            render(&huge, &[], &[]),
            Err(PlotError::UnusableRange { axis: 'y' })
        );
        let tiny = vec![Series {
            label: "tiny".into(),
            points: vec![(0.0, 0.0), (1e-300, 1.0)],
        }];
        assert_eq!(
            render(&tiny, &[], &[]),
            Err(PlotError::UnusableRange { axis: 'x' })
        );
        for (w, h) in [(60, 40), (720, 90), (MAX_SIDE + 1, 440)] {
            assert_eq!(
                line_svg(&line_plot(&ok, &[], &[]), w, h),
                Err(PlotError::BadSize {
                    width: w,
                    height: h
                })
            );
        }
        assert!(PlotError::ZeroWidthRange { x: 700.0 }
            .to_string()
            .contains("x = 700"));
    }

    #[test]
    fn linear_ticks_are_nice() {
        let step = |raw: f64| Step::at_least(raw).map(|s| (s.mantissa, s.exp));
        assert_eq!(step(26.5), Some((5, 1)));
        assert_eq!(step(0.04), Some((5, -2)));
        assert_eq!(step(0.05000000000000001), Some((5, -2)));
        assert_eq!(step(1.0), Some((1, 0)));
        assert_eq!(step(1.01), Some((2, 0)));
        assert_eq!(step(2.2e6), Some((5, 6)));
        assert_eq!(step(0.0), None);
        assert_eq!(step(f64::NAN), None);
        assert_eq!(step(1e-300), None);

        // Exact decimals: 0.1 steps from -0.3, through zero.
        let s = Step {
            mantissa: 1,
            exp: -1,
        };
        assert_eq!(s.ticks(-0.35, 0.25), vec![-0.3, -0.2, -0.1, 0.0, 0.1, 0.2]);
        let f = NumberFormat::new(s, &s.ticks(-0.35, 0.25));
        let labels: Vec<String> = s.ticks(-0.35, 0.25).iter().map(|&v| f.label(v)).collect();
        assert_eq!(
            labels,
            [
                "\u{2212}0.3",
                "\u{2212}0.2",
                "\u{2212}0.1",
                "0.0",
                "0.1",
                "0.2"
            ]
        );
        // Whole steps: no decimals at all.
        let volts = Step {
            mantissa: 5,
            exp: 1,
        };
        let fv = NumberFormat::new(volts, &volts.ticks(640.0, 910.0));
        assert_eq!(fv.label(650.0), "650");
        assert_eq!(fv.label(-50.0), "\u{2212}50");
        // Rounding never leaves a negative zero.
        let f2 = NumberFormat {
            decimals: 2,
            exp: None,
        };
        assert_eq!(f2.label(-0.001), "0.00");
        // Large values factor out one power of ten for the axis.
        let mega = Step {
            mantissa: 5,
            exp: 5,
        };
        let ticks = mega.ticks(0.9e6, 2.6e6);
        assert_eq!(ticks, vec![1.0e6, 1.5e6, 2.0e6, 2.5e6]);
        let fm = NumberFormat::new(mega, &ticks);
        assert_eq!(fm.label(1.5e6), "1.5×10⁶");
        assert_eq!(fm.label(0.0), "0");
        let micro = Step {
            mantissa: 2,
            exp: -6,
        };
        let fu = NumberFormat::new(micro, &micro.ticks(0.0, 1e-5));
        assert_eq!(fu.label(4e-6), "4×10⁻⁶");
        assert_eq!(fu.label(1e-5), "10×10⁻⁶");
        let fine = Step {
            mantissa: 1,
            exp: -5,
        };
        let ff = NumberFormat::new(fine, &fine.ticks(1.000005, 1.00004));
        assert_eq!(ff.label(1.00002), "1.00002");
    }

    /// Writes the sample line plot for a visual check:
    /// `cargo test --lib report::plot -- --ignored`.
    #[test]
    #[ignore]
    fn write_sample_line_svg() {
        let path = std::env::temp_dir().join("line_sample.svg");
        std::fs::write(&path, sample_line_svg()).unwrap();
    }

    /// Writes the sample figure for a visual check:
    /// `cargo test --lib report::plot -- --ignored`.
    #[test]
    #[ignore]
    fn write_sample_svg() {
        let path = std::env::temp_dir().join("bode_sample.svg");
        std::fs::write(&path, sample_svg()).unwrap();
    }
}
