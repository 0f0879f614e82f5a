//! Inverting Schmitt trigger around a comparator or op-amp (shared/DOMAIN.md §1a).
//!
//! The input drives the inverting input (−). The non-inverting input (+), node P, sits on a divider
//! Ra (to `rail_a`) / Rb (to `rail_b`) and receives positive feedback from the output through Rf.
//! Either divider resistor may be left out, which gives the two-resistor forms:
//! - split supply, reference at ground: only Rb, returned to ground (VT± = β·VOH, β·VOL, β = Rb/(Rb+Rf));
//! - reference voltage: only Rb, returned to a fixed reference;
//! - single supply: Ra to the supply and Rb to ground (the three-resistor form).
//!
//! Equations (Sedra & Smith, *Microelectronic Circuits*, bistable-multivibrator section, from memory;
//! non-idealities from DOMAIN §1a): with Rp = Ra‖Rb‖Rf and the output at VO,
//! P = Rp·(VA/Ra + VB/Rb + VO/Rf − IB+) and the device switches when P − V(−) = VOS (∓h/2),
//! with V(−) = Vin − IB−·Rs. Hence VT+ (VO = VOH) and VT− (VO = VOL) = P − VOS ± h/2 + IB−·Rs.

use super::{Described, expect_len, parallel, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::device::{Comparator, Rail};
use super::comparator::{resistance, verified};
use crate::error::DesignError;
use serde::{Deserialize, Serialize};

/// An inverting Schmitt trigger with an optional two-resistor reference divider.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InvertingSchmitt {
    /// Upper divider resistor Ra from node P to `rail_a`, ohms; `None` when not fitted.
    pub ra_ohm: Option<f64>,
    /// Rail that Ra returns to (usually the supply).
    pub rail_a: Rail,
    /// Lower divider resistor Rb from node P to `rail_b`, ohms; `None` when not fitted.
    pub rb_ohm: Option<f64>,
    /// Rail that Rb returns to (usually ground, or a reference).
    pub rail_b: Rail,
    /// Feedback resistor Rf from the output to node P, ohms.
    pub rf_ohm: f64,
    /// The comparator or op-amp.
    pub device: Comparator,
}

impl InvertingSchmitt {
    /// The single-supply three-resistor form: Ra to the supply, Rb to ground, Rf from the output.
    pub fn single_supply(ra_ohm: f64, rb_ohm: f64, rf_ohm: f64, device: Comparator) -> Self {
        InvertingSchmitt { ra_ohm: Some(ra_ohm), rail_a: Rail::Supply, rb_ohm: Some(rb_ohm), rail_b: Rail::Ground, rf_ohm, device }
    }

    /// The split-supply two-resistor form with the reference at ground: R1 (here Rb) to 0 V, Rf feedback.
    pub fn split_supply(r1_ohm: f64, rf_ohm: f64, device: Comparator) -> Self {
        InvertingSchmitt { ra_ohm: None, rail_a: Rail::Supply, rb_ohm: Some(r1_ohm), rail_b: Rail::Ground, rf_ohm, device }
    }

    fn va(&self) -> f64 {
        self.rail_a.volts(self.device.supply_v, self.device.negative_rail_v)
    }

    fn vb(&self) -> f64 {
        self.rail_b.volts(self.device.supply_v, self.device.negative_rail_v)
    }

    /// Designators assigned in order Ra, Rb, Rf over the fitted resistors.
    fn designators(&self) -> (Option<String>, Option<String>, String) {
        let mut n = 0;
        let mut next = || {
            n += 1;
            format!("R{n}")
        };
        let a = self.ra_ohm.map(|_| next());
        let b = self.rb_ohm.map(|_| next());
        let f = next();
        (a, b, f)
    }

    /// Node P for output voltage `vo`.
    fn node_p(&self, vo: f64) -> f64 {
        let rp = parallel(&[self.ra_ohm, self.rb_ohm, Some(self.rf_ohm)]);
        let mut sum = vo / self.rf_ohm - self.device.bias_plus_applied_a();
        if let Some(ra) = self.ra_ohm {
            sum += self.va() / ra;
        }
        if let Some(rb) = self.rb_ohm {
            sum += self.vb() / rb;
        }
        rp * sum
    }

    /// Input-referred error that does not depend on the divider: −VOS(state) + IB−·Rs.
    fn input_error(&self, output_high: bool) -> f64 {
        -self.device.switching_offset_v(output_high) + self.device.bias_minus_applied_a() * self.device.source_resistance_ohm
    }
}

impl Circuit for InvertingSchmitt {
    super::comparator::comparator_rails!(push_pull);

    fn validate(&self) -> Result<(), DesignError> {
        self.device.validate()?;
        if let Some(r) = self.ra_ohm {
            resistance("ra_ohm", r)?;
        }
        if let Some(r) = self.rb_ohm {
            resistance("rb_ohm", r)?;
        }
        resistance("rf_ohm", self.rf_ohm)?;
        self.rail_a.validate("rail_a")?;
        self.rail_b.validate("rail_b")?;
        if self.ra_ohm.is_none() && self.rb_ohm.is_none() {
            return Err(DesignError::inconsistent(
                "fit at least one of ra_ohm and rb_ohm: without a path to a reference the feedback alone sets no threshold",
            ));
        }
        Ok(())
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let voh = self.device.output_high_v();
        let vol = self.device.output_low_v();
        Ok(Thresholds {
            vt_upper_v: self.node_p(voh) + self.input_error(true),
            vt_lower_v: self.node_p(vol) + self.input_error(false),
        })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.device.output_high_v(), self.device.output_low_v()))
    }

    fn sense(&self) -> Sense {
        Sense::Inverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let vo = match state {
            OutputState::High => self.device.output_high_v(),
            OutputState::Low => self.device.output_low_v(),
        };
        let p = self.node_p(vo);
        let (da, db, df) = self.designators();
        let mut resistors = Vec::new();
        let mut currents = Vec::new();
        if let (Some(r), Some(d)) = (self.ra_ohm, da) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r, volts: self.va() - p });
            currents.push((self.va() - p) / r);
        }
        if let (Some(r), Some(d)) = (self.rb_ohm, db) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r, volts: p - self.vb() });
            currents.push((self.vb() - p) / r);
        }
        resistors.push(ResistorDrop { designator: df, resistance_ohm: self.rf_ohm, volts: vo - p });
        currents.push((vo - p) / self.rf_ohm);
        let ib_minus = self.device.bias_minus_applied_a();
        Ok(OperatingPoint {
            resistors,
            input_current_a: ib_minus,
            network_current_a: currents.iter().map(|i| i.abs()).sum::<f64>() / 2.0,
            device_inputs: vec![
                NodeVoltage { name: "inverting input (signal)".into(), volts: vin_v - ib_minus * self.device.source_resistance_ohm },
                NodeVoltage { name: "non-inverting input (node P)".into(), volts: p },
            ],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let (da, db, df) = self.designators();
        let mut v = Vec::new();
        if let (Some(r), Some(d)) = (self.ra_ohm, da) {
            v.push(Parameter::resistor("ra_ohm", &d, "divider resistor to rail A", r));
        }
        if let (Some(r), Some(d)) = (self.rb_ohm, db) {
            v.push(Parameter::resistor("rb_ohm", &d, "divider resistor to rail B", r));
        }
        v.push(Parameter::resistor("rf_ohm", &df, "feedback resistor", self.rf_ohm));
        let d = &self.device;
        v.push(Parameter::quantity("supply_v", "supply", d.supply_v, ParameterKind::Supply));
        v.push(Parameter::quantity("negative_rail_v", "negative rail", d.negative_rail_v, ParameterKind::Supply));
        if let Rail::Fixed(x) = self.rail_a {
            v.push(Parameter::quantity("rail_a", "rail A reference", x, ParameterKind::Reference));
        }
        if let Rail::Fixed(x) = self.rail_b {
            v.push(Parameter::quantity("rail_b", "rail B reference", x, ParameterKind::Reference));
        }
        v.push(Parameter::quantity("output_high_drop_v", "VCC − VOH", d.output_high_drop_v, ParameterKind::OutputLevel));
        v.push(Parameter::quantity("output_low_rise_v", "VOL − VEE", d.output_low_rise_v, ParameterKind::OutputLevel));
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
        let n = self.ra_ohm.is_some() as usize
            + self.rb_ohm.is_some() as usize
            + 1
            + 2
            + matches!(self.rail_a, Rail::Fixed(_)) as usize
            + matches!(self.rail_b, Rail::Fixed(_)) as usize
            + 6;
        expect_len(values, n)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        if c.ra_ohm.is_some() {
            c.ra_ohm = Some(next());
        }
        if c.rb_ohm.is_some() {
            c.rb_ohm = Some(next());
        }
        c.rf_ohm = next();
        c.device.supply_v = next();
        c.device.negative_rail_v = next();
        if let Rail::Fixed(_) = c.rail_a {
            c.rail_a = Rail::Fixed(next());
        }
        if let Rail::Fixed(_) = c.rail_b {
            c.rail_b = Rail::Fixed(next());
        }
        c.device.output_high_drop_v = next();
        c.device.output_low_rise_v = next();
        c.device.offset_v = next();
        c.device.bias_plus_a = next();
        c.device.bias_minus_a = next();
        c.device.builtin_hysteresis_v = next();
        Ok(())
    }

    /// Ro and the load as a Thevenin source in series with Rf (module [`crate::output_dynamics`]).
    fn with_output_load(&self, load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        let (h, l, rs) = load.thevenin(self.device.output_high_v(), self.device.output_low_v());
        let device = crate::topology::output_load::comparator_with_levels(&self.device, h, l);
        Some(InvertingSchmitt { rf_ohm: self.rf_ohm + rs, device, ..self.clone() })
    }

    /// DOMAIN §1a synthesis, extended to invert the offset and bias terms exactly:
    /// k = ΔP/(VOH − VOL), Rth = Rf·k/(1−k), Vth = (P − k·VO)/(1−k) + IB+·Rth,
    /// Ra = Rth(VA−VB)/(Vth−VB), Rb = Rth(VA−VB)/(VA−Vth).
    fn synthesise_with_anchor(&self, targets: Thresholds, rf_ohm: f64) -> Result<Self, DesignError> {
        self.device.validate()?;
        let voh = self.device.output_high_v();
        let vol = self.device.output_low_v();
        let p_hi = targets.vt_upper_v - self.input_error(true);
        let p_lo = targets.vt_lower_v - self.input_error(false);
        if targets.vt_upper_v <= targets.vt_lower_v {
            return Err(DesignError::infeasible(
                format!("VT+ ({:.4} V) must be above VT− ({:.4} V)", targets.vt_upper_v, targets.vt_lower_v),
                "swap the targets or use a plain comparator for a single threshold",
            ));
        }
        let k = (p_hi - p_lo) / (voh - vol);
        if k.is_nan() || k <= 0.0 {
            return Err(DesignError::infeasible(
                "the device's built-in hysteresis already exceeds the requested width",
                "ask for a wider hysteresis or use a device without built-in hysteresis",
            ));
        }
        if k >= 1.0 {
            return Err(DesignError::infeasible(
                format!(
                    "the requested width ({:.4} V) is not below the output swing VOH − VOL ({:.4} V)",
                    targets.vt_upper_v - targets.vt_lower_v,
                    voh - vol
                ),
                "narrow the hysteresis, or use the non-inverting form whose width can exceed the swing",
            ));
        }
        let rth = rf_ohm * k / (1.0 - k);
        let vth = (p_lo - k * vol) / (1.0 - k) + self.device.bias_plus_applied_a() * rth;
        let va = self.va();
        let vb = self.vb();
        let mut out = self.clone();
        out.rf_ohm = rf_ohm;
        let tol = 1e-12 * (va.abs() + vb.abs()).max(1.0);
        match (self.ra_ohm.is_some(), self.rb_ohm.is_some()) {
            (true, true) => {
                let (lo, hi) = if va > vb { (vb, va) } else { (va, vb) };
                if vth <= lo - tol || vth >= hi + tol {
                    return Err(DesignError::infeasible(
                        format!(
                            "the divider would need to sit at {:.4} V, outside its rails ({:.4} V to {:.4} V)",
                            vth, lo, hi
                        ),
                        if vth > hi {
                            "VT+ is too close to or above the output high level: use a reference above the thresholds, or the non-inverting form"
                        } else {
                            "VT− is too close to or below the output low level: return the divider to a lower rail, or use the non-inverting form"
                        },
                    ));
                }
                if (vth - vb).abs() <= tol {
                    out.ra_ohm = None;
                    out.rb_ohm = Some(rth);
                } else if (va - vth).abs() <= tol {
                    out.rb_ohm = None;
                    out.ra_ohm = Some(rth);
                } else {
                    out.ra_ohm = Some(rth * (va - vb) / (vth - vb));
                    out.rb_ohm = Some(rth * (va - vb) / (va - vth));
                }
            }
            (a, _) => {
                let fixed = if a { va } else { vb };
                if (vth - fixed).abs() > 1e-9 * fixed.abs().max(1.0) {
                    return Err(DesignError::infeasible(
                        format!(
                            "this two-resistor form fixes the reference at {:.4} V but the targets need {:.4} V",
                            fixed, vth
                        ),
                        "fit both divider resistors (three-resistor form) or return the resistor to a reference of that voltage",
                    ));
                }
                if a {
                    out.ra_ohm = Some(rth);
                } else {
                    out.rb_ohm = Some(rth);
                }
            }
        }
        verified(out, targets, rf_ohm)
    }

    fn anchor_description(&self) -> &'static str {
        "feedback resistor Rf (output to the non-inverting input)"
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let rp = parallel(&[self.ra_ohm, self.rb_ohm, Some(self.rf_ohm)]);
        let ibp = self.device.bias_plus_applied_a().abs();
        let ibm = self.device.bias_minus_applied_a().abs();
        let bias_err = ibp * rp + ibm * self.device.source_resistance_ohm;
        // Resistor-tolerance error of VT+: Σ |∂VT/∂Ri|·Ri·tol = Σ |VT − Vi|·Rp/Ri·tol (DOMAIN §2, sensitivities a).
        if let Ok(t) = self.thresholds() {
            let voh = self.device.output_high_v();
            let mut tol_err = (t.vt_upper_v - voh).abs() * rp / self.rf_ohm;
            if let Some(ra) = self.ra_ohm {
                tol_err += (t.vt_upper_v - self.va()).abs() * rp / ra;
            }
            if let Some(rb) = self.rb_ohm {
                tol_err += (t.vt_upper_v - self.vb()).abs() * rp / rb;
            }
            tol_err *= settings.resistor_tolerance;
            let terms = format!(" (IB × node resistance {rp:.0} Ω)");
            super::comparator::bias_error_warning(bias_err, tol_err, settings, &terms, &mut w);
        }
        if let (Some(ra), Some(rb)) = (self.ra_ohm, self.rb_ohm) {
            let i_div = (self.va() - self.vb()).abs() / (ra + rb);
            if ibp > 0.0 && i_div < settings.divider_current_ratio * ibp {
                w.push(Warning::new(
                    WarningCode::DividerCurrentLow,
                    format!(
                        "divider current {:.3} µA is less than {:.0}× the input bias current {:.3} µA (common practice: 20–100×)",
                        i_div * 1e6,
                        settings.divider_current_ratio,
                        ibp * 1e6
                    ),
                ));
            }
        }
        w
    }
}

impl Described for InvertingSchmitt {
    const TITLE: &'static str = "Inverting Schmitt (op-amp or comparator)";
    const NOTE: &'static str = "The usual choice: the signal drives a high-impedance input and a divider plus feedback set both thresholds anywhere between the rails. The output is high while the input is low.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/inverting.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    fn rr(supply: f64) -> Comparator {
        Comparator::ideal(supply)
    }

    #[test]
    fn rail_to_rail_closed_form() {
        // DOMAIN §1a rail-to-rail special case: VT+ = VCC·Rb/(Rb + Ra‖Rf), VT− = VCC·(Rb‖Rf)/(Ra + Rb‖Rf).
        let (ra, rb, rf) = (10e3, 10e3, 20e3);
        let c = InvertingSchmitt::single_supply(ra, rb, rf, rr(5.0));
        let t = c.thresholds().unwrap();
        let par = |a: f64, b: f64| a * b / (a + b);
        assert!((t.vt_upper_v - 5.0 * rb / (rb + par(ra, rf))).abs() < 1e-12);
        assert!((t.vt_lower_v - 5.0 * par(rb, rf) / (ra + par(rb, rf))).abs() < 1e-12);
    }

    #[test]
    fn split_supply_is_beta_times_output() {
        // Sedra & Smith bistable section (from memory): VT± = β·L±, β = R1/(R1+R2).
        let dev = Comparator { supply_v: 12.0, negative_rail_v: -12.0, output_high_drop_v: 1.0, output_low_rise_v: 1.0, ..Comparator::default() };
        let c = InvertingSchmitt::split_supply(10e3, 90e3, dev);
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - 1.1).abs() < 1e-12);
        assert!((t.vt_lower_v + 1.1).abs() < 1e-12);
    }

    #[test]
    fn offset_and_bias_shift_both_thresholds() {
        let mut dev = rr(5.0);
        dev.offset_v = 0.005;
        dev.bias_plus_a = 100e-9;
        dev.bias_minus_a = 50e-9;
        dev.source_resistance_ohm = 1e3;
        let ideal = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, rr(5.0)).thresholds().unwrap();
        let real = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, dev).thresholds().unwrap();
        let rp = 1.0 / (1.0 / 10e3 + 1.0 / 10e3 + 1.0 / 20e3);
        let shift = -0.005 - 100e-9 * rp + 50e-9 * 1e3;
        assert!((real.vt_upper_v - ideal.vt_upper_v - shift).abs() < 1e-12);
        assert!((real.vt_lower_v - ideal.vt_lower_v - shift).abs() < 1e-12);
    }

    #[test]
    fn synthesis_round_trip_with_nonidealities() {
        let dev = Comparator {
            supply_v: 5.0,
            output_high_drop_v: 0.05,
            output_low_rise_v: 0.03,
            offset_v: 0.002,
            bias_plus_a: 20e-9,
            bias_minus_a: 15e-9,
            builtin_hysteresis_v: 0.004,
            source_resistance_ohm: 2e3,
            ..Comparator::default()
        };
        let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, dev);
        let targets = Targets { vt_upper_v: 2.9, vt_lower_v: 1.7, impedance: ImpedanceChoice::AnchorOhm(100e3) };
        let d = synthesise(&template, &targets).unwrap();
        let t = d.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.9).abs() < 1e-9);
        assert!((t.vt_lower_v - 1.7).abs() < 1e-9);
        assert_eq!(d.rf_ohm, 100e3);
    }

    #[test]
    fn synthesis_rejects_width_beyond_swing() {
        let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, rr(5.0));
        let targets = Targets { vt_upper_v: 5.5, vt_lower_v: -0.5, impedance: ImpedanceChoice::AnchorOhm(1e5) };
        let e = synthesise(&template, &targets).unwrap_err();
        assert!(matches!(e, DesignError::Infeasible { .. }), "{e}");
    }

    #[test]
    fn synthesis_rejects_reference_outside_rails() {
        let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, rr(5.0));
        let targets = Targets { vt_upper_v: 5.2, vt_lower_v: 4.5, impedance: ImpedanceChoice::AnchorOhm(1e5) };
        let e = synthesise(&template, &targets).unwrap_err();
        assert!(e.to_string().contains("non-inverting"), "{e}");
    }

    #[test]
    fn current_budget_is_met() {
        let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, rr(5.0));
        let targets = Targets { vt_upper_v: 2.9, vt_lower_v: 1.7, impedance: ImpedanceChoice::CurrentBudgetA(50e-6) };
        let d = synthesise(&template, &targets).unwrap();
        let a = analyse(&d, &CheckSettings::default()).unwrap();
        assert!((a.quiescent_current_a - 50e-6).abs() < 1e-9, "{}", a.quiescent_current_a);
        assert!((a.vt_upper_v - 2.9).abs() < 1e-9);
    }

    #[test]
    fn invalid_parts_are_typed_errors() {
        let mut c = InvertingSchmitt::single_supply(10e3, 10e3, 0.0, rr(5.0));
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.rf_ohm = f64::NAN;
        assert!(c.validate().is_err());
        c.rf_ohm = 1e3;
        c.ra_ohm = None;
        c.rb_ohm = None;
        assert!(c.validate().is_err());
    }

    #[test]
    fn parameters_round_trip() {
        let c = InvertingSchmitt { rail_b: Rail::Fixed(1.2), ..InvertingSchmitt::single_supply(10e3, 22e3, 47e3, rr(5.0)) };
        let p: Vec<f64> = c.parameters().iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&p).unwrap(), c);
        assert!(c.with_parameters(&p[1..]).is_err());
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for InvertingSchmitt {
    /// Signal on (−); node `p` on (+) with Ra to rail A, Rb to rail B and Rf from the output.
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{SourceRole, INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        let d = &self.device;
        let mut b = builder("inverting", self);
        let vcc = b.supply(d.supply_v, "VCC");
        let vee = b.negative(d.negative_rail_v);
        b.input(input_centre_v(self, (d.negative_rail_v, d.supply_v)), d.source_resistance_ohm, "IN");
        if let Some(r) = self.ra_ohm {
            let n = b.rail(self.rail_a, d.supply_v, d.negative_rail_v, "VRA", "rail_a", SourceRole::Reference);
            b.part("ra_ohm", &n, "p", r);
        }
        if let Some(r) = self.rb_ohm {
            let n = b.rail(self.rail_b, d.supply_v, d.negative_rail_v, "VRB", "rail_b", SourceRole::Reference);
            b.part("rb_ohm", "p", &n, r);
        }
        b.part("rf_ohm", OUTPUT_NET, "p", self.rf_ohm);
        b.comparator(d, "p", INPUT_NET, &vcc, &vee, false, 0.0);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
