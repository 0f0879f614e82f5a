use super::*;
use crate::device::Comparator;
use crate::topology::noninverting::NonInvertingSchmitt;

fn noninv() -> Topology {
    Topology::NonInverting(NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 2.5, Comparator::ideal(5.0)))
}

#[test]
fn an_empty_network_changes_nothing() {
    let c = noninv();
    let r = analyse_network(&c, &InputNetwork::default(), &CheckSettings::default(), &PartSettings::default()).unwrap();
    assert_eq!(r.pin, r.field);
    assert_eq!(r.gain, 1.0);
}

#[test]
fn a_clamp_without_series_resistance_is_refused() {
    let n = InputNetwork { clamp: Clamp::RailDiodes { forward_v: 0.3, max_current_a: 0.01 }, ..Default::default() };
    let e = n.validate().unwrap_err().to_string();
    assert!(e.contains("series resistor"), "{e}");
}

#[test]
fn tvs_ratings_must_be_ordered() {
    let n = InputNetwork {
        series_ohm: Some(1e3),
        clamp: Clamp::Tvs { standoff_v: 30.0, breakdown_v: 28.0, clamping_v: 40.0, peak_current_a: 1.0 },
        ..Default::default()
    };
    assert!(n.validate().is_err());
}

#[test]
fn ramp_delay_tends_to_tau_and_is_shorter_early() {
    assert!((ramp_delay_s(1e-3, 1.0) - 1e-3).abs() < 1e-12);
    let d = ramp_delay_s(1e-3, 1e-3);
    // Δ = τ(1 − e^{−(t0+Δ)/τ}) checked by substitution.
    assert!((d - 1e-3 * (1.0 - (-(1e-3 + d) / 1e-3_f64).exp())).abs() < 1e-15);
    assert!(d < 1e-3);
    assert_eq!(ramp_delay_s(0.0, 1.0), 0.0);
}

#[test]
fn old_records_load_without_a_network_and_a_network_round_trips() {
    let r = crate::catalog::templates()[0].record();
    let mut v = serde_json::to_value(&r).unwrap();
    assert!(v.get("input_network").is_none());
    v["input_network"] = serde_json::json!({"series_ohm": "10k", "clamp": {"kind": "rail_diodes", "forward_v": 0.3, "max_current_a": "10m"}, "filter": {"r_ohm": "1k", "c_f": "100n"}});
    let back = crate::record::DesignRecord::from_value(v).unwrap();
    let n = back.input_network.unwrap();
    assert_eq!(n.series_ohm, Some(10e3));
    assert_eq!(n.filter, Some(RcFilter { r_ohm: 1e3, c_f: 100e-9 }));
}
