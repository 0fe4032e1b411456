//! `popgauge verify`: a clean round trip, and each tamper class reported precisely.

use crate::support::{Case, entries};

/// Runs the minimal fixture into `case/out` and returns the case.
fn assessed() -> Case {
    let case = Case::fixture("minimal");
    let run = case.run(&["run", "case", "--operator", "A. Auditor"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    case
}

fn verify(case: &Case, args: &[&str]) -> crate::support::Output {
    let mut all = vec!["verify"];
    all.extend_from_slice(args);
    case.run(&all)
}

fn line_for<'a>(stdout: &'a str, kind: &str, name: &str) -> &'a str {
    stdout
        .lines()
        .find(|l| l.starts_with(kind) && l[8..].starts_with(name))
        .unwrap_or_else(|| panic!("no {kind} line for {name} in:\n{stdout}"))
}

fn edit_json(case: &Case, relative: &str, edit: impl FnOnce(&mut serde_json::Value)) {
    let mut value: serde_json::Value = serde_json::from_str(&case.read(relative)).unwrap();
    edit(&mut value);
    case.write(relative, serde_json::to_vec_pretty(&value).unwrap());
}

#[test]
fn an_untouched_assessment_verifies() {
    let case = assessed();
    let out = verify(&case, &["case/out/provenance.json"]);
    assert_eq!(out.code, 0, "{}{}", out.stdout, out.stderr);
    assert!(out.stdout.ends_with("verified: every input, step and output is the same as recorded\n"), "{}", out.stdout);
    assert_eq!(line_for(&out.stdout, "input", "genotypes.csv"), format!("{:<7} {:<36} same", "input", "genotypes.csv"));
    assert!(line_for(&out.stdout, "step", "diversity (diversity)").ends_with(" same"));
    assert!(line_for(&out.stdout, "output", "results.json").ends_with(" same"));
    let prov: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json")).unwrap();
    assert_eq!(prov["run"]["operator"], "A. Auditor");
    assert_eq!(prov["run"]["case_folder"], "..");
}

#[test]
fn a_relocated_assessment_verifies_with_data() {
    let case = assessed();
    let moved = case.root().join("archive");
    std::fs::create_dir_all(moved.join("data")).unwrap();
    std::fs::rename(case.path().join("out"), moved.join("report")).unwrap();
    for f in ["case.toml", "genotypes.csv", "populations.csv"] {
        std::fs::rename(case.path().join(f), moved.join("data").join(f)).unwrap();
    }
    let out = verify(&case, &["archive/report", "--data", "archive/data"]);
    assert_eq!(out.code, 0, "{}{}", out.stdout, out.stderr);
    assert_eq!(entries(&moved.join("data")), vec!["case.toml", "genotypes.csv", "populations.csv"], "verify writes nothing");
}

#[test]
fn an_edited_input_byte_is_detected() {
    let case = assessed();
    let text = case.read("genotypes.csv").replace("a4,North,2020,1/2", "a4,North,2020,1/1");
    case.write("genotypes.csv", text);
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert!(line_for(&out.stdout, "input", "genotypes.csv").contains("DIFFERS: input changed: SHA-256 "), "{}", out.stdout);
    let step = line_for(&out.stdout, "step", "diversity (diversity)");
    assert!(step.contains("DIFFERS: result differs: table by_group row 1 (North, 2020) column ho: recorded 0.58333333333333"), "{step}");
    assert!(step.contains(", recomputed 0.5 (by -0.0833333333333"), "{step}");
}

#[test]
fn an_edited_parameter_is_detected_and_located() {
    let case = assessed();
    edit_json(&case, "out/provenance.json", |p| p["steps"][1]["params"]["bootstrap"] = serde_json::json!(7));
    let out = verify(&case, &["case/out/provenance.json"]);
    assert_eq!(out.code, 1);
    assert!(line_for(&out.stdout, "record", "diversity parameters").contains("DIFFERS: parameter changed: the recorded parameters hash to "), "{}", out.stdout);
}

#[test]
fn a_drifted_parameter_names_the_first_differing_cell() {
    let case = assessed();
    edit_json(&case, "out/provenance.json", |p| {
        p["steps"][0]["params"]["min_group_size"] = serde_json::json!(5);
    });
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert!(line_for(&out.stdout, "record", "qc parameters").contains("DIFFERS: parameter changed"), "{}", out.stdout);
    let qc = line_for(&out.stdout, "step", "qc (validate)");
    assert!(qc.contains("DIFFERS: result differs: table groups row 1 (North, 2020) column n_kept: recorded 4, recomputed 0"), "{qc}");
}

#[test]
fn an_edited_result_number_is_detected() {
    let case = assessed();
    let text = case.read("out/results.json");
    let doc: serde_json::Value = serde_json::from_str(&text).unwrap();
    let ho = doc["steps"][1]["tables"]["by_group"]["rows"][0][4].to_string();
    assert!(ho.starts_with("0.58333"), "North's Ho is 7/12: {ho}");
    let edited = text.replacen(&ho, "0.59", 1);
    assert_ne!(text, edited);
    case.write("out/results.json", edited);
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert!(line_for(&out.stdout, "output", "results.json step diversity").contains(&format!("DIFFERS: edited after the run: table by_group row 1 (North, 2020) column ho: recorded {ho}, results.json has 0.59")), "{}", out.stdout);
    assert!(line_for(&out.stdout, "output", &format!("{:<36} ", "results.json")).contains("the file was changed after the run"), "{}", out.stdout);
    assert!(line_for(&out.stdout, "step", "diversity (diversity)").ends_with(" same"), "the recomputation itself agrees");
}

#[test]
fn an_edited_table_file_is_detected() {
    let case = assessed();
    let csv = case.read("out/tables/qc.loci.csv");
    case.write("out/tables/qc.loci.csv", csv.replacen("kept", "excluded", 1));
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert!(line_for(&out.stdout, "output", "tables/qc.loci.csv").contains("DIFFERS: the file was changed after the run"), "{}", out.stdout);
}

#[test]
fn records_of_a_newer_format_are_refused_plainly() {
    let case = assessed();
    edit_json(&case, "out/provenance.json", |p| p["schema"] = serde_json::json!("popgauge.provenance/2"));
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 2);
    assert!(out.stderr.starts_with("error: case/out/provenance.json: the record has format \"popgauge.provenance/2\", but this popgauge reads \"popgauge.provenance/1\""), "{}", out.stderr);
}
