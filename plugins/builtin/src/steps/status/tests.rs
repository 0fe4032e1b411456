use std::collections::BTreeMap;

use popgauge_abi::{AssessmentInfo, GenotypeMatrix, Seed, StepResult, StepStatus};

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

/// Hand-made earlier results: North has an ne-ld estimate at Pcrit 0.05 and 0.02 in 2020
/// (0.02: Ne 120, resampling CI 80–200); South only a temporal estimate 2015→2020 (600, CI
/// 300–∞); West nothing. Diversity gives F₀ = 0.05 for North 2020.
fn earlier_results() -> Vec<StepResult> {
    let ld_columns = [
        "population",
        "year",
        "pcrit",
        "ne",
        "ne_param_low",
        "ne_param_high",
        "ne_jack_low",
        "ne_jack_high",
        "ne_resample_low",
        "ne_resample_high",
    ];
    let ld = earlier(
        "ld",
        "ne-ld",
        "estimates",
        &ld_columns,
        vec![
            vec![
                t("North"),
                Cell::Int(2020),
                n(0.05),
                n(90.0),
                n(70.0),
                n(120.0),
                n(60.0),
                n(150.0),
                n(45.0),
                n(190.0),
            ],
            vec![
                t("North"),
                Cell::Int(2020),
                n(0.02),
                n(120.0),
                n(100.0),
                n(150.0),
                n(90.0),
                n(170.0),
                n(80.0),
                n(200.0),
            ],
            vec![
                t("North"),
                Cell::Int(2015),
                n(0.02),
                n(300.0),
                Cell::Null,
                Cell::Null,
                Cell::Null,
                Cell::Null,
                Cell::Null,
                Cell::Null,
            ],
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
        &["population", "year", "he", "ho", "f"],
        vec![
            vec![t("North"), Cell::Int(2015), n(0.7), n(0.68), n(0.03)],
            vec![t("North"), Cell::Int(2020), n(0.7), n(0.665), n(0.05)],
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

fn run_status(earlier: &[StepResult], assessment: &AssessmentInfo, params: Value) -> Result<StepOutput, StepError> {
    let given: BTreeMap<String, Value> = params.as_object().unwrap().clone().into_iter().collect();
    let resolved = descriptor().resolve(&given).expect("test parameters are valid");
    let m = matrix();
    let (samples, loci) = (m.all_sample_indices(), m.all_locus_indices());
    let ctx = StepContext {
        view: m.full_view(&samples, &loci),
        params: &resolved,
        seed: Seed(1),
        earlier,
        assessment,
        input_findings: &[],
    };
    Status.run(&ctx)
}

/// METHODS §10 item 16 (computed) and §9 (Soulé et al. 1986 formula): the Ne keeping 90% of
/// heterozygosity for 100 years is 118.89 with L = 4 and 47.71 with L = 10; by construction
/// Wright's decay at that Ne over T/L generations leaves exactly 0.9 (common practice).
#[test]
fn ne_to_retain_90_percent_matches_check_values() {
    assert_close(ne_to_retain(0.9, 100.0, 4.0), 118.89, 0.005);
    assert_close(ne_to_retain(0.9, 100.0, 10.0), 47.71, 0.005);
    assert_close(heterozygosity_retained(ne_to_retain(0.9, 100.0, 4.0), 25.0), 0.9, 1e-12);
}

fn label(ne: Option<f64>, interval: Option<(f64, f64)>, thresholds: &[f64]) -> String {
    categorise(ne, interval, thresholds).label(thresholds, &default_labels(thresholds))
}

/// Category logic (common practice: a value equal to a threshold meets it; the CI straddles a
/// threshold T when low < T ≤ high) at, above, below and across both thresholds of 50/500
/// (Franklin 1980).
#[test]
fn categories_against_50_500() {
    let th = [50.0, 500.0];
    assert_eq!(label(Some(49.9), None, &th), "below 50");
    assert_eq!(label(Some(50.0), None, &th), "50–500");
    assert_eq!(label(Some(499.0), Some((300.0, 499.5)), &th), "50–500");
    assert_eq!(label(Some(500.0), None, &th), "above 500");
    assert_eq!(label(Some(f64::INFINITY), Some((600.0, f64::INFINITY)), &th), "above 500");
    assert_eq!(label(Some(45.0), Some((30.0, 49.0)), &th), "below 50");
    assert_eq!(label(Some(45.0), Some((30.0, 50.0)), &th), "straddles 50");
    assert_eq!(label(Some(60.0), Some((50.0, 80.0)), &th), "50–500");
    assert_eq!(label(Some(55.0), Some((40.0, 60.0)), &th), "straddles 50");
    assert_eq!(label(Some(450.0), Some((400.0, 600.0)), &th), "straddles 500");
    assert_eq!(label(Some(f64::INFINITY), Some((300.0, f64::INFINITY)), &th), "straddles 500");
    assert_eq!(label(Some(200.0), Some((30.0, 800.0)), &th), "straddles 50 and 500");
    assert_eq!(label(None, None, &th), "unknown");
}

/// The same logic with 100/1000 (Frankham, Bradshaw & Brook 2014).
#[test]
fn categories_against_100_1000() {
    let th = [100.0, 1000.0];
    assert_eq!(default_labels(&th), vec!["below 100", "100–1000", "above 1000"]);
    assert_eq!(label(Some(99.0), None, &th), "below 100");
    assert_eq!(label(Some(100.0), Some((100.0, 150.0)), &th), "100–1000");
    assert_eq!(label(Some(1000.0), Some((1000.0, f64::INFINITY)), &th), "above 1000");
    assert_eq!(label(Some(90.0), Some((60.0, 120.0)), &th), "straddles 100");
    assert_eq!(label(Some(800.0), Some((500.0, 1500.0)), &th), "straddles 1000");
    assert_eq!(label(Some(120.0), Some((50.0, 2000.0)), &th), "straddles 100 and 1000");
    // 60 is "50–500" with 50/500 but "below 100" here.
    assert_eq!(label(Some(60.0), Some((55.0, 70.0)), &th), "below 100");
}

/// Through the step with thresholds 50/500 and L = 4 years, T = 100 years (25 generations).
/// North: ld:0.02 row, Ne 120 with the resampling interval 80–200 → "50–500"; Ne/Nc = 0.12.
/// Hand calculation (Wright 1931, METHODS §1/§9): H₂₅/H₀ = (1 − 1/240)²⁵ = 0.900879,
/// at 80: 0.854926, at 200: 0.939340; f_drift = 0.099121; with F₀ = 0.05,
/// f_projected = 1 − 0.95·0.900879 = 0.144165; 10% lost after ln 0.9/ln(1 − 1/240) = 25.2338
/// generations = 100.935 years. South: temporal 600 (300–∞) → "straddles 500"; West: "unknown".
#[test]
fn populations_table_through_the_step() {
    let output = run_status(&earlier_results(), &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    assert_eq!(pops.rows.len(), 3);
    let north = row_with(pops, "population", "North");
    assert_eq!((number(pops, north, "year"), number(pops, north, "ne")), (Some(2020.0), Some(120.0)));
    assert_eq!((number(pops, north, "ne_low"), number(pops, north, "ne_high")), (Some(80.0), Some(200.0)));
    assert_eq!(text(pops, north, "ne_method"), Some("ld:0.02"));
    assert_eq!(text(pops, north, "ci_method"), Some("resampling"));
    assert_eq!(text(pops, north, "category"), Some("50–500"));
    assert_close(number(pops, north, "ne_nc").unwrap(), 0.12, 1e-12);
    assert_close(number(pops, north, "generations").unwrap(), 25.0, 1e-12);
    assert_close(number(pops, north, "h_retained").unwrap(), 0.900879, 1e-6);
    assert_close(number(pops, north, "h_retained_low").unwrap(), 0.854926, 1e-6);
    assert_close(number(pops, north, "h_retained_high").unwrap(), 0.939340, 1e-6);
    assert_close(number(pops, north, "f_drift").unwrap(), 0.099121, 1e-6);
    assert_close(number(pops, north, "f0").unwrap(), 0.05, 1e-15);
    assert_close(number(pops, north, "f_projected").unwrap(), 0.144165, 1e-6);
    assert_close(number(pops, north, "generations_to_lose_10").unwrap(), 25.2338, 1e-4);
    assert_close(number(pops, north, "years_to_lose_10").unwrap(), 100.935, 1e-3);
    let south = row_with(pops, "population", "South");
    assert_eq!(text(pops, south, "category"), Some("straddles 500"));
    assert_eq!(text(pops, south, "ne_method"), Some("temporal"));
    assert_eq!(number(pops, south, "ne_year"), Some(2020.0));
    assert_eq!(number(pops, south, "f_projected"), None, "no diversity row for South 2020");
    assert_close(number(pops, south, "ne_nc").unwrap(), 0.12, 1e-12);
    let west = row_with(pops, "population", "West");
    assert_eq!(text(pops, west, "category"), Some("unknown"));
    assert_eq!(number(pops, west, "ne"), None);
    let no_estimate = findings_with(&output, "no-estimate");
    assert_eq!(no_estimate.len(), 1);
    assert_eq!(no_estimate[0].location, Where::group("West", 2020));
    assert_eq!(findings_with(&output, "census-year-unknown").len(), 1);
    assert_eq!(findings_with(&output, "ne-nc-context").len(), 1);
    // DESIGN: the "inf" bound and the null F₀ are each explained once, naming the rows.
    let infinite = findings_with(&output, "infinite-ne");
    assert_eq!(infinite.len(), 1);
    assert!(infinite[0].message.ends_with("is \"inf\": South 2020 (ne_high)"), "{}", infinite[0].message);
    let without_f0 = findings_with(&output, "no-initial-inbreeding");
    assert_eq!(without_f0.len(), 1);
    assert!(without_f0[0].message.ends_with("total F: South 2020"), "{}", without_f0[0].message);
}

/// Hoban et al. (2020): the share of populations above each threshold, with the point and with
/// the lower bound. North (120; 80–200) and South (600; 300–∞) have estimates, West none:
/// at 50, 2 of 2 by point and lower bound; at 500, 1 of 2 by point (South) and 0 by lower bound.
#[test]
fn indicator_counts_point_and_lower_bound() {
    let output = run_status(&earlier_results(), &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
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

/// The projection has one point per generation from 0 to 25 (L = 4, T = 100), starting at
/// H = 1 and ending at the population's h_retained; years advance by L.
#[test]
fn projection_curve_per_generation() {
    let output = run_status(&earlier_results(), &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let projection = table(&output, "projection");
    let north: Vec<usize> =
        (0..projection.rows.len()).filter(|&r| text(projection, r, "population") == Some("North")).collect();
    assert_eq!(north.len(), 26);
    let (first, last) = (north[0], north[25]);
    assert_eq!(number(projection, first, "h_retained"), Some(1.0));
    assert_close(number(projection, first, "f_projected").unwrap(), 0.05, 1e-15);
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

/// 100/1000 thresholds: North (80–200) straddles 100; South (300–∞) straddles 1000; the
/// thresholds finding names Frankham, Bradshaw & Brook (2014).
#[test]
fn other_threshold_pair_through_the_step() {
    let output = run_status(&earlier_results(), &assessment(&[100.0, 1000.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    assert_eq!(text(pops, row_with(pops, "population", "North"), "category"), Some("straddles 100"));
    assert_eq!(text(pops, row_with(pops, "population", "South"), "category"), Some("straddles 1000"));
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
    assert_eq!(text(pops, north, "category"), Some("straddles 50"));
    assert_eq!(number(pops, north, "ne_nc"), None);
    assert_eq!(findings_with(&output, "census-year-mismatch").len(), 1);
    let output =
        run_status(&earlier_results(), &info, json!({"labels": ["red", "amber", "green"], "year": 2015})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!((number(pops, north, "ne"), text(pops, north, "category")), (Some(300.0), Some("amber")));
    assert_eq!(findings_with(&output, "no-interval").len(), 1);
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

/// An infinite Ne keeps all heterozygosity and never loses 10% (Wright 1931: the factor is 1).
#[test]
fn infinite_ne_keeps_everything() {
    let mut earlier = earlier_results();
    earlier[1].tables.get_mut("estimates").unwrap().rows[1][3] = Cell::Inf;
    let output = run_status(&earlier, &assessment(&[50.0, 500.0], Some(4.0)), json!({})).unwrap();
    let pops = table(&output, "populations");
    let north = row_with(pops, "population", "North");
    assert_eq!(number(pops, north, "h_retained"), Some(1.0));
    assert_eq!(crate::test_support::cell(pops, north, "generations_to_lose_10"), &Cell::Inf);
    let infinite = findings_with(&output, "infinite-ne");
    let north_listed =
        infinite[0].message.contains("North 2020 (ne, ") && infinite[0].message.contains("years_to_lose_10)");
    assert!(north_listed, "{}", infinite[0].message);
}

/// Bad parameters and thresholds are errors naming the field and the fix.
#[test]
fn bad_settings_are_refused_with_help() {
    let info = assessment(&[50.0, 500.0], Some(4.0));
    let err = run_status(&earlier_results(), &info, json!({"prefer": ["ld:2"]})).unwrap_err();
    assert!(err.message.starts_with("parameter `prefer`: \"ld:2\" is not an Ne source"), "{}", err.message);
    let err = run_status(&earlier_results(), &info, json!({"labels": ["low", "high"]})).unwrap_err();
    assert!(
        err.message.contains("parameter `labels` has 2 text(s) but the thresholds make 3 bands"),
        "{}",
        err.message
    );
    assert!(err.message.contains("\"below 50\", \"50–500\", \"above 500\""), "{}", err.message);
    let err = run_status(&earlier_results(), &assessment(&[500.0, 50.0], Some(4.0)), json!({})).unwrap_err();
    assert!(err.message.contains("[report] thresholds = [500, 50] must be positive and ascending"), "{}", err.message);
}

/// DESIGN: `prefer` and `horizon_years` (100) are declared with defaults.
#[test]
fn parameters_are_declared_with_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["prefer"], json!(["ld:0.02", "temporal", "hetx"]));
    assert_eq!(resolved["horizon_years"], json!(100));
    assert_eq!(d.uses, "status");
}
