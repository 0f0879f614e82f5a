//! Downsampling for plots: the minimum and maximum of the samples in each pixel-wide bucket of a
//! time window, so the page can zoom and pan over million-sample captures while drawing only a
//! few thousand points, without losing narrow spikes (every sample's value lies inside its
//! bucket's [min, max]).

use super::Times;
use serde::{Deserialize, Serialize};

/// Min/max envelope of a waveform over a time window, one entry per bucket.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Envelope {
    /// Start time of each bucket, seconds.
    pub t_s: Vec<f64>,
    /// Smallest sample in each bucket, volts.
    pub min_v: Vec<f64>,
    /// Largest sample in each bucket, volts.
    pub max_v: Vec<f64>,
}

impl Envelope {
    /// Number of buckets filled.
    pub fn len(&self) -> usize {
        self.t_s.len()
    }

    /// Whether no bucket holds a sample.
    pub fn is_empty(&self) -> bool {
        self.t_s.is_empty()
    }
}

/// Fills `out` (cleared first; reuse it to avoid allocation) with the min/max envelope of the
/// samples whose times lie in [`t_start_s`, `t_end_s`], split into `buckets` equal time buckets.
/// Empty buckets are left out. When the window holds no more samples than buckets, each sample
/// becomes its own entry (min = max = the sample). Cost: one pass over the samples in the window.
pub fn downsample_min_max(
    times: Times<'_>,
    volts: &[f64],
    t_start_s: f64,
    t_end_s: f64,
    buckets: usize,
    out: &mut Envelope,
) {
    out.t_s.clear();
    out.min_v.clear();
    out.max_v.clear();
    if volts.is_empty() || buckets == 0 || !(t_end_s >= t_start_s) || !t_start_s.is_finite() || !t_end_s.is_finite() {
        return;
    }
    let n = volts.len();
    let i0 = times.index_at_or_after(t_start_s, n);
    let mut i1 = times.index_at_or_after(t_end_s, n);
    if i1 < n && times.at(i1) <= t_end_s {
        i1 += 1;
    }
    if i0 >= i1 {
        return;
    }
    if i1 - i0 <= buckets {
        for (i, &v) in volts.iter().enumerate().take(i1).skip(i0) {
            out.t_s.push(times.at(i));
            out.min_v.push(v);
            out.max_v.push(v);
        }
        return;
    }
    let width = (t_end_s - t_start_s) / buckets as f64;
    let mut current: Option<usize> = None;
    for (i, &v) in volts.iter().enumerate().take(i1).skip(i0) {
        let t = times.at(i);
        let b = if width > 0.0 { (((t - t_start_s) / width) as usize).min(buckets - 1) } else { 0 };
        if current == Some(b) {
            let k = out.min_v.len() - 1;
            if v < out.min_v[k] {
                out.min_v[k] = v;
            }
            if v > out.max_v[k] {
                out.max_v[k] = v;
            }
        } else {
            current = Some(b);
            out.t_s.push(t_start_s + b as f64 * width);
            out.min_v.push(v);
            out.max_v.push(v);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn envelope_keeps_a_single_sample_spike() {
        let mut v = vec![0.0; 1_000_000];
        v[123_457] = 5.0;
        v[999_999] = -1.0;
        let times = Times::Uniform { start_s: 0.0, step_s: 1e-6 };
        let mut e = Envelope::default();
        downsample_min_max(times, &v, 0.0, 1.0, 800, &mut e);
        assert_eq!(e.len(), 800);
        assert_eq!(e.max_v.iter().cloned().fold(f64::MIN, f64::max), 5.0);
        assert_eq!(e.min_v[799], -1.0);
        // Zoomed in: only the window's samples, one per entry.
        downsample_min_max(times, &v, 0.123_400_5, 0.123_500_5, 800, &mut e);
        assert_eq!(e.len(), 100);
        assert!(e.t_s[0] >= 0.123_400_5 && *e.t_s.last().unwrap() <= 0.123_500_5);
    }

    #[test]
    fn explicit_times_and_empty_windows() {
        let t = [0.0, 0.5, 0.7, 2.0, 3.0];
        let v = [1.0, 2.0, 3.0, 4.0, 5.0];
        let mut e = Envelope::default();
        downsample_min_max(Times::Samples(&t), &v, 0.0, 3.0, 2, &mut e);
        assert_eq!(e.min_v, vec![1.0, 4.0]);
        assert_eq!(e.max_v, vec![3.0, 5.0]);
        downsample_min_max(Times::Samples(&t), &v, 5.0, 6.0, 2, &mut e);
        assert!(e.is_empty());
        downsample_min_max(Times::Samples(&t), &v, 1.0, f64::NAN, 2, &mut e);
        assert!(e.is_empty());
    }
}
