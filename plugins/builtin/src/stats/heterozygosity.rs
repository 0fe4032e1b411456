//! Observed and expected heterozygosity and the inbreeding coefficient F.
//!
//! At one locus in one set of samples, with *n* individuals typed at both alleles and allele
//! counts *cᵤ* among the *N = 2n* gene copies:
//!
//! - observed heterozygosity Ho = heterozygous individuals / *n*;
//! - gene diversity (plug-in expected heterozygosity) 1 − Σ p̂ᵤ², with p̂ᵤ = cᵤ / N;
//! - unbiased expected heterozygosity (Nei 1978) He = N/(N − 1) · (1 − Σ p̂ᵤ²), computed here as
//!   (N² − Σ cᵤ²) / (N (N − 1)) so that a monomorphic locus gives exactly 0;
//! - F = 1 − Ho/He, undefined (`None`) when He = 0.
//!
//! Fewer than two typed individuals leave He undefined (docs/methods.md, "Expected
//! heterozygosity"), so [`LocusHeterozygosity`] reports neither Ho nor He for such a locus. Over
//! several loci, F is the ratio of sums 1 − ΣHo/ΣHe ([`ratio_of_sums_inbreeding`]), not the mean of
//! per-locus F.
//!
//! Nei M (1978) Estimation of average heterozygosity and genetic distance from a small number
//! of individuals. *Genetics* 89:583–590.

use popgauge_abi::AlleleCounts;

/// The full reference of the unbiased expected heterozygosity, for a step's citations.
pub const NEI_1978: &str = "Nei M (1978) Estimation of average heterozygosity and genetic distance from a small \
number of individuals. Genetics 89:583–590.";

/// Fewest typed individuals at a locus for Ho and He to be reported (docs/methods.md, "Expected
/// heterozygosity").
pub const MIN_TYPED_INDIVIDUALS: u32 = 2;

/// Heterozygosity at one locus in one set of samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocusHeterozygosity {
    /// Individuals typed at both alleles (*n*).
    pub typed: u32,
    /// Distinct alleles seen among the typed individuals.
    pub distinct_alleles: usize,
    /// Observed heterozygosity; `None` when fewer than [`MIN_TYPED_INDIVIDUALS`] are typed.
    pub observed: Option<f64>,
    /// Unbiased expected heterozygosity (Nei 1978); `None` when fewer than
    /// [`MIN_TYPED_INDIVIDUALS`] are typed.
    pub expected: Option<f64>,
}

impl LocusHeterozygosity {
    /// Ho, He, n and the allele count from the counts at one locus.
    pub fn from_counts(counts: &AlleleCounts) -> LocusHeterozygosity {
        let usable = counts.typed >= MIN_TYPED_INDIVIDUALS;
        LocusHeterozygosity {
            typed: counts.typed,
            distinct_alleles: counts.distinct(),
            observed: observed_heterozygosity(counts).filter(|_| usable),
            expected: expected_heterozygosity(counts).filter(|_| usable),
        }
    }

    /// True when both Ho and He are defined.
    pub fn is_usable(&self) -> bool {
        self.observed.is_some() && self.expected.is_some()
    }

    /// F = 1 − Ho/He at this locus; `None` when He is 0 or undefined.
    pub fn inbreeding(&self) -> Option<f64> {
        inbreeding_coefficient(self.observed?, self.expected?)
    }
}

/// Share of typed individuals that are heterozygous; `None` when nobody is typed.
pub fn observed_heterozygosity(counts: &AlleleCounts) -> Option<f64> {
    (counts.typed > 0).then(|| f64::from(counts.heterozygotes) / f64::from(counts.typed))
}

/// Plug-in gene diversity 1 − Σ p̂ᵤ² (biased low in small samples); `None` when nobody is typed.
pub fn gene_diversity(counts: &AlleleCounts) -> Option<f64> {
    let copies = u64::from(counts.gene_copies());
    (copies > 0).then(|| {
        let homozygosity_numerator = sum_of_squared_counts(counts);
        (copies * copies - homozygosity_numerator) as f64 / (copies * copies) as f64
    })
}

/// Unbiased expected heterozygosity of Nei (1978), N/(N − 1) · (1 − Σ p̂ᵤ²) with N = 2n gene
/// copies; `None` when fewer than [`MIN_TYPED_INDIVIDUALS`] individuals are typed.
pub fn expected_heterozygosity(counts: &AlleleCounts) -> Option<f64> {
    if counts.typed < MIN_TYPED_INDIVIDUALS {
        return None;
    }
    let copies = u64::from(counts.gene_copies());
    let numerator = copies * copies - sum_of_squared_counts(counts);
    Some(numerator as f64 / (copies * (copies - 1)) as f64)
}

/// F = 1 − Ho/He; `None` when He is not positive.
pub fn inbreeding_coefficient(observed: f64, expected: f64) -> Option<f64> {
    (expected > 0.0).then(|| 1.0 - observed / expected)
}

/// Multilocus F = 1 − ΣHo/ΣHe over `(Ho, He)` pairs of the loci used; `None` when ΣHe is 0.
pub fn ratio_of_sums_inbreeding(pairs: impl IntoIterator<Item = (f64, f64)>) -> Option<f64> {
    let (observed_sum, expected_sum) =
        pairs.into_iter().fold((0.0, 0.0), |(o, e), (observed, expected)| (o + observed, e + expected));
    inbreeding_coefficient(observed_sum, expected_sum)
}

fn sum_of_squared_counts(counts: &AlleleCounts) -> u64 {
    counts.alleles.iter().map(|&c| u64::from(c) * u64::from(c)).sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Counts from allele copy numbers (index 0 = untyped, unused), typed individuals and
    /// heterozygotes; carriers are not needed here.
    fn counts(alleles: &[u32], typed: u32, heterozygotes: u32) -> AlleleCounts {
        AlleleCounts { alleles: alleles.to_vec(), heterozygous_carriers: Vec::new(), typed, heterozygotes }
    }

    /// Source: scikit-allel 1.x documentation, docstring examples of `heterozygosity_observed`,
    /// `heterozygosity_expected` and `inbreeding_coefficient` (module `allel.stats.hw`), with
    /// genotypes per variant
    /// [0/0,0/0,0/0]; [0/0,0/1,1/1]; [0/0,1/1,2/2]; [1/1,1/2,missing]. Published: Ho = 0,
    /// 0.333333, 0, 0.5; plug-in He = 0, 0.5, 0.666667, 0.375. The unbiased He (Nei 1978)
    /// 0, 0.6, 0.8, 0.5 is computed from the same data with Nei's (1978) formula (hand
    /// calculation).
    #[test]
    fn scikit_allel_documentation_example() {
        let variants =
            [counts(&[6, 0, 0], 3, 0), counts(&[3, 3, 0], 3, 1), counts(&[2, 2, 2], 3, 0), counts(&[0, 3, 1], 2, 1)];
        let observed = [0.0, 1.0 / 3.0, 0.0, 0.5];
        let plug_in = [0.0, 0.5, 2.0 / 3.0, 0.375];
        let unbiased = [0.0, 0.6, 0.8, 0.5];
        for (i, c) in variants.iter().enumerate() {
            assert_close(observed_heterozygosity(c).unwrap(), observed[i], 1e-12);
            assert_close(gene_diversity(c).unwrap(), plug_in[i], 1e-12);
            assert_close(expected_heterozygosity(c).unwrap(), unbiased[i], 1e-12);
        }
        // Published F with the plug-in He: null, 0.333333, 1, −0.333333.
        assert_eq!(inbreeding_coefficient(0.0, 0.0), None);
        assert_close(inbreeding_coefficient(1.0 / 3.0, 0.5).unwrap(), 1.0 / 3.0, 1e-12);
        assert_close(inbreeding_coefficient(0.5, 0.375).unwrap(), -1.0 / 3.0, 1e-12);
        // With Nei-1978 He, variant 2 has F = 1 − (1/3)/0.6 = 0.444444 (hand calculation).
        let variant2 = LocusHeterozygosity::from_counts(&variants[1]);
        assert_close(variant2.inbreeding().unwrap(), 4.0 / 9.0, 1e-12);
        assert_eq!(LocusHeterozygosity::from_counts(&variants[0]).inbreeding(), None);
    }

    /// Hand calculation (common practice, textbook formulas of docs/methods.md, "Expected
    /// heterozygosity"): 10 individuals, AA×3, AB×4, BB×2, BC×1. Copies A 10, B 9, C 1 of N = 20;
    /// Σp² = 0.25 + 0.2025 + 0.0025 = 0.455; plug-in 0.545; He = 20/19 · 0.545 = 0.573684; Ho =
    /// 5/10 = 0.5; F = 1 − 0.5/0.573684 = 0.128440.
    #[test]
    fn hand_calculated_three_allele_locus() {
        let c = counts(&[0, 10, 9, 1], 10, 5);
        let locus = LocusHeterozygosity::from_counts(&c);
        assert_close(gene_diversity(&c).unwrap(), 0.545, 1e-12);
        assert_close(locus.expected.unwrap(), 0.573684, 1e-6);
        assert_close(locus.observed.unwrap(), 0.5, 1e-12);
        assert_close(locus.inbreeding().unwrap(), 0.128440, 1e-6);
        assert_eq!((locus.typed, locus.distinct_alleles), (10, 3));
    }

    /// Edge case (docs/methods.md, "Expected heterozygosity"): n < 2 leaves He undefined, so the
    /// locus is not usable.
    #[test]
    fn fewer_than_two_typed_is_undefined() {
        let one = LocusHeterozygosity::from_counts(&counts(&[0, 1, 1], 1, 1));
        assert_eq!((one.observed, one.expected, one.inbreeding()), (None, None, None));
        assert!(!one.is_usable());
        let none = counts(&[0, 0, 0], 0, 0);
        assert_eq!((observed_heterozygosity(&none), gene_diversity(&none)), (None, None));
        assert_eq!(expected_heterozygosity(&none), None);
    }

    /// Ratio of sums (docs/methods.md, "Inbreeding coefficient F"): for the four scikit-allel
    /// variants with Nei-1978 He, ΣHo = 0 + 1/3 + 0 + 0.5 = 0.833333, ΣHe = 0 + 0.6 + 0.8 + 0.5 =
    /// 1.9, F = 1 − 0.833333/1.9 = 0.561404 (hand calculation), not the mean of per-locus F.
    #[test]
    fn multilocus_f_is_a_ratio_of_sums() {
        let pairs = [(0.0, 0.0), (1.0 / 3.0, 0.6), (0.0, 0.8), (0.5, 0.5)];
        assert_close(ratio_of_sums_inbreeding(pairs).unwrap(), 1.0 - (5.0 / 6.0) / 1.9, 1e-12);
        assert_close(ratio_of_sums_inbreeding(pairs).unwrap(), 0.561404, 1e-6);
        assert_eq!(ratio_of_sums_inbreeding([(0.0, 0.0), (0.0, 0.0)]), None);
        assert_eq!(ratio_of_sums_inbreeding([]), None);
    }
}
