//! What does it look like? Descriptive summary of a [`crate::Study`].

use crate::study::Study;
use serde::Serialize;

/// A location in metres.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Centre {
    pub x: f64,
    pub y: f64,
}

/// Placeholder until the summary lands.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    pub mean_centre: Centre,
}

impl Summary {
    /// The standard deviational ellipse as a closed ring in metres.
    pub fn ellipse_ring(&self) -> Vec<[f64; 2]> {
        todo!("summary::ellipse_ring")
    }
}

/// Summarises a study.
pub fn summarise(study: &Study) -> Summary {
    let _ = study;
    todo!("summary::summarise")
}
