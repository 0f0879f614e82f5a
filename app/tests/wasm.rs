//! wasm32 checks, run in headless Chromium by wasm-bindgen-test: the core math gives the same
//! numbers in the browser as natively, and the page's storage layer sets damaged records aside.

use hysteron_app::storage::{parse_stored, StoredDesign, ENVELOPE_VERSION};
use hysteron_core::device::Comparator;
use hysteron_core::record::DesignRecord;
use hysteron_core::rng::Rng;
use hysteron_core::topology::{inverting::InvertingSchmitt, Circuit, Topology};
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

#[wasm_bindgen_test]
fn thresholds_match_the_closed_form_in_wasm() {
    // DOMAIN §1a rail-to-rail closed form (Sedra & Smith, bistable section, from memory).
    let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
    let t = c.thresholds().unwrap();
    assert!((t.vt_upper_v - 3.0).abs() < 1e-12);
    assert!((t.vt_lower_v - 2.0).abs() < 1e-12);
}

#[wasm_bindgen_test]
fn random_stream_is_bit_identical_to_native() {
    // The same values are pinned by the native unit tests in `core/src/rng/mod.rs` (xoshiro256++ seeded by
    // SplitMix64); here the stream and the normal deviates (which use libm) must match bit for bit.
    assert_eq!(hysteron_core::rng::normal_fingerprint(2026), hysteron_core::rng::NORMAL_FINGERPRINT_SEED2026);
    let mut s = Rng::new(0);
    let first = s.next_u64();
    assert_eq!(first, hysteron_core_fingerprint_seed0());
}

#[wasm_bindgen_test]
fn monte_carlo_is_bit_identical_to_native() {
    // Pinned natively in core/src/tolerance/monte_carlo.rs (`fingerprint_is_pinned`): the same
    // seed gives the same trials, statistics and yield in the browser build.
    assert_eq!(hysteron_core::tolerance::monte_carlo_fingerprint(7), 0x1920_1c3e_1a25_1469);
}

/// First output of xoshiro256++ seeded with 0 through SplitMix64, as computed natively
/// (pinned in `core/src/rng/mod.rs` tests as well).
fn hysteron_core_fingerprint_seed0() -> u64 {
    hysteron_core::rng::SEED0_FIRST_OUTPUT
}

fn stored(record: serde_json::Value) -> String {
    serde_json::to_string(&StoredDesign {
        envelope_version: ENVELOPE_VERSION,
        id: "x".into(),
        revision: 3,
        saved_at_ms: 0.0,
        record,
        snapshot: None,
        studies: serde_json::Value::Null,
    })
    .unwrap()
}

#[wasm_bindgen_test]
fn damaged_records_are_set_aside_with_a_message() {
    let good = DesignRecord::new("ok", Topology::Inverting(InvertingSchmitt::single_supply(1e3, 1e3, 1e3, Comparator::ideal(5.0))));
    assert!(parse_stored("k", &stored(serde_json::to_value(&good).unwrap())).is_ok());
    let bad = parse_stored("k", "{not json").unwrap_err();
    assert!(bad.message.contains("damaged"));
    assert_eq!(bad.raw, "{not json");
    let mut future = serde_json::to_value(&good).unwrap();
    future["schema_version"] = 999.into();
    let e = parse_stored("k", &stored(future)).unwrap_err();
    assert!(e.message.contains("newer"), "{}", e.message);
}

/// Timed runs in the browser's WebAssembly engine, printed for the record (no assertion on time):
/// Monte Carlo 100,000 trials in one call, the E96 three-decade search, one analysis, and one
/// 1,000,000-sample pass of generation, noise and trigger. Each checks the work was done.
#[wasm_bindgen_test]
fn timed_runs() {
    use hysteron_core::catalog;
    use hysteron_core::search::{search, SearchSettings};
    use hysteron_core::signal::generate::{Component, SignalDefinition};
    use hysteron_core::signal::noise::NoiseSource;
    use hysteron_core::signal::trigger::{run_trigger, TimingModel, TriggerDesign};
    use hysteron_core::signal::timing::TriggerTiming;
    use hysteron_core::tolerance::{monte_carlo, ToleranceSettings};
    let perf = web_sys::window().unwrap().performance().unwrap();
    let demo = catalog::demos().into_iter().find(|d| d.key == "lathe-tachometer").unwrap().record();
    let c = demo.circuit.clone();

    let mut s = ToleranceSettings::default();
    s.monte_carlo.trials = 100_000;
    let t0 = perf.now();
    let mc = monte_carlo(&c, &s).unwrap();
    let mc_ms = perf.now() - t0;
    assert_eq!(mc.trials, 100_000);

    let settings = SearchSettings { series: hysteron_core::eseries::ESeries::E96, ..SearchSettings::default() };
    let t0 = perf.now();
    let rep = search(&c, demo.targets.unwrap().thresholds(), &settings, &demo.checks).unwrap();
    let search_ms = perf.now() - t0;
    assert!(!rep.candidates.is_empty());

    let t0 = perf.now();
    let n = 1000;
    let mut acc = 0.0;
    for _ in 0..n {
        acc += c.thresholds().unwrap().vt_upper_v;
    }
    let analysis_us = (perf.now() - t0) * 1e3 / n as f64;
    assert!(acc.is_finite());

    let def = SignalDefinition {
        sample_rate_hz: 1e6,
        duration_s: 1.0,
        seed: 3,
        components: vec![Component::Dc { level_v: 2.3 }, Component::Sine { amplitude_v: 1.9, frequency_hz: 60.0, phase_deg: 0.0 }],
        noise: vec![NoiseSource::White { rms_v: 0.025 }],
    };
    let design = TriggerDesign::from_circuit(&c).unwrap();
    let t0 = perf.now();
    let signal = def.generate().unwrap();
    let mut edges = Vec::new();
    let out = run_trigger(&design, &TimingModel::new(&TriggerTiming::default()).unwrap(), signal.time.view(), &signal.buffers.noisy_v, &mut edges);
    let pass_ms = perf.now() - t0;
    assert_eq!(signal.buffers.noisy_v.len(), 1_000_000);
    assert!(out.edges >= 100);

    wasm_bindgen_test::console_log!(
        "wasm timing: Monte Carlo 100k {mc_ms:.1} ms; E96 search {search_ms:.1} ms; thresholds {analysis_us:.2} µs; 1M-sample pass {pass_ms:.1} ms"
    );
}

#[wasm_bindgen_test]
fn fields_refuse_values_outside_their_physical_range() {
    // Issue 13 reproducers: a supply of 1e300 V and a negative resistor are refused at the field,
    // with the range in words; ordinary values in engineering notation and RKM code pass.
    use hysteron_app::fields::parse_in_range;
    assert!(parse_in_range("1e300", "V").unwrap_err().starts_with("must be between"));
    assert!(parse_in_range("-1k", "Ω").is_err());
    assert_eq!(parse_in_range("4k7", "Ω"), Ok(4700.0));
    assert_eq!(parse_in_range("12", "V"), Ok(12.0));
    // A unit without a range of its own (a dimensionless gain) is not range-checked here.
    assert_eq!(parse_in_range("1e9", ""), Ok(1e9));
}

/// Waits for a callback-style operation: `start` gets the function to call with the result.
async fn finished<T: 'static>(start: impl FnOnce(Box<dyn FnOnce(T)>)) -> T {
    use std::cell::RefCell;
    use std::rc::Rc;
    let slot: Rc<RefCell<Option<T>>> = Rc::new(RefCell::new(None));
    let mut resolve_fn = None;
    let promise = js_sys::Promise::new(&mut |resolve, _reject| resolve_fn = Some(resolve));
    let resolve = resolve_fn.expect("a Promise's executor runs at once");
    let s = slot.clone();
    start(Box::new(move |v| {
        *s.borrow_mut() = Some(v);
        let _ = resolve.call0(&wasm_bindgen::JsValue::NULL);
    }));
    let _ = wasm_bindgen_futures::JsFuture::from(promise).await;
    let v = slot.borrow_mut().take();
    v.expect("the callback ran")
}

#[wasm_bindgen_test]
async fn large_arrays_arrive_whole_over_several_tasks() {
    use hysteron_app::transfer::{copy_in_slices, SLICE_ELEMENTS};
    // Two arrays that together need three slices, and an empty one between them.
    let a: Vec<f64> = (0..SLICE_ELEMENTS + 17).map(|i| i as f64 * 0.5).collect();
    let b: Vec<f64> = (0..SLICE_ELEMENTS + 3).map(|i| -(i as f64)).collect();
    let js = |v: &[f64]| js_sys::Float64Array::from(v);
    let arrays = vec![js(&a), js(&[]), js(&b)];
    let tasks_before = std::rc::Rc::new(std::cell::Cell::new(true));
    let t = tasks_before.clone();
    let got = finished(move |done| {
        copy_in_slices(arrays, done);
        t.set(false); // still in the calling task
    })
    .await;
    assert!(!tasks_before.get());
    assert_eq!(got.len(), 3);
    assert_eq!(got[0], a);
    assert!(got[1].is_empty());
    assert_eq!(got[2], b);
}

#[wasm_bindgen_test]
fn small_arrays_arrive_in_the_same_task() {
    let arrays = vec![js_sys::Float64Array::from(&[1.0, 2.0][..])];
    let got = std::rc::Rc::new(std::cell::RefCell::new(None));
    let g = got.clone();
    hysteron_app::transfer::copy_in_slices(arrays, move |v| *g.borrow_mut() = Some(v));
    // No await: a result within one slice is handed over at once.
    assert_eq!(*got.borrow(), Some(vec![vec![1.0, 2.0]]));
}

#[wasm_bindgen_test]
async fn text_in_slices_keeps_surrogate_pairs_whole() {
    use hysteron_app::transfer::{text_in_slices, TEXT_SLICE_UNITS};
    // A character outside the Basic Multilingual Plane (two UTF-16 units) straddles the first
    // slice boundary; the text must come back unchanged, not with two replacement characters.
    let mut text = "a".repeat(TEXT_SLICE_UNITS as usize - 1);
    text.push('\u{1F50B}');
    text.push_str("tail;1.5\n");
    text.push_str(&"b".repeat(TEXT_SLICE_UNITS as usize + 5));
    let js = js_sys::JsString::from(text.as_str());
    let got = finished(move |done| text_in_slices(&js, done)).await;
    assert_eq!(got.len(), text.len());
    assert!(got == text, "the text changed on the way");
}
