//! Kulldorff's scan with its chance runs spread over helper workers (the
//! worker's `parallel` job spec), beside `scanStart` / `scanStep` /
//! `scanFinish` in [`super::hotspots`]:
//!
//! * `scanShare() -> string`: what a helper needs (the regions scanned,
//!   the model and the options; JSON);
//! * `scanHelperStart(share)`: in a helper worker, rebuilds the windows;
//! * `scanSimulate(from, to) -> Float64Array`: the largest log likelihood
//!   ratio of chance runs `from..to`, from the helper's copy or else the
//!   running scan (which is not changed);
//! * `scanAdd(from, maxima) -> done`: hands them to the running scan in
//!   order (`from` must be the number done).
//!
//! Chance run j depends only on the seed and j, so the result equals one
//! worker's.

use super::hotspots::KEY_SCAN;
use super::{analysis_error, js_error, Session};
use crate::scan::{ScanJob, ScanShare, ScanSimulator};
use wasm_bindgen::prelude::*;

/// In a helper worker: the simulator of a shared scan.
const HELPER_KEY: &str = "hotspots.scan-helper";

fn no_scan() -> JsValue {
    js_error("nothing_started", "no scan is running", None)
}

#[wasm_bindgen]
impl Session {
    /// The shared part of the running scan, for helper workers (JSON).
    #[wasm_bindgen(js_name = scanShare)]
    pub fn scan_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY_SCAN)
            .and_then(|b| b.downcast_ref::<ScanJob>())
            .ok_or_else(no_scan)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the scan: {e}"), None))
    }

    /// In a helper worker: prepares to compute chance runs of a shared scan.
    #[wasm_bindgen(js_name = scanHelperStart)]
    pub fn scan_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: ScanShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared scan: {e}"),
                None,
            )
        })?;
        let sim = ScanSimulator::new(&share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_KEY, Box::new(sim));
        Ok(())
    }

    /// The largest LLR of chance runs `from..to` (at most the number asked
    /// for), from the helper's simulator or else the running scan; the scan
    /// is not changed.
    #[wasm_bindgen(js_name = scanSimulate)]
    pub fn scan_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let from = super::count_arg(from, "scanSimulate", "from")?;
        let to = super::count_arg(to, "scanSimulate", "to")?;
        if let Some(sim) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<ScanSimulator>())
        {
            return Ok(sim.simulate_range(from, to));
        }
        Ok(self
            .extras
            .get(KEY_SCAN)
            .and_then(|b| b.downcast_ref::<ScanJob>())
            .ok_or_else(no_scan)?
            .simulate_range(from, to))
    }

    /// Appends the maxima of chance runs that start at run `from` (which
    /// must be the number done so far); returns the number done.
    #[wasm_bindgen(js_name = scanAdd)]
    pub fn scan_add(&mut self, from: f64, maxima: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "scanAdd", "from")?;
        let job = self.extra_mut::<ScanJob>(KEY_SCAN).ok_or_else(no_scan)?;
        job.add_simulated(from, &maxima)
            .map_err(|e| analysis_error(&e))
    }
}
