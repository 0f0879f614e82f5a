//! Reference checks for the reference as a part: a zener with its bias resistor and an adjustable
//! shunt reference with its programming resistors, on the inverting input of a non-inverting
//! Schmitt trigger (and the plain comparator), against:
//! (a) closed forms: the piecewise-linear zener (V = Vz0 + rz·Iz, Vz0 = Vz − Izt·rz; Sedra & Smith,
//!     *Microelectronic Circuits*, zener-diode section, from memory) through the non-inverting
//!     threshold equation VT+ = (N + VOS + h/2)(1 + R1s/R2) − (R1s/R2)·VOL + IB+·R1s (DOMAIN §1b),
//!     and the shunt reference's programming equation Vka = Vref·(1 + R1/R2) + Iref·R1 with the
//!     cathode impedance Zka·(1 + R1/R2) (every adjustable shunt reference datasheet, from memory);
//! (b) an independent nodal solve (nalgebra) of the reference node with the input bias current,
//!     the regulating element written as its own equation (never the module's Thevenin reduction);
//! (c) the minimum-current warning at the lowest supply, and the part list line;
//! (d) ngspice (Debian's `/usr/bin/ngspice`) on the exported deck: the operating point of the
//!     reference node and the switching points of a DC sweep agree with Hysteron's.
//!
//! Datasheet-class values are typical figures from memory: small-signal zener 5 % tolerance and
//! tens of ohms slope resistance at 5 mA; shunt reference Vref 2.495 V, Iref 2 µA, Zka 0.2 Ω,
//! minimum cathode current 1 mA, Vref specified at 10 mA.

use hysteron_tests::ngspice;
use hysteron_core::analysis::{CheckSettings, OutputState, WarningCode};
use hysteron_core::device::{Comparator, Rail};
use hysteron_core::record::DesignRecord;
use hysteron_core::spice::to_spice;
use hysteron_core::topology::noninverting::NonInvertingSchmitt;
use hysteron_core::topology::reference::{Reference, ShuntReference, ZenerReference};
use hysteron_core::topology::{analyse, Circuit, ParameterKind, Topology};
use nalgebra::{Matrix2, Matrix3, Vector2, Vector3};

/// A comparator with the non-idealities that move a reference node: bias currents, offset,
/// built-in hysteresis.
fn device(supply_v: f64) -> Comparator {
    Comparator {
        supply_v,
        output_high_drop_v: 0.1,
        output_low_rise_v: 0.05,
        offset_v: 0.002,
        bias_plus_a: 50e-9,
        bias_minus_a: 200e-9,
        builtin_hysteresis_v: 0.004,
        ..Comparator::default()
    }
}

fn zener(slope_ohm: f64) -> ZenerReference {
    ZenerReference {
        bias_ohm: 1.5e3,
        rail: Rail::Supply,
        vz_v: 5.1,
        test_current_a: 5e-3,
        slope_ohm,
        tolerance_pct: 5.0,
        tempco_v_per_k: 2e-3,
        min_current_a: 1e-3,
    }
}

fn shunt() -> ShuntReference {
    ShuntReference {
        bias_ohm: 1e3,
        rail: Rail::Supply,
        upper_ohm: 10e3,
        lower_ohm: 10e3,
        vref_v: 2.495,
        ref_current_a: 2e-6,
        impedance_ohm: 0.2,
        test_current_a: 10e-3,
        tolerance_pct: 0.5,
        tempco_v_per_k: 5e-5,
        min_current_a: 1e-3,
    }
}

fn schmitt(reference: Reference, supply_v: f64) -> NonInvertingSchmitt {
    NonInvertingSchmitt { r1_ohm: 10e3, r2_ohm: 100e3, reference, device: device(supply_v) }
}

/// The non-inverting thresholds from DOMAIN §1b for an inverting-input node at `n_v`.
fn closed_form_thresholds(c: &NonInvertingSchmitt, n_v: f64) -> (f64, f64) {
    let d = &c.device;
    let m = c.r1_ohm / c.r2_ohm;
    let (voh, vol) = (d.supply_v - d.output_high_drop_v, d.negative_rail_v + d.output_low_rise_v);
    let up = (n_v + d.offset_v + d.builtin_hysteresis_v / 2.0) * (1.0 + m) - m * vol + d.bias_plus_a * c.r1_ohm;
    let lo = (n_v + d.offset_v - d.builtin_hysteresis_v / 2.0) * (1.0 + m) - m * voh + d.bias_plus_a * c.r1_ohm;
    (up, lo)
}

/// The zener node from its own two equations, solved by nalgebra: KCL at the node
/// (VA − V)/Rb = Iz + IB and the zener V = Vz0 + rz·Iz. Unknowns (V, Iz).
fn zener_nodal(z: &ZenerReference, va: f64, ib: f64) -> (f64, f64) {
    let vz0 = z.vz_v - z.test_current_a * z.slope_ohm;
    let a = Matrix2::new(1.0 / z.bias_ohm, 1.0, 1.0, -z.slope_ohm);
    let b = Vector2::new(va / z.bias_ohm - ib, vz0);
    let x = a.lu().solve(&b).expect("regular");
    (x[0], x[1])
}

/// The shunt reference's cathode node K and reference pin R from three equations, solved by
/// nalgebra: KCL at K (VA − VK)/Rb = (VK − VR)/R1 + Ik + IB; KCL at R (VK − VR)/R1 = VR/R2 + Iref;
/// the device holds VR = Vref + Zka·(Ik − Ik,test). Unknowns (VK, VR, Ik).
fn shunt_nodal(s: &ShuntReference, va: f64, ib: f64) -> (f64, f64, f64) {
    let (g1, gb, g2) = (1.0 / s.upper_ohm, 1.0 / s.bias_ohm, 1.0 / s.lower_ohm);
    let a = Matrix3::new(gb + g1, -g1, 1.0, g1, -g1 - g2, 0.0, 0.0, 1.0, -s.impedance_ohm);
    let b = Vector3::new(va * gb - ib, s.ref_current_a, s.vref_v - s.impedance_ohm * s.test_current_a);
    let x = a.lu().solve(&b).expect("regular");
    (x[0], x[1], x[2])
}

#[test]
fn zener_slope_resistance_moves_the_thresholds_by_the_computed_amount() {
    let supply = 12.0;
    let ib = device(supply).bias_minus_a;
    let mut last: Option<(f64, f64, f64)> = None;
    for rz in [5.0, 30.0, 100.0] {
        let z = zener(rz);
        let c = schmitt(Reference::Zener(z), supply);
        let t = c.thresholds().unwrap();
        // Thevenin of the zener node: Vth = (Vz0·Rb + VA·rz)/(Rb + rz), Rth = Rb‖rz; N = Vth − IB·Rth.
        let vz0 = z.vz_v - z.test_current_a * rz;
        let vth = (vz0 * z.bias_ohm + supply * rz) / (z.bias_ohm + rz);
        let rth = z.bias_ohm * rz / (z.bias_ohm + rz);
        let n = vth - ib * rth;
        let (up, lo) = closed_form_thresholds(&c, n);
        assert!((t.vt_upper_v - up).abs() < 1e-12, "rz {rz}: VT+ {} vs {up}", t.vt_upper_v);
        assert!((t.vt_lower_v - lo).abs() < 1e-12, "rz {rz}: VT− {} vs {lo}", t.vt_lower_v);
        if let Some((rz0, up0, n0)) = last {
            // The shift between two slope resistances is (1 + R1/R2) times the node's shift.
            let want = (1.0 + c.r1_ohm / c.r2_ohm) * (n - n0);
            assert!(((t.vt_upper_v - up0) - want).abs() < 1e-12, "rz {rz0} → {rz}");
            assert!(want.abs() > 1e-3, "the slope resistance must matter here: {want}");
        }
        last = Some((rz, t.vt_upper_v, n));
    }
}

#[test]
fn zener_node_agrees_with_a_nodal_solve_with_input_bias_current() {
    for (supply, rz, ib) in [(12.0, 30.0, 200e-9), (9.0, 80.0, -1e-6), (24.0, 10.0, 5e-6), (6.5, 120.0, 0.0)] {
        let z = zener(rz);
        let r = Reference::Zener(z);
        let (v, iz) = zener_nodal(&z, supply, ib);
        assert!(iz > 0.0, "the zener conducts in these cases");
        assert!((r.node_v(supply, 0.0, ib) - v).abs() < 1e-12 * supply, "{supply} V: {} vs {v}", r.node_v(supply, 0.0, ib));
        assert!((r.regulator_current_a(supply, 0.0, ib).unwrap() - iz).abs() < 1e-12);
    }
    // The operating point reports the same node on the inverting input.
    let c = schmitt(Reference::Zener(zener(30.0)), 12.0);
    let op = c.operating_point(3.0, OutputState::Low).unwrap();
    let (v, _) = zener_nodal(&zener(30.0), 12.0, c.device.bias_minus_a);
    let n = op.device_inputs.iter().find(|n| n.name.contains("inverting input (reference)")).unwrap();
    assert!((n.volts - v).abs() < 1e-12);
    // Below its voltage the zener does not conduct: the node is VA − IB·Rb.
    let r = Reference::Zener(zener(30.0));
    assert!((r.node_v(4.0, 0.0, 1e-6) - (4.0 - 1e-6 * 1.5e3)).abs() < 1e-12);
}

#[test]
fn shunt_reference_cathode_follows_the_programming_equation() {
    let s = shunt();
    // Datasheet programming equation (from memory): Vka = Vref·(1 + R1/R2) + Iref·R1.
    let vka = 2.495 * (1.0 + 10e3 / 10e3) + 2e-6 * 10e3;
    assert!((s.cathode_v() - vka).abs() < 1e-12);
    assert!((s.cathode_impedance_ohm() - 0.2 * 2.0).abs() < 1e-15);
    // With the bias resistor chosen so the device carries exactly its test current, the node
    // sits at Vka: Rb = (VA − Vka)/(Ik,test + Vref/R2 + Iref).
    let va = 12.0;
    let rb = (va - vka) / (10e-3 + 2.495 / 10e3 + 2e-6);
    let r = Reference::Shunt(ShuntReference { bias_ohm: rb, ..s });
    assert!((r.node_v(va, 0.0, 0.0) - vka).abs() < 1e-12, "{}", r.node_v(va, 0.0, 0.0));
    assert!((r.regulator_current_a(va, 0.0, 0.0).unwrap() - 10e-3).abs() < 1e-12);
    // At another current the cathode moves by Zka·(1 + R1/R2) per ampere.
    let r2 = Reference::Shunt(ShuntReference { bias_ohm: rb * 2.0, ..s });
    let dik = r2.regulator_current_a(va, 0.0, 0.0).unwrap() - 10e-3;
    assert!((r2.node_v(va, 0.0, 0.0) - (vka + 0.4 * dik)).abs() < 1e-12);
}

#[test]
fn shunt_node_agrees_with_a_nodal_solve_with_input_bias_current() {
    for (supply, r1, r2, ib) in [(12.0, 10e3, 10e3, 200e-9), (24.0, 33e3, 4.7e3, 5e-6), (5.0, 1e3, 10e3, -1e-6)] {
        let s = ShuntReference { upper_ohm: r1, lower_ohm: r2, ..shunt() };
        let r = Reference::Shunt(s);
        let (vk, vr, ik) = shunt_nodal(&s, supply, ib);
        assert!(ik > 0.0, "regulating in these cases: Ik {ik}");
        assert!((r.node_v(supply, 0.0, ib) - vk).abs() < 1e-12 * supply, "{} vs {vk}", r.node_v(supply, 0.0, ib));
        assert!((r.regulator_current_a(supply, 0.0, ib).unwrap() - ik).abs() < 1e-12);
        assert!((vr - s.vref_v).abs() < 0.01, "reference pin near Vref: {vr}");
    }
}

#[test]
fn minimum_current_warnings_fire_below_the_minimum_at_the_lowest_supply() {
    let warned = |c: &NonInvertingSchmitt, supply_min: Option<f64>| {
        let checks = CheckSettings { supply_min_v: supply_min, ..CheckSettings::default() };
        analyse(c, &checks).unwrap().warnings.iter().any(|w| w.code == WarningCode::ReferenceCurrentLow)
    };
    // Zener 5.1 V on 1.5 kΩ: Iz = (VA − Vz0 − IB·Rb)/(Rb + rz) with Vz0 = 4.95 V; at 12 V about
    // 4.6 mA, at 6.4 V about 0.95 mA (below the 1 mA minimum).
    let c = schmitt(Reference::Zener(zener(30.0)), 12.0);
    assert!(!warned(&c, None));
    assert!(!warned(&c, Some(10.0)));
    let (_, iz_low) = zener_nodal(&zener(30.0), 6.4, c.device.bias_minus_a);
    assert!(iz_low < 1e-3 && iz_low > 0.0, "{iz_low}");
    assert!(warned(&c, Some(6.4)));
    // Shunt reference at 5.01 V on 1 kΩ: at 12 V about 6.7 mA; at 6.5 V about 1.2 mA; at 6.2 V below 1 mA.
    let c = schmitt(Reference::Shunt(shunt()), 12.0);
    assert!(!warned(&c, None));
    let (_, _, ik) = shunt_nodal(&shunt(), 6.5, c.device.bias_minus_a);
    assert!(ik > 1e-3);
    assert!(!warned(&c, Some(6.5)));
    let (_, _, ik) = shunt_nodal(&shunt(), 6.2, c.device.bias_minus_a);
    assert!(ik < 1e-3);
    assert!(warned(&c, Some(6.2)));
}

#[test]
fn reference_parts_join_the_parameters_tolerance_and_part_list() {
    let c = schmitt(Reference::Zener(zener(30.0)), 12.0);
    let p = c.parameters();
    let bias = p.iter().find(|p| p.id == "ref_bias_ohm").unwrap();
    assert_eq!((bias.kind, bias.designator.as_deref(), bias.held_in_search), (ParameterKind::Resistor, Some("R3"), true));
    let vz = p.iter().find(|p| p.id == "vz_v").unwrap();
    assert_eq!(vz.limits, Some([5.1 * 0.95, 5.1 * 1.05]));
    // Round trip through the parameter values.
    let values: Vec<f64> = p.iter().map(|p| p.value).collect();
    assert_eq!(c.with_parameters(&values).unwrap(), c);
    // Vz at its upper limit moves VT+ by (1 + R1/R2)·ΔN with ΔN = ΔVz·Rb/(Rb + rz).
    let mut v2 = values.clone();
    let i = p.iter().position(|p| p.id == "vz_v").unwrap();
    v2[i] = 5.1 * 1.05;
    let up = c.with_parameters(&v2).unwrap().thresholds().unwrap().vt_upper_v;
    let want = 1.1 * (5.1 * 0.05) * 1.5e3 / (1.5e3 + 30.0);
    assert!((up - c.thresholds().unwrap().vt_upper_v - want).abs() < 1e-12);

    // The part list and the CLI result carry the zener line and the warning.
    let record = DesignRecord::from_value(serde_json::json!({
        "schema_version": 1,
        "name": "zener reference",
        "circuit": serde_json::to_value(Topology::NonInverting(c.clone())).unwrap(),
        "checks": { "supply_min_v": 6.4, "supply_max_v": 13.0 },
    }))
    .unwrap();
    let e = hysteron_core::evaluate::evaluate(&record);
    let bom = e.bom.expect("part list");
    let d1 = bom.regulators.iter().find(|r| r.designator == "D1").expect("zener line");
    assert!(d1.description.contains("zener") && d1.description.contains("5.1 V"), "{}", d1.description);
    // Largest dissipation at 13 V: Iz·V from the nodal solve with no input current.
    let (v, iz) = zener_nodal(&zener(30.0), 13.0, 0.0);
    assert!((d1.max_power_w - v * iz).abs() < 1e-12);
    assert_eq!(d1.suggested_rating_w, Some(0.2), "2 × {} W rounds up to 0.2 W", d1.max_power_w);
    assert!(bom.to_csv().contains("D1,zener diode 5.1 V"));
    let warnings = &e.analysis.expect("analysis").warnings;
    assert!(warnings.iter().any(|w| w.code == WarningCode::ReferenceCurrentLow), "{warnings:?}");
}

#[test]
fn the_search_holds_the_reference_parts_and_synthesis_programs_the_shunt() {
    use hysteron_core::analysis::{ImpedanceChoice, Targets};
    let c = schmitt(Reference::Shunt(shunt()), 12.0);
    let t = c.thresholds().unwrap();
    let targets = Targets {
        vt_upper_v: t.vt_upper_v + 0.3,
        vt_lower_v: t.vt_lower_v + 0.2,
        impedance: ImpedanceChoice::AnchorOhm(100e3),
    };
    let s = hysteron_core::topology::synthesise(&c, &targets).unwrap();
    let got = s.thresholds().unwrap();
    assert!((got.vt_upper_v - targets.vt_upper_v).abs() < 1e-9 && (got.vt_lower_v - targets.vt_lower_v).abs() < 1e-9);
    let Reference::Shunt(after) = s.reference else { panic!("kind kept") };
    assert_eq!((after.bias_ohm, after.lower_ohm), (shunt().bias_ohm, shunt().lower_ohm));
    assert!(after.upper_ohm > shunt().upper_ohm, "a higher reference needs a larger R1");
    // A zener cannot be moved by synthesis: a typed error that says what to do.
    let z = schmitt(Reference::Zener(zener(30.0)), 12.0);
    let e = hysteron_core::topology::synthesise(&z, &targets).unwrap_err().to_string();
    assert!(e.contains("zener"), "{e}");
}

#[test]
fn records_name_the_kind_and_the_page_can_switch_it() {
    let text = r#"{"schema_version":1,"name":"z","circuit":{"topology":"non_inverting","r1_ohm":"10k","r2_ohm":"100k",
        "reference":{"kind":"zener","bias_ohm":"1k5","vz_v":5.1,"slope_ohm":30,"test_current_a":"5m"},
        "device":{"supply_v":12}}}"#;
    let r = DesignRecord::from_json(text).unwrap();
    assert_eq!(r.circuit.reference_kind(), Some("zener"));
    let shunted = r.circuit.with_reference_kind("shunt").unwrap();
    assert_eq!(shunted.reference_kind(), Some("shunt"));
    assert!(shunted.validate().is_ok());
    // The converted shunt reference starts near the zener's node voltage.
    let (zr, d) = r.circuit.reference().unwrap();
    let (sr, _) = shunted.reference().unwrap();
    let (vz, vs) = (zr.node_v(d.supply_v, 0.0, 0.0), sr.node_v(d.supply_v, 0.0, 0.0));
    assert!((vz - vs).abs() < 0.1, "{vz} vs {vs}");
    assert!(r.circuit.with_reference_kind("nonsense").is_none());
}

// ---------------------------------------------------------------------------------------------
// ngspice on the exported deck.
// ---------------------------------------------------------------------------------------------

#[test]
fn ngspice_operating_point_and_switching_points_agree_with_the_exported_deck() {
    for (tag, reference) in [("zener", Reference::Zener(zener(30.0))), ("shunt", Reference::Shunt(shunt()))] {
        let c = schmitt(reference, 12.0);
        let topology = Topology::NonInverting(c.clone());
        let deck = to_spice(&topology, &format!("reference {tag}")).unwrap();
        assert!(deck.contains(if tag == "zener" { "BD1 n 0 I=max(" } else { "BU2 n 0 I=max(" }), "{deck}");
        let Some((op, dir)) = ngspice::run(&deck, "op\nprint v(n)") else { return };
        std::fs::remove_dir_all(&dir).ok();
        // The deck's node includes the input bias current IBN drawn from it, as Hysteron's does.
        let want = reference.node_v(12.0, 0.0, c.device.bias_minus_a);
        let got = ngspice::printed(&op, "v(n)");
        println!("{tag}: reference node ngspice {got:.6} V, Hysteron {want:.6} V");
        // Tolerance: ngspice's default RELTOL 1e-3 and VNTOL 1 µV bound its node voltages.
        assert!((got - want).abs() < 1e-3 * want.abs() + 1e-6, "{tag}: ngspice {got} V, Hysteron {want} V");
        let t = c.thresholds().unwrap();
        let (lo, hi) = hysteron_core::spice::ramp_span_v(t.vt_upper_v, t.vt_lower_v);
        let mid = 0.5 * (c.device.supply_v - c.device.output_high_drop_v + c.device.output_low_rise_v);
        let Some(up) = ngspice::dc_sweep(&deck, lo, hi) else { return };
        let Some(down) = ngspice::dc_sweep(&deck, hi, lo) else { return };
        let (vt_up, vt_lo) = (ngspice::crossing(&up, mid).expect("rising switch"), ngspice::crossing(&down, mid).expect("falling switch"));
        println!("{tag}: VT+ ngspice {vt_up:.4} V / Hysteron {:.4} V; VT− ngspice {vt_lo:.4} V / Hysteron {:.4} V", t.vt_upper_v, t.vt_lower_v);
        // Tolerance: the sweep step is 1 mV; the switching point falls within one step.
        assert!((vt_up - t.vt_upper_v).abs() < 2e-3, "{tag}: VT+ ngspice {vt_up} vs {}", t.vt_upper_v);
        assert!((vt_lo - t.vt_lower_v).abs() < 2e-3, "{tag}: VT− ngspice {vt_lo} vs {}", t.vt_lower_v);
    }
}

#[test]
fn old_records_keep_their_divider_parameters() {
    // A divider reference still lists Ra and Rb, searchable, with no regulator line.
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/fixtures/records/non_inverting.json")).unwrap();
    let r = DesignRecord::from_json(&text).unwrap();
    let p = r.circuit.parameters();
    assert!(p.iter().filter(|p| p.kind == ParameterKind::Resistor).all(|p| !p.held_in_search));
    assert_eq!(r.circuit.reference_kind(), Some("divider"));
    let e = hysteron_core::evaluate::evaluate(&r);
    assert!(e.bom.unwrap().regulators.is_empty());
}

#[test]
fn worst_case_and_temperature_see_the_zener_tolerance_and_its_coefficient() {
    use hysteron_core::tolerance::{settings::ToleranceSettings, temperature::temperature_sweep, worst_case::worst_case};
    // Ideal device and exact resistors: only the zener moves VT+, by (1 + R1/R2)·ΔVz·Rb/(Rb + rz)
    // (the node's share of a change of the zener's source; superposition, as above).
    let c = NonInvertingSchmitt { device: Comparator::ideal(12.0), ..schmitt(Reference::Zener(zener(30.0)), 12.0) };
    let gain = (1.0 + c.r1_ohm / c.r2_ohm) * 1.5e3 / (1.5e3 + 30.0);
    let exact = ToleranceSettings {
        resistor_tolerance_pct: 0.0,
        supply_tolerance_pct: 0.0,
        output_level_tolerance_v: 0.0,
        offset_v: Some(0.0),
        resistor_tempco_ppm_per_k: 0.0,
        temperature_min_c: 25.0,
        temperature_max_c: 25.0,
        ..ToleranceSettings::default()
    };
    let nominal = c.thresholds().unwrap().vt_upper_v;
    let w = worst_case(&c, &exact).unwrap();
    let half = gain * 0.05 * 5.1;
    assert!((w.vt_upper.max.value_v - (nominal + half)).abs() < 1e-9, "{} vs {}", w.vt_upper.max.value_v, nominal + half);
    assert!((w.vt_upper.min.value_v - (nominal - half)).abs() < 1e-9);
    // Over −40 … 85 °C the zener's +2 mV/K moves VT+ by gain × 2 mV/K.
    let hot = ToleranceSettings { temperature_min_c: -40.0, temperature_max_c: 85.0, ..exact };
    let sweep = temperature_sweep(&c, &hot).unwrap();
    let drift = sweep.vt_upper_drift_v_per_k.unwrap();
    assert!((drift - gain * 2e-3).abs() < 1e-9, "{drift} vs {}", gain * 2e-3);
}
