// Over 600 lines: one job, the record-level signal and application studies that the page, sheet and CLI report; about 70 lines are tests.
//! The signal and application studies as stored in the design record and returned by the JSON
//! entry point: settings ([`SignalSettings`], [`ApplicationSettings`]), the full run with
//! waveforms for the page ([`run_signal`]), and the summary without waveforms ([`SignalReport`]).

use super::csv::Capture;
use super::debounce::{rc_debounce, simulate_debounce, DebounceResult, DebounceSettings};
use super::generate::{Component, SignalBuffers, SignalDefinition};
use super::noise::NoiseSource;
use super::oscillator::{relaxation_oscillator, simulate_oscillator, OscillatorResult, OscillatorSettings};
use super::rice;
use super::sweep::{run_sweep, SweepContext, SweepResult, SweepSettings};
use super::timing::{logic_dwell_in, zero_crossing_error, DwellStats, TriggerTiming, ZeroCrossingError};
use super::trigger::{
    compare_edges, default_match_window_s, render_output, run_trigger, Edge, EdgeComparison, EdgeDirection, TimingModel,
    TriggerDesign, TriggerOutcome,
};
use super::TimeBase;
use crate::analysis::Thresholds;
use crate::error::{finite, DesignError};
use crate::topology::Topology;
use serde::{Deserialize, Serialize};

/// Where the signal comes from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SignalSource {
    /// Built from the components and noise of the settings.
    #[default]
    Generated,
    /// A capture imported on the page (CSV); the samples are not stored in the record.
    ImportedCapture {
        /// The file's name, for display.
        name: String,
    },
}

/// A logic input without hysteresis that the signal also drives.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct LogicInput {
    /// Highest input voltage read as low, volts.
    pub vil_v: f64,
    /// Lowest input voltage read as high, volts.
    pub vih_v: f64,
}

/// Settings of the signal study's analyses.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct StudySettings {
    /// The plain comparator's threshold, volts (`None`: the design's band centre).
    pub baseline_level_v: Option<f64>,
    /// Window for matching edges to intended edges, seconds (`None`: half the smallest gap
    /// between intended edges; see [`super::trigger`]).
    pub match_window_s: Option<f64>,
    /// Target false edges per intended edge for the minimum hysteresis.
    pub target_false_edges_per_edge: f64,
    /// A logic input without hysteresis to check for slow-edge dwell.
    pub logic_input: Option<LogicInput>,
    /// The physical bandwidth of the Gaussian noise at the trigger, hertz: the comparator's input
    /// bandwidth or an input filter's. White noise is taken as flat to it and one-pole noise has
    /// its derivative cut at it (see [`super::rice`]), so the minimum hysteresis does not depend
    /// on the simulation's sample rate. Default [`DEFAULT_NOISE_BANDWIDTH_HZ`].
    pub noise_bandwidth_hz: f64,
}

/// The default noise bandwidth, hertz: 1 MHz, the order of a general-purpose comparator's or
/// op-amp's small-signal bandwidth (common practice). Wider than the simulation's half sample rate
/// at the usual settings, so the recommendation errs on the safe side there.
pub const DEFAULT_NOISE_BANDWIDTH_HZ: f64 = 1e6;

impl StudySettings {
    /// Checks every value against its physical range (`crate::limits`).
    pub fn validate(&self) -> Result<(), DesignError> {
        use crate::limits::{check as limit, check_optional, Quantity};
        check_optional(Quantity::Voltage, "study.baseline_level_v", self.baseline_level_v)?;
        check_optional(Quantity::Duration, "study.match_window_s", self.match_window_s)?;
        crate::error::non_negative("study.target_false_edges_per_edge", self.target_false_edges_per_edge)?;
        if let Some(l) = self.logic_input {
            limit(Quantity::Voltage, "study.logic_input.vil_v", l.vil_v)?;
            limit(Quantity::Voltage, "study.logic_input.vih_v", l.vih_v)?;
        }
        Ok(())
    }
}

impl Default for StudySettings {
    fn default() -> Self {
        StudySettings {
            baseline_level_v: None,
            match_window_s: None,
            target_false_edges_per_edge: 1e-3,
            logic_input: None,
            noise_bandwidth_hz: DEFAULT_NOISE_BANDWIDTH_HZ,
        }
    }
}

/// The signal study as stored in the design record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct SignalSettings {
    /// Generated or imported.
    pub source: SignalSource,
    /// Sample rate, duration, seed, components and noise (used when generated).
    #[serde(flatten)]
    pub definition: SignalDefinition,
    /// Propagation delay, output edges, initial state.
    pub timing: TriggerTiming,
    /// Analysis settings.
    pub study: StudySettings,
    /// The noise sweep, when wanted.
    pub sweep: Option<SweepSettings>,
}

/// One trigger's run on the signal, summarised.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TriggerSummary {
    /// Thresholds used, volts.
    pub thresholds: Thresholds,
    /// Edge counts and states.
    pub outcome: TriggerOutcome,
    /// Against the intended edges (`None` for a capture: no noise-free version exists).
    pub comparison: Option<EdgeComparison>,
    /// Mean input-crossing-to-output-start delay, seconds (0 without edges).
    pub mean_delay_s: f64,
    /// Longest such delay, seconds.
    pub max_delay_s: f64,
}

/// The noise in the signal.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NoiseSummary {
    /// σ0 of the Gaussian sources combined, volts.
    pub gaussian_rms_v: f64,
    /// σ1 of the Gaussian sources combined at the study's noise bandwidth, volts per second.
    pub gaussian_sigma1_v_per_s: f64,
    /// RMS of (noisy − noise-free) over the record, all sources, volts.
    pub measured_rms_v: f64,
    /// Peak-to-peak of (noisy − noise-free), volts.
    pub measured_peak_to_peak_v: f64,
}

/// The minimum hysteresis: the reverse excursion of the deterministic interference (hum and its
/// harmonics) plus the Gaussian term of Rice's formula at the study's noise bandwidth (see
/// [`super::rice`] for the derivation), and its check by simulation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RiceCheck {
    /// Target false edges per intended edge.
    pub target_false_edges_per_edge: f64,
    /// Slowest intended-edge slope (the worst case), volts per second.
    pub slowest_slope_v_per_s: f64,
    /// The noise bandwidth σ1 is taken at, hertz.
    #[serde(default)]
    pub noise_bandwidth_hz: f64,
    /// σ0 used, volts.
    pub sigma0_v: f64,
    /// σ1 of the Gaussian noise at the noise bandwidth, volts per second.
    pub sigma1_v_per_s: f64,
    /// The largest reverse excursion of the hum against the slowest edges, volts.
    #[serde(default)]
    pub interference_excursion_v: f64,
    /// The Gaussian term of the minimum, volts.
    #[serde(default)]
    pub gaussian_term_v: f64,
    /// Minimum hysteresis H for the target at the slowest edge (excursion + Gaussian term), volts.
    pub min_hysteresis_v: f64,
    /// The design's hysteresis, volts.
    pub design_hysteresis_v: f64,
    /// Whether the design's hysteresis reaches the minimum.
    pub design_meets_target: bool,
    /// The bound's false edges per intended edge for the design's hysteresis at the slowest edge,
    /// on the margin left after the interference; `None` when the interference alone reverses the
    /// input by more than the design's hysteresis (false edges at the worst hum phase, whatever
    /// the noise).
    pub design_bound_false_edges_per_edge: Option<f64>,
    /// Simulated: the design's centre with hysteresis `min_hysteresis_v`, on this signal.
    pub simulated_at_min: EdgeComparison,
    /// Its false edges per intended edge.
    pub simulated_false_edges_per_edge_at_min: f64,
}

/// Timing errors seen on the signal.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TimingSummary {
    /// Slowest rising-input slope at VT+, volts per second (`None` without such edges).
    pub slope_at_upper_v_per_s: Option<f64>,
    /// Slowest falling-input slope magnitude at VT−, volts per second.
    pub slope_at_lower_v_per_s: Option<f64>,
    /// RMS edge jitter at VT+ (Gaussian RMS ÷ slowest slope), seconds.
    pub jitter_upper_s: Option<f64>,
    /// RMS edge jitter at VT−, seconds.
    pub jitter_lower_s: Option<f64>,
    /// How long switching lags the band-centre crossing on the slowest edge, (ΔV/2)/s, seconds.
    pub centre_lag_s: Option<f64>,
    /// Zero-crossing phase error, when the signal is one sine about a DC level.
    pub zero_crossing: Option<ZeroCrossingError>,
}

/// The signal study's summary (no waveforms).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SignalReport {
    /// Samples in the record.
    pub samples: usize,
    /// Mean sample rate, hertz.
    pub sample_rate_hz: f64,
    /// Record length, seconds.
    pub duration_s: f64,
    /// The plain comparator's threshold, volts.
    pub baseline_level_v: f64,
    /// Noise figures (`None` for a capture).
    pub noise: Option<NoiseSummary>,
    /// The design.
    pub design: TriggerSummary,
    /// The plain comparator on the same signal.
    pub baseline: TriggerSummary,
    /// Minimum hysteresis by Rice's formula, checked by simulation.
    pub rice: Option<RiceCheck>,
    /// Timing errors.
    pub timing: TimingSummary,
    /// Dwell of the signal between the logic input's VIL and VIH.
    pub logic_dwell: Option<DwellStats>,
    /// The noise sweep.
    pub sweep: Option<SweepResult>,
    /// Why parts of the study were skipped.
    pub notes: Vec<String>,
    /// The normal sampler that drew the noise ([`crate::rng::NORMAL_SAMPLER`]; 1 for a report
    /// kept before samplers were recorded): the same seed under another sampler draws other noise.
    #[serde(default = "crate::rng::sampler_before_records")]
    pub normal_sampler: u32,
}

/// A full signal run for the page: the waveforms and edges beside the summary (plain data; a
/// compute worker sends it back as it is, see `crate::jobs`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SignalRun {
    /// Sample times.
    pub time: TimeBase,
    /// The noise-free signal (`None` for a capture).
    pub clean_v: Option<Vec<f64>>,
    /// The signal the triggers saw.
    pub signal_v: Vec<f64>,
    /// The design's output.
    pub design_output_v: Vec<f64>,
    /// The comparator's output.
    pub baseline_output_v: Vec<f64>,
    /// The design's edges.
    pub design_edges: Vec<Edge>,
    /// The comparator's edges.
    pub baseline_edges: Vec<Edge>,
    /// The design's intended edges (noise-free signal).
    pub intended_edges: Vec<Edge>,
    /// The comparator's intended edges.
    pub intended_baseline_edges: Vec<Edge>,
    /// The summary.
    pub report: SignalReport,
}

fn summary(design: &TriggerDesign, outcome: TriggerOutcome, edges: &[Edge], comparison: Option<EdgeComparison>) -> TriggerSummary {
    let (mut sum, mut max) = (0.0_f64, 0.0_f64);
    for e in edges {
        let d = e.start_s - e.crossing_s;
        sum += d;
        max = max.max(d);
    }
    TriggerSummary {
        thresholds: design.thresholds,
        outcome,
        comparison,
        mean_delay_s: if edges.is_empty() { 0.0 } else { sum / edges.len() as f64 },
        max_delay_s: max,
    }
}

/// Input direction of an edge (rising input crosses VT+), from the design's sense.
fn input_rising(design: &TriggerDesign, e: &Edge) -> bool {
    (e.direction == EdgeDirection::Rising) == matches!(design.sense, crate::analysis::Sense::NonInverting)
}

/// The sine and DC level when the components are one sine plus DC levels only.
fn single_sine(components: &[Component]) -> Option<(f64, f64, f64)> {
    let mut sine = None;
    let mut dc = 0.0;
    for c in components {
        match *c {
            Component::Dc { level_v } => dc += level_v,
            Component::Sine { amplitude_v, frequency_hz, .. } => {
                if sine.is_some() {
                    return None;
                }
                sine = Some((amplitude_v.abs(), frequency_hz));
            }
            _ => return None,
        }
    }
    sine.map(|(a, f)| (a, f, dc))
}

/// σ0 and σ1 of a Gaussian source at the physical noise bandwidth `bandwidth_hz` (white: flat to
/// it; band-limited: its poles, one pole cut at it; see [`rice`]); `None` for hum and spikes.
fn physical_moments(source: &NoiseSource, bandwidth_hz: f64) -> Option<(f64, f64)> {
    match *source {
        NoiseSource::White { rms_v } => Some(rice::spectral_moments(rms_v, rice::Spectrum::Flat { bandwidth_hz })),
        NoiseSource::BandLimited { rms_v, corner_hz, poles } => {
            Some(rice::spectral_moments(rms_v, rice::Spectrum::Poles { corner_hz, poles, bandwidth_hz }))
        }
        _ => None,
    }
}

/// The hum sources' fundamentals and harmonics as sinusoids (the deterministic interference).
fn interference_terms(noise: &[NoiseSource]) -> Vec<rice::Sinusoid> {
    let mut out = Vec::new();
    for n in noise {
        if let NoiseSource::Hum { mains, amplitude_v, phase_deg, harmonics } = n {
            let f = mains.hz();
            out.push(rice::Sinusoid { amplitude_v: *amplitude_v, frequency_hz: f, phase_rad: phase_deg.to_radians() });
            for h in harmonics {
                out.push(rice::Sinusoid {
                    amplitude_v: amplitude_v * h.relative_amplitude,
                    frequency_hz: f * h.order as f64,
                    phase_rad: h.phase_deg.to_radians(),
                });
            }
        }
    }
    out.retain(|t| t.amplitude_v != 0.0);
    out
}

/// Runs the signal study with waveforms, for the page. With `capture` the imported samples are
/// used (no intended edges, noise figures, Rice check or sweep: a capture has no noise-free
/// version); otherwise the signal is generated from the settings.
pub fn run_signal(settings: &SignalSettings, design: &TriggerDesign, capture: Option<&Capture>) -> Result<SignalRun, DesignError> {
    run_inner(settings, design, capture, Waveforms::All, None)
}

/// Which waveforms a signal run returns besides its report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Waveforms {
    /// None: the report only (the edges are left out too).
    ReportOnly,
    /// The input waveforms (noise-free and as seen) and the edges; the two outputs are left
    /// empty, to be rendered from the edges where they are needed
    /// ([`super::display::for_display`] renders them already reduced, without holding them whole).
    InputsAndEdges,
    /// Everything, the outputs rendered at every sample.
    All,
}

/// [`run_signal`] with the input network's front end when one is given (as
/// [`run_signal_through`]), returning the waveforms `waveforms` asks for.
pub fn run_signal_waveforms(
    settings: &SignalSettings,
    design: &TriggerDesign,
    capture: Option<&Capture>,
    front: Option<&crate::input_network::noise::FrontEnd>,
    waveforms: Waveforms,
) -> Result<SignalRun, DesignError> {
    run_inner(settings, design, capture, waveforms, front)
}

/// [`run_signal`] / [`evaluate_signal`] with the input network's front end (clamp and RC filter,
/// [`crate::input_network::noise::FrontEnd`]) applied to the samples before the trigger, and its
/// filter in the spectral moments of Rice's formula; `design` then holds the field-referred
/// thresholds. `keep` keeps the waveforms.
pub fn run_signal_through(
    settings: &SignalSettings,
    design: &TriggerDesign,
    capture: Option<&Capture>,
    front: &crate::input_network::noise::FrontEnd,
    keep: bool,
) -> Result<SignalRun, DesignError> {
    run_inner(settings, design, capture, if keep { Waveforms::All } else { Waveforms::ReportOnly }, Some(front))
}

/// The signal study's summary, without keeping the waveforms.
pub fn evaluate_signal(settings: &SignalSettings, design: &TriggerDesign, capture: Option<&Capture>) -> Result<SignalReport, DesignError> {
    run_inner(settings, design, capture, Waveforms::ReportOnly, None).map(|r| r.report)
}

fn run_inner(
    settings: &SignalSettings,
    design: &TriggerDesign,
    capture: Option<&Capture>,
    waveforms: Waveforms,
    front: Option<&crate::input_network::noise::FrontEnd>,
) -> Result<SignalRun, DesignError> {
    let keep = waveforms != Waveforms::ReportOnly;
    design.validate()?;
    let timing = TimingModel::new(&settings.timing)?;
    let study = &settings.study;
    study.validate()?;
    let baseline_level = match study.baseline_level_v {
        Some(v) => finite("study.baseline_level_v", v)?,
        None => design.thresholds.centre_v(),
    };
    let baseline = design.comparator(baseline_level);
    let mut notes = Vec::new();

    let (time, clean, signal): (TimeBase, Option<Vec<f64>>, Vec<f64>) = match capture {
        Some(c) => {
            if c.volts.len() < 2 {
                return Err(DesignError::invalid("capture", "the capture needs at least two samples"));
            }
            c.times().validate(c.volts.len())?;
            if let Some(bad) = c.volts.iter().find(|v| !v.is_finite()) {
                return Err(DesignError::invalid("capture", format!("the capture holds a non-finite value ({bad})")));
            }
            notes.push(
                "imported capture: no noise-free version, so the design's false edges, the noise figures, the Rice check and the sweep are not available; the plain comparator's edges are counted against the design's edges".into(),
            );
            (TimeBase::Samples { times_s: c.time_s.clone() }, None, c.volts.clone())
        }
        None => {
            if let SignalSource::ImportedCapture { name } = &settings.source {
                return Err(DesignError::invalid(
                    "signal.source",
                    format!("the imported capture \"{name}\" is not stored in the record: load it on the page, or switch to a generated signal"),
                ));
            }
            let mut b = SignalBuffers::default();
            settings.definition.generate_into(&mut b)?;
            (settings.definition.time_base(), Some(b.clean_v), b.noisy_v)
        }
    };
    let (mut clean, mut signal) = (clean, signal);
    let times = time.view();
    // The noise sweep adds its noise before the network: it keeps the base unfiltered.
    let sweep_base: Option<Vec<f64>> = match (front, &settings.sweep, &clean) {
        (Some(_), Some(sw), Some(c)) => Some(if sw.keep_other_noise { signal.clone() } else { c.clone() }),
        _ => None,
    };
    if let Some(f) = front {
        // The input network's clamp and filter act before the trigger (on both versions, so the
        // intended edges carry the filter's delay too).
        f.apply(times, &mut signal);
        if let Some(c) = clean.as_mut() {
            f.apply(times, c);
        }
        notes.push(format!(
            "the signal passes the input network (clamp, filter τ = {:.4e} s) before the trigger; thresholds are at the field terminal",
            f.time_constant_s
        ));
    }
    let n = signal.len();
    let duration = times.at(n - 1) - times.at(0);

    let mut design_edges = Vec::new();
    let mut baseline_edges = Vec::new();
    let mut intended = Vec::new();
    let mut intended_baseline = Vec::new();
    let design_out = run_trigger(design, &timing, times, &signal, &mut design_edges);
    let base_out = run_trigger(&baseline, &timing, times, &signal, &mut baseline_edges);
    let (mut cmp_design, mut cmp_base) = (None, None);
    let (mut window, mut window_base) = (0.0, 0.0);
    if let Some(clean) = &clean {
        run_trigger(design, &timing, times, clean, &mut intended);
        run_trigger(&baseline, &timing, times, clean, &mut intended_baseline);
        window = study.match_window_s.unwrap_or_else(|| default_match_window_s(&intended, duration));
        window_base = study.match_window_s.unwrap_or_else(|| default_match_window_s(&intended_baseline, duration));
        cmp_design = Some(compare_edges(&design_edges, &intended, window));
        cmp_base = Some(compare_edges(&baseline_edges, &intended_baseline, window_base));
    } else if !design_edges.is_empty() {
        // A capture has no noise-free version: the plain comparator's edges are counted against
        // the design's own edges instead, so its chatter still shows as false edges.
        window_base = study.match_window_s.unwrap_or_else(|| default_match_window_s(&design_edges, duration));
        cmp_base = Some(compare_edges(&baseline_edges, &design_edges, window_base));
    }

    // Noise figures, at the physical noise bandwidth (not the sample rate).
    let def = &settings.definition;
    let bandwidth_hz = crate::limits::check(crate::limits::Quantity::Frequency, "study.noise_bandwidth_hz", study.noise_bandwidth_hz)?;
    let (s0, s1) = rice::combine_moments(def.noise.iter().filter_map(|s| match front {
        Some(f) => f.moments(s, bandwidth_hz),
        None => physical_moments(s, bandwidth_hz),
    }));
    let interference = interference_terms(&def.noise);
    let noise = clean.as_ref().map(|clean| {
        let (mut sum2, mut lo, mut hi) = (0.0, f64::INFINITY, f64::NEG_INFINITY);
        for (a, b) in signal.iter().zip(clean) {
            let d = a - b;
            sum2 += d * d;
            lo = lo.min(d);
            hi = hi.max(d);
        }
        NoiseSummary {
            gaussian_rms_v: s0,
            gaussian_sigma1_v_per_s: s1,
            measured_rms_v: (sum2 / n as f64).sqrt(),
            measured_peak_to_peak_v: if hi >= lo { hi - lo } else { 0.0 },
        }
    });

    // Slopes at the intended edges (or the actual ones for a capture).
    let slope_source: &[Edge] = if clean.is_some() { &intended } else { &design_edges };
    let slowest = |rising_input: bool| {
        slope_source
            .iter()
            .filter(|e| input_rising(design, e) == rising_input)
            .map(|e| e.slope_v_per_s.abs())
            .filter(|s| *s > 0.0)
            .fold(None, |m: Option<f64>, s| Some(m.map_or(s, |m| m.min(s))))
    };
    let (su, sl) = (slowest(true), slowest(false));
    let noise_rms = if clean.is_some() { s0 } else { 0.0 };
    let jitter = |s: Option<f64>| s.filter(|_| noise_rms > 0.0).map(|s| super::timing::jitter_rms_s(noise_rms, s));
    let slow_any = match (su, sl) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    let zero_crossing = if capture.is_none() {
        single_sine(&def.components).and_then(|(a, f, c)| {
            let d = summary(design, design_out, &intended, None).mean_delay_s;
            zero_crossing_error(a, f, c, design.thresholds, d).ok()
        })
    } else {
        None
    };
    let timing_summary = TimingSummary {
        slope_at_upper_v_per_s: su,
        slope_at_lower_v_per_s: sl,
        jitter_upper_s: jitter(su),
        jitter_lower_s: jitter(sl),
        centre_lag_s: slow_any.map(|s| design.thresholds.hysteresis_v() / 2.0 / s),
        zero_crossing,
    };

    // Minimum hysteresis (hum excursion + Rice's Gaussian term), checked by simulation at the
    // design's centre.
    let mut rice_check = None;
    if let (Some(_), Some(slope)) = (&clean, slow_any) {
        let target = study.target_false_edges_per_edge;
        if (s0 > 0.0 && s1 > 0.0) || !interference.is_empty() {
            match rice::min_hysteresis_with_interference(target, su, sl, s0, s1, &interference) {
                Some(need) => {
                    let h_min = need.total_v;
                    let trial = design.with_thresholds(Thresholds::from_centre_width(design.thresholds.centre_v(), h_min));
                    let mut trial_intended = Vec::new();
                    let mut trial_edges = Vec::new();
                    if let Some(clean) = &clean {
                        run_trigger(&trial, &timing, times, clean, &mut trial_intended);
                    }
                    run_trigger(&trial, &timing, times, &signal, &mut trial_edges);
                    let w = study.match_window_s.unwrap_or_else(|| default_match_window_s(&trial_intended, duration));
                    let c = compare_edges(&trial_edges, &trial_intended, w);
                    let h = design.thresholds.hysteresis_v();
                    let margin = h - need.interference_v;
                    rice_check = Some(RiceCheck {
                        target_false_edges_per_edge: target,
                        slowest_slope_v_per_s: slope,
                        noise_bandwidth_hz: bandwidth_hz,
                        sigma0_v: s0,
                        sigma1_v_per_s: s1,
                        interference_excursion_v: need.interference_v,
                        gaussian_term_v: need.gaussian_v,
                        min_hysteresis_v: h_min,
                        design_hysteresis_v: h,
                        design_meets_target: h >= h_min,
                        design_bound_false_edges_per_edge: (margin > 0.0 || need.interference_v == 0.0)
                            .then(|| rice::false_edges_per_edge_bound(margin.max(0.0), slope, s0, need.sigma1_effective_v_per_s))
                            .filter(|b| b.is_finite()),
                        simulated_at_min: c,
                        simulated_false_edges_per_edge_at_min: c.false_edges as f64 / c.intended_edges.max(1) as f64,
                    });
                }
                None => notes.push(format!("minimum hysteresis not computed: the target {target} must be above zero")),
            }
            if def.noise.iter().any(|n| matches!(n, NoiseSource::Spikes { .. })) {
                notes.push("the minimum hysteresis does not cover impulse spikes (neither Gaussian nor periodic): keep the hysteresis above the spike height or filter them".into());
            }
        } else {
            notes.push("minimum hysteresis not computed: the signal has no Gaussian noise (white or band-limited) and no hum".into());
        }
    } else if clean.is_some() {
        notes.push("minimum hysteresis not computed: the noise-free signal crosses no threshold".into());
    }

    let logic_dwell = study.logic_input.map(|l| logic_dwell_in(times, clean.as_deref().unwrap_or(&signal), l.vil_v, l.vih_v));

    let sweep = match (&settings.sweep, &clean) {
        (Some(sw), Some(clean_v)) => {
            let ctx = SweepContext {
                definition: def,
                design: *design,
                baseline,
                timing,
                intended: &intended,
                intended_baseline: &intended_baseline,
                window_s: window,
                window_baseline_s: window_base,
                front: front.copied(),
            };
            let base: &[f64] = match &sweep_base {
                Some(b) => b,
                None if sw.keep_other_noise => &signal,
                None => clean_v,
            };
            let mut scratch = Vec::new();
            let mut edges = Vec::new();
            Some(run_sweep(&ctx, sw, base, &mut scratch, &mut edges)?)
        }
        _ => None,
    };

    let report = SignalReport {
        samples: n,
        sample_rate_hz: if duration > 0.0 { (n - 1) as f64 / duration } else { 0.0 },
        duration_s: duration,
        baseline_level_v: baseline_level,
        noise,
        design: summary(design, design_out, &design_edges, cmp_design),
        baseline: summary(&baseline, base_out, &baseline_edges, cmp_base),
        rice: rice_check,
        timing: timing_summary,
        logic_dwell,
        sweep,
        notes,
        normal_sampler: crate::rng::NORMAL_SAMPLER,
    };
    let (mut design_output_v, mut baseline_output_v) = (Vec::new(), Vec::new());
    if waveforms == Waveforms::All {
        design_output_v = vec![0.0; n];
        baseline_output_v = vec![0.0; n];
        render_output(design, &timing, times, design_out.initial_output_high, &design_edges, &mut design_output_v);
        render_output(&baseline, &timing, times, base_out.initial_output_high, &baseline_edges, &mut baseline_output_v);
    }
    Ok(SignalRun {
        time,
        clean_v: if keep { clean } else { None },
        signal_v: if keep { signal } else { Vec::new() },
        design_output_v,
        baseline_output_v,
        design_edges: if keep { design_edges } else { Vec::new() },
        baseline_edges: if keep { baseline_edges } else { Vec::new() },
        intended_edges: if keep { intended } else { Vec::new() },
        intended_baseline_edges: if keep { intended_baseline } else { Vec::new() },
        report,
    })
}

/// The signal study of a design record's circuit (the JSON entry point's path).
pub fn evaluate_record_signal(circuit: &Topology, settings: &SignalSettings) -> Result<SignalReport, DesignError> {
    let design = TriggerDesign::from_circuit(circuit)?;
    evaluate_signal(settings, &design, None)
}

/// The applications that ride on the thresholds, as stored in the design record.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ApplicationSettings {
    /// The RC relaxation oscillator, when wanted.
    pub oscillator: Option<OscillatorSettings>,
    /// The RC switch debouncer, when wanted.
    pub debounce: Option<DebounceSettings>,
    /// Also simulate them in the time domain.
    pub simulate: bool,
    /// Oscillator cycles to simulate (2 to 200).
    pub oscillator_cycles: usize,
}

impl Default for ApplicationSettings {
    fn default() -> Self {
        ApplicationSettings { oscillator: None, debounce: None, simulate: true, oscillator_cycles: 5 }
    }
}

/// The oscillator's closed form and its simulation (no trace).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct OscillatorReport {
    /// Closed form.
    pub closed_form: OscillatorResult,
    /// Simulated period, seconds.
    pub simulated_period_s: Option<f64>,
    /// Simulated duty.
    pub simulated_duty: Option<f64>,
    /// Simulated first output-high time from a discharged capacitor, seconds.
    pub simulated_first_high_s: Option<f64>,
}

/// The debouncer's closed form and its simulation (no trace).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DebounceReport {
    /// Closed form.
    pub closed_form: DebounceResult,
    /// Simulated output edges on press.
    pub simulated_press_edges: Option<usize>,
    /// Simulated output edges on release.
    pub simulated_release_edges: Option<usize>,
    /// Simulated press delay, seconds.
    pub simulated_press_delay_s: Option<f64>,
    /// Simulated release delay, seconds.
    pub simulated_release_delay_s: Option<f64>,
}

/// The applications' results.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub struct ApplicationReport {
    /// The oscillator.
    pub oscillator: Option<OscillatorReport>,
    /// The debouncer.
    pub debounce: Option<DebounceReport>,
}

/// Evaluates the applications on a design; each part that fails gives its study name and error.
pub fn evaluate_application(design: &TriggerDesign, settings: &ApplicationSettings) -> (ApplicationReport, Vec<(String, DesignError)>) {
    let mut errors = Vec::new();
    let mut report = ApplicationReport::default();
    if let Some(o) = &settings.oscillator {
        match relaxation_oscillator(design, o) {
            Ok(closed_form) => {
                let sim = if settings.simulate {
                    match simulate_oscillator(design, o, settings.oscillator_cycles) {
                        Ok(s) => Some(s),
                        Err(e) => {
                            errors.push(("application.oscillator.simulation".to_string(), e));
                            None
                        }
                    }
                } else {
                    None
                };
                report.oscillator = Some(OscillatorReport {
                    closed_form,
                    simulated_period_s: sim.as_ref().map(|s| s.period_s),
                    simulated_duty: sim.as_ref().map(|s| s.duty),
                    simulated_first_high_s: sim.as_ref().map(|s| s.first_high_s),
                });
            }
            Err(e) => errors.push(("application.oscillator".to_string(), e)),
        }
    }
    if let Some(d) = &settings.debounce {
        match rc_debounce(design, d) {
            Ok(closed_form) => {
                let sim = if settings.simulate {
                    match simulate_debounce(design, d) {
                        Ok(s) => Some(s),
                        Err(e) => {
                            errors.push(("application.debounce.simulation".to_string(), e));
                            None
                        }
                    }
                } else {
                    None
                };
                report.debounce = Some(DebounceReport {
                    closed_form,
                    simulated_press_edges: sim.as_ref().map(|s| s.press_edges),
                    simulated_release_edges: sim.as_ref().map(|s| s.release_edges),
                    simulated_press_delay_s: sim.as_ref().and_then(|s| s.press_delay_s),
                    simulated_release_delay_s: sim.as_ref().and_then(|s| s.release_delay_s),
                });
            }
            Err(e) => errors.push(("application.debounce".to_string(), e)),
        }
    }
    (report, errors)
}

/// The applications of a design record's circuit (the JSON entry point's path).
pub fn evaluate_record_application(
    circuit: &Topology,
    settings: &ApplicationSettings,
) -> Result<(ApplicationReport, Vec<(String, DesignError)>), DesignError> {
    let design = TriggerDesign::from_circuit(circuit)?;
    Ok(evaluate_application(&design, settings))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::Sense;

    fn design() -> TriggerDesign {
        TriggerDesign {
            thresholds: Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 },
            output_high_v: 5.0,
            output_low_v: 0.0,
            sense: Sense::Inverting,
        }
    }

    #[test]
    fn default_settings_evaluate_and_serialise() {
        let s = SignalSettings { sweep: Some(SweepSettings { steps: 4, ..Default::default() }), ..Default::default() };
        let r = evaluate_signal(&s, &design(), None).unwrap();
        assert_eq!(r.samples, 5000);
        let c = r.design.comparison.unwrap();
        assert_eq!(c.intended_edges, 10);
        assert_eq!(c.false_edges, 0);
        assert!(r.rice.is_some());
        assert!(r.timing.zero_crossing.is_some());
        assert_eq!(r.sweep.as_ref().unwrap().points.len(), 4);
        // The report names its normal sampler; one kept before samplers were recorded reads as 1.
        assert_eq!(r.normal_sampler, crate::rng::NORMAL_SAMPLER);
        let mut kept = serde_json::to_value(&r).unwrap();
        kept.as_object_mut().unwrap().remove("normal_sampler");
        assert_eq!(serde_json::from_value::<SignalReport>(kept).unwrap().normal_sampler, 1);
        let json = serde_json::to_string(&s).unwrap();
        let back: SignalSettings = serde_json::from_str(&json).unwrap();
        assert_eq!(back, s);
        // Older or partial records load with defaults.
        let partial: SignalSettings = serde_json::from_str(r#"{"duration_s": 0.01}"#).unwrap();
        assert_eq!(partial.definition.duration_s, 0.01);
        assert_eq!(partial.definition.sample_rate_hz, 100e3);
    }

    #[test]
    fn demo_tachometer_design_beats_the_comparator() {
        // DOMAIN §7 scenario 1: 0.4–4.2 V at 60 Hz, 150 mV p-p 50 Hz hum, 25 mV RMS noise;
        // thresholds 2.9/1.7 V. The design stays clean; the comparator at 2.3 V chatters.
        let s = SignalSettings {
            definition: SignalDefinition {
                sample_rate_hz: 200e3,
                duration_s: 0.1,
                seed: 7,
                components: vec![
                    Component::Dc { level_v: 2.3 },
                    Component::Square { amplitude_v: 1.9, frequency_hz: 60.0, phase_deg: 0.0, duty: 0.5, rise_time_s: 2e-3 },
                ],
                noise: vec![
                    NoiseSource::Hum { mains: Default::default(), amplitude_v: 0.075, phase_deg: 0.0, harmonics: vec![] },
                    NoiseSource::White { rms_v: 0.025 },
                ],
            },
            ..Default::default()
        };
        let run = run_signal(&s, &design(), None).unwrap();
        let r = &run.report;
        assert_eq!(r.design.comparison.unwrap().false_edges, 0);
        assert!(r.baseline.comparison.unwrap().false_edges > 0);
        assert_eq!(run.design_output_v.len(), r.samples);
        assert!(r.timing.zero_crossing.is_none());
    }

    #[test]
    fn capture_in_record_without_samples_is_an_error() {
        let s = SignalSettings { source: SignalSource::ImportedCapture { name: "scope.csv".into() }, ..Default::default() };
        let e = evaluate_signal(&s, &design(), None).unwrap_err();
        assert!(e.to_string().contains("scope.csv"));
    }
}
