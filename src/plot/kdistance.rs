//! The sorted k-distance chart for choosing DBSCAN's eps (Ester et al. 1996):
//! each event's distance to its (min_samples − 1)-th nearest event, largest
//! first, with the suggested knee and the eps in use.
//!
//! Generic over any plotters `DrawingBackend` (canvas in the page, SVG in tests).

use super::{draw_err, PixelScale, PlotError};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Deserialize;

/// Data for [`draw_k_distance_chart`]: the answer of
/// [`crate::clusters::k_distance_plot`] plus the eps in use and the scale.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct KDistanceChartData {
    pub min_samples: usize,
    /// Largest first, metres.
    pub sorted_desc_m: Vec<f64>,
    pub knee_index: Option<usize>,
    pub knee_eps_m: Option<f64>,
    /// The eps currently chosen, metres (drawn as a line).
    pub eps_m: Option<f64>,
    /// Device pixels per CSS pixel ([`PixelScale`]).
    pub scale: Option<f64>,
}

/// Draws the sorted k-distance curve on `root`. Fails with
/// [`PlotError::Data`] when there are no k-distances.
pub fn draw_k_distance_chart<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    d: &KDistanceChartData,
) -> Result<(), PlotError> {
    let n = d.sorted_desc_m.len();
    if n == 0 {
        return Err(PlotError::Data("no k-distances to draw".into()));
    }
    root.fill(&WHITE).map_err(draw_err)?;
    let ymax = d
        .sorted_desc_m
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max)
        .max(d.eps_m.unwrap_or(0.0))
        * 1.05;
    let ymax = if ymax > 0.0 { ymax } else { 1.0 };
    let sc = PixelScale::new(d.scale);
    let (px, pt, pf) = (|v| sc.px(v), |v| sc.pt(v), |v| sc.font(v));
    let mut chart = ChartBuilder::on(root)
        .margin(pt(8))
        .margin_right(pt(22))
        .x_label_area_size(pt(38))
        .y_label_area_size(pt(56))
        .build_cartesian_2d(0f64..(n as f64), 0f64..ymax)
        .map_err(draw_err)?;
    let nth = if d.min_samples > 1 {
        format!("distance to {}th nearest event (m)", d.min_samples - 1)
    } else {
        "distance (m)".to_string()
    };
    chart
        .configure_mesh()
        .bold_line_style(RGBColor(0, 0, 0).mix(0.2).stroke_width(pt(1)))
        .light_line_style(RGBColor(236, 238, 234).stroke_width(pt(1)))
        .axis_style(RGBColor(0, 0, 0).stroke_width(pt(1)))
        .set_all_tick_mark_size(pt(5))
        .x_desc("events, sorted from the most isolated")
        .y_desc(nth)
        .x_label_formatter(&|v| super::count_tick(*v))
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style(("sans-serif", pf(12.0)))
        .axis_desc_style(("sans-serif", pf(13.0)))
        .draw()
        .map_err(draw_err)?;
    // At most ~2 000 vertices: the curve is monotone, so a stride keeps its shape.
    let stride = (n / 2000).max(1);
    let line = RGBColor(30, 72, 110);
    chart
        .draw_series(LineSeries::new(
            (0..n)
                .step_by(stride)
                .chain(std::iter::once(n - 1))
                .filter_map(|i| d.sorted_desc_m.get(i).map(|&v| (i as f64, v))),
            line.stroke_width(pt(2)),
        ))
        .map_err(draw_err)?;
    if let (Some(i), Some(v)) = (d.knee_index, d.knee_eps_m) {
        let knee = RGBColor(176, 74, 20);
        chart
            .draw_series(std::iter::once(Circle::new(
                (i as f64, v),
                pt(6),
                knee.stroke_width(pt(2)),
            )))
            .map_err(draw_err)?
            .label(format!("suggested eps {v:.0} m"))
            .legend(move |(x, y)| Circle::new((x + px(8), y), pt(5), knee.stroke_width(pt(2))));
    }
    if let Some(eps) = d.eps_m.filter(|v| v.is_finite() && *v > 0.0) {
        let c = RGBColor(90, 90, 90);
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(0.0, eps), (n as f64, eps)],
                c.stroke_width(pt(1)),
            )))
            .map_err(draw_err)?
            .label(format!("eps in use {eps:.0} m"))
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + px(16), y)], c.stroke_width(pt(1)))
            });
    }
    chart
        .configure_series_labels()
        .margin(pt(10))
        .legend_area_size(pt(30))
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(180, 180, 180).stroke_width(pt(1)))
        .label_font(("sans-serif", pf(12.0)))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(draw_err)?;
    root.present().map_err(draw_err)?;
    Ok(())
}
