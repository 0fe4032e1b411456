//! A seeded SNP-panel case at genomic scale, for benchmarks: biallelic SNPs typed in several
//! populations sampled in two years, written as a VCF with its sample sheet, a population
//! sheet and a full recipe.
//!
//! The scenario is invented: the Calvora ridge vole (*Calvomys ostmerensis*, a fictional
//! species) at six sites of the fictional Ostmere Basin, sampled in 2019 and 2025. Its
//! generation time is 2 years, so the samples are [`GENERATIONS_BETWEEN_SAMPLES`] generations
//! apart.
//!
//! How the genotypes arise: every site is a Wright–Fisher population of its own constant size
//! (one declines between the samplings), founded from one ancestral pool in Hardy–Weinberg and
//! linkage equilibrium and left to drift for [`FIRST_SAMPLING_GENERATION`] generations before
//! the first sample. Loci are unlinked in the simulation, so the linkage disequilibrium in the
//! samples comes from finite population size (Hill 1981), which is what `ne-ld` estimates;
//! about 10 generations bring the disequilibrium of unlinked loci close to its drift
//! equilibrium (each generation halves the old part). CHROM and POS are labels spread evenly
//! over [`SnpPanel::chromosomes`] chromosomes so that `ne-ld` has same-chromosome pairs to
//! skip. A share [`SnpPanel::missing_rate`] of calls is then blanked at random (`./.`).
//!
//! Everything comes from [`SnpPanel::seed`]: the same panel gives the same bytes on any
//! machine. The cost grows with loci × (sum of population sizes) per generation; the benchmark
//! panel ([`SnpPanel::benchmark`]: 20,000 SNPs × 1,200 samples) takes a few seconds and about
//! half a gigabyte of memory in a release build.

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};

use crate::cohort::PopulationIdx;
use crate::error::SimError;
use crate::markers::{LocusSpec, MarkerModel, SnpModel};
use crate::random::{SimRng, Stream, chance_threshold};
use crate::sample::{SampleRequest, SampleSet};
use crate::schedule::{MigrationSchedule, SizeSchedule};
use crate::simulation::{BurnIn, PopulationSpec, Simulation, SimulationConfig};
use crate::vcf::{ChromosomeLayout, bgzip, write_snp_vcf};

/// The generation sampled in the first sampling year (2019).
pub const FIRST_SAMPLING_GENERATION: u32 = 12;
/// Generations between the two samplings (2019 and 2025 at 2 years per generation).
pub const GENERATIONS_BETWEEN_SAMPLES: u32 = 3;
/// The two sampling years.
pub const SAMPLING_YEARS: [i32; 2] = [2019, 2025];
/// Generation time of the scenario's species, in years.
pub const GENERATION_TIME_YEARS: f64 = 2.0;

/// Adults in the ancestral pool the sites are founded from.
const ANCESTRAL_SIZE: usize = 1500;
/// Distance between neighbouring SNPs on a chromosome, in base pairs.
const SPACING: u64 = 5_000;

/// One site of the scenario.
struct Site {
    name: &'static str,
    prefix: &'static str,
    label: &'static str,
    /// Adults per generation before the second sampling's generations.
    size: usize,
    /// Adults per generation after the first sampling (a decline when smaller than `size`).
    size_after_first_sample: usize,
    /// Census count given in the population sheet.
    census_size: u32,
    latitude: f64,
    longitude: f64,
}

const SITES: [Site; 6] = [
    Site {
        name: "Aldwick Reach",
        prefix: "ALD",
        label: "Aldwick Reach river meadows",
        size: 120,
        size_after_first_sample: 120,
        census_size: 900,
        latitude: 58.412,
        longitude: 14.071,
    },
    Site {
        name: "Brannow Fen",
        prefix: "BRF",
        label: "Brannow Fen margins",
        size: 600,
        size_after_first_sample: 150,
        census_size: 1400,
        latitude: 58.503,
        longitude: 14.226,
    },
    Site {
        name: "Corrie Dale",
        prefix: "CRD",
        label: "Corrie Dale hay meadows",
        size: 300,
        size_after_first_sample: 300,
        census_size: 2100,
        latitude: 58.377,
        longitude: 14.392,
    },
    Site {
        name: "Dunmere Shallows",
        prefix: "DNS",
        label: "Dunmere Shallows reed beds",
        size: 450,
        size_after_first_sample: 450,
        census_size: 3600,
        latitude: 58.611,
        longitude: 14.518,
    },
    Site {
        name: "Elsgarth Moss",
        prefix: "ELM",
        label: "Elsgarth Moss raised bog",
        size: 700,
        size_after_first_sample: 700,
        census_size: 5200,
        latitude: 58.704,
        longitude: 14.133,
    },
    Site {
        name: "Fenwray Pools",
        prefix: "FWP",
        label: "Fenwray Pools grazing marsh",
        size: 1000,
        size_after_first_sample: 1000,
        census_size: 8800,
        latitude: 58.295,
        longitude: 14.664,
    },
];

/// The size of a SNP-panel case and its seed.
#[derive(Clone, Debug, PartialEq)]
pub struct SnpPanel {
    /// Biallelic SNPs.
    pub loci: usize,
    /// Chromosomes the SNPs are spread over (CHROM `chr01`, `chr02`, …), at least 1.
    pub chromosomes: usize,
    /// Sites, 1 to 6.
    pub populations: usize,
    /// Samples per site and year (at most the site's smallest size, 120).
    pub samples_per_group: usize,
    /// Share of calls blanked at random, in `[0, 1]`.
    pub missing_rate: f64,
    /// The one seed.
    pub seed: u64,
}

impl SnpPanel {
    /// The benchmark case: 20,000 SNPs on 20 chromosomes, 6 sites × 2 years × 100 samples
    /// (1,200 samples), 1 % of calls missing.
    pub fn benchmark() -> Self {
        Self {
            loci: 20_000,
            chromosomes: 20,
            populations: 6,
            samples_per_group: 100,
            missing_rate: 0.01,
            seed: 20_251_117,
        }
    }

    /// Simulates the populations and draws the samples.
    ///
    /// # Errors
    /// [`SimError::InvalidPanel`] when a size is out of range; otherwise what the simulation
    /// reports.
    pub fn generate(&self) -> Result<PanelData, SimError> {
        self.validate()?;
        let sites = &SITES[..self.populations];
        let config = SimulationConfig {
            loci: LocusSpec::numbered("snp", self.loci, MarkerModel::Snp(SnpModel::default())),
            populations: sites
                .iter()
                .map(|site| {
                    let (before, after) = (site.size, site.size_after_first_sample);
                    let schedule =
                        SizeSchedule::from_fn(
                            move |generation| {
                                if generation > FIRST_SAMPLING_GENERATION { after } else { before }
                            },
                        );
                    PopulationSpec::new(site.name, schedule)
                })
                .collect(),
            migration: MigrationSchedule::none(),
            burn_in: BurnIn { ancestral_size: ANCESTRAL_SIZE, generations: 0 },
        };
        let mut simulation = Simulation::new(config, self.seed)?;
        let mut samples: Option<SampleSet> = None;
        let generations = [FIRST_SAMPLING_GENERATION, FIRST_SAMPLING_GENERATION + GENERATIONS_BETWEEN_SAMPLES];
        for (generation, year) in generations.into_iter().zip(SAMPLING_YEARS) {
            simulation.advance_to(generation)?;
            for (index, site) in sites.iter().enumerate() {
                let request = SampleRequest::new(PopulationIdx(index), self.samples_per_group, year, site.prefix);
                let drawn = simulation.sample(&request)?;
                match samples.as_mut() {
                    Some(all) => all.append(drawn)?,
                    None => samples = Some(drawn),
                }
            }
        }
        let mut samples = samples.ok_or(SimError::NoPopulations)?;
        blank_calls(&mut samples, self.missing_rate, self.seed);
        Ok(PanelData { samples, chromosomes: self.chromosomes, populations: self.populations })
    }

    fn validate(&self) -> Result<(), SimError> {
        let invalid = |reason: String| Err(SimError::InvalidPanel { reason });
        if self.loci == 0 || self.chromosomes == 0 || self.chromosomes > self.loci {
            return invalid(format!(
                "{} loci on {} chromosomes: need 1 ≤ chromosomes ≤ loci",
                self.loci, self.chromosomes
            ));
        }
        if !(1..=SITES.len()).contains(&self.populations) {
            return invalid(format!("{} populations: the scenario has 1 to {}", self.populations, SITES.len()));
        }
        let smallest = SITES.iter().map(|s| s.size.min(s.size_after_first_sample)).min().unwrap_or(0);
        if self.samples_per_group == 0 || self.samples_per_group > smallest {
            return invalid(format!("{} samples per group: need 1 to {smallest}", self.samples_per_group));
        }
        if !(0.0..=1.0).contains(&self.missing_rate) {
            return invalid(format!("missing rate {} is outside [0, 1]", self.missing_rate));
        }
        Ok(())
    }
}

/// Blanks each call with probability `rate`, from its own stream of `seed`.
fn blank_calls(samples: &mut SampleSet, rate: f64, seed: u64) {
    let threshold = chance_threshold(rate);
    if threshold == 0 {
        return;
    }
    let mut rng = SimRng::new(seed, Stream::Faults);
    for individual in &mut samples.individuals {
        for call in &mut individual.genotype {
            if rng.chance(threshold) {
                *call = None;
            }
        }
    }
}

/// A generated panel, ready to write.
#[derive(Clone, Debug, PartialEq)]
pub struct PanelData {
    /// The sampled genotypes (untyped calls are `None`), sites in scenario order, 2019 first.
    pub samples: SampleSet,
    chromosomes: usize,
    populations: usize,
}

impl PanelData {
    /// Writes the panel as VCF 4.3 (uncompressed): one record per SNP with its name as ID, GT
    /// only, unphased, `./.` for an untyped call; loci fill the chromosomes in order, in
    /// blocks as equal as possible, [`SPACING`] bp apart.
    ///
    /// # Errors
    /// Any error of `out`.
    pub fn write_vcf(&self, out: impl Write) -> io::Result<()> {
        let layout = ChromosomeLayout { chromosomes: self.chromosomes, spacing_bp: SPACING };
        write_snp_vcf(&self.samples, layout, "popgauge-sim snp_panel (simulated data)", out)
    }

    /// The VCF's sample sheet (`sample,population,year`).
    pub fn sample_sheet(&self) -> String {
        let mut sheet = String::from("sample,population,year\n");
        for individual in &self.samples.individuals {
            sheet.push_str(&format!("{},{},{}\n", individual.sample, individual.population, individual.year));
        }
        sheet
    }

    /// The population sheet: label, census size and year, coordinates.
    pub fn population_sheet(&self) -> String {
        let mut sheet = String::from("population,label,census_size,census_year,latitude,longitude\n");
        for site in &SITES[..self.populations] {
            sheet.push_str(&format!(
                "{},{},{},{},{:.3},{:.3}\n",
                site.name, site.label, site.census_size, SAMPLING_YEARS[1], site.latitude, site.longitude
            ));
        }
        sheet
    }

    /// The recipe: every built-in analysis with its defaults on the bgzipped VCF `vcf_file`, and
    /// `ne-temporal`'s required sampling plan set to I (the samples are taken non-lethally).
    pub fn recipe(&self, vcf_file: &str) -> String {
        format!(
            r#"# Benchmark case: a fictional species in a fictional landscape, with simulated genotypes
# (popgauge-sim snp_panel). {loci} SNPs × {samples} samples; not a real assessment.

[assessment]
title = "Genetic status of the Calvora ridge vole in the Ostmere Basin"
species = "Calvora ridge vole (Calvomys ostmerensis)"
assessor = "Dr Maren Oakhurst"
organisation = "Ostmere Basin Wildlife Partnership"
date = "2026-11-30"
generation_time_years = {GENERATION_TIME_YEARS:.1}
seed = 20261130

[data]
vcf = "{vcf_file}"
samples = "samples.csv"
populations = "populations.csv"

[[step]]
id = "qc"
uses = "validate"

[[step]]
id = "diversity"
uses = "diversity"

[[step]]
id = "hwe"
uses = "hwe"

[[step]]
id = "fst"
uses = "differentiation"

[[step]]
id = "ld"
uses = "ne-ld"

[[step]]
id = "temporal"
uses = "ne-temporal"
[step.params]
# The voles were sampled non-lethally and released (Waples' plan I, with census_size).
plan = "I"

[[step]]
id = "trend"
uses = "trend"

[[step]]
id = "status"
uses = "status"

[report]
thresholds = [50, 500]
"#,
            loci = self.samples.loci.len(),
            samples = self.samples.individuals.len(),
        )
    }
}

/// The files [`write_case`] wrote, as paths inside the case folder.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CaseFiles {
    /// `calls.vcf`.
    pub vcf: PathBuf,
    /// `calls.vcf.gz` (BGZF), the file the recipe names.
    pub vcf_bgzipped: PathBuf,
    /// `case.toml`.
    pub recipe: PathBuf,
}

/// Writes a case folder `dir` (created if needed): `calls.vcf`, `calls.vcf.gz` (the same
/// bytes in BGZF blocks), `samples.csv`, `populations.csv` and `case.toml` naming the
/// compressed file.
///
/// # Errors
/// Any error creating or writing the files.
pub fn write_case(panel: &PanelData, dir: &Path) -> io::Result<CaseFiles> {
    fs::create_dir_all(dir)?;
    let mut vcf = Vec::new();
    panel.write_vcf(&mut vcf)?;
    let compressed = bgzip(&vcf)?;
    let files =
        CaseFiles { vcf: dir.join("calls.vcf"), vcf_bgzipped: dir.join("calls.vcf.gz"), recipe: dir.join("case.toml") };
    fs::write(&files.vcf, vcf)?;
    fs::write(&files.vcf_bgzipped, compressed)?;
    fs::write(dir.join("samples.csv"), panel.sample_sheet())?;
    fs::write(dir.join("populations.csv"), panel.population_sheet())?;
    fs::write(&files.recipe, panel.recipe("calls.vcf.gz"))?;
    Ok(files)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn small(seed: u64) -> SnpPanel {
        SnpPanel { loci: 90, chromosomes: 4, populations: 2, samples_per_group: 12, missing_rate: 0.05, seed }
    }

    fn vcf_of(panel: &SnpPanel) -> Vec<u8> {
        let mut out = Vec::new();
        panel.generate().expect("small panel").write_vcf(&mut out).expect("write to memory");
        out
    }

    #[test]
    fn same_seed_gives_the_same_bytes_and_another_seed_other_bytes() {
        let first = vcf_of(&small(7));
        assert_eq!(first, vcf_of(&small(7)));
        assert_ne!(first, vcf_of(&small(8)));
        let data = small(7).generate().expect("small panel");
        assert_eq!(data.sample_sheet(), small(7).generate().expect("again").sample_sheet());
    }

    #[test]
    fn vcf_has_one_record_per_locus_and_one_column_per_sample() {
        let text = String::from_utf8(vcf_of(&small(3))).expect("ASCII");
        let header = text.lines().find(|l| l.starts_with("#CHROM")).expect("column header");
        let columns: Vec<&str> = header.split('\t').collect();
        assert_eq!(columns.len(), 9 + 2 * 2 * 12, "9 fixed columns, 2 sites × 2 years × 12 samples");
        assert_eq!(columns[9], "ALD-2019-001");
        assert_eq!(*columns.last().expect("samples"), "BRF-2025-012");
        let records: Vec<Vec<&str>> =
            text.lines().filter(|l| !l.starts_with('#')).map(|l| l.split('\t').collect()).collect();
        assert_eq!(records.len(), 90);
        assert!(records.iter().all(|r| r.len() == columns.len()));
        // 90 loci on 4 chromosomes: blocks of 23, 23, 23 and 21.
        let on = |chromosome: &str| records.iter().filter(|r| r[0] == chromosome).count();
        assert_eq!([on("chr01"), on("chr02"), on("chr03"), on("chr04")], [23, 23, 23, 21]);
        assert_eq!((records[23][0], records[23][1]), ("chr02", "5000"));
        let calls: Vec<&str> = records.iter().flat_map(|r| r[9..].iter().copied()).collect();
        assert!(calls.iter().all(|c| ["0/0", "0/1", "1/1", "./."].contains(c)), "GT calls only");
        // 5 % of 4,320 calls: binomial mean 216, sd ≈ 14; 150..300 is beyond 4 sd (common practice).
        let missing = calls.iter().filter(|c| **c == "./.").count();
        assert!((150..300).contains(&missing), "{missing} calls missing");
    }

    #[test]
    fn sheets_and_recipe_name_every_group() {
        let data = small(5).generate().expect("small panel");
        let sheet = data.sample_sheet();
        assert_eq!(sheet.lines().count(), 1 + 48);
        assert!(sheet.contains("BRF-2025-003,Brannow Fen,2025\n"));
        let populations = data.population_sheet();
        assert_eq!(populations.lines().count(), 3);
        assert!(populations.starts_with("population,label,census_size"));
        let recipe = data.recipe("calls.vcf.gz");
        assert!(recipe.contains("vcf = \"calls.vcf.gz\""));
        for uses in ["validate", "diversity", "hwe", "differentiation", "ne-ld", "ne-temporal", "trend", "status"] {
            assert!(recipe.contains(&format!("uses = \"{uses}\"")), "{uses}");
        }
        // `ne-temporal` has no default plan; the simulated samples are taken non-lethally.
        assert!(recipe.contains("uses = \"ne-temporal\"\n[step.params]\n"), "{recipe}");
        assert!(recipe.contains("\nplan = \"I\"\n"), "{recipe}");
    }

    #[test]
    fn out_of_range_panels_are_refused() {
        for panel in [
            SnpPanel { populations: 7, ..small(1) },
            SnpPanel { samples_per_group: 121, ..small(1) },
            SnpPanel { chromosomes: 91, ..small(1) },
            SnpPanel { missing_rate: 1.5, ..small(1) },
        ] {
            assert!(matches!(panel.generate(), Err(SimError::InvalidPanel { .. })), "{panel:?}");
        }
    }

    #[test]
    fn written_case_holds_the_same_calls_compressed() {
        let dir = std::env::temp_dir().join(format!("popgauge-sim-panel-{}", std::process::id()));
        let data = small(9).generate().expect("small panel");
        let files = write_case(&data, &dir).expect("writes the case");
        let plain = fs::read(&files.vcf).expect("plain VCF");
        let mut unpacked = Vec::new();
        io::Read::read_to_end(
            &mut noodles_bgzf::io::Reader::new(fs::File::open(&files.vcf_bgzipped).expect("bgzipped VCF")),
            &mut unpacked,
        )
        .expect("decompresses");
        assert_eq!(plain, unpacked);
        assert!(fs::read_to_string(&files.recipe).expect("recipe").contains("calls.vcf.gz"));
        fs::remove_dir_all(&dir).expect("clean up");
    }
}
