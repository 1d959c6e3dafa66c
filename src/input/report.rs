//! What the page is told after a file of points is read ([`LoadReport`]),
//! and one rejected row as the rejection table shows it ([`RejectionRow`]).

use super::{
    count_by_reason, text, time, CoordKind, RawLayer, ReasonCount, RejectReason, Rejection,
    ResolvedMapping, SourceFormat, MANY_REJECTED_SHARE,
};
use crate::study::{Study, StudyReport};
use serde::Serialize;

/// One rejected (or incomplete) row as the rejection table shows it.
#[derive(Debug, Serialize)]
pub struct RejectionRow<'a> {
    pub row: u64,
    pub column: Option<&'a str>,
    pub reason: &'a RejectReason,
    pub reason_text: &'static str,
    pub value: &'a str,
}

impl<'a> From<&'a Rejection> for RejectionRow<'a> {
    fn from(r: &'a Rejection) -> Self {
        RejectionRow {
            row: r.row,
            column: r.column.as_deref(),
            reason: &r.reason,
            reason_text: r.reason.describe(),
            value: &r.value,
        }
    }
}

/// A failure to set up the study, reported beside a file that was read.
#[derive(Debug, Serialize)]
pub struct ErrorSummary {
    pub code: String,
    pub message: String,
}

/// The load report of an events or controls layer: what was read, how
/// (format, encoding, date order), what was used and what was not, and the
/// study it is part of now.
#[derive(Debug, Serialize)]
pub struct LoadReport<'a> {
    pub layer: &'a str,
    pub format: Option<&'a SourceFormat>,
    pub columns: &'a [String],
    pub mapping: Option<&'a ResolvedMapping>,
    pub coords: CoordKind,
    pub rows_read: u64,
    pub accepted: usize,
    pub rejected: usize,
    pub by_reason: Vec<ReasonCount>,
    pub categories: &'a [String],
    pub time_has_clock: bool,
    /// The text encoding used and its name for people.
    pub encoding: text::Encoding,
    pub encoding_name: &'static str,
    /// How dates were read (order, why), if there is a time column.
    pub date_order: Option<&'a time::DateOrderReport>,
    /// True when the data cannot tell day/month from month/day: the page asks.
    pub date_order_ambiguous: bool,
    /// Rows kept with an optional value left out (first 200), and how many.
    pub incomplete: Vec<RejectionRow<'a>>,
    pub incomplete_count: usize,
    /// Rejected rows as a share of the rows read, and whether it is above
    /// [`MANY_REJECTED_SHARE`] (the page then shows a banner).
    pub rejected_share: f64,
    pub many_rejected: bool,
    pub many_rejected_text: Option<String>,
    pub study: Option<StudyReport>,
    pub study_error: Option<ErrorSummary>,
}

/// The report of `layer` (`which` is `"events"` or `"controls"`), counted
/// against `study` when there is one (rows outside the study area are then
/// rejections too).
pub fn load_report<'a>(
    which: &'a str,
    layer: &'a RawLayer,
    study: Option<&'a Study>,
) -> LoadReport<'a> {
    let (rows_read, rejections, accepted): (u64, &[Rejection], usize) = match (study, which) {
        (Some(s), "events") => (s.events_rows_read, &s.event_rejections, s.events.len()),
        (Some(s), "controls") => (
            s.controls_rows_read,
            &s.control_rejections,
            s.controls.as_ref().map_or(layer.len(), |c| c.len()),
        ),
        _ => (layer.rows_read, &layer.rejections, layer.len()),
    };
    let rejected = rejections.len();
    let rejected_share = if rows_read > 0 {
        rejected as f64 / rows_read as f64
    } else {
        0.0
    };
    let many_rejected = rejected_share > MANY_REJECTED_SHARE;
    LoadReport {
        layer: which,
        format: Some(&layer.format),
        columns: &layer.columns,
        mapping: Some(&layer.mapping),
        coords: layer.coords,
        rows_read,
        accepted,
        rejected,
        by_reason: count_by_reason(rejections),
        categories: &layer.category_names,
        time_has_clock: layer.time_has_clock,
        encoding: layer.encoding,
        encoding_name: layer.encoding.name(),
        date_order: layer.date_order.as_ref(),
        date_order_ambiguous: layer.date_order.as_ref().is_some_and(|d| d.ambiguous),
        incomplete: layer
            .incomplete
            .iter()
            .take(200)
            .map(RejectionRow::from)
            .collect(),
        incomplete_count: layer.incomplete.len(),
        rejected_share,
        many_rejected,
        many_rejected_text: many_rejected.then(|| {
            format!(
                "{} of {} rows ({:.0} %) could not be used. With this many rows left out, \
                 the points left may not stand for what was recorded: check the rows not \
                 used (Data quality) before reading any result.",
                rejected,
                rows_read,
                rejected_share * 100.0
            )
        }),
        study: study.map(Study::report),
        study_error: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::{read_points, ReadOptions};
    use crate::study::AreaFallback;

    #[test]
    fn many_rejected_rows_raise_the_banner() {
        // 10 data rows, 2 unreadable: 20 % > 10 %.
        let mut csv = String::from("x,y\n");
        for i in 0..8 {
            csv.push_str(&format!("{},{}\n", 100 * i, 50 * (i * i % 7)));
        }
        csv.push_str("abc,1\n,2\n");
        let layer = read_points(csv.as_bytes(), &ReadOptions::default()).unwrap();
        let study = Study::build(&layer, None, None, AreaFallback::ConvexHull).unwrap();
        let r = load_report("events", &layer, Some(&study));
        assert_eq!((r.rows_read, r.accepted, r.rejected), (10, 8, 2));
        assert!((r.rejected_share - 0.2).abs() < 1e-12);
        assert!(r.many_rejected);
        assert!(r
            .many_rejected_text
            .unwrap()
            .starts_with("2 of 10 rows (20 %)"));
        assert_eq!(r.by_reason.iter().map(|c| c.count).sum::<usize>(), 2);
        // One in ten is not "many".
        let one = "x,y\n0,0\n1,0\n2,0\n3,1\n4,2\n5,3\n6,1\n7,2\n8,0\nabc,1\n";
        let layer = read_points(one.as_bytes(), &ReadOptions::default()).unwrap();
        let r = load_report("events", &layer, None);
        assert!(!r.many_rejected && r.many_rejected_text.is_none());
    }
}
