//! Timings of the standard-value search and of the analyses it builds on.
//! Run: `cargo bench -p hysteron-core --bench search -- --warm-up-time 1 --measurement-time 3`.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use hysteron_core::analysis::{CheckSettings, Thresholds};
use hysteron_core::device::Comparator;
use hysteron_core::eseries::ESeries;
use hysteron_core::search::{search, SearchJob, SearchSettings};
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt};
use hysteron_core::topology::{analyse, inverting::InvertingSchmitt, Circuit, Topology};

/// DOMAIN §7 scenario 1: single-supply inverting Schmitt on 5 V, VT+ 2.9 V, VT− 1.7 V.
fn lathe() -> Topology {
    let dev = Comparator {
        supply_v: 5.0,
        output_high_drop_v: 0.05,
        offset_v: 0.002,
        bias_plus_a: 10e-12,
        bias_minus_a: 10e-12,
        ..Comparator::default()
    };
    Topology::Inverting(InvertingSchmitt::single_supply(22e3, 15e3, 100e3, dev))
}

fn benches(c: &mut Criterion) {
    let circuit = lathe();
    let targets = Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 };
    let checks = CheckSettings::default();

    let e96 =
        SearchSettings { series: ESeries::E96, r_min_ohm: 1e3, r_max_ohm: 1e6, top_n: 10, ..SearchSettings::default() };
    c.bench_function("search E96 1k-1M, three resistors", |b| {
        b.iter(|| search(black_box(&circuit), black_box(targets), &e96, &checks).unwrap())
    });
    let budget = SearchSettings { current_budget_a: Some(20e-6), ..e96.clone() };
    c.bench_function("search E96 1k-1M, three resistors, 20 uA budget", |b| {
        b.iter(|| search(black_box(&circuit), black_box(targets), &budget, &checks).unwrap())
    });
    c.bench_function("search E96 1k-1M, three resistors, as a job in 500-evaluation slices", |b| {
        b.iter(|| {
            let mut job = SearchJob::new(black_box(&circuit), black_box(targets), &e96, &checks).unwrap();
            while !job.step(500).finished {}
            job.finish()
        })
    });

    // The two-transistor template (core/src/catalog/bjt_pair.json), five resistors, on a range
    // small enough to time: E3 over 1k-100k is 7 values, 7^4 combinations.
    let mut group = c.benchmark_group("two-transistor");
    group.sample_size(10);
    let bjt_targets = Thresholds { vt_upper_v: 1.5, vt_lower_v: 0.9 };
    let small = SearchSettings { series: ESeries::E3, r_min_ohm: 1e3, r_max_ohm: 100e3, ..SearchSettings::default() };
    for model in [BjtModel::Hand, BjtModel::EbersMoll] {
        let bjt = EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 13e3, 6.2e3, 24e3, 10e3, 1e3) };
        let r = search(&bjt, bjt_targets, &small, &checks).unwrap();
        eprintln!("{model:?}: {} combinations, {} evaluations", r.combinations, r.evaluations);
        group.bench_function(format!("search E3 1k-100k, {model:?}"), |b| {
            b.iter(|| search(black_box(&bjt), black_box(bjt_targets), &small, &checks).unwrap())
        });
        group.bench_function(format!("thresholds(), {model:?}"), |b| b.iter(|| black_box(&bjt).thresholds().unwrap()));
    }
    group.finish();
    c.bench_function("thresholds()", |b| b.iter(|| black_box(&circuit).thresholds().unwrap()));
    c.bench_function("analyse()", |b| b.iter(|| analyse(black_box(&circuit), &checks).unwrap()));
}

criterion_group!(group, benches);
criterion_main!(group);
