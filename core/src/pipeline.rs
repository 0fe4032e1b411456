//! One assessment from case folder to output folder: recipe → data → steps → files.

use std::path::{Path, PathBuf};

use rayon::prelude::*;

use popgauge_abi::{Finding, FindingLevel};

use crate::data::{DataError, LoadedData, load_data};
use crate::dates::now_rfc3339;
use crate::engine::{EngineError, EngineOutput, run_steps};
use crate::host::PluginTrust;
use crate::output::{OutputError, OutputFiles, check_target, write_folder};
use crate::progress::Progress;
use crate::hash::{FileDigest, digest_bytes, hash_canonical, sha256_hex};
use crate::provenance::prov::ProvDocument;
use crate::provenance::record::{
    AssessmentEntry, FileEntry, PROVENANCE_SCHEMA, PluginEntry, ProvenanceRecord, RunEntry, StepEntry, ToolBuild,
};
use crate::recipe::{InputFile, Recipe, RecipeError, load_recipe_trusting};
use crate::report::template::Template;
use crate::report::{FileFacts, ReportError, ReportSource};
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
    /// The document (template or typesetting).
    #[error(transparent)]
    Report(#[from] ReportError),
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
    /// Who ran the assessment, for the provenance record.
    pub operator: Option<String>,
    /// Which plugin libraries may be loaded (default: every one the recipe pins).
    pub trust: PluginTrust,
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
        self.results.distinct_findings().into_iter().map(|(_, f)| f).filter(|f| f.level >= level).collect()
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
    /// The document template (its files are also listed, hashed, among the data's inputs).
    pub template: Template,
}

/// Loads and checks a case (recipe and data), reporting reading progress.
///
/// # Errors
/// [`RunError::Recipe`] or [`RunError::Data`].
pub fn load_case(case_dir: &Path, allow_outside: bool, progress: &mut dyn Progress) -> Result<LoadedCase, RunError> {
    load_case_trusting(case_dir, allow_outside, &PluginTrust::default(), progress)
}

/// Loads and checks a case, loading only the plugin libraries `trust` admits.
///
/// # Errors
/// [`RunError::Recipe`] or [`RunError::Data`].
pub fn load_case_trusting(
    case_dir: &Path,
    allow_outside: bool,
    trust: &PluginTrust,
    progress: &mut dyn Progress,
) -> Result<LoadedCase, RunError> {
    let recipe = load_recipe_trusting(case_dir, allow_outside, trust)?;
    let recipe_bytes = std::fs::read(&recipe.recipe_file.path)
        .map_err(|source| RecipeError::Unreadable { path: recipe.recipe_file.path.display().to_string(), source })?;
    let mut data = load_data(&recipe, progress)?;
    let template = load_template(&recipe)?;
    data.digests.extend(template_digests(&recipe, &template));
    Ok(LoadedCase { recipe, data, recipe_digest: digest_bytes(&recipe_bytes), template })
}

/// The recipe's template: the standard one, or the case's template folder read into memory.
fn load_template(recipe: &Recipe) -> Result<Template, ReportError> {
    match &recipe.report.template_dir {
        None => Ok(Template::standard()),
        Some(dir) => Template::from_folder(dir, &recipe.report.template, &|_| false),
    }
}

/// A custom template's files as inputs (role `template`), so the provenance record hashes them.
fn template_digests(recipe: &Recipe, template: &Template) -> Vec<(InputFile, FileDigest)> {
    let Some(dir) = &recipe.report.template_dir else { return Vec::new() };
    let folder = recipe.report.template.trim_end_matches('/');
    template
        .files
        .iter()
        .map(|(name, bytes)| {
            let file =
                InputFile { role: "template".into(), relative: format!("{folder}/{name}"), path: dir.join(name) };
            (file, digest_bytes(bytes))
        })
        .collect()
}

/// The case fingerprint printed on the document: the first 16 hex digits of SHA-256 over the
/// canonical JSON of the recipe hash, the input hashes and the step-result hashes. It
/// identifies inputs and results (the PDF's own hash cannot be inside the PDF).
pub fn assessment_fingerprint(case: &LoadedCase, engine: &EngineOutput) -> String {
    let facts = serde_json::json!({
        "recipe": case.recipe_digest.sha256,
        "inputs": case.data.digests.iter().map(|(file, digest)| serde_json::json!({"path": file.relative, "sha256": digest.sha256})).collect::<Vec<_>>(),
        "results": engine.runs.iter().map(|run| serde_json::json!({"step": run.id, "sha256": run.result_sha256})).collect::<Vec<_>>(),
    });
    let digest = hash_canonical(&facts).unwrap_or_default();
    digest.chars().take(16).collect()
}

/// Runs the assessment of `case_dir` and writes the output folder.
///
/// # Errors
/// A [`RunError`]; nothing is written unless the run completes.
pub fn run_case(case_dir: &Path, options: &RunOptions, progress: &mut dyn Progress) -> Result<RunSummary, RunError> {
    let started = now_rfc3339();
    let out = options.out.clone().unwrap_or_else(|| case_dir.join("out"));
    let case = load_case_trusting(case_dir, options.allow_outside, &options.trust, progress)?;
    let input_paths: Vec<&Path> = case.recipe.input_files().iter().map(|f| f.path.as_path()).collect();
    check_target(&out, options.force, case_dir, &input_paths)?;
    let mut engine = run_steps(&case.recipe, &case.data, progress)?;
    progress.task("typesetting the assessment");
    // The step results move into the results document (the large tables are not copied).
    let steps = std::mem::take(&mut engine.results);
    let (results, mut files) = render_results(&case, &engine, steps)?;
    let case_folder = relative_path(&absolute_path(&out), &absolute_path(case_dir));
    let provenance = provenance_record(
        &case,
        &engine,
        &files,
        RunFacts { started, case_folder, operator: options.operator.clone() },
    );
    files.push(("provenance.json".into(), pretty_json(&provenance)));
    write_folder(&out, &files, options.force)?;
    progress.finish();
    Ok(RunSummary { out, results, provenance })
}

fn pretty_json<T: serde::Serialize>(value: &T) -> Vec<u8> {
    // popgauge's own result types always serialise; an empty file would be caught by verify.
    crate::pretty::to_json_bytes(value).unwrap_or_default()
}

/// Every output file except `provenance.json`, from a case and its step results.
///
/// `popgauge verify` regenerates the outputs with this same function, so whatever `run` writes
/// (results, tables, document, figures) is added here and nowhere else.
///
/// # Errors
/// [`RunError::Report`] when the document cannot be typeset (a custom template that does not
/// compile, named by file and line).
pub fn render_outputs(case: &LoadedCase, engine: &EngineOutput) -> Result<(ResultsDocument, OutputFiles), RunError> {
    render_results(case, engine, engine.results.clone())
}

/// [`render_outputs`] with the step results given by value (`engine.results` is not read).
fn render_results(
    case: &LoadedCase,
    engine: &EngineOutput,
    steps: Vec<popgauge_abi::StepResult>,
) -> Result<(ResultsDocument, OutputFiles), RunError> {
    let results =
        ResultsDocument::with_steps(&case.recipe.data.genotypes.relative, &case.data, &engine.assessment, steps);
    // The results file and tables, and the document, depend only on `results`: made side by
    // side (the document's typesetting is single-threaded).
    let (mut files, document) = rayon::join(
        || {
            let mut files = vec![(crate::results::RESULTS_FILE.to_string(), pretty_json(&results))];
            files.extend(results.table_files());
            files
        },
        || render_document(case, engine, &results),
    );
    files.extend(document?);
    Ok((results, files))
}

/// The document's files (PDF, figures, document data) from the results.
fn render_document(
    case: &LoadedCase,
    engine: &EngineOutput,
    results: &ResultsDocument,
) -> Result<OutputFiles, RunError> {
    let fingerprint = assessment_fingerprint(case, engine);
    let facts = |file: &InputFile, digest: &FileDigest| FileFacts {
        role: file.role.clone(),
        path: file.relative.clone(),
        size: digest.size,
        sha256: digest.sha256.clone(),
    };
    let source = ReportSource {
        results,
        runs: &engine.runs,
        recipe: facts(&case.recipe.recipe_file, &case.recipe_digest),
        inputs: case.data.digests.iter().map(|(file, digest)| facts(file, digest)).collect(),
        fingerprint: &fingerprint,
        map: case.recipe.report.map,
    };
    Ok(crate::report::render(&source, &case.template)?.into_files())
}

/// The run facts that are not in the case: when, where, by whom.
struct RunFacts {
    started: String,
    case_folder: String,
    operator: Option<String>,
}

pub(crate) fn absolute_path(path: &Path) -> PathBuf {
    path.canonicalize().unwrap_or_else(|_| std::env::current_dir().unwrap_or_default().join(path))
}

/// `to` relative to `from` (both absolute), e.g. `..` for a case folder holding `out/`.
pub(crate) fn relative_path(from: &Path, to: &Path) -> String {
    let from: Vec<_> = from.components().collect();
    let to: Vec<_> = to.components().collect();
    let common = from.iter().zip(&to).take_while(|(a, b)| a == b).count();
    let mut parts: Vec<String> = vec!["..".to_string(); from.len() - common];
    parts.extend(to[common..].iter().map(|c| c.as_os_str().to_string_lossy().into_owned()));
    if parts.is_empty() { ".".to_string() } else { parts.join("/") }
}

fn file_entry(file: &InputFile, digest: &FileDigest) -> FileEntry {
    FileEntry { role: file.role.clone(), path: file.relative.clone(), size: digest.size, sha256: digest.sha256.clone() }
}

fn provenance_record(
    case: &LoadedCase,
    engine: &EngineOutput,
    files: &OutputFiles,
    facts: RunFacts,
) -> ProvenanceRecord {
    let recipe = &case.recipe;
    let outputs = files
        .par_iter()
        .map(|(path, bytes)| FileEntry {
            role: crate::report::output_role(path)
                .unwrap_or(if path.starts_with("tables/") { "table" } else { "results" })
                .into(),
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
            plugin_sha256: run.plugin.as_ref().map(|p| p.sha256.clone()),
            plugin: run.plugin.as_ref().map(PluginEntry::from_record),
            params: run.params.clone(),
            params_sha256: run.params_sha256.clone(),
            seed: run.seed.0,
            result_sha256: run.result_sha256.clone(),
            started: run.started.clone(),
            ended: run.ended.clone(),
        })
        .collect();
    let mut record = ProvenanceRecord {
        schema: PROVENANCE_SCHEMA.into(),
        tool: ToolBuild::current(),
        assessment: AssessmentEntry {
            title: recipe.assessment.title.clone(),
            date: recipe.assessment.date.clone(),
            date_defaulted: recipe.date_defaulted,
            seed: recipe.assessment.seed,
        },
        run: RunEntry {
            started: facts.started,
            ended: now_rfc3339(),
            operator: facts.operator,
            case_folder: facts.case_folder,
        },
        recipe: file_entry(&recipe.recipe_file, &case.recipe_digest),
        inputs: case.data.digests.iter().map(|(file, digest)| file_entry(file, digest)).collect(),
        steps,
        outputs,
        prov: ProvDocument::default(),
    };
    record.prov = ProvDocument::of(&record.facts());
    record
}
