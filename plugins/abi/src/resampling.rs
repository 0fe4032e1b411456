//! Resampling over loci: the seeded random stream, the percentile bootstrap and the delete-one
//! jackknife (docs/methods.md, "Conventions": "resampling loci" draws L loci with replacement,
//! keeping each locus's full per-group data), and the median and quantiles of their
//! replicates. The built-in steps use exactly these functions, so a plugin that resamples
//! through them gets intervals computed the same way.
//!
//! Both resamplers hand the statistic a slice of locus indices and reuse one buffer, so a
//! bootstrap of B replicates allocates nothing per replicate.
//!
//! ```
//! use popgauge_abi::Seed;
//! use popgauge_abi::resampling::{bootstrap_loci, percentile_interval, rng};
//!
//! // Per-locus values of some statistic; the statistic of a resample is their mean.
//! let per_locus = [0.1, 0.4, 0.2, 0.3, 0.5];
//! let mean_of = |loci: &[usize]| Some(loci.iter().map(|&l| per_locus[l]).sum::<f64>() / loci.len() as f64);
//! let mut replicates = bootstrap_loci(per_locus.len(), 1000, &mut rng(Seed(7), "mean"), mean_of);
//! let interval = percentile_interval(&mut replicates, 0.95).expect("two or more replicates");
//! assert!(interval.low <= 0.3 && 0.3 <= interval.high);
//! ```

use rand::{RngExt, SeedableRng};
/// The generator behind [`rng`] (ChaCha with 8 rounds, from the `rand_chacha` crate).
pub use rand_chacha::ChaCha8Rng;

use crate::Seed;

/// The random stream of a step, or of one named purpose within a step (`stream`), so that two
/// resampling procedures of the same step do not share draws and adding one does not shift the
/// other's numbers.
pub fn rng(seed: Seed, stream: &str) -> ChaCha8Rng {
    // FNV-1a over the stream name, mixed into the step seed.
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    for byte in stream.bytes() {
        hash = (hash ^ u64::from(byte)).wrapping_mul(0x0100_0000_01b3);
    }
    ChaCha8Rng::seed_from_u64(seed.0 ^ hash.rotate_left(17))
}

/// A two-sided percentile interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// Lower bound.
    pub low: f64,
    /// Upper bound.
    pub high: f64,
}

/// Bootstrap replicates of `statistic` over `n_loci` loci: each replicate draws `n_loci` indices
/// with replacement and passes them to `statistic`, which returns `None` when the replicate is
/// undefined (such replicates are skipped and not counted).
pub fn bootstrap_loci(
    n_loci: usize,
    replicates: usize,
    rng: &mut ChaCha8Rng,
    mut statistic: impl FnMut(&[usize]) -> Option<f64>,
) -> Vec<f64> {
    let [values] = bootstrap_loci_each(n_loci, replicates, rng, |sampled| [statistic(sampled)]);
    values
}

/// Bootstrap replicates of K statistics computed from the same draws: each replicate draws
/// `n_loci` indices with replacement once and passes them to `statistics`, which returns the K
/// values of that replicate. Entry k of the result holds statistic k's defined (finite)
/// replicate values, in draw order; a replicate undefined for one statistic is skipped for that
/// statistic only. The draws are those of [`bootstrap_loci`], so statistic k here equals
/// `bootstrap_loci` of statistic k alone with the same stream.
pub fn bootstrap_loci_each<const K: usize>(
    n_loci: usize,
    replicates: usize,
    rng: &mut ChaCha8Rng,
    mut statistics: impl FnMut(&[usize]) -> [Option<f64>; K],
) -> [Vec<f64>; K] {
    let mut indices = vec![0usize; n_loci];
    let mut values: [Vec<f64>; K] = std::array::from_fn(|_| Vec::with_capacity(replicates));
    if n_loci == 0 {
        return values;
    }
    for _ in 0..replicates {
        for slot in indices.iter_mut() {
            *slot = rng.random_range(0..n_loci);
        }
        for (kept, value) in values.iter_mut().zip(statistics(&indices)) {
            kept.extend(value.filter(|v| v.is_finite()));
        }
    }
    values
}

/// The percentile interval at `level` (e.g. 0.95 → 2.5th and 97.5th percentiles, linear
/// interpolation between order statistics, as numpy's default `percentile`); `None` for fewer
/// than two values.
pub fn percentile_interval(values: &mut [f64], level: f64) -> Option<Interval> {
    if values.len() < 2 {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let tail = (1.0 - level) / 2.0;
    Some(Interval { low: quantile_sorted(values, tail), high: quantile_sorted(values, 1.0 - tail) })
}

/// The median of `values` (the mean of the two middle ones for an even count, as numpy's
/// `median`; an infinite middle value gives an infinite median), or `None` when there are none.
pub fn median(mut values: Vec<f64>) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    Some(median_sorted(&values))
}

/// The median of sorted, non-empty values, as [`median`].
pub fn median_sorted(sorted: &[f64]) -> f64 {
    let n = sorted.len();
    if n % 2 == 1 { sorted[n / 2] } else { (sorted[n / 2 - 1] + sorted[n / 2]) / 2.0 }
}

/// The `q`-quantile of sorted values with linear interpolation (numpy's default method).
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    let position = q * (sorted.len() - 1) as f64;
    let below = position.floor() as usize;
    let above = position.ceil() as usize;
    sorted[below] + (sorted[above] - sorted[below]) * (position - below as f64)
}

/// Delete-one jackknife over loci for a statistic of per-locus sums: `terms[l]` holds locus
/// l's K summands, and each leave-one-out value is `statistic(total − terms[l], L − 1)`. This is
/// linear in the number of loci (recomputing every subset would be quadratic: minutes at 20,000
/// SNPs); the totals minus one locus agree with a fresh sum to rounding. Undefined or
/// non-finite values are `None`.
pub fn jackknife_loci<const K: usize>(
    terms: &[[f64; K]],
    statistic: impl Fn(&[f64; K], usize) -> Option<f64>,
) -> Vec<Option<f64>> {
    let total = sum_terms(terms);
    terms
        .iter()
        .map(|locus| {
            let without: [f64; K] = std::array::from_fn(|k| total[k] - locus[k]);
            statistic(&without, terms.len() - 1).filter(|v| v.is_finite())
        })
        .collect()
}

/// Σ over loci of each of the K summands, in locus order.
pub fn sum_terms<const K: usize>(terms: &[[f64; K]]) -> [f64; K] {
    let mut total = [0.0; K];
    for locus in terms {
        for (sum, term) in total.iter_mut().zip(locus) {
            *sum += term;
        }
    }
    total
}

/// Jackknife standard error SE_J = √[((L−1)/L) Σ (θ₍₋ₗ₎ − θ̄₍·₎)²] over the defined
/// leave-one-out values; `None` for fewer than two.
pub fn jackknife_standard_error(leave_one_out: &[Option<f64>]) -> Option<f64> {
    let values: Vec<f64> = leave_one_out.iter().flatten().copied().collect();
    let l = values.len() as f64;
    if values.len() < 2 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / l;
    Some(((l - 1.0) / l * values.iter().map(|v| (v - mean).powi(2)).sum::<f64>()).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Common practice (the usual definition of the median): [3, 1, 2] → 2, [1, 2, 3, 10] →
    /// 2.5; an infinite middle value gives an infinite median, never NaN.
    #[test]
    fn median_of_odd_even_and_infinite_values() {
        assert_eq!(median(vec![3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(vec![1.0, 2.0, 3.0, 10.0]), Some(2.5));
        assert_eq!(median(vec![1.0, f64::INFINITY, f64::INFINITY]), Some(f64::INFINITY));
        assert_eq!(median(vec![f64::INFINITY, f64::INFINITY]), Some(f64::INFINITY));
        assert_eq!(median(vec![]), None);
    }

    /// numpy 1.26 `np.percentile([1,2,3,4,5,6,7,8,9,10], [2.5, 97.5])` = [1.225, 9.775]
    /// (linear interpolation, the default method).
    #[test]
    fn percentiles_match_numpy() {
        let mut v: Vec<f64> = (1..=10).rev().map(f64::from).collect();
        let i = percentile_interval(&mut v, 0.95).unwrap();
        assert!((i.low - 1.225).abs() < 1e-12 && (i.high - 9.775).abs() < 1e-12, "{i:?}");
        assert_eq!(percentile_interval(&mut [1.0], 0.95), None);
    }

    /// Same seed and stream → same draws; another stream → other draws (common practice).
    #[test]
    fn streams_are_reproducible_and_independent() {
        let mean_of = |idx: &[usize]| Some(idx.iter().sum::<usize>() as f64 / idx.len() as f64);
        let a = bootstrap_loci(10, 50, &mut rng(Seed(1), "fis"), mean_of);
        let b = bootstrap_loci(10, 50, &mut rng(Seed(1), "fis"), mean_of);
        let c = bootstrap_loci(10, 50, &mut rng(Seed(1), "fst"), mean_of);
        assert_eq!(a, b);
        assert_ne!(a, c);
        assert_eq!(a.len(), 50);
        assert!(a.iter().all(|m| (0.0..=9.0).contains(m)));
    }

    /// Several statistics share one set of draws: each equals the single-statistic bootstrap of
    /// the same stream value for value, and a replicate undefined for one statistic is dropped
    /// from that statistic only (common practice: one resampling serves several estimators).
    #[test]
    fn several_statistics_share_the_draws() {
        let mean_of = |idx: &[usize]| Some(idx.iter().sum::<usize>() as f64 / idx.len() as f64);
        let first_even = |idx: &[usize]| idx[0].is_multiple_of(2).then_some(idx[0] as f64);
        let [means, firsts] =
            bootstrap_loci_each(10, 50, &mut rng(Seed(1), "fis"), |idx| [mean_of(idx), first_even(idx)]);
        assert_eq!(means, bootstrap_loci(10, 50, &mut rng(Seed(1), "fis"), mean_of));
        assert_eq!(firsts, bootstrap_loci(10, 50, &mut rng(Seed(1), "fis"), first_even));
        assert_eq!(means.len(), 50);
        assert!(!firsts.is_empty() && firsts.len() < 50, "{}", firsts.len());
    }

    /// The jackknife SE of a mean equals the usual SE s/√L (a textbook identity; Efron &
    /// Tibshirani 1993, §11.2). Data 1..5: s = 1.5811, SE = 0.70711.
    #[test]
    fn jackknife_of_the_mean_is_the_standard_error() {
        let data = [1.0, 2.0, 3.0, 4.0, 5.0];
        let terms: Vec<[f64; 1]> = data.iter().map(|&x| [x]).collect();
        let loo = jackknife_loci(&terms, |sums, loci| Some(sums[0] / loci as f64));
        assert_eq!(loo[0], Some(3.5), "leave out 1: mean of 2..5");
        let se = jackknife_standard_error(&loo).unwrap();
        assert!((se - 0.5f64.sqrt()).abs() < 1e-12, "{se}");
    }

    /// The linear leave-one-out (total minus one locus) equals recomputing the statistic on the
    /// other loci, to rounding (common practice: a ratio of sums, as in ne-temporal's F̃).
    #[test]
    fn linear_leave_one_out_matches_recomputation() {
        let terms: Vec<[f64; 2]> =
            (1..=40).map(|l| [f64::from(l).sin().abs(), 1.0 + f64::from(l).cos().abs()]).collect();
        let loo = jackknife_loci(&terms, |sums, _| Some(sums[0] / sums[1]));
        for (left_out, value) in loo.iter().enumerate() {
            let (num, den) = terms
                .iter()
                .enumerate()
                .filter(|(l, _)| *l != left_out)
                .fold((0.0, 0.0), |(n, d), (_, t)| (n + t[0], d + t[1]));
            assert!((value.unwrap() - num / den).abs() < 1e-12, "{left_out}");
        }
    }
}
