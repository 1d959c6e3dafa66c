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
    clark_evans, quadrat_test, ClarkEvansParams, EnvelopeJob, EnvelopeOptions, EnvelopeSimulator,
    QuadratParams, SimulationShare, SummaryFunction,
};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::{Deserialize, Deserializer, Serialize};
use std::f64::consts::PI;
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
    #[wasm_bindgen(js_name = quadratTest)]
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
    #[wasm_bindgen(js_name = clarkEvans)]
    pub fn clark_evans_js(
        &self,
        #[wasm_bindgen(unchecked_param_type = "ClarkEvansOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<ClarkEvansParams>(params, self.extent_m())?;
        let s = self.study_ref()?;
        let res = clark_evans(&s.events, &s.window, &p).map_err(|e| analysis_error(&e))?;
        to_js(&res)
    }

    /// Starts an envelope run: checks the parameters and computes the
    /// observed curve. Returns `{total, distances, seed}`.
    #[wasm_bindgen(js_name = envelopeStart)]
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
    #[wasm_bindgen(js_name = envelopeFinish)]
    pub fn envelope_finish(&mut self) -> Result<JsValue, JsValue> {
        let job = self.take_extra::<EnvelopeJob>(KEY).ok_or_else(no_job)?;
        to_js(&job.finish())
    }
}

// ---------- the chart ----------

/// A number or null/undefined (NaN): curves come back from JSON with null
/// where a value is undefined.
fn nan_vec<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
    let v: Vec<Option<f64>> = Vec::deserialize(d)?;
    Ok(v.into_iter().map(|x| x.unwrap_or(f64::NAN)).collect())
}

/// The fields of an envelope result the chart needs.
#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct ChartData {
    function: SummaryFunction,
    #[serde(deserialize_with = "nan_vec")]
    r: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    observed: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    theoretical: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pointwise_lo: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pointwise_hi: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    global_lo: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    global_hi: Vec<f64>,
    alpha: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
enum View {
    #[default]
    Centred,
    Function,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
enum Units {
    #[default]
    Auto,
    M,
    Km,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
enum Band {
    #[default]
    Global,
    Pointwise,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct ChartOptions {
    view: View,
    units: Units,
    band: Band,
    /// Device pixels per CSS pixel ([`super::PixelScale`]).
    scale: Option<f64>,
}

/// What was drawn, for the page's caption and tests.
#[derive(Serialize)]
struct Drawn {
    x_label: String,
    y_label: String,
    units: &'static str,
    band_label: String,
}

fn chart_error(detail: &str) -> JsValue {
    js_error(
        "chart",
        &format!("could not draw the chart: {detail}"),
        None,
    )
}

fn plot_err<E: std::fmt::Debug>(e: E) -> String {
    format!("{e:?}")
}

/// Short number for axis ticks.
fn tick(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e6).contains(&a) {
        format!("{v:.1e}")
    } else if a >= 100.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        let s = format!("{v:.2}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        let s = format!("{v:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// Runs of consecutive indices where `ok` holds, as half-open ranges.
fn runs(ok: &[bool]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut start = None;
    for (k, &b) in ok.iter().enumerate() {
        match (b, start) {
            (true, None) => start = Some(k),
            (false, Some(s)) => {
                out.push((s, k));
                start = None;
            }
            _ => {}
        }
    }
    if let Some(s) = start {
        out.push((s, ok.len()));
    }
    out
}

/// Draws `d` on `area`. Returns the labels used.
fn draw_chart<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    d: &ChartData,
    o: &ChartOptions,
) -> Result<Drawn, String> {
    let n = d.r.len();
    for (name, v) in [
        ("observed", &d.observed),
        ("theoretical", &d.theoretical),
        ("pointwise_lo", &d.pointwise_lo),
        ("pointwise_hi", &d.pointwise_hi),
        ("global_lo", &d.global_lo),
        ("global_hi", &d.global_hi),
    ] {
        if v.len() != n {
            return Err(format!(
                "the result is incomplete: {name} has {} values for {n} distances",
                v.len()
            ));
        }
    }
    if n < 2 {
        return Err("the result has fewer than two distances".into());
    }
    let r_last =
        d.r.iter()
            .copied()
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max);
    if r_last <= 0.0 {
        return Err("the distances are not positive".into());
    }
    let km = match o.units {
        Units::Km => true,
        Units::M => false,
        Units::Auto => r_last >= 5000.0,
    };
    let s = if km { 1e-3 } else { 1.0 };
    let unit = if km { "km" } else { "m" };
    let f = d.function;
    let centred = o.view == View::Centred;
    // Value transform: subtract the CSR curve of K or L when centred, then
    // scale lengths (L) or areas (K) to the chosen unit.
    let shift: Vec<f64> = match (f, centred) {
        (SummaryFunction::L, true) => d.r.clone(),
        (SummaryFunction::K, true) => d.r.iter().map(|r| PI * r * r).collect(),
        _ => vec![0.0; n],
    };
    let vs = match f {
        SummaryFunction::L => s,
        SummaryFunction::K => s * s,
        _ => 1.0,
    };
    let tr = |v: &[f64]| -> Vec<f64> { v.iter().zip(&shift).map(|(a, b)| (a - b) * vs).collect() };
    let r: Vec<f64> = d.r.iter().map(|v| v * s).collect();
    let obs = tr(&d.observed);
    let theo = tr(&d.theoretical);
    let (lo, hi, band_label) = match o.band {
        Band::Global => (
            tr(&d.global_lo),
            tr(&d.global_hi),
            format!(
                "global {:.0}% band (the test)",
                100.0 * (1.0 - if d.alpha > 0.0 { d.alpha } else { 0.05 })
            ),
        ),
        Band::Pointwise => (
            tr(&d.pointwise_lo),
            tr(&d.pointwise_hi),
            "pointwise band — not a test".to_string(),
        ),
    };
    let y_label = match (f, centred) {
        (SummaryFunction::L, true) => format!("L(r) − r ({unit})"),
        (SummaryFunction::L, false) => format!("L(r) ({unit})"),
        (SummaryFunction::K, true) => format!("K(r) − πr² ({unit}²)"),
        (SummaryFunction::K, false) => format!("K(r) ({unit}²)"),
        (SummaryFunction::PairCorrelation, _) => "pair correlation g(r)".into(),
        (SummaryFunction::NearestNeighbour, _) => "nearest neighbour G(r)".into(),
        (SummaryFunction::EmptySpace, _) => "empty space F(r)".into(),
        (SummaryFunction::J, _) => "J(r)".into(),
    };
    let x_label = format!("distance r ({unit})");
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for v in [&obs, &theo, &lo, &hi] {
        for x in v.iter().filter(|x| x.is_finite()) {
            ymin = ymin.min(*x);
            ymax = ymax.max(*x);
        }
    }
    if !(ymin.is_finite() && ymax.is_finite()) {
        return Err("no finite values to draw".into());
    }
    let pad = ((ymax - ymin) * 0.06).max(ymax.abs().max(1.0) * 1e-9);
    let xmax = r_last * s;

    let ink = RGBColor(34, 34, 34);
    let band_fill = match o.band {
        Band::Global => RGBColor(176, 208, 226),
        Band::Pointwise => RGBColor(206, 200, 182),
    };
    let obs_colour = RGBColor(176, 58, 18);
    let sc = super::PixelScale::new(o.scale);
    let (px, pt, pf) = (|v| sc.px(v), |v| sc.pt(v), |v| sc.font(v));
    area.fill(&WHITE).map_err(plot_err)?;
    // Legend in its own strip above the plot, so it never hides a curve;
    // items that would run past the right edge go to a new row.
    let font = ("sans-serif", pf(13.0)).into_font().color(&ink);
    let items: [(&str, u8); 3] = [
        ("observed", 0),
        ("complete spatial randomness", 1),
        (band_label.as_str(), 2),
    ];
    let width = area.dim_in_pixel().0 as i32;
    let mut places = Vec::with_capacity(items.len());
    let (mut x, mut row) = (px(84), 0);
    for (text, _) in items {
        let w = area
            .estimate_text_size(text, &font)
            .map(|(w, _)| w as i32)
            .unwrap_or((text.chars().count() as i32) * px(7));
        let need = px(26) + w;
        if x > px(84) && x + need > width - px(8) {
            row += 1;
            x = px(84);
        }
        places.push((x, px(15) + row * px(22)));
        x += need + px(22);
    }
    let (legend, plot) = area.split_vertically(px(30) + row * px(22));
    let mut chart = ChartBuilder::on(&plot)
        .margin(pt(12))
        .x_label_area_size(pt(44))
        .y_label_area_size(pt(72))
        .build_cartesian_2d(0.0..xmax, (ymin - pad)..(ymax + pad))
        .map_err(plot_err)?;
    let label_font = ("sans-serif", pf(14.0)).into_font().color(&ink);
    let tick_font = ("sans-serif", pf(12.0)).into_font().color(&ink);
    chart
        .configure_mesh()
        .x_desc(x_label.clone())
        .y_desc(y_label.clone())
        .axis_desc_style(label_font)
        .label_style(tick_font)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(*v))
        .bold_line_style(RGBColor(232, 232, 232).stroke_width(pt(1)))
        .axis_style(RGBColor(0, 0, 0).stroke_width(pt(1)))
        .set_all_tick_mark_size(pt(5))
        .light_line_style(WHITE.mix(0.0))
        .draw()
        .map_err(plot_err)?;
    let ok: Vec<bool> = lo
        .iter()
        .zip(&hi)
        .map(|(a, b)| a.is_finite() && b.is_finite())
        .collect();
    for (a, b) in runs(&ok) {
        if b - a < 2 {
            continue;
        }
        let mut poly: Vec<(f64, f64)> = (a..b)
            .filter_map(|k| Some((*r.get(k)?, *hi.get(k)?)))
            .collect();
        poly.extend((a..b).rev().filter_map(|k| Some((*r.get(k)?, *lo.get(k)?))));
        chart
            .draw_series(std::iter::once(Polygon::new(poly, band_fill.filled())))
            .map_err(plot_err)?;
    }
    let line = |v: &[f64]| -> Vec<Vec<(f64, f64)>> {
        let ok: Vec<bool> = v.iter().map(|a| a.is_finite()).collect();
        runs(&ok)
            .into_iter()
            .map(|(a, b)| {
                (a..b)
                    .filter_map(|k| Some((*r.get(k)?, *v.get(k)?)))
                    .collect()
            })
            .collect()
    };
    for seg in line(&theo) {
        chart
            .draw_series(DashedLineSeries::new(
                seg,
                pt(7),
                pt(5),
                ink.stroke_width(pt(1)),
            ))
            .map_err(plot_err)?;
    }
    for seg in line(&obs) {
        chart
            .draw_series(LineSeries::new(seg, obs_colour.stroke_width(pt(2))))
            .map_err(plot_err)?;
    }
    for ((text, kind), (x, y)) in items.into_iter().zip(places) {
        match kind {
            0 => legend.draw(&PathElement::new(
                vec![(x, y), (x + px(20), y)],
                obs_colour.stroke_width(pt(2)),
            )),
            1 => legend
                .draw(&PathElement::new(
                    vec![(x, y), (x + px(7), y)],
                    ink.stroke_width(pt(1)),
                ))
                .and_then(|_| {
                    legend.draw(&PathElement::new(
                        vec![(x + px(12), y), (x + px(19), y)],
                        ink.stroke_width(pt(1)),
                    ))
                }),
            _ => legend.draw(&Rectangle::new(
                [(x, y - px(7)), (x + px(20), y + px(7))],
                band_fill.filled(),
            )),
        }
        .map_err(plot_err)?;
        legend
            .draw(&Text::new(
                text.to_string(),
                (x + px(26), y - px(7)),
                font.clone(),
            ))
            .map_err(plot_err)?;
    }
    area.present().map_err(plot_err)?;
    Ok(Drawn {
        x_label,
        y_label,
        units: unit,
        band_label,
    })
}

/// Draws an envelope result on the `<canvas>` with id `canvas_id` (main
/// thread only). Returns `{x_label, y_label, units, band_label}`.
#[wasm_bindgen(js_name = drawEnvelopeChart)]
pub fn draw_envelope_chart(
    canvas_id: &str,
    result: JsValue,
    options: JsValue,
) -> Result<JsValue, JsValue> {
    if result.is_undefined() || result.is_null() {
        return Err(chart_error("there is no result to draw"));
    }
    let data: ChartData = serde_wasm_bindgen::from_value(result)
        .map_err(|e| chart_error(&format!("the result was not understood ({e})")))?;
    let opts: ChartOptions = from_js(options)?;
    let backend = plotters_canvas::CanvasBackend::new(canvas_id)
        .ok_or_else(|| chart_error(&format!("there is no canvas with id \"{canvas_id}\"")))?;
    let root = backend.into_drawing_area();
    let drawn = draw_chart(&root, &data, &opts).map_err(|e| chart_error(&e))?;
    to_js(&drawn)
}
