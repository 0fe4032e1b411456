//! The science sections: data and validation, diversity, Hardy–Weinberg, differentiation,
//! effective size, trends and additional (plugin) analyses.

use std::collections::{BTreeMap, BTreeSet};

use serde::Serialize;

use popgauge_abi::{Finding, FindingLevel, LdChoice, NeSource, StepResult, estimated_groups, representative_ne};

use super::super::contract::{Results, Row, Rows, col, table, table_of, uses};
use super::super::figures::{Figure, IntervalPoint, Series};
use super::super::format::{self, NumberStyle};
use super::table::{HeatCell, HeatTable, TableData, generic, readable};
use super::{BODY_ROWS, Extras};
use crate::engine::StepRun;
use crate::results::{RESULTS_FILE, table_file};

/// What every section builder reads.
pub(crate) struct Context<'a> {
    /// The results.
    pub results: Results<'a>,
    /// Population names, sorted; a population's index is its colour and marker in charts.
    pub populations: &'a [String],
    /// Steps as they ran (parameters, seeds).
    pub runs: &'a [StepRun],
    /// Ne thresholds, ascending.
    pub thresholds: &'a [f64],
    /// Generation time in years.
    pub generation_time: Option<f64>,
}

impl Context<'_> {
    /// A population's chart style index.
    pub fn style_of(&self, population: &str) -> usize {
        self.populations.iter().position(|p| p == population).unwrap_or(self.populations.len())
    }

    /// A resolved parameter of the last step with this `uses`.
    pub fn param(&self, uses: &str, name: &str) -> Option<&serde_json::Value> {
        let step = self.results.step(uses)?;
        self.runs.iter().find(|r| r.id == step.id).and_then(|r| r.params.get(name))
    }
}

/// Data and validation.
#[derive(Debug, Clone, Serialize)]
pub struct DataSection {
    /// Genotype file.
    pub genotypes: String,
    /// Samples, loci and groups read.
    pub samples_read: usize,
    /// Loci read.
    pub loci_read: usize,
    /// Groups read.
    pub groups_read: usize,
    /// Id of the `validate` step, when in the recipe.
    pub validate_step: Option<String>,
    /// Samples and loci kept after all exclusions, display text.
    pub samples_kept: Option<String>,
    /// Loci kept.
    pub loci_kept: Option<String>,
    /// Samples per group: read and kept.
    pub groups: TableData,
    /// Every exclusion by any step (body part).
    pub exclusions: TableData,
    /// Appendix key of the rest of the exclusions.
    pub exclusions_more: Option<String>,
    /// Finding counts.
    pub errors: usize,
    /// Warnings.
    pub warnings: usize,
    /// Informational findings.
    pub infos: usize,
    /// Errors and warnings (body part).
    pub findings: TableData,
    /// Appendix key of all findings.
    pub findings_all: Option<String>,
}

/// Diversity and inbreeding.
#[derive(Debug, Clone, Serialize)]
pub struct DiversitySection {
    /// Step id.
    pub step: String,
    /// Per group.
    pub by_group: TableData,
    /// Appendix key of the per-locus table.
    pub by_locus: Option<String>,
}

/// Hardy–Weinberg tests.
#[derive(Debug, Clone, Serialize)]
pub struct HweSection {
    /// Step id.
    pub step: String,
    /// Per group: loci tested, significant after FDR, deficits, excesses.
    pub summary: TableData,
    /// Appendix key of the per-locus table.
    pub by_locus: Option<String>,
}

/// Differentiation.
#[derive(Debug, Clone, Serialize)]
pub struct DifferentiationSection {
    /// Step id.
    pub step: String,
    /// FST below the diagonal (shaded), permutation p above.
    pub matrix: Option<HeatTable>,
    /// Which year the matrix shows (`pooled` or a year).
    pub matrix_years: String,
    /// Global FST with its interval, display text.
    pub global: Option<String>,
    /// Isolation-by-distance test, as a table.
    pub ibd_test: Option<TableData>,
    /// What the Mantel test says and does not say, in a sentence.
    pub ibd_note: Option<String>,
    /// Appendix key of the full pairwise table.
    pub pairwise: Option<String>,
}

/// Effective population size by method.
#[derive(Debug, Clone, Serialize)]
pub struct NeSection {
    /// One block per Ne step.
    pub methods: Vec<NeMethod>,
    /// What the chart shows (its source), when drawn.
    pub chart_source: Option<String>,
    /// Every estimate of each population side by side.
    pub overview: Option<TableData>,
}

/// One Ne step's estimates.
#[derive(Debug, Clone, Serialize)]
pub struct NeMethod {
    /// Step id.
    pub step: String,
    /// `ne-ld`, `ne-temporal` or `ne-hetx`.
    pub uses: String,
    /// Estimates (body part).
    pub table: TableData,
    /// Appendix key of the rest.
    pub more: Option<String>,
    /// The sampling plan of a temporal step (`I` or `II`, Waples 1989).
    pub plan: Option<String>,
    /// The estimates the step found imprecise (Ne large relative to the sample), in a
    /// sentence printed beside its table.
    pub precision: Option<String>,
}

/// Trends.
#[derive(Debug, Clone, Serialize)]
pub struct TrendSection {
    /// Step id.
    pub step: String,
    /// Tests per population and metric.
    pub tests: TableData,
    /// Paired two-point comparisons, when the step made them.
    pub paired: Option<TableData>,
}

/// A step the document has no section for.
#[derive(Debug, Clone, Serialize)]
pub struct AdditionalStep {
    /// Step id.
    pub id: String,
    /// `uses` name.
    pub uses: String,
    /// Version.
    pub version: String,
    /// Its tables (body part), by name.
    pub tables: Vec<NamedTable>,
    /// Its findings, as text.
    pub findings: Vec<String>,
    /// Why it failed, when it did (its tables are then empty).
    pub error: Option<String>,
}

/// A named table with an appendix key for its rest.
#[derive(Debug, Clone, Serialize)]
pub struct NamedTable {
    /// Table name.
    pub name: String,
    /// Rows (body part).
    pub table: TableData,
    /// Appendix key of the rest.
    pub more: Option<String>,
}

// ---------------------------------------------------------------------------------------------
// Data and validation

pub(crate) fn data_section(ctx: &Context<'_>, extras: &mut Extras) -> DataSection {
    let doc = ctx.results.doc();
    let validate = ctx.results.step(uses::VALIDATE);
    let excluded_samples: BTreeSet<&str> =
        doc.steps.iter().flat_map(|s| s.exclusions.samples.iter().map(|e| e.name.as_str())).collect();
    let excluded_loci: BTreeSet<&str> =
        doc.steps.iter().flat_map(|s| s.exclusions.loci.iter().map(|e| e.name.as_str())).collect();
    let mut exclusions = exclusions_table(&doc.steps, validate);
    let exclusions_more = extras.overflow(&mut exclusions, "Exclusions (continued)".into(), RESULTS_FILE.into());
    // A reader's finding that a step repeats is counted and listed once, as on the command line.
    let findings: Vec<(String, &Finding)> = doc.distinct_findings();
    let count = |level| findings.iter().filter(|(_, f)| f.level == level).count();
    let serious: Vec<&(String, &Finding)> = findings.iter().filter(|(_, f)| f.level >= FindingLevel::Warning).collect();
    let mut body_findings = findings_table(serious.iter().copied());
    body_findings.rows.truncate(BODY_FINDINGS);
    body_findings.drop_empty_columns(&[]);
    let all_findings = findings_table(findings.iter());
    let findings_all = (all_findings.rows.len() > body_findings.rows.len())
        .then(|| extras.appendix("All findings".into(), all_findings, RESULTS_FILE.into()));
    DataSection {
        genotypes: doc.data.genotypes.clone(),
        samples_read: doc.data.samples,
        loci_read: doc.data.loci,
        groups_read: doc.data.groups.len(),
        validate_step: validate.map(|s| s.id.clone()),
        samples_kept: validate.map(|_| (doc.data.samples.saturating_sub(excluded_samples.len())).to_string()),
        loci_kept: validate.map(|_| (doc.data.loci.saturating_sub(excluded_loci.len())).to_string()),
        groups: groups_table(ctx),
        exclusions,
        exclusions_more,
        errors: count(FindingLevel::Error),
        warnings: count(FindingLevel::Warning),
        infos: count(FindingLevel::Info),
        findings: body_findings,
        findings_all,
    }
}

fn groups_table(ctx: &Context<'_>) -> TableData {
    if let Some(groups) = ctx.results.table(uses::VALIDATE, table::GROUPS) {
        let mut t = TableData::new(&[
            ("Population", false),
            ("Year", true),
            ("Samples read", true),
            ("Kept", true),
            ("Group", false),
        ]);
        for row in groups.iter() {
            t.push(vec![
                text(&row, col::POPULATION),
                whole(&row, col::YEAR),
                whole(&row, col::N_TOTAL),
                whole(&row, col::N_KEPT),
                text(&row, col::STATUS),
            ]);
        }
        return t;
    }
    let mut t = TableData::new(&[("Population", false), ("Year", true), ("Samples read", true)]);
    for group in &ctx.results.doc().data.groups {
        t.push(vec![group.population.clone(), group.year.to_string(), group.n.to_string()]);
    }
    t
}

fn exclusions_table(steps: &[StepResult], validate: Option<&StepResult>) -> TableData {
    let samples = validate.and_then(|v| table_of(v, table::SAMPLES));
    let group_of = |name: &str| -> String {
        samples
            .and_then(|t| t.iter().find(|r| r.text(col::SAMPLE) == Some(name)))
            .map(|r| {
                format!("{} {}", r.text(col::POPULATION).unwrap_or(""), r.label(col::YEAR).unwrap_or_default())
                    .trim()
                    .to_string()
            })
            .unwrap_or_default()
    };
    let mut t =
        TableData::new(&[("What", false), ("Name", false), ("Group", false), ("Step", false), ("Reason", false)]);
    for step in steps {
        for e in &step.exclusions.loci {
            t.push(vec!["locus".into(), e.name.clone(), format::UNDEFINED.into(), step.id.clone(), e.reason.clone()]);
        }
        for e in &step.exclusions.samples {
            let group = group_of(&e.name);
            t.push(vec![
                "sample".into(),
                e.name.clone(),
                if group.is_empty() { format::UNDEFINED.into() } else { group },
                step.id.clone(),
                e.reason.clone(),
            ]);
        }
    }
    t
}

fn findings_table<'f>(findings: impl Iterator<Item = &'f (String, &'f Finding)>) -> TableData {
    let mut t = TableData::new(&[("Level", false), ("Source", false), ("Where", false), ("Finding", false)]);
    for entry in grouped_findings(findings) {
        t.push(vec![entry.level.to_string(), entry.source.clone(), entry.places.join("; "), entry.message()]);
    }
    t
}

/// How many entries (errors and warnings) the findings table in the body shows.
const BODY_FINDINGS: usize = 15;

/// How many subjects or places one grouped finding names before "and N more".
const GROUP_LISTED: usize = 20;

/// One entry of the document's findings: a finding, or several of one source, level and code
/// that give the same reason for different rows.
#[derive(Debug)]
struct FindingEntry {
    level: FindingLevel,
    source: String,
    /// What the finding is about (`Brennmoor 2018–2024`), one per finding merged; empty when
    /// the message has no subject.
    subjects: Vec<String>,
    reason: String,
    /// The distinct places (`Where`) of the merged findings.
    places: Vec<String>,
}

impl FindingEntry {
    fn message(&self) -> String {
        if self.subjects.is_empty() {
            return self.reason.clone();
        }
        let shown = self.subjects.iter().take(GROUP_LISTED).cloned().collect::<Vec<_>>().join("; ");
        let more = self.subjects.len().saturating_sub(GROUP_LISTED);
        let subjects = if more > 0 { format!("{shown} and {more} more") } else { shown };
        format!("{subjects}: {}", self.reason)
    }
}

/// A message of the form "<subject>: <reason>", split there; a message without such a prefix
/// is all reason.
fn subject_and_reason(message: &str) -> (Option<&str>, &str) {
    /// A subject names rows or cells; anything longer is a sentence of its own.
    const LONGEST_SUBJECT: usize = 120;
    // The first ": " outside parentheses: a subject may carry details ("group A 2018 (Pcrit
    // 0.05: Ne = inf; …)").
    let mut depth = 0_i32;
    let mut split = None;
    for (i, c) in message.char_indices() {
        match c {
            '(' => depth += 1,
            ')' => depth -= 1,
            ':' if depth == 0 && message[i + 1..].starts_with(' ') => {
                split = Some(i);
                break;
            }
            _ => {}
        }
    }
    let Some(i) = split else { return (None, message) };
    let (subject, reason) = (&message[..i], &message[i + 2..]);
    let plain_subject = subject.split(" (").next().unwrap_or(subject);
    if plain_subject.chars().count() <= LONGEST_SUBJECT && !reason.trim().is_empty() {
        (Some(subject), reason)
    } else {
        (None, message)
    }
}

/// The findings as the document lists them: findings of one source, level and code whose
/// messages differ only in their subject ("Brennmoor: ne_fs is \"inf\" because …", one per
/// population) become one entry naming every subject, in the order of the first. The results
/// file keeps one finding per row.
fn grouped_findings<'f>(findings: impl Iterator<Item = &'f (String, &'f Finding)>) -> Vec<FindingEntry> {
    let mut entries: Vec<FindingEntry> = Vec::new();
    // (source, level, code, reason) of each entry that has a subject → its index: one lookup
    // per finding, so a SNP panel's thousands of findings stay linear.
    let mut index: BTreeMap<(String, FindingLevel, String, String), usize> = BTreeMap::new();
    for (source, finding) in findings {
        let (subject, reason) = subject_and_reason(&finding.message);
        let place = where_text(&finding.location);
        let key = subject.map(|_| (source.clone(), finding.level, finding.code.clone(), reason.to_string()));
        match key.as_ref().and_then(|k| index.get(k)) {
            Some(&at) => {
                let entry = &mut entries[at];
                entry.subjects.extend(subject.map(str::to_string));
                if !entry.places.contains(&place) && place != format::UNDEFINED {
                    entry.places.retain(|p| p != format::UNDEFINED);
                    if entry.places.len() < GROUP_LISTED {
                        entry.places.push(place);
                    }
                }
            }
            None => {
                if let Some(key) = key {
                    index.insert(key, entries.len());
                }
                entries.push(FindingEntry {
                    level: finding.level,
                    source: source.clone(),
                    subjects: subject.map(str::to_string).into_iter().collect(),
                    reason: reason.to_string(),
                    places: vec![place],
                });
            }
        }
    }
    entries
}

fn where_text(w: &popgauge_abi::Where) -> String {
    let mut parts = Vec::new();
    if let Some(file) = &w.file {
        parts.push(match w.line {
            Some(line) => format!("{file}:{line}"),
            None => file.clone(),
        });
    }
    if let Some(c) = &w.column {
        parts.push(format!("column {c}"));
    }
    match (&w.population, w.year) {
        (Some(p), Some(y)) => parts.push(format!("{p} {y}")),
        (Some(p), None) => parts.push(p.clone()),
        (None, Some(y)) => parts.push(y.to_string()),
        (None, None) => {}
    }
    if let Some(l) = &w.locus {
        parts.push(format!("locus {l}"));
    }
    if let Some(s) = &w.sample {
        parts.push(format!("sample {s}"));
    }
    if parts.is_empty() { format::UNDEFINED.into() } else { parts.join(", ") }
}

// ---------------------------------------------------------------------------------------------
// Diversity, Hardy–Weinberg

pub(crate) fn diversity_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<DiversitySection> {
    let step = ctx.results.step(uses::DIVERSITY)?;
    let by_group = table_of(step, table::BY_GROUP)?;
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("n", true),
        ("Ho", true),
        ("He", true),
        ("F", true),
        ("FIS (95 % CI)", true),
        ("Ar", true),
        ("PAr", true),
        ("Alleles", true),
    ]);
    for row in by_group.iter() {
        let fis = match row.num(col::FIS) {
            None => format::UNDEFINED.to_string(),
            Some(fis) => match (row.num(col::FIS_LOW), row.num(col::FIS_HIGH)) {
                (None, None) => format::fixed(fis, 3),
                (low, high) => {
                    format!("{} ({})", format::fixed(fis, 3), format::interval(low, high, NumberStyle::Fixed(3)))
                }
            },
        };
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            whole(&row, col::N),
            fixed3(&row, col::HO),
            fixed3(&row, col::HE),
            fixed3(&row, col::F),
            fis,
            fixed3(&row, col::AR),
            fixed3(&row, col::PAR),
            format::maybe(row.num(col::ALLELES_MEAN), NumberStyle::Fixed(2)),
        ]);
    }
    t.drop_empty_columns(&["Population", "Year", "Ho", "He", "F"]);
    let by_locus = table_of(step, table::BY_LOCUS).filter(|t| !t.is_empty()).map(|t| {
        let mut data = generic(&t);
        data.drop_empty_columns(&[]);
        let title = format!("Diversity per locus and group (step \"{}\")", step.id);
        extras.appendix(title, data, table_file(&step.id, table::BY_LOCUS))
    });
    he_over_years(ctx, &by_group, extras);
    Some(DiversitySection { step: step.id.clone(), by_group: t, by_locus })
}

/// He over years per population, with the trend step's least-squares slope when present.
fn he_over_years(ctx: &Context<'_>, by_group: &Rows<'_>, extras: &mut Extras) {
    let slopes = trend_slopes(ctx, "he");
    let series = series_by_population(
        ctx,
        by_group
            .iter()
            .filter_map(|r| Some((r.text(col::POPULATION)?.to_string(), r.num(col::YEAR)?, r.num(col::HE)?))),
        &slopes,
    );
    if series.iter().any(|s| s.points.len() >= 2) {
        let alt = format!(
            "Expected heterozygosity He per population and sampling year{}.",
            if slopes.is_empty() { "" } else { ", with the least-squares trend of each population as a dashed line" }
        );
        extras.figure(
            "he-years",
            Figure::Lines {
                series,
                x_label: "Sampling year".into(),
                y_label: "He (unbiased)".into(),
                log_y: false,
                y_from_zero: false,
            },
            alt,
        );
    }
}

/// One series per population from (population, x, y) triples, points sorted by x.
fn series_by_population(
    ctx: &Context<'_>,
    values: impl Iterator<Item = (String, f64, f64)>,
    slopes: &BTreeMap<String, f64>,
) -> Vec<Series> {
    let mut by_population: BTreeMap<String, Vec<(f64, f64)>> = BTreeMap::new();
    for (population, x, y) in values {
        by_population.entry(population).or_default().push((x, y));
    }
    by_population
        .into_iter()
        .map(|(name, mut points)| {
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            Series {
                style: ctx.style_of(&name),
                slope: slopes.get(&name).copied(),
                name,
                points,
                intervals: Vec::new(),
            }
        })
        .collect()
}

/// Least-squares slopes per population for one trend metric, in the metric's own units per
/// year (a slope tested on another scale, such as 1/Ne, is not drawn).
fn trend_slopes(ctx: &Context<'_>, metric: &str) -> BTreeMap<String, f64> {
    ctx.results
        .table(uses::TREND, table::TESTS)
        .map(|t| {
            t.iter()
                .filter(|r| r.text(col::METRIC) == Some(metric))
                .filter(|r| r.text("scale").is_none_or(|scale| scale == "value"))
                .filter_map(|r| {
                    Some((r.text(col::POPULATION)?.to_string(), r.num(col::OLS_SLOPE).filter(|s| s.is_finite())?))
                })
                .collect()
        })
        .unwrap_or_default()
}

pub(crate) fn hwe_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<HweSection> {
    let step = ctx.results.step(uses::HWE)?;
    let by_locus = table_of(step, table::BY_LOCUS)?;
    #[derive(Default)]
    struct Tally {
        tested: usize,
        significant: usize,
        deficit: usize,
        excess: usize,
    }
    let mut tallies: BTreeMap<(String, String), Tally> = BTreeMap::new();
    for row in by_locus.iter() {
        let key = (text(&row, col::POPULATION), whole(&row, col::YEAR));
        let tally = tallies.entry(key).or_default();
        if row.num(col::P_VALUE).is_some() {
            tally.tested += 1;
        }
        if row.num(col::Q_VALUE).is_some_and(|q| q < 0.05) {
            tally.significant += 1;
            match row.text(col::DIRECTION) {
                Some(d) if d.contains("deficit") => tally.deficit += 1,
                Some(d) if d.contains("excess") => tally.excess += 1,
                _ => {}
            }
        }
    }
    let mut summary = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("Loci tested", true),
        ("q < 0.05", true),
        ("Deficit", true),
        ("Excess", true),
    ]);
    for ((population, year), t) in tallies {
        summary.push(vec![
            population,
            year,
            t.tested.to_string(),
            t.significant.to_string(),
            t.deficit.to_string(),
            t.excess.to_string(),
        ]);
    }
    let key = (!by_locus.is_empty()).then(|| {
        let title = format!("Hardy–Weinberg tests per locus and group (step \"{}\")", step.id);
        extras.appendix(title, generic(&by_locus), table_file(&step.id, table::BY_LOCUS))
    });
    Some(HweSection { step: step.id.clone(), summary, by_locus: key })
}

// ---------------------------------------------------------------------------------------------
// Differentiation

pub(crate) fn differentiation_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<DifferentiationSection> {
    let step = ctx.results.step(uses::DIFFERENTIATION)?;
    let pairwise = table_of(step, table::PAIRWISE);
    let (matrix, matrix_years) = match &pairwise {
        Some(p) => fst_matrix(ctx, p),
        None => (None, String::new()),
    };
    let global = table_of(step, table::GLOBAL).and_then(|g| {
        let row = g.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| g.iter().next())?;
        let fst = row.num(col::FST)?;
        Some(match (row.num(col::FST_LOW), row.num(col::FST_HIGH)) {
            (None, None) => format::fixed(fst, 3),
            (low, high) => {
                format!("{} (95 % CI {})", format::fixed(fst, 3), format::interval(low, high, NumberStyle::Fixed(3)))
            }
        })
    });
    if let Some(ibd) = table_of(step, table::IBD) {
        isolation_by_distance(&ibd, table_of(step, table::IBD_TEST), extras);
    }
    let ibd_test = table_of(step, table::IBD_TEST).filter(|t| !t.is_empty()).map(|t| readable(&t));
    let pairwise_key = pairwise.filter(|p| !p.is_empty()).map(|p| {
        let mut data = generic(&p);
        data.drop_empty_columns(&[]);
        extras.appendix(
            format!("Pairwise differentiation (step \"{}\")", step.id),
            data,
            table_file(&step.id, table::PAIRWISE),
        )
    });
    Some(DifferentiationSection {
        step: step.id.clone(),
        matrix,
        matrix_years,
        global,
        ibd_note: table_of(step, table::IBD_TEST).and_then(|t| mantel_note(&t)),
        ibd_test,
        pairwise: pairwise_key,
    })
}

/// The FST matrix of the pooled rows (year `null`), or of the latest year when every row has
/// one; FST below the diagonal, permutation p above.
fn fst_matrix(ctx: &Context<'_>, pairwise: &Rows<'_>) -> (Option<HeatTable>, String) {
    let pooled: Vec<Row<'_>> = pairwise.iter().filter(|r| r.num(col::YEAR).is_none()).collect();
    let (rows, years) = if pooled.is_empty() {
        let latest = pairwise.iter().filter_map(|r| r.int(col::YEAR)).max();
        (
            pairwise.iter().filter(|r| r.int(col::YEAR) == latest).collect::<Vec<_>>(),
            latest.map_or_else(String::new, |y| y.to_string()),
        )
    } else {
        (pooled, "pooled".to_string())
    };
    let names: Vec<String> = ctx
        .populations
        .iter()
        .filter(|p| {
            rows.iter().any(|r| r.text(col::POP_A) == Some(p.as_str()) || r.text(col::POP_B) == Some(p.as_str()))
        })
        .cloned()
        .collect();
    if names.len() < 2 {
        return (None, years);
    }
    let index = |name: Option<&str>| name.and_then(|n| names.iter().position(|p| p == n));
    let mut fst = vec![vec![None; names.len()]; names.len()];
    let mut p = vec![vec![None; names.len()]; names.len()];
    for row in &rows {
        if let (Some(a), Some(b)) = (index(row.text(col::POP_A)), index(row.text(col::POP_B))) {
            let (hi, lo) = if a > b { (a, b) } else { (b, a) };
            fst[hi][lo] = row.num(col::FST);
            p[lo][hi] = row.num(col::FST_P);
        }
    }
    let max = fst.iter().flatten().flatten().copied().filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    let cells = (0..names.len())
        .map(|i| {
            (0..names.len())
                .map(|j| match i.cmp(&j) {
                    std::cmp::Ordering::Equal => HeatCell { text: String::new(), heat: None },
                    std::cmp::Ordering::Greater => HeatCell {
                        text: format::maybe(fst[i][j], NumberStyle::Fixed(3)),
                        heat: fst[i][j]
                            .filter(|v| v.is_finite())
                            .map(|v| if max > 0.0 { (v / max).clamp(0.0, 1.0) } else { 0.0 }),
                    },
                    std::cmp::Ordering::Less => {
                        HeatCell { text: format::maybe(p[i][j], NumberStyle::PValue), heat: None }
                    }
                })
                .collect()
        })
        .collect();
    (Some(HeatTable { labels: names, cells, max: format::fixed(max, 3) }), years)
}

/// The Mantel test of the pooled row in words: its p-value, how it was obtained, the smallest
/// p the number of populations allows, and whether the fitted line is evidence or description.
fn mantel_note(test: &Rows<'_>) -> Option<String> {
    let row = test.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| test.iter().next())?;
    let p = row.num("mantel_p")?;
    let orders = row.int("permutations");
    let how = match (row.text("mantel_method"), orders) {
        (Some("exact"), Some(n)) => format!("from all {n} orders of the populations (exact)"),
        (_, Some(n)) => format!("from {n} random orders of the populations"),
        _ => String::new(),
    };
    let floor = row
        .num("mantel_p_min")
        .map(|m| format!("; the smallest p these populations allow is {}", format::p_value(m)))
        .unwrap_or_default();
    let verdict = if p < 0.05 {
        "Genetic differentiation increases with distance at the 5 % level; the line is the least-squares fit."
    } else {
        "The relation is not significant at the 5 % level: the fitted line describes the points and is no evidence of isolation by distance."
    };
    Some(format!("Mantel test {} {how}{floor}. {verdict}", format::p_phrase(p)).replace("  ", " "))
}

/// The isolation-by-distance scatter: the first column naming a distance against the first
/// naming FST, with the test's slope when it gives one.
fn isolation_by_distance(ibd: &Rows<'_>, test: Option<Rows<'_>>, extras: &mut Extras) {
    let columns = &ibd.table().columns;
    let x = columns.iter().find(|c| c.contains("dist"));
    let y = columns
        .iter()
        .find(|c| c.contains("fst") && c.contains("lin"))
        .or_else(|| columns.iter().find(|c| c.contains("fst")));
    let (Some(x), Some(y)) = (x, y) else { return };
    let pooled: Vec<Row<'_>> = ibd.iter().filter(|r| r.num(col::YEAR).is_none()).collect();
    let rows = if pooled.is_empty() { ibd.iter().collect() } else { pooled };
    let labelled: Vec<(f64, f64, String)> = rows
        .iter()
        .filter_map(|r| {
            let pair =
                format!("{}–{}", r.label(col::POP_A).unwrap_or_default(), r.label(col::POP_B).unwrap_or_default());
            Some((r.num(x)?, r.num(y)?, pair))
        })
        .filter(|p| p.0.is_finite() && p.0 > 0.0 && p.1.is_finite())
        .collect();
    let left_out = rows.len() - labelled.len();
    if labelled.len() < 3 {
        return;
    }
    let points: Vec<(f64, f64)> = labelled.iter().map(|p| (p.0, p.1)).collect();
    let labels: Vec<String> = labelled.into_iter().map(|p| p.2).collect();
    // The test regresses on ln(distance) (Rousset 1997), so the chart's distance axis is
    // logarithmic and the fitted line straight on it.
    let test_row = test.and_then(|t| t.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| t.iter().next()));
    let fit = test_row.and_then(|r| Some((r.num("intercept")?, r.num("slope")?)));
    let x_label =
        if x.contains("km") { "Geographic distance (km, logarithmic axis)".to_string() } else { x.replace('_', " ") };
    let y_label = if y.contains("lin") { "FST/(1 − FST)".to_string() } else { y.replace('_', " ") };
    let alt = format!(
        "Isolation by distance: {y_label} against {x_label} for {} population pairs{}.",
        points.len(),
        if left_out > 0 {
            format!(
                " ({left_out} pair(s) without a positive distance or a finite value cannot be placed and are not drawn)"
            )
        } else {
            String::new()
        }
    );
    extras.figure("ibd", Figure::Scatter { points, labels, fit, log_x: x.contains("dist"), x_label, y_label }, alt);
}

// ---------------------------------------------------------------------------------------------
// Effective population size

/// Findings of the Ne steps that mark an estimate as imprecise (Ne large relative to S), and
/// what the document says of the estimates they name.
const PRECISION_FINDINGS: [(&str, &str); 2] = [
    (
        "ld-precision-low",
        "are more than 5 × S or infinite, and the upper bound of their recommended 95 % interval is infinite: \
         there the drift signal is small beside the linkage disequilibrium that sampling S individuals produces, \
         and the method loses precision (Waples & Do 2010). Read their intervals, whose lower bounds are what \
         the data support; more individuals narrow them.",
    ),
    (
        "temporal-precision-low",
        "exceed the generations between the samples times their harmonic-mean sample size, or are infinite, \
         with no finite upper bound: the change of allele frequencies by drift is small beside sampling noise, \
         and such estimates are often too large. Read their intervals with caution.",
    ),
];

/// "The estimates of A 2018, B 2018–2021 … are …": the rows an Ne step flagged as imprecise,
/// named by the subject of each finding (before its details in parentheses).
fn precision_note(step: &StepResult) -> Option<String> {
    let sentences: Vec<String> = PRECISION_FINDINGS
        .iter()
        .filter_map(|(code, says)| {
            let rows: Vec<String> = step
                .findings
                .iter()
                .filter(|f| f.code == *code)
                .filter_map(|f| subject_and_reason(&f.message).0)
                .map(|subject| {
                    let name = subject.split(" (").next().unwrap_or(subject);
                    name.strip_prefix("group ").unwrap_or(name).to_string()
                })
                .collect();
            (!rows.is_empty()).then(|| format!("The estimates of {} {says}", rows.join(", ")))
        })
        .collect();
    (!sentences.is_empty()).then(|| sentences.join(" "))
}

pub(crate) fn ne_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<NeSection> {
    let mut methods = Vec::new();
    for uses_name in [uses::NE_LD, uses::NE_TEMPORAL, uses::NE_HETX] {
        for step in ctx.results.steps(uses_name) {
            let Some(estimates) = table_of(step, table::ESTIMATES) else { continue };
            let (mut t, more) = match uses_name {
                // The body shows the rule for rare alleles that fits each sample's size; the
                // estimates at every rule go to the appendix.
                uses::NE_LD => {
                    let all = ld_table(&estimates, |_| true);
                    let chosen = ld_table(&estimates, |row| is_representative_ld(step, row));
                    let title = format!("LD estimates of step \"{}\" at every rule for rare alleles", step.id);
                    let every = extras.appendix(title, all, table_file(&step.id, table::ESTIMATES));
                    (chosen, Some(every))
                }
                uses::NE_TEMPORAL => (temporal_table(&estimates), None),
                _ => (hetx_table(&estimates), None),
            };
            let more = more.or_else(|| {
                let title = format!("Ne estimates of step \"{}\" (continued)", step.id);
                extras.overflow(&mut t, title, table_file(&step.id, table::ESTIMATES))
            });
            let plan = ctx
                .runs
                .iter()
                .find(|r| r.id == step.id)
                .and_then(|r| r.params.get("plan"))
                .and_then(serde_json::Value::as_str)
                .map(str::to_string);
            let precision = precision_note(step);
            methods.push(NeMethod { step: step.id.clone(), uses: step.uses.clone(), table: t, more, plan, precision });
        }
    }
    let chart_source = ne_chart(ctx, extras);
    ne_over_years(ctx, extras);
    if methods.is_empty() && chart_source.is_none() {
        return None;
    }
    Some(NeSection { methods, chart_source, overview: super::ne_overview::ne_overview(ctx) })
}

/// Whether an `ne-ld` row holds the rule for rare alleles that the SDK's sample-size rule picks
/// for its population and year (the estimate `status` and `trend` use).
fn is_representative_ld(step: &StepResult, row: &Row<'_>) -> bool {
    let (Some(population), Some(year)) = (row.text(col::POPULATION), row.int(col::YEAR)) else { return false };
    let Ok(year) = i32::try_from(year) else { return false };
    let by_size = [NeSource::Ld(LdChoice::BySampleSize)];
    let chosen = representative_ne(std::slice::from_ref(step), population, year, &by_size);
    match (chosen.and_then(|c| c.criterion), row.cell(col::PCRIT)) {
        (Some(criterion), Some(cell)) => criterion.matches(cell),
        _ => false,
    }
}

fn ld_table(rows: &Rows<'_>, keep: impl Fn(&Row<'_>) -> bool) -> TableData {
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("Pcrit", true),
        ("S", true),
        ("Ne", true),
        ("95 % CI (resampling)", true),
        ("95 % CI (jackknife)", true),
        ("95 % CI (parametric)", true),
    ]);
    for row in rows.iter().filter(|r| keep(r)) {
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            // A criterion may be text (`singletons`: only alleles seen once are left out).
            row.cell(col::PCRIT)
                .map_or_else(|| format::UNDEFINED.to_string(), |c| format::cell(c, NumberStyle::Short(3))),
            format::maybe(row.num(col::S), NumberStyle::Significant(3)),
            ne(&row, col::NE),
            ne_interval(&row, col::NE_RESAMPLE_LOW, col::NE_RESAMPLE_HIGH),
            ne_interval(&row, col::NE_JACK_LOW, col::NE_JACK_HIGH),
            ne_interval(&row, col::NE_PARAM_LOW, col::NE_PARAM_HIGH),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ne"]);
    t
}

fn temporal_table(rows: &Rows<'_>) -> TableData {
    let mut t = TableData::new(&[
        ("Population", false),
        ("Interval", false),
        ("Generations", true),
        ("Ne (Fs)", true),
        ("95 % CI", true),
        ("Ne (Fc)", true),
        ("Ne (Fk)", true),
    ]);
    for row in rows.iter() {
        t.push(vec![
            text(&row, col::POPULATION),
            format!("{}–{}", whole(&row, col::YEAR_START), whole(&row, col::YEAR_END)),
            format::maybe(row.num(col::GENERATIONS), NumberStyle::Short(3)),
            ne(&row, col::NE_FS),
            ne_interval(&row, col::NE_LOW, col::NE_HIGH),
            ne(&row, "ne_fc"),
            ne(&row, "ne_fk"),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ne (Fs)"]);
    t
}

fn hetx_table(rows: &Rows<'_>) -> TableData {
    let mut t = TableData::new(&[("Population", false), ("Year", true), ("D", true), ("Ne", true)]);
    for row in rows.iter() {
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            format::maybe(row.num(col::D), NumberStyle::Fixed(3)),
            ne(&row, col::NE),
        ]);
    }
    t
}

/// Ne per population with its interval, against the thresholds: the status step's chosen
/// estimate when present, otherwise the estimate that represents the population's latest
/// estimated year by the SDK's default preference (the rule `status` applies).
fn ne_chart(ctx: &Context<'_>, extras: &mut Extras) -> Option<String> {
    let (points, source) = status_points(ctx).or_else(|| representative_points(ctx))?;
    if points.is_empty() {
        return None;
    }
    let alt = format!(
        "Effective population size per population ({source}) with 95 % confidence intervals on a logarithmic axis; dashed lines mark the thresholds Ne = {}.",
        ctx.thresholds.iter().map(|t| format::effective_size(*t)).collect::<Vec<_>>().join(" and ")
    );
    extras.figure(
        "ne",
        Figure::IntervalsAgainstThresholds {
            points,
            thresholds: ctx.thresholds.to_vec(),
            y_label: "Effective population size Ne".into(),
        },
        alt,
    );
    Some(source)
}

type Points = (Vec<IntervalPoint>, String);

fn status_points(ctx: &Context<'_>) -> Option<Points> {
    let step = ctx.results.step(uses::STATUS)?;
    let rows = table_of(step, table::POPULATIONS)?;
    let latest = latest_rows(&rows);
    let points = latest
        .iter()
        .filter_map(|r| {
            let population = r.text(col::POPULATION)?;
            Some(IntervalPoint {
                label: population.into(),
                style: ctx.style_of(population),
                value: r.num(col::NE)?,
                low: r.num(col::NE_LOW),
                high: r.num(col::NE_HIGH),
            })
        })
        .collect();
    Some((points, format!("the estimate chosen by step \"{}\"", step.id)))
}

/// Without a status step: per population, the latest year any Ne step estimated, and the
/// estimate that represents it by the default preference.
fn representative_points(ctx: &Context<'_>) -> Option<Points> {
    let steps = &ctx.results.doc().steps;
    let preference = NeSource::default_preference();
    let groups: Vec<(String, i32)> = [uses::NE_LD, uses::NE_TEMPORAL, uses::NE_HETX]
        .iter()
        .flat_map(|u| ctx.results.steps(u))
        .flat_map(estimated_groups)
        .collect();
    if groups.is_empty() {
        return None;
    }
    let points = ctx
        .populations
        .iter()
        .filter_map(|population| {
            let year = groups.iter().filter(|(p, _)| p == population).map(|(_, y)| *y).max()?;
            let chosen = representative_ne(steps, population, year, &preference)?;
            Some(IntervalPoint {
                label: format!("{population} {year}"),
                style: ctx.style_of(population),
                value: chosen.ne,
                low: chosen.low,
                high: chosen.high,
            })
        })
        .collect();
    Some((points, "the estimate of each population's latest sample, by the default choice of source".to_string()))
}

/// LD Ne over sampling years per population (log axis), when there are at least two years;
/// each year's value is the LD estimate that represents it (its criterion follows that
/// sample's size, as in `status` and `trend`).
fn ne_over_years(ctx: &Context<'_>, extras: &mut Extras) {
    let Some(step) = ctx.results.step(uses::NE_LD) else { return };
    let ld_only = [NeSource::Ld(LdChoice::BySampleSize)];
    let slopes = trend_slopes(ctx, &format!("ne:{}", step.id));
    let chosen: Vec<(String, f64, popgauge_abi::RepresentativeNe)> = estimated_groups(step)
        .into_iter()
        .filter_map(|(population, year)| {
            let chosen = representative_ne(std::slice::from_ref(step), &population, year, &ld_only)?;
            (!chosen.ne.is_nan()).then_some((population, f64::from(year), chosen))
        })
        .collect();
    let values = chosen.iter().map(|(p, year, c)| (p.clone(), *year, c.ne));
    let mut series = series_by_population(ctx, values, &slopes);
    for s in &mut series {
        s.intervals = chosen
            .iter()
            .filter(|(p, _, _)| *p == s.name)
            .filter_map(|(_, year, c)| Some((*year, c.low?, c.high?)))
            .collect();
    }
    if series.iter().any(|s| s.points.len() >= 2) {
        let alt = format!(
            "LD estimates of Ne per population and sampling year (step \"{}\") with their 95 % intervals on a logarithmic axis; an infinite estimate is marked ∞ at the top edge, and an interval without a finite upper bound ends in an arrow there.",
            step.id
        );
        extras.figure(
            "ne-years",
            Figure::Lines {
                series,
                x_label: "Sampling year".into(),
                y_label: "Ne (LD)".into(),
                log_y: true,
                y_from_zero: false,
            },
            alt,
        );
    }
}

/// The row of each population with the latest year (or the only row when there is no year).
pub(crate) fn latest_rows<'a>(rows: &Rows<'a>) -> Vec<Row<'a>> {
    let mut latest: BTreeMap<String, Row<'a>> = BTreeMap::new();
    for row in rows.iter() {
        let Some(population) = row.text(col::POPULATION) else { continue };
        let newer = latest.get(population).is_none_or(|old| row.int(col::YEAR) >= old.int(col::YEAR));
        if newer {
            latest.insert(population.to_string(), row);
        }
    }
    latest.into_values().collect()
}

// ---------------------------------------------------------------------------------------------
// Trends

pub(crate) fn trend_section(ctx: &Context<'_>, _extras: &mut Extras) -> Option<TrendSection> {
    let step = ctx.results.step(uses::TREND)?;
    let mut tests = TableData::new(&[
        ("Population", false),
        ("Metric", false),
        ("Points", true),
        ("Kendall τ", true),
        ("p (MK)", true),
        ("Sen slope /yr", true),
        ("LS slope /yr (95 % CI)", true),
    ]);
    if let Some(rows) = table_of(step, table::TESTS) {
        for row in rows.iter() {
            let ls = match row.num(col::OLS_SLOPE) {
                None => format::UNDEFINED.to_string(),
                Some(s) => format!(
                    "{} ({})",
                    format::significant(s, 3),
                    format::interval(row.num(col::OLS_LOW), row.num(col::OLS_HIGH), NumberStyle::Significant(3))
                ),
            };
            tests.push(vec![
                text(&row, col::POPULATION),
                // A metric tested on the inverse scale (Ne as 1/Ne) is labelled so, since its
                // slopes are in those units.
                match row.text("scale") {
                    Some(scale) if scale != "value" => {
                        format!("1/{}", metric_label(row.text(col::METRIC).unwrap_or("")))
                    }
                    _ => metric_label(row.text(col::METRIC).unwrap_or("")),
                },
                whole(&row, col::POINTS),
                format::maybe(row.num(col::MK_TAU), NumberStyle::Fixed(2)),
                format::maybe(row.num(col::MK_P), NumberStyle::PValue),
                format::maybe(row.num(col::SEN_SLOPE), NumberStyle::Significant(3)),
                ls,
            ]);
        }
    }
    tests.drop_empty_columns(&["Population", "Metric", "Points"]);
    let paired = table_of(step, table::PAIRED).filter(|t| !t.is_empty()).map(|t| readable(&t));
    Some(TrendSection { step: step.id.clone(), tests, paired })
}

/// `he` → `He`, `ne:ld` → `Ne (ld)`.
pub(crate) fn metric_label(metric: &str) -> String {
    match metric {
        "he" => "He".into(),
        "ho" => "Ho".into(),
        "ar" => "Ar".into(),
        "f" => "F".into(),
        other => match other.strip_prefix("ne:") {
            Some(step) => format!("Ne ({step})"),
            None => other.to_string(),
        },
    }
}

// ---------------------------------------------------------------------------------------------
// Additional analyses

pub(crate) fn additional_steps(ctx: &Context<'_>, extras: &mut Extras) -> Vec<AdditionalStep> {
    ctx.results
        .doc()
        .steps
        .iter()
        .filter(|s| !uses::KNOWN.contains(&s.uses.as_str()))
        .map(|step| AdditionalStep {
            id: step.id.clone(),
            uses: step.uses.clone(),
            version: step.version.clone(),
            tables: step
                .tables
                .keys()
                .filter_map(|name| {
                    let rows = table_of(step, name)?;
                    let mut table = generic(&rows);
                    let keep = BODY_ROWS.min(20);
                    let more = table.split_off(keep).map(|rest| {
                        let title = format!("Table \"{name}\" of step \"{}\" (continued)", step.id);
                        extras.appendix(title, rest, table_file(&step.id, name))
                    });
                    Some(NamedTable { name: name.clone(), table, more })
                })
                .collect(),
            findings: step.findings.iter().map(|f| format!("{}: {}", f.level, f.message)).collect(),
            error: step.error.clone(),
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// Cell helpers

pub(crate) fn text(row: &Row<'_>, column: &str) -> String {
    row.label(column).unwrap_or_else(|| format::UNDEFINED.into())
}

pub(crate) fn whole(row: &Row<'_>, column: &str) -> String {
    row.cell(column).map_or_else(|| format::UNDEFINED.into(), |c| format::cell(c, NumberStyle::Whole))
}

pub(crate) fn fixed3(row: &Row<'_>, column: &str) -> String {
    format::maybe(row.num(column), NumberStyle::Fixed(3))
}

pub(crate) fn ne(row: &Row<'_>, column: &str) -> String {
    format::maybe(row.num(column), NumberStyle::EffectiveSize)
}

pub(crate) fn ne_interval(row: &Row<'_>, low: &str, high: &str) -> String {
    format::interval(row.num(low), row.num(high), NumberStyle::EffectiveSize)
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{Finding, Where};

    use super::{findings_table, grouped_findings};

    fn temporal_inf(population: &str) -> (String, Finding) {
        (
            "ne-temporal".to_string(),
            Finding::warning(
                "infinite-estimate",
                format!("{population}: ne_fs is \"inf\" because the change does not exceed sampling noise"),
                Where { population: Some(population.into()), ..Where::default() },
            ),
        )
    }

    #[test]
    fn findings_with_one_reason_become_one_entry_naming_every_row() {
        let findings: Vec<(String, Finding)> =
            ["Brennmoor 2018–2021", "Lake Oster 2018–2024", "Tarrow Glen 2021–2024"].map(temporal_inf).into();
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let table = findings_table(refs.iter());
        assert_eq!(table.rows.len(), 1, "{:?}", table.rows);
        assert_eq!(
            table.rows[0][3],
            "Brennmoor 2018–2021; Lake Oster 2018–2024; Tarrow Glen 2021–2024: ne_fs is \"inf\" because the change \
             does not exceed sampling noise"
        );
        assert_eq!(table.rows[0][2], "Brennmoor 2018–2021; Lake Oster 2018–2024; Tarrow Glen 2021–2024");
    }

    #[test]
    fn findings_with_other_reasons_codes_or_sources_stay_apart() {
        let mut findings: Vec<(String, Finding)> = vec![temporal_inf("A"), temporal_inf("B")];
        findings.push(("ne-ld".into(), findings[0].1.clone()));
        findings
            .push(("ne-temporal".into(), Finding::warning("infinite-estimate", "C: another reason", Where::default())));
        findings
            .push(("ne-temporal".into(), Finding::info("infinite-estimate", "D: another reason", Where::default())));
        findings.push(("ne-temporal".into(), Finding::warning("no-estimate", "E: another reason", Where::default())));
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let entries = grouped_findings(refs.iter());
        let subjects: Vec<Vec<String>> = entries.iter().map(|e| e.subjects.clone()).collect();
        assert_eq!(subjects, [vec!["A", "B"], vec!["A"], vec!["C"], vec!["D"], vec!["E"]]);
    }

    #[test]
    fn a_subject_with_details_in_parentheses_is_split_after_them() {
        let flagged = |group: &str| {
            Finding::warning(
                "ld-precision-low",
                format!("group {group} (Pcrit 0.05: Ne = inf; Pcrit 0.02: Ne = 456): the method loses precision"),
                Where::default(),
            )
        };
        let findings = [("ld".to_string(), flagged("A 2018")), ("ld".to_string(), flagged("B 2024"))];
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let entries = grouped_findings(refs.iter());
        assert_eq!(entries.len(), 1);
        assert_eq!(entries[0].reason, "the method loses precision");
        assert_eq!(entries[0].subjects.len(), 2);
    }

    #[test]
    fn a_sentence_without_a_subject_is_never_merged() {
        let sentence =
            |code: &str| Finding::info(code, "Estimates carry uncertainty. Read the intervals.", Where::default());
        let findings = [
            ("status".to_string(), sentence("decision-caution")),
            ("status".to_string(), sentence("decision-caution")),
        ];
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        assert_eq!(grouped_findings(refs.iter()).len(), 2);
    }
}
