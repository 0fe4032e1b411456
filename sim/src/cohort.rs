//! The adults of one population in one generation, and how they make the next generation.

use crate::markers::PreparedLocus;
use crate::random::SimRng;

/// The position of a population in `SimulationConfig::populations` (the simulation's
/// population order, which also indexes the migration matrix).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PopulationIdx(pub usize);

/// A unique number given to every simulated individual at birth; two sampled records with the
/// same id are the same animal.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct IndividualId(pub u64);

/// The adults of one population in one generation: `2 × loci` allele codes per individual,
/// laid out individual by individual, locus by locus, gene copy by gene copy.
#[derive(Clone, Debug, Default)]
pub(crate) struct Cohort {
    genomes: Vec<u16>,
    ids: Vec<IndividualId>,
    stride: usize,
}

impl Cohort {
    pub(crate) fn with_capacity(individuals: usize, loci: usize) -> Self {
        let stride = 2 * loci;
        Self { genomes: Vec::with_capacity(individuals * stride), ids: Vec::with_capacity(individuals), stride }
    }

    pub(crate) fn len(&self) -> usize {
        self.ids.len()
    }

    /// The allele codes of individual `index`: `[locus0 copy0, locus0 copy1, locus1 copy0, …]`.
    pub(crate) fn genome(&self, index: usize) -> &[u16] {
        &self.genomes[index * self.stride..(index + 1) * self.stride]
    }

    pub(crate) fn id(&self, index: usize) -> IndividualId {
        self.ids[index]
    }

    /// Adds one individual; `genome` must hold `2 × loci` codes.
    pub(crate) fn push(&mut self, id: IndividualId, genome: &[u16]) {
        debug_assert_eq!(genome.len(), self.stride);
        self.genomes.extend_from_slice(genome);
        self.ids.push(id);
    }

    /// Removes the individuals at `indices` (distinct, any order), keeping the others in their
    /// order.
    pub(crate) fn remove(&mut self, indices: &[usize]) {
        let mut doomed = vec![false; self.len()];
        for &index in indices {
            doomed[index] = true;
        }
        let stride = self.stride;
        let mut kept = Cohort::with_capacity(self.len() - indices.len(), stride / 2);
        for index in (0..self.len()).filter(|&index| !doomed[index]) {
            kept.genomes.extend_from_slice(&self.genomes[index * stride..(index + 1) * stride]);
            kept.ids.push(self.ids[index]);
        }
        *self = kept;
    }

    /// Counts gene copies of each allele code at `locus`.
    pub(crate) fn allele_counts(&self, locus: usize) -> std::collections::BTreeMap<u16, usize> {
        let mut counts = std::collections::BTreeMap::new();
        for genome in self.genomes.chunks_exact(self.stride) {
            for code in &genome[2 * locus..2 * locus + 2] {
                *counts.entry(*code).or_insert(0) += 1;
            }
        }
        counts
    }
}

/// Where each new adult's parents come from, and the shared state of breeding.
pub(crate) struct Breeding<'a> {
    pub(crate) loci: &'a [PreparedLocus],
    pub(crate) rng: &'a mut SimRng,
    pub(crate) next_id: &'a mut u64,
}

impl Breeding<'_> {
    /// Produces `size` adults for population `home` from the previous generation `parents`.
    ///
    /// `immigration` lists (source population, cumulative probability) for the other
    /// populations whose rate is positive; an adult whose uniform draw falls below no entry
    /// is born at home. Within its birth population an adult picks two parents uniformly with
    /// replacement (selfing allowed), and from each parent one gene copy per locus, every
    /// locus independently: the ideal Wright–Fisher population with random union of gametes
    /// and free recombination.
    pub(crate) fn cohort(
        &mut self,
        parents: &[Cohort],
        home: usize,
        size: usize,
        immigration: &[(usize, f64)],
    ) -> Cohort {
        let mut cohort = Cohort::with_capacity(size, self.loci.len());
        let mut genome = vec![0u16; 2 * self.loci.len()];
        for _ in 0..size {
            let source = if immigration.is_empty() { home } else { pick_source(immigration, home, self.rng) };
            self.child(&parents[source], &mut genome);
            let id = IndividualId(*self.next_id);
            *self.next_id += 1;
            cohort.push(id, &genome);
        }
        cohort
    }

    /// Writes one offspring of two random members of `parents` into `genome`, with mutation.
    fn child(&mut self, parents: &Cohort, genome: &mut [u16]) {
        for copy in 0..2 {
            let parent = parents.genome(self.rng.index(parents.len()));
            let mut bits = 0u64;
            for locus in 0..self.loci.len() {
                if locus % 64 == 0 {
                    bits = self.rng.bits();
                }
                let from = ((bits >> (locus % 64)) & 1) as usize;
                genome[2 * locus + copy] = parent[2 * locus + from];
            }
        }
        for (locus, prepared) in self.loci.iter().enumerate() {
            if prepared.mutation_threshold == 0 {
                continue;
            }
            for copy in 0..2 {
                if self.rng.chance(prepared.mutation_threshold) {
                    genome[2 * locus + copy] = prepared.mutate(genome[2 * locus + copy], self.rng);
                }
            }
        }
    }
}

fn pick_source(immigration: &[(usize, f64)], home: usize, rng: &mut SimRng) -> usize {
    let u = rng.unit();
    immigration.iter().find(|(_, cumulative)| u < *cumulative).map_or(home, |(source, _)| *source)
}

/// The (source, cumulative probability) list for a row of backward migration rates.
pub(crate) fn immigration_row(row: &[f64], home: usize) -> Vec<(usize, f64)> {
    let mut running = 0.0;
    row.iter()
        .enumerate()
        .filter(|(source, rate)| *source != home && **rate > 0.0)
        .map(|(source, rate)| {
            running += rate;
            (source, running)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cohort_of(genomes: &[[u16; 2]]) -> Cohort {
        let mut cohort = Cohort::with_capacity(genomes.len(), 1);
        for (index, genome) in genomes.iter().enumerate() {
            cohort.push(IndividualId(index as u64), genome);
        }
        cohort
    }

    #[test]
    fn remove_keeps_the_others_in_order() {
        let mut cohort = cohort_of(&[[1, 1], [2, 2], [3, 3], [4, 4]]);
        cohort.remove(&[2, 0]);
        assert_eq!(cohort.len(), 2);
        assert_eq!((cohort.id(0), cohort.genome(0)), (IndividualId(1), &[2u16, 2][..]));
        assert_eq!((cohort.id(1), cohort.genome(1)), (IndividualId(3), &[4u16, 4][..]));
    }

    #[test]
    fn allele_counts_count_gene_copies() {
        let cohort = cohort_of(&[[1, 2], [2, 2], [3, 2]]);
        let counts: Vec<(u16, usize)> = cohort.allele_counts(0).into_iter().collect();
        assert_eq!(counts, [(1, 1), (2, 4), (3, 1)]);
    }

    #[test]
    fn immigration_row_skips_home_and_zero_rates() {
        assert_eq!(immigration_row(&[0.5, 0.0, 0.1, 0.2], 0), vec![(2, 0.1), (3, 0.1 + 0.2)]);
        assert!(immigration_row(&[0.0, 0.0], 1).is_empty());
    }
}
