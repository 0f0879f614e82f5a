//! The E-series tables against IEC 60063 (preferred number series for resistors and capacitors).
//! The tables below are typed out again from the standard's table (from memory; the same tables
//! as shared/DOMAIN.md §3), not generated from the module. DOMAIN §3 also records that the seven
//! tables agree with those of the PyPI package `eseries` 1.2.1 (from memory).

use hysteron_core::eseries::ESeries;

// IEC 60063, E3 / E6 / E12 / E24: two significant digits.
const E3: [u16; 3] = [10, 22, 47];
const E6: [u16; 6] = [10, 15, 22, 33, 47, 68];
const E12: [u16; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];
const E24: [u16; 24] = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91];

// IEC 60063, E48 / E96 / E192: three significant digits.
const E48: [u16; 48] = [
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226, 237, 249, 261, 274, 287,
    301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536, 562, 590, 619, 649, 681, 715, 750, 787, 825, 866,
    909, 953,
];
const E96: [u16; 96] = [
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169,
    174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294,
    301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511,
    523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887,
    909, 931, 953, 976,
];
const E192: [u16; 192] = [
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

fn table(s: ESeries) -> &'static [u16] {
    match s {
        ESeries::E3 => &E3,
        ESeries::E6 => &E6,
        ESeries::E12 => &E12,
        ESeries::E24 => &E24,
        ESeries::E48 => &E48,
        ESeries::E96 => &E96,
        ESeries::E192 => &E192,
    }
}

#[test]
fn module_tables_equal_the_standard() {
    for s in ESeries::ALL {
        let got: Vec<u16> = s.digits().collect();
        assert_eq!(got, table(s), "{s} differs from IEC 60063");
    }
}

#[test]
fn coarse_series_are_every_kth_value_of_the_fine_ones() {
    // IEC 60063: E12, E6, E3 take every 2nd, 4th, 8th E24 value; E96, E48 every 2nd, 4th E192 value.
    let every = |t: &[u16], k: usize| t.iter().copied().step_by(k).collect::<Vec<u16>>();
    assert_eq!(every(&E24, 2), E12);
    assert_eq!(every(&E24, 4), E6);
    assert_eq!(every(&E24, 8), E3);
    assert_eq!(every(&E192, 2), E96);
    assert_eq!(every(&E192, 4), E48);
}

/// 10^(i/N) rounded to 2 (N ≤ 24) or 3 (N ≥ 48) significant digits — IEC 60063's rule before
/// its exceptions.
fn formula(n: usize, i: usize) -> u16 {
    let scale = if n <= 24 { 10.0 } else { 100.0 };
    (10f64.powf(i as f64 / n as f64) * scale).round() as u16
}

#[test]
fn formula_holds_except_the_tabulated_deviations() {
    // IEC 60063 (from memory; DOMAIN §3): E24 keeps 2.7 3.0 3.3 3.6 3.9 4.3 4.7 where the formula
    // gives 2.6 2.9 3.2 3.5 3.8 4.2 4.6, and 8.2 where it gives 8.3; the subsets inherit those;
    // E48 and E96 have none; E192 has 9.20 where the formula gives 9.19.
    let expected: [(ESeries, &[(u16, u16)]); 7] = [
        (ESeries::E24, &[(27, 26), (30, 29), (33, 32), (36, 35), (39, 38), (43, 42), (47, 46), (82, 83)]),
        (ESeries::E12, &[(27, 26), (33, 32), (39, 38), (47, 46), (82, 83)]),
        (ESeries::E6, &[(33, 32), (47, 46)]),
        (ESeries::E3, &[(47, 46)]),
        (ESeries::E48, &[]),
        (ESeries::E96, &[]),
        (ESeries::E192, &[(920, 919)]),
    ];
    for (s, deviations) in expected {
        let t = table(s);
        let found: Vec<(u16, u16)> =
            (0..t.len()).filter(|&i| formula(t.len(), i) != t[i]).map(|i| (t[i], formula(t.len(), i))).collect();
        assert_eq!(found, deviations, "{s}: (table, formula) pairs that differ");
    }
}

#[test]
fn values_span_decades_with_the_standard_digits() {
    let v = ESeries::E12.values_between(1.0, 1e6);
    assert_eq!(v.len(), 12 * 6 + 1);
    assert_eq!(v[..12].iter().map(|x| (x * 10.0).round() as u16).collect::<Vec<_>>(), E12);
    assert_eq!(v[12 * 5 + 8], 470e3);
    assert_eq!(ESeries::E96.values_between(1e3, 1e6)[1], 1020.0);
}

#[test]
fn nearest_by_ratio_not_by_difference() {
    // DOMAIN §3: 4.498 kΩ is nearer 4.3k by difference, nearer 4.7k by ratio (|ln 4.498/4.3| =
    // 0.0450 > |ln 4.7/4.498| = 0.0439).
    assert!((4498f64 / 4300.0).ln().abs() > (4700f64 / 4498.0).ln().abs());
    assert_eq!(ESeries::E24.nearest(4498.0), Some(4700.0));
    // Exhaustive against the definition over two decades of E12: minimise |ln(x/v)|.
    let vals = ESeries::E12.values_between(0.5, 200.0);
    for k in 0..2000 {
        let x = 1.0 * (100f64).powf(k as f64 / 2000.0);
        let by_ratio = vals.iter().copied().min_by(|a, b| (x / a).ln().abs().total_cmp(&(x / b).ln().abs())).unwrap();
        assert_eq!(ESeries::E12.nearest(x), Some(by_ratio), "x = {x}");
    }
}

#[test]
fn usual_tolerances() {
    // IEC 60063 pairing (from memory; DOMAIN §3): E6 20, E12 10, E24 5, E48 2, E96 1, E192 ≤ 0.5 %.
    let t: Vec<f64> = ESeries::ALL.iter().map(|s| s.usual_tolerance_pct()).collect();
    assert_eq!(t, vec![40.0, 20.0, 10.0, 5.0, 2.0, 1.0, 0.5]);
}
