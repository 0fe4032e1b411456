//! The `by_locus` and `by_group` tables of `diversity`.

use popgauge_abi::{Cell, GenotypeView, StepError, Table};

use super::richness::Richness;
use super::{FisInterval, GroupEstimates, count_cell};

/// One row per group and view locus.
pub(super) fn by_locus(
    view: &GenotypeView<'_>,
    groups: &[GroupEstimates],
    richness: &Richness,
) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "year",
        "locus",
        "n",
        "alleles",
        "ho",
        "he",
        "f",
        "fis",
        "effective_alleles",
        "ar",
        "par",
        "rarefaction_copies",
        "par_rarefaction_copies",
    ]);
    for (g, estimates) in groups.iter().enumerate() {
        for (locus, estimate) in estimates.loci.iter().enumerate() {
            let het = &estimate.heterozygosity;
            let richness_here = richness.richness_at(g, locus);
            let private_here = richness.private_at(g, locus);
            table.push_row(vec![
                Cell::text(&estimates.group.population),
                Cell::Int(estimates.group.year.into()),
                Cell::text(&view.locus(locus).name),
                Cell::Int(het.typed.into()),
                count_cell(het.distinct_alleles),
                Cell::maybe(het.observed),
                Cell::maybe(het.expected),
                Cell::maybe(het.inbreeding()),
                Cell::maybe(estimate.components.and_then(|k| k.f_is())),
                Cell::maybe(estimate.effective_alleles),
                Cell::maybe(richness_here.map(|r| r.0)),
                Cell::maybe(private_here.map(|p| p.0)),
                copies_cell(richness_here.map(|r| r.1)),
                copies_cell(private_here.map(|p| p.1)),
            ])?;
        }
    }
    Ok(table)
}

/// One row per group.
pub(super) fn by_group(
    groups: &[GroupEstimates],
    richness: &Richness,
    intervals: &[FisInterval],
) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "year",
        "n",
        "loci",
        "ho",
        "he",
        "f",
        "fis",
        "fis_low",
        "fis_high",
        "fis_replicates",
        "alleles_mean",
        "effective_alleles",
        "ar",
        "par",
        "rarefaction_copies",
        "par_rarefaction_copies",
    ]);
    for (g, (estimates, interval)) in groups.iter().zip(intervals).enumerate() {
        let summary = estimates.summarise();
        let rarefied = richness.group(g);
        table.push_row(vec![
            Cell::text(&estimates.group.population),
            Cell::Int(estimates.group.year.into()),
            count_cell(estimates.group.samples.len()),
            count_cell(summary.usable_loci),
            Cell::maybe(summary.observed_mean),
            Cell::maybe(summary.expected_mean),
            Cell::maybe(summary.inbreeding),
            Cell::maybe(summary.fis),
            Cell::maybe(interval.interval.map(|i| i.low)),
            Cell::maybe(interval.interval.map(|i| i.high)),
            count_cell(interval.replicates),
            Cell::maybe(summary.alleles_mean),
            Cell::maybe(summary.effective_alleles_mean),
            Cell::maybe(rarefied.richness),
            Cell::maybe(rarefied.private_richness),
            copies_cell(rarefied.smallest_copies),
            copies_cell(rarefied.smallest_private_copies),
        ])?;
    }
    Ok(table)
}

fn copies_cell(copies: Option<u32>) -> Cell {
    copies.map_or(Cell::Null, |c| Cell::Int(c.into()))
}
