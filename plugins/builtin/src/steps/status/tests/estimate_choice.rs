//! Which Ne estimate `status` reads: the LD criterion that follows the sample size, and the same
//! choice as `trend` makes from the same earlier results.

use super::*;

/// Waples & Do (2010, Evol Appl 3:244–262): at harmonic-mean S ≤ 25 the no-singletons row
/// represents the group, above it the Pcrit-0.02 row; an info finding names population, year,
/// S and criterion, and a named criterion in `prefer` still wins.
#[test]
fn the_ld_criterion_follows_the_sample_size() {
    let mut results = earlier_results();
    let estimates = results[1].tables.get_mut("estimates").unwrap();
    for row in &mut estimates.rows {
        row[3] = n(18.0);
    }
    let singletons = ld_row("North", 2020, t("singletons"), 18.0, n(60.0), [None, Some((40.0, 95.0)), None]);
    estimates.rows.push(singletons);
    let info = assessment(&[50.0, 500.0], Some(4.0));
    let output = run_status(&results, &info, json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!((text(pops, north, "ne_method"), number(pops, north, "ne")), (Some("ld:singletons"), Some(60.0)));
    assert_eq!(number(pops, north, "s"), Some(18.0));
    let criterion = findings_with(&output, "ld-criterion");
    assert_eq!(criterion.len(), 1);
    assert_eq!(criterion[0].location, Where::group("North", 2020));
    let message = &criterion[0].message;
    assert!(message.starts_with("North 2020: the LD estimate uses no singletons at harmonic-mean S = 18"), "{message}");
    assert!(message.contains("Waples & Do (2010)"), "{message}");
    let output = run_status(&results, &info, json!({"prefer": ["ld:0.02"]})).unwrap();
    let pops = table(&output, "populations");
    assert_eq!(text(pops, row_with(pops, "population", "North"), "ne_method"), Some("ld:0.02"));
    assert!(findings_with(&output, "ld-criterion")[0].message.contains("as `prefer` names it"));
    // Without the no-singletons row the rule cannot be followed: a warning says what to add.
    let output = run_status(&earlier_results_at_s(18.0), &info, json!({})).unwrap();
    let missing = findings_with(&output, "ld-criterion-missing");
    assert_eq!(missing.len(), 1);
    assert!(missing[0].message.contains("exclude_singletons = true"), "{}", missing[0].message);
}

fn earlier_results_at_s(s: f64) -> Vec<StepResult> {
    let mut results = earlier_results();
    for row in &mut results[1].tables.get_mut("estimates").unwrap().rows {
        row[3] = n(s);
    }
    results
}

/// A mixed example: A (S = 18) and B (S = 60, two years) have LD rows, C temporal rows (two
/// ending in 2020, one in 2015), D an `ne-hetx` row, E LD rows without the criterion the rule
/// asks for. `status` (default `prefer`) and `trend` (`ne:<step>`, default `ld_pcrit`) choose
/// through the same SDK function, so for every population status's Ne, year and method equal
/// trend's point of that step in that year (common practice: one representative per group).
#[test]
fn status_and_trend_choose_the_same_estimate() {
    let matrix = MatrixBuilder::new(&["L1"])
        .sample("a", "A", 2020, &["1/2"])
        .sample("b1", "B", 2018, &["1/2"])
        .sample("b2", "B", 2020, &["1/2"])
        .sample("c1", "C", 2010, &["1/2"])
        .sample("c2", "C", 2015, &["1/2"])
        .sample("c3", "C", 2020, &["1/2"])
        .sample("d", "D", 2020, &["1/2"])
        .sample("e", "E", 2020, &["1/2"])
        .build();
    let jack = |ne: f64| [None, Some((ne / 2.0, ne * 3.0)), None];
    let mut ld_rows = Vec::new();
    for (population, year, s) in [("A", 2020, 18.0), ("B", 2018, 60.0), ("B", 2020, 60.0)] {
        ld_rows.push(ld_row(population, year, n(0.05), s, n(400.0), jack(400.0)));
        ld_rows.push(ld_row(population, year, n(0.02), s, n(250.0), jack(250.0)));
        ld_rows.push(ld_row(population, year, t("singletons"), s, n(90.0), jack(90.0)));
    }
    ld_rows.push(ld_row("E", 2020, n(0.05), 12.0, n(70.0), jack(70.0)));
    ld_rows.push(ld_row("E", 2020, n(0.02), 12.0, n(65.0), jack(65.0)));
    let ld = earlier("ld", "ne-ld", "estimates", &LD_COLUMNS, ld_rows);
    let temporal = temporal_result(vec![
        vec![t("C"), Cell::Int(2010), Cell::Int(2015), n(700.0), n(300.0), Cell::Inf],
        vec![t("C"), Cell::Int(2010), Cell::Int(2020), n(500.0), n(250.0), n(2000.0)],
        vec![t("C"), Cell::Int(2015), Cell::Int(2020), n(350.0), n(150.0), n(1500.0)],
    ]);
    let hetx = earlier(
        "hx",
        "ne-hetx",
        "estimates",
        &["population", "year", "d", "ne", "ne_low", "ne_high"],
        vec![vec![t("D"), Cell::Int(2020), n(0.05), n(10.476), n(6.0), n(40.0)]],
    );
    let results = [ld, temporal, hetx];
    let status = run_on(&matrix, &results, &assessment(&[50.0, 500.0], Some(2.0)), json!({})).unwrap();
    let trend = run_trend(&results);
    let (pops, series) = (table(&status, "populations"), table(&trend, "series"));
    let expected = [
        ("A", "ld", "ld:singletons"),
        ("B", "ld", "ld:0.02"),
        ("C", "temp", "temporal"),
        ("D", "hx", "hetx"),
        ("E", "ld", "ld:0.05"),
    ];
    for (population, step, method) in expected {
        let r = row_with(pops, "population", population);
        assert_eq!(text(pops, r, "ne_method"), Some(method), "{population}");
        let year = number(pops, r, "ne_year").unwrap();
        let point = (0..series.rows.len())
            .find(|&p| {
                text(series, p, "population") == Some(population)
                    && text(series, p, "metric") == Some(&format!("ne:{step}"))
                    && number(series, p, "year") == Some(year)
            })
            .unwrap_or_else(|| panic!("no trend point for {population} {year}"));
        assert_eq!(number(series, point, "value"), number(pops, r, "ne"), "{population}");
        assert_eq!(text(series, point, "ne_method"), Some(method), "{population}");
    }
    // C: the shortest, latest interval ending in 2020 (2015–2020), not the longest.
    assert_eq!(number(pops, row_with(pops, "population", "C"), "ne"), Some(350.0));
}

fn run_trend(earlier: &[StepResult]) -> StepOutput {
    use crate::steps::trend;
    let resolved = trend::descriptor().resolve(&BTreeMap::from([("metrics".into(), json!(["ne"]))])).unwrap();
    let m = matrix();
    let (samples, loci) = (m.all_sample_indices(), m.all_locus_indices());
    let info = AssessmentInfo::default();
    let ctx =
        StepContext::new(m.full_view(&samples, &loci), &resolved, Seed(1)).with_earlier(earlier).with_assessment(&info);
    trend::Trend.run(&ctx).unwrap()
}
