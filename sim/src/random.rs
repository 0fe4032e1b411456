//! Portable random draws.
//!
//! Every draw is built from the raw 32- or 64-bit output of ChaCha8 with integer arithmetic and
//! exactly rounded floating-point steps only (no `ln`, `exp` or `cos`, whose last bits may differ
//! between platform maths libraries), and without going through `rand`'s distribution types,
//! whose algorithms are only promised to stay the same within one major version. The same seed
//! therefore gives the same bits on every machine and with every patch release of the
//! dependencies.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Independent ChaCha streams derived from one seed, so that drawing a sample never changes the
/// course of evolution and vice versa.
#[derive(Clone, Copy, Debug)]
pub(crate) enum Stream {
    /// Per-locus parameters and the ancestral gene pool.
    Setup = 0,
    /// Reproduction, mutation and migration.
    Evolution = 1,
    /// Choosing sampled individuals.
    Sampling = 2,
    /// Blanking calls of a generated panel (see `snp_panel`).
    Faults = 3,
}

/// A seeded generator with the few draws the simulator needs.
#[derive(Clone, Debug)]
pub(crate) struct SimRng {
    inner: ChaCha8Rng,
}

impl SimRng {
    /// The generator for `stream` under `seed`.
    pub(crate) fn new(seed: u64, stream: Stream) -> Self {
        let mut inner = ChaCha8Rng::seed_from_u64(seed);
        inner.set_stream(stream as u64);
        Self { inner }
    }

    /// A uniform index in `0..n`.
    ///
    /// Lemire's multiply-and-reject method (Lemire 2019, "Fast random integer generation in an
    /// interval"): unbiased, and integer-only. Population sizes are far below `u32::MAX`, which
    /// [`crate::Simulation::new`] and the size checks guarantee; `n` must be at least 1.
    pub(crate) fn index(&mut self, n: usize) -> usize {
        debug_assert!(n >= 1 && n <= u32::MAX as usize);
        let range = n as u32;
        let mut product = u64::from(self.inner.next_u32()) * u64::from(range);
        let mut low = product as u32;
        if low < range {
            // (2^32 − range) mod range: the draws below it would bias the result.
            let threshold = range.wrapping_neg() % range;
            while low < threshold {
                product = u64::from(self.inner.next_u32()) * u64::from(range);
                low = product as u32;
            }
        }
        (product >> 32) as usize
    }

    /// A uniform `f64` in `[0, 1)` with 53 random bits (exact: a 53-bit integer times 2^-53).
    pub(crate) fn unit(&mut self) -> f64 {
        (self.inner.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// 64 independent fair bits.
    pub(crate) fn bits(&mut self) -> u64 {
        self.inner.next_u64()
    }

    /// `true` with probability `threshold / 2^32` (see [`chance_threshold`]).
    pub(crate) fn chance(&mut self, threshold: u32) -> bool {
        self.inner.next_u32() < threshold
    }
}

/// The threshold for [`SimRng::chance`] that gives probability `p` (rounded down to a multiple
/// of 2^-32, far finer than any mutation rate). `p` must lie in `[0, 1]`; `1` maps to
/// `u32::MAX`, that is 1 − 2^-32.
pub(crate) fn chance_threshold(p: f64) -> u32 {
    // Multiplying by a power of two is exact, and the cast truncates: portable.
    let scaled = p * 4_294_967_296.0;
    if scaled >= u32::MAX as f64 {
        u32::MAX
    } else if scaled > 0.0 {
        scaled as u32
    } else {
        0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_stays_in_range_and_covers_it() {
        let mut rng = SimRng::new(3, Stream::Setup);
        let mut seen = [0usize; 7];
        for _ in 0..7000 {
            seen[rng.index(7)] += 1;
        }
        // Each of 7 values expected 1000 times; binomial sd ≈ 29, so 850..1150 is > 5 sd
        // (common practice for a coarse uniformity check).
        for count in seen {
            assert!((850..1150).contains(&count), "counts {seen:?}");
        }
        for _ in 0..100 {
            assert_eq!(rng.index(1), 0);
        }
    }

    #[test]
    fn unit_is_in_half_open_interval_with_mean_near_half() {
        let mut rng = SimRng::new(5, Stream::Evolution);
        let draws: Vec<f64> = (0..10_000).map(|_| rng.unit()).collect();
        assert!(draws.iter().all(|u| (0.0..1.0).contains(u)));
        let mean = draws.iter().sum::<f64>() / draws.len() as f64;
        // sd of the mean of 10 000 uniforms is 0.0029; 0.015 is > 5 sd (common practice).
        assert!((mean - 0.5).abs() < 0.015, "mean {mean}");
    }

    #[test]
    fn chance_threshold_maps_probabilities() {
        assert_eq!(chance_threshold(0.0), 0);
        assert_eq!(chance_threshold(1.0), u32::MAX);
        assert_eq!(chance_threshold(0.5), 1 << 31);
        let mut rng = SimRng::new(9, Stream::Sampling);
        let threshold = chance_threshold(0.1);
        let hits = (0..20_000).filter(|_| rng.chance(threshold)).count();
        // Expected 2000, binomial sd ≈ 42; ±250 is ≈ 6 sd (common practice).
        assert!((1750..2250).contains(&hits), "hits {hits}");
    }

    #[test]
    fn streams_differ_and_repeat() {
        let mut a = SimRng::new(11, Stream::Setup);
        let mut b = SimRng::new(11, Stream::Evolution);
        let mut c = SimRng::new(11, Stream::Setup);
        let first: Vec<u64> = (0..4).map(|_| a.bits()).collect();
        let other: Vec<u64> = (0..4).map(|_| b.bits()).collect();
        let again: Vec<u64> = (0..4).map(|_| c.bits()).collect();
        assert_ne!(first, other);
        assert_eq!(first, again);
    }
}
