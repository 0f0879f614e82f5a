//! The standard-value search split over N workers lists exactly what the one-call search lists
//! (`core::jobs::split`/`merge` on `Job::Search`; the method in `core::search`, "Split over
//! workers"): for the three-resistor inverting form, the non-inverting form with a divider
//! reference (three enumerated resistors) and the transistor pair's monotone plan, for 1 to 8
//! parts and uneven slice budgets, without the distinct rule (with and without a current budget).
//! With the distinct rule a search is not split (its list depends on the order near twins meet)
//! and one worker's run equals the one-call search. The parts travel through JSON, as they do
//! between a worker and the page.

use hysteron_core::analysis::Thresholds;
use hysteron_core::eseries::ESeries;
use hysteron_core::job_answers::Answers;
use hysteron_core::jobs::{merge, split, Job, JobOutput, Running};
use hysteron_core::record::DesignRecord;
use hysteron_core::search::{search, SearchReport, SearchSettings};

fn record(name: &str) -> DesignRecord {
    let text = std::fs::read_to_string(format!("{}/fixtures/records/{name}.json", env!("CARGO_MANIFEST_DIR"))).unwrap();
    DesignRecord::from_json(&text).unwrap()
}

/// What a worker does: read the job from JSON, run it in slices, send the output back as JSON with
/// its kind; the page reads it as a search's answer ([`Answers::SEARCH`], checked equal to reading
/// the whole `JobOutput` enum).
fn run_as_worker(job: Job, budget: u64) -> JobOutput {
    let mut job: Job = serde_json::from_str(&serde_json::to_string(&job).unwrap()).unwrap();
    let arrays = job.take_arrays();
    job.put_arrays(arrays).unwrap();
    let mut running = Running::start(job).unwrap();
    assert_eq!(running.unit(), "combinations");
    let total = running.progress().total;
    assert!(total >= 1);
    while !running.progress().is_done() {
        let p = running.step(budget).unwrap();
        assert!(p.done <= p.total && p.total == total, "{p:?}");
    }
    let out = running.finish().unwrap();
    let json = serde_json::to_string(&out).unwrap();
    let back = (Answers::SEARCH.read)(out.kind(), &json).unwrap();
    assert_eq!(back, serde_json::from_str::<JobOutput>(&json).unwrap());
    back
}

fn run_split(job: &Job, parts: usize, budget: u64) -> (usize, SearchReport) {
    let pieces = split(job, parts).unwrap();
    let n = pieces.len();
    let outputs: Vec<JobOutput> = pieces.into_iter().map(|j| run_as_worker(j, budget)).collect();
    let own = (Answers::SEARCH.merge)(job, outputs.clone()).unwrap();
    assert_eq!(own, merge(job, outputs).unwrap(), "the search's own merge equals the general one");
    match own {
        JobOutput::Search(r) => (n, r),
        other => panic!("not a search report: {other:?}"),
    }
}

/// Checks 1…8 parts against the one-call search; returns the one-call report.
fn check(name: &str, record: &DesignRecord, targets: Thresholds, settings: &SearchSettings) -> SearchReport {
    let checks = record.checks;
    let single = search(&record.circuit, targets, settings, &checks).unwrap();
    assert!(!single.candidates.is_empty(), "{name}: the one-call search found nothing, the comparison would mean nothing");
    let job = Job::Search { circuit: record.circuit.clone(), targets, settings: settings.clone(), checks, combinations: None };
    for (parts, budget) in [(1, 1_000_000), (1, 3), (2, 100), (3, 17), (4, 1000), (5, 1), (7, 64), (8, 250)] {
        let (n, merged) = run_split(&job, parts, budget);
        let expected = if settings.distinct { 1 } else { parts.min(single.combinations as usize) };
        assert_eq!(n, expected, "{name}: parts made for {parts}");
        // Whole lists compared bit for bit: values, thresholds, errors, currents, order.
        if merged.candidates != single.candidates {
            let short = |c: &hysteron_core::search::Candidate| {
                (c.parts.iter().map(|p| p.value_ohm).collect::<Vec<_>>(), c.worst_error_rel, c.vt_upper_v, c.vt_lower_v)
            };
            let a: Vec<_> = merged.candidates.iter().map(short).collect();
            let b: Vec<_> = single.candidates.iter().map(short).collect();
            panic!("{name}: {parts} parts, slices of {budget}:\nsplit {a:?}\none call {b:?}");
        }
        assert_eq!(
            (merged.combinations, merged.series, merged.values_per_resistor, &merged.solved_id, merged.targets),
            (single.combinations, single.series, single.values_per_resistor, &single.solved_id, single.targets),
            "{name}: {parts} parts"
        );
        assert!(merged.evaluations > 0, "{name}: {parts} parts counted no work");
    }
    single
}

fn settings(series: ESeries, r_min_ohm: f64, r_max_ohm: f64) -> SearchSettings {
    SearchSettings { series, r_min_ohm, r_max_ohm, top_n: 10, current_budget_a: None, distinct: false }
}

#[test]
fn inverting_three_resistors_in_n_parts_equals_one_search() {
    let r = record("inverting");
    let t = Thresholds { vt_upper_v: 1.9, vt_lower_v: 1.4 };
    let single = check("inverting E96, all part sets", &r, t, &settings(ESeries::E96, 1e3, 1e6));
    assert_eq!(single.combinations, 289 * 289);
    check("inverting E96, distinct (one part)", &r, t, &SearchSettings { distinct: true, ..settings(ESeries::E96, 1e3, 1e6) });
    check("inverting E24, all part sets", &r, t, &settings(ESeries::E24, 1e3, 1e6));
    // A current budget that binds: the parts check it, the merge keeps their verdict.
    let budget = check("inverting E24, 20 µA", &r, t, &SearchSettings { current_budget_a: Some(20e-6), ..settings(ESeries::E24, 1e3, 1e6) });
    assert!(budget.candidates.iter().all(|c| c.quiescent_current_a.is_some_and(|a| a <= 20e-6 * (1.0 + 1e-12))));
}

#[test]
fn non_inverting_with_divider_reference_in_n_parts_equals_one_search() {
    let r = record("non_inverting");
    let single = check("non-inverting E12", &r, Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 }, &settings(ESeries::E12, 1e3, 100e3));
    assert_eq!(single.combinations, 25 * 25 * 25, "three enumerated resistors");
}

#[test]
fn transistor_pair_monotone_plan_in_n_parts_equals_one_search() {
    let r = record("bjt_pair");
    let single = check("transistor pair E6", &r, Thresholds { vt_upper_v: 1.5, vt_lower_v: 0.9 }, &settings(ESeries::E6, 1e3, 22e3));
    assert_eq!(single.solved_id, "re_ohm", "the monotone plan solves for RE");
    check("transistor pair E6, distinct (one part)", &r, Thresholds { vt_upper_v: 1.5, vt_lower_v: 0.9 }, &SearchSettings { distinct: true, ..settings(ESeries::E6, 1e3, 22e3) });
}

#[test]
fn search_parts_cover_the_enumeration_once_and_in_order() {
    let r = record("inverting");
    let job = Job::Search {
        circuit: r.circuit.clone(),
        targets: Thresholds { vt_upper_v: 1.9, vt_lower_v: 1.4 },
        settings: settings(ESeries::E12, 1e3, 1e6),
        checks: r.checks,
        combinations: None,
    };
    for parts in 1..=8 {
        let ranges: Vec<(u64, u64)> = split(&job, parts)
            .unwrap()
            .iter()
            .map(|j| match j {
                Job::Search { combinations: Some(p), .. } => (p.start, p.end),
                Job::Search { combinations: None, .. } if parts == 1 => (0, 37 * 37),
                other => panic!("not a search part: {other:?}"),
            })
            .collect();
        assert_eq!(ranges.first().map(|r| r.0), Some(0));
        assert_eq!(ranges.last().map(|r| r.1), Some(37 * 37), "E12 over 1k–1M: 37 values, 37² combinations");
        assert!(ranges.windows(2).all(|w| w[0].1 == w[1].0 && w[0].0 < w[0].1), "{ranges:?}");
        // Whole runs of the innermost resistor (37 combinations each).
        assert!(ranges.iter().all(|r| r.0 % 37 == 0), "{ranges:?}");
    }
    // A part outside the enumeration is refused, not run.
    let bad = Job::Search {
        circuit: r.circuit.clone(),
        targets: Thresholds { vt_upper_v: 1.9, vt_lower_v: 1.4 },
        settings: settings(ESeries::E12, 1e3, 1e6),
        checks: r.checks,
        combinations: Some(hysteron_core::jobs::PartRange { start: 10, end: 10_000 }),
    };
    assert!(Running::start(bad).is_err());
}

