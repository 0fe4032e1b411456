use popgauge_abi::{Cell, Exclusion, FindingLevel, StepOutput};
use serde_json::Value;

use super::*;
use crate::test_support::{
    MatrixBuilder, assert_close, cell, findings_with, number, row_with, run_step, table, text, try_run_step,
};

fn run(builder: MatrixBuilder, params: Value) -> StepOutput {
    run_step(&Validate, &builder.build(), params)
}

fn status<'o>(output: &'o StepOutput, table_name: &str, key_column: &str, key: &str) -> (&'o str, Option<&'o str>) {
    let t = table(output, table_name);
    let row = row_with(t, key_column, key);
    (text(t, row, "status").unwrap(), text(t, row, "reason"))
}

/// Six genotypes distinct at L1, so no two samples are duplicates.
const DISTINCT_L1: [&str; 6] = ["1/1", "1/2", "1/3", "2/2", "2/3", "3/3"];

/// DESIGN: "a locus untyped in more than this share of samples is excluded"; 3 of 10 untyped
/// (0.3) is more than 0.2, exactly 2 of 10 (0.2) is not.
#[test]
fn locus_above_missing_threshold_is_excluded() {
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3"]);
    for i in 0..10 {
        let l2 = if i < 3 { "./." } else { "1/2" };
        let l3 = if i >= 8 { "./." } else { "1/1" };
        let l3 = if i == 0 { "2/2" } else { l3 };
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[DISTINCT_L1[i % 6], l2, l3]);
    }
    let output = run(builder, json!({}));
    let reason = "untyped in 3 of 10 samples (30%; more than max_missing_locus = 0.2)";
    assert_eq!(status(&output, "loci", "locus", "L2"), ("excluded", Some(reason)));
    assert_eq!(status(&output, "loci", "locus", "L3"), ("kept", None));
    let loci = table(&output, "loci");
    assert_eq!((number(loci, 1, "missing"), number(loci, 1, "typed")), (Some(0.3), Some(7.0)));
    assert_eq!(number(loci, 2, "missing"), Some(0.2));
    assert_eq!(output.filter.loci, vec![Exclusion { name: "L2".into(), reason: reason.into() }]);
}

/// METHODS §1: loci monomorphic in the whole data set are dropped; a locus typed nowhere has no
/// allele at all (only reachable with max_missing_locus = 1).
#[test]
fn monomorphic_and_untyped_loci_are_excluded() {
    let mut builder = MatrixBuilder::new(&["L1", "Mono", "Empty"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[l1, "5/5", "./."]);
    }
    let output = run(builder, json!({"max_missing_locus": 1.0}));
    assert_eq!(status(&output, "loci", "locus", "Mono"), ("excluded", Some("monomorphic in the whole data set")));
    assert_eq!(status(&output, "loci", "locus", "Empty"), ("excluded", Some("not typed in any sample")));
    let loci = table(&output, "loci");
    assert_eq!(
        (number(loci, 0, "alleles"), number(loci, 1, "alleles"), number(loci, 2, "alleles")),
        (Some(3.0), Some(1.0), Some(0.0))
    );
    assert_eq!(number(loci, 1, "null_allele"), None);
    let names: Vec<&str> = output.filter.loci.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(names, vec!["Mono", "Empty"]);
}

/// DESIGN: a sample untyped at more than `max_missing_sample` of the kept loci is excluded;
/// s6 is untyped at 3 of 4 (0.75 > 0.5), s5 at exactly 2 of 4 (0.5) is kept.
#[test]
fn sample_above_missing_threshold_is_excluded() {
    let builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4"])
        .sample("s1", "P", 2020, &["1/1", "1/2", "1/1", "2/2"])
        .sample("s2", "P", 2020, &["1/2", "2/2", "1/2", "1/2"])
        .sample("s3", "P", 2020, &["2/2", "1/1", "2/2", "1/1"])
        .sample("s4", "P", 2020, &["1/2", "1/2", "1/1", "1/2"])
        .sample("s5", "P", 2020, &["1/1", "2/2", "./.", "./."])
        .sample("s6", "P", 2020, &["./.", "./.", "./.", "1/1"]);
    let output = run(builder, json!({"max_missing_locus": 0.5}));
    let reason = "untyped at 3 of the 4 kept loci (75%; more than max_missing_sample = 0.5)";
    assert_eq!(status(&output, "samples", "sample", "s6"), ("excluded", Some(reason)));
    assert_eq!(status(&output, "samples", "sample", "s5"), ("kept", None));
    let samples = table(&output, "samples");
    assert_eq!((number(samples, 4, "missing"), number(samples, 5, "missing")), (Some(0.5), Some(0.75)));
    assert_eq!(output.filter.samples, vec![Exclusion { name: "s6".into(), reason: reason.into() }]);
    let groups = table(&output, "groups");
    assert_eq!((number(groups, 0, "n_total"), number(groups, 0, "n_kept")), (Some(6.0), Some(5.0)));
    assert_eq!(text(groups, 0, "status"), Some("kept"));
}

fn groups_of_different_sizes() -> MatrixBuilder {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        builder = builder.sample(&format!("a{i}"), "A", 2020, &[l1, "1/2"]);
    }
    builder = builder.samples("b", "B", 2021, 3, &["1/2", "1/1"]);
    // C has 5 samples, but c5 fails the missingness check, leaving 4.
    builder = builder.samples("c", "C", 2020, 4, &["2/2", "1/2"]).sample("c5", "C", 2020, &["./.", "./."]);
    builder
}

/// DESIGN: samples of a group with fewer than `min_group_size` kept samples are excluded with a
/// warning; the count is taken after the missingness checks (C: 5 samples, 4 left).
#[test]
fn small_groups_are_excluded_with_a_warning() {
    let output = run(groups_of_different_sizes(), json!({"max_missing_locus": 0.5}));
    let warnings = findings_with(&output, "small-group");
    let locations: Vec<&Where> = warnings.iter().map(|f| &f.location).collect();
    assert_eq!(locations, vec![&Where::group("B", 2021), &Where::group("C", 2020)]);
    assert!(warnings.iter().all(|f| f.level == FindingLevel::Warning));
    assert_eq!(
        status(&output, "samples", "sample", "b1"),
        (
            "excluded",
            Some("its group B 2021 has 3 samples left after the missingness checks, fewer than min_group_size = 5")
        )
    );
    let (c5_status, c5_reason) = status(&output, "samples", "sample", "c5");
    assert_eq!(c5_status, "excluded");
    assert!(c5_reason.unwrap().starts_with("untyped at 2 of the 2 kept loci"), "{c5_reason:?}");
    let groups = table(&output, "groups");
    let c = row_with(groups, "population", "C");
    assert_eq!((number(groups, c, "n_total"), number(groups, c, "n_passed_missingness")), (Some(5.0), Some(4.0)));
    assert_eq!((number(groups, c, "n_kept"), text(groups, c, "status")), (Some(0.0), Some("excluded")));
    assert_eq!(text(groups, row_with(groups, "population", "A"), "status"), Some("kept"));
    assert_eq!(output.filter.samples.len(), 3 + 5);
}

/// The summary counts what the tables show: 6 of 14 samples and 2 of 2 loci kept.
#[test]
fn summary_counts_kept_and_excluded() {
    let output = run(groups_of_different_sizes(), json!({"max_missing_locus": 0.5}));
    let summary = findings_with(&output, "validation-summary");
    assert_eq!(summary.len(), 1);
    assert_eq!(summary[0].message, "kept 6 of 14 samples (8 excluded) and 2 of 2 loci (0 excluded)");
    assert_eq!(summary[0].level, FindingLevel::Info);
}

/// Check 8: L2 varies only through group B, which is too small, so after the sample checks it is
/// monomorphic in the kept samples and is excluded too.
#[test]
fn loci_monomorphic_in_kept_samples_are_excluded_last() {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        builder = builder.sample(&format!("a{i}"), "A", 2020, &[l1, "1/1"]);
    }
    let output = run(builder.samples("b", "B", 2020, 2, &["1/1", "2/2"]), json!({}));
    assert_eq!(
        status(&output, "loci", "locus", "L2"),
        ("excluded", Some("monomorphic in the samples kept after the sample checks"))
    );
    assert_eq!(number(table(&output, "loci"), 1, "alleles"), Some(1.0));
    assert_eq!(status(&output, "loci", "locus", "L1"), ("kept", None));
}

/// Six loci: s7 repeats s2 exactly; s9 repeats s4, which is untyped at L6 (5 loci compared,
/// the minimum max(5, ⌈6/2⌉) = 5).
fn data_with_duplicates() -> MatrixBuilder {
    let rest = ["1/2", "3/4", "2/2", "1/3", "4/4"];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4", "L5", "L6"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        let mut cells = vec![*l1];
        cells.extend(rest);
        if i == 3 {
            cells[5] = "./.";
        }
        builder = builder.sample(&format!("s{}", i + 1), "P", 2020, &cells);
    }
    builder
        .sample("s7", "P", 2020, &["1/2", "1/2", "3/4", "2/2", "1/3", "4/4"])
        .sample("s8", "P", 2020, &["1/1", "1/1", "1/1", "1/1", "1/1", "1/1"])
        .sample("s9", "P", 2020, &["2/2", "1/2", "3/4", "2/2", "1/3", "4/4"])
}

/// Common practice: identical multilocus genotypes are reported as possible resampling of one
/// individual; by default nothing is excluded.
#[test]
fn duplicate_genotypes_are_reported_and_kept_by_default() {
    let output = run(data_with_duplicates(), json!({}));
    let found = findings_with(&output, "duplicate-genotypes");
    assert_eq!(found.len(), 1);
    assert_eq!(found[0].level, FindingLevel::Warning);
    assert!(found[0].message.starts_with("2 pair(s)"), "{}", found[0].message);
    assert!(found[0].message.contains("s2–s7 (6 loci), s4–s9 (5 loci)"), "{}", found[0].message);
    assert!(found[0].message.contains("they are kept"));
    let samples = table(&output, "samples");
    assert_eq!(text(samples, row_with(samples, "sample", "s7"), "duplicate_of"), Some("s2"));
    assert_eq!(text(samples, row_with(samples, "sample", "s4"), "duplicate_of"), Some("s9"));
    assert_eq!(cell(samples, row_with(samples, "sample", "s8"), "duplicate_of"), &Cell::Null);
    assert!(output.filter.samples.is_empty());
}

/// With `exclude_duplicate_genotypes`, the sample with more missing data goes (s4, untyped at
/// L6), or the later one on a tie (s7).
#[test]
fn duplicate_genotypes_are_excluded_when_asked() {
    let output = run(data_with_duplicates(), json!({"exclude_duplicate_genotypes": true}));
    let excluded: Vec<(&str, &str)> =
        output.filter.samples.iter().map(|e| (e.name.as_str(), e.reason.as_str())).collect();
    assert_eq!(
        excluded,
        vec![
            (
                "s4",
                "same multilocus genotype as sample s9 at all 5 loci typed in both (exclude_duplicate_genotypes = true)"
            ),
            (
                "s7",
                "same multilocus genotype as sample s2 at all 6 loci typed in both (exclude_duplicate_genotypes = true)"
            ),
        ]
    );
    assert!(findings_with(&output, "duplicate-genotypes")[0].message.contains("one sample of each pair is excluded"));
}

/// With fewer kept loci than `min_loci_for_duplicates`, identical genotypes mean little; the
/// check is skipped and says so.
#[test]
fn duplicate_check_is_skipped_with_few_loci() {
    let output = run(
        MatrixBuilder::new(&["L1", "L2"]).samples("s", "P", 2020, 4, &["1/2", "1/1"]).sample(
            "t",
            "P",
            2020,
            &["1/1", "2/2"],
        ),
        json!({}),
    );
    assert!(findings_with(&output, "duplicate-genotypes").is_empty());
    let skipped = findings_with(&output, "duplicate-check-skipped");
    assert_eq!(skipped.len(), 1);
    assert!(skipped[0].message.contains("2 loci are kept, fewer than min_loci_for_duplicates = 5"));
    // Lowering the minimum finds the four identical samples: 6 pairs.
    let output = run(
        MatrixBuilder::new(&["L1", "L2"]).samples("s", "P", 2020, 4, &["1/2", "1/1"]).sample(
            "t",
            "P",
            2020,
            &["1/1", "2/2"],
        ),
        json!({"min_loci_for_duplicates": 2}),
    );
    assert!(findings_with(&output, "duplicate-genotypes")[0].message.starts_with("6 pair(s)"));
}

/// DESIGN: duplicate ids are a data error; one error-level finding per repeated id.
#[test]
fn duplicate_ids_are_error_findings() {
    let mut builder = MatrixBuilder::new(&["L1"]);
    for (id, l1) in ["a", "a", "b", "c", "c", "c"].iter().zip(DISTINCT_L1) {
        builder = builder.sample(id, "P", 2020, &[l1]);
    }
    let output = run(builder, json!({}));
    let found = findings_with(&output, "duplicate-sample-id");
    assert_eq!(found.len(), 2);
    assert!(found.iter().all(|f| f.level == FindingLevel::Error));
    assert_eq!((&found[0].location, &found[1].location), (&Where::sample("a"), &Where::sample("c")));
    assert!(found[0].message.starts_with("sample id \"a\" appears 2 times"));
    assert!(found[1].message.starts_with("sample id \"c\" appears 3 times"));
}

/// Check 1: reader findings come first, unchanged, and are counted per locus column.
#[test]
fn reader_findings_are_copied_and_counted() {
    let bad_cell = |line: u64, column: &str| {
        Finding::warning(
            "bad-cell",
            format!(
                "genotypes.csv row {line}, column {column}, cell \"152/.\": one allele missing; treated as untyped"
            ),
            Where {
                file: Some("genotypes.csv".into()),
                line: Some(line),
                column: Some(column.into()),
                ..Where::default()
            },
        )
    };
    let input = vec![bad_cell(2, "L1"), bad_cell(4, "L2"), bad_cell(5, "L1"), bad_cell(6, "notes")];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[l1, l1, l1]);
    }
    let output = try_run_step(&Validate, &builder.build(), json!({}), &input).unwrap();
    assert_eq!(output.findings[..4], input[..]);
    let loci = table(&output, "loci");
    let counts: Vec<Option<f64>> = (0..3).map(|r| number(loci, r, "bad_cells")).collect();
    assert_eq!(counts, vec![Some(2.0), Some(1.0), Some(0.0)]);
}

/// Three groups of 10. L1: 5 × 1/1 and 5 × 2/2 in every group, so Ho = 0 and He = 200/380 =
/// 0.526316 (Nei 1978), r = 0.526316/1.526316 = 10/29 = 0.344828. L2: 3 × 1/1, 4 × 1/2,
/// 3 × 2/2, Ho = 0.4, r = 0.126316/1.526316 = 12/145 = 0.082759. L3: the L1 pattern in group A
/// only, the L2 pattern elsewhere: r ≥ 0.1 in 1 of 3 groups, fewer than half, so no warning;
/// mean r = (10/29 + 2 · 12/145)/3 = 0.170115. Hand calculations; the Brookfield (1996)
/// estimator-1 formula is from memory (METHODS §4.4).
#[test]
fn null_allele_indication_per_locus() {
    let deficit = ["1/1", "1/1", "1/1", "1/1", "1/1", "2/2", "2/2", "2/2", "2/2", "2/2"];
    let balanced = ["1/1", "1/1", "1/1", "1/2", "1/2", "1/2", "1/2", "2/2", "2/2", "2/2"];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3"]);
    for population in ["A", "B", "C"] {
        for i in 0..10 {
            let l3 = if population == "A" { deficit[i] } else { balanced[i] };
            builder = builder.sample(&format!("{population}{i}"), population, 2020, &[deficit[i], balanced[i], l3]);
        }
    }
    let output = run(builder, json!({}));
    let loci = table(&output, "loci");
    assert_close(number(loci, 0, "null_allele").unwrap(), 10.0 / 29.0, 1e-12);
    assert_close(number(loci, 0, "null_allele").unwrap(), 0.344828, 1e-6);
    assert_close(number(loci, 1, "null_allele").unwrap(), 0.082759, 1e-6);
    assert_close(number(loci, 2, "null_allele").unwrap(), 0.170115, 1e-6);
    let warnings = findings_with(&output, "possible-null-allele");
    assert_eq!(warnings.len(), 1);
    assert_eq!(warnings[0].location, Where::locus("L1"));
    assert!(warnings[0].message.contains("in 3 of 3 groups"), "{}", warnings[0].message);
    assert!(warnings[0].message.contains("indication only"));
    assert!(output.citations.iter().any(|c| c.starts_with("Brookfield JFY (1996)")));
}

/// Groups with fewer than 10 typed individuals do not count towards the warning.
#[test]
fn null_allele_warning_needs_groups_of_ten() {
    let mut builder = MatrixBuilder::new(&["L1"]);
    for (i, cell) in ["1/1", "1/1", "1/1", "2/2", "2/2", "2/2"].iter().enumerate() {
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[cell]);
    }
    let output = run(builder, json!({}));
    assert!(number(table(&output, "loci"), 0, "null_allele").unwrap() > NULL_ALLELE_FLAG);
    assert!(findings_with(&output, "possible-null-allele").is_empty());
}

/// Without any usable locus the samples cannot be judged: an error finding, not a failed step.
#[test]
fn no_locus_kept_is_an_error_finding() {
    let output = run(MatrixBuilder::new(&["L1"]).samples("s", "P", 2020, 6, &["1/1"]), json!({}));
    let found = findings_with(&output, "no-loci-kept");
    assert_eq!((found.len(), found[0].level), (1, FindingLevel::Error));
    assert_eq!(number(table(&output, "samples"), 0, "missing"), None);
}

#[test]
fn empty_data_are_an_error() {
    let no_samples = MatrixBuilder::new(&["L1"]).build();
    let err = try_run_step(&Validate, &no_samples, json!({}), &[]).unwrap_err();
    assert!(err.message.starts_with("there are no samples to validate"));
    let no_loci = MatrixBuilder::new(&[]).sample("a", "P", 2020, &[]).build();
    let err = try_run_step(&Validate, &no_loci, json!({}), &[]).unwrap_err();
    assert!(err.message.starts_with("there are no loci to validate"));
}

/// DESIGN: the fixed parameter names and defaults; unknown names are refused with a suggestion.
#[test]
fn parameters_have_designed_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["max_missing_locus"], json!(0.2));
    assert_eq!(resolved["max_missing_sample"], json!(0.5));
    assert_eq!(resolved["min_group_size"], json!(5));
    let params: Params = serde_json::from_value(json!(resolved)).unwrap();
    assert!(!params.exclude_duplicate_genotypes);
    let typo = [("max_mising_locus".to_string(), json!(0.1))].into_iter().collect();
    assert_eq!(
        d.resolve(&typo).unwrap_err().help(),
        "did you mean `max_missing_locus`? `popgauge steps` lists each step's parameters"
    );
}
