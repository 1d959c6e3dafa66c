//! Malformed and awkward input files: each must give the exact rejection
//! (row, column, reason, value) or file-level error expected, never a panic.
//!
//! Row numbers are 1-based as a spreadsheet shows them (header = row 1).
//! Expected day numbers are derived by hand in comments (1970-01-01 = day 0;
//! 2025-03-04 = day 20151, the value Python's `datetime` gives in
//! tests/reference/time_reference.json).

use cloister::input::text::Encoding;
use cloister::input::time::OrderSource;
use cloister::input::{
    read_area, read_points, ColumnMapping, CoordKind, DateOrder, LengthUnit, RawLayer, ReadOptions,
    RejectReason, SourceFormat,
};
use cloister::rng::rng_from_seed;
use cloister::study::{AreaFallback, Study};
use cloister::{InputError, InputErrorKind};
use rand::RngExt;

/// 2025-03-04 as days since 1970-01-01 (Python datetime reference, see above).
const MARCH_4_2025: f64 = 20151.0;

fn read(text: &str) -> RawLayer {
    read_points(text.as_bytes(), &ReadOptions::default()).expect("file should be readable")
}

fn fail(bytes: &[u8]) -> InputError {
    read_points(bytes, &ReadOptions::default()).expect_err("file should be refused")
}

fn rejections(l: &RawLayer) -> Vec<(u64, Option<String>, RejectReason, String)> {
    l.rejections
        .iter()
        .map(|r| (r.row, r.column.clone(), r.reason.clone(), r.value.clone()))
        .collect()
}

fn incomplete(l: &RawLayer) -> Vec<(u64, Option<String>, RejectReason, String)> {
    l.incomplete
        .iter()
        .map(|r| (r.row, r.column.clone(), r.reason.clone(), r.value.clone()))
        .collect()
}

fn r(
    row: u64,
    col: &str,
    reason: RejectReason,
    value: &str,
) -> (u64, Option<String>, RejectReason, String) {
    (row, Some(col.to_string()), reason, value.to_string())
}

fn check_invariants(l: &RawLayer) {
    assert_eq!(l.len() as u64 + l.rejections.len() as u64, l.rows_read);
    assert_eq!(l.row.len(), l.len());
    assert_eq!(l.y.len(), l.len());
    for v in [&l.time, &l.weight].into_iter().flatten() {
        assert_eq!(v.len(), l.len());
    }
    if let Some(c) = &l.category {
        assert_eq!(c.len(), l.len());
        assert!(c.iter().all(|&i| (i as usize) < l.category_names.len()));
    }
    assert!(l.x.iter().chain(&l.y).all(|v| v.is_finite()));
    assert!(l.rejections.iter().all(|r| r.value.chars().count() <= 60));
}

// ---------------------------------------------------------------- file level

#[test]
fn empty_file() {
    assert_eq!(fail(b"").kind, InputErrorKind::Empty);
    assert_eq!(fail(b"").to_string(), "the file is empty");
}

#[test]
fn whitespace_only_file() {
    assert_eq!(fail(b" \r\n\t \n\n").kind, InputErrorKind::Empty);
    assert_eq!(
        read_area(b"   ", None).unwrap_err().kind,
        InputErrorKind::Empty
    );
}

#[test]
fn png_header_is_binary() {
    let png: &[u8] = &[
        0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A, 0x00, 0x00, 0x00, 0x0D, 0x49, 0x48, 0x44,
        0x52, 0x00, 0x00, 0x01, 0x00,
    ];
    assert_eq!(fail(png).kind, InputErrorKind::Binary);
    assert_eq!(
        read_area(png, None).unwrap_err().kind,
        InputErrorKind::Binary
    );
}

#[test]
fn non_utf8_bytes() {
    // Valid UTF-8 ("é" = C3 A9) and a stray byte: a damaged UTF-8 file is
    // refused, not guessed. "x,y,name\n1,2,caf" is 16 bytes, then C3 A9
    // (16, 17), "\n1,2,M" (18..=23), and 0xFC at byte 24.
    let e = fail(b"x,y,name\n1,2,caf\xC3\xA9\n1,2,M\xFCller\n");
    assert_eq!(e.kind, InputErrorKind::NotUtf8 { byte_offset: 24 });
    assert!(e.to_string().contains("offset 24"), "{e}");
}

#[test]
fn windows_1252_file_is_decoded_and_named() {
    // Bytes as Windows-1252 writes them (CP1252.TXT): E4 = ä, E9 = é,
    // DF = ß, D6 = Ö; a German export with semicolons and decimal commas.
    let bytes = b"Breite;L\xE4nge;Kategorie\n48,1;11,5;K\xE4se\n48,2;11,6;Caf\xE9\n48,3;11,7;Stra\xDFe\n48,4;11,8;\xD6l\n";
    let l = read_points(bytes, &ReadOptions::default()).unwrap();
    check_invariants(&l);
    assert_eq!(l.encoding, Encoding::Windows1252);
    assert_eq!(l.encoding.name(), "Windows-1252 (Western European)");
    assert_eq!(l.columns, vec!["Breite", "Länge", "Kategorie"]);
    assert_eq!(l.category_names, vec!["Käse", "Café", "Straße", "Öl"]);
    assert_eq!(l.coords, CoordKind::LonLat);
    assert_eq!(l.x, vec![11.5, 11.6, 11.7, 11.8]);
}

#[test]
fn utf16_and_utf8_bom_files_are_read() {
    // "Unicode text" from a spreadsheet: UTF-16 LE with a BOM, tab-separated.
    let text = "x\ty\tType\n1\t2\tÉcole\n";
    let mut bytes = vec![0xFF, 0xFE];
    bytes.extend(text.encode_utf16().flat_map(|u| u.to_le_bytes()));
    let l = read_points(&bytes, &ReadOptions::default()).unwrap();
    assert_eq!(l.encoding, Encoding::Utf16Le);
    assert_eq!(
        (l.x.clone(), l.category_names.clone()),
        (vec![1.0], vec!["École".to_string()])
    );
    let l = read("\u{FEFF}x,y\n1,2\n");
    assert_eq!(l.encoding, Encoding::Utf8Bom);
    assert_eq!(read("x,y\n1,2\n").encoding, Encoding::Utf8);
}

#[test]
fn header_only() {
    let e = fail(b"x,y,date\n");
    assert_eq!(e.code(), "not_a_table");
    assert!(e.to_string().contains("no data rows"), "{e}");
    // Blank lines after the header are not data rows either.
    assert_eq!(fail(b"x,y\n\n,\n\n").code(), "not_a_table");
}

#[test]
fn single_column() {
    let e = fail(b"x\n1\n2\n");
    assert_eq!(e.code(), "not_a_table");
    assert!(e.to_string().contains("one column"), "{e}");
}

#[test]
fn wrong_delimiter_declared() {
    let opts = ReadOptions {
        delimiter: Some(';'),
        ..Default::default()
    };
    let e = read_points(b"x,y\n1,2\n", &opts).unwrap_err();
    assert_eq!(e.code(), "not_a_table");
    assert_eq!(
        e.to_string(),
        "not a usable table: with the delimiter \";\" the header has only one column; \
         the file seems to use \",\" instead"
    );
}

#[test]
fn truncated_quoted_field() {
    let e = fail(b"x,y,name\n1,2,a\n3,4,\"never closed\n5,6,b\n");
    assert_eq!(e.code(), "not_a_table");
    let at = e.at.clone().unwrap();
    assert_eq!((at.row, at.column.as_deref()), (3, Some("name")));
    assert_eq!(
        e.to_string(),
        "row 3, column \"name\": not a usable table: a quoted field starts here but its \
         closing quote is missing"
    );
}

#[test]
fn no_coordinate_columns() {
    let e = fail(b"id,when,what\n1,2025-01-01,a\n");
    match &e.kind {
        InputErrorKind::MissingColumns { available, .. } => {
            assert_eq!(available, &["id", "when", "what"])
        }
        k => panic!("{k:?}"),
    }
    assert!(
        e.to_string().ends_with("columns found: id, when, what"),
        "{e}"
    );
}

#[test]
fn named_column_that_does_not_exist() {
    let opts = ReadOptions {
        mapping: ColumnMapping {
            time: Some("onset".into()),
            ..Default::default()
        },
        ..Default::default()
    };
    let e = read_points(b"x,y,date\n1,2,2025-01-01\n", &opts).unwrap_err();
    assert_eq!(
        e.to_string(),
        "there is no column named \"onset\" (chosen for time); columns found: x, y, date"
    );
}

#[test]
fn not_geojson() {
    let e = fail(b"{\"type\": \"FeatureCollection\", \"features\": [\n  {\"type\": }\n]}");
    assert_eq!(e.code(), "bad_json");
    assert!(e.to_string().contains("line 2 column"), "{e}");
    assert_eq!(fail(b"{\"name\": \"table\"}").code(), "bad_geojson");
    assert_eq!(fail(b"[]").code(), "bad_geojson");
    let e = read_area(br#"{"type":"MultiPoint","coordinates":[[0,0]]}"#, None).unwrap_err();
    assert!(e.to_string().contains("expected polygons"), "{e}");
}

// ----------------------------------------------------------------- row level

#[test]
fn wrong_types() {
    let l = read("x,y,count\n1,abc,1\ntrue,2,1\n1,2,many\n1,2,3\n");
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "y", RejectReason::NotANumber, "abc"),
            r(3, "x", RejectReason::NotANumber, "true"),
        ]
    );
    // A weight that is not a number keeps the row, without a weight.
    assert_eq!(
        incomplete(&l),
        vec![r(4, "count", RejectReason::BadWeight, "many")]
    );
    assert_eq!(l.row, vec![4, 5]);
    let w = l.weight.clone().unwrap();
    assert!(w[0].is_nan() && w[1] == 3.0);
}

#[test]
fn huge_numbers_and_nan() {
    let l = read("x,y\n1e999,2\n1,-1e400\nNaN,1\n1,inf\n-Infinity,0\n1e308,-1e308\n");
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "x", RejectReason::NotANumber, "1e999"),
            r(3, "y", RejectReason::NotANumber, "-1e400"),
            r(4, "x", RejectReason::NotANumber, "NaN"),
            r(5, "y", RejectReason::NotANumber, "inf"),
            r(6, "x", RejectReason::NotANumber, "-Infinity"),
        ]
    );
    assert_eq!((l.x[0], l.y[0]), (1e308, -1e308));
}

#[test]
fn empty_cells_and_short_rows() {
    let l = read("x,y,date\n,2,2025-03-04\n1, ,2025-03-04\n1,2,\n1,2\n1,2,2025-03-04,extra\n1,2,2025-03-04\n");
    check_invariants(&l);
    // A row with more fields than the header is listed like one with fewer.
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "x", RejectReason::Empty, ""),
            r(3, "y", RejectReason::Empty, " "),
            (5, None, RejectReason::TooFewFields, "1,2".to_string()),
            (
                6,
                None,
                RejectReason::TooManyFields,
                "1,2,2025-03-04,extra".to_string()
            ),
        ]
    );
    // The empty date keeps row 4, without a time.
    assert_eq!(incomplete(&l), vec![r(4, "date", RejectReason::Empty, "")]);
    assert_eq!(l.row, vec![4, 7]);
    let t = l.time.clone().unwrap();
    assert!(t[0].is_nan() && t[1] == MARCH_4_2025);
}

#[test]
fn long_values_are_cut_to_60_characters() {
    let long = "z".repeat(500);
    let l = read(&format!("x,y\n{long},1\n"));
    let v = &l.rejections[0].value;
    assert_eq!(v.chars().count(), 60);
    assert!(v.starts_with("zzzz") && v.ends_with('…'));
}

#[test]
fn bom_semicolon_and_decimal_comma() {
    let text = "\u{FEFF}Lat;Lon;Date;Category\n45,5;7,25;04/03/2025;a\n-12,125;-60;05.03.2025;b\n";
    let l = read(text);
    check_invariants(&l);
    assert_eq!(
        l.format,
        SourceFormat::Csv {
            delimiter: ';',
            decimal_comma: true
        }
    );
    assert_eq!(l.coords, CoordKind::LonLat);
    assert_eq!(l.columns, vec!["Lat", "Lon", "Date", "Category"]);
    assert_eq!(l.mapping.x.as_deref(), Some("Lon"));
    assert_eq!(l.x, vec![7.25, -60.0]);
    assert_eq!(l.y, vec![45.5, -12.125]);
    // Day-month-year by default: 04/03/2025 is 4 March 2025.
    assert_eq!(l.time, Some(vec![MARCH_4_2025, MARCH_4_2025 + 1.0]));
    assert_eq!(l.category_names, vec!["a", "b"]);
}

#[test]
fn tab_separated() {
    let l = read("easting\tnorthing\ttype\n500100.5\t4200200\tcar\n500200\t4200300.25\tbike\n");
    check_invariants(&l);
    assert_eq!(
        l.format,
        SourceFormat::Csv {
            delimiter: '\t',
            decimal_comma: false
        }
    );
    assert_eq!(
        l.coords,
        CoordKind::Planar {
            unit: LengthUnit::Metre
        }
    );
    assert_eq!(l.x, vec![500100.5, 500200.0]);
    assert_eq!(l.category, Some(vec![0, 1]));
}

#[test]
fn crlf_line_endings() {
    let l = read("x,y\r\n1,2\r\n\r\n3,4\r\n");
    check_invariants(&l);
    assert_eq!(l.x, vec![1.0, 3.0]);
    assert_eq!(l.row, vec![2, 4]);
    assert_eq!(l.rows_read, 2);
}

#[test]
fn quoted_newline_and_doubled_quotes() {
    // Row 2's note spans two lines but is one spreadsheet row; row 3 has a
    // bad y inside quotes with a doubled quote.
    let l = read("x,y,note\n1,2,\"first line\nsecond, line\"\n5,\"6\"\"\",x\n7,8,\"ok\"\n");
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![r(3, "y", RejectReason::NotANumber, "6\"")]
    );
    assert_eq!(l.row, vec![2, 4]);
}

#[test]
fn lonlat_out_of_range() {
    let l = read("longitude,latitude\n181,0\n-180,-90.0001\n180,90\n-180.0,-90\n");
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "longitude", RejectReason::LongitudeOutOfRange, "181"),
            r(3, "latitude", RejectReason::LatitudeOutOfRange, "-90.0001"),
        ]
    );
    assert_eq!(
        l.rejections[1].to_string(),
        "row 3, column \"latitude\": latitude -90.0001 is outside -90 to 90"
    );
}

#[test]
fn bad_dates() {
    let l = read(
        "x,y,date\n1,1,2025-02-29\n1,1,31/04/2025\n1,1,2024-02-29\n1,1,13/13/2025\n1,1,2025-03-04 25:00\n1,1,soon\n",
    );
    check_invariants(&l);
    // Unreadable dates keep their rows (spatially) and are listed.
    assert!(l.rejections.is_empty());
    assert_eq!(
        incomplete(&l),
        vec![
            r(2, "date", RejectReason::BadTime, "2025-02-29"),
            r(3, "date", RejectReason::BadTime, "31/04/2025"),
            r(5, "date", RejectReason::BadTime, "13/13/2025"),
            r(6, "date", RejectReason::BadTime, "2025-03-04 25:00"),
            r(7, "date", RejectReason::BadTime, "soon"),
        ]
    );
    // 2024 is a leap year: 2024-02-29 is day 19782 (Python datetime reference).
    let t = l.time.clone().unwrap();
    assert_eq!(t.len(), 6);
    assert_eq!(
        t.iter()
            .filter(|v| v.is_finite())
            .copied()
            .collect::<Vec<_>>(),
        vec![19782.0]
    );
    assert_eq!(l.missing_time(), 5);
}

#[test]
fn month_first_dates() {
    let opts = ReadOptions {
        date_order: Some(DateOrder::MonthDayYear),
        ..Default::default()
    };
    let l = read_points(b"x,y,date\n1,1,03/04/2025\n1,1,31/04/2025\n", &opts).unwrap();
    assert_eq!(l.time.as_ref().unwrap()[0], MARCH_4_2025);
    assert!(l.time.as_ref().unwrap()[1].is_nan());
    assert_eq!(
        incomplete(&l),
        vec![r(3, "date", RejectReason::BadTime, "31/04/2025")]
    );
}

#[test]
fn timezone_offsets() {
    // 23:30 at UTC-01:00 is 00:30 UTC the next day; 01:00 at +02:00 is 23:00 UTC
    // the day before.
    let l = read(
        "x,y,timestamp\n0,0,2025-03-04T23:30-01:00\n0,0,2025-03-05 01:00:00+02:00\n0,0,2025-03-04T12:00:00Z\n",
    );
    check_invariants(&l);
    let t = l.time.clone().unwrap();
    let want = [
        MARCH_4_2025 + 1.0 + 0.5 / 24.0,
        MARCH_4_2025 + 23.0 / 24.0,
        MARCH_4_2025 + 0.5,
    ];
    for (got, want) in t.iter().zip(want) {
        assert!((got - want).abs() < 1e-9, "{got} vs {want}");
    }
    assert!(l.time_has_clock);
}

#[test]
fn every_row_rejected_still_reads() {
    let l = read("x,y\na,b\nc,d\n");
    check_invariants(&l);
    assert!(l.is_empty());
    assert_eq!(l.rows_read, 2);
}

#[test]
fn rejection_messages_read_well() {
    // Comma-delimited, so a quoted "12,5" is not a number (and gets a hint).
    // Rows not used and values left out read the same way, in row order.
    let l = read("x,y,weight,date\n1,\"12,5\",1,2025-01-01\n1,1,-3,2025-01-01\n1,1,1,2025-02-30\n1,1,1,\n1,1\n");
    let mut all: Vec<_> = l.rejections.iter().chain(&l.incomplete).collect();
    all.sort_by_key(|r| r.row);
    let msgs: Vec<String> = all.iter().map(|r| r.to_string()).collect();
    assert_eq!(
        msgs,
        vec![
            "row 2, column \"y\": could not read \"12,5\" as a number (decimal comma?)",
            "row 3, column \"weight\": weight \"-3\" must be a number ≥ 0",
            "row 4, column \"date\": could not read \"2025-02-30\" as a date (e.g. 2025-03-04, \
             04/03/2025 or 2025-03-04 14:30), or the date does not exist",
            "row 5, column \"date\": the cell is empty",
            "row 6: fewer fields than the header row (\"1,1\")",
        ]
    );
}

#[test]
fn geojson_rejections() {
    let text = br#"{"type":"FeatureCollection","features":[
      {"type":"Feature","geometry":{"type":"Point","coordinates":[10,20]},"properties":{"date":"2025-03-04"}},
      {"type":"Feature","geometry":null,"properties":{"date":"2025-03-04"}},
      {"type":"Feature","geometry":{"type":"Point","coordinates":[10,20]},"properties":{"date":"31/04/2025"}},
      {"type":"Feature","geometry":{"type":"Polygon","coordinates":[]},"properties":{"date":"2025-03-04"}}
    ]}"#;
    let l = read_points(text, &ReadOptions::default()).unwrap();
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "geometry", RejectReason::BadGeometry, "null geometry"),
            r(4, "geometry", RejectReason::BadGeometry, "Polygon"),
        ]
    );
    assert_eq!(
        incomplete(&l),
        vec![r(3, "date", RejectReason::BadTime, "31/04/2025")]
    );
    assert_eq!(l.time.as_ref().unwrap()[0], MARCH_4_2025);
    assert!(l.time.as_ref().unwrap()[1].is_nan());
    assert_eq!(l.format, SourceFormat::GeoJson);
}

// ------------------------------------------------------------ date order

/// 2025-04-23 as days since 1970-01-01: 2025-03-04 is day 20151 (Python
/// datetime reference above); March has 31 days, so 4 March + 50 days.
const APRIL_23_2025: f64 = MARCH_4_2025 + 50.0;

#[test]
fn month_day_year_file_is_detected() {
    // Rows 2 and 3 fit both orders; row 4's 23 can only be a day, and it is
    // in the second place, so the file is month/day/year.
    let l = read("x,y,date\n1,1,03/04/2025\n1,1,04/03/2025\n1,1,04/23/2025\n");
    check_invariants(&l);
    let d = l.date_order.clone().unwrap();
    assert_eq!(
        (d.used, d.source, d.ambiguous),
        (DateOrder::MonthDayYear, OrderSource::Detected, false)
    );
    assert!(
        d.text
            .contains("04/23/2025 on row 4 can only be month/day/year"),
        "{}",
        d.text
    );
    // 03/04/2025 read month first is 4 March; 04/23/2025 is 23 April.
    assert_eq!(
        l.time,
        Some(vec![MARCH_4_2025, MARCH_4_2025 + 30.0, APRIL_23_2025])
    );
    assert!(l.rejections.is_empty() && l.incomplete.is_empty());
}

#[test]
fn day_month_year_file_is_detected() {
    let l = read("x,y,date\n1,1,04/03/2025\n1,1,23.04.2025\n");
    let d = l.date_order.clone().unwrap();
    assert_eq!(
        (d.used, d.source),
        (DateOrder::DayMonthYear, OrderSource::Detected)
    );
    assert!(
        d.text
            .contains("23.04.2025 on row 3 can only be day/month/year"),
        "{}",
        d.text
    );
    assert_eq!(l.time, Some(vec![MARCH_4_2025, APRIL_23_2025]));
}

#[test]
fn ambiguous_file_raises_the_question() {
    let l = read("x,y,date\n1,1,04/03/2025\n1,1,05/05/2025\n1,1,2025-06-01\n");
    let d = l.date_order.clone().unwrap();
    assert_eq!(
        (d.used, d.source, d.ambiguous),
        (DateOrder::DayMonthYear, OrderSource::Ambiguous, true)
    );
    let ex = d.example.unwrap();
    assert_eq!((ex.row, ex.value.as_str()), (2, "04/03/2025"));
    assert_eq!(
        (ex.day_month_year.as_str(), ex.month_day_year.as_str()),
        ("2025-03-04", "2025-04-03")
    );
    // Only ISO dates: nothing to ask.
    let l = read("x,y,date\n1,1,2025-03-04\n");
    assert!(!l.date_order.unwrap().ambiguous);
}

#[test]
fn explicit_date_order_wins() {
    let opts = ReadOptions {
        date_order: Some(DateOrder::DayMonthYear),
        ..Default::default()
    };
    // The data say month/day/year, the user says day/month/year: the user
    // wins, and 04/23/2025 (no month 23) is listed as unreadable.
    let l = read_points(b"x,y,date\n1,1,03/04/2025\n1,1,04/23/2025\n", &opts).unwrap();
    let d = l.date_order.clone().unwrap();
    assert_eq!(
        (d.used, d.source, d.ambiguous),
        (DateOrder::DayMonthYear, OrderSource::Given, false)
    );
    assert_eq!(l.time.as_ref().unwrap()[0], MARCH_4_2025 + 30.0); // 3 April: 27 days of March left, then 3
    assert_eq!(
        incomplete(&l),
        vec![r(3, "date", RejectReason::BadTime, "04/23/2025")]
    );
}

#[test]
fn contradictory_dates_are_said_and_listed() {
    let l = read("x,y,date\n1,1,23/04/2025\n1,1,24/04/2025\n1,1,04/25/2025\n");
    let d = l.date_order.clone().unwrap();
    assert_eq!(
        (d.used, d.source),
        (DateOrder::DayMonthYear, OrderSource::Contradictory)
    );
    assert!(d.text.contains("do not agree"), "{}", d.text);
    assert_eq!(
        incomplete(&l),
        vec![r(4, "date", RejectReason::BadTime, "04/25/2025")]
    );
    assert_eq!(l.len(), 3);
}

// ------------------------------------------- optional values keep the row

#[test]
fn blank_date_is_kept_spatially_and_counted() {
    let l = read("x,y,date,weight\n0,0,2025-03-04,1\n10,0,,2\n0,10,2025-03-04,\n10,10,2025-03-05,x\n5,5,2025-03-06,3\n");
    check_invariants(&l);
    assert!(l.rejections.is_empty());
    assert_eq!((l.len(), l.missing_time(), l.missing_weight()), (5, 1, 2));
    let s = Study::build(&l, None, None, AreaFallback::BoundingBox).unwrap();
    // All five events are in the spatial layer.
    assert_eq!(s.events.len(), 5);
    assert_eq!(s.events.x(), &[0.0, 10.0, 0.0, 10.0, 5.0]);
    let rep = s.report();
    assert_eq!((rep.events_without_time, rep.events_without_weight), (1, 2));
    assert!(
        rep.warnings
            .iter()
            .any(|w| w.contains("1 event(s) have no usable date: left out of the time analyses")),
        "{:?}",
        rep.warnings
    );
    assert!(
        rep.warnings
            .iter()
            .any(|w| w.contains("2 event(s) have no usable weight: they count 0")),
        "{:?}",
        rep.warnings
    );
    // Weighted analyses see 0, never a silent 1.
    assert_eq!(
        s.events.weights_or_zero().unwrap().as_ref(),
        &[1.0, 2.0, 0.0, 0.0, 3.0]
    );
    // The time summary counts only the events with a date.
    let sm = cloister::summary::summarise(&s);
    assert_eq!(sm.time_span.unwrap().n_with_time, 4);
}

// ---------------------------------------------------- headers in languages

#[test]
fn german_french_spanish_headers_are_mapped() {
    let cases = [
        (
            "Breite;Länge;Meldedatum;Kategorie;Anzahl\n48,1;11,5;04.03.2025;a;2\n",
            "Länge",
            "Breite",
            "Meldedatum",
            "Kategorie",
            "Anzahl",
        ),
        (
            "Latitude;Longitude;Date de déclaration;Catégorie;Poids\n48,1;11,5;04/03/2025;a;2\n",
            "Longitude",
            "Latitude",
            "Date de déclaration",
            "Catégorie",
            "Poids",
        ),
        (
            "Latitud,Longitud,Fecha,Tipo,Casos\n48.1,11.5,04/03/2025,a,2\n",
            "Longitud",
            "Latitud",
            "Fecha",
            "Tipo",
            "Casos",
        ),
    ];
    for (text, x, y, t, c, w) in cases {
        let l = read(text);
        check_invariants(&l);
        assert_eq!(l.coords, CoordKind::LonLat, "{text}");
        let m = &l.mapping;
        assert_eq!(
            (
                m.x.as_deref(),
                m.y.as_deref(),
                m.time.as_deref(),
                m.category.as_deref(),
                m.weight.as_deref()
            ),
            (Some(x), Some(y), Some(t), Some(c), Some(w)),
        );
        assert_eq!((l.x.clone(), l.y.clone()), (vec![11.5], vec![48.1]));
        assert_eq!(l.time, Some(vec![MARCH_4_2025]));
        assert_eq!(l.weight, Some(vec![2.0]));
    }
}

// -------------------------------------------------------- never a panic

fn random_options(rng: &mut cloister::rng::Rng) -> ReadOptions {
    let date_order = match rng.random_range(0..4) {
        0 => Some(DateOrder::DayMonthYear),
        1 => Some(DateOrder::MonthDayYear),
        2 => Some(DateOrder::YearMonthDay),
        _ => None,
    };
    let coords = match rng.random_range(0..3) {
        0 => None,
        1 => Some(CoordKind::LonLat),
        _ => Some(CoordKind::Planar {
            unit: LengthUnit::Foot,
        }),
    };
    let delimiter = match rng.random_range(0..5) {
        0 => Some(','),
        1 => Some(';'),
        2 => Some('"'),
        _ => None,
    };
    ReadOptions {
        date_order,
        coords,
        delimiter,
        ..Default::default()
    }
}

/// Feeds one input to both readers and checks the results are consistent.
fn exercise(bytes: &[u8], opts: &ReadOptions) {
    if let Ok(l) = read_points(bytes, opts) {
        check_invariants(&l);
    }
    if let Ok(a) = read_area(bytes, opts.coords) {
        assert!(!a.polygons.is_empty());
        assert!(a
            .polygons
            .iter()
            .flatten()
            .flatten()
            .flatten()
            .all(|v| v.is_finite()));
    }
}

#[test]
fn random_bytes_never_panic() {
    let mut rng = rng_from_seed(20_250_304);
    for _ in 0..2000 {
        let n = rng.random_range(0..300);
        let bytes: Vec<u8> = (0..n).map(|_| rng.random::<u8>()).collect();
        let opts = random_options(&mut rng);
        exercise(&bytes, &opts);
    }
}

#[test]
fn random_csv_like_text_never_panics() {
    const TOKENS: &[&str] = &[
        "x",
        "y",
        "lat",
        "lon",
        "date",
        "type",
        "count",
        ",",
        ",",
        ";",
        ";",
        "\t",
        "\"",
        "\"\"",
        "\n",
        "\n",
        "\r\n",
        "\r",
        "1",
        "12",
        "-3",
        "4.5",
        "6,7",
        "1e999",
        "NaN",
        " ",
        "",
        "2025-03-04",
        "31/04/2025",
        "T10:00",
        "+01:00",
        "Z",
        "é",
        "\u{FEFF}",
        "{",
        "}",
        "[",
        "]",
        ":",
        "\"type\"",
        "\"Point\"",
        "\"coordinates\"",
        "\"features\"",
        "\"Feature\"",
        "\"FeatureCollection\"",
        "\"Polygon\"",
        "null",
    ];
    const HEADERS: &[&str] = &["x", "y", "lat", "lon", "date", "type", "count", "id"];
    const CELLS: &[&str] = &[
        "1",
        "-2.5",
        "4,5",
        "",
        " ",
        "NaN",
        "1e999",
        "2025-03-04",
        "31/04/2025",
        "a",
        "\"q,\"\"\"",
    ];
    const DELIMS: &[&str] = &[",", ";", "\t"];
    let mut rng = rng_from_seed(7);
    let mut read_ok = 0;
    for i in 0..3000 {
        let mut text = String::new();
        if i % 2 == 0 {
            // Token soup.
            for _ in 0..rng.random_range(0..80) {
                text.push_str(TOKENS[rng.random_range(0..TOKENS.len())]);
            }
        } else {
            // A table shape: header then rows, with random cells and a few stray tokens.
            let d = DELIMS[rng.random_range(0..DELIMS.len())];
            let width = rng.random_range(1..5);
            let cols: Vec<&str> = (0..width)
                .map(|_| HEADERS[rng.random_range(0..HEADERS.len())])
                .collect();
            text.push_str(&cols.join(d));
            for _ in 0..rng.random_range(0..8) {
                text.push('\n');
                let w = width + rng.random_range(0..3) - 1;
                let cells: Vec<&str> = (0..w)
                    .map(|_| CELLS[rng.random_range(0..CELLS.len())])
                    .collect();
                text.push_str(&cells.join(d));
                if rng.random_range(0..10) == 0 {
                    text.push_str(TOKENS[rng.random_range(0..TOKENS.len())]);
                }
            }
        }
        let opts = random_options(&mut rng);
        exercise(text.as_bytes(), &opts);
        read_ok += read_points(text.as_bytes(), &opts).is_ok() as u32;
    }
    // The generator must reach the row-level code, not only file-level errors.
    assert!(
        read_ok > 50,
        "only {read_ok} random texts were read as tables"
    );
}

#[test]
fn mutated_valid_files_never_panic() {
    let seeds: [&[u8]; 4] = [
        b"lat;lon;date;type;count\n45,5;7,25;04/03/2025;a;1\n46;8;2025-03-04T10:00Z;b;2\n",
        b"x,y,note\n1,2,\"a \"\"b\"\" c\"\n3,4,\"multi\nline\"\n",
        br#"{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"MultiPoint","coordinates":[[1,2],[3,4]]},"properties":{"date":"2025-03-04","n":2}}]}"#,
        br#"{"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,0]],[[0.2,0.2],[0.3,0.2],[0.3,0.3]]]}}"#,
    ];
    let mut rng = rng_from_seed(42);
    for i in 0..3000 {
        let mut v = seeds[i % seeds.len()].to_vec();
        for _ in 0..rng.random_range(1..6) {
            let at = rng.random_range(0..v.len().max(1));
            match rng.random_range(0..3) {
                0 if !v.is_empty() => {
                    v.remove(at.min(v.len() - 1));
                }
                1 => v.insert(at.min(v.len()), rng.random::<u8>()),
                _ if !v.is_empty() => {
                    let j = at.min(v.len() - 1);
                    v[j] = b"0123456789,;\"\n{}[]:-.eE"[rng.random_range(0..23)];
                }
                _ => {}
            }
        }
        let opts = random_options(&mut rng);
        exercise(&v, &opts);
    }
}
