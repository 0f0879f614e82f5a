//! What the logic-gate topologies (CMOS buffer, Schmitt-input gate) share: the gate input's
//! absolute-maximum range and the clamp-current warning.

use crate::analysis::{Warning, WarningCode};

/// Warns when a gate input node leaves the rails over the input span, with the clamp current the
/// network lets through (Norton current of node X into a clamp at the rail: overshoot / Rth).
pub(crate) fn clamp_warning(x_low_v: f64, x_high_v: f64, vin_low_v: f64, vin_high_v: f64, supply_v: f64, rth_ohm: f64) -> Vec<Warning> {
    let mut w = Vec::new();
    let mut push = |x: f64, vin: f64, rail: f64, word: &str| {
        let over = (x - rail).abs();
        let current = if rth_ohm > 0.0 { format!("about {:.3} mA", over / rth_ohm * 1e3) } else { "a current limited only by the signal source".into() };
        w.push(Warning::new(
            WarningCode::CommonModeRange,
            format!(
                "gate input X would reach {x:.3} V at Vin = {vin:.3} V, {word} the rail ({rail:.3} V): the gate's input clamp diode conducts {current} (node resistance {rth_ohm:.0} Ω); keep it below the datasheet's input clamp current, add series resistance, or limit the input swing"
            ),
        ));
    };
    if x_high_v > supply_v + 1e-9 {
        push(x_high_v, vin_high_v, supply_v, "above");
    }
    if x_low_v < -1e-9 {
        push(x_low_v, vin_low_v, 0.0, "below");
    }
    w
}

/// The absolute-maximum input range of CMOS logic, 0.5 V beyond either rail (common practice:
/// the usual datasheet rating −0.5 V … VDD + 0.5 V).
pub(crate) fn logic_input_range(supply_v: f64) -> (f64, f64) {
    (-0.5, supply_v + 0.5)
}

