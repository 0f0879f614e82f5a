//! Non-inverting Schmitt trigger around a comparator or op-amp (shared/DOMAIN.md §1b).
//!
//! The signal drives R1 into the non-inverting input (+), node P; R2 feeds the output back to P.
//! The inverting input (−) sits on a reference: a rail or fixed source directly, or a divider
//! Ra (from `rail_a`) / Rb (to `rail_b`).
//!
//! Equations (Sedra & Smith, *Microelectronic Circuits*, bistable-multivibrator section, from memory;
//! non-idealities from DOMAIN §1b): with R1s = R1 + Rs, m = R1s/R2 and the (−) node at
//! N = Vth,ref − IB−·Rref, the device switches when P − N = VOS ± h/2, which gives
//! VT+ = (N + VOS + h/2)(1+m) − m·VOL + IB+·R1s and VT− = (N + VOS − h/2)(1+m) − m·VOH + IB+·R1s.

use super::{Described, expect_len, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning,
};
use crate::device::Comparator;
use crate::error::DesignError;
use super::comparator::{
    device_parameter_count, divider_current_check, divider_fraction, noninverting_switch_v, push_device_parameters,
    resistance, take_device_parameters, verified, Designators,
};
use serde::{Deserialize, Serialize};

/// The reference network now lives with the other comparator helpers; this path stays for callers.
pub use super::comparator::Reference;

/// A non-inverting Schmitt trigger: input resistor R1, feedback R2, reference on the inverting input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NonInvertingSchmitt {
    /// Input resistor R1 from the signal to the non-inverting input (node P), ohms.
    pub r1_ohm: f64,
    /// Feedback resistor R2 from the output to node P, ohms.
    pub r2_ohm: f64,
    /// What sets the inverting input: a rail directly, or a divider.
    pub reference: Reference,
    /// The comparator or op-amp (push-pull output).
    pub device: Comparator,
}

impl NonInvertingSchmitt {
    /// The usual single-supply form: R1, R2 and a reference divider from the supply to ground.
    pub fn with_divider(r1_ohm: f64, r2_ohm: f64, ra_ohm: f64, rb_ohm: f64, device: Comparator) -> Self {
        NonInvertingSchmitt { r1_ohm, r2_ohm, reference: Reference::divider(ra_ohm, rb_ohm), device }
    }

    /// R1 and R2 with the inverting input tied to a fixed reference of `reference_v`.
    pub fn with_fixed_reference(r1_ohm: f64, r2_ohm: f64, reference_v: f64, device: Comparator) -> Self {
        NonInvertingSchmitt { r1_ohm, r2_ohm, reference: Reference::fixed(reference_v), device }
    }

    /// R1 + Rs: the input resistor plus the source resistance, ohms.
    fn r1s(&self) -> f64 {
        self.r1_ohm + self.device.source_resistance_ohm
    }

    /// The inverting-input node N = Vth,ref − IB−·Rref.
    fn node_n(&self) -> f64 {
        self.reference.node_v(self.device.supply_v, self.device.negative_rail_v, self.device.bias_minus_applied_a())
    }

    /// Output level in a state.
    fn vo(&self, high: bool) -> f64 {
        if high { self.device.output_high_v() } else { self.device.output_low_v() }
    }

    /// Node P for input `vin_v` and output `vo_v`: P = (Vin/R1s + VO/R2 − IB+)·(R1s‖R2).
    fn node_p(&self, vin_v: f64, vo_v: f64) -> f64 {
        let r1s = self.r1s();
        (vin_v / r1s + vo_v / self.r2_ohm - self.device.bias_plus_applied_a()) / (1.0 / r1s + 1.0 / self.r2_ohm)
    }
}

impl Circuit for NonInvertingSchmitt {
    super::comparator::comparator_rails!(push_pull);

    fn validate(&self) -> Result<(), DesignError> {
        self.device.validate()?;
        resistance("r1_ohm", self.r1_ohm)?;
        resistance("r2_ohm", self.r2_ohm)?;
        self.reference.validate()
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let n = self.node_n();
        let (r1s, ibp) = (self.r1s(), self.device.bias_plus_applied_a());
        // Output low while the input is below VT+; output high while above VT−.
        let up = noninverting_switch_v(n + self.device.switching_offset_v(false), self.vo(false), r1s, self.r2_ohm, ibp);
        let lo = noninverting_switch_v(n + self.device.switching_offset_v(true), self.vo(true), r1s, self.r2_ohm, ibp);
        Ok(Thresholds { vt_upper_v: up, vt_lower_v: lo })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.device.output_high_v(), self.device.output_low_v()))
    }

    fn sense(&self) -> Sense {
        Sense::NonInverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let vo = self.vo(state == OutputState::High);
        let p = self.node_p(vin_v, vo);
        let n = self.node_n();
        let r1s = self.r1s();
        let i_in = (vin_v - p) / r1s;
        let i_fb = (vo - p) / self.r2_ohm;
        let mut seq = Designators::default();
        let mut resistors = vec![
            ResistorDrop { designator: seq.next_name(), resistance_ohm: self.r1_ohm, volts: i_in * self.r1_ohm },
            ResistorDrop { designator: seq.next_name(), resistance_ohm: self.r2_ohm, volts: vo - p },
        ];
        let (drops, i_ref) = self.reference.drops(&mut seq, self.device.supply_v, self.device.negative_rail_v, n);
        resistors.extend(drops);
        Ok(OperatingPoint {
            resistors,
            input_current_a: i_in,
            // Current sourced by the rails: the reference divider and the output feeding R2.
            network_current_a: i_ref + i_fb.abs(),
            device_inputs: vec![
                NodeVoltage { name: "non-inverting input (node P)".into(), volts: p },
                NodeVoltage { name: "inverting input (reference)".into(), volts: n },
            ],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let mut seq = Designators::default();
        let mut v = vec![
            Parameter::resistor("r1_ohm", &seq.next_name(), "input resistor", self.r1_ohm),
            Parameter::resistor("r2_ohm", &seq.next_name(), "feedback resistor", self.r2_ohm),
        ];
        self.reference.push_resistors(&mut seq, &mut v);
        let d = &self.device;
        v.push(Parameter::quantity("supply_v", "supply", d.supply_v, ParameterKind::Supply));
        v.push(Parameter::quantity("negative_rail_v", "negative rail", d.negative_rail_v, ParameterKind::Supply));
        self.reference.push_rails(&mut v);
        push_device_parameters(d, self.reference.has_resistance(), &mut v);
        v
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        let n = 2 + 2 + self.reference.parameter_count() + device_parameter_count(self.reference.has_resistance());
        expect_len(values, n)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        c.r1_ohm = next();
        c.r2_ohm = next();
        c.reference.take_resistors(&mut next);
        c.device.supply_v = next();
        c.device.negative_rail_v = next();
        c.reference.take_rails(&mut next);
        take_device_parameters(&mut c.device, self.reference.has_resistance(), &mut next);
        Ok(())
    }

    /// Ro and the load as a Thevenin source in series with R2 (module [`crate::output_dynamics`]).
    fn with_output_load(&self, load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        let (h, l, rs) = load.thevenin(self.device.output_high_v(), self.device.output_low_v());
        let device = crate::topology::output_load::comparator_with_levels(&self.device, h, l);
        Some(NonInvertingSchmitt { r2_ohm: self.r2_ohm + rs, device, ..self.clone() })
    }

    /// DOMAIN §1b synthesis, extended to invert offset, bias and built-in hysteresis exactly:
    /// m = (ΔV − h)/(VOH − VOL + h), R1 = m·R2 − Rs,
    /// N = (VT+ − IB+·R1s + m·VOL)/(1+m) − VOS − h/2, then the reference is set to N.
    fn synthesise_with_anchor(&self, targets: Thresholds, r2_ohm: f64) -> Result<Self, DesignError> {
        self.device.validate()?;
        self.reference.validate()?;
        resistance("anchor_ohm", r2_ohm)?;
        let d = &self.device;
        let (up, lo) = (targets.vt_upper_v, targets.vt_lower_v);
        if !(up.is_finite() && lo.is_finite()) {
            return Err(DesignError::invalid("targets", "VT+ and VT− must be finite numbers"));
        }
        if up <= lo {
            return Err(DesignError::infeasible(
                format!("VT+ ({up:.4} V) must be above VT− ({lo:.4} V)"),
                "swap the targets or use a plain comparator for a single threshold",
            ));
        }
        let off_l = d.switching_offset_v(false);
        let h = off_l - d.switching_offset_v(true);
        let (voh, vol) = (d.output_high_v(), d.output_low_v());
        let m = (up - lo - h) / (voh - vol + h);
        if m.is_nan() || m <= 0.0 {
            return Err(DesignError::infeasible(
                format!("the device's built-in hysteresis ({:.4} V) already covers the requested width ({:.4} V)", h, up - lo),
                "ask for a wider hysteresis or use a device without built-in hysteresis",
            ));
        }
        let r1s = m * r2_ohm;
        let r1 = r1s - d.source_resistance_ohm;
        if r1.is_nan() || r1 <= 0.0 {
            return Err(DesignError::infeasible(
                format!(
                    "the input resistance the targets need (m·R2 = {:.1} Ω) is not above the source resistance ({:.1} Ω)",
                    r1s, d.source_resistance_ohm
                ),
                "raise the anchor R2 or lower the source resistance",
            ));
        }
        let n = (up - d.bias_plus_applied_a() * r1s + m * vol) / (1.0 + m) - off_l;
        let (cm_lo, cm_hi) = (d.input_min_v(), d.input_max_v());
        let tol = 1e-9 * n.abs().max(1.0);
        if n < cm_lo - tol || n > cm_hi + tol {
            return Err(DesignError::infeasible(
                format!("the reference would need to sit at {n:.4} V, outside the device's input range ({cm_lo:.4} V to {cm_hi:.4} V)"),
                "move the targets' centre, or use a device whose inputs reach that voltage",
            ));
        }
        let reference =
            self.reference.synthesise_for(n, d.bias_minus_applied_a(), d.supply_v, d.negative_rail_v, "inverting input (reference)")?;
        verified(NonInvertingSchmitt { r1_ohm: r1, r2_ohm, reference, device: self.device }, targets, r2_ohm)
    }

    fn anchor_description(&self) -> &'static str {
        "feedback resistor R2 (output to the non-inverting input); a reference divider keeps its total Ra + Rb"
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let d = &self.device;
        let m = self.r1s() / self.r2_ohm;
        let (vref, rref) = self.reference.thevenin(d.supply_v, d.negative_rail_v);
        // Bias error: IB+·R1s plus IB−·Rref scaled by (1+m) (DOMAIN §1b).
        let bias_err = d.bias_plus_applied_a().abs() * self.r1s() + d.bias_minus_applied_a().abs() * rref * (1.0 + m);
        // Resistor-tolerance error of VT+ (DOMAIN §2, sensitivities b): |∂VT/∂R1|·R1 = |∂VT/∂R2|·R2 = m|Vref − VOL|,
        // through the divider (1+m)·|VA − VB|·Ra·Rb/(Ra+Rb)² for each of Ra and Rb.
        let mut tol_err = 2.0 * m * (vref - d.output_low_v()).abs();
        if let Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } = self.reference {
            let span = (rail_a.volts(d.supply_v, d.negative_rail_v) - rail_b.volts(d.supply_v, d.negative_rail_v)).abs();
            let x = divider_fraction(ra_ohm, rb_ohm);
            tol_err += 2.0 * (1.0 + m) * span * x * (1.0 - x);
        }
        tol_err *= settings.resistor_tolerance;
        let terms = " (IB+ × (R1+Rs) and IB− × reference resistance × (1+R1/R2))";
        super::comparator::bias_error_warning(bias_err, tol_err, settings, terms, &mut w);
        divider_current_check(&self.reference, d, settings, d.bias_minus_applied_a(), &mut w);
        w
    }
}

impl Described for NonInvertingSchmitt {
    const TITLE: &'static str = "Non-inverting Schmitt";
    const NOTE: &'static str = "The signal drives the feedback network through R1, so the band can be wider than the output swing and sit above or below the rails. The source must supply current; the output is high while the input is high.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/non_inverting.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::device::Rail;
    use crate::topology::{analyse, synthesise};

    fn real_device() -> Comparator {
        Comparator {
            supply_v: 5.0,
            output_high_drop_v: 0.08,
            output_low_rise_v: 0.04,
            offset_v: 0.003,
            bias_plus_a: 40e-9,
            bias_minus_a: 25e-9,
            builtin_hysteresis_v: 0.006,
            source_resistance_ohm: 1.5e3,
            ..Comparator::default()
        }
    }

    #[test]
    fn ideal_closed_form() {
        // Sedra & Smith bistable section (from memory), DOMAIN §1b: VT+ = Vref(1+m) − m·VOL,
        // VT− = Vref(1+m) − m·VOH, m = R1/R2. 5 V rail to rail, Vref = 2.5 V, m = 0.1: 2.75 V and 2.25 V.
        let c = NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 2.5, Comparator::ideal(5.0));
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.75).abs() < 1e-12);
        assert!((t.vt_lower_v - 2.25).abs() < 1e-12);
        assert_eq!(c.sense(), Sense::NonInverting);
    }

    #[test]
    fn width_may_exceed_the_swing() {
        // DOMAIN §1b: ΔV = m(VOH − VOL), which exceeds the swing for m > 1.
        let c = NonInvertingSchmitt::with_fixed_reference(30e3, 10e3, 2.5, Comparator::ideal(5.0));
        let t = c.thresholds().unwrap();
        assert!((t.hysteresis_v() - 15.0).abs() < 1e-12);
    }

    #[test]
    fn divider_reference_and_errors() {
        // DOMAIN §1b errors: R1 → R1+Rs; Vref → Vref − IB−·Rref + VOS; add IB+·(R1+Rs); h adds h(1+m).
        let d = real_device();
        let c = NonInvertingSchmitt::with_divider(10e3, 100e3, 30e3, 20e3, d);
        let t = c.thresholds().unwrap();
        let r1s = 10e3 + 1.5e3;
        let m = r1s / 100e3;
        let rref = 30e3 * 20e3 / 50e3;
        let vref = 5.0 * 20e3 / 50e3 - 25e-9 * rref + 0.003;
        let up = (vref + 0.003) * (1.0 + m) - m * 0.04 + 40e-9 * r1s;
        let lo = (vref - 0.003) * (1.0 + m) - m * 4.92 + 40e-9 * r1s;
        assert!((t.vt_upper_v - up).abs() < 1e-12, "{} {}", t.vt_upper_v, up);
        assert!((t.vt_lower_v - lo).abs() < 1e-12);
        assert!((t.hysteresis_v() - (m * (4.92 - 0.04) + 0.006 * (1.0 + m))).abs() < 1e-12);
    }

    #[test]
    fn synthesis_round_trip_with_nonidealities_keeps_divider_total() {
        let template = NonInvertingSchmitt::with_divider(1.0, 1.0, 60e3, 40e3, real_device());
        let targets = Targets { vt_upper_v: 2.9, vt_lower_v: 1.7, impedance: ImpedanceChoice::AnchorOhm(220e3) };
        let d = synthesise(&template, &targets).unwrap();
        let t = d.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.9).abs() < 1e-9 * 2.9);
        assert!((t.vt_lower_v - 1.7).abs() < 1e-9 * 1.7);
        assert_eq!(d.r2_ohm, 220e3);
        match d.reference {
            Reference::Divider { ra_ohm, rb_ohm, .. } => assert!((ra_ohm + rb_ohm - 100e3).abs() < 1e-6),
            _ => panic!("reference kind changed"),
        }
    }

    #[test]
    fn direct_reference_needs_the_right_voltage() {
        let template = NonInvertingSchmitt::with_fixed_reference(1.0, 1.0, 2.5, Comparator::ideal(5.0));
        // Centred on 2.5 V with rail outputs: Vref = 2.5 V works (DOMAIN §1b synthesis).
        let ok = template.synthesise_with_anchor(Thresholds { vt_upper_v: 2.75, vt_lower_v: 2.25 }, 100e3).unwrap();
        assert!((ok.r1_ohm - 10e3).abs() < 1e-6);
        let e = template.synthesise_with_anchor(Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.8 }, 100e3).unwrap_err();
        match e {
            DesignError::Infeasible { reason, suggestion } => {
                assert!(reason.contains("tied directly"));
                assert!(suggestion.contains("divider"));
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn infeasible_targets_are_typed() {
        let template = NonInvertingSchmitt::with_divider(1.0, 1.0, 50e3, 50e3, real_device());
        let e = |up: f64, lo: f64| template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: lo }, 1e5).unwrap_err();
        assert!(matches!(e(1.0, 2.0), DesignError::Infeasible { .. }));
        // Narrower than the built-in hysteresis.
        assert!(matches!(e(2.502, 2.5), DesignError::Infeasible { .. }));
        // Reference above the supply.
        assert!(matches!(e(9.0, 8.5), DesignError::Infeasible { .. }));
        // Source resistance larger than the input resistor needed.
        let mut d = real_device();
        d.source_resistance_ohm = 1e6;
        let t2 = NonInvertingSchmitt::with_divider(1.0, 1.0, 50e3, 50e3, d);
        let e2 = t2.synthesise_with_anchor(Thresholds { vt_upper_v: 2.6, vt_lower_v: 2.4 }, 1e5).unwrap_err();
        assert!(e2.to_string().contains("source resistance"), "{e2}");
    }

    #[test]
    fn input_current_flows_through_r1() {
        // DOMAIN §1b: the source supplies (Vin − VO)/(R1+R2) (no bias current, Rs = 0).
        let c = NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 2.5, Comparator::ideal(5.0));
        let op = c.operating_point(1.0, OutputState::High).unwrap();
        assert!((op.input_current_a - (1.0 - 5.0) / 110e3).abs() < 1e-15);
        let a = analyse(&c, &CheckSettings::default()).unwrap();
        assert!((a.input_resistance_ohm.unwrap() - 110e3).abs() < 1e-3);
    }

    #[test]
    fn invalid_parts_are_typed_errors() {
        let mut c = NonInvertingSchmitt::with_divider(10e3, 0.0, 10e3, 10e3, Comparator::ideal(5.0));
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.r2_ohm = 1e3;
        c.reference = Reference::Divider { ra_ohm: f64::NAN, rail_a: Rail::Supply, rb_ohm: 1e3, rail_b: Rail::Ground };
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.reference = Reference::Direct { rail: Rail::Fixed(f64::INFINITY) };
        assert!(c.validate().is_err());
    }

    #[test]
    fn parameters_round_trip() {
        let c = NonInvertingSchmitt {
            reference: Reference::Divider { ra_ohm: 30e3, rail_a: Rail::Fixed(3.3), rb_ohm: 20e3, rail_b: Rail::Ground },
            ..NonInvertingSchmitt::with_divider(10e3, 100e3, 1.0, 1.0, real_device())
        };
        let p = c.parameters();
        let names: Vec<_> = p.iter().filter_map(|p| p.designator.clone()).collect();
        assert_eq!(names, ["R1", "R2", "R3", "R4"]);
        let v: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&v).unwrap(), c);
        assert!(c.with_parameters(&v[1..]).is_err());
        let direct = NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 1.2, real_device());
        let v: Vec<f64> = direct.parameters().iter().map(|p| p.value).collect();
        assert_eq!(direct.with_parameters(&v).unwrap(), direct);
    }

    #[test]
    fn out_of_range_parts_are_refused() {
        let c = NonInvertingSchmitt::with_fixed_reference(1e16, 1e5, 2.5, Comparator::ideal(5.0));
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        let template = NonInvertingSchmitt::with_fixed_reference(1.0, 1.0, 2.5, Comparator::ideal(5.0));
        let t = Thresholds { vt_upper_v: 2.75, vt_lower_v: 2.25 };
        assert!(matches!(template.synthesise_with_anchor(t, 1e300), Err(DesignError::InvalidValue { .. })));
        // A valid anchor of 1 µΩ needs R1 = 0.1 µΩ, below the smallest resistance: refused by the final check.
        let e = template.synthesise_with_anchor(t, 1e-6).unwrap_err();
        assert!(matches!(e, DesignError::Infeasible { .. }), "{e}");
    }

    #[test]
    fn json_shape() {
        let c = NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 2.5, Comparator::ideal(5.0));
        let v = serde_json::to_value(&c).unwrap();
        assert_eq!(v["reference"], serde_json::json!({"kind": "direct", "rail": {"fixed": 2.5}}));
        let back: NonInvertingSchmitt = serde_json::from_value(v).unwrap();
        assert_eq!(back, c);
        let d: Reference = serde_json::from_str(r#"{"kind":"divider","ra_ohm":1e4,"rail_a":"supply","rb_ohm":2e4,"rail_b":"ground"}"#).unwrap();
        assert_eq!(d, Reference::divider(1e4, 2e4));
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for NonInvertingSchmitt {
    /// Signal through R1 to node `p` on (+), R2 from the output to `p`, the reference on (−).
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        let d = &self.device;
        let mut b = builder("non_inverting", self);
        let vcc = b.supply(d.supply_v, "VCC");
        let vee = b.negative(d.negative_rail_v);
        b.input(input_centre_v(self, (d.negative_rail_v, d.supply_v)), d.source_resistance_ohm, "IN");
        b.part("r1_ohm", INPUT_NET, "p", self.r1_ohm);
        b.part("r2_ohm", OUTPUT_NET, "p", self.r2_ohm);
        let n = reference_network(&mut b, &self.reference, d, "n");
        b.comparator(d, "p", &n, &vcc, &vee, false, 0.0);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}

/// Adds a comparator input's reference network to a netlist and returns the device-input node: a
/// rail or fixed source directly (source `VREF` on net `ref`), or the divider Ra (`ra_ohm`, from
/// `rail_a`) / Rb (`rb_ohm`, to `rail_b`) with its midpoint on net `node`. Shared by the
/// topologies that take a [`Reference`] (non-inverting, open-drain, plain comparator).
#[allow(clippy::items_after_test_module)]
pub fn reference_network(
    b: &mut crate::netlist::NetBuilder,
    reference: &Reference,
    device: &Comparator,
    node: &str,
) -> String {
    use crate::netlist::SourceRole;
    let (vs, vn) = (device.supply_v, device.negative_rail_v);
    match *reference {
        Reference::Direct { rail } => b.rail(rail, vs, vn, "VREF", "ref", SourceRole::Reference),
        Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
            let a = b.rail(rail_a, vs, vn, "VRA", "rail_a", SourceRole::Reference);
            let c = b.rail(rail_b, vs, vn, "VRB", "rail_b", SourceRole::Reference);
            b.part("ra_ohm", &a, node, ra_ohm);
            b.part("rb_ohm", node, &c, rb_ohm);
            node.into()
        }
        Reference::Zener(z) => {
            let a = b.rail(z.rail, vs, vn, "VRA", "rail_a", SourceRole::Reference);
            b.part("ref_bias_ohm", &a, node, z.bias_ohm);
            b.regulator(crate::netlist::NetRegulator::Zener {
                designator: "D1".into(),
                cathode: node.into(),
                anode: crate::netlist::GROUND.into(),
                vz_v: z.vz_v,
                source_v: z.source_v(),
                slope_ohm: z.slope_ohm,
            });
            node.into()
        }
        Reference::Shunt(s) => {
            let a = b.rail(s.rail, vs, vn, "VRA", "rail_a", SourceRole::Reference);
            let pin = format!("{node}ref");
            b.part("ref_bias_ohm", &a, node, s.bias_ohm);
            b.part("ref_upper_ohm", node, &pin, s.upper_ohm);
            b.part("ref_lower_ohm", &pin, crate::netlist::GROUND, s.lower_ohm);
            b.regulator(crate::netlist::NetRegulator::Shunt {
                designator: "U2".into(),
                cathode: node.into(),
                anode: crate::netlist::GROUND.into(),
                reference: pin,
                vref_v: s.vref_v,
                ref_current_a: s.ref_current_a,
                impedance_ohm: s.impedance_ohm,
                test_current_a: s.test_current_a,
            });
            node.into()
        }
    }
}
