//! Reference checks of the temperature sweep (`hysteron_core::tolerance::temperature`) against
//! closed forms, each with its source named beside it.

use hysteron_core::device::Comparator;
use hysteron_core::tolerance::{temperature_sweep, ToleranceSettings};
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::schmitt_gate::{SchmittGate, SchmittInput};
use hysteron_core::topology::Circuit;

fn settings(t_min: f64, t_max: f64) -> ToleranceSettings {
    ToleranceSettings {
        resistor_tempco_ppm_per_k: 0.0,
        reference_tempco_ppm_per_k: 0.0,
        temperature_min_c: t_min,
        temperature_max_c: t_max,
        ..ToleranceSettings::default()
    }
}

fn split(r1: f64, rf: f64, d: Comparator) -> InvertingSchmitt {
    InvertingSchmitt::split_supply(r1, rf, d)
}

/// Split-supply inverting trigger: VT+ = β·VOH with β = R1/(R1 + Rf) (Sedra & Smith, *Microelectronic
/// Circuits*, bistable-multivibrator section, from memory). With R1 and Rf drifting by α1·ΔT and αf·ΔT,
/// dβ/dT = β(1 − β)(α1 − αf) (differentiation of the ratio), so the drift of VT+ is
/// β(1 − β)·|α1 − αf|·VOH per kelvin to first order.
#[test]
fn divider_tcr_mismatch_gives_the_closed_form_drift() {
    let d = Comparator { negative_rail_v: -12.0, ..Comparator::ideal(12.0) };
    let (r1, rf) = (10e3, 90e3);
    let c = split(r1, rf, d);
    let beta = r1 / (r1 + rf);
    let voh = 12.0;
    // Independent resistors, ±100 ppm/K each: the coefficients can differ by 200 ppm/K.
    let mut s = settings(-40.0, 85.0);
    s.resistor_tempco_ppm_per_k = 100.0;
    let free = temperature_sweep(&c, &s).unwrap();
    let expect_free = beta * (1.0 - beta) * 200e-6 * voh;
    let got = free.vt_upper_drift_bound_v_per_k.unwrap();
    assert!((got - expect_free).abs() < 0.01 * expect_free, "{got} vs {expect_free}");
    // A network tracking to 5 ppm/K: only the 5 ppm/K mismatch moves the ratio.
    s.resistor_tracking_ppm_per_k = Some(5.0);
    let tracked = temperature_sweep(&c, &s).unwrap();
    let expect_tracked = beta * (1.0 - beta) * 5e-6 * voh;
    let got = tracked.vt_upper_drift_bound_v_per_k.unwrap();
    assert!((got - expect_tracked).abs() < 0.01 * expect_tracked, "{got} vs {expect_tracked}");
    // Sign unknown: the nominal curve does not move.
    assert_eq!(tracked.vt_upper_drift_v_per_k, Some(0.0));
}

/// The device switches when V(+) − V(−) = VOS (shared/DOMAIN.md §0), so VT± = P − VOS on the
/// inverting form: an offset drift TCVOS moves each threshold by TCVOS·ΔT (sign unknown).
#[test]
fn offset_drift_moves_the_thresholds_by_the_closed_form_amount() {
    let tcvos = 10e-6;
    let d = Comparator { offset_drift_v_per_k: tcvos, ..Comparator::ideal(5.0) };
    let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, d);
    let s = temperature_sweep(&c, &settings(-40.0, 85.0)).unwrap();
    let room = c.thresholds().unwrap();
    for p in &s.points {
        let dt = (p.temperature_c - 25.0).abs();
        assert!((p.vt_upper_max_v - room.vt_upper_v - tcvos * dt).abs() < 1e-12, "{p:?}");
        assert!((room.vt_upper_v - p.vt_upper_min_v - tcvos * dt).abs() < 1e-12, "{p:?}");
        assert!((p.vt_lower_max_v - room.vt_lower_v - tcvos * dt).abs() < 1e-12, "{p:?}");
    }
    assert!((s.vt_upper_drift_bound_v_per_k.unwrap() - tcvos).abs() < 1e-12);
}

/// CMOS and JFET input bias current doubles about every 10 K (common practice). On the inverting
/// form VT± contain −IB+·Rp (shared/DOMAIN.md §1a), Rp = Ra‖Rb‖Rf, so at 85 °C (six doublings) the
/// thresholds have moved by −(2⁶ − 1)·IB+(25 °C)·Rp.
#[test]
fn bias_current_doubling_every_10_k_moves_the_thresholds_by_ib_times_rp() {
    let ib = 1e-9;
    let d = Comparator {
        bias_plus_a: ib,
        bias_tempco_pct_per_k: 100.0 * (2f64.powf(0.1) - 1.0),
        ..Comparator::ideal(5.0)
    };
    let (ra, rb, rf) = (1e6, 1e6, 2e6);
    let c = InvertingSchmitt::single_supply(ra, rb, rf, d);
    let rp = 1.0 / (1.0 / ra + 1.0 / rb + 1.0 / rf);
    let s = temperature_sweep(&c, &settings(25.0, 85.0)).unwrap();
    let (first, last) = (s.points[0], *s.points.last().unwrap());
    assert_eq!(last.temperature_c, 85.0);
    let expect = -63.0 * ib * rp;
    assert!(((last.vt_upper_v - first.vt_upper_v) - expect).abs() < 1e-9, "{} vs {expect}", last.vt_upper_v - first.vt_upper_v);
    // The sign is known: it moves the nominal curve, and the band holds no more than it.
    assert!((last.vt_upper_max_v - last.vt_upper_v).abs() < 1e-12);
}

/// A bare Schmitt-input gate's thresholds are its own (shared/DOMAIN.md §1e without a network), so
/// a threshold coefficient of −2 mV/K moves VT+ and VT− by exactly that and leaves ΔVT alone.
#[test]
fn gate_threshold_coefficient_moves_both_thresholds() {
    let g = SchmittInput { threshold_tempco_v_per_k: -2e-3, ..SchmittInput::default() };
    let c = SchmittGate::bare(g);
    let s = temperature_sweep(&c, &settings(-40.0, 85.0)).unwrap();
    assert!((s.vt_upper_drift_v_per_k.unwrap() + 2e-3).abs() < 1e-12);
    assert!((s.vt_lower_drift_v_per_k.unwrap() + 2e-3).abs() < 1e-12);
    for p in &s.points {
        assert!((p.vt_upper_v - p.vt_lower_v - (2.8 - 1.7)).abs() < 1e-9, "{p:?}");
    }
}
