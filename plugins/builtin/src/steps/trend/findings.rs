//! The findings of `trend`: which LD criterion each `ne-ld` point used, series too short to
//! test, the null cells of `tests` and `paired` explained, and how to read a trend.

use popgauge_abi::{CriterionReason, Finding, FindingLevel, StepResult, Table, Where, format_number};

use crate::special_values::{Row, explain, listing, rows_where};
use crate::stats::trend::{MIN_POINTS_LEAST_SQUARES, MIN_POINTS_MANN_KENDALL};

use super::sources::NePoints;
use super::{Metric, TestedSeries};

/// `ld-criterion` (info) naming the criterion and S of every point of an `ne-ld` metric, and
/// `ld-criterion-missing` (warning) for the points whose rule criterion the step lacks.
pub(super) fn criterion_findings(result: &StepResult, points: &NePoints) -> Vec<Finding> {
    let mut used = Vec::new();
    let mut missing = Vec::new();
    for (population, years) in points {
        for (year, e) in years {
            let (Some(criterion), Some(reason)) = (e.criterion, e.criterion_reason) else { continue };
            let s = e
                .rule_samples
                .or(e.samples)
                .map_or_else(|| "unknown".into(), |s| format_number((s * 10.0).round() / 10.0));
            used.push(format!("{population} {year} (S = {s}, {})", criterion.label()));
            match reason {
                CriterionReason::RuleCriterionMissing(wanted) => missing.push(format!(
                    "{population} {year} (S = {s}: {} wanted, {} used)",
                    wanted.label(),
                    criterion.label()
                )),
                CriterionReason::SampleSizeUnknown => {
                    missing.push(format!("{population} {year} (no s: {} used)", criterion.label()))
                }
                CriterionReason::Preferred | CriterionReason::SampleSizeRule => {}
            }
        }
    }
    let mut findings = Vec::new();
    if !used.is_empty() {
        findings.push(Finding::info(
            "ld-criterion",
            format!(
                "trend of ne:{}: the rare-allele criterion of each LD point (by default no singletons at harmonic-mean \
                 S ≤ 25 and Pcrit 0.02 above, Waples & Do 2010; `ld_pcrit` fixes one): {}",
                result.id,
                listing(&used)
            ),
            Where::default(),
        ));
    }
    if !missing.is_empty() {
        findings.push(Finding::warning(
            "ld-criterion-missing",
            format!(
                "trend of ne:{}: the ne-ld step did not estimate the criterion the sample size asks for, so the \
                 group's first criterion is used; add it to the ne-ld step (pcrit, or exclude_singletons = true): {}",
                result.id,
                listing(&missing)
            ),
            Where::default(),
        ));
    }
    findings
}

/// `too-few-points` for each series too short for the Mann–Kendall test or the least-squares
/// slope (n ≥ 4 and n ≥ 3, see [`crate::stats::trend`]), and `low-power` for a series of exactly
/// 4 points.
pub(super) fn point_count_findings(tested: &[TestedSeries<'_>]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for t in tested {
        let location = Where { population: Some(t.series.population.clone()), ..Where::default() };
        let name = format!("{} in {}", t.series.metric, t.series.population);
        if t.points < MIN_POINTS_MANN_KENDALL {
            let ols = if t.points < MIN_POINTS_LEAST_SQUARES {
                format!(" and fewer than the {MIN_POINTS_LEAST_SQUARES} a least-squares slope needs")
            } else {
                String::new()
            };
            findings.push(Finding::info(
                "too-few-points",
                format!(
                    "{name}: {} sampling year(s) with a value, fewer than the {MIN_POINTS_MANN_KENDALL} the \
                     Mann–Kendall test needs{ols}; those columns are null, not a test result",
                    t.points
                ),
                location,
            ));
        } else if t.points == MIN_POINTS_MANN_KENDALL {
            findings.push(Finding::info(
                "low-power",
                format!(
                    "{name}: with 4 sampling years the smallest two-sided Mann–Kendall p is {}, so no trend can \
                     reach p < 0.05; more sampling years are needed to detect one",
                    format_number((2000.0_f64 / 24.0).round() / 1000.0)
                ),
                location,
            ));
        }
    }
    findings
}

/// The findings for `null` cells of `tests` and `paired` that the point counts do not explain:
/// a Sen slope without Gilbert's interval, a paired comparison without a test, and a mean
/// change without an interval (each one finding listing the series).
pub(super) fn special_value_findings(tests: &Table, paired: &Table) -> Vec<Finding> {
    let series = |r: &Row<'_>| format!("{} in {}", r.text("metric"), r.text("population"));
    let pair = |r: &Row<'_>| {
        format!("{} in {} {}–{}", r.text("metric"), r.text("population"), r.text("year_start"), r.text("year_end"))
    };
    let sen = rows_where(
        tests,
        |r| r.is_finite("sen_slope") && r.is_null("sen_low"),
        |r| format!("{} ({} points)", series(r), r.text("points")),
    );
    let untested = rows_where(paired, |r| r.is_null("p_value"), |r| format!("{} ({} loci)", pair(r), r.text("loci")));
    let no_interval = rows_where(
        paired,
        |r| r.is_finite("mean_change") && r.is_null("change_low"),
        |r| format!("{} ({} replicates)", pair(r), r.text("replicates")),
    );
    let findings = [
        explain(FindingLevel::Info, "sen-interval-undefined", &sen, |n, list| {
            format!(
                "{n} series have a Sen slope but a null sen_low and sen_high: with so few points Gilbert's (1987) \
                 95% interval reaches beyond the smallest and largest pairwise slopes: {list}"
            )
        }),
        explain(FindingLevel::Info, "paired-untested", &untested, |n, list| {
            format!(
                "{n} two-year comparison(s) have no signed-rank test (w_plus, w_minus, p_method and p_value are \
                 null): no locus is typed in both years, or every locus has the same value in both: {list}"
            )
        }),
        explain(FindingLevel::Info, "no-interval", &no_interval, |n, list| {
            format!(
                "{n} two-year comparison(s) have a mean change but a null change_low and change_high: the bootstrap \
                 over loci needs at least two replicates (`bootstrap`): {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}

pub(super) fn interpretation_findings(metrics: &[Metric]) -> Vec<Finding> {
    let mut findings = Vec::new();
    if metrics.iter().any(|m| matches!(m, Metric::Ne { .. })) {
        findings.push(Finding::info(
            "ne-trend-scale",
            "Ne trends are tested on 1/Ne (proportional to the rate of inbreeding), so an infinite estimate counts \
             as 1/Ne = 0; the slopes of ne metrics are in 1/Ne per year (positive = Ne falling) and `direction` \
             speaks of Ne itself",
            Where::default(),
        ));
    }
    findings.push(Finding::info(
        "trend-caution",
        "Trend tests over few sampling years have little power: \"no trend\" is not evidence of stability, and \
         each yearly value carries its own sampling uncertainty that these tests do not include. Treat trends \
         as guidance for a qualified geneticist's review, within the local regulatory framework.",
        Where::default(),
    ));
    findings
}
