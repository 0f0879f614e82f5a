//! The statistics of a Monte Carlo run's figures: mean and sample standard deviation (JCGM
//! 101:2008 §7.6), extremes, the 95 % probabilistically symmetric coverage interval (§7.7) found
//! exactly by order statistics without sorting, and a histogram for plotting. Each figure is one
//! pass for the sum and extremes, one for the squared deviations and both sets of bins, and one
//! to collect the few values in the bins that hold the interval's ranks.
//!
//! Tried and dropped: the four figures in shared passes (their sums side by side) measured no
//! faster on the bench (the passes are bound by the bin arithmetic, not by the chains of
//! additions) and would make every statistics worker compute all four.

use super::Figure;
use crate::error::DesignError;
use serde::{Deserialize, Serialize};

/// Counts of M values in equal bins between their minimum and maximum, for plotting.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Histogram {
    /// Left edge of the first bin (the smallest value), volts.
    pub lower_v: f64,
    /// Right edge of the last bin (the largest value, included in the last bin), volts.
    pub upper_v: f64,
    /// Width of each bin, volts (0 when every value is the same; then all counts are in bin 0).
    pub bin_width_v: f64,
    /// Number of values in each bin.
    pub counts: Vec<u64>,
}

/// Summary of the M values of one figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SampleStatistics {
    /// Arithmetic mean, volts (JCGM 101:2008 §7.6).
    pub mean_v: f64,
    /// Sample standard deviation with M − 1 in the denominator, volts (§7.6).
    pub standard_deviation_v: f64,
    /// Smallest value, volts.
    pub min_v: f64,
    /// Largest value, volts.
    pub max_v: f64,
    /// Lower end of the 95 % probabilistically symmetric coverage interval, the r-th order
    /// statistic (§7.7), volts.
    pub interval_95_low_v: f64,
    /// Upper end, the (r + q)-th order statistic, volts.
    pub interval_95_high_v: f64,
    /// Histogram for plotting.
    pub histogram: Histogram,
}

/// Some figures' statistics of a Monte Carlo run: the answer to `jobs::Job::MonteCarloStatistics`
/// (see `crate::job_rounds`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FiguresPart {
    /// The figures, in the order asked for.
    pub figures: Vec<Figure>,
    /// Their statistics, one per figure, in the same order.
    pub statistics: Vec<SampleStatistics>,
}

/// Most histogram bins a statistics job accepts (the settings' own limit).
const MAX_BINS: usize = 1000;

/// Refuses statistics that cannot give a result: no figure, a figure named twice, not one array
/// of values per figure, arrays of different lengths or with fewer than two values, or bins
/// outside 1…1000.
pub fn check_statistics_inputs(figure_values: &[Vec<f64>], figures: &[Figure], bins: usize) -> Result<(), DesignError> {
    let n = figure_values.first().map_or(0, Vec::len);
    let twice = figures.iter().enumerate().any(|(i, f)| figures[..i].contains(f));
    let reason = if figures.is_empty() {
        Some("no figure to compute statistics for: name at least one".to_string())
    } else if twice {
        Some("a figure is named twice: name each figure once".to_string())
    } else if figure_values.len() != figures.len() {
        Some(format!("{} arrays of values for {} figures: send one per figure", figure_values.len(), figures.len()))
    } else if let Some(v) = figure_values.iter().find(|v| v.len() != n) {
        Some(format!("the figures' values do not pair up: {n} values against {}", v.len()))
    } else if n < 2 {
        Some(format!("statistics need at least two valid trials (got {n})"))
    } else if bins == 0 || bins > MAX_BINS {
        Some(format!("histogram bins must be from 1 to {MAX_BINS} (got {bins})"))
    } else {
        None
    };
    reason.map_or(Ok(()), |reason| Err(DesignError::Parameter { reason }))
}

/// One trial's value of `figure` from its VT+ and VT−: the hysteresis VT+ − VT−, the centre
/// (VT+ + VT−)/2. The one place these are computed, so that values derived on a worker and on the
/// page are the same to the bit.
#[inline(always)]
pub fn figure_value(figure: Figure, upper_v: f64, lower_v: f64) -> f64 {
    match figure {
        Figure::VtUpper => upper_v,
        Figure::VtLower => lower_v,
        Figure::Hysteresis => upper_v - lower_v,
        Figure::Centre => 0.5 * (upper_v + lower_v),
    }
}

/// Every trial's value of `figure` (see [`figure_value`]), in trial order.
pub fn figure_array(figure: Figure, upper: &[f64], lower: &[f64]) -> Vec<f64> {
    upper.iter().zip(lower).map(|(&u, &l)| figure_value(figure, u, l)).collect()
}

/// The statistics of one figure's values, in trial order: what [`figure_statistics`] gives for
/// that figure when `values` are its [`figure_array`].
pub fn value_statistics(values: &[f64], bins: usize) -> SampleStatistics {
    statistics(values, &mut [Vec::new(), Vec::new()], bins.max(1))
}

/// `t` truncated towards zero to an index, at most `last` (NaN and negative values give 0): what
/// `(t as usize).min(last)` gives for every `t` when `last` is below 2³¹, through a signed 32-bit
/// conversion — one instruction on x86-64 and in WebAssembly, where the saturating unsigned 64-bit
/// conversion takes several (it was a third of the statistics' time, `perf` on the bench).
#[inline(always)]
fn index_at_most(t: f64, last: usize) -> usize {
    ((t as i32).max(0) as usize).min(last)
}

/// The statistics of `figures` over trials whose VT+ and VT− are `upper` and `lower` (the valid
/// trials, in trial order; the hysteresis VT+ − VT− and the centre (VT+ + VT−)/2 of each trial),
/// one per figure asked for, in the order asked: mean and sample standard deviation (JCGM
/// 101:2008 §7.6), extremes, the 95 % probabilistically symmetric coverage interval (§7.7) and a
/// histogram of `bins` equal bins (at least 1). Each figure's statistics depend only on the values,
/// so computing the figures in several calls (on several workers) gives exactly what one call gives.
pub fn figure_statistics(upper: &[f64], lower: &[f64], figures: &[Figure], bins: usize) -> Vec<SampleStatistics> {
    let bins = bins.max(1);
    let m = upper.len().min(lower.len());
    let (upper, lower) = (&upper[..m], &lower[..m]);
    let mut scratch = [Vec::new(), Vec::new()];
    let mut derived = Vec::new();
    figures
        .iter()
        .map(|f| {
            let values: &[f64] = match f {
                Figure::VtUpper => upper,
                Figure::VtLower => lower,
                derived_figure => {
                    derived.clear();
                    derived.extend(upper.iter().zip(lower).map(|(&u, &l)| figure_value(*derived_figure, u, l)));
                    &derived
                }
            };
            statistics(values, &mut scratch, bins)
        })
        .collect()
}

/// Indices (0-based) of the order statistics that bound the 95 % probabilistically symmetric
/// coverage interval of M sorted values: q = ⌊0.95·M + ½⌋, r = (M − q)/2 when M − q is even and
/// (M − q + 1)/2 otherwise, interval [y₍r₎, y₍r+q₎] (JCGM 101:2008 §7.7, from memory). For small
/// M, r is at least 1 and r + q at most M.
pub fn coverage_indices(m: usize) -> (usize, usize) {
    let q = ((0.95 * m as f64) + 0.5).floor() as usize;
    let r = (m - q.min(m)).div_ceil(2);
    let r = r.max(1);
    let hi = (r + q).min(m).max(r);
    (r - 1, hi - 1)
}

/// Fine bins for locating order statistics: the bin index is monotonic in the value.
struct FineBins {
    min: f64,
    scale: f64,
    last: usize,
}

impl FineBins {
    fn new(n: usize, min: f64, max: f64) -> Self {
        let nb = (n / 8).clamp(1, 4096);
        let scale = if max > min {
            nb as f64 / (max - min)
        } else {
            0.0
        };
        FineBins {
            min,
            scale,
            last: nb - 1,
        }
    }

    fn bin(&self, x: f64) -> usize {
        index_at_most((x - self.min) * self.scale, self.last)
    }
}

/// For each rank (0-based, among all values sorted), the fine bin that holds it and its rank
/// within that bin, from the fine-bin counts.
fn rank_bins(counts: &[usize], ranks: [usize; 2]) -> [(usize, usize); 2] {
    let mut targets = [(0usize, 0usize); 2];
    for (target, &rank) in targets.iter_mut().zip(&ranks) {
        let mut before = 0;
        for (b, &c) in counts.iter().enumerate() {
            if before + c > rank {
                *target = (b, rank - before);
                break;
            }
            before += c;
        }
    }
    targets
}

/// The value of each target's rank among the candidates collected from its bin (`fallback` when
/// a bin came out short, which exact counts never give).
fn select_ranks(candidates: &mut [Vec<f64>; 2], targets: &[(usize, usize); 2], fallback: f64) -> [f64; 2] {
    let mut out = [fallback; 2];
    for ((o, t), v) in out.iter_mut().zip(targets).zip(candidates.iter_mut()) {
        if t.1 < v.len() {
            *o = *v.select_nth_unstable_by(t.1, f64::total_cmp).1;
        }
    }
    out
}

/// The values of ranks `ranks` (0-based) among `values` sorted by `f64::total_cmp`, without sorting:
/// with the fine-bin counts, find the bin holding each rank, then select within that bin's few
/// values. Exact, and faster than a selection over all values.
fn order_statistics(
    values: &[f64],
    fine: &FineBins,
    counts: &[usize],
    ranks: [usize; 2],
    scratch: &mut [Vec<f64>; 2],
) -> [f64; 2] {
    let targets = rank_bins(counts, ranks);
    for v in scratch.iter_mut() {
        v.clear();
    }
    for &x in values {
        let b = fine.bin(x);
        for (t, v) in targets.iter().zip(scratch.iter_mut()) {
            if b == t.0 {
                v.push(x);
            }
        }
    }
    select_ranks(scratch, &targets, fine.min)
}

/// One figure's statistics, value by value in the order given.
fn statistics(values: &[f64], scratch: &mut [Vec<f64>; 2], bins: usize) -> SampleStatistics {
    let n = values.len() as f64;
    let (mut sum, mut min, mut max) = (0.0, f64::INFINITY, f64::NEG_INFINITY);
    for &x in values {
        sum += x;
        if x < min {
            min = x;
        }
        if x > max {
            max = x;
        }
    }
    let mean = sum / n;
    // One pass for the squared deviations, the fine bins and the plotted histogram.
    let fine = FineBins::new(values.len(), min, max);
    let mut fine_counts = vec![0usize; fine.last + 1];
    let mut counts = vec![0u64; bins];
    let width = (max - min) / bins as f64;
    let mut ss = 0.0;
    for &x in values {
        ss += (x - mean) * (x - mean);
        fine_counts[fine.bin(x)] += 1;
        let i = if width > 0.0 {
            index_at_most((x - min) / width, bins - 1)
        } else {
            0
        };
        counts[i] += 1;
    }
    let sd = (ss / (n - 1.0)).sqrt();
    let (lo_i, hi_i) = coverage_indices(values.len());
    let [lo, hi] = if max > min {
        order_statistics(values, &fine, &fine_counts, [lo_i, hi_i], scratch)
    } else {
        [min, min]
    };
    SampleStatistics {
        mean_v: mean,
        standard_deviation_v: sd,
        min_v: min,
        max_v: max,
        interval_95_low_v: lo,
        interval_95_high_v: hi,
        histogram: Histogram {
            lower_v: min,
            upper_v: max,
            bin_width_v: width.max(0.0),
            counts,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::Rng;

    #[test]
    fn coverage_indices_follow_jcgm_101() {
        // JCGM 101:2008 §7.7 (from memory): M = 10⁵, p = 0.95 → q = 95 000, r = 2 500:
        // [y₂₅₀₀, y₉₇₅₀₀] (1-based).
        assert_eq!(coverage_indices(100_000), (2_499, 97_499));
        // M = 1001: q = ⌊950.95 + ½⌋ = 951, M − q = 50 even, r = 25 → [y₂₅, y₉₇₆].
        assert_eq!(coverage_indices(1001), (24, 975));
        // M = 1000: q = 950, M − q = 50, r = 25 → [y₂₅, y₉₇₅].
        assert_eq!(coverage_indices(1000), (24, 974));
        assert_eq!(coverage_indices(2), (0, 1));
    }

    #[test]
    fn order_statistics_equal_those_of_a_full_sort() {
        let mut rng = Rng::new(3);
        let mut scratch = [Vec::new(), Vec::new()];
        for n in [2usize, 3, 17, 100, 1001, 20_000] {
            // Heavy ties and a wide spread, to exercise crowded and empty bins.
            let v: Vec<f64> = (0..n)
                .map(|i| {
                    if i % 5 == 0 {
                        1.5
                    } else {
                        rng.normal().powi(3)
                    }
                })
                .collect();
            let mut sorted = v.clone();
            sorted.sort_by(f64::total_cmp);
            let (a, b) = coverage_indices(n);
            let s = statistics(&v, &mut scratch, 7);
            assert_eq!(
                [s.interval_95_low_v, s.interval_95_high_v],
                [sorted[a], sorted[b]],
                "n = {n}"
            );
            assert_eq!((s.min_v, s.max_v), (sorted[0], sorted[n - 1]));
        }
        let s = statistics(&[2.0; 10], &mut scratch, 7);
        assert_eq!(
            (
                s.interval_95_low_v,
                s.interval_95_high_v,
                s.standard_deviation_v
            ),
            (2.0, 2.0, 0.0)
        );
        assert_eq!(s.histogram.counts[0], 10);
    }

    #[test]
    fn statistics_of_a_known_sample() {
        let v: Vec<f64> = (1..=100).map(f64::from).collect();
        let mut scratch = [Vec::new(), Vec::new()];
        let s = statistics(&v, &mut scratch, 10);
        assert_eq!(s.mean_v, 50.5);
        // Sample SD of 1..=100: √(100·101/12) = 29.011...
        assert!((s.standard_deviation_v - (100.0f64 * 101.0 / 12.0).sqrt()).abs() < 1e-12);
        assert_eq!((s.min_v, s.max_v), (1.0, 100.0));
        // M = 100: q = 95, r = 3 (M − q = 5 odd) → [y₃, y₉₈].
        assert_eq!((s.interval_95_low_v, s.interval_95_high_v), (3.0, 98.0));
        assert_eq!(s.histogram.counts.iter().sum::<u64>(), 100);
        assert_eq!(s.histogram.counts[9], 10);
    }

    /// The signed 32-bit index conversion gives what the unsigned 64-bit one gives, wherever an
    /// index can come from: inside the range, at its ends, beyond it, negative, NaN, infinite.
    #[test]
    fn index_at_most_equals_the_unsigned_conversion() {
        let mut rng = Rng::new(5);
        let mut cases = vec![0.0, -0.0, 0.5, 0.999_999, 1.0, 4095.0, 4095.999, 4096.0, 4096.5, 1e9, 3e9, 1e300, -1e-300, -0.5, -1.0, -1e300];
        cases.extend([f64::NAN, f64::INFINITY, f64::NEG_INFINITY, f64::MIN_POSITIVE, f64::EPSILON, 2f64.powi(31), 2f64.powi(31) - 1.0, 2f64.powi(32)]);
        cases.extend((0..10_000).map(|_| 5000.0 * rng.uniform() - 500.0));
        for &t in &cases {
            for last in [0usize, 1, 6, 999, 4095] {
                assert_eq!(index_at_most(t, last), (t as usize).min(last), "t = {t}, last = {last}");
            }
        }
    }
}
