//! A signal run's waveforms reduced for display: samples are taken in buckets of ⌈2n / max_points⌉;
//! each bucket gives two points, at its first and last sample time, holding the bucket's minimum
//! and maximum in the order they occur — so a min/max plot of the reduced waveform equals that of
//! the full one at bucket resolution (the usual min/max decimation for plotting; common practice).
//! The two outputs are rendered from the edges a bucket at a time and reduced as they are made, so
//! a 10 M-sample study never holds them whole (two 80 MB arrays fewer).

use super::output_edges::LoadedOutputRenderer;
use super::report::{SignalRun, SignalSettings, Waveforms};
use super::trigger::{OutputRenderer, TimingModel, TriggerDesign};
use super::{TimeBase, Times};
use crate::error::DesignError;
use crate::output_dynamics::OutputDynamicsReport;

/// Writes the next samples of a waveform into the slice it is given.
type Fill<'a> = Box<dyn FnMut(&mut [f64]) + 'a>;

/// Samples per display bucket for `n` samples shown as at most `max_points` points (at least 2),
/// or `None` when the samples are few enough to be shown as they are.
pub fn display_bucket(n: usize, max_points: usize) -> Option<usize> {
    let max_points = max_points.max(2);
    (n > max_points).then(|| (2 * n).div_ceil(max_points).max(2))
}

/// Appends one bucket's points: its minimum and maximum in the order they occur (the first of
/// equal values), or its one sample.
fn push_bucket(chunk: &[f64], out: &mut Vec<f64>) {
    let Some(&first) = chunk.first() else { return };
    if chunk.len() == 1 {
        out.push(first);
        return;
    }
    let ((mut lo_at, mut lo), (mut hi_at, mut hi)) = ((0, first), (0, first));
    for (i, &x) in chunk.iter().enumerate() {
        if x < lo {
            (lo_at, lo) = (i, x);
        }
        if x > hi {
            (hi_at, hi) = (i, x);
        }
    }
    if lo_at <= hi_at {
        out.extend([lo, hi]);
    } else {
        out.extend([hi, lo]);
    }
}

/// `v` reduced in buckets of `bucket` samples (see the module documentation).
pub fn reduce_samples(v: &[f64], bucket: usize) -> Vec<f64> {
    let bucket = bucket.max(1);
    let mut out = Vec::with_capacity(2 * v.len().div_ceil(bucket));
    for chunk in v.chunks(bucket) {
        push_bucket(chunk, &mut out);
    }
    out
}

/// An `n`-sample waveform made a bucket at a time by `fill` (which writes the next samples into
/// the slice it is given) and reduced as it is made: equal to [`reduce_samples`] of the whole
/// waveform, holding one bucket of it at a time.
pub fn reduce_rendered(n: usize, bucket: usize, mut fill: impl FnMut(&mut [f64])) -> Vec<f64> {
    let bucket = bucket.max(1);
    let mut scratch = vec![0.0; bucket.min(n)];
    let mut out = Vec::with_capacity(2 * n.div_ceil(bucket));
    let mut start = 0;
    while start < n {
        let len = bucket.min(n - start);
        fill(&mut scratch[..len]);
        push_bucket(&scratch[..len], &mut out);
        start += len;
    }
    out
}

/// The times of the reduced points of `n` samples in buckets of `bucket`: each bucket's first
/// and (when it holds more than one sample) last sample time.
pub fn reduced_times(times: Times<'_>, n: usize, bucket: usize) -> Vec<f64> {
    let bucket = bucket.max(1);
    let mut out = Vec::with_capacity(2 * n.div_ceil(bucket));
    let mut start = 0;
    while start < n {
        let end = (start + bucket).min(n);
        out.push(times.at(start));
        if end - start > 1 {
            out.push(times.at(end - 1));
        }
        start = end;
    }
    out
}

/// The signal test with the input waveforms and the edges kept and the outputs left to
/// [`for_display`]: [`super::report::run_signal_waveforms`] with [`Waveforms::InputsAndEdges`].
pub fn run_unrendered(
    settings: &SignalSettings,
    design: &TriggerDesign,
    capture: Option<&super::csv::Capture>,
    front: Option<&crate::input_network::noise::FrontEnd>,
) -> Result<SignalRun, DesignError> {
    super::report::run_signal_waveforms(settings, design, capture, front, Waveforms::InputsAndEdges)
}

/// A run from [`run_unrendered`] (its outputs empty) made ready for display: the inputs reduced to
/// at most `max_points` points, and the two outputs rendered from the edges — the design's at the
/// load when `output` is given ([`super::output_edges::render_loaded_output`]), else as the
/// trigger gives it ([`super::trigger::render_output`]), the plain comparator's as the trigger
/// gives it — reduced the same way as they are made. The report and the edges stay whole. Equal
/// to [`crate::jobs::reduce_for_display`] of the same run with its outputs rendered in full.
pub fn for_display(
    run: SignalRun,
    settings: &SignalSettings,
    design: &TriggerDesign,
    output: Option<&OutputDynamicsReport>,
    max_points: usize,
) -> Result<SignalRun, DesignError> {
    let timing = TimingModel::new(&settings.timing)?;
    let baseline = design.comparator(run.report.baseline_level_v);
    let times = run.time.view();
    let n = run.signal_v.len();
    let (design_high, baseline_high) = (run.report.design.outcome.initial_output_high, run.report.baseline.outcome.initial_output_high);
    let mut design_wave: Fill<'_> = match output {
        Some(r) => {
            let mut w = LoadedOutputRenderer::new(r, times, design_high, &run.design_edges);
            Box::new(move |out| w.fill(times, out))
        }
        None => {
            let mut w = OutputRenderer::new(design, &timing, design_high, &run.design_edges);
            Box::new(move |out| w.fill(times, out))
        }
    };
    let mut baseline_wave = OutputRenderer::new(&baseline, &timing, baseline_high, &run.baseline_edges);
    let (time, clean_v, signal_v, design_output_v, baseline_output_v) = match display_bucket(n, max_points) {
        None => {
            let (mut d, mut b) = (vec![0.0; n], vec![0.0; n]);
            design_wave(&mut d);
            baseline_wave.fill(times, &mut b);
            drop(design_wave);
            (run.time, run.clean_v, run.signal_v, d, b)
        }
        Some(bucket) => {
            let d = reduce_rendered(n, bucket, &mut design_wave);
            let b = reduce_rendered(n, bucket, |out| baseline_wave.fill(times, out));
            drop(design_wave);
            let time = TimeBase::Samples { times_s: reduced_times(times, n, bucket) };
            (time, run.clean_v.as_deref().map(|c| reduce_samples(c, bucket)), reduce_samples(&run.signal_v, bucket), d, b)
        }
    };
    Ok(SignalRun {
        time,
        clean_v,
        signal_v,
        design_output_v,
        baseline_output_v,
        design_edges: run.design_edges,
        baseline_edges: run.baseline_edges,
        intended_edges: run.intended_edges,
        intended_baseline_edges: run.intended_baseline_edges,
        report: run.report,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::reduce_for_display;
    use crate::signal::output_edges::run_signal_chain;

    /// Rendering the outputs a bucket at a time and reducing them as they are made gives the same
    /// points, to the last bit, as rendering them whole and reducing afterwards — with and without
    /// output dynamics, with and without an input network, reduced or shown whole.
    #[test]
    fn reduced_as_made_equals_reduced_afterwards() {
        let mut checked_loaded = false;
        for demo in crate::catalog::demos() {
            let r = demo.record();
            let Some(mut s) = r.signal.clone() else { continue };
            s.definition.sample_rate_hz = s.definition.sample_rate_hz.min(200_000.0);
            s.definition.duration_s = s.definition.duration_s.min(0.05);
            s.sweep = None;
            let Ok((design, front)) = crate::input_network::from_record::signal_design(&r) else { continue };
            let output = crate::overview::dynamics(&r).0.and_then(|x| x.ok());
            checked_loaded |= output.is_some();
            let whole = run_signal_chain(&s, &design, None, front.as_ref(), output.as_ref()).expect("runs");
            let n = whole.signal_v.len();
            assert!(n > 1000, "{}: {n} samples", demo.key);
            for max_points in [n + 5, n, 997, 2] {
                let expect = reduce_for_display(whole.clone(), max_points);
                let bare = run_unrendered(&s, &design, None, front.as_ref()).expect("runs");
                assert!(bare.design_output_v.is_empty() && bare.baseline_output_v.is_empty());
                let got = for_display(bare, &s, &design, output.as_ref(), max_points).expect("display");
                assert_eq!(got, expect, "{} at {max_points} points", demo.key);
            }
        }
        assert!(checked_loaded, "no demo with output dynamics was checked");
    }

    /// Reduction keeps each bucket's extremes in time order and a short last bucket.
    #[test]
    fn buckets_keep_extremes_in_order() {
        assert_eq!(display_bucket(10, 10), None);
        assert_eq!(display_bucket(11, 10), Some(3));
        let v = [0.0, 3.0, -1.0, 2.0, 5.0, 4.0, 7.0];
        assert_eq!(reduce_samples(&v, 3), vec![3.0, -1.0, 2.0, 5.0, 7.0]);
        let mut at = 0;
        assert_eq!(reduce_rendered(v.len(), 3, |out: &mut [f64]| {
            out.copy_from_slice(&v[at..at + out.len()]);
            at += out.len();
        }), reduce_samples(&v, 3));
        let t = Times::Uniform { start_s: 1.0, step_s: 0.5 };
        assert_eq!(reduced_times(t, 7, 3), vec![1.0, 2.0, 2.5, 3.5, 4.0]);
    }
}
