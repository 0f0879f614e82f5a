//! Timing errors of a two-threshold switch: propagation delay that depends on overdrive, the
//! output stage's edges (push-pull ramps or an open-drain pull-up charging the load), edge jitter
//! from noise, the phase error of a zero-crossing detector whose thresholds are not at zero, and
//! the time a slow edge spends between a logic input's VIL and VIH.

use super::Times;
use crate::analysis::Thresholds;
use crate::error::{finite, non_negative, positive, DesignError};
use crate::limits::{check as limit, Quantity};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// The trigger's state before the first sample.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum InitialState {
    /// "Input high" if the first sample is at or above VT+, else "input low" (also inside the band).
    #[default]
    Auto,
    /// As if the input had last been below VT−.
    InputLow,
    /// As if the input had last been above VT+.
    InputHigh,
}

/// How the device's propagation delay is given.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum DelaySpec {
    /// One figure for every overdrive.
    Fixed {
        /// Input threshold crossing to the start of the output edge, seconds.
        delay_s: f64,
    },
    /// The datasheet's delay at two overdrives (input beyond the threshold).
    TwoPoint {
        /// First overdrive, volts.
        overdrive_a_v: f64,
        /// Delay at the first overdrive, seconds.
        delay_a_s: f64,
        /// Second overdrive, volts.
        overdrive_b_v: f64,
        /// Delay at the second overdrive, seconds.
        delay_b_s: f64,
    },
}

impl Default for DelaySpec {
    fn default() -> Self {
        DelaySpec::Fixed { delay_s: 0.0 }
    }
}

/// The delay law, ready to evaluate. For two points the delay follows the power law
/// t(V) = tA·(V/VA)^(−α), α = ln(tA/tB)/ln(VB/VA), which passes through both points and stays
/// positive; overdrives below a tenth of the smaller specified one are treated as that tenth, so
/// the delay stays finite (our model; the 1/V trend of an input stage that integrates its
/// overdrive is common practice).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DelayModel {
    /// Delay at overdrive `reference_overdrive_v`, seconds.
    pub reference_delay_s: f64,
    /// Overdrive of the reference point, volts.
    pub reference_overdrive_v: f64,
    /// Exponent α (0 for a fixed delay).
    pub exponent: f64,
    /// Smallest overdrive evaluated, volts.
    pub min_overdrive_v: f64,
}

impl DelayModel {
    /// Builds and checks the law from the user's figures.
    pub fn new(spec: &DelaySpec) -> Result<Self, DesignError> {
        match *spec {
            DelaySpec::Fixed { delay_s } => {
                limit(Quantity::Duration, "timing.delay.delay_s", delay_s)?;
                Ok(DelayModel { reference_delay_s: delay_s, reference_overdrive_v: 1.0, exponent: 0.0, min_overdrive_v: 0.0 })
            }
            DelaySpec::TwoPoint { overdrive_a_v, delay_a_s, overdrive_b_v, delay_b_s } => {
                positive("timing.delay.overdrive_a_v", overdrive_a_v)?;
                positive("timing.delay.overdrive_b_v", overdrive_b_v)?;
                positive("timing.delay.delay_a_s", delay_a_s)?;
                positive("timing.delay.delay_b_s", delay_b_s)?;
                limit(Quantity::Voltage, "timing.delay.overdrive_a_v", overdrive_a_v)?;
                limit(Quantity::Voltage, "timing.delay.overdrive_b_v", overdrive_b_v)?;
                limit(Quantity::Duration, "timing.delay.delay_a_s", delay_a_s)?;
                limit(Quantity::Duration, "timing.delay.delay_b_s", delay_b_s)?;
                if overdrive_a_v == overdrive_b_v {
                    if delay_a_s != delay_b_s {
                        return Err(DesignError::inconsistent(
                            "two different delays at the same overdrive: give two different overdrives, or one fixed delay",
                        ));
                    }
                    return Ok(DelayModel {
                        reference_delay_s: delay_a_s,
                        reference_overdrive_v: overdrive_a_v,
                        exponent: 0.0,
                        min_overdrive_v: 0.0,
                    });
                }
                let alpha = libm::log(delay_a_s / delay_b_s) / libm::log(overdrive_b_v / overdrive_a_v);
                if alpha < 0.0 {
                    return Err(DesignError::inconsistent(
                        "the delay grows with overdrive in these figures: check that each delay is paired with its overdrive",
                    ));
                }
                Ok(DelayModel {
                    reference_delay_s: delay_a_s,
                    reference_overdrive_v: overdrive_a_v,
                    exponent: alpha,
                    min_overdrive_v: 0.1 * overdrive_a_v.min(overdrive_b_v),
                })
            }
        }
    }

    /// Whether the delay depends on the overdrive.
    pub fn depends_on_overdrive(&self) -> bool {
        self.exponent != 0.0
    }

    /// The propagation delay at overdrive `overdrive_v`, seconds.
    #[inline]
    pub fn delay_s(&self, overdrive_v: f64) -> f64 {
        if self.exponent == 0.0 {
            return self.reference_delay_s;
        }
        let v = if overdrive_v > self.min_overdrive_v { overdrive_v } else { self.min_overdrive_v };
        self.reference_delay_s * libm::pow(v / self.reference_overdrive_v, -self.exponent)
    }
}

/// The output stage's edges.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum OutputStage {
    /// Push-pull output with straight edges of the given 10–90 % times.
    PushPull {
        /// 10–90 % rise time, seconds.
        rise_time_s: f64,
        /// 90–10 % fall time, seconds.
        fall_time_s: f64,
    },
    /// Open-drain (open-collector) output: the pull-up charges the load capacitance on a rising
    /// edge (exponential, τ = Rpu·C); the transistor pulls down with a straight edge.
    OpenDrain {
        /// Pull-up resistance, ohms.
        pullup_ohm: f64,
        /// Load capacitance at the output node, farads.
        load_capacitance_f: f64,
        /// 90–10 % fall time, seconds.
        fall_time_s: f64,
    },
}

impl Default for OutputStage {
    fn default() -> Self {
        OutputStage::PushPull { rise_time_s: 0.0, fall_time_s: 0.0 }
    }
}

/// The shape of one output transition from its start.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum TransitionShape {
    /// A straight ramp across the full swing in `duration_s` (10–90 % time / 0.8).
    Linear {
        /// 0–100 % duration, seconds.
        duration_s: f64,
    },
    /// An exponential approach with time constant `tau_s`.
    Exponential {
        /// Time constant, seconds.
        tau_s: f64,
    },
}

impl TransitionShape {
    /// Time from the start of a full-swing transition to its 50 % point, seconds.
    pub fn to_mid_s(&self) -> f64 {
        match *self {
            TransitionShape::Linear { duration_s } => duration_s / 2.0,
            TransitionShape::Exponential { tau_s } => tau_s * std::f64::consts::LN_2,
        }
    }
}

impl OutputStage {
    /// Checks the values.
    pub fn validate(&self) -> Result<(), DesignError> {
        match *self {
            OutputStage::PushPull { rise_time_s, fall_time_s } => {
                limit(Quantity::Duration, "timing.output.rise_time_s", rise_time_s)?;
                limit(Quantity::Duration, "timing.output.fall_time_s", fall_time_s)?;
            }
            OutputStage::OpenDrain { pullup_ohm, load_capacitance_f, fall_time_s } => {
                limit(Quantity::Resistance, "timing.output.pullup_ohm", pullup_ohm)?;
                non_negative("timing.output.load_capacitance_f", load_capacitance_f)?;
                if load_capacitance_f != 0.0 {
                    limit(Quantity::Capacitance, "timing.output.load_capacitance_f", load_capacitance_f)?;
                }
                limit(Quantity::Duration, "timing.output.fall_time_s", fall_time_s)?;
            }
        }
        Ok(())
    }

    /// The (rising, falling) transition shapes.
    pub fn shapes(&self) -> (TransitionShape, TransitionShape) {
        match *self {
            OutputStage::PushPull { rise_time_s, fall_time_s } => (
                TransitionShape::Linear { duration_s: rise_time_s / 0.8 },
                TransitionShape::Linear { duration_s: fall_time_s / 0.8 },
            ),
            OutputStage::OpenDrain { pullup_ohm, load_capacitance_f, fall_time_s } => (
                TransitionShape::Exponential { tau_s: pullup_ohm * load_capacitance_f },
                TransitionShape::Linear { duration_s: fall_time_s / 0.8 },
            ),
        }
    }
}

/// The trigger simulation's timing settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct TriggerTiming {
    /// Propagation delay.
    pub delay: DelaySpec,
    /// Output edges.
    pub output: OutputStage,
    /// The trigger's state before the first sample.
    pub initial_state: InitialState,
}

/// Rise of an open-drain output: pull-up Rpu charging load C (single-pole RC).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct OpenDrainRise {
    /// τ = Rpu·C, seconds.
    pub tau_s: f64,
    /// 10–90 % rise time τ·ln 9, seconds.
    pub rise_10_90_s: f64,
    /// Start of the edge to the 50 % point, τ·ln 2, seconds.
    pub to_mid_s: f64,
}

/// The rise of an open-drain output from the pull-up and the load (RC charging law,
/// t = τ·ln[(V∞−V0)/(V∞−Vth)], shared/DOMAIN.md §1e; 10–90 % = τ·ln 9).
pub fn open_drain_rise(pullup_ohm: f64, load_capacitance_f: f64) -> Result<OpenDrainRise, DesignError> {
    positive("pullup_ohm", pullup_ohm)?;
    non_negative("load_capacitance_f", load_capacitance_f)?;
    let tau = pullup_ohm * load_capacitance_f;
    Ok(OpenDrainRise { tau_s: tau, rise_10_90_s: tau * libm::log(9.0), to_mid_s: tau * std::f64::consts::LN_2 })
}

/// Time for an RC node heading from `v0_v` toward `v_final_v` to reach `v_level_v`:
/// t = τ·ln[(V∞−V0)/(V∞−Vth)] (shared/DOMAIN.md §1e). `None` when the level is never reached.
pub fn rc_time_to_level_s(v0_v: f64, v_final_v: f64, v_level_v: f64, tau_s: f64) -> Option<f64> {
    let num = v_final_v - v0_v;
    let den = v_final_v - v_level_v;
    if !(tau_s >= 0.0) || !num.is_finite() || !den.is_finite() {
        return None;
    }
    if num == 0.0 {
        return if den == 0.0 { Some(0.0) } else { None };
    }
    let r = num / den;
    if !(r >= 1.0) || !r.is_finite() {
        // Level behind the start (r < 1: already past; treat as 0 only when exactly there) or never reached.
        return if (v_level_v - v0_v) * num <= 0.0 { Some(0.0) } else { None };
    }
    Some(tau_s * libm::log(r))
}

/// Edge timing jitter: RMS noise divided by the signal's slope at the threshold, seconds
/// (shared/DOMAIN.md §6, common practice). Infinite for a flat signal.
pub fn jitter_rms_s(noise_rms_v: f64, slope_v_per_s: f64) -> f64 {
    let s = slope_v_per_s.abs();
    if !(noise_rms_v > 0.0) {
        return 0.0;
    }
    if !(s > 0.0) {
        return f64::INFINITY;
    }
    noise_rms_v / s
}

/// Where a two-threshold detector switches on a sine, relative to the sine's own crossings of its
/// centre (the "zero" crossings).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ZeroCrossingError {
    /// Phase lag of the switch on the rising half, degrees: arcsin(VT+/A) + 360°·f·tpd.
    pub rising_phase_deg: f64,
    /// Phase lag of the switch on the falling half, degrees: −arcsin(VT−/A) + 360°·f·tpd.
    pub falling_phase_deg: f64,
    /// The rising lag as time, seconds.
    pub rising_time_s: f64,
    /// The falling lag as time, seconds.
    pub falling_time_s: f64,
    /// Fraction of the period between the rising and the falling switch (ideal 0.5).
    pub high_fraction: f64,
}

/// Phase error of a zero-crossing detector on A·sin(2πft) + c with thresholds not at the centre c
/// (shared/DOMAIN.md §4: switching occurs at phase arcsin(VT+/A); §6: time error = offset ÷ slope
/// for small offsets). `thresholds` are absolute; `delay_s` adds 360°·f·delay to both.
pub fn zero_crossing_error(
    amplitude_v: f64,
    frequency_hz: f64,
    centre_v: f64,
    thresholds: Thresholds,
    delay_s: f64,
) -> Result<ZeroCrossingError, DesignError> {
    positive("amplitude_v", amplitude_v)?;
    positive("frequency_hz", frequency_hz)?;
    finite("centre_v", centre_v)?;
    non_negative("delay_s", delay_s)?;
    let up = thresholds.vt_upper_v - centre_v;
    let lo = thresholds.vt_lower_v - centre_v;
    if up.abs() >= amplitude_v || lo.abs() >= amplitude_v {
        return Err(DesignError::NoSwitching {
            reason: format!(
                "the sine's peak ({amplitude_v} V about {centre_v} V) does not clear both thresholds: raise the amplitude or narrow the hysteresis"
            ),
        });
    }
    let d = 2.0 * PI * frequency_hz * delay_s;
    let rise = libm::asin(up / amplitude_v) + d;
    let fall = -libm::asin(lo / amplitude_v) + d;
    let w = 2.0 * PI * frequency_hz;
    Ok(ZeroCrossingError {
        rising_phase_deg: rise.to_degrees(),
        falling_phase_deg: fall.to_degrees(),
        rising_time_s: rise / w,
        falling_time_s: fall / w,
        high_fraction: 0.5 + (fall - rise) / (2.0 * PI),
    })
}

/// Time a straight edge of slope `slope_v_per_s` spends between VIL and VIH (no hysteresis):
/// (VIH − VIL)/|s|, seconds.
pub fn logic_dwell_linear_s(vil_v: f64, vih_v: f64, slope_v_per_s: f64) -> f64 {
    let s = slope_v_per_s.abs();
    if !(s > 0.0) {
        return f64::INFINITY;
    }
    (vih_v - vil_v).abs() / s
}

/// Time an RC edge from `v0_v` toward `v_final_v` spends between VIL and VIH, seconds
/// (difference of the two RC crossing times); `None` when it does not cross both.
pub fn logic_dwell_rc_s(vil_v: f64, vih_v: f64, v0_v: f64, v_final_v: f64, tau_s: f64) -> Option<f64> {
    let a = rc_time_to_level_s(v0_v, v_final_v, vil_v, tau_s)?;
    let b = rc_time_to_level_s(v0_v, v_final_v, vih_v, tau_s)?;
    Some((a - b).abs())
}

/// Transits of a waveform through the band between VIL and VIH.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub struct DwellStats {
    /// Complete transits (entering on one side, leaving on the other).
    pub transits: usize,
    /// Longest time spent in the band on one transit, seconds.
    pub max_dwell_s: f64,
    /// Shortest, seconds.
    pub min_dwell_s: f64,
    /// Mean, seconds.
    pub mean_dwell_s: f64,
}

/// Measures, on a sampled waveform, how long each complete transit through [VIL, VIH] lasts
/// (crossing times interpolated linearly). Excursions that enter and leave on the same side are
/// not transits. Allocation-free.
pub fn logic_dwell_in(times: Times<'_>, volts: &[f64], vil_v: f64, vih_v: f64) -> DwellStats {
    let (lo, hi) = if vil_v <= vih_v { (vil_v, vih_v) } else { (vih_v, vil_v) };
    let mut stats = DwellStats { min_dwell_s: f64::INFINITY, ..DwellStats::default() };
    let mut sum = 0.0;
    // side: −1 below, +1 above, 0 inside; entry: (time, side entered from).
    let side = |v: f64| if v < lo { -1i8 } else if v > hi { 1 } else { 0 };
    let mut last_side = match volts.first() {
        Some(&v) => side(v),
        None => return DwellStats::default(),
    };
    let mut entry: Option<(f64, i8)> = None;
    let cross = |i: usize, level: f64| {
        let (v0, v1) = (volts[i - 1], volts[i]);
        let (t0, t1) = (times.at(i - 1), times.at(i));
        let f = if v1 != v0 { ((level - v0) / (v1 - v0)).clamp(0.0, 1.0) } else { 1.0 };
        t0 + f * (t1 - t0)
    };
    for (i, &v) in volts.iter().enumerate().skip(1) {
        let s = side(v);
        if s == last_side {
            continue;
        }
        // Leaving an outside side: the band is entered at the edge nearest that side.
        if last_side != 0 {
            let t_in = cross(i, if last_side < 0 { lo } else { hi });
            entry = Some((t_in, last_side));
        }
        if s != 0 {
            if let Some((t_in, from)) = entry.take() {
                if from == -s {
                    let t_out = cross(i, if s > 0 { hi } else { lo });
                    let d = (t_out - t_in).max(0.0);
                    stats.transits += 1;
                    stats.max_dwell_s = stats.max_dwell_s.max(d);
                    stats.min_dwell_s = stats.min_dwell_s.min(d);
                    sum += d;
                }
            }
        }
        last_side = s;
    }
    if stats.transits == 0 {
        stats.min_dwell_s = 0.0;
    } else {
        stats.mean_dwell_s = sum / stats.transits as f64;
    }
    stats
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_point_delay_passes_through_both_points() {
        let m = DelayModel::new(&DelaySpec::TwoPoint { overdrive_a_v: 0.005, delay_a_s: 1.3e-6, overdrive_b_v: 0.1, delay_b_s: 0.3e-6 })
            .unwrap();
        assert!((m.delay_s(0.005) / 1.3e-6 - 1.0).abs() < 1e-12);
        assert!((m.delay_s(0.1) / 0.3e-6 - 1.0).abs() < 1e-12);
        assert!(m.delay_s(0.05) < 1.3e-6 && m.delay_s(0.05) > 0.3e-6);
        assert_eq!(m.delay_s(0.0), m.delay_s(0.0005));
        assert!(DelayModel::new(&DelaySpec::TwoPoint { overdrive_a_v: 0.005, delay_a_s: 0.3e-6, overdrive_b_v: 0.1, delay_b_s: 1.3e-6 })
            .is_err());
    }

    #[test]
    fn rc_times_follow_the_charging_law() {
        // One time constant reaches 1 − 1/e of the step (RC charging law, Sedra & Smith, from memory).
        let t = rc_time_to_level_s(0.0, 1.0, 1.0 - (-1.0f64).exp(), 2e-3).unwrap();
        assert!((t - 2e-3).abs() < 1e-15);
        assert_eq!(rc_time_to_level_s(0.0, 1.0, 1.5, 1.0), None);
        assert_eq!(rc_time_to_level_s(0.0, 1.0, -0.5, 1.0), Some(0.0));
        let r = open_drain_rise(10e3, 100e-12).unwrap();
        assert!((r.rise_10_90_s - 1e-6 * 9f64.ln()).abs() < 1e-18);
    }

    #[test]
    fn zero_crossing_small_offset_is_offset_over_slope() {
        // For a small offset, the lag ≈ VT+/(2πfA) (DOMAIN §6: threshold offset ÷ slope).
        let z = zero_crossing_error(10.0, 50.0, 0.0, Thresholds { vt_upper_v: 0.01, vt_lower_v: -0.01 }, 0.0).unwrap();
        let approx = 0.01 / (2.0 * PI * 50.0 * 10.0);
        assert!((z.rising_time_s / approx - 1.0).abs() < 1e-6);
        assert!((z.falling_time_s / approx - 1.0).abs() < 1e-6);
        assert!((z.high_fraction - 0.5).abs() < 1e-12);
        assert!(zero_crossing_error(1.0, 50.0, 0.0, Thresholds { vt_upper_v: 1.0, vt_lower_v: 0.0 }, 0.0).is_err());
    }

    #[test]
    fn dwell_on_a_ramp_and_measured() {
        // Ramp 0 → 5 V over 1 ms through VIL 1.5, VIH 3.5: dwell 2 V / 5000 V/s = 0.4 ms.
        assert!((logic_dwell_linear_s(1.5, 3.5, 5000.0) - 4e-4).abs() < 1e-15);
        let n = 1001;
        let v: Vec<f64> = (0..n).map(|i| 5.0 * i as f64 / 1000.0).collect();
        let s = logic_dwell_in(Times::Uniform { start_s: 0.0, step_s: 1e-6 }, &v, 1.5, 3.5);
        assert_eq!(s.transits, 1);
        assert!((s.max_dwell_s - 4e-4).abs() < 1e-12);
        // An RC edge: τ·ln[(V∞−VIL)/(V∞−VIH)].
        let d = logic_dwell_rc_s(1.5, 3.5, 0.0, 5.0, 1e-3).unwrap();
        assert!((d - 1e-3 * (3.5f64 / 1.5).ln()).abs() < 1e-15);
    }
}
