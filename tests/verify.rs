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

/// The record's PROV view (W3C PROV-DM terms in the PROV-JSON shape; the relations checked are
/// those the W3C PROV-DM recommendation defines: used, wasGeneratedBy, wasAssociatedWith,
/// wasAttributedTo) ties every input, step and output to the run and its agents.
#[test]
fn the_record_reads_in_prov_terms() {
    let case = assessed();
    let record: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json")).unwrap();
    let prov = &record["prov"];
    assert_eq!(prov["prefix"]["prov"], "http://www.w3.org/ns/prov#");
    let relations = |kind: &str, from: &str, to: &str| -> Vec<(String, String)> {
        prov[kind].as_object().unwrap().values().map(|r| (r[from].as_str().unwrap().to_string(), r[to].as_str().unwrap().to_string())).collect()
    };
    let used = relations("used", "prov:activity", "prov:entity");
    let inputs = std::iter::once(&record["recipe"]).chain(record["inputs"].as_array().unwrap());
    for input in inputs {
        let id = format!("popgauge:input/{}", input["path"].as_str().unwrap());
        assert_eq!(prov["entity"][&id]["popgauge:sha256"], input["sha256"], "{id} is an entity with its hash");
        assert!(used.contains(&("popgauge:run".into(), id.clone())), "the run used {id}");
    }
    for step in record["steps"].as_array().unwrap() {
        let id = format!("popgauge:step/{}", step["id"].as_str().unwrap());
        let activity = &prov["activity"][&id];
        assert_eq!(activity["popgauge:uses"], step["uses"], "{id} is an activity");
        assert_eq!((&activity["prov:startTime"], &activity["prov:endTime"]), (&step["started"], &step["ended"]));
        assert!(step["started"].as_str().unwrap() <= step["ended"].as_str().unwrap(), "RFC 3339 UTC times sort as text");
    }
    let generated = relations("wasGeneratedBy", "prov:entity", "prov:activity");
    for output in record["outputs"].as_array().unwrap() {
        let id = format!("popgauge:output/{}", output["path"].as_str().unwrap());
        assert_eq!(prov["entity"][&id]["popgauge:sha256"], output["sha256"]);
        let by = generated.iter().find(|(e, _)| *e == id).map(|(_, a)| a.clone()).unwrap_or_else(|| panic!("{id} was generated by nothing"));
        assert!(prov["activity"][&by].is_object(), "{id} was generated by {by}, an activity");
    }
    assert_eq!(prov["agent"]["popgauge:tool"]["prov:type"], "prov:SoftwareAgent");
    assert_eq!(prov["agent"]["popgauge:operator"]["prov:type"], "prov:Person");
    assert_eq!(prov["agent"]["popgauge:operator"]["prov:label"], "A. Auditor");
    let associated = relations("wasAssociatedWith", "prov:activity", "prov:agent");
    assert!(associated.contains(&("popgauge:run".into(), "popgauge:operator".into())));
    assert!(associated.contains(&("popgauge:step/qc".into(), "popgauge:tool".into())));
    let attributed = relations("wasAttributedTo", "prov:entity", "prov:agent");
    assert!(attributed.contains(&("popgauge:output/assessment.pdf".into(), "popgauge:operator".into())));
}

/// The tool's build facts: the commit `git rev-parse HEAD` names (common practice), the target
/// triple and compiler that `rustc -vV` reports for the host the tests run on.
#[test]
fn the_record_names_the_build() {
    let case = assessed();
    let record: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json")).unwrap();
    let tool = &record["tool"];
    let run = |program: &str, args: &[&str]| {
        let out = std::process::Command::new(program).args(args).current_dir(crate::support::repo_root()).output().expect("run");
        String::from_utf8_lossy(&out.stdout).trim().to_string()
    };
    let commit = tool["commit"].as_str().unwrap();
    let head = run("git", &["rev-parse", "HEAD"]);
    if head.len() == 40 {
        assert!(commit.starts_with(&head), "commit {commit} is HEAD {head} (with -dirty when the tree differs)");
    } else {
        assert_eq!(commit, "unknown", "no git: the commit is unknown");
    }
    let host = run("rustc", &["-vV"]);
    assert!(host.contains(&format!("host: {}", tool["target"].as_str().unwrap())), "{tool} vs {host}");
    assert!(tool["rustc"].as_str().unwrap().starts_with("rustc 1."), "{tool}");
}

#[test]
fn another_build_is_said_plainly_and_is_not_a_difference() {
    let case = assessed();
    edit_json(&case, "out/provenance.json", |p| {
        p["tool"]["version"] = serde_json::json!("0.0.9");
        p["prov"]["agent"]["popgauge:tool"]["prov:label"] = serde_json::json!("popgauge 0.0.9");
    });
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 0, "{}", out.stdout);
    let running = env!("CARGO_PKG_VERSION");
    let note = format!("Note: this popgauge is another build than the one that made the record: version (recorded 0.0.9, running {running}); where a result differs, the tool may be the cause");
    assert!(out.stdout.lines().any(|l| l == note), "{}", out.stdout);
}

#[test]
fn an_edited_pdf_is_detected() {
    use popgauge::hash::sha256_hex;
    let case = assessed();
    let path = case.path().join("out/assessment.pdf");
    let original = std::fs::read(&path).unwrap();
    let mut edited = original.clone();
    let middle = edited.len() / 2;
    edited[middle] ^= 0x01;
    std::fs::write(&path, &edited).unwrap();
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    let expected = format!(
        "{:<7} {:<36} DIFFERS: the file was changed after the run: SHA-256 {} ({} bytes), recorded {} ({} bytes)",
        "output",
        "assessment.pdf",
        short(&sha256_hex(&edited)),
        edited.len(),
        short(&sha256_hex(&original)),
        original.len()
    );
    assert_eq!(line_for(&out.stdout, "output", "assessment.pdf "), expected);
}

#[test]
fn an_edited_prov_view_is_detected() {
    let case = assessed();
    edit_json(&case, "out/provenance.json", |p| {
        p["prov"]["entity"]["popgauge:input/genotypes.csv"]["popgauge:sha256"] = serde_json::json!("0".repeat(64));
    });
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert_eq!(
        line_for(&out.stdout, "record", "prov"),
        format!("{:<7} {:<36} DIFFERS: the PROV view does not follow from the rest of the record (first at entity/popgauge:input/genotypes.csv/popgauge:sha256); one of them was edited", "record", "prov")
    );
}

#[test]
fn a_missing_plugin_library_is_named_with_its_path() {
    let case = Case::fixture("minimal");
    let sha = crate::plugins::install(&case, "popgauge-example-relatedness", "librelatedness.so");
    let recipe = case.read("case.toml");
    case.write("case.toml", format!("{recipe}\n[[step]]\nid = \"kin\"\nuses = \"plugin:plugins/librelatedness.so\"\nsha256 = \"{sha}\"\n[step.params]\nbootstrap = 20\n"));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let present = verify(&case, &["case/out"]);
    assert_eq!(present.code, 0, "{}", present.stdout);
    assert_eq!(line_for(&present.stdout, "plugin", "plugins/librelatedness.so"), format!("{:<7} {:<36} same", "plugin", "plugins/librelatedness.so"));
    std::fs::remove_file(case.path().join("plugins/librelatedness.so")).unwrap();
    let out = verify(&case, &["case/out"]);
    assert_eq!(out.code, 1);
    assert_eq!(
        line_for(&out.stdout, "plugin", "plugins/librelatedness.so"),
        format!(
            "{:<7} {:<36} DIFFERS: missing: the plugin library case/plugins/librelatedness.so cannot be read (No such file or directory (os error 2)); step \"kin\" cannot be re-run without it",
            "plugin", "plugins/librelatedness.so"
        )
    );
    assert!(out.stdout.contains("The steps are not re-run: a plugin library they need is missing or changed\n"), "{}", out.stdout);
}

/// The short form verify prints for a SHA-256 or a key: first 8 and last 4 hex digits.
fn short(hex: &str) -> String {
    format!("{}…{}", &hex[..8], &hex[hex.len() - 4..])
}

#[test]
fn a_signed_record_verifies_and_a_changed_one_fails() {
    let case = assessed();
    let keys = case.run(&["keygen", "org"]);
    assert_eq!(keys.code, 0, "{}", keys.stderr);
    assert_eq!(
        keys.stdout,
        "Wrote org.key (private: keep it where only the signer can read it)\nWrote org.pub (public: give it to auditors for `popgauge verify --public-key`)\n"
    );
    let again = case.run(&["keygen", "org"]);
    assert_eq!((again.code, again.stderr.as_str()), (2, "error: org.key exists already\n  help: choose another NAME; an existing key is never replaced\n"));
    let signed = case.run(&["sign", "case/out", "--key", "org.key"]);
    assert_eq!(signed.code, 0, "{}", signed.stderr);
    assert_eq!(signed.stdout, "Signed case/out/provenance.json: case/out/provenance.json.sig\nCheck it with `popgauge verify case/out/provenance.json --public-key PUBLIC_KEY`.\n");
    let good = verify(&case, &["case/out", "--public-key", "org.pub"]);
    assert_eq!(good.code, 0, "{}", good.stdout);
    assert_eq!(line_for(&good.stdout, "record", "signature"), format!("{:<7} {:<36} same", "record", "signature"));
    let unchecked = verify(&case, &["case/out"]);
    assert_eq!(unchecked.code, 0);
    assert!(unchecked.stdout.contains("case/out/provenance.json.sig is present but not checked; give --public-key FILE to check it\n"), "{}", unchecked.stdout);

    let signer: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json.sig")).unwrap();
    assert_eq!(case.run(&["keygen", "other"]).code, 0);
    let other = verify(&case, &["case/out", "--public-key", "other.pub"]);
    assert_eq!(other.code, 1);
    let line = line_for(&other.stdout, "record", "signature");
    let expected = format!("{:<7} {:<36} DIFFERS: signed by another key: the signature names key {}, not the given key ", "record", "signature", short(signer["public_key"].as_str().unwrap()));
    assert!(line.starts_with(&expected), "{line}");

    // The case folder written another way still leads to the same inputs, so only the
    // signature can tell that the record was changed.
    edit_json(&case, "out/provenance.json", |p| p["run"]["case_folder"] = serde_json::json!("../../case"));
    let changed = verify(&case, &["case/out", "--public-key", "org.pub"]);
    assert_eq!(changed.code, 1, "{}", changed.stdout);
    assert_eq!(
        line_for(&changed.stdout, "record", "signature"),
        format!("{:<7} {:<36} DIFFERS: the signature does not match provenance.json: the record was changed after it was signed", "record", "signature")
    );
    assert!(changed.stdout.contains("NOT verified: 1 item(s) differ from the record\n"), "{}", changed.stdout);

    let wrong_kind = verify(&case, &["case/out", "--public-key", "org.key"]);
    assert_eq!(wrong_kind.code, 2);
    assert!(wrong_kind.stderr.starts_with("error: org.key: not an ed25519 public key in PEM form ("), "{}", wrong_kind.stderr);
}

/// The round trip on the demo case: every built-in step, figures and the PDF, with the
/// output and the data moved to another folder.
#[test]
fn the_demo_case_verifies_after_moving() {
    let case = Case::demo();
    let run = case.run(&["run", "case", "--operator", "A. Auditor"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let moved = case.root().join("archive");
    std::fs::create_dir_all(&moved).unwrap();
    std::fs::rename(case.path().join("out"), moved.join("report")).unwrap();
    std::fs::rename(case.path(), moved.join("data")).unwrap();
    let out = verify(&case, &["archive/report/provenance.json", "--data", "archive/data"]);
    assert_eq!(out.code, 0, "{}{}", out.stdout, out.stderr);
    let items: Vec<&str> = out.stdout.lines().filter(|l| ["record ", "input ", "step ", "output "].iter().any(|k| l.starts_with(k))).collect();
    assert!(items.iter().any(|l| l.starts_with("output  assessment.pdf ")), "{}", out.stdout);
    assert!(items.iter().any(|l| l.starts_with("step    ld (ne-ld) ")), "{}", out.stdout);
    assert!(items.iter().all(|l| l.ends_with(" same")), "{}", out.stdout);
}
