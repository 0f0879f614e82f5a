//! The standard-value search is optimal: on small ranges its top-N list matches a brute-force
//! enumeration of every combination (the reference here is plain exhaustive enumeration, which
//! needs no theory), for linear topologies where the search solves one resistor from a bilinear
//! model, and for made-up non-bilinear circuits where it must fall back safely.

use hysteron_core::analysis::{
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning,
};
use hysteron_core::device::{Comparator, Rail};
use hysteron_core::error::DesignError;
use hysteron_core::eseries::ESeries;
use hysteron_core::search::{apply, search, SearchReport, SearchSettings};
use hysteron_core::topology::{
    analyse, expect_len, inverting::InvertingSchmitt, Circuit, Parameter, ParameterKind, Topology,
};
use proptest::prelude::*;

/// The objective as the search documents it: worst relative error, normalised by |target| (or
/// the target width for a 0 V target).
fn objective(t: Thresholds, target: Thresholds) -> f64 {
    let width = (target.vt_upper_v - target.vt_lower_v).abs();
    let norm = |v: f64| {
        if v != 0.0 {
            v.abs()
        } else if width > 0.0 {
            width
        } else {
            1.0
        }
    };
    let eu = (t.vt_upper_v - target.vt_upper_v) / norm(target.vt_upper_v);
    let el = (t.vt_lower_v - target.vt_lower_v) / norm(target.vt_lower_v);
    eu.abs().max(el.abs())
}

/// Every combination of series values for every resistor; the `n` smallest objectives among
/// those within the current budget (if any), ascending.
fn brute_force<C: Circuit>(c: &C, target: Thresholds, s: &SearchSettings, checks: &CheckSettings) -> Vec<f64> {
    let params = c.parameters();
    let slots: Vec<usize> = (0..params.len()).filter(|&i| params[i].kind == ParameterKind::Resistor).collect();
    let grid = s.series.values_between(s.r_min_ohm, s.r_max_ohm);
    let mut values: Vec<f64> = params.iter().map(|p| p.value).collect();
    let mut idx = vec![0usize; slots.len()];
    let mut all = Vec::new();
    'outer: loop {
        for (k, &slot) in slots.iter().enumerate() {
            values[slot] = grid[idx[k]];
        }
        if let Ok(circuit) = c.with_parameters(&values) {
            if let Ok(t) = circuit.thresholds() {
                let ok = match s.current_budget_a {
                    None => true,
                    Some(b) => analyse(&circuit, checks).is_ok_and(|a| a.quiescent_current_a <= b * (1.0 + 1e-12)),
                };
                if ok && t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite() {
                    all.push(objective(t, target));
                }
            }
        }
        for digit in idx.iter_mut() {
            *digit += 1;
            if *digit < grid.len() {
                continue 'outer;
            }
            *digit = 0;
        }
        break;
    }
    all.sort_by(f64::total_cmp);
    all.truncate(s.top_n);
    all
}

/// Checks a search report against brute force and checks each candidate on its own.
fn assert_matches_brute_force<C: Circuit>(
    c: &C,
    target: Thresholds,
    s: &SearchSettings,
    checks: &CheckSettings,
) -> SearchReport {
    let report = search(c, target, s, checks).unwrap();
    let reference = brute_force(c, target, s, checks);
    let got: Vec<f64> = report.candidates.iter().map(|k| k.worst_error_rel).collect();
    assert_eq!(got.len(), reference.len(), "got {got:?}\nbrute force {reference:?}");
    for (k, (g, r)) in got.iter().zip(&reference).enumerate() {
        assert!(
            (g - r).abs() <= 1e-12 * r.abs() + 1e-15,
            "rank {k}: search {g:e}, brute force {r:e}\n{got:?}\n{reference:?}"
        );
    }
    for cand in &report.candidates {
        // Each candidate is a real combination of in-range series values with the stated results.
        for p in &cand.parts {
            assert!(s.series.contains(p.value_ohm), "{} not in {}", p.value_ohm, s.series);
            assert!(p.value_ohm >= s.r_min_ohm * (1.0 - 1e-9) && p.value_ohm <= s.r_max_ohm * (1.0 + 1e-9));
        }
        let t = apply(c, cand).unwrap().thresholds().unwrap();
        assert_eq!((t.vt_upper_v, t.vt_lower_v), (cand.vt_upper_v, cand.vt_lower_v));
        assert!((objective(t, target) - cand.worst_error_rel).abs() <= 1e-15);
        assert!((cand.error_upper_v - (t.vt_upper_v - target.vt_upper_v)).abs() <= 1e-15);
        if let Some(b) = s.current_budget_a {
            assert!(cand.quiescent_current_a.unwrap() <= b * (1.0 + 1e-12));
        }
    }
    report
}

fn small(series: ESeries, r_min_ohm: f64, r_max_ohm: f64, top_n: usize) -> SearchSettings {
    SearchSettings { series, r_min_ohm, r_max_ohm, top_n, current_budget_a: None, distinct: false }
}

#[test]
fn three_resistor_inverting_matches_brute_force() {
    // Demo scenario 1 targets (DOMAIN §7): VT+ 2.9 V, VT− 1.7 V on 5 V.
    let c = Topology::Inverting(InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0)));
    let r = assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 },
        &small(ESeries::E12, 1e3, 100e3, 10),
        &CheckSettings::default(),
    );
    assert_eq!(r.combinations, 25 * 25);
    assert_eq!(r.exhaustive_combinations, 0, "the inverting thresholds are bilinear in each resistor");
    assert!(r.evaluations < 25 * 25 * 25 / 3, "{} evaluations", r.evaluations);
}

#[test]
fn deep_list_with_bias_currents_matches_brute_force() {
    // Bias currents make the thresholds depend on the impedance level, so scaled copies of one
    // ratio no longer tie and a deep list needs several values from the same combination.
    let dev = Comparator {
        supply_v: 5.0,
        bias_plus_a: 500e-9,
        bias_minus_a: 500e-9,
        offset_v: 0.003,
        source_resistance_ohm: 10e3,
        ..Comparator::default()
    };
    let c = InvertingSchmitt::single_supply(22e3, 15e3, 100e3, dev);
    assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 },
        &small(ESeries::E24, 1e3, 47e3, 40),
        &CheckSettings::default(),
    );
}

#[test]
fn two_resistor_split_supply_matches_brute_force() {
    let dev = Comparator {
        supply_v: 12.0,
        negative_rail_v: -12.0,
        output_high_drop_v: 1.0,
        output_low_rise_v: 1.0,
        ..Comparator::default()
    };
    let c = InvertingSchmitt::split_supply(10e3, 90e3, dev);
    assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 1.0, vt_lower_v: -1.0 },
        &small(ESeries::E24, 1e3, 1e6, 15),
        &CheckSettings::default(),
    );
}

#[test]
fn current_budget_matches_brute_force() {
    let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
    let mut s = small(ESeries::E12, 1e3, 22e3, 8);
    s.current_budget_a = Some(400e-6);
    assert_matches_brute_force(&c, Thresholds { vt_upper_v: 3.1, vt_lower_v: 1.9 }, &s, &CheckSettings::default());
}

#[test]
fn zero_volt_target_uses_the_width() {
    // A zero-crossing detector on ±5 V: VT− = 0 V is normalised by the 0.2 V target width.
    let dev = Comparator { supply_v: 5.0, negative_rail_v: -5.0, ..Comparator::default() };
    let c = InvertingSchmitt {
        rail_a: Rail::Supply,
        rail_b: Rail::NegativeRail,
        ..InvertingSchmitt::single_supply(10e3, 10e3, 100e3, dev)
    };
    assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 0.2, vt_lower_v: 0.0 },
        &small(ESeries::E12, 1e3, 1e6, 5),
        &CheckSettings::default(),
    );
}

/// A made-up circuit whose thresholds need not be bilinear in its resistors: `wiggle` scales a
/// ripple in ln(R3) that makes them non-monotone; with `wiggle = 0` they are monotone but still
/// not bilinear in R3 (tanh of ln R3) unless `r3_bilinear`; `r1_bilinear = false` makes them
/// non-bilinear in R1, the innermost enumerated resistor.
#[derive(Debug, Clone, PartialEq)]
struct Wavy {
    r: [f64; 3],
    wiggle: f64,
    r3_bilinear: bool,
    r1_bilinear: bool,
}

impl Wavy {
    fn new(wiggle: f64) -> Self {
        Wavy { r: [10e3; 3], wiggle, r3_bilinear: false, r1_bilinear: true }
    }
}

impl Circuit for Wavy {
    fn validate(&self) -> Result<(), DesignError> {
        Ok(())
    }
    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        let [r1, r2, r3] = self.r;
        let k = if self.r1_bilinear { r1 / (r1 + r2) } else { 0.5 + 0.4 * (0.8 * (r1 / r2).ln()).tanh() };
        let shape = if self.r3_bilinear { (r3 - 10e3) / (r3 + 10e3) } else { (0.7 * (r3 / 10e3).ln()).tanh() };
        let s = shape + self.wiggle * (5.0 * r3.ln()).sin();
        Ok(Thresholds { vt_upper_v: 2.5 + k + 0.5 * s, vt_lower_v: 1.5 + 0.5 * k * s })
    }
    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        Ok((5.0, 0.0))
    }
    fn sense(&self) -> Sense {
        Sense::Inverting
    }
    fn operating_point(&self, vin_v: f64, _state: OutputState) -> Result<OperatingPoint, DesignError> {
        Ok(OperatingPoint {
            resistors: vec![ResistorDrop { designator: "R1".into(), resistance_ohm: self.r[0], volts: 1.0 }],
            input_current_a: 0.0,
            network_current_a: 5.0 / (self.r[0] + self.r[1] + self.r[2]),
            device_inputs: vec![NodeVoltage { name: "input".into(), volts: vin_v }],
        })
    }
    fn parameters(&self) -> Vec<Parameter> {
        vec![
            Parameter::resistor("r1", "R1", "first", self.r[0]),
            Parameter::quantity("supply_v", "supply", 5.0, ParameterKind::Supply),
            Parameter::resistor("r2", "R2", "second", self.r[1]),
            Parameter::resistor("r3", "R3", "third", self.r[2]),
        ]
    }
    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        expect_len(values, 4)?;
        Ok(Wavy { r: [values[0], values[2], values[3]], ..self.clone() })
    }
    fn synthesise_with_anchor(&self, _targets: Thresholds, _anchor_ohm: f64) -> Result<Self, DesignError> {
        Err(DesignError::infeasible("not a real circuit", "none"))
    }
    fn anchor_description(&self) -> &'static str {
        "none"
    }
    fn supply_v(&self) -> f64 {
        5.0
    }
    fn with_supply(&self, _supply_v: f64) -> Self {
        self.clone()
    }
    fn checks(&self, _settings: &CheckSettings) -> Vec<Warning> {
        Vec::new()
    }
    fn device_input_range(&self) -> (f64, f64) {
        (0.0, 5.0)
    }
    fn negative_rail_v(&self) -> f64 {
        0.0
    }
    fn output_stage(&self) -> hysteron_core::analysis::OutputStage {
        hysteron_core::analysis::OutputStage::PushPull
    }
    fn troubleshooting(&self, _analysis: &hysteron_core::analysis::Analysis, _checks: &CheckSettings) -> Vec<String> {
        Vec::new()
    }
}

#[test]
fn non_monotone_thresholds_fall_back_safely() {
    let c = Wavy::new(0.3);
    let r = assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 3.2, vt_lower_v: 1.6 },
        &small(ESeries::E24, 1e3, 100e3, 10),
        &CheckSettings::default(),
    );
    assert!(r.exhaustive_combinations > 0);
}

#[test]
fn monotone_but_not_bilinear_thresholds_are_caught() {
    let c = Wavy::new(0.0);
    let r = assert_matches_brute_force(
        &c,
        Thresholds { vt_upper_v: 3.1, vt_lower_v: 1.62 },
        &small(ESeries::E24, 1e3, 100e3, 10),
        &CheckSettings::default(),
    );
    assert!(r.exhaustive_combinations > 0, "the model check should have failed somewhere");
}

#[test]
fn non_bilinear_in_an_enumerated_resistor_is_caught() {
    // Bilinear in the solved R3, so no combination needs a full scan, but the probe models in R1
    // are wrong: the walks' checks must notice and the search must redo everything unpruned.
    let c = Wavy { r3_bilinear: true, r1_bilinear: false, ..Wavy::new(0.0) };
    for (vt_upper_v, vt_lower_v) in [(3.1, 1.62), (2.8, 1.4), (3.3, 1.75)] {
        assert_matches_brute_force(
            &c,
            Thresholds { vt_upper_v, vt_lower_v },
            &small(ESeries::E24, 1e3, 100e3, 10),
            &CheckSettings::default(),
        );
    }
}

#[test]
fn wavy_with_a_budget_matches_brute_force() {
    let c = Wavy::new(0.3);
    let mut s = small(ESeries::E12, 1e3, 100e3, 6);
    s.current_budget_a = Some(5.0 / 60e3);
    assert_matches_brute_force(&c, Thresholds { vt_upper_v: 3.0, vt_lower_v: 1.7 }, &s, &CheckSettings::default());
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(24), ..ProptestConfig::default() })]

    /// Random targets and device errors (offset and bias currents break the scale invariance, so
    /// ties are rarer and the ranking is stricter).
    #[test]
    fn random_inverting_designs_match_brute_force(
        vt_lower in 0.3f64..3.5,
        width in 0.05f64..1.5,
        offset in -0.01f64..0.01,
        bias in -200e-9f64..200e-9,
        drop in 0.0f64..0.3,
        series_pick in 0usize..3,
    ) {
        let dev = Comparator { supply_v: 5.0, output_high_drop_v: drop, offset_v: offset, bias_plus_a: bias, bias_minus_a: bias, source_resistance_ohm: 1e3, ..Comparator::default() };
        let c = InvertingSchmitt::single_supply(22e3, 15e3, 100e3, dev);
        let series = [ESeries::E6, ESeries::E12, ESeries::E24][series_pick];
        let s = small(series, 1e3, if series == ESeries::E24 { 33e3 } else { 470e3 }, 7);
        assert_matches_brute_force(&c, Thresholds { vt_upper_v: vt_lower + width, vt_lower_v: vt_lower }, &s, &CheckSettings::default());
    }
}
