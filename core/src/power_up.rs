//! Power-up state: which output state the circuit settles in while its supply ramps from the
//! device's minimum operating supply up to the nominal supply, for each input voltage.
//!
//! Model (ours): the supply rises slowly compared with the device's response (quasi-static), so
//! at every supply the circuit sits in one of its two states and switches as at d.c. when the
//! input leaves the band [VT−(supply), VT+(supply)] (thresholds from [`Circuit::with_supply`]).
//! Below the minimum operating supply the output is undefined, so both initial states are tracked
//! from there. An input that leaves the band at some supply of the ramp is forced into one state,
//! and both tracks agree from then on; an input that stays inside the band at every supply keeps
//! whatever state the device woke up in. So the state is not guaranteed exactly for inputs in
//! [max VT−(supply), min VT+(supply)] over the ramp, and guaranteed (to the state of the last
//! forcing) everywhere else. With thresholds that scale with the supply this range is narrower
//! than the final hysteresis band and may vanish: an input in the final band was above the lower
//! supply's VT+ earlier in the ramp.
//!
//! The ramp time matters only through filters: a reference or input node with time constant τ
//! follows a ramp of slope Vs/t_ramp with a lag of (Vs/t_ramp)·τ volts (first-order response to a
//! ramp, closed form); it is reported, and called negligible when it is below a tenth of the
//! hysteresis (our rule) and the ramp lasts at least 5τ.

use crate::analysis::{OutputState, Sense};
use crate::error::DesignError;
use crate::limits::{check, Quantity};
use crate::topology::Circuit;
use serde::{Deserialize, Serialize};

/// Power-up settings of a design record (`power_up`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct PowerUpSettings {
    /// Time the supply takes from 0 V to its nominal value, seconds.
    pub ramp_time_s: f64,
    /// Lowest supply at which the device's output is defined, volts (datasheet minimum
    /// operating supply).
    pub minimum_supply_v: f64,
    /// Time constant of a filter on the reference node (e.g. a capacitor across the divider's
    /// lower resistor), seconds; `None`: none.
    pub reference_time_constant_s: Option<f64>,
    /// Time constant of a filter on the input, seconds; `None`: none.
    pub input_time_constant_s: Option<f64>,
}

impl Default for PowerUpSettings {
    fn default() -> Self {
        PowerUpSettings { ramp_time_s: 1e-3, minimum_supply_v: 1.8, reference_time_constant_s: None, input_time_constant_s: None }
    }
}

/// Supply steps of the quasi-static sweep (the minimum and the nominal supply are both steps).
pub const SUPPLY_STEPS: usize = 400;
/// Input points at which both initial states are tracked.
pub const INPUT_POINTS: usize = 401;

impl PowerUpSettings {
    /// Checks every value against [`crate::limits`].
    pub fn validate(&self) -> Result<(), DesignError> {
        check(Quantity::Duration, "power_up.ramp_time_s", self.ramp_time_s)?;
        check(Quantity::Voltage, "power_up.minimum_supply_v", self.minimum_supply_v)?;
        if let Some(t) = self.reference_time_constant_s {
            check(Quantity::Duration, "power_up.reference_time_constant_s", t)?;
        }
        if let Some(t) = self.input_time_constant_s {
            check(Quantity::Duration, "power_up.input_time_constant_s", t)?;
        }
        Ok(())
    }
}

/// One input range and the state the output settles in there.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PowerUpRegion {
    /// Lowest input of the range (grid point), volts.
    pub from_v: f64,
    /// Highest input of the range (grid point), volts.
    pub to_v: f64,
    /// The state the output settles in; `None`: not guaranteed (either state).
    pub state: Option<OutputState>,
}

/// Whether a filter's lag during the ramp matters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RampLag {
    /// Which node ("reference", "input").
    pub node: String,
    /// Lag behind the ramp (Vs/t_ramp)·τ, volts.
    pub lag_v: f64,
    /// Whether the ramp time matters for this node.
    pub matters: bool,
}

/// The power-up study's result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PowerUpReport {
    /// Supply range swept, volts (minimum operating supply, nominal supply).
    pub supply_from_v: f64,
    /// See `supply_from_v`.
    pub supply_to_v: f64,
    /// Output state for inputs below VT− at the nominal supply.
    pub state_below: OutputState,
    /// Output state for inputs above VT+ at the nominal supply.
    pub state_above: OutputState,
    /// Input range in which the state is not guaranteed, [max VT−, min VT+] over the ramp, volts;
    /// `None` when every input gets a guaranteed state.
    pub not_guaranteed_v: Option<[f64; 2]>,
    /// The final band [VT−, VT+] at the nominal supply, volts.
    pub final_band_v: [f64; 2],
    /// Input ranges with their settled state (from tracking both initial states on a grid).
    pub regions: Vec<PowerUpRegion>,
    /// Lags of filtered nodes during the ramp.
    pub lags: Vec<RampLag>,
    /// In words.
    pub notes: Vec<String>,
}

/// The power-up study of `circuit` (see the module doc for the model).
pub fn power_up<C: Circuit>(circuit: &C, settings: &PowerUpSettings) -> Result<PowerUpReport, DesignError> {
    settings.validate()?;
    circuit.validate()?;
    let nominal = circuit.supply_v();
    let vmin = settings.minimum_supply_v;
    if !(vmin > 0.0 && vmin <= nominal) {
        return Err(DesignError::invalid(
            "power_up.minimum_supply_v",
            format!("must be above 0 V and at most the nominal supply ({nominal} V)"),
        ));
    }
    let mut bands = Vec::with_capacity(SUPPLY_STEPS + 1);
    for i in 0..=SUPPLY_STEPS {
        let v = vmin + (nominal - vmin) * i as f64 / SUPPLY_STEPS as f64;
        let c = circuit.with_supply(v);
        c.validate().map_err(|e| DesignError::inconsistent(format!("the design cannot be evaluated at {v:.3} V during the ramp: {e}")))?;
        let t = c.thresholds()?;
        if !(t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite()) {
            return Err(DesignError::NotFinite { quantity: format!("power_up thresholds at {v} V") });
        }
        bands.push((t.vt_lower_v, t.vt_upper_v));
    }
    let (fin_lo, fin_hi) = bands[SUPPLY_STEPS];
    let max_lower = bands.iter().map(|b| b.0).fold(f64::NEG_INFINITY, f64::max);
    let min_upper = bands.iter().map(|b| b.1).fold(f64::INFINITY, f64::min);
    let not_guaranteed_v = if max_lower <= min_upper { Some([max_lower, min_upper]) } else { None };

    let (input_low_state, input_high_state) = match circuit.sense() {
        Sense::Inverting => (OutputState::High, OutputState::Low),
        Sense::NonInverting => (OutputState::Low, OutputState::High),
    };
    // Input grid over every threshold of the ramp, with a margin of a tenth of the span.
    let lo = bands.iter().map(|b| b.0.min(b.1)).fold(f64::INFINITY, f64::min);
    let hi = bands.iter().map(|b| b.0.max(b.1)).fold(f64::NEG_INFINITY, f64::max);
    let span = (hi - lo).max(1e-3);
    let (g0, g1) = (lo - 0.1 * span, hi + 0.1 * span);
    let mut regions: Vec<PowerUpRegion> = Vec::new();
    for k in 0..INPUT_POINTS {
        let vin = g0 + (g1 - g0) * k as f64 / (INPUT_POINTS - 1) as f64;
        // Both initial states: true = "input high" state.
        let mut states = [false, true];
        for &(vl, vu) in &bands {
            for s in states.iter_mut() {
                if vin >= vu {
                    *s = true;
                } else if vin < vl {
                    *s = false;
                }
            }
        }
        let state = if states[0] == states[1] {
            Some(if states[0] { input_high_state } else { input_low_state })
        } else {
            None
        };
        match regions.last_mut() {
            Some(r) if r.state == state => r.to_v = vin,
            _ => regions.push(PowerUpRegion { from_v: vin, to_v: vin, state }),
        }
    }

    let hysteresis = (fin_hi - fin_lo).abs();
    let mut lags = Vec::new();
    for (node, tau) in [("reference", settings.reference_time_constant_s), ("input", settings.input_time_constant_s)] {
        if let Some(tau) = tau {
            let lag_v = if settings.ramp_time_s > 0.0 { nominal / settings.ramp_time_s * tau } else { nominal };
            let matters = lag_v >= 0.1 * hysteresis || settings.ramp_time_s < 5.0 * tau;
            lags.push(RampLag { node: node.into(), lag_v, matters });
        }
    }
    let name = |s: OutputState| match s {
        OutputState::High => "high",
        OutputState::Low => "low",
    };
    let mut notes = vec![format!(
        "supply swept quasi-statically from {vmin:.3} V (minimum operating supply) to {nominal:.3} V; inputs below VT− settle {}, above VT+ settle {}",
        name(input_low_state),
        name(input_high_state)
    )];
    notes.push(match not_guaranteed_v {
        Some([a, b]) => format!("the state is not guaranteed for inputs from {a:.4} V to {b:.4} V (inside the band at every supply of the ramp)"),
        None => "every input gets a guaranteed state: the thresholds move enough with the supply that each input leaves the band during the ramp".into(),
    });
    if lags.is_empty() {
        notes.push("no filtered reference or input given: the ramp time does not matter in this quasi-static model".into());
    }
    for l in &lags {
        notes.push(format!(
            "the {} node lags the ramp by {:.4} V: the ramp time {}",
            l.node,
            l.lag_v,
            if l.matters { "matters (the lag is a tenth of the hysteresis or more, or the ramp is shorter than 5τ); slow the ramp or shorten the filter" } else { "does not matter" }
        ));
    }
    Ok(PowerUpReport {
        supply_from_v: vmin,
        supply_to_v: nominal,
        state_below: input_low_state,
        state_above: input_high_state,
        not_guaranteed_v,
        final_band_v: [fin_lo, fin_hi],
        regions,
        lags,
        notes,
    })
}

/// The power-up study in one line for the print sheet.
pub fn summary_line(r: &PowerUpReport) -> String {
    let name = |s: OutputState| match s {
        OutputState::High => "high",
        OutputState::Low => "low",
    };
    let range = match r.not_guaranteed_v {
        Some([a, b]) => format!("not guaranteed for inputs {a:.3}–{b:.3} V"),
        None => "guaranteed for every input".into(),
    };
    format!(
        "power-up ({:.2} → {:.2} V): output {} below VT−, {} above VT+; {range}",
        r.supply_from_v,
        r.supply_to_v,
        name(r.state_below),
        name(r.state_above)
    )
}
