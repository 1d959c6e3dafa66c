//! Exports of the time line ("Close in space and time" → time on the map).
//!
//! # JS API
//! * `Session.timeline(options) -> Timeline` (options [`TimelineOptions`]:
//!   `bin` = `auto` | `day` | `week` | `month`): events per bin, window
//!   shares spread by aoristic weights ([`crate::spacetime::timeline`]).
//! * `Session.eventTimes() -> {start: Float64Array, end: Float64Array | null}`:
//!   each event's time and the end of its window, days since 1970-01-01, in
//!   the order of `mapLayers().events` (so the page can hide the events
//!   outside a time range). **NaN means no usable time** (start) or no
//!   window (end); `end` is null without a time-until column.
//! * `drawTimelineChart(canvasId, data)` (main thread): the chart of
//!   [`crate::plot::timeline`].

use super::{analysis_error, decode, from_js, js_error, to_js, Session};
use crate::plot::{PlotError, TimelineChartData};
use crate::spacetime::timeline::{timeline, TimelineOptions};
use js_sys::{Float64Array, Object, Reflect};
use plotters::prelude::IntoDrawingArea;
use wasm_bindgen::prelude::*;

#[wasm_bindgen]
impl Session {
    /// Events per day, week or month, windows spread by aoristic weights.
    #[wasm_bindgen(js_name = timeline, unchecked_return_type = "Timeline")]
    pub fn timeline(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "TimelineOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<TimelineOptions>(options, self.extent_m())?;
        let s = self.study_ref()?;
        let t = timeline(s, &o).map_err(|e| analysis_error(&e))?;
        to_js(&t)
    }

    /// Each event's time and window end (days; NaN = none), in map order.
    #[wasm_bindgen(js_name = eventTimes, unchecked_return_type = "EventTimes")]
    pub fn event_times(&mut self) -> Result<JsValue, JsValue> {
        let s = self.study_ref()?;
        let ev = &s.events;
        let obj = Object::new();
        let start: JsValue = match ev.time() {
            Some(t) => Float64Array::from(t).into(),
            None => Float64Array::from(vec![f64::NAN; ev.len()].as_slice()).into(),
        };
        let end: JsValue = match ev.time_end() {
            Some(e) => Float64Array::from(e).into(),
            None => JsValue::NULL,
        };
        Reflect::set(&obj, &"start".into(), &start)?;
        Reflect::set(&obj, &"end".into(), &end)?;
        Ok(obj.into())
    }
}

/// Draws the time line on the canvas with id `canvas_id` (main thread
/// only). `data` is `timeline`'s `edges`, `whole`, `window_share`, with an
/// optional `from`, `to` (the map's range) and `scale`.
#[wasm_bindgen(js_name = drawTimelineChart)]
pub fn draw_timeline_chart(
    canvas_id: &str,
    #[wasm_bindgen(unchecked_param_type = "TimelineChartData")] data: JsValue,
) -> Result<(), JsValue> {
    let d: TimelineChartData = from_js(data)?;
    let backend = plotters_canvas::CanvasBackend::new(canvas_id).ok_or_else(|| {
        js_error(
            "no_canvas",
            &format!("no canvas with id \"{canvas_id}\" on the page"),
            None,
        )
    })?;
    let root = backend.into_drawing_area();
    crate::plot::draw_timeline_chart(&root, &d).map_err(|e| match e {
        PlotError::Data(m) => js_error("bad_options", &m, None),
        PlotError::Draw(m) => js_error("draw", &m, None),
    })
}
