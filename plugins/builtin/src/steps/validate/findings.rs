//! The findings and messages of `validate` that do not belong to one check: an empty view,
//! bad cells per column, duplicate sample ids, loci or samples none of which are kept, and the
//! wording helpers they share.

use std::collections::BTreeMap;

use popgauge_abi::{Finding, GenotypeView, StepError, Where, format_number};

use super::MonomorphicPass;

pub(super) fn refuse_empty_view(view: &GenotypeView<'_>) -> Result<(), StepError> {
    if view.n_samples() == 0 {
        return Err(StepError::new("there are no samples to validate: the genotype data hold no sample rows"));
    }
    if view.n_loci() == 0 {
        return Err(StepError::new("there are no loci to validate: the genotype data hold no locus columns"));
    }
    Ok(())
}

/// Check 1: reader findings per column name (the wide reader's column of a bad cell is its locus).
pub(super) fn bad_cells_per_column(input_findings: &[Finding]) -> BTreeMap<&str, usize> {
    let mut counts = BTreeMap::new();
    for column in input_findings.iter().filter_map(|f| f.location.column.as_deref()) {
        *counts.entry(column).or_insert(0) += 1;
    }
    counts
}

/// Check 2.
pub(super) fn duplicate_id_findings(view: &GenotypeView<'_>) -> Vec<Finding> {
    let mut occurrences: BTreeMap<&str, usize> = BTreeMap::new();
    for s in 0..view.n_samples() {
        *occurrences.entry(view.sample(s).id.as_str()).or_insert(0) += 1;
    }
    occurrences
        .into_iter()
        .filter(|&(_, count)| count > 1)
        .map(|(id, count)| {
            Finding::error(
                "duplicate-sample-id",
                format!(
                    "sample id \"{id}\" appears {count} times; ids must be unique. All {count} stay in the \
                     analysis as separate samples: give each its own id, or remove the repeated rows"
                ),
                Where::sample(id),
            )
        })
        .collect()
}

pub(super) fn monomorphic_reason(pass: MonomorphicPass, alleles: usize) -> String {
    match (pass, alleles) {
        (MonomorphicPass::WholeDataSet, 0) => "not typed in any sample".into(),
        (MonomorphicPass::WholeDataSet, _) => "monomorphic in the whole data set".into(),
        (MonomorphicPass::KeptSamples, 0) => "not typed in any of the samples kept after the sample checks".into(),
        (MonomorphicPass::KeptSamples, _) => "monomorphic in the samples kept after the sample checks".into(),
    }
}

pub(super) fn no_loci_kept_finding() -> Finding {
    Finding::error(
        "no-loci-kept",
        "no locus passed the polymorphism check (every locus has one allele or none in the data), so samples \
         cannot be judged and no estimate can follow; check the locus columns",
        Where::default(),
    )
}

pub(super) fn no_loci_left_finding(max_missing: f64) -> Finding {
    Finding::error(
        "no-loci-kept",
        format!(
            "no locus passed the missingness check: every locus is untyped in more than max_missing_locus = {} of \
             the samples kept after the sample checks, so no estimate can follow; raise max_missing_locus or check \
             the locus columns",
            format_number(max_missing)
        ),
        Where::default(),
    )
}

pub(super) fn no_samples_kept_finding() -> Finding {
    Finding::error(
        "no-samples-kept",
        "no sample passed the sample checks (untyped groups, missingness, group size), so loci cannot be judged \
         (missing is null in the loci table) and no estimate can follow; raise max_missing_sample or lower \
         min_group_size, or check the genotype data",
        Where::default(),
    )
}

pub(super) fn duplicate_check_skipped_finding(kept_loci: usize, min_loci: usize) -> Finding {
    Finding::info(
        "duplicate-check-skipped",
        format!(
            "duplicate genotypes were not looked for: {kept_loci} loci are kept, fewer than \
             min_loci_for_duplicates = {min_loci}, too few for identical genotypes to mean the same individual"
        ),
        Where::default(),
    )
}

/// "a", "a and b", "a, b and c".
pub(super) fn and_list(items: &[&str]) -> String {
    match items {
        [] => String::new(),
        [one] => (*one).to_string(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// A share as a percentage with at most one decimal, e.g. `35%`, `33.3%`.
pub(super) fn percent(share: f64) -> String {
    format!("{}%", format_number((share * 1000.0).round() / 10.0))
}
