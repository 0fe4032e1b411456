//! The one error type of the simulator: a configuration or request it cannot carry out.

use std::fmt;

/// Why a simulation could not be set up, advanced or sampled.
#[derive(Clone, Debug, PartialEq)]
pub enum SimError {
    /// The configuration names no locus.
    NoLoci,
    /// The configuration names no population.
    NoPopulations,
    /// Two loci or two populations share a name.
    DuplicateName {
        /// `"locus"` or `"population"`.
        what: &'static str,
        /// The repeated name.
        name: String,
    },
    /// A locus specification is out of range.
    InvalidLocus {
        /// Locus name.
        locus: String,
        /// What is wrong.
        reason: String,
    },
    /// A size schedule gives 0 or more than [`crate::MAX_POPULATION_SIZE`].
    InvalidSize {
        /// Population name (`"ancestral"` for the burn-in pool).
        population: String,
        /// The generation concerned.
        generation: u32,
        /// The offending size.
        size: usize,
    },
    /// A migration phase is malformed.
    InvalidMigration {
        /// Index of the phase in [`crate::MigrationSchedule::phases`].
        phase: usize,
        /// What is wrong.
        reason: String,
    },
    /// A population index is out of range.
    UnknownPopulation {
        /// The index given.
        index: usize,
        /// How many populations there are.
        populations: usize,
    },
    /// More individuals were requested than the population can give.
    SampleTooLarge {
        /// Population name.
        population: String,
        /// Individuals requested.
        requested: usize,
        /// Individuals that may be taken (one must stay when sampling removes them).
        available: usize,
    },
    /// The simulation cannot go back in time.
    GenerationInPast {
        /// The generation asked for.
        requested: u32,
        /// The current generation.
        current: u32,
    },
    /// Two sample sets with different loci cannot be joined.
    LociMismatch,
    /// A [`crate::SnpPanel`] size is out of range.
    InvalidPanel {
        /// What is wrong.
        reason: String,
    },
}

impl fmt::Display for SimError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SimError::NoLoci => write!(f, "no locus to simulate\n  help: give at least one LocusSpec"),
            SimError::NoPopulations => write!(f, "no population to simulate\n  help: give at least one PopulationSpec"),
            SimError::DuplicateName { what, name } => {
                write!(f, "{what} name `{name}` is used twice\n  help: give each {what} its own name")
            }
            SimError::InvalidLocus { locus, reason } => write!(f, "locus `{locus}`: {reason}"),
            SimError::InvalidSize { population, generation, size } => write!(
                f,
                "population `{population}`: size {size} in generation {generation} is not allowed\n  \
                 help: sizes must be between 1 and {}",
                crate::MAX_POPULATION_SIZE
            ),
            SimError::InvalidMigration { phase, reason } => write!(f, "migration phase {phase}: {reason}"),
            SimError::UnknownPopulation { index, populations } => write!(
                f,
                "population index {index} does not exist\n  help: there are {populations} populations, numbered from 0"
            ),
            SimError::SampleTooLarge { population, requested, available } => write!(
                f,
                "population `{population}`: {requested} individuals requested but only {available} can be taken\n  \
                 help: sample fewer individuals"
            ),
            SimError::GenerationInPast { requested, current } => write!(
                f,
                "generation {requested} is before the current generation {current}\n  \
                 help: sample earlier generations before advancing past them"
            ),
            SimError::LociMismatch => {
                write!(f, "the sample sets have different loci\n  help: join only samples from the same simulation")
            }
            SimError::InvalidPanel { reason } => {
                write!(f, "SNP panel: {reason}\n  help: change the panel's size to fit the scenario")
            }
        }
    }
}

impl std::error::Error for SimError {}
