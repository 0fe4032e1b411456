//! The dense chunk loop with AVX-512 (F, DQ, VPOPCNTDQ), in tiles of eight rows (first loci a)
//! by eight second loci b.
//!
//! **Counting.** For each row of a tile, locus a's words are broadcast against the eight loci's
//! word-major columns and counted with 512-bit population counts. Σxy takes three counts instead
//! of four: as every "two copies" bit is also a "one copy" bit, |low_a ∧ high_b| + |high_a ∧
//! low_b| = |(low_a ∧ high_b) ⊕ (high_a ∧ low_b)| + 2|high_a ∧ high_b|. The moments are the same
//! exact integers as the portable kernel's; w·r̂², w and 1/S follow with the IEEE operations of
//! [`r2_from_spreads`](super::super::pairs::r2_from_spreads) in the same order, lane by lane
//! (1/S from the panel's table of reciprocals, as the portable kernel takes it).
//!
//! **Sums in the portable loop's order.** Each second locus's sums (`with_locus`) receive the
//! tile's rows in row order, eight loci at a time. For the row sums the tile's values are
//! transposed (8 × 8 doubles), so that each b adds to the sums of eight rows at once, in b
//! order. A row's sums are added to the totals and to its own locus when the row is complete,
//! after every earlier row's pair with it, as in the portable loop. A pair a criterion excludes
//! is masked rather than added as +0.0, which is the same (the sums start at +0.0 and only grow),
//! so every sum sees the same additions in the same order and the results are the same bits
//! (`tests/packed_path.rs`).

use std::arch::x86_64::*;

use super::super::pairs::{Accumulator, PairSums};
use super::kernels::LocusSums;
use super::layout::VECTOR;
use super::{PackedPanel, for_each_criterion};

/// True when the processor has what [`chunk_sums`] needs.
pub fn available() -> bool {
    std::is_x86_feature_detected!("avx512f")
        && std::is_x86_feature_detected!("avx512dq")
        && std::is_x86_feature_detected!("avx512vpopcntdq")
}

/// The values of one row of a tile, by second locus (lane): w·r̂², w, 1/S, and which are
/// defined.
#[derive(Clone, Copy)]
struct Values {
    weighted_r2: __m512d,
    weight: __m512d,
    per_sample: __m512d,
    defined: __mmask8,
}

/// Sums of one criterion for eight rows (lane = row of the block) or eight second loci (lane =
/// locus of the tile).
#[derive(Clone, Copy)]
struct Lanes {
    weighted_r2: __m512d,
    weight: __m512d,
    per_sample: __m512d,
}

impl Lanes {
    #[target_feature(enable = "avx512f")]
    #[inline]
    fn zero() -> Lanes {
        Lanes { weighted_r2: _mm512_setzero_pd(), weight: _mm512_setzero_pd(), per_sample: _mm512_setzero_pd() }
    }

    /// Adds the lanes of `mask` (the same additions as the portable loop, in the same order).
    #[target_feature(enable = "avx512f")]
    #[inline]
    fn add(&mut self, mask: __mmask8, weighted_r2: __m512d, weight: __m512d, per_sample: __m512d) {
        self.weighted_r2 = _mm512_mask_add_pd(self.weighted_r2, mask, self.weighted_r2, weighted_r2);
        self.weight = _mm512_mask_add_pd(self.weight, mask, self.weight, weight);
        self.per_sample = _mm512_mask_add_pd(self.per_sample, mask, self.per_sample, per_sample);
    }

    /// The eight lanes of each sum: w·r̂², w and 1/S.
    #[target_feature(enable = "avx512f")]
    #[inline]
    fn lanes(&self) -> [[f64; VECTOR]; 3] {
        let mut out = [[0.0; VECTOR]; 3];
        for (lanes, sum) in out.iter_mut().zip([self.weighted_r2, self.weight, self.per_sample]) {
            // SAFETY: each array holds eight doubles.
            unsafe { _mm512_storeu_pd(lanes.as_mut_ptr(), sum) };
        }
        out
    }
}

/// Criteria summed together in one pass over a block's tiles (their sums stay in registers);
/// a block with more runs one pass per group.
const GROUP: usize = 4;

/// Every pair whose first locus is in `rows`, summed per criterion: the same [`PairSums`], to
/// the last bit, as the portable dense loop.
///
/// # Safety
/// The processor must have AVX-512 F, DQ and VPOPCNTDQ ([`available`]).
#[target_feature(enable = "avx512f,avx512dq,avx512vpopcntdq,avx2,popcnt")]
pub unsafe fn chunk_sums(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool) -> Vec<PairSums> {
    let stride = panel.stride;
    // Per locus, padded: criteria bits, and chromosome id (-1 when unknown, never "the same").
    let members: Vec<u64> = (0..stride).map(|b| panel.members.get(b).copied().unwrap_or(0)).collect();
    let chromosomes: Vec<i64> = (0..stride)
        .map(|b| match panel.loci.get(b).and_then(|l| l.chromosome) {
            Some(id) if skip => i64::from(id),
            _ => -1,
        })
        .collect();
    let chunk = Chunk { panel, near: Near::new(&panel.reciprocals), members, chromosomes };
    let mut sums = Sums {
        pairs: panel.loci_in.iter().map(|&n| PairSums::empty(n, 0)).collect(),
        columns: (0..panel.criteria).map(|_| LocusSums::new(stride)).collect(),
    };
    let mut active: Vec<usize> = Vec::with_capacity(panel.criteria);
    let mut a0 = rows.start;
    while a0 < rows.end {
        let block = Block::new(&chunk.members, a0, (rows.end - a0).min(VECTOR));
        active.clear();
        for_each_criterion(block.members.iter().fold(0, |all, m| all | m), |c| active.push(c));
        for group in active.chunks(GROUP) {
            match *group {
                [a] => chunk.block_sums([a], &block, &mut sums),
                [a, b] => chunk.block_sums([a, b], &block, &mut sums),
                [a, b, c] => chunk.block_sums([a, b, c], &block, &mut sums),
                [a, b, c, d] => chunk.block_sums([a, b, c, d], &block, &mut sums),
                _ => unreachable!("groups hold one to {GROUP} criteria"),
            }
        }
        a0 += block.rows;
    }
    for (c, (pairs, columns)) in sums.pairs.iter_mut().zip(&sums.columns).enumerate() {
        columns.write_into(panel, c, &mut pairs.with_locus);
    }
    sums.pairs
}

/// What every block of a chunk reads.
struct Chunk<'a> {
    panel: &'a PackedPanel,
    near: Near,
    /// Criteria bits per locus, padded to the stride.
    members: Vec<u64>,
    /// Chromosome id per locus, -1 when unknown or when same-chromosome pairs are kept, padded.
    chromosomes: Vec<i64>,
}

/// The chunk's sums: per criterion its [`PairSums`] (totals and counts), and its sums by second
/// locus, padded to whole vectors.
struct Sums {
    pairs: Vec<PairSums>,
    columns: Vec<LocusSums>,
}

/// Up to eight rows (first loci) summed together.
struct Block {
    /// First row.
    a0: usize,
    /// Rows in the block (8, or fewer at the chunk's end).
    rows: usize,
    /// Criteria bits of each row (0 past the block).
    members: [u64; VECTOR],
}

impl Block {
    fn new(members: &[u64], a0: usize, rows: usize) -> Block {
        Block { a0, rows, members: std::array::from_fn(|i| if i < rows { members[a0 + i] } else { 0 }) }
    }

    /// The rows criterion c keeps.
    fn rows_of(&self, c: usize) -> __mmask8 {
        (0..VECTOR).fold(0u8, |mask, i| mask | (((self.members[i] >> c & 1) as u8) << i))
    }
}

impl Chunk<'_> {
    /// Every pair of the block's rows for the K criteria `criteria`: tile by tile, each row's
    /// values, then the second loci's sums in row order, then the row sums in b order over the
    /// transposed tile; at the end each row's sums go to the totals and to its own locus.
    #[target_feature(enable = "avx512f,avx512dq,avx512vpopcntdq")]
    #[inline]
    fn block_sums<const K: usize>(&self, criteria: [usize; K], block: &Block, sums: &mut Sums) {
        let loci = self.panel.loci.len();
        let row_masks: [__mmask8; K] = criteria.map(|c| block.rows_of(c));
        let mut row_sums = [Lanes::zero(); K];
        let mut row_pairs = [[0u64; VECTOR]; K];
        let (mut same_pairs, mut undefined) = ([0u64; K], [0u64; K]);
        let one = _mm512_set1_epi64(1);
        let zero = _mm512_setzero_pd();
        let mut b0 = block.a0;
        while b0 < loci {
            let left = loci - b0;
            let valid: __mmask8 = if left >= VECTOR { 0xff } else { ((1u16 << left) - 1) as u8 };
            // SAFETY: `members` and `chromosomes` have `stride` ≥ b0 + 8 entries.
            let (members, chromosomes) = unsafe {
                (
                    _mm512_loadu_si512(self.members.as_ptr().add(b0).cast()),
                    _mm512_loadu_si512(self.chromosomes.as_ptr().add(b0).cast()),
                )
            };
            let column_masks: [__mmask8; K] =
                criteria.map(|c| _mm512_test_epi64_mask(members, _mm512_set1_epi64(1 << c)) & valid);
            // Every row's values first: eight independent chains of work for the processor to
            // overlap, before the additions that depend on them.
            let mut values = [Values { weighted_r2: zero, weight: zero, per_sample: zero, defined: 0 }; VECTOR];
            for (i, out) in values.iter_mut().enumerate().take(block.rows) {
                // SAFETY: this function has the features `pair_values` needs; b0 < loci.
                *out = unsafe { pair_values(self.panel, &self.near, block.a0 + i, b0) };
            }
            let mut columns: [(Lanes, __m512i); K] = criteria.map(|c| load(&sums.columns[c], b0));
            for (i, v) in values.iter_mut().enumerate().take(block.rows) {
                let a = block.a0 + i;
                // Lanes past locus a (only the first tile of a block holds some b ≤ a).
                let after = if b0 > a { 0xff } else { !(((1u16 << (a - b0 + 1)) - 1) as u8) };
                let lanes = valid & after;
                let same = if self.chromosomes[a] >= 0 {
                    _mm512_cmpeq_epi64_mask(chromosomes, _mm512_set1_epi64(self.chromosomes[a])) & lanes
                } else {
                    0
                };
                let kept = lanes & !same;
                let included = kept & v.defined;
                for k in 0..K {
                    if row_masks[k] >> i & 1 == 0 {
                        continue;
                    }
                    let mask = included & column_masks[k];
                    same_pairs[k] += u64::from((same & column_masks[k]).count_ones());
                    undefined[k] += u64::from((kept & !v.defined & column_masks[k]).count_ones());
                    row_pairs[k][i] += u64::from(mask.count_ones());
                    let (lanes, pairs) = &mut columns[k];
                    lanes.add(mask, v.weighted_r2, v.weight, v.per_sample);
                    *pairs = _mm512_mask_add_epi64(*pairs, mask, *pairs, one);
                }
                // Excluded pairs as +0.0 for the row sums.
                v.weighted_r2 = _mm512_maskz_mov_pd(included, v.weighted_r2);
                v.weight = _mm512_maskz_mov_pd(included, v.weight);
                v.per_sample = _mm512_maskz_mov_pd(included, v.per_sample);
            }
            for (&c, column) in criteria.iter().zip(&columns) {
                store(&mut sums.columns[c], b0, column);
            }
            let weighted_r2 = transpose(values.map(|v| v.weighted_r2));
            let weight = transpose(values.map(|v| v.weight));
            let per_sample = transpose(values.map(|v| v.per_sample));
            for j in 0..VECTOR.min(left) {
                for k in 0..K {
                    // The block's rows this criterion keeps, when it keeps locus b0 + j.
                    let mask = row_masks[k] & 0u8.wrapping_sub(column_masks[k] >> j & 1);
                    row_sums[k].add(mask, weighted_r2[j], weight[j], per_sample[j]);
                }
            }
            b0 += VECTOR;
        }
        for (k, &c) in criteria.iter().enumerate() {
            let pairs = &mut sums.pairs[c];
            pairs.same_chromosome += same_pairs[k];
            pairs.undefined += undefined[k];
            let lanes = row_sums[k].lanes();
            for i in (0..block.rows).filter(|&i| row_masks[k] >> i & 1 == 1) {
                let row = Accumulator {
                    weighted_r2: lanes[0][i],
                    weight: lanes[1][i],
                    comparisons: row_pairs[k][i] as f64,
                    comparisons_per_sample: lanes[2][i],
                    pairs: row_pairs[k][i],
                };
                pairs.total.merge(&row);
                sums.columns[c].add_row(block.a0 + i, &row);
            }
        }
    }
}

/// A criterion's sums of the eight second loci from `b0`.
#[target_feature(enable = "avx512f")]
#[inline]
fn load(sums: &LocusSums, b0: usize) -> (Lanes, __m512i) {
    // SAFETY: the arrays have `stride` ≥ b0 + 8 entries.
    unsafe {
        let lanes = Lanes {
            weighted_r2: _mm512_loadu_pd(sums.weighted_r2.as_ptr().add(b0)),
            weight: _mm512_loadu_pd(sums.weight.as_ptr().add(b0)),
            per_sample: _mm512_loadu_pd(sums.per_sample.as_ptr().add(b0)),
        };
        (lanes, _mm512_loadu_si512(sums.pairs.as_ptr().add(b0).cast()))
    }
}

/// Writes back what [`load`] read.
#[target_feature(enable = "avx512f")]
#[inline]
fn store(sums: &mut LocusSums, b0: usize, (lanes, pairs): &(Lanes, __m512i)) {
    // SAFETY: as in [`load`].
    unsafe {
        _mm512_storeu_pd(sums.weighted_r2.as_mut_ptr().add(b0), lanes.weighted_r2);
        _mm512_storeu_pd(sums.weight.as_mut_ptr().add(b0), lanes.weight);
        _mm512_storeu_pd(sums.per_sample.as_mut_ptr().add(b0), lanes.per_sample);
        _mm512_storeu_si512(sums.pairs.as_mut_ptr().add(b0).cast(), *pairs);
    }
}

/// 1/S for the sixteen largest S (the group's size n and the fifteen below it), the values of
/// the panel's table of reciprocals: a two-register lookup where a gather would wait on memory.
struct Near {
    /// Entry k is 1/(n − k) (0.0 past S = 0).
    reciprocals: [f64; 16],
    /// The group's size n.
    samples: i64,
}

impl Near {
    fn new(reciprocals: &[f64]) -> Near {
        let samples = reciprocals.len() - 1;
        Near {
            reciprocals: std::array::from_fn(|k| samples.checked_sub(k).map_or(0.0, |s| reciprocals[s])),
            samples: samples as i64,
        }
    }

    /// 1/S of each lane from the table of reciprocals: by a lookup in two registers when every
    /// S is within 15 of the group's size (the usual case: few individuals untyped), else by a
    /// gather.
    #[target_feature(enable = "avx512f")]
    #[inline]
    fn reciprocals(&self, samples: __m512i, table: &[f64]) -> __m512d {
        let below = _mm512_sub_epi64(_mm512_set1_epi64(self.samples), samples);
        if _mm512_cmpgt_epu64_mask(below, _mm512_set1_epi64(15)) == 0 {
            // SAFETY: the array holds sixteen doubles.
            let (low, high) = unsafe {
                (_mm512_loadu_pd(self.reciprocals.as_ptr()), _mm512_loadu_pd(self.reciprocals.as_ptr().add(8)))
            };
            return _mm512_permutex2var_pd(low, below, high);
        }
        // SAFETY: every lane's S is at most the group's size, the last index of `table`.
        unsafe { _mm512_i64gather_pd::<8>(samples, table.as_ptr().cast()) }
    }
}

/// The values of pairs (a, b0..b0 + 8): the counts of the module doc, then w·r̂², w and 1/S with
/// the portable kernel's operations in its order; lanes with r̂² undefined hold 0.0.
///
/// # Safety
/// The processor must have AVX-512 F, DQ and VPOPCNTDQ, and b0 < the panel's loci.
#[target_feature(enable = "avx512f,avx512dq,avx512vpopcntdq")]
#[inline]
unsafe fn pair_values(panel: &PackedPanel, near: &Near, a: usize, b0: usize) -> Values {
    let (words, stride) = (panel.words, panel.stride);
    let column = |plane: usize, word: usize, b: usize| (plane * words + word) * stride + b;
    let zero = _mm512_setzero_si512();
    let (mut n, mut x1, mut x2, mut y1, mut y2, mut low, mut high, mut cross) =
        (zero, zero, zero, zero, zero, zero, zero, zero);
    let count = |sum: __m512i, bits: __m512i| _mm512_add_epi64(sum, _mm512_popcnt_epi64(bits));
    for word in 0..words {
        let broadcast = |plane: usize| _mm512_set1_epi64(panel.columns[column(plane, word, a)] as i64);
        // SAFETY: `columns` has `stride` ≥ b0 + 8 entries per row (b0 < loci, and the stride is the
        // loci rounded up to 8, plus 8).
        let load =
            |plane: usize| unsafe { _mm512_loadu_si512(panel.columns.as_ptr().add(column(plane, word, b0)).cast()) };
        let (ta, la, ha) = (broadcast(0), broadcast(1), broadcast(2));
        let (tb, lb, hb) = (load(0), load(1), load(2));
        n = count(n, _mm512_and_si512(ta, tb));
        x1 = count(x1, _mm512_and_si512(la, tb));
        x2 = count(x2, _mm512_and_si512(ha, tb));
        y1 = count(y1, _mm512_and_si512(lb, ta));
        y2 = count(y2, _mm512_and_si512(hb, ta));
        low = count(low, _mm512_and_si512(la, lb));
        high = count(high, _mm512_and_si512(ha, hb));
        // (la ∧ hb) ⊕ (ha ∧ lb): truth table 0x78 is A ⊕ (B ∧ C) for (A, B, C) = (la ∧ hb, ha, lb).
        cross = count(cross, _mm512_ternarylogic_epi64::<0x78>(_mm512_and_si512(la, hb), ha, lb));
    }
    // Moments as exact integers (each far below 2⁵³), then as doubles: the same values as the
    // portable kernel's sums of counts in double precision.
    let add = _mm512_add_epi64;
    let sx = add(x1, x2);
    let sxx = add(add(x1, x2), add(x2, x2));
    let sy = add(y1, y2);
    let syy = add(add(y1, y2), add(y2, y2));
    let sxy = add(add(low, cross), add(high, add(high, high)));
    let samples = n;
    let [n, sx, sxx, sy, syy, sxy] = [n, sx, sxx, sy, syy, sxy].map(|m| _mm512_cvtepi64_pd(m));
    let covariance = _mm512_sub_pd(_mm512_mul_pd(n, sxy), _mm512_mul_pd(sx, sy));
    let spread_x = _mm512_sub_pd(_mm512_mul_pd(n, sxx), _mm512_mul_pd(sx, sx));
    let spread_y = _mm512_sub_pd(_mm512_mul_pd(n, syy), _mm512_mul_pd(sy, sy));
    let less = _mm512_sub_pd(n, _mm512_set1_pd(1.0));
    let numerator = _mm512_mul_pd(_mm512_mul_pd(covariance, covariance), _mm512_mul_pd(n, n));
    let denominator = _mm512_mul_pd(_mm512_mul_pd(spread_x, spread_y), _mm512_mul_pd(less, less));
    let r2 = _mm512_div_pd(numerator, denominator);
    let weight = _mm512_mul_pd(_mm512_mul_pd(_mm512_set1_pd(1.0), n), n);
    let weighted = _mm512_mul_pd(weight, r2);
    let per_sample = near.reciprocals(samples, &panel.reciprocals);
    let zero = _mm512_setzero_pd();
    let defined = _mm512_cmp_pd_mask::<_CMP_GE_OQ>(n, _mm512_set1_pd(2.0))
        & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(spread_x, zero)
        & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(spread_y, zero);
    Values {
        weighted_r2: _mm512_maskz_mov_pd(defined, weighted),
        weight: _mm512_maskz_mov_pd(defined, weight),
        per_sample: _mm512_maskz_mov_pd(defined, per_sample),
        defined,
    }
}

/// The 8 × 8 transpose of doubles: lane j of output i is lane i of input j.
#[target_feature(enable = "avx512f")]
#[inline]
fn transpose(r: [__m512d; VECTOR]) -> [__m512d; VECTOR] {
    {
        // Pairs of rows interleaved: t0 = r0₀ r1₀ r0₂ r1₂ r0₄ r1₄ r0₆ r1₆, t1 the odd lanes.
        let (t0, t1) = (_mm512_unpacklo_pd(r[0], r[1]), _mm512_unpackhi_pd(r[0], r[1]));
        let (t2, t3) = (_mm512_unpacklo_pd(r[2], r[3]), _mm512_unpackhi_pd(r[2], r[3]));
        let (t4, t5) = (_mm512_unpacklo_pd(r[4], r[5]), _mm512_unpackhi_pd(r[4], r[5]));
        let (t6, t7) = (_mm512_unpacklo_pd(r[6], r[7]), _mm512_unpackhi_pd(r[6], r[7]));
        // Four rows together: u0 = r0₀ r1₀ r2₀ r3₀ r0₄ r1₄ r2₄ r3₄ and so on.
        let low = _mm512_set_epi64(13, 12, 5, 4, 9, 8, 1, 0);
        let high = _mm512_set_epi64(15, 14, 7, 6, 11, 10, 3, 2);
        let u = [
            _mm512_permutex2var_pd(t0, low, t2),
            _mm512_permutex2var_pd(t0, high, t2),
            _mm512_permutex2var_pd(t1, low, t3),
            _mm512_permutex2var_pd(t1, high, t3),
            _mm512_permutex2var_pd(t4, low, t6),
            _mm512_permutex2var_pd(t4, high, t6),
            _mm512_permutex2var_pd(t5, low, t7),
            _mm512_permutex2var_pd(t5, high, t7),
        ];
        // Eight rows: the lower halves give lanes 0, 2, 1, 3 and the upper halves 4, 6, 5, 7.
        [
            _mm512_shuffle_f64x2::<0x44>(u[0], u[4]),
            _mm512_shuffle_f64x2::<0x44>(u[2], u[6]),
            _mm512_shuffle_f64x2::<0x44>(u[1], u[5]),
            _mm512_shuffle_f64x2::<0x44>(u[3], u[7]),
            _mm512_shuffle_f64x2::<0xee>(u[0], u[4]),
            _mm512_shuffle_f64x2::<0xee>(u[2], u[6]),
            _mm512_shuffle_f64x2::<0xee>(u[1], u[5]),
            _mm512_shuffle_f64x2::<0xee>(u[3], u[7]),
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check: the transpose moves lane j of row i to lane i of row j, for all 64 cells
    /// (common practice: a transpose is its definition, cell by cell).
    #[test]
    fn transpose_swaps_rows_and_lanes() {
        if !available() {
            eprintln!("no AVX-512 here: the tiled kernel does not run");
            return;
        }
        let cell = |i: usize, j: usize| (10 * i + j) as f64;
        let rows: [__m512d; VECTOR] = std::array::from_fn(|i| {
            let lanes: [f64; VECTOR] = std::array::from_fn(|j| cell(i, j));
            // SAFETY: AVX-512 F is available (checked above); `lanes` holds eight doubles.
            unsafe { _mm512_loadu_pd(lanes.as_ptr()) }
        });
        // SAFETY: AVX-512 F is available (checked above).
        let columns = unsafe { transpose(rows) };
        for (j, column) in columns.iter().enumerate() {
            let mut out = [0.0; VECTOR];
            // SAFETY: as above.
            unsafe { _mm512_storeu_pd(out.as_mut_ptr(), *column) };
            let expected: [f64; VECTOR] = std::array::from_fn(|i| cell(i, j));
            assert_eq!(out, expected, "column {j}");
        }
    }
}
