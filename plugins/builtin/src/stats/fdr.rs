//! False-discovery-rate q-values (Benjamini & Hochberg 1995) and Fisher's (1932) combination of
//! independent p-values (docs/methods.md, "Multiple tests").
//!
//! - BH: order p₍₁₎ ≤ … ≤ p₍ₘ₎ and set q₍ᵢ₎ = min_{j ≥ i} min(1, m·p₍ⱼ₎/j). The family is
//!   whatever the caller passes; `m` is its length, which the caller must report.
//! - Fisher: X² = −2 Σ ln pₗ on 2m degrees of freedom. It assumes independent tests; with
//!   discrete (exact) p-values it is conservative.

use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Full references, for a step's citations.
pub const BENJAMINI_HOCHBERG_1995: &str = "Benjamini Y, Hochberg Y (1995) Controlling the false discovery rate: a \
practical and powerful approach to multiple testing. J R Stat Soc B 57:289–300.";
/// Full reference of Fisher's method.
pub const FISHER_1932: &str =
    "Fisher RA (1932) Statistical Methods for Research Workers, 4th ed. Oliver & Boyd, Edinburgh.";

/// Benjamini–Hochberg q-values of `p_values`, in the input order (ties keep their order).
/// Values outside [0, 1] or NaN are the caller's error; NaN sorts last and stays NaN.
pub fn benjamini_hochberg(p_values: &[f64]) -> Vec<f64> {
    let m = p_values.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| p_values[a].total_cmp(&p_values[b]).then(a.cmp(&b)));
    let mut q_values = vec![f64::NAN; m];
    let mut running_min = 1.0_f64;
    for (rank, &index) in order.iter().enumerate().rev() {
        let scaled = p_values[index] * m as f64 / (rank + 1) as f64;
        running_min = running_min.min(scaled);
        q_values[index] = if p_values[index].is_nan() { f64::NAN } else { running_min };
    }
    q_values
}

/// Fisher's combined test of independent p-values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FisherCombination {
    /// X² = −2 Σ ln p.
    pub chi_square: f64,
    /// Degrees of freedom, 2m.
    pub degrees_of_freedom: u32,
    /// Upper tail of χ² with 2m degrees of freedom at X².
    pub p_value: f64,
}

/// Fisher's combination of `p_values`; `None` for no values. A p-value of 0 (an underflow of
/// an extreme exact test) is taken as the smallest positive `f64`, so X² stays finite.
pub fn fisher_combination(p_values: &[f64]) -> Option<FisherCombination> {
    if p_values.is_empty() {
        return None;
    }
    let chi_square = -2.0 * p_values.iter().map(|p| p.max(f64::MIN_POSITIVE).ln()).sum::<f64>();
    let degrees_of_freedom = u32::try_from(2 * p_values.len()).ok()?;
    let distribution = ChiSquared::new(f64::from(degrees_of_freedom)).ok()?;
    Some(FisherCombination { chi_square, degrees_of_freedom, p_value: distribution.sf(chi_square) })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    const BH_EXAMPLE: [f64; 15] = [
        0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590,
        1.000,
    ];

    /// Benjamini & Hochberg (1995) worked example (published: 4 rejections at q = 0.05; the same
    /// data are in the scipy documentation of `false_discovery_control`). q-values computed from
    /// the Benjamini–Hochberg formula (module documentation), confirmed with scipy 1.17.1
    /// `scipy.stats.false_discovery_control(p, method="bh")` by tests/reference/hwe_reference.py,
    /// printed to 6 significant digits.
    #[test]
    fn benjamini_hochberg_published_example() {
        let expected = [
            0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.0638571, 0.0638571, 0.0645, 0.0765, 0.486, 0.581182, 0.714875,
            0.753231, 0.813214, 1.0,
        ];
        let q = benjamini_hochberg(&BH_EXAMPLE);
        for (got, want) in q.iter().zip(expected) {
            assert_close(*got, want, 1e-6 * want.max(1e-3));
        }
        assert_eq!(q.iter().filter(|&&x| x <= 0.05).count(), 4);
    }

    /// Order does not matter (common practice): the reversed input gives the reversed q-values;
    /// an empty family gives nothing.
    #[test]
    fn benjamini_hochberg_keeps_input_order() {
        let mut reversed = BH_EXAMPLE;
        reversed.reverse();
        let mut q = benjamini_hochberg(&reversed);
        q.reverse();
        assert_eq!(q, benjamini_hochberg(&BH_EXAMPLE));
        assert!(benjamini_hochberg(&[]).is_empty());
    }

    /// Fisher's (1932) X² computed from the formula (module documentation), confirmed with scipy
    /// 1.17.1 `scipy.stats.combine_pvalues([0.01, 0.2, 0.5], method="fisher")`: X² = 13.81551,
    /// df = 6, p = 0.031766 (tests/reference/hwe_reference.py).
    #[test]
    fn fisher_combination_matches_scipy() {
        let combined = fisher_combination(&[0.01, 0.20, 0.50]).unwrap();
        assert_close(combined.chi_square, 13.81551, 1e-5);
        assert_eq!(combined.degrees_of_freedom, 6);
        assert_close(combined.p_value, 0.031766, 1e-6);
        assert_eq!(fisher_combination(&[]), None);
        let extreme = fisher_combination(&[0.0]).unwrap();
        assert!(extreme.chi_square.is_finite() && extreme.p_value < 1e-300);
    }
}
