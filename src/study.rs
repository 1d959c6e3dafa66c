//! What exactly is being analysed?
//!
//! A [`Study`] joins the events, the optional controls and the study area in
//! one planar metre grid, after dropping events outside the study area (they
//! become rejections with reason "outside the study area") and counting
//! coincident points. Every analysis takes a `&Study` or its parts, so none
//! has to re-check coordinates.

use crate::error::InputError;
use crate::input::{RawArea, RawLayer, Rejection};
use crate::projection::Projection;
use crate::window::Window;
use serde::{Deserialize, Serialize};

/// What to use as the study area when no polygon file was given.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AreaFallback {
    #[default]
    ConvexHull,
    BoundingBox,
}

/// A validated set of points in metres: finite coordinates, inside the window.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Pattern {
    x: Vec<f64>,
    y: Vec<f64>,
    time: Option<Vec<f64>>,
    category: Option<Vec<u32>>,
    category_names: Vec<String>,
    weight: Option<Vec<f64>>,
    row: Vec<u64>,
}

impl Pattern {
    /// A bare pattern from coordinates in metres (rows numbered 1..=n).
    /// Returns `None` if lengths differ or a coordinate is not finite.
    pub fn from_xy(x: Vec<f64>, y: Vec<f64>) -> Option<Pattern> {
        if x.len() != y.len() || x.iter().chain(y.iter()).any(|v| !v.is_finite()) {
            return None;
        }
        let row = (1..=x.len() as u64).collect();
        Some(Pattern {
            x,
            y,
            row,
            ..Default::default()
        })
    }
    pub fn len(&self) -> usize {
        self.x.len()
    }
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }
    pub fn x(&self) -> &[f64] {
        &self.x
    }
    pub fn y(&self) -> &[f64] {
        &self.y
    }
    /// Days since 1970-01-01T00:00Z.
    pub fn time(&self) -> Option<&[f64]> {
        self.time.as_deref()
    }
    pub fn category(&self) -> Option<&[u32]> {
        self.category.as_deref()
    }
    pub fn category_names(&self) -> &[String] {
        &self.category_names
    }
    pub fn weight(&self) -> Option<&[f64]> {
        self.weight.as_deref()
    }
    /// Source row of each point.
    pub fn row(&self) -> &[u64] {
        &self.row
    }
}

/// Coincident points: several events at exactly the same coordinates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct Coincidence {
    /// Distinct locations holding two or more events.
    pub locations: usize,
    /// Events at such locations (all of them, not just the extra ones).
    pub events: usize,
    /// The most events at one location.
    pub largest: usize,
}

/// Events, controls and study area in one metre grid.
#[derive(Debug, Clone)]
pub struct Study {
    pub projection: Projection,
    pub window: Window,
    pub events: Pattern,
    pub controls: Option<Pattern>,
    /// Rejected event rows, including those outside the study area.
    pub event_rejections: Vec<Rejection>,
    pub events_rows_read: u64,
    pub control_rejections: Vec<Rejection>,
    pub controls_rows_read: u64,
    pub coincident: Coincidence,
    /// Plain-words warnings for the page (e.g. window drawn around the points).
    pub warnings: Vec<String>,
}

impl Study {
    /// Projects and validates the layers together.
    pub fn build(
        events: &RawLayer,
        area: Option<&RawArea>,
        controls: Option<&RawLayer>,
        fallback: AreaFallback,
    ) -> Result<Study, InputError> {
        let _ = (events, area, controls, fallback);
        todo!("study::build")
    }
}
