//! Counting with jackknife lanes: the nine AND-and-count sums of a pair by jackknife group
//! (SWAR byte counts over the byte layout of [`super::layout`]), the moments with each group
//! left out, and one criterion's sums with the per-deletion sums kept as arrays.

use super::super::pairs::{Accumulator, PairSums, r2_from_spreads};
use super::super::panel::{LANES, LaneSums};

/// Blocks summed in 8-bit lanes before widening (each adds at most 8 per byte).
const BLOCKS_PER_FLUSH: usize = 31;

/// Population count of each byte of `x`, in that byte (SWAR; each result ≤ 8).
#[inline(always)]
fn byte_counts(x: u64) -> u64 {
    let x = x - ((x >> 1) & 0x5555_5555_5555_5555);
    let x = (x & 0x3333_3333_3333_3333) + ((x >> 2) & 0x3333_3333_3333_3333);
    (x + (x >> 4)) & 0x0f0f_0f0f_0f0f_0f0f
}

/// The nine counts of a pair (see the module doc): S, |low_a∧typed_b|, |high_a∧typed_b|,
/// |low_b∧typed_a|, |high_b∧typed_a|, then the four products of Σxy.
pub(super) const COUNTS: usize = 9;

/// Per-pair moments with each jackknife lane left out, and with none (index [`LANES`]).
pub(super) struct SlotMoments {
    samples: [f64; LANES + 1],
    covariance: [f64; LANES + 1],
    spread_x: [f64; LANES + 1],
    spread_y: [f64; LANES + 1],
}

/// The nine counts of pair (a, b) by jackknife lane (byte layout).
#[inline(always)]
pub(super) fn lane_counts(a: [&[u64]; 3], b: [&[u64]; 3]) -> [LaneSums; COUNTS] {
    let mut lanes = [[0u32; LANES]; COUNTS];
    let blocks = a[0].len() / 2;
    let mut block = 0;
    while block < blocks {
        let end = (block + BLOCKS_PER_FLUSH).min(blocks);
        let mut narrow = [[0u64; 2]; COUNTS];
        for word in 2 * block..2 * end {
            let (ta, la, ha) = (a[0][word], a[1][word], a[2][word]);
            let (tb, lb, hb) = (b[0][word], b[1][word], b[2][word]);
            let half = word & 1;
            narrow[0][half] += byte_counts(ta & tb);
            narrow[1][half] += byte_counts(la & tb);
            narrow[2][half] += byte_counts(ha & tb);
            narrow[3][half] += byte_counts(lb & ta);
            narrow[4][half] += byte_counts(hb & ta);
            narrow[5][half] += byte_counts(la & lb);
            narrow[6][half] += byte_counts(la & hb);
            narrow[7][half] += byte_counts(ha & lb);
            narrow[8][half] += byte_counts(ha & hb);
        }
        for (wide, part) in lanes.iter_mut().zip(&narrow) {
            for (lane, sum) in wide.iter_mut().enumerate() {
                *sum += ((part[lane / 8] >> (8 * (lane % 8))) & 0xff) as u32;
            }
        }
        block = end;
    }
    lanes
}

/// (S, Σx, Σx², Σy, Σy², Σxy) from the nine counts.
#[inline(always)]
pub(super) fn moments_of(c: [f64; COUNTS]) -> [f64; 6] {
    [c[0], c[1] + c[2], c[1] + 3.0 * c[2], c[3] + c[4], c[3] + 3.0 * c[4], c[5] + c[6] + c[7] + c[8]]
}

/// Covariance and spreads of one slot from its moments (exact integers as `f64`).
#[inline(always)]
pub(super) fn slot_quantities(m: [f64; 6]) -> [f64; 4] {
    let [n, sx, sxx, sy, syy, sxy] = m;
    [n, n * sxy - sx * sy, n * sxx - sx * sx, n * syy - sy * sy]
}

/// The per-slot quantities of a pair from its lane counts.
#[inline(always)]
#[allow(clippy::needless_range_loop)] // one index keeps the lanes and four arrays in step
pub(super) fn slot_moments(lanes: &[LaneSums; COUNTS], replicates: usize) -> SlotMoments {
    let mut totals = [0f64; COUNTS];
    for (total, lane) in totals.iter_mut().zip(lanes) {
        *total = lane.iter().sum::<u32>() as f64;
    }
    let mut out = SlotMoments {
        samples: [0.0; LANES + 1],
        covariance: [0.0; LANES + 1],
        spread_x: [0.0; LANES + 1],
        spread_y: [0.0; LANES + 1],
    };
    let full = slot_quantities(moments_of(totals));
    for slot in 0..=LANES {
        let quantities = if slot == LANES {
            full
        } else if slot < replicates {
            let left: [f64; COUNTS] = std::array::from_fn(|q| totals[q] - lanes[q][slot] as f64);
            slot_quantities(moments_of(left))
        } else {
            [0.0; 4]
        };
        out.samples[slot] = quantities[0];
        out.covariance[slot] = quantities[1];
        out.spread_x[slot] = quantities[2];
        out.spread_y[slot] = quantities[3];
    }
    out
}

/// One criterion's sums within a chunk, with the per-deletion sums kept as arrays (so a pair
/// adds them in a few vector operations); turned into [`PairSums`] at the end of the chunk.
pub(super) struct CriterionPart {
    pub(super) sums: PairSums,
    weighted_r2: [f64; LANES],
    weight: [f64; LANES],
    comparisons: [f64; LANES],
    per_sample: [f64; LANES],
    pairs: [u64; LANES],
}

impl CriterionPart {
    pub(super) fn new(loci: usize, replicates: usize) -> CriterionPart {
        CriterionPart {
            sums: PairSums::empty(loci, replicates),
            weighted_r2: [0.0; LANES],
            weight: [0.0; LANES],
            comparisons: [0.0; LANES],
            per_sample: [0.0; LANES],
            pairs: [0; LANES],
        }
    }

    pub(super) fn finish(mut self) -> PairSums {
        for (slot, sums) in self.sums.without_group.iter_mut().enumerate() {
            *sums = Accumulator {
                weighted_r2: self.weighted_r2[slot],
                weight: self.weight[slot],
                comparisons: self.comparisons[slot],
                comparisons_per_sample: self.per_sample[slot],
                pairs: self.pairs[slot],
            };
        }
        self.sums
    }
}

/// A pair's r̂² contribution per slot, as the byte path's [`Accumulator::add`] computes it with
/// one comparison: w = S², w·r̂², 1/S, and whether the slot is defined.
pub(super) struct PairWeights {
    weighted_r2: [f64; LANES + 1],
    weight: [f64; LANES + 1],
    per_sample: [f64; LANES + 1],
    defined: [bool; LANES + 1],
}

#[inline(always)]
pub(super) fn pair_weights(m: &SlotMoments) -> PairWeights {
    let mut out = PairWeights {
        weighted_r2: [0.0; LANES + 1],
        weight: [0.0; LANES + 1],
        per_sample: [0.0; LANES + 1],
        defined: [false; LANES + 1],
    };
    for slot in 0..=LANES {
        let samples = m.samples[slot];
        let r2 = r2_from_spreads(samples, m.covariance[slot], m.spread_x[slot], m.spread_y[slot]);
        let weight = 1.0 * samples * samples;
        let defined = !r2.is_nan();
        out.defined[slot] = defined;
        out.weight[slot] = if defined { weight } else { 0.0 };
        out.weighted_r2[slot] = if defined { weight * r2 } else { 0.0 };
        out.per_sample[slot] = if defined { 1.0 / samples } else { 0.0 };
    }
    out
}

/// Adds one pair's full-sample values to its row's sums and to locus b's (row `row_b` of the
/// criterion's panel), as the byte path does.
#[inline(always)]
fn add_full(sums: &mut PairSums, row: &mut Accumulator, row_b: usize, full: Option<(f64, f64, f64)>) {
    let Some((weighted_r2, weight, per_sample)) = full else {
        sums.undefined += 1;
        return;
    };
    row.add_weighted(weighted_r2, weight, 1.0, per_sample);
    sums.with_locus[row_b].add_weighted(weighted_r2, weight, 1.0, per_sample);
}

/// Adds one pair to criterion c's sums, as the byte path's `add_pair` does (one comparison).
#[inline(always)]
pub(super) fn add_to(part: &mut CriterionPart, row: &mut Accumulator, row_b: usize, w: &PairWeights) {
    let full = w.defined[LANES].then(|| (w.weighted_r2[LANES], w.weight[LANES], w.per_sample[LANES]));
    add_full(&mut part.sums, row, row_b, full);
    if full.is_none() {
        return;
    }
    for slot in 0..LANES {
        part.weighted_r2[slot] += w.weighted_r2[slot];
        part.weight[slot] += w.weight[slot];
        part.comparisons[slot] += if w.defined[slot] { 1.0 } else { 0.0 };
        part.per_sample[slot] += w.per_sample[slot];
        part.pairs[slot] += u64::from(w.defined[slot]);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn byte_counts_count_each_byte() {
        assert_eq!(byte_counts(0xff00_0f01_8000_0003), 0x0800_0401_0100_0002);
        assert_eq!(byte_counts(u64::MAX), 0x0808_0808_0808_0808);
    }
}
