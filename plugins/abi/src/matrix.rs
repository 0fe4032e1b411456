//! The genotype matrix (owned) and its zero-copy view.
//!
//! Codes are stored locus-major: the two allele codes of sample `s` at locus `l` sit at
//! `codes[(l * n_samples + s) * 2]` and the next position. Per-locus scans over samples, which
//! every estimator does, then read contiguous memory. Code 0 means untyped; a typed allele has
//! code `k ≥ 1`, whose label is `LocusMeta::alleles[k - 1]`.

use std::collections::BTreeMap;

/// An allele code within one locus; 0 means untyped.
///
/// `repr(transparent)`: a buffer of `u16` from the plugin ABI is read as codes without copying.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[repr(transparent)]
pub struct AlleleCode(pub u16);

impl AlleleCode {
    /// The untyped code.
    pub const UNTYPED: AlleleCode = AlleleCode(0);
    /// True unless this is the untyped code.
    pub fn is_typed(self) -> bool {
        self.0 != 0
    }
}

/// Index of a sample in a [`GenotypeView`] (not in the underlying matrix).
pub type SampleIdx = usize;
/// Index of a locus in a [`GenotypeView`] (not in the underlying matrix).
pub type LocusIdx = usize;

/// What is known about one sample.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SampleMeta {
    /// Sample identifier, unique within the data set.
    pub id: String,
    /// Population name.
    pub population: String,
    /// Sampling year.
    pub year: i32,
}

/// What is known about one locus.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LocusMeta {
    /// Locus name, unique within the data set.
    pub name: String,
    /// Allele labels; code `k` is `alleles[k - 1]`.
    pub alleles: Vec<String>,
    /// Chromosome or contig, when the input says it.
    pub chromosome: Option<String>,
    /// Position on the chromosome in base pairs (1-based, as VCF POS), when the input says it.
    pub position: Option<u64>,
}

/// Why a matrix could not be built from its parts.
#[derive(Debug, thiserror::Error, PartialEq, Eq)]
pub enum MatrixError {
    /// The code buffer does not have two codes per sample and locus.
    #[error("genotype buffer holds {found} codes but {samples} samples × {loci} loci need {expected}")]
    WrongLength {
        /// Number of samples.
        samples: usize,
        /// Number of loci.
        loci: usize,
        /// Codes expected.
        expected: usize,
        /// Codes found.
        found: usize,
    },
    /// A code points past the locus's allele labels.
    #[error("locus `{locus}` has {labels} allele labels but a genotype uses code {code}")]
    CodeOutOfRange {
        /// Locus name.
        locus: String,
        /// Number of labels.
        labels: usize,
        /// Offending code.
        code: u16,
    },
    /// A locus has more alleles than a code can hold.
    #[error("locus `{locus}` has {labels} distinct alleles; at most 65535 are supported")]
    TooManyAlleles {
        /// Locus name.
        locus: String,
        /// Number of labels.
        labels: usize,
    },
}

/// Samples × loci genotype codes with their metadata.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GenotypeMatrix {
    samples: Vec<SampleMeta>,
    loci: Vec<LocusMeta>,
    codes: CodeBuffer,
}

/// The code buffer: owned, or borrowed from memory the matrix does not own (a plugin reading
/// the host's buffer, the plugin worker reading a mapped file), so that the codes are never
/// copied across the plugin boundary.
enum CodeBuffer {
    Owned(Vec<AlleleCode>),
    Borrowed { start: *const AlleleCode, len: usize },
}

// SAFETY: a borrowed buffer is only read, and `GenotypeMatrix::from_borrowed_codes` requires it
// to stay valid and unmodified while the matrix exists, so sharing it between threads is as
// safe as sharing a `&[AlleleCode]`.
unsafe impl Send for CodeBuffer {}
// SAFETY: as for `Send`: the buffer is immutable for the matrix's lifetime.
unsafe impl Sync for CodeBuffer {}

impl CodeBuffer {
    fn as_slice(&self) -> &[AlleleCode] {
        match self {
            CodeBuffer::Owned(codes) => codes,
            // SAFETY: the constructor's contract keeps `start..start+len` valid while `self` lives.
            CodeBuffer::Borrowed { start, len } => unsafe { std::slice::from_raw_parts(*start, *len) },
        }
    }
}

impl Clone for CodeBuffer {
    /// A clone owns its codes, so it may outlive a borrowed original.
    fn clone(&self) -> Self {
        CodeBuffer::Owned(self.as_slice().to_vec())
    }
}

impl PartialEq for CodeBuffer {
    fn eq(&self, other: &Self) -> bool {
        self.as_slice() == other.as_slice()
    }
}

impl Eq for CodeBuffer {}

impl std::fmt::Debug for CodeBuffer {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{} codes", self.as_slice().len())
    }
}

impl GenotypeMatrix {
    /// Builds a matrix from locus-major codes (see the module doc for the layout).
    ///
    /// # Errors
    /// [`MatrixError`] when the buffer length or a code does not fit the metadata.
    pub fn new(samples: Vec<SampleMeta>, loci: Vec<LocusMeta>, codes: Vec<AlleleCode>) -> Result<Self, MatrixError> {
        check_codes(&samples, &loci, &codes)?;
        Ok(GenotypeMatrix { samples, loci, codes: CodeBuffer::Owned(codes) })
    }

    /// Builds a matrix over a code buffer it does not own, without copying it (the plugin SDK
    /// reads the host's buffer this way). The buffer is checked like [`GenotypeMatrix::new`].
    ///
    /// # Errors
    /// [`MatrixError`] when the buffer length or a code does not fit the metadata.
    ///
    /// # Safety
    /// `codes` must stay valid and unmodified for as long as the returned matrix exists (a
    /// clone owns a copy and is unaffected).
    pub unsafe fn from_borrowed_codes(
        samples: Vec<SampleMeta>,
        loci: Vec<LocusMeta>,
        codes: &[AlleleCode],
    ) -> Result<Self, MatrixError> {
        check_codes(&samples, &loci, codes)?;
        Ok(GenotypeMatrix { samples, loci, codes: CodeBuffer::Borrowed { start: codes.as_ptr(), len: codes.len() } })
    }

    /// All samples, in input order.
    pub fn samples(&self) -> &[SampleMeta] {
        &self.samples
    }

    /// All loci, in input order.
    pub fn loci(&self) -> &[LocusMeta] {
        &self.loci
    }

    /// The raw locus-major code buffer.
    pub fn codes(&self) -> &[AlleleCode] {
        self.codes.as_slice()
    }

    /// A view of every sample and locus.
    pub fn full_view<'a>(&'a self, all_samples: &'a [usize], all_loci: &'a [usize]) -> GenotypeView<'a> {
        GenotypeView::new(self, all_samples, all_loci)
    }

    /// Indices `0..n` of all samples, for building a full view.
    pub fn all_sample_indices(&self) -> Vec<usize> {
        (0..self.samples.len()).collect()
    }

    /// Indices `0..n` of all loci, for building a full view.
    pub fn all_locus_indices(&self) -> Vec<usize> {
        (0..self.loci.len()).collect()
    }
}

/// Checks the buffer length and that every code has a label.
fn check_codes(samples: &[SampleMeta], loci: &[LocusMeta], codes: &[AlleleCode]) -> Result<(), MatrixError> {
    let expected = samples.len() * loci.len() * 2;
    if codes.len() != expected {
        return Err(MatrixError::WrongLength {
            samples: samples.len(),
            loci: loci.len(),
            expected,
            found: codes.len(),
        });
    }
    let per_locus = samples.len() * 2;
    for (l, locus) in loci.iter().enumerate() {
        if locus.alleles.len() > u16::MAX as usize {
            return Err(MatrixError::TooManyAlleles { locus: locus.name.clone(), labels: locus.alleles.len() });
        }
        let block = &codes[l * per_locus..(l + 1) * per_locus];
        if let Some(bad) = block.iter().find(|c| c.0 as usize > locus.alleles.len()) {
            return Err(MatrixError::CodeOutOfRange {
                locus: locus.name.clone(),
                labels: locus.alleles.len(),
                code: bad.0,
            });
        }
    }
    Ok(())
}

/// One sampling group: a population in a year.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Group {
    /// Population name.
    pub population: String,
    /// Sampling year.
    pub year: i32,
    /// View indices of the group's samples, ascending.
    pub samples: Vec<SampleIdx>,
}

/// Allele and genotype counts at one locus over a set of samples.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct AlleleCounts {
    /// `alleles[k]` is the number of copies of code `k`; index 0 is unused and stays 0.
    pub alleles: Vec<u32>,
    /// `heterozygous_carriers[k]` counts heterozygous individuals carrying code `k`.
    pub heterozygous_carriers: Vec<u32>,
    /// Individuals with both alleles typed.
    pub typed: u32,
    /// Heterozygous individuals.
    pub heterozygotes: u32,
}

impl AlleleCounts {
    /// Gene copies typed (2 × typed individuals).
    pub fn gene_copies(&self) -> u32 {
        2 * self.typed
    }

    /// Number of distinct alleles seen.
    pub fn distinct(&self) -> usize {
        self.alleles.iter().filter(|&&c| c > 0).count()
    }

    /// Sample frequency of each code (index 0 is 0); empty when nothing is typed.
    pub fn frequencies(&self) -> Vec<f64> {
        if self.typed == 0 {
            return Vec::new();
        }
        let copies = f64::from(self.gene_copies());
        self.alleles.iter().map(|&c| f64::from(c) / copies).collect()
    }

    /// Zeroes the counts for a locus with `codes` allele labels, keeping capacity.
    pub(crate) fn reset(&mut self, codes: usize) {
        self.alleles.clear();
        self.alleles.resize(codes + 1, 0);
        self.heterozygous_carriers.clear();
        self.heterozygous_carriers.resize(codes + 1, 0);
        self.typed = 0;
        self.heterozygotes = 0;
    }
}

/// A read-only, zero-copy subset of a [`GenotypeMatrix`]: the samples and loci in play.
#[derive(Debug, Clone, Copy)]
pub struct GenotypeView<'a> {
    matrix: &'a GenotypeMatrix,
    samples: &'a [usize],
    loci: &'a [usize],
}

impl<'a> GenotypeView<'a> {
    /// A view of the given matrix sample and locus indices (ascending, in range).
    ///
    /// Indices out of range are an invariant violation of the caller and panic on first use.
    pub fn new(matrix: &'a GenotypeMatrix, samples: &'a [usize], loci: &'a [usize]) -> Self {
        GenotypeView { matrix, samples, loci }
    }

    /// The underlying matrix.
    pub fn matrix(&self) -> &'a GenotypeMatrix {
        self.matrix
    }

    /// Matrix indices of the samples in the view.
    pub fn sample_indices(&self) -> &'a [usize] {
        self.samples
    }

    /// Matrix indices of the loci in the view.
    pub fn locus_indices(&self) -> &'a [usize] {
        self.loci
    }

    /// Number of samples in the view.
    pub fn n_samples(&self) -> usize {
        self.samples.len()
    }

    /// Number of loci in the view.
    pub fn n_loci(&self) -> usize {
        self.loci.len()
    }

    /// Metadata of view sample `sample`.
    pub fn sample(&self, sample: SampleIdx) -> &'a SampleMeta {
        &self.matrix.samples[self.samples[sample]]
    }

    /// Metadata of view locus `locus`.
    pub fn locus(&self, locus: LocusIdx) -> &'a LocusMeta {
        &self.matrix.loci[self.loci[locus]]
    }

    /// The two allele codes of a sample at a locus, or `None` when the cell is untyped.
    pub fn genotype(&self, sample: SampleIdx, locus: LocusIdx) -> Option<(AlleleCode, AlleleCode)> {
        let (a, b) = self.codes(sample, locus);
        (a.is_typed() && b.is_typed()).then_some((a, b))
    }

    fn codes(&self, sample: SampleIdx, locus: LocusIdx) -> (AlleleCode, AlleleCode) {
        let n = self.matrix.samples.len();
        let at = (self.loci[locus] * n + self.samples[sample]) * 2;
        let codes = self.matrix.codes();
        (codes[at], codes[at + 1])
    }

    /// Groups (population, year) of the view's samples, sorted by population then year.
    pub fn groups(&self) -> Vec<Group> {
        let mut by_key: BTreeMap<(&str, i32), Vec<SampleIdx>> = BTreeMap::new();
        for s in 0..self.n_samples() {
            let meta = self.sample(s);
            by_key.entry((meta.population.as_str(), meta.year)).or_default().push(s);
        }
        by_key
            .into_iter()
            .map(|((population, year), samples)| Group { population: population.to_string(), year, samples })
            .collect()
    }

    /// Groups with samples of each population pooled over years (year = latest year sampled).
    pub fn populations(&self) -> Vec<Group> {
        let mut by_pop: BTreeMap<&str, (i32, Vec<SampleIdx>)> = BTreeMap::new();
        for s in 0..self.n_samples() {
            let meta = self.sample(s);
            let entry = by_pop.entry(meta.population.as_str()).or_insert((meta.year, Vec::new()));
            entry.0 = entry.0.max(meta.year);
            entry.1.push(s);
        }
        by_pop
            .into_iter()
            .map(|(population, (year, samples))| Group { population: population.to_string(), year, samples })
            .collect()
    }

    /// Allele counts at `locus` over `samples` (view indices).
    pub fn allele_counts(&self, locus: LocusIdx, samples: &[SampleIdx]) -> AlleleCounts {
        let mut counts = AlleleCounts::default();
        self.allele_counts_into(locus, samples, &mut counts);
        counts
    }

    /// Like [`GenotypeView::allele_counts`], reusing `counts`' buffers (no allocation once warm).
    pub fn allele_counts_into(&self, locus: LocusIdx, samples: &[SampleIdx], counts: &mut AlleleCounts) {
        counts.reset(self.locus(locus).alleles.len());
        for &s in samples {
            let Some((a, b)) = self.genotype(s, locus) else { continue };
            counts.typed += 1;
            counts.alleles[a.0 as usize] += 1;
            counts.alleles[b.0 as usize] += 1;
            if a != b {
                counts.heterozygotes += 1;
                counts.heterozygous_carriers[a.0 as usize] += 1;
                counts.heterozygous_carriers[b.0 as usize] += 1;
            }
        }
    }

    /// Number of samples (of `samples`) with at least one allele untyped at `locus`.
    pub fn untyped_count(&self, locus: LocusIdx, samples: &[SampleIdx]) -> usize {
        samples.iter().filter(|&&s| self.genotype(s, locus).is_none()).count()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tiny() -> GenotypeMatrix {
        let samples = vec![
            SampleMeta { id: "a".into(), population: "P".into(), year: 2020 },
            SampleMeta { id: "b".into(), population: "P".into(), year: 2020 },
            SampleMeta { id: "c".into(), population: "Q".into(), year: 2019 },
        ];
        let loci = vec![LocusMeta {
            name: "L1".into(),
            alleles: vec!["1".into(), "2".into()],
            chromosome: None,
            position: None,
        }];
        let codes = [1, 1, 1, 2, 0, 0].into_iter().map(AlleleCode).collect();
        GenotypeMatrix::new(samples, loci, codes).unwrap()
    }

    #[test]
    fn counts_alleles_and_heterozygotes() {
        let m = tiny();
        let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
        let v = m.full_view(&s, &l);
        let c = v.allele_counts(0, &[0, 1, 2]);
        assert_eq!(c.alleles, vec![0, 3, 1]);
        assert_eq!((c.typed, c.heterozygotes), (2, 1));
        assert_eq!(c.heterozygous_carriers, vec![0, 1, 1]);
        assert_eq!(v.untyped_count(0, &[0, 1, 2]), 1);
    }

    #[test]
    fn groups_sorted_by_population_then_year() {
        let m = tiny();
        let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
        let groups = m.full_view(&s, &l).groups();
        let keys: Vec<_> = groups.iter().map(|g| (g.population.as_str(), g.year, g.samples.len())).collect();
        assert_eq!(keys, vec![("P", 2020, 2), ("Q", 2019, 1)]);
    }

    #[test]
    fn subset_view_reads_through_indices() {
        let m = tiny();
        let l = m.all_locus_indices();
        let only_b = [1usize];
        let v = GenotypeView::new(&m, &only_b, &l);
        assert_eq!(v.sample(0).id, "b");
        assert_eq!(v.genotype(0, 0), Some((AlleleCode(1), AlleleCode(2))));
    }

    #[test]
    fn rejects_wrong_length_and_bad_codes() {
        let loci = vec![LocusMeta { name: "L1".into(), alleles: vec!["1".into()], chromosome: None, position: None }];
        let samples = vec![SampleMeta { id: "a".into(), population: "P".into(), year: 1 }];
        let err = GenotypeMatrix::new(samples.clone(), loci.clone(), vec![AlleleCode(1)]).unwrap_err();
        assert!(matches!(err, MatrixError::WrongLength { expected: 2, found: 1, .. }));
        let err = GenotypeMatrix::new(samples, loci, vec![AlleleCode(1), AlleleCode(2)]).unwrap_err();
        assert_eq!(err.to_string(), "locus `L1` has 1 allele labels but a genotype uses code 2");
    }
}
