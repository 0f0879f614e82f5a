//! Engineering notation and RKM codes survive format → parse round trips, and the reader never
//! panics on junk. The outside references are the standard library's float formatting and
//! parsing (shortest round-trip `{:e}`, correctly rounded), and IEC 60062 for the RKM code.

use hysteron_core::notation::{
    format_engineering, format_rkm, format_with_unit, parse, parse_value, Notation, NotationError, Unit,
};
use proptest::prelude::*;

/// Half a unit in the last kept digit of x at `sig` significant digits (plus a hair for the
/// binary representation): the most a correct rounding may move x.
fn half_ulp(x: f64, sig: u8) -> f64 {
    let e = x.abs().log10().floor();
    0.5 * 10f64.powf(e - f64::from(sig) + 1.0) * (1.0 + 1e-9)
}

/// A magnitude spread evenly over decades.
fn magnitude(lo_exp: f64, hi_exp: f64) -> impl Strategy<Value = f64> {
    (lo_exp..hi_exp).prop_map(|e| 10f64.powf(e))
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(2000), ..ProptestConfig::default() })]

    #[test]
    fn engineering_round_trip(m in magnitude(-16.0, 16.0), neg in any::<bool>(), sig in 1u8..=8) {
        let x = if neg { -m } else { m };
        let s = format_engineering(x, sig);
        let y = parse_value(&s).unwrap_or_else(|e| panic!("{s}: {e}"));
        prop_assert!((y - x).abs() <= half_ulp(x, sig), "{x} → {s} → {y}");
        // Writing the read value again gives the same text.
        prop_assert_eq!(format_engineering(y, sig), s);
    }

    #[test]
    fn engineering_with_unit_round_trip(m in magnitude(-14.0, 14.0), sig in 1u8..=6, u in 0usize..6) {
        let unit = [Unit::Ohm, Unit::Volt, Unit::Ampere, Unit::Farad, Unit::Hertz, Unit::Second][u];
        let s = format_with_unit(m, sig, unit);
        let p = parse(&s).unwrap_or_else(|e| panic!("{s}: {e}"));
        prop_assert_eq!(p.unit, Some(unit));
        prop_assert!((p.value - m).abs() <= half_ulp(m, sig), "{m} → {s} → {}", p.value);
    }

    #[test]
    fn rkm_round_trip(m in magnitude(-3.0, 15.0), sig in 1u8..=6) {
        let s = match format_rkm(m, sig) {
            Ok(s) => s,
            Err(e) => {
                // Only when rounding carries the value to 1e15 Ω, past the last letter (T).
                prop_assert_eq!(e, NotationError::OutOfRange);
                prop_assert!(parse_value(&format_engineering(m, sig)).unwrap() >= 1e15, "{}", m);
                return Ok(());
            }
        };
        // IEC 60062: digits, one letter standing for the point, digits; no point, no sign.
        prop_assert!(!s.contains('.') && !s.contains('-'), "{s}");
        prop_assert_eq!(s.chars().filter(|c| c.is_ascii_alphabetic()).count(), 1, "{}", s);
        let p = parse(&s).unwrap_or_else(|e| panic!("{s}: {e}"));
        prop_assert!((p.value - m).abs() <= half_ulp(m, sig), "{m} → {s} → {}", p.value);
        prop_assert_eq!(format_rkm(p.value, sig).unwrap(), s.clone());
        // Both notations name the same value.
        prop_assert_eq!(parse_value(&format_engineering(m, sig)).unwrap(), p.value);
        if s.chars().last().is_some_and(|c| c.is_ascii_digit()) {
            prop_assert_eq!(p.notation, Notation::Rkm);
        }
    }

    #[test]
    fn std_shortest_exponent_form_reads_back_exactly(bits in any::<u64>()) {
        let x = f64::from_bits(bits);
        prop_assume!(x.is_finite() && x.abs() > 1e-300);
        // `{:e}` is the shortest text that parses back to x (Rust std), so ours must give x too.
        let s = format!("{x:e}");
        prop_assert_eq!(parse_value(&s).unwrap(), x, "{}", s);
    }

    #[test]
    fn junk_never_panics(s in "\\PC{0,12}") {
        match parse(&s) {
            Ok(p) => prop_assert!(p.value.is_finite()),
            Err(e) => prop_assert!(!e.to_string().is_empty()),
        }
    }

    #[test]
    fn near_miss_junk_never_panics(s in "[-+0-9.eEkKmMRrunpµΩ ]{0,10}") {
        if let Ok(p) = parse(&s) {
            prop_assert!(p.value.is_finite());
        }
    }
}

#[test]
fn positions_count_characters_not_bytes() {
    // 'µ' and 'Ω' take two bytes each in UTF-8; positions are in characters.
    let e = parse("2.2µΩx").unwrap_err();
    assert_eq!(e.to_string(), "unexpected 'x' at position 6");
}
