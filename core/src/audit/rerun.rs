//! Re-running a recorded case: every step with its recorded parameters and seed, a plugin step
//! whose code is not trusted replaced by its recorded result, and, to find what depends on it,
//! the same run with that step left out.

use std::collections::BTreeMap;
use std::sync::Arc;

use popgauge_abi::{Descriptor, Step, StepContext, StepError, StepOutput, StepResult, StepStatus};

use crate::engine::{EngineOutput, run_steps};
use crate::hash::{derive_seed, hash_canonical};
use crate::host::{PluginTrust, not_trusted};
use crate::pipeline::LoadedCase;
use crate::progress::Progress;
use crate::provenance::record::{ProvenanceRecord, StepEntry};
use crate::results::ResultsDocument;

use super::*;

/// The steps re-run: with the recorded results of withheld plugin steps standing in (`engine`),
/// and, when any step was withheld, once more without them (`without`), to tell which later
/// steps and outputs depend on them.
pub(super) struct Rerun {
    pub(super) case: LoadedCase,
    pub(super) engine: EngineOutput,
    pub(super) without: Option<EngineOutput>,
    /// Withheld step id → why it was not run.
    pub(super) withheld: BTreeMap<String, String>,
}

/// A withheld plugin step's recorded result, given back as its output when the engine runs it.
pub(super) struct RecordedStep {
    pub(super) descriptor: Descriptor,
    pub(super) result: Option<StepResult>,
    pub(super) why: String,
}

impl Step for RecordedStep {
    fn descriptor(&self) -> Descriptor {
        self.descriptor.clone()
    }

    fn run(&self, _ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        match &self.result {
            Some(result) if result.status == StepStatus::Ok => Ok(StepOutput {
                tables: result.tables.clone(),
                findings: result.findings.clone(),
                citations: result.citations.clone(),
                filter: result.exclusions.clone(),
            }),
            Some(result) => Err(StepError::new(result.error.clone().unwrap_or_default())),
            None => Err(StepError::new(format!(
                "not run: {}, and results.json holds no copy of its recorded result",
                self.why
            ))),
        }
    }
}

/// Re-runs the steps with the recorded parameters and master seed; withheld plugin steps give
/// their recorded results (when `results.json` holds them unchanged).
pub(super) fn rerun(
    record: &ProvenanceRecord,
    mut case: LoadedCase,
    trust: &PluginTrust,
    on_disk: Option<&ResultsDocument>,
    report: &mut VerifyReport,
    progress: &mut dyn Progress,
) -> Option<Rerun> {
    case.recipe.assessment.seed = record.assessment.seed;
    case.recipe.assessment.date = record.assessment.date.clone();
    let recipe_ids: Vec<&str> = case.recipe.steps.iter().map(|s| s.id.as_str()).collect();
    let record_ids: Vec<&str> = record.steps.iter().map(|s| s.id.as_str()).collect();
    if recipe_ids != record_ids {
        report.push(
            "record",
            "steps",
            Verdict::Differs(format!(
                "the recipe's steps are {recipe_ids:?} but the record's are {record_ids:?}; the recipe's are re-run"
            )),
        );
    }
    for planned in &mut case.recipe.steps {
        let Some(entry) = record.steps.iter().find(|e| e.id == planned.id) else { continue };
        let descriptor = planned.step.descriptor();
        if let Some(problem) = recorded_params_problem(entry, &planned.uses) {
            report.push("record", format!("{} parameters", entry.id), Verdict::Differs(problem));
        }
        match descriptor.resolve(&entry.params) {
            Ok(params) => planned.params = params,
            Err(e) => report.push(
                "record",
                format!("{} parameters", entry.id),
                Verdict::Differs(format!("the recorded parameters are not valid: {e}")),
            ),
        }
        if derive_seed(record.assessment.seed, &entry.id).0 != entry.seed {
            report.push(
                "record",
                format!("{} seed", entry.id),
                Verdict::Differs(format!(
                    "recorded seed {} is not the one derived from the master seed {}",
                    entry.seed, record.assessment.seed
                )),
            );
        }
    }
    let withheld = withhold(record, &mut case, trust, on_disk, report);
    let without = if withheld.is_empty() {
        None
    } else {
        // The case's recipe still holds the withheld steps as they were loaded (never run).
        let mut recipe = case.recipe.clone();
        for planned in &mut recipe.steps {
            if let Some(w) = withheld.get(&planned.id) {
                planned.step = Arc::clone(&w.original);
            }
        }
        Some(recipe)
    };
    let outcome = run_steps(&case.recipe, &case.data, progress).and_then(|engine| {
        let without = match &without {
            Some(recipe) => Some(run_steps(recipe, &case.data, progress)?),
            None => None,
        };
        Ok((engine, without))
    });
    match outcome {
        Ok((engine, without)) => {
            Some(Rerun { case, engine, without, withheld: withheld.into_iter().map(|(id, w)| (id, w.why)).collect() })
        }
        Err(e) => {
            report.push("step", "re-run", Verdict::Differs(format!("the steps could not be re-run: {e}")));
            None
        }
    }
}

/// A withheld step: why, and its step as loaded (never run), for the run without it.
pub(super) struct Withheld {
    pub(super) why: String,
    pub(super) original: Arc<dyn Step>,
}

/// Puts the recorded result in place of each plugin step whose library is not trusted, and
/// lists those steps in the report.
pub(super) fn withhold(
    record: &ProvenanceRecord,
    case: &mut LoadedCase,
    trust: &PluginTrust,
    on_disk: Option<&ResultsDocument>,
    report: &mut VerifyReport,
) -> BTreeMap<String, Withheld> {
    let mut withheld = BTreeMap::new();
    for planned in &mut case.recipe.steps {
        let Some(plugin) = planned.plugin.as_ref().filter(|p| !trust.admits(&p.sha256)) else { continue };
        let why = not_trusted(&plugin.sha256);
        let recorded = record.steps.iter().find(|e| e.id == planned.id).and_then(|entry| {
            on_disk?
                .steps
                .iter()
                .find(|s| s.id == entry.id)
                .filter(|s| hash_canonical(s).is_ok_and(|h| h == entry.result_sha256))
                .cloned()
        });
        report.withheld.push(WithheldStep {
            id: planned.id.clone(),
            library: plugin.path.clone(),
            sha256: plugin.sha256.clone(),
        });
        let stand_in = RecordedStep { descriptor: planned.step.descriptor(), result: recorded, why: why.clone() };
        let original = std::mem::replace(&mut planned.step, Arc::new(stand_in));
        withheld.insert(planned.id.clone(), Withheld { why, original });
    }
    withheld
}

/// `uses` is the recipe's (for a plugin step `plugin:PATH`, as the record stores it).
pub(super) fn recorded_params_problem(entry: &StepEntry, uses: &str) -> Option<String> {
    let hash = hash_canonical(&entry.params).unwrap_or_default();
    if hash != entry.params_sha256 {
        return Some(format!(
            "parameter changed: the recorded parameters hash to {} but the record says {}",
            short(&hash),
            short(&entry.params_sha256)
        ));
    }
    if uses != entry.uses {
        return Some(format!("step uses \"{uses}\" in the recipe but \"{}\" in the record", entry.uses));
    }
    None
}
