//! Duplicate multilocus genotypes: pairs of samples identical at every locus typed in both, and
//! which sample of each identical set is kept.
//!
//! A genotype is unordered (`1/2` equals `2/1`). A pair counts only when typed together at
//! `min_compared` loci or more, so two sparsely typed samples do not match by default.
//! Samples typed at every locus are bucketed by their whole genotype vector (a sorted map, so
//! the result is deterministic), which finds their pairs in O(n log n · L); only pairs with at
//! least one incompletely typed sample are compared one by one.
//!
//! **Which sample is kept** ([`choose_removals`]). The same animal sampled twice in one group
//! inflates the linkage disequilibrium of that sample and so biases LD-based Ne downward
//! (common practice: one of each identical set is kept). Within each group (population, year)
//! the samples in a pair are visited in order of most loci typed, then input order; a sample
//! identical to one already kept in its group is excluded, naming that one, and any other is
//! kept. For a set identical at every locus this keeps exactly one sample: the one typed at
//! most loci, the earliest in the input on a tie. Identity where both are typed is not
//! transitive (x may match a and c at the loci x has, while a and c differ elsewhere); the
//! visiting order then keeps a and c, which differ, and excludes x. Pairs in different groups
//! are kept: the same animal may rightly appear in the samples of two years or places, and
//! each group's estimate sees it once.

use std::collections::{BTreeMap, BTreeSet};

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

/// A sample excluded as a duplicate of a kept one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct Removal {
    /// The excluded sample.
    pub removed: SampleIdx,
    /// The kept sample it repeats, in the same group.
    pub kept: SampleIdx,
    /// Loci typed in both.
    pub compared: usize,
}

/// Within each group, one sample of each identical set is kept (see the module doc). `group_of`
/// and `typed` (loci typed) are indexed by view sample; the result is in view sample order.
pub(super) fn choose_removals(pairs: &[DuplicatePair], group_of: &[usize], typed: &[usize]) -> Vec<Removal> {
    let mut partners: BTreeMap<SampleIdx, Vec<(SampleIdx, usize)>> = BTreeMap::new();
    for pair in pairs.iter().filter(|p| group_of[p.first] == group_of[p.second]) {
        partners.entry(pair.first).or_default().push((pair.second, pair.compared));
        partners.entry(pair.second).or_default().push((pair.first, pair.compared));
    }
    let mut order: Vec<SampleIdx> = partners.keys().copied().collect();
    order.sort_by_key(|&s| (std::cmp::Reverse(typed[s]), s));
    let rank: BTreeMap<SampleIdx, usize> = order.iter().enumerate().map(|(r, &s)| (s, r)).collect();
    let mut kept: BTreeSet<SampleIdx> = BTreeSet::new();
    let mut removals = Vec::new();
    for sample in order {
        let first_kept = partners[&sample].iter().filter(|(p, _)| kept.contains(p)).min_by_key(|(p, _)| rank[p]);
        match first_kept {
            Some(&(keeper, compared)) => removals.push(Removal { removed: sample, kept: keeper, compared }),
            None => {
                kept.insert(sample);
            }
        }
    }
    removals.sort_by_key(|r| r.removed);
    removals
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

    fn pair(first: usize, second: usize) -> DuplicatePair {
        DuplicatePair { first, second, compared: 6 }
    }

    fn removed_and_kept(pairs: &[DuplicatePair], group_of: &[usize], typed: &[usize]) -> Vec<(usize, usize)> {
        choose_removals(pairs, group_of, typed).into_iter().map(|r| (r.removed, r.kept)).collect()
    }

    /// Common practice, hand-made sets: of 0, 2 and 5 (identical, equally typed) the earliest
    /// is kept; of 1 and 3 the one typed at more loci (3); 4 in another group is kept although
    /// it matches 0.
    #[test]
    fn one_of_each_set_is_kept_within_a_group() {
        let pairs = [pair(0, 2), pair(0, 4), pair(0, 5), pair(1, 3), pair(2, 5)];
        let group_of = [0, 0, 0, 0, 1, 0];
        let typed = [6, 5, 6, 6, 6, 6];
        assert_eq!(removed_and_kept(&pairs, &group_of, &typed), vec![(1, 3), (2, 0), (5, 0)]);
    }

    /// Hand-made case: x (typed at fewer loci) matches a and c, which differ from each other;
    /// a and c are both kept and x is excluded as a duplicate of a, the first kept.
    #[test]
    fn a_sample_matching_two_different_ones_is_the_one_excluded() {
        let (a, x, c) = (0, 1, 2);
        let pairs = [pair(a, x), pair(x, c)];
        assert_eq!(removed_and_kept(&pairs, &[0, 0, 0], &[6, 4, 6]), vec![(x, a)]);
    }
}
