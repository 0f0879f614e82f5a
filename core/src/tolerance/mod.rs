//! Tolerance analysis of any topology, through the [`Circuit`] trait only: the parameters a circuit
//! reports ([`Circuit::parameters`]), a copy with new values ([`Circuit::with_parameters`]), its
//! thresholds ([`Circuit::thresholds`]) and the sensitivities from [`crate::topology::sensitivities`].
//!
//! - [`settings`]: bands, distributions, temperature drift, the Monte Carlo run and the spec window;
//! - [`worst_case`]: extreme values over every corner, or by the sensitivity-sign method;
//! - [`gum`]: combined standard uncertainty by the GUM law of propagation (JCGM 100:2008);
//! - [`monte_carlo`]: JCGM 101:2008 Monte Carlo, seeded, chunkable, with the yield;
//! - [`bench_window`]: the bench window (parts and device spread at 25 °C and a set supply) beside
//!   the field window (the worst case over every tolerance);
//! - [`budget`]: per-source error budget in millivolts for a design review;
//! - [`input_standard`]: IEC 61131-2 24 V digital-input windows and the conformity check;
//! - [`temperature`]: VT+ and VT− versus temperature over the operating range, drift in V/K.
//!
//! [`tolerance_report`] runs them all. Every method works on the same resolved bands
//! ([`settings::ParameterBand`]): a centre and a half-width per parameter, plus a rectangular drift
//! input for parts with a temperature coefficient.
//!
//! ```
//! use hysteron_core::device::Comparator;
//! use hysteron_core::topology::inverting::InvertingSchmitt;
//! use hysteron_core::tolerance::{tolerance_report, ToleranceSettings};
//! let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
//! let mut s = ToleranceSettings::default();
//! s.monte_carlo.trials = 2_000;
//! let r = tolerance_report(&c, &s).unwrap();
//! assert!(r.worst_case.vt_upper.max.value_v > r.centre.vt_upper_v);
//! assert!(r.gum.vt_upper.combined_standard_uncertainty_v > 0.0);
//! ```

use crate::analysis::Thresholds;
use crate::error::DesignError;
use crate::topology::{sensitivities, Circuit};
use serde::{Deserialize, Serialize};

pub mod bench_window;
pub mod budget;
pub mod gum;
pub mod input_standard;
pub mod monte_carlo;
pub mod sample_statistics;
pub mod settings;
pub mod spec_window;
pub mod temperature;
pub mod worst_case;

pub use bench_window::{bench_window, BenchWindow, Windows};
pub use budget::{error_budget, ErrorBudget};
pub use gum::{gum, GumReport};
pub use input_standard::{InputCurrentCheck, InputType, InputTypeCheck};
pub use monte_carlo::{
    monte_carlo, monte_carlo_fingerprint, MonteCarloPartial, MonteCarloResult, MonteCarloRun,
};
pub use settings::{
    Distribution, ParameterBand, ParameterTolerance, SpecWindow, ToleranceBand, ToleranceSettings,
};
pub use temperature::{temperature_sweep, TemperaturePoint, TemperatureSweep};
pub use worst_case::{worst_case, WorstCase};

/// The four switching figures of a design.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Figures {
    /// VT+, volts.
    pub vt_upper_v: f64,
    /// VT−, volts.
    pub vt_lower_v: f64,
    /// Hysteresis VT+ − VT−, volts.
    pub hysteresis_v: f64,
    /// Centre (VT+ + VT−)/2, volts.
    pub centre_v: f64,
}

impl Figures {
    /// The figures of a pair of thresholds.
    pub fn from_thresholds(t: Thresholds) -> Self {
        Figures {
            vt_upper_v: t.vt_upper_v,
            vt_lower_v: t.vt_lower_v,
            hysteresis_v: t.hysteresis_v(),
            centre_v: t.centre_v(),
        }
    }

    /// The figures in the order of [`Figure::ALL`].
    pub fn as_array(&self) -> [f64; 4] {
        [
            self.vt_upper_v,
            self.vt_lower_v,
            self.hysteresis_v,
            self.centre_v,
        ]
    }
}

/// One of the four switching figures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Figure {
    /// VT+.
    VtUpper,
    /// VT−.
    VtLower,
    /// Hysteresis VT+ − VT−.
    Hysteresis,
    /// Centre (VT+ + VT−)/2.
    Centre,
}

impl Figure {
    /// All four, in the order used by arrays throughout this module.
    pub const ALL: [Figure; 4] = [
        Figure::VtUpper,
        Figure::VtLower,
        Figure::Hysteresis,
        Figure::Centre,
    ];

    /// Position in [`Figure::ALL`] and in [`Figures::as_array`].
    pub fn index(self) -> usize {
        match self {
            Figure::VtUpper => 0,
            Figure::VtLower => 1,
            Figure::Hysteresis => 2,
            Figure::Centre => 3,
        }
    }

    /// Plain name for messages.
    pub fn name(self) -> &'static str {
        match self {
            Figure::VtUpper => "VT+",
            Figure::VtLower => "VT−",
            Figure::Hysteresis => "hysteresis",
            Figure::Centre => "centre",
        }
    }

    /// The figure's sensitivity from the sensitivities of VT+ and VT− (linear combinations).
    pub fn sensitivity(self, d_upper: f64, d_lower: f64) -> f64 {
        match self {
            Figure::VtUpper => d_upper,
            Figure::VtLower => d_lower,
            Figure::Hysteresis => d_upper - d_lower,
            Figure::Centre => 0.5 * (d_upper + d_lower),
        }
    }
}

/// The circuit with its bands resolved and its sensitivities taken at the band centres: the common
/// starting point of every method.
#[derive(Debug, Clone)]
pub(crate) struct Prepared<C: Circuit> {
    /// The circuit as entered.
    pub circuit: C,
    /// One band per parameter, in parameter order.
    pub bands: Vec<ParameterBand>,
    /// Band centres, in parameter order.
    pub centres: Vec<f64>,
    /// Figures of the circuit as entered.
    pub nominal: Figures,
    /// Figures at the band centres.
    pub centre: Figures,
    /// ∂VT+/∂p and ∂VT−/∂p at the band centres, in parameter order.
    pub d_upper: Vec<f64>,
    /// See `d_upper`.
    pub d_lower: Vec<f64>,
}

impl<C: Circuit> Prepared<C> {
    pub(crate) fn new(circuit: &C, settings: &ToleranceSettings) -> Result<Self, DesignError> {
        circuit.validate()?;
        let nominal = Figures::from_thresholds(checked_thresholds(circuit)?);
        let params = circuit.parameters();
        let bands = settings::resolve_bands(&params, settings)?;
        let centres: Vec<f64> = bands.iter().map(|b| b.centre).collect();
        let centre = evaluate(circuit, &centres).map_err(|e| {
            DesignError::inconsistent(format!("the circuit is not valid at the centre of its tolerance bands ({e}): check the bands"))
        })?;
        let tracks = settings::tracking_mask(&params, settings);
        let centred = circuit.with_parameters(&settings::circuit_values(&params, &centres, &tracks))?;
        let sens = sensitivities(&centred)?;
        let mut d_upper: Vec<f64> = sens.iter().map(|s| s.1).collect();
        let mut d_lower: Vec<f64> = sens.iter().map(|s| s.2).collect();
        if settings::has_common_drift(&bands) {
            // ∂VT/∂ε for Ri → Ri·(1 + ε): Σ ∂VT/∂Ri · Ri over the tracking resistors.
            let chain = |d: &[f64]| -> f64 {
                d.iter().zip(&sens).zip(&tracks).filter(|(_, t)| **t).map(|((d, s), _)| d * s.0.value).sum()
            };
            let (u, l) = (chain(&d_upper), chain(&d_lower));
            d_upper.push(u);
            d_lower.push(l);
        }
        if d_upper.iter().chain(&d_lower).any(|d| !d.is_finite()) {
            return Err(DesignError::NotConverged {
                reason: "a threshold sensitivity is not finite at the band centres".into(),
            });
        }
        Ok(Prepared {
            circuit: circuit.clone(),
            bands,
            centres,
            nominal,
            centre,
            d_upper,
            d_lower,
        })
    }

    /// Sensitivity of figure `f` to parameter `i`, volts per base unit.
    pub(crate) fn sensitivity(&self, f: Figure, i: usize) -> f64 {
        f.sensitivity(self.d_upper[i], self.d_lower[i])
    }

    /// Indices of the parameters that move.
    pub(crate) fn varied(&self) -> Vec<usize> {
        (0..self.bands.len())
            .filter(|&i| self.bands[i].is_varied())
            .collect()
    }
}

fn checked_thresholds<C: Circuit>(c: &C) -> Result<Thresholds, DesignError> {
    let t = c.thresholds()?;
    if t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite() {
        Ok(t)
    } else {
        Err(DesignError::NoSwitching {
            reason: "the thresholds are not finite numbers with these values".into(),
        })
    }
}

/// Figures of the circuit with its parameters replaced by `values` (validated first). `values`
/// follow the bands: one more value than the circuit has parameters is the common drift of a
/// tracking resistor network ([`settings::COMMON_RESISTOR_DRIFT_ID`]), applied to every resistor.
pub(crate) fn evaluate<C: Circuit>(circuit: &C, values: &[f64]) -> Result<Figures, DesignError> {
    let params = circuit.parameters();
    let tracks: Vec<bool> = params.iter().map(|p| p.kind == crate::topology::ParameterKind::Resistor).collect();
    let c = circuit.with_parameters(&settings::circuit_values(&params, values, &tracks))?;
    c.validate()?;
    Ok(Figures::from_thresholds(checked_thresholds(&c)?))
}

/// Everything the tolerance analysis found, for the page and the JSON entry point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ToleranceReport {
    /// Figures of the circuit as entered.
    pub nominal: Figures,
    /// Figures at the band centres (they differ from `nominal` when a band is centred on zero,
    /// as offset and bias current are, or cut at zero, as output headroom is).
    pub centre: Figures,
    /// The resolved band of every parameter.
    pub bands: Vec<ParameterBand>,
    /// Extreme values and the corners that give them.
    pub worst_case: WorstCase,
    /// GUM combined and expanded uncertainties with per-input contributions.
    pub gum: GumReport,
    /// Monte Carlo statistics, histograms and yield.
    pub monte_carlo: MonteCarloResult,
    /// Per-source error budget in millivolts.
    pub budget: ErrorBudget,
    /// The spec window applied (settings' window narrowed by the chosen input type).
    pub spec: SpecWindow,
    /// Whether every worst-case extreme lies inside the spec window (`None` without a window).
    pub worst_case_inside_spec: Option<bool>,
    /// IEC 61131-2 conformity per input type (voltage and input current), when asked for.
    pub input_types: Vec<InputTypeCheck>,
    /// Plain remarks on how to read the results.
    pub notes: Vec<String>,
}

/// Runs every tolerance method on a circuit of any topology. Fails when the circuit or the settings
/// are invalid, or when a corner of the bands makes the circuit invalid (narrow those bands).
pub fn tolerance_report<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<ToleranceReport, DesignError> {
    let prep = Prepared::new(circuit, settings)?;
    let wc = worst_case::from_prepared(&prep, settings.corner_limit)?;
    let gum = gum::from_prepared(&prep);
    let budget = budget::from_gum(&gum);
    let run = MonteCarloRun::from_prepared(&prep, settings);
    let mc = run.finish(&run.run(0, run.trials())?)?;
    let spec = settings.effective_spec();
    let worst_case_inside_spec = (!spec.is_empty()).then(|| {
        let mins = Figure::ALL.map(|f| wc.figure(f).min.value_v);
        let maxs = Figure::ALL.map(|f| wc.figure(f).max.value_v);
        spec.contains(mins) && spec.contains(maxs)
    });
    let input_types = if settings.check_input_types {
        input_standard::check_input_types_with_current(
            circuit,
            wc.vt_upper.max.value_v,
            wc.vt_lower.min.value_v,
        )?
    } else {
        Vec::new()
    };

    let mut notes = Vec::new();
    if wc.method == worst_case::WorstCaseMethod::SensitivitySign {
        notes.push(format!(
            "{} parameters vary, more than the corner limit {}: the worst case comes from the sensitivity-sign method, exact only when each threshold is monotonic in each parameter",
            wc.varied_parameters, settings.corner_limit
        ));
    }
    if let Some(short) = wc.sign_method_shortfall {
        for f in Figure::ALL {
            let e = wc.figure(f);
            let gap = short.as_array()[f.index()];
            if gap > 1e-9 * e.max.value_v.abs().max(e.min.value_v.abs()).max(1.0) {
                notes.push(format!(
                    "{}: the sensitivity-sign method misses {} mV of the corner range; its dependence on some parameter changes sign inside the bands, so linear estimates understate its spread",
                    f.name(),
                    crate::notation::format_fixed(gap * 1e3, 3)
                ));
            }
        }
    }
    if wc.non_monotone {
        notes.push("a threshold is not monotonic in some parameter, so the corners alone are no bound: the worst case comes from a search inside the bands, starting at the corners".into());
    }
    if mc.rejected_trials > 0 {
        notes.push(format!(
            "{} of {} Monte Carlo trials gave an invalid circuit and count as outside the spec: narrow the widest bands",
            mc.rejected_trials, mc.trials
        ));
    }
    let all_uniform = prep
        .bands
        .iter()
        .filter(|b| b.half_width > 0.0)
        .all(|b| b.distribution == Distribution::Uniform);
    if all_uniform {
        for f in Figure::ALL {
            let (s, e) = (mc.figure(f), wc.figure(f));
            let slack = 1e-9 * e.max.value_v.abs().max(e.min.value_v.abs()).max(1.0);
            if s.min_v < e.min.value_v - slack || s.max_v > e.max.value_v + slack {
                notes.push(format!(
                    "Monte Carlo found {} values beyond the worst case: it is not monotonic in its parameters, so the worst case is not a bound",
                    f.name()
                ));
            }
        }
    } else {
        notes.push("normal distributions are unbounded: Monte Carlo samples may fall outside the worst-case range, which treats each tolerance as a hard limit".into());
    }
    for f in [Figure::VtUpper, Figure::VtLower, Figure::Hysteresis] {
        let g = gum.figure(f);
        let s = mc.figure(f);
        let half_interval = 0.5 * (s.interval_95_high_v - s.interval_95_low_v);
        if g.expanded_uncertainty_v > 0.0 && half_interval < 0.9 * g.expanded_uncertainty_v {
            notes.push(format!(
                "{}: the Monte Carlo 95 % interval (±{} mV) is narrower than the GUM ±U at k = 2 (±{} mV): one rectangular input dominates (JCGM 101:2008), so prefer the Monte Carlo interval",
                f.name(),
                crate::notation::format_fixed(half_interval * 1e3, 3),
                crate::notation::format_fixed(g.expanded_uncertainty_v * 1e3, 3)
            ));
        }
    }
    Ok(ToleranceReport {
        nominal: prep.nominal,
        centre: prep.centre,
        bands: prep.bands,
        worst_case: wc,
        gum,
        monte_carlo: mc,
        budget,
        spec,
        worst_case_inside_spec,
        input_types,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;
    use crate::topology::Topology;

    #[test]
    fn report_through_the_topology_enum_matches_the_concrete_type() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let mut s = ToleranceSettings::default();
        s.monte_carlo.trials = 500;
        s.spec.hysteresis_min_v = Some(0.9);
        s.check_input_types = true;
        let a = tolerance_report(&c, &s).unwrap();
        let b = tolerance_report(&Topology::Inverting(c), &s).unwrap();
        assert_eq!(a, b);
        assert_eq!(a.input_types.len(), 3);
        assert!(a.worst_case_inside_spec.is_some());
        // Round trip through JSON, as the page and the command line see it. serde_json's default
        // float parser may land one unit in the last place away, so compare numbers closely, not bitwise.
        let json = serde_json::to_string(&a).unwrap();
        let back: ToleranceReport = serde_json::from_str(&json).unwrap();
        assert_eq!(back.bands.len(), a.bands.len());
        assert_eq!(
            back.worst_case.vt_upper.max.corner,
            a.worst_case.vt_upper.max.corner
        );
        assert_eq!(
            back.monte_carlo.vt_upper.histogram.counts,
            a.monte_carlo.vt_upper.histogram.counts
        );
        let close = |x: f64, y: f64| (x - y).abs() <= 1e-15 * x.abs().max(1.0);
        assert!(close(
            back.gum.vt_lower.combined_standard_uncertainty_v,
            a.gum.vt_lower.combined_standard_uncertainty_v
        ));
        assert!(close(
            back.monte_carlo.hysteresis.mean_v,
            a.monte_carlo.hysteresis.mean_v
        ));
    }

    #[test]
    fn invalid_circuit_or_settings_are_errors_not_panics() {
        let c = InvertingSchmitt::single_supply(10e3, 10e3, -1.0, Comparator::ideal(5.0));
        assert!(tolerance_report(&c, &ToleranceSettings::default()).is_err());
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = ToleranceSettings {
            supply_tolerance_pct: f64::INFINITY,
            ..Default::default()
        };
        assert!(tolerance_report(&c, &s).is_err());
    }

    #[test]
    fn offset_band_is_centred_on_zero() {
        let dev = Comparator {
            offset_v: 0.004,
            ..Comparator::ideal(5.0)
        };
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, dev);
        let p = Prepared::new(&c, &ToleranceSettings::default()).unwrap();
        // The entered offset lowers VT+ by 4 mV (DOMAIN §1a errors); the centred circuit has none.
        assert!((p.nominal.vt_upper_v - (3.0 - 0.004)).abs() < 1e-12);
        // Output headroom bands [0, 50 mV] move the centre: VOH centre 4.975 V, VOL centre 0.025 V.
        let expected = InvertingSchmitt::single_supply(
            10e3,
            10e3,
            20e3,
            Comparator {
                output_high_drop_v: 0.025,
                output_low_rise_v: 0.025,
                ..Comparator::ideal(5.0)
            },
        )
        .thresholds()
        .unwrap();
        assert!((p.centre.vt_upper_v - expected.vt_upper_v).abs() < 1e-12);
        assert!((p.centre.vt_lower_v - expected.vt_lower_v).abs() < 1e-12);
    }
}
