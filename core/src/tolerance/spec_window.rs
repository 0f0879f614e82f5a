//! The acceptable ranges of the switching figures (VT+, VT−, hysteresis, centre): a window that
//! the tolerance settings hold and the input-type table fills in. The lowest tolerance module:
//! it imports nothing from its siblings.

use crate::error::DesignError;
use serde::{Deserialize, Serialize};

/// Acceptable ranges of the switching figures; every bound is optional. A design (or a Monte Carlo
/// trial) is inside when every stated bound holds, bounds included.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct SpecWindow {
    /// Lowest acceptable VT+, volts.
    pub vt_upper_min_v: Option<f64>,
    /// Highest acceptable VT+, volts.
    pub vt_upper_max_v: Option<f64>,
    /// Lowest acceptable VT−, volts.
    pub vt_lower_min_v: Option<f64>,
    /// Highest acceptable VT−, volts.
    pub vt_lower_max_v: Option<f64>,
    /// Smallest acceptable hysteresis VT+ − VT−, volts.
    pub hysteresis_min_v: Option<f64>,
    /// Largest acceptable hysteresis, volts.
    pub hysteresis_max_v: Option<f64>,
    /// Lowest acceptable centre (VT+ + VT−)/2, volts.
    pub centre_min_v: Option<f64>,
    /// Highest acceptable centre, volts.
    pub centre_max_v: Option<f64>,
}

impl SpecWindow {
    fn bounds(&self) -> [(Option<f64>, Option<f64>); 4] {
        [
            (self.vt_upper_min_v, self.vt_upper_max_v),
            (self.vt_lower_min_v, self.vt_lower_max_v),
            (self.hysteresis_min_v, self.hysteresis_max_v),
            (self.centre_min_v, self.centre_max_v),
        ]
    }

    /// Whether any bound is stated.
    pub fn is_empty(&self) -> bool {
        self.bounds()
            .iter()
            .all(|(lo, hi)| lo.is_none() && hi.is_none())
    }

    /// Whether the four figures (VT+, VT−, hysteresis, centre; volts) satisfy every stated bound.
    pub fn contains(&self, figures: [f64; 4]) -> bool {
        self.violations(figures) == 0
    }

    /// Bit mask of the violated bounds: bit 2·q for "below the minimum" and 2·q + 1 for "above the
    /// maximum" of figure q (0 VT+, 1 VT−, 2 hysteresis, 3 centre).
    pub fn violations(&self, figures: [f64; 4]) -> u8 {
        let mut mask = 0u8;
        for (q, ((lo, hi), x)) in self.bounds().iter().zip(figures).enumerate() {
            if let Some(lo) = lo {
                if x < *lo {
                    mask |= 1 << (2 * q);
                }
            }
            if let Some(hi) = hi {
                if x > *hi {
                    mask |= 1 << (2 * q + 1);
                }
            }
        }
        mask
    }

    /// Both windows at once: the tighter of each pair of bounds.
    pub fn intersect(&self, other: &SpecWindow) -> SpecWindow {
        let max = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(x), Some(y)) => Some(x.max(y)),
            (x, None) | (None, x) => x,
        };
        let min = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(x), Some(y)) => Some(x.min(y)),
            (x, None) | (None, x) => x,
        };
        SpecWindow {
            vt_upper_min_v: max(self.vt_upper_min_v, other.vt_upper_min_v),
            vt_upper_max_v: min(self.vt_upper_max_v, other.vt_upper_max_v),
            vt_lower_min_v: max(self.vt_lower_min_v, other.vt_lower_min_v),
            vt_lower_max_v: min(self.vt_lower_max_v, other.vt_lower_max_v),
            hysteresis_min_v: max(self.hysteresis_min_v, other.hysteresis_min_v),
            hysteresis_max_v: min(self.hysteresis_max_v, other.hysteresis_max_v),
            centre_min_v: max(self.centre_min_v, other.centre_min_v),
            centre_max_v: min(self.centre_max_v, other.centre_max_v),
        }
    }

    /// Checks every stated bound for finiteness and each pair for order. Errors name each bound as
    /// the page shows it ("VT+ at least", "VT+ at most"…).
    pub fn validate(&self) -> Result<(), DesignError> {
        let names = [("VT+", "vt_upper"), ("VT−", "vt_lower"), ("hysteresis", "hysteresis"), ("centre", "centre")];
        for ((name, _), (lo, hi)) in names.iter().zip(self.bounds()) {
            let (min_name, max_name) = (format!("{name} at least"), format!("{name} at most"));
            if let Some(lo) = lo {
                crate::limits::check(crate::limits::Quantity::Voltage, &min_name, lo)?;
            }
            if let Some(hi) = hi {
                crate::limits::check(crate::limits::Quantity::Voltage, &max_name, hi)?;
            }
            if let (Some(lo), Some(hi)) = (lo, hi) {
                if lo > hi {
                    return Err(DesignError::invalid(
                        &min_name,
                        format!("{lo} V is above {max_name} ({hi} V): swap them"),
                    ));
                }
            }
        }
        Ok(())
    }
}
