//! Reference checks for output dynamics and power-up state (issue 14):
//! (a) thresholds under load against an independent nodal analysis (nalgebra LU) of the inverting
//!     and non-inverting networks with the output resistance Ro and the load RL written out as
//!     resistors — the module's Thevenin reduction is never called;
//! (b) edge times at the load against their closed-form limits (0.8·swing/SR for a straight ramp,
//!     τ·ln 9 for an RC — textbook, from memory) and against a numerical integration (RK4) of the
//!     slew-limited RC; a datasheet-class slew rate (from memory);
//! (c) the slow-input chatter criterion on both sides of its boundary;
//! (d) the power-up state of a supply-referenced design against the closed forms of VT±(supply)
//!     (Sedra & Smith, bistable section, from memory; shared/DOMAIN.md §1a rail-to-rail form);
//! (e) old records load unchanged and the CLI result carries the new sections;
//! (f) when ngspice is installed, a transient of the exported deck with Ro and CL gives the
//!     10–90 % edge time within 3 % of Hysteron's.

use hysteron_tests::ngspice;
use hysteron_core::analysis::OutputState;
use hysteron_core::device::Comparator;
use hysteron_core::output_dynamics::{
    lagged_ramp, output_dynamics, spice_deck, EdgeTiming, OutputDynamicsSettings, OutputLoad,
};
use hysteron_core::power_up::{power_up, PowerUpSettings};
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::noninverting::NonInvertingSchmitt;
use hysteron_core::topology::{Circuit, Topology};
use hysteron_tests::sampling::{close, Lcg};
use hysteron_tests::nodal::Nodal;


/// An ideal device on `supply` with rail-to-rail outputs, except for the output headroom given.
fn device(supply: f64, drop_high: f64, rise_low: f64) -> Comparator {
    Comparator { output_high_drop_v: drop_high, output_low_rise_v: rise_low, ..Comparator::ideal(supply) }
}

// ---------------------------------------------------------------------------------------------
// (a) Thresholds under load: nodal analysis.
// ---------------------------------------------------------------------------------------------

#[test]
fn inverting_thresholds_under_load_match_nodal_analysis() {
    let mut g = Lcg(14);
    for _ in 0..200 {
        let supply = g.uniform(3.0, 15.0);
        let d = device(supply, g.uniform(0.0, 0.3), g.uniform(0.0, 0.3));
        let (ra, rb, rf) = (g.log_uniform(1e3, 1e6), g.log_uniform(1e3, 1e6), g.log_uniform(1e3, 1e6));
        let c = InvertingSchmitt::single_supply(ra, rb, rf, d);
        let ro = g.log_uniform(1.0, 1e3);
        let rl = if g.chance(0.7) { Some(g.log_uniform(100.0, 1e5)) } else { None };
        let load = OutputLoad { output_resistance_ohm: ro, load_resistance_ohm: rl };
        let loaded = c.with_output_load(&load).expect("the inverting topology models the load").thresholds().unwrap();
        // Nodal analysis: device level → Ro → O; O → RL → 0 V; O → Rf → P; P → Ra → VCC; P → Rb → 0 V.
        // With an ideal device (no VOS, no bias) the threshold is V(P).
        let p_at = |level: f64| {
            let mut n = Nodal::new();
            let src = n.held(level);
            let gnd = n.held(0.0);
            let vcc = n.held(supply);
            let o = n.free();
            let p = n.free();
            n.r(src, o, ro);
            if let Some(rl) = rl {
                n.r(o, gnd, rl);
            }
            n.r(o, p, rf);
            n.r(p, vcc, ra);
            n.r(p, gnd, rb);
            n.solve()[p]
        };
        let (voh, vol) = (d.output_high_v(), d.output_low_v());
        assert!(close(loaded.vt_upper_v, p_at(voh), 1e-9), "VT+ {} vs nodal {}", loaded.vt_upper_v, p_at(voh));
        assert!(close(loaded.vt_lower_v, p_at(vol), 1e-9), "VT− {} vs nodal {}", loaded.vt_lower_v, p_at(vol));
    }
}

#[test]
fn non_inverting_thresholds_under_load_match_nodal_analysis() {
    let mut g = Lcg(41);
    for _ in 0..200 {
        let supply = g.uniform(3.0, 15.0);
        let d = device(supply, g.uniform(0.0, 0.3), g.uniform(0.0, 0.3));
        let vref = g.uniform(0.3, 0.7) * supply;
        let (r1, r2) = (g.log_uniform(1e3, 1e5), g.log_uniform(1e4, 1e6));
        let c = NonInvertingSchmitt::with_fixed_reference(r1, r2, vref, d);
        let ro = g.log_uniform(1.0, 1e3);
        let rl = if g.chance(0.7) { Some(g.log_uniform(100.0, 1e5)) } else { None };
        let load = OutputLoad { output_resistance_ohm: ro, load_resistance_ohm: rl };
        let loaded = c.with_output_load(&load).expect("the non-inverting topology models the load").thresholds().unwrap();
        // Nodal analysis: VIN → R1 → P; P → R2 → O; O → Ro → device level; O → RL → 0 V. The
        // network is linear in VIN, so the input that puts P at Vref follows from two solves.
        let p_for = |vin: f64, level: f64| {
            let mut n = Nodal::new();
            let i = n.held(vin);
            let src = n.held(level);
            let gnd = n.held(0.0);
            let p = n.free();
            let o = n.free();
            n.r(i, p, r1);
            n.r(p, o, r2);
            n.r(o, src, ro);
            if let Some(rl) = rl {
                n.r(o, gnd, rl);
            }
            n.solve()[p]
        };
        let threshold = |level: f64| {
            let (p0, p1) = (p_for(0.0, level), p_for(1.0, level));
            (vref - p0) / (p1 - p0)
        };
        // Rising input trips with the output low; falling input with the output high.
        let (voh, vol) = (d.output_high_v(), d.output_low_v());
        assert!(close(loaded.vt_upper_v, threshold(vol), 1e-8), "VT+ {} vs nodal {}", loaded.vt_upper_v, threshold(vol));
        assert!(close(loaded.vt_lower_v, threshold(voh), 1e-8), "VT− {} vs nodal {}", loaded.vt_lower_v, threshold(voh));
    }
}

#[test]
fn topologies_without_a_modelled_load_say_so() {
    let r = hysteron_core::catalog::templates()
        .into_iter()
        .map(|t| t.record())
        .find(|r| matches!(r.circuit, Topology::SchmittGate(_)))
        .expect("a Schmitt-gate template");
    let rep = output_dynamics(&r.circuit, &OutputDynamicsSettings { output_resistance_ohm: 50.0, ..Default::default() }).unwrap();
    assert!(!rep.load.modelled);
    assert!(rep.load.note.contains("not modelled"), "{}", rep.load.note);
}

// ---------------------------------------------------------------------------------------------
// (b) Edge times.
// ---------------------------------------------------------------------------------------------

/// RK4 integration of dv/dt = (vs(t) − v)/τ with vs a ramp of duration T: the 10 % and 90 % times.
fn integrated_10_90(ramp: f64, tau: f64) -> f64 {
    let vs = |t: f64| if ramp > 0.0 { (t / ramp).clamp(0.0, 1.0) } else { 1.0 };
    let f = |t: f64, v: f64| (vs(t) - v) / tau;
    let end = ramp + 30.0 * tau;
    let steps = 2_000_000;
    let h = end / steps as f64;
    let (mut t, mut v) = (0.0, 0.0);
    let (mut t10, mut t90) = (None, None);
    for _ in 0..steps {
        let k1 = f(t, v);
        let k2 = f(t + h / 2.0, v + h / 2.0 * k1);
        let k3 = f(t + h / 2.0, v + h / 2.0 * k2);
        let k4 = f(t + h, v + h * k3);
        let v1 = v + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        for (level, slot) in [(0.1, &mut t10), (0.9, &mut t90)] {
            if slot.is_none() && v1 >= level {
                *slot = Some(t + h * (level - v) / (v1 - v));
            }
        }
        v = v1;
        t += h;
    }
    t90.unwrap() - t10.unwrap()
}

#[test]
fn edge_time_matches_its_closed_form_limits_and_a_numerical_integration() {
    // Straight ramp: 10–90 % is 0.8 of the 0–100 % ramp (geometry of a ramp, textbook).
    let e = EdgeTiming::new(5.0, 10e-6, 0.0);
    assert!((e.t10_90_s - 8e-6).abs() < 1e-12);
    // RC: τ·ln 9 ≈ 2.197 τ (textbook single-pole step response, from memory).
    let e = EdgeTiming::new(5.0, 0.0, 1e-6);
    assert!((e.t10_90_s - 1e-6 * 9f64.ln()).abs() < 1e-12);
    // Mixed: against an RK4 integration of the same ODE, over a range of ratios.
    for (ramp, tau) in [(1e-6, 0.1e-6), (1e-6, 0.5e-6), (1e-6, 1e-6), (0.2e-6, 1e-6)] {
        let exact = EdgeTiming::new(1.0, ramp, tau).t10_90_s;
        let rk4 = integrated_10_90(ramp, tau);
        assert!((exact - rk4).abs() < 1e-4 * exact, "ramp {ramp} τ {tau}: {exact} vs {rk4}");
        // The root-sum-square estimate is an approximation only: within 15 % here.
        let rss = EdgeTiming::new(1.0, ramp, tau).rss_estimate_s;
        assert!((rss - exact).abs() < 0.15 * exact, "rss {rss} vs {exact}");
    }
    assert_eq!(lagged_ramp(0.0, 1e-6, 1e-6), 0.0);
}

#[test]
fn datasheet_class_slew_rate_gives_the_expected_edge() {
    // From memory: LM358-class op-amps slew about 0.5 V/µs; a 5 V rail-to-rail swing then takes
    // 10 µs, and its 10–90 % edge 8 µs (0.8·swing/SR).
    let c = Topology::Inverting(InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0)));
    let s = OutputDynamicsSettings { slew_rate_v_per_us: Some(0.5), ..Default::default() };
    let r = output_dynamics(&c, &s).unwrap();
    assert!((r.rise.t10_90_s - 8e-6).abs() < 1e-11, "{}", r.rise.t10_90_s);
    assert!((r.fall.t10_90_s - 8e-6).abs() < 1e-11);
    // Speed-up capacitor rule (common practice): Rf·Cs equal to the edge time → 8 µs / 100 kΩ = 80 pF.
    let cs = r.speedup.suggested_f.unwrap();
    assert!((cs - 80e-12).abs() < 1e-16, "{cs}");
}

// ---------------------------------------------------------------------------------------------
// (c) Slow-input chatter.
// ---------------------------------------------------------------------------------------------

#[test]
fn chatter_check_follows_its_stated_criterion() {
    // VT+ 3 V, VT− 2 V: hysteresis 1 V (closed form, DOMAIN §1a rail-to-rail).
    let c = Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0)));
    let base = OutputDynamicsSettings { slew_rate_v_per_us: Some(1.0), noise_rms_v: 0.1, ..Default::default() };
    // 6.6 × 0.1 V = 0.66 V of noise p-p < 1 V: passes on a d.c.-slow input.
    let r = output_dynamics(&c, &base).unwrap();
    assert!(r.chatter.passes && r.warnings.is_empty(), "{:?}", r.chatter);
    assert!((r.chatter.margin_v - (1.0 - 0.66)).abs() < 1e-9);
    // Noise 0.2 V RMS → 1.32 V p-p > 1 V: the slow input chatters, and the warning says why.
    let noisy = OutputDynamicsSettings { noise_rms_v: 0.2, ..base };
    let r = output_dynamics(&c, &noisy).unwrap();
    assert!(!r.chatter.passes);
    assert!(r.warnings[0].message.contains("slow input") && r.warnings[0].message.contains("noise peak-to-peak"), "{}", r.warnings[0].message);
    // The same noise with a fast input: it moves s·(tpd + t10–90) = 1e6 V/s × (1 µs + 4 µs) = 5 V
    // during the switching, so it is past the other threshold and the check passes.
    let fast = OutputDynamicsSettings { input_slope_v_per_s: 1e6, propagation_delay_s: Some(1e-6), ..noisy };
    let r = output_dynamics(&c, &fast).unwrap();
    assert!((r.chatter.input_progress_v - 5.0).abs() < 1e-6, "{}", r.chatter.input_progress_v);
    assert!(r.chatter.passes);
    // Output edge coupled through 1 pF into a 1 MΩ source: capped by the divider 5 V·1/(1+5) pF.
    let coupled = OutputDynamicsSettings { stray_capacitance_f: 1e-12, input_source_resistance_ohm: 1e6, ..base };
    let r = output_dynamics(&c, &coupled).unwrap();
    assert!((r.chatter.coupled_v - 5.0 / 6.0).abs() < 1e-9, "{}", r.chatter.coupled_v);
    assert!(!r.chatter.passes);
}

// ---------------------------------------------------------------------------------------------
// (d) Power-up state.
// ---------------------------------------------------------------------------------------------

/// Rail-to-rail inverting, Ra to VCC, Rb to 0 V (DOMAIN §1a, Sedra & Smith from memory):
/// VT+ = Vs·Rb/(Rb + Ra‖Rf), VT− = Vs·(Rb‖Rf)/(Ra + Rb‖Rf).
fn closed_form(vs: f64, ra: f64, rb: f64, rf: f64) -> (f64, f64) {
    let par = |a: f64, b: f64| a * b / (a + b);
    (vs * rb / (rb + par(ra, rf)), vs * par(rb, rf) / (ra + par(rb, rf)))
}

#[test]
fn power_up_matches_the_closed_form_of_the_supply_referenced_thresholds() {
    let (ra, rb, rf) = (10e3, 10e3, 20e3);
    let c = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(5.0));
    // Minimum supply 4 V: VT+(4 V) = 2.4 V, VT−(5 V) = 2 V → not guaranteed from 2 V to 2.4 V.
    let s = PowerUpSettings { minimum_supply_v: 4.0, ..Default::default() };
    let r = power_up(&c, &s).unwrap();
    let (up_min, _) = closed_form(4.0, ra, rb, rf);
    let (up_nom, lo_nom) = closed_form(5.0, ra, rb, rf);
    let [a, b] = r.not_guaranteed_v.expect("a band remains");
    assert!((a - lo_nom).abs() < 1e-12 && (b - up_min).abs() < 1e-12, "{a} {b}");
    assert_eq!(r.final_band_v, [lo_nom, up_nom]);
    // Inverting: an input below VT− leaves the output high, above VT+ low.
    assert_eq!((r.state_below, r.state_above), (OutputState::High, OutputState::Low));
    // The grid tracking agrees with the band, within one grid step.
    let step = r.regions.iter().map(|x| x.to_v).fold(f64::MIN, f64::max) - r.regions[0].from_v;
    let step = step / (hysteron_core::power_up::INPUT_POINTS - 1) as f64;
    let open: Vec<_> = r.regions.iter().filter(|x| x.state.is_none()).collect();
    assert_eq!(open.len(), 1);
    assert!((open[0].from_v - lo_nom).abs() <= step + 1e-12 && (open[0].to_v - up_min).abs() <= step + 1e-12);
    // Inputs from 2.4 V up to VT+(5 V) = 3 V were above VT+ early in the ramp: guaranteed low.
    assert!(r.regions.iter().any(|x| x.state == Some(OutputState::Low) && x.from_v <= up_min + step && x.to_v > up_nom));

    // Minimum supply 3 V: VT+(3 V) = 1.8 V < VT−(5 V) = 2 V: every input gets a guaranteed state;
    // an input of 1.9 V is forced "input high" (output low) at 3 V, then below VT−(5 V) = 2 V
    // forces it back: the last forcing wins, output high.
    let s = PowerUpSettings { minimum_supply_v: 3.0, ..Default::default() };
    let r = power_up(&c, &s).unwrap();
    assert!(r.not_guaranteed_v.is_none());
    assert!(r.regions.iter().all(|x| x.state.is_some()));
    let at = |v: f64| r.regions.iter().find(|x| x.from_v <= v && v <= x.to_v).and_then(|x| x.state);
    assert_eq!(at(1.9), Some(OutputState::High));
    assert_eq!(at(2.5), Some(OutputState::Low));
}

#[test]
fn power_up_says_when_the_ramp_time_matters() {
    let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
    // A 1 ms ramp of 5 V with a 100 µs reference filter: lag (5 V / 1 ms)·100 µs = 0.5 V (closed form).
    let s = PowerUpSettings { ramp_time_s: 1e-3, minimum_supply_v: 3.0, reference_time_constant_s: Some(1e-4), input_time_constant_s: None };
    let r = power_up(&c, &s).unwrap();
    assert!((r.lags[0].lag_v - 0.5).abs() < 1e-12 && r.lags[0].matters);
    // A 1 s ramp: 0.5 mV of lag, well below a tenth of the 1 V hysteresis.
    let s = PowerUpSettings { ramp_time_s: 1.0, ..s };
    let r = power_up(&c, &s).unwrap();
    assert!(!r.lags[0].matters);
    // A minimum supply above the nominal one is refused with the field named.
    let bad = PowerUpSettings { minimum_supply_v: 6.0, ..s };
    assert!(power_up(&c, &bad).unwrap_err().to_string().contains("power_up.minimum_supply_v"));
}

// ---------------------------------------------------------------------------------------------
// (e) Records and the CLI result.
// ---------------------------------------------------------------------------------------------

#[test]
fn old_records_load_unchanged_and_new_sections_reach_the_result() {
    for t in hysteron_core::catalog::templates() {
        let r = t.record();
        assert!(r.output_dynamics.is_none() && r.power_up.is_none());
        // Written back, a record without the new settings has no new keys.
        let text = r.to_json();
        assert!(!text.contains("output_dynamics") && !text.contains("power_up"));
        let e = hysteron_core::evaluate::evaluate(&r);
        assert!(e.output_dynamics.is_none() && e.power_up.is_none());
    }
    let text = r#"{"schema_version":1,"name":"loaded","circuit":{"topology":"inverting","ra_ohm":"10k","rail_a":"supply","rb_ohm":"10k","rail_b":"ground","rf_ohm":"20k","device":{"supply_v":5}},
        "output_dynamics":{"slew_rate_v_per_us":"0.5","output_resistance_ohm":100,"load_capacitance_f":"1n","load_resistance_ohm":"10k"},
        "power_up":{"minimum_supply_v":3,"ramp_time_s":"1m"}}"#;
    let r = DesignRecord::from_json(text).unwrap();
    let e = hysteron_core::evaluate::evaluate(&r);
    assert!(e.errors.is_empty(), "{:?}", e.errors);
    let od = e.output_dynamics.unwrap();
    assert!(od.load.modelled && od.load.shift_upper_v < 0.0, "{:?}", od.load);
    assert!(e.power_up.is_some());
    let deck = e.exports.unwrap().spice.unwrap();
    assert!(deck.contains("\nRO out_src out 100\n") && deck.contains("\nCL out 0 1n\n") && deck.contains("\nRL out 0 10k\n"), "{deck}");
    let sheet = hysteron_core::overview::sheet(&r).unwrap();
    assert_eq!(sheet.dynamics.len(), 2);
}

// ---------------------------------------------------------------------------------------------
// (f) ngspice transient of the exported deck.
// ---------------------------------------------------------------------------------------------

#[test]
fn ngspice_transient_gives_the_rc_edge_time() {
    if !ngspice::available() {
        return;
    }
    // Ro 100 Ω, CL 1 nF: τ = 100 ns, 10–90 % = 219.7 ns. Tolerance 3 %: the deck's switch adds its
    // 1 Ω on-resistance (1 %), the feedback network loads the output (100 Ω against 20 kΩ, 0.5 %)
    // and the time step of 1 ns with linear interpolation.
    let c = Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0)));
    let s = OutputDynamicsSettings { output_resistance_ohm: 100.0, load_capacitance_f: 1e-9, ..Default::default() };
    let ours = output_dynamics(&c, &s).unwrap();
    let deck = spice_deck(&c, "edge check", &s).unwrap();
    // Replace the slow triangle with fast steps: up at 1 µs, down at 5 µs.
    let body: String = deck
        .lines()
        .filter(|l| !l.starts_with(".end"))
        .map(|l| if l.starts_with("VIN ") { format!("{} PWL(0 0 1u 0 1.001u 5 5u 5 5.001u 0)", l.split(" DC ").next().unwrap()) } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n");
    let Some(rows) = ngspice::table(&format!("{body}\n.end\n"), "tran 1n 10u 0 1n", "v(out)") else { return };
    let rows: Vec<(f64, f64)> = rows.iter().filter(|r| r.len() >= 2).map(|r| (r[0], r[1])).collect();
    // Falling edge (input steps up at 1 µs), then rising (input steps down at 5 µs); levels 0/5 V.
    let fall = ngspice::crossing_after(&rows, 0.5, 1e-6).unwrap() - ngspice::crossing_after(&rows, 4.5, 1e-6).unwrap();
    let rise = ngspice::crossing_after(&rows, 4.5, 5e-6).unwrap() - ngspice::crossing_after(&rows, 0.5, 5e-6).unwrap();
    println!("ngspice fall {fall:e} s, rise {rise:e} s; Hysteron {:e} s", ours.rise.t10_90_s);
    assert!((fall - ours.fall.t10_90_s).abs() < 0.03 * ours.fall.t10_90_s, "fall {fall} vs {}", ours.fall.t10_90_s);
    assert!((rise - ours.rise.t10_90_s).abs() < 0.03 * ours.rise.t10_90_s, "rise {rise} vs {}", ours.rise.t10_90_s);
}
