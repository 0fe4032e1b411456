//! Resampling loci for the bootstrap interval, with a small seeded generator of the plugin's
//! own (the plugin depends on the SDK only; popgauge's built-in resampling lives in
//! `popgauge-builtin`, which an external plugin does not link).

use popgauge_abi::Seed;

/// SplitMix64 (Steele, Lea & Flood 2014): a small, well-mixed 64-bit generator, ample for
/// drawing loci.
pub(crate) struct SplitMix64(u64);

impl SplitMix64 {
    /// A stream for one purpose of a step: the seed mixed with an FNV-1a hash of `stream`.
    pub(crate) fn new(seed: Seed, stream: &str) -> SplitMix64 {
        let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
        for byte in stream.bytes() {
            hash = (hash ^ u64::from(byte)).wrapping_mul(0x0100_0000_01b3);
        }
        SplitMix64(seed.0 ^ hash)
    }

    pub(crate) fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    /// A number in `0..n` (multiply-shift; the bias is below 2⁻⁶⁴·n).
    pub(crate) fn below(&mut self, n: usize) -> usize {
        ((u128::from(self.next_u64()) * n as u128) >> 64) as usize
    }
}

/// The 95 % percentile interval of `statistic` over `replicates` resamples of `n_loci` loci
/// with replacement (linear interpolation between order statistics); `None` with fewer than
/// two defined replicates.
pub fn bootstrap_interval(
    seed: Seed,
    stream: &str,
    n_loci: usize,
    replicates: u32,
    statistic: impl Fn(&[usize]) -> Option<f64>,
) -> Option<(f64, f64)> {
    if n_loci == 0 {
        return None;
    }
    let mut rng = SplitMix64::new(seed, stream);
    let mut loci = vec![0usize; n_loci];
    let mut values = Vec::with_capacity(replicates as usize);
    for _ in 0..replicates {
        loci.iter_mut().for_each(|l| *l = rng.below(n_loci));
        values.extend(statistic(&loci).filter(|v| v.is_finite()));
    }
    if values.len() < 2 {
        return None;
    }
    values.sort_by(f64::total_cmp);
    Some((quantile(&values, 0.025), quantile(&values, 0.975)))
}

fn quantile(sorted: &[f64], q: f64) -> f64 {
    let position = q * (sorted.len() - 1) as f64;
    let (below, above) = (position.floor() as usize, position.ceil() as usize);
    sorted[below] + (sorted[above] - sorted[below]) * (position - below as f64)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// numpy 1.26 `np.percentile(range(1, 11), [2.5, 97.5])` = [1.225, 9.775] (linear
    /// interpolation, numpy's default).
    #[test]
    fn quantiles_match_numpy() {
        let v: Vec<f64> = (1..=10).map(f64::from).collect();
        assert!((quantile(&v, 0.025) - 1.225).abs() < 1e-12);
        assert!((quantile(&v, 0.975) - 9.775).abs() < 1e-12);
    }

    /// Common practice: the same seed and stream give the same draws; draws stay in range.
    #[test]
    fn draws_are_reproducible_and_in_range() {
        let draw = |stream: &str| {
            let mut rng = SplitMix64::new(Seed(9), stream);
            (0..100).map(|_| rng.below(7)).collect::<Vec<_>>()
        };
        assert_eq!(draw("a"), draw("a"));
        assert_ne!(draw("a"), draw("b"));
        assert!(draw("a").iter().all(|&x| x < 7));
        let mut seen = [false; 7];
        draw("a").iter().for_each(|&x| seen[x] = true);
        assert!(seen.iter().all(|&s| s), "every locus can be drawn");
    }
}
