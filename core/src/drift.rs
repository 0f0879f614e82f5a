//! How a parameter's value moves with temperature: plain data below the topologies and the device
//! models, so both can name it without importing each other.

use serde::{Deserialize, Serialize};

/// How a parameter's value moves with temperature T away from the 25 °C reference (ΔT = T − 25 K).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Drift {
    /// No temperature dependence is modelled.
    #[default]
    None,
    /// A drift of known sign, base units per kelvin: p(T) = p + d·ΔT (a gate threshold's
    /// temperature coefficient, say).
    Known(f64),
    /// A drift of unknown sign with this magnitude, base units per kelvin: p(T) = p ± |d|·ΔT
    /// (offset drift TCVOS: datasheets give its magnitude only).
    Unknown(f64),
    /// A relative change of known sign compounded per kelvin: p(T) = p·(1 + r)^ΔT, r a fraction
    /// per kelvin (bias current of CMOS/JFET inputs doubles about every 10 K, r ≈ 0.072; bipolar
    /// inputs fall slowly, r < 0 — common practice).
    Compound(f64),
}

impl Drift {
    /// The change of a parameter of value `value` at ΔT = `dt_k` from 25 °C; `sign` (±1) picks
    /// the direction of a drift of unknown sign (ignored by the others).
    pub fn shift(&self, value: f64, dt_k: f64, sign: f64) -> f64 {
        match *self {
            Drift::None => 0.0,
            Drift::Known(d) => d * dt_k,
            Drift::Unknown(d) => sign * d.abs() * dt_k,
            Drift::Compound(r) => value * ((1.0 + r).powf(dt_k) - 1.0),
        }
    }

    /// Lowest and highest change over a temperature range given as ΔT from `dt_min_k` to
    /// `dt_max_k` (both signs for an unknown sign); the change is monotone in ΔT, so the ends decide.
    pub fn range(&self, value: f64, dt_min_k: f64, dt_max_k: f64) -> (f64, f64) {
        let ends = [
            self.shift(value, dt_min_k, 1.0),
            self.shift(value, dt_max_k, 1.0),
            self.shift(value, dt_min_k, -1.0),
            self.shift(value, dt_max_k, -1.0),
            0.0,
        ];
        let lo = ends.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = ends.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if self.is_none() || !(lo.is_finite() && hi.is_finite()) { (0.0, 0.0) } else { (lo, hi) }
    }

    /// Whether no drift is modelled (or its coefficient is zero).
    pub fn is_none(&self) -> bool {
        match *self {
            Drift::None => true,
            Drift::Known(d) | Drift::Unknown(d) | Drift::Compound(d) => d == 0.0,
        }
    }
}
