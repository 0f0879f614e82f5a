//! The trigger seen from the field terminal, as a [`Circuit`] of its own: the trigger's parameters
//! followed by the network's resistors (dropper top and bottom, series resistor, filter resistor),
//! its thresholds the field-terminal thresholds (VT_pin + Rs·Iin)/g of the parent module.
//!
//! With it the tolerance machinery ([`crate::tolerance::worst_case`],
//! [`crate::tolerance::bench_window`]) treats the network's resistors exactly like the trigger's
//! own: each gets the resistor band of the tolerance settings (tolerance plus drift), and the worst
//! case searches the corners (or the sensitivity signs above the corner limit) of the whole chain.
//! So the field-terminal windows of the bench procedure are the pin's windows mapped through the
//! network with the network's own tolerances, and jointly: a corner that moves the trigger's input
//! current moves the drop across Rs with it. The filter capacitor and the clamp do not enter a
//! static threshold (the parent module's derivation: the capacitor is charged, the clamp is off
//! at a reachable threshold).

use super::{state_before, InputNetwork};
use crate::analysis::{Analysis, CheckSettings, OperatingPoint, OutputStage, OutputState, Sense, Thresholds, Warning};
use crate::error::DesignError;
use crate::topology::{Circuit, Parameter, ParameterKind, Topology};

/// The trigger behind its input network, seen from the field terminal.
#[derive(Debug, Clone, PartialEq)]
pub struct AtFieldTerminal {
    /// The trigger (under its output load when the record has output dynamics, see
    /// [`super::from_record::loaded_circuit`]).
    pub circuit: Topology,
    /// The network in front of it.
    pub net: InputNetwork,
}

/// Newton steps allowed when solving the pin voltage for a field voltage.
const PIN_SOLVE_STEPS: usize = 60;

impl AtFieldTerminal {
    /// The trigger behind `net`.
    pub fn new(circuit: Topology, net: InputNetwork) -> Self {
        AtFieldTerminal { circuit, net }
    }

    /// The field voltage at which the pin reaches `pin_v` in `state`: (pin_v + Rs·Iin)/g.
    fn field_at(&self, pin_v: f64, state: OutputState) -> Result<f64, DesignError> {
        let iin = self.circuit.operating_point(pin_v, state)?.input_current_a;
        Ok((pin_v + self.net.source_resistance_ohm() * iin) / self.net.gain())
    }

    /// The network's resistors as (parameter id, label, value), in parameter order.
    fn resistors(&self) -> Vec<(&'static str, &'static str, f64)> {
        let mut out = Vec::new();
        if let Some(d) = self.net.dropper {
            out.push(("input_network.dropper.top_ohm", "input dropper, top", d.top_ohm));
            out.push(("input_network.dropper.bottom_ohm", "input dropper, bottom", d.bottom_ohm));
        }
        if let Some(r) = self.net.series_ohm {
            out.push(("input_network.series_ohm", "input series resistor", r));
        }
        if let Some(f) = self.net.filter {
            out.push(("input_network.filter.r_ohm", "input filter resistor", f.r_ohm));
        }
        out
    }
}

impl Circuit for AtFieldTerminal {
    fn validate(&self) -> Result<(), DesignError> {
        self.circuit.validate()?;
        self.net.validate()
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let pin = self.circuit.thresholds()?;
        let sense = self.circuit.sense();
        Ok(Thresholds {
            vt_upper_v: self.field_at(pin.vt_upper_v, state_before(sense, true))?,
            vt_lower_v: self.field_at(pin.vt_lower_v, state_before(sense, false))?,
        })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        self.circuit.output_levels()
    }

    fn sense(&self) -> Sense {
        self.circuit.sense()
    }

    /// The trigger's operating point for a field voltage `vin_v`: the pin voltage x solves
    /// x + Rs·Iin(x) = g·vin (the network with the capacitor charged and the clamp off), by
    /// Newton's method with a numerical slope (one step for the comparators, whose input current
    /// is affine in the pin voltage). Fails when it does not converge.
    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let rs = self.net.source_resistance_ohm();
        let target = self.net.gain() * vin_v;
        let f = |x: f64| -> Result<f64, DesignError> { Ok(x + rs * self.circuit.operating_point(x, state)?.input_current_a - target) };
        let mut x = target;
        for _ in 0..PIN_SOLVE_STEPS {
            let fx = f(x)?;
            let h = 1e-6 * x.abs().max(1.0);
            let slope = (f(x + h)? - fx) / h;
            if !(slope.is_finite() && slope > 0.0) {
                break;
            }
            let next = x - fx / slope;
            if (next - x).abs() <= 1e-12 * x.abs().max(1.0) {
                return self.circuit.operating_point(next, state);
            }
            x = next;
        }
        Err(DesignError::NotConverged {
            reason: format!("the trigger's input voltage behind the input network was not found for {vin_v} V at the field terminal"),
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let mut p = self.circuit.parameters();
        let first = p
            .iter()
            .filter_map(|q| q.designator.as_deref().and_then(|d| d.strip_prefix('R')).and_then(|n| n.parse::<usize>().ok()))
            .max()
            .unwrap_or(0)
            + 1;
        for (k, (id, label, value)) in self.resistors().into_iter().enumerate() {
            p.push(Parameter::resistor(id, &format!("R{}", first + k), label, value));
        }
        p
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let own = self.circuit.parameters().len();
        let extra = self.resistors().len();
        crate::topology::expect_len(values, own + extra)?;
        let circuit = self.circuit.with_parameters(&values[..own])?;
        let mut net = self.net.clone();
        let mut rest = values[own..].iter().copied();
        let mut take = || rest.next().unwrap_or(f64::NAN);
        if let Some(d) = net.dropper.as_mut() {
            d.top_ohm = take();
            d.bottom_ohm = take();
        }
        if let Some(r) = net.series_ohm.as_mut() {
            *r = take();
        }
        if let Some(f) = net.filter.as_mut() {
            f.r_ohm = take();
        }
        net.validate()?;
        Ok(AtFieldTerminal { circuit, net })
    }

    /// Refused: synthesis works on the trigger itself (its targets are pin thresholds).
    fn synthesise_with_anchor(&self, _targets: Thresholds, _anchor_ohm: f64) -> Result<Self, DesignError> {
        Err(DesignError::inconsistent(
            "synthesis works on the trigger at its pin: set the targets there, the input network maps them to the field terminal",
        ))
    }

    fn anchor_description(&self) -> &'static str {
        self.circuit.anchor_description()
    }

    fn supply_v(&self) -> f64 {
        self.circuit.supply_v()
    }

    fn with_supply(&self, supply_v: f64) -> Self {
        AtFieldTerminal { circuit: self.circuit.with_supply(supply_v), net: self.net.clone() }
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        self.circuit.checks(settings)
    }

    fn device_input_range(&self) -> (f64, f64) {
        self.circuit.device_input_range()
    }

    fn negative_rail_v(&self) -> f64 {
        self.circuit.negative_rail_v()
    }

    fn output_stage(&self) -> OutputStage {
        self.circuit.output_stage()
    }

    fn input_name(&self) -> &'static str {
        "field terminal"
    }

    fn troubleshooting(&self, analysis: &Analysis, checks: &CheckSettings) -> Vec<String> {
        self.circuit.troubleshooting(analysis, checks)
    }

    /// Three trigger evaluations per call (its thresholds and one operating point per trip).
    fn seconds_per_evaluation(&self) -> f64 {
        3.0 * self.circuit.seconds_per_evaluation()
    }
}

/// Whether a parameter of [`AtFieldTerminal`] is one of the network's resistors.
pub fn is_network_parameter(p: &Parameter) -> bool {
    p.kind == ParameterKind::Resistor && p.id.starts_with("input_network.")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input_network::{analyse_network, from_record};

    fn sawmill() -> crate::record::DesignRecord {
        crate::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").map(|s| s.record()).unwrap()
    }

    #[test]
    fn thresholds_are_the_network_reports_and_parameters_round_trip() {
        let r = sawmill();
        let net = r.input_network.clone().unwrap();
        let c = AtFieldTerminal::new(from_record::loaded_circuit(&r), net.clone());
        let report = analyse_network(&c.circuit, &net, &r.checks, &r.parts).unwrap();
        let t = c.thresholds().unwrap();
        assert_eq!((t.vt_upper_v, t.vt_lower_v), (report.field.vt_upper_v, report.field.vt_lower_v));
        let p = c.parameters();
        assert_eq!(p.iter().filter(|q| is_network_parameter(q)).count(), 4);
        let values: Vec<f64> = p.iter().map(|q| q.value).collect();
        assert_eq!(c.with_parameters(&values).unwrap(), c);
        // A larger series resistor adds to Rs: the field thresholds move apart from the pin's.
        let mut v2 = values.clone();
        let i = p.iter().position(|q| q.id == "input_network.series_ohm").unwrap();
        v2[i] *= 2.0;
        let t2 = c.with_parameters(&v2).unwrap().thresholds().unwrap();
        assert!(t2.hysteresis_v() > t.hysteresis_v());
        // The operating point at the field threshold puts the pin at its own threshold.
        let state = state_before(c.sense(), true);
        let op = c.operating_point(t.vt_upper_v, state).unwrap();
        let direct = c.circuit.operating_point(report.pin.vt_upper_v, state).unwrap();
        assert!((op.input_current_a - direct.input_current_a).abs() < 1e-12, "{} {}", op.input_current_a, direct.input_current_a);
    }
}
