//! Duplicate samples in `validate`: identical genotypes reported, excluded by default or kept when
//! asked, one of each duplicate set kept, the check skipped with few loci, and duplicate ids.

use super::*;

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
    let data = || {
        MatrixBuilder::new(&["L1", "L2"]).samples("s", "P", 2020, 4, &["1/2", "1/1"]).sample(
            "t",
            "P",
            2020,
            &["1/1", "2/2"],
        )
    };
    let output = run(data(), json!({}));
    assert!(findings_with(&output, "duplicate-genotypes").is_empty());
    let skipped = findings_with(&output, "duplicate-check-skipped");
    assert_eq!(skipped.len(), 1);
    assert!(skipped[0].message.contains("2 loci are kept, fewer than min_loci_for_duplicates = 5"));
    // Lowering the minimum finds the four identical samples: 6 pairs.
    let output = run(data(), json!({"min_loci_for_duplicates": 2}));
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
