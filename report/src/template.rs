//! Document templates: the standard one embedded in the binary, or a folder of Typst files.
//!
//! A template is a set of files held in memory, keyed by their path relative to the template
//! folder, one of which is `assessment.typ` (the main file). Reading everything up front keeps
//! typesetting free of file-system access (so the same bytes always give the same PDF) and
//! lets the pipeline record a hash for every template file.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::ReportError;

/// The main file every template has.
pub const MAIN_FILE: &str = "assessment.typ";

/// The standard template's main file, embedded at build time.
const STANDARD_MAIN: &str = include_str!("../../templates/standard/assessment.typ");

/// The portfolio document's main file.
pub const PORTFOLIO_MAIN_FILE: &str = "portfolio.typ";
/// The standard portfolio template, embedded at build time.
const PORTFOLIO_MAIN: &str = include_str!("../../templates/portfolio/portfolio.typ");

/// A template folder may hold at most this many files …
const MAX_FILES: usize = 256;
/// … and this many bytes in all.
const MAX_BYTES: u64 = 64 * 1024 * 1024;

/// Output-folder names a template file may not take (the run writes them itself).
const RESERVED: [&str; 5] = ["assessment.pdf", "assessment.json", "results.json", "provenance.json", "case.toml"];
/// Output-folder subfolders a template file may not live in.
const RESERVED_FOLDERS: [&str; 2] = ["tables/", "figures/"];

/// Where a template came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TemplateOrigin {
    /// Embedded in the binary.
    Standard,
    /// A folder; `shown` is how messages name it (relative to the case, or as given).
    Folder {
        /// The folder on disk.
        path: PathBuf,
        /// How messages name it.
        shown: String,
    },
}

/// A template's files in memory.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Template {
    /// Where it came from.
    pub origin: TemplateOrigin,
    /// Relative path (with `/`) → bytes; always holds [`MAIN_FILE`].
    pub files: BTreeMap<String, Vec<u8>>,
}

impl Template {
    /// The standard template.
    pub fn standard() -> Template {
        let files = [(MAIN_FILE.to_string(), STANDARD_MAIN.as_bytes().to_vec())].into_iter().collect();
        Template { origin: TemplateOrigin::Standard, files }
    }

    /// The standard template of the portfolio document (main file [`PORTFOLIO_MAIN_FILE`]).
    pub fn portfolio() -> Template {
        let files = [(PORTFOLIO_MAIN_FILE.to_string(), PORTFOLIO_MAIN.as_bytes().to_vec())].into_iter().collect();
        Template { origin: TemplateOrigin::Standard, files }
    }

    /// Reads every file of a template folder (hidden files and folders, and the names in
    /// `skip`, are left out).
    ///
    /// # Errors
    /// [`ReportError::TemplateUnreadable`] for I/O problems, [`ReportError::TemplateNoMain`]
    /// without `assessment.typ`, [`ReportError::TemplateTooLarge`] past the size limits.
    pub fn from_folder(path: &Path, shown: &str, skip: &dyn Fn(&str) -> bool) -> Result<Template, ReportError> {
        let mut files = BTreeMap::new();
        let mut total = 0u64;
        read_folder(path, "", shown, skip, &mut files, &mut total)?;
        if !files.contains_key(MAIN_FILE) {
            return Err(ReportError::TemplateNoMain { folder: shown.to_string() });
        }
        Ok(Template { origin: TemplateOrigin::Folder { path: path.to_path_buf(), shown: shown.to_string() }, files })
    }

    /// How messages name a file of this template: `my-template/assessment.typ`, or
    /// `the standard template's assessment.typ`.
    pub fn shown_file(&self, relative: &str) -> String {
        match &self.origin {
            TemplateOrigin::Standard => format!("the standard template's {relative}"),
            TemplateOrigin::Folder { shown, .. } => format!("{}/{relative}", shown.trim_end_matches('/')),
        }
    }

    /// The files to copy into the output folder beside the document, so it can be edited
    /// and typeset again.
    ///
    /// # Errors
    /// [`ReportError::TemplateClash`] when a template file would take the name of an output.
    pub fn output_files(&self) -> Result<Vec<(String, Vec<u8>)>, ReportError> {
        self.files
            .iter()
            .map(|(name, bytes)| {
                if RESERVED.contains(&name.as_str()) || RESERVED_FOLDERS.iter().any(|f| name.starts_with(f)) {
                    return Err(ReportError::TemplateClash { file: self.shown_file(name) });
                }
                Ok((name.clone(), bytes.clone()))
            })
            .collect()
    }
}

/// Names `popgauge typeset DIR` leaves out when it reads an output folder as a template: the
/// run's own outputs (figures are read separately).
pub fn is_output_name(relative: &str) -> bool {
    RESERVED.contains(&relative) || RESERVED_FOLDERS.iter().any(|f| relative.starts_with(f))
}

fn read_folder(
    dir: &Path,
    prefix: &str,
    shown: &str,
    skip: &dyn Fn(&str) -> bool,
    files: &mut BTreeMap<String, Vec<u8>>,
    total: &mut u64,
) -> Result<(), ReportError> {
    let unreadable = |path: &Path, source: std::io::Error| ReportError::TemplateUnreadable {
        path: path.display().to_string(),
        source,
    };
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .map_err(|e| unreadable(dir, e))?
        .collect::<Result<_, _>>()
        .map_err(|e| unreadable(dir, e))?;
    entries.sort_by_key(|e| e.file_name());
    for entry in entries {
        let name = entry.file_name().to_string_lossy().into_owned();
        if name.starts_with('.') {
            continue;
        }
        let relative = format!("{prefix}{name}");
        if skip(&relative) {
            continue;
        }
        let kind = entry.file_type().map_err(|e| unreadable(&entry.path(), e))?;
        if kind.is_dir() {
            if skip(&format!("{relative}/")) {
                continue;
            }
            read_folder(&entry.path(), &format!("{relative}/"), shown, skip, files, total)?;
        } else if kind.is_file() {
            let bytes = std::fs::read(entry.path()).map_err(|e| unreadable(&entry.path(), e))?;
            *total += bytes.len() as u64;
            if files.len() >= MAX_FILES || *total > MAX_BYTES {
                return Err(ReportError::TemplateTooLarge {
                    folder: shown.to_string(),
                    max_files: MAX_FILES,
                    max_megabytes: MAX_BYTES / (1024 * 1024),
                });
            }
            files.insert(relative, bytes);
        }
        // Symbolic links are left out: a template folder is self-contained.
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_standard_template_is_embedded() {
        let t = Template::standard();
        assert!(String::from_utf8_lossy(&t.files[MAIN_FILE]).contains("sys.inputs"));
        assert_eq!(t.shown_file(MAIN_FILE), "the standard template's assessment.typ");
    }

    #[test]
    fn folders_are_read_whole_and_checked() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::create_dir_all(dir.path().join("parts")).unwrap();
        std::fs::write(dir.path().join("assessment.typ"), "#include \"parts/a.typ\"").unwrap();
        std::fs::write(dir.path().join("parts/a.typ"), "Hello").unwrap();
        std::fs::write(dir.path().join(".hidden"), "x").unwrap();
        let t = Template::from_folder(dir.path(), "tpl", &|_| false).unwrap();
        assert_eq!(t.files.keys().collect::<Vec<_>>(), vec!["assessment.typ", "parts/a.typ"]);
        assert_eq!(t.shown_file("parts/a.typ"), "tpl/parts/a.typ");
        assert_eq!(t.output_files().unwrap().len(), 2);

        std::fs::write(dir.path().join("results.json"), "{}").unwrap();
        let clash = Template::from_folder(dir.path(), "tpl", &|_| false).unwrap().output_files().unwrap_err();
        assert_eq!(
            clash.to_string(),
            "tpl/results.json: a template file may not be named like an output of the run\n  help: rename it; assessment.pdf, assessment.json, results.json, provenance.json, tables/ and figures/ are written by popgauge"
        );
        let skipping = Template::from_folder(dir.path(), "tpl", &is_output_name).unwrap();
        assert!(!skipping.files.contains_key("results.json"));

        std::fs::remove_file(dir.path().join("assessment.typ")).unwrap();
        let missing = Template::from_folder(dir.path(), "tpl", &|_| false).unwrap_err();
        assert_eq!(
            missing.to_string(),
            "tpl: the template folder has no assessment.typ\n  help: a template folder holds the main file assessment.typ (copy templates/standard/assessment.typ to start)"
        );
    }
}
