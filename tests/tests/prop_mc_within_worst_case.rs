//! Property: with uniform distributions every Monte Carlo draw lies inside the worst-case limits,
//! for every topology (each form in `hysteron_tests::designs::variety`, templates and demos
//! included) and for random comparator designs, under several tolerance settings (tight and wide
//! bands, temperature drift with and without a tracking network, device drifts).
//!
//! A uniform draw never leaves its band, so a draw beyond the worst case means the worst case is
//! not a bound (a non-monotone response); the worst-case study must then have searched for the
//! extremes itself, which this test checks by its result, not by its method.

use hysteron_core::device::Comparator;
use hysteron_core::tolerance::monte_carlo::MonteCarloRun;
use hysteron_core::tolerance::{worst_case, Distribution, ToleranceSettings};
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::noninverting::NonInvertingSchmitt;
use hysteron_core::topology::{Circuit, Topology};
use hysteron_tests::designs::variety;
use hysteron_tests::sampling::{random_comparator, Lcg};

/// Fixed seed of the settings and design stream (the Monte Carlo seeds derive from it).
const SEED: u64 = 0x7E3C_11A5;

fn settings_variants(g: &mut Lcg) -> Vec<ToleranceSettings> {
    let base = ToleranceSettings { distribution: Distribution::Uniform, ..ToleranceSettings::default() };
    vec![
        ToleranceSettings { temperature_min_c: 25.0, temperature_max_c: 25.0, ..base.clone() },
        base.clone(),
        ToleranceSettings {
            resistor_tolerance_pct: 5.0,
            supply_tolerance_pct: 10.0,
            resistor_tracking_ppm_per_k: Some(5.0),
            temperature_min_c: -40.0,
            temperature_max_c: 125.0,
            ..base.clone()
        },
        ToleranceSettings {
            resistor_tolerance_pct: g.uniform(0.1, 5.0),
            supply_tolerance_pct: g.uniform(0.0, 10.0),
            reference_tolerance_pct: g.uniform(0.0, 2.0),
            resistor_tempco_ppm_per_k: g.uniform(0.0, 200.0),
            temperature_min_c: g.uniform(-55.0, 25.0),
            temperature_max_c: g.uniform(25.0, 125.0),
            ..base
        },
    ]
}

/// With drift on the device: offset drift, bias current compounding, as a datasheet gives them.
fn drifting(mut d: Comparator, g: &mut Lcg) -> Comparator {
    d.offset_drift_v_per_k = g.uniform(0.0, 20e-6);
    d.bias_tempco_pct_per_k = g.uniform(-1.0, 8.0);
    d
}

/// Checks one design; returns whether its worst case said it is not monotone.
fn check(name: &str, c: &Topology, s: &ToleranceSettings, trials: u64, failures: &mut Vec<String>) -> bool {
    let wc = match worst_case(c, s) {
        Ok(w) => w,
        // A design whose corners are invalid has no worst case to test; its own tests cover that.
        Err(_) => return false,
    };
    let mut s = s.clone();
    s.monte_carlo.trials = trials;
    let Ok(run) = MonteCarloRun::new(c, &s) else { return wc.non_monotone };
    let Ok(p) = run.run(0, trials) else { return wc.non_monotone };
    let slack = |lo: f64, hi: f64| 1e-9 * lo.abs().max(hi.abs()).max(1.0);
    let inside = |x: f64, e: &hysteron_core::tolerance::worst_case::Extremes| {
        let sl = slack(e.min.value_v, e.max.value_v);
        x >= e.min.value_v - sl && x <= e.max.value_v + sl
    };
    for (i, (&up, &lo)) in p.vt_upper_v.iter().zip(&p.vt_lower_v).enumerate() {
        for (what, x, e) in [
            ("VT+", up, &wc.vt_upper),
            ("VT−", lo, &wc.vt_lower),
            ("hysteresis", up - lo, &wc.hysteresis),
            ("centre", 0.5 * (up + lo), &wc.centre),
        ] {
            if !inside(x, e) {
                failures.push(format!(
                    "{name}: trial {i} {what} = {x} outside the worst case [{}, {}] ({:?})",
                    e.min.value_v, e.max.value_v, wc.method
                ));
                return wc.non_monotone;
            }
        }
    }
    wc.non_monotone
}

#[test]
fn every_uniform_monte_carlo_draw_lies_inside_the_worst_case() {
    let mut g = Lcg(SEED);
    let trials = 400 * u64::from(hysteron_tests::proptest_cases(1));
    let mut failures = Vec::new();
    let mut designs: Vec<(String, Topology)> = variety();
    for k in 0..6 {
        let split = k % 2 == 1;
        let d = drifting(random_comparator(&mut g, split), &mut g);
        let (ra, rb, rf) = (g.log_uniform(1e3, 1e6), g.log_uniform(1e3, 1e6), g.log_uniform(1e3, 1e6));
        let inv = if split {
            InvertingSchmitt::split_supply(rb, rf, d)
        } else {
            InvertingSchmitt::single_supply(ra, rb, rf, d)
        };
        designs.push((format!("random inverting {k}"), Topology::Inverting(inv)));
        let (r1, r2) = (g.log_uniform(1e3, 1e5), g.log_uniform(1e4, 1e6));
        let non = NonInvertingSchmitt::with_divider(r1, r2, g.log_uniform(1e3, 1e5), g.log_uniform(1e3, 1e5), d);
        designs.push((format!("random non-inverting {k}"), Topology::NonInverting(non)));
    }
    let mut topologies_seen = std::collections::BTreeSet::new();
    let mut non_monotone = Vec::new();
    for (name, c) in &designs {
        if c.validate().is_err() {
            continue;
        }
        topologies_seen.insert(c.name());
        for (j, mut s) in settings_variants(&mut g).into_iter().enumerate() {
            s.monte_carlo.seed = g.0 ^ j as u64;
            if check(&format!("{name} / settings {j}"), c, &s, trials, &mut failures) {
                non_monotone.push(c.name());
            }
        }
    }
    // Every registered topology took part.
    for n in Topology::NAMES {
        assert!(topologies_seen.contains(n), "no design of topology {n} was checked");
    }
    assert!(failures.is_empty(), "{} failures:\n{}", failures.len(), failures.join("\n"));
    // The CMOS buffer's switching point is clamped to its supply-dependent VIL…VIH window, so its
    // VT− peaks inside the supply band: the worst case must have said so (and searched).
    assert!(non_monotone.contains(&"cmos_buffer"), "non-monotone cases: {non_monotone:?}");
}
