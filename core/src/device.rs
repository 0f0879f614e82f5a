//! The active device of comparator-based topologies: an op-amp or comparator with real output
//! levels, input offset, bias currents, built-in hysteresis and input common-mode range.
//!
//! Conventions follow shared/DOMAIN.md §0: the device switches when V(+) − V(−) = VOS; bias currents
//! are positive into the pin; built-in hysteresis h acts as a state-dependent offset ±h/2.

use crate::error::{non_negative, DesignError};
use serde::{Deserialize, Serialize};

/// Which non-idealities are applied. `true` means the effect is modelled; `false` treats it as ideal
/// while keeping the entered value, so a user can switch an effect off and back on.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Effects {
    /// Output levels: headroom from the rails (false: outputs reach the rails exactly).
    pub output_headroom: bool,
    /// Input offset voltage VOS.
    pub offset: bool,
    /// Input bias currents IB+ and IB−.
    pub bias_current: bool,
    /// Built-in hysteresis of the device.
    pub builtin_hysteresis: bool,
}

impl Default for Effects {
    fn default() -> Self {
        Effects { output_headroom: true, offset: true, bias_current: true, builtin_hysteresis: true }
    }
}

/// An op-amp or comparator with a push-pull output, supplied between `negative_rail_v` and `supply_v`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Comparator {
    /// Positive supply rail VCC, volts.
    pub supply_v: f64,
    /// Negative supply rail VEE, volts (0 for a single supply).
    pub negative_rail_v: f64,
    /// How far the output high level sits below VCC at the real load (VCC − VOH), volts; 0 = rail to rail.
    pub output_high_drop_v: f64,
    /// How far the output low level sits above VEE at the real load (VOL − VEE), volts.
    pub output_low_rise_v: f64,
    /// Input offset voltage VOS, volts: the device switches at V(+) − V(−) = VOS.
    pub offset_v: f64,
    /// Bias current into the non-inverting input IB+, amperes (negative for PNP inputs).
    pub bias_plus_a: f64,
    /// Bias current into the inverting input IB−, amperes.
    pub bias_minus_a: f64,
    /// Built-in hysteresis h of the device, volts (acts as offset ±h/2 depending on output state).
    pub builtin_hysteresis_v: f64,
    /// Lowest allowed input common-mode voltage, as volts relative to VEE (negative: below the rail).
    pub input_low_margin_v: f64,
    /// Highest allowed input common-mode voltage, as volts below VCC (e.g. 1.5 for a part whose input
    /// reaches only to VCC − 1.5 V; negative for beyond-the-rail inputs).
    pub input_high_margin_v: f64,
    /// Resistance of the signal source that drives the circuit input, ohms.
    pub source_resistance_ohm: f64,
    /// Input offset drift magnitude |ΔVOS/ΔT| (TCVOS), volts per kelvin; its sign is unknown, as
    /// datasheets give a magnitude (typically 1–10 µV/K for bipolar inputs — common practice).
    pub offset_drift_v_per_k: f64,
    /// Relative change of the bias currents per kelvin, percent, compounded from 25 °C:
    /// IB(T) = IB(25 °C)·(1 + p/100)^(T − 25 K). Its sign is known from the input stage: about
    /// +7 %/K for CMOS and JFET inputs (doubling every 10 K), slightly negative for bipolar inputs
    /// (common practice). Limited to ±50 %/K.
    pub bias_tempco_pct_per_k: f64,
    /// Which effects are modelled.
    pub effects: Effects,
}

impl Default for Comparator {
    fn default() -> Self {
        Comparator {
            supply_v: 5.0,
            negative_rail_v: 0.0,
            output_high_drop_v: 0.0,
            output_low_rise_v: 0.0,
            offset_v: 0.0,
            bias_plus_a: 0.0,
            bias_minus_a: 0.0,
            builtin_hysteresis_v: 0.0,
            input_low_margin_v: 0.0,
            input_high_margin_v: 0.0,
            source_resistance_ohm: 0.0,
            offset_drift_v_per_k: 0.0,
            bias_tempco_pct_per_k: 0.0,
            effects: Effects::default(),
        }
    }
}

impl Comparator {
    /// An ideal rail-to-rail device on a single supply (no offset, no bias, inputs to both rails).
    pub fn ideal(supply_v: f64) -> Self {
        Comparator { supply_v, ..Comparator::default() }
    }

    /// Checks every field for finiteness and sign, and the rails and output levels for consistency.
    pub fn validate(&self) -> Result<(), DesignError> {
        if self.admitted() {
            return Ok(());
        }
        self.refusal()
    }

    /// The checks of [`Comparator::validate`] as one branch-free test: the Monte Carlo runs it per
    /// trial, and only a refused device goes on to [`Comparator::refusal`] for the words.
    fn admitted(&self) -> bool {
        use crate::limits::Quantity::{Current, RelativeDrift, Resistance, Voltage, VoltageDrift};
        let volts = |x: f64| Voltage.admits(x);
        let volts_not_negative = |x: f64| Voltage.admits(x) & (x >= 0.0);
        volts(self.supply_v)
            & volts(self.negative_rail_v)
            & volts_not_negative(self.output_high_drop_v)
            & volts_not_negative(self.output_low_rise_v)
            & volts(self.offset_v)
            & Current.admits(self.bias_plus_a)
            & Current.admits(self.bias_minus_a)
            & volts_not_negative(self.builtin_hysteresis_v)
            & volts(self.input_low_margin_v)
            & volts(self.input_high_margin_v)
            & VoltageDrift.admits(self.offset_drift_v_per_k)
            & (self.offset_drift_v_per_k >= 0.0)
            & RelativeDrift.admits(self.bias_tempco_pct_per_k)
            & ((self.source_resistance_ohm == 0.0) | Resistance.admits(self.source_resistance_ohm))
            & (self.supply_v > self.negative_rail_v)
            & (self.output_high_v() > self.output_low_v())
    }

    /// Why [`Comparator::validate`] refuses this device (`Ok` if it does not), field by field.
    fn refusal(&self) -> Result<(), DesignError> {
        use crate::limits::{check, Quantity};
        check(Quantity::Voltage, "supply_v", self.supply_v)?;
        check(Quantity::Voltage, "negative_rail_v", self.negative_rail_v)?;
        non_negative("output_high_drop_v", check(Quantity::Voltage, "output_high_drop_v", self.output_high_drop_v)?)?;
        non_negative("output_low_rise_v", check(Quantity::Voltage, "output_low_rise_v", self.output_low_rise_v)?)?;
        check(Quantity::Voltage, "offset_v", self.offset_v)?;
        check(Quantity::Current, "bias_plus_a", self.bias_plus_a)?;
        check(Quantity::Current, "bias_minus_a", self.bias_minus_a)?;
        non_negative("builtin_hysteresis_v", check(Quantity::Voltage, "builtin_hysteresis_v", self.builtin_hysteresis_v)?)?;
        check(Quantity::Voltage, "input_low_margin_v", self.input_low_margin_v)?;
        check(Quantity::Voltage, "input_high_margin_v", self.input_high_margin_v)?;
        non_negative(
            "offset_drift_v_per_k",
            check(Quantity::VoltageDrift, "offset_drift_v_per_k", self.offset_drift_v_per_k)?,
        )?;
        check(Quantity::RelativeDrift, "bias_tempco_pct_per_k", self.bias_tempco_pct_per_k)?;
        if self.source_resistance_ohm != 0.0 {
            check(Quantity::Resistance, "source_resistance_ohm", self.source_resistance_ohm)?;
        }
        if self.supply_v <= self.negative_rail_v {
            return Err(DesignError::inconsistent(format!(
                "the supply ({} V) must be above the negative rail ({} V)",
                self.supply_v, self.negative_rail_v
            )));
        }
        if self.output_high_v() <= self.output_low_v() {
            return Err(DesignError::inconsistent(format!(
                "output high level VOH ({:.4} V) must be above output low level VOL ({:.4} V): reduce the output headroom",
                self.output_high_v(),
                self.output_low_v()
            )));
        }
        Ok(())
    }

    /// The output high level VOH actually reached, volts.
    pub fn output_high_v(&self) -> f64 {
        if self.effects.output_headroom {
            self.supply_v - self.output_high_drop_v
        } else {
            self.supply_v
        }
    }

    /// The output low level VOL actually reached, volts.
    pub fn output_low_v(&self) -> f64 {
        if self.effects.output_headroom {
            self.negative_rail_v + self.output_low_rise_v
        } else {
            self.negative_rail_v
        }
    }

    /// Input offset applied, volts (0 when the offset effect is off).
    pub fn offset_applied_v(&self) -> f64 {
        if self.effects.offset { self.offset_v } else { 0.0 }
    }

    /// IB+ applied, amperes.
    pub fn bias_plus_applied_a(&self) -> f64 {
        if self.effects.bias_current { self.bias_plus_a } else { 0.0 }
    }

    /// IB− applied, amperes.
    pub fn bias_minus_applied_a(&self) -> f64 {
        if self.effects.bias_current { self.bias_minus_a } else { 0.0 }
    }

    /// The switching offset in a given output state: VOS ∓ h/2. With the output high the device
    /// needs V(+) − V(−) to fall to VOS − h/2 (DOMAIN §0: built-in hysteresis as state-dependent VOS).
    pub fn switching_offset_v(&self, output_high: bool) -> f64 {
        let half = if self.effects.builtin_hysteresis { self.builtin_hysteresis_v / 2.0 } else { 0.0 };
        if output_high { self.offset_applied_v() - half } else { self.offset_applied_v() + half }
    }

    /// The offset VOS as a tolerance parameter, with its drift of unknown sign.
    pub fn offset_drift(&self) -> crate::drift::Drift {
        crate::drift::Drift::Unknown(self.offset_drift_v_per_k)
    }

    /// The bias currents' temperature dependence, compounded from 25 °C (sign known).
    pub fn bias_drift(&self) -> crate::drift::Drift {
        crate::drift::Drift::Compound(self.bias_tempco_pct_per_k / 100.0)
    }

    /// Lowest input voltage the device accepts without leaving its common-mode range, volts.
    pub fn input_min_v(&self) -> f64 {
        self.negative_rail_v + self.input_low_margin_v
    }

    /// Highest input voltage the device accepts without leaving its common-mode range, volts.
    pub fn input_max_v(&self) -> f64 {
        self.supply_v - self.input_high_margin_v
    }
}

/// A voltage that a resistor is returned to: one of the device's rails, or a fixed source.
/// Rails follow the supply when the design is evaluated at the supply's minimum and maximum.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Rail {
    /// The positive supply VCC.
    Supply,
    /// 0 V (circuit common).
    Ground,
    /// The negative rail VEE.
    NegativeRail,
    /// A fixed voltage source (a reference IC, a separate regulated rail), volts.
    Fixed(f64),
}

impl Rail {
    /// The rail's voltage for a device on the given rails.
    pub fn volts(&self, supply_v: f64, negative_rail_v: f64) -> f64 {
        match *self {
            Rail::Supply => supply_v,
            Rail::Ground => 0.0,
            Rail::NegativeRail => negative_rail_v,
            Rail::Fixed(v) => v,
        }
    }

    /// Checks a fixed voltage for finiteness.
    pub fn validate(&self, field: &str) -> Result<(), DesignError> {
        if let Rail::Fixed(v) = self {
            crate::limits::check(crate::limits::Quantity::Voltage, field, *v)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn headroom_sets_output_levels_and_can_be_switched_off() {
        let mut c = Comparator { supply_v: 5.0, output_high_drop_v: 0.2, output_low_rise_v: 0.1, ..Comparator::default() };
        assert!((c.output_high_v() - 4.8).abs() < 1e-12);
        assert!((c.output_low_v() - 0.1).abs() < 1e-12);
        c.effects.output_headroom = false;
        assert_eq!(c.output_high_v(), 5.0);
        assert_eq!(c.output_low_v(), 0.0);
    }

    /// The quick test and the field-by-field refusal agree on random devices, valid and not.
    #[test]
    fn quick_test_agrees_with_the_refusal() {
        let mut rng = crate::rng::Rng::new(0xc0_4a_1d);
        let mut pick = |typical: f64| match rng.next_u64() % 60 {
            0 => f64::NAN,
            1 => -typical,
            2 => typical * 1e7,
            3 => 0.0,
            4 => f64::INFINITY,
            _ => typical * rng.uniform_in(0.0, 2.0),
        };
        let (mut valid, mut refused) = (0, 0);
        for _ in 0..20_000 {
            let c = Comparator {
                supply_v: pick(5.0),
                negative_rail_v: pick(-0.5),
                output_high_drop_v: pick(0.2),
                output_low_rise_v: pick(0.1),
                offset_v: pick(0.002),
                bias_plus_a: pick(1e-7),
                bias_minus_a: pick(1e-7),
                builtin_hysteresis_v: pick(0.003),
                input_low_margin_v: pick(0.1),
                input_high_margin_v: pick(-1.5),
                source_resistance_ohm: pick(50.0),
                offset_drift_v_per_k: pick(5e-6),
                bias_tempco_pct_per_k: pick(0.5),
                effects: Effects::default(),
            };
            let ok = c.refusal().is_ok();
            assert_eq!(c.admitted(), ok, "{c:?}");
            if ok { valid += 1 } else { refused += 1 }
        }
        assert!(valid > 200 && refused > 200, "valid {valid}, refused {refused}");
        // Edges one field at a time, from a valid device.
        let base = Comparator { supply_v: 5.0, negative_rail_v: -5.0, output_high_drop_v: 1.0, output_low_rise_v: 1.0, ..Comparator::default() };
        let edges: [fn(&mut Comparator); 8] = [
            |c| c.negative_rail_v = c.supply_v,
            |c| c.output_high_drop_v = 5.0,
            |c| c.output_high_drop_v = -0.0,
            |c| c.source_resistance_ohm = 1e-9,
            |c| c.source_resistance_ohm = -0.0,
            |c| c.offset_drift_v_per_k = -1e-9,
            |c| c.bias_tempco_pct_per_k = 50.0,
            |c| c.supply_v = 1e5,
        ];
        for edge in edges {
            let mut c = base;
            edge(&mut c);
            assert_eq!(c.admitted(), c.refusal().is_ok(), "{c:?}");
        }
    }

    #[test]
    fn rejects_output_levels_that_cross() {
        let c = Comparator { supply_v: 1.0, output_high_drop_v: 0.6, output_low_rise_v: 0.5, ..Comparator::default() };
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
    }

    #[test]
    fn builtin_hysteresis_is_a_state_dependent_offset() {
        let c = Comparator { builtin_hysteresis_v: 0.01, offset_v: 0.002, ..Comparator::default() };
        assert!((c.switching_offset_v(true) - (-0.003)).abs() < 1e-15);
        assert!((c.switching_offset_v(false) - 0.007).abs() < 1e-15);
    }
}
