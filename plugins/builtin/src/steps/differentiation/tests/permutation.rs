//! The permutation test of pairwise FST: the unpermuted labels reproduce the estimate, p-values
//! are uniform under panmixia and small under strong structure.

use super::*;

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
