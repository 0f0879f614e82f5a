//! The part list (BOM) of a design: one line per resistor with its standard value, tolerance,
//! package, worst dissipation and voltage against the package's limits, and one line for the
//! active device with what it must provide. Exported as CSV (RFC 4180).
//!
//! Works for every topology through [`Circuit`]: resistors are the parameters of kind
//! [`ParameterKind::Resistor`], their stresses come from [`Analysis::resistors`].
//!
//! Rules used (stated on each line of the output as well):
//! - **Standard value**: the series value nearest the design value by ratio ([`ESeries::nearest`]).
//! - **Power rating**: the smallest common rating ≥ `power_derating_factor` × the worst
//!   dissipation (common practice: at least 2×, so the part runs cool and drifts little).
//! - **Voltage**: a resistor's rated voltage is the lower of √(P·R) and the package's limiting
//!   element voltage (IEC 60115-1's definition, from memory); the package figures below are
//!   typical thick-film chip and 0.25 W film values (common practice / from memory — check the
//!   chosen part's datasheet).

use crate::analysis::{Analysis, CheckSettings};
use crate::error::DesignError;
use crate::eseries::ESeries;
use crate::notation::{format_rkm, format_with_unit, Unit};
pub use crate::analysis::OutputStage;
use crate::topology::{analyse, Circuit, ParameterKind};
use serde::{Deserialize, Serialize};

pub mod application;

/// Resistor package (case size) chosen for the part list; 0603 by default.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum Package {
    /// 0402 chip (1.0 × 0.5 mm).
    #[serde(rename = "0402")]
    Chip0402,
    /// 0603 chip (1.6 × 0.8 mm).
    #[default]
    #[serde(rename = "0603")]
    Chip0603,
    /// 0805 chip (2.0 × 1.25 mm).
    #[serde(rename = "0805")]
    Chip0805,
    /// 1206 chip (3.2 × 1.6 mm).
    #[serde(rename = "1206")]
    Chip1206,
    /// Axial through-hole film resistor, 0.25 W.
    #[serde(rename = "through_hole_0w25")]
    ThroughHole0W25,
}

impl Package {
    /// Every package, smallest first.
    pub const ALL: [Package; 5] =
        [Package::Chip0402, Package::Chip0603, Package::Chip0805, Package::Chip1206, Package::ThroughHole0W25];

    /// Plain name for display and the CSV.
    pub fn label(self) -> &'static str {
        match self {
            Package::Chip0402 => "0402",
            Package::Chip0603 => "0603",
            Package::Chip0805 => "0805",
            Package::Chip1206 => "1206",
            Package::ThroughHole0W25 => "through-hole 0.25 W",
        }
    }

    /// Typical power rating at 70 °C, watts (common practice / from memory: 1/16, 1/10, 1/8, 1/4 W
    /// for thick-film chips, 0.25 W for the axial film part).
    pub fn power_rating_w(self) -> f64 {
        match self {
            Package::Chip0402 => 0.0625,
            Package::Chip0603 => 0.1,
            Package::Chip0805 => 0.125,
            Package::Chip1206 => 0.25,
            Package::ThroughHole0W25 => 0.25,
        }
    }

    /// Typical limiting element (maximum working) voltage, volts (common practice / from memory:
    /// 50, 75, 150, 200 V for thick-film chips, 250 V for the axial film part).
    pub fn max_working_voltage_v(self) -> f64 {
        match self {
            Package::Chip0402 => 50.0,
            Package::Chip0603 => 75.0,
            Package::Chip0805 => 150.0,
            Package::Chip1206 => 200.0,
            Package::ThroughHole0W25 => 250.0,
        }
    }
}

/// How the package ratings are known, for the part list's "Rating" column and its notes.
pub const PACKAGE_RATING_BASIS: &str = "typical package rating at 70 °C (common practice; check the part's datasheet)";

/// Common resistor power ratings, watts, from which a suggestion is picked (common practice).
pub const POWER_RATINGS_W: [f64; 11] = [0.05, 0.0625, 0.1, 0.125, 0.25, 0.5, 0.75, 1.0, 2.0, 3.0, 5.0];

/// What the part list is built with.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct PartSettings {
    /// The series resistor values are rounded to.
    pub series: ESeries,
    /// Resistor tolerance ordered, percent.
    pub tolerance_pct: f64,
    /// Resistor package.
    pub package: Package,
    /// The suggested power rating is at least this multiple of the worst dissipation
    /// (common practice: 2).
    pub power_derating_factor: f64,
}

impl Default for PartSettings {
    /// E24 values at 1 % in 0603 with 2× power derating (common practice: E24 values are widely
    /// stocked at 1 % in thick film).
    fn default() -> Self {
        PartSettings {
            series: ESeries::E24,
            tolerance_pct: 1.0,
            package: Package::Chip0603,
            power_derating_factor: 2.0,
        }
    }
}


/// One resistor of the part list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ResistorLine {
    /// Designator (R1, R2…).
    pub designator: String,
    /// Parameter identifier in the design record.
    pub id: String,
    /// Plain role of the part.
    pub label: String,
    /// The value the design calls for, ohms.
    pub design_value_ohm: f64,
    /// The series value to order (nearest by ratio), ohms.
    pub value_ohm: f64,
    /// (value − design value)/design value, percent.
    pub deviation_pct: f64,
    /// The value as an IEC 60062 RKM code (`4K7`).
    pub value_rkm: String,
    /// The value in full with its unit (`4.7 kΩ`).
    pub value_text: String,
    /// The series of the value.
    pub series: ESeries,
    /// Tolerance ordered, percent.
    pub tolerance_pct: f64,
    /// Package.
    pub package: Package,
    /// Worst dissipation over the analysed operating points and supply range, watts.
    pub max_power_w: Option<f64>,
    /// Suggested power rating, watts (smallest common rating ≥ derating factor × worst dissipation).
    pub suggested_rating_w: Option<f64>,
    /// The package's typical power rating at 70 °C, watts (common practice, see
    /// [`Package::power_rating_w`]; [`PACKAGE_RATING_BASIS`] says so wherever it is shown).
    pub package_rating_w: f64,
    /// Whether the package's rating reaches the suggested minimum rating (`None` without a
    /// dissipation figure).
    #[serde(default)]
    pub rating_sufficient: Option<bool>,
    /// Largest voltage across the part, volts.
    pub max_volts: Option<f64>,
    /// Rated voltage of this value in this package: min(√(P·R), limiting element voltage), volts.
    pub voltage_limit_v: f64,
    /// Findings: rounding, an overstressed package.
    pub notes: Vec<String>,
}

/// The active device's line: what it must provide.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DeviceLine {
    /// Designator (U1, or Q1, Q2 for discrete transistors).
    pub designator: String,
    /// The output stage required.
    pub stage: OutputStage,
    /// Plain description of the part.
    pub description: String,
    /// Lowest supply it must run from, volts.
    pub supply_min_v: f64,
    /// Highest supply it must run from, volts.
    pub supply_max_v: f64,
    /// Its negative rail, volts.
    pub negative_rail_v: f64,
    /// Lowest voltage its inputs see (both output states), volts; the input common-mode range must reach it.
    pub input_min_v: Option<f64>,
    /// Highest voltage its inputs see, volts.
    pub input_max_v: Option<f64>,
    /// Output high level the thresholds assume, volts.
    pub output_high_v: f64,
    /// Output low level the thresholds assume, volts.
    pub output_low_v: f64,
    /// Requirements and findings in words.
    pub notes: Vec<String>,
}

/// Common power ratings of small zener diodes, watts (SOD-323 0.2 W, SOT-23 0.3 W, SOD-123 and
/// DO-35 0.5 W, DO-41 1 W and 1.3 W, 5 W axial; common practice).
pub const ZENER_RATINGS_W: [f64; 7] = [0.2, 0.25, 0.3, 0.5, 1.0, 1.3, 5.0];

/// What kind of part an input-network line is (the input network fills these lines).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum NetworkPartKind {
    /// A resistor, value in ohms.
    Resistor,
    /// A capacitor, value in farads.
    Capacitor,
    /// A clamp diode (value: forward drop, volts).
    Diode,
    /// A TVS diode (value: standoff voltage, volts).
    Tvs,
}

/// One part of the input network in the part list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetworkPart {
    /// Designator, numbered after the design's other parts (R5, C2, D1…).
    pub designator: String,
    /// Resistor, capacitor, diode or TVS.
    pub kind: NetworkPartKind,
    /// Plain role of the part.
    pub label: String,
    /// Value in base units (ohms, farads; volts for diodes: forward drop or standoff).
    pub value: f64,
    /// The value in words with its unit.
    pub value_text: String,
    /// Worst continuous dissipation (highest or lowest stated input), watts.
    pub dissipation_w: f64,
    /// Dissipation at the stated surge, watts (`None` without a surge).
    pub surge_dissipation_w: Option<f64>,
    /// Suggested power rating, watts (resistors).
    pub suggested_power_w: Option<f64>,
    /// Largest voltage across the part, volts.
    pub max_volts: f64,
    /// Suggested voltage rating, volts (capacitors).
    pub suggested_voltage_v: Option<f64>,
    /// Largest current, amperes (clamps: at the surge when stated).
    pub max_current_a: f64,
    /// Requirements and findings in words.
    pub notes: Vec<String>,
}

/// The reference's regulating part: a zener diode or an adjustable shunt reference.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RegulatorLine {
    /// Designator (D1 for a zener, U2 for a shunt reference).
    pub designator: String,
    /// What to order, in words ("zener diode 3.3 V ±5 %").
    pub description: String,
    /// Its regulated voltage: Vz at the test current, or the programmed cathode voltage, volts.
    pub voltage_v: f64,
    /// Largest current through it over the supply range (highest supply), amperes.
    pub max_current_a: f64,
    /// Largest dissipation over the supply range, watts.
    pub max_power_w: f64,
    /// Suggested power rating (zener: the smallest of [`ZENER_RATINGS_W`] at least the derating
    /// factor times the largest dissipation), watts.
    pub suggested_rating_w: Option<f64>,
    /// Requirements and findings in words.
    pub notes: Vec<String>,
}
/// The part list of one design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Bom {
    /// One line per resistor, in the order of [`Circuit::parameters`].
    pub resistors: Vec<ResistorLine>,
    /// The active device.
    pub device: DeviceLine,
    /// The parts of the record's oscillator and debouncer ([`application::application_parts`];
    /// filled by [`crate::overview::part_list`], empty from [`bom`] alone).
    #[serde(default)]
    pub application: Vec<application::ApplicationPart>,
    /// The parts of the record's input network (made by the input network's part-list lines;
    /// filled by [`crate::overview::part_list`], empty from [`bom`] alone).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub input_network: Vec<NetworkPart>,
    /// The reference's zener or adjustable shunt reference, with its voltage and power
    /// (`crate::topology::reference::regulator_lines`; filled by [`crate::overview::part_list`]).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub regulators: Vec<RegulatorLine>,
    /// The settings it was built with.
    pub settings: PartSettings,
}

/// The column names of [`Bom::to_csv`].
pub const CSV_HEADER: [&str; 13] = [
    "designator",
    "part",
    "value",
    "value_full",
    "series",
    "tolerance_pct",
    "package",
    "dissipation_w",
    "suggested_rating_w",
    "package_rating_w",
    "max_voltage_v",
    "voltage_limit_v",
    "notes",
];

/// Builds the part list of `circuit` from its `analysis`. When `checks` gives a supply range,
/// the circuit is analysed again at its ends and the worst stress is kept. The active device's
/// output stage comes from the circuit ([`Circuit::output_stage`]).
pub fn bom<C: Circuit>(
    circuit: &C,
    analysis: &Analysis,
    checks: &CheckSettings,
    settings: &PartSettings,
) -> Result<Bom, DesignError> {
    crate::error::positive("parts.tolerance_pct", settings.tolerance_pct)?;
    crate::error::finite("parts.power_derating_factor", settings.power_derating_factor)?;
    if settings.power_derating_factor < 1.0 {
        return Err(DesignError::invalid("parts.power_derating_factor", "must be 1 or more (common practice: 2)"));
    }
    // Worst stress per designator over the nominal analysis and the supply extremes.
    let mut stress: Vec<(String, f64, f64)> =
        analysis.resistors.iter().map(|r| (r.designator.clone(), r.max_power_w, r.max_volts)).collect();
    for supply in [checks.supply_min_v, checks.supply_max_v].into_iter().flatten() {
        if let Ok(a) = analyse(&circuit.with_supply(supply), checks) {
            for r in &a.resistors {
                if let Some(s) = stress.iter_mut().find(|s| s.0 == r.designator) {
                    s.1 = s.1.max(r.max_power_w);
                    s.2 = s.2.max(r.max_volts);
                }
            }
        }
    }

    let params = circuit.parameters();
    let mut resistors = Vec::new();
    for p in params.iter().filter(|p| p.kind == ParameterKind::Resistor) {
        let designator = p.designator.clone().unwrap_or_else(|| p.id.clone());
        let value = settings.series.nearest(p.value).ok_or_else(|| {
            DesignError::invalid(
                &p.id,
                format!("must be a finite resistance above zero for the part list (got {})", p.value),
            )
        })?;
        let deviation_pct = (value - p.value) / p.value * 100.0;
        let (max_power_w, max_volts) = match stress.iter().find(|s| s.0 == designator) {
            Some(s) => (Some(s.1), Some(s.2)),
            None => (None, None),
        };
        let package = settings.package;
        let voltage_limit_v = (package.power_rating_w() * value).sqrt().min(package.max_working_voltage_v());
        let suggested_rating_w = max_power_w.map(|pw| {
            let need = pw * settings.power_derating_factor;
            POWER_RATINGS_W.iter().copied().find(|&r| r >= need).unwrap_or(need)
        });
        let mut notes = Vec::new();
        if deviation_pct.abs() > 1e-7 {
            notes.push(format!(
                "design value {} rounded to the nearest {} value ({:+.2} %); the thresholds move: use the standard-value search to rebalance",
                format_with_unit(p.value, 4, Unit::Ohm),
                settings.series,
                deviation_pct
            ));
        }
        if let Some(rating) = suggested_rating_w {
            if rating > package.power_rating_w() {
                let bigger = Package::ALL.iter().find(|k| k.power_rating_w() >= rating);
                notes.push(match bigger {
                    Some(k) => format!(
                        "{} is rated {} W, below the suggested {} W ({}× the worst dissipation, common practice): use {} or larger",
                        package.label(),
                        package.power_rating_w(),
                        rating,
                        settings.power_derating_factor,
                        k.label()
                    ),
                    None => format!(
                        "needs a {rating} W part ({}× the worst dissipation, common practice): none of the listed packages is rated that high",
                        settings.power_derating_factor
                    ),
                });
            }
        }
        if let Some(v) = max_volts {
            if v > voltage_limit_v {
                notes.push(format!(
                    "{:.1} V across the part exceeds its rated voltage {:.1} V in {} (min of √(P·R) and the package limit): use a larger package or split the resistor",
                    v,
                    voltage_limit_v,
                    package.label()
                ));
            }
        }
        resistors.push(ResistorLine {
            designator,
            id: p.id.clone(),
            label: p.label.clone(),
            design_value_ohm: p.value,
            value_ohm: value,
            deviation_pct,
            value_rkm: format_rkm(value, 3).unwrap_or_default(),
            value_text: format_with_unit(value, 3, Unit::Ohm),
            series: settings.series,
            tolerance_pct: settings.tolerance_pct,
            package,
            max_power_w,
            suggested_rating_w,
            package_rating_w: package.power_rating_w(),
            rating_sufficient: suggested_rating_w.map(|r| package.power_rating_w() >= r),
            max_volts,
            voltage_limit_v,
            notes,
        });
    }

    let mut device = device_line(circuit, analysis, circuit.output_stage());
    device.notes.extend(transistor_notes(circuit, device.supply_max_v, settings.power_derating_factor));
    Ok(Bom { resistors, device, application: Vec::new(), regulators: Vec::new(), input_network: Vec::new(), settings: *settings })
}

/// Discrete transistors' VCEO, IC and power requirements at the highest supply, from the
/// topology's bounds ([`Circuit::transistor_stress`]); current and power carry the derating factor
/// (common practice: rate parts at least 2× their worst stress). Empty for other active devices.
fn transistor_notes<C: Circuit>(circuit: &C, supply_max_v: f64, derating: f64) -> Vec<String> {
    let watts = |w: f64| format!("{} mW", crate::notation::format_significant(w * 1e3, 3));
    circuit
        .with_supply(supply_max_v)
        .transistor_stress()
        .iter()
        .map(|q| {
            format!(
                "{}: VCEO at least {} (largest VCE); IC rating at least {} ({}× the largest collector current {}); power rating at least {} ({}× the largest dissipation {})",
                q.designator,
                format_with_unit(q.vce_max_v, 3, Unit::Volt),
                format_with_unit(q.collector_current_max_a * derating, 3, Unit::Ampere),
                derating,
                format_with_unit(q.collector_current_max_a, 3, Unit::Ampere),
                watts(q.dissipation_max_w * derating),
                derating,
                watts(q.dissipation_max_w),
            )
        })
        .collect()
}

fn device_line<C: Circuit>(circuit: &C, analysis: &Analysis, stage: OutputStage) -> DeviceLine {
    let nominal = circuit.supply_v();
    let supplies = analysis.supply_corners.iter().map(|c| c.supply_v).chain([nominal]);
    let supply_min_v = supplies.clone().fold(f64::INFINITY, f64::min);
    let supply_max_v = supplies.fold(f64::NEG_INFINITY, f64::max);
    let input_min_v = analysis.device_inputs.iter().map(|n| n.min_v).reduce(f64::min);
    let input_max_v = analysis.device_inputs.iter().map(|n| n.max_v).reduce(f64::max);
    let negative_rail_v = circuit.negative_rail_v();
    let v = |x: f64| format_with_unit(x, 4, Unit::Volt);
    let mut notes = Vec::new();
    // One supply value reads "a single 5 V supply", a range "a single supply of 4.5 V to 5.5 V".
    let fixed = (supply_max_v - supply_min_v).abs() <= 1e-9 * supply_max_v.abs().max(1e-3);
    let supply = if fixed { format!("{} supply", v(supply_max_v)) } else { format!("supply of {} to {}", v(supply_min_v), v(supply_max_v)) };
    let rails = if negative_rail_v == 0.0 {
        format!("single {supply}")
    } else {
        format!("{supply} above a negative rail of {}", v(negative_rail_v))
    };
    notes.push(format!("must run from a {rails}"));
    // Discrete transistors have no common-mode range or datasheet output swing: their
    // requirements are the VCEO, IC and power lines (`transistor_notes`).
    let discrete = stage == OutputStage::DiscreteTransistors;
    if let (false, Some(lo), Some(hi)) = (discrete, input_min_v, input_max_v) {
        notes.push(format!("input common-mode range must cover {} to {} (both output states)", v(lo), v(hi)));
        let (dev_lo, dev_hi) = circuit.device_input_range();
        if lo < dev_lo - 1e-9 || hi > dev_hi + 1e-9 {
            notes.push(format!(
                "the entered device accepts only {} to {}: choose a device with a wider input range",
                v(dev_lo),
                v(dev_hi)
            ));
        }
    }
    let (voh, vol) = (analysis.output_high_v, analysis.output_low_v);
    notes.push(match stage {
        OutputStage::DiscreteTransistors => format!(
            "the thresholds assume output levels {} (high) and {} (low), set by RC2 and the emitter current",
            v(voh),
            v(vol)
        ),
        OutputStage::OpenDrain => format!(
            "output low must reach {} at the sink current, and the output must withstand the pull-up voltage; the high level {} is set by the pull-up network",
            v(vol),
            v(voh)
        ),
        OutputStage::LogicGate => format!("the thresholds assume output levels {} and {} at the load (CMOS outputs swing rail to rail at light load)", v(voh), v(vol)),
        _ => format!(
            "the thresholds assume output levels {} (high) and {} (low) at the load: choose a device whose guaranteed swing reaches them, or enter its datasheet levels",
            v(voh),
            v(vol)
        ),
    });
    DeviceLine {
        designator: if stage == OutputStage::DiscreteTransistors { "Q1, Q2".into() } else { "U1".into() },
        stage,
        description: stage.description().into(),
        supply_min_v,
        supply_max_v,
        negative_rail_v,
        input_min_v,
        input_max_v,
        output_high_v: voh,
        output_low_v: vol,
        notes,
    }
}

/// A number for the CSV: four significant digits, plain decimal (no unit).
fn csv_number(x: Option<f64>) -> String {
    match x {
        Some(v) => crate::notation::format_significant(v, 4),
        _ => String::new(),
    }
}

/// One record of [`Bom::to_csv`], field by field in the order of [`CSV_HEADER`]; empty fields
/// stay empty.
#[derive(Default)]
struct CsvRow {
    designator: String,
    part: String,
    value: String,
    value_full: String,
    series: String,
    tolerance_pct: String,
    package: String,
    dissipation_w: String,
    suggested_rating_w: String,
    package_rating_w: String,
    max_voltage_v: String,
    voltage_limit_v: String,
    notes: String,
}

impl CsvRow {
    fn fields(self) -> [String; 13] {
        [
            self.designator,
            self.part,
            self.value,
            self.value_full,
            self.series,
            self.tolerance_pct,
            self.package,
            self.dissipation_w,
            self.suggested_rating_w,
            self.package_rating_w,
            self.max_voltage_v,
            self.voltage_limit_v,
            self.notes,
        ]
    }

    /// The tolerance, package and package rating of the design's resistors, for an extra
    /// resistor line (application or input network parts share the design's resistor settings).
    fn with_resistor_settings(self, settings: &PartSettings) -> Self {
        CsvRow {
            tolerance_pct: csv_number(Some(settings.tolerance_pct)),
            package: settings.package.label().to_string(),
            package_rating_w: csv_number(Some(settings.package.power_rating_w())),
            ..self
        }
    }
}

/// Notes with a suggested voltage rating first, when there is one.
fn notes_with_voltage_rating(notes: &[String], suggested_voltage_v: Option<f64>) -> String {
    let rating = suggested_voltage_v.map(|v| format!("voltage rating at least {v} V"));
    rating.iter().chain(notes).cloned().collect::<Vec<_>>().join("; ")
}

impl Bom {
    /// The part list as CSV text per RFC 4180 (IETF, 2005): a header line ([`CSV_HEADER`]),
    /// one record per part, CRLF line ends, fields quoted where needed (the project's one CSV
    /// writer, [`crate::csv_text`]).
    pub fn to_csv(&self) -> String {
        let mut out = crate::csv_text::CsvText::new(b',', crate::csv_text::LineEnd::Crlf, 1024);
        out.row(CSV_HEADER.map(String::from));
        let mut line = |row: CsvRow| out.row(row.fields());
        for r in &self.resistors {
            line(CsvRow {
                designator: r.designator.clone(),
                part: format!("resistor, {}", r.label),
                value: r.value_rkm.clone(),
                value_full: r.value_text.clone(),
                series: r.series.to_string(),
                tolerance_pct: csv_number(Some(r.tolerance_pct)),
                package: r.package.label().to_string(),
                dissipation_w: csv_number(r.max_power_w),
                suggested_rating_w: csv_number(r.suggested_rating_w),
                package_rating_w: csv_number(Some(r.package_rating_w)),
                max_voltage_v: csv_number(r.max_volts),
                voltage_limit_v: csv_number(Some(r.voltage_limit_v)),
                notes: r.notes.join("; "),
            });
        }
        for p in &self.application {
            let resistor = p.kind == application::PartKind::Resistor;
            let row = CsvRow {
                designator: p.designator.clone(),
                part: format!("{}, {}", if resistor { "resistor" } else { "capacitor" }, p.label),
                value: p.value_rkm.clone().unwrap_or_else(|| p.value_text.clone()),
                value_full: p.value_text.clone(),
                series: p.series.to_string(),
                dissipation_w: csv_number(p.max_power_w),
                suggested_rating_w: csv_number(p.suggested_rating_w),
                max_voltage_v: csv_number(Some(p.max_volts)),
                notes: notes_with_voltage_rating(&p.notes, p.suggested_voltage_v),
                ..CsvRow::default()
            };
            line(if resistor { row.with_resistor_settings(&self.settings) } else { row });
        }
        for p in &self.input_network {
            use NetworkPartKind as K;
            let kind = match p.kind {
                K::Resistor => "resistor",
                K::Capacitor => "capacitor",
                K::Diode => "diode",
                K::Tvs => "TVS diode",
            };
            let row = CsvRow {
                designator: p.designator.clone(),
                part: format!("{kind}, {}", p.label),
                value: p.value_text.clone(),
                value_full: p.value_text.clone(),
                dissipation_w: csv_number(Some(p.dissipation_w)),
                suggested_rating_w: csv_number(p.suggested_power_w),
                max_voltage_v: csv_number(Some(p.max_volts)),
                notes: notes_with_voltage_rating(&p.notes, p.suggested_voltage_v),
                ..CsvRow::default()
            };
            line(if p.kind == K::Resistor { row.with_resistor_settings(&self.settings) } else { row });
        }
        for r in &self.regulators {
            let voltage = crate::notation::format_with_unit(r.voltage_v, 4, Unit::Volt);
            line(CsvRow {
                designator: r.designator.clone(),
                part: r.description.clone(),
                value: voltage.clone(),
                value_full: voltage,
                dissipation_w: csv_number(Some(r.max_power_w)),
                suggested_rating_w: csv_number(r.suggested_rating_w),
                max_voltage_v: csv_number(Some(r.voltage_v)),
                notes: r.notes.join("; "),
                ..CsvRow::default()
            });
        }
        let d = &self.device;
        line(CsvRow {
            designator: d.designator.clone(),
            part: d.description.clone(),
            max_voltage_v: csv_number(Some(d.supply_max_v - d.negative_rail_v)),
            notes: d.notes.join("; "),
            ..CsvRow::default()
        });
        out.finish()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    fn design(ra: f64, rb: f64, rf: f64, supply: f64) -> (InvertingSchmitt, Analysis) {
        let c = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(supply));
        let a = analyse(&c, &CheckSettings::default()).unwrap();
        (c, a)
    }

    #[test]
    fn standard_values_and_codes() {
        let (c, a) = design(10e3, 13.3e3, 47e3, 5.0);
        let b = bom(&c, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
        assert_eq!(b.resistors.len(), 3);
        assert_eq!(b.resistors[0].value_rkm, "10K");
        assert_eq!(b.resistors[0].value_text, "10 kΩ");
        assert!(b.resistors[0].notes.is_empty());
        // 13.3 k is not an E24 value: nearest by ratio is 13 k (−2.26 %).
        assert_eq!(b.resistors[1].value_ohm, 13e3);
        assert_eq!(b.resistors[1].value_rkm, "13K");
        assert!((b.resistors[1].deviation_pct + 2.2556).abs() < 1e-3);
        assert!(b.resistors[1].notes[0].contains("rounded"));
        assert_eq!(b.resistors[2].value_rkm, "47K");
        assert_eq!(b.device.designator, "U1");
    }

    #[test]
    fn derating_rule_picks_the_next_common_rating() {
        // Ra = 120 Ω from 5 V into node P at 2.485 V (output low: P = (5/120)/(2/120 + 1/10k))
        // dissipates 2.515²/120 = 52.7 mW; twice that (common practice) needs 0.125 W, above an
        // 0603's 0.1 W.
        let (c, a) = design(120.0, 120.0, 10e3, 5.0);
        let b = bom(&c, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
        let r1 = &b.resistors[0];
        let p = r1.max_power_w.unwrap();
        let node_p = (5.0 / 120.0) / (2.0 / 120.0 + 1.0 / 10e3);
        assert!((p - (5.0 - node_p) * (5.0 - node_p) / 120.0).abs() < 1e-12, "{p}");
        assert_eq!(r1.suggested_rating_w, Some(0.125));
        // The package's own rating stays the 0603's 0.1 W (common practice), and it falls short.
        assert_eq!((r1.package_rating_w, r1.rating_sufficient), (0.1, Some(false)));
        let cool = &b.resistors[2];
        assert_eq!((cool.package_rating_w, cool.rating_sufficient), (0.1, Some(true)));
        assert!(r1.notes.iter().any(|n| n.contains("use 0805 or larger")), "{:?}", r1.notes);
    }

    #[test]
    fn voltage_limit_is_the_lower_of_power_and_package() {
        // 0402: √(0.0625 W × 1 MΩ) = 250 V, package limit 50 V → 50 V; at 1 kΩ √62.5 = 7.9 V.
        let (c, a) = design(1e3, 1e6, 1e6, 5.0);
        let s = PartSettings { package: Package::Chip0402, ..PartSettings::default() };
        let b = bom(&c, &a, &CheckSettings::default(), &s).unwrap();
        assert!((b.resistors[0].voltage_limit_v - 62.5f64.sqrt()).abs() < 1e-12);
        assert_eq!(b.resistors[1].voltage_limit_v, 50.0);
    }

    #[test]
    fn device_note_names_one_supply_once_and_a_range_as_a_range() {
        let (c, a) = design(10e3, 10e3, 20e3, 5.0);
        let fixed = bom(&c, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
        assert!(fixed.device.notes.iter().any(|n| n == "must run from a single 5 V supply"), "{:?}", fixed.device.notes);
        let checks = CheckSettings { supply_min_v: Some(4.5), supply_max_v: Some(5.5), ..CheckSettings::default() };
        let a2 = analyse(&c, &checks).unwrap();
        let ranged = bom(&c, &a2, &checks, &PartSettings::default()).unwrap();
        assert!(ranged.device.notes.iter().any(|n| n == "must run from a single supply of 4.5 V to 5.5 V"), "{:?}", ranged.device.notes);
    }

    #[test]
    fn supply_range_raises_the_stress() {
        let (c, a) = design(10e3, 10e3, 20e3, 5.0);
        let checks = CheckSettings { supply_min_v: Some(4.5), supply_max_v: Some(5.5), ..CheckSettings::default() };
        let a2 = analyse(&c, &checks).unwrap();
        let nominal = bom(&c, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
        let ranged = bom(&c, &a2, &checks, &PartSettings::default()).unwrap();
        let ratio = ranged.resistors[0].max_power_w.unwrap() / nominal.resistors[0].max_power_w.unwrap();
        // Every voltage scales with the supply here, so power scales with its square.
        assert!((ratio - (5.5f64 / 5.0).powi(2)).abs() < 1e-9, "{ratio}");
        assert_eq!((ranged.device.supply_min_v, ranged.device.supply_max_v), (4.5, 5.5));
    }

    #[test]
    fn the_device_line_takes_the_stage_from_the_circuit() {
        // The open-drain template needs an open-drain comparator; the transistor pair two
        // transistors, not a "U1".
        for (key, stage, designator) in [
            ("open_drain", OutputStage::OpenDrain, "U1"),
            ("bjt_pair", OutputStage::DiscreteTransistors, "Q1, Q2"),
            ("cmos_buffer", OutputStage::LogicGate, "U1"),
        ] {
            let r = crate::catalog::templates().into_iter().find(|s| s.key == key).unwrap().record();
            let a = analyse(&r.circuit, &CheckSettings::default()).unwrap();
            let b = bom(&r.circuit, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
            assert_eq!((b.device.stage, b.device.designator.as_str()), (stage, designator), "{key}");
        }
    }


    #[test]
    fn bad_settings_are_typed_errors() {
        let (c, a) = design(10e3, 10e3, 20e3, 5.0);
        let s = PartSettings { tolerance_pct: 0.0, ..PartSettings::default() };
        assert!(bom(&c, &a, &CheckSettings::default(), &s).is_err());
        let s = PartSettings { power_derating_factor: 0.5, ..PartSettings::default() };
        assert!(bom(&c, &a, &CheckSettings::default(), &s).is_err());
        assert_eq!(serde_json::from_str::<PartSettings>("{}").unwrap(), PartSettings::default());
        assert_eq!(serde_json::to_string(&Package::Chip0805).unwrap(), "\"0805\"");
    }
}
