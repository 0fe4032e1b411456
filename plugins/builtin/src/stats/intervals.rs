//! Confidence intervals shared by the effective-size steps:
//!
//! - [`chi_square_interval`]: the interval of a mean-square statistic θ̂ treated as θ·χ²_ν/ν,
//!   i.e. (ν θ̂ / χ²_{ν, 1−α/2}, ν θ̂ / χ²_{ν, α/2}). This is the parametric interval of Hill
//!   (1981) and Waples (2006) for r̄² (ν = independent comparisons n′) and of Waples (1989) for
//!   the temporal F (ν = Σ(Kₗ − 1)); with ν = 2θ̂²/V̂ (effective degrees of freedom from a
//!   resampling variance V̂) it turns a jackknife variance into an interval with the same
//!   shape.
//! - [`student_t_interval`]: θ̂ ± t_{ν, 1−α/2}·SE, for a delete-one jackknife over L loci
//!   (ν = L − 1).
//!
//! Quantiles come from `statrs`; above [`WILSON_HILFERTY_MIN_DF`] degrees of freedom the χ²
//! quantile uses the Wilson–Hilferty (1931) cube-root approximation, whose relative error there
//! is below 10⁻⁶ and which avoids iterating the incomplete gamma function at tens of millions
//! of degrees of freedom (SNP panels give n′ of that order).
//!
//! Wilson EB, Hilferty MM (1931) The distribution of chi-square. *PNAS* 17:684–688.

use statrs::distribution::{ChiSquared, ContinuousCDF, StudentsT};

use crate::stats::bootstrap::Interval;
use crate::stats::trend::normal_quantile;

/// Above this many degrees of freedom the χ² quantile uses the Wilson–Hilferty approximation.
pub const WILSON_HILFERTY_MIN_DF: f64 = 1.0e5;

/// The `p`-quantile of χ² with `df` degrees of freedom (0 < p < 1, df > 0); NaN otherwise.
pub fn chi_square_quantile(df: f64, p: f64) -> f64 {
    let valid = df > 0.0 && df.is_finite() && p > 0.0 && p < 1.0;
    if !valid {
        return f64::NAN;
    }
    if df > WILSON_HILFERTY_MIN_DF {
        let scale = 2.0 / (9.0 * df);
        return df * (1.0 - scale + normal_quantile(p) * scale.sqrt()).powi(3);
    }
    match ChiSquared::new(df) {
        Ok(distribution) => distribution.inverse_cdf(p),
        Err(_) => f64::NAN,
    }
}

/// The two-sided `level` interval (ν θ̂ / χ²_{ν, upper}, ν θ̂ / χ²_{ν, lower}) of a non-negative
/// mean-square statistic `estimate` with `df` = ν degrees of freedom; `None` when ν ≤ 0 or the
/// estimate is not finite.
pub fn chi_square_interval(estimate: f64, df: f64, level: f64) -> Option<Interval> {
    let valid = df > 0.0 && estimate.is_finite();
    if !valid {
        return None;
    }
    let tail = (1.0 - level) / 2.0;
    let upper_quantile = chi_square_quantile(df, 1.0 - tail);
    let lower_quantile = chi_square_quantile(df, tail);
    if !(upper_quantile > 0.0 && lower_quantile > 0.0) {
        return None;
    }
    Some(Interval { low: df * estimate / upper_quantile, high: df * estimate / lower_quantile })
}

/// Effective degrees of freedom ν = 2θ̂²/V̂ of a mean-square statistic with resampling
/// variance `variance` (the ν for which θ̂·χ²_ν/ν has that variance); `None` when V̂ ≤ 0.
pub fn effective_degrees_of_freedom(estimate: f64, variance: f64) -> Option<f64> {
    (variance > 0.0 && estimate.is_finite()).then(|| 2.0 * estimate * estimate / variance)
}

/// θ̂ ± t_{df, 1−α/2}·`standard_error`; `None` for df < 1 or an undefined standard error.
pub fn student_t_interval(estimate: f64, standard_error: f64, df: f64, level: f64) -> Option<Interval> {
    let valid = df >= 1.0 && standard_error.is_finite() && estimate.is_finite();
    if !valid {
        return None;
    }
    let t = StudentsT::new(0.0, 1.0, df).ok()?.inverse_cdf(1.0 - (1.0 - level) / 2.0);
    Some(Interval { low: estimate - t * standard_error, high: estimate + t * standard_error })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// scipy 1.17.1 `scipy.stats.chi2.ppf` (tests/reference/ne_formulas.py):
    /// χ²₃₀₀(0.975) = 349.874469, χ²₃₀₀(0.025) = 253.912323, χ²₆(0.975) = 14.449375,
    /// χ²₆(0.025) = 1.237344.
    #[test]
    fn chi_square_quantiles_match_scipy() {
        assert_close(chi_square_quantile(300.0, 0.975), 349.874_469, 1e-5);
        assert_close(chi_square_quantile(300.0, 0.025), 253.912_323, 1e-5);
        assert_close(chi_square_quantile(6.0, 0.975), 14.449_375, 1e-5);
        assert_close(chi_square_quantile(6.0, 0.025), 1.237_344, 1e-5);
        assert!(chi_square_quantile(0.0, 0.5).is_nan());
        assert!(chi_square_quantile(5.0, 1.0).is_nan());
    }

    /// The Wilson–Hilferty branch agrees with the exact quantile where they meet: scipy 1.17.1
    /// χ²(2·10⁵)(0.975) = 201241.483 and χ²(2·10⁵)(0.025) = 198762.305.
    #[test]
    fn wilson_hilferty_branch_is_accurate() {
        let df = 2.0e5;
        assert_close(chi_square_quantile(df, 0.975) / 201_241.483, 1.0, 1e-6);
        assert_close(chi_square_quantile(df, 0.025) / 198_762.305, 1.0, 1e-6);
    }

    /// Computed from the χ² interval of Hill (1981) and Waples (2006): r̄² = 0.03 on n′ = 300 gives
    /// the r² interval (300·0.03/349.874, 300·0.03/253.912) = (0.0257235, 0.0354453), scipy 1.17.1.
    #[test]
    fn chi_square_interval_of_mean_r2() {
        let interval = chi_square_interval(0.03, 300.0, 0.95).unwrap();
        assert_close(interval.low, 0.025_723_5, 1e-7);
        assert_close(interval.high, 0.035_445_3, 1e-7);
        assert_eq!(chi_square_interval(0.03, 0.0, 0.95), None);
    }

    /// θ·χ²_ν/ν has variance 2θ²/ν, so ν = 2θ²/V (common practice; moment matching).
    #[test]
    fn effective_degrees_of_freedom_match_moments() {
        assert_close(effective_degrees_of_freedom(0.03, 2.0 * 0.03 * 0.03 / 300.0).unwrap(), 300.0, 1e-9);
        assert_eq!(effective_degrees_of_freedom(0.03, 0.0), None);
    }

    /// scipy 1.17.1 `scipy.stats.t.ppf(0.975, 9)` = 2.262157: 1 ± 2.262157·0.1.
    #[test]
    fn student_t_interval_matches_scipy() {
        let interval = student_t_interval(1.0, 0.1, 9.0, 0.95).unwrap();
        assert_close(interval.low, 1.0 - 0.226_215_7, 1e-6);
        assert_close(interval.high, 1.0 + 0.226_215_7, 1e-6);
        assert_eq!(student_t_interval(1.0, 0.1, 0.0, 0.95), None);
    }
}
