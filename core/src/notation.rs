// Over 600 lines: one job, numbers in and out (engineering notation, the RKM code, plain decimals); about 200 lines are round-trip tests.
//! Engineering notation and the IEC 60062 RKM code, in and out.
//!
//! **Reading** ([`parse`]) accepts, with optional spaces between the parts:
//! - engineering form: `[sign] digits [. digits] [e|E [sign] digits] [prefix] [unit]`, e.g. `4.7k`,
//!   `2.2µ`, `2.2u`, `100n`, `1.5M`, `3.3`, `1e3`, `-1.25 mV`, `10 kΩ`. Prefixes are the SI ones
//!   f p n u/µ m k M G T, case-sensitive as in SI (`m` is milli, `M` mega), plus `K` for kilo and
//!   `meg` (any case) for mega, both common on schematics. The sign may be `-`, `+` or `−` (U+2212);
//! - the RKM code of IEC 60062 (from memory; shared/DOMAIN.md §3): the letter stands for the
//!   decimal point and sets the multiplier, R 1, K/k 10³, M 10⁶, G/g 10⁹, T/t 10¹², and for
//!   capacitors p 10⁻¹², n 10⁻⁹, u/µ 10⁻⁶: `4K7`, `4k7`, `R47`, `2M2`, `1n5`, `100R`, `0R`, `4K99`.
//!   An upper-case tolerance letter may follow: B 0.1, C 0.25, D 0.5, F 1, G 2, J 5, K 10, M 20 %
//!   (`4K7J`, `4K7K` = 4.7 kΩ ± 10 %: the first letter is always the multiplier). Lower-case `m`
//!   as the decimal letter (`4m7`) is refused: it reads as milli in capacitor codes and is a
//!   frequent typo for mega. Decimal points (`4.7K7`, `4K7.5`), a second multiplier (`4K7K7`) and
//!   signs are refused too;
//! - a unit suffix: `Ω` (U+03A9 or U+2126), `ohm`/`ohms` (any case), `V`, `A`, `F`, `Hz`, `s`.
//!
//! How a text is told apart: digits followed directly by an RKM letter and a digit (`4K7`), or by
//! `R` (`100R`), are RKM; digits then an upper-case K, M, G or T then a tolerance letter are RKM
//! with a tolerance (`10KF` = 10 kΩ ± 1 %; write `10 kF` for ten kilofarads); everything else is
//! engineering form. `10k` reads as 10 000 either way. `4E7` is the exponent form 4×10⁷ (IEC 60062
//! does not use E as a decimal letter).
//!
//! Errors name the 1-based character position and the offending character.
//! The reader does not allocate: it builds the canonical decimal text on the stack and lets the
//! standard library's correctly rounded float parser read it, so `4.7k` is exactly `4700.0`.
//!
//! **Writing**: [`format_engineering`] (`4.7 k`, `-1.5 m`, `3.3`), [`format_with_unit`]
//! (`4.7 kΩ`) and [`format_rkm`] (`4K7`, `R47`, `100R`, `1M5`, `0R`) round to a number of
//! significant digits and drop trailing zeros (`1K`, not the also-common `1K0`; both read back).

use serde::{Deserialize, Serialize};
use std::fmt;

/// Most digits accepted in one number (integer and fraction together).
pub const MAX_DIGITS: usize = 40;

/// A physical unit that may follow a value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Unit {
    /// Ohm (Ω).
    Ohm,
    /// Volt (V).
    Volt,
    /// Ampere (A).
    Ampere,
    /// Farad (F).
    Farad,
    /// Hertz (Hz).
    Hertz,
    /// Second (s).
    Second,
    /// Kelvin (K).
    Kelvin,
    /// A dimensionless ratio (current gain...), written without a symbol.
    Ratio,
}

impl Unit {
    /// The unit's symbol as written after a value.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Ohm => "Ω",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Farad => "F",
            Unit::Hertz => "Hz",
            Unit::Second => "s",
            Unit::Kelvin => "K",
            Unit::Ratio => "",
        }
    }
}

/// Which written form a value was read from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Notation {
    /// Decimal number with an optional exponent and SI prefix (`4.7k`, `1e3`).
    Engineering,
    /// IEC 60062 RKM code (`4K7`, `R47`).
    Rkm,
}

/// A value read from text.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Parsed {
    /// The value in base units (ohms, volts, farads…).
    pub value: f64,
    /// The unit written after it, if any.
    pub unit: Option<Unit>,
    /// The RKM tolerance letter's tolerance, percent, if one was written.
    pub tolerance_pct: Option<f64>,
    /// The form the text was in.
    pub notation: Notation,
}

/// Why a text is not a value. Positions count characters from 1.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum NotationError {
    /// Nothing but spaces.
    Empty,
    /// A character that cannot stand there.
    Unexpected {
        /// The character found.
        found: char,
        /// Its 1-based position.
        position: usize,
    },
    /// A number was expected but no digit came.
    MissingDigits {
        /// 1-based position where a digit was expected.
        position: usize,
    },
    /// `e`/`E` without exponent digits after it.
    MissingExponent {
        /// 1-based position of the `e`.
        position: usize,
    },
    /// Lower-case `m` used as the RKM decimal letter: milli or mega?
    AmbiguousMilli {
        /// 1-based position of the `m`.
        position: usize,
    },
    /// A decimal point in an RKM code (`4.7K7`, `4K7.5`).
    DecimalPointInRkm {
        /// 1-based position of the point.
        position: usize,
    },
    /// More after an RKM code's tolerance letter, such as a second multiplier (`4K7K7`).
    SecondMultiplier {
        /// The character found.
        found: char,
        /// Its 1-based position.
        position: usize,
    },
    /// More than [`MAX_DIGITS`] digits.
    TooManyDigits {
        /// 1-based position of the first digit beyond the limit.
        position: usize,
    },
    /// The value is too large or too small for a double (or, for RKM output, for the letters).
    OutOfRange,
    /// A value that cannot be written in the requested form (negative or not finite for RKM).
    NotWritable {
        /// Why.
        reason: String,
    },
}

impl fmt::Display for NotationError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NotationError::Empty => write!(f, "enter a value, e.g. 4.7k or 4K7"),
            NotationError::Unexpected { found, position } => write!(f, "unexpected '{found}' at position {position}"),
            NotationError::MissingDigits { position } => write!(f, "expected a digit at position {position}"),
            NotationError::MissingExponent { position } => {
                write!(f, "exponent digits missing after 'e' at position {position}")
            }
            NotationError::AmbiguousMilli { position } => write!(
                f,
                "lower-case 'm' at position {position} is ambiguous in a code: write 4.7m for milli or 4M7 for mega"
            ),
            NotationError::DecimalPointInRkm { position } => write!(
                f,
                "unexpected '.' at position {position}: a code like 4K7 uses its letter as the decimal point (write 4K7 or 4.7k)"
            ),
            NotationError::SecondMultiplier { found, position } => write!(
                f,
                "unexpected '{found}' at position {position}: a code has one multiplier letter and at most one tolerance letter"
            ),
            NotationError::TooManyDigits { position } => {
                write!(f, "too many digits at position {position}: use at most {MAX_DIGITS}")
            }
            NotationError::OutOfRange => write!(f, "value out of range: use a smaller exponent or prefix"),
            NotationError::NotWritable { reason } => write!(f, "{reason}"),
        }
    }
}

impl std::error::Error for NotationError {}

/// A character cursor that counts 1-based character positions.
struct Cursor<'a> {
    rest: &'a str,
    /// 1-based position of the next character.
    pos: usize,
}

impl<'a> Cursor<'a> {
    fn peek(&self) -> Option<char> {
        self.rest.chars().next()
    }

    fn peek2(&self) -> Option<char> {
        let mut it = self.rest.chars();
        it.next();
        it.next()
    }

    fn bump(&mut self) -> Option<char> {
        let c = self.peek()?;
        self.rest = &self.rest[c.len_utf8()..];
        self.pos += 1;
        Some(c)
    }

    fn skip_spaces(&mut self) {
        while matches!(self.peek(), Some(c) if c.is_whitespace()) {
            self.bump();
        }
    }

    /// Consumes a run of ASCII digits and returns it.
    fn digits(&mut self) -> &'a str {
        let end = self.rest.bytes().take_while(u8::is_ascii_digit).count();
        let (d, rest) = self.rest.split_at(end);
        self.rest = rest;
        self.pos += end;
        d
    }

    fn unexpected(&self) -> NotationError {
        match self.peek() {
            Some(found) => NotationError::Unexpected { found, position: self.pos },
            None => NotationError::MissingDigits { position: self.pos },
        }
    }
}

/// The RKM decimal letter's power of ten, for letters that may serve as one.
fn rkm_letter_exp(c: char) -> Option<i32> {
    Some(match c {
        'R' | 'r' => 0,
        'K' | 'k' => 3,
        'M' | 'm' => 6,
        'G' | 'g' => 9,
        'T' | 't' => 12,
        'p' => -12,
        'n' => -9,
        'u' | 'µ' | 'μ' => -6,
        _ => return None,
    })
}

/// The tolerance of an IEC 60062 tolerance letter, percent (DOMAIN §3, from memory).
pub fn tolerance_letter_pct(c: char) -> Option<f64> {
    Some(match c {
        'B' => 0.1,
        'C' => 0.25,
        'D' => 0.5,
        'F' => 1.0,
        'G' => 2.0,
        'J' => 5.0,
        'K' => 10.0,
        'M' => 20.0,
        _ => return None,
    })
}

/// The SI prefix's power of ten (plus `K` for kilo).
fn prefix_exp(c: char) -> Option<i32> {
    Some(match c {
        'f' => -15,
        'p' => -12,
        'n' => -9,
        'u' | 'µ' | 'μ' => -6,
        'm' => -3,
        'k' | 'K' => 3,
        'M' => 6,
        'G' => 9,
        'T' => 12,
        _ => return None,
    })
}

/// Reads a unit at the cursor, if one is there.
fn take_unit(cur: &mut Cursor<'_>) -> Option<Unit> {
    let r = cur.rest;
    let (unit, chars) = if r.starts_with('Ω') || r.starts_with('Ω') {
        (Unit::Ohm, 1)
    } else if r.len() >= 4 && r.is_char_boundary(4) && r[..4].eq_ignore_ascii_case("ohms") {
        (Unit::Ohm, 4)
    } else if r.len() >= 3 && r.is_char_boundary(3) && r[..3].eq_ignore_ascii_case("ohm") {
        (Unit::Ohm, 3)
    } else if r.starts_with("Hz") {
        (Unit::Hertz, 2)
    } else if r.starts_with('V') {
        (Unit::Volt, 1)
    } else if r.starts_with('A') {
        (Unit::Ampere, 1)
    } else if r.starts_with('F') {
        (Unit::Farad, 1)
    } else if r.starts_with('s') {
        (Unit::Second, 1)
    } else {
        return None;
    };
    for _ in 0..chars {
        cur.bump();
    }
    Some(unit)
}

/// After the value: optional spaces, optional unit, optional spaces, then the end.
fn finish_unit(cur: &mut Cursor<'_>) -> Result<Option<Unit>, NotationError> {
    cur.skip_spaces();
    let unit = take_unit(cur);
    cur.skip_spaces();
    match cur.peek() {
        None => Ok(unit),
        Some(_) => Err(cur.unexpected()),
    }
}

/// The canonical decimal text of a number, assembled on the stack.
struct DecimalText {
    buf: [u8; 64],
    len: usize,
}

impl DecimalText {
    fn push(&mut self, b: u8) {
        // Capacity is checked by the caller (at most 1 + 40 + 1 + 1 + 12 bytes).
        if let Some(slot) = self.buf.get_mut(self.len) {
            *slot = b;
            self.len += 1;
        }
    }

    fn push_str(&mut self, s: &str) {
        for b in s.bytes() {
            self.push(b);
        }
    }

    fn push_int(&mut self, mut v: i64) {
        if v < 0 {
            self.push(b'-');
            v = -v;
        }
        let mut tmp = [0u8; 20];
        let mut n = 0;
        loop {
            tmp[n] = b'0' + (v % 10) as u8;
            n += 1;
            v /= 10;
            if v == 0 {
                break;
            }
        }
        for i in (0..n).rev() {
            self.push(tmp[i]);
        }
    }
}

/// Builds the double for sign, digits and a power of ten, correctly rounded.
fn make_value(neg: bool, int: &str, frac: &str, exp10: i64, digits_at: usize) -> Result<f64, NotationError> {
    if int.len() + frac.len() > MAX_DIGITS {
        // The 41st digit; a point or code letter sits between the integer and fraction digits.
        let gap = usize::from(int.len() < MAX_DIGITS);
        return Err(NotationError::TooManyDigits { position: digits_at + MAX_DIGITS + gap });
    }
    let mut t = DecimalText { buf: [0; 64], len: 0 };
    if neg {
        t.push(b'-');
    }
    t.push_str(if int.is_empty() { "0" } else { int });
    if !frac.is_empty() {
        t.push(b'.');
        t.push_str(frac);
    }
    t.push(b'e');
    t.push_int(exp10.clamp(-100_000, 100_000));
    let text = std::str::from_utf8(&t.buf[..t.len]).map_err(|_| NotationError::OutOfRange)?;
    let v: f64 = text.parse().map_err(|_| NotationError::OutOfRange)?;
    let nonzero = int.bytes().chain(frac.bytes()).any(|b| b != b'0');
    if !v.is_finite() || (nonzero && v == 0.0) {
        return Err(NotationError::OutOfRange);
    }
    // Keep a written zero unsigned so "-0" reads as 0.
    Ok(if v == 0.0 { 0.0 } else { v })
}

/// Reads a value written in engineering notation or as an RKM code (see the module notes).
pub fn parse(text: &str) -> Result<Parsed, NotationError> {
    let mut cur = Cursor { rest: text, pos: 1 };
    cur.skip_spaces();
    if cur.peek().is_none() {
        return Err(NotationError::Empty);
    }
    let sign_at = cur.pos;
    let sign = match cur.peek() {
        Some(c @ ('-' | '−' | '+')) => {
            cur.bump();
            Some(c)
        }
        _ => None,
    };
    let neg = matches!(sign, Some('-' | '−'));
    let digits_at = cur.pos;
    let int = cur.digits();

    // RKM? A decimal letter followed by a digit, or R, or upper-case K/M/G/T + tolerance letter.
    if let Some(letter) = cur.peek() {
        if let Some(exp) = rkm_letter_exp(letter) {
            let next = cur.peek2();
            let is_rkm = next.is_some_and(|c| c.is_ascii_digit())
                || matches!(letter, 'R' | 'r')
                || (matches!(letter, 'K' | 'M' | 'G' | 'T')
                    && !int.is_empty()
                    && next.is_some_and(|c| tolerance_letter_pct(c).is_some()));
            if is_rkm {
                if letter == 'm' {
                    return Err(NotationError::AmbiguousMilli { position: cur.pos });
                }
                if let Some(found) = sign {
                    return Err(NotationError::Unexpected { found, position: sign_at });
                }
                return parse_rkm(&mut cur, int, exp, digits_at);
            }
        }
    }

    // Engineering form.
    let mut frac = "";
    let mut point_at = None;
    if cur.peek() == Some('.') {
        point_at = Some(cur.pos);
        cur.bump();
        frac = cur.digits();
    }
    if int.is_empty() && frac.is_empty() {
        return Err(match cur.peek() {
            Some(c) if point_at.is_none() && prefix_exp(c).is_none() && rkm_letter_exp(c).is_none() => cur.unexpected(),
            _ => NotationError::MissingDigits { position: cur.pos },
        });
    }
    let mut exp10: i64 = 0;
    if matches!(cur.peek(), Some('e' | 'E')) {
        let e_at = cur.pos;
        cur.bump();
        let eneg = match cur.peek() {
            Some('-' | '−') => {
                cur.bump();
                true
            }
            Some('+') => {
                cur.bump();
                false
            }
            _ => false,
        };
        let ed = cur.digits();
        if ed.is_empty() {
            return Err(NotationError::MissingExponent { position: e_at });
        }
        let mut e: i64 = 0;
        for b in ed.bytes() {
            e = (e * 10 + i64::from(b - b'0')).min(1_000_000);
        }
        exp10 = if eneg { -e } else { e };
    }
    cur.skip_spaces();
    if let Some(c) = cur.peek() {
        let rest = cur.rest;
        if rest.len() >= 3 && rest.is_char_boundary(3) && rest[..3].eq_ignore_ascii_case("meg") {
            for _ in 0..3 {
                cur.bump();
            }
            exp10 += 6;
        } else if let Some(p) = prefix_exp(c) {
            cur.bump();
            exp10 += i64::from(p);
            // "4.7K7": a point, then a code letter followed by digits.
            if cur.peek().is_some_and(|d| d.is_ascii_digit()) {
                return Err(match point_at {
                    Some(position) => NotationError::DecimalPointInRkm { position },
                    None => cur.unexpected(),
                });
            }
        }
    }
    let unit = finish_unit(&mut cur)?;
    let value = make_value(neg, int, frac, exp10, digits_at)?;
    Ok(Parsed { value, unit, tolerance_pct: None, notation: Notation::Engineering })
}

/// The RKM branch of [`parse`]: the cursor is on the decimal letter.
fn parse_rkm(cur: &mut Cursor<'_>, int: &str, exp: i32, digits_at: usize) -> Result<Parsed, NotationError> {
    cur.bump();
    let frac = cur.digits();
    if int.is_empty() && frac.is_empty() {
        return Err(NotationError::MissingDigits { position: cur.pos });
    }
    if cur.peek() == Some('.') {
        return Err(NotationError::DecimalPointInRkm { position: cur.pos });
    }
    let mut tolerance_pct = None;
    if let Some(t) = cur.peek().and_then(tolerance_letter_pct) {
        // "F" right after the code is the tolerance letter (1 %), not farad.
        cur.bump();
        tolerance_pct = Some(t);
    }
    if let Some(c) = cur.peek() {
        if c.is_ascii_digit() || c == '.' || rkm_letter_exp(c).is_some() {
            return Err(NotationError::SecondMultiplier { found: c, position: cur.pos });
        }
    }
    let unit = finish_unit(cur)?;
    let value = make_value(false, int, frac, i64::from(exp), digits_at)?;
    Ok(Parsed { value, unit, tolerance_pct, notation: Notation::Rkm })
}

/// Reads just the value of a text (see [`parse`]).
pub fn parse_value(text: &str) -> Result<f64, NotationError> {
    parse(text).map(|p| p.value)
}

/// A finite non-zero magnitude rounded to `sig` significant digits: the digit string (exactly
/// `sig` digits) and the decimal exponent of its first digit.
fn round_digits(abs: f64, sig: usize) -> (String, i32) {
    // `{:.N e}` rounds the exact binary value to N+1 significant decimal digits.
    let s = format!("{:.*e}", sig - 1, abs);
    let (mant, exp) = s.split_once('e').unwrap_or((&s, "0"));
    let digits: String = mant.chars().filter(char::is_ascii_digit).collect();
    (digits, exp.parse().unwrap_or(0))
}

/// Splits a digit string with the decimal point after `int_len` digits (padding with zeros) and
/// drops trailing zeros of the fraction.
fn place_point(digits: &str, int_len: usize) -> (String, String) {
    let mut d = digits.to_string();
    while d.len() < int_len {
        d.push('0');
    }
    let (i, f) = d.split_at(int_len);
    (i.to_string(), f.trim_end_matches('0').to_string())
}

/// The SI prefix for a power of ten that is a multiple of 3 in −15 … 12.
fn prefix_for(exp3: i32) -> Option<&'static str> {
    Some(match exp3 {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "µ",
        -3 => "m",
        0 => "",
        3 => "k",
        6 => "M",
        9 => "G",
        12 => "T",
        _ => return None,
    })
}

/// Writes a value in engineering notation with at most `significant_digits` significant digits
/// (clamped to 1 … 17; trailing zeros dropped): `4.7 k`, `-1.5 m`, `3.3`, `100 n`. Values beyond
/// the prefixes f … T are written as `1.5e-18`; non-finite values as `NaN`, `inf`, `-inf`.
pub fn format_engineering(value: f64, significant_digits: u8) -> String {
    format_parts(value, significant_digits, "")
}

/// As [`format_engineering`] with a unit symbol: `4.7 kΩ`, `3.3 V`, `100 nF`.
pub fn format_with_unit(value: f64, significant_digits: u8, unit: Unit) -> String {
    format_parts(value, significant_digits, unit.symbol())
}

fn format_parts(value: f64, significant_digits: u8, unit: &str) -> String {
    let space_unit = |s: String| if unit.is_empty() { s } else { format!("{s} {unit}") };
    if !value.is_finite() {
        return space_unit(format!("{value}"));
    }
    if value == 0.0 {
        return space_unit("0".to_string());
    }
    let sig = usize::from(significant_digits.clamp(1, 17));
    let sign = if value < 0.0 { "-" } else { "" };
    let (digits, exp) = round_digits(value.abs(), sig);
    let exp3 = exp.div_euclid(3) * 3;
    let Some(prefix) = prefix_for(exp3) else {
        let (i, f) = place_point(&digits, 1);
        let mant = if f.is_empty() { i } else { format!("{i}.{f}") };
        return space_unit(format!("{sign}{mant}e{exp}"));
    };
    let (i, f) = place_point(&digits, (exp - exp3) as usize + 1);
    let number = if f.is_empty() { format!("{sign}{i}") } else { format!("{sign}{i}.{f}") };
    if prefix.is_empty() && unit.is_empty() {
        number
    } else {
        format!("{number} {prefix}{unit}")
    }
}

/// Writes a resistance as an IEC 60062 RKM code with at most `significant_digits` significant
/// digits (clamped to 1 … 17): the letter (R, K, M, G, T) puts the mantissa in [1, 1000) and stands
/// for the decimal point; the fraction loses trailing zeros (`4K7`, `100R`, `1K`, `1M5`); below
/// 1 Ω the code starts with R (`R47`, `R047`); zero is `0R`.
pub fn format_rkm(value_ohm: f64, significant_digits: u8) -> Result<String, NotationError> {
    if !value_ohm.is_finite() || value_ohm < 0.0 {
        return Err(NotationError::NotWritable {
            reason: format!("an RKM code needs a finite resistance of zero or more (got {value_ohm})"),
        });
    }
    if value_ohm == 0.0 {
        return Ok("0R".to_string());
    }
    let sig = usize::from(significant_digits.clamp(1, 17));
    let (digits, exp) = round_digits(value_ohm, sig);
    if exp < 0 {
        let zeros = "0".repeat((-exp - 1) as usize);
        return Ok(format!("R{zeros}{}", digits.trim_end_matches('0')));
    }
    let group = exp / 3;
    let letter = match group {
        0 => 'R',
        1 => 'K',
        2 => 'M',
        3 => 'G',
        4 => 'T',
        _ => return Err(NotationError::OutOfRange),
    };
    let (i, f) = place_point(&digits, (exp - group * 3) as usize + 1);
    Ok(format!("{i}{letter}{f}"))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(s: &str) -> f64 {
        parse_value(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    #[test]
    fn engineering_forms() {
        assert_eq!(v("4.7k"), 4700.0);
        assert_eq!(v("2.2µ"), 2.2e-6);
        assert_eq!(v("2.2μ"), 2.2e-6);
        assert_eq!(v("2.2u"), 2.2e-6);
        assert_eq!(v("100n"), 100e-9);
        assert_eq!(v("1.5M"), 1.5e6);
        assert_eq!(v("3.3"), 3.3);
        assert_eq!(v("10k"), 10e3);
        assert_eq!(v("1e3"), 1e3);
        assert_eq!(v("1E-3"), 1e-3);
        assert_eq!(v(" -1.25 mV "), -1.25e-3);
        assert_eq!(v("−2"), -2.0);
        assert_eq!(v("+.5"), 0.5);
        assert_eq!(v("10 kΩ"), 10e3);
        assert_eq!(v("10kohm"), 10e3);
        assert_eq!(v("1 Meg"), 1e6);
        assert_eq!(v("1m"), 1e-3);
        assert_eq!(v("47 pF"), 47e-12);
        assert_eq!(v("10 kHz"), 10e3);
        assert_eq!(v("5 ms"), 5e-3);
        assert_eq!(v("-0"), 0.0);
        assert_eq!(parse("3.3 V").unwrap().unit, Some(Unit::Volt));
        assert_eq!(parse("10kF").unwrap().unit, Some(Unit::Farad));
    }

    #[test]
    fn rkm_forms() {
        assert_eq!(v("4K7"), 4700.0);
        assert_eq!(v("4k7"), 4700.0);
        assert_eq!(v("R47"), 0.47);
        assert_eq!(v("2M2"), 2.2e6);
        assert_eq!(v("1n5"), 1.5e-9);
        assert_eq!(v("4u7"), 4.7e-6);
        assert_eq!(v("100R"), 100.0);
        assert_eq!(v("0R"), 0.0);
        assert_eq!(v("4K99"), 4990.0);
        assert_eq!(v("1K0"), 1000.0);
        let p = parse("4K7K").unwrap();
        assert_eq!((p.value, p.tolerance_pct, p.notation), (4700.0, Some(10.0), Notation::Rkm));
        let p = parse("10KF").unwrap();
        assert_eq!((p.value, p.tolerance_pct, p.unit), (10e3, Some(1.0), None));
        assert_eq!(parse("4K7J").unwrap().tolerance_pct, Some(5.0));
        assert_eq!(parse("4K7 Ω").unwrap().unit, Some(Unit::Ohm));
    }

    #[test]
    fn junk_names_position_and_character() {
        assert_eq!(parse(""), Err(NotationError::Empty));
        assert_eq!(parse("   "), Err(NotationError::Empty));
        assert_eq!(parse("4.7x"), Err(NotationError::Unexpected { found: 'x', position: 4 }));
        assert_eq!(parse("4.7x").unwrap_err().to_string(), "unexpected 'x' at position 4");
        assert_eq!(parse("k"), Err(NotationError::MissingDigits { position: 1 }));
        assert_eq!(parse("1e"), Err(NotationError::MissingExponent { position: 2 }));
        assert_eq!(parse("4m7"), Err(NotationError::AmbiguousMilli { position: 2 }));
        assert_eq!(parse("4K7K7"), Err(NotationError::SecondMultiplier { found: '7', position: 5 }));
        assert_eq!(parse("4.7K7"), Err(NotationError::DecimalPointInRkm { position: 2 }));
        assert_eq!(parse("4K7.5"), Err(NotationError::DecimalPointInRkm { position: 4 }));
        assert_eq!(parse("-4K7"), Err(NotationError::Unexpected { found: '-', position: 1 }));
        assert_eq!(parse("R"), Err(NotationError::MissingDigits { position: 2 }));
        assert_eq!(parse("1e999"), Err(NotationError::OutOfRange));
        assert_eq!(parse("1e-999"), Err(NotationError::OutOfRange));
        assert!(parse("1..2").is_err());
        assert!(parse("1 2").is_err());
        assert!(parse("4K7KK").is_err());
        assert!(parse("NaN").is_err());
        assert!(parse("inf").is_err());
        assert!(matches!(parse(&"1".repeat(60)), Err(NotationError::TooManyDigits { position: 41 })));
        assert_eq!(parse("5 Vx"), Err(NotationError::Unexpected { found: 'x', position: 4 }));
        assert_eq!(parse("2µ2x"), Err(NotationError::Unexpected { found: 'x', position: 4 }));
    }

    #[test]
    fn engineering_output() {
        assert_eq!(format_engineering(4700.0, 3), "4.7 k");
        assert_eq!(format_engineering(-1.5e-3, 3), "-1.5 m");
        assert_eq!(format_engineering(3.3, 3), "3.3");
        assert_eq!(format_engineering(999.96, 3), "1 k");
        assert_eq!(format_engineering(47e3, 1), "50 k");
        assert_eq!(format_engineering(0.0, 3), "0");
        assert_eq!(format_engineering(2.2e-6, 2), "2.2 µ");
        assert_eq!(format_engineering(1.5e-18, 2), "1.5e-18");
        assert_eq!(format_with_unit(4700.0, 3, Unit::Ohm), "4.7 kΩ");
        assert_eq!(format_with_unit(3.3, 3, Unit::Volt), "3.3 V");
        assert_eq!(format_engineering(f64::NAN, 3), "NaN");
    }

    #[test]
    fn rkm_output() {
        let r = |x, s| format_rkm(x, s).unwrap();
        assert_eq!(r(4700.0, 3), "4K7");
        assert_eq!(r(0.47, 3), "R47");
        assert_eq!(r(0.047, 3), "R047");
        assert_eq!(r(100.0, 3), "100R");
        assert_eq!(r(1000.0, 3), "1K");
        assert_eq!(r(1.5e6, 3), "1M5");
        assert_eq!(r(4990.0, 3), "4K99");
        assert_eq!(r(0.0, 3), "0R");
        assert_eq!(r(4.7, 2), "4R7");
        assert!(format_rkm(-1.0, 3).is_err());
        assert!(format_rkm(f64::INFINITY, 3).is_err());
        assert_eq!(format_rkm(1e16, 3), Err(NotationError::OutOfRange));
    }
}

/// As [`format_rkm`], in the form common on schematics that keeps one digit after a lone
/// multiplier letter, so the letter never ends the code: `1K0`, `2M2`, `4K7`, `10K`, `1R`, `R47`
/// (IEC 60062 lists `1K0` and `1M0` among its examples; from memory, shared/DOMAIN.md §3). Reads
/// back with [`parse`] to the same value as the [`format_rkm`] form.
#[allow(clippy::items_after_test_module)]
pub fn format_rkm_padded(value_ohm: f64, significant_digits: u8) -> Result<String, NotationError> {
    let code = format_rkm(value_ohm, significant_digits)?;
    let lone_digit_then_letter = code.len() == 2
        && code.starts_with(|c: char| c.is_ascii_digit())
        && code.ends_with(|c: char| "KMGT".contains(c));
    Ok(if lone_digit_then_letter { format!("{code}0") } else { code })
}

#[cfg(test)]
mod padded_rkm_tests {
    use super::*;

    #[test]
    fn a_lone_multiplier_letter_gets_one_zero() {
        let r = |x| format_rkm_padded(x, 4).unwrap();
        // IEC 60062 examples (from memory): 1K0, 1M0, 4K7, R47, 100R.
        assert_eq!(r(1000.0), "1K0");
        assert_eq!(r(1e6), "1M0");
        assert_eq!(r(999_960.0), "1M0");
        assert_eq!(r(4700.0), "4K7");
        assert_eq!(r(10e3), "10K");
        assert_eq!(r(1.0), "1R");
        assert_eq!(r(0.47), "R47");
        assert_eq!(r(0.0), "0R");
        assert_eq!(parse_value(&r(3000.0)).unwrap(), 3000.0);
        assert!(format_rkm_padded(-1.0, 4).is_err());
    }
}

/// Writes a value with exactly `decimals` digits after the point (clamped to 0 … 17), as
/// `format!("{:.N}")` does: `24.0`, `0.125`. Non-finite values as `NaN`, `inf`, `-inf`.
pub fn format_fixed(value: f64, decimals: u8) -> String {
    format!("{value:.*}", usize::from(decimals.min(17)))
}

/// As [`format_fixed`], with trailing zeros and a trailing point dropped: `0.1`, `2`, `1.2346`.
pub fn format_fixed_trimmed(value: f64, decimals: u8) -> String {
    let s = format_fixed(value, decimals);
    if !value.is_finite() || !s.contains('.') {
        return s;
    }
    let t = s.trim_end_matches('0').trim_end_matches('.');
    if t == "-0" {
        "0".to_string()
    } else {
        t.to_string()
    }
}

/// Writes a value rounded to `significant_digits` significant digits (clamped to 1 … 17) as a plain
/// decimal number without unit or prefix, in Rust's shortest form of the rounded value: `0.25`,
/// `1235`, `0.0001`. Empty for a non-finite value (a blank cell in a table).
pub fn format_significant(value: f64, significant_digits: u8) -> String {
    if !value.is_finite() {
        return String::new();
    }
    let digits = usize::from(significant_digits.clamp(1, 17)) - 1;
    format!("{value:.digits$e}").parse::<f64>().map(|r| r.to_string()).unwrap_or_default()
}

#[cfg(test)]
mod plain_number_tests {
    use super::*;

    #[test]
    fn fixed_and_trimmed() {
        assert_eq!(format_fixed(24.0, 1), "24.0");
        assert_eq!(format_fixed(0.0125, 3), "0.013"); // 0.0125 is stored slightly above, rounds up
        assert_eq!(format_fixed(f64::INFINITY, 2), "inf");
        assert_eq!(format_fixed_trimmed(0.1, 4), "0.1");
        assert_eq!(format_fixed_trimmed(2.0, 4), "2");
        assert_eq!(format_fixed_trimmed(1.234_56, 4), "1.2346");
        assert_eq!(format_fixed_trimmed(-0.000_01, 4), "0");
        assert_eq!(format_fixed_trimmed(150.0, 0), "150");
        assert_eq!(format_fixed_trimmed(f64::NAN, 4), "NaN");
    }

    #[test]
    fn significant_digits() {
        assert_eq!(format_significant(1234.567, 4), "1235");
        assert_eq!(format_significant(0.000_123_456, 4), "0.0001235");
        assert_eq!(format_significant(0.25, 4), "0.25");
        assert_eq!(format_significant(-47_000.0, 2), "-47000");
        assert_eq!(format_significant(f64::NAN, 4), "");
        assert_eq!(format_significant(f64::NEG_INFINITY, 4), "");
    }
}
