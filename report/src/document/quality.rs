//! Data quality at a glance: one row per locus (marker type from the locus sheet, missing
//! data, alleles, Hardy–Weinberg departures, the null-allele indication) and one row per
//! group (samples read, kept, duplicates removed, other exclusions), with the outlying loci
//! named in words.

use std::collections::BTreeMap;

use serde::Serialize;

use super::super::contract::{Rows, col, table, table_of, uses};
use super::super::format::{self, NumberStyle};
use super::sections::{Context, text, whole};
use super::table::TableData;
use super::{BODY_LIMIT, BODY_ROWS, Extras};
use popgauge_engine::results::table_file;
use popgauge_builtin::stats::bootstrap::median;

/// The data-quality tables.
#[derive(Debug, Clone, Serialize)]
pub struct QualitySection {
    /// Id of the `validate` step.
    pub step: String,
    /// One row per locus, or for a panel of more than [`BODY_LIMIT`] loci the loci worth a
    /// look (excluded, or flagged by one of the outlier rules).
    pub loci: TableData,
    /// Whether `loci` lists every locus (false: only those flagged, see `loci_file`).
    pub all_loci: bool,
    /// Flagged loci not listed in `loci` (beyond [`BODY_ROWS`]), display text; `None` when all are.
    pub flagged_more: Option<String>,
    /// The file with every locus.
    pub loci_file: String,
    /// Loci read, display text.
    pub loci_count: String,
    /// Median share of samples untyped per locus, display text.
    pub median_missing: Option<String>,
    /// Sentences naming the outliers (missingness over twice the median, Hardy–Weinberg
    /// departures in several groups, a null-allele indication); empty when none.
    pub flags: Vec<String>,
    /// Whether a locus sheet gave marker types.
    pub has_sheet: bool,
    /// One row per group: read, kept, duplicates removed, other exclusions.
    pub groups: TableData,
}

/// Brookfield's (1996) null-allele frequency from which the table prints a locus as
/// indicated (the `validate` step's own rule flags deficits separately).
const NULL_ALLELE_NOTE: f64 = 0.05;

/// The per-locus facts the table and the flags share.
struct LocusFacts {
    name: String,
    status: String,
    missing: Option<f64>,
    alleles: Option<f64>,
    null_allele: Option<f64>,
    deficit_groups: Option<f64>,
    tested_groups: Option<f64>,
    hwe_departures: Option<(usize, usize)>,
}

pub(crate) fn quality_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<QualitySection> {
    let step = ctx.results.step(uses::VALIDATE)?;
    let loci_rows = table_of(step, table::LOCI)?;
    let departures = hwe_departures(ctx);
    let facts: Vec<LocusFacts> = loci_rows
        .iter()
        .map(|row| {
            let name = text(&row, col::LOCUS);
            LocusFacts {
                hwe_departures: departures.get(&name).copied(),
                status: text(&row, col::STATUS),
                missing: row.num(MISSING),
                alleles: row.num(ALLELES),
                null_allele: row.num(NULL_ALLELE),
                deficit_groups: row.num(DEFICIT_GROUPS),
                tested_groups: row.num(TESTED_GROUPS),
                name,
            }
        })
        .collect();
    let median_missing = median(facts.iter().filter_map(|f| f.missing).collect());
    let flags = flags(&facts, median_missing);
    let sheet = &ctx.results.doc().data.locus_sheet;
    let sheet_of: BTreeMap<&str, &popgauge_engine::results::LocusInfo> = sheet.iter().map(|l| (l.locus.as_str(), l)).collect();
    let has_sheet = !sheet.is_empty();
    let mut loci = TableData::new(&[
        ("Locus", false),
        ("Marker", false),
        ("Chromosome", false),
        ("Missing", true),
        ("Alleles", true),
        ("HWE departures", true),
        ("Null allele r", true),
        ("Deficit groups", true),
        ("Kept", false),
    ]);
    let all_loci = facts.len() <= BODY_LIMIT;
    for f in &facts {
        let flagged = is_outlier(f, median_missing) || f.status != "kept";
        if !all_loci && !flagged {
            continue;
        }
        let info = sheet_of.get(f.name.as_str());
        let marker = info.map(|l| match (&l.marker, &l.motif) {
            (Some(m), Some(motif)) => format!("{m} ({motif})"),
            (Some(m), None) => m.clone(),
            (None, Some(motif)) => format!("repeat {motif}"),
            (None, None) => format::UNDEFINED.into(),
        });
        let chromosome = info.and_then(|l| l.chromosome.clone());
        loci.push(vec![
            f.name.clone(),
            marker.unwrap_or_else(|| format::UNDEFINED.into()),
            chromosome.unwrap_or_else(|| format::UNDEFINED.into()),
            format::maybe(f.missing, NumberStyle::Percent),
            format::maybe(f.alleles, NumberStyle::Whole),
            f.hwe_departures.map_or_else(|| format::UNDEFINED.into(), |(d, t)| format!("{d} of {t}")),
            format::maybe(f.null_allele, NumberStyle::Fixed(3)),
            match (f.deficit_groups, f.tested_groups) {
                (Some(d), Some(t)) => format!("{d:.0} of {t:.0}"),
                _ => format::UNDEFINED.into(),
            },
            if f.status == "kept" { "yes".into() } else { "no".into() },
        ]);
    }
    let flagged_more = (!all_loci && loci.rows.len() > BODY_ROWS).then(|| {
        let more = loci.rows.len() - BODY_ROWS;
        loci.rows.truncate(BODY_ROWS);
        format::count(more)
    });
    loci.drop_empty_columns(&["Locus", "Missing", "Kept"]);
    Some(QualitySection {
        step: step.id.clone(),
        loci,
        all_loci,
        flagged_more,
        loci_file: table_file(&step.id, table::LOCI),
        loci_count: format::count(facts.len()),
        median_missing: median_missing.map(format::percent),
        flags,
        has_sheet,
        groups: groups_table(ctx, extras),
    })
}

const MISSING: &str = "missing";
const ALLELES: &str = "alleles";
const NULL_ALLELE: &str = "null_allele";
const DEFICIT_GROUPS: &str = "deficit_groups";
const TESTED_GROUPS: &str = "tested_groups";
const DUPLICATE_OF: &str = "duplicate_of";

/// Per locus: groups whose Hardy–Weinberg test has q < 0.05, and groups tested.
fn hwe_departures(ctx: &Context<'_>) -> BTreeMap<String, (usize, usize)> {
    let mut out: BTreeMap<String, (usize, usize)> = BTreeMap::new();
    let Some(rows) = ctx.results.table(uses::HWE, table::BY_LOCUS) else { return out };
    for row in rows.iter() {
        let Some(locus) = row.label(col::LOCUS) else { continue };
        let Some(q) = row.num(col::Q_VALUE) else { continue };
        let entry = out.entry(locus).or_default();
        entry.1 += 1;
        if q < 0.05 {
            entry.0 += 1;
        }
    }
    out
}

/// Missingness over twice the median (and at least one percentage point above it, so that a
/// panel with almost no missing data does not flag 0.4 % against 0.2 %).
fn missing_outlier(f: &LocusFacts, median: Option<f64>) -> bool {
    match (f.missing, median) {
        (Some(m), Some(med)) => m > 2.0 * med && m - med >= 0.01,
        _ => false,
    }
}

/// Departs from Hardy–Weinberg proportions in at least two groups and in at least a quarter
/// of those tested.
fn hwe_outlier(f: &LocusFacts) -> bool {
    f.hwe_departures.is_some_and(|(d, t)| d >= 2 && d * 4 >= t)
}

/// A null allele is indicated at a locus with more than two alleles (a microsatellite): at a
/// two-allele locus such as a SNP a heterozygote deficit has other causes (inbreeding,
/// substructure, genotyping error), and `validate` reports it apart.
fn null_outlier(f: &LocusFacts) -> bool {
    f.alleles.is_some_and(|a| a > 2.0)
        && (f.null_allele.is_some_and(|r| r >= NULL_ALLELE_NOTE) || f.deficit_groups.is_some_and(|d| d > 0.0))
}

fn is_outlier(f: &LocusFacts, median: Option<f64>) -> bool {
    missing_outlier(f, median) || hwe_outlier(f) || null_outlier(f)
}

fn flags(facts: &[LocusFacts], median_missing: Option<f64>) -> Vec<String> {
    let mut out = Vec::new();
    let listed = |items: Vec<String>| -> String {
        const SHOWN: usize = 12;
        let more = items.len().saturating_sub(SHOWN);
        let shown = items.into_iter().take(SHOWN).collect::<Vec<_>>().join(", ");
        if more > 0 { format!("{shown} and {more} more") } else { shown }
    };
    let missing: Vec<String> = facts
        .iter()
        .filter(|f| missing_outlier(f, median_missing))
        .map(|f| format!("{} ({})", f.name, format::maybe(f.missing, NumberStyle::Percent)))
        .collect();
    if let (false, Some(med)) = (missing.is_empty(), median_missing) {
        out.push(format!(
            "Untyped in more than twice the median share of samples ({}): {}. Such loci may amplify poorly; check them before relying on them.",
            format::percent(med),
            listed(missing)
        ));
    }
    let hwe: Vec<String> = facts
        .iter()
        .filter(|f| hwe_outlier(f))
        .map(|f| {
            let (d, t) = f.hwe_departures.unwrap_or_default();
            format!("{} ({d} of {t} groups)", f.name)
        })
        .collect();
    if !hwe.is_empty() {
        out.push(format!(
            "Departing from Hardy–Weinberg proportions (q < 0.05) in several groups: {}. A departure shared by groups points to the locus (null alleles, scoring) rather than to the populations.",
            listed(hwe)
        ));
    }
    let null: Vec<String> = facts
        .iter()
        .filter(|f| null_outlier(f))
        .map(|f| format!("{} (r = {})", f.name, format::maybe(f.null_allele, NumberStyle::Fixed(3))))
        .collect();
    if !null.is_empty() {
        out.push(format!(
            "A null allele is indicated at loci with more than two alleles (Brookfield's r ≥ {NULL_ALLELE_NOTE}, or a significant heterozygote deficit flagged by step validate): {}.",
            listed(null)
        ));
    }
    let excluded: Vec<String> = facts.iter().filter(|f| f.status != "kept").map(|f| f.name.clone()).collect();
    if !excluded.is_empty() {
        out.push(format!("Excluded from the analyses: {} (reasons in Section “Exclusions”).", listed(excluded)));
    }
    out
}

/// Samples per group: read, kept, duplicates removed and other exclusions.
fn groups_table(ctx: &Context<'_>, _extras: &mut Extras) -> TableData {
    let samples: Option<Rows<'_>> = ctx.results.table(uses::VALIDATE, table::SAMPLES);
    let mut duplicates: BTreeMap<(String, String), usize> = BTreeMap::new();
    let mut others: BTreeMap<(String, String), usize> = BTreeMap::new();
    if let Some(samples) = &samples {
        for row in samples.iter().filter(|r| r.text(col::STATUS) != Some("kept")) {
            let key = (text(&row, col::POPULATION), whole(&row, col::YEAR));
            let target =
                if row.text(DUPLICATE_OF).is_some_and(|d| !d.is_empty()) { &mut duplicates } else { &mut others };
            *target.entry(key).or_default() += 1;
        }
    }
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("Read", true),
        ("Kept", true),
        ("Duplicates removed", true),
        ("Other exclusions", true),
        ("Group", false),
    ]);
    if let Some(groups) = ctx.results.table(uses::VALIDATE, table::GROUPS) {
        for row in groups.iter() {
            let key = (text(&row, col::POPULATION), whole(&row, col::YEAR));
            let count = |m: &BTreeMap<(String, String), usize>| {
                if samples.is_some() { m.get(&key).copied().unwrap_or(0).to_string() } else { format::UNDEFINED.into() }
            };
            t.push(vec![
                key.0.clone(),
                key.1.clone(),
                whole(&row, col::N_TOTAL),
                whole(&row, col::N_KEPT),
                count(&duplicates),
                count(&others),
                text(&row, col::STATUS),
            ]);
        }
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    fn locus(name: &str, missing: f64, departures: (usize, usize), null: f64) -> LocusFacts {
        LocusFacts {
            name: name.into(),
            status: "kept".into(),
            missing: Some(missing),
            alleles: Some(5.0),
            null_allele: Some(null),
            deficit_groups: Some(0.0),
            tested_groups: Some(4.0),
            hwe_departures: Some(departures),
        }
    }

    /// Common practice: a locus untyped in more than twice the median share is flagged; the
    /// others are not.
    #[test]
    fn flags_name_loci_over_twice_the_median_missingness() {
        let facts = vec![
            locus("A", 0.02, (0, 4), 0.0),
            locus("B", 0.03, (0, 4), 0.0),
            locus("C", 0.09, (0, 4), 0.0),
            locus("D", 0.025, (2, 4), 0.0),
            locus("E", 0.02, (0, 4), 0.08),
        ];
        let med = median(facts.iter().filter_map(|f| f.missing).collect());
        assert_eq!(med, Some(0.025));
        let text = flags(&facts, med);
        assert_eq!(text.len(), 3, "{text:?}");
        assert!(text[0].contains("C (9.0 %)") && !text[0].contains("B ("), "{}", text[0]);
        assert!(text[0].contains("(2.5 %)"), "the median is named: {}", text[0]);
        assert!(text[1].contains("D (2 of 4 groups)"), "{}", text[1]);
        assert!(text[2].contains("E (r = 0.080)"), "{}", text[2]);
    }

    /// Common practice: a heterozygote deficit at a two-allele locus (a SNP) is no sign of a
    /// null allele.
    #[test]
    fn null_alleles_are_flagged_only_at_loci_with_more_than_two_alleles() {
        let mut snp = locus("S", 0.0, (0, 4), 0.2);
        snp.alleles = Some(2.0);
        assert!(!null_outlier(&snp));
        snp.alleles = Some(3.0);
        assert!(null_outlier(&snp));
    }

    #[test]
    fn tiny_missingness_differences_are_not_outliers() {
        let a = locus("A", 0.004, (0, 1), 0.0);
        assert!(!missing_outlier(&a, Some(0.001)), "0.4 % against a median of 0.1 % is noise");
        assert_eq!(median(vec![3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(vec![]), None);
    }
}
