//! The wasm boundary: the only module that knows JavaScript exists.
//!
//! Every export follows three steps: decode the JS arguments, call the pure
//! core, encode the result as plain JS objects (snake_case fields). Failures
//! never panic: they are thrown as a JS object `{ code, message, row?,
//! column? }` whose `message` is written for the person holding the file.
//! Loaded data lives in a [`Session`] so it is parsed once; a failed load
//! leaves what was loaded before untouched.

#![deny(clippy::unwrap_used, clippy::expect_used, clippy::indexing_slicing)]

// One file per analysis, each adding a `#[wasm_bindgen] impl Session` block.
// Long jobs follow the worker's protocol: `xStart(params) -> {total}`,
// `xStep(k) -> done so far`, `xFinish() -> result`; job state lives in
// `Session::extras` under the module's own key.
mod clock;
mod clustering;
mod hotspots;
mod risk;
mod risk_inhom;
mod risk_nearest;
mod risk_surface;
mod scan_parallel;
mod sharing;
mod spacetime_mantelk;
mod spacetime_pairs;
mod spacetime_scan;
mod spacetime_timeline;

use crate::error::{AnalysisError, InputError, InputErrorKind};
use crate::input::report::RejectionRow;
use crate::input::{self, AreaOptions, RawArea, RawLayer, ReadOptions, Rejection};
use crate::params;
use crate::study::{AreaFallback, Study};
use crate::summary;
use js_sys::{Float64Array, Object, Reflect, Uint32Array};
use serde::Serialize;
use wasm_bindgen::prelude::*;

/// The tool's version.
#[wasm_bindgen]
pub fn version() -> String {
    crate::VERSION.to_string()
}

/// Starts reporting the progress of the next call: until the next
/// `beginProgress`, long single steps (a bandwidth search, a surface,
/// DBSCAN, nearest-neighbour distances) pass the fraction done (0 to 1, at
/// most about a hundred times) to `globalThis.cloisterProgress(fraction)`
/// when the caller has defined that function. The page's worker calls this
/// before every request; nothing is reported unless it is called.
#[wasm_bindgen(js_name = beginProgress)]
pub fn begin_progress() {
    crate::progress::listen(|f| {
        let g = js_sys::global();
        if let Ok(cb) = Reflect::get(&g, &JsValue::from_str("cloisterProgress")) {
            if let Ok(cb) = cb.dyn_into::<js_sys::Function>() {
                let _ = cb.call1(&JsValue::NULL, &JsValue::from_f64(f));
            }
        }
    });
    crate::progress::begin();
}

fn ser() -> serde_wasm_bindgen::Serializer {
    serde_wasm_bindgen::Serializer::json_compatible()
}

pub(crate) fn to_js<T: Serialize + ?Sized>(v: &T) -> Result<JsValue, JsValue> {
    v.serialize(&ser())
        .map_err(|e| js_error("internal", &e.to_string(), None))
}

/// Reads a JS value that is not an analysis's options (chart options,
/// chart data) through JSON, so `deny_unknown_fields` holds; `null` or
/// `undefined` gives the defaults. Errors are in plain words.
pub(crate) fn from_js<T: serde::de::DeserializeOwned + Default>(v: JsValue) -> Result<T, JsValue> {
    if v.is_undefined() || v.is_null() {
        return Ok(T::default());
    }
    let json = js_to_json(&v, "options", 0)?;
    serde_json::from_value(json).map_err(|e| {
        js_error(
            "bad_options",
            &format!(
                "options not understood: {}",
                params::plain_words(&e.to_string())
            ),
            None,
        )
    })
}

/// Reads the options of an analysis (`P`, see [`crate::params`]): unknown
/// keys, values of the wrong type and values out of range are thrown as
/// `{code: "bad_options" | "bad_parameter", message}` naming the option.
/// Returns the options and the session-level keys (e.g. `replace`).
pub(crate) fn decode<P: params::Params>(
    v: JsValue,
    extent_m: Option<f64>,
) -> Result<(P, params::SessionOptions), JsValue> {
    let json = js_to_json(&v, P::NAME, 0)?;
    params::decode::<P>(json, extent_m).map_err(|(code, msg)| js_error(code, &msg, None))
}

/// As [`decode`], taking the bytes of a file out of key `bytes_key` first
/// (a `Uint8Array`, or a plain array of numbers).
pub(crate) fn decode_with_bytes<P: params::Params>(
    v: JsValue,
    bytes_key: &str,
    extent_m: Option<f64>,
) -> Result<(P, Option<Vec<u8>>), JsValue> {
    let Some(obj) = v.dyn_ref::<Object>() else {
        return decode::<P>(v, extent_m).map(|(p, _)| (p, None));
    };
    let raw = Reflect::get(obj, &JsValue::from_str(bytes_key))?;
    let bytes = if raw.is_undefined() || raw.is_null() {
        None
    } else if let Some(a) = raw.dyn_ref::<js_sys::Uint8Array>() {
        Some(a.to_vec())
    } else if js_sys::Array::is_array(&raw) {
        let list: Vec<u8> = js_sys::Array::from(&raw)
            .iter()
            .map(|x| {
                x.as_f64()
                    .filter(|f| (0.0..=255.0).contains(f) && f.fract() == 0.0)
            })
            .map(|x| x.map(|f| f as u8))
            .collect::<Option<Vec<u8>>>()
            .ok_or_else(|| {
                js_error(
                    "bad_options",
                    &format!(
                        "{}: option \"{bytes_key}\" must be the bytes of a file (Uint8Array)",
                        P::NAME
                    ),
                    None,
                )
            })?;
        Some(list)
    } else {
        return Err(js_error(
            "bad_options",
            &format!(
                "{}: option \"{bytes_key}\" must be the bytes of a file (Uint8Array)",
                P::NAME
            ),
            None,
        ));
    };
    let rest = Object::assign(&Object::new(), obj);
    Reflect::delete_property(&rest, &JsValue::from_str(bytes_key))?;
    let (p, _) = decode::<P>(rest.into(), extent_m)?;
    Ok((p, bytes))
}

/// A JS value as JSON: numbers that are whole become integers (so they
/// read as counts); `undefined` and `null` members are left out (not given);
/// typed arrays become lists; NaN, infinities, functions and symbols are
/// refused with the option's name.
pub(crate) fn js_to_json(
    v: &JsValue,
    path: &str,
    depth: u32,
) -> Result<serde_json::Value, JsValue> {
    use serde_json::Value;
    let refuse = |what: &str| js_error("bad_options", &format!("option \"{path}\": {what}"), None);
    if depth > 32 {
        return Err(refuse("nested too deeply"));
    }
    if v.is_undefined() || v.is_null() {
        return Ok(Value::Null);
    }
    if let Some(b) = v.as_bool() {
        return Ok(Value::Bool(b));
    }
    if let Some(f) = v.as_f64() {
        return number_json(f).ok_or_else(|| refuse(&format!("{f} is not a finite number")));
    }
    if let Some(s) = v.as_string() {
        return Ok(Value::String(s));
    }
    if v.is_bigint() {
        let text = js_sys::BigInt::from(v.clone())
            .to_string(10)
            .map(String::from)
            .unwrap_or_default();
        return text
            .parse::<u64>()
            .map(Value::from)
            .or_else(|_| text.parse::<i64>().map(Value::from))
            .map_err(|_| refuse("the whole number is too large"));
    }
    if js_sys::Array::is_array(v) {
        let a = js_sys::Array::from(v);
        let mut out = Vec::with_capacity(a.length() as usize);
        for (i, x) in a.iter().enumerate() {
            out.push(js_to_json(&x, &format!("{path}[{i}]"), depth + 1)?);
        }
        return Ok(Value::Array(out));
    }
    if js_sys::ArrayBuffer::is_view(v) {
        let values = Float64Array::new(v).to_vec();
        return values
            .into_iter()
            .map(|f| {
                number_json(f).ok_or_else(|| refuse("holds a value that is not a finite number"))
            })
            .collect::<Result<Vec<_>, _>>()
            .map(Value::Array);
    }
    if v.is_function() || v.is_symbol() {
        return Err(refuse("a function or symbol is not an option value"));
    }
    if let Some(obj) = v.dyn_ref::<Object>() {
        let mut m = serde_json::Map::new();
        for entry in Object::entries(obj).iter() {
            let pair = js_sys::Array::from(&entry);
            let key = pair.get(0).as_string().unwrap_or_default();
            let val = pair.get(1);
            // A member left undefined or null counts as not given.
            if val.is_undefined() || val.is_null() {
                continue;
            }
            let sub = if depth == 0 {
                key.clone()
            } else {
                format!("{path}.{key}")
            };
            m.insert(key, js_to_json(&val, &sub, depth + 1)?);
        }
        return Ok(Value::Object(m));
    }
    Err(refuse("not understood"))
}

/// A finite number as JSON; whole numbers within 2^53 become integers.
fn number_json(f: f64) -> Option<serde_json::Value> {
    if !f.is_finite() {
        return None;
    }
    if f.fract() == 0.0 && f.abs() <= 9_007_199_254_740_991.0 {
        if f >= 0.0 {
            return Some(serde_json::Value::from(f as u64));
        }
        return Some(serde_json::Value::from(f as i64));
    }
    serde_json::Number::from_f64(f).map(serde_json::Value::Number)
}

/// A positional count from JS (a batch size, an offset): a whole number
/// from 0 to 2^32 − 1, else `{code: "bad_parameter"}` naming it. Without
/// this, wasm-bindgen would wrap −1 to 4294967295 and read NaN as 0.
pub(crate) fn count_arg(v: f64, method: &str, name: &str) -> Result<usize, JsValue> {
    if v.is_finite() && v.fract() == 0.0 && (0.0..=4_294_967_295.0).contains(&v) {
        Ok(v as usize)
    } else {
        Err(js_error(
            "bad_parameter",
            &format!("{method}: {name} must be a whole number, 0 or more (got {v})"),
            None,
        ))
    }
}

/// The analyses' parameters (names, units, defaults, limits, allowed
/// values): all of them, or those of one method (e.g. `"maskDonut"`).
/// The page builds its controls from this; see [`crate::params`].
#[wasm_bindgen(js_name = parameterSpec, unchecked_return_type = "ParameterSpec | ParameterSpec[]")]
pub fn parameter_spec(analysis: Option<String>) -> Result<JsValue, JsValue> {
    match analysis {
        None => to_js(&params::all()),
        Some(a) => match params::spec(&a) {
            Some(s) => to_js(&s),
            None => Err(js_error(
                "bad_options",
                &format!(
                    "no analysis \"{a}\"; known: {}",
                    params::all()
                        .iter()
                        .map(|s| s.analysis)
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
                None,
            )),
        },
    }
}

/// Builds the thrown error object.
pub(crate) fn js_error(code: &str, message: &str, at: Option<(u64, Option<String>)>) -> JsValue {
    #[derive(Serialize)]
    struct ErrorObject<'a> {
        code: &'a str,
        message: &'a str,
        row: Option<u64>,
        column: Option<String>,
    }
    let (row, column) = match at {
        Some((r, c)) => (Some(r), c),
        None => (None, None),
    };
    let obj = ErrorObject {
        code,
        message,
        row,
        column,
    };
    obj.serialize(&ser())
        .unwrap_or_else(|_| JsValue::from_str(message))
}

pub(crate) fn input_error(e: &InputError) -> JsValue {
    let err = js_error(
        e.code(),
        &e.to_string(),
        e.at.as_ref().map(|l| (l.row, l.column.clone())),
    );
    // The header's names, decoded as the file was, so the page can offer
    // them in the column editor.
    if let InputErrorKind::MissingColumns { available, .. } = &e.kind {
        if let (Some(obj), Ok(v)) = (err.dyn_ref::<Object>(), to_js(available)) {
            let _ = set(obj, "columns", &v);
        }
    }
    err
}

pub(crate) fn analysis_error(e: &AnalysisError) -> JsValue {
    let code = match e {
        AnalysisError::TooFewPoints { .. } => "too_few_points",
        AnalysisError::BadParameter { .. } => "bad_parameter",
        AnalysisError::NothingLoaded { .. } => "nothing_loaded",
        AnalysisError::Cancelled => "cancelled",
        #[allow(unreachable_patterns)]
        _ => "analysis",
    };
    js_error(code, &e.to_string(), None)
}

fn nothing_loaded(what: &str) -> JsValue {
    analysis_error(&AnalysisError::NothingLoaded {
        what: what.to_string(),
    })
}

fn set(obj: &Object, key: &str, value: &JsValue) -> Result<(), JsValue> {
    Reflect::set(obj, &JsValue::from_str(key), value).map(|_| ())
}

/// Everything the user has loaded, parsed once and kept in the worker.
#[wasm_bindgen]
pub struct Session {
    events: Option<RawLayer>,
    controls: Option<RawLayer>,
    area: Option<RawArea>,
    fallback: AreaFallback,
    pub(crate) study: Option<Study>,
    /// The summary of `study`, computed on first request.
    summary: Option<summary::Summary>,
    /// State kept by analysis modules (running jobs, last results), by key.
    /// Cleared whenever the study changes.
    pub(crate) extras: std::collections::HashMap<&'static str, Box<dyn std::any::Any>>,
}

impl Default for Session {
    fn default() -> Self {
        Self::new()
    }
}

impl Session {
    /// Builds the study that would result from these layers.
    fn build(
        &self,
        events: Option<&RawLayer>,
        area: Option<&RawArea>,
        controls: Option<&RawLayer>,
    ) -> Result<Option<Study>, InputError> {
        match events {
            Some(ev) => Study::build(ev, area, controls, self.fallback).map(Some),
            None => Ok(None),
        }
    }

    fn set_study(&mut self, study: Option<Study>) {
        self.study = study;
        self.summary = None;
        self.extras.clear();
    }

    /// Module state stored under `key`, if it has type `T`.
    #[allow(dead_code)]
    pub(crate) fn extra_mut<T: 'static>(&mut self, key: &'static str) -> Option<&mut T> {
        self.extras.get_mut(key).and_then(|b| b.downcast_mut::<T>())
    }

    /// Removes and returns module state stored under `key`, if it has type `T`.
    #[allow(dead_code)]
    pub(crate) fn take_extra<T: 'static>(&mut self, key: &'static str) -> Option<T> {
        match self.extras.remove(key) {
            Some(b) => match b.downcast::<T>() {
                Ok(t) => Some(*t),
                Err(b) => {
                    self.extras.insert(key, b);
                    None
                }
            },
            None => None,
        }
    }

    /// The summary of the current study, computed once per study.
    fn summary_ref(&mut self) -> Result<&summary::Summary, JsValue> {
        if self.summary.is_none() {
            let s = self
                .study
                .as_ref()
                .ok_or_else(|| nothing_loaded("an events file"))?;
            self.summary = Some(summary::summarise(s));
        }
        self.summary
            .as_ref()
            .ok_or_else(|| nothing_loaded("an events file"))
    }

    /// The study area's extent (bounding-box diagonal, metres), for the
    /// limits of lengths; `None` before anything is loaded.
    pub(crate) fn extent_m(&self) -> Option<f64> {
        self.study.as_ref().map(|s| {
            let b = s.window.bbox();
            (b[2] - b[0]).hypot(b[3] - b[1])
        })
    }

    pub(crate) fn study_ref(&self) -> Result<&Study, JsValue> {
        self.study
            .as_ref()
            .ok_or_else(|| nothing_loaded("an events file"))
    }

    /// The error thrown when a file parsed but the study could not be built:
    /// carries the rejection summary so the page can show why.
    fn layer_failure(e: &InputError, layer: &RawLayer) -> JsValue {
        let err = input_error(e);
        if let Some(obj) = err.dyn_ref::<Object>() {
            let rows: Vec<RejectionRow> = layer
                .rejections
                .iter()
                .take(200)
                .map(RejectionRow::from)
                .collect();
            if let Ok(v) = to_js(&rows) {
                let _ = set(obj, "rejections", &v);
            }
            let _ = set(obj, "rows_read", &JsValue::from_f64(layer.rows_read as f64));
            if let Ok(v) = to_js(&input::count_by_reason(&layer.rejections)) {
                let _ = set(obj, "by_reason", &v);
            }
        }
        err
    }

    fn report(&self, which: &str, layer: &RawLayer) -> Result<JsValue, JsValue> {
        to_js(&input::report::load_report(
            which,
            layer,
            self.study.as_ref(),
        ))
    }
}

#[wasm_bindgen]
impl Session {
    /// An empty session.
    #[wasm_bindgen(constructor)]
    pub fn new() -> Session {
        console_error_panic_hook::set_once();
        Session {
            events: None,
            controls: None,
            area: None,
            fallback: AreaFallback::default(),
            study: None,
            summary: None,
            extras: std::collections::HashMap::new(),
        }
    }

    /// Reads an events file (CSV or GeoJSON bytes). On failure throws and keeps
    /// what was loaded before.
    #[wasm_bindgen(js_name = loadEvents, unchecked_return_type = "LoadReport")]
    pub fn load_events(
        &mut self,
        bytes: &[u8],
        #[wasm_bindgen(unchecked_param_type = "LoadEventsOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (opts, _) = decode::<ReadOptions>(options, None)?;
        let layer = input::read_points(bytes, &opts).map_err(|e| input_error(&e))?;
        let study = self
            .build(Some(&layer), self.area.as_ref(), self.controls.as_ref())
            .map_err(|e| Self::layer_failure(&e, &layer))?;
        self.set_study(study);
        self.events = Some(layer);
        match &self.events {
            Some(l) => self.report("events", l),
            None => Err(nothing_loaded("an events file")),
        }
    }

    /// Reads an events file that replaces everything loaded (events, study
    /// area, controls, results), as when one's own file follows the demo:
    /// the file is read into a fresh session, which takes this one's place
    /// only if the reading succeeded; on failure nothing changes.
    #[wasm_bindgen(js_name = loadEventsAfresh, unchecked_return_type = "LoadReport")]
    pub fn load_events_afresh(
        &mut self,
        bytes: &[u8],
        #[wasm_bindgen(unchecked_param_type = "LoadEventsOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let mut fresh = Session::new();
        let report = fresh.load_events(bytes, options)?;
        *self = fresh;
        Ok(report)
    }

    /// Reads a controls / population-at-risk file (same formats as events).
    #[wasm_bindgen(js_name = loadControls, unchecked_return_type = "LoadReport")]
    pub fn load_controls(
        &mut self,
        bytes: &[u8],
        #[wasm_bindgen(unchecked_param_type = "LoadEventsOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (opts, _) = decode::<ReadOptions>(options, None)?;
        let layer = input::read_points(bytes, &opts).map_err(|e| input_error(&e))?;
        if layer.is_empty() {
            let e = InputError::new(InputErrorKind::NoValidRows {
                rows_read: layer.rows_read,
            });
            return Err(Self::layer_failure(&e, &layer));
        }
        let study = self
            .build(self.events.as_ref(), self.area.as_ref(), Some(&layer))
            .map_err(|e| Self::layer_failure(&e, &layer))?;
        if study.is_some() {
            self.set_study(study);
        }
        self.controls = Some(layer);
        match &self.controls {
            Some(l) => self.report("controls", l),
            None => Err(nothing_loaded("a population file")),
        }
    }

    /// Forgets everything: events, study area, controls, the area choice and
    /// every analysis's kept state (masks, surfaces, jobs). Loading the demo
    /// starts from here, so it never mixes with the user's own files.
    #[wasm_bindgen(js_name = clearAll)]
    pub fn clear_all(&mut self) {
        *self = Session::new();
    }

    /// Drops the controls layer.
    #[wasm_bindgen(js_name = clearControls, unchecked_return_type = "StudyReport | null")]
    pub fn clear_controls(&mut self) -> Result<JsValue, JsValue> {
        let study = self
            .build(self.events.as_ref(), self.area.as_ref(), None)
            .map_err(|e| input_error(&e))?;
        self.set_study(study);
        self.controls = None;
        self.study_js()
    }

    /// Reads a study-area file (GeoJSON Polygon / MultiPolygon).
    #[wasm_bindgen(js_name = loadArea, unchecked_return_type = "StudyReport | null")]
    pub fn load_area(
        &mut self,
        bytes: &[u8],
        #[wasm_bindgen(unchecked_param_type = "LoadAreaOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (opts, _) = decode::<AreaOptions>(options, None)?;
        let area = input::read_area(bytes, opts.coords).map_err(|e| input_error(&e))?;
        let study = self
            .build(self.events.as_ref(), Some(&area), self.controls.as_ref())
            .map_err(|e| input_error(&e))?;
        self.set_study(study);
        self.area = Some(area);
        self.study_js()
    }

    /// Drops the study-area file; the fallback window is used instead.
    #[wasm_bindgen(js_name = clearArea, unchecked_return_type = "StudyReport | null")]
    pub fn clear_area(&mut self) -> Result<JsValue, JsValue> {
        let study = self
            .build(self.events.as_ref(), None, self.controls.as_ref())
            .map_err(|e| input_error(&e))?;
        self.set_study(study);
        self.area = None;
        self.study_js()
    }

    /// Chooses the window used without a study-area file:
    /// `"convex_hull"` or `"bounding_box"`.
    #[wasm_bindgen(js_name = setAreaFallback, unchecked_return_type = "StudyReport | null")]
    pub fn set_area_fallback(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "AreaFallback")] kind: &str,
    ) -> Result<JsValue, JsValue> {
        let fallback = match kind {
            "convex_hull" => AreaFallback::ConvexHull,
            "bounding_box" => AreaFallback::BoundingBox,
            other => {
                return Err(js_error(
                    "bad_options",
                    &format!(
                        "unknown study-area fallback \"{other}\" (use convex_hull or bounding_box)"
                    ),
                    None,
                ))
            }
        };
        let previous = self.fallback;
        self.fallback = fallback;
        match self.build(
            self.events.as_ref(),
            self.area.as_ref(),
            self.controls.as_ref(),
        ) {
            Ok(study) => {
                self.set_study(study);
                self.study_js()
            }
            Err(e) => {
                self.fallback = previous;
                Err(input_error(&e))
            }
        }
    }

    /// The current study (projection, area, counts, warnings), or null.
    #[wasm_bindgen(unchecked_return_type = "StudyReport | null")]
    pub fn study(&self) -> Result<JsValue, JsValue> {
        self.study_js()
    }

    fn study_js(&self) -> Result<JsValue, JsValue> {
        match &self.study {
            Some(s) => to_js(&s.report()),
            None => Ok(JsValue::NULL),
        }
    }

    /// Descriptive summary of the events.
    #[wasm_bindgen(unchecked_return_type = "Summary")]
    pub fn summary(&mut self) -> Result<JsValue, JsValue> {
        to_js(self.summary_ref()?)
    }

    /// Geometry for the map, in planar metres.
    #[wasm_bindgen(js_name = mapLayers, unchecked_return_type = "MapLayers")]
    pub fn map_layers(&mut self) -> Result<JsValue, JsValue> {
        let (ring, centre) = {
            let sm = self.summary_ref()?;
            let ring: Vec<[f64; 2]> = sm
                .ellipse
                .as_ref()
                .map(|e| e.outline_m.clone())
                .unwrap_or_default();
            (ring, [sm.mean_centre.x_m, sm.mean_centre.y_m])
        };
        let s = self.study_ref()?;
        let obj = Object::new();
        set(
            &obj,
            "events",
            &interleave(s.events.x(), s.events.y()).into(),
        )?;
        match s.events.category() {
            Some(c) => set(&obj, "event_category", &Uint32Array::from(c).into())?,
            None => set(&obj, "event_category", &JsValue::NULL)?,
        }
        set(&obj, "category_names", &to_js(s.events.category_names())?)?;
        match &s.controls {
            Some(c) => set(&obj, "controls", &interleave(c.x(), c.y()).into())?,
            None => set(&obj, "controls", &JsValue::NULL)?,
        }
        set(&obj, "area", &to_js(s.window.polygons())?)?;
        set(&obj, "bbox", &to_js(&s.window.bbox())?)?;
        set(&obj, "ellipse", &to_js(&ring)?)?;
        set(&obj, "mean_centre", &to_js(&centre)?)?;
        Ok(obj.into())
    }

    /// A page of the rejection table: `layer` is `"events"` or `"controls"`.
    #[wasm_bindgen(unchecked_return_type = "RejectionPage")]
    pub fn rejections(
        &self,
        #[wasm_bindgen(unchecked_param_type = "LayerName")] layer: &str,
        offset: f64,
        limit: f64,
    ) -> Result<JsValue, JsValue> {
        let offset = count_arg(offset, "rejections", "offset")?;
        let limit = count_arg(limit, "rejections", "limit")?;
        let list: &[Rejection] = match (layer, &self.study) {
            ("events", Some(s)) => &s.event_rejections,
            ("controls", Some(s)) => &s.control_rejections,
            ("events", None) => self.events.as_ref().map_or(&[][..], |l| &l.rejections),
            ("controls", None) => self.controls.as_ref().map_or(&[][..], |l| &l.rejections),
            (other, _) => {
                return Err(js_error(
                    "bad_options",
                    &format!("unknown layer \"{other}\""),
                    None,
                ))
            }
        };
        #[derive(Serialize)]
        struct Page<'a> {
            total: usize,
            offset: usize,
            rows: Vec<RejectionRow<'a>>,
        }
        let rows = list
            .iter()
            .skip(offset)
            .take(limit.min(10_000))
            .map(RejectionRow::from)
            .collect();
        to_js(&Page {
            total: list.len(),
            offset,
            rows,
        })
    }
}

fn interleave(x: &[f64], y: &[f64]) -> Float64Array {
    let mut v = Vec::with_capacity(x.len() * 2);
    for (a, b) in x.iter().zip(y) {
        v.push(*a);
        v.push(*b);
    }
    Float64Array::from(&v[..])
}
