//! The Quarren river mussel (*Velunio quarrensis*, a fictional species) in three reaches of the
//! fictional river Quarren, sampled non-lethally (mantle swabs) in 2016 and 2025 and typed at
//! 15 microsatellites; written as a wide table.
//!
//! Years and generations: the mussel's generation time is 3 years and generations are
//! discrete, so the 2016 sample is generation 40 after the reaches were founded and the 2025
//! sample generation 43.

use std::error::Error;
use std::fs;
use std::path::Path;

use popgauge_sim::{
    BurnIn, LocusSpec, MicrosatelliteModel, MigrationRates, MigrationSchedule, PopulationSpec, SimulationConfig,
    SizeSchedule, WideTable,
};

use crate::{Scenario, Simulated, Site, population_sheet, simulate, untyped_share};

/// The one seed of the mussel case.
const SEED: u64 = 20_250_611;
const FIRST_SAMPLING_GENERATION: u32 = 40;
const FIRST_SAMPLING_YEAR: i32 = 2016;
const GENERATION_TIME_YEARS: i32 = 3;
const SAMPLING_YEARS: [i32; 2] = [2016, 2025];
/// Weirs built in the generation after this one cut the reaches apart.
const LAST_CONNECTED_GENERATION: u32 = 25;

const SITES: [Site; 3] = [
    Site {
        name: "Orrin Reach",
        prefix: "ORR",
        label: "Orrin Reach gravel beds",
        census_size: 310,
        census_year: 2025,
        latitude: 57.284,
        longitude: 13.052,
    },
    Site {
        name: "Tavis Brook",
        prefix: "TAV",
        label: "Tavis Brook confluence",
        census_size: 1800,
        census_year: 2024,
        latitude: 57.201,
        longitude: 13.187,
    },
    Site {
        name: "Hallow Weir",
        prefix: "HAL",
        label: "Hallow Weir tailwater",
        census_size: 7200,
        census_year: 2025,
        latitude: 57.116,
        longitude: 13.344,
    },
];
const ORRIN_REACH: usize = 0;
const TAVIS_BROOK: usize = 1;

/// Writes `genotypes.csv`, `populations.csv` and `truth.csv` into `dir`; returns a summary.
pub fn write(dir: &Path) -> Result<String, Box<dyn Error>> {
    let Simulated { samples, truth } = simulate(scenario())?;
    fs::create_dir_all(dir)?;
    let mut genotypes = Vec::new();
    WideTable::from_samples(&samples).write_csv(&mut genotypes)?;
    fs::write(dir.join("genotypes.csv"), genotypes)?;
    fs::write(dir.join("populations.csv"), population_sheet(&SITES))?;
    fs::write(dir.join("truth.csv"), truth)?;
    Ok(format!(
        "wrote {}: {} samples × {} microsatellites, {:.1} % of cells untyped",
        dir.display(),
        samples.individuals.len(),
        samples.loci.len(),
        untyped_share(&samples)
    ))
}

fn scenario() -> Scenario {
    Scenario {
        seed: SEED,
        sites: &SITES,
        config: SimulationConfig {
            loci: loci(),
            populations: SITES
                .iter()
                .enumerate()
                .map(|(index, site)| PopulationSpec::new(site.name, size_schedule(index)))
                .collect(),
            // Until the weirs, mussel larvae carried by fish link the reaches (island model).
            migration: MigrationSchedule::none().with_phase(
                1,
                Some(LAST_CONNECTED_GENERATION),
                MigrationRates::Island { rate: 0.01 },
            ),
            // θ = 4Nμ ≈ 4 in the ancestral river; 2500 generations are about 3 relaxation
            // times of 1/(2μ + 1/(2N)) ≈ 800 generations.
            burn_in: BurnIn { ancestral_size: 2000, generations: 2500 },
        },
        samplings: SAMPLING_YEARS.iter().map(|&year| (year, generation_of(year))).collect(),
        samples_per_group: 50,
        lethal: false,
        missing_rate: 0.015,
    }
}

/// Vq01–Vq10 tetranucleotide, Vq11–Vq15 dinucleotide, μ between 3·10⁻⁴ and 7·10⁻⁴.
fn loci() -> Vec<LocusSpec> {
    const RATES: [f64; 15] = [5e-4, 4e-4, 6e-4, 3e-4, 5e-4, 7e-4, 4e-4, 5e-4, 6e-4, 5e-4, 4e-4, 6e-4, 5e-4, 7e-4, 5e-4];
    LocusSpec::microsatellite_panel(
        "Vq",
        &RATES,
        (10, MicrosatelliteModel::shape(4, (150, 270), (2, 5))),
        MicrosatelliteModel::shape(2, (100, 180), (3, 7)),
    )
}

/// Orrin Reach holds 150 adults until generation 34, then declines linearly to 60 in
/// generation 43 (2025); the other reaches keep constant sizes.
fn size_schedule(site: usize) -> SizeSchedule {
    const DECLINE_START: u32 = 34;
    const DECLINE_END: u32 = 43;
    match site {
        ORRIN_REACH => SizeSchedule::per_generation(
            (0..=DECLINE_END)
                .map(|generation| {
                    let into_decline = generation.saturating_sub(DECLINE_START) as usize;
                    150 - 90 * into_decline / (DECLINE_END - DECLINE_START) as usize
                })
                .collect(),
        ),
        TAVIS_BROOK => SizeSchedule::constant(400),
        _ => SizeSchedule::constant(1500),
    }
}

/// The generation whose adults are sampled in `year`.
fn generation_of(year: i32) -> u32 {
    FIRST_SAMPLING_GENERATION + ((year - FIRST_SAMPLING_YEAR) / GENERATION_TIME_YEARS) as u32
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sampling_years_map_to_generations_three_years_long() {
        assert_eq!(SAMPLING_YEARS.map(generation_of), [40, 43]);
    }

    #[test]
    fn orrin_reach_declines_from_150_to_60() {
        let schedule = size_schedule(ORRIN_REACH);
        assert_eq!([0, 34, 40, 41, 42, 43, 50].map(|g| schedule.size(g)), [150, 150, 90, 80, 70, 60, 60]);
    }
}
