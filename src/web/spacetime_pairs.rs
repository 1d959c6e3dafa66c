//! Exports of the near-repeat table and the Knox test
//! ([`crate::spacetime::pairs`]): pairs of events close in space and time.
//!
//! # JS API (methods of `Session`)
//! * `nearRepeatStart(options) -> {total, seed, n_events, close_pairs,
//!   cells}` (options [`NearRepeatOptions`]): finds the pairs within the
//!   largest distance and counts the data's table. Needs events with dates.
//! * `nearRepeatStep(k) -> done`: `k` more permutations of the times.
//! * `nearRepeatFinish() -> result`: the table, the global test, the
//!   verdict ([`crate::spacetime::pairs::NearRepeatResult`]); kept for
//!   `nearRepeatCsv()`.
//! * `nearRepeatCsv() -> string`: the last finished table as CSV (band
//!   labels, O, E, simulated mean, ratio, p, q; no location).
//! * `nearRepeatShare/HelperStart/Simulate/Add`: the parallel protocol
//!   (a share holds pair numbers and times, no location).
//! * `knoxStart(options)`, `knoxStep`, `knoxFinish`, `knoxShare`,
//!   `knoxHelperStart`, `knoxSimulate`, `knoxAdd`: the same for the Knox
//!   test ([`KnoxOptions`]).
//!
//! Running jobs live in `Session::extras`, so loading other data drops them.

use super::{analysis_error, decode, js_error, to_js, Session};
use crate::spacetime::pairs::{
    near_repeat_csv, KnoxJob, KnoxOptions, NearRepeatJob, NearRepeatOptions, NearRepeatResult,
    PairRun, PairShare,
};
use crate::spacetime::TimedEvents;
use serde::Serialize;
use wasm_bindgen::prelude::*;

const NR_KEY: &str = "near-repeat";
const NR_HELPER: &str = "near-repeat-helper";
const NR_RESULT: &str = "near-repeat-result";
const KNOX_KEY: &str = "knox";
const KNOX_HELPER: &str = "knox-helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    seed: u64,
    n_events: usize,
    close_pairs: usize,
    cells: usize,
}

fn started(run: &PairRun) -> Started {
    Started {
        total: run.total(),
        seed: run.seed,
        n_events: run.engine.len(),
        close_pairs: run.engine.close_pairs(),
        cells: run.engine.cells(),
    }
}

fn no_job(what: &str) -> JsValue {
    js_error(
        "no_job",
        &format!("no {what} is in progress (start one first; loading other data ends a run)"),
        None,
    )
}

fn timed(
    s: &Session,
    rule: crate::spacetime::UncertainTimes,
    max_window_days: f64,
) -> Result<TimedEvents, JsValue> {
    let study = s.study_ref()?;
    TimedEvents::from_study(study, rule, max_window_days, 3).map_err(|e| analysis_error(&e))
}

fn share_json(run: &PairRun) -> Result<String, JsValue> {
    serde_json::to_string(&run.share())
        .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
}

fn read_share(share: &str) -> Result<PairShare, JsValue> {
    serde_json::from_str(share).map_err(|e| {
        js_error(
            "bad_parameter",
            &format!("unreadable shared run: {e}"),
            None,
        )
    })
}

/// `[ran, tables…]` for permutations `from..to`.
fn piece(tables: Vec<u32>, from: usize, to: usize, total: usize) -> Vec<u32> {
    let ran = to.min(total).saturating_sub(from);
    std::iter::once(ran as u32).chain(tables).collect()
}

fn add_piece(
    run: &mut PairRun,
    from: usize,
    piece: &[u32],
    method: &str,
) -> Result<usize, JsValue> {
    let (_, tables) = piece
        .split_first()
        .ok_or_else(|| js_error("bad_parameter", &format!("{method}: an empty piece"), None))?;
    run.add_simulated(from, tables)
        .map_err(|e| analysis_error(&e))
}

#[wasm_bindgen]
impl Session {
    /// Starts the near-repeat table of the events with a date.
    #[wasm_bindgen(js_name = nearRepeatStart, unchecked_return_type = "NearRepeatStarted")]
    pub fn near_repeat_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "NearRepeatStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<NearRepeatOptions>(options, self.extent_m())?;
        self.extras.remove(NR_KEY);
        let ev = timed(self, o.uncertain_times, o.max_window_days)?;
        let job = NearRepeatJob::new(&ev, &o).map_err(|e| analysis_error(&e))?;
        let st = started(&job.run);
        self.extras.insert(NR_KEY, Box::new(job));
        to_js(&st)
    }

    /// Runs `k` more permutations; returns how many are done.
    #[wasm_bindgen(js_name = nearRepeatStep)]
    pub fn near_repeat_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "nearRepeatStep", "k")?;
        let job = self
            .extra_mut::<NearRepeatJob>(NR_KEY)
            .ok_or_else(|| no_job("near-repeat table"))?;
        Ok(job.run.run_batch(k))
    }

    /// Finishes the run: the table, the global test, the verdict.
    #[wasm_bindgen(js_name = nearRepeatFinish, unchecked_return_type = "NearRepeatResult")]
    pub fn near_repeat_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<NearRepeatJob>(NR_KEY)
            .ok_or_else(|| no_job("near-repeat table"))?;
        let r = job.finish();
        let out = to_js(&r)?;
        self.extras.insert(NR_RESULT, Box::new(r));
        Ok(out)
    }

    /// The last finished near-repeat table as CSV (counts of pairs per
    /// band; no location).
    #[wasm_bindgen(js_name = nearRepeatCsv)]
    pub fn near_repeat_csv(&self) -> Result<String, JsValue> {
        let r = self
            .extras
            .get(NR_RESULT)
            .and_then(|b| b.downcast_ref::<NearRepeatResult>())
            .ok_or_else(|| {
                js_error(
                    "no_result",
                    "no near-repeat table has been finished yet (run one first)",
                    None,
                )
            })?;
        Ok(near_repeat_csv(r))
    }

    /// The shared part of the running table, for helper workers (pair
    /// numbers, distance bands and times; no location).
    #[wasm_bindgen(js_name = nearRepeatShare)]
    pub fn near_repeat_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(NR_KEY)
            .and_then(|b| b.downcast_ref::<NearRepeatJob>())
            .ok_or_else(|| no_job("near-repeat table"))?;
        share_json(&job.run)
    }

    /// In a helper worker: prepares to run permutations of a shared table.
    #[wasm_bindgen(js_name = nearRepeatHelperStart)]
    pub fn near_repeat_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let sh = read_share(&share)?;
        self.extras.insert(NR_HELPER, Box::new(sh));
        Ok(())
    }

    /// Permutations `from..to`: `[count, tables…]` (each table one count per
    /// cell); from the helper's share or else the running job (unchanged).
    #[wasm_bindgen(js_name = nearRepeatSimulate)]
    pub fn near_repeat_simulate(&self, from: f64, to: f64) -> Result<Vec<u32>, JsValue> {
        let from = super::count_arg(from, "nearRepeatSimulate", "from")?;
        let to = super::count_arg(to, "nearRepeatSimulate", "to")?;
        if let Some(sh) = self
            .extras
            .get(NR_HELPER)
            .and_then(|b| b.downcast_ref::<PairShare>())
        {
            return Ok(piece(sh.simulate_range(from, to), from, to, sh.n_perm));
        }
        let job = self
            .extras
            .get(NR_KEY)
            .and_then(|b| b.downcast_ref::<NearRepeatJob>())
            .ok_or_else(|| no_job("near-repeat table"))?;
        Ok(piece(
            job.run.simulate_range(from, to),
            from,
            to,
            job.run.total(),
        ))
    }

    /// Adds what `nearRepeatSimulate` gave for permutations starting at
    /// `from` (the number done so far); returns the number done.
    #[wasm_bindgen(js_name = nearRepeatAdd)]
    pub fn near_repeat_add(&mut self, from: f64, piece: Vec<u32>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "nearRepeatAdd", "from")?;
        let job = self
            .extra_mut::<NearRepeatJob>(NR_KEY)
            .ok_or_else(|| no_job("near-repeat table"))?;
        add_piece(&mut job.run, from, &piece, "nearRepeatAdd")
    }

    /// Starts the Knox test of the events with a date.
    #[wasm_bindgen(js_name = knoxStart, unchecked_return_type = "NearRepeatStarted")]
    pub fn knox_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "KnoxStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<KnoxOptions>(options, self.extent_m())?;
        self.extras.remove(KNOX_KEY);
        let ev = timed(self, o.uncertain_times, o.max_window_days)?;
        let job = KnoxJob::new(&ev, &o).map_err(|e| analysis_error(&e))?;
        let st = started(&job.run);
        self.extras.insert(KNOX_KEY, Box::new(job));
        to_js(&st)
    }

    /// Runs `k` more permutations; returns how many are done.
    #[wasm_bindgen(js_name = knoxStep)]
    pub fn knox_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "knoxStep", "k")?;
        let job = self
            .extra_mut::<KnoxJob>(KNOX_KEY)
            .ok_or_else(|| no_job("Knox test"))?;
        Ok(job.run.run_batch(k))
    }

    /// Finishes the Knox test.
    #[wasm_bindgen(js_name = knoxFinish, unchecked_return_type = "KnoxResult")]
    pub fn knox_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<KnoxJob>(KNOX_KEY)
            .ok_or_else(|| no_job("Knox test"))?;
        to_js(&job.finish())
    }

    /// The shared part of the running Knox test (no location).
    #[wasm_bindgen(js_name = knoxShare)]
    pub fn knox_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KNOX_KEY)
            .and_then(|b| b.downcast_ref::<KnoxJob>())
            .ok_or_else(|| no_job("Knox test"))?;
        share_json(&job.run)
    }

    /// In a helper worker: prepares to run permutations of a shared test.
    #[wasm_bindgen(js_name = knoxHelperStart)]
    pub fn knox_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let sh = read_share(&share)?;
        self.extras.insert(KNOX_HELPER, Box::new(sh));
        Ok(())
    }

    /// Permutations `from..to`: `[count, X*…]`.
    #[wasm_bindgen(js_name = knoxSimulate)]
    pub fn knox_simulate(&self, from: f64, to: f64) -> Result<Vec<u32>, JsValue> {
        let from = super::count_arg(from, "knoxSimulate", "from")?;
        let to = super::count_arg(to, "knoxSimulate", "to")?;
        if let Some(sh) = self
            .extras
            .get(KNOX_HELPER)
            .and_then(|b| b.downcast_ref::<PairShare>())
        {
            return Ok(piece(sh.simulate_range(from, to), from, to, sh.n_perm));
        }
        let job = self
            .extras
            .get(KNOX_KEY)
            .and_then(|b| b.downcast_ref::<KnoxJob>())
            .ok_or_else(|| no_job("Knox test"))?;
        Ok(piece(
            job.run.simulate_range(from, to),
            from,
            to,
            job.run.total(),
        ))
    }

    /// Adds what `knoxSimulate` gave; returns the number done.
    #[wasm_bindgen(js_name = knoxAdd)]
    pub fn knox_add(&mut self, from: f64, piece: Vec<u32>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "knoxAdd", "from")?;
        let job = self
            .extra_mut::<KnoxJob>(KNOX_KEY)
            .ok_or_else(|| no_job("Knox test"))?;
        add_piece(&mut job.run, from, &piece, "knoxAdd")
    }
}
