//! Share links (`hysteron_core::share`):
//! (a) the envelope read back with the libraries directly (base64 for RFC 4648 §5, crc32fast for
//!     CRC-32): header length and checksum match the record's JSON,
//! (b) property: encode then decode gives back the design, over records grown from the catalog's
//!     templates and demos and the schema fixtures with every number and text randomised,
//! (c) fuzzing the decoder with arbitrary text, arbitrary payloads behind a valid prefix and
//!     mutated valid links (truncations, bit flips, character swaps): it returns the record or a
//!     typed error and never panics,
//! (d) links written by this version keep opening (golden links in tests/fixtures/links/),
//! and the encoded length of every template and demo (printed with `--nocapture`).

use base64::Engine as _;
use hysteron_core::catalog;
use hysteron_core::record::DesignRecord;
use hysteron_core::share::{decode_link, encode_link, LinkError, LINK_PREFIX};

/// Appends unpadded base64url of `data` (RFC 4648 §5).
fn base64url_encode(data: &[u8], out: &mut String) {
    base64::engine::general_purpose::URL_SAFE_NO_PAD.encode_string(data, out);
}

/// Decodes unpadded base64url.
fn base64url_decode(text: &str) -> Result<Vec<u8>, base64::DecodeError> {
    base64::engine::general_purpose::URL_SAFE_NO_PAD.decode(text)
}
use proptest::prelude::*;
use serde_json::Value;

fn fixture_records() -> Vec<DesignRecord> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/records");
    let mut paths: Vec<_> = std::fs::read_dir(&dir).unwrap().map(|e| e.unwrap().path()).collect();
    paths.sort();
    paths
        .into_iter()
        .filter(|p| p.extension().is_some_and(|e| e == "json"))
        .map(|p| DesignRecord::from_json(&std::fs::read_to_string(&p).unwrap()).unwrap())
        .collect()
}

fn seeds() -> Vec<DesignRecord> {
    let mut v: Vec<DesignRecord> =
        catalog::templates().into_iter().chain(catalog::demos()).map(|s| s.record()).collect();
    v.extend(fixture_records());
    v
}

/// Replaces every number in the record except `schema_version` with the next value of `numbers`
/// (whole-number fields get a whole number)
/// (cyclically) and the texts with `text`; keeps the shape, so the result is still a record.
fn randomise(value: &mut Value, numbers: &[f64], k: &mut usize, text: &str) {
    match value {
        Value::Object(map) => {
            for (key, v) in map.iter_mut() {
                if key == "schema_version" {
                    continue;
                }
                if let Value::String(s) = v {
                    if key == "name" || key == "notes" || key == "purpose" {
                        *s = format!("{text}{s}");
                    }
                    continue;
                }
                randomise(v, numbers, k, text);
            }
        }
        Value::Array(items) => {
            for v in items {
                randomise(v, numbers, k, text);
            }
        }
        Value::Number(n) => {
            let x = numbers[*k % numbers.len()];
            *k += 1;
            if n.is_u64() || n.is_i64() {
                // Whole-number fields (seeds, counts, pole orders) stay whole and small enough for any
                // of their integer types.
                *value = Value::Number(((x.abs() as u64) % 200).into());
            } else if let Some(n) = serde_json::Number::from_f64(x) {
                *value = Value::Number(n);
            }
        }
        _ => {}
    }
}

/// Finite doubles of every kind: ordinary part values, tiny and huge, negative, subnormal, zero.
fn any_finite() -> impl Strategy<Value = f64> {
    prop_oneof![
        4 => 1.0f64..1e7,
        2 => proptest::num::f64::NORMAL | proptest::num::f64::SUBNORMAL | proptest::num::f64::ZERO,
        1 => -1e-6f64..1e-6,
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(256), ..ProptestConfig::default() })]

    #[test]
    fn encode_then_decode_gives_back_the_design(
        seed in 0usize..64,
        numbers in proptest::collection::vec(any_finite(), 1..40),
        text in "\\PC{0,40}",
    ) {
        let seeds = seeds();
        let base = &seeds[seed % seeds.len()];
        let mut v = serde_json::to_value(base).unwrap();
        let mut k = 0;
        randomise(&mut v, &numbers, &mut k, &text);
        let record = DesignRecord::from_value(v).unwrap();
        let link = encode_link(&record);
        prop_assert!(link.starts_with(LINK_PREFIX));
        prop_assert!(link.bytes().all(|b| b.is_ascii_alphanumeric() || b"-_.".contains(&b)), "not URL-safe: {}", link);
        prop_assert_eq!(decode_link(&link), Ok(record.clone()));
        prop_assert_eq!(decode_link(&format!("  #{link}\n")), Ok(record));
    }

    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,300}") {
        let _ = decode_link(&text);
    }

    #[test]
    fn arbitrary_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = decode_link(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn arbitrary_payloads_behind_a_valid_prefix_give_typed_errors(
        bytes in proptest::collection::vec(any::<u8>(), 0..600),
        version in 0u32..4,
    ) {
        // Valid base64url, so the decoder gets as far as the header, inflate and checksum.
        let mut link = format!("h{version}.");
        base64url_encode(&bytes, &mut link);
        match decode_link(&link) {
            Ok(_) => prop_assert!(false, "random bytes opened as a design"),
            Err(LinkError::NotALink) => prop_assert_eq!(version, 0),
            Err(LinkError::FutureVersion { found, .. }) => prop_assert!(found > 1),
            Err(LinkError::Corrupt { .. } | LinkError::TooLarge { .. } | LinkError::Record(_)) => {}
        }
    }

    #[test]
    fn mutated_links_never_panic_and_never_open_a_different_design(
        seed in 0usize..64,
        cut in 0usize..2000,
        flip_byte in 0usize..2000,
        flip_bit in 0u8..8,
        swap_at in 0usize..2000,
        swap_to in proptest::char::range('!', '~'),
    ) {
        let seeds = seeds();
        let record = &seeds[seed % seeds.len()];
        let link = encode_link(record);
        let same_or_error = |r: Result<DesignRecord, LinkError>| match r {
            Ok(got) => got == *record,
            Err(_) => true,
        };
        // Truncation anywhere.
        let cut = cut % link.len();
        prop_assert!(same_or_error(decode_link(&link[..cut])));
        // One flipped bit in the packed bytes (re-encoded, so it reaches inflate and the checksum).
        let mut packed = base64url_decode(&link[LINK_PREFIX.len()..]).unwrap();
        let i = flip_byte % packed.len();
        packed[i] ^= 1 << flip_bit;
        let mut flipped = String::from(LINK_PREFIX);
        base64url_encode(&packed, &mut flipped);
        prop_assert!(same_or_error(decode_link(&flipped)));
        // One character replaced by any printable ASCII character.
        let mut chars: Vec<char> = link.chars().collect();
        let j = swap_at % chars.len();
        chars[j] = swap_to;
        let swapped: String = chars.into_iter().collect();
        prop_assert!(same_or_error(decode_link(&swapped)));
    }

    #[test]
    fn the_envelope_reads_back_with_the_libraries(seed in 0usize..64) {
        // Length and CRC-32 in the header describe the JSON the stream inflates to.
        let seeds = seeds();
        let record = &seeds[seed % seeds.len()];
        let packed = base64url_decode(&encode_link(record)[LINK_PREFIX.len()..]).unwrap();
        let json = serde_json::to_string(record).unwrap();
        prop_assert_eq!(u32::from_be_bytes(packed[..4].try_into().unwrap()) as usize, json.len());
        prop_assert_eq!(u32::from_be_bytes(packed[4..8].try_into().unwrap()), crc32fast::hash(json.as_bytes()));
    }
}

#[test]
fn a_bit_flip_in_every_position_of_a_link_is_caught_or_harmless() {
    // Exhaustive over one link: every bit of the packed bytes, flipped in turn.
    let record = catalog::demos()[0].record();
    let link = encode_link(&record);
    let packed = base64url_decode(&link[LINK_PREFIX.len()..]).unwrap();
    let mut caught = 0;
    for i in 0..packed.len() {
        for bit in 0..8 {
            let mut p = packed.clone();
            p[i] ^= 1 << bit;
            let mut s = String::from(LINK_PREFIX);
            base64url_encode(&p, &mut s);
            match decode_link(&s) {
                Ok(r) => assert_eq!(r, record, "flip at byte {i} bit {bit} opened a different design"),
                Err(_) => caught += 1,
            }
        }
    }
    // Only flips that inflate to the very same JSON (a back-reference moved to an identical
    // earlier string) may go unnoticed; padding bits after the stream are checked too.
    assert!(caught >= packed.len() * 8 - 7, "{caught} of {}", packed.len() * 8);
}

#[test]
fn golden_links_of_link_version_1_keep_opening() {
    // Written by this version; a later version must still open them to the same records.
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures");
    for name in ["non_inverting", "open_drain", "plain_comparator", "supply_monitor"] {
        let link = std::fs::read_to_string(dir.join(format!("links/{name}.h1.txt"))).unwrap();
        let expected =
            DesignRecord::from_json(&std::fs::read_to_string(dir.join(format!("records/{name}.json"))).unwrap())
                .unwrap();
        assert_eq!(decode_link(&link), Ok(expected), "{name}");
    }
}

#[test]
fn encoded_lengths_of_templates_and_demos() {
    // Common practice: keep addresses under about 2000 characters so they survive mail and chat.
    for s in catalog::templates().into_iter().chain(catalog::demos()) {
        let r = s.record();
        let json = serde_json::to_string(&r).unwrap();
        let link = encode_link(&r);
        println!("{:<22} json {:>5} B  link {:>5} chars", s.key, json.len(), link.len());
        assert!(link.len() < 2000, "{}: {} characters", s.key, link.len());
        assert!(link.len() < json.len(), "{}: the link is not shorter than the JSON", s.key);
    }
}
