//! The findings of `hwe`: untestable loci (one finding per kind, listing them), Monte Carlo
//! use, the false-discovery family and the null-allele indication.

use popgauge_abi::{Finding, GenotypeView, Group, Where};

use crate::special_values::listing;
use crate::stats::hwe_exact::{TestMethod, TestSettings};
use crate::stats::hwe_groups::{DeficitEvidence, GroupTests, NULL_ALLELE_R, SIGNIFICANT_Q, Untested};

pub(super) fn collect(
    view: &GenotypeView<'_>,
    groups: &[Group],
    results: &[GroupTests],
    family_size: usize,
    settings: &TestSettings,
) -> Vec<Finding> {
    let mut findings = Vec::new();
    findings.extend(untested(view, groups, results, Untested::Monomorphic));
    findings.extend(untested(view, groups, results, Untested::TooFewTyped));
    findings.extend(untested(view, groups, results, Untested::NoDraws));
    findings.extend(monte_carlo_used(results, settings));
    findings.push(fdr_family(family_size));
    findings.extend(null_allele_indications(view, groups, results));
    findings
}

fn untested(view: &GenotypeView<'_>, groups: &[Group], results: &[GroupTests], why: Untested) -> Option<Finding> {
    let items: Vec<String> = groups
        .iter()
        .zip(results)
        .flat_map(|(group, tests)| {
            tests
                .iter()
                .enumerate()
                .filter(move |(_, t)| t.outcome.as_ref().err() == Some(&why))
                .map(move |(locus, _)| format!("{} in {} {}", view.locus(locus).name, group.population, group.year))
        })
        .collect();
    if items.is_empty() {
        return None;
    }
    let (code, reason) = match why {
        Untested::Monomorphic => ("hwe-monomorphic", "are monomorphic in the group, so there is nothing to test"),
        Untested::TooFewTyped => (
            "hwe-too-few-typed",
            "have fewer than two typed individuals in the group (ho, he, direction and null_allele_r are null there \
             too)",
        ),
        Untested::NoDraws => (
            "hwe-untested",
            "have too many genotype tables to enumerate and `permutations` is 0; set `permutations` (e.g. 10000) \
             to test them by Monte Carlo",
        ),
    };
    Some(Finding::info(
        code,
        format!("{} locus–group combinations {reason}; their p-values are null: {}", items.len(), listing(&items)),
        Where::default(),
    ))
}

fn monte_carlo_used(results: &[GroupTests], settings: &TestSettings) -> Option<Finding> {
    let count = results
        .iter()
        .flatten()
        .filter(|t| t.outcome.as_ref().is_ok_and(|o| o.method == TestMethod::MonteCarlo))
        .count();
    (count > 0).then(|| {
        Finding::info(
            "hwe-monte-carlo",
            format!(
                "{count} multi-allelic tests had too many genotype tables to enumerate and were estimated from {} random \
                 tables each drawn from the step seed (method = monte-carlo): p = (b + 1)/(B + 1), with its standard \
                 error in p_se",
                settings.permutations
            ),
            Where::default(),
        )
    })
}

fn fdr_family(family_size: usize) -> Finding {
    Finding::info(
        "fdr-family",
        format!(
            "q-values are Benjamini–Hochberg (1995) over all m = {family_size} locus × group tests of this step; \
             by_group combines each group's loci by Fisher's method, which assumes independent loci and is \
             conservative with exact p-values"
        ),
        Where::default(),
    )
}

fn null_allele_indications(view: &GenotypeView<'_>, groups: &[Group], results: &[GroupTests]) -> Vec<Finding> {
    (0..view.n_loci())
        .filter_map(|locus| {
            let evidence = DeficitEvidence::at(results, locus);
            if !evidence.flagged() {
                return None;
            }
            let (flagged, tested) = (&evidence.significant, &evidence.tested);
            let names: Vec<String> =
                flagged.iter().map(|&g| format!("{} {}", groups[g].population, groups[g].year)).collect();
            let name = &view.locus(locus).name;
            Some(Finding::warning(
                "possible-null-allele",
                format!(
                    "locus {name} shows a significant heterozygote deficit (q < {SIGNIFICANT_Q}) with Brookfield's \
                     r ≥ {NULL_ALLELE_R} in {} of the {} groups where it was tested ({}): possibly a null allele. \
                     Inbreeding or a Wahlund effect raise the deficit too, so this is an indication only; check the \
                     locus's amplification before relying on it",
                    flagged.len(),
                    tested.len(),
                    names.join(", ")
                ),
                Where::locus(name),
            ))
        })
        .collect()
}
