//! The findings of `ne-ld`: the seeded loci subsets, each group's sample size, comparisons and
//! special values (null, `"inf"` and open intervals), the interval methods and how to read an
//! LD-based Ne.

use std::collections::BTreeMap;

use popgauge_abi::{Finding, FindingLevel, GenotypeView, Group, LocusIdx, Table, Where};

use crate::special_values::{LowerBound, Row, explain, infinite_estimate_reading, rows_where};

use super::estimate::LdEstimate;
use super::{FEW_COMPARISONS, FEW_LOCI, GroupResult, LOW_SAMPLE_SIZE, LociPlan, Params, criterion_label};

pub(super) fn collect_findings(
    view: &GenotypeView<'_>,
    params: &Params,
    plan: &LociPlan,
    groups: &[GroupResult],
) -> Vec<Finding> {
    let mut findings = Vec::new();
    if plan.loci.len() < view.n_loci() {
        findings.push(loci_subset_finding(view, &plan.loci));
    }
    if let Some((subset, _)) = &plan.resample {
        findings.push(resample_subset_finding(params, subset.len(), plan.loci.len()));
    }
    for result in groups {
        findings.extend(group_findings(result, params));
    }
    findings.push(interval_methods_finding());
    findings.push(interpretation_finding());
    findings
}

fn loci_subset_finding(view: &GenotypeView<'_>, loci: &[LocusIdx]) -> Finding {
    let names: Vec<&str> = loci.iter().map(|&l| view.locus(l).name.as_str()).collect();
    Finding::info(
        "loci-subset",
        format!(
            "max_loci = {} of {} loci: LD was estimated on this seeded random subset (the same for every group): {}",
            loci.len(),
            view.n_loci(),
            names.join(", ")
        ),
        Where::default(),
    )
}

fn resample_subset_finding(params: &Params, subset: usize, loci: usize) -> Finding {
    Finding::info(
        "resample-subset",
        format!(
            "ne_resample_*: the jackknife over individuals recomputes every pair once per group of individuals left \
             out ({} groups); with {loci} loci it ran on a seeded random subset of {subset} loci \
             (resample_max_loci = {}; seed stream \"ne-ld resample loci\"), every other column on all {loci}. A \
             subset's r² varies at least as much as the full panel's on average, so this interval errs wide, not \
             narrow",
            params.individual_blocks, params.resample_max_loci
        ),
        Where::default(),
    )
}

/// The findings of one group: one per code, naming the criteria it concerns.
fn group_findings(result: &GroupResult, params: &Params) -> Vec<Finding> {
    let group = &result.group;
    let name = format!("{} {}", group.population, group.year);
    // One finding per code and, for an infinite estimate, per kind of lower bound.
    let mut by_code: BTreeMap<(&'static str, LowerBound), Vec<String>> = BTreeMap::new();
    for row in &result.criteria {
        let label = criterion_label(row.criterion);
        let lower = row.estimate.as_ref().map_or(LowerBound::Absent, lower_bound);
        for code in row_codes(row.estimate.as_ref()) {
            let lower = if code == "infinite-estimate" { lower } else { LowerBound::Absent };
            by_code.entry((code, lower)).or_default().push(label.clone());
        }
    }
    let mut findings: Vec<Finding> = by_code
        .into_iter()
        .map(|((code, lower), labels)| group_finding(code, lower, &name, &labels.join(", "), group))
        .collect();
    let skipped = result.criteria.first().map_or(0, |r| r.same_chromosome);
    if params.skip_same_chromosome && skipped > 0 {
        findings.push(Finding::info(
            "same-chromosome-pairs-skipped",
            format!(
                "group {name}: {skipped} pairs of loci on the same chromosome were left out, as physical linkage \
                 inflates r² (set skip_same_chromosome = false to use them)"
            ),
            Where::group(&group.population, group.year),
        ));
    }
    findings
}

/// Codes of the findings one row raises.
fn row_codes(estimate: Option<&LdEstimate>) -> Vec<&'static str> {
    let Some(e) = estimate else { return vec!["no-estimate"] };
    let mut codes = Vec::new();
    if e.samples < LOW_SAMPLE_SIZE {
        codes.push("low-sample-size");
    }
    if e.comparisons < FEW_COMPARISONS {
        codes.push("few-comparisons");
    }
    if e.loci < FEW_LOCI {
        codes.push("few-loci");
    }
    if e.ne.is_infinite() {
        codes.push("infinite-estimate");
    } else if [e.resample, e.jackknife_loci, e.parametric].iter().flatten().any(|i| i.high.is_infinite()) {
        codes.push("infinite-upper-bound");
    }
    codes
}

/// The lower bound of the most trusted interval a row has (resampling, jackknife, parametric).
fn lower_bound(e: &LdEstimate) -> LowerBound {
    LowerBound::of([e.resample, e.jackknife_loci, e.parametric].iter().flatten().next().map(|i| i.low))
}

fn group_finding(code: &'static str, lower: LowerBound, name: &str, criteria: &str, group: &Group) -> Finding {
    let location = Where::group(&group.population, group.year);
    let message = match code {
        "no-estimate" => format!(
            "group {name} ({criteria}): no pair of loci with two or more retained alleles typed in at least two \
             common individuals, so no LD estimate; type more loci or individuals, or lower pcrit"
        ),
        "low-sample-size" => format!(
            "group {name} ({criteria}): harmonic-mean sample size below {LOW_SAMPLE_SIZE}; the sampling correction of \
             Waples (2006) is least reliable there and the estimate is imprecise"
        ),
        "few-comparisons" => format!(
            "group {name} ({criteria}): fewer than {FEW_COMPARISONS} independent allele comparisons (n′); the estimate \
             rests on very little information"
        ),
        "few-loci" => format!(
            "group {name} ({criteria}): fewer than {FEW_LOCI} loci with two or more retained alleles; the estimate and \
             its jackknife intervals rest on few loci"
        ),
        "infinite-estimate" => format!(
            "group {name} ({criteria}): Ne is \"inf\" because the observed r̄² does not exceed the r² expected from \
             sampling alone; the data cannot distinguish Ne from infinity (a large population, or too little data). \
             {}",
            infinite_estimate_reading(lower, "the first present of ne_resample_low, ne_jack_low, ne_param_low", "Ne")
        ),
        _ => format!(
            "group {name} ({criteria}): the upper confidence bound of Ne is \"inf\": the data are consistent with a \
             very large population; only the lower bound constrains Ne"
        ),
    };
    let level_is_warning = code != "infinite-upper-bound";
    if level_is_warning { Finding::warning(code, message, location) } else { Finding::info(code, message, location) }
}

/// One `no-interval` finding for the rows whose estimate is defined but some of its intervals
/// are `null` (a `null` estimate has its `no-estimate` finding, an `"inf"` bound its own).
pub(super) fn missing_interval_finding(estimates: &Table) -> Option<Finding> {
    let missing = |r: &Row<'_>| {
        let methods = [("ne_param_low", "ne_param"), ("ne_jack_low", "ne_jack"), ("ne_resample_low", "ne_resample")];
        let none: Vec<&str> = methods.iter().filter(|(low, _)| r.is_null(low)).map(|m| m.1).collect();
        if r.is_null("ne") { String::new() } else { none.join(", ") }
    };
    let name = |r: &Row<'_>| {
        let criterion =
            if r.text("pcrit") == "singletons" { "no singletons".into() } else { format!("Pcrit {}", r.text("pcrit")) };
        format!("{} {} {criterion} ({})", r.text("population"), r.text("year"), missing(r))
    };
    let rows = rows_where(estimates, |r| !missing(r).is_empty(), name);
    explain(FindingLevel::Info, "no-interval", &rows, |n, list| {
        format!(
            "{n} estimate(s) lack some of their 95% intervals (those low, high and df columns are null): ne_jack_* \
             need at least three loci in usable pairs and some variation among them, ne_resample_* at least two \
             groups of individuals (individual_blocks = 0 turns them off) and some variation among them, and \
             ne_param_* at least one independent comparison; read the estimate with the intervals that remain: {list}"
        )
    })
}

fn interval_methods_finding() -> Finding {
    Finding::info(
        "ne-ld-intervals",
        "95% intervals: ne_param_* treat the n′ allele comparisons as independent (χ², Hill 1981; Waples 2006) and are \
         too narrow when many loci share the same individuals; ne_jack_* jackknife over loci (Jones, Ovenden & Wang \
         2016) and still miss the sampling of individuals shared by all pairs, so they are too narrow for SNP panels; \
         ne_resample_* use the larger of that variance and a jackknife over groups of individuals, and are the \
         intervals to report for microsatellites and SNPs alike",
        Where::default(),
    )
}

fn interpretation_finding() -> Finding {
    Finding::info(
        "ne-interpretation",
        "LD estimates of Ne carry uncertainty: read them with their intervals. A sample of one cohort estimates the \
         effective number of breeders of its parents, a mixed-age sample roughly Ne per generation; the method \
         assumes unlinked loci, a closed population and no strong substructure. Thresholds such as Ne 50/500 are \
         guidance, not rules: decisions follow the local regulatory framework and review by a qualified geneticist",
        Where::default(),
    )
}
