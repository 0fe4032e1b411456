//! Tests of the `validate` step: missingness, monomorphic loci, small groups, the summary, reader
//! findings, error findings when nothing is kept, and the descriptor; duplicates and
//! heterozygote deficits are in the submodules.

use popgauge_abi::{Cell, Exclusion, FindingLevel, GenotypeMatrix, StepOutput};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::Value;

use super::*;
use crate::test_support::{
    MatrixBuilder, assert_close, cell, findings_with, number, row_with, run_step, table, text, try_run_step,
};

mod deficit;
mod duplicates;

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

/// The parameter's definition, "a locus untyped in more than this share of samples is
/// excluded": 3 of 10 untyped (0.3) is more than 0.2, exactly 2 of 10 (0.2) is not.
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
    let reason = "untyped in 3 of the 10 samples kept after the sample checks (30%; more than max_missing_locus = 0.2)";
    assert_eq!(status(&output, "loci", "locus", "L2"), ("excluded", Some(reason)));
    assert_eq!(status(&output, "loci", "locus", "L3"), ("kept", None));
    let loci = table(&output, "loci");
    assert_eq!((number(loci, 1, "missing"), number(loci, 1, "typed")), (Some(0.3), Some(7.0)));
    assert_eq!(number(loci, 2, "missing"), Some(0.2));
    assert_eq!(output.filter.loci, vec![Exclusion { name: "L2".into(), reason: reason.into() }]);
}

/// Common practice: loci monomorphic in the whole data set are dropped; a locus typed nowhere
/// has no allele at all and is dropped by the same check, whatever max_missing_locus.
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

/// The parameter's definition: a sample untyped at more than `max_missing_sample` of the kept
/// loci is excluded; s6 is untyped at 3 of 4 (0.75 > 0.5), s5 at exactly 2 of 4 (0.5) is kept.
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

/// The parameter's definition: samples of a group with fewer than `min_group_size` kept
/// samples are excluded with a warning; the count is taken after the missingness checks (C: 5
/// samples, 4 left).
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

/// Without any usable locus the samples cannot be judged: an error finding, not a failed step.
#[test]
fn no_locus_kept_is_an_error_finding() {
    let output = run(MatrixBuilder::new(&["L1"]).samples("s", "P", 2020, 6, &["1/1"]), json!({}));
    let found = findings_with(&output, "no-loci-kept");
    assert_eq!((found.len(), found[0].level), (1, FindingLevel::Error));
    assert_eq!(number(table(&output, "samples"), 0, "missing"), None);
}

/// Common practice (every null in a table comes with a finding saying why): when the sample
/// checks leave no sample, loci cannot be judged; an error finding says so and `missing` is
/// null in the loci table.
#[test]
fn no_sample_kept_is_an_error_finding() {
    let mut builder = MatrixBuilder::new(&["L1"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[l1]);
    }
    let output = run(builder, json!({"min_group_size": 7}));
    let found = findings_with(&output, "no-samples-kept");
    assert_eq!((found.len(), found[0].level), (1, FindingLevel::Error));
    let loci = table(&output, "loci");
    assert_eq!((number(loci, 0, "missing"), number(loci, 0, "typed")), (None, Some(0.0)));
    assert_eq!((number(loci, 0, "deficit_groups"), number(loci, 0, "tested_groups")), (None, None));
}

/// When every locus fails the missingness check on the kept samples, `no-loci-kept` names the
/// threshold to raise: each locus is untyped in 1 of 6 samples (16.7 %), more than 0.1.
#[test]
fn no_locus_left_after_the_missingness_check_is_an_error_finding() {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for (i, l1) in DISTINCT_L1.iter().enumerate() {
        let cells = match i {
            0 => ["./.", "1/2"],
            1 => [*l1, "./."],
            _ => [*l1, if i % 2 == 0 { "1/1" } else { "1/2" }],
        };
        builder = builder.sample(&format!("s{i}"), "P", 2020, &cells);
    }
    let output = run(builder, json!({"max_missing_locus": 0.1}));
    let found = findings_with(&output, "no-loci-kept");
    assert_eq!((found.len(), found[0].level), (1, FindingLevel::Error));
    assert!(found[0].message.contains("more than max_missing_locus = 0.1 of the samples kept"), "{}", found[0].message);
    assert!(output.filter.samples.is_empty());
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

/// The documented parameter names and defaults; unknown names are refused with a suggestion.
#[test]
fn parameters_have_designed_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["max_missing_locus"], json!(0.2));
    assert_eq!(resolved["max_missing_sample"], json!(0.5));
    assert_eq!(resolved["min_group_size"], json!(5));
    let params: Params = serde_json::from_value(json!(resolved)).unwrap();
    assert!(!params.keep_duplicates);
    let typo = [("max_mising_locus".to_string(), json!(0.1))].into_iter().collect();
    assert_eq!(
        d.resolve(&typo).unwrap_err().help(),
        "did you mean `max_missing_locus`? `popgauge steps` lists each step's parameters"
    );
}

/// Six samples per group with distinct genotypes at L1 and L2 (so no two are duplicates).
fn typed_group(builder: MatrixBuilder, population: &str) -> MatrixBuilder {
    let second = ["1/1", "2/2", "1/2", "1/1", "2/2", "1/2"];
    let mut builder = builder;
    for (i, (l1, l2)) in DISTINCT_L1.iter().zip(second).enumerate() {
        builder = builder.sample(&format!("{population}{i}"), population, 2020, &[l1, l2, l2, l1]);
    }
    builder
}

/// Common practice (samples are judged before loci, so one failed group cannot remove every
/// locus): group C has no typed genotype, which makes every locus 6 of 18 (33 %) untyped over
/// all samples. C is named in a `group-untyped` warning and dropped; the loci are judged on
/// A and B, where they are fully typed, and kept.
#[test]
fn a_group_without_genotypes_is_dropped_and_the_others_assessed() {
    let builder = typed_group(typed_group(MatrixBuilder::new(&["L1", "L2", "L3", "L4"]), "A"), "B");
    let output = run(builder.samples("C", "C", 2020, 6, &["./.", "./.", "./.", "./."]), json!({}));
    assert!(findings_with(&output, "no-loci-kept").is_empty());
    let untyped = findings_with(&output, "group-untyped");
    assert_eq!(untyped.len(), 1);
    assert_eq!((untyped[0].level, &untyped[0].location), (FindingLevel::Warning, &Where::group("C", 2020)));
    assert_eq!(
        untyped[0].message,
        "group C 2020 has no typed genotype at any of the 4 loci (6 samples); its samples are excluded and the \
         other groups are assessed without it. Check that the group's genotypes were entered or exported, or \
         remove its rows"
    );
    assert!(findings_with(&output, "small-group").is_empty(), "the group is named once, by its own finding");
    let loci = table(&output, "loci");
    assert!((0..4).all(|l| text(loci, l, "status") == Some("kept")));
    assert_eq!((number(loci, 0, "missing"), number(loci, 0, "typed")), (Some(0.0), Some(12.0)));
    assert_eq!(
        status(&output, "samples", "sample", "C1"),
        ("excluded", Some("its group C 2020 has no typed genotype at any of the 4 loci"))
    );
    let groups = table(&output, "groups");
    let c = row_with(groups, "population", "C");
    assert_eq!((text(groups, c, "status"), number(groups, c, "n_passed_missingness")), (Some("excluded"), Some(0.0)));
    assert_eq!(output.filter.samples.len(), 6);
    assert!(output.filter.loci.is_empty());
    assert_eq!(
        findings_with(&output, "validation-summary")[0].message,
        "kept 12 of 18 samples (6 excluded) and 4 of 4 loci (0 excluded)"
    );
}

/// Common practice (samples first, then loci on the samples kept): three samples untyped at
/// L1–L3 fail the sample check (3 of 4 loci, more than 0.5); over the 10 samples left, L2 is
/// untyped in exactly 2 (20 %, not more than max_missing_locus = 0.2) and every locus is kept.
/// Judged over all 13 samples, L1–L3 would have been 23–38 % untyped and excluded.
#[test]
fn loci_are_judged_on_the_samples_kept() {
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4"]);
    let l3 = ["1/1", "1/2", "2/2", "1/2", "1/1", "2/2", "1/2", "1/1", "2/2", "1/2"];
    for i in 0..10 {
        let l2 = if i < 2 { "./." } else { "3/4" };
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[DISTINCT_L1[i % 6], l2, l3[i], "5/6"]);
    }
    for i in 0..3 {
        builder = builder.sample(&format!("bad{i}"), "P", 2020, &["./.", "./.", "./.", "5/5"]);
    }
    let output = run(builder, json!({}));
    let loci = table(&output, "loci");
    let statuses: Vec<Option<&str>> = (0..4).map(|l| text(loci, l, "status")).collect();
    assert_eq!(statuses, vec![Some("kept"); 4]);
    assert_eq!((number(loci, 1, "missing"), number(loci, 1, "typed")), (Some(0.2), Some(8.0)));
    let reason = "untyped at 3 of the 4 kept loci (75%; more than max_missing_sample = 0.5)";
    assert_eq!(status(&output, "samples", "sample", "bad0"), ("excluded", Some(reason)));
    assert_eq!(output.filter.samples.len(), 3);
}
