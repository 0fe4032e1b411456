//! The sizes popgauge accepts, and the refusal beyond them.
//!
//! Every reader checks these before it allocates for what it read, so an oversized or
//! malformed file is refused with a message, never by running out of memory. The README
//! section "What popgauge refuses, and why" lists them for users.

/// Largest data file read (2 GiB): files are read whole into memory, and a genotype table
/// within the other limits is far smaller.
pub const MAX_FILE_BYTES: u64 = 2 << 30;

/// Most samples (rows) in one assessment.
pub const MAX_SAMPLES: usize = 100_000;

/// Most loci (columns, or VCF sites) in one assessment.
pub const MAX_LOCI: usize = 1_000_000;

/// Most genotypes (samples × loci): the matrix takes 4 bytes per genotype, so this caps it at
/// 800 MB, leaving room for the steps' own working memory on an ordinary workstation.
pub const MAX_GENOTYPES: usize = 200_000_000;

/// Most distinct alleles at one locus: allele codes are 16-bit and code 0 means untyped.
pub const MAX_ALLELES_PER_LOCUS: usize = u16::MAX as usize;

/// Longest sample id, population name or locus name, in characters: names appear in table
/// cells and headings of the document and must fit there.
pub const MAX_NAME_CHARS: usize = 64;

/// What grew past a limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Limited {
    /// The file's size in bytes.
    FileBytes,
    /// Rows of samples.
    Samples,
    /// Locus columns.
    Loci,
    /// Samples × loci.
    Genotypes,
    /// Cells of any delimited table (checked while splitting, before the readers allocate).
    Cells,
}

impl Limited {
    /// The limit.
    pub fn limit(self) -> u64 {
        match self {
            Limited::FileBytes => MAX_FILE_BYTES,
            Limited::Samples => MAX_SAMPLES as u64,
            Limited::Loci => MAX_LOCI as u64,
            Limited::Genotypes | Limited::Cells => MAX_GENOTYPES as u64,
        }
    }

    /// What is counted, in words.
    pub fn noun(self) -> &'static str {
        match self {
            Limited::FileBytes => "bytes",
            Limited::Samples => "samples",
            Limited::Loci => "loci",
            Limited::Genotypes => "genotypes (samples × loci)",
            Limited::Cells => "table cells",
        }
    }

    /// How to get under the limit.
    pub fn help(self) -> &'static str {
        match self {
            Limited::FileBytes => "check that this is the genotype table; split a larger study into several cases",
            Limited::Samples | Limited::Genotypes | Limited::Cells => {
                "split the study into several cases (for example by region), or thin the loci before the assessment"
            }
            Limited::Loci => "thin the loci before the assessment (for example one SNP per linkage block)",
        }
    }
}

/// True when `count` passes the limit on `what`.
pub fn exceeds(what: Limited, count: u64) -> bool {
    count > what.limit()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits_are_consistent() {
        assert!(MAX_SAMPLES as u64 * 2 <= MAX_GENOTYPES as u64, "a two-locus study of the largest size fits");
        assert_eq!(MAX_ALLELES_PER_LOCUS, 65_535, "u16 codes minus the untyped code 0");
        assert!(exceeds(Limited::Samples, MAX_SAMPLES as u64 + 1));
        assert!(!exceeds(Limited::Samples, MAX_SAMPLES as u64));
    }
}
