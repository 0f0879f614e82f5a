//! The topology side of the netlist: what a topology's `impl Netlisted` needs from the design
//! itself, on top of the plain netlist data of [`crate::netlist`] (which imports no topology).
//!
//! - [`builder`] starts a [`NetBuilder`] with the part-list designators of a design's
//!   [`Circuit::parameters`], so the netlist, the schematic and the tolerance tables share one
//!   numbering;
//! - [`input_centre_v`] is the signal source's DC value.
//!
//! The comparator reference network (a rail, a fixed source or a divider) is written by
//! `noninverting::reference_network`, beside the `Reference` type it reads.

use super::Circuit;
use crate::netlist::{NetBuilder, PartDesignator};

/// The part-list resistors of a design (the parameters with a designator), in parameter order.
pub fn part_designators<C: Circuit>(circuit: &C) -> Vec<PartDesignator> {
    circuit
        .parameters()
        .into_iter()
        .filter_map(|p| p.designator.map(|designator| PartDesignator { id: p.id, designator }))
        .collect()
}

/// Starts a netlist for `circuit`, recorded under the topology name `topology`; designators are
/// looked up in the circuit's parameters.
pub fn builder<C: Circuit>(topology: &str, circuit: &C) -> NetBuilder {
    NetBuilder::new(topology, part_designators(circuit))
}

/// The DC value for the signal source: the centre of the thresholds when they can be computed,
/// else the middle of `fallback` (volts).
pub fn input_centre_v<C: Circuit>(circuit: &C, fallback: (f64, f64)) -> f64 {
    match circuit.thresholds() {
        Ok(t) if t.centre_v().is_finite() => t.centre_v(),
        _ => 0.5 * (fallback.0 + fallback.1),
    }
}

#[cfg(test)]
mod tests {
    use crate::catalog;
    use crate::netlist::{Netlisted, SourceRole};
    use crate::topology::Circuit;

    #[test]
    fn every_starter_netlist_lists_each_part_once_with_its_value() {
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let c = s.record().circuit;
            let net = c.netlist();
            let parts: Vec<_> = c.parameters().into_iter().filter(|p| p.designator.is_some()).collect();
            let listed: Vec<_> = net.part_list().collect();
            assert_eq!(listed.len(), parts.len(), "{}", s.key);
            for (p, r) in parts.iter().zip(&listed) {
                assert_eq!(p.designator.as_deref(), Some(r.designator.as_str()), "{}", s.key);
                assert_eq!(p.value, r.resistance_ohm, "{}", s.key);
                assert_ne!(r.node_a, r.node_b, "{}: {} shorted", s.key, r.designator);
            }
            assert_eq!(net.sources.iter().filter(|s| s.role == SourceRole::Input).count(), 1);
            assert!(!net.devices.is_empty());
        }
    }

    #[test]
    fn the_input_sits_at_the_centre_of_the_thresholds() {
        for s in catalog::templates() {
            let c = s.record().circuit;
            let t = c.thresholds().unwrap();
            let vin = c.netlist().sources.into_iter().find(|s| s.role == SourceRole::Input).unwrap();
            assert_eq!(vin.volts, t.centre_v(), "{}", s.key);
        }
    }
}
