//! The DC source and its voltage window: the minimum, nominal and maximum DC voltage
//! every other subject uses. A fixed window is taken as written; a battery's follows
//! from its open-circuit voltages and the sag of its internal resistance at rated
//! power; a PV string's from its modules' temperature coefficients at the site's
//! design temperatures (the coldest morning for the highest open-circuit voltage, the
//! hottest afternoon for the lowest maximum-power voltage).
//!
//! The bridge's losses are not known here, so the DC power is taken as the rated
//! output power (a battery sags a little more in fact; assumption E10).

use super::{given, limit_quantity, limit_source};
use crate::record::{Battery, DcSource, Design, PvString};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;

/// Standard test conditions of PV modules: 25 degC cell temperature (with 1000 W/m2
/// irradiance and air mass 1.5; IEC 60904-3, from memory).
pub const STC_CELL_TEMPERATURE: f64 = 25.0;

pub fn evaluate(d: &Design, s: &mut Sheet) {
    match &d.source {
        DcSource::Fixed {
            v_min,
            v_nominal,
            v_max,
        } => {
            given(
                s,
                "dc.v_min",
                "DC voltage, minimum",
                "V_\"dc,min\"",
                v_min,
                Unit::Volt,
            );
            given(
                s,
                "dc.v_nominal",
                "DC voltage, nominal",
                "V_\"dc,nom\"",
                v_nominal,
                Unit::Volt,
            );
            given(
                s,
                "dc.v_max",
                "DC voltage, maximum",
                "V_\"dc,max\"",
                v_max,
                Unit::Volt,
            );
        }
        DcSource::Battery(b) => battery(s, b),
        DcSource::PvString(pv) => pv_string(d, s, pv),
    }
}

/// Terminal voltage of a source of open-circuit voltage `v0` and resistance `r`
/// delivering power `p`: the larger root of V^2 - v0 V + r p = 0 (circuit theory),
/// NaN when the source cannot deliver `p` at all (p > v0^2 / (4 r)).
pub fn loaded_voltage(v0: f64, r: f64, p: f64) -> f64 {
    let disc = v0 * v0 - 4.0 * r * p;
    if disc < 0.0 {
        f64::NAN
    } else {
        (v0 + disc.sqrt()) / 2.0
    }
}

fn battery(s: &mut Sheet, b: &Battery) {
    let e = given(
        s,
        "battery.v_empty",
        "Battery open-circuit voltage, empty",
        "V_\"empty\"",
        &b.empty,
        Unit::Volt,
    );
    let f = given(
        s,
        "battery.v_full",
        "Battery open-circuit voltage, full",
        "V_\"full\"",
        &b.full,
        Unit::Volt,
    );
    let r = given(
        s,
        "battery.r_internal",
        "Battery internal resistance",
        "R_i",
        &b.internal_resistance,
        Unit::Ohm,
    );
    let p = s.value("output.power");
    let n = match &b.nominal {
        Some(g) => given(
            s,
            "battery.v_nom",
            "Battery open-circuit voltage, nominal",
            "V_\"bat,nom\"",
            g,
            Unit::Volt,
        ),
        None => s
            .derive(
                "battery.v_nom",
                "Battery open-circuit voltage, nominal",
                "V_\"bat,nom\"",
                Unit::Volt,
            )
            .formula("(V_\"empty\" + V_\"full\") / 2")
            .inputs(&["battery.v_empty", "battery.v_full"])
            .source(Source::common_practice(
                "the midpoint of the empty and full voltages where the record gives no nominal",
            ))
            .value((e + f) / 2.0),
    };
    let sag = || {
        Source::common_practice(
            "terminal voltage of an open-circuit voltage behind the internal resistance at rated power: the larger root of V^2 - V_0 V + R_i P = 0",
        )
    };
    let v_min = s
        .derive(
            "dc.v_min",
            "DC voltage, minimum (empty, at rated power)",
            "V_\"dc,min\"",
            Unit::Volt,
        )
        .formula("(V_\"empty\" + sqrt(V_\"empty\"^2 - 4 R_i P)) / 2")
        .inputs(&["battery.v_empty", "battery.r_internal", "output.power"])
        .source(sag())
        .value(loaded_voltage(e, r, p));
    s.derive(
        "dc.v_nominal",
        "DC voltage, nominal (at rated power)",
        "V_\"dc,nom\"",
        Unit::Volt,
    )
    .formula("(V_\"bat,nom\" + sqrt(V_\"bat,nom\"^2 - 4 R_i P)) / 2")
    .inputs(&["battery.v_nom", "battery.r_internal", "output.power"])
    .source(sag())
    .value(loaded_voltage(n, r, p));
    s.derive("dc.v_max", "DC voltage, maximum (full, no load)", "V_\"dc,max\"", Unit::Volt)
        .formula("V_\"full\"")
        .inputs(&["battery.v_full"])
        .source(Source::common_practice(
            "a full battery at no load; a charger's float or equalising voltage above it must be added by the record where it reaches the bridge",
        ))
        .value(f);
    if !v_min.is_finite() {
        s.warn(
            "dc.v_min",
            "the battery cannot deliver the rated power when empty: its internal resistance is too high (rated power above V_empty^2 / (4 R_i))",
        );
    }
}

fn pv_string(d: &Design, s: &mut Sheet, pv: &PvString) {
    let ns = given(
        s,
        "pv.modules_in_series",
        "Modules in series per string",
        "N_s",
        &pv.modules_in_series,
        Unit::One,
    );
    let np = given(
        s,
        "pv.strings_in_parallel",
        "Strings in parallel",
        "N_p",
        &pv.strings_in_parallel,
        Unit::One,
    );
    let voc = given(
        s,
        "pv.voc",
        "Module open-circuit voltage at STC",
        "V_\"oc\"",
        &pv.voc,
        Unit::Volt,
    );
    let vmp = given(
        s,
        "pv.vmp",
        "Module maximum-power voltage at STC",
        "V_\"mp\"",
        &pv.vmp,
        Unit::Volt,
    );
    let isc = given(
        s,
        "pv.isc",
        "Module short-circuit current at STC",
        "I_\"sc\"",
        &pv.isc,
        Unit::Ampere,
    );
    let imp = given(
        s,
        "pv.imp",
        "Module maximum-power current at STC",
        "I_\"mp\"",
        &pv.imp,
        Unit::Ampere,
    );
    let bv = given(
        s,
        "pv.voc_coefficient",
        "Temperature coefficient of Voc",
        "beta_\"oc\"",
        &pv.voc_coefficient,
        Unit::PercentPerKelvin,
    );
    let bm = given(
        s,
        "pv.vmp_coefficient",
        "Temperature coefficient of Vmp",
        "beta_\"mp\"",
        &pv.vmp_coefficient,
        Unit::PercentPerKelvin,
    );
    let low = given(
        s,
        "pv.t_low",
        "Site record-low ambient temperature",
        "T_\"low\"",
        &pv.record_low,
        Unit::DegreeCelsius,
    );
    let high = given(
        s,
        "pv.t_high",
        "Site high design ambient temperature",
        "T_\"high\"",
        &pv.design_high,
        Unit::DegreeCelsius,
    );
    let rise = given(
        s,
        "pv.cell_rise",
        "Cell temperature rise over ambient in full sun",
        "Delta T_\"cell\"",
        &pv.cell_rise,
        Unit::Kelvin,
    );
    s.input(
        "pv.t_stc",
        "Cell temperature at standard test conditions",
        "T_\"STC\"",
        STC_CELL_TEMPERATURE,
        Unit::DegreeCelsius,
        Source::reference(
            "IEC 60904-3",
            "standard test conditions: 1000 W/m2, 25 degC cell, AM 1.5 (from memory)",
        ),
    );
    let t_cell = s
        .derive(
            "pv.t_cell_max",
            "Highest cell temperature",
            "T_\"cell,max\"",
            Unit::DegreeCelsius,
        )
        .formula("T_\"high\" + Delta T_\"cell\"")
        .inputs(&["pv.t_high", "pv.cell_rise"])
        .value(high + rise);
    // At the coldest morning the cells sit at ambient before the sun warms them.
    s.derive("dc.v_max", "DC voltage, maximum (string Voc at the record low)", "V_\"dc,max\"", Unit::Volt)
        .formula("N_s V_\"oc\" (1 + beta_\"oc\" (T_\"low\" - T_\"STC\"))")
        .inputs(&["pv.modules_in_series", "pv.voc", "pv.voc_coefficient", "pv.t_low", "pv.t_stc"])
        .source(Source::reference(
            "NFPA 70, National Electrical Code, 2023, 690.7(A)(1)",
            "maximum PV system voltage from the module manufacturer's temperature coefficient of Voc at the lowest expected ambient temperature (from memory)",
        ))
        .value(ns * voc * (1.0 + bv * (low - STC_CELL_TEMPERATURE)));
    s.derive(
        "dc.v_nominal",
        "DC voltage, nominal (string Vmp at STC)",
        "V_\"dc,nom\"",
        Unit::Volt,
    )
    .formula("N_s V_\"mp\"")
    .inputs(&["pv.modules_in_series", "pv.vmp"])
    .value(ns * vmp);
    s.derive("dc.v_min", "DC voltage, minimum (string Vmp at the hottest cell)", "V_\"dc,min\"", Unit::Volt)
        .formula("N_s V_\"mp\" (1 + beta_\"mp\" (T_\"cell,max\" - T_\"STC\"))")
        .inputs(&["pv.modules_in_series", "pv.vmp", "pv.vmp_coefficient", "pv.t_cell_max", "pv.t_stc"])
        .source(Source::common_practice(
            "lowest maximum-power voltage from the temperature coefficient of Vmp at the highest cell temperature (high design ambient plus the cell's rise in full sun)",
        ))
        .value(ns * vmp * (1.0 + bm * (t_cell - STC_CELL_TEMPERATURE)));
    s.derive("pv.i_max", "Maximum PV circuit current", "I_\"pv,max\"", Unit::Ampere)
        .formula("1.25 N_p I_\"sc\"")
        .inputs(&["pv.strings_in_parallel", "pv.isc"])
        .source(Source::reference(
            "NFPA 70, National Electrical Code, 2023, 690.8(A)(1)",
            "maximum circuit current: 125 % of the parallel strings' short-circuit current (from memory)",
        ))
        .value(1.25 * np * isc);
    let p_stc = s
        .derive("pv.p_stc", "Array power at STC", "P_\"STC\"", Unit::Watt)
        .formula("N_s N_p V_\"mp\" I_\"mp\"")
        .inputs(&[
            "pv.modules_in_series",
            "pv.strings_in_parallel",
            "pv.vmp",
            "pv.imp",
        ])
        .value(ns * np * vmp * imp);
    let p = s.value("output.power");
    s.derive(
        "pv.dc_ac_ratio",
        "Array power at STC over rated output power",
        "r_\"DC/AC\"",
        Unit::One,
    )
    .formula("P_\"STC\" / P")
    .inputs(&["pv.p_stc", "output.power"])
    .value(p_stc / p);
    let limit = limit_quantity(
        s,
        "limits.max_system_voltage",
        "Highest DC voltage the system is rated for",
        "V_\"sys,max\"",
        &d.limits.max_system_voltage,
        Unit::Volt,
    );
    s.check(
        "check.source.system_voltage",
        "The string's open-circuit voltage on the coldest morning stays within the system voltage rating",
        "dc.v_max",
        Relation::AtMost,
        limit,
        limit_source(&d.limits.max_system_voltage),
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn loaded_voltage_solves_the_source_equation() {
        // V (V0 - V) / R = P at the terminals of V0 behind R (circuit theory), and the
        // limit of maximum power transfer at P = V0^2 / (4 R) gives V = V0 / 2.
        let (v0, r, p) = (400.0, 0.2, 3000.0);
        let v = loaded_voltage(v0, r, p);
        assert!((v * (v0 - v) / r - p).abs() < 1e-9);
        assert!((loaded_voltage(v0, r, v0 * v0 / (4.0 * r)) - v0 / 2.0).abs() < 1e-9);
        assert!(loaded_voltage(v0, r, v0 * v0 / (4.0 * r) * 1.01).is_nan());
        assert_eq!(loaded_voltage(v0, 0.0, p), v0);
    }
}
