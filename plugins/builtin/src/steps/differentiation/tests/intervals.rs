//! The bootstrap intervals of `differentiation`: reproducible from the seed, D and G″ST drawn
//! from the same replicates as FST (recomputed by hand), and undefined intervals explained.

use super::*;

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
