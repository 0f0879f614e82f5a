// Over 600 lines: one job, every noise source with its generator and spectral moments; about 115 lines are tests.
//! Seeded noise sources added to a generated signal: white Gaussian, band-limited Gaussian
//! (one to four first-order low-pass poles at one corner), mains hum with harmonics, and random
//! impulse spikes.
//!
//! Every source draws from its own [`Rng`], seeded from the signal's seed and the source's
//! position in the list, so editing one source leaves the others' samples unchanged. Gaussian
//! deviates come from that generator's one normal sampler ([`Rng::normal`], the project's only
//! one, whose stream is pinned natively and in wasm). Generators keep
//! their state between blocks ([`NoiseGenerator`]), so a signal can be produced a cache-sized block
//! at a time; sample loops allocate nothing.
//!
//! Band-limited noise is the output of `poles` identical first-order low-pass stages driven by
//! white noise, sampled exactly: the stage states form a linear stochastic system whose
//! transition matrix Φ = e^{AΔ} and step covariance Q(Δ) = ∫₀^Δ e^{As}BBᵀe^{Aᵀs} ds are known in
//! closed form (Jordan block of one repeated pole), so the sampled sequence has exactly the
//! statistics of the continuous process at the sample instants, for any corner-to-sample-rate
//! ratio. One pole gives the familiar AR(1) recursion x ← e^{−ωΔ}x + σ√(1−e^{−2ωΔ})·w.
//! (Standard results for linear stochastic systems; e.g. Gardiner, *Handbook of Stochastic
//! Methods*, Ornstein–Uhlenbeck process; from memory.)

use super::sinusoid::add_sinusoid;
use crate::error::{positive, DesignError};
use crate::limits::{check as limit, Quantity};
use crate::rng::Rng;
use serde::{Deserialize, Serialize};

/// Mains frequency of a hum source.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum MainsFrequency {
    /// 50 Hz mains (Europe, most of Asia and Africa).
    #[default]
    Hz50,
    /// 60 Hz mains (the Americas, parts of Asia).
    Hz60,
}

impl MainsFrequency {
    /// The frequency, hertz.
    pub fn hz(self) -> f64 {
        match self {
            MainsFrequency::Hz50 => 50.0,
            MainsFrequency::Hz60 => 60.0,
        }
    }
}

/// One harmonic of a hum source.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Harmonic {
    /// Harmonic number (2 = twice the mains frequency...).
    pub order: u32,
    /// Amplitude relative to the fundamental's amplitude.
    pub relative_amplitude: f64,
    /// Phase at t = 0, degrees.
    pub phase_deg: f64,
}

impl Default for Harmonic {
    fn default() -> Self {
        Harmonic { order: 3, relative_amplitude: 0.2, phase_deg: 0.0 }
    }
}

/// Which way impulse spikes point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum SpikePolarity {
    /// Every spike is positive.
    Positive,
    /// Every spike is negative.
    Negative,
    /// Each spike's sign is drawn at random (equal odds).
    #[default]
    Random,
}

/// One noise source. Amplitudes are in volts at the trigger's input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum NoiseSource {
    /// Independent Gaussian samples: flat spectrum up to half the sample rate.
    White {
        /// RMS value (standard deviation), volts.
        rms_v: f64,
    },
    /// Gaussian noise through `poles` identical first-order low-pass stages at `corner_hz`
    /// (1 = a plain RC low-pass; 2 or more give a finite crossing rate, see [`super::rice`]).
    BandLimited {
        /// RMS value of the filtered noise, volts.
        rms_v: f64,
        /// Corner frequency of each stage, hertz.
        corner_hz: f64,
        /// Number of stages, 1 to 4 (default 1).
        #[serde(default = "one_pole")]
        poles: u8,
    },
    /// Mains-frequency hum: a fundamental at 50 or 60 Hz plus harmonics.
    Hum {
        /// Mains frequency.
        #[serde(default)]
        mains: MainsFrequency,
        /// Peak amplitude of the fundamental, volts (peak-to-peak is twice this).
        amplitude_v: f64,
        /// Phase of the fundamental at t = 0, degrees.
        #[serde(default)]
        phase_deg: f64,
        /// Harmonics, each relative to the fundamental.
        #[serde(default)]
        harmonics: Vec<Harmonic>,
    },
    /// Random impulse spikes at Poisson-distributed times: an instant jump of `amplitude_v`
    /// decaying exponentially with time constant `decay_s`.
    Spikes {
        /// Mean number of spikes per second, hertz.
        rate_hz: f64,
        /// Height of each spike, volts.
        amplitude_v: f64,
        /// Decay time constant of each spike, seconds.
        decay_s: f64,
        /// Sign of the spikes.
        #[serde(default)]
        polarity: SpikePolarity,
    },
}

fn one_pole() -> u8 {
    1
}

/// Highest number of low-pass stages a band-limited source may have.
pub const MAX_POLES: u8 = 4;
/// [`MAX_POLES`] as a stage count.
const MAX_POLES_USIZE: usize = MAX_POLES as usize;

impl NoiseSource {
    /// Checks the source's values for a signal sampled at `sample_rate_hz`.
    pub fn validate(&self, sample_rate_hz: f64) -> Result<(), DesignError> {
        let nyquist = sample_rate_hz / 2.0;
        match self {
            NoiseSource::White { rms_v } => {
                non_negative_finite("noise.rms_v", *rms_v)?;
                limit(Quantity::Voltage, "noise.rms_v", *rms_v).map(|_| ())
            }
            NoiseSource::BandLimited { rms_v, corner_hz, poles } => {
                non_negative_finite("noise.rms_v", *rms_v)?;
                limit(Quantity::Voltage, "noise.rms_v", *rms_v)?;
                positive("noise.corner_hz", *corner_hz)?;
                limit(Quantity::Frequency, "noise.corner_hz", *corner_hz)?;
                if *poles == 0 || *poles > MAX_POLES {
                    return Err(DesignError::invalid(
                        "noise.poles",
                        format!("must be 1 to {MAX_POLES} (got {poles})"),
                    ));
                }
                Ok(())
            }
            NoiseSource::Hum { mains, amplitude_v, phase_deg, harmonics } => {
                non_negative_finite("noise.amplitude_v", *amplitude_v)?;
                limit(Quantity::Voltage, "noise.amplitude_v", *amplitude_v)?;
                super::sinusoid::phase("noise.phase_deg", *phase_deg)?;
                for h in harmonics {
                    if h.order == 0 {
                        return Err(DesignError::invalid("noise.harmonics.order", "must be 1 or more"));
                    }
                    limit(Quantity::Gain, "noise.harmonics.relative_amplitude", h.relative_amplitude.abs().max(1e-3))?;
                    super::sinusoid::phase("noise.harmonics.phase_deg", h.phase_deg)?;
                    let f = mains.hz() * h.order as f64;
                    if f >= nyquist {
                        return Err(DesignError::invalid(
                            "noise.harmonics.order",
                            format!(
                                "harmonic {} ({f} Hz) is at or above half the sample rate ({nyquist} Hz): raise the sample rate or drop the harmonic",
                                h.order
                            ),
                        ));
                    }
                }
                if mains.hz() >= nyquist {
                    return Err(DesignError::invalid(
                        "sample_rate_hz",
                        format!("hum at {} Hz needs a sample rate above {} Hz", mains.hz(), 2.0 * mains.hz()),
                    ));
                }
                Ok(())
            }
            NoiseSource::Spikes { rate_hz, amplitude_v, decay_s, .. } => {
                non_negative_finite("noise.rate_hz", *rate_hz)?;
                if *rate_hz > sample_rate_hz {
                    return Err(DesignError::invalid(
                        "noise.rate_hz",
                        format!("{rate_hz} spikes per second exceeds the sample rate ({sample_rate_hz} Hz): lower the rate"),
                    ));
                }
                limit(Quantity::Voltage, "noise.amplitude_v", *amplitude_v)?;
                positive("noise.decay_s", *decay_s)?;
                limit(Quantity::Duration, "noise.decay_s", *decay_s)?;
                Ok(())
            }
        }
    }

    /// The Gaussian part's standard deviation σ0 and derivative standard deviation σ1 (volts,
    /// volts per second) as seen by a sampled comparator at `sample_rate_hz`; `None` for hum and
    /// spikes (not Gaussian). See [`super::rice::spectral_moments`] for the formulas.
    pub fn gaussian_moments(&self, sample_rate_hz: f64) -> Option<(f64, f64)> {
        match *self {
            NoiseSource::White { rms_v } => {
                Some(super::rice::spectral_moments(rms_v, super::rice::Spectrum::Flat { bandwidth_hz: sample_rate_hz / 2.0 }))
            }
            NoiseSource::BandLimited { rms_v, corner_hz, poles } => Some(super::rice::spectral_moments(
                rms_v,
                super::rice::Spectrum::Poles { corner_hz, poles, bandwidth_hz: sample_rate_hz / 2.0 },
            )),
            _ => None,
        }
    }

    /// A copy with the Gaussian RMS (white or band-limited) replaced; hum and spikes unchanged.
    pub fn with_rms(&self, new_rms_v: f64) -> NoiseSource {
        let mut s = self.clone();
        match &mut s {
            NoiseSource::White { rms_v } | NoiseSource::BandLimited { rms_v, .. } => *rms_v = new_rms_v,
            _ => {}
        }
        s
    }
}

fn non_negative_finite(field: &str, v: f64) -> Result<(), DesignError> {
    crate::error::non_negative(field, v).map(|_| ())
}

/// The generator seed for noise source number `index` of a signal seeded with `seed`.
pub fn source_seed(seed: u64, index: usize) -> u64 {
    seed ^ (index as u64 + 1).wrapping_mul(0x9E37_79B9_7F4A_7C15)
}

/// A noise source's running state: call [`NoiseGenerator::add_to`] on consecutive blocks of
/// samples (any block lengths) and the result is the same as one call on the whole record.
#[derive(Debug, Clone)]
pub struct NoiseGenerator {
    state: NoiseState,
    index: usize,
    step_s: f64,
}

#[derive(Debug, Clone)]
enum NoiseState {
    Silent,
    White { rms_v: f64, rng: Rng },
    Band { cascade: Box<PoleCascade>, rng: Rng },
    Hum { parts: Vec<(f64, f64, f64)> },
    Spikes { rng: Rng, level: f64, next_s: f64, decay: f64, decay_s: f64, amplitude_v: f64, floor: f64, mean_gap_s: f64, polarity: SpikePolarity },
}

impl NoiseGenerator {
    /// The generator for `source` (validated by the caller with [`NoiseSource::validate`]),
    /// seeded with `seed`, for samples at i·`step_s`.
    pub fn new(source: &NoiseSource, seed: u64, step_s: f64) -> Self {
        let mut rng = Rng::new(seed);
        let state = match source {
            NoiseSource::White { rms_v } if *rms_v > 0.0 => NoiseState::White { rms_v: *rms_v, rng },
            NoiseSource::BandLimited { rms_v, corner_hz, poles } if *rms_v > 0.0 => {
                let mut cascade = Box::new(PoleCascade::new(*rms_v, *corner_hz, *poles, step_s));
                cascade.start(&mut rng);
                NoiseState::Band { cascade, rng }
            }
            NoiseSource::Hum { mains, amplitude_v, phase_deg, harmonics } if *amplitude_v != 0.0 => {
                let f = mains.hz();
                let mut parts = vec![(*amplitude_v, f, phase_deg.to_radians())];
                for h in harmonics {
                    parts.push((amplitude_v * h.relative_amplitude, f * h.order as f64, h.phase_deg.to_radians()));
                }
                NoiseState::Hum { parts }
            }
            NoiseSource::Spikes { rate_hz, amplitude_v, decay_s, polarity } if *rate_hz > 0.0 && *amplitude_v != 0.0 => {
                let mean_gap_s = 1.0 / rate_hz;
                let next_s = rng.exponential(mean_gap_s);
                NoiseState::Spikes {
                    rng,
                    level: 0.0,
                    next_s,
                    decay: libm::exp(-step_s / decay_s),
                    decay_s: *decay_s,
                    amplitude_v: *amplitude_v,
                    floor: 1e-12 * amplitude_v.abs(),
                    mean_gap_s,
                    polarity: *polarity,
                }
            }
            _ => NoiseState::Silent,
        };
        NoiseGenerator { state, index: 0, step_s }
    }

    /// Adds the next `out.len()` samples of noise to `out`. Allocation-free.
    pub fn add_to(&mut self, out: &mut [f64]) {
        let first = self.index;
        let step_s = self.step_s;
        match &mut self.state {
            NoiseState::Silent => {}
            NoiseState::White { rms_v, rng } => {
                let s = *rms_v;
                for v in out.iter_mut() {
                    *v += s * rng.normal();
                }
            }
            NoiseState::Band { cascade, rng } => {
                if cascade.n == 1 {
                    let (a, b) = (cascade.phi[0][0], cascade.chol[0][0]);
                    let mut x = cascade.state[0];
                    for v in out.iter_mut() {
                        *v += x;
                        x = a * x + b * rng.normal();
                    }
                    cascade.state[0] = x;
                } else {
                    match cascade.n {
                        2 => cascade.add_output_to::<2>(out, rng),
                        3 => cascade.add_output_to::<3>(out, rng),
                        _ => cascade.add_output_to::<MAX_POLES_USIZE>(out, rng),
                    }
                }
            }
            NoiseState::Hum { parts } => {
                for &(a, f, p) in parts.iter() {
                    add_sinusoid(out, first, step_s, a, f, p);
                }
            }
            NoiseState::Spikes { rng, level, next_s, decay, decay_s, amplitude_v, floor, mean_gap_s, polarity } => {
                for (k, v) in out.iter_mut().enumerate() {
                    let i = first + k;
                    let t = i as f64 * step_s;
                    if i > 0 {
                        *level *= *decay;
                    }
                    if level.abs() < *floor {
                        *level = 0.0;
                    }
                    while *next_s <= t {
                        let sign = match polarity {
                            SpikePolarity::Positive => 1.0,
                            SpikePolarity::Negative => -1.0,
                            SpikePolarity::Random => {
                                if rng.uniform() < 0.5 {
                                    1.0
                                } else {
                                    -1.0
                                }
                            }
                        };
                        *level += sign * *amplitude_v * libm::exp(-(t - *next_s) / *decay_s);
                        *next_s += rng.exponential(*mean_gap_s);
                    }
                    *v += *level;
                }
            }
        }
        self.index += out.len();
    }
}

/// Adds one noise source to `out`, whose samples are at i·`step_s` from t = 0. The source must
/// have passed [`NoiseSource::validate`]. Allocation-free apart from the generator's tables.
pub fn add_noise(source: &NoiseSource, seed: u64, step_s: f64, out: &mut [f64]) {
    NoiseGenerator::new(source, seed, step_s).add_to(out);
}

/// Exact sampling of `n` identical first-order low-pass stages driven by white noise.
/// State index 0 is the first stage; the output is the last.
#[derive(Debug, Clone)]
pub(crate) struct PoleCascade {
    pub(crate) n: usize,
    pub(crate) phi: [[f64; 4]; 4],
    pub(crate) chol: [[f64; 4]; 4],
    chol_stationary: [[f64; 4]; 4],
    pub(crate) state: [f64; 4],
}

/// Lower regularised incomplete gamma P(a, y) for integer a ≥ 1 (the Poisson tail
/// e^{−y}·Σ_{k≥a} y^k/k!), accurate for small y where 1 − e^{−y}Σ_{k<a} loses digits.
fn gamma_p_int(a: u32, y: f64) -> f64 {
    if y <= 0.0 {
        return 0.0;
    }
    let a_f = a as f64;
    if y < a_f + 30.0 {
        // e^{−y}·y^a/a!·Σ_{n≥0} y^n·a!/(a+n)!
        let mut lead = libm::exp(-y);
        for k in 1..=a {
            lead *= y / k as f64;
        }
        let mut term = 1.0;
        let mut sum = 1.0;
        for n in 1..400 {
            term *= y / (a_f + n as f64);
            sum += term;
            if term < 1e-17 * sum {
                break;
            }
        }
        (lead * sum).min(1.0)
    } else {
        let mut term = libm::exp(-y);
        let mut sum = term;
        for k in 1..a {
            term *= y / k as f64;
            sum += term;
        }
        (1.0 - sum).max(0.0)
    }
}

fn factorial(n: u32) -> f64 {
    (1..=n).fold(1.0, |acc, k| acc * k as f64)
}

/// Cholesky factor of a symmetric positive semi-definite n×n matrix (n ≤ 4); tiny negative pivots
/// from rounding are treated as zero.
fn cholesky(a: &[[f64; 4]; 4], n: usize) -> [[f64; 4]; 4] {
    let mut l = [[0.0; 4]; 4];
    for i in 0..n {
        for j in 0..=i {
            let s = a[i][j] - l[i][..j].iter().zip(&l[j][..j]).map(|(x, y)| x * y).sum::<f64>();
            if i == j {
                l[i][i] = if s > 0.0 { s.sqrt() } else { 0.0 };
            } else {
                l[i][j] = if l[j][j] > 0.0 { s / l[j][j] } else { 0.0 };
            }
        }
    }
    l
}

impl PoleCascade {
    /// The cascade for RMS `rms_v` at the output, corner `corner_hz`, `poles` stages (clamped to
    /// 1..=4), sampled every `step_s`.
    pub(crate) fn new(rms_v: f64, corner_hz: f64, poles: u8, step_s: f64) -> Self {
        let n = poles.clamp(1, MAX_POLES) as usize;
        let x = 2.0 * std::f64::consts::PI * corner_hz * step_s;
        let e = libm::exp(-x);
        let mut phi = [[0.0; 4]; 4];
        for (j, row) in phi.iter_mut().enumerate().take(n) {
            for (i, cell) in row.iter_mut().enumerate().take(j + 1) {
                let d = (j - i) as u32;
                *cell = e * libm::pow(x, d as f64) / factorial(d);
            }
        }
        // Covariance of the stage states: Q_jk = c_jk·P(m+1, 2x)/c_NN with m = j+k (0-based),
        // c_jk = m!/(2^{m+1}·j!·k!): ∫₀^x u^m e^{−2u} du = m!/2^{m+1}·P(m+1, 2x).
        let c = |j: usize, k: usize| {
            let m = (j + k) as u32;
            factorial(m) / (libm::pow(2.0, (m + 1) as f64) * factorial(j as u32) * factorial(k as u32))
        };
        let c_out = c(n - 1, n - 1);
        let scale = rms_v * rms_v / c_out;
        let mut q = [[0.0; 4]; 4];
        let mut q_inf = [[0.0; 4]; 4];
        for j in 0..n {
            for k in 0..n {
                let m = (j + k) as u32;
                q[j][k] = scale * c(j, k) * gamma_p_int(m + 1, 2.0 * x);
                q_inf[j][k] = scale * c(j, k);
            }
        }
        PoleCascade { n, phi, chol: cholesky(&q, n), chol_stationary: cholesky(&q_inf, n), state: [0.0; 4] }
    }

    /// Draws the state from the stationary distribution (so the noise has its full RMS from the first sample).
    pub(crate) fn start(&mut self, rng: &mut Rng) {
        let mut w = [0.0; 4];
        for x in w.iter_mut().take(self.n) {
            *x = rng.normal();
        }
        for j in 0..self.n {
            let mut s = 0.0;
            for (k, wk) in w.iter().enumerate().take(j + 1) {
                s += self.chol_stationary[j][k] * wk;
            }
            self.state[j] = s;
        }
    }

    /// Advances the state by one sample interval.
    #[inline]
    /// Adds the last stage's output to each sample of `out`, stepping the cascade after each:
    /// the same arithmetic as [`PoleCascade::step`] in the same order, with the stage count `N`
    /// (which must equal `self.n`) known to the compiler so that the loops unroll.
    fn add_output_to<const N: usize>(&mut self, out: &mut [f64], rng: &mut Rng) {
        debug_assert_eq!(N, self.n);
        let (phi, chol) = (self.phi, self.chol);
        let mut state = self.state;
        for v in out.iter_mut() {
            *v += state[N - 1];
            let mut w = [0.0; 4];
            for x in w.iter_mut().take(N) {
                *x = rng.normal();
            }
            let old = state;
            for j in 0..N {
                let mut s = 0.0;
                for k in 0..=j {
                    s += phi[j][k] * old[k] + chol[j][k] * w[k];
                }
                state[j] = s;
            }
        }
        self.state = state;
    }

    /// One step of the cascade for any stage count: x ← Φx + Lw with w standard normal (the
    /// reference [`PoleCascade::add_output_to`] is checked against).
    #[cfg(test)]
    fn step(&mut self, rng: &mut Rng) {
        let n = self.n;
        let mut w = [0.0; 4];
        for x in w.iter_mut().take(n) {
            *x = rng.normal();
        }
        let old = self.state;
        for j in 0..n {
            let mut s = 0.0;
            for k in 0..=j {
                s += self.phi[j][k] * old[k] + self.chol[j][k] * w[k];
            }
            self.state[j] = s;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unrolled_cascades_give_the_same_bits_as_the_general_step() {
        for poles in 1..=MAX_POLES {
            let source = NoiseSource::BandLimited { rms_v: 0.1, corner_hz: 2e3, poles };
            let mut fast = vec![0.25; 5000];
            add_noise(&source, 11, 1e-5, &mut fast);
            // The general step, sample by sample, from the same start.
            let mut rng = Rng::new(11);
            let mut cascade = PoleCascade::new(0.1, 2e3, poles, 1e-5);
            cascade.start(&mut rng);
            for (i, &got) in fast.iter().enumerate() {
                let want = 0.25 + cascade.state[cascade.n - 1];
                assert_eq!(got.to_bits(), want.to_bits(), "poles {poles}, sample {i}");
                cascade.step(&mut rng);
            }
        }
    }

    fn stats(x: &[f64]) -> (f64, f64) {
        let n = x.len() as f64;
        let m = x.iter().sum::<f64>() / n;
        let v = x.iter().map(|a| (a - m) * (a - m)).sum::<f64>() / n;
        (m, v.sqrt())
    }

    #[test]
    fn incomplete_gamma_matches_closed_forms() {
        // P(1, y) = 1 − e^{−y}; P(2, y) = 1 − e^{−y}(1 + y) (Abramowitz & Stegun 6.5.13, from memory).
        for &y in &[1e-6_f64, 0.01, 0.5, 3.0, 40.0, 200.0] {
            assert!((gamma_p_int(1, y) - (1.0 - (-y).exp())).abs() < 1e-14 * (1.0 + 1.0 / y.min(1.0)) * y.min(1.0));
            let p2 = 1.0 - (-y).exp() * (1.0 + y);
            assert!((gamma_p_int(2, y) - p2).abs() < 1e-12 * p2.max(1e-300) + 1e-15, "{y}");
        }
        // Small-y limit P(a, y) ≈ y^a/a!.
        assert!((gamma_p_int(5, 1e-4) / (1e-20 / 120.0) - 1.0).abs() < 1e-4);
    }

    #[test]
    fn white_noise_has_its_rms() {
        let mut v = vec![0.0; 100_000];
        add_noise(&NoiseSource::White { rms_v: 0.25 }, 3, 1e-6, &mut v);
        let (m, s) = stats(&v);
        // Standard error of σ: σ/√(2n) ≈ 0.00056.
        assert!(m.abs() < 0.004, "{m}");
        assert!((s - 0.25).abs() < 0.003, "{s}");
    }

    #[test]
    fn band_limited_noise_has_its_rms_and_lag_correlation() {
        // One pole: lag-k correlation e^{−ωkΔ} (exponential autocorrelation of RC-filtered white noise).
        // Corner 1 kHz at 100 kHz: ωΔ = 0.0628, lag-10 correlation 0.5335.
        for poles in 1..=4u8 {
            let mut v = vec![0.0; 400_000];
            add_noise(&NoiseSource::BandLimited { rms_v: 0.1, corner_hz: 1000.0, poles }, 11, 1e-5, &mut v);
            let (m, s) = stats(&v);
            // Correlated samples: effective count ≈ n·(ωΔ)/2 ≈ 12 000, so σ's standard error ≈ 0.1/√(2·12 000) ≈ 0.0007;
            // more poles correlate longer, so allow 5 %.
            assert!(m.abs() < 0.01, "poles {poles}: mean {m}");
            assert!((s - 0.1).abs() < 0.005, "poles {poles}: rms {s}");
            if poles == 1 {
                let k = 10;
                let r: f64 = v.windows(k + 1).map(|w| w[0] * w[k]).sum::<f64>() / (v.len() - k) as f64 / (s * s);
                let expect = (-2.0 * std::f64::consts::PI * 1000.0 * 1e-5 * k as f64).exp();
                assert!((r - expect).abs() < 0.03, "{r} vs {expect}");
            }
        }
    }

    #[test]
    fn two_pole_autocorrelation_matches_continuous_process() {
        // Two identical poles: R(τ)/σ² = (1 + ω|τ|)e^{−ω|τ|} (the autocorrelation of 1/(1+jω/ωc)²
        // noise, by inverse Fourier transform; standard, from memory). Check at ωτ = 1.
        let fs = 50_000.0;
        let fc = 500.0;
        let mut v = vec![0.0; 1_000_000];
        add_noise(&NoiseSource::BandLimited { rms_v: 1.0, corner_hz: fc, poles: 2 }, 5, 1.0 / fs, &mut v);
        let k = (fs / (2.0 * std::f64::consts::PI * fc)).round() as usize;
        let tau = k as f64 / fs;
        let w = 2.0 * std::f64::consts::PI * fc * tau;
        let r: f64 = v.windows(k + 1).map(|x| x[0] * x[k]).sum::<f64>() / (v.len() - k) as f64;
        let var: f64 = v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64;
        let expect = (1.0 + w) * (-w).exp();
        assert!((r / var - expect).abs() < 0.03, "{} vs {expect}", r / var);
    }

    #[test]
    fn same_seed_same_noise_and_sources_independent() {
        let src = [
            NoiseSource::White { rms_v: 0.1 },
            NoiseSource::Spikes { rate_hz: 1000.0, amplitude_v: 1.0, decay_s: 1e-5, polarity: SpikePolarity::Random },
        ];
        let run = |s: &NoiseSource, i: usize| {
            let mut v = vec![0.0; 5000];
            add_noise(s, source_seed(9, i), 1e-6, &mut v);
            v
        };
        assert_eq!(run(&src[0], 0), run(&src[0], 0));
        assert_ne!(run(&src[0], 0), run(&src[0], 1));
        let spikes = run(&src[1], 1);
        assert!(spikes.iter().any(|&x| x > 0.5) && spikes.iter().any(|&x| x < -0.5));
    }

    #[test]
    fn spike_count_follows_rate() {
        // Poisson arrivals: 2000 /s over 1 s gives 2000 ± 45; count the jumps (each at least
        // e^−0.1 of the amplitude, since a spike decays for less than one 1 µs step before it is sampled).
        let mut v = vec![0.0; 1_000_000];
        add_noise(
            &NoiseSource::Spikes { rate_hz: 2000.0, amplitude_v: 1.0, decay_s: 1e-5, polarity: SpikePolarity::Positive },
            source_seed(1, 0),
            1e-6,
            &mut v,
        );
        let jumps = v.windows(2).filter(|w| w[1] - w[0] > 1e-3).count() + (v[0] > 1e-3) as usize;
        assert!((jumps as f64 - 2000.0).abs() < 5.0 * 45.0, "{jumps}");
    }

    #[test]
    fn hum_peak_and_validation() {
        let h = NoiseSource::Hum { mains: MainsFrequency::Hz60, amplitude_v: 0.075, phase_deg: 0.0, harmonics: vec![] };
        let mut v = vec![0.0; 100_000];
        add_noise(&h, 0, 1e-5, &mut v);
        let max = v.iter().cloned().fold(f64::MIN, f64::max);
        assert!((max - 0.075).abs() < 1e-4);
        assert!(h.validate(100.0).is_err());
        let bad = NoiseSource::BandLimited { rms_v: 0.1, corner_hz: 10.0, poles: 7 };
        assert!(bad.validate(1e3).is_err());
    }
}
