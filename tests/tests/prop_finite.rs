//! Property: mutating the catalog records' numeric fields to extremes (0, ±5e-324, ±1e308, …; see
//! `hysteron_tests::mutate`) never panics, and every study that succeeds returns only finite
//! numbers (checked by the guard and, independently, by a JSON round trip). Fixed seed, so a
//! failure reproduces; the long run is `fuzz_budget.rs`.

use hysteron_core::evaluate::{evaluate_json, RecordResult};
use hysteron_tests::mutate::{catalog_values, check_finite, mutate};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};

#[test]
fn extreme_numeric_fields_never_panic_and_never_give_non_finite_results() {
    let records = catalog_values();
    let config = Config { cases: 400, failure_persistence: None, ..Config::default() };
    let rng = TestRng::from_seed(RngAlgorithm::ChaCha, &[13u8; 32]);
    let mut runner = TestRunner::new_with_rng(config, rng);
    let strategy = (any::<u32>(), proptest::collection::vec((any::<u32>(), any::<u32>()), 1..4));
    runner
        .run(&strategy, |(which, picks)| {
            let record = &records[which as usize % records.len()];
            let text = mutate(record, &picks).to_string();
            let out = evaluate_json(&text).map_err(|e| TestCaseError::fail(format!("{e}")))?;
            for r in out {
                if let RecordResult::Ok(e) = r {
                    check_finite(&e).map_err(|m| TestCaseError::fail(format!("{m}\nrecord: {text}")))?;
                }
            }
            Ok(())
        })
        .unwrap();
}

/// The catalog itself evaluates with every number finite (the oracles accept a good result).
#[test]
fn the_catalog_passes_both_oracles() {
    for v in catalog_values() {
        for r in evaluate_json(&v.to_string()).unwrap() {
            match r {
                RecordResult::Ok(e) => check_finite(&e).unwrap(),
                RecordResult::Error { message, .. } => panic!("{message}"),
            }
        }
    }
}

/// The oracles are not blind: a result with an infinity in it fails both.
#[test]
fn the_oracles_catch_a_planted_infinity() {
    let v = &catalog_values()[0];
    let RecordResult::Ok(mut e) = evaluate_json(&v.to_string()).unwrap().remove(0) else { panic!() };
    e.analysis.as_mut().unwrap().vt_upper_v = f64::INFINITY;
    let m = check_finite(&e).unwrap_err();
    assert!(m.contains("analysis.vt_upper_v"), "{m}");
    // The round trip on its own (without the guard) sees it too.
    let back: Result<hysteron_core::evaluate::Evaluation, _> = serde_json::from_value(serde_json::to_value(&*e).unwrap());
    assert!(back.map_or(true, |b| b != *e));
}
