//! The portable dense kernel: without jackknife lanes, the values of every pair of a row (one
//! pair at a time with `count_ones`; the AVX-512 loop is [`super::tiles`]), then each criterion's
//! sums in branch-free vector-friendly loops.

use super::super::pairs::{Accumulator, PairSums, r2_from_spreads};
use super::lanes::{COUNTS, moments_of, slot_quantities};
use super::{Kernel, PackedPanel, for_each_criterion};

/// The nine counts of pair (a, b) over all individuals (dense layout).
#[inline(always)]
fn dense_counts(a: [&[u64]; 3], b: [&[u64]; 3]) -> [u32; COUNTS] {
    let mut counts = [0u32; COUNTS];
    for word in 0..a[0].len() {
        let (ta, la, ha) = (a[0][word], a[1][word], a[2][word]);
        let (tb, lb, hb) = (b[0][word], b[1][word], b[2][word]);
        counts[0] += (ta & tb).count_ones();
        counts[1] += (la & tb).count_ones();
        counts[2] += (ha & tb).count_ones();
        counts[3] += (lb & ta).count_ones();
        counts[4] += (hb & ta).count_ones();
        counts[5] += (la & lb).count_ones();
        counts[6] += (la & hb).count_ones();
        counts[7] += (ha & lb).count_ones();
        counts[8] += (ha & hb).count_ones();
    }
    counts
}

/// The full-sample values of the pairs of one row, by second locus b (zero-padded to the
/// panel's `stride`): w·r̂², w = S², 1/S and whether r̂² is defined (1) or not (0).
pub(super) struct RowValues {
    weighted_r2: Vec<f64>,
    weight: Vec<f64>,
    per_sample: Vec<f64>,
    defined: Vec<u8>,
}

impl RowValues {
    fn new(length: usize) -> RowValues {
        RowValues {
            weighted_r2: vec![0.0; length],
            weight: vec![0.0; length],
            per_sample: vec![0.0; length],
            defined: vec![0; length],
        }
    }
}

/// Per-locus sums of one criterion in a chunk, by panel locus (not criterion row), kept as
/// arrays so a row adds its pairs to them in vector operations; pairs a criterion excludes add
/// +0.0, which leaves a sum's bits unchanged (the sums start at +0.0 and only grow).
pub(super) struct LocusSums {
    pub(super) weighted_r2: Vec<f64>,
    pub(super) weight: Vec<f64>,
    pub(super) per_sample: Vec<f64>,
    pub(super) pairs: Vec<u64>,
}

impl LocusSums {
    pub(super) fn new(loci: usize) -> LocusSums {
        LocusSums {
            weighted_r2: vec![0.0; loci],
            weight: vec![0.0; loci],
            per_sample: vec![0.0; loci],
            pairs: vec![0; loci],
        }
    }

    /// Adds a row's sums to its first locus.
    pub(super) fn add_row(&mut self, locus: usize, row: &Accumulator) {
        self.weighted_r2[locus] += row.weighted_r2;
        self.weight[locus] += row.weight;
        self.per_sample[locus] += row.comparisons_per_sample;
        self.pairs[locus] += row.pairs;
    }

    /// Into the criterion's `with_locus` (by its rows); with one comparison per pair, the
    /// comparisons are the pair counts (sums of 1.0, exact).
    pub(super) fn write_into(&self, panel: &PackedPanel, criterion: usize, with_locus: &mut [Accumulator]) {
        for locus in 0..panel.loci.len() {
            if panel.loci[locus].member >> criterion & 1 == 1 {
                with_locus[panel.row(locus, criterion)] = Accumulator {
                    weighted_r2: self.weighted_r2[locus],
                    weight: self.weight[locus],
                    comparisons: self.pairs[locus] as f64,
                    comparisons_per_sample: self.per_sample[locus],
                    pairs: self.pairs[locus],
                };
            }
        }
    }
}

/// The chunk loop without jackknife lanes: per row, the kernel's values for every second
/// locus, then per criterion the second loci's sums in vector operations, then the row sums of
/// all criteria in one pass over b (in b order, as the byte path adds them).
#[inline(always)]
#[allow(clippy::needless_range_loop)] // b indexes both `same` and the panel's loci
pub(super) fn dense_chunk_sums(
    panel: &PackedPanel,
    rows: std::ops::Range<usize>,
    skip: bool,
    kernel: Kernel,
) -> Vec<PairSums> {
    #[cfg(target_arch = "x86_64")]
    if kernel == Kernel::Avx512 {
        // SAFETY: `Kernel::Avx512` is only chosen where the processor has AVX-512 F, DQ and
        // VPOPCNTDQ ([`super::tiles::available`]).
        return unsafe { super::tiles::chunk_sums(panel, rows, skip) };
    }
    let _ = kernel;
    let loci = panel.loci.len();
    let mut sums: Vec<PairSums> = panel.loci_in.iter().map(|&n| PairSums::empty(n, 0)).collect();
    let mut locus_sums: Vec<LocusSums> = (0..panel.criteria).map(|_| LocusSums::new(loci)).collect();
    let mut values = RowValues::new(panel.stride.max(loci));
    let mut same = vec![0u8; loci];
    let mut include: Vec<Vec<u8>> = vec![vec![0; loci]; panel.criteria];
    let mut active: Vec<usize> = Vec::with_capacity(panel.criteria);
    for a in rows {
        dense_row_values(panel, a, &mut values);
        let chromosome_a = panel.loci[a].chromosome;
        for b in a + 1..loci {
            same[b] = u8::from(skip && chromosome_a.is_some() && panel.loci[b].chromosome == chromosome_a);
        }
        active.clear();
        for_each_criterion(panel.loci[a].member, |c| active.push(c));
        for &c in &active {
            let counts = include_and_add(panel, (a, c), (&values, &same), &mut include[c], &mut locus_sums[c]);
            sums[c].same_chromosome += counts.0;
            sums[c].undefined += counts.1;
        }
        for group in active.chunks(ROW_CHAINS) {
            let rows = row_sums(&values, group, &include, a + 1..loci);
            for (&c, row) in group.iter().zip(&rows) {
                sums[c].total.merge(row);
                locus_sums[c].add_row(a, row);
            }
        }
    }
    for (c, (sums, locus_sums)) in sums.iter_mut().zip(&locus_sums).enumerate() {
        locus_sums.write_into(panel, c, &mut sums.with_locus);
    }
    sums
}

/// Criteria whose row sums run side by side (independent chains of additions).
const ROW_CHAINS: usize = 4;

/// The sums of a row's included pairs for up to [`ROW_CHAINS`] criteria, each added in b
/// order (the same sequence of additions as [`Accumulator::add_weighted`] from zero; an
/// excluded pair adds +0.0, which changes no bits), without branches.
#[inline(always)]
fn row_sums(
    values: &RowValues,
    criteria: &[usize],
    include: &[Vec<u8>],
    seconds: std::ops::Range<usize>,
) -> Vec<Accumulator> {
    let mut weighted_r2 = [0.0f64; ROW_CHAINS];
    let mut weight = [0.0f64; ROW_CHAINS];
    let mut per_sample = [0.0f64; ROW_CHAINS];
    let mut pairs = [0u64; ROW_CHAINS];
    let none = vec![0u8; 0];
    let flags: [&[u8]; ROW_CHAINS] =
        std::array::from_fn(|k| criteria.get(k).map_or(none.as_slice(), |&c| include[c].as_slice()));
    let used = criteria.len();
    for b in seconds {
        let (w, wr, ps) = (values.weight[b], values.weighted_r2[b], values.per_sample[b]);
        for k in 0..ROW_CHAINS {
            if k < used {
                let on = flags[k][b] == 1;
                weighted_r2[k] += if on { wr } else { 0.0 };
                weight[k] += if on { w } else { 0.0 };
                per_sample[k] += if on { ps } else { 0.0 };
                pairs[k] += u64::from(flags[k][b]);
            }
        }
    }
    (0..used)
        .map(|k| Accumulator {
            weighted_r2: weighted_r2[k],
            weight: weight[k],
            comparisons: pairs[k] as f64,
            comparisons_per_sample: per_sample[k],
            pairs: pairs[k],
        })
        .collect()
}

/// For criterion c and row a: which pairs (a, b) it sums (`include[b]`), their values added to
/// locus b's sums, and the counts of its pairs skipped as same-chromosome and undefined.
#[inline(always)]
#[allow(clippy::needless_range_loop)] // one index keeps ten arrays in step
fn include_and_add(
    panel: &PackedPanel,
    (a, c): (usize, usize),
    (values, same): (&RowValues, &[u8]),
    include: &mut [u8],
    sums: &mut LocusSums,
) -> (u64, u64) {
    // Every array cut to the second loci b > a, to one length, so the loop has no bounds
    // checks and compiles to vector operations (each b is independent of the others).
    let seconds = a + 1..panel.loci.len();
    let members = &panel.members[seconds.clone()];
    let n = members.len();
    let (same, defined) = (&same[seconds.start..][..n], &values.defined[seconds.start..][..n]);
    let (weighted_r2, weight) = (&values.weighted_r2[seconds.start..][..n], &values.weight[seconds.start..][..n]);
    let per_sample = &values.per_sample[seconds.start..][..n];
    let include = &mut include[seconds.start..][..n];
    let (sum_weighted_r2, sum_weight) =
        (&mut sums.weighted_r2[seconds.start..][..n], &mut sums.weight[seconds.start..][..n]);
    let (sum_per_sample, sum_pairs) =
        (&mut sums.per_sample[seconds.start..][..n], &mut sums.pairs[seconds.start..][..n]);
    let (mut same_count, mut undefined) = (0u64, 0u64);
    for b in 0..n {
        let member = (members[b] >> c & 1) as u8;
        let kept = member & (1 - same[b]);
        let included = kept & defined[b];
        same_count += u64::from(member & same[b]);
        undefined += u64::from(kept & (1 - defined[b]));
        include[b] = included;
        let on = included == 1;
        sum_weighted_r2[b] += if on { weighted_r2[b] } else { 0.0 };
        sum_weight[b] += if on { weight[b] } else { 0.0 };
        sum_per_sample[b] += if on { per_sample[b] } else { 0.0 };
        sum_pairs[b] += u64::from(included);
    }
    (same_count, undefined)
}

/// The full-sample values (w·r̂², w, 1/S) of pairs (a, b) for every b > a, into `values[b]`.
#[inline(always)]
fn dense_row_values(panel: &PackedPanel, a: usize, values: &mut RowValues) {
    let planes_a = panel.planes(a);
    for b in a + 1..panel.loci.len() {
        let full = full_weights(dense_counts(planes_a, panel.planes(b)), &panel.reciprocals);
        let (weighted_r2, weight, per_sample) = full.unwrap_or((0.0, 0.0, 0.0));
        values.weighted_r2[b] = weighted_r2;
        values.weight[b] = weight;
        values.per_sample[b] = per_sample;
        values.defined[b] = u8::from(full.is_some());
    }
}

/// (w·r̂², w, 1/S) of a pair over all its individuals, `None` when r̂² is undefined.
#[inline(always)]
fn full_weights(counts: [u32; COUNTS], reciprocals: &[f64]) -> Option<(f64, f64, f64)> {
    let [samples, covariance, spread_x, spread_y] = slot_quantities(moments_of(counts.map(f64::from)));
    let r2 = r2_from_spreads(samples, covariance, spread_x, spread_y);
    let weight = 1.0 * samples * samples;
    (!r2.is_nan()).then(|| (weight * r2, weight, reciprocals[counts[0] as usize]))
}
