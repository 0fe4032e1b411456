//! The Marlheath ground beetle (*Ostricarabus marlensis*, a fictional species) on three heath
//! fragments of the fictional Quarrendale lowlands, caught in pitfall traps (lethal sampling)
//! in 2021, 2023 and 2025 and typed at 400 SNPs; written as a bgzipped VCF with its sample
//! sheet.
//!
//! Years and generations: the beetle breeds once a year and lives one year, so sampling year
//! `y` is generation `40 + (y − 2021)`. The adults caught are removed before they breed.

use std::error::Error;
use std::fs;
use std::path::Path;

use popgauge_sim::{
    BurnIn, ChromosomeLayout, LocusSpec, MarkerModel, MigrationRates, MigrationSchedule, PopulationSpec, SampleSet,
    SimulationConfig, SizeSchedule, SnpModel, bgzip, write_snp_vcf,
};

use crate::{Scenario, Simulated, Site, population_sheet, simulate, untyped_share};

/// The one seed of the beetle case.
const SEED: u64 = 20_250_719;
const FIRST_SAMPLING_GENERATION: u32 = 40;
const FIRST_SAMPLING_YEAR: i32 = 2021;
const SAMPLING_YEARS: [i32; 3] = [2021, 2023, 2025];
/// Heath fragments were still joined by rough grazing until this generation.
const LAST_CONNECTED_GENERATION: u32 = 20;
const SNPS: usize = 400;
/// 8 chromosomes of 50 SNPs, 400 kb apart (20 Mb each).
const LAYOUT: ChromosomeLayout = ChromosomeLayout { chromosomes: 8, spacing_bp: 400_000 };

const SITES: [Site; 3] = [
    Site {
        name: "Wenlow Heath",
        prefix: "WEN",
        label: "Wenlow Heath fragment",
        census_size: 450,
        census_year: 2025,
        latitude: 57.338,
        longitude: 13.221,
    },
    Site {
        name: "Brackly Common",
        prefix: "BRC",
        label: "Brackly Common dry heath",
        census_size: 2600,
        census_year: 2025,
        latitude: 57.262,
        longitude: 13.409,
    },
    Site {
        name: "Pellin Moor",
        prefix: "PEL",
        label: "Pellin Moor heath and mire",
        census_size: 9000,
        census_year: 2025,
        latitude: 57.147,
        longitude: 13.563,
    },
];
/// Adults per generation at each site.
const ADULTS: [usize; 3] = [100, 350, 1200];

/// Writes `calls.vcf.gz`, `samples.csv`, `populations.csv` and `truth.csv` into `dir`; returns
/// a summary.
pub fn write(dir: &Path) -> Result<String, Box<dyn Error>> {
    let Simulated { samples, truth } = simulate(scenario())?;
    fs::create_dir_all(dir)?;
    let mut vcf = Vec::new();
    write_snp_vcf(&samples, LAYOUT, "popgauge-sim make-portfolio-cases (simulated data)", &mut vcf)?;
    fs::write(dir.join("calls.vcf.gz"), bgzip(&vcf)?)?;
    fs::write(dir.join("samples.csv"), sample_sheet(&samples))?;
    fs::write(dir.join("populations.csv"), population_sheet(&SITES))?;
    fs::write(dir.join("truth.csv"), truth)?;
    Ok(format!(
        "wrote {}: {} samples × {} SNPs on {} chromosomes, {:.1} % of calls untyped",
        dir.display(),
        samples.individuals.len(),
        samples.loci.len(),
        LAYOUT.chromosomes,
        untyped_share(&samples)
    ))
}

fn scenario() -> Scenario {
    Scenario {
        seed: SEED,
        sites: &SITES,
        config: SimulationConfig {
            loci: LocusSpec::numbered("om", SNPS, MarkerModel::Snp(SnpModel::default())),
            populations: SITES
                .iter()
                .zip(ADULTS)
                .map(|(site, adults)| PopulationSpec::new(site.name, SizeSchedule::constant(adults)))
                .collect(),
            migration: MigrationSchedule::none().with_phase(
                1,
                Some(LAST_CONNECTED_GENERATION),
                MigrationRates::Island { rate: 0.02 },
            ),
            // Founded from one pool in Hardy–Weinberg and linkage equilibrium; the 40
            // generations of drift before the first sample build up the linkage disequilibrium
            // of finite size that `ne-ld` reads (Hill 1981).
            burn_in: BurnIn { ancestral_size: 3000, generations: 0 },
        },
        samplings: SAMPLING_YEARS.iter().map(|&year| (year, generation_of(year))).collect(),
        samples_per_group: 24,
        lethal: true,
        missing_rate: 0.01,
    }
}

/// The generation whose adults are caught in `year`: one generation a year.
fn generation_of(year: i32) -> u32 {
    FIRST_SAMPLING_GENERATION + (year - FIRST_SAMPLING_YEAR) as u32
}

/// The VCF's sample sheet (`sample,population,year`), in VCF column order.
fn sample_sheet(samples: &SampleSet) -> String {
    let mut sheet = String::from("sample,population,year\n");
    for individual in &samples.individuals {
        sheet += &format!("{},{},{}\n", individual.sample, individual.population, individual.year);
    }
    sheet
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_generation_a_year() {
        assert_eq!(SAMPLING_YEARS.map(generation_of), [40, 42, 44]);
    }

    #[test]
    fn snps_fill_eight_chromosomes_of_fifty() {
        assert_eq!(LAYOUT.place(SNPS, 49), (1, 20_000_000));
        assert_eq!(LAYOUT.place(SNPS, 50), (2, 400_000));
        assert_eq!(LAYOUT.place(SNPS, SNPS - 1), (8, 20_000_000));
    }
}
