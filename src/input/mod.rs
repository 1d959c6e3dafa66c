//! What did the user give us?
//!
//! Turns the bytes of an events / controls file (CSV or GeoJSON points) into a
//! [`RawLayer`], and the bytes of a study-area file (GeoJSON polygons) into a
//! [`RawArea`]. Coordinates are still in the file's own system here; the
//! [`crate::study`] module projects them. Every data row ends up either in the
//! layer or in its `rejections`, so `accepted + rejected == rows_read` always.
//!
//! Submodules:
//! * [`text`]: byte-level checks (empty, binary, UTF-8, BOM) and format sniffing.
//! * [`text`] also decodes UTF-8 (with or without BOM), UTF-16 with a BOM and
//!   Windows-1252, and says which it used.
//! * [`csv`]: delimiter detection, quoted fields, decimal comma.
//! * [`columns`]: header-name detection of x/y, lon/lat, time, category, weight.
//! * [`time`]: ISO 8601 and day/month/year parsing to days since 1970-01-01,
//!   and detection of the day/month order from the values.
//! * [`geojson`]: FeatureCollection of points, and polygon study areas.
//! * [`zones`]: zones for counting per area (GeoJSON polygons with names and populations).
//! * [`layer`]: builds a [`RawLayer`] from a table, row by row.

pub mod columns;
pub mod csv;
pub mod geojson;
pub mod layer;
pub mod report;
pub mod text;
pub mod time;
pub mod zones;

use crate::error::InputError;
use serde::{Deserialize, Serialize};

/// Unit of projected (planar) coordinates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LengthUnit {
    /// Metres.
    Metre,
    /// International foot, 0.3048 m exactly.
    Foot,
    /// US survey foot, 1200/3937 m.
    UsSurveyFoot,
}

impl LengthUnit {
    /// Length of one unit in metres.
    pub fn metres(self) -> f64 {
        match self {
            LengthUnit::Metre => 1.0,
            LengthUnit::Foot => 0.3048,
            LengthUnit::UsSurveyFoot => 1200.0 / 3937.0,
        }
    }
}

/// What the coordinates in a file are.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum CoordKind {
    /// Longitude and latitude in decimal degrees (WGS 84).
    LonLat,
    /// Already projected, planar coordinates in the given unit.
    Planar { unit: LengthUnit },
}

/// Field order for dates written with slashes, dots or dashes such as `03/04/2025`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DateOrder {
    /// 03/04/2025 is 3 April 2025.
    #[default]
    DayMonthYear,
    /// 03/04/2025 is 4 March 2025.
    MonthDayYear,
    /// 2025/04/03 is 3 April 2025.
    YearMonthDay,
}

/// Which column plays which part. `None` means "detect from the header names".
/// For GeoJSON points the coordinates come from the geometry and `x`/`y` are
/// ignored; the other fields name properties.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ColumnMapping {
    pub x: Option<String>,
    pub y: Option<String>,
    pub time: Option<String>,
    /// The end of each event's time window (a "to" date; the time column is
    /// then its "from"). Detected only beside a time column.
    pub time_until: Option<String>,
    pub category: Option<String>,
    pub weight: Option<String>,
}

/// Options for reading an events or controls file. All fields have defaults,
/// so JavaScript may pass `{}`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ReadOptions {
    /// Column roles; unset roles are detected.
    pub mapping: ColumnMapping,
    /// Coordinate system; `None` = detect (lon/lat names or ranges → LonLat,
    /// otherwise planar metres).
    pub coords: Option<CoordKind>,
    /// How to read dates written with day and month (`03/04/2025`). `None`
    /// = detect from the values (see [`time::OrderDetector`]); a given
    /// order always wins.
    pub date_order: Option<DateOrder>,
    /// Set to `""` to turn off detection of the time column etc. is not needed:
    /// use the mapping. `delimiter`: `None` = detect among `,` `;` tab.
    pub delimiter: Option<char>,
    /// Keep events far from all the others (suspected coordinate errors,
    /// see [`crate::study`]) when no study-area file is given. Default:
    /// they are listed as not used, each with its reason.
    pub keep_far_points: bool,
}

/// Options for a study-area file (`loadArea`).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct AreaOptions {
    /// Coordinate system; `None` = detect.
    pub coords: Option<CoordKind>,
}

const COORDS_DOC: &str = "coordinate system: {kind: \"lon_lat\"} or {kind: \"planar\", unit: \"metre\" | \"foot\" | \"us_survey_foot\"}; empty = detect";

impl crate::params::Params for ReadOptions {
    const NAME: &'static str = "loadEvents";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::object(
                "mapping",
                "column roles {x, y, time, time_until, category, weight}, each a column name; unset roles are detected (time_until = the end of a from–to time window, detected only beside a time column)",
            ),
            Field::object("coords", COORDS_DOC).optional(),
            Field::choice(
                "date_order",
                &["day_month_year", "month_day_year", "year_month_day"],
                "how to read dates written with slashes, dots or dashes; empty = detect from the values",
            )
            .optional(),
            Field::text("delimiter", "one character; empty = detect among , ; and tab").optional(),
            Field::boolean(
                "keep_far_points",
                "keep events far from all the others (suspected coordinate errors) when no study area is given",
            ),
        ]
    }
}

impl crate::params::Params for AreaOptions {
    const NAME: &'static str = "loadArea";
    fn fields() -> Vec<crate::params::Field> {
        vec![crate::params::Field::object("coords", COORDS_DOC).optional()]
    }
}

/// Why one row was not accepted.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RejectReason {
    /// A required cell is empty.
    Empty,
    /// A coordinate or weight that is not a number (including NaN and infinities).
    NotANumber,
    /// Latitude outside [-90, 90].
    LatitudeOutOfRange,
    /// Longitude outside [-180, 180].
    LongitudeOutOfRange,
    /// Outside the study area (or inside one of its holes).
    OutsideStudyArea,
    /// The time cell could not be read with the chosen date order.
    BadTime,
    /// The end of a time window is before its start: the end is not used.
    ReversedWindow,
    /// A negative or non-finite weight.
    BadWeight,
    /// The record has fewer fields than the header.
    TooFewFields,
    /// The record has more non-empty fields than the header (its values may
    /// be shifted, e.g. by an unquoted delimiter inside a text).
    TooManyFields,
    /// A GeoJSON feature without a usable point geometry.
    BadGeometry,
    /// (0, 0) in longitude/latitude, far from the other events: a common
    /// placeholder for a missing location.
    ZeroPlaceholder,
    /// Far from the other events, and near them with latitude and longitude
    /// exchanged.
    SwappedLatLon,
    /// Far from all the other events (Tukey's far-out fence on the distances
    /// from their median centre): a suspected coordinate error.
    FarFromOthers,
}

impl RejectReason {
    /// Plain-words description shown in the rejection table.
    pub fn describe(&self) -> &'static str {
        match self {
            RejectReason::Empty => "empty",
            RejectReason::NotANumber => "not a number",
            RejectReason::LatitudeOutOfRange => "latitude outside [-90, 90]",
            RejectReason::LongitudeOutOfRange => "longitude outside [-180, 180]",
            RejectReason::OutsideStudyArea => "outside the study area",
            RejectReason::BadTime => "unreadable date/time",
            RejectReason::ReversedWindow => "\"to\" date before the \"from\" date",
            RejectReason::BadWeight => "weight must be a number ≥ 0",
            RejectReason::TooFewFields => "fewer fields than the header",
            RejectReason::TooManyFields => "more fields than the header",
            RejectReason::BadGeometry => "no usable point geometry",
            RejectReason::ZeroPlaceholder => "(0, 0): a placeholder for a missing location?",
            RejectReason::SwappedLatLon => "latitude and longitude exchanged?",
            RejectReason::FarFromOthers => "far from all other events: a coordinate error?",
        }
    }
}

/// One rejected row.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Rejection {
    /// 1-based row (CSV, header = 1) or feature number (GeoJSON).
    pub row: u64,
    /// The column (or "geometry") at fault, if one.
    pub column: Option<String>,
    pub reason: RejectReason,
    /// The offending text, cut to at most 60 characters.
    pub value: String,
}

/// How many rows were rejected for one reason.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReasonCount {
    pub reason: RejectReason,
    pub reason_text: &'static str,
    pub count: usize,
}

/// Rejections counted by reason, in order of first appearance.
pub fn count_by_reason(rej: &[Rejection]) -> Vec<ReasonCount> {
    let mut out: Vec<ReasonCount> = Vec::new();
    for r in rej {
        match out.iter_mut().find(|c| c.reason == r.reason) {
            Some(c) => c.count += 1,
            None => out.push(ReasonCount {
                reason: r.reason.clone(),
                reason_text: r.reason.describe(),
                count: 1,
            }),
        }
    }
    out
}

/// The format a file was read as.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "format", rename_all = "snake_case")]
pub enum SourceFormat {
    Csv {
        delimiter: char,
        decimal_comma: bool,
    },
    GeoJson,
}

/// Column roles as actually used (after detection), by header name.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ResolvedMapping {
    pub x: Option<String>,
    pub y: Option<String>,
    pub time: Option<String>,
    pub time_until: Option<String>,
    pub category: Option<String>,
    pub weight: Option<String>,
}

/// An events or controls layer as read, in the file's own coordinates.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RawLayer {
    pub format: SourceFormat,
    /// All column / property names found, in file order.
    pub columns: Vec<String>,
    pub mapping: ResolvedMapping,
    pub coords: CoordKind,
    /// x (or longitude) of each accepted point, in the file's unit.
    pub x: Vec<f64>,
    /// y (or latitude) of each accepted point, in the file's unit.
    pub y: Vec<f64>,
    /// Days since 1970-01-01T00:00Z (fractional), if a time column is used.
    /// **NaN marks a point without a usable time** (empty or unreadable
    /// cell): the point is kept for the spatial analyses and listed in
    /// `incomplete`.
    pub time: Option<Vec<f64>>,
    /// End of each point's time window ("time until" column), days as
    /// `time`; NaN where a row has no usable end (the event is then an
    /// instant at `time`). `None` without such a column.
    pub time_end: Option<Vec<f64>>,
    /// Index into `category_names`, if a category column is used.
    pub category: Option<Vec<u32>>,
    pub category_names: Vec<String>,
    /// Weight / count, if a weight column is used. **NaN marks a point
    /// without a usable weight** (empty, not a number, or negative): kept
    /// for the unweighted analyses, weight 0 in weighted ones (see
    /// `crate::study::Pattern::weight`), listed in `incomplete`.
    pub weight: Option<Vec<f64>>,
    /// Source row of each accepted point (same numbering as rejections).
    pub row: Vec<u64>,
    pub rejections: Vec<Rejection>,
    /// Accepted rows with an optional value (time, weight) that could not be
    /// used: the row is kept, the value is NaN. One entry per cell.
    pub incomplete: Vec<Rejection>,
    /// Data rows (or features) read, not counting the header.
    pub rows_read: u64,
    /// Whether any time value carried a clock time (else dates only).
    pub time_has_clock: bool,
    /// How dates were read, if a time column is used.
    pub date_order: Option<time::DateOrderReport>,
    /// The text encoding the file was read with.
    pub encoding: text::Encoding,
    /// From [`ReadOptions::keep_far_points`].
    pub keep_far_points: bool,
}

impl RawLayer {
    /// Number of accepted points.
    pub fn len(&self) -> usize {
        self.x.len()
    }
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }
    /// The layer without the points marked in `drop` (one entry per point),
    /// which become rejections with the given reason and their coordinates
    /// as the value.
    pub fn without(&self, drop: &[Option<RejectReason>]) -> RawLayer {
        let keep: Vec<usize> = (0..self.len()).filter(|&i| drop[i].is_none()).collect();
        let pick = |v: &Vec<f64>| keep.iter().map(|&i| v[i]).collect::<Vec<f64>>();
        let mut out = self.clone();
        out.x = pick(&self.x);
        out.y = pick(&self.y);
        out.time = self.time.as_ref().map(pick);
        out.time_end = self.time_end.as_ref().map(pick);
        out.weight = self.weight.as_ref().map(pick);
        out.category = self
            .category
            .as_ref()
            .map(|c| keep.iter().map(|&i| c[i]).collect());
        out.row = keep.iter().map(|&i| self.row[i]).collect();
        let dropped_rows: Vec<u64> = (0..self.len())
            .filter(|&i| drop[i].is_some())
            .map(|i| self.row[i])
            .collect();
        out.incomplete
            .retain(|r| dropped_rows.binary_search(&r.row).is_err());
        for (i, reason) in drop.iter().enumerate() {
            if let Some(reason) = reason {
                let value = match self.coords {
                    CoordKind::LonLat => format!("lon {}, lat {}", self.x[i], self.y[i]),
                    CoordKind::Planar { .. } => format!("x {}, y {}", self.x[i], self.y[i]),
                };
                out.rejections.push(Rejection {
                    row: self.row[i],
                    column: None,
                    reason: reason.clone(),
                    value,
                });
            }
        }
        out.rejections.sort_by_key(|r| r.row);
        out
    }

    /// Accepted points without a usable time (0 without a time column).
    pub fn missing_time(&self) -> usize {
        self.time
            .as_ref()
            .map_or(0, |t| t.iter().filter(|v| v.is_nan()).count())
    }
    /// Accepted points without a usable weight (0 without a weight column).
    pub fn missing_weight(&self) -> usize {
        self.weight
            .as_ref()
            .map_or(0, |w| w.iter().filter(|v| v.is_nan()).count())
    }
}

/// Share of rejected rows above which the page shows a warning banner
/// (10 %; a judgement call: beyond it the data left may no longer stand
/// for what was recorded).
pub const MANY_REJECTED_SHARE: f64 = 0.10;

/// A study area as read: polygons with holes, in the file's coordinates.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RawArea {
    /// Each polygon: exterior ring first, then holes; rings as (x, y) vertices,
    /// not necessarily closed.
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    /// LonLat when every vertex is inside lon/lat ranges, else planar (unit to be declared).
    pub coords: CoordKind,
}

/// Reads an events or controls file (CSV or GeoJSON, sniffed from content).
pub fn read_points(bytes: &[u8], opts: &ReadOptions) -> Result<RawLayer, InputError> {
    let decoded = text::decode(bytes)?;
    let text = decoded.text.as_ref();
    let mut layer = match text::sniff(text) {
        text::Format::Json => geojson::read_points(text, opts),
        text::Format::Delimited => layer::from_csv(text, opts),
    }?;
    layer.encoding = decoded.encoding;
    layer.keep_far_points = opts.keep_far_points;
    Ok(layer)
}

/// Reads a study-area file (GeoJSON Polygon / MultiPolygon, Feature or
/// FeatureCollection of them). `coords` overrides detection.
pub fn read_area(bytes: &[u8], coords: Option<CoordKind>) -> Result<RawArea, InputError> {
    let text = text::decode(bytes)?;
    geojson::read_area(&text.text, coords)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every way of getting the read options wrong gives a message in plain
    /// words: it names the option and never a Rust type.
    #[test]
    fn option_errors_are_plain_words() {
        let bad = [
            r#"{"coords": "lon_lat"}"#,
            r#"{"coords": {"kind": "planar"}}"#,
            r#"{"coords": {"kind": "planar", "unit": "inch"}}"#,
            r#"{"coords": {"kind": "polar"}}"#,
            r#"{"coords": {"unit": "metre"}}"#,
            r#"{"coords": 3}"#,
            r#"{"date_order": "sideways"}"#,
            r#"{"date_order": 1}"#,
            r#"{"mapping": "x"}"#,
            r#"{"mapping": {"x": 3}}"#,
            r#"{"mapping": {"z": "a"}}"#,
            r#"{"delimiter": "ab"}"#,
            r#"{"delimiter": 5}"#,
        ];
        let types = [
            "CoordKind",
            "LengthUnit",
            "DateOrder",
            "ColumnMapping",
            "ReadOptions",
            "enum",
            "struct",
            "char",
            "Option",
            "String",
        ];
        for text in bad {
            let v: serde_json::Value = serde_json::from_str(text).unwrap();
            let (code, msg) = crate::params::decode::<ReadOptions>(v, None).unwrap_err();
            assert_eq!(code, "bad_options", "{text}");
            let words: Vec<&str> = msg.split(|c: char| !c.is_alphanumeric()).collect();
            for t in types {
                assert!(!words.contains(&t) && !msg.contains('`'), "{text}: {msg}");
            }
        }
        // A wrong kind of coordinates says what is allowed.
        let v = serde_json::json!({"coords": "lon_lat"});
        let (_, msg) = crate::params::decode::<ReadOptions>(v, None).unwrap_err();
        assert!(msg.contains("{kind: \"lon_lat\"}"), "{msg}");
    }
}
