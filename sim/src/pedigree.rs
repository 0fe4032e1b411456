//! Animals of known pedigree on linked chromosomes, with their realised inbreeding.
//!
//! For tests of individual inbreeding and runs of homozygosity: each animal is the offspring of
//! one mating type ([`Mating`]) in a family of its own, built from founders drawn afresh from a
//! base population of biallelic SNPs in Hardy–Weinberg and linkage equilibrium (founders are
//! unrelated and not inbred). The pedigree inbreeding coefficients are Wright's (1922): 1/4 for
//! the offspring of full sibs, 1/8 of half sibs, 1/16 of first cousins, 0 of unrelated parents.
//!
//! Chromosomes follow a uniform genetic map of [`Genome::centimorgans_per_mb`]. In each meiosis
//! the crossovers on a chromosome arise independently in bins of [`BIN_BP`] base pairs, each
//! with probability equal to its length in Morgans, at a uniform position inside the bin: a
//! binomial count that is Poisson to within the bin resolution (no interference, Haldane's
//! map). The gamete starts on either parental strand with probability ½ and switches strand at
//! each crossover.
//!
//! Every founder haplotype carries its own label, and a haplotype is tracked as the list of
//! labelled segments it inherited, so an animal's **realised** inbreeding, the share of its
//! genome where both haplotypes carry the same founder label (identical by descent), is known
//! exactly and varies around the pedigree value (Hill & Weir 2011, *Genet Res* 93:47–64).
//!
//! SNPs sit every [`Genome::snp_spacing_bp`] base pairs from `spacing/2`; each has a base
//! frequency drawn uniformly from 0.05 to 0.95, and each founder haplotype draws its allele from
//! it. Everything comes from one seed, through the integer-only draws of the `random` module.

use popgauge_abi::{AlleleCode, GenotypeMatrix, LocusMeta, MatrixError, SampleMeta};

use crate::random::{SimRng, Stream, chance_threshold};

/// Crossover bins, in base pairs.
pub const BIN_BP: u64 = 100_000;
/// Lowest and highest base allele frequency of a SNP.
const FREQUENCY_RANGE: (f64, f64) = (0.05, 0.95);

/// Chromosomes, their genetic map and the SNP panel along them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Genome {
    /// Number of chromosomes (`chr01`, `chr02`, …).
    pub chromosomes: usize,
    /// Length of each, in base pairs.
    pub chromosome_length_bp: u64,
    /// Distance between neighbouring SNPs, in base pairs.
    pub snp_spacing_bp: u64,
    /// Genetic map length per Mb (uniform).
    pub centimorgans_per_mb: f64,
}

impl Genome {
    /// SNPs per chromosome.
    pub fn snps_per_chromosome(&self) -> usize {
        usize::try_from(self.chromosome_length_bp / self.snp_spacing_bp).unwrap_or(0)
    }

    /// Position (bp, 1-based as VCF POS) of SNP `index` on its chromosome.
    pub fn position(&self, index: usize) -> u64 {
        self.snp_spacing_bp / 2 + index as u64 * self.snp_spacing_bp
    }

    /// The name of chromosome `chromosome` (0-based): `chr01`, `chr02`, …
    pub fn chromosome_name(chromosome: usize) -> String {
        format!("chr{:02}", chromosome + 1)
    }
}

/// The mating an animal is the offspring of.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Mating {
    /// Full siblings.
    FullSibs,
    /// Half siblings (one common parent).
    HalfSibs,
    /// First cousins (their parents are full siblings).
    FirstCousins,
    /// Unrelated founders.
    Unrelated,
}

impl Mating {
    /// Every mating type, most inbred first.
    pub const ALL: [Mating; 4] = [Mating::FullSibs, Mating::HalfSibs, Mating::FirstCousins, Mating::Unrelated];

    /// The offspring's pedigree inbreeding coefficient (Wright 1922).
    pub fn pedigree_inbreeding(self) -> f64 {
        match self {
            Mating::FullSibs => 0.25,
            Mating::HalfSibs => 0.125,
            Mating::FirstCousins => 0.0625,
            Mating::Unrelated => 0.0,
        }
    }

    /// Sample-id prefix.
    pub fn prefix(self) -> &'static str {
        match self {
            Mating::FullSibs => "FS",
            Mating::HalfSibs => "HS",
            Mating::FirstCousins => "FC",
            Mating::Unrelated => "UR",
        }
    }
}

/// What to simulate.
#[derive(Debug, Clone, PartialEq)]
pub struct PedigreeStudy {
    /// Chromosomes and SNPs.
    pub genome: Genome,
    /// Animals per mating type, in the order given.
    pub animals: Vec<(Mating, usize)>,
    /// Population name of every animal.
    pub population: String,
    /// Sampling year of every animal.
    pub year: i32,
    /// The seed.
    pub seed: u64,
}

/// One simulated animal.
#[derive(Debug, Clone, PartialEq)]
pub struct PedigreeAnimal {
    /// Sample id (`FS001`, …).
    pub id: String,
    /// The mating it came from.
    pub mating: Mating,
    /// Share of its genome (by length) identical by descent between its two haplotypes.
    pub realised_inbreeding: f64,
}

/// The animals and their genotypes.
#[derive(Debug, Clone, PartialEq)]
pub struct PedigreeSample {
    /// Genotypes, with each locus's chromosome and position.
    pub matrix: GenotypeMatrix,
    /// The animals, in matrix order.
    pub animals: Vec<PedigreeAnimal>,
}

/// A haplotype of one chromosome: (start bp, founder label) segments, the first starting at 0.
type Chromosome = Vec<(u64, u32)>;
/// A haplotype: one [`Chromosome`] per chromosome.
type Haplotype = Vec<Chromosome>;
/// A diploid animal.
type Diploid = [Haplotype; 2];

struct Breeder<'g> {
    genome: &'g Genome,
    meiosis: SimRng,
    founder_alleles: SimRng,
    frequencies: Vec<u32>,
    /// Per founder label, one allele bit per SNP of the whole genome.
    alleles: Vec<Vec<bool>>,
}

impl Breeder<'_> {
    fn founder(&mut self) -> Diploid {
        let mut haplotype = || {
            let label = u32::try_from(self.alleles.len()).expect("fewer than 2^32 founder haplotypes");
            let bits = self.frequencies.iter().map(|&t| self.founder_alleles.chance(t)).collect();
            self.alleles.push(bits);
            vec![vec![(0, label)]; self.genome.chromosomes]
        };
        [haplotype(), haplotype()]
    }

    fn gamete(&mut self, parent: &Diploid) -> Haplotype {
        (0..self.genome.chromosomes).map(|c| self.recombine(&parent[0][c], &parent[1][c])).collect()
    }

    fn recombine(&mut self, first: &Chromosome, second: &Chromosome) -> Chromosome {
        let length = self.genome.chromosome_length_bp;
        let bin_morgans = BIN_BP as f64 / 1_000_000.0 * self.genome.centimorgans_per_mb / 100.0;
        let threshold = chance_threshold(bin_morgans.min(1.0));
        let mut crossovers = Vec::new();
        let mut bin_start = 0;
        while bin_start < length {
            let bin = BIN_BP.min(length - bin_start);
            if self.meiosis.chance(threshold) {
                crossovers.push(bin_start + self.meiosis.index(usize::try_from(bin).unwrap_or(1)) as u64);
            }
            bin_start += bin;
        }
        crossovers.sort_unstable();
        let strands = [first, second];
        let mut strand = (self.meiosis.bits() & 1) as usize;
        let mut gamete = Vec::new();
        let mut from = 0;
        for &at in crossovers.iter().chain(std::iter::once(&length)) {
            copy_segments(strands[strand], from, at, &mut gamete);
            from = at;
            strand = 1 - strand;
        }
        gamete
    }

    fn offspring(&mut self, mother: &Diploid, father: &Diploid) -> Diploid {
        [self.gamete(mother), self.gamete(father)]
    }

    /// An animal of the given mating, in a family of fresh founders.
    fn animal(&mut self, mating: Mating) -> Diploid {
        match mating {
            Mating::Unrelated => {
                let (a, b) = (self.founder(), self.founder());
                self.offspring(&a, &b)
            }
            Mating::FullSibs => {
                let (a, b) = (self.founder(), self.founder());
                let (sib1, sib2) = (self.offspring(&a, &b), self.offspring(&a, &b));
                self.offspring(&sib1, &sib2)
            }
            Mating::HalfSibs => {
                let (common, b, c) = (self.founder(), self.founder(), self.founder());
                let (half1, half2) = (self.offspring(&common, &b), self.offspring(&common, &c));
                self.offspring(&half1, &half2)
            }
            Mating::FirstCousins => {
                let (a, b) = (self.founder(), self.founder());
                let (sib1, sib2) = (self.offspring(&a, &b), self.offspring(&a, &b));
                let (mate1, mate2) = (self.founder(), self.founder());
                let (cousin1, cousin2) = (self.offspring(&sib1, &mate1), self.offspring(&sib2, &mate2));
                self.offspring(&cousin1, &cousin2)
            }
        }
    }
}

/// Appends the segments of `source` that cover `[from, to)`, merging equal neighbours.
fn copy_segments(source: &Chromosome, from: u64, to: u64, out: &mut Chromosome) {
    if from >= to {
        return;
    }
    for (i, &(start, label)) in source.iter().enumerate() {
        let end = source.get(i + 1).map_or(u64::MAX, |next| next.0);
        if end <= from || start >= to {
            continue;
        }
        let begin = start.max(from);
        if out.last().is_none_or(|last| last.1 != label) {
            out.push((begin, label));
        }
    }
}

/// Length (bp) of `[0, length)` where the two chromosomes carry the same label.
fn identical_length(a: &Chromosome, b: &Chromosome, length: u64) -> u64 {
    let mut breaks: Vec<u64> = a.iter().chain(b).map(|s| s.0).collect();
    breaks.push(length);
    breaks.sort_unstable();
    breaks.dedup();
    breaks.windows(2).filter(|w| label_at(a, w[0]) == label_at(b, w[0])).map(|w| w[1] - w[0]).sum()
}

fn label_at(chromosome: &Chromosome, position: u64) -> u32 {
    let after = chromosome.partition_point(|s| s.0 <= position);
    chromosome[after.saturating_sub(1)].1
}

/// Simulates the study's animals.
///
/// # Errors
/// [`MatrixError`] only if the genome has more SNPs than a matrix can index (never for sizes
/// that fit in memory).
pub fn simulate_pedigrees(study: &PedigreeStudy) -> Result<PedigreeSample, MatrixError> {
    let genome = &study.genome;
    let per_chromosome = genome.snps_per_chromosome();
    let mut setup = SimRng::new(study.seed, Stream::Setup);
    let (low, high) = FREQUENCY_RANGE;
    let frequencies =
        (0..per_chromosome * genome.chromosomes).map(|_| chance_threshold(low + (high - low) * setup.unit())).collect();
    let mut breeder = Breeder {
        genome,
        meiosis: SimRng::new(study.seed, Stream::Evolution),
        founder_alleles: SimRng::new(study.seed, Stream::Sampling),
        frequencies,
        alleles: Vec::new(),
    };
    let mut animals = Vec::new();
    let mut diploids = Vec::new();
    for &(mating, count) in &study.animals {
        for number in 1..=count {
            let diploid = breeder.animal(mating);
            let identical: u64 = (0..genome.chromosomes)
                .map(|c| identical_length(&diploid[0][c], &diploid[1][c], genome.chromosome_length_bp))
                .sum();
            animals.push(PedigreeAnimal {
                id: format!("{}{number:03}", mating.prefix()),
                mating,
                realised_inbreeding: identical as f64
                    / (genome.chromosome_length_bp * genome.chromosomes as u64) as f64,
            });
            diploids.push(diploid);
        }
    }
    let samples = animals
        .iter()
        .map(|a| SampleMeta { id: a.id.clone(), population: study.population.clone(), year: study.year })
        .collect();
    let mut loci = Vec::with_capacity(per_chromosome * genome.chromosomes);
    let mut codes = Vec::with_capacity(2 * animals.len() * per_chromosome * genome.chromosomes);
    for chromosome in 0..genome.chromosomes {
        for index in 0..per_chromosome {
            let position = genome.position(index);
            let snp = chromosome * per_chromosome + index;
            for diploid in &diploids {
                for haplotype in diploid {
                    let label = label_at(&haplotype[chromosome], position) as usize;
                    codes.push(AlleleCode(1 + u16::from(breeder.alleles[label][snp])));
                }
            }
            loci.push(LocusMeta {
                name: format!("{}:{position}", Genome::chromosome_name(chromosome)),
                alleles: vec!["A".into(), "G".into()],
                chromosome: Some(Genome::chromosome_name(chromosome)),
                position: Some(position),
            });
        }
    }
    Ok(PedigreeSample { matrix: GenotypeMatrix::new(samples, loci, codes)?, animals })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn study(per_class: usize, seed: u64) -> PedigreeStudy {
        PedigreeStudy {
            genome: Genome {
                chromosomes: 4,
                chromosome_length_bp: 100_000_000,
                snp_spacing_bp: 100_000,
                centimorgans_per_mb: 1.0,
            },
            animals: Mating::ALL.iter().map(|&m| (m, per_class)).collect(),
            population: "Test".into(),
            year: 2024,
            seed,
        }
    }

    /// By hand: segments [0,10) a, [10,20) b copied over [5,15) give (5,a), (10,b).
    #[test]
    fn segments_are_copied_over_a_range() {
        let source = vec![(0, 1), (10, 2)];
        let mut out = Vec::new();
        copy_segments(&source, 5, 15, &mut out);
        assert_eq!(out, vec![(5, 1), (10, 2)]);
        copy_segments(&source, 15, 30, &mut out);
        assert_eq!(out, vec![(5, 1), (10, 2)], "an equal label continues the last segment");
        assert_eq!(identical_length(&vec![(0, 1), (10, 2)], &vec![(0, 1), (5, 3)], 20), 5);
    }

    /// Wright (1922): the mean realised inbreeding of each mating type is near its pedigree
    /// value. The realised share varies between animals (Hill & Weir 2011; from memory, an sd
    /// below 0.1 for offspring of full sibs with a genome of a few Morgans), so with 40 animals
    /// the mean is within ±0.04 (about 3 standard errors; common practice).
    #[test]
    fn realised_inbreeding_averages_the_pedigree_value() {
        let sample = simulate_pedigrees(&study(40, 11)).unwrap();
        for mating in Mating::ALL {
            let values: Vec<f64> =
                sample.animals.iter().filter(|a| a.mating == mating).map(|a| a.realised_inbreeding).collect();
            let mean = values.iter().sum::<f64>() / values.len() as f64;
            assert!((mean - mating.pedigree_inbreeding()).abs() < 0.04, "{mating:?}: mean {mean}");
        }
        let unrelated = sample.animals.iter().filter(|a| a.mating == Mating::Unrelated);
        assert!(unrelated.clone().all(|a| a.realised_inbreeding == 0.0), "unrelated founders share no label");
    }

    /// The same seed gives the same matrix; loci carry chromosome and position.
    #[test]
    fn same_seed_same_genotypes_and_positions() {
        let a = simulate_pedigrees(&study(2, 5)).unwrap();
        let b = simulate_pedigrees(&study(2, 5)).unwrap();
        assert_eq!(a, b);
        let first = &a.matrix.loci()[0];
        assert_eq!((first.chromosome.as_deref(), first.position), (Some("chr01"), Some(50_000)));
        assert_eq!(a.matrix.loci().len(), 4 * 1000);
        assert_eq!(a.matrix.samples().len(), 8);
    }
}
