//! The signal test's output at the load when output dynamics are given: each output edge of the
//! trigger run is a slew-limited ramp of the device's source (rate swing/ramp at the load) seen
//! through the load's first-order lag τ (see [`crate::output_dynamics`]). The waveform is
//! integrated exactly between events: over an interval where the source moves linearly
//! (u(t) = u0 + ρ·t), the load node obeys v(Δ) = u0 + ρΔ − ρτ + (v0 − u0 + ρτ)·e^(−Δ/τ)
//! (first-order response to a ramp, closed form), so an edge that interrupts the previous one
//! starts from wherever the source and the load are. Without output dynamics the signal test keeps
//! its ideal (or timing-shaped) output.

use super::report::SignalRun;
use super::trigger::{Edge, EdgeDirection, TriggerDesign};
use super::Times;
use crate::output_dynamics::OutputDynamicsReport;

/// One direction's law at the load: source rate (V/s, infinite for a step) and time constant.
#[derive(Debug, Clone, Copy)]
struct Law {
    rate_v_per_s: f64,
    tau_s: f64,
}

/// Source u and load v of the output.
struct State {
    u: f64,
    v: f64,
    target: f64,
    law: Law,
}

impl State {
    /// Advances by `dt` seconds, exactly (module doc).
    fn advance(&mut self, mut dt: f64) {
        while dt > 0.0 {
            let gap = self.target - self.u;
            let (rho, span) = if gap == 0.0 {
                (0.0, dt)
            } else if !self.law.rate_v_per_s.is_finite() {
                self.u = self.target;
                continue;
            } else {
                let rho = self.law.rate_v_per_s.copysign(gap);
                (rho, dt.min(gap / rho))
            };
            let tau = self.law.tau_s;
            let u_end = if span < dt { self.target } else { self.u + rho * span };
            self.v = if tau > 0.0 {
                let k = libm::exp(-span / tau);
                self.u + rho * span - rho * tau + (self.v - self.u + rho * tau) * k
            } else {
                u_end
            };
            self.u = u_end;
            dt -= span;
            if span <= 0.0 {
                break;
            }
        }
    }
}

/// Writes the output at the load for a trigger run into `out` (one value per sample of `times`),
/// from the edges' start times (which already include the propagation delay of the signal
/// study's timing) and the loaded levels and edge laws of `report`. Allocation-free.
pub fn render_loaded_output(
    report: &OutputDynamicsReport,
    times: Times<'_>,
    initial_output_high: bool,
    edges: &[Edge],
    out: &mut [f64],
) {
    LoadedOutputRenderer::new(report, times, initial_output_high, edges).fill(times, out);
}

/// [`render_loaded_output`] a stretch of samples at a time: each [`LoadedOutputRenderer::fill`]
/// writes the samples that follow the last one written (the same values as one call, whatever
/// the split), so the waveform can be reduced for display as it is made.
pub struct LoadedOutputRenderer<'a> {
    high_v: f64,
    low_v: f64,
    rise: Law,
    fall: Law,
    edges: &'a [Edge],
    state: State,
    /// Index of the next sample to write.
    next: usize,
    /// Next edge not yet started.
    k: usize,
    /// Time the state stands at.
    t_prev: f64,
}

impl<'a> LoadedOutputRenderer<'a> {
    /// A renderer that starts at sample 0 of `times`, source and load at the initial level.
    pub fn new(report: &OutputDynamicsReport, times: Times<'_>, initial_output_high: bool, edges: &'a [Edge]) -> Self {
        let (high_v, low_v) = (report.load.output_high_v, report.load.output_low_v);
        let law = |e: &crate::output_dynamics::EdgeTiming| Law {
            rate_v_per_s: if e.ramp_s > 0.0 { e.swing_v / e.ramp_s } else { f64::INFINITY },
            tau_s: e.tau_s,
        };
        let (rise, fall) = (law(&report.rise), law(&report.fall));
        let start = if initial_output_high { high_v } else { low_v };
        LoadedOutputRenderer {
            high_v,
            low_v,
            rise,
            fall,
            edges,
            state: State { u: start, v: start, target: start, law: rise },
            next: 0,
            k: 0,
            t_prev: times.at(0),
        }
    }

    /// Writes the next `out.len()` samples of the waveform (their times from `times`).
    pub fn fill(&mut self, times: Times<'_>, out: &mut [f64]) {
        let first = self.next;
        let s = &mut self.state;
        for (i, o) in out.iter_mut().enumerate() {
            let t = times.at(first + i);
            while self.k < self.edges.len() && self.edges[self.k].start_s <= t {
                let e = &self.edges[self.k];
                let at = e.start_s.max(self.t_prev);
                s.advance(at - self.t_prev);
                self.t_prev = at;
                let rising = e.direction == EdgeDirection::Rising;
                s.target = if rising { self.high_v } else { self.low_v };
                s.law = if rising { self.rise } else { self.fall };
                self.k += 1;
            }
            s.advance(t - self.t_prev);
            self.t_prev = t;
            *o = s.v;
        }
        self.next = first + out.len();
    }
}

/// Replaces the design's simulated output of a full-resolution `run` by the output at the load
/// (the hook the signal study calls when the record has output dynamics). The edges, counts and
/// timing figures are those of the trigger itself and stay as they are.
pub fn apply_output_dynamics(run: &mut SignalRun, design: &TriggerDesign, report: &OutputDynamicsReport) {
    let _ = design;
    let initial = run.report.design.outcome.initial_output_high;
    let times = run.time.view();
    let mut out = std::mem::take(&mut run.design_output_v);
    render_loaded_output(report, times, initial, &run.design_edges, &mut out);
    run.design_output_v = out;
}

/// [`super::report::run_signal`] with the design's output at the load when output dynamics are
/// given (slew- and RC-limited, [`apply_output_dynamics`]); `None` keeps the ideal output.
pub fn run_signal_with_output(
    settings: &super::report::SignalSettings,
    design: &super::trigger::TriggerDesign,
    capture: Option<&super::csv::Capture>,
    output: Option<&crate::output_dynamics::OutputDynamicsReport>,
) -> Result<SignalRun, crate::error::DesignError> {
    run_signal_chain(settings, design, capture, None, output)
}

/// The whole chain of the signal test: the input network's front end (when given, see
/// [`super::report::run_signal_through`]), the trigger, then the output at the load (when output
/// dynamics are given, see [`run_signal_with_output`]).
pub fn run_signal_chain(
    settings: &super::report::SignalSettings,
    design: &super::trigger::TriggerDesign,
    capture: Option<&super::csv::Capture>,
    front: Option<&crate::input_network::noise::FrontEnd>,
    output: Option<&crate::output_dynamics::OutputDynamicsReport>,
) -> Result<SignalRun, crate::error::DesignError> {
    let mut run = match front {
        Some(f) => super::report::run_signal_through(settings, design, capture, f, true)?,
        None => super::report::run_signal(settings, design, capture)?,
    };
    if let Some(r) = output {
        apply_output_dynamics(&mut run, design, r);
    }
    Ok(run)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::output_dynamics::{lagged_ramp, output_dynamics, OutputDynamicsSettings};
    use crate::topology::inverting::InvertingSchmitt;
    use crate::topology::Topology;

    #[test]
    fn one_edge_follows_the_closed_form_and_an_interrupted_edge_stays_continuous() {
        let c = Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, crate::device::Comparator::ideal(5.0)));
        let s = OutputDynamicsSettings { slew_rate_v_per_us: Some(5.0), output_resistance_ohm: 100.0, load_capacitance_f: 5e-9, ..Default::default() };
        let r = output_dynamics(&c, &s).unwrap();
        let edge = |start_s: f64, direction| Edge { crossing_s: start_s, start_s, mid_s: start_s, direction, slope_v_per_s: 0.0, overdrive_v: 0.0 };
        let times = Times::Uniform { start_s: 0.0, step_s: 1e-8 };
        let mut out = vec![0.0; 400];
        render_loaded_output(&r, times, true, &[edge(1e-6, EdgeDirection::Falling)], &mut out);
        // Falling from 5 V: v = 5 − 5·y(t − 1 µs) with y the lagged ramp (ramp 1 µs, τ 0.5 µs).
        for (i, v) in out.iter().enumerate() {
            let t = i as f64 * 1e-8;
            let expect = 5.0 - 5.0 * lagged_ramp(t - 1e-6, 1e-6, 0.5e-6);
            assert!((v - expect).abs() < 1e-9, "t {t}: {v} vs {expect}");
        }
        // A rising edge 0.3 µs into the fall: the output turns without a jump and settles at 5 V.
        let mut out = vec![0.0; 1000];
        render_loaded_output(&r, times, true, &[edge(1e-6, EdgeDirection::Falling), edge(1.3e-6, EdgeDirection::Rising)], &mut out);
        let worst = out.windows(2).map(|w| (w[1] - w[0]).abs()).fold(0.0, f64::max);
        assert!(worst < 5.0 * 1e-8 / 0.5e-6 + 1e-9, "largest step {worst}");
        assert!((out[999] - 5.0).abs() < 1e-3, "{}", out[999]);
    }
}
