//! The recipe as written: serde types with spans, parsed strictly (unknown keys are errors).

use std::collections::BTreeMap;

use schemars::JsonSchema;
use serde::Deserialize;
use toml::Spanned;

/// `case.toml` as written.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "popgauge recipe (case.toml)")]
pub struct RawRecipe {
    /// Facts printed on the document.
    #[schemars(with = "RawAssessment")]
    pub assessment: Spanned<RawAssessment>,
    /// The data files.
    #[schemars(with = "RawData")]
    pub data: Spanned<RawData>,
    /// The steps, in the order they run.
    #[serde(default, rename = "step")]
    #[schemars(with = "Vec<RawStep>")]
    pub steps: Vec<Spanned<RawStep>>,
    /// How the animals were sampled (printed in the document's sampling design).
    #[serde(default)]
    pub sampling: Option<RawSampling>,
    /// How the document is typeset.
    #[serde(default)]
    pub report: Option<RawReport>,
}

/// `[sampling]`: how the animals were sampled; every key optional.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSampling {
    /// Life stage sampled, in words, e.g. "adults at breeding ponds".
    #[serde(default)]
    pub life_stage: Option<String>,
    /// Tissue taken, e.g. "tail tip".
    #[serde(default)]
    pub tissue: Option<String>,
    /// Whether sampling killed the animals.
    #[serde(default)]
    pub lethal: Option<bool>,
    /// `"single"` (each sample is one cohort) or `"mixed"` (several ages).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub cohorts: Option<Spanned<String>>,
}

/// `[assessment]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawAssessment {
    /// Document title (free text).
    pub title: String,
    /// Species assessed.
    pub species: String,
    /// Person responsible for the assessment.
    #[serde(default)]
    pub assessor: Option<String>,
    /// Organisation.
    #[serde(default)]
    pub organisation: Option<String>,
    /// Assessment date printed on the document, `YYYY-MM-DD`; default: today (recorded).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub date: Option<Spanned<String>>,
    /// Generation time in years, to turn years into generations.
    #[serde(default)]
    #[schemars(with = "Option<f64>")]
    pub generation_time_years: Option<Spanned<f64>>,
    /// Where the generation time comes from (a reference or a note), printed beside it.
    #[serde(default)]
    pub generation_time_source: Option<String>,
    /// Master seed; each step derives its own from it and the step id.
    #[serde(default)]
    #[schemars(with = "Option<u64>")]
    pub seed: Option<Spanned<i64>>,
}

/// `[data]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawData {
    /// Wide genotype table (CSV), relative to the case folder.
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub genotypes: Option<Spanned<String>>,
    /// VCF file (v4.x, plain or bgzipped), instead of `genotypes`; needs `samples`.
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub vcf: Option<Spanned<String>>,
    /// Sample sheet for a VCF (`sample,population,year`).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub samples: Option<Spanned<String>>,
    /// Population sheet (optional CSV).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub populations: Option<Spanned<String>>,
    /// Locus sheet (optional CSV: `locus` plus any of `marker`, `motif`, `chromosome`,
    /// `position`).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub loci: Option<Spanned<String>>,
    /// Cell spellings that mean "not typed"; default `["", "NA", "./."]`.
    #[serde(default)]
    pub missing: Option<Vec<String>>,
    /// Columns that are neither metadata nor loci.
    #[serde(default)]
    pub ignore_columns: Option<Vec<String>>,
    /// Turn bad cells into errors instead of findings.
    #[serde(default)]
    pub strict: Option<bool>,
    /// VCF records whose FILTER values are all in this list are read; default `["PASS", "."]`.
    #[serde(default)]
    pub accept_filters: Option<Vec<String>>,
    /// Sites typed in fewer than this share of samples are not read (0–1; default 0).
    #[serde(default)]
    #[schemars(with = "Option<f64>")]
    pub min_call_rate: Option<Spanned<f64>>,
    /// Sites whose second most common allele is rarer than this are not read (0–0.5; default 0).
    #[serde(default)]
    #[schemars(with = "Option<f64>")]
    pub min_maf: Option<Spanned<f64>>,
    /// Sites with more distinct alleles than this are not read (≥ 1; default: no limit).
    #[serde(default)]
    #[schemars(with = "Option<u64>")]
    pub max_alleles: Option<Spanned<i64>>,
}

/// One `[[step]]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawStep {
    /// Unique id; names the step's results.
    #[schemars(with = "String")]
    pub id: Spanned<String>,
    /// A built-in step name, or `plugin:relative/path/lib.so`.
    #[schemars(with = "String")]
    pub uses: Spanned<String>,
    /// SHA-256 of an external plugin library (required for `plugin:` steps).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub sha256: Option<Spanned<String>>,
    /// Where a `plugin:` step's code runs: `"process"` (default: a child process, so a crash or
    /// hang fails only this step) or `"in-process"` (faster; a crash stops popgauge).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub isolation: Option<Spanned<String>>,
    /// Time limit in seconds of a `plugin:` step run in a child process (default 600); the step
    /// is stopped and marked failed when it takes longer.
    #[serde(default)]
    #[schemars(with = "Option<u64>")]
    pub timeout_seconds: Option<Spanned<i64>>,
    /// Memory limit in MiB of a `plugin:` step run in a child process (default 8192); a plugin
    /// that needs more is stopped and the step marked failed.
    #[serde(default)]
    #[schemars(with = "Option<u64>")]
    pub memory_limit_mib: Option<Spanned<i64>>,
    /// The step's parameters; `popgauge steps` lists them.
    #[serde(default)]
    #[schemars(with = "Option<BTreeMap<String, serde_json::Value>>")]
    pub params: Option<BTreeMap<Spanned<String>, Spanned<toml::Value>>>,
}

/// `[report]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawReport {
    /// `standard` or a path to a template folder in the case.
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub template: Option<Spanned<String>>,
    /// Ne thresholds, e.g. `[50, 500]` or `[100, 1000]`.
    #[serde(default)]
    #[schemars(with = "Option<Vec<f64>>")]
    pub thresholds: Option<Spanned<Vec<f64>>>,
    /// A map of the populations in the document (`[report.map]`); no map unless `show = true`.
    #[serde(default)]
    pub map: Option<RawMap>,
}

/// `[report.map]`: a map of the populations that have coordinates in the population sheet.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMap {
    /// Draw the map (default false: the document has no map).
    #[serde(default)]
    pub show: Option<bool>,
    /// `"grid"` (default: each position moved to the centre of its cell of a `grid_km` grid)
    /// or `"exact"` (the positions as given; the document is then sensitive).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub positions: Option<Spanned<String>>,
    /// Cell size in km of the grid that generalises positions (> 0; default 10).
    #[serde(default)]
    #[schemars(with = "Option<f64>")]
    pub grid_km: Option<Spanned<f64>>,
}
