//! One home for every analysis's parameters: their names, units, defaults,
//! limits and allowed values.
//!
//! Each analysis keeps its parameters in one struct beside its code (for
//! example [`crate::privacy::DonutParams`]) that derives `Default`,
//! `Serialize` and `Deserialize` with `#[serde(default,
//! deny_unknown_fields)]`, and implements [`Params`]: a list of [`Field`]s
//! saying what each parameter means and which values it accepts. The
//! checks ([`Params::validate`]), the page's form limits and the JS API's
//! answer to `parameterSpec(name)` all read that one list, so a limit is
//! written once.
//!
//! Rules every field follows:
//! * Names carry their unit: `_m` for metres, `_km2` for square kilometres,
//!   `_per_km2` for densities; counts, fractions and choices have none.
//! * Numbers must be finite; a range is inclusive unless `min_exclusive`.
//! * A length may also be capped at a multiple of the study area's extent
//!   (the diagonal of its bounding box), checked when the study is known
//!   ([`Params::validate_in`]).

use crate::error::AnalysisError;
use serde::de::DeserializeOwned;
use serde::Serialize;
use serde_json::Value;

/// What kind of value a parameter takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// Any finite number (see `min`, `max`).
    Number,
    /// A whole number.
    Integer,
    Boolean,
    /// One of `allowed`.
    Choice,
    Text,
    /// A list of numbers, each in `min..=max`.
    Numbers,
    /// An object with its own fields (described in `doc`).
    Object,
    /// The bytes of a file (`Uint8Array`).
    Bytes,
}

/// One parameter: what it is and which values it accepts.
#[derive(Debug, Clone, Serialize)]
pub struct Field {
    pub name: &'static str,
    pub kind: Kind,
    /// Unit of a number (`"m"`, `"km²"`, …); `None` for counts and fractions.
    pub unit: Option<&'static str>,
    /// The default (filled in from the struct's `Default` by [`spec`]).
    pub default: Value,
    pub min: Option<f64>,
    pub max: Option<f64>,
    /// The value must be more than `min` (not equal to it).
    pub min_exclusive: bool,
    /// At most this many times the study area's extent (bounding-box diagonal).
    pub max_extent_factor: Option<f64>,
    /// Values of a choice.
    pub allowed: &'static [&'static str],
    /// May be left empty (`null`): then chosen automatically (see `doc`).
    pub optional: bool,
    /// Handled by the session, not passed to the analysis.
    pub session: bool,
    pub doc: &'static str,
}

impl Field {
    fn new(name: &'static str, kind: Kind, doc: &'static str) -> Field {
        Field {
            name,
            kind,
            unit: None,
            default: Value::Null,
            min: None,
            max: None,
            min_exclusive: false,
            max_extent_factor: None,
            allowed: &[],
            optional: false,
            session: false,
            doc,
        }
    }
    /// A number (metres when `unit` is `"m"`).
    pub fn number(name: &'static str, unit: Option<&'static str>, doc: &'static str) -> Field {
        Field {
            unit,
            ..Field::new(name, Kind::Number, doc)
        }
    }
    pub fn integer(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Integer, doc)
    }
    pub fn boolean(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Boolean, doc)
    }
    pub fn text(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Text, doc)
    }
    pub fn object(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Object, doc)
    }
    pub fn bytes(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Bytes, doc)
    }
    pub fn numbers(name: &'static str, doc: &'static str) -> Field {
        Field::new(name, Kind::Numbers, doc)
    }
    pub fn choice(
        name: &'static str,
        allowed: &'static [&'static str],
        doc: &'static str,
    ) -> Field {
        Field {
            allowed,
            ..Field::new(name, Kind::Choice, doc)
        }
    }
    /// A seed: a whole number from 0 to 2^53 − 1 (what a JS number holds exactly).
    pub fn seed(doc: &'static str) -> Field {
        Field::integer("seed", doc).range(0.0, MAX_SEED as f64)
    }
    /// `min..=max`.
    pub fn range(self, min: f64, max: f64) -> Field {
        Field {
            min: Some(min),
            max: Some(max),
            ..self
        }
    }
    /// At least `min`.
    pub fn at_least(self, min: f64) -> Field {
        Field {
            min: Some(min),
            ..self
        }
    }
    /// More than `min` (and at most `max` when given).
    pub fn above(self, min: f64, max: Option<f64>) -> Field {
        Field {
            min: Some(min),
            max,
            min_exclusive: true,
            ..self
        }
    }
    /// A length at most `factor` times the study area's extent. Being a
    /// length, it is also at most [`MAX_LENGTH_M`] (checked even before a
    /// study is known).
    pub fn extent(self, factor: f64) -> Field {
        Field {
            max_extent_factor: Some(factor),
            max: Some(self.max.unwrap_or(MAX_LENGTH_M)),
            ..self
        }
    }
    /// A length that sets a scale (a bandwidth, a radius, a cell size): at
    /// least [`MIN_LENGTH_M`], at most [`MAX_LENGTH_M`] and `factor` times
    /// the study area's extent.
    pub fn scale_length(self, factor: f64) -> Field {
        Field {
            min: Some(MIN_LENGTH_M),
            min_exclusive: false,
            ..self.extent(factor)
        }
    }
    /// May be empty (automatic).
    pub fn optional(self) -> Field {
        Field {
            optional: true,
            ..self
        }
    }
    /// Handled by the session (not a parameter of the computation).
    pub fn session(self) -> Field {
        Field {
            session: true,
            ..self
        }
    }

    /// The accepted range in words, e.g. "from 1 to 9999".
    pub fn range_text(&self) -> String {
        let lo = self.min.map(|v| self.with_unit(v));
        let hi = self.max.map(|v| self.with_unit(v));
        let mut s = match (lo, hi, self.min_exclusive) {
            (Some(a), Some(b), false) => format!("from {a} to {b}"),
            (Some(a), Some(b), true) => format!("more than {a} and at most {b}"),
            (Some(a), None, false) => format!("{a} or more"),
            (Some(a), None, true) => format!("more than {a}"),
            (None, Some(b), _) => format!("at most {b}"),
            (None, None, _) => "a finite number".to_string(),
        };
        if self.kind == Kind::Integer {
            s = format!("a whole number {s}");
        }
        s
    }

    /// A value with this field's unit, e.g. "500 m".
    pub fn with_unit(&self, v: f64) -> String {
        match self.unit {
            Some(u) => format!("{} {u}", num(v)),
            None => num(v),
        }
    }
}

/// Largest seed accepted: 2^53 − 1, the largest whole number a JS number
/// holds exactly.
pub const MAX_SEED: u64 = (1 << 53) - 1;

/// Smallest length accepted for a length that sets a scale (bandwidths, the
/// DBSCAN radius, cell sizes; [`Field::scale_length`]): 1 cm. Below it
/// distances are finer than any location's precision and kernels narrower
/// than the arithmetic can hold (a 10⁻³⁰⁰ m bandwidth underflows).
pub const MIN_LENGTH_M: f64 = 0.01;

/// Largest length accepted anywhere: 20,000 km, half the Earth's
/// circumference (no two places are further apart). Lengths are also capped
/// at a multiple of the study area's extent once a study is loaded.
pub const MAX_LENGTH_M: f64 = 2.0e7;

/// Longest side of the study area's extent allowed for lengths that carry
/// `extent(f)`, as the factor used by most analyses: a radius or bandwidth
/// ten times the study area's diagonal covers everything many times over.
pub const EXTENT_FACTOR: f64 = 10.0;

/// A number for messages: whole numbers without decimals.
/// Very large or very small values are written with an exponent (`1e308`,
/// `1e-300`), not as hundreds of digits.
pub fn num(v: f64) -> String {
    if v.fract() == 0.0 && v.abs() < 1e15 {
        format!("{v:.0}")
    } else if v.is_finite() && (v.abs() >= 1e15 || v.abs() < 1e-6) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// A count for sentences shown to a user: rounded to a whole number, with
/// thousands separated by commas as the page writes them (`589,263,863`).
pub fn count(v: f64) -> String {
    if !v.is_finite() || v.abs() >= 1e15 {
        return num(v);
    }
    let digits = format!("{:.0}", v.abs().round());
    let mut out = String::with_capacity(digits.len() + digits.len() / 3 + 1);
    if v.round() < 0.0 {
        out.push('-');
    }
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// A parameter of an analysis: the struct that holds them, its field list
/// and its checks.
pub trait Params: Serialize + DeserializeOwned + Default {
    /// The analysis, as the JS method that takes these options (e.g. `"maskDonut"`).
    const NAME: &'static str;

    /// Every field, in the order of the struct, plus any option handled by
    /// the session (marked `session`).
    fn fields() -> Vec<Field>;

    /// Checks that involve more than one field (e.g. `r_min_m < r_max_m`).
    fn check(&self) -> Result<(), AnalysisError> {
        Ok(())
    }

    /// Checks every field against its range, then [`Params::check`].
    fn validate(&self) -> Result<(), AnalysisError> {
        self.validate_in(None)
    }

    /// As [`Params::validate`], also capping lengths at a multiple of the
    /// study area's extent (`extent_m`, the bounding-box diagonal).
    fn validate_in(&self, extent_m: Option<f64>) -> Result<(), AnalysisError> {
        let v = serde_json::to_value(self).map_err(|e| bad("parameters", e.to_string()))?;
        for f in Self::fields().iter().filter(|f| !f.session) {
            check_field(f, v.get(f.name).unwrap_or(&Value::Null), extent_m)?;
        }
        self.check()
    }
}

/// The error for one parameter.
pub fn bad(name: &str, detail: impl Into<String>) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.to_string(),
        detail: detail.into(),
    }
}

/// Checks a piece of simulations computed elsewhere (a helper worker or
/// thread) before a job adds it: `len` values, `width` per simulation,
/// starting at simulation `from`, which must be the `done` so far, and
/// not going past `total`. Returns the number of simulations in it.
/// `what` names the piece for the message, `unit` one simulation.
pub fn piece_rows(
    what: &str,
    unit: &str,
    (from, done, total): (usize, usize, usize),
    len: usize,
    width: usize,
) -> Result<usize, AnalysisError> {
    let rows = len / width.max(1);
    if from != done || width == 0 || !len.is_multiple_of(width) || done + rows > total {
        return Err(bad(
            what,
            format!(
                "a piece of {len} values ({width} per {unit}) from {unit} {from} does not continue the {done} done of {total}"
            ),
        ));
    }
    Ok(rows)
}

fn check_field(f: &Field, v: &Value, extent_m: Option<f64>) -> Result<(), AnalysisError> {
    match (f.kind, v) {
        (_, Value::Null) if f.optional => Ok(()),
        (Kind::Number | Kind::Integer, Value::Null) => Err(bad(
            f.name,
            format!(
                "must be {} (got a value that is not a finite number)",
                f.range_text()
            ),
        )),
        (Kind::Number | Kind::Integer, Value::Number(n)) => {
            check_number(f, n.as_f64().unwrap_or(f64::NAN), extent_m)
        }
        (Kind::Numbers, Value::Array(list)) => {
            for x in list {
                match x.as_f64() {
                    Some(x) => check_number(f, x, extent_m)?,
                    None => {
                        return Err(bad(
                            f.name,
                            format!("each value must be {}", f.range_text()),
                        ))
                    }
                }
            }
            Ok(())
        }
        _ => Ok(()),
    }
}

fn check_number(f: &Field, x: f64, extent_m: Option<f64>) -> Result<(), AnalysisError> {
    // The study's extent first: it is the nearer and more telling limit.
    if let (Some(k), Some(e)) = (f.max_extent_factor, extent_m) {
        if x.is_finite() && e > 0.0 && e.is_finite() && x > k * e {
            return Err(bad(
                f.name,
                format!(
                    "must be at most {} times the study area's extent of {} m, so at most {} m (got {})",
                    num(k),
                    num(e.round()),
                    num((k * e).round()),
                    f.with_unit(x)
                ),
            ));
        }
    }
    let low = match f.min {
        Some(m) if f.min_exclusive => x > m,
        Some(m) => x >= m,
        None => true,
    };
    let high = f.max.is_none_or(|m| x <= m);
    let whole = f.kind != Kind::Integer || x.fract() == 0.0;
    if !(x.is_finite() && low && high && whole) {
        return Err(bad(
            f.name,
            format!("must be {} (got {})", f.range_text(), f.with_unit(x)),
        ));
    }
    Ok(())
}

/// The description of one analysis's parameters, with defaults.
#[derive(Debug, Clone, Serialize)]
pub struct Spec {
    pub analysis: &'static str,
    pub fields: Vec<Field>,
}

/// The fields of `P` with their defaults filled in from `P::default()`.
pub fn spec_of<P: Params>() -> Spec {
    let d = serde_json::to_value(P::default()).unwrap_or(Value::Null);
    let fields = P::fields()
        .into_iter()
        .map(|mut f| {
            if let Some(v) = d.get(f.name) {
                f.default = v.clone();
            }
            f
        })
        .collect();
    Spec {
        analysis: P::NAME,
        fields,
    }
}

/// Every analysis's parameters, by the JS method that takes them.
pub fn all() -> Vec<Spec> {
    use crate::{clusters, distance, input, intensity, privacy, risk, scan, spacetime};
    vec![
        spec_of::<input::ReadOptions>(),
        spec_of::<input::AreaOptions>(),
        spec_of::<distance::QuadratParams>(),
        spec_of::<distance::ClarkEvansParams>(),
        spec_of::<distance::EnvelopeOptions>(),
        spec_of::<risk::LabellingOptions>(),
        spec_of::<risk::NearestOptions>(),
        spec_of::<risk::RiskSurfaceOptions>(),
        spec_of::<risk::InhomKOptions>(),
        spec_of::<intensity::SurfaceParams>(),
        spec_of::<clusters::DbscanOptions>(),
        spec_of::<clusters::KDistanceParams>(),
        spec_of::<scan::ScanOptions>(),
        spec_of::<crate::spacetime::mantel::MantelOptions>(),
        spec_of::<crate::spacetime::stk::SpaceTimeKOptions>(),
        spec_of::<privacy::DonutParams>(),
        spec_of::<privacy::KAnonParams>(),
        spec_of::<privacy::cost::CostParams>(),
        spec_of::<privacy::aggregate::AggregateOptions>(),
        spec_of::<privacy::export::ExportRequest>(),
        spec_of::<crate::spacetime::pairs::NearRepeatOptions>(),
        spec_of::<crate::spacetime::pairs::KnoxOptions>(),
        spec_of::<crate::spacetime::timeline::TimelineOptions>(),
        spec_of::<spacetime::scan::StScanOptions>(),
        spec_of::<spacetime::scan_export::StScanExportOptions>(),
    ]
}

/// The parameters of one analysis (by its JS method name; `loadControls`
/// is `loadEvents`, `exportPreview` is `exportFile`).
pub fn spec(analysis: &str) -> Option<Spec> {
    let name = match analysis {
        "loadControls" => "loadEvents",
        "exportPreview" => "exportFile",
        other => other,
    };
    all().into_iter().find(|s| s.analysis == name)
}

/// Checks options given as JSON for the analysis named `analysis` (as
/// [`spec`] names it), as the JS API does: `Ok(())` or the error code and
/// message. `None` for an unknown analysis.
pub fn check_options(
    analysis: &str,
    v: Value,
    extent_m: Option<f64>,
) -> Option<Result<(), DecodeError>> {
    use crate::{clusters, distance, input, intensity, privacy, risk, scan, spacetime};
    fn run<P: Params>(v: Value, e: Option<f64>) -> Result<(), DecodeError> {
        decode::<P>(v, e).map(|_| ())
    }
    let name = spec(analysis)?.analysis;
    Some(match name {
        "loadEvents" => run::<input::ReadOptions>(v, extent_m),
        "loadArea" => run::<input::AreaOptions>(v, extent_m),
        "quadratTest" => run::<distance::QuadratParams>(v, extent_m),
        "clarkEvans" => run::<distance::ClarkEvansParams>(v, extent_m),
        "envelopeStart" => run::<distance::EnvelopeOptions>(v, extent_m),
        "labellingStart" => run::<risk::LabellingOptions>(v, extent_m),
        "nearestCasesStart" => run::<risk::NearestOptions>(v, extent_m),
        "riskSurfaceStart" => run::<risk::RiskSurfaceOptions>(v, extent_m),
        "inhomKStart" => run::<risk::InhomKOptions>(v, extent_m),
        "intensitySurface" => run::<intensity::SurfaceParams>(v, extent_m),
        "dbscan" => run::<clusters::DbscanOptions>(v, extent_m),
        "kDistance" => run::<clusters::KDistanceParams>(v, extent_m),
        "scanStart" => run::<scan::ScanOptions>(v, extent_m),
        "maskDonut" => run::<privacy::DonutParams>(v, extent_m),
        "maskKAnonymity" => run::<privacy::KAnonParams>(v, extent_m),
        "maskingCost" => run::<privacy::cost::CostParams>(v, extent_m),
        "aggregate" => run::<privacy::aggregate::AggregateOptions>(v, extent_m),
        "exportFile" => run::<privacy::export::ExportRequest>(v, extent_m),
        "nearRepeatStart" => run::<crate::spacetime::pairs::NearRepeatOptions>(v, extent_m),
        "knoxStart" => run::<crate::spacetime::pairs::KnoxOptions>(v, extent_m),
        "spaceTimeScanStart" => run::<spacetime::scan::StScanOptions>(v, extent_m),
        "spaceTimeScanExport" => run::<spacetime::scan_export::StScanExportOptions>(v, extent_m),
        "mantelStart" => run::<spacetime::mantel::MantelOptions>(v, extent_m),
        "spaceTimeKStart" => run::<spacetime::stk::SpaceTimeKOptions>(v, extent_m),
        "timeline" => run::<spacetime::timeline::TimelineOptions>(v, extent_m),
        _ => return None,
    })
}

/// Edit distance, for "did you mean" in messages about unknown names.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, &cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// The message for an option `key` that `P` does not know: names the key,
/// suggests the nearest name and lists the valid ones.
pub fn unknown_option<P: Params>(key: &str) -> String {
    let names: Vec<&str> = P::fields().iter().map(|f| f.name).collect();
    let near = names
        .iter()
        .map(|n| (edit_distance(key, n), *n))
        .filter(|(d, _)| *d <= 2)
        .min();
    let hint = match near {
        Some((_, n)) => format!(" (did you mean \"{n}\"?)"),
        None => String::new(),
    };
    format!(
        "{}: unknown option \"{key}\"{hint}; valid options: {}",
        P::NAME,
        names.join(", ")
    )
}

/// Rewrites a message of the deserializer in plain words: no Rust type
/// names (`usize`, `f64`, `struct Foo`, `internally tagged enum Bar`).
pub fn plain_words(msg: &str) -> String {
    let mut out = String::with_capacity(msg.len());
    let words: Vec<&str> = msg.split(' ').collect();
    let mut i = 0;
    while i < words.len() {
        let w = words[i];
        let (core, tail) = split_punct(w);
        let next = words.get(i + 1).copied();
        let replaced: Option<(String, usize)> = match core {
            "internally" | "adjacently" if next == Some("tagged") => {
                let after = words.get(i + 3).map(|s| split_punct(s).1).unwrap_or("");
                Some((format!("one of the allowed kinds{after}"), 4))
            }
            "untagged" if next == Some("enum") => {
                let after = words.get(i + 2).map(|s| split_punct(s).1).unwrap_or("");
                Some((format!("one of the allowed kinds{after}"), 3))
            }
            "enum" if next.is_some() => {
                let after = next.map(|s| split_punct(s).1).unwrap_or("");
                Some((format!("one of the allowed values{after}"), 2))
            }
            "struct" if next.is_some() => {
                let after = next.map(|s| split_punct(s).1).unwrap_or("");
                Some((format!("an object{after}"), 2))
            }
            "usize" | "u64" | "u32" | "u16" | "u8" => {
                Some((format!("a whole number, 0 or more{tail}"), 1))
            }
            "i64" | "i32" | "i16" | "i8" | "isize" => Some((format!("a whole number{tail}"), 1)),
            "f64" | "f32" => Some((format!("a number{tail}"), 1)),
            "char" => Some((format!("a single character{tail}"), 1)),
            "variant" if next.is_some_and(|n| n.starts_with("identifier")) => {
                Some(("a choice".to_string(), 2))
            }
            "field" if next.is_some_and(|n| n.starts_with("identifier")) => {
                Some(("an option name".to_string(), 2))
            }
            "field" => Some((format!("option{tail}"), 1)),
            "variant" => Some((format!("value{tail}"), 1)),
            "sequence" => Some((format!("a list{tail}"), 1)),
            "map" => Some((format!("an object{tail}"), 1)),
            _ => None,
        };
        if !out.is_empty() {
            out.push(' ');
        }
        match replaced {
            Some((text, used)) => {
                out.push_str(&text);
                i += used;
            }
            None => {
                out.push_str(w);
                i += 1;
            }
        }
    }
    out.replace('`', "\"")
}

/// Splits trailing punctuation (`,` `.` `;` `)`) from a word.
fn split_punct(w: &str) -> (&str, &str) {
    let cut = w
        .char_indices()
        .rev()
        .take_while(|(_, c)| matches!(c, ',' | '.' | ';' | ')'))
        .last()
        .map_or(w.len(), |(i, _)| i);
    w.split_at(cut)
}

/// Options handled by the session (fields marked `session`), by name.
pub type SessionOptions = serde_json::Map<String, Value>;

/// Why options were refused: the error code (`"bad_options"` or
/// `"bad_parameter"`) and a message naming the option.
pub type DecodeError = (&'static str, String);

/// Reads the options of `P` from a JSON value: `null` gives the defaults;
/// an unknown key, a value of the wrong type or out of range gives a
/// message naming the option. `Err((code, message))` with code
/// `"bad_options"` (not understood) or `"bad_parameter"` (out of range).
/// Keys in `session` fields are returned apart, not passed to `P`.
pub fn decode<P: Params>(
    v: Value,
    extent_m: Option<f64>,
) -> Result<(P, SessionOptions), DecodeError> {
    let mut obj = match v {
        Value::Null => serde_json::Map::new(),
        Value::Object(m) => m,
        _ => {
            return Err((
                "bad_options",
                format!("{}: the options must be an object, such as {{}}", P::NAME),
            ))
        }
    };
    let fields = P::fields();
    if let Some(k) = obj
        .keys()
        .find(|k| !fields.iter().any(|f| f.name == k.as_str()))
    {
        return Err(("bad_options", unknown_option::<P>(k)));
    }
    let mut session = serde_json::Map::new();
    for f in fields.iter().filter(|f| f.session) {
        if let Some(v) = obj.remove(f.name) {
            session.insert(f.name.to_string(), v);
        }
    }
    let p: P = match serde_json::from_value(Value::Object(obj.clone())) {
        Ok(p) => p,
        Err(e) => {
            // Name the option: try each key alone over the defaults.
            let base = serde_json::to_value(P::default()).unwrap_or(Value::Null);
            for (k, v) in &obj {
                let mut one = base.clone();
                if let Some(m) = one.as_object_mut() {
                    m.insert(k.clone(), v.clone());
                }
                if let Err(e1) = serde_json::from_value::<P>(one) {
                    // A number outside what the field's type holds (a
                    // negative or huge count, a fraction for a whole
                    // number): say the field's range, as validation does.
                    if let (Some(f), Some(x)) =
                        (fields.iter().find(|f| f.name == k.as_str()), v.as_f64())
                    {
                        if matches!(f.kind, Kind::Integer | Kind::Number)
                            && (f.min.is_some() || f.max.is_some())
                        {
                            // A fraction for a whole number is of the wrong
                            // kind; a whole number the type cannot hold is out
                            // of range.
                            let code = if x.fract() == 0.0 {
                                "bad_parameter"
                            } else {
                                "bad_options"
                            };
                            return Err((
                                code,
                                format!(
                                    "{}: {k}: must be {} (got {})",
                                    P::NAME,
                                    f.range_text(),
                                    num(x)
                                ),
                            ));
                        }
                    }
                    let mut words = plain_words(&e1.to_string());
                    // "one of the allowed kinds" alone does not say which:
                    // add the option's own description.
                    if words.contains("one of the allowed kinds") {
                        if let Some(f) = fields.iter().find(|f| f.name == k.as_str()) {
                            words = format!("{words} ({})", f.doc);
                        }
                    }
                    return Err((
                        "bad_options",
                        format!("{}: option \"{k}\": {words}", P::NAME),
                    ));
                }
            }
            return Err((
                "bad_options",
                format!("{}: {}", P::NAME, plain_words(&e.to_string())),
            ));
        }
    };
    p.validate_in(extent_m)
        .map_err(|e| ("bad_parameter", format!("{}: {e}", P::NAME)))?;
    Ok((p, session))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A piece from a helper is taken only where it continues the run: at
    /// the number done, in whole simulations, not past the total.
    #[test]
    fn a_piece_must_continue_the_run() {
        assert_eq!(
            piece_rows("curves", "simulation", (4, 4, 10), 12, 3).unwrap(),
            4
        );
        assert_eq!(
            piece_rows("curves", "simulation", (4, 4, 10), 18, 3).unwrap(),
            6
        );
        assert_eq!(
            piece_rows("curves", "simulation", (0, 0, 5), 0, 3).unwrap(),
            0
        );
        for (at, len, width) in [
            ((3, 4, 10), 3, 3),
            ((4, 4, 10), 10, 3),
            ((4, 4, 10), 21, 3),
            ((0, 0, 5), 5, 0),
        ] {
            let e = piece_rows("curves", "simulation", at, len, width).unwrap_err();
            let AnalysisError::BadParameter { name, detail } = e else {
                panic!("a bad piece is a bad parameter");
            };
            assert_eq!(name, "curves");
            assert!(
                detail.contains("does not continue the 4 done of 10")
                    || detail.contains("the 0 done of 5"),
                "{detail}"
            );
        }
    }

    #[test]
    fn counts_are_grouped_by_thousands() {
        assert_eq!(count(0.0), "0");
        assert_eq!(count(999.4), "999");
        assert_eq!(count(1000.0), "1,000");
        assert_eq!(count(589_263_862.6), "589,263,863");
        assert_eq!(count(-1_234_567.0), "-1,234,567");
        assert_eq!(count(6e7), "60,000,000");
        assert_eq!(count(f64::INFINITY), "inf");
    }

    #[test]
    fn plain_words_hides_type_names() {
        let m = plain_words("invalid type: floating point `2.5`, expected usize");
        assert_eq!(
            m,
            "invalid type: floating point \"2.5\", expected a whole number, 0 or more"
        );
        let m = plain_words("expected internally tagged enum CoordKind");
        assert_eq!(m, "expected one of the allowed kinds");
        let m = plain_words("invalid type: string \"x\", expected struct ColumnMapping");
        assert_eq!(m, "invalid type: string \"x\", expected an object");
        let m = plain_words("unknown variant `ripley`, expected one of `k`, `l`");
        assert_eq!(m, "unknown value \"ripley\", expected one of \"k\", \"l\"");
        assert!(!plain_words("invalid type: null, expected f64").contains("f64"));
    }

    #[test]
    fn huge_and_tiny_numbers_are_short_in_messages() {
        assert_eq!(num(1e308), "1e308");
        assert_eq!(num(1e-300), "1e-300");
        assert_eq!(num(1e9), "1000000000");
        assert_eq!(num(0.01), "0.01");
    }

    #[test]
    fn edit_distance_counts_edits() {
        assert_eq!(edit_distance("r_mxa_m", "r_max_m"), 2);
        assert_eq!(edit_distance("kernal", "kernel"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn a_number_the_type_cannot_hold_gets_the_range() {
        // Before: "invalid value: integer \"-1\", expected a whole number, 0 or more".
        for (bad, code) in [
            (json!(-1), "bad_parameter"),
            (json!(4294967296u64), "bad_parameter"),
            (json!(0), "bad_parameter"),
            (json!(1.5), "bad_options"),
        ] {
            let e = decode::<KDistanceParams>(json!({ "min_samples": bad }), None).unwrap_err();
            assert_eq!(e.0, code, "{}", e.1);
            assert!(
                e.1.contains("min_samples: must be a whole number from 2 to 1000"),
                "{}",
                e.1
            );
        }
    }

    #[test]
    fn range_text_reads_well() {
        let f = Field::integer("n_sim", "").range(1.0, 9999.0);
        assert_eq!(f.range_text(), "a whole number from 1 to 9999");
        let f = Field::number("r_max_m", Some("m"), "").above(0.0, None);
        assert_eq!(f.range_text(), "more than 0 m");
    }

    use crate::clusters::{DbscanOptions, KDistanceParams};
    use crate::distance::{ClarkEvansParams, EnvelopeOptions, QuadratParams};
    use crate::input::{AreaOptions, ReadOptions};
    use crate::intensity::SurfaceParams;
    use crate::privacy::aggregate::AggregateOptions;
    use crate::privacy::cost::CostParams;
    use crate::privacy::export::ExportRequest;
    use crate::privacy::{DonutParams, KAnonParams};
    use crate::scan::ScanOptions;
    use serde_json::json;

    /// `validate` refuses `v` for field `name`, and the message names it.
    fn refuses<P: Params>(name: &str, v: Value) {
        let mut o = serde_json::to_value(P::default()).unwrap();
        o[name] = v.clone();
        let p: P = serde_json::from_value(o).unwrap();
        let e = p
            .validate()
            .expect_err(&format!("{}.{name} = {v} refused", P::NAME));
        let msg = e.to_string();
        assert!(msg.contains(name), "{msg}");
    }

    /// `validate` accepts `v` for field `name`.
    fn accepts<P: Params>(name: &str, v: Value) {
        let mut o = serde_json::to_value(P::default()).unwrap();
        o[name] = v.clone();
        let p: P = serde_json::from_value(o).unwrap();
        p.validate()
            .unwrap_or_else(|e| panic!("{}.{name} = {v}: {e}", P::NAME));
    }

    #[test]
    fn defaults_are_valid() {
        ReadOptions::default().validate().unwrap();
        AreaOptions::default().validate().unwrap();
        QuadratParams::default().validate().unwrap();
        ClarkEvansParams::default().validate().unwrap();
        EnvelopeOptions::default().validate().unwrap();
        SurfaceParams::default().validate().unwrap();
        KDistanceParams::default().validate().unwrap();
        ScanOptions::default().validate().unwrap();
        DonutParams::default().validate().unwrap();
        KAnonParams::default().validate().unwrap();
        CostParams::default().validate().unwrap();
        AggregateOptions::default().validate().unwrap();
        ExportRequest::default().validate().unwrap();
        // DBSCAN has no default radius: it must be chosen.
        assert!(DbscanOptions::default().validate().is_err());
    }

    #[test]
    fn quadrat_and_clark_evans_limits() {
        refuses::<QuadratParams>("nx", json!(0));
        refuses::<QuadratParams>("ny", json!(101));
        accepts::<QuadratParams>("nx", json!(100));
        refuses::<QuadratParams>("n_sim", json!(10_000));
        accepts::<QuadratParams>("n_sim", json!(0));
        refuses::<QuadratParams>("seed", json!(MAX_SEED + 1));
        refuses::<ClarkEvansParams>("n_sim", json!(10_000));
        accepts::<ClarkEvansParams>("n_sim", json!(9999));
    }

    #[test]
    fn envelope_limits() {
        refuses::<EnvelopeOptions>("n_sim", json!(0));
        refuses::<EnvelopeOptions>("n_sim", json!(10_000));
        refuses::<EnvelopeOptions>("n_steps", json!(1));
        refuses::<EnvelopeOptions>("n_steps", json!(1001));
        accepts::<EnvelopeOptions>("n_steps", json!(1000));
        refuses::<EnvelopeOptions>("alpha", json!(0.0));
        refuses::<EnvelopeOptions>("alpha", json!(0.6));
        refuses::<EnvelopeOptions>("r_max_m", json!(0.0));
        refuses::<EnvelopeOptions>("r_min_m", json!(-1.0));
        refuses::<EnvelopeOptions>("bandwidth_m", json!(-3.0));
        accepts::<EnvelopeOptions>("r_max_m", json!(250.0));
        let o = EnvelopeOptions {
            r_min_m: Some(300.0),
            r_max_m: Some(200.0),
            ..Default::default()
        };
        assert!(o.validate().unwrap_err().to_string().contains("r_min_m"));
        // Lengths are capped at ten times the study area's extent.
        let o = EnvelopeOptions {
            r_max_m: Some(20_000.0),
            ..Default::default()
        };
        assert!(o.validate().is_ok());
        let e = o.validate_in(Some(1000.0)).unwrap_err().to_string();
        assert!(e.contains("r_max_m") && e.contains("10000 m"), "{e}");
        // The flat options give the run's parameters and back.
        let p = o.params();
        assert_eq!(p.functions.r_max, Some(20_000.0));
        assert_eq!(EnvelopeOptions::from(&p), o);
    }

    #[test]
    fn surface_dbscan_kdistance_scan_limits() {
        refuses::<SurfaceParams>("cells", json!(1));
        refuses::<SurfaceParams>("cells", json!(5000));
        refuses::<SurfaceParams>("candidates", json!(2));
        refuses::<SurfaceParams>("fixed_m", json!(0.0));
        refuses::<SurfaceParams>("isopleths", json!([0.5, 1.5]));
        refuses::<SurfaceParams>("isopleths", json!([0.0]));
        accepts::<SurfaceParams>("isopleths", json!([1.0]));
        let fixed = SurfaceParams {
            method: crate::intensity::BandwidthMethod::Fixed,
            ..Default::default()
        };
        assert!(fixed
            .validate()
            .unwrap_err()
            .to_string()
            .contains("fixed_m"));
        let d = DbscanOptions {
            eps_m: 100.0,
            ..Default::default()
        };
        d.validate().unwrap();
        let bad = DbscanOptions {
            min_samples: 0,
            ..d
        };
        assert!(bad
            .validate()
            .unwrap_err()
            .to_string()
            .contains("min_samples"));
        let bad = DbscanOptions {
            eps_m: f64::NAN,
            ..d
        };
        assert!(bad.validate().is_err());
        refuses::<KDistanceParams>("min_samples", json!(0));
        refuses::<KDistanceParams>("min_samples", json!(1));
        refuses::<KDistanceParams>("min_samples", json!(1001));
        accepts::<KDistanceParams>("min_samples", json!(2));
        refuses::<ScanOptions>("max_share", json!(0.8));
        refuses::<ScanOptions>("max_share", json!(0.0));
        refuses::<ScanOptions>("n_sim", json!(0));
        refuses::<ScanOptions>("cells_long_side", json!(513));
    }

    #[test]
    fn masking_aggregate_export_limits() {
        refuses::<DonutParams>("r_max_m", json!(0.0));
        refuses::<DonutParams>("r_min_m", json!(-1.0));
        refuses::<DonutParams>("max_tries", json!(0));
        let p = DonutParams {
            r_min_m: 600.0,
            r_max_m: 500.0,
            ..Default::default()
        };
        assert!(p.validate().is_err());
        let p = DonutParams::default();
        assert!(p.validate_in(Some(40.0)).is_err(), "500 m > 10 × 40 m");
        assert!(p.validate_in(Some(60.0)).is_ok());
        refuses::<KAnonParams>("target_k", json!(0));
        refuses::<KAnonParams>("area_factor", json!(0.5));
        refuses::<KAnonParams>("density_per_km2", json!(0.0));
        accepts::<KAnonParams>("density_per_km2", json!(2500.0));
        refuses::<CostParams>("grid_cells", json!(1));
        refuses::<CostParams>("bandwidth_m", json!(-1.0));
        refuses::<AggregateOptions>("cell_size_m", json!(0.0));
        refuses::<AggregateOptions>("min_count", json!(0));
        refuses::<AggregateOptions>("rate_per", json!(0.0));
        refuses::<ExportRequest>("decimals", json!(13));
        accepts::<ExportRequest>("decimals", json!(0));
    }

    #[test]
    fn decode_names_unknown_and_mistyped_options() {
        let (code, msg) =
            decode::<DonutParams>(json!({"r_min_m": 50, "r_mxa_m": 250}), None).unwrap_err();
        assert_eq!(code, "bad_options");
        assert!(msg.contains("\"r_mxa_m\""), "{msg}");
        assert!(msg.contains("did you mean \"r_max_m\""), "{msg}");
        assert!(
            msg.contains("r_min_m, r_max_m, law, seed, max_tries, replace"),
            "{msg}"
        );
        let (code, msg) = decode::<ClarkEvansParams>(json!({"n_sim": 2.5}), None).unwrap_err();
        assert_eq!(code, "bad_options");
        assert!(
            msg.contains("n_sim: must be a whole number from 0 to 9999 (got 2.5)")
                && !msg.contains("usize"),
            "{msg}"
        );
        let (code, msg) = decode::<ClarkEvansParams>(json!({"n_sim": 10000}), None).unwrap_err();
        assert_eq!(code, "bad_parameter");
        assert!(msg.contains("n_sim") && msg.contains("10000"), "{msg}");
        let (code, msg) =
            decode::<ReadOptions>(json!({"coords": {"kind": "nonsense"}}), None).unwrap_err();
        assert_eq!(code, "bad_options");
        assert!(!msg.contains("CoordKind") && !msg.contains("enum"), "{msg}");
        let (code, _) = decode::<ClarkEvansParams>(json!(5), None).unwrap_err();
        assert_eq!(code, "bad_options");
        // Session-level keys come back apart.
        let (p, session) =
            decode::<DonutParams>(json!({"r_max_m": 400, "replace": true}), None).unwrap();
        assert_eq!(p.r_max_m, 400.0);
        assert_eq!(session.get("replace"), Some(&json!(true)));
        // null gives the defaults.
        let (p, _) = decode::<ScanOptions>(Value::Null, None).unwrap();
        assert_eq!(p, ScanOptions::default());
    }

    #[test]
    fn every_spec_names_distinct_fields() {
        for s in all() {
            let mut names: Vec<&str> = s.fields.iter().map(|f| f.name).collect();
            names.sort_unstable();
            let n = names.len();
            names.dedup();
            assert_eq!(n, names.len(), "{} repeats a field", s.analysis);
            for f in &s.fields {
                if let (Some(lo), Some(hi)) = (f.min, f.max) {
                    assert!(lo <= hi, "{}.{}", s.analysis, f.name);
                }
                if f.kind == Kind::Choice {
                    assert!(!f.allowed.is_empty(), "{}.{}", s.analysis, f.name);
                }
            }
        }
        assert!(spec("maskDonut").is_some());
        assert!(spec("loadControls").is_some());
        assert!(spec("noSuchAnalysis").is_none());
    }

    /// Options that make `analysis` valid apart from the field under test.
    fn base(analysis: &str) -> serde_json::Map<String, Value> {
        let mut m = serde_json::Map::new();
        if analysis == "dbscan" {
            m.insert("eps_m".into(), json!(100.0));
        }
        m
    }

    #[test]
    fn every_numeric_field_has_a_range_and_values_outside_it_are_refused() {
        // Walks every analysis's fields: each number has a declared minimum
        // and maximum, and the check refuses the values just outside them,
        // huge and tiny values outside them, and (for required fields) a
        // value that is not a finite number (NaN and ±Infinity arrive as null).
        let mut walked = 0;
        for sp in all() {
            for f in sp.fields.iter().filter(|f| !f.session) {
                if !matches!(f.kind, Kind::Number | Kind::Integer | Kind::Numbers) {
                    continue;
                }
                walked += 1;
                let (Some(lo), Some(hi)) = (f.min, f.max) else {
                    panic!("{}.{} has no full range", sp.analysis, f.name);
                };
                let step = |v: f64| {
                    if f.kind == Kind::Integer {
                        1.0
                    } else {
                        1e-6 * v.abs().max(1.0)
                    }
                };
                let below = if f.min_exclusive { lo } else { lo - step(lo) };
                let mut outside = vec![below, hi + step(hi), 1e308, -1e308];
                for tiny in [1e-300, -1e-300] {
                    let inside = (if f.min_exclusive {
                        tiny > lo
                    } else {
                        tiny >= lo
                    }) && tiny <= hi;
                    if !inside || f.kind == Kind::Integer {
                        outside.push(tiny);
                    }
                }
                for v in outside {
                    let mut o = base(sp.analysis);
                    let val = if f.kind == Kind::Numbers {
                        json!([v])
                    } else {
                        json!(v)
                    };
                    o.insert(f.name.into(), val);
                    let r = check_options(sp.analysis, Value::Object(o), None).unwrap();
                    let (code, msg) =
                        r.expect_err(&format!("{}.{} = {v} refused", sp.analysis, f.name));
                    assert!(code == "bad_parameter" || code == "bad_options", "{code}");
                    assert!(msg.contains(f.name), "{}: {msg}", f.name);
                }
                if !f.optional && f.kind != Kind::Numbers {
                    let mut o = base(sp.analysis);
                    o.insert(f.name.into(), json!(f64::NAN));
                    let r = check_options(sp.analysis, Value::Object(o), None).unwrap();
                    assert!(r.is_err(), "{}.{} = NaN", sp.analysis, f.name);
                }
            }
        }
        assert!(walked >= 40, "{walked} numeric fields walked");
        // Lengths: at most 20,000 km even before a study is known; scale
        // lengths at least 1 cm.
        let f = Field::number("a_m", Some("m"), "")
            .above(0.0, None)
            .extent(EXTENT_FACTOR);
        assert_eq!(
            (f.min, f.min_exclusive, f.max),
            (Some(0.0), true, Some(MAX_LENGTH_M))
        );
        let f = Field::number("a_m", Some("m"), "").scale_length(EXTENT_FACTOR);
        assert_eq!(
            (f.min, f.min_exclusive, f.max),
            (Some(MIN_LENGTH_M), false, Some(MAX_LENGTH_M))
        );
        assert!(check_options("noSuchAnalysis", json!({}), None).is_none());
    }
}
