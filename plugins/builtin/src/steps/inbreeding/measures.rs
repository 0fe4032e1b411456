//! One pass over the loci: per individual, the sums behind sMLH, IR, HL and the three genomic F
//! of Yang et al. (2011); per group, the heterozygosity bits that g2 needs. The formulas are
//! the small functions at the top, so that the unit tests check them on hand-worked values.

use popgauge_abi::{AlleleCounts, GenotypeView, Group};

use super::disequilibrium::GroupHeterozygosity;

/// sMLH (Coltman et al. 1999): heterozygous loci / Σ of the mean heterozygosity of the loci
/// typed; `None` when that sum is 0.
pub(super) fn standardised_heterozygosity(heterozygous: u32, mean_heterozygosity_sum: f64) -> Option<f64> {
    (mean_heterozygosity_sum > 0.0).then(|| f64::from(heterozygous) / mean_heterozygosity_sum)
}

/// IR (Amos et al. 2001): (2H − Σf)/(2N − Σf); `None` when the denominator is 0.
pub(super) fn internal_relatedness(homozygous: u32, typed: u32, frequency_sum: f64) -> Option<f64> {
    let denominator = 2.0 * f64::from(typed) - frequency_sum;
    (denominator.abs() > 1e-12).then(|| (2.0 * f64::from(homozygous) - frequency_sum) / denominator)
}

/// HL (Aparicio et al. 2006): ΣE_hom/(ΣE_hom + ΣE_het); `None` when both sums are 0.
pub(super) fn homozygosity_by_locus(homozygous_expected: f64, heterozygous_expected: f64) -> Option<f64> {
    let total = homozygous_expected + heterozygous_expected;
    (total > 0.0).then(|| homozygous_expected / total)
}

/// The per-locus terms of Yang et al.'s (2011) F̂_I, F̂_II and F̂_III for x copies (0, 1, 2) of
/// an allele of frequency p (0 < p < 1).
pub(super) fn yang_terms(copies: u8, p: f64) -> [f64; 3] {
    let x = f64::from(copies);
    let variance = 2.0 * p * (1.0 - p);
    [
        (x - 2.0 * p).powi(2) / variance - 1.0,
        1.0 - x * (2.0 - x) / variance,
        (x * x - (1.0 + 2.0 * p) * x + 2.0 * p * p) / variance,
    ]
}

/// Sums for one individual over the loci it is typed at.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(super) struct IndividualTally {
    /// Loci typed at both alleles.
    pub typed: u32,
    /// Of those, heterozygous.
    pub heterozygous: u32,
    /// Σ of the group's observed heterozygosity over the typed loci (sMLH).
    pub mean_heterozygosity_sum: f64,
    /// Σ of the group frequencies of the individual's allele copies (IR).
    pub frequency_sum: f64,
    /// Σ of 1 − Σp² over homozygous loci (HL).
    pub homozygous_expected: f64,
    /// Σ of 1 − Σp² over heterozygous loci (HL).
    pub heterozygous_expected: f64,
    /// Typed loci with exactly two alleles in the group.
    pub biallelic: u32,
    /// Σ of the F̂_I, F̂_II, F̂_III terms over those loci.
    pub yang_sums: [f64; 3],
}

impl IndividualTally {
    pub(super) fn smlh(&self) -> Option<f64> {
        standardised_heterozygosity(self.heterozygous, self.mean_heterozygosity_sum)
    }

    pub(super) fn internal_relatedness(&self) -> Option<f64> {
        (self.typed > 0)
            .then(|| internal_relatedness(self.typed - self.heterozygous, self.typed, self.frequency_sum))
            .flatten()
    }

    pub(super) fn homozygosity_by_locus(&self) -> Option<f64> {
        homozygosity_by_locus(self.homozygous_expected, self.heterozygous_expected)
    }

    /// F̂_I, F̂_II or F̂_III (index 0, 1, 2): the mean term over the biallelic loci.
    pub(super) fn yang(&self, which: usize) -> Option<f64> {
        (self.biallelic > 0).then(|| self.yang_sums[which] / f64::from(self.biallelic))
    }
}

/// What the pass over the loci gives.
pub(super) struct Tallies {
    /// One per view sample.
    pub individuals: Vec<IndividualTally>,
    /// One per group, in the order of `view.groups()`.
    pub group_heterozygosity: Vec<GroupHeterozygosity>,
}

/// The group's allele frequencies and heterozygosity at one locus.
struct LocusInGroup {
    frequencies: Vec<f64>,
    mean_heterozygosity: f64,
    expected: f64,
    /// The higher allele code when exactly two alleles are present, with its frequency.
    biallelic: Option<(u16, f64)>,
    polymorphic: bool,
}

impl LocusInGroup {
    fn of(counts: &AlleleCounts) -> Option<LocusInGroup> {
        if counts.typed == 0 {
            return None;
        }
        let frequencies = counts.frequencies();
        let expected = 1.0 - frequencies.iter().map(|p| p * p).sum::<f64>();
        let present: Vec<usize> = (1..counts.alleles.len()).filter(|&k| counts.alleles[k] > 0).collect();
        let biallelic = match present.as_slice() {
            [_, high] => u16::try_from(*high).ok().map(|code| (code, frequencies[*high])),
            _ => None,
        };
        Some(LocusInGroup {
            mean_heterozygosity: f64::from(counts.heterozygotes) / f64::from(counts.typed),
            expected,
            biallelic,
            polymorphic: present.len() >= 2,
            frequencies,
        })
    }
}

/// Walks every locus once: per group, its frequencies, then each member's contribution.
pub(super) fn tally_view(view: &GenotypeView<'_>, groups: &[Group]) -> Tallies {
    let mut individuals = vec![IndividualTally::default(); view.n_samples()];
    let mut group_heterozygosity: Vec<GroupHeterozygosity> =
        groups.iter().map(|g| GroupHeterozygosity::new(g.samples.len(), view.n_loci())).collect();
    let mut counts = AlleleCounts::default();
    for locus in 0..view.n_loci() {
        for (group, hets) in groups.iter().zip(group_heterozygosity.iter_mut()) {
            view.allele_counts_into(locus, &group.samples, &mut counts);
            let Some(here) = LocusInGroup::of(&counts) else { continue };
            if here.polymorphic {
                hets.add_locus(counts.heterozygotes, counts.typed);
            }
            for (member, &sample) in group.samples.iter().enumerate() {
                let Some((a, b)) = view.genotype(sample, locus) else { continue };
                let heterozygous = a != b;
                if here.polymorphic {
                    hets.mark(member, locus, heterozygous);
                }
                add_call(&mut individuals[sample], &here, a.0, b.0);
            }
        }
    }
    Tallies { individuals, group_heterozygosity }
}

fn add_call(tally: &mut IndividualTally, here: &LocusInGroup, a: u16, b: u16) {
    let heterozygous = a != b;
    tally.typed += 1;
    tally.mean_heterozygosity_sum += here.mean_heterozygosity;
    tally.frequency_sum += here.frequencies[a as usize] + here.frequencies[b as usize];
    if heterozygous {
        tally.heterozygous += 1;
        tally.heterozygous_expected += here.expected;
    } else {
        tally.homozygous_expected += here.expected;
    }
    if let Some((high, p)) = here.biallelic {
        let copies = u8::from(a == high) + u8::from(b == high);
        for (sum, term) in tally.yang_sums.iter_mut().zip(yang_terms(copies, p)) {
            *sum += term;
        }
        tally.biallelic += 1;
    }
}
