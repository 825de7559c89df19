//! The data behind each plot, computed with the same functions as the sheet so that a
//! figure can never disagree with the numbers beside it.

use super::plot::{
    bode_svg, line_svg, log_space, BodePlot, Curve, Level, LinePlot, Marker, PlotError, Series,
};
use super::spectrum_plot::{spectrum_svg, Bar, SpectrumPlot};
use crate::calc::filter::{filter_of, low_pass_phase};
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

/// One drawn figure.
pub struct Figure {
    pub name: &'static str,
    pub caption: String,
    pub svg: String,
}

/// Every figure of a package.
pub fn all(design: &Design, sheet: &Sheet) -> Result<Vec<Figure>, PlotError> {
    let mut out = vec![
        if design.output.grid() {
            grid_filter_bode(sheet)?
        } else {
            filter_bode(sheet)?
        },
        modulation_window(design, sheet)?,
    ];
    // The spectra are recomputed with the sheet's own functions: the same numbers.
    if let Ok(spectra) = switching::spectra(design, sheet) {
        if !spectra.is_empty() {
            out.push(switch_spectrum(design, sheet, &spectra)?);
            out.push(output_spectrum(design, sheet, &spectra)?);
            out.extend(waveforms(design, sheet, &spectra)?);
            if let Some(f) = ripple_envelope(design, sheet, &spectra)? {
                out.push(f);
            }
        }
    }
    Ok(out)
}

/// The DC point whose output distortion the sheet found worst (nominal if unknown).
fn worst_point<'a>(s: &Sheet, spectra: &'a [PointSpectrum], id: &str) -> &'a PointSpectrum {
    let at = s
        .get(id)
        .and_then(|q| q.name.split(": ").nth(1).map(str::to_string))
        .unwrap_or_default();
    spectra
        .iter()
        .find(|p| at.starts_with(p.label))
        .unwrap_or(&spectra[spectra.len() / 2])
}

/// Grid current per unit of the switch-node voltage, in per unit of the base
/// impedance (|Y| Z_b), with and without the damping resistor.
fn grid_filter_bode(s: &Sheet) -> Result<Figure, PlotError> {
    let gf = grid_filter_of(s);
    let f1 = s.value("output.f1");
    let f_sw = s.value("bridge.f_sw");
    let z_b = s.value("output.v_rms").powi(2) / s.value("output.power");
    let lo = 10f64.powf((f1 / 2.0).log10().floor());
    let hi = 10f64.powf((5.0 * f_sw).log10().ceil());
    let freqs = log_space(lo, hi, 80);
    let curve = |f: &crate::calc::grid_filter::GridFilter, label: &str| Curve {
        label: label.to_string(),
        points: freqs
            .iter()
            .map(|&x| {
                let mut y = f.admittances(x).grid;
                if !(y.norm().is_finite() && y.norm() > 0.0) {
                    y = f.admittances(x * (1.0 + 1e-6)).grid;
                }
                let y = y * z_b;
                // Unwrap into (-360, 0]: an inductor is at -90 degrees, an LCL past
                // resonance at -270.
                let mut phase = y.arg().to_degrees();
                if phase > 1e-9 {
                    phase -= 360.0;
                }
                (x, 20.0 * y.norm().log10(), phase)
            })
            .collect(),
    };
    let mut curves = Vec::new();
    let damped = gf.r_d > 0.0;
    curves.push(curve(
        &gf,
        if damped {
            "with damping resistor"
        } else if gf.c.is_some() {
            "LCL"
        } else {
            "L"
        },
    ));
    if damped {
        curves.push(curve(&gf.undamped(), "without damping resistor"));
    }
    let mut markers = vec![Marker {
        label: "f1".into(),
        at: f1,
    }];
    if let Some(fr) = s.get("filter.f_res") {
        markers.push(Marker {
            label: "fres".into(),
            at: fr.value,
        });
    }
    markers.push(Marker {
        label: "fsw".into(),
        at: f_sw,
    });
    let svg = bode_svg(
        &BodePlot {
            title: "Grid filter, switch-node voltage to grid current (per unit of Zb)",
            curves: &curves,
            markers: &markers,
        },
        720,
        560,
    )?;
    Ok(Figure {
        name: "filter-bode",
        caption: format!(
            "Grid current per unit of switch-node voltage, scaled by the base impedance Zb = {} (20 log10 |Y Zb|), with the grid shorted behind its inductance; marks at f1, the LCL resonance and the switching frequency.{}",
            crate::units::format_value(z_b, crate::units::Unit::Ohm),
            if damped { " The damping resistor's effect is the difference between the two curves." } else { "" }
        ),
        svg,
    })
}

/// The bridge output's lines at the worst DC point, as % of its fundamental.
fn switch_spectrum(d: &Design, s: &Sheet, spectra: &[PointSpectrum]) -> Result<Figure, PlotError> {
    let id = if d.output.grid() {
        "quality.i_trd_worst"
    } else {
        "quality.v_thd_worst"
    };
    let p = worst_point(s, spectra, id);
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
fn output_spectrum(d: &Design, s: &Sheet, spectra: &[PointSpectrum]) -> Result<Figure, PlotError> {
    let (lines, mask, mask_label, title, caption): (
        Vec<OutputLine>,
        Vec<(f64, f64)>,
        String,
        String,
        String,
    ) = if d.output.grid() {
        let p = worst_point(s, spectra, "quality.i_trd_worst");
        let lines = grid_current_lines(d, s, p);
        let mut mask: Vec<(f64, f64)> = standards::ieee1547_mask(49)
            .iter()
            .map(|&(h, l)| (f64::from(h) - 0.5, 100.0 * l))
            .collect();
        // Above the tables: no individual limit; the mask stops at order 49.5.
        mask.push((49.5, 1e-3));
        (
                lines,
                mask,
                "IEEE 1547-2018 individual limits (from memory)".into(),
                format!("Grid current spectrum, {}", p.label),
                format!("Grid current lines at the {} as a percentage of rated current, with the individual limits of IEEE Std 1547-2018 Tables 26 and 27 (from memory) up to order 49; orders from 50 on count only in the total rated-current distortion.", p.label),
            )
    } else {
        let p = worst_point(s, spectra, "quality.v_thd_worst");
        let class = s
            .get("quality.v_thd_worst")
            .and_then(|q| q.name.split(": ").nth(1).map(str::to_string))
            .unwrap_or_default();
        let cases = load_cases(s);
        let case = cases
            .iter()
            .find(|c| class.ends_with(c.label))
            .copied()
            .unwrap_or(cases[2]);
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

/// Sum of lines with phasors `a`, at angle theta.
fn synthesise(lines: &[(f64, Complex64)], theta: f64) -> f64 {
    lines
        .iter()
        .map(|(o, a)| a.norm() * (o * theta + a.arg()).cos())
        .sum()
}

/// The switch-node phase voltage and the filtered output over one fundamental period
/// at DC nominal, rated load; for a grid-connected bridge also the grid current.
fn waveforms(d: &Design, s: &Sheet, spectra: &[PointSpectrum]) -> Result<Vec<Figure>, PlotError> {
    let p = spectra
        .iter()
        .find(|p| p.key == "nominal")
        .unwrap_or(&spectra[0]);
    let f1 = s.value("output.f1");
    let k = switching::phase_factor(d);
    let Ok(w) = ripple::phase_waveform(&p.pwm) else {
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
        let series = vec![
            Series {
                label: "switch node".into(),
                points: steps,
            },
            Series {
                label: "its fundamental".into(),
                points: (0..=n)
                    .map(|i| {
                        let t = 2.0 * PI * i as f64 / n as f64;
                        (t.to_degrees(), synthesise(&fund, t))
                    })
                    .collect(),
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
            points: (0..=n)
                .map(|i| {
                    let t = 2.0 * PI * i as f64 / n as f64;
                    (t.to_degrees(), synthesise(&lines_i, t))
                })
                .collect(),
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
        let series = vec![
            Series {
                label: "switch node".into(),
                points: steps,
            },
            Series {
                label: "output".into(),
                points: (0..=n)
                    .map(|i| {
                        let t = 2.0 * PI * i as f64 / n as f64;
                        (t.to_degrees(), synthesise(&lines_o, t))
                    })
                    .collect(),
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
                    points: (0..=n)
                        .map(|i| {
                            let t = 2.0 * PI * i as f64 / n as f64;
                            (t.to_degrees(), synthesise(&lines, t))
                        })
                        .collect(),
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
fn ripple_envelope(
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
        if let Ok(env) = ripple::ripple_envelope(&p.pwm) {
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

/// Gain and phase of the output filter from the switch node, for each load case.
fn filter_bode(s: &Sheet) -> Result<Figure, PlotError> {
    let lc = filter_of(s);
    let f1 = s.value("output.f1");
    let f0 = s.value("filter.f0");
    let f_c = s.value("filter.f_carrier");
    let lo = 10f64.powf((f1 / 2.0).log10().floor());
    let hi = 10f64.powf((3.0 * f_c).log10().ceil());
    let freqs = log_space(lo, hi, 60);
    let curves: Vec<Curve> = load_cases(s)
        .iter()
        .map(|case| {
            let points = freqs
                .iter()
                .map(|&f| {
                    // An unloaded lossless LC has an infinite peak exactly at f0; a sample
                    // that lands there is moved by a millionth so it stays drawable.
                    let mut h = lc.response(case, f);
                    if !(h.norm().is_finite() && h.arg().is_finite()) {
                        h = lc.response(case, f * (1.0 + 1e-6));
                    }
                    (f, 20.0 * h.norm().log10(), low_pass_phase(h).to_degrees())
                })
                .collect();
            Curve {
                label: case.label.to_string(),
                points,
            }
        })
        .collect();
    let markers = vec![
        Marker {
            label: "f1".into(),
            at: f1,
        },
        Marker {
            label: "f0".into(),
            at: f0,
        },
        Marker {
            label: if (f_c - s.value("bridge.f_sw")).abs() < 1e-9 {
                "fsw".into()
            } else {
                "2 fsw".into()
            },
            at: f_c,
        },
    ];
    let svg = bode_svg(
        &BodePlot {
            title: "Output filter, switch node to output voltage",
            curves: &curves,
            markers: &markers,
        },
        720,
        560,
    )?;
    Ok(Figure {
        name: "filter-bode",
        caption: "Gain and phase of the LC output filter from the switch node to the output, for no load, light load and rated load; marks at the output frequency f1, the resonance f0 and the first carrier group.".to_string(),
        svg,
    })
}

/// The modulation index needed across the DC window and a margin around it, ideal and
/// at rated load through the filter, against the regulation limit and the linear limit.
///
/// Both indices are inversely proportional to the DC voltage, so each curve is the
/// sheet's value at DC minimum scaled by V_dc,min / V_dc: no second formula to drift.
fn modulation_window(d: &Design, s: &Sheet) -> Result<Figure, PlotError> {
    let v_min = s.value("dc.v_min");
    let v_max = s.value("dc.v_max");
    let v_lin = s.value("modulation.v_dc_min_linear");
    let lo = 0.9 * v_min.min(v_lin);
    let hi = 1.1 * v_max;
    let n = 200;
    let curve = |id: &str, label: &str| {
        let m_at_min = s.value(id);
        Series {
            label: label.to_string(),
            points: (0..=n)
                .map(|i| {
                    let v = lo + (hi - lo) * i as f64 / n as f64;
                    (v, m_at_min * v_min / v)
                })
                .collect(),
        }
    };
    let series = [
        curve("modulation.m_a.min", "rated load, through the filter"),
        curve("modulation.m_a_ideal.min", "ideal (no filter drop)"),
    ];
    let levels = [
        Level {
            label: "regulation limit".into(),
            y: s.value("limits.max_modulation_index"),
        },
        Level {
            label: "linear limit".into(),
            y: switching::linear_limit(d),
        },
    ];
    let markers: Vec<Marker> = [
        ("min", "dc.v_min"),
        ("nom", "dc.v_nominal"),
        ("max", "dc.v_max"),
        ("lin", "modulation.v_dc_min_linear"),
    ]
    .iter()
    .map(|(label, id)| Marker {
        label: label.to_string(),
        at: s.value(id),
    })
    .collect();
    let svg = line_svg(
        &LinePlot {
            title: "Modulation index over the DC input window",
            x_label: "DC voltage (V)",
            y_label: "Modulation index",
            series: &series,
            levels: &levels,
            markers: &markers,
        },
        720,
        420,
    )?;
    Ok(Figure {
        name: "modulation-window",
        caption: "Amplitude modulation index needed for the rated output across the DC voltage, ideal and at rated load through the filter; marks at the DC minimum, nominal and maximum and at the lowest DC voltage for linear modulation within the regulation limit.".to_string(),
        svg,
    })
}
