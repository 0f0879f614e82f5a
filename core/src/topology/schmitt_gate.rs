// Over 600 lines: one model; about a third of the file is unit tests and the netlist.
//! A dedicated Schmitt-input logic gate, optionally behind a resistive input network
//! (shared/DOMAIN.md §1e).
//!
//! The gate's own thresholds VT+gate and VT−gate come from its datasheet (min/typ/max at the chosen
//! supply). Nominal analysis uses the typical values; the limits ride on the parameters so tolerance
//! analysis can use them. Datasheet limits of VT+ and VT− are correlated and usually overlap
//! (VT+ min below VT− max), so pairing their extremes independently builds devices with no
//! hysteresis or a negative one. Tolerance studies therefore vary VT+ within its limits and the
//! hysteresis ΔVT = VT+ − VT− within limits derived by [`SchmittInput::hysteresis_limits_v`];
//! VT− follows and stays within its own datasheet limits, so every corner and every Monte Carlo
//! draw is a real device with VT+ − VT− > 0.
//!
//! Input network, so that the band can be moved and widened: series Ra from the signal to the gate
//! input X, optional Rb from X to ground, optional Rc from X to VDD. KCL at X (the gate input draws no
//! DC current): (Vin − Vx)/Ra = Vx/Rb + (Vx − VDD)/Rc, so
//! **Vin = Ra·G·Vx − VDD·Ra/Rc**, G = 1/Ra + 1/Rb + 1/Rc, and the input-referred thresholds are
//! **VT± = a·VT±gate + b** with a = Ra·G ≥ 1 and b = −VDD·Ra/Rc ≤ 0 [D]. Without Ra the thresholds
//! are the gate's own.

use super::logic::{clamp_warning, logic_input_range};
use super::{Described, expect_len, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    Analysis, OutputStage,
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::error::{finite, non_negative, positive, DesignError};
use serde::{Deserialize, Serialize};

/// A datasheet quantity given as minimum, typical and maximum, volts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DatasheetRange {
    /// Datasheet minimum, volts.
    pub min_v: f64,
    /// Datasheet typical value, volts (used for nominal analysis and synthesis).
    pub typ_v: f64,
    /// Datasheet maximum, volts.
    pub max_v: f64,
}

impl DatasheetRange {
    fn validate(&self, field: &str) -> Result<(), DesignError> {
        finite(field, self.min_v)?;
        finite(field, self.typ_v)?;
        finite(field, self.max_v)?;
        if !(self.min_v <= self.typ_v && self.typ_v <= self.max_v) {
            return Err(DesignError::invalid(
                field,
                format!(
                    "datasheet values must satisfy min ≤ typ ≤ max (got {} / {} / {} V)",
                    self.min_v, self.typ_v, self.max_v
                ),
            ));
        }
        Ok(())
    }

    fn scaled(self, k: f64) -> Self {
        DatasheetRange { min_v: self.min_v * k, typ_v: self.typ_v * k, max_v: self.max_v * k }
    }
}

/// The Schmitt-input gate as entered from its datasheet, at one supply voltage.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SchmittInput {
    /// Supply VDD the datasheet row applies to, volts.
    pub supply_v: f64,
    /// Positive-going threshold VT+ of the gate input (min/typ/max), volts.
    pub vt_upper: DatasheetRange,
    /// Negative-going threshold VT− of the gate input (min/typ/max), volts.
    pub vt_lower: DatasheetRange,
    /// VDD − VOH at the real load, volts.
    pub output_high_drop_v: f64,
    /// VOL at the real load, volts above ground.
    pub output_low_v: f64,
    /// Whether the gate inverts (output low while the input is high).
    pub inverting: bool,
    /// Temperature coefficient of both gate thresholds, volts per kelvin (sign known, 0: none).
    /// Datasheet rows given over the full temperature range already contain the drift; enter a
    /// coefficient when the rows are 25 °C figures (read it from the datasheet's VT-versus-
    /// temperature curve). Both thresholds move together, so ΔVT stays as it is.
    pub threshold_tempco_v_per_k: f64,
}

impl Default for SchmittInput {
    /// Placeholder figures for a 5 V CMOS Schmitt inverter (not any particular part): replace them
    /// with the datasheet's row for the supply in use.
    fn default() -> Self {
        SchmittInput {
            supply_v: 5.0,
            vt_upper: DatasheetRange { min_v: 2.0, typ_v: 2.8, max_v: 3.5 },
            vt_lower: DatasheetRange { min_v: 1.0, typ_v: 1.7, max_v: 2.4 },
            output_high_drop_v: 0.1,
            output_low_v: 0.1,
            inverting: true,
            threshold_tempco_v_per_k: 0.0,
        }
    }
}

impl SchmittInput {
    /// VOH in volts.
    pub fn output_high_v(&self) -> f64 {
        self.supply_v - self.output_high_drop_v
    }

    /// The gate's typical hysteresis VT+ − VT−, volts.
    pub fn typ_hysteresis_v(&self) -> f64 {
        self.vt_upper.typ_v - self.vt_lower.typ_v
    }

    /// Limits [ΔVT min, ΔVT max] of the gate's hysteresis ΔVT = VT+ − VT−, volts, derived from the
    /// VT± datasheet rows (records carry no separate ΔVT row):
    /// **ΔVT min = max(ΔVT typ / 2, VT+min − VT−max)** and **ΔVT max = VT+max − VT−min**.
    /// The upper limit is the widest pairing the two rows allow. The lower limit is the guaranteed
    /// pairing when the rows do not overlap; when they overlap (the usual case) that pairing is not
    /// positive, and half the typical hysteresis is used instead — common practice when a
    /// datasheet gives no minimum hysteresis figure (enter the datasheet's own ΔVT min by narrowing
    /// the rows if it gives one). Both limits are positive whenever the record validates.
    pub fn hysteresis_limits_v(&self) -> (f64, f64) {
        let typ = self.typ_hysteresis_v();
        let lo = (0.5 * typ).max(self.vt_upper.min_v - self.vt_lower.max_v).min(typ);
        let hi = (self.vt_upper.max_v - self.vt_lower.min_v).max(typ);
        (lo, hi)
    }

    /// VT− of a device with the given VT+ and hysteresis ΔVT, volts: VT+ − ΔVT kept within the VT−
    /// datasheet limits and at least ΔVT min below VT+, so the device stays physical
    /// (VT+ − VT− ≥ ΔVT min > 0). The typical pair returns the typical VT− exactly.
    fn lower_for(&self, vt_upper_v: f64, hysteresis_v: f64) -> f64 {
        if vt_upper_v == self.vt_upper.typ_v && hysteresis_v == self.typ_hysteresis_v() {
            return self.vt_lower.typ_v;
        }
        let (dvt_min, _) = self.hysteresis_limits_v();
        let lower = (vt_upper_v - hysteresis_v).max(self.vt_lower.min_v).min(self.vt_lower.max_v);
        // ΔVT min ≤ VT+min − VT−min keeps this within the VT− limits; otherwise the hysteresis wins.
        lower.min(vt_upper_v - dvt_min)
    }

    /// Checks every field and the order 0 < VT−typ < VT+typ < VDD, VOL < VOH.
    pub fn validate(&self) -> Result<(), DesignError> {
        positive("gate.supply_v", self.supply_v)?;
        self.vt_upper.validate("gate.vt_upper")?;
        self.vt_lower.validate("gate.vt_lower")?;
        non_negative("gate.output_high_drop_v", self.output_high_drop_v)?;
        non_negative("gate.output_low_v", self.output_low_v)?;
        crate::limits::check(
            crate::limits::Quantity::VoltageDrift,
            "gate.threshold_tempco_v_per_k",
            self.threshold_tempco_v_per_k,
        )?;
        let (lo, hi) = (self.vt_lower.typ_v, self.vt_upper.typ_v);
        if !(0.0 < lo && lo < hi && hi < self.supply_v) {
            return Err(DesignError::inconsistent(format!(
                "the gate's typical thresholds must satisfy 0 < VT− < VT+ < VDD (got VT− {lo:.4} V, VT+ {hi:.4} V, VDD {:.4} V): enter the datasheet row for this supply",
                self.supply_v
            )));
        }
        if self.output_high_v() <= self.output_low_v {
            return Err(DesignError::inconsistent(format!(
                "output high level VOH ({:.4} V) must be above output low level VOL ({:.4} V): reduce the output drops",
                self.output_high_v(),
                self.output_low_v
            )));
        }
        Ok(())
    }
}

/// A Schmitt-input gate with an optional input network Ra (series), Rb (X to ground), Rc (X to VDD).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SchmittGate {
    /// Series resistor Ra from the signal to the gate input X, ohms; `None`: the signal drives the gate directly.
    #[serde(default)]
    pub ra_ohm: Option<f64>,
    /// Resistor Rb from X to ground, ohms; `None` when not fitted.
    #[serde(default)]
    pub rb_ohm: Option<f64>,
    /// Resistor Rc from X to VDD, ohms; `None` when not fitted.
    #[serde(default)]
    pub rc_ohm: Option<f64>,
    /// The gate.
    #[serde(default)]
    pub gate: SchmittInput,
}

impl SchmittGate {
    /// The gate alone (no input network): thresholds are the gate's own.
    pub fn bare(gate: SchmittInput) -> Self {
        SchmittGate { ra_ohm: None, rb_ohm: None, rc_ohm: None, gate }
    }

    /// Scale a = Ra·G and offset b = −VDD·Ra/Rc of the input network: VT = a·VTgate + b.
    pub fn scale_and_offset(&self) -> (f64, f64) {
        match self.ra_ohm {
            None => (1.0, 0.0),
            Some(ra) => {
                let mut a = 1.0;
                let mut b = 0.0;
                if let Some(rb) = self.rb_ohm {
                    a += ra / rb;
                }
                if let Some(rc) = self.rc_ohm {
                    a += ra / rc;
                    b = -self.gate.supply_v * ra / rc;
                }
                (a, b)
            }
        }
    }

    /// Node X for an input voltage (Millman's theorem over Ra, Rb, Rc).
    pub fn node_x_v(&self, vin_v: f64) -> f64 {
        match self.ra_ohm {
            None => vin_v,
            Some(ra) => {
                let mut g = 1.0 / ra;
                let mut s = vin_v / ra;
                if let Some(rb) = self.rb_ohm {
                    g += 1.0 / rb;
                }
                if let Some(rc) = self.rc_ohm {
                    g += 1.0 / rc;
                    s += self.gate.supply_v / rc;
                }
                s / g
            }
        }
    }

    /// Thevenin resistance at X, ohms (0 without a network).
    fn node_resistance_ohm(&self) -> f64 {
        match self.ra_ohm {
            None => 0.0,
            Some(ra) => 1.0 / (1.0 / ra + self.rb_ohm.map_or(0.0, |r| 1.0 / r) + self.rc_ohm.map_or(0.0, |r| 1.0 / r)),
        }
    }

    /// Designators R1.. in order Ra, Rb, Rc over the fitted resistors.
    fn designators(&self) -> [Option<String>; 3] {
        let mut n = 0;
        let mut next = |fitted: bool| {
            fitted.then(|| {
                n += 1;
                format!("R{n}")
            })
        };
        [next(self.ra_ohm.is_some()), next(self.rb_ohm.is_some()), next(self.rc_ohm.is_some())]
    }
}

impl Circuit for SchmittGate {
    fn validate(&self) -> Result<(), DesignError> {
        if let Some(r) = self.ra_ohm {
            super::resistance("ra_ohm", r)?;
        }
        if let Some(r) = self.rb_ohm {
            super::resistance("rb_ohm", r)?;
        }
        if let Some(r) = self.rc_ohm {
            super::resistance("rc_ohm", r)?;
        }
        if self.ra_ohm.is_none() && (self.rb_ohm.is_some() || self.rc_ohm.is_some()) {
            return Err(DesignError::inconsistent(
                "rb_ohm or rc_ohm is fitted without the series resistor ra_ohm: fit ra_ohm, or remove rb_ohm and rc_ohm to drive the gate directly",
            ));
        }
        self.gate.validate()
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let (a, b) = self.scale_and_offset();
        Ok(Thresholds { vt_upper_v: a * self.gate.vt_upper.typ_v + b, vt_lower_v: a * self.gate.vt_lower.typ_v + b })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.gate.output_high_v(), self.gate.output_low_v))
    }

    fn sense(&self) -> Sense {
        if self.gate.inverting { Sense::Inverting } else { Sense::NonInverting }
    }

    fn operating_point(&self, vin_v: f64, _state: OutputState) -> Result<OperatingPoint, DesignError> {
        // The output does not feed back into the network, so both states share one solution.
        let x = self.node_x_v(vin_v);
        let vdd = self.gate.supply_v;
        let [da, db, dc] = self.designators();
        let mut resistors = Vec::new();
        let mut input_current_a = 0.0;
        let mut network = 0.0;
        if let (Some(r), Some(d)) = (self.ra_ohm, da) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r, volts: vin_v - x });
            input_current_a = (vin_v - x) / r;
        }
        if let (Some(r), Some(d)) = (self.rb_ohm, db) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r, volts: x });
            network += (x / r).abs();
        }
        if let (Some(r), Some(d)) = (self.rc_ohm, dc) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r, volts: vdd - x });
            network += ((vdd - x) / r).abs();
        }
        Ok(OperatingPoint {
            resistors,
            input_current_a,
            network_current_a: network,
            device_inputs: vec![NodeVoltage { name: "gate input (node X)".into(), volts: x }],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let [da, db, dc] = self.designators();
        let mut v = Vec::new();
        if let (Some(r), Some(d)) = (self.ra_ohm, da) {
            v.push(Parameter::resistor("ra_ohm", &d, "series input resistor", r));
        }
        if let (Some(r), Some(d)) = (self.rb_ohm, db) {
            v.push(Parameter::resistor("rb_ohm", &d, "resistor from gate input to ground", r));
        }
        if let (Some(r), Some(d)) = (self.rc_ohm, dc) {
            v.push(Parameter::resistor("rc_ohm", &d, "resistor from gate input to VDD", r));
        }
        let g = &self.gate;
        v.push(Parameter::quantity("supply_v", "supply VDD", g.supply_v, ParameterKind::Supply));
        v.push(
            Parameter::quantity("gate_vt_upper_v", "gate VT+ (typical)", g.vt_upper.typ_v, ParameterKind::DeviceThreshold)
                .with_limits(g.vt_upper.min_v, g.vt_upper.max_v)
                .with_drift(super::Drift::Known(g.threshold_tempco_v_per_k)),
        );
        let (dvt_min, dvt_max) = g.hysteresis_limits_v();
        v.push(
            Parameter::quantity("gate_hysteresis_v", "gate hysteresis ΔVT = VT+ − VT− (typical)", g.typ_hysteresis_v(), ParameterKind::DeviceThreshold)
                .with_limits(dvt_min, dvt_max),
        );
        v.push(Parameter::quantity("output_high_drop_v", "VDD − VOH", g.output_high_drop_v, ParameterKind::OutputLevel));
        v.push(Parameter::quantity("output_low_v", "VOL", g.output_low_v, ParameterKind::OutputLevel));
        v
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        let fitted = self.ra_ohm.is_some() as usize + self.rb_ohm.is_some() as usize + self.rc_ohm.is_some() as usize;
        expect_len(values, fitted + 5)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        if c.ra_ohm.is_some() {
            c.ra_ohm = Some(next());
        }
        if c.rb_ohm.is_some() {
            c.rb_ohm = Some(next());
        }
        if c.rc_ohm.is_some() {
            c.rc_ohm = Some(next());
        }
        c.gate.supply_v = next();
        let vt_upper = next();
        let hysteresis = next();
        c.gate.vt_upper.typ_v = vt_upper;
        // A VT+ beyond its datasheet row is a 25 °C device moved by the threshold temperature
        // coefficient: VT− moves with it by the same amount.
        let row = &self.gate.vt_upper;
        let excess = if vt_upper > row.max_v {
            vt_upper - row.max_v
        } else if vt_upper < row.min_v {
            vt_upper - row.min_v
        } else {
            0.0
        };
        c.gate.vt_lower.typ_v = self.gate.lower_for(vt_upper - excess, hysteresis) + excess;
        c.gate.vt_lower.max_v = c.gate.vt_lower.max_v.max(c.gate.vt_lower.typ_v);
        // A Normal draw in the tail past a VT+ limit, or a ΔVT min that pushes VT− under its row,
        // is still a real device: widen the rows of the copy rather than reject the trial.
        c.gate.vt_upper.min_v = c.gate.vt_upper.min_v.min(vt_upper);
        c.gate.vt_upper.max_v = c.gate.vt_upper.max_v.max(vt_upper);
        c.gate.vt_lower.min_v = c.gate.vt_lower.min_v.min(c.gate.vt_lower.typ_v);
        c.gate.output_high_drop_v = next();
        c.gate.output_low_v = next();
        Ok(())
    }

    /// Inverts VT± = a·VTgate± + b with Ra as the anchor: a = ΔVin/ΔVgate, b = VT+ − a·VT+gate;
    /// Rc = −VDD·Ra/b (none when b = 0), 1/Rb = (a − 1)/Ra − 1/Rc (none when zero).
    /// Feasible iff a ≥ 1 and −VDD(a − 1) ≤ b ≤ 0.
    fn synthesise_with_anchor(&self, targets: Thresholds, ra_ohm: f64) -> Result<Self, DesignError> {
        self.gate.validate()?;
        finite("targets.vt_upper_v", targets.vt_upper_v)?;
        finite("targets.vt_lower_v", targets.vt_lower_v)?;
        positive("anchor_ohm", ra_ohm)?;
        let g = &self.gate;
        let vdd = g.supply_v;
        let width = targets.vt_upper_v - targets.vt_lower_v;
        if width <= 0.0 {
            return Err(DesignError::infeasible(
                format!("VT+ ({:.4} V) must be above VT− ({:.4} V)", targets.vt_upper_v, targets.vt_lower_v),
                "swap the targets",
            ));
        }
        let gate_width = g.typ_hysteresis_v();
        let a = width / gate_width;
        let tol = 1e-12;
        if a < 1.0 - tol {
            return Err(DesignError::infeasible(
                format!(
                    "the requested hysteresis ({width:.4} V) is narrower than the gate's own ({gate_width:.4} V typical): a resistive input network can only widen the band"
                ),
                "accept at least the gate's own hysteresis, pick a gate with less hysteresis, or use a comparator-based or CMOS-buffer topology whose width is set by resistors",
            ));
        }
        let a = a.max(1.0);
        let b = targets.vt_upper_v - a * g.vt_upper.typ_v;
        let b_tol = tol * (targets.vt_upper_v.abs() + vdd);
        if b > b_tol {
            return Err(DesignError::infeasible(
                format!(
                    "the band sits above what a divider to ground can reach: with this width (scale {a:.4}) VT+ can be at most {:.4} V, the targets need {:.4} V",
                    a * g.vt_upper.typ_v,
                    targets.vt_upper_v
                ),
                "lower the targets or widen the band; a band this high needs X pulled toward a negative rail, which this network does not offer",
            ));
        }
        let b_min = -vdd * (a - 1.0);
        if b < b_min - b_tol {
            return Err(DesignError::infeasible(
                format!(
                    "the band sits below what a pull-up to VDD can reach: with this width (scale {a:.4}) VT+ can be no lower than {:.4} V, the targets need {:.4} V",
                    a * g.vt_upper.typ_v + b_min,
                    targets.vt_upper_v
                ),
                "raise the targets or widen the band; a band this low needs X pulled toward a rail above VDD, which this network does not offer",
            ));
        }
        let b = b.clamp(b_min, 0.0);
        let mut out = self.clone();
        out.ra_ohm = Some(ra_ohm);
        let inv_rc = if b < -b_tol { -b / (vdd * ra_ohm) } else { 0.0 };
        out.rc_ohm = (inv_rc > 0.0).then(|| 1.0 / inv_rc);
        let inv_rb = (a - 1.0) / ra_ohm - inv_rc;
        out.rb_ohm = (inv_rb > tol * a / ra_ohm).then(|| 1.0 / inv_rb);
        Ok(out)
    }

    fn anchor_description(&self) -> &'static str {
        "series input resistor Ra (signal to the gate input)"
    }

    fn supply_v(&self) -> f64 {
        self.gate.supply_v
    }

    /// Moves the supply and scales the datasheet thresholds in proportion, as CMOS Schmitt inputs
    /// roughly track VDD (common practice); for exact figures enter the datasheet row for that supply.
    fn with_supply(&self, supply_v: f64) -> Self {
        let mut c = self.clone();
        let k = supply_v / self.gate.supply_v;
        if k.is_finite() {
            c.gate.vt_upper = self.gate.vt_upper.scaled(k);
            c.gate.vt_lower = self.gate.vt_lower.scaled(k);
        }
        c.gate.supply_v = supply_v;
        c
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let Ok(t) = self.thresholds() else { return w };
        let g = &self.gate;
        let (a, b) = self.scale_and_offset();
        if g.vt_upper.max_v > g.vt_upper.min_v || g.vt_lower.max_v > g.vt_lower.min_v {
            let min_width = a * (g.vt_upper.min_v - g.vt_lower.max_v);
            let (dvt_min, dvt_max) = g.hysteresis_limits_v();
            w.push(Warning::new(
                WarningCode::GateThresholdSpread,
                format!(
                    "over the datasheet limits VT+ lies between {:.3} V and {:.3} V and VT− between {:.3} V and {:.3} V (gate limits × {a:.3}{}); pairing the extremes independently leaves a guaranteed width of {min_width:.3} V{}; tolerance studies vary VT+ and the hysteresis ΔVT between {:.3} V and {:.3} V (gate ΔVT limits × {a:.3}) so every corner is a real device",
                    a * g.vt_upper.min_v + b,
                    a * g.vt_upper.max_v + b,
                    a * g.vt_lower.min_v + b,
                    a * g.vt_lower.max_v + b,
                    if b != 0.0 { format!(", then {b:+.3} V") } else { String::new() },
                    if min_width <= 0.0 { " (none guaranteed: check the datasheet's minimum hysteresis figure)" } else { "" },
                    a * dvt_min,
                    a * dvt_max
                ),
            ));
        }
        let vdd = g.supply_v;
        let vin_lo = settings.input_min_v.unwrap_or(t.vt_lower_v.min(0.0));
        let vin_hi = settings.input_max_v.unwrap_or(t.vt_upper_v.max(vdd));
        w.extend(clamp_warning(self.node_x_v(vin_lo), self.node_x_v(vin_hi), vin_lo, vin_hi, vdd, self.node_resistance_ohm()));
        w
    }

    fn device_input_range(&self) -> (f64, f64) {
        logic_input_range(self.gate.supply_v)
    }

    fn negative_rail_v(&self) -> f64 {
        0.0
    }

    fn output_stage(&self) -> OutputStage {
        OutputStage::LogicGate
    }

    fn troubleshooting(&self, _analysis: &Analysis, _checks: &CheckSettings) -> Vec<String> {
        vec![
            "The gate's own thresholds vary from part to part within the datasheet's limits: compare the readings with the bands, not with the typical values alone.".into(),
            "Measure the gate input pin at the moment of switching: it should equal the gate's VT+ or VT−; if it does, the difference comes from the input resistors.".into(),
        ]
    }
}

impl Described for SchmittGate {
    const TITLE: &'static str = "Schmitt-input logic gate";
    const NOTE: &'static str = "A gate with built-in hysteresis: enter VT+ and VT− from its datasheet. An optional input divider scales and shifts the band for higher-voltage signals.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/schmitt_gate.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    fn gate() -> SchmittInput {
        SchmittInput::default()
    }

    fn targets(up: f64, lo: f64) -> Targets {
        Targets { vt_upper_v: up, vt_lower_v: lo, impedance: ImpedanceChoice::AnchorOhm(100e3) }
    }

    #[test]
    fn bare_gate_has_its_own_thresholds() {
        let c = SchmittGate::bare(gate());
        let t = c.thresholds().unwrap();
        assert_eq!((t.vt_upper_v, t.vt_lower_v), (2.8, 1.7));
        assert_eq!(c.sense(), Sense::Inverting);
    }

    #[test]
    fn divider_to_ground_scales_by_the_division_ratio() {
        // Unloaded voltage divider (Horowitz & Hill, The Art of Electronics, ch. 1, from memory):
        // Vx = Vin·Rb/(Ra+Rb), so the input-referred threshold is VTgate·(Ra+Rb)/Rb.
        let c = SchmittGate { ra_ohm: Some(390e3), rb_ohm: Some(100e3), ..SchmittGate::bare(gate()) };
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.8 * 4.9).abs() < 1e-12);
        assert!((t.vt_lower_v - 1.7 * 4.9).abs() < 1e-12);
    }

    #[test]
    fn thresholds_put_node_x_at_the_gate_thresholds() {
        let c = SchmittGate { ra_ohm: Some(47e3), rb_ohm: Some(68e3), rc_ohm: Some(220e3), ..SchmittGate::bare(gate()) };
        let t = c.thresholds().unwrap();
        assert!((c.node_x_v(t.vt_upper_v) - 2.8).abs() < 1e-12);
        assert!((c.node_x_v(t.vt_lower_v) - 1.7).abs() < 1e-12);
        let (a, b) = c.scale_and_offset();
        assert!(a > 1.0 && b < 0.0);
    }

    #[test]
    fn synthesis_round_trip_and_network_shape() {
        let template = SchmittGate::bare(gate());
        // Wide band high up: 24 V-style input, needs Rb only or Rb + Rc.
        for (up, lo) in [(15.0, 9.0), (13.0, 7.6), (2.8, 1.7), (4.0, 1.5)] {
            let d = synthesise(&template, &targets(up, lo)).unwrap();
            let t = d.thresholds().unwrap();
            assert!((t.vt_upper_v - up).abs() <= 1e-9 * up, "{up} {t:?} {d:?}");
            assert!((t.vt_lower_v - lo).abs() <= 1e-9 * lo, "{lo} {t:?} {d:?}");
            assert_eq!(d.ra_ohm, Some(100e3));
        }
        // Exactly the gate's own band: Ra only.
        let d = synthesise(&template, &targets(2.8, 1.7)).unwrap();
        assert_eq!((d.rb_ohm, d.rc_ohm), (None, None));
        // a = 6/1.1, b = 15 − a·2.8 < 0 but above −VDD(a−1): Rb and Rc both fitted.
        let d = synthesise(&template, &targets(15.0, 9.0)).unwrap();
        assert!(d.rb_ohm.is_some() && d.rc_ohm.is_some(), "{d:?}");
    }

    #[test]
    fn infeasible_targets_say_why_and_what_would_work() {
        let template = SchmittGate::bare(gate());
        let narrow = synthesise(&template, &targets(2.5, 2.0)).unwrap_err();
        match narrow {
            DesignError::Infeasible { reason, suggestion } => {
                assert!(reason.contains("narrower"), "{reason}");
                assert!(suggestion.contains("comparator"), "{suggestion}");
            }
            other => panic!("{other:?}"),
        }
        // Width 1.1 (a = 1) but shifted up: needs b > 0.
        let high = synthesise(&template, &targets(3.3, 2.2)).unwrap_err();
        assert!(matches!(&high, DesignError::Infeasible { suggestion, .. } if suggestion.contains("negative rail")), "{high:?}");
        // a = 2, lowest reachable VT+ = 5 − 2(5 − 2.8) = 0.6 V; ask for 0.5 V.
        let low = synthesise(&template, &targets(0.5, -1.7)).unwrap_err();
        assert!(matches!(&low, DesignError::Infeasible { reason, .. } if reason.contains("pull-up")), "{low:?}");
        let reversed = synthesise(&template, &targets(1.0, 2.0)).unwrap_err();
        assert!(matches!(reversed, DesignError::Infeasible { .. }));
    }

    #[test]
    fn invalid_inputs_are_typed_errors() {
        let mut c = SchmittGate { ra_ohm: Some(-1.0), ..SchmittGate::bare(gate()) };
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.ra_ohm = None;
        c.rb_ohm = Some(1e3);
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
        c.rb_ohm = None;
        c.gate.vt_upper.typ_v = 4.0; // above max 3.5
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.gate = gate();
        c.gate.vt_lower = DatasheetRange { min_v: 2.0, typ_v: 3.0, max_v: 3.2 }; // VT− above VT+
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
        c.gate = gate();
        c.gate.supply_v = f64::NAN;
        assert!(c.validate().is_err());
    }

    #[test]
    fn parameters_round_trip_with_datasheet_limits() {
        let c = SchmittGate { ra_ohm: Some(47e3), rc_ohm: Some(220e3), ..SchmittGate::bare(gate()) };
        let p = c.parameters();
        assert_eq!(p.iter().filter_map(|p| p.designator.clone()).collect::<Vec<_>>(), ["R1", "R2"]);
        assert_eq!(p.iter().find(|p| p.id == "gate_vt_upper_v").unwrap().limits, Some([2.0, 3.5]));
        // ΔVT limits: max(1.1/2, 2.0 − 2.4) = 0.55 and 3.5 − 1.0 = 2.5 (rule of `hysteresis_limits_v`).
        let dvt = p.iter().find(|p| p.id == "gate_hysteresis_v").unwrap().limits.unwrap();
        assert!((dvt[0] - 0.55).abs() < 1e-12 && (dvt[1] - 2.5).abs() < 1e-12, "{dvt:?}");
        let values: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&values).unwrap(), c);
        assert!(c.with_parameters(&values[..3]).is_err());
    }

    #[test]
    fn overlapping_datasheet_limits_give_physical_worst_case_corners() {
        // 74HC14-class row at VDD = 4.5 V (datasheet-class values, from memory): VT+ 1.6…2.3…3.15 V,
        // VT− 0.9…1.4…2.1 V, so VT+ min (1.6) lies below VT− max (2.1): the rows overlap.
        let g = SchmittInput {
            supply_v: 4.5,
            vt_upper: DatasheetRange { min_v: 1.6, typ_v: 2.3, max_v: 3.15 },
            vt_lower: DatasheetRange { min_v: 0.9, typ_v: 1.4, max_v: 2.1 },
            ..SchmittInput::default()
        };
        // ΔVT limits by the rule: max(0.9/2, 1.6 − 2.1) = 0.45 V and 3.15 − 0.9 = 2.25 V.
        let (lo, hi) = g.hysteresis_limits_v();
        assert!((lo - 0.45).abs() < 1e-12 && (hi - 2.25).abs() < 1e-12, "{lo} {hi}");
        let c = SchmittGate { ra_ohm: Some(100e3), rb_ohm: Some(47e3), ..SchmittGate::bare(g) };
        // Every corner of VT+ and ΔVT (other parameters at nominal) is a valid, physical device.
        let p = c.parameters();
        let base: Vec<f64> = p.iter().map(|p| p.value).collect();
        let iu = p.iter().position(|p| p.id == "gate_vt_upper_v").unwrap();
        let ih = p.iter().position(|p| p.id == "gate_hysteresis_v").unwrap();
        for vt_up in [1.6, 2.3, 3.15] {
            for dvt in [lo, 0.9, hi] {
                let mut v = base.clone();
                v[iu] = vt_up;
                v[ih] = dvt;
                let d = c.with_parameters(&v).unwrap();
                d.validate().unwrap_or_else(|e| panic!("VT+ {vt_up} ΔVT {dvt}: {e}"));
                let gd = d.gate;
                assert!(gd.vt_upper.typ_v - gd.vt_lower.typ_v >= lo - 1e-12, "{gd:?}");
                assert!((0.9..=2.1).contains(&gd.vt_lower.typ_v), "VT− leaves its row: {gd:?}");
            }
        }
        // The whole study runs, with the divider and for the bare gate; the bare gate's worst-case
        // band is exactly the datasheet rows, with the hysteresis at least ΔVT min.
        let rep = crate::tolerance::tolerance_report(&c, &Default::default()).unwrap();
        assert!(rep.worst_case.hysteresis.min.value_v > 0.0, "{:?}", rep.worst_case.hysteresis);
        assert_eq!(rep.monte_carlo.rejected_trials, 0);
        let rep = crate::tolerance::tolerance_report(&SchmittGate::bare(g), &Default::default()).unwrap();
        let wc = &rep.worst_case;
        assert!((wc.hysteresis.min.value_v - lo).abs() < 1e-9 && wc.hysteresis.max.value_v <= hi + 1e-9, "{:?}", wc.hysteresis);
        assert!((wc.vt_upper.min.value_v - 1.6).abs() < 1e-9 && (wc.vt_upper.max.value_v - 3.15).abs() < 1e-9, "{:?}", wc.vt_upper);
        assert!(wc.vt_lower.min.value_v >= 0.9 - 1e-9 && wc.vt_lower.max.value_v <= 2.1 + 1e-9, "{:?}", wc.vt_lower);
        assert_eq!(rep.monte_carlo.rejected_trials, 0);
    }

    #[test]
    fn clamp_check_gives_numbers() {
        // 24 V signal into a 5 V gate through Ra = 100k, Rb = 22k: X reaches 24·22/122 = 4.33 V — fine.
        let ok = SchmittGate { ra_ohm: Some(100e3), rb_ohm: Some(22e3), ..SchmittGate::bare(gate()) };
        let s = CheckSettings { input_max_v: Some(24.0), ..CheckSettings::default() };
        assert!(!ok.checks(&s).iter().any(|w| w.code == WarningCode::CommonModeRange));
        // Rb = 33k: X would reach 24·33/133 = 5.955 V; clamp current = 0.955 V / (100k‖33k) = 38.3 µA.
        let hot = SchmittGate { rb_ohm: Some(33e3), ..ok };
        let w = hot.checks(&s);
        let m = w.iter().find(|w| w.code == WarningCode::CommonModeRange).expect("clamp warning");
        assert!(m.message.contains("5.955") && m.message.contains("0.038 mA"), "{}", m.message);
        let bare = SchmittGate::bare(gate()).checks(&s);
        assert!(bare.iter().any(|w| w.message.contains("signal source")));
        assert!(analyse(&hot, &s).is_ok());
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for SchmittGate {
    /// Optional Ra from the input to node `x`, Rb from `x` to 0 V, Rc from `x` to VDD; the
    /// Schmitt-input gate U1 on `x` (on the input directly when Ra is not fitted).
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{ActiveDevice, GateThreshold, GROUND, INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        let g = &self.gate;
        let mut b = builder("schmitt_gate", self);
        let vdd = b.supply(g.supply_v, "VDD");
        b.input(input_centre_v(self, (0.0, g.supply_v)), 0.0, "IN");
        let x = match self.ra_ohm {
            Some(ra) => {
                b.part("ra_ohm", INPUT_NET, "x", ra);
                "x"
            }
            None => INPUT_NET,
        };
        if let Some(rb) = self.rb_ohm {
            b.part("rb_ohm", x, GROUND, rb);
        }
        if let Some(rc) = self.rc_ohm {
            b.part("rc_ohm", x, &vdd, rc);
        }
        b.device(ActiveDevice::LogicGate {
            designator: "U1".into(),
            input: x.into(),
            output: OUTPUT_NET.into(),
            supply: vdd,
            ground: GROUND.into(),
            threshold: GateThreshold::Schmitt { upper_v: g.vt_upper.typ_v, lower_v: g.vt_lower.typ_v },
            inverting: g.inverting,
            output_high_v: g.output_high_v(),
            output_low_v: g.output_low_v,
        });
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
