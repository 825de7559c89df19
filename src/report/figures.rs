//! The data behind each plot, computed with the same functions as the sheet so that a
//! figure can never disagree with the numbers beside it.

use super::plot::{bode_svg, log_space, BodePlot, Curve, Marker, PlotError};
use crate::calc::filter::{filter_of, low_pass_phase};
use crate::calc::operating_point::load_cases;
use crate::record::Design;
use crate::sheet::Sheet;

/// One drawn figure.
pub struct Figure {
    pub name: &'static str,
    pub caption: String,
    pub svg: String,
}

/// Every figure of a package.
pub fn all(_design: &Design, sheet: &Sheet) -> Result<Vec<Figure>, PlotError> {
    Ok(vec![filter_bode(sheet)?])
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
            frequency: f1,
        },
        Marker {
            label: "f0".into(),
            frequency: f0,
        },
        Marker {
            label: if (f_c - s.value("bridge.f_sw")).abs() < 1e-9 {
                "fsw".into()
            } else {
                "2 fsw".into()
            },
            frequency: f_c,
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
