// Over 600 lines: the hand model and the trait; the Ebers–Moll solver is in `ebers_moll.rs`, a third here is tests and the netlist.
//! Emitter-coupled two-transistor Schmitt trigger (shared/DOMAIN.md §1f).
//!
//! Q1: base = Vin, collector through RC1 to VCC. R1 from C1 to B2, R2 from B2 to 0 V. Q2: collector
//! through RC2 to VCC (the output, optionally loaded by a resistor to ground). Both emitters share
//! node E, returned to 0 V through RE. The pair is matched (one [`Transistor`] describes both).
//! Output low while the input is low (Q2 on), so the circuit is non-inverting.
//!
//! Two models, chosen by [`BjtModel`]:
//! - **hand** (DOMAIN §1f; O. H. Schmitt, J. Sci. Instrum. 15 (1938); Millman & Taub, *Pulse, Digital
//!   and Switching Waveforms*, both from memory): with K = R2/(RC1+R1+R2), RB2 = (RC1+R1)‖R2,
//!   α = β/(β+1): IE2 = (K·VCC − VBE)/(RE + RB2/(β+1)), **VT+ = VBE + RE·IE2**,
//!   **VT− = K(VCC·RE + α·RC1·VBE)/(RE + α·K·RC1)**, VOL = VCC − α·IE2·RC2. Regeneration needs
//!   roughly α·K·RC1 > re1 + re2 + RB2/(β+1) with re ≈ 2VT/IE2 [D]; below that there is no loop.
//! - **ebers_moll**: the transport Ebers–Moll model (Ebers & Moll, "Large-signal behavior of junction
//!   transistors", Proc. IRE 42 (1954), from memory) for both transistors,
//!   IC = IS(e^{VBE/VT} − e^{VBC/VT}) − (IS/βR)(e^{VBC/VT} − 1),
//!   IB = (IS/βF)(e^{VBE/VT} − 1) + (IS/βR)(e^{VBC/VT} − 1), with KCL at E, C1, B2 and C2. The DC
//!   transfer curve is S-shaped; the thresholds are its fold points. The curve is traced with
//!   λ = VBE1 as the continuation parameter (monotone along the whole curve): for each λ,
//!   Vin = VE + λ and (VE, VC1, VB2, VC2) come from damped Newton. VT+ is the first local maximum of
//!   Vin(λ), VT− the next minimum, each located where dVin/dλ = 1 + dVE/dλ changes sign
//!   (dVE/dλ from the implicit-function theorem, −J⁻¹·∂F/∂λ), refined by bisection.
//!
//! Every iteration is bounded: a solve that does not settle returns [`DesignError::NotConverged`];
//! a curve without a fold returns [`DesignError::NoSwitching`].

use super::{Described, expect_len, Circuit, CurvePoint, MonotoneStructure, Parameter, ParameterKind, TransistorStress};
use crate::analysis::{
    Analysis, OutputStage,
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::error::{positive, DesignError};
use crate::notation::Unit;
use serde::{Deserialize, Serialize};

mod ebers_moll;
use ebers_moll::Em;

/// Collector–emitter voltage below which a transistor counts as saturated, volts (DOMAIN §1f: 0.2 V).
pub const VCE_SATURATION_V: f64 = 0.2;

/// Boltzmann constant over the elementary charge, volts per kelvin (SI 2019 exact constants:
/// k = 1.380649e-23 J/K, q = 1.602176634e-19 C).
pub const BOLTZMANN_OVER_CHARGE_V_PER_K: f64 = 1.380649e-23 / 1.602176634e-19;

/// Which transistor model sets the thresholds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BjtModel {
    /// Closed-form hand analysis with a fixed VBE (DOMAIN §1f); allocation-free, for Monte Carlo.
    #[default]
    Hand,
    /// Numerical DC solution with the transport Ebers–Moll model; thresholds at the fold points.
    EbersMoll,
}

/// SPICE's default nominal temperature TNOM, 27 °C, in kelvin: the temperature at which a new
/// transistor's IS, βF and VBE are entered (SPICE3 manual, from memory).
pub const SPICE_NOMINAL_TEMPERATURE_K: f64 = 300.15;

/// Silicon's bandgap voltage EG/q for the IS(T) law, volts (SPICE's default EG, a textbook value,
/// from memory).
pub const SILICON_BANDGAP_V: f64 = 1.11;

/// Temperature exponent of IS for a bipolar junction (SPICE's default XTI = 3, from memory).
pub const SILICON_IS_EXPONENT: f64 = 3.0;

/// Temperature exponent of βF (SPICE's XTB; 1.5 is a typical small-signal NPN figure, from memory:
/// βF rises about 0.5 %/K near room temperature).
pub const SILICON_BETA_EXPONENT: f64 = 1.5;

/// Spread of βF assumed when the record gives no datasheet limits: βF/√3 to βF·√3, a 3:1 range
/// (common practice: one general-purpose NPN part number spans about 3:1 in hFE, e.g. 100 to 300).
pub const DEFAULT_BETA_SPREAD: f64 = 1.732_050_807_568_877_2;

/// Spread of IS assumed when the record gives no limits: IS/2 to 2·IS, VBE ±18 mV at a fixed
/// current (common practice: unit-to-unit VBE spread of one part number is a few tens of mV).
pub const DEFAULT_IS_SPREAD: f64 = 2.0;

/// Zero-bias base–emitter capacitance written into the SPICE deck, farads: a general-purpose
/// small-signal NPN's 4.5 pF (datasheet class, from memory). The DC thresholds do not depend on it;
/// it gives a transient run finite slew at the fold.
pub const EMITTER_CAPACITANCE_F: f64 = 4.5e-12;

/// Zero-bias base–collector capacitance written into the SPICE deck, farads (datasheet class:
/// Cobo ≈ 4 pF, from memory).
pub const COLLECTOR_CAPACITANCE_F: f64 = 3.6e-12;

/// Forward transit time written into the SPICE deck, seconds (datasheet class: fT ≈ 300 MHz gives
/// TF ≈ 1/(2π·fT) ≈ 0.3–0.5 ns, from memory).
pub const TRANSIT_TIME_S: f64 = 4e-10;

/// The (matched) NPN transistors of the pair, with the temperature laws of SPICE's bipolar model
/// (SPICE3 manual, from memory): IS(T) = IS0·(T/T0)^XTI·exp[(EG/k)(1/T0 − 1/T)] and
/// βF(T) = βF0·(T/T0)^XTB (βR scales the same way), with T0 the nominal temperature.
///
/// Records written before the temperature laws existed have no `nominal_temperature_k`; they
/// entered IS, βF and VBE at the junction temperature, so a missing nominal temperature reads as
/// `temperature_k` and such records give exactly the figures they gave before.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(from = "TransistorRecord")]
pub struct Transistor {
    /// Base–emitter voltage of a conducting transistor for the hand model at the nominal
    /// temperature, volts; at other temperatures the hand model takes VBE at the same current from
    /// the IS(T) law ([`Transistor::vbe_at_temperature_v`]).
    pub vbe_v: f64,
    /// Forward current gain βF at the nominal temperature.
    pub beta_f: f64,
    /// Reverse current gain βR at the nominal temperature (Ebers–Moll model only).
    pub beta_r: f64,
    /// Transport saturation current IS at the nominal temperature, amperes (Ebers–Moll model only).
    pub saturation_current_a: f64,
    /// Junction temperature, kelvin; sets the thermal voltage VT = kT/q, IS(T), βF(T) and VBE(T).
    pub temperature_k: f64,
    /// Nominal temperature T0 at which IS, βF, βR and VBE are entered, kelvin (SPICE's TNOM;
    /// default 300.15 K = 27 °C).
    pub nominal_temperature_k: f64,
    /// Temperature exponent of IS (SPICE's XTI; 3 for silicon).
    pub is_temperature_exponent: f64,
    /// Bandgap voltage EG/q of the IS(T) law, volts (SPICE's EG; 1.11 V for silicon).
    pub bandgap_v: f64,
    /// Temperature exponent of βF and βR (SPICE's XTB; 1.5 typical).
    pub beta_temperature_exponent: f64,
    /// Datasheet minimum and maximum of βF at the nominal temperature for the tolerance studies
    /// (`None`: βF/√3 to βF·√3, [`DEFAULT_BETA_SPREAD`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub beta_f_limits: Option<[f64; 2]>,
    /// Minimum and maximum of IS at the nominal temperature for the tolerance studies, amperes
    /// (`None`: IS/2 to 2·IS, [`DEFAULT_IS_SPREAD`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub saturation_current_limits_a: Option<[f64; 2]>,
    /// Junction temperature range for the tolerance studies, kelvin
    /// (`None`: the tolerance settings' operating range, so the junction follows the temperature
    /// the rest of the design is studied over).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub temperature_limits_k: Option<[f64; 2]>,
}

/// The stored form of [`Transistor`]: every field optional, so old records keep loading.
#[derive(Deserialize)]
#[serde(default)]
struct TransistorRecord {
    vbe_v: f64,
    beta_f: f64,
    beta_r: f64,
    saturation_current_a: f64,
    temperature_k: f64,
    nominal_temperature_k: Option<f64>,
    is_temperature_exponent: f64,
    bandgap_v: f64,
    beta_temperature_exponent: f64,
    beta_f_limits: Option<[f64; 2]>,
    saturation_current_limits_a: Option<[f64; 2]>,
    temperature_limits_k: Option<[f64; 2]>,
}

impl Default for TransistorRecord {
    fn default() -> Self {
        let t = Transistor::default();
        TransistorRecord {
            vbe_v: t.vbe_v,
            beta_f: t.beta_f,
            beta_r: t.beta_r,
            saturation_current_a: t.saturation_current_a,
            temperature_k: t.temperature_k,
            nominal_temperature_k: None,
            is_temperature_exponent: t.is_temperature_exponent,
            bandgap_v: t.bandgap_v,
            beta_temperature_exponent: t.beta_temperature_exponent,
            beta_f_limits: None,
            saturation_current_limits_a: None,
            temperature_limits_k: None,
        }
    }
}

impl From<TransistorRecord> for Transistor {
    fn from(r: TransistorRecord) -> Self {
        Transistor {
            vbe_v: r.vbe_v,
            beta_f: r.beta_f,
            beta_r: r.beta_r,
            saturation_current_a: r.saturation_current_a,
            temperature_k: r.temperature_k,
            nominal_temperature_k: r.nominal_temperature_k.unwrap_or(r.temperature_k),
            is_temperature_exponent: r.is_temperature_exponent,
            bandgap_v: r.bandgap_v,
            beta_temperature_exponent: r.beta_temperature_exponent,
            beta_f_limits: r.beta_f_limits,
            saturation_current_limits_a: r.saturation_current_limits_a,
            temperature_limits_k: r.temperature_limits_k,
        }
    }
}

impl Default for Transistor {
    /// VBE 0.65 V, βF 100, βR 1, IS 1e-14 A (DOMAIN §1f's example values), entered at and
    /// operating at 27 °C, with silicon's temperature laws (XTI 3, EG 1.11 V, XTB 1.5).
    fn default() -> Self {
        Transistor {
            vbe_v: 0.65,
            beta_f: 100.0,
            beta_r: 1.0,
            saturation_current_a: 1e-14,
            temperature_k: SPICE_NOMINAL_TEMPERATURE_K,
            nominal_temperature_k: SPICE_NOMINAL_TEMPERATURE_K,
            is_temperature_exponent: SILICON_IS_EXPONENT,
            bandgap_v: SILICON_BANDGAP_V,
            beta_temperature_exponent: SILICON_BETA_EXPONENT,
            beta_f_limits: None,
            saturation_current_limits_a: None,
            temperature_limits_k: None,
        }
    }
}

impl Transistor {
    /// Thermal voltage VT = kT/q at the junction temperature, volts.
    pub fn thermal_voltage_v(&self) -> f64 {
        BOLTZMANN_OVER_CHARGE_V_PER_K * self.temperature_k
    }

    /// ln(IS(T)/IS0) = XTI·ln(T/T0) + (EG/k)(1/T0 − 1/T), with EG/k = bandgap_v/(k/q).
    fn ln_is_ratio(&self) -> f64 {
        let (t, t0) = (self.temperature_k, self.nominal_temperature_k);
        self.is_temperature_exponent * (t / t0).ln() + self.bandgap_v / BOLTZMANN_OVER_CHARGE_V_PER_K * (1.0 / t0 - 1.0 / t)
    }

    /// Saturation current at the junction temperature, amperes:
    /// IS(T) = IS0·(T/T0)^XTI·exp[(EG/k)(1/T0 − 1/T)] (SPICE's bipolar model, from memory).
    pub fn saturation_current_at_temperature_a(&self) -> f64 {
        self.saturation_current_a * self.ln_is_ratio().exp()
    }

    /// Forward current gain at the junction temperature, βF(T) = βF0·(T/T0)^XTB.
    pub fn beta_f_at_temperature(&self) -> f64 {
        self.beta_f * (self.temperature_k / self.nominal_temperature_k).powf(self.beta_temperature_exponent)
    }

    /// Reverse current gain at the junction temperature, βR(T) = βR0·(T/T0)^XTB (SPICE scales BR
    /// with XTB as it does BF, from memory).
    pub fn beta_r_at_temperature(&self) -> f64 {
        self.beta_r * (self.temperature_k / self.nominal_temperature_k).powf(self.beta_temperature_exponent)
    }

    /// The hand model's VBE at the junction temperature: the VBE that carries the same current as
    /// `vbe_v` did at T0, VBE(T) = VT(T)·[VBE0/VT(T0) − ln(IS(T)/IS0)]. Its slope at T0 is
    /// (VBE0 − EG − XTI·VT0)/T0, about −1.8 mV/K for 0.65 V (the textbook −2 mV/K).
    pub fn vbe_at_temperature_v(&self) -> f64 {
        let vt0 = BOLTZMANN_OVER_CHARGE_V_PER_K * self.nominal_temperature_k;
        self.thermal_voltage_v() * (self.vbe_v / vt0 - self.ln_is_ratio())
    }

    /// Common-base current gain at the junction temperature, α = βF(T)/(βF(T) + 1).
    pub fn alpha(&self) -> f64 {
        let b = self.beta_f_at_temperature();
        b / (b + 1.0)
    }

    /// βF limits for the tolerance studies (entered, or the default 3:1 spread).
    pub fn beta_f_range(&self) -> [f64; 2] {
        self.beta_f_limits.unwrap_or([self.beta_f / DEFAULT_BETA_SPREAD, self.beta_f * DEFAULT_BETA_SPREAD])
    }

    /// IS limits for the tolerance studies, amperes (entered, or IS/2 to 2·IS).
    pub fn saturation_current_range_a(&self) -> [f64; 2] {
        self.saturation_current_limits_a
            .unwrap_or([self.saturation_current_a / DEFAULT_IS_SPREAD, self.saturation_current_a * DEFAULT_IS_SPREAD])
    }

    fn validate(&self) -> Result<(), DesignError> {
        use crate::limits::{check, Quantity};
        positive("transistor.vbe_v", self.vbe_v)?;
        check(Quantity::Gain, "transistor.beta_f", self.beta_f)?;
        check(Quantity::Gain, "transistor.beta_r", self.beta_r)?;
        check(Quantity::SaturationCurrent, "transistor.saturation_current_a", self.saturation_current_a)?;
        check(Quantity::JunctionTemperature, "transistor.temperature_k", self.temperature_k)?;
        check(Quantity::JunctionTemperature, "transistor.nominal_temperature_k", self.nominal_temperature_k)?;
        check(Quantity::Exponent, "transistor.is_temperature_exponent", self.is_temperature_exponent)?;
        check(Quantity::Bandgap, "transistor.bandgap_v", self.bandgap_v)?;
        check(Quantity::Exponent, "transistor.beta_temperature_exponent", self.beta_temperature_exponent)?;
        // The scaled values must be a device too (every tolerance corner goes through here).
        check(Quantity::SaturationCurrent, "transistor.saturation_current_a (at the junction temperature)", self.saturation_current_at_temperature_a())?;
        check(Quantity::Gain, "transistor.beta_f (at the junction temperature)", self.beta_f_at_temperature())?;
        check(Quantity::Gain, "transistor.beta_r (at the junction temperature)", self.beta_r_at_temperature())?;
        let vbe_t = self.vbe_at_temperature_v();
        if !(vbe_t.is_finite() && vbe_t > 0.0) {
            return Err(DesignError::invalid(
                "transistor.vbe_v",
                format!("VBE at {} K comes out at {vbe_t:.3} V, not above zero: enter VBE at the nominal temperature or narrow the temperature", self.temperature_k),
            ));
        }
        let ranges = [
            ("transistor.beta_f_limits", Quantity::Gain, self.beta_f_limits),
            ("transistor.saturation_current_limits_a", Quantity::SaturationCurrent, self.saturation_current_limits_a),
            ("transistor.temperature_limits_k", Quantity::JunctionTemperature, self.temperature_limits_k),
        ];
        for (field, q, lim) in ranges {
            if let Some([lo, hi]) = lim {
                check(q, field, lo)?;
                check(q, field, hi)?;
                if lo > hi {
                    return Err(DesignError::invalid(field, format!("minimum {lo} is above maximum {hi}: swap them")));
                }
            }
        }
        Ok(())
    }
}

/// The emitter-coupled (two-transistor) Schmitt trigger.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EmitterCoupledSchmitt {
    /// Supply VCC, volts.
    pub supply_v: f64,
    /// R1 from Q1's collector to Q2's base, ohms.
    pub r1_ohm: f64,
    /// R2 from Q2's base to 0 V, ohms.
    pub r2_ohm: f64,
    /// Q1 collector resistor RC1 to VCC, ohms.
    pub rc1_ohm: f64,
    /// Q2 collector (output) resistor RC2 to VCC, ohms.
    pub rc2_ohm: f64,
    /// Shared emitter resistor RE to 0 V, ohms.
    pub re_ohm: f64,
    /// Optional load from the output to 0 V, ohms (not part of the BOM).
    #[serde(default)]
    pub load_ohm: Option<f64>,
    /// The matched transistors.
    #[serde(default)]
    pub transistor: Transistor,
    /// Which model sets the thresholds.
    #[serde(default)]
    pub model: BjtModel,
}

/// Node voltages of the pair at one DC solution, volts, and the current the source supplies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BjtNodes {
    /// Input = Q1's base, volts.
    pub vin_v: f64,
    /// Shared emitters, volts.
    pub ve_v: f64,
    /// Q1's collector, volts.
    pub vc1_v: f64,
    /// Q2's base, volts.
    pub vb2_v: f64,
    /// Q2's collector (the output), volts.
    pub vc2_v: f64,
    /// Current into Q1's base from the signal source, amperes.
    pub input_current_a: f64,
}

impl EmitterCoupledSchmitt {
    /// A design with the default transistor and the hand model.
    pub fn new(supply_v: f64, r1_ohm: f64, r2_ohm: f64, rc1_ohm: f64, rc2_ohm: f64, re_ohm: f64) -> Self {
        EmitterCoupledSchmitt {
            supply_v,
            r1_ohm,
            r2_ohm,
            rc1_ohm,
            rc2_ohm,
            re_ohm,
            load_ohm: None,
            transistor: Transistor::default(),
            model: BjtModel::Hand,
        }
    }

    /// K = R2/(RC1 + R1 + R2): the divider from Q1's collector supply to Q2's base.
    fn k(&self) -> f64 {
        self.r2_ohm / (self.rc1_ohm + self.r1_ohm + self.r2_ohm)
    }

    /// RB2 = (RC1 + R1)‖R2: the resistance Q2's base sees with Q1 off.
    fn rb2(&self) -> f64 {
        (self.rc1_ohm + self.r1_ohm) * self.r2_ohm / (self.rc1_ohm + self.r1_ohm + self.r2_ohm)
    }

    /// Thevenin source at the output node with Q2 off: (voltage, resistance).
    fn output_thevenin(&self) -> (f64, f64) {
        match self.load_ohm {
            None => (self.supply_v, self.rc2_ohm),
            Some(rl) => (self.supply_v * rl / (self.rc2_ohm + rl), self.rc2_ohm * rl / (self.rc2_ohm + rl)),
        }
    }

    /// Thevenin source at Q1's collector with no collector current: (voltage, resistance).
    fn c1_thevenin(&self) -> (f64, f64) {
        let rd = self.r1_ohm + self.r2_ohm;
        (self.supply_v * rd / (self.rc1_ohm + rd), self.rc1_ohm * rd / (self.rc1_ohm + rd))
    }

    /// Hand model: Q2's emitter current with the input low, amperes (≤ 0 means Q2 never conducts).
    fn hand_ie2(&self) -> f64 {
        let t = &self.transistor;
        (self.k() * self.supply_v - t.vbe_at_temperature_v()) / (self.re_ohm + self.rb2() / (t.beta_f_at_temperature() + 1.0))
    }

    /// The hand model's active-region Q2 collector and emitter voltages with the input low, when
    /// Q2 would then saturate (VC2 < VE + VCE(sat)); `None` when Q2 stays active or never conducts.
    fn hand_q2_saturates(&self) -> Option<(f64, f64)> {
        let ie2 = self.hand_ie2();
        if ie2 <= 0.0 {
            return None;
        }
        let (vth2, rth2) = self.output_thevenin();
        let vc2 = vth2 - self.transistor.alpha() * ie2 * rth2;
        let ve = self.re_ohm * ie2;
        (vc2 < ve + VCE_SATURATION_V).then_some((vc2, ve))
    }

    /// VT± of the closed-form hand model (DOMAIN §1f), with the regeneration estimate; allocation-free.
    /// Refuses (typed [`DesignError::Inconsistent`]) when Q2 saturates with the input low, where
    /// VT+ = VBE + RE·IE2 no longer holds, and points to the Ebers–Moll model.
    pub fn hand_thresholds(&self) -> Result<Thresholds, DesignError> {
        let t = &self.transistor;
        let k = self.k();
        let vbe = t.vbe_at_temperature_v();
        let vcc = self.supply_v;
        if k * vcc <= vbe {
            return Err(DesignError::NoSwitching {
                reason: format!(
                    "Q2 never conducts: the divider puts its base at K·VCC = {:.4} V, not above VBE = {:.4} V; raise R2 or lower RC1 + R1",
                    k * vcc,
                    vbe
                ),
            });
        }
        let ie2 = self.hand_ie2();
        let alpha = t.alpha();
        if let Some((vc2, ve)) = self.hand_q2_saturates() {
            return Err(DesignError::inconsistent(format!(
                "Q2 saturates with the input low (its collector would sit at {vc2:.3} V, less than {VCE_SATURATION_V} V above the emitters at {ve:.3} V): the hand model's VT+ = VBE + RE·IE2 assumes Q2 active and does not hold; choose the ebers_moll model, which solves saturation, or lower RC2 or the emitter current (raise RE)"
            )));
        }
        let upper = vbe + self.re_ohm * ie2;
        let lower = k * (vcc * self.re_ohm + alpha * self.rc1_ohm * vbe) / (self.re_ohm + alpha * k * self.rc1_ohm);
        // Regeneration (DOMAIN §1f, [D]): loop gain α·K·RC1 against re1 + re2 + RB2/(β+1), re ≈ 2VT/IE.
        let loop_ohm = alpha * k * self.rc1_ohm;
        let loss_ohm = 4.0 * t.thermal_voltage_v() / ie2 + self.rb2() / (t.beta_f_at_temperature() + 1.0);
        if loop_ohm <= loss_ohm || upper <= lower {
            return Err(DesignError::NoSwitching {
                reason: format!(
                    "no hysteresis: the loop gain α·K·RC1 = {loop_ohm:.1} Ω does not exceed re1 + re2 + RB2/(β+1) = {loss_ohm:.1} Ω; raise RC1 or the emitter current"
                ),
            });
        }
        Ok(Thresholds { vt_upper_v: upper, vt_lower_v: lower })
    }

    /// VT± from the Ebers–Moll DC solution: Vin at the two fold points of the transfer curve.
    pub fn ebers_moll_thresholds(&self) -> Result<Thresholds, DesignError> {
        let tr = Em::new(self).trace_memo()?;
        Ok(Thresholds { vt_upper_v: tr.upper.vin, vt_lower_v: tr.lower.vin })
    }

    /// The Ebers–Moll node voltages at the two fold points, [at VT+, at VT−].
    pub fn fold_points(&self) -> Result<[BjtNodes; 2], DesignError> {
        let em = Em::new(self);
        let tr = em.trace_memo()?;
        Ok([em.nodes(&tr.upper.x, tr.upper.vin), em.nodes(&tr.lower.x, tr.lower.vin)])
    }

    /// The S-shaped Ebers–Moll transfer curve (output voltage against input), in order along the
    /// curve, including the unstable middle branch between the folds.
    pub fn ebers_moll_curve(&self) -> Result<Vec<CurvePoint>, DesignError> {
        let mut pts = Vec::new();
        Em::new(self).trace(|_, x, vin| pts.push(CurvePoint { vin_v: vin, vout_v: x[3] }))?;
        Ok(pts)
    }

    /// Node voltages for an input and an output state, in the selected model.
    pub fn nodes(&self, vin_v: f64, state: OutputState) -> Result<BjtNodes, DesignError> {
        match self.model {
            BjtModel::Hand => Ok(self.hand_nodes(vin_v, state)),
            BjtModel::EbersMoll => Em::new(self).nodes_on_branch(vin_v, state),
        }
    }

    /// Piecewise-linear hand model of one state: the conducting transistor is active with VBE fixed,
    /// the other off; Q1 drops to VCE(sat) when the active solution would saturate it; VOL is
    /// clamped at VE + VCE(sat).
    fn hand_nodes(&self, vin_v: f64, state: OutputState) -> BjtNodes {
        let t = &self.transistor;
        let alpha = t.alpha();
        let (vth2, rth2) = self.output_thevenin();
        let (vthc1, rthc1) = self.c1_thevenin();
        match state {
            OutputState::Low => {
                let ie2 = self.hand_ie2().max(0.0);
                let ve = self.re_ohm * ie2;
                let vb2 = if ie2 > 0.0 { ve + t.vbe_at_temperature_v() } else { self.k() * self.supply_v };
                let vc1 = (self.supply_v / self.rc1_ohm + vb2 / self.r1_ohm) / (1.0 / self.rc1_ohm + 1.0 / self.r1_ohm);
                let vc2 = (vth2 - alpha * ie2 * rth2).max(ve + VCE_SATURATION_V).min(vth2);
                BjtNodes { vin_v, ve_v: ve, vc1_v: vc1, vb2_v: vb2, vc2_v: vc2, input_current_a: 0.0 }
            }
            OutputState::High => {
                let ie1 = ((vin_v - t.vbe_at_temperature_v()) / self.re_ohm).max(0.0);
                let ve = self.re_ohm * ie1;
                let mut ic1 = alpha * ie1;
                let mut vc1 = vthc1 - ic1 * rthc1;
                if ie1 > 0.0 && vc1 < ve + VCE_SATURATION_V {
                    vc1 = (ve + VCE_SATURATION_V).min(vthc1);
                    ic1 = (vthc1 - vc1) / rthc1;
                }
                let vb2 = vc1 * self.r2_ohm / (self.r1_ohm + self.r2_ohm);
                BjtNodes { vin_v, ve_v: ve, vc1_v: vc1, vb2_v: vb2, vc2_v: vth2, input_current_a: ie1 - ic1 }
            }
        }
    }

    /// Hand synthesis for any β (DOMAIN §1f, extended to finite β): with RE and Rd = R1 + R2 fixed,
    /// RC1(K) = RE(K·VCC − VT−)/(α·K(VT− − VBE)) from the VT− equation, and K solves
    /// (VT+ − VBE)(RE + K(1−K)(RC1 + Rd)/(β+1)) = RE(K·VCC − VBE) on [VT+/VCC, 1) by bisection
    /// (the left end is the β→∞ answer, where the left side is not below the right; at K = 1 it is).
    fn hand_synthesis(&self, targets: Thresholds, re_ohm: f64, vbe_v: f64) -> Result<Self, DesignError> {
        let (up, lo) = (targets.vt_upper_v, targets.vt_lower_v);
        let vcc = self.supply_v;
        if up <= lo {
            return Err(DesignError::infeasible(
                format!("VT+ ({up:.4} V) must be above VT− ({lo:.4} V)"),
                "swap the targets",
            ));
        }
        if lo <= vbe_v {
            return Err(DesignError::infeasible(
                format!("VT− ({lo:.4} V) must be above the base–emitter voltage ({vbe_v:.4} V): the emitter node cannot go below 0 V"),
                "raise the band, or shift it with an input divider or level shifter in front of Q1",
            ));
        }
        if up >= vcc {
            return Err(DesignError::infeasible(
                format!("VT+ ({up:.4} V) must be below VCC ({vcc:.4} V)"),
                "raise the supply, or scale the input down with a divider in front of Q1",
            ));
        }
        let t = &self.transistor;
        let alpha = t.alpha();
        let bp1 = t.beta_f_at_temperature() + 1.0;
        let rd = self.r1_ohm + self.r2_ohm;
        let rc1_of = |k: f64| re_ohm * (k * vcc - lo) / (alpha * k * (lo - vbe_v));
        let f = |k: f64| (up - vbe_v) * (re_ohm + k * (1.0 - k) * (rc1_of(k) + rd) / bp1) - re_ohm * (k * vcc - vbe_v);
        let mut a = up / vcc;
        let mut b = 1.0;
        if f(a) < 0.0 {
            return Err(DesignError::infeasible("the hand model has no solution for these targets", "move the targets apart or change RE"));
        }
        for _ in 0..200 {
            let m = 0.5 * (a + b);
            if m <= a || m >= b {
                break;
            }
            if f(m) >= 0.0 {
                a = m;
            } else {
                b = m;
            }
        }
        let k = a;
        let rc1 = rc1_of(k);
        let r2 = k * (rc1 + rd);
        let r1 = rd - r2;
        if !(r1 > 0.0 && rc1 > 0.0 && rc1.is_finite()) {
            return Err(DesignError::infeasible(
                format!(
                    "R1 + R2 = {:.0} Ω is too small: these targets need R1 + R2 above K·RC1/(1 − K) = {:.0} Ω",
                    rd,
                    k * rc1 / (1.0 - k)
                ),
                "raise R1 + R2 in the template, or lower RE (the anchor) so RC1 comes out smaller",
            ));
        }
        let mut out = self.clone();
        out.re_ohm = re_ohm;
        out.rc1_ohm = rc1;
        out.r1_ohm = r1;
        out.r2_ohm = r2;
        // RC2 only sets the output low level. When the template's RC2 would saturate Q2 at the new
        // emitter current, lower it so the output low sits midway between the emitters and VCC
        // (common practice: keep the output transistor well out of saturation).
        if out.hand_q2_saturates().is_some() {
            let ie2 = out.hand_ie2();
            let ve = out.re_ohm * ie2;
            out.rc2_ohm = 0.5 * (vcc - ve) / (out.transistor.alpha() * ie2);
        }
        Ok(out)
    }

    /// Refines a design so that the Ebers–Moll thresholds reach the targets: damped Newton on
    /// (ln RC1, logit(R2/(R1+R2))) with a forward-difference Jacobian, at most 40 iterations.
    /// When the start does not latch, RC1 is first raised until the transfer curve folds.
    fn ebers_moll_refine(&self, start: Self, targets: Thresholds) -> Result<Self, DesignError> {
        let rd = start.r1_ohm + start.r2_ohm;
        let build = |p: [f64; 2]| {
            let mut c = start.clone();
            c.rc1_ohm = p[0].exp();
            let frac = 1.0 / (1.0 + (-p[1]).exp());
            c.r2_ohm = rd * frac;
            c.r1_ohm = rd - c.r2_ohm;
            c
        };
        let resid = |p: [f64; 2]| -> Result<[f64; 2], DesignError> {
            let c = build(p);
            if !(c.rc1_ohm.is_finite() && c.rc1_ohm > 0.0 && c.r1_ohm > 0.0 && c.r2_ohm > 0.0) {
                return Err(DesignError::NoSwitching { reason: "resistor out of range".into() });
            }
            let t = c.ebers_moll_thresholds()?;
            Ok([t.vt_upper_v - targets.vt_upper_v, t.vt_lower_v - targets.vt_lower_v])
        };
        let scale = [targets.vt_upper_v.abs().max(1e-3), targets.vt_lower_v.abs().max(1e-3)];
        let norm = |r: &[f64; 2]| (r[0] / scale[0]).abs().max((r[1] / scale[1]).abs());
        let mut p = [start.rc1_ohm.ln(), (start.r2_ohm / start.r1_ohm).ln()];
        // A start that does not latch has no fold to aim with: raise RC1 (more loop gain) with
        // K = R2/(RC1 + R1 + R2) held, so the emitter current stays put, until it does (at most 16
        // steps of ×1.25, while R2 = K·(RC1 + Rd) stays below Rd).
        let k = start.k();
        let mut r = resid(p);
        for _ in 0..16 {
            if !matches!(r, Err(DesignError::NoSwitching { .. })) {
                break;
            }
            let rc1 = p[0].exp() * 1.25;
            let r2 = k * (rc1 + rd);
            if r2 >= 0.999 * rd {
                break;
            }
            p = [rc1.ln(), (r2 / (rd - r2)).ln()];
            r = resid(p);
        }
        let mut r = r?;
        for _ in 0..40 {
            if norm(&r) <= 1e-11 {
                return Ok(build(p));
            }
            let mut jac = [[0.0; 2]; 2];
            for (j, col) in [0usize, 1].iter().enumerate() {
                let h = 1e-6;
                let mut q = p;
                q[*col] += h;
                let rq = match resid(q) {
                    Ok(v) => v,
                    Err(_) => {
                        // Backward difference instead: mirror the point so (rq − r)/h keeps its meaning.
                        q[*col] -= 2.0 * h;
                        let v = resid(q)?;
                        [2.0 * r[0] - v[0], 2.0 * r[1] - v[1]]
                    }
                };
                jac[0][j] = (rq[0] - r[0]) / h;
                jac[1][j] = (rq[1] - r[1]) / h;
            }
            let det = jac[0][0] * jac[1][1] - jac[0][1] * jac[1][0];
            if !(det.is_finite() && det != 0.0) {
                break;
            }
            let mut dp = [-(jac[1][1] * r[0] - jac[0][1] * r[1]) / det, -(-jac[1][0] * r[0] + jac[0][0] * r[1]) / det];
            let big = dp[0].abs().max(dp[1].abs());
            if big > 1.0 {
                dp = [dp[0] / big, dp[1] / big];
            }
            let mut step = 1.0;
            let mut accepted = false;
            for _ in 0..20 {
                let q = [p[0] + step * dp[0], p[1] + step * dp[1]];
                if let Ok(rq) = resid(q) {
                    if norm(&rq) < norm(&r) {
                        p = q;
                        r = rq;
                        accepted = true;
                        break;
                    }
                }
                step *= 0.5;
            }
            if !accepted {
                break;
            }
        }
        if norm(&r) <= 1e-6 {
            return Ok(build(p));
        }
        Err(DesignError::NotConverged {
            reason: format!(
                "the ebers–moll refinement stopped {:.3} mV / {:.3} mV from the targets; move the targets, change RE or R1 + R2 in the template, or synthesise with the hand model",
                r[0] * 1e3,
                r[1] * 1e3
            ),
        })
    }
}

impl Circuit for EmitterCoupledSchmitt {
    fn validate(&self) -> Result<(), DesignError> {
        positive("supply_v", self.supply_v)?;
        crate::topology::resistance("r1_ohm", self.r1_ohm)?;
        crate::topology::resistance("r2_ohm", self.r2_ohm)?;
        crate::topology::resistance("rc1_ohm", self.rc1_ohm)?;
        crate::topology::resistance("rc2_ohm", self.rc2_ohm)?;
        crate::topology::resistance("re_ohm", self.re_ohm)?;
        if let Some(r) = self.load_ohm {
            crate::topology::resistance("load_ohm", r)?;
        }
        self.transistor.validate()?;
        let vbe = self.transistor.vbe_at_temperature_v();
        if vbe >= self.supply_v {
            return Err(DesignError::inconsistent(format!(
                "VBE ({:.3} V at {} K) must be below the supply ({:.3} V)",
                vbe, self.transistor.temperature_k, self.supply_v
            )));
        }
        Ok(())
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        match self.model {
            BjtModel::Hand => self.hand_thresholds(),
            BjtModel::EbersMoll => self.ebers_moll_thresholds(),
        }
    }

    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        match self.model {
            BjtModel::Hand => {
                let low = self.hand_nodes(0.0, OutputState::Low).vc2_v;
                Ok((self.output_thevenin().0, low))
            }
            BjtModel::EbersMoll => {
                let tr = Em::new(self).trace_memo()?;
                Ok((tr.end.x[3], tr.start.x[3]))
            }
        }
    }

    fn sense(&self) -> Sense {
        Sense::NonInverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let n = self.nodes(vin_v, state)?;
        let vcc = self.supply_v;
        let d = |i: usize| format!("R{i}");
        let resistors = vec![
            ResistorDrop { designator: d(1), resistance_ohm: self.r1_ohm, volts: n.vc1_v - n.vb2_v },
            ResistorDrop { designator: d(2), resistance_ohm: self.r2_ohm, volts: n.vb2_v },
            ResistorDrop { designator: d(3), resistance_ohm: self.rc1_ohm, volts: vcc - n.vc1_v },
            ResistorDrop { designator: d(4), resistance_ohm: self.rc2_ohm, volts: vcc - n.vc2_v },
            ResistorDrop { designator: d(5), resistance_ohm: self.re_ohm, volts: n.ve_v },
        ];
        Ok(OperatingPoint {
            resistors,
            input_current_a: n.input_current_a,
            network_current_a: (vcc - n.vc1_v) / self.rc1_ohm + (vcc - n.vc2_v) / self.rc2_ohm,
            device_inputs: vec![NodeVoltage { name: "Q2 base".into(), volts: n.vb2_v }],
        })
    }

    /// The transistor's spread is declared here, so the tolerance studies (worst case, GUM, Monte
    /// Carlo) vary it: βF over its datasheet limits, the junction temperature over its range (IS,
    /// βF and VBE follow through the temperature laws), and the quantity the model uses for the
    /// junction — IS for Ebers–Moll, VBE (±10 % by default) for the hand model. The other one is
    /// stated but not varied. Every corner is a valid device: [`Transistor`]'s validation checks the
    /// limits and the temperature-scaled values.
    fn parameters(&self) -> Vec<Parameter> {
        let t = &self.transistor;
        let [b_lo, b_hi] = t.beta_f_range();
        let [is_lo, is_hi] = t.saturation_current_range_a();
        let (vbe, is) = match self.model {
            BjtModel::Hand => (
                Parameter::quantity("vbe_v", "base–emitter voltage VBE at the nominal temperature (hand model)", t.vbe_v, ParameterKind::DeviceThreshold),
                Parameter::device("saturation_current_a", "saturation current IS (Ebers–Moll model only)", t.saturation_current_a, Unit::Ampere),
            ),
            BjtModel::EbersMoll => (
                Parameter::device("vbe_v", "base–emitter voltage VBE (hand model only)", t.vbe_v, Unit::Volt),
                Parameter::device("saturation_current_a", "saturation current IS at the nominal temperature", t.saturation_current_a, Unit::Ampere)
                    .with_limits(is_lo, is_hi),
            ),
        };
        // With no limits of its own the junction temperature spans the settings' operating range
        // (`tolerance::settings` gives a kelvin device parameter that band).
        let junction = Parameter::device("temperature_k", "junction temperature", t.temperature_k, Unit::Kelvin);
        vec![
            Parameter::resistor("r1_ohm", "R1", "coupling resistor Q1 collector to Q2 base", self.r1_ohm),
            Parameter::resistor("r2_ohm", "R2", "Q2 base resistor to ground", self.r2_ohm),
            Parameter::resistor("rc1_ohm", "R3", "Q1 collector resistor RC1", self.rc1_ohm),
            Parameter::resistor("rc2_ohm", "R4", "Q2 collector (output) resistor RC2", self.rc2_ohm),
            Parameter::resistor("re_ohm", "R5", "shared emitter resistor RE", self.re_ohm),
            Parameter::quantity("supply_v", "supply VCC", self.supply_v, ParameterKind::Supply),
            vbe,
            Parameter::device("beta_f", "forward current gain βF at the nominal temperature", t.beta_f, Unit::Ratio).with_limits(b_lo, b_hi),
            Parameter::device("beta_r", "reverse current gain βR", t.beta_r, Unit::Ratio),
            is,
            match t.temperature_limits_k {
                Some([lo, hi]) => junction.with_limits(lo, hi),
                None => junction,
            },
            // The temperature laws (SPICE's XTI, EG, XTB): entered, never varied by the studies.
            Parameter::device("is_temperature_exponent", "temperature exponent of IS (XTI)", t.is_temperature_exponent, Unit::Ratio),
            Parameter::device("bandgap_v", "bandgap voltage of the IS(T) law (EG)", t.bandgap_v, Unit::Volt),
            Parameter::device("beta_temperature_exponent", "temperature exponent of βF and βR (XTB)", t.beta_temperature_exponent, Unit::Ratio),
        ]
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        expect_len(values, 14)?;
        c.clone_from(self);
        c.r1_ohm = values[0];
        c.r2_ohm = values[1];
        c.rc1_ohm = values[2];
        c.rc2_ohm = values[3];
        c.re_ohm = values[4];
        c.supply_v = values[5];
        c.transistor.vbe_v = values[6];
        c.transistor.beta_f = values[7];
        c.transistor.beta_r = values[8];
        c.transistor.saturation_current_a = values[9];
        c.transistor.temperature_k = values[10];
        c.transistor.is_temperature_exponent = values[11];
        c.transistor.bandgap_v = values[12];
        c.transistor.beta_temperature_exponent = values[13];
        Ok(())
    }

    /// DOMAIN §1f synthesis with RE as the anchor and Rd = R1 + R2 kept from this design. The hand
    /// model is inverted exactly for its finite β (see `hand_synthesis`). The Ebers–Moll model starts
    /// from the hand answer, with VBE estimated at the fold current (VBE ≈ VT·ln(I_f/IS),
    /// I_f ≈ VT/(α·K·RC1), DOMAIN §1f), and refines RC1 and R2/R1 by damped Newton until the fold
    /// points reach the targets (to 1e-11 relative when it converges; accepted down to 1e-6).
    fn synthesise_with_anchor(&self, targets: Thresholds, re_ohm: f64) -> Result<Self, DesignError> {
        self.validate()?;
        crate::error::finite("targets.vt_upper_v", targets.vt_upper_v)?;
        crate::error::finite("targets.vt_lower_v", targets.vt_lower_v)?;
        positive("anchor_ohm", re_ohm)?;
        let no_loop = |e: DesignError| match e {
            DesignError::NoSwitching { reason } => DesignError::infeasible(
                format!("the synthesised circuit would not latch: {reason}"),
                "ask for a wider band (regeneration needs roughly ΔV > 4·VT·(VT− − VBE)/(VT+ − VBE)), or use a comparator topology for a narrow band",
            ),
            other => other,
        };
        match self.model {
            BjtModel::Hand => {
                let d = self.hand_synthesis(targets, re_ohm, self.transistor.vbe_at_temperature_v())?;
                d.hand_thresholds().map_err(no_loop)?;
                Ok(d)
            }
            BjtModel::EbersMoll => {
                let t = &self.transistor;
                let vt = t.thermal_voltage_v();
                let mut vbe = t.vbe_at_temperature_v();
                let mut start = self.hand_synthesis(targets, re_ohm, vbe)?;
                for _ in 0..3 {
                    let i_fold = vt / (t.alpha() * start.k() * start.rc1_ohm);
                    let est = vt * (i_fold / t.saturation_current_at_temperature_a()).ln();
                    if !(est.is_finite() && est > 0.0) || (est - vbe).abs() < 1e-4 {
                        break;
                    }
                    match self.hand_synthesis(targets, re_ohm, est) {
                        Ok(s) => {
                            vbe = est;
                            start = s;
                        }
                        Err(_) => break,
                    }
                }
                self.ebers_moll_refine(start, targets).map_err(no_loop)
            }
        }
    }

    fn anchor_description(&self) -> &'static str {
        "shared emitter resistor RE (R1 + R2 is kept from the design)"
    }

    fn supply_v(&self) -> f64 {
        self.supply_v
    }

    fn with_supply(&self, supply_v: f64) -> Self {
        let mut c = self.clone();
        c.supply_v = supply_v;
        c
    }

    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let Ok(t) = self.thresholds() else { return w };
        let vin_lo = settings.input_min_v.unwrap_or(t.vt_lower_v.min(0.0));
        let q2 = match self.model {
            BjtModel::Hand => {
                // The active-region VOL before the hand model clamps it at VE + VCE(sat).
                let ie2 = self.hand_ie2().max(0.0);
                let (vth2, rth2) = self.output_thevenin();
                Some((vth2 - self.transistor.alpha() * ie2 * rth2, self.re_ohm * ie2))
            }
            BjtModel::EbersMoll => self.nodes(vin_lo, OutputState::Low).ok().map(|n| (n.vc2_v, n.ve_v)),
        };
        if let Some((vc2, ve)) = q2 {
            if vc2 < ve + VCE_SATURATION_V {
                w.push(Warning::new(
                    WarningCode::TransistorRegion,
                    format!(
                        "Q2 saturates with the input low: its collector (output low, {:.3} V) is less than {VCE_SATURATION_V} V above the emitters ({:.3} V), so VT+ and VOL depart from the {} figures; lower RC2 or the emitter current (raise RE)",
                        vc2,
                        ve,
                        if self.model == BjtModel::Hand { "hand-model" } else { "active-region" }
                    ),
                ));
            }
        }
        if let Ok(n) = self.nodes(t.vt_lower_v, OutputState::High) {
            if n.vc1_v < n.vin_v {
                w.push(Warning::new(
                    WarningCode::TransistorRegion,
                    format!(
                        "Q1 leaves the active region at VT−: its collector ({:.3} V) is below its base ({:.3} V), so Q1 saturates and VT− departs from the hand formula; lower RC1, raise R1 + R2, or raise RE",
                        n.vc1_v, n.vin_v
                    ),
                ));
            }
        }
        // Reverse base–emitter breakdown: small-signal NPN parts are commonly rated VEBO ≈ 5 V (common practice).
        if let Some(vmin) = settings.input_min_v {
            if let Ok(n) = self.nodes(vmin, OutputState::Low) {
                let reverse = n.ve_v - vmin;
                if reverse > 5.0 {
                    w.push(Warning::new(
                        WarningCode::TransistorRegion,
                        format!(
                            "at Vin = {vmin:.2} V Q1's base–emitter junction is reverse biased by {reverse:.2} V, beyond the ≈5 V rating typical of small-signal transistors; clamp the input with a diode to ground"
                        ),
                    ));
                }
            }
        }
        w
    }

    fn device_input_range(&self) -> (f64, f64) {
        (0.0, self.supply_v)
    }

    fn negative_rail_v(&self) -> f64 {
        0.0
    }

    fn output_stage(&self) -> OutputStage {
        OutputStage::DiscreteTransistors
    }

    /// Bounds that hold in every state: a transistor's collector current flows through its
    /// collector resistor RC and (with its base current) through RE, so with VCE ≥ 0,
    /// IC ≤ VCC/(RC + RE); VCE ≤ VCC − IC·(RC + RE) gives VCE ≤ VCC and
    /// P = VCE·IC ≤ VCC²/(4(RC + RE)) (the maximum of IC·(VCC − IC·(RC + RE))).
    fn transistor_stress(&self) -> Vec<TransistorStress> {
        let vcc = self.supply_v;
        let q = |designator: &str, rc: f64| {
            let r = rc + self.re_ohm;
            TransistorStress {
                designator: designator.into(),
                vce_max_v: vcc,
                collector_current_max_a: vcc / r,
                dissipation_max_w: vcc * vcc / (4.0 * r),
            }
        };
        vec![q("Q1", self.rc1_ohm), q("Q2", self.rc2_ohm)]
    }

    /// The Ebers–Moll thresholds are not bilinear in any resistor, so the search uses this structure
    /// (the hand model's are, and it keeps the bilinear method):
    /// - **RE** (`re_ohm`): VT+ and VT− are each monotone in it. Hand-model reason: VT+ and VT− are
    ///   Möbius functions of RE (DOMAIN §1f), so monotone. Checked on the Ebers–Moll model by
    ///   sweeping each resistor over E6 1 k–1 M at 400 random designs: no sweep of R1, R2, RC1 or
    ///   RE was non-monotone among the designs that switch (the switching region itself is not an
    ///   interval in RC1 or RE: some sweeps fail, switch, then fail again, so nothing is assumed of it).
    /// - **RC2** (`rc2_ohm`) only loads the output: VT− is set with Q2 barely conducting, its
    ///   collector near VCC, so RC2 does not enter (the same sweeps: VT− equal to the last bit or
    ///   two); raising RC2 drives Q2 towards saturation before the upper fold, which can only
    ///   lower VT+ (the sweeps: non-increasing apart from rounding); and a design that does not
    ///   switch with the smallest RC2 did not switch with any larger one (300 random designs, 147
    ///   of them without a fold at the smallest RC2: none switched at a larger RC2).
    fn monotone_structure(&self) -> Option<MonotoneStructure> {
        (self.model == BjtModel::EbersMoll).then_some(MonotoneStructure { monotone: 4, output_load: 3 })
    }

    /// Ebers–Moll: a traced curve per evaluation, about 0.13 ms natively unloaded and up to
    /// 0.25 ms on a busy machine (measured: `cargo bench -p hysteron-core --bench search`, the
    /// dust-extractor demo); 0.4 ms leaves headroom for wasm. The hand model: the default.
    fn seconds_per_evaluation(&self) -> f64 {
        match self.model {
            BjtModel::EbersMoll => 4e-4,
            BjtModel::Hand => 2e-6,
        }
    }

    fn troubleshooting(&self, _analysis: &Analysis, _checks: &CheckSettings) -> Vec<String> {
        vec![
            "Measure VBE of the conducting transistor (about 0.6–0.7 V): the thresholds move almost one-for-one with it, and with temperature (about −2 mV/K).".into(),
            "With the input low, Q2 conducts: its collector-emitter voltage (OUT minus the shared emitter) must stay above 0.2 V; if it saturates, the low level and the upper threshold move.".into(),
            "No hysteresis at all: the loop gain is too low; check RC1 and the shared emitter resistor values.".into(),
        ]
    }
}

impl Described for EmitterCoupledSchmitt {
    const TITLE: &'static str = "Two-transistor Schmitt (emitter-coupled)";
    const NOTE: &'static str = "From discrete transistors when no comparator is at hand; thresholds from hand analysis or a full Ebers–Moll solution.";
    const TEMPLATE_JSON: &'static str = include_str!("../../catalog/bjt_pair.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    /// DOMAIN §1f's example design (its transistor entered and operating at 300 K).
    fn example(model: BjtModel) -> EmitterCoupledSchmitt {
        let mut c = EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3) };
        c.transistor.temperature_k = 300.0;
        c.transistor.nominal_temperature_k = 300.0;
        c
    }

    #[test]
    fn junction_temperature_follows_the_operating_range() {
        use crate::tolerance::settings::resolve_bands;
        use crate::tolerance::{temperature_sweep, ToleranceSettings};
        let settings = ToleranceSettings { temperature_min_c: -40.0, temperature_max_c: 85.0, ..ToleranceSettings::default() };
        for model in [BjtModel::Hand, BjtModel::EbersMoll] {
            // Entered at 300 K (about 27 °C), not at the sweep's 25 °C.
            let c = example(model);
            // No limits of its own: the junction spans the settings' range (0 °C = 273.15 K, SI).
            let bands = resolve_bands(&c.parameters(), &settings).unwrap();
            let junction = bands.iter().find(|b| b.parameter.id == "temperature_k").unwrap();
            assert!((junction.centre - junction.half_width - 233.15).abs() < 1e-9, "{junction:?}");
            assert!((junction.centre + junction.half_width - 358.15).abs() < 1e-9, "{junction:?}");
            // Limits of its own win.
            let mut own = c.clone();
            own.transistor.temperature_limits_k = Some([290.0, 310.0]);
            let bands = resolve_bands(&own.parameters(), &settings).unwrap();
            let junction = bands.iter().find(|b| b.parameter.id == "temperature_k").unwrap();
            assert!((junction.centre - 300.0).abs() < 1e-9 && (junction.half_width - 10.0).abs() < 1e-9, "{junction:?}");
            // The temperature sweep moves the junction: VT− falls as VBE does (about −2 mV/K, from
            // memory, scaled by the circuit's gain from VBE to VT−, about 0.56 here).
            let sweep = temperature_sweep(&c, &settings).unwrap();
            let drift = sweep.vt_lower_drift_v_per_k.unwrap();
            assert!((-1.3e-3..-0.6e-3).contains(&drift), "{model:?}: VT− drift {drift} V/K");
            // The largest drift from room temperature is of the same order (resistor TCR adds a
            // little), not inflated by a junction entered at another temperature than 25 °C.
            let bound = sweep.vt_lower_drift_bound_v_per_k.unwrap();
            assert!(bound >= drift.abs() && bound < 2.0 * drift.abs(), "{model:?}: bound {bound} V/K vs drift {drift} V/K");
        }
    }

    #[test]
    fn hand_model_reproduces_the_domain_example() {
        // DOMAIN §1f [D]: hand 4.6992 / 2.5154 V.
        let t = example(BjtModel::Hand).thresholds().unwrap();
        assert!((t.vt_upper_v - 4.6992).abs() < 5e-5, "{t:?}");
        assert!((t.vt_lower_v - 2.5154).abs() < 5e-5, "{t:?}");
    }

    #[test]
    fn hand_model_large_beta_limit() {
        // β → ∞: VT+ = K·VCC, VT− = K(VCC·RE + RC1·VBE)/(RE + K·RC1) (DOMAIN §1f).
        let mut c = example(BjtModel::Hand);
        c.transistor.beta_f = 1e12;
        let t = c.thresholds().unwrap();
        let k = 10.0 / 24.7;
        assert!((t.vt_upper_v - 12.0 * k).abs() < 1e-9);
        assert!((t.vt_lower_v - k * (12.0 * 1.5e3 + 4.7e3 * 0.65) / (1.5e3 + k * 4.7e3)).abs() < 1e-9);
    }

    #[test]
    fn ebers_moll_reproduces_the_domain_example() {
        // DOMAIN §1f [D]: Ebers–Moll 4.5403 / 2.5843 V at IS 1e-14 A, βF 100, βR 1 (VT at 300 K).
        let t = example(BjtModel::EbersMoll).thresholds().unwrap();
        assert!((t.vt_upper_v - 4.5403).abs() < 5e-5, "{t:?}");
        assert!((t.vt_lower_v - 2.5843).abs() < 5e-5, "{t:?}");
    }

    #[test]
    fn regeneration_is_lost_near_the_domain_figure() {
        // DOMAIN §1f: hysteresis disappears numerically at RC1 = 165 Ω; the estimate predicts 163 Ω.
        // RC2 1 kΩ for the hand model keeps Q2 active at these emitter currents (with 2.2 kΩ it
        // saturates, which the hand model refuses); the loop gain does not involve RC2.
        for (rc1, hand_ok, em_ok) in [(150.0, false, false), (170.0, true, true)] {
            let mut c = example(BjtModel::Hand);
            c.rc1_ohm = rc1;
            c.rc2_ohm = 1e3;
            assert_eq!(c.thresholds().is_ok(), hand_ok, "hand at {rc1}");
            c.model = BjtModel::EbersMoll;
            assert_eq!(c.thresholds().is_ok(), em_ok, "ebers–moll at {rc1}");
        }
        let mut c = example(BjtModel::EbersMoll);
        c.rc1_ohm = 150.0;
        assert!(matches!(c.thresholds(), Err(DesignError::NoSwitching { .. })));
        c.model = BjtModel::Hand;
        c.rc2_ohm = 1e3;
        assert!(matches!(c.thresholds(), Err(DesignError::NoSwitching { .. })));
    }

    #[test]
    fn hand_synthesis_round_trip() {
        let template = example(BjtModel::Hand);
        for (up, lo) in [(4.6992, 2.5154), (6.0, 4.0), (3.0, 2.7), (6.5, 2.0)] {
            let targets = Targets { vt_upper_v: up, vt_lower_v: lo, impedance: ImpedanceChoice::AnchorOhm(1.2e3) };
            let d = synthesise(&template, &targets).unwrap();
            let t = d.thresholds().unwrap();
            assert!((t.vt_upper_v - up).abs() < 1e-9 * up, "{t:?}");
            assert!((t.vt_lower_v - lo).abs() < 1e-9 * lo, "{t:?}");
            assert_eq!(d.re_ohm, 1.2e3);
            assert!((d.r1_ohm + d.r2_ohm - 20e3).abs() < 1e-6);
            // RC2 is kept unless it would saturate Q2 (the 6 V bands need a smaller one).
            assert_eq!(d.rc2_ohm == template.rc2_ohm, up < 5.0, "{up}: RC2 {}", d.rc2_ohm);
        }
    }

    #[test]
    fn ebers_moll_synthesis_round_trip() {
        let template = example(BjtModel::EbersMoll);
        let targets = Targets { vt_upper_v: 5.0, vt_lower_v: 3.0, impedance: ImpedanceChoice::AnchorOhm(1.5e3) };
        let d = synthesise(&template, &targets).unwrap();
        let t = d.thresholds().unwrap();
        assert!((t.vt_upper_v - 5.0).abs() < 1e-6 * 5.0, "{t:?}");
        assert!((t.vt_lower_v - 3.0).abs() < 1e-6 * 3.0, "{t:?}");
    }

    #[test]
    fn infeasible_targets_are_typed_with_reason_and_suggestion() {
        let template = example(BjtModel::Hand);
        for (up, lo, word) in [(4.0, 0.5, "base–emitter"), (12.5, 5.0, "VCC"), (3.0, 4.0, "above"), (4.0, 3.99, "latch")] {
            match template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: lo }, 1.5e3) {
                Err(DesignError::Infeasible { reason, suggestion }) => {
                    assert!(reason.contains(word), "{reason}");
                    assert!(!suggestion.is_empty());
                }
                other => panic!("{up}/{lo}: {other:?}"),
            }
        }
        // R1 + R2 too small for a band this wide and high.
        let mut small = template.clone();
        small.r1_ohm = 100.0;
        small.r2_ohm = 100.0;
        let e = small.synthesise_with_anchor(Thresholds { vt_upper_v: 9.0, vt_lower_v: 1.0 }, 1.5e3).unwrap_err();
        assert!(matches!(&e, DesignError::Infeasible { reason, .. } if reason.contains("R1 + R2")), "{e:?}");
    }

    #[test]
    fn invalid_inputs_are_typed_errors() {
        let mut c = example(BjtModel::Hand);
        c.re_ohm = 0.0;
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.re_ohm = 1.5e3;
        c.transistor.beta_f = f64::NAN;
        assert!(c.validate().is_err());
        c.transistor.beta_f = 100.0;
        c.transistor.vbe_v = 13.0;
        assert!(matches!(c.validate(), Err(DesignError::Inconsistent { .. })));
    }

    #[test]
    fn parameters_round_trip() {
        let c = EmitterCoupledSchmitt { load_ohm: Some(10e3), ..example(BjtModel::EbersMoll) };
        let p: Vec<f64> = c.parameters().iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&p).unwrap(), c);
        assert!(c.with_parameters(&p[..13]).is_err());
        // XTI, EG and XTB are parameters (edited on the page), read back into the transistor.
        let mut q = p.clone();
        q[11..14].copy_from_slice(&[3.5, 1.12, 1.7]);
        let t = c.with_parameters(&q).unwrap().transistor;
        assert_eq!((t.is_temperature_exponent, t.bandgap_v, t.beta_temperature_exponent), (3.5, 1.12, 1.7));
    }

    #[test]
    fn saturation_and_region_checks() {
        let mut c = example(BjtModel::Hand);
        assert!(!c.checks(&CheckSettings::default()).iter().any(|w| w.code == WarningCode::TransistorRegion));
        c.rc2_ohm = 10e3; // α·IE2·RC2 ≈ 27 V > VCC: Q2 saturates
        // The hand model refuses a saturated Q2 and names the model that solves it.
        match c.thresholds() {
            Err(DesignError::Inconsistent { reason }) => {
                assert!(reason.contains("Q2 saturates") && reason.contains("ebers_moll"), "{reason}")
            }
            other => panic!("{other:?}"),
        }
        c.model = BjtModel::EbersMoll;
        let w = c.checks(&CheckSettings::default());
        assert!(w.iter().any(|w| w.code == WarningCode::TransistorRegion && w.message.contains("Q2 saturates")), "{w:?}");
    }

    #[test]
    fn analysis_runs_in_both_models() {
        for model in [BjtModel::Hand, BjtModel::EbersMoll] {
            let a = analyse(&example(model), &CheckSettings::default()).unwrap();
            assert!(a.hysteresis_v > 1.5 && a.output_high_v > 11.9 && a.output_low_v < 7.0, "{a:?}");
            assert!(a.input_resistance_ohm.is_some());
        }
    }

    #[test]
    fn saturation_current_and_gain_follow_the_spice_temperature_laws() {
        let mut t = Transistor::default();
        assert_eq!(t.saturation_current_at_temperature_a(), 1e-14);
        assert_eq!(t.beta_f_at_temperature(), 100.0);
        assert!((t.vbe_at_temperature_v() - 0.65).abs() < 1e-15);
        t.temperature_k = 350.0;
        // IS(T) = IS0·(T/T0)^XTI·exp[(EG/k)(1/T0 − 1/T)] written out again (SPICE3, from memory).
        let t0 = SPICE_NOMINAL_TEMPERATURE_K;
        let k_ev = 8.617_333_262e-5; // Boltzmann constant in eV/K (CODATA 2018)
        let is = 1e-14 * (350.0 / t0).powi(3) * ((1.11 / k_ev) * (1.0 / t0 - 1.0 / 350.0)).exp();
        assert!((t.saturation_current_at_temperature_a() / is - 1.0).abs() < 1e-9);
        assert!((t.beta_f_at_temperature() - 100.0 * (350.0 / t0).powf(1.5)).abs() < 1e-9);
        // VBE at the same current: slope at T0 is (VBE0 − EG − XTI·VT0)/T0 ≈ −1.8 mV/K, inside the
        // textbook "about −2 mV/K" for silicon (from memory: −1.5 to −2.5 mV/K).
        let mut a = Transistor::default();
        let mut b = a;
        a.temperature_k = t0 - 0.5;
        b.temperature_k = t0 + 0.5;
        let slope = b.vbe_at_temperature_v() - a.vbe_at_temperature_v();
        let expect = (0.65 - 1.11 - 3.0 * BOLTZMANN_OVER_CHARGE_V_PER_K * t0) / t0;
        assert!((slope - expect).abs() < 1e-7, "{slope} vs {expect}");
        assert!((-2.5e-3..=-1.5e-3).contains(&slope), "{slope}");
    }

    #[test]
    fn old_records_enter_is_at_the_junction_temperature() {
        // A record from before the temperature laws: no nominal temperature, IS entered at 300 K.
        let old: Transistor = serde_json::from_str(
            r#"{"vbe_v": 0.65, "beta_f": 100, "beta_r": 1, "saturation_current_a": 1e-14, "temperature_k": 300.0}"#,
        )
        .unwrap();
        assert_eq!(old.nominal_temperature_k, 300.0);
        assert_eq!(old.saturation_current_at_temperature_a(), 1e-14);
        assert_eq!(old.is_temperature_exponent, 3.0);
        // A new one round-trips with every field.
        let t = Transistor { temperature_k: 330.0, temperature_limits_k: Some([250.0, 350.0]), ..Transistor::default() };
        let back: Transistor = serde_json::from_str(&serde_json::to_string(&t).unwrap()).unwrap();
        assert_eq!(back, t);
        let empty: Transistor = serde_json::from_str("{}").unwrap();
        assert_eq!(empty, Transistor::default());
    }

    #[test]
    fn thresholds_fall_with_temperature_in_both_models() {
        for model in [BjtModel::Hand, BjtModel::EbersMoll] {
            let at = |t_k: f64| {
                let mut c = example(model);
                c.transistor.nominal_temperature_k = SPICE_NOMINAL_TEMPERATURE_K;
                c.transistor.temperature_k = t_k;
                c.thresholds().unwrap()
            };
            let (cold, hot) = (at(250.0), at(350.0));
            assert!(hot.vt_lower_v < cold.vt_lower_v - 0.05, "{model:?}: {cold:?} → {hot:?}");
        }
    }

    #[test]
    fn transistor_temperature_values_are_checked() {
        let mut c = example(BjtModel::EbersMoll);
        c.transistor.temperature_k = 900.0;
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { field, .. }) if field == "transistor.temperature_k"));
        c.transistor.temperature_k = 300.0;
        c.transistor.temperature_limits_k = Some([350.0, 250.0]);
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { field, .. }) if field == "transistor.temperature_limits_k"));
        c.transistor.temperature_limits_k = None;
        c.transistor.bandgap_v = 50.0;
        assert!(c.validate().is_err());
        c.transistor.bandgap_v = 1.11;
        c.transistor.beta_f_limits = Some([0.0, 200.0]);
        assert!(c.validate().is_err());
    }

    #[test]
    fn tolerance_studies_vary_the_transistor_and_temperature() {
        use crate::tolerance::{tolerance_report, ToleranceSettings};
        let mut s = ToleranceSettings::default();
        s.monte_carlo.trials = 200;
        for model in [BjtModel::EbersMoll, BjtModel::Hand] {
            let c = example(model);
            let r = tolerance_report(&c, &s).unwrap();
            let varied = |id: &str| r.bands.iter().any(|b| b.parameter.id == id && b.is_varied());
            assert!(varied("beta_f") && varied("temperature_k"), "{model:?}");
            assert_eq!(varied("saturation_current_a"), model == BjtModel::EbersMoll, "{model:?}");
            assert_eq!(varied("vbe_v"), model == BjtModel::Hand, "{model:?}");
            // The temperature term reaches the GUM budget and widens the worst case of VT−.
            let temp = r.gum.sources.iter().position(|x| x.id == "temperature_k").unwrap();
            let u = r.gum.vt_lower.contributions.iter().find(|c| c.source == temp).unwrap().contribution_v.abs();
            assert!(u > 1e-3, "{model:?}: temperature contributes {u} V");
            assert_eq!(r.monte_carlo.rejected_trials, 0, "{model:?}");
        }
    }

    #[test]
    fn monte_carlo_on_the_transistor_level_model_is_bounded_with_a_message() {
        // The reproducer: 10^6 trials on the Ebers–Moll pair ran for 86 s without a word.
        use crate::tolerance::monte_carlo::{MonteCarloRun, MONTE_CARLO_TIME_LIMIT_S};
        use crate::tolerance::ToleranceSettings;
        let mut s = ToleranceSettings::default();
        s.monte_carlo.trials = 1_000_000;
        let em = example(BjtModel::EbersMoll);
        let e = MonteCarloRun::new(&em, &s).expect_err("10^6 Ebers–Moll trials must be refused");
        let text = e.to_string();
        assert!(matches!(e, DesignError::InvalidValue { ref field, .. } if field == "tolerance.monte_carlo.trials"), "{e:?}");
        let allowed = (MONTE_CARLO_TIME_LIMIT_S / em.seconds_per_evaluation()).floor() as u64;
        assert!(text.contains(&format!("at most {allowed}")) && text.contains("hand model"), "{text}");
        // Exactly the allowed number is accepted; the hand model takes the full 10^6.
        s.monte_carlo.trials = allowed;
        assert!(MonteCarloRun::new(&em, &s).is_ok());
        s.monte_carlo.trials = 1_000_000;
        assert!(MonteCarloRun::new(&example(BjtModel::Hand), &s).is_ok());
    }

    #[test]
    fn transistor_stress_bounds_the_operating_points() {
        let c = example(BjtModel::EbersMoll);
        let q = c.transistor_stress();
        assert_eq!(q.len(), 2);
        for (vin, state) in [(0.0, OutputState::Low), (6.0, OutputState::High)] {
            let n = c.nodes(vin, state).unwrap();
            let ic1 = (12.0 - n.vc1_v) / c.rc1_ohm - (n.vc1_v - n.vb2_v) / c.r1_ohm;
            let ic2 = (12.0 - n.vc2_v) / c.rc2_ohm;
            for (qi, ic, vce) in [(&q[0], ic1, n.vc1_v - n.ve_v), (&q[1], ic2, n.vc2_v - n.ve_v)] {
                assert!(ic <= qi.collector_current_max_a && vce <= qi.vce_max_v && ic * vce <= qi.dissipation_max_w, "{qi:?} {ic} {vce}");
            }
        }
        let a = analyse(&c, &CheckSettings::default()).unwrap();
        let b = crate::bom::bom(&c, &a, &CheckSettings::default(), &crate::bom::PartSettings::default()).unwrap();
        let notes = b.device.notes.join(" | ");
        assert!(notes.contains("Q1: VCEO at least 12 V") && notes.contains("Q2: VCEO") && notes.contains("power rating"), "{notes}");
        assert!(!notes.contains("common-mode") && !notes.contains("guaranteed swing"), "{notes}");
    }

    #[test]
    fn spice_model_carries_temperature_laws_and_junction_capacitance() {
        let mut c = example(BjtModel::EbersMoll);
        c.transistor.nominal_temperature_k = SPICE_NOMINAL_TEMPERATURE_K;
        c.transistor.temperature_k = 350.0;
        let deck = crate::spice::to_spice(&crate::topology::Topology::BjtPair(c), "pair").unwrap();
        for item in ["XTI=3 ", "EG=1.11 ", "XTB=1.5 ", "CJE=4.5p ", "CJC=3.6p ", "TF=400p", "TNOM=27 ", ".temp 76.85"] {
            assert!(deck.contains(item), "{item} missing in\n{deck}");
        }
    }

    #[test]
    fn extreme_values_give_errors_not_nan() {
        for (rc1, re, is) in [(1e-3, 1.5e3, 1e-14), (1e9, 1.5e3, 1e-14), (4.7e3, 1e-3, 1e-14), (4.7e3, 1e9, 1e-30), (4.7e3, 1.5e3, 1e-3)] {
            let mut c = example(BjtModel::EbersMoll);
            c.rc1_ohm = rc1;
            c.re_ohm = re;
            c.transistor.saturation_current_a = is;
            match c.thresholds() {
                Ok(t) => assert!(t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite()),
                Err(e) => assert!(matches!(e, DesignError::NoSwitching { .. } | DesignError::NotConverged { .. }), "{e:?}"),
            }
        }
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for EmitterCoupledSchmitt {
    /// Q1 (base = input, collector `c1` through RC1), R1 from `c1` to Q2's base `b2`, R2 from `b2`
    /// to 0 V, Q2 (collector = output through RC2), shared emitter `e` through RE; an optional
    /// external load from the output to 0 V (not a part of the part list).
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{ActiveDevice, NpnModel, ResistorRole, GROUND, INPUT_NET, OUTPUT_NET};
        use super::netlisting::{builder, input_centre_v};
        let mut b = builder("bjt_pair", self);
        let vcc = b.supply(self.supply_v, "VCC");
        b.input(input_centre_v(self, (0.0, self.supply_v)), 0.0, "IN");
        b.part("r1_ohm", "c1", "b2", self.r1_ohm);
        b.part("r2_ohm", "b2", GROUND, self.r2_ohm);
        b.part("rc1_ohm", &vcc, "c1", self.rc1_ohm);
        b.part("rc2_ohm", &vcc, OUTPUT_NET, self.rc2_ohm);
        b.part("re_ohm", "e", GROUND, self.re_ohm);
        if let Some(rl) = self.load_ohm {
            b.resistor("RLOAD".into(), OUTPUT_NET, GROUND, rl, ResistorRole::Load);
        }
        let t = &self.transistor;
        let model = NpnModel {
            saturation_current_a: t.saturation_current_a,
            beta_f: t.beta_f,
            beta_r: t.beta_r,
            temperature_k: t.temperature_k,
            nominal_temperature_k: t.nominal_temperature_k,
            is_temperature_exponent: t.is_temperature_exponent,
            bandgap_v: t.bandgap_v,
            beta_temperature_exponent: t.beta_temperature_exponent,
            emitter_capacitance_f: EMITTER_CAPACITANCE_F,
            collector_capacitance_f: COLLECTOR_CAPACITANCE_F,
            transit_time_s: TRANSIT_TIME_S,
            vbe_v: t.vbe_at_temperature_v(),
        };
        let q = |designator: &str, collector: &str, base: &str| ActiveDevice::Npn {
            designator: designator.into(),
            collector: collector.into(),
            base: base.into(),
            emitter: "e".into(),
            model,
        };
        b.device(q("Q1", "c1", INPUT_NET));
        b.device(q("Q2", OUTPUT_NET, "b2"));
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::bjt_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
