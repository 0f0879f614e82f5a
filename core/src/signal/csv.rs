//! Importing bench captures: CSV of time and voltage as a bench oscilloscope exports it, and
//! exporting waveforms with exact round trips.
//!
//! **Detection.** Unless set by hand, the separator (comma, semicolon or tab), the decimal mark
//! (point, or comma when the separator is not a comma) and the number of header lines are
//! detected from the first [`DETECT_LINES`] lines: every candidate format is tried, the one under
//! which the most lines read as rows of numbers wins; a tie goes to the candidate under which
//! more of those rows are numbers in every field, so `0,5;7;0,001` is three numbers split on
//! semicolons with a decimal comma, not a split on commas (then to the earlier candidate: comma,
//! semicolon, tab with a decimal point, then semicolon and tab with a decimal comma). The lines
//! before its first row of numbers are the header, unless [`CsvOptions::header`] says otherwise:
//! `no` makes the first line data (a line that does not read is a malformed row, never a silent
//! header), `yes` keeps at least one header line; under `auto` the result says that a header was
//! assumed and why ([`CsvFormat::header_reason`]). [`CsvFormat::describe`] says what was detected.
//!
//! **Rows.** A row must have the same number of fields as the first data row; the time and
//! voltage fields must be finite numbers (surrounding spaces and double quotes are ignored; other
//! columns are not read); a number too small for a double (`1e-400`) is an underflow, not a
//! silent zero; time must be finite and increase strictly from row to row. Blank lines are counted
//! and skipped. Every other line is a malformed row, counted and reported with its 1-based line
//! number in the file; none is dropped silently: in strict mode (the default) any malformed row
//! fails the import, otherwise the capture reports the skipped lines beside its data. Only the
//! first [`KEPT_ISSUES`] malformed rows are kept as examples; the rest are counted.
//!
//! **Large files.** [`CsvParser`] takes the text in pieces of any size (split anywhere, even inside
//! a line) so the page can parse a 1,000,000-row file a slice at a time and show progress. It
//! allocates only the output vectors, at most [`KEPT_ISSUES`] examples of malformed rows, the
//! detection buffer (at most [`DETECT_BYTES`]) and one carry-over line buffer (at most
//! [`MAX_LINE_BYTES`]; a longer line is a malformed row), never per row: memory is bounded by the
//! rows accepted, whatever follows them.
//!
//! **Round trips.** [`write_csv`] (module `write`) writes each number in Rust's shortest round-trip
//! form, so reading it back gives bit-identical values.

use super::{Times, MAX_SAMPLES};
use serde::{Deserialize, Serialize};
use std::fmt::{self, Write as _};

mod write;
pub use write::{write_csv, CsvWriteOptions};

/// Lines examined (at most) to detect the format.
pub const DETECT_LINES: usize = 64;

/// Bytes examined (at most) to detect the format: detection starts when either limit is reached.
pub const DETECT_BYTES: usize = 64 * 1024;

/// Malformed rows kept as examples; any further ones are only counted.
pub const KEPT_ISSUES: usize = 20;

/// Longest line read, bytes; a longer line is a malformed row (only its start is kept).
pub const MAX_LINE_BYTES: usize = 64 * 1024;

/// Whether the file starts with a header.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum HeaderMode {
    /// Detect: the lines before the first row of numbers are the header, and the result says so.
    #[default]
    Auto,
    /// There is a header: at least one line is skipped.
    Yes,
    /// There is no header: the first line is data (a line that does not read is a malformed row).
    No,
}

/// Field separator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Separator {
    /// `,`
    Comma,
    /// `;`
    Semicolon,
    /// tab
    Tab,
}

impl Separator {
    fn byte(self) -> char {
        match self {
            Separator::Comma => ',',
            Separator::Semicolon => ';',
            Separator::Tab => '\t',
        }
    }

    fn name(self) -> &'static str {
        match self {
            Separator::Comma => "comma",
            Separator::Semicolon => "semicolon",
            Separator::Tab => "tab",
        }
    }
}

/// Decimal mark inside numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DecimalMark {
    /// `1.5`
    Point,
    /// `1,5` (only with a semicolon or tab separator)
    Comma,
}

/// How to read a CSV file. `None` fields are detected.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct CsvOptions {
    /// Field separator (`None`: detect).
    pub separator: Option<Separator>,
    /// Decimal mark (`None`: detect).
    pub decimal: Option<DecimalMark>,
    /// Number of lines before the data (`None`: detect).
    pub header_lines: Option<usize>,
    /// 0-based column holding the time, seconds.
    pub time_column: usize,
    /// 0-based column holding the voltage, volts.
    pub voltage_column: usize,
    /// When set, the time column is not read: row i is at i·step (for exports without a time column).
    pub time_step_s: Option<f64>,
    /// Fail on any malformed row (true, the default), or skip and list them.
    pub strict: bool,
    /// Whether the file starts with a header (`auto`: detect, and say so in the result).
    pub header: HeaderMode,
}

impl Default for CsvOptions {
    fn default() -> Self {
        CsvOptions {
            separator: None,
            decimal: None,
            header_lines: None,
            time_column: 0,
            voltage_column: 1,
            time_step_s: None,
            strict: true,
            header: HeaderMode::Auto,
        }
    }
}

/// The format used to read a file, and which parts were detected.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CsvFormat {
    /// Field separator.
    pub separator: Separator,
    /// Decimal mark.
    pub decimal: DecimalMark,
    /// Lines before the data.
    pub header_lines: usize,
    /// The last header line (at most 200 characters), empty when there is none.
    pub header_text: String,
    /// Fields per data row.
    pub columns: usize,
    /// 0-based time column (unused when `time_step_s` is set).
    pub time_column: usize,
    /// 0-based voltage column.
    pub voltage_column: usize,
    /// Uniform time step when the time column is not read, seconds.
    pub time_step_s: Option<f64>,
    /// Whether the separator was detected (false: set by hand).
    pub separator_detected: bool,
    /// Whether the decimal mark was detected.
    pub decimal_detected: bool,
    /// Whether the header length was detected.
    pub header_detected: bool,
    /// Why the header lines were taken as a header, in plain words (empty when there is none):
    /// e.g. "assumed: line 1 does not read as numbers in columns 1 and 2".
    #[serde(default)]
    pub header_reason: String,
}

impl CsvFormat {
    /// A plain sentence saying how the file was read, e.g. "semicolon-separated (detected), decimal
    /// comma (detected), 1 header line (detected): \"Time;CH1\", 2 columns; time from column 1,
    /// volts from column 2".
    pub fn describe(&self) -> String {
        let how = |d: bool| if d { "detected" } else { "as set" };
        let dec = match self.decimal {
            DecimalMark::Point => "decimal point",
            DecimalMark::Comma => "decimal comma",
        };
        let mut s = format!(
            "{}-separated ({}), {} ({}), {} header line{} ({})",
            self.separator.name(),
            how(self.separator_detected),
            dec,
            how(self.decimal_detected),
            self.header_lines,
            if self.header_lines == 1 { "" } else { "s" },
            how(self.header_detected)
        );
        if !self.header_text.is_empty() {
            let _ = write!(s, ": \"{}\"", self.header_text);
        }
        if !self.header_reason.is_empty() {
            let _ = write!(s, " ({})", self.header_reason);
        }
        let _ = write!(s, ", {} column{}; ", self.columns, if self.columns == 1 { "" } else { "s" });
        match self.time_step_s {
            Some(step) => {
                let _ = write!(s, "time from the row number × {step} s, volts from column {}", self.voltage_column + 1);
            }
            None => {
                let _ = write!(s, "time from column {}, volts from column {}", self.time_column + 1, self.voltage_column + 1);
            }
        }
        s
    }
}

/// Up to 24 bytes of a malformed line, kept inline so that reporting a bad row allocates nothing.
#[derive(Clone, Copy, PartialEq, Eq)]
pub struct Snippet {
    bytes: [u8; 24],
    len: u8,
}

impl Snippet {
    /// The first up to 24 bytes of `s`, cut at a character boundary.
    pub fn new(s: &str) -> Self {
        let mut end = s.len().min(24);
        while !s.is_char_boundary(end) {
            end -= 1;
        }
        let mut bytes = [0u8; 24];
        bytes[..end].copy_from_slice(&s.as_bytes()[..end]);
        Snippet { bytes, len: end as u8 }
    }

    /// The text.
    pub fn as_str(&self) -> &str {
        std::str::from_utf8(&self.bytes[..self.len as usize]).unwrap_or("")
    }
}

impl fmt::Debug for Snippet {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:?}", self.as_str())
    }
}

impl Serialize for Snippet {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.as_str())
    }
}

impl<'de> Deserialize<'de> for Snippet {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let s = String::deserialize(d)?;
        Ok(Snippet::new(&s))
    }
}

/// What is wrong with a malformed row.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum CsvIssueKind {
    /// The row has a different number of fields from the first data row, or too few for the columns read.
    FieldCount {
        /// Fields found.
        found: u32,
        /// Fields expected.
        expected: u32,
    },
    /// A field that must hold a number does not.
    NotANumber {
        /// 1-based column.
        column: u32,
    },
    /// A field holds NaN or infinity.
    NotFinite {
        /// 1-based column.
        column: u32,
    },
    /// The time is not after the previous row's time.
    TimeNotIncreasing,
    /// A field holds a number too small for a double (e.g. `1e-400`), which would read as zero.
    Underflow {
        /// 1-based column.
        column: u32,
    },
    /// The time from the row number times the time step is not a finite number.
    TimeNotFinite,
    /// The line is longer than [`MAX_LINE_BYTES`].
    LineTooLong,
}

/// One malformed row.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CsvIssue {
    /// 1-based line number in the file.
    pub line: usize,
    /// What is wrong.
    pub kind: CsvIssueKind,
    /// The start of the line.
    pub text: Snippet,
}

impl fmt::Display for CsvIssue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "line {}: ", self.line)?;
        match self.kind {
            CsvIssueKind::FieldCount { found, expected } => write!(f, "{found} fields where {expected} are expected")?,
            CsvIssueKind::NotANumber { column } => write!(f, "column {column} is not a number")?,
            CsvIssueKind::NotFinite { column } => write!(f, "column {column} is not a finite number")?,
            CsvIssueKind::TimeNotIncreasing => write!(f, "time is not after the previous row's time")?,
            CsvIssueKind::Underflow { column } => {
                write!(f, "column {column} is too small for a double and would read as 0")?
            }
            CsvIssueKind::TimeNotFinite => write!(f, "the time (row number × time step) is not finite")?,
            CsvIssueKind::LineTooLong => write!(f, "the line is longer than {MAX_LINE_BYTES} bytes")?,
        }
        write!(f, " (\"{}\")", self.text.as_str())
    }
}

/// Why an import failed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum CsvError {
    /// No text at all (or only blank lines).
    Empty,
    /// No candidate format reads any line as a row of numbers.
    NoNumericData {
        /// Lines examined.
        lines_checked: usize,
    },
    /// A header but no data rows.
    NoData {
        /// Header lines found.
        header_lines: usize,
    },
    /// Strict mode: malformed rows, counted; the first [`KEPT_ISSUES`] are kept as examples.
    BadLines {
        /// The first malformed rows, in file order (at most [`KEPT_ISSUES`]).
        issues: Vec<CsvIssue>,
        /// How many rows were malformed in all.
        #[serde(default)]
        count: usize,
        /// The format used.
        format: Box<CsvFormat>,
    },
    /// More rows than a waveform may hold.
    TooManyRows {
        /// The limit.
        limit: usize,
    },
    /// An option has an impossible value.
    InvalidOption {
        /// The option.
        field: String,
        /// What is wrong.
        reason: String,
    },
}

impl fmt::Display for CsvError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            CsvError::Empty => write!(f, "the file is empty: choose a CSV file with time and voltage columns"),
            CsvError::NoNumericData { lines_checked } => write!(
                f,
                "no row of numbers in the first {lines_checked} lines: check the file, or set the separator, decimal mark and header lines by hand"
            ),
            CsvError::NoData { header_lines } => {
                write!(f, "the file has {header_lines} header line(s) but no data rows")
            }
            CsvError::BadLines { issues, count, .. } => {
                write!(f, "{} malformed line(s)", (*count).max(issues.len()))?;
                if let Some(first) = issues.first() {
                    write!(f, ", first {first}")?;
                }
                write!(f, ": fix the file, or turn strict mode off to skip and list them")
            }
            CsvError::TooManyRows { limit } => write!(f, "more than {limit} rows: cut the capture or decimate it first"),
            CsvError::InvalidOption { field, reason } => write!(f, "{field}: {reason}"),
        }
    }
}

impl std::error::Error for CsvError {}

/// An imported capture.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Capture {
    /// Sample times, seconds (strictly increasing).
    pub time_s: Vec<f64>,
    /// Voltages, volts.
    pub volts: Vec<f64>,
    /// How the file was read.
    pub format: CsvFormat,
    /// Malformed rows that were skipped (non-strict mode only): the first [`KEPT_ISSUES`].
    pub skipped: Vec<CsvIssue>,
    /// How many malformed rows were skipped in all.
    #[serde(default)]
    pub skipped_count: usize,
    /// Blank lines skipped.
    pub blank_lines: usize,
    /// Lines in the file.
    pub lines: usize,
}

impl Capture {
    /// The sample times as a view for the simulation functions.
    pub fn times(&self) -> Times<'_> {
        Times::Samples(&self.time_s)
    }

    /// Mean sample rate, hertz (0 for fewer than two samples).
    pub fn mean_sample_rate_hz(&self) -> f64 {
        match (self.time_s.first(), self.time_s.last()) {
            (Some(a), Some(b)) if self.time_s.len() > 1 && b > a => (self.time_s.len() - 1) as f64 / (b - a),
            _ => 0.0,
        }
    }
}

/// Progress after a piece of text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct CsvProgress {
    /// Complete lines read so far.
    pub lines: usize,
    /// Data rows accepted so far.
    pub rows: usize,
    /// Malformed rows so far.
    pub issues: usize,
}

const CANDIDATES: [(Separator, DecimalMark); 5] = [
    (Separator::Comma, DecimalMark::Point),
    (Separator::Semicolon, DecimalMark::Point),
    (Separator::Tab, DecimalMark::Point),
    (Separator::Semicolon, DecimalMark::Comma),
    (Separator::Tab, DecimalMark::Comma),
];

enum FieldError {
    NotANumber,
    NotFinite,
    Underflow,
}

/// Whether the mantissa of a decimal number text has a digit other than zero (so a value of zero
/// means the exponent underflowed).
fn nonzero_mantissa(text: &[u8]) -> bool {
    text.iter().take_while(|&&b| b != b'e' && b != b'E').any(|b| (b'1'..=b'9').contains(b))
}

/// Parses one field as a number. Decimal commas are swapped into a stack buffer (no allocation).
fn parse_field(field: &str, decimal: DecimalMark) -> Result<f64, FieldError> {
    let mut f = field.trim();
    if f.len() >= 2 && f.starts_with('"') && f.ends_with('"') {
        f = f[1..f.len() - 1].trim();
    }
    if f.is_empty() {
        return Err(FieldError::NotANumber);
    }
    let x = match decimal {
        DecimalMark::Point => f.parse::<f64>().map_err(|_| FieldError::NotANumber)?,
        DecimalMark::Comma => {
            let b = f.as_bytes();
            if b.len() > 64 || b.contains(&b'.') {
                return Err(FieldError::NotANumber);
            }
            let mut buf = [0u8; 64];
            for (d, &s) in buf.iter_mut().zip(b) {
                *d = if s == b',' { b'.' } else { s };
            }
            std::str::from_utf8(&buf[..b.len()])
                .map_err(|_| FieldError::NotANumber)?
                .parse::<f64>()
                .map_err(|_| FieldError::NotANumber)?
        }
    };
    if !x.is_finite() {
        Err(FieldError::NotFinite)
    } else if x == 0.0 && nonzero_mantissa(f.as_bytes()) {
        Err(FieldError::Underflow)
    } else {
        Ok(x)
    }
}

/// Whether the line reads as a data row under the format: the fields at `cols` (time and
/// voltage; other columns may hold anything, as in exports that put settings beside the data) are
/// finite numbers. Returns the field count and whether every field is a number.
fn numeric_row(line: &str, sep: Separator, dec: DecimalMark, cols: (usize, usize)) -> Option<(usize, bool)> {
    let mut n = 0;
    let mut found = 0;
    let mut all = true;
    for (k, field) in line.split(sep.byte()).enumerate() {
        n += 1;
        if k == cols.0 || k == cols.1 {
            parse_field(field, dec).ok()?;
            found += 1;
        } else if all {
            all = parse_field(field, dec).is_ok();
        }
    }
    let wanted = if cols.0 == cols.1 { 1 } else { 2 };
    if found == wanted {
        Some((n, all))
    } else {
        None
    }
}

fn clean_line(line: &str) -> &str {
    let line = line.strip_suffix('\r').unwrap_or(line);
    line.strip_prefix('\u{feff}').unwrap_or(line)
}

/// An incremental CSV reader: [`CsvParser::feed`] pieces of text in order, then
/// [`CsvParser::finish`].
#[derive(Debug, Clone)]
pub struct CsvParser {
    options: CsvOptions,
    format: Option<CsvFormat>,
    pending: String,
    pending_lines: usize,
    carry: String,
    line_no: usize,
    carry_too_long: bool,
    time_s: Vec<f64>,
    volts: Vec<f64>,
    issues: Vec<CsvIssue>,
    issue_count: usize,
    blank_lines: usize,
    last_time: f64,
    needed: usize,
    failed: Option<CsvError>,
}

impl CsvParser {
    /// A parser with the given options (checked here).
    pub fn new(options: CsvOptions) -> Result<Self, CsvError> {
        if let Some(step) = options.time_step_s {
            if !(step.is_finite() && step > 0.0) {
                return Err(CsvError::InvalidOption { field: "time_step_s".into(), reason: format!("must be a finite number above zero (got {step})") });
            }
            // Every row time i·step (i below MAX_SAMPLES) must be finite and strictly increasing.
            if !(step * MAX_SAMPLES as f64).is_finite() {
                return Err(CsvError::InvalidOption {
                    field: "time_step_s".into(),
                    reason: format!("is too large: {MAX_SAMPLES} rows of {step} s overflow a double"),
                });
            }
        } else if options.time_column == options.voltage_column {
            return Err(CsvError::InvalidOption {
                field: "voltage_column".into(),
                reason: "must differ from time_column".into(),
            });
        }
        if options.separator == Some(Separator::Comma) && options.decimal == Some(DecimalMark::Comma) {
            return Err(CsvError::InvalidOption {
                field: "decimal".into(),
                reason: "a decimal comma needs a semicolon or tab separator".into(),
            });
        }
        if options.header == HeaderMode::No && options.header_lines.is_some_and(|n| n > 0) {
            return Err(CsvError::InvalidOption {
                field: "header".into(),
                reason: "is `no` but header_lines is above zero: choose one".into(),
            });
        }
        let last_column = match options.time_step_s {
            Some(_) => options.voltage_column,
            None => options.time_column.max(options.voltage_column),
        };
        let needed = last_column.checked_add(1).ok_or_else(|| CsvError::InvalidOption {
            field: "voltage_column".into(),
            reason: format!("column index {last_column} is too large"),
        })?;
        Ok(CsvParser {
            options,
            format: None,
            pending: String::new(),
            pending_lines: 0,
            carry: String::new(),
            carry_too_long: false,
            line_no: 0,
            time_s: Vec::new(),
            volts: Vec::new(),
            issues: Vec::new(),
            issue_count: 0,
            blank_lines: 0,
            last_time: f64::NEG_INFINITY,
            needed,
            failed: None,
        })
    }

    /// The detected format, once enough lines have been seen.
    pub fn format(&self) -> Option<&CsvFormat> {
        self.format.as_ref()
    }

    /// Reserves room for about `rows` rows (e.g. estimated from the file size), to avoid regrowth.
    pub fn reserve(&mut self, rows: usize) {
        let rows = rows.min(MAX_SAMPLES);
        self.time_s.reserve(rows);
        self.volts.reserve(rows);
    }

    /// Reads the next piece of the file (any length, split anywhere).
    pub fn feed(&mut self, piece: &str) -> Result<CsvProgress, CsvError> {
        if let Some(e) = &self.failed {
            return Err(e.clone());
        }
        if self.format.is_none() {
            // Buffer at most DETECT_BYTES for detection; the rest of the piece is read after it.
            let room = DETECT_BYTES.saturating_sub(self.pending.len());
            let mut cut = piece.len().min(room);
            while !piece.is_char_boundary(cut) {
                cut -= 1;
            }
            let (head, tail) = piece.split_at(cut);
            self.pending.push_str(head);
            self.pending_lines += head.bytes().filter(|&b| b == b'\n').count();
            if self.pending_lines >= DETECT_LINES || !tail.is_empty() || self.pending.len() >= DETECT_BYTES {
                self.detect(false)?;
                let text = std::mem::take(&mut self.pending);
                self.consume(&text);
                self.consume(tail);
            }
        } else {
            self.consume(piece);
        }
        if let Some(e) = &self.failed {
            return Err(e.clone());
        }
        Ok(self.progress())
    }

    /// Progress so far.
    pub fn progress(&self) -> CsvProgress {
        CsvProgress { lines: self.line_no, rows: self.volts.len(), issues: self.issue_count }
    }

    /// Ends the file: reads any last line without a newline and returns the capture.
    pub fn finish(mut self) -> Result<Capture, CsvError> {
        if let Some(e) = self.failed.take() {
            return Err(e);
        }
        if self.format.is_none() {
            if self.pending.trim().is_empty() {
                return Err(CsvError::Empty);
            }
            self.detect(true)?;
            let text = std::mem::take(&mut self.pending);
            self.consume(&text);
        }
        if !self.carry.is_empty() || self.carry_too_long {
            let line = std::mem::take(&mut self.carry);
            self.process_line(&line);
        }
        if let Some(e) = self.failed.take() {
            return Err(e);
        }
        let format = self.format.take().ok_or(CsvError::Empty)?;
        if self.issue_count > 0 && self.options.strict {
            return Err(CsvError::BadLines { issues: self.issues, count: self.issue_count, format: Box::new(format) });
        }
        if self.volts.is_empty() {
            return Err(CsvError::NoData { header_lines: format.header_lines });
        }
        Ok(Capture {
            time_s: self.time_s,
            volts: self.volts,
            format,
            skipped: self.issues,
            skipped_count: self.issue_count,
            blank_lines: self.blank_lines,
            lines: self.line_no,
        })
    }

    /// The columns a data row must hold as numbers (time and voltage, or voltage twice when the
    /// time comes from the row number).
    fn cols(&self) -> (usize, usize) {
        match self.options.time_step_s {
            Some(_) => (self.options.voltage_column, self.options.voltage_column),
            None => (self.options.time_column, self.options.voltage_column),
        }
    }

    fn detect(&mut self, at_end: bool) -> Result<(), CsvError> {
        let total = self.pending.split('\n').count();
        let mut lines: Vec<&str> = self.pending.split('\n').take(DETECT_LINES).map(clean_line).collect();
        // Before the end of the file the last piece may be a partial line: leave it out.
        if !at_end && lines.len() == total && !self.pending.ends_with('\n') && lines.len() > 1 {
            lines.pop();
        }
        let lines = &lines[..];
        if lines.iter().all(|l| l.trim().is_empty()) {
            return Err(CsvError::Empty);
        }
        let candidates: Vec<(Separator, DecimalMark)> = CANDIDATES
            .iter()
            .copied()
            .filter(|(s, d)| self.options.separator.is_none_or(|x| x == *s) && self.options.decimal.is_none_or(|x| x == *d))
            .chain(
                // A hand-set pair outside the candidate list (e.g. tab with a point is listed; comma with a comma is refused in new()).
                match (self.options.separator, self.options.decimal) {
                    (Some(s), Some(d)) if !CANDIDATES.contains(&(s, d)) => Some((s, d)),
                    _ => None,
                },
            )
            .collect();
        // A hand-set header length, or none at all when the user said there is no header: the
        // first line after it must be data.
        let fixed_start = match (self.options.header_lines, self.options.header) {
            (Some(n), _) => Some(n),
            (None, HeaderMode::No) => Some(0),
            (None, _) => None,
        };
        // Score: rows of numbers with the first row's field count, then (tie-break, column
        // consistency) how many of them are numbers in every field.
        let mut best: Option<((usize, usize), Separator, DecimalMark, usize, usize)> = None; // score, sep, dec, first, cols
        for (sep, dec) in candidates {
            let start = fixed_start.unwrap_or(0);
            // First data line, and the field count of the first row of numbers.
            let mut first: Option<usize> = None;
            let mut reference: Option<usize> = None;
            let mut score = (0, 0);
            for (i, l) in lines.iter().enumerate().skip(start) {
                if l.trim().is_empty() {
                    continue;
                }
                match numeric_row(l, sep, dec, self.cols()) {
                    Some((cols, all)) => {
                        first.get_or_insert(i);
                        if *reference.get_or_insert(cols) == cols {
                            score.0 += 1;
                            score.1 += all as usize;
                        }
                    }
                    None => {
                        if fixed_start.is_some() {
                            first.get_or_insert(i);
                        }
                    }
                }
            }
            if let (Some(f), Some(cols)) = (first, reference) {
                if score.0 > 0 && best.is_none_or(|b| score > b.0) {
                    best = Some((score, sep, dec, f, cols));
                }
            }
        }
        let (_, separator, decimal, first, columns) = match best {
            Some(b) => b,
            None => return Err(CsvError::NoNumericData { lines_checked: lines.len() }),
        };
        let header_lines = match (fixed_start, self.options.header) {
            (Some(n), _) => n,
            (None, HeaderMode::Yes) => first.max(1),
            (None, _) => first,
        };
        let header_reason = match (header_lines, self.options.header_lines, self.options.header) {
            (0, _, _) => String::new(),
            (n, Some(_), _) => format!("{n} header line(s) as set"),
            (_, None, HeaderMode::Yes) => "a header as set".to_string(),
            (n, None, _) => {
                let (a, b) = self.cols();
                let columns = if a == b { format!("column {}", a + 1) } else { format!("columns {} and {}", a + 1, b + 1) };
                let line: String = lines.first().copied().unwrap_or("").trim().chars().take(40).collect();
                format!(
                    "header assumed: the first {} does not read as numbers in {columns} under the detected format (line 1: \"{line}\"); set the header to `no` to read it as data",
                    if n == 1 { "line".to_string() } else { format!("{n} lines") }
                )
            }
        };
        let header_text = if header_lines > 0 {
            let h = lines.get(header_lines - 1).copied().unwrap_or("").trim();
            h.chars().take(200).collect()
        } else {
            String::new()
        };
        self.format = Some(CsvFormat {
            separator,
            decimal,
            header_lines,
            header_text,
            columns,
            time_column: self.options.time_column,
            voltage_column: self.options.voltage_column,
            time_step_s: self.options.time_step_s,
            separator_detected: self.options.separator.is_none(),
            decimal_detected: self.options.decimal.is_none(),
            header_detected: self.options.header_lines.is_none() && self.options.header == HeaderMode::Auto,
            header_reason,
        });
        Ok(())
    }

    fn consume(&mut self, piece: &str) {
        let mut rest = piece;
        if !self.carry.is_empty() || self.carry_too_long {
            match rest.find('\n') {
                Some(nl) => {
                    self.push_carry(&rest[..nl]);
                    let mut line = std::mem::take(&mut self.carry);
                    self.process_line(&line);
                    line.clear();
                    self.carry = line;
                    rest = &rest[nl + 1..];
                }
                None => {
                    self.push_carry(rest);
                    return;
                }
            }
        }
        while let Some(nl) = rest.find('\n') {
            self.process_line(&rest[..nl]);
            rest = &rest[nl + 1..];
        }
        self.push_carry(rest);
    }

    /// Appends to the carried-over partial line, keeping at most [`MAX_LINE_BYTES`].
    fn push_carry(&mut self, text: &str) {
        let room = MAX_LINE_BYTES.saturating_sub(self.carry.len());
        if text.len() <= room {
            self.carry.push_str(text);
        } else {
            let mut cut = room;
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            self.carry.push_str(&text[..cut]);
            self.carry_too_long = true;
        }
    }

    /// Counts a malformed row and keeps it as an example while fewer than [`KEPT_ISSUES`] are kept.
    fn record_issue(&mut self, kind: CsvIssueKind, line: &str) {
        self.issue_count = self.issue_count.saturating_add(1);
        if self.issues.len() < KEPT_ISSUES {
            self.issues.push(CsvIssue { line: self.line_no, kind, text: Snippet::new(line) });
        }
    }

    fn process_line(&mut self, raw: &str) {
        self.line_no += 1;
        let too_long = std::mem::take(&mut self.carry_too_long) || raw.len() > MAX_LINE_BYTES;
        let format = match &self.format {
            Some(f) => f,
            None => return,
        };
        if self.line_no <= format.header_lines {
            return;
        }
        let line = clean_line(raw);
        if too_long {
            self.record_issue(CsvIssueKind::LineTooLong, line);
            return;
        }
        if line.trim().is_empty() {
            self.blank_lines += 1;
            return;
        }
        let (sep, dec) = (format.separator.byte(), format.decimal);
        let tcol = if format.time_step_s.is_some() { usize::MAX } else { format.time_column };
        let vcol = format.voltage_column;
        let mut count = 0usize;
        let mut t = None;
        let mut v = None;
        let mut problem: Option<CsvIssueKind> = None;
        for (k, field) in line.split(sep).enumerate() {
            count += 1;
            if k == tcol || k == vcol {
                match parse_field(field, dec) {
                    Ok(x) => {
                        if k == tcol {
                            t = Some(x)
                        } else {
                            v = Some(x)
                        }
                    }
                    Err(e) => {
                        if problem.is_none() {
                            let column = u32::try_from(k).unwrap_or(u32::MAX).saturating_add(1);
                            problem = Some(match e {
                                FieldError::NotANumber => CsvIssueKind::NotANumber { column },
                                FieldError::NotFinite => CsvIssueKind::NotFinite { column },
                                FieldError::Underflow => CsvIssueKind::Underflow { column },
                            });
                        }
                    }
                }
            }
        }
        let expected = format.columns.max(self.needed);
        let as_u32 = |n: usize| u32::try_from(n).unwrap_or(u32::MAX);
        let field_count = CsvIssueKind::FieldCount { found: as_u32(count), expected: as_u32(expected) };
        if count != format.columns || count < self.needed {
            problem = Some(field_count);
        }
        let time = match (format.time_step_s, t) {
            (Some(step), _) => Some(self.volts.len() as f64 * step),
            (None, t) => t,
        };
        if problem.is_none() {
            if let (Some(t), Some(_)) = (time, v) {
                if !t.is_finite() {
                    problem = Some(CsvIssueKind::TimeNotFinite);
                } else if t <= self.last_time {
                    problem = Some(CsvIssueKind::TimeNotIncreasing);
                }
            }
        }
        match (problem, time, v) {
            (None, Some(t), Some(v)) => {
                if self.volts.len() >= MAX_SAMPLES {
                    self.failed = Some(CsvError::TooManyRows { limit: MAX_SAMPLES });
                    return;
                }
                self.time_s.push(t);
                self.volts.push(v);
                self.last_time = t;
            }
            (p, _, _) => self.record_issue(p.unwrap_or(field_count), line),
        }
    }
}

/// Reads a whole CSV text at once (see the module documentation).
pub fn parse_csv(text: &str, options: &CsvOptions) -> Result<Capture, CsvError> {
    let mut p = CsvParser::new(*options)?;
    p.reserve(text.len() / 16);
    p.feed(text)?;
    p.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn detects_european_export() {
        let text = "Zeit;Kanal 1\n0,000;1,5\n0,001;-2,25\n0,002;3e-3\n";
        let c = parse_csv(text, &CsvOptions::default()).unwrap();
        assert_eq!(c.format.separator, Separator::Semicolon);
        assert_eq!(c.format.decimal, DecimalMark::Comma);
        assert_eq!(c.format.header_lines, 1);
        assert_eq!(c.volts, vec![1.5, -2.25, 3e-3]);
        assert_eq!(c.time_s, vec![0.0, 0.001, 0.002]);
        let d = c.format.describe();
        assert!(d.contains("semicolon") && d.contains("decimal comma") && d.contains("Zeit;Kanal 1"), "{d}");
    }

    #[test]
    fn detects_tab_and_headerless_and_crlf() {
        let c = parse_csv("1e-6\t0.5\r\n2e-6\t0.6\r\n", &CsvOptions::default()).unwrap();
        assert_eq!(c.format.separator, Separator::Tab);
        assert_eq!(c.format.header_lines, 0);
        assert_eq!(c.volts, vec![0.5, 0.6]);
        let c = parse_csv("\u{feff}TIME,CH1,CH2\n0,1,2\n1,3,4", &CsvOptions { voltage_column: 2, ..Default::default() }).unwrap();
        assert_eq!(c.volts, vec![2.0, 4.0]);
        assert_eq!(c.format.columns, 3);
    }

    #[test]
    fn malformed_rows_are_numbered() {
        let text = "t,v\n0,1\n1,x\n2\n3,inf\n3,4\n2.5,1\n\n5,6,7\n6,\"7\"\n";
        let e = parse_csv(text, &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, .. } = &e else { panic!("{e:?}") };
        let got: Vec<(usize, CsvIssueKind)> = issues.iter().map(|i| (i.line, i.kind)).collect();
        assert_eq!(
            got,
            vec![
                (3, CsvIssueKind::NotANumber { column: 2 }),
                (4, CsvIssueKind::FieldCount { found: 1, expected: 2 }),
                (5, CsvIssueKind::NotFinite { column: 2 }),
                (7, CsvIssueKind::TimeNotIncreasing),
                (9, CsvIssueKind::FieldCount { found: 3, expected: 2 }),
            ]
        );
        assert!(e.to_string().starts_with("5 malformed line(s), first line 3: column 2 is not a number (\"1,x\")"), "{e}");
        let lenient = parse_csv(text, &CsvOptions { strict: false, ..Default::default() }).unwrap();
        assert_eq!(lenient.volts, vec![1.0, 4.0, 7.0]);
        assert_eq!(lenient.skipped.len(), 5);
        assert_eq!(lenient.blank_lines, 1);
        assert_eq!(lenient.lines, 10);
    }

    #[test]
    fn pieces_split_anywhere_give_the_same_capture() {
        let mut text = String::from("time,volts\n");
        for i in 0..500 {
            let _ = writeln!(text, "{},{}", i as f64 * 1e-3, (i as f64).sin());
        }
        text.push_str("0.4999,bad\n");
        let opts = CsvOptions { strict: false, ..Default::default() };
        let whole = parse_csv(&text, &opts).unwrap();
        for step in [1usize, 7, 100, 4096] {
            let mut p = CsvParser::new(opts).unwrap();
            let bytes = text.as_bytes();
            let mut i = 0;
            while i < bytes.len() {
                let j = (i + step).min(bytes.len());
                p.feed(&text[i..j]).unwrap();
                i = j;
            }
            assert_eq!(p.finish().unwrap(), whole, "step {step}");
        }
        assert_eq!(whole.skipped[0].line, 502);
    }

    #[test]
    fn round_trip_is_exact() {
        let t: Vec<f64> = (0..1000).map(|i| i as f64 * 1.234_567e-7).collect();
        let v: Vec<f64> = (0..1000).map(|i| ((i * 7919) as f64).sin() * 10f64.powi(i % 40 - 20)).collect();
        for (sep, dec) in [(Separator::Comma, DecimalMark::Point), (Separator::Semicolon, DecimalMark::Comma), (Separator::Tab, DecimalMark::Point)] {
            let text = write_csv(Times::Samples(&t), &v, &CsvWriteOptions { separator: sep, decimal: dec, header: None });
            let c = parse_csv(&text, &CsvOptions::default()).unwrap();
            assert_eq!(c.format.separator, sep);
            assert!(c.time_s.iter().zip(&t).all(|(a, b)| a.to_bits() == b.to_bits()));
            assert!(c.volts.iter().zip(&v).all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }

    #[test]
    fn settings_beside_the_data_are_not_a_header() {
        // Some exports put record settings in the first columns of the first rows and the
        // samples in later columns; those rows are data.
        let text = "Record Length,3,,-1e-6,0.5\nSample Interval,1e-6,,0,0.6\n,,,1e-6,0.7\n";
        let c = parse_csv(text, &CsvOptions { time_column: 3, voltage_column: 4, ..Default::default() }).unwrap();
        assert_eq!(c.format.header_lines, 0);
        assert_eq!(c.volts, vec![0.5, 0.6, 0.7]);
    }

    #[test]
    fn bad_lines_after_good_rows_are_counted_in_bounded_memory() {
        // Issue 13 reproducer (scaled): 64 good rows, then millions of bad lines fed in pieces.
        // Only KEPT_ISSUES examples are kept; the rest are counted, so memory does not grow with them.
        let mut p = CsvParser::new(CsvOptions { strict: false, ..Default::default() }).unwrap();
        let mut good = String::new();
        for i in 0..64 {
            let _ = writeln!(good, "{i},{}", i as f64 * 0.5);
        }
        p.feed(&good).unwrap();
        let bad = "x\n".repeat(100_000);
        for _ in 0..20 {
            p.feed(&bad).unwrap();
        }
        assert_eq!(p.progress().issues, 2_000_000);
        assert!(p.issues.capacity() <= 2 * KEPT_ISSUES, "{}", p.issues.capacity());
        assert!(p.carry.capacity() <= MAX_LINE_BYTES && p.pending.capacity() <= 2 * DETECT_BYTES);
        let c = p.finish().unwrap();
        assert_eq!(c.volts.len(), 64);
        assert_eq!(c.skipped.len(), KEPT_ISSUES);
        assert_eq!(c.skipped_count, 2_000_000);
        assert_eq!(c.skipped[0].line, 65);
        // Strict mode reports the count and the first examples.
        let text = format!("{good}{}", "x\n".repeat(1000));
        let e = parse_csv(&text, &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, count, .. } = &e else { panic!("{e:?}") };
        assert_eq!((issues.len(), *count), (KEPT_ISSUES, 1000));
        assert!(e.to_string().starts_with("1000 malformed line(s), first line 65"), "{e}");
    }

    #[test]
    fn a_line_longer_than_the_limit_is_a_malformed_row_not_a_buffer() {
        let long = "1".repeat(MAX_LINE_BYTES + 10);
        let text = format!("0,1\n{long},2\n2,3\n");
        for step in [7usize, 100_000] {
            let mut p = CsvParser::new(CsvOptions { strict: false, ..Default::default() }).unwrap();
            for chunk in text.as_bytes().chunks(step) {
                p.feed(std::str::from_utf8(chunk).unwrap()).unwrap();
                assert!(p.carry.len() <= MAX_LINE_BYTES);
            }
            let c = p.finish().unwrap();
            assert_eq!(c.volts, vec![1.0, 3.0]);
            assert_eq!((c.skipped[0].line, c.skipped[0].kind), (2, CsvIssueKind::LineTooLong));
        }
    }

    #[test]
    fn a_time_step_whose_rows_overflow_is_refused() {
        // Issue 13 reproducer: a step of 1e308 gave times [0, 1e308, inf], accepted in strict mode.
        let opts = CsvOptions { time_step_s: Some(1e308), voltage_column: 0, ..Default::default() };
        assert!(matches!(CsvParser::new(opts), Err(CsvError::InvalidOption { .. })));
        assert!(matches!(parse_csv("1\n2\n3\n", &opts), Err(CsvError::InvalidOption { .. })));
        // The largest accepted step still gives finite, strictly increasing times.
        let step = f64::MAX / (2.0 * MAX_SAMPLES as f64);
        let c = parse_csv("1\n2\n3\n", &CsvOptions { time_step_s: Some(step), voltage_column: 0, ..Default::default() }).unwrap();
        assert!(c.time_s.iter().all(|t| t.is_finite()) && c.time_s.windows(2).all(|w| w[1] > w[0]));
        // A time column that reaches infinity is refused too.
        let e = parse_csv("0,1\n1e308,2\n1e309,3\n", &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, .. } = &e else { panic!("{e:?}") };
        assert_eq!(issues[0].kind, CsvIssueKind::NotFinite { column: 1 });
    }

    #[test]
    fn underflow_is_reported_not_read_as_zero() {
        // Issue 13 reproducer: 1e-400 read silently as 0.
        let e = parse_csv("0,1\n1e-400,2\n", &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, .. } = &e else { panic!("{e:?}") };
        assert_eq!((issues[0].line, issues[0].kind), (2, CsvIssueKind::Underflow { column: 1 }));
        assert!(e.to_string().contains("too small for a double"), "{e}");
        let e = parse_csv("0;1,5\n1;2,5e-999\n", &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, .. } = &e else { panic!("{e:?}") };
        assert_eq!(issues[0].kind, CsvIssueKind::Underflow { column: 2 });
        // Written zeros and the smallest subnormal stay numbers.
        let c = parse_csv("0,0.000e-400\n1,5e-324\n2,-0\n", &CsvOptions::default()).unwrap();
        assert_eq!(c.volts, vec![0.0, 5e-324, -0.0]);
    }

    #[test]
    fn header_mode_no_never_turns_a_bad_first_row_into_a_header() {
        // Issue 13 reproducer: a Unicode minus sign (U+2212) makes the first row unreadable.
        let text = "\u{2212}1.5,2\n0,3\n1,4\n";
        let no = CsvOptions { header: HeaderMode::No, ..Default::default() };
        let e = parse_csv(text, &no).unwrap_err();
        let CsvError::BadLines { issues, format, .. } = &e else { panic!("{e:?}") };
        assert_eq!((issues[0].line, issues[0].kind), (1, CsvIssueKind::NotANumber { column: 1 }));
        assert_eq!(format.header_lines, 0);
        // Auto: a header is assumed, and the result says so and why.
        let c = parse_csv(text, &CsvOptions::default()).unwrap();
        assert_eq!(c.format.header_lines, 1);
        assert!(c.format.header_reason.contains("header assumed"), "{}", c.format.header_reason);
        assert!(c.format.describe().contains("header assumed"), "{}", c.format.describe());
        // No header at all: no reason given.
        let c = parse_csv("0,3\n1,4\n", &CsvOptions::default()).unwrap();
        assert_eq!((c.format.header_lines, c.format.header_reason.as_str()), (0, ""));
        // Yes: the first line is skipped even when it reads as numbers.
        let c = parse_csv("0,3\n1,4\n2,5\n", &CsvOptions { header: HeaderMode::Yes, ..Default::default() }).unwrap();
        assert_eq!((c.format.header_lines, c.volts.clone()), (1, vec![4.0, 5.0]));
        assert!(!c.format.header_detected);
        // Contradictory settings are refused.
        assert!(CsvParser::new(CsvOptions { header: HeaderMode::No, header_lines: Some(2), ..Default::default() }).is_err());
        // Older saved options without the field read as auto.
        let o: CsvOptions = serde_json::from_str(r#"{"strict":false}"#).unwrap();
        assert_eq!(o.header, HeaderMode::Auto);
    }

    #[test]
    fn separator_ties_go_to_the_consistent_columns() {
        // Issue 13 reproducer: with columns 1 and 3, `0,5;7;0,001` read on commas gives 0 and 1
        // (fields "0", "5;7;0", "001"); on semicolons with a decimal comma every field is a number.
        let opts = CsvOptions { time_column: 0, voltage_column: 2, ..Default::default() };
        let c = parse_csv("0,5;7;0,001\n1,5;8;0,002\n", &opts).unwrap();
        assert_eq!((c.format.separator, c.format.decimal), (Separator::Semicolon, DecimalMark::Comma));
        assert_eq!(c.time_s, vec![0.5, 1.5]);
        assert_eq!(c.volts, vec![0.001, 0.002]);
        let c = parse_csv("0,5;7;0,001\n", &opts).unwrap();
        assert_eq!(c.format.separator, Separator::Semicolon);
    }

    #[test]
    fn huge_column_indices_do_not_overflow() {
        // Issue 13 reproducer: a column index of usize::MAX overflowed an addition.
        for (t, v, step) in [(usize::MAX, 0, None), (0, usize::MAX, None), (0, usize::MAX, Some(1e-3)), (usize::MAX, usize::MAX - 1, None)] {
            let opts = CsvOptions { time_column: t, voltage_column: v, time_step_s: step, ..Default::default() };
            assert!(matches!(parse_csv("0,1\n1,2\n", &opts), Err(CsvError::InvalidOption { .. })), "{t} {v}");
        }
        // A large but representable index is simply not found.
        let opts = CsvOptions { time_column: 0, voltage_column: usize::MAX - 1, ..Default::default() };
        assert!(matches!(parse_csv("0,1\n1,2\n", &opts), Err(CsvError::NoNumericData { .. })));
    }

    #[test]
    fn empty_and_headers_only() {
        assert_eq!(parse_csv("", &CsvOptions::default()).unwrap_err(), CsvError::Empty);
        assert_eq!(parse_csv("\n\n", &CsvOptions::default()).unwrap_err(), CsvError::Empty);
        assert!(matches!(parse_csv("a,b\nc,d\n", &CsvOptions::default()), Err(CsvError::NoNumericData { .. })));
        assert!(CsvParser::new(CsvOptions { time_column: 1, voltage_column: 1, ..Default::default() }).is_err());
    }
}
