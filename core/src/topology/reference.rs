//! The reference at a comparator's fixed input, as a part: a rail or fixed source directly, a
//! two-resistor divider, a zener diode with its bias resistor, or an adjustable shunt reference
//! with its bias resistor and programming resistors.
//!
//! **Zener.** A bias resistor Rb from a rail (usually the supply, at VA) feeds the node; the zener
//! runs from the node to ground. In its breakdown region the zener is a source Vz0 in series with
//! its slope (dynamic) resistance rz: V = Vz0 + rz·Iz, with Vz0 = Vz − Izt·rz so that V = Vz at the
//! test current Izt (the piecewise-linear zener model; Sedra & Smith, *Microelectronic Circuits*,
//! zener-diode section, from memory). The node is then the Thevenin source
//! Vth = (Vz0·Rb + VA·rz)/(Rb + rz), Rth = Rb‖rz (superposition of the two sources through
//! the two resistances), and the device input's bias current IB moves it by −IB·Rth as for a
//! divider. When the model's zener current would be negative the zener does not conduct and the
//! node is VA − IB·Rb.
//!
//! **Adjustable shunt reference.** Rb from a rail feeds the cathode node; R1 runs from the
//! cathode to the reference pin, R2 from the reference pin to ground. The device holds the
//! reference pin at Vref, so Vka = Vref·(1 + R1/R2) + Iref·R1 (the programming equation of every
//! adjustable shunt reference datasheet, from memory), and its dynamic impedance seen at the
//! cathode is Zka·(1 + R1/R2) (same source). Here the device holds its reference pin at
//! VR = Vref + Zka·(Ik − Ik,test) (Vref specified at the test cathode current), so the cathode is
//! Vka + Zka·(1 + R1/R2)·(Ik − Ik,test). The whole two-terminal part (device plus R1, R2) draws
//! I = Ik + VR/R2 + Iref; eliminating Ik gives V = V0 + Z′·I with
//! Z′ = Zka·(1 + R1/R2)/(1 + Zka/R2) (≈ Zka·(1 + R1/R2), since Zka ≪ R2) and
//! V0 = Vka − Z′·(Vref/R2 + Iref + Ik,test): the same Thevenin form as the zener, and exactly the
//! nodal solution of the three equations. Below Ik = 0 the device does not regulate; the node is
//! then Rb against R1 + R2.
//!
//! Datasheet-class default values are typical figures from memory (zener: 5 % tolerance, slope
//! resistance some tens of ohms at a 5 mA test current; shunt reference: Vref 2.495 V, Iref 2 µA,
//! Zka 0.2 Ω, minimum cathode current 1 mA).

use super::comparator::{divider_fraction, par2, pick_root, quadratic_roots, resistance, Designators};
use super::{Parameter, ParameterKind};
use crate::analysis::{ResistorDrop, Warning, WarningCode};
use crate::device::{Comparator, Rail};
use crate::drift::Drift;
use crate::error::DesignError;
use crate::limits::{check, Quantity};
use crate::notation::Unit;
use serde::{Deserialize, Serialize};

/// A zener diode from the reference node to ground, fed by a bias resistor from a rail.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ZenerReference {
    /// Bias resistor Rb from `rail` to the node, ohms.
    pub bias_ohm: f64,
    /// Rail the bias resistor returns to (usually the supply).
    pub rail: Rail,
    /// Nominal zener voltage Vz at the test current, volts.
    pub vz_v: f64,
    /// Test current Izt at which Vz is specified, amperes.
    pub test_current_a: f64,
    /// Slope (dynamic) resistance rz in breakdown, ohms.
    pub slope_ohm: f64,
    /// Tolerance of Vz, ± percent (5 % for the common "C" grade, from memory).
    pub tolerance_pct: f64,
    /// Temperature coefficient of Vz, volts per kelvin (sign known: negative below about 5 V,
    /// positive above; common practice).
    pub tempco_v_per_k: f64,
    /// Least current that keeps the zener regulating (its knee), amperes.
    pub min_current_a: f64,
}

impl Default for ZenerReference {
    /// A 3.3 V zener on 1 kΩ from the supply: 5 % tolerance, 95 Ω slope resistance at 5 mA,
    /// −2 mV/K, knee 1 mA (small-signal zener, typical figures from memory).
    fn default() -> Self {
        ZenerReference {
            bias_ohm: 1e3,
            rail: Rail::Supply,
            vz_v: 3.3,
            test_current_a: 5e-3,
            slope_ohm: 95.0,
            tolerance_pct: 5.0,
            tempco_v_per_k: -2e-3,
            min_current_a: 1e-3,
        }
    }
}

/// An adjustable shunt reference: bias resistor from a rail to the cathode, R1 from the cathode to
/// the reference pin, R2 from the reference pin to ground.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ShuntReference {
    /// Bias resistor Rb from `rail` to the cathode node, ohms.
    pub bias_ohm: f64,
    /// Rail the bias resistor returns to (usually the supply).
    pub rail: Rail,
    /// Programming resistor R1 from the cathode to the reference pin, ohms.
    pub upper_ohm: f64,
    /// Programming resistor R2 from the reference pin to ground, ohms.
    pub lower_ohm: f64,
    /// Internal reference Vref, volts (2.495 V typical, from memory).
    pub vref_v: f64,
    /// Current into the reference pin Iref, amperes (2 µA typical, from memory).
    pub ref_current_a: f64,
    /// Dynamic impedance Zka with the cathode tied to the reference pin, ohms (0.2 Ω typical, from memory).
    pub impedance_ohm: f64,
    /// Cathode current at which Vref is specified, amperes (10 mA, from memory).
    pub test_current_a: f64,
    /// Tolerance of Vref, ± percent.
    pub tolerance_pct: f64,
    /// Drift of Vref, volts per kelvin, sign unknown (a band-gap's bow; a few mV over the range).
    pub tempco_v_per_k: f64,
    /// Least cathode current for regulation, amperes (1 mA typical, from memory).
    pub min_current_a: f64,
}

impl Default for ShuntReference {
    /// 3.32 V from R1 = 3.3 kΩ, R2 = 10 kΩ on 1 kΩ from the supply; typical figures from memory.
    fn default() -> Self {
        ShuntReference {
            bias_ohm: 1e3,
            rail: Rail::Supply,
            upper_ohm: 3.3e3,
            lower_ohm: 10e3,
            vref_v: 2.495,
            ref_current_a: 2e-6,
            impedance_ohm: 0.2,
            test_current_a: 10e-3,
            tolerance_pct: 1.0,
            tempco_v_per_k: 5e-5,
            min_current_a: 1e-3,
        }
    }
}

/// A two-terminal clamp V = V0 + r·I (conducting while I ≥ `hold_a`) fed through Rb from VA; below
/// `hold_a` the branch is a plain resistance `off_ohm` (infinite for a zener).
#[derive(Debug, Clone, Copy)]
struct Clamp {
    va: f64,
    rb: f64,
    v0: f64,
    r: f64,
    hold_a: f64,
    off_ohm: f64,
    /// The share of the branch current above `hold_a` that flows in the regulating element.
    share: f64,
}

impl Clamp {
    /// Node voltage and the current through the clamp's regulating element (zener current or
    /// cathode current; 0 when it does not conduct), for an input drawing `bias_a` from the node.
    fn solve(&self, bias_a: f64) -> (f64, f64) {
        let g = 1.0 / self.rb + 1.0 / self.r;
        let v = (self.va / self.rb + self.v0 / self.r - bias_a) / g;
        let i = (v - self.v0) / self.r - self.hold_a;
        if i >= 0.0 {
            return (v, i * self.share);
        }
        let off = if self.off_ohm.is_finite() {
            (self.va / self.rb - bias_a) / (1.0 / self.rb + 1.0 / self.off_ohm)
        } else {
            self.va - bias_a * self.rb
        };
        (off, 0.0)
    }

    /// Thevenin equivalent with no load: (Vth, Rth) of the state the node is in.
    fn thevenin(&self) -> (f64, f64) {
        let (v, i) = self.solve(0.0);
        if i > 0.0 || (v - self.v0) / self.r >= self.hold_a {
            ((self.v0 * self.rb + self.va * self.r) / (self.rb + self.r), par2(self.rb, self.r))
        } else if self.off_ohm.is_finite() {
            (v, par2(self.rb, self.off_ohm))
        } else {
            (v, self.rb)
        }
    }
}

impl ZenerReference {
    /// The zener's source voltage Vz0 = Vz − Izt·rz of the piecewise-linear model, volts.
    pub fn source_v(&self) -> f64 {
        self.vz_v - self.test_current_a * self.slope_ohm
    }

    fn clamp(&self, supply_v: f64, negative_rail_v: f64) -> Clamp {
        Clamp {
            va: self.rail.volts(supply_v, negative_rail_v),
            rb: self.bias_ohm,
            v0: self.source_v(),
            r: self.slope_ohm,
            hold_a: 0.0,
            off_ohm: f64::INFINITY,
            share: 1.0,
        }
    }

    fn validate(&self) -> Result<(), DesignError> {
        resistance("reference.bias_ohm", self.bias_ohm)?;
        self.rail.validate("reference.rail")?;
        positive(Quantity::Voltage, "reference.vz_v", self.vz_v)?;
        positive(Quantity::Current, "reference.test_current_a", self.test_current_a)?;
        resistance("reference.slope_ohm", self.slope_ohm)?;
        check(Quantity::Percent, "reference.tolerance_pct", self.tolerance_pct)?;
        check(Quantity::VoltageDrift, "reference.tempco_v_per_k", self.tempco_v_per_k)?;
        non_negative(Quantity::Current, "reference.min_current_a", self.min_current_a)?;
        if self.source_v() <= 0.0 {
            return Err(DesignError::invalid(
                "reference.slope_ohm",
                "Vz − Izt·rz must stay above 0 V: lower the slope resistance or the test current",
            ));
        }
        Ok(())
    }
}

impl ShuntReference {
    /// The gain 1 + R1/R2 of the programming resistors.
    pub fn gain(&self) -> f64 {
        1.0 + self.upper_ohm / self.lower_ohm
    }

    /// Vka = Vref·(1 + R1/R2) + Iref·R1 at the test cathode current, volts.
    pub fn cathode_v(&self) -> f64 {
        self.vref_v * self.gain() + self.ref_current_a * self.upper_ohm
    }

    /// Current through the programming resistors while the device regulates: Vref/R2 + Iref.
    pub fn programming_current_a(&self) -> f64 {
        self.vref_v / self.lower_ohm + self.ref_current_a
    }

    /// Dynamic impedance at the cathode for the device's own current, Zka·(1 + R1/R2), ohms
    /// (the whole part including R1 and R2 shows this divided by 1 + Zka/R2; module notes).
    pub fn cathode_impedance_ohm(&self) -> f64 {
        self.impedance_ohm * self.gain()
    }

    fn clamp(&self, supply_v: f64, negative_rail_v: f64) -> Clamp {
        // Module notes: Z′ = Zka·(1 + R1/R2)/(1 + Zka/R2); the branch current at Ik = 0 is
        // Vref/R2 + Iref − Zka·Ik,test/R2, and Ik is the excess over it divided by (1 + Zka/R2).
        let k = 1.0 + self.impedance_ohm / self.lower_ohm;
        let z = self.cathode_impedance_ohm() / k;
        let ip = self.programming_current_a();
        Clamp {
            va: self.rail.volts(supply_v, negative_rail_v),
            rb: self.bias_ohm,
            v0: self.cathode_v() - z * (ip + self.test_current_a),
            r: z,
            hold_a: ip - self.impedance_ohm * self.test_current_a / self.lower_ohm,
            off_ohm: self.upper_ohm + self.lower_ohm,
            share: 1.0 / k,
        }
    }

    fn validate(&self) -> Result<(), DesignError> {
        resistance("reference.bias_ohm", self.bias_ohm)?;
        self.rail.validate("reference.rail")?;
        resistance("reference.upper_ohm", self.upper_ohm)?;
        resistance("reference.lower_ohm", self.lower_ohm)?;
        positive(Quantity::Voltage, "reference.vref_v", self.vref_v)?;
        non_negative(Quantity::Current, "reference.ref_current_a", self.ref_current_a)?;
        resistance("reference.impedance_ohm", self.impedance_ohm)?;
        non_negative(Quantity::Current, "reference.test_current_a", self.test_current_a)?;
        check(Quantity::Percent, "reference.tolerance_pct", self.tolerance_pct)?;
        check(Quantity::VoltageDrift, "reference.tempco_v_per_k", self.tempco_v_per_k)?;
        non_negative(Quantity::Current, "reference.min_current_a", self.min_current_a)?;
        if !(self.cathode_v().is_finite() && self.clamp(0.0, 0.0).v0.is_finite()) {
            return Err(DesignError::invalid("reference.upper_ohm", "R1/R2 gives a cathode voltage that is not finite"));
        }
        Ok(())
    }
}

fn positive(q: Quantity, field: &str, v: f64) -> Result<f64, DesignError> {
    let v = check(q, field, v)?;
    if v <= 0.0 {
        return Err(DesignError::invalid(field, "must be above zero"));
    }
    Ok(v)
}

fn non_negative(q: Quantity, field: &str, v: f64) -> Result<f64, DesignError> {
    let v = check(q, field, v)?;
    if v < 0.0 {
        return Err(DesignError::invalid(field, "must not be negative"));
    }
    Ok(v)
}

/// The reference that sets a comparator's fixed input: a rail directly, a two-resistor divider,
/// a zener with its bias resistor, or an adjustable shunt reference.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Reference {
    /// The input is tied straight to a rail or a fixed reference source (zero source resistance).
    Direct {
        /// The rail or fixed source.
        rail: Rail,
    },
    /// A divider: Ra from `rail_a` to the input node, Rb from the node to `rail_b`.
    /// Thevenin equivalent Vth = (VA·Rb + VB·Ra)/(Ra+Rb), Rth = Ra‖Rb (DOMAIN §0).
    Divider {
        /// Resistor Ra from `rail_a` to the node, ohms.
        ra_ohm: f64,
        /// Rail that Ra returns to (usually the supply).
        rail_a: Rail,
        /// Resistor Rb from the node to `rail_b`, ohms.
        rb_ohm: f64,
        /// Rail that Rb returns to (usually ground).
        rail_b: Rail,
    },
    /// A zener diode to ground with its bias resistor (module notes).
    Zener(ZenerReference),
    /// An adjustable shunt reference with bias and programming resistors (module notes).
    Shunt(ShuntReference),
}

/// The kinds of [`Reference`] a page offers, by their record tag.
pub const REFERENCE_KINDS: [(&str, &str); 4] = [
    ("direct", "rail or fixed source"),
    ("divider", "divider"),
    ("zener", "zener"),
    ("shunt", "adjustable shunt reference"),
];

impl Reference {
    /// A divider from the supply (Ra) to ground (Rb).
    pub fn divider(ra_ohm: f64, rb_ohm: f64) -> Self {
        Reference::Divider { ra_ohm, rail_a: Rail::Supply, rb_ohm, rail_b: Rail::Ground }
    }

    /// A fixed reference source of `volts`, tied straight to the input.
    pub fn fixed(volts: f64) -> Self {
        Reference::Direct { rail: Rail::Fixed(volts) }
    }

    /// The record tag of this kind (`direct`, `divider`, `zener`, `shunt`).
    pub fn kind(&self) -> &'static str {
        match self {
            Reference::Direct { .. } => "direct",
            Reference::Divider { .. } => "divider",
            Reference::Zener(_) => "zener",
            Reference::Shunt(_) => "shunt",
        }
    }

    /// A reference of another kind (`kind` a tag of [`REFERENCE_KINDS`]) whose node sits near this
    /// one's at the given rails: a divider keeps its node voltage and total; a zener or shunt
    /// reference starts from its typical values with the voltage set near the present node
    /// (the shunt's R1 solved for it). `None` for an unknown tag; the same reference for its own tag.
    pub fn converted(&self, kind: &str, supply_v: f64, negative_rail_v: f64) -> Option<Reference> {
        if kind == self.kind() {
            return Some(*self);
        }
        let (v, _) = self.thevenin(supply_v, negative_rail_v);
        let v = if v.is_finite() { v } else { 0.5 * supply_v };
        let span = supply_v;
        Some(match kind {
            "direct" => Reference::fixed(v),
            "divider" => {
                let x = if span > 0.0 { (v / span).clamp(0.01, 0.99) } else { 0.5 };
                Reference::divider(100e3 * (1.0 - x), 100e3 * x)
            }
            "zener" => {
                let z = ZenerReference::default();
                let vz = if v > 0.5 { v } else { z.vz_v };
                Reference::Zener(ZenerReference { vz_v: vz, tempco_v_per_k: if vz < 5.0 { -2e-3 } else { 2e-3 }, ..z })
            }
            "shunt" => {
                let s = ShuntReference::default();
                let want = if v > s.vref_v { v } else { s.vref_v * 1.2 };
                let r1 = ((want - s.vref_v) / (s.vref_v / s.lower_ohm + s.ref_current_a)).max(1.0);
                Reference::Shunt(ShuntReference { upper_ohm: r1, ..s })
            }
            _ => return None,
        })
    }

    /// Checks resistances (finite, above zero), fixed rail voltages (finite) and the zener's or
    /// shunt reference's datasheet values against `crate::limits`.
    pub fn validate(&self) -> Result<(), DesignError> {
        match self {
            Reference::Direct { rail } => rail.validate("reference.rail"),
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                resistance("reference.ra_ohm", *ra_ohm)?;
                resistance("reference.rb_ohm", *rb_ohm)?;
                rail_a.validate("reference.rail_a")?;
                rail_b.validate("reference.rail_b")
            }
            Reference::Zener(z) => z.validate(),
            Reference::Shunt(s) => s.validate(),
        }
    }

    /// Thevenin equivalent (volts, ohms) for a device on the given rails. For a zener or shunt
    /// reference: the linear model of the state it is in with no load (regulating: Vth and
    /// Rb‖r of the module notes; not regulating: the bias resistor's side alone).
    pub fn thevenin(&self, supply_v: f64, negative_rail_v: f64) -> (f64, f64) {
        match *self {
            Reference::Direct { rail } => (rail.volts(supply_v, negative_rail_v), 0.0),
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                let va = rail_a.volts(supply_v, negative_rail_v);
                let vb = rail_b.volts(supply_v, negative_rail_v);
                (vb + (va - vb) * divider_fraction(ra_ohm, rb_ohm), par2(ra_ohm, rb_ohm))
            }
            Reference::Zener(z) => z.clamp(supply_v, negative_rail_v).thevenin(),
            Reference::Shunt(s) => s.clamp(supply_v, negative_rail_v).thevenin(),
        }
    }

    /// The node voltage when the device input draws `bias_a` (positive into the pin):
    /// Vth − IB·Rth (DOMAIN §6: bias error = bias current × the node's Thevenin resistance); a
    /// zener or shunt reference that stops conducting under the load is solved in that state.
    pub fn node_v(&self, supply_v: f64, negative_rail_v: f64, bias_a: f64) -> f64 {
        match *self {
            Reference::Zener(z) => z.clamp(supply_v, negative_rail_v).solve(bias_a).0,
            Reference::Shunt(s) => s.clamp(supply_v, negative_rail_v).solve(bias_a).0,
            _ => {
                let (v, r) = self.thevenin(supply_v, negative_rail_v);
                v - bias_a * r
            }
        }
    }

    /// The current in the regulating element (zener current, or the shunt reference's cathode
    /// current), amperes, when the device input draws `bias_a`; `None` for a rail or divider.
    pub fn regulator_current_a(&self, supply_v: f64, negative_rail_v: f64, bias_a: f64) -> Option<f64> {
        match *self {
            Reference::Zener(z) => Some(z.clamp(supply_v, negative_rail_v).solve(bias_a).1),
            Reference::Shunt(s) => Some(s.clamp(supply_v, negative_rail_v).solve(bias_a).1),
            _ => None,
        }
    }

    /// Power in the regulating element (zener or shunt device) at the given rails, watts:
    /// its current times the node voltage.
    pub fn regulator_power_w(&self, supply_v: f64, negative_rail_v: f64, bias_a: f64) -> Option<f64> {
        let i = self.regulator_current_a(supply_v, negative_rail_v, bias_a)?;
        Some(i * self.node_v(supply_v, negative_rail_v, bias_a).max(0.0))
    }

    /// Whether the reference is a divider (has resistors of the part list).
    pub fn is_divider(&self) -> bool {
        matches!(self, Reference::Divider { .. })
    }

    /// Whether the node has a source resistance of its own (divider, zener or shunt reference),
    /// so an input bias current into it matters.
    pub fn has_resistance(&self) -> bool {
        !matches!(self, Reference::Direct { .. })
    }

    /// Number of parameter values this reference contributes (resistors, fixed rails and the
    /// zener's or shunt reference's device quantities).
    pub(crate) fn parameter_count(&self) -> usize {
        match self {
            Reference::Direct { rail } => matches!(rail, Rail::Fixed(_)) as usize,
            Reference::Divider { rail_a, rail_b, .. } => {
                2 + matches!(rail_a, Rail::Fixed(_)) as usize + matches!(rail_b, Rail::Fixed(_)) as usize
            }
            Reference::Zener(z) => 1 + matches!(z.rail, Rail::Fixed(_)) as usize + 2,
            Reference::Shunt(s) => 3 + matches!(s.rail, Rail::Fixed(_)) as usize + 3,
        }
    }

    /// Appends the reference's resistors (designators from `seq`). A zener's or shunt
    /// reference's resistors are held fixed by the standard-value search (`held_in_search`):
    /// the search fits the trigger's own resistors around the reference.
    pub(crate) fn push_resistors(&self, seq: &mut Designators, out: &mut Vec<Parameter>) {
        match *self {
            Reference::Divider { ra_ohm, rb_ohm, .. } => {
                out.push(Parameter::resistor("ra_ohm", &seq.next_name(), "reference divider resistor to rail A", ra_ohm));
                out.push(Parameter::resistor("rb_ohm", &seq.next_name(), "reference divider resistor to rail B", rb_ohm));
            }
            Reference::Zener(z) => {
                out.push(Parameter::resistor("ref_bias_ohm", &seq.next_name(), "zener bias resistor", z.bias_ohm).held());
            }
            Reference::Shunt(s) => {
                out.push(Parameter::resistor("ref_bias_ohm", &seq.next_name(), "shunt reference bias resistor", s.bias_ohm).held());
                out.push(Parameter::resistor("ref_upper_ohm", &seq.next_name(), "shunt reference R1 (cathode to ref)", s.upper_ohm).held());
                out.push(Parameter::resistor("ref_lower_ohm", &seq.next_name(), "shunt reference R2 (ref to ground)", s.lower_ohm).held());
            }
            Reference::Direct { .. } => {}
        }
    }

    /// Appends the fixed rail voltages and the zener's or shunt reference's device quantities
    /// (Vz or Vref with its tolerance as limits and its drift; slope resistance; Iref).
    pub(crate) fn push_rails(&self, out: &mut Vec<Parameter>) {
        match *self {
            Reference::Direct { rail: Rail::Fixed(v) } => {
                out.push(Parameter::quantity("reference_v", "reference voltage", v, ParameterKind::Reference))
            }
            Reference::Direct { .. } => {}
            Reference::Divider { rail_a, rail_b, .. } => {
                if let Rail::Fixed(v) = rail_a {
                    out.push(Parameter::quantity("rail_a", "divider rail A", v, ParameterKind::Reference));
                }
                if let Rail::Fixed(v) = rail_b {
                    out.push(Parameter::quantity("rail_b", "divider rail B", v, ParameterKind::Reference));
                }
            }
            Reference::Zener(z) => {
                if let Rail::Fixed(v) = z.rail {
                    out.push(Parameter::quantity("ref_rail_v", "zener bias rail", v, ParameterKind::Reference));
                }
                let t = z.tolerance_pct / 100.0;
                out.push(
                    Parameter::quantity("vz_v", "zener voltage Vz", z.vz_v, ParameterKind::DeviceThreshold)
                        .with_limits(z.vz_v * (1.0 - t), z.vz_v * (1.0 + t))
                        .with_drift(Drift::Known(z.tempco_v_per_k)),
                );
                out.push(Parameter::device("zener_slope_ohm", "zener slope resistance rz", z.slope_ohm, Unit::Ohm));
            }
            Reference::Shunt(s) => {
                if let Rail::Fixed(v) = s.rail {
                    out.push(Parameter::quantity("ref_rail_v", "shunt reference bias rail", v, ParameterKind::Reference));
                }
                let t = s.tolerance_pct / 100.0;
                out.push(
                    Parameter::quantity("vref_v", "shunt reference Vref", s.vref_v, ParameterKind::DeviceThreshold)
                        .with_limits(s.vref_v * (1.0 - t), s.vref_v * (1.0 + t))
                        .with_drift(Drift::Unknown(s.tempco_v_per_k)),
                );
                out.push(Parameter::quantity("ref_current_a", "shunt reference Iref", s.ref_current_a, ParameterKind::BiasCurrent));
                out.push(Parameter::device("shunt_impedance_ohm", "shunt reference Zka", s.impedance_ohm, Unit::Ohm));
            }
        }
    }

    /// Replaces the reference's resistors from `next`, in the order of [`Reference::push_resistors`].
    pub(crate) fn take_resistors(&mut self, next: &mut dyn FnMut() -> f64) {
        match self {
            Reference::Divider { ra_ohm, rb_ohm, .. } => {
                *ra_ohm = next();
                *rb_ohm = next();
            }
            Reference::Zener(z) => z.bias_ohm = next(),
            Reference::Shunt(s) => {
                s.bias_ohm = next();
                s.upper_ohm = next();
                s.lower_ohm = next();
            }
            Reference::Direct { .. } => {}
        }
    }

    /// Replaces the fixed rail voltages and device quantities from `next`, in the order of
    /// [`Reference::push_rails`]. A new Vz or Vref keeps the tolerance in percent.
    pub(crate) fn take_rails(&mut self, next: &mut dyn FnMut() -> f64) {
        match self {
            Reference::Direct { rail } => {
                if let Rail::Fixed(_) = rail {
                    *rail = Rail::Fixed(next());
                }
            }
            Reference::Divider { rail_a, rail_b, .. } => {
                if let Rail::Fixed(_) = rail_a {
                    *rail_a = Rail::Fixed(next());
                }
                if let Rail::Fixed(_) = rail_b {
                    *rail_b = Rail::Fixed(next());
                }
            }
            Reference::Zener(z) => {
                if let Rail::Fixed(_) = z.rail {
                    z.rail = Rail::Fixed(next());
                }
                z.vz_v = next();
                z.slope_ohm = next();
            }
            Reference::Shunt(s) => {
                if let Rail::Fixed(_) = s.rail {
                    s.rail = Rail::Fixed(next());
                }
                s.vref_v = next();
                s.ref_current_a = next();
                s.impedance_ohm = next();
            }
        }
    }

    /// The resistor drops and the current each rail sources, at node voltage `node_v`.
    pub(crate) fn drops(
        &self,
        seq: &mut Designators,
        supply_v: f64,
        negative_rail_v: f64,
        node_v: f64,
    ) -> (Vec<ResistorDrop>, f64) {
        match *self {
            Reference::Direct { .. } => (Vec::new(), 0.0),
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                let va = rail_a.volts(supply_v, negative_rail_v);
                let vb = rail_b.volts(supply_v, negative_rail_v);
                let ia = (va - node_v) / ra_ohm;
                let ib = (vb - node_v) / rb_ohm;
                (
                    vec![
                        ResistorDrop { designator: seq.next_name(), resistance_ohm: ra_ohm, volts: va - node_v },
                        ResistorDrop { designator: seq.next_name(), resistance_ohm: rb_ohm, volts: node_v - vb },
                    ],
                    ia.max(0.0) + ib.max(0.0),
                )
            }
            Reference::Zener(z) => {
                let va = z.rail.volts(supply_v, negative_rail_v);
                let drop = ResistorDrop { designator: seq.next_name(), resistance_ohm: z.bias_ohm, volts: va - node_v };
                (vec![drop], ((va - node_v) / z.bias_ohm).max(0.0))
            }
            Reference::Shunt(s) => {
                let va = s.rail.volts(supply_v, negative_rail_v);
                let bias = ResistorDrop { designator: seq.next_name(), resistance_ohm: s.bias_ohm, volts: va - node_v };
                // The reference pin sits at Vref while regulating, else on the R1–R2 divider.
                let regulating = s.clamp(supply_v, negative_rail_v).solve(0.0).1 > 0.0;
                let vr = if regulating { s.vref_v } else { node_v * divider_fraction(s.upper_ohm, s.lower_ohm) };
                let r1 = ResistorDrop { designator: seq.next_name(), resistance_ohm: s.upper_ohm, volts: node_v - vr };
                let r2 = ResistorDrop { designator: seq.next_name(), resistance_ohm: s.lower_ohm, volts: vr };
                (vec![bias, r1, r2], ((va - node_v) / s.bias_ohm).max(0.0))
            }
        }
    }

    /// A reference of the same kind and rails whose node sits at `required_v` while the device
    /// input draws `bias_a`. A direct reference must already be there; a divider keeps its total
    /// Ra + Rb and solves N = VB + (VA−VB)·x − IB·Rt·x(1−x) for x = Rb/Rt in (0, 1) exactly
    /// (a quadratic; numerically stable roots). A zener must already be there (its voltage is the
    /// part's); an adjustable shunt reference keeps Rb and R2 and solves R1 (the node rises
    /// monotonically with R1 while the device regulates: bisection on ln R1).
    /// `what` names the input in messages.
    pub(crate) fn synthesise_for(
        &self,
        required_v: f64,
        bias_a: f64,
        supply_v: f64,
        negative_rail_v: f64,
        what: &str,
    ) -> Result<Reference, DesignError> {
        if !required_v.is_finite() {
            return Err(DesignError::infeasible(
                format!("the {what} would need a non-finite voltage"),
                "check the targets and the device values",
            ));
        }
        match *self {
            Reference::Direct { rail } => {
                let v = rail.volts(supply_v, negative_rail_v);
                if (v - required_v).abs() > 1e-9 * v.abs().max(required_v.abs()).max(1.0) {
                    return Err(DesignError::infeasible(
                        format!("the {what} is tied directly to {v:.4} V but the targets need {required_v:.6} V there"),
                        format!("set the reference to {required_v:.6} V, or make it with a divider (reference kind \"divider\")"),
                    ));
                }
                Ok(*self)
            }
            Reference::Zener(_) => {
                let v = self.node_v(supply_v, negative_rail_v, bias_a);
                if (v - required_v).abs() > 1e-9 * v.abs().max(required_v.abs()).max(1.0) {
                    return Err(DesignError::infeasible(
                        format!("the {what} sits on a zener at {v:.4} V but the targets need {required_v:.6} V there"),
                        "choose a zener voltage near that value, or use an adjustable shunt reference (reference kind \"shunt\") or a divider",
                    ));
                }
                Ok(*self)
            }
            Reference::Shunt(s) => {
                let at = |r1: f64| {
                    let c = Reference::Shunt(ShuntReference { upper_ohm: r1, ..s });
                    (c.node_v(supply_v, negative_rail_v, bias_a), c.regulator_current_a(supply_v, negative_rail_v, bias_a).unwrap_or(0.0))
                };
                let (mut lo, mut hi) = (1e-3_f64.ln(), 1e12_f64.ln());
                let (v_lo, _) = at(lo.exp());
                let (v_hi, i_hi) = at(hi.exp());
                let unreachable = || {
                    DesignError::infeasible(
                        format!(
                            "the {what} would need {required_v:.4} V, which the shunt reference cannot make on its bias resistor (it reaches {v_lo:.4} V to {:.4} V while regulating)",
                            if i_hi > 0.0 { v_hi } else { supply_v }
                        ),
                        "lower the bias resistor or raise its rail, or move the targets",
                    )
                };
                if required_v.is_nan() || v_lo.is_nan() || required_v < v_lo {
                    return Err(unreachable());
                }
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    let (v, i) = at(mid.exp());
                    if v < required_v && i > 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                let r1 = lo.exp();
                let (v, i) = at(r1);
                if i.is_nan() || i <= 0.0 || (v - required_v).abs() > 1e-9 * required_v.abs().max(1.0) {
                    return Err(unreachable());
                }
                Ok(Reference::Shunt(ShuntReference { upper_ohm: r1, ..s }))
            }
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                let va = rail_a.volts(supply_v, negative_rail_v);
                let vb = rail_b.volts(supply_v, negative_rail_v);
                let rt = ra_ohm + rb_ohm;
                if !(rt.is_finite() && rt > 0.0) {
                    return Err(DesignError::invalid("reference", "the divider total Ra + Rb must be a finite number above zero"));
                }
                let span = va - vb;
                if span.abs() <= 1e-12 * va.abs().max(vb.abs()).max(1.0) {
                    return Err(DesignError::infeasible(
                        format!("the divider's two rails are both at {va:.4} V, so it cannot set the {what}"),
                        "return Ra and Rb to different rails",
                    ));
                }
                let a = bias_a * rt;
                let x0 = (required_v - vb) / span;
                let x = match pick_root(quadratic_roots(a, span - a, vb - required_v), x0, |x| x > 0.0 && x < 1.0) {
                    Some(x) => x,
                    None => {
                        let (lo, hi) = if va < vb { (va, vb) } else { (vb, va) };
                        return Err(DesignError::infeasible(
                            format!(
                                "the {what} would need {required_v:.4} V, which a divider between {lo:.4} V and {hi:.4} V cannot make (with the input bias current)"
                            ),
                            "move the targets so the reference falls between the divider's rails, or return the divider to other rails",
                        ));
                    }
                };
                let rb = x * rt;
                let ra = rt - rb;
                if !(ra > 0.0 && rb > 0.0) {
                    return Err(DesignError::infeasible(
                        format!("the {what} would need to sit on a divider rail ({required_v:.4} V)"),
                        "use a direct reference (reference kind \"direct\") at that voltage",
                    ));
                }
                Ok(Reference::Divider { ra_ohm: ra, rail_a, rb_ohm: rb, rail_b })
            }
        }
    }

    /// Divider current from rail A to rail B with no load, amperes (0 for a direct reference;
    /// the bias-resistor current for a zener or shunt reference).
    pub(crate) fn divider_current_a(&self, supply_v: f64, negative_rail_v: f64) -> f64 {
        match *self {
            Reference::Direct { .. } => 0.0,
            Reference::Divider { ra_ohm, rail_a, rb_ohm, rail_b } => {
                (rail_a.volts(supply_v, negative_rail_v) - rail_b.volts(supply_v, negative_rail_v)).abs() / (ra_ohm + rb_ohm)
            }
            Reference::Zener(ZenerReference { bias_ohm, rail, .. }) | Reference::Shunt(ShuntReference { bias_ohm, rail, .. }) => {
                ((rail.volts(supply_v, negative_rail_v) - self.node_v(supply_v, negative_rail_v, 0.0)) / bias_ohm).abs()
            }
        }
    }

    /// The warning when a zener's or shunt reference's current falls below its minimum at the
    /// lowest supply of the operating range (`supply_min_v`, else the nominal supply); `device`
    /// gives the rails (a split negative rail moves with the supply) and `bias_a` the input's draw.
    pub(crate) fn current_check(&self, device: &Comparator, supply_min_v: Option<f64>, bias_a: f64, w: &mut Vec<Warning>) {
        let (min_a, what) = match self {
            Reference::Zener(z) => (z.min_current_a, "zener current"),
            Reference::Shunt(s) => (s.min_current_a, "shunt reference cathode current"),
            _ => return,
        };
        let supply = supply_min_v.unwrap_or(device.supply_v).min(device.supply_v);
        let d = super::comparator::device_at_supply(device, supply);
        let Some(i) = self.regulator_current_a(d.supply_v, d.negative_rail_v, bias_a) else { return };
        if i < min_a {
            w.push(Warning::new(
                WarningCode::ReferenceCurrentLow,
                format!(
                    "{what} {:.3} mA at the lowest supply {:.3} V is below its minimum {:.3} mA: the reference stops regulating; lower the bias resistor",
                    i * 1e3,
                    supply,
                    min_a * 1e3
                ),
            ));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn zener_thevenin_is_the_superposition_of_its_two_sources() {
        let z = ZenerReference { bias_ohm: 1e3, vz_v: 3.3, test_current_a: 5e-3, slope_ohm: 100.0, ..ZenerReference::default() };
        let r = Reference::Zener(z);
        let (v, rth) = r.thevenin(5.0, 0.0);
        let vz0 = 3.3 - 5e-3 * 100.0;
        assert!((v - (vz0 * 1e3 + 5.0 * 100.0) / 1100.0).abs() < 1e-12);
        assert!((rth - 1e5 / 1100.0).abs() < 1e-9);
        // A supply below the zener: no conduction, the node follows the supply through Rb.
        assert_eq!(r.regulator_current_a(2.0, 0.0, 0.0), Some(0.0));
        assert!((r.node_v(2.0, 0.0, 1e-6) - (2.0 - 1e-3)).abs() < 1e-12);
    }

    #[test]
    fn shunt_reference_programs_its_cathode_and_solves_r1() {
        let s = ShuntReference { upper_ohm: 10e3, lower_ohm: 10e3, bias_ohm: 470.0, ..ShuntReference::default() };
        assert!((s.cathode_v() - (2.495 * 2.0 + 2e-6 * 10e3)).abs() < 1e-12);
        let r = Reference::Shunt(s);
        let v = r.node_v(12.0, 0.0, 0.0);
        assert!((v - s.cathode_v()).abs() < 0.01, "{v}");
        let back = Reference::Shunt(ShuntReference { upper_ohm: 3e3, ..s }).synthesise_for(v, 0.0, 12.0, 0.0, "x").unwrap();
        let Reference::Shunt(b) = back else { panic!() };
        assert!((b.upper_ohm - 10e3).abs() < 1e-3, "{}", b.upper_ohm);
        assert!(Reference::Shunt(s).synthesise_for(20.0, 0.0, 12.0, 0.0, "x").is_err());
    }

    #[test]
    fn low_current_warns_at_the_lowest_supply() {
        let z = Reference::Zener(ZenerReference { bias_ohm: 1e3, vz_v: 3.3, min_current_a: 1e-3, ..ZenerReference::default() });
        let d = Comparator::ideal(5.0);
        let mut w = Vec::new();
        z.current_check(&d, None, 0.0, &mut w);
        assert!(w.is_empty(), "{w:?}");
        // Iz = (3.8 − (3.3 − 5 mA·95 Ω))/(1 kΩ + 95 Ω) = 0.89 mA, below 1 mA.
        z.current_check(&d, Some(3.8), 0.0, &mut w);
        assert_eq!(w.len(), 1);
        assert_eq!(w[0].code, WarningCode::ReferenceCurrentLow);
    }

    #[test]
    fn records_read_each_kind_and_refuse_bad_values() {
        let z: Reference = serde_json::from_str(r#"{"kind":"zener","bias_ohm":2200,"vz_v":4.7}"#).unwrap();
        assert!(matches!(z, Reference::Zener(ZenerReference { bias_ohm: 2200.0, .. })));
        let s: Reference = serde_json::from_str(r#"{"kind":"shunt","upper_ohm":1e4,"lower_ohm":1e4}"#).unwrap();
        assert!(s.validate().is_ok());
        let bad = Reference::Zener(ZenerReference { vz_v: f64::NAN, ..ZenerReference::default() });
        assert!(bad.validate().is_err());
        let bad = Reference::Shunt(ShuntReference { lower_ohm: 0.0, ..ShuntReference::default() });
        assert!(bad.validate().is_err());
    }
}

/// A datasheet value of a zener or shunt reference that is not a tolerance parameter (its
/// tolerance, temperature coefficient, test and minimum currents), for the page's fields.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReferenceField {
    /// Record field name inside `reference` (`tolerance_pct`…).
    pub id: &'static str,
    /// Plain label.
    pub label: &'static str,
    /// Unit symbol shown beside the field.
    pub unit: &'static str,
    /// The quantity whose range the field checks.
    pub quantity: Quantity,
    /// Present value, base units (the tempco in V/K).
    pub value: f64,
}

impl Reference {
    /// The zener's or shunt reference's datasheet values that are not parameters (empty for a
    /// rail or divider), in a fixed order.
    pub fn fields(&self) -> Vec<ReferenceField> {
        let f = |id, label, unit, quantity, value| ReferenceField { id, label, unit, quantity, value };
        match *self {
            Reference::Zener(z) => vec![
                f("tolerance_pct", "zener tolerance (±)", "%", Quantity::Percent, z.tolerance_pct),
                f("tempco_v_per_k", "zener temperature coefficient", "V/K", Quantity::VoltageDrift, z.tempco_v_per_k),
                f("test_current_a", "zener test current Izt", "A", Quantity::Current, z.test_current_a),
                f("min_current_a", "zener minimum current", "A", Quantity::Current, z.min_current_a),
            ],
            Reference::Shunt(s) => vec![
                f("tolerance_pct", "Vref tolerance (±)", "%", Quantity::Percent, s.tolerance_pct),
                f("tempco_v_per_k", "Vref drift (either sign)", "V/K", Quantity::VoltageDrift, s.tempco_v_per_k),
                f("test_current_a", "cathode current at which Vref holds", "A", Quantity::Current, s.test_current_a),
                f("min_current_a", "minimum cathode current", "A", Quantity::Current, s.min_current_a),
            ],
            _ => Vec::new(),
        }
    }

    /// The same reference with the datasheet value `id` (see [`Reference::fields`]) set to
    /// `value`, checked by [`Reference::validate`]; an unknown id is an error naming it.
    pub fn with_field(&self, id: &str, value: f64) -> Result<Reference, DesignError> {
        let mut r = *self;
        let slot = match (&mut r, id) {
            (Reference::Zener(z), "tolerance_pct") => &mut z.tolerance_pct,
            (Reference::Zener(z), "tempco_v_per_k") => &mut z.tempco_v_per_k,
            (Reference::Zener(z), "test_current_a") => &mut z.test_current_a,
            (Reference::Zener(z), "min_current_a") => &mut z.min_current_a,
            (Reference::Shunt(s), "tolerance_pct") => &mut s.tolerance_pct,
            (Reference::Shunt(s), "tempco_v_per_k") => &mut s.tempco_v_per_k,
            (Reference::Shunt(s), "test_current_a") => &mut s.test_current_a,
            (Reference::Shunt(s), "min_current_a") => &mut s.min_current_a,
            _ => return Err(DesignError::invalid(&format!("reference.{id}"), "this reference has no such value")),
        };
        *slot = value;
        r.validate()?;
        Ok(r)
    }
}

impl super::Topology {
    /// The reference network of a comparator topology that takes one (non-inverting,
    /// open-drain non-inverting, plain comparator), with the device whose rails it uses.
    pub fn reference(&self) -> Option<(&Reference, &Comparator)> {
        use super::open_drain::OpenDrainPolarity;
        match self {
            super::Topology::NonInverting(c) => Some((&c.reference, &c.device)),
            super::Topology::Plain(c) => Some((&c.reference, &c.device)),
            super::Topology::OpenDrain(c) => match &c.polarity {
                OpenDrainPolarity::NonInverting { reference, .. } => Some((reference, &c.device)),
                _ => None,
            },
            _ => None,
        }
    }

    /// The same circuit with its reference replaced (`None` for a topology without one).
    pub fn with_reference(&self, reference: Reference) -> Option<super::Topology> {
        use super::open_drain::OpenDrainPolarity;
        let mut t = self.clone();
        match &mut t {
            super::Topology::NonInverting(c) => c.reference = reference,
            super::Topology::Plain(c) => c.reference = reference,
            super::Topology::OpenDrain(c) => match &mut c.polarity {
                OpenDrainPolarity::NonInverting { reference: r, .. } => *r = reference,
                _ => return None,
            },
            _ => return None,
        }
        Some(t)
    }

    /// The record tag of the circuit's reference kind (see [`REFERENCE_KINDS`]), if it has one.
    pub fn reference_kind(&self) -> Option<&'static str> {
        self.reference().map(|(r, _)| r.kind())
    }

    /// The same circuit with a datasheet value of its reference set ([`Reference::with_field`]).
    pub fn with_reference_field(&self, id: &str, value: f64) -> Result<super::Topology, DesignError> {
        let (r, _) = self.reference().ok_or_else(|| DesignError::invalid("reference", "this circuit has no reference"))?;
        let next = r.with_field(id, value)?;
        self.with_reference(next).ok_or_else(|| DesignError::invalid("reference", "this circuit has no reference"))
    }

    /// The same circuit with its reference turned into another kind ([`Reference::converted`]),
    /// or `None` when the topology has no reference or the tag is unknown.
    pub fn with_reference_kind(&self, kind: &str) -> Option<super::Topology> {
        let (r, d) = self.reference()?;
        let next = r.converted(kind, d.supply_v, d.negative_rail_v)?;
        self.with_reference(next)
    }
}

/// The part-list line of a circuit's zener or adjustable shunt reference: its voltage, the
/// largest current and dissipation over the supply range (at the highest supply of `checks`,
/// with no input current), and for a zener the suggested power rating (the parts' derating factor
/// times the dissipation, rounded up to a common rating; common practice). Empty for any other
/// reference or topology.
pub fn regulator_lines(
    circuit: &super::Topology,
    checks: &crate::analysis::CheckSettings,
    parts: &crate::bom::PartSettings,
) -> Vec<crate::bom::RegulatorLine> {
    let Some((r, d)) = circuit.reference() else { return Vec::new() };
    if r.validate().is_err() {
        return Vec::new();
    }
    let supply = checks.supply_max_v.unwrap_or(d.supply_v).max(d.supply_v);
    let dd = super::comparator::device_at_supply(d, supply);
    let (Some(i), Some(p)) = (
        r.regulator_current_a(dd.supply_v, dd.negative_rail_v, 0.0),
        r.regulator_power_w(dd.supply_v, dd.negative_rail_v, 0.0),
    ) else {
        return Vec::new();
    };
    let ma = |a: f64| crate::notation::format_with_unit(a, 3, Unit::Ampere);
    let mw = |w: f64| format!("{} mW", crate::notation::format_significant(w * 1e3, 3));
    let v = |x: f64| crate::notation::format_with_unit(x, 4, Unit::Volt);
    let need = p * parts.power_derating_factor;
    match *r {
        Reference::Zener(z) => {
            let rating = crate::bom::ZENER_RATINGS_W.iter().copied().find(|&w| w >= need);
            let mut notes = vec![
                format!(
                    "largest zener current {} and dissipation {} at {} supply; slope resistance {} at {}",
                    ma(i),
                    mw(p),
                    v(supply),
                    crate::notation::format_with_unit(z.slope_ohm, 3, Unit::Ohm),
                    ma(z.test_current_a)
                ),
                format!("needs at least {} to regulate (minimum current)", ma(z.min_current_a)),
            ];
            if rating.is_none() {
                notes.push(format!("needs more than {}: raise the bias resistor", mw(need)));
            }
            vec![crate::bom::RegulatorLine {
                designator: "D1".into(),
                description: format!("zener diode {} ±{} %", v(z.vz_v), z.tolerance_pct),
                voltage_v: z.vz_v,
                max_current_a: i,
                max_power_w: p,
                suggested_rating_w: rating,
                notes,
            }]
        }
        Reference::Shunt(s) => {
            let vka = s.cathode_v();
            vec![crate::bom::RegulatorLine {
                designator: "U2".into(),
                description: format!("adjustable shunt reference, Vref {} ±{} %", v(s.vref_v), s.tolerance_pct),
                voltage_v: vka,
                max_current_a: i,
                max_power_w: p,
                suggested_rating_w: None,
                notes: vec![
                    format!("programmed to {} by R1/R2; cathode voltage rating at least {}", v(vka), v(vka)),
                    format!(
                        "largest cathode current {} and dissipation {} at {} supply; needs at least {} to regulate",
                        ma(i),
                        mw(p),
                        v(supply),
                        ma(s.min_current_a)
                    ),
                ],
            }]
        }
        _ => Vec::new(),
    }
}
