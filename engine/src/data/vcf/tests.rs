use std::io::Write;

use super::*;
use crate::data::sample_sheet::read_sample_sheet;
use crate::progress::Silent;

const HEADER: &str = "##fileformat=VCFv4.3\n##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT\tS1\tS2\tS3\n";

const SHEET: &[u8] = b"sample,population,year\nS1,North,2020\nS2,North,2020\nS3,South,2021\n";

/// Writes `body` after the header into a temporary file (optionally bgzipped).
fn vcf_file(body: &str, bgzip: bool) -> tempfile::NamedTempFile {
    let mut file = tempfile::NamedTempFile::new().unwrap();
    let text = format!("{HEADER}{body}");
    if bgzip {
        let mut writer = noodles_bgzf::io::Writer::new(Vec::new());
        writer.write_all(text.as_bytes()).unwrap();
        file.write_all(&writer.finish().unwrap()).unwrap();
    } else {
        file.write_all(text.as_bytes()).unwrap();
    }
    file
}

fn read_with(
    file: &tempfile::NamedTempFile,
    sheet: &[u8],
    strict: bool,
    accept: &[&str],
) -> Result<VcfData, DataError> {
    let sheet = read_sample_sheet(sheet, "samples.csv").unwrap();
    let accept: Vec<String> = accept.iter().map(|s| s.to_string()).collect();
    let options = VcfOptions {
        file: "calls.vcf",
        sheet_file: "samples.csv",
        accept_filters: &accept,
        sites: &SiteFilters::NONE,
        strict,
    };
    read_vcf(file.path(), &sheet, &options, &mut Silent)
}

fn read(body: &str) -> Result<VcfData, DataError> {
    read_with(&vcf_file(body, false), SHEET, false, &["PASS", "."])
}

fn codes_of(data: &VcfData, locus: usize) -> Vec<u16> {
    let per_locus = data.matrix.samples().len() * 2;
    data.matrix.codes()[locus * per_locus..(locus + 1) * per_locus].iter().map(|c| c.0).collect()
}

/// Hand-made records (common practice for VCF 4.3 GT coding: 0 = REF, k = k-th ALT).
#[test]
fn reads_biallelic_and_multiallelic_sites_with_names_labels_chromosomes_and_positions() {
    let body = "chr1\t100\trs1\tA\tG\t.\tPASS\t.\tGT\t0/0\t0|1\t1/1\n\
                chr1\t200\t.\tC\tT,G\t.\t.\t.\tGT:DP\t0/2:5\t2/2:7\t./.:0\n\
                chr2\t300\trs1\tAT\t<DEL>\t.\tPASS\t.\tGT\t0/1\t1/1\t0/0\n\
                chr2\t300\t.\tG\tC\t.\tPASS\t.\tGT\t0/0\t0/0\t0/1\n";
    let data = read(body).unwrap();
    let names: Vec<&str> = data.matrix.loci().iter().map(|l| l.name.as_str()).collect();
    assert_eq!(names, ["rs1", "chr1:200", "chr2:300", "chr2:300:2"]);
    let chromosomes: Vec<_> = data.matrix.loci().iter().map(|l| l.chromosome.as_deref()).collect();
    assert_eq!(chromosomes, [Some("chr1"), Some("chr1"), Some("chr2"), Some("chr2")]);
    let positions: Vec<_> = data.matrix.loci().iter().map(|l| l.position).collect();
    assert_eq!(positions, [Some(100), Some(200), Some(300), Some(300)]);
    assert_eq!(data.matrix.loci()[0].alleles, ["A", "G"]);
    assert_eq!(codes_of(&data, 0), [1, 1, 1, 2, 2, 2]);
    // Allele T (index 1) is carried by nobody: C and G keep codes 1 and 2 in REF/ALT order.
    assert_eq!(data.matrix.loci()[1].alleles, ["C", "G"]);
    assert_eq!(codes_of(&data, 1), [1, 2, 2, 2, 0, 0]);
    // A symbolic allele is not a valid label, so the record's alleles are named by index.
    assert_eq!(data.matrix.loci()[2].alleles, ["0", "1"]);
    let samples: Vec<&str> = data.matrix.samples().iter().map(|s| s.id.as_str()).collect();
    assert_eq!(samples, ["S1", "S2", "S3"]);
    assert_eq!(data.matrix.samples()[2].population, "South");
    assert!(data.findings.is_empty(), "{:?}", data.findings);
}

#[test]
fn filter_values_other_than_pass_and_dot_are_dropped_with_a_count() {
    let body = "1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n\
                1\t2\t.\tA\tG\t.\tLowQual\t.\tGT\t0/1\t0/0\t1/1\n\
                1\t3\t.\tA\tG\t.\tLowQual;q10\t.\tGT\t0/1\t0/0\t1/1\n\
                1\t4\t.\tA\tG\t.\tLowQual\t.\tGT\t0/1\t0/0\t1/1\n";
    let data = read(body).unwrap();
    assert_eq!(data.matrix.loci().len(), 1);
    let finding = data.findings.iter().find(|f| f.code == "filtered-records").unwrap();
    assert_eq!(
        finding.message,
        "calls.vcf: 3 record(s) not read because of their FILTER value (LowQual ×2, LowQual;q10 ×1); accepted: PASS, . (accept_filters)"
    );
    let accepting = read_with(&vcf_file(body, false), SHEET, false, &["PASS", "LowQual"]).unwrap();
    assert_eq!(accepting.matrix.loci().len(), 3);
}

#[test]
fn haploid_polyploid_and_half_calls_are_findings_or_strict_errors() {
    let body = "1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t1\t0/1/1\t0/.\n\
                1\t2\t.\tA\tG\t.\tPASS\t.\tGT\t0\t0/3\t0/1\n";
    let data = read(body).unwrap();
    assert_eq!(codes_of(&data, 0), [0; 6]);
    assert_eq!(codes_of(&data, 1), [0, 0, 0, 0, 1, 2]);
    let haploid = data.findings.iter().find(|f| f.code == "haploid-genotype").unwrap();
    assert_eq!(
        haploid.message,
        "calls.vcf: 2 call(s) with a single allele (popgauge reads diploid calls a/b), treated as untyped (set strict = true to stop instead); the first at line 4, sample S1, GT \"1\""
    );
    let codes: Vec<&str> = data.findings.iter().map(|f| f.code.as_str()).collect();
    assert_eq!(codes, ["haploid-genotype", "too-many-alleles", "half-missing-genotype", "bad-allele-index"]);
    let err = read_with(&vcf_file(body, false), SHEET, true, &["PASS"]).unwrap_err().to_string();
    assert_eq!(
        err,
        "calls.vcf:4: column `S1`, cell \"1\": a single allele (popgauge reads diploid calls a/b)\n  help: fix the cell, or remove `strict = true` from [data] to treat bad cells as untyped findings"
    );
}

#[test]
fn samples_missing_from_either_side_are_listed() {
    let sheet = b"sample,population,year\nS1,North,2020\nS3,South,2021\nS9,South,2021\n";
    let data =
        read_with(&vcf_file("1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n", false), sheet, false, &["PASS"]).unwrap();
    let samples: Vec<&str> = data.matrix.samples().iter().map(|s| s.id.as_str()).collect();
    assert_eq!(samples, ["S1", "S3"]);
    assert_eq!(codes_of(&data, 0), [1, 2, 2, 2]);
    let messages: Vec<&str> = data.findings.iter().map(|f| f.message.as_str()).collect();
    assert_eq!(
        messages,
        [
            "calls.vcf: 1 sample(s) have no row in samples.csv and are not read: S2",
            "samples.csv: 1 sample(s) listed in the sheet are not in calls.vcf: S9",
        ]
    );
    let none = read_with(
        &vcf_file("1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n", false),
        b"sample,population,year\nX,N,2020\n",
        false,
        &["PASS"],
    );
    assert!(
        none.unwrap_err()
            .to_string()
            .starts_with("calls.vcf: none of its 3 samples is listed in samples.csv (1 samples)")
    );
}

#[test]
fn bgzipped_and_plain_files_read_the_same() {
    let body = "1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n2\t5\trs7\tC\tT,A\t.\tPASS\t.\tGT\t0/2\t1/1\t./.\n";
    let plain = read_with(&vcf_file(body, false), SHEET, false, &["PASS"]).unwrap();
    let compressed_file = vcf_file(body, true);
    let compressed = read_with(&compressed_file, SHEET, false, &["PASS"]).unwrap();
    assert_eq!(plain.matrix, compressed.matrix);
    // The digest is of the bytes on disk, compressed ones included.
    let bytes = std::fs::read(compressed_file.path()).unwrap();
    assert_eq!(compressed.digest, crate::hash::digest_bytes(&bytes));
}

#[test]
fn a_truncated_bgzip_block_is_a_clean_error() {
    let body: String = (1..=400).map(|i| format!("1\t{i}\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n")).collect();
    let file = vcf_file(&body, true);
    let bytes = std::fs::read(file.path()).unwrap();
    // Drop the end-of-file block (28 bytes) and half of the last data block.
    let cut = &bytes[..bytes.len() - 28 - 40];
    std::fs::write(file.path(), cut).unwrap();
    let err = read_with(&file, SHEET, false, &["PASS"]).unwrap_err();
    assert!(matches!(err, DataError::Truncated { .. }), "{err}");
    let message = err.to_string();
    assert!(message.starts_with("calls.vcf:"), "{message}");
    assert!(message.contains("the compressed data end in the middle of a block"), "{message}");
    assert!(message.contains("\n  help: the file is truncated or damaged"), "{message}");
}

#[test]
fn malformed_records_name_line_and_field() {
    let err = read("1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\n").unwrap_err().to_string();
    assert_eq!(
        err,
        "calls.vcf:4: field samples: the record has 2 sample column(s) but the header names 3\n  help: every record needs FORMAT and one column per sample of the #CHROM line"
    );
    let err = read("1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t0/0\n1\tx\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t0/0\n")
        .unwrap_err()
        .to_string();
    assert!(err.starts_with("calls.vcf:5: field POS: the position cannot be read"), "{err}");
    let err = read("1\t1\t.\tA\n").unwrap_err().to_string();
    assert!(err.starts_with("calls.vcf:4: field line: the line is not a VCF record"), "{err}");
}

#[test]
fn a_file_that_is_not_vcf_is_refused_by_its_header() {
    let mut file = tempfile::NamedTempFile::new().unwrap();
    file.write_all(b"sample,population,year\n").unwrap();
    let err = read_with(&file, SHEET, false, &["PASS"]).unwrap_err().to_string();
    assert!(err.starts_with("calls.vcf: the VCF header cannot be read:"), "{err}");
}

#[test]
fn site_filters_drop_sites_while_streaming() {
    let body = "1\t1\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\n1\t2\t.\tA\tG\t.\tPASS\t.\tGT\t0/0\t0/0\t0/0\n1\t3\t.\tA\tG,T\t.\tPASS\t.\tGT\t0/1\t0/2\t./.\n";
    let sheet = read_sample_sheet(SHEET, "samples.csv").unwrap();
    let accept = vec!["PASS".to_string()];
    let sites = SiteFilters { min_call_rate: 0.9, min_maf: 0.05, max_alleles: Some(2) };
    let options = VcfOptions {
        file: "calls.vcf",
        sheet_file: "samples.csv",
        accept_filters: &accept,
        sites: &sites,
        strict: false,
    };
    let data = read_vcf(vcf_file(body, false).path(), &sheet, &options, &mut Silent).unwrap();
    let names: Vec<&str> = data.matrix.loci().iter().map(|l| l.name.as_str()).collect();
    assert_eq!(names, ["1:1"]);
    let codes: Vec<&str> = data.findings.iter().map(|f| f.code.as_str()).collect();
    assert_eq!(codes, ["low-call-rate-sites", "low-maf-sites"]);
}

#[test]
fn gt_parsing_follows_the_vcf_rules() {
    assert_eq!(parse_gt("0/1", 2), Ok((1, 2)));
    assert_eq!(parse_gt("1|0", 2), Ok((2, 1)));
    assert_eq!(parse_gt(".", 2), Ok((0, 0)));
    assert_eq!(parse_gt(".|.", 2), Ok((0, 0)));
    assert_eq!(parse_gt("2/2", 2), Err(CallProblem::BadAllele));
    assert_eq!(parse_gt("a/0", 2), Err(CallProblem::BadAllele));
    assert_eq!(parse_gt("./1", 2), Err(CallProblem::OneAlleleMissing));
}

mod properties {
    use std::io::Write;

    use proptest::prelude::*;

    use super::{SHEET, read_with, vcf_file};

    /// A refusal names the file on its first line and has a help line (errors
    /// name the file and say how to fix them).
    fn clean<T>(result: Result<T, crate::data::DataError>) -> Result<(), TestCaseError> {
        if let Err(e) = result {
            let text = e.to_string();
            prop_assert!(text.lines().next().unwrap_or_default().contains("calls.vcf"), "no file: {}", text);
            prop_assert!(text.contains("\n  help: "), "{}", text);
        }
        Ok(())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(128))]

        /// Any bytes as the VCF file (plain, or bgzip when they happen to start with the gzip
        /// magic): Ok or a clean error, never a panic.
        #[test]
        fn any_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
            let mut file = tempfile::NamedTempFile::new().unwrap();
            file.write_all(&bytes).unwrap();
            for strict in [false, true] {
                clean(read_with(&file, SHEET, strict, &["PASS", "."]))?;
            }
        }

        /// Record-like text after a valid header, plain and bgzipped.
        #[test]
        fn record_like_text(body in "[A-Za-z0-9.:/|;,=\t\n-]{0,300}") {
            for bgzip in [false, true] {
                clean(read_with(&vcf_file(&body, bgzip), SHEET, false, &["PASS", "."]))?;
            }
        }
    }
}
