//! `popgauge verify`: re-hash the inputs, re-run every step with the recorded parameters and
//! seeds, regenerate every output, and say for each item whether it is the same.
//!
//! The comparison has three layers, each reported separately so that an auditor can tell what
//! was touched: the inputs on disk against their recorded hashes; each step's recomputed result
//! against its recorded result hash (and, where it differs, the first differing table cell
//! against the copy in `results.json`); and every output file, both as found on disk and as
//! regenerated, against its recorded hash.
//!
//! Plugin code is not trusted by default: the case may come from someone else, and its author
//! wrote both the library and its hash. A plugin step whose library's SHA-256 the auditor did
//! not name (`--trust-plugin`) is not run; the steps and outputs after it are checked with its
//! recorded result (from `results.json`, checked against the record's hash) standing in. Which
//! of them depend on it is found by a second run with the step withheld: a later step or an
//! output that changes then depends on it and is reported as not verified, not as the same.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt;
use std::path::{Path, PathBuf};

use ed25519_dalek::VerifyingKey;

use crate::hash::{hash_canonical, sha256_hex};
use crate::host::{PluginTrust, not_trusted};
use crate::output::OutputFiles;
use crate::pipeline::{RunError, load_case_trusting, render_outputs};
use crate::progress::Progress;
use crate::provenance::prov::ProvDocument;
use crate::provenance::record::{
    FileEntry, PROVENANCE_SCHEMA, ProvenanceRecord, RecordReadError, ToolBuild, parse_record,
};
use crate::provenance::signature::{SignatureCheck, check_signature, signature_path};
use crate::results::ResultsDocument;

mod differences;
mod rerun;

use differences::first_json_difference;
pub use differences::{EDITED, RECOMPUTED, Sides, first_difference};
use rerun::{Rerun, rerun};

/// Why verification could not even start.
#[derive(Debug, thiserror::Error)]
pub enum VerifyError {
    /// The record cannot be read or parsed.
    #[error(
        "{path}: cannot read the provenance record: {message}\n  help: give the provenance.json of a popgauge output folder"
    )]
    Unreadable {
        /// The path.
        path: String,
        /// What went wrong.
        message: String,
    },
    /// A record of a format this version does not know.
    #[error(
        "{path}: the record has format \"{found}\", but this popgauge reads \"{PROVENANCE_SCHEMA}\"\n  help: verify it with the popgauge version named in the record ({tool}) or a newer one"
    )]
    NewerFormat {
        /// The path.
        path: String,
        /// The format found.
        found: String,
        /// The tool that wrote it.
        tool: String,
    },
    /// The case cannot be loaded at all (recipe or data unreadable).
    #[error(
        "the case at {case} cannot be loaded for re-running\n  caused by: {source}\n  help: point --data at the folder holding the case's recipe and data"
    )]
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
    /// Not checked, or checked only given an untrusted step's recorded result; the text says which.
    NotChecked(String),
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
            Verdict::NotChecked(how) => how.clone(),
        };
        write!(f, "{:<7} {:<36} {verdict}", self.kind, self.name)
    }
}

/// A plugin step that was not re-run because its library is not trusted.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WithheldStep {
    /// The step id.
    pub id: String,
    /// The library as the recipe names it.
    pub library: String,
    /// Its SHA-256 (give it to `--trust-plugin` after reviewing the library).
    pub sha256: String,
}

/// The whole verification.
#[derive(Debug, Clone, Default)]
pub struct VerifyReport {
    /// Plain notes (tool version, case folder used).
    pub notes: Vec<String>,
    /// One item per input, step and output.
    pub items: Vec<Item>,
    /// Plugin steps not re-run (their code is not trusted).
    pub withheld: Vec<WithheldStep>,
}

impl VerifyReport {
    /// Items that differ.
    pub fn differences(&self) -> usize {
        self.items.iter().filter(|i| matches!(i.verdict, Verdict::Differs(_))).count()
    }

    /// Items not verified because they are, or depend on, a step whose plugin is not trusted.
    pub fn not_checked(&self) -> usize {
        self.items.iter().filter(|i| matches!(i.verdict, Verdict::NotChecked(_))).count()
    }

    fn push(&mut self, kind: &'static str, name: impl Into<String>, verdict: Verdict) {
        self.items.push(Item { kind, name: name.into(), verdict });
    }
}

/// What `verify` is told besides the record.
#[derive(Debug, Clone, Default)]
pub struct VerifyOptions {
    /// The case folder, when it has moved since the run (default: the one the record names
    /// relative to its output folder).
    pub data: Option<PathBuf>,
    /// SHA-256 hashes (lower-case hex) of the plugin libraries whose code may run.
    pub trusted_plugins: BTreeSet<String>,
}

/// Verifies the record at `record_path`, running only the plugin libraries `options` trusts.
///
/// # Errors
/// A [`VerifyError`] when the record cannot be read or the case cannot be loaded at all;
/// everything else is reported as a difference.
pub fn verify(
    record_path: &Path,
    options: &VerifyOptions,
    progress: &mut dyn Progress,
) -> Result<VerifyReport, VerifyError> {
    let record = read_record(record_path)?;
    let out_dir = record_path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new(".")).to_path_buf();
    let case_dir = options.data.clone().unwrap_or_else(|| out_dir.join(&record.run.case_folder));
    let mut report = VerifyReport::default();
    report.notes.extend(tool_notes(&record.tool));
    report.notes.push(format!("Inputs from {}", case_dir.display()));
    report.notes.extend(unmatched_trust(&record, &options.trusted_plugins));
    check_prov(&record, &mut report);
    check_inputs(&record, &case_dir, &mut report);
    if !check_plugins(&record, &case_dir, &mut report) {
        report.notes.push("The steps are not re-run: a plugin library they need is missing or changed".into());
        compare_outputs(&record, &out_dir, None, &mut report);
        return Ok(report);
    }
    let trust = trust_of(&record, &options.trusted_plugins);
    let case = load_case_trusting(&case_dir, true, &trust, progress)
        .map_err(|e| VerifyError::Case { case: case_dir.display().to_string(), source: Box::new(e) })?;
    let on_disk = read_results(&out_dir);
    let recomputed = rerun(&record, case, &trust, on_disk.as_ref(), &mut report, progress);
    if let Some(rerun) = &recomputed {
        compare_steps(&record, rerun, on_disk.as_ref(), &mut report);
        progress.task("typesetting the assessment");
        match render_outputs(&rerun.case, &rerun.engine) {
            Ok((_, files)) => {
                let without = rerun.without.as_ref().map(|without| match render_outputs(&rerun.case, without) {
                    Ok((_, files)) => Some(files),
                    Err(_) => None,
                });
                compare_outputs(
                    &record,
                    &out_dir,
                    Some(Regenerated { files: &files, without: without.as_ref() }),
                    &mut report,
                );
            }
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

/// Only the trusted libraries are loaded; the record's descriptors stand in for the others.
fn trust_of(record: &ProvenanceRecord, trusted: &BTreeSet<String>) -> PluginTrust {
    let recorded = record
        .steps
        .iter()
        .filter_map(|s| s.plugin.as_ref())
        .map(|p| (p.sha256.clone(), p.descriptor.clone()))
        .collect();
    PluginTrust { only: Some(trusted.clone()), recorded, announce: None }
}

/// A note for each `--trust-plugin` hash that names no library of the record (a typo, or the
/// hash of another case's library).
fn unmatched_trust(record: &ProvenanceRecord, trusted: &BTreeSet<String>) -> Vec<String> {
    let known: BTreeSet<&str> =
        record.steps.iter().filter_map(|s| s.plugin.as_ref()).map(|p| p.sha256.as_str()).collect();
    trusted
        .iter()
        .filter(|sha| !known.contains(sha.as_str()))
        .map(|sha| format!("Note: --trust-plugin {sha} names no plugin library of this record"))
        .collect()
}

fn read_record(path: &Path) -> Result<ProvenanceRecord, VerifyError> {
    let shown = path.display().to_string();
    let bytes =
        std::fs::read(path).map_err(|e| VerifyError::Unreadable { path: shown.clone(), message: e.to_string() })?;
    parse_record(&bytes).map_err(|error| match error {
        RecordReadError::Unreadable(message) => VerifyError::Unreadable { path: shown, message },
        RecordReadError::OtherFormat { found, tool } => VerifyError::NewerFormat { path: shown, found, tool },
    })
}

fn tool_notes(recorded: &ToolBuild) -> Vec<String> {
    let mut notes = vec![format!("Record made by {}", describe_build(recorded))];
    if let Some(note) = build_difference(recorded, &ToolBuild::current()) {
        notes.push(note);
    }
    notes
}

fn describe_build(tool: &ToolBuild) -> String {
    format!(
        "{} {} (commit {}, {}, {}, {})",
        tool.name, tool.version, tool.commit, tool.target, tool.rustc, tool.profile
    )
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
        let where_ =
            first_json_difference(&serde_json::to_value(&record.prov).ok(), &serde_json::to_value(&derived).ok());
        Verdict::Differs(format!(
            "the PROV view does not follow from the rest of the record (first at {where_}); one of them was edited"
        ))
    };
    report.push("record", "prov", verdict);
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
                    Verdict::Differs(format!(
                        "library changed: {} has SHA-256 {}, recorded {}",
                        shown.display(),
                        short(&sha),
                        short(&plugin.sha256)
                    ))
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

fn read_results(out_dir: &Path) -> Option<ResultsDocument> {
    let text = std::fs::read_to_string(out_dir.join("results.json")).ok()?;
    serde_json::from_str(&text).ok()
}

fn compare_steps(
    record: &ProvenanceRecord,
    rerun: &Rerun,
    on_disk: Option<&ResultsDocument>,
    report: &mut VerifyReport,
) {
    let engine = &rerun.engine;
    for entry in &record.steps {
        let name = format!("{} ({})", entry.id, entry.uses);
        if let Some(why) = rerun.withheld.get(&entry.id) {
            report.push("step", name, Verdict::NotChecked(format!("not re-run: {why}")));
            continue;
        }
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
                (Some(old), Some(new)) => first_difference(old, new, RECOMPUTED).unwrap_or_else(|| {
                    "the result hash differs (results.json was changed too, so the recorded values are unknown)".into()
                }),
                _ => "the result hash differs and results.json has no copy of the step to compare".into(),
            };
            Verdict::Differs(format!("result differs: {detail}"))
        };
        let verdict = match (&verdict, &rerun.without) {
            (Verdict::Same, Some(without)) => {
                let alone = without.runs.iter().find(|r| r.id == entry.id).map(|r| &r.result_sha256);
                if alone == Some(&run.result_sha256) { verdict } else { given_recorded(&rerun.withheld) }
            }
            _ => verdict,
        };
        report.push("step", name, verdict);
        if let Some(old) = stored {
            let stored_hash = hash_canonical(old).unwrap_or_default();
            if stored_hash != entry.result_sha256 && run.result_sha256 == entry.result_sha256 {
                let detail = recomputed
                    .and_then(|new| first_difference(new, old, EDITED))
                    .unwrap_or_else(|| "its content differs from the recorded hash".into());
                report.push(
                    "output",
                    format!("results.json step {}", entry.id),
                    Verdict::Differs(format!("edited after the run: {detail}")),
                );
            }
        }
    }
}

/// The verdict on an item that is the same as recorded only given the recorded results of
/// withheld steps (it changes when they are left out).
fn given_recorded(withheld: &BTreeMap<String, String>) -> Verdict {
    let ids: Vec<String> = withheld.keys().map(|id| format!("\"{id}\"")).collect();
    Verdict::NotChecked(format!(
        "same given the recorded result of {} (not re-run: plugin code not trusted)",
        ids.join(", ")
    ))
}

/// The outputs regenerated from the re-run steps, and, when steps were withheld, from the run
/// without them (`None` inside when that could not be typeset: every output then counts as
/// depending on them).
#[derive(Clone, Copy)]
struct Regenerated<'a> {
    files: &'a OutputFiles,
    without: Option<&'a Option<OutputFiles>>,
}

impl<'a> Regenerated<'a> {
    fn find(&self, path: &str) -> Option<&'a Vec<u8>> {
        self.files.iter().find(|(p, _)| p == path).map(|(_, bytes)| bytes)
    }

    /// Whether the file changes when the withheld steps are left out.
    fn depends_on_withheld(&self, path: &str) -> bool {
        match self.without {
            None => false,
            Some(None) => true,
            Some(Some(without)) => without.iter().find(|(p, _)| p == path).map(|(_, b)| b) != self.find(path),
        }
    }
}

fn compare_outputs(
    record: &ProvenanceRecord,
    out_dir: &Path,
    regenerated: Option<Regenerated<'_>>,
    report: &mut VerifyReport,
) {
    let withheld: BTreeMap<String, String> =
        report.withheld.iter().map(|w| (w.id.clone(), not_trusted(&w.sha256))).collect();
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
        match regenerated.map(|r| r.find(&entry.path)) {
            Some(Some(bytes)) => {
                if let Verdict::Differs(d) = compare_bytes(entry, bytes, "regenerated differently") {
                    problems.push(d);
                }
            }
            Some(None) => problems.push("not regenerated by this version".into()),
            None => problems.push("not regenerated (the steps could not be re-run)".into()),
        }
        let verdict = if !problems.is_empty() {
            Verdict::Differs(problems.join("; "))
        } else if regenerated.is_some_and(|r| r.depends_on_withheld(&entry.path)) {
            given_recorded(&withheld)
        } else {
            Verdict::Same
        };
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
            report
                .notes
                .push(format!("{} is present but not checked; give --public-key FILE to check it", path.display()));
        }
        return;
    };
    let verdict = match check_signature(record_path, key) {
        SignatureCheck::Valid { public_key } => {
            report.notes.push(format!("Signature: valid ed25519 signature by key {}", short(&public_key)));
            Verdict::Same
        }
        SignatureCheck::Missing { path } => Verdict::Differs(format!(
            "missing: {} not found; the record is not signed (`popgauge sign` signs it)",
            path.display()
        )),
        SignatureCheck::Unreadable { path, message } => {
            Verdict::Differs(format!("{} cannot be read: {message}", path.display()))
        }
        SignatureCheck::OtherKey { found, expected } => Verdict::Differs(format!(
            "signed by another key: the signature names key {}, not the given key {}",
            short(&found),
            short(&expected)
        )),
        SignatureCheck::Mismatch => Verdict::Differs(format!(
            "the signature does not match {}: the record was changed after it was signed",
            record_path
                .file_name()
                .map_or_else(|| record_path.display().to_string(), |n| n.to_string_lossy().into_owned())
        )),
    };
    report.push("record", "signature", verdict);
}
