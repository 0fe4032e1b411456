//! The `by_locus` and `by_group` tables of `hwe`.

use popgauge_abi::{Cell, GenotypeView, Group, StepError, Table};

use super::{GroupTests, count_cell};
use crate::stats::fdr::FisherCombination;

/// One row per group and view locus.
pub(super) fn by_locus(view: &GenotypeView<'_>, groups: &[Group], results: &[GroupTests]) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "year",
        "locus",
        "n",
        "alleles",
        "method",
        "draws",
        "p_value",
        "p_se",
        "p_mid",
        "p_deficit",
        "p_excess",
        "q_value",
        "direction",
        "ho",
        "he",
        "null_allele_r",
    ]);
    for (group, tests) in groups.iter().zip(results) {
        for (locus, test) in tests.iter().enumerate() {
            let outcome = test.outcome.as_ref().ok();
            let value = |pick: fn(&crate::stats::hwe_exact::HweTest) -> f64| Cell::maybe(outcome.map(pick));
            table.push_row(vec![
                Cell::text(&group.population),
                Cell::Int(group.year.into()),
                Cell::text(&view.locus(locus).name),
                Cell::Int(test.heterozygosity.typed.into()),
                count_cell(test.heterozygosity.distinct_alleles),
                outcome.map_or(Cell::Null, |t| Cell::text(t.method.as_str())),
                outcome.map_or(Cell::Null, |t| Cell::Int(t.draws.into())),
                value(|t| t.p_value),
                value(|t| t.standard_error),
                value(|t| t.p_mid),
                value(|t| t.p_deficit),
                value(|t| t.p_excess),
                Cell::maybe(test.q_value),
                test.direction.map_or(Cell::Null, |d| Cell::text(d.as_str())),
                Cell::maybe(test.heterozygosity.observed),
                Cell::maybe(test.heterozygosity.expected),
                Cell::maybe(test.null_allele_r()),
            ])?;
        }
    }
    Ok(table)
}

/// One row per group: Fisher's combination over the loci tested there.
pub(super) fn by_group(
    groups: &[Group],
    results: &[GroupTests],
    combined: &[Option<FisherCombination>],
) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "year", "loci_tested", "chi2", "df", "p_value"]);
    for ((group, tests), fisher) in groups.iter().zip(results).zip(combined) {
        table.push_row(vec![
            Cell::text(&group.population),
            Cell::Int(group.year.into()),
            count_cell(tests.iter().filter(|t| t.outcome.is_ok()).count()),
            Cell::maybe(fisher.map(|f| f.chi_square)),
            fisher.map_or(Cell::Null, |f| Cell::Int(f.degrees_of_freedom.into())),
            Cell::maybe(fisher.map(|f| f.p_value)),
        ])?;
    }
    Ok(table)
}
