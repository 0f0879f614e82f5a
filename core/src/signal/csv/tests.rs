//! Tests of the CSV reader, including a regression test for each import reproducer of issue 13.

use super::*;
use crate::signal::Times;
use std::fmt::Write as _;

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
    // The largest accepted step (the longest duration in crate::limits) still gives finite,
    // strictly increasing times.
    let step = crate::limits::Quantity::Duration.range().1;
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
