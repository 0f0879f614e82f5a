//! Timings of the standard-value search and of the analyses it builds on.
//! Run: `cargo bench -p hysteron-core --bench search -- --warm-up-time 1 --measurement-time 3`.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use hysteron_core::analysis::{
    Analysis, CheckSettings, OperatingPoint, OutputStage, OutputState, Sense, Thresholds, Warning,
};
use hysteron_core::error::DesignError;
use hysteron_core::device::Comparator;
use hysteron_core::eseries::ESeries;
use hysteron_core::search::{search, SearchJob, SearchSettings};
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt};
use hysteron_core::topology::{analyse, inverting::InvertingSchmitt, Circuit, Parameter, Topology, TransistorStress};
use std::time::Instant;

/// The pair with its monotone structure hidden: the search then takes its general path (bilinear
/// models, found wrong, then every combination of the other four resistors with a full scan of the
/// solved one), as it did before the monotone plan. The "before" of the before/after figures.
#[derive(Clone)]
struct Plain(EmitterCoupledSchmitt);

impl Circuit for Plain {
    fn validate(&self) -> Result<(), DesignError> { self.0.validate() }
    fn thresholds(&self) -> Result<Thresholds, DesignError> { self.0.thresholds() }
    fn output_levels(&self) -> Result<(f64, f64), DesignError> { self.0.output_levels() }
    fn sense(&self) -> Sense { self.0.sense() }
    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> { self.0.operating_point(vin_v, state) }
    fn parameters(&self) -> Vec<Parameter> { self.0.parameters() }
    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> { self.0.with_parameters(values).map(Plain) }
    fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError> { self.0.synthesise_with_anchor(targets, anchor_ohm).map(Plain) }
    fn anchor_description(&self) -> &'static str { self.0.anchor_description() }
    fn supply_v(&self) -> f64 { self.0.supply_v() }
    fn with_supply(&self, supply_v: f64) -> Self { Plain(self.0.with_supply(supply_v)) }
    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> { self.0.checks(settings) }
    fn device_input_range(&self) -> (f64, f64) { self.0.device_input_range() }
    fn negative_rail_v(&self) -> f64 { self.0.negative_rail_v() }
    fn output_stage(&self) -> OutputStage { self.0.output_stage() }
    fn troubleshooting(&self, analysis: &Analysis, checks: &CheckSettings) -> Vec<String> { self.0.troubleshooting(analysis, checks) }
    fn transistor_stress(&self) -> Vec<TransistorStress> { self.0.transistor_stress() }
}

/// The dust-extractor demo (core/src/catalog/demo_dust_extractor.json): Ebers–Moll model, 300 K.
fn dust_extractor() -> EmitterCoupledSchmitt {
    let mut c = EmitterCoupledSchmitt { model: BjtModel::EbersMoll, ..EmitterCoupledSchmitt::new(12.0, 13e3, 6.2e3, 24e3, 10e3, 1e3) };
    c.transistor.temperature_k = 300.0;
    c.transistor.nominal_temperature_k = 300.0;
    c
}

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
    // The dust-extractor demo, before (general path, `Plain`) and after (monotone plan), on E6
    // over 1k-10k (7 values, 7^5 = 16 807 combinations): small enough for the general path to be
    // timed. The full E6 1k-1M search is timed once below (one run, printed).
    let demo = dust_extractor();
    let e6 = SearchSettings { series: ESeries::E6, r_min_ohm: 1e3, r_max_ohm: 10e3, ..SearchSettings::default() };
    let before = search(&Plain(demo.clone()), bjt_targets, &e6, &checks).unwrap();
    let after = search(&demo, bjt_targets, &e6, &checks).unwrap();
    eprintln!("dust extractor E6 1k-10k: general path {} evaluations, monotone plan {}", before.evaluations, after.evaluations);
    assert_eq!(before.candidates[0].worst_error_rel, after.candidates[0].worst_error_rel);
    group.bench_function("dust extractor E6 1k-10k, general path (before)", |b| {
        b.iter(|| search(black_box(&Plain(demo.clone())), black_box(bjt_targets), &e6, &checks).unwrap())
    });
    group.bench_function("dust extractor E6 1k-10k, monotone plan (after)", |b| {
        b.iter(|| search(black_box(&demo), black_box(bjt_targets), &e6, &checks).unwrap())
    });
    // Two designs in turn: the solver remembers the last design traced, so one design would time the memo.
    let other = EmitterCoupledSchmitt { r1_ohm: 12e3, ..demo.clone() };
    let mut flip = false;
    group.bench_function("dust extractor thresholds(), Ebers-Moll", |b| {
        b.iter(|| {
            flip = !flip;
            black_box(if flip { &demo } else { &other }).thresholds().unwrap()
        })
    });
    group.finish();
    let wide = SearchSettings { series: ESeries::E6, r_min_ohm: 1e3, r_max_ohm: 1e6, ..SearchSettings::default() };
    let t0 = Instant::now();
    let r = search(&demo, bjt_targets, &wide, &checks).unwrap();
    eprintln!(
        "dust extractor E6 1k-1M, monotone plan: {:.1} s, {} evaluations (every combination: {}), best {:e}",
        t0.elapsed().as_secs_f64(),
        r.evaluations,
        (r.values_per_resistor as u64).pow(5),
        r.candidates[0].worst_error_rel
    );
    c.bench_function("thresholds()", |b| b.iter(|| black_box(&circuit).thresholds().unwrap()));
    c.bench_function("analyse()", |b| b.iter(|| analyse(black_box(&circuit), &checks).unwrap()));
}

criterion_group!(group, benches);
criterion_main!(group);
