//! What the engineer tells the tolerance analysis: a band and a distribution for every parameter,
//! temperature drift, the Monte Carlo run and the spec window; and how those settings resolve into
//! one band per parameter of a circuit ([`resolve_bands`]).
//!
//! Every band is a centre and a half-width `a` in base units. The defaults follow the parameter's
//! [`ParameterKind`] (values are common practice, no source):
//! - resistors ±1 %, supply ±5 %, reference ±1 %, gate or transistor thresholds ±10 % (all relative
//!   to the entered value, centred on it);
//! - output levels ±50 mV around the entered value, never crossing zero: these parameters are
//!   headroom from a rail or a level above a rail, so a band that would cross zero is cut there;
//! - offset voltage ±|VOS| centred on zero, with |VOS| the `offset_v` setting, else the entered
//!   value, else 5 mV: the sign of a part's offset is unknown, so the entered value is read as the
//!   datasheet magnitude;
//! - bias current from zero to the entered value, keeping its sign: a datasheet states the
//!   direction of the bias current (into the pins for NPN and most CMOS inputs, out of them for PNP
//!   inputs), so only its magnitude is uncertain, and the entered value is read as the maximum;
//! - built-in hysteresis of a comparator ±10 % like any device threshold (or its datasheet limits);
//! - any parameter with datasheet `limits` uses exactly those limits;
//! - other device properties are not varied unless an override says so.
//!
//! Temperature drift of resistors and references is a separate rectangular input of half-width
//! |centre| · TC · ΔT_max, with ΔT_max the largest distance of the temperature range from 25 °C.
//! This treats the sign of each part's temperature coefficient as unknown. Resistors are
//! independent unless [`ToleranceSettings::resistor_tracking_ppm_per_k`] says they sit in one
//! network or array: then every resistor's coefficient is a common part c (|c| ≤ TCR, one input
//! shared by all resistors, [`COMMON_RESISTOR_DRIFT_ID`]) plus its own part (|δ| ≤ tracking/2), so
//! two resistors' coefficients differ by at most the tracking figure and a ratio drifts by at most
//! tracking × ΔT.
//!
//! Device quantities carry their own drift ([`crate::topology::Drift`]: offset drift of unknown
//! sign, bias current compounded with known sign, a gate threshold's coefficient of known sign).
//! Over the temperature range the drift spans an interval [lo, hi] of changes; the parameter's
//! band becomes its tolerance band plus a rectangular drift input over that interval (the centre
//! moves to the interval's middle when the drift has a known sign).

use crate::error::{finite, non_negative, DesignError};
use crate::limits::{check as limit, Quantity};
use crate::notation::Unit;
use crate::topology::{Parameter, ParameterKind};
use serde::{Deserialize, Serialize};

/// 0 °C in kelvin (SI definition of the degree Celsius).
pub const KELVIN_AT_0_C: f64 = 273.15;

/// Reference temperature of datasheet values and temperature coefficients, °C.
pub const REFERENCE_TEMPERATURE_C: f64 = 25.0;

/// Offset magnitude used when neither the settings nor the device give one, volts
/// (common practice: a general-purpose comparator's 25 °C maximum is a few millivolts).
pub const DEFAULT_OFFSET_V: f64 = 0.005;

/// Identifier of the extra input shared by all resistors of a tracking network: the common
/// relative change c·ΔT of every resistor (only present when tracking is set and the temperature
/// range leaves 25 °C).
pub const COMMON_RESISTOR_DRIFT_ID: &str = "resistor_common_drift";

/// Largest Monte Carlo trial count accepted (bounds memory: 16 bytes a trial).
pub const MAX_TRIALS: u64 = 1_000_000;

/// Largest number of varied parameters for which every corner is evaluated (2^20 evaluations).
pub const MAX_CORNER_LIMIT: usize = 20;

/// How a parameter is spread inside its band.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Distribution {
    /// Rectangular over ±a: standard uncertainty a/√3 (JCGM 100:2008 §4.3.7).
    Uniform,
    /// Gaussian with the tolerance at three standard deviations: u = a/3 (the tolerance is read as
    /// an expanded uncertainty with coverage factor 3, JCGM 100:2008 §4.3.3 and §6.2.1).
    Normal,
}

/// A parameter's band as the engineer states it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ToleranceBand {
    /// ± this many percent of the entered value, centred on it.
    Percent(f64),
    /// ± this many base units (volts, amperes, ohms). Centred on the entered value, except for
    /// offset voltage, whose absolute band is centred on zero (sign unknown); output levels and
    /// bias currents stop at zero (they keep their sign).
    Absolute(f64),
    /// Datasheet minimum and maximum, base units.
    Limits([f64; 2]),
}

/// Settings for one parameter that replace the defaults of its kind.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct ParameterTolerance {
    /// The parameter's identifier, as in [`crate::topology::Circuit::parameters`].
    pub id: String,
    /// Its band (`None`: the default of its kind).
    pub band: Option<ToleranceBand>,
    /// Its distribution (`None`: [`ToleranceSettings::distribution`]).
    pub distribution: Option<Distribution>,
    /// Its temperature coefficient, ppm/K (`None`: the default of its kind).
    pub tempco_ppm_per_k: Option<f64>,
}

/// The Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct MonteCarloSettings {
    /// Number of trials M (2 to [`MAX_TRIALS`]).
    pub trials: u64,
    /// Seed: the same seed gives the same trials on every target.
    pub seed: u64,
    /// Number of histogram bins for each plotted quantity (1 to 1000).
    pub histogram_bins: usize,
}

impl Default for MonteCarloSettings {
    fn default() -> Self {
        MonteCarloSettings {
            trials: 100_000,
            seed: 1,
            histogram_bins: 40,
        }
    }
}

pub use super::spec_window::SpecWindow;

/// Everything the tolerance analysis needs from the engineer. Every field has a default, so an
/// empty JSON object `{}` is a complete setting.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ToleranceSettings {
    /// Distribution of every band without its own (uniform: the conservative choice for parts
    /// whose makers may sort them into tighter grades).
    pub distribution: Distribution,
    /// Resistor tolerance, percent.
    pub resistor_tolerance_pct: f64,
    /// Supply tolerance, percent.
    pub supply_tolerance_pct: f64,
    /// Reference-voltage tolerance, percent.
    pub reference_tolerance_pct: f64,
    /// Tolerance of a gate or transistor switching threshold without datasheet limits, percent.
    pub device_threshold_tolerance_pct: f64,
    /// Tolerance of output levels (headroom from the rails), volts.
    pub output_level_tolerance_v: f64,
    /// Datasheet offset magnitude |VOS|, volts (`None`: the entered value, or [`DEFAULT_OFFSET_V`]
    /// when that is zero).
    pub offset_v: Option<f64>,
    /// Resistor temperature coefficient, ppm/K (common practice: 100 for thick-film chips).
    pub resistor_tempco_ppm_per_k: f64,
    /// Reference temperature coefficient, ppm/K.
    pub reference_tempco_ppm_per_k: f64,
    /// When set, the resistors sit in one network or array and track each other: their
    /// temperature coefficients differ by at most this many ppm/K, while all of them together may
    /// drift by [`ToleranceSettings::resistor_tempco_ppm_per_k`] (common practice: thin-film
    /// networks track to 2–10 ppm/K). `None`: every resistor drifts on its own.
    pub resistor_tracking_ppm_per_k: Option<f64>,
    /// Lowest operating temperature, °C.
    pub temperature_min_c: f64,
    /// Highest operating temperature, °C.
    pub temperature_max_c: f64,
    /// Per-parameter settings that replace the defaults.
    pub overrides: Vec<ParameterTolerance>,
    /// The Monte Carlo run.
    pub monte_carlo: MonteCarloSettings,
    /// Acceptable ranges, for the yield and the worst-case verdict.
    pub spec: SpecWindow,
    /// When set, this IEC 61131-2 input type's window is applied on top of `spec`.
    pub spec_input_type: Option<super::input_standard::InputType>,
    /// Report conformity with every IEC 61131-2 24 V input type (for circuits that read 24 V signals).
    pub check_input_types: bool,
    /// Up to this many varied parameters every corner is evaluated (2^n); above it the
    /// sensitivity-sign method is used alone. At most [`MAX_CORNER_LIMIT`].
    pub corner_limit: usize,
}

impl Default for ToleranceSettings {
    fn default() -> Self {
        ToleranceSettings {
            distribution: Distribution::Uniform,
            resistor_tolerance_pct: 1.0,
            supply_tolerance_pct: 5.0,
            reference_tolerance_pct: 1.0,
            device_threshold_tolerance_pct: 10.0,
            output_level_tolerance_v: 0.05,
            offset_v: None,
            resistor_tempco_ppm_per_k: 100.0,
            reference_tempco_ppm_per_k: 50.0,
            resistor_tracking_ppm_per_k: None,
            temperature_min_c: 0.0,
            temperature_max_c: 70.0,
            overrides: Vec::new(),
            monte_carlo: MonteCarloSettings::default(),
            spec: SpecWindow::default(),
            spec_input_type: None,
            check_input_types: false,
            corner_limit: 12,
        }
    }
}

fn percent(field: &str, p: f64) -> Result<f64, DesignError> {
    non_negative(field, p)?;
    if p >= 100.0 {
        return Err(DesignError::invalid(
            field,
            format!("must be below 100 % (got {p} %): a band that reaches zero is not a tolerance"),
        ));
    }
    Ok(p)
}

/// Largest temperature coefficient accepted, ppm/K (10 %/K: beyond any resistor or reference;
/// common practice puts thick-film chips at 100–200 ppm/K).
pub const MAX_TEMPCO_PPM_PER_K: f64 = 1e5;

fn tempco(field: &str, tc: f64) -> Result<f64, DesignError> {
    non_negative(field, tc)?;
    limit(Quantity::Tempco, field, tc)
}

/// An override's absolute band or limit, in the parameter's base unit: finite and no larger in
/// magnitude than the widest range of `crate::limits` (1 TΩ).
fn magnitude(field: &str, x: f64) -> Result<f64, DesignError> {
    let widest = Quantity::Resistance.range().1;
    if x.is_finite() && x.abs() <= widest {
        Ok(x)
    } else {
        Err(DesignError::invalid(field, format!("must be a finite number of magnitude at most {widest:e} (got {x})")))
    }
}

impl ToleranceSettings {
    /// Checks every number: finite, in range, temperature range in order, run size bounded.
    pub fn validate(&self) -> Result<(), DesignError> {
        percent(
            "tolerance.resistor_tolerance_pct",
            self.resistor_tolerance_pct,
        )?;
        percent("tolerance.supply_tolerance_pct", self.supply_tolerance_pct)?;
        percent(
            "tolerance.reference_tolerance_pct",
            self.reference_tolerance_pct,
        )?;
        percent(
            "tolerance.device_threshold_tolerance_pct",
            self.device_threshold_tolerance_pct,
        )?;
        non_negative(
            "tolerance.output_level_tolerance_v",
            self.output_level_tolerance_v,
        )?;
        limit(Quantity::Voltage, "tolerance.output_level_tolerance_v", self.output_level_tolerance_v)?;
        if let Some(v) = self.offset_v {
            non_negative("tolerance.offset_v", v)?;
            limit(Quantity::Voltage, "tolerance.offset_v", v)?;
        }
        tempco("tolerance.resistor_tempco_ppm_per_k", self.resistor_tempco_ppm_per_k)?;
        tempco("tolerance.reference_tempco_ppm_per_k", self.reference_tempco_ppm_per_k)?;
        if let Some(t) = self.resistor_tracking_ppm_per_k {
            limit(Quantity::Tempco, "tolerance.resistor_tracking_ppm_per_k", t)?;
        }
        finite("tolerance.temperature_min_c", self.temperature_min_c)?;
        finite("tolerance.temperature_max_c", self.temperature_max_c)?;
        if self.temperature_min_c < -273.15 || self.temperature_max_c > 1000.0 {
            return Err(DesignError::invalid(
                "tolerance.temperature_min_c",
                "the temperature range must lie between −273.15 °C and 1000 °C",
            ));
        }
        if self.temperature_min_c > self.temperature_max_c {
            return Err(DesignError::invalid(
                "tolerance.temperature_min_c",
                format!(
                    "the lowest temperature ({} °C) is above the highest ({} °C): swap them",
                    self.temperature_min_c, self.temperature_max_c
                ),
            ));
        }
        let mc = &self.monte_carlo;
        if mc.trials < 2 || mc.trials > MAX_TRIALS {
            return Err(DesignError::invalid(
                "tolerance.monte_carlo.trials",
                format!("must be from 2 to {MAX_TRIALS} (got {})", mc.trials),
            ));
        }
        if mc.histogram_bins == 0 || mc.histogram_bins > 1000 {
            return Err(DesignError::invalid(
                "tolerance.monte_carlo.histogram_bins",
                format!("must be from 1 to 1000 (got {})", mc.histogram_bins),
            ));
        }
        if self.corner_limit > MAX_CORNER_LIMIT {
            return Err(DesignError::invalid(
                "tolerance.corner_limit",
                format!("must be at most {MAX_CORNER_LIMIT} (2^{MAX_CORNER_LIMIT} corner evaluations; got {})", self.corner_limit),
            ));
        }
        self.spec.validate()?;
        for (i, o) in self.overrides.iter().enumerate() {
            if self.overrides[..i].iter().any(|p| p.id == o.id) {
                return Err(DesignError::Parameter {
                    reason: format!("tolerance override for `{}` is given twice: keep one", o.id),
                });
            }
            let field = format!("tolerance.overrides.{}", o.id);
            match o.band {
                Some(ToleranceBand::Percent(p)) => {
                    percent(&field, p)?;
                }
                Some(ToleranceBand::Absolute(a)) => {
                    non_negative(&field, a)?;
                    magnitude(&field, a)?;
                }
                Some(ToleranceBand::Limits([lo, hi])) => {
                    magnitude(&field, lo)?;
                    magnitude(&field, hi)?;
                    if lo > hi {
                        return Err(DesignError::invalid(
                            &field,
                            format!("limits [{lo}, {hi}] are in the wrong order: swap them"),
                        ));
                    }
                }
                None => {}
            }
            if let Some(tc) = o.tempco_ppm_per_k {
                tempco(&format!("{field}.tempco_ppm_per_k"), tc)?;
            }
        }
        Ok(())
    }

    /// These settings with the Monte Carlo run's own settings (trials, seed, bins) at their
    /// defaults: what the worst case, GUM and the windows read. A study that follows the inputs
    /// compares its job with this, so a change of trials does not start the corners again.
    pub fn without_monte_carlo(&self) -> ToleranceSettings {
        ToleranceSettings { monte_carlo: MonteCarloSettings::default(), ..self.clone() }
    }

    /// The window applied to the yield and the worst-case verdict: `spec`, narrowed by the input
    /// type's window when one is chosen.
    pub fn effective_spec(&self) -> SpecWindow {
        match self.spec_input_type {
            Some(t) => self.spec.intersect(&super::input_standard::spec_window(t)),
            None => self.spec,
        }
    }

    /// Largest distance of the operating temperature range from 25 °C, kelvin.
    pub fn max_temperature_excursion_k(&self) -> f64 {
        (self.temperature_min_c - REFERENCE_TEMPERATURE_C)
            .abs()
            .max((self.temperature_max_c - REFERENCE_TEMPERATURE_C).abs())
    }
}

/// One parameter's resolved band: what every method varies.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ParameterBand {
    /// The parameter as the circuit reports it (id, designator, label, entered value, kind).
    pub parameter: Parameter,
    /// The band as stated (override, datasheet limits or the kind's default).
    pub band: ToleranceBand,
    /// Centre of the band, base units (the entered value, zero for offset, half the entered value
    /// for bias current; moved by a device drift of known sign).
    pub centre: f64,
    /// Half-width a of the tolerance band, base units.
    pub half_width: f64,
    /// Distribution inside the tolerance band.
    pub distribution: Distribution,
    /// Temperature coefficient applied, ppm/K.
    pub tempco_ppm_per_k: f64,
    /// Half-width of the rectangular drift input, base units: |centre|·TC·ΔT_max for resistors
    /// and references, half the span of the device drift over the temperature range otherwise.
    pub drift_half_width: f64,
}

impl ParameterBand {
    /// Largest deviation from the centre the parameter can take: tolerance plus drift, base units.
    pub fn total_half_width(&self) -> f64 {
        self.half_width + self.drift_half_width
    }

    /// Whether the parameter moves at all.
    pub fn is_varied(&self) -> bool {
        self.total_half_width() > 0.0
    }
}

/// Resolves the settings into one band per parameter, in the order of `params`
/// (that is, of [`crate::topology::Circuit::parameters`]). Fails on an override naming an unknown
/// parameter, on invalid settings, or on a parameter whose entered value is not finite.
pub fn resolve_bands(
    params: &[Parameter],
    settings: &ToleranceSettings,
) -> Result<Vec<ParameterBand>, DesignError> {
    settings.validate()?;
    for o in &settings.overrides {
        if !params.iter().any(|p| p.id == o.id) {
            let known: Vec<&str> = params.iter().map(|p| p.id.as_str()).collect();
            return Err(DesignError::Parameter {
                reason: format!(
                    "tolerance override names unknown parameter `{}`; this circuit has {}",
                    o.id,
                    known.join(", ")
                ),
            });
        }
    }
    let excursion_k = settings.max_temperature_excursion_k();
    let dt_min = settings.temperature_min_c - REFERENCE_TEMPERATURE_C;
    let dt_max = settings.temperature_max_c - REFERENCE_TEMPERATURE_C;
    let tracking = settings.resistor_tracking_ppm_per_k;
    let mut bands = params
        .iter()
        .map(|p| {
            finite(&p.id, p.value)?;
            let o = settings.overrides.iter().find(|o| o.id == p.id);
            let band = match (o.and_then(|o| o.band), p.limits) {
                (Some(b), _) => b,
                (None, Some(l)) => ToleranceBand::Limits(l),
                (None, None) => default_band(p, settings),
            };
            let (centre, half_width) = centre_and_half_width(p, band)?;
            let own = o.and_then(|o| o.tempco_ppm_per_k);
            let tempco = own.unwrap_or(match p.kind {
                ParameterKind::Resistor => tracking.map_or(settings.resistor_tempco_ppm_per_k, |t| 0.5 * t),
                ParameterKind::Reference => settings.reference_tempco_ppm_per_k,
                _ => 0.0,
            });
            // A device drift spans [lo, hi] over the range; the band's centre moves to its middle.
            let (lo, hi) = p.drift.range(centre, dt_min, dt_max);
            let centre = centre + 0.5 * (lo + hi);
            let drift_half_width = centre.abs() * tempco * 1e-6 * excursion_k + 0.5 * (hi - lo);
            if !(centre.is_finite() && drift_half_width.is_finite()) {
                return Err(DesignError::invalid(&p.id, "its temperature drift over the range is not finite: check the drift coefficients"));
            }
            Ok(ParameterBand {
                parameter: p.clone(),
                band,
                centre,
                half_width,
                distribution: o
                    .and_then(|o| o.distribution)
                    .unwrap_or(settings.distribution),
                tempco_ppm_per_k: tempco,
                drift_half_width,
            })
        })
        .collect::<Result<Vec<_>, DesignError>>()?;
    let common = settings.resistor_tempco_ppm_per_k * 1e-6 * excursion_k;
    let any_tracking_resistor = params.iter().any(|p| {
        p.kind == ParameterKind::Resistor
            && settings.overrides.iter().all(|o| o.id != p.id || o.tempco_ppm_per_k.is_none())
    });
    if tracking.is_some() && common > 0.0 && any_tracking_resistor {
        let p = Parameter::device(
            COMMON_RESISTOR_DRIFT_ID,
            "common drift of the tracking resistors (relative)",
            0.0,
            crate::notation::Unit::Ratio,
        );
        bands.push(ParameterBand {
            parameter: p,
            band: ToleranceBand::Percent(0.0),
            centre: 0.0,
            half_width: 0.0,
            distribution: settings.distribution,
            tempco_ppm_per_k: settings.resistor_tempco_ppm_per_k,
            drift_half_width: common,
        });
    }
    Ok(bands)
}

/// Whether the bands end with the common drift input of a tracking network.
pub(crate) fn has_common_drift(bands: &[ParameterBand]) -> bool {
    bands.last().is_some_and(|b| b.parameter.id == COMMON_RESISTOR_DRIFT_ID)
}

/// The circuit's parameter values from band values: without a common drift input they are the
/// same; with one (the last value, a relative change ε), every resistor that tracks is scaled by
/// 1 + ε and the last value is dropped.
pub(crate) fn circuit_values(params: &[Parameter], values: &[f64], tracks: &[bool]) -> Vec<f64> {
    let mut out = Vec::with_capacity(params.len());
    circuit_values_into(params, values, tracks, &mut out);
    out
}

/// As [`circuit_values`], into `out` (cleared first), so a loop over trials reuses one buffer.
pub(crate) fn circuit_values_into(params: &[Parameter], values: &[f64], tracks: &[bool], out: &mut Vec<f64>) {
    out.clear();
    if values.len() == params.len() + 1 {
        let eps = values[params.len()];
        out.extend(values[..params.len()].iter().zip(tracks).map(|(v, t)| if *t { v * (1.0 + eps) } else { *v }));
    } else {
        out.extend_from_slice(values);
    }
}

/// Which parameters follow the common drift input: resistors without their own tempco override.
pub(crate) fn tracking_mask(params: &[Parameter], settings: &ToleranceSettings) -> Vec<bool> {
    params
        .iter()
        .map(|p| {
            p.kind == ParameterKind::Resistor
                && settings.overrides.iter().all(|o| o.id != p.id || o.tempco_ppm_per_k.is_none())
        })
        .collect()
}

fn default_band(p: &Parameter, s: &ToleranceSettings) -> ToleranceBand {
    match p.kind {
        ParameterKind::Resistor => ToleranceBand::Percent(s.resistor_tolerance_pct),
        ParameterKind::Supply => ToleranceBand::Percent(s.supply_tolerance_pct),
        ParameterKind::Reference => ToleranceBand::Percent(s.reference_tolerance_pct),
        ParameterKind::DeviceThreshold => ToleranceBand::Percent(s.device_threshold_tolerance_pct),
        ParameterKind::OutputLevel => ToleranceBand::Absolute(s.output_level_tolerance_v),
        ParameterKind::Offset => ToleranceBand::Absolute(s.offset_v.unwrap_or(if p.value != 0.0 {
            p.value.abs()
        } else {
            DEFAULT_OFFSET_V
        })),
        ParameterKind::BiasCurrent => ToleranceBand::Limits(if p.value >= 0.0 { [0.0, p.value] } else { [p.value, 0.0] }),
        // A device's own temperature (a junction, kelvin) spans the operating range.
        ParameterKind::Device if p.unit == Unit::Kelvin => {
            ToleranceBand::Limits([s.temperature_min_c + KELVIN_AT_0_C, s.temperature_max_c + KELVIN_AT_0_C])
        }
        ParameterKind::Device => ToleranceBand::Percent(0.0),
    }
}

fn centre_and_half_width(p: &Parameter, band: ToleranceBand) -> Result<(f64, f64), DesignError> {
    let v = p.value;
    let (lo, hi) = match band {
        ToleranceBand::Percent(pct) => (v - v.abs() * pct / 100.0, v + v.abs() * pct / 100.0),
        ToleranceBand::Absolute(a) => match p.kind {
            ParameterKind::Offset => (-a, a),
            // Output levels are magnitudes measured from a rail, and a bias current keeps its
            // known direction: the band stops at zero.
            ParameterKind::OutputLevel | ParameterKind::BiasCurrent if v >= 0.0 => ((v - a).max(0.0), v + a),
            ParameterKind::OutputLevel | ParameterKind::BiasCurrent => (v - a, (v + a).min(0.0)),
            _ => (v - a, v + a),
        },
        ToleranceBand::Limits([lo, hi]) => (lo, hi),
    };
    let centre = 0.5 * (lo + hi);
    let half = 0.5 * (hi - lo);
    if !centre.is_finite() || !half.is_finite() || half < 0.0 {
        return Err(DesignError::invalid(
            &p.id,
            "its tolerance band is not a finite range: give finite limits in order",
        ));
    }
    Ok((centre, half))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> Vec<Parameter> {
        vec![
            Parameter::resistor("ra_ohm", "R1", "a", 10e3),
            Parameter::quantity("supply_v", "supply", 5.0, ParameterKind::Supply),
            Parameter::quantity("drop_v", "drop", 0.0, ParameterKind::OutputLevel),
            Parameter::quantity("offset_v", "vos", 0.002, ParameterKind::Offset),
            Parameter::quantity("ib_a", "ib", -1e-7, ParameterKind::BiasCurrent),
            Parameter::quantity("vm_v", "vm", 2.5, ParameterKind::DeviceThreshold)
                .with_limits(1.5, 3.5),
            Parameter::quantity("beta", "gain", 100.0, ParameterKind::Device),
        ]
    }

    #[test]
    fn defaults_follow_the_parameter_kind() {
        let s = ToleranceSettings {
            temperature_min_c: 25.0,
            temperature_max_c: 25.0,
            ..ToleranceSettings::default()
        };
        let b = resolve_bands(&params(), &s).unwrap();
        assert_eq!((b[0].centre, b[0].half_width), (10e3, 100.0));
        assert_eq!((b[1].centre, b[1].half_width), (5.0, 0.25));
        // Output headroom of zero cannot go negative: band [0, 50 mV].
        assert_eq!((b[2].centre, b[2].half_width), (0.025, 0.025));
        // Offset: entered magnitude, centred on zero.
        assert_eq!((b[3].centre, b[3].half_width), (0.0, 0.002));
        // Bias current keeps its sign: from zero to the entered −100 nA.
        assert_eq!((b[4].centre, b[4].half_width), (-5e-8, 5e-8));
        // Datasheet limits win over the percentage.
        assert_eq!((b[5].centre, b[5].half_width), (2.5, 1.0));
        assert!(!b[6].is_varied());
        assert!(b.iter().all(|x| x.drift_half_width == 0.0));
    }

    #[test]
    fn drift_uses_the_largest_distance_from_25_c() {
        let s = ToleranceSettings {
            temperature_min_c: -40.0,
            temperature_max_c: 85.0,
            ..ToleranceSettings::default()
        };
        let b = resolve_bands(&params(), &s).unwrap();
        // 100 ppm/K × 65 K × 10 kΩ = 65 Ω.
        assert!((b[0].drift_half_width - 65.0).abs() < 1e-9);
        assert_eq!(b[1].drift_half_width, 0.0);
    }

    #[test]
    fn overrides_replace_defaults_and_unknown_ids_are_refused() {
        let mut s = ToleranceSettings::default();
        s.overrides.push(ParameterTolerance {
            id: "ra_ohm".into(),
            band: Some(ToleranceBand::Absolute(20.0)),
            distribution: Some(Distribution::Normal),
            tempco_ppm_per_k: Some(0.0),
        });
        let b = resolve_bands(&params(), &s).unwrap();
        assert_eq!(
            (b[0].half_width, b[0].distribution, b[0].drift_half_width),
            (20.0, Distribution::Normal, 0.0)
        );
        s.overrides.push(ParameterTolerance {
            id: "nope".into(),
            ..ParameterTolerance::default()
        });
        let e = resolve_bands(&params(), &s).unwrap_err();
        assert!(e.to_string().contains("nope") && e.to_string().contains("ra_ohm"));
    }

    #[test]
    fn invalid_settings_are_refused() {
        let bad = [
            ToleranceSettings {
                resistor_tolerance_pct: f64::NAN,
                ..Default::default()
            },
            ToleranceSettings {
                resistor_tolerance_pct: 100.0,
                ..Default::default()
            },
            ToleranceSettings {
                temperature_min_c: 80.0,
                ..Default::default()
            },
            ToleranceSettings {
                monte_carlo: MonteCarloSettings {
                    trials: 1,
                    ..Default::default()
                },
                ..Default::default()
            },
            ToleranceSettings {
                corner_limit: 21,
                ..Default::default()
            },
            ToleranceSettings {
                spec: SpecWindow {
                    vt_upper_min_v: Some(3.0),
                    vt_upper_max_v: Some(2.0),
                    ..Default::default()
                },
                ..Default::default()
            },
        ];
        for s in bad {
            assert!(s.validate().is_err(), "{s:?}");
        }
        assert!(ToleranceSettings::default().validate().is_ok());
    }

    #[test]
    fn spec_window_bounds_are_inclusive_and_intersect() {
        let w = SpecWindow {
            vt_upper_max_v: Some(3.0),
            hysteresis_min_v: Some(0.5),
            ..Default::default()
        };
        assert!(w.contains([3.0, 2.0, 1.0, 2.5]));
        assert_eq!(w.violations([3.1, 2.0, 0.4, 2.5]), 0b10 | 0b1_0000);
        let v = w.intersect(&SpecWindow {
            vt_upper_max_v: Some(2.5),
            ..Default::default()
        });
        assert_eq!(v.vt_upper_max_v, Some(2.5));
        assert_eq!(v.hysteresis_min_v, Some(0.5));
        assert!(SpecWindow::default().is_empty());
    }

    #[test]
    fn empty_json_object_is_a_complete_setting() {
        let s: ToleranceSettings = serde_json::from_str("{}").unwrap();
        assert_eq!(s, ToleranceSettings::default());
        let s: ToleranceSettings =
            serde_json::from_str(r#"{"overrides":[{"id":"ra_ohm","band":{"limits":[9900,10100]}}],"distribution":"normal"}"#).unwrap();
        assert_eq!(
            s.overrides[0].band,
            Some(ToleranceBand::Limits([9900.0, 10100.0]))
        );
        assert_eq!(s.distribution, Distribution::Normal);
    }

    #[test]
    fn corners_do_not_read_the_monte_carlo_settings() {
        let mut a = ToleranceSettings::default();
        a.monte_carlo.trials = 5_000;
        a.monte_carlo.seed = 9;
        a.resistor_tolerance_pct = 5.0;
        let b = a.without_monte_carlo();
        assert_eq!(b.monte_carlo, MonteCarloSettings::default());
        assert_eq!(b.resistor_tolerance_pct, 5.0);
        assert_eq!(b, ToleranceSettings { monte_carlo: MonteCarloSettings::default(), ..a.clone() });
    }
}
