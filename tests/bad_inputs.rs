//! The bad-input corpus: every folder of `tests/bad-inputs/` run through the real binary.
//!
//! `tests/bad-inputs/_base/` is a small valid case. A case folder holds the files that differ
//! from it and `expect.toml`, which says what `popgauge run` must do:
//! - `exit = 2` and `stderr`: the exact error paragraph (file, line or field, `help:` line),
//!   nothing on stdout, no output folder, no temporary leftovers, the case folder untouched;
//! - `exit = 0` and `finding` (+ `pdf`): the finding code in `results.json` and the given
//!   words in the PDF's text layer; or `samples`: a file accepted as it should be.
//!
//! Inputs too big for git are made by the test (`generate`), and a link pointing outside the
//! case folder is made by `symlink = [link, target]`.

use std::path::Path;

use serde::Deserialize;

use crate::report::{pdf_text, squeezed};
use crate::support::{entries, popgauge, repo_root};

/// One case's `expect.toml`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Expect {
    /// What the case is, for the failure list.
    description: String,
    /// Exit code of `popgauge run`.
    exit: i32,
    /// Exact stderr for refusals.
    stderr: Option<String>,
    /// Finding code expected in `results.json`.
    finding: Option<String>,
    /// Words expected in the PDF's text layer.
    pdf: Option<String>,
    /// Samples read, for inputs that must be accepted.
    samples: Option<u64>,
    /// `[link in the case, file outside it]`.
    symlink: Option<[String; 2]>,
    /// An input made by the test instead of stored in git.
    generate: Option<Generated>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "kebab-case")]
enum Generated {
    /// `genotypes.csv` is one 40 MB line with neither delimiter nor line break.
    LongLine,
    /// One genotype cell of 40 MB, on a single line.
    LongCell,
    /// `genotypes.csv` is a sparse file one byte over the 2 GiB limit.
    OversizedFile,
    /// One locus column more than the limit.
    TooManyLoci,
    /// One sample row more than the limit.
    TooManySamples,
    /// One locus with one distinct allele more than 16-bit codes hold.
    TooManyAlleles,
    /// `calls.vcf` and `samples.csv` with one sample more than the limit.
    VcfTooManySamples,
}

const FORTY_MB: usize = 40 * 1024 * 1024;

fn generate(what: Generated, case: &Path) {
    use std::fmt::Write as _;
    let genotypes = case.join("genotypes.csv");
    let header = "sample,population,year,L1";
    let text = match what {
        Generated::LongLine => "A".repeat(FORTY_MB),
        Generated::LongCell => format!("{header}\na1,North,2020,{}/1", "1".repeat(FORTY_MB)),
        Generated::OversizedFile => {
            let file = std::fs::File::create(&genotypes).expect("create");
            file.set_len(popgauge::data::limits::MAX_FILE_BYTES + 1).expect("sparse file");
            return;
        }
        Generated::TooManyLoci => {
            let mut text = "sample,population,year".to_string();
            for l in 0..=popgauge::data::limits::MAX_LOCI {
                write!(text, ",L{l}").expect("write to string");
            }
            text + "\n"
        }
        Generated::TooManySamples => {
            let mut text = format!("{header}\n");
            for s in 0..=popgauge::data::limits::MAX_SAMPLES {
                writeln!(text, "s{s},North,2020,1/2").expect("write to string");
            }
            text
        }
        Generated::VcfTooManySamples => {
            let names: Vec<String> = (0..=popgauge::data::limits::MAX_SAMPLES).map(|s| format!("s{s}")).collect();
            let mut sheet = "sample,population,year\n".to_string();
            for name in &names {
                writeln!(sheet, "{name},North,2020").expect("write to string");
            }
            std::fs::write(case.join("samples.csv"), sheet).expect("write generated sheet");
            let vcf = format!(
                "##fileformat=VCFv4.3\n##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT\t{}\n",
                names.join("\t")
            );
            std::fs::write(case.join("calls.vcf"), vcf).expect("write generated VCF");
            return;
        }
        Generated::TooManyAlleles => {
            let mut text = format!("{header}\n");
            for s in 0..=popgauge::data::limits::MAX_ALLELES_PER_LOCUS / 2 {
                writeln!(text, "s{s},North,2020,a{}/a{}", 2 * s, 2 * s + 1).expect("write to string");
            }
            text
        }
    };
    std::fs::write(genotypes, text).expect("write generated input");
}

fn copy_files(from: &Path, to: &Path) {
    for entry in std::fs::read_dir(from).expect("read case folder") {
        let entry = entry.expect("entry");
        if entry.file_name() != "expect.toml" {
            std::fs::copy(entry.path(), to.join(entry.file_name())).expect("copy");
        }
    }
}

/// Sets the case up in a fresh temporary folder, runs it, and returns what went wrong.
fn run_case(folder: &Path) -> Result<(), String> {
    let expect: Expect =
        toml::from_str(&std::fs::read_to_string(folder.join("expect.toml")).map_err(|e| e.to_string())?)
            .map_err(|e| format!("expect.toml: {e}"))?;
    let root = tempfile::tempdir().expect("temporary folder");
    let case = root.path().join("case");
    std::fs::create_dir_all(&case).expect("create case");
    copy_files(&repo_root().join("tests/bad-inputs/_base"), &case);
    copy_files(folder, &case);
    let mut root_entries = vec!["case".to_string()];
    if let Some([link, target]) = &expect.symlink {
        std::fs::rename(case.join(link), root.path().join(target)).expect("move file outside");
        std::os::unix::fs::symlink(root.path().join(target), case.join(link)).expect("symlink");
        root_entries.push(target.clone());
        root_entries.sort();
    }
    if let Some(what) = expect.generate {
        generate(what, &case);
    }
    let case_before = entries(&case);
    let run = popgauge(&["run", "case", "--out", "out"], root.path());
    let mut problems = Vec::new();
    if run.code != expect.exit {
        problems.push(format!("exit code {} (expected {})", run.code, expect.exit));
    }
    if run.stderr.contains("panicked") || run.stderr.contains("RUST_BACKTRACE") {
        problems.push("panic text on stderr".into());
    }
    if expect.exit == 0 {
        problems.extend(check_success(&expect, &root.path().join("out")));
    } else {
        if let Some(stderr) = &expect.stderr {
            if &run.stderr != stderr {
                problems.push(format!("stderr differs:\n--- expected\n{stderr}--- found\n{}", run.stderr));
            }
        }
        if !run.stdout.is_empty() {
            problems.push(format!("stdout is not empty: {}", run.stdout));
        }
        if entries(root.path()) != root_entries {
            problems.push(format!("left behind beside the case: {:?}", entries(root.path())));
        }
        if entries(&case) != case_before {
            problems.push(format!("case folder changed: {:?}", entries(&case)));
        }
    }
    if problems.is_empty() { Ok(()) } else { Err(format!("{}: {}", expect.description, problems.join("; "))) }
}

fn check_success(expect: &Expect, out: &Path) -> Vec<String> {
    let mut problems = Vec::new();
    let Ok(text) = std::fs::read_to_string(out.join("results.json")) else {
        return vec!["no results.json".into()];
    };
    let results: serde_json::Value = serde_json::from_str(&text).expect("results.json parses");
    if let Some(code) = &expect.finding {
        let data = results["data"]["findings"].as_array().into_iter().flatten();
        let steps = results["steps"]
            .as_array()
            .into_iter()
            .flatten()
            .flat_map(|s| s["findings"].as_array().into_iter().flatten());
        if !data.chain(steps).any(|f| f["code"] == code.as_str()) {
            problems.push(format!("no `{code}` finding in results.json"));
        }
    }
    if let Some(words) = &expect.pdf {
        if !squeezed(&pdf_text(&out.join("assessment.pdf"))).contains(&squeezed(words)) {
            problems.push(format!("the PDF does not say \"{words}\""));
        }
    }
    if let Some(samples) = expect.samples {
        if results["data"]["samples"] != samples {
            problems.push(format!("{} samples read (expected {samples})", results["data"]["samples"]));
        }
    }
    problems
}

/// Every case of the corpus gives its error paragraph or its finding.
#[test]
fn bad_input_corpus_is_refused_or_reported_as_expected() {
    let corpus = repo_root().join("tests/bad-inputs");
    let cases: Vec<String> = entries(&corpus).into_iter().filter(|name| !name.starts_with('_')).collect();
    assert!(cases.len() >= 30, "the corpus has {} cases", cases.len());
    let failures: Vec<String> =
        cases.iter().filter_map(|name| run_case(&corpus.join(name)).err().map(|e| format!("{name}: {e}"))).collect();
    println!("bad inputs: {} cases passed", cases.len() - failures.len());
    assert!(failures.is_empty(), "{} of {} cases failed:\n{}", failures.len(), cases.len(), failures.join("\n"));
}
