//! A second round for a split job whose merge is itself heavy work: the Monte Carlo's statistics.
//!
//! A Monte Carlo split over N workers ([`crate::jobs::split`]) comes back as N parts of raw trial
//! values. Merging them and computing the four figures' statistics (two passes over every value
//! and an order-statistic selection per figure) took 8–18 ms of a 100,000-trial run on the page's
//! size-tuned module, after the workers had finished (a job timeline in headless Chromium on a
//! 2-core machine). [`gather_monte_carlo`] instead merges the parts and hands the statistics back to
//! the workers as [`Job::MonteCarloStatistics`] jobs, the four figures dealt round the workers
//! (figure *k* to worker *k* mod W, W at most 4); [`finish_monte_carlo`] puts their answers together.
//! Each part gives its values as one array per figure (VT+, VT−, and the hysteresis and centre
//! derived on its worker), and each figure goes to one statistics job: the page forwards every
//! array as it is ([`forwarded_arrays`]). Copying the two arrays for a second statistics worker on
//! the page took 1–6 ms of a 100,000-trial run (job timelines, headless Chromium, 2 cores).
//!
//! **Identical to one run.** A figure's statistics are computed by [`figure_statistics`] over all
//! the valid trials in trial order, on whichever worker, exactly as [`MonteCarloRun::finish`]
//! computes them; the counts (rejected trials, yield, spec violations) are sums of integers. So
//! the two rounds give the result one thread gives for the same seed, bit for bit (tested below
//! and in `tests/tests/jobs_split.rs`).

use crate::error::DesignError;
use crate::jobs::{merge_monte_carlo_parts, Job, JobOutput};
pub use crate::tolerance::sample_statistics::FiguresPart;
use crate::tolerance::monte_carlo::{MonteCarloRun, SampleStatistics};
use crate::tolerance::sample_statistics::figure_array;
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
    let mut acc = match merge_monte_carlo_parts(outputs)? {
        Ok(acc) => acc,
        Err(whole) => return Ok(Gathered::Done(whole)),
    };
    let run = MonteCarloRun::new(circuit, settings)?;
    run.check_complete(&acc)?;
    let w = workers.clamp(1, Figure::ALL.len());
    // Each figure's values (none when the parts' arrays were taken out to be forwarded).
    let upper = std::mem::take(&mut acc.vt_upper_v);
    let lower = std::mem::take(&mut acc.vt_lower_v);
    let mut arrays = Figure::ALL.map(|f| match f {
        Figure::VtUpper | Figure::VtLower => Vec::new(),
        derived => figure_array(derived, &upper, &lower),
    });
    [arrays[0], arrays[1]] = [upper, lower];
    let jobs = (0..w)
        .map(|k| {
            let figures: Vec<Figure> = Figure::ALL.iter().copied().skip(k).step_by(w).collect();
            Job::MonteCarloStatistics {
                figure_values: figures.iter().map(|f| std::mem::take(&mut arrays[f.index()])).collect(),
                figures,
                bins: run.bins(),
            }
        })
        .collect();
    Ok(Gathered::Again { kept: JobOutput::MonteCarloPart(acc), jobs })
}

/// Which of each first-round part's arrays (as [`JobOutput::take_arrays`] gives them) a
/// second-round job takes, in order: the page sends it, for each index listed, that array of every
/// part in part order ([`Job::put_arrays`] joins them). Each index is listed by one job of a round
/// only, so the page hands every array on as it is, without a copy. Empty for other jobs.
pub fn forwarded_arrays(job: &Job) -> Vec<usize> {
    match job {
        Job::MonteCarloStatistics { figures, .. } => figures.iter().map(|f| f.index()).collect(),
        _ => Vec::new(),
    }
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
    /// each is forwarded, once, to the statistics job that lists it ([`forwarded_arrays`]).
    fn forwarded(job: &Job, mut outputs: Vec<JobOutput>, workers: usize) -> JobOutput {
        let mut per_part: Vec<Vec<Option<Vec<f64>>>> =
            outputs.iter_mut().map(|o| o.take_arrays().into_iter().map(Some).collect()).collect();
        match gather_monte_carlo(job, outputs, workers).unwrap() {
            Gathered::Done(mut o) => {
                o.put_arrays(per_part.into_iter().flatten().flatten().collect()).unwrap();
                o
            }
            Gathered::Again { kept, jobs } => {
                let answers = jobs
                    .into_iter()
                    .map(|mut j| {
                        assert!(j.take_arrays().iter().all(|a| a.is_empty()), "the page holds no values");
                        let mut j: Job = serde_json::from_str(&serde_json::to_string(&j).unwrap()).unwrap();
                        let arrays = forwarded_arrays(&j)
                            .into_iter()
                            .flat_map(|k| per_part.iter_mut().map(move |p| p[k].take().expect("each array forwarded once")).collect::<Vec<_>>())
                            .collect();
                        j.put_arrays(arrays).unwrap();
                        run_to_end(j)
                    })
                    .collect();
                assert!(per_part.iter().flatten().all(Option::is_none), "every array forwarded");
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
        let Job::MonteCarloStatistics { mut figure_values, figures, bins } = jobs_again(&job).remove(0) else { panic!("a statistics job") };
        for v in &mut figure_values {
            v.pop();
        }
        let short = run_to_end(Job::MonteCarloStatistics { figure_values, figures, bins });
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
        use Figure::{Centre, Hysteresis, VtUpper};
        let values = |lengths: &[usize]| lengths.iter().map(|&n| vec![1.0; n]).collect::<Vec<_>>();
        let start = |figure_values, figures: Vec<Figure>, bins| {
            Running::start(Job::MonteCarloStatistics { figure_values, figures, bins }).err().map(|e| e.to_string())
        };
        let refusals = [
            start(values(&[10, 9]), vec![VtUpper, Centre], 10),
            start(values(&[1]), vec![VtUpper], 10),
            start(values(&[]), vec![], 10),
            start(values(&[10]), vec![VtUpper], 0),
            start(values(&[10]), vec![VtUpper], 1001),
            start(values(&[10, 10]), vec![VtUpper], 10),
            start(values(&[10, 10]), vec![Centre, Centre], 10),
        ];
        for (i, r) in refusals.iter().enumerate() {
            assert!(r.is_some(), "case {i} refused");
        }
        assert!(start(values(&[10, 10]), vec![Centre, Hysteresis], 1000).is_none());
        // Pieces that cannot be shared out evenly among the figures are refused with words.
        let mut j = Job::MonteCarloStatistics { figure_values: vec![], figures: vec![VtUpper, Centre], bins: 10 };
        let e = j.put_arrays(values(&[5, 5, 5])).unwrap_err().to_string();
        assert!(e.contains("same number of pieces"), "{e}");
        assert!(j.put_arrays(values(&[5, 6, 5, 5])).is_ok());
        let Job::MonteCarloStatistics { figure_values, .. } = &j else { unreachable!() };
        assert_eq!(figure_values.iter().map(Vec::len).collect::<Vec<_>>(), [11, 10]);
    }

    /// A part's arrays: one per figure, the derived ones computed from its VT+ and VT− exactly as
    /// the statistics derive them; arrays that do not pair up are refused.
    #[test]
    fn a_part_gives_one_array_per_figure() {
        let job = demo_job(500, 11);
        let mut part = split(&job, 2).unwrap().into_iter().map(run_to_end).next().unwrap();
        let JobOutput::MonteCarloPart(p) = part.clone() else { panic!("a part") };
        let arrays = part.take_arrays();
        assert_eq!(arrays.len(), 4);
        for (k, f) in Figure::ALL.iter().enumerate() {
            let direct: Vec<f64> = p.vt_upper_v.iter().zip(&p.vt_lower_v).map(|(&u, &l)| crate::tolerance::sample_statistics::figure_value(*f, u, l)).collect();
            assert_eq!(arrays[k].iter().map(|x| x.to_bits()).collect::<Vec<_>>(), direct.iter().map(|x| x.to_bits()).collect::<Vec<_>>(), "{f:?}");
        }
        let mut back = part.clone();
        back.put_arrays(arrays.clone()).unwrap();
        assert_eq!(back, JobOutput::MonteCarloPart(p));
        let mut short = arrays.clone();
        short[3].pop();
        assert!(part.clone().put_arrays(short).unwrap_err().to_string().contains("do not pair up"));
        assert!(part.put_arrays(arrays[..2].to_vec()).is_err(), "the derived arrays are part of the answer");
    }
}
