// Over 600 lines: one model for both polarities (a third of the file is unit tests and the netlist).
//! Open-collector / open-drain comparator with a pull-up resistor (shared/DOMAIN.md §1c).
//!
//! The output transistor only sinks. With it off, the pull-up Rpu (to its own rail, which may differ
//! from the device supply) and the feedback resistor form a chain, so the high level sags; an
//! optional load RL to 0 V turns the pull-up into its Thevenin equivalent Vpu·RL/(Rpu+RL), Rpu‖RL.
//! With it on, the output sits at the device's low level VOL plus an optional sink resistance
//! RDS(on) (or VCE(sat) + r·I) that carries the total sink current.
//!
//! Both states are therefore a Thevenin source (Vx, Rx) feeding the feedback resistor, and Rx adds
//! to the feedback resistor (DOMAIN §0). The polarity is either
//! - inverting: the input on (−), divider Ra/Rb and feedback Rf on (+) as in the inverting Schmitt;
//!   VT+ = Vth + (Vpu − Vth)·Rth/(Rth + Rf + Rpu), VT− = Vth + (VOL − Vth)·Rth/(Rth + Rf); or
//! - non-inverting: R1 from the input to (+), R2 feedback, a reference on (−);
//!   VT+ = [Vref(R1+R2) − VOL·R1]/R2, VT− = [Vref(R1+R2+Rpu) − Vpu·R1]/(R2+Rpu).
//!
//! The equations are DOMAIN §1c's ([D], checked there by nodal solution); the pull-up rule of thumb
//! (pull-up a tenth of the feedback resistor) is common practice (DOMAIN §6). Offsets, bias
//! currents and built-in hysteresis enter as in the push-pull forms.

use super::comparator::{
    bias_error_check_with, divider_current_check,
    divider_fraction, noninverting_switch_v, par2, pick_root, quadratic_roots, resistance, verified, Designators,
    Reference,
};
use super::{Described, expect_len, parallel, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    Analysis, OutputStage,
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::device::{Comparator, Rail};
use crate::error::{non_negative, DesignError};
use crate::notation::Unit;
use serde::{Deserialize, Serialize};

/// Which input the signal drives, with the resistors of that form.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum OpenDrainPolarity {
    /// Signal on (−); node P on (+) with divider Ra/Rb and feedback Rf from the output (DOMAIN §1a, §1c).
    Inverting {
        /// Divider resistor Ra from node P to `rail_a`, ohms; `None` when not fitted.
        ra_ohm: Option<f64>,
        /// Rail that Ra returns to.
        rail_a: Rail,
        /// Divider resistor Rb from node P to `rail_b`, ohms; `None` when not fitted.
        rb_ohm: Option<f64>,
        /// Rail that Rb returns to.
        rail_b: Rail,
        /// Feedback resistor Rf from the output to node P, ohms.
        rf_ohm: f64,
    },
    /// Signal through R1 to (+); feedback R2 from the output; reference on (−) (DOMAIN §1b, §1c).
    NonInverting {
        /// Input resistor R1, ohms.
        r1_ohm: f64,
        /// Feedback resistor R2 from the output to node P, ohms.
        r2_ohm: f64,
        /// The reference on the inverting input.
        reference: Reference,
    },
}

/// A comparator with an open-collector/open-drain output, its pull-up and feedback network.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OpenDrainSchmitt {
    /// Inverting or non-inverting form, with its resistors.
    pub polarity: OpenDrainPolarity,
    /// Pull-up resistor Rpu from the output to `pullup_rail`, ohms.
    pub rpu_ohm: f64,
    /// The rail the pull-up returns to (may differ from the device supply, e.g. a 3.3 V logic rail).
    pub pullup_rail: Rail,
    /// Load resistor RL from the output to 0 V, ohms; `None` when there is none.
    #[serde(default)]
    pub rl_ohm: Option<f64>,
    /// Resistance of the on output transistor (RDS(on), or the slope of VCE(sat)), ohms; the low level is
    /// the device's VOL (its `output_low_rise_v` above the negative rail) plus this times the sink current.
    #[serde(default)]
    pub sink_resistance_ohm: f64,
    /// The comparator; its `output_high_drop_v` is unused (the pull-up sets the high level).
    pub device: Comparator,
}

/// A Thevenin source: (volts, ohms).
type Source = (f64, f64);

impl OpenDrainSchmitt {
    /// Inverting form on a single supply: Ra to the supply, Rb to ground, Rf, pull-up Rpu to the supply.
    pub fn inverting(ra_ohm: f64, rb_ohm: f64, rf_ohm: f64, rpu_ohm: f64, device: Comparator) -> Self {
        OpenDrainSchmitt {
            polarity: OpenDrainPolarity::Inverting {
                ra_ohm: Some(ra_ohm),
                rail_a: Rail::Supply,
                rb_ohm: Some(rb_ohm),
                rail_b: Rail::Ground,
                rf_ohm,
            },
            rpu_ohm,
            pullup_rail: Rail::Supply,
            rl_ohm: None,
            sink_resistance_ohm: 0.0,
            device,
        }
    }

    /// Non-inverting form: R1, R2, a reference on (−), pull-up Rpu to the supply.
    pub fn non_inverting(r1_ohm: f64, r2_ohm: f64, reference: Reference, rpu_ohm: f64, device: Comparator) -> Self {
        OpenDrainSchmitt {
            polarity: OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference },
            rpu_ohm,
            pullup_rail: Rail::Supply,
            rl_ohm: None,
            sink_resistance_ohm: 0.0,
            device,
        }
    }

    fn rail(&self, r: Rail) -> f64 {
        r.volts(self.device.supply_v, self.device.negative_rail_v)
    }

    /// The pull-up rail voltage Vpu.
    fn vpu(&self) -> f64 {
        self.rail(self.pullup_rail)
    }

    /// Pull-up with the load folded in: (Vpu·RL/(Rpu+RL), Rpu‖RL) (DOMAIN §1c).
    fn pullup_source(&self) -> Source {
        match self.rl_ohm {
            Some(rl) => (self.vpu() * divider_fraction(self.rpu_ohm, rl), par2(self.rpu_ohm, rl)),
            None => (self.vpu(), self.rpu_ohm),
        }
    }

    /// The sink's zero-current level: the device's VOL.
    fn sink_level(&self) -> f64 {
        self.device.output_low_v()
    }

    /// The output as a Thevenin source in each state: off = the pull-up; on = pull-up ‖ sink.
    fn output_source(&self, high: bool) -> Source {
        let (vp, rp) = self.pullup_source();
        if high {
            return (vp, rp);
        }
        let (vs, ron) = (self.sink_level(), self.sink_resistance_ohm);
        if ron <= 0.0 {
            (vs, 0.0)
        } else {
            (vs + (vp - vs) * divider_fraction(rp, ron), par2(rp, ron))
        }
    }

    /// The feedback resistor the output drives (Rf or R2).
    fn feedback_ohm(&self) -> f64 {
        match self.polarity {
            OpenDrainPolarity::Inverting { rf_ohm, .. } => rf_ohm,
            OpenDrainPolarity::NonInverting { r2_ohm, .. } => r2_ohm,
        }
    }

    /// Input-referred error of the inverting form that does not depend on the network: −VOS(state) + IB−·Rs.
    fn input_error(&self, high: bool) -> f64 {
        -self.device.switching_offset_v(high) + self.device.bias_minus_applied_a() * self.device.source_resistance_ohm
    }

    /// Node P of the inverting form for an output source: P = Rp·(VA/Ra + VB/Rb + Vx/(Rf+Rx) − IB+).
    fn inverting_node_p(&self, src: Source) -> f64 {
        let OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, rf_ohm } = self.polarity else {
            return f64::NAN;
        };
        let s = rf_ohm + src.1;
        let rp = parallel(&[ra_ohm, rb_ohm, Some(s)]);
        let mut sum = src.0 / s - self.device.bias_plus_applied_a();
        if let Some(ra) = ra_ohm {
            sum += self.rail(rail_a) / ra;
        }
        if let Some(rb) = rb_ohm {
            sum += self.rail(rail_b) / rb;
        }
        rp * sum
    }

    /// The reference node N of the non-inverting form.
    fn node_n(&self, reference: &Reference) -> f64 {
        reference.node_v(self.device.supply_v, self.device.negative_rail_v, self.device.bias_minus_applied_a())
    }

    /// Thresholds for given output sources in the high and low states.
    fn thresholds_for(&self, high: Source, low: Source) -> Thresholds {
        let d = &self.device;
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => Thresholds {
                vt_upper_v: self.inverting_node_p(high) + self.input_error(true),
                vt_lower_v: self.inverting_node_p(low) + self.input_error(false),
            },
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                let n = self.node_n(&reference);
                let r1s = r1_ohm + d.source_resistance_ohm;
                let ibp = d.bias_plus_applied_a();
                Thresholds {
                    vt_upper_v: noninverting_switch_v(n + d.switching_offset_v(false), low.0, r1s, r2_ohm + low.1, ibp),
                    vt_lower_v: noninverting_switch_v(n + d.switching_offset_v(true), high.0, r1s, r2_ohm + high.1, ibp),
                }
            }
        }
    }

    /// Node P for an input voltage and an output source.
    fn node_p(&self, vin_v: f64, src: Source) -> f64 {
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => self.inverting_node_p(src),
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, .. } => {
                let r1s = r1_ohm + self.device.source_resistance_ohm;
                let s = r2_ohm + src.1;
                (vin_v / r1s + src.0 / s - self.device.bias_plus_applied_a()) / (1.0 / r1s + 1.0 / s)
            }
        }
    }

    /// Output node voltage for node P and an output source: O = Vx + (P − Vx)·Rx/(Rx + Rfb).
    fn output_node(&self, p: f64, src: Source) -> f64 {
        src.0 + (p - src.0) * src.1 / (src.1 + self.feedback_ohm())
    }

    /// Node P at the instant of switching out of a state (where the output level is quoted).
    fn switching_p(&self, high: bool) -> f64 {
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => self.inverting_node_p(self.output_source(high)),
            OpenDrainPolarity::NonInverting { reference, .. } => {
                self.node_n(&reference) + self.device.switching_offset_v(high)
            }
        }
    }

    fn has_bias_minus(&self) -> bool {
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => true,
            OpenDrainPolarity::NonInverting { reference, .. } => reference.has_resistance(),
        }
    }

    fn polarity_parameter_count(&self) -> usize {
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, .. } => {
                ra_ohm.is_some() as usize
                    + rb_ohm.is_some() as usize
                    + 1
                    + matches!(rail_a, Rail::Fixed(_)) as usize
                    + matches!(rail_b, Rail::Fixed(_)) as usize
            }
            OpenDrainPolarity::NonInverting { reference, .. } => 2 + reference.parameter_count(),
        }
    }
}

impl Circuit for OpenDrainSchmitt {
    super::comparator::comparator_rails!();

    fn validate(&self) -> Result<(), DesignError> {
        self.device.validate()?;
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, rf_ohm } => {
                if let Some(r) = ra_ohm {
                    resistance("polarity.ra_ohm", r)?;
                }
                if let Some(r) = rb_ohm {
                    resistance("polarity.rb_ohm", r)?;
                }
                resistance("polarity.rf_ohm", rf_ohm)?;
                rail_a.validate("polarity.rail_a")?;
                rail_b.validate("polarity.rail_b")?;
                if ra_ohm.is_none() && rb_ohm.is_none() {
                    return Err(DesignError::inconsistent(
                        "fit at least one of ra_ohm and rb_ohm: without a path to a reference the feedback alone sets no threshold",
                    ));
                }
            }
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                resistance("polarity.r1_ohm", r1_ohm)?;
                resistance("polarity.r2_ohm", r2_ohm)?;
                reference.validate()?;
            }
        }
        resistance("rpu_ohm", self.rpu_ohm)?;
        self.pullup_rail.validate("pullup_rail")?;
        if let Some(rl) = self.rl_ohm {
            resistance("rl_ohm", rl)?;
        }
        if non_negative("sink_resistance_ohm", self.sink_resistance_ohm)? > 0.0 {
            resistance("sink_resistance_ohm", self.sink_resistance_ohm)?;
        }
        let (vp, _) = self.pullup_source();
        if vp <= self.sink_level() {
            return Err(DesignError::inconsistent(format!(
                "the pull-up level ({vp:.4} V, after any load) must be above the output low level ({:.4} V): raise the pull-up rail or the load resistance",
                self.sink_level()
            )));
        }
        Ok(())
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        Ok(self.thresholds_for(self.output_source(true), self.output_source(false)))
    }

    /// The effective levels at the output node at the instant of switching: the high level sags
    /// through the feedback chain, VOH,eff = Vpu − (Vpu − P)·Rpu/(Rpu + Rfb) (DOMAIN §1c); the low
    /// level rises by the sink resistance times the sink current.
    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        let hi = self.output_source(true);
        let lo = self.output_source(false);
        Ok((self.output_node(self.switching_p(true), hi), self.output_node(self.switching_p(false), lo)))
    }

    fn sense(&self) -> Sense {
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => Sense::Inverting,
            OpenDrainPolarity::NonInverting { .. } => Sense::NonInverting,
        }
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let src = self.output_source(state == OutputState::High);
        let p = self.node_p(vin_v, src);
        let o = self.output_node(p, src);
        let d = &self.device;
        let mut seq = Designators::default();
        let mut resistors = Vec::new();
        let mut sourced = 0.0;
        let input_current_a;
        let device_inputs;
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, rf_ohm } => {
                if let Some(r) = ra_ohm {
                    let va = self.rail(rail_a);
                    resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: r, volts: va - p });
                    sourced += ((va - p) / r).max(0.0);
                }
                if let Some(r) = rb_ohm {
                    let vb = self.rail(rail_b);
                    resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: r, volts: p - vb });
                    sourced += ((vb - p) / r).max(0.0);
                }
                resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: rf_ohm, volts: o - p });
                input_current_a = d.bias_minus_applied_a();
                device_inputs = vec![
                    NodeVoltage { name: "inverting input (signal)".into(), volts: vin_v - input_current_a * d.source_resistance_ohm },
                    NodeVoltage { name: "non-inverting input (node P)".into(), volts: p },
                ];
            }
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                let i_in = (vin_v - p) / (r1_ohm + d.source_resistance_ohm);
                resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: r1_ohm, volts: i_in * r1_ohm });
                resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: r2_ohm, volts: o - p });
                let n = self.node_n(&reference);
                let (drops, i_ref) = reference.drops(&mut seq, d.supply_v, d.negative_rail_v, n);
                resistors.extend(drops);
                sourced += i_ref;
                input_current_a = i_in;
                device_inputs = vec![
                    NodeVoltage { name: "non-inverting input (node P)".into(), volts: p },
                    NodeVoltage { name: "inverting input (reference)".into(), volts: n },
                ];
            }
        }
        let vpu = self.vpu();
        resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: self.rpu_ohm, volts: vpu - o });
        sourced += ((vpu - o) / self.rpu_ohm).max(0.0);
        if let Some(rl) = self.rl_ohm {
            resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: rl, volts: o });
        }
        Ok(OperatingPoint { resistors, input_current_a, network_current_a: sourced, device_inputs })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let mut seq = Designators::default();
        let mut v = Vec::new();
        let mut rails = Vec::new();
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, rf_ohm } => {
                if let Some(r) = ra_ohm {
                    v.push(Parameter::resistor("ra_ohm", &seq.next_name(), "divider resistor to rail A", r));
                }
                if let Some(r) = rb_ohm {
                    v.push(Parameter::resistor("rb_ohm", &seq.next_name(), "divider resistor to rail B", r));
                }
                v.push(Parameter::resistor("rf_ohm", &seq.next_name(), "feedback resistor", rf_ohm));
                if let Rail::Fixed(x) = rail_a {
                    rails.push(Parameter::quantity("rail_a", "rail A reference", x, ParameterKind::Reference));
                }
                if let Rail::Fixed(x) = rail_b {
                    rails.push(Parameter::quantity("rail_b", "rail B reference", x, ParameterKind::Reference));
                }
            }
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                v.push(Parameter::resistor("r1_ohm", &seq.next_name(), "input resistor", r1_ohm));
                v.push(Parameter::resistor("r2_ohm", &seq.next_name(), "feedback resistor", r2_ohm));
                reference.push_resistors(&mut seq, &mut v);
                reference.push_rails(&mut rails);
            }
        }
        v.push(Parameter::resistor("rpu_ohm", &seq.next_name(), "pull-up resistor", self.rpu_ohm));
        if let Some(rl) = self.rl_ohm {
            v.push(Parameter::resistor("rl_ohm", &seq.next_name(), "load resistor", rl));
        }
        let d = &self.device;
        v.push(Parameter::quantity("supply_v", "supply", d.supply_v, ParameterKind::Supply));
        v.push(Parameter::quantity("negative_rail_v", "negative rail", d.negative_rail_v, ParameterKind::Supply));
        if let Rail::Fixed(x) = self.pullup_rail {
            v.push(Parameter::quantity("pullup_v", "pull-up rail", x, ParameterKind::Supply));
        }
        v.extend(rails);
        v.push(Parameter::quantity("output_low_rise_v", "VOL − VEE", d.output_low_rise_v, ParameterKind::OutputLevel));
        v.push(Parameter::device("sink_resistance_ohm", "output sink resistance", self.sink_resistance_ohm, Unit::Ohm));
        v.push(super::comparator::offset_parameter(d));
        v.push(super::comparator::bias_parameter("bias_plus_a", "bias current IB+", d.bias_plus_a, d));
        if self.has_bias_minus() {
            v.push(super::comparator::bias_parameter("bias_minus_a", "bias current IB−", d.bias_minus_a, d));
        }
        v.push(super::comparator::builtin_hysteresis_parameter(d));
        v
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        let n = self.polarity_parameter_count()
            + 1
            + self.rl_ohm.is_some() as usize
            + 2
            + matches!(self.pullup_rail, Rail::Fixed(_)) as usize
            + 5
            + self.has_bias_minus() as usize;
        expect_len(values, n)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        // Resistors, in the order of `parameters`.
        match &mut c.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rb_ohm, rf_ohm, .. } => {
                if ra_ohm.is_some() {
                    *ra_ohm = Some(next());
                }
                if rb_ohm.is_some() {
                    *rb_ohm = Some(next());
                }
                *rf_ohm = next();
            }
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                *r1_ohm = next();
                *r2_ohm = next();
                reference.take_resistors(&mut next);
            }
        }
        c.rpu_ohm = next();
        if c.rl_ohm.is_some() {
            c.rl_ohm = Some(next());
        }
        c.device.supply_v = next();
        c.device.negative_rail_v = next();
        if let Rail::Fixed(_) = c.pullup_rail {
            c.pullup_rail = Rail::Fixed(next());
        }
        match &mut c.polarity {
            OpenDrainPolarity::Inverting { rail_a, rail_b, .. } => {
                if let Rail::Fixed(_) = rail_a {
                    *rail_a = Rail::Fixed(next());
                }
                if let Rail::Fixed(_) = rail_b {
                    *rail_b = Rail::Fixed(next());
                }
            }
            OpenDrainPolarity::NonInverting { reference, .. } => reference.take_rails(&mut next),
        }
        c.device.output_low_rise_v = next();
        c.sink_resistance_ohm = next();
        c.device.offset_v = next();
        c.device.bias_plus_a = next();
        if self.has_bias_minus() {
            c.device.bias_minus_a = next();
        }
        c.device.builtin_hysteresis_v = next();
        Ok(())
    }

    /// Ro adds to the on transistor's sink resistance; the load RL joins the existing load to 0 V
    /// (the pull-up network's high level and the feedback are modelled exactly already).
    fn with_output_load(&self, load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        let rl_ohm = match (self.rl_ohm, load.load_resistance_ohm) {
            (Some(a), Some(b)) => Some(a * b / (a + b)),
            (a, b) => a.or(b),
        };
        Some(OpenDrainSchmitt { sink_resistance_ohm: self.sink_resistance_ohm + load.output_resistance_ohm, rl_ohm, ..self.clone() })
    }

    /// DOMAIN §1c synthesis with the pull-up, load and sink resistance kept from the template and
    /// offset, bias and built-in hysteresis inverted exactly.
    /// Inverting (choose Rf): with P± the node-P targets and S± = Rf + Rx± per state,
    /// Rth = ΔP / [(Vx+ − P+)/S+ − (Vx− − P−)/S−], Vth = P+ − (Vx+ − P+)·Rth/S+ + IB+·Rth.
    /// Non-inverting (choose R2): R1s is the positive root of a·u² + b·u + c = 0 with
    /// a = Vx+ − Vx− + h − IB+(S+ − S−), b = S−(Vx+ + h − VT+) + S+(VT− + h − Vx−), c = −S+·S−(ΔV − h),
    /// which reduces to DOMAIN's quadratic without offsets; then N = [(VT+ − IB+·u)S− + Vx−·u]/(S− + u) − VOS − h/2.
    fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError> {
        let (up, lo) = (targets.vt_upper_v, targets.vt_lower_v);
        if !(up.is_finite() && lo.is_finite()) {
            return Err(DesignError::invalid("targets", "VT+ and VT− must be finite numbers"));
        }
        resistance("anchor_ohm", anchor_ohm)?;
        // Validate the template's rails, pull-up and device with its own resistors.
        self.validate()?;
        if up <= lo {
            return Err(DesignError::infeasible(
                format!("VT+ ({up:.4} V) must be above VT− ({lo:.4} V)"),
                "swap the targets or use a plain comparator for a single threshold",
            ));
        }
        let d = self.device;
        let (vh, rxh) = self.output_source(true);
        let (vl, rxl) = self.output_source(false);
        let mut out = self.clone();
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, .. } => {
                let rf = anchor_ohm;
                let ph = up - self.input_error(true);
                let pl = lo - self.input_error(false);
                if ph <= pl {
                    return Err(DesignError::infeasible(
                        "the device's built-in hysteresis already exceeds the requested width",
                        "ask for a wider hysteresis or use a device without built-in hysteresis",
                    ));
                }
                let (sh, sl) = (rf + rxh, rf + rxl);
                let den = (vh - ph) / sh - (vl - pl) / sl;
                if den.is_nan() || den <= 0.0 {
                    return Err(DesignError::infeasible(
                        format!(
                            "the requested width ({:.4} V) cannot be reached between the pulled-up high level ({vh:.4} V through {rxh:.0} Ω) and the low level ({vl:.4} V)",
                            up - lo
                        ),
                        "narrow the hysteresis, lower the pull-up resistor, or use the non-inverting polarity whose width can exceed the swing",
                    ));
                }
                let rth = (ph - pl) / den;
                let vth = ph - (vh - ph) * rth / sh + d.bias_plus_applied_a() * rth;
                let (va, vb) = (self.rail(rail_a), self.rail(rail_b));
                let tol = 1e-12 * (va.abs() + vb.abs()).max(1.0);
                let (new_ra, new_rb) = match (ra_ohm.is_some(), rb_ohm.is_some()) {
                    (true, true) => {
                        let (lo_r, hi_r) = if va > vb { (vb, va) } else { (va, vb) };
                        if vth <= lo_r - tol || vth >= hi_r + tol {
                            return Err(DesignError::infeasible(
                                format!("the divider would need to sit at {vth:.4} V, outside its rails ({lo_r:.4} V to {hi_r:.4} V)"),
                                if vth > hi_r {
                                    "VT+ is too close to or above the pulled-up high level: return the divider to a higher rail, lower the pull-up resistor, or use the non-inverting polarity"
                                } else {
                                    "VT− is too close to or below the output low level: return the divider to a lower rail, or use the non-inverting polarity"
                                },
                            ));
                        }
                        if (vth - vb).abs() <= tol {
                            (None, Some(rth))
                        } else if (va - vth).abs() <= tol {
                            (Some(rth), None)
                        } else {
                            (Some(rth * (va - vb) / (vth - vb)), Some(rth * (va - vb) / (va - vth)))
                        }
                    }
                    (a, _) => {
                        let fixed = if a { va } else { vb };
                        if (vth - fixed).abs() > 1e-9 * fixed.abs().max(1.0) {
                            return Err(DesignError::infeasible(
                                format!("this two-resistor form fixes the reference at {fixed:.4} V but the targets need {vth:.4} V"),
                                "fit both divider resistors (three-resistor form) or return the resistor to a reference of that voltage",
                            ));
                        }
                        if a { (Some(rth), None) } else { (None, Some(rth)) }
                    }
                };
                out.polarity = OpenDrainPolarity::Inverting { ra_ohm: new_ra, rail_a, rb_ohm: new_rb, rail_b, rf_ohm: rf };
            }
            OpenDrainPolarity::NonInverting { reference, .. } => {
                let r2 = anchor_ohm;
                let off_l = d.switching_offset_v(false);
                let h = off_l - d.switching_offset_v(true);
                if up - lo <= h {
                    return Err(DesignError::infeasible(
                        format!("the device's built-in hysteresis ({h:.4} V) already covers the requested width ({:.4} V)", up - lo),
                        "ask for a wider hysteresis or use a device without built-in hysteresis",
                    ));
                }
                let ibp = d.bias_plus_applied_a();
                let (sh, sl) = (r2 + rxh, r2 + rxl);
                let a = vh - vl + h - ibp * (sh - sl);
                let b = sl * (vh + h - up) + sh * (lo + h - vl);
                let c = -sh * sl * (up - lo - h);
                let hint = r2 * (up - lo - h) / (vh - vl + h);
                let u = pick_root(quadratic_roots(a, b, c), hint, |u| u > 0.0).ok_or_else(|| {
                    DesignError::infeasible(
                        format!(
                            "no input resistor reaches a width of {:.4} V with this pull-up and bias current",
                            up - lo
                        ),
                        "lower the pull-up resistor or the anchor R2, or use a device with lower bias current",
                    )
                })?;
                let r1 = u - d.source_resistance_ohm;
                if r1.is_nan() || r1 <= 0.0 {
                    return Err(DesignError::infeasible(
                        format!(
                            "the input resistance the targets need ({u:.1} Ω) is not above the source resistance ({:.1} Ω)",
                            d.source_resistance_ohm
                        ),
                        "raise the anchor R2 or lower the source resistance",
                    ));
                }
                let n = ((up - ibp * u) * sl + vl * u) / (sl + u) - off_l;
                let (cm_lo, cm_hi) = (d.input_min_v(), d.input_max_v());
                let tol = 1e-9 * n.abs().max(1.0);
                if !(n >= cm_lo - tol && n <= cm_hi + tol) {
                    return Err(DesignError::infeasible(
                        format!("the reference would need to sit at {n:.4} V, outside the device's input range ({cm_lo:.4} V to {cm_hi:.4} V)"),
                        "move the targets' centre, or use a device whose inputs reach that voltage",
                    ));
                }
                let reference = reference.synthesise_for(
                    n,
                    d.bias_minus_applied_a(),
                    d.supply_v,
                    d.negative_rail_v,
                    "inverting input (reference)",
                )?;
                out.polarity = OpenDrainPolarity::NonInverting { r1_ohm: r1, r2_ohm: r2, reference };
            }
        }
        verified(out, targets, anchor_ohm)
    }

    fn anchor_description(&self) -> &'static str {
        match self.polarity {
            OpenDrainPolarity::Inverting { .. } => {
                "feedback resistor Rf (output to the non-inverting input); the pull-up is kept"
            }
            OpenDrainPolarity::NonInverting { .. } => {
                "feedback resistor R2 (output to the non-inverting input); the pull-up and a reference divider's total are kept"
            }
        }
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let rfb = self.feedback_ohm();
        let fb_name = match self.polarity {
            OpenDrainPolarity::Inverting { .. } => "Rf",
            OpenDrainPolarity::NonInverting { .. } => "R2",
        };
        // DOMAIN §6 / §1c: the pull-up should be well below the feedback resistor (a tenth is the
        // usual rule); the numbers show how far the thresholds moved against an ideal pull-up
        // (output high exactly at Vpu).
        if self.rpu_ohm > settings.pullup_ratio_limit * rfb {
            let actual = self.thresholds_for(self.output_source(true), self.output_source(false));
            let ideal = self.thresholds_for((self.vpu(), 0.0), self.output_source(false));
            w.push(Warning::new(
                WarningCode::PullupLoading,
                format!(
                    "pull-up {:.0} Ω is more than {:.2}× the feedback resistor {fb_name} {:.0} Ω: the high level sags through the feedback chain, moving VT+ by {:+.2} mV and VT− by {:+.2} mV against an ideal pull-up (modelled exactly here); lower the pull-up or raise {fb_name} if the pull-up value may vary",
                    self.rpu_ohm,
                    settings.pullup_ratio_limit,
                    rfb,
                    (actual.vt_upper_v - ideal.vt_upper_v) * 1e3,
                    (actual.vt_lower_v - ideal.vt_lower_v) * 1e3
                ),
            ));
        }
        bias_error_check(self, settings, &mut w);
        match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm: Some(ra), rail_a, rb_ohm: Some(rb), rail_b, .. } => {
                let div = Reference::Divider { ra_ohm: ra, rail_a, rb_ohm: rb, rail_b };
                divider_current_check(&div, &self.device, settings, self.device.bias_plus_applied_a(), &mut w);
            }
            OpenDrainPolarity::NonInverting { reference, .. } => {
                divider_current_check(&reference, &self.device, settings, self.device.bias_minus_applied_a(), &mut w);
            }
            _ => {}
        }
        w
    }

    fn output_stage(&self) -> OutputStage {
        OutputStage::OpenDrain
    }

    fn troubleshooting(&self, analysis: &Analysis, _checks: &CheckSettings) -> Vec<String> {
        vec![
            "Upper reading off: check the pull-up resistor's value and the rail it goes to; the pull-up is in series with the feedback resistor while the output is off, so it moves VT+.".into(),
            format!(
                "Measure OUT while it is high with the load connected: expected {:.3} V; a lower value means extra load on the pull-up.",
                analysis.output_high_v
            ),
        ]
    }
}

impl Described for OpenDrainSchmitt {
    const TITLE: &'static str = "Open-drain / open-collector comparator";
    const NOTE: &'static str = "For comparators whose output only pulls low, or to give a logic level on another rail. The pull-up loads the feedback resistor and moves the upper threshold; Hysteron models it exactly.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/open_drain.json");
}

fn bias_error_check(c: &OpenDrainSchmitt, settings: &CheckSettings, w: &mut Vec<Warning>) {
    let mut nb = c.clone();
    nb.device.effects.bias_current = false;
    bias_error_check_with(c, &nb, settings, w);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    fn open_drain_device() -> Comparator {
        Comparator { supply_v: 5.0, output_low_rise_v: 0.1, ..Comparator::default() }
    }

    fn real_device() -> Comparator {
        Comparator {
            supply_v: 5.0,
            output_low_rise_v: 0.08,
            offset_v: -0.002,
            bias_plus_a: 30e-9,
            bias_minus_a: 20e-9,
            builtin_hysteresis_v: 0.004,
            source_resistance_ohm: 1e3,
            ..Comparator::default()
        }
    }

    #[test]
    fn inverting_closed_form() {
        // DOMAIN §1c [D, from memory of its derivation]: VT+ = Vth + (Vpu−Vth)·Rth/(Rth+Rf+Rpu),
        // VT− = Vth + (VOL−Vth)·Rth/(Rth+Rf), VOH,eff = Vpu − (Vpu−Vth)·Rpu/(Rth+Rf+Rpu).
        let (ra, rb, rf, rpu) = (20e3, 30e3, 100e3, 10e3);
        let mut c = OpenDrainSchmitt::inverting(ra, rb, rf, rpu, open_drain_device());
        c.pullup_rail = Rail::Fixed(3.3);
        let vth = 5.0 * rb / (ra + rb);
        let rth = ra * rb / (ra + rb);
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - (vth + (3.3 - vth) * rth / (rth + rf + rpu))).abs() < 1e-12);
        assert!((t.vt_lower_v - (vth + (0.1 - vth) * rth / (rth + rf))).abs() < 1e-12);
        let (hi, lo) = c.output_levels().unwrap();
        assert!((hi - (3.3 - (3.3 - vth) * rpu / (rth + rf + rpu))).abs() < 1e-12);
        assert!((lo - 0.1).abs() < 1e-15);
    }

    #[test]
    fn non_inverting_closed_form() {
        // DOMAIN §1c: VT+ = [Vref(R1+R2) − VOL·R1]/R2; VT− = [Vref(R1+R2+Rpu) − Vpu·R1]/(R2+Rpu);
        // VOH,eff = Vpu − (Vpu−VT−)·Rpu/(R1+R2+Rpu).
        let (r1, r2, rpu, vref, vpu) = (10e3, 100e3, 4.7e3, 2.5, 5.0);
        let c = OpenDrainSchmitt::non_inverting(r1, r2, Reference::fixed(vref), rpu, open_drain_device());
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - (vref * (r1 + r2) - 0.1 * r1) / r2).abs() < 1e-12);
        let vtm = (vref * (r1 + r2 + rpu) - vpu * r1) / (r2 + rpu);
        assert!((t.vt_lower_v - vtm).abs() < 1e-12);
        let (hi, _) = c.output_levels().unwrap();
        assert!((hi - (vpu - (vpu - vtm) * rpu / (r1 + r2 + rpu))).abs() < 1e-12);
    }

    #[test]
    fn load_resistor_is_a_thevenin_pullup() {
        // DOMAIN §1c: a load RL to ground turns Vpu into Vpu·RL/(Rpu+RL) and Rpu into Rpu‖RL.
        let mut c = OpenDrainSchmitt::inverting(20e3, 30e3, 100e3, 10e3, open_drain_device());
        c.rl_ohm = Some(40e3);
        let mut eq = c.clone();
        eq.rl_ohm = None;
        eq.rpu_ohm = 8e3;
        eq.pullup_rail = Rail::Fixed(4.0);
        let (a, b) = (c.thresholds().unwrap(), eq.thresholds().unwrap());
        assert!((a.vt_upper_v - b.vt_upper_v).abs() < 1e-12);
        assert!((a.vt_lower_v - b.vt_lower_v).abs() < 1e-12);
    }

    #[test]
    fn non_inverting_synthesis_matches_the_domain_quadratic() {
        // DOMAIN §1c: R1 = positive root of (Vpu−VOL)R1² + [(VT−−VOL)(R2+Rpu) + (Vpu−VT+)R2]R1 − ΔV·R2(R2+Rpu) = 0,
        // then Vref = (VT+·R2 + VOL·R1)/(R1+R2).
        let (r2, rpu, vpu, vol) = (100e3, 10e3, 5.0, 0.1);
        let template = OpenDrainSchmitt::non_inverting(1.0, 1.0, Reference::divider(50e3, 50e3), rpu, open_drain_device());
        let (up, lo) = (3.0, 2.0);
        let d = template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: lo }, r2).unwrap();
        let a = vpu - vol;
        let b = (lo - vol) * (r2 + rpu) + (vpu - up) * r2;
        let c = -(up - lo) * r2 * (r2 + rpu);
        let r1 = (-b + (b * b - 4.0 * a * c).sqrt()) / (2.0 * a);
        let OpenDrainPolarity::NonInverting { r1_ohm, reference, .. } = d.polarity else { panic!() };
        assert!((r1_ohm - r1).abs() < 1e-9 * r1);
        let vref = (up * r2 + vol * r1) / (r1 + r2);
        assert!((reference.node_v(5.0, 0.0, 0.0) - vref).abs() < 1e-12);
    }

    #[test]
    fn round_trip_with_every_nonideality() {
        for pol in 0..2 {
            let mut template = if pol == 0 {
                OpenDrainSchmitt::inverting(1.0, 1.0, 1.0, 4.7e3, real_device())
            } else {
                OpenDrainSchmitt::non_inverting(1.0, 1.0, Reference::divider(33e3, 67e3), 4.7e3, real_device())
            };
            template.rl_ohm = Some(47e3);
            template.sink_resistance_ohm = 60.0;
            template.pullup_rail = Rail::Fixed(3.3);
            let targets = Targets { vt_upper_v: 2.1, vt_lower_v: 1.4, impedance: ImpedanceChoice::AnchorOhm(150e3) };
            let d = synthesise(&template, &targets).unwrap();
            let t = d.thresholds().unwrap();
            assert!((t.vt_upper_v - 2.1).abs() < 1e-9 * 2.1, "{pol}: {t:?}");
            assert!((t.vt_lower_v - 1.4).abs() < 1e-9 * 1.4, "{pol}: {t:?}");
            assert_eq!(d.rpu_ohm, 4.7e3);
            assert!(analyse(&d, &CheckSettings::default()).is_ok());
        }
    }

    #[test]
    fn pullup_loading_is_reported_with_the_shift() {
        let c = OpenDrainSchmitt::inverting(20e3, 30e3, 47e3, 10e3, open_drain_device());
        let w = c.checks(&CheckSettings::default());
        let p = w.iter().find(|w| w.code == WarningCode::PullupLoading).expect("pull-up warning");
        assert!(p.message.contains("VT+ by -"), "{}", p.message);
        let small = OpenDrainSchmitt::inverting(20e3, 30e3, 1e6, 4.7e3, open_drain_device());
        assert!(small.checks(&CheckSettings::default()).iter().all(|w| w.code != WarningCode::PullupLoading));
    }

    #[test]
    fn infeasible_targets_are_typed() {
        let inv = OpenDrainSchmitt::inverting(1.0, 1.0, 1.0, 10e3, open_drain_device());
        let th = |up, lo| Thresholds { vt_upper_v: up, vt_lower_v: lo };
        // Wider than the swing for the inverting polarity.
        let e = inv.synthesise_with_anchor(th(5.5, -0.5), 1e5).unwrap_err();
        assert!(matches!(e, DesignError::Infeasible { .. }), "{e}");
        // Above the pulled-up level.
        let e = inv.synthesise_with_anchor(th(5.2, 4.9), 1e5).unwrap_err();
        assert!(matches!(e, DesignError::Infeasible { .. }), "{e}");
        let ni = OpenDrainSchmitt::non_inverting(1.0, 1.0, Reference::divider(1e4, 1e4), 10e3, open_drain_device());
        assert!(matches!(ni.synthesise_with_anchor(th(1.0, 2.0), 1e5), Err(DesignError::Infeasible { .. })));
        // Reference outside the rails.
        assert!(matches!(ni.synthesise_with_anchor(th(8.0, 7.0), 1e5), Err(DesignError::Infeasible { .. })));
    }

    #[test]
    fn invalid_parts_are_typed_errors() {
        let mut c = OpenDrainSchmitt::inverting(20e3, 30e3, 100e3, 0.0, open_drain_device());
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.rpu_ohm = 1e3;
        c.pullup_rail = Rail::Fixed(0.05);
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
        c.pullup_rail = Rail::Supply;
        c.sink_resistance_ohm = -1.0;
        assert!(c.validate().is_err());
        c.sink_resistance_ohm = 0.0;
        c.rl_ohm = Some(f64::NAN);
        assert!(c.validate().is_err());
    }

    #[test]
    fn parameters_round_trip() {
        let mut c = OpenDrainSchmitt::non_inverting(10e3, 100e3, Reference::divider(20e3, 30e3), 4.7e3, real_device());
        c.rl_ohm = Some(10e3);
        c.pullup_rail = Rail::Fixed(3.3);
        let p = c.parameters();
        let names: Vec<_> = p.iter().filter_map(|p| p.designator.clone()).collect();
        assert_eq!(names, ["R1", "R2", "R3", "R4", "R5", "R6"]);
        let v: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&v).unwrap(), c);
        assert!(c.with_parameters(&v[1..]).is_err());
        let mut i = OpenDrainSchmitt::inverting(20e3, 30e3, 100e3, 4.7e3, real_device());
        if let OpenDrainPolarity::Inverting { ra_ohm, rail_b, .. } = &mut i.polarity {
            *ra_ohm = None;
            *rail_b = Rail::Fixed(1.2);
        }
        let v: Vec<f64> = i.parameters().iter().map(|p| p.value).collect();
        assert_eq!(i.with_parameters(&v).unwrap(), i);
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for OpenDrainSchmitt {
    /// The inverting or non-inverting network of the push-pull forms, plus the pull-up Rpu to its
    /// rail, the optional load RL and an output that only pulls low (through RDS(on)).
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{SourceRole, GROUND, INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        use super::noninverting::reference_network;
        let d = &self.device;
        let (vs, vn) = (d.supply_v, d.negative_rail_v);
        let mut b = builder("open_drain", self);
        let vcc = b.supply(vs, "VCC");
        let vee = b.negative(vn);
        b.input(input_centre_v(self, (vn, vs)), d.source_resistance_ohm, "IN");
        let (plus, minus) = match self.polarity {
            OpenDrainPolarity::Inverting { ra_ohm, rail_a, rb_ohm, rail_b, rf_ohm } => {
                if let Some(r) = ra_ohm {
                    let n = b.rail(rail_a, vs, vn, "VRA", "rail_a", SourceRole::Reference);
                    b.part("ra_ohm", &n, "p", r);
                }
                if let Some(r) = rb_ohm {
                    let n = b.rail(rail_b, vs, vn, "VRB", "rail_b", SourceRole::Reference);
                    b.part("rb_ohm", "p", &n, r);
                }
                b.part("rf_ohm", OUTPUT_NET, "p", rf_ohm);
                ("p".to_string(), INPUT_NET.to_string())
            }
            OpenDrainPolarity::NonInverting { r1_ohm, r2_ohm, reference } => {
                b.part("r1_ohm", INPUT_NET, "p", r1_ohm);
                b.part("r2_ohm", OUTPUT_NET, "p", r2_ohm);
                let n = reference_network(&mut b, &reference, d, "n");
                ("p".to_string(), n)
            }
        };
        let pu = b.rail(self.pullup_rail, vs, vn, "VPU", "pu", SourceRole::PullupRail);
        b.part("rpu_ohm", &pu, OUTPUT_NET, self.rpu_ohm);
        if let Some(rl) = self.rl_ohm {
            b.part("rl_ohm", OUTPUT_NET, GROUND, rl);
        }
        b.comparator(d, &plus, &minus, &vcc, &vee, true, self.sink_resistance_ohm);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
