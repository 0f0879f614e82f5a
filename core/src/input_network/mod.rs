//! The input network in front of the trigger: what sits between the field terminal (the wire from
//! the sensor, the 24 V field line, the mains-derived signal) and the trigger's input pin.
//!
//! In order from the field terminal ([`InputNetwork`]):
//! 1. an optional two-resistor **dropper**: R_top from the field terminal to node D, R_bottom from
//!    D to ground (for field and mains-derived inputs);
//! 2. an optional **series resistor** from D to the clamp node C;
//! 3. an optional **clamp** at C: a diode to each rail (forward drop Vf), or a bidirectional TVS
//!    to ground (standoff, breakdown and clamping voltage at its peak pulse current);
//! 4. an optional **RC filter**: R_f from C to the trigger's input pin, C_f from the pin to ground.
//!
//! ## Field-referred thresholds (exact, every topology)
//! The dropper is a Thevenin source (Thevenin's theorem; any circuit-theory text, from memory):
//! gain g = R_bottom/(R_top + R_bottom), resistance R_top‖R_bottom. With the clamps off and the
//! capacitor charged (a static threshold), the trigger's pin sees the source g·V_field through
//! Rs = R_top‖R_bottom + R_series + R_f. The trigger's decision node (the comparator's inputs, the
//! gate's input, the transistor pair's base) depends, in a given output state, only on its pin
//! voltage — the pin is the trigger's only connection to the network. So the trip happens
//! exactly when the pin reaches the topology's own threshold VT_pin (at the circuit input, see
//! [`crate::topology::Circuit::thresholds`]), and at that instant the pin draws the current
//! Iin(VT_pin, state before the trip) the topology's [`crate::topology::Circuit::operating_point`]
//! gives. Kirchhoff's voltage law along the network then gives the field voltage at the trip:
//!
//! **V_field = (VT_pin + Rs·Iin) / g**
//!
//! No linearisation is involved (the bipolar pair's nonlinear input is evaluated at the trip
//! itself). For the non-inverting topology this is the familiar "source resistance adds to R1"
//! (Sedra & Smith, bistable section, from memory): its threshold with R1 replaced by R1 + Rs.
//!
//! ## Clamp current and dissipation
//! Seen from the clamp node, the network in front is the Thevenin source g·V with resistance
//! R_c = R_top‖R_bottom + R_series. A rail clamp holds C at V_rail + Vf (or V_neg − Vf), so its
//! current is **(g·V − V_rail − Vf)/R_c** — (Vin − Vrail − Vf)/R_series without a dropper (common
//! practice for input protection; from memory). The current flowing on into the trigger input is
//! neglected (it is counted as clamp current: an upper bound). A TVS is modelled as its breakdown
//! voltage plus a dynamic resistance R_d = (V_clamp − V_br)/I_pp through its rated clamping point
//! (a piecewise-linear fit to the datasheet's two points, common practice), so
//! I = (|g·V| − V_br)/(R_c + R_d). Each resistor dissipates I²R at the node voltages this gives.
//!
//! ## Filter
//! The capacitor sees the network resistance Rs in parallel with the trigger's own input
//! resistance R_in (the slope dV/dI of its input current in the state before the trip, from two
//! operating points), so τ = C_f·(Rs‖R_in) and the corner is fc = 1/(2πτ) (= 1/(2π·R·C) with
//! R = Rs‖R_in). Within one output state the pin is an affine function of the source behind a
//! one-pole filter, so the trip happens when the source, filtered with τ, reaches g·V_field.
//! A ramp of slope S from rest through a first-order lag gives y(t) = S·(t − τ(1 − e^{−t/τ}))
//! (ramp response of a first-order system: Ogata, *Modern Control Engineering*, §5-3, from
//! memory), so the delay Δ at a crossing reached t0 after the ramp began solves
//! **Δ = τ·(1 − e^{−(t0 + Δ)/τ})**, which tends to **Δ = τ** once t0 ≫ τ (the steady-state
//! lag). The phase lag at frequency f is atan(2πfτ) and the amplitude ratio 1/√(1 + (2πfτ)²).

pub mod noise;
pub mod parts;
pub mod from_record;
pub mod terminal;
pub mod spice;

use crate::analysis::{CheckSettings, OutputState, Sense, Thresholds};
use crate::bom::PartSettings;
use crate::error::DesignError;
use crate::limits::{check, Quantity};
use crate::topology::{Circuit, Topology};
use serde::{Deserialize, Serialize};

/// The two-resistor dropper at the field terminal.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Dropper {
    /// R_top, from the field terminal to the dropper's node, ohms.
    pub top_ohm: f64,
    /// R_bottom, from the dropper's node to ground, ohms.
    pub bottom_ohm: f64,
}

/// The clamp at the node after the series resistor.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Clamp {
    /// No clamp.
    #[default]
    None,
    /// A diode to each rail (supply and negative rail).
    RailDiodes {
        /// Forward drop at the clamp current, volts (0.3 V Schottky, 0.7 V silicon; common practice).
        forward_v: f64,
        /// The diodes' rated forward current, amperes.
        max_current_a: f64,
    },
    /// A bidirectional TVS diode from the clamp node to ground.
    Tvs {
        /// Reverse standoff voltage (no conduction at or below it), volts.
        standoff_v: f64,
        /// Breakdown voltage, volts.
        breakdown_v: f64,
        /// Clamping voltage at the peak pulse current, volts.
        clamping_v: f64,
        /// Peak pulse current the clamping voltage is given at (its rating), amperes.
        peak_current_a: f64,
    },
}

/// The RC filter in front of the trigger's input pin.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RcFilter {
    /// Series resistor from the clamp node to the pin, ohms.
    pub r_ohm: f64,
    /// Capacitor from the pin to ground, farads.
    pub c_f: f64,
}

/// The input network of a design record (`input_network`), from the field terminal to the pin.
/// Every part is optional; `{}` is no network (the field terminal is the pin).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct InputNetwork {
    /// Two-resistor dropper at the field terminal.
    pub dropper: Option<Dropper>,
    /// Series resistor before the clamp, ohms.
    pub series_ohm: Option<f64>,
    /// The clamp.
    pub clamp: Clamp,
    /// The RC filter before the pin.
    pub filter: Option<RcFilter>,
    /// Highest voltage stated at the field terminal in operation, volts (`None`: the checks'
    /// highest input, else the supply).
    pub field_max_v: Option<f64>,
    /// Lowest voltage stated at the field terminal in operation, volts (`None`: the checks'
    /// lowest input, else 0 V).
    pub field_min_v: Option<f64>,
    /// A stated surge at the field terminal (both polarities), volts.
    pub surge_v: Option<f64>,
    /// Time the slowest edge takes to cross from the lowest to the highest field voltage, seconds.
    pub slowest_edge_s: Option<f64>,
    /// A signal frequency at which the filter's phase lag is reported, hertz.
    pub signal_frequency_hz: Option<f64>,
}

impl InputNetwork {
    /// Checks every value against its physical range ([`crate::limits`]) and the network's own
    /// rules (a clamp needs resistance in front of it; a TVS's standoff ≤ breakdown < clamping).
    pub fn validate(&self) -> Result<(), DesignError> {
        if let Some(d) = &self.dropper {
            check(Quantity::Resistance, "input_network.dropper.top_ohm", d.top_ohm)?;
            check(Quantity::Resistance, "input_network.dropper.bottom_ohm", d.bottom_ohm)?;
        }
        if let Some(r) = self.series_ohm {
            check(Quantity::Resistance, "input_network.series_ohm", r)?;
        }
        if let Some(f) = &self.filter {
            check(Quantity::Resistance, "input_network.filter.r_ohm", f.r_ohm)?;
            check(Quantity::Capacitance, "input_network.filter.c_f", f.c_f)?;
        }
        match self.clamp {
            Clamp::None => {}
            Clamp::RailDiodes { forward_v, max_current_a } => {
                positive_in(Quantity::Voltage, "input_network.clamp.forward_v", forward_v)?;
                positive_in(Quantity::Current, "input_network.clamp.max_current_a", max_current_a)?;
            }
            Clamp::Tvs { standoff_v, breakdown_v, clamping_v, peak_current_a } => {
                positive_in(Quantity::Voltage, "input_network.clamp.standoff_v", standoff_v)?;
                positive_in(Quantity::Voltage, "input_network.clamp.breakdown_v", breakdown_v)?;
                positive_in(Quantity::Voltage, "input_network.clamp.clamping_v", clamping_v)?;
                positive_in(Quantity::Current, "input_network.clamp.peak_current_a", peak_current_a)?;
                if standoff_v > breakdown_v {
                    return Err(DesignError::invalid(
                        "input_network.clamp.standoff_v",
                        format!("must not exceed the breakdown voltage ({breakdown_v} V): check the TVS datasheet"),
                    ));
                }
                if clamping_v <= breakdown_v {
                    return Err(DesignError::invalid(
                        "input_network.clamp.clamping_v",
                        format!("must be above the breakdown voltage ({breakdown_v} V): check the TVS datasheet"),
                    ));
                }
            }
        }
        if self.clamp != Clamp::None && self.clamp_source_resistance_ohm() <= 0.0 {
            return Err(DesignError::invalid(
                "input_network.series_ohm",
                "a clamp needs a series resistor (or a dropper) in front of it to limit its current: enter one",
            ));
        }
        for (field, v) in [
            ("input_network.field_max_v", self.field_max_v),
            ("input_network.field_min_v", self.field_min_v),
            ("input_network.surge_v", self.surge_v),
        ] {
            if let Some(v) = v {
                check(Quantity::Voltage, field, v)?;
            }
        }
        if let (Some(lo), Some(hi)) = (self.field_min_v, self.field_max_v) {
            if lo >= hi {
                return Err(DesignError::invalid("input_network.field_min_v", "must be below input_network.field_max_v"));
            }
        }
        if let Some(t) = self.slowest_edge_s {
            positive_in(Quantity::Duration, "input_network.slowest_edge_s", t)?;
        }
        if let Some(f) = self.signal_frequency_hz {
            check(Quantity::Frequency, "input_network.signal_frequency_hz", f)?;
        }
        Ok(())
    }

    /// Whether the network holds any part (an empty network is the field terminal wired to the pin).
    pub fn has_parts(&self) -> bool {
        self.dropper.is_some() || self.series_ohm.is_some() || self.clamp != Clamp::None || self.filter.is_some()
    }

    /// The dropper's ratio g = R_bottom/(R_top + R_bottom); 1 without a dropper.
    pub fn gain(&self) -> f64 {
        self.dropper.map_or(1.0, |d| d.bottom_ohm / (d.top_ohm + d.bottom_ohm))
    }

    /// The dropper's Thevenin resistance R_top‖R_bottom, ohms (0 without a dropper).
    pub fn dropper_resistance_ohm(&self) -> f64 {
        self.dropper.map_or(0.0, |d| d.top_ohm * d.bottom_ohm / (d.top_ohm + d.bottom_ohm))
    }

    /// The resistance in front of the clamp node: R_top‖R_bottom + R_series, ohms.
    pub fn clamp_source_resistance_ohm(&self) -> f64 {
        self.dropper_resistance_ohm() + self.series_ohm.unwrap_or(0.0)
    }

    /// The network's Thevenin resistance seen from the trigger's pin with the capacitor and clamps
    /// out: Rs = R_top‖R_bottom + R_series + R_f, ohms.
    pub fn source_resistance_ohm(&self) -> f64 {
        self.clamp_source_resistance_ohm() + self.filter.map_or(0.0, |f| f.r_ohm)
    }

    /// The clamp node's limits (low, high), volts, for rails `negative_rail_v` and `supply_v`:
    /// rail ∓ Vf for rail diodes, ±V_br for a TVS, unbounded without a clamp.
    pub fn clamp_levels_v(&self, negative_rail_v: f64, supply_v: f64) -> (f64, f64) {
        match self.clamp {
            Clamp::None => (f64::NEG_INFINITY, f64::INFINITY),
            Clamp::RailDiodes { forward_v, .. } => (negative_rail_v - forward_v, supply_v + forward_v),
            Clamp::Tvs { breakdown_v, .. } => (-breakdown_v, breakdown_v),
        }
    }

    /// The clamp's state for a field voltage `field_v`: its current and the clamp node's voltage.
    /// See the module documentation for the model.
    pub fn clamp_at(&self, field_v: f64, negative_rail_v: f64, supply_v: f64) -> ClampPoint {
        let v = self.gain() * field_v;
        let rc = self.clamp_source_resistance_ohm();
        let (current_a, node_v, clamp_power_w) = match self.clamp {
            Clamp::None => (0.0, v, 0.0),
            Clamp::RailDiodes { forward_v, .. } => {
                let (lo, hi) = self.clamp_levels_v(negative_rail_v, supply_v);
                if v > hi {
                    let i = (v - hi) / rc;
                    (i, hi, i * forward_v)
                } else if v < lo {
                    let i = (v - lo) / rc;
                    (i, lo, -i * forward_v)
                } else {
                    (0.0, v, 0.0)
                }
            }
            Clamp::Tvs { breakdown_v, clamping_v, peak_current_a, .. } => {
                let rd = (clamping_v - breakdown_v) / peak_current_a;
                if v.abs() > breakdown_v {
                    let i = (v.abs() - breakdown_v) / (rc + rd);
                    let node = breakdown_v + i * rd;
                    (i * v.signum(), node * v.signum(), i * node)
                } else {
                    (0.0, v, 0.0)
                }
            }
        };
        // Resistor dissipation along the path: series current i through R_series; the dropper's
        // node sits at node_v + i·R_series, so R_top carries (V − V_D)/R_top and R_bottom V_D/R_bottom.
        let rs = self.series_ohm.unwrap_or(0.0);
        let vd = node_v + current_a * rs;
        let (top_w, bottom_w) = match self.dropper {
            Some(d) => ((field_v - vd).powi(2) / d.top_ohm, vd.powi(2) / d.bottom_ohm),
            None => (0.0, 0.0),
        };
        ClampPoint {
            field_v,
            clamp_current_a: current_a,
            clamp_node_v: node_v,
            clamp_power_w,
            series_power_w: current_a * current_a * rs,
            dropper_top_power_w: top_w,
            dropper_bottom_power_w: bottom_w,
        }
    }
}

fn positive_in(q: Quantity, field: &str, v: f64) -> Result<f64, DesignError> {
    crate::error::positive(field, v)?;
    check(q, field, v)
}

/// The network at one field voltage: clamp current, clamp node and dissipation per part.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ClampPoint {
    /// The field-terminal voltage, volts.
    pub field_v: f64,
    /// Current into the clamp (positive into the upper rail clamp), amperes.
    pub clamp_current_a: f64,
    /// The clamp node's voltage, volts.
    pub clamp_node_v: f64,
    /// The clamp's dissipation, watts.
    pub clamp_power_w: f64,
    /// The series resistor's dissipation, watts.
    pub series_power_w: f64,
    /// R_top's dissipation, watts (0 without a dropper).
    pub dropper_top_power_w: f64,
    /// R_bottom's dissipation, watts (0 without a dropper).
    pub dropper_bottom_power_w: f64,
}

/// One threshold's trip seen through the network.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Trip {
    /// The trigger's threshold at its pin, volts.
    pub pin_v: f64,
    /// The pin's input current at the trip, in the state before the trip, amperes.
    pub input_current_a: f64,
    /// The same threshold at the field terminal: (pin_v + Rs·Iin)/g, volts.
    pub field_v: f64,
    /// The trigger's input resistance in the state before the trip (dV/dI), ohms; `None` when
    /// its input current does not depend on the pin voltage.
    pub input_resistance_ohm: Option<f64>,
    /// The filter's time constant at this trip, C_f·(Rs‖R_in), seconds (`None` without a filter).
    pub time_constant_s: Option<f64>,
    /// Corner frequency 1/(2πτ), hertz.
    pub corner_hz: Option<f64>,
    /// Delay the filter adds at the slowest edge, seconds (see the module documentation).
    pub edge_delay_s: Option<f64>,
}

/// The filter's figures.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FilterFigures {
    /// The larger time constant of the two trips, seconds.
    pub time_constant_s: f64,
    /// Corner frequency 1/(2πτ) for that time constant, hertz.
    pub corner_hz: f64,
    /// Slope of the slowest edge at the field terminal, volts per second (`None` without
    /// `slowest_edge_s`).
    pub slowest_slope_v_per_s: Option<f64>,
    /// Phase lag at `signal_frequency_hz`, degrees.
    pub phase_lag_deg: Option<f64>,
    /// Amplitude ratio at `signal_frequency_hz`.
    pub amplitude_ratio: Option<f64>,
    /// The capacitor's largest voltage (the clamp level, else the highest input), volts.
    pub capacitor_max_v: f64,
}

/// Everything the network does to the design: the thresholds at the field terminal, the clamp
/// at the highest input and at the surge, dissipation, the filter, and warnings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetworkReport {
    /// The dropper's ratio g.
    pub gain: f64,
    /// Rs, the network's Thevenin resistance seen from the pin, ohms.
    pub source_resistance_ohm: f64,
    /// The thresholds at the pin, volts.
    pub pin: Thresholds,
    /// The thresholds at the field terminal, volts.
    pub field: Thresholds,
    /// VT+ through the network.
    pub upper: Trip,
    /// VT− through the network.
    pub lower: Trip,
    /// The network at the highest stated field voltage.
    pub at_max: ClampPoint,
    /// The network at the lowest stated field voltage.
    pub at_min: ClampPoint,
    /// The network at +surge and −surge (`None` without a stated surge).
    pub at_surge: Option<(ClampPoint, ClampPoint)>,
    /// The filter (`None` without one).
    pub filter: Option<FilterFigures>,
    /// Ratings exceeded and other findings, in words.
    pub warnings: Vec<String>,
}

impl NetworkReport {
    /// The worst clamp point: the larger clamp current of the highest and lowest input and the
    /// surge.
    pub fn worst(&self) -> ClampPoint {
        let mut w = if self.at_max.clamp_current_a.abs() >= self.at_min.clamp_current_a.abs() { self.at_max } else { self.at_min };
        if let Some((a, b)) = self.at_surge {
            for p in [a, b] {
                if p.clamp_current_a.abs() > w.clamp_current_a.abs() {
                    w = p;
                }
            }
        }
        w
    }
}

/// The state the output is in just before a rising input reaches VT+ (`rising`) or a falling
/// input reaches VT−.
pub fn state_before(sense: Sense, rising: bool) -> OutputState {
    match (sense, rising) {
        (Sense::NonInverting, true) | (Sense::Inverting, false) => OutputState::Low,
        _ => OutputState::High,
    }
}

/// Relative step for the input-resistance difference quotient.
const SLOPE_STEP_V: f64 = 1e-3;

/// The trip of one threshold through the network, exactly as the module documentation derives.
fn trip<C: Circuit>(circuit: &C, net: &InputNetwork, pin_v: f64, state: OutputState) -> Result<Trip, DesignError> {
    let op = circuit.operating_point(pin_v, state)?;
    let iin = op.input_current_a;
    let rs = net.source_resistance_ohm();
    let field_v = (pin_v + rs * iin) / net.gain();
    // Input resistance: central difference of the input current in the same state.
    let h = SLOPE_STEP_V * pin_v.abs().max(1.0);
    let i_hi = circuit.operating_point(pin_v + h, state)?.input_current_a;
    let i_lo = circuit.operating_point(pin_v - h, state)?.input_current_a;
    let di = i_hi - i_lo;
    let input_resistance_ohm = if di.abs() > 0.0 {
        let r = 2.0 * h / di;
        (r.is_finite() && r > 0.0 && r < 1e15).then_some(r)
    } else {
        None
    };
    let time_constant_s = net.filter.map(|f| {
        let r = match input_resistance_ohm {
            Some(rin) => rs * rin / (rs + rin),
            None => rs,
        };
        f.c_f * r
    });
    Ok(Trip {
        pin_v,
        input_current_a: iin,
        field_v,
        input_resistance_ohm,
        time_constant_s,
        corner_hz: time_constant_s.map(|t| 1.0 / (2.0 * std::f64::consts::PI * t)),
        edge_delay_s: None,
    })
}

/// The delay Δ of a first-order lag τ on a ramp, at a crossing the unfiltered ramp reaches `t0_s`
/// after it began from rest: the root of Δ = τ(1 − e^{−(t0+Δ)/τ}) in [0, τ] (module
/// documentation). Bisection on a function that is negative at 0 and non-negative at τ, so it
/// always ends; t0 ≫ τ gives τ.
pub fn ramp_delay_s(tau_s: f64, t0_s: f64) -> f64 {
    if !(tau_s.is_finite() && tau_s > 0.0) {
        return 0.0;
    }
    let t0 = t0_s.max(0.0);
    let g = |d: f64| d - tau_s * (1.0 - libm::exp(-(t0 + d) / tau_s));
    let (mut lo, mut hi) = (0.0_f64, tau_s);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if g(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-15 * tau_s {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// The phase lag of a one-pole filter τ at `frequency_hz`, degrees: atan(2πfτ).
pub fn phase_lag_deg(tau_s: f64, frequency_hz: f64) -> f64 {
    libm::atan(2.0 * std::f64::consts::PI * frequency_hz * tau_s).to_degrees()
}

/// The highest and lowest stated field voltages: the network's own, else the checks' input span
/// (its lowest defaulting to 0 V, its highest to the supply).
pub fn field_span_v(net: &InputNetwork, checks: &CheckSettings, supply_v: f64) -> (f64, f64) {
    let lo = net.field_min_v.or(checks.input_min_v).unwrap_or(0.0);
    let hi = net.field_max_v.or(checks.input_max_v).unwrap_or(supply_v);
    (lo, hi)
}

/// Analyses the input network in front of `circuit`: field-referred thresholds, clamp currents
/// and dissipation at the highest and lowest stated input and at the surge, the filter's corner,
/// delay at the slowest edge and phase lag, and warnings against the ratings (resistors against
/// the part settings' package rating with its derating factor, diodes against their current
/// rating, a TVS against its peak pulse current and its standoff).
pub fn analyse_network(
    circuit: &Topology,
    net: &InputNetwork,
    checks: &CheckSettings,
    parts: &PartSettings,
) -> Result<NetworkReport, DesignError> {
    net.validate()?;
    let pin = circuit.thresholds()?;
    let sense = circuit.sense();
    let mut upper = trip(circuit, net, pin.vt_upper_v, state_before(sense, true))?;
    let mut lower = trip(circuit, net, pin.vt_lower_v, state_before(sense, false))?;
    let field = Thresholds { vt_upper_v: upper.field_v, vt_lower_v: lower.field_v };
    let (neg, sup) = (circuit.negative_rail_v(), circuit.supply_v());
    let (lo_v, hi_v) = field_span_v(net, checks, sup);
    let at_max = net.clamp_at(hi_v, neg, sup);
    let at_min = net.clamp_at(lo_v, neg, sup);
    let at_surge = net.surge_v.map(|s| (net.clamp_at(s.abs(), neg, sup), net.clamp_at(-s.abs(), neg, sup)));
    let mut warnings = Vec::new();

    // Filter: delay at the slowest edge, phase lag, capacitor voltage.
    let slope = net.slowest_edge_s.map(|t| (hi_v - lo_v) / t);
    let filter = match net.filter {
        None => None,
        Some(_) => {
            for (t, rising) in [(&mut upper, true), (&mut lower, false)] {
                if let (Some(tau), Some(s)) = (t.time_constant_s, slope) {
                    // The edge starts at rest at one end of the span; t0 is when the unfiltered
                    // ramp reaches the field threshold.
                    let t0 = if rising { (t.field_v - lo_v) / s } else { (hi_v - t.field_v) / s };
                    if t0 > 0.0 && t.field_v > lo_v && t.field_v < hi_v {
                        t.edge_delay_s = Some(ramp_delay_s(tau, t0));
                    } else {
                        warnings.push(format!(
                            "the field threshold {:.4} V lies outside the stated field span {lo_v} V to {hi_v} V: the slowest edge never reaches it",
                            t.field_v
                        ));
                    }
                }
            }
            let tau = upper.time_constant_s.unwrap_or(0.0).max(lower.time_constant_s.unwrap_or(0.0));
            let (cl, ch) = net.clamp_levels_v(neg, sup);
            let gains = [net.gain() * hi_v, net.gain() * lo_v];
            let cap_max = gains.iter().map(|v| v.max(cl).min(ch).abs()).fold(0.0, f64::max);
            let surge_cap = at_surge.map_or(0.0, |(a, b)| a.clamp_node_v.abs().max(b.clamp_node_v.abs()));
            Some(FilterFigures {
                time_constant_s: tau,
                corner_hz: 1.0 / (2.0 * std::f64::consts::PI * tau),
                slowest_slope_v_per_s: slope,
                phase_lag_deg: net.signal_frequency_hz.map(|f| phase_lag_deg(tau, f)),
                amplitude_ratio: net
                    .signal_frequency_hz
                    .map(|f| 1.0 / (1.0 + (2.0 * std::f64::consts::PI * f * tau).powi(2)).sqrt()),
                capacitor_max_v: cap_max.max(surge_cap),
            })
        }
    };

    // The clamp window against the pin thresholds: a threshold beyond the clamp is never reached.
    let (cl, ch) = net.clamp_levels_v(neg, sup);
    for (name, t) in [("VT+", &upper), ("VT−", &lower)] {
        let node = t.pin_v + net.filter.map_or(0.0, |f| f.r_ohm) * t.input_current_a;
        if node > ch || node < cl {
            warnings.push(format!(
                "{name} needs {node:.4} V at the clamp node, beyond the clamp's {cl:.3} V to {ch:.3} V: the clamp holds the input short of the threshold; lower the threshold or raise the clamp level"
            ));
        }
    }

    // Ratings.
    let rated_w = parts.package.power_rating_w() / parts.power_derating_factor.max(1.0);
    let mut points = vec![("highest input", at_max), ("lowest input", at_min)];
    if let Some((a, b)) = at_surge {
        points.push(("surge", a));
        points.push(("negative surge", b));
    }
    for (when, p) in &points {
        for (part, w) in [
            ("series resistor", p.series_power_w),
            ("dropper top resistor", p.dropper_top_power_w),
            ("dropper bottom resistor", p.dropper_bottom_power_w),
        ] {
            if w > rated_w {
                warnings.push(format!(
                    "{part} dissipates {w:.4} W at the {when} ({} V), above its {} rating ÷ {} derating: choose a larger package or a pulse-rated part",
                    p.field_v,
                    parts.package.label(),
                    parts.power_derating_factor
                ));
            }
        }
        match net.clamp {
            Clamp::RailDiodes { max_current_a, .. } if p.clamp_current_a.abs() > max_current_a => warnings.push(format!(
                "clamp diode current {} at the {when} ({} V) exceeds its rating {}: raise the series resistor",
                crate::notation::format_with_unit(p.clamp_current_a.abs(), 3, crate::notation::Unit::Ampere),
                p.field_v,
                crate::notation::format_with_unit(max_current_a, 3, crate::notation::Unit::Ampere)
            )),
            Clamp::Tvs { peak_current_a, .. } if p.clamp_current_a.abs() > peak_current_a => warnings.push(format!(
                "TVS current {} at the {when} ({} V) exceeds its peak pulse rating {}: raise the series resistor or choose a larger TVS",
                crate::notation::format_with_unit(p.clamp_current_a.abs(), 3, crate::notation::Unit::Ampere),
                p.field_v,
                crate::notation::format_with_unit(peak_current_a, 3, crate::notation::Unit::Ampere)
            )),
            _ => {}
        }
    }
    if let Clamp::Tvs { standoff_v, .. } = net.clamp {
        let normal = (net.gain() * hi_v).abs().max((net.gain() * lo_v).abs());
        if normal > standoff_v {
            warnings.push(format!(
                "the highest normal input puts {normal:.3} V on the TVS, above its standoff {standoff_v} V: it leaks or conducts in operation; choose a higher standoff"
            ));
        }
    }
    if matches!(net.clamp, Clamp::RailDiodes { .. }) && at_max.clamp_current_a > 0.0 {
        warnings.push(format!(
            "the upper clamp conducts at the highest normal input ({hi_v} V): {} flows into the supply rail, which must be able to sink it",
            crate::notation::format_with_unit(at_max.clamp_current_a, 3, crate::notation::Unit::Ampere)
        ));
    }
    let report = NetworkReport {
        gain: net.gain(),
        source_resistance_ohm: net.source_resistance_ohm(),
        pin,
        field,
        upper,
        lower,
        at_max,
        at_min,
        at_surge,
        filter,
        warnings,
    };
    crate::finite::check("input_network", &report)?;
    Ok(report)
}

/// One line for the print sheet: thresholds at the field terminal, clamp and filter.
pub fn sheet_line(report: &NetworkReport) -> String {
    use crate::notation::{format_with_unit, Unit};
    let mut s = format!(
        "Input network: at the field terminal VT+ {} and VT− {} (at the pin {} and {}; Rs {})",
        format_with_unit(report.field.vt_upper_v, 4, Unit::Volt),
        format_with_unit(report.field.vt_lower_v, 4, Unit::Volt),
        format_with_unit(report.pin.vt_upper_v, 4, Unit::Volt),
        format_with_unit(report.pin.vt_lower_v, 4, Unit::Volt),
        format_with_unit(report.source_resistance_ohm, 3, Unit::Ohm),
    );
    let w = report.worst();
    if w.clamp_current_a != 0.0 {
        s.push_str(&format!(
            "; clamp current up to {} at {} V",
            format_with_unit(w.clamp_current_a.abs(), 3, Unit::Ampere),
            w.field_v
        ));
    }
    if let Some(f) = &report.filter {
        s.push_str(&format!("; filter corner {}", format_with_unit(f.corner_hz, 3, Unit::Hertz)));
        let d = report.upper.edge_delay_s.into_iter().chain(report.lower.edge_delay_s).fold(None, |m: Option<f64>, d| Some(m.map_or(d, |m| m.max(d))));
        if let Some(d) = d {
            s.push_str(&format!(", delay up to {} at the slowest edge", format_with_unit(d, 3, Unit::Second)));
        }
    }
    s.push('.');
    s
}

#[cfg(test)]
mod tests;
