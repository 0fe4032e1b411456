//! Tests of the `status` step: the populations table through the step, threshold pairs, the
//! decision caution, labels and sources, refused settings and the descriptor; the other subjects
//! are in the submodules.

use std::collections::BTreeMap;

use popgauge_abi::{AssessmentInfo, Cell, GenotypeMatrix, Seed, StepStatus, Table, Where};

use super::category::{interval_note, reached_text, thresholds_reached};
use super::tables::{POPULATION_COLUMNS, projection_points};
use super::*;
use crate::stats::drift::heterozygosity_retained;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, row_with, table, text};

mod categories;
mod estimate_choice;
mod indicator;
mod projections;
mod special_values;

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

/// An earlier `ne-temporal` result (id `temp`) whose `estimates` table has these rows of
/// population, year_start, year_end, ne_fs, ne_low and ne_high.
fn temporal_result(rows: Vec<Vec<Cell>>) -> StepResult {
    earlier(
        "temp",
        "ne-temporal",
        "estimates",
        &["population", "year_start", "year_end", "ne_fs", "ne_low", "ne_high"],
        rows,
    )
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
    let temporal = temporal_result(vec![
        vec![t("South"), Cell::Int(2010), Cell::Int(2015), n(900.0), n(400.0), Cell::Inf],
        vec![t("South"), Cell::Int(2015), Cell::Int(2020), n(600.0), n(300.0), Cell::Inf],
    ]);
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
