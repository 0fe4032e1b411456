//! `make-portfolio-cases DIR`: writes the simulated data of the two small example cases of a
//! portfolio into `DIR/river-mussel/` and `DIR/ground-beetle/` (the repository's copy is
//! `examples/portfolio/cases/`).
//!
//! Both scenarios are invented: the Quarren river mussel (*Velunio quarrensis*) in three reaches
//! of a river, typed at 15 microsatellites (a wide table), and the Marlheath ground beetle
//! (*Ostricarabus marlensis*) on three heath fragments, typed at 400 SNPs (a bgzipped VCF), both
//! in the fictional Quarrendale lowlands. Each comes from its own fixed seed, so the files are
//! the same on every run and machine. The recipes and READMEs are written by hand.
//!
//! Written files: the genotypes, `populations.csv` (the population sheet) and `truth.csv` (the
//! simulated number of adults and true gene diversity behind each sample group).

mod ground_beetle;
mod river_mussel;

use std::collections::BTreeMap;
use std::error::Error;
use std::fmt::Write as _;
use std::path::Path;
use std::process::ExitCode;

use popgauge_sim::{PopulationIdx, SampleRequest, SampleSet, Simulation, SimulationConfig};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The ChaCha stream of the untyped cells, apart from the simulator's own streams.
const MISSING_STREAM: u64 = 100;

/// One site of a scenario, as the population sheet describes it.
struct Site {
    name: &'static str,
    /// Sample ids read `<prefix>-<year>-<number>`.
    prefix: &'static str,
    label: &'static str,
    census_size: u32,
    census_year: i32,
    latitude: f64,
    longitude: f64,
}

/// A species' simulated history and how it was sampled.
struct Scenario {
    seed: u64,
    /// The sites, in the order of `config.populations`.
    sites: &'static [Site],
    config: SimulationConfig,
    /// Each sampling: its year and the generation whose adults are sampled.
    samplings: Vec<(i32, u32)>,
    /// Individuals sampled at each site in each sampling.
    samples_per_group: usize,
    /// Whether sampling kills the animals (they leave no offspring).
    lethal: bool,
    /// Share of genotype cells left untyped at random.
    missing_rate: f64,
}

/// The samples of a scenario and the truth behind them.
struct Simulated {
    samples: SampleSet,
    /// `truth.csv`.
    truth: String,
}

fn main() -> ExitCode {
    popgauge_sim::write_case_main(
        "usage: make-portfolio-cases DIR\n  writes the data of DIR/river-mussel/ and DIR/ground-beetle/",
        |dir: &Path| {
            let mussel = river_mussel::write(&dir.join("river-mussel"))?;
            let beetle = ground_beetle::write(&dir.join("ground-beetle"))?;
            Ok(format!("{mussel}\n{beetle}"))
        },
    )
}

/// Runs the scenario and draws its samples, site by site within each sampling year, then
/// blanks cells at random.
fn simulate(scenario: Scenario) -> Result<Simulated, Box<dyn Error>> {
    let mut simulation = Simulation::new(scenario.config, scenario.seed)?;
    let mut by_group: BTreeMap<(usize, usize), SampleSet> = BTreeMap::new();
    let mut truth = String::from("population,year,generation,adults,gene_diversity,animals_sampled\n");
    for (sampling, &(year, generation)) in scenario.samplings.iter().enumerate() {
        simulation.advance_to(generation)?;
        for (index, site) in scenario.sites.iter().enumerate() {
            let population = PopulationIdx(index);
            let adults = simulation.population_size(population)?;
            let diversity = simulation.gene_diversity(population)?;
            let request = SampleRequest::new(population, scenario.samples_per_group, year, site.prefix);
            let drawn =
                if scenario.lethal { simulation.sample_and_remove(&request)? } else { simulation.sample(&request)? };
            by_group.insert((index, sampling), drawn);
            writeln!(
                truth,
                "{},{year},{generation},{adults},{:.4},{}",
                site.name,
                diversity.iter().sum::<f64>() / diversity.len() as f64,
                scenario.samples_per_group
            )?;
        }
    }
    let mut groups = by_group.into_values();
    let mut samples = groups.next().ok_or("no sample drawn")?;
    for group in groups {
        samples.append(group)?;
    }
    blank_cells(&mut samples, scenario.missing_rate, scenario.seed);
    Ok(Simulated { samples, truth })
}

/// Leaves each cell untyped with probability `rate`, from a stream of `seed` of its own.
fn blank_cells(samples: &mut SampleSet, rate: f64, seed: u64) {
    let threshold = (rate.clamp(0.0, 1.0) * 4_294_967_296.0).min(u32::MAX as f64) as u32;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(MISSING_STREAM);
    for individual in &mut samples.individuals {
        for cell in &mut individual.genotype {
            // Always draw, so that one cell's fate does not shift the others'.
            if rng.next_u32() < threshold {
                *cell = None;
            }
        }
    }
}

/// The population sheet of `sites`.
fn population_sheet(sites: &[Site]) -> String {
    let mut sheet = String::from("population,label,census_size,census_year,latitude,longitude\n");
    for site in sites {
        sheet += &format!(
            "{},{},{},{},{:.3},{:.3}\n",
            site.name, site.label, site.census_size, site.census_year, site.latitude, site.longitude
        );
    }
    sheet
}

/// The share of untyped cells, for the summary line.
fn untyped_share(samples: &SampleSet) -> f64 {
    let cells = samples.individuals.len() * samples.loci.len();
    let untyped =
        samples.individuals.iter().flat_map(|individual| &individual.genotype).filter(|c| c.is_none()).count();
    100.0 * untyped as f64 / cells.max(1) as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use popgauge_sim::{BurnIn, LocusSpec, MarkerModel, MigrationSchedule, PopulationSpec, SizeSchedule, SnpModel};

    const SITES: [Site; 2] = [
        Site {
            name: "North",
            prefix: "NOR",
            label: "north bank",
            census_size: 90,
            census_year: 2021,
            latitude: 57.1,
            longitude: 13.25,
        },
        Site {
            name: "South",
            prefix: "SOU",
            label: "south bank",
            census_size: 120,
            census_year: 2022,
            latitude: 57.0,
            longitude: 13.5,
        },
    ];

    fn tiny(lethal: bool) -> Scenario {
        Scenario {
            seed: 7,
            sites: &SITES,
            config: SimulationConfig {
                loci: LocusSpec::numbered("s", 20, MarkerModel::Snp(SnpModel::default())),
                populations: vec![
                    PopulationSpec::new("North", SizeSchedule::constant(30)),
                    PopulationSpec::new("South", SizeSchedule::constant(40)),
                ],
                migration: MigrationSchedule::none(),
                burn_in: BurnIn { ancestral_size: 100, generations: 0 },
            },
            samplings: vec![(2020, 2), (2022, 4)],
            samples_per_group: 10,
            lethal,
            missing_rate: 0.1,
        }
    }

    #[test]
    fn samples_are_grouped_by_site_then_year_with_a_truth_row_per_group() {
        let simulated = simulate(tiny(false)).unwrap();
        let groups: Vec<(String, i32)> = simulated
            .samples
            .individuals
            .iter()
            .map(|individual| (individual.population.clone(), individual.year))
            .collect();
        assert_eq!(groups.first(), Some(&("North".to_string(), 2020)));
        assert_eq!(groups[10], ("North".to_string(), 2022));
        assert_eq!(groups.last(), Some(&("South".to_string(), 2022)));
        assert_eq!(groups.len(), 40);
        let truth: Vec<&str> = simulated.truth.lines().collect();
        assert_eq!(truth.len(), 5);
        assert!(truth[1].starts_with("North,2020,2,30,"), "{}", truth[1]);
        assert!(truth[4].starts_with("South,2022,4,40,"), "{}", truth[4]);
    }

    #[test]
    fn lethal_sampling_removes_the_sampled_adults() {
        // The 10 adults taken in generation 2 leave no offspring, but the next generation is
        // refilled to the scheduled size, so the truth still shows 30 and 40 adults.
        let simulated = simulate(tiny(true)).unwrap();
        assert!(simulated.truth.contains("\nNorth,2022,4,30,"), "{}", simulated.truth);
        let first = simulate(tiny(false)).unwrap();
        assert_eq!(first.samples.individuals[..10], simulated.samples.individuals[..10]);
        assert_ne!(first.samples.individuals[10..], simulated.samples.individuals[10..]);
    }

    #[test]
    fn the_same_seed_gives_the_same_samples() {
        let first = simulate(tiny(false)).unwrap();
        let again = simulate(tiny(false)).unwrap();
        assert_eq!(first.samples, again.samples);
        assert_eq!(first.truth, again.truth);
    }

    #[test]
    fn about_the_asked_share_of_cells_is_untyped() {
        let simulated = simulate(tiny(false)).unwrap();
        // 800 cells at 10 %: binomial mean 80, sd 8.5; 45..115 is beyond 4 sd (common practice).
        let share = untyped_share(&simulated.samples);
        assert!((5.6..14.4).contains(&share), "{share} % untyped");
    }

    /// The repository's copy is what the documented command writes, byte for byte.
    #[test]
    fn the_committed_cases_are_what_the_generator_writes() {
        let committed = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/portfolio/cases");
        let written = std::env::temp_dir().join(format!("popgauge-portfolio-cases-{}", std::process::id()));
        river_mussel::write(&written.join("river-mussel")).unwrap();
        ground_beetle::write(&written.join("ground-beetle")).unwrap();
        let files = [
            "river-mussel/genotypes.csv",
            "river-mussel/populations.csv",
            "river-mussel/truth.csv",
            "ground-beetle/calls.vcf.gz",
            "ground-beetle/samples.csv",
            "ground-beetle/populations.csv",
            "ground-beetle/truth.csv",
        ];
        for file in files {
            let read = |root: &Path| std::fs::read(root.join(file)).unwrap_or_else(|e| panic!("{file}: {e}"));
            assert!(
                read(&committed) == read(&written),
                "examples/portfolio/cases/{file} differs from what make-portfolio-cases writes; regenerate with \
                 `cargo run --release -p popgauge-sim --bin make-portfolio-cases -- examples/portfolio/cases`"
            );
        }
        std::fs::remove_dir_all(&written).unwrap();
    }

    #[test]
    fn population_sheet_lists_every_site() {
        assert_eq!(
            population_sheet(&SITES),
            "population,label,census_size,census_year,latitude,longitude\n\
             North,north bank,90,2021,57.100,13.250\nSouth,south bank,120,2022,57.000,13.500\n"
        );
    }
}
