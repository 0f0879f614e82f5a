//! Every topology behind one trait ([`Circuit`]) and one enum ([`Topology`]).
//!
//! Adding a topology: write one module that implements [`Circuit`], [`Described`] and
//! `Netlisted`, and add one line to the `topologies!` list at the bottom of this file. Everything
//! else (analysis, operating range, sensitivities, tolerance, search, part list, bench procedure,
//! catalog template, SPICE deck, schematic, the JSON entry point, the page) works through the traits.

use crate::analysis::{
    Analysis, CheckSettings, ImpedanceChoice, NodeRange, OperatingPoint, OutputStage, OutputState,
    ResistorStress, Sense, SupplyCorner, Targets, Thresholds, Warning, WarningCode,
};
use crate::error::DesignError;
use crate::notation::Unit;
use serde::{Deserialize, Serialize};

pub mod inverting;
pub mod noninverting;
pub mod open_drain;
pub mod plain;
pub mod supply_monitor;
pub mod cmos_buffer;
pub mod schmitt_gate;
pub mod bjt_pair;
pub mod netlisting;
pub mod comparator;
pub mod reference;
pub mod input_rails;
pub mod output_load;
pub mod logic;
#[cfg(test)]
mod parameters_into_tests;
#[cfg(test)]
mod toy;

/// What kind of quantity a [`Parameter`] is, so tolerance and search know how to treat it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ParameterKind {
    /// A resistor of the part list (has a designator), ohms.
    Resistor,
    /// The supply rail, volts.
    Supply,
    /// A fixed reference or rail voltage, volts.
    Reference,
    /// An output level or headroom of the active device, volts.
    OutputLevel,
    /// Input offset voltage, volts.
    Offset,
    /// An input bias current, amperes.
    BiasCurrent,
    /// A switching threshold of a logic gate or transistor (VM, VBE...), volts.
    DeviceThreshold,
    /// Any other device property (current gain, saturation current...).
    Device,
}

/// One quantity of a design that tolerance analysis, sensitivity and search may vary.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parameter {
    /// Stable identifier, the field name in the design record (e.g. `r_feedback_ohm`).
    pub id: String,
    /// Part-list designator for resistors (R1, R2...), `None` for other quantities.
    pub designator: Option<String>,
    /// Plain label for display.
    pub label: String,
    /// Present value, in base units (ohms, volts, amperes).
    pub value: f64,
    /// Kind of quantity.
    pub kind: ParameterKind,
    /// Physical unit of `value` (records written before units were stored read as dimensionless).
    #[serde(default = "dimensionless")]
    pub unit: Unit,
    /// Datasheet minimum and maximum, when the record states them (gate thresholds, VBE...);
    /// tolerance analysis uses these limits instead of a percentage.
    #[serde(default)]
    pub limits: Option<[f64; 2]>,
    /// How the value moves with temperature from 25 °C (datasheet drift of a device quantity;
    /// resistors and references take theirs from the tolerance settings instead).
    #[serde(default)]
    pub drift: Drift,
    /// Held at its value by the standard-value search (a reference part whose value the
    /// designer chose, such as a zener's bias resistor); tolerance and temperature still vary it.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub held_in_search: bool,
}

pub use crate::drift::Drift;

impl Parameter {
    /// A resistor parameter.
    pub fn resistor(id: &str, designator: &str, label: &str, value_ohm: f64) -> Self {
        Parameter {
            id: id.to_string(),
            designator: Some(designator.to_string()),
            label: label.to_string(),
            value: value_ohm,
            kind: ParameterKind::Resistor,
            unit: Unit::Ohm,
            limits: None,
            drift: Drift::None,
            held_in_search: false,
        }
    }

    /// A non-resistor parameter; its unit follows from the kind (volts for rails, references,
    /// levels, offsets and thresholds, amperes for bias currents). A [`ParameterKind::Device`]
    /// quantity has no one unit: build it with [`Parameter::device`].
    pub fn quantity(id: &str, label: &str, value: f64, kind: ParameterKind) -> Self {
        let unit = match kind {
            ParameterKind::Resistor => Unit::Ohm,
            ParameterKind::BiasCurrent => Unit::Ampere,
            ParameterKind::Device => Unit::Ratio,
            ParameterKind::Supply
            | ParameterKind::Reference
            | ParameterKind::OutputLevel
            | ParameterKind::Offset
            | ParameterKind::DeviceThreshold => Unit::Volt,
        };
        Parameter { id: id.to_string(), designator: None, label: label.to_string(), value, kind, unit, limits: None, drift: Drift::None, held_in_search: false }
    }

    /// A device property ([`ParameterKind::Device`]) with its unit stated (current gain: ratio,
    /// saturation current: ampere, temperature: kelvin, sink resistance: ohm...).
    pub fn device(id: &str, label: &str, value: f64, unit: Unit) -> Self {
        Parameter { unit, ..Parameter::quantity(id, label, value, ParameterKind::Device) }
    }

    /// The same parameter with its temperature drift attached.
    pub fn with_drift(mut self, drift: Drift) -> Self {
        self.drift = drift;
        self
    }

    /// The same parameter, held at its value by the standard-value search.
    pub fn held(mut self) -> Self {
        self.held_in_search = true;
        self
    }

    /// The same parameter with datasheet limits attached.
    pub fn with_limits(mut self, min: f64, max: f64) -> Self {
        self.limits = Some([min, max]);
        self
    }
}

/// The interface every topology implements. Plain data in, plain data out.
pub trait Circuit: Clone {
    /// Checks every field (finite, positive resistances, consistent rails) before any math.
    fn validate(&self) -> Result<(), DesignError>;

    /// VT+ and VT− referred to the circuit input, with all modelled non-idealities.
    /// Fast path used on every keystroke and in Monte Carlo; must not allocate.
    fn thresholds(&self) -> Result<Thresholds, DesignError>;

    /// The output high and low levels at the circuit's output node, volts (high, low).
    fn output_levels(&self) -> Result<(f64, f64), DesignError>;

    /// Whether a rising input drives the output low (inverting) or high.
    fn sense(&self) -> Sense;

    /// Nodal solution of the network for an input voltage and an output state.
    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError>;

    /// The quantities that tolerance, sensitivity and search may vary, in a fixed order.
    fn parameters(&self) -> Vec<Parameter>;

    /// A copy with the parameter values replaced, in the order of [`Circuit::parameters`].
    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError>;

    /// [`Circuit::with_parameters`] written into `out`, the same circuit bit for bit, for a hot
    /// loop (the Monte Carlo's trials) that keeps one scratch circuit instead of moving a new one
    /// through a `Result` per evaluation. After an error `out` holds some valid circuit of the type
    /// but not a meaningful one.
    fn with_parameters_into(&self, values: &[f64], out: &mut Self) -> Result<(), DesignError> {
        *out = self.with_parameters(values)?;
        Ok(())
    }

    /// Part values that reach the targets, keeping this design's rails, device and form.
    /// The anchor resistor is `anchor_ohm` (see [`Circuit::anchor_description`]).
    fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError>;

    /// Which resistor the designer's impedance choice sets during synthesis, in plain words.
    fn anchor_description(&self) -> &'static str;

    /// Nominal supply voltage, volts.
    fn supply_v(&self) -> f64;

    /// A copy evaluated at another supply voltage (rails tied to the supply move with it).
    fn with_supply(&self, supply_v: f64) -> Self;

    /// Topology-specific design checks (pull-up loading, bias error, region of operation...).
    fn checks(&self, settings: &CheckSettings) -> Vec<Warning>;

    /// The lowest and highest voltage the active device accepts at its inputs, volts.
    fn device_input_range(&self) -> (f64, f64);

    /// The lowest rail of the active device, volts (for the phase-reversal check).
    fn negative_rail_v(&self) -> f64;

    /// The output stage the active device needs (part list: device line and designator).
    fn output_stage(&self) -> OutputStage;

    /// What the circuit's input is called at the bench ("input", "monitored rail").
    fn input_name(&self) -> &'static str {
        "input"
    }

    /// The bench supply for the device when it is not simply "supply for the circuit"
    /// (a monitor's comparator on its own supply, say); the bench adds the voltage.
    fn bench_supply_name(&self) -> Option<&'static str> {
        None
    }

    /// Safety cautions specific to testing this circuit at the bench.
    fn bench_cautions(&self) -> Vec<String> {
        Vec::new()
    }

    /// What to check when the bench readings are off, specific to this topology (the bench
    /// procedure puts the hints common to every circuit first).
    fn troubleshooting(&self, analysis: &Analysis, checks: &CheckSettings) -> Vec<String>;

    /// Upper bounds on the stress of each discrete transistor at this design's supply, for the
    /// part list's VCEO, IC and power checks (empty when the active device is not discrete).
    fn transistor_stress(&self) -> Vec<TransistorStress> {
        Vec::new()
    }

    /// A copy whose output drives its feedback through the device's output resistance and load
    /// (see [`crate::output_dynamics`]: output levels replaced by their Thevenin values, the
    /// series resistance added to the feedback resistor), so `thresholds()` of the copy are the
    /// thresholds under load. `None` (the default): not modelled for this topology.
    fn with_output_load(&self, _load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
        None
    }

    /// For a topology whose thresholds are not bilinear in its resistors (a transistor model solved
    /// numerically), the monotone structure the standard-value search may rely on instead
    /// (`crate::search`, "Monotone plan"); `None` (the default): the bilinear method applies.
    fn monotone_structure(&self) -> Option<MonotoneStructure> {
        None
    }

    /// The time one [`Circuit::thresholds`] call takes, seconds: a bound measured natively (release
    /// build, `cargo bench -p hysteron-core --bench search`) with headroom, for the time estimates
    /// the long studies announce before they start (workload × this). Closed forms: the default,
    /// 2 µs (they take well under a microsecond).
    fn seconds_per_evaluation(&self) -> f64 {
        2e-6
    }
}

/// How a numerically solved topology's thresholds depend on two of its resistors, stated by the
/// topology (and checked numerically there) for the standard-value search's monotone plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MonotoneStructure {
    /// Index in [`Circuit::parameters`] of a resistor both thresholds are monotone in (each in
    /// its own direction) wherever the circuit switches.
    pub monotone: usize,
    /// Index of a resistor that only loads the output: VT− does not depend on it (to rounding),
    /// VT+ does not rise as it rises, and a design that does not switch at a value of it does not
    /// switch at any larger value.
    pub output_load: usize,
}

/// What one discrete transistor must withstand (upper bounds over every operating state).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TransistorStress {
    /// Designator (Q1, Q2).
    pub designator: String,
    /// Largest collector–emitter voltage, volts (the rated VCEO must reach it).
    pub vce_max_v: f64,
    /// Largest collector current, amperes.
    pub collector_current_max_a: f64,
    /// Largest dissipation VCE·IC, watts.
    pub dissipation_max_w: f64,
}

/// What a topology tells the catalog and the page without a design at hand.
pub trait Described {
    /// Short human title ("Inverting Schmitt (op-amp or comparator)").
    const TITLE: &'static str;
    /// When an engineer reaches for this topology, in plain words.
    const NOTE: &'static str;
    /// The design record (JSON) a new notebook entry of this topology starts from.
    const TEMPLATE_JSON: &'static str;
}

/// One registered topology as the catalog sees it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TopologyEntry {
    /// Stable record name (`"inverting"`).
    pub name: &'static str,
    /// See [`Described::TITLE`].
    pub title: &'static str,
    /// See [`Described::NOTE`].
    pub note: &'static str,
    /// See [`Described::TEMPLATE_JSON`].
    pub template_json: &'static str,
}

fn dimensionless() -> Unit {
    Unit::Ratio
}

/// How far a device input may pass its negative rail or its common-mode limit before the
/// phase-reversal and common-mode warnings speak, volts (10 mV: shifts of microvolts from bias
/// current or offset are below any datasheet's stated precision; datasheets usually rate inputs to
/// 0.1–0.3 V beyond the rails — common practice).
pub const INPUT_RANGE_MARGIN_V: f64 = 0.01;

/// Runs the full forward analysis: thresholds, levels, stresses, ranges and every check.
pub fn analyse<C: Circuit>(circuit: &C, settings: &CheckSettings) -> Result<Analysis, DesignError> {
    settings.validate()?;
    circuit.validate().map_err(|e| named_on_screen(e, &circuit.parameters()))?;
    let t = circuit.thresholds()?;
    let (voh, vol) = circuit.output_levels()?;
    let neg = circuit.negative_rail_v();
    let vin_lo = settings.input_min_v.unwrap_or(neg.min(t.vt_lower_v));
    let vin_hi = settings.input_max_v.unwrap_or(circuit.supply_v().max(t.vt_upper_v));
    // The output state that can exist at each input: below VT− only the "input low" state, above
    // VT+ only the "input high" state, in between both.
    let (state_input_low, state_input_high) = match circuit.sense() {
        Sense::Inverting => (OutputState::High, OutputState::Low),
        Sense::NonInverting => (OutputState::Low, OutputState::High),
    };
    let mut points: Vec<(f64, OutputState)> = vec![
        (vin_lo, state_input_low),
        (t.vt_upper_v, state_input_low),
        (t.vt_lower_v, state_input_low),
        (t.vt_lower_v, state_input_high),
        (t.vt_upper_v, state_input_high),
        (vin_hi, state_input_high),
    ];
    points.retain(|(v, _)| v.is_finite());

    let mut resistors: Vec<ResistorStress> = Vec::new();
    let mut nodes: Vec<NodeRange> = Vec::new();
    let mut quiescent = 0.0_f64;
    let mut input_resistance: Option<f64> = None;
    for &(vin, state) in &points {
        let op = circuit.operating_point(vin, state)?;
        quiescent = quiescent.max(op.network_current_a.abs());
        for r in &op.resistors {
            let p = r.power_w();
            match resistors.iter_mut().find(|s| s.designator == r.designator) {
                Some(s) => {
                    s.max_power_w = s.max_power_w.max(p);
                    s.max_volts = s.max_volts.max(r.volts.abs());
                }
                None => resistors.push(ResistorStress {
                    designator: r.designator.clone(),
                    resistance_ohm: r.resistance_ohm,
                    max_power_w: p,
                    max_volts: r.volts.abs(),
                }),
            }
        }
        for n in &op.device_inputs {
            match nodes.iter_mut().find(|x| x.name == n.name) {
                Some(x) => {
                    x.min_v = x.min_v.min(n.volts);
                    x.max_v = x.max_v.max(n.volts);
                }
                None => nodes.push(NodeRange { name: n.name.clone(), min_v: n.volts, max_v: n.volts }),
            }
        }
        // Small-signal input resistance: dV/dI by a central difference in the same state.
        let dv = 1e-3_f64.max(vin.abs() * 1e-6);
        let a = circuit.operating_point(vin - dv, state)?;
        let b = circuit.operating_point(vin + dv, state)?;
        let di = b.input_current_a - a.input_current_a;
        if di.abs() > 1e-18 {
            let r = (2.0 * dv / di).abs();
            input_resistance = Some(input_resistance.map_or(r, |x: f64| x.min(r)));
        }
    }

    let mut warnings = circuit.checks(settings);
    let (cm_lo, cm_hi) = circuit.device_input_range();
    let m = INPUT_RANGE_MARGIN_V;
    // One message per node and side: a node beyond the absolute-maximum margin of a rail gets the
    // rail warning (`input_rails`), which says what the weaker common-mode and phase-reversal
    // warnings would, so those are not given for it as well.
    let past_rail = |v: f64, hi: bool| {
        if hi {
            v > circuit.supply_v() + input_rails::ABSOLUTE_MAXIMUM_MARGIN_V
        } else {
            v < neg - input_rails::ABSOLUTE_MAXIMUM_MARGIN_V
        }
    };
    for n in &nodes {
        if past_rail(n.min_v, false) {
            // The rail warning below covers this side.
        } else if n.min_v < neg - m {
            warnings.push(Warning::new(
                WarningCode::PhaseReversal,
                format!(
                    "{} goes to {:.3} V, more than {:.0} mV below the negative rail ({:.3} V): many devices invert their output there; clamp the input or shift the thresholds",
                    n.name, n.min_v, m * 1e3, neg
                ),
            ));
        } else if n.min_v < cm_lo - m {
            warnings.push(Warning::new(
                WarningCode::CommonModeRange,
                format!(
                    "{} reaches {:.3} V, more than {:.0} mV below the device's input range ({:.3} V)",
                    n.name, n.min_v, m * 1e3, cm_lo
                ),
            ));
        }
        if n.max_v > cm_hi + m && !past_rail(n.max_v, true) {
            warnings.push(Warning::new(
                WarningCode::CommonModeRange,
                format!(
                    "{} reaches {:.3} V, more than {:.0} mV above the device's input range ({:.3} V)",
                    n.name, n.max_v, m * 1e3, cm_hi
                ),
            ));
        }
    }

    warnings.extend(input_rails::rail_warnings(&nodes, circuit.supply_v(), neg));

    // A corner that cannot be evaluated (a gate threshold leaving its band at that supply, say)
    // becomes a warning: the nominal analysis still stands.
    let supply_corners = match supply_corners(circuit, settings) {
        Ok(c) => c,
        Err(e) => {
            warnings.push(Warning::new(
                WarningCode::Note,
                format!("the design cannot be evaluated over the whole supply range: {e}"),
            ));
            supply_corners(circuit, &CheckSettings { supply_min_v: None, supply_max_v: None, ..*settings })
                .unwrap_or_default()
        }
    };
    Ok(Analysis {
        vt_upper_v: t.vt_upper_v,
        vt_lower_v: t.vt_lower_v,
        hysteresis_v: t.hysteresis_v(),
        centre_v: t.centre_v(),
        output_high_v: voh,
        output_low_v: vol,
        sense: circuit.sense(),
        input_resistance_ohm: input_resistance,
        quiescent_current_a: quiescent,
        resistors,
        device_inputs: nodes,
        supply_corners,
        warnings,
    })
}

/// Thresholds at the supply's minimum, nominal and maximum (DOMAIN §6: a band set by an output tied
/// to the rail scales with the rail).
pub fn supply_corners<C: Circuit>(circuit: &C, settings: &CheckSettings) -> Result<Vec<SupplyCorner>, DesignError> {
    let nominal = circuit.supply_v();
    let mut supplies = vec![];
    if let Some(v) = settings.supply_min_v {
        supplies.push(v);
    }
    supplies.push(nominal);
    if let Some(v) = settings.supply_max_v {
        supplies.push(v);
    }
    supplies
        .into_iter()
        .map(|s| {
            let c = circuit.with_supply(s);
            c.validate()?;
            let t = c.thresholds()?;
            Ok(SupplyCorner { supply_v: s, vt_upper_v: t.vt_upper_v, vt_lower_v: t.vt_lower_v })
        })
        .collect()
}

/// Names the field of an [`DesignError::InvalidValue`] as the page shows it: a resistor by its
/// designator (`ra_ohm` → `R1`), any other parameter by its label (`supply_v` → `supply`). Errors
/// about fields that are no parameter of `parameters` are returned unchanged.
pub fn named_on_screen(error: DesignError, parameters: &[Parameter]) -> DesignError {
    match error {
        DesignError::InvalidValue { field, reason } => {
            let name = parameters
                .iter()
                .find(|p| p.id == field)
                .map(|p| p.designator.clone().unwrap_or_else(|| p.label.clone()))
                .unwrap_or(field);
            DesignError::InvalidValue { field: name, reason }
        }
        other => other,
    }
}

/// Synthesis with either an anchor resistor or a current budget. A resistive network's currents
/// scale inversely with its impedance level, so the budget is met by rescaling the anchor and
/// re-solving (twice, so bias-current terms settle).
/// Errors name the circuit's fields as the page shows them ([`named_on_screen`]).
pub fn synthesise<C: Circuit>(circuit: &C, targets: &Targets) -> Result<C, DesignError> {
    synthesise_named(circuit, targets).map_err(|e| named_on_screen(e, &circuit.parameters()))
}

fn synthesise_named<C: Circuit>(circuit: &C, targets: &Targets) -> Result<C, DesignError> {
    targets.validate()?;
    let t = targets.thresholds();
    match targets.impedance {
        ImpedanceChoice::AnchorOhm(r) => {
            crate::error::positive("targets.impedance.anchor_ohm", r)?;
            circuit.synthesise_with_anchor(t, r)
        }
        ImpedanceChoice::CurrentBudgetA(budget) => {
            crate::error::positive("targets.impedance.current_budget_a", budget)?;
            let mut anchor = 100e3;
            let mut design = circuit.synthesise_with_anchor(t, anchor)?;
            for _ in 0..4 {
                let a = analyse(&design, &CheckSettings::default())?;
                if a.quiescent_current_a <= 0.0 {
                    break;
                }
                let scale = a.quiescent_current_a / budget;
                if (scale - 1.0).abs() < 1e-12 {
                    break;
                }
                anchor *= scale;
                design = circuit.synthesise_with_anchor(t, anchor)?;
            }
            Ok(design)
        }
    }
}

/// ∂VT/∂p for every parameter, by central differences with a relative step of 1e-6
/// (truncation error O(h²) ≈ 1e-12 relative for these smooth rational functions).
/// Returns (parameter, ∂VT+/∂p, ∂VT−/∂p).
pub fn sensitivities<C: Circuit>(circuit: &C) -> Result<Vec<(Parameter, f64, f64)>, DesignError> {
    let params = circuit.parameters();
    let base: Vec<f64> = params.iter().map(|p| p.value).collect();
    let mut out = Vec::with_capacity(params.len());
    let mut values = base.clone();
    for (i, p) in params.into_iter().enumerate() {
        let h = if base[i] != 0.0 { base[i].abs() * 1e-6 } else { 1e-9 };
        values[i] = base[i] + h;
        let up = circuit.with_parameters(&values)?.thresholds()?;
        values[i] = base[i] - h;
        let down = circuit.with_parameters(&values)?.thresholds()?;
        values[i] = base[i];
        out.push((
            p,
            (up.vt_upper_v - down.vt_upper_v) / (2.0 * h),
            (up.vt_lower_v - down.vt_lower_v) / (2.0 * h),
        ));
    }
    Ok(out)
}

/// One point of a transfer curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CurvePoint {
    /// Input voltage, volts.
    pub vin_v: f64,
    /// Output voltage, volts.
    pub vout_v: f64,
}

/// The hysteresis loop as two branches: the rising-input branch and the falling-input branch.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TransferCurve {
    /// Output versus input for an input swept upward (switches at VT+).
    pub rising: Vec<CurvePoint>,
    /// Output versus input for an input swept downward (switches at VT−).
    pub falling: Vec<CurvePoint>,
    /// VT+, volts.
    pub vt_upper_v: f64,
    /// VT−, volts.
    pub vt_lower_v: f64,
}

/// Builds the ideal-switching transfer curve from the thresholds and output levels between
/// `vin_min_v` and `vin_max_v` (each branch is a step; vertical segments mark the switching).
pub fn transfer_curve<C: Circuit>(circuit: &C, vin_min_v: f64, vin_max_v: f64) -> Result<TransferCurve, DesignError> {
    let t = circuit.thresholds()?;
    let (voh, vol) = circuit.output_levels()?;
    let (before, after) = match circuit.sense() {
        Sense::Inverting => (voh, vol),
        Sense::NonInverting => (vol, voh),
    };
    let lo = vin_min_v.min(t.vt_lower_v);
    let hi = vin_max_v.max(t.vt_upper_v);
    let p = |vin_v, vout_v| CurvePoint { vin_v, vout_v };
    Ok(TransferCurve {
        rising: vec![p(lo, before), p(t.vt_upper_v, before), p(t.vt_upper_v, after), p(hi, after)],
        falling: vec![p(hi, after), p(t.vt_lower_v, after), p(t.vt_lower_v, before), p(lo, before)],
        vt_upper_v: t.vt_upper_v,
        vt_lower_v: t.vt_lower_v,
    })
}

/// Generates the [`Topology`] enum and all its dispatch ([`Circuit`], the catalog entries, the
/// netlist) from one list. The attributes of a list line (doc comments, `#[cfg(test)]`) go on the
/// variant and on every match arm for it, so a gated line gates the whole topology.
macro_rules! topologies {
    ($( $(#[$attr:meta])* $variant:ident($ty:ty) = $name:literal, )+) => {
        /// Every topology Hysteron knows, as stored in a design record (`"topology": "<name>"`).
        #[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
        #[serde(tag = "topology", rename_all = "snake_case")]
        pub enum Topology {
            $( $(#[$attr])* #[serde(rename = $name)] $variant($ty), )+
        }

        #[allow(unused_doc_comments)]
        impl Topology {
            /// The stable name used in design records and links.
            pub fn name(&self) -> &'static str {
                match self { $( $(#[$attr])* Topology::$variant(_) => $name, )+ }
            }

            /// All topology names, in display order.
            pub const NAMES: &'static [&'static str] = &[$( $(#[$attr])* $name ),+];

            /// Every topology's catalog entry, in display order.
            pub const ENTRIES: &'static [TopologyEntry] = &[$(
                $(#[$attr])*
                TopologyEntry {
                    name: $name,
                    title: <$ty as Described>::TITLE,
                    note: <$ty as Described>::NOTE,
                    template_json: <$ty as Described>::TEMPLATE_JSON,
                }
            ),+];

            /// The topology's catalog entry.
            pub fn entry(&self) -> TopologyEntry {
                let name = self.name();
                Self::ENTRIES.iter().copied().find(|e| e.name == name).unwrap_or(Self::ENTRIES[0])
            }

            /// Short human title of the topology.
            pub fn title(&self) -> &'static str {
                self.entry().title
            }

            /// When to use the topology, in plain words.
            pub fn note(&self) -> &'static str {
                self.entry().note
            }
        }

        #[allow(unused_doc_comments)]
        impl Circuit for Topology {
            fn validate(&self) -> Result<(), DesignError> { match self { $( $(#[$attr])* Topology::$variant(c) => c.validate(), )+ } }
            fn thresholds(&self) -> Result<Thresholds, DesignError> { match self { $( $(#[$attr])* Topology::$variant(c) => c.thresholds(), )+ } }
            fn output_levels(&self) -> Result<(f64, f64), DesignError> { match self { $( $(#[$attr])* Topology::$variant(c) => c.output_levels(), )+ } }
            fn sense(&self) -> Sense { match self { $( $(#[$attr])* Topology::$variant(c) => c.sense(), )+ } }
            fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
                match self { $( $(#[$attr])* Topology::$variant(c) => c.operating_point(vin_v, state), )+ }
            }
            fn parameters(&self) -> Vec<Parameter> { match self { $( $(#[$attr])* Topology::$variant(c) => c.parameters(), )+ } }
            fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
                match self { $( $(#[$attr])* Topology::$variant(c) => c.with_parameters(values).map(Topology::$variant), )+ }
            }
            fn with_parameters_into(&self, values: &[f64], out: &mut Self) -> Result<(), DesignError> {
                match (self, out) {
                    $( $(#[$attr])* (Topology::$variant(c), Topology::$variant(o)) => c.with_parameters_into(values, o), )+
                    #[allow(unreachable_patterns)]
                    (c, o) => {
                        *o = c.with_parameters(values)?;
                        Ok(())
                    }
                }
            }
            fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError> {
                match self { $( $(#[$attr])* Topology::$variant(c) => c.synthesise_with_anchor(targets, anchor_ohm).map(Topology::$variant), )+ }
            }
            fn anchor_description(&self) -> &'static str { match self { $( $(#[$attr])* Topology::$variant(c) => c.anchor_description(), )+ } }
            fn supply_v(&self) -> f64 { match self { $( $(#[$attr])* Topology::$variant(c) => c.supply_v(), )+ } }
            fn with_supply(&self, supply_v: f64) -> Self { match self { $( $(#[$attr])* Topology::$variant(c) => Topology::$variant(c.with_supply(supply_v)), )+ } }
            fn checks(&self, settings: &CheckSettings) -> Vec<Warning> { match self { $( $(#[$attr])* Topology::$variant(c) => c.checks(settings), )+ } }
            fn device_input_range(&self) -> (f64, f64) { match self { $( $(#[$attr])* Topology::$variant(c) => c.device_input_range(), )+ } }
            fn negative_rail_v(&self) -> f64 { match self { $( $(#[$attr])* Topology::$variant(c) => c.negative_rail_v(), )+ } }
            fn output_stage(&self) -> OutputStage { match self { $( $(#[$attr])* Topology::$variant(c) => c.output_stage(), )+ } }
            fn input_name(&self) -> &'static str { match self { $( $(#[$attr])* Topology::$variant(c) => c.input_name(), )+ } }
            fn bench_supply_name(&self) -> Option<&'static str> { match self { $( $(#[$attr])* Topology::$variant(c) => c.bench_supply_name(), )+ } }
            fn bench_cautions(&self) -> Vec<String> { match self { $( $(#[$attr])* Topology::$variant(c) => c.bench_cautions(), )+ } }
            fn troubleshooting(&self, analysis: &Analysis, checks: &CheckSettings) -> Vec<String> {
                match self { $( $(#[$attr])* Topology::$variant(c) => c.troubleshooting(analysis, checks), )+ }
            }
            fn transistor_stress(&self) -> Vec<TransistorStress> { match self { $( $(#[$attr])* Topology::$variant(c) => c.transistor_stress(), )+ } }
            fn with_output_load(&self, load: &crate::topology::output_load::OutputLoad) -> Option<Self> {
                match self { $( $(#[$attr])* Topology::$variant(c) => c.with_output_load(load).map(Topology::$variant), )+ }
            }
            fn monotone_structure(&self) -> Option<MonotoneStructure> { match self { $( $(#[$attr])* Topology::$variant(c) => c.monotone_structure(), )+ } }
            fn seconds_per_evaluation(&self) -> f64 { match self { $( $(#[$attr])* Topology::$variant(c) => c.seconds_per_evaluation(), )+ } }
        }

        #[allow(unused_doc_comments)]
        impl crate::netlist::Netlisted for Topology {
            fn netlist(&self) -> crate::netlist::Netlist { match self { $( $(#[$attr])* Topology::$variant(c) => c.netlist(), )+ } }
            fn schematic(&self) -> crate::schematic::sheet::SchematicLayout { match self { $( $(#[$attr])* Topology::$variant(c) => c.schematic(), )+ } }
        }
    };
}

topologies! {
    /// Inverting Schmitt trigger: input on (−), divider and feedback on (+). DOMAIN §1a.
    Inverting(inverting::InvertingSchmitt) = "inverting",
    /// Non-inverting Schmitt trigger: input through R1 to (+), feedback R2, reference on (−). DOMAIN §1b.
    NonInverting(noninverting::NonInvertingSchmitt) = "non_inverting",
    /// Open-collector/open-drain comparator with pull-up, inverting or non-inverting. DOMAIN §1c.
    OpenDrain(open_drain::OpenDrainSchmitt) = "open_drain",
    /// Plain comparator without feedback: the no-hysteresis baseline.
    Plain(plain::PlainComparator) = "plain_comparator",
    /// Battery/supply undervoltage or overvoltage monitor, thresholds on the monitored rail. DOMAIN §1g.
    SupplyMonitor(supply_monitor::SupplyMonitor) = "supply_monitor",
    /// Non-inverting Schmitt from a CMOS buffer and resistors. DOMAIN §1d.
    CmosBuffer(cmos_buffer::CmosBufferSchmitt) = "cmos_buffer",
    /// Dedicated Schmitt-input gate with an optional input network. DOMAIN §1e.
    SchmittGate(schmitt_gate::SchmittGate) = "schmitt_gate",
    /// Emitter-coupled two-transistor Schmitt trigger. DOMAIN §1f.
    BjtPair(bjt_pair::EmitterCoupledSchmitt) = "bjt_pair",
    /// A made-up one-resistor topology that proves a new topology needs one module and this line.
    #[cfg(test)]
    Toy(toy::Toy) = "toy",
}

/// Smallest and largest resistance a design may hold, ohms (1 µΩ to 1 PΩ): beyond any real part,
/// and inside the range where every network equation here stays finite in double precision.
pub const RESISTANCE_RANGE_OHM: (f64, f64) = (1e-6, 1e15);

/// Checks a resistance: finite and within [`RESISTANCE_RANGE_OHM`] (the range of
/// [`crate::limits::Quantity::Resistance`]). Every topology checks its resistors here, so a value
/// one topology refuses no other accepts.
pub(crate) fn resistance(field: &str, value_ohm: f64) -> Result<f64, DesignError> {
    crate::limits::check(crate::limits::Quantity::Resistance, field, value_ohm)
}

/// Helper for `with_parameters`: checks the length of a parameter vector.
pub fn expect_len(values: &[f64], n: usize) -> Result<(), DesignError> {
    if values.len() == n {
        Ok(())
    } else {
        Err(DesignError::Parameter { reason: format!("expected {n} parameter values, got {}", values.len()) })
    }
}

/// Parallel combination of resistances, ohms; `None` entries (not fitted) are skipped.
pub fn parallel(rs: &[Option<f64>]) -> f64 {
    let g: f64 = rs.iter().flatten().map(|r| 1.0 / r).sum();
    if g > 0.0 { 1.0 / g } else { f64::INFINITY }
}
