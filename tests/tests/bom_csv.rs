//! The part list's CSV reads back with an RFC 4180 reader written here from the RFC's grammar
//! (IETF RFC 4180, 2005, §2: records end in CRLF; a field is either plain text without commas,
//! quotes, CR or LF, or enclosed in double quotes with inner quotes doubled), and the JSON entry
//! point carries the part list and the search.

use hysteron_core::analysis::CheckSettings;
use hysteron_core::bom::{bom, PartSettings, CSV_HEADER};
use hysteron_core::device::Comparator;
use hysteron_core::evaluate::{evaluate_json, RecordResult};
use hysteron_core::notation::parse_value;
use hysteron_core::topology::{analyse, inverting::InvertingSchmitt};

/// Parses RFC 4180 text into records of fields. Panics on anything the grammar does not allow,
/// so a malformed export fails the test.
fn parse_rfc4180(text: &str) -> Vec<Vec<String>> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut chars = text.chars().peekable();
    let mut quoted = false;
    let mut at_field_start = true;
    while let Some(c) = chars.next() {
        if quoted {
            if c == '"' {
                if chars.peek() == Some(&'"') {
                    chars.next();
                    field.push('"');
                } else {
                    quoted = false;
                    assert!(matches!(chars.peek(), Some(',') | Some('\r') | None), "text after a closing quote");
                }
            } else {
                field.push(c);
            }
            continue;
        }
        match c {
            '"' if at_field_start => {
                quoted = true;
                at_field_start = false;
            }
            '"' => panic!("a quote inside an unquoted field"),
            ',' => {
                record.push(std::mem::take(&mut field));
                at_field_start = true;
            }
            '\r' => {
                assert_eq!(chars.next(), Some('\n'), "CR without LF");
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
                at_field_start = true;
            }
            '\n' => panic!("bare LF: RFC 4180 records end in CRLF"),
            c => {
                field.push(c);
                at_field_start = false;
            }
        }
    }
    assert!(!quoted, "unterminated quoted field");
    assert!(record.is_empty() && field.is_empty(), "last record lacks its CRLF");
    records
}

#[test]
fn csv_reads_back_field_for_field() {
    // Values chosen so that notes (with commas and a non-E24 value) need quoting.
    let c = InvertingSchmitt::single_supply(120.0, 113.0, 10e3, Comparator::ideal(5.0));
    let a = analyse(&c, &CheckSettings::default()).unwrap();
    let b = bom(&c, &a, &CheckSettings::default(), &PartSettings::default()).unwrap();
    let rows = parse_rfc4180(&b.to_csv());
    assert_eq!(rows[0], CSV_HEADER.map(String::from).to_vec());
    assert_eq!(rows.len(), 1 + b.resistors.len() + 1);
    for row in &rows {
        assert_eq!(row.len(), CSV_HEADER.len());
    }
    for (row, line) in rows[1..].iter().zip(&b.resistors) {
        assert_eq!(row[0], line.designator);
        assert_eq!(row[2], line.value_rkm);
        assert_eq!(row[3], line.value_text);
        // The code and the full value both read back to the ordered value.
        assert_eq!(parse_value(&row[2]).unwrap(), line.value_ohm);
        assert_eq!(parse_value(&row[3]).unwrap(), line.value_ohm);
        assert_eq!(row[6], "0603");
        let p: f64 = row[7].parse().unwrap();
        assert!((p - line.max_power_w.unwrap()).abs() <= 1e-3 * p);
        assert_eq!(row[12], line.notes.join("; "));
    }
    // R2 = 113 Ω is not E24: rounded to 110 Ω by ratio, noted. R1 = 120 Ω from 5 V to node P
    // (output low: P = (5/120)/(1/120 + 1/113 + 1/10k) = 2.411 V) dissipates 55.9 mW; 2× that
    // (common practice) needs the 0.125 W rating.
    let node_p = (5.0 / 120.0) / (1.0 / 120.0 + 1.0 / 113.0 + 1.0 / 10e3);
    assert!((b.resistors[0].max_power_w.unwrap() - (5.0 - node_p) * (5.0 - node_p) / 120.0).abs() < 1e-12);
    assert_eq!(rows[2][2], "110R");
    assert!(rows[2][12].contains("rounded"));
    assert_eq!(rows[1][8], "0.125");
    assert!(rows[1][12].contains(','), "a note with a comma exercises the quoting");
    let device = rows.last().unwrap();
    assert_eq!(device[0], "U1");
    assert!(device[1].contains("push-pull"));
    assert!(device[12].contains("input common-mode range must cover"));
}

#[test]
fn json_entry_point_carries_bom_and_search() {
    let record = r#"{
        "schema_version": 1,
        "name": "lathe tachometer",
        "circuit": {"topology": "inverting", "ra_ohm": 10000, "rail_a": "supply", "rb_ohm": 10000,
                    "rail_b": "ground", "rf_ohm": 20000, "device": {"supply_v": 5}},
        "targets": {"vt_upper_v": 2.9, "vt_lower_v": 1.7, "impedance": {"anchor_ohm": 100000}},
        "parts": {"series": "e96", "package": "0805"},
        "search": {"series": "e24", "top_n": 3}
    }"#;
    let out = evaluate_json(record).unwrap();
    let RecordResult::Ok(e) = &out[0] else { panic!("{out:?}") };
    assert!(e.errors.is_empty(), "{:?}", e.errors);
    let b = e.bom.as_ref().unwrap();
    assert_eq!(b.settings.series.to_string(), "E96");
    assert_eq!(b.resistors.len(), 3);
    let s = e.search.as_ref().unwrap();
    assert_eq!(s.candidates.len(), 3);
    // Every candidate meets the targets within its stated error, DOMAIN §7 scenario 1.
    for c in &s.candidates {
        assert!((c.vt_upper_v - 2.9 - c.error_upper_v).abs() < 1e-12);
        assert!(c.worst_error_rel < 0.01, "{c:?}");
    }

    // A record without the new fields still loads, with a part list and no search.
    let old = r#"{"schema_version":1,"name":"a","circuit":{"topology":"inverting","ra_ohm":10000,"rail_a":"supply","rb_ohm":10000,"rail_b":"ground","rf_ohm":20000,"device":{"supply_v":5}}}"#;
    let out = evaluate_json(old).unwrap();
    let RecordResult::Ok(e) = &out[0] else { panic!("{out:?}") };
    assert!(e.bom.is_some() && e.search.is_none());
}
