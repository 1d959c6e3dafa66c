//! Byte-level checks, text encodings and format sniffing.
//!
//! Order of the checks in [`decode`], each giving a file-level [`InputError`]:
//! 1. no bytes at all → `Empty`;
//! 2. a UTF-32 byte-order mark → `NotUtf8 { byte_offset: 0 }` (the message
//!    asks the user to save as UTF-8, which is the fix);
//! 3. a UTF-16 byte-order mark (little or big endian, as spreadsheet programs
//!    write "Unicode text") → decoded as UTF-16; an odd number of bytes or an
//!    unpaired surrogate → `NotUtf8` at that byte;
//! 4. a NUL byte, or more than 1 % control characters (and at least 3), in the
//!    first 8 KiB → `Binary` (an image, a spreadsheet workbook, a zip ...);
//! 5. valid UTF-8 (after an optional UTF-8 BOM) → used as it is;
//! 6. not UTF-8, and no valid UTF-8 multi-byte sequence anywhere → read as
//!    **Windows-1252** (a superset of the printable part of ISO 8859-1
//!    "Latin-1", the usual encoding of spreadsheet exports on Western
//!    European Windows systems; table from the Unicode Consortium's mapping
//!    file `CP1252.TXT`, with the five unassigned bytes 0x81, 0x8D, 0x8F,
//!    0x90, 0x9D kept as the C1 control characters of the same number, as the
//!    WHATWG Encoding Standard does);
//! 7. not UTF-8 but holding valid multi-byte UTF-8 too (a UTF-8 file with a
//!    damaged byte, or two encodings mixed) → `NotUtf8` with the offset of
//!    the first bad byte, counted in the file as given (a leading BOM
//!    included): guessing would garble the valid part;
//! 8. only whitespace after the optional BOM → `Empty`.
//!
//! The encoding used is returned with the text ([`Encoding`]) and named in
//! the load report.

use crate::error::{InputError, InputErrorKind};
use serde::Serialize;
use std::borrow::Cow;

/// The text encoding a file was read with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Encoding {
    /// UTF-8 without a byte-order mark.
    Utf8,
    /// UTF-8 with a byte-order mark.
    Utf8Bom,
    /// UTF-16, little endian, with a byte-order mark.
    Utf16Le,
    /// UTF-16, big endian, with a byte-order mark.
    Utf16Be,
    /// Windows-1252 (Western European; covers Latin-1's letters).
    Windows1252,
}

impl Encoding {
    /// The name shown to the user.
    pub fn name(self) -> &'static str {
        match self {
            Encoding::Utf8 => "UTF-8",
            Encoding::Utf8Bom => "UTF-8 with byte-order mark",
            Encoding::Utf16Le => "UTF-16 (little endian)",
            Encoding::Utf16Be => "UTF-16 (big endian)",
            Encoding::Windows1252 => "Windows-1252 (Western European)",
        }
    }
}

/// The text of a file and the encoding it was read with.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Decoded<'a> {
    pub text: Cow<'a, str>,
    pub encoding: Encoding,
}

/// What a file's text looks like.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Starts (after whitespace) with `{` or `[`.
    Json,
    /// Anything else: treated as a delimited table.
    Delimited,
}

/// How many leading bytes are inspected for binary content.
pub const BINARY_SNIFF_BYTES: usize = 8 * 1024;

const UTF8_BOM: &[u8] = &[0xEF, 0xBB, 0xBF];

/// Windows-1252 bytes 0x80–0x9F (Unicode's CP1252.TXT; unassigned bytes
/// map to the C1 control of the same number).
const CP1252_HIGH: [char; 32] = [
    '\u{20AC}', '\u{0081}', '\u{201A}', '\u{0192}', '\u{201E}', '\u{2026}', '\u{2020}', '\u{2021}',
    '\u{02C6}', '\u{2030}', '\u{0160}', '\u{2039}', '\u{0152}', '\u{008D}', '\u{017D}', '\u{008F}',
    '\u{0090}', '\u{2018}', '\u{2019}', '\u{201C}', '\u{201D}', '\u{2022}', '\u{2013}', '\u{2014}',
    '\u{02DC}', '\u{2122}', '\u{0161}', '\u{203A}', '\u{0153}', '\u{009D}', '\u{017E}', '\u{0178}',
];

/// One Windows-1252 byte as a character.
pub fn cp1252_char(b: u8) -> char {
    match b {
        0x80..=0x9F => CP1252_HIGH[(b - 0x80) as usize],
        _ => b as char,
    }
}

fn not_text(byte_offset: usize) -> InputError {
    InputError::new(InputErrorKind::NotUtf8 { byte_offset })
}

/// Decodes UTF-16 code units (after the BOM, `skip` bytes in).
fn decode_utf16(body: &[u8], big_endian: bool, skip: usize) -> Result<String, InputError> {
    if body.len() % 2 == 1 {
        return Err(not_text(skip + body.len() - 1));
    }
    let units = body.chunks_exact(2).map(|p| {
        if big_endian {
            u16::from_be_bytes([p[0], p[1]])
        } else {
            u16::from_le_bytes([p[0], p[1]])
        }
    });
    let mut out = String::with_capacity(body.len() / 2);
    let mut offset = skip;
    for r in char::decode_utf16(units) {
        match r {
            Ok(c) => {
                out.push(c);
                offset += c.len_utf16() * 2;
            }
            Err(_) => return Err(not_text(offset)),
        }
    }
    Ok(out)
}

/// Checks the bytes are non-empty text and returns it with its encoding
/// (see the module documentation for the order of the checks).
pub fn decode(bytes: &[u8]) -> Result<Decoded<'_>, InputError> {
    if bytes.is_empty() {
        return Err(InputError::new(InputErrorKind::Empty));
    }
    let (text, encoding): (Cow<str>, Encoding) =
        if bytes.starts_with(&[0xFF, 0xFE, 0, 0]) || bytes.starts_with(&[0x00, 0x00, 0xFE, 0xFF]) {
            return Err(not_text(0));
        } else if let Some(body) = bytes.strip_prefix(&[0xFF, 0xFE]) {
            (Cow::Owned(decode_utf16(body, false, 2)?), Encoding::Utf16Le)
        } else if let Some(body) = bytes.strip_prefix(&[0xFE, 0xFF]) {
            (Cow::Owned(decode_utf16(body, true, 2)?), Encoding::Utf16Be)
        } else {
            if looks_binary(&bytes[..bytes.len().min(BINARY_SNIFF_BYTES)]) {
                return Err(InputError::new(InputErrorKind::Binary));
            }
            let (body, skipped) = match bytes.strip_prefix(UTF8_BOM) {
                Some(rest) => (rest, UTF8_BOM.len()),
                None => (bytes, 0),
            };
            match std::str::from_utf8(body) {
                Ok(t) if skipped > 0 => (Cow::Borrowed(t), Encoding::Utf8Bom),
                Ok(t) => (Cow::Borrowed(t), Encoding::Utf8),
                Err(e) => {
                    let any_multibyte = body
                        .utf8_chunks()
                        .any(|c| c.valid().bytes().any(|b| b >= 0x80));
                    if skipped > 0 || any_multibyte {
                        return Err(not_text(skipped + e.valid_up_to()));
                    }
                    (
                        Cow::Owned(body.iter().map(|&b| cp1252_char(b)).collect()),
                        Encoding::Windows1252,
                    )
                }
            }
        };
    if text.trim().is_empty() {
        return Err(InputError::new(InputErrorKind::Empty));
    }
    Ok(Decoded { text, encoding })
}

/// True when the sample holds a NUL byte, or more than 1 % (and at least 3)
/// control characters other than tab, line feed, carriage return and form feed.
fn looks_binary(sample: &[u8]) -> bool {
    if sample.contains(&0) {
        return true;
    }
    let control = sample
        .iter()
        .filter(|&&b| (b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r' | 0x0C)) || b == 0x7F)
        .count();
    control >= 3 && control * 100 > sample.len()
}

/// Guesses the format from the first non-blank character.
pub fn sniff(text: &str) -> Format {
    match text.trim_start().as_bytes().first() {
        Some(b'{') | Some(b'[') => Format::Json,
        _ => Format::Delimited,
    }
}

/// `s.trim()`, with a shortcut for the usual cell: when its first and last
/// bytes are printable ASCII other than the space (`!` to DEL), neither end
/// can be whitespace and the cell is returned as it is without decoding
/// characters from both ends. The same result as `str::trim` always.
#[inline]
pub fn trim(s: &str) -> &str {
    match s.as_bytes() {
        [f, .., l] if (0x21..0x80).contains(f) && (0x21..0x80).contains(l) => s,
        [f] if (0x21..0x80).contains(f) => s,
        _ => s.trim(),
    }
}

/// Cuts a cell's text to at most [`MAX_VALUE_CHARS`] characters for a
/// rejection message, marking a cut with "…".
pub fn cut_value(s: &str) -> String {
    match s.char_indices().nth(MAX_VALUE_CHARS) {
        None => s.to_string(),
        Some(_) => {
            let end = s
                .char_indices()
                .nth(MAX_VALUE_CHARS - 1)
                .map_or(s.len(), |(i, _)| i);
            let mut out = s[..end].to_string();
            out.push('…');
            out
        }
    }
}

/// Longest value kept in a rejection, in characters.
pub const MAX_VALUE_CHARS: usize = 60;

#[cfg(test)]
mod tests {
    use super::*;

    fn kind(bytes: &[u8]) -> InputErrorKind {
        decode(bytes).unwrap_err().kind
    }

    /// The shortcut trim against `str::trim` (the definition it must
    /// equal) on every cell of up to three characters from a set holding
    /// ASCII and Unicode whitespace, control characters, the ends of the
    /// printable ASCII range and a multi-byte letter.
    #[test]
    fn trim_equals_str_trim() {
        let chars = [
            ' ', '\t', '\n', '\r', '\u{0B}', '\u{0C}', '\u{1F}', '!', '5', '~', '\u{7F}', '\u{85}',
            '\u{A0}', '\u{3000}', 'é', 'a',
        ];
        let mut cells = vec![String::new()];
        for a in chars {
            cells.push(a.to_string());
            for b in chars {
                cells.push(format!("{a}{b}"));
                for c in chars {
                    cells.push(format!("{a}{b}{c}"));
                }
            }
        }
        for c in &cells {
            assert_eq!(trim(c), c.trim(), "{c:?}");
            // Same slice, not just equal text.
            assert_eq!(trim(c).as_ptr(), c.trim().as_ptr(), "{c:?}");
        }
    }

    #[test]
    fn empty_and_whitespace() {
        assert_eq!(kind(b""), InputErrorKind::Empty);
        assert_eq!(kind(b"  \r\n\t\n"), InputErrorKind::Empty);
        assert_eq!(kind(b"\xEF\xBB\xBF \n"), InputErrorKind::Empty);
    }

    #[test]
    fn bom_is_stripped() {
        let d = decode(b"\xEF\xBB\xBFx;y\n").unwrap();
        assert_eq!((d.text.as_ref(), d.encoding), ("x;y\n", Encoding::Utf8Bom));
        assert_eq!(decode(b"x;y\n").unwrap().encoding, Encoding::Utf8);
    }

    #[test]
    fn png_header_is_binary() {
        let png = [
            0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A, 0, 0, 0, 0x0D, b'I', b'H',
        ];
        assert_eq!(kind(&png), InputErrorKind::Binary);
    }

    #[test]
    fn control_characters_are_binary() {
        let mut v = b"x,y\n".to_vec();
        v.extend(std::iter::repeat_n(0x01u8, 10));
        assert_eq!(kind(&v), InputErrorKind::Binary);
        // One stray control character in a long text is tolerated.
        let mut v = b"x,y\n".repeat(100);
        v.push(0x01);
        assert!(decode(&v).is_ok());
    }

    #[test]
    fn windows_1252_is_decoded() {
        // Latin-1 / Windows-1252 bytes: E9 = é, DF = ß, 80 = € (CP1252.TXT).
        let d = decode(b"x,y,name\n1,2,caf\xE9 Stra\xDFe \x80\n").unwrap();
        assert_eq!(d.encoding, Encoding::Windows1252);
        assert_eq!(d.text, "x,y,name\n1,2,café Straße €\n");
        assert_eq!(cp1252_char(0x9F), 'Ÿ');
        assert_eq!(cp1252_char(0x81), '\u{81}');
        assert_eq!(cp1252_char(b'a'), 'a');
    }

    #[test]
    fn damaged_utf8_is_refused_with_offset() {
        // Valid UTF-8 "é" (C3 A9) and then a lone FF: not guessed as 1252.
        assert_eq!(
            kind(b"x,y,name\n1,2,caf\xC3\xA9\n1,2,\xFF\n"),
            InputErrorKind::NotUtf8 { byte_offset: 23 }
        );
        // After a UTF-8 BOM the offset counts the BOM too.
        assert_eq!(
            kind(b"\xEF\xBB\xBFab\xFF"),
            InputErrorKind::NotUtf8 { byte_offset: 5 }
        );
    }

    #[test]
    fn utf16_with_bom_is_decoded() {
        let le = decode(b"\xFF\xFEx\x00,\x00y\x00\n\x00").unwrap();
        assert_eq!(
            (le.text.as_ref(), le.encoding),
            ("x,y\n", Encoding::Utf16Le)
        );
        let be = decode(b"\xFE\xFF\x00x\x00,\x00\xE9").unwrap();
        assert_eq!((be.text.as_ref(), be.encoding), ("x,é", Encoding::Utf16Be));
        // An odd byte count and an unpaired surrogate are refused at the bad byte.
        assert_eq!(
            kind(b"\xFF\xFEx\x00,"),
            InputErrorKind::NotUtf8 { byte_offset: 4 }
        );
        assert_eq!(
            kind(b"\xFF\xFEx\x00\x00\xD8y\x00"),
            InputErrorKind::NotUtf8 { byte_offset: 4 }
        );
        // UTF-32 is still refused.
        assert_eq!(
            kind(b"\xFF\xFE\x00\x00x\x00\x00\x00"),
            InputErrorKind::NotUtf8 { byte_offset: 0 }
        );
    }

    #[test]
    fn sniffing() {
        assert_eq!(sniff("  \n{\"type\":1}"), Format::Json);
        assert_eq!(sniff("[1]"), Format::Json);
        assert_eq!(sniff("x,y\n"), Format::Delimited);
    }

    #[test]
    fn cutting_values() {
        assert_eq!(cut_value("abc"), "abc");
        let long: String = "é".repeat(70);
        let cut = cut_value(&long);
        assert_eq!(cut.chars().count(), MAX_VALUE_CHARS);
        assert!(cut.ends_with('…'));
        let exact: String = "a".repeat(60);
        assert_eq!(cut_value(&exact), exact);
    }
}
