//! Null-allele frequency indicated by a heterozygote deficit.
//!
//! Brookfield's (1996) estimator 1, r = (He − Ho)/(1 + He), with He the unbiased expected
//! heterozygosity (Nei 1978). The formula is written from memory and awaits a check against
//! the paper (docs/methods.md, "Null alleles"). A negative value means no evidence of null alleles
//! and is set to 0. Other causes of a heterozygote deficit (inbreeding, a Wahlund effect) raise r
//! too, so r is an indication only.
//!
//! Brookfield JFY (1996) A simple new method for estimating null allele frequency from
//! heterozygote deficiency. *Mol Ecol* 5:453–455.

/// The full reference of the estimator, for a step's citations.
pub const BROOKFIELD_1996: &str = "Brookfield JFY (1996) A simple new method for estimating null allele frequency \
from heterozygote deficiency. Mol Ecol 5:453–455.";

/// Brookfield (1996) estimator 1 of the null-allele frequency from observed and unbiased
/// expected heterozygosity, floored at 0.
pub fn brookfield_null_allele_frequency(observed: f64, expected: f64) -> f64 {
    ((expected - observed) / (1.0 + expected)).max(0.0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Formula from memory (Brookfield 1996 estimator 1, docs/methods.md, "Null alleles" — verify
    /// against the paper). Hand calculation: He = 0.6, Ho = 0.3 gives r = 0.3/1.6 = 0.1875.
    #[test]
    fn deficit_gives_positive_frequency() {
        assert_close(brookfield_null_allele_frequency(0.3, 0.6), 0.1875, 1e-12);
    }

    /// docs/methods.md, "Null alleles": negative r (a heterozygote excess) is set to 0.
    #[test]
    fn excess_is_floored_at_zero() {
        assert_eq!(brookfield_null_allele_frequency(0.8, 0.5), 0.0);
        assert_eq!(brookfield_null_allele_frequency(0.5, 0.5), 0.0);
    }
}
