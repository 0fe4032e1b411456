use std::collections::BTreeMap;

use popgauge_abi::{AssessmentInfo, Cell, Seed, StepStatus, Table};
use serde_json::Value;

use super::*;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, table, text};

/// An earlier step's result holding the given tables.
fn earlier(id: &str, uses: &str, tables: Vec<(&str, Table)>) -> StepResult {
    StepResult {
        id: id.into(),
        uses: uses.into(),
        version: "0.1.0".into(),
        status: StepStatus::Ok,
        error: None,
        tables: tables.into_iter().map(|(name, t)| (name.to_string(), t)).collect(),
        findings: Vec::new(),
        citations: Vec::new(),
        exclusions: Default::default(),
    }
}

fn rows_table(columns: &[&str], rows: Vec<Vec<Cell>>) -> Table {
    let mut table = Table::new(columns);
    for row in rows {
        table.push_row(row).unwrap();
    }
    table
}

fn num(x: f64) -> Cell {
    Cell::number(x)
}

/// A `diversity` result whose by_group `he` (and `ho` = he − 0.05) follow `series` per population.
fn diversity(series: &[(&str, &[(i32, f64)])]) -> StepResult {
    let mut rows = Vec::new();
    for (population, points) in series {
        for &(year, he) in *points {
            rows.push(vec![
                Cell::text(*population),
                Cell::Int(year.into()),
                num(he),
                num(he - 0.05),
                Cell::Null,
                num(0.02),
            ]);
        }
    }
    earlier("div", "diversity", vec![("by_group", rows_table(&["population", "year", "he", "ho", "ar", "f"], rows))])
}

fn run_trend(earlier: &[StepResult], params: Value) -> Result<StepOutput, StepError> {
    let given: BTreeMap<String, Value> = params.as_object().unwrap().clone().into_iter().collect();
    let resolved = descriptor().resolve(&given).expect("test parameters are valid");
    let matrix = MatrixBuilder::new(&["L1"]).sample("s1", "North", 2020, &["1/2"]).build();
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(20_261_130))
        .with_earlier(earlier)
        .with_assessment(&assessment);
    Trend.run(&ctx)
}

fn row_of(t: &Table, population: &str, metric: &str) -> usize {
    (0..t.rows.len())
        .find(|&r| text(t, r, "population") == Some(population) && text(t, r, "metric") == Some(metric))
        .unwrap_or_else(|| panic!("no row for {population} {metric}"))
}

const HE_2010_2017: [(i32, f64); 8] =
    [(2010, 0.62), (2011, 0.60), (2012, 0.61), (2013, 0.57), (2014, 0.58), (2015, 0.55), (2016, 0.56), (2017, 0.53)];

/// An eight-year He series through the step: S = −22, exact p = 0.0055059524 (scipy 1.17.1
/// `kendalltau`), τ = −0.7857142857, Sen −0.0120833333 (−0.0166666667, −0.0066666667)
/// (scipy `theilslopes`), OLS −0.0119047619 (−0.0162580340, −0.0075514898) (scipy
/// `linregress`); values from tests/reference/trend_reference.py.
#[test]
fn declining_he_series_through_the_step() {
    let output = run_trend(&[diversity(&[("North", &HE_2010_2017)])], json!({"metrics": ["he", "ar"]})).unwrap();
    let tests = table(&output, "tests");
    assert_eq!(tests.rows.len(), 1);
    let r = row_of(tests, "North", "he");
    assert_eq!((number(tests, r, "points"), number(tests, r, "mk_s")), (Some(8.0), Some(-22.0)));
    assert_eq!((number(tests, r, "first_year"), number(tests, r, "last_year")), (Some(2010.0), Some(2017.0)));
    assert_eq!(text(tests, r, "mk_method"), Some("exact"));
    assert_eq!(text(tests, r, "scale"), Some("value"));
    assert_close(number(tests, r, "mk_p").unwrap(), 0.0055059524, 1e-6);
    assert_close(number(tests, r, "mk_tau").unwrap(), -0.7857142857, 1e-6);
    assert_close(number(tests, r, "sen_slope").unwrap(), -0.0120833333, 1e-6);
    assert_close(number(tests, r, "sen_low").unwrap(), -0.0166666667, 1e-6);
    assert_close(number(tests, r, "sen_high").unwrap(), -0.0066666667, 1e-6);
    assert_close(number(tests, r, "ols_slope").unwrap(), -0.0119047619, 1e-6);
    assert_close(number(tests, r, "ols_low").unwrap(), -0.0162580340, 1e-6);
    assert_close(number(tests, r, "ols_high").unwrap(), -0.0075514898, 1e-6);
    assert_eq!(text(tests, r, "direction"), Some("decreasing"));
    let series = table(&output, "series");
    assert_eq!(series.rows.len(), 8);
    assert_close(number(series, 0, "value").unwrap(), 0.62, 1e-15);
    assert!(findings_with(&output, "too-few-points").is_empty());
    assert_eq!(findings_with(&output, "trend-caution").len(), 1);
    // `ar` is null in every row: no series, and a finding says why.
    assert!(findings_with(&output, "no-values")[0].message.starts_with("trend of ar:"));
}

/// An `ne-ld` result with rows at Pcrit 0.05 (ignored) and 0.02 (followed: S = 40 > 25).
fn ld_result(with_002: bool) -> StepResult {
    let columns = ["population", "year", "pcrit", "s", "ne", "ne_jack_low", "ne_jack_high"];
    let mut rows = Vec::new();
    let ne = [(2010, f64::INFINITY), (2012, 400.0), (2014, 200.0), (2016, 100.0), (2018, 50.0)];
    let row = |year: i32, pcrit: Cell, value: f64| {
        vec![Cell::text("North"), Cell::Int(year.into()), pcrit, num(40.0), num(value), Cell::Null, Cell::Null]
    };
    for &(year, value) in &ne {
        rows.push(row(year, num(0.05), 1000.0 - f64::from(year - 2010)));
        if with_002 {
            rows.push(row(year, num(0.02), value));
        }
    }
    earlier("ld", "ne-ld", vec![("estimates", rows_table(&columns, rows))])
}

/// Ne on the 1/Ne scale: Ne = ∞, 400, 200, 100, 50 in 2010–2018 gives 1/Ne = 0, 0.0025,
/// 0.005, 0.01, 0.02, strictly rising, so S = 10 and the exact p is 2/120 = 0.016667 (the one
/// ordering of 5! = 120 with S = 10, each tail; Kendall 1975); Ne is "decreasing". Hand
/// calculation: OLS slope Σ(t − t̄)(y − ȳ)/Σ(t − t̄)² = 0.095/40 = 0.002375 per year; Sen's slope
/// is the median of the ten pairwise slopes, (0.001875 + 0.0025)/2 = 0.0021875.
#[test]
fn ne_is_tested_on_the_inverse_scale() {
    let output = run_trend(&[ld_result(true)], json!({"metrics": ["ne"]})).unwrap();
    let tests = table(&output, "tests");
    let r = row_of(tests, "North", "ne:ld");
    assert_eq!(text(tests, r, "scale"), Some("1/ne"));
    assert_eq!(number(tests, r, "mk_s"), Some(10.0));
    assert_close(number(tests, r, "mk_p").unwrap(), 2.0 / 120.0, 1e-12);
    assert_eq!(text(tests, r, "direction"), Some("decreasing"));
    assert_close(number(tests, r, "ols_slope").unwrap(), 0.002375, 1e-12);
    assert_close(number(tests, r, "sen_slope").unwrap(), 0.0021875, 1e-12);
    let series = table(&output, "series");
    assert_eq!(cell_at(series, 0, "value"), &Cell::Inf);
    assert_eq!(number(series, 0, "analysed"), Some(0.0));
    assert_close(number(series, 4, "analysed").unwrap(), 0.02, 1e-15);
    assert_eq!(text(series, 0, "ne_method"), Some("ld:0.02"));
    let criterion = findings_with(&output, "ld-criterion");
    assert!(criterion[0].message.contains("North 2010 (S = 40, Pcrit 0.02)"), "{}", criterion[0].message);
    assert!(findings_with(&output, "ld-criterion-missing").is_empty());
    assert_eq!(findings_with(&output, "ne-trend-scale").len(), 1);
}

fn cell_at<'t>(t: &'t Table, row: usize, column: &str) -> &'t Cell {
    &t.rows[row][t.column(column).unwrap()]
}

/// Without rows at Pcrit 0.02 (which S = 40 asks for; Waples & Do 2010) the group's first row
/// (0.05) is followed with a warning: Ne 1000, 998, …, 992 falls, so 1/Ne rises and S = 10 again
/// (hand calculation). A Pcrit named in `ld_pcrit` that the step lacks is a missing source.
#[test]
fn ld_falls_back_to_the_first_pcrit() {
    let output = run_trend(&[ld_result(false)], json!({"metrics": ["ne:ld"]})).unwrap();
    let tests = table(&output, "tests");
    assert_eq!(number(tests, 0, "mk_s"), Some(10.0));
    assert_eq!(number(table(&output, "series"), 0, "value"), Some(1000.0));
    assert!(findings_with(&output, "ld-criterion")[0].message.contains("Pcrit 0.05"));
    let missing = findings_with(&output, "ld-criterion-missing");
    assert!(
        missing[0].message.contains("North 2010 (S = 40: Pcrit 0.02 wanted, Pcrit 0.05 used)"),
        "{}",
        missing[0].message
    );
    let output = run_trend(&[ld_result(false)], json!({"metrics": ["ne:ld"], "ld_pcrit": 0.01})).unwrap();
    let source = findings_with(&output, "missing-source");
    assert!(
        source[0].message.contains("has no rows at Pcrit 0.01 (`ld_pcrit`); its criteria are 0.05"),
        "{}",
        source[0].message
    );
}

/// Waples & Do (2010, Evol Appl 3:244–262): each sample's LD point follows its own harmonic-mean
/// S, no singletons at S ≤ 25 and Pcrit 0.02 above; `ne_method` and the `ld-criterion` finding
/// say which, and `ld_pcrit` fixes the Pcrit for every point.
#[test]
fn ld_points_follow_each_sample_size() {
    let columns = ["population", "year", "pcrit", "s", "ne"];
    let mut rows = Vec::new();
    for (year, s) in [(2010, 20.0), (2014, 48.0)] {
        for (pcrit, ne) in [(num(0.02), 150.0), (Cell::text("singletons"), 80.0)] {
            rows.push(vec![Cell::text("North"), Cell::Int(year), pcrit, num(s), num(ne)]);
        }
    }
    let ld = earlier("ld", "ne-ld", vec![("estimates", rows_table(&columns, rows))]);
    let output = run_trend(std::slice::from_ref(&ld), json!({"metrics": ["ne"]})).unwrap();
    let series = table(&output, "series");
    let points: Vec<(Option<f64>, Option<&str>)> =
        (0..2).map(|r| (number(series, r, "value"), text(series, r, "ne_method"))).collect();
    assert_eq!(points, vec![(Some(80.0), Some("ld:singletons")), (Some(150.0), Some("ld:0.02"))]);
    let criterion = &findings_with(&output, "ld-criterion")[0].message;
    assert!(criterion.ends_with("North 2010 (S = 20, no singletons), North 2014 (S = 48, Pcrit 0.02)"), "{criterion}");
    let fixed = run_trend(&[ld], json!({"metrics": ["ne"], "ld_pcrit": 0.02})).unwrap();
    let series = table(&fixed, "series");
    assert_eq!((number(series, 0, "value"), text(series, 0, "ne_method")), (Some(150.0), Some("ld:0.02")));
}

/// Temporal estimates sit at `year_end`; of two ending in 2018 the later-starting one (150)
/// is used, not 999. Three points: no Mann–Kendall test (columns null, a `too-few-points`
/// finding) but a least-squares slope on 1/Ne. Hand calculation: y = 1/300, 1/150, 0 at
/// t = 2014, 2018, 2022; Σ(t − t̄)² = 32, Σ(t − t̄)(y − ȳ) = −4/300, slope = −1/2400 per year.
#[test]
fn temporal_rows_and_too_few_points() {
    let columns = ["population", "year_start", "year_end", "ne_fs", "ne_low", "ne_high"];
    let rows = vec![
        vec![Cell::text("North"), Cell::Int(2010), Cell::Int(2014), num(300.0), Cell::Null, Cell::Null],
        vec![Cell::text("North"), Cell::Int(2012), Cell::Int(2018), num(999.0), Cell::Null, Cell::Null],
        vec![Cell::text("North"), Cell::Int(2014), Cell::Int(2018), num(150.0), Cell::Null, Cell::Null],
        vec![Cell::text("North"), Cell::Int(2018), Cell::Int(2022), Cell::Inf, Cell::Null, Cell::Null],
    ];
    let temporal = earlier("temp", "ne-temporal", vec![("estimates", rows_table(&columns, rows))]);
    let output = run_trend(&[temporal], json!({"metrics": ["ne:temp"]})).unwrap();
    let series = table(&output, "series");
    let values: Vec<Cell> = (0..3).map(|r| cell_at(series, r, "value").clone()).collect();
    assert_eq!(values, vec![num(300.0), num(150.0), Cell::Inf]);
    let tests = table(&output, "tests");
    for column in ["mk_s", "mk_p", "mk_tau", "sen_slope", "sen_low", "sen_high"] {
        assert_eq!(number(tests, 0, column), None, "{column}");
    }
    assert_eq!(text(tests, 0, "direction"), None);
    assert_close(number(tests, 0, "ols_slope").unwrap(), -1.0 / 2400.0, 1e-12);
    let few = findings_with(&output, "too-few-points");
    assert_eq!(few.len(), 1);
    assert!(few[0].message.contains("3 sampling year(s)") && !few[0].message.contains("least-squares"));
}

/// Two points: every test column is null, both minimums are named (n ≥ 4 for Mann–Kendall,
/// n ≥ 3 for least squares; common practice).
#[test]
fn two_points_give_no_tests() {
    let output =
        run_trend(&[diversity(&[("East", &[(2015, 0.7), (2020, 0.65)])])], json!({"metrics": ["he"]})).unwrap();
    let tests = table(&output, "tests");
    assert_eq!(number(tests, 0, "points"), Some(2.0));
    for column in ["mk_s", "mk_p", "ols_slope", "ols_low", "ols_high", "sen_slope"] {
        assert_eq!(number(tests, 0, column), None, "{column}");
    }
    let few = findings_with(&output, "too-few-points");
    assert!(few[0].message.contains("least-squares"), "{}", few[0].message);
    assert_eq!(few[0].location.population.as_deref(), Some("East"));
}

/// Four points get a test and a `low-power` finding (smallest exact two-sided p for n = 4 is
/// 2/24 = 0.083: one ordering of 4! = 24 per tail; Kendall 1975), so the direction cannot be
/// anything but "no trend".
#[test]
fn four_points_have_low_power() {
    let rows = (0..4)
        .map(|i| {
            vec![Cell::text("West"), Cell::Int(2010 + i), num(0.05 + 0.01 * i as f64), num(100.0 / (1.0 + i as f64))]
        })
        .collect();
    let hetx = earlier("hx", "ne-hetx", vec![("estimates", rows_table(&["population", "year", "d", "ne"], rows))]);
    let output = run_trend(&[hetx], json!({"metrics": ["ne"]})).unwrap();
    let tests = table(&output, "tests");
    assert_close(number(tests, 0, "mk_p").unwrap(), 2.0 / 24.0, 1e-12);
    assert_eq!(text(tests, 0, "direction"), Some("no trend"));
    let low_power = findings_with(&output, "low-power");
    assert_eq!(low_power.len(), 1);
    assert!(low_power[0].message.contains("smallest two-sided Mann–Kendall p is 0.083"), "{}", low_power[0].message);
}

/// Per-locus He of ten loci in two sampling years: W⁺ = 1, W⁻ = 44, one zero,
/// tie-corrected normal p = 0.0126156672 (scipy 1.17.1 `wilcoxon`, tests/reference/
/// trend_reference.py); mean change −0.036 (hand calculation: −0.36/10) with a bootstrap
/// interval around it that excludes 0 (the standard error of the mean is about 0.008).
#[test]
fn two_sampling_years_get_a_paired_test() {
    let before = [0.71, 0.65, 0.80, 0.55, 0.62, 0.77, 0.69, 0.58, 0.74, 0.66];
    let after = [0.68, 0.66, 0.74, 0.50, 0.60, 0.70, 0.69, 0.52, 0.71, 0.61];
    let mut rows = Vec::new();
    for (year, values) in [(2015, &before), (2020, &after)] {
        for (l, v) in values.iter().enumerate() {
            rows.push(vec![
                Cell::text("East"),
                Cell::Int(year),
                Cell::text(format!("L{l:02}")),
                num(*v),
                num(v - 0.02),
            ]);
        }
    }
    let mut div = diversity(&[("East", &[(2015, 0.68), (2020, 0.64)])]);
    div.tables.insert("by_locus".into(), rows_table(&["population", "year", "locus", "he", "ho"], rows));
    let output = run_trend(&[div], json!({"metrics": ["he", "ho"]})).unwrap();
    let paired = table(&output, "paired");
    assert_eq!(paired.rows.len(), 2);
    let r = row_of(paired, "East", "he");
    assert_eq!((number(paired, r, "loci"), number(paired, r, "zeros")), (Some(10.0), Some(1.0)));
    assert_eq!((number(paired, r, "w_plus"), number(paired, r, "w_minus")), (Some(1.0), Some(44.0)));
    assert_eq!(text(paired, r, "p_method"), Some("normal"));
    assert_close(number(paired, r, "p_value").unwrap(), 0.0126156672, 1e-6);
    let mean = number(paired, r, "mean_change").unwrap();
    assert_close(mean, -0.036, 1e-12);
    let (low, high) = (number(paired, r, "change_low").unwrap(), number(paired, r, "change_high").unwrap());
    assert!(low < mean && mean < high && high < 0.0 && low > -0.07, "({low}, {high})");
    assert_eq!(number(paired, r, "replicates"), Some(2000.0));
}

/// Determinism (STYLE): the same inputs and seed give the same tables.
#[test]
fn runs_are_reproducible() {
    let mut div = diversity(&[("East", &[(2015, 0.68), (2020, 0.64)])]);
    let rows = (0..6)
        .flat_map(|l| {
            [(2015, 0.5 + 0.03 * l as f64), (2020, 0.48 + 0.031 * l as f64)]
                .map(|(y, v)| vec![Cell::text("East"), Cell::Int(y), Cell::text(format!("L{l}")), num(v), num(v)])
        })
        .collect();
    div.tables.insert("by_locus".into(), rows_table(&["population", "year", "locus", "he", "ho"], rows));
    let a = run_trend(std::slice::from_ref(&div), json!({})).unwrap();
    let b = run_trend(std::slice::from_ref(&div), json!({})).unwrap();
    assert_eq!(a, b);
    assert!(number(table(&a, "paired"), 0, "change_low").is_some());
}

/// Bad `metrics` entries are errors that name the parameter and the fix.
#[test]
fn unknown_metrics_are_refused_with_help() {
    let err = run_trend(&[], json!({"metrics": ["hx"]})).unwrap_err();
    assert!(err.message.starts_with("parameter `metrics`: unknown metric \"hx\""), "{}", err.message);
    assert!(err.message.contains("did you mean \"he\"?"), "{}", err.message);
    let err = run_trend(&[], json!({"metrics": ["ne:ld"]})).unwrap_err();
    assert!(err.message.contains("\"ne:ld\" names no earlier Ne step"), "{}", err.message);
    assert!(err.message.contains("add an ne-ld, ne-temporal or ne-hetx step"), "{}", err.message);
    let err = run_trend(&[ld_result(true)], json!({"metrics": ["ne:l"]})).unwrap_err();
    assert!(err.message.contains("the Ne steps before this one are ne:ld"), "{}", err.message);
}

/// Without a diversity step the default metrics are skipped with a warning, not an error.
#[test]
fn missing_diversity_is_a_finding() {
    let output = run_trend(&[], json!({})).unwrap();
    assert!(table(&output, "tests").rows.is_empty());
    let missing = findings_with(&output, "missing-source");
    assert_eq!(missing.len(), 4);
    assert!(missing[0].message.contains("no diversity step runs before trend"));
}

/// Interface: the `metrics` parameter exists with its default; bootstrap ≥ 2000.
#[test]
fn parameters_are_declared_with_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["metrics"], json!(["he", "ho", "ar", "f", "ne"]));
    let too_few = [("bootstrap".to_string(), json!(100))].into_iter().collect();
    assert!(d.resolve(&too_few).is_err());
    assert_eq!(d.uses, "trend");
}

/// No null without a finding saying why, on hand-made rows: a 4-point series whose
/// Sen interval is null, a two-year comparison without changes (no test) and one with one
/// bootstrap replicate (no interval); rows whose cells are defined are not listed.
#[test]
fn null_cells_of_tests_and_paired_are_explained_once_each() {
    let mut tests = Table::new(&["population", "metric", "points", "sen_slope", "sen_low"]);
    tests.push_row(vec![Cell::text("East"), Cell::text("he"), Cell::Int(4), Cell::Num(0.01), Cell::Null]).unwrap();
    tests.push_row(vec![Cell::text("West"), Cell::text("he"), Cell::Int(9), Cell::Num(0.01), Cell::Num(0.0)]).unwrap();
    let mut paired = Table::new(&[
        "population",
        "metric",
        "year_start",
        "year_end",
        "loci",
        "p_value",
        "mean_change",
        "change_low",
        "replicates",
    ]);
    let rows = [
        ("East", Cell::Null, Cell::Num(0.0), Cell::Num(0.0), 1000),
        ("West", Cell::Num(0.2), Cell::Num(0.1), Cell::Null, 1),
        ("North", Cell::Num(0.2), Cell::Num(0.1), Cell::Num(0.05), 1000),
    ];
    for (population, p, mean, low, replicates) in rows {
        let row = vec![
            Cell::text(population),
            Cell::text("ho"),
            Cell::Int(2010),
            Cell::Int(2020),
            Cell::Int(8),
            p,
            mean,
            low,
            Cell::Int(replicates),
        ];
        paired.push_row(row).unwrap();
    }
    let findings = special_value_findings(&tests, &paired);
    let codes: Vec<&str> = findings.iter().map(|f| f.code.as_str()).collect();
    assert_eq!(codes, ["sen-interval-undefined", "paired-untested", "no-interval"]);
    assert!(findings[0].message.ends_with(": he in East (4 points)"), "{}", findings[0].message);
    assert!(findings[1].message.ends_with(": ho in East 2010–2020 (8 loci)"), "{}", findings[1].message);
    assert!(findings[2].message.ends_with(": ho in West 2010–2020 (1 replicates)"), "{}", findings[2].message);
}
