//! Starting points for new designs: one template per topology with a plain note on when to use it,
//! and the demo scenarios (invented for the demo, see shared/DOMAIN.md §7 — not measured data).
//!
//! The templates come from the topologies themselves ([`Topology::ENTRIES`], each module's
//! [`crate::topology::Described`]): registering a topology adds its template here.
//!
//! Templates and demos are design records in JSON, read through [`DesignRecord::from_json`] like any
//! stored or shared record, so they exercise the same path and cannot drift from the schema.

use crate::record::DesignRecord;
use crate::topology::Topology;

/// A starting point offered to the user.
#[derive(Debug, Clone, PartialEq)]
pub struct Starter {
    /// Stable key (used in element ids and tests).
    pub key: &'static str,
    /// Short title.
    pub title: &'static str,
    /// When an engineer reaches for it, in plain words.
    pub note: &'static str,
    /// Whether the scenario involves mains, battery packs or high voltage (show cautions).
    pub hazardous: bool,
    json: &'static str,
}

impl Starter {
    /// The starter's design record.
    pub fn record(&self) -> DesignRecord {
        // The catalog's JSON is checked by a unit test for every entry, so this cannot fail in a
        // released build; fall back to the first template rather than panic.
        DesignRecord::from_json(self.json).unwrap_or_else(|_| fallback())
    }
}

fn fallback() -> DesignRecord {
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;
    DesignRecord::new(
        "Untitled design",
        Topology::Inverting(InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0))),
    )
}

/// One template per topology, in the order topologies are offered.
pub fn templates() -> Vec<Starter> {
    Topology::ENTRIES
        .iter()
        .map(|e| Starter { key: e.name, title: e.title, note: e.note, hazardous: false, json: e.template_json })
        .collect()
}

/// The demo scenarios.
pub fn demos() -> Vec<Starter> {
    DEMOS.to_vec()
}

/// The plain note on when to use a topology, by its record name (empty for an unknown name).
pub fn topology_note(name: &str) -> &'static str {
    Topology::ENTRIES.iter().find(|e| e.name == name).map(|e| e.note).unwrap_or("")
}

const DEMOS: &[Starter] = &[
    Starter {
        key: "lathe-tachometer",
        title: "Lathe spindle tachometer",
        note: "Hall pickup on a long cable into a 5 V board; hum and drive noise.",
        hazardous: false,
        json: include_str!("catalog/demo_lathe_tachometer.json"),
    },
    Starter {
        key: "cabin-battery",
        title: "Cabin battery guard",
        note: "Disconnect a 12 V fridge below 11.5 V, reconnect above 12.7 V.",
        hazardous: true,
        json: include_str!("catalog/demo_cabin_battery.json"),
    },
    Starter {
        key: "greenhouse-valve",
        title: "Greenhouse valve feedback",
        note: "24 V valve-position signal checked against an IEC 61131-2 Type 1 input.",
        hazardous: false,
        json: include_str!("catalog/demo_greenhouse_valve.json"),
    },
    Starter {
        key: "rain-gauge",
        title: "Rain-gauge tipping bucket",
        note: "Reed switch on 20 m of cable, RC debounce into a Schmitt-input gate.",
        hazardous: false,
        json: include_str!("catalog/demo_rain_gauge.json"),
    },
    Starter {
        key: "beehive-clock",
        title: "Beehive scale wake-up clock",
        note: "One Schmitt inverter as a 1 Hz RC oscillator at 3.3 V.",
        hazardous: false,
        json: include_str!("catalog/demo_beehive_clock.json"),
    },
    Starter {
        key: "dust-extractor",
        title: "Workshop dust-extractor current sense",
        note: "Two-transistor Schmitt on a slow 0–2 V current-transformer signal, 12 V.",
        hazardous: false,
        json: include_str!("catalog/demo_dust_extractor.json"),
    },
    Starter {
        key: "sawmill-end-stop",
        title: "Sawmill carriage end stop",
        note: "24 V sensor on a noisy cable: dropper, clamps and filter; shunt reference.",
        hazardous: false,
        json: include_str!("catalog/demo_sawmill_end_stop.json"),
    },
];

#[cfg(test)]
mod tests {
    use super::*;
    use crate::evaluate::evaluate;

    #[test]
    fn every_starter_reads_and_evaluates_without_errors() {
        for s in templates().into_iter().chain(demos()) {
            let r = DesignRecord::from_json(s.json).unwrap_or_else(|e| panic!("{}: {e}", s.key));
            let ev = evaluate(&r);
            assert!(ev.errors.is_empty(), "{}: {:?}", s.key, ev.errors);
        }
    }

    #[test]
    fn every_topology_has_a_template_and_a_note() {
        for name in Topology::NAMES {
            assert!(!topology_note(name).is_empty(), "no template for {name}");
            // The template is a design of the topology it is offered for.
            let s = templates().into_iter().find(|s| s.key == *name).unwrap();
            assert_eq!(s.record().circuit.name(), *name);
            assert_eq!(s.record().circuit.title(), s.title);
        }
    }
}
