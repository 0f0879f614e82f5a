//! The standard-value search against plain exhaustive enumeration (the reference needs no theory:
//! every combination of series values is evaluated), on ranges small enough to enumerate, for the
//! distinct-alternatives list, the two-transistor circuit (both models), the current budget as a
//! constraint (with a divider current computed by hand) and targets that cannot be met.

use hysteron_core::analysis::{CheckSettings, ImpedanceChoice, Targets, Thresholds};
use hysteron_core::device::Comparator;
use hysteron_core::eseries::ESeries;
use hysteron_core::overview::{standard_values, standard_values_job};
use hysteron_core::record::DesignRecord;
use hysteron_core::search::{search, SearchJob, SearchReport, SearchSettings, DISTINCT_REL};
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt};
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::noninverting::NonInvertingSchmitt;
use hysteron_core::topology::{analyse, Circuit, ParameterKind, Topology};

/// The objective as the search documents it: worst relative error, normalised by |target| (or
/// the target width for a 0 V target).
fn norms(target: Thresholds) -> (f64, f64) {
    let width = (target.vt_upper_v - target.vt_lower_v).abs();
    let norm = |v: f64| if v != 0.0 { v.abs() } else if width > 0.0 { width } else { 1.0 };
    (norm(target.vt_upper_v), norm(target.vt_lower_v))
}

fn objective(t: Thresholds, target: Thresholds) -> f64 {
    let (su, sl) = norms(target);
    ((t.vt_upper_v - target.vt_upper_v) / su).abs().max(((t.vt_lower_v - target.vt_lower_v) / sl).abs())
}

/// Every combination of in-range series values for every resistor, each evaluated; those within
/// the budget sorted by objective; with `distinct`, a combination whose thresholds agree with an
/// already kept one within DISTINCT_REL of the normalisers is skipped. The first `top_n`
/// objectives.
fn brute_force<C: Circuit>(c: &C, target: Thresholds, s: &SearchSettings, checks: &CheckSettings) -> Vec<f64> {
    let params = c.parameters();
    let slots: Vec<usize> = (0..params.len()).filter(|&i| params[i].kind == ParameterKind::Resistor).collect();
    let grid = s.series.values_between(s.r_min_ohm, s.r_max_ohm);
    let mut values: Vec<f64> = params.iter().map(|p| p.value).collect();
    let mut idx = vec![0usize; slots.len()];
    let mut all: Vec<(f64, Thresholds)> = Vec::new();
    'outer: loop {
        for (k, &slot) in slots.iter().enumerate() {
            values[slot] = grid[idx[k]];
        }
        if let Ok(t) = c.with_parameters(&values).and_then(|x| x.thresholds().map(|t| (x, t))) {
            let (circuit, t) = t;
            let ok = s
                .current_budget_a
                .is_none_or(|b| analyse(&circuit, checks).is_ok_and(|a| a.quiescent_current_a <= b * (1.0 + 1e-12)));
            if ok && t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite() {
                all.push((objective(t, target), t));
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
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    let (su, sl) = norms(target);
    let mut kept: Vec<(f64, Thresholds)> = Vec::new();
    for (f, t) in all {
        if kept.len() == s.top_n {
            break;
        }
        let twin = |k: &(f64, Thresholds)| {
            (k.1.vt_upper_v - t.vt_upper_v).abs() <= DISTINCT_REL * su
                && (k.1.vt_lower_v - t.vt_lower_v).abs() <= DISTINCT_REL * sl
        };
        if s.distinct && kept.iter().any(twin) {
            continue;
        }
        kept.push((f, t));
    }
    kept.into_iter().map(|k| k.0).collect()
}

fn assert_matches<C: Circuit>(c: &C, target: Thresholds, s: &SearchSettings) -> SearchReport {
    let checks = CheckSettings::default();
    let report = search(c, target, s, &checks).unwrap();
    let reference = brute_force(c, target, s, &checks);
    let got: Vec<f64> = report.candidates.iter().map(|k| k.worst_error_rel).collect();
    assert_eq!(got.len(), reference.len(), "search {got:?}\nbrute force {reference:?}");
    for (k, (g, r)) in got.iter().zip(&reference).enumerate() {
        assert!((g - r).abs() <= 1e-12 * r.abs() + 1e-15, "rank {k}: search {g:e}, brute force {r:e}");
    }
    report
}

fn settings(series: ESeries, r_min_ohm: f64, r_max_ohm: f64, top_n: usize, distinct: bool) -> SearchSettings {
    SearchSettings { series, r_min_ohm, r_max_ohm, top_n, current_budget_a: None, distinct }
}

#[test]
fn distinct_alternatives_match_brute_force() {
    // Non-inverting Schmitt with a reference divider on an ideal 5 V device: thresholds depend on
    // ratios only, so scaled twins abound.
    let c = NonInvertingSchmitt::with_divider(10e3, 47e3, 10e3, 10e3, Comparator::ideal(5.0));
    for (u, l) in [(2.9, 2.1), (3.3, 1.2)] {
        let r = assert_matches(&c, Thresholds { vt_upper_v: u, vt_lower_v: l }, &settings(ESeries::E6, 1e3, 100e3, 10, true));
        assert_eq!(r.candidates.len(), 10);
    }
}

fn bjt(model: BjtModel) -> EmitterCoupledSchmitt {
    // The template's design (core/src/catalog/bjt_pair.json): 12 V, R1 13k, R2 6k2, RC1 24k, RC2 10k, RE 1k.
    EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 13e3, 6.2e3, 24e3, 10e3, 1e3) }
}

#[test]
fn two_transistor_hand_model_matches_brute_force() {
    let c = bjt(BjtModel::Hand);
    for distinct in [false, true] {
        for (u, l) in [(1.5, 0.9), (2.4, 1.1)] {
            assert_matches(&c, Thresholds { vt_upper_v: u, vt_lower_v: l }, &settings(ESeries::E6, 1e3, 10e3, 8, distinct));
        }
    }
}

#[test]
fn two_transistor_ebers_moll_matches_brute_force() {
    let c = bjt(BjtModel::EbersMoll);
    for distinct in [false, true] {
        assert_matches(&c, Thresholds { vt_upper_v: 1.5, vt_lower_v: 0.9 }, &settings(ESeries::E3, 1e3, 10e3, 6, distinct));
    }
}

#[test]
fn current_budget_is_a_constraint_with_the_divider_current_shown() {
    // Inverting Schmitt on an ideal rail-to-rail 5 V device, R1 (to 5 V) = R2 (to 0 V) = x and
    // Rf = 2x: VT+ = 3 V, VT− = 2 V exactly for any x (DOMAIN §1a). Worked by hand: with the output
    // high, node P sits at VT+ = 3 V and R2 carries 3 V / x to ground; with the output low, R1
    // carries (5 V − VT−)/x = 3 V / x. So the divider draws 3 V / x: 3 mA at x = 1 kΩ, 100 µA at 30 kΩ.
    let start = InvertingSchmitt::single_supply(1e3, 1e3, 2e3, Comparator::ideal(5.0));
    let target = Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.0 };
    let checks = CheckSettings::default();
    let free = search(&start, target, &SearchSettings::default(), &checks).unwrap();
    let best = &free.candidates[0];
    assert!(best.worst_error_rel < 1e-12);
    assert_eq!(best.parts[1].value_ohm, 1e3, "the tie-break keeps the start's impedance: {best:?}");
    assert!((best.quiescent_current_a.unwrap() - 3.0 / 1e3).abs() < 1e-12, "{best:?}");

    let budget = 100e-6;
    let s = SearchSettings { current_budget_a: Some(budget), ..SearchSettings::default() };
    let limited = search(&start, target, &s, &checks).unwrap();
    let best = &limited.candidates[0];
    assert!(best.worst_error_rel < 1e-12, "an exact set within 100 µA exists (x ≥ 30 kΩ): {best:?}");
    let x = best.parts[1].value_ohm;
    assert!(x >= 30e3, "{best:?}");
    assert!((best.quiescent_current_a.unwrap() - 3.0 / x).abs() <= 1e-12 * 3.0 / x, "{best:?}");
    for c in &limited.candidates {
        assert!(c.quiescent_current_a.unwrap() <= budget * (1.0 + 1e-12), "{c:?}");
    }
    // And the whole list agrees with brute force under the budget (a smaller range to enumerate).
    let small = SearchSettings { current_budget_a: Some(budget), ..settings(ESeries::E12, 10e3, 100e3, 8, true) };
    assert_matches(&start, target, &small);
}

fn record_with(targets: Targets) -> DesignRecord {
    let circuit = Topology::Inverting(InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0)));
    let mut r = DesignRecord::new("budget", circuit);
    r.targets = Some(targets);
    r
}

#[test]
fn the_targets_current_budget_limits_the_page_search() {
    // The page's case: 100 µA asked for in the targets, no limit in the search settings.
    let targets =
        Targets { vt_upper_v: 3.0, vt_lower_v: 2.0, impedance: ImpedanceChoice::CurrentBudgetA(100e-6) };
    let record = record_with(targets);
    let report = standard_values(&record, &targets, None).unwrap();
    assert_eq!(report.candidates.len(), 10);
    for c in &report.candidates {
        assert!(c.quiescent_current_a.unwrap() <= 100e-6 * (1.0 + 1e-12), "{c:?}");
    }
    let mut job = standard_values_job(&record, &targets, None).unwrap();
    while !job.step(50).finished {}
    assert_eq!(job.finish(), report);
}

#[test]
fn invalid_targets_give_an_error_and_no_candidates() {
    let targets = Targets { vt_upper_v: 1.7, vt_lower_v: 2.9, impedance: ImpedanceChoice::AnchorOhm(10e3) };
    let record = record_with(targets);
    let e = standard_values(&record, &targets, None).unwrap_err();
    assert!(e.to_string().contains("VT+"), "{e}");
    assert!(SearchJob::new(&record.circuit, targets.thresholds(), &SearchSettings::default(), &record.checks).is_err());
}
