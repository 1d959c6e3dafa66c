//! What the sharing tools keep between calls (one masked copy, one table
//! of counts) and the summaries they hand back: the masked copy's settings
//! and rows left out, the table with its suppression note, always with the
//! [`CAUTIONS`]. Also the counting of a study's events per grid cell or per
//! zone, with the grid origin snapped so that cell corners give nothing away.

use super::aggregate::{aggregate_grid, aggregate_zones, AggregateParams, Aggregation, Zone};
use super::kanon::{KBasis, KSummary};
use super::report::CAUTIONS;
use super::suppress::SuppressedTable;
use super::{CellShape, HexOrientation, MaskMethod, MaskedPoints, Spread, Unplaced};
use crate::error::{AnalysisError, InputError, InputErrorKind};
use crate::input::zones::RawZones;
use crate::input::CoordKind;
use crate::study::Study;
use serde::Serialize;

/// The shared results of one study: at most one masked copy (mask once) and
/// one table of counts.
#[derive(Default)]
pub struct SharingState {
    pub mask: Option<MaskState>,
    pub table: Option<TableState>,
}

/// The one masked copy.
pub struct MaskState {
    pub masked: MaskedPoints,
    pub k: Option<KInfo>,
}

/// What k-anonymity masking measured.
pub struct KInfo {
    pub basis: KBasis,
    pub target_k: usize,
    pub k: Vec<f64>,
    pub summary: Option<KSummary>,
    pub below_target: Vec<Unplaced>,
}

/// The one table of counts.
pub struct TableState {
    pub table: SuppressedTable,
    pub population_source: Option<&'static str>,
    pub zone_names: Option<Vec<String>>,
}

#[derive(Serialize)]
pub struct UnplacedRow {
    /// 0-based index into the study's events (the order of `mapLayers`).
    pub index: usize,
    /// Row of the events file (header = row 1).
    pub row: Option<u64>,
    pub reason: crate::privacy::UnplacedReason,
    pub reason_text: String,
}

#[derive(Serialize)]
pub struct MaskSummary<'a> {
    pub method: &'static str,
    pub settings: &'a MaskMethod,
    pub n_input: usize,
    pub n_masked: usize,
    pub displacement: Option<Spread>,
    pub unplaced: Vec<UnplacedRow>,
    pub notes: &'a [String],
    pub basis: Option<KBasis>,
    pub target_k: Option<usize>,
    pub k_summary: Option<KSummary>,
    pub below_target: Vec<UnplacedRow>,
    pub replaced: bool,
    pub cautions: [&'static str; 5],
}

pub fn unplaced_rows(list: &[Unplaced], study: &Study) -> Vec<UnplacedRow> {
    list.iter()
        .map(|u| UnplacedRow {
            index: u.index,
            row: study.events.row().get(u.index).copied(),
            reason: u.reason.clone(),
            reason_text: u.reason.to_string(),
        })
        .collect()
}

/// The summary of a kept masked copy; `replaced` says it replaced an earlier one.
pub fn mask_summary<'a>(st: &'a MaskState, study: &Study, replaced: bool) -> MaskSummary<'a> {
    let m = &st.masked;
    MaskSummary {
        method: match m.method {
            MaskMethod::Donut(_) => "donut",
            MaskMethod::KAnonymity(_) => "k_anonymity",
        },
        settings: &m.method,
        n_input: m.n_input,
        n_masked: m.x.len(),
        displacement: m.displacement,
        unplaced: unplaced_rows(&m.unplaced, study),
        notes: &m.notes,
        basis: st.k.as_ref().map(|k| k.basis),
        target_k: st.k.as_ref().map(|k| k.target_k),
        k_summary: st.k.as_ref().and_then(|k| k.summary),
        below_target: st
            .k
            .as_ref()
            .map(|k| unplaced_rows(&k.below_target, study))
            .unwrap_or_default(),
        replaced,
        cautions: CAUTIONS,
    }
}

#[derive(Serialize)]
pub struct AggregateSummary<'a> {
    pub table: &'a SuppressedTable,
    population_source: Option<&'static str>,
    counts_hidden_from: u64,
    counts_hidden_to: u64,
    threshold_note: &'static str,
    largest_shown: Option<u64>,
    events_counted: u64,
    cautions: [&'static str; 5],
}

pub const THRESHOLD_NOTE: &str =
    "counts from 1 to 4 hidden by default: common practice, no single source; \
     some policies hide 1–9 or more";

/// The summary of a table of counts of `total` events.
pub fn aggregate_summary(t: &TableState, total: u64) -> AggregateSummary<'_> {
    let min = t.table.params.min_count.max(1);
    AggregateSummary {
        table: &t.table,
        population_source: t.population_source,
        counts_hidden_from: 1,
        counts_hidden_to: min - 1,
        threshold_note: THRESHOLD_NOTE,
        largest_shown: t.table.cells.iter().filter_map(|c| c.count).max(),
        events_counted: total,
        cautions: CAUTIONS,
    }
}

/// Counts the study's events per square or hexagonal cell of `size_m`
/// metres. The grid origin is snapped down to a multiple of the cell size,
/// so cell corners do not repeat the smallest x or y of the events when the
/// study area was drawn around them. Returns the counts and where the
/// population came from (the controls layer, if loaded).
pub fn count_in_cells(
    study: &Study,
    shape: CellShape,
    size_m: f64,
    orientation: HexOrientation,
) -> Result<(Aggregation, Option<&'static str>), AnalysisError> {
    let s = study;
    let population = s.controls.as_ref().map(|c| (c.x(), c.y()));
    let b = s.window.bbox();
    let origin = [
        (b[0] / size_m).floor() * size_m,
        (b[1] / size_m).floor() * size_m,
    ];
    let p = AggregateParams {
        shape,
        cell_size_m: size_m,
        orientation,
        origin: Some(origin),
    };
    let verts: Vec<[f64; 2]> = s
        .window
        .polygons()
        .iter()
        .flatten()
        .flatten()
        .copied()
        .collect();
    let agg = aggregate_grid(
        s.events.x(),
        s.events.y(),
        &s.window,
        &verts,
        population,
        &p,
    )?;
    Ok((agg, population.map(|_| "points of the population layer")))
}

/// Counts the study's events per zone. The population comes from the zones
/// file when every zone has one, else from the controls layer, if loaded.
/// Returns the counts, the population's source and the zone names.
pub fn count_in_zones(
    study: &Study,
    zones: &[Zone],
) -> Result<(Aggregation, Option<&'static str>, Vec<String>), AnalysisError> {
    let s = study;
    let population = s.controls.as_ref().map(|c| (c.x(), c.y()));
    let all_pop = zones.iter().all(|z| z.population.is_some());
    let names = zones.iter().map(|z| z.name.clone()).collect();
    let agg = aggregate_zones(s.events.x(), s.events.y(), zones, population)?;
    let src = if all_pop {
        Some("the zones file")
    } else {
        population.map(|_| "points of the population layer")
    };
    Ok((agg, src, names))
}

/// Zones read from a file, projected with the study's map. A zones file in
/// longitude/latitude with planar events is taken to be in the events'
/// planar units (its numbers happen to lie in the lon/lat ranges); a planar
/// zones file with longitude/latitude events is a mismatch.
pub fn zones_for_study(raw: RawZones, study: &Study) -> Result<Vec<Zone>, InputError> {
    if study.projection.is_geographic() && raw.coords != CoordKind::LonLat {
        return Err(InputError::new(InputErrorKind::Mismatch {
            detail: "the zones file has planar coordinates but the events are \
                     longitude/latitude; both must use the same coordinates"
                .to_string(),
        }));
    }
    let proj = &study.projection;
    Ok(raw
        .zones
        .into_iter()
        .map(|z| Zone {
            name: z.name,
            polygons: proj.forward_polygons(&z.polygons),
            population: z.population,
            group: z.group,
        })
        .collect())
}

/// A planar study for tests: `n` events in a 3 km × 2 km rectangle (x from
/// 1234 m, y from 5678 m), a tight group in one corner, the study area from
/// a file.
#[cfg(test)]
pub(crate) fn test_study(n: usize) -> Study {
    use crate::input::{read_area, read_points, ReadOptions};
    use crate::study::AreaFallback;
    let mut csv = String::from("x,y\n");
    for i in 0..n {
        let (x, y) = if i % 3 == 0 {
            (
                1300.0 + (i % 7) as f64 * 9.0,
                5700.0 + (i % 5) as f64 * 11.0,
            )
        } else {
            (
                1250.0 + (i * 733 % 2950) as f64,
                5690.0 + (i * 379 % 1970) as f64,
            )
        };
        csv.push_str(&format!("{x:.1},{y:.1}\n"));
    }
    let opts = ReadOptions {
        coords: Some(CoordKind::Planar {
            unit: crate::input::LengthUnit::Metre,
        }),
        ..Default::default()
    };
    let ev = read_points(csv.as_bytes(), &opts).unwrap();
    let area = read_area(
        br#"{"type":"Polygon","coordinates":[[[1234,5678],[4234,5678],[4234,7678],[1234,7678],[1234,5678]]]}"#,
        None,
    )
    .unwrap();
    Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::zones::{read_zones, ZoneOptions};

    #[test]
    fn grid_origin_is_snapped_to_the_cell_size() {
        let s = test_study(300);
        let (agg, src) =
            count_in_cells(&s, CellShape::Square, 500.0, HexOrientation::default()).unwrap();
        assert_eq!(src, None, "no population layer");
        assert_eq!(agg.total, 300);
        match agg.layout {
            super::super::aggregate::Layout::Grid { origin, .. } => {
                assert_eq!(origin, [1000.0, 5500.0]);
            }
            other => panic!("not a grid: {other:?}"),
        }
    }

    #[test]
    fn zones_count_with_their_own_population() {
        let s = test_study(300);
        let zones_file = br#"{"type":"FeatureCollection","features":[
            {"type":"Feature","properties":{"name":"west","population":1000},
             "geometry":{"type":"Polygon","coordinates":[[[1234,5678],[2734,5678],[2734,7678],[1234,7678],[1234,5678]]]}},
            {"type":"Feature","properties":{"name":"east","population":2000},
             "geometry":{"type":"Polygon","coordinates":[[[2734,5678],[4234,5678],[4234,7678],[2734,7678],[2734,5678]]]}}]}"#;
        let raw = read_zones(zones_file, &ZoneOptions::default()).unwrap();
        let zones = zones_for_study(raw, &s).unwrap();
        assert_eq!(zones[1].polygons[0][0][1], [4234.0, 5678.0]);
        let (agg, src, names) = count_in_zones(&s, &zones).unwrap();
        assert_eq!(src, Some("the zones file"));
        assert_eq!(names, ["west", "east"]);
        assert_eq!(agg.total, 300);
    }

    #[test]
    fn summaries_carry_the_cautions_and_the_threshold() {
        let s = test_study(300);
        let (agg, _) =
            count_in_cells(&s, CellShape::Square, 500.0, HexOrientation::default()).unwrap();
        let t = TableState {
            table: super::super::suppress(&agg, &super::super::SuppressionParams::default()),
            population_source: None,
            zone_names: None,
        };
        let a = aggregate_summary(&t, agg.total);
        assert_eq!((a.counts_hidden_from, a.counts_hidden_to), (1, 4));
        assert_eq!(a.cautions, CAUTIONS);
        assert!(a.largest_shown.unwrap() >= 5);
        let masked = super::super::donut_mask(
            s.events.x(),
            s.events.y(),
            &s.window,
            &super::super::DonutParams {
                seed: 3,
                ..Default::default()
            },
        )
        .unwrap();
        let m = MaskState { masked, k: None };
        let sum = mask_summary(&m, &s, true);
        assert_eq!(sum.method, "donut");
        assert_eq!(sum.n_input, 300);
        assert_eq!(sum.n_masked + sum.unplaced.len(), 300);
        assert!(sum.replaced);
        assert_eq!(sum.cautions, CAUTIONS);
    }
}
