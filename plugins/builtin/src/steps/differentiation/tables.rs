//! The tables of `differentiation`: `pairwise` and `global` (one row per pair or comparison
//! set, with intervals and the permutation test), and `ibd` and `ibd_test` (isolation by
//! distance), with the cell conventions they share (`pooled` years, null intervals).

use popgauge_abi::{Cell, StepError, Table};

use crate::stats::bootstrap::Interval;

use super::SetEstimates;
use super::ibd::IsolationByDistance;
use super::pairs::ComparisonEstimate;

pub(super) fn year_key(year: Option<i32>) -> String {
    year.map_or_else(|| "pooled".to_string(), |y| y.to_string())
}

fn year_cell(year: Option<i32>) -> Cell {
    year.map_or(Cell::Null, |y| Cell::Int(y.into()))
}

/// A count as a table integer (counts never approach `i64::MAX`).
fn count_cell(count: usize) -> Cell {
    Cell::Int(i64::try_from(count).unwrap_or(i64::MAX))
}

/// The lower bound of an interval as a table cell (`null` without an interval).
pub(super) fn low(interval: Option<Interval>) -> Cell {
    Cell::maybe(interval.map(|i| i.low))
}

/// The upper bound of an interval as a table cell (`null` without an interval).
pub(super) fn high(interval: Option<Interval>) -> Cell {
    Cell::maybe(interval.map(|i| i.high))
}

pub(super) fn pairwise_table(estimates: &[SetEstimates<'_>]) -> Result<Table, StepError> {
    let mut table = with_gene_diversity_columns(&[
        "pop_a",
        "pop_b",
        "year",
        "n_a",
        "n_b",
        "loci",
        "fst",
        "fst_low",
        "fst_high",
        "fst_p",
        "permutations",
    ]);
    for set in estimates {
        for pair in &set.pairs {
            let (group_a, group_b) = (&set.set.groups[pair.a], &set.set.groups[pair.b]);
            let e = &pair.estimate;
            let mut cells = vec![
                Cell::text(&group_a.population),
                Cell::text(&group_b.population),
                year_cell(set.set.year),
                count_cell(group_a.samples.len()),
                count_cell(group_b.samples.len()),
                count_cell(e.loci.len()),
                Cell::maybe(e.theta),
                low(e.intervals.fst),
                high(e.intervals.fst),
                Cell::maybe(pair.permutation.map(|p| p.p_value())),
                pair.permutation.map_or(Cell::Null, |p| count_cell(p.replicates)),
            ];
            cells.extend(gene_diversity_cells(e));
            table.push_row(cells)?;
        }
    }
    Ok(table)
}

pub(super) fn global_table(estimates: &[SetEstimates<'_>]) -> Result<Table, StepError> {
    let mut table = with_gene_diversity_columns(&[
        "comparison",
        "year",
        "populations",
        "samples",
        "loci",
        "fst",
        "fst_low",
        "fst_high",
        "bootstrap",
    ]);
    for set in estimates {
        let Some(e) = &set.global else { continue };
        let mut cells = vec![
            Cell::text(set.set.describe()),
            year_cell(set.set.year),
            count_cell(set.set.groups.len()),
            count_cell(set.set.groups.iter().map(|g| g.samples.len()).sum()),
            count_cell(e.loci.len()),
            Cell::maybe(e.theta),
            low(e.intervals.fst),
            high(e.intervals.fst),
            count_cell(e.bootstrap_replicates),
        ];
        cells.extend(gene_diversity_cells(e));
        table.push_row(cells)?;
    }
    Ok(table)
}

/// Jost's D and the G_ST family with their intervals: the last columns of `pairwise` and
/// `global`, filled by [`gene_diversity_cells`].
const GENE_DIVERSITY_COLUMNS: [&str; 8] =
    ["jost_d", "jost_d_low", "jost_d_high", "gst", "gst_p", "gst_pp", "gst_pp_low", "gst_pp_high"];

/// A table of the `columns` followed by [`GENE_DIVERSITY_COLUMNS`].
fn with_gene_diversity_columns(columns: &[&str]) -> Table {
    Table::new(&[columns, &GENE_DIVERSITY_COLUMNS].concat())
}

/// The cells of [`GENE_DIVERSITY_COLUMNS`] for one comparison.
fn gene_diversity_cells(e: &ComparisonEstimate) -> [Cell; 8] {
    [
        Cell::maybe(e.indices.jost_d),
        low(e.intervals.jost_d),
        high(e.intervals.jost_d),
        Cell::maybe(e.indices.gst),
        Cell::maybe(e.indices.gst_prime),
        Cell::maybe(e.indices.gst_double_prime),
        low(e.intervals.gst_double_prime),
        high(e.intervals.gst_double_prime),
    ]
}

pub(super) fn ibd_table(isolation: &IsolationByDistance) -> Result<Table, StepError> {
    let mut table = Table::new(&["year", "pop_a", "pop_b", "distance_km", "fst", "fst_linearised"]);
    for pair in &isolation.pairs {
        table.push_row(vec![
            year_cell(pair.year),
            Cell::text(&pair.pop_a),
            Cell::text(&pair.pop_b),
            Cell::number(pair.distance_km),
            Cell::maybe(pair.fst),
            Cell::maybe(pair.linearised),
        ])?;
    }
    Ok(table)
}

pub(super) fn ibd_test_table(isolation: &IsolationByDistance) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "year",
        "populations",
        "pairs",
        "slope",
        "intercept",
        "r",
        "mantel_p",
        "mantel_p_min",
        "permutations",
        "mantel_method",
    ]);
    for test in &isolation.tests {
        table.push_row(vec![
            year_cell(test.year),
            count_cell(test.populations),
            count_cell(test.pairs),
            Cell::maybe(test.slope),
            Cell::maybe(test.intercept),
            Cell::maybe(test.correlation),
            Cell::maybe(test.mantel.map(|m| m.p_value())),
            Cell::maybe(test.mantel.map(|m| m.smallest_p_value())),
            test.mantel.map_or(Cell::Null, |m| count_cell(m.replicates)),
            test.mantel.map_or(Cell::Null, |m| Cell::text(m.enumeration.as_str())),
        ])?;
    }
    Ok(table)
}
