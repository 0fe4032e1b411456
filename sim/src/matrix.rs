//! A simulated [`SampleSet`] as the engine's [`GenotypeMatrix`], for the planning command, the
//! statistical tests and the benchmarks.

use popgauge_abi::{AlleleCode, GenotypeMatrix, LocusMeta, MatrixError, SampleMeta};

use crate::SampleSet;

impl SampleSet {
    /// The samples as a genotype matrix: one locus per simulated locus, allele codes 1… in
    /// ascending allele order, labels as the wide table writes them (`152`, `A`), untyped cells
    /// as code 0.
    ///
    /// # Errors
    /// [`MatrixError`] only if the set is inconsistent (a genotype vector shorter than the loci);
    /// sets made by [`crate::Simulation::sample`] never are.
    pub fn to_genotype_matrix(&self) -> Result<GenotypeMatrix, MatrixError> {
        let samples: Vec<SampleMeta> = self
            .individuals
            .iter()
            .map(|i| SampleMeta { id: i.sample.clone(), population: i.population.clone(), year: i.year })
            .collect();
        let mut loci = Vec::with_capacity(self.loci.len());
        let mut codes = Vec::with_capacity(2 * samples.len() * self.loci.len());
        for (l, locus) in self.loci.iter().enumerate() {
            let genotype = |i: &crate::SampledIndividual| i.genotype.get(l).copied().flatten();
            let mut distinct: Vec<u16> = self.individuals.iter().filter_map(genotype).flatten().collect();
            distinct.sort_unstable();
            distinct.dedup();
            // A position is below distinct.len() ≤ 65536 distinct u16 values; code 0 (untyped)
            // is what an impossible miss or overflow would give, never a wrong allele.
            let code_of = |allele: u16| {
                AlleleCode(distinct.binary_search(&allele).map_or(0, |p| u16::try_from(p + 1).unwrap_or(0)))
            };
            for individual in &self.individuals {
                match genotype(individual) {
                    Some([a, b]) => codes.extend([code_of(a), code_of(b)]),
                    None => codes.extend([AlleleCode::UNTYPED, AlleleCode::UNTYPED]),
                }
            }
            let alleles = distinct.iter().map(|&a| locus.label(a)).collect();
            loci.push(LocusMeta { name: locus.name.clone(), alleles, chromosome: None, position: None });
        }
        GenotypeMatrix::new(samples, loci, codes)
    }
}

#[cfg(test)]
mod tests {
    use crate::{
        BurnIn, LocusSpec, MarkerModel, MigrationSchedule, PopulationSpec, SampleRequest, Simulation, SimulationConfig,
        SizeSchedule, SnpModel,
    };

    /// The matrix carries every sampled individual and locus, and its typed allele copies agree
    /// with the simulated genotypes (hand check of the conversion, no estimate involved).
    #[test]
    fn matrix_matches_the_sample_set() {
        let config = SimulationConfig {
            loci: LocusSpec::numbered("S", 12, MarkerModel::Snp(SnpModel::default())),
            populations: vec![PopulationSpec::new("P", SizeSchedule::constant(40))],
            migration: MigrationSchedule::none(),
            burn_in: BurnIn { ancestral_size: 40, generations: 0 },
        };
        let mut simulation = Simulation::new(config, 7).unwrap();
        simulation.advance_to(3).unwrap();
        let population = simulation.population_index("P").unwrap();
        let set = simulation.sample(&SampleRequest::new(population, 15, 2020, "P")).unwrap();
        let matrix = set.to_genotype_matrix().unwrap();
        assert_eq!((matrix.samples().len(), matrix.loci().len()), (15, 12));
        let samples = set.individuals.len();
        for (l, locus) in set.loci.iter().enumerate() {
            let simulated = set.individuals.iter().filter(|i| i.genotype[l].is_some()).count() * 2;
            let codes = &matrix.codes()[2 * samples * l..2 * samples * (l + 1)];
            let typed = codes.iter().filter(|c| c.0 != 0).count();
            assert_eq!(typed, simulated, "locus {}", locus.name);
            assert_eq!(matrix.loci()[l].name, locus.name);
        }
    }
}
