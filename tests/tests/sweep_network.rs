//! The noise sweep through an input network (`core::signal::sweep`, `core::jobs`): every level's
//! samples pass the network's clamp and filter before the trigger, as the study's own samples do.
//!
//! - At each level the sweep's counts equal a direct run of the whole chain (signal + white noise
//!   of that RMS → clamp → filter → trigger, `run_signal_through`) with the same seed: the sweep's
//!   unit noise is the study's next noise source scaled by the level (common random numbers), so
//!   the two runs see the same samples.
//! - A filter in front lowers the false edges at a level where the design without it chatters:
//!   a one-pole filter at fc cuts white noise flat to B to σ·√(fc·atan(B/fc)/B) (derived in
//!   `core::input_network::noise`; here about 0.18 σ), far below the hysteresis.
//! - Split over 1…N workers by level, the study through the network equals one run.

use hysteron_core::analysis::{Sense, Thresholds};
use hysteron_core::input_network::noise::FrontEnd;
use hysteron_core::jobs::{merge, split, Job, JobOutput, Running, DEFAULT_DISPLAY_POINTS};
use hysteron_core::signal::generate::{Component, SignalDefinition};
use hysteron_core::signal::noise::NoiseSource;
use hysteron_core::signal::report::{evaluate_signal, run_signal_through, SignalSettings};
use hysteron_core::signal::sweep::SweepSettings;
use hysteron_core::signal::trigger::TriggerDesign;

const SAMPLE_RATE_HZ: f64 = 2e5;

/// A 50 Hz sine of 1 V, no noise of its own (so the sweep's unit noise takes the seed of the
/// study's first noise source), with a sweep of 9 levels up to 0.4 V RMS.
fn settings() -> SignalSettings {
    SignalSettings {
        definition: SignalDefinition {
            sample_rate_hz: SAMPLE_RATE_HZ,
            duration_s: 0.2,
            seed: 23,
            components: vec![Component::Sine { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0 }],
            noise: vec![],
        },
        sweep: Some(SweepSettings { steps: 9, min_rms_v: Some(0.01), max_rms_v: Some(0.4), ..Default::default() }),
        ..Default::default()
    }
}

fn design() -> TriggerDesign {
    TriggerDesign {
        thresholds: Thresholds { vt_upper_v: 0.15, vt_lower_v: -0.15 },
        output_high_v: 5.0,
        output_low_v: 0.0,
        sense: Sense::NonInverting,
    }
}

/// A filter at 2 kHz (τ = 1/(2π·2 kHz)) behind a clamp at ±1.3 V (field-referred).
fn filtered() -> FrontEnd {
    FrontEnd { time_constant_s: 1.0 / (2.0 * std::f64::consts::PI * 2e3), clamp_low_v: Some(-1.3), clamp_high_v: Some(1.3) }
}

/// The same clamp without the filter.
fn clamp_only() -> FrontEnd {
    FrontEnd { time_constant_s: 0.0, ..filtered() }
}

fn run_as_worker(job: Job) -> JobOutput {
    let text = serde_json::to_string(&job).unwrap();
    let job: Job = serde_json::from_str(&text).unwrap();
    let mut running = Running::start(job).unwrap();
    while !running.progress().is_done() {
        running.step(50_000).unwrap();
    }
    running.finish().unwrap()
}

#[test]
fn each_sweep_level_equals_a_direct_run_of_the_chain_and_the_filter_lowers_false_edges() {
    let s = settings();
    let through = |front: &FrontEnd| run_signal_through(&s, &design(), None, front, false).unwrap().report;
    let with_filter = through(&filtered());
    let without = through(&clamp_only());
    let (sf, sw) = (with_filter.sweep.as_ref().unwrap(), without.sweep.as_ref().unwrap());
    assert_eq!(sf.points.len(), 9);
    for (front, sweep) in [(filtered(), sf), (clamp_only(), sw)] {
        for p in &sweep.points {
            // The chain run directly: the same signal with white noise of this RMS and no sweep.
            let mut direct = s.clone();
            direct.sweep = None;
            direct.definition.noise = vec![NoiseSource::White { rms_v: p.noise_rms_v }];
            let r = run_signal_through(&direct, &design(), None, &front, false).unwrap().report;
            assert_eq!(Some(p.design), r.design.comparison, "τ {} s, level {} V", front.time_constant_s, p.noise_rms_v);
            assert_eq!(Some(p.baseline), r.baseline.comparison, "τ {} s, level {} V", front.time_constant_s, p.noise_rms_v);
        }
    }
    // Somewhere the unfiltered design chatters; there the filtered one has fewer false edges, and
    // at no level more.
    let worst = sw.points.iter().map(|p| p.design.false_edges).max().unwrap();
    assert!(worst > 0, "the clamp-only design never chatters: {:?}", sw.points);
    for (a, b) in sf.points.iter().zip(&sw.points) {
        assert!(a.design.false_edges <= b.design.false_edges, "level {} V: filtered {} > unfiltered {}", a.noise_rms_v, a.design.false_edges, b.design.false_edges);
    }
    let i = sw.points.iter().position(|p| p.design.false_edges == worst).unwrap();
    assert!(sf.points[i].design.false_edges < worst, "level {} V: filter {} vs none {worst}", sw.points[i].noise_rms_v, sf.points[i].design.false_edges);
    // The Rice bound sees the filtered noise: σ1 falls, so the bound falls too.
    assert!(sf.points[i].design_bound_false_edges < sw.points[i].design_bound_false_edges);
    // Without any network the sweep is the plain study's (the front end changes nothing else).
    let plain = evaluate_signal(&s, &design(), None).unwrap();
    let none = FrontEnd { time_constant_s: 0.0, clamp_low_v: None, clamp_high_v: None };
    let r = run_signal_through(&s, &design(), None, &none, false).unwrap().report;
    assert_eq!(r.sweep, plain.sweep);
}

#[test]
fn a_study_through_the_network_split_by_level_equals_one_run() {
    let s = settings();
    let single = run_signal_through(&s, &design(), None, &filtered(), false).unwrap().report;
    let job = Job::Signal { design: design(), settings: s.clone(), capture: None, display_points: DEFAULT_DISPLAY_POINTS, output: None, front: Some(filtered()) };
    for parts in 1..=5 {
        let jobs = split(&job, parts).unwrap();
        assert_eq!(jobs.len(), if parts == 1 { 1 } else { 1 + parts }, "{parts} parts");
        let outs = jobs.into_iter().map(run_as_worker).collect();
        let JobOutput::Signal(view) = merge(&job, outs).unwrap() else { panic!("not a signal study") };
        assert_eq!(view.report, single, "{parts} parts");
    }
    // The sweep alone through the network, split, equals the sweep inside the study.
    let sweep_job = Job::NoiseSweep { design: design(), settings: s, levels: None, front: Some(filtered()) };
    for parts in [1, 3, 9] {
        let outs = split(&sweep_job, parts).unwrap().into_iter().map(run_as_worker).collect();
        let JobOutput::SweepPart(p) = merge(&sweep_job, outs).unwrap() else { panic!("not a sweep") };
        assert_eq!(Some(&p.points), single.sweep.as_ref().map(|s| &s.points), "{parts} parts");
    }
}
