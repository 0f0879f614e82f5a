//! Signals and noise: prove a design against the waveform it will really see.
//!
//! Everything here takes the design's thresholds as plain data ([`Thresholds`] plus output levels
//! and [`Sense`], bundled as [`trigger::TriggerDesign`]), so it works with any topology: the
//! nominal design, one Monte Carlo sample or a worst-case corner are all just values the caller passes.
//!
//! Jobs, one file each:
//! - [`generate`]: the signal builder (DC, sine, triangle, square with finite rise time, ramp,
//!   RC approach, drift) and the settings that describe a signal.
//! - [`noise`]: seeded noise sources (white and band-limited Gaussian, mains hum with harmonics,
//!   impulse spikes). All randomness comes from [`crate::rng::Rng`], so a seed gives the same
//!   samples natively and in wasm; normal deviates come from [`crate::rng::Rng::normal`].
//! - [`csv`]: importing bench captures (time and voltage as CSV) with format detection, chunked
//!   parsing and line-numbered errors; exporting with exact round trips.
//! - [`trigger`]: the two-threshold trigger applied to a sampled signal, with propagation delay
//!   and output edges; edge lists; false edges against the intended (noise-free) edges.
//! - [`rice`]: level-crossing statistics of Gaussian noise (Rice's formula) and the minimum
//!   hysteresis for a target false-edge rate.
//! - [`sweep`]: false edges versus noise level for the design and the plain comparator.
//! - [`timing`]: overdrive-dependent delay, open-drain rise, jitter, zero-crossing phase error,
//!   and the dwell of a slow edge between a logic input's VIL and VIH.
//! - [`oscillator`] and [`debounce`]: the RC relaxation oscillator and the RC switch debouncer,
//!   each in closed form and simulated in the time domain (through [`ode`]).
//! - [`plot`]: min/max downsampling so the page can zoom over million-sample captures.
//! - [`report`]: the settings stored in the design record and the summaries the JSON entry point returns.
//!
//! ```
//! use hysteron_core::signal::generate::{Component, SignalDefinition};
//! use hysteron_core::signal::noise::NoiseSource;
//! use hysteron_core::signal::trigger::{compare_edges, default_match_window_s, run_trigger, TimingModel, TriggerDesign};
//! use hysteron_core::signal::{Sense, Thresholds};
//! let def = SignalDefinition {
//!     sample_rate_hz: 1e5,
//!     duration_s: 0.05,
//!     seed: 1,
//!     components: vec![Component::Sine { amplitude_v: 1.0, frequency_hz: 100.0, phase_deg: 0.0 }],
//!     noise: vec![NoiseSource::White { rms_v: 0.02 }],
//! };
//! let g = def.generate().unwrap();
//! let design = TriggerDesign {
//!     thresholds: Thresholds { vt_upper_v: 0.3, vt_lower_v: -0.3 },
//!     output_high_v: 5.0,
//!     output_low_v: 0.0,
//!     sense: Sense::Inverting,
//! };
//! let (mut intended, mut actual) = (Vec::new(), Vec::new());
//! run_trigger(&design, &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut intended);
//! run_trigger(&design, &TimingModel::ideal(), g.time.view(), &g.buffers.noisy_v, &mut actual);
//! let c = compare_edges(&actual, &intended, default_match_window_s(&intended, 0.05));
//! assert_eq!(intended.len(), 10);
//! assert_eq!(c.false_edges, 0); // 0.6 V of hysteresis against 20 mV RMS noise
//! // The plain comparator at 0 V on the same signal chatters.
//! let base = design.comparator(0.0);
//! run_trigger(&base, &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut intended);
//! run_trigger(&base, &TimingModel::ideal(), g.time.view(), &g.buffers.noisy_v, &mut actual);
//! assert!(compare_edges(&actual, &intended, default_match_window_s(&intended, 0.05)).false_edges > 0);
//! ```
//!
//! Invariants: no allocation inside per-sample loops (buffers are sized once and reused); no
//! panics, NaN or endless loops on any input (every setting is validated first, sample counts are
//! capped at [`MAX_SAMPLES`]); all transcendental functions come from `libm` so results are
//! bit-identical on every target.

// Negated comparisons such as `!(x > 0.0)` are used on purpose throughout: they also reject NaN.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

use serde::{Deserialize, Serialize};

pub use crate::analysis::{Sense, Thresholds};

pub mod csv;
pub mod sinusoid;
pub mod debounce;
pub mod generate;
pub mod noise;
pub mod ode;
pub mod oscillator;
pub mod plot;
pub mod report;
pub mod display;
pub mod output_edges;
pub mod rice;
pub mod sweep;
pub mod timing;
pub mod trigger;

/// The largest number of samples one signal may hold (keeps memory near 80 MB per buffer at most).
pub const MAX_SAMPLES: usize = 10_000_000;

/// The sample times of a waveform: a uniform grid (generated signals) or explicit times (captures).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum TimeBase {
    /// Sample i is at `start_s + i·step_s`.
    Uniform {
        /// Time of the first sample, seconds.
        start_s: f64,
        /// Sample interval, seconds (1 / sample rate).
        step_s: f64,
    },
    /// Sample i is at `times_s[i]` (strictly increasing).
    Samples {
        /// The sample times, seconds.
        times_s: Vec<f64>,
    },
}

/// A borrowed view of a [`TimeBase`], cheap to pass into inner loops.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Times<'a> {
    /// Sample i is at `start_s + i·step_s`.
    Uniform {
        /// Time of the first sample, seconds.
        start_s: f64,
        /// Sample interval, seconds.
        step_s: f64,
    },
    /// Sample i is at `times_s[i]`.
    Samples(&'a [f64]),
}

impl TimeBase {
    /// A borrowed view for the simulation functions.
    pub fn view(&self) -> Times<'_> {
        match self {
            TimeBase::Uniform { start_s, step_s } => Times::Uniform { start_s: *start_s, step_s: *step_s },
            TimeBase::Samples { times_s } => Times::Samples(times_s),
        }
    }
}

impl<'a> Times<'a> {
    /// Time of sample `i`, seconds. Out-of-range indices of an explicit list give the last time.
    #[inline(always)]
    pub fn at(&self, i: usize) -> f64 {
        match *self {
            Times::Uniform { start_s, step_s } => start_s + i as f64 * step_s,
            Times::Samples(t) => match t.get(i) {
                Some(&x) => x,
                None => t.last().copied().unwrap_or(0.0),
            },
        }
    }

    /// The index of the first sample at or after `t_s` (0..=len), for a waveform of `len` samples.
    pub fn index_at_or_after(&self, t_s: f64, len: usize) -> usize {
        match *self {
            Times::Uniform { start_s, step_s } => {
                if !(step_s > 0.0) || !t_s.is_finite() {
                    return if t_s > start_s { len } else { 0 };
                }
                let x = ((t_s - start_s) / step_s).ceil();
                if x <= 0.0 {
                    0
                } else if x >= len as f64 {
                    len
                } else {
                    x as usize
                }
            }
            Times::Samples(t) => {
                let n = len.min(t.len());
                t[..n].partition_point(|&x| x < t_s)
            }
        }
    }

    /// Checks the time base against a sample count: finite, strictly increasing, long enough.
    pub fn validate(&self, len: usize) -> Result<(), crate::error::DesignError> {
        use crate::error::DesignError;
        match *self {
            Times::Uniform { start_s, step_s } => {
                crate::error::finite("start_s", start_s)?;
                crate::error::positive("step_s", step_s)?;
                Ok(())
            }
            Times::Samples(t) => {
                if t.len() < len {
                    return Err(DesignError::inconsistent(format!(
                        "the time list has {} entries but the waveform has {len} samples: give one time per sample",
                        t.len()
                    )));
                }
                let mut prev = f64::NEG_INFINITY;
                for (i, &x) in t[..len].iter().enumerate() {
                    if !x.is_finite() || x <= prev {
                        return Err(DesignError::invalid(
                            "times_s",
                            format!("sample {i} is at {x} s, not after the previous sample: times must be finite and increasing"),
                        ));
                    }
                    prev = x;
                }
                Ok(())
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_lookup_on_both_time_bases() {
        let u = Times::Uniform { start_s: 1.0, step_s: 0.5 };
        assert_eq!(u.index_at_or_after(0.0, 10), 0);
        assert_eq!(u.index_at_or_after(1.0, 10), 0);
        assert_eq!(u.index_at_or_after(1.1, 10), 1);
        assert_eq!(u.index_at_or_after(100.0, 10), 10);
        let t = [0.0, 0.1, 0.3, 0.7];
        let s = Times::Samples(&t);
        assert_eq!(s.index_at_or_after(0.2, 4), 2);
        assert_eq!(s.index_at_or_after(0.3, 4), 2);
        assert_eq!(s.index_at_or_after(1.0, 4), 4);
        assert_eq!(s.at(9), 0.7);
    }

    #[test]
    fn time_lists_must_increase() {
        let t = [0.0, 0.1, 0.1];
        assert!(Times::Samples(&t).validate(3).is_err());
        assert!(Times::Samples(&t).validate(2).is_ok());
        assert!(Times::Samples(&t).validate(4).is_err());
        assert!(Times::Uniform { start_s: 0.0, step_s: 0.0 }.validate(3).is_err());
    }
}
