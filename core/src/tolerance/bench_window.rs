//! The two named windows of a design's thresholds:
//!
//! - the **field window**: every tolerance over its full range — supply tolerance, the whole
//!   temperature range (drift), device spread and part tolerances. It is the worst case of the
//!   tolerance settings as stated ([`super::worst_case`]): what a board may show in service.
//! - the **bench window**: what a technician measures on a fresh board at room temperature
//!   (25 °C, the reference temperature of datasheet values) with the supply set exactly to the
//!   value a bench step names. Only part tolerances and device spread (offset, bias current,
//!   output levels, gate or transistor thresholds) remain; the supply band is closed and the
//!   temperature range is the single point 25 °C, so no drift enters.
//!
//! The bench window is the same worst-case machinery run on the circuit at the step's supply
//! ([`Circuit::with_supply`]) with settings from [`bench_settings`]; every rule of the worst case
//! (all corners, or the sensitivity-sign method above the corner limit) applies unchanged. Since
//! the bench window fixes inputs the field window varies, at the nominal supply it lies inside the
//! field window whenever the thresholds are monotonic in each parameter (the worst case's own
//! condition; DOMAIN §2).

use super::settings::{ParameterTolerance, ToleranceBand, ToleranceSettings, REFERENCE_TEMPERATURE_C};
use super::worst_case::{worst_case, WorstCase};
use crate::error::DesignError;
use crate::topology::{Circuit, ParameterKind};
use serde::{Deserialize, Serialize};

/// The bench window at one supply: the worst case of part tolerances and device spread alone, at
/// 25 °C and exactly this supply.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BenchWindow {
    /// The supply the bench step sets, volts.
    pub supply_v: f64,
    /// The temperature the window holds at, °C (always [`REFERENCE_TEMPERATURE_C`]).
    pub temperature_c: f64,
    /// Extremes of the figures and the corners that give them.
    pub worst_case: WorstCase,
}

impl BenchWindow {
    /// `(min, max)` of VT+, volts.
    pub fn vt_upper_v(&self) -> (f64, f64) {
        (self.worst_case.vt_upper.min.value_v, self.worst_case.vt_upper.max.value_v)
    }

    /// `(min, max)` of VT−, volts.
    pub fn vt_lower_v(&self) -> (f64, f64) {
        (self.worst_case.vt_lower.min.value_v, self.worst_case.vt_lower.max.value_v)
    }
}

/// Both windows of a design, as the command-line result carries them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Windows {
    /// The field window: the worst case with every tolerance over its full range (supply
    /// tolerance, temperature range, device spread, part tolerances), at the nominal supply.
    pub field: WorstCase,
    /// The bench window at each supply the bench procedure sets, nominal supply first.
    pub bench: Vec<BenchWindow>,
}

/// The field's tolerance settings reduced to the bench: the temperature range becomes the single
/// point 25 °C (no drift), and every supply parameter of `circuit` gets a closed band (an override
/// of 0 %, replacing any override or datasheet limits it had). Part tolerances, device spread,
/// distributions, the corner limit and the rest are kept.
pub fn bench_settings<C: Circuit>(circuit: &C, settings: &ToleranceSettings) -> ToleranceSettings {
    let mut s = settings.clone();
    s.supply_tolerance_pct = 0.0;
    s.temperature_min_c = REFERENCE_TEMPERATURE_C;
    s.temperature_max_c = REFERENCE_TEMPERATURE_C;
    for p in circuit.parameters().into_iter().filter(|p| p.kind == ParameterKind::Supply) {
        s.overrides.retain(|o| o.id != p.id);
        s.overrides.push(ParameterTolerance {
            id: p.id,
            band: Some(ToleranceBand::Percent(0.0)),
            distribution: None,
            tempco_ppm_per_k: Some(0.0),
        });
    }
    s
}

/// The bench window of `circuit` at `supply_v`: the worst case of [`bench_settings`] on the
/// circuit moved to that supply. Fails as the worst case fails (invalid circuit or settings, a
/// corner that makes the circuit invalid), or when the window is not finite.
pub fn bench_window<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
    supply_v: f64,
) -> Result<BenchWindow, DesignError> {
    crate::error::finite("supply_v", supply_v)?;
    let at_supply = circuit.with_supply(supply_v);
    let worst_case = worst_case(&at_supply, &bench_settings(&at_supply, settings))?;
    let w = BenchWindow { supply_v, temperature_c: REFERENCE_TEMPERATURE_C, worst_case };
    crate::finite::check("bench_window", &w)?;
    Ok(w)
}

/// Both windows: the field window (the worst case of `settings` as stated) and the bench window at
/// each of `supplies` (duplicates computed once).
pub fn windows<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
    supplies: &[f64],
) -> Result<Windows, DesignError> {
    let field = worst_case(circuit, settings)?;
    let mut bench: Vec<BenchWindow> = Vec::with_capacity(supplies.len());
    for &s in supplies {
        if !bench.iter().any(|b| b.supply_v == s) {
            bench.push(bench_window(circuit, settings, s)?);
        }
    }
    Ok(Windows { field, bench })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    fn lathe() -> crate::record::DesignRecord {
        crate::catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").map(|s| s.record()).unwrap()
    }

    #[test]
    fn settings_close_the_supply_band_and_hold_25_c() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let mut field = ToleranceSettings { temperature_min_c: -40.0, temperature_max_c: 85.0, ..Default::default() };
        field.overrides.push(ParameterTolerance {
            id: "supply_v".into(),
            band: Some(ToleranceBand::Limits([4.5, 5.5])),
            ..Default::default()
        });
        let s = bench_settings(&c, &field);
        assert_eq!((s.temperature_min_c, s.temperature_max_c), (25.0, 25.0));
        let bands = super::super::settings::resolve_bands(&c.parameters(), &s).unwrap();
        for b in &bands {
            assert_eq!(b.drift_half_width, 0.0, "{}", b.parameter.id);
            if b.parameter.kind == ParameterKind::Supply {
                assert_eq!(b.half_width, 0.0);
            }
            if b.parameter.kind == ParameterKind::Resistor {
                assert!((b.half_width - 0.01 * b.centre).abs() < 1e-9);
            }
        }
    }

    #[test]
    fn resistor_only_bench_window_matches_the_divider_extremes() {
        // Rail-to-rail comparator, no offset, no output spread: only the 1 % resistors move. VT+ =
        // VCC·Rb/(Rb + Ra‖Rf) (DOMAIN §1a), extreme with Rb high and Ra, Rf low, at the set supply.
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let field = ToleranceSettings {
            output_level_tolerance_v: 0.0,
            offset_v: Some(0.0),
            temperature_min_c: -40.0,
            temperature_max_c: 85.0,
            ..Default::default()
        };
        let w = bench_window(&c, &field, 5.5).unwrap();
        let par = |a: f64, b: f64| a * b / (a + b);
        let hi = 5.5 * 10.1e3 / (10.1e3 + par(9.9e3, 19.8e3));
        let lo = 5.5 * 9.9e3 / (9.9e3 + par(10.1e3, 20.2e3));
        assert!((w.vt_upper_v().1 - hi).abs() < 1e-12, "{:?} {hi}", w.vt_upper_v());
        assert!((w.vt_upper_v().0 - lo).abs() < 1e-12, "{:?} {lo}", w.vt_upper_v());
        assert_eq!(w.supply_v, 5.5);
        assert!(w.worst_case.vt_upper.max.corner.iter().all(|c| c.id != "supply_v"));
    }

    #[test]
    fn lathe_bench_window_is_inside_the_field_window() {
        let r = lathe();
        let s = r.tolerance.clone().unwrap_or_default();
        let w = windows(&r.circuit, &s, &[5.0, 4.75, 5.25, 5.0]).unwrap();
        assert_eq!(w.bench.len(), 3);
        let (f_lo, f_hi) = (w.field.vt_upper.min.value_v, w.field.vt_upper.max.value_v);
        let (b_lo, b_hi) = w.bench[0].vt_upper_v();
        assert!(f_lo < b_lo && b_hi < f_hi, "field {f_lo}…{f_hi}, bench {b_lo}…{b_hi}");
        // The reproducer: parts alone at 25 °C and 5 V give about 2.877–2.945 V.
        assert!((b_lo - 2.877).abs() < 0.01 && (b_hi - 2.945).abs() < 0.01, "{b_lo} {b_hi}");
        // At a supply corner the window moves with the supply (VT+ ∝ VCC for this divider).
        assert!(w.bench[1].vt_upper_v().1 < w.bench[2].vt_upper_v().0);
    }

    #[test]
    fn a_non_finite_supply_is_refused() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        assert!(bench_window(&c, &ToleranceSettings::default(), f64::NAN).is_err());
    }
}
