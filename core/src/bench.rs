//! The bench test procedure printed on the design sheet: how to verify VT+ and VT− with a slow
//! ramp, the readings to expect with their tolerance bands, and what to check when they are off.
//!
//! The method is the usual one for any hysteresis circuit (common practice): drive the input from
//! an adjustable supply or a slow triangle, starting below VT−, raise it until the output
//! switches (that input is VT+), then lower it until the output switches back (VT−). The ramp
//! must be slow against the meter's update rate and in small steps near each threshold, or the
//! reading overshoots the true switching point.
//!
//! Expected readings are the analysis's thresholds (`crate::topology::analyse`) at the nominal
//! supply and, when the record gives a supply range, at its ends. Bands come from the tolerance
//! study when it has run ([`ThresholdBounds`]); otherwise readings carry no band and the sheet says
//! so.

use crate::analysis::{CheckSettings, Sense};
use crate::error::DesignError;
use crate::topology::supply_monitor::MonitorMode;
use crate::topology::{analyse, Circuit, Topology};
use serde::{Deserialize, Serialize};
use std::fmt::Write as _;

/// Worst-case (or statistical) limits of the thresholds at the nominal supply, from the tolerance
/// study: `(min, max)` in volts, `None` when not yet known.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct ThresholdBounds {
    /// Limits of VT+, volts.
    pub vt_upper_v: Option<(f64, f64)>,
    /// Limits of VT−, volts.
    pub vt_lower_v: Option<(f64, f64)>,
}

/// Which threshold a reading is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Threshold {
    /// VT+: found on a rising input.
    Upper,
    /// VT−: found on a falling input.
    Lower,
}

/// One reading to take at the bench.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ExpectedReading {
    /// Which threshold.
    pub threshold: Threshold,
    /// The supply the reading is taken at, volts.
    pub supply_v: f64,
    /// Expected input voltage at the switch, volts.
    pub nominal_v: f64,
    /// Lowest acceptable reading, volts (`None`: no band known yet).
    pub min_v: Option<f64>,
    /// Highest acceptable reading, volts.
    pub max_v: Option<f64>,
    /// Output level before the switch, volts.
    pub output_before_v: f64,
    /// Output level after the switch, volts.
    pub output_after_v: f64,
}

impl ExpectedReading {
    /// Whether a measured value lies in the band (always `true` without a band).
    pub fn accepts(&self, measured_v: f64) -> bool {
        self.min_v.is_none_or(|m| measured_v >= m) && self.max_v.is_none_or(|m| measured_v <= m)
    }
}

/// One numbered instruction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BenchStep {
    /// What to do.
    pub instruction: String,
    /// The reading this step produces, when it produces one (index into `readings`).
    pub reading: Option<usize>,
}

/// A complete bench test procedure for one design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BenchProcedure {
    /// Topology name.
    pub topology: String,
    /// What the input is called on this circuit ("input", "monitored rail").
    pub input_name: String,
    /// Equipment needed.
    pub equipment: Vec<String>,
    /// Safety cautions, first on the sheet.
    pub cautions: Vec<String>,
    /// The procedure.
    pub steps: Vec<BenchStep>,
    /// Expected readings.
    pub readings: Vec<ExpectedReading>,
    /// Lowest input voltage of the ramp, volts.
    pub ramp_low_v: f64,
    /// Highest input voltage of the ramp, volts.
    pub ramp_high_v: f64,
    /// Largest input step near a threshold, volts.
    pub step_v: f64,
    /// What to check when the readings are off, specific to the topology.
    pub troubleshooting: Vec<String>,
}

fn v(x: f64) -> String {
    format!("{x:.3} V")
}

/// Builds the bench procedure for a circuit with its check settings (supply range, input span)
/// and any known threshold bounds.
///
/// ```
/// use hysteron_core::bench::{bench_procedure, ThresholdBounds};
/// let r = hysteron_core::catalog::templates()[0].record();
/// let bounds = ThresholdBounds { vt_upper_v: Some((2.9, 3.1)), vt_lower_v: Some((1.9, 2.1)) };
/// let p = bench_procedure(&r.circuit, &r.checks, &bounds).unwrap();
/// // Ra = Rb = Rf = 100 kΩ on 5 V: VT+ = 5·Rb/(Rb + Ra‖Rf) = 10/3 V (DOMAIN §1a).
/// assert!((p.readings[0].nominal_v - 10.0 / 3.0).abs() < 1e-12);
/// assert!(p.to_text().contains("2.900 V … 3.100 V"));
/// ```
pub fn bench_procedure(
    circuit: &Topology,
    checks: &CheckSettings,
    bounds: &ThresholdBounds,
) -> Result<BenchProcedure, DesignError> {
    let a = analyse(circuit, checks)?;
    Ok(bench_procedure_from(circuit, &a, checks, bounds))
}

/// The same from an analysis already made with the same check settings.
pub fn bench_procedure_from(
    circuit: &Topology,
    analysis: &crate::analysis::Analysis,
    checks: &CheckSettings,
    bounds: &ThresholdBounds,
) -> BenchProcedure {
    let a = analysis;
    let supply = circuit.supply_v();
    // The ramp covers the thresholds at every supply of the range.
    let highest = a.supply_corners.iter().map(|c| c.vt_upper_v.max(c.vt_lower_v)).fold(a.vt_upper_v, f64::max);
    let lowest = a.supply_corners.iter().map(|c| c.vt_upper_v.min(c.vt_lower_v)).fold(a.vt_lower_v, f64::min);
    let (ramp_low_v, ramp_high_v) = crate::spice::ramp_span_v(highest, lowest);
    // Step: a twentieth of the narrowest of the hysteresis and the bands, at least 10 µV.
    let mut narrowest = a.hysteresis_v.abs();
    for (lo, hi) in [bounds.vt_upper_v, bounds.vt_lower_v].into_iter().flatten() {
        if hi > lo {
            narrowest = narrowest.min(hi - lo);
        }
    }
    if narrowest <= 0.0 || !narrowest.is_finite() {
        narrowest = 0.01 * a.vt_upper_v.abs().max(1.0);
    }
    let step_v = (narrowest / 20.0).max(1e-5);
    let (before_up, after_up) = match a.sense {
        Sense::Inverting => (a.output_high_v, a.output_low_v),
        Sense::NonInverting => (a.output_low_v, a.output_high_v),
    };
    let monitor = matches!(circuit, Topology::SupplyMonitor(_));
    let input_name = if monitor { "monitored rail" } else { "input" }.to_string();

    let mut readings = Vec::new();
    let mut corner_readings = |supply_v: f64, up: f64, down: f64, nominal: bool| {
        let (bu, bl) = if nominal { (bounds.vt_upper_v, bounds.vt_lower_v) } else { (None, None) };
        readings.push(ExpectedReading {
            threshold: Threshold::Upper,
            supply_v,
            nominal_v: up,
            min_v: bu.map(|b| b.0),
            max_v: bu.map(|b| b.1),
            output_before_v: before_up,
            output_after_v: after_up,
        });
        readings.push(ExpectedReading {
            threshold: Threshold::Lower,
            supply_v,
            nominal_v: down,
            min_v: bl.map(|b| b.0),
            max_v: bl.map(|b| b.1),
            output_before_v: after_up,
            output_after_v: before_up,
        });
    };
    corner_readings(supply, a.vt_upper_v, a.vt_lower_v, true);
    for c in &a.supply_corners {
        if c.supply_v != supply {
            corner_readings(c.supply_v, c.vt_upper_v, c.vt_lower_v, false);
        }
    }

    let safety = crate::safety::bench_safety(circuit, a, checks, &[ramp_low_v, ramp_high_v]);
    let mut equipment = vec![
        safety.input_source.clone().unwrap_or_else(|| format!(
            "adjustable bench supply (or a function generator set to a triangle of {} to {}, 0.1 Hz or slower) for the {input_name}",
            v(ramp_low_v),
            v(ramp_high_v)
        )),
        format!("voltmeter on the {input_name}, resolving {} or better", v(step_v)),
        "second voltmeter or an oscilloscope on OUT, to see the moment it switches".to_string(),
    ];
    if a.supply_corners.len() > 1 {
        equipment.push(format!("supply for the circuit, set to {} and adjustable over the supply range", v(supply)));
    } else if matches!(circuit, Topology::SupplyMonitor(m) if m.comparator_supply == crate::topology::supply_monitor::MonitorSupply::Separate)
    {
        equipment.push(format!("separate supply for the comparator, {}", v(supply)));
    } else {
        equipment.push(format!("supply for the circuit, {}", v(supply)));
    }

    let word =
        |level: f64| if (level - a.output_high_v).abs() <= (level - a.output_low_v).abs() { "high" } else { "low" };
    let mut steps = Vec::new();
    let mut step = |instruction: String, reading: Option<usize>| steps.push(BenchStep { instruction, reading });
    step(format!("Set the circuit's supply to {} and check it at the device's supply pins.", v(supply)), None);
    step(
        format!(
            "Set the {input_name} to {} (below VT−). OUT should read {} ({}).",
            v(ramp_low_v),
            word(before_up),
            v(before_up)
        ),
        None,
    );
    let mut idx = 0;
    for (k, chunk) in readings.chunks(2).enumerate() {
        let up = &chunk[0];
        let down = &chunk[1];
        if k > 0 {
            step(format!("Set the circuit's supply to {} and repeat the two ramps.", v(up.supply_v)), None);
        }
        step(
            format!(
                "Raise the {input_name} slowly, in steps of at most {} near {}, until OUT switches {} → {}. Read the {input_name}: this is VT+, expected {}{}.",
                v(step_v),
                v(up.nominal_v),
                word(up.output_before_v),
                word(up.output_after_v),
                v(up.nominal_v),
                band_text(up)
            ),
            Some(idx),
        );
        step(
            format!(
                "Lower the {input_name} slowly, in steps of at most {} near {}, until OUT switches back {} → {}. Read the {input_name}: this is VT−, expected {}{}.",
                v(step_v),
                v(down.nominal_v),
                word(down.output_before_v),
                word(down.output_after_v),
                v(down.nominal_v),
                band_text(down)
            ),
            Some(idx + 1),
        );
        idx += 2;
    }
    if readings.len() > 2 {
        step(format!("Return the supply to {}.", v(supply)), None);
    }
    step(
        "Check the hysteresis VT+ − VT− from the two readings and confirm OUT switches cleanly, once per crossing, without chatter on the oscilloscope.".to_string(),
        None,
    );

    equipment.extend(safety.equipment);
    let mut cautions = safety.cautions;
    if monitor {
        cautions.push("do the ramps with a current-limited bench supply in place of the battery; on the real battery, fuse the sense lead where it leaves the battery".into());
    }

    let troubleshooting = troubleshooting(circuit, a, checks);
    BenchProcedure {
        topology: circuit.name().to_string(),
        input_name,
        equipment,
        cautions,
        steps,
        readings,
        ramp_low_v,
        ramp_high_v,
        step_v,
        troubleshooting,
    }
}

fn band_text(r: &ExpectedReading) -> String {
    match (r.min_v, r.max_v) {
        (Some(lo), Some(hi)) => format!(" (accept {} … {})", v(lo), v(hi)),
        _ => String::new(),
    }
}

fn troubleshooting(circuit: &Topology, a: &crate::analysis::Analysis, checks: &CheckSettings) -> Vec<String> {
    let mut t = vec![
        "OUT never switches: measure the supply at the device's pins, then the voltage at the node that sets the threshold (the reference or divider midpoint); a wrong value there points at a wrong resistor or rail.".to_string(),
        "Both readings shifted by the same amount: the reference, the divider ratio or the device's offset is off; measure the reference node with the input low and high.".to_string(),
        "Band too narrow or too wide: the feedback resistor or the output levels are off; measure OUT in both states with the real load connected and compare with the expected levels.".to_string(),
        "OUT chatters at a crossing: the ramp is noisy or the supply is not decoupled; add a 100 nF capacitor at the device's supply pins and use a cleaner source.".to_string(),
    ];
    match circuit {
        Topology::Inverting(_) | Topology::NonInverting(_) | Topology::Plain(_) => {
            t.push(format!(
                "The device's inputs must stay inside its common-mode range ({} to {}); a reading far off near a rail often means an input left that range.",
                v(circuit.device_input_range().0),
                v(circuit.device_input_range().1)
            ));
        }
        Topology::OpenDrain(_) => {
            t.push("Upper reading off: check the pull-up resistor's value and the rail it goes to; the pull-up is in series with the feedback resistor while the output is off, so it moves VT+.".into());
            t.push(format!(
                "Measure OUT while it is high with the load connected: expected {}; a lower value means extra load on the pull-up.",
                v(a.output_high_v)
            ));
        }
        Topology::SupplyMonitor(m) => {
            let (trip, release) = match m.mode {
                MonitorMode::Undervoltage => ("VT− (trip)", "VT+ (release)"),
                MonitorMode::Overvoltage => ("VT+ (trip)", "VT− (release)"),
            };
            t.push(format!("Here the readings are {trip} and {release} of the monitored rail."));
            t.push("Measure the rail with the load connected and disconnected: when the load drops off the rail recovers, and the release point must lie above the recovered voltage or the load cycles on and off.".into());
            if checks.expected_recovery_v > 0.0 {
                t.push(format!(
                    "The design expects a recovery of {}; check it on the real battery.",
                    v(checks.expected_recovery_v)
                ));
            }
            t.push("Readings high by the same factor: the reference voltage is off (its error is multiplied by the divider ratio); measure VREF directly.".into());
            t.push("With megohm dividers, the meter's own input resistance (often 10 MΩ) loads node P: measure the rail, not node P.".into());
        }
        Topology::CmosBuffer(_) => {
            t.push("Both readings off together while their difference is right: the gate's switching point VM differs from the assumed value (datasheets only guarantee it between VIL and VIH); measure node X at the moment of switching.".into());
            t.push("The buffer's supply current rises while the input is slow near VM (both output transistors conduct); a brief warm part during the ramp is expected.".into());
        }
        Topology::SchmittGate(_) => {
            t.push("The gate's own thresholds vary from part to part within the datasheet's limits: compare the readings with the bands, not with the typical values alone.".into());
            t.push("Measure the gate input pin at the moment of switching: it should equal the gate's VT+ or VT−; if it does, the difference comes from the input resistors.".into());
        }
        Topology::BjtPair(_) => {
            t.push("Measure VBE of the conducting transistor (about 0.6–0.7 V): the thresholds move almost one-for-one with it, and with temperature (about −2 mV/K).".into());
            t.push("With the input low, Q2 conducts: its collector-emitter voltage (OUT minus the shared emitter) must stay above 0.2 V; if it saturates, the low level and the upper threshold move.".into());
            t.push(
                "No hysteresis at all: the loop gain is too low; check RC1 and the shared emitter resistor values."
                    .into(),
            );
        }
    }
    t
}

impl BenchProcedure {
    /// The procedure as plain text for the printed design sheet.
    pub fn to_text(&self) -> String {
        let mut o = String::new();
        let _ = writeln!(o, "BENCH TEST");
        if !self.cautions.is_empty() {
            let _ = writeln!(o, "\nCautions");
            for c in &self.cautions {
                let _ = writeln!(o, "  ! {c}");
            }
        }
        let _ = writeln!(o, "\nEquipment");
        for e in &self.equipment {
            let _ = writeln!(o, "  - {e}");
        }
        let _ = writeln!(o, "\nProcedure");
        for (i, s) in self.steps.iter().enumerate() {
            let _ = writeln!(o, "  {}. {}", i + 1, s.instruction);
        }
        let _ = writeln!(o, "\nExpected readings ({})", self.input_name);
        let _ = writeln!(o, "  {:<6} {:>10} {:>12} {:>25}", "", "supply", "expected", "accept");
        for r in &self.readings {
            let name = match r.threshold {
                Threshold::Upper => "VT+",
                Threshold::Lower => "VT−",
            };
            let band = match (r.min_v, r.max_v) {
                (Some(lo), Some(hi)) => format!("{} … {}", v(lo), v(hi)),
                _ => "(run the tolerance study)".into(),
            };
            let _ = writeln!(o, "  {:<6} {:>10} {:>12} {:>25}", name, v(r.supply_v), v(r.nominal_v), band);
        }
        let _ = writeln!(o, "\nIf the readings are off");
        for t in &self.troubleshooting {
            let _ = writeln!(o, "  - {t}");
        }
        o
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;

    fn lathe() -> crate::record::DesignRecord {
        catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").map(|s| s.record()).unwrap()
    }

    #[test]
    fn expected_readings_are_the_analysis_thresholds_at_every_supply() {
        let r = lathe();
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let p = bench_procedure(&r.circuit, &r.checks, &ThresholdBounds::default()).unwrap();
        // Nominal first, then each end of the record's supply range (4.75 V and 5.25 V).
        assert_eq!(p.readings.len(), 2 * a.supply_corners.len());
        assert_eq!(p.readings[0].nominal_v, a.vt_upper_v);
        assert_eq!(p.readings[1].nominal_v, a.vt_lower_v);
        for c in &a.supply_corners {
            let up = p.readings.iter().find(|x| x.supply_v == c.supply_v && x.threshold == Threshold::Upper).unwrap();
            let lo = p.readings.iter().find(|x| x.supply_v == c.supply_v && x.threshold == Threshold::Lower).unwrap();
            assert_eq!(up.nominal_v, c.vt_upper_v);
            assert_eq!(lo.nominal_v, c.vt_lower_v);
        }
        // Inverting circuit: output high before VT+ and low after.
        assert_eq!(p.readings[0].output_before_v, a.output_high_v);
        assert_eq!(p.readings[0].output_after_v, a.output_low_v);
        assert!(p.ramp_low_v < a.vt_lower_v && p.ramp_high_v > a.vt_upper_v);
    }

    #[test]
    fn bands_come_from_the_bounds_and_set_the_step() {
        let r = lathe();
        let bounds = ThresholdBounds { vt_upper_v: Some((2.85, 2.95)), vt_lower_v: Some((1.66, 1.74)) };
        let p = bench_procedure(&r.circuit, &r.checks, &bounds).unwrap();
        assert_eq!((p.readings[0].min_v, p.readings[0].max_v), (Some(2.85), Some(2.95)));
        assert_eq!((p.readings[1].min_v, p.readings[1].max_v), (Some(1.66), Some(1.74)));
        // Bands only at the nominal supply, where the tolerance study computed them.
        assert!(p.readings[2..].iter().all(|x| x.min_v.is_none()));
        // The narrowest band is 80 mV: steps of 4 mV.
        assert!((p.step_v - 0.004).abs() < 1e-12);
        assert!(p.readings[0].accepts(2.9) && !p.readings[0].accepts(2.96));
        let text = p.to_text();
        assert!(text.contains("2.850 V … 2.950 V"), "{text}");
        assert!(text.contains(&format!("{:.3} V", p.readings[0].nominal_v)));
    }

    #[test]
    fn every_starter_gets_a_procedure_with_topology_specific_checks() {
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let r = s.record();
            let p = bench_procedure(&r.circuit, &r.checks, &ThresholdBounds::default()).unwrap();
            assert!(p.troubleshooting.len() > 4, "{}", s.key);
            assert!(p.steps.iter().filter(|x| x.reading.is_some()).count() == p.readings.len());
            if r.circuit.name() == "supply_monitor" {
                assert!(p.troubleshooting.iter().any(|t| t.contains("load connected and disconnected")));
                assert!(!p.cautions.is_empty());
            }
            if r.circuit.name() == "open_drain" {
                assert!(p.troubleshooting.iter().any(|t| t.contains("pull-up")));
            }
        }
    }
}
