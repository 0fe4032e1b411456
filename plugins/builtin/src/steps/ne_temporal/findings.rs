//! The findings of `ne-temporal`: missing generation time or census size, too few generations,
//! loci or samples, single-year populations, the null and `"inf"` cells explained, and the
//! caution on reading a temporal Ne.

use std::collections::BTreeMap;

use popgauge_abi::{AssessmentInfo, Finding, FindingLevel, GenotypeView, Table, Where};

use crate::special_values::{LowerBound, Row, explain, infinite_estimate_reading, rows_where};

use super::{Comparison, FEW_COMPARISONS, FEW_LOCI, LOW_SAMPLE_SIZE, Missing, Plan};

pub(super) fn collect_findings(
    view: &GenotypeView<'_>,
    assessment: &AssessmentInfo,
    results: &[Comparison],
) -> Vec<Finding> {
    let mut findings = Vec::new();
    if !assessment.generation_time_years.is_some_and(|g| g > 0.0) && !results.is_empty() {
        findings.push(Finding::error(
            "generation-time-missing",
            "ne-temporal needs the generation time to turn sampling years into generations, and the recipe gives \
             none, so no temporal Ne is estimated; set generation_time_years in [assessment] of case.toml",
            Where::default(),
        ));
    }
    findings.extend(single_year_findings(view));
    for c in results {
        findings.extend(comparison_findings(c));
    }
    findings.push(Finding::info(
        "ne-temporal-intervals",
        "95% intervals: ne_low/ne_high are the interval of ne_fs (jackknife over loci, Student t); ne_fc_* and \
         ne_fk_* are χ² intervals on n′ = Σ(K − 1) independent alleles (Waples 1989)",
        Where::default(),
    ));
    findings.push(Finding::info(
        "ne-interpretation",
        "Temporal estimates of Ne carry uncertainty: read them with their intervals. They describe the harmonic-mean \
         Ne over the generations between samples and assume a closed population with discrete generations; with \
         overlapping generations, samples only a few generations apart give biased estimates (Jorde & Ryman 1995; \
         Waples & Yokota 2007). Thresholds such as Ne 50/500 are guidance, not rules: decisions follow the local \
         regulatory framework and review by a qualified geneticist",
        Where::default(),
    ));
    findings
}

/// Each estimate column with its interval's (low, high) columns.
const ESTIMATE_INTERVALS: [(&str, &str, &str); 3] =
    [("ne_fs", "ne_low", "ne_high"), ("ne_fc", "ne_fc_low", "ne_fc_high"), ("ne_fk", "ne_fk_low", "ne_fk_high")];

/// The findings for `"inf"` and `null` cells of the `estimates` table that the findings above
/// do not explain: an infinite F_c or F_k estimate, an infinite upper bound of a finite
/// estimate, and a missing interval of a defined estimate (each listing the comparisons).
pub(super) fn special_value_findings(estimates: &Table) -> Vec<Finding> {
    let comparison = |r: &Row<'_>| format!("{} {}–{}", r.text("population"), r.text("year_start"), r.text("year_end"));
    let named = |r: &Row<'_>, columns: String| format!("{} ({columns})", comparison(r));
    let listed =
        |columns: fn(&Row<'_>) -> String| rows_where(estimates, |r| !columns(r).is_empty(), |r| named(r, columns(r)));
    let infinite = listed(|r| r.columns_where(&["ne_fc", "ne_fk"], |r, c| r.is_inf(c)));
    let upper = listed(|r| {
        let open: Vec<&str> =
            ESTIMATE_INTERVALS.iter().filter(|(e, _, h)| r.is_finite(e) && r.is_inf(h)).map(|t| t.2).collect();
        open.join(", ")
    });
    let missing = listed(|r| {
        let none: Vec<&str> = ESTIMATE_INTERVALS
            .iter()
            .filter(|(e, l, _)| r.cell(e).is_some_and(|c| c.as_f64().is_some()) && r.is_null(l))
            .map(|t| t.0)
            .collect();
        none.join(", ")
    });
    let findings = [
        explain(FindingLevel::Warning, "infinite-estimate-fc-fk", &infinite, |n, list| {
            format!(
                "{n} comparison(s) have ne_fc or ne_fk \"inf\" because the corrected F_c or F_k does not exceed what \
                 sampling alone produces; the data cannot distinguish Ne from infinity by that estimator: {list}"
            )
        }),
        explain(FindingLevel::Info, "infinite-upper-bound", &upper, |n, list| {
            format!(
                "{n} comparison(s) have an upper confidence bound of \"inf\" (its lower F bound does not exceed \
                 sampling noise): the data are consistent with a very large population and only the lower bound \
                 constrains Ne: {list}"
            )
        }),
        explain(FindingLevel::Info, "no-interval", &missing, |n, list| {
            format!(
                "{n} comparison(s) have an estimate without an interval (its low and high columns are null): the \
                 jackknife of ne_fs needs at least two loci typed in both samples, and the χ² intervals of ne_fc and \
                 ne_fk at least one independent allele (df > 0): {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}

fn single_year_findings(view: &GenotypeView<'_>) -> Vec<Finding> {
    let mut years: BTreeMap<String, Vec<i32>> = BTreeMap::new();
    for group in view.groups() {
        years.entry(group.population).or_default().push(group.year);
    }
    years
        .into_iter()
        .filter(|(_, y)| y.len() == 1)
        .map(|(population, y)| {
            Finding::info(
                "single-sampling-year",
                format!(
                    "population {population} was sampled only in {}; the temporal method needs samples from two or \
                     more years, so it has no temporal estimate",
                    y[0]
                ),
                Where { population: Some(population), ..Where::default() },
            )
        })
        .collect()
}

fn comparison_findings(c: &Comparison) -> Vec<Finding> {
    let name = format!("{} {}–{}", c.start.population, c.start.year, c.end.year);
    let location = Where { population: Some(c.start.population.clone()), year: Some(c.end.year), ..Where::default() };
    let mut findings = Vec::new();
    let mut warn = |code: &str, message: String| findings.push(Finding::warning(code, message, location.clone()));
    if c.missing == Some(Missing::TooFewGenerations) {
        warn(
            "too-few-generations",
            format!(
                "{name}: the samples are {:.2} generations apart, less than one, so no temporal Ne is estimated; \
                 compare samples at least one generation apart",
                c.generations.unwrap_or(f64::NAN)
            ),
        );
    }
    if c.plan == Plan::I && c.census.is_none() {
        warn(
            "census-size-missing",
            format!(
                "{name}: plan I needs the census size of population {}, and the population sheet gives none, so there \
                 is no plan-I estimate; add census_size to the population sheet, or use plan = \"II\"",
                c.start.population
            ),
        );
    }
    let Some(stats) = c.statistics else {
        warn("no-estimate", format!("{name}: no locus is typed with two or more alleles in both samples"));
        return findings;
    };
    if stats.start_samples.min(stats.end_samples) < LOW_SAMPLE_SIZE {
        warn(
            "low-sample-size",
            format!(
                "{name}: fewer than {LOW_SAMPLE_SIZE} individuals per sample; sampling noise dominates the drift signal"
            ),
        );
    }
    if stats.df < FEW_COMPARISONS {
        warn(
            "few-comparisons",
            format!(
                "{name}: fewer than {FEW_COMPARISONS} independent alleles (n′); the estimate rests on little information"
            ),
        );
    }
    if stats.loci < FEW_LOCI {
        warn("few-loci", format!("{name}: fewer than {FEW_LOCI} loci typed in both samples"));
    }
    if let Some(e) = c.estimate.as_ref().filter(|e| e.ne_fs.is_infinite()) {
        warn(
            "infinite-estimate",
            format!(
                "{name}: ne_fs is \"inf\" because the allele-frequency change does not exceed what sampling alone \
                 produces; the data cannot distinguish Ne from infinity (a large population, samples too close in time, \
                 or too little data). {}",
                infinite_estimate_reading(LowerBound::of(e.fs_interval.map(|i| i.low)), "ne_low", "Ne")
            ),
        );
    }
    findings
}
