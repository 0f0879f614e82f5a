//! Deterministic sampling and comparison helpers shared by the reference checks.

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
