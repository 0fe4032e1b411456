//! The portfolio document: many case assessments in one indicator report.
//!
//! [`model`] holds what it is made from (one row per population of every case, the cases),
//! [`indicators`] counts populations against the thresholds, [`chart`] draws every Ne with its
//! interval, and [`render`] typesets the standard portfolio template
//! (`templates/portfolio/portfolio.typ`) into a PDF/A-2b file, with its data
//! (`portfolio.json`) and charts beside it. The same source gives the same bytes.

pub mod chart;
pub mod indicators;
mod map;
pub mod model;
mod text;

use serde::Serialize;

use crate::document::TableData;
use crate::format::{self, NumberStyle};
use crate::template::{PORTFOLIO_MAIN_FILE, Template};
use crate::{FIGURES_FOLDER, ReportError, typst};
pub use model::{Indicator, NeBasis, PortfolioCase, PortfolioPopulation, PortfolioSource, ThresholdCount};

/// The portfolio document's file name.
pub const PDF_FILE: &str = "portfolio.pdf";
/// Its data's file name.
pub const DATA_FILE: &str = "portfolio.json";
/// The key (and file stem under `figures/`) of the Ne chart.
pub const NE_CHART: &str = "ne";
/// The key of the map.
pub const MAP: &str = "map";

/// The portfolio document and its editable source.
#[derive(Debug, Clone)]
pub struct PortfolioReport {
    /// `portfolio.pdf`.
    pub pdf: Vec<u8>,
    /// `portfolio.json`.
    pub data: Vec<u8>,
    /// `figures/<key>.svg` as (key, SVG bytes).
    pub figures: Vec<(String, Vec<u8>)>,
    /// The template's files (`portfolio.typ`).
    pub template_files: Vec<(String, Vec<u8>)>,
}

impl PortfolioReport {
    /// The files for the output folder, relative to it.
    pub fn into_files(self) -> Vec<(String, Vec<u8>)> {
        let mut files = vec![(PDF_FILE.to_string(), self.pdf), (DATA_FILE.to_string(), self.data)];
        files.extend(self.template_files);
        files.extend(self.figures.into_iter().map(|(key, svg)| (format!("{FIGURES_FOLDER}/{key}.svg"), svg)));
        files
    }
}

/// The data the template reads (`portfolio.json`): text already formatted.
#[derive(Debug, Clone, Serialize)]
pub struct PortfolioData {
    /// Title.
    pub title: String,
    /// Organisation (empty when none).
    pub organisation: String,
    /// Date in words.
    pub date_text: String,
    /// Year, month, day.
    pub year: i32,
    /// Month.
    pub month: u32,
    /// Day.
    pub day: u32,
    /// Stable identifier printed on every page.
    pub fingerprint: String,
    /// popgauge version.
    pub tool_version: String,
    /// Cases, species and populations in words (`3 cases`).
    pub counts: Counts,
    /// Summary sentences.
    pub summary: Vec<String>,
    /// Indicators: everything and per species.
    pub indicators: TableData,
    /// Indicators per species group and region, when the manifest gives them.
    pub groups: TableData,
    /// One row per population.
    pub populations: TableData,
    /// The cases with their record hashes.
    pub cases: TableData,
    /// The chart's caption and how many marks it draws.
    pub chart: ChartData,
    /// Methods paragraphs.
    pub methods: Vec<String>,
    /// References cited.
    pub references: Vec<String>,
    /// The thresholds in words (`50 and 500`).
    pub thresholds: String,
    /// The map, when asked for.
    pub map: Option<map::MapData>,
}

/// Counts for the title block.
#[derive(Debug, Clone, Serialize)]
pub struct Counts {
    /// Cases.
    pub cases: usize,
    /// Species.
    pub species: usize,
    /// Populations.
    pub populations: usize,
}

/// The Ne chart as the template shows it.
#[derive(Debug, Clone, Serialize)]
pub struct ChartData {
    /// Figure key under `sys.inputs.figures`.
    pub key: String,
    /// Caption.
    pub caption: String,
    /// Populations marked on it.
    pub marks: usize,
}

/// Builds and typesets the portfolio document.
///
/// # Errors
/// [`ReportError::Pdf`] when the document cannot be written; the standard template always
/// compiles (a test checks it).
pub fn render(source: &PortfolioSource) -> Result<PortfolioReport, ReportError> {
    let (svg, marks) = chart::ne_chart(&source.populations, &source.thresholds);
    let mut data = document_data(source, marks);
    let mut figures = vec![(NE_CHART.to_string(), svg.into_bytes())];
    if let Some(positions) = source.map {
        let (map_data, map_svg) = map::map(&source.populations, positions)?;
        data.map = Some(map_data);
        figures.extend(map_svg.map(|svg| (MAP.to_string(), svg.into_bytes())));
    }
    let mut bytes =
        serde_json::to_vec_pretty(&data).map_err(|e| ReportError::Pdf { message: format!("document data: {e}") })?;
    bytes.push(b'\n');
    let template = Template::portfolio();
    let ident = format!("portfolio-{}", source.fingerprint);
    let pdf = typst::typeset(&typst::TypesetJob {
        template: &template,
        main: PORTFOLIO_MAIN_FILE,
        data_file: DATA_FILE,
        data: &bytes,
        figures: &figures,
        date: source.date,
        ident: &ident,
    })?;
    Ok(PortfolioReport { pdf, data: bytes, figures, template_files: template.output_files()? })
}

/// The document data of a portfolio.
pub fn document_data(source: &PortfolioSource, marks: usize) -> PortfolioData {
    let (year, month, day) = source.date;
    let species = source.indicators.iter().filter(|i| i.scope == "species").count();
    PortfolioData {
        title: source.title.clone(),
        organisation: source.organisation.clone().unwrap_or_default(),
        date_text: format::long_date(&format!("{year:04}-{month:02}-{day:02}")),
        year,
        month,
        day,
        fingerprint: source.fingerprint.clone(),
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        counts: Counts { cases: source.cases.len(), species, populations: source.populations.len() },
        // A percentage stays on one line with its sign.
        summary: text::summary(source).into_iter().map(|s| s.replace(" %", "\u{a0}%")).collect(),
        indicators: indicator_table(source.indicators.iter().filter(|i| i.scope == "all" || i.scope == "species")),
        groups: indicator_table(source.indicators.iter().filter(|i| i.scope == "species_group" || i.scope == "region")),
        populations: population_table(source),
        cases: case_table(source),
        chart: ChartData { key: NE_CHART.into(), caption: text::chart_caption(source, marks), marks },
        methods: text::methods(source),
        references: text::REFERENCES.iter().map(|r| r.to_string()).collect(),
        thresholds: text::thresholds_in_words(&source.thresholds),
        map: None,
    }
}

/// `3 (75.0 %)`, or the count alone without a share.
fn count_share(count: usize, share: Option<f64>) -> String {
    match share {
        Some(share) => format!("{count} ({})", format::percent(share).replace(' ', "\u{a0}")),
        None => count.to_string(),
    }
}

fn indicator_table<'a>(indicators: impl Iterator<Item = &'a Indicator>) -> TableData {
    let indicators: Vec<&Indicator> = indicators.collect();
    let thresholds: Vec<f64> =
        indicators.first().map(|i| i.counts.iter().map(|c| c.threshold).collect()).unwrap_or_default();
    let mut columns: Vec<(String, bool)> =
        vec![("Scope".into(), false), ("Populations".into(), true), ("With Ne (census-based)".into(), true)];
    for threshold in thresholds.iter().rev() {
        let t = format::short(*threshold, 6);
        columns.push((format!("Ne > {t}, point"), true));
        columns.push((format!("Ne > {t}, lower bound"), true));
    }
    columns.push(("H retained, mean".into(), true));
    let headings: Vec<(&str, bool)> = columns.iter().map(|(c, n)| (c.as_str(), *n)).collect();
    let mut table = TableData::new(&headings);
    for indicator in indicators {
        let scope = match indicator.scope.as_str() {
            "all" => "All populations".to_string(),
            "species_group" => format!("Group: {}", indicator.name),
            "region" => format!("Region: {}", indicator.name),
            _ => indicator.name.clone(),
        };
        let mut row = vec![
            scope,
            indicator.populations.to_string(),
            format!("{} ({})", indicator.with_ne, indicator.census_based),
        ];
        for count in indicator.counts.iter().rev() {
            row.push(count_share(count.above_point, count.share_point));
            row.push(count_share(count.above_lower, count.share_lower));
        }
        row.push(match (indicator.h_retained_mean, indicator.horizon_years) {
            (Some(mean), Some(horizon)) => format!("{} ({}\u{a0}y)", format::fixed(mean, 3), format::short(horizon, 4)),
            _ => format::UNDEFINED.into(),
        });
        table.push(row);
    }
    table
}

fn population_table(source: &PortfolioSource) -> TableData {
    let mut table = TableData::new(&[
        ("Species", false),
        ("Population", false),
        ("Year", true),
        ("Ne", true),
        ("95 % interval", true),
        ("Basis", false),
        ("Category", false),
        ("Census", true),
        ("H retained", true),
    ]);
    for p in &source.populations {
        let ne = p.ne.map_or_else(|| format::UNDEFINED.to_string(), format::effective_size);
        let interval = match p.basis {
            NeBasis::Genetic => format::interval(p.ne_low, p.ne_high, NumberStyle::EffectiveSize),
            _ => format::UNDEFINED.into(),
        };
        let basis = match p.basis {
            NeBasis::Genetic => p.ne_method.as_deref().map_or_else(|| "genetic".to_string(), format::ne_method_short),
            NeBasis::Census => format!("census × {}", format::short(source.ne_nc_ratio, 3)),
            NeBasis::None => "no status step".into(),
        };
        let retained = match (p.h_retained, p.horizon_years) {
            (Some(h), Some(years)) => format!("{} ({}\u{a0}y)", format::fixed(h, 3), format::short(years, 4)),
            _ => format::UNDEFINED.into(),
        };
        table.push(vec![
            p.species.clone(),
            p.population.clone(),
            p.year.map_or_else(|| format::UNDEFINED.to_string(), |y| y.to_string()),
            ne,
            interval,
            basis,
            p.category.clone(),
            p.census_size.map_or_else(|| format::UNDEFINED.to_string(), |n| format::number(n, NumberStyle::Whole)),
            retained,
        ]);
    }
    table
}

fn case_table(source: &PortfolioSource) -> TableData {
    let mut table = TableData::new(&[
        ("Species", false),
        ("Assessment", false),
        ("Date", false),
        ("Output folder", false),
        ("provenance.json SHA-256", false),
    ]);
    for case in &source.cases {
        table.push(vec![
            case.species.clone(),
            case.title.clone(),
            case.date.clone(),
            case.output.clone(),
            case.record_sha256.clone(),
        ]);
    }
    table
}
