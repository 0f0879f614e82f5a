//! Reference checks for the inverting Schmitt trigger, the default topology:
//! (a) against the published closed forms (Sedra & Smith, *Microelectronic Circuits*, bistable
//!     multivibrator section, from memory; shared/DOMAIN.md §1a) in the split-supply, reference and
//!     single-supply forms, and the published synthesis formulas;
//! (b) against an independent nodal solve with nalgebra over a few hundred random designs of each form:
//!     the node equations of the three-resistor network (with the source resistance, VOS, IB± and
//!     built-in hysteresis) are built here from the circuit description; the module's equations are
//!     never called;
//! (c) property tests: synthesis of reachable targets returns them (synthesise → analyse), wild or
//!     infeasible targets give typed errors and never NaN or a panic;
//! and the schema example tests/fixtures/records/inverting.json loads, evaluates and synthesises.

use hysteron_core::analysis::{OutputState, Thresholds};
use hysteron_core::device::{Comparator, Rail};
use hysteron_core::error::DesignError;
use hysteron_core::evaluate::evaluate;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::{Circuit, Topology};
use hysteron_tests::nodal::Nodal;
use proptest::prelude::*;

// ---------------------------------------------------------------------------------------------
// Helpers: a deterministic generator, a tolerance and an independent nodal solver.
// ---------------------------------------------------------------------------------------------

use hysteron_tests::sampling::{close, random_comparator as random_device, Lcg};


fn rail_v(rail: Rail, d: &Comparator) -> f64 {
    match rail {
        Rail::Supply => d.supply_v,
        Rail::Ground => 0.0,
        Rail::NegativeRail => d.negative_rail_v,
        Rail::Fixed(v) => v,
    }
}

/// The inverting network at input `vin` with the output held at `vo`: returns (V(+), V(−)).
fn nodal_inputs(c: &InvertingSchmitt, vin: f64, vo: f64) -> (f64, f64) {
    let d = &c.device;
    let mut net = Nodal::new();
    // Signal side: Vin → Rs → (−), IB− drawn into the pin.
    let src = net.held(vin);
    let minus = if d.source_resistance_ohm > 0.0 {
        let m = net.free();
        net.r(src, m, d.source_resistance_ohm);
        m
    } else {
        src
    };
    net.draw(minus, d.bias_minus_a);
    // Node P: Ra to rail A, Rb to rail B, Rf to the output, IB+ drawn into the pin.
    let p = net.free();
    if let Some(ra) = c.ra_ohm {
        let a = net.held(rail_v(c.rail_a, d));
        net.r(a, p, ra);
    }
    if let Some(rb) = c.rb_ohm {
        let b = net.held(rail_v(c.rail_b, d));
        net.r(p, b, rb);
    }
    let o = net.held(vo);
    net.r(o, p, c.rf_ohm);
    net.draw(p, d.bias_plus_a);
    let v = net.solve();
    (v[p], v[minus])
}

/// (VT+, VT−) by the nodal solve. Output high (VOH = VCC − drop) while the input is below VT+; the
/// device switches when V(+) − V(−) reaches VOS ∓ h/2 (DOMAIN §0: built-in hysteresis is a
/// state-dependent offset; with the output high the difference must fall to VOS − h/2).
fn nodal_thresholds(c: &InvertingSchmitt) -> (f64, f64) {
    let d = &c.device;
    let voh = d.supply_v - d.output_high_drop_v;
    let vol = d.negative_rail_v + d.output_low_rise_v;
    let crossing = |vo: f64, offset: f64| {
        // V(+) − V(−) − offset is linear in the input: two solves find its zero.
        let f = |vin: f64| {
            let (p, m) = nodal_inputs(c, vin, vo);
            p - m - offset
        };
        let (f0, f1) = (f(0.0), f(10.0));
        -f0 * 10.0 / (f1 - f0)
    };
    let h = d.builtin_hysteresis_v;
    (crossing(voh, d.offset_v - h / 2.0), crossing(vol, d.offset_v + h / 2.0))
}

fn assert_matches_nodal(c: &InvertingSchmitt) {
    let t = c.thresholds().unwrap();
    let (up, lo) = nodal_thresholds(c);
    assert!(close(t.vt_upper_v, up, 1e-9), "VT+ {} vs nodal {up} for {c:?}", t.vt_upper_v);
    assert!(close(t.vt_lower_v, lo, 1e-9), "VT− {} vs nodal {lo} for {c:?}", t.vt_lower_v);
}

fn ideal_split(v: f64) -> Comparator {
    Comparator { supply_v: v, negative_rail_v: -v, ..Comparator::ideal(v) }
}

// ---------------------------------------------------------------------------------------------
// (a) Published closed forms.
// ---------------------------------------------------------------------------------------------

#[test]
fn split_supply_matches_sedra_smith() {
    // Sedra & Smith, bistable circuit with the input on the inverting side (from memory):
    // β = R1/(R1 + R2), VT+ = β·L+, VT− = β·L−. Saturation levels ±13 V on ±15 V rails,
    // R1 = 10 kΩ, R2 = 100 kΩ: VT± = ±13/11 V.
    let d = Comparator { output_high_drop_v: 2.0, output_low_rise_v: 2.0, ..ideal_split(15.0) };
    let c = InvertingSchmitt::split_supply(10e3, 100e3, d);
    let t = c.thresholds().unwrap();
    assert!(close(t.vt_upper_v, 13.0 / 11.0, 1e-12) && close(t.vt_lower_v, -13.0 / 11.0, 1e-12), "{t:?}");
    // Width β(L+ − L−) = 26/11 V.
    assert!(close(t.vt_upper_v - t.vt_lower_v, 26.0 / 11.0, 1e-12));
}

#[test]
fn reference_form_matches_the_shifted_bistable() {
    // Same text, R1 returned to a reference VR instead of ground (from memory): the thresholds are
    // VR·R2/(R1 + R2) + β·L±. VR = 2 V, R1 = 22 kΩ, R2 = 220 kΩ, L± = ±12 V.
    let d = Comparator { output_high_drop_v: 3.0, output_low_rise_v: 3.0, ..ideal_split(15.0) };
    let c = InvertingSchmitt { ra_ohm: None, rail_a: Rail::Supply, rb_ohm: Some(22e3), rail_b: Rail::Fixed(2.0), rf_ohm: 220e3, device: d };
    let t = c.thresholds().unwrap();
    let beta = 22.0 / 242.0;
    assert!(close(t.vt_upper_v, 2.0 * (1.0 - beta) + beta * 12.0, 1e-12), "{t:?}");
    assert!(close(t.vt_lower_v, 2.0 * (1.0 - beta) - beta * 12.0, 1e-12), "{t:?}");
}

#[test]
fn single_supply_matches_the_three_resistor_form() {
    // Rail-to-rail output on one supply (DOMAIN §1a, after Sedra & Smith and Maxim application note
    // 3616, from memory): VT+ = VCC·Rb/(Rb + Ra‖Rf), VT− = VCC·(Rb‖Rf)/(Ra + Rb‖Rf).
    let par = |a: f64, b: f64| a * b / (a + b);
    for (ra, rb, rf, vcc) in [(100e3, 100e3, 100e3, 5.0), (47e3, 33e3, 470e3, 3.3), (10e3, 22e3, 1e6, 12.0)] {
        let c = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(vcc));
        let t = c.thresholds().unwrap();
        assert!(close(t.vt_upper_v, vcc * rb / (rb + par(ra, rf)), 1e-12), "{t:?}");
        assert!(close(t.vt_lower_v, vcc * par(rb, rf) / (ra + par(rb, rf)), 1e-12), "{t:?}");
    }
    // 100 k / 100 k / 100 k on 5 V: the familiar 10/3 V and 5/3 V.
    let t = InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0)).thresholds().unwrap();
    assert!(close(t.vt_upper_v, 10.0 / 3.0, 1e-12) && close(t.vt_lower_v, 5.0 / 3.0, 1e-12), "{t:?}");
}

#[test]
fn non_idealities_shift_as_published() {
    // DOMAIN §1a errors (from memory, after the datasheet definitions of VOS, IB and built-in
    // hysteresis): VT± += −VOS − IB+·(Ra‖Rb‖Rf) + IB−·Rs, and built-in h adds h to the width.
    let (ra, rb, rf) = (47e3, 33e3, 470e3);
    let base = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(5.0));
    let t0 = base.thresholds().unwrap();
    let mut c = base.clone();
    c.device.offset_v = 2e-3;
    c.device.bias_plus_a = 50e-9;
    c.device.bias_minus_a = -20e-9;
    c.device.source_resistance_ohm = 4.7e3;
    c.device.builtin_hysteresis_v = 6e-3;
    let t = c.thresholds().unwrap();
    let rp = 1.0 / (1.0 / ra + 1.0 / rb + 1.0 / rf);
    let shift = -2e-3 - 50e-9 * rp + (-20e-9) * 4.7e3;
    assert!(close(t.vt_upper_v, t0.vt_upper_v + shift + 3e-3, 1e-12), "{t:?} vs {t0:?}");
    assert!(close(t.vt_lower_v, t0.vt_lower_v + shift - 3e-3, 1e-12), "{t:?} vs {t0:?}");
}

#[test]
fn synthesis_matches_the_published_formulas() {
    // DOMAIN §1a synthesis (Maxim application note 3616 method, from memory), ideal rail-to-rail
    // device: k = ΔV/(VOH − VOL), Vth = (VT−·VOH − VT+·VOL)/(VOH − VOL − ΔV), Rth = Rf·k/(1 − k),
    // Ra = Rth(VA − VB)/(Vth − VB), Rb = Rth(VA − VB)/(VA − Vth).
    let (vcc, up, lo, rf) = (5.0, 3.0, 2.0, 100e3);
    let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, Comparator::ideal(vcc));
    let c = template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: lo }, rf).unwrap();
    let k = (up - lo) / vcc;
    let vth = (lo * vcc - up * 0.0) / (vcc - 0.0 - (up - lo));
    let rth = rf * k / (1.0 - k);
    assert!(close(c.ra_ohm.unwrap(), rth * vcc / vth, 1e-12), "{c:?}");
    assert!(close(c.rb_ohm.unwrap(), rth * vcc / (vcc - vth), 1e-12), "{c:?}");
    assert_eq!(c.rf_ohm, rf);
}

// ---------------------------------------------------------------------------------------------
// (b) Independent nodal solution over random designs.
// ---------------------------------------------------------------------------------------------


/// Split supply, reference at ground: only Rb, to 0 V, on ± rails.
fn random_split(g: &mut Lcg) -> InvertingSchmitt {
    InvertingSchmitt::split_supply(g.log_uniform(1e3, 1e6), g.log_uniform(1e3, 1e7), random_device(g, true))
}

/// Reference form: only Rb, returned to a fixed reference, on one or two supplies.
fn random_reference(g: &mut Lcg) -> InvertingSchmitt {
    let split = g.chance(0.5);
    InvertingSchmitt {
        ra_ohm: None,
        rail_a: Rail::Supply,
        rb_ohm: Some(g.log_uniform(1e3, 1e6)),
        rail_b: Rail::Fixed(g.uniform(-2.0, 6.0)),
        rf_ohm: g.log_uniform(1e3, 1e7),
        device: random_device(g, split),
    }
}

/// Single supply: Ra to the supply, Rb to ground (the three-resistor form), and now and then other
/// rails for the divider ends.
fn random_single(g: &mut Lcg) -> InvertingSchmitt {
    let mut c = InvertingSchmitt::single_supply(
        g.log_uniform(1e3, 1e6),
        g.log_uniform(1e3, 1e6),
        g.log_uniform(1e3, 1e7),
        random_device(g, false),
    );
    if g.chance(0.2) {
        c.rail_a = Rail::Fixed(g.uniform(1.0, 5.0));
    }
    if g.chance(0.2) {
        c.device.negative_rail_v = -g.uniform(1.0, 5.0);
        c.rail_b = Rail::NegativeRail;
    }
    c
}

fn valid_designs(seed: u64, count: usize, mut make: impl FnMut(&mut Lcg) -> InvertingSchmitt) -> Vec<InvertingSchmitt> {
    let mut g = Lcg(seed);
    let out: Vec<InvertingSchmitt> = (0..20 * count).map(|_| make(&mut g)).filter(|c| c.validate().is_ok()).take(count).collect();
    assert_eq!(out.len(), count, "generator produced too few valid designs");
    out
}

#[test]
fn split_supply_agrees_with_nodal_solution() {
    for c in valid_designs(0x1a_0001, 300, random_split) {
        assert_matches_nodal(&c);
    }
}

#[test]
fn reference_form_agrees_with_nodal_solution() {
    for c in valid_designs(0x1a_0002, 300, random_reference) {
        assert_matches_nodal(&c);
    }
}

#[test]
fn single_supply_agrees_with_nodal_solution() {
    for c in valid_designs(0x1a_0003, 300, random_single) {
        assert_matches_nodal(&c);
    }
}

#[test]
fn operating_point_agrees_with_nodal_solution() {
    // Node P and the signal-side pin at an arbitrary input, both output states.
    let mut g = Lcg(0x1a_0004);
    for c in valid_designs(0x1a_0005, 100, random_single) {
        let vin = g.uniform(-5.0, 10.0);
        let d = &c.device;
        for (state, vo) in [
            (OutputState::High, d.supply_v - d.output_high_drop_v),
            (OutputState::Low, d.negative_rail_v + d.output_low_rise_v),
        ] {
            let (p, m) = nodal_inputs(&c, vin, vo);
            let op = c.operating_point(vin, state).unwrap();
            let node_p = op.device_inputs.iter().find(|n| n.name.contains("node P")).unwrap().volts;
            let signal = op.device_inputs.iter().find(|n| n.name.contains("signal")).unwrap().volts;
            assert!(close(node_p, p, 1e-9), "{node_p} vs {p}");
            assert!(close(signal, m, 1e-9), "{signal} vs {m}");
        }
    }
}

// ---------------------------------------------------------------------------------------------
// (c) Property tests.
// ---------------------------------------------------------------------------------------------

fn round_trips(template: &InvertingSchmitt, targets: Thresholds, anchor: f64) -> InvertingSchmitt {
    let d = template.synthesise_with_anchor(targets, anchor).unwrap_or_else(|e| panic!("{e} for {targets:?} {template:?}"));
    let t = d.thresholds().unwrap();
    assert!(close(t.vt_upper_v, targets.vt_upper_v, 1e-9), "{t:?} vs {targets:?}");
    assert!(close(t.vt_lower_v, targets.vt_lower_v, 1e-9), "{t:?} vs {targets:?}");
    d
}

fn device_strategy(split: bool) -> impl Strategy<Value = Comparator> {
    (
        3.0..15.0f64,
        1.0..3.0f64,
        0.0..0.3f64,
        0.0..0.3f64,
        -5e-3..5e-3f64,
        -50e-9..50e-9f64,
        -50e-9..50e-9f64,
        prop_oneof![Just(0.0), 0.0..0.01f64],
        prop_oneof![Just(0.0), 0.0..2e3f64],
    )
        .prop_map(move |(s, neg, hd, lr, os, ibp, ibm, h, rs)| Comparator {
            supply_v: s,
            negative_rail_v: if split { -neg } else { 0.0 },
            output_high_drop_v: hd,
            output_low_rise_v: lr,
            offset_v: os,
            bias_plus_a: ibp,
            bias_minus_a: ibm,
            builtin_hysteresis_v: h,
            source_resistance_ohm: rs,
            ..Comparator::default()
        })
}

fn log_r(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    (lo.ln()..hi.ln()).prop_map(f64::exp)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(128), ..ProptestConfig::default() })]

    #[test]
    fn single_supply_round_trip(d in device_strategy(false), ra in log_r(1e3, 1e6), rb in log_r(1e3, 1e6), rf in log_r(1e4, 1e7)) {
        // Targets from a design: reachable by construction; the divider comes back.
        let design = InvertingSchmitt::single_supply(ra, rb, rf, d);
        let t = design.thresholds().unwrap();
        prop_assume!(t.vt_upper_v - t.vt_lower_v > 1e-6);
        let got = round_trips(&InvertingSchmitt::single_supply(1.0, 1.0, 1.0, d), t, rf);
        prop_assert!(close(got.ra_ohm.unwrap(), ra, 1e-6), "{got:?}");
        prop_assert!(close(got.rb_ohm.unwrap(), rb, 1e-6), "{got:?}");
    }

    #[test]
    fn split_and_reference_round_trip(
        d in device_strategy(true), rb in log_r(1e3, 1e6), rf in log_r(1e4, 1e7), reference in prop::option::of(-2.0..2.0f64),
    ) {
        // The two-resistor forms reach exactly the targets whose centre their fixed reference sets.
        let rail_b = reference.map_or(Rail::Ground, Rail::Fixed);
        let design = InvertingSchmitt { ra_ohm: None, rail_a: Rail::Supply, rb_ohm: Some(rb), rail_b, rf_ohm: rf, device: d };
        let t = design.thresholds().unwrap();
        prop_assume!(t.vt_upper_v - t.vt_lower_v > 1e-6);
        let template = InvertingSchmitt { rb_ohm: Some(1.0), rf_ohm: 1.0, ..design.clone() };
        let got = round_trips(&template, t, rf);
        prop_assert!(got.ra_ohm.is_none());
        prop_assert!(close(got.rb_ohm.unwrap(), rb, 1e-6), "{got:?}");
    }

    #[test]
    fn analysis_of_the_synthesised_record_returns_the_targets(
        centre_frac in 0.2..0.8f64, width_frac in 0.01..0.5f64, anchor in log_r(1e4, 1e6), supply in 3.0..15.0f64,
    ) {
        // The full record path (synthesis study, then the analysis of the circuit it gives).
        let c = InvertingSchmitt::single_supply(1e5, 1e5, 1e5, Comparator::ideal(supply));
        let mut record = DesignRecord::new("round trip", Topology::Inverting(c));
        let width = width_frac * supply;
        let centre = supply * centre_frac;
        prop_assume!(centre - width / 2.0 > 0.0 && centre + width / 2.0 < supply);
        let t = Thresholds::from_centre_width(centre, width);
        record.targets = Some(serde_json::from_value(serde_json::json!({
            "vt_upper_v": t.vt_upper_v, "vt_lower_v": t.vt_lower_v, "impedance": { "anchor_ohm": anchor }
        })).unwrap());
        let e = evaluate(&record);
        let s = e.synthesis.unwrap_or_else(|| panic!("{:?}", e.errors));
        prop_assert!(close(s.analysis.vt_upper_v, t.vt_upper_v, 1e-9) && close(s.analysis.vt_lower_v, t.vt_lower_v, 1e-9));
    }

    #[test]
    fn wild_targets_give_a_design_or_a_typed_error(
        d in device_strategy(false), up in -20.0..20.0f64, lo in -20.0..20.0f64,
        anchor in prop_oneof![3 => log_r(1.0, 1e9), 1 => log_r(1e-30, 1e300)],
    ) {
        let template = InvertingSchmitt::single_supply(1.0, 1.0, 1.0, d);
        let t = Thresholds { vt_upper_v: up, vt_lower_v: lo };
        match template.synthesise_with_anchor(t, anchor) {
            Ok(c) => {
                let got = c.thresholds().unwrap();
                prop_assert!(close(got.vt_upper_v, up, 1e-9) && close(got.vt_lower_v, lo, 1e-9));
                prop_assert!(c.parameters().iter().all(|p| p.value.is_finite()));
            }
            Err(e) => prop_assert!(!e.to_string().is_empty()),
        }
        if up <= lo || up - lo >= d.supply_v + 0.02 {
            let r = template.synthesise_with_anchor(t, anchor.clamp(1e-6, 1e15));
            prop_assert!(matches!(r, Err(DesignError::Infeasible { .. })), "{r:?}");
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Schema example: tests/fixtures/records/inverting.json.
// ---------------------------------------------------------------------------------------------

#[test]
fn fixture_inverting() {
    let text = include_str!("../fixtures/records/inverting.json");
    let record = DesignRecord::from_json(text).unwrap();
    assert_eq!(record.circuit.name(), "inverting");
    assert_eq!(DesignRecord::from_json(&record.to_json()).unwrap(), record, "JSON round trip");
    let e = evaluate(&record);
    assert!(e.errors.is_empty(), "{:?}", e.errors);
    let a = e.analysis.as_ref().unwrap();
    let Topology::Inverting(c) = &record.circuit else { panic!("wrong topology") };
    let (up, lo) = nodal_thresholds(c);
    assert!(close(a.vt_upper_v, up, 1e-9) && close(a.vt_lower_v, lo, 1e-9), "{a:?}");
    assert!(e.sensitivities.as_ref().is_some_and(|s| !s.is_empty()));
    let s = e.synthesis.as_ref().expect("synthesis");
    let t = record.targets.unwrap().thresholds();
    assert!(close(s.analysis.vt_upper_v, t.vt_upper_v, 1e-9) && close(s.analysis.vt_lower_v, t.vt_lower_v, 1e-9));
    let Topology::Inverting(sc) = &s.circuit else { panic!("wrong topology") };
    let (up, lo) = nodal_thresholds(sc);
    assert!(close(up, t.vt_upper_v, 1e-9) && close(lo, t.vt_lower_v, 1e-9), "nodal {up} {lo} vs {t:?}");
}
