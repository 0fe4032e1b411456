//! Runs a recipe's steps in order over the loaded data.
//!
//! Each step sees a read-only view of the samples and loci still in play, its resolved
//! parameters, its derived seed and the results of the steps before it. A step's filter
//! narrows the view for every later step; the exclusions stay listed in its results.

use std::collections::{BTreeSet, HashMap};

use popgauge_abi::{AssessmentInfo, Filter, GenotypeView, Seed, StepContext, StepResult, StepStatus};

use crate::data::LoadedData;
use crate::dates::now_rfc3339_millis;
use crate::host::PluginRecord;
use crate::progress::Progress;
use crate::hash::{derive_seed, hash_canonical};
use crate::recipe::Recipe;

/// What the engine records about one step for the provenance record.
#[derive(Debug, Clone, PartialEq)]
pub struct StepRun {
    /// Step id.
    pub id: String,
    /// `uses` name.
    pub uses: String,
    /// Step version.
    pub version: String,
    /// Resolved parameters.
    pub params: popgauge_abi::Params,
    /// SHA-256 of the canonical parameters.
    pub params_sha256: String,
    /// Derived seed.
    pub seed: Seed,
    /// SHA-256 of the canonical result.
    pub result_sha256: String,
    /// The library, hash and descriptor of an external plugin step.
    pub plugin: Option<PluginRecord>,
    /// When the step started (RFC 3339 UTC, milliseconds); in no hash.
    pub started: String,
    /// When it ended.
    pub ended: String,
}

const DEFECT_HELP: &str = "this is a defect in the step; report it to its author";

/// The result of an external step that failed: no tables, the reason in `error`.
fn failed_result(id: &str, descriptor: &popgauge_abi::Descriptor, message: String) -> StepResult {
    let mut result = StepResult::from_output(id, descriptor, popgauge_abi::StepOutput::default());
    result.status = StepStatus::Failed;
    result.error = Some(message);
    result
}

/// All the engine produced.
#[derive(Debug, Clone)]
pub struct EngineOutput {
    /// The assessment facts steps saw (recipe plus population sheet).
    pub assessment: AssessmentInfo,
    /// Results of each step, in recipe order.
    pub results: Vec<StepResult>,
    /// What provenance needs of each step.
    pub runs: Vec<StepRun>,
}

/// Why the run stopped.
#[derive(Debug, thiserror::Error)]
pub enum EngineError {
    /// A step could not produce results.
    #[error("case.toml:{line}: step \"{id}\" (uses \"{uses}\") failed: {message}\n  help: {help}")]
    StepFailed {
        /// Step id.
        id: String,
        /// `uses` name.
        uses: String,
        /// Recipe line of the step.
        line: usize,
        /// The step's message.
        message: String,
        /// How to proceed.
        help: String,
    },
}

/// Runs every step of `recipe` over `data`.
///
/// A built-in step that fails stops the run. An external plugin step that fails (an error, a
/// panic, a crash, its time limit, invalid or ragged output, a filter naming unknown data) is
/// recorded with `status: failed` and the reason, and the run goes on without it.
///
/// # Errors
/// [`EngineError::StepFailed`] when a built-in step returns an error or an unusable result.
pub fn run_steps(recipe: &Recipe, data: &LoadedData, progress: &mut dyn Progress) -> Result<EngineOutput, EngineError> {
    let mut assessment = recipe.assessment.clone();
    assessment.populations = data.populations.clone();
    let mut active = ActiveSet::all(data);
    let mut results: Vec<StepResult> = Vec::with_capacity(recipe.steps.len());
    let mut runs = Vec::with_capacity(recipe.steps.len());
    let total = recipe.steps.len();
    for (index, planned) in recipe.steps.iter().enumerate() {
        progress.stage(index + 1, total, &format!("{} ({})", planned.id, planned.uses));
        let fail = |message: String, help: &str| {
            // A step's message may carry its own, more specific, help line.
            let (message, help) = match message.split_once("\n  help: ") {
                Some((message, own)) => (message.to_string(), own.to_string()),
                None => (message, help.to_string()),
            };
            EngineError::StepFailed { id: planned.id.clone(), uses: planned.uses.clone(), line: planned.line, message, help }
        };
        let seed = derive_seed(assessment.seed, &planned.id);
        let ctx = StepContext {
            view: GenotypeView::new(&data.matrix, &active.samples, &active.loci),
            params: &planned.params,
            seed,
            earlier: &results,
            assessment: &assessment,
            input_findings: &data.findings,
        };
        let descriptor = planned.step.descriptor();
        let started = now_rfc3339_millis();
        let outcome = planned.step.run(&ctx).map_err(|e| {
            (e.message, "check the step's findings and parameters; a step that cannot run on these data stops the assessment")
        });
        let outcome = outcome.and_then(|output| {
            for (name, table) in &output.tables {
                table.check_rectangular().map_err(|e| (format!("table `{name}`: {e}"), DEFECT_HELP))?;
            }
            // `apply` changes nothing when the filter names unknown samples or loci.
            active.apply(&data.matrix, &output.filter).map_err(|e| (e, DEFECT_HELP))?;
            Ok(output)
        });
        let result = match outcome {
            Ok(output) => StepResult::from_output(&planned.id, &descriptor, output),
            // An external step's failure (error, panic, crash, time limit, bad output) is
            // recorded and the assessment goes on; the report marks the step failed.
            Err((message, _)) if planned.plugin.is_some() => failed_result(&planned.id, &descriptor, message),
            Err((message, help)) => return Err(fail(message, help)),
        };
        runs.push(StepRun {
            id: planned.id.clone(),
            uses: planned.uses.clone(),
            version: descriptor.version.clone(),
            params: planned.params.clone(),
            params_sha256: hash_canonical(&planned.params).unwrap_or_default(),
            seed,
            result_sha256: hash_canonical(&result).unwrap_or_default(),
            plugin: planned.plugin.clone(),
            started,
            ended: now_rfc3339_millis(),
        });
        results.push(result);
    }
    Ok(EngineOutput { assessment, results, runs })
}

/// The matrix indices of the samples and loci still in play.
struct ActiveSet {
    samples: Vec<usize>,
    loci: Vec<usize>,
}

impl ActiveSet {
    fn all(data: &LoadedData) -> ActiveSet {
        ActiveSet { samples: data.matrix.all_sample_indices(), loci: data.matrix.all_locus_indices() }
    }

    fn apply(&mut self, matrix: &popgauge_abi::GenotypeMatrix, filter: &Filter) -> Result<(), String> {
        let sample_index: HashMap<&str, usize> = matrix.samples().iter().enumerate().map(|(i, s)| (s.id.as_str(), i)).collect();
        let locus_index: HashMap<&str, usize> = matrix.loci().iter().enumerate().map(|(i, l)| (l.name.as_str(), i)).collect();
        let drop_samples = names_to_indices(&filter.samples, &sample_index, "sample")?;
        let drop_loci = names_to_indices(&filter.loci, &locus_index, "locus")?;
        self.samples.retain(|i| !drop_samples.contains(i));
        self.loci.retain(|i| !drop_loci.contains(i));
        Ok(())
    }
}

fn names_to_indices(
    exclusions: &[popgauge_abi::Exclusion],
    index: &HashMap<&str, usize>,
    kind: &str,
) -> Result<BTreeSet<usize>, String> {
    exclusions
        .iter()
        .map(|e| index.get(e.name.as_str()).copied().ok_or_else(|| format!("its filter names {kind} \"{}\", which the data do not have", e.name)))
        .collect()
}
