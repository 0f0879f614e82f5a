//! The bench test procedure printed on the design sheet: how to verify VT+ and VT− with a slow
//! ramp, the readings to expect with their windows, and what to check when they are off.
//!
//! The method is the usual one for any hysteresis circuit (common practice): drive the input from
//! an adjustable supply or a slow triangle, starting below VT−, raise it until the output
//! switches (that input is VT+), then lower it until the output switches back (VT−). The ramp
//! must be slow against the meter's update rate and in small steps near each threshold, or the
//! reading overshoots the true switching point.
//!
//! Expected readings are the analysis's thresholds (`crate::topology::analyse`) at the nominal
//! supply and, when the record gives a supply range, at its ends. Two named windows come from the
//! tolerance study when it has run ([`ReadingWindows`], see [`crate::tolerance::bench_window`]):
//! - the **bench window** at each supply a step sets: part tolerances and device spread only, at
//!   room temperature (25 °C) — what the technician accepts;
//! - the **field window** at the nominal supply: every tolerance over its full range (supply
//!   tolerance, temperature range too) — what boards may show in service, printed for reference.
//!
//! Without the study, readings carry no window and the sheet says so.

use crate::analysis::{CheckSettings, Sense};
use crate::error::DesignError;
use crate::topology::{analyse, Circuit, Topology};
use serde::{Deserialize, Serialize};
use std::fmt::Write as _;

/// Limits of the thresholds, `(min, max)` in volts, `None` when not yet known.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct ThresholdBounds {
    /// Limits of VT+, volts.
    pub vt_upper_v: Option<(f64, f64)>,
    /// Limits of VT−, volts.
    pub vt_lower_v: Option<(f64, f64)>,
}

/// The bench window at one supply a step sets.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SupplyBounds {
    /// The supply, volts.
    pub supply_v: f64,
    /// Limits of the thresholds at this supply and 25 °C, from part tolerances and device spread.
    pub bounds: ThresholdBounds,
}

/// The two named windows the procedure prints (empty until the tolerance study provides them).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct ReadingWindows {
    /// The field window at the nominal supply: every tolerance over its full range (supply
    /// tolerance, temperature range, device spread, part tolerances).
    pub field: ThresholdBounds,
    /// The bench window at each supply the procedure sets: part tolerances and device spread
    /// only, at 25 °C and exactly that supply.
    pub bench: Vec<SupplyBounds>,
}

impl ReadingWindows {
    /// The bench window at `supply_v`, when known.
    pub fn bench_at(&self, supply_v: f64) -> ThresholdBounds {
        self.bench.iter().find(|b| b.supply_v == supply_v).map(|b| b.bounds).unwrap_or_default()
    }
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
    /// Lowest acceptable reading: the bench window's minimum at this supply and 25 °C, volts
    /// (`None`: not known yet).
    pub bench_min_v: Option<f64>,
    /// Highest acceptable reading: the bench window's maximum, volts.
    pub bench_max_v: Option<f64>,
    /// The field window's minimum (every tolerance over its full range; nominal supply only),
    /// volts, for reference.
    pub field_min_v: Option<f64>,
    /// The field window's maximum, volts.
    pub field_max_v: Option<f64>,
    /// Output level before the switch, volts.
    pub output_before_v: f64,
    /// Output level after the switch, volts.
    pub output_after_v: f64,
}

impl ExpectedReading {
    /// Whether a measured value lies in the bench window (always `true` without one).
    pub fn accepts(&self, measured_v: f64) -> bool {
        self.bench_min_v.is_none_or(|m| measured_v >= m) && self.bench_max_v.is_none_or(|m| measured_v <= m)
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
/// and the windows known so far (bench window per supply, field window at the nominal supply).
///
/// ```
/// use hysteron_core::bench::{bench_procedure, ReadingWindows, SupplyBounds, ThresholdBounds};
/// let r = hysteron_core::catalog::templates()[0].record();
/// let windows = ReadingWindows {
///     field: ThresholdBounds { vt_upper_v: Some((2.8, 3.2)), vt_lower_v: Some((1.8, 2.2)) },
///     bench: vec![SupplyBounds {
///         supply_v: 5.0,
///         bounds: ThresholdBounds { vt_upper_v: Some((2.9, 3.1)), vt_lower_v: Some((1.9, 2.1)) },
///     }],
/// };
/// let p = bench_procedure(&r.circuit, &r.checks, &windows).unwrap();
/// // Ra = Rb = Rf = 100 kΩ on 5 V: VT+ = 5·Rb/(Rb + Ra‖Rf) = 10/3 V (DOMAIN §1a).
/// assert!((p.readings[0].nominal_v - 10.0 / 3.0).abs() < 1e-12);
/// assert!(p.to_text().contains("2.900 V … 3.100 V"));
/// assert!(p.to_text().contains("2.800 V … 3.200 V"));
/// ```
pub fn bench_procedure(
    circuit: &Topology,
    checks: &CheckSettings,
    windows: &ReadingWindows,
) -> Result<BenchProcedure, DesignError> {
    let a = analyse(circuit, checks)?;
    crate::finite::check("analysis", &a)?;
    let procedure = bench_procedure_from(circuit, &a, checks, windows);
    // A sheet that says "set the input to -inf V" is refused rather than printed.
    crate::finite::check("bench", &procedure)?;
    Ok(procedure)
}

/// The supplies a bench procedure sets, in the order of its steps: the nominal supply first, then
/// each other end of the record's supply range.
pub fn bench_supplies(circuit: &Topology, analysis: &crate::analysis::Analysis) -> Vec<f64> {
    let nominal = circuit.supply_v();
    let mut out = vec![nominal];
    for c in &analysis.supply_corners {
        if c.supply_v != nominal && !out.contains(&c.supply_v) {
            out.push(c.supply_v);
        }
    }
    out
}

/// The same from an analysis already made with the same check settings.
pub fn bench_procedure_from(
    circuit: &Topology,
    analysis: &crate::analysis::Analysis,
    checks: &CheckSettings,
    windows: &ReadingWindows,
) -> BenchProcedure {
    let a = analysis;
    let supply = circuit.supply_v();
    // The ramp covers the thresholds at every supply of the range.
    let highest = a.supply_corners.iter().map(|c| c.vt_upper_v.max(c.vt_lower_v)).fold(a.vt_upper_v, f64::max);
    let lowest = a.supply_corners.iter().map(|c| c.vt_upper_v.min(c.vt_lower_v)).fold(a.vt_lower_v, f64::min);
    let (ramp_low_v, ramp_high_v) = crate::spice::ramp_span_v(highest, lowest);
    // Step: a twentieth of the narrowest of the hysteresis and the windows, at least 10 µV.
    let mut narrowest = a.hysteresis_v.abs();
    let every_bound = windows
        .bench
        .iter()
        .map(|b| b.bounds)
        .chain([windows.field])
        .flat_map(|b| [b.vt_upper_v, b.vt_lower_v])
        .flatten();
    for (lo, hi) in every_bound {
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
    let input_name = circuit.input_name().to_string();

    let mut readings = Vec::new();
    let mut corner_readings = |supply_v: f64, up: f64, down: f64, nominal: bool| {
        let bench = windows.bench_at(supply_v);
        let field = if nominal { windows.field } else { ThresholdBounds::default() };
        readings.push(ExpectedReading {
            threshold: Threshold::Upper,
            supply_v,
            nominal_v: up,
            bench_min_v: bench.vt_upper_v.map(|b| b.0),
            bench_max_v: bench.vt_upper_v.map(|b| b.1),
            field_min_v: field.vt_upper_v.map(|b| b.0),
            field_max_v: field.vt_upper_v.map(|b| b.1),
            output_before_v: before_up,
            output_after_v: after_up,
        });
        readings.push(ExpectedReading {
            threshold: Threshold::Lower,
            supply_v,
            nominal_v: down,
            bench_min_v: bench.vt_lower_v.map(|b| b.0),
            bench_max_v: bench.vt_lower_v.map(|b| b.1),
            field_min_v: field.vt_lower_v.map(|b| b.0),
            field_max_v: field.vt_lower_v.map(|b| b.1),
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
    } else if let Some(name) = circuit.bench_supply_name() {
        equipment.push(format!("{name}, {}", v(supply)));
    } else {
        equipment.push(format!("supply for the circuit, {}", v(supply)));
    }

    let word =
        |level: f64| if (level - a.output_high_v).abs() <= (level - a.output_low_v).abs() { "high" } else { "low" };
    let mut steps = Vec::new();
    let mut step = |instruction: String, reading: Option<usize>| steps.push(BenchStep { instruction, reading });
    step(
        format!(
            "Set the circuit's supply to {} and check it at the device's supply pins.{}",
            v(supply),
            expected_at(&readings[0], &readings[1])
        ),
        None,
    );
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
            step(
                format!("Set the circuit's supply to {} and repeat the two ramps.{}", v(up.supply_v), expected_at(up, down)),
                None,
            );
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
        step(format!("Return the supply to {}.{}", v(supply), expected_at(&readings[0], &readings[1])), None);
    }
    step(
        "Check the hysteresis VT+ − VT− from the two readings and confirm OUT switches cleanly, once per crossing, without chatter on the oscilloscope.".to_string(),
        None,
    );

    equipment.extend(safety.equipment);
    let mut cautions = safety.cautions;
    cautions.extend(circuit.bench_cautions());

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
    let field = match (r.field_min_v, r.field_max_v) {
        (Some(lo), Some(hi)) => format!("; field window {} … {}", v(lo), v(hi)),
        _ => String::new(),
    };
    match (r.bench_min_v, r.bench_max_v) {
        (Some(lo), Some(hi)) => format!(" (accept {} … {}, the bench window{field})", v(lo), v(hi)),
        _ if !field.is_empty() => format!(" ({})", &field[2..]),
        _ => String::new(),
    }
}

/// The sentence a supply-setting step ends with: the bench window of both thresholds at that supply.
fn expected_at(up: &ExpectedReading, down: &ExpectedReading) -> String {
    match (up.bench_min_v, up.bench_max_v, down.bench_min_v, down.bench_max_v) {
        (Some(a), Some(b), Some(c), Some(d)) => format!(
            " At this supply and room temperature (25 °C) expect VT+ {} … {} and VT− {} … {} (bench window: part tolerances and device spread).",
            v(a),
            v(b),
            v(c),
            v(d)
        ),
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
    t.extend(circuit.troubleshooting(a, checks));
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
        let _ = writeln!(
            o,
            "  {:<6} {:>10} {:>12} {:>25} {:>25}",
            "", "supply", "expected", "accept (bench window)", "field window"
        );
        for r in &self.readings {
            let name = match r.threshold {
                Threshold::Upper => "VT+",
                Threshold::Lower => "VT−",
            };
            let range = |lo: Option<f64>, hi: Option<f64>, missing: &str| match (lo, hi) {
                (Some(lo), Some(hi)) => format!("{} … {}", v(lo), v(hi)),
                _ => missing.to_string(),
            };
            let bench = range(r.bench_min_v, r.bench_max_v, "(run the tolerance study)");
            let field = range(r.field_min_v, r.field_max_v, "");
            let _ = writeln!(o, "  {:<6} {:>10} {:>12} {:>25} {:>25}", name, v(r.supply_v), v(r.nominal_v), bench, field);
        }
        let _ = writeln!(
            o,
            "  Bench window: part tolerances and device spread at 25 °C and the supply set. Field window: every tolerance over its full range (supply, temperature), for reference."
        );
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
        let p = bench_procedure(&r.circuit, &r.checks, &ReadingWindows::default()).unwrap();
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
    fn windows_come_from_the_study_and_set_the_step() {
        let r = lathe();
        let windows = ReadingWindows {
            field: ThresholdBounds { vt_upper_v: Some((2.72, 3.10)), vt_lower_v: Some((1.55, 1.85)) },
            bench: vec![
                SupplyBounds {
                    supply_v: 5.0,
                    bounds: ThresholdBounds { vt_upper_v: Some((2.85, 2.95)), vt_lower_v: Some((1.66, 1.74)) },
                },
                SupplyBounds {
                    supply_v: 4.75,
                    bounds: ThresholdBounds { vt_upper_v: Some((2.70, 2.80)), vt_lower_v: Some((1.57, 1.65)) },
                },
            ],
        };
        let p = bench_procedure(&r.circuit, &r.checks, &windows).unwrap();
        let r0 = &p.readings[0];
        assert_eq!((r0.bench_min_v, r0.bench_max_v), (Some(2.85), Some(2.95)));
        assert_eq!((r0.field_min_v, r0.field_max_v), (Some(2.72), Some(3.10)));
        assert_eq!((p.readings[1].bench_min_v, p.readings[1].bench_max_v), (Some(1.66), Some(1.74)));
        // A supply corner gets its own bench window and no field window (that is the nominal supply's).
        let low = p.readings.iter().find(|x| x.supply_v == 4.75 && x.threshold == Threshold::Upper).unwrap();
        assert_eq!((low.bench_min_v, low.bench_max_v, low.field_min_v), (Some(2.70), Some(2.80), None));
        let high = p.readings.iter().find(|x| x.supply_v == 5.25).unwrap();
        assert_eq!(high.bench_min_v, None);
        // The narrowest window is 80 mV: steps of 4 mV.
        assert!((p.step_v - 0.004).abs() < 1e-12);
        // The technician accepts by the bench window, not the field window.
        assert!(r0.accepts(2.9) && !r0.accepts(2.96) && !r0.accepts(3.05));
        let text = p.to_text();
        assert!(text.contains("2.850 V … 2.950 V") && text.contains("2.720 V … 3.100 V"), "{text}");
        assert!(text.contains(&format!("{:.3} V", r0.nominal_v)));
        // Every step that sets a supply states the window at that supply.
        let sets: Vec<&BenchStep> = p.steps.iter().filter(|s| s.instruction.contains("supply to")).collect();
        assert_eq!(sets.len(), 4, "{sets:?}");
        assert!(sets[0].instruction.contains("VT+ 2.850 V … 2.950 V"), "{}", sets[0].instruction);
        assert!(sets.iter().any(|s| s.instruction.contains("4.750 V") && s.instruction.contains("VT+ 2.700 V … 2.800 V")));
        assert!(sets.last().unwrap().instruction.contains("VT− 1.660 V … 1.740 V"));
    }

    #[test]
    fn every_starter_gets_a_procedure_with_topology_specific_checks() {
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let r = s.record();
            let p = bench_procedure(&r.circuit, &r.checks, &ReadingWindows::default()).unwrap();
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
