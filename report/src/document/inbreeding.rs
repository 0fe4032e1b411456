//! Inbreeding of individuals (`inbreeding`): per group the spread of each animal's inbreeding
//! and heterozygosity, runs of homozygosity by length class, and identity disequilibrium g2,
//! with a chart of each animal's inbreeding per group.

use std::collections::BTreeMap;

use serde::Serialize;

use super::super::contract::{Row, Rows, table_of, uses};
use super::super::figures::{Figure, StripGroup};
use super::super::format::{self, NumberStyle};
use super::Extras;
use super::sections::{Context, text, whole};
use super::table::TableData;
use popgauge_engine::results::table_file;

/// The inbreeding-of-individuals section.
#[derive(Debug, Clone, Serialize)]
pub struct InbreedingSection {
    /// Step id.
    pub step: String,
    /// Per group: n, mean (sd) of sMLH, f_uni and F_ROH, and g2 with its interval and p.
    pub groups: TableData,
    /// Per group: the mean length per animal in runs of each length class (when positions).
    pub roh_classes: Option<TableData>,
    /// Whether runs of homozygosity could be scanned (loci with positions).
    pub has_roh: bool,
    /// The genome length F_ROH divides by, in a sentence.
    pub panel: Option<String>,
    /// What g2 says, in sentences per group where it is significant, or one sentence.
    pub g2_sentences: Vec<String>,
    /// Whether F̂III is shown (enough loci with two alleles), and if not, the most such loci
    /// an animal was typed at, display text.
    pub f_uni_shown: bool,
    /// The most loci with two alleles any animal was typed at.
    pub biallelic_max: String,
    /// The measure the chart shows (`F_ROH`, `F̂III` or `sMLH`).
    pub chart_measure: Option<String>,
    /// The CSV file of every animal's values.
    pub individuals_file: String,
    /// The CSV file of every run.
    pub runs_file: Option<String>,
}

const F_UNI: &str = "f_uni";
/// Fewest loci with two alleles at which the document shows an animal's F̂III: a display rule
/// of the document (the step computes it from any number), since with a handful of such loci,
/// as in a microsatellite panel with one two-allele locus, the estimate says little.
pub const MIN_BIALLELIC_LOCI: f64 = 20.0;
const F_ROH: &str = "f_roh";
const SMLH: &str = "smlh";

fn mean_sd(row: &Row<'_>, measure: &str) -> String {
    match (row.num(&format!("{measure}_mean")), row.num(&format!("{measure}_sd"))) {
        (Some(m), Some(sd)) => format!("{} ({})", format::fixed(m, 3), format::fixed(sd, 3)),
        (Some(m), None) => format::fixed(m, 3),
        _ => format::UNDEFINED.into(),
    }
}

pub(crate) fn inbreeding_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<InbreedingSection> {
    let step = ctx.results.step(uses::INBREEDING)?;
    let groups = table_of(step, "groups")?;
    let individuals = table_of(step, "individuals");
    let has_roh = groups.iter().any(|r| r.num("f_roh_mean").is_some());
    let biallelic_max = individuals
        .map(|rows| rows.iter().filter_map(|r| r.num("loci_biallelic")).fold(0.0_f64, f64::max))
        .unwrap_or(0.0);
    let f_uni_shown = biallelic_max >= MIN_BIALLELIC_LOCI;
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("n", true),
        ("sMLH mean (sd)", true),
        ("F̂III mean (sd)", true),
        ("FROH mean (sd)", true),
        ("g2 (95 % CI)", true),
        ("g2 p", true),
    ]);
    let mut g2_sentences = Vec::new();
    for row in groups.iter() {
        let g2 = match row.num("g2") {
            None => format::UNDEFINED.to_string(),
            Some(g) => match (row.num("g2_low"), row.num("g2_high")) {
                (None, None) => format::short(g, 3),
                (low, high) => {
                    format!("{} ({})", format::short(g, 3), format::interval(low, high, NumberStyle::Short(3)))
                }
            },
        };
        if let (Some(g), Some(p)) = (row.num("g2"), row.num("g2_p")) {
            if p < 0.05 && g > 0.0 {
                g2_sentences.push(format!(
                    "{} {}: g2 = {} ({}): the animals sampled differ in how inbred they are.",
                    text(&row, "population"),
                    whole(&row, "year"),
                    format::short(g, 3),
                    format::p_phrase(p)
                ));
            }
        }
        t.push(vec![
            text(&row, "population"),
            whole(&row, "year"),
            whole(&row, "n"),
            mean_sd(&row, SMLH),
            if f_uni_shown { mean_sd(&row, F_UNI) } else { format::UNDEFINED.into() },
            mean_sd(&row, F_ROH),
            g2,
            format::maybe(row.num("g2_p"), NumberStyle::PValue),
        ]);
    }
    t.drop_empty_columns(&["Population", "Year", "n"]);
    if g2_sentences.is_empty() && groups.iter().any(|r| r.num("g2_p").is_some()) {
        g2_sentences.push(
            "In no group is g2 significantly above zero (p < 0.05): the data give no evidence that the animals sampled differ in how inbred they are. With few loci g2 has little power, so this is not evidence that they do not."
                .into(),
        );
    }
    let roh_classes = individuals.filter(|_| has_roh).map(|rows| {
        let mut sums: BTreeMap<(String, String), ([f64; 3], usize)> = BTreeMap::new();
        for row in rows.iter() {
            let values = [row.num("roh_lt2_mb"), row.num("roh_2to8_mb"), row.num("roh_gt8_mb")];
            if values.iter().any(Option::is_none) {
                continue;
            }
            let entry = sums.entry((text(&row, "population"), whole(&row, "year"))).or_default();
            for (sum, v) in entry.0.iter_mut().zip(values) {
                *sum += v.unwrap_or(0.0);
            }
            entry.1 += 1;
        }
        let mut classes = TableData::new(&[
            ("Population", false),
            ("Year", true),
            ("Animals", true),
            ("< 2 Mb", true),
            ("2–8 Mb", true),
            ("> 8 Mb", true),
        ]);
        for ((population, year), (total, n)) in sums {
            let mean = |i: usize| format::fixed(total[i] / n as f64, 1);
            classes.push(vec![population, year, n.to_string(), mean(0), mean(1), mean(2)]);
        }
        classes
    });
    let panel = table_of(step, "panel").and_then(|p| {
        let row = p.iter().next()?;
        Some(format!(
            "FROH divides the length of an animal's runs by the {} Mb the panel spans on {} chromosome(s) ({} of {} loci have a position).",
            format::fixed(row.num("length_mb")?, 1),
            whole(&row, "chromosomes"),
            whole(&row, "loci_placed"),
            whole(&row, "loci"),
        ))
    });
    let measure = if has_roh {
        Measure::Roh
    } else if f_uni_shown {
        Measure::Uni
    } else {
        Measure::Smlh
    };
    let chart_measure = individuals.and_then(|rows| strip_chart(ctx, &rows, measure, extras));
    Some(InbreedingSection {
        step: step.id.clone(),
        groups: t,
        roh_classes,
        has_roh,
        panel: panel.filter(|_| has_roh),
        g2_sentences,
        f_uni_shown,
        biallelic_max: format!("{biallelic_max:.0}"),
        chart_measure,
        individuals_file: table_file(&step.id, "individuals"),
        runs_file: has_roh.then(|| table_file(&step.id, "runs")),
    })
}

/// What the chart of animals shows.
#[derive(Debug, Clone, Copy)]
enum Measure {
    /// F_ROH, with positions.
    Roh,
    /// F̂III, with enough loci of two alleles.
    Uni,
    /// sMLH otherwise (microsatellites).
    Smlh,
}

/// Every animal's F_ROH (F̂III without positions, sMLH without enough two-allele loci) per
/// group, as points with the group mean.
fn strip_chart(ctx: &Context<'_>, rows: &Rows<'_>, measure: Measure, extras: &mut Extras) -> Option<String> {
    let (column, label, name) = match measure {
        Measure::Roh => (F_ROH, "FROH (share of the genome in runs)", "FROH"),
        Measure::Uni => (F_UNI, "F̂III (Yang et al. 2011)", "F̂III"),
        Measure::Smlh => (SMLH, "sMLH (Coltman et al. 1999)", "sMLH"),
    };
    let mut groups: BTreeMap<(String, i64), Vec<f64>> = BTreeMap::new();
    for row in rows.iter() {
        let (Some(population), Some(year)) = (row.text("population"), row.int("year")) else { continue };
        let entry = groups.entry((population.to_string(), year)).or_default();
        if let Some(v) = row.num(column) {
            entry.push(v);
        }
    }
    let groups: Vec<StripGroup> = groups
        .into_iter()
        .filter(|(_, values)| !values.is_empty())
        .map(|((population, year), values)| StripGroup {
            label: format!("{population} {year}"),
            style: ctx.style_of(&population),
            values,
        })
        .collect();
    if groups.is_empty() {
        return None;
    }
    let animals: usize = groups.iter().map(|g| g.values.len()).sum();
    let alt = format!(
        "{name} of each of {animals} animals per population and sampling year, as points, with each group's mean as a bar."
    );
    extras.figure("inbreeding", Figure::Strip { groups, y_label: label.into() }, alt);
    Some(name.to_string())
}
