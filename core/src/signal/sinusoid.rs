//! Sinusoids added sample by sample with a rotating phasor, shared by the signal builder
//! ([`super::generate`]) and the mains-hum noise source ([`super::noise`]). Below both: it imports
//! neither.

use crate::error::DesignError;
use std::f64::consts::PI;

/// Largest phase magnitude, degrees (a thousand turns; beyond that `sin` loses every digit).
pub const MAX_PHASE_DEG: f64 = 360e3;

/// Checks a phase in degrees: finite and at most [`MAX_PHASE_DEG`] in magnitude.
pub fn phase(field: &str, v: f64) -> Result<(), DesignError> {
    if v.is_finite() && v.abs() <= MAX_PHASE_DEG {
        Ok(())
    } else {
        Err(DesignError::invalid(field, format!("must be between −{MAX_PHASE_DEG} and {MAX_PHASE_DEG} degrees (got {v})")))
    }
}

/// Samples between exact re-anchoring of recurrences (sine phasors, exponential decays).
pub const RESYNC: usize = 256;

/// The fractional part of `x`, in [0, 1).
#[inline(always)]
pub(crate) fn frac(x: f64) -> f64 {
    x - x.floor()
}

/// Adds A·sin(2πf·t + φ) at t = (first_index + k)·step for k = 0.. to `out`, by a rotating
/// phasor re-anchored to `libm::sin`/`cos` at the first sample and at every absolute index that is
/// a multiple of [`RESYNC`]. Allocation-free.
pub(crate) fn add_sinusoid(out: &mut [f64], first_index: usize, step_s: f64, amplitude_v: f64, frequency_hz: f64, phase_rad: f64) {
    if amplitude_v == 0.0 {
        return;
    }
    let rot = 2.0 * PI * frac(frequency_hz * step_s);
    let (sr, cr) = (libm::sin(rot), libm::cos(rot));
    let cycles0 = phase_rad / (2.0 * PI);
    let mut k = 0;
    while k < out.len() {
        let i = first_index + k;
        let run = (RESYNC - i % RESYNC).min(out.len() - k);
        let a = 2.0 * PI * frac(frequency_hz * (i as f64 * step_s) + cycles0);
        let (mut s, mut c) = (libm::sin(a), libm::cos(a));
        for v in out[k..k + run].iter_mut() {
            *v += amplitude_v * s;
            let s2 = s * cr + c * sr;
            c = c * cr - s * sr;
            s = s2;
        }
        k += run;
    }
}
