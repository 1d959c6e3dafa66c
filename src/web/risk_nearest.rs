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
use crate::risk::{NearestJob, NearestOptions};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "risk-nearest";

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
}
