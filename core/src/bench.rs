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
//!
//! **Through an input network** ([`bench_procedure_through`]): the technician drives the **field
//! terminal** — the wire the signal arrives on, ahead of the dropper, series resistor, clamp and
//! filter — and the readings are the field-terminal thresholds (VT_pin + Rs·Iin)/g
//! ([`crate::input_network`]) at every supply. Their windows come from the same worst case run on
//! the trigger behind its network ([`crate::input_network::terminal::AtFieldTerminal`]), where the
//! network's resistors are tolerance contributors like the trigger's own: the pin's windows
//! mapped through the network with the dropper ratio and the series resistance at their
//! tolerance corners. The ramp stays inside the stated field span where the thresholds allow;
//! when an end of it drives the clamp, the step says how much current the clamp takes against
//! its rating, and the source's current over the ramp is stated. The pin-level readings remain,
//! at the nominal supply, as an optional last check "at the pin, for reference".

use crate::analysis::{CheckSettings, Sense};
use crate::error::DesignError;
use crate::input_network::terminal::AtFieldTerminal;
use crate::input_network::Clamp;
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

/// Where a reading is taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ReadingPoint {
    /// The circuit's input (a design without an input network).
    #[default]
    Input,
    /// The field terminal, ahead of the input network.
    FieldTerminal,
    /// The trigger's input pin behind the input network (an optional check, for reference).
    Pin,
}

impl ReadingPoint {
    /// Whether this is the plain circuit input (kept out of the stored form, which then reads
    /// as before the input network existed).
    pub fn is_input(&self) -> bool {
        *self == ReadingPoint::Input
    }
}

/// One reading to take at the bench.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ExpectedReading {
    /// Which threshold.
    pub threshold: Threshold,
    /// Where it is read.
    #[serde(default, skip_serializing_if = "ReadingPoint::is_input")]
    pub at: ReadingPoint,
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
    /// The input network the procedure drives through (`None`: no network, the input is the pin).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub network: Option<NetworkBench>,
}

/// What the bench procedure states about the input network it drives through.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NetworkBench {
    /// The dropper's ratio g (1 without a dropper).
    pub gain: f64,
    /// Rs, the network's resistance seen from the pin, ohms.
    pub source_resistance_ohm: f64,
    /// The filter's time constant, seconds (`None` without a filter).
    pub time_constant_s: Option<f64>,
    /// The largest current the source delivers over the ramp (dropper and clamp), amperes.
    pub source_current_a: f64,
    /// The field voltage of the ramp end that drives the clamp, volts (`None`: the ramp stays
    /// inside the clamp's levels).
    pub clamp_at_v: Option<f64>,
    /// The clamp's current there, amperes (magnitude).
    pub clamp_current_a: Option<f64>,
    /// The clamp's current rating (rail diodes) or peak pulse rating (TVS), amperes.
    pub clamp_rating_a: Option<f64>,
    /// The stated field span (lowest, highest), volts.
    pub field_span_v: (f64, f64),
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
    let mut corners = vec![(supply, a.vt_upper_v, a.vt_lower_v)];
    corners.extend(a.supply_corners.iter().filter(|c| c.supply_v != supply).map(|c| (c.supply_v, c.vt_upper_v, c.vt_lower_v)));
    // The ramp covers the thresholds at every supply of the range.
    let highest = a.supply_corners.iter().map(|c| c.vt_upper_v.max(c.vt_lower_v)).fold(a.vt_upper_v, f64::max);
    let lowest = a.supply_corners.iter().map(|c| c.vt_upper_v.min(c.vt_lower_v)).fold(a.vt_lower_v, f64::min);
    let ramp = crate::spice::ramp_span_v(highest, lowest);
    build(circuit, a, checks, windows, &Primary { corners, hysteresis_v: a.hysteresis_v, ramp, through: None })
}

/// The bench procedure of a design with an input network: the source drives the field terminal
/// over the field range; the readings are the field-terminal thresholds at every supply
/// ([`AtFieldTerminal`], the trigger behind `terminal.net`) with `field_windows` (the windows of
/// the same worst case on [`AtFieldTerminal`], network resistors included; see
/// [`crate::tolerance::bench_window`]); the pin readings at the nominal supply with
/// `pin_windows` follow as an optional check, for reference. `circuit` and `analysis` are the
/// trigger's own (its pin thresholds, output levels and bench hints). Fails when the
/// field-terminal thresholds cannot be computed at a supply.
pub fn bench_procedure_through(
    circuit: &Topology,
    analysis: &crate::analysis::Analysis,
    checks: &CheckSettings,
    pin_windows: &ReadingWindows,
    terminal: &AtFieldTerminal,
    field_windows: &ReadingWindows,
) -> Result<BenchProcedure, DesignError> {
    terminal.validate()?;
    let net = &terminal.net;
    let mut corners = Vec::new();
    for s in bench_supplies(circuit, analysis) {
        let t = terminal.with_supply(s).thresholds()?;
        corners.push((s, t.vt_upper_v, t.vt_lower_v));
    }
    let highest = corners.iter().map(|c| c.1.max(c.2)).fold(f64::NEG_INFINITY, f64::max);
    let lowest = corners.iter().map(|c| c.1.min(c.2)).fold(f64::INFINITY, f64::min);
    let (mut lo, mut hi) = crate::spice::ramp_span_v(highest, lowest);
    // Inside the stated field span where the thresholds allow: the network is then driven as in
    // service, not beyond.
    let span = crate::input_network::field_span_v(net, checks, circuit.supply_v());
    if span.0 < lowest {
        lo = lo.max(span.0);
    }
    if span.1 > highest {
        hi = hi.min(span.1);
    }
    let (neg, sup) = (terminal.negative_rail_v(), terminal.supply_v());
    let points = [net.clamp_at(lo, neg, sup), net.clamp_at(hi, neg, sup)];
    // The source's current: through R_top into the dropper's node, else all of it into the clamp
    // (the trigger's own input current, nano- to microamperes, is left out).
    let source_current = |p: &crate::input_network::ClampPoint| match net.dropper {
        Some(d) => (p.field_v - (p.clamp_node_v + p.clamp_current_a * net.series_ohm.unwrap_or(0.0))) / d.top_ohm,
        None => p.clamp_current_a,
    };
    let clamped = points.iter().filter(|p| p.clamp_current_a != 0.0).max_by(|a, b| a.clamp_current_a.abs().total_cmp(&b.clamp_current_a.abs()));
    let rating = match net.clamp {
        Clamp::None => None,
        Clamp::RailDiodes { max_current_a, .. } => Some(max_current_a),
        Clamp::Tvs { peak_current_a, .. } => Some(peak_current_a),
    };
    let tau = crate::input_network::analyse_network(&terminal.circuit, net, checks, &crate::bom::PartSettings::default())
        .ok()
        .and_then(|r| r.filter.map(|f| f.time_constant_s));
    let summary = NetworkBench {
        gain: net.gain(),
        source_resistance_ohm: net.source_resistance_ohm(),
        time_constant_s: tau,
        source_current_a: points.iter().map(|p| source_current(p).abs()).fold(0.0, f64::max),
        clamp_at_v: clamped.map(|p| p.field_v),
        clamp_current_a: clamped.map(|p| p.clamp_current_a.abs()),
        clamp_rating_a: rating,
        field_span_v: span,
    };
    let hysteresis_v = corners[0].1 - corners[0].2;
    let through = Through { summary, field_windows, pin: (analysis.vt_upper_v, analysis.vt_lower_v) };
    Ok(build(circuit, analysis, checks, pin_windows, &Primary { corners, hysteresis_v, ramp: (lo, hi), through: Some(through) }))
}

/// The readings the procedure's ramps produce: at the circuit input, or at the field terminal.
struct Primary<'a> {
    /// (supply, VT+, VT−) at each supply the procedure sets, nominal first.
    corners: Vec<(f64, f64, f64)>,
    /// Hysteresis at the nominal supply, volts.
    hysteresis_v: f64,
    /// The ramp's ends, volts.
    ramp: (f64, f64),
    /// The input network, when the ramps drive the field terminal.
    through: Option<Through<'a>>,
}

struct Through<'a> {
    summary: NetworkBench,
    field_windows: &'a ReadingWindows,
    /// The pin thresholds at the nominal supply (VT+, VT−).
    pin: (f64, f64),
}

fn amps(x: f64) -> String {
    crate::notation::format_with_unit(x, 3, crate::notation::Unit::Ampere)
}

fn build(
    circuit: &Topology,
    a: &crate::analysis::Analysis,
    checks: &CheckSettings,
    pin_windows: &ReadingWindows,
    primary: &Primary<'_>,
) -> BenchProcedure {
    let supply = circuit.supply_v();
    let through = primary.through.as_ref();
    // The windows the ramps' readings are accepted by.
    let windows = through.map_or(pin_windows, |t| t.field_windows);
    let (ramp_low_v, ramp_high_v) = primary.ramp;
    // Step: a twentieth of the narrowest of the hysteresis and the windows, at least 10 µV.
    let mut narrowest = primary.hysteresis_v.abs();
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
        narrowest = 0.01 * primary.corners[0].1.abs().max(1.0);
    }
    let step_v = (narrowest / 20.0).max(1e-5);
    let (before_up, after_up) = match a.sense {
        Sense::Inverting => (a.output_high_v, a.output_low_v),
        Sense::NonInverting => (a.output_low_v, a.output_high_v),
    };
    let input_name = if through.is_some() { "field terminal".to_string() } else { circuit.input_name().to_string() };
    let primary_at = if through.is_some() { ReadingPoint::FieldTerminal } else { ReadingPoint::Input };

    let mut readings = Vec::new();
    let ramp_readings = {
        let mut pair = |at: ReadingPoint, w: &ReadingWindows, supply_v: f64, up: f64, down: f64, nominal: bool| {
            let bench = w.bench_at(supply_v);
            let field = if nominal { w.field } else { ThresholdBounds::default() };
            readings.push(ExpectedReading {
                threshold: Threshold::Upper,
                at,
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
                at,
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
        for (k, &(s, up, down)) in primary.corners.iter().enumerate() {
            pair(primary_at, windows, s, up, down, k == 0);
        }
        let ramp_readings = 2 * primary.corners.len();
        if let Some(t) = through {
            pair(ReadingPoint::Pin, pin_windows, supply, t.pin.0, t.pin.1, true);
        }
        ramp_readings
    };

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
    match through {
        None => step(
            format!(
                "Set the {input_name} to {} (below VT−). OUT should read {} ({}).",
                v(ramp_low_v),
                word(before_up),
                v(before_up)
            ),
            None,
        ),
        Some(t) => step(
            format!(
                "Connect the source to the field terminal, ahead of the input network, and set it to {} (below VT−). OUT should read {} ({}).{}",
                v(ramp_low_v),
                word(before_up),
                v(before_up),
                network_notes(&t.summary, ramp_low_v, ramp_high_v)
            ),
            None,
        ),
    }
    // What the reading step calls the point read ("Read the input"; at the field terminal, "Read it").
    let read = if through.is_some() { "it".to_string() } else { format!("the {input_name}") };
    let mut idx = 0;
    for (k, chunk) in readings[..ramp_readings].chunks(2).enumerate() {
        let up = &chunk[0];
        let down = &chunk[1];
        if k > 0 && through.is_some() {
            // At the field terminal the repeated ramps are stated briefly (the sheet keeps to one
            // page with the network's own lines on it).
            step(format!("Set the supply to {} and repeat the two ramps.", v(up.supply_v)), None);
            step(
                format!("Raise it until OUT switches {} → {}: VT+, expected {}{}.", word(up.output_before_v), word(up.output_after_v), v(up.nominal_v), accept_text(up)),
                Some(idx),
            );
            step(
                format!("Lower it until OUT switches back: VT−, expected {}{}.", v(down.nominal_v), accept_text(down)),
                Some(idx + 1),
            );
            idx += 2;
            continue;
        }
        if k > 0 {
            step(
                format!("Set the circuit's supply to {} and repeat the two ramps.{}", v(up.supply_v), expected_at(up, down)),
                None,
            );
        }
        step(
            format!(
                "Raise the {input_name} slowly, in steps of at most {} near {}, until OUT switches {} → {}. Read {read}: this is VT+, expected {}{}.",
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
                "Lower the {input_name} slowly, in steps of at most {} near {}, until OUT switches back {} → {}. Read {read}: this is VT−, expected {}{}.",
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
    if ramp_readings > 2 {
        let windows = if through.is_some() { String::new() } else { expected_at(&readings[0], &readings[1]) };
        step(format!("Return the supply to {}.{windows}", v(supply)), None);
    }
    if through.is_some() {
        let (up, down) = (&readings[ramp_readings], &readings[ramp_readings + 1]);
        step(
            format!(
                "Optional, at the pin, for reference (a 10 MΩ voltmeter on the trigger's input pin): raise the field terminal until OUT switches {} → {}; the pin reads VT+, expected {}{}.",
                word(up.output_before_v),
                word(up.output_after_v),
                v(up.nominal_v),
                accept_text(up)
            ),
            Some(ramp_readings),
        );
        step(
            format!(
                "Optional: lower it until OUT switches back {} → {}; the pin reads VT−, expected {}{}. Pin right, field off: the network's parts are off.",
                word(down.output_before_v),
                word(down.output_after_v),
                v(down.nominal_v),
                accept_text(down)
            ),
            Some(ramp_readings + 1),
        );
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
        network: through.map(|t| t.summary),
    }
}

/// The sentences on the input network a field-terminal procedure's set-up step ends with: the
/// source's current, the clamp when the ramp drives it, and the filter's settling time.
fn network_notes(n: &NetworkBench, ramp_low_v: f64, ramp_high_v: f64) -> String {
    let mut s = String::new();
    if ramp_low_v < n.field_span_v.0 || ramp_high_v > n.field_span_v.1 {
        s.push_str(&format!(
            " The ramp goes beyond the stated field range {} … {}, as the thresholds need.",
            v(n.field_span_v.0),
            v(n.field_span_v.1)
        ));
    }
    match (n.clamp_at_v, n.clamp_current_a) {
        (Some(at), Some(i)) => {
            let rating = n.clamp_rating_a.map(|r| format!(" (its rating: {})", amps(r))).unwrap_or_default();
            let wanted = (1.2 * n.source_current_a).max(1e-3);
            let limit = n.clamp_rating_a.map_or(wanted, |r| wanted.min(r));
            s.push_str(&format!(
                " Source current up to {}; at {} the clamp conducts {}{}: limit {}{}.",
                amps(n.source_current_a),
                v(at),
                amps(i),
                rating,
                amps(limit),
                if n.clamp_rating_a.is_some_and(|r| i > r) { ", below the clamp's rating, which the ramp's end would exceed" } else { "" }
            ));
        }
        _ => s.push_str(&format!(
            " Source current up to {} (clamp off): limit about {}.",
            amps(n.source_current_a),
            amps((1.2 * n.source_current_a).max(1e-3))
        )),
    }
    if let Some(tau) = n.time_constant_s {
        s.push_str(&format!(
            " Near each threshold wait {} after every step (filter τ = {}).",
            crate::notation::format_with_unit((5.0 * tau).max(1e-3), 2, crate::notation::Unit::Second),
            crate::notation::format_with_unit(tau, 3, crate::notation::Unit::Second)
        ));
    }
    s
}

/// The bench window alone, for the optional pin readings: " (accept lo … hi)".
fn accept_text(r: &ExpectedReading) -> String {
    match (r.bench_min_v, r.bench_max_v) {
        (Some(lo), Some(hi)) => format!(" (accept {} … {})", v(lo), v(hi)),
        _ => String::new(),
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
        // Pin rows (after the field terminal's) are named so; the column widens for them.
        let w = if self.readings.iter().any(|r| r.at == ReadingPoint::Pin) { 10 } else { 6 };
        let _ = writeln!(
            o,
            "  {:<w$} {:>10} {:>12} {:>25} {:>25}",
            "", "supply", "expected", "accept (bench window)", "field window"
        );
        for r in &self.readings {
            let name = match (r.threshold, r.at) {
                (Threshold::Upper, ReadingPoint::Pin) => "VT+ at pin",
                (Threshold::Lower, ReadingPoint::Pin) => "VT− at pin",
                (Threshold::Upper, _) => "VT+",
                (Threshold::Lower, _) => "VT−",
            };
            let range = |lo: Option<f64>, hi: Option<f64>, missing: &str| match (lo, hi) {
                (Some(lo), Some(hi)) => format!("{} … {}", v(lo), v(hi)),
                _ => missing.to_string(),
            };
            let bench = range(r.bench_min_v, r.bench_max_v, "(run the tolerance study)");
            let field = range(r.field_min_v, r.field_max_v, "");
            let _ = writeln!(o, "  {:<w$} {:>10} {:>12} {:>25} {:>25}", name, v(r.supply_v), v(r.nominal_v), bench, field);
        }
        let _ = writeln!(
            o,
            "  Bench window: part tolerances and device spread at 25 °C and the supply set. Field window: every tolerance over its full range (supply, temperature), for reference."
        );
        if let Some(n) = &self.network {
            let _ = writeln!(
                o,
                "  At the field terminal the windows include the input network's resistors at their tolerance (dropper ratio g = {:.4}, Rs = {}); the pin rows are the trigger's own, for reference.",
                n.gain,
                crate::notation::format_with_unit(n.source_resistance_ohm, 3, crate::notation::Unit::Ohm)
            );
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
    fn a_network_design_drives_the_field_terminal_and_keeps_the_pin_for_reference() {
        let r = catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").map(|s| s.record()).unwrap();
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let w = crate::overview::windows(&r, &a, None).unwrap();
        let p = crate::overview::bench(&r, &a, Some(&w));
        let report = crate::input_network::from_record::record_network(&r).unwrap().unwrap();
        assert_eq!(p.input_name, "field terminal");
        let n = p.network.expect("the network's figures");
        assert_eq!((n.gain, n.source_resistance_ohm), (report.gain, report.source_resistance_ohm));
        // Field readings first, at every supply; the nominal ones are the network report's.
        let field: Vec<&ExpectedReading> = p.readings.iter().filter(|x| x.at == ReadingPoint::FieldTerminal).collect();
        assert_eq!(field.len(), 2 * a.supply_corners.len());
        assert_eq!((field[0].nominal_v, field[1].nominal_v), (report.field.vt_upper_v, report.field.vt_lower_v));
        for x in &field {
            let (lo, hi) = (x.bench_min_v.unwrap(), x.bench_max_v.unwrap());
            assert!(lo < x.nominal_v && x.nominal_v < hi && x.accepts(x.nominal_v), "{x:?}");
        }
        assert!(field[0].field_min_v.unwrap() <= field[0].bench_min_v.unwrap());
        // The ramp covers every field threshold and stays inside the stated field span (0–26.4 V).
        assert!(p.ramp_low_v < field.iter().map(|x| x.nominal_v).fold(f64::INFINITY, f64::min));
        assert!(p.ramp_high_v > field.iter().map(|x| x.nominal_v).fold(0.0, f64::max));
        assert!(p.ramp_low_v >= 0.0 && p.ramp_high_v <= 26.4);
        // The pin readings follow, at the nominal supply, with the pin's own windows.
        let pin: Vec<&ExpectedReading> = p.readings.iter().filter(|x| x.at == ReadingPoint::Pin).collect();
        assert_eq!(pin.len(), 2);
        assert_eq!((pin[0].nominal_v, pin[1].nominal_v), (a.vt_upper_v, a.vt_lower_v));
        assert_eq!((pin[0].bench_min_v, pin[0].bench_max_v), (Some(w.bench[0].vt_upper_v().0), Some(w.bench[0].vt_upper_v().1)));
        assert_eq!(p.steps.iter().filter(|x| x.reading.is_some()).count(), p.readings.len());
        let text = p.to_text();
        assert!(text.contains("Connect the source to the field terminal"), "{text}");
        assert!(text.contains("VT+ at pin") && text.contains("Optional, at the pin, for reference"), "{text}");
        assert!(text.contains("Source current up to") && text.contains("clamp off"), "{text}");
        let (lo, hi) = (field[0].bench_min_v.unwrap(), field[0].bench_max_v.unwrap());
        assert!(text.contains(&format!("accept {} … {}", v(lo), v(hi))), "{text}");
        // The filter's settling time is stated (τ = 10 nF × about 20 kΩ).
        assert!(text.contains("Near each threshold wait"), "{text}");
        println!("{text}");
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
