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

use super::MAX_SAMPLES;

mod types;
mod write;
pub use types::*;
pub use write::{write_csv, CsvWriteOptions};

/// Lines examined (at most) to detect the format.
pub const DETECT_LINES: usize = 64;

/// Bytes examined (at most) to detect the format: detection starts when either limit is reached.
pub const DETECT_BYTES: usize = 64 * 1024;

/// Malformed rows kept as examples; any further ones are only counted.
pub const KEPT_ISSUES: usize = 20;

/// Longest line read, bytes; a longer line is a malformed row (only its start is kept).
pub const MAX_LINE_BYTES: usize = 64 * 1024;


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

/// A format candidate during detection: its score (rows of numbers with the first row's field
/// count, then how many of them are numbers in every field), separator, decimal mark, first data
/// line and field count.
type Detected = ((usize, usize), Separator, DecimalMark, usize, usize);

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
            // Bounded by limits.rs's durations, so row × step stays finite for MAX_SAMPLES rows.
            if !(step > 0.0 && crate::limits::Quantity::Duration.admits(step)) {
                let (_, hi) = crate::limits::Quantity::Duration.range();
                return Err(CsvError::InvalidOption { field: "time_step_s".into(), reason: format!("must be above zero and at most {hi} s (got {step})") });
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
        let mut best: Option<Detected> = None; // score, sep, dec, first, cols
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
mod tests;
