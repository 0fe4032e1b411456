//! The packed biallelic path of the pair loop: two bits per genotype plus a typed mask, and one
//! pass over the pairs for every rare-allele criterion at once.
//!
//! **When.** Every candidate locus has at most two alleles in the group (SNP panels). A biallelic
//! locus is then either in a criterion's panel with both alleles kept (one dosage vector, one
//! comparison) or out of it, and a pair's r̂² does not depend on the criterion: it is computed
//! once and added to every criterion that keeps both loci. Otherwise the general byte path
//! ([`super::pairs`]) runs, criterion by criterion.
//!
//! **Planes** ([`layout`]). Per locus, three bit planes over the group's individuals in jackknife
//! order: typed, "carries at least one copy" (`low`) and "carries two copies" (`high`) of the
//! locus's first allele, so the dosage is `low + high` and 0 where untyped. Over the individuals
//! typed at both loci, S = |typed_a ∧ typed_b|, Σx = |low_a ∧ typed_b| + |high_a ∧ typed_b|,
//! Σx² = |low_a ∧ typed_b| + 3|high_a ∧ typed_b| (likewise for y) and Σxy = |low_a ∧ low_b| +
//! |low_a ∧ high_b| + |high_a ∧ low_b| + |high_a ∧ high_b|: nine AND-and-count operations per word.
//!
//! **Jackknife lanes** ([`lanes`]). With G ≥ 2 jackknife groups, individual k of the order
//! (group k mod G) sits in byte k mod G of a 128-bit block, so one SWAR byte count gives the
//! sixteen per-group partial sums of a word pair at once, and leaving a group out is one
//! subtraction, as in the byte path. Without the jackknife over individuals the planes are dense
//! and the pairs go through the dense kernels ([`kernels`]).
//!
//! **Identical results.** The moments are the same exact integers as the byte path's; r̂² comes
//! from the same [`r2_from_spreads`](super::pairs::r2_from_spreads); the pairs are cut into the
//! same chunks ([`ChunkCuts`]) and added to each criterion's sums in the same order with the
//! same operations. Estimates are therefore bit-identical to the general path (property tests
//! in `tests/packed_path.rs`).
//!
//! **Instruction sets.** Three builds of the chunk loop exist, and [`sum_pairs_packed`] picks one
//! per chunk at run time on x86-64:
//!
//! - without jackknife lanes, on a processor with AVX-512 F, DQ and VPOPCNTDQ: the tiled loop
//!   ([`tiles`], [`Kernel::Avx512`]), which counts eight pairs at a time with 512-bit population
//!   counts and adds tiles of eight rows by eight second loci to the sums, in the portable
//!   loop's order;
//! - otherwise, on a processor with AVX2 and POPCNT (with or without jackknife lanes): the
//!   portable loop compiled with those features enabled;
//! - otherwise, and on every other architecture: the portable loop compiled for the baseline
//!   target ([`Kernel::Portable`]).
//!
//! Rust never fuses or reorders floating-point operations, and the AVX-512 loop performs the
//! portable kernel's IEEE operations in the same order lane by lane and adds to every sum in the
//! same order, so every path gives the same bits (`tests/packed_path.rs` runs both dense loops
//! where the processor allows).

mod kernels;
mod lanes;
mod layout;
#[cfg(target_arch = "x86_64")]
mod tiles;

use rayon::prelude::*;

use self::kernels::dense_chunk_sums;
use self::lanes::{CriterionPart, add_to, lane_counts, pair_weights, slot_moments};
pub use self::layout::{PackedPanel, PackedRequest};
use super::pairs::{Accumulator, ChunkCuts, PairSums};

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
    return tiles::available();
    #[cfg(not(target_arch = "x86_64"))]
    return false;
}

/// The fastest kernel this processor runs: AVX-512 for the dense path where available, else
/// the portable loop compiled for AVX2 and POPCNT where available, else the baseline build.
fn chunk_sums_dispatch(panel: &PackedPanel, rows: std::ops::Range<usize>, skip: bool) -> Vec<PairSums> {
    #[cfg(target_arch = "x86_64")]
    {
        if panel.replicates == 0 && tiles::available() {
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

/// Calls `f` with each criterion whose bit is set in `member`, in ascending order.
#[inline(always)]
fn for_each_criterion(mut member: u64, mut f: impl FnMut(usize)) {
    while member != 0 {
        f(member.trailing_zeros() as usize);
        member &= member - 1;
    }
}
