//! Benchmark: one pass over 1,000,000 samples — generate the components, add the noise, run the
//! trigger — with buffers and the edge list reused between iterations (no allocation in the loop).
//! Also the trigger alone and reading a 1,000,000-row CSV capture.
//!
//! Run: `cargo bench -p hysteron-core --bench signal`. The signal is the demo tachometer of
//! shared/DOMAIN.md §7 (2.3 V ± 1.9 V sine at 60 Hz, 50 Hz hum of 150 mV p-p, 25 mV RMS white
//! noise) sampled at 1 MHz for 1 s, through thresholds 2.9/1.7 V with a 1 µs delay.
//! tests/scripts/numpy_compare.py times the same pass in vectorised numpy for comparison.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use hysteron_core::analysis::{Sense, Thresholds};
use hysteron_core::signal::csv::{write_csv, CsvOptions, CsvParser, CsvWriteOptions};
use hysteron_core::signal::generate::{Component, SignalBuffers, SignalDefinition};
use hysteron_core::signal::noise::{MainsFrequency, NoiseSource};
use hysteron_core::signal::timing::{DelaySpec, OutputStage, TriggerTiming};
use hysteron_core::signal::trigger::{run_trigger, TimingModel, TriggerDesign};
use std::time::Duration;

fn definition() -> SignalDefinition {
    SignalDefinition {
        sample_rate_hz: 1e6,
        duration_s: 1.0,
        seed: 1,
        components: vec![Component::Dc { level_v: 2.3 }, Component::Sine { amplitude_v: 1.9, frequency_hz: 60.0, phase_deg: 0.0 }],
        noise: vec![
            NoiseSource::Hum { mains: MainsFrequency::Hz50, amplitude_v: 0.075, phase_deg: 0.0, harmonics: vec![] },
            NoiseSource::White { rms_v: 0.025 },
        ],
    }
}

fn design() -> TriggerDesign {
    TriggerDesign { thresholds: Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 }, output_high_v: 5.0, output_low_v: 0.0, sense: Sense::Inverting }
}

fn timing() -> TimingModel {
    TimingModel::new(&TriggerTiming {
        delay: DelaySpec::Fixed { delay_s: 1e-6 },
        output: OutputStage::PushPull { rise_time_s: 50e-9, fall_time_s: 50e-9 },
        ..Default::default()
    })
    .expect("valid timing")
}

fn bench(c: &mut Criterion) {
    let def = definition();
    let d = design();
    let t = timing();
    let mut buffers = SignalBuffers::default();
    let mut edges = Vec::with_capacity(1024);
    def.generate_into(&mut buffers).expect("valid signal");
    let mut g = c.benchmark_group("signal_1m");
    g.sample_size(20).measurement_time(Duration::from_secs(6)).warm_up_time(Duration::from_secs(1));
    g.bench_function("generate_noise_trigger", |b| {
        b.iter(|| {
            def.generate_into(&mut buffers).expect("valid signal");
            let o = run_trigger(&d, &t, def.time_base().view(), &buffers.noisy_v, &mut edges);
            black_box(o.edges)
        })
    });
    g.bench_function("trigger_only", |b| {
        b.iter(|| black_box(run_trigger(&d, &t, def.time_base().view(), black_box(&buffers.noisy_v), &mut edges).edges))
    });
    let text = write_csv(def.time_base().view(), &buffers.noisy_v, &CsvWriteOptions::default());
    g.sample_size(10);
    g.bench_function("csv_read_1m_rows", |b| {
        b.iter(|| {
            let mut p = CsvParser::new(CsvOptions::default()).expect("valid options");
            p.reserve(1_000_000);
            for piece in text.as_bytes().chunks(1 << 20) {
                // ASCII text: every byte boundary is a character boundary.
                p.feed(std::str::from_utf8(piece).expect("ascii")).expect("readable");
            }
            black_box(p.finish().expect("clean file").volts.len())
        })
    });
    g.finish();
}

criterion_group!(benches, bench, whole_chain);
criterion_main!(benches);

/// The whole signal test of the lathe tachometer demo at 1 M samples, as the compute worker runs it
/// (`core::signal::output_edges::run_signal_chain`: generation, noise, design and baseline passes,
/// edge matching, report). The browser's timed run covers the same chain at 10 M samples.
fn whole_chain(c: &mut Criterion) {
    let mut r = hysteron_core::catalog::demos().into_iter().find(|d| d.key == "lathe-tachometer").expect("demo").record();
    let mut s = r.signal.clone().expect("the demo has a signal");
    s.definition.sample_rate_hz = 1e6;
    s.definition.duration_s = 1.0;
    s.sweep = None;
    r.signal = Some(s.clone());
    let (design, front) = hysteron_core::input_network::from_record::signal_design(&r).expect("design");
    let output = hysteron_core::overview::dynamics(&r).0.and_then(|x| x.ok());
    let mut g = c.benchmark_group("signal_chain_1m");
    g.sample_size(10).measurement_time(Duration::from_secs(6)).warm_up_time(Duration::from_secs(1));
    g.bench_function("lathe_tachometer_whole_chain", |b| {
        b.iter(|| {
            let run = hysteron_core::signal::output_edges::run_signal_chain(&s, &design, None, front.as_ref(), output.as_ref()).expect("runs");
            black_box(run.report.duration_s)
        })
    });
    g.finish();
}
