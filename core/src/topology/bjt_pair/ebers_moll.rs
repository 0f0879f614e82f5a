//! Ebers–Moll solver of the emitter-coupled pair: damped Newton on the four node voltages, the
//! S-shaped DC curve traced with λ = VBE1, and its fold points (VT+, VT−). See the parent module
//! for the equations and their sources.

use super::{BjtNodes, EmitterCoupledSchmitt};
use crate::analysis::OutputState;
use crate::error::DesignError;

/// One solved point of the traced curve.
#[derive(Debug, Clone, Copy)]
pub(super) struct CurvePt {
    lam: f64,
    pub(super) x: [f64; 4],
    pub(super) vin: f64,
    /// Tangent dx/dλ.
    dx: [f64; 4],
    /// dVin/dλ.
    slope: f64,
}

/// The traced Ebers–Moll curve: its start (input low, Q2 on), folds, and end (past VT+, Q2 off).
#[derive(Debug, Clone, Copy)]
pub(super) struct Trace {
    pub(super) start: CurvePt,
    pub(super) upper: CurvePt,
    pub(super) lower: CurvePt,
    pub(super) end: CurvePt,
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
pub(super) struct Em<'a> {
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
    pub(super) fn new(c: &'a EmitterCoupledSchmitt) -> Self {
        let t = &c.transistor;
        Em {
            c,
            vcc: c.supply_v,
            vt: t.thermal_voltage_v(),
            is: t.saturation_current_at_temperature_a(),
            bf: t.beta_f_at_temperature(),
            br: t.beta_r_at_temperature(),
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
    pub(super) fn trace_memo(&self) -> Result<Trace, DesignError> {
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
    pub(super) fn trace(&self, mut visit: impl FnMut(f64, &[f64; 4], f64)) -> Result<Trace, DesignError> {
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
    pub(super) fn nodes_on_branch(&self, vin: f64, state: OutputState) -> Result<BjtNodes, DesignError> {
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

    pub(super) fn nodes(&self, x: &[f64; 4], vin: f64) -> BjtNodes {
        let q1 = self.bjt(vin - x[0], vin - x[1]);
        BjtNodes { vin_v: vin, ve_v: x[0], vc1_v: x[1], vb2_v: x[2], vc2_v: x[3], input_current_a: q1.ib }
    }
}
