//! Level crossings of Gaussian noise, and how much hysteresis keeps noise from making false edges.
//!
//! **Rice's formula** (S. O. Rice, "Mathematical analysis of random noise", Bell System Technical
//! Journal 23–24, 1944–45, §3.3; from memory): for a stationary Gaussian signal with mean μ,
//! σ0² = ∫S(f)df and σ1² = (2π)²∫f²S(f)df (one-sided PSD S), the mean rate of up-crossings of a
//! level u is ν⁺(u) = (σ1/(2πσ0))·exp[−(u−μ)²/(2σ0²)].
//!
//! Spectral moments used here (integrals of the one-sided PSD, derived for this module):
//! - flat to B: σ1/σ0 = 2πB/√3, so ν⁺(μ) = B/√3;
//! - N ≥ 2 identical first-order poles at fc (no band limit): with ∫₀^∞u^{2a}(1+u²)^{−N}du =
//!   ½B(a+½, N−a−½), σ1/σ0 = 2πfc/√(2N−3); two poles give ν⁺(μ) = fc exactly;
//! - one pole (σ1 infinite without a band limit): limited by the comparator's bandwidth B,
//!   σ1² = σ0²·(2π)²·(2fc/π)·(B − fc·atan(B/fc)).
//!
//! **Slow edges through noise** (shared/DOMAIN.md §4, derived there and here): an input s·t + n(t)
//! crosses a level L the wrong way (downward) on average E[(−s−n′)⁺]/s times, since the density
//! of s·t + n at L integrates to 1/s over time and n′ ~ N(0, σ1²) is independent of n. That is
//! N = (σ1/s)·φ(s/σ1) − Q(s/σ1) ≈ σ1/(s√(2π)) − ½ wrong-way crossings; each gives one extra edge
//! pair. With hysteresis H, a wrong-way crossing of VT− must happen where the mean sits above the
//! band centre (density integral (1/s)·Q(H/(2σ0))) or follow an up-crossing of VT+ where the mean
//! sits below it (same integral); adding both, N_H ≤ (1/s)·Q(H/(2σ0))·E|s + n′| ≈
//! (2σ1/(s√(2π)))·Q(H/(2σ0)) for s ≪ σ1. DOMAIN §4 reports this bound over-predicts 1.0–5.4× in
//! simulation. Here every wrong-way crossing counts as two false edges (the wrong edge and the edge
//! that undoes it), so the false edges per intended edge are 2·N_H.
//!
//! **Deterministic interference** (mains hum and its harmonics, ripple, any periodic term d(t);
//! shared/DOMAIN.md §8; derived here). Near a crossing the input is m(t) = L + s·(t − t0) + d(t)
//! with the signal rising at s > 0. The trigger switches at VT+ at some t1; it switches back
//! falsely if at a later t2 the input is below VT− = VT+ − H. Without Gaussian noise that needs
//! d(t1) − d(t2) − s·(t2 − t1) > H, so the most the input can move against the signal's
//! direction is the largest drawdown of e(t) = d(t) + s·t,
//! R(s) = max over t1 ≤ t2 of [e(t1) − e(t2)] (for a falling signal, the same with −d).
//! The maximum over t1 covers every phase of the interference relative to the crossing. A pair
//! with t2 − t1 > P (the common period of d) is beaten by t2 − P, so two periods hold the
//! maximum; moreover s·(t2 − t1) ≤ R ≤ max d − min d, so only pairs within the time the signal
//! needs to cross the band (about H/s) matter. For one sinusoid A·sin(2πft) with r = s/(2πfA):
//! R = 2A·√(1 − r²) − (s/(πf))·arccos r for r < 1 (the hum's slope 2πfA cancels s at
//! τ = arccos(r)/(πf)), and R = 0 for r ≥ 1 (the signal outruns the hum). H ≤ R gives false
//! edges at the worst phase whatever the noise; with H > R the Gaussian noise has the margin
//! H − R, and the bound above applies to that margin with the derivative term E|ḋ + n′| ≤
//! max|ḋ| + σ1·√(2/π), i.e. with σ1 raised to σ1 + √(π/2)·max|ḋ|. So the recommended minimum is
//! **H = R + 2σ0·Q⁻¹(N·s√(2π)/(2σ1′))**, σ1′ = σ1 + √(π/2)·Σ2πfᵢ|Aᵢ| ([`min_hysteresis_with_interference`]).
//!
//! **Physical noise bandwidth.** σ1 must come from a bandwidth the hardware has (the comparator's
//! input bandwidth or an input filter), not from a simulation's sample rate. White noise is taken
//! as flat to that bandwidth B. A single real pole at fc has no finite σ1 on its own; this module
//! uses an explicit limit: the derivative integral is cut at B (a brick-wall device response,
//! [`Spectrum::Poles`] with N = 1). A second real pole at B instead would give
//! σ1/σ0 = 2π·√(fc·B) (by partial fractions), against 2π·√((2/π)·fc·B) for the cut at B ≫ fc:
//! the two differ by 25 % in σ1, a few per cent in H. Two or more poles need no limit.

use serde::{Deserialize, Serialize};
use std::f64::consts::{PI, SQRT_2};

/// The standard normal density φ(x).
pub fn phi(x: f64) -> f64 {
    libm::exp(-0.5 * x * x) / (2.0 * PI).sqrt()
}

/// The standard normal upper tail Q(x) = P(Z > x) = ½·erfc(x/√2).
pub fn q_function(x: f64) -> f64 {
    0.5 * libm::erfc(x / SQRT_2)
}

/// The inverse of [`q_function`]: the x with Q(x) = p, for 0 < p < 1 (p is clamped to
/// [1e-300, 1 − 1e-16]). Bisection on the monotone Q, so it always terminates.
pub fn q_inverse(p: f64) -> f64 {
    if p.is_nan() {
        return 0.0;
    }
    let p = p.clamp(1e-300, 1.0 - 1e-16);
    let (mut lo, mut hi) = (-40.0_f64, 40.0_f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if q_function(mid) > p {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-15 {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// The shape of a Gaussian noise spectrum, for [`spectral_moments`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Spectrum {
    /// Flat from 0 to `bandwidth_hz`.
    Flat {
        /// Upper edge B, hertz.
        bandwidth_hz: f64,
    },
    /// `poles` identical first-order low-pass poles at `corner_hz`; for one pole the derivative
    /// integral is cut at `bandwidth_hz` (the comparator's or the sampling's bandwidth).
    Poles {
        /// Corner frequency fc, hertz.
        corner_hz: f64,
        /// Number of poles N (1 to 4).
        poles: u8,
        /// Band limit B used only for N = 1, hertz.
        bandwidth_hz: f64,
    },
}

/// σ0 (= `rms_v`) and σ1 (volts per second) of Gaussian noise with the given spectrum. See the
/// module documentation for the formulas. Non-finite or negative inputs give σ1 = 0.
pub fn spectral_moments(rms_v: f64, spectrum: Spectrum) -> (f64, f64) {
    let s0 = if rms_v.is_finite() && rms_v > 0.0 { rms_v } else { 0.0 };
    let ratio = match spectrum {
        Spectrum::Flat { bandwidth_hz } => 2.0 * PI * bandwidth_hz / 3f64.sqrt(),
        Spectrum::Poles { corner_hz, poles, bandwidth_hz } => {
            if poles >= 2 {
                2.0 * PI * corner_hz / ((2 * poles as i32 - 3) as f64).sqrt()
            } else {
                let (b, fc) = (bandwidth_hz, corner_hz);
                let inner = (2.0 * fc / PI) * (b - fc * libm::atan(b / fc));
                2.0 * PI * inner.max(0.0).sqrt()
            }
        }
    };
    let s1 = s0 * ratio;
    (s0, if s1.is_finite() && s1 > 0.0 { s1 } else { 0.0 })
}

/// Combines independent Gaussian sources: σ0² and σ1² add.
pub fn combine_moments(parts: impl IntoIterator<Item = (f64, f64)>) -> (f64, f64) {
    let (a, b) = parts.into_iter().fold((0.0, 0.0), |(a, b), (s0, s1)| (a + s0 * s0, b + s1 * s1));
    (a.sqrt(), b.sqrt())
}

/// Rice's formula: mean up-crossings per second of level `level_v` by stationary Gaussian noise
/// of mean `mean_v`, σ0 `sigma0_v` and σ1 `sigma1_v_per_s` (0 when σ0 is 0).
pub fn upcrossing_rate_hz(level_v: f64, mean_v: f64, sigma0_v: f64, sigma1_v_per_s: f64) -> f64 {
    if !(sigma0_v > 0.0) || !(sigma1_v_per_s > 0.0) {
        return 0.0;
    }
    let z = (level_v - mean_v) / sigma0_v;
    sigma1_v_per_s / (2.0 * PI * sigma0_v) * libm::exp(-0.5 * z * z)
}

/// Mean number of wrong-way crossings when an input ramping at `slope_v_per_s` passes a single
/// threshold through noise with derivative deviation σ1 (no hysteresis):
/// N = (σ1/s)·φ(s/σ1) − Q(s/σ1). Each is one extra edge pair.
pub fn wrong_way_crossings_no_hysteresis(slope_v_per_s: f64, sigma1_v_per_s: f64) -> f64 {
    let s = slope_v_per_s.abs();
    if !(sigma1_v_per_s > 0.0) {
        return 0.0;
    }
    if !(s > 0.0) {
        return f64::INFINITY;
    }
    let r = s / sigma1_v_per_s;
    ((sigma1_v_per_s / s) * phi(r) - q_function(r)).max(0.0)
}

/// Upper bound on the false edges per intended edge for a hysteresis `hysteresis_v` crossed at
/// `slope_v_per_s` through Gaussian noise (σ0, σ1): 2·(2σ1/(s√(2π)))·Q(H/(2σ0)).
/// Infinite for a flat (zero-slope) input.
pub fn false_edges_per_edge_bound(hysteresis_v: f64, slope_v_per_s: f64, sigma0_v: f64, sigma1_v_per_s: f64) -> f64 {
    let s = slope_v_per_s.abs();
    if !(sigma0_v > 0.0) || !(sigma1_v_per_s > 0.0) {
        return 0.0;
    }
    if !(s > 0.0) {
        return f64::INFINITY;
    }
    2.0 * (2.0 * sigma1_v_per_s / (s * (2.0 * PI).sqrt())) * q_function(hysteresis_v.max(0.0) / (2.0 * sigma0_v))
}

/// The smallest hysteresis that keeps the bound of [`false_edges_per_edge_bound`] at or below
/// `target_per_edge` false edges per intended edge: H = 2σ0·Q⁻¹(N·s√(2π)/(2σ1)) with N = target/2.
/// Returns 0 when even no hysteresis meets the target, and `None` for a flat input (s = 0) or a
/// target that is not above zero.
pub fn min_hysteresis_v(target_per_edge: f64, slope_v_per_s: f64, sigma0_v: f64, sigma1_v_per_s: f64) -> Option<f64> {
    let s = slope_v_per_s.abs();
    if !(target_per_edge > 0.0) || !target_per_edge.is_finite() || !(s > 0.0) || !s.is_finite() {
        return None;
    }
    if !(sigma0_v > 0.0) || !(sigma1_v_per_s > 0.0) {
        return Some(0.0);
    }
    let arg = 0.5 * target_per_edge * s * (2.0 * PI).sqrt() / (2.0 * sigma1_v_per_s);
    if arg >= 0.5 {
        return Some(0.0);
    }
    Some(2.0 * sigma0_v * q_inverse(arg))
}

/// One periodic term of the deterministic interference, A·sin(2πft + φ).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Sinusoid {
    /// Peak amplitude A, volts.
    pub amplitude_v: f64,
    /// Frequency f, hertz.
    pub frequency_hz: f64,
    /// Phase φ at t = 0, radians.
    pub phase_rad: f64,
}

impl Sinusoid {
    fn value_at(&self, t_s: f64) -> f64 {
        let c = self.frequency_hz * t_s;
        self.amplitude_v * libm::sin(2.0 * PI * (c - libm::floor(c)) + self.phase_rad)
    }
}

/// Points per cycle of the highest interference frequency in [`reverse_excursion_v`]'s grid.
const POINTS_PER_CYCLE: f64 = 256.0;
/// Largest ratio of the highest interference frequency to the common base frequency that
/// [`reverse_excursion_v`] samples; beyond it the peak-to-peak bound is used.
const MAX_CYCLES_PER_PERIOD: f64 = 1000.0;

fn usable(terms: &[Sinusoid]) -> impl Iterator<Item = &Sinusoid> {
    terms.iter().filter(|t| t.amplitude_v.is_finite() && t.amplitude_v != 0.0 && t.frequency_hz.is_finite() && t.frequency_hz > 0.0 && t.phase_rad.is_finite())
}

/// The largest slope of the interference, Σ 2πfᵢ|Aᵢ|, volts per second (an upper bound on max|ḋ|).
pub fn interference_slope_max_v_per_s(terms: &[Sinusoid]) -> f64 {
    usable(terms).map(|t| 2.0 * PI * t.frequency_hz * t.amplitude_v.abs()).sum()
}

/// The common base frequency of the terms (their greatest common divisor, to 1 mHz), `None` when
/// they have none within [`MAX_CYCLES_PER_PERIOD`] cycles of the highest frequency.
fn base_frequency_hz(terms: &[Sinusoid]) -> Option<(f64, f64)> {
    fn gcd(a: u64, b: u64) -> u64 {
        if b == 0 { a } else { gcd(b, a % b) }
    }
    let mut g = 0u64;
    let mut f_max = 0.0_f64;
    for t in usable(terms) {
        let m = t.frequency_hz * 1e3;
        let r = libm::round(m);
        if !(1.0..1e15).contains(&r) || (m - r).abs() > 1e-6 * m {
            return None;
        }
        g = gcd(r as u64, g);
        f_max = f_max.max(t.frequency_hz);
    }
    let f0 = g as f64 * 1e-3;
    (g > 0 && f_max / f0 <= MAX_CYCLES_PER_PERIOD).then_some((f0, f_max))
}

/// The largest reverse excursion R of deterministic interference against a signal crossing at
/// `slope_v_per_s` (positive: a rising signal, the reverse is downward; negative: falling, the
/// reverse is upward), volts: the largest drawdown of ±d(t) + |s|·t (see the module
/// documentation). Sampled over two common periods at [`POINTS_PER_CYCLE`] points per cycle of the
/// highest frequency, then refined around the best pair by golden-section search, so it is
/// exact to about 1e-6 of the amplitude for smooth terms. Terms without a common period of at most
/// [`MAX_CYCLES_PER_PERIOD`] cycles give the conservative bound Σ2|Aᵢ|. 0 without terms; a
/// non-finite slope gives the bound as well.
pub fn reverse_excursion_v(terms: &[Sinusoid], slope_v_per_s: f64) -> f64 {
    let peak_to_peak: f64 = usable(terms).map(|t| 2.0 * t.amplitude_v.abs()).sum();
    if peak_to_peak == 0.0 {
        return 0.0;
    }
    if !slope_v_per_s.is_finite() {
        return peak_to_peak;
    }
    let Some((f0, f_max)) = base_frequency_hz(terms) else { return peak_to_peak };
    if slope_v_per_s.abs() >= interference_slope_max_v_per_s(terms) {
        return 0.0; // e(t) never falls: the signal outruns the interference everywhere.
    }
    let sign = if slope_v_per_s < 0.0 { -1.0 } else { 1.0 };
    let s = slope_v_per_s.abs();
    let e = |t: f64| sign * usable(terms).map(|x| x.value_at(t)).sum::<f64>() + s * t;
    let m = libm::ceil(POINTS_PER_CYCLE * f_max / f0) as usize;
    let h = 1.0 / (f0 * m as f64);
    // Largest drawdown over two periods: a running maximum and the deepest fall below it.
    let (mut top, mut top_i) = (f64::NEG_INFINITY, 0usize);
    let (mut best, mut best_pair) = (0.0_f64, None);
    for i in 0..=2 * m {
        let v = e(i as f64 * h);
        if v > top {
            top = v;
            top_i = i;
        }
        if top - v > best {
            best = top - v;
            best_pair = Some((top_i, i));
        }
    }
    if let Some((i1, i2)) = best_pair {
        let t1 = golden(|t| -e(t), i1 as f64 * h - h, i1 as f64 * h + h);
        let t2 = golden(e, i2 as f64 * h - h, i2 as f64 * h + h);
        if t1 <= t2 {
            best = best.max(e(t1) - e(t2));
        }
    }
    best.clamp(0.0, peak_to_peak)
}

/// The minimiser of `f` on [a, b] by golden-section search (60 steps; assumes one minimum there).
fn golden(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let k = 0.5 * (5f64.sqrt() - 1.0);
    let (mut c, mut d) = (b - k * (b - a), a + k * (b - a));
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..60 {
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - k * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + k * (b - a);
            fd = f(d);
        }
    }
    0.5 * (a + b)
}

/// The recommended minimum hysteresis and its two parts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct HysteresisNeed {
    /// R: the largest reverse excursion of the deterministic interference at the slowest edges, volts.
    pub interference_v: f64,
    /// The Gaussian term 2σ0·Q⁻¹(N·s√(2π)/(2σ1′)), volts.
    pub gaussian_v: f64,
    /// σ1′ = σ1 + √(π/2)·max|ḋ| used in the Gaussian term, volts per second.
    pub sigma1_effective_v_per_s: f64,
    /// The sum, volts.
    pub total_v: f64,
}

/// The minimum hysteresis against Gaussian noise (σ0, σ1 at a physical bandwidth) and periodic
/// interference `terms` for at most `target_per_edge` false edges per intended edge (see the
/// module documentation): H = R + 2σ0·Q⁻¹(N·s√(2π)/(2σ1′)). `slope_up_v_per_s` and
/// `slope_down_v_per_s` are the slowest rising and falling signal slopes (magnitudes; `None` when
/// the signal has no such edge); R is the larger of the two directions' excursions and the
/// Gaussian term uses the slower slope. `None` without any slope or for a target not above zero.
pub fn min_hysteresis_with_interference(
    target_per_edge: f64,
    slope_up_v_per_s: Option<f64>,
    slope_down_v_per_s: Option<f64>,
    sigma0_v: f64,
    sigma1_v_per_s: f64,
    terms: &[Sinusoid],
) -> Option<HysteresisNeed> {
    let up = slope_up_v_per_s.map(f64::abs).filter(|s| *s > 0.0 && s.is_finite());
    let down = slope_down_v_per_s.map(f64::abs).filter(|s| *s > 0.0 && s.is_finite());
    let slowest = match (up, down) {
        (Some(a), Some(b)) => a.min(b),
        (a, b) => a.or(b)?,
    };
    let interference_v = up.map_or(0.0, |s| reverse_excursion_v(terms, s)).max(down.map_or(0.0, |s| reverse_excursion_v(terms, -s)));
    let s1 = if sigma1_v_per_s.is_finite() && sigma1_v_per_s > 0.0 { sigma1_v_per_s } else { 0.0 };
    let sigma1_effective_v_per_s = if s1 > 0.0 { s1 + (PI / 2.0).sqrt() * interference_slope_max_v_per_s(terms) } else { 0.0 };
    let gaussian_v = min_hysteresis_v(target_per_edge, slowest, sigma0_v, sigma1_effective_v_per_s)?;
    Some(HysteresisNeed { interference_v, gaussian_v, sigma1_effective_v_per_s, total_v: interference_v + gaussian_v })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn q_and_inverse_match_tables() {
        // Standard normal table values (Abramowitz & Stegun table 26.1, from memory):
        // Q(1) = 0.158655, Q(1.959964) = 0.025, Q(3) = 0.0013499.
        assert!((q_function(1.0) - 0.158_655_253_9).abs() < 1e-9);
        assert!((q_function(1.959_963_985) - 0.025).abs() < 1e-9);
        assert!((q_function(3.0) - 0.001_349_898).abs() < 1e-9);
        for &p in &[0.4, 0.1, 1e-3, 1e-9, 1e-30] {
            let x = q_inverse(p);
            assert!((q_function(x) / p - 1.0).abs() < 1e-9, "{p}");
        }
        assert!((q_inverse(0.025) - 1.959_963_985).abs() < 1e-8);
    }

    #[test]
    fn flat_and_two_pole_zero_level_rates() {
        // Flat to B: ν⁺(μ) = B/√3 (DOMAIN §4). Two poles: ν⁺(μ) = fc.
        let (s0, s1) = spectral_moments(0.3, Spectrum::Flat { bandwidth_hz: 1000.0 });
        assert!((upcrossing_rate_hz(0.0, 0.0, s0, s1) - 1000.0 / 3f64.sqrt()).abs() < 1e-9);
        let (s0, s1) = spectral_moments(0.3, Spectrum::Poles { corner_hz: 250.0, poles: 2, bandwidth_hz: 1e9 });
        assert!((upcrossing_rate_hz(0.0, 0.0, s0, s1) - 250.0).abs() < 1e-9);
        // One pole: σ1 grows as √B.
        let (_, a) = spectral_moments(1.0, Spectrum::Poles { corner_hz: 1.0, poles: 1, bandwidth_hz: 1e4 });
        let (_, b) = spectral_moments(1.0, Spectrum::Poles { corner_hz: 1.0, poles: 1, bandwidth_hz: 4e4 });
        assert!((b / a - 2.0).abs() < 1e-3);
    }

    #[test]
    fn four_pole_moment_by_quadrature() {
        // σ1²/σ0² = (2π)²·∫f²S/∫S for S = (1+f²)^−4: check 1/(2N−3) = 1/5 by a plain midpoint sum.
        let (mut a, mut b) = (0.0, 0.0);
        let h: f64 = 1e-3;
        let mut f: f64 = h / 2.0;
        while f < 200.0 {
            let s = (1.0 + f * f).powi(-4);
            a += s * h;
            b += f * f * s * h;
            f += h;
        }
        let (s0, s1) = spectral_moments(1.0, Spectrum::Poles { corner_hz: 1.0, poles: 4, bandwidth_hz: 0.0 });
        assert!(((s1 / s0 / (2.0 * PI)).powi(2) - b / a).abs() < 1e-6);
    }

    /// The closed form for one sinusoid from the module documentation.
    fn one_sine_excursion(a: f64, f: f64, s: f64) -> f64 {
        let r = s / (2.0 * PI * f * a);
        if r >= 1.0 {
            0.0
        } else {
            2.0 * a * (1.0 - r * r).sqrt() - s / (PI * f) * r.acos()
        }
    }

    #[test]
    fn excursion_of_one_sine_matches_its_closed_form() {
        for &(a, f, s, ph) in &[(0.15, 50.0, 6.0, 0.0), (0.15, 60.0, 30.0, 1.0), (1.0, 50.0, 0.0, 2.0), (0.1, 50.0, 31.0, 0.3), (0.1, 50.0, 40.0, 0.0)] {
            let t = [Sinusoid { amplitude_v: a, frequency_hz: f, phase_rad: ph }];
            let want = one_sine_excursion(a, f, s);
            for sign in [1.0, -1.0] {
                let got = reverse_excursion_v(&t, sign * s);
                assert!((got - want).abs() < 1e-6 * a, "{a} {f} {s}: {got} vs {want}");
            }
        }
        assert_eq!(reverse_excursion_v(&[], 1.0), 0.0);
        // No common period within the limit: the peak-to-peak bound.
        let odd = [Sinusoid { amplitude_v: 0.1, frequency_hz: 50.0, phase_rad: 0.0 }, Sinusoid { amplitude_v: 0.1, frequency_hz: 50.0 * 2f64.sqrt(), phase_rad: 0.0 }];
        assert_eq!(reverse_excursion_v(&odd, 1.0), 0.4);
    }

    #[test]
    fn excursion_with_harmonics_against_brute_force() {
        // Hum with a third harmonic and a 60 Hz term (common period 0.1 s): a plain double loop
        // over a fine grid agrees with the drawdown search.
        let t = [
            Sinusoid { amplitude_v: 0.15, frequency_hz: 50.0, phase_rad: 0.0 },
            Sinusoid { amplitude_v: 0.03, frequency_hz: 150.0, phase_rad: 0.7 },
            Sinusoid { amplitude_v: 0.02, frequency_hz: 60.0, phase_rad: -0.4 },
        ];
        for &s in &[2.0_f64, -5.0, 20.0] {
            let d = |x: f64| t.iter().map(|w| w.value_at(x)).sum::<f64>();
            let n = 2000;
            let h = 0.1 / n as f64;
            let sign = if s < 0.0 { -1.0 } else { 1.0 };
            let mut brute = 0.0_f64;
            for i in 0..n {
                for j in 0..n {
                    let (t1, t2) = (i as f64 * h, (i + j) as f64 * h);
                    brute = brute.max(sign * (d(t1) - d(t2)) - s.abs() * (t2 - t1));
                }
            }
            let got = reverse_excursion_v(&t, s);
            assert!(got >= brute - 1e-9 && got - brute < 2e-4, "{s}: {got} vs {brute}");
        }
    }

    #[test]
    fn recommendation_adds_the_interference() {
        let t = [Sinusoid { amplitude_v: 0.15, frequency_hz: 50.0, phase_rad: 0.0 }];
        let (s0, s1) = spectral_moments(0.01, Spectrum::Flat { bandwidth_hz: 1e6 });
        let n = min_hysteresis_with_interference(1e-3, Some(6.0), Some(8.0), s0, s1, &t).unwrap();
        assert!((n.interference_v - one_sine_excursion(0.15, 50.0, 6.0)).abs() < 1e-6);
        let s1e = s1 + (PI / 2.0).sqrt() * 2.0 * PI * 50.0 * 0.15;
        assert_eq!(n.gaussian_v, min_hysteresis_v(1e-3, 6.0, s0, s1e).unwrap());
        assert_eq!(n.total_v, n.interference_v + n.gaussian_v);
        // Without interference it is Rice's Gaussian term alone.
        let g = min_hysteresis_with_interference(1e-3, Some(6.0), None, s0, s1, &[]).unwrap();
        assert_eq!((g.interference_v, g.total_v), (0.0, min_hysteresis_v(1e-3, 6.0, s0, s1).unwrap()));
        assert!(min_hysteresis_with_interference(1e-3, None, None, s0, s1, &t).is_none());
    }

    #[test]
    fn minimum_hysteresis_inverts_the_bound() {
        let (s0, s1, slope) = (0.01, 2.0 * PI * 1e4 * 0.01, 50.0);
        for &target in &[1e-2, 1e-4, 1e-6] {
            let h = min_hysteresis_v(target, slope, s0, s1).unwrap();
            let back = false_edges_per_edge_bound(h, slope, s0, s1);
            assert!((back / target - 1.0).abs() < 1e-8, "{target}: {back}");
        }
        assert_eq!(min_hysteresis_v(1e-3, 0.0, s0, s1), None);
        assert_eq!(min_hysteresis_v(1e-3, 1e12, s0, s1), Some(0.0));
        // No hysteresis: the bound reduces to the no-hysteresis count plus ½ (DOMAIN §4's
        // approximation σ1/(s√(2π)) − ½), to relative order (s/σ1)²/2 = 0.0032 here.
        let n = wrong_way_crossings_no_hysteresis(slope, s1);
        let b = false_edges_per_edge_bound(0.0, slope, s0, s1) / 2.0;
        let r = slope / s1;
        assert!(((n + 0.5) / b - 1.0).abs() < r * r);
    }
}
