//! CSV and GeoJSON writers for what may leave the page, and a preview of
//! exactly what a file will contain.
//!
//! Three kinds of content ([`ExportContent`]):
//! * masked points (from [`super::donut`] or [`super::kanon`]); points that
//!   could not be masked are absent;
//! * a suppressed table (cells or zones with counts, hidden counts written as
//!   empty / `null` with a `suppressed` flag, and the published totals);
//! * the one explicit **unmasked** export of the original points, which
//!   carries the label "unmasked, internal use only" inside the file.
//!
//! Every file starts with metadata: tool, version, the date the caller
//! passes in, what the file holds, the coordinate form, the settings, and
//! cautions. The settings never include the seed (docs/methods.md#privacy "record the
//! masking parameters (not the seeds)"): with the seed and this tool anyone
//! could replay the random displacements and subtract them.
//!
//! CSV: the header row comes first, so that a spreadsheet shows the data as
//! a table; the metadata goes into a last column `about_this_file`, one
//! `key: value` note per row from the first data row on (the unmasked label
//! first), the rest joined with ` | ` in the last row when there are more
//! notes than rows ([`CsvNotes::LastColumn`], the default). For scripts that
//! skip comment lines, [`CsvNotes::TopLines`] writes them instead as lines
//! starting with `# ` above the header.
//! GeoJSON: a FeatureCollection with foreign members `metadata` (and
//! `totals`, `outside` for tables), allowed by RFC 7946 §6.1.
//!
//! Masked points are written in coordinate order (by x, then y), so the row
//! order says nothing about the order of the source file. Coordinates are
//! metres as analysed, or longitude/latitude through a caller-given
//! back-projection `&dyn Fn(x, y) -> (lon, lat)`.

use super::aggregate::LineKind;
use super::suppress::SuppressedTable;
use super::{bad, MaskedPoints};
use crate::error::AnalysisError;
use serde::{Deserialize, Serialize};
use serde_json::{json, Map, Value};

/// The label written into the unmasked export.
pub const UNMASKED_LABEL: &str = "unmasked, internal use only";

/// File format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ExportFormat {
    #[default]
    Csv,
    GeoJson,
}

/// Where a CSV file's metadata goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CsvNotes {
    /// A last column `about_this_file`, one note per row (spreadsheets).
    #[default]
    LastColumn,
    /// Lines starting with `# ` above the header (scripts that skip comments).
    TopLines,
}

/// Name of the last CSV column that holds the metadata notes.
pub const NOTES_COLUMN: &str = "about_this_file";

/// Coordinate form of the output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CoordinateOutput {
    /// Planar metres as analysed.
    #[default]
    Metres,
    /// Longitude/latitude via the caller's back-projection.
    LonLat,
}

/// Export settings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ExportOptions {
    pub format: ExportFormat,
    pub coordinates: CoordinateOutput,
    /// Decimals written; default 1 for metres (0.1 m), 6 for degrees (~0.1 m).
    pub decimals: Option<u32>,
    /// The date (and time) to write, passed in by the caller (the core has no clock).
    pub created: String,
    /// Write masked points even when some are, at the precision written, at
    /// their original location; the file is then labelled
    /// "unmasked, internal use only" (see [`what_leaves`]).
    pub confirm_unmasked: bool,
    /// Where a CSV file's metadata goes.
    pub csv_notes: CsvNotes,
    /// Shifted dates of the events (indexed as the original events), to
    /// write beside points; `None` writes no dates (see [`super::dates`]).
    #[serde(skip)]
    pub dates: Option<super::dates::ShiftedDates>,
}

impl Default for ExportOptions {
    fn default() -> Self {
        ExportOptions {
            format: ExportFormat::Csv,
            coordinates: CoordinateOutput::Metres,
            decimals: None,
            created: String::new(),
            confirm_unmasked: false,
            csv_notes: CsvNotes::LastColumn,
            dates: None,
        }
    }
}

impl ExportOptions {
    /// Decimals written: as given, or 1 for metres and 6 for degrees.
    pub fn decimals(&self) -> usize {
        self.decimals.unwrap_or(match self.coordinates {
            CoordinateOutput::Metres => 1,
            CoordinateOutput::LonLat => 6,
        }) as usize
    }
}

/// What a report holds when both masked points and counts exist.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ReportHolds {
    MaskedPoints,
    Counts,
    Both,
}

/// The options of `exportFile` and `exportPreview` as the JS API takes
/// them: the one home of their defaults and limits.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ExportRequest {
    pub format: Option<ExportFormat>,
    /// Default: longitude/latitude when the events were, else metres.
    pub coordinates: Option<CoordinateOutput>,
    pub decimals: Option<u32>,
    pub created: Option<String>,
    pub confirm_unmasked: bool,
    /// CSV only: where the notes about the file go; default `last_column`.
    pub csv_notes: Option<CsvNotes>,
    /// Report only: a PNG as a data URL, drawn by the page from masked /
    /// aggregated layers.
    pub map_image: Option<String>,
    /// Report only: a title line.
    pub title: Option<String>,
    /// Report only: which shared results it holds when there are both
    /// masked points and counts (required when counts are hidden).
    pub report_holds: Option<ReportHolds>,
    /// Report only: add a summary of the relative-risk surface drawn last
    /// (settings, global test, shares of the area; no locations).
    pub report_risk: bool,
    /// Points only: write each event's date, shifted by a random whole
    /// number of days within ± this many days (the same shift for both
    /// ends of a window). Empty: no dates are written.
    pub date_shift_days: Option<u32>,
    /// The seed of the date shifts (needed with `date_shift_days`; never
    /// written into the file).
    pub date_seed: Option<u64>,
}

impl crate::params::Params for ExportRequest {
    const NAME: &'static str = "exportFile";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::choice("format", &["csv", "geo_json"], "file format; empty = csv").optional(),
            Field::choice(
                "coordinates",
                &["metres", "lon_lat"],
                "coordinates written; empty = longitude/latitude when the events were, else metres",
            )
            .optional(),
            Field::integer(
                "decimals",
                "decimals written; empty = 1 for metres, 6 for degrees",
            )
            .range(0.0, 12.0)
            .optional(),
            Field::text("created", "date written in the file; empty = now").optional(),
            Field::boolean(
                "confirm_unmasked",
                "needed to export the unmasked points (labelled for internal use only)",
            ),
            Field::choice(
                "csv_notes",
                &["last_column", "top_lines"],
                "CSV only: where the notes about the file go: a last column about_this_file \
                 (default; spreadsheets show the data as a table) or lines starting with # above \
                 the header (for scripts that skip comment lines)",
            )
            .optional(),
            Field::text(
                "map_image",
                "report only: a PNG data URL of the shared layers",
            )
            .optional(),
            Field::text("title", "report only: a title line").optional(),
            Field::choice(
                "report_holds",
                &["masked_points", "counts", "both"],
                "report only: which shared results it holds",
            )
            .optional(),
            Field::boolean(
                "report_risk",
                "report only: add the summary of the relative-risk surface drawn last",
            ),
            Field::integer(
                "date_shift_days",
                "points only: write each event's date moved by a random whole number of days within plus or minus this many (both ends of a from-to window together); empty = no dates written",
            )
            .range(1.0, super::dates::MAX_SHIFT_DAYS as f64)
            .optional(),
            Field::integer(
                "date_seed",
                "the seed of the date shifts, needed with date_shift_days; never written into the file",
            )
            .range(0.0, crate::params::MAX_SEED as f64)
            .optional(),
        ]
    }
}

/// The one pattern of every file the tool writes: `cloister-<what>-<date>.<ext>`,
/// the date being the first ten characters of `created` when they are a
/// date (YYYY-MM-DD), else left out. (The page names its own downloads the
/// same way, adding `-seed<seed>` where a seed makes the file reproducible.)
pub fn download_name(what: &str, created: &str, ext: &str) -> String {
    let date = created.get(..10).filter(|d| {
        let b = d.as_bytes();
        b.len() == 10
            && b[4] == b'-'
            && b[7] == b'-'
            && b.iter()
                .enumerate()
                .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit())
    });
    match date {
        Some(d) => format!("cloister-{what}-{d}.{ext}"),
        None => format!("cloister-{what}.{ext}"),
    }
}

/// What to export.
#[derive(Debug, Clone, Copy)]
pub enum ExportContent<'a> {
    /// Masked points, with the original points they were made from
    /// (indexed by `masked.source`). The originals are never written: the
    /// export compares each written coordinate with its original's, written
    /// the same way, and treats a file where any coincide as unmasked.
    MaskedPoints {
        masked: &'a MaskedPoints,
        original_x: &'a [f64],
        original_y: &'a [f64],
    },
    Table(&'a SuppressedTable),
    /// The original points, unmasked: the one export that writes them.
    UnmaskedInternal {
        x: &'a [f64],
        y: &'a [f64],
    },
}

/// Exactly what a file will contain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExportPreview {
    /// "masked points", "suppressed table" or "unmasked points".
    pub content: String,
    pub format: ExportFormat,
    /// Column names (CSV) or feature property names plus geometry (GeoJSON).
    pub fields: Vec<String>,
    /// Data rows (CSV, totals included) or features (GeoJSON).
    pub rows: usize,
    /// Metadata keys written into the file (see `notes_at`).
    pub metadata_keys: Vec<String>,
    /// Where the metadata goes, in words: the CSV's last column, `#` lines
    /// above the CSV header, or the GeoJSON's `metadata` member.
    pub notes_at: String,
    /// True for the unmasked export, and for masked points when any of them
    /// is written at its original location at the file's precision
    /// (`points_at_original_location` > 0): computed by writing both
    /// coordinates as the file does and comparing the text.
    pub contains_original_coordinates: bool,
    /// Masked points whose written coordinates equal those of their
    /// original point written the same way (same coordinates, same
    /// decimals); 0 for other contents.
    pub points_at_original_location: usize,
    /// The label inside the file, if any.
    pub label: Option<String>,
    /// Input points not in the file (could not be masked).
    pub points_left_out: usize,
    pub cautions: Vec<String>,
}

/// A written file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExportFile {
    pub text: String,
    pub file_name: String,
    pub mime: String,
    pub preview: ExportPreview,
}

fn coord_names(o: &ExportOptions) -> [&'static str; 2] {
    match o.coordinates {
        CoordinateOutput::Metres => ["x_m", "y_m"],
        CoordinateOutput::LonLat => ["longitude", "latitude"],
    }
}

const TABLE_FIELDS: [&str; 8] = [
    "kind",
    "id",
    "row",
    "col",
    "count",
    "suppressed",
    "population",
    "rate",
];

/// The cautions a file of `content` carries (before the comparison with
/// the originals, see [`what_leaves`]).
pub fn cautions(content: &ExportContent) -> Vec<String> {
    let mut c = Vec::new();
    match content {
        ExportContent::MaskedPoints { masked: m, .. } => {
            c.extend(m.notes.iter().cloned());
            c.push(
                "Mask once: never publish a second, differently masked copy of these points; \
                 averaging copies moves them back towards the true locations."
                    .into(),
            );
            c.push(
                "Masked locations are not real locations: do not geocode, link or annotate \
                 them with addresses."
                    .into(),
            );
            c.push(
                "Clustering at distances up to about twice the maximum displacement is \
                 weakened; space-time bands below that are unreliable."
                    .into(),
            );
        }
        ExportContent::Table(t) => {
            c.push(format!(
                "Counts from 1 to {} are suppressed, with further cells suppressed so that \
                 no hidden count follows from the totals shown.",
                t.params.min_count.max(1) - 1
            ));
            c.push(
                "Do not publish this table beside other tables of the same events for \
                 overlapping areas or periods: differences between them can reveal hidden counts."
                    .into(),
            );
            c.extend(t.warnings.iter().cloned());
        }
        ExportContent::UnmaskedInternal { .. } => {
            c.push(
                "This file holds the ORIGINAL locations. Do not share, publish or upload it."
                    .into(),
            );
        }
    }
    c
}

/// The back-projection an export may use: planar metres to (lon, lat).
pub type ToLonLat<'f> = Option<&'f dyn Fn(f64, f64) -> (f64, f64)>;

/// The coordinates as the file will hold them: metres, or longitude/latitude
/// through `to_lonlat`.
fn project_with(
    opts: &ExportOptions,
    to_lonlat: ToLonLat,
    x: f64,
    y: f64,
) -> Result<(f64, f64), AnalysisError> {
    match opts.coordinates {
        CoordinateOutput::Metres => Ok((x, y)),
        CoordinateOutput::LonLat => match to_lonlat {
            Some(f) => {
                let (a, b) = f(x, y);
                if a.is_finite() && b.is_finite() {
                    Ok((a, b))
                } else {
                    Err(bad(
                        "coordinates",
                        "the back-projection gave a non-finite value",
                    ))
                }
            }
            None => Err(bad(
                "coordinates",
                "longitude/latitude output needs the study's back-projection",
            )),
        },
    }
}

/// One coordinate as the file writes it: `d` decimals in CSV, the JSON
/// number of the value rounded to `d` decimals in GeoJSON.
fn written(v: f64, d: usize, format: ExportFormat) -> String {
    match format {
        ExportFormat::Csv => fmt(v, d),
        ExportFormat::GeoJson => json!(round(v, d)).to_string(),
    }
}

/// How many masked points the file would write at their original location:
/// both the masked point and its original are projected and written as the
/// file writes coordinates, and the two texts compared (x and y both equal).
pub fn points_at_original_location(
    masked: &MaskedPoints,
    original_x: &[f64],
    original_y: &[f64],
    opts: &ExportOptions,
    to_lonlat: ToLonLat,
) -> Result<usize, AnalysisError> {
    let d = opts.decimals();
    let mut n = 0;
    for (i, &s) in masked.source.iter().enumerate() {
        let (Some(&ox), Some(&oy)) = (original_x.get(s), original_y.get(s)) else {
            return Err(bad(
                "points",
                "a masked point's original is missing: mask the loaded points again",
            ));
        };
        let (ma, mb) = project_with(opts, to_lonlat, masked.x[i], masked.y[i])?;
        let (oa, ob) = project_with(opts, to_lonlat, ox, oy)?;
        if written(ma, d, opts.format) == written(oa, d, opts.format)
            && written(mb, d, opts.format) == written(ob, d, opts.format)
        {
            n += 1;
        }
    }
    Ok(n)
}

/// The caution for masked points written at their original location.
fn at_original_caution(n: usize, total: usize, opts: &ExportOptions) -> String {
    format!(
        "{n} of {total} masked points are written at their ORIGINAL location at this precision \
         ({} decimals): this file is treated as unmasked, internal use only. Mask with a larger \
         shift, or write fewer decimals.",
        opts.decimals()
    )
}

/// Lists what `content` would put in a file with `opts`, without writing it.
/// For masked points the coordinates are written as the file would write
/// them and compared with the originals' (needs `to_lonlat` for
/// longitude/latitude output).
pub fn what_leaves(
    content: &ExportContent,
    opts: &ExportOptions,
    to_lonlat: ToLonLat,
) -> Result<ExportPreview, AnalysisError> {
    let at_original = match content {
        ExportContent::MaskedPoints {
            masked,
            original_x,
            original_y,
        } => points_at_original_location(masked, original_x, original_y, opts, to_lonlat)?,
        _ => 0,
    };
    let [cx, cy] = coord_names(opts);
    let mut metadata_keys: Vec<String> = ["tool", "version", "created", "content", "coordinates"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let (name, fields, rows, original, label, left_out): (
        &str,
        Vec<String>,
        usize,
        bool,
        _,
        usize,
    ) = match content {
        ExportContent::MaskedPoints { masked: m, .. } => {
            metadata_keys.push("masking".into());
            metadata_keys.push("points_left_out".into());
            if at_original > 0 {
                metadata_keys.push("label".into());
                metadata_keys.push("points_at_original_location".into());
            }
            (
                "masked points",
                vec![cx.to_string(), cy.to_string()],
                m.x.len(),
                at_original > 0,
                (at_original > 0).then(|| UNMASKED_LABEL.to_string()),
                m.unplaced.len(),
            )
        }
        ExportContent::Table(t) => {
            metadata_keys.push("layout".into());
            metadata_keys.push("suppression".into());
            let f: Vec<String> = match opts.format {
                ExportFormat::Csv => TABLE_FIELDS
                    .iter()
                    .map(|s| s.to_string())
                    .chain([format!("centre_{cx}"), format!("centre_{cy}")])
                    .chain(["rate_unreliable".to_string()])
                    .collect(),
                ExportFormat::GeoJson => TABLE_FIELDS[1..]
                    .iter()
                    .map(|s| s.to_string())
                    .chain(["rate_unreliable".to_string(), "geometry".to_string()])
                    .collect(),
            };
            let cells = exported_cells(t).count();
            let rows = match opts.format {
                ExportFormat::Csv => cells + t.lines.len() + 1,
                ExportFormat::GeoJson => cells,
            };
            ("suppressed table", f, rows, false, None, 0)
        }
        ExportContent::UnmaskedInternal { x, .. } => {
            metadata_keys.push("label".into());
            (
                "unmasked points",
                vec![cx.to_string(), cy.to_string()],
                x.len(),
                true,
                Some(UNMASKED_LABEL.to_string()),
                0,
            )
        }
    };
    if let Some(d) = &opts.dates {
        if matches!(content, ExportContent::Table(_)) {
            return Err(bad(
                "date_shift_days",
                "dates are written only beside points; counts per area carry none",
            ));
        }
        debug_assert!(d.max_days > 0);
        metadata_keys.push("dates".into());
    }
    metadata_keys.push("cautions".into());
    let mut fields = match (opts.format, content) {
        (ExportFormat::GeoJson, ExportContent::Table(_)) => fields,
        (ExportFormat::GeoJson, _) => vec!["geometry (Point)".to_string()],
        _ => fields,
    };
    if let Some(d) = &opts.dates {
        fields.push("date".into());
        if d.end.is_some() {
            fields.push("date_to".into());
        }
    }
    let notes_at = match (opts.format, opts.csv_notes) {
        (ExportFormat::Csv, CsvNotes::LastColumn) => {
            fields.push(NOTES_COLUMN.to_string());
            format!("the last column, {NOTES_COLUMN}, one note per row from the first row on")
        }
        (ExportFormat::Csv, CsvNotes::TopLines) => {
            "lines starting with # above the header".to_string()
        }
        (ExportFormat::GeoJson, _) => "the file's metadata member".to_string(),
    };
    let mut cautions = cautions(content);
    if let Some(d) = &opts.dates {
        cautions.push(super::dates::shift_caution(d.max_days));
    }
    if at_original > 0 {
        cautions.insert(0, at_original_caution(at_original, rows, opts));
    }
    Ok(ExportPreview {
        content: name.into(),
        format: opts.format,
        fields,
        rows,
        metadata_keys,
        notes_at,
        contains_original_coordinates: original,
        points_at_original_location: at_original,
        label,
        points_left_out: left_out,
        cautions,
    })
}

fn exported_cells(t: &SuppressedTable) -> impl Iterator<Item = &super::suppress::TableCell> {
    t.cells.iter().filter(|c| c.in_area || c.count != Some(0))
}

fn metadata(
    content: &ExportContent,
    opts: &ExportOptions,
    preview: &ExportPreview,
) -> Map<String, Value> {
    let mut m = Map::new();
    m.insert("tool".into(), json!("Cloister"));
    m.insert("version".into(), json!(crate::VERSION));
    m.insert("created".into(), json!(opts.created));
    m.insert("content".into(), json!(preview.content));
    m.insert(
        "coordinates".into(),
        json!(match opts.coordinates {
            CoordinateOutput::Metres => "planar metres (projected, as analysed)",
            CoordinateOutput::LonLat => "longitude, latitude (degrees, back-projected)",
        }),
    );
    match content {
        ExportContent::MaskedPoints { masked: mp, .. } => {
            // `method` carries settings only; the seed is a separate field of
            // MaskedPoints and is deliberately not written.
            m.insert(
                "masking".into(),
                serde_json::to_value(&mp.method).unwrap_or(Value::Null),
            );
            m.insert("points_left_out".into(), json!(mp.unplaced.len()));
            if preview.points_at_original_location > 0 {
                m.insert("label".into(), json!(UNMASKED_LABEL));
                m.insert(
                    "points_at_original_location".into(),
                    json!(preview.points_at_original_location),
                );
            }
        }
        ExportContent::Table(t) => {
            m.insert(
                "layout".into(),
                serde_json::to_value(&t.layout).unwrap_or(Value::Null),
            );
            let p = &t.params;
            m.insert(
                "suppression".into(),
                json!({
                    "counts_hidden_from": 1,
                    "counts_hidden_to": p.min_count.max(1) - 1,
                    "zeros_hidden": p.suppress_zeros,
                    "complementary": "further counts hidden so that no published total has exactly one hidden count",
                    "audit": {
                        "no_recovery_found": t.audit.safe,
                        "checks": if t.audit.exact.is_some() {
                            "single totals, linear combinations of totals, bounds, exhaustive whole-number search"
                        } else {
                            "single totals, linear combinations of totals, bounds (table too large for the exhaustive search)"
                        },
                    },
                    "rate_per": p.rate_per,
                    "rate_min_population": p.rate_min_population,
                    "rate_unreliable_below_count": p.rate_unreliable_below,
                }),
            );
        }
        ExportContent::UnmaskedInternal { .. } => {
            m.insert("label".into(), json!(UNMASKED_LABEL));
        }
    }
    if let Some(d) = &opts.dates {
        m.insert("dates".into(), json!(super::dates::shift_note(d.max_days)));
    }
    m.insert("cautions".into(), json!(preview.cautions));
    m
}

/// The shifted date (and window end) of original event `src`, as written:
/// `YYYY-MM-DD`, or `None` where the event has none.
fn date_texts(opts: &ExportOptions, src: usize) -> Option<(Option<String>, Option<String>)> {
    let d = opts.dates.as_ref()?;
    let text = |v: Option<f64>| {
        v.filter(|t| t.is_finite())
            .map(|t| crate::input::time::format_days(t, false))
    };
    Some((
        text(d.start.get(src).copied()),
        d.end.as_ref().and_then(|e| text(e.get(src).copied())),
    ))
}

fn round(v: f64, d: usize) -> f64 {
    let f = 10f64.powi(d as i32);
    (v * f).round() / f
}

fn fmt(v: f64, d: usize) -> String {
    format!("{v:.d$}")
}

pub(crate) fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Writes `content` in the format of `opts`. `to_lonlat` is required when
/// `opts.coordinates` is `LonLat`.
pub fn export(
    content: &ExportContent,
    opts: &ExportOptions,
    to_lonlat: ToLonLat,
) -> Result<ExportFile, AnalysisError> {
    let project = |x: f64, y: f64| project_with(opts, to_lonlat, x, y);
    let d = opts.decimals();
    if d > 12 {
        return Err(bad("decimals", "at most 12"));
    }
    let preview = what_leaves(content, opts, to_lonlat)?;
    if preview.points_at_original_location > 0 && !opts.confirm_unmasked {
        return Err(bad(
            "confirm_unmasked",
            &(at_original_caution(preview.points_at_original_location, preview.rows, opts)
                .replace(
                    "this file is treated as unmasked",
                    "the file would be unmasked",
                )
                + " To write it anyway, labelled for internal use, confirm (confirm_unmasked: true)."),
        ));
    }
    // Masked points at their original location make the file an unmasked one.
    let unmasked = preview.contains_original_coordinates;
    let meta = metadata(content, opts, &preview);
    let [cx, cy] = coord_names(opts);
    // Each point with the index of its original event (for its date).
    let points: Option<Vec<(f64, f64, usize)>> = match content {
        ExportContent::MaskedPoints { masked: m, .. } => {
            let mut v: Vec<(f64, f64, usize)> =
                m.x.iter()
                    .zip(&m.y)
                    .zip(&m.source)
                    .map(|((&x, &y), &s)| (x, y, s))
                    .collect();
            v.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
            Some(v)
        }
        ExportContent::UnmaskedInternal { x, y } => {
            if x.len() != y.len() {
                return Err(bad("points", "x and y have different lengths"));
            }
            Some(
                x.iter()
                    .zip(y.iter())
                    .enumerate()
                    .map(|(i, (&x, &y))| (x, y, i))
                    .collect(),
            )
        }
        ExportContent::Table(_) => None,
    };
    let date_header = match &opts.dates {
        Some(d) if d.end.is_some() => ",date,date_to",
        Some(_) => ",date",
        None => "",
    };
    let stem = match content {
        ExportContent::MaskedPoints { .. } if unmasked => "masked-points-UNMASKED-internal-only",
        ExportContent::MaskedPoints { .. } => "masked-points",
        ExportContent::Table(_) => "suppressed-counts",
        ExportContent::UnmaskedInternal { .. } => "UNMASKED-internal-only",
    };
    let text = match (opts.format, points) {
        (ExportFormat::Csv, pts) => {
            let mut notes: Vec<String> = Vec::new();
            if unmasked {
                notes.push(UNMASKED_LABEL.to_uppercase());
            }
            // In the preview's order (tool, version, created, … cautions).
            for (k, v) in preview
                .metadata_keys
                .iter()
                .filter_map(|k| meta.get(k).map(|v| (k, v)))
            {
                let val = match v {
                    Value::String(t) => t.clone(),
                    other => other.to_string(),
                };
                notes.push(format!("{k}: {}", val.replace(['\n', '\r'], " ")));
            }
            let mut table = String::new();
            match (pts, content) {
                (Some(pts), _) => {
                    table.push_str(&format!("{cx},{cy}{date_header}\n"));
                    for (x, y, src) in pts {
                        let (a, b) = project(x, y)?;
                        table.push_str(&format!("{},{}", fmt(a, d), fmt(b, d)));
                        if let Some((from, to)) = date_texts(opts, src) {
                            table.push(',');
                            table.push_str(from.as_deref().unwrap_or(""));
                            if opts.dates.as_ref().is_some_and(|d| d.end.is_some()) {
                                table.push(',');
                                table.push_str(to.as_deref().unwrap_or(""));
                            }
                        }
                        table.push('\n');
                    }
                }
                (None, ExportContent::Table(t)) => {
                    table_csv(&mut table, t, &project, d, cx, cy)?;
                }
                (None, _) => {}
            }
            place_notes(&table, &notes, opts.csv_notes)
        }
        (ExportFormat::GeoJson, pts) => {
            let mut fc = Map::new();
            fc.insert("type".into(), json!("FeatureCollection"));
            if unmasked {
                fc.insert("label".into(), json!(UNMASKED_LABEL));
            }
            fc.insert("metadata".into(), Value::Object(meta));
            let mut feats = Vec::new();
            match (pts, content) {
                (Some(pts), _) => {
                    for (x, y, src) in pts {
                        let (a, b) = project(x, y)?;
                        let mut props = Map::new();
                        if let Some((from, to)) = date_texts(opts, src) {
                            props.insert("date".into(), json!(from));
                            if opts.dates.as_ref().is_some_and(|d| d.end.is_some()) {
                                props.insert("date_to".into(), json!(to));
                            }
                        }
                        feats.push(json!({
                            "type": "Feature",
                            "geometry": {"type": "Point", "coordinates": [round(a, d), round(b, d)]},
                            "properties": Value::Object(props)
                        }));
                    }
                }
                (None, ExportContent::Table(t)) => {
                    for c in exported_cells(t) {
                        let mut polys = Vec::new();
                        for poly in &c.geometry {
                            let mut rings = Vec::new();
                            for ring in poly {
                                let mut r = Vec::new();
                                for v in ring {
                                    let (a, b) = project(v[0], v[1])?;
                                    r.push(json!([round(a, d), round(b, d)]));
                                }
                                if ring.first() != ring.last() {
                                    r.push(r[0].clone());
                                }
                                rings.push(Value::Array(r));
                            }
                            polys.push(Value::Array(rings));
                        }
                        let geometry = if polys.len() == 1 {
                            json!({"type": "Polygon", "coordinates": polys[0]})
                        } else {
                            json!({"type": "MultiPolygon", "coordinates": polys})
                        };
                        feats.push(json!({
                            "type": "Feature",
                            "geometry": geometry,
                            "properties": {
                                "id": c.id, "row": c.row, "col": c.col,
                                "count": c.count, "suppressed": c.suppressed,
                                "population": c.population, "rate": c.rate,
                                "rate_unreliable": c.rate_unreliable,
                            }
                        }));
                    }
                    fc.insert(
                        "totals".into(),
                        Value::Array(
                            t.lines
                                .iter()
                                .map(|l| {
                                    json!({"name": l.name, "kind": line_kind(l.kind),
                                           "total": l.total, "suppressed": l.total.is_none()})
                                })
                                .collect(),
                        ),
                    );
                    fc.insert("outside".into(), json!(t.outside));
                }
                (None, _) => {}
            }
            fc.insert("features".into(), Value::Array(feats));
            serde_json::to_string_pretty(&Value::Object(fc))
                .map_err(|e| bad("export", &e.to_string()))?
        }
    };
    let (ext, mime) = match opts.format {
        ExportFormat::Csv => ("csv", "text/csv"),
        ExportFormat::GeoJson => ("geojson", "application/geo+json"),
    };
    Ok(ExportFile {
        text,
        file_name: download_name(stem, &opts.created, ext),
        mime: mime.into(),
        preview,
    })
}

fn line_kind(k: LineKind) -> &'static str {
    match k {
        LineKind::Row => "row_total",
        LineKind::Column => "column_total",
        LineKind::Group => "group_total",
        LineKind::Grand => "grand_total",
    }
}

/// Puts the notes into a CSV `table` (header line first, every line ending
/// in `\n`) as [`CsvNotes`] says. With [`CsvNotes::LastColumn`] every row
/// gets one more field: the header `about_this_file`, one note per data row,
/// the remaining notes joined with ` | ` in the last row, and empty fields
/// after the notes run out; a table without data rows gets one row of empty
/// fields holding the notes.
fn place_notes(table: &str, notes: &[String], place: CsvNotes) -> String {
    let mut out = String::with_capacity(table.len() + 64 * notes.len() + 32);
    if place == CsvNotes::TopLines {
        for n in notes {
            out.push_str("# ");
            out.push_str(n);
            out.push('\n');
        }
        out.push_str(table);
        return out;
    }
    let mut lines = table.lines();
    let header = lines.next().unwrap_or("");
    let width = header.split(',').count();
    out.push_str(header);
    out.push(',');
    out.push_str(NOTES_COLUMN);
    out.push('\n');
    let rows: Vec<&str> = lines.collect();
    let empty_row = ",".repeat(width.saturating_sub(1));
    let rows = if rows.is_empty() {
        vec![empty_row.as_str()]
    } else {
        rows
    };
    let last = rows.len() - 1;
    for (i, row) in rows.iter().enumerate() {
        let note = if i < last {
            notes.get(i).cloned().unwrap_or_default()
        } else {
            notes.get(i..).map(|r| r.join(" | ")).unwrap_or_default()
        };
        out.push_str(row);
        out.push(',');
        out.push_str(&csv_field(&note));
        out.push('\n');
    }
    out
}

fn table_csv(
    s: &mut String,
    t: &SuppressedTable,
    project: &dyn Fn(f64, f64) -> Result<(f64, f64), AnalysisError>,
    d: usize,
    cx: &str,
    cy: &str,
) -> Result<(), AnalysisError> {
    s.push_str(&TABLE_FIELDS.join(","));
    s.push_str(&format!(",centre_{cx},centre_{cy},rate_unreliable\n"));
    let opt = |v: Option<String>| v.unwrap_or_default();
    for c in exported_cells(t) {
        // Centre: mean of the first ring's distinct vertices.
        let centre = c.geometry.first().and_then(|p| p.first()).map(|ring| {
            let r = super::open_ring(ring);
            let n = r.len().max(1) as f64;
            (
                r.iter().map(|v| v[0]).sum::<f64>() / n,
                r.iter().map(|v| v[1]).sum::<f64>() / n,
            )
        });
        let (ca, cb) = match centre {
            Some((a, b)) => {
                let (a, b) = project(a, b)?;
                (fmt(a, d), fmt(b, d))
            }
            None => (String::new(), String::new()),
        };
        s.push_str(&format!(
            "cell,{},{},{},{},{},{},{},{ca},{cb},{}\n",
            csv_field(&c.id),
            opt(c.row.map(|v| v.to_string())),
            opt(c.col.map(|v| v.to_string())),
            opt(c.count.map(|v| v.to_string())),
            c.suppressed,
            opt(c.population.map(|v| format!("{v}"))),
            opt(c.rate.map(|v| format!("{v:.3}"))),
            c.rate_unreliable,
        ));
    }
    for l in &t.lines {
        s.push_str(&format!(
            "{},{},,,{},{},,,,,\n",
            line_kind(l.kind),
            csv_field(&l.name),
            opt(l.total.map(|v| v.to_string())),
            l.total.is_none(),
        ));
    }
    s.push_str(&format!(
        "outside,outside every cell,,,{},{},,,,,\n",
        opt(t.outside.map(|v| v.to_string())),
        t.outside.is_none()
    ));
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::download_name;

    #[test]
    fn download_names_follow_one_pattern() {
        assert_eq!(
            download_name("masked-points", "2026-03-04T10:00:00Z", "csv"),
            "cloister-masked-points-2026-03-04.csv"
        );
        assert_eq!(download_name("report", "", "html"), "cloister-report.html");
        assert_eq!(
            download_name("report", "not a date", "html"),
            "cloister-report.html"
        );
    }
}
