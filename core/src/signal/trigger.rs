//! The trigger simulation: a design's two thresholds applied to a sampled signal, with propagation
//! delay and finite output edges; the resulting edge list; and false edges counted against the
//! intended edges.
//!
//! **State rule.** The trigger remembers which side the input was last on. From "input low" it
//! switches when a sample reaches VT+ (v ≥ VT+); from "input high" when a sample falls below VT−
//! (v < VT−). With VT+ = VT− = L this is a plain comparator (output follows v ≥ L), the baseline.
//! The input crossing time is interpolated linearly between the two samples that straddle the
//! threshold. The output moves the other way for an inverting design.
//!
//! **Delay.** The output edge starts at crossing + delay. With a delay that depends on overdrive
//! (see [`super::timing::DelayModel`]) the overdrive is the largest excursion beyond the crossed
//! threshold seen so far after the crossing, and the edge starts at the first time t where
//! t − crossing ≥ delay(overdrive so far): the input must push long enough for the overdrive it
//! has reached. If the trigger switches again first, the pending edge is resolved with the
//! overdrive reached by then. An output edge never starts before the previous one (pulses shorter
//! than the delay still reach the output; a real device may swallow them).
//!
//! **False edges.** The intended edges are the same design's edges on the noise-free signal.
//! Each intended edge is matched to the first not-yet-used actual edge of the same direction
//! whose start lies within ± `window_s` of it, in time order. Then
//! - false edges = actual edges − matched (every edge that corresponds to no intended edge),
//! - missed edges = intended edges − matched.
//!
//! A noise-free signal therefore gives 0 false and 0 missed edges, and
//! |actual − intended| ≤ false + missed. The default window is half the smallest gap between
//! consecutive intended edges (so windows never overlap), or the whole record when there are
//! fewer than two intended edges.

pub use super::timing::InitialState;
use super::timing::{DelayModel, TransitionShape, TriggerTiming};
use super::Times;
use crate::analysis::{Sense, Thresholds};
use crate::error::{finite, DesignError};
use crate::topology::Circuit;
use serde::{Deserialize, Serialize};

/// What the trigger needs to know about a design: thresholds, output levels and sense.
/// Any topology, a Monte Carlo sample or a worst-case corner reduces to this.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TriggerDesign {
    /// VT+ and VT−, volts.
    pub thresholds: Thresholds,
    /// Output high level, volts.
    pub output_high_v: f64,
    /// Output low level, volts.
    pub output_low_v: f64,
    /// Output sense.
    pub sense: Sense,
}

impl TriggerDesign {
    /// The design of a circuit as entered (validated first).
    pub fn from_circuit<C: Circuit>(circuit: &C) -> Result<Self, DesignError> {
        circuit.validate()?;
        let thresholds = circuit.thresholds()?;
        let (output_high_v, output_low_v) = circuit.output_levels()?;
        let d = TriggerDesign { thresholds, output_high_v, output_low_v, sense: circuit.sense() };
        d.validate()?;
        Ok(d)
    }

    /// The plain comparator at `level_v` with the same output levels and sense (the baseline).
    pub fn comparator(&self, level_v: f64) -> TriggerDesign {
        TriggerDesign { thresholds: Thresholds { vt_upper_v: level_v, vt_lower_v: level_v }, ..*self }
    }

    /// The same output stage with other thresholds.
    pub fn with_thresholds(&self, thresholds: Thresholds) -> TriggerDesign {
        TriggerDesign { thresholds, ..*self }
    }

    /// Checks that the values are finite and VT+ ≥ VT−.
    pub fn validate(&self) -> Result<(), DesignError> {
        finite("vt_upper_v", self.thresholds.vt_upper_v)?;
        finite("vt_lower_v", self.thresholds.vt_lower_v)?;
        finite("output_high_v", self.output_high_v)?;
        finite("output_low_v", self.output_low_v)?;
        if self.thresholds.vt_upper_v < self.thresholds.vt_lower_v {
            return Err(DesignError::inconsistent(format!(
                "VT+ ({} V) is below VT− ({} V): the trigger needs VT+ ≥ VT−",
                self.thresholds.vt_upper_v, self.thresholds.vt_lower_v
            )));
        }
        Ok(())
    }

    fn output_high_when_input_high(&self) -> bool {
        matches!(self.sense, Sense::NonInverting)
    }
}

/// Direction of an output edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EdgeDirection {
    /// Output going from low to high.
    Rising,
    /// Output going from high to low.
    Falling,
}

/// One output edge.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Edge {
    /// When the input crossed the threshold (interpolated), seconds.
    pub crossing_s: f64,
    /// When the output starts to move (crossing + propagation delay), seconds.
    pub start_s: f64,
    /// When a full-swing output transition would pass its 50 % level, seconds.
    pub mid_s: f64,
    /// Output direction.
    pub direction: EdgeDirection,
    /// Input slope across the crossing interval, volts per second.
    pub slope_v_per_s: f64,
    /// Overdrive that set the delay, volts (0 when the delay does not depend on overdrive).
    pub overdrive_v: f64,
}

/// Summary of one trigger run (the edges themselves go to the caller's vector).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TriggerOutcome {
    /// Output level state before the first edge: true = high.
    pub initial_output_high: bool,
    /// Output state after the last edge.
    pub final_output_high: bool,
    /// Number of edges.
    pub edges: usize,
    /// Rising output edges.
    pub rising: usize,
    /// Falling output edges.
    pub falling: usize,
}

/// The timing settings, checked and turned into evaluable form once per run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimingModel {
    /// The delay law.
    pub delay: DelayModel,
    /// Shape of a rising output transition.
    pub rise: TransitionShape,
    /// Shape of a falling output transition.
    pub fall: TransitionShape,
    /// Initial state rule.
    pub initial_state: InitialState,
}

impl TimingModel {
    /// Checks the settings and prepares them.
    pub fn new(timing: &TriggerTiming) -> Result<Self, DesignError> {
        timing.output.validate()?;
        let delay = DelayModel::new(&timing.delay)?;
        let (rise, fall) = timing.output.shapes();
        Ok(TimingModel { delay, rise, fall, initial_state: timing.initial_state })
    }

    /// No delay, instant edges, automatic initial state.
    pub fn ideal() -> Self {
        TimingModel {
            delay: DelayModel { reference_delay_s: 0.0, reference_overdrive_v: 1.0, exponent: 0.0, min_overdrive_v: 0.0 },
            rise: TransitionShape::Linear { duration_s: 0.0 },
            fall: TransitionShape::Linear { duration_s: 0.0 },
            initial_state: InitialState::Auto,
        }
    }

    fn mid_delay_s(&self, d: EdgeDirection) -> f64 {
        match d {
            EdgeDirection::Rising => self.rise.to_mid_s(),
            EdgeDirection::Falling => self.fall.to_mid_s(),
        }
    }
}

struct Pending {
    index: usize,
    crossing_s: f64,
    threshold_v: f64,
    upward: bool,
    overdrive_v: f64,
}

/// Runs the trigger over `volts` sampled at `times`, writing the edges into `edges` (cleared
/// first; reuse the vector to avoid allocation). `volts` must be finite; `times` must have passed
/// [`Times::validate`]. Allocation-free apart from growing `edges`.
pub fn run_trigger(
    design: &TriggerDesign,
    timing: &TimingModel,
    times: Times<'_>,
    volts: &[f64],
    edges: &mut Vec<Edge>,
) -> TriggerOutcome {
    edges.clear();
    let up = design.thresholds.vt_upper_v;
    let lo = design.thresholds.vt_lower_v;
    let high_follows = design.output_high_when_input_high();
    let mut input_high = match timing.initial_state {
        InitialState::Auto => volts.first().is_some_and(|&v| v >= up),
        InitialState::InputLow => false,
        InitialState::InputHigh => true,
    };
    let initial_output_high = input_high == high_follows;
    let overdrive = timing.delay.depends_on_overdrive();
    let fixed_delay = timing.delay.delay_s(0.0);
    let mut last_start = f64::NEG_INFINITY;
    let mut pending: Option<Pending> = None;
    let (mut rising, mut falling) = (0usize, 0usize);

    if volts.is_empty() {
        return TriggerOutcome { initial_output_high, final_output_high: initial_output_high, edges: 0, rising: 0, falling: 0 };
    }
    // Records the switch whose threshold crossing lies between samples i − 1 and i.
    let switch_at = |i: usize, edges: &mut Vec<Edge>, input_high: bool, last_start: &mut f64| -> (EdgeDirection, f64, f64) {
        let (v, prev) = (volts[i], volts[i - 1]);
        let level = if input_high { up } else { lo };
        let (t0, t1) = (times.at(i - 1), times.at(i));
        let dv = v - prev;
        let f = if dv != 0.0 { ((level - prev) / dv).clamp(0.0, 1.0) } else { 1.0 };
        let crossing = t0 + f * (t1 - t0);
        let slope = if t1 > t0 { dv / (t1 - t0) } else { 0.0 };
        let direction = if input_high == high_follows { EdgeDirection::Rising } else { EdgeDirection::Falling };
        let exc = if input_high { v - up } else { lo - v };
        let start = if overdrive { crossing } else { (crossing + fixed_delay).max(*last_start) };
        if !overdrive {
            *last_start = start;
        }
        edges.push(Edge {
            crossing_s: crossing,
            start_s: start,
            mid_s: start + timing.mid_delay_s(direction),
            direction,
            slope_v_per_s: slope,
            overdrive_v: if overdrive { exc } else { 0.0 },
        });
        (direction, crossing, exc)
    };
    if !overdrive {
        // Fast path: scan for the next sample beyond the threshold that applies in each state.
        let mut i = 1;
        while i < volts.len() {
            let found = if input_high {
                volts[i..].iter().position(|&v| v < lo)
            } else {
                volts[i..].iter().position(|&v| v >= up)
            };
            let Some(k) = found else { break };
            let j = i + k;
            input_high = !input_high;
            match switch_at(j, edges, input_high, &mut last_start).0 {
                EdgeDirection::Rising => rising += 1,
                EdgeDirection::Falling => falling += 1,
            }
            i = j + 1;
        }
    } else {
        for (i, &v) in volts.iter().enumerate().skip(1) {
            if let Some(p) = pending.as_mut() {
                let exc = if p.upward { v - p.threshold_v } else { p.threshold_v - v };
                if exc > p.overdrive_v {
                    p.overdrive_v = exc;
                }
                let d = timing.delay.delay_s(p.overdrive_v);
                if times.at(i) - p.crossing_s >= d {
                    resolve(edges, p, d, timing, &mut last_start);
                    pending = None;
                }
            }
            let switched = if input_high { v < lo } else { v >= up };
            if switched {
                if let Some(p) = pending.take() {
                    let d = timing.delay.delay_s(p.overdrive_v);
                    resolve(edges, &p, d, timing, &mut last_start);
                }
                input_high = !input_high;
                let (direction, crossing, exc) = switch_at(i, edges, input_high, &mut last_start);
                match direction {
                    EdgeDirection::Rising => rising += 1,
                    EdgeDirection::Falling => falling += 1,
                }
                pending = Some(Pending {
                    index: edges.len() - 1,
                    crossing_s: crossing,
                    threshold_v: if input_high { up } else { lo },
                    upward: input_high,
                    overdrive_v: exc,
                });
            }
        }
        if let Some(p) = pending.take() {
            let d = timing.delay.delay_s(p.overdrive_v);
            resolve(edges, &p, d, timing, &mut last_start);
        }
    }
    TriggerOutcome {
        initial_output_high,
        final_output_high: input_high == high_follows,
        edges: edges.len(),
        rising,
        falling,
    }
}

fn resolve(edges: &mut [Edge], p: &Pending, delay_s: f64, timing: &TimingModel, last_start: &mut f64) {
    if let Some(e) = edges.get_mut(p.index) {
        let start = (p.crossing_s + delay_s).max(*last_start);
        *last_start = start;
        e.start_s = start;
        e.mid_s = start + timing.mid_delay_s(e.direction);
        e.overdrive_v = p.overdrive_v;
    }
}

/// Writes the output waveform for a trigger run into `out` (one value per sample of `times`):
/// each edge moves the output from wherever it is toward the new level with the edge's shape
/// (straight ramps at the full-swing rate, or an exponential approach). Allocation-free.
pub fn render_output(
    design: &TriggerDesign,
    timing: &TimingModel,
    times: Times<'_>,
    initial_output_high: bool,
    edges: &[Edge],
    out: &mut [f64],
) {
    OutputRenderer::new(design, timing, initial_output_high, edges).fill(times, out);
}

/// [`render_output`] a stretch of samples at a time: each [`OutputRenderer::fill`] writes the
/// samples that follow the last one written, so a waveform can be reduced for display as it is
/// made, without holding all of it. Any split into stretches gives the same values as one call.
#[derive(Debug, Clone)]
pub struct OutputRenderer<'a> {
    high_v: f64,
    low_v: f64,
    swing_v: f64,
    rise: TransitionShape,
    fall: TransitionShape,
    edges: &'a [Edge],
    /// Index of the next sample to write.
    next: usize,
    /// Next edge not yet started.
    k: usize,
    seg_t0: f64,
    seg_v0: f64,
    target: f64,
    shape: TransitionShape,
    /// Whether the present transition has reached its target.
    settled: bool,
}

impl<'a> OutputRenderer<'a> {
    /// A renderer that starts at sample 0, the output at its initial level.
    pub fn new(design: &TriggerDesign, timing: &TimingModel, initial_output_high: bool, edges: &'a [Edge]) -> Self {
        let (high_v, low_v) = (design.output_high_v, design.output_low_v);
        let start = if initial_output_high { high_v } else { low_v };
        OutputRenderer {
            high_v,
            low_v,
            swing_v: (high_v - low_v).abs(),
            rise: timing.rise,
            fall: timing.fall,
            edges,
            next: 0,
            k: 0,
            seg_t0: f64::NEG_INFINITY,
            seg_v0: start,
            target: start,
            shape: TransitionShape::Linear { duration_s: 0.0 },
            settled: true,
        }
    }

    /// The output at time `t` of the transition from `v0` (at `t0`) toward `target`.
    fn value(&self, t: f64, t0: f64, v0: f64, target: f64, shape: TransitionShape) -> f64 {
        if v0 == target {
            return target;
        }
        match shape {
            TransitionShape::Linear { duration_s } => {
                if duration_s <= 0.0 {
                    return target;
                }
                let step = self.swing_v / duration_s * (t - t0);
                if target > v0 {
                    (v0 + step).min(target)
                } else {
                    (v0 - step).max(target)
                }
            }
            TransitionShape::Exponential { tau_s } => {
                let x = (t - t0) / tau_s;
                if !(tau_s > 0.0) || x > 40.0 {
                    target
                } else {
                    target - (target - v0) * libm::exp(-x)
                }
            }
        }
    }

    /// Writes the next `out.len()` samples of the waveform (their times from `times`).
    pub fn fill(&mut self, times: Times<'_>, out: &mut [f64]) {
        let first = self.next;
        for (i, o) in out.iter_mut().enumerate() {
            let t = times.at(first + i);
            while self.k < self.edges.len() && self.edges[self.k].start_s <= t {
                let e = self.edges[self.k];
                self.seg_v0 = self.value(e.start_s, self.seg_t0, self.seg_v0, self.target, self.shape);
                self.seg_t0 = e.start_s;
                let high = e.direction == EdgeDirection::Rising;
                self.target = if high { self.high_v } else { self.low_v };
                self.shape = if high { self.rise } else { self.fall };
                self.settled = false;
                self.k += 1;
            }
            // Once a transition has reached its target it stays there until the next edge: both
            // shapes approach the target monotonically and rounding is monotone, so the settled
            // samples are the target exactly, without evaluating the shape.
            *o = if self.settled {
                self.target
            } else {
                let v = self.value(t, self.seg_t0, self.seg_v0, self.target, self.shape);
                self.settled = v == self.target;
                v
            };
        }
        self.next = first + out.len();
    }
}

/// Actual edges compared with the intended ones (see the module documentation for the rule).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct EdgeComparison {
    /// Edges on the signal as given.
    pub edges: usize,
    /// Edges of the same design on the noise-free signal.
    pub intended_edges: usize,
    /// Intended edges that found a matching actual edge.
    pub matched: usize,
    /// Actual edges that match no intended edge.
    pub false_edges: usize,
    /// Intended edges with no matching actual edge.
    pub missed_edges: usize,
    /// Matching window used, seconds.
    pub window_s: f64,
}

/// The default matching window: half the smallest gap between consecutive intended edges, or
/// `duration_s` when there are fewer than two.
pub fn default_match_window_s(intended: &[Edge], duration_s: f64) -> f64 {
    let gap = intended.windows(2).map(|w| (w[1].start_s - w[0].start_s).abs()).fold(f64::INFINITY, f64::min);
    if gap.is_finite() {
        0.5 * gap
    } else {
        duration_s.abs()
    }
}

/// Counts false and missed edges of `actual` against `intended` within ± `window_s`. Allocation-free.
pub fn compare_edges(actual: &[Edge], intended: &[Edge], window_s: f64) -> EdgeComparison {
    let w = if window_s.is_finite() && window_s >= 0.0 { window_s } else { 0.0 };
    let mut j = 0;
    let mut matched = 0;
    for e in intended {
        while j < actual.len() && actual[j].start_s < e.start_s - w {
            j += 1;
        }
        let mut k = j;
        while k < actual.len() && actual[k].start_s <= e.start_s + w {
            if actual[k].direction == e.direction {
                matched += 1;
                j = k + 1;
                break;
            }
            k += 1;
        }
    }
    EdgeComparison {
        edges: actual.len(),
        intended_edges: intended.len(),
        matched,
        false_edges: actual.len() - matched,
        missed_edges: intended.len() - matched,
        window_s: w,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::signal::generate::{Component, SignalDefinition};
    use crate::signal::noise::NoiseSource;
    use crate::signal::timing::{DelaySpec, OutputStage};
    use std::f64::consts::PI;

    fn design(up: f64, lo: f64, sense: Sense) -> TriggerDesign {
        TriggerDesign { thresholds: Thresholds { vt_upper_v: up, vt_lower_v: lo }, output_high_v: 5.0, output_low_v: 0.0, sense }
    }

    fn sine(noise: f64) -> SignalDefinition {
        SignalDefinition {
            sample_rate_hz: 1e5,
            duration_s: 0.1,
            seed: 4,
            components: vec![Component::Sine { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0 }],
            noise: if noise > 0.0 { vec![NoiseSource::White { rms_v: noise }] } else { vec![] },
        }
    }

    #[test]
    fn sine_crossings_land_at_arcsine_times() {
        // A sine through VT+ = 0.5 switches at t = arcsin(0.5)/(2πf) after each rising zero
        // crossing (DOMAIN §4). Linear interpolation error is O(Δt²·curvature): well under 1e-8 s here.
        let g = sine(0.0).generate().unwrap();
        let d = design(0.5, -0.3, Sense::NonInverting);
        let mut edges = Vec::new();
        let o = run_trigger(&d, &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut edges);
        assert_eq!(o.edges, 10);
        assert_eq!(o.rising, 5);
        let t_up = (0.5f64).asin() / (2.0 * PI * 50.0);
        let t_dn = (PI + (0.3f64).asin()) / (2.0 * PI * 50.0);
        for (k, e) in edges.iter().enumerate() {
            let period = (k / 2) as f64 * 0.02;
            let expect = if e.direction == EdgeDirection::Rising { t_up } else { t_dn } + period;
            assert!((e.crossing_s - expect).abs() < 1e-8, "{k}: {} vs {expect}", e.crossing_s);
        }
        // Inverting sense flips directions only.
        let mut e2 = Vec::new();
        run_trigger(&design(0.5, -0.3, Sense::Inverting), &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut e2);
        assert_eq!(e2.len(), edges.len());
        assert!(e2.iter().zip(&edges).all(|(a, b)| a.direction != b.direction && a.crossing_s == b.crossing_s));
    }

    #[test]
    fn noise_free_gives_no_false_edges_and_noise_gives_some_to_the_comparator() {
        let clean = sine(0.0).generate().unwrap();
        let noisy = sine(0.05).generate().unwrap();
        let times = clean.time.view();
        let d = design(0.3, -0.3, Sense::Inverting);
        let m = TimingModel::ideal();
        let (mut a, mut b) = (Vec::new(), Vec::new());
        run_trigger(&d, &m, times, &clean.buffers.clean_v, &mut a);
        run_trigger(&d, &m, times, &clean.buffers.clean_v, &mut b);
        let w = default_match_window_s(&a, 0.1);
        let c = compare_edges(&b, &a, w);
        assert_eq!((c.false_edges, c.missed_edges, c.matched), (0, 0, a.len()));
        // Hysteresis 0.6 V against 0.05 V RMS noise (p-p ≈ 0.4 V on 10 000 samples): clean.
        run_trigger(&d, &m, times, &noisy.buffers.noisy_v, &mut b);
        let c = compare_edges(&b, &a, w);
        assert_eq!((c.false_edges, c.missed_edges), (0, 0));
        // The plain comparator at 0 V chatters.
        let base = d.comparator(0.0);
        run_trigger(&base, &m, times, &clean.buffers.clean_v, &mut a);
        run_trigger(&base, &m, times, &noisy.buffers.noisy_v, &mut b);
        let c = compare_edges(&b, &a, default_match_window_s(&a, 0.1));
        assert!(c.false_edges > 0, "{c:?}");
    }

    #[test]
    fn fixed_delay_and_edges_in_output_waveform() {
        let g = sine(0.0).generate().unwrap();
        let d = design(0.5, -0.5, Sense::NonInverting);
        let timing = TriggerTiming {
            delay: DelaySpec::Fixed { delay_s: 1e-3 },
            output: OutputStage::PushPull { rise_time_s: 0.8e-3, fall_time_s: 0.4e-3 },
            ..Default::default()
        };
        let m = TimingModel::new(&timing).unwrap();
        let mut edges = Vec::new();
        let o = run_trigger(&d, &m, g.time.view(), &g.buffers.clean_v, &mut edges);
        assert!(edges.iter().all(|e| (e.start_s - e.crossing_s - 1e-3).abs() < 1e-15));
        assert!((edges[0].mid_s - edges[0].start_s - 0.5e-3).abs() < 1e-15);
        let mut out = vec![0.0; g.buffers.clean_v.len()];
        render_output(&d, &m, g.time.view(), o.initial_output_high, &edges, &mut out);
        // Half-way through the first rise (1 ms linear 0–100 %), the output is at 2.5 V.
        let i = ((edges[0].mid_s) * 1e5).round() as usize;
        assert!((out[i] - 2.5).abs() < 0.03, "{}", out[i]);
        assert_eq!(out[0], 0.0);
        assert!(out.iter().all(|v| (0.0..=5.0).contains(v)));
    }

    #[test]
    fn settled_samples_are_the_same_bits_as_evaluating_every_sample() {
        // Output transitions slower than the noise-driven edges (some interrupted), one shape of
        // each kind; every sample is checked against the shape evaluated from its segment's start.
        let g = sine(0.4).generate().unwrap();
        let d = design(0.2, -0.2, Sense::NonInverting);
        let mut m = TimingModel::ideal();
        m.rise = TransitionShape::Exponential { tau_s: 2e-4 };
        m.fall = TransitionShape::Linear { duration_s: 5e-4 };
        let times = g.time.view();
        let mut edges = Vec::new();
        let o = run_trigger(&d, &m, times, &g.buffers.noisy_v, &mut edges);
        assert!(edges.len() > 4, "{}", edges.len());
        let mut out = vec![0.0; g.buffers.noisy_v.len()];
        render_output(&d, &m, times, o.initial_output_high, &edges, &mut out);
        let swing = d.output_high_v - d.output_low_v;
        let shape_at = |t: f64, t0: f64, v0: f64, target: f64, shape: TransitionShape| match shape {
            _ if v0 == target => target,
            TransitionShape::Linear { duration_s } => {
                let step = swing / duration_s * (t - t0);
                if target > v0 { (v0 + step).min(target) } else { (v0 - step).max(target) }
            }
            TransitionShape::Exponential { tau_s } => {
                let x = (t - t0) / tau_s;
                if x > 40.0 { target } else { target - (target - v0) * libm::exp(-x) }
            }
        };
        let level = |h: bool| if h { d.output_high_v } else { d.output_low_v };
        let (mut t0, mut v0, mut target, mut shape) = (f64::NEG_INFINITY, level(o.initial_output_high), level(o.initial_output_high), m.rise);
        let mut k = 0;
        let mut settled_samples = 0;
        for (i, &got) in out.iter().enumerate() {
            let t = times.at(i);
            while k < edges.len() && edges[k].start_s <= t {
                v0 = shape_at(edges[k].start_s, t0, v0, target, shape);
                t0 = edges[k].start_s;
                let high = edges[k].direction == EdgeDirection::Rising;
                (target, shape) = (level(high), if high { m.rise } else { m.fall });
                k += 1;
            }
            let want = shape_at(t, t0, v0, target, shape);
            assert_eq!(got.to_bits(), want.to_bits(), "sample {i}: {got} vs {want}");
            settled_samples += (want == target) as usize;
        }
        assert!(settled_samples > out.len() / 10 && settled_samples < out.len(), "{settled_samples} of {}", out.len());
    }

    #[test]
    fn overdrive_delay_is_longer_for_slow_edges() {
        // Two-point law from 5 mV → 1 µs to 100 mV → 0.2 µs. A slow sine builds overdrive slowly,
        // a fast one quickly, so the slow one's delay is longer.
        let spec = DelaySpec::TwoPoint { overdrive_a_v: 0.005, delay_a_s: 1e-6, overdrive_b_v: 0.1, delay_b_s: 0.2e-6 };
        let m = TimingModel::new(&TriggerTiming { delay: spec, ..Default::default() }).unwrap();
        let d = design(0.0, 0.0, Sense::NonInverting);
        let delay_for = |f: f64| {
            let s = SignalDefinition {
                sample_rate_hz: 1e8,
                duration_s: 3e-4,
                seed: 1,
                components: vec![Component::Sine { amplitude_v: 1.0, frequency_hz: f, phase_deg: -90.0 }],
                noise: vec![],
            };
            let g = s.generate().unwrap();
            let mut e = Vec::new();
            run_trigger(&d, &m, g.time.view(), &g.buffers.clean_v, &mut e);
            e[0].start_s - e[0].crossing_s
        };
        let slow = delay_for(1e3);
        let fast = delay_for(1e5);
        assert!(slow > fast, "{slow} {fast}");
        // Fixed point of t = delay(slope·t): about 0.92 µs and 0.18 µs for these slopes.
        assert!((slow - 0.92e-6).abs() < 0.05e-6 && (fast - 0.184e-6).abs() < 0.02e-6, "{slow} {fast}");
    }

    #[test]
    fn matching_counts_missed_and_extra() {
        let e = |t: f64, r: bool| Edge {
            crossing_s: t,
            start_s: t,
            mid_s: t,
            direction: if r { EdgeDirection::Rising } else { EdgeDirection::Falling },
            slope_v_per_s: 0.0,
            overdrive_v: 0.0,
        };
        let intended = [e(1.0, true), e(2.0, false), e(3.0, true)];
        let actual = [e(1.01, true), e(1.02, false), e(1.03, true), e(3.0, true)];
        let c = compare_edges(&actual, &intended, 0.5);
        assert_eq!((c.matched, c.false_edges, c.missed_edges), (2, 2, 1));
        assert_eq!(default_match_window_s(&intended, 10.0), 0.5);
    }
}
