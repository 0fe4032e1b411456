use popgauge_abi::Where;
use serde_json::json;

use super::*;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, run_step, table, text};

/// Adds `count` samples of one genotype at a single-locus matrix.
fn with(builder: MatrixBuilder, population: &str, cell: &str, count: usize) -> MatrixBuilder {
    let prefix = format!("{population}-{cell}-");
    builder.samples(&prefix, population, 2020, count, &[cell])
}

/// (AA, AB, BB) counts of one group at locus L1, labels `a` (first) and `b`.
fn biallelic_group(
    builder: MatrixBuilder,
    population: &str,
    a: &str,
    b: &str,
    counts: (usize, usize, usize),
) -> MatrixBuilder {
    let builder = with(builder, population, &format!("{a}/{a}"), counts.0);
    let builder = with(builder, population, &format!("{a}/{b}"), counts.1);
    with(builder, population, &format!("{b}/{b}"), counts.2)
}

/// Computed from the Levene–Haldane probability, confirmed in Python by direct enumeration with the
/// factorial formula in exact rational arithmetic (tests/reference/hwe_reference.py): (68, 28, 4)
/// gives p = 0.515367, mid-p = 0.408344, p_deficit = 0.392205, p_excess = 0.821842. By hand:
/// Ho = 0.28 < He = 200/199 · (1 − 0.82² − 0.18²) = 0.296683, a deficit.
#[test]
fn biallelic_locus_through_the_step() {
    let matrix = biallelic_group(MatrixBuilder::new(&["L1"]), "P", "1", "2", (68, 28, 4)).build();
    let output = run_step(&Hwe, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(text(by_locus, 0, "method"), Some("exact"));
    assert_close(number(by_locus, 0, "p_value").unwrap(), 0.515367, 1e-6);
    assert_close(number(by_locus, 0, "p_mid").unwrap(), 0.408344, 1e-6);
    assert_close(number(by_locus, 0, "p_deficit").unwrap(), 0.392205, 1e-6);
    assert_close(number(by_locus, 0, "p_excess").unwrap(), 0.821842, 1e-6);
    assert_eq!((number(by_locus, 0, "p_se"), number(by_locus, 0, "draws")), (Some(0.0), Some(0.0)));
    assert_eq!(text(by_locus, 0, "direction"), Some("deficit"));
    assert_close(number(by_locus, 0, "he").unwrap(), 200.0 / 199.0 * (1.0 - 0.82f64.powi(2) - 0.18f64.powi(2)), 1e-12);
    assert_eq!((number(by_locus, 0, "n"), number(by_locus, 0, "alleles")), (Some(100.0), Some(2.0)));
    // A single test is its own family: q = p.
    assert_close(number(by_locus, 0, "q_value").unwrap(), 0.515367, 1e-6);
}

/// Computed from the Levene–Haldane probability, confirmed by the Python enumeration: the Levene
/// 3-allele table (AA 3, BB 2, BC 1, CC 2) has exact p = 0.002553 by complete enumeration.
#[test]
fn three_allele_locus_by_enumeration() {
    let mut builder = with(MatrixBuilder::new(&["L1"]), "P", "A/A", 3);
    builder = with(builder, "P", "B/B", 2);
    builder = with(builder, "P", "B/C", 1);
    builder = with(builder, "P", "C/C", 2);
    let output = run_step(&Hwe, &builder.build(), json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(text(by_locus, 0, "method"), Some("exact"));
    assert_close(number(by_locus, 0, "p_value").unwrap(), 0.002553, 1e-6);
    assert_eq!(text(by_locus, 0, "direction"), Some("deficit"));
    assert!(findings_with(&output, "hwe-monte-carlo").is_empty());
}

/// Eight alleles in 60 individuals, drawn in a fixed pattern: far too many tables to
/// enumerate within the node budget.
fn many_allele_builder(loci: &[&str]) -> MatrixBuilder {
    let mut builder = MatrixBuilder::new(loci);
    for i in 0..60usize {
        let a = 1 + (i * 7) % 8;
        let b = 1 + (i * 3 + i / 8) % 8;
        let cell = format!("{a}/{b}");
        let cells: Vec<&str> = loci.iter().map(|_| cell.as_str()).collect();
        builder = builder.sample(&format!("s{i}"), "P", 2020, &cells);
    }
    builder
}

/// docs/methods.md, "Hardy–Weinberg exact tests": a multi-allelic table too large to enumerate is
/// tested by Monte Carlo with `permutations` draws; p̂ = (b + 1)/(B + 1) lies in (0, 1], its SE is
/// √[p̂(1 − p̂)/B], the result is the same on a re-run and does not change when another locus is
/// added (each test draws from its own stream). With `permutations = 0` it is left untested with a
/// finding.
#[test]
fn many_alleles_use_monte_carlo() {
    let output = run_step(&Hwe, &many_allele_builder(&["L1"]).build(), json!({"permutations": 2000}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(text(by_locus, 0, "method"), Some("monte-carlo"));
    assert_eq!(number(by_locus, 0, "draws"), Some(2000.0));
    let p = number(by_locus, 0, "p_value").unwrap();
    assert!((1.0 / 2001.0..=1.0).contains(&p), "{p}");
    assert_close(number(by_locus, 0, "p_se").unwrap(), (p * (1.0 - p) / 2000.0).sqrt(), 1e-15);
    assert_eq!(findings_with(&output, "hwe-monte-carlo").len(), 1);
    let again = run_step(&Hwe, &many_allele_builder(&["L1"]).build(), json!({"permutations": 2000}));
    assert_eq!(again.tables["by_locus"], output.tables["by_locus"]);
    let two_loci = run_step(&Hwe, &many_allele_builder(&["L0", "L1"]).build(), json!({"permutations": 2000}));
    assert_eq!(number(table(&two_loci, "by_locus"), 1, "p_value"), Some(p));
    let none = run_step(&Hwe, &many_allele_builder(&["L1"]).build(), json!({"permutations": 0}));
    assert_eq!(number(table(&none, "by_locus"), 0, "p_value"), None);
    assert!(findings_with(&none, "hwe-untested")[0].message.contains("set `permutations`"));
}

/// Fisher's method per group and BH q-values over the step's tests, confirmed with scipy
/// 1.17.1 (`combine_pvalues`, `false_discovery_control`) in tests/reference/hwe_reference.py:
/// the three tests (68, 28, 4), (0, 10, 0) and the Levene table in one group (loci typed in
/// 100, 10 and 8 individuals) give X² = 23.217334, df 6, p = 0.00072686, and
/// q = 0.515367, 0.0103596, 0.00765901.
#[test]
fn fisher_and_q_values_through_the_step() {
    let levene = ["A/A", "A/A", "A/A", "B/B", "B/B", "B/C", "C/C", "C/C"];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3"]);
    for i in 0..100 {
        let l1 = if i < 68 {
            "1/1"
        } else if i < 96 {
            "1/2"
        } else {
            "2/2"
        };
        let l2 = if i < 10 { "1/2" } else { "./." };
        let l3 = levene.get(i).copied().unwrap_or("./.");
        builder = builder.sample(&format!("s{i}"), "P", 2020, &[l1, l2, l3]);
    }
    let output = run_step(&Hwe, &builder.build(), json!({}));
    let by_locus = table(&output, "by_locus");
    assert_close(number(by_locus, 0, "p_value").unwrap(), 0.515367, 1e-6);
    assert_close(number(by_locus, 1, "p_value").unwrap(), 0.00690641, 1e-8);
    assert_eq!(text(by_locus, 1, "direction"), Some("excess"));
    assert_close(number(by_locus, 2, "p_value").unwrap(), 0.002553, 1e-6);
    for (row, q) in [(0, 0.515367026), (1, 0.0103596094), (2, 0.00765900766)] {
        assert_close(number(by_locus, row, "q_value").unwrap(), q, 1e-8);
    }
    let by_group = table(&output, "by_group");
    assert_eq!(number(by_group, 0, "loci_tested"), Some(3.0));
    assert_close(number(by_group, 0, "chi2").unwrap(), 23.217334, 1e-6);
    assert_eq!(number(by_group, 0, "df"), Some(6.0));
    assert_close(number(by_group, 0, "p_value").unwrap(), 0.00072686, 1e-8);
    assert!(findings_with(&output, "fdr-family")[0].message.contains("m = 3"));
}

/// docs/methods.md, "Hardy–Weinberg exact tests": `direction` compares Ho with the unbiased He
/// exactly; 1/1 + 1/2 has Ho = 0.5 and He = 4/3 · (1 − 0.5625 − 0.0625) = 0.5, so `none` (hand
/// calculation).
#[test]
fn direction_none_when_ho_equals_he() {
    let matrix = MatrixBuilder::new(&["L1"]).sample("a", "P", 2020, &["1/1"]).sample("b", "P", 2020, &["1/2"]).build();
    let output = run_step(&Hwe, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(text(by_locus, 0, "direction"), Some("none"));
    assert_eq!(number(by_locus, 0, "ho"), number(by_locus, 0, "he"));
}

/// Edge cases "monomorphic locus", "all-missing locus in one group" and "a group of one
/// sample": p-values null (not 1), no Fisher combination where nothing was tested, and one
/// info finding per kind listing every case instead of one finding per locus.
#[test]
fn untestable_loci_are_null_with_one_finding_each() {
    let matrix = MatrixBuilder::new(&["M1", "M2", "L3"])
        .samples("p", "P", 2020, 4, &["1/1", "2/2", "1/2"])
        .samples("q", "Q", 2020, 4, &["1/1", "2/2", "./."])
        .sample("solo", "S", 2020, &["1/1", "1/2", "1/2"])
        .build();
    let output = run_step(&Hwe, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    // rows: P M1, P M2, P L3, Q M1, Q M2, Q L3, S M1, S M2, S L3
    for row in [0, 1, 3, 4, 5, 6, 7, 8] {
        for column in ["p_value", "p_mid", "p_deficit", "p_excess", "p_se", "q_value", "method"] {
            assert_eq!(by_locus.rows[row][by_locus.column(column).unwrap()], Cell::Null, "row {row} {column}");
        }
    }
    assert_eq!(text(by_locus, 0, "direction"), Some("none"));
    assert_eq!((number(by_locus, 5, "n"), text(by_locus, 5, "direction")), (Some(0.0), None));
    assert!(number(by_locus, 2, "p_value").is_some());
    let mono = findings_with(&output, "hwe-monomorphic");
    assert_eq!(mono.len(), 1);
    assert!(mono[0].message.starts_with("4 locus–group"), "{}", mono[0].message);
    let few = findings_with(&output, "hwe-too-few-typed");
    assert_eq!(few.len(), 1);
    assert!(few[0].message.contains("L3 in Q 2020") && few[0].message.contains("M1 in S 2020"), "{}", few[0].message);
    let by_group = table(&output, "by_group");
    assert_eq!(number(by_group, 1, "loci_tested"), Some(0.0));
    assert_eq!((number(by_group, 1, "chi2"), number(by_group, 1, "p_value")), (None, None));
    // Results contract: the null combination is explained once, naming the groups (common
    // practice).
    let untested = findings_with(&output, "hwe-group-untested");
    assert_eq!(untested.len(), 1);
    assert!(untested[0].message.ends_with("is null: Q 2020, S 2020"), "{}", untested[0].message);
    assert!(findings_with(&output, "fdr-family")[0].message.contains("m = 1"));
}

/// Edge case "alleles present in one population only": each group is tested on its own
/// alleles, whatever the coding over the whole data set. Q carries allele 3 (absent from P)
/// in the (68, 28, 4) table and gets p = 0.515367 (computed, as above).
#[test]
fn alleles_private_to_one_group() {
    let builder = biallelic_group(MatrixBuilder::new(&["L1"]), "P", "1", "2", (10, 0, 10));
    let matrix = biallelic_group(builder, "Q", "1", "3", (68, 28, 4)).build();
    let output = run_step(&Hwe, &matrix, json!({}));
    let by_locus = table(&output, "by_locus");
    assert_eq!(number(by_locus, 1, "alleles"), Some(2.0));
    assert_close(number(by_locus, 1, "p_value").unwrap(), 0.515367, 1e-6);
    assert_close(number(by_locus, 0, "p_value").unwrap() / 1.3403e-6, 1.0, 1e-4);
}

/// The rule of docs/methods.md, "Null alleles" (a popgauge rule of thumb, Brookfield 1996 formula
/// from memory): L1 has no heterozygotes in both groups (p ≈ 1.3e−6, r = He/(1 + He) ≈ 0.34), so it
/// is flagged; L2 is in proportion in P and Q and in deficit in R only (1 of 3 groups), so it is
/// not.
#[test]
fn null_allele_indication_needs_half_the_groups() {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for population in ["P", "Q"] {
        builder = builder.samples(&format!("{population}a"), population, 2020, 10, &["1/1", "1/1"]);
        builder = builder.samples(&format!("{population}b"), population, 2020, 10, &["2/2", "1/2"]);
    }
    builder = builder.samples("Ra", "R", 2020, 10, &["1/2", "1/1"]).samples("Rb", "R", 2020, 10, &["1/2", "2/2"]);
    let output = run_step(&Hwe, &builder.build(), json!({}));
    let flagged = findings_with(&output, "possible-null-allele");
    assert_eq!(flagged.len(), 1, "{flagged:?}");
    assert_eq!(flagged[0].location, Where::locus("L1"));
    assert!(flagged[0].message.contains("in 2 of the 3 groups"), "{}", flagged[0].message);
    let by_locus = table(&output, "by_locus");
    let r = number(by_locus, 0, "null_allele_r").unwrap();
    let he = number(by_locus, 0, "he").unwrap();
    assert_close(r, he / (1.0 + he), 1e-12);
    // L1 in R is all heterozygous: an excess, r floored at 0.
    assert_eq!((text(by_locus, 4, "direction"), number(by_locus, 4, "null_allele_r")), (Some("excess"), Some(0.0)));
}

/// Interface: `permutations` defaults to 10,000; the step is registered under `hwe`.
#[test]
fn parameters_and_registry() {
    let d = descriptor();
    assert_eq!((d.uses.as_str(), d.version.as_str()), ("hwe", "0.1.0"));
    assert!(d.check_defaults().is_ok());
    assert_eq!(d.resolve(&Default::default()).unwrap()["permutations"], json!(10_000));
    assert!(crate::steps::find("hwe").is_some());
    let output = run_step(&Hwe, &MatrixBuilder::new(&["L1"]).samples("p", "P", 2020, 3, &["1/2"]).build(), json!({}));
    assert!(output.citations.iter().any(|c| c.starts_with("Wigginton JE")));
    assert!(output.citations.iter().any(|c| c.starts_with("Benjamini Y")));
}
