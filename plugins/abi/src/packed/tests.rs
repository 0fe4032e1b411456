//! The packed path against the general path of [`GenotypeView`]: counts are integers, so they
//! must agree exactly (the reference is the view's own per-sample count; common practice).

use proptest::prelude::*;

use super::*;
use crate::matrix::{GenotypeMatrix, LocusMeta, SampleMeta};

/// A matrix of `samples` samples from per-locus code lists (`cells[locus][sample]`, each cell
/// two codes), every locus with `labels` labels.
fn matrix(labels: usize, cells: &[Vec<(u16, u16)>]) -> GenotypeMatrix {
    let samples = cells.first().map_or(0, Vec::len);
    let sample_meta = (0..samples)
        .map(|i| SampleMeta { id: format!("s{i}"), population: format!("P{}", i % 3), year: 2024 })
        .collect();
    let loci = (0..cells.len())
        .map(|l| LocusMeta {
            name: format!("L{l}"),
            alleles: (1..=labels).map(|a| a.to_string()).collect(),
            chromosome: None,
            position: None,
        })
        .collect();
    let codes = cells.iter().flatten().flat_map(|&(a, b)| [AlleleCode(a), AlleleCode(b)]).collect();
    GenotypeMatrix::new(sample_meta, loci, codes).unwrap()
}

/// Hand-counted: samples AA, AG, GG, untyped, half-typed, GA at a locus coded 1 = A, 2 = G.
#[test]
fn counts_a_biallelic_locus_by_hand() {
    let m = matrix(2, &[vec![(1, 1), (1, 2), (2, 2), (0, 0), (2, 0), (2, 1)]]);
    let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
    let packed = PackedGenotypes::new(m.full_view(&s, &l));
    let locus = packed.locus(0).unwrap();
    assert_eq!((locus.low, locus.high), (AlleleCode(1), AlleleCode(2)));
    let all = SampleBits::from_columns(6, 0..6);
    let expected = GenotypeCounts { low_homozygotes: 1, heterozygotes: 2, high_homozygotes: 1, untyped: 2 };
    assert_eq!(locus.genotype_counts(&all), expected);
    let counts = packed.allele_counts(0, &packed.sample_set(&[0, 1, 2, 3, 4, 5]));
    assert_eq!(counts.alleles, vec![0, 4, 4]);
    assert_eq!(counts.heterozygous_carriers, vec![0, 2, 2]);
    assert_eq!((counts.typed, counts.heterozygotes), (4, 2));
    assert_eq!(packed.untyped_count(0, &packed.sample_set(&[2, 3, 4])), 2);
}

/// A locus with three codes takes the general path; one with a single code (or none typed) is
/// packed with `high` untyped.
#[test]
fn three_codes_are_not_packed() {
    let m = matrix(3, &[vec![(1, 2), (3, 3), (1, 1)], vec![(3, 3), (3, 3), (0, 0)], vec![(0, 0), (0, 3), (0, 0)]]);
    let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
    let packed = PackedGenotypes::new(m.full_view(&s, &l));
    assert!(packed.locus(0).is_none());
    let single = packed.locus(1).unwrap();
    assert_eq!((single.low, single.high), (AlleleCode(3), AlleleCode::UNTYPED));
    let none = packed.locus(2).unwrap();
    assert_eq!((none.low, none.high), (AlleleCode::UNTYPED, AlleleCode::UNTYPED));
    assert_eq!(packed.packed_loci(), 2);
    let all = packed.sample_set(&[0, 1, 2]);
    assert_eq!(packed.allele_counts(0, &all).alleles, vec![0, 3, 1, 2]);
    assert_eq!(packed.allele_counts(1, &all).alleles, vec![0, 0, 0, 4]);
    assert_eq!(packed.allele_counts(2, &all).typed, 0);
}

/// Only the packed samples decide: a third code outside them leaves the locus packed, and a
/// set naming a sample that is not a column (or naming one twice) takes the general path.
#[test]
fn packing_a_subset_of_samples() {
    let m = matrix(3, &[vec![(1, 2), (3, 3), (2, 2), (1, 1)]]);
    let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
    let view = m.full_view(&s, &l);
    let packed = PackedGenotypes::for_samples(view, &[3, 0, 2]);
    assert_eq!(packed.columns(), &[3, 0, 2]);
    let locus = packed.locus(0).unwrap();
    assert_eq!((locus.low, locus.high), (AlleleCode(1), AlleleCode(2)));
    assert_eq!(locus.genotype_counts(&SampleBits::from_columns(3, [0])).low_homozygotes, 1);
    for samples in [vec![0, 1], vec![2, 2], vec![3, 0, 2]] {
        let set = packed.sample_set(&samples);
        assert_eq!(set.bits().is_some(), samples == [3, 0, 2]);
        assert_eq!(packed.allele_counts(0, &set), view.allele_counts(0, &samples));
    }
}

#[test]
fn sample_bits_track_members_and_clear() {
    let mut bits = SampleBits::new(200);
    assert!(bits.is_empty());
    for c in [130, 5, 130, 199] {
        bits.insert(c);
    }
    assert_eq!(bits.len(), 3);
    assert!(bits.contains(130) && bits.contains(5) && !bits.contains(6) && !bits.contains(500));
    assert_eq!(bits.span().0, 0);
    assert_eq!(bits.span().1.len(), 4);
    bits.clear();
    assert!(bits.is_empty() && !bits.contains(130));
    bits.insert(70);
    assert_eq!((bits.span().0, bits.span().1.len()), (1, 1));
}

/// The portable and the `popcnt` counting loops agree with a bit-by-bit count (common
/// practice).
#[test]
fn counting_loops_agree() {
    let planes: Vec<u64> = (0..12u64).map(|i| i.wrapping_mul(0x9E37_79B9_7F4A_7C15) ^ (i << 17)).collect();
    let (typed, heterozygous, high) = (&planes[0..4], &planes[4..8], &planes[8..12]);
    // Keep the planes consistent: heterozygous and high-homozygous samples are typed and distinct.
    let heterozygous: Vec<u64> = heterozygous.iter().zip(typed).map(|(h, t)| h & t).collect();
    let high: Vec<u64> = high.iter().zip(typed).zip(&heterozygous).map(|((x, t), h)| x & t & !h).collect();
    let planes: Vec<u64> = typed.iter().chain(&heterozygous).chain(&high).copied().collect();
    let set = SampleBits::from_columns(256, (0..256).filter(|c| c % 3 != 1 && *c > 40));
    let bit = |words: &[u64], c: usize| words[c / 64] >> (c % 64) & 1 == 1;
    let members: Vec<usize> = (0..256).filter(|&c| set.contains(c)).collect();
    let count = |words: &[u64]| members.iter().filter(|&&c| bit(words, c)).count() as u32;
    let expected = GenotypeCounts {
        low_homozygotes: count(typed) - count(&heterozygous) - count(&high),
        heterozygotes: count(&heterozygous),
        high_homozygotes: count(&high),
        untyped: members.len() as u32 - count(typed),
    };
    assert_eq!(counts_in(&planes, &set), expected);
    if popcnt_available() {
        // SAFETY: the instruction was detected on this processor.
        assert_eq!(unsafe { counts_in_popcnt(&planes, &set) }, expected);
    }
}

/// One cell: untyped, half-typed, or two codes from `1..=codes`.
fn cell(codes: u16) -> impl Strategy<Value = (u16, u16)> {
    prop_oneof![
        1 => Just((0, 0)),
        1 => (1..=codes).prop_map(|a| (a, 0)),
        8 => (1..=codes, 1..=codes),
    ]
}

/// A locus of `samples` cells using 1 to 3 codes out of 3 labels.
fn locus(samples: usize) -> impl Strategy<Value = Vec<(u16, u16)>> {
    (1u16..=3).prop_flat_map(move |codes| proptest::collection::vec(cell(codes), samples))
}

/// Cells per locus, then which samples form the counted set, which samples and which loci are
/// in the view.
type Case = (Vec<Vec<(u16, u16)>>, Vec<bool>, Vec<bool>, Vec<bool>);

fn case() -> impl Strategy<Value = Case> {
    (0usize..150, 1usize..6).prop_flat_map(|(samples, loci)| {
        (
            proptest::collection::vec(locus(samples), loci),
            proptest::collection::vec(any::<bool>(), samples),
            proptest::collection::vec(prop::bool::weighted(0.8), samples),
            proptest::collection::vec(prop::bool::weighted(0.8), loci),
        )
    })
}

proptest! {
    /// On random data with untyped and half-typed cells, over a random subset of the matrix
    /// (the view) and a random set of its samples: packed counts equal the view's, and a locus
    /// is packed exactly when its typed genotypes in the view show at most two codes.
    #[test]
    fn packed_counts_equal_general_counts((cells, chosen, in_view, loci_in_view) in case()) {
        let m = matrix(3, &cells);
        let view_samples: Vec<usize> = (0..in_view.len()).filter(|&s| in_view[s]).collect();
        let view_loci: Vec<usize> = (0..loci_in_view.len()).filter(|&l| loci_in_view[l]).collect();
        let view = GenotypeView::new(&m, &view_samples, &view_loci);
        let packed = PackedGenotypes::new(view);
        let members: Vec<usize> = (0..view.n_samples()).filter(|&s| chosen[view_samples[s]]).collect();
        let set = packed.sample_set(&members);
        prop_assert!(set.bits().is_some());
        let sets = [set.bits().unwrap().clone(), packed.sample_set(&[]).bits().unwrap().clone()];
        let mut batch = Vec::new();
        for packed_locus in (0..view.n_loci()).filter_map(|l| packed.locus(l)) {
            packed_locus.genotype_counts_many(&sets, &mut batch);
            let single: Vec<GenotypeCounts> = sets.iter().map(|s| packed_locus.genotype_counts(s)).collect();
            prop_assert_eq!(&batch, &single);
        }
        for locus in 0..view.n_loci() {
            let everyone: Vec<usize> = (0..view.n_samples()).collect();
            let distinct = view.allele_counts(locus, &everyone).distinct();
            prop_assert_eq!(packed.locus(locus).is_some(), distinct <= 2);
            prop_assert_eq!(packed.allele_counts(locus, &set), view.allele_counts(locus, &members));
            prop_assert_eq!(packed.untyped_count(locus, &set), view.untyped_count(locus, &members));
        }
        let all_loci: Vec<usize> = (0..view.n_loci()).collect();
        let per_sample: Vec<usize> = (0..view.n_samples())
            .map(|s| all_loci.iter().filter(|&&l| view.genotype(s, l).is_none()).count())
            .collect();
        prop_assert_eq!(packed.untyped_per_column(&all_loci), per_sample);
    }
}
