//! The threshold bands of `status`: Ne against 50/500 and 100/1000, the Ne that retains 90 % of
//! heterozygosity, and which thresholds the interval reaches beside the point's band.

use super::*;

/// Soulé et al. (1986) formula, hand calculation: the Ne keeping 90% of heterozygosity for 100
/// years is 118.89 with L = 4 and 47.71 with L = 10; by construction Wright's (1931) decay at
/// that Ne over T/L generations leaves exactly 0.9.
#[test]
fn ne_to_retain_90_percent_matches_check_values() {
    assert_close(ne_to_retain(0.9, 100.0, 4.0), 118.89, 0.005);
    assert_close(ne_to_retain(0.9, 100.0, 10.0), 47.71, 0.005);
    assert_close(heterozygosity_retained(ne_to_retain(0.9, 100.0, 4.0), 25.0), 0.9, 1e-12);
}

fn label(ne: Option<f64>, thresholds: &[f64]) -> String {
    categorise(ne, true, thresholds).label(&default_labels(thresholds))
}

/// The category is the band of the point (common practice: a value equal to a threshold meets
/// it, Franklin 1980 asking for "at least 50"), at, above and below both thresholds of 50/500.
#[test]
fn categories_against_50_500() {
    let th = [50.0, 500.0];
    assert_eq!(label(Some(49.9), &th), "below 50");
    assert_eq!(label(Some(50.0), &th), "50–500");
    assert_eq!(label(Some(499.0), &th), "50–500");
    assert_eq!(label(Some(500.0), &th), "500 or more");
    assert_eq!(label(Some(f64::INFINITY), &th), "500 or more");
    assert_eq!(label(None, &th), "unknown");
    assert_eq!(categorise(Some(f64::INFINITY), false, &th).label(&default_labels(&th)), "not estimable");
}

/// The same logic with 100/1000 (Frankham, Bradshaw & Brook 2014).
#[test]
fn categories_against_100_1000() {
    let th = [100.0, 1000.0];
    assert_eq!(default_labels(&th), vec!["below 100", "100–1000", "1000 or more"]);
    assert_eq!(label(Some(99.0), &th), "below 100");
    assert_eq!(label(Some(100.0), &th), "100–1000");
    assert_eq!(label(Some(1000.0), &th), "1000 or more");
    // 60 is "50–500" with 50/500 but "below 100" here.
    assert_eq!(label(Some(60.0), &th), "below 100");
}

/// The interval reaches a threshold T when low < T ≤ high (common practice: values on both
/// sides of T are then compatible with the data); the point's band is reported apart.
#[test]
fn the_interval_reaches_thresholds_beside_the_point_band() {
    let th = [50.0, 500.0];
    let reached = |low: f64, high: f64| reached_text(&thresholds_reached((low, high), &th), &th);
    assert_eq!(reached(11.0, f64::INFINITY), "50 and 500");
    assert_eq!(reached(30.0, 50.0), "50");
    assert_eq!(reached(50.0, 80.0), "none");
    assert_eq!(reached(400.0, 600.0), "500");
    assert_eq!(reached(600.0, f64::INFINITY), "none");
    assert_eq!(
        interval_note((11.0, f64::INFINITY), &th),
        "the 95 % interval 11–∞ does not exclude 50 or 500: Ne may lie on either side"
    );
    assert_eq!(interval_note((80.123, 199.7), &th), "the 95 % interval 80–200 lies between 50 and 500");
    assert_eq!(interval_note((3.456, 9.0), &th), "the 95 % interval 3.5–9 lies below 50");
    assert_eq!(interval_note((500.0, 900.0), &th), "the 95 % interval 500–900 lies at or above 500");
}

/// A point estimate of 30 with the interval 11–∞ is "below 50", and its interval reaches 50 and
/// 500 (it does not hide behind "straddles 50 and 500").
#[test]
fn a_low_point_with_an_open_interval_keeps_its_band() {
    let mut results = earlier_results();
    let estimates = results[1].tables.get_mut("estimates").unwrap();
    estimates.rows[1] = ld_row("North", 2020, n(0.02), 40.0, n(30.0), [None, Some((11.0, f64::INFINITY)), None]);
    let output = run_status(&results, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!(text(pops, north, "category"), Some("below 50"));
    assert_eq!(text(pops, north, "interval_reaches"), Some("50 and 500"));
    assert_eq!(
        text(pops, north, "interval_note"),
        Some("the 95 % interval 11–∞ does not exclude 50 or 500: Ne may lie on either side")
    );
    assert_eq!(text(pops, north, "ci_method"), Some("jackknife"));
}
