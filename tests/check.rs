//! `popgauge check`: recipe and data problems are reported with file, line and fix.

use crate::support::Case;

fn check_error(case: &Case) -> String {
    let out = case.run(&["check", "case"]);
    assert_eq!(out.code, 2, "stdout: {}", out.stdout);
    assert!(out.stdout.is_empty());
    out.stderr
}

#[test]
fn a_good_case_is_summarised() {
    let case = Case::fixture("minimal");
    let out = case.run(&["check", "case"]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert_eq!(
        out.stdout,
        "Recipe: 2 step(s): qc (validate), diversity (diversity)\n\
         Data: 8 samples × 3 loci in 2 groups (population × year)\n  \
         North                    2020  n = 4\n  \
         South                    2020  n = 4\n\
         Reading findings: 0\n\
         The case is ready to run: popgauge run case\n"
    );
}

#[test]
fn recipe_typos_get_a_suggestion() {
    let case = Case::fixture("minimal");
    case.write("case.toml", case.read("case.toml").replace("min_group_size = 3", "min_grup_size = 3"));
    assert_eq!(
        check_error(&case),
        "error: case.toml:18:1: unknown parameter `min_grup_size` for step \"qc\" (uses \"validate\")\n  help: did you mean `min_group_size`? `popgauge steps` lists each step's parameters\n"
    );
}

#[test]
fn unknown_steps_are_refused_before_anything_runs() {
    let case = Case::fixture("minimal");
    case.write("case.toml", case.read("case.toml").replace("uses = \"diversity\"", "uses = \"diversty\""));
    assert_eq!(
        check_error(&case),
        "error: case.toml:22:8: unknown step `uses = \"diversty\"`\n  help: did you mean \"diversity\"? `popgauge steps` lists the built-in steps\n"
    );
}

#[test]
fn data_errors_name_file_line_and_fix() {
    let cases = [
        ("sample,population,year,L1\n", "error: genotypes.csv: the table has a header but no samples\n  help: add one row per sample below the header\n"),
        ("sample,population,year,L1\ns1,North,2020,1/2,9\n", "error: genotypes.csv:2: the row has 5 cells but the header has 4 columns\n  help: every row needs one cell per header column; check for a missing or extra delimiter\n"),
        ("sample,pop,year,L1\ns1,North,2020,1/2\n", "error: genotypes.csv: required column `population` not found (columns: sample, pop, year, L1)\n  help: add a `population` column (the wide table needs sample, population and year), or fix the header row\n"),
        ("sample,population,year,L1\ns1,North,2020,1/2\ns1,North,2020,1/1\n", "error: genotypes.csv:3: sample id \"s1\" was already used on line 2\n  help: give every sample a unique id; a re-sampled individual needs its own id (validate reports identical genotypes)\n"),
    ];
    for (genotypes, expected) in cases {
        let case = Case::fixture("minimal");
        case.write("genotypes.csv", genotypes);
        assert_eq!(check_error(&case), expected);
    }
}

#[test]
fn population_sheet_mismatches_are_findings() {
    let case = Case::fixture("minimal");
    case.write("populations.csv", "population,census_size\nNorth,400\nSouth,150\nWest,90\n");
    let out = case.run(&["check", "case"]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert!(out.stdout.contains("warning: populations.csv: population \"West\" has no samples in the genotype table, only a census size: the steps leave it out, and `popgauge portfolio` counts it with a census-based Ne (check the spelling if it was sampled)"), "{}", out.stdout);
}
