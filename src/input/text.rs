//! Byte-level checks and format sniffing.
//!
//! Order of the checks in [`decode`], each giving a file-level [`InputError`]:
//! 1. no bytes at all → `Empty`;
//! 2. a UTF-16 or UTF-32 byte-order mark → `NotUtf8 { byte_offset: 0 }` (the
//!    message asks the user to save as UTF-8, which is the fix);
//! 3. a NUL byte, or more than 1 % control characters (and at least 3), in the
//!    first 8 KiB → `Binary` (an image, a spreadsheet workbook, a zip ...);
//! 4. invalid UTF-8 → `NotUtf8` with the offset of the first bad byte,
//!    counted in the file as given (a leading BOM included);
//! 5. only whitespace after the optional UTF-8 BOM → `Empty`.

use crate::error::{InputError, InputErrorKind};

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

/// Checks the bytes are non-empty UTF-8 text (stripping a BOM) and returns the text.
pub fn decode(bytes: &[u8]) -> Result<&str, InputError> {
    if bytes.is_empty() {
        return Err(InputError::new(InputErrorKind::Empty));
    }
    // UTF-32 LE starts with FF FE 00 00, so it is caught by the UTF-16 LE test too.
    if bytes.starts_with(&[0xFF, 0xFE])
        || bytes.starts_with(&[0xFE, 0xFF])
        || bytes.starts_with(&[0x00, 0x00, 0xFE, 0xFF])
    {
        return Err(InputError::new(InputErrorKind::NotUtf8 { byte_offset: 0 }));
    }
    if looks_binary(&bytes[..bytes.len().min(BINARY_SNIFF_BYTES)]) {
        return Err(InputError::new(InputErrorKind::Binary));
    }
    let (body, skipped) = match bytes.strip_prefix(UTF8_BOM) {
        Some(rest) => (rest, UTF8_BOM.len()),
        None => (bytes, 0),
    };
    let text = std::str::from_utf8(body).map_err(|e| {
        InputError::new(InputErrorKind::NotUtf8 {
            byte_offset: skipped + e.valid_up_to(),
        })
    })?;
    if text.trim().is_empty() {
        return Err(InputError::new(InputErrorKind::Empty));
    }
    Ok(text)
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

    #[test]
    fn empty_and_whitespace() {
        assert_eq!(kind(b""), InputErrorKind::Empty);
        assert_eq!(kind(b"  \r\n\t\n"), InputErrorKind::Empty);
        assert_eq!(kind(b"\xEF\xBB\xBF \n"), InputErrorKind::Empty);
    }

    #[test]
    fn bom_is_stripped() {
        assert_eq!(decode(b"\xEF\xBB\xBFx;y\n").unwrap(), "x;y\n");
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
    fn latin1_is_not_utf8_with_offset() {
        assert_eq!(
            kind(b"x,y,name\n1,2,caf\xE9\n"),
            InputErrorKind::NotUtf8 { byte_offset: 16 }
        );
        // The offset counts the BOM too.
        assert_eq!(
            kind(b"\xEF\xBB\xBFab\xFF"),
            InputErrorKind::NotUtf8 { byte_offset: 5 }
        );
    }

    #[test]
    fn utf16_is_reported_as_not_utf8() {
        assert_eq!(
            kind(b"\xFF\xFEx\x00,\x00y\x00"),
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
