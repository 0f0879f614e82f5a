//! The input network in front of the trigger (core::input_network) against outside formulas:
//! (a) field-referred thresholds of the non-inverting trigger with source resistance: the
//!     textbook thresholds with R1 replaced by R1 + Rs (Sedra & Smith, *Microelectronic
//!     Circuits*, bistable-multivibrator section, from memory), also through a dropper (Thevenin);
//! (b) clamp current (Vin − Vrail − Vf)/Rseries (common practice for input protection, from
//!     memory) at the highest input and at a surge, and its dissipation I²R;
//! (c) the RC filter's delay on a ramp: the ramp response of a first-order lag,
//!     y = S(t − τ(1 − e^{−t/τ})), lag → τ (Ogata, *Modern Control Engineering*, ramp response of
//!     first-order systems, from memory), against the sampled filter and the network's figure;
//! (d) Rice's recommended hysteresis falls as the filter corner drops, as the spectral moments of
//!     white noise through a one-pole filter predict (moments derived in core::input_network::noise;
//!     Rice, BSTJ 1944–45, from memory), in closed form and through the whole signal study;
//! (e) when ngspice is installed, a transient of the exported deck gives Hysteron's edge delay and
//!     field thresholds.

use hysteron_tests::ngspice;
use hysteron_core::analysis::CheckSettings;
use hysteron_core::bom::PartSettings;
use hysteron_core::device::Comparator;
use hysteron_core::input_network::noise::{poles_through_filter, white_through_filter, FrontEnd};
use hysteron_core::input_network::{analyse_network, ramp_delay_s, Clamp, Dropper, InputNetwork, RcFilter};
use hysteron_core::record::DesignRecord;
use hysteron_core::signal::generate::{Component, SignalDefinition};
use hysteron_core::signal::noise::NoiseSource;
use hysteron_core::signal::report::{SignalSettings, StudySettings};
use hysteron_core::signal::rice::min_hysteresis_v;
use hysteron_core::signal::Times;
use hysteron_core::topology::noninverting::NonInvertingSchmitt;
use hysteron_core::topology::{Circuit, Topology};
use std::f64::consts::PI;

const R1: f64 = 10e3;
const R2: f64 = 100e3;
const VREF: f64 = 2.5;
const VDD: f64 = 5.0;

fn noninv(r1: f64) -> Topology {
    Topology::NonInverting(NonInvertingSchmitt::with_fixed_reference(r1, R2, VREF, Comparator::ideal(VDD)))
}

/// Sedra & Smith (from memory): VT+ = Vref(1 + R1/R2) − (R1/R2)·VOL, VT− = Vref(1 + R1/R2) − (R1/R2)·VOH.
fn textbook(r1: f64) -> (f64, f64) {
    let m = r1 / R2;
    (VREF * (1.0 + m) - m * 0.0, VREF * (1.0 + m) - m * VDD)
}

fn analyse(net: &InputNetwork) -> hysteron_core::input_network::NetworkReport {
    analyse_network(&noninv(R1), net, &CheckSettings::default(), &PartSettings::default()).unwrap()
}

#[test]
fn source_resistance_adds_to_r1_in_the_field_thresholds() {
    let net = InputNetwork {
        series_ohm: Some(4.7e3),
        clamp: Clamp::RailDiodes { forward_v: 0.3, max_current_a: 0.05 },
        filter: Some(RcFilter { r_ohm: 1e3, c_f: 100e-9 }),
        ..Default::default()
    };
    let r = analyse(&net);
    let (up, lo) = textbook(R1 + 5.7e3);
    assert!((r.field.vt_upper_v - up).abs() < 1e-9, "{} vs {up}", r.field.vt_upper_v);
    assert!((r.field.vt_lower_v - lo).abs() < 1e-9, "{} vs {lo}", r.field.vt_lower_v);
    // The pin thresholds are the topology's own (R1 alone).
    let (pu, pl) = textbook(R1);
    assert!((r.pin.vt_upper_v - pu).abs() < 1e-9 && (r.pin.vt_lower_v - pl).abs() < 1e-9);
    // Independently: the topology itself with R1 + Rs.
    let t = noninv(R1 + 5.7e3).thresholds().unwrap();
    assert!((r.field.vt_upper_v - t.vt_upper_v).abs() < 1e-9 && (r.field.vt_lower_v - t.vt_lower_v).abs() < 1e-9);
}

#[test]
fn a_dropper_divides_and_adds_its_thevenin_resistance() {
    // Thevenin (from memory): g = Rb/(Rt + Rb), R = Rt‖Rb. 100k/20k: g = 1/6, R = 16.667k.
    let net = InputNetwork { dropper: Some(Dropper { top_ohm: 100e3, bottom_ohm: 20e3 }), series_ohm: Some(2e3), ..Default::default() };
    let r = analyse(&net);
    let rth = 100e3 * 20e3 / 120e3;
    let (up, lo) = textbook(R1 + rth + 2e3);
    assert!((r.field.vt_upper_v - up * 6.0).abs() < 1e-8, "{} vs {}", r.field.vt_upper_v, up * 6.0);
    assert!((r.field.vt_lower_v - lo * 6.0).abs() < 1e-8);
}

#[test]
fn clamp_current_is_the_excess_over_the_rail_and_forward_drop_through_the_series_resistor() {
    let net = InputNetwork {
        series_ohm: Some(10e3),
        clamp: Clamp::RailDiodes { forward_v: 0.3, max_current_a: 0.01 },
        field_max_v: Some(24.0),
        field_min_v: Some(0.0),
        surge_v: Some(500.0),
        ..Default::default()
    };
    let r = analyse(&net);
    // (Vin − Vrail − Vf)/Rseries, common practice (from memory).
    let i24 = (24.0 - 5.0 - 0.3) / 10e3;
    assert!((r.at_max.clamp_current_a - i24).abs() < 1e-15);
    assert!((r.at_max.series_power_w - i24 * i24 * 10e3).abs() < 1e-12);
    let (pos, neg) = r.at_surge.unwrap();
    assert!((pos.clamp_current_a - (500.0 - 5.3) / 10e3).abs() < 1e-12);
    // The lower diode holds the node at 0 V − Vf.
    assert!((neg.clamp_current_a - (-500.0 + 0.3) / 10e3).abs() < 1e-12);
    // 49.5 mA exceeds the 10 mA rating; 24.5 W in a 0603 exceeds its rating: both said.
    assert!(r.warnings.iter().any(|w| w.contains("clamp diode current")), "{:?}", r.warnings);
    assert!(r.warnings.iter().any(|w| w.contains("series resistor dissipates")), "{:?}", r.warnings);
    // Through a dropper, the Thevenin form: (g·Vin − Vrail − Vf)/(Rt‖Rb + Rseries).
    let net2 = InputNetwork { dropper: Some(Dropper { top_ohm: 47e3, bottom_ohm: 10e3 }), field_max_v: Some(60.0), ..net };
    let r2 = analyse(&net2);
    let g = 10e3 / 57e3;
    let i = (g * 60.0 - 5.3) / (47e3 * 10e3 / 57e3 + 10e3);
    assert!((r2.at_max.clamp_current_a - i).abs() < 1e-15, "{} vs {i}", r2.at_max.clamp_current_a);
}

#[test]
fn a_tvs_clamps_at_breakdown_plus_its_dynamic_resistance() {
    // Piecewise-linear TVS through its datasheet points (breakdown, clamping at Ipp).
    let net = InputNetwork {
        series_ohm: Some(100.0),
        clamp: Clamp::Tvs { standoff_v: 26.0, breakdown_v: 28.9, clamping_v: 42.1, peak_current_a: 14.3 },
        field_max_v: Some(24.0),
        surge_v: Some(1000.0),
        ..Default::default()
    };
    let r = analyse(&net);
    assert_eq!(r.at_max.clamp_current_a, 0.0);
    let rd = (42.1 - 28.9) / 14.3;
    let i = (1000.0 - 28.9) / (100.0 + rd);
    let (pos, neg) = r.at_surge.unwrap();
    assert!((pos.clamp_current_a - i).abs() < 1e-12 && (neg.clamp_current_a + i).abs() < 1e-12);
    assert!((pos.clamp_node_v - (28.9 + i * rd)).abs() < 1e-12);
}

#[test]
fn rc_delay_on_a_ramp_matches_the_first_order_ramp_response() {
    // Sampled filter: a ramp of slope S from rest at 0; the filtered ramp crosses L a delay Δ
    // after the ramp does, Δ = τ(1 − e^{−(t0+Δ)/τ}) (Ogata, from memory).
    let tau = 1e-3;
    let front = FrontEnd { time_constant_s: tau, clamp_low_v: None, clamp_high_v: None };
    let step = 1e-6;
    let s = 1000.0; // V/s
    let mut x: Vec<f64> = (0..20_000).map(|i| s * i as f64 * step).collect();
    front.apply(Times::Uniform { start_s: 0.0, step_s: step }, &mut x);
    for level in [0.5, 2.0, 10.0] {
        let t0 = level / s;
        let k = x.iter().position(|v| *v >= level).unwrap();
        let t = (k - 1) as f64 * step + (level - x[k - 1]) / (x[k] - x[k - 1]) * step;
        let delay = t - t0;
        let expect = ramp_delay_s(tau, t0);
        assert!((delay - expect).abs() < 1e-9, "level {level}: {delay} vs {expect}");
        // Closed form check of the root itself.
        assert!((expect - tau * (1.0 - (-(t0 + expect) / tau).exp())).abs() < 1e-15);
    }
    // Long after the start the lag is τ.
    assert!((ramp_delay_s(tau, 20.0 * tau) - tau).abs() < 1e-10);
}

#[test]
fn the_filter_time_constant_includes_the_triggers_input_resistance() {
    // The non-inverting trigger's input draws (V − VO)/(R1 + R2) in either state (ideal device):
    // R_in = R1 + R2, so τ = C·(Rs‖R_in) and fc = 1/(2πτ); phase lag atan(2πfτ) (first-order
    // filter, any circuits text, from memory).
    let net = InputNetwork {
        series_ohm: Some(10e3),
        filter: Some(RcFilter { r_ohm: 1e3, c_f: 1e-6 }),
        field_min_v: Some(0.0),
        field_max_v: Some(5.0),
        slowest_edge_s: Some(1.0),
        signal_frequency_hz: Some(50.0),
        ..Default::default()
    };
    let r = analyse(&net);
    let rp = 11e3 * 110e3 / 121e3;
    let tau = 1e-6 * rp;
    let f = r.filter.unwrap();
    assert!((f.time_constant_s - tau).abs() < 1e-9 * tau);
    assert!((f.corner_hz - 1.0 / (2.0 * PI * tau)).abs() < 1e-6);
    assert!((f.phase_lag_deg.unwrap() - (2.0 * PI * 50.0 * tau).atan().to_degrees()).abs() < 1e-9);
    // The slowest edge (5 V/s) reaches VT+ ≈ 2.8 V after 0.56 s ≫ τ = 10 ms: the delay is τ.
    assert!((r.upper.edge_delay_s.unwrap() - tau).abs() < 1e-6 * tau);
}

#[test]
fn filtered_white_noise_moments_match_the_closed_form_and_the_numeric_integral() {
    // White noise σ flat to B through a pole at fc: m0 = S0·fc·atan(B/fc),
    // m2 = (2π)²S0·fc²(B − fc·atan(B/fc)), S0 = σ²/B (derived in core::input_network::noise).
    let (sigma, b) = (0.01, 1e5);
    for fc in [1e2, 1e3, 1e4, 1e6] {
        let (s0, s1) = white_through_filter(sigma, b, fc);
        let s0e = sigma * (fc * (b / fc).atan() / b).sqrt();
        let s1e = 2.0 * PI * sigma * fc * ((b - fc * (b / fc).atan()) / b).sqrt();
        assert!((s0 - s0e).abs() < 1e-12 * s0e && (s1 - s1e).abs() < 1e-6 * s1e, "fc {fc}");
    }
    // A very high corner leaves the flat spectrum's moments: σ and 2πσB/√3 (Rice, from memory).
    let (s0, s1) = white_through_filter(sigma, b, 1e9);
    assert!((s0 - sigma).abs() < 1e-6 * sigma && (s1 - 2.0 * PI * sigma * b / 3f64.sqrt()).abs() < 1e-4 * s1);
    // One-pole noise at a through a filter pole at b, by partial fractions (from memory):
    // m0 = σ²·b/(a + b), m2 = (2π)²σ²·a·b²/(a + b).
    let (a, fb) = (2e3, 500.0);
    let (p0, p1) = poles_through_filter(sigma, a, 1, fb);
    let e0 = sigma * (fb / (a + fb)).sqrt();
    let e1 = 2.0 * PI * sigma * (a * fb * fb / (a + fb)).sqrt();
    assert!((p0 - e0).abs() < 1e-5 * e0, "{p0} vs {e0}");
    assert!((p1 - e1).abs() < 1e-5 * e1, "{p1} vs {e1}");
}

#[test]
fn rice_hysteresis_falls_as_the_corner_drops_as_the_moments_predict() {
    let (sigma, b, slope, target) = (0.02, 1e4, 50.0, 0.01);
    let mut last = f64::INFINITY;
    for fc in [1e5, 1e4, 1e3, 1e2] {
        let (s0, s1) = white_through_filter(sigma, b, fc);
        let h = min_hysteresis_v(target, slope, s0, s1).unwrap();
        // H = 2σ0·Q⁻¹(N·s√(2π)/(2σ1)), N = target/2 (core::signal::rice), with the closed-form
        // moments written out here.
        let s0e = sigma * (fc * (b / fc).atan() / b).sqrt();
        let s1e = 2.0 * PI * sigma * fc * ((b - fc * (b / fc).atan()) / b).sqrt();
        let arg = 0.5 * target * slope * (2.0 * PI).sqrt() / (2.0 * s1e);
        let he = 2.0 * s0e * hysteron_core::signal::rice::q_inverse(arg);
        assert!((h - he).abs() < 1e-9, "fc {fc}: {h} vs {he}");
        assert!(h < last, "fc {fc}: {h} not below {last}");
        last = h;
    }
}

/// A record: the non-inverting trigger with a white-noise sine signal and the given network.
fn noisy_record(net: Option<InputNetwork>) -> DesignRecord {
    let mut r = DesignRecord::new("filtered input", noninv(R1));
    r.signal = Some(SignalSettings {
        definition: SignalDefinition {
            sample_rate_hz: 20e3,
            duration_s: 2.0,
            seed: 7,
            components: vec![Component::Dc { level_v: 2.5 }, Component::Sine { amplitude_v: 2.0, frequency_hz: 1.0, phase_deg: -90.0 }],
            noise: vec![NoiseSource::White { rms_v: 0.05 }],
        },
        study: StudySettings { noise_bandwidth_hz: 10e3, target_false_edges_per_edge: 0.01, ..Default::default() },
        ..Default::default()
    });
    r.input_network = net;
    r
}

#[test]
fn the_signal_study_sees_the_filter_in_rices_formula_and_in_the_samples() {
    let plain = hysteron_core::evaluate::evaluate(&noisy_record(None)).signal.unwrap();
    let mut last = plain.rice.unwrap().min_hysteresis_v;
    for c_f in [1e-7, 1e-6] {
        let net = InputNetwork { series_ohm: Some(1e3), filter: Some(RcFilter { r_ohm: 1e3, c_f }), ..Default::default() };
        let e = hysteron_core::evaluate::evaluate(&noisy_record(Some(net.clone())));
        let report = e.input_network.unwrap();
        let s = e.signal.unwrap();
        let rice = s.rice.unwrap();
        let fc = report.filter.unwrap().corner_hz;
        let (s0, s1) = white_through_filter(0.05, 10e3, fc);
        assert!((rice.sigma0_v - s0).abs() < 1e-12 && (rice.sigma1_v_per_s - s1).abs() < 1e-9 * s1);
        assert!(rice.min_hysteresis_v < last, "fc {fc}: {} not below {last}", rice.min_hysteresis_v);
        last = rice.min_hysteresis_v;
        // The samples pass the same filter: the measured noise RMS (white at 20 kS/s, flat to
        // 10 kHz) matches σ0 through the pole (corner ≪ 10 kHz, where the sampled white noise's
        // spectrum is flat). Checked at the 800 Hz corner only: there τ = 0.2 ms gives some
        // 10 000 correlation times in the 2 s record (spread about 1 %); at 80 Hz seeds 1–7 gave
        // −2 % … +21 %, too few correlation times for a sharp check.
        if c_f == 1e-7 {
            let measured = s.noise.unwrap().measured_rms_v;
            let predicted = white_through_filter(0.05, 10e3, fc).0;
            assert!((measured / predicted - 1.0).abs() < 0.08, "fc {fc}: measured {measured} vs {predicted}");
        }
    }
}

// ---------------------------------------------------------------------------------------------
// ngspice on the exported deck.
// ---------------------------------------------------------------------------------------------

/// Runs a transient of `deck` in ngspice, returning (t, v(out), v(field)) rows, or `None` with the
/// reason printed when ngspice cannot be run.
fn ngspice_tran(deck: &str, stop_s: f64, step_s: f64) -> Option<Vec<(f64, f64, f64)>> {
    let rows = ngspice::table(deck, &format!("tran {step_s} {stop_s} 0 {step_s}"), "v(out) v(field)")?;
    Some(rows.iter().filter(|r| r.len() >= 3).map(|r| (r[0], r[1], r[2])).collect())
}

/// Exports `net` in front of the non-inverting trigger, runs the deck's rising ramp in ngspice and
/// returns (measured delay, Hysteron's delay, ngspice's trip at the field, Hysteron's field VT+),
/// or `None` when ngspice cannot be run. The delay is measured from the moment the unfiltered
/// ramp passes Hysteron's field VT+ to the output's mid-supply crossing.
fn spice_trip(mut net: InputNetwork) -> Option<(f64, f64, f64, f64)> {
    let mut r = DesignRecord::new("filtered", noninv(R1));
    r.input_network = Some(net.clone());
    let deck = hysteron_core::overview::spice(&r).unwrap();
    assert!(deck.contains(" field "), "{deck}");
    // The deck's ramp: PWL(0 lo 1 hi 2 lo); give the network the same slowest edge.
    let pwl = deck.lines().find(|l| l.starts_with("VIN")).unwrap();
    let nums: Vec<f64> = pwl.split("PWL(").nth(1).unwrap().trim_end_matches(')').split_whitespace().filter_map(|x| x.parse().ok()).collect();
    let (lo, hi) = (nums[1], nums[3]);
    net.field_min_v = Some(lo);
    net.field_max_v = Some(hi);
    net.slowest_edge_s = Some(1.0);
    let report = analyse_network(&r.circuit, &net, &r.checks, &r.parts).unwrap();
    let delay = report.upper.edge_delay_s.unwrap();
    let vt = report.field.vt_upper_v;
    let rows = ngspice_tran(&deck, 1.0, 1e-4)?;
    let t_out = rows
        .windows(2)
        .find_map(|w| (w[0].1 < 2.5 && w[1].1 >= 2.5).then(|| w[0].0 + (2.5 - w[0].1) / (w[1].1 - w[0].1) * (w[1].0 - w[0].0)))
        .expect("the output switches on the rising ramp");
    let slope = hi - lo; // V/s
    let t_ramp = (vt - lo) / slope; // when the unfiltered field voltage reaches VT+
    let measured = t_out - t_ramp;
    // The field voltage the filtered source had reached at the switch: ramp minus slope·delay.
    let trip = lo + slope * (t_out - delay);
    println!("ngspice: output switches {measured:.6} s after the ramp passes VT+ {vt:.4} V; Hysteron's delay {delay:.6} s; trip {trip:.4} V");
    Some((measured, delay, trip, vt))
}

#[test]
fn ngspice_transient_of_the_exported_deck_gives_the_filter_delay() {
    if std::process::Command::new("ngspice").arg("--version").output().is_err() {
        println!("skipped: ngspice is not installed");
        return;
    }
    // Design 1: R1 10k, R2 100k, reference 2.5 V, ideal 5 V device; network: 10k series, rail
    // clamps, 1k + 1 µF filter. τ = 1 µF·(11k‖110k) = 10 ms.
    let net = InputNetwork {
        series_ohm: Some(10e3),
        clamp: Clamp::RailDiodes { forward_v: 0.3, max_current_a: 0.05 },
        filter: Some(RcFilter { r_ohm: 1e3, c_f: 1e-6 }),
        ..Default::default()
    };
    let Some((measured, delay, trip, vt)) = spice_trip(net) else { return };
    // Tolerance: 2 % of the delay plus two time steps (the switch model's transition and the
    // solver's step), stated here.
    assert!((measured - delay).abs() < 0.02 * delay + 2e-4, "ngspice delay {measured} s vs Hysteron {delay} s");
    assert!((trip - vt).abs() < 2e-3 * vt, "ngspice trip {trip} V vs Hysteron {vt} V");
    // Design 2: a field input through a 100k/20k dropper, 1k series, a 6.2 V TVS and a
    // 1k + 100 nF filter: thresholds at the field terminal six times the pin's plus the drop.
    let net = InputNetwork {
        dropper: Some(Dropper { top_ohm: 100e3, bottom_ohm: 20e3 }),
        series_ohm: Some(1e3),
        clamp: Clamp::Tvs { standoff_v: 5.0, breakdown_v: 6.2, clamping_v: 9.0, peak_current_a: 5.0 },
        filter: Some(RcFilter { r_ohm: 1e3, c_f: 100e-9 }),
        ..Default::default()
    };
    let Some((measured, delay, trip, vt)) = spice_trip(net) else { return };
    assert!((measured - delay).abs() < 0.02 * delay + 2e-4, "ngspice delay {measured} s vs Hysteron {delay} s");
    assert!((trip - vt).abs() < 2e-3 * vt, "ngspice trip {trip} V vs Hysteron {vt} V");
}

/// The sawmill demo's exported deck carries all of the circuit around the trigger at once: an
/// adjustable shunt reference (behavioural), the divider, series resistor, rail clamps and
/// filter, and the output's resistance and load. ngspice (Debian package) ramps the field
/// terminal up and down through the deck's own PWL source; the field voltage at each output edge,
/// less the filter's ramp lag (slope·τ, first-order ramp response), must match Hysteron's field
/// thresholds — which include the load's shift seen through the network's source resistance.
#[test]
fn ngspice_runs_the_sawmill_deck_with_reference_network_and_load_at_the_field_thresholds() {
    if std::process::Command::new("ngspice").arg("--version").output().is_err() {
        println!("skipped: ngspice is not installed");
        return;
    }
    let record = hysteron_core::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").expect("sawmill demo").record();
    let report = hysteron_core::input_network::from_record::record_network(&record).expect("a network").expect("it analyses");
    let tau = report.filter.expect("a filter").time_constant_s;
    let deck = hysteron_core::overview::spice(&record).expect("a deck");
    assert!(deck.contains("BU2 ") && deck.contains("DCLAMP") && deck.contains("RO out_src out") && deck.contains("C1 in 0"), "{deck}");
    let Some(rows) = ngspice_tran(&deck, 2.0, 50e-6) else { return };
    let mid = 2.5;
    let up = rows.windows(2).find(|w| w[0].1 < mid && w[1].1 >= mid).expect("a rising output edge");
    let down = rows.windows(2).find(|w| w[0].1 > mid && w[1].1 <= mid && w[0].0 > up[1].0).expect("a falling output edge");
    // The deck's ramp: its field slope from two rows of the run.
    let slope = (rows[10].2 - rows[0].2) / (rows[10].0 - rows[0].0);
    let lag = slope.abs() * tau;
    let field_up = up[1].2 - lag;
    let field_down = down[1].2 + lag;
    println!("ngspice field trips {field_up:.4} / {field_down:.4} V, Hysteron {:.4} / {:.4} V", report.field.vt_upper_v, report.field.vt_lower_v);
    // Tolerance: one output step of the run (50 µs of ramp, about 0.6 mV) plus 5 mV for the
    // switch's 1 Ω and the diode leakage at the clamp node (stated, not fitted).
    let tol = 6e-3;
    assert!((field_up - report.field.vt_upper_v).abs() < tol, "VT+ ngspice {field_up}, Hysteron {}", report.field.vt_upper_v);
    assert!((field_down - report.field.vt_lower_v).abs() < tol, "VT− ngspice {field_down}, Hysteron {}", report.field.vt_lower_v);
}
