//! The command line itself: help, `steps`, `new`.

use crate::support::{Case, entries, popgauge};

#[test]
fn help_explains_the_commands() {
    let dir = tempfile::tempdir().unwrap();
    let out = popgauge(&["--help"], dir.path());
    assert_eq!(out.code, 0);
    for command in ["run", "check", "steps", "new"] {
        assert!(out.stdout.contains(&format!("  {command} ")), "{command} missing from:\n{}", out.stdout);
    }
    assert!(out.stdout.contains("genetic-status assessments"));
}

#[test]
fn steps_lists_parameters_with_defaults() {
    let dir = tempfile::tempdir().unwrap();
    let out = popgauge(&["steps", "validate"], dir.path());
    assert_eq!(out.code, 0);
    assert!(out.stdout.starts_with("validate 0.1.0\n"), "{}", out.stdout);
    assert!(out.stdout.contains("max_missing_locus      number 0–1 (default 0.2)"), "{}", out.stdout);
    let json = popgauge(&["steps", "--json"], dir.path());
    let parsed: serde_json::Value = serde_json::from_str(&json.stdout).unwrap();
    let names: Vec<&str> = parsed.as_array().unwrap().iter().map(|d| d["uses"].as_str().unwrap()).collect();
    assert_eq!(&names[..2], &["validate", "diversity"], "validation and diversity come first");
    for expected in ["hwe", "differentiation", "ne-ld", "trend", "status"] {
        assert!(names.contains(&expected), "{expected} missing from {names:?}");
    }
    let unknown = popgauge(&["steps", "validat"], dir.path());
    assert_eq!(unknown.code, 2);
    assert!(unknown.stderr.starts_with("error: no built-in step is called \"validat\""));
}

#[test]
fn new_writes_a_skeleton_whose_recipe_checks() {
    let dir = tempfile::tempdir().unwrap();
    let out = popgauge(&["new", "my-case"], dir.path());
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert_eq!(entries(&dir.path().join("my-case")), vec!["case.toml", "genotypes.csv", "populations.csv"]);
    let check = popgauge(&["check", "my-case"], dir.path());
    assert_eq!(check.code, 2);
    assert_eq!(check.stderr, "error: genotypes.csv: the table has a header but no samples\n  help: add one row per sample below the header\n", "the recipe itself resolves");
    let again = popgauge(&["new", "my-case"], dir.path());
    assert_eq!(again.code, 2);
    assert!(again.stderr.contains("the folder exists and is not empty; nothing was written"));
}

#[test]
fn a_filled_skeleton_runs() {
    let case = Case::fixture("minimal");
    let dir = case.root();
    assert_eq!(popgauge(&["new", "fresh"], dir).code, 0);
    std::fs::copy(case.path().join("genotypes.csv"), dir.join("fresh/genotypes.csv")).unwrap();
    std::fs::copy(case.path().join("populations.csv"), dir.join("fresh/populations.csv")).unwrap();
    let recipe = std::fs::read_to_string(dir.join("fresh/case.toml")).unwrap().replace("min_group_size = 5", "min_group_size = 3");
    std::fs::write(dir.join("fresh/case.toml"), recipe).unwrap();
    let run = popgauge(&["run", "fresh"], dir);
    assert_eq!(run.code, 0, "{}", run.stderr);
}
