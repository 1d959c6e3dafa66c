//! Profiling helper: one K computation per repetition (release); run under
//! `/usr/bin/time` to read CPU time on a shared machine.
//! `prof_k <n> <none|border|translation|isotropic> <reps>`
use cloister::distance::{
    simulate_csr, Correction, EnvelopeJob, EnvelopeParams, FunctionParams, SummaryFunction,
};
use cloister::window::Window;
fn main() {
    let a: Vec<String> = std::env::args().collect();
    let n: usize = a.get(1).and_then(|s| s.parse().ok()).unwrap_or(10_000);
    let c = match a.get(2).map(String::as_str) {
        Some("none") => Correction::None,
        Some("border") => Correction::Border,
        Some("translation") => Correction::Translation,
        _ => Correction::Isotropic,
    };
    let reps: usize = a.get(3).and_then(|s| s.parse().ok()).unwrap_or(5);
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let p = simulate_csr(&w, n, 42).unwrap();
    let params = EnvelopeParams {
        function: SummaryFunction::K,
        n_sim: reps,
        functions: FunctionParams {
            correction: c,
            ..Default::default()
        },
        ..Default::default()
    };
    let mut job = EnvelopeJob::new(&p, &w, &params).unwrap();
    job.run_batch(reps);
    println!("{c:?} n={n} reps={} (+1 observed)", reps);
}
