//! Exports for "Sharing safely": masking, aggregation with suppression, the
//! cost of masking, file exports and a self-contained HTML report.
//!
//! # JS API (methods of `Session`)
//! * `maskDonut(params)`: ring-shaped random shift (`r_min_m`, `r_max_m`,
//!   `law`, `max_tries`, `seed`, `replace`).
//! * `maskKAnonymity(params)`: shift until at least `target_k` candidate
//!   addresses are as close (`against`: `"population"` (the loaded controls
//!   layer) or `"density"` with `density_per_km2`; plus `r_min_m`, `r_max_m`,
//!   `law`, `area_factor`, `population_contains_events`, `keep_below_target`,
//!   `max_tries`, `seed`, `replace`).
//! * `maskResult()`: the kept masked copy (same shape as the two above), or null.
//! * `maskingCost(params)`: original vs masked summaries side by side.
//! * `aggregate(params)`: counts per square / hexagon cell or per zone of a
//!   GeoJSON file, suppressed and audited; kept for export.
//! * `exportPreview(what, options)`: exactly what a file would contain.
//! * `exportFile(what, options)`: `{text, file_name, mime, preview}`.
//!   `what` is `"masked_points"`, `"aggregates"`, `"report"` or
//!   `"unmasked_points"` (needs `confirm_unmasked: true`; the file carries the
//!   label "unmasked, internal use only").
//!
//! # Mask once
//! The session keeps one masked copy. Masking again needs `replace: true`:
//! releasing several independently masked copies of the same points lets
//! anyone average them back towards the true locations (Cassa, Wieland &
//! Mandl 2008, *Int J Health Geogr* 7:45). Without a `seed` the run draws one
//! from the platform's cryptographic generator (`crypto.getRandomValues`); the
//! seed is never returned and never exported (with it the shifts could be
//! replayed and undone).
//!
//! # Nothing traced back to the original points in what leaves
//! * The study area outline is drawn or written only when it came from a
//!   boundary file: a hull or rectangle around the events has original
//!   points as its corners or on its edges.
//! * The grid origin is snapped down to a multiple of the cell size (in the
//!   study's planar metres), so cell corners do not repeat the smallest x or y
//!   of the events when the study area was drawn around them.
//! * The report holds no coordinates at all: settings, distributions, tables
//!   of counts, and a map picture the page draws from masked / aggregated
//!   layers only.

use super::{analysis_error, decode, decode_with_bytes, js_error, to_js, Session};
use crate::error::InputError;
use crate::input::CoordKind;
use crate::privacy::aggregate::{
    aggregate_grid, aggregate_zones, AggregateLayout, AggregateOptions, Layout, LineKind, Zone,
};
use crate::privacy::cost::{compare, CostParams};
use crate::privacy::export::{
    export, CoordinateOutput, ExportContent, ExportOptions, ExportRequest, ReportHolds,
};
use crate::privacy::kanon::{kanon_mask, Against, KAnonParams, KBasis, KSummary};
use crate::privacy::suppress::{suppress, SuppressedTable};
use crate::privacy::{
    donut_mask, what_leaves, AggregateParams, CellShape, DistanceLaw, DonutParams, MaskMethod,
    MaskedPoints, Spread, Unplaced,
};
use crate::projection::Projection;
use crate::study::Study;
use js_sys::{Float64Array, Object, Reflect, Uint32Array};
use serde::Serialize;
use serde_json::Value;
use wasm_bindgen::prelude::*;

const KEY: &str = "sharing";

/// The Content-Security-Policy of the page, repeated in the report so that
/// it, too, can fetch nothing.
pub const REPORT_CSP: &str = "default-src 'none'; script-src 'unsafe-inline' 'wasm-unsafe-eval' blob:; worker-src blob:; style-src 'unsafe-inline'; img-src data: blob:; connect-src 'none'";

/// Cautions written into the report and shown in the page.
pub const CAUTIONS: [&str; 5] = [
    "Dot maps can identify people: published maps of case locations have been turned back \
     into home addresses, and lowering the map resolution did not prevent it (Brownstein, \
     Cassa & Mandl 2006, N Engl J Med 355:1741–1742). Share only masked points or suppressed \
     counts, never the original locations.",
    "Masking changes the statistics: nearest-neighbour distances, clustering at distances up \
     to about twice the largest shift, the intensity surface and any space-time closeness \
     below that distance differ from those of the true locations (see the cost table).",
    "Mask once: several independently masked copies of the same points can be averaged back \
     towards the true locations (Cassa, Wieland & Mandl 2008, Int J Health Geogr 7:45). Keep \
     this masked copy for every later release.",
    "Local data-protection law, your organisation's disclosure-control policy and the data \
     owner's rules prevail over any default in this tool; the threshold of 5 for small counts \
     is common practice, not a rule from any single source.",
    "Do not release masked points together with counts that have hidden cells for the same \
     events: counting the masked points per area gives the hidden counts back, roughly. A \
     report holds one or the other whenever counts are hidden.",
];

#[derive(Default)]
struct SharingState {
    mask: Option<MaskState>,
    table: Option<TableState>,
}

struct MaskState {
    masked: MaskedPoints,
    k: Option<KInfo>,
}

struct KInfo {
    basis: KBasis,
    target_k: usize,
    k: Vec<f64>,
    summary: Option<KSummary>,
    below_target: Vec<Unplaced>,
}

struct TableState {
    table: SuppressedTable,
    population_source: Option<&'static str>,
    zone_names: Option<Vec<String>>,
}

// ---------- parameters ----------

// The options of the sharing methods live in the core, with their
// defaults and limits: [`DonutParams`], [`KAnonParams`], [`CostParams`],
// [`AggregateOptions`] and [`ExportRequest`] (see `crate::params`).
type AggArgs = AggregateOptions;
type AggLayout = AggregateLayout;
type ExportArgs = ExportRequest;

/// The session-level `replace` flag of the mask methods.
fn replace_flag(session: &serde_json::Map<String, Value>) -> bool {
    session
        .get("replace")
        .and_then(Value::as_bool)
        .unwrap_or(false)
}

/// Whether the caller gave a `seed` (without one, the mask methods draw
/// one from the platform's cryptographic generator; it is never returned).
fn has_seed(options: &JsValue) -> bool {
    options.dyn_ref::<Object>().is_some_and(|o| {
        Reflect::get(o, &JsValue::from_str("seed"))
            .is_ok_and(|v| !(v.is_undefined() || v.is_null()))
    })
}

/// The shared results one report is made from.
struct ReportView<'a> {
    mask: Option<&'a MaskState>,
    table: Option<&'a TableState>,
}

/// Chooses what goes into the report. Masked points and counts with
/// hidden cells never go together: counting the masked points per area
/// would give the hidden counts back.
fn report_view(st: &SharingState, holds: Option<ReportHolds>) -> Result<ReportView<'_>, JsValue> {
    let (mask, table) = (st.mask.as_ref(), st.table.as_ref());
    let hidden = table.is_some_and(|t| t.table.cells.iter().any(|c| c.suppressed));
    let both = mask.is_some() && table.is_some();
    let refuse = || {
        js_error(
            "choose_report_contents",
            "the report would hold masked points and counts with hidden cells: counting the \
             masked points per area would give the hidden counts back. Choose one: \
             report_holds \"masked_points\" or \"counts\"",
            None,
        )
    };
    match holds {
        None | Some(ReportHolds::Both) if both && hidden => Err(refuse()),
        None | Some(ReportHolds::Both) => Ok(ReportView { mask, table }),
        Some(ReportHolds::MaskedPoints) if mask.is_none() => Err(js_error(
            "nothing_to_report",
            "there are no masked points to report: mask the points first",
            None,
        )),
        Some(ReportHolds::MaskedPoints) => Ok(ReportView { mask, table: None }),
        Some(ReportHolds::Counts) if table.is_none() => Err(js_error(
            "nothing_to_report",
            "there are no counts to report: count the events per area first",
            None,
        )),
        Some(ReportHolds::Counts) => Ok(ReportView { mask: None, table }),
    }
}

// ---------- results ----------

#[derive(Serialize)]
struct UnplacedRow {
    /// 0-based index into the study's events (the order of `mapLayers`).
    index: usize,
    /// Row of the events file (header = row 1).
    row: Option<u64>,
    reason: crate::privacy::UnplacedReason,
    reason_text: String,
}

#[derive(Serialize)]
struct MaskSummary<'a> {
    method: &'static str,
    settings: &'a MaskMethod,
    n_input: usize,
    n_masked: usize,
    displacement: Option<Spread>,
    unplaced: Vec<UnplacedRow>,
    notes: &'a [String],
    basis: Option<KBasis>,
    target_k: Option<usize>,
    k_summary: Option<KSummary>,
    below_target: Vec<UnplacedRow>,
    replaced: bool,
    cautions: [&'static str; 5],
}

fn unplaced_rows(list: &[Unplaced], study: &Study) -> Vec<UnplacedRow> {
    list.iter()
        .map(|u| UnplacedRow {
            index: u.index,
            row: study.events.row().get(u.index).copied(),
            reason: u.reason.clone(),
            reason_text: u.reason.to_string(),
        })
        .collect()
}

fn set(obj: &Object, key: &str, value: &JsValue) -> Result<(), JsValue> {
    Reflect::set(obj, &JsValue::from_str(key), value).map(|_| ())
}

fn mask_js(st: &MaskState, study: &Study, replaced: bool) -> Result<JsValue, JsValue> {
    let m = &st.masked;
    let sum = MaskSummary {
        method: match m.method {
            MaskMethod::Donut(_) => "donut",
            MaskMethod::KAnonymity(_) => "k_anonymity",
        },
        settings: &m.method,
        n_input: m.n_input,
        n_masked: m.x.len(),
        displacement: m.displacement,
        unplaced: unplaced_rows(&m.unplaced, study),
        notes: &m.notes,
        basis: st.k.as_ref().map(|k| k.basis),
        target_k: st.k.as_ref().map(|k| k.target_k),
        k_summary: st.k.as_ref().and_then(|k| k.summary),
        below_target: st
            .k
            .as_ref()
            .map(|k| unplaced_rows(&k.below_target, study))
            .unwrap_or_default(),
        replaced,
        cautions: CAUTIONS,
    };
    let v = to_js(&sum)?;
    let obj: Object = v
        .dyn_into()
        .map_err(|_| js_error("internal", "not an object", None))?;
    let mut xy = Vec::with_capacity(2 * m.x.len());
    for (a, b) in m.x.iter().zip(&m.y) {
        xy.push(*a);
        xy.push(*b);
    }
    set(&obj, "masked", &Float64Array::from(&xy[..]).into())?;
    let src: Vec<u32> = m.source.iter().map(|&i| i as u32).collect();
    set(&obj, "source", &Uint32Array::from(&src[..]).into())?;
    set(
        &obj,
        "displacement_m",
        &Float64Array::from(&m.displacement_m[..]).into(),
    )?;
    match &st.k {
        Some(k) => set(&obj, "k", &Float64Array::from(&k.k[..]).into())?,
        None => set(&obj, "k", &JsValue::NULL)?,
    }
    Ok(obj.into())
}

/// A seed from the platform's cryptographic generator (`crypto.getRandomValues`),
/// present in browsers, workers and Node ≥ 19.
fn secure_seed() -> Result<u64, JsValue> {
    let fail = || {
        js_error(
            "no_random_source",
            "no cryptographic random generator is available to draw the masking seed; \
             give a seed explicitly",
            None,
        )
    };
    let crypto =
        Reflect::get(&js_sys::global(), &JsValue::from_str("crypto")).map_err(|_| fail())?;
    if crypto.is_undefined() || crypto.is_null() {
        return Err(fail());
    }
    let f = Reflect::get(&crypto, &JsValue::from_str("getRandomValues")).map_err(|_| fail())?;
    let f: js_sys::Function = f.dyn_into().map_err(|_| fail())?;
    let buf = Uint32Array::new_with_length(2);
    f.call1(&crypto, &buf).map_err(|_| fail())?;
    Ok((u64::from(buf.get_index(0)) << 32) | u64::from(buf.get_index(1)))
}

fn already_masked() -> JsValue {
    js_error(
        "already_masked",
        "these points are already masked. Masking them again and releasing both copies lets \
         anyone average the copies back towards the true locations (Cassa, Wieland & Mandl \
         2008). Keep the first masked copy, or pass replace: true if the first one was never \
         shared.",
        None,
    )
}

fn created_or_now(c: Option<String>) -> String {
    match c {
        Some(s) if !s.trim().is_empty() => s,
        _ => String::from(js_sys::Date::new_0().to_iso_string()),
    }
}

fn study_kind(p: &Projection) -> CoordKind {
    match *p {
        Projection::TransverseMercator { .. } => CoordKind::LonLat,
        Projection::Planar { unit } => CoordKind::Planar { unit },
    }
}

fn input_err(e: &InputError) -> JsValue {
    js_error(
        e.code(),
        &e.to_string(),
        e.at.as_ref().map(|l| (l.row, l.column.clone())),
    )
}

/// Reads a zones file: one zone per feature (Polygon / MultiPolygon), named
/// by `name_prop` (or `name`, `zone`, `id`), projected with the study's map.
fn read_zones(bytes: &[u8], study: &Study, args: &AggArgs) -> Result<Vec<Zone>, JsValue> {
    let kind = study_kind(&study.projection);
    // Whole file first: coordinate kind and a clear message for bad files.
    let whole = crate::input::read_area(bytes, None).map_err(|e| input_err(&e))?;
    let file_kind = match (whole.coords, kind) {
        (CoordKind::Planar { .. }, CoordKind::Planar { unit }) => CoordKind::Planar { unit },
        (CoordKind::LonLat, CoordKind::Planar { unit }) => CoordKind::Planar { unit },
        (CoordKind::LonLat, CoordKind::LonLat) => CoordKind::LonLat,
        (CoordKind::Planar { .. }, CoordKind::LonLat) => {
            return Err(js_error(
                "mismatch",
                "the zones file has planar coordinates but the events are longitude/latitude; \
                 both must use the same coordinates",
                None,
            ))
        }
    };
    let root: Value = serde_json::from_slice(bytes)
        .map_err(|e| js_error("bad_geojson", &format!("zones file: {e}"), None))?;
    let features: Vec<Value> = match root.get("type").and_then(Value::as_str) {
        Some("FeatureCollection") => root
            .get("features")
            .and_then(Value::as_array)
            .cloned()
            .unwrap_or_default(),
        Some("Feature") => vec![root.clone()],
        _ => {
            vec![serde_json::json!({"type": "Feature", "geometry": root.clone(), "properties": {}})]
        }
    };
    let prop_str = |props: Option<&Value>, key: &str| -> Option<String> {
        props.and_then(|p| p.get(key)).and_then(|v| match v {
            Value::String(s) if !s.trim().is_empty() => Some(s.trim().to_string()),
            Value::Number(n) => Some(n.to_string()),
            _ => None,
        })
    };
    let mut zones = Vec::new();
    for (i, f) in features.iter().enumerate() {
        let props = f.get("properties");
        let geom = f.get("geometry").cloned().unwrap_or(Value::Null);
        if geom.is_null() {
            continue;
        }
        let text = serde_json::to_vec(&geom)
            .map_err(|e| js_error("bad_geojson", &format!("zones file: {e}"), None))?;
        let area = crate::input::read_area(&text, Some(file_kind))
            .map_err(|e| input_err(&e.at(i as u64 + 1, Some("geometry"))))?;
        let polygons: Vec<Vec<Vec<[f64; 2]>>> = area
            .polygons
            .iter()
            .map(|poly| {
                poly.iter()
                    .map(|ring| {
                        ring.iter()
                            .map(|p| {
                                let (e, n) = study.projection.forward(p[0], p[1]);
                                [e, n]
                            })
                            .collect()
                    })
                    .collect()
            })
            .collect();
        let name = match &args.zone_name_property {
            Some(k) => prop_str(props, k),
            None => ["name", "NAME", "Name", "zone", "id"]
                .iter()
                .find_map(|k| prop_str(props, k)),
        }
        .unwrap_or_else(|| format!("zone {}", i + 1));
        let pop_key = args.zone_population_property.as_deref();
        let population = match pop_key {
            Some(k) => props.and_then(|p| p.get(k)),
            None => ["population", "pop", "POP"]
                .iter()
                .find_map(|k| props.and_then(|p| p.get(*k))),
        }
        .and_then(|v| match v {
            Value::Number(n) => n.as_f64(),
            Value::String(s) => s.trim().parse::<f64>().ok(),
            _ => None,
        });
        if let (Some(k), None) = (pop_key, population) {
            return Err(js_error(
                "bad_options",
                &format!(
                    "zone {} (\"{name}\") has no number in its property \"{k}\"",
                    i + 1
                ),
                Some((i as u64 + 1, Some(k.to_string()))),
            ));
        }
        let group = args
            .zone_group_property
            .as_deref()
            .and_then(|k| prop_str(props, k));
        zones.push(Zone {
            name,
            polygons,
            population,
            group,
        });
    }
    if zones.is_empty() {
        return Err(js_error(
            "bad_geojson",
            "the zones file holds no polygons",
            None,
        ));
    }
    Ok(zones)
}

#[derive(Serialize)]
struct AggregateSummary<'a> {
    table: &'a SuppressedTable,
    population_source: Option<&'static str>,
    counts_hidden_from: u64,
    counts_hidden_to: u64,
    threshold_note: &'static str,
    largest_shown: Option<u64>,
    events_counted: u64,
    cautions: [&'static str; 5],
}

const THRESHOLD_NOTE: &str =
    "counts from 1 to 4 hidden by default: common practice, no single source; \
     some policies hide 1–9 or more";

fn table_js(t: &TableState, total: u64) -> Result<JsValue, JsValue> {
    let min = t.table.params.min_count.max(1);
    to_js(&AggregateSummary {
        table: &t.table,
        population_source: t.population_source,
        counts_hidden_from: 1,
        counts_hidden_to: min - 1,
        threshold_note: THRESHOLD_NOTE,
        largest_shown: t.table.cells.iter().filter_map(|c| c.count).max(),
        events_counted: total,
        cautions: CAUTIONS,
    })
}

// ---------- the report ----------

fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            _ => o.push(c),
        }
    }
    o
}

fn num(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    format!("{v:.digits$}")
}

fn metres(v: Option<f64>) -> String {
    v.map_or("—".into(), |v| format!("{} m", num(v, 1)))
}

fn law_words(l: DistanceLaw) -> &'static str {
    match l {
        DistanceLaw::AreaUniform => "even over the ring's area",
        DistanceLaw::DistanceUniform => "even over distance",
    }
}

fn kv(rows: &[(String, String)]) -> String {
    let mut s = String::from("<table class=\"kv\"><tbody>");
    for (k, v) in rows {
        s.push_str(&format!(
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(v)
        ));
    }
    s.push_str("</tbody></table>");
    s
}

fn settings_rows(m: &MaskMethod) -> Vec<(String, String)> {
    let mut r = Vec::new();
    match m {
        MaskMethod::Donut(d) => {
            r.push((
                "Method".into(),
                "random shift within a ring (donut geomasking, Hampton et al. 2010)".into(),
            ));
            r.push(("Smallest shift".into(), metres(Some(d.r_min_m))));
            r.push(("Largest shift".into(), metres(Some(d.r_max_m))));
            r.push(("Distance drawn".into(), law_words(d.law).into()));
            r.push(("Tries per point".into(), d.max_tries.to_string()));
            r.push(("Design mean shift".into(), metres(Some(d.design_mean_m))));
            r.push((
                "Design median shift".into(),
                metres(Some(d.design_median_m)),
            ));
        }
        MaskMethod::KAnonymity(k) => {
            r.push((
                "Method".into(),
                "shift until at least k addresses are as close (spatial k-anonymity)".into(),
            ));
            r.push(("Target k".into(), k.target_k.to_string()));
            r.push((
                "k measured against".into(),
                match k.basis {
                    KBasis::PopulationLayer => format!(
                        "a population layer of {} points",
                        k.population_points.unwrap_or(0)
                    ),
                    KBasis::UniformDensity => format!(
                        "a uniform residential density of {} per km² (expected, not counted)",
                        k.density_per_km2.map_or("—".into(), |d| num(d, 1))
                    ),
                },
            ));
            r.push(("Smallest shift asked".into(), metres(Some(k.r_min_m))));
            if let Some(u) = k.r_min_used_m {
                r.push(("Smallest shift used".into(), metres(Some(u))));
            }
            r.push(("Largest shift".into(), metres(Some(k.r_max_m))));
            r.push(("Distance drawn".into(), law_words(k.law).into()));
            r.push(("Area factor".into(), num(k.area_factor, 2)));
            r.push(("Tries per point".into(), k.max_tries.to_string()));
            r.push((
                "Points short of the target".into(),
                if k.keep_below_target {
                    "kept at their best location and counted below"
                } else {
                    "left out"
                }
                .into(),
            ));
        }
    }
    r.push((
        "Seed".into(),
        "not recorded (with it the shifts could be replayed and undone)".into(),
    ));
    r
}

fn spread_row(label: &str, s: &Option<Spread>, unit: &str, digits: usize) -> String {
    match s {
        Some(s) => format!(
            "<tr><th scope=\"row\">{}</th><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            esc(label),
            num(s.min, digits) + unit,
            num(s.q1, digits) + unit,
            num(s.median, digits) + unit,
            num(s.q3, digits) + unit,
            num(s.max, digits) + unit
        ),
        None => format!("<tr><th scope=\"row\">{}</th><td colspan=\"5\">no points</td></tr>", esc(label)),
    }
}

/// Points below which the original pattern's summaries are not printed
/// (with so few points an average distance is nearly a location).
const REPORT_MIN_ORIGINAL: usize = 5;

fn report_html(
    study: &Study,
    st: &ReportView<'_>,
    args: &ExportArgs,
    created: &str,
) -> Result<(String, Vec<String>), JsValue> {
    let mut sections = Vec::new();
    let mut body = String::new();
    let title = args
        .title
        .clone()
        .filter(|t| !t.trim().is_empty())
        .unwrap_or_else(|| "Shared results".to_string());
    body.push_str(&format!("<h1>{}</h1>", esc(&title)));
    body.push_str(&format!(
        "<p class=\"meta\">Made with Cloister version {} on {}. This report holds no original \
         locations and no coordinates: only settings, distributions, counts and a map drawn \
         from masked or aggregated layers.</p>",
        esc(crate::VERSION),
        esc(created)
    ));
    if let Some(img) = &args.map_image {
        let ok = img.len() < 30_000_000
            && img.strip_prefix("data:image/png;base64,").is_some_and(|b| {
                !b.is_empty()
                    && b.bytes()
                        .all(|c| c.is_ascii_alphanumeric() || c == b'+' || c == b'/' || c == b'=')
            });
        if !ok {
            return Err(js_error(
                "bad_options",
                "map_image must be a PNG data URL (data:image/png;base64,…)",
                None,
            ));
        }
        sections.push("map picture".to_string());
        body.push_str(&format!(
            "<figure><img alt=\"Map of the shared layers\" src=\"{img}\"><figcaption>Map drawn \
             from the shared layers only (masked points and/or counts per area); original \
             points are not in it. The study area outline appears only when it came from a \
             boundary file.</figcaption></figure>"
        ));
    }
    if let Some(ms) = st.mask {
        let m = &ms.masked;
        sections.push("masking settings and results".into());
        body.push_str("<section><h2>Masked points</h2>");
        body.push_str(&format!(
            "<p>{} of {} points were masked and may be shared; {} could not be masked as asked \
             and are left out of every export.</p>",
            m.x.len(),
            m.n_input,
            m.unplaced.len()
        ));
        body.push_str("<h3>Settings</h3>");
        body.push_str(&kv(&settings_rows(&m.method)));
        body.push_str(if ms.k.is_some() {
            "<h3>Achieved shift and k</h3>"
        } else {
            "<h3>Achieved shift</h3>"
        });
        body.push_str("<table><thead><tr><th></th><th>min</th><th>lower quartile</th><th>median</th><th>upper quartile</th><th>max</th></tr></thead><tbody>");
        body.push_str(&spread_row("Shift", &m.displacement, " m", 1));
        body.push_str("</tbody></table>");
        if let Some(k) = &ms.k {
            if let Some(s) = &k.summary {
                body.push_str(&kv(&[
                    ("Target k".into(), k.target_k.to_string()),
                    ("Smallest k".into(), num(s.min, 1)),
                    ("5th percentile of k".into(), num(s.p05, 1)),
                    ("Median k".into(), num(s.median, 1)),
                    (
                        "Share of shared points below the target".into(),
                        format!("{} %", num(100.0 * s.share_below_target, 1)),
                    ),
                ]));
            }
        }
        if !m.unplaced.is_empty() {
            let mut by: Vec<(String, usize)> = Vec::new();
            for u in &m.unplaced {
                let code = serde_json::to_value(&u.reason)
                    .ok()
                    .and_then(|v| v.get("code").and_then(Value::as_str).map(str::to_string))
                    .unwrap_or_default();
                let words = match code.as_str() {
                    "no_place_inside_area" => "no shifted place fell inside the study area",
                    "too_few_population_nearby" => "too few addresses nearby to reach the target",
                    "target_not_reached" => "the target was not reached within the tries",
                    _ => "other",
                };
                match by.iter_mut().find(|(w, _)| w == words) {
                    Some(e) => e.1 += 1,
                    None => by.push((words.to_string(), 1)),
                }
            }
            body.push_str("<h3>Points left out</h3><ul>");
            for (w, n) in by {
                body.push_str(&format!("<li>{n}: {}</li>", esc(&w)));
            }
            body.push_str("</ul>");
        }
        for n in &m.notes {
            body.push_str(&format!("<p class=\"note\">{}</p>", esc(n)));
        }
        // Cost of masking.
        let cost = compare(
            study.events.x(),
            study.events.y(),
            &m.x,
            &m.y,
            &study.window,
            &CostParams::default(),
        )
        .map_err(|e| analysis_error(&e))?;
        let show_orig = m.n_input >= REPORT_MIN_ORIGINAL;
        let o = |v: Option<f64>, d: usize, unit: &str| {
            if show_orig {
                v.map_or("—".to_string(), |v| num(v, d) + unit)
            } else {
                "withheld".to_string()
            }
        };
        let mk = |v: Option<f64>, d: usize, unit: &str| {
            v.map_or("—".to_string(), |v| num(v, d) + unit)
        };
        body.push_str("<h3>What masking costs the analysis</h3><table><thead><tr><th>Summary</th><th>original points</th><th>masked points</th></tr></thead><tbody>");
        body.push_str(&format!(
            "<tr><th scope=\"row\">Points</th><td>{}</td><td>{}</td></tr>",
            cost.original.n, cost.masked.n
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Mean nearest-neighbour distance</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.mean_nn_m, 1, " m"),
            mk(cost.masked.mean_nn_m, 1, " m")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Clark–Evans R</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.clark_evans_r, 3, ""),
            mk(cost.masked.clark_evans_r, 3, "")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Standard distance</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.standard_distance_m, 1, " m"),
            mk(cost.masked.standard_distance_m, 1, " m")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Shift of the mean centre</th><td colspan=\"2\">{}</td></tr>",
            mk(cost.centre_shift_m, 1, " m")
        ));
        if let Some(s) = &cost.surface {
            body.push_str(&format!(
                "<tr><th scope=\"row\">Kernel intensity surface (bandwidth {}): largest / mean change, share of the original peak</th><td colspan=\"2\">{} % / {} %</td></tr>",
                metres(Some(s.bandwidth_m)),
                num(100.0 * s.max_abs_diff_rel, 1),
                num(100.0 * s.mean_abs_diff_rel, 1)
            ));
        }
        body.push_str("</tbody></table>");
        if !show_orig {
            body.push_str("<p class=\"note\">With fewer than 5 points the original pattern's summaries are withheld: they would come close to giving locations away.</p>");
        }
        body.push_str("<p class=\"note\">Mean nearest-neighbour distance and Clark–Evans R = observed mean / (0.5/√(n/area)) after Clark &amp; Evans (1954), without edge correction; the kernel surfaces use one Gaussian bandwidth for both patterns.</p>");
        body.push_str("</section>");
    }
    if let Some(ts) = st.table {
        let t = &ts.table;
        sections.push("counts per area with suppression and audit".into());
        body.push_str("<section><h2>Counts per area</h2>");
        let layout = match &t.layout {
            Layout::Grid {
                shape,
                cell_size_m,
                rows,
                cols,
                ..
            } => match shape {
                CellShape::Square => format!(
                    "square cells of {} m side, {rows} rows × {cols} columns",
                    num(*cell_size_m, 0)
                ),
                CellShape::Hexagon => format!(
                    "hexagons of {} m side, {rows} rows × {cols} columns",
                    num(*cell_size_m, 0)
                ),
            },
            Layout::Zones { zones } => format!("{zones} zones from a file"),
        };
        let min = t.params.min_count.max(1);
        let mut rows = vec![
            ("Areas".to_string(), layout),
            (
                "Counts hidden".to_string(),
                if min > 1 {
                    format!(
                        "1 to {} (threshold {min}; the default 5 is common practice, no single source)",
                        min - 1
                    )
                } else {
                    "none".into()
                },
            ),
            (
                "Zeros".to_string(),
                if t.params.suppress_zeros {
                    "hidden"
                } else {
                    "shown"
                }
                .into(),
            ),
            (
                "Cells hidden in all".to_string(),
                (t.n_primary + t.n_complementary).to_string(),
            ),
            (
                "Of these, hidden so that no hidden count follows from the totals".to_string(),
                t.n_complementary.to_string(),
            ),
            ("Totals withheld".to_string(), t.totals_withheld.to_string()),
            (
                "Audit".to_string(),
                if t.audit.safe {
                    format!(
                        "no hidden count can be recovered from the published totals (checked: single totals, linear combinations, bounds{})",
                        if t.audit.exact.is_some() {
                            ", exhaustive whole-number search"
                        } else {
                            "; the exhaustive search was skipped, table too large"
                        }
                    )
                } else {
                    "a hidden count may be recoverable: do not publish this table".to_string()
                },
            ),
        ];
        if let Some(src) = ts.population_source {
            rows.push((
                "Rates".to_string(),
                format!(
                    "per {} of the population ({src}); shown only for shown counts and a population of at least {}; flagged unreliable below a count of {}",
                    num(t.params.rate_per, 0),
                    num(t.params.rate_min_population, 0),
                    t.params.rate_unreliable_below
                ),
            ));
        }
        body.push_str(&kv(&rows));
        for w in &t.warnings {
            body.push_str(&format!("<p class=\"note\">{}</p>", esc(w)));
        }
        let zones = ts.zone_names.is_some();
        let with_pop = ts.population_source.is_some();
        let mut listed = 0;
        let mut items = String::new();
        for c in &t.cells {
            if !zones && !c.suppressed && c.count.is_none_or(|v| v == 0) {
                continue;
            }
            listed += 1;
            let mut line = format!(
                "<li><span>{}</span> <b>{}</b>",
                esc(&c.id),
                c.count.map_or("hidden".to_string(), |v| v.to_string())
            );
            if with_pop {
                line.push_str(&format!(
                    " <small>pop. {}, rate {}</small>",
                    c.population.map_or("—".into(), |p| num(p, 0)),
                    c.rate.map_or("—".into(), |r| {
                        num(r, 2)
                            + if c.rate_unreliable {
                                " (unreliable)"
                            } else {
                                ""
                            }
                    })
                ));
            }
            line.push_str("</li>");
            items.push_str(&line);
        }
        body.push_str(&format!(
            "<h3>Count per area</h3><ul class=\"cells{}\">{items}</ul>",
            if with_pop { " wide" } else { "" }
        ));
        if !zones {
            body.push_str(&format!(
                "<p class=\"note\">{listed} areas listed; areas not listed have a count of 0. \
                 Ids are r&lt;row&gt;c&lt;column&gt; of the grid; \"hidden\" marks a suppressed count.</p>"
            ));
        }
        body.push_str("<h3>Published totals</h3><ul class=\"cells\">");
        for l in &t.lines {
            let name = match l.kind {
                LineKind::Grand => "all areas".to_string(),
                _ => l.name.clone(),
            };
            body.push_str(&format!(
                "<li><span>{}</span> <b>{}</b></li>",
                esc(&name),
                l.total.map_or("withheld".to_string(), |v| v.to_string())
            ));
        }
        body.push_str(&format!(
            "<li><span>outside every area</span> <b>{}</b></li></ul>",
            t.outside.map_or("hidden".to_string(), |v| v.to_string())
        ));
        body.push_str("</section>");
    }
    if st.mask.is_none() && st.table.is_none() {
        return Err(js_error(
            "nothing_to_report",
            "mask the points or count them per area first: the report holds only masked or \
             aggregated results",
            None,
        ));
    }
    sections.push("cautions".into());
    body.push_str("<section><h2>Cautions</h2><ul>");
    let mut cautions: Vec<String> = CAUTIONS.iter().map(|s| s.to_string()).collect();
    if let Some(ms) = st.mask {
        let p = what_leaves(
            &ExportContent::MaskedPoints(&ms.masked),
            &ExportOptions::default(),
        );
        cautions.extend(p.cautions);
    }
    if let Some(ts) = st.table {
        let p = what_leaves(&ExportContent::Table(&ts.table), &ExportOptions::default());
        cautions.extend(p.cautions);
    }
    cautions.dedup();
    for c in &cautions {
        body.push_str(&format!("<li>{}</li>", esc(c)));
    }
    body.push_str("</ul></section>");
    let html = format!(
        "<!doctype html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"{REPORT_CSP}\">\n\
         <meta name=\"referrer\" content=\"no-referrer\">\n\
         <title>{}</title>\n<style>{REPORT_CSS}</style>\n</head>\n<body>\n{body}\n\
         <footer>Cloister {} · {} · opens offline; print it to PDF from the browser.</footer>\n</body>\n</html>\n",
        esc(&title),
        esc(crate::VERSION),
        esc(created)
    );
    Ok((html, sections))
}

const REPORT_CSS: &str = "body{font-family:system-ui,\"DejaVu Sans\",sans-serif;color:#1c2430;max-width:60rem;margin:1.5rem auto;padding:0 1rem;line-height:1.4;font-size:14px}\
h1{font-size:1.5rem;margin:0 0 .3rem}h2{font-size:1.15rem;border-bottom:2px solid #1f5d7a;padding-bottom:.15rem;margin-top:1.6rem}h3{font-size:1rem;margin:1rem 0 .3rem}\
table{border-collapse:collapse;margin:.3rem 0;font-size:.9rem}th,td{border:1px solid #c9d0d8;padding:.15rem .45rem;text-align:left;vertical-align:top}thead th{background:#f2f4f6}\
table.kv th{background:#f7f8f9;font-weight:600;max-width:22rem}td{font-variant-numeric:tabular-nums}\
figure{margin:1rem 0}figure img{max-width:100%;border:1px solid #c9d0d8}figcaption{font-size:.85rem;color:#4d5866}\
.meta,.note,footer{color:#4d5866;font-size:.85rem}footer{margin-top:2rem;border-top:1px solid #c9d0d8;padding-top:.4rem}\
ul.cells{columns:7 7.5rem;list-style:none;padding:0;margin:.3rem 0;font-size:.85rem;font-variant-numeric:tabular-nums}ul.cells.wide{columns:3 16rem}ul.cells li{break-inside:avoid;padding:.05rem 0}ul.cells span{color:#4d5866}ul.cells small{color:#4d5866}\
@media print{body{margin:0;max-width:none;font-size:11px}section{break-inside:auto}table,figure{break-inside:avoid}h2{break-after:avoid}}";

#[derive(Serialize)]
struct ReportPreview {
    content: &'static str,
    format: &'static str,
    fields: Vec<String>,
    rows: usize,
    metadata_keys: Vec<String>,
    contains_original_coordinates: bool,
    label: Option<String>,
    points_left_out: usize,
    cautions: Vec<String>,
}

#[derive(Serialize)]
struct ReportFile {
    text: String,
    file_name: String,
    mime: String,
    preview: ReportPreview,
}

fn state(s: &Session) -> Option<&SharingState> {
    s.extras
        .get(KEY)
        .and_then(|b| b.downcast_ref::<SharingState>())
}

impl Session {
    /// Runs `f` on the module state (created when missing).
    fn with_sharing(&mut self, f: impl FnOnce(&mut SharingState)) {
        let mut st = self.take_extra::<SharingState>(KEY).unwrap_or_default();
        f(&mut st);
        self.extras.insert(KEY, Box::new(st));
    }

    fn keep_mask(&mut self, st: MaskState, replaced: bool) -> Result<JsValue, JsValue> {
        self.with_sharing(|s| s.mask = Some(st));
        let study = self.study_ref()?;
        match state(self).and_then(|s| s.mask.as_ref()) {
            Some(m) => mask_js(m, study, replaced),
            None => Err(js_error("internal", "masked copy not kept", None)),
        }
    }

    fn content<'a>(&'a self, what: &str, confirm: bool) -> Result<ExportContent<'a>, JsValue> {
        let st = state(self);
        match what {
            "masked_points" => st
                .and_then(|s| s.mask.as_ref())
                .map(|m| ExportContent::MaskedPoints(&m.masked))
                .ok_or_else(|| js_error("nothing_masked", "mask the points first", None)),
            "aggregates" => st
                .and_then(|s| s.table.as_ref())
                .map(|t| ExportContent::Table(&t.table))
                .ok_or_else(|| {
                    js_error(
                        "nothing_aggregated",
                        "count the points per area first",
                        None,
                    )
                }),
            "unmasked_points" => {
                if !confirm {
                    return Err(js_error(
                        "confirm_needed",
                        "this export holds the ORIGINAL locations (unmasked, internal use only); \
                         pass confirm_unmasked: true to write it",
                        None,
                    ));
                }
                let s = self.study_ref()?;
                Ok(ExportContent::UnmaskedInternal {
                    x: s.events.x(),
                    y: s.events.y(),
                })
            }
            other => Err(js_error(
                "bad_options",
                &format!(
                    "unknown export \"{other}\" (use masked_points, aggregates, report or \
                     unmasked_points)"
                ),
                None,
            )),
        }
    }

    fn export_options(&self, args: &ExportArgs) -> Result<ExportOptions, JsValue> {
        let s = self.study_ref()?;
        let coordinates = args.coordinates.unwrap_or(if s.projection.is_geographic() {
            CoordinateOutput::LonLat
        } else {
            CoordinateOutput::Metres
        });
        if coordinates == CoordinateOutput::LonLat && !s.projection.is_geographic() {
            return Err(js_error(
                "bad_options",
                "longitude/latitude output needs events given in longitude/latitude; these \
                 are planar, so choose metres",
                None,
            ));
        }
        Ok(ExportOptions {
            format: args.format.unwrap_or_default(),
            coordinates,
            decimals: args.decimals,
            created: created_or_now(args.created.clone()),
        })
    }

    fn report_preview(&self, args: &ExportArgs, created: &str) -> Result<ReportFile, JsValue> {
        let study = self.study_ref()?;
        let empty = SharingState::default();
        let st = report_view(state(self).unwrap_or(&empty), args.report_holds)?;
        let (html, sections) = report_html(study, &st, args, created)?;
        let mut cautions: Vec<String> = CAUTIONS.iter().map(|s| s.to_string()).collect();
        if let Some(m) = st.mask {
            cautions.extend(m.masked.notes.iter().cloned());
        }
        if let Some(t) = st.table {
            cautions.extend(t.table.warnings.iter().cloned());
        }
        let rows = st.table.map_or(0, |t| t.table.cells.len());
        Ok(ReportFile {
            text: html,
            file_name: "sharing-report.html".into(),
            mime: "text/html".into(),
            preview: ReportPreview {
                content: "report",
                format: "html",
                fields: sections,
                rows,
                metadata_keys: ["tool", "version", "created"]
                    .into_iter()
                    .map(String::from)
                    .chain(st.mask.map(|_| "masking settings (no seed)".to_string()))
                    .collect(),
                contains_original_coordinates: false,
                label: None,
                points_left_out: st.mask.map_or(0, |m| m.masked.unplaced.len()),
                cautions,
            },
        })
    }
}

#[wasm_bindgen]
impl Session {
    /// Masks the events with a ring-shaped random shift (donut geomasking).
    #[wasm_bindgen(js_name = maskDonut)]
    pub fn mask_donut(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "MaskDonutOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let given_seed = has_seed(&params);
        let (mut p, session) = decode::<DonutParams>(params, self.extent_m())?;
        let replaced = state(self).is_some_and(|s| s.mask.is_some());
        if replaced && !replace_flag(&session) {
            return Err(already_masked());
        }
        if !given_seed {
            p.seed = secure_seed()?;
        }
        let s = self.study_ref()?;
        let masked = donut_mask(s.events.x(), s.events.y(), &s.window, &p)
            .map_err(|e| analysis_error(&e))?;
        self.keep_mask(MaskState { masked, k: None }, replaced)
    }

    /// Masks the events so each reaches a spatial k-anonymity target.
    #[wasm_bindgen(js_name = maskKAnonymity)]
    pub fn mask_k_anonymity(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "MaskKAnonymityOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let given_seed = has_seed(&params);
        let (mut p, session) = decode::<KAnonParams>(params, self.extent_m())?;
        let replaced = state(self).is_some_and(|s| s.mask.is_some());
        if replaced && !replace_flag(&session) {
            return Err(already_masked());
        }
        if !given_seed {
            p.seed = secure_seed()?;
        }
        let against: Option<Against> = match session.get("against") {
            Some(v) => serde_json::from_value(v.clone()).map_err(|e| {
                js_error(
                    "bad_options",
                    &format!(
                        "maskKAnonymity: option \"against\": {}",
                        crate::params::plain_words(&e.to_string())
                    ),
                    None,
                )
            })?,
            None => None,
        };
        let s = self.study_ref()?;
        let against = against.unwrap_or(if s.controls.is_some() {
            Against::Population
        } else {
            Against::Density
        });
        let population = match against {
            Against::Population => match &s.controls {
                Some(c) => Some((c.x(), c.y())),
                None => {
                    return Err(js_error(
                        "nothing_loaded",
                        "k-anonymity against a population needs a population (controls) file; \
                         load one, or give a residential density per km²",
                        None,
                    ))
                }
            },
            Against::Density => None,
        };
        if against == Against::Population {
            p.density_per_km2 = None;
        }
        let r = kanon_mask(s.events.x(), s.events.y(), population, &s.window, &p)
            .map_err(|e| analysis_error(&e))?;
        let k = KInfo {
            basis: r.basis,
            target_k: r.target_k,
            k: r.k,
            summary: r.k_summary,
            below_target: r.below_target,
        };
        self.keep_mask(
            MaskState {
                masked: r.masked,
                k: Some(k),
            },
            replaced,
        )
    }

    /// The kept masked copy, or null.
    #[wasm_bindgen(js_name = maskResult)]
    pub fn mask_result(&self) -> Result<JsValue, JsValue> {
        let study = self.study_ref()?;
        match state(self).and_then(|s| s.mask.as_ref()) {
            Some(m) => mask_js(m, study, false),
            None => Ok(JsValue::NULL),
        }
    }

    /// Original vs masked: mean nearest-neighbour distance, Clark–Evans R,
    /// centre shift, standard distance, kernel surface shift.
    #[wasm_bindgen(js_name = maskingCost)]
    pub fn masking_cost(
        &self,
        #[wasm_bindgen(unchecked_param_type = "MaskingCostOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<CostParams>(params, self.extent_m())?;
        let s = self.study_ref()?;
        let m = state(self)
            .and_then(|st| st.mask.as_ref())
            .ok_or_else(|| js_error("nothing_masked", "mask the points first", None))?;
        let mut c = compare(
            s.events.x(),
            s.events.y(),
            &m.masked.x,
            &m.masked.y,
            &s.window,
            &p,
        )
        .map_err(|e| analysis_error(&e))?;
        // L(r) − r of both patterns on one r grid (isotropic correction), so
        // the analyst sees how masking moves the clustering curve.
        if let Some(masked) = crate::study::Pattern::from_xy(m.masked.x.clone(), m.masked.y.clone())
        {
            use crate::distance::functions::{distance_functions, FunctionParams};
            let fp = FunctionParams::default();
            if let Ok(o) = distance_functions(&s.events, &s.window, &fp) {
                let fp2 = FunctionParams {
                    r_max: Some(o.r_max),
                    ..fp
                };
                if let Ok(k) = distance_functions(&masked, &s.window, &fp2) {
                    let lr = |d: &crate::distance::functions::DistanceFunctions| -> Vec<f64> {
                        d.l.iter().zip(&d.r).map(|(l, r)| l - r).collect()
                    };
                    if k.r.len() == o.r.len() {
                        let _ = c.attach_l_curves(o.r.clone(), lr(&o), lr(&k));
                    }
                }
            }
        }
        to_js(&c)
    }

    /// Counts the events per cell or zone, suppresses small counts (with
    /// complementary suppression) and audits the result. Kept for export.
    pub fn aggregate(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "AggregateOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (mut a, zones) = decode_with_bytes::<AggArgs>(params, "zones", self.extent_m())?;
        a.zones = zones;
        let s = self.study_ref()?;
        let sp = a.suppression();
        let population = s.controls.as_ref().map(|c| (c.x(), c.y()));
        let (agg, pop_source, names) = match a.layout {
            AggLayout::Square | AggLayout::Hexagon => {
                let size = a.cell_size_m;
                let b = s.window.bbox();
                let origin = [(b[0] / size).floor() * size, (b[1] / size).floor() * size];
                let p = AggregateParams {
                    shape: if a.layout == AggLayout::Hexagon {
                        CellShape::Hexagon
                    } else {
                        CellShape::Square
                    },
                    cell_size_m: size,
                    orientation: a.orientation,
                    origin: Some(origin),
                };
                let verts: Vec<[f64; 2]> = s
                    .window
                    .polygons()
                    .iter()
                    .flatten()
                    .flatten()
                    .copied()
                    .collect();
                let agg = aggregate_grid(
                    s.events.x(),
                    s.events.y(),
                    &s.window,
                    &verts,
                    population,
                    &p,
                )
                .map_err(|e| analysis_error(&e))?;
                (
                    agg,
                    population.map(|_| "points of the population layer"),
                    None,
                )
            }
            AggLayout::Zones => {
                let bytes = a.zones.as_deref().ok_or_else(|| {
                    js_error(
                        "bad_options",
                        "counting per zone needs the zones file (GeoJSON polygons)",
                        None,
                    )
                })?;
                let zones = read_zones(bytes, s, &a)?;
                let all_pop = zones.iter().all(|z| z.population.is_some());
                let names = zones.iter().map(|z| z.name.clone()).collect();
                let agg = aggregate_zones(s.events.x(), s.events.y(), &zones, population)
                    .map_err(|e| analysis_error(&e))?;
                let src = if all_pop {
                    Some("the zones file")
                } else {
                    population.map(|_| "points of the population layer")
                };
                (agg, src, Some(names))
            }
        };
        let total = agg.total;
        let table = suppress(&agg, &sp);
        let ts = TableState {
            table,
            population_source: pop_source,
            zone_names: names,
        };
        let out = table_js(&ts, total)?;
        self.with_sharing(|s| s.table = Some(ts));
        Ok(out)
    }

    /// What a file would contain, without writing it.
    #[wasm_bindgen(js_name = exportPreview)]
    pub fn export_preview(
        &self,
        what: &str,
        #[wasm_bindgen(unchecked_param_type = "ExportFileOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (a, _) = decode::<ExportArgs>(options, None)?;
        if what == "report" {
            let created = created_or_now(a.created.clone());
            return to_js(&self.report_preview(&a, &created)?.preview);
        }
        let opts = self.export_options(&a)?;
        // The preview of the unmasked export is allowed without confirmation:
        // it is how the page shows what that file would hold.
        let content = match what {
            "unmasked_points" => self.content(what, true)?,
            _ => self.content(what, a.confirm_unmasked)?,
        };
        to_js(&what_leaves(&content, &opts))
    }

    /// Writes a file: `{text, file_name, mime, preview}`.
    #[wasm_bindgen(js_name = exportFile)]
    pub fn export_file(
        &self,
        what: &str,
        #[wasm_bindgen(unchecked_param_type = "ExportFileOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (a, _) = decode::<ExportArgs>(options, None)?;
        if what == "report" {
            let created = created_or_now(a.created.clone());
            return to_js(&self.report_preview(&a, &created)?);
        }
        let opts = self.export_options(&a)?;
        let content = self.content(what, a.confirm_unmasked)?;
        let s = self.study_ref()?;
        let proj = s.projection;
        let inverse = move |x: f64, y: f64| proj.inverse(x, y);
        let back: Option<&dyn Fn(f64, f64) -> (f64, f64)> = if proj.is_geographic() {
            Some(&inverse)
        } else {
            None
        };
        let f = export(&content, &opts, back).map_err(|e| analysis_error(&e))?;
        to_js(&f)
    }

    /// The cautions the page shows beside the sharing tools.
    #[wasm_bindgen(js_name = sharingCautions)]
    pub fn sharing_cautions(&self) -> Result<JsValue, JsValue> {
        to_js(&CAUTIONS)
    }
}
