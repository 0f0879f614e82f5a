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
    // The same values are pinned by the native unit tests in `core/src/rng.rs` (xoshiro256++ seeded by
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
    assert_eq!(hysteron_core::tolerance::monte_carlo_fingerprint(7), 0x9115_18c1_41ba_0fe9);
}

/// First output of xoshiro256++ seeded with 0 through SplitMix64, as computed natively
/// (pinned in `core/src/rng.rs` tests as well).
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
