//! VCF input (v4.x, plain or bgzip-compressed, told apart by the gzip magic bytes), streamed
//! record by record into the genotype matrix.
//!
//! Only the GT field is read. Samples come in VCF column order, restricted to those in the
//! sample sheet (which gives population and year). Each record that passes FILTER
//! (`accept_filters`, default `PASS` or `.`) and the site filters becomes one locus:
//! - named by its ID when set and not used before, otherwise `CHROM:POS` (`CHROM:POS:2`, … for
//!   further records at the same position);
//! - with CHROM as the locus's chromosome (so `ne-ld` can skip same-chromosome pairs) and POS as
//!   its position (so `inbreeding` can find runs of homozygosity);
//! - with the alleles that the read samples carry, coded 1, 2, … in REF/ALT order; their labels
//!   are the allele sequences when every allele of the record is 1–32 characters from
//!   `A–Z a–z 0–9 . _ -`, otherwise the allele indices `0` (REF), `1`, ….
//!
//! A haploid or polyploid call, a call with one allele missing, or an allele index the record
//! does not list is treated as untyped and counted in one finding per problem (naming the first
//! line, sample and call), unless `strict` makes it an error. Calls are diploid only. Samples
//! of the VCF missing from the sheet, and the reverse, are each listed in full in a finding.

use std::collections::{BTreeMap, HashSet};
use std::fs::File;
use std::io::{self, BufRead, BufReader, Read};
use std::path::Path;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};

use noodles_vcf as vcf;
use popgauge_abi::{AlleleCode, Finding, GenotypeMatrix, LocusMeta, MatrixError, SampleMeta, Where};

use super::DataError;
use super::limits::{Limited, MAX_ALLELES_PER_LOCUS, exceeds};
use super::sample_sheet::SampleSheet;
use super::site_filter::{SiteTally, name_list, site_verdict};
use super::wide_table::is_valid_label;
use crate::progress::Progress;
use crate::hash::{DigestingReader, FileDigest};
use crate::recipe::SiteFilters;
use crate::source::{Location, excerpt};
use panic_guard::PanicGuard;

mod panic_guard;

/// The first two bytes of every gzip (and so every bgzip) stream.
const GZIP_MAGIC: [u8; 2] = [0x1f, 0x8b];

/// Records between progress reports.
const PROGRESS_EVERY: usize = 256;

/// How to read a VCF file.
#[derive(Debug, Clone, Copy)]
pub struct VcfOptions<'a> {
    /// File name for messages (relative to the case folder).
    pub file: &'a str,
    /// The sample sheet's file name, for messages.
    pub sheet_file: &'a str,
    /// FILTER values accepted.
    pub accept_filters: &'a [String],
    /// Site filters.
    pub sites: &'a SiteFilters,
    /// Bad calls are errors.
    pub strict: bool,
}

/// A VCF file read into a matrix.
#[derive(Debug)]
pub struct VcfData {
    /// The genotypes.
    pub matrix: GenotypeMatrix,
    /// Findings: sample-sheet mismatches, records dropped by FILTER or the site filters, bad calls.
    pub findings: Vec<Finding>,
    /// Digest of the file's bytes as read (compressed bytes for a bgzipped file).
    pub digest: FileDigest,
}

/// Reads a VCF file at `path` with its sample sheet.
///
/// # Errors
/// A [`DataError`] naming the file, line and field: unreadable or undecompressable (for
/// example truncated) data, a header that is not VCF 4.x, a malformed record, no sample shared
/// with the sheet, no site left, and with `strict` the first bad call.
pub fn read_vcf(
    path: &Path,
    sheet: &SampleSheet,
    options: &VcfOptions<'_>,
    progress: &mut dyn Progress,
) -> Result<VcfData, DataError> {
    let unreadable = |source| DataError::Unreadable { file: options.file.into(), source };
    let file = File::open(path).map_err(unreadable)?;
    let total = file.metadata().map(|m| m.len()).unwrap_or(0);
    let digesting = DigestingReader::new(file);
    let counter = digesting.counter();
    let mut raw = BufReader::with_capacity(1 << 16, digesting);
    let compressed = raw.fill_buf().map_err(unreadable)?.starts_with(&GZIP_MAGIC);
    let watch = ByteWatch { counter, total };
    let (matrix, findings, raw) = if compressed {
        let mut reader = vcf::io::Reader::new(noodles_bgzf::io::Reader::new(raw));
        let (matrix, findings) = read_stream(&mut reader, sheet, options, Source { compressed, watch, progress })?;
        (matrix, findings, reader.into_inner().into_inner())
    } else {
        let mut reader = vcf::io::Reader::new(raw);
        let (matrix, findings) = read_stream(&mut reader, sheet, options, Source { compressed, watch, progress })?;
        (matrix, findings, reader.into_inner())
    };
    let digest = raw.into_inner().finish().map_err(unreadable)?;
    Ok(VcfData { matrix, findings, digest })
}

/// Bytes read so far out of the file size, for progress.
struct ByteWatch {
    counter: Arc<AtomicU64>,
    total: u64,
}

/// What the record loop needs besides the reader.
struct Source<'p> {
    compressed: bool,
    watch: ByteWatch,
    progress: &'p mut dyn Progress,
}

fn read_stream<R: BufRead>(
    reader: &mut vcf::io::Reader<R>,
    sheet: &SampleSheet,
    options: &VcfOptions<'_>,
    source: Source<'_>,
) -> Result<(GenotypeMatrix, Vec<Finding>), DataError> {
    let (header, header_lines) = read_header(reader, options.file, source.compressed)?;
    let columns = SampleColumns::match_sheet(&header, sheet, options)?;
    let samples_read = columns.samples.len() as u64;
    if exceeds(Limited::Samples, samples_read) {
        let at = Location::line(options.file, header_lines);
        return Err(DataError::TooLarge { at, what: Limited::Samples, found: samples_read });
    }
    let mut builder = MatrixBuilder::new(columns, header_lines, options);
    let mut record = vcf::Record::default();
    let guard = PanicGuard::install();
    loop {
        let line = builder.next_line();
        match reader.read_record(&mut record) {
            Ok(0) => break,
            Ok(_) => match guard.contain(|| builder.add_record(&record, line)) {
                Some(added) => added?,
                None => {
                    return Err(DataError::VcfRecord {
                        at: Location::line(options.file, line),
                        field: "line".into(),
                        problem: "the record's fields cannot be told apart (a byte sequence the VCF parser cannot split)".into(),
                        help: "check the record's CHROM, POS, ID, REF, ALT, QUAL and FILTER fields for stray characters; they are plain ASCII in a valid file".into(),
                    });
                }
            },
            Err(e) => return Err(stream_error(options.file, line, source.compressed, &e)),
        }
        if builder.records.is_multiple_of(PROGRESS_EVERY) {
            source.progress.within(source.watch.counter.load(Ordering::Relaxed), source.watch.total);
        }
    }
    builder.finish()
}

/// Reads and parses the header; returns it with its number of lines.
fn read_header<R: BufRead>(
    reader: &mut vcf::io::Reader<R>,
    file: &str,
    compressed: bool,
) -> Result<(vcf::Header, usize), DataError> {
    let mut text = String::new();
    if let Err(e) = reader.header_reader().read_to_string(&mut text) {
        return Err(stream_error(file, text.matches('\n').count() + 1, compressed, &e));
    }
    let lines = text.matches('\n').count();
    let header: vcf::Header = text
        .parse()
        .map_err(|e: vcf::header::ParseError| DataError::VcfHeader { file: file.into(), problem: e.to_string() })?;
    if header.file_format().major() != 4 {
        let found = header.file_format();
        return Err(DataError::VcfHeader {
            file: file.into(),
            problem: format!("the file format is VCFv{}.{}; popgauge reads VCF 4.x", found.major(), found.minor()),
        });
    }
    Ok((header, lines))
}

/// An error while reading bytes: truncated or damaged compressed data, bytes that are not
/// text, or a record cut short.
fn stream_error(file: &str, line: usize, compressed: bool, error: &io::Error) -> DataError {
    let at = Location::line(file, line);
    if compressed && matches!(error.kind(), io::ErrorKind::UnexpectedEof) {
        return DataError::Truncated { at, message: error.to_string() };
    }
    if compressed && error.kind() != io::ErrorKind::InvalidData {
        return DataError::Decompress { at, message: error.to_string() };
    }
    DataError::VcfRecord {
        at,
        field: "line".into(),
        problem: format!("the line is not a VCF record ({error})"),
        help: "a record has at least 8 tab-separated fields (CHROM POS ID REF ALT QUAL FILTER INFO), then FORMAT and one column per sample, and ends with a line break".into(),
    }
}

/// Which VCF sample columns are read, and the sheet's facts for each.
struct SampleColumns {
    /// Per VCF column: `Some(matrix sample index)` when the sample is in the sheet.
    matrix_index: Vec<Option<usize>>,
    /// VCF column names.
    names: Vec<String>,
    /// The samples read, in VCF column order.
    samples: Vec<SampleMeta>,
    findings: Vec<Finding>,
}

impl SampleColumns {
    fn match_sheet(
        header: &vcf::Header,
        sheet: &SampleSheet,
        options: &VcfOptions<'_>,
    ) -> Result<SampleColumns, DataError> {
        let names: Vec<String> = header.sample_names().iter().cloned().collect();
        let mut matrix_index = Vec::with_capacity(names.len());
        let mut samples = Vec::new();
        let mut not_in_sheet = Vec::new();
        for name in &names {
            match sheet.index.get(name) {
                Some(&row) => {
                    matrix_index.push(Some(samples.len()));
                    samples.push(sheet.samples[row].clone());
                }
                None => {
                    matrix_index.push(None);
                    not_in_sheet.push(name.clone());
                }
            }
        }
        if samples.is_empty() {
            return Err(DataError::NoSharedSamples {
                file: options.file.into(),
                sheet: options.sheet_file.into(),
                vcf_samples: names.len(),
                sheet_samples: sheet.samples.len(),
            });
        }
        let in_vcf: HashSet<&str> = names.iter().map(String::as_str).collect();
        let not_in_vcf: Vec<String> =
            sheet.samples.iter().filter(|s| !in_vcf.contains(s.id.as_str())).map(|s| s.id.clone()).collect();
        let mismatch = |code: &str, message: String| {
            Finding::warning(code, message, Where { file: Some(options.sheet_file.into()), ..Where::default() })
        };
        let mut findings = Vec::new();
        if !not_in_sheet.is_empty() {
            let message = format!(
                "{}: {} sample(s) have no row in {} and are not read: {}",
                options.file,
                not_in_sheet.len(),
                options.sheet_file,
                not_in_sheet.join(", ")
            );
            findings.push(mismatch("sample-not-in-sheet", message));
        }
        if !not_in_vcf.is_empty() {
            let message = format!(
                "{}: {} sample(s) listed in the sheet are not in {}: {}",
                options.sheet_file,
                not_in_vcf.len(),
                options.file,
                not_in_vcf.join(", ")
            );
            findings.push(mismatch("sample-not-in-vcf", message));
        }
        Ok(SampleColumns { matrix_index, names, samples, findings })
    }
}

/// What is wrong with a GT call.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum CallProblem {
    Haploid,
    Polyploid,
    OneAlleleMissing,
    BadAllele,
}

impl CallProblem {
    fn code(self) -> &'static str {
        match self {
            CallProblem::Haploid => "haploid-genotype",
            CallProblem::Polyploid => "too-many-alleles",
            CallProblem::OneAlleleMissing => "half-missing-genotype",
            CallProblem::BadAllele => "bad-allele-index",
        }
    }

    fn describe(self) -> &'static str {
        match self {
            CallProblem::Haploid => "a single allele (popgauge reads diploid calls a/b)",
            CallProblem::Polyploid => "more than two alleles (popgauge reads diploid calls a/b)",
            CallProblem::OneAlleleMissing => "one allele missing",
            CallProblem::BadAllele => "an allele index that the record's REF/ALT does not list",
        }
    }
}

/// Parses a GT value into two allele indices plus one (0 = untyped).
fn parse_gt(text: &str, alleles: usize) -> Result<(u16, u16), CallProblem> {
    let mut parts = text.split(['/', '|']);
    let first = parts.next().unwrap_or(".");
    let Some(second) = parts.next() else {
        return if first == "." { Ok((0, 0)) } else { Err(CallProblem::Haploid) };
    };
    if parts.next().is_some() {
        return Err(CallProblem::Polyploid);
    }
    let index = |allele: &str| -> Result<u16, CallProblem> {
        match allele.parse::<usize>() {
            Ok(i) if i < alleles => u16::try_from(i + 1).map_err(|_| CallProblem::BadAllele),
            _ => Err(CallProblem::BadAllele),
        }
    };
    match (first == ".", second == ".") {
        (true, true) => Ok((0, 0)),
        (true, false) | (false, true) => Err(CallProblem::OneAlleleMissing),
        (false, false) => Ok((index(first)?, index(second)?)),
    }
}

/// Bad calls by problem: how many, and the first one's line, sample and text.
#[derive(Default)]
struct CallTally {
    by_problem: BTreeMap<CallProblem, (usize, usize, String, String)>,
}

impl CallTally {
    fn findings(&self, file: &str) -> Vec<Finding> {
        self.by_problem
            .iter()
            .map(|(problem, (count, line, sample, text))| {
                let message = format!(
                    "{file}: {count} call(s) with {}, treated as untyped (set strict = true to stop instead); the first at line {line}, sample {sample}, GT \"{text}\"",
                    problem.describe()
                );
                let location = Where { file: Some(file.into()), line: Some(*line as u64), sample: Some(sample.clone()), ..Where::default() };
                Finding::warning(problem.code(), message, location)
            })
            .collect()
    }
}

/// Accumulates records into the locus-major code buffer.
struct MatrixBuilder<'a> {
    columns: SampleColumns,
    header_lines: usize,
    options: &'a VcfOptions<'a>,
    records: usize,
    loci: Vec<LocusMeta>,
    codes: Vec<AlleleCode>,
    names: HashSet<String>,
    /// Indices plus one of the current record's calls, two per read sample.
    calls: Vec<u16>,
    filtered: BTreeMap<String, usize>,
    no_gt: Vec<String>,
    sites: SiteTally,
    bad_calls: CallTally,
}

impl<'a> MatrixBuilder<'a> {
    fn new(columns: SampleColumns, header_lines: usize, options: &'a VcfOptions<'a>) -> Self {
        MatrixBuilder {
            columns,
            header_lines,
            options,
            records: 0,
            loci: Vec::new(),
            codes: Vec::new(),
            names: HashSet::new(),
            calls: Vec::new(),
            filtered: BTreeMap::new(),
            no_gt: Vec::new(),
            sites: SiteTally::default(),
            bad_calls: CallTally::default(),
        }
    }

    /// The 1-based line of the next record.
    fn next_line(&self) -> usize {
        self.header_lines + self.records + 1
    }

    fn record_error(&self, line: usize, field: &str, problem: String, help: &str) -> DataError {
        DataError::VcfRecord {
            at: Location::line(self.options.file, line),
            field: field.into(),
            problem,
            help: help.into(),
        }
    }

    fn add_record(&mut self, record: &vcf::Record, line: usize) -> Result<(), DataError> {
        self.records += 1;
        let chromosome = record.reference_sequence_name();
        let position = match record.variant_start() {
            Some(Ok(p)) => usize::from(p),
            Some(Err(e)) => {
                return Err(self.record_error(
                    line,
                    "POS",
                    format!("the position cannot be read ({e})"),
                    "POS is a whole number ≥ 1",
                ));
            }
            None => {
                return Err(self.record_error(
                    line,
                    "POS",
                    "the position is missing (\".\")".into(),
                    "POS is a whole number ≥ 1",
                ));
            }
        };
        // noodles gives a missing FILTER (".") as an empty field.
        let filter = match record.filters().as_ref() {
            "" => ".".to_string(),
            value => value.to_string(),
        };
        if !filter.split(';').all(|value| self.options.accept_filters.iter().any(|a| a == value)) {
            *self.filtered.entry(filter).or_default() += 1;
            return Ok(());
        }
        let alleles = allele_list(record);
        let name = self.locus_name(record.ids().as_ref(), chromosome, position);
        if alleles.len() > MAX_ALLELES_PER_LOCUS {
            return Err(DataError::TooManyAlleles { file: self.options.file.into(), locus: excerpt(&name) });
        }
        self.check_size(line)?;
        let samples = record.samples();
        let Some(gt_index) = samples.keys().iter().position(|k| k == "GT") else {
            self.no_gt.push(name);
            return Ok(());
        };
        self.read_calls(&samples, gt_index, alleles.len(), line)?;
        let (labels, site_codes) = compact(&self.calls, &alleles);
        if let Some(reason) = site_verdict(&site_codes, labels.len(), self.options.sites) {
            self.sites.record(reason, &name);
            return Ok(());
        }
        self.names.insert(name.clone());
        self.codes.extend_from_slice(&site_codes);
        self.loci.push(LocusMeta {
            name,
            alleles: labels,
            chromosome: Some(chromosome.to_string()),
            position: u64::try_from(position).ok(),
        });
        Ok(())
    }

    /// Refuses the site that would take the matrix past the locus or genotype limit.
    fn check_size(&self, line: usize) -> Result<(), DataError> {
        let loci = self.loci.len() as u64 + 1;
        let genotypes = loci * self.columns.samples.len() as u64;
        for (what, found) in [(Limited::Loci, loci), (Limited::Genotypes, genotypes)] {
            if exceeds(what, found) {
                return Err(DataError::TooLarge { at: Location::line(self.options.file, line), what, found });
            }
        }
        Ok(())
    }

    /// ID when set and unused, else CHROM:POS, else CHROM:POS:n.
    fn locus_name(&self, id: &str, chromosome: &str, position: usize) -> String {
        if id != "." && !id.is_empty() && !self.names.contains(id) {
            return id.to_string();
        }
        let base = format!("{chromosome}:{position}");
        if !self.names.contains(&base) {
            return base;
        }
        (2..).map(|n| format!("{base}:{n}")).find(|candidate| !self.names.contains(candidate)).unwrap_or(base)
    }

    fn read_calls(
        &mut self,
        samples: &vcf::record::Samples<'_>,
        gt_index: usize,
        alleles: usize,
        line: usize,
    ) -> Result<(), DataError> {
        let read = self.columns.samples.len();
        self.calls.clear();
        self.calls.resize(read * 2, 0);
        let mut columns = 0;
        for (column, sample) in samples.iter().enumerate() {
            columns += 1;
            let Some(&Some(at)) = self.columns.matrix_index.get(column) else { continue };
            let text = sample.as_ref().split(':').nth(gt_index).unwrap_or(".");
            match parse_gt(text, alleles) {
                Ok((a, b)) => (self.calls[2 * at], self.calls[2 * at + 1]) = (a, b),
                Err(problem) => self.bad_call(line, column, text, problem)?,
            }
        }
        if columns != self.columns.names.len() {
            let problem =
                format!("the record has {columns} sample column(s) but the header names {}", self.columns.names.len());
            return Err(self.record_error(
                line,
                "samples",
                problem,
                "every record needs FORMAT and one column per sample of the #CHROM line",
            ));
        }
        Ok(())
    }

    fn bad_call(&mut self, line: usize, column: usize, text: &str, problem: CallProblem) -> Result<(), DataError> {
        let sample = &self.columns.names[column];
        if self.options.strict {
            return Err(DataError::BadCell {
                at: Location::line(self.options.file, line),
                column: sample.clone(),
                text: text.into(),
                problem: problem.describe().into(),
            });
        }
        let entry =
            self.bad_calls.by_problem.entry(problem).or_insert_with(|| (0, line, sample.clone(), text.to_string()));
        entry.0 += 1;
        Ok(())
    }

    fn finish(self) -> Result<(GenotypeMatrix, Vec<Finding>), DataError> {
        let file = self.options.file;
        let mut findings = self.columns.findings;
        if !self.filtered.is_empty() {
            let total: usize = self.filtered.values().sum();
            let values: Vec<String> = self.filtered.iter().map(|(value, n)| format!("{value} ×{n}")).collect();
            let accepted = self.options.accept_filters.join(", ");
            let message = format!(
                "{file}: {total} record(s) not read because of their FILTER value ({}); accepted: {accepted} (accept_filters)",
                values.join(", ")
            );
            findings.push(Finding::info(
                "filtered-records",
                message,
                Where { file: Some(file.into()), ..Where::default() },
            ));
        }
        if !self.no_gt.is_empty() {
            let message = format!(
                "{file}: {} record(s) have no GT field and are not read: {}",
                self.no_gt.len(),
                name_list(&self.no_gt)
            );
            findings.push(Finding::warning(
                "no-genotype-field",
                message,
                Where { file: Some(file.into()), ..Where::default() },
            ));
        }
        findings.extend(self.sites.findings(file, self.options.sites));
        findings.extend(self.bad_calls.findings(file));
        if self.loci.is_empty() {
            return Err(DataError::NoSites { file: file.into(), records: self.records });
        }
        let matrix = GenotypeMatrix::new(self.columns.samples, self.loci, self.codes).map_err(|e| match e {
            MatrixError::TooManyAlleles { locus, .. } => DataError::TooManyAlleles { file: file.into(), locus },
            // The builder writes two codes per read sample and locus, each within its labels.
            other => DataError::Csv { at: Location::file(file), message: format!("internal error: {other}") },
        })?;
        Ok((matrix, findings))
    }
}

/// REF then the ALT alleles (`.` means none).
fn allele_list(record: &vcf::Record) -> Vec<String> {
    let mut alleles = vec![record.reference_bases().to_string()];
    let alternate = record.alternate_bases();
    let alternate = alternate.as_ref();
    if alternate != "." && !alternate.is_empty() {
        alleles.extend(alternate.split(',').map(str::to_string));
    }
    alleles
}

/// The alleles the calls use, coded 1, 2, … in REF/ALT order, with their labels (sequences
/// when all of the record's alleles make valid, distinct labels, else indices), and the codes.
fn compact(calls: &[u16], alleles: &[String]) -> (Vec<String>, Vec<AlleleCode>) {
    let mut used = vec![false; alleles.len() + 1];
    for &c in calls {
        used[c as usize] = true;
    }
    let distinct: HashSet<&str> = alleles.iter().map(String::as_str).collect();
    let sequences = distinct.len() == alleles.len() && alleles.iter().all(|a| is_valid_label(a));
    let mut code_of = vec![0u16; alleles.len() + 1];
    let mut labels = Vec::new();
    for index in 0..alleles.len() {
        if used[index + 1] {
            labels.push(if sequences { alleles[index].clone() } else { index.to_string() });
            // At most 65535 alleles are listed before this fails; GenotypeMatrix then refuses.
            code_of[index + 1] = u16::try_from(labels.len()).unwrap_or(u16::MAX);
        }
    }
    (labels, calls.iter().map(|&c| AlleleCode(code_of[c as usize])).collect())
}

#[cfg(test)]
mod tests;
