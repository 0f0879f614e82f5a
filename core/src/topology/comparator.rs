//! What the comparator topologies (inverting, non-inverting, open-drain, plain, supply monitor)
//! have in common: resistor checks, the reference at the (−) input, divider arithmetic, the
//! device's rails and the shared design checks. No topology module imports a sibling topology.

/// The bench hint on the device's common-mode range (its inputs must stay between `range`).
pub fn common_mode_hint(range: (f64, f64)) -> String {
    format!(
        "The device's inputs must stay inside its common-mode range ({:.3} V to {:.3} V); a reading far off near a rail often means an input left that range.",
        range.0, range.1
    )
}
