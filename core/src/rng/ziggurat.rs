//! Ziggurat tables for the standard normal density, 256 layers (Marsaglia & Tsang, "The Ziggurat
//! Method for Generating Random Variables", Journal of Statistical Software 5(8), 2000), computed
//! once with `libm` so that every target holds the same bits.
//!
//! The density f(x) = exp(−x²/2) (unnormalised) is covered by 255 rectangles and a base strip of
//! equal area v; the base strip is the rectangle [0, r] × [0, f(r)] plus the tail beyond r.
//! Edges: x₁ = r, x₀ = v / f(r) (the base strip's width as a rectangle of height f(r)),
//! xᵢ₊₁ = f⁻¹(f(xᵢ) + v / xᵢ) = √(−2 ln(f(xᵢ) + v / xᵢ)), x₂₅₆ = 0 (Marsaglia & Tsang 2000, §2).

use std::sync::OnceLock;

/// Number of layers.
pub(crate) const LAYERS: usize = 256;

/// Right edge of the base strip for 256 layers, r = 3.6541528853610088 (Marsaglia & Tsang 2000,
/// the value they give for n = 256).
pub(crate) const TAIL_START: f64 = 3.654_152_885_361_009;

/// Layer edges `x` (x₀ … x₂₅₆, falling to 0) and the density at them, `f[i] = f(x[i])`.
pub(crate) struct Tables {
    pub(crate) x: [f64; LAYERS + 1],
    pub(crate) f: [f64; LAYERS + 1],
}

/// The unnormalised normal density exp(−x²/2).
#[inline]
pub(crate) fn density(x: f64) -> f64 {
    libm::exp(-0.5 * x * x)
}

fn build() -> Tables {
    let r = TAIL_START;
    // Area of each layer: the base rectangle r·f(r) plus the tail ∫_r^∞ f = √(π/2)·erfc(r/√2).
    let v = r * density(r)
        + (std::f64::consts::PI / 2.0).sqrt() * libm::erfc(r / std::f64::consts::SQRT_2);
    let mut x = [0.0; LAYERS + 1];
    x[0] = v / density(r);
    x[1] = r;
    for i in 1..LAYERS - 1 {
        x[i + 1] = libm::sqrt(-2.0 * libm::log(density(x[i]) + v / x[i]));
    }
    x[LAYERS] = 0.0;
    let mut f = [0.0; LAYERS + 1];
    for (fi, xi) in f.iter_mut().zip(x) {
        *fi = density(xi);
    }
    Tables { x, f }
}

/// The tables, built on first use.
pub(crate) fn tables() -> &'static Tables {
    static TABLES: OnceLock<Tables> = OnceLock::new();
    TABLES.get_or_init(build)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn layers_have_equal_areas_and_close_at_the_top() {
        let t = tables();
        let r = TAIL_START;
        let v = r * density(r)
            + (std::f64::consts::PI / 2.0).sqrt() * libm::erfc(r / std::f64::consts::SQRT_2);
        // v for 256 layers ≈ 0.00492867323399 (Marsaglia & Tsang 2000).
        assert!((v - 0.004_928_673_233_99).abs() < 1e-13, "{v}");
        for i in 1..LAYERS - 1 {
            assert!(t.x[i + 1] < t.x[i], "edges fall: {i}");
            let area = t.x[i] * (t.f[i + 1] - t.f[i]);
            assert!(
                (area - v).abs() < 1e-9 * v.max(1.0),
                "layer {i}: {area} vs {v}"
            );
        }
        // The top layer: its rectangle x₂₅₅ · (1 − f(x₂₅₅)) has the same area (the recursion closes).
        let top = t.x[LAYERS - 1] * (1.0 - t.f[LAYERS - 1]);
        assert!((top - v).abs() < 1e-6 * v, "top layer {top} vs {v}");
        assert_eq!(t.f[LAYERS], 1.0);
    }
}
