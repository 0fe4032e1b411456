//! VCF input end to end: the demo case converted to VCF gives the same results as its wide
//! table; bgzipped and plain files read the same; FILTER, sample-sheet mismatches, multi-allelic
//! sites and haploid calls as findings; chromosomes reach `ne-ld`; thread counts do not change
//! results.

use std::collections::HashMap;
use std::io::Write;

use crate::support::Case;

/// A distinct, valid VCF allele sequence for the `k`-th allele of a locus (A, C, G, T, AA, …).
fn sequence(mut k: usize) -> String {
    let mut out = Vec::new();
    loop {
        out.push(b"ACGT"[k % 4]);
        k /= 4;
        if k == 0 {
            break;
        }
        k -= 1;
    }
    String::from_utf8(out).expect("ASCII")
}

/// The demo's wide table as a VCF file (one record per locus, locus name as ID, alleles in
/// order of first appearance so that REF/ALT indices match the wide table's codes), a sample
/// sheet, and the wide table with its few malformed cells written as untyped (both readers
/// treat them as untyped but report them differently). `chromosome(i)` names the chromosome of
/// the `i`-th locus.
fn demo_as_vcf(case: &Case, chromosome: &dyn Fn(usize) -> String) -> (String, String, Vec<u8>) {
    let text = case.read("genotypes.csv");
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = reader.headers().expect("header").iter().map(str::to_string).collect();
    let mut rows: Vec<Vec<String>> =
        reader.records().map(|r| r.expect("row").iter().map(str::to_string).collect()).collect();
    let meta = ["sample", "population", "year", "notes"];
    let loci: Vec<usize> = (0..header.len()).filter(|&i| !meta.contains(&header[i].as_str())).collect();
    let mut sheet = String::from("sample,population,year\n");
    for row in &rows {
        sheet.push_str(&format!("{},{},{}\n", row[0], row[1], row[2]));
    }
    let mut vcf = String::from(
        "##fileformat=VCFv4.3\n##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT",
    );
    for row in &rows {
        vcf.push_str(&format!("\t{}", row[0]));
    }
    vcf.push('\n');
    for (n, &column) in loci.iter().enumerate() {
        let mut index: HashMap<String, usize> = HashMap::new();
        let mut calls = Vec::new();
        for row in &mut rows {
            let halves: Vec<String> = row[column].split('/').map(str::to_string).collect();
            if halves.len() != 2 || halves.iter().any(|h| ["", ".", "NA"].contains(&h.as_str())) {
                row[column] = "NA".into();
                calls.push("./.".to_string());
                continue;
            }
            let mut ids = [0usize; 2];
            for (i, half) in halves.into_iter().enumerate() {
                let next = index.len();
                ids[i] = *index.entry(half).or_insert(next);
            }
            calls.push(format!("{}/{}", ids[0], ids[1]));
        }
        let alleles: Vec<String> = (0..index.len().max(1)).map(sequence).collect();
        let alt = if alleles.len() > 1 { alleles[1..].join(",") } else { ".".to_string() };
        vcf.push_str(&format!(
            "{}\t{}\t{}\t{}\t{alt}\t.\tPASS\t.\tGT\t{}\n",
            chromosome(n),
            1000 * (n + 1),
            header[column],
            alleles[0],
            calls.join("\t")
        ));
    }
    let mut wide = csv::Writer::from_writer(Vec::new());
    wide.write_record(&header).expect("header");
    for row in &rows {
        wide.write_record(row).expect("row");
    }
    (vcf, sheet, wide.into_inner().expect("flush"))
}

/// The demo case with its genotypes given as `calls.vcf` (+ `samples.csv`) instead.
fn demo_vcf_case(chromosome: &dyn Fn(usize) -> String) -> Case {
    let case = Case::demo();
    let (vcf, sheet, _) = demo_as_vcf(&case, chromosome);
    case.write("calls.vcf", vcf).write("samples.csv", sheet);
    let recipe = case
        .read("case.toml")
        .replace("genotypes = \"genotypes.csv\"", "vcf = \"calls.vcf\"\nsamples = \"samples.csv\"");
    case.write("case.toml", recipe);
    case
}

/// A locus sheet placing each demo locus where [`demo_as_vcf`] puts it (chromosome
/// `chromosome(n)`, position 1000·(n + 1)), so that a wide table carries the same places as
/// the VCF made from it.
fn locus_sheet_as_in_vcf(case: &Case, chromosome: &dyn Fn(usize) -> String) -> String {
    let text = case.read("genotypes.csv");
    let header = text.lines().next().expect("header");
    let meta = ["sample", "population", "year", "notes"];
    let mut sheet = String::from("locus,chromosome,position\n");
    for (n, locus) in header.split(',').filter(|c| !meta.contains(c)).enumerate() {
        sheet.push_str(&format!("{locus},{},{}\n", chromosome(n), 1000 * (n + 1)));
    }
    sheet
}

fn results(case: &Case) -> serde_json::Value {
    serde_json::from_str(&case.read("out/results.json")).expect("results.json parses")
}

fn run_ok(case: &Case, args: &[&str]) {
    let run = case.run(args);
    assert_eq!(run.code, 0, "{}\n{}", run.stdout, run.stderr);
}

/// The same genotypes as a wide table and as VCF give the same step results, the same sample,
/// locus and group counts (only the input file entries differ). Each locus sits on its own
/// chromosome so that `ne-ld` skips no pair, and the wide table gets the same places from its
/// locus sheet.
#[test]
fn vcf_and_wide_table_of_the_same_genotypes_give_identical_results() {
    let wide = Case::demo();
    let (_, _, cleaned) = demo_as_vcf(&wide, &|n| format!("chr{n}"));
    // The locus sheet gives the wide table the chromosomes and positions the VCF has.
    let places = locus_sheet_as_in_vcf(&wide, &|n| format!("chr{n}"));
    wide.write("genotypes.csv", cleaned).write("loci.csv", places.clone());
    run_ok(&wide, &["run", "case", "--quiet"]);
    let vcf = demo_vcf_case(&|n| format!("chr{n}"));
    vcf.write("loci.csv", places);
    run_ok(&vcf, &["run", "case", "--quiet"]);
    let (wide, vcf) = (results(&wide), results(&vcf));
    assert_eq!(vcf["data"]["genotypes"], "calls.vcf");
    for key in ["samples", "loci", "groups"] {
        assert_eq!(wide["data"][key], vcf["data"][key], "data.{key}");
    }
    assert_eq!(wide["assessment"], vcf["assessment"]);
    let (wide_steps, vcf_steps) = (wide["steps"].as_array().unwrap(), vcf["steps"].as_array().unwrap());
    assert!(wide_steps.iter().any(|s| s["uses"] == "ne-ld"), "the demo runs ne-ld");
    assert_eq!(wide_steps.len(), vcf_steps.len());
    for (a, b) in wide_steps.iter().zip(vcf_steps) {
        assert_eq!(a, b, "step {}", a["id"]);
    }
}

/// A bgzipped file is recognised by its magic bytes, not its name: the same calls compressed
/// under the same file name give byte-identical results.
#[test]
fn bgzipped_and_plain_vcf_give_identical_results() {
    let plain = demo_vcf_case(&|n| format!("chr{n}"));
    run_ok(&plain, &["run", "case", "--quiet"]);
    let compressed = demo_vcf_case(&|n| format!("chr{n}"));
    let mut writer = noodles_bgzf::io::Writer::new(Vec::new());
    writer.write_all(compressed.read("calls.vcf").as_bytes()).expect("compress");
    compressed.write("calls.vcf", writer.finish().expect("finish"));
    run_ok(&compressed, &["run", "case", "--quiet"]);
    assert_eq!(plain.read("out/results.json"), compressed.read("out/results.json"));
    let record: serde_json::Value = serde_json::from_str(&compressed.read("out/provenance.json")).expect("provenance");
    let roles: Vec<&str> = record["inputs"].as_array().unwrap().iter().map(|i| i["role"].as_str().unwrap()).collect();
    assert_eq!(roles, ["vcf", "samples", "populations", "loci"]);
    let verify = compressed.run(&["verify", "case/out", "--quiet"]);
    assert_eq!(verify.code, 0, "{}\n{}", verify.stdout, verify.stderr);
    assert!(
        verify.stdout.contains("verified: every input, step and output is the same as recorded"),
        "{}",
        verify.stdout
    );
}

/// Waples, Larson & Waples (2016): with CHROM known, `ne-ld` skips pairs of loci on
/// the same chromosome. The demo's 15 loci on 3 chromosomes of 5 give 3 × C(5,2) = 30 skipped
/// pairs (hand count).
#[test]
fn ne_ld_skips_pairs_on_the_same_chromosome_from_vcf() {
    let case = demo_vcf_case(&|n| format!("chr{}", n / 5));
    run_ok(&case, &["run", "case", "--quiet"]);
    let doc = results(&case);
    let ld = doc["steps"].as_array().unwrap().iter().find(|s| s["uses"] == "ne-ld").expect("ne-ld step");
    let skipped = ld["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["code"] == "same-chromosome-pairs-skipped")
        .expect("skip finding");
    assert!(skipped["message"].as_str().unwrap().contains("30 pairs"), "{}", skipped["message"]);
}

/// `--threads 1` and `--threads 2` give byte-identical results (every parallel reduction runs
/// in a fixed order).
#[test]
fn thread_count_does_not_change_results() {
    let one = Case::demo();
    run_ok(&one, &["run", "case", "--quiet", "--threads", "1"]);
    let two = Case::demo();
    let run = two.run(&["run", "case", "--threads", "2"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // stderr is not a terminal here, so no progress is drawn even without --quiet.
    assert_eq!(run.stderr, "");
    assert_eq!(one.read("out/results.json"), two.read("out/results.json"));
    let zero = one.run(&["run", "case", "--threads", "0", "--out", "other"]);
    assert_eq!(zero.code, 2, "{}", zero.stderr);
}

const SMALL_VCF: &str = "##fileformat=VCFv4.3\n\
##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n\
#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT\ta1\ta2\ta3\ta4\tb1\tb2\tb3\tb4\tx9\n\
1\t100\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\t0/1\t0/0\t0/1\t0/0\t1/1\t0/0\n\
1\t200\t.\tC\tT,G\t.\tPASS\t.\tGT\t0/2\t1/2\t0/0\t2/2\t0/1\t1\t0/0\t0/2\t0/0\n\
2\t300\t.\tT\tC\t.\tLowQual\t.\tGT\t0/1\t0/0\t1/1\t0/1\t0/0\t0/1\t0/0\t1/1\t0/0\n\
2\t400\trs9\tG\tA\t.\t.\t.\tGT\t0/1\t0/1\t1/1\t0/0\t0/0\t0/1\t1/1\t0/0\t0/0\n";

/// A small VCF case: sheet mismatches on both sides, a record dropped by FILTER, a
/// multi-allelic site and a haploid call, each reported by `popgauge check`.
#[test]
fn check_reports_vcf_findings() {
    let case = Case::fixture("minimal");
    case.write("calls.vcf", SMALL_VCF);
    case.write("samples.csv", "sample,population,year\na1,North,2020\na2,North,2020\na3,North,2020\na4,North,2020\nb1,South,2020\nb2,South,2020\nb3,South,2020\nb4,South,2020\nb5,South,2020\n");
    let recipe = case
        .read("case.toml")
        .replace("genotypes = \"genotypes.csv\"", "vcf = \"calls.vcf\"\nsamples = \"samples.csv\"");
    case.write("case.toml", recipe);
    let check = case.run(&["check", "case"]);
    assert_eq!(check.code, 0, "{}", check.stderr);
    assert!(check.stdout.contains("Data: 8 samples × 3 loci in 2 groups (population × year)"), "{}", check.stdout);
    for expected in [
        "warning: calls.vcf: 1 sample(s) have no row in samples.csv and are not read: x9",
        "warning: samples.csv: 1 sample(s) listed in the sheet are not in calls.vcf: b5",
        "warning: calls.vcf: 1 call(s) with a single allele (popgauge reads diploid calls a/b), treated as untyped (set strict = true to stop instead); the first at line 5, sample b2, GT \"1\"",
    ] {
        assert!(check.stdout.contains(expected), "missing {expected:?} in\n{}", check.stdout);
    }
    run_ok(&case, &["run", "case", "--quiet"]);
    let doc = results(&case);
    let findings = doc["data"]["findings"].as_array().unwrap();
    let filtered = findings.iter().find(|f| f["code"] == "filtered-records").expect("FILTER finding");
    assert_eq!(
        filtered["message"],
        "calls.vcf: 1 record(s) not read because of their FILTER value (LowQual ×1); accepted: PASS, . (accept_filters)"
    );
    let loci = doc["steps"][0]["tables"]["loci"].clone();
    let alleles = loci["columns"].as_array().unwrap().iter().position(|c| c == "alleles").unwrap();
    let counts: Vec<&serde_json::Value> = loci["rows"].as_array().unwrap().iter().map(|r| &r[alleles]).collect();
    assert_eq!(counts, [&serde_json::json!(2), &serde_json::json!(3), &serde_json::json!(2)]);
}

/// A VCF without its sample sheet, and a file cut in the middle of a bgzip block, are refused
/// with the file, line and a fix.
#[test]
fn vcf_errors_name_the_place_and_the_fix() {
    let case = Case::fixture("minimal");
    case.write("calls.vcf", SMALL_VCF);
    let recipe = case.read("case.toml").replace("genotypes = \"genotypes.csv\"", "vcf = \"calls.vcf\"");
    case.write("case.toml", recipe);
    let check = case.run(&["check", "case"]);
    assert_eq!(check.code, 2);
    assert_eq!(
        check.stderr,
        "error: case.toml:11:7: `vcf` needs a sample sheet that gives each sample's population and year\n  help: add `samples = \"samples.csv\"` (columns sample, population, year)\n"
    );

    let body: String = (1..=2000)
        .map(|i| format!("1\t{i}\t.\tA\tG\t.\tPASS\t.\tGT\t0/1\t0/0\t1/1\t0/1\t0/0\t0/1\t0/0\t1/1\t0/0\n"))
        .collect();
    let mut writer = noodles_bgzf::io::Writer::new(Vec::new());
    writer.write_all(format!("{SMALL_VCF}{body}").as_bytes()).expect("compress");
    let bytes = writer.finish().expect("finish");
    case.write("calls.vcf", &bytes[..bytes.len() - 28 - 100]);
    case.write("samples.csv", "sample,population,year\na1,North,2020\nb1,South,2020\n");
    let recipe =
        case.read("case.toml").replace("vcf = \"calls.vcf\"", "vcf = \"calls.vcf\"\nsamples = \"samples.csv\"");
    case.write("case.toml", recipe);
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.starts_with("error: calls.vcf:"), "{}", run.stderr);
    assert!(run.stderr.contains("the compressed data end in the middle of a block"), "{}", run.stderr);
    assert!(run.stderr.contains("help: the file is truncated or damaged"), "{}", run.stderr);
    assert!(!case.path().join("out").exists(), "no partial output");
}
