//! Packed biallelic genotypes: bit planes over samples, counted by popcount.
//!
//! Most loci of a SNP panel show at most two allele codes. For such a locus,
//! [`PackedGenotypes`] keeps one bit per sample in each of three planes of `u64` words: *typed*
//! (both alleles typed), *heterozygous* and *homozygous for the higher code*; a typed sample in
//! neither of the last two is homozygous for the lower code. The genotype counts of any set of
//! samples ([`SampleBits`]) are then three popcounts of word-wise ANDs, instead of one read per
//! sample. A locus with three or more codes in the view is not packed ([`PackedGenotypes::locus`]
//! is `None`) and keeps the general path of [`GenotypeView`].
//!
//! The packed form is built by a step from its view: it is part of the Rust SDK only and does
//! not change the C ABI. Counts are integers, so the packed path returns exactly the
//! [`AlleleCounts`] of [`GenotypeView::allele_counts_into`] and every estimate built on them is
//! unchanged, bit for bit.
//!
//! # Columns
//! The planes run over *columns*: by default every sample of the view in view order
//! ([`PackedGenotypes::new`]); [`PackedGenotypes::for_samples`] packs chosen view samples in a
//! chosen order (a step permuting individuals between two groups packs just those).
//!
//! # Speed
//! On x86-64 the counting loop is compiled a second time with the `popcnt` instruction enabled
//! and chosen at run time when the processor has it (the baseline x86-64 target lacks it and
//! counts bits with a dozen arithmetic instructions per word).
//!
//! ```
//! use popgauge_abi::{AlleleCode, GenotypeMatrix, LocusMeta, PackedGenotypes, SampleMeta};
//!
//! let samples: Vec<SampleMeta> = (0..3)
//!     .map(|i| SampleMeta { id: format!("s{i}"), population: "P".into(), year: 2024 })
//!     .collect();
//! let loci = vec![LocusMeta { name: "L1".into(), alleles: vec!["A".into(), "G".into()], chromosome: None, position: None }];
//! let codes = [1, 1, 1, 2, 0, 0].into_iter().map(AlleleCode).collect();
//! let matrix = GenotypeMatrix::new(samples, loci, codes).unwrap();
//! let (s, l) = (matrix.all_sample_indices(), matrix.all_locus_indices());
//! let packed = PackedGenotypes::new(matrix.full_view(&s, &l));
//! let everyone = packed.sample_set(&[0, 1, 2]);
//! let counts = packed.allele_counts(0, &everyone);
//! assert_eq!((counts.alleles, counts.typed, counts.heterozygotes), (vec![0, 3, 1], 2, 1));
//! ```

use crate::matrix::{AlleleCode, AlleleCounts, GenotypeView, LocusIdx, SampleIdx};

/// Bits per plane word.
const WORD_BITS: usize = u64::BITS as usize;
/// Planes per packed locus: typed, heterozygous, homozygous for the higher code.
const PLANES: usize = 3;
/// Marks a view sample that is not a column.
const NOT_A_COLUMN: u32 = u32::MAX;

/// A set of columns of a [`PackedGenotypes`], as a bitset that remembers the span of words it
/// touches (a group whose samples sit together is counted over a few words only).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SampleBits {
    words: Vec<u64>,
    /// First word that may hold a member.
    first: usize,
    /// One past the last word that may hold a member (`first == end` when empty).
    end: usize,
    len: usize,
}

impl SampleBits {
    /// The empty set over `columns` columns.
    pub fn new(columns: usize) -> Self {
        SampleBits { words: vec![0; columns.div_ceil(WORD_BITS)], first: 0, end: 0, len: 0 }
    }

    /// The set of the given columns (repeats count once).
    ///
    /// A column out of range is an invariant violation of the caller and panics.
    pub fn from_columns(columns: usize, members: impl IntoIterator<Item = usize>) -> Self {
        let mut bits = SampleBits::new(columns);
        for column in members {
            bits.insert(column);
        }
        bits
    }

    /// Adds `column`. A column out of range is an invariant violation of the caller and panics.
    pub fn insert(&mut self, column: usize) {
        let (word, bit) = (column / WORD_BITS, 1u64 << (column % WORD_BITS));
        if self.words[word] & bit != 0 {
            return;
        }
        self.words[word] |= bit;
        self.len += 1;
        if self.first == self.end {
            (self.first, self.end) = (word, word + 1);
        } else {
            self.first = self.first.min(word);
            self.end = self.end.max(word + 1);
        }
    }

    /// Empties the set, keeping its size (no allocation).
    pub fn clear(&mut self) {
        self.words[self.first..self.end].fill(0);
        (self.first, self.end, self.len) = (0, 0, 0);
    }

    /// Number of members.
    pub fn len(&self) -> usize {
        self.len
    }

    /// True when the set has no member.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// True when `column` is a member.
    pub fn contains(&self, column: usize) -> bool {
        self.words.get(column / WORD_BITS).is_some_and(|w| w & (1u64 << (column % WORD_BITS)) != 0)
    }

    /// The words that may hold members, and the index of the first of them.
    fn span(&self) -> (usize, &[u64]) {
        (self.first, &self.words[self.first..self.end])
    }
}

/// A set of view samples for [`PackedGenotypes::allele_counts_into`]: the sample indices (for
/// loci on the general path) and their columns as bits (for packed loci).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SampleSet {
    samples: Vec<SampleIdx>,
    /// `None` when a sample is not a column: every locus then takes the general path.
    bits: Option<SampleBits>,
}

impl SampleSet {
    /// The view sample indices, in the order given.
    pub fn samples(&self) -> &[SampleIdx] {
        &self.samples
    }

    /// The members as column bits; `None` when some sample is not a column of the packing.
    pub fn bits(&self) -> Option<&SampleBits> {
        self.bits.as_ref()
    }
}

/// Genotype counts at one packed locus over a set of samples.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct GenotypeCounts {
    /// Homozygotes for the lower code.
    pub low_homozygotes: u32,
    /// Heterozygotes.
    pub heterozygotes: u32,
    /// Homozygotes for the higher code.
    pub high_homozygotes: u32,
    /// Samples with at least one allele untyped.
    pub untyped: u32,
}

impl GenotypeCounts {
    /// Samples with both alleles typed.
    pub fn typed(&self) -> u32 {
        self.low_homozygotes + self.heterozygotes + self.high_homozygotes
    }

    /// Copies of the lower code.
    pub fn low_copies(&self) -> u32 {
        2 * self.low_homozygotes + self.heterozygotes
    }

    /// Copies of the higher code.
    pub fn high_copies(&self) -> u32 {
        2 * self.high_homozygotes + self.heterozygotes
    }
}

/// One packed locus: its two codes and its planes.
#[derive(Debug, Clone, Copy)]
pub struct PackedLocus<'p> {
    /// The lower code seen; [`AlleleCode::UNTYPED`] when no sample is typed.
    pub low: AlleleCode,
    /// The higher code seen; [`AlleleCode::UNTYPED`] when fewer than two codes are seen.
    pub high: AlleleCode,
    /// Number of allele labels of the locus (the length of count vectors is one more).
    labels: usize,
    /// Typed, heterozygous and high-homozygous planes, one after the other.
    planes: &'p [u64],
    popcnt: bool,
}

impl<'p> PackedLocus<'p> {
    fn plane(&self, plane: usize) -> &'p [u64] {
        let words = self.planes.len() / PLANES;
        &self.planes[plane * words..(plane + 1) * words]
    }

    /// The typed plane: bit c set when column c has both alleles typed.
    pub fn typed(&self) -> &'p [u64] {
        self.plane(0)
    }

    /// The heterozygous plane.
    pub fn heterozygous(&self) -> &'p [u64] {
        self.plane(1)
    }

    /// The plane of homozygotes for the higher code.
    pub fn high_homozygous(&self) -> &'p [u64] {
        self.plane(2)
    }

    /// Genotype counts over the columns in `set` (a set over this packing's columns).
    pub fn genotype_counts(&self, set: &SampleBits) -> GenotypeCounts {
        #[cfg(target_arch = "x86_64")]
        if self.popcnt {
            // SAFETY: `popcnt` is true only when `popcnt_available` detected the instruction
            // on this processor.
            return unsafe { counts_in_popcnt(self.planes, set) };
        }
        counts_in(self.planes, set)
    }

    /// Genotype counts over each of `sets`, in order, into `out` (cleared first). One call for
    /// many sets reads the planes once and keeps the counting loop free of per-set dispatch
    /// (a permutation test counts a batch of shuffled groups this way).
    pub fn genotype_counts_many(&self, sets: &[SampleBits], out: &mut Vec<GenotypeCounts>) {
        out.clear();
        #[cfg(target_arch = "x86_64")]
        if self.popcnt {
            // SAFETY: `popcnt` is true only when `popcnt_available` detected the instruction
            // on this processor.
            unsafe { counts_of_sets_popcnt(self.planes, sets, out) };
            return;
        }
        counts_of_sets(self.planes, sets, out);
    }

    /// Allele counts over the columns in `set`, into `counts` (the same values
    /// [`GenotypeView::allele_counts_into`] gives for those samples).
    pub fn allele_counts_into(&self, set: &SampleBits, counts: &mut AlleleCounts) {
        let genotypes = self.genotype_counts(set);
        self.counts_from_genotypes(&genotypes, counts);
    }

    /// Allele counts of the given genotype counts, into `counts`.
    pub fn counts_from_genotypes(&self, genotypes: &GenotypeCounts, counts: &mut AlleleCounts) {
        counts.reset(self.labels);
        counts.typed = genotypes.typed();
        counts.heterozygotes = genotypes.heterozygotes;
        if self.low.is_typed() {
            let low = usize::from(self.low.0);
            counts.alleles[low] = genotypes.low_copies();
            counts.heterozygous_carriers[low] = genotypes.heterozygotes;
        }
        if self.high.is_typed() {
            let high = usize::from(self.high.0);
            counts.alleles[high] = genotypes.high_copies();
            counts.heterozygous_carriers[high] = genotypes.heterozygotes;
        }
    }
}

/// The loci of a view with at most two allele codes, packed into bit planes over its samples.
#[derive(Debug, Clone)]
pub struct PackedGenotypes<'a> {
    view: GenotypeView<'a>,
    /// View sample index of each column.
    columns: Vec<SampleIdx>,
    /// Column of each view sample, [`NOT_A_COLUMN`] when it is not one.
    column_of: Vec<u32>,
    words: usize,
    /// Per view locus: its two codes and its number of labels, when packed.
    codes: Vec<Option<(AlleleCode, AlleleCode, usize)>>,
    /// `PLANES × words` per view locus (zero for loci not packed).
    planes: Vec<u64>,
    popcnt: bool,
}

impl<'a> PackedGenotypes<'a> {
    /// Packs every sample of the view, in view order.
    pub fn new(view: GenotypeView<'a>) -> Self {
        let all: Vec<SampleIdx> = (0..view.n_samples()).collect();
        Self::for_samples(view, &all)
    }

    /// Packs the view samples `samples` in the order given: column c is `samples[c]`.
    ///
    /// A sample out of the view's range is an invariant violation of the caller and panics;
    /// a sample given twice keeps its first column.
    pub fn for_samples(view: GenotypeView<'a>, samples: &[SampleIdx]) -> Self {
        let words = samples.len().div_ceil(WORD_BITS);
        let column_of = column_index(&view, samples);
        let matrix_columns: Vec<usize> = samples.iter().map(|&s| view.sample_indices()[s]).collect();
        let mut planes = vec![0u64; view.n_loci() * PLANES * words];
        let codes = (0..view.n_loci())
            .map(|locus| {
                let block = locus_block(&view, locus);
                let (low, high) = two_codes(block, &matrix_columns)?;
                fill_planes(block, &matrix_columns, high, &mut planes[locus * PLANES * words..][..PLANES * words]);
                Some((low, high, view.locus(locus).alleles.len()))
            })
            .collect();
        PackedGenotypes { view, columns: samples.to_vec(), column_of, words, codes, planes, popcnt: popcnt_available() }
    }

    /// A packing of the view samples `samples` (as [`PackedGenotypes::for_samples`]) in which
    /// no locus is packed: every count takes the general path. For comparing the two paths.
    pub fn general_path_only(view: GenotypeView<'a>, samples: &[SampleIdx]) -> Self {
        PackedGenotypes {
            view,
            columns: samples.to_vec(),
            column_of: column_index(&view, samples),
            words: 0,
            codes: vec![None; view.n_loci()],
            planes: Vec::new(),
            popcnt: popcnt_available(),
        }
    }

    /// The view the genotypes were packed from.
    pub fn view(&self) -> GenotypeView<'a> {
        self.view
    }

    /// View sample index of each column.
    pub fn columns(&self) -> &[SampleIdx] {
        &self.columns
    }

    /// Number of packed loci (at most two codes in the packed samples).
    pub fn packed_loci(&self) -> usize {
        self.codes.iter().filter(|c| c.is_some()).count()
    }

    /// The packed form of view locus `locus`; `None` when it shows three or more codes.
    pub fn locus(&self, locus: LocusIdx) -> Option<PackedLocus<'_>> {
        let (low, high, labels) = self.codes[locus]?;
        let span = PLANES * self.words;
        Some(PackedLocus {
            low,
            high,
            labels,
            planes: &self.planes[locus * span..(locus + 1) * span],
            popcnt: self.popcnt,
        })
    }

    /// An empty bitset over this packing's columns.
    pub fn empty_bits(&self) -> SampleBits {
        SampleBits::new(self.columns.len())
    }

    /// The set of view samples `samples`, for [`PackedGenotypes::allele_counts_into`]. When a
    /// sample is not a column or is given twice (a bitset holds it once, the general path
    /// counts it twice), every locus takes the general path for this set.
    pub fn sample_set(&self, samples: &[SampleIdx]) -> SampleSet {
        let columns: Option<Vec<usize>> = samples
            .iter()
            .map(|&s| self.column_of.get(s).filter(|&&c| c != NOT_A_COLUMN).map(|&c| c as usize))
            .collect();
        let bits = columns
            .map(|columns| SampleBits::from_columns(self.columns.len(), columns))
            .filter(|bits| bits.len() == samples.len());
        SampleSet { samples: samples.to_vec(), bits }
    }

    /// Allele counts at `locus` over `set`: by popcount when the locus is packed, else from the
    /// view. Equal to [`GenotypeView::allele_counts_into`] either way.
    pub fn allele_counts_into(&self, locus: LocusIdx, set: &SampleSet, counts: &mut AlleleCounts) {
        match (self.locus(locus), &set.bits) {
            (Some(packed), Some(bits)) => packed.allele_counts_into(bits, counts),
            _ => self.view.allele_counts_into(locus, &set.samples, counts),
        }
    }

    /// Like [`PackedGenotypes::allele_counts_into`], returning new counts.
    pub fn allele_counts(&self, locus: LocusIdx, set: &SampleSet) -> AlleleCounts {
        let mut counts = AlleleCounts::default();
        self.allele_counts_into(locus, set, &mut counts);
        counts
    }

    /// Number of samples of `set` with at least one allele untyped at `locus` (equal to
    /// [`GenotypeView::untyped_count`]).
    pub fn untyped_count(&self, locus: LocusIdx, set: &SampleSet) -> usize {
        match (self.locus(locus), &set.bits) {
            (Some(packed), Some(bits)) => packed.genotype_counts(bits).untyped as usize,
            _ => self.view.untyped_count(locus, &set.samples),
        }
    }

    /// For each column, the number of `loci` at which it has at least one allele untyped: the
    /// per-sample missingness, read locus by locus (packed loci walk the zero bits of the typed
    /// plane) rather than sample by sample across the locus-major codes.
    pub fn untyped_per_column(&self, loci: &[LocusIdx]) -> Vec<usize> {
        let mut untyped = vec![0usize; self.columns.len()];
        for &locus in loci {
            match self.locus(locus) {
                Some(packed) => {
                    for (word, &typed) in packed.typed().iter().enumerate() {
                        let mut missing = !typed & column_mask(self.columns.len(), word);
                        while missing != 0 {
                            untyped[word * WORD_BITS + missing.trailing_zeros() as usize] += 1;
                            missing &= missing - 1;
                        }
                    }
                }
                None => {
                    for (column, &sample) in self.columns.iter().enumerate() {
                        untyped[column] += usize::from(self.view.genotype(sample, locus).is_none());
                    }
                }
            }
        }
        untyped
    }
}

/// The bits of word `word` that stand for one of `columns` columns.
fn column_mask(columns: usize, word: usize) -> u64 {
    let remaining = columns.saturating_sub(word * WORD_BITS);
    if remaining >= WORD_BITS { u64::MAX } else { (1u64 << remaining) - 1 }
}

/// The column of each view sample when `samples` are the columns (a sample given twice keeps
/// its first column), [`NOT_A_COLUMN`] for the others.
fn column_index(view: &GenotypeView<'_>, samples: &[SampleIdx]) -> Vec<u32> {
    let mut column_of = vec![NOT_A_COLUMN; view.n_samples()];
    for (column, &sample) in samples.iter().enumerate().rev() {
        // Views hold far fewer than 2³² samples; a larger one would only lose the packed path.
        column_of[sample] = u32::try_from(column).unwrap_or(NOT_A_COLUMN);
    }
    column_of
}

/// The codes of view locus `locus` in the matrix: two per matrix sample.
fn locus_block<'v>(view: &GenotypeView<'v>, locus: LocusIdx) -> &'v [AlleleCode] {
    let matrix = view.matrix();
    let per_locus = 2 * matrix.samples().len();
    let start = view.locus_indices()[locus] * per_locus;
    &matrix.codes()[start..start + per_locus]
}

/// The codes seen in typed genotypes of the given matrix samples, ascending (low, high), with
/// [`AlleleCode::UNTYPED`] for a code not seen; `None` when three or more are seen.
fn two_codes(block: &[AlleleCode], matrix_columns: &[usize]) -> Option<(AlleleCode, AlleleCode)> {
    let (mut first, mut second) = (AlleleCode::UNTYPED, AlleleCode::UNTYPED);
    for &sample in matrix_columns {
        let (a, b) = (block[2 * sample], block[2 * sample + 1]);
        if !a.is_typed() || !b.is_typed() {
            continue;
        }
        for code in [a, b] {
            if code == first || code == second {
                continue;
            }
            if !first.is_typed() {
                first = code;
            } else if !second.is_typed() {
                second = code;
            } else {
                return None;
            }
        }
    }
    Some(if second.is_typed() && second < first { (second, first) } else { (first, second) })
}

/// Writes the typed, heterozygous and high-homozygous planes of one locus into `planes`
/// (zeroed, `PLANES × words` long).
fn fill_planes(block: &[AlleleCode], matrix_columns: &[usize], high: AlleleCode, planes: &mut [u64]) {
    let words = planes.len() / PLANES;
    let (typed, rest) = planes.split_at_mut(words);
    let (heterozygous, high_homozygous) = rest.split_at_mut(words);
    for (word, chunk) in matrix_columns.chunks(WORD_BITS).enumerate() {
        let (mut t, mut h, mut hh) = (0u64, 0u64, 0u64);
        for (bit, &sample) in chunk.iter().enumerate() {
            let (a, b) = (block[2 * sample], block[2 * sample + 1]);
            let is_typed = a.is_typed() && b.is_typed();
            let highs = u64::from(a == high) + u64::from(b == high);
            t |= u64::from(is_typed) << bit;
            h |= u64::from(is_typed && highs == 1) << bit;
            hh |= u64::from(is_typed && highs == 2) << bit;
        }
        (typed[word], heterozygous[word], high_homozygous[word]) = (t, h, hh);
    }
}

/// True when the processor counts bits with one instruction.
fn popcnt_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("popcnt")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Genotype counts over `set` from one locus's planes (`PLANES × words`).
#[inline(always)]
fn counts_in(planes: &[u64], set: &SampleBits) -> GenotypeCounts {
    let words = planes.len() / PLANES;
    let (first, span) = set.span();
    let plane = |p: usize| &planes[p * words + first..][..span.len()];
    let (typed, heterozygous, high_homozygous) = (plane(0), plane(1), plane(2));
    let (mut n_typed, mut heterozygotes, mut high_homozygotes) = (0u32, 0u32, 0u32);
    // Indexing (bounds known from the slices above) rather than zipped iterators, for the
    // reason given in `counts_of_sets`.
    for i in 0..span.len() {
        let s = span[i];
        n_typed += (typed[i] & s).count_ones();
        heterozygotes += (heterozygous[i] & s).count_ones();
        high_homozygotes += (high_homozygous[i] & s).count_ones();
    }
    let len = u32::try_from(set.len()).unwrap_or(u32::MAX);
    GenotypeCounts {
        low_homozygotes: n_typed - heterozygotes - high_homozygotes,
        heterozygotes,
        high_homozygotes,
        untyped: len - n_typed,
    }
}

/// [`counts_in`] compiled with the `popcnt` instruction.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "popcnt")]
fn counts_in_popcnt(planes: &[u64], set: &SampleBits) -> GenotypeCounts {
    counts_in(planes, set)
}

/// [`PackedLocus::genotype_counts_many`]'s loop.
#[inline(always)]
fn counts_of_sets(planes: &[u64], sets: &[SampleBits], out: &mut Vec<GenotypeCounts>) {
    // A plain loop, not an iterator adapter: the adapter's `fold` would be a separate function
    // compiled without `popcnt`, whatever the caller enables.
    for set in sets {
        out.push(counts_in(planes, set));
    }
}

/// [`counts_of_sets`] compiled with the `popcnt` instruction.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "popcnt")]
fn counts_of_sets_popcnt(planes: &[u64], sets: &[SampleBits], out: &mut Vec<GenotypeCounts>) {
    counts_of_sets(planes, sets, out);
}

#[cfg(test)]
mod tests;
