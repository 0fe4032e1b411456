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

/// Rows are gathered in blocks before they reach the locus-major buffer: a table of more
/// samples than a block, and not a multiple of it, reads each cell to its place.
#[test]
fn rows_past_one_block_are_laid_out_locus_major() {
    let samples = 2 * BLOCK_SAMPLES + 3;
    let mut text = String::from("sample,population,year,L1,L2,L3");
    let cell = |s: usize, l: usize| format!("{}/{}", (s + l) % 5, (s * 3 + l) % 7);
    for s in 0..samples {
        text += &format!("\ns{s},North,2020,{},{},{}", cell(s, 0), cell(s, 1), cell(s, 2));
    }
    let t = read(&text).unwrap();
    let m = &t.matrix;
    for l in 0..3 {
        for s in 0..samples {
            let label = |k: usize| m.loci()[l].alleles[m.codes()[l * 2 * samples + 2 * s + k].0 as usize - 1].clone();
            assert_eq!(format!("{}/{}", label(0), label(1)), cell(s, l), "sample {s}, locus {l}");
        }
    }
}

/// Past a few labels a locus looks labels up in an index: codes stay in order of first
/// appearance, and a label of more than 7 bytes is found like a short one.
#[test]
fn many_alleles_at_a_locus_keep_their_codes() {
    let samples = 40;
    let mut text = String::from("sample,population,year,L1");
    for s in 0..samples {
        text += &format!("\ns{s},North,2020,allele-{s}/allele-{}", s + 1);
    }
    let t = read(&text).unwrap();
    let m = &t.matrix;
    assert_eq!(m.loci()[0].alleles.len(), samples + 1);
    let codes: Vec<u16> = m.codes().iter().map(|c| c.0).collect();
    let expected: Vec<u16> = (0..samples as u16).flat_map(|s| [s + 1, s + 2]).collect();
    assert_eq!(codes, expected);
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
    let err = read_wide_table(b"sample,population,year,L1\ns1,North,2020,152/.\n", &options(&missing, &[], true))
        .unwrap_err();
    assert_eq!(first_line(err), "genotypes.csv:2: column `L1`, cell \"152/.\": one allele missing");
}

#[test]
fn ignored_columns_are_skipped_and_checked() {
    let missing = default_missing();
    let ignore = vec!["notes".to_string()];
    let t = read_wide_table(
        b"sample,population,year,notes,L1\ns1,North,2020,seen twice,1/2\n",
        &options(&missing, &ignore, false),
    )
    .unwrap();
    assert_eq!(t.matrix.loci().len(), 1);
    let ignore = vec!["note".to_string()];
    let err =
        read_wide_table(b"sample,population,year,notes,L1\ns1,North,2020,x,1/2\n", &options(&missing, &ignore, false))
            .unwrap_err();
    assert_eq!(
        err.to_string(),
        "genotypes.csv: `ignore_columns` names `note`, which is not a column of the file\n  help: did you mean `notes`? Otherwise remove it from `ignore_columns`"
    );
}

#[test]
fn structural_errors_name_file_and_line() {
    let cases: [(&str, &str); 10] = [
        ("", "genotypes.csv: the file is empty"),
        ("sample,population,year,L1\n", "genotypes.csv: the table has a header but no samples"),
        (
            "sample,population,yr,L1\ns1,N,2020,1/2\n",
            "genotypes.csv: required column `year` not found (columns: sample, population, yr, L1)",
        ),
        ("sample,population,year\ns1,N,2020\n", "genotypes.csv: the table has no locus columns"),
        (
            "sample,population,year,L1,L1\ns1,N,2020,1/2,1/2\n",
            "genotypes.csv:1: column `L1` appears twice in the header (columns 4 and 5)",
        ),
        ("sample,population,year,L1\ns1,N,2020\n", "genotypes.csv:2: the row has 3 cells but the header has 4 columns"),
        (
            "sample,population,year,L1\ns1,N,spring,1/2\n",
            "genotypes.csv:2: column `year` has \"spring\": the year is not a whole number",
        ),
        (
            "sample,population,year,L1\ns1,N,20201,1/2\n",
            "genotypes.csv:2: column `year` has \"20201\": the year is outside 1700–2200",
        ),
        (
            "sample,population,year,L1\ns1,N,2020,1/2\n\ns1,N,2021,1/1\n",
            "genotypes.csv:4: sample id \"s1\" was already used on line 2",
        ),
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
    let err =
        read_wide_table(b"sample,population,year,L1\ns1,N,2020,1/\xff\n", &options(&missing, &[], false)).unwrap_err();
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

/// Names past the limit are refused, long cell text is cut short in findings.
#[test]
fn long_names_are_refused_and_long_cells_cut_short() {
    let long = "x".repeat(65);
    let err = read(&format!("sample,population,year,L1\n{long},N,2020,1/2\n")).unwrap_err();
    assert_eq!(
        first_line(err),
        format!("genotypes.csv:2: the sample id \"{}… (65 characters)\" is longer than 64 characters", "x".repeat(40))
    );
    let err = read(&format!("sample,population,year,{long}\ns1,N,2020,1/2\n")).unwrap_err();
    assert!(first_line(err).starts_with("genotypes.csv:1: the locus name \"xxx"));
    let cell = "1".repeat(10_000);
    let t = read(&format!("sample,population,year,L1\ns1,N,2020,{cell}/2\n")).unwrap();
    assert!(t.findings[0].message.len() < 300, "{}", t.findings[0].message);
    assert!(t.findings[0].message.contains("… (10002 characters)"), "{}", t.findings[0].message);
}

mod properties {
    //! Any input gives a table or a clean error (a message with a `help:` line), never a panic.
    use proptest::prelude::*;

    use super::*;

    /// A refusal names the file on its first line and has a help line (errors
    /// name the file and say how to fix them).
    fn clean(result: Result<WideTable, DataError>) -> Result<(), TestCaseError> {
        if let Err(e) = result {
            let text = e.to_string();
            prop_assert!(text.lines().next().unwrap_or_default().contains("genotypes.csv"), "no file: {}", text);
            prop_assert!(text.contains("\n  help: "), "no help line: {}", text);
        }
        Ok(())
    }

    /// One sample: population, year and per locus an optional pair of allele labels.
    type Row = (String, i32, Vec<Option<(String, String)>>);

    fn label() -> impl Strategy<Value = String> {
        // "NA" is a missing half by definition, so it is no allele label.
        "[A-Za-z0-9][A-Za-z0-9._-]{0,7}".prop_filter("NA means missing", |l| l != "NA")
    }

    fn rows(loci: usize) -> impl Strategy<Value = Vec<Row>> {
        let cell = proptest::option::of((label(), label()));
        let row = ("[A-Za-z][A-Za-z0-9]{0,9}", 1700..=2200i32, proptest::collection::vec(cell, loci));
        proptest::collection::vec(row, 1..12)
    }

    proptest! {
        #[test]
        fn any_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..300)) {
            let missing = default_missing();
            for strict in [false, true] {
                clean(read_wide_table(&bytes, &options(&missing, &[], strict)))?;
            }
        }

        #[test]
        fn table_like_text(body in "[a-zA-Z0-9/,;\t\r\n\" .?-]{0,300}") {
            clean(read(&format!("sample,population,year,L1,L2\n{body}")))?;
            clean(read(&body))?;
        }

        /// Writing genotypes as a wide table and reading it back gives the same labels.
        #[test]
        fn written_tables_read_back((loci, rows) in (1..5usize).prop_flat_map(|l| (Just(l), rows(l)))) {
            let mut text = String::from("sample,population,year");
            for l in 0..loci {
                text += &format!(",L{l}");
            }
            for (s, (population, year, cells)) in rows.iter().enumerate() {
                text += &format!("\ns{s},{population},{year}");
                for cell in cells {
                    text += &cell.as_ref().map_or(",NA".to_string(), |(a, b)| format!(",{a}/{b}"));
                }
            }
            let table = read(&text).map_err(|e| TestCaseError::fail(e.to_string()))?;
            let m = &table.matrix;
            prop_assert!(table.findings.is_empty());
            prop_assert_eq!(m.samples().len(), rows.len());
            let n = rows.len();
            for (s, (population, year, cells)) in rows.iter().enumerate() {
                prop_assert_eq!(&m.samples()[s].population, population);
                prop_assert_eq!(m.samples()[s].year, *year);
                for (l, cell) in cells.iter().enumerate() {
                    let label = |k: usize| {
                        let code = m.codes()[l * 2 * n + 2 * s + k].0 as usize;
                        (code > 0).then(|| m.loci()[l].alleles[code - 1].clone())
                    };
                    let expected = cell.as_ref().map(|(a, b)| (a.clone(), b.clone()));
                    prop_assert_eq!(label(0).zip(label(1)), expected);
                }
            }
        }
    }
}
