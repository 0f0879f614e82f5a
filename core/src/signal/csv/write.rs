//! Exporting waveforms as CSV with exact round trips: each number in Rust's shortest round-trip
//! form (`{}`, or `{:e}` for very large or small magnitudes), so reading it back with
//! [`super::parse_csv`] gives bit-identical values.

use super::{DecimalMark, Separator};
use crate::csv_text::{CsvText, LineEnd};
use crate::signal::Times;
use serde::{Deserialize, Serialize};
use std::fmt::Write as _;

/// How to write a CSV file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct CsvWriteOptions {
    /// Field separator.
    pub separator: Separator,
    /// Decimal mark (a comma needs a semicolon or tab separator; with a comma separator a point is used).
    pub decimal: DecimalMark,
    /// Header line (column names), or none.
    pub header: Option<[String; 2]>,
}

impl Default for CsvWriteOptions {
    fn default() -> Self {
        CsvWriteOptions {
            separator: Separator::Comma,
            decimal: DecimalMark::Point,
            header: Some(["time_s".to_string(), "volts".to_string()]),
        }
    }
}

/// Writes `x` into `out` (cleared first) in shortest round-trip form with the decimal mark.
fn push_number(out: &mut String, scratch: &mut String, x: f64, decimal: DecimalMark) {
    out.clear();
    scratch.clear();
    let a = x.abs();
    if x == 0.0 || (1e-5..1e16).contains(&a) {
        let _ = write!(scratch, "{x}");
    } else {
        let _ = write!(scratch, "{x:e}");
    }
    match decimal {
        DecimalMark::Point => out.push_str(scratch),
        DecimalMark::Comma => out.extend(scratch.chars().map(|c| if c == '.' { ',' } else { c })),
    }
}

/// Writes time and voltage columns, one row per sample, in shortest round-trip form
/// (`{}` for magnitudes from 1e-5 to 1e16, `{:e}` otherwise), '\n' line ends.
/// The header names are quoted where RFC 4180 asks (the project's one CSV writer,
/// [`crate::csv_text`]).
pub fn write_csv(times: Times<'_>, volts: &[f64], options: &CsvWriteOptions) -> String {
    let sep = options.separator.byte() as u8;
    let decimal = if options.separator == Separator::Comma { DecimalMark::Point } else { options.decimal };
    let mut out = CsvText::new(sep, LineEnd::Lf, volts.len() * 32 + 64);
    let (mut t_text, mut v_text, mut scratch) = (String::new(), String::new(), String::new());
    if let Some([a, b]) = &options.header {
        out.row([a, b]);
    }
    for (i, &v) in volts.iter().enumerate() {
        push_number(&mut t_text, &mut scratch, times.at(i), decimal);
        push_number(&mut v_text, &mut scratch, v, decimal);
        out.row([&t_text, &v_text]);
    }
    out.finish()
}

