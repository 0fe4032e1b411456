//! Typesetting a template with its data into PDF/A-2b bytes, in process, offline.
//!
//! The engine sees only what it is handed: the template's files (from memory), the document
//! data and figures as bytes in `sys.inputs`, and the fonts embedded in the binary (no system
//! fonts are scanned). The PDF is reproducible: its metadata date is the assessment date, its
//! identifier derives from the case fingerprint and its creator string is fixed, so the same
//! inputs give the same bytes on any machine and at any time.

use std::sync::OnceLock;

use typst::diag::{Severity, SourceDiagnostic};
use typst::foundations::{Bytes, Datetime, Dict, Smart, Value};
use typst::syntax::{FileId, RootedPath, VirtualPath, VirtualRoot};
use typst::text::Font;
use typst::{World, WorldExt};
use typst_as_lib::{TypstAsLibError, TypstEngine};
use typst_layout::PagedDocument;
use typst_pdf::{PdfOptions, PdfStandard, PdfStandards, Timestamp};

use super::ReportError;
use super::template::Template;

/// The PDF/A part and conformance level the document claims (and typst checks).
pub const PDF_STANDARD: &str = "PDF/A-2b";

/// What to typeset.
#[derive(Debug, Clone, Copy)]
pub struct TypesetJob<'a> {
    /// The template.
    pub template: &'a Template,
    /// The template's main file (`assessment.typ` for the assessment).
    pub main: &'a str,
    /// The document data's file name in the output folder (`assessment.json`), by which the
    /// template may also read it.
    pub data_file: &'a str,
    /// The document data bytes, handed over as `sys.inputs.data`.
    pub data: &'a [u8],
    /// Figures (key, SVG bytes), handed over as `sys.inputs.figures.<key>`.
    pub figures: &'a [(String, Vec<u8>)],
    /// The assessment date (year, month, day): the PDF's metadata date.
    pub date: (i32, u32, u32),
    /// A stable identifier of the document (`assessment-` and the case fingerprint), hashed
    /// into the PDF's id.
    pub ident: &'a str,
}

/// The fonts embedded in the binary, parsed once per process.
fn fonts() -> &'static [Font] {
    static FONTS: OnceLock<Vec<Font>> = OnceLock::new();
    FONTS.get_or_init(|| typst_assets::fonts().flat_map(|bytes| Font::iter(Bytes::new(bytes))).collect())
}

fn file_id(relative: &str) -> Option<FileId> {
    VirtualPath::new(relative).ok().map(|path| RootedPath::new(VirtualRoot::Project, path).intern())
}

/// Typesets the job into PDF bytes.
///
/// # Errors
/// [`ReportError::Compile`] naming the template file and line for a template that does not
/// compile, [`ReportError::TemplateNotUtf8`] for a `.typ` file that is not text, and
/// [`ReportError::Pdf`] when the PDF cannot be written (for example a custom template that
/// breaks the PDF/A rules).
pub fn typeset(job: &TypesetJob<'_>) -> Result<Vec<u8>, ReportError> {
    let engine = engine(job)?;
    let main = file_id(job.main).ok_or_else(|| ReportError::TemplateNoMain { folder: job.template.shown_file("") })?;
    let inputs = inputs(job);
    let compiled = engine.compile_with_input::<_, _, PagedDocument>(main, inputs.clone()).output;
    let document = match compiled {
        Ok(document) => document,
        Err(TypstAsLibError::TypstSource(diagnostics)) => {
            return Err(compile_error(&engine, main, inputs, job.template, &diagnostics));
        }
        Err(other) => return Err(ReportError::Pdf { message: other.to_string() }),
    };
    typst_pdf::pdf(&document, &pdf_options(job)?).map_err(|diagnostics| ReportError::Pdf {
        message: diagnostics.iter().map(|d| d.message.to_string()).collect::<Vec<_>>().join("; "),
    })
}

fn engine(job: &TypesetJob<'_>) -> Result<TypstEngine, ReportError> {
    let mut sources = Vec::new();
    let mut binaries = Vec::new();
    for (name, bytes) in &job.template.files {
        let Some(id) = file_id(name) else { continue };
        if name.ends_with(".typ") {
            let text = String::from_utf8(bytes.clone())
                .map_err(|_| ReportError::TemplateNotUtf8 { file: job.template.shown_file(name) })?;
            sources.push((id, text));
        }
        binaries.push((id, bytes.clone()));
    }
    // The data and figures are also readable by path, as they lie in the output folder.
    binaries.extend(file_id(job.data_file).map(|id| (id, job.data.to_vec())));
    for (key, svg) in job.figures {
        binaries.extend(file_id(&format!("figures/{key}.svg")).map(|id| (id, svg.clone())));
    }
    Ok(TypstEngine::builder()
        .fonts(fonts().iter().cloned())
        .with_static_source_file_resolver(sources)
        .with_static_file_resolver(binaries)
        .build())
}

fn inputs(job: &TypesetJob<'_>) -> Dict {
    let mut figures = Dict::new();
    for (key, svg) in job.figures {
        figures.insert(key.as_str().into(), Value::Bytes(Bytes::new(svg.clone())));
    }
    let mut inputs = Dict::new();
    inputs.insert("data".into(), Value::Bytes(Bytes::new(job.data.to_vec())));
    inputs.insert("figures".into(), Value::Dict(figures));
    inputs
}

fn pdf_options(job: &TypesetJob<'_>) -> Result<PdfOptions, ReportError> {
    let (year, month, day) = job.date;
    let date = u8::try_from(month).ok().zip(u8::try_from(day).ok()).and_then(|(m, d)| Datetime::from_ymd(year, m, d));
    let standards =
        PdfStandards::new(&[PdfStandard::A_2b]).map_err(|e| ReportError::Pdf { message: e.message().to_string() })?;
    Ok(PdfOptions {
        ident: Smart::Custom(format!("popgauge-{}", job.ident)),
        creator: Smart::Custom(Some(format!("popgauge {}", env!("CARGO_PKG_VERSION")))),
        timestamp: date.map(Timestamp::new_utc),
        standards,
        ..PdfOptions::default()
    })
}

/// Typst's hints in popgauge's terms: popgauge has no `--root` argument, and a template's
/// "project" is its own folder, so the hints about leaving it become one that says so.
fn our_hints(hints: impl Iterator<Item = String>) -> Vec<String> {
    let mut ours: Vec<String> = Vec::new();
    for hint in hints {
        let about_root = hint.contains("--root") || hint.contains("outside of the project");
        let hint = if about_root { TEMPLATE_FOLDER_HINT.to_string() } else { hint };
        if !ours.contains(&hint) {
            ours.push(hint);
        }
    }
    ours
}

/// What a template may read.
const TEMPLATE_FOLDER_HINT: &str = "a template can read only files in its own folder";

/// The first error as a readable message: template file, line and column, what Typst said.
fn compile_error(
    engine: &TypstEngine,
    main: FileId,
    inputs: Dict,
    template: &Template,
    diagnostics: &[SourceDiagnostic],
) -> ReportError {
    let main_file = main.vpath().get_without_slash().to_string();
    let errors: Vec<&SourceDiagnostic> = diagnostics.iter().filter(|d| d.severity == Severity::Error).collect();
    let Some(first) = errors.first().copied().or_else(|| diagnostics.first()) else {
        return ReportError::Pdf { message: "the template did not compile, without a message".into() };
    };
    let world = engine.world_builder(main).with_inputs(inputs).build().ok();
    let (file, line, column) = match (&world, first.span.id()) {
        (Some(world), Some(id)) => {
            let relative = id.vpath().get_without_slash().to_string();
            let position = world.range(first.span).and_then(|range| {
                let source = world.source(id).ok()?;
                let (line, column) = source.lines().byte_to_line_column(range.start)?;
                Some((line + 1, column + 1))
            });
            (template.shown_file(&relative), position.map(|p| p.0), position.map(|p| p.1))
        }
        _ => (template.shown_file(&main_file), None, None),
    };
    ReportError::Compile {
        file,
        line,
        column,
        message: first.message.replace("would escape the project root", "would leave the template folder").to_string(),
        hints: our_hints(first.hints.iter().map(|h| h.v.to_string())),
        more: errors.len().saturating_sub(1),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Typst's hints name a `--root` argument popgauge does not have; ours say what holds.
    #[test]
    fn hints_about_the_project_root_are_ours() {
        let typst = [
            "cannot access files outside of the project sandbox".to_string(),
            "you can adjust the project root with the `--root` argument".to_string(),
            "did you mean title?".to_string(),
        ];
        assert_eq!(our_hints(typst.into_iter()), vec![TEMPLATE_FOLDER_HINT.to_string(), "did you mean title?".into()]);
    }
}
