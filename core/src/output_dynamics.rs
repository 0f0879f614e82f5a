//! Output dynamics: what the output stage's slew rate, output resistance and load do to the edges
//! at the load and to the thresholds, the speed-up capacitor across the feedback resistor, and the
//! slow-input chatter check.
//!
//! Models (each stated where it is used):
//! - **Loading** (DOMAIN §0: "output series resistance Ro adds to the feedback resistor"): the
//!   device's output is an ideal level VOH/VOL behind Ro; a load RL returns to 0 V. Seen from the
//!   feedback resistor this is a Thevenin source, level·RL/(Ro+RL) behind Ro‖RL (Thevenin's
//!   theorem, exact for the linear network), so each topology that feeds its output back through a
//!   resistor gives a copy of itself with those levels and Rf + Ro‖RL ([`Circuit::with_output_load`]).
//!   The levels quoted at the load are the Thevenin levels (the feedback resistor's own current,
//!   usually far below the load's, is in the thresholds but not in the quoted levels).
//! - **Edges at the load**: the device's own output ramps at its slew rate SR across its swing
//!   (duration T = swing/SR); the load node follows through a first-order lag τ = (Ro‖RL)·CL. The
//!   response to a ramp through a first-order lag is exact (closed form, solved for the 10 % and
//!   90 % points by bisection): y(t) = [t − τ(1 − e^(−t/τ))]/T for t ≤ T, and
//!   y(t) = 1 − (τ/T)·e^(−(t−T)/τ)·(1 − e^(−T/τ)) after. Its limits are the two textbook figures,
//!   0.8·swing/SR for a pure slew (10–90 % of a straight ramp) and τ·ln 9 ≈ 2.2·τ for a pure RC;
//!   the root-sum-square of the two, also reported, is only an approximation (it is within a few
//!   per cent of the exact figure when one term dominates and off by up to about 10 % between).
//! - **Speed-up capacitor** Cs across the feedback resistor: suggested value Rf·Cs = the output's
//!   10–90 % edge time (common practice: the speed-up or "commutating" capacitor's time constant is
//!   made comparable to the transition it must carry, Millman & Taub, *Pulse, Digital and Switching
//!   Waveforms*, from memory). At the edge the feedback node then jumps by the capacitive divider
//!   swing·Cs/(Cs+Cp) (Cp: the node's own capacitance to ground) instead of following the
//!   resistive divider, which drives the regenerative transition harder and holds the input off
//!   the new threshold for about Rf·(Cs+Cp) (an upper bound: the rest of the node's network only
//!   shortens it). Limitation: where the input also reaches the feedback node (non-inverting
//!   forms), Cs passes input-edge charge to the output rail and delays the node behind a fast
//!   input by (R1‖R2)·Cs; it also couples output ringing back into the node.
//! - **Slow-input chatter**: see [`ChatterCheck`] for the criterion.

use crate::analysis::{Thresholds, Warning, WarningCode};
use crate::error::DesignError;
use crate::limits::{check, Quantity};
use crate::topology::{Circuit, Topology};
use serde::{Deserialize, Serialize};

pub use crate::topology::output_load::{comparator_with_levels, OutputLoad};


fn default_node_capacitance_f() -> f64 {
    5e-12
}

/// The output-dynamics settings of a design record (`output_dynamics`). Every field has a
/// default, so `{}` is a complete setting (an ideal output, no load).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct OutputDynamicsSettings {
    /// Slew rate of the device's output, volts per microsecond (datasheet figure); `None`: not
    /// slew-limited.
    pub slew_rate_v_per_us: Option<f64>,
    /// Output resistance of the device Ro, ohms.
    pub output_resistance_ohm: f64,
    /// Load resistance RL from the output to 0 V, ohms; `None`: no resistive load.
    pub load_resistance_ohm: Option<f64>,
    /// Load capacitance CL at the output, farads.
    pub load_capacitance_f: f64,
    /// Speed-up capacitor Cs across the feedback resistor, farads; `None`: not fitted.
    pub speedup_capacitance_f: Option<f64>,
    /// Capacitance of the feedback node (device input plus stray) to ground, farads (default 5 pF:
    /// a comparator input's few pF plus board stray — common practice).
    pub node_capacitance_f: f64,
    /// Propagation delay of the device, seconds; `None`: taken as 0.
    pub propagation_delay_s: Option<f64>,
    /// Stray capacitance from the output to the signal input, farads (0: not modelled).
    pub stray_capacitance_f: f64,
    /// Resistance of the source driving the signal input, ohms (with the stray capacitance it sets
    /// how much of the output edge reaches the input).
    pub input_source_resistance_ohm: f64,
    /// Slowest input slope at the thresholds, volts per second (0: a d.c.-slow input, the worst case).
    pub input_slope_v_per_s: f64,
    /// Input noise RMS, volts (Gaussian; peak-to-peak taken as 6.6 × RMS, DOMAIN §6).
    pub noise_rms_v: f64,
}

impl Default for OutputDynamicsSettings {
    fn default() -> Self {
        OutputDynamicsSettings {
            slew_rate_v_per_us: None,
            output_resistance_ohm: 0.0,
            load_resistance_ohm: None,
            load_capacitance_f: 0.0,
            speedup_capacitance_f: None,
            node_capacitance_f: default_node_capacitance_f(),
            propagation_delay_s: None,
            stray_capacitance_f: 0.0,
            input_source_resistance_ohm: 0.0,
            input_slope_v_per_s: 0.0,
            noise_rms_v: 0.0,
        }
    }
}

/// Checks an optional non-negative value: 0 passes, anything else must be in the quantity's range.
fn zero_or(quantity: Quantity, field: &str, value: f64) -> Result<(), DesignError> {
    if value == 0.0 {
        Ok(())
    } else {
        check(quantity, field, value).map(|_| ())
    }
}

impl OutputDynamicsSettings {
    /// Checks every value against [`crate::limits`].
    pub fn validate(&self) -> Result<(), DesignError> {
        if let Some(sr) = self.slew_rate_v_per_us {
            check(Quantity::SlewRate, "output_dynamics.slew_rate_v_per_us", sr)?;
        }
        zero_or(Quantity::Resistance, "output_dynamics.output_resistance_ohm", self.output_resistance_ohm)?;
        if let Some(rl) = self.load_resistance_ohm {
            check(Quantity::Resistance, "output_dynamics.load_resistance_ohm", rl)?;
        }
        zero_or(Quantity::Capacitance, "output_dynamics.load_capacitance_f", self.load_capacitance_f)?;
        if let Some(c) = self.speedup_capacitance_f {
            check(Quantity::Capacitance, "output_dynamics.speedup_capacitance_f", c)?;
        }
        check(Quantity::Capacitance, "output_dynamics.node_capacitance_f", self.node_capacitance_f)?;
        if let Some(t) = self.propagation_delay_s {
            check(Quantity::Duration, "output_dynamics.propagation_delay_s", t)?;
        }
        zero_or(Quantity::Capacitance, "output_dynamics.stray_capacitance_f", self.stray_capacitance_f)?;
        zero_or(Quantity::Resistance, "output_dynamics.input_source_resistance_ohm", self.input_source_resistance_ohm)?;
        check(Quantity::Slope, "output_dynamics.input_slope_v_per_s", self.input_slope_v_per_s)?;
        if self.input_slope_v_per_s < 0.0 {
            return Err(DesignError::invalid("output_dynamics.input_slope_v_per_s", "give the slope's magnitude (0 or more)"));
        }
        check(Quantity::Voltage, "output_dynamics.noise_rms_v", self.noise_rms_v)?;
        if self.noise_rms_v < 0.0 {
            return Err(DesignError::invalid("output_dynamics.noise_rms_v", "must be 0 or more"));
        }
        Ok(())
    }

    /// The output's source resistance and load.
    pub fn load(&self) -> OutputLoad {
        OutputLoad { output_resistance_ohm: self.output_resistance_ohm, load_resistance_ohm: self.load_resistance_ohm }
    }

    /// Slew rate in volts per second, `None` when not slew-limited.
    pub fn slew_rate_v_per_s(&self) -> Option<f64> {
        self.slew_rate_v_per_us.map(|sr| sr * 1e6)
    }
}

/// A ramp of duration `ramp_s` (0: a step) seen through a first-order lag `tau_s` (0: none), as a
/// fraction of its final value at time `t_s` after the ramp starts (closed form, module doc).
pub fn lagged_ramp(t_s: f64, ramp_s: f64, tau_s: f64) -> f64 {
    if t_s <= 0.0 {
        return 0.0;
    }
    match (ramp_s > 0.0, tau_s > 0.0) {
        (false, false) => 1.0,
        (true, false) => (t_s / ramp_s).min(1.0),
        (false, true) => -libm::expm1(-t_s / tau_s),
        (true, true) => {
            if t_s <= ramp_s {
                (t_s + tau_s * libm::expm1(-t_s / tau_s)) / ramp_s
            } else {
                1.0 + (tau_s / ramp_s) * libm::exp(-(t_s - ramp_s) / tau_s) * libm::expm1(-ramp_s / tau_s)
            }
        }
    }
}

/// The time at which [`lagged_ramp`] reaches `fraction` (0 < fraction < 1), by bisection (the
/// response rises monotonically; 200 halvings of a bracket that surely holds it).
pub fn lagged_ramp_time(fraction: f64, ramp_s: f64, tau_s: f64) -> f64 {
    let (mut lo, mut hi) = (0.0_f64, ramp_s + 60.0 * tau_s);
    if hi <= 0.0 {
        return 0.0;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if lagged_ramp(mid, ramp_s, tau_s) < fraction {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// One output transition at the load.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct EdgeTiming {
    /// Swing at the load, volts.
    pub swing_v: f64,
    /// Duration of the device's own slew across its swing, seconds (swing/SR; 0 when not slew-limited).
    pub ramp_s: f64,
    /// Time constant of the load node, seconds (source resistance × CL).
    pub tau_s: f64,
    /// Slew alone: 0.8·ramp, seconds.
    pub slew_only_s: f64,
    /// RC alone: τ·ln 9 ≈ 2.2·τ, seconds.
    pub rc_only_s: f64,
    /// Root-sum-square of the two (an approximation, for comparison), seconds.
    pub rss_estimate_s: f64,
    /// Exact 10–90 % time of the slew-limited RC response, seconds.
    pub t10_90_s: f64,
    /// Start of the transition to its 50 % point at the load, seconds.
    pub to_mid_s: f64,
}

impl EdgeTiming {
    /// The transition of a ramp of `ramp_s` through a lag of `tau_s` across `swing_v`.
    pub fn new(swing_v: f64, ramp_s: f64, tau_s: f64) -> Self {
        let slew_only_s = 0.8 * ramp_s;
        let rc_only_s = tau_s * libm::log(9.0);
        EdgeTiming {
            swing_v,
            ramp_s,
            tau_s,
            slew_only_s,
            rc_only_s,
            rss_estimate_s: libm::hypot(slew_only_s, rc_only_s),
            t10_90_s: lagged_ramp_time(0.9, ramp_s, tau_s) - lagged_ramp_time(0.1, ramp_s, tau_s),
            to_mid_s: lagged_ramp_time(0.5, ramp_s, tau_s),
        }
    }
}

/// How the output resistance and the load move the thresholds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoadEffect {
    /// Whether the topology models it ([`Circuit::with_output_load`]).
    pub modelled: bool,
    /// Thresholds with the load, when modelled.
    pub thresholds: Option<Thresholds>,
    /// VT+ with the load minus VT+ without, volts (0 when not modelled).
    pub shift_upper_v: f64,
    /// VT− with the load minus VT− without, volts.
    pub shift_lower_v: f64,
    /// Output high and low levels at the load (Thevenin levels, module doc), volts.
    pub output_high_v: f64,
    /// See `output_high_v`.
    pub output_low_v: f64,
    /// In words.
    pub note: String,
}

/// The speed-up capacitor: suggestion and, when fitted, its effect.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpeedUp {
    /// The feedback resistor it goes across (designator, ohms), when the topology has one.
    pub feedback: Option<(String, f64)>,
    /// Suggested value Rf·Cs = 10–90 % edge time, farads (`None` without a feedback resistor or
    /// with ideal edges).
    pub suggested_f: Option<f64>,
    /// The fitted value, farads.
    pub fitted_f: Option<f64>,
    /// Jump of the feedback node at an edge through the fitted Cs: swing·Cs/(Cs+Cp), volts.
    pub node_step_v: Option<f64>,
    /// How long the jump holds (upper bound Rf·(Cs+Cp)), seconds.
    pub hold_s: Option<f64>,
    /// The rule and the limitation, in words.
    pub note: String,
}

/// The slow-input chatter check.
///
/// Criterion (ours, from the usual rule that hysteresis must exceed the noise peak-to-peak plus
/// any disturbance, DOMAIN §4 and §6): after the output switches, the input must not re-cross the
/// other threshold. It has moved on by s·(tpd + t10–90) while the output switched; noise can take
/// back its peak-to-peak (6.6 × RMS) and the output edge itself reaches the input through the stray
/// capacitance: min(swing·Cst/(Cst+Cp), Rs·Cst·swing/t_full) (a current C·dV/dt into the source
/// resistance, capped by the capacitive divider). The margin is
/// hysteresis + s·(tpd + t10–90) − noise p-p − coupled step; a margin at or below 0 is a warning.
/// A slow input (s → 0) gets no help from its own progress, which is when the check speaks.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ChatterCheck {
    /// Hysteresis used (with the load when modelled), volts.
    pub hysteresis_v: f64,
    /// Input progress during the transition s·(tpd + t10–90), volts.
    pub input_progress_v: f64,
    /// Noise peak-to-peak, volts.
    pub noise_peak_to_peak_v: f64,
    /// Output edge coupled into the input, volts.
    pub coupled_v: f64,
    /// The margin, volts.
    pub margin_v: f64,
    /// Whether the check passes (margin above 0).
    pub passes: bool,
}

/// Everything the output dynamics give for one design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OutputDynamicsReport {
    /// The thresholds under load.
    pub load: LoadEffect,
    /// Rising output edge at the load.
    pub rise: EdgeTiming,
    /// Falling output edge at the load.
    pub fall: EdgeTiming,
    /// Propagation delay used, seconds.
    pub propagation_delay_s: f64,
    /// Speed-up capacitor.
    pub speedup: SpeedUp,
    /// Slow-input chatter check.
    pub chatter: ChatterCheck,
    /// Findings (the chatter warning).
    pub warnings: Vec<Warning>,
}

/// The feedback resistor from the output (designator as the part list names it, ohms), for the
/// topologies that have one.
pub fn feedback_resistor(circuit: &Topology) -> Option<(String, f64)> {
    let id = match circuit {
        Topology::Inverting(_) => "rf_ohm",
        Topology::NonInverting(_) | Topology::CmosBuffer(_) => "r2_ohm",
        Topology::OpenDrain(c) => match c.polarity {
            crate::topology::open_drain::OpenDrainPolarity::Inverting { .. } => "rf_ohm",
            crate::topology::open_drain::OpenDrainPolarity::NonInverting { .. } => "r2_ohm",
        },
        Topology::SupplyMonitor(_) => "rh_ohm",
        _ => return None,
    };
    circuit.parameters().into_iter().find(|p| p.id == id).map(|p| (p.designator.unwrap_or_default(), p.value))
}

/// Evaluates the output dynamics of `circuit` with `settings`.
pub fn output_dynamics(circuit: &Topology, settings: &OutputDynamicsSettings) -> Result<OutputDynamicsReport, DesignError> {
    settings.validate()?;
    circuit.validate()?;
    let nominal = circuit.thresholds()?;
    let (voh, vol) = circuit.output_levels()?;
    let load = settings.load();

    // Thresholds under load.
    let (load_effect, hysteresis_v) = match circuit.with_output_load(&load) {
        Some(loaded) => {
            loaded.validate()?;
            let t = loaded.thresholds()?;
            let (h, l) = loaded.output_levels()?;
            let (h, l) = match circuit {
                // Open drain: the levels come from the pull-up network with the load fitted.
                Topology::OpenDrain(_) => (h, l),
                _ => {
                    let (th, tl, _) = load.thevenin(voh, vol);
                    (th, tl)
                }
            };
            let du = t.vt_upper_v - nominal.vt_upper_v;
            let dl = t.vt_lower_v - nominal.vt_lower_v;
            let note = if du == 0.0 && dl == 0.0 {
                "the output load does not move the thresholds of this topology (no feedback from the output)".to_string()
            } else {
                format!(
                    "Ro {:.4} Ω with the load moves VT+ by {:+.3} mV and VT− by {:+.3} mV (the feedback divider sees the output as a Thevenin source)",
                    settings.output_resistance_ohm,
                    du * 1e3,
                    dl * 1e3
                )
            };
            let effect = LoadEffect {
                modelled: true,
                thresholds: Some(t),
                shift_upper_v: du,
                shift_lower_v: dl,
                output_high_v: h,
                output_low_v: l,
                note,
            };
            (effect, t.hysteresis_v())
        }
        None => {
            let (th, tl, _) = load.thevenin(voh, vol);
            let effect = LoadEffect {
                modelled: false,
                thresholds: None,
                shift_upper_v: 0.0,
                shift_lower_v: 0.0,
                output_high_v: th,
                output_low_v: tl,
                note: format!("the effect of the output load on the thresholds is not modelled for the {} topology", circuit.name()),
            };
            (effect, nominal.hysteresis_v())
        }
    };

    // Edges at the load.
    let sr = settings.slew_rate_v_per_s();
    let cl = settings.load_capacitance_f;
    let device_swing = (voh - vol).abs();
    let ramp = sr.map_or(0.0, |sr| device_swing / sr);
    let swing = (load_effect.output_high_v - load_effect.output_low_v).abs();
    let (rise, fall) = match circuit {
        Topology::OpenDrain(c) => {
            // Rising: the transistor lets go and the pull-up (with the load) charges CL — no slew
            // limit. Falling: the transistor (sink resistance + Ro) pulls down at the slew rate.
            let rpu = crate::topology::parallel(&[Some(c.rpu_ohm), c.rl_ohm, settings.load_resistance_ohm]);
            let rsink = c.sink_resistance_ohm + settings.output_resistance_ohm;
            let rdown = crate::topology::parallel(&[Some(rpu), if rsink > 0.0 { Some(rsink) } else { None }]);
            let rdown = if rsink > 0.0 { rdown } else { 0.0 };
            (EdgeTiming::new(swing, 0.0, rpu * cl), EdgeTiming::new(swing, ramp, rdown * cl))
        }
        _ => {
            let (_, _, rs) = load.thevenin(voh, vol);
            let e = EdgeTiming::new(swing, ramp, rs * cl);
            (e, e)
        }
    };
    let tpd = settings.propagation_delay_s.unwrap_or(0.0);
    let edge = rise.t10_90_s.max(fall.t10_90_s);

    // Speed-up capacitor.
    let feedback = feedback_resistor(circuit);
    let cp = settings.node_capacitance_f;
    let suggested_f = feedback.as_ref().and_then(|(_, rf)| if edge > 0.0 { Some(edge / rf) } else { None });
    let fitted = settings.speedup_capacitance_f;
    let (node_step_v, hold_s) = match (&feedback, fitted) {
        (Some((_, rf)), Some(cs)) => (Some(swing * cs / (cs + cp)), Some(rf * (cs + cp))),
        _ => (None, None),
    };
    let limitation = match circuit {
        Topology::NonInverting(_) | Topology::CmosBuffer(_) => {
            " Here the input reaches the feedback node through R1: Cs passes a fast input edge's charge to the output and delays the node by about (R1‖R2)·Cs."
        }
        Topology::OpenDrain(c) if matches!(c.polarity, crate::topology::open_drain::OpenDrainPolarity::NonInverting { .. }) => {
            " Here the input reaches the feedback node through R1: Cs passes a fast input edge's charge to the output and delays the node by about (R1‖R2)·Cs."
        }
        _ => "",
    };
    let note = match &feedback {
        None => format!("no feedback resistor from the output in the {} topology: no speed-up capacitor applies", circuit.name()),
        Some((d, _)) => format!(
            "rule: {d}·Cs equal to the output's 10–90 % edge time (common practice); Cs makes the feedback node jump with the output edge, speeding the regenerative transition and holding the input off the new threshold for up to Rf·(Cs+Cp); it also couples output ringing back into the node.{limitation}"
        ),
    };
    let speedup = SpeedUp { feedback, suggested_f, fitted_f: fitted, node_step_v, hold_s, note };

    // Slow-input chatter.
    let s = settings.input_slope_v_per_s;
    let progress = s * (tpd + edge);
    let noise_pp = 6.6 * settings.noise_rms_v;
    let cst = settings.stray_capacitance_f;
    let coupled = if cst > 0.0 {
        let divider = swing * cst / (cst + cp);
        let full = edge / 0.8;
        if full > 0.0 && settings.input_source_resistance_ohm > 0.0 {
            divider.min(settings.input_source_resistance_ohm * cst * swing / full)
        } else if settings.input_source_resistance_ohm > 0.0 {
            divider
        } else {
            0.0
        }
    } else {
        0.0
    };
    let margin = hysteresis_v + progress - noise_pp - coupled;
    let chatter = ChatterCheck {
        hysteresis_v,
        input_progress_v: progress,
        noise_peak_to_peak_v: noise_pp,
        coupled_v: coupled,
        margin_v: margin,
        passes: margin > 0.0,
    };
    let mut warnings = Vec::new();
    if !chatter.passes {
        warnings.push(Warning::new(
            WarningCode::Note,
            format!(
                "the output may chatter on a slow input: hysteresis {:.2} mV plus the input's progress during the switching {:.2} mV (slope × (delay + edge time)) does not exceed the noise peak-to-peak {:.2} mV plus the output edge coupled into the input {:.2} mV; widen the hysteresis, fit a speed-up capacitor across the feedback resistor or reduce the coupling",
                hysteresis_v * 1e3,
                progress * 1e3,
                noise_pp * 1e3,
                coupled * 1e3
            ),
        ));
    }
    Ok(OutputDynamicsReport { load: load_effect, rise, fall, propagation_delay_s: tpd, speedup, chatter, warnings })
}

/// The SPICE deck of `circuit` with its output dynamics: the behavioural output switches drive an
/// internal node `out_src` that reaches the output through RO (the output resistance), the load
/// RL and CL sit from the output to 0 V, and the speed-up capacitor CS goes across the feedback
/// resistor. The slew rate is not represented (SPICE3's switch has no slew limit; stated in the
/// deck): a transient of this deck shows the RC part of the edges only. The thresholds in the
/// deck's comments are the loaded ones when the topology models the load.
pub fn spice_deck(circuit: &Topology, title: &str, settings: &OutputDynamicsSettings) -> Result<String, DesignError> {
    use crate::netlist::Netlisted;
    use crate::spice::{ramp_span_v, write_deck};
    settings.validate()?;
    circuit.validate()?;
    let t = match circuit.with_output_load(&settings.load()) {
        Some(c) => c.thresholds()?,
        None => circuit.thresholds()?,
    };
    let mut net = circuit.netlist();
    let extra = dress(circuit, settings, &mut net);
    let (lo, hi) = ramp_span_v(t.vt_upper_v, t.vt_lower_v);
    crate::finite::check("spice", &(&t, [lo, hi], &net))?;
    let deck = write_deck(&net, title, t.vt_upper_v, t.vt_lower_v, lo, hi);
    let body = deck.strip_suffix(".end\n").unwrap_or(&deck);
    Ok(format!("{body}{extra}.end\n"))
}

/// Puts the output dynamics into a design's netlist `net` (the behavioural switch drives
/// `out_src`, RO joins it to the output) and returns the deck lines for RO, RL, CL and the
/// speed-up capacitor, to append before `.end`.
pub fn dress(circuit: &Topology, settings: &OutputDynamicsSettings, net: &mut crate::netlist::Netlist) -> String {
    use crate::netlist::{ActiveDevice, OUTPUT_NET};
    use crate::spice::spice_number as n;
    let ro = settings.output_resistance_ohm;
    let mut driven = false;
    if ro > 0.0 {
        for d in net.devices.iter_mut() {
            match d {
                ActiveDevice::Comparator { output, .. } | ActiveDevice::LogicGate { output, .. } if output == OUTPUT_NET => {
                    *output = "out_src".into();
                    driven = true;
                }
                _ => {}
            }
        }
    }
    let mut extra = String::from("\n* Output dynamics (Hysteron output_dynamics settings)\n");
    if let Some(sr) = settings.slew_rate_v_per_us {
        extra.push_str(&format!("* Device slew rate {sr} V/us is not represented here (the SW switch has no slew limit).\n"));
    }
    if driven {
        extra.push_str(&format!("* RO: output resistance of the device (not a part)\nRO out_src {OUTPUT_NET} {}\n", n(ro)));
    } else if ro > 0.0 {
        extra.push_str("* The output resistance is not represented: the output is not a behavioural switch.\n");
    }
    if let Some(rl) = settings.load_resistance_ohm {
        extra.push_str(&format!("* RL: load resistance (not a part)\nRL {OUTPUT_NET} 0 {}\n", n(rl)));
    }
    if settings.load_capacitance_f > 0.0 {
        extra.push_str(&format!("* CL: load capacitance (not a part)\nCL {OUTPUT_NET} 0 {}\n", n(settings.load_capacitance_f)));
    }
    if let (Some(cs), Some((designator, _))) = (settings.speedup_capacitance_f, feedback_resistor(circuit)) {
        if let Some(r) = net.resistors.iter().find(|r| r.designator == designator) {
            extra.push_str(&format!("* CS: speed-up capacitor across the feedback resistor {designator}\nCS {} {} {}\n", r.node_a, r.node_b, n(cs)));
        }
    }
    extra
}

/// The output dynamics in one line for the print sheet.
pub fn summary_line(r: &OutputDynamicsReport) -> String {
    use crate::notation::{format_with_unit, Unit};
    let t = |x: f64| format_with_unit(x, 3, Unit::Second);
    let mut s = format!("output edges at the load: rise {} , fall {} (10–90 %, exact slew-limited RC)", t(r.rise.t10_90_s), t(r.fall.t10_90_s));
    s = s.replace(" ,", ",");
    if r.load.modelled {
        s.push_str(&format!("; load moves VT+ {:+.2} mV, VT− {:+.2} mV", r.load.shift_upper_v * 1e3, r.load.shift_lower_v * 1e3));
    }
    if let Some(c) = r.speedup.suggested_f {
        s.push_str(&format!("; speed-up capacitor about {}", format_with_unit(c, 2, Unit::Farad)));
    }
    s.push_str(if r.chatter.passes { "; slow-input chatter check passes" } else { "; slow-input chatter check FAILS" });
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lagged_ramp_meets_its_two_limits() {
        // Pure slew: 10–90 % of a straight ramp is 0.8 of it (closed form).
        let e = EdgeTiming::new(5.0, 1e-6, 0.0);
        assert!((e.t10_90_s - 0.8e-6).abs() < 1e-15);
        // Pure RC: τ·ln 9 (closed form).
        let e = EdgeTiming::new(5.0, 0.0, 1e-6);
        assert!((e.t10_90_s - 1e-6 * 9f64.ln()).abs() < 1e-14);
        // Both: longer than either, never longer than their sum.
        let e = EdgeTiming::new(5.0, 1e-6, 0.5e-6);
        assert!(e.t10_90_s > e.slew_only_s && e.t10_90_s > e.rc_only_s);
        assert!(e.t10_90_s < e.slew_only_s + e.rc_only_s);
        // Continuity at the end of the ramp.
        let a = lagged_ramp(1e-6 * (1.0 - 1e-12), 1e-6, 0.3e-6);
        let b = lagged_ramp(1e-6 * (1.0 + 1e-12), 1e-6, 0.3e-6);
        assert!((a - b).abs() < 1e-9);
    }

    #[test]
    fn settings_are_checked() {
        let s = OutputDynamicsSettings { load_capacitance_f: -1.0, ..Default::default() };
        assert!(s.validate().is_err());
        let s = OutputDynamicsSettings { slew_rate_v_per_us: Some(f64::NAN), ..Default::default() };
        assert!(s.validate().is_err());
        assert!(OutputDynamicsSettings::default().validate().is_ok());
    }
}
