//! Charts drawn natively to SVG strings (the page draws the same functions on
//! a canvas): real content is checked, not just that something was written.

use cloister::distance::SummaryFunction;
use cloister::plot::{
    draw_envelope_chart, draw_k_distance_chart, Band, Drawn, EnvelopeChartData,
    EnvelopeChartOptions, KDistanceChartData, PlotError, Units, View,
};
use plotters::prelude::*;

/// Texts of the SVG (trimmed), with their font size and y position.
fn texts(svg: &str) -> Vec<(String, f64, f64)> {
    let mut out = Vec::new();
    for part in svg.split("<text ").skip(1) {
        let (attrs, rest) = part.split_once('>').unwrap();
        let body = rest.split("</text>").next().unwrap().trim().to_string();
        out.push((body, attr(attrs, "font-size"), attr(attrs, "y")));
    }
    out
}

fn attr(tag: &str, name: &str) -> f64 {
    let key = format!(" {name}=\"");
    let i = tag
        .find(&key)
        .unwrap_or_else(|| panic!("no {name} in {tag}"))
        + key.len();
    tag[i..].split('"').next().unwrap().parse().unwrap()
}

/// Opening tags of `element` (e.g. "polyline") whose text contains all of `has`.
fn tags<'a>(svg: &'a str, element: &str, has: &[&str]) -> Vec<&'a str> {
    svg.split(&format!("<{element} "))
        .skip(1)
        .map(|p| p.split('>').next().unwrap())
        .filter(|t| has.iter().all(|h| t.contains(h)))
        .collect()
}

/// Points of a polyline / polygon tag.
fn points(tag: &str) -> Vec<(f64, f64)> {
    let i = tag.find("points=\"").unwrap() + 8;
    tag[i..]
        .split('"')
        .next()
        .unwrap()
        .split_whitespace()
        .map(|p| {
            let (x, y) = p.split_once(',').unwrap();
            (x.parse().unwrap(), y.parse().unwrap())
        })
        .collect()
}

const OBSERVED: &str = "stroke=\"#B03A12\"";
const INK: &str = "stroke=\"#222222\"";
const GLOBAL_FILL: &str = "fill=\"#B0D0E2\"";
const POINTWISE_FILL: &str = "fill=\"#CEC8B6\"";

/// An L result on 0..=250 m: clustered observed curve, CSR = r, bands ±3 m.
fn l_data() -> EnvelopeChartData {
    let r: Vec<f64> = (0..=25).map(|i| 10.0 * i as f64).collect();
    let obs = r.iter().map(|r| r + 8.0 * (r / 60.0).sin().abs()).collect();
    EnvelopeChartData {
        function: SummaryFunction::L,
        theoretical: r.clone(),
        observed: obs,
        pointwise_lo: r.iter().map(|r| r - 2.0).collect(),
        pointwise_hi: r.iter().map(|r| r + 2.0).collect(),
        global_lo: r.iter().map(|r| r - 3.0).collect(),
        global_hi: r.iter().map(|r| r + 3.0).collect(),
        r,
        alpha: 0.05,
        ..Default::default()
    }
}

/// A curve that is not a summary function (the random labelling D(r)):
/// its own y label with the unit filled in, its own name for the reference
/// line, and the function view keeps its values (no πr² taken off).
#[test]
fn envelope_chart_takes_a_label_for_other_curves() {
    let r: Vec<f64> = (0..=20).map(|i| 500.0 * i as f64).collect();
    let d: Vec<f64> = r.iter().map(|r| 2.0e5 * (r / 3000.0).sin()).collect();
    let zero = vec![0.0; r.len()];
    let data = EnvelopeChartData {
        function: SummaryFunction::K,
        observed: d,
        theoretical: zero.clone(),
        pointwise_lo: r.iter().map(|v| -10.0 * v).collect(),
        pointwise_hi: r.iter().map(|v| 10.0 * v).collect(),
        global_lo: r.iter().map(|v| -20.0 * v).collect(),
        global_hi: r.iter().map(|v| 20.0 * v).collect(),
        r,
        alpha: 0.05,
        y_label: Some("D(r) = K cases − K controls ({unit}²)".into()),
        reference_label: Some("as the population (D = 0)".into()),
    };
    let o = EnvelopeChartOptions {
        view: View::Function,
        ..Default::default()
    };
    let (svg, drawn) = envelope_svg(&data, &o, (760, 420)).unwrap();
    assert_eq!(drawn.y_label, "D(r) = K cases − K controls (km²)");
    let t: Vec<String> = texts(&svg).into_iter().map(|t| t.0).collect();
    assert!(t.iter().any(|x| x == "as the population (D = 0)"), "{t:?}");
    assert!(
        !t.iter().any(|x| x == "complete spatial randomness"),
        "{t:?}"
    );
    // In m², D reaches millions: the tick labels ("-4 000 000") and the
    // axis title must not overlap.
    let mut big = data.clone();
    for v in [
        &mut big.observed,
        &mut big.global_lo,
        &mut big.global_hi,
        &mut big.pointwise_lo,
        &mut big.pointwise_hi,
    ] {
        v.iter_mut().for_each(|x| *x *= 200.0);
    }
    let (svg, _) = envelope_svg(
        &big,
        &EnvelopeChartOptions {
            units: Units::M,
            ..o
        },
        (760, 420),
    )
    .unwrap();
    let mut title_right = f64::NAN;
    let mut ticks_left = f64::INFINITY;
    for part in svg.split("<text ").skip(1) {
        let (tag, rest) = part.split_once('>').unwrap();
        let body = rest.split("</text>").next().unwrap().trim();
        let tag = &format!(" {tag}");
        let (x, size) = (attr(tag, "x"), attr(tag, "font-size"));
        if body.starts_with("D(r)") {
            // Rotated a quarter turn: it takes one line height right of x.
            title_right = x + size;
        } else if tag.contains("text-anchor=\"end\"") && body.chars().any(|c| c.is_ascii_digit()) {
            // Right-aligned at x; a digit is about 0.6 em wide.
            ticks_left = ticks_left.min(x - 0.6 * size * body.chars().count() as f64);
        }
    }
    assert!(
        title_right < ticks_left,
        "axis title ends at {title_right}, tick labels start at {ticks_left}"
    );
}

fn envelope_svg(
    d: &EnvelopeChartData,
    o: &EnvelopeChartOptions,
    size: (u32, u32),
) -> Result<(String, Drawn), PlotError> {
    let mut svg = String::new();
    let drawn = {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        draw_envelope_chart(&root, d, o)?
    };
    Ok((svg, drawn))
}

#[test]
fn envelope_chart_has_axes_legend_band_and_curves() {
    let (svg, drawn) =
        envelope_svg(&l_data(), &EnvelopeChartOptions::default(), (720, 440)).unwrap();
    let t: Vec<String> = texts(&svg).into_iter().map(|t| t.0).collect();
    for label in [
        "distance r (m)",
        "L(r) − r (m)",
        "observed",
        "complete spatial randomness",
        "global 95% band (the test)",
    ] {
        assert!(
            t.iter().any(|x| x == label),
            "missing text {label:?} in {t:?}"
        );
    }
    assert_eq!(drawn.x_label, "distance r (m)");
    assert_eq!(drawn.y_label, "L(r) − r (m)");
    assert_eq!(drawn.units, "m");
    assert_eq!(drawn.band_label, "global 95% band (the test)");
    // One band polygon (no gaps), in the global band's colour.
    assert_eq!(tags(&svg, "polygon", &[GLOBAL_FILL]).len(), 1);
    assert_eq!(tags(&svg, "polygon", &[POINTWISE_FILL]).len(), 0);
    // The observed curve (26 vertices) and its legend sample (2 vertices).
    let obs = tags(&svg, "polyline", &[OBSERVED, "stroke-width=\"2\""]);
    let mut n: Vec<usize> = obs.iter().map(|t| points(t).len()).collect();
    n.sort();
    assert_eq!(n, vec![2, 26]);
    // CSR is dashed: many short horizontal pieces at one height (L − r = 0),
    // plus the two pieces of the legend sample.
    let dashes = tags(&svg, "polyline", &[INK, "stroke-width=\"1\""]);
    assert!(dashes.len() >= 12, "{} dashes", dashes.len());
    // (The legend strip is the top 30 px.)
    let ys: Vec<f64> = dashes
        .iter()
        .flat_map(|t| points(t))
        .map(|p| p.1)
        .filter(|y| *y > 30.0)
        .collect();
    assert!(ys.len() >= 20);
    let first = ys[0];
    assert!(
        ys.iter().all(|y| (y - first).abs() <= 1.0),
        "CSR dashes are not level"
    );
    for d in &dashes {
        let p = points(d);
        let len = (p[p.len() - 1].0 - p[0].0).abs();
        assert!(len <= 12.0, "a dash of {len} px is not a dash");
    }
}

#[test]
fn envelope_chart_options_change_what_is_drawn() {
    let d = l_data();
    let pointwise = EnvelopeChartOptions {
        band: Band::Pointwise,
        view: View::Function,
        ..Default::default()
    };
    let (svg, drawn) = envelope_svg(&d, &pointwise, (720, 440)).unwrap();
    assert_eq!(drawn.band_label, "pointwise band — not a test");
    assert_eq!(drawn.y_label, "L(r) (m)");
    assert_eq!(tags(&svg, "polygon", &[POINTWISE_FILL]).len(), 1);
    assert_eq!(tags(&svg, "polygon", &[GLOBAL_FILL]).len(), 0);
    assert!(texts(&svg)
        .iter()
        .any(|t| t.0 == "pointwise band — not a test"));
    // In the function view CSR (= r) rises: the dashes are not level.
    let ys: Vec<f64> = tags(&svg, "polyline", &[INK, "stroke-width=\"1\""])
        .iter()
        .flat_map(|t| points(t))
        .map(|p| p.1)
        .collect();
    let spread =
        ys.iter().cloned().fold(f64::MIN, f64::max) - ys.iter().cloned().fold(f64::MAX, f64::min);
    assert!(
        spread > 100.0,
        "CSR should rise across the plot, spread {spread}"
    );

    // K centred, in km when forced.
    let mut k = l_data();
    k.function = SummaryFunction::K;
    let km = EnvelopeChartOptions {
        units: Units::Km,
        ..Default::default()
    };
    let (_, drawn) = envelope_svg(&k, &km, (720, 440)).unwrap();
    assert_eq!(drawn.y_label, "K(r) − πr² (km²)");
    assert_eq!(drawn.x_label, "distance r (km)");
    // Auto units switch to km at 5 km.
    let mut far = l_data();
    for v in [
        &mut far.r,
        &mut far.observed,
        &mut far.theoretical,
        &mut far.global_lo,
        &mut far.global_hi,
        &mut far.pointwise_lo,
        &mut far.pointwise_hi,
    ] {
        v.iter_mut().for_each(|x| *x *= 40.0);
    }
    let (svg, drawn) = envelope_svg(&far, &EnvelopeChartOptions::default(), (720, 440)).unwrap();
    assert_eq!(drawn.units, "km");
    assert!(texts(&svg).iter().any(|t| t.0 == "L(r) − r (km)"));
}

#[test]
fn undefined_values_split_the_band_and_the_curve() {
    let mut d = l_data();
    for v in [&mut d.global_lo, &mut d.observed] {
        v[10] = f64::NAN;
    }
    let (svg, _) = envelope_svg(&d, &EnvelopeChartOptions::default(), (720, 440)).unwrap();
    assert_eq!(tags(&svg, "polygon", &[GLOBAL_FILL]).len(), 2);
    let mut n: Vec<usize> = tags(&svg, "polyline", &[OBSERVED])
        .iter()
        .map(|t| points(t).len())
        .collect();
    n.sort();
    assert_eq!(n, vec![2, 10, 15]);
}

#[test]
fn legend_wraps_at_narrow_width() {
    let d = l_data();
    let legend_rows = |w: u32| {
        let (svg, _) = envelope_svg(&d, &EnvelopeChartOptions::default(), (w, 440)).unwrap();
        let mut ys: Vec<f64> = texts(&svg)
            .into_iter()
            .filter(|t| {
                [
                    "observed",
                    "complete spatial randomness",
                    "global 95% band (the test)",
                ]
                .contains(&t.0.as_str())
            })
            .map(|t| t.2)
            .collect();
        assert_eq!(ys.len(), 3, "three legend entries at width {w}");
        ys.dedup();
        ys.len()
    };
    assert_eq!(legend_rows(900), 1);
    assert!(legend_rows(320) >= 2);
}

#[test]
fn double_pixel_density_doubles_text_and_lines() {
    let d = l_data();
    let (one, _) = envelope_svg(&d, &EnvelopeChartOptions::default(), (720, 440)).unwrap();
    let two_opts = EnvelopeChartOptions {
        scale: Some(2.0),
        ..Default::default()
    };
    let (two, _) = envelope_svg(&d, &two_opts, (1440, 880)).unwrap();
    let size = |svg: &str, label: &str| {
        texts(svg)
            .into_iter()
            .find(|t| t.0 == label)
            .map(|t| t.1)
            .unwrap()
    };
    for label in ["observed", "distance r (m)"] {
        let (a, b) = (size(&one, label), size(&two, label));
        assert!((b / a - 2.0).abs() < 1e-9, "{label}: {a} → {b}");
    }
    assert_eq!(
        tags(&one, "polyline", &[OBSERVED, "stroke-width=\"2\""]).len(),
        2
    );
    assert_eq!(
        tags(&two, "polyline", &[OBSERVED, "stroke-width=\"4\""]).len(),
        2
    );
    let rect = |svg: &str| {
        let t = tags(svg, "rect", &[GLOBAL_FILL])[0];
        (attr(t, "width"), attr(t, "height"))
    };
    assert_eq!(rect(&one), (20.0, 14.0));
    assert_eq!(rect(&two), (40.0, 28.0));
}

#[test]
fn bad_envelope_data_is_an_error_not_a_blank_chart() {
    let mut d = l_data();
    d.global_hi.pop();
    let e = envelope_svg(&d, &EnvelopeChartOptions::default(), (400, 300)).unwrap_err();
    assert!(
        matches!(&e, PlotError::Data(m) if m.contains("incomplete") && m.contains("global_hi")),
        "{e:?}"
    );
    let one = EnvelopeChartData {
        r: vec![1.0],
        observed: vec![1.0],
        theoretical: vec![1.0],
        pointwise_lo: vec![1.0],
        pointwise_hi: vec![1.0],
        global_lo: vec![1.0],
        global_hi: vec![1.0],
        ..Default::default()
    };
    let e = envelope_svg(&one, &EnvelopeChartOptions::default(), (400, 300)).unwrap_err();
    assert!(e.to_string().contains("fewer than two"));
    let mut nan = l_data();
    for v in [
        &mut nan.observed,
        &mut nan.theoretical,
        &mut nan.global_lo,
        &mut nan.global_hi,
    ] {
        v.iter_mut().for_each(|x| *x = f64::NAN);
    }
    let e = envelope_svg(&nan, &EnvelopeChartOptions::default(), (400, 300)).unwrap_err();
    assert!(e.to_string().contains("no finite values"));
}

#[test]
fn chart_data_reads_the_workers_json() {
    // JSON writes NaN as null; the chart reads null back as undefined.
    let d: EnvelopeChartData = serde_json::from_str(
        r#"{"function":"pair_correlation","r":[0,1,2],"observed":[null,1.5,1.2],
            "alpha":0.01,"verdict":{"text":"ignored"}}"#,
    )
    .unwrap();
    assert_eq!(d.function, SummaryFunction::PairCorrelation);
    assert!(d.observed[0].is_nan() && d.observed[1] == 1.5);
    assert!(d.global_lo.is_empty());
    let o: EnvelopeChartOptions =
        serde_json::from_str(r#"{"view":"function","units":"km","band":"pointwise"}"#).unwrap();
    assert_eq!(
        (o.view, o.units, o.band),
        (View::Function, Units::Km, Band::Pointwise)
    );
    assert!(serde_json::from_str::<EnvelopeChartOptions>(r#"{"colour":"red"}"#).is_err());
    assert!(serde_json::from_str::<EnvelopeChartOptions>(r#"{"view":"sideways"}"#).is_err());
}

fn kdist_svg(d: &KDistanceChartData, size: (u32, u32)) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        draw_k_distance_chart(&root, d)?;
    }
    Ok(svg)
}

fn kdist_data(n: usize) -> KDistanceChartData {
    KDistanceChartData {
        min_samples: 5,
        sorted_desc_m: (0..n)
            .map(|i| 400.0 * (-(i as f64) / 40.0).exp() + 20.0)
            .collect(),
        knee_index: Some(30),
        knee_eps_m: Some(120.0),
        eps_m: Some(150.0),
        scale: None,
    }
}

const KCURVE: &str = "stroke=\"#1E486E\"";
const EPS: &str = "stroke=\"#5A5A5A\"";
const KNEE: &str = "stroke=\"#B04A14\"";

#[test]
fn k_distance_chart_has_axes_curve_knee_and_eps() {
    let svg = kdist_svg(&kdist_data(300), (640, 320)).unwrap();
    let t: Vec<String> = texts(&svg).into_iter().map(|t| t.0).collect();
    for label in [
        "events, sorted from the most isolated",
        "distance to 4th nearest event (m)",
        "suggested eps 120 m",
        "eps in use 150 m",
    ] {
        assert!(t.iter().any(|x| x == label), "missing {label:?} in {t:?}");
    }
    let curve = tags(&svg, "polyline", &[KCURVE]);
    assert_eq!(curve.len(), 1);
    let p = points(curve[0]);
    assert_eq!(p.len(), 301, "every point, then the last once more");
    assert!(
        p.windows(2).all(|w| w[1].1 >= w[0].1),
        "sorted largest first: y grows downwards"
    );
    // The eps line across the plot and its legend sample.
    assert_eq!(tags(&svg, "polyline", &[EPS]).len(), 2);
    // Knee marker and its legend sample.
    assert_eq!(tags(&svg, "circle", &[KNEE]).len(), 2);

    // Without a knee or an eps: only the curve.
    let mut bare = kdist_data(300);
    bare.knee_index = None;
    bare.eps_m = None;
    bare.min_samples = 1;
    let svg = kdist_svg(&bare, (640, 320)).unwrap();
    assert!(texts(&svg).iter().any(|t| t.0 == "distance (m)"));
    assert_eq!(tags(&svg, "polyline", &[EPS]).len(), 0);
    assert_eq!(tags(&svg, "circle", &[KNEE]).len(), 0);
}

#[test]
fn k_distance_chart_thins_long_curves_and_scales() {
    let svg = kdist_svg(&kdist_data(100_000), (640, 320)).unwrap();
    let n = points(tags(&svg, "polyline", &[KCURVE])[0]).len();
    assert!((2000..=2002).contains(&n), "{n} vertices");
    // Counts along the axis in thousands ("20k"), not six-digit numbers that
    // run into each other and off the right edge.
    let t: Vec<String> = texts(&svg).into_iter().map(|t| t.0).collect();
    assert!(t.iter().any(|x| x == "20k" || x == "40k"), "{t:?}");
    assert!(
        !t.iter()
            .any(|x| x.len() >= 5 && x.chars().all(|c| c.is_ascii_digit())),
        "{t:?}"
    );
    let mut two = kdist_data(300);
    two.scale = Some(2.0);
    let svg2 = kdist_svg(&two, (1280, 640)).unwrap();
    let svg1 = kdist_svg(&kdist_data(300), (640, 320)).unwrap();
    assert_eq!(
        tags(&svg1, "polyline", &[KCURVE, "stroke-width=\"2\""]).len(),
        1
    );
    assert_eq!(
        tags(&svg2, "polyline", &[KCURVE, "stroke-width=\"4\""]).len(),
        1
    );
    let size = |svg: &str| {
        texts(svg)
            .into_iter()
            .find(|t| t.0 == "eps in use 150 m")
            .unwrap()
            .1
    };
    assert!((size(&svg2) / size(&svg1) - 2.0).abs() < 1e-9);
}

#[test]
fn empty_k_distances_are_an_error() {
    let e = kdist_svg(&KDistanceChartData::default(), (300, 200)).unwrap_err();
    assert!(matches!(e, PlotError::Data(_)));
}
