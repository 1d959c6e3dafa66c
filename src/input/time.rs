//! Dates and date-times to days since 1970-01-01T00:00Z.
//!
//! Accepted forms (surrounding whitespace ignored):
//! * **Year first**: `2025-03-04`, `2025/3/4`, `2025.03.04` (a four-digit
//!   first field is always the year, whatever [`DateOrder`] says).
//! * **Year last**: `04/03/2025`, `4.3.2025`, `04-03-2025`, read with the
//!   given [`DateOrder`] (day-month-year by default). Two-digit years are
//!   refused as ambiguous.
//! * Optionally followed by `T` or spaces and a clock time `h:mm`, `hh:mm:ss`
//!   or `hh:mm:ss.fraction` (point or comma before the fraction), then
//!   optionally `AM`/`PM` (hour 1–12) and a zone: `Z`, `UTC`, `GMT`, `±hh:mm`,
//!   `±hhmm` or `±hh`. A zone offset is subtracted to give UTC; a time with no
//!   zone is taken as UTC (local times stay as written).
//!
//! Ranges are checked: year 1–9999, month 1–12, day within the month (leap
//! years by the Gregorian rule), hour < 24, minute < 60, second < 60
//! (no leap seconds), zone offset < 24 h.
//!
//! Day numbers use `days_from_civil` / `civil_from_days` from Howard Hinnant,
//! "chrono-Compatible Low-Level Date Algorithms" (2013),
//! <http://howardhinnant.github.io/date_algorithms.html>, written anew here
//! for the proleptic Gregorian calendar.

use super::DateOrder;
use serde::Serialize;

/// A time value read from a cell.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParsedTime {
    /// Days since 1970-01-01T00:00Z, fractional.
    pub days: f64,
    /// The text carried a clock time (not a bare date).
    pub has_clock: bool,
}

/// Gregorian leap year.
pub fn is_leap(year: i64) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

/// Number of days in `month` (1–12) of `year`; 0 for an invalid month.
pub fn days_in_month(year: i64, month: u32) -> u32 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(year) => 29,
        2 => 28,
        _ => 0,
    }
}

/// Days from 1970-01-01 to the given proleptic Gregorian date (Hinnant's
/// `days_from_civil`). `month` is 1–12 and `day` 1–31; not range-checked.
pub fn days_from_civil(year: i64, month: u32, day: u32) -> i64 {
    let y = if month <= 2 { year - 1 } else { year };
    let era = y.div_euclid(400);
    let yoe = y - era * 400; // [0, 399]
    let m = month as i64;
    let mp = if m > 2 { m - 3 } else { m + 9 }; // March = 0
    let doy = (153 * mp + 2) / 5 + day as i64 - 1; // [0, 365]
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy; // [0, 146096]
    era * 146_097 + doe - 719_468
}

/// Inverse of [`days_from_civil`] (Hinnant's `civil_from_days`): the date
/// `(year, month, day)` that is `days` after 1970-01-01.
pub fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097; // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11]
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + if m <= 2 { 1 } else { 0 };
    (y, m, d)
}

/// Writes days since 1970-01-01T00:00Z as `YYYY-MM-DD`, or with
/// `with_clock` as `YYYY-MM-DD hh:mm` (UTC, rounded to the minute).
/// Non-finite input gives `"?"`.
pub fn format_days(days: f64, with_clock: bool) -> String {
    if !days.is_finite() || days.abs() > 1e8 {
        return "?".to_string();
    }
    if with_clock {
        let minutes = (days * 1440.0).round() as i64;
        let (y, m, d) = civil_from_days(minutes.div_euclid(1440));
        let mins = minutes.rem_euclid(1440);
        format!("{y:04}-{m:02}-{d:02} {:02}:{:02}", mins / 60, mins % 60)
    } else {
        let (y, m, d) = civil_from_days(days.floor() as i64);
        format!("{y:04}-{m:02}-{d:02}")
    }
}

/// A tiny cursor over ASCII bytes.
struct Cur<'a> {
    b: &'a [u8],
    i: usize,
}

impl Cur<'_> {
    fn peek(&self) -> Option<u8> {
        self.b.get(self.i).copied()
    }
    fn eat(&mut self, c: u8) -> bool {
        if self.peek() == Some(c) {
            self.i += 1;
            true
        } else {
            false
        }
    }
    /// Reads up to `max` digits; returns (value, count).
    fn digits(&mut self, max: usize) -> (i64, usize) {
        let mut v = 0i64;
        let mut n = 0;
        while n < max {
            match self.peek() {
                Some(c @ b'0'..=b'9') => {
                    v = v * 10 + (c - b'0') as i64;
                    n += 1;
                    self.i += 1;
                }
                _ => break,
            }
        }
        (v, n)
    }
    fn skip_spaces(&mut self) -> usize {
        let s = self.i;
        while self.peek() == Some(b' ') {
            self.i += 1;
        }
        self.i - s
    }
    fn at_end(&self) -> bool {
        self.i >= self.b.len()
    }
    /// Case-insensitive keyword.
    fn eat_word(&mut self, w: &str) -> bool {
        let w = w.as_bytes();
        let end = self.i + w.len();
        if end <= self.b.len() && self.b[self.i..end].eq_ignore_ascii_case(w) {
            self.i = end;
            true
        } else {
            false
        }
    }
}

/// Reads a date or date-time cell. Returns `None` for anything not in the
/// forms listed in the module documentation or out of range.
///
/// ```
/// use cloister::input::{time::parse_time, DateOrder};
/// // 1970-01-02 is day 1; 18:00 at UTC+06:00 is noon UTC, half a day.
/// let t = parse_time("1970-01-02T18:00+06:00", DateOrder::DayMonthYear).unwrap();
/// assert_eq!((t.days, t.has_clock), (1.5, true));
/// // 31 April does not exist.
/// assert!(parse_time("31/04/2025", DateOrder::DayMonthYear).is_none());
/// ```
pub fn parse_time(text: &str, order: DateOrder) -> Option<ParsedTime> {
    let mut c = Cur {
        b: super::text::trim(text).as_bytes(),
        i: 0,
    };
    let (a, na) = c.digits(5);
    let sep = c.peek()?;
    if !matches!(sep, b'-' | b'/' | b'.') || na == 0 {
        return None;
    }
    c.i += 1;
    let (bv, nb) = c.digits(3);
    if !c.eat(sep) {
        return None;
    }
    let (cv, nc) = c.digits(5);
    let (year, month, day) = if na == 4 && (1..=2).contains(&nb) && (1..=2).contains(&nc) {
        (a, bv, cv)
    } else if nc == 4 && (1..=2).contains(&na) && (1..=2).contains(&nb) {
        match order {
            DateOrder::DayMonthYear => (cv, bv, a),
            DateOrder::MonthDayYear => (cv, a, bv),
            DateOrder::YearMonthDay => return None,
        }
    } else {
        return None;
    };
    if !(1..=9999).contains(&year) || !(1..=12).contains(&month) {
        return None;
    }
    let (month, day) = (month as u32, day as u32);
    if day < 1 || day > days_in_month(year, month) {
        return None;
    }
    let date_days = days_from_civil(year, month, day);
    if c.at_end() {
        return Some(ParsedTime {
            days: date_days as f64,
            has_clock: false,
        });
    }
    // Separator before the clock time: 'T' or one or more spaces.
    if !(c.eat(b'T') || c.eat(b't') || c.skip_spaces() > 0) {
        return None;
    }
    let seconds = parse_clock(&mut c)?;
    Some(ParsedTime {
        days: date_days as f64 + seconds / 86_400.0,
        has_clock: true,
    })
}

/// Parses `h:mm[:ss[.frac]] [AM|PM] [zone]` to seconds after midnight UTC
/// (may be negative or exceed a day after the zone shift).
fn parse_clock(c: &mut Cur) -> Option<f64> {
    let (mut hour, nh) = c.digits(2);
    if nh == 0 || !c.eat(b':') {
        return None;
    }
    let (minute, nm) = c.digits(2);
    if nm != 2 || minute >= 60 {
        return None;
    }
    let mut second = 0.0;
    if c.eat(b':') {
        let (s, ns) = c.digits(2);
        if ns != 2 || s >= 60 {
            return None;
        }
        second = s as f64;
        if c.eat(b'.') || c.eat(b',') {
            let start = c.i;
            let mut frac = 0.0;
            let mut scale = 0.1;
            while let Some(d @ b'0'..=b'9') = c.peek() {
                frac += (d - b'0') as f64 * scale;
                scale *= 0.1;
                c.i += 1;
            }
            if c.i == start {
                return None;
            }
            second += frac;
        }
    }
    // Optional AM / PM.
    let save = c.i;
    c.skip_spaces();
    if c.eat_word("am") || c.eat_word("a.m.") {
        if !(1..=12).contains(&hour) {
            return None;
        }
        if hour == 12 {
            hour = 0;
        }
    } else if c.eat_word("pm") || c.eat_word("p.m.") {
        if !(1..=12).contains(&hour) {
            return None;
        }
        if hour != 12 {
            hour += 12;
        }
    } else {
        c.i = save;
    }
    if hour >= 24 {
        return None;
    }
    // Optional zone.
    c.skip_spaces();
    let mut offset = 0i64;
    if c.eat(b'Z') || c.eat(b'z') || c.eat_word("utc") || c.eat_word("gmt") {
        // UTC.
    } else if let Some(sign @ (b'+' | b'-')) = c.peek() {
        c.i += 1;
        let (oh, noh) = c.digits(2);
        if noh != 2 || oh >= 24 {
            return None;
        }
        let mut om = 0;
        if c.eat(b':') {
            let (m, n) = c.digits(2);
            if n != 2 {
                return None;
            }
            om = m;
        } else {
            let (m, n) = c.digits(2);
            if n == 1 {
                return None;
            }
            if n == 2 {
                om = m;
            }
        }
        if om >= 60 {
            return None;
        }
        offset = (oh * 3600 + om * 60) * if sign == b'-' { -1 } else { 1 };
    }
    if !c.at_end() {
        return None;
    }
    Some((hour * 3600 + minute * 60 - offset) as f64 + second)
}

/// What one cell says about the order of day and month.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OrderHint {
    /// Year first, unreadable, or the same date either way (e.g. 05/05/2025).
    Neutral,
    /// Readable only as day/month/year (e.g. 23/04/2025).
    DayFirstOnly,
    /// Readable only as month/day/year (e.g. 04/23/2025).
    MonthFirstOnly,
    /// A different valid date under each order (e.g. 03/04/2025).
    Either,
}

/// Which of day/month/year and month/day/year a cell allows.
pub fn order_hint(text: &str) -> OrderHint {
    // Only a first field of one or two digits can be read two ways: a
    // four-digit first field is the year under either order, and any other
    // length is read by neither. The usual ISO 8601 date skips both readings.
    let lead = super::text::trim(text)
        .bytes()
        .take(3)
        .take_while(u8::is_ascii_digit)
        .count();
    if !(1..=2).contains(&lead) {
        return OrderHint::Neutral;
    }
    both_readings(text)
}

/// What the text says about the order by its definition: read day first
/// and month first, and compare.
fn both_readings(text: &str) -> OrderHint {
    let d = parse_time(text, DateOrder::DayMonthYear);
    let m = parse_time(text, DateOrder::MonthDayYear);
    match (d, m) {
        (Some(a), Some(b)) if a.days != b.days => OrderHint::Either,
        (Some(_), None) => OrderHint::DayFirstOnly,
        (None, Some(_)) => OrderHint::MonthFirstOnly,
        _ => OrderHint::Neutral,
    }
}

/// True if the cell is a date under any order (used to decide whether a
/// detected time column holds dates at all).
pub fn readable_any_order(text: &str, given: Option<DateOrder>) -> bool {
    match given {
        Some(o) => parse_time(text, o).is_some(),
        None => {
            parse_time(text, DateOrder::DayMonthYear).is_some()
                || parse_time(text, DateOrder::MonthDayYear).is_some()
        }
    }
}

/// How the date order of a layer was settled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum OrderSource {
    /// The user chose it (`date_order` option).
    Given,
    /// Some value fits only one order, and none fits only the other.
    Detected,
    /// Every date written day-and-month fits both orders: day/month/year was
    /// used, and the page asks.
    Ambiguous,
    /// Some values fit only one order and others only the other.
    Contradictory,
    /// No date is written with day and month in question (e.g. all ISO
    /// 8601 `2025-03-04`, or no readable date at all).
    NotNeeded,
}

/// A date shown both ways, for the page's question.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct OrderExample {
    pub row: u64,
    pub value: String,
    /// The value read as day/month/year, as `YYYY-MM-DD`.
    pub day_month_year: String,
    /// The value read as month/day/year, as `YYYY-MM-DD`.
    pub month_day_year: String,
}

/// The date order used for a layer and why, for the load report.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct DateOrderReport {
    pub used: DateOrder,
    pub source: OrderSource,
    /// True when the data cannot tell the order (the page asks the user).
    pub ambiguous: bool,
    /// One sentence: which order and why.
    pub text: String,
    /// For an ambiguous file: a value read both ways.
    pub example: Option<OrderExample>,
}

/// Looks at every value of a time column and settles the date order:
/// a value that fits only one order (a first field above 12 rules out
/// month/day/year, a second field above 12 rules out day/month/year, a day
/// that does not exist in that month rules out that reading) decides it,
/// unless other values fit only the other order.
#[derive(Debug, Clone, Default)]
pub struct OrderDetector {
    day_first: usize,
    month_first: usize,
    first_day_first: Option<(u64, String)>,
    first_month_first: Option<(u64, String)>,
    first_either: Option<(u64, String)>,
}

fn order_words(o: DateOrder) -> &'static str {
    match o {
        DateOrder::DayMonthYear => "day/month/year",
        DateOrder::MonthDayYear => "month/day/year",
        DateOrder::YearMonthDay => "year/month/day",
    }
}

impl OrderDetector {
    /// Adds the cell on spreadsheet row `row`.
    pub fn add(&mut self, row: u64, text: &str) {
        let keep = |slot: &mut Option<(u64, String)>| {
            if slot.is_none() {
                *slot = Some((row, super::text::cut_value(text.trim())));
            }
        };
        match order_hint(text) {
            OrderHint::Neutral => {}
            OrderHint::DayFirstOnly => {
                self.day_first += 1;
                keep(&mut self.first_day_first);
            }
            OrderHint::MonthFirstOnly => {
                self.month_first += 1;
                keep(&mut self.first_month_first);
            }
            OrderHint::Either => keep(&mut self.first_either),
        }
    }

    /// Adds what `later` saw, from the rows after this one's, numbered
    /// from 1 there: `rows_before` is added to its row numbers. The same
    /// as one detector seeing both in turn.
    pub fn append(&mut self, later: OrderDetector, rows_before: u64) {
        self.day_first += later.day_first;
        self.month_first += later.month_first;
        let shift = |slot: Option<(u64, String)>| slot.map(|(r, v)| (r + rows_before, v));
        self.first_day_first = self.first_day_first.take().or(shift(later.first_day_first));
        self.first_month_first = self
            .first_month_first
            .take()
            .or(shift(later.first_month_first));
        self.first_either = self.first_either.take().or(shift(later.first_either));
    }

    /// The order to use: `given` always wins; otherwise what the values say.
    pub fn finish(self, given: Option<DateOrder>) -> DateOrderReport {
        const DMY: DateOrder = DateOrder::DayMonthYear;
        const MDY: DateOrder = DateOrder::MonthDayYear;
        let report = |used, source, text: String| DateOrderReport {
            used,
            source,
            ambiguous: source == OrderSource::Ambiguous,
            text,
            example: None,
        };
        if let Some(o) = given {
            return report(
                o,
                OrderSource::Given,
                format!("{}, as chosen", order_words(o)),
            );
        }
        match (&self.first_day_first, &self.first_month_first) {
            (Some((r, v)), None) => report(
                DMY,
                OrderSource::Detected,
                format!(
                    "day/month/year, detected: a value {v} on row {r} can only be day/month/year"
                ),
            ),
            (None, Some((r, v))) => report(
                MDY,
                OrderSource::Detected,
                format!(
                    "month/day/year, detected: a value {v} on row {r} can only be month/day/year"
                ),
            ),
            (Some((rd, vd)), Some((rm, vm))) => {
                // More values decide; a tie keeps day/month/year.
                let used = if self.month_first > self.day_first {
                    MDY
                } else {
                    DMY
                };
                let (fit, misfit) = if used == MDY {
                    (self.month_first, self.day_first)
                } else {
                    (self.day_first, self.month_first)
                };
                report(
                    used,
                    OrderSource::Contradictory,
                    format!(
 "the dates do not agree: {vd} on row {rd} can only be day/month/year but {vm} on row {rm} can only be month/day/year. Read as {} ({fit} dates fit only this order); the {misfit} that fit only the other have no usable date and are listed",
                        order_words(used)
                    ),
                )
            }
            (None, None) => match &self.first_either {
                Some((r, v)) => {
                    let both = |o| {
                        parse_time(v, o)
                            .map_or_else(|| "?".to_string(), |t| format_days(t.days, false))
                    };
                    DateOrderReport {
                        example: Some(OrderExample {
                            row: *r,
                            value: v.clone(),
                            day_month_year: both(DMY),
                            month_day_year: both(MDY),
                        }),
                        ..report(
                            DMY,
                            OrderSource::Ambiguous,
                            format!(
                                "ambiguous: every date has day and month both 12 or less (e.g. {v} \
                                 on row {r}), so the file cannot tell the order; read as \
                                 day/month/year. Choose the order if that is wrong"
                            ),
                        )
                    }
                }
                None => report(
                    DMY,
                    OrderSource::NotNeeded,
                    "not in question: no date has its day and month in doubt".to_string(),
                ),
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const DMY: DateOrder = DateOrder::DayMonthYear;

    fn days(s: &str) -> Option<f64> {
        parse_time(s, DMY).map(|t| t.days)
    }

    #[test]
    fn epoch_and_known_days() {
        // Derivation: 1970-01-01 is day 0 by definition. 1970..1999 are 30 years
        // with 7 leap years (1972, 76, 80, 84, 88, 92, 96): 30*365 + 7 = 10957 for
        // 2000-01-01; 2000 is a leap year, so 2000-03-01 is 10957 + 31 + 29.
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 1, 1), 10_957);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        assert_eq!(days_from_civil(1969, 12, 31), -1);
    }

    #[test]
    fn civil_round_trip_over_many_years() {
        for z in (-800_000..800_000).step_by(97) {
            let (y, m, d) = civil_from_days(z);
            assert!((1..=12).contains(&m) && d >= 1 && d <= days_in_month(y, m));
            assert_eq!(days_from_civil(y, m, d), z);
        }
        // Consecutive days through a leap February.
        let a = days_from_civil(2024, 2, 28);
        assert_eq!(civil_from_days(a + 1), (2024, 2, 29));
        assert_eq!(civil_from_days(a + 2), (2024, 3, 1));
    }

    #[test]
    fn leap_years() {
        assert!(is_leap(2000) && is_leap(2024) && !is_leap(1900) && !is_leap(2025));
        assert_eq!(days_in_month(2024, 2), 29);
        assert_eq!(days_in_month(2100, 2), 28);
    }

    #[test]
    fn invalid_dates_and_times() {
        for s in [
            "2025-02-29",
            "31/04/2025",
            "2025-13-01",
            "2025-00-10",
            "2025-01-00",
            "2025-01-32",
            "0000-01-01",
            "2025-03-04T24:00",
            "2025-03-04 12:60",
            "2025-03-04 12:30:60",
            "2025-03-04T",
            "2025-03-04 12",
            "2025-03-04 12:3",
            "2025-03-04 13:00 PM",
            "2025-03-04 0:10 am",
            "2025-03-04T10:00+24:00",
            "2025-03-04T10:00+05:60",
            "2025-03-04T10:00+5",
            "2025-03-04x",
            "04/03/25",
            "2025/03-04",
            "14:30",
            "yesterday",
            "",
            "2025-03",
            "20250304",
        ] {
            assert_eq!(days(s), None, "{s:?} should be refused");
        }
    }

    #[test]
    fn date_orders() {
        let march4 = days_from_civil(2025, 3, 4) as f64;
        assert_eq!(parse_time("04/03/2025", DMY).unwrap().days, march4);
        assert_eq!(
            parse_time("03/04/2025", DateOrder::MonthDayYear)
                .unwrap()
                .days,
            march4
        );
        assert_eq!(
            parse_time("2025/03/04", DateOrder::YearMonthDay)
                .unwrap()
                .days,
            march4
        );
        // A four-digit first field is a year under any order.
        assert_eq!(
            parse_time("2025.03.04", DateOrder::MonthDayYear)
                .unwrap()
                .days,
            march4
        );
        assert_eq!(parse_time("04/03/2025", DateOrder::YearMonthDay), None);
        // 13/01/2025 is only valid day-first.
        assert!(parse_time("13/01/2025", DMY).is_some());
        assert_eq!(parse_time("13/01/2025", DateOrder::MonthDayYear), None);
    }

    #[test]
    fn order_detection() {
        let detect = |cells: &[&str], given| {
            let mut d = OrderDetector::default();
            for (i, c) in cells.iter().enumerate() {
                d.add(i as u64 + 2, c);
            }
            d.finish(given)
        };
        // A first field of 23 can only be a day.
        let r = detect(&["03/04/2025", "2025-01-01", "23/04/2025"], None);
        assert_eq!((r.used, r.source), (DMY, OrderSource::Detected));
        assert!(r.text.contains("23/04/2025 on row 4"), "{}", r.text);
        // A second field of 23 can only be a day: month first.
        let r = detect(&["03/04/2025", "04/23/2025"], None);
        assert_eq!(r.used, DateOrder::MonthDayYear);
        // 31/04 does not exist day-first, 04/31 does not either: no evidence;
        // 02/30/2025 is impossible month-first, 30/02/2025 impossible day-first.
        assert_eq!(order_hint("31/04/2025"), OrderHint::Neutral);
        assert_eq!(order_hint("05/05/2025"), OrderHint::Neutral);
        assert_eq!(order_hint("2025-03-04"), OrderHint::Neutral);
        // All ambiguous: a question with an example read both ways.
        let r = detect(&["03/04/2025", "05/05/2025", "2025-06-01"], None);
        assert_eq!(
            (r.used, r.source, r.ambiguous),
            (DMY, OrderSource::Ambiguous, true)
        );
        let ex = r.example.unwrap();
        assert_eq!((ex.row, ex.value.as_str()), (2, "03/04/2025"));
        assert_eq!(ex.day_month_year, "2025-04-03");
        assert_eq!(ex.month_day_year, "2025-03-04");
        // The user's choice wins over the data.
        let r = detect(&["23/04/2025"], Some(DateOrder::MonthDayYear));
        assert_eq!(
            (r.used, r.source, r.ambiguous),
            (DateOrder::MonthDayYear, OrderSource::Given, false)
        );
        // Both contradicted: the larger group wins, and it is said.
        let r = detect(&["04/23/2025", "04/24/2025", "23/04/2025"], None);
        assert_eq!(
            (r.used, r.source),
            (DateOrder::MonthDayYear, OrderSource::Contradictory)
        );
        assert!(r.text.contains("do not agree"), "{}", r.text);
        // Only ISO dates: not in question.
        let r = detect(&["2025-03-04"], None);
        assert_eq!((r.source, r.ambiguous), (OrderSource::NotNeeded, false));
    }

    #[test]
    fn clock_and_zones() {
        let d = days_from_civil(2025, 3, 4) as f64;
        let t = parse_time("2025-03-04T06:00", DMY).unwrap();
        assert!(t.has_clock);
        assert_eq!(t.days, d + 0.25);
        assert!(!parse_time("2025-03-04", DMY).unwrap().has_clock);
        assert_eq!(days("2025-03-04 06:00:00Z"), Some(d + 0.25));
        // 06:00 at +06:00 is midnight UTC; at -06:00 it is noon UTC.
        assert_eq!(days("2025-03-04T06:00+06:00"), Some(d));
        assert_eq!(days("2025-03-04T06:00-0600"), Some(d + 0.5));
        assert_eq!(days("2025-03-04T00:30+01"), Some(d - 0.5 / 24.0));
        assert_eq!(days("04/03/2025 6:00 PM"), Some(d + 0.75));
        assert_eq!(days("04/03/2025 12:00 am"), Some(d));
        let frac = days("2025-03-04T00:00:01.5Z").unwrap();
        assert!((frac - (d + 1.5 / 86_400.0)).abs() < 1e-12);
    }

    #[test]
    fn formatting() {
        assert_eq!(format_days(0.0, false), "1970-01-01");
        assert_eq!(
            format_days(days_from_civil(2024, 2, 29) as f64 + 0.75, true),
            "2024-02-29 18:00"
        );
        assert_eq!(format_days(-0.5, false), "1969-12-31");
        assert_eq!(format_days(f64::NAN, true), "?");
    }

    /// Reference values from Python's standard-library `datetime`
    /// (tests/reference/time_reference.py writes the JSON; each case names
    /// the `strptime` format or `fromisoformat` call Python used).
    #[test]
    fn matches_python_datetime_reference() {
        let json: serde_json::Value =
            serde_json::from_str(include_str!("../../tests/reference/time_reference.json"))
                .unwrap();
        let cases = json["cases"].as_array().unwrap();
        assert!(cases.len() >= 40);
        for case in cases {
            let text = case["text"].as_str().unwrap();
            let order = match case["order"].as_str().unwrap() {
                "dmy" => DateOrder::DayMonthYear,
                "mdy" => DateOrder::MonthDayYear,
                "ymd" => DateOrder::YearMonthDay,
                o => panic!("unknown order {o}"),
            };
            let got = parse_time(text, order);
            match case["days"].as_f64() {
                Some(want) => {
                    let got = got.unwrap_or_else(|| panic!("{text:?} refused, Python read it"));
                    assert!(
                        (got.days - want).abs() < 1e-9,
                        "{text:?}: {} vs Python {want}",
                        got.days
                    );
                    assert_eq!(
                        got.has_clock,
                        case["has_clock"].as_bool().unwrap(),
                        "{text:?}"
                    );
                }
                None => assert_eq!(got, None, "{text:?}: Python refused it"),
            }
        }
    }

    /// The shortcut of [`order_hint`] (no readings unless the first field
    /// has one or two digits) against its definition, both readings
    /// compared, on dates in every form with first fields of 0 to 5 digits,
    /// padded with spaces, with clock times and with text.
    #[test]
    fn order_hint_shortcut_equals_both_readings() {
        let both = both_readings;
        let firsts = ["", "3", "03", "13", "23", "003", "2025", "02025", "31"];
        let seconds = ["4", "04", "12", "13", "30", "2025"];
        let thirds = ["2025", "25", "4", "04", "31", "02025"];
        let mut n = 0;
        for a in firsts {
            for b in seconds {
                for c in thirds {
                    for sep in ['-', '/', '.'] {
                        for tail in ["", " 14:30", "T08:00Z"] {
                            for pad in ["", " ", "\t"] {
                                let t = format!("{pad}{a}{sep}{b}{sep}{c}{tail}{pad}");
                                assert_eq!(order_hint(&t), both(&t), "{t:?}");
                                n += 1;
                            }
                        }
                    }
                }
            }
        }
        for t in [
            "",
            " ",
            "abc",
            "1",
            "12",
            "12/",
            "x12/01/2025",
            "\u{A0}03/04/2025",
        ] {
            assert_eq!(order_hint(t), both(t), "{t:?}");
        }
        assert!(n > 8000);
        // Cases of each kind are among them (the comparison is not all-neutral).
        assert_eq!(order_hint("23/04/2025"), OrderHint::DayFirstOnly);
        assert_eq!(order_hint(" 04/23/2025 "), OrderHint::MonthFirstOnly);
        assert_eq!(order_hint("3.4.2025"), OrderHint::Either);
    }
}
