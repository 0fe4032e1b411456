//! `differentiation` against published and reference-library values: the scikit-allel
//! Weir & Cockerham examples, years pooled and within years.

use super::*;

/// The five variants of the scikit-allel documentation example of `weir_cockerham_fst` as loci
/// V1–V5: samples 0, 1 form group P1 and samples 2, 3 group P2; one genotype missing in V5.
fn scikit_allel_wc_example() -> GenotypeMatrix {
    MatrixBuilder::new(&["V1", "V2", "V3", "V4", "V5"])
        .sample("s0", "P1", 2020, &["0/0", "0/1", "0/0", "0/1", "0/0"])
        .sample("s1", "P1", 2020, &["0/0", "0/1", "0/0", "1/2", "1/1"])
        .sample("s2", "P2", 2020, &["1/1", "0/1", "0/0", "1/1", "0/1"])
        .sample("s3", "P2", 2020, &["1/1", "0/1", "0/0", "2/2", "./."])
        .build()
}

/// Source: scikit-allel 1.3.13 documentation, docstring example of
/// `allel.weir_cockerham_fst` (confirmed against the installed 1.3.13).
/// The published per-allele components summed over alleles per variant are
/// Σa = 1, 0, 0, −0.25, −0.75; Σb = 0, −0.5, 0, 0.375, 0.833333; Σc = 0, 1, 0, 0.5, 0.333333
/// (tolerance 1e-6: the docstring prints 8 digits), and the published overall θ is
/// −4.37e−17 ≈ 0 (tolerance 1e-12). Here they come through the step's own counting.
#[test]
fn scikit_allel_documented_example() {
    let matrix = scikit_allel_wc_example();
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&samples, &loci);
    let groups = view.populations();
    let counts: Vec<Vec<_>> =
        groups.iter().map(|g| (0..5).map(|l| view.allele_counts(l, &g.samples)).collect()).collect();
    let estimate = pairs::estimate(&[&counts[0], &counts[1]], 0, &mut ChaCha8Rng::seed_from_u64(1));
    assert_eq!(estimate.loci, vec![0, 1, 2, 3, 4]);
    let sum_a = [1.0, 0.0, 0.0, -0.25, -0.75];
    let sum_b = [0.0, -0.5, 0.0, 0.375, 0.833333];
    let sum_c = [0.0, 1.0, 0.0, 0.5, 0.333333];
    for (v, c) in estimate.components.iter().enumerate() {
        assert_close(c.between_samples, sum_a[v], 1e-6);
        assert_close(c.between_individuals, sum_b[v], 1e-6);
        assert_close(c.within_individuals, sum_c[v], 1e-6);
    }
    let output = run(&matrix, json!({}));
    let pairwise = table(&output, "pairwise");
    assert_eq!(pairwise.rows.len(), 1);
    assert_close(number(pairwise, 0, "fst").unwrap(), 0.0, 1e-12);
    assert_eq!(number(pairwise, 0, "loci"), Some(5.0));
    assert_eq!(number(pairwise, 0, "year"), None);
    assert_close(number(table(&output, "global"), 0, "fst").unwrap(), 0.0, 1e-12);
    assert_no_nan(&output);
}

/// Source: scikit-allel 1.3.13 (`allel.average_weir_cockerham_fst`, ratio of sums of the
/// per-allele a, b, c over alleles and loci), numpy 2.4.6, printed by
/// tests/reference/differentiation_scikit_allel.py; tolerance 1e-6 (the values agree to about
/// 1e-12).
#[test]
fn matches_scikit_allel_years_pooled() {
    let output = run(&reference_matrix(), json!({"permutations": 99, "bootstrap": 200}));
    let pairwise = table(&output, "pairwise");
    assert_eq!(pairwise.rows.len(), 3);
    for (a, b, theta) in
        [("Ash", "Birch", 0.211260770737), ("Ash", "Cedar", 0.149327537505), ("Birch", "Cedar", 0.157204831894)]
    {
        let row = pair_row(pairwise, a, b, None);
        assert_close(number(pairwise, row, "fst").unwrap(), theta, 1e-6);
        assert_eq!(number(pairwise, row, "loci"), Some(6.0));
    }
    assert_eq!((number(pairwise, 0, "n_a"), number(pairwise, 0, "n_b")), (Some(10.0), Some(8.0)));
    let global = table(&output, "global");
    assert_eq!(global.rows.len(), 1);
    assert_close(number(global, 0, "fst").unwrap(), 0.170279443852, 1e-6);
    assert_eq!(text(global, 0, "comparison"), Some("all populations, sampling years pooled"));
    assert_eq!((number(global, 0, "populations"), number(global, 0, "samples")), (Some(3.0), Some(27.0)));
    assert_eq!(number(global, 0, "year"), None);
    assert_no_nan(&output);
}

/// Source: as above, the `by_year` comparisons printed by the same script (groups =
/// population × year, pairs within a year; tolerance 1e-6).
#[test]
fn matches_scikit_allel_within_years() {
    let output = run(&reference_matrix(), json!({"by_year": true, "permutations": 99, "bootstrap": 200}));
    let pairwise = table(&output, "pairwise");
    assert_eq!(pairwise.rows.len(), 6, "three pairs in each of two years, none across years");
    let expected = [
        (2019, "Ash", "Birch", 0.280626863731),
        (2019, "Ash", "Cedar", 0.179213976555),
        (2019, "Birch", "Cedar", 0.076959490949),
        (2021, "Ash", "Birch", 0.119441964804),
        (2021, "Ash", "Cedar", 0.080246209343),
        (2021, "Birch", "Cedar", 0.186249117024),
    ];
    for (year, a, b, theta) in expected {
        let row = pair_row(pairwise, a, b, Some(year));
        assert_close(number(pairwise, row, "fst").unwrap(), theta, 1e-6);
    }
    let global = table(&output, "global");
    assert_eq!(global.rows.len(), 2);
    for (row, year, theta) in [(0, 2019, 0.189886833386), (1, 2021, 0.127384542770)] {
        assert_eq!(number(global, row, "year"), Some(f64::from(year)));
        assert_close(number(global, row, "fst").unwrap(), theta, 1e-6);
        assert_eq!(text(global, row, "comparison"), Some(format!("populations sampled in {year}").as_str()));
    }
}
