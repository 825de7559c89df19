//! The bridge's thermal path: a series network from each junction to the ambient, all
//! switch positions sharing one heatsink, with the losses of `semiconductor`.
//!
//!   T_s = T_a + P_bridge R_th,sa                 (heatsink)
//!   T_c = T_s + (P_T + P_D) R_th,cs              (case of one switch-and-diode package)
//!   T_j,T = T_c + P_T R_th,jc,T,  T_j,D = T_c + P_D R_th,jc,D
//!
//! (steady state of a thermal resistance network, the electrical analogy; common
//! practice). Every position carries the same average losses (`bridge_leg`), so one
//! position's temperatures are those of all. A MOSFET's on-resistance rises with its
//! junction temperature, so its losses and temperature are solved together by fixed-
//! point iteration; an IGBT's datasheet values are taken at its hot junction as
//! entered, and need no iteration.

use super::bridge_leg::{
    position_losses, Channel, DeviceData, LegIntegrals, LegPoint, PositionLosses,
};
use super::modulation::DC_POINTS;
use super::{given, limit_quantity, limit_source};
use crate::record::{Design, DeviceKind, Switches, Thermal};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// Temperature at which a MOSFET's R_ds,on is given (datasheets quote 25 degC).
pub const R_DS_ON_REFERENCE: f64 = 25.0;

/// The devices and their thermal path, as numbers.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StageModel {
    pub device: DeviceData,
    /// R_ds,on at 25 degC and its relative rise per kelvin, for a MOSFET.
    pub mosfet: Option<(f64, f64)>,
    pub r_jc_switch: f64,
    pub r_jc_diode: f64,
    pub r_cs: f64,
    pub r_sa: f64,
    /// Switch positions on the heatsink (two per leg).
    pub positions: f64,
    pub t_j_max: f64,
}

/// Temperatures of one position.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Temperatures {
    pub heatsink: f64,
    pub case: f64,
    pub switch: f64,
    pub diode: f64,
}

impl Temperatures {
    pub fn hottest(&self) -> f64 {
        self.switch.max(self.diode)
    }
}

impl StageModel {
    pub fn of(d: &Design) -> Option<StageModel> {
        let (sw, th) = (d.switches.as_ref()?, d.thermal.as_ref()?);
        Some(model(d, sw, th))
    }

    /// The device data with a MOSFET's resistance at junction temperature `t_j`.
    pub fn device_at(&self, t_j: f64) -> DeviceData {
        match self.mosfet {
            Some((r25, alpha)) => DeviceData {
                channel: Channel::Mosfet {
                    r: r25 * (1.0 + alpha * (t_j - R_DS_ON_REFERENCE)),
                },
                ..self.device
            },
            None => self.device,
        }
    }

    pub fn temperatures(&self, l: &PositionLosses, t_a: f64) -> Temperatures {
        let heatsink = t_a + self.positions * l.total() * self.r_sa;
        let case = heatsink + l.total() * self.r_cs;
        Temperatures {
            heatsink,
            case,
            switch: case + l.switch() * self.r_jc_switch,
            diode: case + l.diode() * self.r_jc_diode,
        }
    }

    /// Losses and temperatures at ambient `t_a`; a MOSFET's by iteration to 0.001 K.
    /// A loop that does not settle (thermal runaway) returns infinite temperatures.
    pub fn operate(&self, p: &LegPoint, t_a: f64) -> (f64, PositionLosses, Temperatures) {
        self.operate_with(p, &LegIntegrals::of(p, self.device.dead_time), t_a)
    }

    /// As [`StageModel::operate`], with the leg's integrals already taken: the losses of
    /// any temperature then follow without another pass over the period.
    pub fn operate_with(
        &self,
        p: &LegPoint,
        g: &LegIntegrals,
        t_a: f64,
    ) -> (f64, PositionLosses, Temperatures) {
        if self.mosfet.is_none() {
            let l = g.losses(p, &self.device);
            return (f64::NAN, l, self.temperatures(&l, t_a));
        }
        let mut t_j = t_a;
        for _ in 0..200 {
            let l = g.losses(p, &self.device_at(t_j));
            let t = self.temperatures(&l, t_a);
            if (t.switch - t_j).abs() < 1e-3 {
                return (t_j, l, t);
            }
            if !t.switch.is_finite() || t.switch > 1000.0 {
                break;
            }
            t_j = t.switch;
        }
        let l = g.losses(p, &self.device_at(t_j));
        let inf = Temperatures {
            heatsink: f64::INFINITY,
            case: f64::INFINITY,
            switch: f64::INFINITY,
            diode: f64::INFINITY,
        };
        (f64::INFINITY, l, inf)
    }

    /// The highest ambient at which the hottest junction just reaches `t_limit`, by
    /// bisection (losses rise with temperature for a MOSFET, so it is solved, not
    /// scaled).
    pub fn ambient_for(&self, p: &LegPoint, t_limit: f64) -> f64 {
        let g = LegIntegrals::of(p, self.device.dead_time);
        let hottest = |t_a: f64| self.operate_with(p, &g, t_a).2.hottest();
        let (mut lo, mut hi) = (t_limit - 1000.0, t_limit);
        if hottest(lo) > t_limit {
            return f64::NAN;
        }
        for _ in 0..80 {
            let mid = 0.5 * (lo + hi);
            if hottest(mid) > t_limit {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        lo
    }
}

fn model(d: &Design, sw: &Switches, th: &Thermal) -> StageModel {
    let dev = &sw.device;
    let (channel, mosfet) = match &dev.kind {
        DeviceKind::Igbt { v_ce0, r_ce } => (
            Channel::Igbt {
                v0: v_ce0.value,
                r: r_ce.value,
            },
            None,
        ),
        DeviceKind::Mosfet {
            r_ds_on,
            r_ds_on_coefficient,
        } => (
            Channel::Mosfet { r: r_ds_on.value },
            Some((r_ds_on.value, r_ds_on_coefficient.value)),
        ),
    };
    StageModel {
        device: DeviceData {
            channel,
            e_sw: dev.e_on.value + dev.e_off.value,
            e_rec: dev.e_rec.value,
            v_ref: dev.reference_voltage.value,
            i_ref: dev.reference_current.value,
            diode_v0: dev.diode_v_f0.value,
            diode_r: dev.diode_r_f.value,
            dead_time: sw.dead_time.as_ref().map_or(0.0, |g| g.value),
        },
        mosfet,
        r_jc_switch: dev.r_th_jc_switch.value,
        r_jc_diode: dev.r_th_jc_diode.value,
        r_cs: th.r_th_cs.value,
        r_sa: th.r_th_sa.value,
        positions: 2.0 * super::switching::modulation_of(d).legs() as f64,
        t_j_max: dev.t_j_max.value,
    }
}

/// Traces the thermal network at each DC point from the sheet's losses, the hottest
/// junction and its check, the heatsink needed for the margin and the highest ambient.
pub fn evaluate(d: &Design, s: &mut Sheet) {
    let (Some(sw), Some(th), Some(model)) = (&d.switches, &d.thermal, StageModel::of(d)) else {
        return;
    };
    let dev = &sw.device;
    let t_a = given(
        s,
        "thermal.t_a",
        "Highest ambient temperature",
        "T_a",
        &th.ambient_max,
        Unit::DegreeCelsius,
    );
    given(
        s,
        "thermal.r_cs",
        "Case-to-heatsink thermal resistance, per package",
        "R_(\"th\",\"cs\")",
        &th.r_th_cs,
        Unit::KelvinPerWatt,
    );
    given(
        s,
        "thermal.r_sa",
        "Heatsink-to-ambient thermal resistance",
        "R_(\"th\",\"sa\")",
        &th.r_th_sa,
        Unit::KelvinPerWatt,
    );
    given(
        s,
        "thermal.r_jc_switch",
        "Junction-to-case thermal resistance, switch",
        "R_(\"th\",\"jc,T\")",
        &dev.r_th_jc_switch,
        Unit::KelvinPerWatt,
    );
    given(
        s,
        "thermal.r_jc_diode",
        "Junction-to-case thermal resistance, diode",
        "R_(\"th\",\"jc,D\")",
        &dev.r_th_jc_diode,
        Unit::KelvinPerWatt,
    );
    let t_max = given(
        s,
        "thermal.t_j_max",
        "Maximum junction temperature",
        "T_(j,max)",
        &dev.t_j_max,
        Unit::DegreeCelsius,
    );
    let network = || {
        Source::common_practice(
            "steady-state series thermal network, junction to case to heatsink to ambient (the electrical analogy of thermal resistance)",
        )
    };
    let mut hottest: Vec<String> = Vec::new();
    let mut worst = (f64::NEG_INFINITY, "nominal");
    for (key, label, _) in DC_POINTS {
        let sh = super::modulation::short(key);
        let p_bridge = format!("semi.p_bridge.{key}");
        let p_pos = format!("semi.p_position.{key}");
        let (pt, pd) = (
            format!("semi.p_switch.{key}"),
            format!("semi.p_diode.{key}"),
        );
        let (bs, ps, ts, ds) = (
            s.symbol(&p_bridge),
            s.symbol(&p_pos),
            s.symbol(&pt),
            s.symbol(&pd),
        );
        let (vb, vp, vt, vd) = (
            s.value(&p_bridge),
            s.value(&p_pos),
            s.value(&pt),
            s.value(&pd),
        );
        let t_s = s
            .derive(
                &format!("thermal.t_s.{key}"),
                &format!("Heatsink temperature, {label}"),
                &format!("T_(s,\"{sh}\")"),
                Unit::DegreeCelsius,
            )
            .formula(&format!("T_a + {bs} R_(\"th\",\"sa\")"))
            .inputs(&["thermal.t_a", &p_bridge, "thermal.r_sa"])
            .source(network())
            .value(t_a + vb * th.r_th_sa.value);
        let t_c = s
            .derive(
                &format!("thermal.t_c.{key}"),
                &format!("Case temperature, {label}"),
                &format!("T_(c,\"{sh}\")"),
                Unit::DegreeCelsius,
            )
            .formula(&format!("T_(s,\"{sh}\") + {ps} R_(\"th\",\"cs\")"))
            .inputs(&[&format!("thermal.t_s.{key}"), &p_pos, "thermal.r_cs"])
            .source(network())
            .value(t_s + vp * th.r_th_cs.value);
        let tj_t = s
            .derive(
                &format!("thermal.t_j_switch.{key}"),
                &format!("Switch junction temperature, {label}"),
                &format!("T_(j,\"T,{sh}\")"),
                Unit::DegreeCelsius,
            )
            .formula(&format!("T_(c,\"{sh}\") + {ts} R_(\"th\",\"jc,T\")"))
            .inputs(&[&format!("thermal.t_c.{key}"), &pt, "thermal.r_jc_switch"])
            .source(network())
            .value(t_c + vt * dev.r_th_jc_switch.value);
        let tj_d = s
            .derive(
                &format!("thermal.t_j_diode.{key}"),
                &format!("Diode junction temperature, {label}"),
                &format!("T_(j,\"D,{sh}\")"),
                Unit::DegreeCelsius,
            )
            .formula(&format!("T_(c,\"{sh}\") + {ds} R_(\"th\",\"jc,D\")"))
            .inputs(&[&format!("thermal.t_c.{key}"), &pd, "thermal.r_jc_diode"])
            .source(network())
            .value(t_c + vd * dev.r_th_jc_diode.value);
        hottest.push(format!("thermal.t_j_switch.{key}"));
        hottest.push(format!("thermal.t_j_diode.{key}"));
        if tj_t.max(tj_d) > worst.0 {
            worst = (tj_t.max(tj_d), key);
        }
    }
    let ids: Vec<&str> = hottest.iter().map(String::as_str).collect();
    let syms: Vec<String> = ids.iter().map(|id| s.symbol(id)).collect();
    s.derive(
        "thermal.t_j_hot",
        "Hottest junction at the highest ambient",
        "T_(j,\"hot\")",
        Unit::DegreeCelsius,
    )
    .formula(&format!("max({})", syms.join(", ")))
    .inputs(&ids)
    .value(worst.0);
    let margin = limit_quantity(
        s,
        "limits.min_junction_margin",
        "Least junction temperature margin",
        "Delta T_(j,\"min\")",
        &d.limits.min_junction_margin,
        Unit::Kelvin,
    );
    s.derive(
        "thermal.t_j_limit",
        "Highest junction temperature allowed",
        "T_(j,\"lim\")",
        Unit::DegreeCelsius,
    )
    .formula("T_(j,max) - Delta T_(j,\"min\")")
    .inputs(&["thermal.t_j_max", "limits.min_junction_margin"])
    .source(limit_source(&d.limits.min_junction_margin))
    .value(t_max - margin);
    // The check compares the margin itself (a temperature difference), so that its
    // percentage is of the required margin, not of a Celsius reading.
    s.derive(
        "thermal.j_margin",
        "Distance of the hottest junction below its maximum",
        "Delta T_j",
        Unit::Kelvin,
    )
    .formula("T_(j,max) - T_(j,\"hot\")")
    .inputs(&["thermal.t_j_max", "thermal.t_j_hot"])
    .value(t_max - worst.0);
    s.check(
        "check.thermal.junction",
        "The hottest junction stays at least the margin below its maximum, at the highest ambient and every DC point",
        "thermal.j_margin",
        Relation::AtLeast,
        margin,
        limit_source(&d.limits.min_junction_margin),
    );

    // The heatsink that just meets the margin at the worst DC point, with the losses
    // at that junction temperature (a MOSFET's are higher there than at present).
    let key = worst.1;
    let sh = super::modulation::short(key);
    let a = super::leg_current::leg_point(d, s, key, 1.0);
    let at_limit = position_losses(&a, &model.device_at(t_max - margin));
    let t_lim = t_max - margin;
    let (pt, pd, pp) = (at_limit.switch(), at_limit.diode(), at_limit.total());
    let junction_rise = (pt * model.r_jc_switch).max(pd * model.r_jc_diode);
    let needed = (t_lim - t_a - pp * model.r_cs - junction_rise) / (model.positions * pp);
    let (p_t, p_d, p_p, p_b) = (
        format!("semi.p_switch.{key}"),
        format!("semi.p_diode.{key}"),
        format!("semi.p_position.{key}"),
        format!("semi.p_bridge.{key}"),
    );
    let (st, sd, sp, sb) = (
        s.symbol(&p_t),
        s.symbol(&p_d),
        s.symbol(&p_p),
        s.symbol(&p_b),
    );
    let mut rsa = s
        .derive("thermal.r_sa_needed", &format!("Heatsink resistance that meets the margin, {}", label_of(key)), "R_(\"th\",\"sa,req\")", Unit::KelvinPerWatt)
        .formula(&format!(
            "(T_(j,\"lim\") - T_a - {sp} R_(\"th\",\"cs\") - max({st} R_(\"th\",\"jc,T\"), {sd} R_(\"th\",\"jc,D\"))) / {sb}"
        ))
        .inputs(&["thermal.t_j_limit", "thermal.t_a", &p_p, "thermal.r_cs", &p_t, "thermal.r_jc_switch", &p_d, "thermal.r_jc_diode", &p_b])
        .source(network());
    if model.mosfet.is_some() {
        rsa = rsa.source(Source::common_practice(
            "steady-state thermal network solved for R_th,sa, with the MOSFET losses taken at the junction limit T_j,lim rather than at the present junction temperature (the inputs shown are the present losses)",
        ));
    }
    let _ = rsa.value(needed);
    let ta_max = model.ambient_for(&a, t_max);
    let formula = if model.mosfet.is_some() {
        format!("T_a \"where\" T_(j,\"hot\") = T_(j,max) \"at\" {sh}")
    } else {
        format!("T_a + T_(j,max) - T_(j,\"hot\") \"at\" {sh}")
    };
    s.derive("thermal.t_a_max", "Highest ambient the design tolerates (junction at its maximum)", "T_(a,max)", Unit::DegreeCelsius)
        .formula(&formula)
        .inputs(&["thermal.t_a", "thermal.t_j_max", "thermal.t_j_hot"])
        .source(if model.mosfet.is_some() {
            Source::common_practice("the ambient found by bisection at which the hottest junction reaches its maximum, with R_ds,on at each temperature")
        } else {
            Source::Derived
        })
        .value(ta_max);
}

fn label_of(key: &str) -> &'static str {
    DC_POINTS
        .iter()
        .find(|(k, _, _)| *k == key)
        .map_or("DC nominal", |(_, l, _)| l)
}
