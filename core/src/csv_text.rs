//! The one CSV writer of the project: rows of text fields to CSV text per RFC 4180 (IETF, 2005),
//! written by the `csv` crate. Used by the part list ([`crate::bom::Bom::to_csv`]) and the
//! waveform export ([`crate::signal::csv::write_csv`]).
//!
//! A field is quoted only when it must be (it holds the separator, a double quote, CR or LF);
//! double quotes inside are doubled (RFC 4180 §2, rules 5–7). Rows may differ in length.

/// Line end after every row.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LineEnd {
    /// `\r\n`, as RFC 4180 §2 rule 1 asks (spreadsheets).
    Crlf,
    /// `\n` (plain text tools, scopes' own exports).
    Lf,
}

/// Writes CSV rows into a string, one [`CsvText::row`] at a time.
#[derive(Debug)]
pub struct CsvText {
    writer: csv::Writer<Vec<u8>>,
}

impl CsvText {
    /// A writer with the given separator byte (`b','`, `b';'` or `b'\t'`) and line end;
    /// `capacity` bytes are reserved up front.
    pub fn new(separator: u8, line_end: LineEnd, capacity: usize) -> Self {
        let terminator = match line_end {
            LineEnd::Crlf => csv::Terminator::CRLF,
            LineEnd::Lf => csv::Terminator::Any(b'\n'),
        };
        let writer = csv::WriterBuilder::new()
            .delimiter(separator)
            .terminator(terminator)
            .flexible(true)
            .quote_style(csv::QuoteStyle::Necessary)
            .from_writer(Vec::with_capacity(capacity));
        CsvText { writer }
    }

    /// Appends one row. Writing into memory cannot fail; a failure would drop the row.
    pub fn row<I, F>(&mut self, fields: I)
    where
        I: IntoIterator<Item = F>,
        F: AsRef<[u8]>,
    {
        let _ = self.writer.write_record(fields);
    }

    /// The text written so far.
    pub fn finish(self) -> String {
        let bytes = self.writer.into_inner().unwrap_or_default();
        // Every field came in as UTF-8 and quoting adds only ASCII, so this never loses text.
        String::from_utf8(bytes).unwrap_or_else(|e| String::from_utf8_lossy(e.as_bytes()).into_owned())
    }
}

/// One field as it appears in a comma-separated row (quoted when needed).
pub fn field(text: &str) -> String {
    let mut w = CsvText::new(b',', LineEnd::Lf, text.len() + 3);
    w.row([text, ""]);
    let mut s = w.finish();
    s.truncate(s.len() - 2); // the trailing separator and line end of the two-field row
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quoting_follows_rfc_4180() {
        // RFC 4180 §2 rules 5–7 (IETF, 2005): quote fields holding separators, quotes or line
        // breaks; double the quotes inside.
        assert_eq!(field("plain"), "plain");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("two\r\nlines"), "\"two\r\nlines\"");
        assert_eq!(field(""), "");
    }

    #[test]
    fn rows_separators_and_line_ends() {
        let mut w = CsvText::new(b',', LineEnd::Crlf, 0);
        w.row(["a", "b,c"]);
        w.row(["1"]);
        assert_eq!(w.finish(), "a,\"b,c\"\r\n1\r\n");
        let mut w = CsvText::new(b';', LineEnd::Lf, 0);
        w.row(["0,5", "x;y", "Ω"]);
        assert_eq!(w.finish(), "0,5;\"x;y\";Ω\n");
        let mut w = CsvText::new(b'\t', LineEnd::Lf, 0);
        w.row(["1", "a b"]);
        assert_eq!(w.finish(), "1\ta b\n");
    }
}
