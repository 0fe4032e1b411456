//! The findings of `diversity`: small groups, few loci, loci where estimates are null, and the
//! conventions of F, FIS and rarefaction. Lists of loci go into one finding each, never one
//! finding per locus.

use popgauge_abi::{Finding, FindingLevel, GenotypeView, Table, Where};

use super::richness::Richness;
use super::{FEW_LOCI, GroupEstimates, LOW_SAMPLE_SIZE, Params};
use crate::special_values::{explain, group_name as row_group, listing, rows_where};

pub(super) fn collect(
    view: &GenotypeView<'_>,
    groups: &[GroupEstimates],
    richness: &Richness,
    params: &Params,
) -> Vec<Finding> {
    let mut findings = Vec::new();
    for estimates in groups {
        findings.extend(group_size_findings(estimates));
    }
    findings.extend(too_few_typed(view, groups));
    findings.extend(monomorphic_in_group(view, groups));
    findings.extend(rarefaction_exclusions(view, groups, richness));
    findings.push(rarefaction_size(groups, richness));
    findings.extend(private_comparisons(groups, richness));
    findings.extend(alone_in_year(groups, richness));
    findings.push(fis_interval(params.bootstrap));
    findings.push(f_definition());
    findings
}

fn group_name(estimates: &GroupEstimates) -> String {
    format!("{} {}", estimates.group.population, estimates.group.year)
}

fn group_size_findings(estimates: &GroupEstimates) -> Vec<Finding> {
    let group = &estimates.group;
    let location = || Where::group(&group.population, group.year);
    let name = group_name(estimates);
    let usable_loci = estimates.summarise().usable_loci;
    let mut findings = Vec::new();
    if group.samples.len() < LOW_SAMPLE_SIZE {
        findings.push(Finding::warning(
            "low-sample-size",
            format!(
                "group {name} has {} samples, fewer than {LOW_SAMPLE_SIZE}: its heterozygosity, F and FIS are imprecise",
                group.samples.len()
            ),
            location(),
        ));
    }
    if usable_loci < FEW_LOCI {
        findings.push(Finding::warning(
            "few-loci",
            format!(
                "group {name} has {usable_loci} loci typed in at least two individuals, fewer than {FEW_LOCI}: \
                 its mean heterozygosity, F and FIS rest on few loci"
            ),
            location(),
        ));
    }
    findings
}

fn too_few_typed(view: &GenotypeView<'_>, groups: &[GroupEstimates]) -> Option<Finding> {
    let items: Vec<String> = groups
        .iter()
        .flat_map(|g| {
            g.loci.iter().enumerate().filter(|(_, l)| !l.heterozygosity.is_usable()).map(move |(locus, l)| {
                format!("{} in {} ({} typed)", view.locus(locus).name, group_name(g), l.heterozygosity.typed)
            })
        })
        .collect();
    (!items.is_empty()).then(|| {
        Finding::info(
            "too-few-typed",
            format!(
                "{} locus–group combinations have fewer than two typed individuals, so Ho, He, F, FIS and the \
                 effective number of alleles are null there and the locus is left out of that group's means: {}",
                items.len(),
                listing(&items)
            ),
            Where::default(),
        )
    })
}

fn monomorphic_in_group(view: &GenotypeView<'_>, groups: &[GroupEstimates]) -> Option<Finding> {
    let items: Vec<String> = groups
        .iter()
        .flat_map(|g| {
            g.loci
                .iter()
                .enumerate()
                .filter(|(_, l)| l.heterozygosity.is_usable() && l.heterozygosity.distinct_alleles == 1)
                .map(move |(locus, _)| format!("{} in {}", view.locus(locus).name, group_name(g)))
        })
        .collect();
    (!items.is_empty()).then(|| {
        Finding::info(
            "monomorphic-in-group",
            format!(
                "{} locus–group combinations are monomorphic (Ho = He = 0), so F and FIS are null there; they add \
                 nothing to a group's ratio of sums: {}",
                items.len(),
                listing(&items)
            ),
            Where::default(),
        )
    })
}

fn rarefaction_exclusions(view: &GenotypeView<'_>, groups: &[GroupEstimates], richness: &Richness) -> Vec<Finding> {
    let mut findings = Vec::new();
    for (estimates, _) in groups.iter().zip(&richness.compared).filter(|(_, compared)| !**compared) {
        findings.push(Finding::warning(
            "rarefaction-group-excluded",
            format!(
                "group {} has {} sample(s), fewer than two: it is left out of the rarefaction comparison and its \
                 ar and par are null",
                group_name(estimates),
                estimates.group.samples.len()
            ),
            Where::group(&estimates.group.population, estimates.group.year),
        ));
    }
    let dropped = &richness.all_groups.dropped;
    if !dropped.is_empty() {
        let needed = richness.requested.map_or("two".to_string(), |s| s.to_string());
        let items: Vec<String> = dropped
            .iter()
            .map(|d| {
                let short: Vec<String> =
                    d.short.iter().map(|&(g, n)| format!("{} has {n}", group_name(&groups[g]))).collect();
                format!("{} ({})", view.locus(d.locus).name, short.join("; "))
            })
            .collect();
        findings.push(Finding::warning(
            "rarefaction-loci-dropped",
            format!(
                "{} loci are left out of ar for every group, and of par for every population sampled in the same \
                 year as a group named, because a compared group has fewer than {needed} typed individuals there: \
                 {}. Set `rarefaction_size` lower, or remove the locus, to keep them",
                items.len(),
                listing(&items)
            ),
            Where::default(),
        ));
    }
    findings
}

/// "g = 24 gene copies" or "g = 20 to 24 gene copies", and "12 loci rarefied"; `None` when no
/// locus was rarefied.
fn copies_range(copies: &[Option<u32>]) -> Option<(String, String)> {
    let copies: Vec<u32> = copies.iter().flatten().copied().collect();
    let loci = match copies.len() {
        1 => "1 locus rarefied".to_string(),
        n => format!("{n} loci rarefied"),
    };
    match (copies.iter().min(), copies.iter().max()) {
        (Some(low), Some(high)) if low == high => Some((format!("g = {low} gene copies"), loci)),
        (Some(low), Some(high)) => Some((format!("g = {low} to {high} gene copies"), loci)),
        _ => None,
    }
}

/// How g is chosen, among `among`.
fn rarefaction_rule(richness: &Richness, among: &str) -> String {
    match richness.requested {
        Some(s) => format!("2 × rarefaction_size = {} gene copies at every locus", 2 * s),
        None => format!("2 × the smallest number of typed individuals among {among} at each locus"),
    }
}

fn rarefaction_size(groups: &[GroupEstimates], richness: &Richness) -> Finding {
    let compared = richness.all_groups.members.len();
    let range = match copies_range(&richness.all_groups.copies) {
        Some((range, loci)) => format!("{range} ({loci})"),
        None => "no locus could be rarefied".into(),
    };
    Finding::info(
        "rarefaction-size",
        format!(
            "ar is rarefied to {} (Hurlbert 1971; El Mousadik & Petit 1996) over all population–year groups with at \
             least two samples ({compared} of {} groups), so it is on one scale across populations and years; \
             {range}. par, the private allelic richness (Kalinowski 2004), compares only the populations sampled in \
             the same year and is rarefied among them (par_rarefaction_copies): an allele a population carries in \
             two sampling years is still private to it",
            rarefaction_rule(richness, "the compared groups"),
            groups.len()
        ),
        Where::default(),
    )
}

/// One info finding per sampling year with at least two populations compared, naming them and g.
fn private_comparisons(groups: &[GroupEstimates], richness: &Richness) -> Vec<Finding> {
    richness
        .years
        .iter()
        .filter(|set| set.compares())
        .map(|set| {
            let names: Vec<&str> = set.rarefied.members.iter().map(|&g| groups[g].group.population.as_str()).collect();
            let rule = rarefaction_rule(richness, "these populations");
            let at = match copies_range(&set.rarefied.copies) {
                Some((range, loci)) => format!("at {range} ({loci}; g = {rule})"),
                None => "but no locus could be rarefied (see rarefaction-loci-dropped), so par is null".to_string(),
            };
            Finding::info(
                "par-comparison",
                format!(
                    "private allelic richness in {} compares {} {at}; par of a population is the expected number of \
                     alleles in g of its gene copies that are absent from g copies of each other population listed",
                    set.year,
                    names.join(", ")
                ),
                Where { year: Some(set.year), ..Where::default() },
            )
        })
        .collect()
}

/// The groups compared for allelic richness with no other population of their year compared:
/// their par is null.
fn alone_in_year(groups: &[GroupEstimates], richness: &Richness) -> Option<Finding> {
    let alone: Vec<String> =
        (0..groups.len()).filter(|&g| richness.alone_in_year(g)).map(|g| group_name(&groups[g])).collect();
    (!alone.is_empty()).then(|| {
        Finding::info(
            "par-alone-in-year",
            format!(
                "{} group(s) are the only population with at least two samples in their sampling year, so their par \
                 is null: private allelic richness compares populations sampled in the same year, and a population \
                 is not compared with its own other years: {}",
                alone.len(),
                listing(&alone)
            ),
            Where::default(),
        )
    })
}

fn fis_interval(replicates: u32) -> Finding {
    let text = if replicates == 0 {
        "fis_low and fis_high are null: the bootstrap is off (bootstrap = 0)".to_string()
    } else {
        format!(
            "fis_low and fis_high are the 2.5th and 97.5th percentiles of {replicates} bootstrap replicates over loci \
             (drawn from the step seed; fis_replicates counts the defined ones). The interval reflects the sampling \
             of loci only; F and FIS are estimates with uncertainty, to be read with their interval and reviewed by a \
             qualified geneticist before they inform management"
        )
    };
    Finding::info("fis-interval", text, Where::default())
}

fn f_definition() -> Finding {
    Finding::info(
        "f-definition",
        "F of a group is 1 − ΣHo/ΣHe over the loci typed in at least two of its individuals, with He the unbiased \
         expected heterozygosity of Nei (1978); per locus F = 1 − Ho/He is null where He = 0. FIS is Weir & \
         Cockerham's (1984) 1 − Σc/Σ(b + c) over the same loci, equal to 1 − ΣHo/ΣHe* with the Nei–Chesser He*, so \
         F and FIS differ slightly in small samples",
        Where::default(),
    )
}

/// The findings for `by_group` rows whose F and FIS, or whose FIS interval, are null although
/// the group has usable loci (a group without any has its `few-loci` finding).
pub(super) fn undefined_in_groups(by_group: &Table, bootstrap: u32) -> Vec<Finding> {
    let without_diversity = rows_where(by_group, |r| r.is_finite("he") && r.is_null("fis"), row_group);
    let without_interval = rows_where(
        by_group,
        |r| bootstrap > 0 && r.is_finite("fis") && r.is_null("fis_low"),
        |r| format!("{} ({} defined replicates)", row_group(r), r.text("fis_replicates")),
    );
    let findings = [
        explain(FindingLevel::Info, "group-f-undefined", &without_diversity, |n, list| {
            format!(
                "{n} group(s) are monomorphic at every usable locus (ΣHe = 0), so their f, fis and FIS interval are \
                 null: {list}"
            )
        }),
        explain(FindingLevel::Info, "fis-interval-undefined", &without_interval, |n, list| {
            format!(
                "{n} group(s) have fis but a null fis_low and fis_high: fewer than two bootstrap replicates were \
                 defined (a replicate drawing only loci monomorphic in the group is undefined); raise `bootstrap` or \
                 type more polymorphic loci: {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}
