//! Combined standard uncertainty of the switching figures by the GUM law of propagation of
//! uncertainty (JCGM 100:2008 §5.1.2, from memory), for independent inputs:
//!
//! u_c²(y) = Σ cᵢ² u²(xᵢ), cᵢ = ∂f/∂xᵢ at the input estimates (the band centres),
//!
//! with cᵢ from [`crate::topology::sensitivities`] (central differences). Each varied parameter gives
//! one input for its tolerance — rectangular ±a: u = a/√3 (§4.3.7); normal with the tolerance at
//! k = 3: u = a/3 — and, for parts with a temperature coefficient, a second, rectangular input for
//! its drift (TC × ΔT_max × |centre|). The expanded uncertainty is U = k·u_c with k = 2 (§6.2.1,
//! §6.3.3), which covers about 95 % only when the output is close to normal; the Monte Carlo
//! interval is the check (JCGM 101:2008). Correlations between inputs (matched resistor networks,
//! one reference feeding two dividers) are not modelled: every input is independent.

use super::{Figure, Prepared, ToleranceSettings};
use crate::error::DesignError;
use crate::topology::{Circuit, ParameterKind};
use serde::{Deserialize, Serialize};

use super::settings::Distribution;

/// Coverage factor of the expanded uncertainty.
pub const COVERAGE_FACTOR: f64 = 2.0;

/// Whether an input is a part's tolerance or its temperature drift.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SourceKind {
    /// Initial tolerance (or datasheet spread) at 25 °C.
    Tolerance,
    /// Drift over the temperature range, rectangular.
    Drift,
}

/// One input quantity of the uncertainty evaluation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct UncertaintySource {
    /// Parameter identifier.
    pub id: String,
    /// Part designator, for resistors.
    pub designator: Option<String>,
    /// Plain label of the parameter.
    pub label: String,
    /// Kind of parameter.
    pub kind: ParameterKind,
    /// Tolerance or drift.
    pub source: SourceKind,
    /// Distribution of this input (drift is always uniform).
    pub distribution: Distribution,
    /// Centre of the parameter's band, base units.
    pub centre: f64,
    /// Half-width a of the input's band, base units.
    pub half_width: f64,
    /// Standard uncertainty u(xᵢ), base units.
    pub standard_uncertainty: f64,
    /// Index of the parameter in [`crate::topology::Circuit::parameters`] order.
    pub parameter_index: usize,
}

/// One input's share of a figure's uncertainty.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Contribution {
    /// Index into [`GumReport::sources`].
    pub source: usize,
    /// Sensitivity coefficient cᵢ = ∂f/∂xᵢ, volts per base unit.
    pub sensitivity: f64,
    /// cᵢ·u(xᵢ), volts (signed: the direction the figure moves when the input rises).
    pub contribution_v: f64,
    /// Share of the variance, (cᵢ·u(xᵢ))² / u_c², from 0 to 1.
    pub variance_share: f64,
}

/// The uncertainty of one figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GumFigure {
    /// Estimate y = f(x̂) at the band centres, volts.
    pub estimate_v: f64,
    /// Combined standard uncertainty u_c(y), volts.
    pub combined_standard_uncertainty_v: f64,
    /// Expanded uncertainty U = k·u_c, volts.
    pub expanded_uncertainty_v: f64,
    /// Coverage factor k.
    pub coverage_factor: f64,
    /// Per-input contributions, in source order.
    pub contributions: Vec<Contribution>,
}

/// GUM evaluation of all four figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GumReport {
    /// The inputs: one per varied parameter's tolerance, one per drift.
    pub sources: Vec<UncertaintySource>,
    /// VT+.
    pub vt_upper: GumFigure,
    /// VT−.
    pub vt_lower: GumFigure,
    /// Hysteresis.
    pub hysteresis: GumFigure,
    /// Centre.
    pub centre: GumFigure,
}

impl GumReport {
    /// The evaluation of one figure.
    pub fn figure(&self, f: Figure) -> &GumFigure {
        match f {
            Figure::VtUpper => &self.vt_upper,
            Figure::VtLower => &self.vt_lower,
            Figure::Hysteresis => &self.hysteresis,
            Figure::Centre => &self.centre,
        }
    }
}

/// Standard uncertainty of a band of half-width `a`: a/√3 rectangular (JCGM 100:2008 §4.3.7),
/// a/3 for a normal distribution with the tolerance at k = 3.
pub fn standard_uncertainty(half_width: f64, distribution: Distribution) -> f64 {
    match distribution {
        Distribution::Uniform => half_width / 3f64.sqrt(),
        Distribution::Normal => half_width / 3.0,
    }
}

/// GUM evaluation of a circuit's figures under the settings' bands.
pub fn gum<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<GumReport, DesignError> {
    Ok(from_prepared(&Prepared::new(circuit, settings)?))
}

pub(crate) fn sources<C: Circuit>(prep: &Prepared<C>) -> Vec<UncertaintySource> {
    let mut out = Vec::new();
    for (i, b) in prep.bands.iter().enumerate() {
        let p = &b.parameter;
        let mut push = |source, distribution, half_width: f64| {
            out.push(UncertaintySource {
                id: p.id.clone(),
                designator: p.designator.clone(),
                label: p.label.clone(),
                kind: p.kind,
                source,
                distribution,
                centre: b.centre,
                half_width,
                standard_uncertainty: standard_uncertainty(half_width, distribution),
                parameter_index: i,
            })
        };
        if b.half_width > 0.0 {
            push(SourceKind::Tolerance, b.distribution, b.half_width);
        }
        if b.drift_half_width > 0.0 {
            push(SourceKind::Drift, Distribution::Uniform, b.drift_half_width);
        }
    }
    out
}

pub(crate) fn from_prepared<C: Circuit>(prep: &Prepared<C>) -> GumReport {
    let sources = sources(prep);
    let figure = |f: Figure| {
        let estimate_v = prep.centre.as_array()[f.index()];
        let mut contributions: Vec<Contribution> = sources
            .iter()
            .enumerate()
            .map(|(k, s)| {
                let c = prep.sensitivity(f, s.parameter_index);
                Contribution {
                    source: k,
                    sensitivity: c,
                    contribution_v: c * s.standard_uncertainty,
                    variance_share: 0.0,
                }
            })
            .collect();
        let variance: f64 = contributions
            .iter()
            .map(|c| c.contribution_v * c.contribution_v)
            .sum();
        let uc = variance.sqrt();
        if variance > 0.0 {
            for c in &mut contributions {
                c.variance_share = c.contribution_v * c.contribution_v / variance;
            }
        }
        GumFigure {
            estimate_v,
            combined_standard_uncertainty_v: uc,
            expanded_uncertainty_v: COVERAGE_FACTOR * uc,
            coverage_factor: COVERAGE_FACTOR,
            contributions,
        }
    };
    GumReport {
        vt_upper: figure(Figure::VtUpper),
        vt_lower: figure(Figure::VtLower),
        hysteresis: figure(Figure::Hysteresis),
        centre: figure(Figure::Centre),
        sources,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    fn resistors_only(distribution: Distribution) -> ToleranceSettings {
        ToleranceSettings {
            distribution,
            supply_tolerance_pct: 0.0,
            output_level_tolerance_v: 0.0,
            offset_v: Some(0.0),
            temperature_min_c: 25.0,
            temperature_max_c: 25.0,
            ..Default::default()
        }
    }

    #[test]
    fn rectangular_and_normal_standard_uncertainties() {
        // JCGM 100:2008 §4.3.7 (rectangular, a/√3) and a tolerance read at k = 3 (a/3).
        assert!(
            (standard_uncertainty(3.0, Distribution::Uniform) - 1.7320508075688772).abs() < 1e-15
        );
        assert_eq!(standard_uncertainty(3.0, Distribution::Normal), 1.0);
    }

    #[test]
    fn uniform_and_normal_differ_by_the_ratio_of_their_standard_uncertainties() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let u = gum(&c, &resistors_only(Distribution::Uniform)).unwrap();
        let n = gum(&c, &resistors_only(Distribution::Normal)).unwrap();
        let ratio =
            u.vt_upper.combined_standard_uncertainty_v / n.vt_upper.combined_standard_uncertainty_v;
        assert!((ratio - 3.0 / 3f64.sqrt()).abs() < 1e-9);
        assert_eq!(u.sources.len(), 3);
        let shares: f64 = u
            .vt_upper
            .contributions
            .iter()
            .map(|c| c.variance_share)
            .sum();
        assert!((shares - 1.0).abs() < 1e-12);
        assert!(
            (u.vt_upper.expanded_uncertainty_v - 2.0 * u.vt_upper.combined_standard_uncertainty_v)
                .abs()
                < 1e-18
        );
    }

    #[test]
    fn sensitivities_match_the_closed_form_partial_derivatives() {
        // DOMAIN §2 a: ∂VT/∂Rᵢ = (VT − Vᵢ)·Rp/Rᵢ², with Vᵢ the rail or output the resistor returns to.
        let (ra, rb, rf) = (10e3, 10e3, 20e3);
        let c = InvertingSchmitt::single_supply(ra, rb, rf, Comparator::ideal(5.0));
        let g = gum(&c, &resistors_only(Distribution::Uniform)).unwrap();
        let rp = 1.0 / (1.0 / ra + 1.0 / rb + 1.0 / rf);
        let vt = 3.0;
        let expect = [
            (vt - 5.0) * rp / (ra * ra),
            (vt - 0.0) * rp / (rb * rb),
            (vt - 5.0) * rp / (rf * rf),
        ];
        for (c, e) in g.vt_upper.contributions.iter().zip(expect) {
            assert!(
                (c.sensitivity - e).abs() < 1e-7 * e.abs(),
                "{} vs {e}",
                c.sensitivity
            );
        }
    }

    #[test]
    fn drift_is_its_own_rectangular_input() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = ToleranceSettings {
            temperature_min_c: 25.0,
            temperature_max_c: 75.0,
            ..resistors_only(Distribution::Normal)
        };
        let g = gum(&c, &s).unwrap();
        let drift: Vec<&UncertaintySource> = g
            .sources
            .iter()
            .filter(|s| s.source == SourceKind::Drift)
            .collect();
        assert_eq!(drift.len(), 3);
        // 100 ppm/K × 50 K × 10 kΩ = 50 Ω, u = 50/√3.
        assert!((drift[0].half_width - 50.0).abs() < 1e-9);
        assert_eq!(drift[0].distribution, Distribution::Uniform);
        assert!((drift[0].standard_uncertainty - 50.0 / 3f64.sqrt()).abs() < 1e-9);
    }
}
