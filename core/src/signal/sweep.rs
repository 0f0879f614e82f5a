//! Noise sweep: false edges versus noise level, for the design and for the plain comparator on
//! the same signal, to show the noise level at which the design starts to fail.
//!
//! The sweep noise is generated once at 1 V RMS and scaled for each level (the generators are
//! linear in their RMS), so every level sees the same noise shape (common random numbers): the
//! curve is smooth and a level's result does not depend on which other levels were asked for.
//! Beside each simulated count stand the predictions of [`super::rice`]: the hysteresis bound
//! for the design and the no-hysteresis expectation for the comparator, summed over the intended
//! edges with each edge's own slope.
//!
//! **Through an input network.** When the study runs at the field terminal (the context's
//! [`SweepContext::front`], see [`crate::input_network::noise::FrontEnd`]), every level's samples
//! — the unfiltered base plus the scaled unit noise — pass the network's clamp and filter before
//! the triggers, exactly as the study's own samples do, and the Rice terms use the noise's
//! spectral moments after the filter. The base handed to [`SweepRunner::point`] must then be the
//! signal before the network (the clamp is not linear, so noise and signal cannot be filtered
//! apart).

use super::generate::SignalDefinition;
use super::noise::{add_noise, source_seed, NoiseSource};
use super::rice;
use super::trigger::{compare_edges, run_trigger, Edge, EdgeComparison, TimingModel, TriggerDesign};
use crate::error::{positive, DesignError};
use serde::{Deserialize, Serialize};

/// The kind of noise the sweep adds.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SweepNoise {
    /// White Gaussian noise (flat to half the sample rate).
    White,
    /// Gaussian noise through `poles` first-order low-pass stages at `corner_hz`.
    BandLimited {
        /// Corner frequency, hertz.
        corner_hz: f64,
        /// Number of stages, 1 to 4.
        poles: u8,
    },
}

/// Settings of the noise sweep.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SweepSettings {
    /// Noise added at each level.
    pub noise: SweepNoise,
    /// Lowest RMS level, volts (`None`: the design's hysteresis / 300).
    pub min_rms_v: Option<f64>,
    /// Highest RMS level, volts (`None`: the design's hysteresis).
    pub max_rms_v: Option<f64>,
    /// Number of levels, 1 to 200.
    pub steps: usize,
    /// Space the levels logarithmically (true) or linearly.
    pub logarithmic: bool,
    /// Keep the signal's own noise sources under the sweep noise (true), or sweep alone.
    pub keep_other_noise: bool,
    /// The design "fails" at the first level whose false edges per intended edge exceed this.
    pub fail_above_false_edges_per_edge: f64,
}

impl Default for SweepSettings {
    fn default() -> Self {
        SweepSettings {
            noise: SweepNoise::White,
            min_rms_v: None,
            max_rms_v: None,
            steps: 16,
            logarithmic: true,
            keep_other_noise: false,
            fail_above_false_edges_per_edge: 0.0,
        }
    }
}

/// One sweep level.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SweepPoint {
    /// RMS of the sweep noise, volts.
    pub noise_rms_v: f64,
    /// The design's edges against its intended edges.
    pub design: EdgeComparison,
    /// The comparator's edges against its own intended edges.
    pub baseline: EdgeComparison,
    /// Rice bound on the design's false edges (sum over intended edges).
    pub design_bound_false_edges: f64,
    /// Expected comparator false edges without hysteresis (2 per wrong-way crossing, summed).
    pub baseline_expected_false_edges: f64,
}

/// The whole sweep.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepResult {
    /// One entry per level, ascending.
    pub points: Vec<SweepPoint>,
    /// First level at which the design fails (see [`SweepSettings::fail_above_false_edges_per_edge`]).
    pub design_fails_at_rms_v: Option<f64>,
    /// First level at which the comparator fails.
    pub baseline_fails_at_rms_v: Option<f64>,
}

/// The levels the sweep visits, for a design of hysteresis `hysteresis_v`.
pub fn sweep_levels(s: &SweepSettings, hysteresis_v: f64) -> Result<Vec<f64>, DesignError> {
    let h = if hysteresis_v > 0.0 { hysteresis_v } else { 0.3 };
    let lo = s.min_rms_v.unwrap_or(h / 300.0);
    let hi = s.max_rms_v.unwrap_or(h);
    positive("sweep.min_rms_v", lo)?;
    positive("sweep.max_rms_v", hi)?;
    crate::limits::check(crate::limits::Quantity::Voltage, "sweep.min_rms_v", lo)?;
    crate::limits::check(crate::limits::Quantity::Voltage, "sweep.max_rms_v", hi)?;
    crate::error::non_negative("sweep.fail_above_false_edges_per_edge", s.fail_above_false_edges_per_edge)?;
    if hi < lo {
        return Err(DesignError::invalid("sweep.max_rms_v", "must not be below min_rms_v"));
    }
    if s.steps == 0 || s.steps > 200 {
        return Err(DesignError::invalid("sweep.steps", format!("must be 1 to 200 (got {})", s.steps)));
    }
    if s.steps == 1 {
        return Ok(vec![lo]);
    }
    let n = (s.steps - 1) as f64;
    Ok((0..s.steps)
        .map(|i| {
            let f = i as f64 / n;
            if s.logarithmic {
                lo * libm::pow(hi / lo, f)
            } else {
                lo + (hi - lo) * f
            }
        })
        .collect())
}

/// Everything one sweep needs, prepared once.
pub struct SweepContext<'a> {
    /// The signal (its components; its own noise when kept).
    pub definition: &'a SignalDefinition,
    /// The design.
    pub design: TriggerDesign,
    /// The plain comparator.
    pub baseline: TriggerDesign,
    /// Timing.
    pub timing: TimingModel,
    /// The design's edges on the noise-free signal.
    pub intended: &'a [Edge],
    /// The comparator's edges on the noise-free signal.
    pub intended_baseline: &'a [Edge],
    /// Matching window for the design, seconds.
    pub window_s: f64,
    /// Matching window for the comparator, seconds.
    pub window_baseline_s: f64,
    /// The input network's clamp and filter, applied to each level's samples before the
    /// triggers (`None`: the samples reach the trigger as they are).
    pub front: Option<crate::input_network::noise::FrontEnd>,
}

/// The sweep prepared level by level: the levels, the unit noise (generated once, so every level
/// sees the same noise shape) and the Rice terms. [`run_sweep`] runs every level in order; a
/// caller that wants progress, or wants to spread the levels over several workers, calls
/// [`SweepRunner::point`] for any subset of levels and [`finish_sweep`] on all the points in
/// level order: each level's point depends only on its index, so the result is identical.
pub struct SweepRunner {
    levels: Vec<f64>,
    unit_v: Vec<f64>,
    s0_unit: f64,
    s1_unit: f64,
    kept: (f64, f64),
}

impl SweepRunner {
    /// Validates the settings and generates the unit noise for a signal of `samples` samples.
    pub fn new(ctx: &SweepContext<'_>, settings: &SweepSettings, samples: usize) -> Result<Self, DesignError> {
        let def = ctx.definition;
        let levels = sweep_levels(settings, ctx.design.thresholds.hysteresis_v())?;
        let unit = match settings.noise {
            SweepNoise::White => NoiseSource::White { rms_v: 1.0 },
            SweepNoise::BandLimited { corner_hz, poles } => NoiseSource::BandLimited { rms_v: 1.0, corner_hz, poles },
        };
        unit.validate(def.sample_rate_hz)?;
        let mut unit_v = vec![0.0; samples];
        add_noise(&unit, source_seed(def.seed, def.noise.len()), def.step_s(), &mut unit_v);
        // Gaussian moments per volt of sweep noise, plus the kept sources' own, as the trigger
        // sees them: flat to half the sample rate, through the network's filter when there is one.
        let moments = |s: &NoiseSource| match &ctx.front {
            Some(f) => f.moments(s, def.sample_rate_hz / 2.0),
            None => s.gaussian_moments(def.sample_rate_hz),
        };
        let (s0_filtered, s1_unit) = moments(&unit).unwrap_or((1.0, 0.0));
        // Without a filter the level is the RMS the trigger sees (σ0 per volt is 1, as before).
        let s0_unit = if ctx.front.is_some_and(|f| f.corner_hz().is_some()) { s0_filtered } else { 1.0 };
        let kept = if settings.keep_other_noise {
            rice::combine_moments(def.noise.iter().filter_map(moments))
        } else {
            (0.0, 0.0)
        };
        Ok(SweepRunner { levels, unit_v, s0_unit, s1_unit, kept })
    }

    /// The RMS levels, volts, ascending.
    pub fn levels(&self) -> &[f64] {
        &self.levels
    }

    /// The point of level `index` (an error when there is no such level). `base_v` is the signal
    /// the sweep noise is added to (before the input network, when the context has one: see the
    /// module documentation); `scratch_v` and `edges` are reused between calls.
    pub fn point(
        &self,
        ctx: &SweepContext<'_>,
        index: usize,
        base_v: &[f64],
        scratch_v: &mut Vec<f64>,
        edges: &mut Vec<Edge>,
    ) -> Result<SweepPoint, DesignError> {
        let Some(&level) = self.levels.get(index) else {
            return Err(DesignError::invalid("sweep.steps", format!("level {index} is not among the {} levels", self.levels.len())));
        };
        let def = ctx.definition;
        scratch_v.resize(base_v.len(), 0.0);
        for ((o, b), u) in scratch_v.iter_mut().zip(base_v).zip(&self.unit_v) {
            *o = b + level * u;
        }
        if let Some(f) = &ctx.front {
            f.apply(def.time_base().view(), scratch_v);
        }
        run_trigger(&ctx.design, &ctx.timing, def.time_base().view(), scratch_v, edges);
        let design = compare_edges(edges, ctx.intended, ctx.window_s);
        run_trigger(&ctx.baseline, &ctx.timing, def.time_base().view(), scratch_v, edges);
        let baseline = compare_edges(edges, ctx.intended_baseline, ctx.window_baseline_s);
        let h = ctx.design.thresholds.hysteresis_v();
        let (s0, s1) = rice::combine_moments([(level * self.s0_unit, level * self.s1_unit), self.kept]);
        let bound: f64 = ctx.intended.iter().map(|e| rice::false_edges_per_edge_bound(h, e.slope_v_per_s, s0, s1)).sum();
        let expected: f64 =
            ctx.intended_baseline.iter().map(|e| 2.0 * rice::wrong_way_crossings_no_hysteresis(e.slope_v_per_s, s1)).sum();
        Ok(SweepPoint {
            noise_rms_v: level,
            design,
            baseline,
            design_bound_false_edges: if bound.is_finite() { bound } else { f64::MAX },
            baseline_expected_false_edges: if expected.is_finite() { expected } else { f64::MAX },
        })
    }
}

/// The sweep result from every level's point, in level order: the first level at which the design
/// (and the comparator) fails.
pub fn finish_sweep(settings: &SweepSettings, points: Vec<SweepPoint>) -> SweepResult {
    let per = |c: &EdgeComparison| c.false_edges as f64 / c.intended_edges.max(1) as f64;
    let limit = settings.fail_above_false_edges_per_edge;
    let design_fails_at_rms_v = points.iter().find(|p| per(&p.design) > limit).map(|p| p.noise_rms_v);
    let baseline_fails_at_rms_v = points.iter().find(|p| per(&p.baseline) > limit).map(|p| p.noise_rms_v);
    SweepResult { points, design_fails_at_rms_v, baseline_fails_at_rms_v }
}

/// Runs the sweep. `base_v` is the signal the sweep noise is added to (the noise-free sum, or the
/// signal with its own noise when kept; before the input network when the context has one);
/// `scratch` is reused for each level's noisy signal.
pub fn run_sweep(
    ctx: &SweepContext<'_>,
    settings: &SweepSettings,
    base_v: &[f64],
    scratch_v: &mut Vec<f64>,
    edges: &mut Vec<Edge>,
) -> Result<SweepResult, DesignError> {
    let runner = SweepRunner::new(ctx, settings, base_v.len())?;
    let points = (0..runner.levels().len())
        .map(|i| runner.point(ctx, i, base_v, scratch_v, edges))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(finish_sweep(settings, points))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_are_spaced_as_asked() {
        let s = SweepSettings { min_rms_v: Some(1e-3), max_rms_v: Some(1.0), steps: 4, ..Default::default() };
        let l = sweep_levels(&s, 0.5).unwrap();
        assert_eq!(l.len(), 4);
        assert!((l[1] - 1e-2).abs() < 1e-15 && (l[3] - 1.0).abs() < 1e-12);
        let s = SweepSettings { logarithmic: false, ..s };
        assert!((sweep_levels(&s, 0.5).unwrap()[1] - 0.334).abs() < 1e-12);
        assert!(sweep_levels(&SweepSettings { steps: 0, ..s }, 0.5).is_err());
        assert!(sweep_levels(&SweepSettings { min_rms_v: Some(2.0), ..s }, 0.5).is_err());
    }
}
