//! GeoJSON: point layers (FeatureCollection of Point / MultiPoint) and study areas.

use super::{CoordKind, RawArea, RawLayer, ReadOptions};
use crate::error::InputError;

/// Reads a FeatureCollection (or single Feature / geometry) of points.
pub fn read_points(text: &str, opts: &ReadOptions) -> Result<RawLayer, InputError> {
    let _ = (text, opts);
    todo!("input::geojson::read_points")
}

/// Reads Polygon / MultiPolygon geometries (bare, Feature or FeatureCollection).
pub fn read_area(text: &str, coords: Option<CoordKind>) -> Result<RawArea, InputError> {
    let _ = (text, coords);
    todo!("input::geojson::read_area")
}
