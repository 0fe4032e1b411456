//! The assessment recipe (`case.toml`): parsed strictly, then resolved into typed settings.
//!
//! Parsing happens twice (the error convention: a message names the file and line and has a
//! `help:` line): [`raw`] keeps spans so that every message names a line;
//! [`resolve`] fills defaults, checks paths against the case folder, resolves each `uses` name
//! and validates each step's parameters against its descriptor before anything runs.

pub mod raw;
pub mod resolve;

use std::fmt;
use std::path::PathBuf;
use std::sync::Arc;

use popgauge_abi::{AssessmentInfo, Descriptor, ParamError, Params, Step, StepContext, StepError, StepOutput};

use crate::host::{LoadError, PluginRecord};

use crate::source::Location;

pub use resolve::{load_recipe, load_recipe_trusting};

/// The name of the recipe file inside a case folder.
pub const RECIPE_FILE: &str = "case.toml";

/// Cell spellings that mean "not typed" unless the recipe says otherwise.
pub const DEFAULT_MISSING: [&str; 3] = ["", "NA", "./."];

/// Ne thresholds used when the recipe gives none (Franklin 1980; Soulé 1980).
pub const DEFAULT_THRESHOLDS: [f64; 2] = [50.0, 500.0];

/// Cell size in km of the grid that generalises map positions when the recipe gives none.
pub const DEFAULT_MAP_GRID_KM: f64 = 10.0;

/// Master seed used when the recipe gives none (recorded in the provenance like any other).
pub const DEFAULT_SEED: u64 = 1;

/// A file the assessment reads.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputFile {
    /// What the file is for (`recipe`, `genotypes` or `vcf`, `samples`, `populations`, `template`).
    pub role: String,
    /// The path as written in the recipe (relative to the case folder).
    pub relative: String,
    /// The path on disk.
    pub path: PathBuf,
}

/// How the genotype file is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GenotypeFormat {
    /// The wide table (`[data] genotypes`).
    Wide,
    /// A VCF file with a sample sheet (`[data] vcf` and `samples`).
    Vcf,
}

/// Site filters applied while reading (`[data] min_call_rate`, `min_maf`, `max_alleles`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SiteFilters {
    /// Smallest share of samples typed at a site (0 keeps every site).
    pub min_call_rate: f64,
    /// Smallest frequency of the second most common allele (0 keeps every site).
    pub min_maf: f64,
    /// Largest number of distinct alleles observed at a site.
    pub max_alleles: Option<usize>,
}

impl SiteFilters {
    /// No filtering.
    pub const NONE: SiteFilters = SiteFilters { min_call_rate: 0.0, min_maf: 0.0, max_alleles: None };
}

/// FILTER values of VCF records read unless the recipe says otherwise.
pub const DEFAULT_ACCEPT_FILTERS: [&str; 2] = ["PASS", "."];

/// The `[data]` section, resolved.
#[derive(Debug, Clone)]
pub struct DataSpec {
    /// The genotype file: the wide table, or the VCF file.
    pub genotypes: InputFile,
    /// How `genotypes` is written.
    pub format: GenotypeFormat,
    /// The sample sheet (`sample,population,year`) of a VCF file.
    pub samples: Option<InputFile>,
    /// FILTER values of VCF records to read.
    pub accept_filters: Vec<String>,
    /// Sites dropped while reading.
    pub sites: SiteFilters,
    /// The optional population sheet.
    pub populations: Option<InputFile>,
    /// Locus sheet, when given.
    pub loci: Option<InputFile>,
    /// Cell spellings that mean "not typed".
    pub missing: Vec<String>,
    /// Columns that are neither metadata nor loci.
    pub ignore_columns: Vec<String>,
    /// Bad cells are errors instead of findings.
    pub strict: bool,
}

/// A step ready to run.
#[derive(Clone)]
pub struct PlannedStep {
    /// The recipe's id.
    pub id: String,
    /// The `uses` name.
    pub uses: String,
    /// The implementation: a built-in step or a loaded plugin library.
    pub step: Arc<dyn Step>,
    /// Parameters with defaults filled in.
    pub params: Params,
    /// Line of the `[[step]]` header in the recipe.
    pub line: usize,
    /// The library, hash and descriptor of an external plugin step; `None` for built-in steps.
    pub plugin: Option<PluginRecord>,
}

/// A built-in step (a `'static` registry entry) behind the same `Arc<dyn Step>` as a plugin.
pub struct BuiltinStep(pub &'static dyn Step);

impl Step for BuiltinStep {
    fn descriptor(&self) -> Descriptor {
        self.0.descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        self.0.run(ctx)
    }
}

impl fmt::Debug for PlannedStep {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("PlannedStep")
            .field("id", &self.id)
            .field("uses", &self.uses)
            .field("params", &self.params)
            .finish()
    }
}

/// The `[report]` section, resolved.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportSpec {
    /// `standard` or a template folder relative to the case.
    pub template: String,
    /// The template folder on disk, for a custom template (`None` for `standard`).
    pub template_dir: Option<PathBuf>,
    /// Ne thresholds, ascending.
    pub thresholds: Vec<f64>,
    /// How the document's map shows positions; `None`: the document has no map.
    pub map: Option<MapPositions>,
}

/// How a map shows the populations' positions (`[report.map] positions`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MapPositions {
    /// Each position moved to the centre of its cell of a square grid `cell_km` wide in the
    /// map's projected plane; no exact coordinate reaches the document.
    Grid {
        /// Cell size in km (finite, > 0).
        cell_km: f64,
    },
    /// The positions as the population sheet gives them.
    Exact,
}

/// A recipe with defaults filled in and every reference checked.
#[derive(Debug, Clone)]
pub struct Recipe {
    /// The case folder.
    pub case_dir: PathBuf,
    /// The recipe file itself.
    pub recipe_file: InputFile,
    /// Facts for steps and the document (the population sheet is added when data load).
    pub assessment: AssessmentInfo,
    /// True when the recipe gave no date and today's was used.
    pub date_defaulted: bool,
    /// The data section.
    pub data: DataSpec,
    /// Steps in run order.
    pub steps: Vec<PlannedStep>,
    /// The report section.
    pub report: ReportSpec,
}

impl Recipe {
    /// Every input file: the recipe, the genotypes, the sample sheet of a VCF file and the
    /// population and locus sheets when given.
    pub fn input_files(&self) -> Vec<&InputFile> {
        let mut files = vec![&self.recipe_file, &self.data.genotypes];
        files.extend(self.data.samples.as_ref());
        files.extend(self.data.populations.as_ref());
        files.extend(self.data.loci.as_ref());
        files
    }
}

/// Why a recipe cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum RecipeError {
    /// The case folder or recipe cannot be read.
    #[error(
        "{path}: cannot read the recipe: {source}\n  help: give a case folder that contains {RECIPE_FILE} (`popgauge new DIR` writes one)"
    )]
    Unreadable {
        /// The path tried.
        path: String,
        /// The I/O error.
        source: std::io::Error,
    },
    /// TOML syntax or a value of the wrong type.
    #[error("{at}: {message}\n  help: {help}")]
    Syntax {
        /// Where.
        at: Location,
        /// What the parser said.
        message: String,
        /// How to fix it.
        help: String,
    },
    /// A key the recipe format does not have.
    #[error("{at}: unknown key `{key}`\n  help: {}", unknown_key_help(suggestion.as_deref(), expected))]
    UnknownKey {
        /// Where.
        at: Location,
        /// The key written.
        key: String,
        /// The closest known key.
        suggestion: Option<String>,
        /// Keys allowed there.
        expected: Vec<String>,
    },
    /// A value that parses but makes no sense.
    #[error("{at}: {message}\n  help: {help}")]
    Invalid {
        /// Where.
        at: Location,
        /// What is wrong.
        message: String,
        /// How to fix it.
        help: String,
    },
    /// An external plugin library was refused.
    #[error("{at}: step \"{step}\": {error}\n  help: {}", error.help())]
    Plugin {
        /// Where (the `uses` or `sha256` line).
        at: Location,
        /// Step id.
        step: String,
        /// Why the library was refused.
        error: LoadError,
    },
    /// A step's parameters do not fit its descriptor.
    #[error("{at}: {error} for step \"{step}\" (uses \"{uses}\")\n  help: {}", error.help())]
    Params {
        /// Where.
        at: Location,
        /// Step id.
        step: String,
        /// Step `uses`.
        uses: String,
        /// What the descriptor refused.
        error: ParamError,
    },
}

fn unknown_key_help(suggestion: Option<&str>, expected: &[String]) -> String {
    match suggestion {
        Some(s) => format!("did you mean `{s}`?"),
        None if expected.is_empty() => "remove it; see the commented recipe that `popgauge new DIR` writes".into(),
        None => {
            format!("keys allowed here: {}", expected.iter().map(|k| format!("`{k}`")).collect::<Vec<_>>().join(", "))
        }
    }
}
