//! The genetic-diversity indicator of `status`: the share of populations above Ne 500, by point
//! estimate and by lower bound, strict at exactly 500.

use super::super::tables::INDICATOR_COLUMNS;
use super::*;

/// Hoban et al. (2020) and the GBF headline indicator A.4 ("the proportion of populations
/// within species with an effective population size > 500", metadata factsheet 2023): the count
/// is strict. North (120; 80–200) and South (600; 300–∞) have estimates, West none: at 50, 2 of 2
/// by point and lower bound; at 500, 1 of 2 by point (South) and 0 by lower bound.
#[test]
fn indicator_counts_point_and_lower_bound() {
    let output = default_run();
    let indicator = table(&output, "indicator");
    assert_eq!(indicator.rows.len(), 2);
    let row = |r: usize| INDICATOR_COLUMNS.map(|c| number(indicator, r, c));
    assert_eq!(row(0), [Some(50.0), Some(3.0), Some(2.0), Some(2.0), Some(1.0), Some(2.0), Some(1.0)]);
    assert_eq!(row(1), [Some(500.0), Some(3.0), Some(2.0), Some(1.0), Some(0.5), Some(0.0), Some(0.0)]);
}

/// At exactly 500 a population is not "> 500" (GBF indicator A.4; Hoban et al. 2020), by
/// point or by lower bound, though its category band (met at equality) is "500 or more"; 500.5
/// counts.
#[test]
fn indicator_threshold_is_strict_at_exactly_500() {
    let mut results = earlier_results();
    let estimates = results[2].tables.get_mut("estimates").unwrap();
    estimates.rows[1] = vec![t("South"), Cell::Int(2015), Cell::Int(2020), n(500.0), n(500.0), n(800.0)];
    let output = run_status(&results, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let indicator = table(&output, "indicator");
    assert_eq!(
        (number(indicator, 1, "above_point"), number(indicator, 1, "above_lower_bound")),
        (Some(0.0), Some(0.0))
    );
    let pops = table(&output, "populations");
    assert_eq!(text(pops, row_with(pops, "population", "South"), "category"), Some("500 or more"));
    let estimates = results[2].tables.get_mut("estimates").unwrap();
    estimates.rows[1] = vec![t("South"), Cell::Int(2015), Cell::Int(2020), n(500.5), n(500.5), n(800.0)];
    let output = run_status(&results, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let indicator = table(&output, "indicator");
    assert_eq!(
        (number(indicator, 1, "above_point"), number(indicator, 1, "above_lower_bound")),
        (Some(1.0), Some(1.0))
    );
}
