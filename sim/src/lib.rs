//! # popgauge-sim
//!
//! A seeded, deterministic simulator of diploid Wright–Fisher populations, for tests that need
//! genotype data of known effective size and for the demo case. Internal to popgauge: no
//! stability promise beyond the workspace.
//!
//! The model is the ideal population of Wright (1931) and Fisher (1930): discrete generations;
//! each adult of the next generation picks two parents uniformly with replacement from the
//! current adults of its birth population (selfing allowed), and from each parent one gene copy
//! per locus, loci independently (unlinked, free recombination). Each gene copy of the new
//! generation is therefore a uniform draw from the `2N` parental copies and `Ne = N` exactly,
//! so expected gene diversity decays as `H_t = H_0 (1 − 1/(2N))^t`.
//!
//! Principal types:
//! - [`SimulationConfig`]: loci ([`LocusSpec`] with a [`MarkerModel`]: stepwise-mutating
//!   microsatellites or biallelic SNPs), populations ([`PopulationSpec`] with a
//!   [`SizeSchedule`]), migration ([`MigrationSchedule`] of [`MigrationPhase`]s, island model
//!   or matrix) and the ancestral [`BurnIn`].
//! - [`Simulation`]: built from a configuration and one `u64` seed; advance it generation by
//!   generation, read true allele counts and gene diversity, and take samples with
//!   [`Simulation::sample`] (non-lethal) or [`Simulation::sample_and_remove`] (lethal).
//! - [`SampleSet`]: the sampled genotypes; [`write_wide_table`] writes popgauge's wide CSV
//!   table (`sample,population,year,<loci>…`, cells `152/156`, untyped cells empty), and
//!   [`WideTable`] lets a caller add columns or edit cells before writing.
//! - [`simulate_pedigrees`]: animals of known pedigree ([`Mating`]: offspring of full sibs, half
//!   sibs, first cousins, unrelated parents) on linked chromosomes ([`Genome`]), with each
//!   animal's realised inbreeding tracked through founder-haplotype labels.
//! - [`SnpPanel`]: a seeded SNP-panel case at genomic scale for benchmarks (VCF, sample and
//!   population sheets, full recipe), written by [`write_case`].
//! - [`write_snp_vcf`]: sampled SNP genotypes as VCF 4.3 on a [`ChromosomeLayout`], and
//!   [`bgzip`] to compress it as popgauge reads it.
//!
//! All randomness comes from ChaCha8 streams derived from the seed, through integer-only draws
//! (see the `random` module), so the same seed gives bit-identical output on any machine.
//!
//! ```
//! use popgauge_sim::{
//!     BurnIn, LocusSpec, MarkerModel, MigrationSchedule, PopulationSpec, SampleRequest, Simulation,
//!     SimulationConfig, SizeSchedule, SnpModel, write_wide_table,
//! };
//!
//! let config = SimulationConfig {
//!     loci: LocusSpec::numbered("Loc", 8, MarkerModel::Snp(SnpModel::default())),
//!     populations: vec![PopulationSpec::new("North", SizeSchedule::constant(100))],
//!     migration: MigrationSchedule::none(),
//!     burn_in: BurnIn { ancestral_size: 500, generations: 0 },
//! };
//! let mut simulation = Simulation::new(config, 42)?;
//! simulation.advance_to(5)?;
//! let north = simulation.population_index("North").expect("configured above");
//! let samples = simulation.sample(&SampleRequest::new(north, 20, 2024, "NOR"))?;
//! let mut csv = Vec::new();
//! write_wide_table(&samples, &mut csv)?;
//! let text = String::from_utf8(csv)?;
//! assert!(text.starts_with("sample,population,year,Loc01,Loc02,"));
//! assert_eq!(text.lines().count(), 21);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
#![warn(missing_docs)]

mod cohort;
mod error;
mod markers;
mod matrix;
mod pedigree;
mod random;
mod sample;
mod schedule;
mod simulation;
mod snp_panel;
mod vcf;
mod wide_table;

pub use cohort::IndividualId;
pub use cohort::PopulationIdx;
pub use error::SimError;
pub use markers::{Locus, LocusKind, LocusSpec, MarkerModel, MicrosatelliteModel, SnpModel};
pub use pedigree::{BIN_BP, Genome, Mating, PedigreeAnimal, PedigreeSample, PedigreeStudy, simulate_pedigrees};
pub use sample::{SampleRequest, SampleSet, SampledIndividual};
pub use schedule::{MAX_POPULATION_SIZE, MigrationPhase, MigrationRates, MigrationSchedule, SizeSchedule};
pub use simulation::{BurnIn, PopulationSpec, Simulation, SimulationConfig};
pub use snp_panel::{
    CaseFiles, FIRST_SAMPLING_GENERATION, GENERATION_TIME_YEARS, GENERATIONS_BETWEEN_SAMPLES, PanelData,
    SAMPLING_YEARS, SnpPanel, write_case,
};
pub use vcf::{ChromosomeLayout, bgzip, write_snp_vcf};
pub use wide_table::{WideTable, write_wide_table};

/// The `main` of a program that writes a demo case into the folder named by its one argument:
/// runs `write` on it and prints its summary, or prints `usage` (exit code 2) without an
/// argument and the error (exit code 1) when writing fails.
pub fn write_case_main(
    usage: &str,
    write: impl FnOnce(&std::path::Path) -> Result<String, Box<dyn std::error::Error>>,
) -> std::process::ExitCode {
    let Some(dir) = std::env::args_os().nth(1).map(std::path::PathBuf::from) else {
        eprintln!("{usage}");
        return std::process::ExitCode::from(2);
    };
    match write(&dir) {
        Ok(summary) => {
            println!("{summary}");
            std::process::ExitCode::SUCCESS
        }
        Err(error) => {
            eprintln!("error: {error}");
            std::process::ExitCode::FAILURE
        }
    }
}
