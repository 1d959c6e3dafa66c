//! Exports of the k-nearest-neighbour test of Cuzick & Edwards (1990):
//! cases (the events) against controls (the population layer).
//!
//! # JS API (methods of `Session`)
//! * `nearestCasesStart(options) -> {total, k_max, seed, n_cases,
//!   n_controls, ties_decided}` (options [`NearestOptions`]: `k_max`,
//!   `n_sim`, `seed`, `alpha`, `cases_category`, `controls_category`):
//!   builds the neighbour lists and T_k of the data. Needs a population
//!   layer of individual controls (a layer with a count column is refused
//!   with `needs_individuals`), or, with `cases_category`, compares that
//!   category of the events with another (`controls_category`) or with all
//!   the others.
//! * `nearestCasesStep(k) -> done`: runs `k` more relabellings (never past
//!   `total`).
//! * `nearestCasesFinish() -> result`: the table over k, the combined test
//!   and the verdict (a [`crate::risk::NearestResult`]).
//!
//! The methods follow the worker's job protocol; the running job lives in
//! `Session::extras` under [`KEY`], so loading other data drops it.

use super::risk::split_by_category;
use super::{analysis_error, decode, js_error, to_js, Session};
use crate::risk::{NearestJob, NearestOptions, NearestShare};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "risk-nearest";
/// In a helper worker: the shared part of a run.
const HELPER_KEY: &str = "risk-nearest-helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    k_max: usize,
    seed: u64,
    n_cases: usize,
    n_controls: usize,
    ties_decided: usize,
}

/// The category split is shared with the random labelling test, whose
/// messages name `labellingStart`: named after this method instead.
fn renamed(e: JsValue) -> JsValue {
    let key = JsValue::from_str("message");
    if let Ok(m) = js_sys::Reflect::get(&e, &key) {
        if let Some(m) = m.as_string() {
            let m = m.replace("labellingStart:", "nearestCasesStart:");
            let _ = js_sys::Reflect::set(&e, &key, &JsValue::from_str(&m));
        }
    }
    e
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no nearest-neighbour test is in progress (start one first; loading other data ends a run)",
        None,
    )
}

#[wasm_bindgen]
impl Session {
    /// Starts the k-nearest-neighbour test of the events (cases) against
    /// the population layer (controls), or of one category of the events
    /// against the others.
    #[wasm_bindgen(js_name = nearestCasesStart, unchecked_return_type = "NearestCasesStarted")]
    pub fn nearest_cases_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "NearestCasesStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<NearestOptions>(options, self.extent_m())?;
        self.extras.remove(KEY);
        let s = self.study_ref()?;
        let job = if let Some(case_name) = &o.cases_category {
            let (cases, controls) =
                split_by_category(&s.events, case_name, o.controls_category.as_deref())
                    .map_err(renamed)?;
            let mut job = NearestJob::new((&cases.0, &cases.1), (&controls.0, &controls.1), &o)
                .map_err(|e| analysis_error(&e))?;
            let others = match &o.controls_category {
                Some(b) => format!("those of \"{b}\""),
                None => "the other categories".to_string(),
            };
            job.name_groups(&format!("events of \"{case_name}\""), &others);
            job
        } else {
            let controls = s.controls.as_ref().ok_or_else(|| {
                js_error(
                    "no_controls",
                    "load a population file (controls) first: the test compares the events with it",
                    None,
                )
            })?;
            if let Some(w) = controls.weights_or_zero() {
                if w.iter().any(|&v| v != 1.0) {
                    return Err(js_error(
                        "needs_individuals",
                        "the nearest-neighbour test needs one point per control (a sample of \
                         the population, or all addresses): a neighbour is a person. This \
                         population file has a count column. Load it without the count column \
                         mapped if each row is one person, or use the relative-risk surface, \
                         which works with counts",
                        None,
                    ));
                }
            }
            NearestJob::new(
                (s.events.x(), s.events.y()),
                (controls.x(), controls.y()),
                &o,
            )
            .map_err(|e| analysis_error(&e))?
        };
        let started = Started {
            total: job.total(),
            k_max: o.k_max,
            seed: o.seed,
            n_cases: job.n_cases(),
            n_controls: job.n_controls(),
            ties_decided: job.neighbours().tie_decided,
        };
        self.extras.insert(KEY, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more relabellings; returns how many are done.
    #[wasm_bindgen(js_name = nearestCasesStep)]
    pub fn nearest_cases_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "nearestCasesStep", "k")?;
        let job = self.extra_mut::<NearestJob>(KEY).ok_or_else(no_job)?;
        Ok(job.run_batch(k))
    }

    /// Finishes the run: the table over k, the combined test, the verdict.
    #[wasm_bindgen(js_name = nearestCasesFinish, unchecked_return_type = "NearestCasesResult")]
    pub fn nearest_cases_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<NearestJob>(KEY).ok_or_else(no_job)?;
        to_js(&job.finish().map_err(|e| analysis_error(&e))?)
    }

    /// The shared part of the running test, for helper workers (JSON: the
    /// neighbour lists as point numbers, T_k of the data, the seed; no
    /// location).
    #[wasm_bindgen(js_name = nearestCasesShare)]
    pub fn nearest_cases_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<NearestJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to run relabellings of a shared test.
    #[wasm_bindgen(js_name = nearestCasesHelperStart)]
    pub fn nearest_cases_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: NearestShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared run: {e}"),
                None,
            )
        })?;
        self.extras.insert(HELPER_KEY, Box::new(share));
        Ok(())
    }

    /// Relabellings `from..to`: `[count, c_1, …, c_K, c_combined]`, how
    /// many were run and how many were at least as extreme as the data for
    /// each k and for the combined test; from the helper's share or else
    /// the running job, which is not changed.
    #[wasm_bindgen(js_name = nearestCasesSimulate)]
    pub fn nearest_cases_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let from = super::count_arg(from, "nearestCasesSimulate", "from")?;
        let to = super::count_arg(to, "nearestCasesSimulate", "to")?;
        let (counts, total) = if let Some(sh) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<NearestShare>())
        {
            (sh.simulate_range(from, to), sh.n_sim)
        } else {
            let job = self
                .extras
                .get(KEY)
                .and_then(|b| b.downcast_ref::<NearestJob>())
                .ok_or_else(no_job)?;
            (job.simulate_range(from, to), job.total())
        };
        let ran = to.min(total).saturating_sub(from);
        Ok(std::iter::once(ran as f64)
            .chain(counts.iter().map(|&c| c as f64))
            .collect())
    }

    /// Adds what [`Session::nearest_cases_simulate`] gave for relabellings
    /// starting at `from` (the number done so far); returns the number done.
    #[wasm_bindgen(js_name = nearestCasesAdd)]
    pub fn nearest_cases_add(&mut self, from: f64, piece: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "nearestCasesAdd", "from")?;
        let (ran, counts) = piece
            .split_first()
            .ok_or_else(|| js_error("bad_parameter", "nearestCasesAdd: an empty piece", None))?;
        let ran = super::count_arg(*ran, "nearestCasesAdd", "count")?;
        let mut whole = Vec::with_capacity(counts.len());
        for &c in counts {
            whole.push(super::count_arg(c, "nearestCasesAdd", "counts")?);
        }
        let job = self.extra_mut::<NearestJob>(KEY).ok_or_else(no_job)?;
        job.add_simulated(from, from + ran, &whole)
            .map_err(|e| analysis_error(&e))
    }
}
