//! A small seeded random-number generator that gives bit-identical streams on every target.
//!
//! xoshiro256++ (Blackman & Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 2021)
//! seeded through SplitMix64 (Steele, Lea & Flood, OOPSLA 2014). Normal deviates use the ziggurat
//! method with 256 layers (Marsaglia & Tsang, J. Stat. Software 5(8), 2000; tables in
//! [`ziggurat`]) and Marsaglia's tail method beyond the base strip (Marsaglia, Ann. Math. Stat. 35,
//! 1964), with `libm`'s pure-Rust `exp` and `log` so that native and wasm32 builds draw the same
//! numbers from the same seed. One 64-bit draw gives a deviate in about 99 % of calls.
//! [`Rng::normal`] is the project's one normal sampler: Monte Carlo and the noise sources use it.

mod ziggurat;

/// The first output of `Rng::new(0)`: a fingerprint that native and wasm32 builds must share.
pub const SEED0_FIRST_OUTPUT: u64 = 0x53175D61490B23DF;

/// Which normal sampler [`Rng::normal`] is: 1, Marsaglia's polar method (results kept before
/// December 2026); 2, the ziggurat method. Results drawn with normal deviates (Monte Carlo, noisy
/// signal tests) record it, so that a kept result re-run with its seed under another sampler is
/// shown as drawn differently rather than as a figure that moved. Change it whenever the same seed
/// would draw other normal deviates.
pub const NORMAL_SAMPLER: u32 = 2;

/// The sampler of a kept result that does not name one: it was drawn before samplers were
/// recorded, with the polar method (serde's default for the field).
pub fn sampler_before_records() -> u32 {
    1
}

/// Seeded pseudo-random generator (xoshiro256++).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Rng {
    s: [u64; 4],
}

fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

impl Rng {
    /// A generator whose whole stream is fixed by `seed`.
    pub fn new(seed: u64) -> Self {
        let mut sm = seed;
        let s = [splitmix64(&mut sm), splitmix64(&mut sm), splitmix64(&mut sm), splitmix64(&mut sm)];
        Rng { s }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        let result = self.s[0].wrapping_add(self.s[3]).rotate_left(23).wrapping_add(self.s[0]);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }

    /// A uniform deviate in [0, 1) with 53 random bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// A uniform deviate in [lo, hi).
    pub fn uniform_in(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }

    /// A standard normal deviate (mean 0, standard deviation 1), ziggurat method (module doc).
    pub fn normal(&mut self) -> f64 {
        let t = ziggurat::tables();
        loop {
            let bits = self.next_u64();
            // The low 8 bits pick the layer; the top 53 bits give u uniform in [−1, 1).
            let i = (bits & 0xff) as usize;
            let u = (bits >> 11) as f64 * (1.0 / (1u64 << 52) as f64) - 1.0;
            let x = u * t.x[i];
            if x.abs() < t.x[i + 1] {
                return x;
            }
            if i == 0 {
                return self.normal_tail(u < 0.0);
            }
            // The wedge between the layer's rectangle and the density: accept under the curve.
            if t.f[i + 1] + (t.f[i] - t.f[i + 1]) * self.uniform() < ziggurat::density(x) {
                return x;
            }
        }
    }

    /// A deviate from the normal tail beyond the ziggurat's base strip, r + x with x drawn by
    /// Marsaglia's method (1964): x = −ln(U₁)/r, y = −ln(U₂), accepted when 2y > x².
    fn normal_tail(&mut self, negative: bool) -> f64 {
        let r = ziggurat::TAIL_START;
        loop {
            // 1 − U lies in (0, 1]: the logarithm stays finite.
            let x = -libm::log(1.0 - self.uniform()) / r;
            let y = -libm::log(1.0 - self.uniform());
            if 2.0 * y > x * x {
                return if negative { -(r + x) } else { r + x };
            }
        }
    }

    /// An exponential deviate with the given mean (for random event times).
    pub fn exponential(&mut self, mean: f64) -> f64 {
        -mean * libm::log(1.0 - self.uniform())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_stream_and_known_first_value() {
        let mut a = Rng::new(42);
        let mut b = Rng::new(42);
        for _ in 0..1000 {
            assert_eq!(a.next_u64(), b.next_u64());
        }
        // SplitMix64 reference output for seed 0 (from the published reference implementation,
        // splitmix64.c by Vigna; value recalled from memory and confirmed by the identity test below).
        let mut s = 0u64;
        assert_eq!(splitmix64(&mut s), 0xE220_A839_7B1D_CDAF);
        assert_eq!(Rng::new(0).next_u64(), SEED0_FIRST_OUTPUT);
    }

    #[test]
    fn normal_moments() {
        let mut r = Rng::new(7);
        let n = 200_000;
        let (mut m, mut v) = (0.0, 0.0);
        for _ in 0..n {
            let x = r.normal();
            m += x;
            v += x * x;
        }
        m /= n as f64;
        v = v / n as f64 - m * m;
        // Standard error of the mean 1/√n ≈ 0.0022; of the variance √(2/n) ≈ 0.0032.
        assert!(m.abs() < 0.01, "{m}");
        assert!((v - 1.0).abs() < 0.015, "{v}");
    }

    #[test]
    fn normal_tails_match_the_normal_distribution() {
        // Upper-tail frequencies against Q(x) = erfc(x/√2)/2 (the standard normal tail, a
        // textbook identity), bounds 5 binomial standard errors; the only normal sampler of the
        // project must be right in the tails that noise false-edge counts depend on.
        let mut r = Rng::new(12345);
        let n = 1_000_000usize;
        let points = [-2.0, -1.0, -0.3, 0.0, 0.5, 1.0, 2.0, 2.5, 3.0, 3.8];
        let mut counts = [0usize; 10];
        for _ in 0..n {
            let v = r.normal();
            for (c, p) in counts.iter_mut().zip(points) {
                *c += (v > p) as usize;
            }
        }
        for (c, p) in counts.iter().zip(points) {
            let q = 0.5 * libm::erfc(p / std::f64::consts::SQRT_2);
            let se = (q * (1.0 - q) / n as f64).sqrt();
            let f = *c as f64 / n as f64;
            assert!((f - q).abs() < 5.0 * se + 1e-7, "P(Z > {p}): {f} vs {q} (se {se})");
        }
    }

    #[test]
    fn far_tails_beyond_the_ziggurat_base_match_the_normal_distribution() {
        // The tail beyond r = 3.654 is drawn by its own method: both signs, against
        // Q(x) = erfc(x/√2)/2, bounds 5 binomial standard errors.
        let mut r = Rng::new(99);
        let n = 4_000_000usize;
        let points = [3.5, 3.654, 3.8, 4.0, 4.5];
        let (mut upper, mut lower) = ([0usize; 5], [0usize; 5]);
        for _ in 0..n {
            let v = r.normal();
            for k in 0..points.len() {
                upper[k] += (v > points[k]) as usize;
                lower[k] += (v < -points[k]) as usize;
            }
        }
        for k in 0..points.len() {
            let q = 0.5 * libm::erfc(points[k] / std::f64::consts::SQRT_2);
            let se = (q * (1.0 - q) / n as f64).sqrt();
            for c in [upper[k], lower[k]] {
                let f = c as f64 / n as f64;
                assert!((f - q).abs() < 5.0 * se, "P(|Z| > {}) one side: {f} vs {q} (se {se})", points[k]);
            }
        }
    }

    #[test]
    fn normal_passes_a_kolmogorov_smirnov_test() {
        // One-sample KS statistic against Φ(x) = erfc(−x/√2)/2; the 1 % critical value for large n
        // is 1.628/√n (Smirnov's limiting distribution, standard statistical tables, from memory).
        let mut r = Rng::new(2027);
        let n = 200_000usize;
        let mut v: Vec<f64> = (0..n).map(|_| r.normal()).collect();
        v.sort_by(f64::total_cmp);
        let d = v
            .iter()
            .enumerate()
            .map(|(i, x)| {
                let p = 0.5 * libm::erfc(-x / std::f64::consts::SQRT_2);
                (p - i as f64 / n as f64).abs().max(((i + 1) as f64 / n as f64 - p).abs())
            })
            .fold(0.0, f64::max);
        assert!(d < 1.628 / (n as f64).sqrt(), "KS D = {d}");
    }

    #[test]
    fn uniform_in_unit_interval() {
        let mut r = Rng::new(1);
        for _ in 0..10_000 {
            let u = r.uniform();
            assert!((0.0..1.0).contains(&u));
        }
    }
}

#[cfg(test)]
mod fingerprint {
    use super::*;

    /// Prints the normal-deviate fingerprint; the value is pinned in `NORMAL_FINGERPRINT_SEED2026`.
    #[test]
    fn normal_fingerprint_is_pinned() {
        assert_eq!(normal_fingerprint(2026), NORMAL_FINGERPRINT_SEED2026);
    }
}

/// XOR of the bit patterns of the first 200,000 normal deviates drawn with `seed`: a fingerprint
/// that native and wasm32 builds must share (the wasm test compares it with
/// [`NORMAL_FINGERPRINT_SEED2026`]). That many draws pass through the wedges (about 1 % of calls)
/// and the tail beyond the base strip (P(|Z| > 3.654) ≈ 2.6·10⁻⁴, some 50 draws), where `libm`'s
/// `exp` and `log` decide.
pub fn normal_fingerprint(seed: u64) -> u64 {
    let mut r = Rng::new(seed);
    (0..200_000).fold(0u64, |acc, i| acc ^ r.normal().to_bits().rotate_left(i % 64))
}

/// [`normal_fingerprint`] of seed 2026 as computed natively (x86_64, glibc host).
pub const NORMAL_FINGERPRINT_SEED2026: u64 = 15220901406568607813;
