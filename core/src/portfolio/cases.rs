//! Reading the case output folders a portfolio is made of: the manifest, each folder's
//! provenance record and results, and the check that the record still holds for the files.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt;
use std::path::{Path, PathBuf};

use popgauge_abi::contract::uses;
use popgauge_abi::{AssessmentInfo, StepStatus, Table};
use rayon::prelude::*;
use serde::Deserialize;
use serde::de::{self, IgnoredAny, MapAccess, Visitor};

use super::PortfolioError;
use crate::hash::sha256_hex;
use crate::provenance::record::{PROVENANCE_SCHEMA, ProvenanceRecord, RecordReadError, parse_record};
use crate::results::{GroupCount, RESULTS_FILE, RESULTS_SCHEMA};

/// The record file of an output folder.
pub const RECORD_FILE: &str = "provenance.json";

/// Manifest columns: `output` is required, the others optional.
pub const MANIFEST_COLUMNS: [&str; 3] = ["output", "species_group", "region"];

/// One case output to read, with the grouping the manifest gives it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CaseRef {
    /// The output folder.
    pub dir: PathBuf,
    /// Species group (for example `amphibians`), when the manifest gives one.
    pub species_group: Option<String>,
    /// Region, when the manifest gives one.
    pub region: Option<String>,
}

impl CaseRef {
    /// A folder named on the command line, without grouping.
    pub fn folder(dir: &Path) -> CaseRef {
        CaseRef { dir: dir.to_path_buf(), species_group: None, region: None }
    }
}

/// A case output as read and checked.
#[derive(Debug, Clone)]
pub struct CaseOutput {
    /// Where it was read from, and its grouping.
    pub reference: CaseRef,
    /// Its provenance record.
    pub record: ProvenanceRecord,
    /// SHA-256 of `provenance.json`.
    pub record_sha256: String,
    /// The parts of its results a portfolio uses.
    pub results: CaseResults,
}

/// The parts of a case's `results.json` a portfolio uses: the assessment facts, the groups
/// read, and the tables of its `status` steps. The other steps' tables (hundreds of
/// megabytes for a genomic-scale case) are skipped while parsing, so many cases fit in memory.
#[derive(Debug, Clone, Deserialize)]
pub struct CaseResults {
    /// `popgauge.results/1`.
    pub schema: String,
    /// Facts of the assessment.
    pub assessment: AssessmentInfo,
    /// What was read.
    pub data: CaseData,
    /// Each step, with tables only for `status` steps.
    pub steps: Vec<CaseStep>,
}

/// The groups a case read.
#[derive(Debug, Clone, Deserialize)]
pub struct CaseData {
    /// Samples per population and year.
    pub groups: Vec<GroupCount>,
}

/// One step of a case's results; `tables` is filled for `status` steps only.
#[derive(Debug, Clone)]
pub struct CaseStep {
    /// The step id.
    pub id: String,
    /// Its `uses`.
    pub uses: String,
    /// Whether it completed.
    pub status: StepStatus,
    /// Its tables (status steps only).
    pub tables: BTreeMap<String, Table>,
}

impl<'de> Deserialize<'de> for CaseStep {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<CaseStep, D::Error> {
        struct StepVisitor;
        impl<'de> Visitor<'de> for StepVisitor {
            type Value = CaseStep;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a step's results")
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<CaseStep, A::Error> {
                let (mut id, mut step_uses, mut status, mut tables) = (None, None::<String>, None, BTreeMap::new());
                while let Some(key) = map.next_key::<String>()? {
                    match key.as_str() {
                        "id" => id = Some(map.next_value()?),
                        "uses" => step_uses = Some(map.next_value()?),
                        "status" => status = Some(map.next_value()?),
                        // popgauge writes `uses` before `tables`.
                        "tables" if step_uses.as_deref() == Some(uses::STATUS) => tables = map.next_value()?,
                        _ => {
                            map.next_value::<IgnoredAny>()?;
                        }
                    }
                }
                Ok(CaseStep {
                    id: id.ok_or_else(|| de::Error::missing_field("id"))?,
                    uses: step_uses.ok_or_else(|| de::Error::missing_field("uses"))?,
                    status: status.ok_or_else(|| de::Error::missing_field("status"))?,
                    tables,
                })
            }
        }
        deserializer.deserialize_map(StepVisitor)
    }
}

impl CaseOutput {
    /// How messages name the case: its folder as given.
    pub fn shown(&self) -> String {
        self.reference.dir.display().to_string()
    }
}

/// Reads the manifest: a CSV with an `output` column (folders relative to the manifest's own
/// folder) and optional `species_group` and `region` columns.
///
/// # Errors
/// [`PortfolioError::Manifest`] naming the file, line and column: unreadable, no `output`
/// column, an unknown column, an empty `output` cell, a folder listed twice, no rows.
pub fn read_manifest(path: &Path) -> Result<Vec<CaseRef>, PortfolioError> {
    let shown = path.display().to_string();
    let fail = |line: Option<u64>, message: String, help: &str| PortfolioError::Manifest {
        place: line.map_or(shown.clone(), |l| format!("{shown}:{l}")),
        message,
        help: help.to_string(),
    };
    let bytes = std::fs::read(path)
        .map_err(|e| fail(None, format!("cannot read it: {e}"), "check the path given to --manifest"))?;
    let mut reader = csv::ReaderBuilder::new().flexible(false).from_reader(bytes.as_slice());
    let headers = reader
        .headers()
        .map_err(|e| fail(Some(1), format!("the header row cannot be read: {e}"), "save the manifest as UTF-8 CSV"))?
        .clone();
    let names: Vec<String> = headers.iter().map(|h| h.trim().to_string()).collect();
    let known = MANIFEST_COLUMNS.join(", ");
    if let Some(unknown) = names.iter().find(|n| !MANIFEST_COLUMNS.contains(&n.as_str())) {
        return Err(fail(
            Some(1),
            format!("unknown column `{unknown}`"),
            &format!("the manifest's columns are {known}"),
        ));
    }
    let column = |name: &str| names.iter().position(|n| n == name);
    let output = column("output").ok_or_else(|| {
        fail(
            Some(1),
            "there is no `output` column".into(),
            "the first row names the columns: output (required), species_group, region",
        )
    })?;
    let (group, region) = (column("species_group"), column("region"));
    let base = path.parent().unwrap_or(Path::new(""));
    let mut cases: Vec<CaseRef> = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map(|p| p.line());
            fail(line, format!("the row cannot be read: {e}"), "every row has one cell per column of the header")
        })?;
        let line = record.position().map(|p| p.line());
        let cell = |index: Option<usize>| {
            index.and_then(|i| record.get(i)).map(str::trim).filter(|t| !t.is_empty()).map(str::to_string)
        };
        let Some(folder) = cell(Some(output)) else {
            return Err(fail(
                line,
                "the `output` cell is empty".into(),
                "give the output folder of a case, relative to the manifest",
            ));
        };
        let dir = base.join(&folder);
        if cases.iter().any(|c| c.dir == dir) {
            return Err(fail(
                line,
                format!("the output folder {folder} is listed twice"),
                "list each case output once",
            ));
        }
        cases.push(CaseRef { dir, species_group: cell(group), region: cell(region) });
    }
    if cases.is_empty() {
        return Err(fail(
            None,
            "the manifest lists no case".into(),
            "add one row per case output folder under the header `output`",
        ));
    }
    Ok(cases)
}

/// Reads every case, in parallel; the first error in the given order is returned.
///
/// # Errors
/// The first case's [`PortfolioError`].
pub fn read_cases(references: &[CaseRef]) -> Result<Vec<CaseOutput>, PortfolioError> {
    let mut seen = BTreeSet::new();
    for reference in references {
        let key = reference.dir.canonicalize().unwrap_or_else(|_| reference.dir.clone());
        if !seen.insert(key) {
            return Err(PortfolioError::CaseTwice { dir: reference.dir.display().to_string() });
        }
    }
    references.par_iter().map(read_case).collect()
}

/// Reads one case output and checks that its record holds: every output file it lists is
/// there with the recorded size and SHA-256. Nothing is re-run.
///
/// # Errors
/// [`PortfolioError`] naming the folder: not an output folder, a record of another format,
/// a missing or changed file.
pub fn read_case(reference: &CaseRef) -> Result<CaseOutput, PortfolioError> {
    let dir = &reference.dir;
    let shown = dir.display().to_string();
    let record_path = dir.join(RECORD_FILE);
    if !dir.is_dir() || !record_path.is_file() {
        return Err(PortfolioError::NotAnOutput { dir: shown });
    }
    let bytes = std::fs::read(&record_path)
        .map_err(|e| PortfolioError::Unreadable { path: record_path.display().to_string(), message: e.to_string() })?;
    let record = match parse_record(&bytes) {
        Ok(record) => record,
        Err(RecordReadError::OtherFormat { found, tool }) => {
            return Err(other_format(&record_path, &found, &tool));
        }
        Err(RecordReadError::Unreadable(message)) => {
            return Err(PortfolioError::Unreadable { path: record_path.display().to_string(), message });
        }
    };
    let mut results_bytes = None;
    for entry in &record.outputs {
        let path = dir.join(&entry.path);
        let Ok(content) = std::fs::read(&path) else {
            return Err(PortfolioError::Changed { dir: shown, file: entry.path.clone(), what: "is missing".into() });
        };
        if content.len() as u64 != entry.size || sha256_hex(&content) != entry.sha256 {
            return Err(PortfolioError::Changed {
                dir: shown,
                file: entry.path.clone(),
                what: "was changed after the run (its SHA-256 differs from the one in provenance.json)".into(),
            });
        }
        if entry.path == RESULTS_FILE {
            results_bytes = Some(content);
        }
    }
    let results_path = dir.join(RESULTS_FILE).display().to_string();
    let Some(results_bytes) = results_bytes else {
        return Err(PortfolioError::Unreadable {
            path: record_path.display().to_string(),
            message: format!("the record lists no {RESULTS_FILE} among its outputs"),
        });
    };
    let results: CaseResults = serde_json::from_slice(&results_bytes)
        .map_err(|e| PortfolioError::Unreadable { path: results_path.clone(), message: e.to_string() })?;
    if results.schema != RESULTS_SCHEMA {
        return Err(PortfolioError::Unreadable {
            path: results_path,
            message: format!("its format is {:?}, but this popgauge reads {RESULTS_SCHEMA:?}", results.schema),
        });
    }
    Ok(CaseOutput { reference: reference.clone(), record, record_sha256: sha256_hex(&bytes), results })
}

/// The error for a record of a format this version does not read as a case.
fn other_format(path: &Path, found: &str, tool: &str) -> PortfolioError {
    let path = path.display().to_string();
    if found == super::record::PORTFOLIO_SCHEMA {
        return PortfolioError::IsPortfolio { path };
    }
    let newer = found
        .strip_prefix("popgauge.provenance/")
        .and_then(|v| v.parse::<u32>().ok())
        .zip(PROVENANCE_SCHEMA.strip_prefix("popgauge.provenance/").and_then(|v| v.parse::<u32>().ok()))
        .is_some_and(|(found, ours)| found > ours);
    PortfolioError::OtherFormat { path, found: found.to_string(), tool: tool.to_string(), newer }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn manifest(text: &str) -> (tempfile::TempDir, PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("manifest.csv");
        std::fs::write(&path, text).unwrap();
        (dir, path)
    }

    #[test]
    fn manifest_rows_resolve_against_its_folder_and_keep_groups() {
        let (dir, path) = manifest("output,species_group,region\nnewt/out,amphibians,North\nmussel/out,,\n");
        let cases = read_manifest(&path).unwrap();
        assert_eq!(cases.len(), 2);
        assert_eq!(cases[0].dir, dir.path().join("newt/out"));
        assert_eq!(cases[0].species_group.as_deref(), Some("amphibians"));
        assert_eq!(cases[0].region.as_deref(), Some("North"));
        assert_eq!(cases[1].species_group, None);
    }

    #[test]
    fn manifest_errors_name_file_line_and_fix() {
        let (_dir, path) = manifest("output\n");
        let err = read_manifest(&path).unwrap_err().to_string();
        assert!(err.contains("manifest.csv: the manifest lists no case"), "{err}");
        assert!(err.contains("help: add one row"), "{err}");

        let (_dir, path) = manifest("output,colour\na,red\n");
        let err = read_manifest(&path).unwrap_err().to_string();
        assert!(err.contains("manifest.csv:1: unknown column `colour`"), "{err}");

        let (_dir, path) = manifest("folder\na\n");
        assert!(read_manifest(&path).unwrap_err().to_string().contains("unknown column `folder`"));

        let (_dir, path) = manifest("output,region\na,North\n,South\n");
        let err = read_manifest(&path).unwrap_err().to_string();
        assert!(err.contains("manifest.csv:3: the `output` cell is empty"), "{err}");

        let (_dir, path) = manifest("output\na\na\n");
        assert!(
            read_manifest(&path)
                .unwrap_err()
                .to_string()
                .contains("manifest.csv:3: the output folder a is listed twice")
        );
    }

    /// Only the tables of `status` steps are kept; every other step's tables are skipped, and
    /// a step's other members are read as written.
    #[test]
    fn only_status_tables_are_kept_from_the_results() {
        let mut table = Table::new(&["population", "ne"]);
        table.push_row(vec![popgauge_abi::Cell::text("North"), popgauge_abi::Cell::Num(120.0)]).unwrap();
        let table = serde_json::to_value(&table).unwrap();
        let steps = serde_json::json!([
            {"id": "d", "uses": "diversity", "version": "0.1.0", "status": "ok", "tables": {"by_group": table}, "findings": [], "citations": []},
            {"id": "s", "uses": "status", "version": "0.1.0", "status": "ok", "tables": {"populations": table}, "findings": [], "citations": []},
        ]);
        let steps: Vec<CaseStep> = serde_json::from_value(steps).unwrap();
        assert_eq!((steps[0].id.as_str(), steps[0].tables.len()), ("d", 0));
        assert_eq!((steps[1].uses.as_str(), steps[1].status), ("status", StepStatus::Ok));
        let populations = &steps[1].tables["populations"];
        assert_eq!(populations.named_rows().next().unwrap().number("ne"), Some(120.0));
    }

    #[test]
    fn a_folder_without_a_record_is_not_an_output() {
        let dir = tempfile::tempdir().unwrap();
        let err = read_case(&CaseRef::folder(dir.path())).unwrap_err().to_string();
        assert!(err.contains("is not a popgauge output folder"), "{err}");
        assert!(err.contains("help:"), "{err}");
    }

    #[test]
    fn a_newer_record_format_is_named_as_such() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(
            dir.path().join(RECORD_FILE),
            r#"{"schema": "popgauge.provenance/7", "tool": {"version": "9.0.0"}}"#,
        )
        .unwrap();
        let err = read_case(&CaseRef::folder(dir.path())).unwrap_err().to_string();
        assert!(err.contains("popgauge.provenance/7"), "{err}");
        assert!(err.contains("newer"), "{err}");
        assert!(err.contains("popgauge 9.0.0"), "{err}");
    }
}
