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

mod builder;
mod panic_guard;

use builder::MatrixBuilder;

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

#[cfg(test)]
mod tests;
