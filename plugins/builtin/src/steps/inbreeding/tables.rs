//! The tables of `inbreeding` (columns in the module doc of [`super`]).

use popgauge_abi::{Cell, GenotypeView, Group, StepError, Table};

use super::disequilibrium::IdentityDisequilibrium;
use super::measures::Tallies;
use super::roh::{BP_PER_MB, PanelRuns, Run, class_lengths};
use crate::stats::mean;

/// The columns of `individuals`, in order.
pub(super) const INDIVIDUAL_COLUMNS: [&str; 17] = [
    "sample",
    "population",
    "year",
    "loci",
    "f_hom",
    "f_uni",
    "f_roh",
    "roh_count",
    "roh_length_mb",
    "smlh",
    "ir",
    "hl",
    "loci_biallelic",
    "f_grm",
    "roh_lt2_mb",
    "roh_2to8_mb",
    "roh_gt8_mb",
];

/// The measures summarised per group, as `individuals` names them.
pub(super) const SUMMARISED: [&str; 7] = ["f_hom", "f_uni", "f_grm", "f_roh", "smlh", "ir", "hl"];

fn count(value: usize) -> Cell {
    Cell::Int(i64::try_from(value).unwrap_or(i64::MAX))
}

pub(super) fn individuals(view: &GenotypeView<'_>, tallies: &Tallies, runs: &PanelRuns) -> Result<Table, StepError> {
    let mut table = Table::new(&INDIVIDUAL_COLUMNS);
    for (sample, tally) in tallies.individuals.iter().enumerate() {
        let meta = view.sample(sample);
        let typed = tally.typed > 0;
        let own = &runs.runs[sample];
        let roh = runs.available().then(|| {
            let total: u64 = own.iter().map(Run::length_bp).sum();
            (own.len(), total as f64 / BP_PER_MB, class_lengths(own))
        });
        let roh_cell = |pick: fn(&(usize, f64, [f64; 3])) -> f64| Cell::maybe(roh.as_ref().map(pick));
        table.push_row(vec![
            Cell::text(&meta.id),
            Cell::text(&meta.population),
            Cell::Int(meta.year.into()),
            Cell::Int(tally.typed.into()),
            Cell::maybe(tally.yang(1)),
            Cell::maybe(tally.yang(2)),
            Cell::maybe(runs.f_roh(sample)),
            roh.as_ref().map_or(Cell::Null, |r| count(r.0)),
            roh_cell(|r| r.1),
            Cell::maybe(tally.smlh().filter(|_| typed)),
            Cell::maybe(tally.internal_relatedness()),
            Cell::maybe(tally.homozygosity_by_locus()),
            Cell::Int(tally.biallelic.into()),
            Cell::maybe(tally.yang(0)),
            roh_cell(|r| r.2[0]),
            roh_cell(|r| r.2[1]),
            roh_cell(|r| r.2[2]),
        ])?;
    }
    Ok(table)
}

pub(super) fn runs(view: &GenotypeView<'_>, runs: &PanelRuns) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "sample",
        "population",
        "year",
        "chromosome",
        "start",
        "end",
        "length_mb",
        "snps",
        "het_calls",
        "missing_calls",
    ]);
    for (sample, found) in runs.runs.iter().enumerate() {
        let meta = view.sample(sample);
        for run in found {
            table.push_row(vec![
                Cell::text(&meta.id),
                Cell::text(&meta.population),
                Cell::Int(meta.year.into()),
                Cell::text(&runs.panel.chromosomes[run.chromosome]),
                Cell::Int(i64::try_from(run.start).unwrap_or(i64::MAX)),
                Cell::Int(i64::try_from(run.end).unwrap_or(i64::MAX)),
                Cell::number(run.length_mb()),
                Cell::Int(run.snps.into()),
                Cell::Int(run.heterozygous.into()),
                Cell::Int(run.missing.into()),
            ])?;
        }
    }
    Ok(table)
}

pub(super) fn panel(view: &GenotypeView<'_>, runs: &PanelRuns) -> Result<Table, StepError> {
    let mut table = Table::new(&["loci", "loci_placed", "chromosomes", "length_mb"]);
    table.push_row(vec![
        count(view.n_loci()),
        count(runs.panel.placed_loci()),
        count(runs.panel.chromosomes.len()),
        Cell::number(runs.panel.length_bp() as f64 / BP_PER_MB),
    ])?;
    Ok(table)
}

/// Sample standard deviation (n − 1); `None` for fewer than two values.
fn standard_deviation(values: &[f64]) -> Option<f64> {
    if values.len() < 2 {
        return None;
    }
    let centre = mean(values.iter().copied())?;
    let squares: f64 = values.iter().map(|v| (v - centre).powi(2)).sum();
    Some((squares / (values.len() - 1) as f64).sqrt())
}

/// The columns of `groups`, in order.
pub(super) fn group_columns() -> Vec<String> {
    let mut columns: Vec<String> = ["population", "year", "n"].iter().map(|c| c.to_string()).collect();
    for measure in SUMMARISED {
        columns.push(format!("{measure}_mean"));
        columns.push(format!("{measure}_sd"));
    }
    columns.extend(
        ["g2_loci", "g2", "g2_low", "g2_high", "g2_replicates", "g2_p", "g2_permutations"]
            .iter()
            .map(|c| c.to_string()),
    );
    columns
}

/// Group means and sds read from `individuals` itself, so they are the mean of what it shows.
pub(super) fn groups(
    groups: &[Group],
    individuals: &Table,
    disequilibria: &[IdentityDisequilibrium],
) -> Result<Table, StepError> {
    let columns = group_columns();
    let names: Vec<&str> = columns.iter().map(String::as_str).collect();
    let mut table = Table::new(&names);
    for (group, id) in groups.iter().zip(disequilibria) {
        let mut row = vec![Cell::text(&group.population), Cell::Int(group.year.into()), count(group.samples.len())];
        for measure in SUMMARISED {
            let index = individuals.column(measure).expect("the individuals table has every summarised column");
            let values: Vec<f64> = group.samples.iter().filter_map(|&s| individuals.rows[s][index].as_f64()).collect();
            row.push(Cell::maybe(mean(values.iter().copied())));
            row.push(Cell::maybe(standard_deviation(&values)));
        }
        row.extend([
            count(id.loci),
            Cell::maybe(id.g2),
            Cell::maybe(id.interval.map(|i| i.low)),
            Cell::maybe(id.interval.map(|i| i.high)),
            count(id.replicates),
            Cell::maybe(id.test.map(|t| t.p_value())),
            id.test.map_or(Cell::Null, |t| count(t.replicates)),
        ]);
        table.push_row(row)?;
    }
    Ok(table)
}
