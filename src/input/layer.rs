//! Builds a [`RawLayer`] from a delimited table, row by row.
//!
//! Steps: pick the delimiter ([`csv::detect_delimiter`] unless given), take
//! the first non-blank record as the header, resolve the column roles
//! ([`columns`]), look at up to [`SAMPLE_RECORDS`] data records to decide on
//! decimal commas and on detected time / weight columns, then read every
//! record once.
//!
//! Each non-blank data record is either accepted or gets exactly one
//! [`Rejection`]: the first problem found, checking in this order:
//! fewer fields than the header, more non-empty fields than the header
//! (extra fields that are all empty, as left by a trailing delimiter, are
//! ignored), x, y. Records that are blank (or whose fields are all empty,
//! like `;;;`) are skipped and not counted.
//!
//! **Optional values never remove a row.** An empty or unreadable time, or
//! an empty, non-numeric or negative weight, leaves the row in the layer
//! (so in every spatial analysis) with NaN for that value, and one entry in
//! `incomplete` naming the row, column and reason. The category is never a
//! problem: an empty one becomes [`BLANK_CATEGORY`].
//!
//! **Date order**: unless the caller gives `date_order`, every value of the
//! time column is looked at first ([`OrderDetector`]) and the order that no
//! value contradicts is used; the layer's `date_order` says which and why.
//!
//! Two choices made here, beyond the format itself:
//! * **Decimal comma** is used when the delimiter is `;` or tab and, among
//!   the sampled x / y / weight cells, numbers written like `12,5` are at
//!   least as common as numbers written like `12.5` (and there is one).
//! * A **detected** (not user-named) time or weight column is used only if
//!   at least one sampled value can be read; a column called "reported"
//!   holding yes / no is thus ignored instead of rejecting every row. A
//!   column the user named is always used.

use super::columns::{self, AttrRole, AttrRoles};
use super::csv::{self, DecimalMark, Reader};
use super::text::{cut_value, trim};
use super::time::{parse_time, readable_any_order, DateOrderReport, OrderDetector};
use super::{
    CoordKind, RawLayer, ReadOptions, RejectReason, Rejection, ResolvedMapping, SourceFormat,
};
use crate::error::{InputError, InputErrorKind};
use std::borrow::Cow;
use std::collections::HashMap;
use std::fmt;

/// Data records looked at before reading, for decimal-comma and column checks.
pub const SAMPLE_RECORDS: usize = 200;

/// Category given to rows whose category cell is empty.
pub const BLANK_CATEGORY: &str = "(blank)";

/// Accumulates accepted points and rejections; shared with the GeoJSON reader.
#[derive(Debug)]
pub(crate) struct Builder {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub time: Option<Vec<f64>>,
    /// End of each point's time window (pushed by [`Builder::accept_until`]
    /// after [`Builder::accept`]); `None` without a time-until column.
    pub time_end: Option<Vec<f64>>,
    pub category: Option<Vec<u32>>,
    pub category_names: Vec<String>,
    category_ids: HashMap<String, u32>,
    pub weight: Option<Vec<f64>>,
    pub row: Vec<u64>,
    pub rejections: Vec<Rejection>,
    pub incomplete: Vec<Rejection>,
    pub rows_read: u64,
    pub time_has_clock: bool,
    pub date_order: Option<DateOrderReport>,
}

impl Builder {
    pub fn new(time: bool, category: bool, weight: bool) -> Builder {
        Builder {
            x: Vec::new(),
            y: Vec::new(),
            time: time.then(Vec::new),
            time_end: None,
            category: category.then(Vec::new),
            category_names: Vec::new(),
            category_ids: HashMap::new(),
            weight: weight.then(Vec::new),
            row: Vec::new(),
            rejections: Vec::new(),
            incomplete: Vec::new(),
            rows_read: 0,
            time_has_clock: false,
            date_order: None,
        }
    }

    pub fn reserve(&mut self, n: usize) {
        self.x.reserve(n);
        self.y.reserve(n);
        self.row.reserve(n);
        if let Some(t) = &mut self.time {
            t.reserve(n);
        }
        if let Some(c) = &mut self.category {
            c.reserve(n);
        }
        if let Some(w) = &mut self.weight {
            w.reserve(n);
        }
    }

    pub fn reject(&mut self, row: u64, column: Option<&str>, reason: RejectReason, value: &str) {
        self.rejections.push(Rejection {
            row,
            column: column.map(str::to_string),
            reason,
            value: cut_value(value),
        });
    }

    /// Notes an optional value of an accepted row that could not be used.
    pub fn note(&mut self, row: u64, column: &str, reason: RejectReason, value: &str) {
        self.incomplete.push(Rejection {
            row,
            column: Some(column.to_string()),
            reason,
            value: cut_value(value),
        });
    }

    /// Index of a category label, adding it in first-seen order.
    pub fn category_id(&mut self, label: &str) -> u32 {
        let label = trim(label);
        let label = if label.is_empty() {
            BLANK_CATEGORY
        } else {
            label
        };
        // A few categories (the usual case): comparing the short names is
        // cheaper than hashing the label.
        if self.category_names.len() <= 8 {
            if let Some(id) = self.category_names.iter().position(|n| n == label) {
                return id as u32;
            }
        } else if let Some(&id) = self.category_ids.get(label) {
            return id;
        }
        let id = self.category_names.len() as u32;
        self.category_names.push(label.to_string());
        self.category_ids.insert(label.to_string(), id);
        id
    }

    /// Adds an accepted point; `t` is (days, has clock time), NaN days for
    /// no usable time; `w` is NaN for no usable weight. Attribute values are
    /// ignored for attributes the layer does not carry.
    pub fn accept(&mut self, row: u64, x: f64, y: f64, t: (f64, bool), cat: u32, w: f64) {
        let (t, clock) = t;
        self.x.push(x);
        self.y.push(y);
        self.row.push(row);
        if let Some(v) = &mut self.time {
            v.push(t);
            self.time_has_clock |= clock;
        }
        if let Some(v) = &mut self.category {
            v.push(cat);
        }
        if let Some(v) = &mut self.weight {
            v.push(w);
        }
    }

    /// The end of the window of the point just accepted (NaN = none).
    /// Does nothing unless `time_end` was set up (`Some`).
    pub fn accept_until(&mut self, e: f64) {
        if let Some(v) = &mut self.time_end {
            v.push(e);
        }
    }

    /// Adds what `later` read from the rows after this builder's, numbered
    /// from 1 there: `rows_before` is added to its row numbers and its
    /// categories are renumbered in this builder's first-seen order. The
    /// same as one builder reading both in turn.
    #[cfg(not(target_arch = "wasm32"))]
    pub fn append(&mut self, later: Builder, rows_before: u64) {
        let shift = |v: Vec<Rejection>| {
            v.into_iter().map(move |r| Rejection {
                row: r.row + rows_before,
                ..r
            })
        };
        self.rejections.extend(shift(later.rejections));
        self.incomplete.extend(shift(later.incomplete));
        self.row.extend(later.row.iter().map(|r| r + rows_before));
        self.x.extend_from_slice(&later.x);
        self.y.extend_from_slice(&later.y);
        let join = |a: &mut Option<Vec<f64>>, b: Option<Vec<f64>>| {
            if let (Some(a), Some(b)) = (a, b) {
                a.extend_from_slice(&b);
            }
        };
        join(&mut self.time, later.time);
        join(&mut self.time_end, later.time_end);
        join(&mut self.weight, later.weight);
        if let (Some(_), Some(c)) = (&self.category, later.category) {
            let ids: Vec<u32> = later
                .category_names
                .iter()
                .map(|n| self.category_id(n))
                .collect();
            if let Some(mine) = &mut self.category {
                mine.extend(c.iter().map(|&k| ids[k as usize]));
            }
        }
        self.rows_read += later.rows_read;
        self.time_has_clock |= later.time_has_clock;
    }

    pub fn finish(
        self,
        format: SourceFormat,
        columns: Vec<String>,
        mapping: ResolvedMapping,
        coords: CoordKind,
    ) -> RawLayer {
        debug_assert_eq!(
            self.x.len() as u64 + self.rejections.len() as u64,
            self.rows_read
        );
        RawLayer {
            format,
            columns,
            mapping,
            coords,
            x: self.x,
            y: self.y,
            time: self.time,
            time_end: self.time_end,
            category: self.category,
            category_names: self.category_names,
            weight: self.weight,
            row: self.row,
            rejections: self.rejections,
            incomplete: self.incomplete,
            rows_read: self.rows_read,
            time_has_clock: self.time_has_clock,
            date_order: self.date_order,
            encoding: super::text::Encoding::Utf8,
            keep_far_points: false,
        }
    }
}

/// Checks a coordinate against lon/lat ranges when the layer is lon/lat.
/// `is_x` selects longitude (x) or latitude (y).
pub(crate) fn range_problem(coords: CoordKind, is_x: bool, v: f64) -> Option<RejectReason> {
    if coords != CoordKind::LonLat {
        return None;
    }
    if is_x && !(-180.0..=180.0).contains(&v) {
        Some(RejectReason::LongitudeOutOfRange)
    } else if !is_x && !(-90.0..=90.0).contains(&v) {
        Some(RejectReason::LatitudeOutOfRange)
    } else {
        None
    }
}

/// Reads a weight: a finite number ≥ 0.
pub(crate) fn weight_value(cell: &str, decimal_comma: bool, buf: &mut String) -> Option<f64> {
    csv::parse_number(cell, decimal_comma, buf).filter(|w| *w >= 0.0)
}

/// Keeps a detected attribute only if `readable` accepts one of the samples.
pub(crate) fn keep_if_readable<'s>(
    role: Option<AttrRole>,
    samples: impl Iterator<Item = &'s str>,
    readable: impl Fn(&str) -> bool,
) -> Option<AttrRole> {
    match role {
        Some(r) if r.detected => {
            let mut seen = false;
            for s in samples {
                if !s.trim().is_empty() {
                    seen = true;
                    if readable(s) {
                        return Some(r);
                    }
                }
            }
            // No non-empty sample at all: keep it, the rows will say why.
            (!seen).then_some(r)
        }
        other => other,
    }
}

fn not_a_table(detail: impl Into<String>) -> InputError {
    InputError::new(InputErrorKind::NotATable {
        detail: detail.into(),
    })
}

/// Reads a CSV / semicolon / tab table of points.
pub fn from_csv(text: &str, opts: &ReadOptions) -> Result<RawLayer, InputError> {
    from_csv_in(text, opts, None)
}

/// [`from_csv`] with the records read in `pieces` pieces (native builds;
/// `None`: as many as the file's size and the machine's cores call for).
fn from_csv_in(
    text: &str,
    opts: &ReadOptions,
    pieces: Option<usize>,
) -> Result<RawLayer, InputError> {
    // 1. Delimiter.
    let delim = match opts.delimiter {
        Some(c) if c.is_ascii() && !matches!(c, '"' | '\n' | '\r') => {
            let d = c as u8;
            if csv::header_width(text, d) < 2 {
                let hint = match csv::detect_delimiter(text) {
                    Some(other) if other != d => format!(
                        "; the file seems to use {} instead",
                        csv::delimiter_name(other as char)
                    ),
                    _ => String::new(),
                };
                return Err(not_a_table(format!(
                    "with the delimiter {} the header has only one column{hint}",
                    csv::delimiter_name(c)
                )));
            }
            d
        }
        Some(c) => {
            return Err(not_a_table(format!(
                "{} cannot be used as a delimiter (use a comma, semicolon or tab)",
                csv::delimiter_name(c)
            )))
        }
        None => match csv::detect_delimiter(text) {
            Some(d) => d,
            None => {
                // A header whose quote never closes splits under no delimiter.
                let mut r = Reader::new(text, b',');
                let mut f = Vec::new();
                while let Some(res) = r.read_into(&mut f) {
                    match res {
                        Err(u) => {
                            return Err(not_a_table(
                                "a quoted field starts here but its closing quote is missing",
                            )
                            .at(u.row, None))
                        }
                        Ok(info) if info.blank => {}
                        Ok(_) => break,
                    }
                }
                return Err(not_a_table(
                    "only one column found; expected columns separated by commas, semicolons \
                     or tabs",
                ));
            }
        },
    };

    // 2. Header.
    let mut reader = Reader::new(text, delim);
    let mut fields: Vec<Cow<str>> = Vec::new();
    let unclosed = |u: csv::UnclosedQuote, headers: Option<&[String]>| {
        let col = headers.and_then(|h| h.get(u.field)).map(String::as_str);
        not_a_table("a quoted field starts here but its closing quote is missing").at(u.row, col)
    };
    let headers: Vec<String> = loop {
        match reader.read_into(&mut fields) {
            None => return Err(not_a_table("no header row")),
            Some(Err(u)) => return Err(unclosed(u, None)),
            Some(Ok(info)) if info.blank => {}
            Some(Ok(_)) => {
                break fields
                    .iter()
                    .enumerate()
                    .map(|(i, f)| {
                        let t = f.trim();
                        if t.is_empty() {
                            format!("column {}", i + 1)
                        } else {
                            t.to_string()
                        }
                    })
                    .collect()
            }
        }
    };
    if headers.len() < 2 {
        return Err(not_a_table("only one column found"));
    }

    // 3. Column roles.
    let xy = columns::resolve_xy(&headers, &opts.mapping, opts.coords)?;
    let attrs = columns::resolve_attributes(&headers, &opts.mapping, &[xy.x, xy.y])?;

    // 4. Sample data records.
    let mut sample: Vec<Vec<String>> = Vec::new();
    {
        let mut r = reader.clone();
        while sample.len() < SAMPLE_RECORDS {
            match r.read_into(&mut fields) {
                None => break,
                Some(Err(u)) => return Err(unclosed(u, Some(&headers))),
                Some(Ok(info)) if info.blank => {}
                Some(Ok(_)) => sample.push(fields.iter().map(|f| f.to_string()).collect()),
            }
        }
    }
    if sample.is_empty() {
        return Err(not_a_table("the table has a header row but no data rows"));
    }
    let cells = |i: usize| {
        sample
            .iter()
            .filter_map(move |r| r.get(i).map(String::as_str))
    };
    let decimal_comma = delim != b',' && {
        let (mut comma, mut point) = (0usize, 0usize);
        let mut numeric_cols = vec![xy.x, xy.y];
        numeric_cols.extend(attrs.weight.map(|r| r.index));
        for &c in &numeric_cols {
            for cell in cells(c) {
                match csv::decimal_mark(cell) {
                    DecimalMark::Comma => comma += 1,
                    DecimalMark::Point => point += 1,
                    DecimalMark::None => {}
                }
            }
        }
        comma > 0 && comma >= point
    };
    let given_order = opts.date_order;
    let until_role = attrs.time_until;
    let attrs = AttrRoles {
        time: keep_if_readable(attrs.time, cells_of(&sample, attrs.time), |s| {
            readable_any_order(s, given_order)
        }),
        category: attrs.category,
        weight: keep_if_readable(attrs.weight, cells_of(&sample, attrs.weight), |s| {
            weight_value(s, decimal_comma, &mut String::new()).is_some()
        }),
        time_until: None,
    };
    // A detected until column needs a time column and one readable value.
    let attrs = AttrRoles {
        time_until: attrs.time.and(keep_if_readable(
            until_role,
            cells_of(&sample, until_role),
            |s| readable_any_order(s, given_order),
        )),
        ..attrs
    };
    drop(sample);

    // 5. Read every record. The date order comes from every value of the
    // time column (unless given): the one pass reads the times day/month/
    // year while it looks at the values, and only a file that turns out to
    // be written otherwise is read a second time with its own order (the
    // same rows and values as reading it once with that order).
    let name = |r: Option<AttrRole>| r.map(|r| headers[r.index].clone());
    let mapping = ResolvedMapping {
        x: Some(headers[xy.x].clone()),
        y: Some(headers[xy.y].clone()),
        time: name(attrs.time),
        time_until: name(attrs.time_until),
        category: name(attrs.category),
        weight: name(attrs.weight),
    };
    let width = headers.len();
    let (xi, yi) = (xy.x, xy.y);
    let (xname, yname) = (headers[xi].as_str(), headers[yi].as_str());
    // One piece of the records (all of them, or one thread's share): the
    // builder, and the row number after the piece's last record.
    let read_rows = |order: super::DateOrder,
                     mut det: Option<&mut OrderDetector>,
                     mut reader: Reader<'_>,
                     bytes: usize|
     -> Result<(Builder, u64), InputError> {
        let mut fields: Vec<Cow<str>> = Vec::new();
        let mut buf = String::new();
        let mut b = Builder::new(
            attrs.time.is_some(),
            attrs.category.is_some(),
            attrs.weight.is_some(),
        );
        if attrs.time_until.is_some() {
            b.time_end = Some(Vec::new());
        }
        // Rough capacity guess: ~25 bytes per record.
        b.reserve((bytes / 25).min(10_000_000));
        loop {
            let info = match reader.read_into(&mut fields) {
                None => break,
                Some(Err(u)) => return Err(unclosed(u, Some(&headers))),
                Some(Ok(info)) => info,
            };
            if info.blank {
                continue;
            }
            if let Some(det) = det.as_deref_mut() {
                if let Some(r) = attrs.time {
                    if let Some(cell) = fields.get(r.index) {
                        det.add(info.row, cell);
                    }
                    // The "to" dates are written the same way: they tell too.
                    if let Some(cell) = attrs.time_until.and_then(|u| fields.get(u.index)) {
                        det.add(info.row, cell);
                    }
                }
            }
            b.rows_read += 1;
            let row = info.row;
            if fields.len() < width {
                let raw = &text[info.span.clone()];
                b.reject(row, None, RejectReason::TooFewFields, raw);
                continue;
            }
            if fields[width..].iter().any(|f| !trim(f).is_empty()) {
                let raw = &text[info.span.clone()];
                b.reject(row, None, RejectReason::TooManyFields, raw);
                continue;
            }
            let mut coord = |i: usize, is_x: bool, b: &mut Builder| -> Option<f64> {
                let cell = fields[i].as_ref();
                let col = if is_x { xname } else { yname };
                if trim(cell).is_empty() {
                    b.reject(row, Some(col), RejectReason::Empty, cell);
                    return None;
                }
                let Some(v) = csv::parse_number(cell, decimal_comma, &mut buf) else {
                    b.reject(row, Some(col), RejectReason::NotANumber, cell);
                    return None;
                };
                if let Some(reason) = range_problem(xy.coords, is_x, v) {
                    b.reject(row, Some(col), reason, cell);
                    return None;
                }
                Some(v)
            };
            let Some(x) = coord(xi, true, &mut b) else {
                continue;
            };
            let Some(y) = coord(yi, false, &mut b) else {
                continue;
            };
            let mut t = (f64::NAN, false);
            if let Some(r) = attrs.time {
                let cell = fields[r.index].as_ref();
                let col = headers[r.index].as_str();
                if trim(cell).is_empty() {
                    b.note(row, col, RejectReason::Empty, cell);
                } else {
                    match parse_time(cell, order) {
                        Some(p) => t = (p.days, p.has_clock),
                        None => b.note(row, col, RejectReason::BadTime, cell),
                    }
                }
            }
            let mut until = f64::NAN;
            if let Some(r) = attrs.time_until {
                let cell = fields[r.index].as_ref();
                let col = headers[r.index].as_str();
                // An empty "to" is no window: the event is an instant.
                if !trim(cell).is_empty() {
                    match parse_time(cell, order) {
                        Some(p) => {
                            until = p.days;
                            t.1 |= p.has_clock;
                        }
                        None => b.note(row, col, RejectReason::BadTime, cell),
                    }
                }
                until = window_end(&mut b, row, col, cell, t.0, until);
            }
            let mut w = f64::NAN;
            if let Some(r) = attrs.weight {
                let cell = fields[r.index].as_ref();
                let col = headers[r.index].as_str();
                if trim(cell).is_empty() {
                    b.note(row, col, RejectReason::Empty, cell);
                } else {
                    match weight_value(cell, decimal_comma, &mut buf) {
                        Some(v) => w = v,
                        None => b.note(row, col, RejectReason::BadWeight, cell),
                    }
                }
            }
            let cat = match attrs.category {
                Some(r) => b.category_id(fields[r.index].as_ref()),
                None => 0,
            };
            b.accept(row, x, y, t, cat, w);
            b.accept_until(until);
        }
        Ok((b, reader.next_row()))
    };
    // Every record, with the date order looked for (`detect`) or not. In a
    // native build a large file is read in pieces on the machine's cores
    // (the same layer as reading it in one go; see `read_in_pieces`).
    let read_all =
        |order: super::DateOrder, detect: bool| -> Result<(Builder, OrderDetector), InputError> {
            let start = reader.position();
            let threads = pieces
                .unwrap_or_else(|| crate::cores::threads_for(text.len() - start, BYTES_PER_THREAD));
            #[cfg(not(target_arch = "wasm32"))]
            if threads > 1 {
                let piece = |(from, to, first_row)| {
                    let mut det = OrderDetector::default();
                    let r = Reader::piece(text, delim, from, to, first_row);
                    read_rows(order, detect.then_some(&mut det), r, to - from)
                        .map(|(b, next)| (b, next, det))
                };
                if let Some(done) = read_in_pieces(text, start, reader.next_row(), threads, piece) {
                    return Ok(done);
                }
            }
            let _ = threads;
            let mut det = OrderDetector::default();
            let (b, _) = read_rows(
                order,
                detect.then_some(&mut det),
                reader.clone(),
                text.len() - start,
            )?;
            Ok((b, det))
        };
    let provisional = given_order.unwrap_or(super::DateOrder::DayMonthYear);
    let detect = attrs.time.is_some() && given_order.is_none();
    let (mut b, det) = read_all(provisional, detect)?;
    let date_order = attrs.time.map(|_| det.finish(given_order));
    if let Some(d) = &date_order {
        if d.used != provisional {
            b = read_all(d.used, false)?.0;
        }
    }
    b.date_order = date_order;
    let format = SourceFormat::Csv {
        delimiter: delim as char,
        decimal_comma,
    };
    Ok(b.finish(format, headers, mapping, xy.coords))
}

/// Bytes of records per thread before a native build reads a file in
/// pieces (about 80,000 rows of a typical export).
pub const BYTES_PER_THREAD: usize = 4 << 20;

/// One piece's result: the builder, the row number after its last record
/// (counted from the piece's first row) and what it saw of the date order.
#[cfg(not(target_arch = "wasm32"))]
type Piece = (Builder, u64, OrderDetector);

/// The records from byte `start` (row `first_row`) on, read in `threads`
/// pieces cut just after line breaks, one native thread each, and joined
/// in order. `read((from, to, first_row))` reads one piece; each piece
/// after the first numbers its rows from 1 and is renumbered when joined.
///
/// The same layer as one reader going through all of them, or `None` (read
/// it in one go instead): a cut can fall inside a quoted field that holds
/// line breaks, and then the piece before it ends in an unclosed quote.
/// When no piece but the last does, every cut is where a record ends: the
/// first piece starts at a record, and a piece read from a record to a
/// cut without an unclosed quote reads exactly what one reader reads there
/// (it never looks past a line break it has not reached). An error in the
/// last piece (or a thread's failure) also gives `None`, and the one-go
/// reading reports it.
#[cfg(not(target_arch = "wasm32"))]
fn read_in_pieces(
    text: &str,
    start: usize,
    first_row: u64,
    threads: usize,
    read: impl Fn((usize, usize, u64)) -> Result<Piece, InputError> + Sync,
) -> Option<(Builder, OrderDetector)> {
    let b = text.as_bytes();
    let len = b.len();
    let mut cuts = vec![start];
    for k in 1..threads {
        let at = (start + (len - start) * k / threads).max(*cuts.last()?);
        match b[at..].iter().position(|&c| c == b'\n') {
            Some(off) if at + off + 1 < len => cuts.push(at + off + 1),
            _ => break,
        }
    }
    cuts.dedup();
    cuts.push(len);
    if cuts.len() < 3 {
        return None;
    }
    let jobs: Vec<_> = cuts
        .windows(2)
        .enumerate()
        .map(|(k, w)| (w[0], w[1], if k == 0 { first_row } else { 1 }))
        .collect();
    let mut parts = crate::cores::each_on_a_thread(jobs, read)?.into_iter();
    let (mut all, mut next, mut det) = parts.next()?.ok()?;
    for part in parts {
        let (b, n, d) = part.ok()?;
        all.append(b, next - 1);
        det.append(d, next - 1);
        next += n - 1;
    }
    Some((all, det))
}

/// The end of a window as kept: a "to" before its "from" is not used (the
/// event stays, an instant at its "from"), and the row is noted as
/// [`RejectReason::ReversedWindow`] with the "to" column and text. We do not
/// swap the two: which of them is wrong cannot be told from the row.
pub(crate) fn window_end(
    b: &mut Builder,
    row: u64,
    col: &str,
    cell: &str,
    from: f64,
    until: f64,
) -> f64 {
    if from.is_finite() && until.is_finite() && until < from {
        b.note(row, col, RejectReason::ReversedWindow, cell);
        return f64::NAN;
    }
    until
}

fn cells_of(sample: &[Vec<String>], role: Option<AttrRole>) -> impl Iterator<Item = &str> {
    let idx = role.map(|r| r.index);
    sample
        .iter()
        .filter_map(move |r| idx.and_then(|i| r.get(i)).map(String::as_str))
}

/// The analyst-facing sentence for one rejected row, e.g.
/// `row 14, column "y": could not read "12,5" as a number`.
impl fmt::Display for Rejection {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.column {
            Some(c) => write!(f, "row {}, column \"{}\": ", self.row, c)?,
            None => write!(f, "row {}: ", self.row)?,
        }
        let v = &self.value;
        match self.reason {
            RejectReason::Empty => write!(f, "the cell is empty"),
            RejectReason::NotANumber => {
                write!(f, "could not read \"{v}\" as a number")?;
                if csv::decimal_mark(v) == DecimalMark::Comma {
                    write!(f, " (decimal comma?)")?;
                }
                Ok(())
            }
            RejectReason::LatitudeOutOfRange => {
                write!(f, "latitude {v} is outside -90 to 90")
            }
            RejectReason::LongitudeOutOfRange => {
                write!(f, "longitude {v} is outside -180 to 180")
            }
            RejectReason::OutsideStudyArea => write!(f, "the point lies outside the study area"),
            RejectReason::BadTime => write!(
                f,
                "could not read \"{v}\" as a date (e.g. 2025-03-04, 04/03/2025 or \
                 2025-03-04 14:30), or the date does not exist"
            ),
            RejectReason::ReversedWindow => write!(
                f,
                "the \"to\" date \"{v}\" is before the \"from\" date, so it is not used \
                 (the event is kept at its \"from\" date)"
            ),
            RejectReason::BadWeight => write!(f, "weight \"{v}\" must be a number ≥ 0"),
            RejectReason::TooFewFields => {
                write!(f, "fewer fields than the header row (\"{v}\")")
            }
            RejectReason::TooManyFields => write!(
                f,
                "more fields than the header row, so its values may be shifted (\"{v}\"); \
                 quote a text that holds the delimiter"
            ),
            RejectReason::BadGeometry => write!(f, "no usable point geometry ({v})"),
            RejectReason::ZeroPlaceholder => write!(
                f,
                "the point is at longitude 0, latitude 0, far from the other events: \
                 usually a placeholder for a missing location"
            ),
            RejectReason::SwappedLatLon => write!(
                f,
                "the point ({v}) is far from the other events but lies among them with \
                 latitude and longitude exchanged"
            ),
            RejectReason::FarFromOthers => write!(
                f,
                "the point ({v}) is far from all the other events (a typing or geocoding \
                 error?); keep such points with the option to keep far-off points"
            ),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::{ColumnMapping, DateOrder, LengthUnit};

    fn read(text: &str) -> RawLayer {
        from_csv(text, &ReadOptions::default()).unwrap()
    }

    fn rej(l: &RawLayer) -> Vec<(u64, Option<&str>, RejectReason, &str)> {
        l.rejections
            .iter()
            .map(|r| {
                (
                    r.row,
                    r.column.as_deref(),
                    r.reason.clone(),
                    r.value.as_str(),
                )
            })
            .collect()
    }

    fn invariant(l: &RawLayer) {
        assert_eq!(l.len() as u64 + l.rejections.len() as u64, l.rows_read);
        assert_eq!(l.row.len(), l.len());
    }

    #[test]
    fn simple_comma_table() {
        let l = read("x,y\n1,2\n3.5,-4e2\n");
        invariant(&l);
        assert_eq!(l.x, vec![1.0, 3.5]);
        assert_eq!(l.y, vec![2.0, -400.0]);
        assert_eq!(l.row, vec![2, 3]);
        assert_eq!(
            l.coords,
            CoordKind::Planar {
                unit: LengthUnit::Metre
            }
        );
        assert_eq!(
            l.format,
            SourceFormat::Csv {
                delimiter: ',',
                decimal_comma: false
            }
        );
        assert!(l.time.is_none() && l.category.is_none() && l.weight.is_none());
    }

    fn incomplete(l: &RawLayer) -> Vec<(u64, Option<&str>, RejectReason, &str)> {
        l.incomplete
            .iter()
            .map(|r| {
                (
                    r.row,
                    r.column.as_deref(),
                    r.reason.clone(),
                    r.value.as_str(),
                )
            })
            .collect()
    }

    #[test]
    fn one_rejection_per_row_in_column_order() {
        // Row 2: x empty and y bad: x is reported. Row 3: y bad, time bad: y
        // (and the time is not noted: the row is not used at all). Row 4:
        // bad time only: kept without a time.
        let l = read("x,y,date\n,abc,nope\n1,abc,nope\n1,2,nope\n1,2,2025-01-01\n");
        invariant(&l);
        assert_eq!(
            rej(&l),
            vec![
                (2, Some("x"), RejectReason::Empty, ""),
                (3, Some("y"), RejectReason::NotANumber, "abc"),
            ]
        );
        assert_eq!(
            incomplete(&l),
            vec![(4, Some("date"), RejectReason::BadTime, "nope")]
        );
        assert_eq!(l.row, vec![4, 5]);
        let t = l.time.as_ref().unwrap();
        assert!(t[0].is_nan() && t[1] == 20089.0); // 2025-01-01 (Python datetime: day 20089)
    }

    #[test]
    fn categories_weights_and_blank_category() {
        let l = read("x,y,type,count\n0,0,b,1\n0,0,a,2.5\n0,0,,0\n0,0,b,-1\n0,0,a,lots\n");
        invariant(&l);
        assert_eq!(l.category_names, vec!["b", "a", BLANK_CATEGORY]);
        assert_eq!(l.category, Some(vec![0, 1, 2, 0, 1]));
        // Bad weights keep the row, with NaN (never a silent 1).
        let w = l.weight.as_ref().unwrap();
        assert_eq!(&w[..3], &[1.0, 2.5, 0.0]);
        assert!(w[3].is_nan() && w[4].is_nan());
        assert_eq!(l.missing_weight(), 2);
        assert!(l.rejections.is_empty());
        assert_eq!(
            incomplete(&l),
            vec![
                (5, Some("count"), RejectReason::BadWeight, "-1"),
                (6, Some("count"), RejectReason::BadWeight, "lots"),
            ]
        );
    }

    #[test]
    fn detected_time_column_without_any_date_is_ignored() {
        let l = read("x,y,reported\n1,2,yes\n3,4,no\n");
        assert!(l.time.is_none());
        assert_eq!(l.mapping.time, None);
        assert_eq!(l.len(), 2);
        // Named by the user, it is used, and rows are rejected.
        let opts = ReadOptions {
            mapping: ColumnMapping {
                time: Some("reported".into()),
                ..Default::default()
            },
            ..Default::default()
        };
        let l = from_csv("x,y,reported\n1,2,yes\n", &opts).unwrap();
        assert_eq!(
            incomplete(&l),
            vec![(2, Some("reported"), RejectReason::BadTime, "yes")]
        );
        assert_eq!((l.len(), l.missing_time()), (1, 1));
    }

    #[test]
    fn time_values_and_clock_flag() {
        let l = read("x,y,date\n1,2,1970-01-02\n1,2,02/01/1970\n");
        assert_eq!(l.time, Some(vec![1.0, 1.0]));
        assert!(!l.time_has_clock);
        let l = read("x,y,datetime\n1,2,1970-01-02T12:00Z\n");
        assert_eq!(l.time, Some(vec![1.5]));
        assert!(l.time_has_clock);
        // A clock time on a rejected row does not count.
        let l = read("x,y,datetime,count\nabc,2,1970-01-02T12:00Z,1\n1,2,1970-01-02,1\n");
        assert_eq!(l.time, Some(vec![1.0]));
        assert!(!l.time_has_clock);
        let opts = ReadOptions {
            date_order: Some(DateOrder::MonthDayYear),
            ..Default::default()
        };
        let l = from_csv("x,y,date\n1,2,01/02/1970\n", &opts).unwrap();
        assert_eq!(l.time, Some(vec![1.0]));
    }

    #[test]
    fn decimal_comma_with_semicolons_and_tabs() {
        let l = read("x;y\n12,5;3,25\n1;2\n");
        assert_eq!(
            l.format,
            SourceFormat::Csv {
                delimiter: ';',
                decimal_comma: true
            }
        );
        assert_eq!(l.x, vec![12.5, 1.0]);
        assert_eq!(l.y, vec![3.25, 2.0]);
        let l = read("x\ty\n12,5\t3,25\n");
        assert_eq!(
            l.format,
            SourceFormat::Csv {
                delimiter: '\t',
                decimal_comma: true
            }
        );
        assert_eq!(l.x, vec![12.5]);
        // Semicolon with point decimals: a stray comma decimal is not a number.
        let l = read("x;y\n1.5;2.5\n3.5;4.5\n1,5;2\n");
        assert_eq!(
            l.format,
            SourceFormat::Csv {
                delimiter: ';',
                decimal_comma: false
            }
        );
        assert_eq!(
            rej(&l),
            vec![(4, Some("x"), RejectReason::NotANumber, "1,5")]
        );
        assert!(l.rejections[0].to_string().contains("decimal comma?"));
    }

    #[test]
    fn short_rows_and_extra_fields() {
        // Fewer fields and more non-empty fields are both listed; empty extra
        // fields (trailing delimiters) are not a problem.
        let l = read("x,y,type\n1,2\n1,2,a,extra,more\n1,2,b,,\n");
        invariant(&l);
        assert_eq!(
            rej(&l),
            vec![
                (2, None, RejectReason::TooFewFields, "1,2"),
                (3, None, RejectReason::TooManyFields, "1,2,a,extra,more"),
            ]
        );
        assert_eq!(l.row, vec![4]);
        assert!(l.rejections[1]
            .to_string()
            .contains("more fields than the header"));
    }

    #[test]
    fn date_order_detected_from_all_rows() {
        // The only telling value is past the 200 sampled rows.
        let mut text = String::from("x,y,date\n");
        for _ in 0..250 {
            text.push_str("1,2,03/04/2025\n");
        }
        text.push_str("1,2,04/23/2025\n");
        let l = read(&text);
        let d = l.date_order.as_ref().unwrap();
        assert_eq!((d.used, d.ambiguous), (DateOrder::MonthDayYear, false));
        assert!(d.text.contains("04/23/2025 on row 252"), "{}", d.text);
        assert_eq!(l.time.as_ref().unwrap()[0], 20151.0); // 4 March 2025
        assert!(l.incomplete.is_empty());
    }

    #[test]
    fn lonlat_ranges() {
        let l = read("lat,lon\n91,0\n0,-180.5\n-90,180\n");
        invariant(&l);
        assert_eq!(l.coords, CoordKind::LonLat);
        assert_eq!(
            rej(&l),
            vec![
                (2, Some("lat"), RejectReason::LatitudeOutOfRange, "91"),
                (3, Some("lon"), RejectReason::LongitudeOutOfRange, "-180.5"),
            ]
        );
        assert_eq!((l.x[0], l.y[0]), (180.0, -90.0));
        // Planar: no range checks.
        let l = read("x,y\n500000,4000000\n");
        assert_eq!(l.len(), 1);
    }

    #[test]
    fn rows_numbered_as_a_spreadsheet_shows_them() {
        let l = read("\nx,y\n\n1,2\n,\n\"3\",\"4\"\n");
        // Header on row 2, blank row 3, data rows 4 and 6 (row 5 is blank: one field).
        assert_eq!(l.row, vec![4, 6]);
        assert_eq!(l.rows_read, 2);
    }

    /// A random export with what makes pieces hard to join: rejected rows,
    /// notes, blank lines, CRLF and lone CR line ends, quoted fields with
    /// line breaks and doubled quotes, categories first seen late (more
    /// than eight, so both ways of numbering them), a date order settled
    /// or contradicted only late in the file, and sometimes a quote left
    /// open at the end.
    fn messy_export(rng: &mut crate::rng::Rng, rows: usize) -> (String, ReadOptions) {
        use rand::RngExt;
        let semicolon = rng.random_bool(0.3);
        let d = if semicolon { ';' } else { ',' };
        let num = |v: f64| {
            let t = format!("{v:.5}");
            if semicolon {
                t.replace('.', ",")
            } else {
                t
            }
        };
        let mut s = format!("id{d}lon{d}lat{d}reported{d}kind{d}weight\n");
        let late_month_first = rng.random_bool(0.5);
        let early_day_first = rng.random_bool(0.5);
        for i in 0..rows {
            let end = match rng.random_range(0..10) {
                0 => "\r\n",
                1 => "\r",
                _ => "\n",
            };
            match rng.random_range(0..40) {
                0 => {
                    s.push_str(end);
                    continue;
                }
                1 => {
                    s.push_str(&format!("{d}{d}{d}{end}"));
                    continue;
                }
                2 => {
                    s.push_str(&format!("{i}{d}1{end}"));
                    continue;
                }
                _ => {}
            }
            let lon = match rng.random_range(0..30) {
                0 => "east".to_string(),
                1 => num(181.5),
                2 => String::new(),
                _ => num(10.0 + rng.random::<f64>()),
            };
            let lat = num(-20.0 - rng.random::<f64>());
            let (a, b) = (rng.random_range(1..=12), rng.random_range(1..=12));
            let date = if i > rows * 3 / 4 && late_month_first && rng.random_bool(0.05) {
                format!("{a:02}/2{}/2025", rng.random_range(0..9))
            } else if i < rows / 4 && early_day_first && rng.random_bool(0.05) {
                format!("2{}/{b:02}/2025", rng.random_range(0..9))
            } else if rng.random_bool(0.02) {
                "soon".to_string()
            } else {
                format!("{a:02}/{b:02}/2025")
            };
            let kind = match rng.random_range(0..12) {
                0 => "\"line one\nline \"\"two\"\"\"".to_string(),
                1 => format!("\"with{d}delimiter\r\nand break\""),
                2 => String::new(),
                3 if i > rows / 2 => format!("late {}", rng.random_range(0..12)),
                _ => ["house", "street", "field"][rng.random_range(0..3)].to_string(),
            };
            let w = match rng.random_range(0..25) {
                0 => "-1".to_string(),
                1 => String::new(),
                _ => num(rng.random::<f64>() * 3.0),
            };
            let extra = if rng.random_range(0..60) == 0 {
                "x"
            } else {
                ""
            };
            s.push_str(&format!(
                "{i}{d}{lon}{d}{lat}{d}{date}{d}{kind}{d}{w}{}{extra}{end}",
                if extra.is_empty() { "" } else { "," }
            ));
        }
        if rng.random_bool(0.1) {
            s.push_str("99\"open,1,2\n\"never closed,3\n");
        }
        let mut opts = ReadOptions::default();
        if rng.random_bool(0.2) {
            opts.date_order = Some(DateOrder::MonthDayYear);
        }
        (s, opts)
    }

    /// Read in 2 to 7 pieces, a file gives the same layer (or the same
    /// error) as read in one go: every value, row number, rejection, note,
    /// category number and the date order with its reason.
    #[test]
    fn pieces_read_the_same_as_one_go() {
        let mut rng = crate::rng::rng_from_seed(2026);
        let mut contradicted = 0;
        for case in 0..160 {
            let rows = [3, 40, 400, 3000][case % 4];
            let (text, opts) = messy_export(&mut rng, rows);
            let one = format!("{:?}", from_csv_in(&text, &opts, Some(1)));
            if one.contains("Contradictory") {
                contradicted += 1;
            }
            for pieces in 2..=7 {
                let split = format!("{:?}", from_csv_in(&text, &opts, Some(pieces)));
                assert!(split == one, "case {case}, {pieces} pieces differ");
            }
        }
        assert!(
            contradicted > 5,
            "late contradictions are exercised: {contradicted}"
        );
    }

    /// The cuts fall just after line breaks, the pieces cover the records in
    /// order, later pieces count rows from 1, and the joined layer numbers
    /// them as one reader would.
    #[test]
    fn pieces_are_cut_after_line_breaks() {
        let mut text = String::from("x,y\n");
        for i in 0..1000 {
            text.push_str(&format!("{i},{}\n", i % 7));
        }
        let start = 4;
        let seen = std::sync::Mutex::new(Vec::new());
        let read = |(from, to, first): (usize, usize, u64)| {
            seen.lock().unwrap().push((from, to, first));
            let mut b = Builder::new(false, false, false);
            let mut r = Reader::piece(&text, b',', from, to, first);
            let mut f = Vec::new();
            while let Some(Ok(info)) = r.read_into(&mut f) {
                b.rows_read += 1;
                b.accept(info.row, 0.0, 0.0, (f64::NAN, false), 0, f64::NAN);
            }
            Ok((b, r.next_row(), OrderDetector::default()))
        };
        let (b, _) = read_in_pieces(&text, start, 2, 3, read).expect("three pieces");
        let mut jobs = seen.into_inner().unwrap();
        jobs.sort();
        assert_eq!(jobs.len(), 3);
        assert_eq!((jobs[0].0, jobs[0].2), (start, 2));
        assert_eq!(jobs[2].1, text.len());
        for w in jobs.windows(2) {
            assert_eq!(w[0].1, w[1].0);
            assert_eq!(text.as_bytes()[w[1].0 - 1], b'\n');
            assert_eq!(w[1].2, 1);
        }
        assert_eq!(b.row, (2..1002).collect::<Vec<u64>>());
        // A quoted field holding the line break where a cut falls: the
        // piece before it ends unclosed, and the file is read in one go.
        let quoted = format!("x,y\n\"{}\",1\n", "a\n".repeat(400));
        let text = &quoted;
        let read = |(from, to, first): (usize, usize, u64)| {
            let mut r = Reader::piece(text, b',', from, to, first);
            let mut f = Vec::new();
            while let Some(res) = r.read_into(&mut f) {
                if res.is_err() {
                    return Err(not_a_table("unclosed"));
                }
            }
            Ok((
                Builder::new(false, false, false),
                r.next_row(),
                OrderDetector::default(),
            ))
        };
        assert!(read_in_pieces(text, 4, 2, 3, read).is_none());
    }

    #[test]
    fn unclosed_quote_in_header() {
        let e = from_csv("\"x,y\n1,2\n", &ReadOptions::default()).unwrap_err();
        assert_eq!(e.at.as_ref().map(|a| a.row), Some(1));
        assert!(e.to_string().contains("closing quote"), "{e}");
    }

    #[test]
    fn display_reads_well() {
        let r = Rejection {
            row: 14,
            column: Some("y".into()),
            reason: RejectReason::NotANumber,
            value: "12,5".into(),
        };
        assert_eq!(
            r.to_string(),
            "row 14, column \"y\": could not read \"12,5\" as a number (decimal comma?)"
        );
    }
}
