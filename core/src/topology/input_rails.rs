//! The rail check of the device inputs: a node at an input of the active device that can go
//! beyond the device's supply rails by more than the usual absolute-maximum margin drives the
//! input's protection diodes into conduction, whatever the device's common-mode range is said to
//! be. [`super::analyse`] adds these warnings beside its common-mode and phase-reversal checks.

use crate::analysis::{NodeRange, Warning, WarningCode};

/// How far an input may go beyond a supply rail before the device's absolute maximum rating is
/// exceeded, volts (common practice: most comparator, op-amp and CMOS logic datasheets give
/// "VCC + 0.3 V" and "VEE − 0.3 V" as the input's absolute maximum).
pub const ABSOLUTE_MAXIMUM_MARGIN_V: f64 = 0.3;

/// One warning per device-input node and side whose range leaves `negative_rail_v − 0.3 V …
/// supply_v + 0.3 V`, naming the node, how far it goes and the limit it passes. Below the negative
/// rail it carries the phase-reversal code and says so; [`super::analyse`] then gives no separate
/// common-mode or phase-reversal warning for that node and side (one node, one message).
pub fn rail_warnings(nodes: &[NodeRange], supply_v: f64, negative_rail_v: f64) -> Vec<Warning> {
    let hi_limit = supply_v + ABSOLUTE_MAXIMUM_MARGIN_V;
    let lo_limit = negative_rail_v - ABSOLUTE_MAXIMUM_MARGIN_V;
    let mut out = Vec::new();
    for n in nodes {
        if n.max_v > hi_limit {
            out.push(Warning::new(
                WarningCode::CommonModeRange,
                format!(
                    "{} can reach {:.3} V, above the device's supply rail ({:.3} V) by more than {} V, its usual absolute maximum: its input protection conducts; lower the divider ratio at that node or clamp it to the rail through a resistor",
                    n.name, n.max_v, supply_v, ABSOLUTE_MAXIMUM_MARGIN_V
                ),
            ));
        }
        if n.min_v < lo_limit {
            out.push(Warning::new(
                WarningCode::PhaseReversal,
                format!(
                    "{} can reach {:.3} V, below the device's negative rail ({:.3} V) by more than {} V, its usual absolute maximum: its input protection conducts and many devices invert their output there; clamp the node or limit its current with a series resistor",
                    n.name, n.min_v, negative_rail_v, ABSOLUTE_MAXIMUM_MARGIN_V
                ),
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::CheckSettings;
    use crate::topology::analyse;

    fn node(min_v: f64, max_v: f64) -> NodeRange {
        NodeRange { name: "node P".into(), min_v, max_v }
    }

    #[test]
    fn only_nodes_beyond_the_margin_warn_and_each_names_node_and_limit() {
        assert!(rail_warnings(&[node(-0.3, 5.3)], 5.0, 0.0).is_empty());
        let w = rail_warnings(&[node(-0.5, 7.5)], 5.0, 0.0);
        assert_eq!(w.len(), 2);
        assert!(w[0].message.contains("node P") && w[0].message.contains("7.500 V") && w[0].message.contains("5.000 V"), "{}", w[0].message);
        assert!(w[1].message.contains("-0.500 V") && w[1].message.contains("0.000 V"), "{}", w[1].message);
    }

    #[test]
    fn the_greenhouse_demo_warns_that_node_p_passes_the_5_v_rail() {
        // 30 V on the 24 V input: node P = (30/5.6k + 4.9/9.1k)/(1/5.6k + 1/2k + 1/9.1k) = 7.48 V
        // (nodal sum by hand, output high), on a comparator supplied from 5 V.
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "greenhouse-valve").unwrap().record();
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let p = (30.0 / 5.6e3 + 4.9 / 9.1e3) / (1.0 / 5.6e3 + 1.0 / 2e3 + 1.0 / 9.1e3);
        let w: Vec<&Warning> = a.warnings.iter().filter(|w| w.message.contains("supply rail")).collect();
        assert_eq!(w.len(), 1, "{:?}", a.warnings);
        assert!(w[0].message.contains("node P") && w[0].message.contains(&format!("{p:.3} V")) && w[0].message.contains("5.000 V"), "{}", w[0].message);
    }

    #[test]
    fn the_greenhouse_demo_gives_node_p_one_message() {
        // Node P passes both the device's input range and its supply rail: one warning, not two.
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "greenhouse-valve").unwrap().record();
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let about_p: Vec<&Warning> = a.warnings.iter().filter(|w| w.message.contains("node P")).collect();
        assert_eq!(about_p.len(), 1, "{:?}", a.warnings);
        // Below the input range but inside the rail margin, the common-mode warning still stands.
        let mut low = r.clone();
        if let crate::topology::Topology::SupplyMonitor(m) = &mut low.circuit {
            m.device.input_high_margin_v = 2.0; // inputs reach only to 3 V
        }
        let checks = CheckSettings { input_max_v: Some(20.0), ..r.checks };
        let a = analyse(&low.circuit, &checks).unwrap();
        let about_p: Vec<&Warning> = a.warnings.iter().filter(|w| w.message.contains("node P")).collect();
        assert_eq!(about_p.len(), 1, "{:?}", a.warnings);
        assert!(about_p[0].message.contains("input range"), "{}", about_p[0].message);
    }

    #[test]
    fn a_node_far_below_the_negative_rail_gets_one_message_with_the_phase_reversal_code() {
        let w = rail_warnings(&[node(-1.0, 1.0)], 5.0, 0.0);
        assert_eq!(w.len(), 1);
        assert_eq!(w[0].code, WarningCode::PhaseReversal);
        assert!(w[0].message.contains("invert"), "{}", w[0].message);
    }

    #[test]
    fn a_divider_that_stays_inside_the_rails_gives_no_rail_warning() {
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "greenhouse-valve").unwrap().record();
        // Up to 20 V the node stays below 5.3 V: (20/5.6k + 4.9/9.1k)/7.885e-4 = 5.21 V.
        let checks = CheckSettings { input_max_v: Some(20.0), ..r.checks };
        let a = analyse(&r.circuit, &checks).unwrap();
        assert!(a.warnings.iter().all(|w| !w.message.contains("supply rail")), "{:?}", a.warnings);
    }
}
