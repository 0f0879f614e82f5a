//! The input network in the signal study: what its RC filter does to the noise that Rice's formula
//! sees, and the front end (clamp, then one-pole filter) the simulation applies to the samples.
//!
//! **Spectral moments through a first-order RC** (derived here). White noise of RMS σ flat to B
//! has the one-sided PSD S0 = σ²/B on [0, B]; a one-pole filter at fc multiplies it by
//! |H|² = 1/(1 + (f/fc)²). With ∫du/(1+u²) = atan u and ∫u²du/(1+u²) = u − atan u:
//! - m0 = ∫₀^B S0|H|² df = S0·fc·atan(B/fc), so σ0 = σ·√(fc·atan(B/fc)/B);
//! - m2 = (2π)²∫₀^B f²S0|H|² df = (2π)²·S0·fc²·(B − fc·atan(B/fc)), so
//!   σ1 = 2π·σ·fc·√((B − fc·atan(B/fc))/B).
//!
//! With fc ≫ B both tend to the unfiltered σ and 2πσB/√3 (atan x = x − x³/3 + …), the flat
//! spectrum of [`crate::signal::rice`]. Band-limited noise (N poles at f_n, normalised so that
//! its RMS over all frequencies is σ) times the filter's pole is integrated numerically
//! (Simpson's rule on a logarithmic grid, ten decades either side of the corners); the product
//! has at least two poles, so both moments converge without a band limit.
//!
//! **Simulation.** The samples pass the clamp (limited to the clamp node's range, referred to the
//! field terminal through the dropper's ratio; the small drop across the filter resistor to the
//! trigger's input current is neglected) and then the one-pole filter, discretised exactly for
//! an input linear between samples: over a step Δ with slope k = (x1 − x0)/Δ and a = e^{−Δ/τ},
//! y1 = x1 − kτ + (y0 − x0 + kτ)·a (the exact solution of τ·y′ = x − y; any linear-systems text,
//! from memory). The trigger then uses the field-referred thresholds, which is exact within one
//! output state (see the parent module: the pin is an affine function of the filtered source).

use crate::signal::noise::NoiseSource;
use crate::signal::Times;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// σ0 (volts) and σ1 (volts per second) of white noise of RMS `rms_v`, flat to `bandwidth_hz`,
/// after a one-pole filter at `corner_hz` (closed form of the module documentation).
#[allow(clippy::neg_cmp_op_on_partial_ord)] // `!(x > 0.0)` also rejects NaN
pub fn white_through_filter(rms_v: f64, bandwidth_hz: f64, corner_hz: f64) -> (f64, f64) {
    let (b, fc) = (bandwidth_hz, corner_hz);
    if !(rms_v > 0.0) || !(b > 0.0) || !(fc > 0.0) || !rms_v.is_finite() {
        return (0.0, 0.0);
    }
    let at = libm::atan(b / fc);
    let s0 = rms_v * (fc * at / b).sqrt();
    // B − fc·atan(B/fc) loses digits when B ≪ fc; the series B³/(3fc²) − B⁵/(5fc⁴) is used there.
    let x = b / fc;
    let rest = if x < 1e-3 { b * x * x * (1.0 / 3.0 - x * x / 5.0) } else { b - fc * at };
    let s1 = 2.0 * PI * rms_v * fc * (rest.max(0.0) / b).sqrt();
    (finite_or_zero(s0), finite_or_zero(s1))
}

fn finite_or_zero(x: f64) -> f64 {
    if x.is_finite() && x > 0.0 {
        x
    } else {
        0.0
    }
}

/// ∫₀^∞ (1 + u²)^(−N) du = (π/2)·(2N−3)!!/(2N−2)!! for N = 1…4.
fn pole_area(poles: u8) -> f64 {
    match poles {
        1 => PI / 2.0,
        2 => PI / 4.0,
        3 => 3.0 * PI / 16.0,
        _ => 5.0 * PI / 32.0,
    }
}

/// σ0 and σ1 of band-limited noise (RMS `rms_v`, `poles` poles at `noise_corner_hz`) after a
/// one-pole filter at `corner_hz`, by Simpson's rule on a logarithmic grid.
#[allow(clippy::neg_cmp_op_on_partial_ord)] // `!(x > 0.0)` also rejects NaN
pub fn poles_through_filter(rms_v: f64, noise_corner_hz: f64, poles: u8, corner_hz: f64) -> (f64, f64) {
    let (fn_, fc) = (noise_corner_hz, corner_hz);
    if !(rms_v > 0.0) || !(fn_ > 0.0) || !(fc > 0.0) || !rms_v.is_finite() || poles == 0 {
        return (0.0, 0.0);
    }
    let k = rms_v * rms_v / (fn_ * pole_area(poles));
    let n = poles as i32;
    let s = |f: f64| k / (1.0 + (f / fn_).powi(2)).powi(n) / (1.0 + (f / fc).powi(2));
    let lo = fn_.min(fc) * 1e-10;
    let hi = fn_.max(fc) * 1e10;
    let (a, b) = (lo.ln(), hi.ln());
    const STEPS: usize = 2400; // even; 2400 steps over ≤ 40 decades: 60 per decade
    let h = (b - a) / STEPS as f64;
    let (mut m0, mut m2) = (0.0, 0.0);
    for i in 0..=STEPS {
        let w = if i == 0 || i == STEPS { 1.0 } else if i % 2 == 1 { 4.0 } else { 2.0 };
        let f = (a + i as f64 * h).exp();
        let g = s(f) * f; // df = f·dx
        m0 += w * g;
        m2 += w * g * f * f;
    }
    m0 = m0 * h / 3.0 + s(0.0) * lo;
    m2 = m2 * h / 3.0;
    (finite_or_zero(m0.sqrt()), finite_or_zero(2.0 * PI * m2.sqrt()))
}

/// What the input network does to the samples before the trigger, in field-terminal volts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FrontEnd {
    /// The filter's time constant, seconds (0: no filter).
    pub time_constant_s: f64,
    /// Lowest field-equivalent voltage the clamp lets through, volts (`None`: no clamp).
    pub clamp_low_v: Option<f64>,
    /// Highest field-equivalent voltage the clamp lets through, volts (`None`: no clamp).
    pub clamp_high_v: Option<f64>,
}

impl FrontEnd {
    /// The front end of a network report: the larger time constant of the two trips and the
    /// clamp node's levels divided by the dropper's ratio.
    pub fn of(report: &super::NetworkReport, net: &super::InputNetwork, negative_rail_v: f64, supply_v: f64) -> FrontEnd {
        let (cl, ch) = net.clamp_levels_v(negative_rail_v, supply_v);
        let g = net.gain();
        FrontEnd {
            time_constant_s: report.filter.map_or(0.0, |f| f.time_constant_s),
            clamp_low_v: cl.is_finite().then_some(cl / g),
            clamp_high_v: ch.is_finite().then_some(ch / g),
        }
    }

    /// The filter's corner 1/(2πτ), hertz (`None` without a filter).
    pub fn corner_hz(&self) -> Option<f64> {
        (self.time_constant_s > 0.0).then(|| 1.0 / (2.0 * PI * self.time_constant_s))
    }

    /// Clamps then filters `samples` in place (module documentation); the filter starts at rest
    /// on the first sample.
    pub fn apply(&self, times: Times<'_>, samples: &mut [f64]) {
        for x in samples.iter_mut() {
            if let Some(lo) = self.clamp_low_v {
                *x = x.max(lo);
            }
            if let Some(hi) = self.clamp_high_v {
                *x = x.min(hi);
            }
        }
        let tau = self.time_constant_s;
        if tau.is_nan() || tau <= 0.0 || samples.is_empty() {
            return;
        }
        let (mut x0, mut y) = (samples[0], samples[0]);
        for (i, s) in samples.iter_mut().enumerate().skip(1) {
            let x1 = *s;
            let dt = times.at(i) - times.at(i - 1);
            if dt > 0.0 {
                let a = libm::exp(-dt / tau);
                let kt = (x1 - x0) / dt * tau;
                y = x1 - kt + (y - x0 + kt) * a;
            }
            x0 = x1;
            *s = y;
        }
    }

    /// σ0 and σ1 of one noise source after the filter, with white noise flat to `bandwidth_hz`
    /// (the study's noise bandwidth); `None` for hum and spikes (not Gaussian). Without a filter,
    /// the unfiltered moments of [`crate::signal::rice::spectral_moments`].
    pub fn moments(&self, source: &NoiseSource, bandwidth_hz: f64) -> Option<(f64, f64)> {
        use crate::signal::rice::{spectral_moments, Spectrum};
        match (source, self.corner_hz()) {
            (&NoiseSource::White { rms_v }, Some(fc)) => Some(white_through_filter(rms_v, bandwidth_hz, fc)),
            (&NoiseSource::BandLimited { rms_v, corner_hz, poles }, Some(fc)) => Some(poles_through_filter(rms_v, corner_hz, poles, fc)),
            (&NoiseSource::White { rms_v }, None) => Some(spectral_moments(rms_v, Spectrum::Flat { bandwidth_hz })),
            (&NoiseSource::BandLimited { rms_v, corner_hz, poles }, None) => {
                Some(spectral_moments(rms_v, Spectrum::Poles { corner_hz, poles, bandwidth_hz }))
            }
            _ => None,
        }
    }
}
