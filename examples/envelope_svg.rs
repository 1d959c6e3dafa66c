//! Writes an example envelope chart to an SVG file (for eyeballing the
//! chart): `cargo run --example envelope_svg -- out.svg`.
use cloister::distance::{simulate_thomas, EnvelopeJob, EnvelopeParams, ThomasParams};
use cloister::plot::{draw_envelope_chart, EnvelopeChartData, EnvelopeChartOptions};
use cloister::window::Window;
use plotters::prelude::*;

fn main() {
    let out = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "envelope.svg".into());
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).expect("window");
    let kappa = 20.0 / 1e6;
    let p = simulate_thomas(
        &w,
        ThomasParams {
            kappa,
            mu: 10.0,
            sigma: 25.0,
        },
        3,
    )
    .expect("pattern");
    let params = EnvelopeParams {
        n_sim: 99,
        seed: 5,
        ..Default::default()
    };
    let res = EnvelopeJob::new(&p, &w, &params).expect("job").finish();
    println!("{}", res.verdict.text);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (720, 440)).into_drawing_area();
        draw_envelope_chart(
            &root,
            &EnvelopeChartData::from_result(&res),
            &EnvelopeChartOptions::default(),
        )
        .expect("chart");
    }
    std::fs::write(&out, svg).expect("write");
}
