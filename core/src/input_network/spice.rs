//! The SPICE deck of a design with its input network: the trigger's own netlist
//! ([`crate::spice::write_deck`]) with the signal source moved to the field terminal (node
//! `field`) and the network's parts between it and the trigger's input, designators as in the
//! part list ([`super::parts::network_parts`]).
//!
//! Models (stated in the deck's comments): a clamp diode is SPICE's junction diode with IS chosen
//! so that it passes 1 mA at the stated forward drop (N = 1: IS = 1 mA·e^{−Vf/VT}, VT = kT/q at
//! 27 °C; the diode equation, from memory); a bidirectional TVS is two such junctions in
//! anti-series, each with reverse breakdown BV at 1 mA (IBV) and series resistance RS equal to the
//! dynamic resistance (V_clamp − V_br)/I_pp, so it conducts at about V_br plus one forward drop.

use super::Clamp;
use crate::error::DesignError;
use crate::netlist::{NetResistor, ResistorRole, SourceRole, GROUND};
use crate::record::DesignRecord;
use crate::bom::{NetworkPart, NetworkPartKind};
use crate::spice::{ramp_span_v, spice_number};
use crate::topology::Circuit;
use std::fmt::Write as _;

/// kT/q at 27 °C, volts (SPICE's nominal temperature; from memory).
const THERMAL_V: f64 = 0.025_865;

/// The input network put into a design's netlist: the signal source moved to the field terminal,
/// the network's resistors added, and the deck lines SPICE needs beyond the netlist.
#[derive(Debug, Clone)]
pub struct Dressed {
    /// VT+ at the field terminal, volts.
    pub vt_upper_v: f64,
    /// VT− at the field terminal, volts.
    pub vt_lower_v: f64,
    /// Deck lines (clamps, filter capacitor, models) to append before `.end`.
    pub extra: String,
}

/// Puts the record's input network into `nl` (the record's own netlist) and returns the field
/// thresholds and extra deck lines; `None` (and `nl` untouched) when the record has no network.
/// `parts` are the record's input-network lines of its part list (their designators name the
/// deck's elements; [`crate::overview::part_list`] makes them).
pub fn dress(record: &DesignRecord, parts: &[NetworkPart], nl: &mut crate::netlist::Netlist) -> Result<Option<Dressed>, DesignError> {
    let Some(net) = record.input_network.as_ref().filter(|n| n.has_parts()) else {
        return Ok(None);
    };
    let circuit = &record.circuit;
    circuit.validate()?;
    // Field thresholds of the circuit under its output load, as the deck (with RO and RL) has it.
    let report = super::analyse_network(&super::from_record::loaded_circuit(record), net, &record.checks, &record.parts)?;
    let Some(vin) = nl.sources.iter_mut().find(|s| s.role == SourceRole::Input) else {
        return Err(DesignError::invalid("input_network", "the circuit's netlist has no signal source to put the network in front of"));
    };
    let pin = std::mem::replace(&mut vin.node_plus, "field".into());
    vin.volts = report.field.centre_v();
    let supply = nl.sources.iter().find(|s| s.role == SourceRole::Supply).map_or("vcc".to_string(), |s| s.node_plus.clone());
    let negative = nl.sources.iter().find(|s| s.role == SourceRole::NegativeRail).map_or(GROUND.to_string(), |s| s.node_plus.clone());

    // The series chain: dropper top, series resistor, filter resistor; the last ends at the pin.
    let resistors: Vec<&NetworkPart> =
        parts.iter().filter(|p| p.kind == NetworkPartKind::Resistor).collect();
    let mut r_iter = resistors.into_iter();
    let mut chain: Vec<(String, f64, &'static str)> = Vec::new(); // (designator, ohms, node after)
    let mut bottom = None;
    if let Some(d) = net.dropper {
        let top = r_iter.next().map(|p| p.designator.clone()).unwrap_or_else(|| "RTOP".into());
        let bot = r_iter.next().map(|p| p.designator.clone()).unwrap_or_else(|| "RBOT".into());
        chain.push((top, d.top_ohm, "nd"));
        bottom = Some((bot, d.bottom_ohm));
    }
    if let Some(r) = net.series_ohm {
        chain.push((r_iter.next().map(|p| p.designator.clone()).unwrap_or_else(|| "RSER".into()), r, "nc"));
    }
    let clamp_node = chain.last().map(|c| c.2).unwrap_or("field");
    if let Some(f) = net.filter {
        chain.push((r_iter.next().map(|p| p.designator.clone()).unwrap_or_else(|| "RFLT".into()), f.r_ohm, "pin"));
    }
    let mut from = "field".to_string();
    let last = chain.len();
    let mut clamp_at = clamp_node.to_string();
    for (i, (des, ohm, after)) in chain.into_iter().enumerate() {
        let to = if i + 1 == last { pin.clone() } else { after.to_string() };
        if after == clamp_node {
            clamp_at = to.clone();
        }
        if let (Some((bot, ohms)), "nd") = (&bottom, after) {
            nl.resistors.push(NetResistor { designator: des.clone(), node_a: from.clone(), node_b: to.clone(), resistance_ohm: ohm, role: ResistorRole::PartList });
            nl.resistors.push(NetResistor { designator: bot.clone(), node_a: to.clone(), node_b: GROUND.into(), resistance_ohm: *ohms, role: ResistorRole::PartList });
        } else {
            nl.resistors.push(NetResistor { designator: des, node_a: from.clone(), node_b: to.clone(), resistance_ohm: ohm, role: ResistorRole::PartList });
        }
        from = to;
    }
    let (lo, _) = ramp_span_v(report.field.vt_upper_v, report.field.vt_lower_v);
    let n = spice_number;
    let mut extra = String::new();
    let _ = writeln!(extra, "* Input network (thresholds above are at the field terminal, node field; the trigger's pin is node {pin})");
    let diode_des: Vec<String> = parts
        .iter()
        .filter(|p| matches!(p.kind, NetworkPartKind::Diode | NetworkPartKind::Tvs))
        .map(|p| p.designator.clone())
        .collect();
    let des = |i: usize, fallback: &str| diode_des.get(i).cloned().unwrap_or_else(|| fallback.to_string());
    let mut models = String::new();
    match net.clamp {
        Clamp::None => {}
        Clamp::RailDiodes { forward_v, .. } => {
            let is = 1e-3 * libm::exp(-forward_v / THERMAL_V);
            let _ = writeln!(extra, "* Clamp diodes to the rails (model: 1 mA at Vf = {} V)", short(forward_v));
            let _ = writeln!(extra, "{} {clamp_at} {supply} DCLAMP", des(0, "D1"));
            let _ = writeln!(extra, "{} {negative} {clamp_at} DCLAMP", des(1, "D2"));
            let _ = writeln!(models, ".model DCLAMP D(IS={} N=1)", n(is));
        }
        Clamp::Tvs { breakdown_v, clamping_v, peak_current_a, .. } => {
            let rd = (clamping_v - breakdown_v) / peak_current_a;
            let d = des(0, "D1");
            let _ = writeln!(extra, "* Bidirectional TVS to ground: two junctions in anti-series (breakdown {} V, dynamic resistance {})", short(breakdown_v), n(rd));
            let _ = writeln!(extra, "{d}A {clamp_at} tvsmid DTVS");
            let _ = writeln!(extra, "{d}B {GROUND} tvsmid DTVS");
            let _ = writeln!(models, ".model DTVS D(IS=1e-14 N=1 BV={} IBV=1m RS={})", n(breakdown_v), n(rd.max(1e-3)));
        }
    }
    if let Some(f) = net.filter {
        let c = parts.iter().find(|p| p.kind == NetworkPartKind::Capacitor).map_or("C1".to_string(), |p| p.designator.clone());
        let _ = writeln!(extra, "* Filter capacitor at the pin");
        let _ = writeln!(extra, "{c} {pin} {GROUND} {} IC={}", n(f.c_f), short(net.gain() * lo));
    }
    extra.push_str(&models);
    Ok(Some(Dressed { vt_upper_v: report.field.vt_upper_v, vt_lower_v: report.field.vt_lower_v, extra }))
}

fn short(v: f64) -> String {
    let s = format!("{v:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s.is_empty() || s == "-" { "0".into() } else { s.to_string() }
}
