//! Exports for "Is it clustered, and at what distances?".
//!
//! # JS API (methods of `Session`)
//! * `quadratTest(params)`: quadrat counts and the χ² test (`nx`, `ny`,
//!   `n_sim`, `seed`); see [`crate::distance::quadrat`].
//! * `clarkEvans(params)`: Clark–Evans R with and without Donnelly's
//!   correction, Monte Carlo p (`n_sim`, `seed`); see
//!   [`crate::distance::clark_evans`].
//! * `envelopeStart(params) -> {total, distances, seed}`: prepares a Monte Carlo
//!   envelope run (`function`, `n_sim`, `seed`, `alpha`, `reference`,
//!   `r_min_m`, `r_max_m`, `n_steps`, `correction`, `nn_correction`,
//!   `bandwidth_m`; see [`EnvelopeOptions`]); the observed curve is computed here.
//! * `envelopeEstimate(params, workers) -> EnvelopeCost`: how long the run
//!   with these options would take on `workers` workers, from a quick
//!   measurement on a subsample (a fraction of a second for any number of
//!   events), with faster settings and their own estimates; see
//!   [`crate::distance::runtime`].
//! * `envelopeStep(k) -> done`: runs up to `k` more simulations.
//! * `envelopeFinish() -> result`: bands, MAD and DCLF tests and the verdict
//!   (an [`EnvelopeResult`] with snake_case fields).
//!
//! * `envelopeShare() -> string`, `envelopeHelperStart(share)`,
//!   `envelopeSimulate(from, to) -> Float64Array`, `envelopeAdd(from,
//!   curves) -> done`: the same run spread over helper workers (the worker
//!   does this by itself when the machine has more than one core); results
//!   are identical to one worker's because simulation j always uses stream
//!   j of the seed.
//!
//! The three envelope methods follow the worker's job protocol; the running
//! job lives in `Session::extras` under [`KEY`], so loading other data drops
//! it (a later step then fails with `no_job`).
//!
//! # Drawing (main thread)
//! `drawEnvelopeChart(canvasId, result, options)` draws a result with
//! plotters on a `<canvas>` of the page (plotters needs the DOM to measure
//! text, so this runs on the page's own thread, never in the worker).
//! Options: `view` (`"centred"`, default: L(r) − r or K(r) − πr², so CSR is
//! the line at 0; `"function"`: the function itself), `units` (`"m"`,
//! `"km"`, or `"auto"`, default: km when the largest distance is 5 km or
//! more), `band` (`"global"`, default, or `"pointwise"`).

use super::{analysis_error, decode, from_js, js_error, to_js, Session};
use crate::distance::{
    clark_evans, estimate_envelope_cost, quadrat_test, ClarkEvansParams, EnvelopeJob,
    EnvelopeOptions, EnvelopeSimulator, QuadratParams, SimulationShare,
};
use crate::plot::{self, EnvelopeChartData, EnvelopeChartOptions};
use plotters::prelude::IntoDrawingArea;
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "clustering";
/// A helper worker's simulator (see `envelopeHelperStart`).
const HELPER_KEY: &str = "clustering-helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    distances: usize,
    seed: u64,
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no envelope run is in progress (start one first; loading other data ends a run)",
        None,
    )
}

#[wasm_bindgen]
impl Session {
    /// Quadrat counts and the χ² test of CSR.
    #[wasm_bindgen(js_name = quadratTest, unchecked_return_type = "QuadratResult")]
    pub fn quadrat_test_js(
        &self,
        #[wasm_bindgen(unchecked_param_type = "QuadratTestOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<QuadratParams>(params, self.extent_m())?;
        let s = self.study_ref()?;
        let res = quadrat_test(&s.events, &s.window, &p).map_err(|e| analysis_error(&e))?;
        to_js(&res)
    }

    /// Clark–Evans aggregation index with and without Donnelly's correction.
    #[wasm_bindgen(js_name = clarkEvans, unchecked_return_type = "ClarkEvansResult")]
    pub fn clark_evans_js(
        &self,
        #[wasm_bindgen(unchecked_param_type = "ClarkEvansOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<ClarkEvansParams>(params, self.extent_m())?;
        let s = self.study_ref()?;
        let res = clark_evans(&s.events, &s.window, &p).map_err(|e| analysis_error(&e))?;
        to_js(&res)
    }

    /// How long an envelope run with these options would take with
    /// `workers` workers (1 to 64) sharing the simulations, from a quick
    /// measurement; nothing is started.
    #[wasm_bindgen(js_name = envelopeEstimate, unchecked_return_type = "EnvelopeCost")]
    pub fn envelope_estimate(
        &self,
        #[wasm_bindgen(unchecked_param_type = "EnvelopeStartOptions")] params: JsValue,
        workers: f64,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<EnvelopeOptions>(params, self.extent_m())?;
        let w = super::count_arg(workers, "envelopeEstimate", "workers")?;
        if !(1..=64).contains(&w) {
            return Err(js_error(
                "bad_parameter",
                &format!("envelopeEstimate: workers must be from 1 to 64 (got {w})"),
                None,
            ));
        }
        let s = self.study_ref()?;
        let cost = estimate_envelope_cost(&s.events, &s.window, &o, w, &mut super::clock::now_ms)
            .map_err(|e| analysis_error(&e))?;
        to_js(&cost)
    }

    /// Starts an envelope run: checks the parameters and computes the
    /// observed curve. Returns `{total, distances, seed}`.
    #[wasm_bindgen(js_name = envelopeStart, unchecked_return_type = "EnvelopeStarted")]
    pub fn envelope_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "EnvelopeStartOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<EnvelopeOptions>(params, self.extent_m())?;
        let p = o.params();
        self.extras.remove(KEY);
        let s = self.study_ref()?;
        let job = EnvelopeJob::new(&s.events, &s.window, &p).map_err(|e| analysis_error(&e))?;
        let started = Started {
            total: job.total(),
            distances: job.r().len(),
            seed: p.seed,
        };
        self.extras.insert(KEY, Box::new(job));
        to_js(&started)
    }

    /// Runs up to `k` more simulations; returns how many are done so far.
    #[wasm_bindgen(js_name = envelopeStep)]
    pub fn envelope_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "envelopeStep", "k")?;
        let job = self.extra_mut::<EnvelopeJob>(KEY).ok_or_else(no_job)?;
        Ok(job.run_batch(k.max(1)))
    }

    /// What a helper worker needs to simulate parts of the running job, as
    /// JSON: the study area, the number of events and the parameters (never
    /// the event locations).
    #[wasm_bindgen(js_name = envelopeShare)]
    pub fn envelope_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<EnvelopeJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to simulate parts of a shared run.
    #[wasm_bindgen(js_name = envelopeHelperStart)]
    pub fn envelope_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: SimulationShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared run: {e}"),
                None,
            )
        })?;
        let sim = EnvelopeSimulator::new(&share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_KEY, Box::new(sim));
        Ok(())
    }

    /// Curves of simulations `from..to` (row after row), from the helper's
    /// simulator or else the running job; the job is not changed.
    #[wasm_bindgen(js_name = envelopeSimulate)]
    pub fn envelope_simulate(&self, from: usize, to: usize) -> Result<Vec<f64>, JsValue> {
        if let Some(sim) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<EnvelopeSimulator>())
        {
            return Ok(sim.simulate_range(from, to));
        }
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<EnvelopeJob>())
            .ok_or_else(no_job)?;
        Ok(job.simulate_range(from, to))
    }

    /// Appends simulated curves that start at simulation `from` (which must
    /// be the number done so far); returns the number done.
    #[wasm_bindgen(js_name = envelopeAdd)]
    pub fn envelope_add(&mut self, from: usize, curves: Vec<f64>) -> Result<usize, JsValue> {
        let job = self.extra_mut::<EnvelopeJob>(KEY).ok_or_else(no_job)?;
        job.add_simulated(from, &curves)
            .map_err(|e| analysis_error(&e))
    }

    /// Finishes the run: bands, global tests and the verdict.
    #[wasm_bindgen(js_name = envelopeFinish, unchecked_return_type = "EnvelopeResult")]
    pub fn envelope_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<EnvelopeJob>(KEY).ok_or_else(no_job)?;
        to_js(&job.finish())
    }
}

// ---------- the chart ----------

fn chart_error(detail: &str) -> JsValue {
    js_error(
        "chart",
        &format!("could not draw the chart: {detail}"),
        None,
    )
}

/// Draws an envelope result on the `<canvas>` with id `canvas_id` (main
/// thread only) with [`crate::plot::envelope`]. Returns `{x_label, y_label,
/// units, band_label}`.
#[wasm_bindgen(js_name = drawEnvelopeChart, unchecked_return_type = "EnvelopeChartLabels")]
pub fn draw_envelope_chart(
    canvas_id: &str,
    #[wasm_bindgen(unchecked_param_type = "EnvelopeResult")] result: JsValue,
    #[wasm_bindgen(unchecked_param_type = "EnvelopeChartOptions | null")] options: JsValue,
) -> Result<JsValue, JsValue> {
    if result.is_undefined() || result.is_null() {
        return Err(chart_error("there is no result to draw"));
    }
    let data: EnvelopeChartData = serde_wasm_bindgen::from_value(result)
        .map_err(|e| chart_error(&format!("the result was not understood ({e})")))?;
    let opts: EnvelopeChartOptions = from_js(options)?;
    let backend = plotters_canvas::CanvasBackend::new(canvas_id)
        .ok_or_else(|| chart_error(&format!("there is no canvas with id \"{canvas_id}\"")))?;
    let root = backend.into_drawing_area();
    let drawn =
        plot::draw_envelope_chart(&root, &data, &opts).map_err(|e| chart_error(&e.to_string()))?;
    to_js(&drawn)
}
