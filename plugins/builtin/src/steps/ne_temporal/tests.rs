//! Unit tests of `ne-temporal`; the simulation checks of bias and coverage are in
//! `coverage.rs`.

use popgauge_abi::{GenotypeMatrix, ParamError, PopulationInfo, Seed};
use serde_json::json;

use super::*;
use crate::test_support::{MatrixBuilder, assert_close, cell, findings_with, number, table};

/// Runs the step on the full view with the given assessment facts.
pub(super) fn run_with(matrix: &GenotypeMatrix, params: serde_json::Value, assessment: &AssessmentInfo) -> StepOutput {
    let given = match params {
        serde_json::Value::Object(map) => map.into_iter().collect(),
        other => panic!("params must be an object, not {other}"),
    };
    let resolved = descriptor().resolve(&given).expect("valid parameters");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(1)).with_assessment(assessment);
    NeTemporal.run(&ctx).expect("ne-temporal runs")
}

fn assessment(generation_time: Option<f64>, census: Option<f64>) -> AssessmentInfo {
    AssessmentInfo {
        generation_time_years: generation_time,
        populations: vec![PopulationInfo {
            population: "Pop".into(),
            census_size: census,
            ..PopulationInfo::default()
        }],
        ..AssessmentInfo::default()
    }
}

/// Genotype cells of `individuals` individuals whose gene copies at each locus are the given
/// allele counts, paired in order (copies 2i and 2i + 1 form individual i).
fn cells_from_counts(individuals: usize, loci: &[&[(&str, usize)]]) -> Vec<Vec<String>> {
    let copies: Vec<Vec<&str>> = loci
        .iter()
        .map(|counts| counts.iter().flat_map(|&(label, n)| std::iter::repeat_n(label, n)).collect())
        .collect();
    (0..individuals).map(|i| copies.iter().map(|c| format!("{}/{}", c[2 * i], c[2 * i + 1])).collect()).collect()
}

/// Three loci, as genotypes: 50 individuals in 2010 with frequencies (.5,.3,.2),
/// (.6,.4), (.25,.25,.25,.25) and 50 in 2014 with (.4,.35,.25), (.7,.3), (.3,.2,.35,.15).
fn three_loci_four_years_apart() -> GenotypeMatrix {
    let start = cells_from_counts(
        50,
        &[&[("a", 50), ("b", 30), ("c", 20)], &[("p", 60), ("q", 40)], &[("1", 25), ("2", 25), ("3", 25), ("4", 25)]],
    );
    let end = cells_from_counts(
        50,
        &[&[("a", 40), ("b", 35), ("c", 25)], &[("p", 70), ("q", 30)], &[("1", 30), ("2", 20), ("3", 35), ("4", 15)]],
    );
    let mut builder = MatrixBuilder::new(&["T1", "T2", "T3"]);
    for (year, rows) in [(2010, &start), (2014, &end)] {
        for (i, row) in rows.iter().enumerate() {
            let cells: Vec<&str> = row.iter().map(String::as_str).collect();
            builder = builder.sample(&format!("y{year}i{i}"), "Pop", year, &cells);
        }
    }
    builder.build()
}

/// Computed from the formulas of docs/methods.md, "Temporal Ne" (re-derived in
/// tests/reference/ne_formulas.py with scipy 1.17.1): S₀ = S_t = 50, t = 4 → F_c = 0.031999, F_k =
/// 0.031420, F̃ = 0.032609, F_s = 0.012470; plan II Ne 166.6838 (F_c), 175.1389 (F_k), 160.3886
/// (F_s); n′ = 6 and the χ² intervals of Ne (14.7967, inf) from F_c and (15.1107, inf) from F_k;
/// the F_s jackknife over the three loci with t₂ = 4.302653 gives (58.5695, inf). Waples (1989) and
/// Jorde & Ryman (2007) print no worked example that could be consulted here, so these are computed
/// values.
#[test]
fn three_loci_match_the_temporal_formulas() {
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "II"}), &assessment(Some(1.0), None));
    let estimates = table(&output, "estimates");
    assert_eq!(estimates.rows.len(), 1);
    assert_eq!(number(estimates, 0, "generations"), Some(4.0));
    assert_eq!((number(estimates, 0, "s_start"), number(estimates, 0, "s_end")), (Some(50.0), Some(50.0)));
    assert_close(number(estimates, 0, "fc").unwrap(), 0.031_999, 1e-6);
    assert_close(number(estimates, 0, "fk").unwrap(), 0.031_420, 1e-6);
    assert_close(number(estimates, 0, "fs").unwrap(), 0.012_470, 1e-6);
    assert_close(number(estimates, 0, "ne_fc").unwrap(), 166.6838, 1e-3);
    assert_close(number(estimates, 0, "ne_fk").unwrap(), 175.1389, 1e-3);
    assert_close(number(estimates, 0, "ne_fs").unwrap(), 160.3886, 1e-3);
    assert_eq!(number(estimates, 0, "df"), Some(6.0));
    assert_close(number(estimates, 0, "ne_fc_low").unwrap(), 14.7967, 1e-3);
    assert_eq!(cell(estimates, 0, "ne_fc_high"), &Cell::Inf);
    assert_close(number(estimates, 0, "ne_fk_low").unwrap(), 15.1107, 1e-3);
    assert_close(number(estimates, 0, "ne_low").unwrap(), 58.5695, 1e-3);
    assert_eq!(cell(estimates, 0, "ne_high"), &Cell::Inf);
    assert_eq!(cell(estimates, 0, "plan"), &Cell::text("II"));
    // Results contract: each "inf" bound of a finite estimate is explained, once, naming the
    // comparison.
    let upper = findings_with(&output, "infinite-upper-bound");
    assert_eq!(upper.len(), 1);
    assert!(upper[0].message.ends_with(": Pop 2010–2014 (ne_high, ne_fc_high, ne_fk_high)"), "{}", upper[0].message);
    assert!(findings_with(&output, "no-interval").is_empty());
}

/// Plan I (Waples 1989; Jorde & Ryman 2007 F_s′) with census N = 500 on the item-14 data:
/// Ne 142.8698 (F_c), 149.0368 (F_k), F_s′ = 0.014490 and 138.0271 (tests/reference/
/// ne_formulas.py, computed).
#[test]
fn plan_one_uses_census_size() {
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "I"}), &assessment(Some(1.0), Some(500.0)));
    let estimates = table(&output, "estimates");
    assert_close(number(estimates, 0, "ne_fc").unwrap(), 142.8698, 1e-3);
    assert_close(number(estimates, 0, "ne_fk").unwrap(), 149.0368, 1e-3);
    assert_close(number(estimates, 0, "fs").unwrap(), 0.014_490, 1e-6);
    assert_close(number(estimates, 0, "ne_fs").unwrap(), 138.0271, 1e-3);
    assert_eq!(number(estimates, 0, "census_size"), Some(500.0));
    assert_eq!(cell(estimates, 0, "plan"), &Cell::text("I"));
}

/// Plan I without a census size gives a finding and no plan-I estimate (the F
/// statistics are still reported).
#[test]
fn plan_one_without_census_has_no_estimate() {
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "I"}), &assessment(Some(1.0), None));
    let estimates = table(&output, "estimates");
    assert_eq!(number(estimates, 0, "ne_fs"), None);
    assert_eq!(number(estimates, 0, "ne_fc"), None);
    assert!(number(estimates, 0, "fc").is_some());
    let missing = findings_with(&output, "census-size-missing");
    assert_eq!(missing.len(), 1);
    assert!(missing[0].message.contains("add census_size to the population sheet"), "{}", missing[0].message);
}

/// docs/methods.md, "Temporal Ne": without a generation time no estimate (error-level finding
/// naming the recipe field); with samples less than one generation apart, a warning and no
/// estimate.
#[test]
fn generations_come_from_the_generation_time() {
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "II"}), &assessment(None, None));
    assert_eq!(number(table(&output, "estimates"), 0, "ne_fs"), None);
    assert_eq!(number(table(&output, "estimates"), 0, "generations"), None);
    let error = findings_with(&output, "generation-time-missing");
    assert_eq!(error[0].level, popgauge_abi::FindingLevel::Error);
    assert!(error[0].message.contains("generation_time_years"));
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "II"}), &assessment(Some(5.0), None));
    assert_eq!(number(table(&output, "estimates"), 0, "generations"), Some(0.8));
    assert_eq!(number(table(&output, "estimates"), 0, "ne_fs"), None);
    assert_eq!(findings_with(&output, "too-few-generations").len(), 1);
    // With 2-year generations the 4 years are 2 generations: Ne halves (Ne ∝ t).
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "II"}), &assessment(Some(2.0), None));
    assert_close(number(table(&output, "estimates"), 0, "ne_fs").unwrap(), 160.3886 / 2.0, 1e-3);
}

/// Missing data (docs/methods.md, "Temporal Ne"): per-locus sample sizes and K-weighted harmonic
/// means. Hand calculation: locus T2 (K = 2) typed in only 40 of 50 individuals in 2010, the others
/// in all 50: S₀ = (3 + 2 + 4)/(3/50 + 2/40 + 4/50) = 9/0.19 = 47.368421.
#[test]
fn missing_data_use_per_locus_sample_sizes() {
    let matrix = three_loci_four_years_apart();
    let mut builder = MatrixBuilder::new(&["T1", "T2", "T3"]);
    for s in 0..matrix.samples().len() {
        let meta = &matrix.samples()[s];
        let cells: Vec<String> = (0..3)
            .map(|l| {
                let at = (l * matrix.samples().len() + s) * 2;
                let labels = &matrix.loci()[l].alleles;
                let (a, b) = (matrix.codes()[at].0 as usize, matrix.codes()[at + 1].0 as usize);
                if l == 1 && meta.year == 2010 && s >= 40 {
                    "./.".to_string()
                } else {
                    format!("{}/{}", labels[a - 1], labels[b - 1])
                }
            })
            .collect();
        let cells: Vec<&str> = cells.iter().map(String::as_str).collect();
        builder = builder.sample(&meta.id, &meta.population, meta.year, &cells);
    }
    let output = run_with(&builder.build(), json!({"plan": "II"}), &assessment(Some(1.0), None));
    let estimates = table(&output, "estimates");
    assert_close(number(estimates, 0, "s_start").unwrap(), 9.0 / 0.19, 1e-9);
    assert_eq!(number(estimates, 0, "s_end"), Some(50.0));
}

/// Consecutive years and first-to-last are compared (docs/methods.md, "Temporal Ne"); a population
/// sampled once gets an info finding. No change in frequencies makes F̃ = 0, so F_s < 0 and Ne is
/// "inf" with a finding saying what that means (docs/methods.md, "Temporal Ne").
#[test]
fn comparisons_and_infinite_estimates() {
    let same = cells_from_counts(20, &[&[("a", 20), ("b", 20)], &[("c", 30), ("d", 10)]]);
    let mut builder = MatrixBuilder::new(&["U1", "U2"]);
    for year in [2000, 2004, 2008] {
        for (i, row) in same.iter().enumerate() {
            let cells: Vec<&str> = row.iter().map(String::as_str).collect();
            builder = builder.sample(&format!("p{year}-{i}"), "Pop", year, &cells);
        }
    }
    builder = builder.sample("lone", "Lone", 2004, &["a/b", "c/d"]);
    let output = run_with(&builder.build(), json!({"plan": "II"}), &assessment(Some(1.0), None));
    let estimates = table(&output, "estimates");
    let years: Vec<(f64, f64)> = (0..estimates.rows.len())
        .map(|r| (number(estimates, r, "year_start").unwrap(), number(estimates, r, "year_end").unwrap()))
        .collect();
    assert_eq!(years, vec![(2000.0, 2004.0), (2004.0, 2008.0), (2000.0, 2008.0)]);
    for row in 0..3 {
        assert_eq!(number(estimates, row, "fc"), Some(0.0));
        assert_eq!(cell(estimates, row, "ne_fs"), &Cell::Inf);
        assert_eq!(cell(estimates, row, "ne_fc"), &Cell::Inf);
    }
    let infinite = findings_with(&output, "infinite-estimate");
    assert_eq!(infinite.len(), 3);
    assert!(infinite[0].message.contains("cannot distinguish Ne from infinity"));
    // Identical samples: ne_low is "inf" too, an interval ∞–∞ that bounds nothing.
    assert_eq!(cell(estimates, 0, "ne_low"), &Cell::Inf);
    assert!(infinite[0].message.contains("not estimable") && !infinite[0].message.contains("informative"));
    // Results contract: the "inf" of ne_fc and ne_fk is explained too, in one finding for all
    // comparisons.
    let moments = findings_with(&output, "infinite-estimate-fc-fk");
    assert_eq!(moments.len(), 1);
    assert!(moments[0].message.starts_with("3 comparison(s)"), "{}", moments[0].message);
    assert!(moments[0].message.contains("Pop 2000–2008 (ne_fc, ne_fk)"), "{}", moments[0].message);
    assert_eq!(findings_with(&output, "single-sampling-year")[0].location.population.as_deref(), Some("Lone"));
    for code in ["few-loci", "few-comparisons"] {
        assert_eq!(findings_with(&output, code).len(), 3, "{code}");
    }
}

/// Hand calculation of the per-locus formulas (docs/methods.md, "Temporal Ne") at one biallelic
/// locus x = (0.5, 0.5), y = (0.7, 0.3): F_c = (1/2)(0.04/0.25 + 0.04/0.25) = 0.16; F_k =
/// 0.04/0.6 + 0.04/0.4 = 0.166667; F̃ = 0.08/(2 · 0.6 · 0.4) = 0.166667.
#[test]
fn per_locus_formulas_by_hand() {
    let locus = LocusFrequencies { start_typed: 10.0, end_typed: 10.0, alleles: vec![(0.5, 0.7), (0.5, 0.3)] };
    let stats = drift_statistics(&[locus], &[0]).unwrap();
    assert_close(stats.fc, 0.16, 1e-12);
    assert_close(stats.fk, 1.0 / 6.0, 1e-12);
    assert_close(stats.f_ratio, 1.0 / 6.0, 1e-12);
    assert_eq!(ne_from_corrected(0.0, 4.0), f64::INFINITY);
    assert_eq!(ne_from_corrected(-0.1, 4.0), f64::INFINITY);
    assert_eq!(drift_statistics(&[], &[]), None);
}

/// Waples (1989) defines plans I and II only; the results contract's columns come first.
#[test]
fn parameters_and_columns_follow_the_contract() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let plan_two = [("plan".to_string(), json!("II"))].into_iter().collect();
    assert_eq!(d.resolve(&plan_two).unwrap()["plan"], json!("II"));
    let bad = [("plan".to_string(), json!("III"))].into_iter().collect();
    assert!(d.resolve(&bad).is_err());
    let output = run_with(&three_loci_four_years_apart(), json!({"plan": "II"}), &assessment(Some(1.0), None));
    let contract = [
        "population",
        "year_start",
        "year_end",
        "generations",
        "s_start",
        "s_end",
        "fc",
        "fk",
        "fs",
        "ne_fc",
        "ne_fk",
        "ne_fs",
        "ne_low",
        "ne_high",
    ];
    assert_eq!(&table(&output, "estimates").columns[..contract.len()], &contract);
    let caution = &findings_with(&output, "ne-interpretation")[0].message;
    assert!(caution.contains("uncertainty") && caution.contains("qualified geneticist"));
    assert_eq!(output.citations.len(), CITATIONS.len());
}

/// Waples (1989) plans I and II differ in the sampling term 1/N and in what the samples are, so
/// no plan is assumed: a recipe without `plan` is refused, and the help line says what each
/// plan means (I: after reproduction or non-lethal, with the census size; II: before
/// reproduction or lethal) and where the plans come from.
#[test]
fn the_sampling_plan_must_be_chosen() {
    let err = descriptor().resolve(&Default::default()).unwrap_err();
    assert!(matches!(err, ParamError::Missing { .. }), "{err:?}");
    assert_eq!(err.to_string(), "missing required parameter `plan`");
    assert_eq!(
        err.help(),
        "add `plan = …` under [step.params] (one of \"I\", \"II\"; there is no default): the sampling plan of \
         Waples (1989), required because it changes every estimate: \"I\" if the animals were sampled after \
         reproduction or non-lethally (uses census_size from the population sheet), \"II\" if they were sampled \
         before reproduction or lethally"
    );
}
