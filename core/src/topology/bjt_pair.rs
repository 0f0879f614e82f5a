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

use super::{expect_len, Circuit, CurvePoint, Parameter, ParameterKind};
use crate::analysis::{
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::error::{positive, DesignError};
use serde::{Deserialize, Serialize};

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

/// The (matched) NPN transistors of the pair.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Transistor {
    /// Base–emitter voltage of a conducting transistor for the hand model, volts.
    pub vbe_v: f64,
    /// Forward current gain βF.
    pub beta_f: f64,
    /// Reverse current gain βR (Ebers–Moll model only).
    pub beta_r: f64,
    /// Transport saturation current IS, amperes (Ebers–Moll model only), at `temperature_k`.
    pub saturation_current_a: f64,
    /// Junction temperature, kelvin; sets the thermal voltage VT = kT/q. IS and VBE are not
    /// rescaled: enter them for the same temperature.
    pub temperature_k: f64,
}

impl Default for Transistor {
    /// VBE 0.65 V, βF 100, βR 1, IS 1e-14 A, 300 K (the values of DOMAIN §1f's example).
    fn default() -> Self {
        Transistor { vbe_v: 0.65, beta_f: 100.0, beta_r: 1.0, saturation_current_a: 1e-14, temperature_k: 300.0 }
    }
}

impl Transistor {
    /// Thermal voltage VT = kT/q, volts.
    pub fn thermal_voltage_v(&self) -> f64 {
        BOLTZMANN_OVER_CHARGE_V_PER_K * self.temperature_k
    }

    /// Common-base current gain α = βF/(βF + 1).
    pub fn alpha(&self) -> f64 {
        self.beta_f / (self.beta_f + 1.0)
    }

    fn validate(&self) -> Result<(), DesignError> {
        positive("transistor.vbe_v", self.vbe_v)?;
        positive("transistor.beta_f", self.beta_f)?;
        positive("transistor.beta_r", self.beta_r)?;
        positive("transistor.saturation_current_a", self.saturation_current_a)?;
        positive("transistor.temperature_k", self.temperature_k)?;
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
        (self.k() * self.supply_v - t.vbe_v) / (self.re_ohm + self.rb2() / (t.beta_f + 1.0))
    }

    /// VT± of the closed-form hand model (DOMAIN §1f), with the regeneration estimate; allocation-free.
    pub fn hand_thresholds(&self) -> Result<Thresholds, DesignError> {
        let t = &self.transistor;
        let k = self.k();
        let vbe = t.vbe_v;
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
        let upper = vbe + self.re_ohm * ie2;
        let lower = k * (vcc * self.re_ohm + alpha * self.rc1_ohm * vbe) / (self.re_ohm + alpha * k * self.rc1_ohm);
        // Regeneration (DOMAIN §1f, [D]): loop gain α·K·RC1 against re1 + re2 + RB2/(β+1), re ≈ 2VT/IE.
        let loop_ohm = alpha * k * self.rc1_ohm;
        let loss_ohm = 4.0 * t.thermal_voltage_v() / ie2 + self.rb2() / (t.beta_f + 1.0);
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
                let vb2 = if ie2 > 0.0 { ve + t.vbe_v } else { self.k() * self.supply_v };
                let vc1 = (self.supply_v / self.rc1_ohm + vb2 / self.r1_ohm) / (1.0 / self.rc1_ohm + 1.0 / self.r1_ohm);
                let vc2 = (vth2 - alpha * ie2 * rth2).max(ve + VCE_SATURATION_V).min(vth2);
                BjtNodes { vin_v, ve_v: ve, vc1_v: vc1, vb2_v: vb2, vc2_v: vc2, input_current_a: 0.0 }
            }
            OutputState::High => {
                let ie1 = ((vin_v - t.vbe_v) / self.re_ohm).max(0.0);
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
        let bp1 = t.beta_f + 1.0;
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

/// One solved point of the traced curve.
#[derive(Debug, Clone, Copy)]
struct CurvePt {
    lam: f64,
    x: [f64; 4],
    vin: f64,
    /// Tangent dx/dλ.
    dx: [f64; 4],
    /// dVin/dλ.
    slope: f64,
}

/// The traced Ebers–Moll curve: its start (input low, Q2 on), folds, and end (past VT+, Q2 off).
#[derive(Debug, Clone, Copy)]
struct Trace {
    start: CurvePt,
    upper: CurvePt,
    lower: CurvePt,
    end: CurvePt,
}

/// How the input is driven in one DC solve: by fixing VBE1 (λ) or Vin.
#[derive(Debug, Clone, Copy)]
enum Drive {
    Lambda(f64),
    Vin(f64),
}

/// exp(x) with its derivative, continued linearly above x = 80 so that no guess can overflow.
fn limexp(x: f64) -> (f64, f64) {
    const XMAX: f64 = 80.0;
    if x > XMAX {
        let e = XMAX.exp();
        (e * (1.0 + x - XMAX), e)
    } else {
        let e = x.exp();
        (e, e)
    }
}

/// Gaussian elimination with partial pivoting on a 4×4 system; `None` when singular.
fn solve4(mut a: [[f64; 4]; 4], mut b: [f64; 4]) -> Option<[f64; 4]> {
    for k in 0..4 {
        let mut p = k;
        for i in k + 1..4 {
            if a[i][k].abs() > a[p][k].abs() {
                p = i;
            }
        }
        let pivot = a[p][k];
        if pivot.is_nan() || pivot.abs() <= 1e-300 || !pivot.is_finite() {
            return None;
        }
        a.swap(k, p);
        b.swap(k, p);
        let row_k = a[k];
        for i in k + 1..4 {
            let f = a[i][k] / row_k[k];
            for (aij, akj) in a[i].iter_mut().zip(row_k.iter()).skip(k) {
                *aij -= f * akj;
            }
            b[i] -= f * b[k];
        }
    }
    let mut x = [0.0; 4];
    for i in (0..4).rev() {
        let mut s = b[i];
        for j in i + 1..4 {
            s -= a[i][j] * x[j];
        }
        x[i] = s / a[i][i];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Ebers–Moll solver for one design (unknowns x = [VE, VC1, VB2, VC2]).
struct Em<'a> {
    c: &'a EmitterCoupledSchmitt,
    /// Supply used by the equations (VCC, or a fraction of it while stepping the supply up).
    vcc: f64,
    vt: f64,
    is: f64,
    bf: f64,
    br: f64,
    g_load: f64,
}

/// Transport-model currents of one transistor and their partial derivatives.
struct Bjt {
    ic: f64,
    ib: f64,
    dic_dvbe: f64,
    dic_dvbc: f64,
    dib_dvbe: f64,
    dib_dvbc: f64,
}

impl<'a> Em<'a> {
    fn new(c: &'a EmitterCoupledSchmitt) -> Self {
        let t = &c.transistor;
        Em {
            c,
            vcc: c.supply_v,
            vt: t.thermal_voltage_v(),
            is: t.saturation_current_a,
            bf: t.beta_f,
            br: t.beta_r,
            g_load: c.load_ohm.map_or(0.0, |r| 1.0 / r),
        }
    }

    /// Ebers & Moll (1954) transport model, from memory; see the module documentation.
    fn bjt(&self, vbe: f64, vbc: f64) -> Bjt {
        let (ef, def) = limexp(vbe / self.vt);
        let (er, der) = limexp(vbc / self.vt);
        let (is, vt) = (self.is, self.vt);
        Bjt {
            ic: is * (ef - er) - is / self.br * (er - 1.0),
            ib: is / self.bf * (ef - 1.0) + is / self.br * (er - 1.0),
            dic_dvbe: is * def / vt,
            dic_dvbc: -is * der / vt * (1.0 + 1.0 / self.br),
            dib_dvbe: is * def / (self.bf * vt),
            dib_dvbc: is * der / (self.br * vt),
        }
    }

    /// Q1's base voltage and its derivative with respect to VE.
    fn base1(x: &[f64; 4], drive: Drive) -> (f64, f64) {
        match drive {
            Drive::Lambda(l) => (x[0] + l, 1.0),
            Drive::Vin(v) => (v, 0.0),
        }
    }

    /// KCL residuals at E, C1, B2, C2, their Jacobian, and ∂F/∂λ (for λ drive).
    fn system(&self, x: &[f64; 4], drive: Drive) -> ([f64; 4], [[f64; 4]; 4], [f64; 4]) {
        let c = self.c;
        let [ve, vc1, vb2, vc2] = *x;
        let (vb1, dvb1) = Self::base1(x, drive);
        let q1 = self.bjt(vb1 - ve, vb1 - vc1);
        let q2 = self.bjt(vb2 - ve, vb2 - vc2);
        let (die1_dvbe, die1_dvbc) = (q1.dic_dvbe + q1.dib_dvbe, q1.dic_dvbc + q1.dib_dvbc);
        let (die2_dvbe, die2_dvbc) = (q2.dic_dvbe + q2.dib_dvbe, q2.dic_dvbc + q2.dib_dvbc);
        // Q1 junction voltages against VE: d vbe1 = dvb1 − 1, d vbc1 = dvb1.
        let (dbe1, dbc1) = (dvb1 - 1.0, dvb1);
        let f = [
            q1.ic + q1.ib + q2.ic + q2.ib - ve / c.re_ohm,
            (self.vcc - vc1) / c.rc1_ohm - q1.ic - (vc1 - vb2) / c.r1_ohm,
            (vc1 - vb2) / c.r1_ohm - vb2 / c.r2_ohm - q2.ib,
            (self.vcc - vc2) / c.rc2_ohm - vc2 * self.g_load - q2.ic,
        ];
        let j = [
            [
                die1_dvbe * dbe1 + die1_dvbc * dbc1 - die2_dvbe - 1.0 / c.re_ohm,
                -die1_dvbc,
                die2_dvbe + die2_dvbc,
                -die2_dvbc,
            ],
            [
                -(q1.dic_dvbe * dbe1 + q1.dic_dvbc * dbc1),
                -1.0 / c.rc1_ohm + q1.dic_dvbc - 1.0 / c.r1_ohm,
                1.0 / c.r1_ohm,
                0.0,
            ],
            [q2.dib_dvbe, 1.0 / c.r1_ohm, -1.0 / c.r1_ohm - 1.0 / c.r2_ohm - q2.dib_dvbe - q2.dib_dvbc, q2.dib_dvbc],
            [q2.dic_dvbe, 0.0, -q2.dic_dvbe - q2.dic_dvbc, -1.0 / c.rc2_ohm - self.g_load + q2.dic_dvbc],
        ];
        let dl = match drive {
            Drive::Lambda(_) => [die1_dvbe + die1_dvbc, -(q1.dic_dvbe + q1.dic_dvbc), 0.0, 0.0],
            Drive::Vin(_) => [0.0; 4],
        };
        (f, j, dl)
    }

    /// Damped Newton: each step is scaled so that no junction voltage moves more than 0.1 V and no
    /// node more than VCC; converged when a full step is below 1e-12·(1 + VCC).
    fn newton(&self, mut x: [f64; 4], drive: Drive, max_iter: usize) -> Result<[f64; 4], DesignError> {
        let tol = 1e-12 * (1.0 + self.vcc.abs());
        let node_limit = self.vcc.abs().max(1.0);
        for _ in 0..max_iter {
            let (f, j, _) = self.system(&x, drive);
            let dx = solve4(j, [-f[0], -f[1], -f[2], -f[3]]).ok_or_else(|| DesignError::NotConverged {
                reason: "the transistor-level solution hit a singular matrix; check for extreme resistor values".into(),
            })?;
            let dvb1 = Self::base1(&x, drive).1;
            let junction = [(dvb1 - 1.0) * dx[0], dvb1 * dx[0] - dx[1], dx[2] - dx[0], dx[2] - dx[3]];
            let jmax = junction.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
            let nmax = dx.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
            let mut s: f64 = 1.0;
            if jmax > 0.1 {
                s = 0.1 / jmax;
            }
            if nmax * s > node_limit {
                s = node_limit / nmax;
            }
            for i in 0..4 {
                x[i] += s * dx[i];
            }
            if !x.iter().all(|v| v.is_finite()) {
                break;
            }
            if s == 1.0 && nmax <= tol {
                return Ok(x);
            }
        }
        Err(DesignError::NotConverged {
            reason: "the transistor-level DC solution did not settle within its iteration budget; check for extreme part values or use the hand model".into(),
        })
    }

    /// The tangent dx/dλ = −J⁻¹·∂F/∂λ at a solved λ point (implicit-function theorem).
    fn tangent(&self, x: &[f64; 4], lam: f64) -> Result<[f64; 4], DesignError> {
        let (_, j, dl) = self.system(x, Drive::Lambda(lam));
        solve4(j, [-dl[0], -dl[1], -dl[2], -dl[3]])
            .ok_or_else(|| DesignError::NotConverged { reason: "singular matrix while tracing the transfer curve".into() })
    }

    /// Solves the circuit at `lam`, predicting the start from `from` along its tangent, and returns
    /// the point with its tangent and slope dVin/dλ = 1 + dVE/dλ. When a direct solve fails the
    /// curve is walked from `from` in shorter λ steps (quartered after a failure, at most 200 solves).
    fn solve_at(&self, lam: f64, from: &CurvePt) -> Result<CurvePt, DesignError> {
        if let Ok(p) = self.solve_direct(lam, from) {
            return Ok(p);
        }
        let mut cur = *from;
        let mut h = 0.25 * (lam - from.lam);
        let mut last = None;
        for _ in 0..200 {
            if cur.lam == lam {
                return Ok(cur);
            }
            let target = if (lam - cur.lam).abs() <= h.abs() { lam } else { cur.lam + h };
            match self.solve_direct(target, &cur) {
                Ok(p) => {
                    cur = p;
                    h *= 2.0;
                }
                Err(e) => {
                    h *= 0.25;
                    last = Some(e);
                    if h.abs() < 1e-12 {
                        break;
                    }
                }
            }
        }
        Err(last.unwrap_or_else(|| DesignError::NotConverged { reason: "the transfer curve could not be followed".into() }))
    }

    fn solve_direct(&self, lam: f64, from: &CurvePt) -> Result<CurvePt, DesignError> {
        let d = lam - from.lam;
        let pred = [
            from.x[0] + d * from.dx[0],
            from.x[1] + d * from.dx[1],
            from.x[2] + d * from.dx[2],
            from.x[3] + d * from.dx[3],
        ];
        let x = match self.newton(pred, Drive::Lambda(lam), 40) {
            Ok(x) => x,
            Err(_) => self.newton(from.x, Drive::Lambda(lam), 60)?,
        };
        self.point(lam, x)
    }

    fn point(&self, lam: f64, x: [f64; 4]) -> Result<CurvePt, DesignError> {
        let dx = self.tangent(&x, lam)?;
        Ok(CurvePt { lam, x, vin: x[0] + lam, dx, slope: 1.0 + dx[0] })
    }

    /// A starting guess from the hand model with Q2 on (Q1 off), at supply `vcc`.
    fn guess_q2_on(&self, vcc: f64) -> [f64; 4] {
        let c = EmitterCoupledSchmitt { supply_v: vcc, ..self.c.clone() };
        let h = c.hand_nodes(0.0, OutputState::Low);
        [h.ve_v, h.vc1_v, h.vb2_v, h.vc2_v.max(h.ve_v + 0.3).min(vcc)]
    }

    /// The first solution at `lam`: Newton from the hand-model guess, or, when that fails, supply
    /// stepping (a standard DC-convergence aid): solve at a small fraction of VCC, then raise the
    /// supply to VCC in steps that double after a success and shrink after a failure (≤ 200 solves).
    fn first_solution(&self, lam: f64) -> Result<[f64; 4], DesignError> {
        let direct = self.newton(self.guess_q2_on(self.vcc), Drive::Lambda(lam), 400);
        if direct.is_ok() {
            return direct;
        }
        let full = self.vcc;
        let mut frac = 0.02;
        let stepped = Em { vcc: full * frac, ..*self };
        let mut x = stepped.newton(stepped.guess_q2_on(full * frac), Drive::Lambda(lam), 400)?;
        let mut step = 0.02;
        for _ in 0..200 {
            if frac >= 1.0 {
                return Ok(x);
            }
            let next = (frac + step).min(1.0);
            let e = Em { vcc: full * next, ..*self };
            match e.newton(x, Drive::Lambda(lam), 60) {
                Ok(nx) => {
                    x = nx;
                    frac = next;
                    step *= 2.0;
                }
                Err(_) => {
                    step *= 0.25;
                    if step < 1e-7 {
                        break;
                    }
                }
            }
        }
        direct
    }

    /// [`Em::trace`] without a visitor, remembering the last design traced on this thread: one
    /// analysis asks for the same curve some twenty times (operating points, levels, checks). The
    /// result is identical to tracing again; the memo only saves time.
    fn trace_memo(&self) -> Result<Trace, DesignError> {
        thread_local! {
            static LAST: std::cell::RefCell<Option<(EmitterCoupledSchmitt, Result<Trace, DesignError>)>> =
                const { std::cell::RefCell::new(None) };
        }
        if let Some(hit) = LAST.with(|l| l.borrow().as_ref().filter(|(c, _)| c == self.c).map(|(_, t)| t.clone())) {
            return hit;
        }
        let t = self.trace(|_, _, _| {});
        LAST.with(|l| *l.borrow_mut() = Some((self.c.clone(), t.clone())));
        t
    }

    /// Traces Vin(λ) from Q1 off to one hysteresis width past VT+ (or VCC), calling `visit(λ, x, vin)` at each accepted point.
    fn trace(&self, mut visit: impl FnMut(f64, &[f64; 4], f64)) -> Result<Trace, DesignError> {
        const MAX_STEPS: usize = 20_000;
        let c = self.c;
        let vt = self.vt;
        let h_nominal = vt / 6.0;
        // Start where Q1 carries a thousandth of the current expected at the fold,
        // I_f ≈ VT/(K·RC1) (DOMAIN §1f), and no more than a thousandth of VCC/RE.
        let i_fold = (vt / (c.k() * c.rc1_ohm)).min(c.supply_v / c.re_ohm);
        let mut lam = vt * (1e-3 * i_fold / self.is).max(1e-300).ln();
        let mut start = self.point(lam, self.first_solution(lam)?)?;
        let mut backs = 0;
        while start.slope <= 0.0 && backs < 20 {
            lam -= 10.0 * vt;
            start = self.point(lam, self.newton(start.x, Drive::Lambda(lam), 400)?)?;
            backs += 1;
        }
        if start.slope <= 0.0 {
            return Err(DesignError::NotConverged { reason: "could not find the input-low end of the transfer curve".into() });
        }
        visit(start.lam, &start.x, start.vin);
        let lam_max = lam + 4.0;
        let mut prev = start;
        let mut upper: Option<CurvePt> = None;
        let mut lower: Option<CurvePt> = None;
        let mut h = h_nominal;
        for _ in 0..MAX_STEPS {
            let pt = match self.solve_direct(prev.lam + h, &prev) {
                Ok(p) => p,
                Err(e) => {
                    h *= 0.25;
                    if h < h_nominal * 1e-6 {
                        return Err(e);
                    }
                    continue;
                }
            };
            visit(pt.lam, &pt.x, pt.vin);
            if upper.is_none() && pt.slope <= 0.0 {
                upper = Some(self.refine_fold(prev, pt)?);
            } else if upper.is_some() && lower.is_none() && pt.slope >= 0.0 && prev.slope <= 0.0 {
                lower = Some(self.refine_fold(prev, pt)?);
            }
            prev = pt;
            h = (h * 2.0).min(h_nominal);
            match (upper, lower) {
                (None, _) if pt.vin > c.supply_v => {
                    return Err(DesignError::NoSwitching {
                        reason: "the transfer curve has no fold before the input reaches VCC: no hysteresis; raise RC1 (more loop gain) or the emitter current".into(),
                    })
                }
                // Stop one hysteresis width past VT+ (Q2 is then firmly off), or at VCC if sooner.
                (Some(up), Some(lo)) if pt.vin >= (2.0 * up.vin - lo.vin).min(c.supply_v.max(up.vin)) => {
                    return Ok(Trace { start, upper: up, lower: lo, end: pt });
                }
                _ => {}
            }
            if pt.lam > lam_max {
                break;
            }
        }
        Err(match upper {
            None => DesignError::NoSwitching { reason: "the transfer curve has no fold: no hysteresis".into() },
            Some(_) => DesignError::NotConverged { reason: "the lower fold of the transfer curve was not found within the traced range".into() },
        })
    }

    /// Illinois false position on λ for a root of `f(point)` between two points whose values
    /// differ in sign; at most 60 solves. Returns the final bracket.
    fn bracket_root(&self, a: CurvePt, b: CurvePt, f: impl Fn(&CurvePt) -> f64) -> Result<(CurvePt, CurvePt), DesignError> {
        let (mut a, mut b) = (a, b);
        let (mut fa, mut fb) = (f(&a), f(&b));
        let mut side = 0i8;
        for _ in 0..60 {
            if fa == 0.0 || fb == 0.0 || (b.lam - a.lam).abs() <= 1e-15 * (1.0 + a.lam.abs()) {
                break;
            }
            let mut m = (a.lam * fb - b.lam * fa) / (fb - fa);
            if !(m > a.lam.min(b.lam) && m < a.lam.max(b.lam)) {
                m = 0.5 * (a.lam + b.lam);
            }
            let from = if (m - a.lam).abs() <= (b.lam - m).abs() { a } else { b };
            let pm = self.solve_at(m, &from)?;
            let fm = f(&pm);
            if (fm > 0.0) == (fa > 0.0) {
                a = pm;
                fa = fm;
                if side == -1 {
                    fb *= 0.5;
                }
                side = -1;
            } else {
                b = pm;
                fb = fm;
                if side == 1 {
                    fa *= 0.5;
                }
                side = 1;
            }
        }
        Ok((a, b))
    }

    /// Locates a fold (dVin/dλ = 0) between two curve points whose slopes differ in sign.
    fn refine_fold(&self, a: CurvePt, b: CurvePt) -> Result<CurvePt, DesignError> {
        let rising_first = a.slope > 0.0;
        let (a, b) = self.bracket_root(a, b, |p| p.slope)?;
        // Vin is stationary at the fold: take the more extreme of the bracket ends.
        Ok(if rising_first == (a.vin >= b.vin) { a } else { b })
    }

    /// The solution on the branch of `state` for input `vin` (the fold point when that state ends
    /// before `vin`: a state does not exist beyond its fold).
    fn nodes_on_branch(&self, vin: f64, state: OutputState) -> Result<BjtNodes, DesignError> {
        let tr = self.trace_memo()?;
        let (lo_pt, hi_pt) = match state {
            OutputState::Low => {
                if vin >= tr.upper.vin {
                    return Ok(self.nodes(&tr.upper.x, tr.upper.vin));
                }
                if vin <= tr.start.vin {
                    let x = self.continue_vin(tr.start.x, tr.start.vin, vin)?;
                    return Ok(self.nodes(&x, vin));
                }
                (tr.start, tr.upper)
            }
            OutputState::High => {
                if vin <= tr.lower.vin {
                    return Ok(self.nodes(&tr.lower.x, tr.lower.vin));
                }
                if vin >= tr.end.vin {
                    let x = self.continue_vin(tr.end.x, tr.end.vin, vin)?;
                    return Ok(self.nodes(&x, vin));
                }
                (tr.lower, tr.end)
            }
        };
        // Vin(λ) rises along both stable branches: Newton on λ with the known slope dVin/dλ,
        // kept inside the bracket (bisection when a step leaves it); at most 80 solves.
        let (mut a, mut b) = (lo_pt, hi_pt);
        let mut cur = if (vin - a.vin).abs() <= (b.vin - vin).abs() { a } else { b };
        for _ in 0..80 {
            let err = cur.vin - vin;
            if err.abs() <= 1e-12 * (1.0 + vin.abs()) || b.lam - a.lam <= 1e-15 * (1.0 + a.lam.abs()) {
                break;
            }
            let mut m = if cur.slope > 0.0 { cur.lam - err / cur.slope } else { f64::NAN };
            if !(m > a.lam && m < b.lam) {
                m = 0.5 * (a.lam + b.lam);
            }
            let from = if (m - cur.lam).abs() <= (m - a.lam).abs().min((b.lam - m).abs()) {
                cur
            } else if m - a.lam <= b.lam - m {
                a
            } else {
                b
            };
            cur = self.solve_at(m, &from)?;
            if cur.vin < vin {
                a = cur;
            } else {
                b = cur;
            }
        }
        Ok(self.nodes(&cur.x, cur.vin))
    }

    /// Walks a stable branch at fixed input from a solution at `from_vin` to `vin` in steps of at
    /// most 0.5 V (quartered after a failed solve, doubled after a good one); at most 400 solves.
    fn continue_vin(&self, from_x: [f64; 4], from_vin: f64, vin: f64) -> Result<[f64; 4], DesignError> {
        let (mut x, mut v) = (from_x, from_vin);
        let mut step: f64 = 0.5;
        for _ in 0..400 {
            if v == vin {
                return Ok(x);
            }
            let target = if (vin - v).abs() <= step { vin } else { v + step.copysign(vin - v) };
            match self.newton(x, Drive::Vin(target), 60) {
                Ok(nx) => {
                    x = nx;
                    v = target;
                    step = (step * 2.0).min(0.5);
                }
                Err(e) => {
                    step *= 0.25;
                    if step < 1e-9 {
                        return Err(e);
                    }
                }
            }
        }
        Err(DesignError::NotConverged { reason: "the transistor-level solution could not follow the input to the requested voltage".into() })
    }

    fn nodes(&self, x: &[f64; 4], vin: f64) -> BjtNodes {
        let q1 = self.bjt(vin - x[0], vin - x[1]);
        BjtNodes { vin_v: vin, ve_v: x[0], vc1_v: x[1], vb2_v: x[2], vc2_v: x[3], input_current_a: q1.ib }
    }
}

impl Circuit for EmitterCoupledSchmitt {
    fn validate(&self) -> Result<(), DesignError> {
        positive("supply_v", self.supply_v)?;
        positive("r1_ohm", self.r1_ohm)?;
        positive("r2_ohm", self.r2_ohm)?;
        positive("rc1_ohm", self.rc1_ohm)?;
        positive("rc2_ohm", self.rc2_ohm)?;
        positive("re_ohm", self.re_ohm)?;
        if let Some(r) = self.load_ohm {
            positive("load_ohm", r)?;
        }
        self.transistor.validate()?;
        if self.transistor.vbe_v >= self.supply_v {
            return Err(DesignError::inconsistent(format!(
                "VBE ({:.3} V) must be below the supply ({:.3} V)",
                self.transistor.vbe_v, self.supply_v
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

    fn parameters(&self) -> Vec<Parameter> {
        let t = &self.transistor;
        vec![
            Parameter::resistor("r1_ohm", "R1", "coupling resistor Q1 collector to Q2 base", self.r1_ohm),
            Parameter::resistor("r2_ohm", "R2", "Q2 base resistor to ground", self.r2_ohm),
            Parameter::resistor("rc1_ohm", "R3", "Q1 collector resistor RC1", self.rc1_ohm),
            Parameter::resistor("rc2_ohm", "R4", "Q2 collector (output) resistor RC2", self.rc2_ohm),
            Parameter::resistor("re_ohm", "R5", "shared emitter resistor RE", self.re_ohm),
            Parameter::quantity("supply_v", "supply VCC", self.supply_v, ParameterKind::Supply),
            Parameter::quantity("vbe_v", "base–emitter voltage VBE (hand model)", t.vbe_v, ParameterKind::DeviceThreshold),
            Parameter::quantity("beta_f", "forward current gain βF", t.beta_f, ParameterKind::Device),
            Parameter::quantity("beta_r", "reverse current gain βR", t.beta_r, ParameterKind::Device),
            Parameter::quantity("saturation_current_a", "saturation current IS", t.saturation_current_a, ParameterKind::Device),
            Parameter::quantity("temperature_k", "junction temperature", t.temperature_k, ParameterKind::Device),
        ]
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        expect_len(values, 11)?;
        let mut c = self.clone();
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
        Ok(c)
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
                let d = self.hand_synthesis(targets, re_ohm, self.transistor.vbe_v)?;
                d.hand_thresholds().map_err(no_loop)?;
                Ok(d)
            }
            BjtModel::EbersMoll => {
                let t = &self.transistor;
                let vt = t.thermal_voltage_v();
                let mut vbe = t.vbe_v;
                let mut start = self.hand_synthesis(targets, re_ohm, vbe)?;
                for _ in 0..3 {
                    let i_fold = vt / (t.alpha() * start.k() * start.rc1_ohm);
                    let est = vt * (i_fold / t.saturation_current_a).ln();
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
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    /// DOMAIN §1f's example design.
    fn example(model: BjtModel) -> EmitterCoupledSchmitt {
        EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3) }
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
        for (rc1, hand_ok, em_ok) in [(150.0, false, false), (170.0, true, true)] {
            let mut c = example(BjtModel::Hand);
            c.rc1_ohm = rc1;
            assert_eq!(c.thresholds().is_ok(), hand_ok, "hand at {rc1}");
            c.model = BjtModel::EbersMoll;
            assert_eq!(c.thresholds().is_ok(), em_ok, "ebers–moll at {rc1}");
        }
        let mut c = example(BjtModel::EbersMoll);
        c.rc1_ohm = 150.0;
        assert!(matches!(c.thresholds(), Err(DesignError::NoSwitching { .. })));
        c.model = BjtModel::Hand;
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
        assert!(c.with_parameters(&p[..10]).is_err());
    }

    #[test]
    fn saturation_and_region_checks() {
        let mut c = example(BjtModel::Hand);
        assert!(!c.checks(&CheckSettings::default()).iter().any(|w| w.code == WarningCode::TransistorRegion));
        c.rc2_ohm = 10e3; // α·IE2·RC2 ≈ 27 V > VCC: Q2 saturates
        let w = c.checks(&CheckSettings::default());
        assert!(w.iter().any(|w| w.code == WarningCode::TransistorRegion && w.message.contains("Q2 saturates")), "{w:?}");
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
            vbe_v: t.vbe_v,
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
