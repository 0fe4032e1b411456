//! `popgauge run`: outputs, determinism, refusal to overwrite, nothing left behind on failure.

use crate::support::{Case, entries};

fn results(case: &Case, out: &str) -> serde_json::Value {
    serde_json::from_str(&case.read(&format!("{out}/results.json"))).expect("results.json parses")
}

fn table_rows<'a>(
    results: &'a serde_json::Value,
    step: &str,
    table: &str,
) -> (&'a Vec<serde_json::Value>, &'a Vec<serde_json::Value>) {
    let step = results["steps"].as_array().unwrap().iter().find(|s| s["id"] == step).unwrap();
    let t = &step["tables"][table];
    (t["columns"].as_array().unwrap(), t["rows"].as_array().unwrap())
}

fn cell<'a>(columns: &[serde_json::Value], row: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    let i = columns.iter().position(|c| c == name).unwrap_or_else(|| panic!("no column {name}"));
    &row[i]
}

#[test]
fn writes_results_tables_and_provenance() {
    let case = Case::fixture("minimal");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(
        run.stdout,
        "Assessed 8 samples × 3 loci in 2 groups with 2 steps.\nFindings: 0 error(s), 4 warning(s); they are listed in results.json.\nWrote case/out: assessment.pdf, results.json, provenance.json, 5 tables (tables/*.csv) and 0 figure(s) (figures/*.svg).\n"
    );
    let files = entries(&case.path().join("out"));
    assert_eq!(
        files,
        vec!["assessment.json", "assessment.pdf", "assessment.typ", "provenance.json", "results.json", "tables"]
    );
    let tables = entries(&case.path().join("out/tables"));
    assert_eq!(
        tables,
        vec!["diversity.by_group.csv", "diversity.by_locus.csv", "qc.groups.csv", "qc.loci.csv", "qc.samples.csv"]
    );
    let doc = results(&case, "out");
    assert_eq!(doc["schema"], "popgauge.results/1");
    assert_eq!(doc["assessment"]["date"], "2026-11-30");
    assert_eq!(doc["assessment"]["populations"][0]["census_size"], 400.0);
}

/// Hand calculation on the fixture (North 2020): L1 1/2,1/1,2/2,1/2 → p = 0.5, Ho = 0.5,
/// He = 8/7·0.5 = 0.571429; L2 likewise; L3 10/12,10/10,12/14,10/14 → p = (.5,.25,.25),
/// Ho = 0.75, He = 8/7·0.625 = 0.714286. Group: Ho = 0.583333, He = 0.619048,
/// f = 1 − 1.75/1.857143 = 0.057692 (He unbiased, Nei 1978; F = 1 − ΣHo/ΣHe, docs/methods.md,
/// "Inbreeding coefficient F"). FIS (Weir & Cockerham 1984) = 1 − 1.75/1.875 = 0.066667.
#[test]
fn diversity_matches_a_hand_calculation() {
    let case = Case::fixture("minimal");
    assert_eq!(case.run(&["run", "case"]).code, 0);
    let doc = results(&case, "out");
    let (columns, rows) = table_rows(&doc, "diversity", "by_group");
    let north = rows.iter().find(|r| cell(columns, r, "population") == "North").unwrap();
    let close = |name: &str, expected: f64| {
        let got = cell(columns, north, name).as_f64().unwrap();
        assert!((got - expected).abs() < 1e-6, "{name}: {got} vs {expected}");
    };
    close("ho", 0.583333333);
    close("he", 0.619047619);
    close("f", 1.0 - 1.75 / (2.0 * 8.0 / 7.0 * 0.5 + 8.0 / 7.0 * 0.625));
    assert_eq!(cell(columns, north, "n"), 4);
    // WC84 FIS = 1 − ΣHo/ΣHe* with He* = n/(n−1)·(1 − Σp² − Ho/2n): 0.583333, 0.583333, 0.708333.
    close("fis", 1.0 - 1.75 / 1.875);
}

#[test]
fn reruns_are_byte_identical() {
    let case = Case::fixture("minimal");
    assert_eq!(case.run(&["run", "case", "--out", "a"]).code, 0);
    assert_eq!(case.run(&["run", "case", "--out", "b"]).code, 0);
    let read = |p: &str| std::fs::read(case.root().join(p)).unwrap();
    assert_eq!(read("a/results.json"), read("b/results.json"));
    assert_eq!(read("a/tables/diversity.by_group.csv"), read("b/tables/diversity.by_group.csv"));
    // Step start and end times are the only step facts that may differ between runs.
    let prov = |p: &str| -> serde_json::Value {
        let mut record: serde_json::Value = serde_json::from_slice(&read(p)).unwrap();
        for step in record["steps"].as_array_mut().unwrap() {
            let step = step.as_object_mut().unwrap();
            assert!(step.remove("started").is_some() && step.remove("ended").is_some(), "each step has its times");
        }
        record
    };
    let (a, b) = (prov("a/provenance.json"), prov("b/provenance.json"));
    assert_eq!(a["steps"], b["steps"], "result hashes, parameters and seeds agree");
    assert_eq!(a["inputs"], b["inputs"]);
    assert_eq!(a["outputs"], b["outputs"]);
}

#[test]
fn provenance_hashes_inputs_and_outputs() {
    use sha2_hex::hex_sha256;
    let case = Case::fixture("minimal");
    assert_eq!(case.run(&["run", "case"]).code, 0);
    let prov: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json")).unwrap();
    assert_eq!(prov["schema"], "popgauge.provenance/1");
    assert_eq!(prov["recipe"]["sha256"], hex_sha256(&std::fs::read(case.path().join("case.toml")).unwrap()));
    let genotypes = &prov["inputs"][0];
    assert_eq!(genotypes["role"], "genotypes");
    assert_eq!(genotypes["sha256"], hex_sha256(&std::fs::read(case.path().join("genotypes.csv")).unwrap()));
    for output in prov["outputs"].as_array().unwrap() {
        let bytes = std::fs::read(case.path().join("out").join(output["path"].as_str().unwrap())).unwrap();
        assert_eq!(output["sha256"], hex_sha256(&bytes), "{}", output["path"]);
    }
    let qc = &prov["steps"][0];
    assert_eq!(qc["params"]["min_group_size"], 3);
    assert_eq!(qc["params"]["max_missing_locus"], 0.2, "defaults are recorded");
    assert!(qc["seed"].as_u64().is_some());
}

mod sha2_hex {
    /// SHA-256 through the system's `sha256sum`, an implementation independent of popgauge's.
    pub fn hex_sha256(bytes: &[u8]) -> String {
        use std::io::Write;
        let mut child = std::process::Command::new("sha256sum")
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .spawn()
            .expect("sha256sum is available");
        child.stdin.take().unwrap().write_all(bytes).unwrap();
        let out = child.wait_with_output().unwrap();
        String::from_utf8(out.stdout).unwrap().split_whitespace().next().unwrap().to_string()
    }
}

#[test]
fn existing_output_is_refused_and_untouched_without_force() {
    let case = Case::fixture("minimal");
    case.write("out/keep.txt", "mine");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2);
    assert_eq!(
        run.stderr,
        "error: case/out: the output folder already exists; nothing was written\n  help: choose another --out folder, or add --force to replace it\n"
    );
    assert_eq!(entries(&case.path().join("out")), vec!["keep.txt"]);
    let forced = case.run(&["run", "case", "--force"]);
    assert_eq!(forced.code, 0, "{}", forced.stderr);
    assert!(!case.path().join("out/keep.txt").exists());
    assert_eq!(entries(case.root()), vec!["case"], "no temporary folders left");
}

#[test]
fn a_failed_run_leaves_no_output_folder() {
    let case = Case::fixture("minimal");
    case.write("genotypes.csv", "sample,population,year,L1\ns1,North,2020,1/2\ns2,North,twenty,1/1\n");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2);
    assert_eq!(
        run.stderr,
        "error: genotypes.csv:3: column `year` has \"twenty\": the year is not a whole number\n  help: write the sampling year with four digits, for example 2021 (a date or season belongs in an ignored column)\n"
    );
    assert_eq!(entries(&case.path()), vec!["case.toml", "genotypes.csv", "populations.csv"]);
    assert_eq!(entries(case.root()), vec!["case"]);
}

#[test]
fn refuses_to_write_over_the_case_folder() {
    let case = Case::fixture("minimal");
    let run = case.run(&["run", "case", "--out", "case", "--force"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.starts_with(
            "error: case: the output folder contains the case folder; popgauge never writes over its inputs"
        ),
        "{}",
        run.stderr
    );
    assert_eq!(entries(&case.path()), vec!["case.toml", "genotypes.csv", "populations.csv"]);
}

#[test]
fn bad_cells_are_findings_and_strict_mode_fails() {
    let case = Case::fixture("minimal");
    let text = case.read("genotypes.csv").replace("a2,North,2020,1/1", "a2,North,2020,1/.");
    case.write("genotypes.csv", &text);
    let run = case.run(&["run", "case", "--out", "lenient"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc = results(&case, "../lenient");
    let finding = &doc["data"]["findings"][0];
    assert_eq!(finding["code"], "half-missing-genotype");
    assert_eq!(finding["where"]["line"], 3);
    assert_eq!(finding["where"]["column"], "L1");
    let recipe = case
        .read("case.toml")
        .replace("populations = \"populations.csv\"", "populations = \"populations.csv\"\nstrict = true");
    case.write("case.toml", &recipe);
    let strict = case.run(&["run", "case", "--out", "strict"]);
    assert_eq!(strict.code, 2);
    assert!(
        strict.stderr.starts_with("error: genotypes.csv:3: column `L1`, cell \"1/.\": one allele missing"),
        "{}",
        strict.stderr
    );
    assert!(!case.root().join("strict").exists());
}

#[test]
fn the_demo_case_runs() {
    let case = Case::demo();
    let run = case.run(&["run", "case", "--out", "demo-out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(case.root().join("demo-out/results.json")).unwrap()).unwrap();
    let (columns, rows) = table_rows(&doc, "diversity", "by_group");
    assert_eq!(rows.len(), 12, "4 populations × 3 years");
    let populations: std::collections::BTreeSet<String> =
        rows.iter().map(|r| cell(columns, r, "population").as_str().unwrap().to_string()).collect();
    assert_eq!(populations.len(), 4);
}

/// The example cases of a portfolio (one wide table of microsatellites, one bgzipped VCF) run
/// without error-level findings, and their status table has one row per population of the
/// population sheet, each with a threshold category.
#[test]
fn the_example_portfolio_cases_run_without_errors() {
    for (name, populations) in [("river-mussel", 3), ("ground-beetle", 3)] {
        let case = Case::portfolio_example(name);
        let run = case.run(&["run", "case", "--threads", "2"]);
        assert_eq!(run.code, 0, "{name}: {}", run.stderr);
        assert!(run.stdout.contains("Findings: 0 error(s)"), "{name}: {}", run.stdout);
        let doc = results(&case, "out");
        let (columns, rows) = table_rows(&doc, "status", "populations");
        assert_eq!(rows.len(), populations, "{name}");
        let sheet = case.read("populations.csv");
        for row in rows {
            let population = cell(columns, row, "population").as_str().unwrap();
            assert!(sheet.lines().any(|line| line.starts_with(&format!("{population},"))), "{name}: {population}");
            let category = cell(columns, row, "category").as_str().unwrap();
            assert!(["below 50", "50–500", "500 or more"].contains(&category), "{name}: {population} {category}");
        }
    }
}

/// A case that runs for several seconds: 20 multi-allelic loci whose Hardy–Weinberg tests
/// take a million permutations each.
fn slow_case() -> Case {
    let case = Case::fixture("minimal");
    let mut text = String::from("sample,population,year");
    for l in 0..20 {
        text += &format!(",L{l}");
    }
    // Alleles from a multiplicative hash of (sample, locus), so that no two samples share a
    // multilocus genotype (validate would keep one of each identical set).
    let allele = |s: u64, l: u64, k: u64| {
        let h = (s.wrapping_mul(0x9E37_79B9_7F4A_7C15) ^ l.wrapping_mul(0xC2B2_AE3D_27D4_EB4F) ^ k)
            .wrapping_mul(0xFF51_AFD7_ED55_8CCD);
        (h >> 61) + 1
    };
    for s in 0..200u64 {
        text += &format!("\ns{s},{},2020", if s % 2 == 0 { "North" } else { "South" });
        for l in 0..20u64 {
            text += &format!(",{}/{}", allele(s, l, 1), allele(s, l, 2));
        }
    }
    case.write("genotypes.csv", text + "\n");
    case.write(
        "case.toml",
        case.read("case.toml") + "\n[[step]]\nid = \"hwe\"\nuses = \"hwe\"\n[step.params]\npermutations = 1000000\n",
    );
    case
}

/// Ctrl-C (SIGINT), SIGTERM (a job scheduler or `kill`) and SIGHUP (a closed
/// terminal) during a run each exit 130 and leave no output folder, no temporary folder beside
/// it, the case folder as it was and nothing in the temporary directory.
#[test]
fn interrupts_leave_nothing_behind() {
    for signal in [libc::SIGINT, libc::SIGTERM, libc::SIGHUP] {
        let case = slow_case();
        let tmpdir = tempfile::tempdir().unwrap();
        let mut child = crate::support::spawn_run(&case, tmpdir.path());
        std::thread::sleep(std::time::Duration::from_millis(1500));
        assert!(child.try_wait().unwrap().is_none(), "the run ended before signal {signal}; make slow_case slower");
        let (code, stderr) = crate::support::interrupt(child, signal);
        assert_eq!(code, Some(130), "signal {signal}, stderr: {stderr}");
        assert_eq!(entries(case.root()), vec!["case"], "signal {signal}: no output and no temporary folder");
        assert_eq!(entries(&case.path()), vec!["case.toml", "genotypes.csv", "populations.csv"], "signal {signal}");
        assert_eq!(entries(tmpdir.path()), Vec::<String>::new(), "signal {signal}: nothing left in TMPDIR");
    }
}
