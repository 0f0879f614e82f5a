//! The parts of the applications that ride on the trigger (RC relaxation oscillator, RC switch
//! debouncer, [`crate::signal::report::ApplicationSettings`]) as part-list lines, so the part list
//! holds every part of the design, not only the trigger's own resistors.
//!
//! Stresses (derived here from the circuits of shared/DOMAIN.md §1e):
//! - oscillator R: the output drives R against the capacitor, which stays between VT− and VT+, so
//!   the largest voltage across R is max(VOH − VT−, VT+ − VOL) just after each switch; C sees at
//!   most max(|VT+|, |VT−|);
//! - debouncer R1 (VDD to the switch node): the whole VDD while the switch is closed; R2: VDD at
//!   the moment of pressing (C charged, switch node at 0 V); C: at most VDD.
//!
//! Ratings (common practice): a resistor's suggested rating is the smallest common rating at least
//! `power_derating_factor` × its dissipation, as for the trigger's resistors; a capacitor's
//! suggested voltage rating is the smallest common rating at least twice the largest voltage it
//! sees. Capacitor values are rounded to E12 (common practice: ceramic and film capacitors are
//! stocked in E6/E12 values).

use super::{PartSettings, POWER_RATINGS_W};
use crate::analysis::Analysis;
use crate::error::DesignError;
use crate::eseries::ESeries;
use crate::notation::{format_rkm, format_with_unit, Unit};
use crate::signal::report::ApplicationSettings;
use serde::{Deserialize, Serialize};

/// Common capacitor voltage ratings, volts (common practice).
pub const CAPACITOR_VOLTAGE_RATINGS_V: [f64; 12] =
    [4.0, 6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0, 100.0, 250.0, 400.0, 630.0];

/// The series capacitor values are rounded to.
pub const CAPACITOR_SERIES: ESeries = ESeries::E12;

/// What kind of part a line is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PartKind {
    /// A resistor, value in ohms.
    Resistor,
    /// A capacitor, value in farads.
    Capacitor,
}

/// One part of an application (oscillator or debouncer).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ApplicationPart {
    /// Designator, numbered after the trigger's own parts (R4, C1…).
    pub designator: String,
    /// Resistor or capacitor.
    pub kind: PartKind,
    /// Which application it belongs to ("oscillator", "debouncer").
    pub application: String,
    /// Plain role of the part.
    pub label: String,
    /// The value the application settings give, ohms or farads.
    pub design_value: f64,
    /// The series value to order (nearest by ratio), ohms or farads.
    pub value: f64,
    /// The series of the value.
    pub series: ESeries,
    /// The value in full with its unit (`1 MΩ`, `1 µF`).
    pub value_text: String,
    /// The value as an IEC 60062 RKM code, for resistors.
    pub value_rkm: Option<String>,
    /// Largest voltage across the part, volts.
    pub max_volts: f64,
    /// Largest dissipation, watts (resistors).
    pub max_power_w: Option<f64>,
    /// Suggested power rating, watts (resistors), as for the trigger's resistors.
    pub suggested_rating_w: Option<f64>,
    /// Suggested voltage rating, volts (capacitors): at least twice the largest voltage.
    pub suggested_voltage_v: Option<f64>,
    /// Findings: rounding, polarity.
    pub notes: Vec<String>,
}

fn next_number(used: &[String], prefix: char) -> usize {
    used.iter()
        .filter_map(|d| d.strip_prefix(prefix).and_then(|n| n.parse::<usize>().ok()))
        .max()
        .unwrap_or(0)
        + 1
}

struct Builder<'a> {
    settings: &'a PartSettings,
    next_r: usize,
    next_c: usize,
    out: Vec<ApplicationPart>,
}

impl Builder<'_> {
    fn resistor(&mut self, application: &str, label: &str, field: &str, ohm: f64, volts: f64) -> Result<(), DesignError> {
        let value = self.settings.series.nearest(ohm).ok_or_else(|| {
            DesignError::invalid(field, format!("must be a finite resistance above zero for the part list (got {ohm})"))
        })?;
        let power = volts * volts / value;
        let need = power * self.settings.power_derating_factor;
        let rating = POWER_RATINGS_W.iter().copied().find(|&r| r >= need).unwrap_or(need);
        let mut notes = rounding_note(ohm, value, self.settings.series, Unit::Ohm);
        if rating > self.settings.package.power_rating_w() {
            notes.push(format!(
                "{} is rated {} W, below the suggested {rating} W: use a larger package",
                self.settings.package.label(),
                self.settings.package.power_rating_w()
            ));
        }
        self.out.push(ApplicationPart {
            designator: format!("R{}", self.next_r),
            kind: PartKind::Resistor,
            application: application.into(),
            label: label.into(),
            design_value: ohm,
            value,
            series: self.settings.series,
            value_text: format_with_unit(value, 3, Unit::Ohm),
            value_rkm: format_rkm(value, 3).ok(),
            max_volts: volts,
            max_power_w: Some(power),
            suggested_rating_w: Some(rating),
            suggested_voltage_v: None,
            notes,
        });
        self.next_r += 1;
        Ok(())
    }

    fn capacitor(&mut self, application: &str, label: &str, field: &str, farad: f64, volts: f64, bipolar: bool) -> Result<(), DesignError> {
        let value = CAPACITOR_SERIES.nearest(farad).ok_or_else(|| {
            DesignError::invalid(field, format!("must be a finite capacitance above zero for the part list (got {farad})"))
        })?;
        let need = 2.0 * volts;
        let rating = CAPACITOR_VOLTAGE_RATINGS_V.iter().copied().find(|&r| r >= need).unwrap_or(need);
        let mut notes = rounding_note(farad, value, CAPACITOR_SERIES, Unit::Farad);
        notes.push(if bipolar {
            "its voltage changes sign: use a non-polarised capacitor (film or C0G/NP0 ceramic)".to_string()
        } else {
            "the timing depends on C: prefer film or C0G/NP0 ceramic; X7R and electrolytic values move with voltage, temperature and age (common practice)".to_string()
        });
        self.out.push(ApplicationPart {
            designator: format!("C{}", self.next_c),
            kind: PartKind::Capacitor,
            application: application.into(),
            label: label.into(),
            design_value: farad,
            value,
            series: CAPACITOR_SERIES,
            value_text: format_with_unit(value, 3, Unit::Farad),
            value_rkm: None,
            max_volts: volts,
            max_power_w: None,
            suggested_rating_w: None,
            suggested_voltage_v: Some(rating),
            notes,
        });
        self.next_c += 1;
        Ok(())
    }
}

fn rounding_note(design: f64, value: f64, series: ESeries, unit: Unit) -> Vec<String> {
    let dev = (value - design) / design * 100.0;
    if dev.abs() > 1e-7 {
        vec![format!(
            "value {} rounded to the nearest {series} value ({dev:+.2} %); the timing moves with it",
            format_with_unit(design, 4, unit)
        )]
    } else {
        Vec::new()
    }
}

/// The part-list lines of the record's applications, numbered after `used` designators (the
/// trigger's own parts). Empty without application settings.
pub fn application_parts(
    application: Option<&ApplicationSettings>,
    analysis: &Analysis,
    used: &[String],
    settings: &PartSettings,
) -> Result<Vec<ApplicationPart>, DesignError> {
    let Some(app) = application else { return Ok(Vec::new()) };
    let mut b = Builder { settings, next_r: next_number(used, 'R'), next_c: next_number(used, 'C'), out: Vec::new() };
    if let Some(o) = &app.oscillator {
        let (voh, vol) = (analysis.output_high_v, analysis.output_low_v);
        let (up, lo) = (analysis.vt_upper_v, analysis.vt_lower_v);
        let across_r = (voh - lo).abs().max((up - vol).abs());
        b.resistor("oscillator", "oscillator timing resistor R", "application.oscillator.r_ohm", o.r_ohm, across_r)?;
        b.capacitor(
            "oscillator",
            "oscillator timing capacitor C",
            "application.oscillator.c_f",
            o.c_f,
            up.abs().max(lo.abs()),
            up.min(lo) < 0.0,
        )?;
    }
    if let Some(d) = &app.debounce {
        let vdd = d.supply_v.abs();
        b.resistor("debouncer", "debouncer pull-up R1 (to the switch)", "application.debounce.r1_ohm", d.r1_ohm, vdd)?;
        b.resistor("debouncer", "debouncer series R2 (switch to C)", "application.debounce.r2_ohm", d.r2_ohm, vdd)?;
        b.capacitor("debouncer", "debouncer capacitor C", "application.debounce.c_f", d.c_f, vdd, false)?;
    }
    Ok(b.out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::topology::analyse;

    fn demo(key: &str) -> crate::record::DesignRecord {
        crate::catalog::demos().into_iter().find(|s| s.key == key).unwrap().record()
    }

    #[test]
    fn the_debouncer_adds_two_resistors_and_a_capacitor_with_their_stresses() {
        let r = demo("rain-gauge");
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let p = application_parts(r.application.as_ref(), &a, &[], &PartSettings::default()).unwrap();
        let names: Vec<&str> = p.iter().map(|x| x.designator.as_str()).collect();
        assert_eq!(names, ["R1", "R2", "C1"]);
        // R1 = 10 kΩ across 3.3 V while the switch is closed: 1.089 mW; 2× → 0.05 W rating.
        assert!((p[0].max_power_w.unwrap() - 3.3 * 3.3 / 10e3).abs() < 1e-12);
        assert_eq!(p[0].suggested_rating_w, Some(0.05));
        assert_eq!(p[0].value_rkm.as_deref(), Some("10K"));
        // C = 1 µF at 3.3 V: at least 6.6 V → 10 V (common ratings).
        assert_eq!((p[2].value, p[2].suggested_voltage_v), (1e-6, Some(10.0)));
    }

    #[test]
    fn the_oscillator_numbers_after_the_trigger_parts_and_sees_the_swing() {
        let r = demo("beehive-clock");
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let used = vec!["R1".to_string(), "R2".to_string()];
        let p = application_parts(r.application.as_ref(), &a, &used, &PartSettings::default()).unwrap();
        assert_eq!(p[0].designator, "R3");
        assert_eq!(p[1].designator, "C1");
        let expect = (a.output_high_v - a.vt_lower_v).max(a.vt_upper_v - a.output_low_v);
        assert_eq!(p[0].max_volts, expect);
        assert_eq!(p[1].max_volts, a.vt_upper_v.abs().max(a.vt_lower_v.abs()));
    }

    #[test]
    fn no_application_means_no_parts_and_a_bad_value_is_a_typed_error() {
        let r = demo("rain-gauge");
        let a = analyse(&r.circuit, &r.checks).unwrap();
        assert!(application_parts(None, &a, &[], &PartSettings::default()).unwrap().is_empty());
        let mut app = r.application.unwrap();
        if let Some(d) = app.debounce.as_mut() {
            d.c_f = -1.0;
        }
        let e = application_parts(Some(&app), &a, &[], &PartSettings::default()).unwrap_err();
        assert!(e.to_string().contains("c_f"), "{e}");
    }
}
