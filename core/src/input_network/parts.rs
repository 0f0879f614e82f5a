//! The input network's parts as part-list lines: resistors with their worst dissipation and a
//! suggested power rating, the clamp diodes or TVS with their current, and the filter capacitor
//! with a suggested voltage rating.
//!
//! Ratings (common practice, as for the rest of the part list): a resistor's suggested rating is
//! the smallest common rating at least `power_derating_factor` × its worst dissipation over the
//! highest and lowest input (the surge is reported beside it: a surge is a pulse, checked against
//! the part's pulse rating, not its continuous one); a capacitor's suggested voltage rating is the
//! smallest common rating at least twice the largest voltage it sees; a clamp diode's current
//! rating at least the derating factor × its worst current.

use super::{Clamp, InputNetwork, NetworkReport};
use crate::bom::application::CAPACITOR_VOLTAGE_RATINGS_V;
use crate::bom::{NetworkPart, NetworkPartKind, PartSettings, POWER_RATINGS_W};
use crate::notation::{format_with_unit, Unit};


fn next_number(used: &[String], letter: &str) -> usize {
    used.iter()
        .filter_map(|d| d.strip_prefix(letter).and_then(|n| n.parse::<usize>().ok()))
        .max()
        .unwrap_or(0)
        + 1
}

fn pick(ratings: &[f64], need: f64) -> Option<f64> {
    ratings.iter().copied().find(|r| *r >= need)
}

/// The network's part-list lines, numbered after `used` designators.
pub fn network_parts(report: &NetworkReport, net: &InputNetwork, used: &[String], settings: &PartSettings) -> Vec<NetworkPart> {
    let mut out = Vec::new();
    let mut r_next = next_number(used, "R");
    let c_next = next_number(used, "C");
    let mut d_next = next_number(used, "D");
    let normal = [report.at_max, report.at_min];
    let surge: Vec<_> = report.at_surge.map(|(a, b)| vec![a, b]).unwrap_or_default();
    let derate = settings.power_derating_factor.max(1.0);
    let mut resistor = |out: &mut Vec<NetworkPart>, label: &str, ohm: f64, power: &dyn Fn(&super::ClampPoint) -> f64| {
        let w = normal.iter().map(power).fold(0.0, f64::max);
        let ws = (!surge.is_empty()).then(|| surge.iter().map(power).fold(0.0, f64::max));
        let mut notes = Vec::new();
        let suggested = pick(&POWER_RATINGS_W, w * derate);
        if suggested.is_none() {
            notes.push(format!("needs more than {} W ({}× the worst dissipation)", POWER_RATINGS_W[POWER_RATINGS_W.len() - 1], derate));
        }
        if let Some(ws) = ws {
            if ws > settings.package.power_rating_w() {
                notes.push(format!("takes {ws:.4} W during the surge: choose a pulse-rated (e.g. thick-film anti-surge) part"));
            }
        }
        let max_volts = (w.max(ws.unwrap_or(0.0)) * ohm).sqrt();
        out.push(NetworkPart {
            designator: format!("R{r_next}"),
            kind: NetworkPartKind::Resistor,
            label: label.into(),
            value: ohm,
            value_text: format_with_unit(ohm, 3, Unit::Ohm),
            dissipation_w: w,
            surge_dissipation_w: ws,
            suggested_power_w: suggested,
            max_volts,
            suggested_voltage_v: None,
            max_current_a: max_volts / ohm,
            notes,
        });
        r_next += 1;
    };
    if let Some(d) = net.dropper {
        resistor(&mut out, "input dropper, top (from the field terminal)", d.top_ohm, &|p| p.dropper_top_power_w);
        resistor(&mut out, "input dropper, bottom (to ground)", d.bottom_ohm, &|p| p.dropper_bottom_power_w);
    }
    if let Some(r) = net.series_ohm {
        resistor(&mut out, "input series resistor (limits the clamp current)", r, &|p| p.series_power_w);
    }
    if let Some(f) = net.filter {
        // The filter resistor carries only the trigger's input current in steady state.
        let i = report.upper.input_current_a.abs().max(report.lower.input_current_a.abs());
        resistor(&mut out, "input filter resistor", f.r_ohm, &|_| i * i * f.r_ohm);
    }
    let worst_current = |pts: &[super::ClampPoint]| pts.iter().map(|p| p.clamp_current_a.abs()).fold(0.0, f64::max);
    let clamp_power = |pts: &[super::ClampPoint]| pts.iter().map(|p| p.clamp_power_w).fold(0.0, f64::max);
    let i_normal = worst_current(&normal);
    let i_surge = worst_current(&surge);
    match net.clamp {
        Clamp::None => {}
        Clamp::RailDiodes { forward_v, max_current_a } => {
            for (which, label) in [("upper", "clamp diode to the supply"), ("lower", "clamp diode to the negative rail")] {
                let pick_pts = |pts: &[super::ClampPoint]| -> Vec<super::ClampPoint> {
                    pts.iter().copied().filter(|p| if which == "upper" { p.clamp_current_a > 0.0 } else { p.clamp_current_a < 0.0 }).collect()
                };
                let (n, s) = (pick_pts(&normal), pick_pts(&surge));
                let i = worst_current(&n).max(worst_current(&s));
                let mut notes = vec![format!(
                    "forward current rating at least {} ({}× the worst clamp current)",
                    format_with_unit((i * derate).max(1e-6), 3, Unit::Ampere),
                    derate
                )];
                if i > max_current_a {
                    notes.push(format!("the stated rating {} is exceeded", format_with_unit(max_current_a, 3, Unit::Ampere)));
                }
                out.push(NetworkPart {
                    designator: format!("D{d_next}"),
                    kind: NetworkPartKind::Diode,
                    label: label.into(),
                    value: forward_v,
                    value_text: format!("Vf {}", format_with_unit(forward_v, 3, Unit::Volt)),
                    dissipation_w: clamp_power(&n),
                    surge_dissipation_w: (!surge.is_empty()).then(|| clamp_power(&s)),
                    suggested_power_w: None,
                    max_volts: forward_v,
                    suggested_voltage_v: None,
                    max_current_a: i,
                    notes,
                });
                d_next += 1;
            }
        }
        Clamp::Tvs { standoff_v, breakdown_v, clamping_v, peak_current_a } => {
            let i = i_normal.max(i_surge);
            let mut notes = vec![format!(
                "bidirectional; breakdown {breakdown_v} V, clamping {clamping_v} V at {}",
                format_with_unit(peak_current_a, 3, Unit::Ampere)
            )];
            if i > peak_current_a {
                notes.push("its peak pulse current is exceeded".into());
            }
            out.push(NetworkPart {
                designator: format!("D{d_next}"),
                kind: NetworkPartKind::Tvs,
                label: "TVS diode to ground".into(),
                value: standoff_v,
                value_text: format!("standoff {}", format_with_unit(standoff_v, 3, Unit::Volt)),
                dissipation_w: clamp_power(&normal),
                surge_dissipation_w: (!surge.is_empty()).then(|| clamp_power(&surge)),
                suggested_power_w: None,
                max_volts: report.worst().clamp_node_v.abs().max(standoff_v),
                suggested_voltage_v: None,
                max_current_a: i,
                notes,
            });
        }
    }
    if let (Some(f), Some(ff)) = (net.filter, report.filter) {
        let need = 2.0 * ff.capacitor_max_v;
        let suggested = pick(&CAPACITOR_VOLTAGE_RATINGS_V, need);
        let mut notes = vec![format!("voltage rating at least {need:.3} V (twice the largest voltage it sees, common practice)")];
        if suggested.is_none() {
            notes.push("above the common ratings listed".into());
        }
        out.push(NetworkPart {
            designator: format!("C{c_next}"),
            kind: NetworkPartKind::Capacitor,
            label: "input filter capacitor".into(),
            value: f.c_f,
            value_text: format_with_unit(f.c_f, 3, Unit::Farad),
            dissipation_w: 0.0,
            surge_dissipation_w: None,
            suggested_power_w: None,
            max_volts: ff.capacitor_max_v,
            suggested_voltage_v: suggested,
            max_current_a: 0.0,
            notes,
        });
    }
    out
}
