//! Demography over time: population sizes and migration rates by generation.
//!
//! Generation 0 is the founding generation of the simulated populations (drawn from the
//! ancestral pool after burn-in); generation `g + 1` is produced from the adults of
//! generation `g`. A schedule value for generation `g` applies to the production of
//! generation `g`.

use std::fmt;

use crate::error::SimError;

/// The largest population size accepted: keeps indices within the 32-bit range of the
/// portable index draw, and memory reasonable.
pub const MAX_POPULATION_SIZE: usize = 10_000_000;

/// The number of adults in a population in each generation.
pub enum SizeSchedule {
    /// The same size in every generation.
    Constant(usize),
    /// Entry `g` is the size in generation `g`; past the end the last entry holds.
    PerGeneration(Vec<usize>),
    /// Any rule: called with the generation number.
    Function(Box<dyn Fn(u32) -> usize + Send + Sync>),
}

impl SizeSchedule {
    /// The same size `size` in every generation.
    pub fn constant(size: usize) -> Self {
        SizeSchedule::Constant(size)
    }

    /// Entry `g` of `sizes` in generation `g`, the last entry after the end.
    pub fn per_generation(sizes: Vec<usize>) -> Self {
        SizeSchedule::PerGeneration(sizes)
    }

    /// `rule(g)` in generation `g`.
    pub fn from_fn(rule: impl Fn(u32) -> usize + Send + Sync + 'static) -> Self {
        SizeSchedule::Function(Box::new(rule))
    }

    /// The size in `generation`, as the schedule gives it; the simulation refuses 0 or more
    /// than [`MAX_POPULATION_SIZE`] when it reaches that generation.
    pub fn size(&self, generation: u32) -> usize {
        match self {
            SizeSchedule::Constant(size) => *size,
            SizeSchedule::PerGeneration(sizes) => {
                let index = (generation as usize).min(sizes.len().saturating_sub(1));
                sizes.get(index).copied().unwrap_or(0)
            }
            SizeSchedule::Function(rule) => rule(generation),
        }
    }

    /// The size in `generation`, refused when it is 0 or above [`MAX_POPULATION_SIZE`].
    pub(crate) fn checked_size(&self, population: &str, generation: u32) -> Result<usize, SimError> {
        let size = self.size(generation);
        if size == 0 || size > MAX_POPULATION_SIZE {
            return Err(SimError::InvalidSize { population: population.to_string(), generation, size });
        }
        Ok(size)
    }

    /// Checks every size a schedule can give without calling a rule: a rule is checked
    /// generation by generation as the simulation reaches it.
    pub(crate) fn validate(&self, population: &str) -> Result<(), SimError> {
        match self {
            SizeSchedule::Constant(_) => self.checked_size(population, 0).map(drop),
            SizeSchedule::PerGeneration(sizes) if sizes.is_empty() => {
                Err(SimError::InvalidSize { population: population.to_string(), generation: 0, size: 0 })
            }
            SizeSchedule::PerGeneration(sizes) => {
                (0..sizes.len() as u32).try_for_each(|generation| self.checked_size(population, generation).map(drop))
            }
            SizeSchedule::Function(_) => Ok(()),
        }
    }
}

impl fmt::Debug for SizeSchedule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SizeSchedule::Constant(size) => f.debug_tuple("Constant").field(size).finish(),
            SizeSchedule::PerGeneration(sizes) => f.debug_tuple("PerGeneration").field(sizes).finish(),
            SizeSchedule::Function(_) => f.write_str("Function(..)"),
        }
    }
}

/// Backward migration rates in force during a phase.
///
/// A rate `m[i][j]` (`i ≠ j`) is the probability that an adult of population `i` in the
/// generation being produced was born in population `j`: both its parents are drawn from `j`
/// (migration of juveniles before breeding). Each row must sum to at most 1; the diagonal is
/// ignored (staying home takes what is left).
#[derive(Clone, Debug, PartialEq)]
pub enum MigrationRates {
    /// Island model: each adult is an immigrant with probability `rate`, from one of the
    /// other populations chosen uniformly.
    Island {
        /// Probability that an adult is an immigrant, in `[0, 1]`.
        rate: f64,
    },
    /// A full matrix, one row and one column per population in configuration order.
    Matrix(Vec<Vec<f64>>),
}

impl MigrationRates {
    /// A matrix for `populations` populations with exchange only between `a` and `b`:
    /// `rate_into_a` is the share of `a`'s adults born in `b`, and `rate_into_b` the reverse.
    /// Indices out of range give a matrix that [`crate::Simulation::new`] refuses.
    pub fn between(populations: usize, a: usize, b: usize, rate_into_a: f64, rate_into_b: f64) -> Self {
        let mut matrix = vec![vec![0.0; populations]; populations];
        if a < populations && b < populations {
            matrix[a][b] = rate_into_a;
            matrix[b][a] = rate_into_b;
        } else {
            // Make the mistake visible at validation rather than silently dropping it.
            matrix.clear();
        }
        MigrationRates::Matrix(matrix)
    }

    /// The full matrix for `populations` populations (diagonal 0).
    pub(crate) fn to_matrix(&self, populations: usize) -> Vec<Vec<f64>> {
        match self {
            MigrationRates::Island { rate } => (0..populations)
                .map(|i| {
                    (0..populations)
                        .map(|j| if i == j || populations < 2 { 0.0 } else { rate / (populations - 1) as f64 })
                        .collect()
                })
                .collect(),
            MigrationRates::Matrix(matrix) => matrix
                .iter()
                .enumerate()
                .map(|(i, row)| row.iter().enumerate().map(|(j, rate)| if i == j { 0.0 } else { *rate }).collect())
                .collect(),
        }
    }
}

/// Migration rates in force from `first_generation` to `last_generation` (inclusive; `None`
/// for ever), counted as generations produced.
#[derive(Clone, Debug, PartialEq)]
pub struct MigrationPhase {
    /// First generation produced under these rates.
    pub first_generation: u32,
    /// Last generation produced under these rates, or `None` for no end.
    pub last_generation: Option<u32>,
    /// The rates.
    pub rates: MigrationRates,
}

impl MigrationPhase {
    fn covers(&self, generation: u32) -> bool {
        generation >= self.first_generation && self.last_generation.is_none_or(|last| generation <= last)
    }

    fn overlaps(&self, other: &MigrationPhase) -> bool {
        let end = |phase: &MigrationPhase| phase.last_generation.unwrap_or(u32::MAX);
        self.first_generation <= end(other) && other.first_generation <= end(self)
    }
}

/// Which migration rates apply in which generation: a list of non-overlapping phases.
/// Generations outside every phase have no migration (the populations are isolated).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct MigrationSchedule {
    /// The phases, in any order; they must not overlap.
    pub phases: Vec<MigrationPhase>,
}

impl MigrationSchedule {
    /// No migration ever.
    pub fn none() -> Self {
        Self::default()
    }

    /// The same rates in every generation.
    pub fn always(rates: MigrationRates) -> Self {
        Self { phases: vec![MigrationPhase { first_generation: 0, last_generation: None, rates }] }
    }

    /// Adds a phase (builder style).
    pub fn with_phase(mut self, first_generation: u32, last_generation: Option<u32>, rates: MigrationRates) -> Self {
        self.phases.push(MigrationPhase { first_generation, last_generation, rates });
        self
    }

    /// The full backward-rate matrix for producing `generation`, or `None` when no phase
    /// applies.
    pub(crate) fn matrix_at(&self, generation: u32, populations: usize) -> Option<Vec<Vec<f64>>> {
        self.phases.iter().find(|phase| phase.covers(generation)).map(|phase| phase.rates.to_matrix(populations))
    }

    /// Checks shapes, ranges, row sums and that phases do not overlap.
    pub(crate) fn validate(&self, population_names: &[String]) -> Result<(), SimError> {
        for (index, phase) in self.phases.iter().enumerate() {
            if phase.last_generation.is_some_and(|last| last < phase.first_generation) {
                return Err(SimError::InvalidMigration {
                    phase: index,
                    reason: format!(
                        "last generation {:?} is before first generation {}",
                        phase.last_generation, phase.first_generation
                    ),
                });
            }
            if let Some(other) = self.phases[..index].iter().position(|earlier| earlier.overlaps(phase)) {
                return Err(SimError::InvalidMigration {
                    phase: index,
                    reason: format!("it overlaps phase {other}; phases must cover disjoint generations"),
                });
            }
            validate_rates(&phase.rates, index, population_names)?;
        }
        Ok(())
    }
}

fn validate_rates(rates: &MigrationRates, phase: usize, population_names: &[String]) -> Result<(), SimError> {
    let populations = population_names.len();
    let invalid = |reason: String| Err(SimError::InvalidMigration { phase, reason });
    if let MigrationRates::Matrix(matrix) = rates
        && (matrix.len() != populations || matrix.iter().any(|row| row.len() != populations))
    {
        return invalid(format!("the matrix must be {populations} × {populations}, one row and column per population"));
    }
    for (name, row) in population_names.iter().zip(rates.to_matrix(populations)) {
        if let Some(rate) = row.iter().find(|rate| !(0.0..=1.0).contains(*rate)) {
            return invalid(format!("rate {rate} into {name} is outside [0, 1]"));
        }
        let sum: f64 = row.iter().sum();
        if sum > 1.0 {
            return invalid(format!("rates into {name} sum to {sum}, above 1"));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(count: usize) -> Vec<String> {
        (0..count).map(|i| format!("P{i}")).collect()
    }

    #[test]
    fn per_generation_holds_the_last_entry() {
        let schedule = SizeSchedule::per_generation(vec![10, 20, 30]);
        assert_eq!([0, 1, 2, 3, 50].map(|g| schedule.size(g)), [10, 20, 30, 30, 30]);
        assert_eq!(SizeSchedule::from_fn(|g| 5 + g as usize).size(7), 12);
        assert_eq!(SizeSchedule::constant(9).size(1000), 9);
    }

    #[test]
    fn zero_or_empty_sizes_are_refused() {
        assert!(SizeSchedule::per_generation(vec![]).validate("A").is_err());
        let message = SizeSchedule::per_generation(vec![5, 0]).validate("A").unwrap_err().to_string();
        assert!(message.contains("generation 1") && message.contains('A'), "{message}");
        assert!(SizeSchedule::constant(0).validate("A").is_err());
        assert!(SizeSchedule::from_fn(|_| 0).checked_size("A", 3).is_err());
        assert!(SizeSchedule::constant(MAX_POPULATION_SIZE + 1).validate("A").is_err());
    }

    #[test]
    fn island_rates_split_evenly_among_the_others() {
        let matrix = MigrationRates::Island { rate: 0.3 }.to_matrix(4);
        let share = 0.3 / 3.0;
        assert_eq!(matrix[0], vec![0.0, share, share, share]);
        assert_eq!(matrix[2][2], 0.0);
        assert!((matrix[3].iter().sum::<f64>() - 0.3).abs() < 1e-15);
    }

    #[test]
    fn between_sets_only_the_pair() {
        let MigrationRates::Matrix(matrix) = MigrationRates::between(3, 0, 2, 0.01, 0.05) else {
            panic!("expected a matrix");
        };
        assert_eq!(matrix, vec![vec![0.0, 0.0, 0.01], vec![0.0; 3], vec![0.05, 0.0, 0.0]]);
        assert!(MigrationSchedule::always(MigrationRates::between(3, 0, 5, 0.1, 0.1)).validate(&names(3)).is_err());
    }

    #[test]
    fn phases_apply_to_their_generations_only() {
        let schedule = MigrationSchedule::none()
            .with_phase(1, Some(10), MigrationRates::Island { rate: 0.2 })
            .with_phase(11, Some(12), MigrationRates::Island { rate: 0.4 });
        assert!(schedule.validate(&names(2)).is_ok());
        assert_eq!(schedule.matrix_at(0, 2), None);
        assert_eq!(schedule.matrix_at(10, 2).map(|m| m[0][1]), Some(0.2));
        assert_eq!(schedule.matrix_at(12, 2).map(|m| m[1][0]), Some(0.4));
        assert_eq!(schedule.matrix_at(13, 2), None);
    }

    #[test]
    fn bad_phases_are_refused() {
        let overlapping = MigrationSchedule::none()
            .with_phase(0, Some(10), MigrationRates::Island { rate: 0.1 })
            .with_phase(10, None, MigrationRates::Island { rate: 0.1 });
        assert!(overlapping.validate(&names(2)).unwrap_err().to_string().contains("overlaps"));
        let reversed = MigrationSchedule::none().with_phase(5, Some(4), MigrationRates::Island { rate: 0.1 });
        assert!(reversed.validate(&names(2)).is_err());
        let too_much = MigrationSchedule::always(MigrationRates::Matrix(vec![
            vec![0.0, 0.7, 0.6],
            vec![0.0, 0.0, 0.0],
            vec![0.0, 0.0, 0.0],
        ]));
        assert!(too_much.validate(&names(3)).unwrap_err().to_string().contains("sum"));
        let negative = MigrationSchedule::always(MigrationRates::Island { rate: -0.1 });
        assert!(negative.validate(&names(2)).is_err());
        let wrong_shape = MigrationSchedule::always(MigrationRates::Matrix(vec![vec![0.0; 2]; 2]));
        assert!(wrong_shape.validate(&names(3)).unwrap_err().to_string().contains("3 × 3"));
    }
}
