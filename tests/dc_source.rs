//! The DC source window through the whole record -> sheet path: battery sag and the
//! PV string's temperature-corrected voltages, each against a hand computation of the
//! published method, and the record errors of the new source kinds.

mod common;

use bridgebook::record;
use common::{edit, evaluate};

#[test]
fn pv_string_window_by_the_temperature_corrected_method() {
    // Hand computation of the NEC 690.7(A)(1) method with the manufacturer's
    // coefficient (common practice; NFPA 70, 2023, from memory): 18 modules of
    // Voc 49.5 V, beta -0.26 %/K, at a record low of -15 degC against 25 degC at STC:
    // 18 x 49.5 x (1 + 0.0026 x 40) = 983.664 V. Lowest MPP voltage at a 34 degC design
    // high with a 30 K cell rise (64 degC cells): 18 x 41.6 x (1 - 0.0034 x 39)
    // = 649.5 V (to 0.1 V). Maximum circuit current 1.25 x 2 x 13.9 = 34.75 A
    // (NEC 690.8(A)(1), from memory).
    let s = evaluate(&common::demo("fen-barn.yaml"));
    assert!((s.value("dc.v_max") - 983.664).abs() < 1e-9);
    assert!((s.value("pv.t_cell_max") - 64.0).abs() < 1e-12);
    assert!((s.value("dc.v_min") - 18.0 * 41.6 * (1.0 - 0.0034 * 39.0)).abs() < 1e-9);
    assert!((s.value("dc.v_min") - 649.5).abs() < 0.1);
    assert!((s.value("dc.v_nominal") - 748.8).abs() < 1e-9);
    assert!((s.value("pv.i_max") - 34.75).abs() < 1e-12);
    let c = s
        .checks
        .iter()
        .find(|c| c.id == "check.source.system_voltage")
        .expect("system voltage check");
    assert!(c.pass && (c.limit - 1000.0).abs() < 1e-12);
    // One more module in series on the same site breaks the 1000 V rating:
    // 19 x 49.5 x 1.104 = 1038.3 V.
    let s = evaluate(&edit(
        &common::demo("fen-barn.yaml"),
        "modules_in_series: 18",
        "modules_in_series: 19",
    ));
    let c = s
        .checks
        .iter()
        .find(|c| c.id == "check.source.system_voltage")
        .unwrap();
    assert!(!c.pass && (c.value - 1038.312).abs() < 1e-9);
}

#[test]
fn battery_window_sags_by_the_internal_resistance_at_rated_power() {
    // A source V0 behind R delivering P has V (V0 - V) / R = P (circuit theory):
    // empty 384 V, 0.12 ohm, 3 kW gives V = (384 + sqrt(384^2 - 4 x 0.12 x 3000)) / 2.
    let s = evaluate(&common::demo("alder-hut.yaml"));
    let v = s.value("dc.v_min");
    assert!((v * (384.0 - v) / 0.12 - 3000.0).abs() < 1e-6);
    assert!((v - 383.0602).abs() < 1e-3);
    assert!((s.value("dc.v_max") - 467.0).abs() < 1e-12);
    let n = s.value("dc.v_nominal");
    assert!((n * (410.0 - n) / 0.12 - 3000.0).abs() < 1e-6);
    // A battery too weak for the rated power has no operating point: the sheet says so
    // and the modulation check fails rather than passing on a number.
    let s = evaluate(&edit(
        &common::demo("alder-hut.yaml"),
        "internal_resistance: 120 mohm",
        "internal_resistance: 20 ohm",
    ));
    assert!(s.value("dc.v_min").is_nan());
    assert!(s
        .warnings
        .iter()
        .any(|w| w.text.contains("cannot deliver the rated power")));
    assert!(s
        .checks
        .iter()
        .any(|c| c.id == "check.modulation.headroom_dc_min" && !c.pass));
}

fn check_rejects(text: &str, key: &str, words: &str) {
    let err = record::load_str("test.yaml", text).expect_err("should be rejected");
    let all = err.to_string();
    assert!(all.contains(key) && all.contains(words), "{all}");
}

#[test]
fn pv_and_battery_records_are_checked() {
    // Datasheet consistency (Vmp < Voc, Imp < Isc) and the sign of silicon's voltage
    // coefficient (negative; common practice), whole module counts, battery order.
    let pv = common::demo("fen-barn.yaml");
    check_rejects(
        &edit(&pv, "vmp: 41.6 V", "vmp: 52 V"),
        "source.module.vmp",
        "not below the open-circuit voltage",
    );
    check_rejects(
        &edit(
            &pv,
            "voc_coefficient: -0.26 %/K",
            "voc_coefficient: 0.26 %/K",
        ),
        "source.module.voc_coefficient",
        "outside the accepted range",
    );
    check_rejects(
        &edit(&pv, "modules_in_series: 18", "modules_in_series: 17.5"),
        "source.modules_in_series",
        "not a whole number",
    );
    check_rejects(
        &edit(
            &pv,
            "voc_coefficient: -0.26 %/K",
            "voc_coefficient: -0.26 %",
        ),
        "source.module.voc_coefficient",
        "temperature coefficient",
    );
    let bat = common::demo("alder-hut.yaml");
    check_rejects(
        &edit(&bat, "full: 467 V", "full: 370 V"),
        "source.full",
        "battery voltages out of order",
    );
}
