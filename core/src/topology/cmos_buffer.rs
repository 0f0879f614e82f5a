// Over 600 lines: one model; about a third of the file is unit tests and the netlist.
//! Non-inverting Schmitt trigger built from a CMOS buffer (or two inverters in series) and resistors
//! (shared/DOMAIN.md §1d).
//!
//! The signal drives node X through R1; R2 feeds the output back to X; an optional R3 from X to a bias
//! rail (ground or VDD) moves the centre of the band. X drives the gate input, which draws no DC
//! current and switches when V(X) = VM. KCL at X at the switching point,
//! (Vin − VM)/R1 = (VM − VO)/R2 + (VM − Vb)/R3, gives
//! **VT+ = VM + R1[(VM − VOL)/R2 + (VM − Vb)/R3]** (output low before the switch) and
//! **VT− = VM + R1[(VM − VOH)/R2 + (VM − Vb)/R3]**, so ΔV = (R1/R2)(VOH − VOL).
//! This is the non-inverting bistable circuit (Sedra & Smith, *Microelectronic Circuits*, from memory)
//! with its reference at the gate's switching point; the R3 term is DOMAIN §1d [D].
//!
//! Only VIL < VM < VIH is guaranteed by logic datasheets, so both thresholds move together by
//! (1 + R1/R2 + R1/R3)·ΔVM while the width stays fixed (DOMAIN §1d; the check says so with numbers).

use super::{Described, expect_len, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    Analysis, OutputStage,
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::error::{finite, non_negative, positive, DesignError};
use super::logic::{clamp_warning, logic_input_range};
use serde::{Deserialize, Serialize};

/// A logic-gate voltage level, entered either as a fraction of the supply or in volts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GateLevel {
    /// A fraction of VDD (0.5 = VDD/2); follows the supply when the design is evaluated at another VDD.
    Fraction(f64),
    /// Absolute volts; stays put when the supply changes.
    Volts(f64),
}

impl GateLevel {
    /// The level in volts for a gate supplied at `supply_v`.
    pub fn volts(&self, supply_v: f64) -> f64 {
        match *self {
            GateLevel::Fraction(f) => f * supply_v,
            GateLevel::Volts(v) => v,
        }
    }

    /// The same kind of level set to `volts` (a fraction stays a fraction of `supply_v`).
    /// An unchanged value keeps its exact representation so parameter round trips are exact.
    pub fn with_volts(self, volts: f64, supply_v: f64) -> Self {
        match self {
            GateLevel::Fraction(f) if f * supply_v == volts => self,
            GateLevel::Fraction(_) => GateLevel::Fraction(volts / supply_v),
            GateLevel::Volts(_) => GateLevel::Volts(volts),
        }
    }

    fn validate(&self, field: &str) -> Result<(), DesignError> {
        match *self {
            GateLevel::Fraction(f) => {
                if !(f.is_finite() && (0.0..=1.0).contains(&f)) {
                    return Err(DesignError::invalid(field, format!("a fraction of the supply must lie between 0 and 1 (got {f})")));
                }
            }
            GateLevel::Volts(v) => {
                finite(field, v)?;
            }
        }
        Ok(())
    }
}

/// The rail that the optional centre-shifting resistor R3 returns to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BiasRail {
    /// 0 V: pulls the band upward (R3 takes current out of X).
    #[default]
    Ground,
    /// VDD: pulls the band downward.
    Supply,
}

/// The CMOS buffer (or inverter pair) used as the gain element: supply, switching point and output levels.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct CmosGate {
    /// Supply VDD, volts.
    pub supply_v: f64,
    /// Switching point VM of the gate input (nominal), default VDD/2.
    pub switching_point: GateLevel,
    /// VIL: the highest input the datasheet guarantees to read as low; VM is only known to lie above it.
    pub input_low_max: GateLevel,
    /// VIH: the lowest input the datasheet guarantees to read as high; VM is only known to lie below it.
    pub input_high_min: GateLevel,
    /// VDD − VOH at the real load, volts (0: the output reaches VDD).
    pub output_high_drop_v: f64,
    /// VOL at the real load, volts above ground.
    pub output_low_v: f64,
}

impl Default for CmosGate {
    /// 5 V supply, VM = VDD/2, VIL = 0.3·VDD, VIH = 0.7·VDD (common CMOS input levels, DOMAIN §1d),
    /// rail-to-rail outputs.
    fn default() -> Self {
        CmosGate {
            supply_v: 5.0,
            switching_point: GateLevel::Fraction(0.5),
            input_low_max: GateLevel::Fraction(0.3),
            input_high_min: GateLevel::Fraction(0.7),
            output_high_drop_v: 0.0,
            output_low_v: 0.0,
        }
    }
}

impl CmosGate {
    /// VM in volts.
    pub fn switching_point_v(&self) -> f64 {
        self.switching_point.volts(self.supply_v)
    }

    /// VIL in volts.
    pub fn input_low_max_v(&self) -> f64 {
        self.input_low_max.volts(self.supply_v)
    }

    /// VIH in volts.
    pub fn input_high_min_v(&self) -> f64 {
        self.input_high_min.volts(self.supply_v)
    }

    /// VOH in volts.
    pub fn output_high_v(&self) -> f64 {
        self.supply_v - self.output_high_drop_v
    }

    /// Checks the supply, the levels and their order (0 ≤ VIL ≤ VM ≤ VIH ≤ VDD, VOL < VOH).
    pub fn validate(&self) -> Result<(), DesignError> {
        positive("gate.supply_v", self.supply_v)?;
        self.switching_point.validate("gate.switching_point")?;
        self.input_low_max.validate("gate.input_low_max")?;
        self.input_high_min.validate("gate.input_high_min")?;
        non_negative("gate.output_high_drop_v", self.output_high_drop_v)?;
        non_negative("gate.output_low_v", self.output_low_v)?;
        let (vil, vm, vih, vdd) = (self.input_low_max_v(), self.switching_point_v(), self.input_high_min_v(), self.supply_v);
        if !(vm > 0.0 && vm < vdd) {
            return Err(DesignError::invalid(
                "gate.switching_point",
                format!("the switching point ({vm:.4} V) must lie between 0 V and VDD ({vdd:.4} V)"),
            ));
        }
        // A tolerance corner puts VM exactly on VIL or VIH; stored as a fraction of VDD it can land
        // a rounding step outside, so the order allows a few parts in 10¹² of VDD.
        let eps = 1e-12 * vdd.abs();
        if !(0.0 <= vil && vil <= vm + eps && vm <= vih + eps && vih <= vdd) {
            return Err(DesignError::inconsistent(format!(
                "the gate levels must satisfy 0 ≤ VIL ≤ VM ≤ VIH ≤ VDD (got VIL {vil:.4} V, VM {vm:.4} V, VIH {vih:.4} V, VDD {vdd:.4} V): correct the datasheet levels"
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

/// A non-inverting Schmitt trigger from a CMOS buffer: Vin–R1–X, X–R2–output, optional R3 from X to a rail.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CmosBufferSchmitt {
    /// Input resistor R1 from the signal to node X, ohms.
    pub r1_ohm: f64,
    /// Feedback resistor R2 from the output to node X, ohms.
    pub r2_ohm: f64,
    /// Optional centre-shifting resistor R3 from node X to `r3_rail`, ohms; `None` when not fitted.
    #[serde(default)]
    pub r3_ohm: Option<f64>,
    /// The rail R3 returns to.
    #[serde(default)]
    pub r3_rail: BiasRail,
    /// The buffer.
    #[serde(default)]
    pub gate: CmosGate,
}

impl CmosBufferSchmitt {
    /// The two-resistor form (no R3) around a gate.
    pub fn new(r1_ohm: f64, r2_ohm: f64, gate: CmosGate) -> Self {
        CmosBufferSchmitt { r1_ohm, r2_ohm, r3_ohm: None, r3_rail: BiasRail::Ground, gate }
    }

    /// Voltage of the rail R3 returns to.
    fn bias_v(&self) -> f64 {
        match self.r3_rail {
            BiasRail::Ground => 0.0,
            BiasRail::Supply => self.gate.supply_v,
        }
    }

    /// Conductance sum at X, siemens.
    fn g_x(&self) -> f64 {
        1.0 / self.r1_ohm + 1.0 / self.r2_ohm + self.r3_ohm.map_or(0.0, |r| 1.0 / r)
    }

    /// Node X for an input and an output voltage (Millman's theorem: weighted mean of the sources).
    pub fn node_x_v(&self, vin_v: f64, vout_v: f64) -> f64 {
        let mut s = vin_v / self.r1_ohm + vout_v / self.r2_ohm;
        if let Some(r3) = self.r3_ohm {
            s += self.bias_v() / r3;
        }
        s / self.g_x()
    }

    /// The input voltage at which X reaches VM with the output at `vout_v` (DOMAIN §1d).
    fn threshold_for(&self, vout_v: f64) -> f64 {
        let vm = self.gate.switching_point_v();
        self.threshold_at(vm, vout_v)
    }

    fn threshold_at(&self, vm: f64, vout_v: f64) -> f64 {
        let mut i = (vm - vout_v) / self.r2_ohm;
        if let Some(r3) = self.r3_ohm {
            i += (vm - self.bias_v()) / r3;
        }
        vm + self.r1_ohm * i
    }

    /// ∂VT/∂VM = 1 + R1/R2 + R1/R3: how far both thresholds move per volt of switching-point error.
    pub fn switching_point_gain(&self) -> f64 {
        1.0 + self.r1_ohm / self.r2_ohm + self.r3_ohm.map_or(0.0, |r3| self.r1_ohm / r3)
    }

    fn designators(&self) -> (String, String, Option<String>) {
        ("R1".into(), "R2".into(), self.r3_ohm.map(|_| "R3".into()))
    }
}

impl Circuit for CmosBufferSchmitt {
    fn validate(&self) -> Result<(), DesignError> {
        super::resistance("r1_ohm", self.r1_ohm)?;
        super::resistance("r2_ohm", self.r2_ohm)?;
        if let Some(r) = self.r3_ohm {
            super::resistance("r3_ohm", r)?;
        }
        self.gate.validate()
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        Ok(Thresholds {
            vt_upper_v: self.threshold_for(self.gate.output_low_v),
            vt_lower_v: self.threshold_for(self.gate.output_high_v()),
        })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.gate.output_high_v(), self.gate.output_low_v))
    }

    fn sense(&self) -> Sense {
        Sense::NonInverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let vo = match state {
            OutputState::High => self.gate.output_high_v(),
            OutputState::Low => self.gate.output_low_v,
        };
        let x = self.node_x_v(vin_v, vo);
        let (d1, d2, d3) = self.designators();
        let mut resistors = vec![
            ResistorDrop { designator: d1, resistance_ohm: self.r1_ohm, volts: vin_v - x },
            ResistorDrop { designator: d2, resistance_ohm: self.r2_ohm, volts: vo - x },
        ];
        let mut network = ((vo - x) / self.r2_ohm).abs();
        if let (Some(r3), Some(d)) = (self.r3_ohm, d3) {
            resistors.push(ResistorDrop { designator: d, resistance_ohm: r3, volts: x - self.bias_v() });
            network += ((x - self.bias_v()) / r3).abs();
        }
        Ok(OperatingPoint {
            resistors,
            input_current_a: (vin_v - x) / self.r1_ohm,
            network_current_a: network,
            device_inputs: vec![NodeVoltage { name: "gate input (node X)".into(), volts: x }],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let (d1, d2, d3) = self.designators();
        let g = &self.gate;
        let mut v = vec![
            Parameter::resistor("r1_ohm", &d1, "input resistor", self.r1_ohm),
            Parameter::resistor("r2_ohm", &d2, "feedback resistor", self.r2_ohm),
        ];
        if let (Some(r3), Some(d)) = (self.r3_ohm, d3) {
            v.push(Parameter::resistor("r3_ohm", &d, "centre-shifting resistor", r3));
        }
        v.push(Parameter::quantity("supply_v", "supply VDD", g.supply_v, ParameterKind::Supply));
        v.push(
            Parameter::quantity("switching_point_v", "gate switching point VM", g.switching_point_v(), ParameterKind::DeviceThreshold)
                .with_limits(g.input_low_max_v(), g.input_high_min_v()),
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
        expect_len(values, 2 + self.r3_ohm.is_some() as usize + 4)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        c.r1_ohm = next();
        c.r2_ohm = next();
        if c.r3_ohm.is_some() {
            c.r3_ohm = Some(next());
        }
        c.gate.supply_v = next();
        // The datasheet guarantees VM within [VIL, VIH] at the supply in use: when the supply moves
        // those levels (given as fractions of VDD), a VM drawn against the nominal levels is kept inside.
        let (vil, vih) = (c.gate.input_low_max_v(), c.gate.input_high_min_v());
        let vm = if vil <= vih { next().max(vil).min(vih) } else { next() };
        c.gate.switching_point = self.gate.switching_point.with_volts(vm, c.gate.supply_v);
        c.gate.output_high_drop_v = next();
        c.gate.output_low_v = next();
        Ok(())
    }

    /// The gate's output resistance and the load as a Thevenin source in series with R2 (module
    /// [`crate::output_dynamics`]).
    fn with_output_load(&self, load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        let (h, l, rs) = load.thevenin(self.gate.output_high_v(), self.gate.output_low_v);
        let mut c = self.clone();
        c.r2_ohm += rs;
        c.gate.output_high_drop_v = (c.gate.supply_v - h).max(0.0);
        c.gate.output_low_v = l;
        Some(c)
    }

    /// DOMAIN §1d synthesis with R2 as the anchor: R1 = R2·ΔV/(VOH − VOL);
    /// s = VT+ − VM − (R1/R2)(VM − VOL); s = 0: no R3; s > 0: R3 = R1·VM/s to 0 V;
    /// s < 0: R3 = R1(VM − VDD)/s to VDD.
    fn synthesise_with_anchor(&self, targets: Thresholds, r2_ohm: f64) -> Result<Self, DesignError> {
        self.gate.validate()?;
        finite("targets.vt_upper_v", targets.vt_upper_v)?;
        finite("targets.vt_lower_v", targets.vt_lower_v)?;
        positive("anchor_ohm", r2_ohm)?;
        let width = targets.vt_upper_v - targets.vt_lower_v;
        if width <= 0.0 {
            return Err(DesignError::infeasible(
                format!("VT+ ({:.4} V) must be above VT− ({:.4} V)", targets.vt_upper_v, targets.vt_lower_v),
                "swap the targets; for a single threshold use the gate without feedback",
            ));
        }
        let voh = self.gate.output_high_v();
        let vol = self.gate.output_low_v;
        let vm = self.gate.switching_point_v();
        let vdd = self.gate.supply_v;
        let m = width / (voh - vol);
        let r1 = r2_ohm * m;
        let s = targets.vt_upper_v - vm - m * (vm - vol);
        let mut out = self.clone();
        out.r1_ohm = r1;
        out.r2_ohm = r2_ohm;
        let tol = 1e-12 * (targets.vt_upper_v.abs() + vm.abs()).max(1.0);
        if s.abs() <= tol {
            out.r3_ohm = None;
        } else if s > 0.0 {
            out.r3_ohm = Some(r1 * vm / s);
            out.r3_rail = BiasRail::Ground;
        } else {
            out.r3_ohm = Some(r1 * (vm - vdd) / s);
            out.r3_rail = BiasRail::Supply;
        }
        if !(out.r1_ohm.is_finite() && out.r3_ohm.is_none_or(|r| r.is_finite() && r > 0.0)) {
            return Err(DesignError::infeasible(
                "the targets need resistor values that are not finite",
                "move the targets closer to the gate's switching point or choose another anchor value",
            ));
        }
        Ok(out)
    }

    fn anchor_description(&self) -> &'static str {
        "feedback resistor R2 (output to node X)"
    }

    fn supply_v(&self) -> f64 {
        self.gate.supply_v
    }

    fn with_supply(&self, supply_v: f64) -> Self {
        let mut c = self.clone();
        c.gate.supply_v = supply_v;
        c
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let Ok(t) = self.thresholds() else { return w };
        let g = &self.gate;
        let (vil, vm, vih, vdd) = (g.input_low_max_v(), g.switching_point_v(), g.input_high_min_v(), g.supply_v);
        let voh = g.output_high_v();
        let vol = g.output_low_v;
        if vih > vil {
            // DOMAIN §1d: VT± move by (1 + R1/R2 + R1/R3)·ΔVM while the width stays fixed.
            let gain = self.switching_point_gain();
            w.push(Warning::new(
                WarningCode::GateThresholdSpread,
                format!(
                    "the gate only guarantees its switching point between VIL {vil:.3} V and VIH {vih:.3} V: both thresholds move together by {gain:.3}·ΔVM (1 + R1/R2{}), so VT+ may lie anywhere from {:.3} V to {:.3} V and VT− from {:.3} V to {:.3} V while the width stays {:.3} V; use a dedicated Schmitt-input gate or a comparator where the band must sit accurately",
                    if self.r3_ohm.is_some() { " + R1/R3" } else { "" },
                    self.threshold_at(vil, vol),
                    self.threshold_at(vih, vol),
                    self.threshold_at(vil, voh),
                    self.threshold_at(vih, voh),
                    t.hysteresis_v()
                ),
            ));
        }
        if t.vt_upper_v > vdd || t.vt_lower_v < 0.0 {
            let (name, v, rail, word) = if t.vt_upper_v > vdd { ("VT+", t.vt_upper_v, vdd, "above VDD") } else { ("VT−", t.vt_lower_v, 0.0, "below ground") };
            w.push(Warning::new(
                WarningCode::ThresholdOutsideRange,
                format!(
                    "{name} ({v:.3} V) lies {word} ({rail:.3} V): the input must swing beyond the rail to switch, and input current {:.3} mA flows through R1 at that point; once node X passes the rail the gate's input clamp conducts (current limited by R1); move the band inside the rails or check the clamp rating",
                    ((v - vm) / self.r1_ohm).abs() * 1e3
                ),
            ));
        }
        let vin_lo = settings.input_min_v.unwrap_or(t.vt_lower_v.min(0.0));
        let vin_hi = settings.input_max_v.unwrap_or(t.vt_upper_v.max(vdd));
        let rth = 1.0 / self.g_x();
        w.extend(clamp_warning(self.node_x_v(vin_lo, vol), self.node_x_v(vin_hi, voh), vin_lo, vin_hi, vdd, rth));
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
            "Both readings off together while their difference is right: the gate's switching point VM differs from the assumed value (datasheets only guarantee it between VIL and VIH); measure node X at the moment of switching.".into(),
            "The buffer's supply current rises while the input is slow near VM (both output transistors conduct); a brief warm part during the ramp is expected.".into(),
        ]
    }
}

impl Described for CmosBufferSchmitt {
    const TITLE: &'static str = "Schmitt from a CMOS buffer or two inverters";
    const NOTE: &'static str = "When a spare buffer or two inverters are on the board: two resistors around the gate's switching point give hysteresis. Cheap, but the band moves with the gate's threshold spread.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/cmos_buffer.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    fn gate5() -> CmosGate {
        CmosGate::default()
    }

    #[test]
    fn symmetric_closed_form() {
        // DOMAIN §1d special case: no R3, rail outputs, VM = VDD/2 → VT± = (VDD/2)(1 ± R1/R2).
        let c = CmosBufferSchmitt::new(10e3, 47e3, gate5());
        let t = c.thresholds().unwrap();
        assert!((t.vt_upper_v - 2.5 * (1.0 + 10.0 / 47.0)).abs() < 1e-12);
        assert!((t.vt_lower_v - 2.5 * (1.0 - 10.0 / 47.0)).abs() < 1e-12);
        assert!((t.hysteresis_v() - 5.0 * 10.0 / 47.0).abs() < 1e-12);
    }

    #[test]
    fn r3_to_ground_raises_the_band_without_changing_width() {
        let base = CmosBufferSchmitt::new(10e3, 47e3, gate5());
        let shifted = CmosBufferSchmitt { r3_ohm: Some(33e3), ..base.clone() };
        let (a, b) = (base.thresholds().unwrap(), shifted.thresholds().unwrap());
        // R3 to 0 V adds R1·VM/R3 to both thresholds (DOMAIN §1d).
        let shift = 10e3 * 2.5 / 33e3;
        assert!((b.vt_upper_v - a.vt_upper_v - shift).abs() < 1e-12);
        assert!((b.vt_lower_v - a.vt_lower_v - shift).abs() < 1e-12);
        let to_vdd = CmosBufferSchmitt { r3_rail: BiasRail::Supply, ..shifted };
        let c = to_vdd.thresholds().unwrap();
        assert!((c.vt_upper_v - a.vt_upper_v + shift).abs() < 1e-12);
    }

    #[test]
    fn thresholds_put_node_x_at_vm() {
        let mut g = gate5();
        g.output_high_drop_v = 0.1;
        g.output_low_v = 0.05;
        g.switching_point = GateLevel::Volts(2.2);
        let c = CmosBufferSchmitt { r3_ohm: Some(100e3), r3_rail: BiasRail::Supply, ..CmosBufferSchmitt::new(12e3, 56e3, g) };
        let t = c.thresholds().unwrap();
        assert!((c.node_x_v(t.vt_upper_v, 0.05) - 2.2).abs() < 1e-12);
        assert!((c.node_x_v(t.vt_lower_v, 4.9) - 2.2).abs() < 1e-12);
    }

    #[test]
    fn synthesis_round_trip_all_three_r3_cases() {
        let template = CmosBufferSchmitt::new(1.0, 1.0, CmosGate { output_low_v: 0.1, output_high_drop_v: 0.2, ..gate5() });
        for (up, lo, rail) in [(3.4, 1.9, BiasRail::Ground), (2.2, 0.8, BiasRail::Supply), (6.0, 4.0, BiasRail::Ground)] {
            let targets = Targets { vt_upper_v: up, vt_lower_v: lo, impedance: ImpedanceChoice::AnchorOhm(47e3) };
            let d = synthesise(&template, &targets).unwrap();
            let t = d.thresholds().unwrap();
            assert!((t.vt_upper_v - up).abs() < 1e-9 * up, "{t:?}");
            assert!((t.vt_lower_v - lo).abs() < 1e-9 * lo, "{t:?}");
            assert_eq!(d.r2_ohm, 47e3);
            assert_eq!(d.r3_ohm.map(|_| d.r3_rail), Some(rail));
        }
        // Targets with s = 0 exactly: VT+ = VM + m(VM − VOL) with m = ΔV/(VOH − VOL).
        let m = 1.0 / 4.7;
        let up = 2.5 + m * (2.5 - 0.1);
        let targets = Targets { vt_upper_v: up, vt_lower_v: up - m * 4.7, impedance: ImpedanceChoice::AnchorOhm(47e3) };
        let d = synthesise(&template, &targets).unwrap();
        assert_eq!(d.r3_ohm, None);
    }

    #[test]
    fn infeasible_and_invalid_targets_are_typed() {
        let template = CmosBufferSchmitt::new(1.0, 1.0, gate5());
        let e = template.synthesise_with_anchor(Thresholds { vt_upper_v: 2.0, vt_lower_v: 3.0 }, 1e4).unwrap_err();
        match e {
            DesignError::Infeasible { reason, suggestion } => {
                assert!(reason.contains("above"));
                assert!(!suggestion.is_empty());
            }
            other => panic!("{other:?}"),
        }
        let e = template.synthesise_with_anchor(Thresholds { vt_upper_v: f64::NAN, vt_lower_v: 1.0 }, 1e4).unwrap_err();
        assert!(matches!(e, DesignError::InvalidValue { .. }));
    }

    #[test]
    fn invalid_parts_and_levels_are_typed_errors() {
        let mut c = CmosBufferSchmitt::new(0.0, 1e3, gate5());
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.r1_ohm = 1e3;
        c.r3_ohm = Some(f64::INFINITY);
        assert!(c.validate().is_err());
        c.r3_ohm = None;
        c.gate.switching_point = GateLevel::Fraction(0.8); // above VIH = 0.7·VDD
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
        c.gate.switching_point = GateLevel::Fraction(1.5);
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.gate = CmosGate { output_high_drop_v: 4.0, output_low_v: 1.5, ..gate5() };
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
    }

    #[test]
    fn parameters_round_trip_and_carry_the_guaranteed_band() {
        let c = CmosBufferSchmitt { r3_ohm: Some(82e3), ..CmosBufferSchmitt::new(10e3, 47e3, CmosGate { supply_v: 3.3, ..gate5() }) };
        let p = c.parameters();
        let vm = p.iter().find(|p| p.id == "switching_point_v").unwrap();
        assert_eq!(vm.limits, Some([0.3 * 3.3, 0.7 * 3.3]));
        assert_eq!(p.iter().filter_map(|p| p.designator.clone()).collect::<Vec<_>>(), ["R1", "R2", "R3"]);
        let values: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&values).unwrap(), c);
        assert!(c.with_parameters(&values[1..]).is_err());
        // Moving VM moves both thresholds by (1 + R1/R2 + R1/R3)·ΔVM.
        let mut moved = values.clone();
        moved[4] += 0.1;
        let (a, b) = (c.thresholds().unwrap(), c.with_parameters(&moved).unwrap().thresholds().unwrap());
        let gain = 1.0 + 10.0 / 47.0 + 10.0 / 82.0;
        assert!((b.vt_upper_v - a.vt_upper_v - 0.1 * gain).abs() < 1e-9);
        assert!((b.hysteresis_v() - a.hysteresis_v()).abs() < 1e-12);
    }

    #[test]
    fn checks_report_spread_and_clamping() {
        let c = CmosBufferSchmitt::new(10e3, 15e3, gate5()); // VT± = 2.5(1 ± 0.667): 4.17 / 0.83 V
        let w = c.checks(&CheckSettings::default());
        assert!(w.iter().any(|w| w.code == WarningCode::GateThresholdSpread && w.message.contains("1.667")));
        assert!(!w.iter().any(|w| w.code == WarningCode::ThresholdOutsideRange));
        let wide = CmosBufferSchmitt::new(10e3, 8e3, gate5()); // VT+ = 2.5(1 + 1.25) = 5.625 V
        let w = wide.checks(&CheckSettings::default());
        assert!(w.iter().any(|w| w.code == WarningCode::ThresholdOutsideRange), "{w:?}");
        // Vin = 5.625 V with the output high puts X at (5.625/10k + 5/8k)/(1/10k + 1/8k) > 5 V.
        assert!(w.iter().any(|w| w.code == WarningCode::CommonModeRange && w.message.contains("clamp")), "{w:?}");
        let a = analyse(&wide, &CheckSettings::default()).unwrap();
        assert_eq!(a.sense, Sense::NonInverting);
    }

    #[test]
    fn supply_change_moves_fraction_levels_only() {
        let c = CmosBufferSchmitt::new(10e3, 47e3, gate5());
        let t = c.with_supply(3.3).thresholds().unwrap();
        assert!((t.vt_upper_v - 1.65 * (1.0 + 10.0 / 47.0)).abs() < 1e-12);
        let fixed = CmosBufferSchmitt::new(10e3, 47e3, CmosGate { switching_point: GateLevel::Volts(2.5), ..gate5() });
        assert!((fixed.with_supply(4.5).gate.switching_point_v() - 2.5).abs() < 1e-15);
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for CmosBufferSchmitt {
    /// R1 from the input to node `x` (the buffer's input), R2 from the output to `x`, optional R3
    /// from `x` to its rail; the buffer U1 switches at VM.
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{ActiveDevice, GateThreshold, GROUND, INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        let g = &self.gate;
        let mut b = builder("cmos_buffer", self);
        let vdd = b.supply(g.supply_v, "VDD");
        b.input(input_centre_v(self, (0.0, g.supply_v)), 0.0, "IN");
        b.part("r1_ohm", INPUT_NET, "x", self.r1_ohm);
        b.part("r2_ohm", OUTPUT_NET, "x", self.r2_ohm);
        if let Some(r3) = self.r3_ohm {
            let rail = match self.r3_rail {
                BiasRail::Ground => GROUND.to_string(),
                BiasRail::Supply => vdd.clone(),
            };
            b.part("r3_ohm", "x", &rail, r3);
        }
        b.device(ActiveDevice::LogicGate {
            designator: "U1".into(),
            input: "x".into(),
            output: OUTPUT_NET.into(),
            supply: vdd,
            ground: GROUND.into(),
            threshold: GateThreshold::Single { switching_v: g.switching_point_v() },
            inverting: false,
            output_high_v: g.output_high_v(),
            output_low_v: g.output_low_v,
        });
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
