//! The power stage's sections of the record: `switches` (the device, inline or from a
//! device library file), `thermal`, `dc_link` and `losses`. Each is optional; a record
//! without `switches` gets no semiconductor, thermal or efficiency evaluation.

use super::in_range;
use super::model::{DcLink, Device, DeviceKind, Given, OtherLosses, Overshoot, Switches, Thermal};
use super::reader::{Reader, Section};
use crate::diag::SourceText;
use crate::units::Unit;
use serde_yaml::Value;

/// The format version of device library files (`bridgebook-devices: 1`).
pub const LIBRARY_VERSION: i64 = 1;

pub(super) fn read_switches(s: Section) -> Option<Switches> {
    let r = s.reader();
    let device = match s.value("device") {
        None => {
            s.section("device");
            None
        }
        Some(Value::String(name)) => {
            // Read again as text so the name is in the inputs table.
            let _ = s.text("device");
            let library = s.text("library");
            library.and_then(|lib| {
                read_from_library(
                    r,
                    (&s.key_path("device"), &s.key_path("library")),
                    name,
                    &lib,
                )
            })
        }
        Some(Value::Mapping(_)) => {
            if s.has("library") {
                r.error(
                    &s.key_path("library"),
                    "`library` is for a device named from a library, but `device` is written out here",
                    Some("either write `device: NAME` with `library: FILE`, or the device's data under `device:` without `library`".into()),
                );
            }
            s.section("device").and_then(|d| {
                let name = d.optional_text("name");
                read_device(d, name, None)
            })
        }
        Some(_) => {
            r.error(
                &s.key_path("device"),
                "`device` must be the name of a device in the library, or the device's data",
                Some("write `device: KX-75T12` with `library: devices.yaml`, or a mapping with `kind:` and the datasheet values".into()),
            );
            None
        }
    };
    let margin = s.optional_quantity("overshoot", Unit::Percent);
    let stray = s.optional_quantity("stray_inductance", Unit::Henry);
    let dead_time = s.optional_quantity("dead_time", Unit::Second);
    s.finish();
    let mut ok = true;
    if let Some(g) = &margin {
        ok &= in_range(
            r,
            g,
            -1e-30,
            1.0,
            Unit::Percent,
            "the overshoot margin is a fraction of the DC maximum, 0 % to 100 %",
        );
    }
    if let Some(g) = &stray {
        ok &= in_range(
            r,
            g,
            0.0,
            1e-6,
            Unit::Henry,
            "the commutation loop's stray inductance is a few nH to a few hundred nH",
        );
    }
    if let Some(g) = &dead_time {
        ok &= in_range(
            r,
            g,
            -1e-30,
            20e-6,
            Unit::Second,
            "dead times are a few hundred ns to a few µs",
        );
    }
    let overshoot = match (margin, stray) {
        (Some(m), None) => Some(Overshoot::Margin(m)),
        (None, Some(l)) => Some(Overshoot::StrayInductance(l)),
        (Some(_), Some(_)) => {
            r.error(
                &s.key_path("stray_inductance"),
                "both `overshoot` and `stray_inductance` are written",
                Some("give the overshoot one way: a margin (`overshoot: 10 %`) or the loop inductance with the device's `fall_time`".into()),
            );
            None
        }
        (None, None) => {
            r.error(
                &s.path,
                "the switches' turn-off overshoot is not given",
                Some("add `overshoot: 10 %` (a margin on the DC maximum) or `stray_inductance: 40 nH` (with the device's `fall_time`)".into()),
            );
            None
        }
    };
    let device = device?;
    if let Some(Overshoot::StrayInductance(l)) = &overshoot {
        if device.fall_time.is_none() {
            r.error(
                &l.key,
                "the overshoot of a stray inductance needs the device's current fall time",
                Some("add `fall_time: 120 ns` to the device's data, or give `overshoot: 10 %` instead".into()),
            );
            ok = false;
        }
    }
    let overshoot = overshoot?;
    ok.then_some(Switches {
        device,
        overshoot,
        dead_time,
    })
}

/// Reads device `name` from the library file `lib` (relative to the record's folder);
/// errors in the library are reported at their own file and line.
fn read_from_library(
    r: &Reader,
    (record_key, library_key): (&str, &str),
    name: &str,
    lib: &str,
) -> Option<Device> {
    let text = match r.includes().read(lib) {
        Ok(t) => t,
        Err(e) => {
            r.error(
                library_key,
                format!("cannot read the device library `{lib}`: {e}"),
                Some(
                    "`library` is a path relative to the record's folder, e.g. `devices.yaml`"
                        .into(),
                ),
            );
            return None;
        }
    };
    let src = SourceText {
        name: r.includes().display(lib),
        text,
    };
    let value: Value = match serde_yaml::from_str(&src.text) {
        Ok(v) => v,
        Err(e) => {
            for d in super::syntax_errors(&src, &e) {
                r.push(d);
            }
            return None;
        }
    };
    let lr = Reader::included(&src, lib);
    let device = lr.root(&value).and_then(|root| {
        let version = root.integer("bridgebook-devices");
        if let Some(v) = version {
            if v != LIBRARY_VERSION {
                lr.error(
                    "bridgebook-devices",
                    format!("device library format version {v} is not supported"),
                    Some(format!(
                        "this engine reads `bridgebook-devices: {LIBRARY_VERSION}`"
                    )),
                );
            }
        }
        let devices = root.section("devices");
        root.finish();
        let devices = devices?;
        match devices.named_section(name) {
            Some(d) => read_device(d, name.to_string(), Some(lib.to_string())),
            None => {
                let names = devices.key_names();
                let hint = match crate::diag::did_you_mean(
                    name,
                    &names.iter().map(String::as_str).collect::<Vec<_>>(),
                ) {
                    Some(close) => format!("did you mean `{close}`?"),
                    None => format!("the library has: {}", names.join(", ")),
                };
                r.error(
                    record_key,
                    format!("device `{name}` is not in the library `{lib}`"),
                    Some(hint),
                );
                None
            }
        }
    });
    if let (Some(_), Value::Mapping(root)) = (&device, &value) {
        if let Some(Value::Mapping(devs)) = root.get("devices") {
            if let Some(v) = devs.get(name) {
                // The canonical record keeps the device's library name with its data.
                let mut v = v.clone();
                if let Value::Mapping(m) = &mut v {
                    m.insert(
                        Value::String("name".into()),
                        Value::String(name.to_string()),
                    );
                }
                r.resolve(record_key, v);
            }
        }
    }
    r.absorb(lr);
    device
}

fn read_device(d: Section, name: String, library: Option<String>) -> Option<Device> {
    let r = d.reader();
    // A device may carry its own name (an inline one, or a library entry's); a library
    // entry is known by its key.
    let written = d.optional_text("name");
    let name = if name.is_empty() { written } else { name };
    let kind = d.choice("kind", &["igbt", "mosfet"]);
    let igbt = kind == Some("igbt");
    let (a, b) = match kind {
        Some("igbt") => (
            d.quantity("v_ce0", Unit::Volt),
            d.quantity("r_ce", Unit::Ohm),
        ),
        Some(_) => (
            d.quantity("r_ds_on", Unit::Ohm),
            d.quantity("r_ds_on_coefficient", Unit::PercentPerKelvin),
        ),
        None => (None, None),
    };
    let voltage_rating = d.quantity("voltage_rating", Unit::Volt);
    let current_rating = d.quantity("current_rating", Unit::Ampere);
    let e_on = d.quantity("e_on", Unit::Joule);
    let e_off = d.quantity("e_off", Unit::Joule);
    let e_rec = d.quantity("e_rec", Unit::Joule);
    let reference_voltage = d.quantity("reference_voltage", Unit::Volt);
    let reference_current = d.quantity("reference_current", Unit::Ampere);
    let diode_v_f0 = d.quantity("diode_v_f0", Unit::Volt);
    let diode_r_f = d.quantity("diode_r_f", Unit::Ohm);
    let r_th_jc_switch = d.quantity("r_th_jc_switch", Unit::KelvinPerWatt);
    let r_th_jc_diode = d.quantity("r_th_jc_diode", Unit::KelvinPerWatt);
    let t_j_max = d.quantity("t_j_max", Unit::DegreeCelsius);
    let fall_time = d.optional_quantity("fall_time", Unit::Second);
    d.finish();
    let mut ok = true;
    let mut check = |g: &Option<Given>, lo: f64, hi: f64, unit: Unit, why: &str| {
        if let Some(g) = g {
            ok &= in_range(r, g, lo, hi, unit, why);
        }
    };
    let zero = -1e-30;
    if igbt {
        check(
            &a,
            zero,
            5.0,
            Unit::Volt,
            "an IGBT's on-state threshold is about 0.5 V to 2 V",
        );
        check(
            &b,
            zero,
            1.0,
            Unit::Ohm,
            "an IGBT's slope resistance is a few mΩ to a few hundred mΩ",
        );
    } else {
        check(
            &a,
            0.0,
            10.0,
            Unit::Ohm,
            "a MOSFET's on-resistance is a few mΩ to a few Ω",
        );
        check(
            &b,
            zero,
            0.02,
            Unit::PercentPerKelvin,
            "R_ds,on rises with temperature, about 0.3 %/K to 1 %/K",
        );
    }
    check(
        &voltage_rating,
        0.0,
        10e3,
        Unit::Volt,
        "device voltage ratings are above 0 V and at most 10 kV",
    );
    check(
        &current_rating,
        0.0,
        5e3,
        Unit::Ampere,
        "device current ratings are above 0 A and at most 5 kA",
    );
    for g in [&e_on, &e_off, &e_rec] {
        check(
            g,
            zero,
            10.0,
            Unit::Joule,
            "switching energies are µJ to a few J",
        );
    }
    check(
        &reference_voltage,
        0.0,
        10e3,
        Unit::Volt,
        "the datasheet's test voltage is above 0 V",
    );
    check(
        &reference_current,
        0.0,
        5e3,
        Unit::Ampere,
        "the datasheet's test current is above 0 A",
    );
    check(
        &diode_v_f0,
        zero,
        5.0,
        Unit::Volt,
        "a diode's threshold voltage is about 0.5 V to 2 V",
    );
    check(
        &diode_r_f,
        zero,
        1.0,
        Unit::Ohm,
        "a diode's slope resistance is a few mΩ to a few hundred mΩ",
    );
    check(
        &r_th_jc_switch,
        0.0,
        100.0,
        Unit::KelvinPerWatt,
        "junction-to-case resistances are a few hundredths to a few K/W",
    );
    check(
        &r_th_jc_diode,
        0.0,
        100.0,
        Unit::KelvinPerWatt,
        "junction-to-case resistances are a few hundredths to a few K/W",
    );
    check(
        &t_j_max,
        50.0,
        250.0,
        Unit::DegreeCelsius,
        "the maximum junction temperature is 125 degC to 200 degC for silicon and SiC",
    );
    check(
        &fall_time,
        0.0,
        10e-6,
        Unit::Second,
        "current fall times are tens to hundreds of ns",
    );
    let kind = match kind? {
        "igbt" => DeviceKind::Igbt {
            v_ce0: a?,
            r_ce: b?,
        },
        _ => DeviceKind::Mosfet {
            r_ds_on: a?,
            r_ds_on_coefficient: b?,
        },
    };
    let device = Device {
        name,
        library,
        kind,
        voltage_rating: voltage_rating?,
        current_rating: current_rating?,
        e_on: e_on?,
        e_off: e_off?,
        e_rec: e_rec?,
        reference_voltage: reference_voltage?,
        reference_current: reference_current?,
        diode_v_f0: diode_v_f0?,
        diode_r_f: diode_r_f?,
        r_th_jc_switch: r_th_jc_switch?,
        r_th_jc_diode: r_th_jc_diode?,
        t_j_max: t_j_max?,
        fall_time,
    };
    ok.then_some(device)
}

pub(super) fn read_thermal(s: Section) -> Option<Thermal> {
    let r = s.reader();
    let ambient_max = s.quantity("ambient_max", Unit::DegreeCelsius);
    let r_th_cs = s.quantity("case_to_heatsink", Unit::KelvinPerWatt);
    let r_th_sa = s.quantity("heatsink_to_ambient", Unit::KelvinPerWatt);
    s.finish();
    let (ambient_max, r_th_cs, r_th_sa) = (ambient_max?, r_th_cs?, r_th_sa?);
    let ok = in_range(
        r,
        &ambient_max,
        -60.0,
        100.0,
        Unit::DegreeCelsius,
        "the highest ambient of an inverter is between -60 degC and 100 degC",
    ) & in_range(
        r,
        &r_th_cs,
        -1e-30,
        20.0,
        Unit::KelvinPerWatt,
        "an interface pad or grease layer is a few hundredths to about 1 K/W",
    ) & in_range(
        r,
        &r_th_sa,
        0.0,
        50.0,
        Unit::KelvinPerWatt,
        "a heatsink is a few hundredths to a few K/W",
    );
    ok.then_some(Thermal {
        ambient_max,
        r_th_cs,
        r_th_sa,
    })
}

pub(super) fn read_dc_link(s: Section) -> Option<DcLink> {
    let r = s.reader();
    let capacitance = s.quantity("capacitance", Unit::Farad);
    let esr = s.quantity("esr", Unit::Ohm);
    let voltage_rating = s.quantity("voltage_rating", Unit::Volt);
    let r_th_ha = s.quantity("hotspot_to_ambient", Unit::KelvinPerWatt);
    let rated_life = s.quantity("rated_life", Unit::Hour);
    let rated_temperature = s.quantity("rated_temperature", Unit::DegreeCelsius);
    let bleeder = s.quantity("bleeder", Unit::Ohm);
    s.finish();
    let (capacitance, esr, voltage_rating, r_th_ha, rated_life, rated_temperature, bleeder) = (
        capacitance?,
        esr?,
        voltage_rating?,
        r_th_ha?,
        rated_life?,
        rated_temperature?,
        bleeder?,
    );
    let ok = in_range(
        r,
        &capacitance,
        0.0,
        1.0,
        Unit::Farad,
        "a DC-link bank is µF to a few hundred mF",
    ) & in_range(
        r,
        &esr,
        0.0,
        10.0,
        Unit::Ohm,
        "a bank's ESR is a few mΩ to a few Ω",
    ) & in_range(
        r,
        &voltage_rating,
        0.0,
        10e3,
        Unit::Volt,
        "capacitor voltage ratings are above 0 V and at most 10 kV",
    ) & in_range(
        r,
        &r_th_ha,
        0.0,
        100.0,
        Unit::KelvinPerWatt,
        "a bank's hot-spot-to-ambient resistance is about 1 K/W to 30 K/W",
    ) & in_range(
        r,
        &rated_life,
        0.0,
        1e6 * 3600.0,
        Unit::Hour,
        "rated lives are given in hours, e.g. `5000 h` at the rated temperature",
    ) & in_range(
        r,
        &rated_temperature,
        40.0,
        200.0,
        Unit::DegreeCelsius,
        "capacitors are rated at 85 degC, 105 degC or 125 degC",
    ) & in_range(
        r,
        &bleeder,
        0.0,
        1e9,
        Unit::Ohm,
        "a bleeder is tens of kΩ to a few MΩ",
    );
    ok.then_some(DcLink {
        capacitance,
        esr,
        voltage_rating,
        r_th_ha,
        rated_life,
        rated_temperature,
        bleeder,
    })
}

pub(super) fn read_losses(section: Option<Section>) -> Option<OtherLosses> {
    let Some(s) = section else {
        return Some(OtherLosses {
            inductor_resistance: None,
            auxiliary_power: None,
        });
    };
    let r = s.reader();
    let inductor_resistance = s.optional_quantity("inductor_resistance", Unit::Ohm);
    let auxiliary_power = s.optional_quantity("auxiliary_power", Unit::Watt);
    s.finish();
    let mut ok = true;
    if let Some(g) = &inductor_resistance {
        ok &= in_range(
            r,
            g,
            -1e-30,
            100.0,
            Unit::Ohm,
            "a filter inductor's winding is a few mΩ to a few Ω",
        );
    }
    if let Some(g) = &auxiliary_power {
        ok &= in_range(
            r,
            g,
            -1e-30,
            10e3,
            Unit::Watt,
            "control, gate drive and fans take a few W to a few hundred W",
        );
    }
    ok.then_some(OtherLosses {
        inductor_resistance,
        auxiliary_power,
    })
}
