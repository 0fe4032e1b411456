//! Sampled SNP genotypes written as VCF 4.3: one record per SNP, GT only, unphased, `./.` for
//! an untyped call. CHROM and POS are labels from a [`ChromosomeLayout`]; the simulated loci
//! themselves are unlinked.

use std::io::{self, Write};

use crate::markers::LocusKind;
use crate::sample::SampleSet;

/// Where the SNPs of a written VCF sit: in file order, filling `chromosomes` chromosomes
/// (`chr01`, `chr02`, …) in blocks as equal as possible, `spacing_bp` apart from `spacing_bp`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ChromosomeLayout {
    /// Chromosomes the SNPs are spread over, at least 1.
    pub chromosomes: usize,
    /// Distance between neighbouring SNPs on a chromosome, in base pairs.
    pub spacing_bp: u64,
}

impl ChromosomeLayout {
    /// The chromosome number (from 1) and position of SNP `index` of `loci`.
    pub fn place(&self, loci: usize, index: usize) -> (usize, u64) {
        let per_chromosome = loci.div_ceil(self.chromosomes.max(1)).max(1);
        (index / per_chromosome + 1, self.spacing_bp * (index % per_chromosome + 1) as u64)
    }
}

/// Writes `samples` (SNP loci only) as VCF 4.3, uncompressed, with `source` in the
/// `##source` line; REF and ALT are the locus's two bases.
///
/// # Errors
/// Any error of `out`, or an error naming the first locus that is not a SNP.
pub fn write_snp_vcf(
    samples: &SampleSet,
    layout: ChromosomeLayout,
    source: &str,
    mut out: impl Write,
) -> io::Result<()> {
    let loci = samples.loci.len();
    writeln!(out, "##fileformat=VCFv4.3\n##source={source}")?;
    for chromosome in 1..=layout.chromosomes {
        let on_it = (0..loci).filter(|&index| layout.place(loci, index).0 == chromosome).count() as u64;
        writeln!(out, "##contig=<ID=chr{chromosome:02},length={}>", layout.spacing_bp * (on_it + 1))?;
    }
    out.write_all(b"##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n")?;
    out.write_all(b"#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT")?;
    for individual in &samples.individuals {
        write!(out, "\t{}", individual.sample)?;
    }
    out.write_all(b"\n")?;
    let mut line = Vec::with_capacity(64 + 4 * samples.individuals.len());
    for (index, locus) in samples.loci.iter().enumerate() {
        let LocusKind::Snp { bases } = locus.kind else {
            return Err(io::Error::other(format!("locus {} is not a SNP", locus.name)));
        };
        let (chromosome, position) = layout.place(loci, index);
        line.clear();
        write!(line, "chr{chromosome:02}\t{position}\t{}\t{}\t{}\t.\tPASS\t.\tGT", locus.name, bases[0], bases[1])?;
        for individual in &samples.individuals {
            line.extend_from_slice(match individual.genotype[index] {
                None => b"\t./.",
                Some([a, b]) => match a.min(1) + b.min(1) {
                    0 => b"\t0/0",
                    1 => b"\t0/1",
                    _ => b"\t1/1",
                },
            });
        }
        line.push(b'\n');
        out.write_all(&line)?;
    }
    Ok(())
}

/// `bytes` compressed in BGZF blocks (the blocked gzip of `bgzip`), as popgauge reads them.
///
/// # Errors
/// Any error of the compressor.
pub fn bgzip(bytes: &[u8]) -> io::Result<Vec<u8>> {
    let mut compressed = noodles_bgzf::io::Writer::new(Vec::new());
    compressed.write_all(bytes)?;
    compressed.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cohort::IndividualId;
    use crate::markers::Locus;
    use crate::sample::SampledIndividual;

    #[test]
    fn snps_fill_chromosomes_in_equal_blocks() {
        let layout = ChromosomeLayout { chromosomes: 3, spacing_bp: 100 };
        let placed: Vec<(usize, u64)> = (0..7).map(|index| layout.place(7, index)).collect();
        assert_eq!(placed, [(1, 100), (1, 200), (1, 300), (2, 100), (2, 200), (2, 300), (3, 100)]);
    }

    #[test]
    fn calls_are_written_as_gt_and_untyped_as_missing() {
        let snp =
            |name: &str| Locus { name: name.into(), kind: LocusKind::Snp { bases: ['A', 'G'] }, mutation_rate: 0.0 };
        let samples = SampleSet {
            loci: vec![snp("s1"), snp("s2")],
            individuals: vec![SampledIndividual {
                sample: "X-2020-001".into(),
                individual: IndividualId(0),
                population: "North".into(),
                generation: 1,
                year: 2020,
                genotype: vec![Some([1, 0]), None],
            }],
        };
        let mut out = Vec::new();
        write_snp_vcf(&samples, ChromosomeLayout { chromosomes: 2, spacing_bp: 10 }, "test", &mut out).unwrap();
        let text = String::from_utf8(out).unwrap();
        assert!(text.starts_with("##fileformat=VCFv4.3\n##source=test\n##contig=<ID=chr01,length=20>\n"));
        assert!(text.contains("\nchr01\t10\ts1\tA\tG\t.\tPASS\t.\tGT\t0/1\n"), "{text}");
        assert!(text.ends_with("\nchr02\t10\ts2\tA\tG\t.\tPASS\t.\tGT\t./.\n"), "{text}");
    }
}
