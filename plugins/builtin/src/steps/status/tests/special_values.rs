//! Infinite estimates and bounds in `status`: what an infinite Ne keeps, one finding per null or
//! `"inf"` column, and an interval ∞–∞ reported as not estimable.

use super::*;

/// An infinite Ne with a finite lower bound keeps all heterozygosity and never loses 10%
/// (Wright 1931: the factor is 1); the finding names exactly the columns that are "inf".
#[test]
fn infinite_ne_keeps_everything() {
    let mut earlier = earlier_results();
    earlier[1].tables.get_mut("estimates").unwrap().rows[1][4] = Cell::Inf;
    earlier[1].tables.get_mut("estimates").unwrap().rows[1][10] = Cell::Inf;
    let output = run_status(&earlier, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!(number(pops, north, "h_retained"), Some(1.0));
    assert_eq!(number(pops, north, "f_drift"), Some(0.0));
    assert_eq!(crate::test_support::cell(pops, north, "generations_to_lose_10"), &Cell::Inf);
    assert_eq!(text(pops, north, "category"), Some("500 or more"));
    let infinite = findings_with(&output, "infinite-ne");
    assert!(
        infinite[0].message.ends_with(": North 2020 (ne, ne_high, ne_nc, generations_to_lose_10, years_to_lose_10)"),
        "{}",
        infinite[0].message
    );
}

/// A finding about special values names the column that carries them: South (600; 300–∞) has
/// only an infinite ne_high, so it is listed under `infinite-upper-bound`, never as if its
/// ne_nc (finite, 0.12) were "inf".
#[test]
fn special_value_findings_follow_the_columns() {
    let output = default_run();
    assert!(findings_with(&output, "infinite-ne").is_empty());
    let upper = findings_with(&output, "infinite-upper-bound");
    assert_eq!(upper.len(), 1);
    assert!(upper[0].message.ends_with(": South 2020"), "{}", upper[0].message);
    assert!(upper[0].message.contains("ne_nc and the projection at the point stay finite"), "{}", upper[0].message);
    let pops = table(&output, "populations");
    assert_close(number(pops, row_with(pops, "population", "South"), "ne_nc").unwrap(), 0.12, 1e-12);
}

/// An interval ∞–∞ is not estimable (common practice: it bounds nothing): category "not
/// estimable", no projection, not counted in the indicator, and a warning that does not call the
/// lower bound informative.
#[test]
fn an_infinite_lower_bound_is_not_estimable() {
    let mut earlier = earlier_results();
    let row = &mut earlier[1].tables.get_mut("estimates").unwrap().rows[1];
    for column in [4, 9, 10] {
        row[column] = Cell::Inf;
    }
    let output = run_status(&earlier, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!(text(pops, north, "category"), Some("not estimable"));
    for column in ["h_retained", "f_drift", "f_drift_high", "ne_nc", "generations_to_lose_10", "interval_reaches"] {
        assert_eq!(crate::test_support::cell(pops, north, column), &Cell::Null, "{column}");
    }
    assert!(
        !(0..table(&output, "projection").rows.len())
            .any(|r| text(table(&output, "projection"), r, "population") == Some("North"))
    );
    assert_eq!(number(table(&output, "indicator"), 0, "with_estimate"), Some(1.0));
    let unbounded = findings_with(&output, "not-estimable");
    assert_eq!(unbounded.len(), 1);
    assert!(unbounded[0].message.ends_with(": North 2020"), "{}", unbounded[0].message);
    assert!(!unbounded[0].message.contains("informative"));
    assert!(findings_with(&output, "infinite-ne").is_empty());
}
