//! Cautions a design calls for: voltages above extra-low-voltage limits, battery packs and mains.
//! The page shows them beside the design and on the bench sheet, and defers to local codes and
//! licensed practice (shared/DOMAIN.md §5; limits recalled from memory — check the current editions).

use crate::record::DesignRecord;
use crate::topology::{Circuit, ParameterKind, Topology};
use serde::{Deserialize, Serialize};

/// Extra-low-voltage limit for d.c., volts: IEC 62368-1 ES1 and IEC 60950-1 SELV use 60 V d.c.
/// (from memory).
pub const ELV_DC_V: f64 = 60.0;
/// Extra-low-voltage limit for a.c. peak, volts: 42.4 V peak (30 V r.m.s.), IEC 62368-1 ES1 (from memory).
pub const ELV_AC_PEAK_V: f64 = 42.4;

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

fn mentions(text: &str, words: &[&str]) -> bool {
    let t = text.to_lowercase();
    words.iter().any(|w| t.contains(w))
}

/// The cautions for a design: from its voltages, its topology and what its purpose says it is for.
pub fn cautions(record: &DesignRecord) -> Vec<Caution> {
    let mut out = Vec::new();
    let c = &record.circuit;
    let mut highest = c
        .parameters()
        .iter()
        .filter(|p| matches!(p.kind, ParameterKind::Supply | ParameterKind::Reference))
        .map(|p| p.value.abs())
        .fold(0.0_f64, f64::max);
    for v in [record.checks.input_max_v, record.checks.input_min_v, record.checks.supply_max_v].into_iter().flatten() {
        highest = highest.max(v.abs());
    }
    if let Some(t) = &record.targets {
        highest = highest.max(t.vt_upper_v.abs()).max(t.vt_lower_v.abs());
    }
    if let Ok(t) = c.thresholds() {
        if t.vt_upper_v.is_finite() {
            highest = highest.max(t.vt_upper_v.abs()).max(t.vt_lower_v.abs());
        }
    }
    let text = format!("{} {} {}", record.name, record.purpose, record.notes);
    if highest > ELV_DC_V {
        out.push(Caution {
            kind: CautionKind::AboveExtraLowVoltage,
            message: format!(
                "This design reaches {} V, above the {} V d.c. extra-low-voltage limit: it can give a dangerous shock. Rate every part and spacing for the working and surge voltage (creepage and clearance per IEC 60664-1 / IEC 62368-1), and follow local electrical codes; such work belongs to qualified, licensed practice.",
                crate::notation::format_fixed(highest, 1),
                crate::notation::format_fixed(ELV_DC_V, 0)
            ),
        });
    }
    if matches!(c, Topology::SupplyMonitor(_)) || mentions(&text, &["battery", "batteries", "cell", "pack", "lead-acid", "lithium"]) {
        out.push(Caution {
            kind: CautionKind::Battery,
            message: "Batteries deliver very large short-circuit currents even at low voltage. Fuse or current-limit each sense lead where it leaves the battery, guard against reverse polarity and hot-plug surges, and rate the divider for the full pack voltage plus transients. Series strings can exceed extra-low voltage. Follow the battery maker's instructions and local codes.".into(),
        });
    }
    if mentions(&text, &["mains", "zero crossing", "zero-crossing", "230 v", "120 v", "line voltage", "dropper"]) {
        out.push(Caution {
            kind: CautionKind::Mains,
            message: "Mains work is dangerous. Prefer a transformer or a reinforced-insulation optocoupler; with a resistive dropper the whole circuit is at mains potential — no accessible parts, probe only with isolated or differential probes, and use at least two series dropper resistors rated for working and surge voltage. Follow local electrical codes and leave mains wiring to licensed practice.".into(),
        });
    }
    out
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
    fn above_elv_is_flagged() {
        let mut r = catalog::demos().into_iter().find(|s| s.key == "lathe-tachometer").unwrap().record();
        r.checks.input_max_v = Some(325.0);
        assert!(cautions(&r).iter().any(|c| c.kind == CautionKind::AboveExtraLowVoltage));
        r.purpose = "mains zero crossing".into();
        assert!(cautions(&r).iter().any(|c| c.kind == CautionKind::Mains));
    }
}
