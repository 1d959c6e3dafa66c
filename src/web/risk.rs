//! Exports for "Beyond the population at risk": cases (the events) against
//! controls (the population layer).
//!
//! # JS API (methods of `Session`)
//! * `labellingStart(options) -> {total, distances, seed, n_cases,
//!   n_controls}`: the random labelling test of Diggle & Chetwynd (1991)
//!   (options [`LabellingOptions`]: `n_sim`, `seed`, `alpha`, `r_min_m`,
//!   `r_max_m`, `n_steps`, `correction`, `cases_category`,
//!   `controls_category`); D(r) of the data is computed here. Needs a
//!   population layer of individual controls (one point per control; a layer
//!   with a count column is refused with `needs_individuals`), or, with
//!   `cases_category`, compares that category of the events with another
//!   (`controls_category`) or with all the others.
//! * `labellingStep(k) -> done`: runs `k` more relabellings (64 at the
//!   least, as one visit of the pairs serves many; never past `total`).
//! * `labellingFinish() -> result`: bands, global tests and the verdict (a
//!   [`LabellingResult`]).
//! * `labellingShare() -> string`, `labellingHelperStart(share)`,
//!   `labellingSimulate(from, to) -> Float64Array`, `labellingAdd(from,
//!   curves) -> done`: the same run spread over helper workers (the
//!   worker's `parallel` job spec): relabelling j depends only on the seed
//!   and j, so the result equals one worker's.
//!
//! The methods follow the worker's job protocol; the running job lives in
//! `Session::extras` under [`KEY`], so loading other data drops it.

use super::{analysis_error, decode, js_error, to_js, Session};
use crate::risk::{LabellingJob, LabellingOptions, LabellingShare, LabellingSimulator};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "risk-labelling";
/// In a helper worker: the simulator of a shared run.
const HELPER_KEY: &str = "risk-labelling-helper";
/// Relabellings per step at the least: a step's cost is mostly one visit of
/// the pooled pairs, which serves up to 256 relabellings at once.
const MIN_STEP: usize = 64;

#[derive(Serialize)]
struct Started {
    total: usize,
    distances: usize,
    seed: u64,
    n_cases: usize,
    n_controls: usize,
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no random labelling run is in progress (start one first; loading other data ends a run)",
        None,
    )
}

/// The events of category `case_name` and those of `control_name` (all
/// other categories when `None`, leaving out rows with a blank category:
/// their category is unknown, not "other"), as coordinate lists.
#[allow(clippy::type_complexity)]
pub(super) fn split_by_category(
    events: &crate::study::Pattern,
    case_name: &str,
    control_name: Option<&str>,
) -> Result<((Vec<f64>, Vec<f64>), (Vec<f64>, Vec<f64>)), JsValue> {
    let (Some(cat), names) = (events.category(), events.category_names()) else {
        return Err(js_error(
            "no_categories",
            "the events have no category column: map one in the column editor to compare categories",
            None,
        ));
    };
    let find = |name: &str| {
        names.iter().position(|n| n == name).ok_or_else(|| {
            js_error(
                "bad_parameter",
                &format!(
                    "labellingStart: there is no category \"{name}\"; the categories are: {}",
                    names.join(", ")
                ),
                None,
            )
        })
    };
    let a = find(case_name)? as u32;
    let b = control_name.map(find).transpose()?.map(|v| v as u32);
    let blank = names
        .iter()
        .position(|n| n == crate::input::layer::BLANK_CATEGORY)
        .map(|v| v as u32);
    let (mut cases, mut controls) = ((vec![], vec![]), (vec![], vec![]));
    for ((&c, &x), &y) in cat.iter().zip(events.x()).zip(events.y()) {
        if c == a {
            cases.0.push(x);
            cases.1.push(y);
        } else if b.map_or(Some(c) != blank, |b| b == c) {
            controls.0.push(x);
            controls.1.push(y);
        }
    }
    Ok((cases, controls))
}

impl Session {
    fn keep_job(
        &mut self,
        job: LabellingJob,
        o: &LabellingOptions,
        n_cases: usize,
        n_controls: usize,
    ) -> Result<JsValue, JsValue> {
        let started = Started {
            total: job.total(),
            distances: job.r().len(),
            seed: o.seed,
            n_cases,
            n_controls,
        };
        self.extras.insert(KEY, Box::new(job));
        to_js(&started)
    }
}

#[wasm_bindgen]
impl Session {
    /// Starts a random labelling test of the events (cases) against the
    /// population layer (controls). Returns `{total, distances, seed,
    /// n_cases, n_controls}`.
    #[wasm_bindgen(js_name = labellingStart, unchecked_return_type = "LabellingStarted")]
    pub fn labelling_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "LabellingStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<LabellingOptions>(options, self.extent_m())?;
        self.extras.remove(KEY);
        let s = self.study_ref()?;
        if let Some(case_name) = &o.cases_category {
            let (cases, controls) =
                split_by_category(&s.events, case_name, o.controls_category.as_deref())?;
            let mut job = LabellingJob::new(
                (&cases.0, &cases.1),
                (&controls.0, &controls.1),
                &s.window,
                &o,
            )
            .map_err(|e| analysis_error(&e))?;
            let others = match &o.controls_category {
                Some(b) => format!("those of \"{b}\""),
                None => "the other categories".to_string(),
            };
            job.name_groups(&format!("events of \"{case_name}\""), &others);
            return self.keep_job(job, &o, cases.0.len(), controls.0.len());
        }
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
                    "the random labelling test needs one point per control (a sample of the \
                     population, or all addresses); this population file has a count column. \
                     Load it without the count column mapped if each row is one person, or use \
                     the relative-risk surface, which works with counts",
                    None,
                ));
            }
        }
        let job = LabellingJob::new(
            (s.events.x(), s.events.y()),
            (controls.x(), controls.y()),
            &s.window,
            &o,
        )
        .map_err(|e| analysis_error(&e))?;
        let (n1, n0) = (s.events.len(), controls.len());
        self.keep_job(job, &o, n1, n0)
    }

    /// Runs `k` more relabellings (at least [`MIN_STEP`]: each step visits
    /// every pair once, whatever its size); returns how many are done.
    #[wasm_bindgen(js_name = labellingStep)]
    pub fn labelling_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "labellingStep", "k")?;
        let job = self.extra_mut::<LabellingJob>(KEY).ok_or_else(no_job)?;
        job.run_batch(k.max(MIN_STEP))
            .map_err(|e| analysis_error(&e))
    }

    /// Finishes the run: bands, global tests and the verdict.
    #[wasm_bindgen(js_name = labellingFinish, unchecked_return_type = "LabellingResult")]
    pub fn labelling_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<LabellingJob>(KEY).ok_or_else(no_job)?;
        to_js(&job.finish().map_err(|e| analysis_error(&e))?)
    }

    /// The shared part of the running test, for helper workers (JSON).
    #[wasm_bindgen(js_name = labellingShare)]
    pub fn labelling_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY)
            .and_then(|b| b.downcast_ref::<LabellingJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: prepares to compute relabellings of a shared run.
    #[wasm_bindgen(js_name = labellingHelperStart)]
    pub fn labelling_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: LabellingShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared run: {e}"),
                None,
            )
        })?;
        let sim = LabellingSimulator::new(&share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(HELPER_KEY, Box::new(sim));
        Ok(())
    }

    /// D curves of relabellings `from..to` (one after another), from the
    /// helper's simulator or else the running job; the job is not changed.
    #[wasm_bindgen(js_name = labellingSimulate)]
    pub fn labelling_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let from = super::count_arg(from, "labellingSimulate", "from")?;
        let to = super::count_arg(to, "labellingSimulate", "to")?;
        let out = if let Some(sim) = self
            .extras
            .get(HELPER_KEY)
            .and_then(|b| b.downcast_ref::<LabellingSimulator>())
        {
            sim.simulate_range(from, to)
        } else {
            self.extras
                .get(KEY)
                .and_then(|b| b.downcast_ref::<LabellingJob>())
                .ok_or_else(no_job)?
                .simulate_range(from, to)
        };
        out.map_err(|e| analysis_error(&e))
    }

    /// Appends D curves that start at relabelling `from` (which must be the
    /// number done so far); returns the number done.
    #[wasm_bindgen(js_name = labellingAdd)]
    pub fn labelling_add(&mut self, from: f64, curves: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "labellingAdd", "from")?;
        let job = self.extra_mut::<LabellingJob>(KEY).ok_or_else(no_job)?;
        job.add_simulated(from, &curves)
            .map_err(|e| analysis_error(&e))
    }
}
