use popgauge_abi::{Cell, Exclusion, FindingLevel, GenotypeMatrix, StepOutput};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
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
/// individual; with `keep_duplicates` nothing is excluded.
#[test]
fn duplicate_genotypes_are_reported_and_kept_when_asked() {
    let output = run(data_with_duplicates(), json!({"keep_duplicates": true}));
    let found = findings_with(&output, "duplicate-genotypes");
    assert_eq!(found.len(), 1);
    assert_eq!(found[0].level, FindingLevel::Warning);
    assert!(found[0].message.starts_with("2 pair(s)"), "{}", found[0].message);
    assert!(found[0].message.contains("s2–s7 (6 loci), s4–s9 (5 loci)"), "{}", found[0].message);
    assert!(found[0].message.contains("They are kept (keep_duplicates = true)"));
    let samples = table(&output, "samples");
    assert_eq!(text(samples, row_with(samples, "sample", "s7"), "duplicate_of"), Some("s2"));
    assert_eq!(text(samples, row_with(samples, "sample", "s4"), "duplicate_of"), Some("s9"));
    assert_eq!(cell(samples, row_with(samples, "sample", "s8"), "duplicate_of"), &Cell::Null);
    assert!(output.filter.samples.is_empty());
}

/// By default the sample typed at fewer loci goes (s4, untyped at L6), or the later one on a
/// tie (s7).
#[test]
fn duplicate_genotypes_are_excluded_by_default() {
    let output = run(data_with_duplicates(), json!({}));
    let excluded: Vec<(&str, &str)> =
        output.filter.samples.iter().map(|e| (e.name.as_str(), e.reason.as_str())).collect();
    assert_eq!(
        excluded,
        vec![
            (
                "s4",
                "same multilocus genotype as sample s9, which is kept (identical at all 5 loci typed in both; set \
                 keep_duplicates = true to keep both)"
            ),
            (
                "s7",
                "same multilocus genotype as sample s2, which is kept (identical at all 6 loci typed in both; set \
                 keep_duplicates = true to keep both)"
            ),
        ]
    );
    let message = &findings_with(&output, "duplicate-genotypes")[0].message;
    assert!(message.contains("the others are excluded: s7 (kept: s2), s4 (kept: s9)"), "{message}");
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

/// Common practice: duplicate ids are a data error; one error-level finding per repeated id.
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
/// only, the L2 pattern elsewhere: mean r = (10/29 + 2 · 12/145)/3 = 0.170115. Hand
/// calculations; the Brookfield (1996) estimator-1 formula is from memory. L1 has no
/// heterozygote in 10 individuals in each group: exact p = 0.001364 (the Levene 1949 / Haldane
/// 1954 probabilities of the six possible tables summed by hand, exact factorials in Python),
/// q = 0.001364 · 9/4 = 0.0031 for the four such tests among 9 (Benjamini & Hochberg 1995), so
/// L1 is flagged in 3 of 3 groups; L3 only in group A, fewer than half, so it is not flagged.
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
    let counts: Vec<(Option<f64>, Option<f64>)> =
        (0..3).map(|l| (number(loci, l, "deficit_groups"), number(loci, l, "tested_groups"))).collect();
    assert_eq!(counts, vec![(Some(3.0), Some(3.0)), (Some(0.0), Some(3.0)), (Some(1.0), Some(3.0))]);
    let warnings = findings_with(&output, "heterozygote-deficit");
    assert_eq!(warnings.len(), 1);
    assert_eq!(warnings[0].location, Where::locus("L1"));
    assert!(warnings[0].message.contains("in 3 of the 3 groups where it was tested (A 2020, B 2020, C 2020)"));
    assert!(output.citations.iter().any(|c| c.starts_with("Brookfield JFY (1996)")));
    assert!(output.citations.iter().any(|c| c.starts_with("Benjamini Y")));
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

/// A seeded panel of biallelic loci in Hardy–Weinberg proportions: two groups of
/// `individuals`, each gene copy drawn independently with the locus's allele frequency
/// (uniform on 0.05–0.5), so any heterozygote deficit is sampling noise.
fn hardy_weinberg_panel(seed: u64, loci: usize, individuals: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let names: Vec<String> = (0..loci).map(|l| format!("snp{l}")).collect();
    let mut rows: Vec<(String, &str, Vec<String>)> = Vec::new();
    for population in ["North", "South"] {
        for i in 0..individuals {
            rows.push((format!("{population}{i}"), population, Vec::with_capacity(loci)));
        }
    }
    for _ in 0..loci {
        let frequency = 0.05 + 0.45 * rng.random::<f64>();
        for row in &mut rows {
            let mut copy = || if rng.random::<f64>() < frequency { "A" } else { "G" };
            let (a, b) = (copy(), copy());
            row.2.push(format!("{a}/{b}"));
        }
    }
    let mut builder = MatrixBuilder::new(&names.iter().map(String::as_str).collect::<Vec<_>>());
    for (id, population, cells) in &rows {
        builder = builder.sample(id, population, 2020, &cells.iter().map(String::as_str).collect::<Vec<_>>());
    }
    builder.build()
}

/// Loci named in per-locus deficit warnings, whatever their wording.
fn flagged_loci(output: &StepOutput) -> Vec<String> {
    output
        .findings
        .iter()
        .filter(|f| f.code == "possible-null-allele" || f.code == "heterozygote-deficit")
        .filter_map(|f| f.location.locus.clone())
        .collect()
}

/// Benjamini & Hochberg (1995): when no locus departs from Hardy–Weinberg proportions, the
/// false-discovery rate equals the chance of any flag at all, at most 5 %. Twenty seeded
/// 474-SNP panels (20 individuals in each of two groups) may therefore show flags in about one
/// panel; four or more would happen with probability 0.016 (binomial, 20 panels, p = 0.05).
/// A threshold on Brookfield's r alone flags dozens of loci per panel from noise.
#[test]
fn hardy_weinberg_panels_are_flagged_no_more_than_the_false_discovery_rate_allows() {
    let (mut panels_with_flags, mut total) = (0, 0);
    for seed in 0..20 {
        let output = run_step(&Validate, &hardy_weinberg_panel(1_000 + seed, 474, 20), json!({}));
        let flagged = flagged_loci(&output);
        assert!(flagged.len() <= 24, "seed {seed}: {} loci flagged, more than 5 % of 474", flagged.len());
        panels_with_flags += usize::from(!flagged.is_empty());
        total += flagged.len();
    }
    println!("Hardy–Weinberg panels: {panels_with_flags} of 20 with a flag, {total} loci flagged in all");
    assert!(panels_with_flags <= 3, "{panels_with_flags} of 20 null panels have flags");
}

/// A microsatellite-like panel: `loci` loci with 6 alleles of unequal frequency in two groups
/// of 30, in Hardy–Weinberg proportions, except locus `Null`, which also carries a null allele
/// at frequency 0.25: a carrier of one copy shows as homozygous for its other allele, one with
/// two copies as untyped.
fn microsatellites_with_a_null_allele(seed: u64, loci: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut names: Vec<String> = (1..loci).map(|l| format!("Ms{l:02}")).collect();
    names.push("Null".into());
    let visible = [0.3, 0.2, 0.2, 0.1, 0.1, 0.1];
    let labels = ["150", "154", "158", "162", "166", "170"];
    let mut rows: Vec<(String, &str, Vec<String>)> = Vec::new();
    for population in ["North", "South"] {
        for i in 0..30 {
            rows.push((format!("{population}{i}"), population, Vec::new()));
        }
    }
    for name in &names {
        let null_frequency = if name == "Null" { 0.25 } else { 0.0 };
        for row in &mut rows {
            let mut copy = || {
                let mut u = rng.random::<f64>();
                if u < null_frequency {
                    return None;
                }
                u = (u - null_frequency) / (1.0 - null_frequency);
                let mut cumulative = 0.0;
                for (label, p) in labels.iter().zip(visible) {
                    cumulative += p;
                    if u < cumulative {
                        return Some(*label);
                    }
                }
                Some(labels[5])
            };
            let cell = match (copy(), copy()) {
                (Some(a), Some(b)) => format!("{a}/{b}"),
                (Some(a), None) | (None, Some(a)) => format!("{a}/{a}"),
                (None, None) => "./.".into(),
            };
            row.2.push(cell);
        }
    }
    let mut builder = MatrixBuilder::new(&names.iter().map(String::as_str).collect::<Vec<_>>());
    for (id, population, cells) in &rows {
        builder = builder.sample(id, population, 2020, &cells.iter().map(String::as_str).collect::<Vec<_>>());
    }
    builder.build()
}

/// Brookfield (1996): a null allele shows as a heterozygote deficit. Planted at frequency 0.25
/// in a 6-allele locus (two groups of 30), it is flagged as a possible null allele, with the
/// corrected exact test (Monte Carlo p ≈ 1e−4, q well below 0.05 over 40 tests).
#[test]
fn a_planted_null_allele_is_still_flagged() {
    let output = run_step(&Validate, &microsatellites_with_a_null_allele(77, 20), json!({}));
    let null = findings_with(&output, "possible-null-allele");
    assert!(null.iter().any(|f| f.location == Where::locus("Null")), "{:?}", output.findings);
    let finding = null.iter().find(|f| f.location == Where::locus("Null")).unwrap();
    assert_eq!(finding.level, FindingLevel::Warning);
    assert!(finding.message.contains("in 2 of the 2 groups where it was tested"), "{}", finding.message);
    assert!(finding.message.contains("possibly a null allele"), "{}", finding.message);
    assert!(findings_with(&output, "heterozygote-deficit").is_empty());
    let loci = table(&output, "loci");
    let row = row_with(loci, "locus", "Null");
    assert_eq!((number(loci, row, "deficit_groups"), number(loci, row, "tested_groups")), (Some(2.0), Some(2.0)));
}

/// Null alleles are a microsatellite artefact: a two-allele locus with no heterozygotes in
/// both groups (10 × 1/1, 10 × 2/2; exact p = 1.3403e−6 per group, Wigginton et al. 2005 as
/// checked in `hwe_exact`) is reported as a heterozygote deficit, never as a null allele, and
/// the summary puts the number flagged beside the number expected by chance (5 % of 1).
#[test]
fn a_biallelic_locus_is_flagged_as_a_heterozygote_deficit() {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for population in ["P", "Q"] {
        builder = builder.samples(&format!("{population}a"), population, 2020, 10, &["1/1", "1/1"]);
        builder = builder.samples(&format!("{population}b"), population, 2020, 10, &["2/2", "1/2"]);
    }
    let output = run(builder, json!({}));
    assert!(findings_with(&output, "possible-null-allele").is_empty());
    let deficit = findings_with(&output, "heterozygote-deficit");
    assert_eq!(deficit.len(), 1);
    assert_eq!((deficit[0].level, &deficit[0].location), (FindingLevel::Warning, &Where::locus("L1")));
    assert!(!deficit[0].message.contains("possibly a null allele"), "{}", deficit[0].message);
    let summary = findings_with(&output, "deficit-summary");
    assert_eq!(summary.len(), 1);
    assert!(
        summary[0].message.starts_with(
            "1 of 2 kept loci flagged for a significant heterozygote deficit (at two-allele loci: 1; possible null \
             alleles, at loci with more alleles: 0); of these flags, about 0.05 are expected to be chance findings at the false-discovery rate of 5%"
        ),
        "{}",
        summary[0].message
    );
}

/// Six loci; s2, s7 and s10 are identical, s4 (untyped at L6) matches s9, and t1 in group Q
/// repeats s2. The groups have at least five samples each, so none is dropped as small.
fn data_with_a_duplicate_set() -> MatrixBuilder {
    let rest = ["1/2", "3/4", "2/2", "1/3", "4/4"];
    let mut builder = data_with_duplicates().sample("s10", "P", 2020, &["1/2", "1/2", "3/4", "2/2", "1/3", "4/4"]);
    let others = ["1/1", "1/3", "2/2", "2/3", "3/3"];
    for (i, l1) in others.iter().enumerate() {
        let mut cells = vec![*l1];
        cells.extend(rest);
        cells[2] = "4/4";
        builder = builder.sample(&format!("t{}", i + 2), "Q", 2020, &cells);
    }
    builder.sample("t1", "Q", 2020, &["1/2", "1/2", "3/4", "2/2", "1/3", "4/4"])
}

/// Common practice (one individual sampled twice inflates linkage disequilibrium and so biases
/// LD-based Ne downward): by default one sample of each identical set within a group is kept,
/// the one typed at most loci (s9 over s4, untyped at L6) or the earliest on a tie (s2 over s7
/// and s10); the others are excluded, named in the finding and in the samples table, and
/// reach the filter. t1 repeats s2 in another group (possibly a recapture in another place or
/// year) and is kept, as is s2.
#[test]
fn one_of_each_duplicate_set_is_kept_by_default() {
    let output = run(data_with_a_duplicate_set(), json!({}));
    let excluded: Vec<(&str, &str)> =
        output.filter.samples.iter().map(|e| (e.name.as_str(), e.reason.as_str())).collect();
    let reason = |kept: &str, loci: usize| {
        format!(
            "same multilocus genotype as sample {kept}, which is kept (identical at all {loci} loci typed in both; \
             set keep_duplicates = true to keep both)"
        )
    };
    assert_eq!(
        excluded,
        vec![("s4", reason("s9", 5).as_str()), ("s7", reason("s2", 6).as_str()), ("s10", reason("s2", 6).as_str())]
    );
    let samples = table(&output, "samples");
    assert_eq!(text(samples, row_with(samples, "sample", "s10"), "duplicate_of"), Some("s2, s7, t1"));
    assert_eq!(text(samples, row_with(samples, "sample", "s2"), "status"), Some("kept"));
    assert_eq!(text(samples, row_with(samples, "sample", "t1"), "status"), Some("kept"));
    let found = findings_with(&output, "duplicate-genotypes");
    assert_eq!(found.len(), 1);
    assert!(found[0].message.contains("excluded: s7 and s10 (kept: s2), s4 (kept: s9)"), "{}", found[0].message);
    assert!(found[0].message.contains("in different groups are both kept: s2–t1"), "{}", found[0].message);
}

/// `keep_duplicates = true` keeps every sample and still reports the pairs.
#[test]
fn duplicates_are_all_kept_when_asked() {
    let output = run(data_with_a_duplicate_set(), json!({"keep_duplicates": true}));
    assert!(output.filter.samples.is_empty());
    let found = findings_with(&output, "duplicate-genotypes");
    assert!(found[0].message.contains("They are kept (keep_duplicates = true)"), "{}", found[0].message);
}
