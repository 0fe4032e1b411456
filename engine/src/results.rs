//! The results document (`results.json`) and the per-table CSV files.

use std::fmt::Write as _;

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use popgauge_abi::{AssessmentInfo, Finding, StepResult, Table};

use crate::data::LoadedData;
pub use crate::data::loci::LocusInfo;
use crate::engine::EngineOutput;

/// Schema identifier written into every results document.
pub const RESULTS_SCHEMA: &str = "popgauge.results/1";

/// The tool that produced the results.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ToolName {
    /// Always `popgauge`.
    pub name: String,
    /// Semantic version.
    pub version: String,
}

/// Sample count of one group as read (before any exclusion).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct GroupCount {
    /// Population.
    pub population: String,
    /// Year.
    pub year: i32,
    /// Samples read.
    pub n: usize,
}

/// What was read, before any step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct DataSummary {
    /// Genotype file (relative to the case folder).
    pub genotypes: String,
    /// Samples read.
    pub samples: usize,
    /// Loci read.
    pub loci: usize,
    /// Groups read.
    pub groups: Vec<GroupCount>,
    /// Findings made while reading.
    pub findings: Vec<Finding>,
    /// Rows of the locus sheet, in file order, when the recipe names one.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub locus_sheet: Vec<LocusInfo>,
}

/// `results.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "popgauge results (results.json)")]
pub struct ResultsDocument {
    /// `popgauge.results/1`.
    pub schema: String,
    /// The tool.
    pub tool: ToolName,
    /// Facts of the assessment.
    pub assessment: AssessmentInfo,
    /// What was read.
    pub data: DataSummary,
    /// Each step's results in recipe order.
    pub steps: Vec<StepResult>,
}

impl ResultsDocument {
    /// Every finding with its source (`input` for the readers, else the step id). A finding a
    /// step repeats from the readers (validate reports the bad cells it was given), with the
    /// same level, code, message and place, is listed once, under its first source: the
    /// command line and the document count findings the same way.
    pub fn distinct_findings(&self) -> Vec<(String, &Finding)> {
        let mut seen = std::collections::BTreeSet::new();
        self.data
            .findings
            .iter()
            .map(|f| ("input".to_string(), f))
            .chain(self.steps.iter().flat_map(|s| s.findings.iter().map(move |f| (s.id.clone(), f))))
            .filter(|(_, f)| seen.insert((f.level, f.code.clone(), f.message.clone(), format!("{:?}", f.location))))
            .collect()
    }

    /// Assembles the document.
    pub fn new(genotypes_file: &str, data: &LoadedData, engine: &EngineOutput) -> ResultsDocument {
        ResultsDocument::with_steps(genotypes_file, data, &engine.assessment, engine.results.clone())
    }

    /// [`ResultsDocument::new`] taking the step results by value (a run hands over its results
    /// rather than copying the large tables).
    pub fn with_steps(
        genotypes_file: &str,
        data: &LoadedData,
        assessment: &AssessmentInfo,
        steps: Vec<StepResult>,
    ) -> ResultsDocument {
        let all_samples = data.matrix.all_sample_indices();
        let all_loci = data.matrix.all_locus_indices();
        let view = data.matrix.full_view(&all_samples, &all_loci);
        let groups = view
            .groups()
            .into_iter()
            .map(|g| GroupCount { population: g.population, year: g.year, n: g.samples.len() })
            .collect();
        ResultsDocument {
            schema: RESULTS_SCHEMA.into(),
            tool: ToolName { name: "popgauge".into(), version: env!("CARGO_PKG_VERSION").into() },
            assessment: assessment.clone(),
            data: DataSummary {
                genotypes: genotypes_file.into(),
                samples: data.matrix.samples().len(),
                loci: data.matrix.loci().len(),
                groups,
                findings: data.findings.clone(),
                locus_sheet: data.loci.clone(),
            },
            steps,
        }
    }

    /// Every table as (`tables/<step>.<table>.csv`, CSV bytes), in step then table order.
    pub fn table_files(&self) -> Vec<(String, Vec<u8>)> {
        use rayon::prelude::*;
        let tables: Vec<(&str, &str, &Table)> = self
            .steps
            .iter()
            .flat_map(|step| step.tables.iter().map(move |(name, table)| (step.id.as_str(), name.as_str(), table)))
            .collect();
        // Independent tables are written side by side; `collect` keeps their order.
        tables.into_par_iter().map(|(step, name, table)| (table_file(step, name), table_csv(table))).collect()
    }
}

/// The results file in the output folder.
pub const RESULTS_FILE: &str = "results.json";

/// Where the output folder holds table `table` of step `step`: `tables/<step>.<table>.csv`.
pub fn table_file(step: &str, table: &str) -> String {
    format!("tables/{step}.{table}.csv")
}

/// A table as CSV: header row, then rows; numbers through the one formatter, null empty.
pub fn table_csv(table: &Table) -> Vec<u8> {
    let mut writer = csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    // Writing to memory cannot fail except on allocation failure.
    let _ = writer.write_record(&table.columns);
    // One text buffer for every cell, rather than a string per cell.
    let mut cell_text = String::new();
    for row in &table.rows {
        for cell in row {
            cell_text.clear();
            let _ = write!(cell_text, "{cell}");
            let _ = writer.write_field(&cell_text);
        }
        let _ = writer.write_record(None::<&[u8]>);
    }
    writer.into_inner().unwrap_or_default()
}
