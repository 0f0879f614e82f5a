//! How the page reads a worker's answer to one kind of job, and merges a split job's answers.
//!
//! A worker sends its [`JobOutput`] as JSON together with the output's kind
//! ([`JobOutput::kind`]). Reading the whole [`JobOutput`] enum would put the JSON reading code of
//! every study's result into whatever part of the page starts any job; instead each place that
//! starts a job names the [`Answers`] for that job's kind (for instance
//! [`Answers::MONTE_CARLO`]), which reads only the kinds that job can give and merges with that
//! kind's own merge ([`crate::jobs::merge_monte_carlo`] …). A page built in pieces then carries a
//! study's result code in the study's piece. A kind the job cannot give is an error with a
//! message, never a guess.

use crate::error::DesignError;
use crate::job_rounds::{self, Gathered};
use crate::jobs::{self, Job, JobOutput};
use serde::de::DeserializeOwned;

/// Reads one output from its kind and JSON text (the text is the whole [`JobOutput`]: the
/// variant's fields with its `kind`).
pub type ReadOutput = fn(kind: &str, json: &str) -> Result<JobOutput, String>;

/// Merges the outputs of a job's parts (see [`crate::jobs::merge`]).
pub type MergeOutputs = fn(&Job, Vec<JobOutput>) -> Result<JobOutput, DesignError>;

/// A second round on the workers after the parts have answered (see [`crate::job_rounds`]).
#[derive(Clone, Copy)]
pub struct SecondRound {
    /// From the job, its parts' answers (in the order of [`crate::jobs::split`]) and the number of
    /// workers: the output, or the second round's jobs and what to keep meanwhile.
    pub gather: fn(&Job, Vec<JobOutput>, usize) -> Result<Gathered, DesignError>,
    /// From the job, the kept value and the second round's answers: the output.
    pub finish: fn(&Job, JobOutput, Vec<JobOutput>) -> Result<JobOutput, DesignError>,
}

/// What one kind of job answers, and how its parts' answers are put together.
#[derive(Clone, Copy)]
pub struct Answers {
    /// Reads one answer (of either round).
    pub read: ReadOutput,
    /// Merges the parts' answers, in the order of [`crate::jobs::split`] (where there is no second round).
    pub merge: MergeOutputs,
    /// A second round on the workers instead of the merge, for a kind whose merge is heavy work.
    pub second: Option<SecondRound>,
}

impl std::fmt::Debug for Answers {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Answers")
    }
}

/// The variant's fields read from `json`; the `kind` field beside them is ignored.
fn fields<T: DeserializeOwned>(json: &str) -> Result<T, String> {
    serde_json::from_str(json).map_err(|e| format!("the worker's result could not be read: {e}"))
}

fn unexpected(kind: &str, job: &str) -> String {
    format!("the worker answered a {job} with a result of another kind ({kind:?})")
}

/// Declares a reader: the output kinds one job can give, each with the variant that holds it; any
/// other kind is an error naming the job.
macro_rules! reader {
    ($name:ident, $job:literal, $($kind:literal => $variant:expr),+ $(,)?) => {
        fn $name(kind: &str, json: &str) -> Result<JobOutput, String> {
            match kind {
                $($kind => fields(json).map($variant),)+
                other => Err(unexpected(other, $job)),
            }
        }
    };
}

reader!(read_monte_carlo, "Monte Carlo run", "monte_carlo" => JobOutput::MonteCarlo, "monte_carlo_part" => JobOutput::MonteCarloPart, "monte_carlo_statistics" => JobOutput::MonteCarloStatistics);
reader!(read_worst_case, "worst case", "worst_case" => JobOutput::WorstCase);
reader!(read_windows, "field and bench window", "windows" => |w| JobOutput::Windows(Box::new(w)));
reader!(read_signal, "signal test", "signal" => |s| JobOutput::Signal(Box::new(s)), "sweep_part" => JobOutput::SweepPart);
reader!(read_sweep, "noise sweep", "sweep_part" => JobOutput::SweepPart);
reader!(read_capture, "file import", "capture" => JobOutput::Capture);
reader!(read_search, "standard-value search", "search" => JobOutput::Search, "search_part" => JobOutput::SearchPart);
reader!(read_oscillator, "oscillator simulation", "oscillator" => JobOutput::Oscillator);
reader!(read_debouncer, "debouncer simulation", "debouncer" => JobOutput::Debouncer);

impl Answers {
    /// [`Job::MonteCarlo`]: a whole run or the parts of a split one, whose statistics are then
    /// computed on the workers ([`crate::job_rounds`]).
    pub const MONTE_CARLO: Answers = Answers {
        read: read_monte_carlo,
        merge: jobs::merge_monte_carlo,
        second: Some(SecondRound { gather: job_rounds::gather_monte_carlo, finish: job_rounds::finish_monte_carlo }),
    };
    /// [`Job::WorstCase`] (never split).
    pub const WORST_CASE: Answers = Answers { read: read_worst_case, merge: jobs::merge_single, second: None };
    /// [`Job::Windows`] (never split).
    pub const WINDOWS: Answers = Answers { read: read_windows, merge: jobs::merge_single, second: None };
    /// [`Job::Signal`]: the main pass, and the sweep's parts when split.
    pub const SIGNAL: Answers = Answers { read: read_signal, merge: jobs::merge_signal, second: None };
    /// [`Job::NoiseSweep`]: its levels, in parts when split.
    pub const NOISE_SWEEP: Answers = Answers { read: read_sweep, merge: jobs::merge_sweep, second: None };
    /// [`Job::CsvImport`] (never split).
    pub const CAPTURE: Answers = Answers { read: read_capture, merge: jobs::merge_single, second: None };
    /// [`Job::Search`]: a whole search or the parts of a split one.
    pub const SEARCH: Answers = Answers { read: read_search, merge: jobs::merge_search, second: None };
    /// [`Job::Oscillator`] (never split).
    pub const OSCILLATOR: Answers = Answers { read: read_oscillator, merge: jobs::merge_single, second: None };
    /// [`Job::Debouncer`] (never split).
    pub const DEBOUNCER: Answers = Answers { read: read_debouncer, merge: jobs::merge_single, second: None };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::Running;

    fn run(job: Job) -> JobOutput {
        let mut r = Running::start(job).unwrap();
        while !r.progress().is_done() {
            r.step(1 << 20).unwrap();
        }
        r.finish().unwrap()
    }

    /// Every output's kind is the tag serde writes for it, and reading it back by kind gives the
    /// same output as reading the whole enum.
    #[test]
    fn an_answer_read_by_kind_equals_the_whole_enum_read() {
        let record = crate::catalog::demos().into_iter().next().expect("a demo").record();
        let circuit = record.circuit.clone();
        let mut settings = crate::tolerance::ToleranceSettings::default();
        settings.monte_carlo.trials = 200;
        let cases = [
            (Job::MonteCarlo { circuit: circuit.clone(), settings: settings.clone(), trials: None }, Answers::MONTE_CARLO),
            (
                Job::MonteCarlo { circuit: circuit.clone(), settings: settings.clone(), trials: Some(jobs::PartRange { start: 0, end: 50 }) },
                Answers::MONTE_CARLO,
            ),
            (Job::WorstCase { circuit: circuit.clone(), settings: settings.clone() }, Answers::WORST_CASE),
        ];
        for (job, answers) in cases {
            let out = run(job);
            let json = serde_json::to_string(&out).unwrap();
            let tag: serde_json::Value = serde_json::from_str(&json).unwrap();
            assert_eq!(tag["kind"], out.kind(), "kind() is the serde tag");
            let by_kind = (answers.read)(out.kind(), &json).unwrap();
            let whole: JobOutput = serde_json::from_str(&json).unwrap();
            assert_eq!(by_kind, whole);
        }
    }

    #[test]
    fn an_answer_of_another_kind_is_an_error_that_says_so() {
        let e = (Answers::WINDOWS.read)("monte_carlo", "{}").unwrap_err();
        assert!(e.contains("another kind") && e.contains("monte_carlo"), "{e}");
        let e = (Answers::SEARCH.read)("search", "{\"kind\":\"search\"").unwrap_err();
        assert!(e.contains("could not be read"), "{e}");
    }
}
