// Over 600 lines: one job, Monte Carlo (JCGM 101) with its sliced runner, statistics and histograms; about 155 lines are tests.
//! Monte Carlo propagation of distributions (JCGM 101:2008, from memory): M trials, each drawing every
//! varied parameter from its distribution (tolerance, plus a rectangular drift input where a part has
//! a temperature coefficient), evaluating the circuit's thresholds, and summarising the M values of
//! each figure by their mean, standard deviation (§7.6), the 95 % probabilistically symmetric
//! coverage interval from the order statistics (§7.7), a histogram, and the yield against the spec
//! window.
//!
//! **Reproducibility.** Each trial has its own generator: xoshiro256++ ([`crate::rng::Rng`]) seeded
//! through SplitMix64 with `key ^ index`, where `key` is the first output of a generator seeded with
//! the run's seed, and `index` is the trial number from 0. A trial's draws therefore depend only on
//! the seed and its index: the run can be split into chunks ([`MonteCarloRun::run`] on `[a, b)`,
//! merged in order with [`MonteCarloPartial::merge`]) and gives bit-identical results to one run,
//! on native and wasm32 targets alike. (Hashing the seed first keeps runs with neighbouring seeds,
//! such as 42 and 43, from sharing trials, which `seed ^ index` alone would do.) Within a trial the
//! draws come in parameter order: for each varied parameter its tolerance deviation (uniform
//! a·(2U − 1), or (a/3)·Z by the polar method for normal), then its drift deviation d·(2U − 1).
//!
//! **Invalid trials** (a draw that makes the circuit fail its own validation) are counted, left out
//! of the statistics, and count as outside the spec window.
//!
//! Per trial the run only copies the circuit with new parameter values and computes its thresholds:
//! no allocation per trial.

use super::{Distribution, Figure, Figures, Prepared, SpecWindow, ToleranceSettings};
pub use super::sample_statistics::{coverage_indices, figure_statistics, Histogram, SampleStatistics};
use crate::analysis::Thresholds;
use crate::device::Comparator;
use crate::error::DesignError;
use crate::rng::Rng;
use crate::topology::inverting::InvertingSchmitt;
use crate::topology::Circuit;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, Copy)]
struct Draw {
    index: usize,
    centre: f64,
    half_width: f64,
    normal: bool,
    drift_half_width: f64,
}

/// A prepared Monte Carlo run: the circuit, its resolved bands and the run's settings. Run it in
/// one go with `run(0, trials())`, or in slices for a progress bar, then [`MonteCarloRun::finish`].
#[derive(Debug, Clone)]
pub struct MonteCarloRun<C: Circuit> {
    circuit: C,
    draws: Vec<Draw>,
    centres: Vec<f64>,
    /// The circuit's parameters and which of them follow a tracking network's common drift.
    params: Vec<crate::topology::Parameter>,
    tracks: Vec<bool>,
    trials: u64,
    seed: u64,
    stream_key: u64,
    bins: usize,
    spec: SpecWindow,
}

/// The raw outcome of trials `[start, end)`: the VT+ and VT− of every valid trial in trial order,
/// and the counts. Merge consecutive slices in order, then hand the whole to [`MonteCarloRun::finish`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MonteCarloPartial {
    /// First trial index covered.
    pub start: u64,
    /// One past the last trial index covered.
    pub end: u64,
    /// VT+ of every valid trial, in trial order, volts.
    pub vt_upper_v: Vec<f64>,
    /// VT− of every valid trial, in trial order, volts.
    pub vt_lower_v: Vec<f64>,
    /// Trials whose drawn circuit was invalid.
    pub rejected_trials: u64,
    /// Valid trials inside the spec window (all valid trials when the window is empty).
    pub inside_spec: u64,
    /// Violations per bound, indexed as [`SpecWindow::violations`] bits.
    pub spec_violations: [u64; 8],
}

impl MonteCarloPartial {
    /// Appends the next slice. Fails unless `next` starts where this one ends.
    pub fn merge(&mut self, next: MonteCarloPartial) -> Result<(), DesignError> {
        if next.start != self.end {
            return Err(DesignError::Parameter {
                reason: format!(
                    "Monte Carlo slices must be merged in trial order: this one ends at trial {}, the next starts at {}",
                    self.end, next.start
                ),
            });
        }
        self.end = next.end;
        self.vt_upper_v.extend_from_slice(&next.vt_upper_v);
        self.vt_lower_v.extend_from_slice(&next.vt_lower_v);
        self.rejected_trials += next.rejected_trials;
        self.inside_spec += next.inside_spec;
        for (a, b) in self.spec_violations.iter_mut().zip(next.spec_violations) {
            *a += b;
        }
        Ok(())
    }

    /// Number of trials covered.
    pub fn trials_done(&self) -> u64 {
        self.end - self.start
    }
}

/// Which end of a spec range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Bound {
    /// Below the minimum.
    BelowMin,
    /// Above the maximum.
    AboveMax,
}

/// How many trials broke one bound of the spec window.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpecViolation {
    /// The figure.
    pub figure: Figure,
    /// Which end.
    pub bound: Bound,
    /// Number of trials (a trial may break several bounds).
    pub trials: u64,
}

/// The fraction of trials inside the spec window.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpecYield {
    /// Trials inside the window.
    pub inside_trials: u64,
    /// Yield p = inside / M (invalid trials count as outside).
    pub fraction: f64,
    /// Binomial standard error √(p(1 − p)/M). It is 0 at p = 0 or 1; then 3/M bounds the missing
    /// fraction at about 95 % confidence (the "rule of three", common practice).
    pub standard_error: f64,
    /// Trials outside, per broken bound (only bounds that were broken).
    pub violations: Vec<SpecViolation>,
}

/// Monte Carlo result for all four figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MonteCarloResult {
    /// Number of trials M.
    pub trials: u64,
    /// Seed of the run.
    pub seed: u64,
    /// Trials with a valid circuit (the statistics use these).
    pub valid_trials: u64,
    /// Trials whose drawn circuit was invalid.
    pub rejected_trials: u64,
    /// VT+.
    pub vt_upper: SampleStatistics,
    /// VT−.
    pub vt_lower: SampleStatistics,
    /// Hysteresis.
    pub hysteresis: SampleStatistics,
    /// Centre.
    pub centre: SampleStatistics,
    /// Yield against the spec window (`None` when no bound is stated).
    pub spec_yield: Option<SpecYield>,
    /// The normal sampler that drew the trials ([`crate::rng::NORMAL_SAMPLER`]; 1 for a result
    /// kept before samplers were recorded): the same seed under another sampler draws other
    /// boards.
    #[serde(default = "crate::rng::sampler_before_records")]
    pub normal_sampler: u32,
}

impl MonteCarloResult {
    /// The statistics of one figure.
    pub fn figure(&self, f: Figure) -> &SampleStatistics {
        match f {
            Figure::VtUpper => &self.vt_upper,
            Figure::VtLower => &self.vt_lower,
            Figure::Hysteresis => &self.hysteresis,
            Figure::Centre => &self.centre,
        }
    }
}

/// Longest Monte Carlo run allowed, by its time bound (trials × the circuit's
/// [`Circuit::seconds_per_evaluation`]), seconds. Closed-form topologies reach the trial limit
/// long before it; the Ebers–Moll transistor pair does not.
pub const MONTE_CARLO_TIME_LIMIT_S: f64 = 30.0;

/// One-shot Monte Carlo run with the settings' trial count, seed and spec window.
pub fn monte_carlo<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<MonteCarloResult, DesignError> {
    let run = MonteCarloRun::new(circuit, settings)?;
    run.finish(&run.run(0, run.trials())?)
}

impl<C: Circuit> MonteCarloRun<C> {
    /// Prepares a run: validates the circuit and settings and resolves the bands.
    /// Refuses a run whose time bound (trials × [`Circuit::seconds_per_evaluation`]) is above
    /// [`MONTE_CARLO_TIME_LIMIT_S`]: a circuit solved at transistor level allows fewer trials.
    pub fn new(circuit: &C, settings: &ToleranceSettings) -> Result<Self, DesignError> {
        let trials = settings.monte_carlo.trials;
        let per_trial_s = circuit.seconds_per_evaluation();
        let bound_s = trials as f64 * per_trial_s;
        if bound_s > MONTE_CARLO_TIME_LIMIT_S {
            let allowed = (MONTE_CARLO_TIME_LIMIT_S / per_trial_s).floor();
            return Err(DesignError::invalid(
                "tolerance.monte_carlo.trials",
                format!(
                    "{trials} trials of this circuit could take up to {bound_s:.0} s ({:.2} ms a trial: it is solved at transistor level); at most {allowed:.0} are allowed (a {MONTE_CARLO_TIME_LIMIT_S:.0} s bound): lower the trials, or choose the hand model for a longer run",
                    per_trial_s * 1e3
                ),
            ));
        }
        Ok(Self::from_prepared(
            &Prepared::new(circuit, settings)?,
            settings,
        ))
    }

    pub(crate) fn from_prepared(prep: &Prepared<C>, settings: &ToleranceSettings) -> Self {
        let draws = prep
            .bands
            .iter()
            .enumerate()
            .filter(|(_, b)| b.is_varied())
            .map(|(index, b)| Draw {
                index,
                centre: b.centre,
                half_width: b.half_width,
                normal: b.distribution == Distribution::Normal,
                drift_half_width: b.drift_half_width,
            })
            .collect();
        let seed = settings.monte_carlo.seed;
        let params = prep.circuit.parameters();
        let tracks = super::settings::tracking_mask(&params, settings);
        MonteCarloRun {
            circuit: prep.circuit.clone(),
            draws,
            centres: prep.centres.clone(),
            params,
            tracks,
            trials: settings.monte_carlo.trials,
            seed,
            stream_key: Rng::new(seed).next_u64(),
            bins: settings.monte_carlo.histogram_bins.max(1),
            spec: settings.effective_spec(),
        }
    }

    /// Number of trials M of the run.
    pub fn trials(&self) -> u64 {
        self.trials
    }

    fn draw(&self, index: u64, values: &mut [f64]) {
        let mut rng = Rng::new(self.stream_key ^ index);
        for d in &self.draws {
            let mut x = d.centre;
            if d.half_width > 0.0 {
                x += if d.normal {
                    d.half_width / 3.0 * rng.normal()
                } else {
                    d.half_width * (2.0 * rng.uniform() - 1.0)
                };
            }
            if d.drift_half_width > 0.0 {
                x += d.drift_half_width * (2.0 * rng.uniform() - 1.0);
            }
            values[d.index] = x;
        }
    }

    /// The parameter values of trial `index`, in [`Circuit::parameters`] order (a tracking
    /// network's common drift already applied to its resistors).
    pub fn trial_parameters(&self, index: u64) -> Vec<f64> {
        let mut values = self.centres.clone();
        self.draw(index, &mut values);
        self.circuit_values(&values)
    }

    fn circuit_values(&self, band_values: &[f64]) -> Vec<f64> {
        super::settings::circuit_values(&self.params, band_values, &self.tracks)
    }

    /// The thresholds of trial `index` (an error when that trial's circuit is invalid).
    pub fn trial(&self, index: u64) -> Result<Thresholds, DesignError> {
        let c = self
            .circuit
            .with_parameters(&self.trial_parameters(index))?;
        c.validate()?;
        c.thresholds()
    }

    /// The thresholds for drawn band values (`scratch` holds the circuit's values and `trial` the
    /// drawn circuit between calls, so a trial neither allocates nor moves a new circuit).
    fn evaluate(&self, values: &[f64], scratch: &mut Vec<f64>, trial: &mut C) -> Option<Thresholds> {
        super::settings::circuit_values_into(&self.params, values, &self.tracks, scratch);
        self.circuit.with_parameters_into(scratch, trial).ok()?;
        let c = &*trial;
        c.validate().ok()?;
        let t = c.thresholds().ok()?;
        (t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite()).then_some(t)
    }

    /// Runs trials `[start, end)`. Any split of `0..trials()` into consecutive slices, merged in
    /// order, gives the same result as one slice.
    pub fn run(&self, start: u64, end: u64) -> Result<MonteCarloPartial, DesignError> {
        if start > end || end > self.trials {
            return Err(DesignError::Parameter {
                reason: format!("Monte Carlo slice {start}..{end} is not inside 0..{}: ask for a slice of the run", self.trials),
            });
        }
        let n = usize::try_from(end - start).unwrap_or(usize::MAX);
        let mut p = MonteCarloPartial {
            start,
            end,
            vt_upper_v: Vec::with_capacity(n),
            vt_lower_v: Vec::with_capacity(n),
            rejected_trials: 0,
            inside_spec: 0,
            spec_violations: [0; 8],
        };
        let check_spec = !self.spec.is_empty();
        let mut values = self.centres.clone();
        let mut scratch = Vec::with_capacity(self.params.len());
        let mut trial = self.circuit.clone();
        for index in start..end {
            self.draw(index, &mut values);
            match self.evaluate(&values, &mut scratch, &mut trial) {
                Some(t) => {
                    p.vt_upper_v.push(t.vt_upper_v);
                    p.vt_lower_v.push(t.vt_lower_v);
                    let v = if check_spec {
                        self.spec.violations(Figures::from_thresholds(t).as_array())
                    } else {
                        0
                    };
                    if v == 0 {
                        p.inside_spec += 1;
                    } else {
                        for (bit, count) in p.spec_violations.iter_mut().enumerate() {
                            *count += u64::from(v >> bit & 1);
                        }
                    }
                }
                None => p.rejected_trials += 1,
            }
        }
        Ok(p)
    }

    /// Statistics, histograms and yield of a complete run (`partial` must cover `0..trials()`).
    pub fn finish(&self, partial: &MonteCarloPartial) -> Result<MonteCarloResult, DesignError> {
        self.check_complete(partial)?;
        if partial.vt_upper_v.is_empty() {
            return Err(DesignError::Parameter {
                reason: "the Monte Carlo values were taken out of this run: put them back before finishing".into(),
            });
        }
        let [vt_upper, vt_lower, hysteresis, centre]: [SampleStatistics; 4] =
            figure_statistics(&partial.vt_upper_v, &partial.vt_lower_v, &Figure::ALL, self.bins)
                .try_into()
                .expect("one statistics per figure asked for");
        Ok(self.assemble(partial, [vt_upper, vt_lower, hysteresis, centre]))
    }

    /// Histogram bins per figure (the settings' count, at least 1).
    pub fn bins(&self) -> usize {
        self.bins
    }

    /// Refuses a partial that does not cover the whole run (`0..trials()`) or has fewer than two
    /// valid trials (trials less rejected ones): what [`MonteCarloRun::finish`] checks before any
    /// statistics. Value arrays, when present, must hold one VT+ and one VT− per valid trial; a
    /// partial whose arrays were taken out (to travel apart) is checked by its counts.
    pub fn check_complete(&self, partial: &MonteCarloPartial) -> Result<(), DesignError> {
        if partial.start != 0 || partial.end != self.trials {
            return Err(DesignError::Parameter {
                reason: format!(
                    "the Monte Carlo run is incomplete: trials {}..{} of {} are done; run the rest before finishing",
                    partial.start, partial.end, self.trials
                ),
            });
        }
        let valid = partial.trials_done().saturating_sub(partial.rejected_trials) as usize;
        let (upper, lower) = (partial.vt_upper_v.len(), partial.vt_lower_v.len());
        let taken_out = upper == 0 && lower == 0;
        if !taken_out && (upper != valid || lower != valid) {
            return Err(DesignError::inconsistent(format!(
                "the Monte Carlo values do not match the counts: {upper} VT+ and {lower} VT− for {valid} valid trials"
            )));
        }
        if valid < 2 {
            return Err(DesignError::inconsistent(format!(
                "only {valid} of {} Monte Carlo trials gave a valid circuit: narrow the tolerance bands",
                self.trials
            )));
        }
        Ok(())
    }

    /// The result from the run's counts and the four figures' statistics (in [`Figure::ALL`]
    /// order, as [`figure_statistics`] computes them): the last step of [`MonteCarloRun::finish`].
    /// Only the counts of `partial` are read (its value arrays may have been taken out), so
    /// `valid_trials` is the statistics' own sample size.
    pub fn assemble(&self, partial: &MonteCarloPartial, figures: [SampleStatistics; 4]) -> MonteCarloResult {
        let [vt_upper, vt_lower, hysteresis, centre] = figures;
        let valid = vt_upper.histogram.counts.iter().sum::<u64>();
        let spec_yield = (!self.spec.is_empty()).then(|| {
            let m = self.trials as f64;
            let p = partial.inside_spec as f64 / m;
            SpecYield {
                inside_trials: partial.inside_spec,
                fraction: p,
                standard_error: (p * (1.0 - p) / m).sqrt(),
                violations: (0..8)
                    .filter(|&bit| partial.spec_violations[bit] > 0)
                    .map(|bit| SpecViolation {
                        figure: Figure::ALL[bit / 2],
                        bound: if bit % 2 == 0 {
                            Bound::BelowMin
                        } else {
                            Bound::AboveMax
                        },
                        trials: partial.spec_violations[bit],
                    })
                    .collect(),
            }
        });
        MonteCarloResult {
            trials: self.trials,
            seed: self.seed,
            valid_trials: valid,
            rejected_trials: partial.rejected_trials,
            vt_upper,
            vt_lower,
            hysteresis,
            centre,
            spec_yield,
            normal_sampler: crate::rng::NORMAL_SAMPLER,
        }
    }
}

/// A 64-bit digest of a fixed Monte Carlo run, for checking that native and wasm32 builds draw and
/// compute bit-identical trials. The run: a single-supply inverting trigger (Ra 10 k, Rb 10 k,
/// Rf 20 k at 5 V, VCC − VOH 0.1 V, VOL 0.05 V, VOS 2 mV, IB± 20 nA, source 1 k), default bands
/// with Ra and Rf normal, 0–70 °C drift, 64 trials from `seed`. The digest is FNV-1a (64-bit) over
/// the little-endian bit patterns of the first 16 trials' VT+ and VT−, then the mean, standard
/// deviation and interval ends of VT+ and VT− and the VT+ histogram counts. Returns 0 only if the
/// fixed run failed, which would itself be a bug.
pub fn monte_carlo_fingerprint(seed: u64) -> u64 {
    let dev = Comparator {
        supply_v: 5.0,
        output_high_drop_v: 0.1,
        output_low_rise_v: 0.05,
        offset_v: 0.002,
        bias_plus_a: 20e-9,
        bias_minus_a: 20e-9,
        source_resistance_ohm: 1e3,
        ..Comparator::default()
    };
    let circuit = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, dev);
    let mut s = ToleranceSettings::default();
    s.monte_carlo.trials = 64;
    s.monte_carlo.seed = seed;
    s.monte_carlo.histogram_bins = 8;
    for id in ["ra_ohm", "rf_ohm"] {
        s.overrides.push(super::ParameterTolerance {
            id: id.into(),
            distribution: Some(Distribution::Normal),
            ..Default::default()
        });
    }
    let Ok(run) = MonteCarloRun::new(&circuit, &s) else {
        return 0;
    };
    let Ok(partial) = run.run(0, run.trials()) else {
        return 0;
    };
    let Ok(result) = run.finish(&partial) else {
        return 0;
    };
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    let mut eat = |word: u64| {
        for byte in word.to_le_bytes() {
            h ^= u64::from(byte);
            h = h.wrapping_mul(0x0000_0100_0000_01b3);
        }
    };
    for (u, l) in partial.vt_upper_v.iter().zip(&partial.vt_lower_v).take(16) {
        eat(u.to_bits());
        eat(l.to_bits());
    }
    for st in [&result.vt_upper, &result.vt_lower] {
        for x in [
            st.mean_v,
            st.standard_deviation_v,
            st.interval_95_low_v,
            st.interval_95_high_v,
        ] {
            eat(x.to_bits());
        }
    }
    for &c in &result.vt_upper.histogram.counts {
        eat(c);
    }
    h
}

#[cfg(test)]
mod tests {
    use super::*;

    fn circuit() -> InvertingSchmitt {
        InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0))
    }

    fn settings(trials: u64) -> ToleranceSettings {
        let mut s = ToleranceSettings::default();
        s.monte_carlo.trials = trials;
        s.monte_carlo.seed = 2024;
        s.spec = SpecWindow {
            vt_upper_max_v: Some(3.02),
            hysteresis_min_v: Some(0.99),
            ..Default::default()
        };
        s
    }

    #[test]
    fn fingerprint_is_pinned() {
        // Cross-target pin: this value was computed natively; the wasm32 build must give the same
        // (the lead runs `monte_carlo_fingerprint(7)` in the browser). A change here means the
        // stream, the draw order or the arithmetic changed: re-pin only on purpose.
        assert_eq!(monte_carlo_fingerprint(7), PINNED_FINGERPRINT_SEED_7);
        assert_ne!(monte_carlo_fingerprint(7), monte_carlo_fingerprint(8));
    }

    const PINNED_FINGERPRINT_SEED_7: u64 = 0x1920_1c3e_1a25_1469;

    #[test]
    fn a_result_names_its_sampler_and_one_kept_before_reads_as_the_polar_method() {
        let r = monte_carlo(&circuit(), &settings(200)).unwrap();
        assert_eq!(r.normal_sampler, crate::rng::NORMAL_SAMPLER);
        let mut v = serde_json::to_value(&r).unwrap();
        assert_eq!(v["normal_sampler"], serde_json::json!(crate::rng::NORMAL_SAMPLER));
        v.as_object_mut().unwrap().remove("normal_sampler");
        let kept_before: MonteCarloResult = serde_json::from_value(v).unwrap();
        assert_eq!(kept_before.normal_sampler, 1);
        assert_eq!(MonteCarloResult { normal_sampler: crate::rng::NORMAL_SAMPLER, ..kept_before }, r);
    }

    #[test]
    fn slices_merged_in_order_equal_one_run() {
        let run = MonteCarloRun::new(&circuit(), &settings(1000)).unwrap();
        let whole = run.finish(&run.run(0, 1000).unwrap()).unwrap();
        let mut acc = run.run(0, 0).unwrap();
        for (a, b) in [(0, 1), (1, 250), (250, 251), (251, 999), (999, 1000)] {
            acc.merge(run.run(a, b).unwrap()).unwrap();
        }
        assert_eq!(run.finish(&acc).unwrap(), whole);
    }

    #[test]
    fn out_of_order_or_incomplete_runs_are_refused() {
        let run = MonteCarloRun::new(&circuit(), &settings(100)).unwrap();
        let mut a = run.run(0, 50).unwrap();
        assert!(a.merge(run.run(60, 100).unwrap()).is_err());
        assert!(run.finish(&a).is_err());
        assert!(run.run(90, 101).is_err());
        assert!(run.run(50, 40).is_err());
    }

    #[test]
    fn trial_matches_the_run() {
        let run = MonteCarloRun::new(&circuit(), &settings(20)).unwrap();
        let p = run.run(0, 20).unwrap();
        for i in 0..20 {
            let t = run.trial(i).unwrap();
            assert_eq!(t.vt_upper_v.to_bits(), p.vt_upper_v[i as usize].to_bits());
        }
    }

    #[test]
    fn neighbouring_seeds_do_not_share_trials() {
        let mut s = settings(10);
        let a = MonteCarloRun::new(&circuit(), &s)
            .unwrap()
            .run(0, 10)
            .unwrap();
        s.monte_carlo.seed += 1;
        let b = MonteCarloRun::new(&circuit(), &s)
            .unwrap()
            .run(0, 10)
            .unwrap();
        for x in &a.vt_upper_v {
            assert!(!b.vt_upper_v.contains(x));
        }
    }

    #[test]
    fn yield_counts_the_window() {
        let r = monte_carlo(&circuit(), &settings(2000)).unwrap();
        let y = r.spec_yield.unwrap();
        assert!(y.fraction > 0.0 && y.fraction < 1.0, "{}", y.fraction);
        assert!(
            (y.standard_error - (y.fraction * (1.0 - y.fraction) / 2000.0).sqrt()).abs() < 1e-15
        );
        let broken: u64 = y.violations.iter().map(|v| v.trials).sum();
        assert!(broken >= 2000 - y.inside_trials);
    }
}
