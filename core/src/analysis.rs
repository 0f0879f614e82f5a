//! Plain result types shared by every topology: thresholds, operating points, full analysis,
//! warnings, and the synthesis targets.

use serde::{Deserialize, Serialize};

/// The two switching thresholds of a hysteresis circuit, referred to the circuit's input.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Thresholds {
    /// VT+: the level a rising input must cross to switch the output (trip point on a rising input), volts.
    pub vt_upper_v: f64,
    /// VT−: the level a falling input must cross to switch back (release point on a falling input), volts.
    pub vt_lower_v: f64,
}

impl Thresholds {
    /// Hysteresis width ΔV = VT+ − VT−, volts.
    pub fn hysteresis_v(&self) -> f64 {
        self.vt_upper_v - self.vt_lower_v
    }

    /// Centre of the band Vc = (VT+ + VT−)/2, volts.
    pub fn centre_v(&self) -> f64 {
        0.5 * (self.vt_upper_v + self.vt_lower_v)
    }

    /// Builds thresholds from a centre and a width.
    pub fn from_centre_width(centre_v: f64, width_v: f64) -> Self {
        Thresholds { vt_upper_v: centre_v + width_v / 2.0, vt_lower_v: centre_v - width_v / 2.0 }
    }
}

/// Which way the output moves when the input rises through VT+.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Sense {
    /// Output high while the input is low; a rising input through VT+ drives it low.
    Inverting,
    /// Output low while the input is low; a rising input through VT+ drives it high.
    NonInverting,
}

/// The two stable states of the output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OutputState {
    /// Output at its high level (VOH or the pulled-up level).
    High,
    /// Output at its low level (VOL).
    Low,
}

/// The voltage across one resistor at an operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ResistorDrop {
    /// Designator as in the part list (R1, R2...).
    pub designator: String,
    /// Resistance, ohms.
    pub resistance_ohm: f64,
    /// Voltage across the resistor, volts (sign follows the topology's reference direction).
    pub volts: f64,
}

impl ResistorDrop {
    /// Power dissipated, watts: V²/R.
    pub fn power_w(&self) -> f64 {
        self.volts * self.volts / self.resistance_ohm
    }
}

/// A named node voltage at an operating point, used for the input common-mode check.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NodeVoltage {
    /// Node name, e.g. "non-inverting input".
    pub name: String,
    /// Voltage, volts.
    pub volts: f64,
}

/// Every resistor's voltage, the currents drawn and the device-input node voltages for one input
/// voltage and one output state. Produced by each topology's nodal solution.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OperatingPoint {
    /// Voltage across each resistor.
    pub resistors: Vec<ResistorDrop>,
    /// Current drawn from the signal source into the circuit input, amperes.
    pub input_current_a: f64,
    /// Total current the network draws from the supply rails (excluding the device's own supply current), amperes.
    pub network_current_a: f64,
    /// Voltages at the active device's inputs (checked against its input common-mode range).
    pub device_inputs: Vec<NodeVoltage>,
}

/// The worst-case stress on one resistor over the evaluated operating points.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ResistorStress {
    /// Designator as in the part list.
    pub designator: String,
    /// Resistance, ohms.
    pub resistance_ohm: f64,
    /// Highest dissipation over the evaluated operating points, watts.
    pub max_power_w: f64,
    /// Highest magnitude of voltage across it, volts.
    pub max_volts: f64,
}

/// The range a device-input node visits over both output states and the input span.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NodeRange {
    /// Node name.
    pub name: String,
    /// Lowest voltage seen, volts.
    pub min_v: f64,
    /// Highest voltage seen, volts.
    pub max_v: f64,
}

/// What a design check found. Codes are stable; messages carry the numbers that triggered them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WarningCode {
    /// A pull-up is not much smaller than the feedback resistor it feeds.
    PullupLoading,
    /// Bias current × node resistance is a large share of the tolerance error.
    BiasCurrentError,
    /// Divider current is too close to the device's input current.
    DividerCurrentLow,
    /// A zener's or shunt reference's current falls below its minimum at the lowest supply.
    ReferenceCurrentLow,
    /// A monitored rail's release point is too close to the trip point for the expected recovery.
    ReleaseTooClose,
    /// A device input leaves the common-mode range.
    CommonModeRange,
    /// A device input goes below the negative rail: risk of output phase reversal.
    PhaseReversal,
    /// Thresholds lie outside the span the input signal covers, or outside the rails.
    ThresholdOutsideRange,
    /// A transistor leaves its intended region (saturation of the on device, etc.).
    TransistorRegion,
    /// A gate's switching threshold is only guaranteed within a wide band.
    GateThresholdSpread,
    /// The design's voltages exceed extra-low-voltage limits: safety cautions apply.
    Safety,
    /// Anything else worth the engineer's attention.
    Note,
}

/// A design-check finding, returned beside results (never instead of them).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Warning {
    /// Stable code for the kind of finding.
    pub code: WarningCode,
    /// Plain message with the numbers that triggered it.
    pub message: String,
}

impl Warning {
    /// Builds a warning.
    pub fn new(code: WarningCode, message: impl Into<String>) -> Self {
        Warning { code, message: message.into() }
    }
}

/// Thresholds at one supply voltage of the operating range.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SupplyCorner {
    /// Supply voltage evaluated, volts.
    pub supply_v: f64,
    /// VT+ at that supply, volts.
    pub vt_upper_v: f64,
    /// VT− at that supply, volts.
    pub vt_lower_v: f64,
}

/// The full forward analysis of a design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Analysis {
    /// VT+, volts.
    pub vt_upper_v: f64,
    /// VT−, volts.
    pub vt_lower_v: f64,
    /// ΔV = VT+ − VT−, volts.
    pub hysteresis_v: f64,
    /// (VT+ + VT−)/2, volts.
    pub centre_v: f64,
    /// Output high level at the circuit's output node (after any pull-up loading), volts.
    pub output_high_v: f64,
    /// Output low level, volts.
    pub output_low_v: f64,
    /// Output sense (inverting or non-inverting).
    pub sense: Sense,
    /// Smallest small-signal resistance seen by the source at the input over both output states,
    /// ohms; `None` when the input draws no DC current (a gate or op-amp input directly).
    pub input_resistance_ohm: Option<f64>,
    /// Largest current the resistor network draws from the rails over the evaluated points, amperes.
    pub quiescent_current_a: f64,
    /// Per-resistor worst dissipation and voltage.
    pub resistors: Vec<ResistorStress>,
    /// Ranges visited by the device input nodes.
    pub device_inputs: Vec<NodeRange>,
    /// Thresholds at supply minimum, nominal and maximum (nominal only when no range is given).
    pub supply_corners: Vec<SupplyCorner>,
    /// Design-check findings.
    pub warnings: Vec<Warning>,
}

/// How the designer fixes the impedance level of a synthesised network.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ImpedanceChoice {
    /// The value of the topology's anchor resistor (see `Circuit::anchor_description`), ohms.
    AnchorOhm(f64),
    /// The largest current the network may draw from the rails, amperes; the anchor is scaled to meet it.
    CurrentBudgetA(f64),
}

/// What synthesis must reach.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Targets {
    /// Target VT+, volts.
    pub vt_upper_v: f64,
    /// Target VT−, volts.
    pub vt_lower_v: f64,
    /// Impedance level or current budget.
    pub impedance: ImpedanceChoice,
}

impl Targets {
    /// Checks every value against its physical range (`crate::limits`).
    pub fn validate(&self) -> Result<(), crate::error::DesignError> {
        use crate::limits::{check, Quantity};
        check(Quantity::Voltage, "targets.vt_upper_v", self.vt_upper_v)?;
        check(Quantity::Voltage, "targets.vt_lower_v", self.vt_lower_v)?;
        match self.impedance {
            ImpedanceChoice::AnchorOhm(r) => check(Quantity::Resistance, "targets.impedance.anchor_ohm", r)?,
            ImpedanceChoice::CurrentBudgetA(a) => {
                crate::error::positive("targets.impedance.current_budget_a", a)?;
                check(Quantity::Current, "targets.impedance.current_budget_a", a)?
            }
        };
        Ok(())
    }

    /// The targets as a thresholds pair.
    pub fn thresholds(&self) -> Thresholds {
        Thresholds { vt_upper_v: self.vt_upper_v, vt_lower_v: self.vt_lower_v }
    }
}

/// Settings for the design checks that need numbers from the engineer.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct CheckSettings {
    /// A pull-up larger than this fraction of the feedback resistor it feeds draws a warning
    /// (common practice: a tenth).
    pub pullup_ratio_limit: f64,
    /// Bias-current error above this fraction of the resistor-tolerance error draws a warning.
    pub bias_error_fraction: f64,
    /// Resistor tolerance assumed for that comparison, as a fraction (0.01 = 1 %).
    pub resistor_tolerance: f64,
    /// Divider current below this multiple of the input bias current draws a warning
    /// (common practice: 20–100×).
    pub divider_current_ratio: f64,
    /// For a monitored rail: how far the rail recovers when its load is removed, volts (0: not checked).
    pub expected_recovery_v: f64,
    /// Lowest input voltage the signal reaches, volts (`None`: the negative rail).
    pub input_min_v: Option<f64>,
    /// Highest input voltage the signal reaches, volts (`None`: the supply).
    pub input_max_v: Option<f64>,
    /// Lowest supply of the operating range, volts (`None`: nominal only).
    pub supply_min_v: Option<f64>,
    /// Highest supply of the operating range, volts (`None`: nominal only).
    pub supply_max_v: Option<f64>,
}

impl CheckSettings {
    /// Checks every value against its physical range (`crate::limits`); ratios may be zero
    /// (the warning then always or never fires) or a gain of 0.001 to 10⁶.
    pub fn validate(&self) -> Result<(), crate::error::DesignError> {
        use crate::limits::{check, check_optional, Quantity};
        for (field, ratio) in [
            ("checks.pullup_ratio_limit", self.pullup_ratio_limit),
            ("checks.bias_error_fraction", self.bias_error_fraction),
            ("checks.divider_current_ratio", self.divider_current_ratio),
        ] {
            if ratio != 0.0 {
                check(Quantity::Gain, field, ratio)?;
            }
        }
        check(Quantity::Percent, "checks.resistor_tolerance", self.resistor_tolerance * 100.0)?;
        check(Quantity::Voltage, "checks.expected_recovery_v", self.expected_recovery_v)?;
        check_optional(Quantity::Voltage, "checks.input_min_v", self.input_min_v)?;
        check_optional(Quantity::Voltage, "checks.input_max_v", self.input_max_v)?;
        check_optional(Quantity::Voltage, "checks.supply_min_v", self.supply_min_v)?;
        check_optional(Quantity::Voltage, "checks.supply_max_v", self.supply_max_v)?;
        Ok(())
    }
}

impl Default for CheckSettings {
    fn default() -> Self {
        CheckSettings {
            pullup_ratio_limit: 0.1,
            bias_error_fraction: 0.25,
            resistor_tolerance: 0.01,
            divider_current_ratio: 20.0,
            expected_recovery_v: 0.0,
            input_min_v: None,
            input_max_v: None,
            supply_min_v: None,
            supply_max_v: None,
        }
    }
}

/// The kind of output stage the active device needs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OutputStage {
    /// Comparator or op-amp with a push-pull output.
    PushPull,
    /// Comparator with an open-drain or open-collector output and a pull-up resistor.
    OpenDrain,
    /// CMOS logic gate (buffer, inverter or Schmitt-input gate).
    LogicGate,
    /// Discrete transistors.
    DiscreteTransistors,
}

impl OutputStage {
    /// The part-list description of the stage.
    pub fn description(self) -> &'static str {
        match self {
            OutputStage::PushPull => "comparator or op-amp, push-pull output",
            OutputStage::OpenDrain => "comparator, open-drain or open-collector output",
            OutputStage::LogicGate => "CMOS logic gate",
            OutputStage::DiscreteTransistors => "small-signal transistors",
        }
    }
}
