//! Date shifting in the exports: each written date is its event's date
//! moved by that event's shift (|shift| ≤ N), both ends of a window by the
//! same shift, the original date is not in the file where the shift is not
//! zero, and the file says the dates were shifted and by up to how much.
//! Day numbers: 2025-03-04 = day 20151 (Python datetime, as in
//! tests/reference/time_reference.json).

use cloister::input::time::format_days;
use cloister::privacy::dates::shift_dates;
use cloister::privacy::export::{export, ExportContent, ExportFormat, ExportOptions};

const MARCH_4: f64 = 20151.0;

fn setup() -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) {
    let n = 200;
    let x: Vec<f64> = (0..n).map(|i| 1000.0 + i as f64 * 13.0).collect();
    let y: Vec<f64> = (0..n).map(|i| 5000.0 - i as f64 * 7.0).collect();
    let start: Vec<f64> = (0..n).map(|i| MARCH_4 + (i % 40) as f64).collect();
    // Every third event known only within a window of 1 to 3 days.
    let end: Vec<f64> = (0..n)
        .map(|i| {
            if i % 3 == 0 {
                start[i] + 1.0 + (i % 3 + i % 2) as f64
            } else {
                f64::NAN
            }
        })
        .collect();
    (x, y, start, end)
}

#[test]
fn csv_dates_are_shifted_per_event_and_windows_together() {
    let (x, y, start, end) = setup();
    let n_days = 14;
    let dates = shift_dates(&start, Some(&end), n_days, 77).unwrap();
    let opts = ExportOptions {
        created: "2030-01-02".into(),
        dates: Some(dates.clone()),
        ..Default::default()
    };
    let content = ExportContent::UnmaskedInternal { x: &x, y: &y };
    let f = export(&content, &opts, None).unwrap();
    let mut lines = f.text.lines();
    assert!(lines.next().unwrap().starts_with("x_m,y_m,date,date_to,"));
    let mut moved = 0;
    for (i, line) in lines.take(x.len()).enumerate() {
        let cells: Vec<&str> = line.split(',').collect();
        assert_eq!(cells[0], format!("{:.1}", x[i]));
        let shift = dates.shift_days[i];
        assert!(shift.abs() <= n_days as i64);
        let want = format_days(start[i] + shift as f64, false);
        assert_eq!(cells[2], want, "row {i}");
        if shift != 0 {
            moved += 1;
            assert_ne!(
                cells[2],
                format_days(start[i], false),
                "row {i}: original date written"
            );
        }
        if end[i].is_finite() {
            assert_eq!(cells[3], format_days(end[i] + shift as f64, false));
            if shift != 0 {
                assert_ne!(cells[3], format_days(end[i], false));
            }
        } else {
            assert_eq!(cells[3], "");
        }
    }
    assert!(moved > 150, "most events moved: {moved}");
    // The file says so, with the bound, and warns about short time gaps.
    assert!(f.text.contains("dates: dates shifted: each event's date was moved by a random whole number of days from -14 to +14"));
    assert!(f
        .text
        .contains("Dates are shifted by up to 14 days each way"));
    assert_eq!(f.preview.fields[..4], ["x_m", "y_m", "date", "date_to"]);
    // Without dates asked for, no date column (as before).
    let plain = export(&content, &ExportOptions::default(), None).unwrap();
    assert!(plain.text.starts_with("x_m,y_m,about_this_file\n"));
    assert!(!plain.text.contains("2025-"));
}

#[test]
fn geojson_dates_and_reproducible_seed() {
    let (x, y, start, _) = setup();
    let make = |seed| {
        let opts = ExportOptions {
            format: ExportFormat::GeoJson,
            dates: Some(shift_dates(&start, None, 3, seed).unwrap()),
            ..Default::default()
        };
        export(
            &ExportContent::UnmaskedInternal { x: &x, y: &y },
            &opts,
            None,
        )
        .unwrap()
        .text
    };
    let a = make(5);
    assert_eq!(a, make(5), "same seed, same file");
    assert_ne!(a, make(6));
    let v: serde_json::Value = serde_json::from_str(&a).unwrap();
    let feats = v["features"].as_array().unwrap();
    let s = shift_dates(&start, None, 3, 5).unwrap();
    for (i, f) in feats.iter().enumerate() {
        assert_eq!(
            f["properties"]["date"].as_str().unwrap(),
            format_days(s.start[i], false)
        );
        assert!(f["properties"].get("date_to").is_none());
    }
    assert!(v["metadata"]["dates"]
        .as_str()
        .unwrap()
        .contains("-3 to +3"));
}
