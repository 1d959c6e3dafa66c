//! Where could an event have fallen?
//!
//! A [`Window`] is the study area in planar metres: one or more polygons, each
//! with any number of holes (a lake, an airport). Points on the boundary count
//! as inside, for data and simulations alike.

use crate::error::InputError;
use crate::rng::Rng;
use serde::Serialize;

/// Where the study area came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WindowOrigin {
    /// Drawn from a polygon file the user gave.
    File,
    /// The convex hull of the events (biases clustering tests: warn).
    ConvexHull,
    /// The bounding box of the events (biases clustering tests: warn).
    BoundingBox,
}

/// A study area: polygons with holes, in metres.
#[derive(Debug, Clone, PartialEq)]
pub struct Window {
    // Implementation detail; see accessors.
    #[allow(dead_code)]
    polygons: Vec<Vec<Vec<[f64; 2]>>>,
    #[allow(dead_code)]
    origin: WindowOrigin,
}

impl Window {
    /// Builds a window from polygons (exterior ring first, then holes; rings
    /// need not be closed). Fails on fewer than 3 distinct vertices, zero area
    /// or non-finite coordinates.
    pub fn from_polygons(
        polygons: Vec<Vec<Vec<[f64; 2]>>>,
        origin: WindowOrigin,
    ) -> Result<Window, InputError> {
        let _ = (polygons, origin);
        todo!("window::from_polygons")
    }
    /// The bounding box of the points as a window.
    pub fn bounding_box_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let _ = (x, y);
        todo!("window::bounding_box_of")
    }
    /// The convex hull of the points as a window.
    pub fn convex_hull_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let _ = (x, y);
        todo!("window::convex_hull_of")
    }
    /// Polygons: exterior ring first, then holes; rings closed (first == last).
    pub fn polygons(&self) -> &[Vec<Vec<[f64; 2]>>] {
        &self.polygons
    }
    pub fn origin(&self) -> WindowOrigin {
        self.origin
    }
    /// Area in m², holes excluded.
    pub fn area(&self) -> f64 {
        todo!("window::area")
    }
    /// Perimeter in m, hole boundaries included.
    pub fn perimeter(&self) -> f64 {
        todo!("window::perimeter")
    }
    /// [min_x, min_y, max_x, max_y].
    pub fn bbox(&self) -> [f64; 4] {
        todo!("window::bbox")
    }
    /// Inside or on the boundary.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        let _ = (x, y);
        todo!("window::contains")
    }
    /// Distance to the nearest boundary (outer rings and holes).
    pub fn boundary_distance(&self, x: f64, y: f64) -> f64 {
        let _ = (x, y);
        todo!("window::boundary_distance")
    }
    /// All boundary edges (outer rings and holes) as segments.
    pub fn edges(&self) -> Vec<([f64; 2], [f64; 2])> {
        todo!("window::edges")
    }
    /// `n` independent uniform points in the window (binomial process).
    pub fn sample_uniform(&self, n: usize, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let _ = (n, rng);
        todo!("window::sample_uniform")
    }
}
