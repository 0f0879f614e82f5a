//! The standard-value search on the two-transistor (Ebers–Moll) pair, whose thresholds are not
//! bilinear in any resistor, matches plain exhaustive enumeration of every combination of all five
//! resistors on small ranges (the reference needs no theory): the same best objectives, the same
//! threshold pairs and, where no tie could decide otherwise, the same parts. Slow in a debug build:
//! run with `--release`.

use hysteron_core::analysis::{CheckSettings, Thresholds};
use hysteron_core::eseries::ESeries;
use hysteron_core::search::{search, SearchReport, SearchSettings, DISTINCT_REL};
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt};
use hysteron_core::topology::{Circuit, ParameterKind};

/// The dust-extractor demo's circuit (core/src/catalog/demo_dust_extractor.json).
fn demo() -> EmitterCoupledSchmitt {
    let mut c =
        EmitterCoupledSchmitt { model: BjtModel::EbersMoll, ..EmitterCoupledSchmitt::new(12.0, 13e3, 6.2e3, 24e3, 10e3, 1e3) };
    c.transistor.temperature_k = 300.0;
    c.transistor.nominal_temperature_k = 300.0;
    c
}

/// The objective as the search documents it: worst relative error against |target|.
fn objective(t: Thresholds, target: Thresholds) -> f64 {
    ((t.vt_upper_v - target.vt_upper_v) / target.vt_upper_v.abs())
        .abs()
        .max(((t.vt_lower_v - target.vt_lower_v) / target.vt_lower_v.abs()).abs())
}

/// Every combination of every resistor, evaluated; sorted by objective.
fn brute_force(c: &EmitterCoupledSchmitt, target: Thresholds, s: &SearchSettings) -> Vec<(f64, Thresholds, Vec<f64>)> {
    let params = c.parameters();
    let slots: Vec<usize> = (0..params.len()).filter(|&i| params[i].kind == ParameterKind::Resistor).collect();
    let grid = s.series.values_between(s.r_min_ohm, s.r_max_ohm);
    let mut values: Vec<f64> = params.iter().map(|p| p.value).collect();
    let mut idx = vec![0usize; slots.len()];
    let mut all: Vec<(f64, Thresholds, Vec<f64>)> = Vec::new();
    'outer: loop {
        for (k, &slot) in slots.iter().enumerate() {
            values[slot] = grid[idx[k]];
        }
        if let Ok(t) = c.with_parameters(&values).and_then(|d| d.thresholds()) {
            all.push((objective(t, target), t, slots.iter().map(|&i| values[i]).collect()));
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
    // Near-ties (1e-12) go to the set closest to the starting design, Σ|ln(Ri/Ri,start)|, as the
    // search documents.
    let start: Vec<f64> = slots.iter().map(|&i| params[i].value).collect();
    let closeness = |v: &Vec<f64>| v.iter().zip(&start).map(|(a, b)| (a / b).ln().abs()).sum::<f64>();
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut i = 0;
    while i < all.len() {
        let mut j = i + 1;
        while j < all.len() && close(all[i].0, all[j].0) {
            j += 1;
        }
        all[i..j].sort_by(|a, b| closeness(&a.2).total_cmp(&closeness(&b.2)));
        i = j;
    }
    all
}

/// The brute-force list with the search's distinct rule: going down the sorted list, keep an entry
/// unless a kept one has VT+ and VT− within DISTINCT_REL of the targets' sizes.
fn distinct(all: &[(f64, Thresholds, Vec<f64>)], target: Thresholds, n: usize) -> Vec<(f64, Thresholds, Vec<f64>)> {
    let mut kept: Vec<(f64, Thresholds, Vec<f64>)> = Vec::new();
    for e in all {
        let twin = kept.iter().any(|k| {
            (k.1.vt_upper_v - e.1.vt_upper_v).abs() <= DISTINCT_REL * target.vt_upper_v.abs()
                && (k.1.vt_lower_v - e.1.vt_lower_v).abs() <= DISTINCT_REL * target.vt_lower_v.abs()
        });
        if !twin {
            kept.push(e.clone());
        }
        if kept.len() == n {
            break;
        }
    }
    kept
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs()) + 1e-15
}

fn compare(report: &SearchReport, reference: &[(f64, Thresholds, Vec<f64>)], unique_thresholds: bool) {
    let got: Vec<f64> = report.candidates.iter().map(|c| c.worst_error_rel).collect();
    let want: Vec<f64> = reference.iter().map(|r| r.0).collect();
    assert_eq!(got.len(), want.len(), "search {got:?}\nbrute force {want:?}");
    for (k, (g, w)) in got.iter().zip(&want).enumerate() {
        assert!(close(*g, *w), "rank {k}: search {g:e}, brute force {w:e}\n{got:?}\n{want:?}");
    }
    if unique_thresholds {
        // Distinct alternatives: each rank is one threshold pair, the same as brute force's (a
        // pair reached by several part sets may be listed with any of them, so parts are not compared).
        for (c, r) in report.candidates.iter().zip(reference) {
            assert!(
                (c.vt_upper_v - r.1.vt_upper_v).abs() <= DISTINCT_REL * 1.5
                    && (c.vt_lower_v - r.1.vt_lower_v).abs() <= DISTINCT_REL * 0.9,
                "{c:?}\n{r:?}"
            );
        }
    }
}

fn check(series: ESeries, r_min_ohm: f64, r_max_ohm: f64, target: Thresholds) {
    let c = demo();
    let base = SearchSettings { series, r_min_ohm, r_max_ohm, top_n: 10, current_budget_a: None, distinct: true };
    let all = brute_force(&c, target, &base);
    assert!(all.len() >= 10, "too few switching combinations ({}) for the comparison to mean anything", all.len());
    let report = search(&c, target, &base, &CheckSettings::default()).unwrap();
    let brute_evals = (base.series.values_between(r_min_ohm, r_max_ohm).len() as u64).pow(5);
    eprintln!(
        "{series} {r_min_ohm}-{r_max_ohm}: {} evaluations against {brute_evals} for brute force; best {:e}",
        report.evaluations, report.candidates[0].worst_error_rel
    );
    assert!(report.evaluations < brute_evals, "{} evaluations", report.evaluations);
    assert_eq!(report.exhaustive_combinations, 0);
    compare(&report, &distinct(&all, target, 10), true);
    // Without the distinct rule every part set counts (the same pair through several loads RC2).
    let plain = SearchSettings { distinct: false, ..base };
    let report = search(&c, target, &plain, &CheckSettings::default()).unwrap();
    let mut top = all.clone();
    top.truncate(10);
    compare(&report, &top, false);
}

#[test]
fn demo_targets_match_brute_force() {
    // The demo's targets (VT+ 1.5 V, VT− 0.9 V), E6 over 1k–22k: 9 values, 9^5 combinations.
    check(ESeries::E6, 1e3, 22e3, Thresholds { vt_upper_v: 1.5, vt_lower_v: 0.9 });
}

#[test]
fn other_targets_match_brute_force() {
    // A wider band higher up, E6 over 1k–10k.
    check(ESeries::E6, 1e3, 10e3, Thresholds { vt_upper_v: 2.4, vt_lower_v: 1.1 });
}
