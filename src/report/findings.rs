//! The `@place findings SUBJECT` paragraphs: the main results of a subject in a few
//! sentences, worded for the design's connection and filter, so that one template
//! serves stand-alone and grid-connected designs alike. Every number is a sheet value
//! shown as the sheet shows it.

use super::sections::{err, value_markup};
use crate::record::{Design, FilterKind};
use crate::sheet::Sheet;

/// A short paragraph of the main results of a subject, worded for the design's
/// connection and filter, so that one template serves every kind of design.
pub fn findings(design: &Design, s: &Sheet, subject: &str) -> Result<String, (String, String)> {
    let v = |id: &str| s.get(id).map(value_markup);
    let grid = design.output.grid();
    let para = match subject {
        "filter" if grid => {
            let l1 = v("filter.inductance").unwrap_or_default();
            let c = v("filter.capacitance").unwrap_or_default();
            let lg = v("grid.inductance").unwrap_or_default();
            let resonance = v("filter.f_res").map_or(String::new(), |fr| {
                format!(" Its resonance lies at {fr}.")
            });
            let damping = v("filter.damping_resistance").map_or(String::new(), |r| {
                format!(" A damping resistor of {r} in series with the capacitor takes out the resonant peak.")
            });
            match design.filter.kind {
                FilterKind::Lcl => format!(
                    "The LCL filter has an inverter-side inductance of {l1}, a capacitor of {c} and a grid-side inductance of {}, with the grid's own {lg} behind the connection point.{resonance}{damping}",
                    v("filter.grid_side_inductance").unwrap_or_default(),
                ),
                FilterKind::Lc => format!(
                    "The LC filter has an inverter-side inductance of {l1} and a capacitor of {c} at the connection point; the grid's own {lg} behind it completes an LCL.{resonance}"
                ),
                FilterKind::L => format!(
                    "The L filter has an inductance of {l1}, with the grid's own {lg} behind the connection point."
                ),
            }
        }
        "filter" => format!(
            "The filter's resonance lies at {}, with a characteristic impedance of {}. At rated load its damping ratio is {}; at light load it falls to {}.",
            v("filter.f0").unwrap_or_default(),
            v("filter.z0").unwrap_or_default(),
            v("filter.zeta").unwrap_or_default(),
            v("filter.zeta_light").unwrap_or_default(),
        ),
        "spectrum" => match (v("spectrum.switch.thd.nominal"), v("spectrum.switch.h1.nominal")) {
            (Some(thd), Some(v1)) => {
                let method = s
                    .get("spectrum.switch.h1.nominal")
                    .map_or("", |q| if q.name.ends_with("analytic method") { "analytic" } else { "numerical" });
                let mut text = format!(
                    "At the DC nominal the switch-node fundamental is {v1} (peak) and the switch-node THD {thd} (weighted THD {}), computed by the {method} method.",
                    v("spectrum.switch.wthd.nominal").unwrap_or_default(),
                );
                if let Some(e) = v("spectrum.crosscheck.nominal") {
                    text.push_str(&format!(" The numerical spectrum of the exact waveform agrees with the analytic series to {e} of half the DC voltage."));
                }
                if let (Some(thd), Some(low)) = (v("spectrum.regular.thd.nominal"), s.get("spectrum.regular.baseband_max.nominal")) {
                    let order = low.name.split('(').nth(1).and_then(|t| t.split(')').next()).unwrap_or_default();
                    text.push_str(&format!(
                        " A digital modulator that samples the reference once per carrier period (symmetric regular sampling) would give a THD of {thd} and low-order lines natural sampling does not have, the largest {} ({order}).",
                        value_markup(low),
                    ));
                }
                text
            }
            _ => "No switching spectrum was computed for this design; see the warnings.".to_string(),
        },
        "quality" if grid => match v("quality.i_trd_worst") {
            Some(trd) => format!(
                "The grid current's total rated-current distortion is at most {trd} over the DC window. {}",
                match (v("quality.i_h_worst"), s.get("quality.i_h_worst").and_then(|q| q.name.split(": ").nth(1))) {
                    (Some(h), Some(at)) => format!("The harmonic nearest its individual limit is {h} of rated current ({at})."),
                    _ => "No integer harmonic below order 50 carries current in the ideal PWM spectrum; the individual limits are met trivially by the analysis, and low-order harmonics from dead time and control must be covered by measurement.".to_string(),
                }
            ),
            None => String::new(),
        },
        "quality" => match v("quality.v_thd_worst") {
            Some(thd) => format!(
                "The output voltage THD is at most {thd} ({}) against a limit of {}; the largest single line is {} of the fundamental ({}).",
                s.get("quality.v_thd_worst").and_then(|q| q.name.split(": ").nth(1)).unwrap_or_default(),
                v("limits.max_voltage_thd").unwrap_or_default(),
                v("quality.v_h_worst").unwrap_or_default(),
                s.get("quality.v_h_worst").and_then(|q| q.name.split(": ").nth(1)).unwrap_or_default(),
            ),
            None => String::new(),
        },
        "ripple" => match v("ripple.i_pp_max") {
            Some(r) => format!(
                "The inductor ripple current reaches {r} peak-to-peak, {} of the rated peak current; with it the inductor peaks at {}.{}",
                v("ripple.fraction").unwrap_or_default(),
                v("filter.i_l_peak").unwrap_or_default(),
                v("filter.i_c_rms").map_or(String::new(), |i| format!(" The filter capacitor carries {i} rms.")),
            ),
            None => String::new(),
        },
        "semiconductors" => match (v("semi.v_peak"), v("semi.p_bridge.nominal")) {
            (Some(vp), Some(pb)) => {
                let dev = design.switches.as_ref().map_or(String::new(), |s| {
                    let kind = match s.device.kind {
                        crate::record::DeviceKind::Igbt { .. } => "an IGBT with its diode",
                        crate::record::DeviceKind::Mosfet { .. } => "a MOSFET with its body diode",
                    };
                    match (&s.device.name, &s.device.library) {
                        (n, Some(lib)) if !n.is_empty() => format!("{kind}, {n} from {lib}"),
                        (n, None) if !n.is_empty() => format!("{kind}, {n}"),
                        _ => format!("{kind} written out in the record"),
                    }
                });
                format!(
                    "Each switch position ({dev}) blocks at most {vp} with overshoot, {} of its rating, and carries at most {} peak, {} of its continuous rating. At DC nominal and rated load the bridge's semiconductors lose {pb} ({} in one switch, {} in its diode){}.",
                    v("semi.voltage_utilisation").unwrap_or_default(),
                    v(if s.get("filter.i_l_peak").is_some() { "filter.i_l_peak" } else { "semi.i_leg" }).unwrap_or_default(),
                    v("semi.current_utilisation").unwrap_or_default(),
                    v("semi.p_switch.nominal").unwrap_or_default(),
                    v("semi.p_diode.nominal").unwrap_or_default(),
                    v("semi.cond_deviation").map_or(String::new(), |e| format!("; the numerically integrated conduction losses agree with the closed forms to {e}")),
                )
            }
            _ => "The record describes no switches, so no stresses or losses were evaluated.".to_string(),
        },
        "thermal" => match (v("thermal.t_j_hot"), v("thermal.t_a")) {
            (Some(tj), Some(ta)) => format!(
                "At the highest ambient of {ta} the hottest junction reaches {tj} against a maximum of {} less a margin of {}. The heatsink would meet that margin down to a thermal resistance of {}; the design tolerates an ambient of up to {} before a junction reaches its maximum.",
                v("thermal.t_j_max").unwrap_or_default(),
                v("limits.min_junction_margin").unwrap_or_default(),
                v("thermal.r_sa_needed").unwrap_or_default(),
                v("thermal.t_a_max").unwrap_or_default(),
            ),
            _ => "The record describes no thermal path, so no temperatures were evaluated.".to_string(),
        },
        "dc-link" => match (v("dclink.life"), v("dclink.t_hotspot")) {
            (Some(life), Some(hs)) => {
                let ripple = match (v("dclink.v_mid_pp"), v("dclink.v_2f_pp")) {
                    (Some(m), _) => format!(" The midpoint of the split bank swings by {m} peak to peak at f1."),
                    (_, Some(r)) => format!(" The bus ripples by {r} peak to peak at twice the output frequency."),
                    _ => String::new(),
                };
                format!(
                    "The bank carries up to {} rms; its hot spot reaches {hs}, for an expected life of {life} against a target of {}.{ripple} At the DC maximum it stores {}, which the bleeder takes {} to bring below {}.",
                    ["min", "nominal", "max"]
                        .iter()
                        .filter_map(|k| s.get(&format!("dclink.i_rms.{k}")))
                        .max_by(|a, b| a.value.total_cmp(&b.value))
                        .map(value_markup)
                        .unwrap_or_default(),
                    v("limits.min_capacitor_life").unwrap_or_default(),
                    v("dclink.energy").unwrap_or_default(),
                    v("dclink.t_discharge").unwrap_or_default(),
                    v("limits.safe_touch_voltage").unwrap_or_default(),
                )
            }
            _ => "The record describes no DC-link bank, so its stresses were not evaluated.".to_string(),
        },
        "efficiency" => match (v("efficiency.eta.nominal.k100"), v("efficiency.eta_cec.nominal")) {
            (Some(full), Some(cec)) => format!(
                "At DC nominal the efficiency is {full} at rated power and {} at half power; weighted, it is {cec} by the California Energy Commission's weighting and {} by the European weighting. At the DC minimum the weighted figures are {} and {}, at the DC maximum {} and {}.",
                v("efficiency.eta.nominal.k50").unwrap_or_default(),
                v("efficiency.eta_eu.nominal").unwrap_or_default(),
                v("efficiency.eta_cec.min").unwrap_or_default(),
                v("efficiency.eta_eu.min").unwrap_or_default(),
                v("efficiency.eta_cec.max").unwrap_or_default(),
                v("efficiency.eta_eu.max").unwrap_or_default(),
            ),
            _ => "The record describes no switches, so no losses or efficiencies were evaluated.".to_string(),
        },
        "ratings" => format!(
            "For the nameplate: a continuous output current of {} per phase, a maximum DC input voltage of {} and a maximum DC input current of {}. The output circuit's overcurrent device must be rated at least {}; the next standard rating is {}. Local codes, the authority having jurisdiction and the utility's rules govern the actual protection.",
            v("ratings.i_out").unwrap_or_default(),
            v("ratings.v_dc_max").unwrap_or_default(),
            v("ratings.i_dc_max").unwrap_or_default(),
            v("ratings.ocpd_min").unwrap_or_default(),
            v("ratings.ocpd").unwrap_or_default(),
        ),
        other => {
            return Err(err(
                format!("no findings for `{other}`"),
                "use `@place findings filter`, `spectrum`, `quality`, `ripple`, `semiconductors`, `thermal`, `dc-link`, `efficiency` or `ratings`",
            ))
        }
    };
    Ok(para)
}
