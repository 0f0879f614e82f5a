//! Spec windows from the IEC 61131-2 digital-input types for 24 V d.c. (current-sinking) inputs,
//! Types 1, 2 and 3, and the conformity check of a design's worst-case thresholds.
//!
//! Source: IEC 61131-2:2017, *Programmable controllers — Part 2: Equipment requirements and tests*,
//! digital-input operating regions. **The edition and every limit here are recalled from memory**
//! (DOMAIN §6); check the current edition before relying on them. Recalled voltage limits:
//! OFF region from −3 V up to 5 V; transition region between; ON region from 15 V (Type 1) or
//! 11 V (Types 2 and 3) up to 30 V. The standard also bounds the input current in each region
//! (Type 2 draws more current than Types 1 and 3); those current limits are not checked here.
//!
//! A threshold circuit conforms when both thresholds lie in the transition region at every corner:
//! VT+ (worst-case maximum) ≤ the ON minimum, so every valid ON level switches it on, and VT−
//! (worst-case minimum) ≥ the OFF maximum, so every valid OFF level switches it off.

use super::spec_window::SpecWindow;
use serde::{Deserialize, Serialize};

/// The standard and edition the limits are taken from (recalled from memory).
pub const STANDARD: &str = "IEC 61131-2:2017 (limits recalled from memory)";

/// An IEC 61131-2 digital-input type for 24 V d.c.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum InputType {
    /// Type 1: for mechanical contacts; ON from 15 V.
    Type1,
    /// Type 2: for two-wire proximity switches with higher quiescent current; ON from 11 V.
    Type2,
    /// Type 3: for two-wire proximity switches, lower current than Type 2; ON from 11 V.
    Type3,
}

impl InputType {
    /// All three types, in order.
    pub const ALL: [InputType; 3] = [InputType::Type1, InputType::Type2, InputType::Type3];
}

/// The voltage regions of one input type, volts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct InputTypeLimits {
    /// The type.
    pub input_type: InputType,
    /// Lowest OFF voltage.
    pub off_min_v: f64,
    /// Highest OFF voltage (the transition region starts above it).
    pub off_max_v: f64,
    /// Lowest ON voltage (the transition region ends below it).
    pub on_min_v: f64,
    /// Highest ON voltage.
    pub on_max_v: f64,
}

/// The voltage regions of an input type (IEC 61131-2:2017, from memory).
pub fn limits(t: InputType) -> InputTypeLimits {
    let on_min_v = match t {
        InputType::Type1 => 15.0,
        InputType::Type2 | InputType::Type3 => 11.0,
    };
    InputTypeLimits {
        input_type: t,
        off_min_v: -3.0,
        off_max_v: 5.0,
        on_min_v,
        on_max_v: 30.0,
    }
}

/// The spec window of an input type: both thresholds inside the transition region.
pub fn spec_window(t: InputType) -> SpecWindow {
    let l = limits(t);
    SpecWindow {
        vt_upper_min_v: Some(l.off_max_v),
        vt_upper_max_v: Some(l.on_min_v),
        vt_lower_min_v: Some(l.off_max_v),
        vt_lower_max_v: Some(l.on_min_v),
        ..SpecWindow::default()
    }
}

/// Conformity of a design with one input type.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InputTypeCheck {
    /// The type's regions.
    pub limits: InputTypeLimits,
    /// Worst-case highest VT+, volts.
    pub vt_upper_max_v: f64,
    /// Worst-case lowest VT−, volts.
    pub vt_lower_min_v: f64,
    /// ON minimum − VT+ max, volts (negative: a valid ON level may not switch the input on).
    pub on_margin_v: f64,
    /// VT− min − OFF maximum, volts (negative: a valid OFF level may not switch it off).
    pub off_margin_v: f64,
    /// Both margins at or above zero.
    pub conforms: bool,
}

/// Checks worst-case thresholds (the highest VT+ and the lowest VT−, volts, e.g. from
/// [`super::worst_case::WorstCase`]) against one input type.
pub fn check_input_type(t: InputType, vt_upper_max_v: f64, vt_lower_min_v: f64) -> InputTypeCheck {
    let l = limits(t);
    let on_margin_v = l.on_min_v - vt_upper_max_v;
    let off_margin_v = vt_lower_min_v - l.off_max_v;
    InputTypeCheck {
        limits: l,
        vt_upper_max_v,
        vt_lower_min_v,
        on_margin_v,
        off_margin_v,
        conforms: on_margin_v >= 0.0 && off_margin_v >= 0.0,
    }
}

/// Checks worst-case thresholds (highest VT+, lowest VT−, volts) against Types 1, 2 and 3.
pub fn check_input_types(vt_upper_max_v: f64, vt_lower_min_v: f64) -> Vec<InputTypeCheck> {
    InputType::ALL
        .iter()
        .map(|&t| check_input_type(t, vt_upper_max_v, vt_lower_min_v))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::tolerance::{worst_case, ToleranceSettings};
    use crate::topology::inverting::InvertingSchmitt;
    use crate::topology::Circuit;

    #[test]
    fn recalled_limits() {
        // IEC 61131-2:2017 (from memory, DOMAIN §6): OFF ≤ 5 V, ON ≥ 15 V (Type 1) or 11 V (2, 3), ≤ 30 V.
        assert_eq!(limits(InputType::Type1).on_min_v, 15.0);
        assert_eq!(limits(InputType::Type2).on_min_v, 11.0);
        assert_eq!(limits(InputType::Type3).off_max_v, 5.0);
        assert_eq!(limits(InputType::Type1).off_min_v, -3.0);
        assert_eq!(limits(InputType::Type2).on_max_v, 30.0);
        let w = spec_window(InputType::Type1);
        assert!(w.contains([12.0, 8.0, 4.0, 10.0]));
        assert!(!w.contains([16.0, 8.0, 8.0, 12.0]));
    }

    #[test]
    fn a_24_v_input_with_thresholds_between_11_and_5_v_conforms_to_every_type() {
        // Single-supply inverting form on the 24 V rail, synthesised for VT+ 10 V and VT− 7 V.
        let dev = Comparator::ideal(24.0);
        let design = |vt_upper_v, vt_lower_v| {
            InvertingSchmitt::single_supply(1.0, 1.0, 1.0, dev)
                .synthesise_with_anchor(
                    crate::analysis::Thresholds {
                        vt_upper_v,
                        vt_lower_v,
                    },
                    100e3,
                )
                .unwrap()
        };
        let c = design(10.0, 7.0);
        let wc = worst_case(&c, &ToleranceSettings::default()).unwrap();
        let checks = check_input_types(wc.vt_upper.max.value_v, wc.vt_lower.min.value_v);
        assert!(checks.iter().all(|k| k.conforms), "{checks:?}");
        assert!(checks[1].on_margin_v < checks[0].on_margin_v);
        // A VT+ of 12 V passes Type 1 (ON from 15 V) but fails Types 2 and 3 (ON from 11 V).
        let c = design(12.0, 7.0);
        let wc = worst_case(&c, &ToleranceSettings::default()).unwrap();
        let checks = check_input_types(wc.vt_upper.max.value_v, wc.vt_lower.min.value_v);
        assert_eq!(
            checks.iter().map(|k| k.conforms).collect::<Vec<_>>(),
            vec![true, false, false]
        );
    }
}
