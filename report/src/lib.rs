//! The typeset assessment document: `assessment.pdf`, with its editable source.
//!
//! From the results of a run, [`render`] builds the document data ([`document`]), draws the
//! charts ([`figures`]), and typesets a Typst template ([`template`], [`typst`]) into a PDF/A-2b
//! file. Beside the PDF it returns the template (`assessment.typ`), the data
//! (`assessment.json`) and the charts (`figures/*.svg`), so a consultant can edit the wording
//! and typeset again with [`typeset_folder`] (`popgauge typeset DIR`).
//!
//! The same results, template and tool version give the same PDF bytes (the document's date is
//! the assessment date; nothing reads the clock), so the PDF's SHA-256 in `provenance.json`
//! can be checked by re-running.
//!
//! ```no_run
//! # use popgauge_report::{render, template::Template, ReportSource};
//! # fn demo(source: &ReportSource<'_>) -> Result<(), popgauge_report::ReportError> {
//! let report = render(source, &Template::standard())?;
//! std::fs::write("assessment.pdf", &report.pdf).ok();
//! # Ok(()) }
//! ```
#![warn(missing_docs)]

pub mod contract;
pub mod document;
pub mod figures;
pub mod format;
pub mod portfolio;
pub mod template;
pub mod typst;

use std::path::Path;

use popgauge_engine::engine::StepRun;
use popgauge_engine::results::ResultsDocument;
use template::Template;

/// The document's file name in the output folder.
pub const PDF_FILE: &str = "assessment.pdf";
/// The document data's file name in the output folder.
pub const DATA_FILE: &str = "assessment.json";
/// The folder of the charts in the output folder.
pub const FIGURES_FOLDER: &str = "figures";

/// Why the document could not be made.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A template file or folder cannot be read.
    #[error("{path}: cannot read the template: {source}\n  help: check that the folder exists and is readable")]
    TemplateUnreadable {
        /// The path.
        path: String,
        /// The I/O error.
        source: std::io::Error,
    },
    /// The template folder has no main file.
    #[error(
        "{folder}: the template folder has no assessment.typ\n  help: a template folder holds the main file assessment.typ (copy templates/standard/assessment.typ to start)"
    )]
    TemplateNoMain {
        /// The folder.
        folder: String,
    },
    /// The template folder is too large.
    #[error(
        "{folder}: the template folder holds more than {max_files} files or {max_megabytes} MB\n  help: keep only the template's own files (Typst sources, images) in the folder"
    )]
    TemplateTooLarge {
        /// The folder.
        folder: String,
        /// File limit.
        max_files: usize,
        /// Size limit.
        max_megabytes: u64,
    },
    /// A template file is named like an output.
    #[error(
        "{file}: a template file may not be named like an output of the run\n  help: rename it; assessment.pdf, assessment.json, results.json, provenance.json, tables/ and figures/ are written by popgauge"
    )]
    TemplateClash {
        /// The file.
        file: String,
    },
    /// A `.typ` file that is not UTF-8 text.
    #[error("{file}: the Typst source is not UTF-8 text\n  help: save the file as UTF-8")]
    TemplateNotUtf8 {
        /// The file.
        file: String,
    },
    /// The template does not compile.
    #[error("{}: the document template does not compile: {message}{}{}\n  help: fix the Typst code there and run again; `popgauge typeset OUT` typesets an edited output folder without re-running the steps",
        location(file, *line, *column),
        hints.iter().map(|h| format!("\n  hint: {h}")).collect::<String>(),
        if *more > 0 { format!("\n  ({more} more error(s) after this one)") } else { String::new() })]
    Compile {
        /// Template file as shown to the user.
        file: String,
        /// 1-based line.
        line: Option<usize>,
        /// 1-based column (characters).
        column: Option<usize>,
        /// What Typst said.
        message: String,
        /// Typst's hints.
        hints: Vec<String>,
        /// Further errors not shown.
        more: usize,
    },
    /// The PDF could not be written.
    #[error("the document could not be written as {standard}: {message}\n  help: remove what the message names from the custom template; the standard template always keeps to {standard}", standard = typst::PDF_STANDARD)]
    Pdf {
        /// What went wrong.
        message: String,
    },
    /// A chart could not be drawn.
    #[error("{0}\n  help: this is a defect in popgauge; please report it with the results.json of the run")]
    Figure(#[from] figures::FigureError),
    /// The document data of an output folder cannot be read.
    #[error(
        "{path}: cannot read the document data: {message}\n  help: `popgauge typeset DIR` needs the assessment.json that `popgauge run` wrote into DIR; if you edited it, check the JSON at that position"
    )]
    DataUnreadable {
        /// The file.
        path: String,
        /// What went wrong (with line and column for JSON errors).
        message: String,
    },
}

fn location(file: &str, line: Option<usize>, column: Option<usize>) -> String {
    match (line, column) {
        (Some(l), Some(c)) => format!("{file}:{l}:{c}"),
        (Some(l), None) => format!("{file}:{l}"),
        _ => file.to_string(),
    }
}

/// A file that went in, for the provenance appendix.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileFacts {
    /// `recipe`, `genotypes`, `populations`, `template`.
    pub role: String,
    /// Path relative to the case folder.
    pub path: String,
    /// Size in bytes.
    pub size: u64,
    /// SHA-256.
    pub sha256: String,
}

/// Everything the document is made from.
#[derive(Debug, Clone)]
pub struct ReportSource<'a> {
    /// The results.
    pub results: &'a ResultsDocument,
    /// The steps as they ran (parameters, seeds, hashes).
    pub runs: &'a [StepRun],
    /// The recipe file.
    pub recipe: FileFacts,
    /// The input files.
    pub inputs: Vec<FileFacts>,
    /// The case fingerprint (printed on the title page).
    pub fingerprint: &'a str,
    /// The map of the populations the recipe asks for (`[report.map]`); `None`: no map.
    pub map: Option<popgauge_engine::recipe::MapPositions>,
}

/// The document and its editable source.
#[derive(Debug, Clone)]
pub struct Report {
    /// `assessment.pdf`.
    pub pdf: Vec<u8>,
    /// `assessment.json`.
    pub data: Vec<u8>,
    /// `figures/<key>.svg` as (key, SVG bytes).
    pub figures: Vec<(String, Vec<u8>)>,
    /// The template's files (`assessment.typ`, …) for the output folder.
    pub template_files: Vec<(String, Vec<u8>)>,
}

impl Report {
    /// The files for the output folder, relative to it.
    pub fn into_files(self) -> Vec<(String, Vec<u8>)> {
        let mut files = vec![(PDF_FILE.to_string(), self.pdf), (DATA_FILE.to_string(), self.data)];
        files.extend(self.template_files);
        files.extend(self.figures.into_iter().map(|(key, svg)| (format!("{FIGURES_FOLDER}/{key}.svg"), svg)));
        files
    }
}

/// The provenance role of an output file the document adds: `report` for the PDF, `figure`
/// for a chart, `report-source` for the template and its data; `None` for other outputs.
pub fn output_role(path: &str) -> Option<&'static str> {
    if path == PDF_FILE {
        Some("report")
    } else if path.starts_with(&format!("{FIGURES_FOLDER}/")) {
        Some("figure")
    } else if path == DATA_FILE || path.ends_with(".typ") {
        Some("report-source")
    } else {
        None
    }
}

/// Builds the document of a run.
///
/// # Errors
/// A [`ReportError`]: a custom template that does not compile (with file and line), or a
/// template file named like an output.
pub fn render(source: &ReportSource<'_>, template: &Template) -> Result<Report, ReportError> {
    let built = document::build(source);
    let figures = built
        .figures
        .iter()
        .map(|(key, figure, _)| Ok((key.clone(), figures::render(key, figure)?.into_bytes())))
        .collect::<Result<Vec<_>, ReportError>>()?;
    let mut value =
        serde_json::to_value(&built.data).map_err(|e| ReportError::Pdf { message: format!("document data: {e}") })?;
    escape_control_characters(&mut value);
    let mut data =
        serde_json::to_vec_pretty(&value).map_err(|e| ReportError::Pdf { message: format!("document data: {e}") })?;
    data.push(b'\n');
    let assessment = &built.data.assessment;
    let ident = format!("assessment-{}", source.fingerprint);
    let pdf = typst::typeset(&typst::TypesetJob {
        template,
        main: template::MAIN_FILE,
        data_file: DATA_FILE,
        data: &data,
        figures: &figures,
        date: (assessment.year, assessment.month, assessment.day),
        ident: &ident,
    })?;
    Ok(Report { pdf, data, figures, template_files: template.output_files()? })
}

/// Writes control characters other than line break and tab in every string of the document
/// data as escapes (`\u{0}`): text from the data files (a finding quoting a damaged record, for
/// instance) must print, and no font of an archival PDF has glyphs for them.
fn escape_control_characters(value: &mut serde_json::Value) {
    match value {
        serde_json::Value::String(text) if text.chars().any(|c| c.is_control() && c != '\n' && c != '\t') => {
            *text = text
                .chars()
                .map(|c| {
                    if c.is_control() && c != '\n' && c != '\t' {
                        c.escape_default().to_string()
                    } else {
                        c.to_string()
                    }
                })
                .collect();
        }
        serde_json::Value::Array(items) => items.iter_mut().for_each(escape_control_characters),
        serde_json::Value::Object(members) => members.values_mut().for_each(escape_control_characters),
        _ => {}
    }
}

/// Typesets an output folder again after its `assessment.typ` (or `assessment.json`, or a
/// chart) was edited, and returns the PDF bytes.
///
/// # Errors
/// A [`ReportError`] naming the file: missing or broken `assessment.json`, a template that
/// does not compile.
pub fn typeset_folder(dir: &Path) -> Result<Vec<u8>, ReportError> {
    let shown = dir.display().to_string();
    let template = Template::from_folder(dir, &shown, &template::is_output_name)?;
    let data_path = dir.join(DATA_FILE);
    let unreadable = |message: String| ReportError::DataUnreadable { path: data_path.display().to_string(), message };
    let data = std::fs::read(&data_path).map_err(|e| unreadable(e.to_string()))?;
    let value: serde_json::Value = serde_json::from_slice(&data).map_err(|e| unreadable(e.to_string()))?;
    let number = |key: &str| value["assessment"][key].as_i64();
    let date = match (number("year"), number("month"), number("day")) {
        (Some(y), Some(m), Some(d)) => (y as i32, m as u32, d as u32),
        _ => {
            return Err(unreadable("`assessment` lacks the numeric year, month and day of the assessment date".into()));
        }
    };
    let ident = format!("assessment-{}", value["fingerprint"].as_str().unwrap_or_default());
    let figures = read_figures(&dir.join(FIGURES_FOLDER))?;
    typst::typeset(&typst::TypesetJob {
        template: &template,
        main: template::MAIN_FILE,
        data_file: DATA_FILE,
        data: &data,
        figures: &figures,
        date,
        ident: &ident,
    })
}

fn read_figures(folder: &Path) -> Result<Vec<(String, Vec<u8>)>, ReportError> {
    if !folder.is_dir() {
        return Ok(Vec::new());
    }
    let unreadable = |source| ReportError::TemplateUnreadable { path: folder.display().to_string(), source };
    let mut figures = Vec::new();
    for entry in std::fs::read_dir(folder).map_err(unreadable)? {
        let path = entry.map_err(unreadable)?.path();
        if path.extension().is_some_and(|e| e == "svg") {
            let key = path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default();
            let bytes = std::fs::read(&path)
                .map_err(|source| ReportError::TemplateUnreadable { path: path.display().to_string(), source })?;
            figures.push((key, bytes));
        }
    }
    figures.sort();
    Ok(figures)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn output_roles() {
        assert_eq!(output_role("assessment.pdf"), Some("report"));
        assert_eq!(output_role("figures/ne.svg"), Some("figure"));
        assert_eq!(output_role("assessment.typ"), Some("report-source"));
        assert_eq!(output_role("assessment.json"), Some("report-source"));
        assert_eq!(output_role("results.json"), None);
        assert_eq!(output_role("tables/qc.loci.csv"), None);
    }

    #[test]
    fn compile_errors_name_file_line_and_column() {
        let e = ReportError::Compile {
            file: "my-template/assessment.typ".into(),
            line: Some(12),
            column: Some(5),
            message: "unknown variable: titel".into(),
            hints: vec!["did you mean title?".into()],
            more: 0,
        };
        assert_eq!(
            e.to_string(),
            "my-template/assessment.typ:12:5: the document template does not compile: unknown variable: titel\n  hint: did you mean title?\n  help: fix the Typst code there and run again; `popgauge typeset OUT` typesets an edited output folder without re-running the steps"
        );
    }

    /// A NUL or escape character in document text becomes a visible escape; line breaks, tabs
    /// and other text stay as they are (common practice: PDF/A fonts carry no control glyphs).
    #[test]
    fn control_characters_are_escaped_in_document_strings() {
        let mut value = serde_json::json!({"a": "PA\u{0}SS", "b": ["x\u{1b}y", "line\nnext\ttab"], "c": 3});
        super::escape_control_characters(&mut value);
        assert_eq!(value, serde_json::json!({"a": "PA\\u{0}SS", "b": ["x\\u{1b}y", "line\nnext\ttab"], "c": 3}));
    }
}
