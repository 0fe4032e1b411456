//! Tests of the `differentiation` step: published and reference-library values, the permutation
//! test's behaviour under the null and under strong structure, isolation by distance, and the
//! edge cases of docs/methods.md, "Weir and Cockerham F-statistics", docs/methods.md,
//! "Gene-diversity differentiation" and docs/methods.md, "Isolation by distance".

use popgauge_abi::{
    AlleleCode, AlleleCounts, AssessmentInfo, Cell, GenotypeMatrix, LocusMeta, PopulationInfo, SampleMeta, Seed, Step,
    StepContext, StepOutput, Table,
};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{Value, json};

use super::ibd::{Coordinates, MEAN_EARTH_RADIUS_KM, haversine_km};
use super::pairs::{self, PairPermutation};
use super::*;
use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, row_with, table, text};

mod edge_cases;
mod intervals;
mod isolation_by_distance;
mod permutation;
mod reference_values;

/// Runs the step with `params` on the full view of `matrix`, with a population sheet and seed.
fn run_with(matrix: &GenotypeMatrix, params: Value, seed: u64, populations: Vec<PopulationInfo>) -> StepOutput {
    let given = match params {
        Value::Object(map) => map.into_iter().collect(),
        other => panic!("params must be a JSON object, not {other}"),
    };
    let resolved = descriptor().resolve(&given).expect("test parameters are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo { populations, ..AssessmentInfo::default() };
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(seed)).with_assessment(&assessment);
    Differentiation.run(&ctx).expect("the step runs")
}

fn run(matrix: &GenotypeMatrix, params: Value) -> StepOutput {
    run_with(matrix, params, 20_261_130, Vec::new())
}

/// The row of the pair (pop_a, pop_b) in `pairwise`, optionally in one year.
fn pair_row(table: &Table, pop_a: &str, pop_b: &str, year: Option<i32>) -> usize {
    (0..table.rows.len())
        .find(|&r| {
            text(table, r, "pop_a") == Some(pop_a)
                && text(table, r, "pop_b") == Some(pop_b)
                && number(table, r, "year") == year.map(f64::from)
        })
        .unwrap_or_else(|| panic!("no pair {pop_a}–{pop_b} in {year:?}"))
}

/// No table cell is a non-finite number (the contract: undefined values are null).
fn assert_no_nan(output: &StepOutput) {
    for (name, table) in &output.tables {
        for row in &table.rows {
            for cell in row {
                if let Cell::Num(x) = cell {
                    assert!(x.is_finite(), "table {name} holds {x}");
                }
            }
        }
    }
}

/// The invented data set of tests/reference/differentiation_scikit_allel.py (three
/// populations, six loci, about 8 % untyped cells, two sampling years).
fn reference_matrix() -> GenotypeMatrix {
    let rows: &[(&str, &str, i32, [&str; 6])] = &[
        ("Ash1", "Ash", 2019, ["104/104", "104/104", "100/104", "108/116", "./.", "100/104"]),
        ("Ash2", "Ash", 2021, ["100/104", "104/108", "104/104", "112/116", "./.", "104/104"]),
        ("Ash3", "Ash", 2019, ["104/104", "104/108", "104/112", "108/116", "100/100", "100/108"]),
        ("Ash4", "Ash", 2021, ["104/104", "104/104", "100/108", "108/112", "100/100", "100/108"]),
        ("Ash5", "Ash", 2019, ["./.", "104/104", "104/108", "100/116", "100/104", "104/108"]),
        ("Ash6", "Ash", 2021, ["104/104", "104/104", "104/108", "108/108", "100/104", "100/108"]),
        ("Ash7", "Ash", 2019, ["100/104", "104/104", "104/104", "108/112", "100/100", "100/108"]),
        ("Ash8", "Ash", 2021, ["104/104", "104/104", "112/112", "112/116", "./.", "100/108"]),
        ("Ash9", "Ash", 2019, ["104/104", "104/104", "104/104", "112/116", "100/100", "100/100"]),
        ("Ash10", "Ash", 2021, ["100/100", "104/108", "100/104", "108/112", "100/100", "100/108"]),
        ("Birch1", "Birch", 2019, ["100/100", "104/104", "108/112", "100/112", "100/104", "./."]),
        ("Birch2", "Birch", 2021, ["100/104", "100/108", "112/112", "100/108", "100/100", "100/108"]),
        ("Birch3", "Birch", 2019, ["100/104", "108/108", "104/112", "100/100", "104/104", "100/100"]),
        ("Birch4", "Birch", 2021, ["100/100", "100/108", "104/112", "104/108", "100/104", "100/104"]),
        ("Birch5", "Birch", 2019, ["100/100", "100/104", "112/112", "100/108", "100/100", "100/100"]),
        ("Birch6", "Birch", 2021, ["100/100", "100/104", "100/112", "100/108", "100/100", "104/104"]),
        ("Birch7", "Birch", 2019, ["100/100", "./.", "./.", "100/108", "100/104", "100/104"]),
        ("Birch8", "Birch", 2021, ["104/104", "100/100", "./.", "./.", "100/104", "100/100"]),
        ("Cedar1", "Cedar", 2019, ["./.", "104/108", "104/108", "100/100", "104/104", "100/104"]),
        ("Cedar2", "Cedar", 2021, ["100/104", "104/104", "104/108", "108/108", "100/104", "100/104"]),
        ("Cedar3", "Cedar", 2019, ["100/104", "104/108", "108/108", "108/112", "104/104", "100/108"]),
        ("Cedar4", "Cedar", 2021, ["100/100", "104/104", "100/108", "104/108", "104/104", "100/108"]),
        ("Cedar5", "Cedar", 2019, ["100/100", "100/108", "104/104", "108/108", "100/104", "100/104"]),
        ("Cedar6", "Cedar", 2021, ["104/104", "100/104", "100/104", "100/108", "104/104", "104/108"]),
        ("Cedar7", "Cedar", 2019, ["./.", "104/108", "108/108", "108/116", "104/104", "100/100"]),
        ("Cedar8", "Cedar", 2021, ["104/104", "104/104", "./.", "104/116", "104/104", "100/100"]),
        ("Cedar9", "Cedar", 2019, ["104/104", "104/104", "100/108", "108/116", "100/104", "./."]),
    ];
    let loci = ["L1", "L2", "L3", "L4", "L5", "L6"];
    rows.iter().fold(MatrixBuilder::new(&loci), |b, (id, pop, year, cells)| b.sample(id, pop, *year, cells)).build()
}

/// Determinism (STYLE): pairs run in parallel, but each draws from its own stream and the
/// results keep the pair order, so one thread and three threads give identical output.
#[test]
fn output_does_not_depend_on_threads() {
    let params = json!({"permutations": 99, "bootstrap": 100});
    let with = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("a thread pool");
        pool.install(|| run(&reference_matrix(), params.clone()))
    };
    assert_eq!(with(1), with(3));
}

/// The results contract: the minimum columns of `pairwise` and `global`; the usual cautions
/// reach the reader; every method used is cited.
#[test]
fn contract_columns_cautions_and_citations() {
    let output = run(&reference_matrix(), json!({"permutations": 9, "bootstrap": 10}));
    let pairwise = table(&output, "pairwise");
    for column in ["pop_a", "pop_b", "year", "fst", "fst_p", "jost_d", "gst_pp", "n_a", "n_b", "loci", "gst", "gst_p"] {
        assert!(pairwise.column(column).is_some(), "pairwise lacks {column}");
    }
    let global = table(&output, "global");
    for column in ["fst", "fst_low", "fst_high", "year", "populations", "loci", "jost_d", "gst_pp", "bootstrap"] {
        assert!(global.column(column).is_some(), "global lacks {column}");
    }
    let caution = findings_with(&output, "differentiation-caution");
    assert_eq!(caution.len(), 1);
    assert!(caution[0].message.contains("qualified geneticist") && caution[0].message.contains("regulatory"));
    let scope = findings_with(&output, "differentiation-scope");
    assert!(scope[0].message.contains("all populations, sampling years pooled"));
    for author in ["Weir BS", "Goudet J", "Nei M (1973)", "Nei M, Chesser RK", "Hedrick PW", "Meirmans PG", "Jost L"] {
        assert!(output.citations.iter().any(|c| c.starts_with(author)), "missing citation {author}");
    }
    assert_eq!(row_with(pairwise, "pop_b", "Cedar"), 1);
}

/// The parameter names are part of the interface and their defaults are fixed.
#[test]
fn parameters_are_declared_with_defaults() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["permutations"], json!(1000));
    assert_eq!(resolved["by_year"], json!(false));
    assert_eq!(resolved["bootstrap"], json!(1000));
    assert_eq!(resolved["mantel_permutations"], json!(9999));
    let negative = [("permutations".to_string(), json!(-1))].into_iter().collect();
    assert!(d.resolve(&negative).is_err());
}

/// Draws a genotype with both alleles independent from `frequencies` (Hardy–Weinberg
/// proportions); allele codes are 1-based.
fn draw_genotype(rng: &mut ChaCha8Rng, frequencies: &[f64]) -> [AlleleCode; 2] {
    let mut draw = || {
        let mut remaining: f64 = rng.random();
        for (code, &p) in frequencies.iter().enumerate() {
            if remaining < p {
                return AlleleCode(code as u16 + 1);
            }
            remaining -= p;
        }
        AlleleCode(frequencies.len() as u16)
    };
    [draw(), draw()]
}
