//! [`biallelic_components`] of two samples for eight loci (or replicates) at once. With AVX-512,
//! the same formulas with the same operations in the same order, lane by lane: IEEE operations
//! are correctly rounded lane by lane and Rust never fuses or reorders them, so every lane is
//! bit-for-bit the scalar result; the undefined cases become a lane mask instead of an early
//! return. Elsewhere, the scalar function lane by lane.

use super::{BiallelicSample, VarianceComponents, biallelic_components};

/// Loci (or replicates) per call.
pub const LANES: usize = 8;

/// Eight pairs of samples: lane l is the pair (`first[l]`, `second[l]`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PairLanes {
    /// The first sample of each pair.
    pub first: [BiallelicSample; LANES],
    /// The second sample of each pair.
    pub second: [BiallelicSample; LANES],
}

/// Per lane, the components of [`biallelic_components`]`(&[first, second])`, `None` where that
/// gives `None`.
pub fn pair_components(pairs: &PairLanes) -> [Option<VarianceComponents>; LANES] {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx512f") && std::is_x86_feature_detected!("avx512dq") {
        // SAFETY: the processor has AVX-512 F and DQ (checked just above).
        return unsafe { avx512::pair_components(pairs) };
    }
    std::array::from_fn(|l| biallelic_components(&[pairs.first[l], pairs.second[l]]))
}

#[cfg(target_arch = "x86_64")]
mod avx512 {
    //! The eight lanes in 512-bit registers: `sizes_of` and `components_with` of the parent
    //! module for r = 2 samples, operation by operation (iterator sums start from -0.0, as
    //! `Sum` for f64 does; `x.powi(2)` is `x * x`; the components of the two alleles are
    //! folded from +0.0 as `Sum` for [`VarianceComponents`] does).

    use std::arch::x86_64::*;

    use super::{BiallelicSample, LANES, PairLanes, VarianceComponents};

    /// Eight lanes of one count of the first or second samples, as doubles.
    #[target_feature(enable = "avx512f")]
    fn counts(samples: &[BiallelicSample; LANES], get: fn(&BiallelicSample) -> u32) -> __m512d {
        let values: [f64; LANES] = std::array::from_fn(|l| f64::from(get(&samples[l])));
        // SAFETY: `values` holds eight doubles.
        unsafe { _mm512_loadu_pd(values.as_ptr()) }
    }

    /// The sample-size factors of `sizes_of`, by lane.
    struct Sizes {
        mean: __m512d,
        pooled: __m512d,
        spread_divisor: __m512d,
        mean_over_corrected: __m512d,
        mean_over_mean_less_one: __m512d,
        samples_less_one_over_samples: __m512d,
        heterozygote_weight: __m512d,
    }

    /// [`super::pair_components`] with AVX-512.
    ///
    /// # Safety
    /// The processor must have AVX-512 F and DQ.
    #[target_feature(enable = "avx512f,avx512dq")]
    pub unsafe fn pair_components(pairs: &PairLanes) -> [Option<VarianceComponents>; LANES] {
        let (add, sub, mul, div, set) = (_mm512_add_pd, _mm512_sub_pd, _mm512_mul_pd, _mm512_div_pd, _mm512_set1_pd);
        let n = [counts(&pairs.first, |s| s.typed), counts(&pairs.second, |s| s.typed)];
        let het = [counts(&pairs.first, |s| s.heterozygotes), counts(&pairs.second, |s| s.heterozygotes)];
        let low = [counts(&pairs.first, |s| s.low_copies), counts(&pairs.second, |s| s.low_copies)];
        let high = [counts(&pairs.first, |s| s.high_copies), counts(&pairs.second, |s| s.high_copies)];
        let (r, one) = (set(2.0), set(1.0));
        let total = add(add(set(-0.0), n[0]), n[1]);
        let mean = div(total, r);
        let squares = add(add(set(-0.0), mul(n[0], n[0])), mul(n[1], n[1]));
        let corrected = div(sub(mul(r, mean), div(squares, mul(r, mean))), sub(r, one));
        let sizes = Sizes {
            mean,
            pooled: mul(r, mean),
            spread_divisor: mul(sub(r, one), mean),
            mean_over_corrected: div(mean, corrected),
            mean_over_mean_less_one: div(mean, sub(mean, one)),
            samples_less_one_over_samples: div(sub(r, one), r),
            heterozygote_weight: div(sub(mul(set(2.0), mean), one), mul(set(4.0), mean)),
        };
        let lower = components(&n, &low, &het, &sizes);
        let higher = components(&n, &high, &het, &sizes);
        let zero = _mm512_setzero_pd();
        let sum = |k: usize| add(add(zero, lower[k]), higher[k]);
        let defined = _mm512_cmp_pd_mask::<_CMP_GT_OQ>(n[0], zero)
            & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(n[1], zero)
            & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(mean, one);
        let mut out = [[0.0f64; LANES]; 3];
        for (k, lanes) in out.iter_mut().enumerate() {
            // SAFETY: each array holds eight doubles.
            unsafe { _mm512_storeu_pd(lanes.as_mut_ptr(), sum(k)) };
        }
        std::array::from_fn(|l| {
            (defined >> l & 1 == 1).then_some(VarianceComponents {
                between_samples: out[0][l],
                between_individuals: out[1][l],
                within_individuals: out[2][l],
            })
        })
    }

    /// `components_with` for two samples: (a, b, c) of one allele with `copies` copies and
    /// `carriers` heterozygous carriers in each sample; all three +0.0 where the allele is
    /// absent from both.
    #[target_feature(enable = "avx512f,avx512dq")]
    fn components(n: &[__m512d; 2], copies: &[__m512d; 2], carriers: &[__m512d; 2], sizes: &Sizes) -> [__m512d; 3] {
        let (add, sub, mul, div, set) = (_mm512_add_pd, _mm512_sub_pd, _mm512_mul_pd, _mm512_div_pd, _mm512_set1_pd);
        let two = set(2.0);
        let p_bar = div(add(add(set(-0.0), div(copies[0], two)), div(copies[1], two)), sizes.pooled);
        let h_bar = div(add(add(set(-0.0), carriers[0]), carriers[1]), sizes.pooled);
        let term = |i: usize| {
            let d = sub(div(copies[i], mul(two, n[i])), p_bar);
            mul(n[i], mul(d, d))
        };
        let s2 = div(add(add(set(-0.0), term(0)), term(1)), sizes.spread_divisor);
        let pq = mul(p_bar, sub(set(1.0), p_bar));
        let spread = sub(pq, mul(sizes.samples_less_one_over_samples, s2));
        let a =
            mul(sizes.mean_over_corrected, sub(s2, div(sub(spread, div(h_bar, set(4.0))), sub(sizes.mean, set(1.0)))));
        let b = mul(sizes.mean_over_mean_less_one, sub(spread, mul(sizes.heterozygote_weight, h_bar)));
        let c = div(h_bar, two);
        let zero = _mm512_setzero_pd();
        let present = !(_mm512_cmp_pd_mask::<_CMP_EQ_OQ>(p_bar, zero) & _mm512_cmp_pd_mask::<_CMP_EQ_OQ>(h_bar, zero));
        [a, b, c].map(|v| _mm512_maskz_mov_pd(present, v))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> impl proptest::strategy::Strategy<Value = BiallelicSample> {
        use proptest::prelude::*;
        (0u32..60, 0u32..60, 0u32..60).prop_map(|(hom_low, het, hom_high)| BiallelicSample {
            typed: hom_low + het + hom_high,
            low_copies: 2 * hom_low + het,
            high_copies: 2 * hom_high + het,
            heterozygotes: het,
        })
    }

    fn bits(k: Option<VarianceComponents>) -> Option<[u64; 3]> {
        k.map(|k| [k.between_samples.to_bits(), k.between_individuals.to_bits(), k.within_individuals.to_bits()])
    }

    proptest::proptest! {
        /// Every lane is bit-for-bit the scalar two-sample result (the scalar function is the
        /// reference; common practice), including samples with nothing typed or one
        /// individual, monomorphic pairs and pairs that share no allele.
        #[test]
        fn lanes_equal_the_scalar_components(
            first in proptest::collection::vec(sample(), LANES),
            second in proptest::collection::vec(sample(), LANES),
        ) {
            let pairs = PairLanes {
                first: std::array::from_fn(|l| first[l]),
                second: std::array::from_fn(|l| second[l]),
            };
            for (l, lane) in pair_components(&pairs).into_iter().enumerate() {
                let scalar = biallelic_components(&[pairs.first[l], pairs.second[l]]);
                proptest::prop_assert_eq!(bits(lane), bits(scalar), "lane {}", l);
            }
        }
    }
}
