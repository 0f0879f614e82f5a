//! Error budget for a design review: for VT+, VT− and the hysteresis, how many millivolts each
//! source can move the figure (each resistor's tolerance and drift, the reference, offset, bias
//! current × resistance, output levels, supply), largest first, with the linear sum (a linearised
//! worst case) and the root-sum-square of those limits.
//!
//! Each entry's limit is |cᵢ|·aᵢ: the sensitivity at the band centres times the input's half-width
//! (first-order, DOMAIN §2). Its standard uncertainty |cᵢ|·u(xᵢ) is listed beside it; the RSS of
//! those is the GUM combined standard uncertainty (JCGM 100:2008 §5.1.2).

use super::gum::{GumFigure, GumReport, SourceKind, UncertaintySource};
use super::{Figure, Prepared, ToleranceSettings};
use crate::error::DesignError;
use crate::topology::{Circuit, ParameterKind};
use serde::{Deserialize, Serialize};

/// One line of the budget.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BudgetEntry {
    /// Plain description of the source, e.g. "R2 tolerance (feedback resistor)".
    pub label: String,
    /// Parameter identifier.
    pub id: String,
    /// Part designator, for resistors.
    pub designator: Option<String>,
    /// Kind of parameter.
    pub kind: ParameterKind,
    /// Tolerance or drift.
    pub source: SourceKind,
    /// Sensitivity ∂f/∂x, volts per base unit (its sign says which way the figure moves).
    pub sensitivity: f64,
    /// Half-width of the input's band, base units.
    pub half_width: f64,
    /// |∂f/∂x|·a: how far this source alone can move the figure, millivolts.
    pub limit_mv: f64,
    /// |∂f/∂x|·u: its standard uncertainty contribution, millivolts.
    pub standard_mv: f64,
}

/// The budget of one figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FigureBudget {
    /// Sources, largest limit first.
    pub entries: Vec<BudgetEntry>,
    /// Σ limits: the first-order worst-case deviation, millivolts.
    pub linear_sum_mv: f64,
    /// √Σ limits²: the root-sum-square of the limits, millivolts.
    pub rss_mv: f64,
    /// √Σ standard contributions²: the GUM combined standard uncertainty, millivolts.
    pub combined_standard_mv: f64,
}

/// Budgets of VT+, VT− and the hysteresis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ErrorBudget {
    /// VT+.
    pub vt_upper: FigureBudget,
    /// VT−.
    pub vt_lower: FigureBudget,
    /// Hysteresis.
    pub hysteresis: FigureBudget,
}

/// Error budget of a circuit under the settings' bands.
pub fn error_budget<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<ErrorBudget, DesignError> {
    let prep = Prepared::new(circuit, settings)?;
    Ok(from_gum(&super::gum::from_prepared(&prep)))
}

/// A number with up to four decimals, trailing zeros removed.
/// A band figure with at most four decimals, trailing zeros dropped.
fn short(x: f64) -> String {
    crate::notation::format_fixed_trimmed(x, 4)
}

fn band_text(s: &UncertaintySource) -> String {
    match s.kind {
        ParameterKind::Resistor if s.centre != 0.0 => {
            format!("±{} %", short(100.0 * s.half_width / s.centre.abs()))
        }
        ParameterKind::Resistor => format!("±{} Ω", short(s.half_width)),
        ParameterKind::BiasCurrent => format!("±{} nA", short(s.half_width * 1e9)),
        ParameterKind::Device => format!("±{}", short(s.half_width)),
        _ => format!("±{} mV", short(s.half_width * 1e3)),
    }
}

fn label(s: &UncertaintySource) -> String {
    let what = match (&s.designator, s.kind) {
        (Some(d), _) => format!("{d} ({})", s.label),
        (None, ParameterKind::BiasCurrent) => format!("{} × node resistance", s.label),
        (None, _) => s.label.clone(),
    };
    let source = match s.source {
        SourceKind::Tolerance => "tolerance",
        SourceKind::Drift => "drift",
    };
    format!("{what} {source} {}", band_text(s))
}

fn figure_budget(g: &GumFigure, sources: &[UncertaintySource]) -> FigureBudget {
    let mut entries: Vec<BudgetEntry> = g
        .contributions
        .iter()
        .map(|c| {
            let s = &sources[c.source];
            BudgetEntry {
                label: label(s),
                id: s.id.clone(),
                designator: s.designator.clone(),
                kind: s.kind,
                source: s.source,
                sensitivity: c.sensitivity,
                half_width: s.half_width,
                limit_mv: (c.sensitivity * s.half_width).abs() * 1e3,
                standard_mv: c.contribution_v.abs() * 1e3,
            }
        })
        .collect();
    // Stable sort: equal limits keep parameter order.
    entries.sort_by(|a, b| b.limit_mv.total_cmp(&a.limit_mv));
    let linear_sum_mv = entries.iter().map(|e| e.limit_mv).sum();
    let rss_mv = entries
        .iter()
        .map(|e| e.limit_mv * e.limit_mv)
        .sum::<f64>()
        .sqrt();
    FigureBudget {
        entries,
        linear_sum_mv,
        rss_mv,
        combined_standard_mv: g.combined_standard_uncertainty_v * 1e3,
    }
}

pub(crate) fn from_gum(g: &GumReport) -> ErrorBudget {
    ErrorBudget {
        vt_upper: figure_budget(g.figure(Figure::VtUpper), &g.sources),
        vt_lower: figure_budget(g.figure(Figure::VtLower), &g.sources),
        hysteresis: figure_budget(g.figure(Figure::Hysteresis), &g.sources),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    #[test]
    fn entries_are_sorted_and_sum_to_the_linearised_worst_case() {
        let dev = Comparator {
            bias_plus_a: 100e-9,
            ..Comparator::ideal(5.0)
        };
        let c = InvertingSchmitt::single_supply(100e3, 100e3, 200e3, dev);
        let b = error_budget(&c, &ToleranceSettings::default()).unwrap();
        let e = &b.vt_upper.entries;
        assert!(e.windows(2).all(|w| w[0].limit_mv >= w[1].limit_mv));
        // Bias current 0…100 nA (its sign is kept): ±50 nA about 50 nA through Rp = 40 kΩ moves
        // VT± by ±2 mV (DOMAIN §1a errors: −IB+·Rp).
        let ib = e.iter().find(|x| x.id == "bias_plus_a").unwrap();
        assert!((ib.limit_mv - 2.0).abs() < 1e-6, "{}", ib.limit_mv);
        assert!(ib.label.contains("node resistance"), "{}", ib.label);
        let r1 = e
            .iter()
            .find(|x| x.id == "ra_ohm" && x.source == SourceKind::Tolerance)
            .unwrap();
        assert_eq!(r1.label, "R1 (divider resistor to rail A) tolerance ±1 %");
        // Offset ±5 mV (default) moves VT± one for one.
        let os = e.iter().find(|x| x.id == "offset_v").unwrap();
        assert!((os.limit_mv - 5.0).abs() < 1e-6);
        let sum: f64 = e.iter().map(|x| x.limit_mv).sum();
        assert!((b.vt_upper.linear_sum_mv - sum).abs() < 1e-12);
        assert!(b.vt_upper.rss_mv < b.vt_upper.linear_sum_mv);
        // Resistors appear twice: tolerance and drift.
        assert_eq!(e.iter().filter(|x| x.id == "ra_ohm").count(), 2);
    }

    #[test]
    fn linear_sum_is_close_to_the_worst_case_for_small_bands() {
        // First order in small bands: the linear sum approaches the exact corner deviation.
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = ToleranceSettings {
            resistor_tolerance_pct: 0.1,
            ..Default::default()
        };
        let b = error_budget(&c, &s).unwrap();
        let wc = super::super::worst_case(&c, &s).unwrap();
        let prep = Prepared::new(&c, &s).unwrap();
        let exact = (wc.vt_upper.max.value_v - prep.centre.vt_upper_v) * 1e3;
        assert!(
            (b.vt_upper.linear_sum_mv - exact).abs() < 0.02 * exact,
            "{} vs {exact}",
            b.vt_upper.linear_sum_mv
        );
    }
}
