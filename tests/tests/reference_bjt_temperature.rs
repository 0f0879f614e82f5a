//! Temperature behaviour of the emitter-coupled transistor pair (shared/DOMAIN.md §1f, §8):
//! (a) VT− falls with temperature at the rate that silicon's VBE coefficient predicts through the
//!     circuit's gain from VBE to VT−, in the hand model and in the Ebers–Moll solution;
//! (b) VT+ is set by the divider, not by a VBE: without βF's temperature law it moves only by the
//!     difference of the two transistors' VBE (a PTAT term), and βF(T) makes it rise a little;
//! (c) when ngspice is installed, SPICE's own bipolar model run on Hysteron's exported deck at
//!     250, 300 and 350 K gives the same thresholds as the Ebers–Moll solution.
//!
//! Design (the issue's reproducer): VCC 12 V, R1 = R2 = 10 k, RC1 4.7 k, RC2 2.2 k, RE 1.5 k,
//! βF 100, βR 1, IS 1e-14 A at 27 °C; XTI 3, EG 1.11 V, XTB 1.5 (SPICE defaults / textbook, from
//! memory).
//!
//! Derivation of the gain from VBE to VT− (hand analysis, DOMAIN §1f, with the two VBEs kept
//! apart): at VT− Q1 is active and Q2 just turns on, so with IE2 ≈ 0, IE1 = (VT− − VBE1)/RE and
//! VB2 = K(VCC − α·RC1·IE1) = VE + VBE2. Solving, VT− = RE(K·VCC − VBE2)/(RE + α·K·RC1) + VBE1, so
//! dVT−/dT = dVBE1/dT − g·dVBE2/dT with g = RE/(RE + α·K·RC1). With one VBE for both (the hand
//! model) this is (1 − g)·dVBE/dT = α·K·RC1/(RE + α·K·RC1)·dVBE/dT: 0.557 × (−2 mV/K) ≈ −1.1 mV/K
//! for this design with the textbook coefficient.
//! VT+: Q1 turns on when Vin = VE + VBE1 with VE = VB2 − VBE2, so VT+ = VB2 − VBE2 + VBE1; in the
//! hand model (VBE1 = VBE2) only the base-current drop RB2·IB2 carries VBE, with gain
//! (RB2/(β+1))/(RE + RB2/(β+1)) ≈ 0.04.

use hysteron_tests::ngspice;
use hysteron_core::spice::to_spice;
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt, BOLTZMANN_OVER_CHARGE_V_PER_K};
use hysteron_core::topology::{Circuit, Topology};

/// The textbook temperature coefficient of a silicon junction's VBE at constant current: "about
/// −2 mV/K" (from memory; textbooks quote −1.5 to −2.5 mV/K depending on current and VBE).
const VBE_COEFFICIENT_V_PER_K: f64 = -2e-3;
const VBE_COEFFICIENT_RANGE_V_PER_K: (f64, f64) = (-2.5e-3, -1.5e-3);

fn design(model: BjtModel, temperature_k: f64) -> EmitterCoupledSchmitt {
    let mut c = EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3) };
    c.transistor.temperature_k = temperature_k;
    c
}

/// dVT±/dT by a central difference of ±5 K around `t_k`, V/K.
fn slopes(c: &EmitterCoupledSchmitt, t_k: f64) -> (f64, f64) {
    let at = |t: f64| {
        let mut d = c.clone();
        d.transistor.temperature_k = t;
        d.thresholds().unwrap()
    };
    let (lo, hi) = (at(t_k - 5.0), at(t_k + 5.0));
    ((hi.vt_upper_v - lo.vt_upper_v) / 10.0, (hi.vt_lower_v - lo.vt_lower_v) / 10.0)
}

/// (1 − g) = α·K·RC1/(RE + α·K·RC1): the gain from a common VBE to VT−.
fn lower_gain(c: &EmitterCoupledSchmitt) -> (f64, f64) {
    let k = c.r2_ohm / (c.rc1_ohm + c.r1_ohm + c.r2_ohm);
    let alpha = c.transistor.alpha();
    let loop_ohm = alpha * k * c.rc1_ohm;
    (loop_ohm / (c.re_ohm + loop_ohm), c.re_ohm / (c.re_ohm + loop_ohm))
}

#[test]
fn the_issue_reproducer_now_falls_with_temperature() {
    // Before the temperature laws VT− rose 2.515 / 2.584 / 2.653 V at 250 / 300 / 350 K.
    for model in [BjtModel::Hand, BjtModel::EbersMoll] {
        let v: Vec<f64> = [250.0, 300.0, 350.0].iter().map(|&t| design(model, t).thresholds().unwrap().vt_lower_v).collect();
        println!("{model:?}: VT− = {:.4} / {:.4} / {:.4} V at 250 / 300 / 350 K", v[0], v[1], v[2]);
        assert!(v[0] > v[1] && v[1] > v[2], "{model:?}: {v:?}");
    }
}

#[test]
fn hand_model_vt_lower_follows_the_textbook_vbe_coefficient() {
    let c = design(BjtModel::Hand, 300.15);
    let (gain, _) = lower_gain(&c);
    let (_, d_lower) = slopes(&c, 300.15);
    let implied = d_lower / gain;
    println!(
        "hand: dVT−/dT = {:.3} mV/K, gain {gain:.3}, implied dVBE/dT = {:.3} mV/K (textbook {:.1} → {:.3} mV/K)",
        d_lower * 1e3,
        implied * 1e3,
        VBE_COEFFICIENT_V_PER_K * 1e3,
        gain * VBE_COEFFICIENT_V_PER_K * 1e3
    );
    let (lo, hi) = VBE_COEFFICIENT_RANGE_V_PER_K;
    assert!((lo..=hi).contains(&implied), "implied VBE coefficient {implied} V/K");
    // βF(T) moves α and so the gain only slightly: the VBE term is the whole story.
    let mut flat = c.clone();
    flat.transistor.beta_temperature_exponent = 0.0;
    let (_, d_flat) = slopes(&flat, 300.15);
    assert!((d_flat - d_lower).abs() < 0.05 * d_lower.abs(), "{d_flat} vs {d_lower}");
}

#[test]
fn ebers_moll_vt_lower_follows_each_junctions_coefficient() {
    // With two VBEs at different currents (Q1 ≈ 1.4 mA, Q2 at the fold only ≈ 14 µA) the
    // derivation above needs each junction's own coefficient. Textbook form of the silicon VBE
    // coefficient at constant current (from memory): dVBE/dT = (VBE − VG0 − XTI·kT/q)/T.
    let c = design(BjtModel::EbersMoll, 300.15);
    let [_, at_lower] = c.fold_points().unwrap();
    let t = 300.15;
    let vt = BOLTZMANN_OVER_CHARGE_V_PER_K * t;
    let vbe1 = at_lower.vin_v - at_lower.ve_v;
    let vbe2 = at_lower.vb2_v - at_lower.ve_v;
    let coeff = |vbe: f64| (vbe - 1.11 - 3.0 * vt) / t;
    // Q2's current at the fold is I_f ≈ VT/(α·K·RC1) (DOMAIN §1f), proportional to T: its VBE
    // gains VT/T per kelvin on top of the constant-current coefficient.
    let d_vbe2 = coeff(vbe2) + vt / t;
    let (_, g) = lower_gain(&c);
    let predicted = coeff(vbe1) - g * d_vbe2;
    let (_, d_lower) = slopes(&c, t);
    println!(
        "ebers–moll: VBE1 {vbe1:.4} V, VBE2 {vbe2:.4} V at VT−; predicted {:.3} mV/K, solved {:.3} mV/K",
        predicted * 1e3,
        d_lower * 1e3
    );
    assert!((d_lower - predicted).abs() < 0.15 * predicted.abs(), "{d_lower} vs {predicted}");
    // And each junction's coefficient is a textbook silicon one.
    let (lo, hi) = VBE_COEFFICIENT_RANGE_V_PER_K;
    assert!((lo..=hi).contains(&coeff(vbe1)) && (lo..=hi).contains(&d_vbe2), "{} {}", coeff(vbe1), d_vbe2);
}

#[test]
fn vt_upper_is_set_by_the_divider_and_moves_only_by_the_vbe_difference() {
    let t = 300.15;
    let vt = BOLTZMANN_OVER_CHARGE_V_PER_K * t;
    // Hand model, βF constant: gain from VBE to VT+ is (RB2/(β+1))/(RE + RB2/(β+1)).
    let mut hand = design(BjtModel::Hand, t);
    hand.transistor.beta_temperature_exponent = 0.0;
    let rb2 = (hand.rc1_ohm + hand.r1_ohm) * hand.r2_ohm / (hand.rc1_ohm + hand.r1_ohm + hand.r2_ohm);
    let rb = rb2 / (hand.transistor.beta_f + 1.0);
    let gain = rb / (hand.re_ohm + rb);
    let d_vbe = (0.65 - 1.11 - 3.0 * vt) / t;
    let (d_upper, _) = slopes(&hand, t);
    println!("hand, βF flat: dVT+/dT = {:.4} mV/K, predicted {:.4} mV/K", d_upper * 1e3, gain * d_vbe * 1e3);
    assert!((d_upper - gain * d_vbe).abs() < 0.05 * (gain * d_vbe).abs(), "{d_upper}");
    // Ebers–Moll, βF constant: VT+ = VB2 − VBE2 + VBE1 with IC2 ≫ IC1 at the fold, so it falls by
    // d(VBE1 − VBE2)/dT = −(k/q)·ln(IC2/IC1) (the PTAT difference of two junctions), to within the
    // small change of the base-current drop.
    let mut em = design(BjtModel::EbersMoll, t);
    em.transistor.beta_temperature_exponent = 0.0;
    let [up, _] = em.fold_points().unwrap();
    let ie_total = up.ve_v / em.re_ohm;
    let vbe1 = up.vin_v - up.ve_v;
    let vbe2 = up.vb2_v - up.ve_v;
    let ratio = ((vbe2 - vbe1) / vt).exp(); // IC2/IC1 from the junction voltages
    let predicted = -BOLTZMANN_OVER_CHARGE_V_PER_K * ratio.ln();
    let (d_upper, _) = slopes(&em, t);
    println!(
        "ebers–moll, βF flat: IE {:.3} mA, IC2/IC1 ≈ {ratio:.0}; dVT+/dT = {:.3} mV/K, predicted {:.3} mV/K",
        ie_total * 1e3,
        d_upper * 1e3,
        predicted * 1e3
    );
    assert!((d_upper - predicted).abs() < 0.3 * predicted.abs(), "{d_upper} vs {predicted}");
    // With βF(T) (XTB 1.5) the base-current drop shrinks as the gain rises: VT+ rises a little,
    // far less than one VBE coefficient.
    let (d_upper_xtb, _) = slopes(&design(BjtModel::EbersMoll, t), t);
    println!("ebers–moll, XTB 1.5: dVT+/dT = {:.3} mV/K", d_upper_xtb * 1e3);
    assert!(d_upper_xtb > d_upper && d_upper_xtb.abs() < 1e-3, "{d_upper_xtb}");
}

// ---------------------------------------------------------------------------------------------
// ngspice on the exported deck.
// ---------------------------------------------------------------------------------------------

#[test]
fn ngspice_agrees_on_the_thresholds_at_three_temperatures() {
    if !ngspice::available() {
        return;
    }
    // Tolerance: the sweep step (1 mV) plus the interpolation across the jump; SPICE's bipolar
    // model with only IS, BF, BR (and XTI, EG, XTB) set is the transport Ebers–Moll model with the
    // same temperature laws, plus GMIN (1e-12 S) across each junction.
    const TOLERANCE_V: f64 = 2e-3;
    for t_k in [250.0, 300.0, 350.0] {
        let c = design(BjtModel::EbersMoll, t_k);
        let ours = c.thresholds().unwrap();
        let (voh, vol) = c.output_levels().unwrap();
        let mid = 0.5 * (voh + vol);
        let deck = to_spice(&Topology::BjtPair(c.clone()), "bjt pair temperature check").unwrap();
        let Some(up) = ngspice::dc_sweep(&deck, 0.0, 8.0) else { return };
        let Some(down) = ngspice::dc_sweep(&deck, 8.0, 0.0) else { return };
        let vt_upper = ngspice::crossing(&up, mid).expect("rising sweep: the output never crosses its mid level");
        let vt_lower = ngspice::crossing(&down, mid).expect("falling sweep: the output never crosses its mid level");
        println!(
            "{t_k} K: ngspice VT+ {vt_upper:.4} V, VT− {vt_lower:.4} V; Hysteron {:.4} / {:.4} V",
            ours.vt_upper_v, ours.vt_lower_v
        );
        assert!((vt_upper - ours.vt_upper_v).abs() < TOLERANCE_V, "{t_k} K VT+: {vt_upper} vs {}", ours.vt_upper_v);
        assert!((vt_lower - ours.vt_lower_v).abs() < TOLERANCE_V, "{t_k} K VT−: {vt_lower} vs {}", ours.vt_lower_v);
    }
}

#[test]
fn ngspice_runs_the_suggested_transient_through_both_folds() {
    // Without junction capacitance SPICE's time step collapses at the fold ("timestep too small")
    // and the suggested `.tran 1m 2` aborts; with CJE, CJC and TF in the model it completes, and
    // the output switches where the DC thresholds say (the input ramps at about 4.5 V/s, so the
    // nanosecond-scale charge delays shift the crossings by far less than the tolerance).
    if !ngspice::available() {
        return;
    }
    let c = design(BjtModel::EbersMoll, 300.15);
    let ours = c.thresholds().unwrap();
    let (voh, vol) = c.output_levels().unwrap();
    let mid = 0.5 * (voh + vol);
    let deck = to_spice(&Topology::BjtPair(c), "bjt pair transient check").unwrap();
    let (log, dir) = ngspice::run(&deck, "tran 1m 2\nwrdata {dir}/tran.txt v(out) v(in)").expect("ngspice runs");
    assert!(!log.contains("aborted"), "{log}");
    // wrdata writes "t v(out) t v(in)" per row.
    let rows: Vec<[f64; 4]> = std::fs::read_to_string(dir.join("tran.txt"))
        .unwrap()
        .lines()
        .filter_map(|l| {
            let v: Vec<f64> = l.split_whitespace().filter_map(|x| x.parse().ok()).collect();
            (v.len() >= 4).then(|| [v[0], v[1], v[2], v[3]])
        })
        .collect();
    std::fs::remove_dir_all(&dir).ok();
    assert!(rows.last().is_some_and(|r| r[0] >= 2.0 - 1e-9), "the run stopped early");
    let crossings: Vec<f64> =
        rows.windows(2).filter(|w| (w[0][1] - mid) * (w[1][1] - mid) < 0.0).map(|w| w[1][3]).collect();
    println!("transient: output crosses its mid level at Vin = {crossings:?}; DC VT+ {:.4}, VT− {:.4}", ours.vt_upper_v, ours.vt_lower_v);
    assert_eq!(crossings.len(), 2, "{crossings:?}");
    assert!((crossings[0] - ours.vt_upper_v).abs() < 0.01 && (crossings[1] - ours.vt_lower_v).abs() < 0.01, "{crossings:?}");
}
