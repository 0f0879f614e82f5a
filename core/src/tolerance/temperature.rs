//! VT+ and VT− versus temperature over the operating range of the tolerance settings, and the
//! drift in volts per kelvin.
//!
//! Every part is at its entered (25 °C) value; only temperature moves. At temperature T
//! (ΔT = T − 25 °C) each parameter moves by its drift:
//! - a device quantity by its own [`Drift`] (offset drift of unknown sign, bias current
//!   compounded with known sign, a gate threshold's coefficient of known sign);
//! - a resistor by R·α·ΔT with α of unknown sign, |α| ≤ TCR; in a tracking network
//!   ([`ToleranceSettings::resistor_tracking_ppm_per_k`]) α = c + δᵢ with one common c (|c| ≤ TCR)
//!   and each resistor's own δᵢ (|δᵢ| ≤ tracking/2), so ratios drift by at most tracking × ΔT;
//! - a fixed reference by V·β·ΔT, |β| ≤ the reference coefficient, sign unknown.
//!
//! The **nominal** curve takes the drifts of known sign only (those of unknown sign at zero). The
//! **envelope** at each temperature puts every drift of unknown sign at the end that moves the
//! threshold furthest, chosen by the sign of the threshold's sensitivity at 25 °C (the
//! sensitivity-sign method: exact while a threshold is monotonic in each drift over the range),
//! and evaluates the circuit exactly there.
//!
//! The drift figures: the nominal drift is the slope between the range's ends,
//! (VT(Tmax) − VT(Tmin)) / (Tmax − Tmin); the drift bound is the largest |VT_envelope(T) − VT(25 °C)|
//! / |T − 25 °C| over the range, the most a threshold can move per kelvin away from room
//! temperature with the parts' coefficients at their limits.

use super::settings::{ToleranceSettings, KELVIN_AT_0_C, REFERENCE_TEMPERATURE_C};
use crate::device::Comparator;
use crate::error::DesignError;
use crate::notation::Unit;
use crate::topology::{sensitivities, Circuit, Drift, ParameterKind, Topology};
use serde::{Deserialize, Serialize};

/// Number of temperatures the sweep evaluates (evenly spaced over the range, plus 25 °C when the
/// range contains it).
pub const SWEEP_POINTS: usize = 21;

/// The thresholds at one temperature.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TemperaturePoint {
    /// Temperature, °C.
    pub temperature_c: f64,
    /// VT+ with the drifts of known sign, volts.
    pub vt_upper_v: f64,
    /// VT− with the drifts of known sign, volts.
    pub vt_lower_v: f64,
    /// Lowest VT+ the drifts of unknown sign allow at this temperature, volts.
    pub vt_upper_min_v: f64,
    /// Highest VT+, volts.
    pub vt_upper_max_v: f64,
    /// Lowest VT−, volts.
    pub vt_lower_min_v: f64,
    /// Highest VT−, volts.
    pub vt_lower_max_v: f64,
}

/// VT± versus temperature over the operating range, with the drift figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TemperatureSweep {
    /// The sweep, lowest temperature first.
    pub points: Vec<TemperaturePoint>,
    /// Nominal drift of VT+ between the range's ends, volts per kelvin (`None` for a range of one
    /// temperature).
    pub vt_upper_drift_v_per_k: Option<f64>,
    /// Nominal drift of VT−, volts per kelvin.
    pub vt_lower_drift_v_per_k: Option<f64>,
    /// Largest drift of VT+ away from 25 °C with the coefficients at their limits, volts per
    /// kelvin (a magnitude).
    pub vt_upper_drift_bound_v_per_k: Option<f64>,
    /// Largest drift of VT−, volts per kelvin (a magnitude).
    pub vt_lower_drift_bound_v_per_k: Option<f64>,
    /// What the sweep includes, in plain words.
    pub notes: Vec<String>,
}

impl TemperatureSweep {
    /// One line for the print sheet and the command line: the drift of both thresholds in mV/K
    /// over the range.
    pub fn summary(&self, settings: &ToleranceSettings) -> String {
        let mv = |x: Option<f64>| x.map_or("—".to_string(), |v| crate::notation::format_fixed(v * 1e3, 3));
        format!(
            "temperature {} °C to {} °C: VT+ drifts {} mV/K (at most ±{} mV/K), VT− {} mV/K (at most ±{} mV/K)",
            settings.temperature_min_c,
            settings.temperature_max_c,
            mv(self.vt_upper_drift_v_per_k),
            mv(self.vt_upper_drift_bound_v_per_k),
            mv(self.vt_lower_drift_v_per_k),
            mv(self.vt_lower_drift_bound_v_per_k),
        )
    }
}

/// The drift coefficients a design carries on its active device, as the page edits them: `None`
/// where the topology has no such quantity.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct DeviceDrift {
    /// Comparator/op-amp offset drift magnitude, volts per kelvin.
    pub offset_drift_v_per_k: Option<f64>,
    /// Comparator/op-amp bias-current change, percent per kelvin (compounded, sign known).
    pub bias_tempco_pct_per_k: Option<f64>,
    /// Schmitt-input gate threshold coefficient, volts per kelvin (sign known).
    pub threshold_tempco_v_per_k: Option<f64>,
}

fn comparator_of(t: &mut Topology) -> Option<&mut Comparator> {
    match t {
        Topology::Inverting(c) => Some(&mut c.device),
        Topology::NonInverting(c) => Some(&mut c.device),
        Topology::OpenDrain(c) => Some(&mut c.device),
        Topology::Plain(c) => Some(&mut c.device),
        Topology::SupplyMonitor(c) => Some(&mut c.device),
        _ => None,
    }
}

/// The design's device drift coefficients (see [`DeviceDrift`]).
pub fn device_drift(t: &Topology) -> DeviceDrift {
    let mut t = t.clone();
    let mut d = DeviceDrift::default();
    if let Some(c) = comparator_of(&mut t) {
        d.offset_drift_v_per_k = Some(c.offset_drift_v_per_k);
        d.bias_tempco_pct_per_k = Some(c.bias_tempco_pct_per_k);
    }
    if let Topology::SchmittGate(g) = &t {
        d.threshold_tempco_v_per_k = Some(g.gate.threshold_tempco_v_per_k);
    }
    d
}

/// Writes the coefficients that are `Some` into the design (those it has no place for are ignored).
pub fn set_device_drift(t: &mut Topology, d: DeviceDrift) {
    if let Some(c) = comparator_of(t) {
        if let Some(x) = d.offset_drift_v_per_k {
            c.offset_drift_v_per_k = x;
        }
        if let Some(x) = d.bias_tempco_pct_per_k {
            c.bias_tempco_pct_per_k = x;
        }
    }
    if let (Topology::SchmittGate(g), Some(x)) = (t, d.threshold_tempco_v_per_k) {
        g.gate.threshold_tempco_v_per_k = x;
    }
}

/// How one parameter moves with temperature in the sweep.
#[derive(Debug, Clone, Copy)]
enum Move {
    /// Its own drift ([`Drift`]).
    Own(Drift),
    /// A resistor: own coefficient of unknown sign (ppm/K) and whether it follows the common one.
    Resistor { own_ppm: f64, common: bool },
    /// A device temperature itself (a junction temperature, kelvin): it is the sweep's temperature.
    Junction,
}

/// The sweep of VT± over the settings' temperature range (see the module notes). Fails when the
/// settings are invalid or the circuit is invalid at some temperature of the range.
pub fn temperature_sweep<C: Circuit>(circuit: &C, settings: &ToleranceSettings) -> Result<TemperatureSweep, DesignError> {
    settings.validate()?;
    circuit.validate()?;
    let params = circuit.parameters();
    let base: Vec<f64> = params.iter().map(|p| p.value).collect();
    let tracking = settings.resistor_tracking_ppm_per_k;
    let moves: Vec<Move> = params
        .iter()
        .map(|p| {
            let own_tc = settings.overrides.iter().find(|o| o.id == p.id).and_then(|o| o.tempco_ppm_per_k);
            match (p.kind, own_tc) {
                (ParameterKind::Device, _) if p.unit == Unit::Kelvin => Move::Junction,
                (ParameterKind::Resistor, Some(tc)) => Move::Resistor { own_ppm: tc, common: false },
                (ParameterKind::Resistor, None) => match tracking {
                    Some(t) => Move::Resistor { own_ppm: 0.5 * t, common: true },
                    None => Move::Resistor { own_ppm: settings.resistor_tempco_ppm_per_k, common: false },
                },
                (ParameterKind::Reference, tc) => {
                    Move::Own(Drift::Unknown(p.value.abs() * tc.unwrap_or(settings.reference_tempco_ppm_per_k) * 1e-6))
                }
                (_, Some(tc)) => Move::Own(Drift::Unknown(p.value.abs() * tc * 1e-6)),
                (_, None) => Move::Own(p.drift),
            }
        })
        .collect();
    let common_ppm = if tracking.is_some() { settings.resistor_tempco_ppm_per_k } else { 0.0 };
    let sens = sensitivities(circuit)?;
    // Sensitivity of each threshold to the common coefficient: Σ ∂VT/∂Ri · Ri over tracking resistors.
    let common_sens = |upper: bool| -> f64 {
        sens.iter()
            .zip(&moves)
            .filter(|(_, m)| matches!(m, Move::Resistor { common: true, .. }))
            .map(|((p, u, l), _)| if upper { u * p.value } else { l * p.value })
            .sum()
    };
    let sign = |x: f64| if x < 0.0 { -1.0 } else { 1.0 };

    // Values at ΔT; `dir` 0 for nominal, ±1 for the envelope of VT+ (`upper`) or VT−.
    let values_at = |dt: f64, dir: f64, upper: bool| -> Vec<f64> {
        let c_sign = dir * sign(common_sens(upper) * dt);
        params
            .iter()
            .enumerate()
            .map(|(i, _)| {
                let d = if upper { sens[i].1 } else { sens[i].2 };
                let s = dir * sign(d * dt);
                let v = base[i];
                match moves[i] {
                    Move::Junction => KELVIN_AT_0_C + REFERENCE_TEMPERATURE_C + dt,
                    Move::Own(Drift::Unknown(_)) if dir == 0.0 => v,
                    Move::Own(drift) => v + drift.shift(v, dt, s),
                    Move::Resistor { own_ppm, common } => {
                        let alpha = s * own_ppm + if common { c_sign * common_ppm } else { 0.0 };
                        if dir == 0.0 { v } else { v * (1.0 + alpha * 1e-6 * dt) }
                    }
                }
            })
            .collect()
    };
    let thresholds_at = |values: &[f64], t_c: f64| -> Result<(f64, f64), DesignError> {
        let c = circuit.with_parameters(values)?;
        let t = c.validate().and_then(|()| c.thresholds()).map_err(|e| {
            DesignError::inconsistent(format!("the circuit is not valid at {t_c} °C with its drift coefficients ({e}): check them"))
        })?;
        if t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite() {
            Ok((t.vt_upper_v, t.vt_lower_v))
        } else {
            Err(DesignError::NotConverged { reason: format!("the thresholds are not finite at {t_c} °C") })
        }
    };

    let (t_lo, t_hi) = (settings.temperature_min_c, settings.temperature_max_c);
    let mut temps: Vec<f64> = if t_hi > t_lo {
        (0..SWEEP_POINTS).map(|k| t_lo + (t_hi - t_lo) * k as f64 / (SWEEP_POINTS - 1) as f64).collect()
    } else {
        vec![t_lo]
    };
    if t_lo < REFERENCE_TEMPERATURE_C && REFERENCE_TEMPERATURE_C < t_hi && !temps.contains(&REFERENCE_TEMPERATURE_C) {
        temps.push(REFERENCE_TEMPERATURE_C);
        temps.sort_by(f64::total_cmp);
    }
    let mut points = Vec::with_capacity(temps.len());
    for &t_c in &temps {
        let dt = t_c - REFERENCE_TEMPERATURE_C;
        let (up, lo) = thresholds_at(&values_at(dt, 0.0, true), t_c)?;
        let up_max = thresholds_at(&values_at(dt, 1.0, true), t_c)?.0;
        let up_min = thresholds_at(&values_at(dt, -1.0, true), t_c)?.0;
        let lo_max = thresholds_at(&values_at(dt, 1.0, false), t_c)?.1;
        let lo_min = thresholds_at(&values_at(dt, -1.0, false), t_c)?.1;
        points.push(TemperaturePoint {
            temperature_c: t_c,
            vt_upper_v: up,
            vt_lower_v: lo,
            vt_upper_min_v: up_min.min(up).min(up_max),
            vt_upper_max_v: up_max.max(up).max(up_min),
            vt_lower_min_v: lo_min.min(lo).min(lo_max),
            vt_lower_max_v: lo_max.max(lo).max(lo_min),
        });
    }

    let span = t_hi - t_lo;
    let (first, last) = (points[0], points[points.len() - 1]);
    let slope = |a: f64, b: f64| (span > 0.0).then(|| (b - a) / span);
    // Room temperature as the sweep sees it (a device with a temperature of its own, such as a
    // junction entered at 27 °C, is at 25 °C here like every other point).
    let (room_upper_v, room_lower_v) = thresholds_at(&values_at(0.0, 0.0, true), REFERENCE_TEMPERATURE_C)?;
    let bound = |pick: fn(&TemperaturePoint) -> (f64, f64), at_room: f64| -> Option<f64> {
        points
            .iter()
            .filter(|p| (p.temperature_c - REFERENCE_TEMPERATURE_C).abs() > 1e-9)
            .map(|p| {
                let (lo, hi) = pick(p);
                (lo - at_room).abs().max((hi - at_room).abs()) / (p.temperature_c - REFERENCE_TEMPERATURE_C).abs()
            })
            .reduce(f64::max)
    };
    let mut notes = Vec::new();
    let unknown_drifts = moves.iter().any(|m| match m {
        Move::Own(Drift::Unknown(d)) => *d != 0.0,
        Move::Own(_) | Move::Junction => false,
        Move::Resistor { own_ppm, common } => *own_ppm != 0.0 || (*common && common_ppm != 0.0),
    });
    if unknown_drifts {
        notes.push("the band around each threshold comes from coefficients of unknown sign (resistor TCR, reference and offset drift) at their limits, chosen by the sensitivity signs at 25 °C".into());
    }
    if let Some(t) = tracking {
        notes.push(format!(
            "the resistors track within {t} ppm/K (one network or array): their common coefficient (up to ±{} ppm/K) cancels in ratios",
            settings.resistor_tempco_ppm_per_k
        ));
    }
    if span <= 0.0 {
        notes.push("the temperature range is a single temperature: widen it to see a drift".into());
    }
    Ok(TemperatureSweep {
        vt_upper_drift_v_per_k: slope(first.vt_upper_v, last.vt_upper_v),
        vt_lower_drift_v_per_k: slope(first.vt_lower_v, last.vt_lower_v),
        vt_upper_drift_bound_v_per_k: bound(|p| (p.vt_upper_min_v, p.vt_upper_max_v), room_upper_v),
        vt_lower_drift_bound_v_per_k: bound(|p| (p.vt_lower_min_v, p.vt_lower_max_v), room_lower_v),
        points,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;
    use crate::topology::schmitt_gate::{SchmittGate, SchmittInput};

    fn settings(tc: f64, tracking: Option<f64>) -> ToleranceSettings {
        ToleranceSettings {
            resistor_tempco_ppm_per_k: tc,
            reference_tempco_ppm_per_k: 0.0,
            resistor_tracking_ppm_per_k: tracking,
            temperature_min_c: -40.0,
            temperature_max_c: 85.0,
            ..ToleranceSettings::default()
        }
    }

    #[test]
    fn ideal_parts_do_not_drift() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = temperature_sweep(&c, &settings(0.0, None)).unwrap();
        assert_eq!(s.points.len(), SWEEP_POINTS + 1);
        assert!(s.points.iter().any(|p| p.temperature_c == 25.0));
        assert_eq!(s.vt_upper_drift_v_per_k, Some(0.0));
        assert_eq!(s.vt_upper_drift_bound_v_per_k, Some(0.0));
    }

    #[test]
    fn offset_drift_moves_both_thresholds_by_its_coefficient() {
        // VT± = P ∓ VOS: an offset drift d moves each threshold by ∓d·ΔT, so the bound is d.
        let d = Comparator { offset_drift_v_per_k: 5e-6, ..Comparator::ideal(5.0) };
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, d);
        let s = temperature_sweep(&c, &settings(0.0, None)).unwrap();
        assert_eq!(s.vt_upper_drift_v_per_k, Some(0.0));
        assert!((s.vt_upper_drift_bound_v_per_k.unwrap() - 5e-6).abs() < 1e-12);
        assert!((s.vt_lower_drift_bound_v_per_k.unwrap() - 5e-6).abs() < 1e-12);
        let cold = s.points[0];
        assert!((cold.vt_upper_max_v - cold.vt_upper_v - 5e-6 * 65.0).abs() < 1e-12);
    }

    #[test]
    fn tracking_resistors_drift_less_than_independent_ones() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let free = temperature_sweep(&c, &settings(100.0, None)).unwrap();
        let tracked = temperature_sweep(&c, &settings(100.0, Some(5.0))).unwrap();
        let (f, t) = (free.vt_upper_drift_bound_v_per_k.unwrap(), tracked.vt_upper_drift_bound_v_per_k.unwrap());
        assert!(t > 0.0 && t < f / 10.0, "{t} {f}");
    }

    #[test]
    fn gate_threshold_coefficient_is_the_nominal_drift() {
        // Bare gate: VT± are the gate's own, so both move by the coefficient exactly.
        let g = SchmittInput { threshold_tempco_v_per_k: -2e-3, ..SchmittInput::default() };
        let s = temperature_sweep(&SchmittGate::bare(g), &settings(100.0, None)).unwrap();
        assert!((s.vt_upper_drift_v_per_k.unwrap() + 2e-3).abs() < 1e-12);
        assert!((s.vt_lower_drift_v_per_k.unwrap() + 2e-3).abs() < 1e-12);
        let hot = s.points.last().unwrap();
        assert!((hot.vt_upper_v - hot.vt_lower_v - 1.1).abs() < 1e-9);
    }

    #[test]
    fn a_single_temperature_gives_no_drift_figure() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = ToleranceSettings { temperature_min_c: 25.0, temperature_max_c: 25.0, ..ToleranceSettings::default() };
        let r = temperature_sweep(&c, &s).unwrap();
        assert_eq!(r.points.len(), 1);
        assert_eq!(r.vt_upper_drift_v_per_k, None);
        assert!(!r.notes.is_empty());
    }
}
