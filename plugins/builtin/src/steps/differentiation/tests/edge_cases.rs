//! Edge cases of `differentiation`: monomorphic loci, loci untyped in one group, groups of one
//! sample, private alleles and nothing to compare.

use super::*;

/// docs/methods.md, "Weir and Cockerham F-statistics": a locus monomorphic across the compared
/// groups adds a = b = c = 0 and (docs/methods.md, "Gene-diversity differentiation"):
/// it is dropped from the G_ST family, so adding one changes no estimate (only the `loci`
/// count of θ̂, which counts loci typed in both groups).
#[test]
fn monomorphic_locus_changes_nothing() {
    let base = run(&reference_matrix(), json!({"permutations": 0, "bootstrap": 0}));
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4", "L5", "L6", "Mono"]);
    let reference = reference_matrix();
    for s in 0..reference.samples().len() {
        let meta = &reference.samples()[s];
        let mut cells: Vec<String> = (0..6).map(|l| cell_text(&reference, s, l)).collect();
        cells.push("120/120".to_string());
        let cells: Vec<&str> = cells.iter().map(String::as_str).collect();
        builder = builder.sample(&meta.id, &meta.population, meta.year, &cells);
    }
    let with_monomorphic = run(&builder.build(), json!({"permutations": 0, "bootstrap": 0}));
    for name in ["pairwise", "global"] {
        let (a, b) = (table(&base, name), table(&with_monomorphic, name));
        for column in ["fst", "jost_d", "gst", "gst_p", "gst_pp"] {
            for row in 0..a.rows.len() {
                assert_close(number(b, row, column).unwrap(), number(a, row, column).unwrap(), 1e-12);
            }
        }
        assert_eq!(number(b, 0, "loci"), Some(7.0));
    }
}

/// The text of a cell as MatrixBuilder reads it (`./.` when untyped).
fn cell_text(matrix: &GenotypeMatrix, sample: usize, locus: usize) -> String {
    let (s, l) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&s, &l);
    match view.genotype(sample, locus) {
        Some((a, b)) => {
            let labels = &view.locus(locus).alleles;
            format!("{}/{}", labels[a.0 as usize - 1], labels[b.0 as usize - 1])
        }
        None => "./.".to_string(),
    }
}

/// docs/methods.md, "Weir and Cockerham F-statistics": a locus untyped in every individual of one
/// group is dropped from that group's pairs (θ̂ equals θ̂ without the locus) and from the global
/// estimate, but kept for the other pairs; an info finding names group and locus; no NaN reaches a
/// table.
#[test]
fn locus_untyped_in_one_group_is_dropped_for_its_pairs() {
    let reference = reference_matrix();
    let build = |blank_birch_l6: bool, drop_l6: bool| {
        let loci: &[&str] =
            if drop_l6 { &["L1", "L2", "L3", "L4", "L5"] } else { &["L1", "L2", "L3", "L4", "L5", "L6"] };
        let mut builder = MatrixBuilder::new(loci);
        for s in 0..reference.samples().len() {
            let meta = &reference.samples()[s];
            let mut cells: Vec<String> = (0..loci.len()).map(|l| cell_text(&reference, s, l)).collect();
            if blank_birch_l6 && meta.population == "Birch" {
                cells[5] = "./.".to_string();
            }
            let cells: Vec<&str> = cells.iter().map(String::as_str).collect();
            builder = builder.sample(&meta.id, &meta.population, meta.year, &cells);
        }
        builder.build()
    };
    let params = json!({"permutations": 99, "bootstrap": 100});
    let blanked = run(&build(true, false), params.clone());
    let without = run(&build(false, true), params.clone());
    let full = run(&reference, params);
    let (p_blank, p_without, p_full) =
        (table(&blanked, "pairwise"), table(&without, "pairwise"), table(&full, "pairwise"));
    for (a, b) in [("Ash", "Birch"), ("Birch", "Cedar")] {
        let row = pair_row(p_blank, a, b, None);
        assert_eq!(number(p_blank, row, "loci"), Some(5.0));
        assert_close(number(p_blank, row, "fst").unwrap(), number(p_without, row, "fst").unwrap(), 1e-12);
        assert_close(number(p_blank, row, "jost_d").unwrap(), number(p_without, row, "jost_d").unwrap(), 1e-12);
    }
    let row = pair_row(p_blank, "Ash", "Cedar", None);
    assert_eq!(number(p_blank, row, "loci"), Some(6.0));
    assert_close(number(p_blank, row, "fst").unwrap(), number(p_full, row, "fst").unwrap(), 1e-12);
    let global = |o: &StepOutput| number(table(o, "global"), 0, "fst").unwrap();
    assert_close(global(&blanked), global(&without), 1e-12);
    let untyped = findings_with(&blanked, "locus-untyped-in-group");
    assert_eq!(untyped.len(), 1);
    assert!(untyped[0].message.contains("population Birch") && untyped[0].message.contains("L6"));
    assert_no_nan(&blanked);
}

/// Edge cases (docs/methods.md, "Weir and Cockerham F-statistics"): a group of one sample still
/// gives a defined θ̂ against a larger group (n̄ > 1) and a `low-sample-size` warning; two groups
/// of one sample each leave n̄ = 1, so θ̂ is null with an `fst-undefined` finding and no p-value;
/// nothing panics or is NaN.
#[test]
fn groups_of_one_sample() {
    let matrix = MatrixBuilder::new(&["L1", "L2"])
        .sample("a1", "A", 2020, &["1/2", "3/3"])
        .samples("b", "B", 2020, 6, &["1/1", "3/4"])
        .sample("c1", "C", 2020, &["2/2", "4/4"])
        .build();
    let output = run(&matrix, json!({"permutations": 99, "bootstrap": 50}));
    let pairwise = table(&output, "pairwise");
    let ab = pair_row(pairwise, "A", "B", None);
    assert!(number(pairwise, ab, "fst").unwrap().is_finite());
    assert_eq!(number(pairwise, ab, "n_a"), Some(1.0));
    let ac = pair_row(pairwise, "A", "C", None);
    assert_eq!(number(pairwise, ac, "fst"), None);
    assert_eq!(number(pairwise, ac, "fst_p"), None);
    assert_eq!(number(pairwise, ac, "jost_d"), None);
    let undefined = findings_with(&output, "fst-undefined");
    assert_eq!(undefined.len(), 1);
    assert!(undefined[0].message.contains("pair A–C"));
    assert_eq!(findings_with(&output, "low-sample-size").len(), 3);
    assert_no_nan(&output);
}

/// Edge case (docs/methods.md, "Gene-diversity differentiation"), hand calculation: each population
/// carries alleles no other population (and no other of its own gene copies) carries, so every gene
/// copy within a group is distinct: J = 4·(1/4)² = 0.25, Ho = 1, ñ = 2, Ĥ_S =
/// 2·(1 − 0.25 − 0.25) = 1. D, G′ST and G″ST are then null with a `differentiation-undefined`
/// finding, while FST and G_ST stay defined.
#[test]
fn alleles_private_to_each_population() {
    let matrix = MatrixBuilder::new(&["L1"])
        .sample("a1", "A", 2020, &["1/2"])
        .sample("a2", "A", 2020, &["3/4"])
        .sample("b1", "B", 2020, &["5/6"])
        .sample("b2", "B", 2020, &["7/8"])
        .build();
    let output = run(&matrix, json!({"permutations": 9, "bootstrap": 10}));
    let pairwise = table(&output, "pairwise");
    assert!(number(pairwise, 0, "fst").unwrap().is_finite());
    assert!(number(pairwise, 0, "gst").unwrap().is_finite());
    for column in ["jost_d", "gst_p", "gst_pp"] {
        assert_eq!(number(pairwise, 0, column), None, "{column}");
    }
    let undefined = findings_with(&output, "differentiation-undefined");
    assert_eq!(undefined.len(), 2, "the pair and the global estimate");
    assert!(undefined[0].message.contains("averages 1"));
    assert_no_nan(&output);
}

/// A single population gives no pair and no global row, with a `no-pairs` finding; so does a
/// year with one population when `by_year = true`.
#[test]
fn nothing_to_compare() {
    let single = MatrixBuilder::new(&["L1"]).samples("a", "A", 2020, 4, &["1/2"]).build();
    let output = run(&single, json!({}));
    assert!(table(&output, "pairwise").rows.is_empty());
    assert!(table(&output, "global").rows.is_empty());
    assert_eq!(findings_with(&output, "no-pairs").len(), 1);
    let by_year = run(&reference_matrix(), json!({"by_year": true, "permutations": 0, "bootstrap": 0}));
    assert!(findings_with(&by_year, "no-pairs").is_empty());
    assert_eq!(findings_with(&by_year, "permutation-test-disabled").len(), 1);
    assert_eq!(number(table(&by_year, "pairwise"), 0, "fst_p"), None);
}
