//! The envelope chart: observed curve, CSR curve, global band (the MAD
//! test) and the pointwise band ("pointwise — not a test").
//!
//! Generic over any plotters `DrawingBackend`: the page draws it on a
//! canvas, the tests render it to an SVG string. For L the chart shows
//! L(r) − r, so CSR is the horizontal line at 0.

use crate::distance::{EnvelopeResult, SummaryFunction};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::fmt;

/// Why a chart could not be drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotError(pub String);

impl fmt::Display for PlotError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "could not draw the chart: {}", self.0)
    }
}

impl std::error::Error for PlotError {}

fn err<E: fmt::Debug>(e: E) -> PlotError {
    PlotError(format!("{e:?}"))
}

/// Text of the axes for a result: (x label, y label).
pub fn axis_labels(res: &EnvelopeResult) -> (String, String) {
    let y = match res.function {
        SummaryFunction::L => "L(r) − r (m)".to_string(),
        SummaryFunction::K => "K(r) (m²)".to_string(),
        _ => res.label.clone(),
    };
    ("distance r (m)".to_string(), y)
}

/// Runs of consecutive indices where `ok` holds.
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

/// Draws the envelope chart of `res` on `area`.
///
/// Layers from the back: pointwise band (light grey, labelled
/// "pointwise — not a test"), global band (light blue), CSR curve (dashed),
/// observed curve (dark). Undefined values (NaN) leave gaps.
pub fn envelope_chart<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    res: &EnvelopeResult,
) -> Result<(), PlotError> {
    let shift: Vec<f64> = match res.function {
        SummaryFunction::L => res.r.clone(),
        _ => vec![0.0; res.r.len()],
    };
    let tr = |v: &[f64]| -> Vec<f64> { v.iter().zip(&shift).map(|(a, s)| a - s).collect() };
    let obs = tr(&res.observed);
    let theo = tr(&res.theoretical);
    let (plo, phi) = (tr(&res.pointwise_lo), tr(&res.pointwise_hi));
    let (glo, ghi) = (tr(&res.global_lo), tr(&res.global_hi));
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for v in [&obs, &theo, &plo, &phi, &glo, &ghi] {
        for x in v.iter().filter(|x| x.is_finite()) {
            ymin = ymin.min(*x);
            ymax = ymax.max(*x);
        }
    }
    if !ymin.is_finite() {
        return Err(PlotError("no finite values to draw".into()));
    }
    let pad = ((ymax - ymin) * 0.05).max(1e-12);
    let xmax = res.r.last().copied().unwrap_or(1.0).max(1e-12);
    let (xl, yl) = axis_labels(res);
    area.fill(&WHITE).map_err(err)?;
    let (legend, plot) = area.split_vertically(28);
    let pct = format!("global {:.0}% band (MAD test)", 100.0 * (1.0 - res.alpha));
    let mut chart = ChartBuilder::on(&plot)
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(64)
        .build_cartesian_2d(0.0..xmax, (ymin - pad)..(ymax + pad))
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc(xl)
        .y_desc(yl)
        .light_line_style(WHITE.mix(0.0))
        .draw()
        .map_err(err)?;
    let band = |lo: &[f64], hi: &[f64]| -> Vec<Vec<(f64, f64)>> {
        let ok: Vec<bool> = lo
            .iter()
            .zip(hi)
            .map(|(a, b)| a.is_finite() && b.is_finite())
            .collect();
        runs(&ok)
            .into_iter()
            .filter(|(s, e)| e > s)
            .map(|(s, e)| {
                let mut poly: Vec<(f64, f64)> = (s..e).map(|k| (res.r[k], hi[k])).collect();
                poly.extend((s..e).rev().map(|k| (res.r[k], lo[k])));
                poly
            })
            .collect()
    };
    let grey = RGBColor(120, 120, 120).mix(0.35);
    let blue = RGBColor(160, 196, 232);
    // Global band first, the narrower pointwise band on top of it.
    for poly in band(&glo, &ghi) {
        chart
            .draw_series(std::iter::once(Polygon::new(poly, blue.filled())))
            .map_err(err)?;
    }
    for poly in band(&plo, &phi) {
        chart
            .draw_series(std::iter::once(Polygon::new(poly, grey.filled())))
            .map_err(err)?;
    }
    let line = |v: &[f64]| -> Vec<Vec<(f64, f64)>> {
        let ok: Vec<bool> = v.iter().map(|a| a.is_finite()).collect();
        runs(&ok)
            .into_iter()
            .map(|(s, e)| (s..e).map(|k| (res.r[k], v[k])).collect())
            .collect()
    };
    for seg in line(&theo) {
        chart
            .draw_series(DashedLineSeries::new(seg, 6, 4, BLACK.stroke_width(1)))
            .map_err(err)?;
    }
    let dark = RGBColor(150, 30, 30);
    for seg in line(&obs) {
        chart
            .draw_series(LineSeries::new(seg, dark.stroke_width(2)))
            .map_err(err)?;
    }
    // Legend in its own strip above the plot, so it never hides a curve.
    let font = ("sans-serif", 13).into_font().color(&BLACK);
    let mut x = 70;
    let y = 14;
    let items = [
        ("observed", 0u8),
        ("CSR", 1),
        (pct.as_str(), 2),
        ("pointwise — not a test", 3),
    ];
    for (text, kind) in items {
        let swatch = [(x, y - 6), (x + 18, y + 6)];
        match kind {
            0 => legend.draw(&PathElement::new(
                vec![(x, y), (x + 18, y)],
                dark.stroke_width(2),
            )),
            1 => legend
                .draw(&PathElement::new(vec![(x, y), (x + 6, y)], BLACK))
                .and_then(|_| {
                    legend.draw(&PathElement::new(vec![(x + 11, y), (x + 17, y)], BLACK))
                }),
            2 => legend.draw(&Rectangle::new(swatch, blue.filled())),
            _ => legend
                .draw(&Rectangle::new(swatch, blue.filled()))
                .and_then(|_| legend.draw(&Rectangle::new(swatch, grey.filled()))),
        }
        .map_err(err)?;
        legend
            .draw(&Text::new(text.to_string(), (x + 24, y - 7), font.clone()))
            .map_err(err)?;
        x += 44 + (text.chars().count() as f64 * 6.3) as i32;
    }
    area.present().map_err(err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::{EnvelopeJob, EnvelopeParams};
    use crate::window::Window;

    fn result(function: SummaryFunction) -> EnvelopeResult {
        let w = Window::rectangle(0.0, 0.0, 100.0, 100.0).unwrap();
        let p = crate::distance::simulate_csr(&w, 40, 5).unwrap();
        let params = EnvelopeParams {
            function,
            n_sim: 19,
            seed: 2,
            ..Default::default()
        };
        EnvelopeJob::new(&p, &w, &params).unwrap().finish()
    }

    /// Renders to SVG and checks the axis labels and legend appear.
    #[test]
    fn test_envelope_chart_svg_has_labels() {
        for f in [
            SummaryFunction::L,
            SummaryFunction::J,
            SummaryFunction::PairCorrelation,
        ] {
            let res = result(f);
            let mut svg = String::new();
            {
                let root = SVGBackend::with_string(&mut svg, (640, 400)).into_drawing_area();
                envelope_chart(&root, &res).unwrap();
            }
            let (xl, yl) = axis_labels(&res);
            assert!(svg.contains(&xl), "{f:?}: x label missing");
            assert!(svg.contains(&yl), "{f:?}: y label missing");
            assert!(svg.contains("pointwise — not a test"));
            assert!(svg.contains("observed"));
            assert!(svg.contains("<polygon") || svg.contains("<path"));
        }
    }
}
