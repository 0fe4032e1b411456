//! Estimators shared by several steps, computed from [`popgauge_abi::AlleleCounts`].
//!
//! Conventions (docs/methods.md, "Conventions"): a locus in a set of samples counts only
//! individuals with both alleles typed (code 0 = untyped is left out locus by locus, never
//! imputed); expected heterozygosity is Nei's (1978) unbiased estimator; a quantity with a zero or
//! undefined denominator is `None`, which reaches tables as `null`.

pub mod bootstrap;
pub mod drift;
pub mod fdr;
pub mod gst;
pub mod heterozygosity;
pub mod hwe_exact;
pub mod hwe_groups;
pub mod intervals;
pub mod null_allele;
pub mod permutation;
pub mod rarefaction;
pub mod trend;
pub mod weir_cockerham;

/// Arithmetic mean; `None` for no values.
pub fn mean(values: impl IntoIterator<Item = f64>) -> Option<f64> {
    let (sum, count) = values.into_iter().fold((0.0, 0usize), |(s, n), x| (s + x, n + 1));
    (count > 0).then(|| sum / count as f64)
}

#[cfg(test)]
mod tests {
    use super::mean;

    /// Hand calculation: (0.1 + 0.2 + 0.6)/3 = 0.3.
    #[test]
    fn mean_of_values_and_of_nothing() {
        crate::test_support::assert_close(mean([0.1, 0.2, 0.6]).unwrap(), 0.3, 1e-15);
        assert_eq!(mean(std::iter::empty()), None);
    }
}
