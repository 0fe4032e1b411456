//! Weir & Cockerham (1984) variance components *a*, *b*, *c* at one locus, for any number of
//! samples *r* ≥ 1 (METHODS §2.1).
//!
//! # Interface (stable; used by `diversity` with r = 1 and by `differentiation` with r ≥ 2)
//!
//! ```text
//! pub fn locus_components(samples: &[&AlleleCounts]) -> Option<VarianceComponents>
//! pub fn allele_components(samples: &[&AlleleCounts], allele: usize) -> Option<VarianceComponents>
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
//! f̂ = 1 − ΣĤo/ΣĤe* (METHODS §2.1, §1).
//!
//! # Undefined cases
//! Both functions return `None` when no sample is given, when a sample has no typed individual
//! (nᵢ = 0: the caller decides whether to drop the locus for that comparison, METHODS §2.1,
//! or to leave the sample out), or when n̄ ≤ 1. An allele absent from every sample contributes
//! a = b = c = 0. A locus monomorphic across the samples gives a = b = c = 0 and drops out of
//! the ratios by itself. Negative components and negative θ̂ are sampling noise and are kept.
//!
//! # Citation
//! Weir BS, Cockerham CC (1984) Estimating F-statistics for the analysis of population
//! structure. *Evolution* 38:1358–1370.

use std::iter::Sum;
use std::ops::{Add, AddAssign};

use popgauge_abi::AlleleCounts;

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

/// Sample sizes shared by every allele of the locus.
#[derive(Debug, Clone, Copy)]
struct SampleSizes {
    /// r, the number of samples.
    samples: f64,
    /// n̄, the mean number of typed individuals per sample.
    mean: f64,
    /// n_c (unused when r = 1).
    corrected: f64,
}

fn sample_sizes(samples: &[&AlleleCounts]) -> Option<SampleSizes> {
    if samples.is_empty() || samples.iter().any(|s| s.typed == 0) {
        return None;
    }
    let r = samples.len() as f64;
    let total: f64 = samples.iter().map(|s| f64::from(s.typed)).sum();
    let mean = total / r;
    if mean <= 1.0 {
        return None;
    }
    let corrected = if samples.len() > 1 {
        let squares: f64 = samples.iter().map(|s| f64::from(s.typed).powi(2)).sum();
        (r * mean - squares / (r * mean)) / (r - 1.0)
    } else {
        mean
    };
    Some(SampleSizes { samples: r, mean, corrected })
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

fn components_for(samples: &[&AlleleCounts], allele: usize, sizes: SampleSizes) -> VarianceComponents {
    let SampleSizes { samples: r, mean: n_bar, corrected: n_c } = sizes;
    let copies_of = |s: &AlleleCounts| f64::from(s.alleles.get(allele).copied().unwrap_or(0));
    let carriers_of = |s: &AlleleCounts| f64::from(s.heterozygous_carriers.get(allele).copied().unwrap_or(0));
    // Σnᵢp̃ᵢ = Σ copies/2 and Σnᵢh̃ᵢ = Σ carriers.
    let p_bar = samples.iter().map(|s| copies_of(s) / 2.0).sum::<f64>() / (r * n_bar);
    let h_bar = samples.iter().map(|s| carriers_of(s)).sum::<f64>() / (r * n_bar);
    if p_bar == 0.0 && h_bar == 0.0 {
        return VarianceComponents::default();
    }
    let s2 = if samples.len() > 1 {
        samples
            .iter()
            .map(|s| {
                let n = f64::from(s.typed);
                n * (copies_of(s) / (2.0 * n) - p_bar).powi(2)
            })
            .sum::<f64>()
            / ((r - 1.0) * n_bar)
    } else {
        0.0
    };
    let pq = p_bar * (1.0 - p_bar);
    let between_samples = if samples.len() > 1 {
        n_bar / n_c * (s2 - (pq - (r - 1.0) / r * s2 - h_bar / 4.0) / (n_bar - 1.0))
    } else {
        0.0
    };
    let between_individuals =
        n_bar / (n_bar - 1.0) * (pq - (r - 1.0) / r * s2 - (2.0 * n_bar - 1.0) / (4.0 * n_bar) * h_bar);
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
    /// (published per-allele a, b, c; METHODS §10 item 2), reproduced by running scikit-allel
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
    /// −1.8 and overall θ ≈ 0); overall F = f = 0.278689 is computed (METHODS §10 item 2) and
    /// confirmed from scikit-allel 1.3.13's a, b, c (0.27868852) by
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

    /// METHODS §2.1 identity [D]: with r = 1, Σc = Ho and Σ(b + c) = Nei–Chesser He*
    /// = n/(n−1)·(1 − Σp² − Ho/(2n)). METHODS §10 item 1 (computed): variant 2 of the
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
}
