//! Regression tests for issue 13's reproducers: a study whose numbers are NaN or ±∞ must fail
//! with a message naming the quantity, never report success; and the exports (SPICE deck, bench
//! procedure) must refuse such a design instead of printing `inf` or `NaN`.

use hysteron_core::catalog;
use hysteron_core::evaluate::{evaluate_json, Evaluation, RecordResult};
use serde_json::{json, Value};

/// The catalog template named `name`, as JSON.
fn template(name: &str) -> Value {
    let starter = catalog::templates().into_iter().find(|s| s.record().circuit.name() == name).expect(name);
    serde_json::to_value(starter.record()).unwrap()
}

fn demo(contains: &str) -> Value {
    let starter = catalog::demos().into_iter().find(|s| s.record().name.contains(contains)).expect(contains);
    serde_json::to_value(starter.record()).unwrap()
}

fn evaluate_value(v: &Value) -> Evaluation {
    match evaluate_json(&v.to_string()).unwrap().remove(0) {
        RecordResult::Ok(e) => *e,
        RecordResult::Error { message, .. } => panic!("record refused: {message}"),
    }
}

/// Independent oracle: the evaluation as JSON text holds no `inf`/`NaN` text in its exports and no
/// non-finite number anywhere (serde_json writes those as `null`, so the guard's walk is the check
/// here; the JSON-level check with the schema lives in `fuzz_budget.rs`).
fn assert_all_finite(e: &Evaluation) {
    assert_eq!(hysteron_core::finite::first_non_finite("evaluation", e), None, "{e:#?}");
    if let Some(x) = &e.exports {
        if let Some(deck) = &x.spice {
            for bad in ["inf", "NaN"] {
                assert!(!deck.contains(bad), "deck contains {bad}:\n{deck}");
            }
        }
        if let Some(b) = &x.bench {
            let text = b.to_text();
            assert!(!text.contains("inf V") && !text.contains("NaN"), "{text}");
        }
    }
}

/// The study `study` failed with an error whose message names `quantity` (a record field or a
/// result path).
fn failed_naming(e: &Evaluation, study: &str, names: &[&str]) {
    let errs: Vec<String> = e.errors.iter().filter(|x| x.study == study).map(|x| x.error.to_string()).collect();
    assert!(!errs.is_empty(), "study {study} did not fail: {:?}", e.errors);
    assert!(
        errs.iter().any(|m| names.iter().any(|n| m.contains(n))),
        "no error of {study} names any of {names:?}: {errs:?}"
    );
}

#[test]
fn non_inverting_with_huge_bias_current_fails_and_exports_nothing() {
    let mut r = template("non_inverting");
    r["circuit"]["device"]["bias_plus_a"] = json!(1e308);
    let e = evaluate_value(&r);
    assert_all_finite(&e);
    assert!(e.analysis.is_none());
    // Analysis errors name the field as the page shows it (issue 12): "bias current IB+".
    failed_naming(&e, "analysis", &["bias current IB+", "vt_upper", "vt_lower", "not a finite number"]);
    let x = e.exports.as_ref().unwrap();
    assert!(x.spice.is_none() && x.bench.is_none(), "exports of a failed analysis: {x:?}");
    // The SPICE export on its own refuses the circuit too.
    let rec = hysteron_core::record::DesignRecord::from_value(r).unwrap();
    assert!(hysteron_core::spice::to_spice(&rec.circuit, "x").is_err());
    assert!(hysteron_core::bench::bench_procedure(&rec.circuit, &rec.checks, &Default::default()).is_err());
}

#[test]
fn a_denormal_offset_never_gives_a_non_finite_sensitivity() {
    for starter in catalog::templates() {
        let mut r = serde_json::to_value(starter.record()).unwrap();
        let circuit = r["circuit"].as_object_mut().unwrap();
        let device = if circuit.contains_key("device") { "device" } else { continue };
        r["circuit"][device]["offset_v"] = json!(5e-324);
        let e = evaluate_value(&r);
        assert_all_finite(&e);
        if e.sensitivities.is_none() {
            assert!(!e.errors.is_empty(), "{}: no sensitivities and no error", starter.record().name);
        }
    }
}

#[test]
fn cmos_buffer_with_a_denormal_resistor_fails_and_exports_nothing() {
    let mut r = template("cmos_buffer");
    r["circuit"]["r2_ohm"] = json!(5e-324);
    let e = evaluate_value(&r);
    assert_all_finite(&e);
    assert!(e.analysis.is_none(), "{:?}", e.analysis);
    // Analysis errors name a resistor by its designator (issue 12).
    failed_naming(&e, "analysis", &["R2", "vt_upper", "vt_lower", "not a finite number"]);
    let x = e.exports.as_ref().unwrap();
    assert!(x.spice.is_none() && x.bench.is_none());
    let rec = hysteron_core::record::DesignRecord::from_value(r).unwrap();
    assert!(hysteron_core::spice::to_spice(&rec.circuit, "x").is_err());
    assert!(hysteron_core::bench::bench_procedure(&rec.circuit, &rec.checks, &Default::default()).is_err());
}

#[test]
fn huge_noise_fails_the_signal_study_naming_the_quantity() {
    let mut r = demo("Lathe");
    r["signal"]["noise"][1]["rms_v"] = json!(1e308);
    let e = evaluate_value(&r);
    assert_all_finite(&e);
    assert!(e.signal.is_none());
    failed_naming(&e, "signal", &["rms_v", "not a finite number"]);
    // The rest of the design is still evaluated.
    assert!(e.analysis.is_some());
}

/// Every study setting outside its physical range (core::limits) gives an `InvalidValue` error
/// naming the field, in the study that reads it.
#[test]
fn out_of_range_settings_are_refused_naming_the_field() {
    use hysteron_core::error::DesignError;
    type Case = (&'static str, &'static str, fn(&mut Value));
    let cases: Vec<Case> = vec![
        ("signal", "noise.rms_v", |r| r["signal"]["noise"][1]["rms_v"] = json!(1e308)),
        ("signal", "components.amplitude_v", |r| r["signal"]["components"][1]["amplitude_v"] = json!(1e300)),
        ("signal", "components.frequency_hz", |r| r["signal"]["components"][1]["frequency_hz"] = json!(5e-324)),
        ("signal", "duration_s", |r| r["signal"]["duration_s"] = json!(1e308)),
        ("signal", "sample_rate_hz", |r| r["signal"]["sample_rate_hz"] = json!(1e308)),
        ("signal", "noise.corner_hz", |r| r["signal"]["noise"][1]["corner_hz"] = json!(5e-324)),
        ("tolerance", "tolerance.offset_v", |r| r["tolerance"]["offset_v"] = json!(1e308)),
        // The spec window's bounds are named as the page shows them (issue 12).
        ("tolerance", "VT+ at least", |r| r["tolerance"]["spec"]["vt_upper_min_v"] = json!(-1e308)),
        ("tolerance", "tolerance.resistor_tempco_ppm_per_k", |r| r["tolerance"]["resistor_tempco_ppm_per_k"] = json!(1e308)),
        ("synthesis", "targets.vt_upper_v", |r| r["targets"]["vt_upper_v"] = json!(1e308)),
        ("synthesis", "targets.impedance.anchor_ohm", |r| r["targets"]["impedance"]["anchor_ohm"] = json!(5e-324)),
        ("analysis", "checks.supply_max_v", |r| r["checks"]["supply_max_v"] = json!(1e308)),
        ("search", "search.r_max_ohm", |r| r["search"] = json!({"r_max_ohm": 1e308})),
        ("search", "search.r_min_ohm", |r| r["search"] = json!({"r_min_ohm": 5e-324})),
        ("application.oscillator", "oscillator.c_f", |r| r["application"] = json!({"oscillator": {"c_f": 1e308}})),
        ("application.debounce", "debounce.bounce_s", |r| r["application"] = json!({"debounce": {"bounce_s": 1e308}})),
    ];
    for (study, field, mutate) in cases {
        let mut r = demo("Lathe");
        mutate(&mut r);
        let e = evaluate_value(&r);
        assert_all_finite(&e);
        let found = e.errors.iter().find(|x| x.study == study);
        match found.map(|x| &x.error) {
            Some(DesignError::InvalidValue { field: f, reason }) => {
                assert_eq!(f, field, "{study}: {reason}");
                assert!(reason.contains("must be"), "{reason}");
            }
            other => panic!("{study}/{field}: expected an invalid-value error, got {other:?} (all: {:?})", e.errors),
        }
    }
}
