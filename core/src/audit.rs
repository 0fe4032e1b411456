//! `popgauge verify`: re-hash the inputs, re-run every step with the recorded parameters and
//! seeds, regenerate every output, and say for each item whether it is the same.
//!
//! The comparison has three layers, each reported separately so that an auditor can tell what
//! was touched: the inputs on disk against their recorded hashes; each step's recomputed result
//! against its recorded result hash (and, where it differs, the first differing table cell
//! against the copy in `results.json`); and every output file, both as found on disk and as
//! regenerated, against its recorded hash.

use std::fmt;
use std::path::{Path, PathBuf};

use popgauge_abi::{Cell, StepResult, Table, format_number};

use ed25519_dalek::VerifyingKey;

use crate::provenance::prov::ProvDocument;
use crate::provenance::signature::{SignatureCheck, check_signature, signature_path};
use crate::hash::{derive_seed, hash_canonical, sha256_hex};
use crate::provenance::record::{FileEntry, PROVENANCE_SCHEMA, ProvenanceRecord, StepEntry, ToolBuild};
use crate::engine::run_steps;
use crate::pipeline::{LoadedCase, RunError, load_case, render_outputs};
use crate::progress::Progress;
use crate::results::ResultsDocument;

/// Why verification could not even start.
#[derive(Debug, thiserror::Error)]
pub enum VerifyError {
    /// The record cannot be read or parsed.
    #[error("{path}: cannot read the provenance record: {message}\n  help: give the provenance.json of a popgauge output folder")]
    Unreadable {
        /// The path.
        path: String,
        /// What went wrong.
        message: String,
    },
    /// A record of a format this version does not know.
    #[error("{path}: the record has format \"{found}\", but this popgauge reads \"{PROVENANCE_SCHEMA}\"\n  help: verify it with the popgauge version named in the record ({tool}) or a newer one")]
    NewerFormat {
        /// The path.
        path: String,
        /// The format found.
        found: String,
        /// The tool that wrote it.
        tool: String,
    },
    /// The case cannot be loaded at all (recipe or data unreadable).
    #[error("the case at {case} cannot be loaded for re-running\n  caused by: {source}\n  help: point --data at the folder holding the case's recipe and data")]
    Case {
        /// The case folder tried.
        case: String,
        /// Why.
        source: Box<RunError>,
    },
}

/// The verdict on one item.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Verdict {
    /// Identical to the record.
    Same,
    /// Not identical; the text says how.
    Differs(String),
}

/// One line of the verification table.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Item {
    /// `input`, `plugin`, `step`, `output` or `record`.
    pub kind: &'static str,
    /// What the item is (a path, a step id).
    pub name: String,
    /// Same or how it differs.
    pub verdict: Verdict,
}

impl fmt::Display for Item {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let verdict = match &self.verdict {
            Verdict::Same => "same".to_string(),
            Verdict::Differs(how) => format!("DIFFERS: {how}"),
        };
        write!(f, "{:<7} {:<36} {verdict}", self.kind, self.name)
    }
}

/// The whole verification.
#[derive(Debug, Clone, Default)]
pub struct VerifyReport {
    /// Plain notes (tool version, case folder used).
    pub notes: Vec<String>,
    /// One item per input, step and output.
    pub items: Vec<Item>,
}

impl VerifyReport {
    /// Items that differ.
    pub fn differences(&self) -> usize {
        self.items.iter().filter(|i| i.verdict != Verdict::Same).count()
    }

    fn push(&mut self, kind: &'static str, name: impl Into<String>, verdict: Verdict) {
        self.items.push(Item { kind, name: name.into(), verdict });
    }
}

/// Verifies the record at `record_path`; inputs come from `data` when given, else from the case
/// folder the record names relative to its output folder.
///
/// # Errors
/// A [`VerifyError`] when the record cannot be read or the case cannot be loaded at all;
/// everything else is reported as a difference.
pub fn verify(record_path: &Path, data: Option<&Path>, progress: &mut dyn Progress) -> Result<VerifyReport, VerifyError> {
    let record = read_record(record_path)?;
    let out_dir = record_path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new(".")).to_path_buf();
    let case_dir = data.map_or_else(|| out_dir.join(&record.run.case_folder), Path::to_path_buf);
    let mut report = VerifyReport::default();
    report.notes.extend(tool_notes(&record.tool));
    report.notes.push(format!("Inputs from {}", case_dir.display()));
    check_prov(&record, &mut report);
    check_inputs(&record, &case_dir, &mut report);
    if !check_plugins(&record, &case_dir, &mut report) {
        report.notes.push("The steps are not re-run: a plugin library they need is missing or changed".into());
        compare_outputs(&record, &out_dir, None, &mut report);
        return Ok(report);
    }
    let case = load_case(&case_dir, true, progress).map_err(|e| VerifyError::Case { case: case_dir.display().to_string(), source: Box::new(e) })?;
    let recomputed = rerun(&record, case, &mut report, progress);
    let on_disk = read_results(&out_dir);
    if let Some((case, engine_results)) = &recomputed {
        compare_steps(&record, engine_results, on_disk.as_ref(), &mut report);
        progress.task("typesetting the assessment");
        match render_outputs(case, engine_results) {
            Ok((_, files)) => compare_outputs(&record, &out_dir, Some(&files), &mut report),
            Err(error) => {
                report.notes.push(format!("the outputs could not be regenerated: {error}"));
                compare_outputs(&record, &out_dir, None, &mut report);
            }
        }
    } else {
        compare_outputs(&record, &out_dir, None, &mut report);
    }
    progress.finish();
    Ok(report)
}

fn read_record(path: &Path) -> Result<ProvenanceRecord, VerifyError> {
    let unreadable = |message: String| VerifyError::Unreadable { path: path.display().to_string(), message };
    let text = std::fs::read_to_string(path).map_err(|e| unreadable(e.to_string()))?;
    let value: serde_json::Value = serde_json::from_str(&text).map_err(|e| unreadable(e.to_string()))?;
    let schema = value["schema"].as_str().unwrap_or_default().to_string();
    if schema != PROVENANCE_SCHEMA {
        let tool = value["tool"]["version"].as_str().map_or("unknown".into(), |v| format!("popgauge {v}"));
        return Err(VerifyError::NewerFormat { path: path.display().to_string(), found: schema, tool });
    }
    serde_json::from_value(value).map_err(|e| unreadable(format!("it does not fit the record format: {e}")))
}

fn tool_notes(recorded: &ToolBuild) -> Vec<String> {
    let mut notes = vec![format!("Record made by {}", describe_build(recorded))];
    if let Some(note) = build_difference(recorded, &ToolBuild::current()) {
        notes.push(note);
    }
    notes
}

fn describe_build(tool: &ToolBuild) -> String {
    format!("{} {} (commit {}, {}, {}, {})", tool.name, tool.version, tool.commit, tool.target, tool.rustc, tool.profile)
}

/// A plain note when the running build is not the one that made the record; not a difference
/// by itself (the step and output lines say whether the results changed).
fn build_difference(recorded: &ToolBuild, running: &ToolBuild) -> Option<String> {
    let facts = [
        ("version", &recorded.version, &running.version),
        ("commit", &recorded.commit, &running.commit),
        ("target", &recorded.target, &running.target),
        ("compiler", &recorded.rustc, &running.rustc),
        ("profile", &recorded.profile, &running.profile),
    ];
    let differing: Vec<String> = facts
        .iter()
        .filter(|(_, a, b)| a != b)
        .map(|(what, a, b)| format!("{what} (recorded {a}, running {b})"))
        .collect();
    (!differing.is_empty()).then(|| {
        format!(
            "Note: this popgauge is another build than the one that made the record: {}; where a result differs, the tool may be the cause",
            differing.join(", ")
        )
    })
}

/// Whether the record's PROV view still follows from the rest of the record.
fn check_prov(record: &ProvenanceRecord, report: &mut VerifyReport) {
    let derived = ProvDocument::of(&record.facts());
    let verdict = if derived == record.prov {
        Verdict::Same
    } else {
        let where_ = first_json_difference(&serde_json::to_value(&record.prov).ok(), &serde_json::to_value(&derived).ok());
        Verdict::Differs(format!("the PROV view does not follow from the rest of the record (first at {where_}); one of them was edited"))
    };
    report.push("record", "prov", verdict);
}

/// The path of the first member where two JSON values differ, e.g. `entity/popgauge:run`.
fn first_json_difference(a: &Option<serde_json::Value>, b: &Option<serde_json::Value>) -> String {
    use serde_json::Value;
    fn walk(a: &Value, b: &Value, path: &mut Vec<String>) -> bool {
        match (a, b) {
            (Value::Object(x), Value::Object(y)) => {
                let keys: std::collections::BTreeSet<&String> = x.keys().chain(y.keys()).collect();
                for key in keys {
                    path.push(key.clone());
                    match (x.get(key), y.get(key)) {
                        (Some(u), Some(v)) if walk(u, v, path) => return true,
                        (Some(_), Some(_)) => {}
                        _ => return true,
                    }
                    path.pop();
                }
                false
            }
            _ => a != b,
        }
    }
    let mut path = Vec::new();
    match (a, b) {
        (Some(a), Some(b)) if walk(a, b, &mut path) => path.join("/"),
        _ => "the top level".into(),
    }
}

/// Each external plugin library the record names: present with the recorded hash, or not.
/// Returns false when any is missing or changed, since the steps cannot then be re-run.
fn check_plugins(record: &ProvenanceRecord, case_dir: &Path, report: &mut VerifyReport) -> bool {
    let mut usable = true;
    for (step, plugin) in record.steps.iter().filter_map(|s| s.plugin.as_ref().map(|p| (s, p))) {
        let path = case_dir.join(&plugin.path);
        let shown = lexically_normal(&path);
        let verdict = match std::fs::read(&path) {
            Err(e) => Verdict::Differs(format!(
                "missing: the plugin library {} cannot be read ({e}); step \"{}\" cannot be re-run without it",
                shown.display(),
                step.id
            )),
            Ok(bytes) => {
                let sha = sha256_hex(&bytes);
                if sha == plugin.sha256 {
                    Verdict::Same
                } else {
                    Verdict::Differs(format!("library changed: {} has SHA-256 {}, recorded {}", shown.display(), short(&sha), short(&plugin.sha256)))
                }
            }
        };
        usable &= verdict == Verdict::Same;
        report.push("plugin", &plugin.path, verdict);
    }
    usable
}

/// `a/b/../c` as `a/c`, so a path shown to the user reads as the file it names (for display
/// only: with links, the lexical path may name another file).
fn lexically_normal(path: &Path) -> PathBuf {
    use std::path::Component;
    let mut parts: Vec<Component<'_>> = Vec::new();
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir if matches!(parts.last(), Some(Component::Normal(_))) => {
                parts.pop();
            }
            other => parts.push(other),
        }
    }
    if parts.is_empty() { PathBuf::from(".") } else { parts.iter().collect() }
}

fn check_inputs(record: &ProvenanceRecord, case_dir: &Path, report: &mut VerifyReport) {
    for entry in std::iter::once(&record.recipe).chain(&record.inputs) {
        let verdict = match std::fs::read(case_dir.join(&entry.path)) {
            Err(e) => Verdict::Differs(format!("cannot be read: {e}")),
            Ok(bytes) => compare_bytes(entry, &bytes, "input changed"),
        };
        report.push("input", &entry.path, verdict);
    }
}

fn compare_bytes(entry: &FileEntry, bytes: &[u8], what: &str) -> Verdict {
    let sha = sha256_hex(bytes);
    if sha == entry.sha256 && bytes.len() as u64 == entry.size {
        Verdict::Same
    } else {
        Verdict::Differs(format!(
            "{what}: SHA-256 {} ({} bytes), recorded {} ({} bytes)",
            short(&sha),
            bytes.len(),
            short(&entry.sha256),
            entry.size
        ))
    }
}

fn short(sha: &str) -> String {
    if sha.len() > 12 { format!("{}…{}", &sha[..8], &sha[sha.len() - 4..]) } else { sha.to_string() }
}

/// Re-runs the steps with the recorded parameters and master seed.
fn rerun(
    record: &ProvenanceRecord,
    mut case: LoadedCase,
    report: &mut VerifyReport,
    progress: &mut dyn Progress,
) -> Option<(LoadedCase, crate::engine::EngineOutput)> {
    case.recipe.assessment.seed = record.assessment.seed;
    case.recipe.assessment.date = record.assessment.date.clone();
    let recipe_ids: Vec<&str> = case.recipe.steps.iter().map(|s| s.id.as_str()).collect();
    let record_ids: Vec<&str> = record.steps.iter().map(|s| s.id.as_str()).collect();
    if recipe_ids != record_ids {
        report.push("record", "steps", Verdict::Differs(format!("the recipe's steps are {recipe_ids:?} but the record's are {record_ids:?}; the recipe's are re-run")));
    }
    for planned in &mut case.recipe.steps {
        let Some(entry) = record.steps.iter().find(|e| e.id == planned.id) else { continue };
        let descriptor = planned.step.descriptor();
        if let Some(problem) = recorded_params_problem(entry, &planned.uses) {
            report.push("record", format!("{} parameters", entry.id), Verdict::Differs(problem));
        }
        match descriptor.resolve(&entry.params) {
            Ok(params) => planned.params = params,
            Err(e) => report.push("record", format!("{} parameters", entry.id), Verdict::Differs(format!("the recorded parameters are not valid: {e}"))),
        }
        if derive_seed(record.assessment.seed, &entry.id).0 != entry.seed {
            report.push("record", format!("{} seed", entry.id), Verdict::Differs(format!("recorded seed {} is not the one derived from the master seed {}", entry.seed, record.assessment.seed)));
        }
    }
    match run_steps(&case.recipe, &case.data, progress) {
        Ok(engine) => Some((case, engine)),
        Err(e) => {
            report.push("step", "re-run", Verdict::Differs(format!("the steps could not be re-run: {e}")));
            None
        }
    }
}

/// `uses` is the recipe's (for a plugin step `plugin:PATH`, as the record stores it).
fn recorded_params_problem(entry: &StepEntry, uses: &str) -> Option<String> {
    let hash = hash_canonical(&entry.params).unwrap_or_default();
    if hash != entry.params_sha256 {
        return Some(format!("parameter changed: the recorded parameters hash to {} but the record says {}", short(&hash), short(&entry.params_sha256)));
    }
    if uses != entry.uses {
        return Some(format!("step uses \"{uses}\" in the recipe but \"{}\" in the record", entry.uses));
    }
    None
}

fn read_results(out_dir: &Path) -> Option<ResultsDocument> {
    let text = std::fs::read_to_string(out_dir.join("results.json")).ok()?;
    serde_json::from_str(&text).ok()
}

fn compare_steps(
    record: &ProvenanceRecord,
    engine: &crate::engine::EngineOutput,
    on_disk: Option<&ResultsDocument>,
    report: &mut VerifyReport,
) {
    for entry in &record.steps {
        let name = format!("{} ({})", entry.id, entry.uses);
        let Some(run) = engine.runs.iter().find(|r| r.id == entry.id) else {
            report.push("step", name, Verdict::Differs("not re-run: the recipe no longer has this step".into()));
            continue;
        };
        let recomputed = engine.results.iter().find(|r| r.id == entry.id);
        let stored = on_disk.and_then(|d| d.steps.iter().find(|s| s.id == entry.id));
        let verdict = if run.result_sha256 == entry.result_sha256 {
            Verdict::Same
        } else {
            let detail = match (stored, recomputed) {
                (Some(old), Some(new)) => first_difference(old, new, RECOMPUTED).unwrap_or_else(|| "the result hash differs (results.json was changed too, so the recorded values are unknown)".into()),
                _ => "the result hash differs and results.json has no copy of the step to compare".into(),
            };
            Verdict::Differs(format!("result differs: {detail}"))
        };
        report.push("step", name, verdict);
        if let Some(old) = stored {
            let stored_hash = hash_canonical(old).unwrap_or_default();
            if stored_hash != entry.result_sha256 && run.result_sha256 == entry.result_sha256 {
                let detail = recomputed.and_then(|new| first_difference(new, old, EDITED)).unwrap_or_else(|| "its content differs from the recorded hash".into());
                report.push("output", format!("results.json step {}", entry.id), Verdict::Differs(format!("edited after the run: {detail}")));
            }
        }
    }
}

/// How the two sides of a comparison are named in messages.
#[derive(Debug, Clone, Copy)]
pub struct Sides {
    /// The reference side.
    pub reference: &'static str,
    /// The side compared with it.
    pub other: &'static str,
}

/// A recorded result against a recomputation.
pub const RECOMPUTED: Sides = Sides { reference: "recorded", other: "recomputed" };
/// The recorded (and reproduced) result against what results.json now holds.
pub const EDITED: Sides = Sides { reference: "recorded", other: "results.json has" };

/// The first difference between two step results, in words.
pub fn first_difference(recorded: &StepResult, recomputed: &StepResult, sides: Sides) -> Option<String> {
    let Sides { reference, other } = sides;
    let names: std::collections::BTreeSet<&String> = recorded.tables.keys().chain(recomputed.tables.keys()).collect();
    for name in names {
        match (recorded.tables.get(name), recomputed.tables.get(name)) {
            (Some(a), Some(b)) => {
                if let Some(d) = table_difference(name, a, b, sides) {
                    return Some(d);
                }
            }
            (Some(_), None) => return Some(format!("table {name} is {reference} but {other} lacks it")),
            (None, Some(_)) => return Some(format!("table {name} is in {other} but not {reference}")),
            (None, None) => {}
        }
    }
    if recorded.findings != recomputed.findings {
        let position = recorded.findings.iter().zip(&recomputed.findings).position(|(a, b)| a != b).unwrap_or(recorded.findings.len().min(recomputed.findings.len()));
        return Some(format!("findings differ from finding {} on ({} {reference}, {} {other})", position + 1, recorded.findings.len(), recomputed.findings.len()));
    }
    if recorded.citations != recomputed.citations {
        return Some("citations differ".into());
    }
    if recorded.exclusions != recomputed.exclusions {
        return Some("exclusions differ".into());
    }
    (recorded.version != recomputed.version).then(|| format!("step version {} {reference}, {} {other}", recorded.version, recomputed.version))
}

fn table_difference(name: &str, a: &Table, b: &Table, sides: Sides) -> Option<String> {
    let Sides { reference, other } = sides;
    if a.columns != b.columns {
        return Some(format!("table {name} has columns {:?} {reference}, {:?} {other}", a.columns, b.columns));
    }
    for (r, (row_a, row_b)) in a.rows.iter().zip(&b.rows).enumerate() {
        for (c, (x, y)) in row_a.iter().zip(row_b).enumerate() {
            if !same_cell(x, y) {
                return Some(format!(
                    "table {name} row {}{} column {}: {reference} {}, {other} {}{}",
                    r + 1,
                    row_key(a, row_a),
                    a.columns[c],
                    show(x),
                    show(y),
                    by_how_much(x, y)
                ));
            }
        }
    }
    (a.rows.len() != b.rows.len()).then(|| format!("table {name} has {} rows {reference}, {} {other}", a.rows.len(), b.rows.len()))
}

fn same_cell(x: &Cell, y: &Cell) -> bool {
    match (x.as_f64(), y.as_f64()) {
        (Some(a), Some(b)) => a.to_bits() == b.to_bits() || a == b,
        _ => x == y,
    }
}

/// The identifying text cells of a row (population, year, locus…), e.g. ` (Brennmoor, 2024)`.
fn row_key(table: &Table, row: &[Cell]) -> String {
    let keys: Vec<String> = ["population", "pop_a", "pop_b", "year", "locus", "sample", "metric", "pcrit"]
        .iter()
        .filter_map(|k| table.column(k).map(|i| row[i].to_string()))
        .filter(|s| !s.is_empty())
        .collect();
    if keys.is_empty() { String::new() } else { format!(" ({})", keys.join(", ")) }
}

fn show(cell: &Cell) -> String {
    match cell {
        Cell::Null => "null".into(),
        Cell::Text(t) => format!("\"{t}\""),
        other => other.to_string(),
    }
}

fn by_how_much(x: &Cell, y: &Cell) -> String {
    match (x.as_f64(), y.as_f64()) {
        (Some(a), Some(b)) if a.is_finite() && b.is_finite() => format!(" (by {})", format_number(b - a)),
        _ => String::new(),
    }
}

fn compare_outputs(record: &ProvenanceRecord, out_dir: &Path, regenerated: Option<&Vec<(String, Vec<u8>)>>, report: &mut VerifyReport) {
    for entry in &record.outputs {
        let mut problems = Vec::new();
        match std::fs::read(out_dir.join(&entry.path)) {
            Err(e) => problems.push(format!("missing from the output folder ({e})")),
            Ok(bytes) => {
                if let Verdict::Differs(d) = compare_bytes(entry, &bytes, "the file was changed after the run") {
                    problems.push(d);
                }
            }
        }
        match regenerated.map(|files| files.iter().find(|(p, _)| p == &entry.path)) {
            Some(Some((_, bytes))) => {
                if let Verdict::Differs(d) = compare_bytes(entry, bytes, "regenerated differently") {
                    problems.push(d);
                }
            }
            Some(None) => problems.push("not regenerated by this version".into()),
            None => problems.push("not regenerated (the steps could not be re-run)".into()),
        }
        let verdict = if problems.is_empty() { Verdict::Same } else { Verdict::Differs(problems.join("; ")) };
        report.push("output", &entry.path, verdict);
    }
}

/// The default record path inside an output folder.
pub fn record_in(out_dir: &Path) -> PathBuf {
    out_dir.join("provenance.json")
}

/// Adds the signature line: the signature beside the record checked against `key`, or, without
/// a key, a note when the record is signed.
pub fn add_signature_check(report: &mut VerifyReport, record_path: &Path, key: Option<&VerifyingKey>) {
    let Some(key) = key else {
        let path = signature_path(record_path);
        if path.exists() {
            report.notes.push(format!("{} is present but not checked; give --public-key FILE to check it", path.display()));
        }
        return;
    };
    let verdict = match check_signature(record_path, key) {
        SignatureCheck::Valid { public_key } => {
            report.notes.push(format!("Signature: valid ed25519 signature by key {}", short(&public_key)));
            Verdict::Same
        }
        SignatureCheck::Missing { path } => {
            Verdict::Differs(format!("missing: {} not found; the record is not signed (`popgauge sign` signs it)", path.display()))
        }
        SignatureCheck::Unreadable { path, message } => Verdict::Differs(format!("{} cannot be read: {message}", path.display())),
        SignatureCheck::OtherKey { found, expected } => Verdict::Differs(format!(
            "signed by another key: the signature names key {}, not the given key {}",
            short(&found),
            short(&expected)
        )),
        SignatureCheck::Mismatch => Verdict::Differs(format!(
            "the signature does not match {}: the record was changed after it was signed",
            record_path.file_name().map_or_else(|| record_path.display().to_string(), |n| n.to_string_lossy().into_owned())
        )),
    };
    report.push("record", "signature", verdict);
}
