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
