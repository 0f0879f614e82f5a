//! SPICE netlist export, in generic SPICE3 syntax (element lines as in the SPICE3 user's guide:
//! `Rxxx n1 n2 value`, `Vxxx n+ n- DC value PWL(...)`, `Ixxx n+ n- DC value`,
//! `Sxxx n+ n- nc+ nc- model`, `Qxxx nc nb ne model`, `.model`, `.temp`, `.end`; from memory).
//!
//! The active device is a simple behavioural model, stated in the netlist's comments:
//! - a comparator (or a logic gate's input) is a pair of voltage-controlled switches (the SPICE3
//!   `SW` model) that connect the output to a "high" and a "low" level source. The switch closes when
//!   its control voltage rises above VT + VH and opens when it falls below VT − VH, which is exactly
//!   the device's switching rule V(+) − V(−) = VOS ± h/2 (DOMAIN §0) with VT = VOS and VH = h/2;
//!   an open-drain output has only the "low" switch, whose on-resistance is RDS(on);
//! - input bias currents are current sources into the pins; the signal source's resistance is RS;
//! - the transistors of the two-transistor trigger are SPICE's own bipolar model with only IS, BF
//!   and BR set, which is the transport Ebers–Moll model the analysis uses.
//!
//! The signal source VIN carries both a DC value (the band's centre) and a slow triangle
//! (`PWL`) from below VT− to above VT+ and back, so a transient run shows both thresholds.
//! Analysis lines are suggested in comments, not issued, so the deck can be included elsewhere.
//!
//! The writer ([`write_deck`]) reads only the netlist data ([`crate::netlist`]); [`to_spice`] is
//! the one entry point that takes a [`Topology`] (it computes the thresholds for the comments and
//! the ramp). Numbers on element lines are written by [`spice_number`], SPICE's own notation;
//! voltages in comments go through [`crate::notation`].

use crate::error::DesignError;
use crate::netlist::{ActiveDevice, GateThreshold, Netlist, Netlisted, ResistorRole, SourceRole};
use crate::notation::{self, Unit};
use crate::topology::{Circuit, Topology};
use std::fmt::Write as _;

/// On-resistance of the behavioural output switches of a push-pull output, ohms.
pub const OUTPUT_ON_OHM: f64 = 1.0;
/// Off-resistance of the behavioural output switches, ohms (leakage 1 pA per volt).
pub const OUTPUT_OFF_OHM: f64 = 1e12;

/// A number in SPICE notation with a scale suffix (SPICE3 user's guide: T = 1e12, G = 1e9,
/// MEG = 1e6, K = 1e3, M = 1e-3, U = 1e-6, N = 1e-9, P = 1e-12, F = 1e-15; from memory), written
/// in lower case with up to twelve significant digits: 100k, 4.7k, 2.5, 1n, -5, 1meg.
pub fn spice_number(value: f64) -> String {
    if value == 0.0 || !value.is_finite() {
        return if value.is_finite() { "0".into() } else { format!("{value}") };
    }
    const SCALES: [(f64, &str); 9] = [
        (1e12, "t"),
        (1e9, "g"),
        (1e6, "meg"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "u"),
        (1e-9, "n"),
        (1e-12, "p"),
    ];
    let a = value.abs();
    let (scale, suffix) = SCALES.iter().copied().find(|(s, _)| a >= *s * (1.0 - 1e-12)).unwrap_or((1e-15, "f"));
    let mantissa = value / scale;
    // Twelve significant digits: reads back within 1e-12 relative, and 1e-14/1e-15 prints "10".
    let decimals = (11 - mantissa.abs().log10().floor() as i32).clamp(0, 15) as usize;
    let text = format!("{mantissa:.decimals$}");
    let text = if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.') } else { &text };
    format!("{text}{suffix}")
}

/// Replaces characters that would break a SPICE line (newlines, control characters) with spaces.
fn one_line(text: &str) -> String {
    text.chars().map(|c| if c.is_control() { ' ' } else { c }).collect::<String>().trim().to_string()
}

/// The range a slow test ramp should cover: from below VT− to above VT+ by half the hysteresis
/// plus 5 % of the larger threshold magnitude (at least 50 mV), volts.
pub fn ramp_span_v(vt_upper_v: f64, vt_lower_v: f64) -> (f64, f64) {
    let margin = 0.5 * (vt_upper_v - vt_lower_v).abs() + 0.05 * vt_upper_v.abs().max(vt_lower_v.abs()).max(1.0);
    (vt_lower_v.min(vt_upper_v) - margin, vt_upper_v.max(vt_lower_v) + margin)
}

/// Writes the circuit as a SPICE3 deck titled `title`. Fails when the circuit is invalid (a
/// simulator would be handed nonsense) or its thresholds cannot be computed.
///
/// ```
/// use hysteron_core::catalog;
/// let circuit = catalog::templates()[0].record().circuit;
/// let deck = hysteron_core::spice::to_spice(&circuit, "Inverting Schmitt").unwrap();
/// assert!(deck.contains("\nR3 out p 100k\n") && deck.ends_with(".end\n"));
/// ```
pub fn to_spice(circuit: &Topology, title: &str) -> Result<String, DesignError> {
    circuit.validate()?;
    let t = circuit.thresholds()?;
    let net = circuit.netlist();
    let (lo, hi) = ramp_span_v(t.vt_upper_v, t.vt_lower_v);
    // A deck that says "VT+ = inf V" or "PWL(0 -inf …)" is refused rather than written.
    crate::finite::check("spice", &(&t, [lo, hi], &net))?;
    Ok(write_deck(&net, title, t.vt_upper_v, t.vt_lower_v, lo, hi))
}

/// Writes a netlist as a SPICE3 deck with the expected thresholds and ramp limits in comments.
pub fn write_deck(
    net: &Netlist,
    title: &str,
    vt_upper_v: f64,
    vt_lower_v: f64,
    ramp_lo_v: f64,
    ramp_hi_v: f64,
) -> String {
    let n = spice_number;
    let mut o = String::new();
    let title = one_line(title);
    let _ = writeln!(o, "{}", if title.is_empty() { "Hysteron design".to_string() } else { title });
    let _ = writeln!(o, "* Exported by Hysteron: generic SPICE3 syntax; topology {}", net.topology);
    let _ = writeln!(
        o,
        "* Expected thresholds: VT+ = {} (rising input), VT- = {} (falling input)",
        volts(vt_upper_v),
        volts(vt_lower_v)
    );
    let _ = writeln!(
        o,
        "* Suggested analysis (transient, VIN is a triangle {} -> {} -> {} over 2 s):",
        volts(ramp_lo_v),
        volts(ramp_hi_v),
        volts(ramp_lo_v)
    );
    let _ = writeln!(o, "*   .tran 1m 2");
    let _ = writeln!(o, "* or a DC sweep, which shows VT+ only (rising):");
    let _ = writeln!(
        o,
        "*   .dc VIN {} {} {}",
        short(ramp_lo_v),
        short(ramp_hi_v),
        short(((ramp_hi_v - ramp_lo_v) / 2000.0).abs().max(1e-6))
    );
    o.push('\n');
    let _ = writeln!(o, "* Supplies, references and the signal");
    for s in &net.sources {
        let what = match s.role {
            SourceRole::Supply => "positive supply",
            SourceRole::NegativeRail => "negative rail",
            SourceRole::Reference => "reference",
            SourceRole::PullupRail => "pull-up rail",
            SourceRole::Input => "signal source (DC at the band's centre; PWL triangle for .tran)",
            SourceRole::Dropout => "drop from the monitored rail to the comparator's supply pin",
        };
        let _ = writeln!(o, "* {}: {what}", s.name);
        if s.role == SourceRole::Input {
            let _ = writeln!(
                o,
                "{} {} {} DC {} PWL(0 {} 1 {} 2 {})",
                s.name,
                s.node_plus,
                s.node_minus,
                short(s.volts),
                short(ramp_lo_v),
                short(ramp_hi_v),
                short(ramp_lo_v)
            );
        } else {
            let _ = writeln!(o, "{} {} {} DC {}", s.name, s.node_plus, s.node_minus, n(s.volts));
        }
    }
    o.push('\n');
    let _ = writeln!(o, "* Resistors (designators as in the part list)");
    for r in &net.resistors {
        match r.role {
            ResistorRole::PartList => {}
            ResistorRole::SourceResistance => {
                let _ = writeln!(o, "* {}: the signal source's own resistance (not a part)", r.designator);
            }
            ResistorRole::Load => {
                let _ = writeln!(o, "* {}: external load (not a part)", r.designator);
            }
        }
        let _ = writeln!(o, "{} {} {} {}", r.designator, r.node_a, r.node_b, n(r.resistance_ohm));
    }
    if !net.current_sources.is_empty() {
        o.push('\n');
        let _ = writeln!(o, "* Input bias currents (positive into the pin)");
        for i in &net.current_sources {
            let _ = writeln!(o, "{} {} {} DC {}", i.name, i.node_from, i.node_to, n(i.amps));
        }
    }
    if !net.regulators.is_empty() {
        o.push('\n');
        let _ = writeln!(o, "* Reference regulators: the piecewise-linear models Hysteron computes with");
        for r in &net.regulators {
            regulator_lines(&mut o, r);
        }
    }
    let mut models = String::new();
    for d in &net.devices {
        o.push('\n');
        device_lines(&mut o, &mut models, d);
    }
    if !models.is_empty() {
        o.push('\n');
        o.push_str(&models);
    }
    o.push_str(".end\n");
    o
}

/// Significant digits of a number in a comment or a rounded element value.
const SHORT_DIGITS: u8 = 4;

/// Notation's text in the ASCII a SPICE deck keeps to (some simulators read decks as 8-bit text):
/// `µ` becomes `u` (as in SPICE's own suffixes) and `Ω` becomes `ohm`.
fn ascii(text: String) -> String {
    text.replace('µ', "u").replace('Ω', "ohm")
}

/// A voltage for a comment, through [`notation::format_with_unit`]: "2.5 V", "-12 V", "1 mV", "500 uV".
fn volts(v: f64) -> String {
    ascii(notation::format_with_unit(v, SHORT_DIGITS, Unit::Volt))
}

/// A resistance for a comment, through [`notation::format_with_unit`]: "1 ohm", "1 Tohm".
fn ohms(v: f64) -> String {
    ascii(notation::format_with_unit(v, SHORT_DIGITS, Unit::Ohm))
}

/// `v` rounded to four significant digits (ramp limits, the signal's DC value, the temperature:
/// their exact digits carry no meaning).
fn rounded(v: f64) -> f64 {
    format!("{v:.*e}", usize::from(SHORT_DIGITS - 1)).parse::<f64>().unwrap_or(v)
}

/// A number for an element line rounded to four significant digits, in SPICE notation.
fn short(v: f64) -> String {
    spice_number(rounded(v))
}

/// A reference regulator as a behavioural current source (B element), so the deck's operating
/// point follows the same model as Hysteron's analysis.
fn regulator_lines(o: &mut String, r: &crate::netlist::NetRegulator) {
    let n = spice_number;
    match r {
        crate::netlist::NetRegulator::Zener { designator, cathode, anode, vz_v, source_v, slope_ohm } => {
            let _ = writeln!(
                o,
                "* {designator}: zener {} (Vz0 {}, rz {}); a diode model D with BV and IBV may replace it",
                volts(*vz_v),
                volts(*source_v),
                ohms(*slope_ohm)
            );
            let _ = writeln!(
                o,
                "B{designator} {cathode} {anode} I=max(0,(V({cathode},{anode})-{})/{})",
                n(*source_v),
                n(*slope_ohm)
            );
        }
        crate::netlist::NetRegulator::Shunt {
            designator,
            cathode,
            anode,
            reference,
            vref_v,
            ref_current_a,
            impedance_ohm,
            test_current_a,
        } => {
            let _ = writeln!(
                o,
                "* {designator}: adjustable shunt reference (Vref {}, Zka {}); cathode {cathode}, anode {anode}, reference pin {reference}",
                volts(*vref_v),
                ohms(*impedance_ohm)
            );
            let _ = writeln!(
                o,
                "B{designator} {cathode} {anode} I=max(0,{}+(V({reference},{anode})-{})/{})",
                n(*test_current_a),
                n(*vref_v),
                n(*impedance_ohm)
            );
            if *ref_current_a != 0.0 {
                let _ = writeln!(o, "I{designator}REF {reference} {anode} DC {}", n(*ref_current_a));
            }
        }
    }
}

fn device_lines(o: &mut String, models: &mut String, d: &ActiveDevice) {
    let n = spice_number;
    match d {
        ActiveDevice::Comparator {
            designator,
            non_inverting,
            inverting,
            output,
            positive_supply,
            negative_supply,
            output_high_drop_v,
            output_low_rise_v,
            offset_v,
            hysteresis_v,
            sink_resistance_ohm,
        } => {
            let u = designator;
            let _ = writeln!(o, "* {u}: comparator, behavioural model (pins: + {non_inverting}, - {inverting}, out {output}, V+ {positive_supply}, V- {negative_supply}).");
            let _ = writeln!(
                o,
                "* Two voltage-controlled switches (SPICE3 SW model) connect the output to a high and a low level;"
            );
            let _ = writeln!(
                o,
                "* a switch closes when its control voltage exceeds VT+VH and opens below VT-VH. Control is"
            );
            let _ = writeln!(
                o,
                "* V(+)-V(-) for the high switch and V(-)-V(+) for the low one, with VT = +/-VOS and VH = h/2:"
            );
            let _ = writeln!(
                o,
                "* VOS = {}, built-in hysteresis h = {}. Output switch on-resistance {}, off {}.",
                volts(*offset_v),
                volts(*hysteresis_v),
                ohms(if output_high_drop_v.is_some() { OUTPUT_ON_OHM } else { on_ohm(*sink_resistance_ohm) }),
                ohms(OUTPUT_OFF_OHM)
            );
            match output_high_drop_v {
                Some(drop) => {
                    let _ = writeln!(o, "* Output high = V({positive_supply}) - {}, output low = V({negative_supply}) + {} (push-pull).", volts(*drop), volts(*output_low_rise_v));
                    let _ = writeln!(o, "V{u}H {u}_hi {positive_supply} DC {}", n(-drop));
                    let _ = writeln!(o, "S{u}H {output} {u}_hi {non_inverting} {inverting} SW{u}H");
                    let _ = writeln!(
                        models,
                        ".model SW{u}H SW(VT={} VH={} RON={} ROFF={})",
                        n(*offset_v),
                        n(hysteresis_v / 2.0),
                        n(OUTPUT_ON_OHM),
                        n(OUTPUT_OFF_OHM)
                    );
                }
                None => {
                    let _ = writeln!(o, "* Open-drain/open-collector output: it only pulls low, to V({negative_supply}) + {} through RDS(on) = {}.", volts(*output_low_rise_v), ohms(on_ohm(*sink_resistance_ohm)));
                }
            }
            let _ = writeln!(o, "V{u}L {u}_lo {negative_supply} DC {}", n(*output_low_rise_v));
            let _ = writeln!(o, "S{u}L {output} {u}_lo {inverting} {non_inverting} SW{u}L");
            let ron = if output_high_drop_v.is_some() { OUTPUT_ON_OHM } else { on_ohm(*sink_resistance_ohm) };
            let _ = writeln!(
                models,
                ".model SW{u}L SW(VT={} VH={} RON={} ROFF={})",
                n(-offset_v),
                n(hysteresis_v / 2.0),
                n(ron),
                n(OUTPUT_OFF_OHM)
            );
        }
        ActiveDevice::LogicGate {
            designator,
            input,
            output,
            supply,
            ground,
            threshold,
            inverting,
            output_high_v,
            output_low_v,
        } => {
            let u = designator;
            let (vt, vh, what) = match *threshold {
                GateThreshold::Single { switching_v } => {
                    (switching_v, 0.0, format!("switches at VM = {}", volts(switching_v)))
                }
                GateThreshold::Schmitt { upper_v, lower_v } => (
                    0.5 * (upper_v + lower_v),
                    0.5 * (upper_v - lower_v),
                    format!("Schmitt input: VT+ = {}, VT- = {}", volts(upper_v), volts(lower_v)),
                ),
            };
            let kind = if *inverting { "inverter" } else { "buffer" };
            let _ = writeln!(o, "* {u}: logic {kind}, behavioural model (pins: in {input}, out {output}, VDD {supply}, GND {ground}); {what}.");
            let _ = writeln!(
                o,
                "* Two voltage-controlled switches (SPICE3 SW model, VT = centre, VH = half the input hysteresis)"
            );
            let _ = writeln!(
                o,
                "* connect the output to VOH = {} or VOL = {}; the input draws no current.",
                volts(*output_high_v),
                volts(*output_low_v)
            );
            let (rise_level, fall_level) = if *inverting { ("lo", "hi") } else { ("hi", "lo") };
            let _ = writeln!(o, "V{u}H {u}_hi {ground} DC {}", n(*output_high_v));
            let _ = writeln!(o, "V{u}L {u}_lo {ground} DC {}", n(*output_low_v));
            // The "rising" switch closes above VT+VH; the "falling" one closes below VT−VH
            // (its control is the negated input, so its threshold is −VT).
            let _ = writeln!(o, "S{u}R {output} {u}_{rise_level} {input} {ground} SW{u}R");
            let _ = writeln!(o, "S{u}F {output} {u}_{fall_level} {ground} {input} SW{u}F");
            let _ = writeln!(
                models,
                ".model SW{u}R SW(VT={} VH={} RON={} ROFF={})",
                n(vt),
                n(vh),
                n(OUTPUT_ON_OHM),
                n(OUTPUT_OFF_OHM)
            );
            let _ = writeln!(
                models,
                ".model SW{u}F SW(VT={} VH={} RON={} ROFF={})",
                n(-vt),
                n(vh),
                n(OUTPUT_ON_OHM),
                n(OUTPUT_OFF_OHM)
            );
        }
        ActiveDevice::Npn { designator, collector, base, emitter, model } => {
            let _ = writeln!(
                o,
                "* {designator}: NPN, SPICE bipolar model: DC from IS, BF, BR (transport Ebers-Moll) with their"
            );
            let _ = writeln!(o, "* temperature laws (XTI, EG, XTB); CJE, CJC, TF only shape the transient.");
            let _ = writeln!(o, "* the hand analysis assumed VBE = {}.", volts(model.vbe_v));
            let _ = writeln!(o, "{designator} {collector} {base} {emitter} QNPN");
            if !models.contains(".model QNPN") {
                let celsius = |k: f64| short(k - 273.15);
                let _ = writeln!(
                    models,
                    "* IS, BF, BR hold at TNOM; SPICE rescales them to the junction temperature TEMP."
                );
                let _ = writeln!(models, ".options TNOM={}", celsius(model.nominal_temperature_k));
                let _ = writeln!(models, ".temp {}", celsius(model.temperature_k));
                let _ = writeln!(
                    models,
                    ".model QNPN NPN(IS={} BF={} BR={} TNOM={} XTI={} EG={} XTB={} CJE={} CJC={} TF={})",
                    n(model.saturation_current_a),
                    n(model.beta_f),
                    n(model.beta_r),
                    celsius(model.nominal_temperature_k),
                    n(model.is_temperature_exponent),
                    n(model.bandgap_v),
                    n(model.beta_temperature_exponent),
                    n(model.emitter_capacitance_f),
                    n(model.collector_capacitance_f),
                    n(model.transit_time_s)
                );
            }
        }
    }
}

/// The on-resistance used for an open-drain output: RDS(on), or 1 mΩ for an ideal switch
/// (SPICE's switch needs a resistance above zero).
fn on_ohm(sink_resistance_ohm: f64) -> f64 {
    if sink_resistance_ohm > 0.0 {
        sink_resistance_ohm
    } else {
        1e-3
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;

    #[test]
    fn numbers_use_spice_suffixes() {
        assert_eq!(spice_number(100e3), "100k");
        assert_eq!(spice_number(4.7e3), "4.7k");
        assert_eq!(spice_number(2.2e6), "2.2meg");
        assert_eq!(spice_number(1e-9), "1n");
        assert_eq!(spice_number(2.5e-8), "25n");
        assert_eq!(spice_number(-5.0), "-5");
        assert_eq!(spice_number(0.0), "0");
        assert_eq!(spice_number(1e-14), "10f");
        assert_eq!(spice_number(0.02), "20m");
    }

    #[test]
    fn every_starter_exports_a_deck_ending_in_end() {
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let r = s.record();
            let deck = to_spice(&r.circuit, &r.name).unwrap();
            assert!(deck.starts_with(&r.name));
            assert!(deck.ends_with(".end\n"));
            // The transistor pair uses SPICE's own NPN model; every other active device is behavioural.
            if r.circuit.name() == "bjt_pair" {
                assert!(deck.to_lowercase().contains("npn"), "{}", s.key);
            } else {
                assert!(deck.contains("behavioural model"), "{}", s.key);
            }
        }
    }

    #[test]
    fn comments_write_values_through_notation_in_ascii() {
        assert_eq!(volts(2.5), "2.5 V");
        assert_eq!(volts(-5e-4), "-500 uV");
        assert_eq!(ohms(OUTPUT_OFF_OHM), "1 Tohm");
        assert_eq!(short(1.23456), "1.235");
        assert_eq!(short(-0.0123456), "-12.35m");
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let r = s.record();
            let deck = to_spice(&r.circuit, "ascii title").unwrap();
            assert!(deck.is_ascii(), "{}: a non-ASCII character in the deck", s.key);
        }
    }

    #[test]
    fn titles_cannot_break_the_deck() {
        let r = catalog::templates()[0].record();
        let deck = to_spice(&r.circuit, "two\nlines\r.end").unwrap();
        assert_eq!(deck.lines().next(), Some("two lines .end"));
        assert_eq!(deck.matches("\n.end").count(), 1);
    }
}
