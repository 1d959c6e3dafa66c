//! How are coordinates turned into metres?
//!
//! Longitude/latitude (WGS 84) is projected with a transverse Mercator
//! centred on the data (central meridian and origin latitude at the centre of
//! the study area or events, scale 1 on the central meridian), using Krüger's
//! series as given by Karney (2011), "Transverse Mercator with an accuracy of a
//! few nanometers", J. Geodesy 85:475–485, doi:10.1007/s00190-011-0445-3.
//! Projected input is only converted from its declared unit to metres.

use crate::input::{CoordKind, LengthUnit};
use serde::Serialize;

/// A map from input coordinates to planar metres.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Projection {
    /// Transverse Mercator on WGS 84 centred at (`lon0`, `lat0`) degrees, k0 = 1,
    /// no false easting/northing: the centre maps to (0, 0).
    TransverseMercator { lon0: f64, lat0: f64 },
    /// Input already planar; multiply by the unit's length in metres.
    Planar { unit: LengthUnit },
}

impl Projection {
    /// The projection used for data whose centre is (`lon`, `lat`) in `kind` coordinates.
    pub fn for_data(kind: CoordKind, lon: f64, lat: f64) -> Projection {
        match kind {
            CoordKind::LonLat => Projection::TransverseMercator {
                lon0: lon,
                lat0: lat,
            },
            CoordKind::Planar { unit } => Projection::Planar { unit },
        }
    }

    /// Input coordinates (lon, lat in degrees, or planar units) to metres.
    pub fn forward(&self, x: f64, y: f64) -> (f64, f64) {
        let _ = (x, y);
        todo!("projection::forward")
    }

    /// Metres back to input coordinates.
    pub fn inverse(&self, e: f64, n: f64) -> (f64, f64) {
        let _ = (e, n);
        todo!("projection::inverse")
    }

    /// One plain sentence for the page and reports.
    pub fn describe(&self) -> String {
        todo!("projection::describe")
    }
}
