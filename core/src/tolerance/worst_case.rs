//! Worst-case (extreme-value) analysis: the lowest and highest VT+, VT−, hysteresis and centre over
//! the tolerance bands, and the parameter corner that gives each.
//!
//! Two methods (DOMAIN §2, common practice):
//! - **corners**: every combination of each varied parameter at the low or the high end of its band
//!   (tolerance plus drift), 2^n evaluations. Exact when each figure is monotonic in each parameter
//!   with the others held fixed (the direction may depend on the others): moving one coordinate at a
//!   time to the better end never loses, so the extremes over the box lie at its vertices.
//! - **sensitivity sign**: each parameter at the end its sensitivity ∂f/∂x at the band centre points
//!   to (the centre when ∂f/∂x = 0), two evaluations per figure. Exact under the same monotonicity.
//!
//! **Search inside the bands**: a figure that is not monotonic in some parameter (a datasheet level
//! clamped against a supply-dependent limit, say) can take its extremes inside the box, where no
//! corner looks. From each extreme the method found, every varied parameter is scanned over its band
//! in turn (a grid of [`SEARCH_GRID`] intervals, then a golden-section refinement of the best
//! interval), keeping each improvement, until a sweep over all parameters improves nothing (at most
//! [`SEARCH_SWEEPS`] sweeps). For a monotonic figure the first sweep finds nothing and the corners
//! stand; otherwise the report says so ([`WorstCase::non_monotone`]) and gives the search's extremes.
//!
//! **Fallback**: with more varied parameters than the corner limit (settings `corner_limit`, at most
//! 20, default 12 → 4096 evaluations) only the sensitivity-sign method runs; the report says so.
//! When both run, the report says whether they agree.

use super::{evaluate, Figure, Figures, Prepared, ToleranceSettings};
use crate::error::DesignError;
use crate::topology::Circuit;
use serde::{Deserialize, Serialize};

/// Which method the reported extremes come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WorstCaseMethod {
    /// Every corner was evaluated.
    Corners,
    /// Sensitivity-sign method alone (too many parameters for every corner).
    SensitivitySign,
}

/// Where a parameter sits in a corner.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    /// Low end of its band (centre − tolerance − drift).
    Low,
    /// Somewhere inside its band, neither end nor centre (found by the search inside the bands).
    Inside,
    /// Centre of its band (the figure does not depend on it).
    Centre,
    /// High end of its band (centre + tolerance + drift).
    High,
}

/// One varied parameter's position in a corner.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct CornerSide {
    /// Parameter identifier.
    pub id: String,
    /// Where it sits.
    pub side: Side,
}

/// An extreme value and the corner that gives it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Extreme {
    /// The figure's value there, volts.
    pub value_v: f64,
    /// Position of every varied parameter, in parameter order.
    pub corner: Vec<CornerSide>,
    /// Every parameter's value at the extreme, base units, in band order.
    #[serde(default)]
    pub values: Vec<f64>,
}

/// Lowest and highest value of one figure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Extremes {
    /// Lowest value.
    pub min: Extreme,
    /// Highest value.
    pub max: Extreme,
}

/// Result of the worst-case analysis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorstCase {
    /// Method the extremes come from.
    pub method: WorstCaseMethod,
    /// Number of parameters with a band wider than zero.
    pub varied_parameters: usize,
    /// Number of circuit evaluations made.
    pub evaluations: u64,
    /// VT+ extremes.
    pub vt_upper: Extremes,
    /// VT− extremes.
    pub vt_lower: Extremes,
    /// Hysteresis extremes.
    pub hysteresis: Extremes,
    /// Centre extremes.
    pub centre: Extremes,
    /// With corners: how far the sensitivity-sign method's range falls inside the corners' range,
    /// per figure, volts (the larger of the two ends; 0 when both methods agree). A figure whose
    /// sensitivity to some parameter changes sign inside the bands (the centre of a symmetric
    /// design, for one) shows a shortfall. `None` when only the sign method ran.
    pub sign_method_shortfall: Option<Figures>,
    /// Whether the search inside the bands found a figure beyond every point the method read: the
    /// response is not monotonic in some parameter, corners alone are no bound, and the extremes
    /// reported are the search's.
    #[serde(default)]
    pub non_monotone: bool,
}

/// Intervals of the grid each parameter is scanned over in the search inside the bands.
pub const SEARCH_GRID: usize = 8;

/// Largest number of sweeps over all parameters in the search inside the bands.
pub const SEARCH_SWEEPS: usize = 6;

impl WorstCase {
    /// The extremes of one figure.
    pub fn figure(&self, f: Figure) -> &Extremes {
        match f {
            Figure::VtUpper => &self.vt_upper,
            Figure::VtLower => &self.vt_lower,
            Figure::Hysteresis => &self.hysteresis,
            Figure::Centre => &self.centre,
        }
    }
}

/// Worst case by corners when the varied parameters are few enough, else by sensitivity sign.
pub fn worst_case<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<WorstCase, DesignError> {
    from_prepared(&Prepared::new(circuit, settings)?, settings.corner_limit)
}

/// Worst case by evaluating every corner, whatever the corner limit says (up to 20 varied
/// parameters); corners only, without the search inside the bands.
pub fn worst_case_corners<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<WorstCase, DesignError> {
    let prep = Prepared::new(circuit, settings)?;
    let (ext, evals) = corners(&prep, super::settings::MAX_CORNER_LIMIT)?;
    Ok(assemble(&prep, WorstCaseMethod::Corners, to_values(&prep, &ext), evals, None))
}

/// Worst case by the sensitivity-sign method alone (without the search inside the bands).
pub fn worst_case_sensitivity_sign<C: Circuit>(
    circuit: &C,
    settings: &ToleranceSettings,
) -> Result<WorstCase, DesignError> {
    let prep = Prepared::new(circuit, settings)?;
    let (ext, evals) = sign_method(&prep)?;
    Ok(assemble(
        &prep,
        WorstCaseMethod::SensitivitySign,
        to_values(&prep, &ext),
        evals,
        None,
    ))
}

/// Value and side vector (−1, 0, +1 per parameter) of each figure's min and max: [figure][0 min, 1 max].
type Found = [[(f64, Vec<i8>); 2]; 4];

pub(crate) fn from_prepared<C: Circuit>(
    prep: &Prepared<C>,
    corner_limit: usize,
) -> Result<WorstCase, DesignError> {
    let (sign, sign_evals) = sign_method(prep)?;
    let n = prep.varied().len();
    let scan = if n > corner_limit {
        None
    } else {
        Some(scan_corners(prep, corner_limit, 0, 1u64 << n)?)
    };
    conclude(prep, &sign, sign_evals, scan.as_ref())
}

/// The rest of the worst case once the sign method has run and, with corners, every corner has
/// been scanned: the sign method's shortfall, the search inside the bands and the report.
fn conclude<C: Circuit>(
    prep: &Prepared<C>,
    sign: &Found,
    sign_evals: u64,
    scan: Option<&CornerScan>,
) -> Result<WorstCase, DesignError> {
    let Some(scan) = scan else {
        let (found, evals, moved) = search_inside(prep, to_values(prep, sign));
        let mut wc = assemble(prep, WorstCaseMethod::SensitivitySign, found, sign_evals + evals, None);
        wc.non_monotone = moved;
        return Ok(wc);
    };
    let corner = found_of(prep, scan);
    let corner_evals = scan.end - scan.start;
    let gap = |q: usize| {
        (corner[q][1].0 - sign[q][1].0)
            .max(sign[q][0].0 - corner[q][0].0)
            .max(0.0)
    };
    let shortfall = Figures {
        vt_upper_v: gap(0),
        vt_lower_v: gap(1),
        hysteresis_v: gap(2),
        centre_v: gap(3),
    };
    let (found, evals, moved) = search_inside(prep, to_values(prep, &corner));
    let mut wc = assemble(prep, WorstCaseMethod::Corners, found, corner_evals + sign_evals + evals, Some(shortfall));
    wc.non_monotone = moved;
    Ok(wc)
}

/// The best corners found over consecutive corner indices `[start, end)` (corner index: bit j set
/// = the j-th varied parameter at the high end of its band): per figure the lowest and highest
/// value and the first index that gives it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CornerScan {
    /// First corner index covered.
    pub start: u64,
    /// One past the last corner index covered.
    pub end: u64,
    /// [figure: VT+, VT−, hysteresis, centre][0: min, 1: max] → (value, corner index).
    pub best: [[(f64, u64); 2]; 4],
}

impl CornerScan {
    fn empty(at: u64) -> CornerScan {
        CornerScan {
            start: at,
            end: at,
            best: [[(f64::INFINITY, 0), (f64::NEG_INFINITY, 0)]; 4],
        }
    }

    /// Appends the scan of the next corners (it must start where this one ends). A later corner
    /// replaces an earlier one only when strictly better, as in one pass over all corners, so the
    /// merged scan equals the scan of the whole range.
    pub fn merge(&mut self, next: &CornerScan) -> Result<(), DesignError> {
        if next.start != self.end {
            return Err(DesignError::Parameter {
                reason: format!(
                    "corner scans must be merged in order: this one ends at corner {}, the next starts at {}",
                    self.end, next.start
                ),
            });
        }
        if next.end > next.start {
            for q in 0..4 {
                if next.best[q][0].0 < self.best[q][0].0 || self.end == self.start {
                    self.best[q][0] = next.best[q][0];
                }
                if next.best[q][1].0 > self.best[q][1].0 || self.end == self.start {
                    self.best[q][1] = next.best[q][1];
                }
            }
        }
        self.end = next.end;
        Ok(())
    }
}

/// A worst case run in slices of corners (the page's progress, Cancel between slices); the result
/// equals [`worst_case`]'s however it was sliced. `new` prepares the bands and runs the
/// sensitivity-sign method; [`WorstCaseRun::scan`] evaluates a range of corners; `finish`
/// concludes from the merged scan (the search inside the bands and the report).
pub struct WorstCaseRun<C: Circuit> {
    prep: Prepared<C>,
    corner_limit: usize,
    sign: Found,
    sign_evals: u64,
}

impl<C: Circuit> WorstCaseRun<C> {
    /// Checks the circuit and the settings, resolves the bands and runs the sign method.
    pub fn new(circuit: &C, settings: &ToleranceSettings) -> Result<Self, DesignError> {
        settings.validate()?;
        let prep = Prepared::new(circuit, settings)?;
        let (sign, sign_evals) = sign_method(&prep)?;
        Ok(WorstCaseRun { prep, corner_limit: settings.corner_limit, sign, sign_evals })
    }

    /// Number of parameters with a band wider than zero.
    pub fn varied_parameters(&self) -> usize {
        self.prep.varied().len()
    }

    /// Corners to evaluate: 2^n for n varied parameters, 0 when n exceeds the corner limit (the
    /// sign method alone).
    pub fn corners(&self) -> u64 {
        let n = self.prep.varied().len();
        if n > self.corner_limit {
            0
        } else {
            1u64 << n
        }
    }

    /// Evaluates corners `[start, end)`.
    pub fn scan(&self, start: u64, end: u64) -> Result<CornerScan, DesignError> {
        if start > end || end > self.corners() {
            return Err(DesignError::Parameter {
                reason: format!("corners {start}..{end} are not inside 0..{}", self.corners()),
            });
        }
        if self.corners() == 0 {
            // Too many varied parameters for the corners: the sign method alone (the fallback),
            // so there is nothing to scan.
            return Ok(CornerScan::empty(start));
        }
        scan_corners(&self.prep, self.corner_limit, start, end)
    }

    /// The worst case from the scan of every corner (ignored when there are none to scan).
    pub fn finish(&self, scan: &CornerScan) -> Result<WorstCase, DesignError> {
        let count = self.corners();
        if count == 0 {
            return conclude(&self.prep, &self.sign, self.sign_evals, None);
        }
        if scan.start != 0 || scan.end != count {
            return Err(DesignError::Parameter {
                reason: format!("the worst case needs every corner: the scan covers {}..{} of 0..{count}", scan.start, scan.end),
            });
        }
        conclude(&self.prep, &self.sign, self.sign_evals, Some(scan))
    }
}

/// Value and parameter values of each figure's min and max: [figure][0 min, 1 max].
type FoundValues = [[(f64, Vec<f64>); 2]; 4];

fn to_values<C: Circuit>(prep: &Prepared<C>, found: &Found) -> FoundValues {
    let m = prep.bands.len();
    found.clone().map(|pair| {
        pair.map(|(v, sides)| {
            let mut values = vec![0.0; m];
            set_sides(prep, &sides, &mut values);
            (v, values)
        })
    })
}

/// The search inside the bands (module notes) from each extreme in `found`. Returns the improved
/// extremes, the evaluations made and whether any extreme moved. Points where the circuit is
/// invalid are skipped: the search only looks for larger excursions among valid circuits.
fn search_inside<C: Circuit>(prep: &Prepared<C>, mut found: FoundValues) -> (FoundValues, u64, bool) {
    let varied = prep.varied();
    let mut evals = 0u64;
    let mut moved = false;
    for (q, pair) in found.iter_mut().enumerate() {
        for (k, (best, x)) in pair.iter_mut().enumerate() {
            // Maximise g = ±figure.
            let sign = if k == 1 { 1.0 } else { -1.0 };
            let mut g_best = sign * *best;
            let tiny = |g: f64| 1e-12 * g.abs().max(1e-3);
            let eval = |x: &[f64], evals: &mut u64| -> Option<f64> {
                *evals += 1;
                evaluate(&prep.circuit, x).ok().map(|f| sign * f.as_array()[q]).filter(|g| g.is_finite())
            };
            for _ in 0..SEARCH_SWEEPS {
                let mut improved = false;
                for &i in &varied {
                    let b = &prep.bands[i];
                    let (lo, hi) = (b.centre - b.total_half_width(), b.centre + b.total_half_width());
                    let step = (hi - lo) / SEARCH_GRID as f64;
                    let keep = x[i];
                    let mut cand = (g_best, keep);
                    for j in 0..=SEARCH_GRID {
                        x[i] = if j == SEARCH_GRID { hi } else { lo + step * j as f64 };
                        if let Some(g) = eval(x, &mut evals) {
                            if g > cand.0 + tiny(cand.0) {
                                cand = (g, x[i]);
                            }
                        }
                    }
                    if cand.1 != keep {
                        // Golden-section refinement around the best grid point.
                        let (mut a, mut c) = ((cand.1 - step).max(lo), (cand.1 + step).min(hi));
                        let r = 0.5 * (5f64.sqrt() - 1.0);
                        for _ in 0..24 {
                            let (p1, p2) = (c - r * (c - a), a + r * (c - a));
                            x[i] = p1;
                            let g1 = eval(x, &mut evals).unwrap_or(f64::NEG_INFINITY);
                            x[i] = p2;
                            let g2 = eval(x, &mut evals).unwrap_or(f64::NEG_INFINITY);
                            if g1 > cand.0 {
                                cand = (g1, p1);
                            }
                            if g2 > cand.0 {
                                cand = (g2, p2);
                            }
                            if g1 >= g2 { c = p2 } else { a = p1 }
                        }
                        g_best = cand.0;
                        x[i] = cand.1;
                        improved = true;
                        moved = true;
                    } else {
                        x[i] = keep;
                    }
                }
                if !improved {
                    break;
                }
            }
            *best = sign * g_best;
        }
    }
    (found, evals, moved)
}

fn set_sides<C: Circuit>(prep: &Prepared<C>, sides: &[i8], values: &mut [f64]) {
    for (i, b) in prep.bands.iter().enumerate() {
        values[i] = b.centre + f64::from(sides[i]) * b.total_half_width();
    }
}

fn corner_error<C: Circuit>(prep: &Prepared<C>, sides: &[i8], e: DesignError) -> DesignError {
    let at: Vec<String> = prep
        .bands
        .iter()
        .zip(sides)
        .filter(|(b, _)| b.is_varied())
        .map(|(b, s)| {
            format!(
                "{} {}",
                b.parameter.id,
                if *s > 0 {
                    "high"
                } else if *s < 0 {
                    "low"
                } else {
                    "centre"
                }
            )
        })
        .collect();
    DesignError::inconsistent(format!(
        "the circuit is invalid at the tolerance corner ({}): {e}; narrow those bands",
        at.join(", ")
    ))
}

fn corners<C: Circuit>(prep: &Prepared<C>, limit: usize) -> Result<(Found, u64), DesignError> {
    let n = prep.varied().len();
    let count = if n > limit { 0 } else { 1u64 << n };
    let scan = scan_corners(prep, limit, 0, count)?;
    Ok((found_of(prep, &scan), count))
}

/// Evaluates corners `[start, end)` (see [`CornerScan`]).
fn scan_corners<C: Circuit>(prep: &Prepared<C>, limit: usize, start: u64, end: u64) -> Result<CornerScan, DesignError> {
    let varied = prep.varied();
    let n = varied.len();
    if n > limit {
        return Err(DesignError::Parameter {
            reason: format!("{n} parameters vary, so 2^{n} corners exceed the limit of 2^{limit}: fix some bands at zero or use the sensitivity-sign method"),
        });
    }
    let m = prep.bands.len();
    let mut sides = vec![0i8; m];
    let mut values = prep.centres.clone();
    let mut out = CornerScan::empty(start);
    out.end = end;
    let best = &mut out.best;
    for mask in start..end {
        for (j, &i) in varied.iter().enumerate() {
            sides[i] = if mask >> j & 1 == 1 { 1 } else { -1 };
        }
        set_sides(prep, &sides, &mut values);
        let f = evaluate(&prep.circuit, &values)
            .map_err(|e| corner_error(prep, &sides, e))?
            .as_array();
        for q in 0..4 {
            if f[q] < best[q][0].0 {
                best[q][0] = (f[q], mask);
            }
            if f[q] > best[q][1].0 {
                best[q][1] = (f[q], mask);
            }
        }
    }
    Ok(out)
}

/// The extremes of a scan as side vectors.
fn found_of<C: Circuit>(prep: &Prepared<C>, scan: &CornerScan) -> Found {
    let varied = prep.varied();
    let m = prep.bands.len();
    let to_sides = |mask: u64| {
        let mut s = vec![0i8; m];
        for (j, &i) in varied.iter().enumerate() {
            s[i] = if mask >> j & 1 == 1 { 1 } else { -1 };
        }
        s
    };
    scan.best.map(|[lo, hi]| [(lo.0, to_sides(lo.1)), (hi.0, to_sides(hi.1))])
}

fn sign_method<C: Circuit>(prep: &Prepared<C>) -> Result<(Found, u64), DesignError> {
    let m = prep.bands.len();
    let mut values = prep.centres.clone();
    let mut out: Vec<[(f64, Vec<i8>); 2]> = Vec::with_capacity(4);
    for (q, f) in Figure::ALL.into_iter().enumerate() {
        let mut pair: Vec<(f64, Vec<i8>)> = Vec::with_capacity(2);
        for dir in [-1i8, 1] {
            let sides: Vec<i8> = (0..m)
                .map(|i| {
                    let d = prep.sensitivity(f, i);
                    if !prep.bands[i].is_varied() || d == 0.0 {
                        0
                    } else if d > 0.0 {
                        dir
                    } else {
                        -dir
                    }
                })
                .collect();
            set_sides(prep, &sides, &mut values);
            let v = evaluate(&prep.circuit, &values)
                .map_err(|e| corner_error(prep, &sides, e))?
                .as_array()[q];
            pair.push((v, sides));
        }
        let hi = pair.pop().unwrap_or_default();
        let lo = pair.pop().unwrap_or_default();
        out.push([lo, hi]);
    }
    let mut it = out.into_iter();
    let mut next = || it.next().unwrap_or_default();
    Ok(([next(), next(), next(), next()], 8))
}

fn assemble<C: Circuit>(
    prep: &Prepared<C>,
    method: WorstCaseMethod,
    found: FoundValues,
    evaluations: u64,
    shortfall: Option<Figures>,
) -> WorstCase {
    let extreme = |(value_v, values): &(f64, Vec<f64>)| Extreme {
        value_v: *value_v,
        corner: prep
            .bands
            .iter()
            .zip(values)
            .filter(|(b, _)| b.is_varied())
            .map(|(b, &v)| CornerSide {
                id: b.parameter.id.clone(),
                side: if v == b.centre + b.total_half_width() {
                    Side::High
                } else if v == b.centre - b.total_half_width() {
                    Side::Low
                } else if v == b.centre {
                    Side::Centre
                } else {
                    Side::Inside
                },
            })
            .collect(),
        values: values.clone(),
    };
    let ex = |q: usize| Extremes {
        min: extreme(&found[q][0]),
        max: extreme(&found[q][1]),
    };
    WorstCase {
        method,
        varied_parameters: prep.varied().len(),
        evaluations,
        vt_upper: ex(0),
        vt_lower: ex(1),
        hysteresis: ex(2),
        centre: ex(3),
        sign_method_shortfall: shortfall,
        non_monotone: false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    fn design() -> InvertingSchmitt {
        let dev = Comparator {
            offset_v: 0.003,
            bias_plus_a: 50e-9,
            bias_minus_a: 50e-9,
            source_resistance_ohm: 1e3,
            ..Comparator::ideal(5.0)
        };
        InvertingSchmitt::single_supply(12e3, 10e3, 47e3, dev)
    }

    #[test]
    fn corners_and_sign_method_agree_for_the_monotonic_inverting_case() {
        // DOMAIN §2: threshold signs against every parameter are fixed in topology a, so both
        // methods must land on the same corners.
        let s = ToleranceSettings::default();
        let wc = worst_case(&design(), &s).unwrap();
        assert_eq!(wc.method, WorstCaseMethod::Corners);
        let sign = worst_case_sensitivity_sign(&design(), &s).unwrap();
        // The thresholds: bit-identical values, at the same corner for every parameter the
        // threshold depends on (the sign method leaves the others, e.g. VOL for VT+, at the centre).
        for f in [Figure::VtUpper, Figure::VtLower] {
            for (a, b) in [
                (&wc.figure(f).min, &sign.figure(f).min),
                (&wc.figure(f).max, &sign.figure(f).max),
            ] {
                assert_eq!(a.value_v, b.value_v, "{f:?}");
                for (x, y) in a.corner.iter().zip(&b.corner) {
                    assert!(
                        y.side == Side::Centre || x.side == y.side,
                        "{f:?} {x:?} {y:?}"
                    );
                }
            }
        }
        // The hysteresis k·(VOH − VOL) is monotonic too; it differs only by rounding where the
        // sign method leaves a parameter the hysteresis does not depend on (the offset) at its centre.
        let short = wc.sign_method_shortfall.unwrap();
        assert_eq!((short.vt_upper_v, short.vt_lower_v), (0.0, 0.0));
        assert!(short.hysteresis_v < 1e-15, "{}", short.hysteresis_v);
        // Ra (to the supply) high lowers VT+: DOMAIN §2 a, ∂VT/∂Ra = (VT − VA)·Rp/Ra² < 0.
        let side = |e: &Extreme, id: &str| e.corner.iter().find(|c| c.id == id).map(|c| c.side);
        assert_eq!(side(&wc.vt_upper.min, "ra_ohm"), Some(Side::High));
        assert_eq!(side(&wc.vt_upper.max, "ra_ohm"), Some(Side::Low));
        assert_eq!(side(&wc.vt_upper.max, "supply_v"), Some(Side::High));
    }

    #[test]
    fn resistor_only_extremes_match_the_closed_form() {
        // Rail-to-rail closed form (DOMAIN §1a): VT+ = VCC·Rb/(Rb + Ra‖Rf); highest with Rb high,
        // Ra and Rf low.
        let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
        let s = ToleranceSettings {
            supply_tolerance_pct: 0.0,
            output_level_tolerance_v: 0.0,
            offset_v: Some(0.0),
            temperature_min_c: 25.0,
            temperature_max_c: 25.0,
            ..Default::default()
        };
        let wc = worst_case(&c, &s).unwrap();
        assert_eq!(wc.varied_parameters, 3);
        // Corners and sign method, then one search sweep per extreme that finds nothing better
        // (the figures are monotonic): 8 extremes × 3 parameters × (grid + 1) points.
        assert_eq!(wc.evaluations, 8 + 8 + 8 * 3 * (SEARCH_GRID as u64 + 1));
        assert!(!wc.non_monotone);
        let par = |a: f64, b: f64| a * b / (a + b);
        let (ra, rb, rf) = (9.9e3, 10.1e3, 19.8e3);
        let expected = 5.0 * rb / (rb + par(ra, rf));
        assert!((wc.vt_upper.max.value_v - expected).abs() < 1e-12);
    }

    #[test]
    fn a_clamped_level_is_found_by_the_search_inside_the_bands() {
        // CMOS buffer Schmitt (DOMAIN §1d): VM is kept inside [VIL, VIH] = [0.3, 0.7]·VDD of the
        // supply in use, so with VM at its upper limit VT− rises with VDD until 0.7·VDD stops
        // clamping VM, then falls: its maximum lies inside the supply band, not at a corner.
        use crate::topology::cmos_buffer::{CmosBufferSchmitt, CmosGate};
        let c = CmosBufferSchmitt::new(10e3, 47e3, CmosGate { supply_v: 3.3, ..CmosGate::default() });
        let s = ToleranceSettings { temperature_min_c: 25.0, temperature_max_c: 25.0, ..Default::default() };
        let corners_only = worst_case_corners(&c, &s).unwrap();
        let wc = worst_case(&c, &s).unwrap();
        assert!(wc.non_monotone);
        assert!(wc.vt_lower.max.value_v > corners_only.vt_lower.max.value_v + 1e-3);
        // The peak sits where 0.7·VDD meets VM: the supply at its centre here, inside the band.
        assert!(wc.vt_lower.max.corner.iter().any(|c| matches!(c.side, Side::Inside | Side::Centre)));
    }

    #[test]
    fn too_many_parameters_fall_back_to_the_sign_method() {
        let s = ToleranceSettings {
            corner_limit: 2,
            ..Default::default()
        };
        let wc = worst_case(&design(), &s).unwrap();
        assert_eq!(wc.method, WorstCaseMethod::SensitivitySign);
        assert_eq!(wc.sign_method_shortfall, None);
        assert_eq!(wc.evaluations, 8 + 8 * wc.varied_parameters as u64 * (SEARCH_GRID as u64 + 1));
        assert!(!wc.non_monotone);
    }

    #[test]
    fn an_invalid_corner_is_reported_with_the_bands_to_narrow() {
        // A supply band that reaches below the negative rail (0 V) makes the low corners invalid.
        let mut s = ToleranceSettings::default();
        s.overrides.push(super::super::ParameterTolerance {
            id: "supply_v".into(),
            band: Some(super::super::ToleranceBand::Limits([-1.0, 6.0])),
            ..Default::default()
        });
        let e = worst_case(
            &InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0)),
            &s,
        )
        .unwrap_err();
        assert!(e.to_string().contains("supply_v low"), "{e}");
    }
}
