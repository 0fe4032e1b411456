//! `popgauge portfolio`: many case outputs in one indicator report, and `verify` on it.

use std::collections::BTreeMap;
use std::path::Path;

use crate::report::pdf_text;
use crate::support::{Case, Output, popgauge};

/// Case outputs in one temporary folder: the demo, the two example cases of
/// `examples/portfolio/cases/` (the beetle's sheet given one more heath known only by its
/// census) and the demo colony, whose recipe has no status step.
struct Portfolio {
    _cases: Vec<Case>,
    root: tempfile::TempDir,
}

impl Portfolio {
    fn path(&self) -> &Path {
        self.root.path()
    }

    fn run(&self, args: &[&str]) -> Output {
        popgauge(args, self.root.path())
    }
}

/// The census-only heath added to the beetle's sheet.
const CENSUS_ONLY: &str = "Dunmere Heath";

fn four_cases() -> Portfolio {
    let root = tempfile::tempdir().expect("temporary folder");
    let newt = Case::demo();
    let mussel = Case::portfolio_example("river-mussel");
    let beetle = Case::portfolio_example("ground-beetle");
    let colony = Case::colony();
    let sheet = beetle.read("populations.csv") + &format!("{CENSUS_ONLY},{CENSUS_ONLY} fragment,3200,2025,57.4,13.1\n");
    beetle.write("populations.csv", sheet);
    for (case, name) in [(&newt, "newt"), (&mussel, "mussel"), (&beetle, "beetle"), (&colony, "colony")] {
        let out = root.path().join(name);
        let run = case.run(&["run", "case", "--out", out.to_str().unwrap(), "--quiet"]);
        assert_eq!(run.code, 0, "{name}: {}", run.stderr);
    }
    Portfolio { _cases: vec![newt, mussel, beetle, colony], root }
}

fn csv_rows(path: &Path) -> Vec<BTreeMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let headers = reader.headers().unwrap().clone();
    reader
        .records()
        .map(|r| headers.iter().zip(r.unwrap().iter()).map(|(h, v)| (h.to_string(), v.to_string())).collect())
        .collect()
}

fn number(row: &BTreeMap<String, String>, column: &str) -> Option<f64> {
    match row[column].as_str() {
        "" => None,
        "inf" => Some(f64::INFINITY),
        text => Some(text.parse().unwrap_or_else(|_| panic!("{column}: {text}"))),
    }
}

fn portfolio(p: &Portfolio, extra: &[&str]) -> Output {
    let mut args = vec!["portfolio", "newt", "mussel", "beetle", "colony", "--out", "pf", "--date", "2026-12-01"];
    args.extend_from_slice(extra);
    p.run(&args)
}

/// The portfolio's counts per case equal each case's own `status` indicator table (the same
/// rule: Ne strictly above the threshold, by point and by lower bound; Hoban et al. 2020),
/// and the overall row adds the census-based heath (Ne = 3200 × 0.1 = 320, which is above 50
/// and not above 500).
#[test]
fn portfolio_counts_match_the_cases_status_tables() {
    let p = four_cases();
    let out = portfolio(&p, &[]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert!(out.stdout.contains("4 case(s)"), "{}", out.stdout);
    let populations = csv_rows(&p.path().join("pf/tables/populations.csv"));
    let mut totals: BTreeMap<String, (usize, usize, usize)> = BTreeMap::new();
    for case in ["newt", "mussel", "beetle"] {
        for status in csv_rows(&p.path().join(case).join("tables/status.indicator.csv")) {
            let threshold: f64 = status["threshold"].parse().unwrap();
            let rows: Vec<_> = populations
                .iter()
                .filter(|r| r["case"] == format!("../{case}") && r["ne_basis"] == "genetic")
                .collect();
            let with: Vec<_> = rows
                .iter()
                .filter(|r| number(r, "ne").is_some() && number(r, "ne_low") != Some(f64::INFINITY))
                .collect();
            let point = with.iter().filter(|r| number(r, "ne").unwrap() > threshold).count();
            let lower = with.iter().filter(|r| number(r, "ne_low").is_some_and(|l| l > threshold)).count();
            assert_eq!(with.len().to_string(), status["with_estimate"], "{case} {threshold}");
            assert_eq!(point.to_string(), status["above_point"], "{case} {threshold}");
            assert_eq!(lower.to_string(), status["above_lower_bound"], "{case} {threshold}");
            let total = totals.entry(status["threshold"].clone()).or_default();
            *total = (total.0 + with.len(), total.1 + point, total.2 + lower);
        }
    }
    let census: Vec<_> = populations.iter().filter(|r| r["ne_basis"] == "census").collect();
    assert_eq!(census.len(), 1);
    assert_eq!(census[0]["population"], CENSUS_ONLY);
    assert_eq!(number(census[0], "ne"), Some(320.0));
    let colony: Vec<_> = populations.iter().filter(|r| r["case"] == "../colony").collect();
    assert!(!colony.is_empty() && colony.iter().all(|r| r["ne_basis"] == "none" && r["category"] == "no Ne"));
    let indicators = csv_rows(&p.path().join("pf/tables/indicators.csv"));
    let all = indicators.iter().find(|r| r["scope"] == "all").unwrap();
    for (threshold, (with, point, lower)) in totals {
        let t = threshold.trim_end_matches(".0");
        let census_above = usize::from(320.0 > threshold.parse::<f64>().unwrap());
        assert_eq!(all["with_ne"], (with + 1).to_string());
        assert_eq!(all[&format!("above_{t}_point")], (point + census_above).to_string(), "{t}");
        assert_eq!(all[&format!("above_{t}_lower")], (lower + census_above).to_string(), "{t}");
    }
    assert_eq!(all["census_based"], "1");
    assert_eq!(indicators.iter().filter(|r| r["scope"] == "species").count(), 3);
    check_document(&p);
    // The same cases and settings give the same PDF bytes (common practice for reproducible
    // documents: no clock or random input reaches the typesetter).
    let first = std::fs::read(p.path().join("pf/portfolio.pdf")).unwrap();
    assert_eq!(portfolio(&p, &["--force"]).code, 0);
    assert_eq!(std::fs::read(p.path().join("pf/portfolio.pdf")).unwrap(), first, "byte-identical on a second run");
    check_map(&p);
}

/// Without `--map` there is no map and the caution says no coordinates are printed; with it,
/// `figures/map.svg` shows the populations at grid-cell centres (no coordinate of a sheet in
/// the SVG or the document data), the document states the grid, and verify re-makes it.
fn check_map(p: &Portfolio) {
    assert!(!p.path().join("pf/figures/map.svg").exists());
    let plain = pdf_text(&p.path().join("pf/portfolio.pdf")).split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(plain.contains("prints no coordinates"), "{plain}");
    let mut args = vec!["portfolio", "newt", "mussel", "beetle", "colony", "--out", "pfmap", "--date", "2026-12-01"];
    args.extend(["--map", "--map-grid-km", "25"]);
    let out = p.run(&args);
    assert_eq!(out.code, 0, "{}", out.stderr);
    let svg = std::fs::read_to_string(p.path().join("pfmap/figures/map.svg")).unwrap();
    let data = std::fs::read_to_string(p.path().join("pfmap/portfolio.json")).unwrap();
    for case in ["newt", "mussel", "beetle"] {
        for row in csv_rows(&p.path().join(case).join("results.json").with_file_name("tables/status.populations.csv")) {
            assert!(
                svg.contains(&format!(">{}<", row["population"])) || svg.contains(&row["population"]),
                "{} on the map",
                row["population"]
            );
        }
    }
    for coordinate in ["61.742", "9.618", "57.338", "13.221"] {
        assert!(!svg.contains(coordinate) && !data.contains(coordinate), "{coordinate} printed");
    }
    let text = pdf_text(&p.path().join("pfmap/portfolio.pdf")).split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(text.contains("generalised to a 25 km grid"), "{text}");
    assert!(text.contains("Not on the map, for want of coordinates"), "the colony sheet has none: {text}");
    let verified = p.run(&["verify", "pfmap", "--quiet"]);
    assert_eq!(verified.code, 0, "{}", verified.stdout);
}

/// The document: its summary counts, the census flag, the cases with their record hashes,
/// and the cautions.
fn check_document(p: &Portfolio) {
    let text = pdf_text(&p.path().join("pf/portfolio.pdf"));
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(flat.contains("Genetic status of the populations assessed"), "{flat}");
    assert!(flat.contains("brings together 4 assessments of 3 species"), "{flat}");
    assert!(flat.contains("from a census size alone (census × Ne/N ratio 0.1)"), "{flat}");
    let chart = std::fs::read_to_string(p.path().join("pf/figures/ne.svg")).unwrap();
    assert!(chart.contains(&format!(">{CENSUS_ONLY} (census)<")), "chart row flagged: {chart}");
    assert!(flat.contains("Thresholds are guidance"), "{flat}");
    assert!(flat.contains("qualified conservation geneticist"), "{flat}");
    let cases = csv_rows(&p.path().join("pf/tables/cases.csv"));
    assert_eq!(cases.len(), 4);
    for case in &cases {
        assert!(flat.contains(&case["record_sha256"][..32]), "hash of {} printed", case["output"]);
    }
}

/// A portfolio from a manifest; then a case output edited after its run is refused by name,
/// `verify` on the portfolio reports the edited case, and `--deep` re-runs every case.
#[test]
fn edited_cases_are_refused_and_verify_checks_the_portfolio() {
    let p = four_cases();
    check_manifest(&p);
    let verified = p.run(&["verify", "pf", "--deep", "--quiet"]);
    assert_eq!(verified.code, 0, "{}\n{}", verified.stdout, verified.stderr);
    assert!(verified.stdout.contains("re-run  ../newt"), "{}", verified.stdout);
    assert!(verified.stdout.contains("verified: every input"), "{}", verified.stdout);

    let table = p.path().join("newt/tables/status.populations.csv");
    let edited = std::fs::read_to_string(&table).unwrap().replace("below 50", "50–500");
    std::fs::write(&table, edited).unwrap();
    let refused = portfolio(&p, &["--force"]);
    assert_eq!(refused.code, 2);
    assert!(
        refused.stderr.contains("newt: tables/status.populations.csv was changed after the run"),
        "{}",
        refused.stderr
    );
    assert!(refused.stderr.contains("help:"), "{}", refused.stderr);
    let after = p.run(&["verify", "pf"]);
    assert_eq!(after.code, 1, "{}", after.stdout);
    let line = after.stdout.lines().find(|l| l.starts_with("case    ../newt")).unwrap_or_default();
    assert!(
        line.contains("DIFFERS: ") && line.contains("tables/status.populations.csv was changed"),
        "{}",
        after.stdout
    );
}

/// Bad input, each a clear error naming what is wrong and how to fix it: a folder that is not
/// an output, a newer record, a case missing files, the same folder twice, an empty manifest,
/// and two cases assessing the same population.
#[test]
fn bad_portfolio_inputs_are_named() {
    let p = four_cases();
    let case_folder = p.run(&["portfolio", "newt", "newt/tables", "--out", "pf"]);
    assert_eq!(case_folder.code, 2);
    assert!(case_folder.stderr.contains("newt/tables: this is not a popgauge output folder"), "{}", case_folder.stderr);

    let record = p.path().join("beetle/provenance.json");
    let newer = std::fs::read_to_string(&record).unwrap().replace("popgauge.provenance/1", "popgauge.provenance/2");
    std::fs::write(&record, newer).unwrap();
    let newer = p.run(&["portfolio", "beetle", "--out", "pf"]);
    assert_eq!(newer.code, 2);
    assert!(newer.stderr.contains("\"popgauge.provenance/2\", newer than this popgauge reads"), "{}", newer.stderr);

    std::fs::create_dir_all(p.path().join("copy")).unwrap();
    for entry in std::fs::read_dir(p.path().join("newt")).unwrap() {
        let entry = entry.unwrap();
        if entry.file_type().unwrap().is_file() {
            std::fs::copy(entry.path(), p.path().join("copy").join(entry.file_name())).unwrap();
        }
    }
    let copy = p.run(&["portfolio", "copy", "--out", "pf"]);
    assert_eq!(copy.code, 2);
    assert!(
        copy.stderr.contains("copy: tables/") && copy.stderr.contains(" is missing; the case is refused"),
        "{}",
        copy.stderr
    );

    let absolute = p.path().join("newt").display().to_string();
    let duplicate = p.run(&["portfolio", "newt", &absolute, "--out", "pf"]);
    assert_eq!(duplicate.code, 2);
    assert!(duplicate.stderr.contains("the same case output is given twice"), "{}", duplicate.stderr);

    std::fs::write(p.path().join("manifest.csv"), "output,species_group,region\n").unwrap();
    let empty = p.run(&["portfolio", "--manifest", "manifest.csv", "--out", "pf"]);
    assert_eq!(empty.code, 2);
    assert!(empty.stderr.contains("manifest.csv: the manifest lists no case"), "{}", empty.stderr);
    assert!(!p.path().join("pf").exists(), "nothing written on error");

    // Two cases that assess the same population of the same species, both named.
    let again = Case::demo();
    let run = again.run(&["run", "case", "--out", p.path().join("newt2").to_str().unwrap(), "--quiet"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = p.run(&["portfolio", "newt", "newt2", "--out", "pf"]);
    assert_eq!(out.code, 2);
    assert!(
        out.stderr.contains("population \"Brennmoor\" of Korrin valley newt (Tritonella korrinensis) is assessed by two cases: newt and newt2"),
        "{}",
        out.stderr
    );
}

/// A manifest's groups and regions give their own indicator rows, and the record names the
/// manifest.
fn check_manifest(p: &Portfolio) {
    std::fs::write(
        p.path().join("manifest.csv"),
        "output,species_group,region\nnewt,amphibians,Halvard Uplands\ncolony,amphibians,Halvard Uplands\nmussel,molluscs,Quarrendale\nbeetle,insects,Quarrendale\n",
    )
    .unwrap();
    let out = p.run(&["portfolio", "--manifest", "manifest.csv", "--out", "pf", "--date", "2026-12-01"]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    let indicators = csv_rows(&p.path().join("pf/tables/indicators.csv"));
    let names: Vec<(&str, &str)> = indicators.iter().map(|r| (r["scope"].as_str(), r["name"].as_str())).collect();
    assert!(
        names.contains(&("species_group", "amphibians")) && names.contains(&("species_group", "molluscs")),
        "{names:?}"
    );
    assert!(names.contains(&("region", "Halvard Uplands")) && names.contains(&("region", "Quarrendale")), "{names:?}");
    let record = std::fs::read_to_string(p.path().join("pf/provenance.json")).unwrap();
    assert!(record.contains("\"role\": \"manifest\""), "{record}");
    assert_eq!(p.run(&["verify", "pf", "--quiet"]).code, 0);
}
