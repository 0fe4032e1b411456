//! Tests of the charts.

use super::*;

fn lines() -> Figure {
    Figure::Lines {
        series: vec![
            Series {
                name: "North".into(),
                style: 0,
                points: vec![(2018.0, 0.61), (2021.0, 0.60), (2024.0, 0.57)],
                slope: Some(-0.0065),
                intervals: vec![],
            },
            Series {
                name: "South & <co>".into(),
                style: 1,
                points: vec![(2018.0, 0.70), (2024.0, 0.71)],
                slope: None,
                intervals: vec![],
            },
        ],
        x_label: "Year".into(),
        y_label: "He".into(),
        log_y: false,
        y_from_zero: false,
    }
}

#[test]
fn charts_are_svg_in_the_document_face_and_deterministic() {
    let first = render("he", &lines()).unwrap();
    assert!(first.starts_with("<svg"), "{}", &first[..first.len().min(80)]);
    assert!(first.contains("Libertinus Serif"));
    assert!(first.contains("South &amp; &lt;co&gt;"), "labels are escaped as XML text");
    assert_eq!(first, render("he", &lines()).unwrap());
}

#[test]
fn every_kind_draws_including_infinite_values() {
    let intervals = Figure::IntervalsAgainstThresholds {
        points: vec![
            IntervalPoint { label: "A".into(), style: 0, value: 48.0, low: Some(30.0), high: Some(95.0) },
            IntervalPoint {
                label: "B".into(),
                style: 1,
                value: f64::INFINITY,
                low: Some(800.0),
                high: Some(f64::INFINITY),
            },
        ],
        thresholds: vec![50.0, 500.0],
        y_label: "Ne".into(),
    };
    let scatter = Figure::Scatter {
        points: vec![(10.0, 0.01), (30.0, 0.04), (50.0, 0.05)],
        labels: vec!["A–B".into(), "A–C".into(), "B–C".into()],
        fit: Some((-0.05, 0.025)),
        log_x: true,
        x_label: "km".into(),
        y_label: "FST/(1−FST)".into(),
    };
    for (name, figure) in [("ne", intervals), ("ibd", scatter)] {
        let svg = render(name, &figure).unwrap();
        assert!(svg.contains("</svg>"), "{name}");
    }
}

#[test]
fn an_infinite_estimate_is_marked_at_the_top_edge_not_dropped() {
    let figure = |last: f64| Figure::Lines {
        series: vec![Series {
            name: "North".into(),
            style: 0,
            points: vec![(2018.0, 120.0), (2021.0, 90.0), (2024.0, last)],
            slope: None,
            intervals: vec![(2018.0, 60.0, 400.0), (2024.0, 70.0, f64::INFINITY)],
        }],
        x_label: "Sampling year".into(),
        y_label: "Ne (LD)".into(),
        log_y: true,
        y_from_zero: false,
    };
    let svg = render("ne-years", &figure(f64::INFINITY)).unwrap();
    assert!(svg.contains('∞'), "the infinite estimate is marked");
    assert!(!render("ne-years", &figure(60.0)).unwrap().contains('∞'), "a finite series has no mark");
}

#[test]
fn log_bounds_cover_values_and_thresholds() {
    assert_eq!(log_bounds([48.0, 95.0, 500.0, f64::INFINITY].into_iter()), (10.0, 1000.0));
    assert_eq!(log_bounds(std::iter::empty()), (1.0, 10_000.0));
}
