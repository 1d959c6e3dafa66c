//! Error types: one for reading input (with position), one for analyses.

use serde::Serialize;
use std::fmt;

/// Where in an input file something went wrong.
///
/// `row` is **1-based, as a spreadsheet shows it**: for CSV the header is row 1
/// and the first data record is row 2 (a record spanning several lines is
/// numbered by its first line). For GeoJSON `row` is the 1-based feature number.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Location {
    pub row: u64,
    /// Column name (CSV header or GeoJSON property / "geometry"), if known.
    pub column: Option<String>,
}

/// Why a whole file could not be read. Row-level problems are not errors:
/// they become rejections (see [`crate::input::Rejection`]).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "code", rename_all = "snake_case")]
#[non_exhaustive]
pub enum InputErrorKind {
    /// The file has no bytes, or only whitespace.
    Empty,
    /// The bytes do not look like text (NUL bytes or control characters).
    Binary,
    /// The text is not valid UTF-8, nor UTF-16 with a BOM, nor plain Windows-1252
    /// (see `input::text::decode`).
    NotUtf8 { byte_offset: usize },
    /// Not a CSV table we can use (e.g. a single column, no data rows).
    NotATable { detail: String },
    /// No usable coordinate columns were found or the named ones are missing.
    MissingColumns {
        detail: String,
        available: Vec<String>,
    },
    /// The JSON could not be parsed.
    BadJson { detail: String },
    /// Valid JSON but not the GeoJSON we need.
    BadGeoJson { detail: String },
    /// A study-area polygon that cannot be used.
    BadPolygon { detail: String },
    /// Layers that do not fit together (e.g. lon/lat events, projected area).
    Mismatch { detail: String },
    /// Every row was rejected.
    NoValidRows { rows_read: u64 },
    /// The rows were readable but every event lies outside the loaded study
    /// area: most likely the area belongs to other data (another place, or
    /// other coordinates). `outside` events were readable.
    AllOutsideArea { rows_read: u64, outside: u64 },
    /// An option names something the file does not have (e.g. a zone's
    /// population property that holds no number).
    BadOptions { detail: String },
}

/// A file-level input error: a kind, and where it happened if that is known.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputError {
    pub at: Option<Location>,
    #[serde(flatten)]
    pub kind: InputErrorKind,
}

impl InputError {
    pub fn new(kind: InputErrorKind) -> Self {
        InputError { at: None, kind }
    }
    pub fn at(mut self, row: u64, column: Option<&str>) -> Self {
        self.at = Some(Location {
            row,
            column: column.map(str::to_string),
        });
        self
    }
    /// Short machine-readable code, e.g. `"not_utf8"`.
    pub fn code(&self) -> &'static str {
        match &self.kind {
            InputErrorKind::Empty => "empty",
            InputErrorKind::Binary => "binary",
            InputErrorKind::NotUtf8 { .. } => "not_utf8",
            InputErrorKind::NotATable { .. } => "not_a_table",
            InputErrorKind::MissingColumns { .. } => "missing_columns",
            InputErrorKind::BadJson { .. } => "bad_json",
            InputErrorKind::BadGeoJson { .. } => "bad_geojson",
            InputErrorKind::BadPolygon { .. } => "bad_polygon",
            InputErrorKind::Mismatch { .. } => "mismatch",
            InputErrorKind::NoValidRows { .. } => "no_valid_rows",
            InputErrorKind::AllOutsideArea { .. } => "outside_study_area",
            InputErrorKind::BadOptions { .. } => "bad_options",
        }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some(loc) = &self.at {
            match &loc.column {
                Some(c) => write!(f, "row {}, column \"{}\": ", loc.row, c)?,
                None => write!(f, "row {}: ", loc.row)?,
            }
        }
        match &self.kind {
            InputErrorKind::Empty => write!(f, "the file is empty"),
            InputErrorKind::Binary => {
                write!(
                    f,
                    "this does not look like a text file (CSV or GeoJSON expected)"
                )
            }
            InputErrorKind::NotUtf8 { byte_offset } => write!(
                f,
                "the file is not readable as UTF-8, UTF-16 or Windows-1252 text (first bad \
                 byte at offset {byte_offset}); save it as UTF-8 and try again"
            ),
            InputErrorKind::NotATable { detail } => write!(f, "not a usable table: {detail}"),
            InputErrorKind::MissingColumns { detail, available } => {
                write!(f, "{detail}; columns found: {}", available.join(", "))
            }
            InputErrorKind::BadJson { detail } => write!(f, "not valid JSON: {detail}"),
            InputErrorKind::BadGeoJson { detail } => write!(f, "not usable GeoJSON: {detail}"),
            InputErrorKind::BadPolygon { detail } => write!(f, "unusable study area: {detail}"),
            InputErrorKind::Mismatch { detail } | InputErrorKind::BadOptions { detail } => {
                write!(f, "{detail}")
            }
            InputErrorKind::NoValidRows { rows_read } => {
                write!(
                    f,
                    "none of the {rows_read} rows could be used (see the rejected rows)"
                )
            }
            InputErrorKind::AllOutsideArea { rows_read, outside } => {
                let plural = if *outside == 1 { "event" } else { "events" };
                write!(
                    f,
                    "all {outside} readable {plural} (of {rows_read} rows) lie outside the \
                     study area that is loaded now, so the area probably belongs to other \
                     data (another place, or other coordinates). Remove that study area to \
                     use these events, or load the boundary that belongs to them"
                )
            }
        }
    }
}

impl std::error::Error for InputError {}

/// Why an analysis could not run.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "code", rename_all = "snake_case")]
#[non_exhaustive]
pub enum AnalysisError {
    /// The analysis needs more events than there are.
    TooFewPoints { needed: usize, found: usize },
    /// A parameter is outside its allowed range.
    BadParameter { name: String, detail: String },
    /// Nothing is loaded yet.
    NothingLoaded { what: String },
    /// The run was cancelled by the user.
    Cancelled,
}

impl fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            AnalysisError::TooFewPoints { needed, found } => {
                write!(
                    f,
                    "this needs at least {needed} events, but {found} are loaded"
                )
            }
            AnalysisError::BadParameter { name, detail } => write!(f, "{name}: {detail}"),
            AnalysisError::NothingLoaded { what } => write!(f, "load {what} first"),
            AnalysisError::Cancelled => write!(f, "cancelled"),
        }
    }
}

impl std::error::Error for AnalysisError {}
