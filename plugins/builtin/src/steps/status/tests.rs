use std::collections::BTreeMap;

use popgauge_abi::{AssessmentInfo, Cell, GenotypeMatrix, Seed, StepStatus, Table, Where};

use super::category::{interval_note, reached_text, thresholds_reached};
use super::tables::{POPULATION_COLUMNS, projection_points};
use super::*;
use crate::stats::drift::heterozygosity_retained;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, row_with, table, text};

fn earlier(id: &str, uses: &str, name: &str, columns: &[&str], rows: Vec<Vec<Cell>>) -> StepResult {
    let mut t = Table::new(columns);
    for row in rows {
        t.push_row(row).unwrap();
    }
    StepResult {
        id: id.into(),
        uses: uses.into(),
        version: "0.1.0".into(),
        status: StepStatus::Ok,
        error: None,
        tables: [(name.to_string(), t)].into_iter().collect(),
        findings: Vec::new(),
        citations: Vec::new(),
        exclusions: Default::default(),
    }
}

fn n(x: f64) -> Cell {
    Cell::number(x)
}

fn t(s: &str) -> Cell {
    Cell::text(s)
}

/// Populations North (2015, 2020), South (2020) and West (2020), one sample each.
fn matrix() -> GenotypeMatrix {
    MatrixBuilder::new(&["L1"])
        .sample("n1", "North", 2015, &["1/2"])
        .sample("n2", "North", 2020, &["1/2"])
        .sample("s1", "South", 2020, &["1/1"])
        .sample("w1", "West", 2020, &["2/2"])
        .build()
}

const LD_COLUMNS: [&str; 11] = [
    "population",
    "year",
    "pcrit",
    "s",
    "ne",
    "ne_param_low",
    "ne_param_high",
    "ne_jack_low",
    "ne_jack_high",
    "ne_resample_low",
    "ne_resample_high",
];

/// An `ne-ld` row with all three intervals (null where `None`).
fn ld_row(population: &str, year: i64, pcrit: Cell, s: f64, ne: Cell, intervals: [Option<(f64, f64)>; 3]) -> Vec<Cell> {
    let mut row = vec![t(population), Cell::Int(year), pcrit, n(s), ne];
    for interval in intervals {
        row.push(Cell::maybe(interval.map(|i| i.0)));
        row.push(Cell::maybe(interval.map(|i| i.1)));
    }
    row
}

/// Hand-made earlier results: North has `ne-ld` estimates at Pcrit 0.05 and 0.02 in 2020 with
/// S = 40 (0.02: Ne 120, resampling CI 80–200); South only a temporal estimate 2015→2020 (600,
/// CI 300–∞); West nothing. Diversity gives FIS 0.05 (0.01–0.09) for North 2020.
fn earlier_results() -> Vec<StepResult> {
    let some = |a: f64, b: f64| Some((a, b));
    let ld = earlier(
        "ld",
        "ne-ld",
        "estimates",
        &LD_COLUMNS,
        vec![
            ld_row("North", 2020, n(0.05), 40.0, n(90.0), [some(70.0, 120.0), some(60.0, 150.0), some(45.0, 190.0)]),
            ld_row("North", 2020, n(0.02), 40.0, n(120.0), [some(100.0, 150.0), some(90.0, 170.0), some(80.0, 200.0)]),
            ld_row("North", 2015, n(0.02), 40.0, n(300.0), [None, None, None]),
        ],
    );
    let temporal = earlier(
        "temp",
        "ne-temporal",
        "estimates",
        &["population", "year_start", "year_end", "ne_fs", "ne_low", "ne_high"],
        vec![
            vec![t("South"), Cell::Int(2010), Cell::Int(2015), n(900.0), n(400.0), Cell::Inf],
            vec![t("South"), Cell::Int(2015), Cell::Int(2020), n(600.0), n(300.0), Cell::Inf],
        ],
    );
    let diversity = earlier(
        "div",
        "diversity",
        "by_group",
        &["population", "year", "he", "ho", "f", "fis", "fis_low", "fis_high"],
        vec![
            vec![t("North"), Cell::Int(2015), n(0.7), n(0.68), n(0.03), n(0.03), n(-0.01), n(0.07)],
            vec![t("North"), Cell::Int(2020), n(0.7), n(0.665), n(0.05), n(0.05), n(0.01), n(0.09)],
        ],
    );
    vec![diversity, ld, temporal]
}

fn assessment(thresholds: &[f64], generation_time: Option<f64>) -> AssessmentInfo {
    AssessmentInfo {
        generation_time_years: generation_time,
        thresholds: thresholds.to_vec(),
        populations: vec![
            PopulationInfo {
                population: "North".into(),
                census_size: Some(1000.0),
                census_year: Some(2020),
                ..Default::default()
            },
            PopulationInfo {
                population: "South".into(),
                census_size: Some(5000.0),
                census_year: None,
                ..Default::default()
            },
        ],
        ..Default::default()
    }
}

fn run_on(
    matrix: &GenotypeMatrix,
    earlier: &[StepResult],
    assessment: &AssessmentInfo,
    params: Value,
) -> Result<StepOutput, StepError> {
    let given: BTreeMap<String, Value> = params.as_object().unwrap().clone().into_iter().collect();
    let resolved = descriptor().resolve(&given).expect("test parameters are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(1))
        .with_earlier(earlier)
        .with_assessment(assessment);
    Status.run(&ctx)
}

fn run_status(earlier: &[StepResult], assessment: &AssessmentInfo, params: Value) -> Result<StepOutput, StepError> {
    run_on(&matrix(), earlier, assessment, params)
}

fn default_run() -> StepOutput {
    run_status(&earlier_results(), &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap()
}

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

/// Through the step with thresholds 50/500 and L = 4 years, T = 100 years (25 generations).
/// North: ld row at Pcrit 0.02 (S = 40 > 25), Ne 120 with the resampling interval 80–200 →
/// "50–500"; Ne/Nc = 0.12. Hand calculation of Wright's (1931) decay: H₂₅/H₀ = (1 − 1/240)²⁵ =
/// 0.900879, at 80: 0.854926, at 200: 0.939340; f_drift = 0.099121, at 200 (f_drift_low)
/// 0.060660, at 80 (f_drift_high) 0.145074; 10% lost after ln 0.9/ln(1 − 1/240) = 25.2338
/// generations = 100.935 years. FIS 0.05 (0.01–0.09) is read as diversity gives it. South:
/// temporal 600 (300–∞) → "500 or more", interval reaching 500; West: "unknown".
#[test]
fn populations_table_through_the_step() {
    let output = default_run();
    let pops = table(&output, "populations");
    assert_eq!(pops.columns, POPULATION_COLUMNS);
    assert_eq!(pops.rows.len(), 3);
    let north = row_with(pops, "population", "North");
    assert_eq!((number(pops, north, "year"), number(pops, north, "ne")), (Some(2020.0), Some(120.0)));
    assert_eq!((number(pops, north, "ne_low"), number(pops, north, "ne_high")), (Some(80.0), Some(200.0)));
    assert_eq!(text(pops, north, "ne_method"), Some("ld:0.02"));
    assert_eq!(text(pops, north, "ci_method"), Some("resampling"));
    assert_eq!(number(pops, north, "s"), Some(40.0));
    assert_eq!(text(pops, north, "category"), Some("50–500"));
    assert_eq!(text(pops, north, "interval_reaches"), Some("none"));
    assert_close(number(pops, north, "ne_nc").unwrap(), 0.12, 1e-12);
    assert_eq!(
        [number(pops, north, "fis"), number(pops, north, "fis_low"), number(pops, north, "fis_high")],
        [Some(0.05), Some(0.01), Some(0.09)]
    );
    assert_close(number(pops, north, "generations").unwrap(), 25.0, 1e-12);
    assert_close(number(pops, north, "h_retained").unwrap(), 0.900879, 1e-6);
    assert_close(number(pops, north, "h_retained_low").unwrap(), 0.854926, 1e-6);
    assert_close(number(pops, north, "h_retained_high").unwrap(), 0.939340, 1e-6);
    assert_close(number(pops, north, "f_drift").unwrap(), 0.099121, 1e-6);
    assert_close(number(pops, north, "f_drift_low").unwrap(), 0.060660, 1e-6);
    assert_close(number(pops, north, "f_drift_high").unwrap(), 0.145074, 1e-6);
    assert_close(number(pops, north, "generations_to_lose_10").unwrap(), 25.2338, 1e-4);
    assert_close(number(pops, north, "years_to_lose_10").unwrap(), 100.935, 1e-3);
    let south = row_with(pops, "population", "South");
    assert_eq!(text(pops, south, "category"), Some("500 or more"));
    assert_eq!(text(pops, south, "interval_reaches"), Some("500"));
    assert_eq!(text(pops, south, "ne_method"), Some("temporal"));
    assert_eq!(number(pops, south, "ne_year"), Some(2020.0));
    assert_eq!(number(pops, south, "s"), None, "s belongs to LD estimates");
    assert_eq!(number(pops, south, "fis"), None, "no diversity row for South 2020");
    assert_close(number(pops, south, "ne_nc").unwrap(), 0.12, 1e-12);
    let west = row_with(pops, "population", "West");
    assert_eq!(text(pops, west, "category"), Some("unknown"));
    assert_eq!(number(pops, west, "ne"), None);
    let no_estimate = findings_with(&output, "no-estimate");
    assert_eq!(no_estimate.len(), 1);
    assert_eq!(no_estimate[0].location, Where::group("West", 2020));
    assert_eq!(findings_with(&output, "census-year-unknown").len(), 1);
    assert_eq!(findings_with(&output, "ne-nc-context").len(), 1);
    let without_fis = findings_with(&output, "no-fis");
    assert!(without_fis[0].message.ends_with(": South 2020, West 2020"), "{}", without_fis[0].message);
    let s_null = findings_with(&output, "s-not-applicable");
    assert!(s_null[0].message.ends_with(": South 2020 (temporal)"), "{}", s_null[0].message);
}

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

/// Hoban et al. (2020) and the GBF headline indicator A.4 ("the proportion of populations
/// within species with an effective population size > 500", metadata factsheet 2023): the count
/// is strict. North (120; 80–200) and South (600; 300–∞) have estimates, West none: at 50, 2 of 2
/// by point and lower bound; at 500, 1 of 2 by point (South) and 0 by lower bound.
#[test]
fn indicator_counts_point_and_lower_bound() {
    let output = default_run();
    let indicator = table(&output, "indicator");
    assert_eq!(indicator.rows.len(), 2);
    let columns = [
        "threshold",
        "populations",
        "with_estimate",
        "above_point",
        "share_point",
        "above_lower_bound",
        "share_lower_bound",
    ];
    let row = |r: usize| columns.map(|c| number(indicator, r, c));
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

/// 100/1000 thresholds (Frankham, Bradshaw & Brook 2014): North (120; 80–200) is "100–1000" with
/// its interval reaching 100; South (600; 300–∞) is "100–1000" reaching 1000; the thresholds
/// finding names the source.
#[test]
fn other_threshold_pair_through_the_step() {
    let output = run_status(&earlier_results(), &assessment(&[100.0, 1000.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!((text(pops, north, "category"), text(pops, north, "interval_reaches")), (Some("100–1000"), Some("100")));
    let south = row_with(pops, "population", "South");
    assert_eq!(
        (text(pops, south, "category"), text(pops, south, "interval_reaches")),
        (Some("100–1000"), Some("1000"))
    );
    assert!(findings_with(&output, "thresholds")[0].message.contains("Frankham, Bradshaw & Brook 2014"));
}

/// The cautions reach the reader in one info finding (project rule for texts that can steer a
/// decision about a living population).
#[test]
fn decision_caution_is_stated() {
    let output = run_status(&earlier_results(), &assessment(&[], Some(4.0)), json!({})).unwrap();
    let caution = findings_with(&output, "decision-caution");
    assert_eq!(caution.len(), 1);
    let message = &caution[0].message;
    for phrase in ["uncertainty", "guidance", "local regulatory framework", "qualified geneticist"] {
        assert!(message.contains(phrase), "{phrase} missing from: {message}");
    }
    // Empty thresholds fall back to 50/500.
    assert_eq!(table(&output, "indicator").rows.len(), 2);
}

/// Custom labels name the bands; a census from another year leaves ne_nc empty with a finding;
/// `ld:0.05` picks the other row; `year` selects the year assessed.
#[test]
fn labels_census_year_and_sources() {
    let mut info = assessment(&[50.0, 500.0], Some(4.0));
    info.populations[0].census_year = Some(2018);
    let params = json!({"labels": ["red", "amber", "green"], "prefer": ["ld:0.05"]});
    let output = run_status(&earlier_results(), &info, params).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!(number(pops, north, "ne"), Some(90.0));
    assert_eq!(text(pops, north, "category"), Some("amber"));
    assert_eq!(text(pops, north, "interval_reaches"), Some("50"));
    assert_eq!(number(pops, north, "ne_nc"), None);
    assert_eq!(findings_with(&output, "census-year-mismatch").len(), 1);
    let output =
        run_status(&earlier_results(), &info, json!({"labels": ["red", "amber", "green"], "year": 2015})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!((number(pops, north, "ne"), text(pops, north, "category")), (Some(300.0), Some("amber")));
    assert_eq!(findings_with(&output, "no-interval").len(), 1);
}

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

/// Bad parameters and thresholds are errors naming the field and the fix.
#[test]
fn bad_settings_are_refused_with_help() {
    let info = assessment(&[50.0, 500.0], Some(4.0));
    let err = run_status(&earlier_results(), &info, json!({"prefer": ["ld:2"]})).unwrap_err();
    assert!(err.message.starts_with("parameter `prefer`: \"ld:2\" is not an Ne source"), "{}", err.message);
    assert!(err.message.contains("\n  help: "), "{}", err.message);
    let err = run_status(&earlier_results(), &info, json!({"labels": ["low", "high"]})).unwrap_err();
    assert!(
        err.message.contains("parameter `labels` has 2 text(s) but the thresholds make 3 bands"),
        "{}",
        err.message
    );
    assert!(err.message.contains("\"below 50\", \"50–500\", \"500 or more\""), "{}", err.message);
    let err = run_status(&earlier_results(), &assessment(&[500.0, 50.0], Some(4.0)), json!({})).unwrap_err();
    assert!(err.message.contains("[report] thresholds = [500, 50] must be positive and ascending"), "{}", err.message);
}

/// `prefer` and `horizon_years` (100) are declared with defaults; `ld` (by sample size) first.
#[test]
fn parameters_are_declared_with_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["prefer"], json!(["ld", "temporal", "hetx"]));
    assert_eq!(resolved["horizon_years"], json!(100));
    assert_eq!(d.uses, "status");
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
    let temporal = earlier(
        "temp",
        "ne-temporal",
        "estimates",
        &["population", "year_start", "year_end", "ne_fs", "ne_low", "ne_high"],
        vec![
            vec![t("C"), Cell::Int(2010), Cell::Int(2015), n(700.0), n(300.0), Cell::Inf],
            vec![t("C"), Cell::Int(2010), Cell::Int(2020), n(500.0), n(250.0), n(2000.0)],
            vec![t("C"), Cell::Int(2015), Cell::Int(2020), n(350.0), n(150.0), n(1500.0)],
        ],
    );
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
