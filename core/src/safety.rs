//! Cautions a design calls for: voltages above extra-low-voltage limits, battery packs and mains.
//! The page shows them beside the design and on the bench sheet, the command-line result carries
//! them, and the bench procedure takes its safety equipment from [`bench_safety`]. They defer to
//! local codes and licensed practice (shared/DOMAIN.md §5 and §8; limits recalled from memory —
//! check the current editions).
//!
//! **From values, not words.** Every voltage the design states or reaches is collected
//! ([`design_voltages`]): the circuit's supply, rails and references, the check settings' input
//! and supply ranges, the signal study's levels and amplitudes (components and hum), and the
//! analysis's device-input nodes, resistor voltages and thresholds. Each is split into a steady
//! part and an alternating part; a design is marked when any steady part exceeds
//! [`ELV_DC_V`], any alternating part exceeds [`ELV_AC_RMS_V`] r.m.s., or any peak (steady plus
//! alternating) exceeds [`ELV_DC_V`]. An input range that reaches both polarities is taken as
//! alternating (a sine of that peak). The name, purpose and notes are read only as an extra hint
//! for mains and battery designs.

use crate::analysis::{Analysis, CheckSettings};
use crate::record::DesignRecord;
use crate::signal::generate::Component;
use crate::signal::noise::NoiseSource;
use crate::topology::{analyse, Circuit, ParameterKind, Topology};
use serde::{Deserialize, Serialize};

/// Extra-low-voltage limit for ripple-free d.c., volts: 60 V, the touch-safe limit commonly taken
/// for dry locations (common practice; IEC 61140 / IEC 60364-4-41 family, from memory — defer to
/// local codes).
pub const ELV_DC_V: f64 = 60.0;
/// Extra-low-voltage limit for a.c., volts r.m.s.: 25 V, commonly taken for dry locations
/// (common practice; IEC 61140 / IEC 60364-4-41 family, from memory — defer to local codes).
pub const ELV_AC_RMS_V: f64 = 25.0;
/// The a.c. limit as the peak of a sine, volts: [`ELV_AC_RMS_V`]·√2 ≈ 35.4 V.
pub const ELV_AC_PEAK_V: f64 = ELV_AC_RMS_V * std::f64::consts::SQRT_2;
/// An alternating voltage of at least this r.m.s. value is taken as mains-derived, volts
/// (the lowest common mains, 100 V, less 10 %; common practice).
pub const MAINS_MIN_RMS_V: f64 = 90.0;

/// Why a caution applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CautionKind {
    /// A voltage in the design exceeds the extra-low-voltage limit.
    AboveExtraLowVoltage,
    /// The design watches a battery or battery pack.
    Battery,
    /// The design is connected to mains (zero-crossing detection, droppers).
    Mains,
}

/// One caution, with the usual advice.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Caution {
    /// What triggered it.
    pub kind: CautionKind,
    /// The advice, in plain words.
    pub message: String,
}

/// One voltage of the design, split into its steady and alternating parts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignVoltage {
    /// Where it comes from ("supply", "input range", "signal", "R2", ...).
    pub source: String,
    /// Largest magnitude of the steady (d.c. or slowly varying) part, volts.
    pub steady_v: f64,
    /// R.m.s. value of the alternating part, volts (0 for d.c.).
    pub alternating_rms_v: f64,
    /// Largest magnitude reached, steady plus alternating peak, volts.
    pub peak_v: f64,
}

impl DesignVoltage {
    fn dc(source: impl Into<String>, v: f64) -> Self {
        let v = if v.is_finite() { v.abs() } else { 0.0 };
        DesignVoltage { source: source.into(), steady_v: v, alternating_rms_v: 0.0, peak_v: v }
    }

    /// Whether this voltage exceeds the extra-low-voltage limits ([`ELV_DC_V`] steady or peak,
    /// [`ELV_AC_RMS_V`] alternating).
    pub fn above_extra_low_voltage(&self) -> bool {
        self.steady_v > ELV_DC_V || self.alternating_rms_v > ELV_AC_RMS_V || self.peak_v > ELV_DC_V
    }

    /// Whether this voltage looks mains-derived (an alternating part of at least [`MAINS_MIN_RMS_V`]).
    pub fn mains_derived(&self) -> bool {
        self.alternating_rms_v >= MAINS_MIN_RMS_V
    }

    fn describe(&self) -> String {
        if self.alternating_rms_v > 0.0 {
            format!("{}: {:.1} V r.m.s. alternating, {:.1} V peak", self.source, self.alternating_rms_v, self.peak_v)
        } else {
            format!("{}: {:.1} V", self.source, self.peak_v)
        }
    }
}

/// A range of input voltages: taken as alternating (a sine of the larger magnitude) when it
/// reaches both polarities, as steady otherwise.
fn range_voltage(source: &str, lo: Option<f64>, hi: Option<f64>) -> Option<DesignVoltage> {
    let (lo, hi) = (lo.filter(|v| v.is_finite()), hi.filter(|v| v.is_finite()));
    let peak = lo.map_or(0.0, f64::abs).max(hi.map_or(0.0, f64::abs));
    if lo.is_none() && hi.is_none() {
        return None;
    }
    if lo.is_some_and(|l| l < 0.0) && hi.is_some_and(|h| h > 0.0) {
        let swing = 0.5 * (hi.unwrap_or(0.0) - lo.unwrap_or(0.0));
        return Some(DesignVoltage {
            source: source.into(),
            steady_v: (peak - swing).max(0.0),
            alternating_rms_v: swing / std::f64::consts::SQRT_2,
            peak_v: peak,
        });
    }
    Some(DesignVoltage::dc(source, peak))
}

/// The signal study's voltage: steady part from the levels, ramps, approaches and drift (each
/// monotone, so bounded by its change over the record); alternating part from the periodic
/// components and hum (r.m.s. values added, an upper bound for any phases).
fn signal_voltage(settings: &crate::signal::report::SignalSettings) -> DesignVoltage {
    let def = &settings.definition;
    let dur = if def.duration_s.is_finite() { def.duration_s.max(0.0) } else { 0.0 };
    let (mut level, mut wander, mut rms, mut peak) = (0.0_f64, 0.0_f64, 0.0_f64, 0.0_f64);
    let mut periodic = |amp: f64, crest: f64| {
        if amp.is_finite() {
            rms += amp.abs() / crest;
            peak += amp.abs();
        }
    };
    for c in &def.components {
        match *c {
            Component::Dc { level_v } => level += level_v,
            Component::Sine { amplitude_v, .. } => periodic(amplitude_v, std::f64::consts::SQRT_2),
            Component::Triangle { amplitude_v, .. } => periodic(amplitude_v, 3f64.sqrt()),
            Component::Square { amplitude_v, .. } => periodic(amplitude_v, 1.0),
            Component::Ramp { slope_v_per_s, start_s, stop_s } => {
                let end = stop_s.unwrap_or(dur).min(dur);
                wander += (slope_v_per_s * (end - start_s).max(0.0)).abs();
            }
            Component::RcApproach { step_v, .. } => wander += step_v.abs(),
            Component::Drift { rate_v_per_s } => wander += (rate_v_per_s * dur).abs(),
        }
    }
    for n in &def.noise {
        if let NoiseSource::Hum { amplitude_v, harmonics, .. } = n {
            periodic(*amplitude_v, std::f64::consts::SQRT_2);
            for h in harmonics {
                periodic(amplitude_v * h.relative_amplitude, std::f64::consts::SQRT_2);
            }
        }
    }
    let steady = if level.is_finite() && wander.is_finite() { level.abs() + wander } else { 0.0 };
    DesignVoltage { source: "signal".into(), steady_v: steady, alternating_rms_v: rms, peak_v: steady + peak }
}

/// Every voltage the design states or reaches (see the module documentation), from the record
/// and, when given, its analysis.
pub fn design_voltages(record: &DesignRecord, analysis: Option<&Analysis>) -> Vec<DesignVoltage> {
    let mut out = circuit_voltages(&record.circuit, analysis, &record.checks);
    if let Some(t) = &record.targets {
        out.push(DesignVoltage::dc("target VT+", t.vt_upper_v));
        out.push(DesignVoltage::dc("target VT−", t.vt_lower_v));
    }
    if let Some(s) = &record.signal {
        out.push(signal_voltage(s));
    }
    out
}

/// The voltages that the circuit, its check settings and its analysis give (no signal settings).
fn circuit_voltages(circuit: &Topology, analysis: Option<&Analysis>, checks: &CheckSettings) -> Vec<DesignVoltage> {
    let mut out = Vec::new();
    out.push(DesignVoltage::dc("supply", circuit.supply_v()));
    out.push(DesignVoltage::dc("negative rail", circuit.negative_rail_v()));
    for p in circuit.parameters() {
        if matches!(p.kind, ParameterKind::Supply | ParameterKind::Reference) {
            out.push(DesignVoltage::dc(p.label.clone(), p.value));
        }
    }
    out.extend(range_voltage("input range", checks.input_min_v, checks.input_max_v));
    out.extend(range_voltage("supply range", checks.supply_min_v, checks.supply_max_v));
    if let Ok(t) = circuit.thresholds() {
        out.push(DesignVoltage::dc("VT+", t.vt_upper_v));
        out.push(DesignVoltage::dc("VT−", t.vt_lower_v));
    }
    if let Some(a) = analysis {
        for r in &a.resistors {
            out.push(DesignVoltage::dc(format!("across {}", r.designator), r.max_volts));
        }
        for n in &a.device_inputs {
            out.push(DesignVoltage::dc(format!("node {}", n.name), n.min_v.abs().max(n.max_v.abs())));
        }
        for c in &a.supply_corners {
            out.push(DesignVoltage::dc("supply corner", c.supply_v));
        }
        out.push(DesignVoltage::dc("output high", a.output_high_v));
    }
    out.retain(|v| v.peak_v.is_finite());
    out
}

/// The voltage that most exceeds the limits (largest peak among those above; of equal peaks, the
/// alternating one), if any.
fn worst_above(voltages: &[DesignVoltage]) -> Option<&DesignVoltage> {
    voltages
        .iter()
        .filter(|v| v.above_extra_low_voltage())
        .max_by(|a, b| a.peak_v.total_cmp(&b.peak_v).then(a.alternating_rms_v.total_cmp(&b.alternating_rms_v)))
}

fn mentions(text: &str, words: &[&str]) -> bool {
    let t = text.to_lowercase();
    words.iter().any(|w| t.contains(w))
}

/// Whether the text names a mains voltage: a number from 100 to 480 followed by "v" (as in
/// "230 V", "240VAC", "120 v"). A hint only; the values decide first.
fn names_mains_voltage(text: &str) -> bool {
    let t = text.to_lowercase();
    let b = t.as_bytes();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit() && (i == 0 || !(b[i - 1].is_ascii_digit() || b[i - 1] == b'.')) {
            let start = i;
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            let n: f64 = t[start..i].parse().unwrap_or(0.0);
            let mut j = i;
            while j < b.len() && b[j] == b' ' {
                j += 1;
            }
            if (100.0..=480.0).contains(&n) && j < b.len() && b[j] == b'v' && (j + 1 == b.len() || !b[j + 1].is_ascii_alphabetic() || t[j..].starts_with("vac") || t[j..].starts_with("vrms")) {
                return true;
            }
        } else {
            i += 1;
        }
    }
    false
}

/// The line every list of cautions ends with on the page: the arithmetic is not a safety review.
pub const ARITHMETIC_ONLY: &str =
    "Hysteron does the arithmetic only; it does not make a design safe. Local codes and licensed practice take precedence.";

const ABOVE_ELV_ADVICE: &str = "it can give a dangerous shock. Rate every part and spacing for the working and surge voltage (creepage and clearance per IEC 60664-1 / IEC 62368-1); at the bench use an isolation transformer or a differential probe and a current-limited supply, and follow local electrical codes; such work belongs to qualified, licensed practice.";

/// The cautions for a design, from its values (analysed here; see [`cautions_with`]).
pub fn cautions(record: &DesignRecord) -> Vec<Caution> {
    let analysis = analyse(&record.circuit, &record.checks).ok();
    cautions_with(record, analysis.as_ref())
}

/// The cautions for a design: above extra-low voltage from its values ([`design_voltages`]);
/// mains when an alternating value is mains-sized, or (a hint) the text names mains; battery for
/// a supply monitor or when the text names a battery.
pub fn cautions_with(record: &DesignRecord, analysis: Option<&Analysis>) -> Vec<Caution> {
    let mut out = Vec::new();
    let voltages = design_voltages(record, analysis);
    let text = format!("{} {} {}", record.name, record.purpose, record.notes);
    if let Some(w) = worst_above(&voltages) {
        out.push(Caution {
            kind: CautionKind::AboveExtraLowVoltage,
            message: format!(
                "This design reaches {}, above the extra-low-voltage limits ({ELV_DC_V:.0} V d.c. ripple-free, {ELV_AC_RMS_V:.0} V a.c. r.m.s.; common practice for dry locations, defer to local codes): {ABOVE_ELV_ADVICE}",
                w.describe()
            ),
        });
    }
    if matches!(record.circuit, Topology::SupplyMonitor(_)) || mentions(&text, &["battery", "batteries", "cell", "pack", "lead-acid", "lithium"]) {
        out.push(Caution {
            kind: CautionKind::Battery,
            message: "Batteries deliver very large short-circuit currents even at low voltage. Fuse or current-limit each sense lead at the pack, where it leaves the battery; guard against reverse polarity and hot-plug surges, and rate the divider for the full pack voltage plus transients. Series strings can exceed extra-low voltage. Follow the battery maker's instructions and local codes.".into(),
        });
    }
    let mains_by_value = voltages.iter().any(DesignVoltage::mains_derived);
    if mains_by_value
        || names_mains_voltage(&text)
        || mentions(&text, &["mains", "zero crossing", "zero-crossing", "line voltage", "dropper", "ac line"])
    {
        out.push(Caution {
            kind: CautionKind::Mains,
            message: "Mains work is dangerous. Prefer a transformer or a reinforced-insulation optocoupler; with a resistive dropper the whole circuit is at mains potential — no accessible parts, power it through an isolation transformer at the bench, probe only with isolated or differential probes, and use at least two series dropper resistors rated for working and surge voltage. Follow local electrical codes and leave mains wiring to licensed practice.".into(),
        });
    }
    out
}

/// What the bench procedure of a design needs for safety.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BenchSafety {
    /// Whether a voltage of the test exceeds the extra-low-voltage limits.
    pub above_extra_low_voltage: bool,
    /// The highest such voltage, described, when there is one.
    pub worst: Option<String>,
    /// The source for the input ramp, replacing the usual "bench supply or function generator"
    /// line when set.
    pub input_source: Option<String>,
    /// Equipment to add to the list.
    pub equipment: Vec<String>,
    /// Cautions to print first on the sheet.
    pub cautions: Vec<String>,
}

/// The bench-safety requirements of a design from its values: the circuit, its check settings,
/// its analysis and the extra test voltages the procedure reaches (ramp ends). Above the
/// extra-low-voltage limits the procedure needs an isolation transformer or a differential
/// probe, a current-limited source for the input and the circuit, and no live work.
pub fn bench_safety(circuit: &Topology, analysis: &Analysis, checks: &CheckSettings, test_voltages_v: &[f64]) -> BenchSafety {
    let mut voltages = circuit_voltages(circuit, Some(analysis), checks);
    for &v in test_voltages_v {
        voltages.push(DesignVoltage::dc("test ramp", v));
    }
    let Some(w) = worst_above(&voltages) else {
        return BenchSafety { above_extra_low_voltage: false, worst: None, input_source: None, equipment: Vec::new(), cautions: Vec::new() };
    };
    let worst = w.describe();
    BenchSafety {
        above_extra_low_voltage: true,
        input_source: Some("current-limited adjustable high-voltage supply for the input (current limit set to a few milliamperes), behind an isolation transformer when mains-powered; no function generator".into()),
        equipment: vec![
            "isolation transformer for the circuit's and the instruments' mains connection, or a differential probe (rated for the test voltage, CAT II or better) for every measurement".into(),
            "current-limited supply for the circuit".into(),
            "test leads and meters rated for the test voltage (shrouded plugs)".into(),
        ],
        cautions: vec![format!(
            "the test reaches {worst}, above the extra-low-voltage limits ({ELV_DC_V:.0} V d.c., {ELV_AC_RMS_V:.0} V a.c. r.m.s.; common practice, defer to local codes): power the circuit through an isolation transformer or measure only with a differential probe, use current-limited sources, make every connection with the power off and keep the board covered while live; this work belongs to qualified, licensed practice"
        )],
        worst: Some(worst),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;

    #[test]
    fn battery_demo_gets_the_battery_caution() {
        let r = catalog::demos().into_iter().find(|s| s.key == "cabin-battery").unwrap().record();
        assert!(cautions(&r).iter().any(|c| c.kind == CautionKind::Battery));
    }

    #[test]
    fn a_low_voltage_logic_design_gets_none() {
        let r = catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").unwrap().record();
        assert!(cautions(&r).is_empty());
    }

    #[test]
    fn mains_voltage_in_words_is_a_hint() {
        for t in ["fed from 240 V", "230VAC line", "a 220 v heater", "line voltage sense", "120 Vrms"] {
            assert!(names_mains_voltage(t) || t.contains("line voltage"), "{t}");
        }
        for t in ["24 V valve", "1200 V", "5 V logic", "230 mV", "2.30 V", "100 VA transformer"] {
            assert!(!names_mains_voltage(t), "{t}");
        }
    }

    #[test]
    fn ranges_of_both_polarities_are_alternating() {
        let v = range_voltage("input range", Some(-40.0), Some(40.0)).unwrap();
        // 40 V peak sine: 28.3 V r.m.s. > 25 V, though below 60 V d.c.
        assert!((v.alternating_rms_v - 40.0 / 2f64.sqrt()).abs() < 1e-12 && v.above_extra_low_voltage());
        let v = range_voltage("input range", Some(0.0), Some(48.0)).unwrap();
        assert!(v.alternating_rms_v == 0.0 && !v.above_extra_low_voltage());
        assert!(range_voltage("x", None, None).is_none());
    }

    #[test]
    fn above_elv_is_flagged() {
        let mut r = catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").unwrap().record();
        r.checks.input_max_v = Some(325.0);
        assert!(cautions(&r).iter().any(|c| c.kind == CautionKind::AboveExtraLowVoltage));
        r.purpose = "mains zero crossing".into();
        assert!(cautions(&r).iter().any(|c| c.kind == CautionKind::Mains));
    }
}
