//! The power stage's figures: efficiency over the load range, the loss breakdown, and
//! the junction temperatures over the ambient. Their data are the sheet's own values,
//! or (for the temperature sweep) the same thermal model the sheet was computed with.

use super::bar_plot::{bars_svg, BarGroup, BarPlot};
use super::figures::Figure;
use super::plot::{line_svg, Level, LinePlot, Marker, PlotError, Series};
use crate::calc::efficiency::efficiency_id;
use crate::calc::leg_current::{leg_point, LOAD_FRACTIONS};
use crate::calc::modulation::DC_POINTS;
use crate::calc::thermal::StageModel;
use crate::record::Design;
use crate::sheet::Sheet;

/// The power-stage figures the design can draw (none without switches).
pub fn all(d: &Design, s: &Sheet) -> Result<Vec<Figure>, PlotError> {
    if s.get("efficiency.eta.nominal.k100").is_none() {
        return Ok(Vec::new());
    }
    Ok(vec![
        efficiency_curve(s)?,
        loss_breakdown(s)?,
        junction_temperature(d, s)?,
    ])
}

fn efficiency_curve(s: &Sheet) -> Result<Figure, PlotError> {
    let series: Vec<Series> = DC_POINTS
        .iter()
        .map(|(key, label, _)| Series {
            label: label.to_string(),
            points: LOAD_FRACTIONS
                .iter()
                .map(|&k| (100.0 * k, 100.0 * s.value(&efficiency_id(key, k))))
                .collect(),
        })
        .collect();
    let levels = [Level {
        label: "CEC weighted, DC nominal".into(),
        y: 100.0 * s.value("efficiency.eta_cec.nominal"),
    }];
    let svg = line_svg(
        &LinePlot {
            title: "Efficiency over the load range",
            x_label: "Output power (% of rated)",
            y_label: "Efficiency (%)",
            series: &series,
            levels: &levels,
            markers: &[],
        },
        720,
        420,
    )?;
    Ok(Figure {
        name: "efficiency-curve",
        caption: "Efficiency at 5, 10, 20, 30, 50, 75 and 100 % of rated power for the DC minimum, nominal and maximum, at the highest ambient, with the CEC weighted efficiency at DC nominal as a level.".to_string(),
        svg,
    })
}

/// The id of a loss component at a DC point.
type IdAt = fn(&str) -> String;

fn loss_breakdown(s: &Sheet) -> Result<Figure, PlotError> {
    let n_pos = s.value("semi.positions");
    let per_point = |f: &dyn Fn(&str) -> f64| -> Vec<f64> {
        DC_POINTS.iter().map(|(key, _, _)| f(key)).collect()
    };
    let get = |id: String| s.get(&id).map_or(0.0, |q| q.value);
    let mut groups = vec![
        BarGroup {
            label: "switch conduction".into(),
            values: per_point(&|k| n_pos * get(format!("semi.p_switch_cond.{k}"))),
        },
        BarGroup {
            label: "switch switching".into(),
            values: per_point(&|k| n_pos * get(format!("semi.p_switch_sw.{k}"))),
        },
        BarGroup {
            label: "diode conduction".into(),
            values: per_point(&|k| n_pos * get(format!("semi.p_diode_cond.{k}"))),
        },
        BarGroup {
            label: "diode recovery".into(),
            values: per_point(&|k| n_pos * get(format!("semi.p_diode_rec.{k}"))),
        },
    ];
    let optional: [(&str, IdAt); 5] = [
        ("inductor windings", |k| format!("efficiency.p_cu.{k}.k100")),
        ("DC-link ESR", |k| format!("efficiency.p_cap.{k}.k100")),
        ("bleeder", |k| format!("dclink.p_bleed.{k}")),
        ("damping resistor", |_| "filter.p_damping".to_string()),
        ("auxiliary supplies", |_| "efficiency.p_aux".to_string()),
    ];
    for (label, id) in optional {
        if s.get(&id("nominal")).is_some() {
            groups.push(BarGroup {
                label: label.into(),
                values: per_point(&|k| get(id(k))),
            });
        }
    }
    let series: Vec<String> = DC_POINTS.iter().map(|p| p.1.to_string()).collect();
    let svg = bars_svg(
        &BarPlot {
            title: "Losses at rated power",
            value_label: "Loss (W)",
            series: &series,
            groups: &groups,
        },
        720,
    )?;
    Ok(Figure {
        name: "loss-breakdown",
        caption: "Losses of the whole converter at rated power by component, for the DC minimum, nominal and maximum, at the highest ambient; the semiconductor bars are the sum over all switch positions.".to_string(),
        svg,
    })
}

fn junction_temperature(d: &Design, s: &Sheet) -> Result<Figure, PlotError> {
    let Some(model) = StageModel::of(d) else {
        return Err(PlotError::NoCurves);
    };
    // The DC point with the hottest junction at the highest ambient.
    let worst = DC_POINTS
        .iter()
        .max_by(|a, b| hottest(s, a.0).total_cmp(&hottest(s, b.0)))
        .map_or("nominal", |p| p.0);
    let label = DC_POINTS.iter().find(|p| p.0 == worst).map_or("", |p| p.1);
    let a = leg_point(d, s, worst, 1.0);
    let t_a = s.value("thermal.t_a");
    let t_top = s.value("thermal.t_a_max");
    let hi = if t_top.is_finite() {
        t_top.max(t_a) + 5.0
    } else {
        t_a + 20.0
    };
    let lo = hi - 80.0;
    let n = 80;
    let (mut sw, mut di) = (Vec::new(), Vec::new());
    let g = crate::calc::bridge_leg::LegIntegrals::of(&a, model.device.dead_time);
    for i in 0..=n {
        let ta = lo + (hi - lo) * i as f64 / n as f64;
        let (_, _, t) = model.operate_with(&a, &g, ta);
        if t.switch.is_finite() && t.diode.is_finite() {
            sw.push((ta, t.switch));
            di.push((ta, t.diode));
        }
    }
    let series = [
        Series {
            label: "switch junction".into(),
            points: sw,
        },
        Series {
            label: "diode junction".into(),
            points: di,
        },
    ];
    let levels = [
        Level {
            label: "Tj,max".into(),
            y: s.value("thermal.t_j_max"),
        },
        Level {
            label: "Tj,max less margin".into(),
            y: s.value("thermal.t_j_limit"),
        },
    ];
    let markers = [Marker {
        label: "Ta".into(),
        at: t_a,
    }];
    let svg = line_svg(
        &LinePlot {
            title: "Junction temperatures over the ambient, rated power",
            x_label: "Ambient temperature (°C)",
            y_label: "Junction temperature (°C)",
            series: &series,
            levels: &levels,
            markers: &markers,
        },
        720,
        420,
    )?;
    Ok(Figure {
        name: "junction-temperature",
        caption: format!("Switch and diode junction temperatures at rated power over the ambient, at the {label} (the hottest DC point), with the maximum junction temperature, the margin below it and the design's highest ambient."),
        svg,
    })
}

fn hottest(s: &Sheet, key: &str) -> f64 {
    let t = |id: String| s.get(&id).map_or(f64::NEG_INFINITY, |q| q.value);
    t(format!("thermal.t_j_switch.{key}")).max(t(format!("thermal.t_j_diode.{key}")))
}
