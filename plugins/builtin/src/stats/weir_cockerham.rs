//! Weir & Cockerham (1984) variance components *a*, *b*, *c* at one locus, for any number of
//! samples *r* ≥ 1 (docs/methods.md, "Weir and Cockerham F-statistics").
//!
//! # Interface (stable; used by `diversity` with r = 1 and by `differentiation` with r ≥ 2)
//!
//! ```text
//! pub fn locus_components(samples: &[&AlleleCounts]) -> Option<VarianceComponents>
//! pub fn allele_components(samples: &[&AlleleCounts], allele: usize) -> Option<VarianceComponents>
//! pub fn biallelic_components(samples: &[BiallelicSample]) -> Option<VarianceComponents>
//! pub struct VarianceComponents { between_samples: f64 /* a */, between_individuals: f64 /* b */,
//!                                 within_individuals: f64 /* c */ }
//! impl VarianceComponents { fn theta(&self) / fn f_it(&self) / fn f_is(&self) -> Option<f64> }
//! impl Add, AddAssign, Sum for VarianceComponents
//! ```
//!
//! Each sample *i* is the [`AlleleCounts`] of one group at the locus (from
//! `GenotypeView::allele_counts_into`): nᵢ = `typed`, allele copies `alleles[u]` and
//! heterozygous carriers `heterozygous_carriers[u]` (index 0 = untyped, unused). All samples
//! must come from the same locus (same allele coding). [`locus_components`] sums the
//! components over alleles; callers sum [`VarianceComponents`] over loci and take the ratio of
//! sums:
//!
//! - θ̂ (FST) = Σa / Σ(a + b + c) — [`VarianceComponents::theta`];
//! - F̂ (FIT) = 1 − Σc / Σ(a + b + c) — [`VarianceComponents::f_it`];
//! - f̂ (FIS) = 1 − Σc / Σ(b + c) — [`VarianceComponents::f_is`].
//!
//! # Formulas
//! With nᵢ, n̄ = Σnᵢ/r, n_c = [r·n̄ − Σnᵢ²/(r·n̄)]/(r − 1), sample frequency p̃ᵢᵤ, p̄ᵤ =
//! Σnᵢp̃ᵢᵤ/(r·n̄), s²ᵤ = Σnᵢ(p̃ᵢᵤ − p̄ᵤ)²/[(r − 1)·n̄], h̃ᵢᵤ the share of individuals of sample
//! *i* heterozygous and carrying *u*, h̄ᵤ = Σnᵢh̃ᵢᵤ/(r·n̄):
//!
//! ```text
//! a = (n̄/n_c) · { s² − [1/(n̄−1)] · [ p̄(1−p̄) − ((r−1)/r)·s² − h̄/4 ] }
//! b = [n̄/(n̄−1)] · [ p̄(1−p̄) − ((r−1)/r)·s² − ((2n̄−1)/(4n̄))·h̄ ]
//! c = h̄/2
//! ```
//!
//! With one sample (r = 1) there is no between-sample component: s² = 0 and a = 0 by
//! definition, and summed over alleles Σ(b + c) is the Nei–Chesser Ĥe* and Σc is Ĥo, so
//! f̂ = 1 − ΣĤo/ΣĤe* (docs/methods.md, "Weir and Cockerham F-statistics").
//!
//! # Undefined cases
//! Both functions return `None` when no sample is given, when a sample has no typed individual
//! (nᵢ = 0: the caller decides whether to drop the locus for that comparison,
//! as `differentiation` does, or to leave the sample out), or when n̄ ≤ 1. An allele absent from
//! every sample contributes a = b = c = 0. A locus monomorphic across the samples gives a = b = c =
//! 0 and drops out of the ratios by itself. Negative components and negative θ̂ are sampling noise
//! and are kept.
//!
//! # Citation
//! Weir BS, Cockerham CC (1984) Estimating F-statistics for the analysis of population
//! structure. *Evolution* 38:1358–1370.

use std::iter::Sum;
use std::ops::{Add, AddAssign};

use popgauge_abi::{AlleleCounts, GenotypeCounts};

/// The full reference of the estimator, for a step's citations.
pub const WEIR_COCKERHAM_1984: &str = "Weir BS, Cockerham CC (1984) Estimating F-statistics for the analysis of \
population structure. Evolution 38:1358–1370.";

/// The variance components of Weir & Cockerham (1984) at one locus (one allele, or summed over
/// alleles, or summed over loci).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct VarianceComponents {
    /// *a*: between samples (0 when there is one sample).
    pub between_samples: f64,
    /// *b*: between individuals within samples.
    pub between_individuals: f64,
    /// *c*: within individuals (half the heterozygous-carrier share).
    pub within_individuals: f64,
}

impl VarianceComponents {
    /// a + b + c.
    pub fn total(&self) -> f64 {
        self.between_samples + self.between_individuals + self.within_individuals
    }

    /// θ̂ = a/(a + b + c) (FST); `None` when the total is 0.
    pub fn theta(&self) -> Option<f64> {
        let total = self.total();
        (total != 0.0).then(|| self.between_samples / total)
    }

    /// F̂ = 1 − c/(a + b + c) (FIT); `None` when the total is 0.
    pub fn f_it(&self) -> Option<f64> {
        let total = self.total();
        (total != 0.0).then(|| 1.0 - self.within_individuals / total)
    }

    /// f̂ = 1 − c/(b + c) (FIS); `None` when b + c is 0.
    pub fn f_is(&self) -> Option<f64> {
        let within_samples = self.between_individuals + self.within_individuals;
        (within_samples != 0.0).then(|| 1.0 - self.within_individuals / within_samples)
    }
}

impl Add for VarianceComponents {
    type Output = VarianceComponents;
    fn add(self, other: VarianceComponents) -> VarianceComponents {
        VarianceComponents {
            between_samples: self.between_samples + other.between_samples,
            between_individuals: self.between_individuals + other.between_individuals,
            within_individuals: self.within_individuals + other.within_individuals,
        }
    }
}

impl AddAssign for VarianceComponents {
    fn add_assign(&mut self, other: VarianceComponents) {
        *self = *self + other;
    }
}

impl Sum for VarianceComponents {
    fn sum<I: Iterator<Item = VarianceComponents>>(iter: I) -> VarianceComponents {
        iter.fold(VarianceComponents::default(), Add::add)
    }
}

/// Sample sizes shared by every allele of the locus, with the factors built from them alone
/// (computed once per locus; each is the same expression, so the same value, as when it was
/// written out inside the per-allele formulas).
#[derive(Debug, Clone, Copy)]
struct SampleSizes {
    /// n̄, the mean number of typed individuals per sample.
    mean: f64,
    /// r·n̄, the typed individuals of all samples.
    pooled: f64,
    /// (r − 1)·n̄, the divisor of s².
    spread_divisor: f64,
    /// n̄/n_c (unused when r = 1).
    mean_over_corrected: f64,
    /// n̄/(n̄ − 1).
    mean_over_mean_less_one: f64,
    /// (r − 1)/r.
    samples_less_one_over_samples: f64,
    /// (2n̄ − 1)/(4n̄).
    heterozygote_weight: f64,
}

fn sample_sizes(samples: &[&AlleleCounts]) -> Option<SampleSizes> {
    sizes_of(samples.len(), |i| samples[i].typed)
}

/// The sizes of `count` samples, sample i having `typed(i)` typed individuals.
#[inline(always)]
fn sizes_of(count: usize, typed: impl Fn(usize) -> u32) -> Option<SampleSizes> {
    if count == 0 || (0..count).any(|i| typed(i) == 0) {
        return None;
    }
    let r = count as f64;
    let total: f64 = (0..count).map(|i| f64::from(typed(i))).sum();
    let mean = total / r;
    if mean <= 1.0 {
        return None;
    }
    let corrected = if count > 1 {
        let squares: f64 = (0..count).map(|i| f64::from(typed(i)).powi(2)).sum();
        (r * mean - squares / (r * mean)) / (r - 1.0)
    } else {
        mean
    };
    Some(SampleSizes {
        mean,
        pooled: r * mean,
        spread_divisor: (r - 1.0) * mean,
        mean_over_corrected: mean / corrected,
        mean_over_mean_less_one: mean / (mean - 1.0),
        samples_less_one_over_samples: (r - 1.0) / r,
        heterozygote_weight: (2.0 * mean - 1.0) / (4.0 * mean),
    })
}

/// The components a, b, c of allele code `allele` (≥ 1) at one locus over `samples` (one
/// [`AlleleCounts`] per sample, all of the same locus); `None` in the undefined cases of the
/// module doc. A code beyond a sample's counts counts as absent there.
pub fn allele_components(samples: &[&AlleleCounts], allele: usize) -> Option<VarianceComponents> {
    let sizes = sample_sizes(samples)?;
    Some(components_for(samples, allele, sizes))
}

/// The components summed over all alleles of one locus over `samples` (one [`AlleleCounts`] per
/// sample, all of the same locus); `None` in the undefined cases of the module doc. Allocates
/// nothing.
pub fn locus_components(samples: &[&AlleleCounts]) -> Option<VarianceComponents> {
    let sizes = sample_sizes(samples)?;
    let codes = samples.iter().map(|s| s.alleles.len()).max().unwrap_or(0);
    Some((1..codes).map(|allele| components_for(samples, allele, sizes)).sum())
}

/// The counts of one sample at a locus with at most two alleles: what [`biallelic_components`]
/// needs, without the count vectors of [`AlleleCounts`].
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct BiallelicSample {
    /// Individuals with both alleles typed (nᵢ).
    pub typed: u32,
    /// Copies of the lower allele code.
    pub low_copies: u32,
    /// Copies of the higher allele code.
    pub high_copies: u32,
    /// Heterozygous individuals (each carries one copy of both alleles).
    pub heterozygotes: u32,
}

impl From<GenotypeCounts> for BiallelicSample {
    fn from(genotypes: GenotypeCounts) -> Self {
        BiallelicSample {
            typed: genotypes.typed(),
            low_copies: genotypes.low_copies(),
            high_copies: genotypes.high_copies(),
            heterozygotes: genotypes.heterozygotes,
        }
    }
}

impl BiallelicSample {
    /// The counts of `self` less those of `part`, a subset of its individuals.
    pub fn without(self, part: BiallelicSample) -> BiallelicSample {
        BiallelicSample {
            typed: self.typed - part.typed,
            low_copies: self.low_copies - part.low_copies,
            high_copies: self.high_copies - part.high_copies,
            heterozygotes: self.heterozygotes - part.heterozygotes,
        }
    }
}

/// [`locus_components`] at a locus with at most two allele codes, from scalar counts: the same
/// formulas in the same order (the lower code first, then the higher; an absent code adds
/// exact zeros), so the result is bit-for-bit that of [`locus_components`] on the equivalent
/// [`AlleleCounts`]. The permutation test of `differentiation` calls it once per locus and
/// replicate; inlined there, the sample count is a constant and the formulas fold around it.
#[inline(always)]
pub fn biallelic_components(samples: &[BiallelicSample]) -> Option<VarianceComponents> {
    let sizes = sizes_of(samples.len(), |i| samples[i].typed)?;
    let low =
        components_with(samples.len(), |i| (samples[i].typed, samples[i].low_copies, samples[i].heterozygotes), sizes);
    let high =
        components_with(samples.len(), |i| (samples[i].typed, samples[i].high_copies, samples[i].heterozygotes), sizes);
    Some([low, high].into_iter().sum())
}

fn components_for(samples: &[&AlleleCounts], allele: usize, sizes: SampleSizes) -> VarianceComponents {
    let of = |i: usize| {
        let s = samples[i];
        let copies = s.alleles.get(allele).copied().unwrap_or(0);
        (s.typed, copies, s.heterozygous_carriers.get(allele).copied().unwrap_or(0))
    };
    components_with(samples.len(), of, sizes)
}

/// The components of one allele over `count` samples, sample i giving `sample(i)` = (typed
/// individuals, copies of the allele, heterozygous carriers of the allele).
#[inline(always)]
fn components_with(count: usize, sample: impl Fn(usize) -> (u32, u32, u32), sizes: SampleSizes) -> VarianceComponents {
    let copies_of = |i: usize| f64::from(sample(i).1);
    // Σnᵢp̃ᵢ = Σ copies/2 and Σnᵢh̃ᵢ = Σ carriers.
    let p_bar = (0..count).map(|i| copies_of(i) / 2.0).sum::<f64>() / sizes.pooled;
    let h_bar = (0..count).map(|i| f64::from(sample(i).2)).sum::<f64>() / sizes.pooled;
    if p_bar == 0.0 && h_bar == 0.0 {
        return VarianceComponents::default();
    }
    let s2 = if count > 1 {
        (0..count)
            .map(|i| {
                let n = f64::from(sample(i).0);
                n * (copies_of(i) / (2.0 * n) - p_bar).powi(2)
            })
            .sum::<f64>()
            / sizes.spread_divisor
    } else {
        0.0
    };
    let pq = p_bar * (1.0 - p_bar);
    let between_samples = if count > 1 {
        sizes.mean_over_corrected
            * (s2 - (pq - sizes.samples_less_one_over_samples * s2 - h_bar / 4.0) / (sizes.mean - 1.0))
    } else {
        0.0
    };
    let between_individuals = sizes.mean_over_mean_less_one
        * (pq - sizes.samples_less_one_over_samples * s2 - sizes.heterozygote_weight * h_bar);
    VarianceComponents { between_samples, between_individuals, within_individuals: h_bar / 2.0 }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Counts of one sample from its genotypes as code pairs (codes 1..=3, 0 = untyped).
    fn counts(genotypes: &[(u16, u16)]) -> AlleleCounts {
        let mut c = AlleleCounts { alleles: vec![0; 4], heterozygous_carriers: vec![0; 4], typed: 0, heterozygotes: 0 };
        for &(x, y) in genotypes {
            if x == 0 || y == 0 {
                continue;
            }
            c.typed += 1;
            c.alleles[x as usize] += 1;
            c.alleles[y as usize] += 1;
            if x != y {
                c.heterozygotes += 1;
                c.heterozygous_carriers[x as usize] += 1;
                c.heterozygous_carriers[y as usize] += 1;
            }
        }
        c
    }

    /// The five variants of the scikit-allel documentation example of `weir_cockerham_fst`
    /// (scikit-allel 1.3, `allel.stats.fst`): four samples in subpopulations [[0,1],[2,3]],
    /// alleles 0–2 (codes 1–3 here), one missing genotype in variant 5. Returns (group 1,
    /// group 2) per variant.
    fn scikit_allel_wc_example() -> Vec<(AlleleCounts, AlleleCounts)> {
        let variants: [[(u16, u16); 4]; 5] = [
            [(1, 1), (1, 1), (2, 2), (2, 2)],
            [(1, 2), (1, 2), (1, 2), (1, 2)],
            [(1, 1), (1, 1), (1, 1), (1, 1)],
            [(1, 2), (2, 3), (2, 2), (3, 3)],
            [(1, 1), (2, 2), (1, 2), (0, 0)],
        ];
        variants.iter().map(|v| (counts(&v[..2]), counts(&v[2..]))).collect()
    }

    /// Source: scikit-allel 1.3 documentation, docstring example of `weir_cockerham_fst`
    /// (published per-allele a, b, c), reproduced by running scikit-allel
    /// 1.3.13 in tests/reference/wc84_scikit_allel_example.py; tolerance 1e-6 (the docstring
    /// prints 8 significant digits). Variant 3 is monomorphic: a = b = c = 0 at allele 0
    /// and θ undefined.
    #[test]
    fn reproduces_scikit_allel_documented_components() {
        let a = [[0.5, 0.5, 0.0], [0.0, 0.0, 0.0], [0.0, 0.0, 0.0], [0.0, -0.125, -0.125], [-0.375, -0.375, 0.0]];
        let b = [[0.0, 0.0, 0.0], [-0.25, -0.25, 0.0], [0.0, 0.0, 0.0], [0.0, 0.125, 0.25], [0.416667, 0.416667, 0.0]];
        let c = [[0.0, 0.0, 0.0], [0.5, 0.5, 0.0], [0.0, 0.0, 0.0], [0.125, 0.25, 0.125], [0.166667, 0.166667, 0.0]];
        for (v, (g1, g2)) in scikit_allel_wc_example().iter().enumerate() {
            for allele in 0..3 {
                let k = allele_components(&[g1, g2], allele + 1).unwrap();
                assert_close(k.between_samples, a[v][allele], 1e-6);
                assert_close(k.between_individuals, b[v][allele], 1e-6);
                assert_close(k.within_individuals, c[v][allele], 1e-6);
            }
        }
    }

    /// Source: scikit-allel 1.3 documentation (published per-variant θ = 1, 0, nan, −0.4,
    /// −1.8 and overall θ ≈ 0); overall F = f = 0.278689 is computed from those a, b, c (ratio of
    /// sums) and confirmed from scikit-allel 1.3.13's a, b, c (0.27868852) by
    /// tests/reference/wc84_scikit_allel_example.py.
    #[test]
    fn reproduces_scikit_allel_documented_theta() {
        let example = scikit_allel_wc_example();
        let per_locus: Vec<VarianceComponents> =
            example.iter().map(|(g1, g2)| locus_components(&[g1, g2]).unwrap()).collect();
        let theta: Vec<Option<f64>> = per_locus.iter().map(VarianceComponents::theta).collect();
        for (got, want) in theta.iter().zip([Some(1.0), Some(0.0), None, Some(-0.4), Some(-1.8)]) {
            match want {
                Some(w) => assert_close(got.unwrap(), w, 1e-9),
                None => assert_eq!(*got, None),
            }
        }
        let overall: VarianceComponents = per_locus.into_iter().sum();
        assert_close(overall.theta().unwrap(), 0.0, 1e-12);
        assert_close(overall.f_it().unwrap(), 0.278689, 1e-6);
        assert_close(overall.f_is().unwrap(), 0.278689, 1e-6);
    }

    /// Identity derived from the formulas (module documentation): with r = 1, Σc = Ho and Σ(b + c)
    /// = Nei–Chesser He* = n/(n−1)·(1 − Σp² − Ho/(2n)). Hand calculation: variant 2 of the
    /// scikit-allel heterozygosity example (0/0, 0/1, 1/1) has He* = 0.666667 and f = 0.5.
    #[test]
    fn one_sample_gives_nei_chesser_fis() {
        let variant2 = counts(&[(1, 1), (1, 2), (2, 2)]);
        let k = locus_components(&[&variant2]).unwrap();
        assert_eq!(k.between_samples, 0.0);
        assert_close(k.within_individuals, 1.0 / 3.0, 1e-12);
        assert_close(k.between_individuals + k.within_individuals, 2.0 / 3.0, 1e-12);
        assert_close(k.f_is().unwrap(), 0.5, 1e-12);
        // A 3-allele locus: AA×3, AB×4, BB×2, BC×1, n = 10, Σp² = 0.455, Ho = 0.5:
        // He* = 10/9·(0.545 − 0.025) = 0.577778 (hand calculation).
        let mut genotypes = vec![(1, 1); 3];
        genotypes.extend([(1, 2); 4]);
        genotypes.extend([(2, 2), (2, 2), (2, 3)]);
        let k = locus_components(&[&counts(&genotypes)]).unwrap();
        assert_close(k.within_individuals, 0.5, 1e-12);
        assert_close(k.between_individuals + k.within_individuals, 10.0 / 9.0 * 0.52, 1e-12);
    }

    /// Module doc: no sample, an untyped sample or n̄ ≤ 1 is undefined; a monomorphic locus
    /// gives zero components and undefined ratios.
    #[test]
    fn undefined_cases() {
        assert_eq!(locus_components(&[]), None);
        let typed = counts(&[(1, 2), (1, 1)]);
        let untyped = counts(&[(0, 0)]);
        assert_eq!(locus_components(&[&typed, &untyped]), None);
        assert_eq!(locus_components(&[&counts(&[(1, 2)])]), None);
        let monomorphic = counts(&[(1, 1), (1, 1)]);
        let k = locus_components(&[&monomorphic, &monomorphic]).unwrap();
        assert_eq!(k, VarianceComponents::default());
        assert_eq!((k.theta(), k.f_it(), k.f_is()), (None, None, None));
        assert_eq!(allele_components(&[&monomorphic], 3), Some(VarianceComponents::default()));
    }

    /// Two-allele counts of one sample: (typed, heterozygotes, high homozygotes).
    fn biallelic_sample() -> impl proptest::strategy::Strategy<Value = BiallelicSample> {
        use proptest::prelude::*;
        (0u32..60).prop_flat_map(|typed| (Just(typed), 0..=typed)).prop_flat_map(|(typed, het)| {
            (0..=typed - het).prop_map(move |high_homozygotes| BiallelicSample {
                typed,
                low_copies: 2 * (typed - het - high_homozygotes) + het,
                high_copies: 2 * high_homozygotes + het,
                heterozygotes: het,
            })
        })
    }

    /// The same sample as [`AlleleCounts`] with the two alleles at codes `low` < `high` of a
    /// locus with `labels` labels.
    fn as_allele_counts(sample: &BiallelicSample, labels: usize, low: usize, high: usize) -> AlleleCounts {
        let mut c = AlleleCounts {
            alleles: vec![0; labels + 1],
            heterozygous_carriers: vec![0; labels + 1],
            typed: sample.typed,
            heterozygotes: sample.heterozygotes,
        };
        (c.alleles[low], c.alleles[high]) = (sample.low_copies, sample.high_copies);
        (c.heterozygous_carriers[low], c.heterozygous_carriers[high]) = (sample.heterozygotes, sample.heterozygotes);
        c
    }

    fn bits(k: Option<VarianceComponents>) -> Option<[u64; 3]> {
        k.map(|k| [k.between_samples.to_bits(), k.between_individuals.to_bits(), k.within_individuals.to_bits()])
    }

    proptest::proptest! {
        /// The scalar two-allele path is bit-for-bit the general path (the general path is
        /// the reference; common practice), for 0–4 samples, any two codes of 2–4 labels, and
        /// samples with nothing typed (undefined) included.
        #[test]
        fn biallelic_components_equal_locus_components(
            samples in proptest::collection::vec(biallelic_sample(), 0..5),
            labels in 2usize..=4,
            codes in (1usize..=4, 1usize..=4),
        ) {
            let (low, high) = (codes.0.min(labels), codes.1.min(labels));
            proptest::prop_assume!(low < high);
            let general: Vec<AlleleCounts> = samples.iter().map(|s| as_allele_counts(s, labels, low, high)).collect();
            let general: Vec<&AlleleCounts> = general.iter().collect();
            proptest::prop_assert_eq!(bits(biallelic_components(&samples)), bits(locus_components(&general)));
        }
    }
}
