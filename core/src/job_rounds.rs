//! A second round for a split job whose merge is itself heavy work: the Monte Carlo's statistics.
//!
//! A Monte Carlo split over N workers ([`crate::jobs::split`]) comes back as N parts of raw trial
//! values. Merging them and computing the four figures' statistics (two passes over every value
//! and an order-statistic selection per figure) took 8–18 ms of a 100,000-trial run on the page's
//! size-tuned module, after the workers had finished (a job timeline in headless Chromium on a
//! 2-core machine). [`gather_monte_carlo`] instead merges the parts and hands the statistics back to
//! the workers as [`Job::MonteCarloStatistics`] jobs, the four figures dealt round the workers
//! (figure *k* to worker *k* mod W, W at most 4); [`finish_monte_carlo`] puts their answers together.
//!
//! **Identical to one run.** A figure's statistics are computed by [`figure_statistics`] over all
//! the valid trials in trial order, on whichever worker, exactly as [`MonteCarloRun::finish`]
//! computes them; the counts (rejected trials, yield, spec violations) are sums of integers. So
//! the two rounds give the result one thread gives for the same seed, bit for bit (tested below
//! and in `tests/tests/jobs_split.rs`).

use crate::error::DesignError;
use crate::jobs::{Job, JobOutput};
pub use crate::tolerance::sample_statistics::FiguresPart;
use crate::tolerance::monte_carlo::{MonteCarloPartial, MonteCarloRun, SampleStatistics};
use crate::tolerance::Figure;

/// What the first round's outputs lead to.
#[derive(Debug, Clone, PartialEq)]
pub enum Gathered {
    /// The job's output: nothing more to run.
    Done(JobOutput),
    /// Run `jobs` (one per worker) and give their outputs, with `kept`, to the finishing step.
    Again {
        /// What the finishing step needs from the first round (the counts; the arrays left out).
        kept: JobOutput,
        /// The second round's jobs.
        jobs: Vec<Job>,
    },
}

fn invalid(reason: impl Into<String>) -> DesignError {
    DesignError::Parameter { reason: reason.into() }
}

fn other_output() -> DesignError {
    invalid("a Monte Carlo job got another job's output")
}

/// The first round of a split Monte Carlo (`job` as the page started it, `outputs` its parts'
/// outputs in order) merged, and the four figures' statistics dealt to at most `workers` (and at
/// most 4) statistics jobs. A whole run's output (a job that was not split) is [`Gathered::Done`].
pub fn gather_monte_carlo(job: &Job, outputs: Vec<JobOutput>, workers: usize) -> Result<Gathered, DesignError> {
    let Job::MonteCarlo { circuit, settings, trials: None } = job else {
        return Err(invalid("only a whole Monte Carlo run is gathered in two rounds"));
    };
    let mut it = outputs.into_iter();
    let mut acc = match it.next() {
        Some(JobOutput::MonteCarloPart(p)) => p,
        Some(whole @ JobOutput::MonteCarlo(_)) => return Ok(Gathered::Done(whole)),
        Some(_) => return Err(other_output()),
        None => return Err(invalid("no part outputs to merge: run the parts first")),
    };
    for o in it {
        match o {
            JobOutput::MonteCarloPart(p) => acc.merge(p)?,
            _ => return Err(other_output()),
        }
    }
    let run = MonteCarloRun::new(circuit, settings)?;
    run.check_complete(&acc)?;
    let w = workers.clamp(1, Figure::ALL.len());
    let upper = std::mem::take(&mut acc.vt_upper_v);
    let lower = std::mem::take(&mut acc.vt_lower_v);
    let jobs = (0..w)
        .map(|k| Job::MonteCarloStatistics {
            values: MonteCarloPartial {
                vt_upper_v: upper.clone(),
                vt_lower_v: lower.clone(),
                ..acc.clone()
            },
            figures: Figure::ALL.iter().copied().skip(k).step_by(w).collect(),
            bins: run.bins(),
        })
        .collect();
    Ok(Gathered::Again { kept: JobOutput::MonteCarloPart(acc), jobs })
}

/// The second round's outputs (one [`FiguresPart`] each, in any order) and the kept counts, put
/// together into the run's result. Refuses a figure missing or given twice.
pub fn finish_monte_carlo(job: &Job, kept: JobOutput, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    let Job::MonteCarlo { circuit, settings, trials: None } = job else {
        return Err(invalid("only a whole Monte Carlo run is gathered in two rounds"));
    };
    let JobOutput::MonteCarloPart(counts) = kept else { return Err(other_output()) };
    let mut found: [Option<SampleStatistics>; 4] = Default::default();
    for o in outputs {
        let JobOutput::MonteCarloStatistics(part) = o else { return Err(other_output()) };
        if part.figures.len() != part.statistics.len() {
            return Err(invalid("a statistics answer does not give one result per figure"));
        }
        for (f, st) in part.figures.into_iter().zip(part.statistics) {
            let slot = &mut found[f.index()];
            if slot.replace(st).is_some() {
                return Err(invalid(format!("the statistics of {f:?} came twice")));
            }
        }
    }
    let [Some(a), Some(b), Some(c), Some(d)] = found else {
        return Err(invalid("a figure's statistics are missing: every figure must be computed"));
    };
    // Every figure's statistics must be over exactly the valid trials the counts give.
    let valid = counts.trials_done().saturating_sub(counts.rejected_trials);
    for st in [&a, &b, &c, &d] {
        let n: u64 = st.histogram.counts.iter().sum();
        if n != valid {
            return Err(invalid(format!(
                "the statistics cover {n} trials but the run has {valid} valid ones: run the study again"
            )));
        }
    }
    let run = MonteCarloRun::new(circuit, settings)?;
    Ok(JobOutput::MonteCarlo(run.assemble(&counts, [a, b, c, d])))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::{split, Running};

    fn run_to_end(job: Job) -> JobOutput {
        let mut r = Running::start(job).unwrap();
        while !r.progress().is_done() {
            r.step(7_777).unwrap();
        }
        r.finish().unwrap()
    }

    fn demo_job(trials: u64, seed: u64) -> Job {
        let record = crate::catalog::demos().into_iter().next().expect("a demo").record();
        let mut settings = record.tolerance.clone().unwrap_or_default();
        settings.monte_carlo.trials = trials;
        settings.monte_carlo.seed = seed;
        Job::MonteCarlo { circuit: record.circuit, settings, trials: None }
    }

    /// The second round as the page runs it: the parts' arrays never enter the page's memory;
    /// they are forwarded, pair by pair in part order, to each statistics job.
    fn forwarded(job: &Job, mut outputs: Vec<JobOutput>, workers: usize) -> JobOutput {
        let pairs: Vec<Vec<f64>> = outputs.iter_mut().flat_map(|o| o.take_arrays()).collect();
        match gather_monte_carlo(job, outputs, workers).unwrap() {
            Gathered::Done(mut o) => {
                o.put_arrays(pairs).unwrap();
                o
            }
            Gathered::Again { kept, jobs } => {
                let answers = jobs
                    .into_iter()
                    .map(|mut j| {
                        assert!(j.take_arrays().iter().all(|a| a.is_empty()), "the page holds no values");
                        let mut j: Job = serde_json::from_str(&serde_json::to_string(&j).unwrap()).unwrap();
                        j.put_arrays(pairs.clone()).unwrap();
                        run_to_end(j)
                    })
                    .collect();
                finish_monte_carlo(job, kept, answers).unwrap()
            }
        }
    }

    /// Two rounds (parts, then statistics jobs, each through JSON and the array transport as the
    /// workers get them; the values kept in the gathered jobs, or forwarded as the page does)
    /// against one whole run, for 1 to 8 parts and 1 to 6 statistics workers.
    #[test]
    fn two_rounds_equal_one_run() {
        for (trials, seed) in [(2_000, 7), (5_003, 99)] {
            let job = demo_job(trials, seed);
            let whole = run_to_end(job.clone());
            for parts in [1, 2, 3, 8] {
                let outputs: Vec<_> = split(&job, parts).unwrap().into_iter().map(run_to_end).collect();
                for workers in [1, 2, 3, 4, 6] {
                    let got = match gather_monte_carlo(&job, outputs.clone(), workers).unwrap() {
                        Gathered::Done(o) => o,
                        Gathered::Again { kept, jobs } => {
                            assert_eq!(jobs.len(), workers.min(4));
                            let answers = jobs
                                .into_iter()
                                .rev()
                                .map(|mut j| {
                                    let arrays = j.take_arrays();
                                    let mut j: Job = serde_json::from_str(&serde_json::to_string(&j).unwrap()).unwrap();
                                    j.put_arrays(arrays).unwrap();
                                    run_to_end(j)
                                })
                                .collect();
                            finish_monte_carlo(&job, kept, answers).unwrap()
                        }
                    };
                    assert_eq!(got, whole, "{trials} trials, {parts} parts, {workers} workers");
                    assert_eq!(forwarded(&job, outputs.clone(), workers), whole, "forwarded: {trials} trials, {parts} parts, {workers} workers");
                }
            }
        }
    }

    /// A part's arrays that do not match its counts, or a run finished without its values, is refused.
    #[test]
    fn values_that_do_not_match_the_counts_are_refused() {
        let job = demo_job(1_000, 5);
        let mut outputs: Vec<_> = split(&job, 2).unwrap().into_iter().map(run_to_end).collect();
        if let JobOutput::MonteCarloPart(p) = &mut outputs[1] {
            p.vt_upper_v.pop();
        }
        assert!(gather_monte_carlo(&job, outputs, 2).unwrap_err().to_string().contains("do not match"));
        let Job::MonteCarlo { circuit, settings, .. } = &job else { unreachable!() };
        let run = MonteCarloRun::new(circuit, settings).unwrap();
        let mut all = run.run(0, run.trials()).unwrap();
        all.vt_upper_v.clear();
        all.vt_lower_v.clear();
        assert!(run.finish(&all).unwrap_err().to_string().contains("taken out"));
    }

    #[test]
    fn a_missing_or_doubled_figure_is_refused() {
        let job = demo_job(1_000, 3);
        let outputs = split(&job, 2).unwrap().into_iter().map(run_to_end).collect();
        let Gathered::Again { kept, jobs } = gather_monte_carlo(&job, outputs, 2).unwrap() else { panic!("split run") };
        let answers: Vec<_> = jobs.into_iter().map(run_to_end).collect();
        let missing = finish_monte_carlo(&job, kept.clone(), answers[..1].to_vec()).unwrap_err();
        assert!(missing.to_string().contains("missing"), "{missing}");
        let doubled = finish_monte_carlo(&job, kept.clone(), vec![answers[0].clone(), answers[0].clone(), answers[1].clone()]).unwrap_err();
        assert!(doubled.to_string().contains("twice"), "{doubled}");
        // Statistics over fewer values than the counts' valid trials (a piece of the values lost
        // on the way) are refused, not shown.
        let Job::MonteCarloStatistics { mut values, figures, bins } = jobs_again(&job).remove(0) else { panic!("a statistics job") };
        values.vt_upper_v.truncate(values.vt_upper_v.len() - 1);
        values.vt_lower_v.truncate(values.vt_lower_v.len() - 1);
        let short = run_to_end(Job::MonteCarloStatistics { values, figures, bins });
        let short = finish_monte_carlo(&job, kept, vec![short, answers[1].clone()]).unwrap_err();
        assert!(short.to_string().contains("valid ones"), "{short}");
    }

    /// The statistics jobs of a two-part run of `job`, values kept in them.
    fn jobs_again(job: &Job) -> Vec<Job> {
        let outputs = split(job, 2).unwrap().into_iter().map(run_to_end).collect();
        match gather_monte_carlo(job, outputs, 2).unwrap() {
            Gathered::Again { jobs, .. } => jobs,
            Gathered::Done(_) => panic!("a split run gathers into jobs"),
        }
    }

    #[test]
    fn a_statistics_job_that_cannot_give_a_result_is_refused() {
        let values = |u: usize, l: usize| MonteCarloPartial {
            start: 0,
            end: u as u64,
            vt_upper_v: vec![1.0; u],
            vt_lower_v: vec![0.5; l],
            rejected_trials: 0,
            inside_spec: 0,
            spec_violations: [0; 8],
        };
        let start = |values, figures: Vec<Figure>, bins| Running::start(Job::MonteCarloStatistics { values, figures, bins }).err();
        assert!(start(values(10, 9), vec![Figure::VtUpper], 10).is_some());
        assert!(start(values(1, 1), vec![Figure::VtUpper], 10).is_some());
        assert!(start(values(10, 10), vec![], 10).is_some());
        assert!(start(values(10, 10), vec![Figure::VtUpper], 0).is_some());
        assert!(start(values(10, 10), vec![Figure::VtUpper], 1001).is_some());
        assert!(start(values(10, 10), vec![Figure::Centre], 1000).is_none());
    }
}
