use super::*;

fn options<'a>(missing: &'a [String], ignore: &'a [String], strict: bool) -> WideOptions<'a> {
    WideOptions { file: "genotypes.csv", missing, ignore_columns: ignore, strict }
}

fn default_missing() -> Vec<String> {
    crate::recipe::DEFAULT_MISSING.iter().map(|s| s.to_string()).collect()
}

fn read(text: &str) -> Result<WideTable, DataError> {
    read_wide_table(text.as_bytes(), &options(&default_missing(), &[], false))
}

fn first_line(err: DataError) -> String {
    err.to_string().lines().next().unwrap_or_default().to_string()
}

#[test]
fn reads_codes_locus_major_and_interns_labels() {
    let t = read("sample,population,year,L1,L2\ns1,North,2020,152/156,A/G\ns2,North,2020,156/156,NA\n").unwrap();
    let m = &t.matrix;
    assert_eq!(m.loci()[0].alleles, vec!["152", "156"]);
    assert_eq!(m.loci()[1].alleles, vec!["A", "G"]);
    let codes: Vec<u16> = m.codes().iter().map(|c| c.0).collect();
    assert_eq!(codes, vec![1, 2, 2, 2, 1, 2, 0, 0]);
    assert!(t.findings.is_empty());
}

#[test]
fn accepts_semicolons_tabs_bom_and_crlf() {
    for text in [
        "\u{feff}sample;population;year;L1\r\ns1;North;2020;1/2\r\n",
        "sample\tpopulation\tyear\tL1\ns1\tNorth\t2020\t1/2\n",
    ] {
        let t = read(text).unwrap();
        assert_eq!(t.matrix.samples()[0].id, "s1");
        assert_eq!(t.matrix.loci()[0].name, "L1");
    }
}

#[test]
fn bad_cells_become_findings_with_line_and_column() {
    let t = read("sample,population,year,L1,L2\ns1,North,2020,152/.,1/2/3\ns2,North,2020,148,a b/1\n").unwrap();
    let codes: Vec<&str> = t.findings.iter().map(|f| f.code.as_str()).collect();
    assert_eq!(codes, vec!["half-missing-genotype", "too-many-alleles", "haploid-genotype", "bad-allele-label"]);
    assert_eq!(
        t.findings[0].message,
        "genotypes.csv line 2, column L1, cell \"152/.\": one allele missing; treated as untyped (set strict = true to stop instead)"
    );
    assert_eq!(t.findings[2].location.line, Some(3));
    assert!(t.matrix.codes().iter().all(|c| c.0 == 0), "bad cells are untyped");
}

#[test]
fn long_labels_and_strict_mode() {
    let long = "x".repeat(33);
    let text = format!("sample,population,year,L1\ns1,North,2020,{long}/1\n");
    let t = read(&text).unwrap();
    assert_eq!(t.findings[0].code, "bad-allele-label");
    let missing = default_missing();
    let err = read_wide_table(b"sample,population,year,L1\ns1,North,2020,152/.\n", &options(&missing, &[], true)).unwrap_err();
    assert_eq!(first_line(err), "genotypes.csv:2: column `L1`, cell \"152/.\": one allele missing");
}

#[test]
fn ignored_columns_are_skipped_and_checked() {
    let missing = default_missing();
    let ignore = vec!["notes".to_string()];
    let t = read_wide_table(b"sample,population,year,notes,L1\ns1,North,2020,seen twice,1/2\n", &options(&missing, &ignore, false)).unwrap();
    assert_eq!(t.matrix.loci().len(), 1);
    let ignore = vec!["note".to_string()];
    let err = read_wide_table(b"sample,population,year,notes,L1\ns1,North,2020,x,1/2\n", &options(&missing, &ignore, false)).unwrap_err();
    assert_eq!(err.to_string(), "genotypes.csv: `ignore_columns` names `note`, which is not a column of the file\n  help: did you mean `notes`? Otherwise remove it from `ignore_columns`");
}

#[test]
fn structural_errors_name_file_and_line() {
    let cases: [(&str, &str); 10] = [
        ("", "genotypes.csv: the file is empty"),
        ("sample,population,year,L1\n", "genotypes.csv: the table has a header but no samples"),
        ("sample,population,yr,L1\ns1,N,2020,1/2\n", "genotypes.csv: required column `year` not found (columns: sample, population, yr, L1)"),
        ("sample,population,year\ns1,N,2020\n", "genotypes.csv: the table has no locus columns"),
        ("sample,population,year,L1,L1\ns1,N,2020,1/2,1/2\n", "genotypes.csv:1: column `L1` appears twice in the header (columns 4 and 5)"),
        ("sample,population,year,L1\ns1,N,2020\n", "genotypes.csv:2: the row has 3 cells but the header has 4 columns"),
        ("sample,population,year,L1\ns1,N,spring,1/2\n", "genotypes.csv:2: column `year` has \"spring\": the year is not a whole number"),
        ("sample,population,year,L1\ns1,N,20201,1/2\n", "genotypes.csv:2: column `year` has \"20201\": the year is outside 1700–2200"),
        ("sample,population,year,L1\ns1,N,2020,1/2\n\ns1,N,2021,1/1\n", "genotypes.csv:4: sample id \"s1\" was already used on line 2"),
        ("sample,population,year,L1\n,N,2020,1/2\n", "genotypes.csv:2: column `sample` has \"\": the cell is empty"),
    ];
    for (text, expected) in cases {
        let err = read(text).unwrap_err();
        assert_eq!(first_line(err), expected, "input {text:?}");
    }
}

#[test]
fn encoding_errors_are_refused() {
    let missing = default_missing();
    let err = read_wide_table(b"sample,population,year,L1\ns1,N,2020,1/\xff\n", &options(&missing, &[], false)).unwrap_err();
    assert_eq!(first_line(err), "genotypes.csv:2: the text is not valid UTF-8");
    let err = read_wide_table(b"sample,population,year,L1\x00\n", &options(&missing, &[], false)).unwrap_err();
    assert_eq!(first_line(err), "genotypes.csv:1: the file contains NUL bytes, so it is not a text table");
}

#[test]
fn every_error_has_a_help_line() {
    let err = read("sample,population,year,L1\ns1,N,2020\n").unwrap_err();
    let text = err.to_string();
    assert!(text.lines().nth(1).is_some_and(|l| l.starts_with("  help: ")), "{text}");
}
