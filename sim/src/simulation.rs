//! The simulation: configuration, burn-in, generations, and what can be read or sampled.

use std::collections::{BTreeMap, BTreeSet};

use crate::cohort::{Breeding, Cohort, PopulationIdx, immigration_row};
use crate::error::SimError;
use crate::markers::{Locus, LocusSpec, PreparedLocus};
use crate::random::{SimRng, Stream};
use crate::sample::{SampleRequest, SampleSet, SampledIndividual};
use crate::schedule::{MigrationSchedule, SizeSchedule};

/// One simulated population: its name (the `population` column) and its sizes.
#[derive(Debug)]
pub struct PopulationSpec {
    /// Population name, unique within a simulation.
    pub name: String,
    /// Number of adults in each generation.
    pub size: SizeSchedule,
}

impl PopulationSpec {
    /// A population called `name` with sizes `size`.
    pub fn new(name: &str, size: SizeSchedule) -> Self {
        Self { name: name.to_string(), size }
    }
}

/// The ancestral pool the simulated populations are founded from.
///
/// Its gene copies start independently from each locus's drawn starting distribution
/// (Hardy–Weinberg and linkage equilibrium), then it reproduces as one Wright–Fisher
/// population of `ancestral_size` for `generations` generations, letting microsatellites
/// approach mutation–drift balance. The relaxation time of heterozygosity is about
/// `1 / (2μ + 1/(2N))` generations (Ohta & Kimura 1973), so a few times that is enough when
/// the starting spread is near the balance.
#[derive(Clone, Debug, PartialEq)]
pub struct BurnIn {
    /// Adults in the ancestral pool.
    pub ancestral_size: usize,
    /// Generations of burn-in; 0 founds the populations straight from the starting draw.
    pub generations: u32,
}

/// Everything a simulation needs besides its seed.
#[derive(Debug)]
pub struct SimulationConfig {
    /// Loci, in column order.
    pub loci: Vec<LocusSpec>,
    /// Populations; their order defines [`PopulationIdx`] and migration matrix indices.
    pub populations: Vec<PopulationSpec>,
    /// Migration by generation.
    pub migration: MigrationSchedule,
    /// The ancestral pool.
    pub burn_in: BurnIn,
}

/// A running diploid Wright–Fisher simulation of several populations.
///
/// After [`Simulation::new`] the populations hold their founding generation, generation 0,
/// each drawn by one round of random mating from the ancestral pool. [`Simulation::advance`]
/// produces the next generation of every population at once (migrants come from the other
/// populations' current adults).
#[derive(Debug)]
pub struct Simulation {
    prepared: Vec<PreparedLocus>,
    loci: Vec<Locus>,
    names: Vec<String>,
    schedules: Vec<SizeSchedule>,
    migration: MigrationSchedule,
    cohorts: Vec<Cohort>,
    generation: u32,
    evolution: SimRng,
    sampling: SimRng,
    next_id: u64,
}

impl Simulation {
    /// Checks `config`, runs the burn-in and founds the populations (generation 0). All
    /// randomness comes from `seed`: the same configuration and seed give the same
    /// simulation on any machine.
    ///
    /// # Errors
    /// [`SimError`] when there are no loci or populations, a name is repeated, a locus
    /// model, size or migration rate is out of range, or migration phases overlap.
    pub fn new(config: SimulationConfig, seed: u64) -> Result<Self, SimError> {
        validate(&config)?;
        let mut setup = SimRng::new(seed, Stream::Setup);
        let prepared: Vec<PreparedLocus> =
            config.loci.iter().map(|spec| PreparedLocus::draw(spec, &mut setup)).collect();
        let names: Vec<String> = config.populations.iter().map(|population| population.name.clone()).collect();
        let mut simulation = Simulation {
            loci: prepared.iter().map(|prepared| prepared.locus.clone()).collect(),
            prepared,
            names,
            schedules: config.populations.into_iter().map(|population| population.size).collect(),
            migration: config.migration,
            cohorts: Vec::new(),
            generation: 0,
            evolution: SimRng::new(seed, Stream::Evolution),
            sampling: SimRng::new(seed, Stream::Sampling),
            next_id: 0,
        };
        let ancestral = simulation.burn_in(&config.burn_in, &mut setup);
        simulation.found(&ancestral)?;
        Ok(simulation)
    }

    /// The starting draw and the generations of the ancestral pool.
    fn burn_in(&mut self, burn_in: &BurnIn, setup: &mut SimRng) -> Cohort {
        let mut pool = Cohort::with_capacity(burn_in.ancestral_size, self.prepared.len());
        let mut genome = vec![0u16; 2 * self.prepared.len()];
        for id in 0..burn_in.ancestral_size {
            for (locus, prepared) in self.prepared.iter().enumerate() {
                genome[2 * locus] = prepared.draw_initial_allele(setup);
                genome[2 * locus + 1] = prepared.draw_initial_allele(setup);
            }
            pool.push(crate::IndividualId(id as u64), &genome);
        }
        self.next_id = burn_in.ancestral_size as u64;
        let mut breeding = Breeding { loci: &self.prepared, rng: &mut self.evolution, next_id: &mut self.next_id };
        for _ in 0..burn_in.generations {
            pool = breeding.cohort(std::slice::from_ref(&pool), 0, burn_in.ancestral_size, &[]);
        }
        pool
    }

    /// Generation 0 of every population: one round of random mating in the ancestral pool.
    fn found(&mut self, ancestral: &Cohort) -> Result<(), SimError> {
        let sizes = self.sizes_at(0)?;
        let mut breeding = Breeding { loci: &self.prepared, rng: &mut self.evolution, next_id: &mut self.next_id };
        self.cohorts =
            sizes.into_iter().map(|size| breeding.cohort(std::slice::from_ref(ancestral), 0, size, &[])).collect();
        Ok(())
    }

    fn sizes_at(&self, generation: u32) -> Result<Vec<usize>, SimError> {
        self.names.iter().zip(&self.schedules).map(|(name, schedule)| schedule.checked_size(name, generation)).collect()
    }

    /// The current generation (0 right after [`Simulation::new`]).
    pub fn generation(&self) -> u32 {
        self.generation
    }

    /// The simulated loci, in column order.
    pub fn loci(&self) -> &[Locus] {
        &self.loci
    }

    /// Population names, in configuration order.
    pub fn population_names(&self) -> &[String] {
        &self.names
    }

    /// The index of the population called `name`.
    pub fn population_index(&self, name: &str) -> Option<PopulationIdx> {
        self.names.iter().position(|candidate| candidate == name).map(PopulationIdx)
    }

    /// Produces the next generation of every population.
    ///
    /// # Errors
    /// [`SimError::InvalidSize`] when a size rule gives 0 or too large a size for it; the
    /// simulation is then unchanged.
    pub fn advance(&mut self) -> Result<(), SimError> {
        let generation = self.generation + 1;
        let sizes = self.sizes_at(generation)?;
        let matrix = self.migration.matrix_at(generation, self.names.len());
        let mut breeding = Breeding { loci: &self.prepared, rng: &mut self.evolution, next_id: &mut self.next_id };
        let next: Vec<Cohort> = sizes
            .into_iter()
            .enumerate()
            .map(|(home, size)| {
                let immigration = matrix.as_ref().map(|rows| immigration_row(&rows[home], home)).unwrap_or_default();
                breeding.cohort(&self.cohorts, home, size, &immigration)
            })
            .collect();
        self.cohorts = next;
        self.generation = generation;
        Ok(())
    }

    /// Advances until the current generation is `generation`.
    ///
    /// # Errors
    /// [`SimError::GenerationInPast`] when `generation` has passed; otherwise as
    /// [`Simulation::advance`].
    pub fn advance_to(&mut self, generation: u32) -> Result<(), SimError> {
        if generation < self.generation {
            return Err(SimError::GenerationInPast { requested: generation, current: self.generation });
        }
        while self.generation < generation {
            self.advance()?;
        }
        Ok(())
    }

    fn cohort(&self, population: PopulationIdx) -> Result<&Cohort, SimError> {
        self.cohorts
            .get(population.0)
            .ok_or(SimError::UnknownPopulation { index: population.0, populations: self.cohorts.len() })
    }

    /// The number of adults now in `population` (after any removals by sampling).
    ///
    /// # Errors
    /// [`SimError::UnknownPopulation`] for an index out of range.
    pub fn population_size(&self, population: PopulationIdx) -> Result<usize, SimError> {
        Ok(self.cohort(population)?.len())
    }

    /// The true count of gene copies of each allele code at locus `locus` among all adults of
    /// `population` (not a sample). Locus indices follow [`Simulation::loci`].
    ///
    /// # Errors
    /// [`SimError::UnknownPopulation`] for a population index out of range.
    ///
    /// # Panics
    /// When `locus` is not below the number of loci.
    pub fn allele_counts(&self, population: PopulationIdx, locus: usize) -> Result<BTreeMap<u16, usize>, SimError> {
        assert!(locus < self.loci.len(), "locus index {locus} out of range ({} loci)", self.loci.len());
        Ok(self.cohort(population)?.allele_counts(locus))
    }

    /// The true gene diversity 1 − Σ p² of each locus over all adults of `population`, with
    /// `p` the allele frequencies among its `2N` gene copies (the parametric value, without
    /// any sample-size correction), in locus order.
    ///
    /// # Errors
    /// [`SimError::UnknownPopulation`] for an index out of range.
    pub fn gene_diversity(&self, population: PopulationIdx) -> Result<Vec<f64>, SimError> {
        let cohort = self.cohort(population)?;
        let copies = 2.0 * cohort.len() as f64;
        Ok((0..self.loci.len())
            .map(|locus| {
                let homozygosity: f64 =
                    cohort.allele_counts(locus).values().map(|count| (*count as f64 / copies).powi(2)).sum();
                1.0 - homozygosity
            })
            .collect())
    }

    /// Takes `request.count` distinct adults at random from the current generation of a
    /// population without changing it (non-lethal sampling).
    ///
    /// # Errors
    /// [`SimError::UnknownPopulation`], or [`SimError::SampleTooLarge`] when the population
    /// has fewer adults than requested.
    pub fn sample(&mut self, request: &SampleRequest) -> Result<SampleSet, SimError> {
        let available = self.population_size(request.population)?;
        let chosen = self.choose(request, available)?;
        Ok(self.record(request, &chosen))
    }

    /// Takes `request.count` distinct adults at random from the current generation and
    /// removes them before they breed (lethal sampling): they leave no offspring. At least
    /// one adult must remain.
    ///
    /// # Errors
    /// As [`Simulation::sample`], with one adult fewer available.
    pub fn sample_and_remove(&mut self, request: &SampleRequest) -> Result<SampleSet, SimError> {
        let available = self.population_size(request.population)?.saturating_sub(1);
        let chosen = self.choose(request, available)?;
        let samples = self.record(request, &chosen);
        self.cohorts[request.population.0].remove(&chosen);
        Ok(samples)
    }

    /// Distinct random indices (partial Fisher–Yates shuffle), in draw order.
    fn choose(&mut self, request: &SampleRequest, available: usize) -> Result<Vec<usize>, SimError> {
        if request.count > available {
            return Err(SimError::SampleTooLarge {
                population: self.names[request.population.0].clone(),
                requested: request.count,
                available,
            });
        }
        let mut order: Vec<usize> = (0..self.cohorts[request.population.0].len()).collect();
        for position in 0..request.count {
            let pick = position + self.sampling.index(order.len() - position);
            order.swap(position, pick);
        }
        order.truncate(request.count);
        debug_assert_eq!(order.iter().collect::<BTreeSet<_>>().len(), order.len());
        Ok(order)
    }

    fn record(&self, request: &SampleRequest, chosen: &[usize]) -> SampleSet {
        let cohort = &self.cohorts[request.population.0];
        let individuals = chosen
            .iter()
            .enumerate()
            .map(|(position, &index)| SampledIndividual {
                sample: request.sample_id(position + 1),
                individual: cohort.id(index),
                population: self.names[request.population.0].clone(),
                generation: self.generation,
                year: request.year,
                genotype: cohort.genome(index).chunks_exact(2).map(|pair| Some([pair[0], pair[1]])).collect(),
            })
            .collect();
        SampleSet { loci: self.loci.clone(), individuals }
    }
}

fn validate(config: &SimulationConfig) -> Result<(), SimError> {
    if config.loci.is_empty() {
        return Err(SimError::NoLoci);
    }
    if config.populations.is_empty() {
        return Err(SimError::NoPopulations);
    }
    check_unique("locus", config.loci.iter().map(|locus| locus.name.as_str()))?;
    check_unique("population", config.populations.iter().map(|population| population.name.as_str()))?;
    config.loci.iter().try_for_each(LocusSpec::validate)?;
    for population in &config.populations {
        population.size.validate(&population.name)?;
    }
    SizeSchedule::constant(config.burn_in.ancestral_size).validate("ancestral")?;
    let names: Vec<String> = config.populations.iter().map(|population| population.name.clone()).collect();
    config.migration.validate(&names)
}

fn check_unique<'a>(what: &'static str, names: impl Iterator<Item = &'a str>) -> Result<(), SimError> {
    let mut seen = BTreeSet::new();
    for name in names {
        if !seen.insert(name) {
            return Err(SimError::DuplicateName { what, name: name.to_string() });
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests;
