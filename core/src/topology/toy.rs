//! A made-up topology that exists only in tests, to prove that a new topology is one module plus
//! one line in the `topologies!` list: nothing outside this file and that line mentions it.
//!
//! An ideal rail-to-rail comparator on `supply_v` with the input on (−); (+) sits between a fixed
//! reference `vref_v` (through R1) and the output (through R2). With k = R1/(R1 + R2) and the
//! output at VCC or 0 V, superposition gives VT+ = Vref·(1 − k) + VCC·k and VT− = Vref·(1 − k)
//! (the inverting Schmitt of DOMAIN §1a with its divider replaced by an ideal source).

use super::{expect_len, Circuit, Described, Parameter, ParameterKind};
use crate::analysis::{
    Analysis, CheckSettings, NodeVoltage, OperatingPoint, OutputStage, OutputState, ResistorDrop, Sense, Thresholds,
    Warning,
};
use crate::error::DesignError;
use crate::limits::{check, Quantity};
use serde::{Deserialize, Serialize};

/// The toy circuit's fields.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Toy {
    /// Supply, volts; the output swings from 0 V to it.
    pub supply_v: f64,
    /// Reference voltage, volts.
    pub vref_v: f64,
    /// R1 from the reference to (+), ohms.
    pub r1_ohm: f64,
    /// R2 from the output to (+), ohms.
    pub r2_ohm: f64,
}

impl Toy {
    fn k(&self) -> f64 {
        self.r1_ohm / (self.r1_ohm + self.r2_ohm)
    }

    fn output_v(&self, state: OutputState) -> f64 {
        match state {
            OutputState::High => self.supply_v,
            OutputState::Low => 0.0,
        }
    }
}

impl Circuit for Toy {
    fn validate(&self) -> Result<(), DesignError> {
        check(Quantity::Voltage, "supply_v", self.supply_v)?;
        check(Quantity::Voltage, "vref_v", self.vref_v)?;
        check(Quantity::Resistance, "r1_ohm", self.r1_ohm)?;
        check(Quantity::Resistance, "r2_ohm", self.r2_ohm)?;
        if self.supply_v <= 0.0 {
            return Err(DesignError::invalid("supply_v", "must be above 0 V"));
        }
        Ok(())
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let k = self.k();
        let base = self.vref_v * (1.0 - k);
        Ok(Thresholds { vt_upper_v: base + self.supply_v * k, vt_lower_v: base })
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((self.supply_v, 0.0))
    }

    fn sense(&self) -> Sense {
        Sense::Inverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let vout = self.output_v(state);
        let k = self.k();
        let vp = self.vref_v * (1.0 - k) + vout * k;
        let i = (self.vref_v - vout) / (self.r1_ohm + self.r2_ohm);
        Ok(OperatingPoint {
            resistors: vec![
                ResistorDrop { designator: "R1".into(), resistance_ohm: self.r1_ohm, volts: self.vref_v - vp },
                ResistorDrop { designator: "R2".into(), resistance_ohm: self.r2_ohm, volts: vp - vout },
            ],
            input_current_a: 0.0,
            network_current_a: i.abs(),
            device_inputs: vec![
                NodeVoltage { name: "inverting input".into(), volts: vin_v },
                NodeVoltage { name: "non-inverting input".into(), volts: vp },
            ],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        vec![
            Parameter::resistor("r1_ohm", "R1", "reference resistor", self.r1_ohm),
            Parameter::resistor("r2_ohm", "R2", "feedback resistor", self.r2_ohm),
            Parameter::quantity("supply_v", "supply", self.supply_v, ParameterKind::Supply),
            Parameter::quantity("vref_v", "reference", self.vref_v, ParameterKind::Reference),
        ]
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        expect_len(values, 4)?;
        let c = Toy { r1_ohm: values[0], r2_ohm: values[1], supply_v: values[2], vref_v: values[3] };
        c.validate()?;
        Ok(c)
    }

    fn synthesise_with_anchor(&self, targets: Thresholds, anchor_ohm: f64) -> Result<Self, DesignError> {
        // ΔV = VCC·k and VT− = Vref·(1 − k): k from the width, Vref from VT−, R1 = k·R2/(1 − k).
        let k = targets.hysteresis_v() / self.supply_v;
        if !(k > 0.0 && k < 1.0) {
            return Err(DesignError::Infeasible {
                reason: "the hysteresis must lie between 0 V and the supply".into(),
                suggestion: "narrow the band or raise the supply".into(),
            });
        }
        let c = Toy {
            r2_ohm: anchor_ohm,
            r1_ohm: k * anchor_ohm / (1.0 - k),
            vref_v: targets.vt_lower_v / (1.0 - k),
            ..self.clone()
        };
        c.validate()?;
        Ok(c)
    }

    fn anchor_description(&self) -> &'static str {
        "R2 (feedback)"
    }

    fn supply_v(&self) -> f64 {
        self.supply_v
    }

    fn with_supply(&self, supply_v: f64) -> Self {
        Toy { supply_v, ..self.clone() }
    }

    fn checks(&self, _settings: &CheckSettings) -> Vec<Warning> {
        Vec::new()
    }

    fn device_input_range(&self) -> (f64, f64) {
        (0.0, self.supply_v)
    }

    fn negative_rail_v(&self) -> f64 {
        0.0
    }

    fn output_stage(&self) -> OutputStage {
        OutputStage::PushPull
    }

    fn troubleshooting(&self, _analysis: &Analysis, _checks: &CheckSettings) -> Vec<String> {
        vec![format!("Measure the reference: it should read {:.3} V.", self.vref_v)]
    }
}

impl Described for Toy {
    const TITLE: &'static str = "Toy Schmitt (tests only)";
    const NOTE: &'static str = "Never offered to users: it shows that a topology is one module and one list line.";
    const TEMPLATE_JSON: &'static str = r#"{
        "schema_version": 1,
        "name": "Toy Schmitt (tests only)",
        "circuit": { "topology": "toy", "supply_v": 5.0, "vref_v": 2.0, "r1_ohm": 10000, "r2_ohm": 40000 },
        "targets": { "vt_upper_v": 2.6, "vt_lower_v": 1.6, "impedance": { "anchor_ohm": 40000 } }
    }"#;
}

impl crate::netlist::Netlisted for Toy {
    /// The signal on (−), R1 from the reference source and R2 from OUT on (+).
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{SourceRole, GROUND, INPUT_NET, OUTPUT_NET};
        use crate::topology::netlisting::{builder, input_centre_v};
        let mut b = builder("toy", self);
        let vcc = b.supply(self.supply_v, "VCC");
        b.input(input_centre_v(self, (0.0, self.supply_v)), 0.0, "IN");
        let vref = b.source("VREF", "ref", self.vref_v, SourceRole::Reference, "VREF".into());
        b.part("r1_ohm", &vref, "p", self.r1_ohm);
        b.part("r2_ohm", "p", OUTPUT_NET, self.r2_ohm);
        b.comparator(&crate::device::Comparator::ideal(self.supply_v), "p", INPUT_NET, &vcc, GROUND, false, 0.0);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}

#[cfg(test)]
mod tests {
    //! The generic machinery, run on a topology it has never heard of.
    use crate::analysis::{CheckSettings, ImpedanceChoice, Targets};
    use crate::bench::bench_procedure;
    use crate::bom::{bom, PartSettings};
    use crate::catalog;
    use crate::record::DesignRecord;
    use crate::topology::{analyse, sensitivities, synthesise, Circuit, Topology};

    fn record() -> DesignRecord {
        catalog::templates().into_iter().find(|s| s.key == "toy").expect("the list line registers the template").record()
    }

    #[test]
    fn the_list_line_registers_the_toy_everywhere() {
        let r = record();
        assert!(Topology::NAMES.contains(&"toy"));
        assert_eq!(r.circuit.name(), "toy");
        assert_eq!(r.circuit.title(), "Toy Schmitt (tests only)");
        assert!(!catalog::topology_note("toy").is_empty());
        // The record round-trips through JSON under its serde name.
        let back = DesignRecord::from_json(&r.to_json()).unwrap();
        assert_eq!(back.circuit, r.circuit);
    }

    #[test]
    fn analysis_sensitivities_and_synthesis_run_on_the_toy() {
        let r = record();
        let a = analyse(&r.circuit, &CheckSettings::default()).unwrap();
        // k = 10k/50k = 0.2: VT− = 2·0.8 = 1.6 V, VT+ = 1.6 + 5·0.2 = 2.6 V (equations at the top).
        assert!((a.vt_lower_v - 1.6).abs() < 1e-12 && (a.vt_upper_v - 2.6).abs() < 1e-12);
        let s = sensitivities(&r.circuit).unwrap();
        // ∂VT+/∂VCC = k = 0.2.
        let supply = s.iter().find(|(p, _, _)| p.id == "supply_v").unwrap();
        assert!((supply.1 - 0.2).abs() < 1e-6);
        let d = synthesise(&r.circuit, &Targets { vt_upper_v: 3.0, vt_lower_v: 2.0, impedance: ImpedanceChoice::AnchorOhm(40e3) })
            .unwrap();
        let t = d.thresholds().unwrap();
        assert!((t.vt_upper_v - 3.0).abs() < 1e-9 && (t.vt_lower_v - 2.0).abs() < 1e-9);
    }

    #[test]
    fn tolerance_bom_bench_spice_and_schematic_run_on_the_toy() {
        let r = record();
        let ev = crate::evaluate::evaluate(&r);
        assert!(ev.errors.is_empty(), "{:?}", ev.errors);
        let tol = crate::tolerance::tolerance_report(&r.circuit, &Default::default()).unwrap();
        // VT− = Vref·R2/(R1 + R2) moves with both resistors: the band is not a point.
        assert!(tol.worst_case.vt_lower.max.value_v > tol.worst_case.vt_lower.min.value_v);
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let b = bom(&r.circuit, &a, &r.checks, &PartSettings::default()).unwrap();
        assert_eq!(b.resistors.len(), 2);
        assert_eq!(b.device.designator, "U1");
        let p = bench_procedure(&r.circuit, &r.checks, &Default::default()).unwrap();
        assert!(p.troubleshooting.iter().any(|t| t.contains("2.000 V")));
        let deck = crate::spice::to_spice(&r.circuit, "toy").unwrap();
        assert!(deck.contains("\nR1 ref p 10k\n") && deck.contains("\nR2 p out 40k\n"), "{deck}");
        let svg = crate::schematic::render_svg(&r.circuit, Default::default());
        assert!(svg.contains("R1") && svg.contains("R2"), "{svg}");
    }
}
