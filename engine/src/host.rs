//! The plugin host: loads external step libraries (`uses = "plugin:PATH"`) and runs them.
//!
//! Loading follows one order and refuses at the first problem, before any step runs: the file
//! must exist; it is copied to a private temporary folder and the *copy* is hashed, so the bytes
//! that are loaded are the bytes that were checked; the SHA-256 must equal the recipe's pin;
//! the library must load and export [`ENTRY_SYMBOL`]; the leading `u32` of its table must be
//! [`ABI_VERSION`] (nothing else in the table is read before that); its descriptor must parse.
//! Each refusal is one [`LoadError`] variant showing the expected and the found value.
//!
//! Isolation ([`Isolation`]): by default every call into the library (describe and run) happens
//! in a child process, `popgauge plugin-worker` ([`worker`]), so a library that crashes or
//! hangs costs its own step only: the parent writes the genotype codes once per run to a private
//! file the child maps into memory (zero-copy in the child), sends the rest as JSON on stdin,
//! reads the result JSON from stdout, and stops the child after the step's time limit.
//! `isolation = "in-process"` loads the library into popgauge itself ([`library`]): faster, but a
//! crash of the library is a crash of popgauge.

pub mod library;
pub mod worker;

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use popgauge_abi::ffi::{ABI_VERSION, ENTRY_SYMBOL, STATUS_OK, STATUS_PANIC, STATUS_STEP_ERROR, request_json};
use popgauge_abi::{Descriptor, Step, StepContext, StepError, StepOutput};
use serde::{Deserialize, Serialize};

use crate::hash::sha256_hex;

/// The time limit of an external step when the recipe gives none.
pub const DEFAULT_TIMEOUT: Duration = Duration::from_secs(600);

/// Where an external library's code runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Isolation {
    /// In a child process per call (the default): crashes and hangs are contained.
    Process,
    /// In popgauge's own process: no process start-up, but nothing is contained.
    InProcess,
}

impl Isolation {
    /// The recipe spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Isolation::Process => "process",
            Isolation::InProcess => "in-process",
        }
    }

    /// Parses the recipe spelling.
    pub fn parse(text: &str) -> Option<Isolation> {
        match text {
            "process" => Some(Isolation::Process),
            "in-process" => Some(Isolation::InProcess),
            _ => None,
        }
    }
}

/// Why a plugin library was refused. Nothing of the recipe runs after a refusal.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error, Serialize, Deserialize)]
pub enum LoadError {
    /// The file is not there (or not readable).
    #[error("{path}: the plugin library cannot be read ({reason})")]
    FileMissing {
        /// The path as written.
        path: String,
        /// What the operating system said.
        reason: String,
    },
    /// The library's SHA-256 differs from the recipe's pin.
    #[error("{path} has SHA-256 {found} but the recipe pins {expected}")]
    Sha256 {
        /// The path as written.
        path: String,
        /// The pinned hash.
        expected: String,
        /// The hash of the file.
        found: String,
    },
    /// The operating system cannot load the file as a shared library.
    #[error("{path} cannot be loaded as a shared library: {reason}")]
    NotALibrary {
        /// The path as written.
        path: String,
        /// The loader's message.
        reason: String,
    },
    /// The library does not export the entry symbol.
    #[error("{path} does not export the entry symbol `{expected}`")]
    EntrySymbol {
        /// The path as written.
        path: String,
        /// The symbol looked for.
        expected: String,
    },
    /// The library speaks another ABI version.
    #[error("{path} speaks plugin ABI version {found} but this popgauge speaks version {expected}")]
    AbiVersion {
        /// The path as written.
        path: String,
        /// The version this popgauge speaks.
        expected: u32,
        /// The version in the library's table.
        found: u32,
    },
    /// The entry table lacks a function or the entry returned nothing.
    #[error("{path}: the plugin table has no `{function}` function")]
    IncompleteTable {
        /// The path as written.
        path: String,
        /// The missing function.
        function: String,
    },
    /// The descriptor is missing, not JSON, or not a descriptor.
    #[error("{path}: the plugin's descriptor is not valid: {reason}")]
    Descriptor {
        /// The path as written.
        path: String,
        /// What is wrong with it.
        reason: String,
    },
    /// The library crashed or hung while describing itself (process isolation).
    #[error("{path}: the plugin {reason} while describing itself")]
    Worker {
        /// The path as written.
        path: String,
        /// "crashed (signal 11, segmentation fault)", "did not answer within 600 s", …
        reason: String,
    },
}

impl LoadError {
    /// A line saying how to fix it.
    pub fn help(&self) -> String {
        match self {
            LoadError::FileMissing { .. } => {
                "build the plugin (its README says how) or fix the path; it is relative to the case folder".into()
            }
            LoadError::Sha256 { .. } => {
                "rebuild the library you reviewed, or update `sha256` after reviewing the change".into()
            }
            LoadError::NotALibrary { .. } => {
                "name a shared library built for this machine (.so on Linux, .dylib on macOS, .dll on Windows)".into()
            }
            LoadError::EntrySymbol { .. } | LoadError::IncompleteTable { .. } => format!(
                "a plugin exports `{ENTRY_SYMBOL}` returning a complete table; in Rust call `popgauge_abi::export_step!` once (DEVELOPERS.md, \"Writing a plugin\")"
            ),
            LoadError::AbiVersion { expected, found, .. } => format!(
                "rebuild the plugin against a popgauge-abi of ABI version {expected}, or use a popgauge that speaks version {found}"
            ),
            LoadError::Descriptor { .. } | LoadError::Worker { .. } => {
                "this is a defect in the plugin; report it to its author".into()
            }
        }
    }
}

/// A plugin library as the recipe names it.
#[derive(Debug, Clone)]
pub struct PluginSpec {
    /// The path as written after `plugin:` (for messages and provenance).
    pub shown: String,
    /// The file on disk.
    pub path: PathBuf,
    /// The pinned SHA-256 (lower-case hex); `None` only for `popgauge steps --plugin`.
    pub expected_sha256: Option<String>,
    /// Where its code runs.
    pub isolation: Isolation,
    /// The time limit of each call in a child process.
    pub timeout: Duration,
}

/// What the provenance record keeps about a plugin step.
#[derive(Debug, Clone, PartialEq)]
pub struct PluginRecord {
    /// The path as written after `plugin:`.
    pub path: String,
    /// SHA-256 of the library bytes that were loaded.
    pub sha256: String,
    /// Where its code ran.
    pub isolation: Isolation,
    /// Its descriptor, as it described itself.
    pub descriptor: Descriptor,
}

/// Temporary files shared by the plugin steps of one recipe: the private library copies and
/// the genotype file the worker maps (written once per run). Removed when the recipe is dropped.
#[derive(Debug)]
pub struct PluginScratch {
    dir: tempfile::TempDir,
    genotypes: Mutex<Option<worker::GenotypeFile>>,
}

impl PluginScratch {
    /// A new private temporary folder.
    ///
    /// # Errors
    /// The I/O error of creating it.
    pub fn new() -> std::io::Result<Arc<PluginScratch>> {
        let dir = tempfile::Builder::new().prefix("popgauge-plugins-").tempdir()?;
        // Ctrl-C exits without running destructors; the handler removes the folder instead.
        crate::interrupt::register(dir.path());
        Ok(Arc::new(PluginScratch { dir, genotypes: Mutex::new(None) }))
    }

    fn dir(&self) -> &Path {
        self.dir.path()
    }
}

impl Drop for PluginScratch {
    fn drop(&mut self) {
        // The folder itself is removed by `TempDir` right after this.
        crate::interrupt::unregister(self.dir.path());
    }
}

/// A loaded external step: behaves as any [`Step`] to the engine.
pub struct ExternalStep {
    record: PluginRecord,
    runner: Runner,
}

enum Runner {
    InProcess(library::LoadedLibrary),
    Process { library: PathBuf, scratch: Arc<PluginScratch>, timeout: Duration },
}

impl std::fmt::Debug for ExternalStep {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ExternalStep").field("record", &self.record).finish()
    }
}

impl ExternalStep {
    /// What provenance records about it.
    pub fn record(&self) -> &PluginRecord {
        &self.record
    }
}

impl Step for ExternalStep {
    fn descriptor(&self) -> Descriptor {
        self.record.descriptor.clone()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let request = request_json(ctx).map_err(|e| StepError::new(format!("the request cannot be written: {e}")))?;
        let (status, bytes) = match &self.runner {
            Runner::InProcess(library) => library.run(&ctx.view, &request)?,
            Runner::Process { library, scratch, timeout } => worker::run_in_child(worker::RunCall {
                library,
                shown: &self.record.path,
                scratch,
                view: &ctx.view,
                request: &request,
                timeout: *timeout,
            })?,
        };
        interpret_output(status, &bytes)
    }
}

/// Turns a plugin's status and bytes into the step's output or error.
///
/// # Errors
/// A [`StepError`] with the plugin's message, its panic message, or what is wrong with its JSON.
pub fn interpret_output(status: i32, bytes: &[u8]) -> Result<StepOutput, StepError> {
    let text = || String::from_utf8_lossy(bytes).into_owned();
    match status {
        STATUS_OK => serde_json::from_slice(bytes)
            .map_err(|e| StepError::new(format!("the plugin returned a result that is not valid output JSON: {e}"))),
        STATUS_STEP_ERROR => Err(StepError::new(text())),
        STATUS_PANIC => Err(StepError::new(format!("the plugin {}", text()))),
        other => Err(StepError::new(format!("the plugin returned the unknown status {other}"))),
    }
}

/// Copies the library into the scratch folder, hashes the copy and checks the pin.
fn verified_copy(spec: &PluginSpec, scratch: &PluginScratch) -> Result<(PathBuf, String), LoadError> {
    let bytes = std::fs::read(&spec.path)
        .map_err(|e| LoadError::FileMissing { path: spec.shown.clone(), reason: io_reason(&e) })?;
    let file_name = spec.path.file_name().map_or_else(|| "plugin".into(), |n| n.to_string_lossy().into_owned());
    let slot = std::fs::read_dir(scratch.dir()).map_or(0, |d| d.count());
    let copy = scratch.dir().join(format!("{slot}-{file_name}"));
    std::fs::write(&copy, &bytes).map_err(|e| LoadError::FileMissing {
        path: spec.shown.clone(),
        reason: format!("cannot copy it: {}", io_reason(&e)),
    })?;
    let on_disk = std::fs::read(&copy).map_err(|e| LoadError::FileMissing {
        path: spec.shown.clone(),
        reason: format!("cannot read the copy: {}", io_reason(&e)),
    })?;
    let found = sha256_hex(&on_disk);
    match &spec.expected_sha256 {
        Some(expected) if !expected.eq_ignore_ascii_case(&found) => {
            Err(LoadError::Sha256 { path: spec.shown.clone(), expected: expected.to_ascii_lowercase(), found })
        }
        _ => Ok((copy, found)),
    }
}

fn io_reason(e: &std::io::Error) -> String {
    match e.kind() {
        std::io::ErrorKind::NotFound => "no such file".into(),
        std::io::ErrorKind::PermissionDenied => "permission denied".into(),
        _ => e.to_string(),
    }
}

/// Loads a plugin library for a recipe step, refusing it at the first problem.
///
/// # Errors
/// The [`LoadError`] of the first check that fails.
pub fn load_plugin(spec: &PluginSpec, scratch: &Arc<PluginScratch>) -> Result<ExternalStep, LoadError> {
    let (copy, sha256) = verified_copy(spec, scratch)?;
    let (descriptor, runner) = match spec.isolation {
        Isolation::InProcess => {
            let library = library::LoadedLibrary::open(&copy, &spec.shown)?;
            (library.describe(&spec.shown)?, Runner::InProcess(library))
        }
        Isolation::Process => {
            let descriptor = worker::describe_in_child(&copy, &spec.shown, spec.timeout)?;
            (descriptor, Runner::Process { library: copy, scratch: Arc::clone(scratch), timeout: spec.timeout })
        }
    };
    let record = PluginRecord { path: spec.shown.clone(), sha256, isolation: spec.isolation, descriptor };
    Ok(ExternalStep { record, runner })
}

/// Parses and checks a descriptor the library returned.
///
/// # Errors
/// [`LoadError::Descriptor`] when the JSON does not decode, the `uses` name is not kebab-case
/// or a default does not fit its own declaration.
pub fn parse_descriptor(bytes: &[u8], shown: &str) -> Result<Descriptor, LoadError> {
    let invalid = |reason: String| LoadError::Descriptor { path: shown.into(), reason };
    let descriptor: Descriptor = serde_json::from_slice(bytes).map_err(|e| invalid(e.to_string()))?;
    if descriptor.uses.is_empty()
        || !descriptor.uses.chars().all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-')
    {
        return Err(invalid(format!("its `uses` name \"{}\" is not kebab-case", descriptor.uses)));
    }
    descriptor.check_defaults().map_err(|e| invalid(format!("a default does not fit its own declaration: {e}")))?;
    Ok(descriptor)
}

/// The ABI version check, shared by the in-process loader and the worker.
fn check_abi_version(found: u32, shown: &str) -> Result<(), LoadError> {
    if found == ABI_VERSION {
        Ok(())
    } else {
        Err(LoadError::AbiVersion { path: shown.into(), expected: ABI_VERSION, found })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// STYLE: every refusal names expected and found and carries a `help:` line.
    #[test]
    fn refusal_messages() {
        let e = LoadError::Sha256 { path: "libx.so".into(), expected: "3f07".into(), found: "9b41".into() };
        assert_eq!(e.to_string(), "libx.so has SHA-256 9b41 but the recipe pins 3f07");
        assert_eq!(e.help(), "rebuild the library you reviewed, or update `sha256` after reviewing the change");
        let e = LoadError::AbiVersion { path: "libx.so".into(), expected: 2, found: 99 };
        assert_eq!(e.to_string(), "libx.so speaks plugin ABI version 99 but this popgauge speaks version 2");
        let e = LoadError::EntrySymbol { path: "libx.so".into(), expected: ENTRY_SYMBOL.into() };
        assert_eq!(e.to_string(), "libx.so does not export the entry symbol `popgauge_plugin_entry`");
    }

    #[test]
    fn outputs_are_interpreted_by_status() {
        assert_eq!(interpret_output(STATUS_OK, br#"{"tables":{}}"#), Ok(StepOutput::default()));
        assert_eq!(interpret_output(STATUS_STEP_ERROR, b"too few loci").unwrap_err().message, "too few loci");
        assert_eq!(
            interpret_output(STATUS_PANIC, b"panicked at x.rs:1:2: boom").unwrap_err().message,
            "the plugin panicked at x.rs:1:2: boom"
        );
        assert_eq!(
            interpret_output(STATUS_OK, b"{oops").unwrap_err().message,
            "the plugin returned a result that is not valid output JSON: key must be a string at line 1 column 2"
        );
        assert_eq!(interpret_output(7, b"").unwrap_err().message, "the plugin returned the unknown status 7");
    }

    #[test]
    fn descriptors_are_checked() {
        let e = parse_descriptor(b"42", "libx.so").unwrap_err();
        assert_eq!(
            e.to_string(),
            "libx.so: the plugin's descriptor is not valid: invalid type: integer `42`, expected struct Descriptor at line 1 column 2"
        );
        let e = parse_descriptor(br#"{"uses":"Bad Name","version":"1","summary":"s"}"#, "libx.so").unwrap_err();
        assert_eq!(
            e.to_string(),
            "libx.so: the plugin's descriptor is not valid: its `uses` name \"Bad Name\" is not kebab-case"
        );
        assert!(parse_descriptor(br#"{"uses":"ok-name","version":"1","summary":"s"}"#, "x").is_ok());
    }
}
