//! Timing of the tolerance methods on a three-resistor design (single-supply inverting trigger).
//! Run: `cargo bench -p hysteron-core --bench tolerance -- --warm-up-time 1 --measurement-time 3`.
//! Target: Monte Carlo with 100,000 trials ≲ 15 ms natively (well under 50 ms in the browser).

use criterion::{criterion_group, criterion_main, Criterion};
use hysteron_core::device::Comparator;
use hysteron_core::tolerance::{gum, monte_carlo, worst_case, MonteCarloRun, ToleranceSettings};
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::Topology;
use std::hint::black_box;

fn design() -> Topology {
    let dev = Comparator {
        supply_v: 5.0,
        output_high_drop_v: 0.1,
        output_low_rise_v: 0.05,
        offset_v: 0.002,
        bias_plus_a: 20e-9,
        bias_minus_a: 20e-9,
        source_resistance_ohm: 1e3,
        ..Comparator::default()
    };
    Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, dev))
}

fn settings() -> ToleranceSettings {
    let mut s = ToleranceSettings::default();
    s.monte_carlo.trials = 100_000;
    s.spec.hysteresis_min_v = Some(0.9);
    s
}

fn benches(c: &mut Criterion) {
    let d = design();
    let s = settings();
    c.bench_function("monte_carlo_100k_trials", |b| {
        b.iter(|| monte_carlo(black_box(&d), black_box(&s)).unwrap())
    });
    let run = MonteCarloRun::new(&d, &s).unwrap();
    c.bench_function("monte_carlo_100k_trials_only", |b| {
        b.iter(|| run.run(0, black_box(100_000)).unwrap())
    });
    let partial = run.run(0, 100_000).unwrap();
    c.bench_function("monte_carlo_100k_statistics_only", |b| {
        b.iter(|| run.finish(black_box(&partial)).unwrap())
    });
    c.bench_function("gum", |b| {
        b.iter(|| gum(black_box(&d), black_box(&s)).unwrap())
    });
    c.bench_function("worst_case_corners_9_parameters", |b| {
        b.iter(|| worst_case(black_box(&d), black_box(&s)).unwrap())
    });
}

criterion_group!(tolerance, benches);
criterion_main!(tolerance);
