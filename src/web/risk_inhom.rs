//! Exports for the inhomogeneous K test ("Compared with the population").
//!
//! # JS API (methods of `Session`)
//! * `inhomKStart(options) -> {total, distances, seed, n_cases, n_controls,
//!   bandwidth_m}`: K_inhom and L_inhom of the events (Baddeley, Møller &
//!   Waagepetersen 2000) with the intensity from the population layer
//!   (individual controls, or counts at points when its count column is
//!   mapped) or, with `intensity_from: "events"`, from the events left one
//!   out (options [`InhomKOptions`]). The observed curve is computed here.
//! * `inhomKStep(k) -> done`: `k` more simulated patterns (never past `total`).
//! * `inhomKFinish() -> result`: bands, global tests and the verdict (an
//!   [`InhomKResult`]).
//!
//! * `inhomKShare() -> string`, `inhomKHelperStart(share)`,
//!   `inhomKSimulate(from, to) -> Float64Array`, `inhomKAdd(from, rows) ->
//!   done`: the parallel protocol of the worker (as `envelopeShare` …
//!   `envelopeAdd`): a helper worker gets the study area, the options, the
//!   number of cases and the smoothed surface the patterns are drawn from
//!   (never a location of the data) and returns rows of simulations `from..to`
//!   (each the L_inhom curve, then the number of points raised to the
//!   intensity floor); simulation j uses stream j of the seed, so the
//!   result is the same whoever simulated it.
//!
//! The running job lives in `Session::extras` under [`KEY`], so loading
//! other data drops it.

use super::{analysis_error, decode, js_error, to_js, Session};
use crate::risk::{InhomKJob, InhomKOptions, InhomKShare, InhomKSimulator, IntensitySource};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "risk-inhom";
/// A helper worker's simulator (see `inhomKHelperStart`).
const HELPER_KEY: &str = "risk-inhom-helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    distances: usize,
    seed: u64,
    n_cases: usize,
    n_controls: usize,
    bandwidth_m: f64,
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no inhomogeneous K run is in progress (start one first; loading other data ends a run)",
        None,
    )
}

#[wasm_bindgen]
impl Session {
    /// Starts the inhomogeneous K test of the events. Returns `{total,
    /// distances, seed, n_cases, n_controls, bandwidth_m}`.
    #[wasm_bindgen(js_name = inhomKStart, unchecked_return_type = "InhomKStarted")]
    pub fn inhom_k_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "InhomKStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<InhomKOptions>(options, self.extent_m())?;
        self.extras.remove(KEY);
        let s = self.study_ref()?;
        let weights = s.controls.as_ref().and_then(|c| c.weights_or_zero());
        let controls = match (o.intensity_from, s.controls.as_ref()) {
            (IntensitySource::Events, _) => None,
            (IntensitySource::Population, Some(c)) => Some((c.x(), c.y(), weights.as_deref())),
            (IntensitySource::Population, None) => {
                return Err(js_error(
                    "no_controls",
                    "load a population file (controls, or counts at points) first, or take the intensity from the events",
                    None,
                ))
            }
        };
        let n_controls = controls.map_or(0, |c| c.0.len());
        let job = InhomKJob::new((s.events.x(), s.events.y()), controls, &s.window, &o)
            .map_err(|e| analysis_error(&e))?;
        let started = Started {
            total: job.total(),
            distances: job.r().len(),
            seed: o.seed,
            n_cases: s.events.len(),
            n_controls,
            bandwidth_m: job.bandwidth_m(),
        };
        self.extras.insert(KEY, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more simulated patterns; returns how many are done.
    #[wasm_bindgen(js_name = inhomKStep)]
    pub fn inhom_k_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "inhomKStep", "k")?;
        let job = self.extra_mut::<InhomKJob>(KEY).ok_or_else(no_job)?;
        job.run_batch(k.max(1)).map_err(|e| analysis_error(&e))
    }

    /// What a helper worker needs to simulate parts of the running job, as
    /// JSON (no location of the data).
    #[wasm_bindgen(js_name = inhomKShare)]
    pub fn inhom_k_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<InhomKJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to simulate parts of a shared run.
    #[wasm_bindgen(js_name = inhomKHelperStart)]
    pub fn inhom_k_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: InhomKShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared run: {e}"),
                None,
            )
        })?;
        let sim = InhomKSimulator::new(&share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_KEY, Box::new(sim));
        Ok(())
    }

    /// Rows of simulations `from..to`, from the helper's simulator or else
    /// the running job (which is not changed).
    #[wasm_bindgen(js_name = inhomKSimulate)]
    pub fn inhom_k_simulate(&self, from: usize, to: usize) -> Result<Vec<f64>, JsValue> {
        if let Some(sim) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<InhomKSimulator>())
        {
            return sim.simulate_range(from, to).map_err(|e| analysis_error(&e));
        }
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<InhomKJob>())
            .ok_or_else(no_job)?;
        job.simulate_range(from, to).map_err(|e| analysis_error(&e))
    }

    /// Appends rows of simulations starting at `from` (which must be the
    /// number done so far); returns the number done.
    #[wasm_bindgen(js_name = inhomKAdd)]
    pub fn inhom_k_add(&mut self, from: usize, rows: Vec<f64>) -> Result<usize, JsValue> {
        let job = self.extra_mut::<InhomKJob>(KEY).ok_or_else(no_job)?;
        job.add_simulated(from, &rows)
            .map_err(|e| analysis_error(&e))
    }

    /// Finishes the run: bands, global tests and the verdict.
    #[wasm_bindgen(js_name = inhomKFinish, unchecked_return_type = "InhomKResult")]
    pub fn inhom_k_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<InhomKJob>(KEY).ok_or_else(no_job)?;
        to_js(&job.finish().map_err(|e| analysis_error(&e))?)
    }
}
