//! Time on the map: how many events fell in each day, week or month (an
//! epidemic curve), with events known only within a from–to window spread
//! over the bins they may fall in (aoristic weights, [`super::aoristic`]).
//!
//! **Bins.** Days, weeks (starting on Monday, as ISO 8601 weeks do) or
//! calendar months, in UTC. Chosen from the span of the times (first start
//! to last end) unless the user picks one: a span of up to
//! [`DAY_BINS_UP_TO`] days is drawn by day, up to [`WEEK_BINS_UP_TO`] days
//! by week, a longer one by month (so a curve has at most about a hundred
//! bars; a rule of our own for legibility, no published source). At most
//! [`MAX_BINS`] bins: a shorter bin over a very long span is refused with a
//! message.
//!
//! **Returns** the bin edges (days since 1970-01-01), each bin's label (its
//! first day), the events that fell whole in each bin (instants) and the
//! shares of events known only within a window, plus counts of what was
//! drawn and left out. Nothing found: an error when no event has a time.
//!
//! ```
//! use cloister::spacetime::timeline::{bin_edges, BinSize};
//! // 1970-01-05 (day 4) was a Monday; a week bin holding day 5 starts there.
//! assert_eq!(bin_edges(BinSize::Week, 5.0, 12.0).unwrap(), vec![4.0, 11.0, 18.0]);
//! ```

use super::aoristic;
use crate::error::AnalysisError;
use crate::input::time::{civil_from_days, days_from_civil, format_days};
use crate::params::{Field, Params};
use crate::study::Study;
use serde::{Deserialize, Serialize};

/// Spans up to this many days are drawn by day (automatic choice).
pub const DAY_BINS_UP_TO: f64 = 92.0;
/// Spans up to this many days (two years) are drawn by week.
pub const WEEK_BINS_UP_TO: f64 = 731.0;
/// The most bins one curve may have.
pub const MAX_BINS: usize = 5000;

/// The length of one bar of the curve.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BinSize {
    Day,
    /// Monday to Sunday.
    Week,
    /// A calendar month.
    Month,
}

impl BinSize {
    fn words(self) -> &'static str {
        match self {
            BinSize::Day => "day",
            BinSize::Week => "week (Monday to Sunday)",
            BinSize::Month => "month",
        }
    }
}

/// The bin the user asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BinChoice {
    /// From the span (see the module documentation).
    #[default]
    Auto,
    Day,
    Week,
    Month,
}

/// Options of the time line (`timeline` in the JS API).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct TimelineOptions {
    pub bin: BinChoice,
}

impl Params for TimelineOptions {
    const NAME: &'static str = "timeline";
    fn fields() -> Vec<Field> {
        vec![Field::choice(
            "bin",
            &["auto", "day", "week", "month"],
            "length of one bar: auto = by day up to 92 days of span, by week up to 731 days, else by month; weeks start on Monday",
        )]
    }
}

/// The curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Timeline {
    pub bin: BinSize,
    /// True when the bin was chosen from the span.
    pub bin_automatic: bool,
    /// The bin and why, in one sentence.
    pub bin_text: String,
    /// Bin k is `[edges[k], edges[k+1])` in days since 1970-01-01 (UTC);
    /// the last bin holds its right edge too.
    pub edges: Vec<f64>,
    /// The first day of each bin, `YYYY-MM-DD`.
    pub labels: Vec<String>,
    /// Events with one known time (an instant) in each bin.
    pub whole: Vec<f64>,
    /// Shares of the events known only within a window, per bin.
    pub window_share: Vec<f64>,
    /// Events drawn: instants and windows.
    pub instants: usize,
    pub windows: usize,
    /// Events without a usable time (not drawn).
    pub without_time: usize,
    /// Earliest and latest time (days): the range the map filter spans.
    pub first: f64,
    pub last: f64,
    pub first_text: String,
    pub last_text: String,
    /// The most events (whole plus shares) in one bin.
    pub max_bin: f64,
    /// What the curve shows, in plain words.
    pub statement: String,
}

/// Monday on or before day `d` (1970-01-01, day 0, was a Thursday).
fn monday_on_or_before(d: i64) -> i64 {
    d - (d + 3).rem_euclid(7)
}

/// First day of the month after the month holding day `d`.
fn next_month(d: i64) -> i64 {
    let (y, m, _) = civil_from_days(d);
    if m == 12 {
        days_from_civil(y + 1, 1, 1)
    } else {
        days_from_civil(y, m + 1, 1)
    }
}

/// Bin edges covering `[first, last]` (days): starting at the bin holding
/// `first`, ending past `last`. Error when there would be more than
/// [`MAX_BINS`] bins or a time is not finite.
pub fn bin_edges(bin: BinSize, first: f64, last: f64) -> Result<Vec<f64>, AnalysisError> {
    if !(first.is_finite() && last.is_finite() && first <= last) || last - first > 4e6 {
        return Err(crate::params::bad(
            "bin",
            "the times are not a usable range",
        ));
    }
    let d0 = first.floor() as i64;
    let start = match bin {
        BinSize::Day => d0,
        BinSize::Week => monday_on_or_before(d0),
        BinSize::Month => {
            let (y, m, _) = civil_from_days(d0);
            days_from_civil(y, m, 1)
        }
    };
    let step = |d: i64| match bin {
        BinSize::Day => d + 1,
        BinSize::Week => d + 7,
        BinSize::Month => next_month(d),
    };
    let mut edges = vec![start as f64];
    let mut d = start;
    loop {
        d = step(d);
        edges.push(d as f64);
        if d as f64 > last {
            break;
        }
        if edges.len() > MAX_BINS + 1 {
            return Err(crate::params::bad(
                "bin",
                format!(
                    "a {} bar over these {} days would make more than {MAX_BINS} bars; choose a longer bar",
                    bin.words(),
                    (last - first).round()
                ),
            ));
        }
    }
    Ok(edges)
}

/// The automatic bin for a span of `days`.
pub fn auto_bin(days: f64) -> BinSize {
    if days <= DAY_BINS_UP_TO {
        BinSize::Day
    } else if days <= WEEK_BINS_UP_TO {
        BinSize::Week
    } else {
        BinSize::Month
    }
}

/// The curve of `start` (and window `end`, NaN = none) times in days.
pub fn timeline_of(
    start: &[f64],
    end: Option<&[f64]>,
    opts: &TimelineOptions,
) -> Result<Timeline, AnalysisError> {
    let (mut first, mut last) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut instants, mut windows, mut without) = (0usize, 0usize, 0usize);
    for (i, &s) in start.iter().enumerate() {
        let e = end.and_then(|e| e.get(i).copied()).unwrap_or(f64::NAN);
        let mut any = false;
        for v in [s, e] {
            if v.is_finite() {
                first = first.min(v);
                last = last.max(v);
                any = true;
            }
        }
        if !any {
            without += 1;
        } else if s.is_finite() && e.is_finite() && s != e {
            windows += 1;
        } else {
            instants += 1;
        }
    }
    if instants + windows == 0 {
        return Err(AnalysisError::NothingLoaded {
            what: "events with a usable date".into(),
        });
    }
    let span = last - first;
    let (bin, automatic) = match opts.bin {
        BinChoice::Auto => (auto_bin(span), true),
        BinChoice::Day => (BinSize::Day, false),
        BinChoice::Week => (BinSize::Week, false),
        BinChoice::Month => (BinSize::Month, false),
    };
    let edges = bin_edges(bin, first, last)?;
    let (whole, window_share, _outside) = aoristic::counts(start, end, &edges);
    let labels = edges[..edges.len() - 1]
        .iter()
        .map(|&d| format_days(d, false))
        .collect();
    let max_bin = whole
        .iter()
        .zip(&window_share)
        .map(|(a, b)| a + b)
        .fold(0.0, f64::max);
    let span_text = if span < 1.0 {
        "less than a day".to_string()
    } else {
        format!("{} days", span.round())
    };
    let bin_text = if automatic {
        format!(
            "One bar per {} (chosen for a span of {span_text}: by day up to {DAY_BINS_UP_TO} days, by week up to {WEEK_BINS_UP_TO} days, else by month).",
            bin.words()
        )
    } else {
        format!("One bar per {}.", bin.words())
    };
    let mut statement = format!(
        "{} events from {} to {}",
        instants + windows,
        format_days(first, false),
        format_days(last, false)
    );
    if windows > 0 {
        statement.push_str(&format!(
            "; {windows} known only within a from–to window are spread over the bars their window covers, in proportion to the overlap (the lighter part of each bar)"
        ));
    }
    if without > 0 {
        statement.push_str(&format!("; {without} without a usable date are not drawn"));
    }
    statement.push('.');
    Ok(Timeline {
        bin,
        bin_automatic: automatic,
        bin_text,
        labels,
        whole,
        window_share,
        instants,
        windows,
        without_time: without,
        first,
        last,
        first_text: format_days(first, false),
        last_text: format_days(last, false),
        max_bin,
        statement,
        edges,
    })
}

/// The curve of the study's events. `NothingLoaded` without a time column.
pub fn timeline(study: &Study, opts: &TimelineOptions) -> Result<Timeline, AnalysisError> {
    let ev = &study.events;
    let t = ev.time().ok_or_else(|| AnalysisError::NothingLoaded {
        what: "events with a time column (dates)".into(),
    })?;
    timeline_of(t, ev.time_end(), opts)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::time::days_from_civil as d;

    #[test]
    fn weeks_start_on_monday() {
        // 2025-03-03 was a Monday, 2025-03-09 a Sunday (any calendar).
        let mon = d(2025, 3, 3) as f64;
        for day in 0..7 {
            let e = bin_edges(BinSize::Week, mon + day as f64, mon + day as f64).unwrap();
            assert_eq!(e, vec![mon, mon + 7.0], "day {day}");
        }
        let e = bin_edges(BinSize::Week, mon + 6.5, mon + 7.0).unwrap();
        assert_eq!(e, vec![mon, mon + 7.0, mon + 14.0]);
    }

    #[test]
    fn months_follow_the_calendar() {
        // 2024 is a leap year: February has 29 days.
        let e = bin_edges(BinSize::Month, d(2024, 1, 15) as f64, d(2024, 3, 1) as f64).unwrap();
        let want: Vec<f64> = [(2024, 1), (2024, 2), (2024, 3), (2024, 4)]
            .iter()
            .map(|&(y, m)| d(y, m, 1) as f64)
            .collect();
        assert_eq!(e, want);
        assert_eq!(e[2] - e[1], 29.0);
        // Across a year end.
        let e = bin_edges(BinSize::Month, d(2024, 12, 31) as f64, d(2025, 1, 1) as f64).unwrap();
        assert_eq!(
            e,
            vec![
                d(2024, 12, 1) as f64,
                d(2025, 1, 1) as f64,
                d(2025, 2, 1) as f64
            ]
        );
    }

    #[test]
    fn automatic_bin_and_limits() {
        assert_eq!(auto_bin(0.0), BinSize::Day);
        assert_eq!(auto_bin(92.0), BinSize::Day);
        assert_eq!(auto_bin(92.5), BinSize::Week);
        assert_eq!(auto_bin(731.0), BinSize::Week);
        assert_eq!(auto_bin(800.0), BinSize::Month);
        // Day bars over 20 years are refused with a message, months are fine.
        let e = bin_edges(BinSize::Day, 0.0, 7300.0).unwrap_err();
        assert!(e.to_string().contains("choose a longer bar"), "{e}");
        assert!(bin_edges(BinSize::Month, 0.0, 7300.0).is_ok());
        assert!(bin_edges(BinSize::Day, f64::NAN, 1.0).is_err());
    }

    #[test]
    fn curve_counts_instants_and_window_shares() {
        let base = d(2025, 3, 3) as f64; // a Monday
        let start = [base, base + 1.0, base + 1.0, f64::NAN, base + 5.0];
        // Event 2 known within 4 days (1.0 → 5.0); event 4 within 10 days from day 5.
        let end = [f64::NAN, base + 1.0, base + 5.0, f64::NAN, base + 15.0];
        let t = timeline_of(&start, Some(&end), &TimelineOptions::default()).unwrap();
        assert_eq!(t.bin, BinSize::Day);
        assert!(t.bin_automatic);
        assert_eq!((t.instants, t.windows, t.without_time), (2, 2, 1));
        assert_eq!(t.edges.len(), 17); // days 0..=15: 16 bars
        assert_eq!(t.labels[0], "2025-03-03");
        assert_eq!(&t.whole[..2], &[1.0, 1.0]);
        // Every event drawn adds up to one.
        let total: f64 = t.whole.iter().chain(&t.window_share).sum();
        assert!((total - 4.0).abs() < 1e-12);
        assert!((t.window_share[1] - 0.25).abs() < 1e-12);
        assert!(
            t.statement.contains("1 without a usable date"),
            "{}",
            t.statement
        );
        // Weekly: 3 weeks; the first holds both instants, 1 of event 2 and 0.2 of event 4.
        let w = timeline_of(
            &start,
            Some(&end),
            &TimelineOptions {
                bin: BinChoice::Week,
            },
        )
        .unwrap();
        assert_eq!(w.edges, vec![base, base + 7.0, base + 14.0, base + 21.0]);
        assert_eq!(w.whole, vec![2.0, 0.0, 0.0]);
        assert!((w.window_share[0] - 1.2).abs() < 1e-12);
        assert!((w.window_share[1] - 0.7).abs() < 1e-12);
        assert!((w.window_share[2] - 0.1).abs() < 1e-12);
        assert!((w.max_bin - 3.2).abs() < 1e-12);
        // Nothing with a time: an error, not an empty curve.
        assert!(timeline_of(&[f64::NAN], None, &TimelineOptions::default()).is_err());
    }
}
