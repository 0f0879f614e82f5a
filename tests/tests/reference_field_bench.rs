//! The bench procedure at the field terminal (`core::bench::bench_procedure_through`, reached
//! through `core::overview::bench`): its field-terminal windows against an independent brute
//! force over every tolerance corner of the trigger's and the network's resistors.
//!
//! Reference: a non-inverting Schmitt trigger (input resistor R1 to node P, feedback R2 from the
//! output, comparator against Vr) switches when P = Vr, with P = (Vs·R2 + Vout·R1')/(R1' + R2)
//! for a source Vs behind R1' (the standard non-inverting Schmitt equations, e.g. Sedra & Smith,
//! bistable circuits; from memory). In front sits a dropper, a Thevenin source g·V behind
//! R_top‖R_bottom (Thevenin's theorem, from memory), plus the series and filter resistors, so
//! R1' = R1 + R_top‖R_bottom + R_series + R_f and the field thresholds are
//!   g·VT+ = Vr·(1 + R1'/R2) − VOL·R1'/R2,   g·VT− = Vr·(1 + R1'/R2) − VOH·R1'/R2,
//! with Vr = Vcc·Rb/(Ra + Rb) from the reference divider and, for an ideal rail-to-rail
//! comparator, VOH = Vcc and VOL = 0. Nothing of the project's nodal solution or worst case enters
//! the reference: it enumerates all 2^8 (bench) or 2^9 (field, with the supply) corners.
//!
//! Bands (the project's tolerance settings, stated in the test): resistors 1 %; at the bench
//! (25 °C, supply exactly as set) nothing else; in the field window each resistor also drifts
//! 100 ppm/K over the largest excursion from 25 °C in 0…70 °C (45 K: 0.45 %), and the supply
//! moves ±5 %.

use hysteron_core::bench::{ReadingPoint, Threshold};
use hysteron_core::overview;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::{analyse, Circuit};

const RECORD: &str = r#"{
  "schema_version": 1,
  "name": "Field input through a dropper",
  "circuit": {
    "topology": "non_inverting",
    "r1_ohm": 10000,
    "r2_ohm": 100000,
    "reference": { "kind": "divider", "ra_ohm": 10000, "rail_a": "supply", "rb_ohm": 10000, "rail_b": "ground" },
    "device": {
      "supply_v": 5.0, "negative_rail_v": 0.0, "output_high_drop_v": 0.0, "output_low_rise_v": 0.0,
      "offset_v": 0.0, "bias_plus_a": 0.0, "bias_minus_a": 0.0, "source_resistance_ohm": 0
    }
  },
  "checks": { "input_min_v": 0.0, "input_max_v": 5.0, "supply_min_v": 4.75, "supply_max_v": 5.25 },
  "tolerance": { "offset_v": 0.0, "output_level_tolerance_v": 0.0 },
  "input_network": {
    "dropper": { "top_ohm": 47000, "bottom_ohm": 12000 },
    "series_ohm": 4700,
    "clamp": { "kind": "rail_diodes", "forward_v": 0.3, "max_current_a": 0.2 },
    "filter": { "r_ohm": 10000, "c_f": 1e-8 },
    "field_max_v": 26.4,
    "field_min_v": 0.0
  }
}"#;

/// (VT+, VT−) at the field terminal by the closed form, for resistor values
/// [R1, R2, Ra, Rb, R_top, R_bottom, R_series, R_f] and supply `vcc`.
fn closed_form(r: &[f64; 8], vcc: f64) -> (f64, f64) {
    let [r1, r2, ra, rb, top, bottom, series, rf] = *r;
    let g = bottom / (top + bottom);
    let r1s = r1 + top * bottom / (top + bottom) + series + rf;
    let vr = vcc * rb / (ra + rb);
    let k = r1s / r2;
    ((vr * (1.0 + k)) / g, (vr * (1.0 + k) - vcc * k) / g)
}

/// Lowest and highest (VT+, VT−) over every corner: each resistor at (1 ± `rel`), the supply at
/// each of `supplies`.
fn brute_force(nominal: &[f64; 8], rel: f64, supplies: &[f64]) -> ((f64, f64), (f64, f64)) {
    let (mut up, mut down) = ((f64::INFINITY, f64::NEG_INFINITY), (f64::INFINITY, f64::NEG_INFINITY));
    for &vcc in supplies {
        for mask in 0u32..256 {
            let mut r = *nominal;
            for (i, x) in r.iter_mut().enumerate() {
                *x *= if mask >> i & 1 == 1 { 1.0 + rel } else { 1.0 - rel };
            }
            let (u, d) = closed_form(&r, vcc);
            up = (up.0.min(u), up.1.max(u));
            down = (down.0.min(d), down.1.max(d));
        }
    }
    (up, down)
}

const NOMINAL: [f64; 8] = [10e3, 100e3, 10e3, 10e3, 47e3, 12e3, 4.7e3, 10e3];

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * b.abs().max(1.0)
}

#[test]
fn field_terminal_windows_equal_the_brute_force_over_every_corner() {
    let record = DesignRecord::from_json(RECORD).unwrap();
    let a = analyse(&record.circuit, &record.checks).unwrap();
    let w = overview::windows(&record, &a, None).unwrap();
    let p = overview::bench(&record, &a, Some(&w));
    assert_eq!(p.input_name, "field terminal");
    let field: Vec<_> = p.readings.iter().filter(|r| r.at == ReadingPoint::FieldTerminal).collect();
    assert_eq!(field.len(), 6, "nominal supply and both ends of 4.75–5.25 V: {:?}", p.readings);
    for r in &field {
        // The nominal reading is the closed form at nominal values and this supply.
        let (u, d) = closed_form(&NOMINAL, r.supply_v);
        let ((u_lo, u_hi), (d_lo, d_hi)) = brute_force(&NOMINAL, 0.01, &[r.supply_v]);
        let (nominal, lo, hi) = match r.threshold {
            Threshold::Upper => (u, u_lo, u_hi),
            Threshold::Lower => (d, d_lo, d_hi),
        };
        assert!(close(r.nominal_v, nominal), "{:?} at {} V: {} vs closed form {nominal}", r.threshold, r.supply_v, r.nominal_v);
        let (b_lo, b_hi) = (r.bench_min_v.unwrap(), r.bench_max_v.unwrap());
        assert!(close(b_lo, lo) && close(b_hi, hi), "{:?} at {} V: bench window {b_lo}…{b_hi}, brute force {lo}…{hi}", r.threshold, r.supply_v);
    }
    // The field window (nominal supply rows): resistors ±(1 % + 0.45 %), supply ±5 %.
    let ((u_lo, u_hi), (d_lo, d_hi)) = brute_force(&NOMINAL, 0.01 + 100e-6 * 45.0, &[4.75, 5.25]);
    for (r, (lo, hi)) in field[..2].iter().zip([(u_lo, u_hi), (d_lo, d_hi)]) {
        let (f_lo, f_hi) = (r.field_min_v.unwrap(), r.field_max_v.unwrap());
        assert!(close(f_lo, lo) && close(f_hi, hi), "{:?}: field window {f_lo}…{f_hi}, brute force {lo}…{hi}", r.threshold);
    }
    // The network widens the window beyond the pin's mapped through the nominal network alone:
    // its own tolerances count (the pin window × 1/g would be narrower).
    let pin_up = p.readings.iter().find(|r| r.at == ReadingPoint::Pin && r.threshold == Threshold::Upper).unwrap();
    let g = 12.0 / 59.0;
    let mapped = (pin_up.bench_max_v.unwrap() - pin_up.bench_min_v.unwrap()) / g;
    assert!(field[0].bench_max_v.unwrap() - field[0].bench_min_v.unwrap() > mapped);
    // The command line's result (the record's evaluation) carries the same procedure.
    let e = hysteron_core::evaluate::evaluate(&record);
    let cli = e.exports.and_then(|x| x.bench).expect("bench procedure in the result");
    assert_eq!(cli.readings, p.readings);
    assert_eq!(cli.network, p.network);
    // The text names the field terminal and prints the field windows.
    let text = p.to_text();
    assert!(text.contains("Connect the source to the field terminal"), "{text}");
    assert!(text.contains(&format!("{:.3} V … {:.3} V", field[0].bench_min_v.unwrap(), field[0].bench_max_v.unwrap())), "{text}");
}

#[test]
fn a_ramp_into_the_clamp_states_the_clamp_current_and_its_rating() {
    // A field span reaching down to 0 V cannot stop a ramp that must pass a threshold near 0 V:
    // without a dropper and with a low series resistor, the lower clamp conducts at the ramp's
    // bottom. The current is (Vin − (Vneg − Vf))/R_series (common practice for input protection).
    // Vr = 5 V·10k/110k = 0.455 V puts VT− below 0 V at the field terminal.
    let mut record = DesignRecord::from_json(&RECORD.replace("\"ra_ohm\": 10000", "\"ra_ohm\": 100000")).unwrap();
    let net = record.input_network.as_mut().unwrap();
    net.dropper = None;
    net.series_ohm = Some(1000.0);
    net.field_min_v = Some(-5.0);
    net.field_max_v = Some(5.0);
    let a = analyse(&record.circuit, &record.checks).unwrap();
    let p = overview::bench(&record, &a, None);
    let n = p.network.unwrap();
    assert!(p.ramp_low_v < -0.3, "the ramp starts below the clamp level: {}", p.ramp_low_v);
    let expected = (-0.3 - p.ramp_low_v) / 1000.0;
    assert_eq!(n.clamp_at_v, Some(p.ramp_low_v));
    assert!((n.clamp_current_a.unwrap() - expected).abs() < 1e-12, "{:?} vs {expected}", n.clamp_current_a);
    let text = p.to_text();
    assert!(text.contains("the clamp conducts") && text.contains("its rating: 200 mA") && text.contains(": limit "), "{text}");
    // Without the tolerance study the readings carry no window and say so.
    assert!(p.readings.iter().all(|r| r.bench_min_v.is_none()));
    assert!(text.contains("(run the tolerance study)"));
}

#[test]
fn designs_without_a_network_keep_their_procedure_and_stored_form() {
    for s in hysteron_core::catalog::templates().into_iter().chain(hysteron_core::catalog::demos()) {
        let r = s.record();
        if r.input_network.as_ref().is_some_and(|n| n.has_parts()) {
            continue;
        }
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let p = overview::bench(&r, &a, None);
        assert!(p.network.is_none() && p.readings.iter().all(|x| x.at == ReadingPoint::Input), "{}", s.key);
        let json = serde_json::to_value(&p).unwrap();
        assert!(json.get("network").is_none(), "{}", s.key);
        assert!(json["readings"].as_array().unwrap().iter().all(|x| x.get("at").is_none()), "{}", s.key);
        assert_eq!(p.input_name, r.circuit.input_name(), "{}", s.key);
    }
}
