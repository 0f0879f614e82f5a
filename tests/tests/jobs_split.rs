//! A long study split over N workers gives exactly what one run gives (`core::jobs`): Monte Carlo by
//! trial ranges (each trial seeded from the run's seed and its index), the noise sweep by level
//! ranges (common unit noise regenerated from the signal's seed). Checked natively here, for 1 to
//! 7 parts and for uneven slice budgets, against the one-shot library functions; the parts travel
//! through JSON with their arrays taken out, as they do between a worker and the page. A split Monte
//! Carlo's second round (its statistics on the workers, `core::job_rounds`) is run too.

use hysteron_core::job_answers::Answers;
use hysteron_core::job_rounds::Gathered;
use hysteron_core::jobs::{merge, split, Job, JobOutput, Running, DEFAULT_DISPLAY_POINTS};
use hysteron_core::record::DesignRecord;
use hysteron_core::signal::generate::{Component, SignalDefinition};
use hysteron_core::signal::noise::NoiseSource;
use hysteron_core::signal::report::{evaluate_signal, SignalSettings};
use hysteron_core::signal::sweep::SweepSettings;
use hysteron_core::signal::trigger::TriggerDesign;
use hysteron_core::tolerance::monte_carlo::monte_carlo;
use hysteron_core::tolerance::{SpecWindow, ToleranceSettings};

fn record(name: &str) -> DesignRecord {
    let text = std::fs::read_to_string(format!("{}/fixtures/records/{name}.json", env!("CARGO_MANIFEST_DIR"))).unwrap();
    DesignRecord::from_json(&text).unwrap()
}

/// What a worker does: run in slices, then send the output as JSON plus its arrays and its kind;
/// and what the page does with that: read it as the kind the job's [`Answers`] expect (checked
/// equal to reading the whole `JobOutput` enum) and put the arrays back.
fn run_as_worker(job: Job, budget: u64, answers: Answers) -> JobOutput {
    let text = serde_json::to_string(&job).unwrap();
    let mut job: Job = serde_json::from_str(&text).unwrap();
    let arrays = job.take_arrays();
    job.put_arrays(arrays).unwrap();
    let mut running = Running::start(job).unwrap();
    let total = running.progress().total;
    let mut steps = 0;
    while !running.progress().is_done() {
        let p = running.step(budget).unwrap();
        assert!(p.done <= p.total && p.total == total);
        steps += 1;
    }
    assert!(steps >= 1);
    let mut out = running.finish().unwrap();
    let arrays = out.take_arrays();
    let json = serde_json::to_string(&out).unwrap();
    let mut back = (answers.read)(out.kind(), &json).unwrap();
    let whole: JobOutput = serde_json::from_str(&json).unwrap();
    assert_eq!(back, whole, "read by its kind, the answer equals the whole enum read");
    back.put_arrays(arrays).unwrap();
    back
}

/// The job split into `parts`, each run as a worker does, merged as the page does (the kind's own
/// merge), and checked equal to the general [`merge`]; for a kind with a second round, that round
/// too is run as the page runs it (its jobs on `parts` workers, answered in reverse order) and
/// checked equal to the merge.
fn run_split(job: &Job, parts: usize, budget: u64, answers: Answers) -> JobOutput {
    let outputs: Vec<JobOutput> = split(job, parts).unwrap().into_iter().map(|j| run_as_worker(j, budget, answers)).collect();
    let general = merge(job, outputs.clone()).unwrap();
    let own = (answers.merge)(job, outputs.clone()).unwrap();
    assert_eq!(own, general, "the kind's own merge equals the general one");
    if let Some(round) = answers.second {
        let two_rounds = match (round.gather)(job, outputs, parts).unwrap() {
            Gathered::Done(o) => o,
            Gathered::Again { kept, jobs } => {
                let answered = jobs.into_iter().rev().map(|j| run_as_worker(j, budget, answers)).collect();
                (round.finish)(job, kept, answered).unwrap()
            }
        };
        assert_eq!(two_rounds, own, "the second round on the workers equals the merge on the page");
    }
    own
}

#[test]
fn monte_carlo_in_n_parts_equals_one_run() {
    for name in ["inverting", "schmitt_gate", "bjt_pair"] {
        let r = record(name);
        let mut settings: ToleranceSettings = r.tolerance.clone().unwrap_or_default();
        settings.monte_carlo.trials = 3001;
        settings.monte_carlo.seed = 20_261_202;
        settings.spec = SpecWindow { hysteresis_min_v: Some(0.0), ..settings.spec };
        let single = monte_carlo(&r.circuit, &settings).unwrap();
        let job = Job::MonteCarlo { circuit: r.circuit.clone(), settings: settings.clone(), trials: None };
        for (parts, budget) in [(1, 3001), (1, 7), (2, 500), (3, 1000), (4, 64), (7, 333)] {
            let JobOutput::MonteCarlo(m) = run_split(&job, parts, budget, Answers::MONTE_CARLO) else { panic!("{name}: not a Monte Carlo result") };
            // Whole-struct equality: yield, histograms, order statistics, means — bit for bit.
            assert_eq!(m, single, "{name}: {parts} parts, slices of {budget}");
        }
        let parts = split(&job, 4).unwrap();
        assert_eq!(parts.len(), 4, "{name}");
    }
}

#[test]
fn monte_carlo_parts_cover_the_run_once_and_in_order() {
    let r = record("inverting");
    let mut settings = r.tolerance.clone().unwrap_or_default();
    settings.monte_carlo.trials = 10;
    let job = Job::MonteCarlo { circuit: r.circuit.clone(), settings, trials: None };
    let parts = split(&job, 4).unwrap();
    let ranges: Vec<_> = parts
        .iter()
        .map(|j| match j {
            Job::MonteCarlo { trials: Some(t), .. } => (t.start, t.end),
            _ => panic!("not a part"),
        })
        .collect();
    assert_eq!(ranges, [(0, 2), (2, 5), (5, 7), (7, 10)]);
    // Parts merged out of order are refused.
    let mut outs: Vec<JobOutput> = parts.into_iter().map(|j| run_as_worker(j, 3, Answers::MONTE_CARLO)).collect();
    outs.swap(1, 2);
    assert!(merge(&job, outs.clone()).is_err());
    assert!((Answers::MONTE_CARLO.merge)(&job, outs).is_err());
}

fn signal_settings(samples_per_s: f64) -> SignalSettings {
    SignalSettings {
        definition: SignalDefinition {
            sample_rate_hz: samples_per_s,
            duration_s: 0.2,
            seed: 11,
            components: vec![Component::Sine { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0 }],
            noise: vec![NoiseSource::White { rms_v: 0.05 }],
        },
        sweep: Some(SweepSettings { steps: 9, ..Default::default() }),
        ..Default::default()
    }
}

fn trigger() -> TriggerDesign {
    TriggerDesign {
        thresholds: hysteron_core::analysis::Thresholds { vt_upper_v: 0.2, vt_lower_v: -0.2 },
        output_high_v: 5.0,
        output_low_v: 0.0,
        sense: hysteron_core::analysis::Sense::NonInverting,
    }
}

#[test]
fn signal_study_and_sweep_in_n_parts_equal_one_run() {
    let settings = signal_settings(2e5);
    let single = evaluate_signal(&settings, &trigger(), None).unwrap();
    assert_eq!(single.sweep.as_ref().map(|s| s.points.len()), Some(9));
    let job = Job::Signal { design: trigger(), settings: settings.clone(), capture: None, display_points: DEFAULT_DISPLAY_POINTS, output: None, front: None };
    for (parts, budget) in [(1, u64::MAX), (1, 1), (2, 40_000), (3, 1), (5, 1), (12, 100_000)] {
        let JobOutput::Signal(view) = run_split(&job, parts, budget, Answers::SIGNAL) else { panic!("not a signal study") };
        assert_eq!(view.report, single, "{parts} parts, budget {budget}");
    }
    // The sweep alone, split, equals the sweep inside the study.
    let sweep_job = Job::NoiseSweep { design: trigger(), settings, levels: None, front: None };
    for parts in [1, 2, 4, 9] {
        let JobOutput::SweepPart(p) = run_split(&sweep_job, parts, 1, Answers::NOISE_SWEEP) else { panic!("not a sweep") };
        assert_eq!((p.start, p.end), (0, 9));
        assert_eq!(Some(&p.points), single.sweep.as_ref().map(|s| &s.points), "{parts} parts");
    }
}

#[test]
fn progress_is_announced_before_the_start_and_reaches_the_total() {
    let settings = signal_settings(1e5);
    let samples = settings.definition.validate().unwrap() as u64;
    let job = Job::Signal { design: trigger(), settings, capture: None, display_points: 1000, output: None, front: None };
    let mut r = Running::start(job).unwrap();
    let p0 = r.progress();
    assert_eq!(p0.done, 0);
    // Main pass weighs 4 levels, then 9 levels: the bound is known before any work is done.
    assert_eq!(p0.total, samples * 13);
    let mut seen = vec![p0.done];
    while !r.progress().is_done() {
        seen.push(r.step(1).unwrap().done);
    }
    assert_eq!(seen.len(), 1 + 1 + 9, "one step for the main pass, one per level");
    assert!(seen.windows(2).all(|w| w[0] < w[1]));
    let JobOutput::Signal(v) = r.finish().unwrap() else { panic!("not a signal study") };
    assert!(v.signal_v.len() <= 1000);
    assert_eq!(v.report.samples as u64, samples);
}
