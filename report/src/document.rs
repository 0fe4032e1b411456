//! The document's data: everything the template prints, as display text, built from the
//! results (`results.json`), the steps as they ran and the provenance hashes.
//!
//! The template holds the wording; this module decides *what* is shown: which step results
//! exist, which rows go into the body and which into the appendix, how numbers are rounded
//! ([`super::format`]) and which charts are drawn ([`super::figures`]). A section whose step is
//! not in the recipe is `null` in the data, and the template says so in words.
//!
//! The data are written beside the document as `assessment.json` and reach the template as
//! bytes in `sys.inputs.data`, so user text (titles, population names, notes) is never
//! spliced into Typst source and prints literally.

mod appendix;
mod inbreeding;
pub mod map;
mod methods_prose;
mod projection;
mod ne_overview;
mod quality;
mod sampling;
mod sections;
mod summary;
pub mod table;

use std::collections::{BTreeMap, BTreeSet};

use serde::Serialize;

use super::contract::{Results, uses};
use super::figures::Figure;
use super::format;
use super::{FileFacts, ReportSource};
pub(crate) use appendix::Extras;
pub use appendix::{AppendixSummary, AppendixTable, Excerpt};
pub use table::{HeatCell, HeatTable, TableData};

/// Schema name of `assessment.json`.
pub const REPORT_DATA_SCHEMA: &str = "popgauge.report-data/1";

/// Rows a table keeps in the body of the document when it is longer than [`BODY_LIMIT`]; the
/// rest continues in the appendix.
pub const BODY_ROWS: usize = 40;
/// A table up to this long stays whole in the body (about a page and a half).
pub const BODY_LIMIT: usize = 60;
/// Rows an appendix table prints at most (about five pages of short rows in two columns).
/// A longer table, such as one row per locus and group of a SNP panel, prints its first rows
/// and names the file that holds every row: thousands of pages help no reader.
pub const APPENDIX_ROWS: usize = 500;
/// Rows of a step's table the appendix prints on about one page (twice as many in two columns,
/// two thirds as many on a landscape page). A longer step table is summarised instead, and
/// the document names its CSV file, which holds every row.
pub const APPENDIX_PAGE_ROWS: usize = 60;

/// The threshold references the document cites beside the steps' own: the 50/500 rule and its
/// revision to 100/1000.
const FRANKLIN_1980: &str = "Franklin IR (1980) Evolutionary change in small populations. In Soulé ME, Wilcox BA (eds) Conservation Biology: An Evolutionary-Ecological Perspective. Sinauer, Sunderland, 135–149.";
const SOULE_1980: &str = "Soulé ME (1980) Thresholds for survival: maintaining fitness and evolutionary potential. In Soulé ME, Wilcox BA (eds) Conservation Biology: An Evolutionary-Ecological Perspective. Sinauer, Sunderland, 151–169.";
const FRANKHAM_2014: &str = "Frankham R, Bradshaw CJA, Brook BW (2014) Genetics in conservation management: revised recommendations for the 50/500 rules, Red List criteria and population viability analyses. Biological Conservation 170:56–63.";
const WRIGHT_1931: &str = "Wright S (1931) Evolution in Mendelian populations. Genetics 16:97–159.";

/// Everything the template reads (`assessment.json`).
#[derive(Debug, Clone, Serialize)]
pub struct ReportData {
    /// [`REPORT_DATA_SCHEMA`].
    pub schema: String,
    /// Tool name and version.
    pub tool: ToolFacts,
    /// Title-block facts.
    pub assessment: AssessmentFacts,
    /// First 16 hex digits of SHA-256 over the recipe, input and step-result hashes.
    pub fingerprint: String,
    /// The Ne thresholds.
    pub thresholds: Thresholds,
    /// Populations in the data, sorted, with their labels.
    pub populations: Vec<PopulationFacts>,
    /// Executive summary.
    pub summary: summary::Summary,
    /// The sampling design.
    pub sampling: sampling::SamplingSection,
    /// The map of the populations, when the recipe asks for one (absent otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub map: Option<map::MapSection>,
    /// Data and validation.
    pub data: sections::DataSection,
    /// Data quality per locus and group (`validate`), when in the recipe.
    pub quality: Option<quality::QualitySection>,
    /// Diversity and inbreeding (`diversity`), when in the recipe.
    pub diversity: Option<sections::DiversitySection>,
    /// Inbreeding of individuals (`inbreeding`), when in the recipe.
    pub inbreeding: Option<inbreeding::InbreedingSection>,
    /// Hardy–Weinberg tests (`hwe`), when in the recipe.
    pub hwe: Option<sections::HweSection>,
    /// Differentiation (`differentiation`), when in the recipe.
    pub differentiation: Option<sections::DifferentiationSection>,
    /// Effective population size (`ne-ld`, `ne-temporal`, `ne-hetx`), when any is in the recipe.
    pub ne: Option<sections::NeSection>,
    /// Trends (`trend`), when in the recipe.
    pub trends: Option<sections::TrendSection>,
    /// Projections (`status`), when in the recipe.
    pub projections: Option<projection::ProjectionSection>,
    /// Steps the document has no section for (plugins), with their tables.
    pub additional: Vec<sections::AdditionalStep>,
    /// Steps as they ran, and the references.
    pub methods: Methods,
    /// Hashes of what went in and what the steps produced.
    pub provenance: ProvenanceFacts,
    /// Tables too long for the body, in order of first mention.
    pub appendix: Vec<AppendixTable>,
    /// Charts drawn, by key (`ne`, `he-years`, …).
    pub figures: BTreeMap<String, FigureFacts>,
}

/// The tool.
#[derive(Debug, Clone, Serialize)]
pub struct ToolFacts {
    /// `popgauge`.
    pub name: String,
    /// Version.
    pub version: String,
}

/// The title block.
#[derive(Debug, Clone, Serialize)]
pub struct AssessmentFacts {
    /// Title.
    pub title: String,
    /// Species.
    pub species: String,
    /// Organisation (may be empty).
    pub organisation: String,
    /// Assessor (may be empty).
    pub assessor: String,
    /// ISO date.
    pub date: String,
    /// The date in words.
    pub date_text: String,
    /// Year, month and day as numbers, for the document's metadata date.
    pub year: i32,
    /// Month.
    pub month: u32,
    /// Day.
    pub day: u32,
    /// Generation time in years, display text, when given.
    pub generation_time: Option<String>,
    /// Master seed.
    pub seed: String,
}

/// The thresholds.
#[derive(Debug, Clone, Serialize)]
pub struct Thresholds {
    /// Each threshold, display text, ascending.
    pub values: Vec<String>,
    /// `50/500`-style short name.
    pub name: String,
    /// Short citation of their origin.
    pub source: String,
}

/// One population.
#[derive(Debug, Clone, Serialize)]
pub struct PopulationFacts {
    /// Name as in the data.
    pub name: String,
    /// Label from the population sheet.
    pub label: Option<String>,
    /// Census size, display text.
    pub census_size: Option<String>,
    /// Census year.
    pub census_year: Option<i32>,
}

/// A chart the template can show.
#[derive(Debug, Clone, Serialize)]
pub struct FigureFacts {
    /// Path in the output folder (`figures/<key>.svg`).
    pub file: String,
    /// Text alternative for readers who cannot see the chart.
    pub alt: String,
    /// Data marks drawn (estimates and points, infinite ones included).
    pub marks: usize,
}

/// The steps as they ran.
#[derive(Debug, Clone, Serialize)]
pub struct Methods {
    /// Each step.
    pub steps: Vec<MethodStep>,
    /// Every reference, sorted and without duplicates.
    pub references: Vec<String>,
}

/// One step as it ran.
#[derive(Debug, Clone, Serialize)]
pub struct MethodStep {
    /// Recipe id.
    pub id: String,
    /// `uses` name.
    pub uses: String,
    /// Version.
    pub version: String,
    /// Derived seed.
    pub seed: String,
    /// `name = value` for every resolved parameter.
    pub params: Vec<String>,
    /// What the step does, in a few sentences with its papers.
    pub prose: String,
    /// `ok` or `failed: …`.
    pub status: String,
}

/// Hashes for the appendix.
#[derive(Debug, Clone, Serialize)]
pub struct ProvenanceFacts {
    /// Recipe and input files.
    pub files: TableData,
    /// Steps: id, seed, parameter and result hashes.
    pub steps: TableData,
}

/// The document data and the charts to draw (key, chart, text alternative).
pub struct Built {
    /// The data.
    pub data: ReportData,
    /// The charts.
    pub figures: Vec<(String, Figure, String)>,
}

/// Builds the document data from the results and the run facts.
pub fn build(source: &ReportSource<'_>) -> Built {
    let results = Results::new(source.results);
    let populations = population_facts(source);
    let names: Vec<String> = populations.iter().map(|p| p.name.clone()).collect();
    let mut extras = Extras::default();
    let context = sections::Context {
        results,
        populations: &names,
        runs: source.runs,
        thresholds: &source.results.assessment.thresholds,
        generation_time: source.results.assessment.generation_time_years,
    };
    let summary = summary::summary(&context);
    let sampling = sampling::sampling_section(&context);
    let map = map::map_section(&context, source.map, &mut extras);
    let data_section = sections::data_section(&context, &mut extras);
    let quality = quality::quality_section(&context, &mut extras);
    let diversity = sections::diversity_section(&context, &mut extras);
    let inbreeding = inbreeding::inbreeding_section(&context, &mut extras);
    let hwe = sections::hwe_section(&context, &mut extras);
    let differentiation = sections::differentiation_section(&context, &mut extras);
    let ne = sections::ne_section(&context, &mut extras);
    let trends = sections::trend_section(&context, &mut extras);
    let projections = projection::projection_section(&context, &mut extras);
    let additional = sections::additional_steps(&context, &mut extras);
    let methods = methods(source, projections.is_some() || ne.is_some() || summary.status_step.is_some());
    let Extras { figures, appendix } = extras;
    let figure_facts = figures
        .iter()
        .map(|(key, figure, alt)| {
            (key.clone(), FigureFacts { file: format!("figures/{key}.svg"), alt: alt.clone(), marks: figure.marks() })
        })
        .collect();
    let data = ReportData {
        schema: REPORT_DATA_SCHEMA.into(),
        tool: ToolFacts { name: source.results.tool.name.clone(), version: source.results.tool.version.clone() },
        assessment: assessment_facts(source),
        fingerprint: source.fingerprint.to_string(),
        thresholds: thresholds(&source.results.assessment.thresholds),
        populations,
        summary,
        sampling,
        map,
        data: data_section,
        quality,
        diversity,
        inbreeding,
        hwe,
        differentiation,
        ne,
        trends,
        projections,
        additional,
        methods,
        provenance: provenance_facts(source),
        appendix,
        figures: figure_facts,
    };
    Built { data, figures }
}

fn assessment_facts(source: &ReportSource<'_>) -> AssessmentFacts {
    let a = &source.results.assessment;
    let parts: Vec<&str> = a.date.split('-').collect();
    let part = |i: usize| parts.get(i).and_then(|p| p.parse::<u32>().ok());
    AssessmentFacts {
        title: a.title.clone(),
        species: a.species.clone(),
        organisation: a.organisation.clone(),
        assessor: a.assessor.clone(),
        date: a.date.clone(),
        date_text: format::long_date(&a.date),
        year: part(0).map_or(1970, |y| y as i32),
        month: part(1).unwrap_or(1),
        day: part(2).unwrap_or(1),
        generation_time: a
            .generation_time_years
            .map(|g| format::significant(g, 3).trim_end_matches('0').trim_end_matches('.').to_string()),
        seed: a.seed.to_string(),
    }
}

fn thresholds(values: &[f64]) -> Thresholds {
    let texts: Vec<String> = values.iter().map(|v| format::effective_size(*v)).collect();
    let source = match values {
        [a, b] if *a == 100.0 && *b == 1000.0 => "Frankham, Bradshaw & Brook 2014",
        [a, b] if *a == 50.0 && *b == 500.0 => "Franklin 1980; Soulé 1980",
        _ => "set in the recipe",
    };
    Thresholds { name: texts.join("/"), values: texts, source: source.into() }
}

fn population_facts(source: &ReportSource<'_>) -> Vec<PopulationFacts> {
    let names: BTreeSet<&str> = source.results.data.groups.iter().map(|g| g.population.as_str()).collect();
    let sheet = &source.results.assessment.populations;
    names
        .into_iter()
        .map(|name| {
            let row = sheet.iter().find(|p| p.population == name);
            PopulationFacts {
                name: name.to_string(),
                label: row.and_then(|r| r.label.clone()),
                census_size: row.and_then(|r| r.census_size).map(format::effective_size),
                census_year: row.and_then(|r| r.census_year),
            }
        })
        .collect()
}

fn methods(source: &ReportSource<'_>, thresholds_shown: bool) -> Methods {
    let steps = source
        .results
        .steps
        .iter()
        .map(|step| {
            let run = source.runs.iter().find(|r| r.id == step.id);
            MethodStep {
                id: step.id.clone(),
                uses: step.uses.clone(),
                version: step.version.clone(),
                seed: run.map_or_else(|| format::UNDEFINED.to_string(), |r| r.seed.0.to_string()),
                params: run
                    .map(|r| r.params.iter().map(|(name, value)| format!("{name} = {}", param_text(value))).collect())
                    .unwrap_or_default(),
                prose: methods_prose::step_prose(
                    &step.id,
                    &step.uses,
                    &run.map(|r| r.params.clone()).unwrap_or_default(),
                    source.results.assessment.generation_time_years,
                ) + &methods_prose::plugin_code(
                    &step.id,
                    run.and_then(|r| r.plugin.as_ref()),
                    step.findings.iter().any(|f| f.code == popgauge_engine::host::sandbox::NOT_SANDBOXED),
                ),
                status: match (&step.status, &step.error) {
                    (popgauge_abi::StepStatus::Ok, _) => "ok".into(),
                    (popgauge_abi::StepStatus::Failed, error) => {
                        format!("failed: {}", error.clone().unwrap_or_default())
                    }
                },
            }
        })
        .collect();
    let mut references: BTreeSet<String> =
        source.results.steps.iter().flat_map(|s| s.citations.iter().cloned()).collect();
    if thresholds_shown {
        let values = &source.results.assessment.thresholds;
        // The document sets either standard pair beside the other, so both are cited.
        let standard = [50.0, 500.0, 100.0, 1000.0];
        if values.iter().any(|v| standard.contains(v)) {
            references.insert(FRANKLIN_1980.into());
            references.insert(SOULE_1980.into());
            references.insert(FRANKHAM_2014.into());
        }
    }
    if !Results::new(source.results).steps(uses::STATUS).is_empty() {
        references.insert(WRIGHT_1931.into());
    }
    Methods { steps, references: dedupe_references(references) }
}

/// Drops a reference that is a prefix-variant of another (the same work cited with and
/// without its subtitle by two steps), keeping the longer text.
fn dedupe_references(references: BTreeSet<String>) -> Vec<String> {
    let key = |r: &str| r.split(')').next().unwrap_or(r).to_string();
    let mut by_key: BTreeMap<String, Vec<String>> = BTreeMap::new();
    for reference in references {
        by_key.entry(key(&reference)).or_default().push(reference);
    }
    by_key
        .into_values()
        .flat_map(|group| {
            let longest = group.iter().map(|r| r.len()).max().unwrap_or(0);
            let titles: BTreeSet<String> = group.iter().map(|r| title_word(r)).collect();
            if titles.len() == 1 {
                group.into_iter().filter(|r| r.len() == longest).take(1).collect::<Vec<_>>()
            } else {
                group
            }
        })
        .collect()
}

/// The first words after the year, to tell two works of the same authors and year apart.
fn title_word(reference: &str) -> String {
    reference.split(')').nth(1).unwrap_or("").split_whitespace().take(3).collect::<Vec<_>>().join(" ").to_lowercase()
}

fn param_text(value: &serde_json::Value) -> String {
    match value {
        serde_json::Value::Null => "none (default)".into(),
        serde_json::Value::String(s) => format!("\"{s}\""),
        other => other.to_string(),
    }
}

fn provenance_facts(source: &ReportSource<'_>) -> ProvenanceFacts {
    let mut files = TableData::new(&[("Role", false), ("File", false), ("Bytes", true), ("SHA-256", false)]);
    let file_row = |f: &FileFacts| vec![f.role.clone(), f.path.clone(), f.size.to_string(), f.sha256.clone()];
    files.push(file_row(&source.recipe));
    for input in &source.inputs {
        files.push(file_row(input));
    }
    let mut steps =
        TableData::new(&[("Step", false), ("Seed", true), ("Parameters SHA-256", false), ("Result SHA-256", false)]);
    for run in source.runs {
        steps.push(vec![run.id.clone(), run.seed.0.to_string(), run.params_sha256.clone(), run.result_sha256.clone()]);
    }
    ProvenanceFacts { files, steps }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn references_are_sorted_and_variants_of_one_work_merged() {
        let refs: BTreeSet<String> = [
            "Nei M (1978) Estimation of average heterozygosity. Genetics 89:583–590.",
            "Nei M (1978) Estimation of average heterozygosity and genetic distance from a small number of individuals. Genetics 89:583–590.",
            "Brookfield JFY (1996) A simple new method for estimating null allele frequency. Mol Ecol 5:453–455.",
            "Nei M (1987) Molecular Evolutionary Genetics. Columbia University Press.",
        ]
        .into_iter()
        .map(String::from)
        .collect();
        let merged = dedupe_references(refs);
        assert_eq!(merged.len(), 3, "{merged:?}");
        assert!(merged[0].starts_with("Brookfield"));
        assert!(merged[1].contains("genetic distance"), "the longer form is kept");
        assert!(merged[2].starts_with("Nei M (1987)"));
    }

    fn source_of(results: &popgauge_engine::results::ResultsDocument) -> Built {
        let file = FileFacts { role: "recipe".into(), path: "case.toml".into(), size: 3, sha256: "ab".repeat(32) };
        build(&ReportSource {
            results,
            runs: &[],
            recipe: file,
            inputs: vec![],
            fingerprint: "0011223344556677",
            map: None,
        })
    }

    /// A recipe with only a plugin step: every built-in section is absent (`null`, so the
    /// template says it is not part of the recipe) and the plugin's table is an additional
    /// analysis, shown with its values formatted by column name.
    #[test]
    fn absent_steps_leave_sections_empty_and_plugins_become_additional_analyses() {
        let results: popgauge_engine::results::ResultsDocument = serde_json::from_value(serde_json::json!({
            "schema": "popgauge.results/1",
            "tool": {"name": "popgauge", "version": "0.1.0"},
            "assessment": {"title": "T #1", "species": "S", "assessor": "", "organisation": "", "date": "2026-02-03", "seed": 1, "thresholds": [100.0, 1000.0]},
            "data": {"genotypes": "g.csv", "samples": 4, "loci": 2, "groups": [{"population": "B", "year": 2020, "n": 2}, {"population": "A", "year": 2020, "n": 2}], "findings": []},
            "steps": [{"id": "kin", "uses": "plugin:libk.so", "version": "2.0.0", "status": "ok",
                       "tables": {"pairs": {"columns": ["population", "relatedness", "p_value"], "rows": [["A", 0.25, 0.0004]]}},
                       "findings": [], "citations": ["Queller DC, Goodnight KF (1989) Estimating relatedness using genetic markers. Evolution 43:258–275."]}]
        }))
        .unwrap();
        let built = source_of(&results);
        let data = &built.data;
        assert!(data.diversity.is_none() && data.ne.is_none() && data.trends.is_none() && data.projections.is_none());
        assert!(data.summary.status_step.is_none());
        assert!(built.figures.is_empty());
        assert_eq!(data.populations.iter().map(|p| p.name.as_str()).collect::<Vec<_>>(), vec!["A", "B"]);
        assert_eq!((data.assessment.year, data.assessment.month, data.assessment.day), (2026, 2, 3));
        assert_eq!(data.assessment.date_text, "3 February 2026");
        assert_eq!(data.thresholds.name, "100/1000");
        assert_eq!(data.additional.len(), 1);
        let pairs = &data.additional[0].tables[0];
        assert_eq!(pairs.name, "pairs");
        assert_eq!(pairs.table.rows[0], vec!["A", "0.25", "< 0.001"]);
        assert_eq!(data.methods.references.len(), 1, "no threshold references without an Ne or status result");
    }

    /// A per-locus table of a SNP panel (here 1,200 rows, one per locus and group) is longer
    /// than a page: the appendix summarises its columns (lowest, median, highest) and names the
    /// CSV file that holds every row; a table of any other source longer than
    /// [`APPENDIX_ROWS`] prints its first rows.
    #[test]
    fn long_step_tables_are_summarised_and_name_their_csv_file() {
        let by_locus: Vec<serde_json::Value> = (0..1200)
            .map(|i| {
                serde_json::json!(["A", 2020, format!("snp{i:05}"), 50, 2, 0.3 + f64::from(i) / 10_000.0, 0.5, 0.0])
            })
            .collect();
        let results: popgauge_engine::results::ResultsDocument = serde_json::from_value(serde_json::json!({
            "schema": "popgauge.results/1",
            "tool": {"name": "popgauge", "version": "0.1.0"},
            "assessment": {"title": "T", "species": "S", "assessor": "", "organisation": "", "date": "2026-02-03", "seed": 1, "thresholds": [50.0, 500.0]},
            "data": {"genotypes": "calls.vcf.gz", "samples": 50, "loci": 1200, "groups": [{"population": "A", "year": 2020, "n": 50}], "findings": []},
            "steps": [{"id": "div", "uses": "diversity", "version": "0.1.0", "status": "ok",
                       "tables": {
                           "by_group": {"columns": ["population", "year", "n", "ho", "he", "f"], "rows": [["A", 2020, 50, 0.5, 0.5, 0.0]]},
                           "by_locus": {"columns": ["population", "year", "locus", "n", "alleles", "ho", "he", "fis"], "rows": by_locus}},
                       "findings": [], "citations": []}]
        }))
        .unwrap();
        let built = source_of(&results);
        let key =
            built.data.diversity.as_ref().and_then(|d| d.by_locus.clone()).expect("per-locus table in the appendix");
        let table = built.data.appendix.iter().find(|t| t.key == key).expect("appendix table");
        assert!(table.table.rows.is_empty(), "no rows are printed");
        let summary = table.summary.as_ref().expect("a summary");
        assert_eq!(summary.rows, "1,200");
        assert_eq!(summary.file, "tables/div.by_locus.csv");
        let ho = summary.columns.rows.iter().find(|r| r[0] == "Ho").expect("Ho summarised under its readable heading");
        assert_eq!(ho[1..], ["1,200", "0.300", "0.360", "0.420"]);
        let locus = summary.columns.rows.iter().find(|r| r[0] == "Locus").unwrap();
        assert_eq!(locus[1], "1,200 distinct");
        let mut extras = Extras::default();
        let long = TableData { rows: vec![vec!["x".into()]; APPENDIX_ROWS + 3], ..TableData::new(&[("c", false)]) };
        extras.appendix("findings".into(), long, "results.json".into());
        let excerpt = extras.appendix[0].excerpt.as_ref().expect("a table outside tables/ keeps an excerpt");
        assert_eq!(excerpt.omitted, "3");
        assert!(extras.appendix[0].summary.is_none());
    }

    #[test]
    fn threshold_names_and_sources() {
        assert_eq!(thresholds(&[50.0, 500.0]).name, "50/500");
        assert_eq!(thresholds(&[100.0, 1000.0]).source, "Frankham, Bradshaw & Brook 2014");
        assert_eq!(thresholds(&[75.0]).source, "set in the recipe");
    }
}
