//! Reference checks of the two named windows (core/src/tolerance/bench_window.rs): the field
//! window (every tolerance over its full range) and the bench window (part tolerances and device
//! spread at 25 °C and the supply a bench step sets).
//!
//! - The lathe demo's bench window lies inside its field window and is at most half its width
//!   (the acceptance condition of the engineering review that asked for the bench window).
//! - For an inverting Schmitt trigger on a rail-to-rail comparator with only resistor tolerances
//!   left at the bench, the bench window equals the extremes of the closed form
//!   VT+ = VCC·Rb/(Rb + Ra‖Rf), VT− = VCC·(Rb‖Rf)/(Ra + Rb‖Rf) (shared/DOMAIN.md §1a; Sedra & Smith,
//!   bistable-multivibrator section) over every vertex of the resistor box, enumerated here by
//!   hand at the set supply, whatever supply tolerance and temperature range the field settings
//!   carry.

use hysteron_core::catalog;
use hysteron_core::device::Comparator;
use hysteron_core::evaluate::evaluate;
use hysteron_core::tolerance::bench_window::{bench_window, windows};
use hysteron_core::tolerance::ToleranceSettings;
use hysteron_core::topology::inverting::InvertingSchmitt;

fn lathe() -> hysteron_core::record::DesignRecord {
    catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").expect("lathe demo").record()
}

#[test]
fn lathe_bench_window_lies_inside_the_field_window_at_most_half_as_wide() {
    let r = lathe();
    let e = evaluate(&r);
    assert!(e.errors.is_empty(), "{:?}", e.errors);
    // The command-line result carries both windows, named.
    let w = e.windows.expect("windows in the result");
    let nominal = &w.bench[0];
    assert_eq!(nominal.supply_v, 5.0);
    assert_eq!(nominal.temperature_c, 25.0);
    for (name, field, bench) in [
        ("VT+", (w.field.vt_upper.min.value_v, w.field.vt_upper.max.value_v), nominal.vt_upper_v()),
        ("VT−", (w.field.vt_lower.min.value_v, w.field.vt_lower.max.value_v), nominal.vt_lower_v()),
    ] {
        assert!(field.0 <= bench.0 && bench.1 <= field.1, "{name}: bench {bench:?} not inside field {field:?}");
        assert!(bench.1 - bench.0 <= 0.5 * (field.1 - field.0), "{name}: bench {bench:?} wider than half of field {field:?}");
    }
    // Every supply the procedure sets has its own window (4.75 V and 5.25 V from the record's range).
    let supplies: Vec<f64> = w.bench.iter().map(|b| b.supply_v).collect();
    assert_eq!(supplies, vec![5.0, 4.75, 5.25]);
    // The bench procedure in the result accepts by the bench window and quotes the field window.
    let bench = e.exports.and_then(|x| x.bench).expect("bench procedure");
    let up = &bench.readings[0];
    assert_eq!((up.bench_min_v, up.bench_max_v), (Some(nominal.vt_upper_v().0), Some(nominal.vt_upper_v().1)));
    assert_eq!(up.field_min_v, Some(w.field.vt_upper.min.value_v));
    assert!(bench.readings.iter().all(|x| x.bench_min_v.is_some() && x.bench_max_v.is_some()));
}

/// The closed form of DOMAIN §1a, rail-to-rail (VA = VOH = VCC, VOL = 0).
fn closed_form(vcc: f64, ra: f64, rb: f64, rf: f64) -> (f64, f64) {
    let par = |a: f64, b: f64| a * b / (a + b);
    (vcc * rb / (rb + par(ra, rf)), vcc * par(rb, rf) / (ra + par(rb, rf)))
}

#[test]
fn resistor_only_bench_window_equals_the_closed_form_divider_extremes() {
    let (ra, rb, rf) = (33e3, 22e3, 150e3);
    let c = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(5.0));
    // Field: 2 % resistors, ±10 % supply, −40…125 °C with 200 ppm/K; no offset, no output spread.
    let field = ToleranceSettings {
        resistor_tolerance_pct: 2.0,
        supply_tolerance_pct: 10.0,
        output_level_tolerance_v: 0.0,
        offset_v: Some(0.0),
        resistor_tempco_ppm_per_k: 200.0,
        temperature_min_c: -40.0,
        temperature_max_c: 125.0,
        ..ToleranceSettings::default()
    };
    for vcc in [4.5, 5.0, 5.5] {
        let w = bench_window(&c, &field, vcc).unwrap();
        // Every vertex of the ±2 % resistor box at exactly `vcc`, by hand.
        let (mut up, mut lo) = ((f64::INFINITY, f64::NEG_INFINITY), (f64::INFINITY, f64::NEG_INFINITY));
        for mask in 0..8u32 {
            let pick = |r: f64, bit: u32| if mask >> bit & 1 == 1 { r * 1.02 } else { r * 0.98 };
            let (u, l) = closed_form(vcc, pick(ra, 0), pick(rb, 1), pick(rf, 2));
            up = (up.0.min(u), up.1.max(u));
            lo = (lo.0.min(l), lo.1.max(l));
        }
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs().max(1.0);
        let (bu, bl) = (w.vt_upper_v(), w.vt_lower_v());
        assert!(close(bu.0, up.0) && close(bu.1, up.1), "VT+ at {vcc} V: {bu:?} vs {up:?}");
        assert!(close(bl.0, lo.0) && close(bl.1, lo.1), "VT− at {vcc} V: {bl:?} vs {lo:?}");
    }
    // The field window at 5 V is wider: it adds the supply band and the drift.
    let both = windows(&c, &field, &[5.0]).unwrap();
    let b = both.bench[0].vt_upper_v();
    assert!(both.field.vt_upper.min.value_v < b.0 && b.1 < both.field.vt_upper.max.value_v);
}
