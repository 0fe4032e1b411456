//! Reading the case output folders a portfolio is made of: the manifest, each folder's
//! provenance record and results, and the check that the record still holds for the files.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use rayon::prelude::*;

use super::PortfolioError;
use crate::hash::sha256_hex;
use crate::provenance::record::{PROVENANCE_SCHEMA, ProvenanceRecord, RecordReadError, parse_record};
use crate::results::{RESULTS_FILE, ResultsDocument};

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
    /// Its results.
    pub results: ResultsDocument,
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
    }
    if !record.outputs.iter().any(|e| e.path == RESULTS_FILE) {
        return Err(PortfolioError::Unreadable {
            path: record_path.display().to_string(),
            message: format!("the record lists no {RESULTS_FILE} among its outputs"),
        });
    }
    let results_path = dir.join(RESULTS_FILE);
    let results_bytes = std::fs::read(&results_path)
        .map_err(|e| PortfolioError::Unreadable { path: results_path.display().to_string(), message: e.to_string() })?;
    let results: ResultsDocument = serde_json::from_slice(&results_bytes)
        .map_err(|e| PortfolioError::Unreadable { path: results_path.display().to_string(), message: e.to_string() })?;
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
