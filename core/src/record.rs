//! The design record: one versioned, documented JSON object that the page stores, the link
//! carries and the command-line entry point reads. It holds inputs only; results are recomputed.
//!
//! Schema history:
//! - 1: first version.

use crate::analysis::{CheckSettings, Targets};
use crate::bom::PartSettings;
use crate::search::SearchSettings;
use crate::error::DesignError;
use crate::tolerance::ToleranceSettings;
use crate::topology::Topology;
use serde::{Deserialize, Serialize};

/// The schema version this build writes. Older versions are migrated on read (see [`DesignRecord::from_json`]).
pub const SCHEMA_VERSION: u32 = 1;

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
        }
    }

    /// Reads a record from a JSON value, checking the version and naming unknown topologies.
    pub fn from_value(value: serde_json::Value) -> Result<Self, RecordError> {
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
        if let Some(name) = obj.get("circuit").and_then(|c| c.get("topology")).and_then(|t| t.as_str()) {
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
}
