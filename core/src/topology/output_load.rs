//! The output's source resistance and load as the feedback network sees them (the thresholds under
//! load, [`super::Circuit::with_output_load`]); the output-dynamics study fills it from its
//! settings.

use serde::{Deserialize, Serialize};

/// The output's source resistance and its load, as the thresholds see them. The load returns to
/// 0 V (ground).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct OutputLoad {
    /// Output resistance of the device Ro, ohms (0: an ideal source).
    pub output_resistance_ohm: f64,
    /// Load resistance RL from the output to 0 V, ohms; `None` when there is no resistive load.
    pub load_resistance_ohm: Option<f64>,
}

impl OutputLoad {
    /// The Thevenin source seen from the feedback resistor for device levels `high_v`, `low_v`:
    /// (high level, low level, series resistance), with level·RL/(Ro+RL) and Ro‖RL when a load is
    /// fitted, the levels themselves and Ro otherwise (Thevenin's theorem).
    pub fn thevenin(&self, high_v: f64, low_v: f64) -> (f64, f64, f64) {
        let ro = self.output_resistance_ohm;
        match self.load_resistance_ohm {
            Some(rl) => {
                let a = rl / (ro + rl);
                (high_v * a, low_v * a, ro * rl / (ro + rl))
            }
            None => (high_v, low_v, ro),
        }
    }
}

/// A comparator whose output levels are `high_v` and `low_v` exactly (headroom switched on and set
/// to match), for the topologies' [`super::Circuit::with_output_load`].
pub fn comparator_with_levels(device: &crate::device::Comparator, high_v: f64, low_v: f64) -> crate::device::Comparator {
    let mut d = *device;
    d.effects.output_headroom = true;
    d.output_high_drop_v = (d.supply_v - high_v).max(0.0);
    d.output_low_rise_v = (low_v - d.negative_rail_v).max(0.0);
    d
}
