//! Share a design as a link: the whole design record packed into the URL fragment.
//!
//! The fragment is never sent to a server (RFC 3986 §3.5: the fragment is resolved by the client
//! only; from memory), so a shared design stays between the people who hold the link.
//!
//! # Link format, version 1
//!
//! `h1.<payload>` where `<payload>` is base64url without padding (RFC 4648 §5, from memory) of
//!
//! | bytes | content |
//! | ----- | ------- |
//! | 4 | length of the record's JSON text in bytes, unsigned, big-endian |
//! | 4 | CRC-32 of the JSON text (the IEEE 802.3 / ISO-HDLC polynomial, reflected 0xEDB88320, as in zlib and PNG), big-endian |
//! | rest | the compact JSON text of the [`DesignRecord`] compressed as a raw DEFLATE stream (RFC 1951) |
//!
//! The record holds inputs only (circuit, targets, part choices, check and signal settings, name
//! and notes); results are recomputed when the link is opened.
//!
//! Reading is checked at every step and bounded: a link longer than [`MAX_LINK_CHARS`] or
//! declaring more than [`MAX_RECORD_BYTES`] of JSON is refused before anything is inflated, and
//! inflation stops at the declared length, so a crafted "zip bomb" cannot hang the page or fill
//! its memory. A truncated or altered link fails the length, inflate or checksum test and gives
//! [`LinkError::Corrupt`]; so do bytes appended after the compressed stream, set padding bits in
//! its last byte, base64 padding and non-canonical base64 endings. The one alteration that can
//! pass is one that inflates to the very same JSON (DEFLATE lets a back-reference point at any
//! identical earlier string): it opens the same design, never another. Nothing already saved is
//! touched (this module has no side effects).
//!
//! The codecs are crates: CRC-32 from `crc32fast`, base64url from `base64`, DEFLATE from
//! `miniz_oxide`; links written by the earlier hand-written CRC-32 and base64url are byte for
//! byte the same and keep opening (tested).
//!
//! # Versions
//!
//! Two version numbers are involved and are independent:
//! - the **link version** (`h1`) describes this envelope. [`decode_link`] refuses a higher one with
//!   [`LinkError::FutureVersion`]. When the envelope changes (another compressor, another checksum),
//!   the new writer emits `h2.` and `decode_link` keeps a reader for `h1.` that unpacks to JSON
//!   exactly as today; both then hand the JSON to the same record reader;
//! - the **record schema version** (`schema_version` inside the JSON) is handled by
//!   [`DesignRecord::from_value`], which migrates older schemas and refuses newer ones. Link
//!   version 1 was introduced with record schema 1, and an `h1.` link made today keeps opening
//!   after the schema moves on, because its JSON states its own schema version.

use crate::record::{DesignRecord, RecordError};
use base64::engine::{DecodePaddingMode, GeneralPurpose, GeneralPurposeConfig};
use base64::Engine as _;
use serde::{Deserialize, Serialize};
use std::fmt;

/// The link version this build writes.
pub const LINK_VERSION: u32 = 1;

/// The prefix of every link this build writes: `h` and the link version, then a dot.
pub const LINK_PREFIX: &str = "h1.";

/// The longest record JSON a link may carry, bytes (1 MiB). Links declaring more are refused
/// before inflation; a real design record is a few hundred bytes to a few kilobytes.
pub const MAX_RECORD_BYTES: usize = 1 << 20;

/// The longest link text [`decode_link`] looks at, characters (2 MiB).
pub const MAX_LINK_CHARS: usize = 2 << 20;

/// DEFLATE effort used when writing (miniz_oxide's scale 0–10; 10 is the smallest output).
const COMPRESSION_LEVEL: u8 = 10;

/// Size of the header in front of the compressed stream: length and CRC-32, bytes.
const HEADER_BYTES: usize = 8;

/// Why a link could not be opened. No variant is ever the result of a panic; every failure of
/// the text, its packing or its content ends in one of these.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum LinkError {
    /// The text is not a Hysteron link at all (no `h<version>.` prefix).
    NotALink,
    /// The link is damaged: cut short, altered, or not valid base64url, DEFLATE or checksum.
    Corrupt {
        /// What failed, in plain words.
        reason: String,
    },
    /// The link declares more data than a design can hold; refused without unpacking it.
    TooLarge {
        /// The declared or actual size, bytes or characters.
        size: usize,
        /// The limit, in the same unit.
        limit: usize,
    },
    /// The link was made by a newer version of Hysteron.
    FutureVersion {
        /// The link version found.
        found: u32,
        /// The newest link version this build reads.
        supported: u32,
    },
    /// The link unpacked correctly but the design record in it could not be read (newer schema,
    /// unknown topology, malformed or invalid record).
    Record(RecordError),
}

impl fmt::Display for LinkError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LinkError::NotALink => write!(f, "this is not a Hysteron design link: copy the whole link, including the part after #"),
            LinkError::Corrupt { reason } => write!(
                f,
                "this design link is damaged ({reason}): it may have been cut short or altered; ask for the whole link again"
            ),
            LinkError::TooLarge { size, limit } => {
                write!(f, "this design link is too large ({size}, limit {limit}): it was refused without being opened")
            }
            LinkError::FutureVersion { found, supported } => write!(
                f,
                "this design link was made by a newer version of Hysteron (link version {found}; this page reads up to {supported}): open it with the current page"
            ),
            LinkError::Record(e) => write!(f, "the design in this link cannot be opened: {e}"),
        }
    }
}

impl std::error::Error for LinkError {}

impl From<RecordError> for LinkError {
    fn from(e: RecordError) -> Self {
        LinkError::Record(e)
    }
}

/// Packs a design record into a link fragment payload (`h1.…`, without the leading `#`).
///
/// ```
/// use hysteron_core::catalog;
/// use hysteron_core::share::{decode_link, encode_link, LinkError};
/// let record = catalog::templates()[0].record();
/// let link = encode_link(&record);
/// assert!(link.starts_with("h1."));
/// assert_eq!(decode_link(&format!("https://example.org/#{link}")), Ok(record));
/// assert!(matches!(decode_link(&link[..link.len() / 2]), Err(LinkError::Corrupt { .. })));
/// ```
///
/// Serialisation of a record cannot fail for finite values; a non-finite number would be written
/// as JSON `null` and the link would then be refused on opening with [`LinkError::Record`].
pub fn encode_link(record: &DesignRecord) -> String {
    let json = serde_json::to_string(record).unwrap_or_else(|_| String::from("{}"));
    pack(json.as_bytes())
}

/// Packs JSON bytes into a version-1 link (`h1.` + base64url of length, CRC-32 and DEFLATE data).
fn pack(bytes: &[u8]) -> String {
    let mut packed = Vec::with_capacity(HEADER_BYTES + bytes.len() / 2);
    packed.extend_from_slice(&(bytes.len() as u32).to_be_bytes());
    packed.extend_from_slice(&crc32fast::hash(bytes).to_be_bytes());
    packed.extend_from_slice(&miniz_oxide::deflate::compress_to_vec(bytes, COMPRESSION_LEVEL));
    let mut out = String::with_capacity(LINK_PREFIX.len() + packed.len() * 4 / 3 + 4);
    out.push_str(LINK_PREFIX);
    BASE64URL.encode_string(&packed, &mut out);
    out
}

/// base64url without padding (RFC 4648 §5), strict on reading: no padding, no characters outside
/// the alphabet, and zero bits in the unused tail (RFC 4648 §3.5: canonical encoding), so every
/// payload has exactly one spelling.
const BASE64URL: GeneralPurpose = GeneralPurpose::new(
    &base64::alphabet::URL_SAFE,
    GeneralPurposeConfig::new()
        .with_encode_padding(false)
        .with_decode_padding_mode(DecodePaddingMode::RequireNone)
        .with_decode_allow_trailing_bits(false),
);

/// Opens a link: accepts the fragment payload (`h1.…`), the fragment with its `#`, or a whole
/// address ending in the fragment. Returns the design record, or why it cannot be opened.
///
/// Bounded work: at most [`MAX_LINK_CHARS`] characters are decoded and at most
/// [`MAX_RECORD_BYTES`] bytes inflated.
pub fn decode_link(text: &str) -> Result<DesignRecord, LinkError> {
    let json = unpack(text)?;
    let value: serde_json::Value =
        serde_json::from_slice(&json).map_err(|e| RecordError::Malformed { message: e.to_string() })?;
    Ok(DesignRecord::from_value(value)?)
}

/// Unpacks a link to its JSON bytes, checking version, encoding, length and checksum.
fn unpack(text: &str) -> Result<Vec<u8>, LinkError> {
    let text = text.trim();
    let fragment = match text.rfind('#') {
        Some(i) => &text[i + 1..],
        None => text,
    };
    if fragment.len() > MAX_LINK_CHARS {
        return Err(LinkError::TooLarge { size: fragment.len(), limit: MAX_LINK_CHARS });
    }
    let (version, payload) = split_version(fragment)?;
    if version > LINK_VERSION {
        return Err(LinkError::FutureVersion { found: version, supported: LINK_VERSION });
    }
    // Version 1 is the only one so far; an older version would be unpacked here to the same JSON.
    let packed = BASE64URL.decode(payload).map_err(|e| LinkError::Corrupt {
        reason: match e {
            base64::DecodeError::InvalidByte(..) | base64::DecodeError::InvalidPadding => {
                "the link contains a character that does not belong to it".into()
            }
            base64::DecodeError::InvalidLength(_) => "the link's length is impossible for its encoding".into(),
            base64::DecodeError::InvalidLastSymbol(..) => "the link's last character is not a valid ending".into(),
        },
    })?;
    if packed.len() < HEADER_BYTES {
        return Err(LinkError::Corrupt { reason: "the link is too short to hold a design".into() });
    }
    let declared = u32::from_be_bytes([packed[0], packed[1], packed[2], packed[3]]) as usize;
    let expected_crc = u32::from_be_bytes([packed[4], packed[5], packed[6], packed[7]]);
    if declared > MAX_RECORD_BYTES {
        return Err(LinkError::TooLarge { size: declared, limit: MAX_RECORD_BYTES });
    }
    let data = &packed[HEADER_BYTES..];
    let json = inflate_exact(data, declared).map_err(|reason| LinkError::Corrupt { reason })?;
    if crc32fast::hash(&json) != expected_crc {
        return Err(LinkError::Corrupt { reason: "checksum mismatch".into() });
    }
    if padding_bits_set(data, declared, &json) {
        return Err(LinkError::Corrupt { reason: "the link carries bits after the end of its data".into() });
    }
    Ok(json)
}

/// Inflates a raw DEFLATE stream (RFC 1951) that must unpack to exactly `declared` bytes and end
/// exactly at the last input byte: bytes appended after the stream, a stream that ends early and
/// one that unpacks to more or less than declared are all refused. Work and memory are bounded by
/// `declared` (at most [`MAX_RECORD_BYTES`]) and the input length.
fn inflate_exact(data: &[u8], declared: usize) -> Result<Vec<u8>, String> {
    use miniz_oxide::inflate::core::{decompress, inflate_flags, DecompressorOxide};
    use miniz_oxide::inflate::TINFLStatus;
    // One spare byte tells "unpacks to more than declared" apart from "exactly declared".
    let mut out = vec![0u8; declared + 1];
    let mut inflater = Box::<DecompressorOxide>::default();
    let (status, consumed, written) =
        decompress(&mut inflater, data, &mut out, 0, inflate_flags::TINFL_FLAG_USING_NON_WRAPPING_OUTPUT_BUF);
    match status {
        TINFLStatus::Done => {}
        TINFLStatus::HasMoreOutput => return Err("the data unpacks to more than it declares".into()),
        TINFLStatus::NeedsMoreInput | TINFLStatus::FailedCannotMakeProgress => {
            return Err("the compressed data ends early".into())
        }
        _ => return Err("the compressed data is invalid".into()),
    }
    if written != declared {
        return Err(format!("the data unpacks to {written} bytes, not the {declared} it declares"));
    }
    if consumed != data.len() {
        return Err(format!("{} bytes follow the end of the compressed data", data.len() - consumed));
    }
    out.truncate(written);
    Ok(out)
}

/// Whether the unused high bits of the stream's last byte (DEFLATE fills bytes from the low bit,
/// RFC 1951 §3.1.1, and pads the last one) carry anything: the writer leaves them zero, so a set
/// padding bit is an alteration the checksum cannot see. A set bit is padding when clearing it
/// unpacks to the same bytes; the first set bit from the top that matters ends the search (every
/// lower bit is then part of the stream), so this costs at most one extra inflation per set
/// padding bit plus one.
fn padding_bits_set(data: &[u8], declared: usize, json: &[u8]) -> bool {
    let Some(&last) = data.last() else { return false };
    let mut altered = data.to_vec();
    let end = altered.len() - 1;
    for bit in (0..8).rev() {
        if last & (1 << bit) == 0 {
            continue;
        }
        altered[end] = last & !(1 << bit);
        return matches!(inflate_exact(&altered, declared), Ok(same) if same == json);
    }
    false
}

/// Splits `h<digits>.<payload>` into the version number and the payload.
fn split_version(fragment: &str) -> Result<(u32, &str), LinkError> {
    let rest = fragment.strip_prefix('h').ok_or(LinkError::NotALink)?;
    let dot = rest.find('.').ok_or(LinkError::NotALink)?;
    let digits = &rest[..dot];
    if digits.is_empty() || digits.len() > 9 || !digits.bytes().all(|b| b.is_ascii_digit()) {
        return Err(LinkError::NotALink);
    }
    let version: u32 = digits.parse().map_err(|_| LinkError::NotALink)?;
    if version == 0 {
        return Err(LinkError::NotALink);
    }
    Ok((version, &rest[dot + 1..]))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;

    /// Packs raw bytes (header, then `deflated`) as a link, for crafting damaged links.
    fn link_of(header_len: u32, crc: u32, deflated: &[u8]) -> String {
        let mut packed = header_len.to_be_bytes().to_vec();
        packed.extend_from_slice(&crc.to_be_bytes());
        packed.extend_from_slice(deflated);
        let mut link = String::from(LINK_PREFIX);
        BASE64URL.encode_string(&packed, &mut link);
        link
    }

    /// The packed bytes behind a link.
    fn packed_of(link: &str) -> Vec<u8> {
        BASE64URL.decode(&link[LINK_PREFIX.len()..]).unwrap()
    }

    #[test]
    fn links_written_by_the_hand_written_codec_still_open() {
        // Written by the hand-written CRC-32 and base64url of the releases before the codecs came
        // from crc32fast and base64 (same envelope, miniz_oxide level 10); they must keep opening
        // to the same JSON. The second uses both URL-safe characters and multi-byte UTF-8.
        let old = [
            ("{}", "h1.AAAAAqOmv0OrrgUA"),
            (
                "{\"schema_version\":1,\"name\":\"Ω ~~~ ???>>> test\",\"notes\":\"line\\nbreak\"}",
                "h1.AAAARiNCQikBRgC5_3sic2NoZW1hX3ZlcnNpb24iOjEsIm5hbWUiOiLOqSB-fn4gPz8_Pj4-IHRlc3QiLCJub3RlcyI6ImxpbmVcbmJyZWFrIn0",
            ),
            (
                "[1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17,18,19,20,1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17,18,19,20]",
                "h1.AAAAZ1kbH9-VyzkRACAMAEFDV3DhjRYG_zbAAvXObgkqjc5gskgsKAZWbNhx4MSFSTz9LucC",
            ),
        ];
        for (json, link) in old {
            assert_eq!(unpack(link).unwrap(), json.as_bytes(), "{link}");
            // The writer still produces the very same text (same compressor, same codecs).
            assert_eq!(pack(json.as_bytes()), link);
        }
    }

    #[test]
    fn crc32_and_base64url_check_values() {
        // CRC-32/ISO-HDLC check value for "123456789" (Williams's CRC catalogue, from memory).
        assert_eq!(crc32fast::hash(b"123456789"), 0xCBF4_3926);
        // RFC 4648 §10 test vectors, padding removed; 0xFB 0xFF uses both URL-safe characters.
        assert_eq!(BASE64URL.encode("foobar"), "Zm9vYmFy");
        assert_eq!(BASE64URL.encode("fooba"), "Zm9vYmE");
        assert_eq!(BASE64URL.encode([0xFB, 0xFF]), "-_8");
        assert!(BASE64URL.decode("Zh").is_err(), "non-zero tail bits are not canonical");
        assert!(BASE64URL.decode("Z").is_err());
        assert!(BASE64URL.decode("Zm+v").is_err());
        assert!(BASE64URL.decode("Zm8=").is_err(), "padding is an alteration");
    }

    #[test]
    fn bytes_after_the_compressed_data_are_refused() {
        // Issue 13 reproducer: bytes appended after the DEFLATE stream used to be ignored.
        let record = catalog::templates()[0].record();
        let link = encode_link(&record);
        let packed = packed_of(&link);
        for extra in [&[0u8][..], &[0, 0, 0], b"tail", &[0xFF; 64]] {
            let mut p = packed.clone();
            p.extend_from_slice(extra);
            let mut s = String::from(LINK_PREFIX);
            BASE64URL.encode_string(&p, &mut s);
            match decode_link(&s) {
                Err(LinkError::Corrupt { reason }) => assert!(reason.contains("follow the end"), "{reason}"),
                other => panic!("{} appended bytes: {other:?}", extra.len()),
            }
        }
        // Appended characters and padding are refused as well.
        assert!(matches!(decode_link(&format!("{link}=")), Err(LinkError::Corrupt { .. })));
        assert!(matches!(decode_link(&format!("{link}AAAA")), Err(LinkError::Corrupt { .. })));
    }

    #[test]
    fn set_padding_bits_in_the_last_byte_are_refused() {
        // A stream whose last byte has unused high bits: set each in turn; the checksum cannot see
        // them, the padding check must.
        let json = b"{}";
        let deflated = miniz_oxide::deflate::compress_to_vec(json, COMPRESSION_LEVEL);
        let good = link_of(2, crc32fast::hash(json), &deflated);
        assert_eq!(unpack(&good).unwrap(), json);
        let mut refused = 0;
        for bit in 0..8 {
            let mut d = deflated.clone();
            let end = d.len() - 1;
            d[end] ^= 1 << bit;
            match unpack(&link_of(2, crc32fast::hash(json), &d)) {
                Ok(got) => panic!("flip of bit {bit} of the last byte opened as {got:?}"),
                Err(_) => refused += 1,
            }
        }
        assert_eq!(refused, 8);
    }

    #[test]
    fn every_bit_flip_of_a_starter_link_is_refused_or_harmless() {
        // Exhaustive over two starters: every bit of the packed bytes flipped in turn. Header,
        // checksum, padding and stream damage fail; the only flips that can pass are those that
        // inflate to the very same JSON (a DEFLATE back-reference moved to an identical earlier
        // string), which by construction open the same design.
        for s in [&catalog::templates()[0], &catalog::demos()[0]] {
            let record = s.record();
            let packed = packed_of(&encode_link(&record));
            let mut opened = 0;
            for i in 0..packed.len() {
                for bit in 0..8 {
                    let mut p = packed.clone();
                    p[i] ^= 1 << bit;
                    let mut l = String::from(LINK_PREFIX);
                    BASE64URL.encode_string(&p, &mut l);
                    if let Ok(got) = decode_link(&l) {
                        assert_eq!(got, record, "{}: flip at byte {i} bit {bit} opened another design", s.key);
                        assert!(i >= HEADER_BYTES && i + 1 < packed.len(), "{}: flip at byte {i} bit {bit}", s.key);
                        opened += 1;
                    }
                }
            }
            assert!(opened * 1000 <= packed.len() * 8, "{}: {opened} of {} flips opened", s.key, packed.len() * 8);
        }
    }

    #[test]
    fn every_starter_round_trips() {
        for s in catalog::templates().into_iter().chain(catalog::demos()) {
            let r = s.record();
            let link = encode_link(&r);
            assert!(link.starts_with(LINK_PREFIX));
            assert!(link.bytes().all(|b| b.is_ascii_alphanumeric() || b == b'-' || b == b'_' || b == b'.'));
            assert_eq!(decode_link(&link).unwrap(), r, "{}", s.key);
            assert_eq!(decode_link(&format!("https://example.org/#{link}")).unwrap(), r);
        }
    }

    #[test]
    fn typed_errors_for_bad_links() {
        let link = encode_link(&catalog::templates()[0].record());
        assert_eq!(decode_link("hello"), Err(LinkError::NotALink));
        assert_eq!(decode_link(""), Err(LinkError::NotALink));
        assert!(matches!(
            decode_link(&link.replacen("h1.", "h7.", 1)),
            Err(LinkError::FutureVersion { found: 7, supported: 1 })
        ));
        assert!(matches!(decode_link(&link[..link.len() - 5]), Err(LinkError::Corrupt { .. })));
        // A flipped character in the middle: checksum or inflate failure.
        let mut bytes = link.clone().into_bytes();
        let i = bytes.len() / 2;
        bytes[i] = if bytes[i] == b'A' { b'B' } else { b'A' };
        assert!(matches!(decode_link(std::str::from_utf8(&bytes).unwrap()), Err(LinkError::Corrupt { .. })));
    }

    #[test]
    fn zip_bomb_is_refused_without_inflating_it() {
        // 8 MiB of zeros compresses to a few kilobytes; declared honestly it exceeds the limit.
        let zeros = vec![b' '; 8 << 20];
        let deflated = miniz_oxide::deflate::compress_to_vec(&zeros, 6);
        let crc = crc32fast::hash(&zeros);
        let link = link_of(zeros.len() as u32, crc, &deflated);
        assert!(matches!(decode_link(&link), Err(LinkError::TooLarge { .. })));
        // Declared small but inflating to more: stopped at the declared length.
        let link = link_of(1000, crc, &deflated);
        assert!(matches!(decode_link(&link), Err(LinkError::Corrupt { .. })));
    }

    #[test]
    fn future_record_schema_inside_a_valid_link_is_reported_as_such() {
        let mut v = serde_json::to_value(catalog::templates()[0].record()).unwrap();
        v["schema_version"] = 42.into();
        let json = serde_json::to_string(&v).unwrap();
        let deflated = miniz_oxide::deflate::compress_to_vec(json.as_bytes(), 6);
        let link = link_of(json.len() as u32, crc32fast::hash(json.as_bytes()), &deflated);
        assert!(matches!(decode_link(&link), Err(LinkError::Record(RecordError::FutureVersion { found: 42, .. }))));
    }
}
