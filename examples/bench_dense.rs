//! Coincident and densely packed events (run with `--release`).
//!
//! Three patterns of 100,000 events in a 1000 m square study area:
//! * `stack`: all events at one address;
//! * `square`: all events uniform in a 1 m square;
//! * `mixed`: 50,000 uniform events plus 1,000 events stacked at each of
//!   100 addresses.
//!
//! For each, the time of: the summary's nearest-neighbour distances, the
//! k-distance plot (min_samples = 5), DBSCAN (eps = 25 m, min_samples = 5),
//! Clark–Evans (no simulations) and the G envelope with the border
//! correction (19 simulations).
//!
//! ```text
//! cargo run --release --example bench_dense            # all three patterns
//! cargo run --release --example bench_dense -- 20000   # another n
//! ```
//! Figures are printed as JSON lines.

use cloister::clusters::{dbscan_xy, k_distance_plot, DbscanOptions};
use cloister::distance::{
    clark_evans, envelope, ClarkEvansParams, EnvelopeParams, FunctionParams, NnCorrection,
    SummaryFunction,
};
use cloister::index::GridIndex;
use cloister::study::Pattern;
use cloister::window::Window;
use std::time::Instant;

/// A small deterministic generator (SplitMix64), so the patterns do not
/// depend on the crate's own random streams.
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn pattern(kind: &str, n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut r = Mix(7);
    match kind {
        "stack" => (vec![512.3; n], vec![498.7; n]),
        "square" => (0..n).map(|_| (500.0 + r.next(), 500.0 + r.next())).unzip(),
        _ => {
            let addr: Vec<(f64, f64)> = (0..100)
                .map(|_| (1000.0 * r.next(), 1000.0 * r.next()))
                .collect();
            let stacked = n / 2 / 100;
            let mut pts: Vec<(f64, f64)> = (0..n - stacked * 100)
                .map(|_| (1000.0 * r.next(), 1000.0 * r.next()))
                .collect();
            for a in &addr {
                pts.extend(std::iter::repeat_n(*a, stacked));
            }
            // Interleave the stacks with the rest, as a file would.
            for i in (1..pts.len()).rev() {
                let j = (r.next() * (i + 1) as f64) as usize;
                pts.swap(i, j.min(i));
            }
            pts.into_iter().unzip()
        }
    }
}

fn time<T>(f: impl FnOnce() -> T) -> (f64, T) {
    let t = Instant::now();
    let v = f();
    (t.elapsed().as_secs_f64(), v)
}

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(100_000);
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).expect("window");
    for kind in ["stack", "square", "mixed"] {
        let (x, y) = pattern(kind, n);
        let p = Pattern::from_xy(x.clone(), y.clone()).expect("pattern");
        let (t_nn, nn) = time(|| GridIndex::new(&x, &y).nn_distances());
        let mean_nn = nn.map_or(f64::NAN, |d| d.iter().sum::<f64>() / d.len() as f64);
        let (t_kd, kd) = time(|| k_distance_plot(&x, &y, 5).expect("k-distance"));
        let o = DbscanOptions {
            eps_m: 25.0,
            min_samples: 5,
            use_weights: false,
        };
        let (t_db, db) = time(|| dbscan_xy(&x, &y, None, &o).expect("dbscan"));
        let ce = ClarkEvansParams { n_sim: 0, seed: 1 };
        let (t_ce, ce) = time(|| clark_evans(&p, &w, &ce).expect("clark-evans"));
        let ep = EnvelopeParams {
            function: SummaryFunction::NearestNeighbour,
            n_sim: 19,
            functions: FunctionParams {
                nn_correction: NnCorrection::Border,
                ..Default::default()
            },
            ..Default::default()
        };
        let (t_g, _) = time(|| envelope(&p, &w, &ep).expect("G envelope"));
        println!(
            "{{\"pattern\":\"{kind}\",\"n\":{n},\"nn_s\":{t_nn:.4},\"kdist_s\":{t_kd:.4},\
             \"dbscan_s\":{t_db:.4},\"clark_evans_s\":{t_ce:.4},\"g_envelope_s\":{t_g:.4},\
             \"mean_nn_m\":{mean_nn:.6},\"knee_eps_m\":{},\"clusters\":{},\"noise\":{},\"R\":{:.6}}}",
            kd.knee_eps_m.unwrap_or(f64::NAN),
            db.n_clusters,
            db.noise,
            ce.naive.r
        );
    }
}
