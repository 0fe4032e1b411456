//! One assessment from case folder to output folder: recipe → data → steps → files.

use std::path::{Path, PathBuf};

use popgauge_abi::{Finding, FindingLevel};

use crate::data::{DataError, LoadedData, load_data};
use crate::dates::now_rfc3339;
use crate::engine::{EngineError, EngineOutput, run_steps};
use crate::output::{OutputError, OutputFiles, check_target, write_folder};
use crate::progress::Progress;
use crate::provenance::hash::{FileDigest, digest_bytes, sha256_hex};
use crate::provenance::record::{
    AssessmentEntry, FileEntry, PROVENANCE_SCHEMA, ProvenanceRecord, RunEntry, StepEntry, ToolBuild,
};
use crate::recipe::{InputFile, Recipe, RecipeError, load_recipe};
use crate::results::ResultsDocument;

/// Why an assessment did not complete.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The recipe.
    #[error(transparent)]
    Recipe(#[from] RecipeError),
    /// The data files.
    #[error(transparent)]
    Data(#[from] DataError),
    /// A step.
    #[error(transparent)]
    Engine(#[from] EngineError),
    /// The output folder.
    #[error(transparent)]
    Output(#[from] OutputError),
}

/// How to run.
#[derive(Debug, Clone)]
pub struct RunOptions {
    /// Output folder; default `CASE/out`.
    pub out: Option<PathBuf>,
    /// Replace an existing output folder.
    pub force: bool,
    /// Let data paths leave the case folder.
    pub allow_outside: bool,
}

/// What a completed run produced.
#[derive(Debug)]
pub struct RunSummary {
    /// The output folder written.
    pub out: PathBuf,
    /// The results.
    pub results: ResultsDocument,
    /// The provenance record.
    pub provenance: ProvenanceRecord,
}

impl RunSummary {
    /// Findings of the given level or worse, over data and steps.
    pub fn findings_at_least(&self, level: FindingLevel) -> Vec<&Finding> {
        self.results
            .data
            .findings
            .iter()
            .chain(self.results.steps.iter().flat_map(|s| s.findings.iter()))
            .filter(|f| f.level >= level)
            .collect()
    }
}

/// The recipe and data of a case, checked and loaded, without running any step.
#[derive(Debug)]
pub struct LoadedCase {
    /// The resolved recipe.
    pub recipe: Recipe,
    /// The data.
    pub data: LoadedData,
    /// Digest of the recipe bytes.
    pub recipe_digest: FileDigest,
}

/// Loads and checks a case (recipe and data).
///
/// # Errors
/// [`RunError::Recipe`] or [`RunError::Data`].
pub fn load_case(case_dir: &Path, allow_outside: bool) -> Result<LoadedCase, RunError> {
    let recipe = load_recipe(case_dir, allow_outside)?;
    let recipe_bytes = std::fs::read(&recipe.recipe_file.path).map_err(|source| RecipeError::Unreadable {
        path: recipe.recipe_file.path.display().to_string(),
        source,
    })?;
    let data = load_data(&recipe)?;
    Ok(LoadedCase { recipe, data, recipe_digest: digest_bytes(&recipe_bytes) })
}

/// Runs the assessment of `case_dir` and writes the output folder.
///
/// # Errors
/// A [`RunError`]; nothing is written unless the run completes.
pub fn run_case(case_dir: &Path, options: &RunOptions, progress: &mut dyn Progress) -> Result<RunSummary, RunError> {
    let started = now_rfc3339();
    let out = options.out.clone().unwrap_or_else(|| case_dir.join("out"));
    let case = load_case(case_dir, options.allow_outside)?;
    let input_paths: Vec<&Path> = case.recipe.input_files().iter().map(|f| f.path.as_path()).collect();
    check_target(&out, options.force, case_dir, &input_paths)?;
    let engine = run_steps(&case.recipe, &case.data, progress)?;
    let results = ResultsDocument::new(&case.recipe.data.genotypes.relative, &case.data, &engine);
    let mut files = output_files(&results);
    let provenance = provenance_record(&case, &engine, &files, started);
    files.push(("provenance.json".into(), pretty_json(&provenance)));
    write_folder(&out, &files, options.force)?;
    Ok(RunSummary { out, results, provenance })
}

fn pretty_json<T: serde::Serialize>(value: &T) -> Vec<u8> {
    // popgauge's own result types always serialise; an empty file would be caught by verify.
    let mut bytes = serde_json::to_vec_pretty(value).unwrap_or_default();
    bytes.push(b'\n');
    bytes
}

fn output_files(results: &ResultsDocument) -> OutputFiles {
    let mut files = vec![("results.json".to_string(), pretty_json(results))];
    files.extend(results.table_files());
    files
}

fn file_entry(file: &InputFile, digest: &FileDigest) -> FileEntry {
    FileEntry { role: file.role.clone(), path: file.relative.clone(), size: digest.size, sha256: digest.sha256.clone() }
}

fn provenance_record(case: &LoadedCase, engine: &EngineOutput, files: &OutputFiles, started: String) -> ProvenanceRecord {
    let recipe = &case.recipe;
    let outputs = files
        .iter()
        .map(|(path, bytes)| FileEntry {
            role: if path.starts_with("tables/") { "table" } else { "results" }.into(),
            path: path.clone(),
            size: bytes.len() as u64,
            sha256: sha256_hex(bytes),
        })
        .collect();
    let steps = engine
        .runs
        .iter()
        .map(|run| StepEntry {
            id: run.id.clone(),
            uses: run.uses.clone(),
            version: run.version.clone(),
            plugin_sha256: None,
            params: run.params.clone(),
            params_sha256: run.params_sha256.clone(),
            seed: run.seed.0,
            result_sha256: run.result_sha256.clone(),
        })
        .collect();
    ProvenanceRecord {
        schema: PROVENANCE_SCHEMA.into(),
        tool: ToolBuild::current(),
        assessment: AssessmentEntry {
            title: recipe.assessment.title.clone(),
            date: recipe.assessment.date.clone(),
            date_defaulted: recipe.date_defaulted,
            seed: recipe.assessment.seed,
        },
        run: RunEntry { started, ended: now_rfc3339() },
        recipe: file_entry(&recipe.recipe_file, &case.recipe_digest),
        inputs: case.data.digests.iter().map(|(file, digest)| file_entry(file, digest)).collect(),
        steps,
        outputs,
    }
}
