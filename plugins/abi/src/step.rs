//! The step trait and what a step is given.

use std::collections::BTreeMap;

use serde::de::DeserializeOwned;
use serde::{Deserialize, Serialize};

use crate::matrix::GenotypeView;
use crate::output::{Filter, Finding, StepOutput, Table};
use crate::params::{Descriptor, Params};

/// A step's own random seed, derived by the engine from the recipe's master seed and the step id.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(transparent)]
pub struct Seed(pub u64);

/// A step's failure: the run stops (built-in steps) or the step is marked failed (plugins).
#[derive(Debug, Clone, thiserror::Error, PartialEq, Eq)]
#[error("{message}")]
pub struct StepError {
    /// What went wrong, for the reader.
    pub message: String,
}

impl StepError {
    /// An error with the given message.
    pub fn new(message: impl Into<String>) -> StepError {
        StepError { message: message.into() }
    }
}

impl From<crate::output::TableError> for StepError {
    fn from(e: crate::output::TableError) -> Self {
        StepError::new(format!("internal table error: {e}"))
    }
}

/// What the population sheet says about one population.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct PopulationInfo {
    /// Population name as in the genotype data.
    pub population: String,
    /// A display label.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    /// Census size (adults).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub census_size: Option<f64>,
    /// Year of the census.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub census_year: Option<i32>,
    /// Latitude, decimal degrees WGS84.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub latitude: Option<f64>,
    /// Longitude, decimal degrees WGS84.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub longitude: Option<f64>,
    /// Area in km².
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub area_km2: Option<f64>,
}

/// Whether a sample holds one cohort (animals born in the same breeding season) or several.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "lowercase")]
pub enum Cohorts {
    /// One cohort: an LD estimate then describes the effective number of breeders that
    /// produced it (Nb), not Ne per generation.
    Single,
    /// Animals of several ages, as with overlapping generations.
    Mixed,
}

/// How the animals were sampled: the recipe's optional `[sampling]` table. Every field is
/// optional; the document says "not stated" for a missing one.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SamplingInfo {
    /// Life stage sampled, in words (`adults at breeding ponds`, `larvae`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub life_stage: Option<String>,
    /// Tissue taken (`tail tip`, `buccal swab`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tissue: Option<String>,
    /// Whether sampling killed the animals.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lethal: Option<bool>,
    /// One cohort or mixed ages per sample.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cohorts: Option<Cohorts>,
}

/// The assessment's own facts from the recipe, as steps and the report see them.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct AssessmentInfo {
    /// Document title.
    pub title: String,
    /// Species assessed.
    pub species: String,
    /// Person responsible.
    pub assessor: String,
    /// Organisation.
    pub organisation: String,
    /// Assessment date, ISO 8601 (`YYYY-MM-DD`).
    pub date: String,
    /// Generation time in years, when given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub generation_time_years: Option<f64>,
    /// Where the generation time comes from (a reference or a note), when given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub generation_time_source: Option<String>,
    /// How the animals were sampled (`[sampling]` of the recipe), when the recipe says.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sampling: Option<SamplingInfo>,
    /// Master seed.
    pub seed: u64,
    /// Ne thresholds, ascending.
    pub thresholds: Vec<f64>,
    /// Rows of the population sheet, sorted by population.
    #[serde(default)]
    pub populations: Vec<PopulationInfo>,
}

/// Whether a step produced its results.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "lowercase")]
pub enum StepStatus {
    /// The step ran and its results are complete.
    Ok,
    /// The step failed; `error` says why and the tables are empty.
    Failed,
}

/// One step's results as they appear in `results.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct StepResult {
    /// The recipe's step id.
    pub id: String,
    /// The step's `uses` name.
    pub uses: String,
    /// The step's version.
    pub version: String,
    /// Whether it produced results.
    pub status: StepStatus,
    /// Why it failed, when it did.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
    /// Named tables.
    pub tables: BTreeMap<String, Table>,
    /// Findings.
    pub findings: Vec<Finding>,
    /// References.
    pub citations: Vec<String>,
    /// What the step excluded from later steps.
    #[serde(default, skip_serializing_if = "Filter::is_empty")]
    pub exclusions: Filter,
}

impl StepResult {
    /// Wraps a step's output.
    pub fn from_output(id: &str, descriptor: &Descriptor, output: StepOutput) -> StepResult {
        StepResult {
            id: id.into(),
            uses: descriptor.uses.clone(),
            version: descriptor.version.clone(),
            status: StepStatus::Ok,
            error: None,
            tables: output.tables,
            findings: output.findings,
            citations: output.citations,
            exclusions: output.filter,
        }
    }
}

/// Everything a step is given: a read-only view of the data in play, its resolved parameters,
/// its seed, the results of earlier steps and the assessment facts.
#[derive(Debug, Clone, Copy)]
pub struct StepContext<'a> {
    /// The samples and loci still in play.
    pub view: GenotypeView<'a>,
    /// Resolved parameters (defaults filled in).
    pub params: &'a Params,
    /// This step's seed.
    pub seed: Seed,
    /// Results of the steps that ran before, in recipe order.
    pub earlier: &'a [StepResult],
    /// Facts from the recipe and the population sheet.
    pub assessment: &'a AssessmentInfo,
    /// Findings the readers made while loading the data (bad cells and the like).
    pub input_findings: &'a [Finding],
}

/// The assessment facts of a context built with [`StepContext::new`]: all empty.
static NO_ASSESSMENT: AssessmentInfo = AssessmentInfo {
    title: String::new(),
    species: String::new(),
    assessor: String::new(),
    organisation: String::new(),
    date: String::new(),
    generation_time_years: None,
    generation_time_source: None,
    sampling: None,
    seed: 0,
    thresholds: Vec::new(),
    populations: Vec::new(),
};

impl<'a> StepContext<'a> {
    /// A context over `view` with resolved `params` (`Descriptor::resolve`) and `seed`, no
    /// earlier results, empty assessment facts and no reader findings: what a step's own tests
    /// and benchmarks need. Add the rest with [`StepContext::with_earlier`],
    /// [`StepContext::with_assessment`] and [`StepContext::with_input_findings`].
    pub fn new(view: GenotypeView<'a>, params: &'a Params, seed: Seed) -> StepContext<'a> {
        StepContext { view, params, seed, earlier: &[], assessment: &NO_ASSESSMENT, input_findings: &[] }
    }

    /// The same context with the results of earlier steps.
    #[must_use]
    pub fn with_earlier(self, earlier: &'a [StepResult]) -> StepContext<'a> {
        StepContext { earlier, ..self }
    }

    /// The same context with these assessment facts (generation time, thresholds, sheets).
    #[must_use]
    pub fn with_assessment(self, assessment: &'a AssessmentInfo) -> StepContext<'a> {
        StepContext { assessment, ..self }
    }

    /// The same context with the findings the readers made.
    #[must_use]
    pub fn with_input_findings(self, input_findings: &'a [Finding]) -> StepContext<'a> {
        StepContext { input_findings, ..self }
    }
}

impl StepContext<'_> {
    /// Deserialises the resolved parameters into a step's own `Params` struct.
    ///
    /// # Errors
    /// A [`StepError`] when they do not fit (a mismatch between a descriptor and its struct).
    pub fn params_as<P: DeserializeOwned>(&self) -> Result<P, StepError> {
        let object: serde_json::Map<String, serde_json::Value> =
            self.params.iter().map(|(k, v)| (k.clone(), v.clone())).collect();
        serde_json::from_value(serde_json::Value::Object(object))
            .map_err(|e| StepError::new(format!("parameters do not match the step's declaration: {e}")))
    }

    /// The earlier result with the given `uses` name (the last one when there are several).
    pub fn earlier_by_uses(&self, uses: &str) -> Option<&StepResult> {
        self.earlier.iter().rev().find(|r| r.uses == uses)
    }
}

/// A step: built-in or external, the engine cannot tell them apart.
pub trait Step: Send + Sync {
    /// What the step is and which parameters it takes.
    fn descriptor(&self) -> Descriptor;

    /// Runs the step.
    ///
    /// # Errors
    /// A [`StepError`] when the step cannot produce results at all; problems with parts of the
    /// data are findings, not errors.
    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError>;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{AlleleCode, GenotypeMatrix, LocusMeta, SampleMeta};

    /// Common practice for a builder: `new` gives the empty parts, each `with_*` sets its own.
    #[test]
    fn a_context_is_built_from_a_view_parameters_and_a_seed() {
        let samples = vec![SampleMeta { id: "s1".into(), population: "A".into(), year: 2020 }];
        let loci = vec![LocusMeta { name: "L1".into(), alleles: vec!["1".into()], chromosome: None, position: None }];
        let matrix = GenotypeMatrix::new(samples, loci, vec![AlleleCode(1); 2]).unwrap();
        let (s, l) = (matrix.all_sample_indices(), matrix.all_locus_indices());
        let params = Params::new();
        let ctx = StepContext::new(matrix.full_view(&s, &l), &params, Seed(9));
        assert_eq!(ctx.seed, Seed(9));
        assert!(ctx.earlier.is_empty() && ctx.input_findings.is_empty());
        assert_eq!(ctx.assessment, &AssessmentInfo::default());
        let facts = AssessmentInfo { title: "T".into(), ..AssessmentInfo::default() };
        let findings = [Finding::info("x", "note", crate::Where::default())];
        let ctx = ctx.with_assessment(&facts).with_input_findings(&findings);
        assert_eq!(ctx.assessment.title, "T");
        assert_eq!(ctx.input_findings.len(), 1);
        assert_eq!(ctx.view.n_samples(), 1);
    }
}
