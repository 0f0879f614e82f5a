//! Reference checks for the CMOS-buffer Schmitt (`cmos_buffer`), the Schmitt-input gate with an input
//! network (`schmitt_gate`) and the emitter-coupled transistor pair (`bjt_pair`):
//! (a) published formulas, (b) independent nodal solutions built here with nalgebra (and, for the
//! transistor pair, an independent Ebers–Moll solver and a brute-force input sweep),
//! (c) property tests of synthesis, and the example design records under tests/fixtures/records.
//!
//! All citations are from memory; values tagged [D] in shared/DOMAIN.md are ours and are not used as
//! outside sources here.

use hysteron_core::analysis::{ImpedanceChoice, OutputState, Targets, Thresholds};
use hysteron_core::error::DesignError;
use hysteron_core::evaluate::evaluate;
use hysteron_core::record::DesignRecord;
use hysteron_core::rng::Rng;
use hysteron_core::topology::bjt_pair::{BjtModel, EmitterCoupledSchmitt, Transistor};
use hysteron_core::topology::cmos_buffer::{BiasRail, CmosBufferSchmitt, CmosGate, GateLevel};
use hysteron_core::topology::schmitt_gate::{DatasheetRange, SchmittGate, SchmittInput};
use hysteron_core::topology::{synthesise, Circuit};
use nalgebra::{DMatrix, DVector, Matrix4, Vector4};
use proptest::prelude::*;

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

/// Log-uniform draw in [lo, hi].
fn log_uniform(rng: &mut Rng, lo: f64, hi: f64) -> f64 {
    lo * (hi / lo).powf(rng.uniform())
}

fn uniform(rng: &mut Rng, lo: f64, hi: f64) -> f64 {
    lo + (hi - lo) * rng.uniform()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-3)
}

/// Modified nodal analysis of a resistor network with ideal voltage sources (Vlach & Singhal,
/// *Computer Methods for Circuit Analysis and Design*, MNA formulation, from memory).
/// Nodes are numbered 1..=n (0 is ground); returns the node voltages.
fn mna(n: usize, resistors: &[(usize, usize, f64)], sources: &[(usize, f64)]) -> DVector<f64> {
    let m = sources.len();
    let mut a = DMatrix::<f64>::zeros(n + m, n + m);
    let mut z = DVector::<f64>::zeros(n + m);
    for &(p, q, r) in resistors {
        let g = 1.0 / r;
        if p > 0 {
            a[(p - 1, p - 1)] += g;
        }
        if q > 0 {
            a[(q - 1, q - 1)] += g;
        }
        if p > 0 && q > 0 {
            a[(p - 1, q - 1)] -= g;
            a[(q - 1, p - 1)] -= g;
        }
    }
    for (k, &(node, volts)) in sources.iter().enumerate() {
        a[(node - 1, n + k)] = 1.0;
        a[(n + k, node - 1)] = 1.0;
        z[n + k] = volts;
    }
    let x = a.lu().solve(&z).expect("nonsingular network");
    x.rows(0, n).into_owned()
}

/// Input voltage at which node `x_node` (a linear function of the input) reaches `target`:
/// solve the network at Vin = 0 and Vin = 1 and interpolate.
fn input_for_node_level(solve: impl Fn(f64) -> f64, target: f64) -> f64 {
    let x0 = solve(0.0);
    let x1 = solve(1.0);
    (target - x0) / (x1 - x0)
}

// ---------------------------------------------------------------------------------------------
// (a) Published formulas
// ---------------------------------------------------------------------------------------------

/// Non-inverting bistable circuit (Sedra & Smith, *Microelectronic Circuits*, bistable-multivibrator
/// section, from memory): with the reference at 0 V, VTL = −L+·R1/R2 and VTH = −L−·R1/R2. The CMOS
/// buffer is that circuit with its reference at the gate's switching point VM, so in a frame shifted
/// by VM: VT+ = VM − (VOL − VM)·R1/R2, VT− = VM − (VOH − VM)·R1/R2.
#[test]
fn cmos_buffer_matches_the_noninverting_bistable_formula() {
    let mut rng = Rng::new(0xC305);
    for _ in 0..200 {
        let vdd = uniform(&mut rng, 1.8, 15.0);
        let gate = CmosGate {
            supply_v: vdd,
            switching_point: GateLevel::Fraction(uniform(&mut rng, 0.35, 0.65)),
            output_high_drop_v: uniform(&mut rng, 0.0, 0.1 * vdd),
            output_low_v: uniform(&mut rng, 0.0, 0.1 * vdd),
            ..CmosGate::default()
        };
        let (r1, r2) = (log_uniform(&mut rng, 1e3, 1e6), log_uniform(&mut rng, 1e3, 1e7));
        let c = CmosBufferSchmitt::new(r1, r2, gate);
        let t = c.thresholds().unwrap();
        let vm = gate.switching_point_v();
        let (l_plus, l_minus) = (gate.output_high_v() - vm, gate.output_low_v - vm);
        assert!(close(t.vt_upper_v, vm - l_minus * r1 / r2, 1e-12));
        assert!(close(t.vt_lower_v, vm - l_plus * r1 / r2, 1e-12));
    }
}

/// Unloaded voltage divider and Millman's theorem (Horowitz & Hill, *The Art of Electronics*,
/// ch. 1, from memory): with Rb only, Vx = Vin·Rb/(Ra+Rb), so the input threshold is
/// VTgate·(Ra+Rb)/Rb; with Rc only, X divides between Vin and VDD: Vx = (Vin·Rc + VDD·Ra)/(Ra+Rc).
#[test]
fn schmitt_gate_matches_the_divider_formulas() {
    let mut rng = Rng::new(0x5C41);
    for _ in 0..200 {
        let gate = SchmittInput {
            supply_v: uniform(&mut rng, 2.0, 6.0),
            vt_upper: DatasheetRange { min_v: 0.0, typ_v: 0.0, max_v: 0.0 },
            vt_lower: DatasheetRange { min_v: 0.0, typ_v: 0.0, max_v: 0.0 },
            ..SchmittInput::default()
        };
        let vdd = gate.supply_v;
        let (lo, hi) = (uniform(&mut rng, 0.2, 0.45) * vdd, uniform(&mut rng, 0.5, 0.8) * vdd);
        let gate = SchmittInput {
            vt_upper: DatasheetRange { min_v: hi, typ_v: hi, max_v: hi },
            vt_lower: DatasheetRange { min_v: lo, typ_v: lo, max_v: lo },
            ..gate
        };
        let (ra, rb, rc) = (log_uniform(&mut rng, 1e3, 1e6), log_uniform(&mut rng, 1e3, 1e6), log_uniform(&mut rng, 1e3, 1e6));
        let only_b = SchmittGate { ra_ohm: Some(ra), rb_ohm: Some(rb), ..SchmittGate::bare(gate) };
        let t = only_b.thresholds().unwrap();
        assert!(close(t.vt_upper_v, hi * (ra + rb) / rb, 1e-12));
        assert!(close(t.vt_lower_v, lo * (ra + rb) / rb, 1e-12));
        let only_c = SchmittGate { ra_ohm: Some(ra), rc_ohm: Some(rc), ..SchmittGate::bare(gate) };
        let t = only_c.thresholds().unwrap();
        // Solve Vx = (Vin·Rc + VDD·Ra)/(Ra+Rc) for Vin.
        assert!(close(t.vt_upper_v, (hi * (ra + rc) - vdd * ra) / rc, 1e-12));
        assert!(close(t.vt_lower_v, (lo * (ra + rc) - vdd * ra) / rc, 1e-12));
    }
}

/// Emitter-coupled binary, β → ∞ (Millman & Taub, *Pulse, Digital and Switching Waveforms*,
/// Schmitt-trigger section, from memory): the upper threshold is the divider voltage at Q2's base
/// with Q1 off, VT+ = VCC·R2/(RC1+R1+R2), and the lower threshold follows from Q1 conducting
/// IC1 = (VT− − VBE)/RE while Q2's base sits at VBE above the emitters:
/// VT− = K(VCC·RE + RC1·VBE)/(RE + K·RC1).
#[test]
fn bjt_pair_hand_model_matches_the_infinite_beta_formulas() {
    let mut rng = Rng::new(0xB17);
    let mut checked = 0;
    for _ in 0..400 {
        let mut c = EmitterCoupledSchmitt::new(
            uniform(&mut rng, 5.0, 30.0),
            log_uniform(&mut rng, 1e3, 1e5),
            log_uniform(&mut rng, 1e3, 1e5),
            log_uniform(&mut rng, 1e3, 1e5),
            log_uniform(&mut rng, 1e3, 1e5),
            log_uniform(&mut rng, 1e2, 1e4),
        );
        c.transistor.beta_f = 1e13;
        let Ok(t) = c.thresholds() else { continue };
        let k = c.r2_ohm / (c.rc1_ohm + c.r1_ohm + c.r2_ohm);
        let vbe = c.transistor.vbe_v;
        assert!(close(t.vt_upper_v, c.supply_v * k, 1e-9), "{t:?}");
        let lower = k * (c.supply_v * c.re_ohm + c.rc1_ohm * vbe) / (c.re_ohm + k * c.rc1_ohm);
        assert!(close(t.vt_lower_v, lower, 1e-9), "{t:?}");
        checked += 1;
    }
    assert!(checked > 100, "too few switching designs drawn ({checked})");
}

// ---------------------------------------------------------------------------------------------
// (b) Independent nodal solutions
// ---------------------------------------------------------------------------------------------

fn random_cmos(rng: &mut Rng) -> CmosBufferSchmitt {
    let vdd = uniform(rng, 1.8, 15.0);
    let gate = CmosGate {
        supply_v: vdd,
        switching_point: GateLevel::Volts(uniform(rng, 0.35, 0.65) * vdd),
        output_high_drop_v: uniform(rng, 0.0, 0.1 * vdd),
        output_low_v: uniform(rng, 0.0, 0.1 * vdd),
        ..CmosGate::default()
    };
    let r3 = (rng.uniform() < 0.7).then(|| log_uniform(rng, 1e3, 1e7));
    let rail = if rng.uniform() < 0.5 { BiasRail::Ground } else { BiasRail::Supply };
    CmosBufferSchmitt { r3_ohm: r3, r3_rail: rail, ..CmosBufferSchmitt::new(log_uniform(rng, 1e3, 1e6), log_uniform(rng, 1e3, 1e7), gate) }
}

/// Node X of the CMOS buffer network by MNA: nodes 1 = input, 2 = X, 3 = output, 4 = bias rail.
fn cmos_node_x(c: &CmosBufferSchmitt, vin: f64, vout: f64) -> f64 {
    let vb = match c.r3_rail {
        BiasRail::Ground => 0.0,
        BiasRail::Supply => c.gate.supply_v,
    };
    let mut rs = vec![(1, 2, c.r1_ohm), (2, 3, c.r2_ohm)];
    if let Some(r3) = c.r3_ohm {
        rs.push((2, 4, r3));
    }
    mna(4, &rs, &[(1, vin), (3, vout), (4, vb)])[1]
}

#[test]
fn cmos_buffer_agrees_with_an_independent_nodal_solution() {
    let mut rng = Rng::new(0xC3C3);
    for _ in 0..300 {
        let c = random_cmos(&mut rng);
        c.validate().unwrap();
        let t = c.thresholds().unwrap();
        let vm = c.gate.switching_point_v();
        let (voh, vol) = (c.gate.output_high_v(), c.gate.output_low_v);
        // Rising input: output low until X reaches VM; falling: output high.
        let up = input_for_node_level(|v| cmos_node_x(&c, v, vol), vm);
        let lo = input_for_node_level(|v| cmos_node_x(&c, v, voh), vm);
        assert!(close(t.vt_upper_v, up, 1e-9), "{} vs {up}", t.vt_upper_v);
        assert!(close(t.vt_lower_v, lo, 1e-9), "{} vs {lo}", t.vt_lower_v);
        // The operating point reports the same node X.
        let vin = uniform(&mut rng, -1.0, c.gate.supply_v + 1.0);
        for (state, vo) in [(OutputState::High, voh), (OutputState::Low, vol)] {
            let op = c.operating_point(vin, state).unwrap();
            assert!(close(op.device_inputs[0].volts, cmos_node_x(&c, vin, vo), 1e-9));
        }
    }
}

fn random_gate(rng: &mut Rng) -> SchmittGate {
    let vdd = uniform(rng, 2.0, 6.0);
    let lo = uniform(rng, 0.2, 0.45) * vdd;
    let hi = uniform(rng, 0.5, 0.8) * vdd;
    let gate = SchmittInput {
        supply_v: vdd,
        vt_upper: DatasheetRange { min_v: 0.9 * hi, typ_v: hi, max_v: 1.1 * hi },
        vt_lower: DatasheetRange { min_v: 0.9 * lo, typ_v: lo, max_v: 1.1 * lo },
        ..SchmittInput::default()
    };
    SchmittGate {
        ra_ohm: Some(log_uniform(rng, 1e3, 1e6)),
        rb_ohm: (rng.uniform() < 0.7).then(|| log_uniform(rng, 1e3, 1e6)),
        rc_ohm: (rng.uniform() < 0.7).then(|| log_uniform(rng, 1e3, 1e7)),
        gate,
    }
}

/// Node X of the gate's input network by MNA: nodes 1 = input, 2 = X, 3 = VDD.
fn gate_node_x(c: &SchmittGate, vin: f64) -> f64 {
    let mut rs = vec![(1, 2, c.ra_ohm.unwrap())];
    if let Some(rb) = c.rb_ohm {
        rs.push((2, 0, rb));
    }
    if let Some(rc) = c.rc_ohm {
        rs.push((2, 3, rc));
    }
    mna(3, &rs, &[(1, vin), (3, c.gate.supply_v)])[1]
}

#[test]
fn schmitt_gate_agrees_with_an_independent_nodal_solution() {
    let mut rng = Rng::new(0x6A7E);
    for _ in 0..300 {
        let c = random_gate(&mut rng);
        c.validate().unwrap();
        let t = c.thresholds().unwrap();
        let up = input_for_node_level(|v| gate_node_x(&c, v), c.gate.vt_upper.typ_v);
        let lo = input_for_node_level(|v| gate_node_x(&c, v), c.gate.vt_lower.typ_v);
        assert!(close(t.vt_upper_v, up, 1e-9), "{} vs {up}", t.vt_upper_v);
        assert!(close(t.vt_lower_v, lo, 1e-9), "{} vs {lo}", t.vt_lower_v);
        let vin = uniform(&mut rng, -5.0, 30.0);
        let op = c.operating_point(vin, OutputState::High).unwrap();
        assert!(close(op.device_inputs[0].volts, gate_node_x(&c, vin), 1e-9));
    }
}

/// An independent DC solver for the emitter-coupled pair, written for this test: transport
/// Ebers–Moll model (J. J. Ebers and J. L. Moll, "Large-signal behavior of junction transistors",
/// Proc. IRE 42 (1954), from memory), terminal currents stamped into KCL at the four free nodes,
/// Newton with nalgebra's LU at a fixed input voltage.
struct IndependentPair {
    vcc: f64,
    r1: f64,
    r2: f64,
    rc1: f64,
    rc2: f64,
    re: f64,
    g_load: f64,
    is: f64,
    bf: f64,
    br: f64,
    vt: f64,
}

/// Unknown node order: E, C1, B2, C2.
const E: usize = 0;
const C1: usize = 1;
const B2: usize = 2;
const C2: usize = 3;

impl IndependentPair {
    fn new(c: &EmitterCoupledSchmitt) -> Self {
        let t = &c.transistor;
        IndependentPair {
            vcc: c.supply_v,
            r1: c.r1_ohm,
            r2: c.r2_ohm,
            rc1: c.rc1_ohm,
            rc2: c.rc2_ohm,
            re: c.re_ohm,
            g_load: c.load_ohm.map_or(0.0, |r| 1.0 / r),
            is: t.saturation_current_a,
            bf: t.beta_f,
            br: t.beta_r,
            // kT/q with the SI 2019 exact constants.
            vt: 1.380649e-23 * t.temperature_k / 1.602176634e-19,
        }
    }

    /// Currents into (collector, base, emitter) and their derivatives with respect to the
    /// terminal voltages (base, collector, emitter).
    fn transistor(&self, vb: f64, vc: f64, ve: f64) -> ([f64; 3], [[f64; 3]; 3]) {
        let (ef, er) = (((vb - ve) / self.vt).exp(), ((vb - vc) / self.vt).exp());
        let is = self.is;
        let ic = is * (ef - er) - is / self.br * (er - 1.0);
        let ib = is / self.bf * (ef - 1.0) + is / self.br * (er - 1.0);
        // d/d(vbe), d/d(vbc)
        let (dic_f, dic_r) = (is * ef / self.vt, -is * er / self.vt * (1.0 + 1.0 / self.br));
        let (dib_f, dib_r) = (is * ef / (self.bf * self.vt), is * er / (self.br * self.vt));
        let grad = |df: f64, dr: f64| [df + dr, -dr, -df]; // with respect to (vb, vc, ve)
        let gc = grad(dic_f, dic_r);
        let gb = grad(dib_f, dib_r);
        let ge = [-(gc[0] + gb[0]), -(gc[1] + gb[1]), -(gc[2] + gb[2])];
        ([ic, ib, -(ic + ib)], [gc, gb, ge])
    }

    /// KCL residuals (current leaving each free node) and the Jacobian, at input `vin`.
    fn kcl(&self, vin: f64, x: &Vector4<f64>) -> (Vector4<f64>, Matrix4<f64>) {
        let mut f = Vector4::zeros();
        let mut j = Matrix4::zeros();
        // Resistors: (node a, node b or fixed voltage, conductance). None = fixed node.
        let mut stamp = |a: usize, b: Option<usize>, fixed_b: f64, g: f64| {
            let vb = b.map_or(fixed_b, |b| x[b]);
            f[a] += g * (x[a] - vb);
            j[(a, a)] += g;
            if let Some(b) = b {
                f[b] -= g * (x[a] - vb);
                j[(b, b)] += g;
                j[(a, b)] -= g;
                j[(b, a)] -= g;
            }
        };
        stamp(E, None, 0.0, 1.0 / self.re);
        stamp(C1, None, self.vcc, 1.0 / self.rc1);
        stamp(C1, Some(B2), 0.0, 1.0 / self.r1);
        stamp(B2, None, 0.0, 1.0 / self.r2);
        stamp(C2, None, self.vcc, 1.0 / self.rc2);
        stamp(C2, None, 0.0, self.g_load);
        // Q1: base at the fixed input, collector C1, emitter E.
        let (i1, d1) = self.transistor(vin, x[C1], x[E]);
        // Q2: base B2, collector C2, emitter E.
        let (i2, d2) = self.transistor(x[B2], x[C2], x[E]);
        // Terminal currents flow out of the node into the device.
        f[C1] += i1[0];
        f[E] += i1[2];
        f[C2] += i2[0];
        f[B2] += i2[1];
        f[E] += i2[2];
        for (row, k) in [(C1, 0), (E, 2)] {
            j[(row, C1)] += d1[k][1];
            j[(row, E)] += d1[k][2];
        }
        for (row, k) in [(C2, 0), (B2, 1), (E, 2)] {
            j[(row, B2)] += d2[k][0];
            j[(row, C2)] += d2[k][1];
            j[(row, E)] += d2[k][2];
        }
        (f, j)
    }

    /// Damped Newton at a fixed input: no node moves more than 50 mV per iteration. `shunt_s` adds a
    /// conductance from every node to its value in `anchor` (the backward-Euler term of a
    /// capacitor, C/Δt; zero for a plain DC solve).
    fn newton(&self, vin: f64, mut x: Vector4<f64>, anchor: &Vector4<f64>, shunt_s: f64, max_iter: usize) -> Option<Vector4<f64>> {
        for _ in 0..max_iter {
            let (f, j) = self.kcl(vin, &x);
            let g = f + (x - anchor) * shunt_s;
            let jg = j + Matrix4::identity() * shunt_s;
            let dx = jg.lu().solve(&(-g))?;
            let big = dx.amax();
            let s = if big > 0.05 { 0.05 / big } else { 1.0 };
            x += dx * s;
            if s == 1.0 && big < 1e-12 * self.vcc {
                return Some(x);
            }
        }
        None
    }

    /// DC solution at `vin` from the previous solution `x`: Newton first; when the previous state no
    /// longer exists (just past a fold, where Newton stalls), relax the circuit in time with 1 nF on
    /// every node and backward Euler (pseudo-transient continuation) until it settles, then polish.
    fn solve(&self, vin: f64, x: Vector4<f64>) -> Option<Vector4<f64>> {
        if let Some(x) = self.newton(vin, x, &x, 0.0, 200) {
            return Some(x);
        }
        let cap = 1e-9;
        let mut dt = 1e-9;
        let mut x = x;
        for _ in 0..4000 {
            let prev = x;
            match self.newton(vin, prev, &prev, cap / dt, 100) {
                Some(nx) => {
                    x = nx;
                    dt *= 1.5;
                    if (x - prev).amax() < 1e-9 && dt > 1.0 {
                        break;
                    }
                }
                None => dt *= 0.25,
            }
        }
        self.newton(vin, x, &x, 0.0, 200)
    }

    /// A solution at `vin` reached by stepping the input from 0 V (10 mV steps) — Q2 on, Q1 off.
    fn stepped_from_zero(&self, vin: f64, c: &EmitterCoupledSchmitt) -> Vector4<f64> {
        let k = c.r2_ohm / (c.rc1_ohm + c.r1_ohm + c.r2_ohm);
        // Rough start with every junction off or barely on: collectors at VCC, Q2 base 0.6 V up.
        let ve = (k * self.vcc - 0.7).max(0.0);
        let mut x = Vector4::new(ve, self.vcc, ve + 0.6, self.vcc);
        x = self.solve(0.0, x).expect("solution at 0 V");
        let n = (vin / 0.01).ceil() as usize;
        for i in 1..=n {
            x = self.solve(vin * i as f64 / n as f64, x).expect("continuation from 0 V");
        }
        x
    }
}

fn domain_example(model: BjtModel) -> EmitterCoupledSchmitt {
    let mut c = EmitterCoupledSchmitt { model, ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3) };
    // DOMAIN §1f's transistor: IS and βF entered at, and operating at, 300 K.
    c.transistor.temperature_k = 300.0;
    c.transistor.nominal_temperature_k = 300.0;
    c
}

/// A few plausible designs with clear hysteresis, plus DOMAIN §1f's example.
fn em_designs() -> Vec<EmitterCoupledSchmitt> {
    let mut out = vec![domain_example(BjtModel::EbersMoll)];
    let mut rng = Rng::new(0xE8E8);
    while out.len() < 5 {
        let mut c = EmitterCoupledSchmitt::new(
            uniform(&mut rng, 6.0, 24.0),
            log_uniform(&mut rng, 2e3, 50e3),
            log_uniform(&mut rng, 2e3, 50e3),
            log_uniform(&mut rng, 1e3, 20e3),
            log_uniform(&mut rng, 1e3, 10e3),
            log_uniform(&mut rng, 300.0, 5e3),
        );
        c.model = BjtModel::EbersMoll;
        c.transistor = Transistor {
            beta_f: uniform(&mut rng, 50.0, 400.0),
            beta_r: uniform(&mut rng, 0.5, 5.0),
            saturation_current_a: log_uniform(&mut rng, 1e-16, 1e-13),
            temperature_k: uniform(&mut rng, 250.0, 370.0),
            ..Transistor::default()
        };
        // IS and βF entered at the junction temperature, as the independent solve below uses them.
        c.transistor.nominal_temperature_k = c.transistor.temperature_k;
        if rng.uniform() < 0.3 {
            c.load_ohm = Some(log_uniform(&mut rng, 5e3, 1e6));
        }
        if let Ok(t) = c.thresholds() {
            if t.hysteresis_v() > 0.05 && t.vt_lower_v > 0.2 {
                out.push(c);
            }
        }
    }
    out
}

/// At the reported fold points the node voltages satisfy KCL at every node (computed here from the
/// transport equations), and the fixed-input Jacobian is singular there (a fold of the DC curve).
#[test]
fn bjt_fold_points_satisfy_kcl_and_are_singular() {
    for c in em_designs() {
        let p = IndependentPair::new(&c);
        let i_scale = c.supply_v / c.re_ohm.min(c.rc1_ohm).min(c.rc2_ohm);
        let folds = c.fold_points().unwrap();
        let t = c.thresholds().unwrap();
        assert_eq!(folds[0].vin_v, t.vt_upper_v);
        assert_eq!(folds[1].vin_v, t.vt_lower_v);
        // A regular point for comparison: Q1 off, input low.
        let regular = p.stepped_from_zero(0.0, &c);
        let (_, j_reg) = p.kcl(0.0, &regular);
        let sv = j_reg.singular_values();
        let cond_regular = sv.min() / sv.max();
        for n in folds {
            let x = Vector4::new(n.ve_v, n.vc1_v, n.vb2_v, n.vc2_v);
            let (f, j) = p.kcl(n.vin_v, &x);
            assert!(f.amax() < 1e-9 * i_scale, "KCL residual {:e} A at {n:?}", f.amax());
            let sv = j.singular_values();
            let cond = sv.min() / sv.max();
            assert!(cond < 1e-6 * cond_regular, "not a fold: σmin/σmax {cond:e} vs regular {cond_regular:e}");
        }
    }
}

/// Sweeping the input in 0.5 mV steps, solving the DC circuit at each step from the previous
/// solution (as a slowly moving input would), the output jumps at the reported thresholds.
#[test]
fn bjt_brute_force_sweep_jumps_at_the_reported_thresholds() {
    for c in em_designs() {
        let p = IndependentPair::new(&c);
        let t = c.thresholds().unwrap();
        let (voh, vol) = c.output_levels().unwrap();
        let jump = 0.3 * (voh - vol);
        let step = 0.5e-3;
        let span = 0.1;
        // Upward: from below VT− (only the output-low state exists there) through VT+.
        let start = (t.vt_lower_v - span).max(0.0);
        let mut x = p.stepped_from_zero(start, &c);
        let mut vin = start;
        let mut up_jump = None;
        while vin < t.vt_upper_v + span {
            let next = vin + step;
            let nx = p.solve(next, x).unwrap_or_else(|| panic!("sweep solve at {next} (VT+ {}) from {x:?} design {c:?}", t.vt_upper_v));
            if up_jump.is_none() && (nx[C2] - x[C2]).abs() > jump {
                up_jump = Some(next);
            }
            x = nx;
            vin = next;
        }
        // Downward from there through VT−.
        let mut down_jump = None;
        while vin > start {
            let next = vin - step;
            let nx = p.solve(next, x).expect("sweep solve");
            if down_jump.is_none() && (nx[C2] - x[C2]).abs() > jump {
                down_jump = Some(next);
            }
            x = nx;
            vin = next;
        }
        let (up, down) = (up_jump.expect("no upward jump"), down_jump.expect("no downward jump"));
        // The jump is seen at the first sample beyond the fold.
        assert!(up >= t.vt_upper_v - 1e-9 && up - t.vt_upper_v <= 2e-3, "up jump {up} vs VT+ {}", t.vt_upper_v);
        assert!(down <= t.vt_lower_v + 1e-9 && t.vt_lower_v - down <= 2e-3, "down jump {down} vs VT− {}", t.vt_lower_v);
    }
}

/// With a large βF the hand model's only approximation left is one VBE for both transistors.
/// DOMAIN §1f explains the difference: the conducting transistor's VBE is set by its full current,
/// the turning-on one's by the small current at the fold, I_f ≈ VT/(α·K·RC1), VBE = VT·ln(I/IS)
/// (the diode law, Ebers & Moll 1954). Evaluating the hand equations with those two VBEs must land
/// within about one thermal voltage of the Ebers–Moll fold points, whatever IS is, while the
/// single-VBE hand figures miss by several VT.
#[test]
fn bjt_hand_and_ebers_moll_agree_once_vbe_is_made_consistent() {
    for is in [1e-16, 1e-14, 1e-12] {
        let mut c = domain_example(BjtModel::EbersMoll);
        c.transistor.beta_f = 1e6;
        c.transistor.saturation_current_a = is;
        let em = c.thresholds().unwrap();
        let vt = c.transistor.thermal_voltage_v();
        let vbe_at = |i: f64| vt * (i / is).ln();
        let k = c.r2_ohm / (c.rc1_ohm + c.r1_ohm + c.r2_ohm);
        let alpha = c.transistor.alpha();
        let i_fold = vt / (alpha * k * c.rc1_ohm);
        let vbe_fold = vbe_at(i_fold);
        // VT+: Q2 conducts IE2 = (K·VCC − VBE2)/RE (β large), VBE2 from its own current.
        let mut ie2 = (k * c.supply_v - 0.65) / c.re_ohm;
        for _ in 0..50 {
            ie2 = (k * c.supply_v - vbe_at(alpha * ie2)) / c.re_ohm;
        }
        let upper = c.re_ohm * ie2 + vbe_fold;
        // VT−: Q1 conducts, Q2 turns on at the fold current: VE = (K·VCC − VBE2,f)/(1 + α·K·RC1/RE).
        let ve = (k * c.supply_v - vbe_fold) / (1.0 + alpha * k * c.rc1_ohm / c.re_ohm);
        let lower = ve + vbe_at(alpha * ve / c.re_ohm);
        assert!((upper - em.vt_upper_v).abs() < 1.5 * vt, "VT+ {upper} vs {}", em.vt_upper_v);
        assert!((lower - em.vt_lower_v).abs() < 1.5 * vt, "VT− {lower} vs {}", em.vt_lower_v);
        // The plain hand model with one VBE (the conducting device's) misses by much more.
        let mut hand = c.clone();
        hand.model = BjtModel::Hand;
        hand.transistor.vbe_v = vbe_at(alpha * ie2);
        let h = hand.thresholds().unwrap();
        assert!((h.vt_upper_v - em.vt_upper_v).abs() > 3.0 * (upper - em.vt_upper_v).abs());
    }
}

#[test]
fn bjt_domain_example_in_both_models() {
    // DOMAIN §1f example (values [D], derived by DOMAIN's authors; a consistency check only).
    let h = domain_example(BjtModel::Hand).thresholds().unwrap();
    assert!((h.vt_upper_v - 4.6992).abs() < 1e-4 && (h.vt_lower_v - 2.5154).abs() < 1e-4, "{h:?}");
    let e = domain_example(BjtModel::EbersMoll).thresholds().unwrap();
    assert!((e.vt_upper_v - 4.5403).abs() < 1e-4 && (e.vt_lower_v - 2.5843).abs() < 1e-4, "{e:?}");
}

// ---------------------------------------------------------------------------------------------
// (c) Property tests: synthesis round trips and typed failures
// ---------------------------------------------------------------------------------------------

fn anchor(r: f64) -> ImpedanceChoice {
    ImpedanceChoice::AnchorOhm(r)
}

fn finite_or_typed<C: Circuit>(r: Result<C, DesignError>) {
    match r {
        Ok(c) => {
            if let Ok(t) = c.thresholds() {
                assert!(t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite());
            }
        }
        Err(e) => assert!(!e.to_string().is_empty()),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(hysteron_tests::proptest_cases(256)))]

    #[test]
    fn cmos_buffer_synthesis_round_trip(
        vdd in 1.8f64..15.0, vm_frac in 0.35f64..0.65, drop in 0.0f64..0.1, low in 0.0f64..0.1,
        centre_frac in -0.5f64..1.5, width_frac in 0.01f64..1.5, r2 in 1e3f64..1e7,
    ) {
        let gate = CmosGate {
            supply_v: vdd, switching_point: GateLevel::Fraction(vm_frac),
            output_high_drop_v: drop * vdd, output_low_v: low * vdd, ..CmosGate::default()
        };
        let template = CmosBufferSchmitt::new(1.0, 1.0, gate);
        let t = Thresholds::from_centre_width(centre_frac * vdd, width_frac * vdd);
        let d = synthesise(&template, &Targets { vt_upper_v: t.vt_upper_v, vt_lower_v: t.vt_lower_v, impedance: anchor(r2) }).unwrap();
        let got = d.thresholds().unwrap();
        prop_assert!(close(got.vt_upper_v, t.vt_upper_v, 1e-9), "{got:?} vs {t:?}");
        prop_assert!(close(got.vt_lower_v, t.vt_lower_v, 1e-9), "{got:?} vs {t:?}");
    }

    #[test]
    fn cmos_buffer_infeasible_targets_are_typed(up in -20.0f64..20.0, below in 0.0f64..5.0, r2 in prop_oneof![Just(f64::NAN), Just(-1.0), 1.0f64..1e6]) {
        let template = CmosBufferSchmitt::new(1.0, 1.0, CmosGate::default());
        // VT− at or above VT+: never feasible.
        let r = template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: up + below }, r2);
        prop_assert!(matches!(r, Err(DesignError::Infeasible { .. }) | Err(DesignError::InvalidValue { .. })), "{r:?}");
        finite_or_typed(template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: f64::NAN }, 1e4));
    }

    #[test]
    fn schmitt_gate_synthesis_round_trip(
        vdd in 2.0f64..6.0, lo_frac in 0.2f64..0.45, hi_frac in 0.5f64..0.8,
        a in 1.0f64..20.0, b_frac in 0.0f64..=1.0, ra in 1e3f64..1e6,
    ) {
        let gate = SchmittInput {
            supply_v: vdd,
            vt_upper: DatasheetRange { min_v: hi_frac * vdd, typ_v: hi_frac * vdd, max_v: hi_frac * vdd },
            vt_lower: DatasheetRange { min_v: lo_frac * vdd, typ_v: lo_frac * vdd, max_v: lo_frac * vdd },
            ..SchmittInput::default()
        };
        // Feasible set: a ≥ 1 and −VDD(a − 1) ≤ b ≤ 0.
        let b = -b_frac * vdd * (a - 1.0);
        let target = Thresholds { vt_upper_v: a * hi_frac * vdd + b, vt_lower_v: a * lo_frac * vdd + b };
        let d = synthesise(&SchmittGate::bare(gate), &Targets { vt_upper_v: target.vt_upper_v, vt_lower_v: target.vt_lower_v, impedance: anchor(ra) }).unwrap();
        let got = d.thresholds().unwrap();
        prop_assert!(close(got.vt_upper_v, target.vt_upper_v, 1e-9), "{got:?} vs {target:?}");
        prop_assert!(close(got.vt_lower_v, target.vt_lower_v, 1e-9), "{got:?} vs {target:?}");
    }

    #[test]
    fn schmitt_gate_infeasible_targets_are_typed(a in 0.05f64..0.99, shift in 0.01f64..10.0, which in 0u8..3) {
        let gate = SchmittInput::default();
        let (hi, lo, vdd) = (gate.vt_upper.typ_v, gate.vt_lower.typ_v, gate.supply_v);
        let target = match which {
            // Narrower than the gate's own band.
            0 => Thresholds { vt_upper_v: a * hi, vt_lower_v: a * lo },
            // Band above a·VTgate (needs b > 0).
            1 => Thresholds { vt_upper_v: 2.0 * hi + shift, vt_lower_v: 2.0 * lo + shift },
            // Band below what a pull-up to VDD reaches (b < −VDD(a − 1)), with a = 2.
            _ => Thresholds { vt_upper_v: 2.0 * hi - vdd - shift, vt_lower_v: 2.0 * lo - vdd - shift },
        };
        let r = SchmittGate::bare(gate).synthesise_with_anchor(target, 1e5);
        match r {
            Err(DesignError::Infeasible { reason, suggestion }) => prop_assert!(!reason.is_empty() && !suggestion.is_empty()),
            other => prop_assert!(false, "{other:?}"),
        }
    }

    #[test]
    fn bjt_hand_synthesis_round_trip(
        vcc in 5.0f64..30.0, r1 in 1e3f64..1e5, r2 in 1e3f64..1e5, rc1 in 1e3f64..1e5, rc2 in 1e3f64..1e4,
        re in 1e2f64..1e4, beta in 20.0f64..1000.0, vbe in 0.55f64..0.75,
    ) {
        // A random hand design that switches gives feasible targets; synthesis from a template with
        // the same R1 + R2 and RE as anchor must reach them.
        let mut design = EmitterCoupledSchmitt::new(vcc, r1, r2, rc1, rc2, re);
        design.transistor.beta_f = beta;
        design.transistor.vbe_v = vbe;
        let Ok(target) = design.thresholds() else { return Ok(()) };
        let template = EmitterCoupledSchmitt { rc1_ohm: 1.0, r1_ohm: 0.5 * (r1 + r2), r2_ohm: 0.5 * (r1 + r2), ..design.clone() };
        let d = synthesise(&template, &Targets { vt_upper_v: target.vt_upper_v, vt_lower_v: target.vt_lower_v, impedance: anchor(re) }).unwrap();
        let got = d.thresholds().unwrap();
        prop_assert!(close(got.vt_upper_v, target.vt_upper_v, 1e-9), "{got:?} vs {target:?}");
        prop_assert!(close(got.vt_lower_v, target.vt_lower_v, 1e-9), "{got:?} vs {target:?}");
    }

    #[test]
    fn bjt_arbitrary_targets_give_designs_or_typed_errors(up in -5.0f64..30.0, lo in -5.0f64..30.0, re in prop_oneof![Just(0.0), Just(f64::INFINITY), 1.0f64..1e5]) {
        let template = domain_example(BjtModel::Hand);
        match template.synthesise_with_anchor(Thresholds { vt_upper_v: up, vt_lower_v: lo }, re) {
            Ok(d) => {
                let t = d.thresholds().unwrap();
                prop_assert!(close(t.vt_upper_v, up, 1e-9) && close(t.vt_lower_v, lo, 1e-9), "{t:?}");
            }
            Err(DesignError::Infeasible { reason, suggestion }) => prop_assert!(!reason.is_empty() && !suggestion.is_empty()),
            Err(DesignError::InvalidValue { .. }) => prop_assert!(!(re > 0.0 && re.is_finite())),
            Err(other) => prop_assert!(false, "{other:?}"),
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(hysteron_tests::proptest_cases(12)))]

    /// Ebers–Moll synthesis is a damped Newton refinement; it promises 1e-6 relative.
    #[test]
    fn bjt_ebers_moll_synthesis_round_trip(seed in 0u64..1_000_000) {
        let mut rng = Rng::new(seed);
        let mut design = EmitterCoupledSchmitt::new(
            uniform(&mut rng, 6.0, 24.0),
            log_uniform(&mut rng, 2e3, 50e3),
            log_uniform(&mut rng, 2e3, 50e3),
            log_uniform(&mut rng, 1e3, 20e3),
            log_uniform(&mut rng, 1e3, 10e3),
            log_uniform(&mut rng, 300.0, 5e3),
        );
        design.model = BjtModel::EbersMoll;
        let Ok(target) = design.thresholds() else { return Ok(()) };
        if target.hysteresis_v() < 0.05 {
            return Ok(());
        }
        let template = EmitterCoupledSchmitt { rc1_ohm: 1.0, ..design.clone() };
        let d = synthesise(&template, &Targets { vt_upper_v: target.vt_upper_v, vt_lower_v: target.vt_lower_v, impedance: anchor(design.re_ohm) }).unwrap();
        let got = d.thresholds().unwrap();
        prop_assert!(close(got.vt_upper_v, target.vt_upper_v, 1e-6), "{got:?} vs {target:?}");
        prop_assert!(close(got.vt_lower_v, target.vt_lower_v, 1e-6), "{got:?} vs {target:?}");
    }
}

// ---------------------------------------------------------------------------------------------
// Example design records
// ---------------------------------------------------------------------------------------------

#[test]
fn example_records_evaluate_without_errors() {
    for (name, text) in [
        ("cmos_buffer", include_str!("../fixtures/records/cmos_buffer.json")),
        ("schmitt_gate", include_str!("../fixtures/records/schmitt_gate.json")),
        ("bjt_pair", include_str!("../fixtures/records/bjt_pair.json")),
    ] {
        let record = DesignRecord::from_json(text).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(record.circuit.name(), name);
        let ev = evaluate(&record);
        assert!(ev.errors.is_empty(), "{name}: {:?}", ev.errors);
        let a = ev.analysis.as_ref().unwrap();
        assert!(a.hysteresis_v > 0.0);
        let s = ev.synthesis.as_ref().unwrap();
        let t = record.targets.unwrap();
        let rel = if name == "bjt_pair" { 1e-6 } else { 1e-9 };
        assert!(close(s.analysis.vt_upper_v, t.vt_upper_v, rel) && close(s.analysis.vt_lower_v, t.vt_lower_v, rel), "{name}: {:?}", s.analysis);
        // The record survives a JSON round trip unchanged.
        assert_eq!(DesignRecord::from_json(&record.to_json()).unwrap(), record);
    }
}
