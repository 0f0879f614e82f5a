//! The design record: one versioned, documented JSON object that the page stores, the link
//! carries and the command-line entry point reads. It holds inputs only; results are recomputed.
//!
//! Reading a record ([`DesignRecord::from_value`]) takes three steps before serde sees it:
//! 1. the version is checked (a newer one is refused with [`RecordError::FutureVersion`]);
//! 2. numbers written as text in the page's notations (`"4k7"`, `"100n"`, `"2M2"`, `"R47"`,
//!    `"10 k"`) become numbers, wherever the schema holds a number ([`read_number_texts`]);
//! 3. an older record is carried forward one version at a time through [`MIGRATIONS`].
//!
//! Schema history (one line per version; each later version has its step in [`MIGRATIONS`]):
//! - 1: first version.

use crate::analysis::{CheckSettings, Targets};
use crate::bom::PartSettings;
use crate::search::SearchSettings;
use crate::error::DesignError;
use crate::tolerance::ToleranceSettings;
use crate::topology::Topology;
use serde::{Deserialize, Serialize};

/// One migration step: a record of schema version N, as JSON, in; the same record as version N+1
/// out. A step changes only what moved between the two versions and leaves `schema_version` to
/// [`migrate`].
pub type Step = fn(serde_json::Value) -> Result<serde_json::Value, RecordError>;

/// The migration steps in order: `MIGRATIONS[i]` carries schema `i + 1` to `i + 2`. Adding a schema
/// version is one step function and one entry here; [`SCHEMA_VERSION`] follows from the length.
/// The version moves only when a field changes meaning (a new field with a default needs no step).
pub const MIGRATIONS: &[Step] = &[];

/// The schema version this build writes: 1 plus the number of migration steps. Older versions are
/// migrated on read (see [`DesignRecord::from_value`]).
pub const SCHEMA_VERSION: u32 = 1 + MIGRATIONS.len() as u32;

/// Carries a record of schema version `from` (1 ≤ `from` ≤ [`SCHEMA_VERSION`]) forward to
/// [`SCHEMA_VERSION`] by applying each step of [`MIGRATIONS`] from `from` on, in order.
pub fn migrate(value: serde_json::Value, from: u32) -> Result<serde_json::Value, RecordError> {
    migrate_with(MIGRATIONS, value, from)
}

/// [`migrate`] over any list of steps (the tests run the mechanism on steps of their own).
fn migrate_with(steps: &[Step], mut value: serde_json::Value, from: u32) -> Result<serde_json::Value, RecordError> {
    let newest = 1 + steps.len() as u32;
    if from == 0 || from > newest {
        return Err(RecordError::Malformed { message: format!("schema_version {from} cannot be migrated") });
    }
    for step in &steps[(from - 1) as usize..] {
        value = step(value)?;
    }
    if let Some(obj) = value.as_object_mut() {
        obj.insert("schema_version".into(), newest.into());
    }
    Ok(value)
}

/// Fields without a unit suffix that hold numbers (settings counts, ratios, seeds, temperatures
/// in °C, phases in degrees, a fixed rail's volts under `fixed`). With the unit suffixes of
/// [`NUMBER_SUFFIXES`] they are where [`read_number_texts`] reads text as a number. When a migration
/// step renames a numeric field, keep the old name here too (the texts are read before migrating).
pub const NUMBER_FIELDS: &[&str] = &[
    "beta", "beta_f", "beta_f_limits", "beta_r", "beta_temperature_exponent", "bias_error_fraction", "centre", "corner_limit", "cycles", "divider_current_ratio",
    "drift_half_width", "duty", "exponent", "fail_above_false_edges_per_edge", "falling_phase_deg", "fixed",
    "fraction", "half_width", "high_fraction", "histogram_bins", "is_temperature_exponent", "oscillator_cycles", "order", "phase_deg",
    "power_derating_factor", "pullup_ratio_limit", "relative_amplitude", "resistor_tolerance",
    "rising_phase_deg", "samples", "seed", "slew_rate_v_per_us", "steps", "target_false_edges_per_edge", "temperature_max_c",
    "temperature_min_c", "time_column", "top_n", "trials", "voltage_column",
];

/// Unit suffixes of numeric field names (`rf_ohm`, `supply_v`, `ib_a`, `c_f`, `delay_s`...).
pub const NUMBER_SUFFIXES: &[&str] = &["_ohm", "_v", "_mv", "_a", "_f", "_s", "_hz", "_w", "_k", "_c", "_pct", "_deg"];

/// Field names that end like a unit but hold text (`rail_a` names the rail resistor A returns to).
const TEXT_FIELDS: &[&str] = &["rail_a"];

/// Whether the record schema holds a number (or a list of numbers) under this field name.
fn is_number_field(key: &str) -> bool {
    !TEXT_FIELDS.contains(&key)
        && (NUMBER_FIELDS.contains(&key) || NUMBER_SUFFIXES.iter().any(|s| key.ends_with(s)))
}

/// Reads numbers written as text, the way the page's fields accept them (engineering notation,
/// SI prefixes, IEC 60062 RKM code; see [`crate::notation::parse_value`]): `"4k7"` → 4700,
/// `"100n"` → 1e-7, `"R47"` → 0.47. Only strings under numeric fields ([`NUMBER_SUFFIXES`],
/// [`NUMBER_FIELDS`]) are read; names, notes, enum tags and rails stay text. A whole value becomes
/// an integer so that counts (`"trials": "10k"`) read too. A text that is not a finite number there
/// is an error naming the field (its path in the record) and the text.
///
/// ```
/// use hysteron_core::record::read_number_texts;
/// let mut v = serde_json::json!({"name": "4k7", "circuit": {"rf_ohm": "4k7", "rail_a": "supply"}});
/// read_number_texts(&mut v).unwrap();
/// assert_eq!(v["circuit"]["rf_ohm"], 4700);
/// assert_eq!(v["name"], "4k7");
/// ```
pub fn read_number_texts(value: &mut serde_json::Value) -> Result<(), RecordError> {
    read_texts_under(value, &mut Vec::new(), false)
}

/// One step of a path into the record: a field name or a list position.
enum PathStep<'a> {
    Field(&'a str),
    Item(usize),
}

/// The path as written in messages: `circuit.rf_ohm`, `signal.components[0].amplitude_v`.
fn path_text(path: &[PathStep<'_>]) -> String {
    let mut out = String::new();
    for step in path {
        match step {
            PathStep::Field(k) if out.is_empty() => out.push_str(k),
            PathStep::Field(k) => {
                out.push('.');
                out.push_str(k);
            }
            PathStep::Item(i) => out.push_str(&format!("[{i}]")),
        }
    }
    out
}

/// Walks the value; the path is built only when a text fails (no allocation per field).
fn read_texts_under<'a>(value: &'a mut serde_json::Value, path: &mut Vec<PathStep<'a>>, numeric: bool) -> Result<(), RecordError> {
    use serde_json::Value;
    match value {
        Value::String(text) if numeric => {
            *value = number_of_text(text).map_err(|reason| {
                RecordError::Invalid(DesignError::invalid(&path_text(path), format!("\"{text}\" is not a number ({reason})")))
            })?;
            Ok(())
        }
        Value::Array(items) => {
            for (i, item) in items.iter_mut().enumerate() {
                path.push(PathStep::Item(i));
                read_texts_under(item, path, numeric)?;
                path.pop();
            }
            Ok(())
        }
        Value::Object(map) => {
            for (key, item) in map.iter_mut() {
                path.push(PathStep::Field(key.as_str()));
                read_texts_under(item, path, is_number_field(key))?;
                path.pop();
            }
            Ok(())
        }
        _ => Ok(()),
    }
}

/// One text as a JSON number: whole values in the safe integer range as integers, others as floats.
fn number_of_text(text: &str) -> Result<serde_json::Value, String> {
    let x = crate::notation::parse_value(text).map_err(|e| e.to_string())?;
    if !x.is_finite() {
        return Err("it is too large".into());
    }
    const SAFE: f64 = 9_007_199_254_740_992.0; // 2^53: every integer up to here is exact in f64
    if x.fract() == 0.0 && x.abs() <= SAFE {
        // Cast is exact: x is whole and within ±2^53.
        return Ok(if x >= 0.0 { (x as u64).into() } else { (x as i64).into() });
    }
    serde_json::Number::from_f64(x).map(serde_json::Value::Number).ok_or_else(|| "it is not finite".into())
}

/// One design: its name and notes, circuit, targets and the settings of every study.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignRecord {
    /// Schema version of this record.
    pub schema_version: u32,
    /// The design's name, shown as text (never interpreted as markup).
    pub name: String,
    /// Free notes for the bench sheet.
    #[serde(default)]
    pub notes: String,
    /// What the circuit is for and the signal it sees, in the designer's words.
    #[serde(default)]
    pub purpose: String,
    /// The circuit: topology, parts, device and rails.
    pub circuit: Topology,
    /// Threshold targets for synthesis, when the designer has them.
    #[serde(default)]
    pub targets: Option<Targets>,
    /// Operating range and the numbers the design checks need.
    #[serde(default)]
    pub checks: CheckSettings,
    /// Tolerance-analysis settings; `None`: no tolerance analysis.
    #[serde(default)]
    pub tolerance: Option<ToleranceSettings>,
    /// The signal study: the waveform the design will see (generated or imported), timing and sweep.
    #[serde(default)]
    pub signal: Option<crate::signal::report::SignalSettings>,
    /// Applications that ride on the thresholds: RC relaxation oscillator and RC debouncer.
    #[serde(default)]
    pub application: Option<crate::signal::report::ApplicationSettings>,
    /// How the part list is built (series, tolerance, package).
    #[serde(default)]
    pub parts: PartSettings,
    /// Standard-value search settings; `None`: no search.
    #[serde(default)]
    pub search: Option<SearchSettings>,
    /// The input network between the field terminal and the trigger's input (dropper, series
    /// resistor, clamp, RC filter; see [`crate::input_network`]); `None`: the field terminal is
    /// the trigger's input.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_network: Option<crate::input_network::InputNetwork>,
    /// Output dynamics (slew rate, output resistance, load, speed-up capacitor); `None`: ideal output.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_dynamics: Option<crate::output_dynamics::OutputDynamicsSettings>,
    /// Power-up study (supply ramp); `None`: not studied.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub power_up: Option<crate::power_up::PowerUpSettings>,
}

/// Why a record could not be read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum RecordError {
    /// The text is not valid JSON, or does not have the record's shape.
    Malformed {
        /// The parser's message, with line and column.
        message: String,
    },
    /// The record was written by a newer version of Hysteron.
    FutureVersion {
        /// The version found.
        found: u32,
        /// The newest version this build reads.
        supported: u32,
    },
    /// The record names a topology this build does not know.
    UnknownTopology {
        /// The name found.
        name: String,
    },
    /// The record parsed but a value in it is invalid.
    Invalid(DesignError),
}

impl std::fmt::Display for RecordError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RecordError::Malformed { message } => write!(f, "not a readable design record: {message}"),
            RecordError::FutureVersion { found, supported } => write!(
                f,
                "this design was saved by a newer version (schema {found}); this page reads schema {supported} and older"
            ),
            RecordError::UnknownTopology { name } => write!(
                f,
                "unknown topology \"{name}\"; known topologies: {}",
                Topology::NAMES.join(", ")
            ),
            RecordError::Invalid(e) => write!(f, "{e}"),
        }
    }
}

impl std::error::Error for RecordError {}

impl DesignRecord {
    /// A record for a circuit with defaults for everything else.
    pub fn new(name: impl Into<String>, circuit: Topology) -> Self {
        DesignRecord {
            schema_version: SCHEMA_VERSION,
            name: name.into(),
            notes: String::new(),
            purpose: String::new(),
            circuit,
            targets: None,
            checks: CheckSettings::default(),
            tolerance: None,
            signal: None,
            application: None,
            parts: PartSettings::default(),
            search: None,
            input_network: None,
            output_dynamics: None,
            power_up: None,
        }
    }

    /// Reads a record from a JSON value: checks the version, reads numbers written as text
    /// ([`read_number_texts`]), migrates an older schema ([`migrate`]), names an unknown topology,
    /// then deserialises.
    pub fn from_value(mut value: serde_json::Value) -> Result<Self, RecordError> {
        let obj = value
            .as_object()
            .ok_or_else(|| RecordError::Malformed { message: "a design record must be a JSON object".into() })?;
        let version = match obj.get("schema_version") {
            Some(v) => v
                .as_u64()
                .and_then(|v| u32::try_from(v).ok())
                .ok_or_else(|| RecordError::Malformed { message: "schema_version must be a whole number".into() })?,
            None => return Err(RecordError::Malformed { message: "missing field `schema_version`".into() }),
        };
        if version > SCHEMA_VERSION {
            return Err(RecordError::FutureVersion { found: version, supported: SCHEMA_VERSION });
        }
        if version == 0 {
            return Err(RecordError::Malformed { message: "schema_version 0 does not exist".into() });
        }
        read_number_texts(&mut value)?;
        let value = migrate(value, version)?;
        if let Some(name) = value.get("circuit").and_then(|c| c.get("topology")).and_then(|t| t.as_str()) {
            if !Topology::NAMES.contains(&name) {
                return Err(RecordError::UnknownTopology { name: name.to_string() });
            }
        }
        let mut record: DesignRecord =
            serde_json::from_value(value).map_err(|e| RecordError::Malformed { message: e.to_string() })?;
        record.schema_version = SCHEMA_VERSION;
        Ok(record)
    }

    /// Reads a record from JSON text.
    pub fn from_json(text: &str) -> Result<Self, RecordError> {
        let value: serde_json::Value =
            serde_json::from_str(text).map_err(|e| RecordError::Malformed { message: e.to_string() })?;
        Self::from_value(value)
    }

    /// Writes the record as pretty JSON.
    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).unwrap_or_else(|_| String::from("{}"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;
    use crate::topology::Circuit;

    fn sample() -> DesignRecord {
        DesignRecord::new("t", Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0))))
    }

    #[test]
    fn json_round_trip() {
        let r = sample();
        assert_eq!(DesignRecord::from_json(&r.to_json()).unwrap(), r);
    }

    #[test]
    fn future_version_is_refused() {
        let mut v = serde_json::to_value(sample()).unwrap();
        v["schema_version"] = 99.into();
        assert!(matches!(DesignRecord::from_value(v), Err(RecordError::FutureVersion { found: 99, .. })));
    }

    #[test]
    fn unknown_topology_is_named() {
        let mut v = serde_json::to_value(sample()).unwrap();
        v["circuit"]["topology"] = "flux_capacitor".into();
        let e = DesignRecord::from_value(v).unwrap_err();
        assert!(e.to_string().contains("flux_capacitor"));
    }

    #[test]
    fn malformed_json_is_reported() {
        assert!(matches!(DesignRecord::from_json("{"), Err(RecordError::Malformed { .. })));
        assert!(matches!(DesignRecord::from_json("[]"), Err(RecordError::Malformed { .. })));
    }

    // --- numbers written as text (issue: the command line said "invalid type: string, expected f64")

    #[test]
    fn numbers_read_in_the_page_notations() {
        // Values from the notation's own rules (engineering prefixes; IEC 60062 RKM code, from memory).
        let cases = [("4k7", 4700.0), ("4K7", 4700.0), ("100n", 100e-9), ("2M2", 2.2e6), ("R47", 0.47), ("10 k", 10e3)];
        for (text, want) in cases {
            let mut v = serde_json::to_value(sample()).unwrap();
            v["circuit"]["rf_ohm"] = text.into();
            let r = DesignRecord::from_value(v).unwrap_or_else(|e| panic!("{text}: {e}"));
            let Topology::Inverting(c) = &r.circuit else { panic!("topology changed") };
            assert!((c.rf_ohm - want).abs() <= 1e-12 * want, "{text} read as {}", c.rf_ohm);
        }
    }

    #[test]
    fn text_fields_and_tags_stay_text() {
        let mut v = serde_json::to_value(sample()).unwrap();
        v["name"] = "4k7".into();
        v["notes"] = "100n".into();
        v["purpose"] = "2M2".into();
        let r = DesignRecord::from_value(v).unwrap();
        assert_eq!((r.name.as_str(), r.notes.as_str(), r.purpose.as_str()), ("4k7", "100n", "2M2"));
        // rail_a ends like an ampere field but names a rail.
        assert!(!is_number_field("rail_a") && !is_number_field("topology") && is_number_field("ib_a"));
    }

    #[test]
    fn counts_and_nested_settings_read_too() {
        let mut v = serde_json::to_value(sample()).unwrap();
        v["tolerance"] = serde_json::json!({"monte_carlo": {"trials": "10k", "seed": "42"}});
        v["circuit"]["device"]["supply_v"] = "3.3".into();
        let r = DesignRecord::from_value(v).unwrap();
        let t = r.tolerance.unwrap();
        assert_eq!((t.monte_carlo.trials, t.monte_carlo.seed), (10_000, 42));
        assert_eq!(r.circuit.supply_v(), 3.3);
    }

    #[test]
    fn a_text_that_is_no_number_names_the_field_and_the_text() {
        let mut v = serde_json::to_value(sample()).unwrap();
        v["circuit"]["rf_ohm"] = "4q7".into();
        let e = DesignRecord::from_value(v).unwrap_err();
        let RecordError::Invalid(DesignError::InvalidValue { field, reason }) = &e else { panic!("{e:?}") };
        assert_eq!(field, "circuit.rf_ohm");
        assert!(reason.contains("\"4q7\""), "{reason}");
        // A number too large for f64 is refused too.
        let mut v = serde_json::to_value(sample()).unwrap();
        v["circuit"]["rf_ohm"] = "1e999".into();
        assert!(matches!(DesignRecord::from_value(v), Err(RecordError::Invalid(_))));
    }

    // --- migration

    /// Test step 1 → 2: `notes` was renamed `remarks`.
    fn rename_notes(mut v: serde_json::Value) -> Result<serde_json::Value, RecordError> {
        if let Some(o) = v.as_object_mut() {
            if let Some(n) = o.remove("notes") {
                o.insert("remarks".into(), n);
            }
        }
        Ok(v)
    }

    /// Test step 2 → 3: `remarks` gets a prefix (to see the order the steps run in).
    fn tag_remarks(mut v: serde_json::Value) -> Result<serde_json::Value, RecordError> {
        let text = v["remarks"].as_str().map(|s| format!("v3: {s}")).ok_or_else(|| RecordError::Malformed {
            message: "remarks missing".into(),
        })?;
        v["remarks"] = text.into();
        Ok(v)
    }

    #[test]
    fn steps_run_in_order_from_the_record_version() {
        let steps: &[Step] = &[rename_notes, tag_remarks];
        let v1 = serde_json::json!({"schema_version": 1, "notes": "n"});
        let out = migrate_with(steps, v1, 1).unwrap();
        assert_eq!(out, serde_json::json!({"schema_version": 3, "remarks": "v3: n"}));
        // A version-2 record skips the first step.
        let v2 = serde_json::json!({"schema_version": 2, "remarks": "r"});
        assert_eq!(migrate_with(steps, v2, 2).unwrap()["remarks"], "v3: r");
        // The newest version passes unchanged; a step's error stops the chain.
        let v3 = serde_json::json!({"schema_version": 3, "remarks": "x"});
        assert_eq!(migrate_with(steps, v3.clone(), 3).unwrap(), v3);
        assert!(migrate_with(steps, serde_json::json!({"schema_version": 2}), 2).is_err());
        assert!(migrate_with(steps, serde_json::json!({}), 4).is_err());
        assert!(migrate_with(steps, serde_json::json!({}), 0).is_err());
    }

    #[test]
    fn the_schema_version_is_one_plus_the_steps() {
        assert_eq!(SCHEMA_VERSION as usize, 1 + MIGRATIONS.len());
        // Every catalog record (written at version 1) reads through the whole chain.
        for t in crate::catalog::templates() {
            let mut v = serde_json::to_value(t.record()).unwrap();
            v["schema_version"] = 1.into();
            let r = DesignRecord::from_value(v).unwrap();
            assert_eq!(r.schema_version, SCHEMA_VERSION);
        }
    }
}
