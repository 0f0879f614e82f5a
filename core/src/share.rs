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
//! [`LinkError::Corrupt`]; nothing already saved is touched (this module has no side effects).
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
    let bytes = json.as_bytes();
    let mut packed = Vec::with_capacity(HEADER_BYTES + bytes.len() / 2);
    packed.extend_from_slice(&(bytes.len() as u32).to_be_bytes());
    packed.extend_from_slice(&crc32(bytes).to_be_bytes());
    packed.extend_from_slice(&miniz_oxide::deflate::compress_to_vec(bytes, COMPRESSION_LEVEL));
    let mut out = String::with_capacity(LINK_PREFIX.len() + packed.len() * 4 / 3 + 4);
    out.push_str(LINK_PREFIX);
    base64url_encode(&packed, &mut out);
    out
}

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
    let packed = base64url_decode(payload).map_err(|reason| LinkError::Corrupt { reason })?;
    if packed.len() < HEADER_BYTES {
        return Err(LinkError::Corrupt { reason: "the link is too short to hold a design".into() });
    }
    let declared = u32::from_be_bytes([packed[0], packed[1], packed[2], packed[3]]) as usize;
    let expected_crc = u32::from_be_bytes([packed[4], packed[5], packed[6], packed[7]]);
    if declared > MAX_RECORD_BYTES {
        return Err(LinkError::TooLarge { size: declared, limit: MAX_RECORD_BYTES });
    }
    let json = miniz_oxide::inflate::decompress_to_vec_with_limit(&packed[HEADER_BYTES..], declared).map_err(|e| {
        LinkError::Corrupt {
            reason: match e.status {
                miniz_oxide::inflate::TINFLStatus::HasMoreOutput => "the data unpacks to more than it declares".into(),
                miniz_oxide::inflate::TINFLStatus::FailedCannotMakeProgress => "the compressed data ends early".into(),
                _ => "the compressed data is invalid".into(),
            },
        }
    })?;
    if json.len() != declared {
        return Err(LinkError::Corrupt {
            reason: format!("the data unpacks to {} bytes, not the {declared} it declares", json.len()),
        });
    }
    if crc32(&json) != expected_crc {
        return Err(LinkError::Corrupt { reason: "checksum mismatch".into() });
    }
    Ok(json)
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

/// CRC-32 (ISO-HDLC / IEEE 802.3: reflected polynomial 0xEDB88320, initial value and final XOR
/// 0xFFFFFFFF), bytewise with a table built at compile time. Check value for the ASCII text
/// "123456789" is 0xCBF43926 (Williams, "A painless guide to CRC error detection algorithms",
/// from memory).
pub fn crc32(data: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFFu32;
    for &b in data {
        crc = CRC_TABLE[((crc ^ b as u32) & 0xFF) as usize] ^ (crc >> 8);
    }
    !crc
}

const CRC_TABLE: [u32; 256] = {
    let mut table = [0u32; 256];
    let mut i = 0;
    while i < 256 {
        let mut c = i as u32;
        let mut k = 0;
        while k < 8 {
            c = if c & 1 != 0 { 0xEDB8_8320 ^ (c >> 1) } else { c >> 1 };
            k += 1;
        }
        table[i] = c;
        i += 1;
    }
    table
};

/// The base64url alphabet (RFC 4648 §5, table 2).
const B64_ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_";

/// Appends base64url of `data` without padding (RFC 4648 §5 and §3.2).
pub fn base64url_encode(data: &[u8], out: &mut String) {
    for chunk in data.chunks(3) {
        let b = [chunk[0], *chunk.get(1).unwrap_or(&0), *chunk.get(2).unwrap_or(&0)];
        let n = (b[0] as u32) << 16 | (b[1] as u32) << 8 | b[2] as u32;
        let chars = chunk.len() + 1;
        for i in 0..chars {
            out.push(B64_ALPHABET[((n >> (18 - 6 * i)) & 63) as usize] as char);
        }
    }
}

/// Decodes unpadded base64url, strictly: only the 64 alphabet characters (a trailing `=` padding
/// is tolerated), no length that leaves a lone character, and zero bits in the unused tail
/// (RFC 4648 §3.5: canonical encoding), so every payload has exactly one spelling.
pub fn base64url_decode(text: &str) -> Result<Vec<u8>, String> {
    let text = text.trim_end_matches('=');
    let bytes = text.as_bytes();
    if bytes.len() % 4 == 1 {
        return Err("the link's length is impossible for its encoding".into());
    }
    let mut out = Vec::with_capacity(bytes.len() * 3 / 4);
    for chunk in bytes.chunks(4) {
        let mut n = 0u32;
        for (i, &c) in chunk.iter().enumerate() {
            let v = match c {
                b'A'..=b'Z' => c - b'A',
                b'a'..=b'z' => c - b'a' + 26,
                b'0'..=b'9' => c - b'0' + 52,
                b'-' => 62,
                b'_' => 63,
                _ => return Err("the link contains a character that does not belong to it".into()),
            };
            n |= (v as u32) << (18 - 6 * i);
        }
        let full = chunk.len() - 1;
        let tail_mask = match chunk.len() {
            2 => 0x0000_FFFF,
            3 => 0x0000_00FF,
            _ => 0,
        };
        if n & tail_mask != 0 {
            return Err("the link's last character is not a valid ending".into());
        }
        for i in 0..full {
            out.push((n >> (16 - 8 * i)) as u8);
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;

    #[test]
    fn crc32_check_value() {
        // Check value of CRC-32/ISO-HDLC for "123456789" (Williams's CRC catalogue, from memory).
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
    }

    #[test]
    fn base64url_matches_rfc4648_test_vectors() {
        // RFC 4648 §10 test vectors (padding removed; the alphabet differs only in 62/63).
        let cases = [
            ("", ""),
            ("f", "Zg"),
            ("fo", "Zm8"),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg"),
            ("fooba", "Zm9vYmE"),
            ("foobar", "Zm9vYmFy"),
        ];
        for (plain, enc) in cases {
            let mut s = String::new();
            base64url_encode(plain.as_bytes(), &mut s);
            assert_eq!(s, enc);
            assert_eq!(base64url_decode(enc).unwrap(), plain.as_bytes());
        }
        // 0xFB 0xFF uses both URL-safe characters (62 and 63).
        let mut s = String::new();
        base64url_encode(&[0xFB, 0xFF], &mut s);
        assert_eq!(s, "-_8");
        assert!(base64url_decode("Zh").is_err(), "non-zero tail bits are not canonical");
        assert!(base64url_decode("Z").is_err());
        assert!(base64url_decode("Zm+v").is_err());
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
        let mut packed = (zeros.len() as u32).to_be_bytes().to_vec();
        packed.extend_from_slice(&crc32(&zeros).to_be_bytes());
        packed.extend_from_slice(&miniz_oxide::deflate::compress_to_vec(&zeros, 6));
        let mut link = String::from(LINK_PREFIX);
        base64url_encode(&packed, &mut link);
        assert!(matches!(decode_link(&link), Err(LinkError::TooLarge { .. })));
        // Declared small but inflating to more: stopped at the declared length.
        packed[..4].copy_from_slice(&1000u32.to_be_bytes());
        let mut link = String::from(LINK_PREFIX);
        base64url_encode(&packed, &mut link);
        assert!(matches!(decode_link(&link), Err(LinkError::Corrupt { .. })));
    }

    #[test]
    fn future_record_schema_inside_a_valid_link_is_reported_as_such() {
        let mut v = serde_json::to_value(catalog::templates()[0].record()).unwrap();
        v["schema_version"] = 42.into();
        let json = serde_json::to_string(&v).unwrap();
        let mut packed = (json.len() as u32).to_be_bytes().to_vec();
        packed.extend_from_slice(&crc32(json.as_bytes()).to_be_bytes());
        packed.extend_from_slice(&miniz_oxide::deflate::compress_to_vec(json.as_bytes(), 6));
        let mut link = String::from(LINK_PREFIX);
        base64url_encode(&packed, &mut link);
        assert!(matches!(decode_link(&link), Err(LinkError::Record(RecordError::FutureVersion { found: 42, .. }))));
    }
}
