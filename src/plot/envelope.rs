//! The envelope chart: observed curve, the curve under complete spatial
//! randomness (dashed), and the global band (the test) or the pointwise band
//! ("not a test"), with a legend in its own strip above the plot.
//!
//! Generic over any plotters `DrawingBackend`: the page draws it on a canvas
//! (on its main thread: plotters-canvas measures text with the DOM), the
//! tests render it to an SVG string. The input is [`EnvelopeChartData`]:
//! the fields of an [`EnvelopeResult`] the chart needs, built natively with
//! [`EnvelopeChartData::from_result`] or read back from the JSON the worker
//! returned (where an undefined value arrives as `null`).

use super::{draw_err, runs, tick, PixelScale, PlotError};
use crate::distance::{EnvelopeResult, SummaryFunction};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::{Deserialize, Deserializer, Serialize};
use std::f64::consts::PI;

/// A number or null/undefined (NaN): curves come back from JSON with null
/// where a value is undefined.
fn nan_vec<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
    let v: Vec<Option<f64>> = Vec::deserialize(d)?;
    Ok(v.into_iter().map(|x| x.unwrap_or(f64::NAN)).collect())
}

/// The fields of an envelope result the chart needs.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct EnvelopeChartData {
    pub function: SummaryFunction,
    #[serde(deserialize_with = "nan_vec")]
    pub r: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub observed: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub theoretical: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub pointwise_lo: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub pointwise_hi: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub global_lo: Vec<f64>,
    #[serde(deserialize_with = "nan_vec")]
    pub global_hi: Vec<f64>,
    pub alpha: f64,
    /// A y-axis label instead of the function's own (`{unit}` stands for
    /// the chart's length unit), for curves that are not one of the summary
    /// functions (the random labelling D(r), drawn as `function: "k"` in
    /// the function view).
    #[serde(default)]
    pub y_label: Option<String>,
    /// The legend's name of the `theoretical` curve instead of "complete
    /// spatial randomness".
    #[serde(default)]
    pub reference_label: Option<String>,
}

impl EnvelopeChartData {
    /// The chart's data of a finished run.
    pub fn from_result(r: &EnvelopeResult) -> EnvelopeChartData {
        EnvelopeChartData {
            function: r.function,
            r: r.r.clone(),
            observed: r.observed.clone(),
            theoretical: r.theoretical.clone(),
            pointwise_lo: r.pointwise_lo.clone(),
            pointwise_hi: r.pointwise_hi.clone(),
            global_lo: r.global_lo.clone(),
            global_hi: r.global_hi.clone(),
            alpha: r.alpha,
            y_label: None,
            reference_label: None,
        }
    }
}

/// What the y axis shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum View {
    /// L(r) − r or K(r) − πr², so CSR is the line at 0 (other functions as they are).
    #[default]
    Centred,
    /// The function itself.
    Function,
}

/// Distance unit of the axes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Units {
    /// km when the largest distance is 5 km or more, else m.
    #[default]
    Auto,
    M,
    Km,
}

/// Which band is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Band {
    /// The global band: the test.
    #[default]
    Global,
    /// The pointwise band: not a test.
    Pointwise,
}

/// How to draw the chart.
#[derive(Debug, Clone, Copy, Default, PartialEq, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EnvelopeChartOptions {
    pub view: View,
    pub units: Units,
    pub band: Band,
    /// Device pixels per CSS pixel ([`PixelScale`]).
    pub scale: Option<f64>,
}

/// What was drawn, for the page's caption and tests.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Drawn {
    pub x_label: String,
    pub y_label: String,
    pub units: &'static str,
    pub band_label: String,
}

/// Draws `d` on `area`. Returns the labels used.
///
/// Fails with [`PlotError::Data`] when the curves differ in length from `r`,
/// there are fewer than two distances, no positive distance or no finite
/// value to draw.
pub fn draw_envelope_chart<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    d: &EnvelopeChartData,
    o: &EnvelopeChartOptions,
) -> Result<Drawn, PlotError> {
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
            return Err(PlotError::Data(format!(
                "the result is incomplete: {name} has {} values for {n} distances",
                v.len()
            )));
        }
    }
    if n < 2 {
        return Err(PlotError::Data(
            "the result has fewer than two distances".into(),
        ));
    }
    let r_last =
        d.r.iter()
            .copied()
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max);
    if r_last <= 0.0 {
        return Err(PlotError::Data("the distances are not positive".into()));
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
    let y_label = match &d.y_label {
        Some(l) => l.replace("{unit}", unit),
        None => y_label,
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
        return Err(PlotError::Data("no finite values to draw".into()));
    }
    let pad = ((ymax - ymin) * 0.06).max(ymax.abs().max(1.0) * 1e-9);
    let xmax = r_last * s;

    let ink = RGBColor(34, 34, 34);
    let band_fill = match o.band {
        Band::Global => RGBColor(176, 208, 226),
        Band::Pointwise => RGBColor(206, 200, 182),
    };
    let obs_colour = RGBColor(176, 58, 18);
    let sc = PixelScale::new(o.scale);
    let (px, pt, pf) = (|v| sc.px(v), |v| sc.pt(v), |v| sc.font(v));
    area.fill(&WHITE).map_err(draw_err)?;
    // Legend in its own strip above the plot, so it never hides a curve;
    // items that would run past the right edge go to a new row.
    let font = ("sans-serif", pf(13.0)).into_font().color(&ink);
    let items: [(&str, u8); 3] = [
        ("observed", 0),
        (
            d.reference_label
                .as_deref()
                .unwrap_or("complete spatial randomness"),
            1,
        ),
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
    // Room for the widest tick label ("−3 000 000" for a D(r) in m²) beside
    // the axis title, so the two never overlap.
    let widest = [ymin - pad, ymax + pad]
        .iter()
        .map(|v| tick(*v).chars().count())
        .max()
        .unwrap_or(0) as u32;
    let mut chart = ChartBuilder::on(&plot)
        .margin(pt(12))
        .x_label_area_size(pt(44))
        .y_label_area_size(pt(72.max(34 + 7 * widest)))
        .build_cartesian_2d(0.0..xmax, (ymin - pad)..(ymax + pad))
        .map_err(draw_err)?;
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
        .map_err(draw_err)?;
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
            .map_err(draw_err)?;
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
            .map_err(draw_err)?;
    }
    for seg in line(&obs) {
        chart
            .draw_series(LineSeries::new(seg, obs_colour.stroke_width(pt(2))))
            .map_err(draw_err)?;
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
        .map_err(draw_err)?;
        legend
            .draw(&Text::new(
                text.to_string(),
                (x + px(26), y - px(7)),
                font.clone(),
            ))
            .map_err(draw_err)?;
    }
    area.present().map_err(draw_err)?;
    Ok(Drawn {
        x_label,
        y_label,
        units: unit,
        band_label,
    })
}
