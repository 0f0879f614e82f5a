//! Starting points for new designs: one template per topology with a plain note on when to use it,
//! and the demo scenarios (invented for the demo, see shared/DOMAIN.md §7 — not measured data).
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
    TEMPLATES.to_vec()
}

/// The demo scenarios.
pub fn demos() -> Vec<Starter> {
    DEMOS.to_vec()
}

/// The plain note on when to use a topology, by its record name.
pub fn topology_note(name: &str) -> &'static str {
    TEMPLATES.iter().find(|s| record_topology(s.json) == Some(name)).map(|s| s.note).unwrap_or("")
}

fn record_topology(json: &str) -> Option<&str> {
    let i = json.find("\"topology\"")?;
    let rest = &json[i + 10..];
    let a = rest.find('"')? + 1;
    let b = rest[a..].find('"')? + a;
    Some(&rest[a..b])
}

const TEMPLATES: &[Starter] = &[
    Starter {
        key: "inverting",
        title: "Inverting Schmitt (op-amp or comparator)",
        note: "The usual choice: the signal drives a high-impedance input and a divider plus feedback set both thresholds anywhere between the rails. The output is high while the input is low.",
        hazardous: false,
        json: include_str!("catalog/inverting.json"),
    },
    Starter {
        key: "non_inverting",
        title: "Non-inverting Schmitt",
        note: "The signal drives the feedback network through R1, so the band can be wider than the output swing and sit above or below the rails. The source must supply current; the output is high while the input is high.",
        hazardous: false,
        json: include_str!("catalog/non_inverting.json"),
    },
    Starter {
        key: "open_drain",
        title: "Open-drain / open-collector comparator",
        note: "For comparators whose output only pulls low, or to give a logic level on another rail. The pull-up loads the feedback resistor and moves the upper threshold; Hysteron models it exactly.",
        hazardous: false,
        json: include_str!("catalog/open_drain.json"),
    },
    Starter {
        key: "plain_comparator",
        title: "Plain comparator (no hysteresis)",
        note: "The baseline with a single threshold. Use it to see what hysteresis buys on your signal; on its own it chatters on slow or noisy edges.",
        hazardous: false,
        json: include_str!("catalog/plain_comparator.json"),
    },
    Starter {
        key: "supply_monitor",
        title: "Supply or battery monitor (lockout)",
        note: "Undervoltage or overvoltage lockout of a rail: input divider, reference and hysteresis resistor, with trip and release referred to the monitored rail.",
        hazardous: false,
        json: include_str!("catalog/supply_monitor.json"),
    },
    Starter {
        key: "cmos_buffer",
        title: "Schmitt from a CMOS buffer or two inverters",
        note: "When a spare buffer or two inverters are on the board: two resistors around the gate's switching point give hysteresis. Cheap, but the band moves with the gate's threshold spread.",
        hazardous: false,
        json: include_str!("catalog/cmos_buffer.json"),
    },
    Starter {
        key: "schmitt_gate",
        title: "Schmitt-input logic gate",
        note: "A gate with built-in hysteresis: enter VT+ and VT− from its datasheet. An optional input divider scales and shifts the band for higher-voltage signals.",
        hazardous: false,
        json: include_str!("catalog/schmitt_gate.json"),
    },
    Starter {
        key: "bjt_pair",
        title: "Two-transistor Schmitt (emitter-coupled)",
        note: "From discrete transistors when no comparator is at hand; thresholds from hand analysis or a full Ebers–Moll solution.",
        hazardous: false,
        json: include_str!("catalog/bjt_pair.json"),
    },
];

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
        }
    }
}
