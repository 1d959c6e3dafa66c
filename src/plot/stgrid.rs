//! The shaded grid of the space–time K function: one cell per distance
//! (horizontal, metres) and time difference (vertical, days), shaded by
//! the standardised residual R = (D̂ − permutation mean)/SD, written in the
//! cell on grids of up to 15 × 15. Cells where the data lie above the
//! permutations' pointwise envelope get a dot.
//!
//! Our own design: a diverging scale from a slate blue (fewer close pairs
//! than chance) through white to a brick red (more), clipped at |R| = 3,
//! so a cell's shade reads the same whatever the data.
//!
//! Generic over any plotters `DrawingBackend` (canvas in the page, SVG in tests).

use super::{draw_err, PixelScale, PlotError};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::Deserialize;

/// Data for [`draw_space_time_grid`]: the fields of a space–time K result
/// it needs, and the scale.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SpaceTimeGridData {
    /// Grid distances (m) and time differences (days), increasing.
    pub s: Vec<f64>,
    pub t: Vec<f64>,
    /// Per cell, s-major; `None` where R is not defined.
    pub residual: Vec<Option<f64>>,
    pub d: Vec<f64>,
    pub d_hi: Vec<f64>,
    /// Device pixels per CSS pixel ([`PixelScale`]).
    pub scale: Option<f64>,
}

/// Where |R| is clipped on the colour scale.
pub const R_CLIP: f64 = 3.0;

/// Grids with at most this many steps on each axis get the residual
/// written in each cell.
pub const LABEL_MAX_STEPS: usize = 15;

/// A residual as written in its cell: one decimal below 10, none above.
pub fn residual_label(r: f64) -> String {
    if r.abs() < 10.0 {
        format!("{r:.1}")
    } else {
        format!("{r:.0}")
    }
}

/// The shade of a residual (white at 0).
pub fn residual_colour(r: f64) -> RGBColor {
    let f = (r / R_CLIP).clamp(-1.0, 1.0);
    let (end, g) = if f >= 0.0 {
        ((168.0, 52.0, 36.0), f)
    } else {
        ((52.0, 86.0, 140.0), -f)
    };
    let mix = |e: f64| (255.0 + (e - 255.0) * g).round() as u8;
    RGBColor(mix(end.0), mix(end.1), mix(end.2))
}

/// Draws the grid on `root`. Fails with [`PlotError::Data`] when the sizes
/// do not agree or the grid is empty.
pub fn draw_space_time_grid<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    d: &SpaceTimeGridData,
) -> Result<(), PlotError> {
    let (ns, nt) = (d.s.len(), d.t.len());
    let cells = ns * nt;
    if cells == 0 || d.residual.len() != cells {
        return Err(PlotError::Data(
            "the grid is empty or its sizes do not agree".into(),
        ));
    }
    let (smax, tmax) = (d.s[ns - 1], d.t[nt - 1]);
    if !(smax > 0.0 && tmax > 0.0) {
        return Err(PlotError::Data(
            "the grid's largest distance and time must be positive".into(),
        ));
    }
    root.fill(&WHITE).map_err(draw_err)?;
    let sc = PixelScale::new(d.scale);
    let (pt, pf) = (|v| sc.pt(v), |v| sc.font(v));
    let (main, key) = root.split_horizontally(root.dim_in_pixel().0 as i32 - sc.px(90));
    let mut chart = ChartBuilder::on(&main)
        .margin(pt(10))
        .x_label_area_size(pt(40))
        .y_label_area_size(pt(56))
        .build_cartesian_2d(0f64..smax, 0f64..tmax)
        .map_err(draw_err)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .axis_style(RGBColor(0, 0, 0).stroke_width(pt(1)))
        .set_all_tick_mark_size(pt(5))
        .x_desc("distance between events (m)")
        .y_desc("time between events (days)")
        .x_label_formatter(&|v| super::tick(*v))
        .y_label_formatter(&|v| super::tick(*v))
        .label_style(("sans-serif", pf(12.0)))
        .axis_desc_style(("sans-serif", pf(13.0)))
        .draw()
        .map_err(draw_err)?;
    let edge = |v: &[f64], k: usize| if k == 0 { 0.0 } else { v[k - 1] };
    let grey = RGBColor(215, 215, 215);
    chart
        .draw_series((0..cells).map(|c| {
            let (a, b) = (c / nt, c % nt);
            let fill = match d.residual[c] {
                Some(r) if r.is_finite() => residual_colour(r),
                _ => grey,
            };
            Rectangle::new(
                [(edge(&d.s, a), edge(&d.t, b)), (d.s[a], d.t[b])],
                fill.filled(),
            )
        }))
        .map_err(draw_err)?;
    // Thin white lines between the cells.
    let line = WHITE.stroke_width(pt(1));
    chart
        .draw_series((0..ns).map(|a| PathElement::new(vec![(d.s[a], 0.0), (d.s[a], tmax)], line)))
        .map_err(draw_err)?;
    chart
        .draw_series((0..nt).map(|b| PathElement::new(vec![(0.0, d.t[b]), (smax, d.t[b])], line)))
        .map_err(draw_err)?;
    // Each cell's residual as a number when the cells are large enough (a
    // shade beyond ±3 does not say how far beyond).
    let labels = ns <= LABEL_MAX_STEPS && nt <= LABEL_MAX_STEPS;
    if labels {
        let (dark, light) = (RGBColor(25, 25, 25), WHITE);
        let centre = Pos::new(HPos::Center, VPos::Center);
        let on_light = TextStyle::from(("sans-serif", pf(11.0)).into_font())
            .color(&dark)
            .pos(centre);
        let on_dark = TextStyle::from(("sans-serif", pf(11.0)).into_font())
            .color(&light)
            .pos(centre);
        chart
            .draw_series((0..cells).filter_map(|c| {
                let r = d.residual[c].filter(|v| v.is_finite())?;
                let (a, b) = (c / nt, c % nt);
                let cx = 0.5 * (edge(&d.s, a) + d.s[a]);
                let cy = 0.5 * (edge(&d.t, b) + d.t[b]);
                let ink = if r.abs() > 0.6 * R_CLIP {
                    &on_dark
                } else {
                    &on_light
                };
                Some(Text::new(residual_label(r), (cx, cy), ink.clone()))
            }))
            .map_err(draw_err)?;
    }
    if d.d.len() == cells && d.d_hi.len() == cells {
        let dot = RGBColor(20, 20, 20);
        chart
            .draw_series((0..cells).filter(|&c| d.d[c] > d.d_hi[c]).map(|c| {
                let (a, b) = (c / nt, c % nt);
                // Centred without labels; near the cell's top left corner with.
                let (fx, fy) = if labels { (0.15, 0.8) } else { (0.5, 0.5) };
                let cx = edge(&d.s, a) + fx * (d.s[a] - edge(&d.s, a));
                let cy = edge(&d.t, b) + fy * (d.t[b] - edge(&d.t, b));
                Circle::new((cx, cy), pt(3), dot.filled())
            }))
            .map_err(draw_err)?;
    }
    // The key: a vertical strip from −3 to 3.
    let mut k = ChartBuilder::on(&key)
        .margin_top(pt(10))
        .margin_bottom(pt(40))
        .margin_right(pt(40))
        .y_label_area_size(pt(0))
        .right_y_label_area_size(pt(30))
        .build_cartesian_2d(0f64..1f64, -R_CLIP..R_CLIP)
        .map_err(draw_err)?
        .set_secondary_coord(0f64..1f64, -R_CLIP..R_CLIP);
    k.configure_secondary_axes()
        .y_labels(7)
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style(("sans-serif", pf(11.0)))
        .axis_style(RGBColor(0, 0, 0).stroke_width(pt(1)))
        .draw()
        .map_err(draw_err)?;
    let steps = 60;
    k.draw_series((0..steps).map(|i| {
        let lo = -R_CLIP + 2.0 * R_CLIP * i as f64 / steps as f64;
        let hi = lo + 2.0 * R_CLIP / steps as f64;
        Rectangle::new(
            [(0.0, lo), (1.0, hi)],
            residual_colour(0.5 * (lo + hi)).filled(),
        )
    }))
    .map_err(draw_err)?;
    root.present().map_err(draw_err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn colours_run_from_blue_through_white_to_red() {
        assert_eq!(residual_colour(0.0), RGBColor(255, 255, 255));
        assert_eq!(residual_colour(3.0), RGBColor(168, 52, 36));
        assert_eq!(residual_colour(10.0), RGBColor(168, 52, 36));
        assert_eq!(residual_colour(-3.0), RGBColor(52, 86, 140));
    }

    #[test]
    fn draws_svg_and_refuses_mismatched_sizes() {
        let d = SpaceTimeGridData {
            s: vec![100.0, 200.0],
            t: vec![5.0, 10.0, 15.0],
            residual: vec![Some(2.5), Some(0.1), None, Some(-1.0), Some(0.0), Some(3.4)],
            d: vec![1.0; 6],
            d_hi: vec![0.5, 2.0, 2.0, 2.0, 2.0, 2.0],
            scale: None,
        };
        let mut svg = String::new();
        {
            let root = SVGBackend::with_string(&mut svg, (600, 400)).into_drawing_area();
            draw_space_time_grid(&root, &d).unwrap();
        }
        assert!(svg.contains("distance between events (m)"));
        // The cell with R = 2.5 is shaded red-ish, the one above its
        // envelope has a dot.
        let c = residual_colour(2.5);
        assert!(
            svg.to_lowercase()
                .contains(&format!("#{:02x}{:02x}{:02x}", c.0, c.1, c.2)),
            "colour"
        );
        assert!(svg.contains("<circle"));
        // Labels: one decimal below 10.
        assert!(svg.contains("-1.0") && svg.contains("3.4"), "labels");
        assert_eq!(residual_label(127.4), "127");
        let bad = SpaceTimeGridData {
            residual: vec![None; 5],
            ..d
        };
        let root = SVGBackend::new("/dev/null", (10, 10)).into_drawing_area();
        assert!(matches!(
            draw_space_time_grid(&root, &bad),
            Err(PlotError::Data(_))
        ));
    }
}
