//! Malformed and awkward input files: each must give the exact rejection
//! (row, column, reason, value) or file-level error expected, never a panic.
//!
//! Row numbers are 1-based as a spreadsheet shows them (header = row 1).
//! Expected day numbers are derived by hand in comments (1970-01-01 = day 0;
//! 2025-03-04 = day 20151, the value Python's `datetime` gives in
//! tests/reference/time_reference.json).

use cloister::input::{
    read_area, read_points, ColumnMapping, CoordKind, DateOrder, LengthUnit, RawLayer, ReadOptions,
    RejectReason, SourceFormat,
};
use cloister::rng::rng_from_seed;
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
    // "x,y,name\n1,2,M" is 14 bytes; 0xFC (ü in Latin-1) is byte 14.
    let e = fail(b"x,y,name\n1,2,M\xFCller\n");
    assert_eq!(e.kind, InputErrorKind::NotUtf8 { byte_offset: 14 });
    assert!(e.to_string().contains("offset 14"), "{e}");
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
            r(4, "count", RejectReason::BadWeight, "many"),
        ]
    );
    assert_eq!(l.row, vec![5]);
    assert_eq!(l.weight, Some(vec![3.0]));
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
    let l = read("x,y,date\n,2,2025-03-04\n1, ,2025-03-04\n1,2,\n1,2\n1,2,2025-03-04,extra\n");
    check_invariants(&l);
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "x", RejectReason::Empty, ""),
            r(3, "y", RejectReason::Empty, " "),
            r(4, "date", RejectReason::Empty, ""),
            (5, None, RejectReason::TooFewFields, "1,2".to_string()),
        ]
    );
    assert_eq!(l.row, vec![6]);
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
    assert_eq!(
        rejections(&l),
        vec![
            r(2, "date", RejectReason::BadTime, "2025-02-29"),
            r(3, "date", RejectReason::BadTime, "31/04/2025"),
            r(5, "date", RejectReason::BadTime, "13/13/2025"),
            r(6, "date", RejectReason::BadTime, "2025-03-04 25:00"),
            r(7, "date", RejectReason::BadTime, "soon"),
        ]
    );
    // 2024 is a leap year: 2024-02-29 is day 19782 (Python datetime reference).
    assert_eq!(l.time, Some(vec![19782.0]));
}

#[test]
fn month_first_dates() {
    let opts = ReadOptions {
        date_order: DateOrder::MonthDayYear,
        ..Default::default()
    };
    let l = read_points(b"x,y,date\n1,1,03/04/2025\n1,1,31/04/2025\n", &opts).unwrap();
    assert_eq!(l.time, Some(vec![MARCH_4_2025]));
    assert_eq!(
        rejections(&l),
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
    let l = read("x,y,weight,date\n1,\"12,5\",1,2025-01-01\n1,1,-3,2025-01-01\n1,1,1,2025-02-30\n1,1,1,\n1,1\n");
    let msgs: Vec<String> = l.rejections.iter().map(|r| r.to_string()).collect();
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
            r(3, "date", RejectReason::BadTime, "31/04/2025"),
            r(4, "geometry", RejectReason::BadGeometry, "Polygon"),
        ]
    );
    assert_eq!(l.time, Some(vec![MARCH_4_2025]));
    assert_eq!(l.format, SourceFormat::GeoJson);
}

// -------------------------------------------------------- never a panic

fn random_options(rng: &mut cloister::rng::Rng) -> ReadOptions {
    let date_order = match rng.random_range(0..3) {
        0 => DateOrder::DayMonthYear,
        1 => DateOrder::MonthDayYear,
        _ => DateOrder::YearMonthDay,
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
