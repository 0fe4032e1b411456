//! The parts of the provenance record: the tool build, the files, the steps, the assessment
//! and the run. The record ([`super::record`]) and its PROV view ([`super::prov`]) are both
//! built from these.

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use popgauge_abi::{Descriptor, Params};

use crate::host::PluginRecord;

/// The tool that made the record.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ToolBuild {
    /// Always `popgauge`.
    pub name: String,
    /// Semantic version.
    pub version: String,
    /// The git commit the binary was built from, with `-dirty` when tracked files differed
    /// from it, or `unknown` (a build without git).
    pub commit: String,
    /// Target triple, e.g. `x86_64-unknown-linux-gnu`.
    pub target: String,
    /// `rustc --version` of the compiler that built it.
    pub rustc: String,
    /// `release` or `debug`.
    pub profile: String,
}

impl ToolBuild {
    /// This build.
    pub fn current() -> ToolBuild {
        ToolBuild {
            name: "popgauge".into(),
            version: env!("CARGO_PKG_VERSION").into(),
            // Set by engine/build.rs.
            commit: env!("POPGAUGE_BUILD_COMMIT").into(),
            target: env!("POPGAUGE_BUILD_TARGET").into(),
            rustc: env!("POPGAUGE_BUILD_RUSTC").into(),
            profile: if cfg!(debug_assertions) { "debug" } else { "release" }.into(),
        }
    }
}

/// A file read or written, with its size and SHA-256.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct FileEntry {
    /// What the file is (`recipe`, `genotypes` or `vcf`, `samples`, `populations`, `template`, `results`, `table`, …).
    pub role: String,
    /// Path relative to the case folder (inputs) or the output folder (outputs).
    pub path: String,
    /// Size in bytes.
    pub size: u64,
    /// Lower-case hex SHA-256 of the bytes.
    pub sha256: String,
}

/// One step as it ran.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StepEntry {
    /// Recipe id.
    pub id: String,
    /// `uses` name.
    pub uses: String,
    /// Step version.
    pub version: String,
    /// SHA-256 of an external plugin library; null for built-in steps.
    pub plugin_sha256: Option<String>,
    /// The external plugin library: path, hash, isolation and its descriptor as loaded.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plugin: Option<PluginEntry>,
    /// Resolved parameters (defaults filled in).
    pub params: Params,
    /// SHA-256 of the canonical parameters.
    pub params_sha256: String,
    /// The step's derived seed.
    pub seed: u64,
    /// SHA-256 of the step's canonical result (its entry in results.json).
    pub result_sha256: String,
    /// When the step started, RFC 3339 UTC with milliseconds (not part of any hash; verify
    /// ignores it).
    pub started: String,
    /// When the step ended, likewise.
    pub ended: String,
}

/// An external plugin library as it was loaded for a step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PluginEntry {
    /// The path as the recipe writes it after `plugin:` (relative to the case folder).
    pub path: String,
    /// SHA-256 of the library bytes that were loaded (equal to the recipe's pin).
    pub sha256: String,
    /// `process` (a child process per call) or `in-process`.
    pub isolation: String,
    /// The step's descriptor, as the library described itself.
    pub descriptor: Descriptor,
}

impl PluginEntry {
    /// The entry for a loaded plugin.
    pub fn from_record(record: &PluginRecord) -> PluginEntry {
        PluginEntry {
            path: record.path.clone(),
            sha256: record.sha256.clone(),
            isolation: record.isolation.as_str().into(),
            descriptor: record.descriptor.clone(),
        }
    }
}

/// Facts about the assessment.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct AssessmentEntry {
    /// Title.
    pub title: String,
    /// Assessment date printed on the document.
    pub date: String,
    /// True when the recipe gave no date and the run date was used.
    pub date_defaulted: bool,
    /// Master seed.
    pub seed: u64,
}

/// When and by whom the run was made.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RunEntry {
    /// Start, RFC 3339 UTC.
    pub started: String,
    /// End, RFC 3339 UTC.
    pub ended: String,
    /// Who ran it (`--operator`), when given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub operator: Option<String>,
    /// The case folder relative to the output folder (`..` for the default `CASE/out`), where
    /// `popgauge verify` looks for the inputs unless told otherwise with `--data`.
    pub case_folder: String,
}
