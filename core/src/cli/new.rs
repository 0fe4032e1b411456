//! `popgauge new DIR`: a case skeleton with a commented recipe.

use std::path::PathBuf;
use std::process::ExitCode;

use crate::dates::today;

/// Arguments of `popgauge new`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The folder to create (must not exist, or be empty).
    pub dir: PathBuf,
}

/// The commented recipe written by `popgauge new`; `{date}` is replaced by today's date.
pub const RECIPE_TEMPLATE: &str = r#"# popgauge assessment recipe. Paths are relative to this folder.
# `popgauge check .` checks this file and the data; `popgauge run .` runs the assessment.

[assessment]
title = "Genetic status of …"            # printed on the document
species = "…"
assessor = "…"                           # the person responsible
organisation = "…"
date = "{date}"                       # assessment date printed on the document (YYYY-MM-DD)
generation_time_years = 4.0              # mean age of parents; turns years into generations
seed = 1                                 # master seed: the same seed gives the same numbers

[data]
genotypes = "genotypes.csv"              # one row per sample: sample, population, year, then loci (cells like 152/156)
populations = "populations.csv"          # optional: population, label, census_size, census_year, latitude, longitude, area_km2
missing = ["", "NA", "./."]              # cell spellings that mean "not typed"
ignore_columns = []                      # columns that are neither metadata nor loci, e.g. ["sex", "notes"]
# strict = true                          # stop at the first malformed genotype cell instead of reporting it
# For a VCF file, replace `genotypes` with:
# vcf = "calls.vcf.gz"                   # VCF 4.x, plain or bgzipped; GT only, diploid
# samples = "samples.csv"                # sample sheet: sample, population, year
# accept_filters = ["PASS", "."]         # FILTER values of records to read
# Site filters (VCF and wide table alike), applied while reading:
# min_call_rate = 0.8                    # read sites typed in at least 80 % of samples
# min_maf = 0.05                         # read sites whose minor allele has frequency ≥ 0.05
# max_alleles = 2                        # read sites with at most 2 alleles

# Steps run in this order; `popgauge steps` lists each one's parameters.
[[step]]
id = "qc"
uses = "validate"
[step.params]
max_missing_locus = 0.2                  # drop loci untyped in more than 20 % of samples
max_missing_sample = 0.5                 # drop samples untyped at more than half the loci
min_group_size = 5                       # drop (population, year) groups with fewer samples

[[step]]
id = "diversity"
uses = "diversity"

[report]
thresholds = [50, 500]                   # Ne thresholds; [100, 1000] is the other common choice
# template = "standard"                  # or a folder in this case holding assessment.typ (copy templates/standard/)
# A map of the populations with latitude and longitude in populations.csv (none unless asked):
# [report.map]
# show = true
# positions = "grid"                     # "grid" (default): each site at the centre of its grid cell; "exact": as given (sensitive)
# grid_km = 10                           # grid cell width in km (default 10)
"#;

const GENOTYPES_TEMPLATE: &str = "sample,population,year,Locus01,Locus02\n";
const POPULATIONS_TEMPLATE: &str = "population,label,census_size,census_year,latitude,longitude,area_km2\n";

/// Writes the skeleton.
///
/// # Errors
/// The folder exists and is not empty, or cannot be written.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let dir = &args.dir;
    if dir.exists() && std::fs::read_dir(dir)?.next().is_some() {
        anyhow::bail!("{}: the folder exists and is not empty; nothing was written\n  help: give a new folder name", dir.display());
    }
    std::fs::create_dir_all(dir)?;
    let recipe = RECIPE_TEMPLATE.replace("{date}", &today().to_string());
    std::fs::write(dir.join("case.toml"), recipe)?;
    std::fs::write(dir.join("genotypes.csv"), GENOTYPES_TEMPLATE)?;
    std::fs::write(dir.join("populations.csv"), POPULATIONS_TEMPLATE)?;
    println!("Created {}: case.toml (commented recipe), genotypes.csv and populations.csv (headers only).", dir.display());
    println!("Fill in the data, edit the recipe, then: popgauge check {0} && popgauge run {0}", dir.display());
    Ok(ExitCode::SUCCESS)
}
