//! Exports for "Where are the hotspots?": kernel intensity surfaces with
//! percent-volume isopleths, DBSCAN with its k-distance plot, and Kulldorff's
//! scan as a batched job (`scanStart` / `scanStep` / `scanFinish`).
//!
//! Every method decodes plain JS options (snake_case fields, all optional),
//! calls the core ([`crate::intensity`], [`crate::clusters`],
//! [`crate::scan`]) and returns plain objects; grids and labels come back as
//! typed arrays. Coordinates are the study's planar metres; where the input
//! was longitude/latitude, centres are also given back-projected
//! (`centre_lon`, `centre_lat`) and the isopleth GeoJSON is in WGS 84.
//!
//! `drawKDistanceChart` is a free function for the page's main thread: it
//! draws with plotters-canvas, which needs the DOM (it cannot run in the
//! worker, see TOOLCHAIN.md).

use super::{analysis_error, decode, from_js, js_error, set, to_js, Session};
use crate::clusters::{dbscan, k_distance_plot, DbscanOptions, KDistanceParams};
use crate::intensity::{
    kernel_surface, BandwidthMethod, EdgeCorrection, IntensitySurface, Kernel, SurfaceParams,
};
use crate::privacy::disclosure::{distances_to_kth, surface_disclosure, SurfaceDisclosure};
use crate::scan::{resolve_model, ScanJob, ScanModel, ScanOptions, ScanReport};
use crate::study::Study;
use js_sys::{Float64Array, Int32Array, Object, Uint8Array};
use serde::Serialize;
use wasm_bindgen::prelude::*;

const KEY_SURFACE: &str = "hotspots.surface";
const KEY_KDIST5: &str = "hotspots.kdist_privacy";
pub(super) const KEY_SCAN: &str = "hotspots.scan";

#[derive(Serialize)]
struct IsoplethOut<'a> {
    percent: Option<f64>,
    level_per_km2: f64,
    area_km2: f64,
    polygons: &'a Vec<Vec<Vec<[f64; 2]>>>,
}

#[derive(Serialize)]
struct SurfaceMeta<'a> {
    x0: f64,
    y0: f64,
    cell_m: f64,
    nx: usize,
    ny: usize,
    kernel: Kernel,
    bandwidth_m: f64,
    /// Per-axis SD of the kernel, metres (= bandwidth for the Gaussian).
    kernel_sd_m: f64,
    method: BandwidthMethod,
    method_text: &'static str,
    reference_m: Option<f64>,
    candidates_m: &'a [f64],
    criterion: &'a [Option<f64>],
    bandwidth_note: Option<&'a str>,
    edge: EdgeCorrection,
    n_events: usize,
    total_weight: f64,
    weighted: bool,
    integral_events: f64,
    max_per_km2: f64,
    area_km2: f64,
    notes: &'a [String],
    isopleths: Vec<IsoplethOut<'a>>,
    privacy: Option<SurfaceDisclosure>,
}

impl Session {
    /// [`distances_to_kth`] of the study's events, cached per study.
    fn privacy_kdist(&mut self) -> Result<&Vec<f64>, JsValue> {
        if self.extra_mut::<Vec<f64>>(KEY_KDIST5).is_none() {
            let s = self.study_ref()?;
            let d = distances_to_kth(s.events.x(), s.events.y()).map_err(|e| analysis_error(&e))?;
            self.extras.insert(KEY_KDIST5, Box::new(d));
        }
        self.extra_mut::<Vec<f64>>(KEY_KDIST5)
            .map(|v| &*v)
            .ok_or_else(|| js_error("internal", "privacy check unavailable", None))
    }
}

fn geographic_centre(s: &Study, x: f64, y: f64) -> (Option<f64>, Option<f64>) {
    if s.projection.is_geographic() {
        let (lon, lat) = s.projection.inverse(x, y);
        (Some(lon), Some(lat))
    } else {
        (None, None)
    }
}

#[derive(Serialize)]
struct ClusterOut<'a> {
    id: i32,
    members: usize,
    core_members: usize,
    centre_x: f64,
    centre_y: f64,
    centre_lon: Option<f64>,
    centre_lat: Option<f64>,
    hull_area_km2: f64,
    density_per_km2: Option<f64>,
    hull: &'a [[f64; 2]],
}

#[wasm_bindgen]
impl Session {
    /// What the hotspot panel needs to know about the loaded data:
    /// `{n_events, has_weights, has_controls, has_population_counts,
    /// geographic, scan_model, scan_model_text}`: `has_population_counts`
    /// when the controls' count column is mapped; `scan_model` the model
    /// the scan picks from what is loaded (`model: "auto"`), in words in
    /// `scan_model_text`.
    #[wasm_bindgen(js_name = hotspotsInfo, unchecked_return_type = "HotspotsInfo")]
    pub fn hotspots_info(&self) -> Result<JsValue, JsValue> {
        #[derive(Serialize)]
        struct Info {
            n_events: usize,
            has_weights: bool,
            has_controls: bool,
            has_population_counts: bool,
            geographic: bool,
            scan_model: ScanModel,
            scan_model_text: &'static str,
        }
        let s = self.study_ref()?;
        let has_controls = s.controls.is_some();
        let has_counts = s.controls.as_ref().is_some_and(|c| c.weight().is_some());
        let model = resolve_model(ScanModel::Auto, has_controls, has_counts)
            .map_err(|e| analysis_error(&e))?;
        to_js(&Info {
            n_events: s.events.len(),
            has_weights: s.events.weight().is_some(),
            has_controls: s.controls.as_ref().is_some_and(|c| !c.is_empty()),
            has_population_counts: has_counts,
            geographic: s.projection.is_geographic(),
            scan_model: model,
            scan_model_text: model.describe(),
        })
    }

    /// A kernel intensity surface of the events (see [`SurfaceParams`] for
    /// the options). Returns the grid as `values` (Float64Array, events per
    /// km², row-major with row 0 at the south) and `mask` (Uint8Array, 1 in
    /// the study area) plus `x0, y0, cell_m, nx, ny`, the bandwidth in
    /// metres and how it was chosen, `max_per_km2`, `integral_events`,
    /// `notes`, the percent-volume `isopleths` (polygons in metres) and a
    /// `privacy` count. The surface is kept for `isoplethsGeoJson`.
    #[wasm_bindgen(js_name = intensitySurface, unchecked_return_type = "IntensitySurfaceResult")]
    pub fn intensity_surface(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "IntensitySurfaceOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<SurfaceParams>(params, self.extent_m())?;
        self.extras.remove(KEY_SURFACE);
        let o = p.options();
        let surf: IntensitySurface = {
            let s = self.study_ref()?;
            kernel_surface(&s.events, &s.window, &o).map_err(|e| analysis_error(&e))?
        };
        let iso = surf.isopleths(&p.isopleths);
        let sd = surf.kernel.sd(surf.bandwidth_m);
        let privacy = if p.privacy_check {
            Some(surface_disclosure(self.privacy_kdist()?, sd))
        } else {
            None
        };
        let weighted = p.use_weights && self.study_ref()?.events.weight().is_some();
        let g = &surf.grid;
        let meta = SurfaceMeta {
            x0: g.x0,
            y0: g.y0,
            cell_m: g.cell_m,
            nx: g.nx,
            ny: g.ny,
            kernel: surf.kernel,
            bandwidth_m: surf.bandwidth_m,
            kernel_sd_m: sd,
            method: surf.bandwidth.method,
            method_text: surf.bandwidth.method.describe(),
            reference_m: surf.bandwidth.reference_m,
            candidates_m: &surf.bandwidth.candidates_m,
            criterion: &surf.bandwidth.criterion,
            bandwidth_note: surf.bandwidth.note.as_deref(),
            edge: surf.edge,
            n_events: surf.n_events,
            total_weight: surf.total_weight,
            weighted,
            integral_events: surf.integral_events,
            max_per_km2: surf.max_per_km2,
            area_km2: surf.area_km2,
            notes: &surf.notes,
            isopleths: iso
                .contours
                .iter()
                .map(|c| IsoplethOut {
                    percent: c.percent_volume,
                    level_per_km2: c.level,
                    area_km2: c.area_km2,
                    polygons: &c.polygons,
                })
                .collect(),
            privacy,
        };
        let out = to_js(&meta)?;
        let obj: &Object = out
            .dyn_ref::<Object>()
            .ok_or_else(|| js_error("internal", "surface metadata is not an object", None))?;
        set(obj, "values", &Float64Array::from(&g.values[..]).into())?;
        let mask: Vec<u8> = g.mask.iter().map(|&m| u8::from(m)).collect();
        set(obj, "mask", &Uint8Array::from(&mask[..]).into())?;
        self.extras.insert(KEY_SURFACE, Box::new(surf));
        Ok(out)
    }

    /// The last surface's percent-volume isopleths (`fractions`, e.g.
    /// `[0.5, 0.75, 0.95]`) as a GeoJSON FeatureCollection string: one
    /// MultiPolygon per level. Longitude/latitude (WGS 84) when the events
    /// were longitude/latitude, else the events file's own planar units.
    #[wasm_bindgen(js_name = isoplethsGeoJson)]
    pub fn isopleths_geojson(&mut self, fractions: Vec<f64>) -> Result<String, JsValue> {
        let projection = self.study_ref()?.projection;
        let surf = self
            .extra_mut::<IntensitySurface>(KEY_SURFACE)
            .ok_or_else(|| {
                js_error(
                    "nothing_computed",
                    "draw an intensity surface first: the isopleths come from it",
                    None,
                )
            })?;
        {
            use crate::params::Params;
            let check = SurfaceParams {
                isopleths: fractions.clone(),
                ..Default::default()
            };
            check
                .validate()
                .map_err(|e| js_error("bad_options", &format!("isoplethsGeoJson: {e}"), None))?;
        }
        let contours = surf.isopleths(&fractions);
        Ok(crate::intensity::isopleth::to_geojson(&contours, |x, y| {
            let (a, b) = projection.inverse(x, y);
            [a, b]
        }))
    }

    /// DBSCAN (Ester et al. 1996) with scikit-learn's labelling: options
    /// `{eps_m, min_samples, use_weights}`. Returns `labels` (Int32Array,
    /// −1 = noise, input order), `core` (Uint8Array), `n_clusters`, `noise`
    /// and the cluster table with hulls (metres).
    #[wasm_bindgen(unchecked_return_type = "DbscanResult")]
    pub fn dbscan(
        &self,
        #[wasm_bindgen(unchecked_param_type = "DbscanOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (o, _) = decode::<DbscanOptions>(params, self.extent_m())?;
        let s = self.study_ref()?;
        let r = dbscan(&s.events, &o).map_err(|e| analysis_error(&e))?;
        #[derive(Serialize)]
        struct Out<'a> {
            eps_m: f64,
            min_samples: usize,
            n_clusters: usize,
            noise: usize,
            weighted: bool,
            clusters: Vec<ClusterOut<'a>>,
        }
        let clusters = r
            .clusters
            .iter()
            .map(|c| {
                let (lon, lat) = geographic_centre(s, c.centre_x, c.centre_y);
                ClusterOut {
                    id: c.id,
                    members: c.members,
                    core_members: c.core_members,
                    centre_x: c.centre_x,
                    centre_y: c.centre_y,
                    centre_lon: lon,
                    centre_lat: lat,
                    hull_area_km2: c.hull_area_km2,
                    density_per_km2: c.density_per_km2,
                    hull: &c.hull,
                }
            })
            .collect();
        let out = to_js(&Out {
            eps_m: r.eps_m,
            min_samples: r.min_samples,
            n_clusters: r.n_clusters,
            noise: r.noise,
            weighted: o.use_weights && s.events.weight().is_some(),
            clusters,
        })?;
        let obj: &Object = out
            .dyn_ref::<Object>()
            .ok_or_else(|| js_error("internal", "result is not an object", None))?;
        set(obj, "labels", &Int32Array::from(&r.labels[..]).into())?;
        let core: Vec<u8> = r.core.iter().map(|&c| u8::from(c)).collect();
        set(obj, "core", &Uint8Array::from(&core[..]).into())?;
        Ok(out)
    }

    /// Sorted k-distances for choosing DBSCAN's eps: `{min_samples,
    /// sorted_desc_m (Float64Array), knee_eps_m, knee_index}`.
    #[wasm_bindgen(js_name = kDistance, unchecked_return_type = "KDistanceResult")]
    pub fn k_distance(
        &self,
        #[wasm_bindgen(unchecked_param_type = "number")] min_samples: JsValue,
    ) -> Result<JsValue, JsValue> {
        if min_samples.is_undefined() || min_samples.is_null() {
            return Err(js_error(
                "bad_options",
                "kDistance: give min_samples, DBSCAN's minimum number of events in a neighbourhood",
                None,
            ));
        }
        let opts = Object::new();
        set(&opts, "min_samples", &min_samples)?;
        let (p, _) = decode::<KDistanceParams>(opts.into(), None)?;
        let s = self.study_ref()?;
        let k = k_distance_plot(s.events.x(), s.events.y(), p.min_samples)
            .map_err(|e| analysis_error(&e))?;
        let obj = Object::new();
        set(
            &obj,
            "min_samples",
            &JsValue::from_f64(k.min_samples as f64),
        )?;
        set(
            &obj,
            "sorted_desc_m",
            &Float64Array::from(&k.sorted_desc_m[..]).into(),
        )?;
        set(&obj, "knee_eps_m", &to_js(&k.knee_eps_m)?)?;
        set(&obj, "knee_index", &to_js(&k.knee_index)?)?;
        Ok(obj.into())
    }

    /// Prepares Kulldorff's scan (windows enumerated, data scored):
    /// options `{model, centres, max_share, n_sim, seed, cells_long_side,
    /// max_secondary}`; `model` `"auto"` picks from what is loaded (see
    /// `hotspotsInfo`), `"poisson_population"` without a population file
    /// whose count column is mapped is a `bad_parameter` error. Times a few
    /// chance runs (up to 25 ms or 50 runs, then forgotten) and returns
    /// `{total, n_windows, n_regions, estimate_ms, cost}`: `estimate_ms` is
    /// the time of the chance runs left, `cost` the timing and the faster
    /// settings with their own estimates ([`crate::scan::ScanCost`]). A scan already prepared or
    /// running is dropped.
    #[wasm_bindgen(js_name = scanStart, unchecked_return_type = "ScanStarted")]
    pub fn scan_start(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "ScanStartOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        self.extras.remove(KEY_SCAN);
        let (o, _) = decode::<ScanOptions>(params, self.extent_m())?;
        let job = {
            let s = self.study_ref()?;
            ScanJob::new(&s.events, s.controls.as_ref(), &s.window, &o)
                .map_err(|e| analysis_error(&e))?
        };
        let mut job = job;
        // Time a few chance runs for the estimate (the job is left as it was).
        let cost = job.time_replicates(&mut super::clock::now_ms, 25.0, 50);
        #[derive(Serialize)]
        struct Started {
            total: usize,
            n_windows: usize,
            n_regions: usize,
            estimate_ms: f64,
            cost: crate::scan::ScanCost,
        }
        let started = Started {
            total: job.progress().total,
            n_windows: job.n_windows(),
            n_regions: job.regions().x.len(),
            estimate_ms: cost.left_ms,
            cost,
        };
        self.extras.insert(KEY_SCAN, Box::new(job));
        to_js(&started)
    }

    /// Runs up to `k` more replicates; returns how many are done.
    #[wasm_bindgen(js_name = scanStep)]
    pub fn scan_step(&mut self, k: f64) -> Result<usize, JsValue> {
        let k = super::count_arg(k, "scanStep", "k")?;
        let job = self
            .extra_mut::<ScanJob>(KEY_SCAN)
            .ok_or_else(|| js_error("nothing_started", "no scan is running", None))?;
        Ok(job.run_batch(k.max(1)).done)
    }

    /// Runs any replicates left and returns the result: the most likely
    /// cluster and secondary clusters (centre, radius, observed, expected,
    /// relative risk, p), the test statistic and its Monte Carlo p-value.
    #[wasm_bindgen(js_name = scanFinish, unchecked_return_type = "ScanResult")]
    pub fn scan_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self
            .take_extra::<ScanJob>(KEY_SCAN)
            .ok_or_else(|| js_error("nothing_started", "no scan is running", None))?;
        let r = job.finish();
        to_js(&ScanReport::new(r, &self.study_ref()?.projection))
    }
}

/// Draws the sorted k-distance curve on the canvas with id `canvas_id`
/// (main thread only) with [`crate::plot::kdistance`]. `data` is
/// `kDistance`'s answer plus an optional `eps_m` and `scale`. Throws when the
/// canvas is missing or the data are empty.
#[wasm_bindgen(js_name = drawKDistanceChart)]
pub fn draw_k_distance_chart(
    canvas_id: &str,
    #[wasm_bindgen(unchecked_param_type = "KDistanceChartData")] data: JsValue,
) -> Result<(), JsValue> {
    use crate::plot::{KDistanceChartData, PlotError};
    use plotters::prelude::IntoDrawingArea;
    let d: KDistanceChartData = from_js(data)?;
    if d.sorted_desc_m.is_empty() {
        return Err(js_error("bad_options", "no k-distances to draw", None));
    }
    let backend = plotters_canvas::CanvasBackend::new(canvas_id).ok_or_else(|| {
        js_error(
            "no_canvas",
            &format!("no canvas with id \"{canvas_id}\" on the page"),
            None,
        )
    })?;
    let root = backend.into_drawing_area();
    crate::plot::draw_k_distance_chart(&root, &d).map_err(|e| match e {
        PlotError::Data(m) => js_error("bad_options", &m, None),
        PlotError::Draw(m) => js_error("draw", &m, None),
    })
}
