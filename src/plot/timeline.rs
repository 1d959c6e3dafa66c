//! The time line chart: events per day, week or month as bars (an
//! epidemic curve), the shares of events known only within a window
//! stacked as a lighter part of each bar, and the range the map shows as a
//! shaded band.
//!
//! Generic over any plotters `DrawingBackend` (canvas in the page, SVG in tests).

use super::{draw_err, PixelScale, PlotError};
use crate::input::time::format_days;
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Deserialize;

/// Data for [`draw_timeline_chart`]: the answer of
/// [`crate::spacetime::timeline::timeline`] (its `edges`, `whole` and
/// `window_share`) plus the range the map shows and the scale.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct TimelineChartData {
    pub edges: Vec<f64>,
    pub whole: Vec<f64>,
    pub window_share: Vec<f64>,
    /// The range shown on the map (days); drawn as a band when set.
    pub from: Option<f64>,
    pub to: Option<f64>,
    /// Device pixels per CSS pixel ([`PixelScale`]).
    pub scale: Option<f64>,
}

/// Bar colours of our own: a deep green for events with one known time,
/// a pale tint of it for window shares, amber for the range on the map.
const WHOLE: RGBColor = RGBColor(38, 98, 84);
const WINDOW: RGBColor = RGBColor(152, 196, 182);
const RANGE: RGBColor = RGBColor(214, 150, 28);

/// Draws the time line on `root`. [`PlotError::Data`] when the bins and
/// counts do not fit together or are not finite.
pub fn draw_timeline_chart<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    d: &TimelineChartData,
) -> Result<(), PlotError> {
    let m = d.whole.len();
    if m == 0 || d.edges.len() != m + 1 || d.window_share.len() != m {
        return Err(PlotError::Data(
            "the time line needs one more bin edge than counts".into(),
        ));
    }
    if d.edges
        .iter()
        .chain(&d.whole)
        .chain(&d.window_share)
        .any(|v| !v.is_finite())
        || d.edges.windows(2).any(|w| w[1] <= w[0])
    {
        return Err(PlotError::Data(
            "the time line's bins and counts must be finite, bins increasing".into(),
        ));
    }
    root.fill(&WHITE).map_err(draw_err)?;
    let sc = PixelScale::new(d.scale);
    let (px, pt, pf) = (|v| sc.px(v), |v| sc.pt(v), |v| sc.font(v));
    let ymax = d
        .whole
        .iter()
        .zip(&d.window_share)
        .map(|(a, b)| a + b)
        .fold(0.0f64, f64::max);
    let ymax = if ymax > 0.0 { ymax * 1.08 } else { 1.0 };
    let (x0, x1) = (d.edges[0], d.edges[m]);
    let mut chart = ChartBuilder::on(root)
        .margin(pt(8))
        .margin_right(pt(22))
        .x_label_area_size(pt(38))
        .y_label_area_size(pt(52))
        .build_cartesian_2d(x0..x1, 0f64..ymax)
        .map_err(draw_err)?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .bold_line_style(RGBColor(0, 0, 0).mix(0.15).stroke_width(pt(1)))
        .light_line_style(RGBColor(238, 240, 236).stroke_width(pt(1)))
        .axis_style(RGBColor(0, 0, 0).stroke_width(pt(1)))
        .set_all_tick_mark_size(pt(5))
        .x_labels(6)
        .x_desc("date (UTC)")
        .y_desc("events")
        .x_label_formatter(&|v| format_days(*v, false))
        .y_label_formatter(&|v| super::count_tick(*v))
        .label_style(("sans-serif", pf(12.0)))
        .axis_desc_style(("sans-serif", pf(13.0)))
        .draw()
        .map_err(draw_err)?;
    // The range on the map, under the bars.
    if let (Some(a), Some(b)) = (d.from, d.to) {
        if a.is_finite() && b.is_finite() && b > a {
            let (a, b) = (a.max(x0), b.min(x1));
            if b > a {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(a, 0.0), (b, ymax)],
                        RANGE.mix(0.16).filled(),
                    )))
                    .map_err(draw_err)?
                    .label("range shown on the map")
                    .legend(move |(x, y)| {
                        Rectangle::new(
                            [(x, y - px(5)), (x + px(14), y + px(5))],
                            RANGE.mix(0.35).filled(),
                        )
                    });
                for v in [a, b] {
                    chart
                        .draw_series(std::iter::once(PathElement::new(
                            vec![(v, 0.0), (v, ymax)],
                            RANGE.stroke_width(pt(2)),
                        )))
                        .map_err(draw_err)?;
                }
            }
        }
    }
    // A hair of space between bars when they are wide enough to show it.
    let gap = |k: usize| {
        let w = d.edges[k + 1] - d.edges[k];
        if (x1 - x0) / w < 150.0 {
            w * 0.06
        } else {
            0.0
        }
    };
    chart
        .draw_series((0..m).filter(|&k| d.whole[k] > 0.0).map(|k| {
            let g = gap(k);
            Rectangle::new(
                [(d.edges[k] + g, 0.0), (d.edges[k + 1] - g, d.whole[k])],
                WHOLE.filled(),
            )
        }))
        .map_err(draw_err)?
        .label("events with a known date")
        .legend(move |(x, y)| {
            Rectangle::new([(x, y - px(5)), (x + px(14), y + px(5))], WHOLE.filled())
        });
    if d.window_share.iter().any(|&v| v > 0.0) {
        chart
            .draw_series((0..m).filter(|&k| d.window_share[k] > 0.0).map(|k| {
                let g = gap(k);
                Rectangle::new(
                    [
                        (d.edges[k] + g, d.whole[k]),
                        (d.edges[k + 1] - g, d.whole[k] + d.window_share[k]),
                    ],
                    WINDOW.filled(),
                )
            }))
            .map_err(draw_err)?
            .label("shares of events known only within a from–to window")
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - px(5)), (x + px(14), y + px(5))], WINDOW.filled())
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

#[cfg(test)]
mod tests {
    use super::*;

    fn svg(d: &TimelineChartData) -> Result<String, PlotError> {
        let mut out = String::new();
        {
            let root = SVGBackend::with_string(&mut out, (640, 360)).into_drawing_area();
            draw_timeline_chart(&root, d)?;
        }
        Ok(out)
    }

    #[test]
    fn draws_bars_window_shares_and_range() {
        let d = TimelineChartData {
            edges: vec![20151.0, 20152.0, 20153.0, 20154.0],
            whole: vec![2.0, 0.0, 1.0],
            window_share: vec![0.5, 0.5, 0.0],
            from: Some(20152.0),
            to: Some(20153.0),
            scale: None,
        };
        let s = svg(&d).unwrap();
        assert!(s.contains("2025-03-04"), "date labels");
        assert!(s.contains("events with a known date"));
        assert!(s.contains("from–to window"));
        assert!(s.contains("range shown on the map"));
        // Fill colours of the two kinds of bar are there.
        assert!(
            s.contains("#266254") && s.contains("#98C4B6"),
            "bar colours"
        );
        // Without windows and range: no legend entries for them.
        let plain = TimelineChartData {
            window_share: vec![0.0; 3],
            from: None,
            to: None,
            ..d.clone()
        };
        let s = svg(&plain).unwrap();
        assert!(!s.contains("from–to window") && !s.contains("range shown"));
    }

    #[test]
    fn refuses_mismatched_or_bad_data() {
        let bad = TimelineChartData {
            edges: vec![0.0, 1.0],
            whole: vec![1.0, 2.0],
            window_share: vec![0.0, 0.0],
            ..Default::default()
        };
        assert!(matches!(svg(&bad), Err(PlotError::Data(_))));
        let nan = TimelineChartData {
            edges: vec![0.0, 1.0],
            whole: vec![f64::NAN],
            window_share: vec![0.0],
            ..Default::default()
        };
        assert!(matches!(svg(&nan), Err(PlotError::Data(_))));
        assert!(matches!(
            svg(&TimelineChartData::default()),
            Err(PlotError::Data(_))
        ));
    }
}
