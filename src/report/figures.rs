//! The data behind each plot, computed with the same functions as the sheet so that a
//! figure can never disagree with the numbers beside it.

use super::plot::{
    bode_svg, line_svg, log_space, BodePlot, Curve, Level, LinePlot, Marker, PlotError, Series,
};
use super::spectrum_figures;
use crate::calc::filter::{filter_of, low_pass_phase};
use crate::calc::grid_filter::grid_filter_of;
use crate::calc::operating_point::load_cases;
use crate::calc::switching;
use crate::record::Design;
use crate::sheet::Sheet;

/// Every figure the engine can draw, by the name templates place it with.
pub const PLOT_NAMES: &[&str] = &[
    "filter-bode",
    "modulation-window",
    "switch-spectrum",
    "output-spectrum",
    "switch-waveform",
    "switch-waveform-zoom",
    "output-waveform",
    "ripple-envelope",
    "efficiency-curve",
    "loss-breakdown",
    "junction-temperature",
];

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
            out.push(spectrum_figures::switch_spectrum(design, sheet, &spectra)?);
            out.push(spectrum_figures::output_spectrum(design, sheet, &spectra)?);
            out.extend(spectrum_figures::waveforms(design, sheet, &spectra)?);
            if let Some(f) = spectrum_figures::ripple_envelope(design, sheet, &spectra)? {
                out.push(f);
            }
        }
    }
    out.extend(super::power_figures::all(design, sheet)?);
    Ok(out)
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
        } else {
            "filter with the grid inductance"
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
