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

/// Common practice (percentile bootstrap over loci, docs/methods.md, "Conventions"): the 95 %
/// interval holds the estimate for these data, counts its replicates, and the whole output is
/// identical run to run for a fixed seed and differs for another seed.
#[test]
fn intervals_and_p_values_are_reproducible() {
    let params = json!({"permutations": 199, "bootstrap": 500});
    let first = run(&reference_matrix(), params.clone());
    let again = run(&reference_matrix(), params.clone());
    assert_eq!(first, again);
    let global = table(&first, "global");
    let (low, fst, high) = (
        number(global, 0, "fst_low").unwrap(),
        number(global, 0, "fst").unwrap(),
        number(global, 0, "fst_high").unwrap(),
    );
    assert!(low < fst && fst < high, "{low} {fst} {high}");
    assert_eq!(number(global, 0, "bootstrap"), Some(500.0));
    let pairwise = table(&first, "pairwise");
    for row in 0..3 {
        assert!(number(pairwise, row, "fst_low").unwrap() <= number(pairwise, row, "fst_high").unwrap());
        assert_eq!(number(pairwise, row, "permutations"), Some(199.0));
    }
    let other_seed = run_with(&reference_matrix(), params, 7, Vec::new());
    assert_ne!(table(&other_seed, "global").rows, global.rows);
}

/// The seed [`run`] gives the step.
const SEED: u64 = 20_261_130;

/// The bootstrap of one comparison recomputed by hand: the loci entering θ̂ (every group typed,
/// n̄ > 1), then `replicates` replicates, each drawing as many loci with replacement from the
/// named stream of the step's seed (one `random_range(0..L)` per slot, as the step's resampling
/// over loci draws), and from those drawn loci θ̂* = Σa/Σ(a + b + c) (Weir & Cockerham 1984),
/// and D* and G″ST* from Ĥ_S and Ĥ_T averaged over the drawn loci that are polymorphic (Jost
/// 2008; Meirmans & Hedrick 2011; ratio of averages as in the step). Defined values only.
fn bootstrap_by_hand(counts: &[Vec<AlleleCounts>], stream: &str, replicates: usize) -> [Vec<f64>; 3] {
    use crate::stats::gst::{DiversityEstimator, GeneDiversities, indices, locus_diversity};
    use crate::stats::weir_cockerham::{VarianceComponents, locus_components};
    let k = counts.len();
    let mut loci = Vec::new();
    for locus in 0..counts[0].len() {
        let samples: Vec<&AlleleCounts> = counts.iter().map(|g| &g[locus]).collect();
        if samples.iter().all(|s| s.typed > 0)
            && let Some(components) = locus_components(&samples)
        {
            let jost = locus_diversity(&samples, DiversityEstimator::Jost);
            let nei_chesser = locus_diversity(&samples, DiversityEstimator::NeiChesser);
            loci.push((components, jost, nei_chesser));
        }
    }
    let mean = |drawn: &[GeneDiversities]| {
        (!drawn.is_empty()).then(|| GeneDiversities {
            within: drawn.iter().map(|d| d.within).sum::<f64>() / drawn.len() as f64,
            total: drawn.iter().map(|d| d.total).sum::<f64>() / drawn.len() as f64,
        })
    };
    let mut stream = crate::stats::bootstrap::rng(Seed(SEED), stream);
    let mut values = [Vec::new(), Vec::new(), Vec::new()];
    for _ in 0..replicates {
        let drawn: Vec<usize> = (0..loci.len()).map(|_| stream.random_range(0..loci.len())).collect();
        let theta = drawn.iter().map(|&l| loci[l].0).sum::<VarianceComponents>().theta();
        let jost: Vec<GeneDiversities> = drawn.iter().filter_map(|&l| loci[l].1).collect();
        let nei_chesser: Vec<GeneDiversities> = drawn.iter().filter_map(|&l| loci[l].2).collect();
        let d = mean(&jost).and_then(|m| indices(m, k).jost_d);
        let gst_pp = mean(&nei_chesser).and_then(|m| indices(m, k).gst_double_prime);
        for (kept, value) in values.iter_mut().zip([theta, d, gst_pp]) {
            kept.extend(value.filter(|v| v.is_finite()));
        }
    }
    values
}

/// The 2.5th and 97.5th percentiles with linear interpolation between order statistics, as
/// numpy's default `percentile` (numpy 1.26 documentation, method "linear").
fn percentiles_by_hand(values: &[f64]) -> (f64, f64) {
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let at = |q: f64| {
        let position = q * (sorted.len() - 1) as f64;
        let (below, above) = (position.floor() as usize, position.ceil() as usize);
        sorted[below] + (sorted[above] - sorted[below]) * (position - below as f64)
    };
    (at(0.025), at(0.975))
}

/// Percentile bootstrap over loci (Efron & Tibshirani 1993) of Jost's D and G″ST, from the same
/// replicates as FST: on the reference data each interval holds its point estimate, and each
/// equals the recomputation by hand from the same seeded draws ([`bootstrap_by_hand`];
/// tolerance 1e-12: the step takes the 2.5th percentile at (1 − 0.95)/2, which differs from
/// 0.025 in the last bit). The FST interval is bit for bit that of a bootstrap of
/// θ̂ alone over the same stream, as the step computed it before D and G″ST shared the draws.
#[test]
fn d_and_gst_pp_intervals_share_the_fst_replicates() {
    let replicates = 500;
    let output = run(&reference_matrix(), json!({"permutations": 0, "bootstrap": replicates}));
    let matrix = reference_matrix();
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&samples, &loci);
    let counts: Vec<Vec<AlleleCounts>> = view
        .populations()
        .iter()
        .map(|g| (0..view.n_loci()).map(|l| view.allele_counts(l, &g.samples)).collect())
        .collect();
    let pairwise = table(&output, "pairwise");
    let global = table(&output, "global");
    let comparisons = [
        (
            pairwise,
            pair_row(pairwise, "Ash", "Birch", None),
            vec![counts[0].clone(), counts[1].clone()],
            "fst-bootstrap/pooled/Ash/Birch",
        ),
        (
            pairwise,
            pair_row(pairwise, "Birch", "Cedar", None),
            vec![counts[1].clone(), counts[2].clone()],
            "fst-bootstrap/pooled/Birch/Cedar",
        ),
        (global, 0, counts.clone(), "fst-bootstrap/global/pooled"),
    ];
    for (t, row, groups, stream) in comparisons {
        let [theta, d, gst_pp] = bootstrap_by_hand(&groups, stream, replicates);
        assert_eq!(theta.len(), replicates);
        for (column, values) in [("jost_d", &d), ("gst_pp", &gst_pp)] {
            let point = number(t, row, column).unwrap();
            let (low, high) =
                (number(t, row, &format!("{column}_low")).unwrap(), number(t, row, &format!("{column}_high")).unwrap());
            assert!(low < point && point < high, "{stream} {column}: {low} < {point} < {high}");
            let (hand_low, hand_high) = percentiles_by_hand(values);
            assert_close(low, hand_low, 1e-12);
            assert_close(high, hand_high, 1e-12);
        }
        let (hand_low, hand_high) = percentiles_by_hand(&theta);
        let (low, high) = (number(t, row, "fst_low").unwrap(), number(t, row, "fst_high").unwrap());
        assert_close(low, hand_low, 1e-12);
        assert_close(high, hand_high, 1e-12);
        // The bootstrap of θ̂ alone, as the FST interval was computed before.
        let pair_counts: Vec<&[AlleleCounts]> = groups.iter().map(Vec::as_slice).collect();
        let components = pairs::estimate(&pair_counts, 0, &mut ChaCha8Rng::seed_from_u64(1)).components;
        let mut alone = crate::stats::bootstrap::bootstrap_loci(
            components.len(),
            replicates,
            &mut crate::stats::bootstrap::rng(Seed(SEED), stream),
            |drawn| {
                drawn.iter().map(|&l| components[l]).sum::<crate::stats::weir_cockerham::VarianceComponents>().theta()
            },
        );
        assert_eq!(alone, theta, "{stream}: the same θ̂* in the same order");
        let before = crate::stats::bootstrap::percentile_interval(&mut alone, 0.95).unwrap();
        assert_eq!((low.to_bits(), high.to_bits()), (before.low.to_bits(), before.high.to_bits()));
    }
}

/// No null without a finding saying why: with one bootstrap replicate no interval can be formed,
/// so jost_d_low … gst_pp_high are null beside defined points, and one
/// `differentiation-interval-undefined` finding names every comparison and statistic (as
/// `fst-interval-undefined` does for FST).
#[test]
fn undefined_d_and_gst_pp_intervals_are_explained() {
    let output = run(&reference_matrix(), json!({"permutations": 0, "bootstrap": 1}));
    for name in ["pairwise", "global"] {
        let t = table(&output, name);
        for row in 0..t.rows.len() {
            assert!(number(t, row, "jost_d").is_some() && number(t, row, "gst_pp").is_some());
            for column in ["jost_d_low", "jost_d_high", "gst_pp_low", "gst_pp_high"] {
                assert_eq!(number(t, row, column), None, "{name} {row} {column}");
            }
        }
    }
    let undefined = findings_with(&output, "differentiation-interval-undefined");
    assert_eq!(undefined.len(), 1);
    assert!(undefined[0].message.starts_with("4 comparison(s)"), "{}", undefined[0].message);
    assert!(
        undefined[0].message.ends_with(
            ": Ash–Birch (jost_d, gst_pp), Ash–Cedar (jost_d, gst_pp), Birch–Cedar (jost_d, gst_pp), global (all \
             populations, sampling years pooled) (jost_d, gst_pp)"
        ),
        "{}",
        undefined[0].message
    );
    assert_eq!(findings_with(&output, "fst-interval-undefined").len(), 1);
    let off = run(&reference_matrix(), json!({"permutations": 0, "bootstrap": 0}));
    assert!(findings_with(&off, "differentiation-interval-undefined").is_empty(), "bootstrap = 0 is said by the scope");
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

/// The permutation machinery's counting from genotype histograms reproduces the view's counting: with
/// the data as they are, θ̂ from [`PairPermutation`] equals the pair's θ̂ (hand-checkable
/// identity; tolerance 1e-12 for summation order).
#[test]
fn unpermuted_labels_give_the_observed_theta() {
    let matrix = reference_matrix();
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&samples, &loci);
    let groups = view.populations();
    for (a, b) in [(0, 1), (0, 2), (1, 2)] {
        let counts: Vec<Vec<_>> = [a, b]
            .iter()
            .map(|&g| (0..view.n_loci()).map(|l| view.allele_counts(l, &groups[g].samples)).collect())
            .collect();
        let estimate = pairs::estimate(&[&counts[0], &counts[1]], 0, &mut ChaCha8Rng::seed_from_u64(1));
        let mut permutation =
            PairPermutation::new(&view, &groups[a].samples, &groups[b].samples, &estimate.loci).unwrap();
        let labels = permutation.labels();
        assert_close(permutation.theta(&labels).unwrap(), estimate.theta.unwrap(), 1e-12);
    }
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

/// Random allele frequencies for `alleles` alleles (weights 0.2 + U(0, 1), normalised).
fn random_frequencies(rng: &mut ChaCha8Rng, alleles: usize) -> Vec<f64> {
    let weights: Vec<f64> = (0..alleles).map(|_| 0.2 + rng.random::<f64>()).collect();
    let total: f64 = weights.iter().sum();
    weights.iter().map(|w| w / total).collect()
}

/// `replicates` independent pairs of populations, one pair per "year" (so `by_year = true`
/// compares only the two groups of each replicate); `frequencies_of(rng, replicate, group,
/// locus)` gives the allele frequencies of a group at a locus. `individuals` per group.
fn pairs_matrix(
    replicates: usize,
    individuals: usize,
    loci: usize,
    alleles: usize,
    seed: u64,
    mut frequencies_of: impl FnMut(&mut ChaCha8Rng, usize, usize, usize) -> Vec<f64>,
) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut samples = Vec::new();
    for replicate in 0..replicates {
        for name in ["A", "B"] {
            for i in 0..individuals {
                samples.push(SampleMeta {
                    id: format!("r{replicate}{name}{i}"),
                    population: name.to_string(),
                    year: 1000 + replicate as i32,
                });
            }
        }
    }
    let mut codes = Vec::with_capacity(samples.len() * loci * 2);
    for locus in 0..loci {
        for replicate in 0..replicates {
            for group in 0..2 {
                let frequencies = frequencies_of(&mut rng, replicate, group, locus);
                for _ in 0..individuals {
                    codes.extend(draw_genotype(&mut rng, &frequencies));
                }
            }
        }
    }
    let locus_meta = (0..loci)
        .map(|l| LocusMeta {
            name: format!("L{l}"),
            alleles: (1..=alleles).map(|a| (100 + 2 * a).to_string()).collect(),
            chromosome: None,
            position: None,
        })
        .collect();
    GenotypeMatrix::new(samples, locus_meta, codes).expect("simulated matrix is well formed")
}

/// Under the null (both groups drawn from the same allele frequencies, so individuals are
/// exchangeable) the permutation p-value is uniform: P(p ≤ 0.05) = 0.05 exactly when
/// 0.05·(B + 1) is a whole number (B = 199), slightly less with ties (common practice; Good
/// 2005, *Permutation, Parametric and Bootstrap Tests of Hypotheses*, §3). Over 400 independent
/// pairs (20 + 20 individuals, 8 loci, 5 alleles) the count with p ≤ 0.05 is binomial(400,
/// 0.05): mean 20, SD 4.36; we accept 7–33 (±3 SD). The count with p ≤ 0.5 (mean 200,
/// SD 10) must lie in 170–230.
#[test]
fn p_values_are_uniform_under_panmixia() {
    let mut shared: Vec<Vec<f64>> = Vec::new();
    let matrix = pairs_matrix(400, 20, 8, 5, 11, |rng, replicate, group, locus| {
        if replicate == 0 && group == 0 && locus >= shared.len() {
            shared.push(random_frequencies(rng, 5));
        }
        shared[locus].clone()
    });
    let output = run(&matrix, json!({"by_year": true, "permutations": 199, "bootstrap": 0}));
    let pairwise = table(&output, "pairwise");
    assert_eq!(pairwise.rows.len(), 400);
    let p: Vec<f64> = (0..400).map(|r| number(pairwise, r, "fst_p").unwrap()).collect();
    assert!(p.iter().all(|&x| x > 0.0 && x <= 1.0));
    let below_5 = p.iter().filter(|&&x| x <= 0.05).count();
    let below_50 = p.iter().filter(|&&x| x <= 0.5).count();
    assert!((7..=33).contains(&below_5), "{below_5} of 400 p-values ≤ 0.05");
    assert!((170..=230).contains(&below_50), "{below_50} of 400 p-values ≤ 0.5");
}

/// Strongly differentiated pairs (at every locus each group has a different common allele at
/// frequency 0.7, the three others at 0.1; 30 + 30 individuals, 10 loci; expected FST about
/// 0.3) give FST well above 0 and the smallest attainable p-value 1/(B + 1) = 0.001 (common
/// practice: no permutation reaches the observed θ̂).
#[test]
fn strong_structure_gives_small_p() {
    let matrix = pairs_matrix(3, 30, 10, 4, 12, |_, _, group, locus| {
        let common = (locus + 2 * group) % 4;
        (0..4).map(|a| if a == common { 0.7 } else { 0.1 }).collect()
    });
    let output = run(&matrix, json!({"by_year": true, "permutations": 999, "bootstrap": 0}));
    let pairwise = table(&output, "pairwise");
    for row in 0..3 {
        assert!(number(pairwise, row, "fst").unwrap() > 0.15, "{:?}", number(pairwise, row, "fst"));
        assert_close(number(pairwise, row, "fst_p").unwrap(), 0.001, 1e-12);
    }
}

/// Haversine formula (Sinnott 1984) on a sphere of radius 6371.0088 km (IUGG mean radius R₁,
/// Moritz 1980). Hand calculations: one degree along the equator is R·π/180 = 111.195080 km;
/// equator to pole is R·π/2 = 10007.557221 km; antipodes are R·π = 20015.114442 km. A general
/// pair, (52.0 N, 4.0 E)–(48.0 N, 11.0 E), is checked against the spherical law of cosines
/// (an independent textbook formula, d = R·acos(sin φ₁ sin φ₂ + cos φ₁ cos φ₂ cos Δλ)), which
/// gives 668.906 km; they agree to 1e-6 km at this distance.
#[test]
fn haversine_by_hand() {
    let at = |latitude, longitude| Coordinates { latitude, longitude };
    let r = MEAN_EARTH_RADIUS_KM;
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 1.0)), r * std::f64::consts::PI / 180.0, 1e-9);
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 1.0)), 111.195080, 1e-6);
    assert_close(haversine_km(at(0.0, 0.0), at(90.0, 0.0)), 10007.557221, 1e-6);
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 180.0)), 20015.114442, 1e-6);
    assert_eq!(haversine_km(at(12.5, -3.0), at(12.5, -3.0)), 0.0);
    let (a, b) = (at(52.0, 4.0), at(48.0, 11.0));
    let (phi_a, phi_b) = (a.latitude.to_radians(), b.latitude.to_radians());
    let cosines = r
        * (phi_a.sin() * phi_b.sin() + phi_a.cos() * phi_b.cos() * (b.longitude - a.longitude).to_radians().cos())
            .acos();
    assert_close(haversine_km(a, b), cosines, 1e-6);
    assert_close(haversine_km(a, b), 668.906, 1e-3);
    assert_close(haversine_km(b, a), haversine_km(a, b), 1e-12);
}

/// Six populations along a meridian at irregular spacing, with allele frequencies that change
/// steadily along it (a cline: p rises by 0.12 per step), so FST grows with distance; 40
/// individuals each, 12 loci.
fn cline_matrix() -> GenotypeMatrix {
    cline_of(6, 0.12)
}

/// `populations` populations P0, P1, … on a cline, p rising by `rise` per step (see
/// [`cline_matrix`]).
fn cline_of(populations: usize, rise: f64) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(13);
    let names: Vec<String> = (0..populations).map(|p| format!("P{p}")).collect();
    let individuals = 40;
    let samples: Vec<SampleMeta> = names
        .iter()
        .flat_map(|p| {
            (0..individuals).map(move |i| SampleMeta { id: format!("{p}-{i}"), population: p.to_string(), year: 2022 })
        })
        .collect();
    let mut codes = Vec::new();
    for _ in 0..12 {
        let start = 0.1 + 0.2 * rng.random::<f64>();
        for step in 0..names.len() {
            let p = start + rise * step as f64;
            for _ in 0..individuals {
                codes.extend(draw_genotype(&mut rng, &[p, 1.0 - p]));
            }
        }
    }
    let loci = (0..12)
        .map(|l| LocusMeta {
            name: format!("L{l}"),
            alleles: vec!["A".into(), "G".into()],
            chromosome: None,
            position: None,
        })
        .collect();
    GenotypeMatrix::new(samples, loci, codes).expect("simulated matrix is well formed")
}

/// Latitudes along a meridian (longitude 10° E): step distances of 10–80 km.
const CLINE_LATITUDES: [f64; 6] = [45.0, 45.1, 45.3, 45.6, 46.1, 46.8];

fn sheet(latitudes: &[f64]) -> Vec<PopulationInfo> {
    latitudes
        .iter()
        .enumerate()
        .map(|(i, &latitude)| PopulationInfo {
            population: format!("P{i}"),
            latitude: Some(latitude),
            longitude: Some(10.0),
            ..PopulationInfo::default()
        })
        .collect()
}

/// Mantel (1967) and Rousset (1997): populations on a cline, located where they were sampled,
/// show isolation by distance (positive slope of FST/(1 − FST) on ln distance, r > 0.5,
/// Mantel p < 0.05: only a few of the 6! = 720 relabellings correlate as well, and with 9999
/// permutations asked all 720 are evaluated exactly). The same genotypes with the coordinates
/// shuffled among populations show none (p > 0.1), and an `ibd-not-significant` finding says
/// the fitted line is descriptive only. Tables: one `ibd` row per pair (15) and one `ibd_test`
/// row; citations added.
#[test]
fn isolation_by_distance_on_a_cline_and_shuffled() {
    let matrix = cline_matrix();
    let structured = run_with(&matrix, json!({"permutations": 0, "bootstrap": 0}), 5, sheet(&CLINE_LATITUDES));
    let ibd = table(&structured, "ibd");
    assert_eq!(ibd.rows.len(), 15);
    let row = pair_row(ibd, "P0", "P1", None);
    assert_close(number(ibd, row, "distance_km").unwrap(), 0.1_f64.to_radians() * MEAN_EARTH_RADIUS_KM, 1e-6);
    let fst = number(ibd, row, "fst").unwrap();
    assert_close(number(ibd, row, "fst_linearised").unwrap(), fst / (1.0 - fst), 1e-12);
    let test = table(&structured, "ibd_test");
    assert_eq!(test.rows.len(), 1);
    assert_eq!((number(test, 0, "populations"), number(test, 0, "pairs")), (Some(6.0), Some(15.0)));
    assert!(number(test, 0, "slope").unwrap() > 0.0);
    assert!(number(test, 0, "r").unwrap() > 0.5, "r = {:?}", number(test, 0, "r"));
    assert!(number(test, 0, "mantel_p").unwrap() < 0.05, "p = {:?}", number(test, 0, "mantel_p"));
    assert_eq!(number(test, 0, "permutations"), Some(720.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("exact"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 720.0));
    assert!(findings_with(&structured, "ibd-not-significant").is_empty());
    assert!(structured.citations.iter().any(|c| c.starts_with("Mantel N (1967)")));
    assert!(structured.citations.iter().any(|c| c.starts_with("Rousset F (1997)")));

    let shuffled_latitudes: Vec<f64> = [3, 0, 5, 1, 4, 2].iter().map(|&i| CLINE_LATITUDES[i]).collect();
    let shuffled = run_with(&matrix, json!({"permutations": 0, "bootstrap": 0}), 5, sheet(&shuffled_latitudes));
    let test = table(&shuffled, "ibd_test");
    assert!(number(test, 0, "mantel_p").unwrap() > 0.1, "p = {:?}", number(test, 0, "mantel_p"));
    let descriptive = findings_with(&shuffled, "ibd-not-significant");
    assert_eq!(descriptive.len(), 1);
    assert_eq!(descriptive[0].level, popgauge_abi::FindingLevel::Info);
    assert!(descriptive[0].message.contains("the fitted line is descriptive only"), "{}", descriptive[0].message);
    assert!(descriptive[0].message.contains("exact, over all 720 orders of the 6 populations"));
}

/// Exact Mantel test with few populations (Mantel 1967; complete enumeration, common practice):
/// four located populations have 4! = 24 orders, fewer than the 9999 asked, so all 24 are
/// evaluated once: `permutations` = 24, `mantel_method` = exact, p is a whole number of 24ths
/// and `mantel_p_min` = 1/24. With three populations (3! = 6 orders) no order can give
/// p ≤ 0.05 (p_min = 1/6), and the finding says so. With eight populations 8! = 40,320 orders
/// exceed the 999 asked, so 999 random orders are drawn: p_min = 1/1000.
#[test]
fn mantel_test_enumerates_few_populations_exactly() {
    let params = json!({"permutations": 0, "bootstrap": 0});
    let four = run_with(&cline_matrix(), params.clone(), 5, sheet(&CLINE_LATITUDES[..4]));
    let test = table(&four, "ibd_test");
    assert_eq!(number(test, 0, "populations"), Some(4.0));
    assert_eq!(number(test, 0, "permutations"), Some(24.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("exact"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 24.0));
    let in_24ths = number(test, 0, "mantel_p").unwrap() * 24.0;
    assert!((in_24ths - in_24ths.round()).abs() < 1e-9 && in_24ths >= 1.0, "p·24 = {in_24ths}");

    let three = run_with(&cline_matrix(), params.clone(), 5, sheet(&CLINE_LATITUDES[..3]));
    let test = table(&three, "ibd_test");
    assert_eq!((number(test, 0, "permutations"), number(test, 0, "mantel_p_min")), (Some(6.0), Some(1.0 / 6.0)));
    let descriptive = findings_with(&three, "ibd-not-significant");
    assert_eq!(descriptive.len(), 1);
    assert!(descriptive[0].message.contains("no order of the labels can give p ≤ 0.05"), "{}", descriptive[0].message);

    let latitudes: Vec<f64> = (0..8).map(|i| 45.0 + 0.1 * f64::from(i * (i + 1) / 2)).collect();
    let eight = run_with(
        &cline_of(8, 0.08),
        json!({"permutations": 0, "bootstrap": 0, "mantel_permutations": 999}),
        5,
        sheet(&latitudes),
    );
    let test = table(&eight, "ibd_test");
    assert_eq!(number(test, 0, "populations"), Some(8.0));
    assert_eq!(number(test, 0, "permutations"), Some(999.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("random"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 1000.0));
}

/// docs/methods.md, "Isolation by distance": fewer than three located populations → no IBD tables,
/// an `ibd-not-tested` finding; an invalid coordinate → a `bad-coordinates` warning naming the
/// population; two populations at the same place → that pair is left out with `ibd-pair-excluded`.
#[test]
fn isolation_by_distance_needs_three_valid_locations() {
    let matrix = cline_matrix();
    let params = json!({"permutations": 0, "bootstrap": 0, "mantel_permutations": 99});
    let none = run_with(&matrix, params.clone(), 5, Vec::new());
    assert!(!none.tables.contains_key("ibd") && !none.tables.contains_key("ibd_test"));
    let not_tested = findings_with(&none, "ibd-not-tested");
    assert_eq!(not_tested.len(), 1);
    assert!(not_tested[0].message.contains("no coordinates"));
    assert!(!none.citations.iter().any(|c| c.starts_with("Mantel")));
    let mut two = sheet(&CLINE_LATITUDES[..2]);
    two.push(PopulationInfo {
        population: "P2".into(),
        latitude: Some(95.0),
        longitude: Some(10.0),
        ..Default::default()
    });
    let output = run_with(&matrix, params.clone(), 5, two);
    assert!(!output.tables.contains_key("ibd"));
    let bad = findings_with(&output, "bad-coordinates");
    assert_eq!(bad.len(), 1);
    assert!(bad[0].message.contains("P2") && bad[0].message.contains("95"), "{}", bad[0].message);
    assert!(findings_with(&output, "ibd-not-tested")[0].message.contains("2 population(s)"));
    let mut same_place = sheet(&CLINE_LATITUDES);
    same_place[1].latitude = same_place[0].latitude;
    let output = run_with(&matrix, params, 5, same_place);
    assert_eq!(number(table(&output, "ibd_test"), 0, "pairs"), Some(14.0));
    let excluded = findings_with(&output, "ibd-pair-excluded");
    assert_eq!(excluded.len(), 1);
    assert!(excluded[0].message.contains("P0–P1"));
    assert_no_nan(&output);
}

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
