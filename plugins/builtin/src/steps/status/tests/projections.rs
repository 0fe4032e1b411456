//! The projections of `status`: heterozygosity retained and drift inbreeding over generations,
//! fitness retained through lethal equivalents, and what they need (generation time) and ignore (FIS).

use super::*;

/// The cost of inbreeding, by hand from Morton, Crow & Muller (1956), W_t/W₀ = exp(−B·ΔF) with
/// B = 2B/2 lethal equivalents per gamete and ΔF = f_drift: North (f_drift 0.099121 at Ne 120,
/// 0.145074 at 80, 0.060660 at 200) with the default 12 diploid lethal equivalents keeps
/// exp(−6·0.099121) = 0.551714, at the lower Ne bound 0.418766, at the upper 0.694917; with 3.1
/// and 30.3 (the default range) 0.857583 and 0.222755. West has no Ne, so no cost; the
/// finding says that B varies and purging is not modelled.
#[test]
fn fitness_retained_follows_drift_inbreeding_and_lethal_equivalents() {
    let output = default_run();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_close(number(pops, north, "fitness_retained").unwrap(), 0.551714, 1e-6);
    assert_close(number(pops, north, "fitness_retained_low").unwrap(), 0.418766, 1e-6);
    assert_close(number(pops, north, "fitness_retained_high").unwrap(), 0.694917, 1e-6);
    assert_close(number(pops, north, "fitness_retained_b_low").unwrap(), 0.857583, 1e-6);
    assert_close(number(pops, north, "fitness_retained_b_high").unwrap(), 0.222755, 1e-6);
    let west = row_with(pops, "population", "West");
    assert_eq!(number(pops, west, "fitness_retained"), None);
    let caution = findings_with(&output, "inbreeding-depression");
    assert_eq!(caution.len(), 1);
    assert!(caution[0].message.contains("purging") && caution[0].message.contains("12"), "{}", caution[0].message);
}

/// STYLE: a range of lethal equivalents out of order is refused with a help line.
#[test]
fn lethal_equivalents_out_of_order_are_refused() {
    let error = run_on(
        &matrix(),
        &earlier_results(),
        &assessment(&[50.0, 500.0], Some(4.0)),
        json!({"lethal_equivalents": 2.0, "lethal_equivalents_low": 3.1}),
    )
    .unwrap_err();
    assert_eq!(
        error.message,
        "parameters `lethal_equivalents_low` = 3.1, `lethal_equivalents` = 2 and `lethal_equivalents_high` = 30.3 must \
         be in ascending order\n  help: give a range around the value used, for example 3.1, 12 and 30.3"
    );
}

/// Wright (1931): F_drift(t) = 1 − (1 − 1/(2Ne))ᵗ is by construction the share of
/// heterozygosity lost, so h_retained + f_drift = 1 at the point, and at each bound with the
/// bounds swapped (the lower Ne gives the higher F_drift); likewise in `projection`.
#[test]
fn retained_heterozygosity_and_drift_inbreeding_add_up_to_one() {
    let output = default_run();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    let value = |column: &str| number(pops, north, column).unwrap();
    assert_close(value("h_retained") + value("f_drift"), 1.0, 1e-15);
    assert_close(value("h_retained_low") + value("f_drift_high"), 1.0, 1e-15);
    assert_close(value("h_retained_high") + value("f_drift_low"), 1.0, 1e-15);
    assert!(value("f_drift_low") < value("f_drift") && value("f_drift") < value("f_drift_high"));
    let projection = table(&output, "projection");
    for r in 0..projection.rows.len() {
        let sum = number(projection, r, "h_retained").unwrap() + number(projection, r, "f_drift").unwrap();
        assert_close(sum, 1.0, 1e-15);
    }
}

/// No projection may start from FIS: changing FIS (−0.049 → 0.3) changes the fis columns and
/// nothing else, neither in `populations` nor in `projection` (Wright 1951: FIS is within-sample
/// non-random mating, not drift from today's population). No column f0 or f_projected remains.
#[test]
fn projections_do_not_depend_on_fis() {
    let info = assessment(&[50.0, 500.0], Some(4.0));
    let with_fis = |fis: f64| {
        let mut results = earlier_results();
        let by_group = results[0].tables.get_mut("by_group").unwrap();
        by_group.rows[1][5] = n(fis);
        run_status(&results, &info, json!({})).unwrap()
    };
    let (low, high) = (with_fis(-0.049), with_fis(0.3));
    let (a, b) = (table(&low, "populations"), table(&high, "populations"));
    let north = row_with(a, "population", "North");
    assert_eq!((number(a, north, "fis"), number(b, north, "fis")), (Some(-0.049), Some(0.3)));
    for (i, column) in a.columns.iter().enumerate().filter(|(_, c)| c.as_str() != "fis") {
        assert_eq!(a.rows[north][i], b.rows[north][i], "{column} follows FIS");
    }
    assert_eq!(table(&low, "projection"), table(&high, "projection"));
    for name in ["populations", "projection"] {
        let columns = &table(&low, name).columns;
        assert!(!columns.iter().any(|c| c == "f0" || c == "f_projected"), "{name}: {columns:?}");
    }
}

/// The projection has one point per generation from 0 to 25 (L = 4, T = 100), starting at
/// H = 1 and ending at the population's h_retained; years advance by L.
#[test]
fn projection_curve_per_generation() {
    let output = default_run();
    let projection = table(&output, "projection");
    assert_eq!(projection.columns, ["population", "generation", "years_ahead", "year", "h_retained", "f_drift"]);
    let north: Vec<usize> =
        (0..projection.rows.len()).filter(|&r| text(projection, r, "population") == Some("North")).collect();
    assert_eq!(north.len(), 26);
    let (first, last) = (north[0], north[25]);
    assert_eq!(number(projection, first, "h_retained"), Some(1.0));
    assert_eq!(number(projection, first, "f_drift"), Some(0.0));
    assert_eq!(number(projection, last, "generation"), Some(25.0));
    assert_eq!(number(projection, last, "year"), Some(2120.0));
    assert_eq!(number(projection, last, "years_ahead"), Some(100.0));
    assert_close(number(projection, last, "h_retained").unwrap(), 0.900879, 1e-6);
    let horizon = table(&output, "horizon");
    assert_close(number(horizon, 0, "ne_required").unwrap(), 118.89, 0.005);
    // A short generation time: 200 generations over 100 years, so one point per 5 years.
    assert_eq!(projection_points(200.0, 0.5).len(), 21);
    assert_eq!(projection_points(2.5, 40.0), vec![0.0, 1.0, 2.0, 2.5]);
}

/// Without a generation time the projection is empty and a finding says how to fix it.
#[test]
fn missing_generation_time_is_a_finding() {
    let output = run_status(&earlier_results(), &assessment(&[50.0, 500.0], None), json!({})).unwrap();
    assert!(table(&output, "projection").rows.is_empty());
    let pops = table(&output, "populations");
    assert_eq!(number(pops, 0, "h_retained"), None);
    let missing = findings_with(&output, "no-generation-time");
    assert!(missing[0].message.contains("generation_time_years"));
}
