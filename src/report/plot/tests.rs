//! Tests of the line charts: layout, scales, skipped data and the errors.

use super::*;

fn curve_chart() -> Chart {
    let sigmas: Vec<f64> = (0..40).map(|k| 10f64.powf(-2.0 + k as f64 * 0.1)).collect();
    Chart {
        title: "DC over fault spread".into(),
        x_label: "fault spread sigma [mV]".into(),
        y_label: "coverage [%]".into(),
        x_scale: Scale::Log,
        y_scale: Scale::Linear,
        series: vec![
            Series {
                label: "dc_all_dangerous <a&b>".into(),
                points: sigmas
                    .iter()
                    .map(|s| (*s, 100.0 - 5.0 / (1.0 + s)))
                    .collect(),
            },
            Series {
                label: "dc".into(),
                points: sigmas
                    .iter()
                    .map(|s| (*s, 60.0 + 30.0 * s.tanh()))
                    .collect(),
            },
        ],
        reference_lines: vec![
            ReferenceLine {
                y: 60.0,
                label: "DC 60 %".into(),
            },
            ReferenceLine {
                y: 90.0,
                label: "DC 90 %".into(),
            },
            ReferenceLine {
                y: 99.0,
                label: "DC 99 %".into(),
            },
        ],
        markers: vec![Marker {
            x: 0.3,
            y: 96.0,
            label: "worst case".into(),
        }],
        caption: Vec::new(),
    }
}

/// Parses the SVG with roxmltree (an independent XML parser) and returns all text.
fn texts(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).expect("the SVG is well-formed XML");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(|t| t.trim().to_string()))
        .collect()
}

#[test]
fn svg_parses_and_holds_every_label() {
    let chart = curve_chart();
    let svg = render_svg(&chart, 720, 420).expect("renders");
    let t = texts(&svg);
    for label in [
        "DC over fault spread",
        "fault spread sigma [mV]",
        "coverage [%]",
        "dc_all_dangerous <a&b>",
        "dc",
        "DC 60 %",
        "DC 90 %",
        "DC 99 %",
        "worst case",
    ] {
        assert!(
            t.iter().any(|s| s == label),
            "missing label {label:?} in {t:?}"
        );
    }
}

#[test]
fn a_caption_is_wrapped_under_the_legend_and_every_word_is_kept() {
    let mut chart = curve_chart();
    let words: Vec<String> = (0..60).map(|i| format!("zq{i}")).collect();
    chart.caption = vec![words.join(" ")];
    let svg = render_svg(&chart, 400, 420).expect("renders");
    let lines: Vec<String> = texts(&svg)
        .into_iter()
        .filter(|t| t.starts_with("zq"))
        .collect();
    assert!(lines.len() >= 2, "wrapped: {lines:?}");
    let kept: Vec<&str> = lines.iter().flat_map(|l| l.split_whitespace()).collect();
    assert_eq!(kept, words.iter().map(String::as_str).collect::<Vec<_>>());
    // The smallest size still renders or says why, never panics.
    let small = std::panic::catch_unwind(|| render_svg(&chart, MIN_WIDTH, MIN_HEIGHT));
    assert!(small.is_ok());
}

#[test]
fn every_scale_combination_renders() {
    for xs in [Scale::Linear, Scale::Log] {
        for ys in [Scale::Linear, Scale::Log] {
            let mut chart = curve_chart();
            chart.x_scale = xs;
            chart.y_scale = ys;
            let svg = render_svg(&chart, 500, 300).expect("renders");
            texts(&svg);
        }
    }
}

#[test]
fn series_differ_by_more_than_colour() {
    // Colour only as a second cue: the first two series use different dash patterns
    // and point shapes.
    assert_ne!(dash_of(0), dash_of(1));
    assert_ne!(glyph_of(0), glyph_of(1));
    let svg = render_svg(&curve_chart(), 600, 360).expect("renders");
    // The solid first series is one polyline; the dashed second is many pieces.
    let doc = roxmltree::Document::parse(&svg).expect("xml");
    let polylines = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .count();
    assert!(
        polylines > 10,
        "dashed lines are drawn as pieces: {polylines}"
    );
}

#[test]
fn log_axes_skip_non_positive_and_non_finite_values() {
    let chart = Chart {
        title: "t".into(),
        x_label: "x".into(),
        y_label: "y".into(),
        x_scale: Scale::Log,
        y_scale: Scale::Log,
        series: vec![Series {
            label: "s".into(),
            points: vec![
                (0.0, 1.0),
                (-1.0, 1.0),
                (1.0, 0.0),
                (f64::NAN, 1.0),
                (f64::INFINITY, 2.0),
                (1.0, 1e-3),
                (10.0, 1e-2),
            ],
        }],
        reference_lines: vec![ReferenceLine {
            y: -1.0,
            label: "skipped".into(),
        }],
        markers: vec![Marker {
            x: 0.0,
            y: 1.0,
            label: "skipped too".into(),
        }],
        caption: Vec::new(),
    };
    let svg = render_svg(&chart, 400, 300).expect("renders the two usable points");
    let t = texts(&svg);
    assert!(!t.iter().any(|s| s == "skipped" || s == "skipped too"));
}

#[test]
fn no_drawable_data_is_an_error_not_a_panic() {
    let mut chart = curve_chart();
    chart.series = vec![Series {
        label: "empty".into(),
        points: vec![],
    }];
    chart.markers.clear();
    assert!(matches!(
        render_svg(&chart, 400, 300),
        Err(PlotError::NoData { .. })
    ));
    chart.series = vec![Series {
        label: "nan".into(),
        points: vec![(f64::NAN, f64::NAN), (-1.0, 2.0)],
    }];
    chart.x_scale = Scale::Log;
    assert!(matches!(
        render_svg(&chart, 400, 300),
        Err(PlotError::NoData { .. })
    ));
    chart.series.clear();
    assert!(render_svg(&chart, 400, 300).is_err());
}

#[test]
fn degenerate_and_extreme_data_do_not_panic() {
    let single = |points: Vec<(f64, f64)>, scale: Scale| Chart {
        title: "t".into(),
        x_label: "x".into(),
        y_label: "y".into(),
        x_scale: scale,
        y_scale: scale,
        series: vec![Series {
            label: "s".into(),
            points,
        }],
        reference_lines: vec![],
        markers: vec![],
        caption: Vec::new(),
    };
    assert!(render_svg(&single(vec![(1.0, 1.0)], Scale::Linear), 400, 300).is_ok());
    assert!(render_svg(&single(vec![(0.0, 0.0)], Scale::Linear), 400, 300).is_ok());
    assert!(render_svg(&single(vec![(5.0, 5.0)], Scale::Log), 400, 300).is_ok());
    let huge = single(vec![(-f64::MAX, 0.0), (f64::MAX, 1.0)], Scale::Linear);
    assert!(matches!(
        render_svg(&huge, 400, 300),
        Err(PlotError::Range { .. })
    ));
    let wide = single(vec![(1e-300, 1e-300), (1e300, 1e300)], Scale::Log);
    assert!(matches!(
        render_svg(&wide, 400, 300),
        Err(PlotError::Range { .. })
    ));
    let tail = single(vec![(1e-40, 1e-40), (1e40, 1e40)], Scale::Log);
    assert!(render_svg(&tail, 400, 300).is_ok());
    let narrow = single(vec![(1.0, 1.0), (1.0 + 1e-15, 1.0 + 1e-15)], Scale::Linear);
    assert!(render_svg(&narrow, 400, 300).is_ok());
    let tiny = single(vec![(1e-310, 0.0), (2e-310, 1e-310)], Scale::Linear);
    let _ = render_svg(&tiny, 400, 300);
}

#[test]
fn sizes_out_of_range_are_refused() {
    let chart = curve_chart();
    assert!(matches!(
        render_svg(&chart, 10, 300),
        Err(PlotError::Size { .. })
    ));
    assert!(matches!(
        render_svg(&chart, 400, 100_000),
        Err(PlotError::Size { .. })
    ));
}

#[test]
fn tick_labels_are_short() {
    assert_eq!(tick_label(0.0), "0");
    assert_eq!(tick_label(0.5), "0.5");
    assert_eq!(tick_label(100.0), "100");
    assert_eq!(tick_label(1e-6), "1e-6");
    assert_eq!(tick_label(2.5e7), "2.5e7");
}
