//! The scan's chance runs spread over several threads or Web Workers.
//!
//! Replicate j depends only on the seed and j ([`ScanJob::simulate_range`]),
//! so a helper that rebuilds the job from a [`ScanShare`] (the regions
//! scanned, the model and the options) computes the same null maxima as the
//! job itself; the job takes them back in order with
//! [`ScanJob::add_simulated`] and finishes exactly as a single run.

use super::{ScanJob, ScanModel, ScanOptions, ScanRegions};
use crate::error::AnalysisError;
use serde::{Deserialize, Serialize};

/// What a helper needs to compute replicates of a scan: the regions (one
/// location or cell each, with its cases and population), the model the
/// scan runs and its options.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScanShare {
    pub regions: ScanRegions,
    pub model: ScanModel,
    pub options: ScanOptions,
}

/// Computes replicates of a shared scan (in a helper worker).
pub struct ScanSimulator {
    job: ScanJob,
}

impl ScanSimulator {
    /// Rebuilds the windows of a shared scan.
    pub fn new(share: &ScanShare) -> Result<ScanSimulator, AnalysisError> {
        use crate::params::Params;
        share.options.validate_in(None)?;
        let job = ScanJob::from_regions(&share.regions, share.model, &share.options)?;
        Ok(ScanSimulator { job })
    }

    /// The null maxima of replicates `from..to`, as
    /// [`ScanJob::simulate_range`].
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        self.job.simulate_range(from, to)
    }
}

impl ScanJob {
    /// What a [`ScanSimulator`] elsewhere needs.
    pub fn share(&self) -> ScanShare {
        ScanShare {
            regions: self.regions.clone(),
            model: self.model,
            options: self.o,
        }
    }

    /// Appends null maxima computed elsewhere that start at replicate
    /// `from`, which must equal the number done. Returns the number done.
    pub fn add_simulated(&mut self, from: usize, maxima: &[f64]) -> Result<usize, AnalysisError> {
        let done = self.null_max.len();
        if from != done || done + maxima.len() > self.o.n_sim {
            return Err(AnalysisError::BadParameter {
                name: "chance runs".into(),
                detail: format!(
                    "expected at most {} chance runs starting at run {done} (got {} from run {from})",
                    self.o.n_sim - done,
                    maxima.len()
                ),
            });
        }
        if maxima.iter().any(|v| !(v.is_finite() && *v >= 0.0)) {
            return Err(AnalysisError::BadParameter {
                name: "chance runs".into(),
                detail: "a chance run's largest log likelihood ratio must be a number, 0 or more"
                    .into(),
            });
        }
        self.null_max.extend_from_slice(maxima);
        Ok(self.null_max.len())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;
    use crate::window::Window;
    use rand::RngExt;

    /// Invented points on a coarse lattice (ties): 90 cases, 210 controls.
    fn points() -> (Vec<f64>, Vec<f64>) {
        let mut rng = rng_from_seed(11);
        let x = (0..300)
            .map(|_| (rng.random::<f64>() * 15.0).floor() * 10.0)
            .collect();
        let y = (0..300)
            .map(|_| (rng.random::<f64>() * 15.0).floor() * 10.0)
            .collect();
        (x, y)
    }

    /// The three ways a scan is prepared: cases against controls, against
    /// population counts at points, against area (grid cells).
    fn jobs(n_sim: usize) -> Vec<ScanJob> {
        let (x, y) = points();
        let w = Window::rectangle(-5.0, -5.0, 150.0, 150.0).unwrap();
        let o = ScanOptions {
            n_sim,
            seed: 4,
            ..Default::default()
        };
        let (cx, cy) = (&x[..90], &y[..90]);
        let counts: Vec<f64> = (0..210).map(|i| (1 + i % 7) as f64 * 10.0).collect();
        vec![
            ScanJob::from_points(cx, cy, Some((&x[90..], &y[90..])), &w, &o).unwrap(),
            ScanJob::from_population(cx, cy, (&x[90..], &y[90..]), &counts, &w, &o).unwrap(),
            ScanJob::from_points(cx, cy, None, &w, &o).unwrap(),
        ]
    }

    #[test]
    fn a_replicate_is_the_same_wherever_it_is_computed() {
        for job in jobs(60) {
            let all = job.simulate_range(0, 60);
            assert_eq!(all.len(), 60);
            // Replicates 25..40 alone equal the same part of one pass (the
            // case–control draws leave the list of people as it was).
            assert_eq!(job.simulate_range(25, 40), all[25..40], "{:?}", job.model);
            assert!(all.iter().any(|&v| v != all[0]), "{:?}", job.model);
            // A helper rebuilt from the shared run (through JSON, as the
            // page's workers pass it) computes the same maxima.
            let share: ScanShare =
                serde_json::from_str(&serde_json::to_string(&job.share()).unwrap()).unwrap();
            let helper = ScanSimulator::new(&share).unwrap();
            assert_eq!(helper.simulate_range(0, 60), all, "{:?}", job.model);
            assert_eq!(helper.simulate_range(50, 99), all[50..], "capped at n_sim");
        }
    }

    #[test]
    fn a_job_fed_pieces_in_order_finishes_as_one_run() {
        let one: Vec<_> = jobs(99).into_iter().map(ScanJob::finish).collect();
        for (mut job, want) in jobs(99).into_iter().zip(one) {
            let model = job.model;
            let helper = ScanSimulator::new(&job.share()).unwrap();
            let a = helper.simulate_range(0, 40);
            let b = helper.simulate_range(40, 99);
            // Out of order, overlapping or too many: refused, nothing added.
            assert!(job.add_simulated(40, &b).is_err());
            assert!(job
                .add_simulated(0, &[a.clone(), b.clone(), vec![1.0]].concat())
                .is_err());
            assert!(job.add_simulated(0, &[f64::NAN]).is_err());
            assert_eq!(job.progress().done, 0);
            assert_eq!(job.add_simulated(0, &a).unwrap(), 40);
            assert!(job.add_simulated(0, &a).is_err());
            assert_eq!(job.add_simulated(40, &b).unwrap(), 99);
            let got = job.finish();
            assert_eq!(got, want, "{model:?}");
            assert!(got.clusters.iter().all(|c| c.p_value > 0.0));
        }
    }

    #[test]
    fn a_bad_share_is_an_error() {
        let job = jobs(9).remove(0);
        let mut share = job.share();
        share.options.n_sim = 0;
        assert!(ScanSimulator::new(&share).is_err());
        let mut share = job.share();
        share.model = ScanModel::Auto;
        assert!(ScanSimulator::new(&share).is_err());
        let text =
            serde_json::to_string(&job.share())
                .unwrap()
                .replacen("\"model\"", "\"modle\"", 1);
        assert!(serde_json::from_str::<ScanShare>(&text).is_err());
    }
}
