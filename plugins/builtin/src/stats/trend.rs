//! Trend statistics over a short time series and a paired test over loci (docs/methods.md, "Trend
//! tests"; docs/methods.md, "Paired test over loci"):
//!
//! - [`mann_kendall`]: the Mann–Kendall statistic S = Σ_{i<j} sign(y_j − y_i), its
//!   tie-corrected variance, Kendall's τ (τ_b when the values tie, which equals τ_a without
//!   ties) and a two-sided p-value: from the **exact** null distribution of S when there are
//!   at most [`EXACT_MAX_POINTS`] points and no ties (Kendall's recursion over the number of
//!   inversions of a permutation), otherwise from the **normal** approximation with Gilbert's
//!   (1987) continuity correction, Z = (S − sign S)/√Var S.
//! - [`sen_slope`]: the median of the pairwise slopes (Sen 1968) with the confidence interval
//!   of Gilbert (1987, §16.5): C = z·√Var S, M₁ = (N′ − C)/2, M₂ = (N′ + C)/2, limits the
//!   M₁-th and (M₂ + 1)-th smallest slopes. M₁ and M₂ are rounded half to even, as
//!   `scipy.stats.theilslopes` does; when a limit falls outside the slopes (too few points for
//!   the level) it is `None`, not clamped to the extreme slope.
//! - [`least_squares`]: the ordinary least-squares slope with a Student-t interval on n − 2
//!   degrees of freedom.
//! - [`wilcoxon_signed_rank`]: the Wilcoxon (1945) signed-rank test of paired differences;
//!   zero differences are dropped (Wilcoxon's convention), |d| are ranked with average ranks
//!   for ties; exact null distribution of W⁺ without ties and at most
//!   [`WILCOXON_EXACT_MAX_PAIRS`] pairs, otherwise the tie-corrected normal approximation with
//!   a continuity correction of ½.
//!
//! Values compare exactly in the Mann–Kendall statistic (+∞ ties with +∞ above every finite
//! value). Paired differences are computed from decimals, so in the signed-rank test two
//! |d| within a relative [`TIE_TOLERANCE`] of each other tie, and a |d| that small relative to
//! the largest counts as zero.
//!
//! Mann HB (1945) *Econometrica* 13:245–259. Kendall MG (1975) *Rank Correlation Methods*, 4th
//! ed. Sen PK (1968) *J Am Stat Assoc* 63:1379–1389. Gilbert RO (1987) *Statistical Methods for
//! Environmental Pollution Monitoring*, ch. 16. Wilcoxon F (1945) *Biometrics Bull* 1:80–83.

use std::cmp::Ordering;

use statrs::distribution::{ContinuousCDF, StudentsT};
use statrs::function::erf::{erfc, erfc_inv};

use super::bootstrap::median_sorted;

/// Fewest points for a Mann–Kendall test: with 3 the smallest two-sided p is 0.333 (2 of the 3! = 6
/// orders, common practice).
pub const MIN_POINTS_MANN_KENDALL: usize = 4;
/// Fewest points for a least-squares slope with an interval (n − 2 ≥ 1 degrees of freedom).
pub const MIN_POINTS_LEAST_SQUARES: usize = 3;
/// Largest series whose Mann–Kendall p-value comes from the exact null distribution.
pub const EXACT_MAX_POINTS: usize = 10;
/// Largest number of non-zero pairs whose signed-rank p-value comes from the exact distribution.
pub const WILCOXON_EXACT_MAX_PAIRS: usize = 50;
/// Relative tolerance under which two paired differences tie (see the module doc).
pub const TIE_TOLERANCE: f64 = 1e-9;

/// How a p-value was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PValueMethod {
    /// From the exact null distribution.
    Exact,
    /// From the normal approximation.
    Normal,
}

impl PValueMethod {
    /// The word used in tables: `exact` or `normal`.
    pub fn as_str(self) -> &'static str {
        match self {
            PValueMethod::Exact => "exact",
            PValueMethod::Normal => "normal",
        }
    }
}

/// The Mann–Kendall test of one series.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MannKendall {
    /// Number of points.
    pub points: usize,
    /// S = Σ_{i<j} sign(y_j − y_i).
    pub s: i64,
    /// Var S, corrected for ties in the values.
    pub variance: f64,
    /// Kendall's τ_b (τ_a when nothing ties).
    pub tau: f64,
    /// Gilbert's continuity-corrected Z (reported for both methods).
    pub z: f64,
    /// Two-sided p-value.
    pub p_value: f64,
    /// Where the p-value comes from.
    pub method: PValueMethod,
}

/// Mann–Kendall test of `values` in time order; `None` with fewer than
/// [`MIN_POINTS_MANN_KENDALL`] points.
pub fn mann_kendall(values: &[f64]) -> Option<MannKendall> {
    let n = values.len();
    if n < MIN_POINTS_MANN_KENDALL {
        return None;
    }
    let s = kendall_score(values);
    let tie_sizes = tie_group_sizes(values, |a, b| a == b);
    let n_f = n as f64;
    let tie_term: f64 = tie_sizes.iter().map(|&t| t * (t - 1.0) * (2.0 * t + 5.0)).sum();
    let variance = (n_f * (n_f - 1.0) * (2.0 * n_f + 5.0) - tie_term) / 18.0;
    let pairs = n_f * (n_f - 1.0) / 2.0;
    let tied_pairs: f64 = tie_sizes.iter().map(|&t| t * (t - 1.0) / 2.0).sum();
    let tau = s as f64 / ((pairs - tied_pairs) * pairs).sqrt();
    let z = continuity_corrected_z(s, variance);
    let (p_value, method) = if n <= EXACT_MAX_POINTS && tie_sizes.is_empty() {
        ((2.0 * mann_kendall_upper_tail(n, s.abs())).min(1.0), PValueMethod::Exact)
    } else {
        (2.0 * (1.0 - standard_normal_cdf(z.abs())), PValueMethod::Normal)
    };
    Some(MannKendall { points: n, s, variance, tau, z, p_value, method })
}

/// S = Σ_{i<j} sign(y_j − y_i), with equal values (including two +∞) contributing 0.
fn kendall_score(values: &[f64]) -> i64 {
    let mut s = 0i64;
    for (i, a) in values.iter().enumerate() {
        for b in &values[i + 1..] {
            s += match b.partial_cmp(a) {
                Some(Ordering::Greater) => 1,
                Some(Ordering::Less) => -1,
                _ => 0,
            };
        }
    }
    s
}

fn continuity_corrected_z(s: i64, variance: f64) -> f64 {
    if s == 0 || variance <= 0.0 { 0.0 } else { (s - s.signum()) as f64 / variance.sqrt() }
}

/// Sizes (≥ 2) of the groups of equal values, compared with `same` after sorting.
fn tie_group_sizes(values: &[f64], same: impl Fn(f64, f64) -> bool) -> Vec<f64> {
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mut sizes = Vec::new();
    let mut run = 1usize;
    for pair in sorted.windows(2) {
        if same(pair[0], pair[1]) {
            run += 1;
        } else {
            if run > 1 {
                sizes.push(run as f64);
            }
            run = 1;
        }
    }
    if run > 1 {
        sizes.push(run as f64);
    }
    sizes
}

/// Exact P(S ≥ `s`) under the null hypothesis of no trend, for `n` untied points: S =
/// n(n−1)/2 − 2·(inversions), and the number of permutations of n items with k inversions
/// follows Kendall's recursion (Kendall 1975, ch. 4).
pub fn mann_kendall_upper_tail(n: usize, s: i64) -> f64 {
    let counts = inversion_counts(n);
    let total: f64 = counts.iter().sum();
    let max_s = (n * n.saturating_sub(1) / 2) as i64;
    // S ≥ s  ⇔  inversions ≤ (max_s − s)/2.
    let bound = (max_s - s).div_euclid(2);
    if bound < 0 {
        return 0.0;
    }
    counts.iter().take(bound as usize + 1).sum::<f64>() / total
}

/// `counts[k]` = number of permutations of `n` items with `k` inversions.
fn inversion_counts(n: usize) -> Vec<f64> {
    let mut counts = vec![1.0];
    for m in 2..=n {
        let mut next = vec![0.0; counts.len() + m - 1];
        for (k, &c) in counts.iter().enumerate() {
            for slot in &mut next[k..k + m] {
                *slot += c;
            }
        }
        counts = next;
    }
    counts
}

/// Sen's slope with its confidence interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SenSlope {
    /// Median of the pairwise slopes.
    pub slope: f64,
    /// Lower limit; `None` when the series is too short for the level.
    pub low: Option<f64>,
    /// Upper limit; `None` when the series is too short for the level.
    pub high: Option<f64>,
    /// N′, the number of pairwise slopes.
    pub pairs: usize,
}

/// Sen's slope of `values` over `times` with a `level` interval (e.g. 0.95) built from the
/// Mann–Kendall `variance_s`; `None` when no two times differ.
pub fn sen_slope(times: &[f64], values: &[f64], variance_s: f64, level: f64) -> Option<SenSlope> {
    let mut slopes = Vec::new();
    for i in 0..times.len() {
        for j in i + 1..times.len() {
            if times[j] != times[i] {
                slopes.push((values[j] - values[i]) / (times[j] - times[i]));
            }
        }
    }
    if slopes.is_empty() {
        return None;
    }
    slopes.sort_by(f64::total_cmp);
    let pairs = slopes.len();
    let slope = median_sorted(&slopes);
    let c = normal_quantile(1.0 - (1.0 - level) / 2.0) * variance_s.max(0.0).sqrt();
    let m1 = ((pairs as f64 - c) / 2.0).round_ties_even();
    let m2 = ((pairs as f64 + c) / 2.0).round_ties_even();
    // 1-based ranks M₁ and M₂ + 1.
    let low = (m1 >= 1.0).then(|| slopes[m1 as usize - 1]);
    let high = (m2 + 1.0 <= pairs as f64).then(|| slopes[m2 as usize]);
    Some(SenSlope { slope, low, high, pairs })
}

/// An ordinary least-squares line with an interval for its slope.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeastSquares {
    /// b = Σ(t − t̄)(y − ȳ)/Σ(t − t̄)².
    pub slope: f64,
    /// ȳ − b·t̄.
    pub intercept: f64,
    /// SE_b = s/√Σ(t − t̄)² with s² = RSS/(n − 2).
    pub standard_error: f64,
    /// b − t_{n−2}·SE_b.
    pub low: f64,
    /// b + t_{n−2}·SE_b.
    pub high: f64,
}

/// The least-squares slope of `values` over `times` with a two-sided `level` interval;
/// `None` with fewer than [`MIN_POINTS_LEAST_SQUARES`] points or when all times are equal.
pub fn least_squares(times: &[f64], values: &[f64], level: f64) -> Option<LeastSquares> {
    let n = times.len();
    if n < MIN_POINTS_LEAST_SQUARES || values.len() != n {
        return None;
    }
    let mean_t = times.iter().sum::<f64>() / n as f64;
    let mean_y = values.iter().sum::<f64>() / n as f64;
    let sxx: f64 = times.iter().map(|t| (t - mean_t).powi(2)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let sxy: f64 = times.iter().zip(values).map(|(t, y)| (t - mean_t) * (y - mean_y)).sum();
    let slope = sxy / sxx;
    let intercept = mean_y - slope * mean_t;
    let rss: f64 = times.iter().zip(values).map(|(t, y)| (y - intercept - slope * t).powi(2)).sum();
    let degrees_of_freedom = (n - 2) as f64;
    let standard_error = (rss / degrees_of_freedom / sxx).sqrt();
    let quantile = StudentsT::new(0.0, 1.0, degrees_of_freedom).ok()?.inverse_cdf(1.0 - (1.0 - level) / 2.0);
    Some(LeastSquares {
        slope,
        intercept,
        standard_error,
        low: slope - quantile * standard_error,
        high: slope + quantile * standard_error,
    })
}

/// The Wilcoxon signed-rank test of paired differences.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SignedRank {
    /// Non-zero differences ranked (m).
    pub pairs: usize,
    /// Zero differences dropped.
    pub zeros: usize,
    /// Sum of the ranks of the positive differences.
    pub w_plus: f64,
    /// Sum of the ranks of the negative differences.
    pub w_minus: f64,
    /// Two-sided p-value.
    pub p_value: f64,
    /// Where the p-value comes from.
    pub method: PValueMethod,
}

/// The signed-rank test of `differences` (later minus earlier); `None` when every difference
/// is zero.
pub fn wilcoxon_signed_rank(differences: &[f64]) -> Option<SignedRank> {
    let scale = differences.iter().fold(0.0f64, |m, d| m.max(d.abs()));
    let nonzero: Vec<f64> = differences.iter().copied().filter(|d| d.abs() > TIE_TOLERANCE * scale).collect();
    let m = nonzero.len();
    if m == 0 {
        return None;
    }
    let (ranks, tie_sizes) = average_ranks(&nonzero.iter().map(|d| d.abs()).collect::<Vec<_>>());
    let w_plus: f64 = nonzero.iter().zip(&ranks).filter(|(d, _)| **d > 0.0).map(|(_, r)| r).sum();
    let total = (m * (m + 1)) as f64 / 2.0;
    let w_minus = total - w_plus;
    let (p_value, method) = if tie_sizes.is_empty() && m <= WILCOXON_EXACT_MAX_PAIRS {
        (signed_rank_exact_p(m, w_plus.min(w_minus).round() as usize), PValueMethod::Exact)
    } else {
        (signed_rank_normal_p(m, w_plus, &tie_sizes), PValueMethod::Normal)
    };
    Some(SignedRank { pairs: m, zeros: differences.len() - m, w_plus, w_minus, p_value, method })
}

/// Average ranks (1-based) of `values`, ties within [`TIE_TOLERANCE`], and the tie-group sizes.
fn average_ranks(values: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let mut order: Vec<usize> = (0..values.len()).collect();
    order.sort_by(|&a, &b| values[a].total_cmp(&values[b]).then(a.cmp(&b)));
    let mut ranks = vec![0.0; values.len()];
    let mut tie_sizes = Vec::new();
    let mut start = 0;
    while start < order.len() {
        let mut end = start + 1;
        while end < order.len() && nearly_equal(values[order[end - 1]], values[order[end]]) {
            end += 1;
        }
        let average = (start + 1 + end) as f64 / 2.0;
        for &index in &order[start..end] {
            ranks[index] = average;
        }
        if end - start > 1 {
            tie_sizes.push((end - start) as f64);
        }
        start = end;
    }
    (ranks, tie_sizes)
}

fn nearly_equal(a: f64, b: f64) -> bool {
    (a - b).abs() <= TIE_TOLERANCE * a.abs().max(b.abs())
}

/// Exact two-sided p = min(1, 2·P(W⁺ ≤ `w`)) for `m` untied pairs; the null distribution of
/// W⁺ counts the subsets of ranks 1..m by their sum.
pub fn signed_rank_exact_p(m: usize, w: usize) -> f64 {
    let max = m * (m + 1) / 2;
    let mut counts = vec![0.0f64; max + 1];
    counts[0] = 1.0;
    for rank in 1..=m {
        for sum in (rank..=max).rev() {
            counts[sum] += counts[sum - rank];
        }
    }
    let total = 2f64.powi(m as i32);
    let lower: f64 = counts.iter().take(w.min(max) + 1).sum();
    (2.0 * lower / total).min(1.0)
}

fn signed_rank_normal_p(m: usize, w_plus: f64, tie_sizes: &[f64]) -> f64 {
    let m = m as f64;
    let mean = m * (m + 1.0) / 4.0;
    let tie_term: f64 = tie_sizes.iter().map(|t| t.powi(3) - t).sum();
    let variance = m * (m + 1.0) * (2.0 * m + 1.0) / 24.0 - tie_term / 48.0;
    if variance <= 0.0 {
        return 1.0;
    }
    let z = ((w_plus - mean).abs() - 0.5).max(0.0) / variance.sqrt();
    2.0 * (1.0 - standard_normal_cdf(z))
}

/// Φ(x), the standard normal distribution function.
pub fn standard_normal_cdf(x: f64) -> f64 {
    0.5 * erfc(-x / std::f64::consts::SQRT_2)
}

/// Φ⁻¹(p), the standard normal quantile, for 0 < p < 1.
pub fn normal_quantile(p: f64) -> f64 {
    -std::f64::consts::SQRT_2 * erfc_inv(2.0 * p)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    const YEARS_2010_2017: [f64; 8] = [2010.0, 2011.0, 2012.0, 2013.0, 2014.0, 2015.0, 2016.0, 2017.0];
    /// An invented series, years 2010–2017.
    const DECLINING_SERIES_2010_2017: [f64; 8] = [0.62, 0.60, 0.61, 0.57, 0.58, 0.55, 0.56, 0.53];
    /// An invented series with ties, years 2001–2012.
    const TIED_SERIES: [f64; 12] = [5.0, 3.0, 3.0, 4.0, 2.0, 2.0, 2.0, 1.0, 6.0, 1.0, 0.0, 0.0];

    /// Exact upper tails of the Mann–Kendall S (Kendall's table: from memory, not checked
    /// against Gilbert 1987, Table A18), re-derived by enumerating all n! orders in
    /// tests/reference/trend_reference.py (Python 3.11).
    #[test]
    fn exact_upper_tails_match_enumeration() {
        let cases = [
            (4, 6, 0.0416666667),
            (4, 4, 0.1666666667),
            (5, 10, 0.0083333333),
            (5, 8, 0.0416666667),
            (6, 15, 0.0013888889),
            (6, 13, 0.0083333333),
            (6, 11, 0.0277777778),
            (8, 20, 0.0070684524),
            (8, 16, 0.0305059524),
        ];
        for (n, s, expected) in cases {
            assert_close(mann_kendall_upper_tail(n, s), expected, 1e-9);
        }
        // The whole distribution sums to 1 and is symmetric (common practice).
        assert_close(mann_kendall_upper_tail(7, -21), 1.0, 1e-15);
        assert_close(mann_kendall_upper_tail(7, 21), 1.0 / 5040.0, 1e-15);
        assert_eq!(mann_kendall_upper_tail(5, 12), 0.0);
    }

    /// The invented 2010–2017 series, re-derived with pymannkendall 1.4.3 `original_test`
    /// (S, Var S, Z, normal p, τ) and scipy 1.17.1 `kendalltau` (exact p 0.0055059524), see
    /// tests/reference/trend_reference.py. n = 8 without ties takes the exact branch.
    #[test]
    fn mann_kendall_matches_reference_libraries() {
        let mk = mann_kendall(&DECLINING_SERIES_2010_2017).unwrap();
        assert_eq!((mk.points, mk.s), (8, -22));
        assert_close(mk.variance, 65.3333333333, 1e-6);
        assert_close(mk.z, -2.5980762114, 1e-6);
        assert_close(mk.tau, -0.7857142857, 1e-6);
        assert_eq!(mk.method, PValueMethod::Exact);
        assert_close(mk.p_value, 0.0055059524, 1e-6);
        // The normal p of the same Z (pymannkendall 1.4.3: 0.0093747685).
        assert_close(2.0 * (1.0 - standard_normal_cdf(mk.z.abs())), 0.0093747685, 1e-6);
    }

    /// A tied series takes the tie-corrected normal branch: pymannkendall 1.4.3 gives S = −40,
    /// Var S = 206, Z = −2.7172587557, p = 0.0065825123; scipy 1.17.1 `kendalltau` gives
    /// τ_b = −0.6356417262 (tests/reference/trend_reference.py).
    #[test]
    fn ties_use_the_corrected_normal_approximation() {
        let mk = mann_kendall(&TIED_SERIES).unwrap();
        assert_eq!(mk.s, -40);
        assert_close(mk.variance, 206.0, 1e-9);
        assert_close(mk.z, -2.7172587557, 1e-6);
        assert_close(mk.p_value, 0.0065825123, 1e-6);
        assert_close(mk.tau, -0.6356417262, 1e-6);
        assert_eq!(mk.method, PValueMethod::Normal);
    }

    /// docs/methods.md, "Trend tests": fewer than 4 points give no test; +∞ values tie with each
    /// other above every finite value (here S counts 2 rises to ∞ from each finite point and none
    /// between the ∞).
    #[test]
    fn too_few_points_and_infinite_values() {
        assert_eq!(mann_kendall(&[0.5, 0.4, 0.3]), None);
        let mk = mann_kendall(&[1.0, 2.0, f64::INFINITY, f64::INFINITY]).unwrap();
        assert_eq!(mk.s, 5);
        assert_eq!(mk.method, PValueMethod::Normal);
        // Var S with one tie of size 2: (4·3·13 − 2·1·9)/18 = 138/18 (Gilbert 1987 eq. 16.4,
        // from memory).
        assert_close(mk.variance, 138.0 / 18.0, 1e-12);
    }

    /// The invented 2010–2017 series: scipy 1.17.1 `theilslopes(alpha=0.95)` gives slope
    /// −0.0120833333, CI (−0.0166666667, −0.0066666667); N′ = 28. Tied series: −0.3333333333
    /// (−0.5, −0.25) (tests/reference/trend_reference.py).
    #[test]
    fn sen_slope_matches_scipy() {
        let mk = mann_kendall(&DECLINING_SERIES_2010_2017).unwrap();
        let sen = sen_slope(&YEARS_2010_2017, &DECLINING_SERIES_2010_2017, mk.variance, 0.95).unwrap();
        assert_eq!(sen.pairs, 28);
        assert_close(sen.slope, -0.0120833333, 1e-6);
        assert_close(sen.low.unwrap(), -0.0166666667, 1e-6);
        assert_close(sen.high.unwrap(), -0.0066666667, 1e-6);
        let years: Vec<f64> = (2001..=2012).map(f64::from).collect();
        let tied = mann_kendall(&TIED_SERIES).unwrap();
        let sen = sen_slope(&years, &TIED_SERIES, tied.variance, 0.95).unwrap();
        assert_close(sen.slope, -0.3333333333, 1e-6);
        assert_close(sen.low.unwrap(), -0.5, 1e-6);
        assert_close(sen.high.unwrap(), -0.25, 1e-6);
    }

    /// Four points: N′ = 6, Var S = 4·3·13/18, C = 1.96·2.944 = 5.77, M₁ = round(0.11) = 0,
    /// so the 95% limits do not exist (hand calculation, Gilbert 1987 §16.5).
    #[test]
    fn sen_interval_is_null_when_too_short() {
        let times = [1.0, 2.0, 3.0, 4.0];
        let values = [4.0, 3.0, 2.5, 1.0];
        let mk = mann_kendall(&values).unwrap();
        let sen = sen_slope(&times, &values, mk.variance, 0.95).unwrap();
        assert_close(sen.slope, -1.0, 1e-12); // median of −1, −0.75, −1, −0.5, −1, −1.5
        assert_eq!((sen.low, sen.high), (None, None));
    }

    /// The invented 2010–2017 series: scipy 1.17.1 `linregress` slope −0.0119047619, SE
    /// 0.0017790882, t₆ = 2.4469118511, CI (−0.0162580340, −0.0075514898); tied series slope
    /// −0.3111888112, CI (−0.6062015019, −0.0161761205) (tests/reference/trend_reference.py).
    #[test]
    fn least_squares_matches_scipy() {
        let ols = least_squares(&YEARS_2010_2017, &DECLINING_SERIES_2010_2017, 0.95).unwrap();
        assert_close(ols.slope, -0.0119047619, 1e-6);
        assert_close(ols.standard_error, 0.0017790882, 1e-6);
        assert_close(ols.low, -0.0162580340, 1e-6);
        assert_close(ols.high, -0.0075514898, 1e-6);
        let years: Vec<f64> = (2001..=2012).map(f64::from).collect();
        let ols = least_squares(&years, &TIED_SERIES, 0.95).unwrap();
        assert_close(ols.slope, -0.3111888112, 1e-6);
        assert_close(ols.low, -0.6062015019, 1e-6);
        assert_close(ols.high, -0.0161761205, 1e-6);
        assert_eq!(least_squares(&[1.0, 2.0], &[1.0, 2.0], 0.95), None);
        assert_eq!(least_squares(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0], 0.95), None);
    }

    /// Ten invented loci before and after: one zero dropped, W⁺ = 1, W⁻ = 44. The |d| tie (0.03,
    /// 0.05, 0.06 twice each), so the p-value is the tie-corrected normal one: scipy 1.17.1
    /// `wilcoxon(method="approx", correction=True)` gives 0.0126156672. Ignoring ties, the exact
    /// p is 4/512 = 0.0078125 (enumeration of 2⁹ signs in
    /// tests/reference/trend_reference.py).
    #[test]
    fn signed_rank_of_ten_loci_matches_scipy_with_ties() {
        let before = [0.71, 0.65, 0.80, 0.55, 0.62, 0.77, 0.69, 0.58, 0.74, 0.66];
        let after = [0.68, 0.66, 0.74, 0.50, 0.60, 0.70, 0.69, 0.52, 0.71, 0.61];
        let differences: Vec<f64> = after.iter().zip(&before).map(|(a, b)| a - b).collect();
        let test = wilcoxon_signed_rank(&differences).unwrap();
        assert_eq!((test.pairs, test.zeros), (9, 1));
        assert_close(test.w_plus, 1.0, 1e-12);
        assert_close(test.w_minus, 44.0, 1e-12);
        assert_eq!(test.method, PValueMethod::Normal);
        assert_close(test.p_value, 0.0126156672, 1e-6);
        assert_close(signed_rank_exact_p(9, 1), 0.0078125, 1e-12);
    }

    /// A tie-free pair takes the exact branch: scipy 1.17.1 `wilcoxon(method="exact")` gives
    /// statistic 5, p = 0.0390625 (tests/reference/trend_reference.py).
    #[test]
    fn signed_rank_exact_matches_scipy() {
        let a = [1.83, 0.50, 1.62, 2.48, 1.68, 1.88, 1.55, 3.06, 1.30];
        let b = [0.878, 0.647, 0.598, 2.05, 1.06, 1.29, 1.06, 3.16, 1.29];
        let differences: Vec<f64> = a.iter().zip(&b).map(|(x, y)| x - y).collect();
        let test = wilcoxon_signed_rank(&differences).unwrap();
        assert_eq!(test.method, PValueMethod::Exact);
        assert_close(test.w_plus.min(test.w_minus), 5.0, 1e-12);
        assert_close(test.p_value, 0.0390625, 1e-9);
        assert_eq!(wilcoxon_signed_rank(&[0.0, 0.0]), None);
    }

    /// Standard normal values from any table (common practice): Φ(1.959964) = 0.975,
    /// Φ⁻¹(0.975) = 1.959964.
    #[test]
    fn normal_distribution_helpers() {
        assert_close(standard_normal_cdf(1.959_963_985), 0.975, 1e-9);
        assert_close(normal_quantile(0.975), 1.959_963_985, 1e-8);
        assert_close(standard_normal_cdf(0.0), 0.5, 1e-15);
    }
}
