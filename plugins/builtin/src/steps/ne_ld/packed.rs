//! The packed biallelic path of the pair loop: two bits per genotype plus a typed mask, and one
//! pass over the pairs for every rare-allele criterion at once.
//!
//! **When.** Every candidate locus has at most two alleles in the group (SNP panels). A biallelic
//! locus is then either in a criterion's panel with both alleles kept (one dosage vector, one
//! comparison) or out of it, and a pair's r̂² does not depend on the criterion: it is computed
//! once and added to every criterion that keeps both loci. Otherwise the general byte path
//! ([`super::pairs`]) runs, criterion by criterion.
//!
//! **Planes.** Per locus, three bit planes over the group's individuals in jackknife order:
//! typed, "carries at least one copy" (`low`) and "carries two copies" (`high`) of the locus's
//! first allele, so the dosage is `low + high` and 0 where untyped. Over the individuals typed
//! at both loci, S = |typed_a ∧ typed_b|, Σx = |low_a ∧ typed_b| + |high_a ∧ typed_b|,
//! Σx² = |low_a ∧ typed_b| + 3|high_a ∧ typed_b| (likewise for y) and Σxy = |low_a ∧ low_b| +
//! |low_a ∧ high_b| + |high_a ∧ low_b| + |high_a ∧ high_b|: nine AND-and-count operations per word.
//!
//! **Jackknife lanes.** Without the jackknife over individuals the planes are dense and counted
//! with `count_ones`. With G ≥ 2 jackknife groups, individual k of the order (group k mod G)
//! sits in byte k mod G of a 128-bit block, so one SWAR byte count ([`byte_counts`]) gives the
//! sixteen per-group partial sums of a word pair at once, and leaving a group out is one
//! subtraction, as in the byte path.
//!
//! **Identical results.** The moments are the same exact integers as the byte path's; r̂² comes
//! from the same [`r2_from_spreads`]; the pairs are cut into the same chunks ([`ChunkCuts`]) and
//! added to each criterion's sums in the same order with the same operations. Estimates are
//! therefore bit-identical to the general path (property tests in `tests.rs`).
//!
//! **Speed.** The chunk loop is compiled twice, for the baseline target and with AVX2 and
//! POPCNT enabled, and the second is chosen at run time when the processor has them. Rust never
//! fuses or reorders floating-point operations, so both give the same bits.

use popgauge_abi::{AlleleCounts, GenotypeView, Group, LocusIdx, SampleIdx};
use rayon::prelude::*;

use super::pairs::{Accumulator, ChunkCuts, PairSums, r2_from_spreads};
use super::panel::{Criterion, LANES, LaneSums};

/// Most criteria the packed path serves in one pass (one bit each in a locus's membership).
pub const MAX_CRITERIA: usize = 64;

/// Blocks summed in 8-bit lanes before widening (each adds at most 8 per byte).
const BLOCKS_PER_FLUSH: usize = 31;

/// Pairs one vector step of the AVX-512 kernel handles (eight 64-bit lanes).
const VECTOR: usize = 8;

/// No row: the locus is not in that criterion's panel.
const NO_ROW: u32 = u32::MAX;

/// One locus of the packed panel (in the panel of at least one criterion).
#[derive(Debug, Clone)]
pub struct PackedLocus {
    /// The locus in the view.
    pub view_locus: LocusIdx,
    /// Chromosome id, when known.
    pub chromosome: Option<u32>,
    /// Bit c set when criterion c keeps both alleles.
    pub member: u64,
}

/// The packed panel of one group: every locus kept by some criterion, its planes and its row in
/// each criterion's panel.
#[derive(Debug, Clone)]
pub struct PackedPanel {
    /// 1/n for n = 0 to the group's size (the same bits as dividing each time).
    reciprocals: Vec<f64>,
    /// Jackknife groups G (1 when off).
    pub groups: usize,
    /// Jackknife replicates: G, or 0 when off.
    pub replicates: usize,
    /// Criteria served.
    pub criteria: usize,
    /// `u64` words per plane.
    words: usize,
    /// Loci in view order.
    pub loci: Vec<PackedLocus>,
    /// Per locus: typed, low and high planes, `words` each.
    planes: Vec<u64>,
    /// Without jackknife lanes, the same planes word-major for the vector kernel: plane p, word
    /// w, locus b at `(p·words + w)·stride + b` (zero-padded past the last locus).
    columns: Vec<u64>,
    /// Row length of `columns`: loci rounded up, plus one vector of padding.
    stride: usize,
    /// Per locus and criterion: its row in that criterion's panel, or [`NO_ROW`].
    rows: Vec<u32>,
    /// Per locus: its criteria bits (as in `loci`, contiguous for the vector sums).
    members: Vec<u64>,
    /// Per criterion: loci in its panel.
    pub loci_in: Vec<usize>,
    /// Per criterion: an earlier criterion with exactly the same panel, whose sums it shares
    /// (its bit is cleared from every locus, so its pairs are summed once).
    same_as: Vec<Option<usize>>,
}

/// What [`PackedPanel::build`] needs besides the view.
pub struct PackedRequest<'a> {
    /// The group.
    pub group: &'a Group,
    /// Candidate loci (view indices, ascending).
    pub loci: &'a [LocusIdx],
    /// The criteria, in row order.
    pub criteria: &'a [Criterion],
    /// Jackknife groups wanted (as for the byte panel).
    pub groups: usize,
    /// Chromosome id of each view locus.
    pub chromosomes: &'a [Option<u32>],
}

impl PackedPanel {
    /// The packed panel, or `None` when a candidate locus has more than two alleles in the group
    /// (or there are more than [`MAX_CRITERIA`] criteria): the general path applies.
    pub fn build(view: &GenotypeView<'_>, request: &PackedRequest<'_>, order: &[SampleIdx]) -> Option<PackedPanel> {
        if request.criteria.len() > MAX_CRITERIA {
            return None;
        }
        let samples = order.len();
        let groups = request.groups.min(LANES).min(samples).max(1);
        let words = words_for(samples, groups);
        let mut panel = PackedPanel {
            reciprocals: (0..=samples).map(|n| 1.0 / n as f64).collect(),
            groups,
            replicates: if groups >= 2 { groups } else { 0 },
            criteria: request.criteria.len(),
            words,
            loci: Vec::new(),
            planes: Vec::new(),
            columns: Vec::new(),
            stride: 0,
            rows: Vec::new(),
            members: Vec::new(),
            loci_in: vec![0; request.criteria.len()],
            same_as: vec![None; request.criteria.len()],
        };
        let mut counts = AlleleCounts::default();
        for &locus in request.loci {
            view.allele_counts_into(locus, &request.group.samples, &mut counts);
            let present: Vec<usize> = (1..counts.alleles.len()).filter(|&code| counts.alleles[code] > 0).collect();
            if present.len() > 2 {
                return None;
            }
            if present.len() < 2 {
                continue;
            }
            let copies = counts.gene_copies();
            let member = membership(request.criteria, &present, &counts.alleles, copies);
            if member == 0 {
                continue;
            }
            panel.push_locus(view, order, locus, present[0]);
            for (c, in_panel) in panel.loci_in.iter_mut().enumerate() {
                let row = if member >> c & 1 == 1 { u32::try_from(*in_panel).unwrap_or(NO_ROW) } else { NO_ROW };
                *in_panel += usize::from(row != NO_ROW);
                panel.rows.push(row);
            }
            panel.loci.push(PackedLocus { view_locus: locus, chromosome: request.chromosomes[locus], member });
        }
        panel.share_identical_panels();
        panel.members = panel.loci.iter().map(|l| l.member).collect();
        if panel.replicates == 0 {
            panel.fill_columns();
        }
        Some(panel)
    }

    /// Finds criteria whose panels hold the same loci as an earlier one (with SNPs in a sample
    /// of 100, Pcrit 0.01 and "no singletons" both keep alleles seen twice or more) and clears
    /// their bits, so each distinct panel is summed once; [`PackedPanel::copy_shared`] fills them.
    fn share_identical_panels(&mut self) {
        for c in 1..self.criteria {
            let bit = |member: u64, c: usize| member >> c & 1;
            let earlier = (0..c)
                .find(|&e| self.same_as[e].is_none() && self.loci.iter().all(|l| bit(l.member, e) == bit(l.member, c)));
            if let Some(e) = earlier {
                self.same_as[c] = Some(e);
                for locus in &mut self.loci {
                    locus.member &= !(1 << c);
                }
            }
        }
    }

    /// Gives each criterion that shares another's panel a copy of that one's sums.
    fn copy_shared(&self, sums: &mut [PairSums]) {
        for (c, same_as) in self.same_as.iter().enumerate() {
            if let Some(e) = same_as {
                sums[c] = sums[*e].clone();
            }
        }
    }

    /// Copies the planes word-major into `columns`.
    fn fill_columns(&mut self) {
        let loci = self.loci.len();
        self.stride = loci.div_ceil(VECTOR) * VECTOR + VECTOR;
        let mut columns = vec![0; 3 * self.words * self.stride];
        for locus in 0..loci {
            for (plane, words) in self.planes(locus).into_iter().enumerate() {
                for (word, &bits) in words.iter().enumerate() {
                    columns[(plane * self.words + word) * self.stride + locus] = bits;
                }
            }
        }
        self.columns = columns;
    }

    /// Appends the three planes of `locus`, counting copies of allele `code`.
    fn push_locus(&mut self, view: &GenotypeView<'_>, order: &[SampleIdx], locus: LocusIdx, code: usize) {
        let start = self.planes.len();
        self.planes.resize(start + 3 * self.words, 0);
        let (typed, rest) = self.planes[start..].split_at_mut(self.words);
        let (low, high) = rest.split_at_mut(self.words);
        for (position, &sample) in order.iter().enumerate() {
            let Some((a, b)) = view.genotype(sample, locus) else { continue };
            let dosage = u8::from(usize::from(a.0) == code) + u8::from(usize::from(b.0) == code);
            let (word, bit) = bit_position(position, self.groups);
            typed[word] |= 1 << bit;
            if dosage >= 1 {
                low[word] |= 1 << bit;
            }
            if dosage == 2 {
                high[word] |= 1 << bit;
            }
        }
    }

    /// The typed, low and high planes of panel locus `locus`.
    fn planes(&self, locus: usize) -> [&[u64]; 3] {
        let start = 3 * self.words * locus;
        let w = self.words;
        [
            &self.planes[start..start + w],
            &self.planes[start + w..start + 2 * w],
            &self.planes[start + 2 * w..start + 3 * w],
        ]
    }

    /// Row of panel locus `locus` in criterion `criterion`'s panel.
    fn row(&self, locus: usize, criterion: usize) -> usize {
        self.rows[locus * self.criteria + criterion] as usize
    }
}

/// Criteria (bits) that keep both alleles `present` of a biallelic locus.
fn membership(criteria: &[Criterion], present: &[usize], alleles: &[u32], copies: u32) -> u64 {
    criteria.iter().enumerate().fold(0u64, |member, (c, criterion)| {
        let kept = present.iter().all(|&code| criterion.keeps(alleles[code], copies));
        member | (u64::from(kept) << c)
    })
}

/// `u64` words per plane for `samples` individuals in `groups` jackknife groups.
fn words_for(samples: usize, groups: usize) -> usize {
    if groups < 2 { samples.div_ceil(64) } else { 2 * samples.div_ceil(groups).div_ceil(8) }
}

/// Word and bit of position `position` of the order: dense without the jackknife; else
/// jackknife group `position mod G` is byte `position mod G` of a 128-bit block.
fn bit_position(position: usize, groups: usize) -> (usize, u32) {
    if groups < 2 {
        return (position / 64, (position % 64) as u32);
    }
    let (lane, slot) = (position % groups, position / groups);
    let word = 2 * (slot / 8) + lane / 8;
    (word, ((lane % 8) * 8 + slot % 8) as u32)
}

/// Population count of each byte of `x`, in that byte (SWAR; each result ≤ 8).
#[inline(always)]
fn byte_counts(x: u64) -> u64 {
    let x = x - ((x >> 1) & 0x5555_5555_5555_5555);
    let x = (x & 0x3333_3333_3333_3333) + ((x >> 2) & 0x3333_3333_3333_3333);
    (x + (x >> 4)) & 0x0f0f_0f0f_0f0f_0f0f
}

/// The nine counts of a pair (see the module doc): S, |low_a∧typed_b|, |high_a∧typed_b|,
/// |low_b∧typed_a|, |high_b∧typed_a|, then the four products of Σxy.
const COUNTS: usize = 9;

/// Per-pair moments with each jackknife lane left out, and with none (index [`LANES`]).
struct SlotMoments {
    samples: [f64; LANES + 1],
    covariance: [f64; LANES + 1],
    spread_x: [f64; LANES + 1],
    spread_y: [f64; LANES + 1],
}

/// The nine counts of pair (a, b) by jackknife lane (byte layout).
#[inline(always)]
fn lane_counts(a: [&[u64]; 3], b: [&[u64]; 3]) -> [LaneSums; COUNTS] {
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

/// (S, Σx, Σx², Σy, Σy², Σxy) from the nine counts.
#[inline(always)]
fn moments_of(c: [f64; COUNTS]) -> [f64; 6] {
    [c[0], c[1] + c[2], c[1] + 3.0 * c[2], c[3] + c[4], c[3] + 3.0 * c[4], c[5] + c[6] + c[7] + c[8]]
}

/// Covariance and spreads of one slot from its moments (exact integers as `f64`).
#[inline(always)]
fn slot_quantities(m: [f64; 6]) -> [f64; 4] {
    let [n, sx, sxx, sy, syy, sxy] = m;
    [n, n * sxy - sx * sy, n * sxx - sx * sx, n * syy - sy * sy]
}

/// The per-slot quantities of a pair from its lane counts.
#[inline(always)]
fn slot_moments(lanes: &[LaneSums; COUNTS], replicates: usize) -> SlotMoments {
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
struct CriterionPart {
    sums: PairSums,
    weighted_r2: [f64; LANES],
    weight: [f64; LANES],
    comparisons: [f64; LANES],
    per_sample: [f64; LANES],
    pairs: [u64; LANES],
}

impl CriterionPart {
    fn new(loci: usize, replicates: usize) -> CriterionPart {
        CriterionPart {
            sums: PairSums::empty(loci, replicates),
            weighted_r2: [0.0; LANES],
            weight: [0.0; LANES],
            comparisons: [0.0; LANES],
            per_sample: [0.0; LANES],
            pairs: [0; LANES],
        }
    }

    fn finish(mut self) -> PairSums {
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
struct PairWeights {
    weighted_r2: [f64; LANES + 1],
    weight: [f64; LANES + 1],
    per_sample: [f64; LANES + 1],
    defined: [bool; LANES + 1],
}

#[inline(always)]
fn pair_weights(m: &SlotMoments) -> PairWeights {
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

/// Sums every pair for every criterion: one [`PairSums`] per criterion, bit-identical to the
/// byte path's [`super::pairs::sum_pairs`] on that criterion's panel.
pub fn sum_pairs_packed(panel: &PackedPanel, skip_same_chromosome: bool, cuts: &ChunkCuts) -> Vec<PairSums> {
    let chunks = cuts.row_ranges(|row| panel.loci[row].view_locus, panel.loci.len());
    let parts = chunks.par_iter().map(|rows| chunk_sums_dispatch(panel, rows.clone(), skip_same_chromosome)).collect();
    merge_chunks(panel, parts)
}

/// [`sum_pairs_packed`] with a chosen dense kernel (the equivalence tests run both).
#[cfg(test)]
pub fn sum_pairs_packed_with(panel: &PackedPanel, skip: bool, cuts: &ChunkCuts, kernel: Kernel) -> Vec<PairSums> {
    let chunks = cuts.row_ranges(|row| panel.loci[row].view_locus, panel.loci.len());
    merge_chunks(panel, chunks.iter().map(|rows| chunk_sums_with(panel, rows.clone(), skip, kernel)).collect())
}

/// The chunks' sums merged in chunk order, shared panels filled in.
fn merge_chunks(panel: &PackedPanel, parts: Vec<Vec<PairSums>>) -> Vec<PairSums> {
    let mut sums: Vec<PairSums> = panel.loci_in.iter().map(|&loci| PairSums::empty(loci, panel.replicates)).collect();
    for part in &parts {
        for (total, chunk) in sums.iter_mut().zip(part) {
            total.merge(chunk);
        }
    }
    panel.copy_shared(&mut sums);
    sums
}

/// True when this processor runs the AVX-512 kernel.
#[cfg(test)]
pub fn avx512_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    return avx512::available();
    #[cfg(not(target_arch = "x86_64"))]
    return false;
}

/// The fastest kernel this processor runs: AVX-512 for the dense path where available, else
/// the portable loop compiled for AVX2 and POPCNT where available, else the baseline build.
fn chunk_sums_dispatch(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool) -> Vec<PairSums> {
    #[cfg(target_arch = "x86_64")]
    {
        if panel.replicates == 0 && avx512::available() {
            // SAFETY: the processor has AVX-512 F, DQ and VPOPCNTDQ (checked just above).
            return unsafe { chunk_sums_avx512(panel, rows, skip) };
        }
        if std::is_x86_feature_detected!("avx2") && std::is_x86_feature_detected!("popcnt") {
            // SAFETY: the processor supports AVX2 and POPCNT (checked just above), the only
            // requirement of a function compiled with these target features.
            return unsafe { chunk_sums_avx2(panel, rows, skip) };
        }
    }
    chunk_sums(panel, rows, skip)
}

/// The dense chunk loop with AVX-512 enabled throughout (the kernel and the vector sums).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx512dq,avx512vpopcntdq,avx2,popcnt")]
fn chunk_sums_avx512(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool) -> Vec<PairSums> {
    chunk_sums_with(panel, rows, skip, Kernel::Avx512)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,popcnt")]
fn chunk_sums_avx2(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool) -> Vec<PairSums> {
    chunk_sums(panel, rows, skip)
}

/// The pairs whose first locus is in `rows`, summed per criterion in row order.
#[inline(always)]
fn chunk_sums(panel: &PackedPanel, rows: std::ops::Range<usize>, skip_same_chromosome: bool) -> Vec<PairSums> {
    chunk_sums_with(panel, rows, skip_same_chromosome, Kernel::Portable)
}

/// Which dense kernel computes the pair values (the results are the same bits).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kernel {
    /// One pair at a time, any processor.
    Portable,
    /// Eight pairs at a time with AVX-512 (F, DQ, VPOPCNTDQ); only where the processor has it.
    #[cfg(target_arch = "x86_64")]
    Avx512,
}

#[inline(always)]
fn chunk_sums_with(
    panel: &PackedPanel,
    rows: std::ops::Range<usize>,
    skip_same_chromosome: bool,
    kernel: Kernel,
) -> Vec<PairSums> {
    if panel.replicates == 0 {
        return dense_chunk_sums(panel, rows, skip_same_chromosome, kernel);
    }
    let mut parts: Vec<CriterionPart> =
        panel.loci_in.iter().map(|&loci| CriterionPart::new(loci, panel.replicates)).collect();
    let mut row_sums = vec![Accumulator::default(); panel.criteria];
    for a in rows {
        let (locus_a, planes_a) = (&panel.loci[a], panel.planes(a));
        row_sums.fill(Accumulator::default());
        for b in a + 1..panel.loci.len() {
            let locus_b = &panel.loci[b];
            let member = locus_a.member & locus_b.member;
            if member == 0 {
                continue;
            }
            if skip_same_chromosome && matches!((locus_a.chromosome, locus_b.chromosome), (Some(x), Some(y)) if x == y)
            {
                for_each_criterion(member, |c| parts[c].sums.same_chromosome += 1);
                continue;
            }
            let weights = pair_weights(&slot_moments(&lane_counts(planes_a, panel.planes(b)), panel.replicates));
            for_each_criterion(member, |c| add_to(&mut parts[c], &mut row_sums[c], panel.row(b, c), &weights));
        }
        for_each_criterion(locus_a.member, |c| {
            let sums = &mut parts[c].sums;
            sums.total.merge(&row_sums[c]);
            sums.with_locus[panel.row(a, c)].merge(&row_sums[c]);
        });
    }
    parts.into_iter().map(CriterionPart::finish).collect()
}

/// The full-sample values of the pairs of one row, by second locus b (zero-padded to the
/// panel's `stride`): w·r̂², w = S², 1/S and whether r̂² is defined (1) or not (0).
struct RowValues {
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
struct LocusSums {
    weighted_r2: Vec<f64>,
    weight: Vec<f64>,
    per_sample: Vec<f64>,
    pairs: Vec<u64>,
}

impl LocusSums {
    fn new(loci: usize) -> LocusSums {
        LocusSums {
            weighted_r2: vec![0.0; loci],
            weight: vec![0.0; loci],
            per_sample: vec![0.0; loci],
            pairs: vec![0; loci],
        }
    }

    /// Adds a row's sums to its first locus.
    fn add_row(&mut self, locus: usize, row: &Accumulator) {
        self.weighted_r2[locus] += row.weighted_r2;
        self.weight[locus] += row.weight;
        self.per_sample[locus] += row.comparisons_per_sample;
        self.pairs[locus] += row.pairs;
    }

    /// Into the criterion's `with_locus` (by its rows); with one comparison per pair, the
    /// comparisons are the pair counts (sums of 1.0, exact).
    fn write_into(&self, panel: &PackedPanel, criterion: usize, with_locus: &mut [Accumulator]) {
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
fn dense_chunk_sums(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool, kernel: Kernel) -> Vec<PairSums> {
    let loci = panel.loci.len();
    let mut sums: Vec<PairSums> = panel.loci_in.iter().map(|&n| PairSums::empty(n, 0)).collect();
    let mut locus_sums: Vec<LocusSums> = (0..panel.criteria).map(|_| LocusSums::new(loci)).collect();
    let mut values = RowValues::new(panel.stride.max(loci));
    let mut same = vec![0u8; loci];
    let mut include: Vec<Vec<u8>> = vec![vec![0; loci]; panel.criteria];
    let mut active: Vec<usize> = Vec::with_capacity(panel.criteria);
    for a in rows {
        dense_row_values(panel, a, kernel, &mut values);
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
fn dense_row_values(panel: &PackedPanel, a: usize, kernel: Kernel, values: &mut RowValues) {
    #[cfg(target_arch = "x86_64")]
    if kernel == Kernel::Avx512 {
        // SAFETY: `Kernel::Avx512` is only chosen where the processor has AVX-512 F, DQ and
        // VPOPCNTDQ ([`avx512::available`]).
        unsafe { avx512::row_values(panel, a, values) };
        return;
    }
    let _ = kernel;
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

#[cfg(target_arch = "x86_64")]
mod avx512 {
    //! The dense kernel eight pairs at a time: locus a's words broadcast against eight loci's
    //! words (word-major columns), nine AND-and-count operations per word as 64-bit lane
    //! population counts, and r̂² with the same IEEE operations in the same order as
    //! [`super::r2_from_spreads`] (each is correctly rounded lane by lane, so the bits agree).

    use std::arch::x86_64::*;

    use super::{PackedPanel, RowValues, VECTOR};

    /// True when the processor has what [`row_values`] needs.
    pub fn available() -> bool {
        std::is_x86_feature_detected!("avx512f")
            && std::is_x86_feature_detected!("avx512dq")
            && std::is_x86_feature_detected!("avx512vpopcntdq")
    }

    /// [`super::dense_row_values`] with AVX-512.
    ///
    /// # Safety
    /// The processor must have AVX-512 F, DQ and VPOPCNTDQ ([`available`]).
    #[target_feature(enable = "avx512f,avx512dq,avx512vpopcntdq")]
    pub unsafe fn row_values(panel: &PackedPanel, a: usize, values: &mut RowValues) {
        let (words, stride, loci) = (panel.words, panel.stride, panel.loci.len());
        let column = |plane: usize, word: usize, b: usize| (plane * words + word) * stride + b;
        let mut b0 = a + 1;
        while b0 < loci {
            let mut counts = [_mm512_setzero_si512(); 9];
            for word in 0..words {
                let broadcast = |plane: usize| _mm512_set1_epi64(panel.columns[column(plane, word, a)] as i64);
                // SAFETY: `columns` has `stride` ≥ loci rounded up to 8, plus 8, entries per row,
                // so the eight words from b0 < loci are in bounds.
                let load = |plane: usize| unsafe {
                    _mm512_loadu_si512(panel.columns.as_ptr().add(column(plane, word, b0)).cast())
                };
                let (ta, la, ha) = (broadcast(0), broadcast(1), broadcast(2));
                let (tb, lb, hb) = (load(0), load(1), load(2));
                let pairs = [(ta, tb), (la, tb), (ha, tb), (lb, ta), (hb, ta), (la, lb), (la, hb), (ha, lb), (ha, hb)];
                for (count, (x, y)) in counts.iter_mut().zip(pairs) {
                    *count = _mm512_add_epi64(*count, _mm512_popcnt_epi64(_mm512_and_si512(x, y)));
                }
            }
            let c = counts.map(|count| _mm512_cvtepi64_pd(count));
            let three = _mm512_set1_pd(3.0);
            let n = c[0];
            let sx = _mm512_add_pd(c[1], c[2]);
            let sxx = _mm512_add_pd(c[1], _mm512_mul_pd(three, c[2]));
            let sy = _mm512_add_pd(c[3], c[4]);
            let syy = _mm512_add_pd(c[3], _mm512_mul_pd(three, c[4]));
            let sxy = _mm512_add_pd(_mm512_add_pd(_mm512_add_pd(c[5], c[6]), c[7]), c[8]);
            let covariance = _mm512_sub_pd(_mm512_mul_pd(n, sxy), _mm512_mul_pd(sx, sy));
            let spread_x = _mm512_sub_pd(_mm512_mul_pd(n, sxx), _mm512_mul_pd(sx, sx));
            let spread_y = _mm512_sub_pd(_mm512_mul_pd(n, syy), _mm512_mul_pd(sy, sy));
            let less = _mm512_sub_pd(n, _mm512_set1_pd(1.0));
            let numerator = _mm512_mul_pd(_mm512_mul_pd(covariance, covariance), _mm512_mul_pd(n, n));
            let denominator = _mm512_mul_pd(_mm512_mul_pd(spread_x, spread_y), _mm512_mul_pd(less, less));
            let r2 = _mm512_div_pd(numerator, denominator);
            let weight = _mm512_mul_pd(_mm512_mul_pd(_mm512_set1_pd(1.0), n), n);
            let weighted = _mm512_mul_pd(weight, r2);
            let per_sample = _mm512_div_pd(_mm512_set1_pd(1.0), n);
            let zero = _mm512_setzero_pd();
            let defined = _mm512_cmp_pd_mask::<_CMP_GE_OQ>(n, _mm512_set1_pd(2.0))
                & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(spread_x, zero)
                & _mm512_cmp_pd_mask::<_CMP_GT_OQ>(spread_y, zero);
            // Undefined lanes hold 0.0, as the portable kernel writes them.
            let weighted = _mm512_maskz_mov_pd(defined, weighted);
            let weight = _mm512_maskz_mov_pd(defined, weight);
            let per_sample = _mm512_maskz_mov_pd(defined, per_sample);
            // SAFETY: the value arrays have `stride` ≥ b0 + 8 entries (b0 < loci, and the
            // stride is the loci rounded up to 8 plus 8).
            unsafe {
                _mm512_storeu_pd(values.weighted_r2.as_mut_ptr().add(b0), weighted);
                _mm512_storeu_pd(values.weight.as_mut_ptr().add(b0), weight);
                _mm512_storeu_pd(values.per_sample.as_mut_ptr().add(b0), per_sample);
            }
            for lane in 0..VECTOR {
                values.defined[b0 + lane] = (defined >> lane & 1) as u8;
            }
            b0 += VECTOR;
        }
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

/// Calls `f` with each criterion whose bit is set in `member`, in ascending order.
#[inline(always)]
fn for_each_criterion(mut member: u64, mut f: impl FnMut(usize)) {
    while member != 0 {
        f(member.trailing_zeros() as usize);
        member &= member - 1;
    }
}

/// Adds one pair to criterion c's sums, as the byte path's `add_pair` does (one comparison).
#[inline(always)]
fn add_to(part: &mut CriterionPart, row: &mut Accumulator, row_b: usize, w: &PairWeights) {
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

    /// Hand check of the byte layout: with G = 3, positions 0..6 are groups 0,1,2,0,1,2 and
    /// slots 0,0,0,1,1,1: bytes 0, 1, 2 hold bits 0 and 1.
    #[test]
    fn byte_layout_puts_each_jackknife_group_in_its_byte() {
        let bits: Vec<(usize, u32)> = (0..6).map(|k| bit_position(k, 3)).collect();
        assert_eq!(bits, vec![(0, 0), (0, 8), (0, 16), (0, 1), (0, 9), (0, 17)]);
        // Group 9 of 16 is byte 1 of the second word.
        assert_eq!(bit_position(9, 16), (1, 8));
        // The 8 × 16 + 1-th position starts the next block.
        assert_eq!(bit_position(128, 16), (2, 0));
        assert_eq!(words_for(100, 16), 2);
        assert_eq!(words_for(129, 16), 4);
        assert_eq!(words_for(100, 1), 2);
    }

    #[test]
    fn byte_counts_count_each_byte() {
        assert_eq!(byte_counts(0xff00_0f01_8000_0003), 0x0800_0401_0100_0002);
        assert_eq!(byte_counts(u64::MAX), 0x0808_0808_0808_0808);
    }
}
