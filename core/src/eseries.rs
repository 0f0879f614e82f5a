//! Preferred-number series for resistors and capacitors: IEC 60063 E3, E6, E12, E24, E48, E96, E192.
//!
//! The tables are the standard's own (IEC 60063, from memory; shared/DOMAIN.md §3), not the rounded
//! formula 10^(i/N): E24 has 2.7 3.0 3.3 3.6 3.9 4.3 4.7 and 8.2 where the formula gives 2.6 2.9 3.2
//! 3.5 3.8 4.2 4.6 and 8.3, and E192 has 9.20 where the formula gives 9.19. E12, E6 and E3 are every
//! 2nd, 4th and 8th E24 value; E96 and E48 every 2nd and 4th E192 value, so they inherit the table.
//!
//! **Nearest value by ratio.** [`ESeries::nearest`] picks the value v that minimises |ln(c/v)|, not
//! |c − v|. The series are geometric (each step is a fixed ratio, about 10^(1/N)), and a part's error
//! matters as a fraction of its value, so the fair boundary between two neighbours lo < hi is their
//! geometric mean √(lo·hi), not the arithmetic one. Example (DOMAIN §3): 4.498 kΩ lies nearer 4.3 kΩ
//! by difference (0.198 k against 0.202 k) but nearer 4.7 kΩ by ratio (−4.4 % against +4.5 %).
//! The comparison is done as c² against lo·hi, so no logarithm is taken.
//!
//! Values are built as (integer digits) × 10^k or ÷ 10^k with exact powers of ten, so within ±22
//! decades every value is the double nearest the decimal value (4.7 k is exactly `4700.0`,
//! 0.47 is the same double as the literal `0.47`).

use serde::{Deserialize, Serialize};
use std::fmt;

/// E24 values as two significant digits (×0.1 gives the mantissa 1.0 … 9.1). IEC 60063 (from memory).
const E24_DIGITS: [u16; 24] =
    [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91];

/// E192 values as three significant digits (×0.01 gives the mantissa 1.00 … 9.88). IEC 60063 (from memory).
const E192_DIGITS: [u16; 192] = [
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123, 124, 126, 127, 129, 130,
    132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152, 154, 156, 158, 160, 162, 164, 165, 167, 169, 172,
    174, 176, 178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226,
    229, 232, 234, 237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298,
    301, 305, 309, 312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379, 383, 388, 392,
    397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481, 487, 493, 499, 505, 511, 517,
    523, 530, 536, 542, 549, 556, 562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673, 681,
    690, 698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856, 866, 876, 887, 898,
    909, 920, 931, 942, 953, 965, 976, 988,
];

/// Relative tolerance within which two values count as the same series value (guards against a
/// computed value sitting one rounding step beside a table value).
const SAME_VALUE_REL: f64 = 1e-9;

/// One of the IEC 60063 preferred-number series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ESeries {
    /// 3 values per decade (1.0 2.2 4.7).
    E3,
    /// 6 values per decade.
    E6,
    /// 12 values per decade.
    E12,
    /// 24 values per decade.
    E24,
    /// 48 values per decade (three significant digits).
    E48,
    /// 96 values per decade (three significant digits).
    E96,
    /// 192 values per decade (three significant digits).
    E192,
}

impl Default for ESeries {
    /// E24, the series most resistor ranges stock at 1 % and 5 % (common practice).
    fn default() -> Self {
        ESeries::E24
    }
}

impl fmt::Display for ESeries {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "E{}", self.per_decade())
    }
}

impl std::str::FromStr for ESeries {
    type Err = String;

    /// Reads "E24", "e24" or "24".
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let t = s.trim();
        let digits = t.strip_prefix(['E', 'e']).unwrap_or(t);
        ESeries::ALL
            .iter()
            .copied()
            .find(|e| e.per_decade().to_string() == digits)
            .ok_or_else(|| format!("unknown series \"{t}\": use one of E3, E6, E12, E24, E48, E96, E192"))
    }
}

impl ESeries {
    /// Every series, coarsest first.
    pub const ALL: [ESeries; 7] =
        [ESeries::E3, ESeries::E6, ESeries::E12, ESeries::E24, ESeries::E48, ESeries::E96, ESeries::E192];

    /// Number of values per decade, N.
    pub fn per_decade(self) -> usize {
        match self {
            ESeries::E3 => 3,
            ESeries::E6 => 6,
            ESeries::E12 => 12,
            ESeries::E24 => 24,
            ESeries::E48 => 48,
            ESeries::E96 => 96,
            ESeries::E192 => 192,
        }
    }

    /// Significant digits of the tabulated values: 2 up to E24, 3 from E48 (IEC 60063).
    pub fn significant_digits(self) -> u32 {
        if self.per_decade() <= 24 {
            2
        } else {
            3
        }
    }

    /// The usual tolerance of parts sold in this series, percent (IEC 60063 pairing, from memory):
    /// E3 40 (the standard says only "above 20 %"; 40 is the figure commonly quoted), E6 20, E12 10,
    /// E24 5, E48 2, E96 1, E192 0.5 (0.25 and 0.1 are also sold).
    pub fn usual_tolerance_pct(self) -> f64 {
        match self {
            ESeries::E3 => 40.0,
            ESeries::E6 => 20.0,
            ESeries::E12 => 10.0,
            ESeries::E24 => 5.0,
            ESeries::E48 => 2.0,
            ESeries::E96 => 1.0,
            ESeries::E192 => 0.5,
        }
    }

    /// The table this series is taken from, and the stride through it.
    fn table(self) -> (&'static [u16], usize) {
        match self {
            ESeries::E3 => (&E24_DIGITS, 8),
            ESeries::E6 => (&E24_DIGITS, 4),
            ESeries::E12 => (&E24_DIGITS, 2),
            ESeries::E24 => (&E24_DIGITS, 1),
            ESeries::E48 => (&E192_DIGITS, 4),
            ESeries::E96 => (&E192_DIGITS, 2),
            ESeries::E192 => (&E192_DIGITS, 1),
        }
    }

    /// The tabulated significant digits of one decade, ascending (E24: 10, 11, 12 … 91;
    /// E96: 100, 102, 105 … 976).
    pub fn digits(self) -> impl Iterator<Item = u16> {
        let (t, step) = self.table();
        t.iter().copied().step_by(step)
    }

    /// The mantissas of one decade in [1, 10), ascending (E24: 1.0, 1.1 … 9.1).
    pub fn mantissas(self) -> impl Iterator<Item = f64> {
        self.digits().map(move |d| digits_value(d, -(self.significant_digits() as i32 - 1)))
    }

    /// The series value with table digits `digits` in the decade [10^decade, 10^(decade+1)).
    fn value_at(self, digits: u16, decade: i32) -> f64 {
        digits_value(digits, decade - (self.significant_digits() as i32 - 1))
    }

    /// Every series value v with `min ≤ v ≤ max` (inclusive, within a relative 1e-9), ascending.
    /// Empty when the bounds are not finite and positive or `max < min`.
    pub fn values_between(self, min: f64, max: f64) -> Vec<f64> {
        let mut out = Vec::new();
        self.values_between_into(min, max, &mut out);
        out
    }

    /// As [`ESeries::values_between`], writing into a caller's buffer (cleared first), so a search
    /// can reuse one allocation.
    pub fn values_between_into(self, min: f64, max: f64, out: &mut Vec<f64>) {
        out.clear();
        if !(min.is_finite() && max.is_finite() && min > 0.0 && max >= min) {
            return;
        }
        let lo = min * (1.0 - SAME_VALUE_REL);
        let hi = max * (1.0 + SAME_VALUE_REL);
        let first = decade_of(min) - 1;
        let last = decade_of(max) + 1;
        for decade in first..=last {
            for d in self.digits() {
                let v = self.value_at(d, decade);
                if v >= lo && v <= hi {
                    out.push(v);
                }
            }
        }
    }

    /// The largest series value ≤ x and the smallest ≥ x (both the same when x is a series value,
    /// within a relative 1e-9). `None` for x not finite and positive.
    fn bracket(self, x: f64) -> Option<(f64, f64)> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        let d = decade_of(x);
        let mut below = f64::NAN;
        let mut above = f64::NAN;
        for decade in (d - 1)..=(d + 1) {
            for digits in self.digits() {
                let v = self.value_at(digits, decade);
                if same_value(v, x) {
                    return Some((v, v));
                }
                if v < x {
                    below = v;
                } else if above.is_nan() {
                    above = v;
                }
            }
        }
        if below.is_finite() && above.is_finite() {
            Some((below, above))
        } else {
            None
        }
    }

    /// The series value nearest x by ratio (minimising |ln(x/v)|; see the module notes for why).
    /// A value exactly at the geometric mean of two neighbours goes to the lower one.
    /// `None` for x not finite and positive.
    pub fn nearest(self, x: f64) -> Option<f64> {
        let (lo, hi) = self.bracket(x)?;
        // |ln(x/lo)| ≤ |ln(hi/x)|  ⇔  x/lo ≤ hi/x  ⇔  x² ≤ lo·hi (all positive).
        Some(if x * x <= lo * hi { lo } else { hi })
    }

    /// The smallest series value strictly above x (x itself counts as "not above" within a relative
    /// 1e-9). `None` for x not finite and positive.
    pub fn next_up(self, x: f64) -> Option<f64> {
        let (lo, hi) = self.bracket(x)?;
        if lo == hi {
            self.bracket(hi * (1.0 + 4.0 * SAME_VALUE_REL)).map(|(_, h)| h)
        } else {
            Some(hi)
        }
    }

    /// The largest series value strictly below x (x itself counts as "not below" within a relative
    /// 1e-9). `None` for x not finite and positive.
    pub fn next_down(self, x: f64) -> Option<f64> {
        let (lo, hi) = self.bracket(x)?;
        if lo == hi {
            self.bracket(lo * (1.0 - 4.0 * SAME_VALUE_REL)).map(|(l, _)| l)
        } else {
            Some(lo)
        }
    }

    /// Whether x is a value of this series (within a relative 1e-9).
    pub fn contains(self, x: f64) -> bool {
        matches!(self.bracket(x), Some((lo, hi)) if lo == hi)
    }
}

/// Whether two positive values agree within [`SAME_VALUE_REL`].
fn same_value(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_VALUE_REL * a.abs().max(b.abs())
}

/// The decade of x: the integer d with 10^d ≤ x < 10^(d+1) (x finite, positive).
fn decade_of(x: f64) -> i32 {
    let d = x.log10().floor();
    // log10 may land one off next to an exact power of ten; `bracket` scans d ± 1, so a one-off
    // error here only costs nothing. Clamp to keep exponents sane for subnormal or huge input.
    d.clamp(-330.0, 330.0) as i32
}

/// `digits × 10^exp`, computed with an exact power of ten where one exists so the result is the
/// double nearest the decimal value.
pub(crate) fn digits_value(digits: u16, exp: i32) -> f64 {
    let d = f64::from(digits);
    if exp >= 0 {
        d * pow10(exp)
    } else {
        d / pow10(-exp)
    }
}

/// 10^k for k ≥ 0: exact up to 10^22 (a double holds every such power exactly), approximate beyond.
fn pow10(k: i32) -> f64 {
    const EXACT: [f64; 23] = [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19,
        1e20, 1e21, 1e22,
    ];
    usize::try_from(k).ok().and_then(|i| EXACT.get(i).copied()).unwrap_or_else(|| 10f64.powi(k))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_per_decade() {
        for s in ESeries::ALL {
            assert_eq!(s.digits().count(), s.per_decade(), "{s}");
            assert_eq!(s.mantissas().count(), s.per_decade(), "{s}");
        }
    }

    #[test]
    fn values_are_exact_decimals() {
        let v = ESeries::E24.values_between(0.1, 10e3);
        assert!(v.contains(&4700.0));
        assert!(v.contains(&0.47));
        assert!(v.contains(&10e3));
        assert_eq!(v.first(), Some(&0.1));
        assert_eq!(v.len(), 24 * 5 + 1);
    }

    #[test]
    fn three_decades_of_e96_hold_289_values() {
        assert_eq!(ESeries::E96.values_between(1e3, 1e6).len(), 96 * 3 + 1);
    }

    #[test]
    fn nearest_uses_the_ratio_not_the_difference() {
        // DOMAIN §3: 4.498 kΩ → 4.3k by difference, 4.7k by ratio.
        assert_eq!(ESeries::E24.nearest(4498.0), Some(4700.0));
        assert_eq!(ESeries::E24.nearest(4490.0), Some(4300.0));
        assert_eq!(ESeries::E24.nearest(4700.0), Some(4700.0));
        assert_eq!(ESeries::E12.nearest(9.6e3), Some(10e3));
        assert_eq!(ESeries::E24.nearest(0.0), None);
        assert_eq!(ESeries::E24.nearest(f64::NAN), None);
    }

    #[test]
    fn next_up_and_down_cross_decades() {
        assert_eq!(ESeries::E24.next_up(4700.0), Some(5100.0));
        assert_eq!(ESeries::E24.next_down(4700.0), Some(4300.0));
        assert_eq!(ESeries::E24.next_up(9100.0), Some(10e3));
        assert_eq!(ESeries::E24.next_down(10e3), Some(9100.0));
        assert_eq!(ESeries::E6.next_up(5e3), Some(6800.0));
        assert_eq!(ESeries::E192.next_down(1.0), Some(0.988));
        assert!(ESeries::E96.contains(4.99e3));
        assert!(!ESeries::E96.contains(4.7e3));
    }

    #[test]
    fn serde_names_are_lower_case() {
        assert_eq!(serde_json::to_string(&ESeries::E24).unwrap(), "\"e24\"");
        assert_eq!(serde_json::from_str::<ESeries>("\"e192\"").unwrap(), ESeries::E192);
        assert_eq!("E96".parse::<ESeries>(), Ok(ESeries::E96));
        assert!("E25".parse::<ESeries>().is_err());
    }

    #[test]
    fn bad_ranges_give_nothing() {
        assert!(ESeries::E24.values_between(10.0, 1.0).is_empty());
        assert!(ESeries::E24.values_between(0.0, 1.0).is_empty());
        assert!(ESeries::E24.values_between(1.0, f64::INFINITY).is_empty());
    }
}
