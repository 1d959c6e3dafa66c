//! Exports for the kernel relative-risk surface ("Compared with the
//! population"): cases (the events) against the population file.
//!
//! # JS API (methods of `Session`)
//! * `riskSurfaceStart(options) -> {total, seed, n_cases, n_control_points,
//!   controls_total, bandwidth_m}`: chooses the common bandwidth, computes
//!   the observed log relative risk and the "too few controls" mask
//!   (options [`RiskSurfaceOptions`]). The population file may hold one
//!   point per person or a count column (whole numbers of people).
//! * `riskSurfaceStep(k) -> done`: runs `k` more random labellings (at
//!   least 1, never past `total`).
//! * `riskSurfaceFinish() -> result`: the surface (`log_rr`, `p_value` as
//!   Float64Array, `class` as Uint8Array: 0 outside the area, 1 too few
//!   controls, 2 estimated), the raised and lowered tolerance contours
//!   (metres), the global test, the verdict, caveats and the disclosure
//!   check of the cases ([`crate::privacy::disclosure`]).
//! * `riskContoursGeoJson() -> string`: the last result's contours (raised,
//!   lowered, too few controls) as GeoJSON, longitude/latitude when the
//!   events were; contours only, no event coordinate.
//!
//! The running job lives in `Session::extras` under [`KEY_JOB`], the last
//! result under [`KEY_RESULT`]; loading other data drops both.

use super::{analysis_error, decode, js_error, set, to_js, Session};
use crate::intensity::isopleth::{contour, ContourSet};
use crate::intensity::Grid;
use crate::privacy::disclosure::{distances_to_kth, surface_disclosure};
use crate::risk::relative_risk::class;
use crate::risk::{RiskSurfaceJob, RiskSurfaceOptions, RiskSurfaceResult, RiskSurfaceShare};
use js_sys::{Float64Array, Object, Uint8Array};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY_JOB: &str = "risk-surface.job";
const KEY_RESULT: &str = "risk-surface.result";
/// In a helper worker: the rebuilt run.
const KEY_HELPER: &str = "risk-surface.helper";

#[derive(Serialize)]
struct Started {
    total: usize,
    seed: u64,
    n_cases: usize,
    n_control_points: usize,
    controls_total: f64,
    bandwidth_m: f64,
}

fn no_job() -> JsValue {
    js_error(
        "no_job",
        "no relative-risk run is in progress (start one first; loading other data ends a run)",
        None,
    )
}

/// The relative-risk surface drawn last (for the sharing report), if any.
pub(super) fn last_result(s: &Session) -> Option<&RiskSurfaceResult> {
    s.extras
        .get(KEY_RESULT)
        .and_then(|b| b.downcast_ref::<RiskSurfaceResult>())
}

#[wasm_bindgen]
impl Session {
    /// Starts a relative-risk surface of the events (cases) against the
    /// population file (controls). Returns `{total, seed, n_cases,
    /// n_control_points, controls_total, bandwidth_m}`.
    #[wasm_bindgen(js_name = riskSurfaceStart, unchecked_return_type = "RiskSurfaceStarted")]
    pub fn risk_surface_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "RiskSurfaceStartOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<RiskSurfaceOptions>(options, self.extent_m())?;
        self.extras.remove(KEY_JOB);
        let s = self.study_ref()?;
        let controls = s.controls.as_ref().ok_or_else(|| {
            js_error(
                "no_controls",
                "load a population file (controls) first: the surface compares the events with it",
                None,
            )
        })?;
        let weights = if controls.weight().is_some() {
            controls.weights_or_zero()
        } else {
            None
        };
        let mut job = RiskSurfaceJob::new(
            (s.events.x(), s.events.y()),
            (controls.x(), controls.y()),
            weights.as_deref(),
            &s.window,
            &o,
        )
        .map_err(|e| analysis_error(&e))?;
        // The disclosure check of the surfaces (as the intensity surface
        // does): cases whose bump would stand for one address.
        let kth = distances_to_kth(s.events.x(), s.events.y()).map_err(|e| analysis_error(&e))?;
        job.set_privacy(surface_disclosure(&kth, job.bandwidth_m()));
        let started = Started {
            total: job.total(),
            seed: o.seed,
            n_cases: s.events.len(),
            n_control_points: controls.len(),
            controls_total: weights
                .as_deref()
                .map_or(controls.len() as f64, |w| w.iter().sum()),
            bandwidth_m: job.bandwidth_m(),
        };
        self.extras.insert(KEY_JOB, Box::new(job));
        to_js(&started)
    }

    /// Runs `k` more random labellings; returns how many are done.
    #[wasm_bindgen(js_name = riskSurfaceStep)]
    pub fn risk_surface_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "riskSurfaceStep", "k")?;
        let job = self
            .extra_mut::<RiskSurfaceJob>(KEY_JOB)
            .ok_or_else(no_job)?;
        Ok(job.run_batch(k.max(1)))
    }

    /// Finishes the run: surface, contours, global test and verdict.
    #[wasm_bindgen(js_name = riskSurfaceFinish, unchecked_return_type = "RiskSurfaceResult")]
    pub fn risk_surface_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<RiskSurfaceJob>(KEY_JOB)
            .ok_or_else(no_job)?;
        let r = job.finish();
        let out = to_js(&r)?;
        let obj: &Object = out
            .dyn_ref::<Object>()
            .ok_or_else(|| js_error("internal", "result is not an object", None))?;
        set(obj, "log_rr", &Float64Array::from(&r.log_rr[..]).into())?;
        set(obj, "p_value", &Float64Array::from(&r.p_value[..]).into())?;
        set(obj, "class", &Uint8Array::from(&r.class[..]).into())?;
        self.extras.insert(KEY_RESULT, Box::new(r));
        Ok(out)
    }

    /// The last relative-risk result's contours as a GeoJSON
    /// FeatureCollection string: one MultiPolygon per kind (`raised`,
    /// `lowered`: pointwise tolerance contours; `too_few_controls`: the
    /// masked area). Longitude/latitude (WGS 84) when the events were
    /// longitude/latitude, else the events file's own planar units.
    #[wasm_bindgen(js_name = riskContoursGeoJson)]
    pub fn risk_contours_geojson(&mut self) -> Result<String, JsValue> {
        let projection = self.study_ref()?.projection;
        let r = self
            .extra_mut::<RiskSurfaceResult>(KEY_RESULT)
            .ok_or_else(|| {
                js_error(
                    "nothing_computed",
                    "draw a relative-risk surface first: the contours come from it",
                    None,
                )
            })?;
        Ok(contours_geojson(r, |x, y| {
            let (a, b) = projection.inverse(x, y);
            [a, b]
        }))
    }
}

/// The contours of `r` as GeoJSON (see `riskContoursGeoJson`).
fn contours_geojson(r: &RiskSurfaceResult, to_output: impl Fn(f64, f64) -> [f64; 2]) -> String {
    let n = r.nx * r.ny;
    let few = Grid {
        x0: r.x0,
        y0: r.y0,
        cell_m: r.cell_m,
        nx: r.nx,
        ny: r.ny,
        values: r
            .class
            .iter()
            .map(|&c| if c == class::FEW_CONTROLS { 1.0 } else { 0.0 })
            .collect(),
        mask: vec![true; n],
    };
    let few = contour(&few, 0.5);
    let level = 100.0 * r.tolerance;
    let kinds = [
        (
            "raised",
            &r.raised,
            format!("pointwise tolerance contour: p <= {} (raised risk); about {level:.0} % of the area is flagged by chance", r.tolerance),
        ),
        (
            "lowered",
            &r.lowered,
            format!("pointwise tolerance contour: p >= {} (lowered risk); about {level:.0} % of the area is flagged by chance", 1.0 - r.tolerance),
        ),
        (
            "too_few_controls",
            &few,
            "too few controls for a ratio: not an area of average risk".to_string(),
        ),
    ];
    let body = crate::intensity::isopleth::to_geojson(
        &ContourSet {
            contours: kinds.iter().map(|k| k.1.clone()).collect(),
        },
        to_output,
    );
    // Name each feature (the shared writer gives level and area only).
    let mut v: serde_json::Value = match serde_json::from_str(&body) {
        Ok(v) => v,
        Err(_) => return body,
    };
    if let Some(fs) = v.get_mut("features").and_then(|f| f.as_array_mut()) {
        for (f, (kind, _, note)) in fs.iter_mut().zip(kinds.iter()) {
            if let Some(p) = f.get_mut("properties").and_then(|p| p.as_object_mut()) {
                p.remove("percent_volume");
                p.remove("level");
                p.insert("kind".into(), (*kind).into());
                p.insert("note".into(), note.clone().into());
                p.insert("bandwidth_m".into(), r.bandwidth_m.into());
                p.insert("labellings".into(), r.n_sim.into());
                p.insert("seed".into(), r.seed.into());
            }
        }
    }
    if let Some(o) = v.as_object_mut() {
        o.insert(
            "cautions".into(),
            serde_json::json!([
                "A raised risk is not a cause.",
                "The contours are pointwise, not one test for the whole area.",
                "Contours only: no event or control location is in this file. Check local disclosure rules before sharing."
            ]),
        );
    }
    v.to_string()
}

#[wasm_bindgen]
impl Session {
    /// The shared part of the running surface, for helper workers (JSON:
    /// the study area, the cases and population points with their counts,
    /// the options with the chosen bandwidth fixed).
    #[wasm_bindgen(js_name = riskSurfaceShare)]
    pub fn risk_surface_share(&self) -> Result<String, JsValue> {
        let job = self
            .extras
            .get(KEY_JOB)
            .and_then(|b| b.downcast_ref::<RiskSurfaceJob>())
            .ok_or_else(no_job)?;
        serde_json::to_string(&job.share())
            .map_err(|e| js_error("internal", &format!("could not share the run: {e}"), None))
    }

    /// In a helper worker: rebuilds a shared run to compute its labellings.
    #[wasm_bindgen(js_name = riskSurfaceHelperStart)]
    pub fn risk_surface_helper_start(&mut self, share: String) -> Result<(), JsValue> {
        let share: RiskSurfaceShare = serde_json::from_str(&share).map_err(|e| {
            js_error(
                "bad_parameter",
                &format!("unreadable shared run: {e}"),
                None,
            )
        })?;
        let job = RiskSurfaceJob::from_share(&share).map_err(|e| analysis_error(&e))?;
        self.extras.insert(KEY_HELPER, Box::new(job));
        Ok(())
    }

    /// Labellings `from..to`: per estimated cell how many were at least
    /// the data's, then each labelling's T; from the helper's run or else
    /// the running job, which is not changed.
    #[wasm_bindgen(js_name = riskSurfaceSimulate)]
    pub fn risk_surface_simulate(&self, from: f64, to: f64) -> Result<Vec<f64>, JsValue> {
        let from = super::count_arg(from, "riskSurfaceSimulate", "from")?;
        let to = super::count_arg(to, "riskSurfaceSimulate", "to")?;
        let job = self
            .extras
            .get(KEY_HELPER)
            .or_else(|| self.extras.get(KEY_JOB))
            .and_then(|b| b.downcast_ref::<RiskSurfaceJob>())
            .ok_or_else(no_job)?;
        Ok(job.simulate_range(from, to))
    }

    /// Adds a piece of labellings starting at `from` (the number done so
    /// far); returns the number done.
    #[wasm_bindgen(js_name = riskSurfaceAdd)]
    pub fn risk_surface_add(&mut self, from: f64, piece: Vec<f64>) -> Result<usize, JsValue> {
        let from = super::count_arg(from, "riskSurfaceAdd", "from")?;
        let job = self
            .extra_mut::<RiskSurfaceJob>(KEY_JOB)
            .ok_or_else(no_job)?;
        job.add_simulated(from, &piece)
            .map_err(|e| analysis_error(&e))
    }
}
