//! Events known only within a time window: a "from" and a "to" column.
//!
//! Expected day numbers are derived by hand (1970-01-01 = day 0; 2025-03-04 =
//! day 20151, the value Python's `datetime` gives in
//! tests/reference/time_reference.json; the other dates count on from it by
//! the calendar: 7 March = 20154, 13 March = 20160, 3 April = 20181).

use cloister::input::{read_points, ColumnMapping, DateOrder, RawLayer, ReadOptions, RejectReason};
use cloister::spacetime::{TimedEvents, UncertainTimes};
use cloister::study::{AreaFallback, Study};
use cloister::InputErrorKind;

const MARCH_4: f64 = 20151.0;
const MARCH_7: f64 = 20154.0;
const MARCH_13: f64 = 20160.0;
const APRIL_3: f64 = 20181.0;

fn read(text: &str) -> RawLayer {
    read_points(text.as_bytes(), &ReadOptions::default()).expect("readable")
}

fn roles(l: &RawLayer) -> (Option<&str>, Option<&str>) {
    (l.mapping.time.as_deref(), l.mapping.time_until.as_deref())
}

#[test]
fn from_and_to_headers_in_several_languages() {
    let rows = "1,2,2025-03-04,2025-03-07\n";
    for (header, from, to) in [
        // English: neither name is a plain time name; detected as a pair.
        ("x,y,Date from,Date to", "Date from", "Date to"),
        ("x,y,Start date,End date", "Start date", "End date"),
        // A time name and an "until" beside it.
        ("x,y,Date,Until", "Date", "Until"),
        // German.
        ("x,y,Tatzeit von,Tatzeit bis", "Tatzeit von", "Tatzeit bis"),
        ("x,y,Datum,Bis", "Datum", "Bis"),
        // Spanish.
        ("x,y,Fecha desde,Fecha hasta", "Fecha desde", "Fecha hasta"),
        // French.
        (
            "x,y,Date de début,Date de fin",
            "Date de début",
            "Date de fin",
        ),
        // Dutch, Swedish.
        ("x,y,Datum van,Datum tot", "Datum van", "Datum tot"),
        ("x,y,Datum från,Datum till", "Datum från", "Datum till"),
    ] {
        let l = read(&format!("{header}\n{rows}"));
        assert_eq!(roles(&l), (Some(from), Some(to)), "{header}");
        assert_eq!(l.time, Some(vec![MARCH_4]), "{header}");
        assert_eq!(l.time_end, Some(vec![MARCH_7]), "{header}");
    }
}

#[test]
fn window_words_alone_are_not_taken() {
    // A "to" without any time column is not a time.
    let l = read("x,y,to\n1,2,2025-03-07\n");
    assert_eq!(roles(&l), (None, None));
    assert!(l.time.is_none() && l.time_end.is_none());
    // A "start" alone is not read as a date either (only as a pair).
    let l = read("x,y,start\n1,2,2025-03-04\n");
    assert_eq!(roles(&l), (None, None));
    // A time column and an ordinary "end" column (not a window word).
    let l = read("x,y,date,end\n1,2,2025-03-04,2025-03-07\n");
    assert_eq!(roles(&l), (Some("date"), None));
    // A detected "to" column holding no date at all is dropped.
    let l = read("x,y,date,to\n1,2,2025-03-04,harbour\n");
    assert_eq!(roles(&l), (Some("date"), None));
    assert!(l.time_end.is_none() && l.incomplete.is_empty());
}

#[test]
fn day_month_order_is_read_from_both_columns() {
    // Every "from" has day and month ≤ 12; the "to" 13/03/2025 says day first,
    // and the "from" dates are then read that way too.
    let l = read("x,y,date from,date to\n1,2,04/03/2025,07/03/2025\n1,2,04/03/2025,13/03/2025\n");
    let d = l.date_order.as_ref().unwrap();
    assert_eq!((d.used, d.ambiguous), (DateOrder::DayMonthYear, false));
    assert_eq!(l.time, Some(vec![MARCH_4, MARCH_4]));
    assert_eq!(l.time_end, Some(vec![MARCH_7, MARCH_13]));
    // The same written month first: 03/13/2025 says month first.
    let l = read("x,y,date from,date to\n1,2,03/04/2025,03/07/2025\n1,2,03/04/2025,03/13/2025\n");
    assert_eq!(l.date_order.as_ref().unwrap().used, DateOrder::MonthDayYear);
    assert_eq!(l.time_end, Some(vec![MARCH_7, MARCH_13]));
    // A given order wins: 04/03 as month first is 3 April.
    let opts = ReadOptions {
        date_order: Some(DateOrder::MonthDayYear),
        ..Default::default()
    };
    let l = read_points(b"x,y,date,to\n1,2,03/04/2025,04/03/2025\n", &opts).unwrap();
    assert_eq!(l.time_end, Some(vec![APRIL_3]));
}

#[test]
fn reversed_and_unreadable_ends_keep_the_event() {
    let l = read(
        "x,y,date,until\n\
         1,2,2025-03-04,2025-03-07\n\
         1,2,2025-03-07,2025-03-04\n\
         1,2,2025-03-04,\n\
         1,2,2025-03-04,someday\n\
         1,2,,2025-03-07\n",
    );
    assert!(l.rejections.is_empty());
    assert_eq!(l.len(), 5);
    let inc: Vec<(u64, Option<&str>, RejectReason, &str)> = l
        .incomplete
        .iter()
        .map(|r| {
            (
                r.row,
                r.column.as_deref(),
                r.reason.clone(),
                r.value.as_str(),
            )
        })
        .collect();
    assert_eq!(
        inc,
        vec![
            (3, Some("until"), RejectReason::ReversedWindow, "2025-03-04"),
            (5, Some("until"), RejectReason::BadTime, "someday"),
            (6, Some("date"), RejectReason::Empty, ""),
        ]
    );
    // The reversed row keeps its "from" and loses its "to"; an empty "to" is
    // an instant; an empty "from" keeps the "to".
    let t = l.time.as_ref().unwrap();
    let e = l.time_end.as_ref().unwrap();
    assert_eq!((t[0], e[0]), (MARCH_4, MARCH_7));
    assert_eq!(t[1], MARCH_7);
    assert!(e[1].is_nan() && e[2].is_nan() && e[3].is_nan());
    assert!(t[4].is_nan() && e[4] == MARCH_7);
    let msg = l.incomplete[0].to_string();
    assert!(
        msg.starts_with("row 3, column \"until\": the \"to\" date \"2025-03-04\" is before"),
        "{msg}"
    );
}

#[test]
fn chosen_columns_and_refusals() {
    let text = b"x,y,seen,left\n1,2,2025-03-04,2025-03-07\n";
    let opts = |time: Option<&str>, until: Option<&str>| ReadOptions {
        mapping: ColumnMapping {
            time: time.map(str::to_string),
            time_until: until.map(str::to_string),
            ..Default::default()
        },
        ..Default::default()
    };
    let l = read_points(text, &opts(Some("seen"), Some("left"))).unwrap();
    assert_eq!(l.time_end, Some(vec![MARCH_7]));
    // An empty name turns detection off.
    let l = read_points(
        b"x,y,date,to\n1,2,2025-03-04,2025-03-07\n",
        &opts(None, Some("")),
    )
    .unwrap();
    assert_eq!(roles(&l), (Some("date"), None));
    // A "to" without a "from" is refused with a message, as is one column for both.
    let e = read_points(text, &opts(Some(""), Some("left"))).unwrap_err();
    assert!(matches!(e.kind, InputErrorKind::MissingColumns { .. }));
    assert!(e.to_string().contains("no time (from) column"), "{e}");
    let e = read_points(text, &opts(Some("seen"), Some("seen"))).unwrap_err();
    assert!(e.to_string().contains("cannot both be"), "{e}");
    let e = read_points(text, &opts(Some("seen"), Some("gone"))).unwrap_err();
    assert!(e.to_string().contains("\"gone\""), "{e}");
}

#[test]
fn geojson_properties_with_windows() {
    let text = r#"{"type":"FeatureCollection","features":[
      {"type":"Feature","geometry":{"type":"Point","coordinates":[10.0,50.0]},
       "properties":{"date from":"2025-03-04","date to":"2025-03-07"}},
      {"type":"Feature","geometry":{"type":"Point","coordinates":[10.1,50.1]},
       "properties":{"date from":"2025-03-07","date to":"2025-03-04"}},
      {"type":"Feature","geometry":{"type":"Point","coordinates":[10.2,50.2]},
       "properties":{"date from":"2025-03-04","date to":null}}]}"#;
    let l = read(text);
    assert_eq!(roles(&l), (Some("date from"), Some("date to")));
    let e = l.time_end.as_ref().unwrap();
    assert_eq!(e[0], MARCH_7);
    assert!(e[1].is_nan() && e[2].is_nan());
    assert_eq!(l.incomplete.len(), 1);
    assert_eq!(l.incomplete[0].reason, RejectReason::ReversedWindow);
    assert_eq!(l.incomplete[0].row, 2);
}

#[test]
fn windows_reach_the_study_and_the_space_time_events() {
    let l = read(
        "x,y,date from,date to\n\
         0,0,2025-03-04,2025-03-07\n\
         100,0,2025-03-04,2025-03-04\n\
         0,100,2025-03-04,2025-04-03\n\
         100,100,2025-03-07,\n",
    );
    let s = Study::build(&l, None, None, AreaFallback::BoundingBox).unwrap();
    let end = s.events.time_end().unwrap();
    assert_eq!(end[0], MARCH_7);
    // Two windows (3 and 30 days): median 16.5 days.
    assert_eq!(s.events.time_windows(), (2, Some(16.5)));
    let r = s.report();
    assert_eq!(
        (r.events_with_window, r.median_window_days),
        (2, Some(16.5))
    );
    // Midpoints for windows up to 10 days; the 30-day one is left out.
    let te = TimedEvents::from_study(&s, UncertainTimes::LeaveOut, 10.0, 1).unwrap();
    assert_eq!(te.t, vec![MARCH_4 + 1.5, MARCH_4, MARCH_7]);
    assert_eq!((te.at_midpoint, te.window_too_long), (1, 1));
    // "midpoint": every window at its middle, however long (the limit unused).
    let all = TimedEvents::from_study(&s, UncertainTimes::Midpoint, 10.0, 1).unwrap();
    assert_eq!(all.t, vec![MARCH_4 + 1.5, MARCH_4, MARCH_4 + 15.0, MARCH_7]);
    assert_eq!((all.at_midpoint, all.window_too_long), (2, 0));
}
