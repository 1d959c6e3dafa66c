//! Delimited text: delimiter detection (`,` `;` tab), quoted fields, decimal comma.
//!
//! Quoting follows RFC 4180 (Shafranovich 2005, "Common Format and MIME Type
//! for Comma-Separated Values (CSV) Files"): a field that *starts* with `"`
//! runs to the next lone `"`, may hold delimiters and line breaks, and writes a
//! quote as `""`. Lines end with CRLF, LF or a lone CR. Two lenient choices:
//! a `"` inside an unquoted field is kept literally, and text between a
//! closing quote and the next delimiter is appended to the field.
//!
//! **Row numbers** are those a spreadsheet shows after opening the file: every
//! record is one row and so is every blank line, and a record whose quoted
//! field holds line breaks is still one row. For a file without line breaks
//! inside quotes this is simply the line number.
//!
//! The reader borrows field text from the input and allocates only for quoted
//! fields that contain doubled quotes.

use super::text::trim;
use std::borrow::Cow;
use std::ops::Range;

/// Delimiters tried by [`detect_delimiter`], in order of preference on a tie.
///
/// On a tie (both give the same consistent field count), tab and semicolon
/// are preferred to comma: commas also appear inside decimal-comma numbers,
/// whereas a tab or semicolon on every line is unlikely to be accidental.
pub const CANDIDATE_DELIMITERS: [u8; 3] = [b'\t', b';', b','];

/// Records (after the header) inspected by [`detect_delimiter`].
pub const DETECT_RECORDS: usize = 50;

/// A quoted field that is never closed before the end of the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct UnclosedQuote {
    /// Spreadsheet row of the record holding the opening quote.
    pub row: u64,
    /// 0-based index of the field within its record.
    pub field: usize,
}

/// Where a record was found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RecordInfo {
    /// Spreadsheet row (1-based; blank lines count).
    pub row: u64,
    /// Byte range of the record in the text, without its line break.
    pub span: Range<usize>,
    /// Every field is empty or whitespace (a blank line, or `,,,`).
    pub blank: bool,
}

/// Reads records one by one from delimited text.
#[derive(Debug, Clone)]
pub struct Reader<'a> {
    text: &'a str,
    pos: usize,
    delim: u8,
    next_row: u64,
}

impl<'a> Reader<'a> {
    /// A reader over `text` with the given one-byte ASCII delimiter.
    pub fn new(text: &'a str, delim: u8) -> Reader<'a> {
        Reader {
            text,
            pos: 0,
            delim,
            next_row: 1,
        }
    }

    /// A reader of the records of `text[from..to]`, numbering them from
    /// row `first_row` on. The piece must start where a record starts; its
    /// end is one too when reading it gives no [`UnclosedQuote`] (a quoted
    /// field reaching past `to` is cut there and reported as unclosed).
    /// Spans are positions in `text`.
    pub fn piece(text: &'a str, delim: u8, from: usize, to: usize, first_row: u64) -> Reader<'a> {
        Reader {
            text: &text[..to],
            pos: from,
            delim,
            next_row: first_row,
        }
    }

    /// Byte position of the next record in the text.
    pub fn position(&self) -> usize {
        self.pos
    }

    /// Row number the next record will get.
    pub fn next_row(&self) -> u64 {
        self.next_row
    }

    /// Reads the next record into `fields` (cleared first). Returns `None` at
    /// the end of the text.
    pub fn read_into(
        &mut self,
        fields: &mut Vec<Cow<'a, str>>,
    ) -> Option<Result<RecordInfo, UnclosedQuote>> {
        fields.clear();
        let text = self.text;
        let b = text.as_bytes();
        let len = b.len();
        if self.pos >= len {
            return None;
        }
        let row = self.next_row;
        self.next_row += 1;
        let start = self.pos;
        let mut pos = self.pos;
        let end;
        loop {
            // At the start of a field.
            let field: Cow<'a, str>;
            if pos < len && b[pos] == b'"' {
                let inner = pos + 1;
                let mut p = inner;
                let mut doubled = false;
                let close = loop {
                    match b[p..].iter().position(|&c| c == b'"') {
                        None => {
                            self.pos = len;
                            return Some(Err(UnclosedQuote {
                                row,
                                field: fields.len(),
                            }));
                        }
                        Some(off) => {
                            let q = p + off;
                            if q + 1 < len && b[q + 1] == b'"' {
                                doubled = true;
                                p = q + 2;
                            } else {
                                break q;
                            }
                        }
                    }
                };
                let raw = &text[inner..close];
                let mut f: Cow<'a, str> = if doubled {
                    Cow::Owned(raw.replace("\"\"", "\""))
                } else {
                    Cow::Borrowed(raw)
                };
                pos = close + 1;
                // Lenient: stray text after the closing quote is kept.
                let tail_end = self.scan_unquoted(pos);
                if tail_end > pos {
                    f.to_mut().push_str(&text[pos..tail_end]);
                    pos = tail_end;
                }
                field = f;
            } else {
                let e = self.scan_unquoted(pos);
                field = Cow::Borrowed(&text[pos..e]);
                pos = e;
            }
            fields.push(field);
            if pos >= len {
                end = len;
                break;
            }
            let c = b[pos];
            if c == self.delim {
                pos += 1;
                continue;
            }
            end = pos;
            // A line break: CRLF, LF or lone CR.
            pos += 1;
            if c == b'\r' && pos < len && b[pos] == b'\n' {
                pos += 1;
            }
            break;
        }
        self.pos = pos;
        let blank = fields.iter().all(|f| trim(f).is_empty());
        Some(Ok(RecordInfo {
            row,
            span: start..end,
            blank,
        }))
    }

    /// End of an unquoted stretch starting at `from`: the next delimiter,
    /// line break or the end of the text.
    ///
    /// Eight bytes at a time: a byte of the word equals `c` where the word
    /// XOR `c` repeated has a zero byte, and `(v − 0x01…01) & !v & 0x80…80`
    /// marks the lowest zero byte of v exactly (a borrow only reaches the
    /// bytes above it), so the lowest mark is the first delimiter or line
    /// break (the same position as looking byte by byte; a unit test
    /// compares the two).
    fn scan_unquoted(&self, from: usize) -> usize {
        let b = self.text.as_bytes();
        let d = self.delim;
        const ONES: u64 = 0x0101_0101_0101_0101;
        const HIGH: u64 = 0x8080_8080_8080_8080;
        let (wd, wn, wr) = (ONES * d as u64, ONES * b'\n' as u64, ONES * b'\r' as u64);
        let zero = |v: u64| v.wrapping_sub(ONES) & !v & HIGH;
        let mut i = from;
        while let Some(chunk) = b.get(i..i + 8) {
            let mut w = [0u8; 8];
            w.copy_from_slice(chunk);
            let w = u64::from_le_bytes(w);
            let m = zero(w ^ wd) | zero(w ^ wn) | zero(w ^ wr);
            if m != 0 {
                return i + (m.trailing_zeros() / 8) as usize;
            }
            i += 8;
        }
        b[i.min(b.len())..]
            .iter()
            .position(|&c| c == d || c == b'\n' || c == b'\r')
            .map_or(b.len(), |off| i + off)
    }
}

/// Field counts of the first non-blank records under one delimiter.
fn field_counts(text: &str, delim: u8, max_records: usize) -> Vec<usize> {
    let mut reader = Reader::new(text, delim);
    let mut fields = Vec::new();
    let mut counts = Vec::new();
    while counts.len() < max_records {
        match reader.read_into(&mut fields) {
            None | Some(Err(_)) => break,
            Some(Ok(info)) if info.blank => {}
            Some(Ok(_)) => counts.push(fields.len()),
        }
    }
    counts
}

/// Picks the delimiter among comma, semicolon and tab.
///
/// For each candidate the header and up to [`DETECT_RECORDS`] following
/// records are split (quotes respected). A candidate qualifies when the
/// header splits into more than one field; among those, the one whose records
/// most often have the header's field count wins, then the order of
/// [`CANDIDATE_DELIMITERS`]. Returns `None` when no candidate splits the
/// header (a single-column file).
pub fn detect_delimiter(text: &str) -> Option<u8> {
    let mut best: Option<(u8, f64)> = None;
    for &d in &CANDIDATE_DELIMITERS {
        let counts = field_counts(text, d, DETECT_RECORDS + 1);
        let Some(&h) = counts.first() else { continue };
        if h < 2 {
            continue;
        }
        let rest = &counts[1..];
        let consistency = if rest.is_empty() {
            1.0
        } else {
            rest.iter().filter(|&&c| c == h).count() as f64 / rest.len() as f64
        };
        if best.is_none_or(|(_, c)| consistency > c) {
            best = Some((d, consistency));
        }
    }
    best.map(|(d, _)| d)
}

/// Field count of the header (first non-blank record) under `delim`.
pub fn header_width(text: &str, delim: u8) -> usize {
    field_counts(text, delim, 1).first().copied().unwrap_or(0)
}

/// Shows a delimiter in messages: `","`, `";"`, `tab`.
pub fn delimiter_name(d: char) -> String {
    match d {
        '\t' => "tab".to_string(),
        c => format!("\"{c}\""),
    }
}

/// What a number-looking cell uses as its decimal mark.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DecimalMark {
    /// Digits, one comma, digits (`12,5`, `-0,25`).
    Comma,
    /// Digits with one point (`12.5`).
    Point,
    /// Neither (integer, empty, text ...).
    None,
}

/// Classifies a cell for decimal-comma detection.
pub fn decimal_mark(cell: &str) -> DecimalMark {
    let s = cell.trim();
    let s = s.strip_prefix(['-', '+']).unwrap_or(s);
    let (mut digits, mut commas, mut points) = (0, 0, 0);
    for c in s.bytes() {
        match c {
            b'0'..=b'9' => digits += 1,
            b',' => commas += 1,
            b'.' => points += 1,
            b'e' | b'E' | b'-' | b'+' => {}
            _ => return DecimalMark::None,
        }
    }
    if digits == 0 {
        DecimalMark::None
    } else if commas == 1 && points == 0 {
        DecimalMark::Comma
    } else if points == 1 && commas == 0 {
        DecimalMark::Point
    } else {
        DecimalMark::None
    }
}

/// Parses a number cell, returning `None` for anything that is not a finite
/// number (text, NaN, infinities, overflow such as `1e999`). With
/// `decimal_comma`, commas are read as decimal points, using `buf` as scratch.
pub fn parse_number(cell: &str, decimal_comma: bool, buf: &mut String) -> Option<f64> {
    let s = trim(cell);
    let comma = decimal_comma && s.contains(',');
    if let Some(v) = plain_decimal(s.as_bytes(), if comma { b',' } else { b'.' }) {
        return Some(v);
    }
    let v: f64 = if comma {
        buf.clear();
        buf.extend(s.chars().map(|c| if c == ',' { '.' } else { c }));
        buf.parse().ok()?
    } else {
        s.parse().ok()?
    };
    v.is_finite().then_some(v)
}

/// A short plain decimal, `[+-]digits[<mark>digits]` with at least one
/// digit and at most 15 in all, read as an integer divided by a power of
/// ten: both are exact in f64 (below 2^53, and 10^k for k ≤ 22), so the
/// one correctly rounded division gives the nearest f64 to the decimal, as
/// the general parser does (Clinger 1990, "How to read floating point
/// numbers accurately", PLDI '90, the fast path). `None` for anything else
/// (exponents, more digits, text), which the general parser then reads.
fn plain_decimal(b: &[u8], mark: u8) -> Option<f64> {
    const TEN: [f64; 16] = [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
    ];
    let (neg, rest) = match b.first() {
        Some(b'-') => (true, &b[1..]),
        Some(b'+') => (false, &b[1..]),
        _ => (false, b),
    };
    if rest.is_empty() || rest.len() > 16 {
        return None;
    }
    let (mut m, mut digits, mut frac, mut seen_mark) = (0u64, 0usize, 0usize, false);
    for &c in rest {
        if c.is_ascii_digit() {
            m = m * 10 + (c - b'0') as u64;
            digits += 1;
            frac += seen_mark as usize;
        } else if c == mark && !seen_mark {
            seen_mark = true;
        } else {
            return None;
        }
    }
    if digits == 0 || digits > 15 {
        return None;
    }
    let v = m as f64 / TEN[frac];
    Some(if neg { -v } else { v })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fast path gives the general parser's value, bit for bit, on
    /// plain decimals of every length up to the limit and beyond, signs,
    /// leading and trailing marks, zeros, and on what it must leave to the
    /// general parser.
    #[test]
    fn plain_decimals_read_as_the_general_parser_does() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(17);
        let mut taken = 0;
        for k in 0..300_000 {
            let int_len = rng.random_range(0..10);
            let frac_len = rng.random_range(0..12);
            let digit = |rng: &mut crate::rng::Rng| (b'0' + rng.random_range(0..10u8)) as char;
            let mut t = String::new();
            match k % 5 {
                0 => t.push('-'),
                1 => t.push('+'),
                _ => {}
            }
            (0..int_len).for_each(|_| t.push(digit(&mut rng)));
            if k % 7 != 0 {
                t.push('.');
            }
            (0..frac_len).for_each(|_| t.push(digit(&mut rng)));
            let want: Option<f64> = t.parse().ok();
            let got = plain_decimal(t.as_bytes(), b'.');
            if let Some(g) = got {
                taken += 1;
                assert_eq!(Some(g.to_bits()), want.map(f64::to_bits), "{t}");
            }
            let comma = t.replace('.', ",");
            if let Some(g) = plain_decimal(comma.as_bytes(), b',') {
                assert_eq!(Some(g.to_bits()), want.map(f64::to_bits), "{comma}");
            }
            let mut buf = String::new();
            let full = parse_number(&t, false, &mut buf);
            assert_eq!(full.map(f64::to_bits), want.map(f64::to_bits), "{t}");
        }
        assert!(taken > 200_000, "{taken}");
        for t in [
            "",
            ".",
            "-",
            "+",
            "-.",
            "1e5",
            "1.5e3",
            "inf",
            "NaN",
            "1..2",
            "1.2.3",
            "0x10",
            "1 000",
            "1234567890123456",
            "-0",
            "-0.0",
            "0.",
            ".5",
            "000000000000001.5",
        ] {
            let want: Option<f64> = t.parse().ok();
            if let Some(g) = plain_decimal(t.as_bytes(), b'.') {
                assert_eq!(Some(g.to_bits()), want.map(f64::to_bits), "{t}");
            }
        }
        assert_eq!(
            plain_decimal(b"-0", b'.').map(f64::to_bits),
            Some((-0.0f64).to_bits())
        );
        assert_eq!(plain_decimal(b"1234567890123456", b'.'), None);
        assert_eq!(plain_decimal(b"1,5", b'.'), None);
        assert_eq!(plain_decimal(b"1.5", b','), None);
    }

    fn records(text: &str, d: u8) -> Vec<(u64, Vec<String>)> {
        let mut r = Reader::new(text, d);
        let mut f = Vec::new();
        let mut out = Vec::new();
        while let Some(res) = r.read_into(&mut f) {
            let info = res.unwrap();
            if !info.blank {
                out.push((info.row, f.iter().map(|c| c.to_string()).collect()));
            }
        }
        out
    }

    /// The word-at-a-time scan against looking byte by byte (its
    /// definition) from every start in texts of delimiters, line breaks,
    /// quotes, letters, multi-byte characters and bytes one off the ones
    /// looked for, of every length up to 40.
    #[test]
    fn scan_unquoted_equals_bytewise() {
        use rand::RngExt;
        let pieces = [
            ",", ";", "\t", "\n", "\r", "\"", "a", "9", "é", "+", "-", "\u{0B}", "\u{0C}", "<", ":",
        ];
        let mut rng = crate::rng::rng_from_seed(41);
        for _ in 0..3000 {
            let len = rng.random_range(0..40);
            let text: String = (0..len)
                .map(|_| pieces[rng.random_range(0..pieces.len())])
                .collect();
            for d in CANDIDATE_DELIMITERS {
                let r = Reader::new(&text, d);
                let b = text.as_bytes();
                for from in 0..=b.len() {
                    let want = b[from..]
                        .iter()
                        .position(|&c| c == d || c == b'\n' || c == b'\r')
                        .map_or(b.len(), |off| from + off);
                    assert_eq!(r.scan_unquoted(from), want, "{text:?} from {from}");
                }
            }
        }
    }

    #[test]
    fn rfc4180_quoting() {
        let t = "a,b,c\r\n\"x,1\",\"say \"\"hi\"\"\",\"two\r\nlines\"\r\n4,5,6\r\n";
        let r = records(t, b',');
        assert_eq!(r.len(), 3);
        assert_eq!(r[1].1, vec!["x,1", "say \"hi\"", "two\r\nlines"]);
        // The quoted line break keeps the record on one spreadsheet row.
        assert_eq!(r[2], (3, vec!["4".to_string(), "5".into(), "6".into()]));
    }

    #[test]
    fn blank_lines_count_as_rows_but_are_flagged() {
        let r = records("x,y\n\n1,2\n,\n3,4", b',');
        assert_eq!(r.iter().map(|x| x.0).collect::<Vec<_>>(), vec![1, 3, 5]);
    }

    #[test]
    fn lone_cr_line_endings() {
        let r = records("x;y\r1;2\r3;4\r", b';');
        assert_eq!(r.len(), 3);
        assert_eq!(r[2].1, vec!["3", "4"]);
    }

    #[test]
    fn trailing_delimiter_gives_empty_field() {
        let r = records("x,y,\n1,2,\n", b',');
        assert_eq!(r[1].1, vec!["1", "2", ""]);
    }

    #[test]
    fn stray_quotes_are_literal() {
        let r = records("a,b\nab\"c,\"q\"z\n", b',');
        assert_eq!(r[1].1, vec!["ab\"c", "qz"]);
    }

    #[test]
    fn unclosed_quote_is_reported_with_row_and_field() {
        let mut r = Reader::new("x,y\n1,2\n3,\"4\n5,6\n", b',');
        let mut f = Vec::new();
        r.read_into(&mut f).unwrap().unwrap();
        r.read_into(&mut f).unwrap().unwrap();
        assert_eq!(
            r.read_into(&mut f).unwrap(),
            Err(UnclosedQuote { row: 3, field: 1 })
        );
        assert!(r.read_into(&mut f).is_none());
    }

    #[test]
    fn delimiter_detection() {
        assert_eq!(detect_delimiter("x,y\n1,2\n3,4\n"), Some(b','));
        assert_eq!(detect_delimiter("x;y\n1,5;2,5\n3;4\n"), Some(b';'));
        assert_eq!(detect_delimiter("x\ty\n1,5\t2,5\n"), Some(b'\t'));
        // Quoted commas do not count.
        assert_eq!(detect_delimiter("name;x;y\n\"a,b\";1;2\n"), Some(b';'));
        // Header with commas in names, semicolon delimiter, decimal commas:
        // both split consistently; semicolon wins the tie.
        assert_eq!(
            detect_delimiter("lon, deg;lat, deg\n12,5;45,3\n"),
            Some(b';')
        );
        assert_eq!(detect_delimiter("just one column\n1\n2\n"), None);
    }

    #[test]
    fn decimal_marks() {
        assert_eq!(decimal_mark("12,5"), DecimalMark::Comma);
        assert_eq!(decimal_mark(" -0,25 "), DecimalMark::Comma);
        assert_eq!(decimal_mark("12.5"), DecimalMark::Point);
        assert_eq!(decimal_mark("12"), DecimalMark::None);
        assert_eq!(decimal_mark("1,234,5"), DecimalMark::None);
        assert_eq!(decimal_mark("a,b"), DecimalMark::None);
    }

    #[test]
    fn numbers() {
        let mut buf = String::new();
        assert_eq!(parse_number(" 12.5 ", false, &mut buf), Some(12.5));
        assert_eq!(parse_number("12,5", true, &mut buf), Some(12.5));
        assert_eq!(parse_number("12,5", false, &mut buf), None);
        assert_eq!(parse_number("1e3", false, &mut buf), Some(1000.0));
        for bad in [
            "NaN",
            "nan",
            "inf",
            "-Infinity",
            "1e999",
            "-1e400",
            "abc",
            "",
            "1.2.3",
            "0x10",
        ] {
            assert_eq!(parse_number(bad, true, &mut buf), None, "{bad}");
        }
    }
}
