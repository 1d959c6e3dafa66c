//! Writes the invented "Harrowmere" demo scenario into a folder.
//!
//! ```text
//! cargo run --release --example make_demo -- demo-data
//! ```
//!
//! Everything this program writes is invented: the town, its lake, the events,
//! the population. The town sits in open ocean on purpose, so no real address
//! can be read into the data. The files and the planted truth they contain are
//! described in the `README.md` that this program writes next to them.
//!
//! The generator is self-contained on purpose. Apart from the seeded generator
//! in `cloister::rng` it uses none of the analysis code (its own
//! point-in-polygon, date arithmetic and projection live below), so the demo
//! files can be used to check that analysis code from the outside.
//!
//! Determinism: one fixed seed, sub-streams per component, no clock, no hash
//! map iteration. Running it twice gives identical bytes
//! (`tests/demo_files.rs` regenerates the files and compares them).

use std::f64::consts::PI;
use std::fmt::Write as _;
use std::fs;
use std::io;
use std::path::Path;

use cloister::rng::{rng_from_seed, Rng};
use rand::RngExt;
use serde_json::{json, Value};

/// Master seed. Component `k` draws from `rng_from_seed(SEED + k)`.
pub const SEED: u64 = 20_250_101;

/// Centre of the invented town (and origin of the local grid), WGS84 degrees.
pub const CENTRE_LON: f64 = -32.0;
/// Centre latitude, WGS84 degrees.
pub const CENTRE_LAT: f64 = -41.5;
/// Sphere radius used by the local grid (mean Earth radius, metres).
pub const EARTH_RADIUS_M: f64 = 6_371_008.8;
/// False easting of the invented local grid, metres.
pub const FALSE_EASTING: f64 = 20_000.0;
/// False northing of the invented local grid, metres.
pub const FALSE_NORTHING: f64 = 20_000.0;

/// Every generated event keeps at least this distance from the town boundary
/// and the lake shore, so rounding or a different projection cannot move it out.
const MARGIN_M: f64 = 10.0;

const TOWN_NAME: &str = "Harrowmere (invented)";

// Sub-stream offsets.
const S_OUTLINE: u64 = 1;
const S_LAKE: u64 = 2;
const S_BACKGROUND: u64 = 3;
const S_CLUSTER: u64 = 4; // 4, 5, 6 for clusters A, B, C
const S_PICK_SOURCES: u64 = 7;
const S_NEAR_REPEAT: u64 = 8;
const S_COINCIDENT: u64 = 9;
const S_ORDER: u64 = 10;
const S_POPULATION: u64 = 11;
const S_BLOCKS: u64 = 12;

const N_BACKGROUND: usize = 1_223;
const N_NEAR_REPEAT: usize = 12;
const N_COINCIDENT: usize = 5;
const N_POPULATION: usize = 3_000;
/// Residents drawn for `population-blocks.csv`, summed into blocks.
const N_RESIDENTS: usize = 24_000;
/// Side of the square blocks, metres.
const BLOCK_M: f64 = 500.0;

/// Share of "respiratory" among background events (the rest are "enteric").
const P_RESP_BACKGROUND: f64 = 0.55;

// Background intensity, relative (maximum 1.0), see `relative_intensity`.
const INTENSITY_FLOOR: f64 = 0.25;
const INTENSITY_GRADIENT: f64 = 0.15;
const GRADIENT_Y0: f64 = -5_500.0;
const GRADIENT_SPAN: f64 = 11_000.0;
const OLD_TOWN_WEIGHT: f64 = 0.6;
const OLD_TOWN: (f64, f64) = (-1_800.0, 900.0);
const OLD_TOWN_SIGMA: f64 = 1_400.0;

/// Window vertices and events live in local metres east/north of the centre.
type Xy = (f64, f64);

#[derive(Clone, Copy)]
enum Shape {
    /// Isotropic bivariate normal offsets with this standard deviation per axis.
    Gaussian { sigma_m: f64 },
    /// Uniform in a disc of this radius.
    Disc { radius_m: f64 },
}

struct ClusterSpec {
    label: &'static str,
    centre: Xy,
    shape: Shape,
    n: usize,
    /// First onset day as (month, day) in 2025.
    start: (u32, u32),
    /// Number of days in the window; onset days are uniform over them.
    days: u32,
    p_respiratory: f64,
}

const CLUSTERS: [ClusterSpec; 3] = [
    ClusterSpec {
        label: "A",
        centre: (-1_200.0, 1_500.0),
        shape: Shape::Gaussian { sigma_m: 250.0 },
        n: 120,
        start: (3, 3),
        days: 28,
        p_respiratory: 0.9,
    },
    ClusterSpec {
        label: "B",
        centre: (3_200.0, 2_200.0),
        shape: Shape::Disc { radius_m: 400.0 },
        n: 80,
        start: (7, 14),
        days: 21,
        p_respiratory: 0.15,
    },
    ClusterSpec {
        label: "C",
        centre: (1_250.0, -1_600.0),
        shape: Shape::Gaussian { sigma_m: 200.0 },
        n: 60,
        start: (10, 20),
        days: 21,
        p_respiratory: 0.5,
    },
];

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Part {
    Background,
    Cluster(usize),
    NearRepeat,
    Coincident,
}

#[derive(Clone)]
struct Event {
    part: Part,
    lon: String,
    lat: String,
    /// Local metres computed from the *written* longitude and latitude.
    x: f64,
    y: f64,
    /// Day of 2025, 0 = 1 January.
    day: u32,
    category: &'static str,
    count: u32,
    id: String,
}

// ---------------------------------------------------------------- projection

fn cos_lat0() -> f64 {
    (CENTRE_LAT * PI / 180.0).cos()
}

/// Local equirectangular metres (east, north of the centre) from lon/lat.
pub fn to_local(lon: f64, lat: f64) -> Xy {
    let k = PI / 180.0 * EARTH_RADIUS_M;
    ((lon - CENTRE_LON) * k * cos_lat0(), (lat - CENTRE_LAT) * k)
}

fn to_lonlat(p: Xy) -> Xy {
    let k = PI / 180.0 * EARTH_RADIUS_M;
    (CENTRE_LON + p.0 / (k * cos_lat0()), CENTRE_LAT + p.1 / k)
}

/// Formats with 6 decimals and returns the text and the value a reader will see.
fn write6(v: f64) -> (String, f64) {
    let s = format!("{v:.6}");
    let back = s.parse().unwrap_or(v);
    (s, back)
}

/// Lon/lat text for a local point, and the local point of that text.
fn place(p: Xy) -> (String, String, Xy) {
    let (lon, lat) = to_lonlat(p);
    let (lon_s, lon_w) = write6(lon);
    let (lat_s, lat_w) = write6(lat);
    (lon_s, lat_s, to_local(lon_w, lat_w))
}

fn grid_text(v: f64) -> String {
    format!("{v:.2}").replace('.', ",")
}

// ------------------------------------------------------------------ geometry

fn in_ring(p: Xy, ring: &[Xy]) -> bool {
    let mut inside = false;
    let mut j = ring.len() - 1;
    for i in 0..ring.len() {
        let (xi, yi) = ring[i];
        let (xj, yj) = ring[j];
        if (yi > p.1) != (yj > p.1) && p.0 < (xj - xi) * (p.1 - yi) / (yj - yi) + xi {
            inside = !inside;
        }
        j = i;
    }
    inside
}

fn ring_distance(p: Xy, ring: &[Xy]) -> f64 {
    let mut best = f64::INFINITY;
    let mut j = ring.len() - 1;
    for i in 0..ring.len() {
        let (a, b) = (ring[j], ring[i]);
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let len2 = dx * dx + dy * dy;
        let t = if len2 > 0.0 {
            (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let (qx, qy) = (a.0 + t * dx - p.0, a.1 + t * dy - p.1);
        best = best.min((qx * qx + qy * qy).sqrt());
        j = i;
    }
    best
}

/// Shoelace area, positive for counter-clockwise rings.
fn signed_area(ring: &[Xy]) -> f64 {
    let mut s = 0.0;
    let mut j = ring.len() - 1;
    for i in 0..ring.len() {
        s += ring[j].0 * ring[i].1 - ring[i].0 * ring[j].1;
        j = i;
    }
    s / 2.0
}

struct RingSpec {
    centre: Xy,
    a: f64,
    b: f64,
    rotation: f64,
    n: usize,
    /// (frequency, relative amplitude, phase)
    harmonics: &'static [(f64, f64, f64)],
    /// Relative per-vertex noise, uniform in ±jitter/2.
    jitter: f64,
    /// (angle, relative depth, angular width) of an inward bay.
    bay: Option<(f64, f64, f64)>,
    clockwise: bool,
}

/// A star-shaped ring around `centre`: one vertex per angle step, angles kept
/// increasing, so the ring is simple by construction.
fn make_ring(spec: &RingSpec, rng: &mut Rng) -> Vec<Xy> {
    let mut ring = Vec::with_capacity(spec.n);
    for k in 0..spec.n {
        let shift = 0.6 * (rng.random::<f64>() - 0.5);
        let theta = 2.0 * PI * (k as f64 + shift) / spec.n as f64;
        let phi = theta - spec.rotation;
        let ellipse =
            spec.a * spec.b / ((spec.b * phi.cos()).powi(2) + (spec.a * phi.sin()).powi(2)).sqrt();
        let mut factor = 1.0 + spec.jitter * (rng.random::<f64>() - 0.5);
        for &(f, amp, phase) in spec.harmonics {
            factor += amp * (f * theta + phase).sin();
        }
        if let Some((angle, depth, width)) = spec.bay {
            let d = (theta - angle + PI).rem_euclid(2.0 * PI) - PI;
            factor -= depth * (-d * d / (2.0 * width * width)).exp();
        }
        let r = ellipse * factor;
        ring.push((
            spec.centre.0 + r * theta.cos(),
            spec.centre.1 + r * theta.sin(),
        ));
    }
    if spec.clockwise {
        ring.reverse();
    }
    ring
}

struct Window {
    /// Local metres of the written (rounded) vertices; no closing vertex.
    outer: Vec<Xy>,
    lake: Vec<Xy>,
    outer_text: Vec<(String, String)>,
    lake_text: Vec<(String, String)>,
}

impl Window {
    fn build() -> io::Result<Window> {
        let outer_spec = RingSpec {
            centre: (0.0, 0.0),
            a: 6_000.0,
            b: 4_500.0,
            rotation: 0.0,
            n: 64,
            harmonics: &[(3.0, 0.05, 0.7), (5.0, 0.035, 2.2), (8.0, 0.02, 4.0)],
            jitter: 0.03,
            bay: Some((200.0_f64.to_radians(), 0.15, 0.15)),
            clockwise: false,
        };
        let lake_spec = RingSpec {
            centre: (1_800.0, -1_200.0),
            a: 700.0,
            b: 420.0,
            rotation: 30.0_f64.to_radians(),
            n: 20,
            harmonics: &[(3.0, 0.06, 1.0), (2.0, 0.04, 0.3)],
            jitter: 0.04,
            bay: None,
            clockwise: true,
        };
        let round = |ring: Vec<Xy>| -> (Vec<Xy>, Vec<(String, String)>) {
            ring.into_iter()
                .map(|p| {
                    let (lon, lat, q) = place(p);
                    (q, (lon, lat))
                })
                .unzip()
        };
        let (outer, outer_text) =
            round(make_ring(&outer_spec, &mut rng_from_seed(SEED + S_OUTLINE)));
        let (lake, lake_text) = round(make_ring(&lake_spec, &mut rng_from_seed(SEED + S_LAKE)));
        let w = Window {
            outer,
            lake,
            outer_text,
            lake_text,
        };
        // The lake must sit well inside the town.
        for &p in &w.lake {
            if !in_ring(p, &w.outer) || ring_distance(p, &w.outer) < 500.0 {
                return Err(io::Error::other(
                    "lake vertex too close to the town boundary",
                ));
            }
        }
        if signed_area(&w.outer) <= 0.0 || signed_area(&w.lake) >= 0.0 {
            return Err(io::Error::other("ring orientation is not as documented"));
        }
        Ok(w)
    }

    /// Inside the town, outside the lake, at least `MARGIN_M` from both edges.
    fn usable(&self, p: Xy) -> bool {
        in_ring(p, &self.outer)
            && !in_ring(p, &self.lake)
            && ring_distance(p, &self.outer) >= MARGIN_M
            && ring_distance(p, &self.lake) >= MARGIN_M
    }

    fn bbox(&self) -> (f64, f64, f64, f64) {
        let mut b = (
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        );
        for &(x, y) in &self.outer {
            b = (b.0.min(x), b.1.min(y), b.2.max(x), b.3.max(y));
        }
        b
    }
}

// -------------------------------------------------------------------- dates

const MONTH_DAYS: [u32; 12] = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];

fn day_of_year(month: u32, day: u32) -> u32 {
    MONTH_DAYS[..(month - 1) as usize].iter().sum::<u32>() + day - 1
}

fn month_day(mut doy: u32) -> (u32, u32) {
    for (i, &len) in MONTH_DAYS.iter().enumerate() {
        if doy < len {
            return (i as u32 + 1, doy + 1);
        }
        doy -= len;
    }
    (12, 31)
}

fn iso(doy: u32) -> String {
    let (m, d) = month_day(doy);
    format!("2025-{m:02}-{d:02}")
}

fn dmy(doy: u32) -> String {
    let (m, d) = month_day(doy);
    format!("{d:02}/{m:02}/2025")
}

// ------------------------------------------------------------------ drawing

fn uniform(rng: &mut Rng) -> f64 {
    rng.random::<f64>()
}

/// Two independent standard normals (Box–Muller).
fn normal_pair(rng: &mut Rng) -> Xy {
    let u1 = 1.0 - uniform(rng); // (0, 1]
    let u2 = uniform(rng);
    let r = (-2.0 * u1.ln()).sqrt();
    (r * (2.0 * PI * u2).cos(), r * (2.0 * PI * u2).sin())
}

/// Background relative intensity in (0, 1]: a floor, a south-to-north gradient
/// and a Gaussian bump on the old town.
pub fn relative_intensity(p: Xy) -> f64 {
    let g = ((p.1 - GRADIENT_Y0) / GRADIENT_SPAN).clamp(0.0, 1.0);
    let d2 = (p.0 - OLD_TOWN.0).powi(2) + (p.1 - OLD_TOWN.1).powi(2);
    INTENSITY_FLOOR
        + INTENSITY_GRADIENT * g
        + OLD_TOWN_WEIGHT * (-d2 / (2.0 * OLD_TOWN_SIGMA * OLD_TOWN_SIGMA)).exp()
}

/// One point with density proportional to `relative_intensity` on the usable
/// window: uniform proposals in the bounding box, kept with probability f(p)
/// (thinning; f ≤ 1).
fn draw_background_point(w: &Window, rng: &mut Rng) -> Xy {
    let (x0, y0, x1, y1) = w.bbox();
    loop {
        let p = (x0 + (x1 - x0) * uniform(rng), y0 + (y1 - y0) * uniform(rng));
        let keep = uniform(rng) < relative_intensity(p);
        if keep && w.usable(p) {
            return p;
        }
    }
}

fn pick_category(p_resp: f64, rng: &mut Rng) -> &'static str {
    if uniform(rng) < p_resp {
        "respiratory"
    } else {
        "enteric"
    }
}

/// People in the record: 1 (85 %), 2 (11 %), 3 (4 %).
fn pick_count(rng: &mut Rng) -> u32 {
    let u = uniform(rng);
    if u < 0.85 {
        1
    } else if u < 0.96 {
        2
    } else {
        3
    }
}

fn event_at(part: Part, p: Xy, day: u32, category: &'static str, count: u32) -> Event {
    let (lon, lat, q) = place(p);
    Event {
        part,
        lon,
        lat,
        x: q.0,
        y: q.1,
        day,
        category,
        count,
        id: String::new(),
    }
}

fn dist(a: &Event, b: &Event) -> f64 {
    ((a.x - b.x).powi(2) + (a.y - b.y).powi(2)).sqrt()
}

// ------------------------------------------------------------------- output

fn ring_json_lines(ring: &[(String, String)], out: &mut String) {
    // GeoJSON rings are closed: repeat the first vertex.
    let closed = ring.iter().chain(ring.first());
    let n = ring.len() + 1;
    for (i, (lon, lat)) in closed.enumerate() {
        let sep = if i + 1 < n { "," } else { "" };
        let _ = writeln!(out, "            [{lon}, {lat}]{sep}");
    }
}

fn boundary_geojson(w: &Window) -> String {
    let mut s = String::new();
    s.push_str("{\n  \"type\": \"FeatureCollection\",\n  \"features\": [\n    {\n");
    s.push_str("      \"type\": \"Feature\",\n      \"properties\": {\n");
    let _ = writeln!(s, "        \"name\": \"{TOWN_NAME}\",");
    s.push_str(
        "        \"note\": \"Invented town placed in open ocean; the hole is an invented lake.\"\n",
    );
    s.push_str("      },\n      \"geometry\": {\n        \"type\": \"Polygon\",\n");
    s.push_str("        \"coordinates\": [\n          [\n");
    ring_json_lines(&w.outer_text, &mut s);
    s.push_str("          ],\n          [\n");
    ring_json_lines(&w.lake_text, &mut s);
    s.push_str("          ]\n        ]\n      }\n    }\n  ]\n}\n");
    s
}

fn csv_line(e: &Event) -> String {
    format!(
        "{},{},{},{},{},{}",
        e.id,
        e.lon,
        e.lat,
        iso(e.day),
        e.category,
        e.count
    )
}

struct Problem {
    row: usize,
    column: &'static str,
    value: String,
    stage: &'static str,
    reason: &'static str,
}

fn r1(v: f64) -> f64 {
    (v * 10.0).round() / 10.0
}

fn r6(v: f64) -> f64 {
    write6(v).1
}

fn lonlat_json(p: Xy) -> Value {
    let (lon, lat) = to_lonlat(p);
    json!({"longitude": r6(lon), "latitude": r6(lat)})
}

fn grid_json(p: Xy) -> Value {
    json!({"x": r1(p.0 + FALSE_EASTING), "y": r1(p.1 + FALSE_NORTHING)})
}

// ----------------------------------------------------------------- generate

fn main() {
    let dir = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "demo-data".to_string());
    match generate(Path::new(&dir)) {
        Ok(summary) => println!("{summary}"),
        Err(e) => {
            eprintln!("make_demo: could not write the demo files into {dir}: {e}");
            std::process::exit(1);
        }
    }
}

/// Writes every demo file into `dir` and returns a one-paragraph summary.
pub fn generate(dir: &Path) -> io::Result<String> {
    let w = Window::build()?;

    // Background.
    let mut rng = rng_from_seed(SEED + S_BACKGROUND);
    let mut events: Vec<Event> = Vec::new();
    for _ in 0..N_BACKGROUND {
        let p = draw_background_point(&w, &mut rng);
        let day = rng.random_range(0..365u32);
        let cat = pick_category(P_RESP_BACKGROUND, &mut rng);
        let count = pick_count(&mut rng);
        events.push(event_at(Part::Background, p, day, cat, count));
    }

    // Clusters. Draws that leave the usable window (town edge, lake) are redrawn.
    let mut redrawn = [0usize; 3];
    for (ci, c) in CLUSTERS.iter().enumerate() {
        let mut rng = rng_from_seed(SEED + S_CLUSTER + ci as u64);
        let start = day_of_year(c.start.0, c.start.1);
        for _ in 0..c.n {
            let p = loop {
                let off = match c.shape {
                    Shape::Gaussian { sigma_m } => {
                        let z = normal_pair(&mut rng);
                        (sigma_m * z.0, sigma_m * z.1)
                    }
                    Shape::Disc { radius_m } => {
                        let r = radius_m * uniform(&mut rng).sqrt();
                        let t = 2.0 * PI * uniform(&mut rng);
                        (r * t.cos(), r * t.sin())
                    }
                };
                let p = (c.centre.0 + off.0, c.centre.1 + off.1);
                if w.usable(p) {
                    break p;
                }
                redrawn[ci] += 1;
            };
            let day = start + rng.random_range(0..c.days);
            let cat = pick_category(c.p_respiratory, &mut rng);
            let count = pick_count(&mut rng);
            events.push(event_at(Part::Cluster(ci), p, day, cat, count));
        }
    }

    // Sources for near repeats and coincident points: distinct background events.
    let mut order: Vec<usize> = (0..N_BACKGROUND).collect();
    shuffle(&mut order, &mut rng_from_seed(SEED + S_PICK_SOURCES));
    let nr_sources = order[..N_NEAR_REPEAT].to_vec();
    let co_sources = order[N_NEAR_REPEAT..N_NEAR_REPEAT + N_COINCIDENT].to_vec();

    // Near repeats: 20–90 m away, 1–6 days later (earlier if past 31 December).
    let mut rng = rng_from_seed(SEED + S_NEAR_REPEAT);
    let mut nr_pairs: Vec<(usize, usize)> = Vec::new();
    for &s in &nr_sources {
        let src = events[s].clone();
        let p = loop {
            let r = 20.0 + 70.0 * uniform(&mut rng);
            let t = 2.0 * PI * uniform(&mut rng);
            let p = (src.x + r * t.cos(), src.y + r * t.sin());
            if w.usable(p) {
                break p;
            }
        };
        let gap = rng.random_range(1..=6u32);
        let day = if src.day + gap <= 364 {
            src.day + gap
        } else {
            src.day - gap
        };
        let count = pick_count(&mut rng);
        events.push(event_at(Part::NearRepeat, p, day, src.category, count));
        nr_pairs.push((s, events.len() - 1));
    }

    // Coincident points: a second event at exactly the same written coordinates,
    // 30–150 days apart (so they are not near repeats in time).
    let mut rng = rng_from_seed(SEED + S_COINCIDENT);
    let mut co_pairs: Vec<(usize, usize)> = Vec::new();
    for &s in &co_sources {
        let src = events[s].clone();
        let gap = rng.random_range(30..=150u32);
        let later_ok = src.day + gap <= 364;
        let earlier_ok = src.day >= gap;
        let day = match (later_ok, earlier_ok) {
            (true, true) if uniform(&mut rng) < 0.5 => src.day + gap,
            (true, true) => src.day - gap,
            (true, false) => src.day + gap,
            _ => src.day - gap,
        };
        let cat = pick_category(P_RESP_BACKGROUND, &mut rng);
        let count = pick_count(&mut rng);
        let mut e = src.clone();
        e.part = Part::Coincident;
        e.day = day;
        e.category = cat;
        e.count = count;
        events.push(e);
        co_pairs.push((s, events.len() - 1));
    }

    // Row order: shuffle (hides the components), then stable sort by onset day.
    let mut idx: Vec<usize> = (0..events.len()).collect();
    shuffle(&mut idx, &mut rng_from_seed(SEED + S_ORDER));
    idx.sort_by_key(|&i| events[i].day);
    for (rank, &i) in idx.iter().enumerate() {
        events[i].id = format!("HM-{:04}", rank + 1);
    }
    let rows: Vec<&Event> = idx.iter().map(|&i| &events[i]).collect();

    // Population at risk: background intensity alone.
    let mut rng = rng_from_seed(SEED + S_POPULATION);
    let population: Vec<(String, String)> = (0..N_POPULATION)
        .map(|_| {
            let (lon, lat, _) = place(draw_background_point(&w, &mut rng));
            (lon, lat)
        })
        .collect();

    let blocks = population_blocks(&w);

    // ------------------------------------------------------------ files
    fs::create_dir_all(dir)?;
    fs::write(dir.join("town-boundary.geojson"), boundary_geojson(&w))?;

    let mut cases = String::from("case_id,longitude,latitude,onset_date,category,count\n");
    for e in &rows {
        cases.push_str(&csv_line(e));
        cases.push('\n');
    }
    fs::write(dir.join("cases.csv"), &cases)?;

    let mut pop = String::from("longitude,latitude\n");
    for (lon, lat) in &population {
        let _ = writeln!(pop, "{lon},{lat}");
    }
    fs::write(dir.join("population.csv"), &pop)?;

    let mut bl = String::from("longitude,latitude,residents\n");
    for b in &blocks {
        let _ = writeln!(bl, "{},{},{}", b.lon, b.lat, b.residents);
    }
    fs::write(dir.join("population-blocks.csv"), &bl)?;

    let mut proj = String::from("\u{FEFF}case_id;x;y;onset_date;category;count\r\n");
    for e in &rows {
        let _ = write!(
            proj,
            "{};{};{};{};{};{}\r\n",
            e.id,
            grid_text(e.x + FALSE_EASTING),
            grid_text(e.y + FALSE_NORTHING),
            dmy(e.day),
            e.category,
            e.count
        );
    }
    fs::write(dir.join("cases-projected.csv"), &proj)?;

    let (problems_text, problems) = problems_file(&rows, &w)?;
    fs::write(dir.join("cases-with-problems.csv"), &problems_text)?;

    // ------------------------------------------------------------ truth
    let truth = Truth::compute(&w, &events, &rows, &nr_pairs, &redrawn);
    let truth_json = truth.to_json(&events, &nr_pairs, &co_pairs, &problems, &blocks);
    let mut truth_text = serde_json::to_string_pretty(&truth_json).map_err(io::Error::other)?;
    truth_text.push('\n');
    fs::write(dir.join("planted-truth.json"), &truth_text)?;
    fs::write(
        dir.join("README.md"),
        readme(
            &w, &truth, &events, &nr_pairs, &co_pairs, &problems, &blocks,
        ),
    )?;

    let total_count: u32 = rows.iter().map(|e| e.count).sum();
    Ok(format!(
        "wrote {} cases (count column total {}), {} population points, {} population blocks, \
         {} problem rows, boundary with {} + {} vertices into {}",
        rows.len(),
        total_count,
        population.len(),
        blocks.len(),
        problems.len(),
        w.outer.len(),
        w.lake.len(),
        dir.display()
    ))
}

/// One row of `population-blocks.csv`.
struct Block {
    lon: String,
    lat: String,
    residents: u32,
}

/// Population counts at block centroids: `N_RESIDENTS` people drawn like
/// the background events (same intensity, window and margin, own random
/// stream), summed into `BLOCK_M` squares over the town's bounding box.
/// A block's centroid is the mean place of its residents, or, when that
/// mean is not usable (a block across the lake shore), the resident nearest
/// to it. Rows go block by block, west to east within rows south to north.
fn population_blocks(w: &Window) -> Vec<Block> {
    let (x0, y0, x1, y1) = w.bbox();
    let nx = ((x1 - x0) / BLOCK_M).ceil() as usize;
    let ny = ((y1 - y0) / BLOCK_M).ceil() as usize;
    let mut members: Vec<Vec<Xy>> = vec![Vec::new(); nx * ny];
    let mut rng = rng_from_seed(SEED + S_BLOCKS);
    for _ in 0..N_RESIDENTS {
        let p = draw_background_point(w, &mut rng);
        let i = (((p.0 - x0) / BLOCK_M) as usize).min(nx - 1);
        let j = (((p.1 - y0) / BLOCK_M) as usize).min(ny - 1);
        members[j * nx + i].push(p);
    }
    let mut out = Vec::new();
    for m in members.iter().filter(|m| !m.is_empty()) {
        let n = m.len() as f64;
        let mean = (
            m.iter().map(|p| p.0).sum::<f64>() / n,
            m.iter().map(|p| p.1).sum::<f64>() / n,
        );
        let d2 = |p: &Xy| (p.0 - mean.0).powi(2) + (p.1 - mean.1).powi(2);
        let nearest = || {
            *m.iter()
                .min_by(|a, b| d2(a).total_cmp(&d2(b)))
                .unwrap_or(&mean)
        };
        let (lon, lat, q) = place(mean);
        let (lon, lat) = if w.usable(q) {
            (lon, lat)
        } else {
            let (lon, lat, _) = place(nearest());
            (lon, lat)
        };
        out.push(Block {
            lon,
            lat,
            residents: m.len() as u32,
        });
    }
    out
}

fn shuffle(v: &mut [usize], rng: &mut Rng) {
    for i in (1..v.len()).rev() {
        let j = rng.random_range(0..=i as u64) as usize;
        v.swap(i, j);
    }
}

/// 40 data rows taken from the first cases, twelve of them spoiled on purpose.
fn problems_file(rows: &[&Event], w: &Window) -> io::Result<(String, Vec<Problem>)> {
    // A point 1.5 km or more outside the town and one in the middle of the lake.
    let outside: Xy = (7_600.0, 400.0);
    let lake_centre: Xy = (1_800.0, -1_200.0);
    let (out_lon, out_lat, out_q) = place(outside);
    let (lake_lon, lake_lat, lake_q) = place(lake_centre);
    if in_ring(out_q, &w.outer) || ring_distance(out_q, &w.outer) < 1_000.0 {
        return Err(io::Error::other(
            "the 'outside' problem point is not clearly outside",
        ));
    }
    if !in_ring(lake_q, &w.lake) || ring_distance(lake_q, &w.lake) < 100.0 {
        return Err(io::Error::other(
            "the 'lake' problem point is not clearly in the lake",
        ));
    }

    let parse = "reading";
    let place_stage = "study area";
    let mut problems: Vec<Problem> = Vec::new();
    let mut text = String::from("case_id,longitude,latitude,onset_date,category,count\n");
    for (k, e) in rows.iter().take(40).enumerate() {
        let row = k + 2; // header is row 1
        let mut f: Vec<String> = vec![
            e.id.clone(),
            e.lon.clone(),
            e.lat.clone(),
            iso(e.day),
            e.category.to_string(),
            e.count.to_string(),
        ];
        let mut spoil = |col: usize, column: &'static str, value: &str, stage, reason| {
            f[col] = value.to_string();
            problems.push(Problem {
                row,
                column,
                value: value.to_string(),
                stage,
                reason,
            });
        };
        match row {
            4 => spoil(1, "longitude", "", parse, "longitude is empty"),
            7 => spoil(2, "latitude", "abc", parse, "latitude is not a number"),
            9 => spoil(
                2,
                "latitude",
                "95.000000",
                parse,
                "latitude outside -90..90",
            ),
            12 => spoil(
                1,
                "longitude",
                "-200.000000",
                parse,
                "longitude outside -180..180",
            ),
            15 => spoil(
                1,
                "longitude",
                "NaN",
                parse,
                "longitude is not a finite number",
            ),
            18 => spoil(3, "onset_date", "2025-13-01", parse, "no month 13"),
            21 => spoil(3, "onset_date", "2025-02-30", parse, "no 30 February"),
            24 => spoil(
                3,
                "onset_date",
                "31/04/2025",
                parse,
                "not an ISO date, and April has 30 days",
            ),
            27 => {
                f.truncate(4);
                problems.push(Problem {
                    row,
                    column: "(row)",
                    value: "4 fields".to_string(),
                    stage: parse,
                    reason: "too few fields: 4 instead of 6 (category and count missing)",
                });
            }
            30 => spoil(5, "count", "-1", parse, "count is negative"),
            34 => {
                f[1] = out_lon.clone();
                f[2] = out_lat.clone();
                problems.push(Problem {
                    row,
                    column: "longitude, latitude",
                    value: format!("{out_lon}, {out_lat}"),
                    stage: place_stage,
                    reason: "outside the town boundary (about 1.5 km east of it)",
                });
            }
            38 => {
                f[1] = lake_lon.clone();
                f[2] = lake_lat.clone();
                problems.push(Problem {
                    row,
                    column: "longitude, latitude",
                    value: format!("{lake_lon}, {lake_lat}"),
                    stage: place_stage,
                    reason: "inside the lake (the hole of the boundary polygon)",
                });
            }
            _ => {}
        }
        text.push_str(&f.join(","));
        text.push('\n');
    }
    Ok((text, problems))
}

// -------------------------------------------------------------------- truth

struct ClusterTruth {
    respiratory: usize,
    enteric: usize,
    count_total: u32,
    mean: Xy,
    rms_radius: f64,
    max_radius: f64,
    redrawn: usize,
    first_day: u32,
    last_day: u32,
}

struct Truth {
    n_outer: usize,
    n_lake: usize,
    area_outer: f64,
    area_lake: f64,
    bbox: (f64, f64, f64, f64),
    clusters: Vec<ClusterTruth>,
    background_resp: usize,
    background_count_total: u32,
    pairs_total: usize,
    pairs_planted: usize,
    pairs_same_cluster: usize,
    pairs_other: usize,
    coincident_pairs_total: usize,
    total_count: u32,
}

impl Truth {
    fn compute(
        w: &Window,
        events: &[Event],
        rows: &[&Event],
        nr_pairs: &[(usize, usize)],
        redrawn: &[usize; 3],
    ) -> Truth {
        let clusters = CLUSTERS
            .iter()
            .enumerate()
            .map(|(ci, c)| {
                let members: Vec<&Event> = events
                    .iter()
                    .filter(|e| e.part == Part::Cluster(ci))
                    .collect();
                let n = members.len() as f64;
                let mean = (
                    members.iter().map(|e| e.x).sum::<f64>() / n,
                    members.iter().map(|e| e.y).sum::<f64>() / n,
                );
                let r2: Vec<f64> = members
                    .iter()
                    .map(|e| (e.x - c.centre.0).powi(2) + (e.y - c.centre.1).powi(2))
                    .collect();
                ClusterTruth {
                    respiratory: members
                        .iter()
                        .filter(|e| e.category == "respiratory")
                        .count(),
                    enteric: members.iter().filter(|e| e.category == "enteric").count(),
                    count_total: members.iter().map(|e| e.count).sum(),
                    mean,
                    rms_radius: (r2.iter().sum::<f64>() / n).sqrt(),
                    max_radius: r2.iter().cloned().fold(0.0, f64::max).sqrt(),
                    redrawn: redrawn[ci],
                    first_day: members.iter().map(|e| e.day).min().unwrap_or(0),
                    last_day: members.iter().map(|e| e.day).max().unwrap_or(0),
                }
            })
            .collect();
        let bg: Vec<&Event> = events
            .iter()
            .filter(|e| e.part == Part::Background)
            .collect();

        // All pairs within 100 m and 7 days, sorted into where they come from.
        let planted: Vec<(usize, usize)> = nr_pairs
            .iter()
            .map(|&(a, b)| (a.min(b), a.max(b)))
            .collect();
        let (mut total, mut n_planted, mut same, mut other) = (0, 0, 0, 0);
        let mut coincident = 0;
        for i in 0..events.len() {
            for j in i + 1..events.len() {
                let (a, b) = (&events[i], &events[j]);
                if a.lon == b.lon && a.lat == b.lat {
                    coincident += 1;
                }
                if dist(a, b) <= 100.0 && a.day.abs_diff(b.day) <= 7 {
                    total += 1;
                    if planted.contains(&(i, j)) {
                        n_planted += 1;
                    } else if matches!((a.part, b.part), (Part::Cluster(x), Part::Cluster(y)) if x == y)
                    {
                        same += 1;
                    } else {
                        other += 1;
                    }
                }
            }
        }
        Truth {
            n_outer: w.outer.len(),
            n_lake: w.lake.len(),
            area_outer: signed_area(&w.outer),
            area_lake: -signed_area(&w.lake),
            bbox: w.bbox(),
            clusters,
            background_resp: bg.iter().filter(|e| e.category == "respiratory").count(),
            background_count_total: bg.iter().map(|e| e.count).sum(),
            pairs_total: total,
            pairs_planted: n_planted,
            pairs_same_cluster: same,
            pairs_other: other,
            coincident_pairs_total: coincident,
            total_count: rows.iter().map(|e| e.count).sum(),
        }
    }

    fn to_json(
        &self,
        events: &[Event],
        nr_pairs: &[(usize, usize)],
        co_pairs: &[(usize, usize)],
        problems: &[Problem],
        blocks: &[Block],
    ) -> Value {
        let ids = |part: Part| -> Vec<String> {
            let mut v: Vec<String> = events
                .iter()
                .filter(|e| e.part == part)
                .map(|e| e.id.clone())
                .collect();
            v.sort();
            v
        };
        let clusters: Vec<Value> = CLUSTERS
            .iter()
            .zip(&self.clusters)
            .enumerate()
            .map(|(ci, (c, t))| {
                let (shape, size) = match c.shape {
                    Shape::Gaussian { sigma_m } => ("gaussian", json!({"sigma_m": sigma_m})),
                    Shape::Disc { radius_m } => ("uniform_disc", json!({"radius_m": radius_m})),
                };
                let start = day_of_year(c.start.0, c.start.1);
                json!({
                    "label": c.label,
                    "centre_lonlat": lonlat_json(c.centre),
                    "centre_grid_m": grid_json(c.centre),
                    "shape": shape,
                    "size": size,
                    "n": c.n,
                    "redrawn_outside_window": t.redrawn,
                    "onset_window": {"first": iso(start), "last": iso(start + c.days - 1)},
                    "p_respiratory": c.p_respiratory,
                    "respiratory": t.respiratory,
                    "enteric": t.enteric,
                    "count_column_total": t.count_total,
                    "realised_mean_grid_m": grid_json(t.mean),
                    "realised_rms_distance_from_centre_m": r1(t.rms_radius),
                    "realised_max_distance_from_centre_m": r1(t.max_radius),
                    "case_ids": ids(Part::Cluster(ci)),
                })
            })
            .collect();
        let pair_json = |pairs: &[(usize, usize)]| -> Vec<Value> {
            pairs
                .iter()
                .map(|&(a, b)| {
                    let (ea, eb) = (&events[a], &events[b]);
                    json!({
                        "source": ea.id, "added": eb.id,
                        "distance_m": r1(dist(ea, eb)),
                        "days_apart": ea.day.abs_diff(eb.day),
                        "source_onset": iso(ea.day), "added_onset": iso(eb.day),
                    })
                })
                .collect()
        };
        let (x0, y0, x1, y1) = self.bbox;
        json!({
            "description": "Planted truth of the invented Harrowmere demo data (see README.md).",
            "generator": "examples/make_demo.rs",
            "seed": SEED,
            "town": TOWN_NAME,
            "grid": {
                "centre_longitude": CENTRE_LON,
                "centre_latitude": CENTRE_LAT,
                "sphere_radius_m": EARTH_RADIUS_M,
                "false_easting_m": FALSE_EASTING,
                "false_northing_m": FALSE_NORTHING,
            },
            "window": {
                "outline_vertices": self.n_outer,
                "lake_vertices": self.n_lake,
                "extent_east_west_km": r3((x1 - x0) / 1000.0),
                "extent_north_south_km": r3((y1 - y0) / 1000.0),
                "outline_area_km2": r3(self.area_outer / 1e6),
                "lake_area_km2": r3(self.area_lake / 1e6),
                "net_area_km2": r3((self.area_outer - self.area_lake) / 1e6),
                "edge_margin_m": MARGIN_M,
            },
            "background": {
                "n": N_BACKGROUND,
                "intensity": "f(x,y) = 0.25 + 0.15*clamp((y_local + 5500)/11000, 0, 1) + 0.6*exp(-((x_local + 1800)^2 + (y_local - 900)^2) / (2*1400^2))",
                "old_town_centre_lonlat": lonlat_json(OLD_TOWN),
                "old_town_centre_grid_m": grid_json(OLD_TOWN),
                "old_town_sigma_m": OLD_TOWN_SIGMA,
                "onset": "uniform over 2025-01-01..2025-12-31",
                "p_respiratory": P_RESP_BACKGROUND,
                "respiratory": self.background_resp,
                "enteric": N_BACKGROUND - self.background_resp,
                "count_column_total": self.background_count_total,
                "case_ids": ids(Part::Background),
            },
            "clusters": clusters,
            "near_repeats": {
                "rule": "added event 20-90 m from a background event, 1-6 days later (earlier if past 31 December), same category",
                "pairs": pair_json(nr_pairs),
            },
            "coincident": {
                "rule": "added event at exactly the same written coordinates as a background event, 30-150 days apart",
                "pairs": pair_json(co_pairs),
            },
            "pairs_within_100m_and_7days": {
                "distance_rule": "local grid distance <= 100 m and |onset difference| <= 7 days",
                "total": self.pairs_total,
                "planted_near_repeats": self.pairs_planted,
                "same_cluster": self.pairs_same_cluster,
                "other": self.pairs_other,
            },
            "exactly_coincident_pairs": self.coincident_pairs_total,
            "cases": {"n": events.len(), "count_column_total": self.total_count},
            "population": {"n": N_POPULATION},
            "population_blocks": {
                "n": blocks.len(),
                "residents": blocks.iter().map(|b| b.residents as u64).sum::<u64>(),
                "block_m": BLOCK_M,
            },
            "problems": problems.iter().map(|p| json!({
                "row": p.row, "column": p.column, "value": p.value,
                "stage": p.stage, "reason": p.reason,
            })).collect::<Vec<_>>(),
        })
    }
}

fn r3(v: f64) -> f64 {
    (v * 1000.0).round() / 1000.0
}

// ------------------------------------------------------------------- README

fn shape_text(s: Shape) -> String {
    match s {
        Shape::Gaussian { sigma_m } => format!("Gaussian, σ = {sigma_m:.0} m per axis"),
        Shape::Disc { radius_m } => format!("uniform disc, radius {radius_m:.0} m"),
    }
}

fn readme(
    w: &Window,
    t: &Truth,
    events: &[Event],
    nr_pairs: &[(usize, usize)],
    co_pairs: &[(usize, usize)],
    problems: &[Problem],
    blocks: &[Block],
) -> String {
    let mut s = String::new();
    let (x0, y0, x1, y1) = t.bbox;
    let n_cases = events.len();
    let n_clustered: usize = CLUSTERS.iter().map(|c| c.n).sum();
    let n_blocks = blocks.len();
    let _ = write!(
        s,
        r#"# Demo data: Harrowmere, an invented town

Everything in this folder is **invented**: the town, its lake, the events, the population at
risk. No real person, place or record is behind any row. The files are released under
**CC0 1.0** (public-domain dedication): use them for anything.

This README is written by the generator together with the data, so its numbers are the ones
in the files. Regenerate everything with

```text
cargo run --release --example make_demo -- demo-data
```

Seed **{SEED}**; component *k* draws from its own stream `rng_from_seed({SEED} + k)`
(PCG64-MCG, `cloister::rng`). Running the generator twice gives identical bytes, and
`tests/demo_files.rs` regenerates the files and compares them with the committed ones.
`planted-truth.json` holds the same truth as this README in machine-readable form, including
the `case_id`s of every planted component.

## Where the town is

The town is placed on purpose in the open South Atlantic, around **32.0° W, 41.5° S**, so
that no coordinate can point at a real address. The nearest land is the Tristan da Cunha /
Gough Island group, about 1,760–1,860 km to the east-north-east and east, and the coast of
South America is about 2,740 km to the west. (The land positions are approximate and from
memory; the distances to them were computed with pyproj in
`tests/reference/demo_data_check.json`.)

## Files

| file | what | coordinates | demonstrates |
|---|---|---|---|
| `town-boundary.geojson` | study area: one Polygon with one hole (a lake) | WGS84 lon/lat, 6 decimals | window with a hole: area, simulation of complete spatial randomness inside it, edge correction, in/out checks |
| `cases.csv` | {n_cases} events (comma-separated, ISO dates) | WGS84 lon/lat, 6 decimals | main intake; summary; distance functions with envelopes; kernel intensity; DBSCAN; scan statistic; Knox / near-repeat / space-time tests; privacy (coincident points) |
| `population.csv` | {N_POPULATION} population-at-risk points | WGS84 lon/lat, 6 decimals | case–control comparison: relative risk against the background |
| `population-blocks.csv` | {n_blocks} block centroids with a `residents` count ({N_RESIDENTS} people) | WGS84 lon/lat, 6 decimals | population as counts at points: the scan against the population counts (Poisson) |
| `cases-projected.csv` | the same {n_cases} events | invented local grid, metres | projected intake: `;` delimiter, decimal comma, UTF-8 BOM, CRLF line ends, day/month/year dates |
| `cases-with-problems.csv` | 40 rows, {n_bad} spoiled on purpose | WGS84 lon/lat | row-by-row rejection messages |
| `planted-truth.json` | the planted truth below, with case ids | — | checking analyses against the truth |
| `incidents-windows.csv` | 160 invented incidents with a `date_from` and a `date_to` (54 known only within a window of 1 to 4 days) | invented planar grid, metres (a 10 km square) | from–to time windows at intake, the time line with aoristic shares, the map's time filter; see the section below |

Row numbers below count as a spreadsheet does: the header is row 1, the first record row 2.

## Coordinates

* **lon/lat**: WGS84 decimal degrees, always written with 6 decimals (about 0.1 m).
* **Local grid** (`cases-projected.csv`, and the "grid" columns below): an invented plane in
  metres, a simple equirectangular approximation on a sphere around the town centre:

  ```text
  x = {FALSE_EASTING:.0} + R · (lon − ({CENTRE_LON:.1})) · π/180 · cos({CENTRE_LAT:.1}°)
  y = {FALSE_NORTHING:.0} + R · (lat − ({CENTRE_LAT:.1})) · π/180            R = {EARTH_RADIUS_M} m
  ```

  It is good enough for a demo over a 12 km town; it is not a standard projection, and
  distances in it differ from WGS84 geodesic distances by a few tenths of a percent
  (`tests/reference/demo_data_check.py` measures this with pyproj). Grid values are
  written from the 6-decimal lon/lat with 2 decimals (centimetres).
* The generator works in these local metres (without the false origin) and writes lon/lat
  from them; all local metres quoted below are recomputed from the written lon/lat.

## The study area (`town-boundary.geojson`)

A FeatureCollection with one Feature, property `name` = "{TOWN_NAME}". Its Polygon has:

* an outer ring of {n_outer} vertices (plus the closing vertex), counter-clockwise: a
  wobbly ellipse of semi-axes 6.0 × 4.5 km with a bay on the west-south-west side. Extent
  {ew:.2} km east–west × {ns:.2} km north–south; area {ao:.3} km²;
* one hole, the lake, of {n_lake} vertices (plus the closing vertex), clockwise, centred near
  grid ({lx:.0}, {ly:.0}); area {al:.3} km².

Net area of the study area: **{an:.3} km²** (shoelace formula in the local grid).

Every generated event and population point lies inside the outer ring, outside the lake, and
at least {MARGIN_M:.0} m from both edges.

## How `cases.csv` was made: the planted truth

Header `case_id,longitude,latitude,onset_date,category,count`. Rows are sorted by onset
date; within a day their order is random, and `case_id`s (`HM-0001` …) follow the row order,
so neither the order nor the id reveals which component an event came from.

`count` is the number of people in the record: 1 with probability 0.85, 2 with 0.11, 3 with
0.04, for every component. Total of the `count` column: {tc}.

| component | events | where | onset | respiratory share |
|---|---|---|---|---|
| background | {N_BACKGROUND} | background intensity (below) | uniform over 2025 | {P_RESP_BACKGROUND} |
"#,
        n_bad = problems.len(),
        n_outer = w.outer.len(),
        n_lake = w.lake.len(),
        ew = (x1 - x0) / 1000.0,
        ns = (y1 - y0) / 1000.0,
        ao = t.area_outer / 1e6,
        al = t.area_lake / 1e6,
        an = (t.area_outer - t.area_lake) / 1e6,
        lx = 1_800.0 + FALSE_EASTING,
        ly = -1_200.0 + FALSE_NORTHING,
        tc = t.total_count,
    );
    for c in &CLUSTERS {
        let start = day_of_year(c.start.0, c.start.1);
        let _ = writeln!(
            s,
            "| cluster {} | {} | {} | {} … {} | {} |",
            c.label,
            c.n,
            shape_text(c.shape),
            iso(start),
            iso(start + c.days - 1),
            c.p_respiratory
        );
    }
    let _ = write!(
        s,
        "| near repeats | {N_NEAR_REPEAT} | 20–90 m from a background event | 1–6 days after it | same as its source |
| coincident | {N_COINCIDENT} | exactly at a background event | 30–150 days from it | {P_RESP_BACKGROUND} |
| **total** | **{n_cases}** | | | |

{n_clustered} of the {n_cases} events ({pct:.1} %) belong to the three planted clusters.

### Background intensity

Background events (and the population points) have density proportional to

```text
f(x, y) = 0.25 + 0.15 · clamp((y + 5500) / 11000, 0, 1)
               + 0.6 · exp(−((x + 1800)² + (y − 900)²) / (2 · 1400²))
```

with (x, y) in local metres east and north of the centre (grid minus {FALSE_EASTING:.0}).
That is a floor, a gentle rise from south to north, and an \"old town\" bump centred at grid
({otx:.0}, {oty:.0}) = lon/lat ({otlon}, {otlat}) with σ = 1400 m. f ≤ 1 everywhere, so
points were drawn by thinning: uniform proposals in the bounding box of the town, each kept
with probability f(x, y) if it is in the usable window. The background count is fixed at
{N_BACKGROUND} (the points are independent given that count). In the old town the
background is about three to four times as dense as on the southern edge, so a map of raw
case density shows the old town even though its risk is not raised: only a comparison with
`population.csv` separates the two.

Background categories: {br} respiratory, {be} enteric.

### Clusters

Cluster points were drawn around the centre with the stated shape; draws that fell outside
the usable window (beyond the town edge or in/near the lake) were redrawn, so a cluster
touching the lake shore is cut off by it. The counts below are exact.

| cluster | centre lon, lat | centre grid x, y (m) | shape | events | redrawn | onset window | respiratory / enteric | `count` total |
|---|---|---|---|---|---|---|---|---|
",
        pct = 100.0 * n_clustered as f64 / n_cases as f64,
        otx = OLD_TOWN.0 + FALSE_EASTING,
        oty = OLD_TOWN.1 + FALSE_NORTHING,
        otlon = write6(to_lonlat(OLD_TOWN).0).0,
        otlat = write6(to_lonlat(OLD_TOWN).1).0,
        br = t.background_resp,
        be = N_BACKGROUND - t.background_resp,
    );
    for (c, ct) in CLUSTERS.iter().zip(&t.clusters) {
        let (lon, lat) = to_lonlat(c.centre);
        let start = day_of_year(c.start.0, c.start.1);
        let _ = writeln!(
            s,
            "| {} | {}, {} | {:.0}, {:.0} | {} | {} | {} | {} … {} ({} days) | {} / {} | {} |",
            c.label,
            write6(lon).0,
            write6(lat).0,
            c.centre.0 + FALSE_EASTING,
            c.centre.1 + FALSE_NORTHING,
            shape_text(c.shape),
            c.n,
            ct.redrawn,
            iso(start),
            iso(start + c.days - 1),
            c.days,
            ct.respiratory,
            ct.enteric,
            ct.count_total
        );
    }
    let _ = write!(
        s,
        "
Where the clusters sit and what they are for:

* **A** (spring, mostly respiratory) lies inside the old town, about 850 m from the centre of
  the background bump: raw density alone overstates it; against the population it still
  stands out.
* **B** (summer, mostly enteric) lies in the thinner north-east; a uniform disc, so its edge
  is sharp.
* **C** (autumn, no category signal) sits on the western tip of the lake: {c_red} of its
  {c_draws} draws fell in or next to the water and were redrawn, so it is a cut-off cluster
  that tests edge handling.

Realised positions (from the written coordinates):

| cluster | mean grid x, y (m) | RMS distance from centre (m) | largest distance (m) | first … last onset |
|---|---|---|---|---|
",
        c_red = t.clusters[2].redrawn,
        c_draws = t.clusters[2].redrawn + CLUSTERS[2].n,
    );
    for (c, ct) in CLUSTERS.iter().zip(&t.clusters) {
        let _ = writeln!(
            s,
            "| {} | {:.1}, {:.1} | {:.1} | {:.1} | {} … {} |",
            c.label,
            ct.mean.0 + FALSE_EASTING,
            ct.mean.1 + FALSE_NORTHING,
            ct.rms_radius,
            ct.max_radius,
            iso(ct.first_day),
            iso(ct.last_day)
        );
    }
    let _ = write!(
        s,
        "
For a Gaussian cluster with σ per axis the expected RMS distance is σ·√2 (354 m for A,
283 m for C before the lake cut); for a uniform disc of radius ρ it is ρ/√2 (283 m for B).

### Near repeats ({N_NEAR_REPEAT} planted pairs)

Each pair is a background event and an added event 20–90 m away, 1–6 days later (earlier if
that would pass 31 December), with the same category.

| source | added | distance (m) | days apart |
|---|---|---|---|
"
    );
    for &(a, b) in nr_pairs {
        let (ea, eb) = (&events[a], &events[b]);
        let _ = writeln!(
            s,
            "| {} ({}) | {} ({}) | {:.1} | {} |",
            ea.id,
            iso(ea.day),
            eb.id,
            iso(eb.day),
            dist(ea, eb),
            ea.day.abs_diff(eb.day)
        );
    }
    let _ = write!(
        s,
        "
All pairs of events in `cases.csv` within 100 m (local grid) **and** 7 days of each other:
**{tot}** in total = {pl} planted near repeats + {sc} inside the same cluster + {ot} others
(chance pairs between background events or between a cluster and the background).
A near-repeat or Knox analysis at 100 m / 7 days should find the excess mainly through the
clusters; the {pl} planted pairs are a small extra.

### Coincident points ({N_COINCIDENT} planted pairs)

The same address geocoded twice: an added event with exactly the same written longitude and
latitude as a background event, 30–150 days away from it (so not a near repeat in time).
Exactly coincident pairs in the whole file: {cp}.

| first | second | longitude, latitude | days apart |
|---|---|---|---|
",
        tot = t.pairs_total,
        pl = t.pairs_planted,
        sc = t.pairs_same_cluster,
        ot = t.pairs_other,
        cp = t.coincident_pairs_total,
    );
    for &(a, b) in co_pairs {
        let (ea, eb) = (&events[a], &events[b]);
        let (first, second) = if ea.day <= eb.day { (ea, eb) } else { (eb, ea) };
        let _ = writeln!(
            s,
            "| {} ({}) | {} ({}) | {}, {} | {} |",
            first.id,
            iso(first.day),
            second.id,
            iso(second.day),
            ea.lon,
            ea.lat,
            ea.day.abs_diff(eb.day)
        );
    }
    let _ = write!(
        s,
        "
## `population.csv`

Header `longitude,latitude`; {N_POPULATION} points drawn exactly like the background events
(same intensity f, same window and margin, own random stream). They stand for the population
at risk (controls): where f is high there are more people, not more risk. Outside the three
clusters the ratio of case to population density is flat by construction.

## `population-blocks.csv`

The same population at risk given as **counts at points**, as published block figures are.
Header `longitude,latitude,residents`; {n_blocks} rows, {N_RESIDENTS} residents in all.
{N_RESIDENTS} people were drawn exactly like the points of `population.csv` (same intensity f,
window and margin, own random stream) and summed into squares of {BLOCK_M:.0} m over the
town's bounding box; each row is one square that holds anyone: its centroid (the mean place
of its residents, or the resident nearest to that mean when the mean falls in the lake or
outside the town) and its number of residents. Rows go square by square, west to east, rows
from south to north. Load it as the population file: the `residents` column is read as the
count of people at each point, so the scan compares the cases with these counts.

## `cases-projected.csv`

The same {n_cases} events in the same row order, for the projected-coordinate intake path:

* UTF-8 with a byte-order mark, CRLF line ends, `;` as delimiter;
* header `case_id;x;y;onset_date;category;count`;
* `x`, `y` in the invented local grid (metres, see Coordinates) with a **decimal comma**,
  e.g. `18800,00`;
* `onset_date` as day/month/year, e.g. `04/03/2025` is 4 March 2025.

## `cases-with-problems.csv`

Same header and conventions as `cases.csv` (comma, ISO dates, 6-decimal lon/lat). Rows 2–41
are the first 40 cases (`HM-0001` … `HM-0040`); {n_bad} of them were spoiled, one fault each,
and the other {n_good} rows are identical to their rows in `cases.csv`.

| row | column | value | expected reason | found at |
|---|---|---|---|---|
",
        n_bad = problems.len(),
        n_good = 40 - problems.len(),
    );
    for p in problems {
        let v = if p.value.is_empty() {
            "(empty)".to_string()
        } else {
            format!("`{}`", p.value)
        };
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {} |",
            p.row, p.column, v, p.reason, p.stage
        );
    }
    let n_read = problems.iter().filter(|p| p.stage == "reading").count();
    let _ = write!(
        s,
        "
\"reading\": the row cannot become a point with a date and a count ({n_read} rows).
\"study area\": the row reads fine but the point is outside the study area
({n_area} rows); only a check against `town-boundary.geojson` rejects it.
Note that `NaN` is accepted as a number by many parsers (Rust's `f64::from_str` included), so
it needs an explicit finiteness check.
",
        n_area = problems.len() - n_read,
    );
    s.push_str(INCIDENTS_WINDOWS_README);
    s
}

/// The section on `incidents-windows.csv`, which
/// `demo-data/make_incidents_windows.py` writes (not this program).
const INCIDENTS_WINDOWS_README: &str = "
## `incidents-windows.csv`

Invented incidents on an invented 10 km square (planar metres, no real
place), written by `python3 demo-data/make_incidents_windows.py` (standard
library only, seeded). 160 rows, their dates drawn from days 0 to 69 after
Monday 2025-01-06 (the \"from\" dates run from 2025-01-07 to 2025-03-15, the
latest \"to\" is 2025-03-16): 120 spread evenly over the square and the whole
period, and a burst of 40 near (7600 m, 7200 m) (normal, σ = 350 m) between
days 28 and 41 (3 to 16 February 2025). About a third of the rows (54) are
known only within a window: `date_to` is 1 to 4 days after `date_from`; the
others have an empty `date_to` (known to the day). The headers `date_from`
and `date_to` are found as a from/to pair without any choice by hand.
";
