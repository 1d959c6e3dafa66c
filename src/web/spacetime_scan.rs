//! Exports of the space–time permutation scan (Kulldorff et al. 2005):
//! emerging clusters, close in space and time.
//!
//! # JS API (methods of `Session`)
//! * `spaceTimeScanStart(options) -> {total, seed, n_events, n_locations,
//!   n_days, n_circles, times}` (options [`StScanOptions`]): finds the
//!   circles and the data's cylinders. Needs events with a date column.
//! * `spaceTimeScanStep(k) -> done`: `k` more permutations of the dates.
//! * `spaceTimeScanFinish() -> result` ([`crate::spacetime::scan::StScanResult`]):
//!   clusters, verdict, recurrence interval (prospective), cautions. The
//!   result is kept for the export.
//! * `spaceTimeScanShare() -> string`, `spaceTimeScanHelperStart(share)`,
//!   `spaceTimeScanSimulate(from, to) -> Float64Array`,
//!   `spaceTimeScanAdd(from, maxima) -> done`: the permutations spread over
//!   helper workers (the share holds location numbers and days, no
//!   coordinate); permutation j depends only on the seed and j, so the
//!   result equals one worker's.
//! * `spaceTimeScanExport(options) -> {text, file_name, mime, preview}`:
//!   the last result's clusters as CSV or GeoJSON, centres snapped to a
//!   grid of at least 100 m unless `internal: true` (then labelled).

use super::{analysis_error, decode, js_error, to_js, Session};
use crate::privacy::export::CoordinateOutput;
use crate::spacetime::scan::{StScanJob, StScanOptions, StScanResult, StScanSimulator};
use crate::spacetime::scan_export::{export_clusters, StScanExportOptions};
use crate::spacetime::TimedEvents;
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "spacetime-scan";
const RESULT_KEY: &str = "spacetime-scan-result";
const HELPER_KEY: &str = "spacetime-scan-helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    seed: u64,
    n_events: usize,
    n_locations: usize,
    n_days: usize,
    n_circles: usize,
    times: String,
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no space-time scan is in progress (start one first; loading other data ends a run)",
        None,
    )
}

#[wasm_bindgen]
impl Session {
    /// Starts the space–time permutation scan of the events.
    #[wasm_bindgen(js_name = spaceTimeScanStart, unchecked_return_type = "SpaceTimeScanStarted")]
    pub fn space_time_scan_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "SpaceTimeScanStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<StScanOptions>(options, self.extent_m())?;
        self.extras.remove(KEY);
        let s = self.study_ref()?;
        let ev = TimedEvents::from_study(s, o.uncertain_times, o.max_window_days, 2)
            .map_err(|e| analysis_error(&e))?;
        let job = StScanJob::new(&ev, &o).map_err(|e| analysis_error(&e))?;
        let sh = job.share();
        let started = Started {
            total: o.n_sim,
            seed: o.seed,
            n_events: sh.loc.len(),
            n_locations: sh.start.len().saturating_sub(1),
            n_days: sh.n_days,
            n_circles: job.n_circles(),
            times: ev.report().statement,
        };
        self.extras.insert(KEY, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more permutations; returns how many are done.
    #[wasm_bindgen(js_name = spaceTimeScanStep)]
    pub fn space_time_scan_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "spaceTimeScanStep", "k")?;
        let job = self.extra_mut::<StScanJob>(KEY).ok_or_else(no_job)?;
        Ok(job.run_batch(k).done)
    }

    /// Finishes the run: clusters, verdict, cautions.
    #[wasm_bindgen(js_name = spaceTimeScanFinish, unchecked_return_type = "SpaceTimeScanResult")]
    pub fn space_time_scan_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<StScanJob>(KEY).ok_or_else(no_job)?;
        let r = job.finish();
        let out = to_js(&r);
        self.extras.insert(RESULT_KEY, Box::new(r));
        out
    }

    /// The shared part of the running scan, for helper workers (JSON; no
    /// coordinates).
    #[wasm_bindgen(js_name = spaceTimeScanShare)]
    pub fn space_time_scan_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<StScanJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to run permutations of a shared scan.
    #[wasm_bindgen(js_name = spaceTimeScanHelperStart)]
    pub fn space_time_scan_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared scan: {e}"),
                None,
            )
        })?;
        let sim = StScanSimulator::new(share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_KEY, Box::new(sim));
        Ok(())
    }

    /// The largest LLR of permutations `from..to`, from the helper's copy or
    /// else the running scan (which is not changed).
    #[wasm_bindgen(js_name = spaceTimeScanSimulate)]
    pub fn space_time_scan_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let from = super::count_arg(from, "spaceTimeScanSimulate", "from")?;
        let to = super::count_arg(to, "spaceTimeScanSimulate", "to")?;
        if let Some(sim) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<StScanSimulator>())
        {
            return Ok(sim.simulate_range(from, to));
        }
        Ok(self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<StScanJob>())
            .ok_or_else(no_job)?
            .simulate_range(from, to))
    }

    /// Appends the maxima of permutations that start at `from` (the number
    /// done so far); returns the number done.
    #[wasm_bindgen(js_name = spaceTimeScanAdd)]
    pub fn space_time_scan_add(&mut self, from: f64, maxima: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "spaceTimeScanAdd", "from")?;
        let job = self.extra_mut::<StScanJob>(KEY).ok_or_else(no_job)?;
        job.add_simulated(from, &maxima)
            .map_err(|e| analysis_error(&e))
    }

    /// The last result's clusters as a file (centres coarsened unless
    /// `internal: true`).
    #[wasm_bindgen(js_name = spaceTimeScanExport, unchecked_return_type = "ExportedFile")]
    pub fn space_time_scan_export(
        &self,
        #[wasm_bindgen(unchecked_param_type = "SpaceTimeScanExportOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (mut o, _) = decode::<StScanExportOptions>(options, None)?;
        let r = self
            .extras
            .get(RESULT_KEY)
            .and_then(|b| b.downcast_ref::<StScanResult>())
            .ok_or_else(|| {
                js_error(
                    "no_result",
                    "run the space-time scan first: there are no clusters to export",
                    None,
                )
            })?;
        let s = self.study_ref()?;
        let proj = s.projection;
        let coordinates = o.coordinates.unwrap_or(if proj.is_geographic() {
            CoordinateOutput::LonLat
        } else {
            CoordinateOutput::Metres
        });
        if o.created.as_deref().is_none_or(|c| c.trim().is_empty()) {
            o.created = Some(String::from(js_sys::Date::new_0().to_iso_string()));
        }
        let inverse = move |x: f64, y: f64| proj.inverse(x, y);
        let back: Option<&dyn Fn(f64, f64) -> (f64, f64)> = if proj.is_geographic() {
            Some(&inverse)
        } else {
            None
        };
        let f = export_clusters(r, (s.events.x(), s.events.y()), &o, coordinates, back)
            .map_err(|e| analysis_error(&e))?;
        to_js(&f)
    }
}
