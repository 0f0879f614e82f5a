//! Reference checks for the safety cautions: designs are marked from their values against the
//! extra-low-voltage limits of 60 V d.c. ripple-free and 25 V a.c. r.m.s. (common practice for
//! dry locations; IEC 61140 / IEC 60364-4-41 family, from memory — local codes decide;
//! shared/DOMAIN.md §5 and §8). Every record here has a neutral name and no purpose or notes, so
//! no check relies on words.

use hysteron_core::evaluate::{evaluate, evaluate_json, RecordResult};
use hysteron_core::record::DesignRecord;
use hysteron_core::safety::{cautions, CautionKind, ELV_AC_RMS_V, ELV_DC_V};

/// An inverting Schmitt trigger on 5 V with the given check settings and signal settings (JSON).
fn comparator(checks: &str, signal: Option<&str>) -> DesignRecord {
    let signal = signal.map(|s| format!(r#","signal":{s}"#)).unwrap_or_default();
    DesignRecord::from_json(&format!(
        r#"{{"schema_version":1,"name":"record","circuit":{{"topology":"inverting","ra_ohm":100000,"rail_a":"supply","rb_ohm":100000,"rail_b":"ground","rf_ohm":200000,"device":{{"supply_v":5}}}},"checks":{checks}{signal}}}"#
    ))
    .unwrap()
}

/// A supply monitor (comparator on its own 5 V, 2.5 V reference) watching a rail over `lo`…`hi` volts.
fn monitor(lo: f64, hi: f64) -> DesignRecord {
    DesignRecord::from_json(&format!(
        r#"{{"schema_version":1,"name":"record","circuit":{{"topology":"supply_monitor","rtop_ohm":1000000,"rbot_ohm":51000,"rh_ohm":10000000,"vref_v":2.5,"mode":"undervoltage","comparator_supply":{{"kind":"separate"}},"output":{{"kind":"open_drain","rpu_ohm":100000,"pullup_rail":{{"fixed":5.0}}}},"device":{{"supply_v":5.0}}}},"checks":{{"input_min_v":{lo},"input_max_v":{hi}}}}}"#
    ))
    .unwrap()
}

fn kinds(r: &DesignRecord) -> Vec<CautionKind> {
    cautions(r).into_iter().map(|c| c.kind).collect()
}

fn sine_signal(amplitude_v: f64) -> String {
    format!(r#"{{"sample_rate_hz":10000,"duration_s":0.1,"components":[{{"kind":"sine","amplitude_v":{amplitude_v},"frequency_hz":50}}],"noise":[]}}"#)
}

#[test]
fn limits_are_the_common_practice_values() {
    // 60 V d.c. ripple-free and 25 V a.c. r.m.s. for dry locations (common practice; IEC 61140 /
    // IEC 60364-4-41 family, from memory).
    assert_eq!((ELV_DC_V, ELV_AC_RMS_V), (60.0, 25.0));
}

/// A signal of 230 V r.m.s. mains (325 V peak sine, 230·√2) at the input: above both limits and
/// mains-derived by its size, with no word in the record saying so.
#[test]
fn mains_derived_amplitude_is_marked() {
    let r = comparator("{}", Some(&sine_signal(230.0 * 2f64.sqrt())));
    let k = kinds(&r);
    assert!(k.contains(&CautionKind::AboveExtraLowVoltage) && k.contains(&CautionKind::Mains), "{k:?}");
}

/// 352 V peak at the input (an input range of ±352 V): marked, and the bench procedure asks for
/// an isolation transformer or a differential probe and current-limited sources, with no "one
/// hand" advice and no function generator. The command-line result carries the cautions.
#[test]
fn peak_352_v_is_marked_and_its_bench_procedure_is_isolated() {
    let r = comparator(r#"{"input_min_v":-352,"input_max_v":352}"#, None);
    let k = kinds(&r);
    assert!(k.contains(&CautionKind::AboveExtraLowVoltage) && k.contains(&CautionKind::Mains), "{k:?}");
    let e = evaluate(&r);
    let bench = e.exports.as_ref().and_then(|x| x.bench.as_ref()).expect("a bench procedure");
    let text = format!("{} {}", bench.equipment.join(" | "), bench.cautions.join(" | ")).to_lowercase();
    assert!(text.contains("isolation transformer") && text.contains("differential probe"), "{text}");
    assert!(text.contains("current-limited"), "{text}");
    assert!(!text.contains("one hand") && !bench.equipment[0].to_lowercase().contains("function generator set to"), "{text}");
    assert!(e.cautions.iter().any(|c| c.kind == CautionKind::AboveExtraLowVoltage));
    // Through the JSON entry point too.
    let json = serde_json::to_string(&r).unwrap();
    let out = evaluate_json(&json).unwrap();
    let RecordResult::Ok(e) = &out[0] else { panic!("{out:?}") };
    assert!(e.cautions.iter().any(|c| c.kind == CautionKind::AboveExtraLowVoltage));
}

/// 48 V d.c. and 24 V d.c. inputs are below 60 V d.c.: not marked, and the bench procedure has no
/// high-voltage equipment.
#[test]
fn dc_48_v_and_24_v_are_not_marked() {
    for hi in [48.0, 24.0] {
        let r = comparator(&format!(r#"{{"input_min_v":0,"input_max_v":{hi}}}"#), None);
        assert!(kinds(&r).is_empty(), "{hi} V: {:?}", cautions(&r));
        let e = evaluate(&r);
        assert!(e.cautions.is_empty());
        let bench = e.exports.unwrap().bench.unwrap();
        assert!(bench.cautions.is_empty() && !bench.equipment.join(" ").contains("isolation transformer"), "{hi} V");
    }
}

/// Alternating voltages use the a.c. limit: a 50 Hz sine of 30 V r.m.s. (42.4 V peak, below the
/// 60 V d.c. limit) is marked; 24 V r.m.s. is not.
#[test]
fn alternating_signal_uses_the_ac_limit() {
    let marked = comparator("{}", Some(&sine_signal(30.0 * 2f64.sqrt())));
    assert!(kinds(&marked).contains(&CautionKind::AboveExtraLowVoltage));
    let safe = comparator("{}", Some(&sine_signal(24.0 * 2f64.sqrt())));
    assert!(kinds(&safe).is_empty(), "{:?}", cautions(&safe));
}

/// A 14-cell lithium-ion string: 14 × 4.2 V = 58.8 V when charged (4.2 V per cell, from memory) is
/// below 60 V d.c., so only the battery caution (fuse at the pack) applies; charged to 4.35 V per
/// cell (high-voltage cells, from memory) it reaches 60.9 V and is marked as well.
#[test]
fn fourteen_cell_battery_gets_the_battery_caution() {
    let r = monitor(14.0 * 3.0, 14.0 * 4.2);
    let c = cautions(&r);
    assert_eq!(c.iter().map(|c| c.kind).collect::<Vec<_>>(), vec![CautionKind::Battery], "{c:?}");
    assert!(c[0].message.contains("at the pack"));
    let k = kinds(&monitor(14.0 * 3.0, 14.0 * 4.35));
    assert!(k.contains(&CautionKind::Battery) && k.contains(&CautionKind::AboveExtraLowVoltage), "{k:?}");
}
