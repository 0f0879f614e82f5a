//! Deterministic sampling and comparison helpers shared by the reference checks.

use hysteron_core::device::Comparator;

/// Knuth's MMIX linear congruential generator (The Art of Computer Programming, vol. 2, from
/// memory): a fixed, dependency-free stream so reference sweeps draw the same designs on every run.
pub struct Lcg(pub u64);

impl Lcg {
    /// The next value, uniform in [0, 1).
    pub fn next_f64(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform in [lo, hi).
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next_f64()
    }

    /// Log-uniform in [lo, hi), for resistors.
    pub fn log_uniform(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.next_f64()).exp()
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        self.next_f64() < p
    }
}

/// Relative agreement with a 1 mV floor (so thresholds near 0 V are held to `rel`·1 mV absolute);
/// both values must be finite.
pub fn close(a: f64, b: f64, rel: f64) -> bool {
    a.is_finite() && b.is_finite() && (a - b).abs() <= rel * a.abs().max(b.abs()).max(1e-3)
}

/// A random comparator for reference sweeps: supply 3–15 V (split rails when `split`), output
/// headroom up to 0.3 V, VOS ±5 mV, IB± ±100 nA, built-in hysteresis up to 10 mV half the time,
/// source resistance up to 5 kΩ.
pub fn random_comparator(g: &mut Lcg, split: bool) -> Comparator {
    let supply = g.uniform(3.0, 15.0);
    Comparator {
        supply_v: supply,
        negative_rail_v: if split { -g.uniform(1.0, supply) } else { 0.0 },
        output_high_drop_v: g.uniform(0.0, 0.3),
        output_low_rise_v: g.uniform(0.0, 0.3),
        offset_v: g.uniform(-5e-3, 5e-3),
        bias_plus_a: g.uniform(-100e-9, 100e-9),
        bias_minus_a: g.uniform(-100e-9, 100e-9),
        builtin_hysteresis_v: if g.chance(0.5) { 0.0 } else { g.uniform(0.0, 0.01) },
        source_resistance_ohm: if g.chance(0.3) { 0.0 } else { g.uniform(0.0, 5e3) },
        ..Comparator::default()
    }
}
