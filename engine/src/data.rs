//! Reading the case's data files into one genotype matrix and the population sheet.

pub mod delimited;
pub mod limits;
pub mod loci;
pub mod populations;
pub mod sample_sheet;
pub mod site_filter;
pub mod vcf;
pub mod wide_table;

use std::collections::BTreeSet;

use popgauge_abi::{Finding, GenotypeMatrix, PopulationInfo, Where};

use crate::progress::Progress;
use crate::hash::{FileDigest, digest_bytes};
use crate::recipe::{DataSpec, GenotypeFormat, InputFile, Recipe};
use crate::source::Location;

/// Why a data file cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum DataError {
    /// The file cannot be read from disk.
    #[error("{file}: cannot read the file: {source}\n  help: check that it exists and is readable")]
    Unreadable {
        /// File.
        file: String,
        /// The I/O error.
        source: std::io::Error,
    },
    /// Nothing but white space.
    #[error("{file}: the file is empty\n  help: export the table again; it needs a header row and one row per sample")]
    Empty {
        /// File.
        file: String,
    },
    /// A NUL byte: not a text file.
    #[error(
        "{at}: the file contains NUL bytes, so it is not a text table\n  help: export it as CSV (comma, semicolon or tab separated) in UTF-8"
    )]
    Binary {
        /// Where.
        at: Location,
    },
    /// Bytes that are not UTF-8.
    #[error(
        "{at}: the text is not valid UTF-8\n  help: save the file as UTF-8 (for example \"CSV UTF-8\" in a spreadsheet's export dialog)"
    )]
    NotUtf8 {
        /// Where.
        at: Location,
    },
    /// Malformed quoting or similar.
    #[error("{at}: the table cannot be parsed: {message}\n  help: check the quotes on that line")]
    Csv {
        /// Where.
        at: Location,
        /// The parser's words.
        message: String,
    },
    /// A row of another width than the header.
    #[error(
        "{at}: the row has {found} cells but the header has {expected} columns\n  help: every row needs one cell per header column; check for a missing or extra delimiter"
    )]
    Ragged {
        /// Where.
        at: Location,
        /// Header width.
        expected: usize,
        /// Row width.
        found: usize,
    },
    /// A required column is absent.
    #[error("{file}: required column `{column}` not found (columns: {found})\n  help: {help}")]
    MissingColumn {
        /// File.
        file: String,
        /// The column needed.
        column: String,
        /// The header as found, abbreviated.
        found: String,
        /// How to fix it.
        help: String,
    },
    /// Two header cells with the same name.
    #[error(
        "{at}: column `{column}` appears twice in the header (columns {first} and {second})\n  help: give every locus and metadata column its own name"
    )]
    DuplicateColumn {
        /// Where.
        at: Location,
        /// The name.
        column: String,
        /// 1-based position of the first.
        first: usize,
        /// 1-based position of the second.
        second: usize,
    },
    /// An `ignore_columns` entry that the file does not have.
    #[error("{file}: `ignore_columns` names `{column}`, which is not a column of the file\n  help: {help}")]
    UnknownIgnoredColumn {
        /// File.
        file: String,
        /// The name.
        column: String,
        /// How to fix it.
        help: String,
    },
    /// No locus columns left.
    #[error(
        "{file}: the table has no locus columns\n  help: after `sample`, `population` and `year`, add one column per locus with cells like 152/156"
    )]
    NoLoci {
        /// File.
        file: String,
    },
    /// A header but no samples.
    #[error("{file}: the table has a header but no samples\n  help: add one row per sample below the header")]
    NoSamples {
        /// File.
        file: String,
    },
    /// A cell that must have a value is empty or malformed.
    #[error("{at}: column `{column}` has \"{text}\": {problem}\n  help: {help}")]
    BadField {
        /// Where.
        at: Location,
        /// Column name.
        column: String,
        /// The cell text.
        text: String,
        /// What is wrong.
        problem: String,
        /// How to fix it.
        help: String,
    },
    /// The same sample id twice.
    #[error(
        "{at}: sample id \"{id}\" was already used on line {first_line}\n  help: give every sample a unique id; a re-sampled individual needs its own id (validate reports identical genotypes)"
    )]
    DuplicateSample {
        /// Where.
        at: Location,
        /// The id.
        id: String,
        /// Line of the first use.
        first_line: usize,
    },
    /// A malformed genotype cell with `strict = true`.
    #[error(
        "{at}: column `{column}`, cell \"{text}\": {problem}\n  help: fix the cell, or remove `strict = true` from [data] to treat bad cells as untyped findings"
    )]
    BadCell {
        /// Where.
        at: Location,
        /// Locus column.
        column: String,
        /// The cell text.
        text: String,
        /// What is wrong.
        problem: String,
    },
    /// More distinct alleles at a locus than codes can hold.
    #[error(
        "{file}: locus `{locus}` has more than {} distinct alleles\n  help: check that the column really holds genotypes",
        limits::MAX_ALLELES_PER_LOCUS
    )]
    TooManyAlleles {
        /// File.
        file: String,
        /// Locus.
        locus: String,
    },
    /// The VCF header cannot be parsed or is not VCF 4.x.
    #[error(
        "{file}: the VCF header cannot be read: {problem}\n  help: a VCF file starts with `##fileformat=VCFv4.x` and header lines, then the `#CHROM POS ID REF ALT QUAL FILTER INFO FORMAT` line naming the samples"
    )]
    VcfHeader {
        /// File.
        file: String,
        /// The parser's words.
        problem: String,
    },
    /// A VCF record that cannot be read.
    #[error("{at}: field {field}: {problem}\n  help: {help}")]
    VcfRecord {
        /// Where (line of the record).
        at: Location,
        /// The field (`POS`, `samples`, …).
        field: String,
        /// What is wrong.
        problem: String,
        /// How to fix it.
        help: String,
    },
    /// Compressed data that end in the middle of a block.
    #[error(
        "{at}: the compressed data end in the middle of a block ({message})\n  help: the file is truncated or damaged; copy or export it again (a complete bgzip file ends with an empty end-of-file block)"
    )]
    Truncated {
        /// Where (the line being read).
        at: Location,
        /// The decompressor's words.
        message: String,
    },
    /// Compressed data that cannot be decompressed.
    #[error(
        "{at}: the compressed data cannot be read ({message})\n  help: compress the VCF file with bgzip (block gzip), or leave it uncompressed"
    )]
    Decompress {
        /// Where (the line being read).
        at: Location,
        /// The decompressor's words.
        message: String,
    },
    /// No VCF sample is in the sample sheet.
    #[error(
        "{file}: none of its {vcf_samples} samples is listed in {sheet} ({sheet_samples} samples)\n  help: the sheet's `sample` column must spell the sample names of the VCF's #CHROM line exactly"
    )]
    NoSharedSamples {
        /// VCF file.
        file: String,
        /// Sample sheet.
        sheet: String,
        /// Samples in the VCF header.
        vcf_samples: usize,
        /// Samples in the sheet.
        sheet_samples: usize,
    },
    /// No VCF record was left to read.
    #[error(
        "{file}: no site is left to read from its {records} record(s)\n  help: check `accept_filters` (FILTER values read; default PASS and .) and the site filters `min_call_rate`, `min_maf`, `max_alleles` in [data]; the findings of `popgauge check` list what was dropped"
    )]
    NoSites {
        /// File.
        file: String,
        /// Records in the file.
        records: usize,
    },
    /// A file, or what it holds, is larger than popgauge accepts (see [`limits`]).
    #[error("{at}: {found} {} is more than popgauge accepts ({} at most)\n  help: {}", what.noun(), what.limit(), what.help())]
    TooLarge {
        /// Where the limit was passed.
        at: Location,
        /// What was counted.
        what: limits::Limited,
        /// The count found (at least; reading stops at the limit).
        found: u64,
    },
    /// A sample id, population name or label, or locus name longer than [`limits::MAX_NAME_CHARS`].
    #[error(
        "{at}: the {what} \"{text}\" is longer than {} characters\n  help: shorten it; a longer description belongs in a column popgauge ignores",
        limits::MAX_NAME_CHARS
    )]
    LongName {
        /// Where.
        at: Location,
        /// `sample id`, `population name`, `population label` or `locus name`.
        what: &'static str,
        /// The name, cut short.
        text: String,
    },
    /// Two rows of the population sheet name the same population.
    #[error(
        "{at}: population \"{population}\" is listed twice in the population sheet (first on line {first_line})\n  help: keep one row per population"
    )]
    DuplicatePopulation {
        /// Where.
        at: Location,
        /// The name.
        population: String,
        /// First line.
        first_line: usize,
    },
}

/// Everything the data files hold, with the digests of the bytes actually read.
#[derive(Debug)]
pub struct LoadedData {
    /// The genotype matrix.
    pub matrix: GenotypeMatrix,
    /// Findings made while reading (bad cells, sheet mismatches).
    pub findings: Vec<Finding>,
    /// Population sheet rows, sorted by population.
    pub populations: Vec<PopulationInfo>,
    /// Locus sheet rows, in file order (empty without a sheet).
    pub loci: Vec<loci::LocusInfo>,
    /// Each data file with the digest of the bytes read.
    pub digests: Vec<(InputFile, FileDigest)>,
}

/// Reads the genotypes and the population sheet a recipe names, reporting reading progress.
///
/// # Errors
/// A [`DataError`] naming the file, line and column, with a `help:` line.
pub fn load_data(recipe: &Recipe, progress: &mut dyn Progress) -> Result<LoadedData, DataError> {
    let spec = &recipe.data;
    progress.task(&format!("reading {}", spec.genotypes.relative));
    let (matrix, mut findings, mut digests) = match (&spec.format, &spec.samples) {
        (GenotypeFormat::Vcf, Some(sheet_file)) => read_vcf_input(spec, sheet_file, progress)?,
        _ => read_wide_input(spec)?,
    };
    let populations = match &spec.populations {
        Some(file) => {
            let bytes = read_file(file)?;
            digests.push((file.clone(), digest_bytes(&bytes)));
            let sheet = populations::read_population_sheet(&bytes, &file.relative)?;
            findings.extend(sheet.findings);
            findings.extend(cross_check(&matrix, &sheet.populations, &file.relative));
            sheet.populations
        }
        None => Vec::new(),
    };
    let (matrix, loci) = match &spec.loci {
        Some(file) => {
            let bytes = read_file(file)?;
            digests.push((file.clone(), digest_bytes(&bytes)));
            let sheet = loci::read_locus_sheet(&bytes, &file.relative)?;
            findings.extend(sheet.findings.iter().cloned());
            let (matrix, checked) = loci::apply_locus_sheet(matrix, &sheet, &file.relative)?;
            findings.extend(checked);
            (matrix, sheet.loci)
        }
        None => (matrix, Vec::new()),
    };
    Ok(LoadedData { matrix, findings, populations, loci, digests })
}

/// The matrix, its findings and the digests of the files read.
type GenotypeInput = (GenotypeMatrix, Vec<Finding>, Vec<(InputFile, FileDigest)>);

fn read_wide_input(spec: &DataSpec) -> Result<GenotypeInput, DataError> {
    let bytes = read_file(&spec.genotypes)?;
    let digests = vec![(spec.genotypes.clone(), digest_bytes(&bytes))];
    let options = wide_table::WideOptions {
        file: &spec.genotypes.relative,
        missing: &spec.missing,
        ignore_columns: &spec.ignore_columns,
        strict: spec.strict,
    };
    let table = wide_table::read_wide_table(&bytes, &options)?;
    let mut findings = table.findings;
    let file = &spec.genotypes.relative;
    let (matrix, dropped) = site_filter::filter_matrix(table.matrix, &spec.sites, file)
        .map_err(|e| DataError::Csv { at: Location::file(file), message: format!("internal error: {e}") })?;
    if matrix.loci().is_empty() {
        return Err(DataError::NoSites { file: file.clone(), records: 0 });
    }
    findings.extend(dropped);
    Ok((matrix, findings, digests))
}

fn read_vcf_input(
    spec: &DataSpec,
    sheet_file: &InputFile,
    progress: &mut dyn Progress,
) -> Result<GenotypeInput, DataError> {
    let sheet_bytes = read_file(sheet_file)?;
    let sheet = sample_sheet::read_sample_sheet(&sheet_bytes, &sheet_file.relative)?;
    let options = vcf::VcfOptions {
        file: &spec.genotypes.relative,
        sheet_file: &sheet_file.relative,
        accept_filters: &spec.accept_filters,
        sites: &spec.sites,
        strict: spec.strict,
    };
    let data = vcf::read_vcf(&spec.genotypes.path, &sheet, &options, progress)?;
    let digests = vec![(spec.genotypes.clone(), data.digest), (sheet_file.clone(), digest_bytes(&sheet_bytes))];
    Ok((data.matrix, data.findings, digests))
}

fn read_file(file: &InputFile) -> Result<Vec<u8>, DataError> {
    let unreadable = |source| DataError::Unreadable { file: file.relative.clone(), source };
    let size = std::fs::metadata(&file.path).map_err(unreadable)?.len();
    if limits::exceeds(limits::Limited::FileBytes, size) {
        return Err(DataError::TooLarge {
            at: Location::file(&file.relative),
            what: limits::Limited::FileBytes,
            found: size,
        });
    }
    std::fs::read(&file.path).map_err(unreadable)
}

/// Findings for populations in the sheet but not in the data, and the reverse.
fn cross_check(matrix: &GenotypeMatrix, sheet: &[PopulationInfo], file: &str) -> Vec<Finding> {
    let in_data: BTreeSet<&str> = matrix.samples().iter().map(|s| s.population.as_str()).collect();
    let in_sheet: BTreeSet<&str> = sheet.iter().map(|p| p.population.as_str()).collect();
    let mut findings = Vec::new();
    let census: BTreeSet<&str> =
        sheet.iter().filter(|p| p.census_size.is_some()).map(|p| p.population.as_str()).collect();
    for population in in_sheet.difference(&in_data) {
        let message = if census.contains(population) {
            format!("{file}: population \"{population}\" has no samples in the genotype table, only a census size: the steps leave it out, and `popgauge portfolio` counts it with a census-based Ne (check the spelling if it was sampled)")
        } else {
            format!("{file}: population \"{population}\" has no samples in the genotype table; its row is not used (check the spelling)")
        };
        findings.push(Finding::warning(
            "unknown-population",
            message,
            Where { file: Some(file.into()), population: Some(population.to_string()), ..Where::default() },
        ));
    }
    for population in in_data.difference(&in_sheet) {
        findings.push(Finding::info(
            "population-not-in-sheet",
            format!("{file}: population \"{population}\" has samples but no row in the population sheet; census size and coordinates are unknown for it"),
            Where { file: Some(file.into()), population: Some(population.to_string()), ..Where::default() },
        ));
    }
    findings
}
