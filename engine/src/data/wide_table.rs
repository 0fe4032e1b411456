//! The wide genotype table: one row per sample, `sample`, `population`, `year`, then one column
//! per locus with cells `a/b`.
//!
//! Allele labels are interned per locus into codes 1, 2, … in order of first appearance; code 0
//! is untyped. A malformed cell (one allele missing, one allele only, three alleles, a label
//! with other characters or over 32 characters) becomes a finding naming line, column and text
//! and is treated as untyped, unless `strict` turns it into an error.

use std::collections::{BTreeMap, HashMap};

use popgauge_abi::{AlleleCode, Finding, GenotypeMatrix, LocusMeta, MatrixError, SampleMeta, Where, did_you_mean};

use super::DataError;
use super::delimited::{Row, decode, header_excerpt, trim, visit_records};
use super::limits::{Limited, MAX_NAME_CHARS, exceeds};
use crate::source::{Location, excerpt};

/// The metadata columns every wide table has.
pub const REQUIRED_COLUMNS: [&str; 3] = ["sample", "population", "year"];

/// Years outside this range are refused as typing errors.
pub const YEAR_RANGE: std::ops::RangeInclusive<i32> = 1700..=2200;

/// Longest allele label accepted.
pub const MAX_LABEL_LEN: usize = 32;

/// How to read a wide table.
#[derive(Debug, Clone, Copy)]
pub struct WideOptions<'a> {
    /// File name for messages (relative to the case folder).
    pub file: &'a str,
    /// Cell spellings that mean untyped.
    pub missing: &'a [String],
    /// Columns to skip.
    pub ignore_columns: &'a [String],
    /// Bad cells are errors.
    pub strict: bool,
}

/// A wide table read into a matrix, with the findings made on the way.
#[derive(Debug)]
pub struct WideTable {
    /// The genotypes.
    pub matrix: GenotypeMatrix,
    /// Bad-cell findings, in file order.
    pub findings: Vec<Finding>,
}

/// Reads a wide genotype table from raw bytes.
///
/// # Errors
/// A [`DataError`] for structural problems (encoding, header, ragged rows, years, duplicate
/// ids) and, with `strict`, for the first bad cell.
pub fn read_wide_table(bytes: &[u8], options: &WideOptions<'_>) -> Result<WideTable, DataError> {
    let text = decode(options.file, bytes)?;
    // Two passes over the text, neither keeping a record: the first finds every structural
    // problem of the table (as a refusal it comes before any problem of a cell) and counts
    // the samples, so the second writes the codes straight into a code buffer of its final size.
    let shape = visit_records(options.file, text, |_| Ok(()))?;
    let layout = Layout::from_header(&shape.header, options)?;
    if shape.records == 0 {
        return Err(DataError::NoSamples { file: options.file.into() });
    }
    let mut builder = Builder::new(&layout, options, shape.records);
    visit_records(options.file, text, |row| builder.add_row(&row))?;
    builder.finish()
}

/// Where the metadata and loci sit in the header.
struct Layout {
    sample: usize,
    population: usize,
    year: usize,
    /// (column index, locus name)
    loci: Vec<(usize, String)>,
}

impl Layout {
    fn from_header(header: &[String], options: &WideOptions<'_>) -> Result<Layout, DataError> {
        let mut first_seen: HashMap<&str, usize> = HashMap::new();
        for (i, name) in header.iter().enumerate() {
            if let Some(first) = first_seen.insert(name.as_str(), i) {
                return Err(DataError::DuplicateColumn {
                    at: Location::line(options.file, 1),
                    column: excerpt(name),
                    first: first + 1,
                    second: i + 1,
                });
            }
        }
        for ignored in options.ignore_columns {
            if !first_seen.contains_key(ignored.as_str()) {
                let help = match did_you_mean(ignored, header.iter().map(String::as_str)) {
                    Some(s) => format!("did you mean `{s}`? Otherwise remove it from `ignore_columns`"),
                    None => "remove it from `ignore_columns`, or check the header row".into(),
                };
                return Err(DataError::UnknownIgnoredColumn {
                    file: options.file.into(),
                    column: ignored.clone(),
                    help,
                });
            }
        }
        let find =
            |column: &str| first_seen.get(column).copied().ok_or_else(|| missing_column(options.file, column, header));
        let (sample, population, year) = (find("sample")?, find("population")?, find("year")?);
        let loci: Vec<(usize, String)> = header
            .iter()
            .enumerate()
            .filter(|(_, name)| !REQUIRED_COLUMNS.contains(&name.as_str()) && !options.ignore_columns.contains(name))
            .map(|(i, name)| (i, name.clone()))
            .collect();
        if let Some((i, _)) = loci.iter().find(|(_, name)| name.is_empty()) {
            return Err(DataError::BadField {
                at: Location::line(options.file, 1),
                column: format!("#{}", i + 1),
                text: String::new(),
                problem: "a header cell is empty".into(),
                help: "name every column; a locus column needs the locus name".into(),
            });
        }
        if loci.is_empty() {
            return Err(DataError::NoLoci { file: options.file.into() });
        }
        if exceeds(Limited::Loci, loci.len() as u64) {
            return Err(DataError::TooLarge {
                at: Location::line(options.file, 1),
                what: Limited::Loci,
                found: loci.len() as u64,
            });
        }
        if let Some((_, name)) = loci.iter().find(|(_, name)| name.chars().count() > MAX_NAME_CHARS) {
            return Err(DataError::LongName {
                at: Location::line(options.file, 1),
                what: "locus name",
                text: excerpt(name),
            });
        }
        Ok(Layout { sample, population, year, loci })
    }
}

fn missing_column(file: &str, column: &str, header: &[String]) -> DataError {
    let found = header_excerpt(header);
    let help = match did_you_mean(column, header.iter().map(String::as_str)) {
        Some(s) => format!("rename the column `{s}` to `{column}`, or fix the header row"),
        None => {
            format!("add a `{column}` column (the wide table needs sample, population and year), or fix the header row")
        }
    };
    DataError::MissingColumn { file: file.into(), column: column.into(), found, help }
}

/// A sample's metadata from its `sample`, `population` and `year` cells (also the sample sheet
/// of a VCF file).
///
/// # Errors
/// [`DataError::BadField`] for an empty cell or a year that is not a whole number in
/// [`YEAR_RANGE`].
pub fn sample_meta(file: &str, line: usize, [id, population, year_text]: [&str; 3]) -> Result<SampleMeta, DataError> {
    let at = || Location::line(file, line);
    let required = |text: &str, column: &str| -> Result<String, DataError> {
        if text.is_empty() {
            return Err(DataError::BadField {
                at: at(),
                column: column.into(),
                text: String::new(),
                problem: "the cell is empty".into(),
                help: format!("every sample needs a {column}"),
            });
        }
        Ok(text.to_string())
    };
    let name = |text: &str, column: &str, what: &'static str| -> Result<String, DataError> {
        let text = required(text, column)?;
        if text.chars().count() > MAX_NAME_CHARS {
            return Err(DataError::LongName { at: at(), what, text: excerpt(&text) });
        }
        Ok(text)
    };
    let id = name(id, "sample", "sample id")?;
    let population = name(population, "population", "population name")?;
    let year_text = required(year_text, "year")?;
    let year = match year_text.parse::<i32>() {
        Ok(y) if YEAR_RANGE.contains(&y) => y,
        Ok(_) => return Err(DataError::BadField { at: at(), column: "year".into(), text: excerpt(&year_text), problem: format!("the year is outside {}–{}", YEAR_RANGE.start(), YEAR_RANGE.end()), help: "write the sampling year with four digits, for example 2021".into() }),
        Err(_) => return Err(DataError::BadField { at: at(), column: "year".into(), text: excerpt(&year_text), problem: "the year is not a whole number".into(), help: "write the sampling year with four digits, for example 2021 (a date or season belongs in an ignored column)".into() }),
    };
    Ok(SampleMeta { id, population, year })
}

/// What is wrong with a genotype cell.
#[derive(Debug, Clone, PartialEq, Eq)]
enum CellProblem {
    OneAlleleMissing,
    Haploid,
    TooManyAlleles(usize),
    BadLabel(String),
    LongLabel(String),
}

impl CellProblem {
    fn describe(&self) -> String {
        match self {
            CellProblem::OneAlleleMissing => "one allele missing".into(),
            CellProblem::Haploid => "a single allele; diploid cells are written a/b".into(),
            CellProblem::TooManyAlleles(n) => format!("{n} alleles; diploid cells have two"),
            CellProblem::BadLabel(l) => {
                format!("allele label \"{}\" has characters other than letters, digits, `.`, `_` and `-`", excerpt(l))
            }
            CellProblem::LongLabel(l) => {
                format!("allele label \"{}\" is longer than {MAX_LABEL_LEN} characters", excerpt(l))
            }
        }
    }

    fn code(&self) -> &'static str {
        match self {
            CellProblem::OneAlleleMissing => "half-missing-genotype",
            CellProblem::Haploid => "haploid-genotype",
            CellProblem::TooManyAlleles(_) => "too-many-alleles",
            CellProblem::BadLabel(_) | CellProblem::LongLabel(_) => "bad-allele-label",
        }
    }
}

/// A parsed cell: untyped, two labels, or a problem.
#[derive(Debug, PartialEq, Eq)]
enum ParsedCell<'t> {
    Untyped,
    Typed(&'t str, &'t str),
    Bad(CellProblem),
}

fn is_missing_half(half: &str) -> bool {
    matches!(half.as_bytes(), b"" | b"." | b"?" | b"-" | b"NA")
}

/// True for an allele label of 1–32 characters from `A–Z a–z 0–9 . _ -`.
pub fn is_valid_label(label: &str) -> bool {
    !label.is_empty() && check_label(label).is_none()
}

fn check_label(label: &str) -> Option<CellProblem> {
    // At most 32 bytes is at most 32 characters; count characters only past that.
    if label.len() > MAX_LABEL_LEN && label.chars().count() > MAX_LABEL_LEN {
        return Some(CellProblem::LongLabel(label.into()));
    }
    // Every allowed character is ASCII, so checking bytes is checking characters.
    let allowed = |b: u8| b.is_ascii_alphanumeric() || matches!(b, b'.' | b'_' | b'-');
    (!label.bytes().all(allowed)).then(|| CellProblem::BadLabel(label.into()))
}

fn parse_cell<'t>(text: &'t str, missing: &[String]) -> ParsedCell<'t> {
    if missing.iter().any(|m| same_text(m, text)) {
        return ParsedCell::Untyped;
    }
    // Splitting at the ASCII `/` keeps both sides valid UTF-8.
    let Some(slash) = text.bytes().position(|b| b == b'/') else {
        return ParsedCell::Bad(CellProblem::Haploid);
    };
    let (a, b) = (&text[..slash], &text[slash + 1..]);
    let more = b.bytes().filter(|&c| c == b'/').count();
    if more > 0 {
        return ParsedCell::Bad(CellProblem::TooManyAlleles(2 + more));
    }
    let (a, b) = (trim(a), trim(b));
    match (is_missing_half(a), is_missing_half(b)) {
        (true, true) => ParsedCell::Untyped,
        (true, false) | (false, true) => ParsedCell::Bad(CellProblem::OneAlleleMissing),
        (false, false) => match check_label(a).or_else(|| check_label(b)) {
            Some(problem) => ParsedCell::Bad(problem),
            None => ParsedCell::Typed(a, b),
        },
    }
}

/// Equality of two short texts without a library call per comparison (cells and allele labels
/// are a few bytes; the comparison runs twice per genotype).
fn same_text(a: &str, b: &str) -> bool {
    a.len() == b.len() && a.bytes().zip(b.bytes()).all(|(x, y)| x == y)
}

/// A label of 1–7 bytes as one number (bytes, and the length in the top byte), 0 for others:
/// equal numbers are equal labels.
fn pack_label(label: &str) -> u64 {
    let bytes = label.as_bytes();
    if bytes.is_empty() || bytes.len() > 7 {
        return 0;
    }
    bytes.iter().enumerate().fold((bytes.len() as u64) << 56, |packed, (i, &b)| packed | u64::from(b) << (8 * i))
}

/// The allele labels of one locus in order of first appearance (code = position + 1).
#[derive(Default)]
struct LocusLabels {
    labels: Vec<String>,
    /// Label to code, built once the locus has more labels than a scan of the list suits
    /// (SNPs have two, microsatellites a few dozen at most).
    index: Option<HashMap<String, u16>>,
}

/// Labels a locus looks up by scanning before it builds an index.
const LABELS_SCANNED: usize = 16;

impl LocusLabels {
    fn code(&self, label: &str) -> Option<u16> {
        match &self.index {
            Some(index) => index.get(label).copied(),
            // At most LABELS_SCANNED + 1 labels here, so the position fits in u16.
            None => self.labels.iter().position(|l| same_text(l, label)).map(|i| i as u16 + 1),
        }
    }

    /// Adds `label` as the next code; `None` when the codes are used up.
    fn add(&mut self, label: &str) -> Option<u16> {
        let code = u16::try_from(self.labels.len() + 1).ok()?;
        self.labels.push(label.to_string());
        match &mut self.index {
            Some(index) => {
                index.insert(label.to_string(), code);
            }
            None if self.labels.len() > LABELS_SCANNED => {
                self.index = Some(self.labels.iter().cloned().zip(1..).collect());
            }
            None => {}
        }
        Some(code)
    }
}

/// Samples whose rows are gathered before they are moved into the locus-major buffer: 16
/// samples are one 64-byte cache line of a locus there, written whole.
const BLOCK_SAMPLES: usize = 16;

/// Accumulates rows into the locus-major code buffer: locus `l`, sample `s`, copy `k` at
/// `l × 2n + 2s + k` for the `n` samples counted beforehand. Rows are gathered in sample-major
/// blocks of [`BLOCK_SAMPLES`] first, since writing one row straight into the buffer touches
/// one cache line per locus.
struct Builder<'a> {
    layout: &'a Layout,
    options: &'a WideOptions<'a>,
    samples: Vec<SampleMeta>,
    first_line: HashMap<String, usize>,
    labels: Vec<LocusLabels>,
    /// The first two labels of each locus packed by [`pack_label`] (0: none yet), a compact
    /// copy that answers most look-ups of a row without touching the label lists.
    first_labels: Vec<[u64; 2]>,
    /// Two codes per sample and locus, written as the rows come.
    codes: Vec<AlleleCode>,
    /// Samples the buffer is laid out for.
    capacity: usize,
    /// The rows of the samples from `block_start` on, sample-major (`2 × loci` codes a row).
    block: Vec<AlleleCode>,
    block_start: usize,
    findings: Vec<Finding>,
}

impl<'a> Builder<'a> {
    fn new(layout: &'a Layout, options: &'a WideOptions<'a>, samples: usize) -> Self {
        let n = layout.loci.len();
        Builder {
            layout,
            options,
            samples: Vec::with_capacity(samples),
            first_line: HashMap::new(),
            labels: (0..n).map(|_| LocusLabels::default()).collect(),
            first_labels: vec![[0; 2]; n],
            codes: vec![AlleleCode::UNTYPED; 2 * samples * n],
            capacity: samples,
            block: Vec::with_capacity(2 * n * BLOCK_SAMPLES.min(samples)),
            block_start: 0,
            findings: Vec::new(),
        }
    }

    fn add_row(&mut self, row: &Row<'_>) -> Result<(), DataError> {
        let line = row.line;
        self.check_size(line)?;
        let meta = self.sample_meta(row)?;
        if let Some(first_line) = self.first_line.insert(meta.id.clone(), line) {
            return Err(DataError::DuplicateSample {
                at: Location::line(self.options.file, line),
                id: meta.id,
                first_line,
            });
        }
        let sample = self.samples.len();
        if sample >= self.capacity {
            // The first pass counted the rows this pass sees.
            return Err(DataError::Csv {
                at: Location::line(self.options.file, line),
                message: "internal error: more rows than counted".into(),
            });
        }
        for locus in 0..self.layout.loci.len() {
            let (a, b) = self.genotype(line, &meta.id, locus, row.cell(self.layout.loci[locus].0))?;
            self.block.extend([a, b]);
        }
        self.samples.push(meta);
        if self.samples.len() - self.block_start == BLOCK_SAMPLES {
            self.flush_block();
        }
        Ok(())
    }

    /// Moves the gathered rows into the locus-major buffer.
    fn flush_block(&mut self) {
        let row_codes = 2 * self.layout.loci.len();
        let stride = 2 * self.capacity;
        for locus in 0..self.layout.loci.len() {
            let start = locus * stride + 2 * self.block_start;
            let column = self.block.chunks_exact(row_codes).map(|row| &row[2 * locus..2 * locus + 2]);
            for (to, from) in self.codes[start..].chunks_exact_mut(2).zip(column) {
                to.copy_from_slice(from);
            }
        }
        self.block.clear();
        self.block_start = self.samples.len();
    }

    /// Refuses the row that would take the table past the sample or genotype limit.
    fn check_size(&self, line: usize) -> Result<(), DataError> {
        let samples = self.samples.len() as u64 + 1;
        let genotypes = samples * self.layout.loci.len() as u64;
        let too_large =
            |what, found| Err(DataError::TooLarge { at: Location::line(self.options.file, line), what, found });
        if exceeds(Limited::Samples, samples) {
            return too_large(Limited::Samples, samples);
        }
        if exceeds(Limited::Genotypes, genotypes) {
            return too_large(Limited::Genotypes, genotypes);
        }
        Ok(())
    }

    fn sample_meta(&self, row: &Row<'_>) -> Result<SampleMeta, DataError> {
        let fields = [self.layout.sample, self.layout.population, self.layout.year].map(|c| row.cell(c));
        sample_meta(self.options.file, row.line, fields)
    }

    fn genotype(
        &mut self,
        line: usize,
        sample: &str,
        locus: usize,
        text: &str,
    ) -> Result<(AlleleCode, AlleleCode), DataError> {
        match parse_cell(text, self.options.missing) {
            ParsedCell::Untyped => Ok((AlleleCode::UNTYPED, AlleleCode::UNTYPED)),
            ParsedCell::Typed(a, b) => Ok((self.intern(locus, a)?, self.intern(locus, b)?)),
            ParsedCell::Bad(problem) => {
                self.bad_cell(line, sample, locus, text, problem)?;
                Ok((AlleleCode::UNTYPED, AlleleCode::UNTYPED))
            }
        }
    }

    fn bad_cell(
        &mut self,
        line: usize,
        sample: &str,
        locus: usize,
        text: &str,
        problem: CellProblem,
    ) -> Result<(), DataError> {
        let file = self.options.file;
        let column = self.layout.loci[locus].1.clone();
        if self.options.strict {
            return Err(DataError::BadCell {
                at: Location::line(file, line),
                column,
                text: excerpt(text),
                problem: problem.describe(),
            });
        }
        let message = format!(
            "{file} line {line}, column {column}, cell \"{}\": {}; treated as untyped (set strict = true to stop instead)",
            excerpt(text),
            problem.describe()
        );
        let location = Where {
            file: Some(file.into()),
            line: Some(line as u64),
            column: Some(column),
            sample: Some(sample.into()),
            ..Where::default()
        };
        self.findings.push(Finding::warning(problem.code(), message, location));
        Ok(())
    }

    fn intern(&mut self, locus: usize, label: &str) -> Result<AlleleCode, DataError> {
        let packed = pack_label(label);
        let first = &mut self.first_labels[locus];
        if packed != 0
            && let Some(k) = first.iter().position(|&p| p == packed)
        {
            return Ok(AlleleCode(k as u16 + 1));
        }
        let labels = &mut self.labels[locus];
        if let Some(code) = labels.code(label) {
            return Ok(AlleleCode(code));
        }
        let code = labels.add(label).ok_or_else(|| DataError::TooManyAlleles {
            file: self.options.file.into(),
            locus: self.layout.loci[locus].1.clone(),
        })?;
        if let Some(slot) = first.get_mut(usize::from(code) - 1) {
            *slot = packed;
        }
        Ok(AlleleCode(code))
    }

    fn finish(mut self) -> Result<WideTable, DataError> {
        self.flush_block();
        let loci: Vec<LocusMeta> = self
            .layout
            .loci
            .iter()
            .zip(self.labels)
            .map(|((_, name), labels)| LocusMeta {
                name: name.clone(),
                alleles: labels.labels,
                chromosome: None,
                position: None,
            })
            .collect();
        if self.samples.len() != self.capacity {
            // Every counted row becomes a sample or stops the reading.
            return Err(DataError::Csv {
                at: Location::file(self.options.file),
                message: "internal error: fewer rows than counted".into(),
            });
        }
        let matrix = GenotypeMatrix::new(self.samples, loci, self.codes).map_err(|e| match e {
            MatrixError::TooManyAlleles { locus, .. } => {
                DataError::TooManyAlleles { file: self.options.file.into(), locus }
            }
            // The builder writes exactly two codes per sample and locus, each interned above.
            other => {
                DataError::Csv { at: Location::file(self.options.file), message: format!("internal error: {other}") }
            }
        })?;
        Ok(WideTable { matrix, findings: sort_findings(self.findings) })
    }
}

/// Findings in file order (line, then column order of appearance is kept by a stable sort).
fn sort_findings(mut findings: Vec<Finding>) -> Vec<Finding> {
    findings.sort_by_key(|f| f.location.line);
    findings
}

/// Counts of distinct labels per locus, for tests and summaries.
pub fn allele_label_counts(matrix: &GenotypeMatrix) -> BTreeMap<String, usize> {
    matrix.loci().iter().map(|l| (l.name.clone(), l.alleles.len())).collect()
}

#[cfg(test)]
mod tests;
