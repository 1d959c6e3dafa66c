//! Checks of the committed demo data in `demo-data/`.
//!
//! * The generator (`examples/make_demo.rs`, included below as a module) must
//!   reproduce the committed files byte for byte.
//! * The files must say what `demo-data/README.md` and `planted-truth.json`
//!   say: headers, row counts, formats, every point inside the town and outside
//!   the lake, the documented faulty rows and nothing else.
//! * Containment, areas and distances are computed here with code of this test
//!   (winding number, shoelace) and compared with shapely / pyproj values written
//!   by `tests/reference/demo_data_check.py` into `demo_data_check.json`.

#[allow(dead_code)]
#[path = "../examples/make_demo.rs"]
mod make_demo;

use std::collections::HashSet;
use std::f64::consts::PI;
use std::fs;
use std::path::{Path, PathBuf};

use serde_json::Value;

const FILES: [&str; 8] = [
    "README.md",
    "cases-projected.csv",
    "cases-with-problems.csv",
    "cases.csv",
    "planted-truth.json",
    "population-blocks.csv",
    "population.csv",
    "town-boundary.geojson",
];

/// The faulty rows documented in demo-data/README.md (header = row 1).
const DOCUMENTED_BAD_ROWS: [(usize, Fault); 12] = [
    (4, Fault::Longitude),
    (7, Fault::Latitude),
    (9, Fault::Latitude),
    (12, Fault::Longitude),
    (15, Fault::Longitude),
    (18, Fault::Date),
    (21, Fault::Date),
    (24, Fault::Date),
    (27, Fault::FieldCount),
    (30, Fault::Count),
    (34, Fault::OutsideTown),
    (38, Fault::InLake),
];

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Fault {
    FieldCount,
    Longitude,
    Latitude,
    Date,
    Category,
    Count,
    OutsideTown,
    InLake,
}

fn data_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data")
}

fn read(name: &str) -> String {
    fs::read_to_string(data_dir().join(name)).unwrap_or_else(|e| panic!("reading {name}: {e}"))
}

fn json_file(path: &Path) -> Value {
    let text = fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn truth() -> Value {
    json_file(&data_dir().join("planted-truth.json"))
}

fn reference() -> Value {
    json_file(&Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/demo_data_check.json"))
}

// ------------------------------------------------------------ test geometry

type Ring = Vec<(f64, f64)>;

struct Town {
    name: String,
    /// Rings as written (closed: last vertex repeats the first), lon/lat.
    outer: Ring,
    lake: Ring,
}

fn town() -> Town {
    let gj: geojson::GeoJson = read("town-boundary.geojson")
        .parse()
        .expect("valid GeoJSON");
    let fc = match gj {
        geojson::GeoJson::FeatureCollection(fc) => fc,
        other => panic!("expected a FeatureCollection, got {other:?}"),
    };
    assert_eq!(fc.features.len(), 1, "one feature");
    let f = &fc.features[0];
    let name = f
        .property("name")
        .and_then(|v| v.as_str())
        .expect("a name property")
        .to_string();
    let rings = match &f.geometry.as_ref().expect("a geometry").value {
        geojson::GeometryValue::Polygon { coordinates } => coordinates.clone(),
        other => panic!("expected a Polygon, got {other:?}"),
    };
    assert_eq!(rings.len(), 2, "outer ring and exactly one hole");
    let conv = |r: &Vec<geojson::Position>| -> Ring {
        r.iter()
            .map(|p| {
                assert_eq!(p.len(), 2, "2-D positions");
                (p[0], p[1])
            })
            .collect()
    };
    Town {
        name,
        outer: conv(&rings[0]),
        lake: conv(&rings[1]),
    }
}

/// Winding number of a closed ring around p (non-zero = inside).
fn winding(p: (f64, f64), ring: &[(f64, f64)]) -> i32 {
    let mut w = 0;
    for e in ring.windows(2) {
        let (a, b) = (e[0], e[1]);
        let cross = (b.0 - a.0) * (p.1 - a.1) - (p.0 - a.0) * (b.1 - a.1);
        if a.1 <= p.1 {
            if b.1 > p.1 && cross > 0.0 {
                w += 1;
            }
        } else if b.1 <= p.1 && cross < 0.0 {
            w -= 1;
        }
    }
    w
}

fn shoelace(ring: &[(f64, f64)]) -> f64 {
    ring.windows(2)
        .map(|e| e[0].0 * e[1].1 - e[1].0 * e[0].1)
        .sum::<f64>()
        / 2.0
}

/// The documented local grid (README "Coordinates"), in metres with false origin.
fn grid(lon: f64, lat: f64) -> (f64, f64) {
    let k = PI / 180.0 * 6_371_008.8;
    (
        20_000.0 + (lon + 32.0) * k * (-41.5f64).to_radians().cos(),
        20_000.0 + (lat + 41.5) * k,
    )
}

fn grid_ring(r: &[(f64, f64)]) -> Ring {
    r.iter().map(|&(lon, lat)| grid(lon, lat)).collect()
}

// ------------------------------------------------------------ test parsing

struct Case {
    id: String,
    lon: f64,
    lat: f64,
    lon_s: String,
    lat_s: String,
    day: u32,
    date: String,
    category: String,
    count: u32,
}

const MONTH_DAYS: [u32; 12] = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];

/// Day of 2025 (0 = 1 January) from year, month, day; None if no such day in 2025.
fn day_2025(y: u32, m: u32, d: u32) -> Option<u32> {
    if y != 2025 || !(1..=12).contains(&m) || d == 0 || d > MONTH_DAYS[(m - 1) as usize] {
        return None;
    }
    Some(MONTH_DAYS[..(m - 1) as usize].iter().sum::<u32>() + d - 1)
}

fn parse_iso(s: &str) -> Option<u32> {
    let b = s.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return None;
    }
    day_2025(
        s[0..4].parse().ok()?,
        s[5..7].parse().ok()?,
        s[8..10].parse().ok()?,
    )
}

fn parse_dmy(s: &str) -> Option<u32> {
    let b = s.as_bytes();
    if b.len() != 10 || b[2] != b'/' || b[5] != b'/' {
        return None;
    }
    day_2025(
        s[6..10].parse().ok()?,
        s[3..5].parse().ok()?,
        s[0..2].parse().ok()?,
    )
}

fn has_six_decimals(s: &str) -> bool {
    match s.split_once('.') {
        Some((int, frac)) => {
            frac.len() == 6
                && frac.bytes().all(|c| c.is_ascii_digit())
                && int
                    .trim_start_matches('-')
                    .bytes()
                    .all(|c| c.is_ascii_digit())
        }
        None => false,
    }
}

fn cases() -> Vec<Case> {
    let text = read("cases.csv");
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("case_id,longitude,latitude,onset_date,category,count")
    );
    lines
        .enumerate()
        .map(|(k, line)| {
            let f: Vec<&str> = line.split(',').collect();
            assert_eq!(f.len(), 6, "cases.csv row {}: {line}", k + 2);
            Case {
                id: f[0].to_string(),
                lon: f[1].parse().unwrap(),
                lat: f[2].parse().unwrap(),
                lon_s: f[1].to_string(),
                lat_s: f[2].to_string(),
                day: parse_iso(f[3]).unwrap_or_else(|| panic!("row {}: date {}", k + 2, f[3])),
                date: f[3].to_string(),
                category: f[4].to_string(),
                count: f[5].parse().unwrap(),
            }
        })
        .collect()
}

fn ids(v: &Value) -> Vec<String> {
    v.as_array()
        .expect("an id list")
        .iter()
        .map(|x| x.as_str().expect("id").to_string())
        .collect()
}

// ------------------------------------------------------------------- tests

#[test]
fn generator_reproduces_committed_files() {
    let out = Path::new(env!("CARGO_TARGET_TMPDIR")).join("demo-regen");
    let _ = fs::remove_dir_all(&out);
    make_demo::generate(&out).expect("generator runs");
    let mut written: Vec<String> = fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    written.sort();
    assert_eq!(written, FILES);
    for name in FILES {
        let fresh = fs::read(out.join(name)).unwrap();
        let committed = fs::read(data_dir().join(name)).unwrap();
        assert!(
            fresh == committed,
            "{name}: regenerated file differs from the committed one (rerun make_demo)"
        );
    }
}

#[test]
fn boundary_is_one_polygon_with_one_hole() {
    let t = town();
    let r = reference();
    assert_eq!(t.name, "Harrowmere (invented)");
    for ring in [&t.outer, &t.lake] {
        assert_eq!(ring.first(), ring.last(), "closed ring");
    }
    assert_eq!(
        t.outer.len() - 1,
        r["outer_vertices_without_closing"].as_u64().unwrap() as usize
    );
    assert_eq!(
        t.lake.len() - 1,
        r["lake_vertices_without_closing"].as_u64().unwrap() as usize
    );
    assert!(
        (40..=80).contains(&(t.outer.len() - 1)),
        "40-80 outline vertices"
    );
    // RFC 7946 §3.1.6: exterior counter-clockwise, holes clockwise.
    assert!(shoelace(&t.outer) > 0.0 && r["outer_is_ccw"] == true);
    assert!(shoelace(&t.lake) < 0.0 && r["lake_is_ccw"] == false);
    assert!(r["polygon_is_valid"] == true && r["lake_within_outer"] == true);
    for &p in &t.lake {
        assert_eq!(winding(p, &t.outer), 1, "lake vertex {p:?} inside the town");
    }
    // About 12 x 9 km (brief), extent in the local grid.
    let g = grid_ring(&t.outer);
    let (xs, ys): (Vec<f64>, Vec<f64>) = g.iter().cloned().unzip();
    let span = |v: &[f64]| {
        v.iter().cloned().fold(f64::MIN, f64::max) - v.iter().cloned().fold(f64::MAX, f64::min)
    };
    let (ew, ns) = (span(&xs) / 1000.0, span(&ys) / 1000.0);
    assert!(
        (11.0..13.0).contains(&ew) && (8.0..10.0).contains(&ns),
        "{ew} x {ns} km"
    );
    let w = &truth()["window"];
    assert!((w["extent_east_west_km"].as_f64().unwrap() - ew).abs() < 1e-3);
    assert!((w["extent_north_south_km"].as_f64().unwrap() - ns).abs() < 1e-3);
}

#[test]
fn area_agrees_with_shapely_and_the_readme() {
    let t = town();
    let outer = shoelace(&grid_ring(&t.outer)) / 1e6;
    let lake = -shoelace(&grid_ring(&t.lake)) / 1e6;
    let r = &reference()["grid_area_km2"];
    // shapely planar area on the same grid coordinates (written with 6 decimals).
    assert!(
        (outer - r["outer"].as_f64().unwrap()).abs() < 2e-6,
        "outer {outer}"
    );
    assert!(
        (lake - r["lake"].as_f64().unwrap()).abs() < 2e-6,
        "lake {lake}"
    );
    assert!((outer - lake - r["net"].as_f64().unwrap()).abs() < 2e-6);
    let w = &truth()["window"];
    assert!((w["net_area_km2"].as_f64().unwrap() - (outer - lake)).abs() < 1e-3);
    // The equirectangular grid against the WGS84 geodesic area (pyproj.Geod, Karney 2013):
    // the README promises "a few tenths of a percent".
    let geodesic = reference()["geodesic_net_area_km2"].as_f64().unwrap();
    let rel = ((outer - lake) - geodesic).abs() / geodesic;
    assert!(rel < 0.005, "grid vs geodesic area differ by {rel}");
}

#[test]
fn cases_file_has_the_documented_shape() {
    let c = cases();
    assert_eq!(c.len(), 1500);
    let unique: HashSet<&str> = c.iter().map(|e| e.id.as_str()).collect();
    assert_eq!(unique.len(), c.len(), "unique case ids");
    for (k, e) in c.iter().enumerate() {
        assert_eq!(e.id, format!("HM-{:04}", k + 1));
        assert!(
            has_six_decimals(&e.lon_s) && has_six_decimals(&e.lat_s),
            "{}",
            e.id
        );
        assert!(e.category == "respiratory" || e.category == "enteric");
        assert!((1..=3).contains(&e.count));
        if k > 0 {
            assert!(c[k - 1].day <= e.day, "rows sorted by onset date");
        }
    }
    assert_eq!(c.first().unwrap().date.get(..4), Some("2025"));
    let ones = c.iter().filter(|e| e.count == 1).count();
    assert!(
        ones as f64 > 0.75 * c.len() as f64,
        "count mostly 1: {ones}"
    );
    let total: u32 = c.iter().map(|e| e.count).sum();
    assert_eq!(
        Some(total as u64),
        truth()["cases"]["count_column_total"].as_u64()
    );
}

#[test]
fn every_point_is_inside_the_town_and_outside_the_lake() {
    let t = town();
    let c = cases();
    for e in &c {
        let p = (e.lon, e.lat);
        assert_eq!(winding(p, &t.outer), 1, "{} outside the town", e.id);
        assert_eq!(winding(p, &t.lake), 0, "{} in the lake", e.id);
    }
    let pop = read("population.csv");
    let mut lines = pop.lines();
    assert_eq!(lines.next(), Some("longitude,latitude"));
    let mut n = 0;
    for line in lines {
        let (lon, lat) = line.split_once(',').unwrap();
        assert!(has_six_decimals(lon) && has_six_decimals(lat));
        let p = (lon.parse().unwrap(), lat.parse().unwrap());
        assert_eq!(
            winding(p, &t.outer),
            1,
            "population point {p:?} outside the town"
        );
        assert_eq!(winding(p, &t.lake), 0, "population point {p:?} in the lake");
        n += 1;
    }
    assert_eq!(n, 3000);
    // shapely (GEOS) agrees.
    let r = reference();
    for (key, total) in [("cases", 1500), ("population", 3000)] {
        assert_eq!(r[key]["inside"], total);
        assert_eq!(r[key]["in_lake"], 0);
        assert_eq!(r[key]["outside_town"], 0);
        // Generated with a 10 m margin from both edges (README).
        assert!(r[key]["min_distance_to_any_edge_m"].as_f64().unwrap() >= 9.9);
    }
}

#[test]
fn population_blocks_are_counts_inside_the_town() {
    // demo-data/README.md: header `longitude,latitude,residents`, one row per
    // block, 6-decimal lon/lat inside the town and outside the lake, whole
    // residents above 0 summing to the total in planted-truth.json.
    let t = town();
    let text = read("population-blocks.csv");
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("longitude,latitude,residents"));
    let (mut n, mut total) = (0u64, 0u64);
    let mut seen = HashSet::new();
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        assert_eq!(f.len(), 3, "{line}");
        assert!(has_six_decimals(f[0]) && has_six_decimals(f[1]), "{line}");
        let p = (f[0].parse().unwrap(), f[1].parse().unwrap());
        assert_eq!(winding(p, &t.outer), 1, "block {p:?} outside the town");
        assert_eq!(winding(p, &t.lake), 0, "block {p:?} in the lake");
        assert!(seen.insert(line.to_string()), "block {line} twice");
        let r: u64 = f[2].parse().unwrap();
        assert!(r > 0);
        total += r;
        n += 1;
    }
    let truth = truth();
    assert_eq!(Some(n), truth["population_blocks"]["n"].as_u64());
    assert_eq!(
        Some(total),
        truth["population_blocks"]["residents"].as_u64()
    );
    assert_eq!(total, 24_000);
    // The reader takes `residents` as the count of each point.
    let layer = cloister::input::read_points(text.as_bytes(), &Default::default()).unwrap();
    let s = cloister::study::Study::build(
        &layer,
        None,
        Some(&layer),
        cloister::study::AreaFallback::ConvexHull,
    )
    .unwrap();
    let w = s.controls.as_ref().unwrap().weight().unwrap();
    assert_eq!(w.iter().sum::<f64>(), total as f64);
}

#[test]
fn projected_file_is_the_same_events_in_the_local_grid() {
    let bytes = fs::read(data_dir().join("cases-projected.csv")).unwrap();
    assert!(
        bytes.starts_with(&[0xEF, 0xBB, 0xBF]),
        "UTF-8 byte-order mark"
    );
    let text = std::str::from_utf8(&bytes[3..]).unwrap();
    assert!(text.ends_with("\r\n"));
    let lines: Vec<&str> = text.split("\r\n").filter(|l| !l.is_empty()).collect();
    assert_eq!(lines[0], "case_id;x;y;onset_date;category;count");
    let c = cases();
    assert_eq!(lines.len() - 1, c.len());
    for (line, e) in lines[1..].iter().zip(&c) {
        let f: Vec<&str> = line.split(';').collect();
        assert_eq!(f.len(), 6, "{line}");
        assert_eq!(f[0], e.id);
        let num = |s: &str| -> f64 {
            assert!(s.contains(',') && !s.contains('.'), "decimal comma in {s}");
            s.replace(',', ".").parse().unwrap()
        };
        let (x, y) = grid(e.lon, e.lat);
        // Written with 2 decimals: within half a centimetre.
        assert!(
            (num(f[1]) - x).abs() <= 0.005 + 1e-9,
            "{}: x {} vs {x}",
            e.id,
            f[1]
        );
        assert!(
            (num(f[2]) - y).abs() <= 0.005 + 1e-9,
            "{}: y {} vs {y}",
            e.id,
            f[2]
        );
        assert_eq!(parse_dmy(f[3]), Some(e.day), "{}: date {}", e.id, f[3]);
        assert_eq!(f[4], e.category);
        assert_eq!(f[5], e.count.to_string());
    }
}

/// An independent validator for the problems file: the first fault of each row.
fn fault(fields: &[&str], t: &Town) -> Option<Fault> {
    if fields.len() != 6 {
        return Some(Fault::FieldCount);
    }
    let lon: Option<f64> = fields[1].parse().ok().filter(|v: &f64| v.is_finite());
    let lat: Option<f64> = fields[2].parse().ok().filter(|v: &f64| v.is_finite());
    let Some(lon) = lon.filter(|v| v.abs() <= 180.0) else {
        return Some(Fault::Longitude);
    };
    let Some(lat) = lat.filter(|v| v.abs() <= 90.0) else {
        return Some(Fault::Latitude);
    };
    if parse_iso(fields[3]).is_none() {
        return Some(Fault::Date);
    }
    if fields[4] != "respiratory" && fields[4] != "enteric" {
        return Some(Fault::Category);
    }
    if fields[5].parse::<u32>().map_or(true, |n| n == 0) {
        return Some(Fault::Count);
    }
    if winding((lon, lat), &t.outer) == 0 {
        return Some(Fault::OutsideTown);
    }
    if winding((lon, lat), &t.lake) != 0 {
        return Some(Fault::InLake);
    }
    None
}

#[test]
fn problems_file_has_exactly_the_documented_faults() {
    let t = town();
    let text = read("cases-with-problems.csv");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(
        lines[0],
        "case_id,longitude,latitude,onset_date,category,count"
    );
    assert_eq!(lines.len(), 41, "header + 40 rows");
    let cases_text = read("cases.csv");
    let case_lines: Vec<&str> = cases_text.lines().collect();
    let mut found = Vec::new();
    for (k, line) in lines.iter().enumerate().skip(1) {
        let row = k + 1;
        let fields: Vec<&str> = line.split(',').collect();
        match fault(&fields, &t) {
            Some(f) => found.push((row, f)),
            // Good rows are copied unchanged from cases.csv.
            None => assert_eq!(*line, case_lines[k], "row {row}"),
        }
    }
    assert_eq!(found, DOCUMENTED_BAD_ROWS);

    // planted-truth.json lists the same rows.
    let listed: Vec<u64> = truth()["problems"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["row"].as_u64().unwrap())
        .collect();
    let documented: Vec<u64> = DOCUMENTED_BAD_ROWS.iter().map(|&(r, _)| r as u64).collect();
    assert_eq!(listed, documented);

    // shapely finds the same two study-area rejections.
    let shapely_rows: Vec<(u64, String)> = reference()["problems_outside_study_area"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            (
                p["row"].as_u64().unwrap(),
                p["where"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert_eq!(
        shapely_rows,
        vec![(34, "outside town".to_string()), (38, "lake".to_string())]
    );
}

#[test]
fn planted_truth_matches_the_cases_file() {
    let c = cases();
    let by_id: std::collections::HashMap<&str, &Case> =
        c.iter().map(|e| (e.id.as_str(), e)).collect();
    let tr = truth();
    let g = |e: &Case| grid(e.lon, e.lat);
    let dist = |a: &Case, b: &Case| {
        let (p, q) = (g(a), g(b));
        ((p.0 - q.0).powi(2) + (p.1 - q.1).powi(2)).sqrt()
    };

    // The components partition the file.
    let mut all: Vec<String> = ids(&tr["background"]["case_ids"]);
    assert_eq!(all.len(), 1223);
    let expected = [("A", 120, 250.0), ("B", 80, 400.0), ("C", 60, 200.0)];
    for (cl, &(label, n, size)) in tr["clusters"].as_array().unwrap().iter().zip(&expected) {
        assert_eq!(cl["label"], label);
        let members = ids(&cl["case_ids"]);
        assert_eq!(members.len(), n);
        let first = parse_iso(cl["onset_window"]["first"].as_str().unwrap()).unwrap();
        let last = parse_iso(cl["onset_window"]["last"].as_str().unwrap()).unwrap();
        assert!(
            (14..=35).contains(&(last - first + 1)),
            "a window of a few weeks"
        );
        let centre = (
            cl["centre_grid_m"]["x"].as_f64().unwrap(),
            cl["centre_grid_m"]["y"].as_f64().unwrap(),
        );
        let mut r2 = 0.0;
        let mut resp = 0;
        for id in &members {
            let e = by_id[id.as_str()];
            assert!(
                (first..=last).contains(&e.day),
                "{id} outside its cluster window"
            );
            let p = g(e);
            let d2 = (p.0 - centre.0).powi(2) + (p.1 - centre.1).powi(2);
            if label == "B" {
                // Uniform disc of radius 400 m (+ rounding of the written coordinates).
                assert!(d2.sqrt() <= size + 0.2, "{id} outside the disc");
            }
            r2 += d2;
            resp += (e.category == "respiratory") as u64;
        }
        assert_eq!(Some(resp), cl["respiratory"].as_u64());
        if label == "A" {
            // Gaussian with sigma per axis: E[d^2] = 2 sigma^2 (standard result for an
            // isotropic bivariate normal). Loose bound: with n = 120 the standard error of
            // the RMS is about 4.6 %, so 25 % is more than 5 standard errors.
            let rms = (r2 / n as f64).sqrt();
            let want = size * 2f64.sqrt();
            assert!((rms / want - 1.0).abs() < 0.25, "A: rms {rms} vs {want}");
        }
        all.extend(members);
    }
    let nr = tr["near_repeats"]["pairs"].as_array().unwrap();
    let co = tr["coincident"]["pairs"].as_array().unwrap();
    assert_eq!((nr.len(), co.len()), (12, 5));
    for p in nr.iter().chain(co) {
        all.push(p["added"].as_str().unwrap().to_string());
    }
    all.sort();
    let mut in_file: Vec<String> = c.iter().map(|e| e.id.clone()).collect();
    in_file.sort();
    assert_eq!(all, in_file, "components partition the cases");

    // Near repeats: within 100 m and 7 days; coincident: same text, 30+ days apart.
    for p in nr {
        let (a, b) = (
            by_id[p["source"].as_str().unwrap()],
            by_id[p["added"].as_str().unwrap()],
        );
        assert!(dist(a, b) <= 100.0 && a.day.abs_diff(b.day) <= 7);
        assert_eq!(a.category, b.category);
    }
    for p in co {
        let (a, b) = (
            by_id[p["source"].as_str().unwrap()],
            by_id[p["added"].as_str().unwrap()],
        );
        assert_eq!((&a.lon_s, &a.lat_s), (&b.lon_s, &b.lat_s));
        assert!(a.day.abs_diff(b.day) >= 30);
    }

    // Pair counts recomputed from the file.
    let (mut close, mut same_place) = (0u64, 0u64);
    for i in 0..c.len() {
        for j in i + 1..c.len() {
            if c[i].lon_s == c[j].lon_s && c[i].lat_s == c[j].lat_s {
                same_place += 1;
            }
            if c[i].day.abs_diff(c[j].day) <= 7 && dist(&c[i], &c[j]) <= 100.0 {
                close += 1;
            }
        }
    }
    assert_eq!(
        Some(close),
        tr["pairs_within_100m_and_7days"]["total"].as_u64()
    );
    assert_eq!(Some(same_place), tr["exactly_coincident_pairs"].as_u64());
    assert_eq!(same_place, 5);

    // Grid distances against WGS84 geodesics (pyproj.Geod; Karney 2013) for the planted
    // pairs: under 100 m the equirectangular grid is off by well under a metre.
    for p in reference()["planted_pair_distances"].as_array().unwrap() {
        let (a, b) = (
            by_id[p["source"].as_str().unwrap()],
            by_id[p["added"].as_str().unwrap()],
        );
        let mine = dist(a, b);
        assert!((mine - p["grid_m"].as_f64().unwrap()).abs() < 1e-3);
        assert!(
            (mine - p["geodesic_m"].as_f64().unwrap()).abs() < 0.5,
            "{p}"
        );
    }
}
