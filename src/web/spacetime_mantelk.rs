//! Exports of the Mantel test and the space–time K function
//! ([`crate::spacetime::mantel`], [`crate::spacetime::stk`]).
//!
//! # JS API (methods of `Session`)
//! * `mantelStart(options) -> {total, n_events, seed, statistic, expected,
//!   variance}` (options [`MantelOptions`]); `mantelStep(k) -> done`;
//!   `mantelFinish() -> result` ([`crate::spacetime::mantel::MantelResult`]).
//!   Parallel: `mantelShare() -> string`, `mantelHelperStart(share)`,
//!   `mantelSimulate(from, to) -> Float64Array` (Z of each permutation),
//!   `mantelAdd(from, piece) -> done`.
//! * `spaceTimeKStart(options) -> {total, n_events, seed, pairs, s_max_m,
//!   t_max_days}` (options [`SpaceTimeKOptions`]); `spaceTimeKStep(k)`;
//!   `spaceTimeKFinish() -> result`
//!   ([`crate::spacetime::stk::SpaceTimeKResult`]); parallel as above
//!   (`spaceTimeKSimulate` gives the D̂ grids one after another);
//!   `spaceTimeKCsv() -> string`: the grid of the last finished run as CSV
//!   (distances, days and values; no coordinates).
//! * `drawSpaceTimeKGrid(canvas_id, data)` (free function, main thread):
//!   the shaded grid of residuals ([`crate::plot::stgrid`]).
//!
//! Running jobs live in `Session::extras`, so loading other data drops them.

use super::{analysis_error, decode, from_js, js_error, to_js, Session};
use crate::spacetime::mantel::{MantelJob, MantelOptions, MantelShare};
use crate::spacetime::stk::{
    grid_csv, SpaceTimeKJob, SpaceTimeKOptions, SpaceTimeKResult, StkShare, StkSimulator,
};
use crate::spacetime::TimedEvents;
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY_MANTEL: &str = "st-mantel";
const HELPER_MANTEL: &str = "st-mantel-helper";
const KEY_STK: &str = "st-k";
const HELPER_STK: &str = "st-k-helper";
const LAST_STK: &str = "st-k-last";

#[derive(Serialize)]
struct MantelStarted {
    total: usize,
    n_events: usize,
    seed: u64,
    statistic: f64,
    expected: f64,
    variance: f64,
}

#[derive(Serialize)]
struct StkStarted {
    total: usize,
    n_events: usize,
    seed: u64,
    pairs: usize,
    s_max_m: f64,
    t_max_days: f64,
}

fn no_job(what: &str) -> JsValue {
    js_error(
        "no_job",
        &format!("no {what} is in progress (start one first; loading other data ends a run)"),
        None,
    )
}

fn bad_share(e: serde_json::Error) -> JsValue {
    js_error(
        "bad_parameter",
        &format!("unreadable shared run: {e}"),
        None,
    )
}

fn counts(from: f64, to: f64, method: &str) -> Result<(usize, usize), JsValue> {
    Ok((
        super::count_arg(from, method, "from")?,
        super::count_arg(to, method, "to")?,
    ))
}

#[wasm_bindgen]
impl Session {
    /// Starts a Mantel test of the events with a time.
    #[wasm_bindgen(js_name = mantelStart, unchecked_return_type = "MantelStarted")]
    pub fn mantel_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "MantelStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<MantelOptions>(options, self.extent_m())?;
        self.extras.remove(KEY_MANTEL);
        let s = self.study_ref()?;
        let ev = TimedEvents::from_study(s, o.uncertain_times, o.max_window_days, 4)
            .map_err(|e| analysis_error(&e))?;
        let job = MantelJob::new(&ev, &o).map_err(|e| analysis_error(&e))?;
        let (expected, variance) = job.moments();
        let started = MantelStarted {
            total: job.total(),
            n_events: job.n_events(),
            seed: o.seed,
            statistic: job.observed(),
            expected,
            variance,
        };
        self.extras.insert(KEY_MANTEL, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more permutations; returns how many are done.
    #[wasm_bindgen(js_name = mantelStep)]
    pub fn mantel_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "mantelStep", "k")?;
        let job = self
            .extra_mut::<MantelJob>(KEY_MANTEL)
            .ok_or_else(|| no_job("Mantel test"))?;
        Ok(job.run_batch(k))
    }

    /// Finishes the Mantel test: statistic, moments, p-values, verdict.
    #[wasm_bindgen(js_name = mantelFinish, unchecked_return_type = "MantelResult")]
    pub fn mantel_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<MantelJob>(KEY_MANTEL)
            .ok_or_else(|| no_job("Mantel test"))?;
        to_js(&job.finish().map_err(|e| analysis_error(&e))?)
    }

    /// The shared part of the running Mantel test, for helper workers.
    #[wasm_bindgen(js_name = mantelShare)]
    pub fn mantel_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY_MANTEL)
            .and_then(|b| b.downcast_ref::<MantelJob>())
            .ok_or_else(|| no_job("Mantel test"))?;
        serde_json::to_string(job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to run permutations of a shared test.
    #[wasm_bindgen(js_name = mantelHelperStart)]
    pub fn mantel_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: MantelShare = serde_json::from_str(&share).map_err(bad_share)?;
        self.extras.insert(HELPER_MANTEL, Box::new(share));
        Ok(())
    }

    /// Z of permutations `from..to`, from the helper's share or else the
    /// running job (which is not changed).
    #[wasm_bindgen(js_name = mantelSimulate)]
    pub fn mantel_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let (from, to) = counts(from, to, "mantelSimulate")?;
        if let Some(sh) = self
            .extras
            .get(HELPER_MANTEL)
            .and_then(|b| b.downcast_ref::<MantelShare>())
        {
            return Ok(sh.simulate_range(from, to));
        }
        let job = self
            .extras
            .get(KEY_MANTEL)
            .and_then(|b| b.downcast_ref::<MantelJob>())
            .ok_or_else(|| no_job("Mantel test"))?;
        Ok(job.share().simulate_range(from, to))
    }

    /// Adds what [`Session::mantel_simulate`] gave for permutations from
    /// `from` (the number done so far); returns the number done.
    #[wasm_bindgen(js_name = mantelAdd)]
    pub fn mantel_add(&mut self, from: f64, piece: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "mantelAdd", "from")?;
        let job = self
            .extra_mut::<MantelJob>(KEY_MANTEL)
            .ok_or_else(|| no_job("Mantel test"))?;
        job.add_simulated(from, &piece)
            .map_err(|e| analysis_error(&e))
    }

    /// Starts the space–time K function of the events with a time.
    #[wasm_bindgen(js_name = spaceTimeKStart, unchecked_return_type = "SpaceTimeKStarted")]
    pub fn space_time_k_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "SpaceTimeKStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<SpaceTimeKOptions>(options, self.extent_m())?;
        self.extras.remove(KEY_STK);
        let s = self.study_ref()?;
        let ev = TimedEvents::from_study(s, o.uncertain_times, o.max_window_days, 3)
            .map_err(|e| analysis_error(&e))?;
        let job = SpaceTimeKJob::new(&ev, &s.window, &o).map_err(|e| analysis_error(&e))?;
        let started = StkStarted {
            total: job.total(),
            n_events: ev.len(),
            seed: o.seed,
            pairs: job.simulator().pairs(),
            s_max_m: job.share().s_max,
            t_max_days: job.share().t_max,
        };
        self.extras.insert(KEY_STK, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more permutations; returns how many are done.
    #[wasm_bindgen(js_name = spaceTimeKStep)]
    pub fn space_time_k_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "spaceTimeKStep", "k")?;
        let job = self
            .extra_mut::<SpaceTimeKJob>(KEY_STK)
            .ok_or_else(|| no_job("space–time K run"))?;
        Ok(job.run_batch(k))
    }

    /// Finishes the space–time K function: the grid, the global test, the
    /// verdict. The result is kept for [`Session::space_time_k_csv`].
    #[wasm_bindgen(js_name = spaceTimeKFinish, unchecked_return_type = "SpaceTimeKResult")]
    pub fn space_time_k_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<SpaceTimeKJob>(KEY_STK)
            .ok_or_else(|| no_job("space–time K run"))?;
        let r = job.finish().map_err(|e| analysis_error(&e))?;
        let out = to_js(&r)?;
        self.extras.insert(LAST_STK, Box::new(r));
        Ok(out)
    }

    /// The grid of the last finished space–time K run as CSV (one row per
    /// distance and time; no coordinates).
    #[wasm_bindgen(js_name = spaceTimeKCsv)]
    pub fn space_time_k_csv(&self) -> Result<String, JsValue> {
        self.extras
            .get(LAST_STK)
            .and_then(|b| b.downcast_ref::<SpaceTimeKResult>())
            .map(grid_csv)
            .ok_or_else(|| {
                js_error(
                    "no_result",
                    "no space–time K result to export (run it first; loading other data clears it)",
                    None,
                )
            })
    }

    /// The shared part of the running space–time K run, for helper workers.
    #[wasm_bindgen(js_name = spaceTimeKShare)]
    pub fn space_time_k_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY_STK)
            .and_then(|b| b.downcast_ref::<SpaceTimeKJob>())
            .ok_or_else(|| no_job("space–time K run"))?;
        serde_json::to_string(job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: rebuilds the pairs of a shared run.
    #[wasm_bindgen(js_name = spaceTimeKHelperStart)]
    pub fn space_time_k_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: StkShare = serde_json::from_str(&share).map_err(bad_share)?;
        let sim = StkSimulator::new(share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_STK, Box::new(sim));
        Ok(())
    }

    /// D̂ grids of permutations `from..to`, one after another.
    #[wasm_bindgen(js_name = spaceTimeKSimulate)]
    pub fn space_time_k_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let (from, to) = counts(from, to, "spaceTimeKSimulate")?;
        if let Some(sim) = self
            .extras
            .get(HELPER_STK)
            .and_then(|b| b.downcast_ref::<StkSimulator>())
        {
            return Ok(sim.simulate_range(from, to));
        }
        let job = self
            .extras
            .get(KEY_STK)
            .and_then(|b| b.downcast_ref::<SpaceTimeKJob>())
            .ok_or_else(|| no_job("space–time K run"))?;
        Ok(job.simulator().simulate_range(from, to))
    }

    /// Adds grids computed elsewhere, from permutation `from`.
    #[wasm_bindgen(js_name = spaceTimeKAdd)]
    pub fn space_time_k_add(&mut self, from: f64, piece: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "spaceTimeKAdd", "from")?;
        let job = self
            .extra_mut::<SpaceTimeKJob>(KEY_STK)
            .ok_or_else(|| no_job("space–time K run"))?;
        job.add_simulated(from, &piece)
            .map_err(|e| analysis_error(&e))
    }
}

/// Draws the shaded grid of a space–time K result on the canvas with id
/// `canvas_id` (main thread only). `data`: the result's `s`, `t`,
/// `residual`, `d`, `d_hi`, and an optional `scale`.
#[wasm_bindgen(js_name = drawSpaceTimeKGrid)]
pub fn draw_space_time_k_grid(
    canvas_id: &str,
    #[wasm_bindgen(unchecked_param_type = "SpaceTimeGridData")] data: JsValue,
) -> Result<(), JsValue> {
    use crate::plot::{PlotError, SpaceTimeGridData};
    use plotters::prelude::IntoDrawingArea;
    let d: SpaceTimeGridData = from_js(data)?;
    let backend = plotters_canvas::CanvasBackend::new(canvas_id).ok_or_else(|| {
        js_error(
            "no_canvas",
            &format!("no canvas with id \"{canvas_id}\" on the page"),
            None,
        )
    })?;
    let root = backend.into_drawing_area();
    crate::plot::draw_space_time_grid(&root, &d).map_err(|e| match e {
        PlotError::Data(m) => js_error("bad_options", &m, None),
        PlotError::Draw(m) => js_error("draw", &m, None),
    })
}
