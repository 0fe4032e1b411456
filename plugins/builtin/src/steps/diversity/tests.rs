use popgauge_abi::{AlleleCode, FindingLevel, GenotypeMatrix, LocusMeta, SampleMeta, Where};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{Value, json};

use super::*;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, run_step, table};

/// The four variants of the scikit-allel documentation example as loci V1–V4, three
/// samples in one group.
fn scikit_allel_example() -> GenotypeMatrix {
    MatrixBuilder::new(&["V1", "V2", "V3", "V4"])
        .sample("s1", "North", 2020, &["0/0", "0/0", "0/0", "1/1"])
        .sample("s2", "North", 2020, &["0/0", "0/1", "1/1", "1/2"])
        .sample("s3", "North", 2020, &["0/0", "1/1", "2/2", "./."])
        .build()
}

/// Source: scikit-allel 1.x documentation, docstring examples of `heterozygosity_observed`
/// and `inbreeding_coefficient` (module `allel.stats.hw`): Ho = 0, 0.333333, 0, 0.5. He is
/// computed with Nei's (1978) unbiased formula on the same data (hand calculation):
/// 0, 0.6, 0.8, 0.5, so F = null, 0.444444, 1, 0 (the documentation's F uses plug-in He).
/// FIS (WC84, r = 1) = 1 − Ho/He* with He* = 0, 0.666667, 1, 0.5 (hand
/// calculation; confirmed by tests/reference/wc84_scikit_allel_example.py): null, 0.5, 1, 0.
/// Effective alleles 1/Σp² by hand: 1, 2, 3, 1/(0.5625 + 0.0625) = 1.6.
#[test]
fn by_locus_matches_scikit_allel_example() {
    let output = run_step(&Diversity, &scikit_allel_example(), json!({}));
    let by_locus = table(&output, "by_locus");
    let expected_ho = [0.0, 1.0 / 3.0, 0.0, 0.5];
    let expected_he = [0.0, 0.6, 0.8, 0.5];
    let expected_f = [None, Some(4.0 / 9.0), Some(1.0), Some(0.0)];
    let expected_fis = [None, Some(0.5), Some(1.0), Some(0.0)];
    let expected_n = [3.0, 3.0, 3.0, 2.0];
    let expected_effective = [1.0, 2.0, 3.0, 1.6];
    let maybe_close = |got: Option<f64>, want: Option<f64>| match want {
        Some(w) => assert_close(got.unwrap(), w, 1e-12),
        None => assert_eq!(got, None),
    };
    for row in 0..4 {
        assert_close(number(by_locus, row, "ho").unwrap(), expected_ho[row], 1e-12);
        assert_close(number(by_locus, row, "he").unwrap(), expected_he[row], 1e-12);
        assert_eq!(number(by_locus, row, "n"), Some(expected_n[row]));
        maybe_close(number(by_locus, row, "f"), expected_f[row]);
        maybe_close(number(by_locus, row, "fis"), expected_fis[row]);
        assert_close(number(by_locus, row, "effective_alleles").unwrap(), expected_effective[row], 1e-12);
    }
    assert_close(number(by_locus, 1, "f").unwrap(), 0.444444, 1e-6);
    let alleles: Vec<_> = (0..4).map(|r| number(by_locus, r, "alleles")).collect();
    assert_eq!(alleles, vec![Some(1.0), Some(2.0), Some(3.0), Some(2.0)]);
}

/// Hand calculation on the scikit-allel example (He per Nei 1978, He* per Nei–Chesser):
/// ΣHo = 1/3 + 1/2 = 0.833333, ΣHe = 0.6 + 0.8 + 0.5 = 1.9,
/// ΣHe* = 0.666667 + 1 + 0.5 = 2.166667 over the 4 loci with n ≥ 2; ho = 0.208333,
/// he = 0.475, f = 1 − 0.833333/1.9 = 0.561404, fis = 1 − 0.833333/2.166667 = 0.615385,
/// alleles_mean = 2, effective_alleles = (1 + 2 + 3 + 1.6)/4 = 1.9.
#[test]
fn by_group_uses_means_and_ratio_of_sums() {
    let output = run_step(&Diversity, &scikit_allel_example(), json!({}));
    let by_group = table(&output, "by_group");
    assert_eq!(by_group.rows.len(), 1);
    assert_eq!((number(by_group, 0, "n"), number(by_group, 0, "loci")), (Some(3.0), Some(4.0)));
    assert_close(number(by_group, 0, "ho").unwrap(), 0.208333, 1e-6);
    assert_close(number(by_group, 0, "he").unwrap(), 0.475, 1e-12);
    assert_close(number(by_group, 0, "f").unwrap(), 0.561404, 1e-6);
    assert_close(number(by_group, 0, "fis").unwrap(), 1.0 - (5.0 / 6.0) / (13.0 / 6.0), 1e-12);
    assert_close(number(by_group, 0, "fis").unwrap(), 0.615385, 1e-6);
    assert_close(number(by_group, 0, "alleles_mean").unwrap(), 2.0, 1e-12);
    assert_close(number(by_group, 0, "effective_alleles").unwrap(), 1.9, 1e-12);
}

/// Source: the five variants of the scikit-allel 1.3 documentation example of
/// `weir_cockerham_fst`, here all four samples in one group (r = 1).
/// f = 1 − ΣHo/ΣHe* = 0.278689 is computed in pure Python by
/// tests/reference/wc84_scikit_allel_example.py (it coincides with scikit-allel's overall f
/// for the two-group split, 0.27868852, because Σa ≈ 0 there).
#[test]
fn one_group_fis_of_the_wc84_documentation_variants() {
    let matrix = MatrixBuilder::new(&["V1", "V2", "V3", "V4", "V5"])
        .sample("s1", "P", 2020, &["0/0", "0/1", "0/0", "0/1", "0/0"])
        .sample("s2", "P", 2020, &["0/0", "0/1", "0/0", "1/2", "1/1"])
        .sample("s3", "P", 2020, &["1/1", "0/1", "0/0", "1/1", "0/1"])
        .sample("s4", "P", 2020, &["1/1", "0/1", "0/0", "2/2", "./."])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    assert_close(number(table(&output, "by_group"), 0, "fis").unwrap(), 0.278689, 1e-6);
}

/// Hand calculation (textbook formulas, docs/methods.md, "Expected heterozygosity";
/// docs/methods.md, "Weir and Cockerham F-statistics"): AA×3, AB×4, BB×2, BC×1 gives p = 0.5, 0.45,
/// 0.05, He = 20/19 · 0.545 = 0.573684, Ho = 0.5, F = 0.128440; He* = 10/9 · (0.545 − 0.025) =
/// 0.577778, FIS = 1 − 0.5/0.577778 = 0.134615; effective alleles 1/0.455 = 2.197802.
#[test]
fn hand_calculated_locus() {
    let cells = ["A/A", "A/A", "A/A", "A/B", "A/B", "A/B", "A/B", "B/B", "B/B", "B/C"];
    let mut builder = MatrixBuilder::new(&["L1"]);
    for (i, cell) in cells.iter().enumerate() {
        builder = builder.sample(&format!("s{i}"), "P", 2021, &[cell]);
    }
    let output = run_step(&Diversity, &builder.build(), json!({}));
    let by_locus = table(&output, "by_locus");
    assert_close(number(by_locus, 0, "he").unwrap(), 0.573684, 1e-6);
    assert_close(number(by_locus, 0, "ho").unwrap(), 0.5, 1e-12);
    assert_close(number(by_locus, 0, "f").unwrap(), 0.128440, 1e-6);
    assert_close(number(by_locus, 0, "fis").unwrap(), 1.0 - 0.5 / (10.0 / 9.0 * 0.52), 1e-12);
    assert_close(number(by_locus, 0, "fis").unwrap(), 0.134615, 1e-6);
    assert_close(number(by_locus, 0, "effective_alleles").unwrap(), 2.197802, 1e-6);
    assert_eq!(number(by_locus, 0, "alleles"), Some(3.0));
}

/// Edge case (docs/methods.md, "Expected heterozygosity"): n < 2 leaves Ho, He, F and FIS null at
/// that locus in that group, and the locus is left out of the group's means (hand calculation: L1
/// alone, Ho = 1, He = 4/3 · 0.5 = 0.666667 with alleles 1,1,2,2 in group P).
#[test]
fn locus_typed_in_one_individual_is_null_and_left_out() {
    let matrix = MatrixBuilder::new(&["L1", "L2"])
        .sample("a", "P", 2020, &["1/2", "1/2"])
        .sample("b", "P", 2020, &["1/2", "./."])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(number(by_locus, 1, "n"), Some(1.0));
    for column in ["ho", "he", "f", "fis", "effective_alleles"] {
        assert_eq!(number(by_locus, 1, column), None, "{column}");
    }
    let by_group = table(&output, "by_group");
    assert_eq!(number(by_group, 0, "loci"), Some(1.0));
    assert_close(number(by_group, 0, "ho").unwrap(), 1.0, 1e-12);
    assert_close(number(by_group, 0, "he").unwrap(), 2.0 / 3.0, 1e-12);
    assert_close(number(by_group, 0, "f").unwrap(), -0.5, 1e-12);
    let few = findings_with(&output, "too-few-typed");
    assert_eq!(few.len(), 1);
    assert!(few[0].message.contains("L2 in P 2020 (1 typed)"), "{}", few[0].message);
}

/// docs/methods.md, "Inbreeding coefficient F": F and FIS are null when ΣHe = 0 (a group
/// monomorphic at every locus).
#[test]
fn group_without_diversity_has_null_f() {
    let matrix =
        MatrixBuilder::new(&["L1"]).samples("p", "P", 2020, 3, &["1/1"]).samples("q", "Q", 2020, 3, &["1/2"]).build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_group = table(&output, "by_group");
    assert_eq!(number(by_group, 0, "he"), Some(0.0));
    assert_eq!((number(by_group, 0, "f"), number(by_group, 0, "fis")), (None, None));
    assert_eq!((number(by_group, 0, "fis_low"), number(by_group, 0, "fis_high")), (None, None));
    // Q: three 1/2 heterozygotes, Ho = 1, He = 6/5 · 0.5 = 0.6, F = 1 − 1/0.6 = −0.666667.
    assert_close(number(by_group, 1, "f").unwrap(), 1.0 - 1.0 / 0.6, 1e-12);
    // Results contract: the null f and fis of P are explained once, naming the group (common
    // practice).
    let undefined = findings_with(&output, "group-f-undefined");
    assert_eq!(undefined.len(), 1);
    assert!(undefined[0].message.ends_with("are null: P 2020"), "{}", undefined[0].message);
    assert!(findings_with(&output, "fis-interval-undefined").is_empty());
    // One replicate cannot make an interval: Q's null interval is explained (common practice).
    let one = run_step(&Diversity, &matrix, json!({"bootstrap": 1}));
    assert_eq!(number(table(&one, "by_group"), 1, "fis_low"), None);
    let interval = findings_with(&one, "fis-interval-undefined");
    assert_eq!(interval.len(), 1);
    assert!(interval[0].message.ends_with(": Q 2020 (1 defined replicates)"), "{}", interval[0].message);
}

/// docs/methods.md, "Conventions": warn when n < 10 or fewer than 5 loci are usable; info findings
/// on how F, FIS, their interval and rarefaction are computed. Group A (12 samples, 5 loci) raises
/// neither warning; B (4 samples, 3 loci typed in at least two of them) raises both.
#[test]
fn small_groups_and_few_loci_are_flagged() {
    let matrix = MatrixBuilder::new(&["L1", "L2", "L3", "L4", "L5"])
        .samples("a", "A", 2020, 12, &["1/2", "1/2", "1/1", "2/2", "1/2"])
        .samples("b", "B", 2020, 3, &["1/2", "1/2", "1/1", "./.", "./."])
        .sample("b4", "B", 2020, &["1/1", "2/2", "1/2", "1/2", "./."])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let low = findings_with(&output, "low-sample-size");
    assert_eq!(low.len(), 1);
    assert_eq!(low[0].location, Where::group("B", 2020));
    assert!(low[0].message.contains("4 samples"), "{}", low[0].message);
    let few = findings_with(&output, "few-loci");
    assert_eq!(few.len(), 1);
    assert_eq!(few[0].location, Where::group("B", 2020));
    assert!(few[0].message.contains("3 loci"), "{}", few[0].message);
    assert_eq!(number(table(&output, "by_group"), 1, "loci"), Some(3.0));
    let info = findings_with(&output, "f-definition");
    assert_eq!(info.len(), 1);
    assert!(info[0].message.contains("1 − ΣHo/ΣHe"));
    assert!(findings_with(&output, "fis-interval")[0].message.contains("1000 bootstrap replicates"));
    assert_eq!(output.citations.len(), 5);
    assert_eq!(output.citations[0], NEI_1978);
    assert_eq!(output.citations[1], WEIR_COCKERHAM_1984);
}

/// Computed from the rarefaction formulas (docs/methods.md, "Allelic richness", "Private
/// allelic richness"), confirmed with scipy 1.17.1 by
/// tests/reference/rarefaction_reference.py: pop1 {a:6, b:4, c:2}, pop2 {a:8, b:2, d:2}
/// rarefied to g = 8 copies (`rarefaction_size` = 4 individuals): AR = 2.907071 and
/// 2.818182, PAR = 0.999816 and 0.910927. Alleles c and d occur in one population only.
#[test]
fn private_richness_of_two_populations_through_the_step() {
    let matrix = MatrixBuilder::new(&["L1"])
        .samples("p1a", "pop1", 2020, 3, &["a/a"])
        .samples("p1b", "pop1", 2020, 2, &["b/b"])
        .sample("p1c", "pop1", 2020, &["c/c"])
        .samples("p2a", "pop2", 2020, 4, &["a/a"])
        .sample("p2b", "pop2", 2020, &["b/b"])
        .sample("p2d", "pop2", 2020, &["d/d"])
        .build();
    let output = run_step(&Diversity, &matrix, json!({"rarefaction_size": 4}));
    for name in ["by_group", "by_locus"] {
        let t = table(&output, name);
        assert_close(number(t, 0, "ar").unwrap(), 2.907071, 1e-6);
        assert_close(number(t, 1, "ar").unwrap(), 2.818182, 1e-6);
        assert_close(number(t, 0, "par").unwrap(), 0.999816, 1e-6);
        assert_close(number(t, 1, "par").unwrap(), 0.910927, 1e-6);
        assert_eq!(number(t, 0, "rarefaction_copies"), Some(8.0));
    }
    let size = findings_with(&output, "rarefaction-size");
    assert!(size[0].message.contains("2 × rarefaction_size = 8 gene copies"), "{}", size[0].message);
    assert!(size[0].message.contains("(2 of 2 groups)"), "{}", size[0].message);
}

/// Default rarefaction size (2 × the smallest n at the locus) and the identity A(N) = the
/// number of alleles observed (derived from the definition, docs/methods.md, "Allelic richness");
/// alleles present in one population only. P {1:4, 2:4} and Q {1:6, 3:2}, four individuals each: g
/// = 8, AR = 2 and 2, PAR = 1 and 1; with rarefaction_size = 3 (g = 6): AR(Q) = 1.964286, PAR = 1
/// and 0.964286 (tests/reference/rarefaction_reference.py, scipy 1.17.1).
#[test]
fn rarefaction_to_the_smallest_group_and_to_a_given_size() {
    let matrix = MatrixBuilder::new(&["L1"])
        .samples("p", "P", 2020, 4, &["1/2"])
        .samples("q", "Q", 2020, 2, &["1/1"])
        .samples("r", "Q", 2020, 2, &["1/3"])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_group = table(&output, "by_group");
    for (row, ar, par) in [(0, 2.0, 1.0), (1, 2.0, 1.0)] {
        assert_close(number(by_group, row, "ar").unwrap(), ar, 1e-12);
        assert_close(number(by_group, row, "par").unwrap(), par, 1e-12);
        assert_eq!(number(by_group, row, "rarefaction_copies"), Some(8.0));
    }
    let output = run_step(&Diversity, &matrix, json!({"rarefaction_size": 3}));
    let by_group = table(&output, "by_group");
    assert_close(number(by_group, 0, "ar").unwrap(), 2.0, 1e-12);
    assert_close(number(by_group, 1, "ar").unwrap(), 1.964286, 1e-6);
    assert_close(number(by_group, 0, "par").unwrap(), 1.0, 1e-12);
    assert_close(number(by_group, 1, "par").unwrap(), 0.964286, 1e-6);
}

/// Three lakes sampled in 2021, two of them also in 2019, and a fourth lake alone in 2020; one
/// locus. Rows of the tables, sorted by population then year: Lake A 2019, Lake A 2021,
/// Lake B 2019, Lake B 2021, Lake C 2021, Lake D 2020.
fn lakes_over_three_years() -> GenotypeMatrix {
    MatrixBuilder::new(&["L1"])
        .sample("a19-1", "Lake A", 2019, &["3/3"])
        .sample("a19-2", "Lake A", 2019, &["1/3"])
        .sample("b19-1", "Lake B", 2019, &["1/1"])
        .sample("b19-2", "Lake B", 2019, &["1/2"])
        .sample("d20-1", "Lake D", 2020, &["1/5"])
        .sample("d20-2", "Lake D", 2020, &["5/5"])
        .sample("a21-1", "Lake A", 2021, &["1/2"])
        .sample("a21-2", "Lake A", 2021, &["1/3"])
        .sample("a21-3", "Lake A", 2021, &["1/1"])
        .samples("b21-", "Lake B", 2021, 3, &["1/1"])
        .sample("b21-4", "Lake B", 2021, &["1/2"])
        .samples("c21-", "Lake C", 2021, 3, &["2/2"])
        .sample("c21-4", "Lake C", 2021, &["2/4"])
        .build()
}

/// Private allelic richness compares the populations of one sampling year (Kalinowski 2004,
/// Conserv Genet 5:539–543: π_j(g) = Σᵤ (1 − Q_uj)·∏_{j′≠j} Q_uj′ with
/// Q_uj = C(N_j − N_uj, g)/C(N_j, g) over the populations compared), worked by hand.
///
/// 2021, g = 2 × min(3, 4, 4) = 6 copies. A {1:3, 2:1, 3:1}, N = 6 = g: Q = 0 for every allele
/// it carries. B {1:7, 2:1}, N = 8: Q₁ = 0 (1 other copy < 6), Q₂ = C(7,6)/C(8,6) = 7/28 = 1/4,
/// Q₃ = Q₄ = 1. C {2:7, 4:1}, N = 8: Q₂ = 0, Q₄ = 7/28 = 1/4, Q₁ = Q₃ = 1.
///   π_A = 1·Q₁B·Q₁C + 1·Q₂B·Q₂C + 1·Q₃B·Q₃C = 1·0·1 + 1·(1/4)·0 + 1·1·1 = 1
///   π_B = 1·Q₁A·Q₁C + (3/4)·Q₂A·Q₂C = 0 + 0 = 0
///   π_C = 1·Q₂A·Q₂B + (3/4)·Q₄A·Q₄B = 0 + (3/4)·1·1 = 0.75
/// 2019, g = 2 × min(2, 2) = 4 = N of both: A {1:1, 3:3} keeps allele 3 to itself (π = 1),
/// B {1:3, 2:1} allele 2 (π = 1). 2020: Lake D is alone, so its par is null with a finding.
/// Compared across years instead, Lake A 2021's allele 3 would meet Lake A 2019's and its par
/// would be 0.
///
/// ar stays rarefied over all six groups, g = 2 × min(2, 2, 2, 3, 4, 4) = 4 copies (Hurlbert
/// 1971): A 2021 Q₁ = C(3,4)/C(6,4) = 0, Q₂ = Q₃ = C(5,4)/C(6,4) = 5/15, ar = 1 + 2·(2/3) = 7/3;
/// C 2021 Q₂ = 0, Q₄ = C(7,4)/C(8,4) = 35/70, ar = 1.5; D 2020 N = 4 = g, ar = 2.
#[test]
fn private_richness_compares_populations_within_a_year() {
    let output = run_step(&Diversity, &lakes_over_three_years(), json!({}));
    for name in ["by_group", "by_locus"] {
        let t = table(&output, name);
        let expected_par = [Some(1.0), Some(1.0), Some(1.0), Some(0.0), Some(0.75), None];
        let expected_par_copies = [Some(4.0), Some(6.0), Some(4.0), Some(6.0), Some(6.0), None];
        for row in 0..6 {
            match expected_par[row] {
                Some(par) => assert_close(number(t, row, "par").unwrap(), par, 1e-12),
                None => assert_eq!(number(t, row, "par"), None, "{name} row {row}"),
            }
            assert_eq!(number(t, row, "par_rarefaction_copies"), expected_par_copies[row], "{name} row {row}");
            assert_eq!(number(t, row, "rarefaction_copies"), Some(4.0), "{name} row {row}");
        }
        assert_close(number(t, 1, "ar").unwrap(), 7.0 / 3.0, 1e-12);
        assert_close(number(t, 4, "ar").unwrap(), 1.5, 1e-12);
        assert_close(number(t, 5, "ar").unwrap(), 2.0, 1e-12);
    }
    let comparisons = findings_with(&output, "par-comparison");
    assert_eq!(comparisons.len(), 2, "2019 and 2021; Lake D is alone in 2020");
    assert_eq!(comparisons[1].location.year, Some(2021));
    assert!(
        comparisons[1]
            .message
            .starts_with("private allelic richness in 2021 compares Lake A, Lake B, Lake C at g = 6 gene copies"),
        "{}",
        comparisons[1].message
    );
    assert!(comparisons[0].message.contains("in 2019 compares Lake A, Lake B at g = 4"), "{}", comparisons[0].message);
    let alone = findings_with(&output, "par-alone-in-year");
    assert_eq!(alone.len(), 1);
    assert_eq!(alone[0].level, FindingLevel::Info);
    assert!(alone[0].message.ends_with("own other years: Lake D 2020"), "{}", alone[0].message);
}

/// With `rarefaction_size` given, ar and par are rarefied to the same g, and both columns say
/// so (2 × 2 = 4 copies). Lake A 2021 at g = 4 among the 2021 populations (Kalinowski 2004, by
/// hand): Q₃A = C(5,4)/C(6,4) = 1/3 and allele 3 is absent from B and C, so
/// π_A = (1 − 1/3)·1·1 = 2/3 (alleles 1 and 2 are each certain in B or C: Q₁B = 0, Q₂C = 0).
#[test]
fn a_given_rarefaction_size_serves_ar_and_par() {
    let output = run_step(&Diversity, &lakes_over_three_years(), json!({"rarefaction_size": 2}));
    let by_group = table(&output, "by_group");
    for row in 0..5 {
        assert_eq!(number(by_group, row, "rarefaction_copies"), Some(4.0));
        assert_eq!(number(by_group, row, "par_rarefaction_copies"), Some(4.0));
    }
    assert_close(number(by_group, 1, "par").unwrap(), 2.0 / 3.0, 1e-12);
}

/// Edge case "monomorphic locus": Ho = He = 0, F and FIS null (docs/methods.md, "Inbreeding
/// coefficient F"), effective alleles 1, allelic richness 1 (docs/methods.md, "Allelic richness"),
/// private richness 0 (the allele is shared), and one info finding lists it.
#[test]
fn monomorphic_locus() {
    let matrix = MatrixBuilder::new(&["Mono", "Poly"])
        .samples("p", "P", 2020, 5, &["7/7", "1/2"])
        .samples("q", "Q", 2020, 5, &["7/7", "1/1"])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!((number(by_locus, 0, "ho"), number(by_locus, 0, "he")), (Some(0.0), Some(0.0)));
    assert_eq!((number(by_locus, 0, "f"), number(by_locus, 0, "fis")), (None, None));
    assert_eq!(number(by_locus, 0, "effective_alleles"), Some(1.0));
    assert_eq!((number(by_locus, 0, "ar"), number(by_locus, 0, "par")), (Some(1.0), Some(0.0)));
    let mono = findings_with(&output, "monomorphic-in-group");
    assert_eq!(mono.len(), 1);
    assert!(mono[0].message.starts_with("3 locus–group"), "{}", mono[0].message);
    assert!(mono[0].message.contains("Mono in P 2020, Mono in Q 2020, Poly in Q 2020"), "{}", mono[0].message);
}

/// Edge case "all-missing locus in one group": n = 0 and null estimates there, the
/// locus dropped from ar and par for every group with one warning naming it, and the other
/// loci still rarefied (docs/methods.md, "Allelic richness").
#[test]
fn locus_missing_in_one_group() {
    let matrix = MatrixBuilder::new(&["L1", "L2"])
        .samples("p", "P", 2020, 4, &["1/2", "1/2"])
        .samples("q", "Q", 2020, 4, &["1/1", "./."])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    // rows: P L1, P L2, Q L1, Q L2
    assert_eq!(number(by_locus, 3, "n"), Some(0.0));
    for column in ["ho", "he", "f", "fis", "effective_alleles", "ar", "par", "rarefaction_copies"] {
        assert_eq!(number(by_locus, 3, column), None, "Q L2 {column}");
    }
    // P is fully typed at L2: its heterozygosity stands, but L2 is not rarefied for anyone.
    assert_close(number(by_locus, 1, "he").unwrap(), 8.0 / 7.0 * 0.5, 1e-12);
    for column in ["ar", "par", "rarefaction_copies"] {
        assert_eq!(number(by_locus, 1, column), None, "P L2 {column}");
    }
    let dropped = findings_with(&output, "rarefaction-loci-dropped");
    assert_eq!(dropped.len(), 1);
    assert!(dropped[0].message.contains("L2 (Q 2020 has 0)"), "{}", dropped[0].message);
    let by_group = table(&output, "by_group");
    assert_close(number(by_group, 0, "ar").unwrap(), 2.0, 1e-12);
    assert_close(number(by_group, 1, "ar").unwrap(), 1.0, 1e-12);
    assert!(findings_with(&output, "too-few-typed")[0].message.contains("L2 in Q 2020 (0 typed)"));
}

/// Edge case "a group of one sample": its Ho, He, F, FIS, interval, ar and par are null
/// with findings, and the other groups are rarefied among themselves (g = 2 × 3 = 6, not 2).
#[test]
fn group_of_one_sample() {
    let matrix = MatrixBuilder::new(&["L1", "L2"])
        .sample("solo", "Alone", 2020, &["1/2", "1/2"])
        .samples("p", "P", 2020, 3, &["1/2", "1/1"])
        .samples("q", "Q", 2020, 3, &["1/1", "2/2"])
        .build();
    let output = run_step(&Diversity, &matrix, json!({}));
    let by_group = table(&output, "by_group");
    for column in ["ho", "he", "f", "fis", "fis_low", "fis_high", "ar", "par", "effective_alleles"] {
        assert_eq!(number(by_group, 0, column), None, "{column}");
    }
    assert_eq!(number(by_group, 0, "loci"), Some(0.0));
    assert_eq!(number(by_group, 1, "rarefaction_copies"), Some(6.0));
    let excluded = findings_with(&output, "rarefaction-group-excluded");
    assert_eq!(excluded.len(), 1);
    assert_eq!(excluded[0].location, Where::group("Alone", 2020));
    assert!(findings_with(&output, "rarefaction-loci-dropped").is_empty());
    assert_eq!(findings_with(&output, "low-sample-size").len(), 3);
}

/// Genotype frequencies under inbreeding F (common practice):
/// P(AᵤAᵤ) = pᵤ² + pᵤ(1 − pᵤ)F, P(AᵤAᵥ) = 2pᵤpᵥ(1 − F). Returns (u, v, probability), u ≤ v.
fn genotype_probabilities(frequencies: &[f64], inbreeding: f64) -> Vec<(u16, u16, f64)> {
    let mut table = Vec::new();
    for (u, &pu) in frequencies.iter().enumerate() {
        table.push((u as u16 + 1, u as u16 + 1, pu * pu + pu * (1.0 - pu) * inbreeding));
        for (v, &pv) in frequencies.iter().enumerate().skip(u + 1) {
            table.push((u as u16 + 1, v as u16 + 1, 2.0 * pu * pv * (1.0 - inbreeding)));
        }
    }
    table
}

fn draw_genotype(rng: &mut ChaCha8Rng, table: &[(u16, u16, f64)]) -> (u16, u16) {
    let mut remaining: f64 = rng.random();
    for &(u, v, probability) in table {
        if remaining < probability {
            return (u, v);
        }
        remaining -= probability;
    }
    let &(u, v, _) = table.last().expect("a locus has genotypes");
    (u, v)
}

/// `loci` loci × `individuals` per group, 2–6 alleles with random frequencies; group
/// "Inbred" drawn with F = 0.25 and group "Outbred" with F = 0.
fn simulated_inbreeding_matrix(individuals: usize, loci: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(20_261_130);
    let groups = [("Inbred", 0.25), ("Outbred", 0.0)];
    let samples: Vec<SampleMeta> = groups
        .iter()
        .flat_map(|(pop, _)| {
            (0..individuals).map(move |i| SampleMeta {
                id: format!("{pop}{i}"),
                population: pop.to_string(),
                year: 2022,
            })
        })
        .collect();
    let mut locus_meta = Vec::new();
    let mut codes = Vec::new();
    for l in 0..loci {
        let allele_count = 2 + l % 5;
        let weights: Vec<f64> = (0..allele_count).map(|_| 0.2 + rng.random::<f64>()).collect();
        let total: f64 = weights.iter().sum();
        let frequencies: Vec<f64> = weights.iter().map(|w| w / total).collect();
        for &(_, inbreeding) in &groups {
            let probabilities = genotype_probabilities(&frequencies, inbreeding);
            let sum: f64 = probabilities.iter().map(|g| g.2).sum();
            assert_close(sum, 1.0, 1e-12);
            for _ in 0..individuals {
                let (a, b) = draw_genotype(&mut rng, &probabilities);
                codes.extend([AlleleCode(a), AlleleCode(b)]);
            }
        }
        let alleles = (1..=allele_count).map(|a| a.to_string()).collect();
        locus_meta.push(LocusMeta { name: format!("L{l}"), alleles, chromosome: None, position: None });
    }
    GenotypeMatrix::new(samples, locus_meta, codes).expect("simulated matrix is well formed")
}

/// Genotypes drawn with F = 0.25 (common practice formulas above) give a group `f` and `fis`
/// within ±0.03 of 0.25, and F = 0 gives them within ±0.03 of 0. The standard error here is
/// about 0.006 (binomial Ho over 20 × 2000 genotypes), so ±0.03 is about five standard
/// errors. The bootstrap interval over loci contains the point estimate and the true F.
#[test]
fn simulated_inbreeding_is_recovered() {
    let output = run_step(&Diversity, &simulated_inbreeding_matrix(2000, 20), json!({}));
    let by_group = table(&output, "by_group");
    assert_eq!(number(by_group, 0, "loci"), Some(20.0));
    for (row, truth) in [(0, 0.25), (1, 0.0)] {
        let fis = number(by_group, row, "fis").unwrap();
        assert_close(number(by_group, row, "f").unwrap(), truth, 0.03);
        assert_close(fis, truth, 0.03);
        let (low, high) = (number(by_group, row, "fis_low").unwrap(), number(by_group, row, "fis_high").unwrap());
        assert!(low <= fis && fis <= high, "row {row}: {low} ≤ {fis} ≤ {high}");
        assert!(low <= truth && truth <= high, "row {row}: {low} ≤ {truth} ≤ {high}");
        assert!(high - low < 0.1, "row {row}: interval ({low}, {high}) is implausibly wide");
        assert_eq!(number(by_group, row, "fis_replicates"), Some(1000.0));
    }
}

/// The FIS interval depends only on the seed: the same seed gives the same interval, another
/// seed another one; `bootstrap = 0` gives no interval (common practice, STYLE determinism).
#[test]
fn fis_interval_is_reproducible_for_a_seed() {
    let terms: Vec<(f64, f64)> = (0..15).map(|l| (0.5 + 0.01 * l as f64, 0.3 + 0.015 * (l % 4) as f64)).collect();
    let first = fis_interval(&terms, 1000, Seed(11));
    assert_eq!(first, fis_interval(&terms, 1000, Seed(11)));
    assert_ne!(first.interval, fis_interval(&terms, 1000, Seed(12)).interval);
    assert_eq!(first.replicates, 1000);
    assert_eq!(fis_interval(&terms, 0, Seed(11)), FisInterval { interval: None, replicates: 0 });
    let matrix = simulated_inbreeding_matrix(50, 8);
    let once = run_step(&Diversity, &matrix, json!({"bootstrap": 200}));
    let twice = run_step(&Diversity, &matrix, json!({"bootstrap": 200}));
    assert_eq!(once.tables["by_group"], twice.tables["by_group"]);
    let off = run_step(&Diversity, &matrix, json!({"bootstrap": 0}));
    assert_eq!(number(table(&off, "by_group"), 0, "fis_low"), None);
    assert!(findings_with(&off, "fis-interval")[0].message.contains("bootstrap = 0"));
}

/// Common practice: the genotype probabilities under inbreeding sum to 1 and reduce to
/// Hardy–Weinberg at F = 0 (p = 0.3, q = 0.7: 0.09, 0.42, 0.49) and to pᵤ homozygotes only
/// at F = 1; biallelic F = 0.25: P(AA) = 0.09 + 0.21·0.25 = 0.1425, P(Aa) = 0.42·0.75 = 0.315.
#[test]
fn genotype_probabilities_under_inbreeding() {
    let hwe = genotype_probabilities(&[0.3, 0.7], 0.0);
    let probabilities: Vec<f64> = hwe.iter().map(|g| g.2).collect();
    for (p, expected) in probabilities.iter().zip([0.09, 0.42, 0.49]) {
        assert_close(*p, expected, 1e-12);
    }
    let inbred = genotype_probabilities(&[0.3, 0.7], 0.25);
    assert_close(inbred[0].2, 0.1425, 1e-12);
    assert_close(inbred[1].2, 0.315, 1e-12);
    assert_close(inbred[2].2, 0.49 + 0.21 * 0.25, 1e-12);
    let fully = genotype_probabilities(&[0.2, 0.3, 0.5], 1.0);
    let heterozygous: f64 = fully.iter().filter(|g| g.0 != g.1).map(|g| g.2).sum();
    assert_close(heterozygous, 0.0, 1e-12);
}

/// The parameter names are part of the interface; `rarefaction_size` defaults to null (the smallest
/// group) and must be at least 2.
#[test]
fn parameters_are_declared_with_defaults() {
    let d = descriptor();
    assert_eq!(d.version, "0.3.0");
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["bootstrap"], json!(1000));
    assert_eq!(resolved["rarefaction_size"], Value::Null);
    let too_small = [("rarefaction_size".to_string(), json!(1))].into_iter().collect();
    assert!(d.resolve(&too_small).is_err());
    let given = [("rarefaction_size".to_string(), json!(8))].into_iter().collect();
    let params: Params = serde_json::from_value(json!(d.resolve(&given).unwrap())).unwrap();
    assert_eq!(params, Params { bootstrap: 1000, rarefaction_size: Some(8) });
}
