//! Differentiation from gene diversities: Nei's G_ST, Hedrick's G′_ST, Meirmans & Hedrick's
//! G″_ST and Jost's D, with small-sample estimators of the within- and total gene diversity
//! (docs/methods.md, "Gene-diversity differentiation").
//!
//! # Per locus, over k samples (one [`AlleleCounts`] each, all of the same locus)
//! With Jᵢ = Σᵤ p̂ᵢᵤ², p̄ᵤ the unweighted mean of p̂ᵢᵤ over samples, ñ the harmonic mean of the
//! typed individuals nᵢ and H̄o the mean observed heterozygosity:
//!
//! - Nei & Chesser (1983): Ĥ_S = [ñ/(ñ−1)]·[1 − mean(Jᵢ) − H̄o/(2ñ)],
//!   Ĥ_T = 1 − Σp̄ᵤ² + Ĥ_S/(kñ) − H̄o/(2kñ);
//! - Jost (2008), assuming Hardy–Weinberg proportions within samples:
//!   Ĥ_S = [2ñ/(2ñ−1)]·[1 − mean(Jᵢ)], Ĥ_T = 1 − Σp̄ᵤ² + Ĥ_S/(2ñk).
//!
//! # Indices, from Ĥ_S and Ĥ_T
//! - G_ST = (Ĥ_T − Ĥ_S)/Ĥ_T (Nei 1973);
//! - G′_ST = G_ST·(k − 1 + Ĥ_S)/[(k − 1)(1 − Ĥ_S)] (Hedrick 2005);
//! - G″_ST = k(Ĥ_T − Ĥ_S)/[(kĤ_T − Ĥ_S)(1 − Ĥ_S)] (Meirmans & Hedrick 2011);
//! - D = [(Ĥ_T − Ĥ_S)/(1 − Ĥ_S)]·[k/(k − 1)] (Jost 2008).
//!
//! # Multilocus convention
//! **Ratio of averages**: Ĥ_S and Ĥ_T are averaged (unweighted) over the loci used, then the
//! formulas above are applied once ([`DiversityTotals::mean`]). This is not the mean of
//! per-locus indices, nor the harmonic mean of per-locus D that Jost (2008) is often quoted as
//! recommending. A locus monomorphic over the k samples gives 0/0 and is left out
//! ([`locus_diversity`] returns `None`), as is a locus with a sample typed in no individual or
//! with ñ ≤ 1.
//!
//! # Undefined values
//! An index is `None` when its denominator is zero: Ĥ_T = 0 (G_ST), Ĥ_S = 1 (G′_ST, G″_ST, D:
//! every gene copy in every sample distinct, so no differentiation measure bounded by
//! within-sample diversity can be computed) or kĤ_T = Ĥ_S (G″_ST). "Zero" means within
//! [`DEGENERATE_TOLERANCE`], because Ĥ_S = 1 is reached through rounding (for example
//! n/(n − 1)·(n − 1)/n). Estimates may be slightly negative; they are kept.
//!
//! # Citations
//! See [`NEI_1973`], [`NEI_CHESSER_1983`], [`HEDRICK_2005`], [`MEIRMANS_HEDRICK_2011`],
//! [`JOST_2008`].

use popgauge_abi::AlleleCounts;

/// Nei's G_ST.
pub const NEI_1973: &str = "Nei M (1973) Analysis of gene diversity in subdivided populations. PNAS 70:3321–3323.";
/// The Nei–Chesser estimators of H_S and H_T.
pub const NEI_CHESSER_1983: &str =
    "Nei M, Chesser RK (1983) Estimation of fixation indices and gene diversities. Ann Hum Genet 47:253–259.";
/// Hedrick's G′_ST.
pub const HEDRICK_2005: &str =
    "Hedrick PW (2005) A standardized genetic differentiation measure. Evolution 59:1633–1638.";
/// Meirmans & Hedrick's G″_ST.
pub const MEIRMANS_HEDRICK_2011: &str = "Meirmans PG, Hedrick PW (2011) Assessing population structure: FST \
and related measures. Molecular Ecology Resources 11:5–18.";
/// Jost's D and its estimator.
pub const JOST_2008: &str =
    "Jost L (2008) GST and its relatives do not measure differentiation. Molecular Ecology 17:4015–4026.";

/// A denominator within this distance of zero counts as zero (see the module doc).
pub const DEGENERATE_TOLERANCE: f64 = 1e-12;

/// Which small-sample estimators of Ĥ_S and Ĥ_T to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DiversityEstimator {
    /// Nei & Chesser (1983), with the observed-heterozygosity term.
    NeiChesser,
    /// Jost (2008), assuming Hardy–Weinberg proportions within samples.
    Jost,
}

/// Within-sample (Ĥ_S) and total (Ĥ_T) gene diversity at one locus, or averaged over loci.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GeneDiversities {
    /// Ĥ_S.
    pub within: f64,
    /// Ĥ_T.
    pub total: f64,
}

/// The differentiation indices from one pair of Ĥ_S, Ĥ_T over k samples; `None` where undefined.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct DifferentiationIndices {
    /// G_ST (Nei 1973).
    pub gst: Option<f64>,
    /// G′_ST (Hedrick 2005).
    pub gst_prime: Option<f64>,
    /// G″_ST (Meirmans & Hedrick 2011).
    pub gst_double_prime: Option<f64>,
    /// D (Jost 2008).
    pub jost_d: Option<f64>,
}

/// What the estimators need from one locus over k samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocusSummary {
    /// k, the number of samples.
    pub samples: usize,
    /// ñ, the harmonic mean of the typed individuals per sample.
    pub harmonic_n: f64,
    /// mean(Jᵢ), the unweighted mean over samples of Σᵤ p̂ᵢᵤ².
    pub mean_homozygosity: f64,
    /// H̄o, the unweighted mean over samples of the observed heterozygosity.
    pub mean_observed_heterozygosity: f64,
    /// Σᵤ p̄ᵤ², with p̄ᵤ the unweighted mean frequency over samples.
    pub pooled_homozygosity: f64,
}

impl LocusSummary {
    /// The summary of one locus over `samples`; `None` for a locus monomorphic over the
    /// samples, a sample with no typed individual, fewer than two samples or ñ ≤ 1. Allocates
    /// nothing.
    pub fn from_counts(samples: &[&AlleleCounts]) -> Option<LocusSummary> {
        if samples.len() < 2 || samples.iter().any(|s| s.typed == 0) || is_monomorphic(samples) {
            return None;
        }
        let k = samples.len() as f64;
        let harmonic_n = k / samples.iter().map(|s| 1.0 / f64::from(s.typed)).sum::<f64>();
        (harmonic_n > 1.0).then(|| LocusSummary {
            samples: samples.len(),
            harmonic_n,
            mean_homozygosity: samples.iter().map(|s| homozygosity(s)).sum::<f64>() / k,
            mean_observed_heterozygosity: samples
                .iter()
                .map(|s| f64::from(s.heterozygotes) / f64::from(s.typed))
                .sum::<f64>()
                / k,
            pooled_homozygosity: mean_frequency_homozygosity(samples),
        })
    }

    /// Ĥ_S and Ĥ_T with the chosen estimator (formulas in the module doc).
    pub fn diversities(&self, estimator: DiversityEstimator) -> GeneDiversities {
        let (k, n) = (self.samples as f64, self.harmonic_n);
        let total_raw = 1.0 - self.pooled_homozygosity;
        match estimator {
            DiversityEstimator::NeiChesser => {
                let observed = self.mean_observed_heterozygosity;
                let within = n / (n - 1.0) * (1.0 - self.mean_homozygosity - observed / (2.0 * n));
                GeneDiversities { within, total: total_raw + within / (k * n) - observed / (2.0 * k * n) }
            }
            DiversityEstimator::Jost => {
                let within = 2.0 * n / (2.0 * n - 1.0) * (1.0 - self.mean_homozygosity);
                GeneDiversities { within, total: total_raw + within / (2.0 * n * k) }
            }
        }
    }
}

/// Ĥ_S and Ĥ_T at one locus over `samples`; `None` in the cases of [`LocusSummary::from_counts`].
pub fn locus_diversity(samples: &[&AlleleCounts], estimator: DiversityEstimator) -> Option<GeneDiversities> {
    LocusSummary::from_counts(samples).map(|summary| summary.diversities(estimator))
}

/// The indices of the module doc from Ĥ_S, Ĥ_T and the number of samples `k` (≥ 2).
pub fn indices(diversities: GeneDiversities, k: usize) -> DifferentiationIndices {
    if k < 2 {
        return DifferentiationIndices::default();
    }
    let GeneDiversities { within, total } = diversities;
    let k = k as f64;
    let nonzero = |x: f64| x.abs() > DEGENERATE_TOLERANCE;
    let gst = nonzero(total).then(|| (total - within) / total);
    let within_complement = 1.0 - within;
    let bounded = nonzero(within_complement);
    DifferentiationIndices {
        gst,
        gst_prime: gst.filter(|_| bounded).map(|g| g * (k - 1.0 + within) / ((k - 1.0) * within_complement)),
        gst_double_prime: (bounded && nonzero(k * total - within))
            .then(|| k * (total - within) / ((k * total - within) * within_complement)),
        jost_d: bounded.then(|| (total - within) / within_complement * k / (k - 1.0)),
    }
}

/// Running sums of Ĥ_S and Ĥ_T over loci, for the ratio-of-averages convention.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct DiversityTotals {
    within: f64,
    total: f64,
    loci: usize,
}

impl DiversityTotals {
    /// Adds one locus.
    pub fn add(&mut self, locus: GeneDiversities) {
        self.within += locus.within;
        self.total += locus.total;
        self.loci += 1;
    }

    /// Loci added.
    pub fn loci(&self) -> usize {
        self.loci
    }

    /// The average Ĥ_S and Ĥ_T over the loci added; `None` when none was.
    pub fn mean(&self) -> Option<GeneDiversities> {
        (self.loci > 0).then(|| {
            let loci = self.loci as f64;
            GeneDiversities { within: self.within / loci, total: self.total / loci }
        })
    }
}

fn is_monomorphic(samples: &[&AlleleCounts]) -> bool {
    let codes = samples.iter().map(|s| s.alleles.len()).max().unwrap_or(0);
    let present = (1..codes).filter(|&u| samples.iter().any(|s| s.alleles.get(u).copied().unwrap_or(0) > 0)).count();
    present <= 1
}

/// Jᵢ = Σᵤ p̂ᵢᵤ² of one sample with typed individuals.
fn homozygosity(sample: &AlleleCounts) -> f64 {
    let copies = f64::from(sample.gene_copies());
    sample.alleles.iter().skip(1).map(|&c| (f64::from(c) / copies).powi(2)).sum()
}

/// Σᵤ p̄ᵤ² with p̄ᵤ the unweighted mean frequency over samples with typed individuals.
fn mean_frequency_homozygosity(samples: &[&AlleleCounts]) -> f64 {
    let k = samples.len() as f64;
    let codes = samples.iter().map(|s| s.alleles.len()).max().unwrap_or(0);
    (1..codes)
        .map(|u| {
            let mean = samples
                .iter()
                .map(|s| f64::from(s.alleles.get(u).copied().unwrap_or(0)) / f64::from(s.gene_copies()))
                .sum::<f64>()
                / k;
            mean * mean
        })
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Counts with the given allele copies (index 0 unused), typed individuals and heterozygotes
    /// (these estimators do not use heterozygous carriers).
    fn counts(alleles: &[u32], typed: u32, heterozygotes: u32) -> AlleleCounts {
        AlleleCounts { alleles: alleles.to_vec(), heterozygous_carriers: vec![0; alleles.len()], typed, heterozygotes }
    }

    /// One locus in two samples, as a summary (Ho = .55 of n = 30 is not a whole number of
    /// individuals, so the check starts from the summary): p = (.6, .3, .1), n = 30, Ho = .55
    /// and p = (.2, .3, .5), n = 20, Ho = .60, so J = .46 and .38, ñ = 24, H̄o = .575,
    /// p̄ = (.4, .3, .3) and Σp̄² = .34 (hand calculation).
    fn two_sample_locus() -> LocusSummary {
        LocusSummary {
            samples: 2,
            harmonic_n: 24.0,
            mean_homozygosity: 0.42,
            mean_observed_heterozygosity: 0.575,
            pooled_homozygosity: 0.34,
        }
    }

    /// Source: hand calculation from the formulas of the module documentation (Nei & Chesser
    /// 1983; Hedrick 2005; Meirmans & Hedrick 2011; Jost 2008), repeated in Python 3 floats;
    /// tolerance 1e-6 = the printed precision: Ĥ_S = 0.592717, Ĥ_T = 0.666359,
    /// G_ST = 0.110513, G′_ST = 0.432172, G″_ST = 0.488679, D = 0.361623 with the Nei–Chesser
    /// estimators and 0.362213 with Jost's.
    ///
    /// What was checked and what is from memory: the Nei–Chesser Ĥ_S, Ĥ_T are as
    /// usually quoted from Nei & Chesser (1983), from memory.
    /// G′_ST = G_ST(k − 1 + H_S)/[(k − 1)(1 − H_S)] is Hedrick (2005), from memory. G″_ST = k(H_T − H_S)/[(kH_T − H_S)(1 − H_S)]
    /// (Meirmans & Hedrick 2011) and D = [(H_T − H_S)/(1 − H_S)]·[k/(k − 1)] with Jost's estimators
    /// Ĥ_S = 2ñ/(2ñ − 1)·H_S, Ĥ_T = H_T + Ĥ_S/(2ñk) (Jost 2008, eq. 12 and the estimators
    /// beside it) are from memory, not checked against the papers. Their structure is
    /// checked independently by the derivations in `indices_reach_their_bounds`.
    #[test]
    fn gst_measures_of_one_locus_match_hand_values() {
        let nei_chesser = two_sample_locus().diversities(DiversityEstimator::NeiChesser);
        assert_close(nei_chesser.within, 0.592717, 1e-6);
        assert_close(nei_chesser.total, 0.666359, 1e-6);
        let from_nei_chesser = indices(nei_chesser, 2);
        assert_close(from_nei_chesser.gst.unwrap(), 0.110513, 1e-6);
        assert_close(from_nei_chesser.gst_prime.unwrap(), 0.432172, 1e-6);
        assert_close(from_nei_chesser.gst_double_prime.unwrap(), 0.488679, 1e-6);
        assert_close(from_nei_chesser.jost_d.unwrap(), 0.361623, 1e-6);
        let jost = two_sample_locus().diversities(DiversityEstimator::Jost);
        // Hand calculation: Ĥ_S = 48/47 · 0.58 = 0.592340, Ĥ_T = 0.66 + 0.592340/96 = 0.666170.
        assert_close(jost.within, 48.0 / 47.0 * 0.58, 1e-12);
        assert_close(jost.total, 0.66 + 48.0 / 47.0 * 0.58 / 96.0, 1e-12);
        assert_close(indices(jost, 2).jost_d.unwrap(), 0.362213, 1e-6);
    }

    /// Derived checks (no source needed beyond the formulas' definitions): with raw diversities
    /// and k samples sharing no allele, H_T = 1 − (1 − H_S)/k, and G′_ST, G″_ST and D all equal
    /// 1 (the maxima these standardised measures are built to reach; Hedrick 2005, Meirmans &
    /// Hedrick 2011, Jost 2008). G″_ST also equals G_ST with H_T replaced by
    /// H_T′ = H_T + (H_T − H_S)/(k − 1), divided by 1 − H_S (hand derivation). Identical samples
    /// (H_T = H_S) give 0 for every index.
    #[test]
    fn indices_reach_their_bounds() {
        for (k, within) in [(2usize, 0.0), (2, 0.3), (3, 0.6), (5, 0.45)] {
            let total = 1.0 - (1.0 - within) / k as f64;
            let at_max = indices(GeneDiversities { within, total }, k);
            assert_close(at_max.gst_prime.unwrap(), 1.0, 1e-12);
            assert_close(at_max.gst_double_prime.unwrap(), 1.0, 1e-12);
            assert_close(at_max.jost_d.unwrap(), 1.0, 1e-12);
        }
        let (k, within, total) = (3usize, 0.5, 0.62);
        let corrected_total = total + (total - within) / (k as f64 - 1.0);
        let corrected_gst = (corrected_total - within) / corrected_total;
        let got = indices(GeneDiversities { within, total }, k);
        assert_close(got.gst_double_prime.unwrap(), corrected_gst / (1.0 - within), 1e-12);
        let none = indices(GeneDiversities { within: 0.4, total: 0.4 }, 4);
        for value in [none.gst, none.gst_prime, none.gst_double_prime, none.jost_d] {
            assert_close(value.unwrap(), 0.0, 1e-15);
        }
        assert_eq!(indices(GeneDiversities { within: 0.4, total: 0.5 }, 1), DifferentiationIndices::default());
    }

    /// Hand calculation of the summary and the Nei–Chesser diversities from counts:
    /// A: n = 10, copies 12, 8 (p = .6, .4), 4 heterozygotes; B: n = 5, copies 2, 8
    /// (p = .2, .8), 2 heterozygotes. J = .52 and .68 (mean .60), Ho = .4 and .4, ñ = 2/(0.1 +
    /// 0.2) = 6.666667, p̄ = (.4, .6), Σp̄² = .52. Ĥ_S = (20/3)/(17/3)·(0.4 − 0.4/(40/3))
    /// = 20/17 · 0.37 = 0.435294; Ĥ_T = 0.48 + Ĥ_S/(40/3) − 0.4/(80/3) = 0.497647.
    #[test]
    fn summary_from_counts_by_hand() {
        let a = counts(&[0, 12, 8], 10, 4);
        let b = counts(&[0, 2, 8], 5, 2);
        let summary = LocusSummary::from_counts(&[&a, &b]).unwrap();
        assert_eq!(summary.samples, 2);
        assert_close(summary.harmonic_n, 20.0 / 3.0, 1e-12);
        assert_close(summary.mean_homozygosity, 0.60, 1e-12);
        assert_close(summary.mean_observed_heterozygosity, 0.4, 1e-12);
        assert_close(summary.pooled_homozygosity, 0.52, 1e-12);
        let d = locus_diversity(&[&a, &b], DiversityEstimator::NeiChesser).unwrap();
        assert_close(d.within, 20.0 / 17.0 * 0.37, 1e-12);
        assert_close(d.within, 0.435294, 1e-6);
        assert_close(d.total, 0.497647, 1e-6);
    }

    /// Edge cases (docs/methods.md, "Gene-diversity differentiation"): a monomorphic locus (0/0)
    /// and a sample typed in nobody are left out; every gene copy distinct and private to one
    /// population gives Ĥ_S = 1 (hand calculation: J = 4·(1/4)² = 0.25, Ho = 1, ñ = 2, Ĥ_S =
    /// 2·(1 − 0.25 − 0.25) = 1), so G′_ST, G″_ST and D are undefined while G_ST is not.
    #[test]
    fn degenerate_loci() {
        let fixed = counts(&[0, 8, 0], 4, 0);
        assert_eq!(locus_diversity(&[&fixed, &fixed], DiversityEstimator::NeiChesser), None);
        let untyped = counts(&[0, 0, 0], 0, 0);
        let typed = counts(&[0, 4, 4], 4, 2);
        assert_eq!(locus_diversity(&[&typed, &untyped], DiversityEstimator::Jost), None);
        assert_eq!(locus_diversity(&[&typed], DiversityEstimator::Jost), None);
        let private_a = counts(&[0, 1, 1, 1, 1, 0, 0, 0, 0], 2, 2);
        let private_b = counts(&[0, 0, 0, 0, 0, 1, 1, 1, 1], 2, 2);
        for estimator in [DiversityEstimator::NeiChesser, DiversityEstimator::Jost] {
            let d = locus_diversity(&[&private_a, &private_b], estimator).unwrap();
            assert_close(d.within, 1.0, 1e-12);
            let i = indices(d, 2);
            assert!(i.gst.is_some());
            assert_eq!((i.gst_prime, i.gst_double_prime, i.jost_d), (None, None, None));
        }
    }

    /// Multilocus convention, ratio of averages (docs/methods.md, "Gene-diversity
    /// differentiation"), hand calculation: loci with (Ĥ_S, Ĥ_T) = (0.5, 0.6) and (0.3, 0.5)
    /// average to (0.4, 0.55), so D (k = 2) = 2·0.15/0.6 = 0.5, whereas the mean of the per-locus D
    /// (0.4 and 0.571429) is 0.485714.
    #[test]
    fn multilocus_is_a_ratio_of_averages() {
        let mut totals = DiversityTotals::default();
        assert_eq!(totals.mean(), None);
        totals.add(GeneDiversities { within: 0.5, total: 0.6 });
        totals.add(GeneDiversities { within: 0.3, total: 0.5 });
        assert_eq!(totals.loci(), 2);
        let mean = totals.mean().unwrap();
        assert_close(mean.within, 0.4, 1e-12);
        assert_close(mean.total, 0.55, 1e-12);
        assert_close(indices(mean, 2).jost_d.unwrap(), 0.5, 1e-12);
    }
}
