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
