//! The portfolio's provenance record (`provenance.json` of its output folder): its settings,
//! every case record it read (path and SHA-256), every file it wrote, and the same facts in
//! W3C PROV terms (PROV-JSON).

use std::collections::BTreeMap;
use std::path::Path;

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use super::PortfolioError;
use super::cases::{CaseOutput, RECORD_FILE};
use crate::hash::sha256_hex;
use crate::output::OutputFiles;
use crate::provenance::prov::{POPGAUGE_NAMESPACE, PROV_NAMESPACE};
use crate::provenance::record::{FileEntry, ToolBuild};

/// Schema identifier of a portfolio record.
pub const PORTFOLIO_SCHEMA: &str = "popgauge.portfolio-provenance/1";

/// The settings a portfolio was made with: with the same cases they give the same files.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Settings {
    /// Title.
    pub title: String,
    /// Organisation.
    pub organisation: Option<String>,
    /// Date `YYYY-MM-DD`.
    pub date: String,
    /// Whether the date was today's by default.
    pub date_defaulted: bool,
    /// Ne/N ratio of census-based Ne.
    pub ne_nc_ratio: f64,
    /// Thresholds.
    pub thresholds: Vec<f64>,
    /// The map, when asked for.
    #[serde(default)]
    pub map: Option<MapChoice>,
}

/// How the portfolio's map shows positions.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields, tag = "positions", rename_all = "lowercase")]
pub enum MapChoice {
    /// Generalised to a grid of `grid_km` cells.
    Grid {
        /// Cell width in km.
        grid_km: f64,
    },
    /// Exact positions.
    Exact,
}

impl MapChoice {
    /// The renderer's setting.
    pub fn positions(self) -> crate::report::figures::map::Positions {
        use crate::report::figures::map::Positions;
        match self {
            MapChoice::Grid { grid_km } => Positions::Grid { cell_km: grid_km },
            MapChoice::Exact => Positions::Exact,
        }
    }
}

/// One case as read.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CaseEntry {
    /// The output folder, relative to the portfolio's output folder.
    pub output: String,
    /// SHA-256 of its `provenance.json`.
    pub record_sha256: String,
    /// Its species.
    pub species: String,
    /// Species group from the manifest.
    pub species_group: Option<String>,
    /// Region from the manifest.
    pub region: Option<String>,
}

/// The run.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PortfolioRun {
    /// Start, UTC.
    pub started: String,
    /// End, UTC.
    pub ended: String,
}

/// The record of a portfolio: what it read, how, and what it wrote.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "popgauge portfolio provenance record (provenance.json of a portfolio)")]
pub struct PortfolioRecord {
    /// `popgauge.portfolio-provenance/1`.
    pub schema: String,
    /// The tool build.
    pub tool: ToolBuild,
    /// The settings.
    pub settings: Settings,
    /// The run.
    pub run: PortfolioRun,
    /// The manifest file, when one was given (path relative to the output folder).
    pub manifest: Option<FileEntry>,
    /// The cases, in order.
    pub cases: Vec<CaseEntry>,
    /// Every output file except this record.
    pub outputs: Vec<FileEntry>,
    /// The same facts in W3C PROV terms, derived by [`prov`].
    pub prov: serde_json::Value,
}

/// The schema of the record, as (file name under `schemas/`, pretty JSON with a final line break).
pub fn schema() -> (&'static str, String) {
    let schema = schemars::schema_for!(PortfolioRecord);
    ("portfolio-provenance.schema.json", format!("{}\n", serde_json::to_string_pretty(&schema).unwrap_or_default()))
}

/// The settings as one line for the fingerprint.
pub fn settings_line(settings: &Settings) -> String {
    serde_json::to_string(settings).unwrap_or_default()
}

/// A path as the record names it: relative to the portfolio's output folder.
pub fn case_path(out: &Path, dir: &Path) -> String {
    let out = crate::pipeline::absolute_path(out);
    crate::pipeline::relative_path(&out, &crate::pipeline::absolute_path(dir))
}

/// The manifest's entry (path relative to the portfolio's output folder).
///
/// # Errors
/// [`PortfolioError::Manifest`] when it cannot be read.
pub fn manifest_entry(path: &Path, out: &Path) -> Result<FileEntry, PortfolioError> {
    let bytes = std::fs::read(path).map_err(|e| PortfolioError::Manifest {
        place: path.display().to_string(),
        message: format!("cannot read it: {e}"),
        help: "check the path given to --manifest".into(),
    })?;
    Ok(FileEntry {
        role: "manifest".into(),
        path: case_path(out, path),
        size: bytes.len() as u64,
        sha256: sha256_hex(&bytes),
    })
}

fn output_role(path: &str) -> &'static str {
    if path.starts_with("tables/") {
        "table"
    } else if path.starts_with("figures/") {
        "figure"
    } else if path.ends_with(".pdf") {
        "report"
    } else {
        "report-source"
    }
}

/// The record of a portfolio made from `cases` into `out`.
pub fn make(
    settings: &Settings,
    cases: &[CaseOutput],
    out: &Path,
    manifest: Option<FileEntry>,
    files: &OutputFiles,
    started: String,
) -> PortfolioRecord {
    let cases = cases
        .iter()
        .map(|case| CaseEntry {
            output: case_path(out, &case.reference.dir),
            record_sha256: case.record_sha256.clone(),
            species: case.results.assessment.species.clone(),
            species_group: case.reference.species_group.clone(),
            region: case.reference.region.clone(),
        })
        .collect::<Vec<_>>();
    let outputs = outputs(files);
    let tool = ToolBuild::current();
    let prov = prov(&tool, &cases, manifest.as_ref(), &outputs);
    PortfolioRecord {
        schema: PORTFOLIO_SCHEMA.into(),
        tool,
        settings: settings.clone(),
        run: PortfolioRun { started, ended: crate::dates::now_rfc3339() },
        manifest,
        cases,
        outputs,
        prov,
    }
}

/// The entries of the written files, by path.
pub fn outputs(files: &OutputFiles) -> Vec<FileEntry> {
    let mut entries: Vec<FileEntry> = files
        .iter()
        .map(|(path, bytes)| FileEntry {
            role: output_role(path).into(),
            path: path.clone(),
            size: bytes.len() as u64,
            sha256: sha256_hex(bytes),
        })
        .collect();
    entries.sort_by(|a, b| a.path.cmp(&b.path));
    entries
}

/// The record as pretty JSON with a final line break.
pub fn to_bytes(record: &PortfolioRecord) -> Vec<u8> {
    let mut bytes = serde_json::to_vec_pretty(record).unwrap_or_default();
    bytes.push(b'\n');
    bytes
}

/// The PROV-JSON view: the portfolio activity used every case record (and the manifest) and
/// generated every output; the tool is associated with it.
pub fn prov(
    tool: &ToolBuild,
    cases: &[CaseEntry],
    manifest: Option<&FileEntry>,
    outputs: &[FileEntry],
) -> serde_json::Value {
    use serde_json::json;
    let mut entity = BTreeMap::new();
    let mut used = BTreeMap::new();
    let mut generated = BTreeMap::new();
    for case in cases {
        let id = format!("popgauge:case/{}", case.output);
        entity.insert(id.clone(), json!({"prov:type": "popgauge:case-record", "popgauge:path": format!("{}/{RECORD_FILE}", case.output), "popgauge:sha256": case.record_sha256, "popgauge:species": case.species}));
        used.insert(
            format!("_:used/{}", case.output),
            json!({"prov:activity": "popgauge:portfolio", "prov:entity": id}),
        );
    }
    if let Some(manifest) = manifest {
        let id = format!("popgauge:input/{}", manifest.path);
        entity.insert(id.clone(), json!({"prov:type": "popgauge:manifest", "popgauge:sha256": manifest.sha256}));
        used.insert("_:used/manifest".to_string(), json!({"prov:activity": "popgauge:portfolio", "prov:entity": id}));
    }
    for output in outputs {
        let id = format!("popgauge:output/{}", output.path);
        entity.insert(
            id.clone(),
            json!({"prov:type": format!("popgauge:{}", output.role), "popgauge:sha256": output.sha256}),
        );
        generated.insert(
            format!("_:generation/{}", output.path),
            json!({"prov:entity": id, "prov:activity": "popgauge:portfolio"}),
        );
    }
    json!({
        "prefix": {"popgauge": POPGAUGE_NAMESPACE, "prov": PROV_NAMESPACE},
        "entity": entity,
        "activity": {"popgauge:portfolio": {"prov:type": "popgauge:portfolio"}},
        "agent": {"popgauge:tool": {"prov:type": "prov:SoftwareAgent", "popgauge:version": tool.version, "popgauge:commit": tool.commit}},
        "used": used,
        "wasGeneratedBy": generated,
        "wasAssociatedWith": {"_:association/tool": {"prov:activity": "popgauge:portfolio", "prov:agent": "popgauge:tool"}},
    })
}

/// Reads a portfolio record.
///
/// # Errors
/// A message saying what does not fit.
pub fn parse(bytes: &[u8]) -> Result<PortfolioRecord, String> {
    serde_json::from_slice(bytes).map_err(|e| format!("it does not fit the portfolio record format: {e}"))
}
