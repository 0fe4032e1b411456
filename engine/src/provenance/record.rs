//! The provenance record (`provenance.json`): what went in, what ran, what came out.

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

pub use super::entries::{AssessmentEntry, FileEntry, PluginEntry, RunEntry, StepEntry, ToolBuild};
use super::prov::{ProvDocument, RunFacts};

/// Schema identifier written into every record.
pub const PROVENANCE_SCHEMA: &str = "popgauge.provenance/1";

/// The whole record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "popgauge provenance record (provenance.json)")]
pub struct ProvenanceRecord {
    /// `popgauge.provenance/1`.
    pub schema: String,
    /// The tool build.
    pub tool: ToolBuild,
    /// The assessment.
    pub assessment: AssessmentEntry,
    /// The run.
    pub run: RunEntry,
    /// The recipe file.
    pub recipe: FileEntry,
    /// The data files.
    pub inputs: Vec<FileEntry>,
    /// The steps in run order.
    pub steps: Vec<StepEntry>,
    /// Every output file except this record.
    pub outputs: Vec<FileEntry>,
    /// The same facts in W3C PROV terms (PROV-JSON), derived from the members above by
    /// [`ProvDocument::of`]; verify checks that it still follows from them.
    pub prov: ProvDocument,
}

impl ProvenanceRecord {
    /// The facts its PROV view is built from (everything but the view itself).
    pub fn facts(&self) -> RunFacts<'_> {
        RunFacts {
            tool: &self.tool,
            assessment: &self.assessment,
            run: &self.run,
            recipe: &self.recipe,
            inputs: &self.inputs,
            steps: &self.steps,
            outputs: &self.outputs,
        }
    }
}

/// Why the bytes of a `provenance.json` are not a record this version reads.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum RecordReadError {
    /// Not UTF-8 JSON, or JSON that does not fit the record format.
    Unreadable(String),
    /// A record of another format (`schema`), with the tool that wrote it.
    OtherFormat {
        /// The `schema` found (empty when there is none).
        found: String,
        /// `popgauge <version>` from the record, or `unknown`.
        tool: String,
    },
}

/// Parses the bytes of a `provenance.json` the way `verify` reads them: UTF-8 JSON whose
/// `schema` is [`PROVENANCE_SCHEMA`], then every member in its place (unknown members refused).
///
/// # Errors
/// [`RecordReadError`] saying what is wrong; never a panic, whatever the bytes.
pub fn parse_record(bytes: &[u8]) -> Result<ProvenanceRecord, RecordReadError> {
    let text = std::str::from_utf8(bytes).map_err(|e| RecordReadError::Unreadable(format!("it is not UTF-8 text ({e})")))?;
    let value: serde_json::Value = serde_json::from_str(text).map_err(|e| RecordReadError::Unreadable(e.to_string()))?;
    let schema = value["schema"].as_str().unwrap_or_default().to_string();
    if schema != PROVENANCE_SCHEMA {
        let tool = value["tool"]["version"].as_str().map_or("unknown".into(), |v| format!("popgauge {v}"));
        return Err(RecordReadError::OtherFormat { found: schema, tool });
    }
    serde_json::from_value(value)
        .map_err(|e| RecordReadError::Unreadable(format!("it does not fit the record format: {e}")))
}
