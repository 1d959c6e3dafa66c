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
mod clustering;
mod hotspots;
mod sharing;

use crate::error::{AnalysisError, InputError, InputErrorKind};
use crate::input::{self, CoordKind, RawArea, RawLayer, ReadOptions, Rejection};
use crate::study::{AreaFallback, Study};
use crate::summary;
use js_sys::{Float64Array, Object, Reflect, Uint32Array};
use serde::{Deserialize, Serialize};
use wasm_bindgen::prelude::*;

/// The tool's version.
#[wasm_bindgen]
pub fn version() -> String {
    crate::VERSION.to_string()
}

fn ser() -> serde_wasm_bindgen::Serializer {
    serde_wasm_bindgen::Serializer::json_compatible()
}

pub(crate) fn to_js<T: Serialize + ?Sized>(v: &T) -> Result<JsValue, JsValue> {
    v.serialize(&ser())
        .map_err(|e| js_error("internal", &e.to_string(), None))
}

pub(crate) fn from_js<T: for<'de> Deserialize<'de> + Default>(v: JsValue) -> Result<T, JsValue> {
    if v.is_undefined() || v.is_null() {
        return Ok(T::default());
    }
    serde_wasm_bindgen::from_value(v)
        .map_err(|e| js_error("bad_options", &format!("options not understood: {e}"), None))
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
    js_error(
        e.code(),
        &e.to_string(),
        e.at.as_ref().map(|l| (l.row, l.column.clone())),
    )
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

/// Options for a study-area file.
#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct AreaOptions {
    coords: Option<CoordKind>,
}

#[derive(Serialize)]
struct RejectionRow<'a> {
    row: u64,
    column: Option<&'a str>,
    reason: &'a input::RejectReason,
    reason_text: &'static str,
    value: &'a str,
}

#[derive(Serialize)]
struct ErrorSummary {
    code: String,
    message: String,
}

#[derive(Serialize)]
struct LoadReport<'a> {
    layer: &'a str,
    format: Option<&'a input::SourceFormat>,
    columns: &'a [String],
    mapping: Option<&'a input::ResolvedMapping>,
    coords: CoordKind,
    rows_read: u64,
    accepted: usize,
    rejected: usize,
    by_reason: Vec<input::ReasonCount>,
    categories: &'a [String],
    time_has_clock: bool,
    study: Option<crate::study::StudyReport>,
    study_error: Option<ErrorSummary>,
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
                .map(rejection_row)
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
        let (rows_read, rejected) = match (&self.study, which) {
            (Some(s), "events") => (s.events_rows_read, s.event_rejections.len()),
            (Some(s), "controls") => (s.controls_rows_read, s.control_rejections.len()),
            _ => (layer.rows_read, layer.rejections.len()),
        };
        let accepted = match (&self.study, which) {
            (Some(s), "events") => s.events.len(),
            (Some(s), "controls") => s.controls.as_ref().map_or(layer.len(), |c| c.len()),
            _ => layer.len(),
        };
        let rejections: &[Rejection] = match (&self.study, which) {
            (Some(s), "events") => &s.event_rejections,
            (Some(s), "controls") => &s.control_rejections,
            _ => &layer.rejections,
        };
        let rep = LoadReport {
            layer: which,
            format: Some(&layer.format),
            columns: &layer.columns,
            mapping: Some(&layer.mapping),
            coords: layer.coords,
            rows_read,
            accepted,
            rejected,
            by_reason: input::count_by_reason(rejections),
            categories: &layer.category_names,
            time_has_clock: layer.time_has_clock,
            study: self.study.as_ref().map(Study::report),
            study_error: None,
        };
        to_js(&rep)
    }
}

fn rejection_row(r: &Rejection) -> RejectionRow<'_> {
    RejectionRow {
        row: r.row,
        column: r.column.as_deref(),
        reason: &r.reason,
        reason_text: r.reason.describe(),
        value: &r.value,
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
    #[wasm_bindgen(js_name = loadEvents)]
    pub fn load_events(&mut self, bytes: &[u8], options: JsValue) -> Result<JsValue, JsValue> {
        let opts: ReadOptions = from_js(options)?;
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

    /// Reads a controls / population-at-risk file (same formats as events).
    #[wasm_bindgen(js_name = loadControls)]
    pub fn load_controls(&mut self, bytes: &[u8], options: JsValue) -> Result<JsValue, JsValue> {
        let opts: ReadOptions = from_js(options)?;
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

    /// Drops the controls layer.
    #[wasm_bindgen(js_name = clearControls)]
    pub fn clear_controls(&mut self) -> Result<JsValue, JsValue> {
        let study = self
            .build(self.events.as_ref(), self.area.as_ref(), None)
            .map_err(|e| input_error(&e))?;
        self.set_study(study);
        self.controls = None;
        self.study_js()
    }

    /// Reads a study-area file (GeoJSON Polygon / MultiPolygon).
    #[wasm_bindgen(js_name = loadArea)]
    pub fn load_area(&mut self, bytes: &[u8], options: JsValue) -> Result<JsValue, JsValue> {
        let opts: AreaOptions = from_js(options)?;
        let area = input::read_area(bytes, opts.coords).map_err(|e| input_error(&e))?;
        let study = self
            .build(self.events.as_ref(), Some(&area), self.controls.as_ref())
            .map_err(|e| input_error(&e))?;
        self.set_study(study);
        self.area = Some(area);
        self.study_js()
    }

    /// Drops the study-area file; the fallback window is used instead.
    #[wasm_bindgen(js_name = clearArea)]
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
    #[wasm_bindgen(js_name = setAreaFallback)]
    pub fn set_area_fallback(&mut self, kind: &str) -> Result<JsValue, JsValue> {
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
    pub fn summary(&mut self) -> Result<JsValue, JsValue> {
        to_js(self.summary_ref()?)
    }

    /// Geometry for the map, in planar metres.
    #[wasm_bindgen(js_name = mapLayers)]
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
    pub fn rejections(&self, layer: &str, offset: usize, limit: usize) -> Result<JsValue, JsValue> {
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
            .map(rejection_row)
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
