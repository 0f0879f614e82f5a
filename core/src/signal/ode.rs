//! A small fixed-step integrator for the application simulations: classical fourth-order
//! Runge–Kutta (Kutta 1901; any numerical-analysis text, e.g. Press et al., *Numerical Recipes*,
//! §16.1, from memory) on a scalar autonomous ODE dv/dt = f(v), with threshold events located by
//! bisection on the last step's length.
//!
//! The oscillator and debouncer closed forms integrate the RC law analytically; these
//! simulations integrate the ODE numerically instead, so they check the closed forms
//! (threshold logic, delays, duty) independently of the logarithm formulas.

use crate::error::DesignError;

/// Most steps one call may take (a guard against endless loops).
pub const MAX_STEPS: usize = 20_000_000;

/// One classical Runge–Kutta step of length `h` from `v`.
#[inline]
pub fn rk4_step<F: Fn(f64) -> f64>(f: &F, v: f64, h: f64) -> f64 {
    let k1 = f(v);
    let k2 = f(v + 0.5 * h * k1);
    let k3 = f(v + 0.5 * h * k2);
    let k4 = f(v + h * k3);
    v + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
}

/// A level the solution may reach, and from which side.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Event {
    /// The level, volts.
    pub level_v: f64,
    /// True: fires when v rises to or above the level; false: when it falls below it.
    pub upward: bool,
}

impl Event {
    fn fired(&self, v: f64) -> bool {
        if self.upward {
            v >= self.level_v
        } else {
            v < self.level_v
        }
    }
}

/// Where an [`advance`] call stopped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Advance {
    /// Time integrated, seconds.
    pub elapsed_s: f64,
    /// Solution at the stop, volts.
    pub v: f64,
    /// Whether the event fired (at `elapsed_s`); otherwise the full duration elapsed.
    pub hit: bool,
}

/// Integrates dv/dt = f(v) from `v0` for at most `duration_s` with steps of at most `max_step_s`,
/// stopping early when `event` fires (located to about 1e-14 of the step by bisection on the step
/// length). `on_step` sees every accepted (t, v) for tracing.
pub fn advance<F: Fn(f64) -> f64>(
    f: &F,
    v0: f64,
    duration_s: f64,
    max_step_s: f64,
    event: Option<Event>,
    mut on_step: impl FnMut(f64, f64),
) -> Result<Advance, DesignError> {
    if !(duration_s >= 0.0) || !duration_s.is_finite() || !(max_step_s > 0.0) {
        return Err(DesignError::NotConverged { reason: "integration interval or step is not a positive finite number".into() });
    }
    let steps = (duration_s / max_step_s).ceil();
    if steps > MAX_STEPS as f64 {
        return Err(DesignError::NotConverged {
            reason: format!("the simulation would need {} steps (limit {MAX_STEPS}): shorten it or widen the step", crate::notation::format_fixed(steps, 0)),
        });
    }
    let steps = (steps as usize).max(1);
    let h = duration_s / steps as f64;
    let mut v = v0;
    let mut t = 0.0;
    for _ in 0..steps {
        let next = rk4_step(f, v, h);
        if let Some(e) = event {
            if !e.fired(v) && e.fired(next) {
                let (mut lo, mut hi) = (0.0, h);
                for _ in 0..80 {
                    let mid = 0.5 * (lo + hi);
                    if e.fired(rk4_step(f, v, mid)) {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                }
                t += hi;
                let vh = rk4_step(f, v, hi);
                on_step(t, vh);
                return Ok(Advance { elapsed_s: t, v: vh, hit: true });
            }
        }
        v = next;
        t += h;
        on_step(t, v);
        if !v.is_finite() {
            return Err(DesignError::NotConverged { reason: "the simulated voltage left the finite range".into() });
        }
    }
    Ok(Advance { elapsed_s: duration_s, v, hit: false })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rc_charge_reaches_level_at_log_time() {
        // dv/dt = (1 − v)/τ from 0 reaches 0.5 at τ·ln 2.
        let tau = 1e-3;
        let f = |v: f64| (1.0 - v) / tau;
        let a = advance(&f, 0.0, 10.0 * tau, tau / 100.0, Some(Event { level_v: 0.5, upward: true }), |_, _| {}).unwrap();
        assert!(a.hit);
        assert!((a.elapsed_s - tau * 2f64.ln()).abs() < 1e-12, "{}", a.elapsed_s);
        let b = advance(&f, 0.0, tau, tau / 100.0, None, |_, _| {}).unwrap();
        // RK4's local error for e^−x is about x⁵/120: 100 steps of x = 0.01 leave ~1e-10.
        assert!((b.v - (1.0 - (-1.0f64).exp())).abs() < 1e-9);
        assert!(advance(&f, 0.0, 1.0, 1e-12, None, |_, _| {}).is_err());
    }
}
