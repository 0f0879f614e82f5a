//! Long studies as plain, serializable jobs that run in slices: the page hands a [`Job`] to a web
//! worker (or runs it in slices on its own thread), the worker calls [`Running::step`] with a work
//! budget until it is done, posting [`Progress`] between slices, and sends back the [`JobOutput`].
//! Nothing here knows of workers, threads or clocks; the same code runs natively in the tests.
//!
//! **Work bound before the start.** [`Running::start`] validates the job and returns its total work
//! in [`Progress::total`] (units named by [`Running::unit`]: trials, circuit evaluations, sample passes or bytes)
//! before any of it is done, so the page can announce the size of a study and, after the first
//! slice, a time estimate from the measured rate.
//!
//! **Slices.** `step(budget)` does at least one unit and stops once `budget` units are done in that
//! call; a unit that cannot be cut (the signal study's main pass, the worst case's conclusion —
//! the search inside the bands after every corner —, a simulation of the oscillator or debouncer)
//! is done in one step, and counts for its weight. The worst case's corners go in slices of corner
//! indices ([`crate::tolerance::worst_case::WorstCaseRun`]), merged in order so that the result
//! equals one pass.
//!
//! **Splitting over N workers, identical to one run.** [`split`] cuts a Monte Carlo job into N
//! consecutive trial ranges and a noise sweep into N consecutive level ranges; [`merge`] puts the
//! parts' outputs back together in order. The result is bit-identical to one run with the same
//! seed because nothing depends on which worker ran what:
//! - Monte Carlo: each trial has its own generator, seeded from the run's seed and the trial index
//!   (xoshiro256++ through SplitMix64 with `key ^ index`, `key` the first output of a generator
//!   seeded with the run's seed; see [`crate::tolerance::monte_carlo`]). A part covering trials
//!   `[a, b)` draws exactly the numbers trials a…b−1 draw in a single run; the parts' values are
//!   concatenated in trial order before the statistics, which are then computed once.
//! - Noise sweep: the sweep noise is generated once at 1 V RMS from the signal's seed and scaled
//!   for each level (common random numbers, [`crate::signal::sweep`]); every part regenerates the
//!   same unit noise from the same seed, so a level's point depends only on its index. Through an
//!   input network every part carries the same front end ([`Job::NoiseSweep`]'s `front`), and
//!   adds the noise to the signal regenerated before the network, as one run does.
//!
//! **Large arrays.** [`JobOutput::take_arrays`] and [`JobOutput::put_arrays`] (and the same on
//! [`Job`]) move the big sample vectors out of a value and back in, so a transport can send them as
//! binary arrays and the rest as JSON; take, serialise, deserialise and put gives the value back.
//!
//! - Standard-value search: the combinations of the enumerated resistors are numbered in
//!   enumeration order and cut into consecutive ranges ([`crate::search::SearchJob::parts`]); each
//!   part lists its own best combinations and the merge offers the parts' lists in range order to
//!   one list by the single run's rules ([`crate::search::SearchJob::merge`]). That is exact only
//!   without the distinct rule (see "Split over workers" in [`crate::search`]), so a search with
//!   it (the default) is not split and runs whole on one worker. Progress counts combinations of
//!   the enumerated resistors.

use crate::error::DesignError;
use crate::signal::csv::{Capture, CsvOptions, CsvParser};
use crate::signal::debounce::{simulate_debounce, DebounceSettings, DebounceSimulation};
use crate::signal::oscillator::{simulate_oscillator, OscillatorSettings, OscillatorSimulation};
use crate::signal::report::{SignalRun, SignalSettings, SignalSource};
use crate::signal::sweep::{finish_sweep, SweepContext, SweepPoint, SweepRunner, SweepSettings};
use crate::signal::trigger::{default_match_window_s, Edge, TimingModel, TriggerDesign};
use crate::signal::TimeBase;
use crate::tolerance::monte_carlo::{MonteCarloPartial, MonteCarloResult, MonteCarloRun};
use crate::tolerance::sample_statistics::{check_statistics_inputs, figure_array, value_statistics, FiguresPart};
use crate::tolerance::Figure;
use crate::tolerance::worst_case::{CornerScan, WorstCase, WorstCaseRun, SEARCH_GRID};
use crate::tolerance::bench_window::{bench_window, BenchWindow, Windows};
use crate::tolerance::ToleranceSettings;
use crate::record::DesignRecord;
use crate::analysis::{CheckSettings, Thresholds};
use crate::search::{SearchJob, SearchReport, SearchSettings};
use crate::topology::Topology;
use serde::{Deserialize, Serialize};

/// Consecutive indices `[start, end)` of a job's trials or sweep levels: one part of a split job.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct PartRange {
    /// First index covered.
    pub start: u64,
    /// One past the last index covered.
    pub end: u64,
}

/// A long study, as plain data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Job {
    /// Monte Carlo of a circuit; `trials` limits it to a part of the run (see [`split`]).
    MonteCarlo {
        /// The circuit.
        circuit: Topology,
        /// Bands, trials, seed, spec window.
        settings: ToleranceSettings,
        /// The part of the run; `None`: the whole run.
        trials: Option<PartRange>,
    },
    /// Worst case (all corners up to the settings' corner limit, else the sensitivity signs).
    WorstCase {
        /// The circuit.
        circuit: Topology,
        /// Bands and corner limit.
        settings: ToleranceSettings,
    },
    /// The field window and the bench window at each supply the bench procedure sets, of a
    /// record (equal to `overview::record_windows`): one worst case after the other.
    Windows {
        /// The design.
        record: Box<DesignRecord>,
    },
    /// The signal study with its noise sweep (when the settings ask for one), with waveforms for
    /// display reduced to at most `display_points` points (see [`reduce_for_display`]).
    Signal {
        /// The design's thresholds and output levels.
        design: TriggerDesign,
        /// The study's settings.
        settings: SignalSettings,
        /// An imported capture (its arrays travel apart, see [`Job::take_arrays`]).
        capture: Option<Capture>,
        /// Largest number of points kept per waveform.
        display_points: usize,
        /// The design's output dynamics: the simulated output is then the output at the load
        /// (slew- and RC-limited, [`crate::signal::output_edges`]); `None`: the ideal output.
        #[serde(default)]
        output: Option<Box<crate::output_dynamics::OutputDynamicsReport>>,
        /// The input network's clamp and filter applied to the samples before the trigger
        /// (`design` then holds the field-terminal thresholds; see
        /// [`crate::input_network::from_record::signal_design`]); `None`: the signal reaches the pin as it is.
        #[serde(default)]
        front: Option<crate::input_network::noise::FrontEnd>,
    },
    /// Some levels of the noise sweep alone (a part of a split sweep).
    NoiseSweep {
        /// The design.
        design: TriggerDesign,
        /// The study's settings (its `sweep` must be set).
        settings: SignalSettings,
        /// The levels to run; `None`: all.
        levels: Option<PartRange>,
        /// The input network's clamp and filter (see [`Job::Signal`]): each level's samples pass
        /// it before the trigger, as in the whole study; `None`: no network.
        #[serde(default)]
        front: Option<crate::input_network::noise::FrontEnd>,
    },
    /// Reading a CSV capture.
    CsvImport {
        /// The file's text.
        text: String,
        /// Columns, separators, header mode.
        options: CsvOptions,
    },
    /// The standard-value search (`crate::search`) from a starting circuit; `combinations` limits
    /// it to a part of the enumeration (see [`split`]).
    Search {
        /// The starting design (its resistor values only break near-ties).
        circuit: Topology,
        /// The thresholds aimed at.
        targets: Thresholds,
        /// Series, range, list length, current budget.
        settings: SearchSettings,
        /// The design's check settings (for the current budget's analysis).
        checks: CheckSettings,
        /// The part of the enumeration; `None`: all of it.
        combinations: Option<PartRange>,
    },
    /// Time-domain simulation of the relaxation oscillator.
    Oscillator {
        /// The design.
        design: TriggerDesign,
        /// The oscillator's settings.
        settings: OscillatorSettings,
        /// Cycles to simulate.
        cycles: usize,
    },
    /// Time-domain simulation of the RC debouncer.
    Debouncer {
        /// The design.
        design: TriggerDesign,
        /// The debouncer's settings.
        settings: DebounceSettings,
    },
    /// The statistics of some figures of a complete Monte Carlo run (the second round of a split
    /// run, see `crate::job_rounds`).
    MonteCarloStatistics {
        /// Each figure's values over the whole run's valid trials, in trial order, one array per
        /// figure in `figures` order (see `tolerance::sample_statistics::figure_array`; the arrays
        /// travel apart, see [`Job::take_arrays`]).
        figure_values: Vec<Vec<f64>>,
        /// The figures to compute, each once.
        figures: Vec<Figure>,
        /// Histogram bins per figure.
        bins: usize,
    },
}

/// The points of a part of a noise sweep.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepPart {
    /// First level covered.
    pub start: u64,
    /// One past the last level covered.
    pub end: u64,
    /// One point per level, in level order.
    pub points: Vec<SweepPoint>,
}

/// What a job produces.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum JobOutput {
    /// A whole Monte Carlo run.
    MonteCarlo(MonteCarloResult),
    /// A part of a Monte Carlo run (merge the parts with [`merge`]).
    MonteCarloPart(MonteCarloPartial),
    /// The worst case.
    WorstCase(WorstCase),
    /// The field and bench windows.
    Windows(Box<Windows>),
    /// The signal study.
    Signal(Box<SignalRun>),
    /// A part of a noise sweep.
    SweepPart(SweepPart),
    /// The imported capture.
    Capture(Capture),
    /// The standard-value search's report.
    Search(SearchReport),
    /// The report of a part of a split search (merge the parts with [`merge`]).
    SearchPart(SearchReport),
    /// The oscillator simulation.
    Oscillator(OscillatorSimulation),
    /// The debouncer simulation.
    Debouncer(DebounceSimulation),
    /// Some figures' statistics of a Monte Carlo run.
    MonteCarloStatistics(FiguresPart),
}

/// How far a job is, in its own units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Progress {
    /// Units done.
    pub done: u64,
    /// Units in all (known before the first step).
    pub total: u64,
}

impl Progress {
    /// Whether the work is complete.
    pub fn is_done(&self) -> bool {
        self.done >= self.total
    }

    /// Fraction done, 0 to 1.
    pub fn fraction(&self) -> f64 {
        if self.total == 0 {
            1.0
        } else {
            (self.done as f64 / self.total as f64).min(1.0)
        }
    }
}

/// The signal study's main pass (generation, the design's and the comparator's triggers on the
/// noisy and the noise-free signal, the minimum-hysteresis check) weighs about this many sweep
/// levels (each level is two trigger passes; measured natively, common practice for a progress bar).
const STUDY_WEIGHT: u64 = 4;

/// What the worst case's conclusion (the search inside the bands from each of the 8 extremes, one
/// grid sweep over each varied parameter when the figures are monotonic) counts for in progress,
/// in circuit evaluations like each corner.
fn conclusion_weight(varied: usize) -> u64 {
    8 * (varied as u64).max(1) * (SEARCH_GRID as u64 + 1)
}

/// Points kept per waveform for display when a job does not say (a 10 M-sample study comes back as
/// 400,000 points: min and max of every 50 samples).
pub const DEFAULT_DISPLAY_POINTS: usize = 400_000;

enum State {
    MonteCarlo {
        run: Box<MonteCarloRun<Topology>>,
        range: PartRange,
        whole: bool,
        acc: MonteCarloPartial,
    },
    WorstCase {
        run: Box<WorstCaseRun<Topology>>,
        scan: CornerScan,
        out: Option<WorstCase>,
    },
    Windows {
        record: Box<DesignRecord>,
        settings: Box<ToleranceSettings>,
        supplies: Vec<f64>,
        field: Option<WorstCase>,
        bench: Vec<BenchWindow>,
    },
    Signal(Box<SignalState>),
    Csv {
        text: String,
        at: usize,
        parser: Option<Box<CsvParser>>,
        out: Option<Capture>,
    },
    Oscillator {
        design: TriggerDesign,
        settings: OscillatorSettings,
        cycles: usize,
        out: Option<OscillatorSimulation>,
    },
    Search {
        job: Box<SearchJob<Topology>>,
        whole: bool,
    },
    Debouncer {
        design: TriggerDesign,
        settings: DebounceSettings,
        out: Option<DebounceSimulation>,
    },
    Statistics {
        figure_values: Vec<Vec<f64>>,
        figures: Vec<Figure>,
        bins: usize,
        out: Option<FiguresPart>,
    },
}

struct SignalState {
    design: TriggerDesign,
    settings: SignalSettings,
    capture: Option<Capture>,
    display_points: usize,
    /// Output dynamics for the design's simulated output, see [`Job::Signal`].
    output: Option<Box<crate::output_dynamics::OutputDynamicsReport>>,
    /// The input network's front end, see [`Job::Signal`].
    front: Option<crate::input_network::noise::FrontEnd>,
    /// Whether the study's main pass (and the report) is wanted, or only sweep levels.
    study: bool,
    run: Option<SignalRun>,
    sweep: Option<(SweepSettings, SweepRunner)>,
    levels: PartRange,
    points: Vec<SweepPoint>,
    /// The sweep's base before the input network (the generated signal, regenerated from its
    /// seed), when there is a network: the sweep noise is added before the clamp and filter.
    raw_base: Option<Vec<f64>>,
    scratch_v: Vec<f64>,
    edges: Vec<Edge>,
    samples: u64,
}

/// A job being run in slices.
pub struct Running {
    state: State,
    progress: Progress,
}

fn invalid(reason: impl Into<String>) -> DesignError {
    DesignError::Parameter {
        reason: reason.into(),
    }
}

/// Samples of a signal study (the capture's, or the generated signal's).
fn signal_samples(
    settings: &SignalSettings,
    capture: Option<&Capture>,
) -> Result<u64, DesignError> {
    Ok(match capture {
        Some(c) => c.volts.len() as u64,
        None => settings.definition.validate()? as u64,
    })
}

/// Number of sweep levels the settings ask for (0 without a sweep or for a capture).
fn sweep_level_count(
    design: &TriggerDesign,
    settings: &SignalSettings,
    capture: bool,
) -> Result<u64, DesignError> {
    match (&settings.sweep, capture) {
        (Some(sw), false) => Ok(crate::signal::sweep::sweep_levels(
            sw,
            design.thresholds.hysteresis_v(),
        )?
        .len() as u64),
        _ => Ok(0),
    }
}

impl Running {
    /// Validates the job and prepares it; nothing of the work is done yet. The returned job's
    /// [`Running::progress`] carries the total work.
    pub fn start(job: Job) -> Result<Running, DesignError> {
        let (state, total) = match job {
            Job::MonteCarlo {
                circuit,
                settings,
                trials,
            } => {
                let run = MonteCarloRun::new(&circuit, &settings)?;
                let whole = trials.is_none();
                let range = trials.unwrap_or(PartRange {
                    start: 0,
                    end: run.trials(),
                });
                if range.start > range.end || range.end > run.trials() {
                    return Err(invalid(format!(
                        "Monte Carlo part {}..{} is not inside 0..{}: split the run with jobs::split",
                        range.start,
                        range.end,
                        run.trials()
                    )));
                }
                let acc = run.run(range.start, range.start)?;
                (
                    State::MonteCarlo {
                        run: Box::new(run),
                        range,
                        whole,
                        acc,
                    },
                    range.end - range.start,
                )
            }
            Job::Search {
                circuit,
                targets,
                settings,
                checks,
                combinations,
            } => {
                let mut job = SearchJob::new(&circuit, targets, &settings, &checks)?;
                if let Some(r) = combinations {
                    job = job.restrict(r.start, r.end)?;
                }
                let total = job.progress().combinations;
                (
                    State::Search {
                        job: Box::new(job),
                        whole: combinations.is_none(),
                    },
                    total,
                )
            }
            Job::WorstCase { circuit, settings } => {
                let run = WorstCaseRun::new(&circuit, &settings)?;
                let corners = run.corners();
                let total = corners + conclusion_weight(run.varied_parameters());
                let scan = run.scan(0, 0)?;
                (
                    State::WorstCase {
                        run: Box::new(run),
                        scan,
                        out: None,
                    },
                    total,
                )
            }
            Job::Windows { record } => {
                let analysis = crate::topology::analyse(&record.circuit, &record.checks)?;
                let mut supplies: Vec<f64> = Vec::new();
                for s in crate::bench::bench_supplies(&record.circuit, &analysis) {
                    if !supplies.contains(&s) {
                        supplies.push(s);
                    }
                }
                let total = 1 + supplies.len() as u64;
                let settings = Box::new(record.tolerance.clone().unwrap_or_default());
                (
                    State::Windows {
                        record,
                        settings,
                        supplies,
                        field: None,
                        bench: Vec::new(),
                    },
                    total,
                )
            }
            Job::Signal {
                design,
                settings,
                capture,
                display_points,
                output,
                front,
            } => {
                design.validate()?;
                let samples = signal_samples(&settings, capture.as_ref())?;
                let levels = sweep_level_count(&design, &settings, capture.is_some())?;
                let total = samples.saturating_mul(STUDY_WEIGHT + levels);
                let st = SignalState {
                    design,
                    settings,
                    capture,
                    display_points: display_points.max(2),
                    output,
                    front,
                    study: true,
                    run: None,
                    sweep: None,
                    levels: PartRange {
                        start: 0,
                        end: levels,
                    },
                    points: Vec::new(),
                    raw_base: None,
                    scratch_v: Vec::new(),
                    edges: Vec::new(),
                    samples,
                };
                (State::Signal(Box::new(st)), total)
            }
            Job::NoiseSweep {
                design,
                settings,
                levels,
                front,
            } => {
                design.validate()?;
                if settings.sweep.is_none() {
                    return Err(invalid(
                        "the noise sweep has no settings: turn the sweep on first",
                    ));
                }
                if matches!(settings.source, SignalSource::ImportedCapture { .. }) {
                    return Err(invalid("an imported capture has no noise-free version to sweep the noise on: use a generated signal"));
                }
                let samples = signal_samples(&settings, None)?;
                let count = sweep_level_count(&design, &settings, false)?;
                let range = levels.unwrap_or(PartRange {
                    start: 0,
                    end: count,
                });
                if range.start > range.end || range.end > count {
                    return Err(invalid(format!(
                        "sweep part {}..{} is not inside 0..{count}: split the sweep with jobs::split",
                        range.start, range.end
                    )));
                }
                let total = samples.saturating_mul(STUDY_WEIGHT + range.end - range.start);
                let st = SignalState {
                    design,
                    settings,
                    capture: None,
                    display_points: 2,
                    output: None,
                    front,
                    study: false,
                    run: None,
                    sweep: None,
                    levels: range,
                    points: Vec::new(),
                    raw_base: None,
                    scratch_v: Vec::new(),
                    edges: Vec::new(),
                    samples,
                };
                (State::Signal(Box::new(st)), total)
            }
            Job::CsvImport { text, options } => {
                let parser = CsvParser::new(options).map_err(|e| invalid(e.to_string()))?;
                let total = text.len() as u64;
                (
                    State::Csv {
                        text,
                        at: 0,
                        parser: Some(Box::new(parser)),
                        out: None,
                    },
                    total.max(1),
                )
            }
            Job::Oscillator {
                design,
                settings,
                cycles,
            } => {
                design.validate()?;
                (
                    State::Oscillator {
                        design,
                        settings,
                        cycles,
                        out: None,
                    },
                    1,
                )
            }
            Job::Debouncer { design, settings } => {
                design.validate()?;
                (
                    State::Debouncer {
                        design,
                        settings,
                        out: None,
                    },
                    1,
                )
            }
            Job::MonteCarloStatistics { figure_values, figures, bins } => {
                check_statistics_inputs(&figure_values, &figures, bins)?;
                let total = figures.len() as u64;
                (
                    State::Statistics {
                        figure_values,
                        figures,
                        bins,
                        out: None,
                    },
                    total,
                )
            }
        };
        Ok(Running {
            state,
            progress: Progress { done: 0, total },
        })
    }

    /// What the units of [`Progress`] count.
    pub fn unit(&self) -> &'static str {
        match self.state {
            State::MonteCarlo { .. } => "trials",
            State::WorstCase { .. } => "circuit evaluations",
            State::Windows { .. } => "worst cases",
            State::Signal(_) => "sample passes",
            State::Csv { .. } => "bytes",
            State::Oscillator { .. } | State::Debouncer { .. } => "simulations",
            State::Search { .. } => "combinations",
            State::Statistics { .. } => "figures",
        }
    }

    /// How far the job is.
    pub fn progress(&self) -> Progress {
        self.progress
    }

    /// Does at least one unit of work and stops once `budget` units are done in this call (or the
    /// job is complete). Returns the progress after the slice.
    pub fn step(&mut self, budget: u64) -> Result<Progress, DesignError> {
        let budget = budget.max(1);
        let before = self.progress.done;
        match &mut self.state {
            State::MonteCarlo {
                run, range, acc, ..
            } => {
                let start = acc.end;
                let end = start.saturating_add(budget).min(range.end);
                acc.merge(run.run(start, end)?)?;
                self.progress.done = acc.end - range.start;
            }
            State::WorstCase { run, scan, out } => {
                let corners = run.corners();
                if scan.end < corners {
                    let end = scan.end.saturating_add(budget).min(corners);
                    scan.merge(&run.scan(scan.end, end)?)?;
                    self.progress.done = scan.end;
                } else {
                    *out = Some(run.finish(scan)?);
                    self.progress.done = self.progress.total;
                }
            }
            State::Windows {
                record,
                settings,
                supplies,
                field,
                bench,
            } => {
                // One worst case per call: the field window, then each bench supply.
                if field.is_none() {
                    *field = Some(crate::tolerance::worst_case(&record.circuit, settings)?);
                } else if let Some(&s) = supplies.get(bench.len()) {
                    bench.push(bench_window(&record.circuit, settings, s)?);
                }
                self.progress.done = u64::from(field.is_some()) + bench.len() as u64;
            }
            State::Signal(st) => {
                let mut done = before;
                while done < self.progress.total && done - before < budget {
                    done = st.advance()?.min(self.progress.total);
                }
                self.progress.done = done;
            }
            State::Csv {
                text,
                at,
                parser,
                out,
            } => {
                let mut end = at
                    .saturating_add(usize::try_from(budget).unwrap_or(usize::MAX))
                    .min(text.len());
                while !text.is_char_boundary(end) {
                    end += 1;
                }
                if let Some(p) = parser.as_mut() {
                    p.feed(&text[*at..end])
                        .map_err(|e| invalid(e.to_string()))?;
                }
                *at = end;
                if *at >= text.len() {
                    if let Some(p) = parser.take() {
                        *out = Some(p.finish().map_err(|e| invalid(e.to_string()))?);
                    }
                    self.progress.done = self.progress.total;
                } else {
                    self.progress.done = *at as u64;
                }
            }
            State::Oscillator {
                design,
                settings,
                cycles,
                out,
            } => {
                *out = Some(simulate_oscillator(design, settings, *cycles)?);
                self.progress.done = 1;
            }
            State::Debouncer {
                design,
                settings,
                out,
            } => {
                *out = Some(simulate_debounce(design, settings)?);
                self.progress.done = 1;
            }
            State::Statistics {
                figure_values,
                figures,
                bins,
                out,
            } => {
                // All the figures at once: a figure's statistics are one unit that cannot be cut.
                let statistics = figure_values.iter().map(|v| value_statistics(v, *bins)).collect();
                *out = Some(FiguresPart { figures: std::mem::take(figures), statistics });
                self.progress.done = self.progress.total;
            }
            State::Search { job, .. } => {
                // `budget` combinations (a restart into the unpruned pass starts the count again).
                let p = job.step_combinations(budget);
                self.progress.done = if p.finished {
                    self.progress.total
                } else {
                    p.combinations_done.min(self.progress.total.saturating_sub(1))
                };
            }
        }
        Ok(self.progress)
    }

    /// Runs the job to the end in slices of `budget` units.
    pub fn run_to_end(mut self, budget: u64) -> Result<JobOutput, DesignError> {
        while !self.progress.is_done() {
            self.step(budget)?;
        }
        self.finish()
    }

    /// The output of a completed job (an error when work is left).
    pub fn finish(self) -> Result<JobOutput, DesignError> {
        if !self.progress.is_done() {
            return Err(invalid(format!(
                "the job is not complete: {} of {} units are done; step it to the end first",
                self.progress.done, self.progress.total
            )));
        }
        let missing = || invalid("the job finished without an output: step it to the end first");
        match self.state {
            State::MonteCarlo {
                run, whole, acc, ..
            } => {
                if whole {
                    Ok(JobOutput::MonteCarlo(run.finish(&acc)?))
                } else {
                    Ok(JobOutput::MonteCarloPart(acc))
                }
            }
            State::WorstCase { out, .. } => out.map(JobOutput::WorstCase).ok_or_else(missing),
            State::Windows { field, bench, .. } => field
                .map(|field| JobOutput::Windows(Box::new(Windows { field, bench })))
                .ok_or_else(missing),
            State::Signal(st) => st.finish(),
            State::Csv { out, .. } => out.map(JobOutput::Capture).ok_or_else(missing),
            State::Oscillator { out, .. } => out.map(JobOutput::Oscillator).ok_or_else(missing),
            State::Debouncer { out, .. } => out.map(JobOutput::Debouncer).ok_or_else(missing),
            State::Search { job, whole } => Ok(if whole {
                JobOutput::Search(job.finish())
            } else {
                JobOutput::SearchPart(job.finish())
            }),
            State::Statistics { out, .. } => out.map(JobOutput::MonteCarloStatistics).ok_or_else(missing),
        }
    }
}

impl SignalState {
    /// The context the sweep levels run in, from the study's run.
    fn context<'a>(&'a self, run: &'a SignalRun) -> Result<SweepContext<'a>, DesignError> {
        sweep_context(&self.design, &self.settings, run, self.front)
    }
}

/// The context the sweep levels run in, from the study's run.
fn sweep_context<'a>(
    design: &TriggerDesign,
    settings: &'a SignalSettings,
    run: &'a SignalRun,
    front: Option<crate::input_network::noise::FrontEnd>,
) -> Result<SweepContext<'a>, DesignError> {
    let timing = TimingModel::new(&settings.timing)?;
    let study = &settings.study;
    let duration = run.report.duration_s;
    Ok(SweepContext {
        definition: &settings.definition,
        design: *design,
        baseline: design.comparator(run.report.baseline_level_v),
        timing,
        intended: &run.intended_edges,
        intended_baseline: &run.intended_baseline_edges,
        window_s: study
            .match_window_s
            .unwrap_or_else(|| default_match_window_s(&run.intended_edges, duration)),
        window_baseline_s: study
            .match_window_s
            .unwrap_or_else(|| default_match_window_s(&run.intended_baseline_edges, duration)),
        front,
    })
}

impl SignalState {
    /// One indivisible piece: the main pass, or one sweep level. Returns the units done so far.
    fn advance(&mut self) -> Result<u64, DesignError> {
        if self.run.is_none() {
            let mut s = self.settings.clone();
            s.sweep = None;
            // The outputs are rendered at the end, already reduced for display (`finish`).
            let run = crate::signal::display::run_unrendered(&s, &self.design, self.capture.as_ref(), self.front.as_ref())?;
            if let (Some(sw), Some(_)) = (&self.settings.sweep, &run.clean_v) {
                let runner = SweepRunner::new(&self.context(&run)?, sw, run.signal_v.len())?;
                if self.front.is_some() {
                    // The run's waveforms are after the network; the sweep needs them before it.
                    let mut b = crate::signal::generate::SignalBuffers::default();
                    self.settings.definition.generate_into(&mut b)?;
                    self.raw_base = Some(if sw.keep_other_noise { b.noisy_v } else { b.clean_v });
                }
                self.sweep = Some((*sw, runner));
            }
            self.run = Some(run);
            return Ok(self.samples * STUDY_WEIGHT);
        }
        let next = self.levels.start + self.points.len() as u64;
        if next < self.levels.end {
            let (Some(run), Some((sw, runner))) = (&self.run, &self.sweep) else {
                return Err(invalid("the sweep is not prepared: run the study first"));
            };
            let base: &[f64] = match (&self.raw_base, &run.clean_v, sw.keep_other_noise) {
                (Some(raw), _, _) => raw,
                (None, Some(c), false) => c,
                _ => &run.signal_v,
            };
            let ctx = sweep_context(&self.design, &self.settings, run, self.front)?;
            let point = runner.point(
                &ctx,
                next as usize,
                base,
                &mut self.scratch_v,
                &mut self.edges,
            )?;
            self.points.push(point);
        }
        Ok(self.samples * (STUDY_WEIGHT + self.points.len() as u64))
    }

    fn finish(self) -> Result<JobOutput, DesignError> {
        let Some(mut run) = self.run else {
            return Err(invalid(
                "the signal study did not run: step it to the end first",
            ));
        };
        if !self.study {
            return Ok(JobOutput::SweepPart(SweepPart {
                start: self.levels.start,
                end: self.levels.end,
                points: self.points,
            }));
        }
        if let Some((sw, _)) = self.sweep {
            run.report.sweep = Some(finish_sweep(&sw, self.points));
        }
        let run = crate::signal::display::for_display(run, &self.settings, &self.design, self.output.as_deref(), self.display_points)?;
        Ok(JobOutput::Signal(Box::new(run)))
    }
}

/// The waveforms of a signal run reduced to at most `max_points` points each, for display; the
/// report and the edges are kept whole. Samples are taken in buckets of ⌈2n / max_points⌉; each
/// bucket gives two points, at its first and last sample time, holding the bucket's minimum and
/// maximum in the order they occur — so a min/max plot of the reduced waveform equals that of the
/// full one at bucket resolution. A run of at most `max_points` samples is kept as it is.
pub fn reduce_for_display(run: SignalRun, max_points: usize) -> SignalRun {
    use crate::signal::display::{display_bucket, reduce_samples, reduced_times};
    let n = run.signal_v.len();
    let Some(bucket) = display_bucket(n, max_points) else { return run };
    let reduce = |v: &[f64]| reduce_samples(v, bucket);
    SignalRun {
        clean_v: run.clean_v.as_deref().map(reduce),
        signal_v: reduce(&run.signal_v),
        design_output_v: reduce(&run.design_output_v),
        baseline_output_v: reduce(&run.baseline_output_v),
        time: TimeBase::Samples { times_s: reduced_times(run.time.view(), n, bucket) },
        design_edges: run.design_edges,
        baseline_edges: run.baseline_edges,
        intended_edges: run.intended_edges,
        intended_baseline_edges: run.intended_baseline_edges,
        report: run.report,
    }
}

/// The standard-value search of a record for `targets` as a job, with its work bound: the same
/// start (the synthesised design when there is one) and settings as
/// [`crate::overview::standard_values_job`]; the settings and targets are checked here, so an
/// invalid search is refused before it is sent anywhere.
pub fn search_job(
    record: &DesignRecord,
    targets: &crate::analysis::Targets,
    synthesised: Option<&crate::overview::Synthesis>,
) -> Result<(Job, crate::search::Workload), DesignError> {
    let workload = crate::overview::standard_values_job(record, targets, synthesised)?.workload();
    let circuit = synthesised.map_or(&record.circuit, |s| &s.circuit).clone();
    let job = Job::Search {
        circuit,
        targets: targets.thresholds(),
        settings: crate::overview::search_settings(record, targets),
        checks: record.checks,
        combinations: None,
    };
    Ok((job, workload))
}

/// Cuts a job into at most `parts` jobs whose outputs, merged in order with [`merge`], equal the
/// whole job's output: Monte Carlo by consecutive trial ranges, a signal study's noise sweep by
/// consecutive level ranges (the first part also runs the study itself). Any other job, and any
/// job too small to cut, comes back whole.
pub fn split(job: &Job, parts: usize) -> Result<Vec<Job>, DesignError> {
    let parts = parts.max(1) as u64;
    let ranges = |count: u64| -> Vec<PartRange> {
        let k = parts.min(count.max(1));
        (0..k)
            .map(|i| PartRange {
                start: count * i / k,
                end: count * (i + 1) / k,
            })
            .collect()
    };
    match job {
        Job::MonteCarlo {
            circuit,
            settings,
            trials: None,
        } if parts > 1 => {
            let trials = settings.monte_carlo.trials;
            Ok(ranges(trials)
                .into_iter()
                .map(|r| Job::MonteCarlo {
                    circuit: circuit.clone(),
                    settings: settings.clone(),
                    trials: Some(r),
                })
                .collect())
        }
        Job::Search {
            circuit,
            targets,
            settings,
            checks,
            combinations: None,
        } if parts > 1 && !settings.distinct => {
            // Only without the distinct rule is the merged list the one-call list (see "Split over
            // workers" in `crate::search`); a distinct search stays whole.
            let whole = SearchJob::new(circuit, *targets, settings, checks)?;
            Ok(whole
                .parts(parts as usize)
                .into_iter()
                .map(|(start, end)| Job::Search {
                    circuit: circuit.clone(),
                    targets: *targets,
                    settings: settings.clone(),
                    checks: *checks,
                    combinations: Some(PartRange { start, end }),
                })
                .collect())
        }
        Job::NoiseSweep {
            design,
            settings,
            levels: None,
            front,
        } if parts > 1 => {
            let count = sweep_level_count(design, settings, false)?;
            Ok(ranges(count)
                .into_iter()
                .map(|r| Job::NoiseSweep {
                    design: *design,
                    settings: settings.clone(),
                    levels: Some(r),
                    front: *front,
                })
                .collect())
        }
        Job::Signal {
            design,
            settings,
            capture: None,
            display_points,
            output,
            front,
        } if parts > 1 && settings.sweep.is_some() => {
            let count = sweep_level_count(design, settings, false)?;
            let mut out = vec![Job::Signal {
                design: *design,
                settings: SignalSettings {
                    sweep: None,
                    ..settings.clone()
                },
                capture: None,
                display_points: *display_points,
                output: output.clone(),
                front: *front,
            }];
            // Each sweep part runs the levels through the same network as the whole study.
            out.extend(ranges(count).into_iter().map(|r| Job::NoiseSweep {
                design: *design,
                settings: settings.clone(),
                levels: Some(r),
                front: *front,
            }));
            Ok(out)
        }
        other => Ok(vec![other.clone()]),
    }
}

/// Puts the outputs of the parts of `job` (made by [`split`], in the same order) back together into
/// the output the whole job gives. (Each kind's own merge is public too, so that a page that reads
/// one kind of answer carries only that kind's code: see [`crate::job_answers`].)
pub fn merge(job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    match job {
        Job::MonteCarlo { trials: None, .. } => merge_monte_carlo(job, outputs),
        Job::Search { combinations: None, .. } => merge_search(job, outputs),
        Job::NoiseSweep { .. } => merge_sweep(job, outputs),
        Job::Signal { .. } => merge_signal(job, outputs),
        _ => merge_single(job, outputs),
    }
}

fn first_output(outputs: Vec<JobOutput>) -> Result<(JobOutput, std::vec::IntoIter<JobOutput>), DesignError> {
    let mut it = outputs.into_iter();
    let first = it
        .next()
        .ok_or_else(|| invalid("no part outputs to merge: run the parts first"))?;
    Ok((first, it))
}

/// [`merge`] for a job that is never split: its one output.
pub fn merge_single(_job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    first_output(outputs).map(|(first, _)| first)
}

/// A Monte Carlo job's part outputs merged in order (`Ok`), or its one whole output when the job
/// was not split (`Err`, not an error); another job's output is an error.
pub(crate) fn merge_monte_carlo_parts(outputs: Vec<JobOutput>) -> Result<Result<MonteCarloPartial, JobOutput>, DesignError> {
    let other = || invalid("a Monte Carlo job got another job's output");
    let (first, it) = first_output(outputs)?;
    let mut acc = match first {
        JobOutput::MonteCarloPart(p) => p,
        whole @ JobOutput::MonteCarlo(_) => return Ok(Err(whole)),
        _ => return Err(other()),
    };
    for o in it {
        match o {
            JobOutput::MonteCarloPart(p) => acc.merge(p)?,
            _ => return Err(other()),
        }
    }
    Ok(Ok(acc))
}

/// [`merge`] for a Monte Carlo job: the parts' trials in order, then the statistics once.
pub fn merge_monte_carlo(job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    let Job::MonteCarlo { circuit, settings, trials: None } = job else {
        return merge_single(job, outputs);
    };
    let acc = match merge_monte_carlo_parts(outputs)? {
        Ok(acc) => acc,
        Err(whole) => return Ok(whole),
    };
    let run = MonteCarloRun::new(circuit, settings)?;
    Ok(JobOutput::MonteCarlo(run.finish(&acc)?))
}

/// [`merge`] for a standard-value search: the parts' lists offered in range order to one list.
pub fn merge_search(job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    let Job::Search { circuit, targets, settings, checks, combinations: None } = job else {
        return merge_single(job, outputs);
    };
    let (first, it) = first_output(outputs)?;
    let mut reports = Vec::new();
    for o in std::iter::once(first).chain(it) {
        match o {
            whole @ JobOutput::Search(_) => return Ok(whole),
            JobOutput::SearchPart(r) => reports.push(r),
            _ => return Err(invalid("a search got another job's output")),
        }
    }
    let whole = SearchJob::new(circuit, *targets, settings, checks)?;
    Ok(JobOutput::Search(whole.merge(reports)?))
}

/// [`merge`] for a noise sweep: the parts' levels in order.
pub fn merge_sweep(job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    if !matches!(job, Job::NoiseSweep { .. }) {
        return merge_single(job, outputs);
    }
    let (first, it) = first_output(outputs)?;
    let mut acc = match first {
        JobOutput::SweepPart(p) => p,
        _ => return Err(invalid("a noise sweep got another job's output")),
    };
    for o in it {
        acc.merge(o)?;
    }
    Ok(JobOutput::SweepPart(acc))
}

/// [`merge`] for a signal study: its main pass, with the sweep's parts (when split) finished into
/// its report.
pub fn merge_signal(job: &Job, outputs: Vec<JobOutput>) -> Result<JobOutput, DesignError> {
    let Job::Signal { settings, .. } = job else {
        return merge_single(job, outputs);
    };
    let (first, it) = first_output(outputs)?;
    let mut view = match first {
        JobOutput::Signal(v) => v,
        _ => return Err(invalid("a signal study got another job's output")),
    };
    let mut parts: Option<SweepPart> = None;
    for o in it {
        match &mut parts {
            None => match o {
                JobOutput::SweepPart(p) => parts = Some(p),
                _ => return Err(invalid("a signal study's sweep got another job's output")),
            },
            Some(acc) => acc.merge(o)?,
        }
    }
    if let (Some(sw), Some(p)) = (&settings.sweep, parts) {
        view.report.sweep = Some(finish_sweep(sw, p.points));
    }
    Ok(JobOutput::Signal(view))
}

impl SweepPart {
    /// Appends the next part (it must start where this one ends).
    pub fn merge(&mut self, next: JobOutput) -> Result<(), DesignError> {
        let JobOutput::SweepPart(next) = next else {
            return Err(invalid("a noise sweep got another job's output"));
        };
        if next.start != self.end {
            return Err(invalid(format!(
                "sweep parts must be merged in level order: this one ends at level {}, the next starts at {}",
                self.end, next.start
            )));
        }
        self.end = next.end;
        self.points.extend(next.points);
        Ok(())
    }
}

fn take_time(t: &mut TimeBase, out: &mut Vec<Vec<f64>>) {
    if let TimeBase::Samples { times_s } = t {
        out.push(std::mem::take(times_s));
    }
}

fn put_time(t: &mut TimeBase, it: &mut impl Iterator<Item = Vec<f64>>) -> Result<(), DesignError> {
    if let TimeBase::Samples { times_s } = t {
        *times_s = it
            .next()
            .ok_or_else(|| invalid("an array is missing: send every array the value gave"))?;
    }
    Ok(())
}

fn next_array(it: &mut impl Iterator<Item = Vec<f64>>) -> Result<Vec<f64>, DesignError> {
    it.next()
        .ok_or_else(|| invalid("an array is missing: send every array the value gave"))
}

impl Job {
    /// Moves the large sample vectors out (an imported capture's times and voltages), leaving them
    /// empty; [`Job::put_arrays`] puts them back in the same order.
    pub fn take_arrays(&mut self) -> Vec<Vec<f64>> {
        match self {
            Job::Signal {
                capture: Some(c), ..
            } => vec![std::mem::take(&mut c.time_s), std::mem::take(&mut c.volts)],
            Job::MonteCarloStatistics { figure_values, .. } => std::mem::take(figure_values),
            _ => Vec::new(),
        }
    }

    /// Puts back what [`Job::take_arrays`] took. A [`Job::MonteCarloStatistics`] also takes its
    /// values in pieces, the same number for every figure: its first figure's values of the first
    /// trials, of the next…, in trial order, then its second figure's… (the arrays of a split
    /// run's parts, as [`JobOutput::take_arrays`] gave them, in the order
    /// `job_rounds::forwarded_arrays` lists them).
    pub fn put_arrays(&mut self, arrays: Vec<Vec<f64>>) -> Result<(), DesignError> {
        let mut it = arrays.into_iter();
        match self {
            Job::Signal {
                capture: Some(c), ..
            } => {
                c.time_s = next_array(&mut it)?;
                c.volts = next_array(&mut it)?;
            }
            Job::MonteCarloStatistics { figure_values, figures, .. } => {
                let pieces: Vec<Vec<f64>> = it.by_ref().collect();
                let per_figure = pieces.len() / figures.len().max(1);
                if figures.is_empty() || per_figure == 0 || !pieces.len().is_multiple_of(figures.len()) {
                    return Err(invalid(format!(
                        "{} arrays of values for {} figures: send each figure's values in the same number of pieces",
                        pieces.len(),
                        figures.len()
                    )));
                }
                *figure_values = pieces.chunks(per_figure).map(|c| c.concat()).collect();
            }
            _ => {}
        }
        Ok(())
    }
}

impl JobOutput {
    /// The output's kind, as its JSON names it (the `kind` field serde writes for this variant);
    /// a worker sends it beside the output so the page can read the output as its own type
    /// ([`crate::job_answers`]).
    pub fn kind(&self) -> &'static str {
        match self {
            JobOutput::MonteCarlo(_) => "monte_carlo",
            JobOutput::MonteCarloPart(_) => "monte_carlo_part",
            JobOutput::WorstCase(_) => "worst_case",
            JobOutput::Windows(_) => "windows",
            JobOutput::Signal(_) => "signal",
            JobOutput::SweepPart(_) => "sweep_part",
            JobOutput::Capture(_) => "capture",
            JobOutput::Search(_) => "search",
            JobOutput::SearchPart(_) => "search_part",
            JobOutput::Oscillator(_) => "oscillator",
            JobOutput::Debouncer(_) => "debouncer",
            JobOutput::MonteCarloStatistics(_) => "monte_carlo_statistics",
        }
    }

    /// Moves the large sample vectors out (Monte Carlo values, waveforms, capture samples), leaving
    /// them empty; [`JobOutput::put_arrays`] puts them back in the same order. A Monte Carlo part
    /// gives one array per figure, in [`Figure::ALL`] order: its VT+ and VT−, and the hysteresis and
    /// centre derived from them (`sample_statistics::figure_array`), so that a second round can send
    /// each figure's values to one worker as they are, without copies (`crate::job_rounds`).
    pub fn take_arrays(&mut self) -> Vec<Vec<f64>> {
        let mut out = Vec::new();
        match self {
            JobOutput::MonteCarloPart(p) => {
                let (upper, lower) = (std::mem::take(&mut p.vt_upper_v), std::mem::take(&mut p.vt_lower_v));
                let [hysteresis, centre] = [Figure::Hysteresis, Figure::Centre].map(|f| figure_array(f, &upper, &lower));
                out.extend([upper, lower, hysteresis, centre]);
            }
            JobOutput::Signal(v) => {
                take_time(&mut v.time, &mut out);
                if let Some(c) = &mut v.clean_v {
                    out.push(std::mem::take(c));
                }
                out.push(std::mem::take(&mut v.signal_v));
                out.push(std::mem::take(&mut v.design_output_v));
                out.push(std::mem::take(&mut v.baseline_output_v));
            }
            JobOutput::Capture(c) => {
                out.push(std::mem::take(&mut c.time_s));
                out.push(std::mem::take(&mut c.volts));
            }
            _ => {}
        }
        out
    }

    /// Puts back what [`JobOutput::take_arrays`] took.
    pub fn put_arrays(&mut self, arrays: Vec<Vec<f64>>) -> Result<(), DesignError> {
        let mut it = arrays.into_iter();
        match self {
            JobOutput::MonteCarloPart(p) => {
                p.vt_upper_v = next_array(&mut it)?;
                p.vt_lower_v = next_array(&mut it)?;
                // The derived figures are left out: the part keeps VT+ and VT− only.
                for figure in [Figure::Hysteresis, Figure::Centre] {
                    let derived = next_array(&mut it)?;
                    if derived.len() != p.vt_upper_v.len() || p.vt_lower_v.len() != p.vt_upper_v.len() {
                        return Err(invalid(format!(
                            "a Monte Carlo part's arrays do not pair up: {} VT+, {} VT− and {} values of {figure:?}",
                            p.vt_upper_v.len(),
                            p.vt_lower_v.len(),
                            derived.len()
                        )));
                    }
                }
            }
            JobOutput::Signal(v) => {
                put_time(&mut v.time, &mut it)?;
                if let Some(c) = &mut v.clean_v {
                    *c = next_array(&mut it)?;
                }
                v.signal_v = next_array(&mut it)?;
                v.design_output_v = next_array(&mut it)?;
                v.baseline_output_v = next_array(&mut it)?;
            }
            JobOutput::Capture(c) => {
                c.time_s = next_array(&mut it)?;
                c.volts = next_array(&mut it)?;
            }
            _ => {}
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::signal::report::run_signal;
    use crate::signal::csv::parse_csv;

    fn design() -> TriggerDesign {
        TriggerDesign {
            thresholds: crate::analysis::Thresholds {
                vt_upper_v: 0.3,
                vt_lower_v: -0.3,
            },
            output_high_v: 5.0,
            output_low_v: 0.0,
            sense: crate::analysis::Sense::Inverting,
        }
    }

    #[test]
    fn csv_in_slices_equals_one_parse() {
        let text: String = (0..5000)
            .map(|i| format!("{},{}\n", i as f64 * 1e-3, (i % 7) as f64 * 0.1))
            .collect();
        let whole = parse_csv(&text, &CsvOptions::default()).unwrap();
        let job = Job::CsvImport {
            text,
            options: CsvOptions::default(),
        };
        let r = Running::start(job).unwrap();
        assert_eq!(r.unit(), "bytes");
        let JobOutput::Capture(c) = r.run_to_end(997).unwrap() else {
            panic!("not a capture")
        };
        assert_eq!(c, whole);
    }

    #[test]
    fn worst_case_in_slices_equals_one_pass_for_every_demo_and_template() {
        // Every starter (the two-transistor pair included, and the CMOS buffer whose clamped
        // level sends the search inside the bands), sliced in odd budgets: bit-identical to
        // tolerance::worst_case, with the corners and the conclusion announced before the work.
        let starters = crate::catalog::demos().into_iter().chain(crate::catalog::templates());
        let mut checked = 0;
        for st in starters {
            let r = st.record();
            let settings = r.tolerance.clone().unwrap_or_default();
            let whole = crate::tolerance::worst_case(&r.circuit, &settings);
            let job = Job::WorstCase { circuit: r.circuit.clone(), settings: settings.clone() };
            let running = match Running::start(job) {
                Ok(running) => running,
                Err(e) => {
                    assert_eq!(Err(e), whole.map(|_| ()), "{}", st.key);
                    continue;
                }
            };
            assert_eq!(running.unit(), "circuit evaluations");
            let total = running.progress().total;
            let wc = whole.unwrap_or_else(|e| panic!("{}: {e}", st.key));
            let corners = if wc.method == crate::tolerance::worst_case::WorstCaseMethod::Corners { 1u64 << wc.varied_parameters } else { 0 };
            assert_eq!(total, corners + conclusion_weight(wc.varied_parameters), "{}", st.key);
            for budget in [1u64, 7, 1 << 20] {
                let JobOutput::WorstCase(sliced) = Running::start(Job::WorstCase { circuit: r.circuit.clone(), settings: settings.clone() })
                    .unwrap()
                    .run_to_end(budget)
                    .unwrap()
                else {
                    panic!("not a worst case")
                };
                assert_eq!(sliced, wc, "{} in slices of {budget}", st.key);
            }
            checked += 1;
        }
        assert!(checked >= 8, "only {checked} starters had a worst case");
    }

    #[test]
    fn windows_job_equals_the_overview_for_every_demo() {
        for st in crate::catalog::demos() {
            let r = st.record();
            let whole = crate::overview::record_windows(&r);
            let out = Running::start(Job::Windows { record: Box::new(r.clone()) }).and_then(|j| j.run_to_end(1));
            match (out, whole) {
                (Ok(JobOutput::Windows(w)), Ok(whole)) => assert_eq!(*w, whole, "{}", st.key),
                (Err(a), Err(b)) => assert_eq!(a, b, "{}", st.key),
                (a, b) => panic!("{}: job {a:?}, overview {b:?}", st.key),
            }
        }
    }

    #[test]
    fn corner_scans_merge_only_in_order() {
        let r = crate::catalog::templates()[0].record();
        let run = WorstCaseRun::new(&r.circuit, &ToleranceSettings::default()).unwrap();
        let n = run.corners();
        assert!(n >= 4);
        let mut a = run.scan(0, n / 2).unwrap();
        let b = run.scan(n / 2, n).unwrap();
        assert!(b.clone().merge(&a).is_err());
        a.merge(&b).unwrap();
        assert_eq!(a, run.scan(0, n).unwrap());
        assert!(run.scan(0, n + 1).is_err());
        assert!(run.finish(&b).is_err(), "a scan missing corners is refused");
    }

    #[test]
    fn unfinished_jobs_and_bad_parts_are_refused() {
        let text = "0,1\n1,2\n2,3\n".to_string();
        let r = Running::start(Job::CsvImport {
            text,
            options: CsvOptions::default(),
        })
        .unwrap();
        assert!(r.finish().is_err());
        let mut s = SignalSettings::default();
        assert!(Running::start(Job::NoiseSweep {
            design: design(),
            settings: s.clone(),
            levels: None,
            front: None,
        })
        .is_err());
        s.sweep = Some(SweepSettings::default());
        let bad = Job::NoiseSweep {
            design: design(),
            settings: s,
            levels: Some(PartRange { start: 3, end: 99 }),
            front: None,
        };
        assert!(Running::start(bad).is_err());
    }

    #[test]
    fn reduction_keeps_extremes_and_ends() {
        let s = SignalSettings {
            definition: crate::signal::generate::SignalDefinition {
                sample_rate_hz: 1e5,
                duration_s: 0.1,
                ..Default::default()
            },
            ..Default::default()
        };
        let run = run_signal(&s, &design(), None).unwrap();
        let n = run.signal_v.len();
        let (lo, hi) = run
            .signal_v
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            });
        let (t0, t1) = (run.time.view().at(0), run.time.view().at(n - 1));
        let v = reduce_for_display(run.clone(), 1000);
        assert!(v.signal_v.len() <= 1000 && v.signal_v.len() == v.design_output_v.len());
        let rl = v
            .signal_v
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            });
        assert_eq!(rl, (lo, hi));
        let m = v.signal_v.len();
        assert_eq!((v.time.view().at(0), v.time.view().at(m - 1)), (t0, t1));
        assert!(v.time.view().validate(m).is_ok());
        assert_eq!(v.report, run.report);
        // Small runs come back whole.
        assert_eq!(reduce_for_display(run.clone(), n).signal_v, run.signal_v);
    }
}
