//! The input network of a design record: its report with the circuit as the record has it
//! (under the output load when the record has output dynamics), and the signal test through it.
//! Kept apart from the network's own analysis so that the record, which holds an
//! [`super::InputNetwork`], and the network's analysis do not import each other.

use super::{analyse_network, noise, NetworkReport};
use crate::error::DesignError;
use crate::record::DesignRecord;
use crate::topology::Circuit;

/// The record's input-network study: `None` when the record has no network (or an empty one).
pub fn record_network(record: &DesignRecord) -> Option<Result<NetworkReport, DesignError>> {
    let net = record.input_network.as_ref().filter(|n| n.has_parts())?;
    Some(analyse_network(&loaded_circuit(record), net, &record.checks, &record.parts))
}

/// The record's circuit as the input network sees it: under its output load when the record has
/// output dynamics the topology models ([`crate::topology::Circuit::with_output_load`]; the
/// feedback then sees the output's Thevenin source, and behind the network's source resistance
/// that shift grows with it), else the circuit itself.
pub fn loaded_circuit(record: &DesignRecord) -> crate::topology::Topology {
    record
        .output_dynamics
        .as_ref()
        .filter(|s| s.validate().is_ok())
        .and_then(|s| record.circuit.with_output_load(&s.load()))
        .unwrap_or_else(|| record.circuit.clone())
}

/// The record's signal study with its input network: the samples (taken as field-terminal
/// volts) pass the network's clamp and filter ([`noise::FrontEnd`]) and the trigger switches at
/// the field-referred thresholds; Rice's formula sees the filtered noise. Without a network, the
/// plain study ([`crate::signal::report::evaluate_record_signal`]).
pub fn record_signal(
    record: &DesignRecord,
    settings: &crate::signal::report::SignalSettings,
) -> Result<crate::signal::report::SignalReport, DesignError> {
    match signal_design(record)? {
        (_, None) => crate::signal::report::evaluate_record_signal(&record.circuit, settings),
        (design, Some(front)) => crate::signal::report::run_signal_through(settings, &design, None, &front, false).map(|r| r.report),
    }
}

/// The trigger as the signal test sees a record: its thresholds at the field terminal and the
/// network's front end (clamp and filter) when the record has an input network, else the
/// circuit's own thresholds and no front end. The page's signal job and [`record_signal`] use it.
pub fn signal_design(
    record: &DesignRecord,
) -> Result<(crate::signal::trigger::TriggerDesign, Option<noise::FrontEnd>), DesignError> {
    let design = crate::signal::trigger::TriggerDesign::from_circuit(&record.circuit)?;
    match record.input_network.as_ref().filter(|n| n.has_parts()) {
        None => Ok((design, None)),
        Some(net) => {
            let report = analyse_network(&loaded_circuit(record), net, &record.checks, &record.parts)?;
            let front = noise::FrontEnd::of(&report, net, record.circuit.negative_rail_v(), record.circuit.supply_v());
            Ok((design.with_thresholds(report.field), Some(front)))
        }
    }
}

