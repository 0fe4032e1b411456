//! Simulated genotypes for the statistical tests and the benchmarks: a `popgauge-sim`
//! [`SampleSet`] as a [`GenotypeMatrix`] (the benchmarks include this file by path, so it uses
//! no `crate::` item).

use std::collections::BTreeSet;

use popgauge_abi::{AlleleCode, GenotypeMatrix, LocusMeta, SampleMeta};
use popgauge_sim::SampleSet;

/// The samples of `set` as a genotype matrix: one locus per simulated locus, allele labels as
/// the wide table writes them (`152`, `A`), untyped cells as code 0.
pub fn matrix_from_samples(set: &SampleSet) -> GenotypeMatrix {
    let samples: Vec<SampleMeta> = set
        .individuals
        .iter()
        .map(|i| SampleMeta { id: i.sample.clone(), population: i.population.clone(), year: i.year })
        .collect();
    let mut loci = Vec::with_capacity(set.loci.len());
    let mut codes = Vec::with_capacity(2 * samples.len() * set.loci.len());
    for (l, locus) in set.loci.iter().enumerate() {
        let distinct: Vec<u16> = set
            .individuals
            .iter()
            .filter_map(|i| i.genotype[l])
            .flatten()
            .collect::<BTreeSet<u16>>()
            .into_iter()
            .collect();
        let code_of = |allele: u16| {
            let position = distinct.binary_search(&allele).expect("every allele is among the distinct ones");
            AlleleCode(u16::try_from(position + 1).expect("fewer than 65535 alleles per locus"))
        };
        for individual in &set.individuals {
            match individual.genotype[l] {
                Some([a, b]) => codes.extend([code_of(a), code_of(b)]),
                None => codes.extend([AlleleCode::UNTYPED, AlleleCode::UNTYPED]),
            }
        }
        let alleles = distinct.iter().map(|&a| locus.label(a)).collect();
        loci.push(LocusMeta { name: locus.name.clone(), alleles, chromosome: None });
    }
    GenotypeMatrix::new(samples, loci, codes).expect("a simulated sample set is a well-formed matrix")
}
