//! The signal builder: a sum of deterministic components (DC, sine, triangle, square with finite
//! rise time, ramp, RC approach, drift) plus seeded noise sources ([`super::noise`]), sampled on a
//! uniform grid.
//!
//! Generation writes into caller-owned buffers ([`SignalBuffers`]) that are sized once and reused,
//! a cache-sized block at a time ([`SignalGenerator`]), so repeated runs (sweeps, the page
//! redrawing) allocate nothing in their sample loops. Sines use a rotating phasor,
//! re-anchored to `libm::sin`/`cos` every [`RESYNC`] samples, which keeps the error near 1e-14 V
//! per volt of amplitude while costing a few multiplications per sample.

use super::noise::{add_noise, source_seed, NoiseGenerator, NoiseSource};
use super::{TimeBase, MAX_SAMPLES};
use crate::error::{finite, positive, DesignError};
use crate::limits::{check as limit, Quantity};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

pub use super::sinusoid::RESYNC;
use super::sinusoid::{add_sinusoid, frac};

/// One deterministic part of a signal. Periodic components are referenced to t = 0 with a phase
/// in degrees; at phase 0 a sine and a triangle start at zero going up and a square is mid-way up
/// its rising edge.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Component {
    /// A constant level.
    Dc {
        /// Level, volts.
        level_v: f64,
    },
    /// A sine A·sin(2πft + φ).
    Sine {
        /// Peak amplitude A, volts.
        amplitude_v: f64,
        /// Frequency f, hertz.
        frequency_hz: f64,
        /// Phase φ at t = 0, degrees.
        #[serde(default)]
        phase_deg: f64,
    },
    /// A symmetric triangle between −A and +A.
    Triangle {
        /// Peak amplitude A, volts.
        amplitude_v: f64,
        /// Frequency, hertz.
        frequency_hz: f64,
        /// Phase at t = 0, degrees.
        #[serde(default)]
        phase_deg: f64,
    },
    /// A square wave between −A and +A with straight (linear) edges of finite duration.
    Square {
        /// Peak amplitude A, volts (the wave swings 2A).
        amplitude_v: f64,
        /// Frequency, hertz.
        frequency_hz: f64,
        /// Phase at t = 0, degrees.
        #[serde(default)]
        phase_deg: f64,
        /// Fraction of the period spent high, measured between edge mid-points (0 to 1).
        #[serde(default = "half")]
        duty: f64,
        /// Duration of each edge from −A to +A (0–100 %), seconds; its 10–90 % time is 0.8 times this.
        #[serde(default)]
        rise_time_s: f64,
    },
    /// A ramp: zero until `start_s`, then rising at `slope_v_per_s`, holding its value after `stop_s`.
    Ramp {
        /// Slope, volts per second.
        slope_v_per_s: f64,
        /// When the ramp starts, seconds.
        #[serde(default)]
        start_s: f64,
        /// When the ramp stops and holds, seconds (`None`: never).
        #[serde(default)]
        stop_s: Option<f64>,
    },
    /// An RC (exponential) approach: zero until `start_s`, then step·(1 − e^{−(t−start)/τ}).
    RcApproach {
        /// Final change, volts (negative for a fall).
        step_v: f64,
        /// Time constant τ = RC, seconds.
        time_constant_s: f64,
        /// When the approach starts, seconds.
        #[serde(default)]
        start_s: f64,
    },
    /// A slow baseline drift over the whole record (temperature, supply sag): rate·t.
    Drift {
        /// Drift rate, volts per second.
        rate_v_per_s: f64,
    },
}

fn half() -> f64 {
    0.5
}

/// Largest slope of a ramp or drift, volts per second: the voltage range (limits.rs) crossed in a
/// microsecond, far beyond any signal a trigger sees, yet finite over any record.
pub const MAX_SLOPE_V_PER_S: f64 = 1e11;

pub use super::sinusoid::{phase, MAX_PHASE_DEG};

fn slope(field: &str, v: f64) -> Result<(), DesignError> {
    if v.is_finite() && v.abs() <= MAX_SLOPE_V_PER_S {
        Ok(())
    } else {
        Err(DesignError::invalid(field, format!("must be between −{MAX_SLOPE_V_PER_S:e} and {MAX_SLOPE_V_PER_S:e} V/s (got {v})")))
    }
}


impl Component {
    /// Checks the component for a signal sampled at `sample_rate_hz`.
    pub fn validate(&self, sample_rate_hz: f64) -> Result<(), DesignError> {
        let nyquist = sample_rate_hz / 2.0;
        let freq = |f: f64| -> Result<(), DesignError> {
            positive("components.frequency_hz", f)?;
            limit(Quantity::Frequency, "components.frequency_hz", f)?;
            if f >= nyquist {
                return Err(DesignError::invalid(
                    "components.frequency_hz",
                    format!("{f} Hz is at or above half the sample rate ({nyquist} Hz): raise the sample rate"),
                ));
            }
            Ok(())
        };
        match *self {
            Component::Dc { level_v } => limit(Quantity::Voltage, "components.level_v", level_v).map(|_| ()),
            Component::Sine { amplitude_v, frequency_hz, phase_deg }
            | Component::Triangle { amplitude_v, frequency_hz, phase_deg } => {
                limit(Quantity::Voltage, "components.amplitude_v", amplitude_v)?;
                phase("components.phase_deg", phase_deg)?;
                finite("components.phase_deg", phase_deg)?;
                freq(frequency_hz)
            }
            Component::Square { amplitude_v, frequency_hz, phase_deg, duty, rise_time_s } => {
                limit(Quantity::Voltage, "components.amplitude_v", amplitude_v)?;
                phase("components.phase_deg", phase_deg)?;
                finite("components.phase_deg", phase_deg)?;
                freq(frequency_hz)?;
                if !(duty > 0.0 && duty < 1.0) {
                    return Err(DesignError::invalid("components.duty", format!("must be between 0 and 1, exclusive (got {duty})")));
                }
                crate::error::non_negative("components.rise_time_s", rise_time_s)?;
                limit(Quantity::Duration, "components.rise_time_s", rise_time_s)?;
                let r = rise_time_s * frequency_hz;
                if r > duty.min(1.0 - duty) {
                    return Err(DesignError::invalid(
                        "components.rise_time_s",
                        format!(
                            "{} edges do not fit in the shorter half of a {} period at duty {duty}: shorten the edges or lower the frequency",
                            crate::notation::format_with_unit(rise_time_s, 5, crate::notation::Unit::Second),
                            crate::notation::format_with_unit(1.0 / frequency_hz, 5, crate::notation::Unit::Second)
                        ),
                    ));
                }
                Ok(())
            }
            Component::Ramp { slope_v_per_s, start_s, stop_s } => {
                slope("components.slope_v_per_s", slope_v_per_s)?;
                limit(Quantity::Duration, "components.start_s", start_s)?;
                if let Some(s) = stop_s {
                    limit(Quantity::Duration, "components.stop_s", s)?;
                    if s < start_s {
                        return Err(DesignError::invalid("components.stop_s", "must not be before start_s"));
                    }
                }
                Ok(())
            }
            Component::RcApproach { step_v, time_constant_s, start_s } => {
                limit(Quantity::Voltage, "components.step_v", step_v)?;
                positive("components.time_constant_s", time_constant_s)?;
                limit(Quantity::Duration, "components.time_constant_s", time_constant_s)?;
                limit(Quantity::Duration, "components.start_s", start_s).map(|_| ())
            }
            Component::Drift { rate_v_per_s } => slope("components.rate_v_per_s", rate_v_per_s),
        }
    }

    /// The component's value at time `t_s` (direct evaluation; the fill loops use recurrences
    /// that agree with this to about 1e-13 of the amplitude).
    pub fn value_at(&self, t_s: f64) -> f64 {
        match *self {
            Component::Dc { level_v } => level_v,
            Component::Sine { amplitude_v, frequency_hz, phase_deg } => {
                let p = frac(frequency_hz * t_s + phase_deg / 360.0);
                amplitude_v * libm::sin(2.0 * PI * p)
            }
            Component::Triangle { amplitude_v, frequency_hz, phase_deg } => {
                amplitude_v * triangle(frac(frequency_hz * t_s + phase_deg / 360.0))
            }
            Component::Square { amplitude_v, frequency_hz, phase_deg, duty, rise_time_s } => {
                amplitude_v * square(frac(frequency_hz * t_s + phase_deg / 360.0), duty, rise_time_s * frequency_hz)
            }
            Component::Ramp { slope_v_per_s, start_s, stop_s } => {
                let end = stop_s.unwrap_or(f64::INFINITY);
                slope_v_per_s * (t_s.clamp(start_s, end.max(start_s)) - start_s)
            }
            Component::RcApproach { step_v, time_constant_s, start_s } => {
                if t_s < start_s {
                    0.0
                } else {
                    step_v * (1.0 - libm::exp(-(t_s - start_s) / time_constant_s))
                }
            }
            Component::Drift { rate_v_per_s } => rate_v_per_s * t_s,
        }
    }
}

/// Unit triangle of phase p ∈ [0, 1): 0 → 1 → 0 → −1 → 0.
#[inline(always)]
fn triangle(p: f64) -> f64 {
    if p < 0.25 {
        4.0 * p
    } else if p < 0.75 {
        2.0 - 4.0 * p
    } else {
        4.0 * p - 4.0
    }
}

/// Unit square of phase p ∈ [0, 1) with duty `d` and edge length `r` (fraction of a period),
/// rising edge centred on p = 0 and falling edge on p = d.
#[inline(always)]
fn square(p: f64, d: f64, r: f64) -> f64 {
    let h = r / 2.0;
    let q = if p >= 1.0 - h { p - 1.0 } else { p };
    if q < h {
        q / h
    } else if q < d - h {
        1.0
    } else if q < d + h {
        (d - q) / h
    } else {
        -1.0
    }
}

/// What a generated signal is made of. Stored in the design record inside
/// [`super::report::SignalSettings`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SignalDefinition {
    /// Sample rate, hertz.
    pub sample_rate_hz: f64,
    /// Length of the record, seconds.
    pub duration_s: f64,
    /// Seed of every noise source (each source draws its own stream from it).
    pub seed: u64,
    /// The deterministic components, summed.
    pub components: Vec<Component>,
    /// The noise sources, added to the components.
    pub noise: Vec<NoiseSource>,
}

impl Default for SignalDefinition {
    /// A demonstration signal: 100 Hz sine of 2 V peak about 2.5 V with 50 mV RMS white noise,
    /// 50 ms at 100 kHz (5000 samples).
    fn default() -> Self {
        SignalDefinition {
            sample_rate_hz: 100e3,
            duration_s: 0.05,
            seed: 1,
            components: vec![
                Component::Dc { level_v: 2.5 },
                Component::Sine { amplitude_v: 2.0, frequency_hz: 100.0, phase_deg: 0.0 },
            ],
            noise: vec![NoiseSource::White { rms_v: 0.05 }],
        }
    }
}

/// Reusable sample buffers for a generated signal: the noise-free sum and the noisy signal.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SignalBuffers {
    /// The components only, volts.
    pub clean_v: Vec<f64>,
    /// Components plus noise, volts.
    pub noisy_v: Vec<f64>,
}

/// A generated signal with its time base.
#[derive(Debug, Clone, PartialEq)]
pub struct GeneratedSignal {
    /// Sample times (uniform, starting at 0).
    pub time: TimeBase,
    /// The samples.
    pub buffers: SignalBuffers,
}

impl SignalDefinition {
    /// Checks every value and returns the number of samples the record will hold.
    pub fn validate(&self) -> Result<usize, DesignError> {
        positive("sample_rate_hz", self.sample_rate_hz)?;
        limit(Quantity::Frequency, "sample_rate_hz", self.sample_rate_hz)?;
        positive("duration_s", self.duration_s)?;
        limit(Quantity::Duration, "duration_s", self.duration_s)?;
        let n = (self.duration_s * self.sample_rate_hz).round();
        if n < 2.0 {
            return Err(DesignError::invalid("duration_s", "the record must hold at least two samples: lengthen it or raise the sample rate"));
        }
        if n > MAX_SAMPLES as f64 {
            return Err(DesignError::invalid(
                "duration_s",
                format!("{} samples exceeds the limit of {MAX_SAMPLES}: shorten the record or lower the sample rate", crate::notation::format_fixed(n, 0)),
            ));
        }
        for c in &self.components {
            c.validate(self.sample_rate_hz)?;
        }
        for s in &self.noise {
            s.validate(self.sample_rate_hz)?;
        }
        Ok(n as usize)
    }

    /// The sample interval, seconds.
    pub fn step_s(&self) -> f64 {
        1.0 / self.sample_rate_hz
    }

    /// The uniform time base starting at 0.
    pub fn time_base(&self) -> TimeBase {
        TimeBase::Uniform { start_s: 0.0, step_s: self.step_s() }
    }

    /// Writes the sum of the components into `out` (overwriting it). Call [`Self::validate`] first.
    pub fn fill_components(&self, out: &mut [f64]) {
        let step = self.step_s();
        out.fill(0.0);
        for c in &self.components {
            fill_component(c, step, 0, out);
        }
    }

    /// Adds every noise source to `out`. Call [`Self::validate`] first.
    pub fn add_all_noise(&self, out: &mut [f64]) {
        for (i, s) in self.noise.iter().enumerate() {
            add_noise(s, source_seed(self.seed, i), self.step_s(), out);
        }
    }

    /// Generates into reusable buffers (resized to the sample count; no allocation when they are
    /// already large enough, apart from the noise generators' small tables), block by block.
    pub fn generate_into(&self, buffers: &mut SignalBuffers) -> Result<(), DesignError> {
        let mut gen = SignalGenerator::new(self)?;
        let n = gen.samples();
        buffers.clean_v.resize(n, 0.0);
        buffers.noisy_v.resize(n, 0.0);
        for (c, v) in buffers.clean_v.chunks_mut(BLOCK).zip(buffers.noisy_v.chunks_mut(BLOCK)) {
            gen.next_block(c, v);
        }
        Ok(())
    }

    /// Generates the signal into new buffers.
    pub fn generate(&self) -> Result<GeneratedSignal, DesignError> {
        let mut buffers = SignalBuffers::default();
        self.generate_into(&mut buffers)?;
        Ok(GeneratedSignal { time: self.time_base(), buffers })
    }
}

/// Adds one component, sampled at t = (first_index + k)·step for k = 0.., to `out`. Any split of
/// a record into blocks gives the same values as one call (to the last bit when the blocks start at
/// multiples of [`RESYNC`]). Allocation-free.
pub fn fill_component(c: &Component, step_s: f64, first_index: usize, out: &mut [f64]) {
    let t_at = |k: usize| (first_index + k) as f64 * step_s;
    match *c {
        Component::Dc { level_v } => out.iter_mut().for_each(|v| *v += level_v),
        Component::Sine { amplitude_v, frequency_hz, phase_deg } => {
            add_sinusoid(out, first_index, step_s, amplitude_v, frequency_hz, phase_deg.to_radians())
        }
        Component::Triangle { amplitude_v, frequency_hz, phase_deg } => {
            let p0 = phase_deg / 360.0;
            for (k, v) in out.iter_mut().enumerate() {
                *v += amplitude_v * triangle(frac(frequency_hz * t_at(k) + p0));
            }
        }
        Component::Square { amplitude_v, frequency_hz, phase_deg, duty, rise_time_s } => {
            let p0 = phase_deg / 360.0;
            let r = rise_time_s * frequency_hz;
            for (k, v) in out.iter_mut().enumerate() {
                *v += amplitude_v * square(frac(frequency_hz * t_at(k) + p0), duty, r);
            }
        }
        Component::Ramp { .. } | Component::Drift { .. } => {
            for (k, v) in out.iter_mut().enumerate() {
                *v += c.value_at(t_at(k));
            }
        }
        Component::RcApproach { step_v, time_constant_s, start_s } => {
            let decay = libm::exp(-step_s / time_constant_s);
            let mut k = 0;
            while k < out.len() {
                let i = first_index + k;
                let run = (RESYNC - i % RESYNC).min(out.len() - k);
                let t = i as f64 * step_s;
                let block = &mut out[k..k + run];
                if t + (run - 1) as f64 * step_s < start_s {
                    // Entirely before the start.
                } else if t < start_s {
                    for (j, v) in block.iter_mut().enumerate() {
                        *v += c.value_at(t_at(k + j));
                    }
                } else {
                    let mut g = libm::exp(-(t - start_s) / time_constant_s);
                    if g < 1e-18 {
                        block.iter_mut().for_each(|v| *v += step_v);
                    } else {
                        for v in block.iter_mut() {
                            *v += step_v * (1.0 - g);
                            g *= decay;
                        }
                    }
                }
                k += run;
            }
        }
    }
}

/// Samples per block of [`SignalGenerator`]: small enough to stay in the first-level cache.
pub const BLOCK: usize = 4 * RESYNC;

/// Produces a signal a block at a time: components into the noise-free buffer, then a copy plus
/// noise into the noisy one, so each sample is touched while it is still in cache.
#[derive(Debug, Clone)]
pub struct SignalGenerator<'a> {
    definition: &'a SignalDefinition,
    noise: Vec<NoiseGenerator>,
    index: usize,
    samples: usize,
}

impl<'a> SignalGenerator<'a> {
    /// Validates the definition and prepares the noise generators.
    pub fn new(definition: &'a SignalDefinition) -> Result<Self, DesignError> {
        let samples = definition.validate()?;
        let step = definition.step_s();
        let noise =
            definition.noise.iter().enumerate().map(|(i, s)| NoiseGenerator::new(s, source_seed(definition.seed, i), step)).collect();
        Ok(SignalGenerator { definition, noise, index: 0, samples })
    }

    /// Samples in the whole record.
    pub fn samples(&self) -> usize {
        self.samples
    }

    /// Samples not yet produced.
    pub fn remaining(&self) -> usize {
        self.samples - self.index
    }

    /// Fills the next block: `clean` gets the components, `noisy` the components plus noise.
    /// Both must have the same length (at most [`Self::remaining`]; longer slices are cut).
    /// Returns the number of samples written. Allocation-free.
    pub fn next_block(&mut self, clean: &mut [f64], noisy: &mut [f64]) -> usize {
        let n = clean.len().min(noisy.len()).min(self.remaining());
        let (clean, noisy) = (&mut clean[..n], &mut noisy[..n]);
        let step = self.definition.step_s();
        clean.fill(0.0);
        for c in &self.definition.components {
            fill_component(c, step, self.index, clean);
        }
        noisy.copy_from_slice(clean);
        for g in &mut self.noise {
            g.add_to(noisy);
        }
        self.index += n;
        n
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn def(components: Vec<Component>) -> SignalDefinition {
        SignalDefinition { sample_rate_hz: 1e5, duration_s: 0.05, seed: 1, components, noise: vec![] }
    }

    #[test]
    fn fill_matches_direct_evaluation() {
        let comps = vec![
            Component::Dc { level_v: 1.0 },
            Component::Sine { amplitude_v: 2.0, frequency_hz: 123.0, phase_deg: 30.0 },
            Component::Triangle { amplitude_v: 0.5, frequency_hz: 77.0, phase_deg: 10.0 },
            Component::Square { amplitude_v: 0.3, frequency_hz: 50.0, phase_deg: 0.0, duty: 0.3, rise_time_s: 1e-3 },
            Component::Ramp { slope_v_per_s: 10.0, start_s: 0.01, stop_s: Some(0.02) },
            Component::RcApproach { step_v: -1.0, time_constant_s: 3e-3, start_s: 0.005 },
            Component::Drift { rate_v_per_s: 0.5 },
        ];
        let d = def(comps.clone());
        let g = d.generate().unwrap();
        for i in (0..g.buffers.clean_v.len()).step_by(37) {
            let t = i as f64 / 1e5;
            let direct: f64 = comps.iter().map(|c| c.value_at(t)).sum();
            assert!((g.buffers.clean_v[i] - direct).abs() < 1e-12, "sample {i}: {} vs {direct}", g.buffers.clean_v[i]);
        }
        assert_eq!(g.buffers.clean_v, g.buffers.noisy_v);
    }

    #[test]
    fn shapes_hit_their_defining_points() {
        // Sine: quarter period → peak. Triangle: quarter → +A, three quarters → −A. Square: mid-edge at 0.
        let s = Component::Sine { amplitude_v: 2.0, frequency_hz: 10.0, phase_deg: 0.0 };
        assert!((s.value_at(0.025) - 2.0).abs() < 1e-12);
        let t = Component::Triangle { amplitude_v: 1.0, frequency_hz: 10.0, phase_deg: 0.0 };
        assert!((t.value_at(0.025) - 1.0).abs() < 1e-12 && (t.value_at(0.075) + 1.0).abs() < 1e-12);
        let q = Component::Square { amplitude_v: 1.0, frequency_hz: 10.0, phase_deg: 0.0, duty: 0.5, rise_time_s: 0.01 };
        assert!(q.value_at(0.0).abs() < 1e-12);
        assert!((q.value_at(0.0025) - 0.5).abs() < 1e-9);
        assert!((q.value_at(0.02) - 1.0).abs() < 1e-12);
        assert!(q.value_at(0.05).abs() < 1e-9);
        assert!((q.value_at(0.07) + 1.0).abs() < 1e-12);
        let rc = Component::RcApproach { step_v: 1.0, time_constant_s: 1.0, start_s: 0.0 };
        assert!((rc.value_at(1.0) - (1.0 - (-1.0f64).exp())).abs() < 1e-15);
    }

    #[test]
    fn validation_catches_bad_values() {
        assert!(def(vec![Component::Sine { amplitude_v: 1.0, frequency_hz: 6e4, phase_deg: 0.0 }]).validate().is_err());
        assert!(def(vec![Component::Square { amplitude_v: 1.0, frequency_hz: 100.0, phase_deg: 0.0, duty: 0.5, rise_time_s: 0.006 }])
            .validate()
            .is_err());
        assert!(def(vec![Component::Dc { level_v: f64::NAN }]).validate().is_err());
        let mut d = def(vec![]);
        d.duration_s = 1e6;
        assert!(d.validate().is_err());
        d.duration_s = 0.0;
        assert!(d.validate().is_err());
    }

    #[test]
    fn blocks_of_any_size_give_the_same_signal() {
        let mut d = SignalDefinition::default();
        d.components.push(Component::RcApproach { step_v: 1.0, time_constant_s: 1e-3, start_s: 0.0123 });
        d.noise.push(NoiseSource::BandLimited { rms_v: 0.1, corner_hz: 500.0, poles: 3 });
        d.noise.push(NoiseSource::Spikes { rate_hz: 300.0, amplitude_v: 1.0, decay_s: 1e-4, polarity: Default::default() });
        let whole = d.generate().unwrap();
        for block in [RESYNC, 3 * RESYNC, 1000] {
            let mut gen = SignalGenerator::new(&d).unwrap();
            let n = gen.samples();
            let (mut c, mut v) = (vec![0.0; n], vec![0.0; n]);
            for (cb, vb) in c.chunks_mut(block).zip(v.chunks_mut(block)) {
                gen.next_block(cb, vb);
            }
            for i in 0..n {
                // Bit-identical for blocks at multiples of RESYNC; within 1e-13 otherwise (re-anchored phasors).
                let tol = if block % RESYNC == 0 { 0.0 } else { 1e-13 };
                assert!((c[i] - whole.buffers.clean_v[i]).abs() <= tol, "block {block} sample {i}");
                assert!((v[i] - whole.buffers.noisy_v[i]).abs() <= tol, "block {block} sample {i}");
            }
        }
    }

    #[test]
    fn same_seed_same_signal() {
        let mut d = SignalDefinition::default();
        d.noise.push(NoiseSource::BandLimited { rms_v: 0.1, corner_hz: 500.0, poles: 2 });
        let a = d.generate().unwrap();
        let b = d.generate().unwrap();
        assert_eq!(a, b);
        d.seed = 2;
        assert_ne!(a.buffers.noisy_v, d.generate().unwrap().buffers.noisy_v);
    }
}
