//! Every starter design (templates and demos) runs its tolerance study, and the gate demos give a
//! yield against a spec window.

use hysteron_core::catalog;
use hysteron_core::record::DesignRecord;
use hysteron_core::tolerance::settings::{SpecWindow, ToleranceSettings};
use hysteron_core::tolerance::tolerance_report;

fn settings_of(r: &DesignRecord) -> ToleranceSettings {
    r.tolerance.clone().unwrap_or_default()
}

#[test]
fn every_template_and_demo_runs_its_tolerance_study() {
    for s in catalog::templates().into_iter().chain(catalog::demos()) {
        let r = s.record();
        let rep = tolerance_report(&r.circuit, &settings_of(&r)).unwrap_or_else(|e| panic!("{}: {e}", s.key));
        let wc = &rep.worst_case;
        for (lo, hi) in [(wc.vt_upper.min.value_v, wc.vt_upper.max.value_v), (wc.vt_lower.min.value_v, wc.vt_lower.max.value_v)] {
            assert!(lo.is_finite() && hi.is_finite() && lo <= hi, "{}: {lo} {hi}", s.key);
        }
        assert!(rep.monte_carlo.valid_trials > 0, "{}: no valid Monte Carlo trial", s.key);
    }
}

#[test]
fn gate_demos_show_a_yield_against_a_spec_window() {
    for key in ["rain-gauge", "beehive-clock"] {
        let s = catalog::demos().into_iter().find(|s| s.key == key).unwrap_or_else(|| panic!("no demo {key}"));
        let r = s.record();
        assert_eq!(r.circuit.name(), "schmitt_gate", "{key}");
        let mut settings = settings_of(&r);
        // Window: any real device has some hysteresis; VT+ within ±50 % of nominal (a loose window,
        // our own choice, so the yield is well above zero).
        let t = hysteron_core::evaluate::thresholds(&r.circuit).unwrap();
        settings.spec = SpecWindow {
            hysteresis_min_v: Some(1e-3),
            vt_upper_min_v: Some(0.5 * t.vt_upper_v),
            vt_upper_max_v: Some(1.5 * t.vt_upper_v),
            ..SpecWindow::default()
        };
        let rep = tolerance_report(&r.circuit, &settings).unwrap_or_else(|e| panic!("{key}: {e}"));
        let y = rep.monte_carlo.spec_yield.as_ref().unwrap_or_else(|| panic!("{key}: no yield"));
        assert!(y.fraction > 0.5 && y.fraction <= 1.0, "{key}: yield {}", y.fraction);
        // Every worst-case corner is a real device: positive hysteresis.
        assert!(rep.worst_case.hysteresis.min.value_v > 0.0, "{key}: {:?}", rep.worst_case.hysteresis);
    }
}

#[test]
fn gate_demos_carry_their_own_spec_window_and_show_a_yield() {
    for key in ["rain-gauge", "beehive-clock"] {
        let s = catalog::demos().into_iter().find(|s| s.key == key).unwrap_or_else(|| panic!("no demo {key}"));
        let r = s.record();
        let mut settings = r.tolerance.clone().unwrap_or_else(|| panic!("{key}: no tolerance settings"));
        assert!(!settings.spec.is_empty(), "{key}: no spec window");
        settings.monte_carlo.trials = 5_000;
        let rep = tolerance_report(&r.circuit, &settings).unwrap_or_else(|e| panic!("{key}: {e}"));
        let y = rep.monte_carlo.spec_yield.as_ref().unwrap_or_else(|| panic!("{key}: no yield"));
        assert!(y.fraction > 0.5 && y.fraction <= 1.0, "{key}: yield {}", y.fraction);
    }
}

#[test]
fn beehive_window_keeps_the_period_between_half_a_second_and_two() {
    // DOMAIN §1e(i): tH = RC·ln[(VOH−VT−)/(VOH−VT+)], tL = RC·ln[(VT+−VOL)/(VT−−VOL)], with the
    // demo's R·C = 1 s, VOH = 3.2 V, VOL = 0.1 V and thresholds centred at mid-supply (1.65 V).
    let r = catalog::demos().into_iter().find(|s| s.key == "beehive-clock").unwrap().record();
    let spec = r.tolerance.unwrap().spec;
    let period = |h: f64| {
        let (up, lo) = (1.65 + h / 2.0, 1.65 - h / 2.0);
        ((3.2 - lo) / (3.2 - up)).ln() + ((up - 0.1) / (lo - 0.1)).ln()
    };
    let (t_min, t_max) = (period(spec.hysteresis_min_v.unwrap()), period(spec.hysteresis_max_v.unwrap()));
    assert!(t_min >= 0.5 && t_max <= 2.0, "{t_min} s … {t_max} s");
}

#[test]
fn rain_gauge_window_keeps_both_debounce_delays_above_the_bounce() {
    // DOMAIN §1e(ii): t_press = R2·C·ln(VDD/VT−), t_release = (R1+R2)·C·ln[VDD/(VDD−VT+)], with the
    // demo's debouncer (R1 = R2 = 10 kΩ, C = 1 µF, VDD = 3.3 V, bounce 4 ms).
    let r = catalog::demos().into_iter().find(|s| s.key == "rain-gauge").unwrap().record();
    let spec = r.tolerance.unwrap().spec;
    let press = 10e3 * 1e-6 * (3.3 / spec.vt_lower_max_v.unwrap()).ln();
    let release = 20e3 * 1e-6 * (3.3 / (3.3 - spec.vt_upper_min_v.unwrap())).ln();
    assert!(press >= 0.004 && release >= 0.004, "press {press} s, release {release} s");
}
