//! The figures drawn from the switching spectrum and the exact PWM waveform: both
//! spectra (bars, with the limit mask over the output's), the waveforms over one
//! fundamental period and a zoom of four carrier periods, and the ripple envelope.
//! Each is computed with the sheet's own functions, so it cannot disagree with the
//! numbers beside it.

use super::figures::Figure;
use super::plot::{line_svg, Level, LinePlot, Marker, PlotError, Series};
use super::spectrum_plot::{spectrum_svg, Bar, SpectrumPlot};
use crate::calc::filter::filter_of;
use crate::calc::grid_filter::grid_filter_of;
use crate::calc::operating_point::load_cases;
use crate::calc::output_quality::{grid_current_lines, output_voltage_lines, OutputLine};
use crate::calc::ripple;
use crate::calc::switching::{self, PointSpectrum};
use crate::record::{Design, Topology};
use crate::sheet::Sheet;
use crate::standards;
use num_complex::Complex64;
use std::f64::consts::PI;

/// The DC point and load case (index into `load_cases`, 2 = rated for a grid design)
/// whose distortion the sheet found largest: the largest of the sheet's own values
/// `quality.i_trd.<point>` or `quality.v_thd.<point>.<case>` (DC nominal, rated, if
/// the sheet has none).
fn worst_case<'a>(
    d: &Design,
    s: &Sheet,
    spectra: &'a [PointSpectrum],
) -> (&'a PointSpectrum, usize) {
    let cases = load_cases(s);
    let mut best: Option<(f64, usize, usize)> = None;
    for (pi, p) in spectra.iter().enumerate() {
        let ids: Vec<(String, usize)> = if d.output.grid() {
            vec![(format!("quality.i_trd.{}", p.key), 2)]
        } else {
            cases
                .iter()
                .enumerate()
                .map(|(ci, c)| (format!("quality.v_thd.{}.{}", p.key, c.key), ci))
                .collect()
        };
        for (id, ci) in ids {
            if let Some(q) = s.get(&id) {
                if best.is_none_or(|b| q.value > b.0) {
                    best = Some((q.value, pi, ci));
                }
            }
        }
    }
    match best {
        Some((_, pi, ci)) => (&spectra[pi], ci),
        None => (&spectra[spectra.len() / 2], 2),
    }
}

/// The bridge output's lines at the worst DC point, as % of its fundamental.
pub(super) fn switch_spectrum(
    d: &Design,
    s: &Sheet,
    spectra: &[PointSpectrum],
) -> Result<Figure, PlotError> {
    let (p, _) = worst_case(d, s, spectra);
    let v1 = p.fundamental();
    let bars: Vec<Bar> = p
        .lines
        .iter()
        .map(|l| Bar {
            order: l.order,
            value: 100.0 * l.amplitude * p.scale() / v1,
            over_limit: false,
        })
        .collect();
    let m_f = p.pwm.m_f;
    let markers: Vec<Marker> = (1..=3)
        .map(|m| Marker {
            label: if m == 1 {
                "mf".into()
            } else {
                format!("{m} mf")
            },
            at: f64::from(m) * m_f,
        })
        .collect();
    let what = if d.bridge.topology == Topology::ThreePhase {
        "line-to-line "
    } else {
        ""
    };
    let svg = spectrum_svg(
        &SpectrumPlot {
            title: &format!("Switch-node {what}voltage spectrum, {}", p.label),
            x_label: "Harmonic order h",
            y_label: "Amplitude (% of fundamental)",
            bars: &bars,
            mask: &[],
            mask_label: "",
            floor: 1e-3,
            markers: &markers,
        },
        720,
        440,
    )?;
    Ok(Figure {
        name: "switch-spectrum",
        caption: format!(
            "Lines of the switch-node {what}voltage at the {} ({} method), as a percentage of its fundamental; marks at the carrier multiples.",
            p.label,
            p.method.name()
        ),
        svg,
    })
}

/// The output voltage (stand-alone) or grid current (grid) lines at the worst case,
/// with the limit mask over them.
pub(super) fn output_spectrum(
    d: &Design,
    s: &Sheet,
    spectra: &[PointSpectrum],
) -> Result<Figure, PlotError> {
    let (lines, mask, mask_label, title, caption): (
        Vec<OutputLine>,
        Vec<(f64, f64)>,
        String,
        String,
        String,
    ) = if d.output.grid() {
        let (p, _) = worst_case(d, s, spectra);
        let lines = grid_current_lines(d, s, p);
        let mut mask: Vec<(f64, f64)> = standards::ieee1547_mask(49)
            .iter()
            .map(|&(h, l)| (f64::from(h) - 0.5, 100.0 * l))
            .collect();
        // Above the tables: no individual limit; the mask stops at order 49.5.
        mask.push((49.5, 0.0));
        (
                lines,
                mask,
                "IEEE 1547-2018 individual limits (from memory)".into(),
                format!("Grid current spectrum, {}", p.label),
                format!("Grid current lines at the {} as a percentage of rated current, with the individual limits of IEEE Std 1547-2018 Tables 26 and 27 (from memory) up to order 49; orders from 50 on count only in the total rated-current distortion.", p.label),
            )
    } else {
        let (p, ci) = worst_case(d, s, spectra);
        let case = load_cases(s)[ci];
        let lines = output_voltage_lines(s, p, &case);
        let limit = s.value("limits.max_voltage_harmonic");
        (
                lines,
                vec![(1.5, 100.0 * limit)],
                "individual harmonic limit".into(),
                format!("Output voltage spectrum, {}, {}", p.label, case.label),
                format!("Output voltage lines at the {}, {} (the worst THD case), as a percentage of the fundamental, with the individual harmonic limit applied to every order.", p.label, case.label),
            )
    };
    let v1 = lines
        .iter()
        .find(|l| (l.order - 1.0).abs() < 1e-9)
        .map_or(1.0, |l| l.amplitude);
    let limit_at = |o: f64| {
        mask.iter()
            .rev()
            .find(|(from, _)| *from <= o)
            .map(|(_, l)| *l)
    };
    let bars: Vec<Bar> = lines
        .iter()
        .map(|l| {
            let value = 100.0 * l.amplitude / v1;
            let over = (l.order - 1.0).abs() > 1e-9
                && limit_at(l.order).is_some_and(|lim| lim > 1e-3 && value > lim);
            Bar {
                order: l.order,
                value,
                over_limit: over,
            }
        })
        .collect();
    let y_label = if d.output.grid() {
        "Amplitude (% of rated current)"
    } else {
        "Amplitude (% of fundamental)"
    };
    let svg = spectrum_svg(
        &SpectrumPlot {
            title: &title,
            x_label: "Harmonic order h",
            y_label,
            bars: &bars,
            mask: &mask,
            mask_label: &mask_label,
            floor: 1e-4,
            markers: &[],
        },
        720,
        440,
    )?;
    Ok(Figure {
        name: "output-spectrum",
        caption,
        svg,
    })
}

/// `lines` synthesised at `n + 1` evenly spaced angles over one fundamental period:
/// (angle in degrees, value).
fn over_one_period(lines: &[(f64, Complex64)], n: usize) -> Vec<(f64, f64)> {
    (0..=n)
        .map(|i| {
            let t = 2.0 * PI * i as f64 / n as f64;
            (t.to_degrees(), synthesise(lines, t))
        })
        .collect()
}

/// Sum of lines with phasors `a`, at angle theta.
fn synthesise(lines: &[(f64, Complex64)], theta: f64) -> f64 {
    lines
        .iter()
        .map(|(o, a)| a.norm() * (o * theta + a.arg()).cos())
        .sum()
}

/// The switch-node phase voltage and the filtered output over one fundamental period
/// at DC nominal, rated load; for a grid-connected bridge also the grid current.
pub(super) fn waveforms(
    d: &Design,
    s: &Sheet,
    spectra: &[PointSpectrum],
) -> Result<Vec<Figure>, PlotError> {
    let p = spectra
        .iter()
        .find(|p| p.key == "nominal")
        .unwrap_or(&spectra[0]);
    let f1 = s.value("output.f1");
    let k = switching::phase_factor(d);
    let Ok(w) = ripple::phase_waveform(&switching::periodic(&p.pwm).0) else {
        return Ok(Vec::new());
    };
    // Steps of the switch-node waveform over the first fundamental period.
    let mut steps = Vec::new();
    let mut level = w.initial;
    steps.push((0.0, level * p.scale()));
    for e in w.edges.iter().take_while(|e| e.angle < 2.0 * PI) {
        steps.push((e.angle.to_degrees(), level * p.scale()));
        level = e.level;
        steps.push((e.angle.to_degrees(), level * p.scale()));
    }
    steps.push((360.0, level * p.scale()));
    let n = 720;
    let j = Complex64::i();
    let phasor = |l: &crate::calc::spectrum::Line| {
        Complex64::from_polar(l.amplitude * p.scale() * k, l.phase)
    };
    let mut figs = Vec::new();
    let zoom_smooth: (Vec<(f64, Complex64)>, &str);
    let three = d.bridge.topology == Topology::ThreePhase;
    let phase_text = if three {
        "phase voltage to the load neutral"
    } else {
        "voltage"
    };
    if d.output.grid() {
        let gf = grid_filter_of(s);
        // The grid current's fundamental is set by the control; its lines follow from
        // the switch node. The fundamental is drawn at the rated current in phase with
        // the switch-node fundamental's reference, shifted by the power factor angle.
        let i_pk = s.value("output.i_peak");
        let v_sw = s.value("filter.v_sw_re") + j * s.value("filter.v_sw_im");
        let pf = s.value("output.power_factor");
        let lines_i: Vec<(f64, Complex64)> = p
            .lines
            .iter()
            .map(|l| {
                if (l.order - 1.0).abs() < 1e-9 {
                    // Rotate to the switch-node fundamental's phase: the grid voltage is
                    // the reference of the sheet's phasors.
                    let shift = phasor(l).arg() - v_sw.arg();
                    (1.0, Complex64::from_polar(i_pk, shift - pf.acos()))
                } else {
                    (l.order, gf.admittances(l.order * f1).grid * phasor(l))
                }
            })
            .collect();
        let fund: Vec<(f64, Complex64)> = p
            .lines
            .iter()
            .filter(|l| (l.order - 1.0).abs() < 1e-9)
            .map(|l| (1.0, phasor(l)))
            .collect();
        zoom_smooth = (fund.clone(), "its fundamental");
        let series = vec![
            Series {
                label: "switch node".into(),
                points: steps.clone(),
            },
            Series {
                label: "its fundamental".into(),
                points: over_one_period(&fund, n),
            },
        ];
        figs.push(line_figure(
            "switch-waveform",
            &format!("Switch-node {phase_text}, {}", p.label),
            "Voltage (V)",
            &series,
            format!("Switch-node {phase_text} over one fundamental period at the {} with its fundamental.", p.label),
        )?);
        let series = vec![Series {
            label: "grid current".into(),
            points: over_one_period(&lines_i, n),
        }];
        figs.push(line_figure(
            "output-waveform",
            &format!("Grid current, {}", p.label),
            "Current (A)",
            &series,
            format!("Grid current of one phase over one fundamental period at the {}, rated current, synthesised from its computed lines (every line up to the highest order).", p.label),
        )?);
    } else {
        let lc = filter_of(s);
        let rated = load_cases(s)[2];
        let lines_o: Vec<(f64, Complex64)> = p
            .lines
            .iter()
            .map(|l| (l.order, lc.response(&rated, l.order * f1) * phasor(l)))
            .collect();
        zoom_smooth = (lines_o.clone(), "output");
        let series = vec![
            Series {
                label: "switch node".into(),
                points: steps.clone(),
            },
            Series {
                label: "output".into(),
                points: over_one_period(&lines_o, n),
            },
        ];
        let series_o: Vec<Series> = load_cases(s)
            .iter()
            .map(|case| {
                let lines: Vec<(f64, Complex64)> = p
                    .lines
                    .iter()
                    .map(|l| (l.order, lc.response(case, l.order * f1) * phasor(l)))
                    .collect();
                Series {
                    label: case.label.to_string(),
                    points: over_one_period(&lines, n),
                }
            })
            .collect();
        figs.push(line_figure(
            "output-waveform",
            &format!("Output {phase_text}, {}", p.label),
            "Voltage (V)",
            &series_o,
            format!("Output {phase_text} over one fundamental period at the {} for each load case, synthesised from its computed lines (every line up to the highest order).", p.label),
        )?);
        figs.insert(0, line_figure(
            "switch-waveform",
            &format!("Switch-node and output {phase_text}, {}, rated load", p.label),
            "Voltage (V)",
            &series,
            format!("Switch-node {phase_text} and the filtered output over one fundamental period at the {}, rated load; the output is synthesised from its computed lines.", p.label),
        )?);
    }
    // Four carrier periods about the reference's zero crossing, where the pulses of a
    // fast carrier can be told apart.
    let span = 2.0 * 360.0 / p.pwm.m_f;
    let (a, b) = (90.0 - span, 90.0 + span);
    let level_at = |x: f64| {
        steps
            .iter()
            .rev()
            .find(|(t, _)| *t <= x)
            .map_or(steps[0].1, |(_, v)| *v)
    };
    let mut zoom_steps = vec![(a, level_at(a))];
    zoom_steps.extend(steps.iter().filter(|(t, _)| *t > a && *t < b).copied());
    zoom_steps.push((b, level_at(b)));
    let m = 400;
    let zoom = vec![
        Series {
            label: "switch node".into(),
            points: zoom_steps,
        },
        Series {
            label: zoom_smooth.1.into(),
            points: (0..=m)
                .map(|i| {
                    let x = a + (b - a) * i as f64 / m as f64;
                    (x, synthesise(&zoom_smooth.0, x.to_radians()))
                })
                .collect(),
        },
    ];
    figs.push(line_figure(
        "switch-waveform-zoom",
        &format!("Switch-node {phase_text}, four carrier periods about 90°, {}", p.label),
        "Voltage (V)",
        &zoom,
        format!(
            "The switch-node {phase_text} of the figure before, over four carrier periods about the reference's zero crossing at 90°, with the {}.",
            zoom_smooth.1
        ),
    )?);
    Ok(figs)
}

fn line_figure(
    name: &'static str,
    title: &str,
    y_label: &str,
    series: &[Series],
    caption: String,
) -> Result<Figure, PlotError> {
    let svg = line_svg(
        &LinePlot {
            title,
            x_label: "Angle of the fundamental (°)",
            y_label,
            series,
            levels: &[],
            markers: &[],
        },
        720,
        420,
    )?;
    Ok(Figure { name, caption, svg })
}

/// The inductor ripple (peak-to-peak) over the fundamental period at each DC point.
pub(super) fn ripple_envelope(
    d: &Design,
    s: &Sheet,
    spectra: &[PointSpectrum],
) -> Result<Option<Figure>, PlotError> {
    let Some(max) = s.get("ripple.i_pp_max") else {
        return Ok(None);
    };
    let l = if d.output.grid() && s.get("filter.capacitance").is_none() {
        s.value("filter.inductance") + s.value("grid.inductance")
    } else {
        s.value("filter.inductance")
    };
    let f_sw = s.value("bridge.f_sw");
    let mut series = Vec::new();
    for p in spectra {
        if let Ok(env) = ripple::ripple_envelope(&switching::periodic(&p.pwm).0) {
            series.push(Series {
                label: p.label.to_string(),
                points: env
                    .points
                    .iter()
                    .filter(|(t, _)| *t <= 2.0 * PI)
                    .map(|(t, k)| (t.to_degrees(), k * p.v_dc / (l * f_sw)))
                    .collect(),
            });
        }
    }
    let levels = [Level {
        label: "limit".into(),
        y: s.value("limits.max_ripple_fraction") * s.value("output.i_peak"),
    }];
    let _ = max;
    let svg = line_svg(
        &LinePlot {
            title: "Inductor ripple current over the fundamental period",
            x_label: "Angle of the fundamental (°)",
            y_label: "Ripple, peak-to-peak (A)",
            series: &series,
            levels: &levels,
            markers: &[],
        },
        720,
        420,
    )?;
    Ok(Some(Figure {
        name: "ripple-envelope",
        caption: "Peak-to-peak ripple of the inverter-side inductor current within each carrier period, over one fundamental period, at the DC minimum, nominal and maximum (rated load), against the ripple limit.".to_string(),
        svg,
    }))
}
