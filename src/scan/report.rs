//! A finished scan as the page shows it ([`ScanReport`]).

use super::{ScanCentres, ScanModel, ScanResult};
use crate::projection::Projection;
use serde::Serialize;

#[derive(Debug, Clone, PartialEq, Serialize)]
/// One cluster of a [`ScanReport`].
pub struct ScanClusterReport {
    pub rank: usize,
    pub centre_x: f64,
    pub centre_y: f64,
    pub centre_lon: Option<f64>,
    pub centre_lat: Option<f64>,
    pub radius_m: f64,
    /// Regions in the window.
    pub regions: usize,
    pub observed: u64,
    pub expected: f64,
    /// `null` when undefined (every case inside the window).
    pub relative_risk: Option<f64>,
    pub population: f64,
    pub llr: f64,
    pub p_value: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
/// A finished scan as the page shows it: the [`ScanResult`] with the
/// model in words, the smallest p-value the replicates allow, and cluster
/// centres also in longitude/latitude when the events were.
pub struct ScanReport {
    pub model: ScanModel,
    pub model_text: &'static str,
    pub centres: ScanCentres,
    pub n_sim: usize,
    pub seed: u64,
    pub max_share: f64,
    pub n_regions: usize,
    pub n_windows: usize,
    pub total_cases: u64,
    pub total_population: f64,
    pub statistic: f64,
    pub p_value: f64,
    /// 1 / (n_sim + 1): no p-value can be smaller.
    pub smallest_p: f64,
    pub critical_95: Option<f64>,
    pub critical_99: Option<f64>,
    pub cell_m: Option<f64>,
    /// Against population counts: the farthest any case lies from the
    /// population point it is counted at, metres (`null` otherwise).
    pub case_to_population_max_m: Option<f64>,
    pub clusters: Vec<ScanClusterReport>,
    pub null_maxima: Vec<f64>,
}

impl ScanReport {
    /// The report of `r` for events projected with `projection`.
    pub fn new(r: ScanResult, projection: &Projection) -> ScanReport {
        let lonlat = |x: f64, y: f64| {
            if projection.is_geographic() {
                let (lon, lat) = projection.inverse(x, y);
                (Some(lon), Some(lat))
            } else {
                (None, None)
            }
        };
        let clusters = r
            .clusters
            .iter()
            .map(|c| {
                let (lon, lat) = lonlat(c.centre_x, c.centre_y);
                ScanClusterReport {
                    rank: c.rank,
                    centre_x: c.centre_x,
                    centre_y: c.centre_y,
                    centre_lon: lon,
                    centre_lat: lat,
                    radius_m: c.radius_m,
                    regions: c.regions.len(),
                    observed: c.observed,
                    expected: c.expected,
                    relative_risk: c.relative_risk,
                    population: c.population,
                    llr: c.llr,
                    p_value: c.p_value,
                }
            })
            .collect();
        ScanReport {
            model: r.model,
            model_text: r.model.describe(),
            centres: r.centres,
            n_sim: r.n_sim,
            seed: r.seed,
            max_share: r.max_share,
            n_regions: r.n_regions,
            n_windows: r.n_windows,
            total_cases: r.total_cases,
            total_population: r.total_population,
            statistic: r.statistic,
            p_value: r.p_value,
            smallest_p: 1.0 / (r.n_sim as f64 + 1.0),
            critical_95: r.critical_95,
            critical_99: r.critical_99,
            cell_m: r.cell_m,
            case_to_population_max_m: r.case_to_population_max_m,
            clusters,
            null_maxima: r.null_maxima,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::{simulate_thomas, ThomasParams};
    use crate::input::LengthUnit;
    use crate::scan::{ScanJob, ScanOptions};
    use crate::window::Window;

    #[test]
    fn report_of_a_scan_in_words_and_degrees() {
        let w = Window::rectangle(0.0, 0.0, 2000.0, 2000.0).unwrap();
        let p = simulate_thomas(
            &w,
            ThomasParams {
                kappa: 10.0 / 4e6,
                mu: 30.0,
                sigma: 40.0,
            },
            11,
        )
        .unwrap();
        let o = ScanOptions {
            n_sim: 19,
            seed: 4,
            ..Default::default()
        };
        let r = ScanJob::new(&p, None, &w, &o).unwrap().finish();
        assert!(!r.clusters.is_empty());
        let planar = ScanReport::new(
            r.clone(),
            &Projection::Planar {
                unit: LengthUnit::Metre,
            },
        );
        assert_eq!(planar.model, ScanModel::Poisson);
        assert_eq!(planar.model_text, "events against area (Poisson)");
        assert_eq!(planar.smallest_p, 1.0 / 20.0);
        assert_eq!(planar.clusters.len(), r.clusters.len());
        let (c, rc) = (&planar.clusters[0], &r.clusters[0]);
        assert_eq!(c.regions, rc.regions.len());
        assert_eq!(
            (c.centre_x, c.observed, c.p_value),
            (rc.centre_x, rc.observed, rc.p_value)
        );
        assert_eq!((c.centre_lon, c.centre_lat), (None, None));
        let geo = Projection::TransverseMercator {
            lon0: 10.0,
            lat0: 45.0,
        };
        let g = ScanReport::new(r.clone(), &geo);
        let (lon, lat) = geo.inverse(rc.centre_x, rc.centre_y);
        assert_eq!(g.clusters[0].centre_lon, Some(lon));
        assert_eq!(g.clusters[0].centre_lat, Some(lat));
        assert!((lon - 10.0).abs() < 0.1 && (lat - 45.0).abs() < 0.1);
        assert_eq!(
            ScanModel::Bernoulli.describe(),
            "cases against controls (Bernoulli)"
        );
    }
}
