//! Spec windows from the IEC 61131-2 digital-input types for 24 V d.c. (current-sinking) inputs,
//! Types 1, 2 and 3, and the conformity check of a design's worst-case thresholds.
//!
//! Source: IEC 61131-2:2017, *Programmable controllers — Part 2: Equipment requirements and tests*,
//! digital-input operating regions. **The edition and every limit here are recalled from memory**
//! (DOMAIN §6); check the current edition before relying on them. Recalled voltage limits:
//! OFF region from −3 V up to 5 V; transition region between; ON region from 15 V (Type 1) or
//! 11 V (Types 2 and 3) up to 30 V.
//!
//! Recalled current limits (DOMAIN §8, IEC 61131-2, from memory, check the edition):
//! Type 1: ON 15…30 V with 2…15 mA; OFF −3…15 V with current ≤ 0.5 mA, or −3…5 V regardless of current.
//! Type 2: ON 11…30 V with 6…30 mA; OFF ≤ 5 V, or ≤ 11 V with current ≤ 2 mA.
//! Type 3: ON 11…30 V with 2…15 mA; OFF ≤ 5 V, or ≤ 11 V with current ≤ 1.5 mA.
//! [`check_input_types_with_current`] checks these with the circuit's own input current
//! ([`Circuit::operating_point`], both output states) at the region boundaries.
//!
//! A threshold circuit conforms when both thresholds lie in the transition region at every corner:
//! VT+ (worst-case maximum) ≤ the ON minimum, so every valid ON level switches it on, and VT−
//! (worst-case minimum) ≥ the OFF maximum, so every valid OFF level switches it off.

use super::spec_window::SpecWindow;
use crate::analysis::OutputState;
use crate::error::DesignError;
use crate::notation::format_fixed_trimmed;
use crate::topology::Circuit;
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
    /// Lowest input current in the ON region, amperes.
    #[serde(default)]
    pub on_current_min_a: f64,
    /// Highest input current in the ON region, amperes.
    #[serde(default)]
    pub on_current_max_a: f64,
    /// Highest voltage of the low-current OFF region (OFF up to here while the current stays at or
    /// below [`Self::off_current_max_a`]), volts.
    #[serde(default)]
    pub off_low_current_max_v: f64,
    /// Current limit of the low-current OFF region, amperes.
    #[serde(default)]
    pub off_current_max_a: f64,
}

/// The voltage and current regions of an input type (IEC 61131-2, from memory, DOMAIN §8).
pub fn limits(t: InputType) -> InputTypeLimits {
    // (ON minimum V, ON current min A, ON current max A, low-current OFF max V, OFF current max A)
    let (on_min_v, on_current_min_a, on_current_max_a, off_low_current_max_v, off_current_max_a) =
        match t {
            InputType::Type1 => (15.0, 2e-3, 15e-3, 15.0, 0.5e-3),
            InputType::Type2 => (11.0, 6e-3, 30e-3, 11.0, 2e-3),
            InputType::Type3 => (11.0, 2e-3, 15e-3, 11.0, 1.5e-3),
        };
    InputTypeLimits {
        input_type: t,
        off_min_v: -3.0,
        off_max_v: 5.0,
        on_min_v,
        on_max_v: 30.0,
        on_current_min_a,
        on_current_max_a,
        off_low_current_max_v,
        off_current_max_a,
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
    /// Both margins at or above zero (and, when checked, every current limit met).
    pub conforms: bool,
    /// The input currents at the region boundaries (`None` when only voltages were checked).
    #[serde(default)]
    pub current: Option<InputCurrentCheck>,
    /// Every limit that fails, in words (empty when it conforms).
    #[serde(default)]
    pub failures: Vec<String>,
}

/// The circuit's input current at the region boundaries of one input type, amperes. Each value is
/// the worse of the two output states' operating points.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InputCurrentCheck {
    /// Lowest current at the ON minimum voltage.
    pub at_on_min_a: f64,
    /// Highest current at the ON maximum voltage.
    pub at_on_max_a: f64,
    /// Lowest current at the worst-case lowest VT−, when VT− lies inside the low-current OFF region
    /// (there it must exceed the OFF current limit, or a valid OFF level may leave the input ON).
    pub at_vt_lower_min_a: Option<f64>,
}

fn ma(i_a: f64) -> String {
    format!("{} mA", format_fixed_trimmed(i_a * 1e3, 2))
}

fn v(x_v: f64) -> String {
    format!("{} V", format_fixed_trimmed(x_v, 2))
}

fn voltage_failures(k: &InputTypeCheck) -> Vec<String> {
    let mut f = Vec::new();
    let name = k.limits.input_type.name();
    if k.on_margin_v < 0.0 {
        f.push(format!(
            "worst-case VT+ reaches {}: {name} needs it at or below {} so every ON level switches on",
            v(k.vt_upper_max_v),
            v(k.limits.on_min_v)
        ));
    }
    if k.off_margin_v < 0.0 {
        f.push(format!(
            "worst-case VT− falls to {}: {name} needs it at or above {} so every OFF level switches off",
            v(k.vt_lower_min_v),
            v(k.limits.off_max_v)
        ));
    }
    f
}

impl InputType {
    /// The name as written in the standard, e.g. "Type 1".
    pub fn name(self) -> &'static str {
        match self {
            InputType::Type1 => "Type 1",
            InputType::Type2 => "Type 2",
            InputType::Type3 => "Type 3",
        }
    }
}

/// Checks worst-case thresholds (the highest VT+ and the lowest VT−, volts, e.g. from
/// [`super::worst_case::WorstCase`]) against one input type.
pub fn check_input_type(t: InputType, vt_upper_max_v: f64, vt_lower_min_v: f64) -> InputTypeCheck {
    let l = limits(t);
    let on_margin_v = l.on_min_v - vt_upper_max_v;
    let off_margin_v = vt_lower_min_v - l.off_max_v;
    let mut k = InputTypeCheck {
        limits: l,
        vt_upper_max_v,
        vt_lower_min_v,
        on_margin_v,
        off_margin_v,
        conforms: on_margin_v >= 0.0 && off_margin_v >= 0.0,
        current: None,
        failures: Vec::new(),
    };
    k.failures = voltage_failures(&k);
    k
}

/// The lowest and highest input current over both output states at one input voltage, amperes.
fn current_range<C: Circuit>(circuit: &C, vin_v: f64) -> Result<(f64, f64), DesignError> {
    let hi = circuit.operating_point(vin_v, OutputState::High)?.input_current_a;
    let lo = circuit.operating_point(vin_v, OutputState::Low)?.input_current_a;
    if !hi.is_finite() || !lo.is_finite() {
        return Err(DesignError::NotFinite {
            quantity: "input current at an IEC 61131-2 region boundary".into(),
        });
    }
    Ok((hi.min(lo), hi.max(lo)))
}

/// Checks one input type on voltage and current: the worst-case thresholds as in
/// [`check_input_type`], and the circuit's own input current (nominal parts, both output states)
/// at the ON minimum and maximum voltages and, when the worst-case VT− lies in the low-current
/// OFF region, at that VT− (IEC 61131-2, from memory, DOMAIN §8).
pub fn check_input_type_with_current<C: Circuit>(
    circuit: &C,
    t: InputType,
    vt_upper_max_v: f64,
    vt_lower_min_v: f64,
) -> Result<InputTypeCheck, DesignError> {
    let mut k = check_input_type(t, vt_upper_max_v, vt_lower_min_v);
    let l = k.limits;
    let name = t.name();
    let (at_on_min_a, _) = current_range(circuit, l.on_min_v)?;
    let (_, at_on_max_a) = current_range(circuit, l.on_max_v)?;
    if at_on_min_a < l.on_current_min_a {
        k.failures.push(format!(
            "draws {} at {}: {name} needs at least {} when ON",
            ma(at_on_min_a),
            v(l.on_min_v),
            ma(l.on_current_min_a)
        ));
    }
    if at_on_max_a > l.on_current_max_a {
        k.failures.push(format!(
            "draws {} at {}: {name} allows at most {} when ON",
            ma(at_on_max_a),
            v(l.on_max_v),
            ma(l.on_current_max_a)
        ));
    }
    let at_vt_lower_min_a = if vt_lower_min_v > l.off_max_v && vt_lower_min_v < l.off_low_current_max_v {
        let (i_a, _) = current_range(circuit, vt_lower_min_v)?;
        if i_a <= l.off_current_max_a {
            k.failures.push(format!(
                "draws only {} at the worst-case VT− of {}: {name} counts up to {} at no more than {} as OFF, so the input may stay ON there",
                ma(i_a),
                v(vt_lower_min_v),
                v(l.off_low_current_max_v),
                ma(l.off_current_max_a)
            ));
        }
        Some(i_a)
    } else {
        None
    };
    k.current = Some(InputCurrentCheck {
        at_on_min_a,
        at_on_max_a,
        at_vt_lower_min_a,
    });
    k.conforms = k.failures.is_empty();
    Ok(k)
}

/// Checks Types 1, 2 and 3 on voltage and current (see [`check_input_type_with_current`]).
pub fn check_input_types_with_current<C: Circuit>(
    circuit: &C,
    vt_upper_max_v: f64,
    vt_lower_min_v: f64,
) -> Result<Vec<InputTypeCheck>, DesignError> {
    InputType::ALL
        .iter()
        .map(|&t| check_input_type_with_current(circuit, t, vt_upper_max_v, vt_lower_min_v))
        .collect()
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
    /// The greenhouse demo's circuit (a supply monitor with a resistive input divider) with every
    /// resistor scaled so the input current at `vin_v` (the lower or higher of the two output
    /// states) is `target_a`. Scaling every resistor leaves every node voltage unchanged, so
    /// every current scales by its inverse.
    fn input_drawing(target_a: f64, vin_v: f64, lower: bool) -> crate::topology::Topology {
        let c = crate::catalog::demos()
            .into_iter()
            .find(|s| s.key == "greenhouse-valve")
            .unwrap()
            .record()
            .circuit;
        let (lo, hi) = current_range(&c, vin_v).unwrap();
        let k = if lower { lo } else { hi } / target_a;
        let values: Vec<f64> = c
            .parameters()
            .iter()
            .map(|p| match p.kind {
                crate::topology::ParameterKind::Resistor => p.value * k,
                _ => p.value,
            })
            .collect();
        c.with_parameters(&values).unwrap()
    }

    fn failures(c: &crate::topology::Topology, t: InputType, vt_lower_min_v: f64) -> Vec<String> {
        // VT+ 10 V and the given VT− pass every type's voltage limits when VT− ≥ 5 V.
        check_input_type_with_current(c, t, 10.0, vt_lower_min_v).unwrap().failures
    }

    #[test]
    fn on_current_minimum_per_type() {
        // IEC 61131-2, from memory, check the edition (DOMAIN §8): ON current at least 2 mA from
        // 15 V (Type 1), 6 mA from 11 V (Type 2), 2 mA from 11 V (Type 3).
        for (t, on_min_v, limit_ma) in [
            (InputType::Type1, 15.0, 2.0),
            (InputType::Type2, 11.0, 6.0),
            (InputType::Type3, 11.0, 2.0),
        ] {
            let low = input_drawing(0.95 * limit_ma * 1e-3, on_min_v, true);
            let f = failures(&low, t, 9.0);
            let want = format!("at {on_min_v} V: {} needs at least {limit_ma} mA when ON", t.name());
            assert!(f.iter().any(|s| s.contains(&want)), "{t:?}: {f:?}");
            let ok = input_drawing(1.05 * limit_ma * 1e-3, on_min_v, true);
            let f = failures(&ok, t, 9.0);
            assert!(!f.iter().any(|s| s.contains("when ON")), "{t:?}: {f:?}");
        }
    }

    #[test]
    fn on_current_maximum_per_type() {
        // IEC 61131-2, from memory, check the edition (DOMAIN §8): ON current at most 15 mA
        // (Types 1 and 3) or 30 mA (Type 2), up to 30 V.
        for (t, limit_ma) in [(InputType::Type1, 15.0), (InputType::Type2, 30.0), (InputType::Type3, 15.0)] {
            let high = input_drawing(1.05 * limit_ma * 1e-3, 30.0, false);
            let f = failures(&high, t, 9.0);
            let want = format!("at 30 V: {} allows at most {limit_ma} mA when ON", t.name());
            assert!(f.iter().any(|s| s.contains(&want)), "{t:?}: {f:?}");
            let ok = input_drawing(0.95 * limit_ma * 1e-3, 30.0, false);
            let f = failures(&ok, t, 9.0);
            assert!(!f.iter().any(|s| s.contains("allows at most")), "{t:?}: {f:?}");
        }
    }

    #[test]
    fn low_current_off_region_per_type() {
        // IEC 61131-2, from memory, check the edition (DOMAIN §8): OFF up to 15 V at ≤ 0.5 mA
        // (Type 1), up to 11 V at ≤ 2 mA (Type 2), up to 11 V at ≤ 1.5 mA (Type 3). A worst-case
        // VT− of 9 V inside that region must come with more current than the limit.
        let vt_lower_v = 9.0;
        for (t, limit_ma) in [(InputType::Type1, 0.5), (InputType::Type2, 2.0), (InputType::Type3, 1.5)] {
            let starved = input_drawing(0.9 * limit_ma * 1e-3, vt_lower_v, true);
            let f = failures(&starved, t, vt_lower_v);
            assert!(f.iter().any(|s| s.contains("may stay ON")), "{t:?}: {f:?}");
            let ok = input_drawing(1.1 * limit_ma * 1e-3, vt_lower_v, true);
            let f = failures(&ok, t, vt_lower_v);
            assert!(!f.iter().any(|s| s.contains("may stay ON")), "{t:?}: {f:?}");
        }
        // Above the low-current OFF region (Type 2 and 3 end at 11 V) the current does not matter.
        let starved = input_drawing(0.1e-3, 12.0, true);
        let k = check_input_type_with_current(&starved, InputType::Type2, 10.0, 12.0).unwrap();
        assert_eq!(k.current.unwrap().at_vt_lower_min_a, None);
    }

    #[test]
    fn greenhouse_demo_conforms_or_names_the_failing_limit() {
        let s = crate::catalog::demos().into_iter().find(|s| s.key == "greenhouse-valve").unwrap();
        let c = s.record().circuit;
        let settings = ToleranceSettings { check_input_types: true, ..Default::default() };
        let r = crate::tolerance::tolerance_report(&c, &settings).unwrap();
        assert_eq!(r.input_types.len(), 3);
        for k in &r.input_types {
            assert!(k.current.is_some());
            assert_eq!(k.conforms, k.failures.is_empty(), "{k:?}");
        }
        // Type 1 (IEC 61131-2, from memory, check the edition): at least 2 mA at 15 V when ON.
        let t1 = &r.input_types[0];
        let (i15_a, _) = current_range(&c, 15.0).unwrap();
        let named = t1.failures.iter().any(|s| {
            s.contains(&format!("draws {} at 15 V: Type 1 needs at least 2 mA when ON", ma(i15_a)))
        });
        assert_eq!(i15_a < 2e-3, named, "{:?}", t1.failures);
        let voltage_ok = t1.on_margin_v >= 0.0 && t1.off_margin_v >= 0.0;
        assert_eq!(voltage_ok, !t1.failures.iter().any(|s| s.contains("worst-case VT")));
    }
}
