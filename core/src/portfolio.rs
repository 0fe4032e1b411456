//! Many assessments at once: `popgauge portfolio`.
//!
//! A portfolio reads the output folders of many cases ([`cases`]): each case's provenance
//! record is checked against the files it lists (no step is re-run) and its results give one
//! row per population ([`populations`]). From those rows it counts the indicators, writes
//! tables, typesets the portfolio document (`popgauge_report::portfolio`) and records its own
//! provenance ([`record`]), which names every case record by SHA-256 so that `popgauge verify`
//! can check it.

pub mod cases;
pub mod populations;
pub mod record;
mod tables;
pub mod verify;

use std::path::{Path, PathBuf};

use crate::dates::{CivilDate, now_rfc3339, today};
use crate::hash::sha256_hex;
use crate::output::{OutputError, OutputFiles, write_folder};
use crate::report::ReportError;
use crate::report::portfolio::{self as document, PortfolioCase, PortfolioSource};
pub use cases::{CaseOutput, CaseRef};
use record::{PortfolioRecord, Settings};

/// The thresholds the indicators count against (Frankham et al. 2014; Hoban et al. 2020).
pub const THRESHOLDS: [f64; 2] = [50.0, 500.0];
/// The default Ne/N ratio for census-based Ne: the conservative default of the Ne 500
/// indicator's guidance (Hoban et al. 2020), near the mean ratio in Frankham's (1995) review.
pub const DEFAULT_NE_NC_RATIO: f64 = 0.1;
/// The default title.
pub const DEFAULT_TITLE: &str = "Genetic status of the populations assessed";

/// Why a portfolio could not be made.
#[derive(Debug, thiserror::Error)]
pub enum PortfolioError {
    /// No case given.
    #[error(
        "no case output folders were given\n  help: name the output folders of `popgauge run` (popgauge portfolio OUT1 OUT2 … --out DIR), or list them in a CSV with --manifest FILE"
    )]
    NoCases,
    /// The manifest.
    #[error("{place}: {message}\n  help: {help}")]
    Manifest {
        /// File, and line when known.
        place: String,
        /// What is wrong.
        message: String,
        /// How to fix it.
        help: String,
    },
    /// A folder that is not an output of `popgauge run`.
    #[error(
        "{dir}: this is not a popgauge output folder (it has no provenance.json)\n  help: give the folder `popgauge run` wrote (its --out), which holds results.json and provenance.json, not the case folder"
    )]
    NotAnOutput {
        /// The folder.
        dir: String,
    },
    /// A file cannot be read or parsed.
    #[error(
        "{path}: cannot be read: {message}\n  help: run the case again with `popgauge run`, or restore the file from its copy"
    )]
    Unreadable {
        /// The file.
        path: String,
        /// What went wrong.
        message: String,
    },
    /// A record of another format.
    #[error("{path}: the record has format {found:?}{}{}\n  help: {}", if *newer { ", newer than this popgauge reads" } else { "" }, if tool == "unknown" { String::new() } else { format!(" (written by {tool})") }, if *newer { "use the popgauge version that wrote it, or a newer one" } else { "give the output folder of a `popgauge run` made with this version" })]
    OtherFormat {
        /// The record file.
        path: String,
        /// The schema found.
        found: String,
        /// The tool that wrote it.
        tool: String,
        /// Whether it is a newer version of the case record.
        newer: bool,
    },
    /// A portfolio given where a case is expected.
    #[error(
        "{path}: this is the record of a portfolio, not of a case\n  help: give the output folders of `popgauge run`; a portfolio is not read into another portfolio"
    )]
    IsPortfolio {
        /// The record file.
        path: String,
    },
    /// A case output whose files no longer match its record.
    #[error(
        "{dir}: {file} {what}; the case is refused\n  help: a portfolio reads only outputs whose provenance record still holds: run the case again with `popgauge run`, or restore the file"
    )]
    Changed {
        /// The output folder.
        dir: String,
        /// The file, relative to it.
        file: String,
        /// `is missing` or `was changed after the run …`.
        what: String,
    },
    /// The same output folder twice.
    #[error("{dir}: the same case output is given twice\n  help: name each output folder once")]
    CaseTwice {
        /// The folder.
        dir: String,
    },
    /// Two cases assess the same population of the same species.
    #[error(
        "population \"{population}\" of {species} is assessed by two cases: {first} and {second}\n  help: a population is counted once: keep one of the two outputs, or, if they are different populations, give them different names in the population sheets"
    )]
    DuplicatePopulation {
        /// The species.
        species: String,
        /// The population.
        population: String,
        /// The first case's folder.
        first: String,
        /// The second case's folder.
        second: String,
    },
    /// The output folder.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// The document.
    #[error(transparent)]
    Report(#[from] ReportError),
    /// An output folder that holds a case given as input.
    #[error(
        "{out}: the portfolio's output folder would hold the case output {case}\n  help: choose an --out folder outside the case outputs"
    )]
    OutHoldsCase {
        /// The output folder.
        out: String,
        /// The case.
        case: String,
    },
}

/// How to make a portfolio.
#[derive(Debug, Clone)]
pub struct PortfolioOptions {
    /// The case outputs, in order.
    pub cases: Vec<CaseRef>,
    /// The manifest file, when the cases came from one.
    pub manifest: Option<PathBuf>,
    /// The output folder.
    pub out: PathBuf,
    /// Replace an existing output folder.
    pub force: bool,
    /// Title; default [`DEFAULT_TITLE`].
    pub title: Option<String>,
    /// Organisation; default the one every case shares, if any.
    pub organisation: Option<String>,
    /// Date; default today.
    pub date: Option<CivilDate>,
    /// Ne/N ratio for census-based Ne.
    pub ne_nc_ratio: f64,
    /// A map of the populations, and how it shows positions.
    pub map: Option<record::MapChoice>,
}

/// What a portfolio run produced.
#[derive(Debug)]
pub struct PortfolioSummary {
    /// The document's source (populations, indicators, cases).
    pub source: PortfolioSource,
    /// Its record.
    pub record: PortfolioRecord,
}

/// Reads the cases, builds the portfolio and writes the output folder.
///
/// # Errors
/// A [`PortfolioError`] naming the case, file or setting; nothing is written then.
pub fn run_portfolio(options: &PortfolioOptions) -> Result<PortfolioSummary, PortfolioError> {
    if options.cases.is_empty() {
        return Err(PortfolioError::NoCases);
    }
    check_out(&options.out, &options.cases)?;
    if options.out.exists() && !options.force {
        return Err(OutputError::Exists { path: options.out.display().to_string() }.into());
    }
    let started = now_rfc3339();
    let cases = cases::read_cases(&options.cases)?;
    let settings = Settings {
        title: options.title.clone().unwrap_or_else(|| DEFAULT_TITLE.to_string()),
        organisation: options.organisation.clone().or_else(|| shared_organisation(&cases)),
        date: options.date.unwrap_or_else(today).to_string(),
        date_defaulted: options.date.is_none(),
        ne_nc_ratio: options.ne_nc_ratio,
        thresholds: THRESHOLDS.to_vec(),
        map: options.map,
    };
    let (source, files) = build(&cases, &settings, &options.out)?;
    let manifest = options.manifest.as_deref().map(|m| record::manifest_entry(m, &options.out)).transpose()?;
    let record = record::make(&settings, &cases, &options.out, manifest, &files, started);
    let mut files = files;
    files.push((cases::RECORD_FILE.to_string(), record::to_bytes(&record)));
    write_folder(&options.out, &files, options.force)?;
    Ok(PortfolioSummary { source, record })
}

/// Everything the portfolio writes except its record, from the cases and settings alone (so
/// `verify` can make it again and compare).
///
/// # Errors
/// [`PortfolioError::DuplicatePopulation`], or a document that cannot be typeset.
pub fn build(
    cases: &[CaseOutput],
    settings: &Settings,
    out: &Path,
) -> Result<(PortfolioSource, OutputFiles), PortfolioError> {
    let populations = populations::rows(cases, settings.ne_nc_ratio)?;
    let indicators = document::indicators::indicators(&populations, &settings.thresholds);
    let date = CivilDate::parse(&settings.date).unwrap_or_else(today);
    let case_lines: Vec<PortfolioCase> = cases
        .iter()
        .enumerate()
        .map(|(index, case)| PortfolioCase {
            output: record::case_path(out, &case.reference.dir),
            species: case.results.assessment.species.clone(),
            title: case.results.assessment.title.clone(),
            organisation: case.results.assessment.organisation.clone(),
            date: case.results.assessment.date.clone(),
            record_sha256: case.record_sha256.clone(),
            has_status: populations::status_step(&case.results).is_some(),
            populations: populations.iter().filter(|p| p.case == index).count(),
        })
        .collect();
    let fingerprint = {
        let joined: Vec<&str> = cases.iter().map(|c| c.record_sha256.as_str()).collect();
        sha256_hex(format!("{}\n{}", record::settings_line(settings), joined.join("\n")).as_bytes())[..16].to_string()
    };
    let source = PortfolioSource {
        title: settings.title.clone(),
        organisation: settings.organisation.clone(),
        date: (date.year, date.month, date.day),
        thresholds: settings.thresholds.clone(),
        ne_nc_ratio: settings.ne_nc_ratio,
        cases: case_lines,
        populations,
        indicators,
        fingerprint,
        map: settings.map.map(record::MapChoice::positions),
    };
    let mut files = tables::files(&source);
    files.extend(document::render(&source)?.into_files());
    Ok((source, files))
}

/// The organisation every case names, when they agree.
fn shared_organisation(cases: &[CaseOutput]) -> Option<String> {
    let first = cases.first()?.results.assessment.organisation.clone();
    (!first.is_empty() && cases.iter().all(|c| c.results.assessment.organisation == first)).then_some(first)
}

/// The output folder may not be, or hold, a case output.
fn check_out(out: &Path, cases: &[CaseRef]) -> Result<(), PortfolioError> {
    let out_abs = crate::pipeline::absolute_path(out);
    for case in cases {
        let case_abs = crate::pipeline::absolute_path(&case.dir);
        if case_abs.starts_with(&out_abs) {
            return Err(PortfolioError::OutHoldsCase {
                out: out.display().to_string(),
                case: case.dir.display().to_string(),
            });
        }
    }
    Ok(())
}
