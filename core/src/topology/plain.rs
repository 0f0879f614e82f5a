//! Plain comparator: the no-hysteresis baseline (shared/DOMAIN.md §0, §4).
//!
//! The signal drives one input directly (through its own source resistance Rs); the other input sits
//! on a reference, a rail directly or a divider. Without feedback both thresholds are the same
//! reference-derived switching point, moved by the offset and the bias currents; only the device's
//! own built-in hysteresis h, if any, separates them by ±h/2 (DOMAIN §0: h acts as a state-dependent
//! VOS = ±h/2). The comparator switches at V(+) − V(−) = VOS (DOMAIN §0, from memory of the usual
//! datasheet definition).
//!
//! - Signal on (+), reference node N = Vth − IB−·Rref on (−): VT± = N + VOS ± h/2 + IB+·Rs.
//! - Signal on (−), reference node N = Vth − IB+·Rref on (+): VT± = N − VOS ± h/2 + IB−·Rs.

use super::comparator::{divider_current_check, resistance, verified, Designators, Reference};
use super::comparator::bias_error_check_with;
use super::{Described, expect_len, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, Sense, Thresholds, Warning, WarningCode,
};
use crate::device::Comparator;
use crate::error::DesignError;
use serde::{Deserialize, Serialize};

/// A comparator with no feedback: signal on one input, a reference on the other.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlainComparator {
    /// Which input the signal drives: `non_inverting` (signal on (+), output high above the
    /// threshold) or `inverting` (signal on (−), output low above the threshold).
    pub sense: Sense,
    /// The reference on the other input.
    pub reference: Reference,
    /// The comparator (its built-in hysteresis is the only hysteresis there is).
    pub device: Comparator,
}

impl PlainComparator {
    /// Signal on (+), reference divider from the supply (Ra) to ground (Rb) on (−).
    pub fn non_inverting_with_divider(ra_ohm: f64, rb_ohm: f64, device: Comparator) -> Self {
        PlainComparator { sense: Sense::NonInverting, reference: Reference::divider(ra_ohm, rb_ohm), device }
    }

    /// The bias current drawn by the reference pin and by the signal pin.
    fn bias_ref_signal(&self) -> (f64, f64) {
        let (p, m) = (self.device.bias_plus_applied_a(), self.device.bias_minus_applied_a());
        match self.sense {
            Sense::NonInverting => (m, p),
            Sense::Inverting => (p, m),
        }
    }

    /// The reference node voltage.
    fn node_ref(&self) -> f64 {
        self.reference.node_v(self.device.supply_v, self.device.negative_rail_v, self.bias_ref_signal().0)
    }

    /// Input-referred switching point when leaving the given output state.
    fn switch_v(&self, output_high: bool) -> f64 {
        let n = self.node_ref();
        let rs_term = self.bias_ref_signal().1 * self.device.source_resistance_ohm;
        let off = self.device.switching_offset_v(output_high);
        match self.sense {
            Sense::NonInverting => n + off + rs_term,
            Sense::Inverting => n - off + rs_term,
        }
    }

    fn vo(&self, high: bool) -> f64 {
        if high { self.device.output_high_v() } else { self.device.output_low_v() }
    }
}

impl Circuit for PlainComparator {
    super::comparator::comparator_rails!(push_pull);

    fn validate(&self) -> Result<(), DesignError> {
        self.device.validate()?;
        self.reference.validate()
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        // A rising input leaves the "input low" state: output low for signal on (+), high for (−).
        let rising_from_high = self.sense == Sense::Inverting;
        Ok(Thresholds { vt_upper_v: self.switch_v(rising_from_high), vt_lower_v: self.switch_v(!rising_from_high) })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.vo(true), self.vo(false)))
    }

    fn sense(&self) -> Sense {
        self.sense
    }

    fn operating_point(&self, vin_v: f64, _state: OutputState) -> Result<OperatingPoint, DesignError> {
        let d = &self.device;
        let n = self.node_ref();
        let (_, ib_sig) = self.bias_ref_signal();
        let mut seq = Designators::default();
        let (resistors, sourced) = self.reference.drops(&mut seq, d.supply_v, d.negative_rail_v, n);
        let (sig_name, ref_name) = match self.sense {
            Sense::NonInverting => ("non-inverting input (signal)", "inverting input (reference)"),
            Sense::Inverting => ("inverting input (signal)", "non-inverting input (reference)"),
        };
        Ok(OperatingPoint {
            resistors,
            input_current_a: ib_sig,
            network_current_a: sourced,
            device_inputs: vec![
                NodeVoltage { name: sig_name.into(), volts: vin_v - ib_sig * d.source_resistance_ohm },
                NodeVoltage { name: ref_name.into(), volts: n },
            ],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let mut seq = Designators::default();
        let mut v = Vec::new();
        self.reference.push_resistors(&mut seq, &mut v);
        let d = &self.device;
        v.push(Parameter::quantity("supply_v", "supply", d.supply_v, ParameterKind::Supply));
        v.push(Parameter::quantity("negative_rail_v", "negative rail", d.negative_rail_v, ParameterKind::Supply));
        self.reference.push_rails(&mut v);
        v.push(super::comparator::offset_parameter(d));
        v.push(super::comparator::bias_parameter("bias_plus_a", "bias current IB+", d.bias_plus_a, d));
        v.push(super::comparator::bias_parameter("bias_minus_a", "bias current IB−", d.bias_minus_a, d));
        v.push(super::comparator::builtin_hysteresis_parameter(d));
        v
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        expect_len(values, 2 + self.reference.parameter_count() + 4)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        c.reference.take_resistors(&mut next);
        c.device.supply_v = next();
        c.device.negative_rail_v = next();
        c.reference.take_rails(&mut next);
        c.device.offset_v = next();
        c.device.bias_plus_a = next();
        c.device.bias_minus_a = next();
        c.device.builtin_hysteresis_v = next();
        Ok(())
    }

    /// No feedback from the output: the load moves no threshold.
    fn with_output_load(&self, _load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        Some(self.clone())
    }

    /// A plain comparator can only be centred: the width must equal the built-in hysteresis
    /// (within 1e-9 relative), and the reference is set so that the centre lands on the targets'
    /// centre, with the offset and bias terms inverted exactly. A divider is scaled to the anchor total.
    fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError> {
        self.validate()?;
        resistance("anchor_ohm", anchor_ohm)?;
        let (up, lo) = (targets.vt_upper_v, targets.vt_lower_v);
        if !(up.is_finite() && lo.is_finite()) {
            return Err(DesignError::invalid("targets", "VT+ and VT− must be finite numbers"));
        }
        let d = &self.device;
        let (off_h, off_l) = (d.switching_offset_v(true), d.switching_offset_v(false));
        let h = off_l - off_h;
        let width = up - lo;
        let tol = 1e-9 * up.abs().max(lo.abs()).max(h.abs()).max(1e-300);
        if (width - h).abs() > tol {
            return Err(DesignError::infeasible(
                format!(
                    "a plain comparator has no hysteresis of its own: its thresholds are {:.6} V apart (the device's built-in hysteresis) but the targets ask for {:.6} V",
                    h, width
                ),
                "use a Schmitt topology (inverting, non_inverting or open_drain) to add hysteresis, or ask for a width equal to the built-in hysteresis",
            ));
        }
        let centre = 0.5 * (up + lo);
        let (ib_ref, ib_sig) = self.bias_ref_signal();
        let rs_term = ib_sig * d.source_resistance_ohm;
        let n = match self.sense {
            Sense::NonInverting => centre - 0.5 * (off_h + off_l) - rs_term,
            Sense::Inverting => centre + 0.5 * (off_h + off_l) - rs_term,
        };
        let (cm_lo, cm_hi) = (d.input_min_v(), d.input_max_v());
        let ctol = 1e-9 * n.abs().max(1.0);
        if !(n >= cm_lo - ctol && n <= cm_hi + ctol) {
            return Err(DesignError::infeasible(
                format!("the reference would need to sit at {n:.4} V, outside the device's input range ({cm_lo:.4} V to {cm_hi:.4} V)"),
                "move the threshold, or use a device whose inputs reach that voltage",
            ));
        }
        let scaled = match self.reference {
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                let k = anchor_ohm / (ra_ohm + rb_ohm);
                Reference::Divider { ra_ohm: ra_ohm * k, rail_a, rb_ohm: rb_ohm * k, rail_b }
            }
            direct => direct,
        };
        let reference = scaled.synthesise_for(n, ib_ref, d.supply_v, d.negative_rail_v, "reference input")?;
        verified(PlainComparator { reference, ..self.clone() }, targets, anchor_ohm)
    }

    fn anchor_description(&self) -> &'static str {
        "reference divider total Ra + Rb (unused with a direct reference)"
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let d = &self.device;
        let h = d.switching_offset_v(false) - d.switching_offset_v(true);
        if h <= 0.0 {
            // DOMAIN §4 (Rice, BSTJ 1944–45, from memory): with the input near the threshold the
            // output chatters at up to about 0.58·B toggles per second.
            w.push(Warning::new(
                WarningCode::Note,
                "no hysteresis: a slow or noisy input near the threshold makes the output chatter (up to about 0.58 × the noise bandwidth toggles per second); use a Schmitt topology unless the input is fast and clean",
            ));
        }
        let mut nb = self.clone();
        nb.device.effects.bias_current = false;
        bias_error_check_with(self, &nb, settings, &mut w);
        divider_current_check(&self.reference, d, settings, self.bias_ref_signal().0, &mut w);
        w
    }
}

impl Described for PlainComparator {
    const TITLE: &'static str = "Plain comparator (no hysteresis)";
    const NOTE: &'static str = "The baseline with a single threshold. Use it to see what hysteresis buys on your signal; on its own it chatters on slow or noisy edges.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/plain_comparator.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Rail;

    fn real_device() -> Comparator {
        Comparator {
            supply_v: 3.3,
            offset_v: 0.004,
            bias_plus_a: 50e-9,
            bias_minus_a: -30e-9,
            builtin_hysteresis_v: 0.01,
            source_resistance_ohm: 10e3,
            ..Comparator::default()
        }
    }

    #[test]
    fn ideal_threshold_is_the_divider_voltage() {
        // DOMAIN §0 divider: Vth = (VA·Rb + VB·Ra)/(Ra+Rb); no feedback, so VT+ = VT− = Vth.
        let c = PlainComparator::non_inverting_with_divider(30e3, 20e3, Comparator::ideal(5.0));
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.0).abs() < 1e-12);
        assert_eq!(t.vt_upper_v, t.vt_lower_v);
    }

    #[test]
    fn errors_and_builtin_hysteresis() {
        // DOMAIN §0: switching at V(+) − V(−) = VOS ± h/2; bias error = IB × Thevenin resistance.
        let d = real_device();
        let rref = 30e3 * 20e3 / 50e3;
        let n_minus = 3.3 * 0.4 - (-30e-9) * rref;
        let c = PlainComparator::non_inverting_with_divider(30e3, 20e3, d);
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - (n_minus + 0.004 + 0.005 + 50e-9 * 10e3)).abs() < 1e-12);
        assert!((t.vt_lower_v - (n_minus + 0.004 - 0.005 + 50e-9 * 10e3)).abs() < 1e-12);
        let inv = PlainComparator { sense: Sense::Inverting, ..c };
        let n_plus = 3.3 * 0.4 - 50e-9 * rref;
        let t = inv.thresholds().unwrap();
        assert!((t.vt_upper_v - (n_plus - 0.004 + 0.005 + (-30e-9) * 10e3)).abs() < 1e-12);
        assert!((t.vt_lower_v - (n_plus - 0.004 - 0.005 + (-30e-9) * 10e3)).abs() < 1e-12);
    }

    #[test]
    fn synthesis_centres_the_threshold() {
        for sense in [Sense::NonInverting, Sense::Inverting] {
            let template = PlainComparator { sense, ..PlainComparator::non_inverting_with_divider(1.0, 3.0, real_device()) };
            let t = Thresholds::from_centre_width(1.234, 0.01);
            let d = template.synthesise_with_anchor(t, 47e3).unwrap();
            let got = d.thresholds().unwrap();
            assert!((got.vt_upper_v - t.vt_upper_v).abs() < 1e-9 * t.vt_upper_v);
            assert!((got.vt_lower_v - t.vt_lower_v).abs() < 1e-9 * t.vt_lower_v);
            let Reference::Divider { ra_ohm, rb_ohm, .. } = d.reference else { panic!() };
            assert!((ra_ohm + rb_ohm - 47e3).abs() < 1e-6);
        }
    }

    #[test]
    fn hysteresis_request_is_infeasible_with_a_hint() {
        let template = PlainComparator::non_inverting_with_divider(1.0, 1.0, Comparator::ideal(5.0));
        let e = template.synthesise_with_anchor(Thresholds { vt_upper_v: 2.6, vt_lower_v: 2.4 }, 1e5).unwrap_err();
        match e {
            DesignError::Infeasible { reason, suggestion } => {
                assert!(reason.contains("no hysteresis of its own"));
                assert!(suggestion.contains("Schmitt"));
            }
            other => panic!("{other:?}"),
        }
        // A single threshold (VT+ = VT−) is exactly what an ideal device gives.
        let ok = template.synthesise_with_anchor(Thresholds { vt_upper_v: 2.5, vt_lower_v: 2.5 }, 1e5).unwrap();
        assert!((ok.thresholds().unwrap().vt_upper_v - 2.5).abs() < 1e-12);
        // Outside the rails.
        let e = template.synthesise_with_anchor(Thresholds { vt_upper_v: 6.0, vt_lower_v: 6.0 }, 1e5).unwrap_err();
        assert!(matches!(e, DesignError::Infeasible { .. }));
    }

    #[test]
    fn no_hysteresis_note() {
        let c = PlainComparator::non_inverting_with_divider(1e4, 1e4, Comparator::ideal(5.0));
        assert!(c.checks(&CheckSettings::default()).iter().any(|w| w.code == WarningCode::Note));
        let c2 = PlainComparator::non_inverting_with_divider(1e4, 1e4, real_device());
        assert!(c2.checks(&CheckSettings::default()).iter().all(|w| w.code != WarningCode::Note));
    }

    #[test]
    fn invalid_parts_are_typed_errors() {
        let c = PlainComparator::non_inverting_with_divider(-1.0, 1e4, Comparator::ideal(5.0));
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        let c = PlainComparator { reference: Reference::Direct { rail: Rail::Fixed(f64::NAN) }, ..c };
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
    }

    #[test]
    fn parameters_round_trip() {
        let c = PlainComparator::non_inverting_with_divider(10e3, 22e3, real_device());
        let p = c.parameters();
        let names: Vec<_> = p.iter().filter_map(|p| p.designator.clone()).collect();
        assert_eq!(names, ["R1", "R2"]);
        let v: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&v).unwrap(), c);
        assert!(c.with_parameters(&v[1..]).is_err());
        let direct = PlainComparator { reference: Reference::fixed(1.25), ..c };
        let v: Vec<f64> = direct.parameters().iter().map(|p| p.value).collect();
        assert_eq!(direct.with_parameters(&v).unwrap(), direct);
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for PlainComparator {
    /// The signal straight on one input, the reference (rail, source or divider) on the other.
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::INPUT_NET;
        use super::netlisting::{builder, input_centre_v};
        use super::noninverting::reference_network;
        let d = &self.device;
        let mut b = builder("plain_comparator", self);
        let vcc = b.supply(d.supply_v, "VCC");
        let vee = b.negative(d.negative_rail_v);
        b.input(input_centre_v(self, (d.negative_rail_v, d.supply_v)), d.source_resistance_ohm, "IN");
        let (plus, minus) = match self.sense {
            Sense::NonInverting => (INPUT_NET.to_string(), reference_network(&mut b, &self.reference, d, "n")),
            Sense::Inverting => (reference_network(&mut b, &self.reference, d, "p"), INPUT_NET.to_string()),
        };
        b.comparator(d, &plus, &minus, &vcc, &vee, false, 0.0);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
