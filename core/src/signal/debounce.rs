//! The RC switch debouncer feeding a Schmitt-trigger input (shared/DOMAIN.md §1e(ii)):
//! VDD–R1–S; the switch shorts S to 0 V; S–R2–X; C from X to 0 V; X drives the trigger input.
//!
//! Pressing discharges C through R2 only, from V0 (VDD at rest) toward 0 V; releasing charges it
//! through R1 + R2 toward VDD. By the RC law t = τ·ln[(V∞−V0)/(V∞−Vth)] (Sedra & Smith,
//! *Microelectronic Circuits*, from memory; DOMAIN §1e):
//! - t_press = R2·C·ln(VDD/VT−), from a fully charged C;
//! - t_release = (R1+R2)·C·ln[VDD/(VDD−VT+)], from a fully discharged C.
//!
//! For guaranteed minimum delays pass the datasheet corner (VT− max, VT+ min) as the thresholds.
//! A delay longer than the contact bounce keeps the output from following the bounce
//! (common practice: bounce lasts a few ms to about 20 ms). Choosing parts for a target delay
//! keeps C (or R2) and solves R2 (or C) from the press delay and R1 from the release delay.
//!
//! The time-domain simulation integrates the node with Runge–Kutta ([`super::ode`]) through a
//! seeded random bounce: the contact toggles at uniformly drawn instants within the bounce length
//! on press and on release, and the trigger's output edges are counted.

use super::ode::{advance, Event};
use super::oscillator::TracePoint;
use super::timing::rc_time_to_level_s;
use super::trigger::TriggerDesign;
use crate::error::{positive, DesignError};
use crate::rng::Rng;
use serde::{Deserialize, Serialize};

/// Which part to choose for a target delay.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum DebounceSolve {
    /// Keep C, choose R1 and R2.
    #[default]
    Resistors,
    /// Keep R2, choose C and R1.
    Capacitor,
}

/// Inputs of the RC debouncer.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct DebounceSettings {
    /// Pull-up rail VDD, volts.
    pub supply_v: f64,
    /// Pull-up R1 (VDD to the switch node), ohms.
    pub r1_ohm: f64,
    /// Series R2 (switch node to the capacitor), ohms.
    pub r2_ohm: f64,
    /// Capacitor C, farads.
    pub c_f: f64,
    /// Longest contact bounce, seconds.
    pub bounce_s: f64,
    /// Wanted delay on press and on release, seconds (`None`: no parts are chosen).
    pub target_delay_s: Option<f64>,
    /// Which part to choose for the target.
    pub solve: DebounceSolve,
    /// Smallest R1 accepted when choosing parts (limits the switch current), ohms.
    pub r1_min_ohm: f64,
    /// Contact changes during each bounce in the simulation (rounded up to even).
    pub bounce_toggles: u32,
    /// Seed of the simulated bounce.
    pub seed: u64,
}

impl Default for DebounceSettings {
    /// A reed switch with 4 ms bounce at 3.3 V, 10 kΩ pull-up, 10 kΩ series, 1 µF.
    fn default() -> Self {
        DebounceSettings {
            supply_v: 3.3,
            r1_ohm: 10e3,
            r2_ohm: 10e3,
            c_f: 1e-6,
            bounce_s: 4e-3,
            target_delay_s: None,
            solve: DebounceSolve::Resistors,
            r1_min_ohm: 1e3,
            bounce_toggles: 10,
            seed: 1,
        }
    }
}

/// Closed-form debouncer results.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DebounceResult {
    /// Press to the input falling through VT−, seconds.
    pub press_delay_s: f64,
    /// Release to the input rising through VT+, seconds.
    pub release_delay_s: f64,
    /// Whether both delays exceed the bounce length.
    pub outlasts_bounce: bool,
    /// Current through the closed switch, VDD/R1, amperes.
    pub switch_current_a: f64,
    /// Chosen R1 for the target, ohms.
    pub r1_for_target_ohm: Option<f64>,
    /// Chosen R2 for the target, ohms.
    pub r2_for_target_ohm: Option<f64>,
    /// Chosen C for the target, farads.
    pub c_for_target_f: Option<f64>,
    /// Release delay with the chosen parts (longer than the target when R1 hit its minimum), seconds.
    pub release_delay_for_target_s: Option<f64>,
}

fn check(design: &TriggerDesign, s: &DebounceSettings) -> Result<(), DesignError> {
    design.validate()?;
    use crate::limits::{check as limit, Quantity};
    positive("debounce.supply_v", s.supply_v)?;
    limit(Quantity::Voltage, "debounce.supply_v", s.supply_v)?;
    limit(Quantity::Resistance, "debounce.r1_ohm", s.r1_ohm)?;
    limit(Quantity::Resistance, "debounce.r2_ohm", s.r2_ohm)?;
    limit(Quantity::Capacitance, "debounce.c_f", s.c_f)?;
    limit(Quantity::Duration, "debounce.bounce_s", s.bounce_s)?;
    limit(Quantity::Resistance, "debounce.r1_min_ohm", s.r1_min_ohm)?;
    if let Some(t) = s.target_delay_s {
        limit(Quantity::Duration, "debounce.target_delay_s", t)?;
    }
    let t = design.thresholds;
    if !(0.0 < t.vt_lower_v && t.vt_lower_v < t.vt_upper_v && t.vt_upper_v < s.supply_v) {
        return Err(DesignError::NoSwitching {
            reason: format!(
                "the debouncer needs 0 < VT− < VT+ < VDD (got VT− {} V, VT+ {} V, VDD {} V): use a Schmitt input with hysteresis inside the supply",
                t.vt_lower_v, t.vt_upper_v, s.supply_v
            ),
        });
    }
    Ok(())
}

/// Press and release delays in closed form, and parts for a target delay.
pub fn rc_debounce(design: &TriggerDesign, s: &DebounceSettings) -> Result<DebounceResult, DesignError> {
    check(design, s)?;
    let t = design.thresholds;
    let vdd = s.supply_v;
    let ln_press = libm::log(vdd / t.vt_lower_v);
    let ln_release = libm::log(vdd / (vdd - t.vt_upper_v));
    let press = s.r2_ohm * s.c_f * ln_press;
    let release = (s.r1_ohm + s.r2_ohm) * s.c_f * ln_release;
    let mut out = DebounceResult {
        press_delay_s: press,
        release_delay_s: release,
        outlasts_bounce: press > s.bounce_s && release > s.bounce_s,
        switch_current_a: vdd / s.r1_ohm,
        r1_for_target_ohm: None,
        r2_for_target_ohm: None,
        c_for_target_f: None,
        release_delay_for_target_s: None,
    };
    if let Some(td) = s.target_delay_s {
        positive("debounce.target_delay_s", td)?;
        if td < s.bounce_s {
            return Err(DesignError::infeasible(
                format!("a {td} s debounce delay is shorter than the {} s bounce", s.bounce_s),
                "ask for a delay longer than the bounce",
            ));
        }
        let (r2, c) = match s.solve {
            DebounceSolve::Resistors => (td / (s.c_f * ln_press), s.c_f),
            DebounceSolve::Capacitor => (s.r2_ohm, td / (s.r2_ohm * ln_press)),
        };
        let r1 = (td / (c * ln_release) - r2).max(s.r1_min_ohm);
        out.r1_for_target_ohm = Some(r1);
        out.r2_for_target_ohm = Some(r2);
        out.c_for_target_f = Some(c);
        out.release_delay_for_target_s = Some((r1 + r2) * c * ln_release);
    }
    Ok(out)
}

/// The debouncer simulated through one press and one release with bounce.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DebounceSimulation {
    /// Trigger output edges during the press (1 = clean).
    pub press_edges: usize,
    /// Trigger output edges during the release (1 = clean).
    pub release_edges: usize,
    /// First contact to the first output edge on press, seconds.
    pub press_delay_s: Option<f64>,
    /// First contact opening to the first output edge on release, seconds.
    pub release_delay_s: Option<f64>,
    /// When the release begins, seconds from the press.
    pub release_at_s: f64,
    /// Contact changes on press (times from the press), seconds.
    pub press_contacts_s: Vec<f64>,
    /// Node voltage and trigger output through the run (output: VOH/VOL by the design's sense),
    /// thinned to about 20 000 integration steps plus every output change.
    pub trace: Vec<TracePoint>,
}

/// Simulates one press and one release with a seeded random bounce.
pub fn simulate_debounce(design: &TriggerDesign, s: &DebounceSettings) -> Result<DebounceSimulation, DesignError> {
    check(design, s)?;
    let t = design.thresholds;
    let vdd = s.supply_v;
    let tau_closed = s.r2_ohm * s.c_f;
    let tau_open = (s.r1_ohm + s.r2_ohm) * s.c_f;
    let h = tau_closed.min(tau_open) / 200.0;
    let press_len = rc_time_to_level_s(vdd, 0.0, t.vt_lower_v, tau_closed).unwrap_or(tau_closed);
    let release_len = rc_time_to_level_s(0.0, vdd, t.vt_upper_v, tau_open).unwrap_or(tau_open);
    // Wait 40 time constants after each bounce (e^−40 ≈ 4e-18 of the step remains), so each
    // transition starts from a settled node, as the closed form assumes.
    let release_at = s.bounce_s + 40.0 * tau_closed + 2.0 * press_len;
    let end = release_at + s.bounce_s + 40.0 * tau_open + 2.0 * release_len;
    if end / h > super::ode::MAX_STEPS as f64 {
        return Err(DesignError::invalid(
            "debounce.bounce_s",
            "the bounce is too long relative to the RC time constants to simulate: check the units",
        ));
    }
    let toggles = (s.bounce_toggles.min(1000) as usize).div_ceil(2) * 2;
    let mut rng = Rng::new(s.seed);
    let mut draw = |start: f64| -> Vec<f64> {
        let mut v: Vec<f64> = (0..toggles).map(|_| start + rng.uniform() * s.bounce_s).collect();
        v.sort_by(f64::total_cmp);
        v
    };
    // Contact events: (time, closed after it).
    let mut events: Vec<(f64, bool)> = vec![(0.0, true)];
    let press_toggles = draw(0.0);
    for (k, &x) in press_toggles.iter().enumerate() {
        events.push((x, k % 2 == 1));
    }
    events.push((release_at, false));
    for (k, &x) in draw(release_at).iter().enumerate() {
        events.push((x, k % 2 == 0));
    }
    events.sort_by(|a, b| a.0.total_cmp(&b.0));
    events.push((end, false));

    let high_out = |input_high: bool| {
        if (input_high) == matches!(design.sense, crate::analysis::Sense::NonInverting) {
            design.output_high_v
        } else {
            design.output_low_v
        }
    };
    // Keep the trace near 20 000 points whatever the ratio of bounce to time constant.
    let stride = ((end / h) / 20_000.0).ceil().max(1.0) as usize;
    let mut step_count = 0usize;
    let mut v = vdd;
    let mut input_high = true; // at rest the node sits at VDD, above VT+
    let mut trace = vec![TracePoint { t_s: 0.0, input_v: v, output_v: high_out(input_high) }];
    let (mut press_edges, mut release_edges) = (0usize, 0usize);
    let (mut press_delay, mut release_delay) = (None, None);
    let mut now = 0.0_f64;
    for w in events.windows(2) {
        let (t0, closed) = w[0];
        let t1 = w[1].0;
        now = now.max(t0);
        let (target, tau) = if closed { (0.0, tau_closed) } else { (vdd, tau_open) };
        let f = move |x: f64| (target - x) / tau;
        while now < t1 {
            let ev = if input_high { Event { level_v: t.vt_lower_v, upward: false } } else { Event { level_v: t.vt_upper_v, upward: true } };
            let base = now;
            let out_v = high_out(input_high);
            let a = advance(&f, v, t1 - now, h, Some(ev), |dt, x| {
                step_count += 1;
                if step_count.is_multiple_of(stride) {
                    trace.push(TracePoint { t_s: base + dt, input_v: x, output_v: out_v });
                }
            })?;
            v = a.v;
            if a.hit {
                now += a.elapsed_s;
                input_high = !input_high;
                trace.push(TracePoint { t_s: now, input_v: v, output_v: high_out(input_high) });
                if now < release_at {
                    press_edges += 1;
                    press_delay.get_or_insert(now);
                } else {
                    release_edges += 1;
                    release_delay.get_or_insert(now - release_at);
                }
            } else {
                now = t1;
            }
        }
    }
    Ok(DebounceSimulation {
        press_edges,
        release_edges,
        press_delay_s: press_delay,
        release_delay_s: release_delay,
        release_at_s: release_at,
        press_contacts_s: press_toggles,
        trace,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Sense, Thresholds};

    fn schmitt(up: f64, lo: f64) -> TriggerDesign {
        TriggerDesign { thresholds: Thresholds { vt_upper_v: up, vt_lower_v: lo }, output_high_v: 3.3, output_low_v: 0.0, sense: Sense::Inverting }
    }

    #[test]
    fn closed_form_matches_simulation_without_bounce() {
        let d = schmitt(1.9, 1.1);
        let s = DebounceSettings { bounce_s: 0.0, ..Default::default() };
        let c = rc_debounce(&d, &s).unwrap();
        let sim = simulate_debounce(&d, &s).unwrap();
        assert_eq!((sim.press_edges, sim.release_edges), (1, 1));
        assert!((sim.press_delay_s.unwrap() / c.press_delay_s - 1.0).abs() < 1e-9);
        assert!((sim.release_delay_s.unwrap() / c.release_delay_s - 1.0).abs() < 1e-9);
    }

    #[test]
    fn parts_for_target_meet_it_and_outlast_bounce() {
        let d = schmitt(1.9, 1.1);
        let s = DebounceSettings { target_delay_s: Some(10e-3), bounce_s: 4e-3, ..Default::default() };
        let r = rc_debounce(&d, &s).unwrap();
        let s2 = DebounceSettings {
            r1_ohm: r.r1_for_target_ohm.unwrap(),
            r2_ohm: r.r2_for_target_ohm.unwrap(),
            c_f: r.c_for_target_f.unwrap(),
            target_delay_s: None,
            ..s
        };
        let back = rc_debounce(&d, &s2).unwrap();
        assert!((back.press_delay_s - 10e-3).abs() < 1e-12);
        assert!(back.release_delay_s >= 10e-3 - 1e-12);
        assert!(back.outlasts_bounce);
        let sim = simulate_debounce(&d, &s2).unwrap();
        assert_eq!((sim.press_edges, sim.release_edges), (1, 1), "{sim:?}");
        assert!(rc_debounce(&d, &DebounceSettings { target_delay_s: Some(1e-3), ..s }).is_err());
    }

    #[test]
    fn too_short_a_delay_follows_the_bounce() {
        // 10 µs delay against a 4 ms bounce: the output chatters.
        let d = schmitt(1.9, 1.1);
        let s = DebounceSettings { r1_ohm: 100.0, r2_ohm: 100.0, c_f: 100e-9, bounce_s: 4e-3, ..Default::default() };
        let sim = simulate_debounce(&d, &s).unwrap();
        assert!(sim.press_edges > 1 && sim.release_edges > 1, "{} {}", sim.press_edges, sim.release_edges);
    }
}
