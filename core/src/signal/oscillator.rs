//! The RC relaxation oscillator built on a two-threshold inverting switch: one Schmitt inverter
//! (output → R → input, C from input to 0 V) or the op-amp form (R1 from (+) to 0 V, R2 from (+)
//! to the output, R from the output to (−), C from (−) to 0 V). Both are the same circuit as far
//! as the capacitor sees: it charges toward the output level through R and the output flips when
//! it reaches a threshold.
//!
//! Closed form (shared/DOMAIN.md §1e(i); RC charging law t = τ·ln[(V∞−V0)/(V∞−Vth)], Sedra &
//! Smith, *Microelectronic Circuits*, astable-multivibrator section, from memory):
//! tH = RC·ln[(VOH−VT−)/(VOH−VT+)], tL = RC·ln[(VT+−VOL)/(VT−−VOL)], T = tH + tL,
//! duty = tH/T. For the symmetric op-amp form (VOL = −VOH, VT± = ±β·VOH, β = R1/(R1+R2)):
//! T = 2RC·ln[(1+β)/(1−β)].
//!
//! With propagation delays the capacitor overshoots each threshold for the delay before the
//! output flips, so here the half-periods are computed exactly for that model (derived here):
//! Vpeak = VOH − (VOH−VT+)·e^{−tPHL/RC}, Vtrough = VOL + (VT−−VOL)·e^{−tPLH/RC},
//! tH = RC·ln[(VOH−Vtrough)/(VOH−VT+)] + tPHL, tL = RC·ln[(Vpeak−VOL)/(VT−−VOL)] + tPLH.
//! For short delays this adds about tPHL·(VOH−VOL)/(VT+−VOL) + tPLH·(VOH−VOL)/(VOH−VT−) to T0
//! (derived here): more than DOMAIN's rule of thumb tPLH + tPHL, because the capacitor keeps
//! charging past the threshold during the delay and must then travel back. The output
//! resistance adds to R.

use super::ode::{advance, Event};
use super::trigger::TriggerDesign;
use crate::analysis::{Sense, Thresholds};
use crate::error::{non_negative, positive, DesignError};
use serde::{Deserialize, Serialize};

/// Which circuit form (for labelling and the op-amp β; the period law is the same).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum OscillatorForm {
    /// One Schmitt-trigger inverter gate.
    #[default]
    SchmittInverter,
    /// Op-amp or comparator with positive feedback (R1, R2) and the RC on the inverting input.
    OpAmp,
}

/// Which part to choose for a target frequency.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum SolveFor {
    /// Keep C, choose R.
    #[default]
    Resistor,
    /// Keep R, choose C.
    Capacitor,
}

/// Inputs of the relaxation oscillator.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct OscillatorSettings {
    /// Circuit form.
    pub form: OscillatorForm,
    /// Timing resistor R, ohms.
    pub r_ohm: f64,
    /// Timing capacitor C, farads.
    pub c_f: f64,
    /// Output resistance of the gate or amplifier (adds to R), ohms.
    pub output_resistance_ohm: f64,
    /// Propagation delay for the output going low to high (tPLH), seconds.
    pub delay_low_to_high_s: f64,
    /// Propagation delay for the output going high to low (tPHL), seconds.
    pub delay_high_to_low_s: f64,
    /// Wanted frequency, hertz (`None`: no part is chosen).
    pub target_frequency_hz: Option<f64>,
    /// Which part to choose for the target.
    pub solve_for: SolveFor,
}

impl Default for OscillatorSettings {
    /// 100 kΩ and 10 µF, ideal gate: about 1 Hz with 74HC14-like thresholds at 3.3 V.
    fn default() -> Self {
        OscillatorSettings {
            form: OscillatorForm::SchmittInverter,
            r_ohm: 100e3,
            c_f: 10e-6,
            output_resistance_ohm: 0.0,
            delay_low_to_high_s: 0.0,
            delay_high_to_low_s: 0.0,
            target_frequency_hz: None,
            solve_for: SolveFor::Resistor,
        }
    }
}

/// Closed-form results.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct OscillatorResult {
    /// Output-high time, seconds.
    pub t_high_s: f64,
    /// Output-low time, seconds.
    pub t_low_s: f64,
    /// Period, seconds.
    pub period_s: f64,
    /// Frequency, hertz.
    pub frequency_hz: f64,
    /// Fraction of the period the output is high.
    pub duty: f64,
    /// β = VT+/VOH for the symmetric op-amp form (VOL = −VOH, VT− = −VT+), else `None`.
    pub beta: Option<f64>,
    /// R that gives the target frequency with this C, ohms.
    pub r_for_target_ohm: Option<f64>,
    /// C that gives the target frequency with this R, farads.
    pub c_for_target_f: Option<f64>,
}

/// The thresholds of the op-amp form with R1 from (+) to 0 V and R2 from (+) to the output:
/// VT+ = β·VOH, VT− = β·VOL, β = R1/(R1+R2) (DOMAIN §1a split-supply form).
pub fn op_amp_thresholds(r1_ohm: f64, r2_ohm: f64, output_high_v: f64, output_low_v: f64) -> Result<Thresholds, DesignError> {
    positive("r1_ohm", r1_ohm)?;
    positive("r2_ohm", r2_ohm)?;
    let beta = r1_ohm / (r1_ohm + r2_ohm);
    Ok(Thresholds { vt_upper_v: beta * output_high_v, vt_lower_v: beta * output_low_v })
}

fn check(design: &TriggerDesign, s: &OscillatorSettings) -> Result<(), DesignError> {
    design.validate()?;
    use crate::limits::{check as limit, Quantity};
    limit(Quantity::Resistance, "oscillator.r_ohm", s.r_ohm)?;
    limit(Quantity::Capacitance, "oscillator.c_f", s.c_f)?;
    non_negative("oscillator.output_resistance_ohm", s.output_resistance_ohm)?;
    if s.output_resistance_ohm != 0.0 {
        limit(Quantity::Resistance, "oscillator.output_resistance_ohm", s.output_resistance_ohm)?;
    }
    limit(Quantity::Duration, "oscillator.delay_low_to_high_s", s.delay_low_to_high_s)?;
    limit(Quantity::Duration, "oscillator.delay_high_to_low_s", s.delay_high_to_low_s)?;
    if let Some(f) = s.target_frequency_hz {
        limit(Quantity::Frequency, "oscillator.target_frequency_hz", f)?;
    }
    if design.sense != Sense::Inverting {
        return Err(DesignError::inconsistent(
            "a relaxation oscillator needs an inverting trigger (Schmitt inverter or the inverting comparator form)",
        ));
    }
    let t = design.thresholds;
    let (voh, vol) = (design.output_high_v, design.output_low_v);
    if !(vol < t.vt_lower_v && t.vt_lower_v < t.vt_upper_v && t.vt_upper_v < voh) {
        return Err(DesignError::NoSwitching {
            reason: format!(
                "the oscillator needs VOL < VT− < VT+ < VOH (got {vol} < {} < {} < {voh}): widen the hysteresis or move the thresholds inside the output swing",
                t.vt_lower_v, t.vt_upper_v
            ),
        });
    }
    Ok(())
}

fn half_periods(design: &TriggerDesign, rc: f64, tplh: f64, tphl: f64) -> (f64, f64) {
    let t = design.thresholds;
    let (voh, vol) = (design.output_high_v, design.output_low_v);
    let peak = voh - (voh - t.vt_upper_v) * libm::exp(-tphl / rc);
    let trough = vol + (t.vt_lower_v - vol) * libm::exp(-tplh / rc);
    let th = rc * libm::log((voh - trough) / (voh - t.vt_upper_v)) + tphl;
    let tl = rc * libm::log((peak - vol) / (t.vt_lower_v - vol)) + tplh;
    (th, tl)
}

/// Period, frequency and duty in closed form, and R or C for a target frequency.
pub fn relaxation_oscillator(design: &TriggerDesign, s: &OscillatorSettings) -> Result<OscillatorResult, DesignError> {
    check(design, s)?;
    let r = s.r_ohm + s.output_resistance_ohm;
    let (tplh, tphl) = (s.delay_low_to_high_s, s.delay_high_to_low_s);
    let (th, tl) = half_periods(design, r * s.c_f, tplh, tphl);
    let period = th + tl;
    let t = design.thresholds;
    let symmetric = (design.output_low_v + design.output_high_v).abs() <= 1e-12 * design.output_high_v.abs()
        && (t.vt_upper_v + t.vt_lower_v).abs() <= 1e-12 * t.vt_upper_v.abs();
    let beta = if symmetric { Some(t.vt_upper_v / design.output_high_v) } else { None };
    let (mut r_for, mut c_for) = (None, None);
    if let Some(f) = s.target_frequency_hz {
        positive("oscillator.target_frequency_hz", f)?;
        let target = 1.0 / f;
        if target <= tplh + tphl {
            return Err(DesignError::infeasible(
                format!("a {f} Hz period is not longer than the two propagation delays ({})", crate::notation::format_with_unit(tplh + tphl, 4, crate::notation::Unit::Second)),
                "lower the target frequency or use a faster device",
            ));
        }
        // T(RC) rises monotonically from tPLH + tPHL (RC → 0); bisect on ln(RC).
        let (mut lo, mut hi) = (-80.0_f64, 40.0_f64);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            let (a, b) = half_periods(design, libm::exp(mid), tplh, tphl);
            if a + b < target {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let rc = libm::exp(0.5 * (lo + hi));
        match s.solve_for {
            SolveFor::Resistor => {
                let r_new = rc / s.c_f - s.output_resistance_ohm;
                if r_new <= 0.0 {
                    return Err(DesignError::infeasible(
                        format!("the target needs RC = {}, less than the output resistance alone gives with this C", crate::notation::format_with_unit(rc, 5, crate::notation::Unit::Second)),
                        "use a smaller capacitor",
                    ));
                }
                r_for = Some(r_new);
            }
            SolveFor::Capacitor => c_for = Some(rc / r),
        }
    }
    Ok(OscillatorResult {
        t_high_s: th,
        t_low_s: tl,
        period_s: period,
        frequency_hz: 1.0 / period,
        duty: th / period,
        beta,
        r_for_target_ohm: r_for,
        c_for_target_f: c_for,
    })
}

/// One point of a simulated trace.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TracePoint {
    /// Time, seconds.
    pub t_s: f64,
    /// Capacitor (trigger input) voltage, volts.
    pub input_v: f64,
    /// Output voltage, volts.
    pub output_v: f64,
}

/// The oscillator simulated in the time domain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OscillatorSimulation {
    /// Mean period over the cycles after the first, seconds.
    pub period_s: f64,
    /// Mean output-high time after the first cycle, seconds.
    pub t_high_s: f64,
    /// Mean output-low time after the first cycle, seconds.
    pub t_low_s: f64,
    /// Duty (output-high fraction).
    pub duty: f64,
    /// The first output-high time from a discharged capacitor (longer than the rest), seconds.
    pub first_high_s: f64,
    /// Full cycles simulated.
    pub cycles: usize,
    /// Capacitor and output voltages at every integration step.
    pub trace: Vec<TracePoint>,
}

/// Integrates dv/dt = (Vout − v)/(RC) by Runge–Kutta from a capacitor at 0 V (clamped into the
/// output swing) with the output high, for `cycles` full cycles (2 to 200), 400 steps per RC.
pub fn simulate_oscillator(design: &TriggerDesign, s: &OscillatorSettings, cycles: usize) -> Result<OscillatorSimulation, DesignError> {
    check(design, s)?;
    let cycles = cycles.clamp(2, 200);
    let tau = (s.r_ohm + s.output_resistance_ohm) * s.c_f;
    let t = design.thresholds;
    let (voh, vol) = (design.output_high_v, design.output_low_v);
    let h = tau / 400.0;
    // Longest phase: from VOL all the way to VT+ and more; bounded by the closed form with margin.
    let guard = 50.0 * tau * (1.0 + libm::log((voh - vol) / (voh - t.vt_upper_v).min(t.vt_lower_v - vol)).abs());
    let mut trace = Vec::new();
    let mut now = 0.0;
    let mut v = 0.0_f64.clamp(vol, voh);
    let mut high = true;
    let mut switch_times = Vec::with_capacity(2 * cycles + 1); // output-change instants
    trace.push(TracePoint { t_s: 0.0, input_v: v, output_v: voh });
    for _ in 0..2 * cycles {
        let out = if high { voh } else { vol };
        let f = move |x: f64| (out - x) / tau;
        let ev = if high { Event { level_v: t.vt_upper_v, upward: true } } else { Event { level_v: t.vt_lower_v, upward: false } };
        let base = now;
        let a = advance(&f, v, guard, h, Some(ev), |dt, x| trace.push(TracePoint { t_s: base + dt, input_v: x, output_v: out }))?;
        if !a.hit {
            return Err(DesignError::NotConverged { reason: "the capacitor never reached the threshold in the simulation".into() });
        }
        now += a.elapsed_s;
        v = a.v;
        let delay = if high { s.delay_high_to_low_s } else { s.delay_low_to_high_s };
        if delay > 0.0 {
            let base = now;
            let b = advance(&f, v, delay, h, None, |dt, x| trace.push(TracePoint { t_s: base + dt, input_v: x, output_v: out }))?;
            now += b.elapsed_s;
            v = b.v;
        }
        high = !high;
        switch_times.push(now);
        trace.push(TracePoint { t_s: now, input_v: v, output_v: if high { voh } else { vol } });
    }
    // switch_times[0] ends the first high phase; [2k+1] end low phases, [2k] end high phases.
    let first_high = switch_times[0];
    let (mut sum_h, mut sum_l, mut n) = (0.0, 0.0, 0usize);
    for k in 1..cycles {
        sum_h += switch_times[2 * k] - switch_times[2 * k - 1];
        sum_l += switch_times[2 * k + 1] - switch_times[2 * k];
        n += 1;
    }
    let th = sum_h / n as f64;
    let tl = sum_l / n as f64;
    Ok(OscillatorSimulation {
        period_s: th + tl,
        t_high_s: th,
        t_low_s: tl,
        duty: th / (th + tl),
        first_high_s: first_high,
        cycles,
        trace,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn gate(up: f64, lo: f64, vdd: f64) -> TriggerDesign {
        TriggerDesign { thresholds: Thresholds { vt_upper_v: up, vt_lower_v: lo }, output_high_v: vdd, output_low_v: 0.0, sense: Sense::Inverting }
    }

    #[test]
    fn simulation_agrees_with_closed_form_including_delays() {
        let d = gate(2.9, 1.7, 5.0);
        let s = OscillatorSettings { r_ohm: 10e3, c_f: 100e-9, delay_low_to_high_s: 20e-6, delay_high_to_low_s: 50e-6, ..Default::default() };
        let c = relaxation_oscillator(&d, &s).unwrap();
        let sim = simulate_oscillator(&d, &s, 4).unwrap();
        assert!((sim.period_s / c.period_s - 1.0).abs() < 1e-9, "{} {}", sim.period_s, c.period_s);
        assert!((sim.duty - c.duty).abs() < 1e-9);
        assert!(sim.first_high_s > sim.t_high_s);
        // Short delays add about tPHL·(VOH−VOL)/(VT+−VOL) + tPLH·(VOH−VOL)/(VOH−VT−) (derived here):
        // 50 µs·5/2.9 + 20 µs·5/3.3 = 116.5 µs, well above the plain tPLH + tPHL = 70 µs.
        let ideal = relaxation_oscillator(&d, &OscillatorSettings { delay_low_to_high_s: 0.0, delay_high_to_low_s: 0.0, ..s }).unwrap();
        let first_order = 50e-6 * 5.0 / 2.9 + 20e-6 * 5.0 / 3.3;
        assert!(((c.period_s - ideal.period_s) / first_order - 1.0).abs() < 0.02, "{}", c.period_s - ideal.period_s);
    }

    #[test]
    fn target_frequency_round_trips() {
        let d = gate(2.0, 1.0, 3.3);
        for solve_for in [SolveFor::Resistor, SolveFor::Capacitor] {
            let s = OscillatorSettings { target_frequency_hz: Some(1.0), solve_for, delay_high_to_low_s: 1e-3, ..Default::default() };
            let r = relaxation_oscillator(&d, &s).unwrap();
            let s2 = OscillatorSettings {
                r_ohm: r.r_for_target_ohm.unwrap_or(s.r_ohm),
                c_f: r.c_for_target_f.unwrap_or(s.c_f),
                target_frequency_hz: None,
                ..s
            };
            let f = relaxation_oscillator(&d, &s2).unwrap().frequency_hz;
            assert!((f - 1.0).abs() < 1e-9, "{f}");
        }
    }

    #[test]
    fn refuses_non_oscillating_designs() {
        let mut d = gate(2.0, 1.0, 3.3);
        d.sense = Sense::NonInverting;
        assert!(relaxation_oscillator(&d, &OscillatorSettings::default()).is_err());
        assert!(relaxation_oscillator(&gate(3.4, 1.0, 3.3), &OscillatorSettings::default()).is_err());
        assert!(relaxation_oscillator(&gate(1.0, 1.0, 3.3), &OscillatorSettings::default()).is_err());
    }
}
