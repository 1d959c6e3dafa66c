//! GeoJSON: point layers (FeatureCollection of Point / MultiPoint) and study areas.
//!
//! Format: RFC 7946 (Butler et al. 2016, "The GeoJSON Format"). Parsed by
//! serde_json into a small JSON tree of our own ([`Json`]) that keeps object
//! members in file order (serde_json's own `Value` sorts them unless its
//! crate-wide `preserve_order` feature is on, which would change every other
//! module's JSON output). Positions are `[x, y, ...]` with extra members (z)
//! ignored. Member names are case-sensitive, as the RFC says; a repeated
//! member name counts with its last value, as in serde_json.
//!
//! **Points.** The root may be a FeatureCollection, a single Feature, or a
//! bare Point / MultiPoint geometry. Feature *n* of the `features` array is
//! row *n* (1-based). A MultiPoint gives one point per member, all with the
//! feature's row number; so for GeoJSON `rows_read` counts *points read*
//! (a MultiPoint of k members counts k, a feature without usable geometry
//! counts 1), which keeps `accepted + rejected == rows_read`. A feature
//! whose geometry is missing, null or not a point type is rejected with
//! reason `BadGeometry` (column `"geometry"`). Properties act as columns:
//! their names (first-seen order) go in `columns` and time / category /
//! weight are detected from them as for CSV headers ([`super::columns`]).
//! Time properties must be strings; weight may be a number or a numeric
//! string; a missing or null property counts as an empty cell.
//!
//! **Coordinate kind** (unless given): lon/lat, as RFC 7946 prescribes, when
//! every coordinate lies within [-180, 180] × [-90, 90]; otherwise planar
//! metres (older files in a projected system). Range rejections apply only
//! when the caller declares lon/lat.
//!
//! **Study area.** Polygon / MultiPolygon as a bare geometry, a Feature, a
//! FeatureCollection (all polygons together) or a GeometryCollection. Holes
//! are kept. Features with null geometry are skipped; points or lines are an
//! error ("expected polygons"). Polygon validity (enough vertices, area) is
//! checked later by [`crate::window`].

use super::columns::{self, AttrRole};
use super::layer::{keep_if_readable, range_problem, weight_value, Builder};
use super::text::cut_value;
use super::time::{parse_time, readable_any_order, OrderDetector};
use super::{
    CoordKind, LengthUnit, RawArea, RawLayer, ReadOptions, RejectReason, ResolvedMapping,
    SourceFormat,
};
use crate::error::{InputError, InputErrorKind};
use serde::de::{Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};
use std::borrow::Cow;
use std::collections::HashSet;
use std::fmt;

/// Column name used in rejections about a feature's geometry.
pub const GEOMETRY_COLUMN: &str = "geometry";

pub(super) fn bad_geojson(detail: impl Into<String>) -> InputError {
    InputError::new(InputErrorKind::BadGeoJson {
        detail: detail.into(),
    })
}

pub(super) fn parse_json(text: &str) -> Result<Json, InputError> {
    serde_json::from_str(text).map_err(|e| {
        InputError::new(InputErrorKind::BadJson {
            detail: e.to_string(),
        })
    })
}

/// A JSON value with object members kept in file order.
#[derive(Debug, Clone, PartialEq)]
pub enum Json {
    Null,
    Bool(bool),
    Number(serde_json::Number),
    String(String),
    Array(Vec<Json>),
    Object(Obj),
}

/// A JSON object: members in file order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Obj(Vec<(String, Json)>);

impl Obj {
    /// The value of member `key` (the last one if repeated).
    pub fn get(&self, key: &str) -> Option<&Json> {
        self.0.iter().rev().find(|(k, _)| k == key).map(|(_, v)| v)
    }
    /// Member names in file order (repeats included).
    pub fn keys(&self) -> impl Iterator<Item = &String> {
        self.0.iter().map(|(k, _)| k)
    }
}

impl Json {
    pub fn get(&self, key: &str) -> Option<&Json> {
        self.as_object()?.get(key)
    }
    pub fn as_object(&self) -> Option<&Obj> {
        match self {
            Json::Object(o) => Some(o),
            _ => None,
        }
    }
    pub fn as_array(&self) -> Option<&Vec<Json>> {
        match self {
            Json::Array(a) => Some(a),
            _ => None,
        }
    }
    pub fn as_str(&self) -> Option<&str> {
        match self {
            Json::String(s) => Some(s),
            _ => None,
        }
    }
    pub fn as_f64(&self) -> Option<f64> {
        match self {
            Json::Number(n) => n.as_f64(),
            _ => None,
        }
    }
    pub fn is_null(&self) -> bool {
        matches!(self, Json::Null)
    }
}

/// Compact JSON text, for showing a value in a message.
impl fmt::Display for Json {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let quoted = |s: &str| serde_json::to_string(s).unwrap_or_default();
        match self {
            Json::Null => f.write_str("null"),
            Json::Bool(b) => write!(f, "{b}"),
            Json::Number(n) => write!(f, "{n}"),
            Json::String(s) => f.write_str(&quoted(s)),
            Json::Array(a) => {
                f.write_str("[")?;
                for (i, v) in a.iter().enumerate() {
                    if i > 0 {
                        f.write_str(",")?;
                    }
                    write!(f, "{v}")?;
                }
                f.write_str("]")
            }
            Json::Object(o) => {
                f.write_str("{")?;
                for (i, (k, v)) in o.0.iter().enumerate() {
                    if i > 0 {
                        f.write_str(",")?;
                    }
                    write!(f, "{}:{v}", quoted(k))?;
                }
                f.write_str("}")
            }
        }
    }
}

impl<'de> Deserialize<'de> for Json {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Json, D::Error> {
        d.deserialize_any(JsonVisitor)
    }
}

struct JsonVisitor;

impl<'de> Visitor<'de> for JsonVisitor {
    type Value = Json;
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str("any JSON value")
    }
    fn visit_bool<E>(self, v: bool) -> Result<Json, E> {
        Ok(Json::Bool(v))
    }
    fn visit_i64<E>(self, v: i64) -> Result<Json, E> {
        Ok(Json::Number(v.into()))
    }
    fn visit_u64<E>(self, v: u64) -> Result<Json, E> {
        Ok(Json::Number(v.into()))
    }
    fn visit_f64<E>(self, v: f64) -> Result<Json, E> {
        Ok(serde_json::Number::from_f64(v).map_or(Json::Null, Json::Number))
    }
    fn visit_str<E>(self, v: &str) -> Result<Json, E> {
        Ok(Json::String(v.to_string()))
    }
    fn visit_string<E>(self, v: String) -> Result<Json, E> {
        Ok(Json::String(v))
    }
    fn visit_unit<E>(self) -> Result<Json, E> {
        Ok(Json::Null)
    }
    fn visit_none<E>(self) -> Result<Json, E> {
        Ok(Json::Null)
    }
    fn visit_some<D: Deserializer<'de>>(self, d: D) -> Result<Json, D::Error> {
        Json::deserialize(d)
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Json, A::Error> {
        let mut v = Vec::with_capacity(seq.size_hint().unwrap_or(0).min(4096));
        while let Some(x) = seq.next_element()? {
            v.push(x);
        }
        Ok(Json::Array(v))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Json, A::Error> {
        let mut v = Vec::new();
        while let Some((k, x)) = map.next_entry::<String, Json>()? {
            v.push((k, x));
        }
        Ok(Json::Object(Obj(v)))
    }
}

fn json_kind(v: &Json) -> &'static str {
    match v {
        Json::Null => "null",
        Json::Bool(_) => "true/false",
        Json::Number(_) => "a number",
        Json::String(_) => "a string",
        Json::Array(_) => "an array",
        Json::Object(_) => "an object",
    }
}

/// The root object and its `type`.
pub(super) fn root_type(root: &Json) -> Result<(&Obj, &str), InputError> {
    let obj = root.as_object().ok_or_else(|| {
        bad_geojson(format!(
            "expected a GeoJSON object (FeatureCollection, Feature or geometry), found {}",
            json_kind(root)
        ))
    })?;
    let t = obj
        .get("type")
        .and_then(Json::as_str)
        .ok_or_else(|| bad_geojson("the JSON has no \"type\" member, so it is not GeoJSON"))?;
    Ok((obj, t))
}

pub(super) fn features_of(obj: &Obj) -> Result<&Vec<Json>, InputError> {
    obj.get("features")
        .and_then(Json::as_array)
        .ok_or_else(|| bad_geojson("a FeatureCollection needs a \"features\" array"))
}

/// True for the GeoJSON geometry type names.
pub(super) fn is_geometry_type(t: &str) -> bool {
    matches!(
        t,
        "Point"
            | "MultiPoint"
            | "LineString"
            | "MultiLineString"
            | "Polygon"
            | "MultiPolygon"
            | "GeometryCollection"
    )
}

/// One feature as seen by the point reader.
struct Feat<'a> {
    geometry: Option<&'a Json>,
    properties: Option<&'a Obj>,
}

fn feat_of(v: &Json) -> Feat<'_> {
    let obj = v.as_object();
    Feat {
        geometry: obj.and_then(|o| o.get("geometry")),
        properties: obj
            .and_then(|o| o.get("properties"))
            .and_then(Json::as_object),
    }
}

/// A point read from a geometry, or why it could not be read.
type PointResult = Result<(f64, f64), (RejectReason, String)>;

fn position(v: &Json) -> PointResult {
    let bad = || (RejectReason::BadGeometry, cut_value(&v.to_string()));
    let arr = v.as_array().ok_or_else(bad)?;
    if arr.len() < 2 {
        return Err(bad());
    }
    let num = |c: &Json| {
        c.as_f64().filter(|f| f.is_finite()).ok_or_else(|| {
            let shown = c.as_str().map_or_else(|| c.to_string(), str::to_string);
            (RejectReason::NotANumber, cut_value(&shown))
        })
    };
    Ok((num(&arr[0])?, num(&arr[1])?))
}

/// The points of a feature's geometry (at least one entry).
fn points_of(geometry: Option<&Json>) -> Vec<PointResult> {
    let bad = |what: &str| vec![Err((RejectReason::BadGeometry, what.to_string()))];
    let g = match geometry {
        None => return bad("no geometry"),
        Some(Json::Null) => return bad("null geometry"),
        Some(g) => g,
    };
    let Some(t) = g.get("type").and_then(Json::as_str) else {
        return bad("not a geometry");
    };
    let coords = g.get("coordinates");
    match t {
        "Point" => match coords {
            Some(c) => vec![position(c)],
            None => bad("Point without coordinates"),
        },
        "MultiPoint" => match coords.and_then(Json::as_array) {
            Some(a) if !a.is_empty() => a.iter().map(position).collect(),
            _ => bad("MultiPoint without points"),
        },
        other => bad(&cut_value(other)),
    }
}

/// A property value as cell text; `None` for missing or null.
fn prop_text<'a>(props: Option<&'a Obj>, name: &str) -> Option<Cow<'a, str>> {
    match props?.get(name)? {
        Json::Null => None,
        Json::String(s) => Some(Cow::Borrowed(s.as_str())),
        Json::Bool(b) => Some(Cow::Borrowed(if *b { "true" } else { "false" })),
        other => Some(Cow::Owned(other.to_string())),
    }
}

/// Reads a FeatureCollection (or single Feature / geometry) of points.
pub fn read_points(text: &str, opts: &ReadOptions) -> Result<RawLayer, InputError> {
    let root = parse_json(text)?;
    let (obj, t) = root_type(&root)?;
    let feats: Vec<Feat> = match t {
        "FeatureCollection" => features_of(obj)?.iter().map(feat_of).collect(),
        "Feature" => vec![feat_of(&root)],
        "Point" | "MultiPoint" => vec![Feat {
            geometry: Some(&root),
            properties: None,
        }],
        g if is_geometry_type(g) => {
            return Err(bad_geojson(format!(
                "expected points, found a {g} (is this the study-area file?)"
            )))
        }
        other => {
            return Err(bad_geojson(format!(
                "unknown GeoJSON type \"{}\"",
                cut_value(other)
            )))
        }
    };

    // Property names as columns, in first-seen order.
    let mut columns: Vec<String> = Vec::new();
    let mut seen: HashSet<&str> = HashSet::new();
    for f in &feats {
        if let Some(p) = f.properties {
            for k in p.keys() {
                if seen.insert(k.as_str()) {
                    columns.push(k.clone());
                }
            }
        }
    }
    let attrs = columns::resolve_attributes(&columns, &opts.mapping, &[])?;
    let given_order = opts.date_order;
    let sample = &feats[..feats.len().min(super::layer::SAMPLE_RECORDS)];
    let sample_texts = |r: Option<AttrRole>| -> Vec<String> {
        let Some(r) = r else { return Vec::new() };
        let name = &columns[r.index];
        sample
            .iter()
            .filter_map(|f| prop_text(f.properties, name))
            .map(|c| c.into_owned())
            .collect()
    };
    let times = sample_texts(attrs.time);
    let time_role = keep_if_readable(attrs.time, times.iter().map(String::as_str), |s| {
        readable_any_order(s, given_order)
    });
    let untils = sample_texts(attrs.time_until);
    let until_role = time_role.and(keep_if_readable(
        attrs.time_until,
        untils.iter().map(String::as_str),
        |s| readable_any_order(s, given_order),
    ));
    // Date order from every feature's time text, unless given.
    let date_order = time_role.map(|r| {
        let mut det = OrderDetector::default();
        if given_order.is_none() {
            for (i, f) in feats.iter().enumerate() {
                if let Some(Json::String(s)) = f.properties.and_then(|p| p.get(&columns[r.index])) {
                    det.add(i as u64 + 1, s);
                }
                let until = until_role.and_then(|u| f.properties?.get(&columns[u.index]));
                if let Some(Json::String(s)) = until {
                    det.add(i as u64 + 1, s);
                }
            }
        }
        det.finish(given_order)
    });
    let order = date_order
        .as_ref()
        .map_or(super::DateOrder::DayMonthYear, |d| d.used);
    let weights = sample_texts(attrs.weight);
    let weight_role = keep_if_readable(attrs.weight, weights.iter().map(String::as_str), |s| {
        weight_value(s, false, &mut String::new()).is_some()
    });
    let name = |r: Option<AttrRole>| r.map(|r| columns[r.index].clone());
    let mapping = ResolvedMapping {
        x: None,
        y: None,
        time: name(time_role),
        time_until: name(until_role),
        category: name(attrs.category),
        weight: name(weight_role),
    };

    // Coordinate kind.
    let coords = opts.coords.unwrap_or_else(|| {
        let all_in_range = feats.iter().all(|f| {
            points_of(f.geometry).iter().all(|p| match p {
                Ok((x, y)) => (-180.0..=180.0).contains(x) && (-90.0..=90.0).contains(y),
                Err(_) => true,
            })
        });
        if all_in_range {
            CoordKind::LonLat
        } else {
            CoordKind::Planar {
                unit: LengthUnit::Metre,
            }
        }
    });

    let mut b = Builder::new(
        time_role.is_some(),
        attrs.category.is_some(),
        weight_role.is_some(),
    );
    if until_role.is_some() {
        b.time_end = Some(Vec::new());
    }
    b.reserve(feats.len());
    let mut buf = String::new();
    for (i, f) in feats.iter().enumerate() {
        let row = i as u64 + 1;
        // Attributes once per feature: Ok(value) or Err((column, reason, text)).
        let time = time_role.map(|r| {
            let col = columns[r.index].as_str();
            match f.properties.and_then(|p| p.get(col)) {
                None | Some(Json::Null) => Err((col, RejectReason::Empty, String::new())),
                Some(Json::String(s)) if s.trim().is_empty() => {
                    Err((col, RejectReason::Empty, s.clone()))
                }
                Some(Json::String(s)) => match parse_time(s, order) {
                    Some(p) => Ok(p),
                    None => Err((col, RejectReason::BadTime, s.clone())),
                },
                Some(other) => Err((col, RejectReason::BadTime, other.to_string())),
            }
        });
        // The end of a window: Ok(None) for an empty one (an instant).
        let until = until_role.map(|r| {
            let col = columns[r.index].as_str();
            match f.properties.and_then(|p| p.get(col)) {
                None | Some(Json::Null) => Ok(None),
                Some(Json::String(s)) if s.trim().is_empty() => Ok(None),
                Some(Json::String(s)) => match parse_time(s, order) {
                    Some(p) => Ok(Some((p, s.clone()))),
                    None => Err((col, RejectReason::BadTime, s.clone())),
                },
                Some(other) => Err((col, RejectReason::BadTime, other.to_string())),
            }
        });
        let weight = weight_role.map(|r| {
            let col = columns[r.index].as_str();
            match prop_text(f.properties, col) {
                None => Err((col, RejectReason::Empty, String::new())),
                Some(s) if s.trim().is_empty() => Err((col, RejectReason::Empty, s.into_owned())),
                Some(s) => match weight_value(&s, false, &mut buf) {
                    Some(w) => Ok(w),
                    None => Err((col, RejectReason::BadWeight, s.into_owned())),
                },
            }
        });
        let cat_text = attrs
            .category
            .map(|r| prop_text(f.properties, &columns[r.index]));
        let mut noted = false;
        for p in points_of(f.geometry) {
            b.rows_read += 1;
            let (x, y) = match p {
                Ok(xy) => xy,
                Err((reason, value)) => {
                    b.reject(row, Some(GEOMETRY_COLUMN), reason, &value);
                    continue;
                }
            };
            if let Some(reason) =
                range_problem(coords, true, x).or_else(|| range_problem(coords, false, y))
            {
                let v = if reason == RejectReason::LongitudeOutOfRange {
                    x
                } else {
                    y
                };
                b.reject(row, Some(GEOMETRY_COLUMN), reason, &v.to_string());
                continue;
            }
            // An unusable time or weight keeps the point (NaN), noted
            // once per feature.
            let first_point = !noted;
            noted = true;
            let mut t = (f64::NAN, false);
            match &time {
                Some(Ok(p)) => t = (p.days, p.has_clock),
                Some(Err((col, reason, v))) if first_point => b.note(row, col, reason.clone(), v),
                _ => {}
            }
            let mut end = f64::NAN;
            match (&until, until_role) {
                (Some(Ok(Some((p, text)))), Some(r)) => {
                    t.1 |= p.has_clock;
                    let col = columns[r.index].as_str();
                    if first_point {
                        end = super::layer::window_end(&mut b, row, col, text, t.0, p.days);
                    } else if !(t.0.is_finite() && p.days < t.0) {
                        end = p.days;
                    }
                }
                (Some(Err((col, reason, v))), _) if first_point => {
                    b.note(row, col, reason.clone(), v)
                }
                _ => {}
            }
            let mut w = f64::NAN;
            match &weight {
                Some(Ok(v)) => w = *v,
                Some(Err((col, reason, v))) if first_point => b.note(row, col, reason.clone(), v),
                _ => {}
            }
            let cat = match &cat_text {
                Some(c) => b.category_id(c.as_deref().unwrap_or("")),
                None => 0,
            };
            b.accept(row, x, y, t, cat, w);
            b.accept_until(end);
        }
    }
    b.date_order = date_order;
    Ok(b.finish(SourceFormat::GeoJson, columns, mapping, coords))
}

/// A ring as a list of vertices.
fn ring(v: &Json) -> Result<Vec<[f64; 2]>, InputError> {
    let arr = v
        .as_array()
        .ok_or_else(|| bad_geojson("a polygon ring is not an array of positions"))?;
    arr.iter()
        .map(|p| match position(p) {
            Ok((x, y)) => Ok([x, y]),
            Err(_) => Err(bad_geojson(format!(
                "a vertex is not a pair of numbers: {}",
                cut_value(&p.to_string())
            ))),
        })
        .collect()
}

fn polygon(coords: &Json) -> Result<Vec<Vec<[f64; 2]>>, InputError> {
    let rings = coords
        .as_array()
        .ok_or_else(|| bad_geojson("polygon coordinates are not an array"))?;
    if rings.is_empty() {
        return Err(bad_geojson("a Polygon with no rings"));
    }
    rings.iter().map(ring).collect()
}

/// Adds the polygons of one geometry to `out`; null geometries add nothing.
pub(super) fn collect_polygons(
    g: &Json,
    out: &mut Vec<Vec<Vec<[f64; 2]>>>,
) -> Result<(), InputError> {
    if g.is_null() {
        return Ok(());
    }
    let t = g
        .get("type")
        .and_then(Json::as_str)
        .ok_or_else(|| bad_geojson("a geometry has no \"type\""))?;
    let coords = || {
        g.get("coordinates")
            .ok_or_else(|| bad_geojson(format!("a {t} without coordinates")))
    };
    match t {
        "Polygon" => out.push(polygon(coords()?)?),
        "MultiPolygon" => {
            let polys = coords()?
                .as_array()
                .ok_or_else(|| bad_geojson("MultiPolygon coordinates are not an array"))?;
            for p in polys {
                out.push(polygon(p)?);
            }
        }
        "GeometryCollection" => {
            let gs = g
                .get("geometries")
                .and_then(Json::as_array)
                .ok_or_else(|| bad_geojson("a GeometryCollection needs a \"geometries\" array"))?;
            for g in gs {
                collect_polygons(g, out)?;
            }
        }
        other if is_geometry_type(other) => {
            return Err(bad_geojson(format!(
                "expected polygons for the study area, found a {other}"
            )))
        }
        other => {
            return Err(bad_geojson(format!(
                "unknown geometry type \"{}\"",
                cut_value(other)
            )))
        }
    }
    Ok(())
}

/// Reads Polygon / MultiPolygon geometries (bare, Feature or FeatureCollection).
pub fn read_area(text: &str, coords: Option<CoordKind>) -> Result<RawArea, InputError> {
    let root = parse_json(text)?;
    let (obj, t) = root_type(&root)?;
    let mut polygons = Vec::new();
    match t {
        "FeatureCollection" => {
            for (i, f) in features_of(obj)?.iter().enumerate() {
                let g = f.get("geometry").unwrap_or(&Json::Null);
                collect_polygons(g, &mut polygons)
                    .map_err(|e| e.at(i as u64 + 1, Some(GEOMETRY_COLUMN)))?;
            }
        }
        "Feature" => collect_polygons(obj.get("geometry").unwrap_or(&Json::Null), &mut polygons)?,
        g if is_geometry_type(g) => collect_polygons(&root, &mut polygons)?,
        other => {
            return Err(bad_geojson(format!(
                "unknown GeoJSON type \"{}\"",
                cut_value(other)
            )))
        }
    }
    if polygons.is_empty() {
        return Err(bad_geojson("no polygons found for the study area"));
    }
    let coords = coords.unwrap_or_else(|| {
        let in_range = polygons
            .iter()
            .flatten()
            .flatten()
            .all(|[x, y]| (-180.0..=180.0).contains(x) && (-90.0..=90.0).contains(y));
        if in_range {
            CoordKind::LonLat
        } else {
            CoordKind::Planar {
                unit: LengthUnit::Metre,
            }
        }
    });
    Ok(RawArea { polygons, coords })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::ColumnMapping;

    fn pts(text: &str) -> RawLayer {
        read_points(text, &ReadOptions::default()).unwrap()
    }

    fn err(r: Result<impl std::fmt::Debug, InputError>) -> InputError {
        r.unwrap_err()
    }

    #[test]
    fn feature_collection_with_properties() {
        let l = pts(r#"{"type":"FeatureCollection","features":[
            {"type":"Feature","geometry":{"type":"Point","coordinates":[10.5,45.25]},
             "properties":{"onset":"2025-03-04","kind":"a","cases":2}},
            {"type":"Feature","geometry":{"type":"MultiPoint","coordinates":[[1,2],[3,4]]},
             "properties":{"onset":"2025-03-05T12:00Z","kind":null,"cases":"1"}},
            {"type":"Feature","geometry":null,"properties":{}},
            {"type":"Feature","geometry":{"type":"LineString","coordinates":[[0,0],[1,1]]}}
        ]}"#);
        assert_eq!(l.columns, vec!["onset", "kind", "cases"]);
        assert_eq!(l.mapping.time.as_deref(), Some("onset"));
        assert_eq!(l.mapping.category.as_deref(), Some("kind"));
        assert_eq!(l.mapping.weight.as_deref(), Some("cases"));
        assert_eq!(l.coords, CoordKind::LonLat);
        assert_eq!(l.x, vec![10.5, 1.0, 3.0]);
        assert_eq!(l.row, vec![1, 2, 2]);
        assert_eq!(l.category_names, vec!["a", "(blank)"]);
        assert_eq!(l.weight, Some(vec![2.0, 1.0, 1.0]));
        assert!(l.time_has_clock);
        assert_eq!(l.rows_read, 5);
        let r: Vec<_> = l
            .rejections
            .iter()
            .map(|r| (r.row, r.column.as_deref(), &r.reason, r.value.as_str()))
            .collect();
        assert_eq!(
            r,
            vec![
                (
                    3,
                    Some("geometry"),
                    &RejectReason::BadGeometry,
                    "null geometry"
                ),
                (
                    4,
                    Some("geometry"),
                    &RejectReason::BadGeometry,
                    "LineString"
                ),
            ]
        );
    }

    #[test]
    fn bare_feature_and_geometry() {
        let l = pts(r#"{"type":"Point","coordinates":[1,2,3]}"#);
        assert_eq!(
            (l.x.clone(), l.y.clone(), l.row.clone()),
            (vec![1.0], vec![2.0], vec![1])
        );
        let l = pts(
            r#"{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":null}"#,
        );
        assert_eq!(l.len(), 1);
        assert!(l.columns.is_empty());
    }

    #[test]
    fn planar_when_out_of_lonlat_range() {
        let l = pts(r#"{"type":"MultiPoint","coordinates":[[500000,4000000],[1,2]]}"#);
        assert_eq!(
            l.coords,
            CoordKind::Planar {
                unit: LengthUnit::Metre
            }
        );
        assert_eq!(l.len(), 2);
        // Declared lon/lat: range rejections.
        let opts = ReadOptions {
            coords: Some(CoordKind::LonLat),
            ..Default::default()
        };
        let l = read_points(
            r#"{"type":"MultiPoint","coordinates":[[10,95],[200,0],[1,2]]}"#,
            &opts,
        )
        .unwrap();
        let r: Vec<_> = l
            .rejections
            .iter()
            .map(|r| (&r.reason, r.value.as_str()))
            .collect();
        assert_eq!(
            r,
            vec![
                (&RejectReason::LatitudeOutOfRange, "95"),
                (&RejectReason::LongitudeOutOfRange, "200")
            ]
        );
    }

    #[test]
    fn bad_coordinates_and_attributes() {
        let l = pts(r#"{"type":"FeatureCollection","features":[
            {"type":"Feature","geometry":{"type":"Point","coordinates":["1",2]},"properties":{"date":"2025-01-01","weight":1}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1]},"properties":{"date":"2025-01-01","weight":1}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"date":"2025-02-29","weight":1}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"date":20250101,"weight":1}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"weight":1}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"date":"2025-01-01","weight":-2}},
            {"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"date":"2025-01-01","weight":0}}
        ]}"#);
        let list =
            |v: &[crate::input::Rejection]| -> Vec<(u64, Option<String>, RejectReason, String)> {
                v.iter()
                    .map(|r| (r.row, r.column.clone(), r.reason.clone(), r.value.clone()))
                    .collect()
            };
        let e =
            |row, col: &str, reason, v: &str| (row, Some(col.to_string()), reason, v.to_string());
        // Bad geometry removes the feature; a bad date or weight keeps it
        // (NaN) and is listed as incomplete.
        assert_eq!(
            list(&l.rejections),
            vec![
                e(1, "geometry", RejectReason::NotANumber, "1"),
                e(2, "geometry", RejectReason::BadGeometry, "[1]"),
            ]
        );
        assert_eq!(
            list(&l.incomplete),
            vec![
                e(3, "date", RejectReason::BadTime, "2025-02-29"),
                e(4, "date", RejectReason::BadTime, "20250101"),
                e(5, "date", RejectReason::Empty, ""),
                e(6, "weight", RejectReason::BadWeight, "-2"),
            ]
        );
        assert_eq!(l.row, vec![3, 4, 5, 6, 7]);
        assert_eq!((l.missing_time(), l.missing_weight()), (3, 1));
    }

    #[test]
    fn file_level_errors() {
        assert!(matches!(
            err(pts_r("{\"type\":")).kind,
            InputErrorKind::BadJson { .. }
        ));
        let e = err(pts_r(
            "{\"type\": \"FeatureCollection\",\n \"features\": [1,}",
        ));
        assert!(e.to_string().contains("line 2"), "{e}");
        assert!(matches!(
            err(pts_r("[1,2]")).kind,
            InputErrorKind::BadGeoJson { .. }
        ));
        assert!(matches!(
            err(pts_r("{\"a\":1}")).kind,
            InputErrorKind::BadGeoJson { .. }
        ));
        assert!(matches!(
            err(pts_r("{\"type\":\"FeatureCollection\"}")).kind,
            InputErrorKind::BadGeoJson { .. }
        ));
        let e = err(pts_r(r#"{"type":"Polygon","coordinates":[]}"#));
        assert!(e.to_string().contains("study-area"), "{e}");
        assert!(matches!(
            err(pts_r("{\"type\":\"Point\",\"coordinates\":[1e999,1]}")).kind,
            InputErrorKind::BadJson { .. }
        ));
        let opts = ReadOptions {
            mapping: ColumnMapping {
                weight: Some("cases".into()),
                ..Default::default()
            },
            ..Default::default()
        };
        let e = read_points(r#"{"type":"Point","coordinates":[1,2]}"#, &opts).unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::MissingColumns { .. }));
    }

    fn pts_r(text: &str) -> Result<RawLayer, InputError> {
        read_points(text, &ReadOptions::default())
    }

    #[test]
    fn json_tree_keeps_member_order() {
        let v: Json =
            serde_json::from_str(r#"{"b":1,"a":[true,null,"q\"x"],"c":2.5,"b":3}"#).unwrap();
        let o = v.as_object().unwrap();
        assert_eq!(o.keys().collect::<Vec<_>>(), vec!["b", "a", "c", "b"]);
        assert_eq!(v.get("b").and_then(Json::as_f64), Some(3.0)); // last repeat wins
        assert_eq!(
            v.to_string(),
            r#"{"b":1,"a":[true,null,"q\"x"],"c":2.5,"b":3}"#
        );
    }

    const SQUARE: &str = "[[0,0],[10,0],[10,10],[0,10],[0,0]]";
    const HOLE: &str = "[[2,2],[2,4],[4,4],[4,2],[2,2]]";

    #[test]
    fn areas() {
        let a = read_area(
            &format!(r#"{{"type":"Polygon","coordinates":[{SQUARE},{HOLE}]}}"#),
            None,
        )
        .unwrap();
        assert_eq!(a.polygons.len(), 1);
        assert_eq!(a.polygons[0].len(), 2);
        assert_eq!(a.polygons[0][1][1], [2.0, 4.0]);
        assert_eq!(a.coords, CoordKind::LonLat);
        let fc = format!(
            r#"{{"type":"FeatureCollection","features":[
              {{"type":"Feature","geometry":{{"type":"Polygon","coordinates":[{SQUARE}]}}}},
              {{"type":"Feature","geometry":null}},
              {{"type":"Feature","geometry":{{"type":"MultiPolygon","coordinates":[[{SQUARE}],[[[500,500],[900,500],[900,900]]]]}}}}
            ]}}"#
        );
        let a = read_area(&fc, None).unwrap();
        assert_eq!(a.polygons.len(), 3);
        assert_eq!(
            a.coords,
            CoordKind::Planar {
                unit: LengthUnit::Metre
            }
        );
        let a = read_area(&fc, Some(CoordKind::LonLat)).unwrap();
        assert_eq!(a.coords, CoordKind::LonLat);
    }

    #[test]
    fn area_errors() {
        let e = read_area(
            r#"{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]}}]}"#,
            None,
        )
        .unwrap_err();
        assert_eq!(e.at.as_ref().map(|l| l.row), Some(1));
        assert!(e.to_string().contains("expected polygons"), "{e}");
        let e =
            read_area(r#"{"type":"LineString","coordinates":[[0,0],[1,1]]}"#, None).unwrap_err();
        assert!(e.to_string().contains("expected polygons"), "{e}");
        let e = read_area(r#"{"type":"FeatureCollection","features":[]}"#, None).unwrap_err();
        assert!(e.to_string().contains("no polygons"), "{e}");
        let e = read_area(
            r#"{"type":"Polygon","coordinates":[[[0,0],["a",1]]]}"#,
            None,
        )
        .unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::BadGeoJson { .. }));
        let e = read_area("{\"type\":\"Polygon\"", None).unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::BadJson { .. }));
    }
}
