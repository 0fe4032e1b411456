//! The packed panel's memory layout: which loci and criteria it holds, the three bit planes
//! per locus (dense, or one byte per jackknife group in 128-bit blocks), and, without the
//! jackknife, the same planes word-major for the vector kernel.

use popgauge_abi::{AlleleCounts, GenotypeView, Group, LocusIdx, SampleIdx};

use super::super::pairs::PairSums;
use super::super::panel::{Criterion, LANES};

/// Most criteria the packed path serves in one pass (one bit each in a locus's membership).
pub const MAX_CRITERIA: usize = 64;

/// Pairs one vector step of the AVX-512 kernel handles (eight 64-bit lanes).
pub(super) const VECTOR: usize = 8;

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
    pub(super) reciprocals: Vec<f64>,
    /// Jackknife groups G (1 when off).
    pub groups: usize,
    /// Jackknife replicates: G, or 0 when off.
    pub replicates: usize,
    /// Criteria served.
    pub criteria: usize,
    /// `u64` words per plane.
    pub(super) words: usize,
    /// Loci in view order.
    pub loci: Vec<PackedLocus>,
    /// Per locus: typed, low and high planes, `words` each.
    planes: Vec<u64>,
    /// Without jackknife lanes, the same planes word-major for the vector kernel: plane p, word
    /// w, locus b at `(p·words + w)·stride + b` (zero-padded past the last locus).
    pub(super) columns: Vec<u64>,
    /// Row length of `columns`: loci rounded up, plus one vector of padding.
    pub(super) stride: usize,
    /// Per locus and criterion: its row in that criterion's panel, or [`NO_ROW`].
    rows: Vec<u32>,
    /// Per locus: its criteria bits (as in `loci`, contiguous for the vector sums).
    pub(super) members: Vec<u64>,
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
    pub(super) fn copy_shared(&self, sums: &mut [PairSums]) {
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
    pub(super) fn planes(&self, locus: usize) -> [&[u64]; 3] {
        let start = 3 * self.words * locus;
        let w = self.words;
        [
            &self.planes[start..start + w],
            &self.planes[start + w..start + 2 * w],
            &self.planes[start + 2 * w..start + 3 * w],
        ]
    }

    /// Row of panel locus `locus` in criterion `criterion`'s panel.
    pub(super) fn row(&self, locus: usize, criterion: usize) -> usize {
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
}
