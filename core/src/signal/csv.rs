//! Importing bench captures: CSV of time and voltage as a bench oscilloscope exports it, and
//! exporting waveforms with exact round trips.
//!
//! **Detection.** Unless set by hand, the separator (comma, semicolon or tab), the decimal mark
//! (point, or comma when the separator is not a comma) and the number of header lines are
//! detected from the first [`DETECT_LINES`] lines: every candidate format is tried, the one under
//! which the most lines read as rows of numbers wins (ties go to the earlier candidate: comma,
//! semicolon, tab with a decimal point, then semicolon and tab with a decimal comma), and the
//! lines before its first row of numbers are the header. [`CsvFormat::describe`] says what was
//! detected.
//!
//! **Rows.** A row must have the same number of fields as the first data row; the time and
//! voltage fields must be finite numbers (surrounding spaces and double quotes are ignored; other
//! columns are not read); time must increase from row to row. Blank lines are counted and skipped. Every other line is a
//! malformed row, reported with its 1-based line number in the file; none is dropped silently:
//! in strict mode (the default) any malformed row fails the import with the full list, otherwise
//! the capture lists every skipped line beside its data.
//!
//! **Large files.** [`CsvParser`] takes the text in pieces of any size (split anywhere, even inside
//! a line) so the page can parse a 1,000,000-row file a slice at a time and show progress. It
//! allocates only the output vectors, the issue list and one carry-over line buffer, never per row.
//!
//! **Round trips.** [`write_csv`] writes each number in Rust's shortest round-trip form (`{}`, or
//! `{:e}` for very large or small magnitudes), so reading it back gives bit-identical values.

use super::{Times, MAX_SAMPLES};
use serde::{Deserialize, Serialize};
use std::fmt::{self, Write as _};

/// Lines examined (at most) to detect the format.
pub const DETECT_LINES: usize = 64;

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
    /// Strict mode: malformed rows. Every one is listed.
    BadLines {
        /// The malformed rows, in file order.
        issues: Vec<CsvIssue>,
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
            CsvError::BadLines { issues, .. } => {
                write!(f, "{} malformed line(s)", issues.len())?;
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
    /// Malformed rows that were skipped (non-strict mode only), every one listed.
    pub skipped: Vec<CsvIssue>,
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
    if x.is_finite() {
        Ok(x)
    } else {
        Err(FieldError::NotFinite)
    }
}

/// Whether the line reads as a data row under the format: the fields at `cols` (time and
/// voltage; other columns may hold anything, as in exports that put settings beside the data) are
/// finite numbers. Returns the field count.
fn numeric_row(line: &str, sep: Separator, dec: DecimalMark, cols: (usize, usize)) -> Option<usize> {
    let mut n = 0;
    let mut found = 0;
    for (k, field) in line.split(sep.byte()).enumerate() {
        n += 1;
        if k == cols.0 || k == cols.1 {
            parse_field(field, dec).ok()?;
            found += 1;
        }
    }
    let wanted = if cols.0 == cols.1 { 1 } else { 2 };
    if found == wanted {
        Some(n)
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
    time_s: Vec<f64>,
    volts: Vec<f64>,
    issues: Vec<CsvIssue>,
    blank_lines: usize,
    last_time: f64,
    needed: usize,
    failed: Option<CsvError>,
}

impl CsvParser {
    /// A parser with the given options (checked here).
    pub fn new(options: CsvOptions) -> Result<Self, CsvError> {
        if let Some(step) = options.time_step_s {
            // Bounded by limits.rs's durations, so row × step stays finite for MAX_SAMPLES rows.
            if !(step > 0.0 && crate::limits::Quantity::Duration.admits(step)) {
                let (_, hi) = crate::limits::Quantity::Duration.range();
                return Err(CsvError::InvalidOption { field: "time_step_s".into(), reason: format!("must be above zero and at most {hi} s (got {step})") });
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
        let needed = match options.time_step_s {
            Some(_) => options.voltage_column.saturating_add(1),
            None => options.time_column.max(options.voltage_column).saturating_add(1),
        };
        Ok(CsvParser {
            options,
            format: None,
            pending: String::new(),
            pending_lines: 0,
            carry: String::new(),
            line_no: 0,
            time_s: Vec::new(),
            volts: Vec::new(),
            issues: Vec::new(),
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
            self.pending.push_str(piece);
            self.pending_lines += piece.bytes().filter(|&b| b == b'\n').count();
            if self.pending_lines >= DETECT_LINES {
                self.detect(false)?;
                let text = std::mem::take(&mut self.pending);
                self.consume(&text);
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
        CsvProgress { lines: self.line_no, rows: self.volts.len(), issues: self.issues.len() }
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
        if !self.carry.is_empty() {
            let line = std::mem::take(&mut self.carry);
            self.process_line(&line);
        }
        if let Some(e) = self.failed.take() {
            return Err(e);
        }
        let format = self.format.take().ok_or(CsvError::Empty)?;
        if !self.issues.is_empty() && self.options.strict {
            return Err(CsvError::BadLines { issues: self.issues, format: Box::new(format) });
        }
        if self.volts.is_empty() {
            return Err(CsvError::NoData { header_lines: format.header_lines });
        }
        Ok(Capture {
            time_s: self.time_s,
            volts: self.volts,
            format,
            skipped: self.issues,
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
        let mut best: Option<(usize, Separator, DecimalMark, usize, usize)> = None; // score, sep, dec, first, cols
        for (sep, dec) in candidates {
            let start = self.options.header_lines.unwrap_or(0);
            let mut first: Option<(usize, usize)> = None;
            let mut score = 0;
            for (i, l) in lines.iter().enumerate().skip(start) {
                if l.trim().is_empty() {
                    continue;
                }
                match numeric_row(l, sep, dec, self.cols()) {
                    Some(cols) => {
                        if first.is_none() {
                            first = Some((i, cols));
                        }
                        if first.is_some_and(|(_, c)| c == cols) {
                            score += 1;
                        }
                    }
                    None => {
                        if self.options.header_lines.is_some() && first.is_none() {
                            // Hand-set header: the first line after it must be data.
                            first = Some((i, 0));
                        }
                    }
                }
            }
            if let Some((f, cols)) = first {
                if score > 0 && best.is_none_or(|b| score > b.0) {
                    best = Some((score, sep, dec, f, cols));
                }
            }
        }
        let (_, separator, decimal, first, mut columns) = match best {
            Some(b) => b,
            None => return Err(CsvError::NoNumericData { lines_checked: lines.len() }),
        };
        let header_lines = self.options.header_lines.unwrap_or(first);
        if columns == 0 {
            columns = lines
                .iter()
                .skip(header_lines)
                .find_map(|l| numeric_row(l, separator, decimal, self.cols()))
                .unwrap_or(self.needed);
        }
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
            header_detected: self.options.header_lines.is_none(),
        });
        Ok(())
    }

    fn consume(&mut self, piece: &str) {
        let mut rest = piece;
        if !self.carry.is_empty() {
            match rest.find('\n') {
                Some(nl) => {
                    self.carry.push_str(&rest[..nl]);
                    let mut line = std::mem::take(&mut self.carry);
                    self.process_line(&line);
                    line.clear();
                    self.carry = line;
                    rest = &rest[nl + 1..];
                }
                None => {
                    self.carry.push_str(rest);
                    return;
                }
            }
        }
        while let Some(nl) = rest.find('\n') {
            self.process_line(&rest[..nl]);
            rest = &rest[nl + 1..];
        }
        self.carry.push_str(rest);
    }

    fn process_line(&mut self, raw: &str) {
        self.line_no += 1;
        let format = match &self.format {
            Some(f) => f,
            None => return,
        };
        if self.line_no <= format.header_lines {
            return;
        }
        let line = clean_line(raw);
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
                            let column = k as u32 + 1;
                            problem = Some(match e {
                                FieldError::NotANumber => CsvIssueKind::NotANumber { column },
                                FieldError::NotFinite => CsvIssueKind::NotFinite { column },
                            });
                        }
                    }
                }
            }
        }
        let expected = format.columns.max(self.needed);
        if count != format.columns || count < self.needed {
            problem = Some(CsvIssueKind::FieldCount { found: count as u32, expected: expected as u32 });
        }
        let time = match (format.time_step_s, t) {
            (Some(step), _) => Some(self.volts.len() as f64 * step),
            (None, t) => t,
        };
        if problem.is_none() {
            if let (Some(t), Some(_)) = (time, v) {
                if t <= self.last_time {
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
            (p, _, _) => self.issues.push(CsvIssue {
                line: self.line_no,
                kind: p.unwrap_or(CsvIssueKind::FieldCount { found: count as u32, expected: expected as u32 }),
                text: Snippet::new(line),
            }),
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

fn push_number(out: &mut String, scratch: &mut String, x: f64, decimal: DecimalMark) {
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
pub fn write_csv(times: Times<'_>, volts: &[f64], options: &CsvWriteOptions) -> String {
    let sep = options.separator.byte();
    let decimal = if options.separator == Separator::Comma { DecimalMark::Point } else { options.decimal };
    let mut out = String::with_capacity(volts.len() * 32 + 64);
    let mut scratch = String::with_capacity(32);
    if let Some([a, b]) = &options.header {
        out.push_str(a);
        out.push(sep);
        out.push_str(b);
        out.push('\n');
    }
    for (i, &v) in volts.iter().enumerate() {
        push_number(&mut out, &mut scratch, times.at(i), decimal);
        out.push(sep);
        push_number(&mut out, &mut scratch, v, decimal);
        out.push('\n');
    }
    out
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
    fn empty_and_headers_only() {
        assert_eq!(parse_csv("", &CsvOptions::default()).unwrap_err(), CsvError::Empty);
        assert_eq!(parse_csv("\n\n", &CsvOptions::default()).unwrap_err(), CsvError::Empty);
        assert!(matches!(parse_csv("a,b\nc,d\n", &CsvOptions::default()), Err(CsvError::NoNumericData { .. })));
        assert!(CsvParser::new(CsvOptions { time_column: 1, voltage_column: 1, ..Default::default() }).is_err());
    }
}
