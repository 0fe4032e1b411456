//! The findings of `differentiation`: the scope of intervals and tests, small groups, loci
//! untyped in a group, undefined estimates, and the caution that travels with every FST.

use popgauge_abi::{Finding, GenotypeView, Group, Where};

use super::pairs::ComparisonEstimate;
use super::{ComparisonSet, LOCI_LISTED, LOW_SAMPLE_SIZE, Params, SetEstimates};

pub(super) fn collect_findings(
    view: &GenotypeView<'_>,
    estimates: &[SetEstimates<'_>],
    params: &Params,
    isolation_findings: Vec<Finding>,
) -> Vec<Finding> {
    let mut findings = vec![scope_finding(estimates, params)];
    for set in estimates {
        findings.extend(small_group_findings(set.set));
        findings.extend(untyped_locus_findings(view, set));
        if set.set.groups.len() < 2 {
            findings.push(Finding::info(
                "no-pairs",
                format!(
                    "{}: {} group(s), so there is no pair to compare and no global estimate",
                    set.set.describe(),
                    set.set.groups.len()
                ),
                Where { year: set.set.year, ..Where::default() },
            ));
        }
        for pair in &set.pairs {
            let (a, b) = (&set.set.groups[pair.a].population, &set.set.groups[pair.b].population);
            findings.extend(undefined_findings(&pair.estimate, &format!("pair {a}–{b}"), set.set.year));
        }
        if let Some(global) = &set.global {
            findings.extend(undefined_findings(
                global,
                &format!("global estimate ({})", set.set.describe()),
                set.set.year,
            ));
        }
    }
    if params.permutations == 0 {
        findings.push(Finding::info(
            "permutation-test-disabled",
            "permutations = 0: no permutation test was run, so fst_p is null (set permutations to 999 or more to test)",
            Where::default(),
        ));
    }
    findings.extend(isolation_findings);
    findings.push(caution_finding());
    findings
}

fn scope_finding(estimates: &[SetEstimates<'_>], params: &Params) -> Finding {
    let sets: Vec<String> = estimates.iter().map(|s| s.set.describe()).collect();
    let message = format!(
        "differentiation compares {} (by_year = {}); FST is Weir & Cockerham's θ as a ratio of sums over alleles and \
         loci; jost_d, gst, gst_p (G′ST) and gst_pp (G″ST) are ratios of the averages of HS and HT over loci; \
         the intervals of FST, D and G″ST are 95% percentile bootstraps over loci ({} replicates, the same drawn \
         loci for the three)",
        sets.join("; "),
        params.by_year,
        params.bootstrap
    );
    Finding::info("differentiation-scope", message, Where::default())
}

fn group_location(set: &ComparisonSet, group: &Group) -> Where {
    Where { population: Some(group.population.clone()), year: set.year, ..Where::default() }
}

fn group_name(set: &ComparisonSet, group: &Group) -> String {
    match set.year {
        None => format!("population {}", group.population),
        Some(year) => format!("group {} {year}", group.population),
    }
}

fn small_group_findings(set: &ComparisonSet) -> Vec<Finding> {
    set.groups
        .iter()
        .filter(|g| g.samples.len() < LOW_SAMPLE_SIZE)
        .map(|g| {
            Finding::warning(
                "low-sample-size",
                format!(
                    "{} has {} samples, fewer than {LOW_SAMPLE_SIZE}: its FST, D and G″ST estimates are imprecise \
                     and the permutation test has little power",
                    group_name(set, g),
                    g.samples.len()
                ),
                group_location(set, g),
            )
        })
        .collect()
}

/// One finding per group with loci typed in none of its individuals (dropped from every
/// comparison with that group).
fn untyped_locus_findings(view: &GenotypeView<'_>, set: &SetEstimates<'_>) -> Vec<Finding> {
    let mut findings = Vec::new();
    for (group, counts) in set.set.groups.iter().zip(&set.counts) {
        let untyped: Vec<&str> = counts
            .iter()
            .enumerate()
            .filter(|(_, c)| c.typed == 0)
            .map(|(locus, _)| view.locus(locus).name.as_str())
            .collect();
        if untyped.is_empty() || set.set.groups.len() < 2 {
            continue;
        }
        findings.push(Finding::info(
            "locus-untyped-in-group",
            format!(
                "{} is untyped at {} locus/loci ({}): they are left out of every comparison with it and of the \
                 global estimate",
                group_name(set.set, group),
                untyped.len(),
                list_names(&untyped)
            ),
            group_location(set.set, group),
        ));
    }
    findings
}

fn list_names(names: &[&str]) -> String {
    let mut listed = names.iter().take(LOCI_LISTED).copied().collect::<Vec<_>>().join(", ");
    if names.len() > LOCI_LISTED {
        listed.push_str(&format!(" and {} more", names.len() - LOCI_LISTED));
    }
    listed
}

/// Findings for a comparison whose θ̂ or whose D, G′ST or G″ST is undefined.
fn undefined_findings(estimate: &ComparisonEstimate, what: &str, year: Option<i32>) -> Vec<Finding> {
    let location = || Where { year, ..Where::default() };
    let mut findings = Vec::new();
    if estimate.theta.is_none() {
        findings.push(Finding::warning(
            "fst-undefined",
            format!(
                "{what}: FST is undefined (null) because no locus typed in both groups is polymorphic there, or \
                 no locus has more than one typed individual per group on average ({} loci usable)",
                estimate.loci.len()
            ),
            location(),
        ));
    }
    let i = &estimate.indices;
    if i.jost_d.is_none() || i.gst_prime.is_none() || i.gst_double_prime.is_none() {
        let reason = if estimate.polymorphic_loci == 0 {
            "no locus is polymorphic in the compared groups with at least two typed individuals per group on \
             average"
                .to_string()
        } else {
            format!(
                "over its {} polymorphic loci the within-group diversity HS averages 1 (every gene copy distinct, \
                 alleles confined to single groups) or k·HT = HS, so the measure has a zero denominator",
                estimate.polymorphic_loci
            )
        };
        findings.push(Finding::warning(
            "differentiation-undefined",
            format!("{what}: Jost's D, G′ST or G″ST is undefined (null): {reason}"),
            location(),
        ));
    }
    findings
}

fn caution_finding() -> Finding {
    Finding::info(
        "differentiation-caution",
        "FST, D and G″ST are estimates with sampling uncertainty (see the intervals); pairwise p-values are not \
         adjusted for the number of pairs; a significant difference is not by itself evidence of separate \
         management units. Decisions on translocation or management units follow the local regulatory framework \
         and review by a qualified geneticist.",
        Where::default(),
    )
}
