//! Duplicate multilocus genotypes: pairs of samples identical at every locus typed in both.
//!
//! A genotype is unordered (`1/2` equals `2/1`). A pair counts only when typed together at
//! `min_compared` loci or more, so two sparsely typed samples do not match by default.
//! Samples typed at every locus are bucketed by their whole genotype vector (a sorted map, so
//! the result is deterministic), which finds their pairs in O(n log n · L); only pairs with at
//! least one incompletely typed sample are compared one by one.

use std::collections::BTreeMap;

use popgauge_abi::{GenotypeView, LocusIdx, SampleIdx};

/// Two samples with identical genotypes at the loci typed in both.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct DuplicatePair {
    /// The sample earlier in the view.
    pub first: SampleIdx,
    /// The sample later in the view.
    pub second: SampleIdx,
    /// Loci typed in both.
    pub compared: usize,
}

/// An unordered genotype as (smaller code, larger code); `None` when untyped.
type Genotype = Option<(u16, u16)>;

/// Pairs among `samples` (view indices, ascending) identical at every locus of `loci` typed in
/// both and typed together at `min_compared` loci or more, sorted by (first, second).
pub(super) fn find_duplicate_genotypes(
    view: &GenotypeView<'_>,
    samples: &[SampleIdx],
    loci: &[LocusIdx],
    min_compared: usize,
) -> Vec<DuplicatePair> {
    let profiles: Vec<Vec<Genotype>> = samples.iter().map(|&s| profile(view, s, loci)).collect();
    let complete: Vec<bool> = profiles.iter().map(|p| p.iter().all(Option::is_some)).collect();
    let mut pairs = Vec::new();
    if loci.len() >= min_compared {
        pairs.extend(pairs_among_complete(&profiles, &complete));
    }
    pairs.extend(pairs_with_incomplete(&profiles, &complete, min_compared));
    let mut pairs: Vec<DuplicatePair> = pairs
        .into_iter()
        .map(|(i, j, compared)| DuplicatePair { first: samples[i], second: samples[j], compared })
        .collect();
    pairs.sort_by_key(|p| (p.first, p.second));
    pairs
}

fn profile(view: &GenotypeView<'_>, sample: SampleIdx, loci: &[LocusIdx]) -> Vec<Genotype> {
    loci.iter().map(|&l| view.genotype(sample, l).map(|(a, b)| (a.0.min(b.0), a.0.max(b.0)))).collect()
}

/// Pairs (positions i < j) of completely typed samples with the same genotype vector.
fn pairs_among_complete(profiles: &[Vec<Genotype>], complete: &[bool]) -> Vec<(usize, usize, usize)> {
    let mut buckets: BTreeMap<&[Genotype], Vec<usize>> = BTreeMap::new();
    for (position, profile) in profiles.iter().enumerate().filter(|(i, _)| complete[*i]) {
        buckets.entry(profile.as_slice()).or_default().push(position);
    }
    let mut pairs = Vec::new();
    for (profile, members) in buckets {
        for (k, &i) in members.iter().enumerate() {
            pairs.extend(members[k + 1..].iter().map(|&j| (i, j, profile.len())));
        }
    }
    pairs
}

/// Pairs (positions i < j) in which at least one sample is incompletely typed.
fn pairs_with_incomplete(
    profiles: &[Vec<Genotype>],
    complete: &[bool],
    min_compared: usize,
) -> Vec<(usize, usize, usize)> {
    let mut pairs = Vec::new();
    for i in (0..profiles.len()).filter(|&i| !complete[i]) {
        // Each incomplete–incomplete pair is visited once, from its earlier member.
        for j in (0..profiles.len()).filter(|&j| j != i && (complete[j] || j > i)) {
            if let Some(compared) = identical_where_typed(&profiles[i], &profiles[j])
                && compared >= min_compared
            {
                pairs.push((i.min(j), i.max(j), compared));
            }
        }
    }
    pairs
}

/// The number of loci typed in both, when the two agree at all of them.
fn identical_where_typed(a: &[Genotype], b: &[Genotype]) -> Option<usize> {
    let mut compared = 0;
    for (x, y) in a.iter().zip(b) {
        if let (Some(x), Some(y)) = (x, y) {
            if x != y {
                return None;
            }
            compared += 1;
        }
    }
    Some(compared)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::MatrixBuilder;

    fn pairs(builder: MatrixBuilder, min_compared: usize) -> Vec<(usize, usize, usize)> {
        let matrix = builder.build();
        let (s, l) = (matrix.all_sample_indices(), matrix.all_locus_indices());
        let view = matrix.full_view(&s, &l);
        find_duplicate_genotypes(&view, &s, &l, min_compared)
            .into_iter()
            .map(|p| (p.first, p.second, p.compared))
            .collect()
    }

    /// Common practice: genotypes are unordered, so a = c although c is written `2/1`; b
    /// differs from both at L3.
    #[test]
    fn complete_profiles_match_regardless_of_allele_order() {
        let builder = MatrixBuilder::new(&["L1", "L2", "L3"])
            .sample("a", "P", 1, &["1/2", "3/3", "1/1"])
            .sample("b", "P", 1, &["1/2", "3/3", "1/2"])
            .sample("c", "P", 1, &["2/1", "3/3", "1/1"]);
        assert_eq!(pairs(builder, 3), vec![(0, 2, 3)]);
    }

    /// Hand-made cases: d is untyped at L3 and agrees with a and c elsewhere (2 loci compared),
    /// e agrees with a at L1 only. With min_compared 2, d pairs with a and c; with 3, nothing
    /// involving d qualifies, while a–c (complete, 3 loci) still does.
    #[test]
    fn incomplete_profiles_compare_where_both_are_typed() {
        let builder = || {
            MatrixBuilder::new(&["L1", "L2", "L3"])
                .sample("a", "P", 1, &["1/2", "3/3", "1/1"])
                .sample("d", "P", 1, &["1/2", "3/3", "./."])
                .sample("c", "P", 1, &["1/2", "3/3", "1/1"])
                .sample("e", "P", 1, &["1/2", "./.", "./."])
        };
        assert_eq!(pairs(builder(), 2), vec![(0, 1, 2), (0, 2, 3), (1, 2, 2)]);
        assert_eq!(pairs(builder(), 3), vec![(0, 2, 3)]);
        // With min_compared 1, e (typed at L1 only) matches everyone.
        assert_eq!(pairs(builder(), 1).len(), 6);
    }

    /// Hand-made case: x and y agree at L1, the only locus typed in both; x and z differ at L3.
    #[test]
    fn two_incomplete_samples_are_compared_once() {
        let builder = MatrixBuilder::new(&["L1", "L2", "L3"])
            .sample("x", "P", 1, &["1/2", "./.", "1/1"])
            .sample("y", "P", 1, &["1/2", "3/3", "./."])
            .sample("z", "P", 1, &["1/2", "3/3", "1/2"]);
        assert_eq!(pairs(builder, 1), vec![(0, 1, 1), (1, 2, 2)]);
    }
}
