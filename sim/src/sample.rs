//! Sampled genotypes: what a field team would bring back to the laboratory.

use crate::cohort::{IndividualId, PopulationIdx};
use crate::error::SimError;
use crate::markers::Locus;

/// Which individuals to take, and how to label them.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SampleRequest {
    /// The population to sample.
    pub population: PopulationIdx,
    /// How many distinct adults to take.
    pub count: usize,
    /// The year written in the `year` column and in the sample ids.
    pub year: i32,
    /// Sample ids are `<id_prefix>-<year>-<number>`, numbers from 001.
    pub id_prefix: String,
}

impl SampleRequest {
    /// `count` adults of `population`, labelled with `year` and ids `<id_prefix>-<year>-001`….
    pub fn new(population: PopulationIdx, count: usize, year: i32, id_prefix: &str) -> Self {
        Self { population, count, year, id_prefix: id_prefix.to_string() }
    }

    /// The id of the `number`-th sample (1-based): `BRM-2018-007`.
    pub fn sample_id(&self, number: usize) -> String {
        format!("{}-{}-{number:03}", self.id_prefix, self.year)
    }
}

/// One sampled adult.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SampledIndividual {
    /// Sample id (the `sample` column).
    pub sample: String,
    /// The simulated animal: equal ids mean the same animal.
    pub individual: IndividualId,
    /// Population name.
    pub population: String,
    /// The generation it was sampled in.
    pub generation: u32,
    /// The year label of the sample.
    pub year: i32,
    /// Allele codes per locus, in [`SampleSet::loci`] order; `None` is untyped. Codes are
    /// turned into text with [`Locus::label`].
    pub genotype: Vec<Option<[u16; 2]>>,
}

/// Sampled genotypes with the loci they were typed at.
#[derive(Clone, Debug, PartialEq)]
pub struct SampleSet {
    /// The loci, in column order.
    pub loci: Vec<Locus>,
    /// The sampled adults, in the order they were drawn.
    pub individuals: Vec<SampledIndividual>,
}

impl SampleSet {
    /// Appends the individuals of `other`, which must have the same loci.
    ///
    /// # Errors
    /// [`SimError::LociMismatch`] when the loci differ.
    pub fn append(&mut self, other: SampleSet) -> Result<(), SimError> {
        if self.loci != other.loci {
            return Err(SimError::LociMismatch);
        }
        self.individuals.extend(other.individuals);
        Ok(())
    }

    /// The wide-table cell of individual `individual` at locus `locus`: `a/b` with the smaller
    /// allele code first (`152/156`), or an empty string when untyped.
    ///
    /// # Panics
    /// When either index is out of range.
    pub fn cell(&self, individual: usize, locus: usize) -> String {
        match self.individuals[individual].genotype[locus] {
            Some(pair) => {
                let (low, high) = (pair[0].min(pair[1]), pair[0].max(pair[1]));
                let locus = &self.loci[locus];
                format!("{}/{}", locus.label(low), locus.label(high))
            }
            None => String::new(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::markers::LocusKind;

    fn tiny() -> SampleSet {
        let loci = vec![
            Locus {
                name: "Tk01".into(),
                kind: LocusKind::Microsatellite { repeat_length: 4, min_size: 140, max_size: 220 },
                mutation_rate: 0.0,
            },
            Locus { name: "S1".into(), kind: LocusKind::Snp { bases: ['C', 'T'] }, mutation_rate: 0.0 },
        ];
        let individual = SampledIndividual {
            sample: "X-2020-001".into(),
            individual: IndividualId(4),
            population: "North".into(),
            generation: 3,
            year: 2020,
            genotype: vec![Some([156, 152]), None],
        };
        SampleSet { loci, individuals: vec![individual] }
    }

    #[test]
    fn sample_ids_are_zero_padded() {
        let request = SampleRequest::new(PopulationIdx(0), 10, 2018, "BRM");
        assert_eq!(request.sample_id(7), "BRM-2018-007");
        assert_eq!(request.sample_id(1234), "BRM-2018-1234");
    }

    #[test]
    fn cells_sort_alleles_and_leave_untyped_empty() {
        let mut set = tiny();
        assert_eq!(set.cell(0, 0), "152/156");
        assert_eq!(set.cell(0, 1), "");
        set.individuals[0].genotype[1] = Some([1, 0]);
        assert_eq!(set.cell(0, 1), "C/T");
    }

    #[test]
    fn append_requires_the_same_loci() {
        let mut set = tiny();
        set.append(tiny()).unwrap();
        assert_eq!(set.individuals.len(), 2);
        let mut other = tiny();
        other.loci[1].name = "S2".into();
        assert_eq!(set.append(other), Err(SimError::LociMismatch));
    }
}
