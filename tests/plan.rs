//! `popgauge plan`: sampling design by simulation, run as a consultant would before fieldwork.
//! Kept small (one Ne, few loci, few replicates) so the suite stays quick.

use std::path::Path;

use crate::support::{entries, popgauge};

/// A small design: Ne 50, 10 microsatellites of about 8 alleles, 20 or 80 individuals.
const SMALL_PLAN_ARGS: [&str; 13] = [
    "plan",
    "--ne",
    "50",
    "--microsatellites",
    "10",
    "--alleles",
    "8",
    "--samples",
    "20,80",
    "--replicates",
    "6",
    "--seed",
    "3",
];

fn run_design(dir: &Path, out: &str) -> crate::support::Output {
    let mut args = SMALL_PLAN_ARGS.to_vec();
    args.extend(["--out", out, "--quiet"]);
    popgauge(&args, dir)
}

/// `plan.csv` as rows of (column → text).
fn read_plan(path: &Path) -> Vec<std::collections::BTreeMap<String, String>> {
    let text = std::fs::read_to_string(path).expect("plan.csv");
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    lines.map(|line| header.iter().map(|h| h.to_string()).zip(line.split(',').map(str::to_string)).collect()).collect()
}

fn width(row: &std::collections::BTreeMap<String, String>) -> f64 {
    let text = &row["median_ci_width"];
    if text == "inf" { f64::INFINITY } else { text.parse().expect("a width") }
}

/// Sampling theory (Hill 1981; Waples 2006, common practice): more individuals shrink the
/// sampling part of r², so the median 95% interval of the LD estimate narrows from 20 to 80
/// individuals. An infinite width counts as wider than any finite one.
#[test]
fn a_larger_sample_gives_a_narrower_interval() {
    let dir = tempfile::tempdir().unwrap();
    let out = run_design(dir.path(), "design");
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert_eq!(entries(&dir.path().join("design")), vec!["plan.csv", "plan.svg"]);
    let rows = read_plan(&dir.path().join("design/plan.csv"));
    assert_eq!(rows.len(), 2);
    assert_eq!((rows[0]["ne"].as_str(), rows[0]["samples"].as_str()), ("50", "20"));
    assert_eq!((rows[1]["ne"].as_str(), rows[1]["samples"].as_str()), ("50", "80"));
    assert_eq!(rows[1]["replicates"], "6");
    let (small, large) = (width(&rows[0]), width(&rows[1]));
    assert!(large.is_finite() && large < small, "median widths: 20 individuals {small}, 80 individuals {large}");
    let coverage: f64 = rows[1]["coverage"].parse().unwrap();
    assert!((0.0..=1.0).contains(&coverage));
    assert!(out.stdout.contains("median CI width"), "{}", out.stdout);
    assert!(out.stdout.contains("qualified geneticist"), "{}", out.stdout);
    let svg = std::fs::read_to_string(dir.path().join("design/plan.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("Ne = 50"), "{svg}");
}

/// Determinism (randomness only from the seed, DEVELOPERS.md "Adding a step"): the same seed gives
/// the same printed table and the same files, byte for byte.
#[test]
fn the_same_seed_gives_the_same_output() {
    let dir = tempfile::tempdir().unwrap();
    let first = run_design(dir.path(), "one");
    let second = run_design(dir.path(), "two");
    assert_eq!(first.code, 0, "{}", first.stderr);
    let table = |stdout: &str| stdout.lines().filter(|l| !l.starts_with("Wrote ")).collect::<Vec<_>>().join("\n");
    assert_eq!(table(&first.stdout), table(&second.stdout));
    assert!(first.stdout.contains("median Ne"), "{}", first.stdout);
    for file in ["plan.csv", "plan.svg"] {
        let a = std::fs::read(dir.path().join("one").join(file)).unwrap();
        let b = std::fs::read(dir.path().join("two").join(file)).unwrap();
        assert_eq!(a, b, "{file} differs between runs with the same seed");
    }
}

/// Options out of range name the option and the fix; existing files are not overwritten
/// without --force.
#[test]
fn bad_options_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let out = popgauge(&["plan", "--ne", "1", "--snps", "50", "--samples", "30"], dir.path());
    assert_eq!(out.code, 2);
    assert!(out.stderr.starts_with("error: --ne: give one or more effective sizes from 2"), "{}", out.stderr);
    let out = popgauge(&["plan", "--ne", "50", "--samples", "30"], dir.path());
    assert_eq!(out.code, 2);
    assert!(out.stderr.contains("--microsatellites"), "{}", out.stderr);
    std::fs::create_dir(dir.path().join("taken")).unwrap();
    std::fs::write(dir.path().join("taken/plan.csv"), "x").unwrap();
    let out = popgauge(&["plan", "--ne", "50", "--snps", "20", "--samples", "30", "--out", "taken"], dir.path());
    assert_eq!(out.code, 2);
    assert!(out.stderr.contains("the file exists; nothing was computed"), "{}", out.stderr);
    assert!(out.stderr.contains("--force"), "{}", out.stderr);
}
