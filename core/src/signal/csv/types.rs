//! The types of a CSV import: options, the format found, malformed-row reports, errors and the
//! imported capture. The reading itself is in the parent module.

use super::MAX_LINE_BYTES;
use crate::signal::Times;
use serde::{Deserialize, Serialize};
use std::fmt::{self, Write as _};

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
    pub(super) fn byte(self) -> char {
        match self {
            Separator::Comma => ',',
            Separator::Semicolon => ';',
            Separator::Tab => '\t',
        }
    }

    pub(super) fn name(self) -> &'static str {
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
    /// Strict mode: malformed rows, counted; the first [`KEPT_ISSUES`](super::KEPT_ISSUES) are kept as examples.
    BadLines {
        /// The first malformed rows, in file order (at most [`KEPT_ISSUES`](super::KEPT_ISSUES)).
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
    /// Malformed rows that were skipped (non-strict mode only): the first [`KEPT_ISSUES`](super::KEPT_ISSUES).
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
