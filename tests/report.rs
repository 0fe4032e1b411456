//! The typeset assessment document: content, determinism, literal user text, custom and
//! broken templates, re-typesetting an edited output folder.
//!
//! The PDF's text layer is read with pdf-extract and its page count and title with lopdf
//! (Rust crates independent of popgauge's typesetter), so the tests need no program beyond the
//! Rust toolchain.

use std::path::Path;

use crate::support::{Case, entries, repo_root};

/// The text layer of a PDF, in reading order (pdf-extract). Words and lines keep their order;
/// the spaces between them may differ from the page (letter-spaced headings gain spaces), so
/// tests compare phrases with [`squeezed`] where a break may fall.
pub fn pdf_text(pdf: &Path) -> String {
    let bytes = std::fs::read(pdf).expect("the PDF is readable");
    pdf_extract::extract_text_from_mem(&bytes).expect("pdf-extract reads the PDF's text layer")
}

/// The page count and the document title (Info dictionary) of a PDF.
fn pdf_info(pdf: &Path) -> (usize, Option<String>) {
    let doc = lopdf::Document::load(pdf).expect("lopdf reads the PDF");
    let title = doc
        .trailer
        .get(b"Info")
        .ok()
        .and_then(|info| doc.dereference(info).ok())
        .and_then(|(_, info)| info.as_dict().ok())
        .and_then(|info| info.get(b"Title").ok())
        .and_then(|title| title.as_str().ok())
        .map(text_string);
    (doc.get_pages().len(), title)
}

/// A PDF text string: UTF-16BE after its byte-order mark, otherwise PDFDocEncoding (read here
/// as Latin-1, which it equals for the characters of a title).
fn text_string(bytes: &[u8]) -> String {
    match bytes.strip_prefix(&[0xfe, 0xff]) {
        Some(utf16) => {
            let units: Vec<u16> = utf16.chunks_exact(2).map(|pair| u16::from_be_bytes([pair[0], pair[1]])).collect();
            String::from_utf16_lossy(&units)
        }
        None => bytes.iter().map(|&b| char::from(b)).collect(),
    }
}

/// Text with all white space removed, so that a value broken across a table cell's lines or
/// spread by justification still matches.
pub fn squeezed(text: &str) -> String {
    text.chars().filter(|c| !c.is_whitespace()).collect()
}

fn results(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap()
}

/// Rows of a table of the last step with this `uses`, as column → value maps.
fn rows(results: &serde_json::Value, uses: &str, table: &str) -> Vec<serde_json::Map<String, serde_json::Value>> {
    let Some(step) = results["steps"].as_array().unwrap().iter().rev().find(|s| s["uses"] == uses) else {
        return Vec::new();
    };
    let t = &step["tables"][table];
    let columns: Vec<String> =
        t["columns"].as_array().unwrap().iter().map(|c| c.as_str().unwrap().to_string()).collect();
    t["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| columns.iter().cloned().zip(r.as_array().unwrap().iter().cloned()).collect())
        .collect()
}

/// Three decimals with a true minus sign: the document's convention for Ho, He and F
/// (common practice for printed diversity tables), written independently of popgauge's code.
fn three_decimals(value: &serde_json::Value) -> String {
    let text = format!("{:.3}", value.as_f64().unwrap());
    if text.starts_with('-') && text != "-0.000" {
        text.replacen('-', "−", 1)
    } else {
        text.trim_start_matches('-').to_string()
    }
}

#[test]
fn the_demo_document_is_complete_and_matches_the_results() {
    let case = Case::demo();
    let run = case.run(&["run", "case", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = case.root().join("out");
    for file in ["assessment.pdf", "assessment.typ", "assessment.json", "figures"] {
        assert!(entries(&out).contains(&file.to_string()), "{file} missing from {:?}", entries(&out));
    }
    let pdf = out.join("assessment.pdf");
    let (pages, title) = pdf_info(&pdf);
    assert!((4..=40).contains(&pages), "{pages} pages");
    assert!(title.as_deref().is_some_and(|t| t.starts_with("Genetic status of the Korrin valley newt")), "{title:?}");
    let text = pdf_text(&pdf);
    let flat = squeezed(&text);
    for population in ["Brennmoor", "Lake Oster", "Sellick Ford", "Tarrow Glen"] {
        assert!(text.contains(population), "{population} missing");
    }
    assert!(text.contains("30 November 2026"), "the recipe's date is the document's date");
    assert!(text.contains("Cautions") && text.contains("qualified"), "the cautions are printed");

    // The status table shows each population's latest He and F as in results.json.
    let doc = results(&out);
    // The results contract: the built-in steps the demo runs write every table and column name
    // the SDK spells for readers (common practice: one spelling, checked against the writers).
    let tables: Vec<(&str, &serde_json::Value)> = doc["steps"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|step| step["tables"].as_object().unwrap().iter().map(|(name, table)| (name.as_str(), table)))
        .collect();
    for name in popgauge_abi::contract::table::ALL {
        assert!(tables.iter().any(|(t, _)| t == name), "no built-in step writes a table `{name}`");
    }
    for name in popgauge_abi::contract::col::ALL {
        let written = tables.iter().any(|(_, t)| t["columns"].as_array().unwrap().iter().any(|c| c == name));
        assert!(written, "no built-in table has the column `{name}`");
    }
    let diversity = rows(&doc, "diversity", "by_group");
    for population in ["Brennmoor", "Lake Oster", "Sellick Ford", "Tarrow Glen"] {
        let latest =
            diversity.iter().filter(|r| r["population"] == population).max_by_key(|r| r["year"].as_i64()).unwrap();
        for column in ["ho", "he", "f"] {
            let value = three_decimals(&latest[column]);
            assert!(flat.contains(&value), "{population} {column} = {value} not in the document");
        }
    }
    // When the recipe has a status step, the summary gives each population the Ne of the
    // status table (one choice of estimate for the whole document), and the projection keeps
    // drift inbreeding apart from the sample's FIS (Wright 1951).
    for row in rows(&doc, "status", "populations") {
        if let Some(ne) = row["ne"].as_f64() {
            let shown = if ne >= 10.0 { format!("{ne:.0}") } else { format!("{ne:.1}") };
            let population = row["population"].as_str().unwrap();
            let sentence = squeezed(&format!("{population}: Ne ≈ {shown}"));
            let printed = flat
                .match_indices(&sentence)
                .any(|(at, _)| !flat[at + sentence.len()..].starts_with(|c: char| c.is_ascii_digit() || c == '.'));
            assert!(printed, "summary: `{sentence}` not in the document");
        }
    }
    // A He series that falls at every sampling is described as such, not as "no clear trend"
    // (three points are too few for the Mann–Kendall test: common practice).
    let series = rows(&doc, "trend", "series");
    for population in ["Brennmoor", "Lake Oster", "Sellick Ford", "Tarrow Glen"] {
        let mut he: Vec<(i64, f64)> = series
            .iter()
            .filter(|r| r["population"] == population && r["metric"] == "he")
            .map(|r| (r["year"].as_i64().unwrap(), r["value"].as_f64().unwrap()))
            .collect();
        he.sort_by_key(|p| p.0);
        if he.len() >= 2 && he.windows(2).all(|w| w[1].1 < w[0].1) {
            let said = squeezed(&format!("{population}: Ne"));
            let at = flat.find(&said).expect("summary bullet");
            let bullet = &flat[at..flat[at + said.len()..].find('•').map_or(flat.len(), |e| at + said.len() + e)];
            assert!(bullet.contains(&squeezed("fell at each sampling")), "{population}: {bullet}");
        }
    }
    assert!(!flat.contains(&squeezed("F rises from")), "no projection starts from the sample's F");
    assert!(flat.contains(&squeezed("drift alone raises inbreeding relative to today")), "F_drift is stated");
    // The PDF/A identification is in the XMP metadata (PDF/A-2b: part 2, conformance B).
    let bytes = std::fs::read(&pdf).unwrap();
    let raw = String::from_utf8_lossy(&bytes);
    assert!(raw.contains("pdfaid:part>2<") || raw.contains("pdfaid:part=\"2\""), "no PDF/A-2 identification");
    // Provenance lists the PDF with its hash under the role "report".
    let prov: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("provenance.json")).unwrap()).unwrap();
    let report = prov["outputs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|o| o["path"] == "assessment.pdf")
        .expect("the PDF is an output");
    assert_eq!(report["role"], "report");
    assert!(prov["outputs"].as_array().unwrap().iter().any(|o| o["role"] == "figure"));
}

/// What a reviewing geneticist reads first: the sampling design, the data quality at a glance,
/// the methods in prose for every step that ran, and charts that draw every row of the table
/// behind them.
#[test]
fn the_demo_document_has_design_quality_methods_prose_and_complete_figures() {
    let case = Case::demo();
    let run = case.run(&["run", "case", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = case.root().join("out");
    let text = pdf_text(&out.join("assessment.pdf"));
    let flat = squeezed(&text);
    let doc = results(&out);

    // Sampling design, from the recipe's [sampling] table and generation-time source.
    let design = flat.find(&squeezed("Sampling design")).expect("a sampling design section");
    let data = flat.find(&squeezed("Data and validation")).expect("a data section");
    assert!(design < data, "the sampling design comes before the results");
    for said in [
        "breeding adults caught at the ponds in spring",
        "tail tip",
        "non-lethal",
        "one cohort",
        "mean age of breeding females in the Halvard mark–recapture study",
        "Waples, Antao & Luikart 2014",
        "Waples & Yokota 2007",
        "1.5 generations",
    ] {
        assert!(flat.contains(&squeezed(said)), "sampling design lacks `{said}`");
    }

    // The data-quality table: every locus with its marker type from the locus sheet, and the
    // loci untyped in more than twice the median share of samples named in words (the median
    // computed here from results.json, independently of the document's code; common practice).
    assert!(flat.contains(&squeezed("Data quality per locus")), "no data-quality table");
    let loci = rows(&doc, "validate", "loci");
    let mut missing: Vec<f64> = loci.iter().map(|r| r["missing"].as_f64().unwrap()).collect();
    missing.sort_by(f64::total_cmp);
    let median = if missing.len() % 2 == 1 {
        missing[missing.len() / 2]
    } else {
        (missing[missing.len() / 2 - 1] + missing[missing.len() / 2]) / 2.0
    };
    let mut flagged = 0;
    for row in &loci {
        let locus = row["locus"].as_str().unwrap();
        assert!(flat.contains(&squeezed(locus)), "{locus} missing from the data-quality table");
        let share = row["missing"].as_f64().unwrap();
        if share > 2.0 * median && share - median >= 0.01 {
            flagged += 1;
            let named = squeezed(&format!("{locus} ({:.1} %)", share * 100.0));
            assert!(flat.contains(&named), "{locus} is over twice the median missingness but not named");
        }
    }
    assert!(flagged > 0, "the demo has a locus with high missingness to flag");
    assert!(flat.contains(&squeezed("microsatellite (GATA)")), "marker types from loci.csv");

    // Methods in prose: a paragraph for every step that ran, and the parameters in the appendix.
    for step in doc["steps"].as_array().unwrap() {
        let (id, uses) = (step["id"].as_str().unwrap(), step["uses"].as_str().unwrap());
        let paragraph = squeezed(&format!("{id} ({uses}). Step {id}"));
        assert!(flat.contains(&paragraph), "no methods paragraph for step {id}");
    }
    assert!(flat.contains(&squeezed("Parameters of each step")), "the parameter listing is in the appendix");
    for term in ["lowest frequency Pcrit", "(singletons)", "Fc (Nei & Tajima 1981)", "Fk (Pollak 1983)"] {
        assert!(flat.contains(&squeezed(term)), "`{term}` is not defined in the methods");
    }

    // No chart drops a row of its table: assessment.json records the marks each chart draws.
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("assessment.json")).unwrap()).unwrap();
    let marks =
        |key: &str| report["figures"][key]["marks"].as_u64().unwrap_or_else(|| panic!("no chart {key}")) as usize;
    let ld_groups: std::collections::BTreeSet<(String, i64)> = rows(&doc, "ne-ld", "estimates")
        .iter()
        .map(|r| (r["population"].as_str().unwrap().to_string(), r["year"].as_i64().unwrap()))
        .collect();
    assert_eq!(marks("ne-years"), ld_groups.len(), "an LD estimate per population and year, infinite ones included");
    let status = rows(&doc, "status", "populations");
    assert_eq!(marks("ne"), status.iter().filter(|r| !r["ne"].is_null()).count());
    assert_eq!(marks("he-years"), rows(&doc, "diversity", "by_group").len());
    let pairs = rows(&doc, "differentiation", "ibd");
    assert_eq!(marks("ibd"), pairs.iter().filter(|r| r["distance_km"].as_f64().is_some_and(|d| d > 0.0)).count());
    assert!(!out.join("figures").join("fst-heatmap.svg").exists(), "the heat map repeated Table 6 and is dropped");

    // The command line and the document count each finding once (a bad cell reported by the
    // reader and again by validate is one finding).
    let said = run.stdout.lines().find(|l| l.starts_with("Findings:")).expect("a findings line");
    let warnings = said.split(", ").nth(1).and_then(|w| w.split_whitespace().next()).expect("a warning count");
    assert!(
        flat.contains(&squeezed(&format!("{warnings} warning(s)"))),
        "the document does not count {warnings} warnings: {said}"
    );
}

/// The colony demo: each animal's inbreeding from a SNP panel with positions. F_ROH follows
/// the simulated realised share of genome identical by descent (`truth.csv`, the simulation's
/// own record; r ≥ 0.9 as in the inbreeding step's accuracy tests), and the document shows the
/// section, the run-length classes and one mark per animal in its chart.
#[test]
fn the_colony_demo_measures_each_animals_inbreeding_against_the_simulated_truth() {
    let case = Case::colony();
    let run = case.run(&["run", "case", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = case.root().join("out");
    let doc = results(&out);
    let individuals = rows(&doc, "inbreeding", "individuals");
    let truth: std::collections::BTreeMap<String, f64> = std::fs::read_to_string(case.path().join("truth.csv"))
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| {
            let cells: Vec<&str> = l.split(',').collect();
            (cells[0].to_string(), cells[3].parse().unwrap())
        })
        .collect();
    let pairs: Vec<(f64, f64)> = individuals
        .iter()
        .map(|r| (r["f_roh"].as_f64().expect("every animal has F_ROH"), truth[r["sample"].as_str().unwrap()]))
        .collect();
    assert_eq!(pairs.len(), truth.len());
    let n = pairs.len() as f64;
    let (mx, my) = (pairs.iter().map(|p| p.0).sum::<f64>() / n, pairs.iter().map(|p| p.1).sum::<f64>() / n);
    let sxy: f64 = pairs.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let sxx: f64 = pairs.iter().map(|p| (p.0 - mx).powi(2)).sum();
    let syy: f64 = pairs.iter().map(|p| (p.1 - my).powi(2)).sum();
    let r = sxy / (sxx * syy).sqrt();
    assert!(r >= 0.9, "F_ROH against the realised IBD share: r = {r}");

    let text = pdf_text(&out.join("assessment.pdf"));
    let flat = squeezed(&text);
    for said in [
        "Inbreeding of individuals",
        "Mean length in Mb per animal in runs of homozygosity",
        "tables/inbreeding.runs.csv",
    ] {
        assert!(flat.contains(&squeezed(said)), "`{said}` missing");
    }
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("assessment.json")).unwrap()).unwrap();
    assert_eq!(
        report["figures"]["inbreeding"]["marks"].as_u64(),
        Some(individuals.len() as u64),
        "one mark per animal"
    );
}

#[test]
fn two_runs_give_identical_pdf_bytes() {
    let case = Case::demo();
    assert_eq!(case.run(&["run", "case", "--out", "a"]).code, 0);
    assert_eq!(case.run(&["run", "case", "--out", "b"]).code, 0);
    let read = |p: &str| std::fs::read(case.root().join(p)).unwrap();
    assert!(read("a/assessment.pdf") == read("b/assessment.pdf"), "the PDFs differ");
    assert_eq!(read("a/assessment.json"), read("b/assessment.json"));
    let figures = entries(&case.root().join("a/figures"));
    assert!(!figures.is_empty());
    for figure in figures {
        assert_eq!(read(&format!("a/figures/{figure}")), read(&format!("b/figures/{figure}")), "{figure}");
    }
}

/// Typst markup characters in the title and a population name print as written.
#[test]
fn user_text_prints_literally() {
    let case = Case::fixture("minimal");
    let title = r"Status of #North $pop* [draft] \ <review>";
    let recipe = case.read("case.toml");
    let recipe = recipe
        .lines()
        .map(|l| if l.starts_with("title = ") { format!("title = '{title}'") } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n");
    case.write("case.toml", recipe);
    let population = r"North #1 $x* [a] \ <b>";
    case.write("genotypes.csv", case.read("genotypes.csv").replace(",North,", &format!(",\"{population}\",")));
    case.write("populations.csv", case.read("populations.csv").replace("\nNorth,", &format!("\n\"{population}\",")));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = pdf_text(&case.path().join("out/assessment.pdf"));
    assert!(text.contains(title), "title not literal in:\n{}", &text[..text.len().min(600)]);
    assert!(text.contains(population), "population name not literal");
}

const CUSTOM_TEMPLATE: &str = r#"#let data = json(sys.inputs.data)
#set document(date: datetime(year: data.assessment.year, month: data.assessment.month, day: data.assessment.day))
#set text(font: "Libertinus Serif")
= Custom layout of the trust
#data.assessment.title

#for p in data.populations [ - #p.name ]
"#;

#[test]
fn a_custom_template_in_the_case_is_used_and_hashed() {
    let case = Case::fixture("minimal");
    case.write("layout/assessment.typ", CUSTOM_TEMPLATE);
    case.write("case.toml", format!("{}\n[report]\ntemplate = \"layout\"\n", case.read("case.toml")));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = case.path().join("out");
    let text = pdf_text(&out.join("assessment.pdf"));
    assert!(text.contains("Custom layout of the trust"), "{text}");
    assert!(text.contains("North"));
    assert_eq!(
        std::fs::read_to_string(out.join("assessment.typ")).unwrap(),
        CUSTOM_TEMPLATE,
        "the template used is beside the PDF"
    );
    let prov: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("provenance.json")).unwrap()).unwrap();
    let template =
        prov["inputs"].as_array().unwrap().iter().find(|i| i["role"] == "template").expect("the template is an input");
    assert_eq!(template["path"], "layout/assessment.typ");
}

#[test]
fn a_broken_template_names_the_file_and_line() {
    let case = Case::fixture("minimal");
    case.write("layout/assessment.typ", "#let data = json(sys.inputs.data)\n= Title\n#data.assessment.titel\n");
    case.write("case.toml", format!("{}\n[report]\ntemplate = \"layout\"\n", case.read("case.toml")));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.starts_with("error: layout/assessment.typ:3:"), "{}", run.stderr);
    assert!(
        run.stderr.contains("the document template does not compile") && run.stderr.contains("titel"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("help: "), "{}", run.stderr);
    assert!(!case.path().join("out").exists(), "nothing is written");
}

/// A case's template is untrusted text: it cannot read the case's data beside its folder, nor any
/// file of the machine, and the refusal speaks of popgauge's terms (no `--root` argument).
#[test]
fn a_template_reads_only_files_in_its_own_folder() {
    let case = Case::fixture("minimal");
    case.write("case.toml", format!("{}\n[report]\ntemplate = \"layout\"\n", case.read("case.toml")));
    case.write("layout/assessment.typ", "#let secret = read(\"../genotypes.csv\")\n= Title\n");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert_eq!(
        run.stderr,
        "error: layout/assessment.typ:1:20: the document template does not compile: path `\"../genotypes.csv\"` would leave the template folder\n  hint: a template can read only files in its own folder\n  help: fix the Typst code there and run again; `popgauge typeset OUT` typesets an edited output folder without re-running the steps\n"
    );
    let home = std::env::var("HOME").unwrap_or_else(|_| "/root".into());
    for outside in ["/etc/passwd".to_string(), format!("{home}/.bashrc")] {
        case.write("layout/assessment.typ", format!("#let secret = read(\"{outside}\")\n= Title\n"));
        let run = case.run(&["run", "case"]);
        assert_eq!(run.code, 2, "{outside}: {}", run.stderr);
        assert!(run.stderr.contains("the document template does not compile: file not found"), "{}", run.stderr);
    }
    case.write("layout/notes.txt", "read from beside the template");
    case.write("layout/assessment.typ", "#let notes = read(\"notes.txt\")\n= #notes\n");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "a file in the template's folder is read: {}", run.stderr);
}

#[test]
fn a_template_folder_must_exist_inside_the_case() {
    let case = Case::fixture("minimal");
    let base = case.read("case.toml");
    case.write("case.toml", format!("{base}\n[report]\ntemplate = \"../elsewhere\"\n"));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("template folder \"../elsewhere\" leaves the case folder"), "{}", run.stderr);
    case.write("case.toml", format!("{base}\n[report]\ntemplate = \"layout\"\n"));
    case.write("layout/readme.txt", "no main file");
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("template folder \"layout\" has no assessment.typ"), "{}", run.stderr);
}

#[test]
fn typeset_retypesets_an_edited_output_folder() {
    let case = Case::fixture("minimal");
    assert_eq!(case.run(&["run", "case"]).code, 0);
    let out = case.path().join("out");
    let typ = std::fs::read_to_string(out.join("assessment.typ")).unwrap();
    assert!(typ.contains("= Executive summary"));
    std::fs::write(out.join("assessment.typ"), typ.replace("= Executive summary", "= Summary for the board")).unwrap();
    let run = case.run(&["typeset", "case/out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = pdf_text(&out.join("assessment.pdf"));
    assert!(text.contains("Summary for the board"));
    assert!(!text.contains("Executive summary"));
    std::fs::write(out.join("assessment.typ"), "#let x = (\n").unwrap();
    let broken = case.run(&["typeset", "case/out"]);
    assert_eq!(broken.code, 2);
    assert!(broken.stderr.contains("case/out/assessment.typ:"), "{}", broken.stderr);
}

/// Every section renders from results that follow the contract, including steps that are
/// being written now, from the fixture `tests/fixtures/report/full-results.json` (invented
/// values, test data only).
#[test]
fn every_section_renders_from_contract_results() {
    use popgauge::engine::StepRun;
    use popgauge::report::{FileFacts, ReportSource, render, template::Template};
    // POPGAUGE_REPORT_RESULTS=some/results.json renders another results document the same way
    // (for looking at pages); the assertions below hold for the fixture.
    let override_path = std::env::var_os("POPGAUGE_REPORT_RESULTS");
    let fixture = override_path
        .clone()
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| repo_root().join("tests/fixtures/report/full-results.json"));
    let results: popgauge::results::ResultsDocument =
        serde_json::from_str(&std::fs::read_to_string(fixture).unwrap()).unwrap();
    let runs: Vec<StepRun> = results
        .steps
        .iter()
        .map(|s| StepRun {
            id: s.id.clone(),
            uses: s.uses.clone(),
            version: s.version.clone(),
            params: if s.uses == "status" {
                [("horizon_years".to_string(), serde_json::json!(100))].into_iter().collect()
            } else {
                Default::default()
            },
            params_sha256: "0".repeat(64),
            seed: popgauge_abi::Seed(7),
            result_sha256: "f".repeat(64),
            plugin: None,
            started: "2026-11-30T09:00:00.000Z".into(),
            ended: "2026-11-30T09:00:00.001Z".into(),
        })
        .collect();
    let file = FileFacts { role: "recipe".into(), path: "case.toml".into(), size: 1, sha256: "a".repeat(64) };
    let source = ReportSource {
        results: &results,
        runs: &runs,
        recipe: file.clone(),
        inputs: vec![],
        fingerprint: "0123456789abcdef",
        map: None,
    };
    let report = render(&source, &Template::standard()).unwrap();
    let dir = std::env::var_os("POPGAUGE_REPORT_OUT")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| tempfile::tempdir().unwrap().keep());
    std::fs::create_dir_all(dir.join("figures")).unwrap();
    for (name, bytes) in report.clone().into_files() {
        std::fs::write(dir.join(name), bytes).unwrap();
    }
    if override_path.is_some() {
        return;
    }
    let keys: Vec<&str> = report.figures.iter().map(|(k, _)| k.as_str()).collect();
    assert_eq!(keys, vec!["he-years", "ibd", "ne", "ne-years", "projection"]);
    let text = pdf_text(&dir.join("assessment.pdf"));
    for expected in [
        "Executive summary",
        "Hardy–Weinberg proportions",
        "Isolation by distance",
        "Linkage disequilibrium",
        "Temporal method",
        "Heterozygote excess",
        "Trend tests",
        "Projections",
        "Additional analyses",
        "relatedness",
        "Provenance record",
        "Wright S (1931)",
        "qualified conservation geneticist",
    ] {
        assert!(text.contains(expected), "{expected} missing");
    }
    assert!(!text.contains("Not part of this assessment"), "every section has results");
}
