//! The portfolio's tables as CSV: `tables/populations.csv`, `tables/indicators.csv`,
//! `tables/cases.csv`, written as results tables are (`results::table_csv`: numbers through
//! the one formatter, `inf` for +∞, an empty cell for none).

use popgauge_abi::{Cell, Table};

use crate::output::OutputFiles;
use crate::report::format;
use crate::report::portfolio::PortfolioSource;
use crate::results::table_csv;

/// Columns of `tables/populations.csv`.
pub const POPULATION_COLUMNS: [&str; 20] = [
    "species",
    "species_group",
    "region",
    "case",
    "population",
    "label",
    "year",
    "ne",
    "ne_low",
    "ne_high",
    "ne_method",
    "ne_basis",
    "category",
    "census_size",
    "census_year",
    "horizon_years",
    "h_retained",
    "h_retained_low",
    "h_retained_high",
    "case_record_sha256",
];

/// Columns of `tables/cases.csv`.
pub const CASE_COLUMNS: [&str; 8] =
    ["output", "species", "title", "organisation", "date", "has_status", "populations", "record_sha256"];

fn text(value: Option<&str>) -> Cell {
    value.map_or(Cell::Null, Cell::text)
}

fn year(value: Option<i32>) -> Cell {
    value.map_or(Cell::Null, |y| Cell::Int(i64::from(y)))
}

fn count(value: usize) -> Cell {
    Cell::Int(value as i64)
}

/// A table from its columns and rows (every row has one cell per column by construction).
fn table(columns: &[&str], rows: Vec<Vec<Cell>>) -> Table {
    let mut table = Table::new(columns);
    for row in rows {
        // Rows are built here with one cell per column, which is all `push_row` checks.
        let _ = table.push_row(row);
    }
    table
}

/// The three tables.
pub fn files(source: &PortfolioSource) -> OutputFiles {
    let populations = source
        .populations
        .iter()
        .map(|p| {
            let case = &source.cases[p.case];
            vec![
                Cell::text(&p.species),
                text(p.species_group.as_deref()),
                text(p.region.as_deref()),
                Cell::text(&case.output),
                Cell::text(&p.population),
                text(p.label.as_deref()),
                year(p.year),
                Cell::maybe(p.ne),
                Cell::maybe(p.ne_low),
                Cell::maybe(p.ne_high),
                text(p.ne_method.as_deref()),
                Cell::text(p.basis.word()),
                Cell::text(&p.category),
                Cell::maybe(p.census_size),
                year(p.census_year),
                Cell::maybe(p.horizon_years),
                Cell::maybe(p.h_retained),
                Cell::maybe(p.h_retained_low),
                Cell::maybe(p.h_retained_high),
                Cell::text(&case.record_sha256),
            ]
        })
        .collect();
    let mut indicator_columns: Vec<String> =
        ["scope", "name", "species", "populations", "with_ne", "census_based", "without_ne"].map(String::from).to_vec();
    for threshold in &source.thresholds {
        let t = format::short(*threshold, 6);
        indicator_columns.extend(
            ["above_{t}_point", "share_{t}_point", "above_{t}_lower", "share_{t}_lower"]
                .into_iter()
                .chain(["species_mean_share_{t}_point", "species_mean_share_{t}_lower"])
                .map(|name| name.replace("{t}", &t)),
        );
    }
    indicator_columns.extend(["horizon_years", "projected", "h_retained_mean", "h_retained_min"].map(String::from));
    let indicators = source
        .indicators
        .iter()
        .map(|i| {
            let mut row = vec![
                Cell::text(&i.scope),
                Cell::text(&i.name),
                count(i.species),
                count(i.populations),
                count(i.with_ne),
                count(i.census_based),
                count(i.without_ne),
            ];
            for c in &i.counts {
                row.extend([
                    count(c.above_point),
                    Cell::maybe(c.share_point),
                    count(c.above_lower),
                    Cell::maybe(c.share_lower),
                    Cell::maybe(c.species_mean_share_point),
                    Cell::maybe(c.species_mean_share_lower),
                ]);
            }
            row.extend([
                Cell::maybe(i.horizon_years),
                count(i.projected),
                Cell::maybe(i.h_retained_mean),
                Cell::maybe(i.h_retained_min),
            ]);
            row
        })
        .collect();
    let cases = source
        .cases
        .iter()
        .map(|c| {
            vec![
                Cell::text(&c.output),
                Cell::text(&c.species),
                Cell::text(&c.title),
                Cell::text(&c.organisation),
                Cell::text(&c.date),
                Cell::Bool(c.has_status),
                count(c.populations),
                Cell::text(&c.record_sha256),
            ]
        })
        .collect();
    let indicator_columns: Vec<&str> = indicator_columns.iter().map(String::as_str).collect();
    vec![
        ("tables/populations.csv".into(), table_csv(&table(&POPULATION_COLUMNS, populations))),
        ("tables/indicators.csv".into(), table_csv(&table(&indicator_columns, indicators))),
        ("tables/cases.csv".into(), table_csv(&table(&CASE_COLUMNS, cases))),
    ]
}
