//! How is it drawn? Charts as functions of plain result data, generic over a
//! plotters `DrawingBackend`, so they render to a canvas in the page
//! (plotters-canvas, on the page's main thread) and to SVG in native tests.
//!
//! * [`envelope`]: Monte Carlo envelope chart of a distance function.
//! * [`kdistance`]: sorted k-distance curve for choosing DBSCAN's eps.
//! * [`stgrid`]: shaded grid of the space–time K function's residuals.
//! * [`timeline`]: events per day, week or month, window shares lighter.
//!
//! Every chart takes a [`PixelScale`]: on a canvas with more device pixels
//! than CSS pixels, text, lines and margins grow by that factor, so the chart
//! looks the same, only sharper.

pub mod envelope;
pub mod kdistance;
pub mod stgrid;
pub mod timeline;

pub use envelope::{
    draw_envelope_chart, Band, Drawn, EnvelopeChartData, EnvelopeChartOptions, Units, View,
};
pub use kdistance::{draw_k_distance_chart, KDistanceChartData};
pub use stgrid::{draw_space_time_grid, SpaceTimeGridData};
pub use timeline::{draw_timeline_chart, TimelineChartData};

use std::fmt;

/// Why a chart could not be drawn.
#[derive(Debug, Clone, PartialEq)]
pub enum PlotError {
    /// The data cannot make a chart (empty, incomplete, not finite).
    Data(String),
    /// The drawing backend failed.
    Draw(String),
}

impl fmt::Display for PlotError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PlotError::Data(s) | PlotError::Draw(s) => f.write_str(s),
        }
    }
}

impl std::error::Error for PlotError {}

pub(crate) fn draw_err<E: fmt::Debug>(e: E) -> PlotError {
    PlotError::Draw(format!("{e:?}"))
}

/// Device pixels per CSS pixel for a chart drawn on a canvas with that
/// many more pixels (1 to 4; 1 when absent or not finite).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PixelScale(f64);

impl PixelScale {
    pub fn new(scale: Option<f64>) -> PixelScale {
        PixelScale(
            scale
                .filter(|v| v.is_finite())
                .unwrap_or(1.0)
                .clamp(1.0, 4.0),
        )
    }
    /// The factor, 1 to 4.
    pub fn factor(self) -> f64 {
        self.0
    }
    /// A position or offset in pixels.
    pub fn px(self, v: i32) -> i32 {
        (v as f64 * self.0).round() as i32
    }
    /// A size or width in pixels.
    pub fn pt(self, v: u32) -> u32 {
        (v as f64 * self.0).round() as u32
    }
    /// A font size.
    pub fn font(self, v: f64) -> f64 {
        v * self.0
    }
}

/// Short number for axis ticks.
pub(crate) fn tick(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e9).contains(&a) {
        format!("{v:.1e}")
    } else if a >= 10_000.0 {
        // Thousands grouped by a narrow space, never a comma or point
        // (which read as decimals in half the world's locales).
        let digits = format!("{:.0}", a);
        let mut out = String::new();
        for (i, c) in digits.chars().enumerate() {
            if i > 0 && (digits.len() - i) % 3 == 0 {
                out.push('\u{202f}');
            }
            out.push(c);
        }
        if v < 0.0 {
            format!("-{out}")
        } else {
            out
        }
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

/// A tick label for a count of events: whole numbers, thousands as "k"
/// from 10,000 on (so a long axis keeps its last label inside the chart).
pub(crate) fn count_tick(v: f64) -> String {
    if v.abs() >= 10_000.0 {
        let s = format!("{:.1}", v / 1000.0);
        format!("{}k", s.trim_end_matches('0').trim_end_matches('.'))
    } else {
        format!("{v:.0}")
    }
}

/// Runs of consecutive indices where `ok` holds, as half-open ranges.
pub(crate) fn runs(ok: &[bool]) -> Vec<(usize, usize)> {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pixel_scale_clamps_and_multiplies() {
        assert_eq!(PixelScale::new(None).factor(), 1.0);
        assert_eq!(PixelScale::new(Some(f64::NAN)).factor(), 1.0);
        assert_eq!(PixelScale::new(Some(0.5)).factor(), 1.0);
        assert_eq!(PixelScale::new(Some(9.0)).factor(), 4.0);
        let s = PixelScale::new(Some(2.0));
        assert_eq!((s.px(7), s.pt(5), s.font(13.0)), (14, 10, 26.0));
    }

    #[test]
    fn ticks_are_short() {
        assert_eq!(tick(0.0), "0");
        assert_eq!(tick(1500.0), "1500");
        assert_eq!(tick(2.50), "2.5");
        assert_eq!(tick(0.0125), "0.0125");
        assert_eq!(tick(2.5e7), "25\u{202f}000\u{202f}000");
        assert_eq!(tick(-800_000.0), "-800\u{202f}000");
        assert_eq!(tick(10_000.0), "10\u{202f}000");
        assert_eq!(tick(2.5e9), "2.5e9");
    }

    #[test]
    fn count_ticks_use_k_from_ten_thousand() {
        assert_eq!(count_tick(0.0), "0");
        assert_eq!(count_tick(9000.0), "9000");
        assert_eq!(count_tick(20_000.0), "20k");
        assert_eq!(count_tick(200_000.0), "200k");
        assert_eq!(count_tick(12_500.0), "12.5k");
    }

    #[test]
    fn runs_split_at_gaps() {
        assert_eq!(
            runs(&[true, true, false, true, false, false, true]),
            vec![(0, 2), (3, 4), (6, 7)]
        );
        assert!(runs(&[false, false]).is_empty());
    }
}
