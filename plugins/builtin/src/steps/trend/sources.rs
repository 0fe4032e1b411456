//! Reading the series `trend` tests from earlier steps' tables (results contract, DESIGN.md):
//! `diversity`/`by_group` and `by_locus`, `ne-ld`/`estimates`, `ne-temporal`/`estimates` and
//! `ne-hetx`/`estimates`. A table or column that is missing, or a step that failed, is a
//! [`SourceProblem`] the step reports as a finding; a `null` value is simply no point.

use std::collections::BTreeMap;

use popgauge_abi::{Cell, StepResult, StepStatus, Table};

/// `uses` names of the steps whose `ne` estimates `trend` can follow.
pub const NE_STEP_USES: [&str; 3] = ["ne-ld", "ne-temporal", "ne-hetx"];

/// Two Pcrit values closer than this are the same Pcrit.
const PCRIT_TOLERANCE: f64 = 1e-9;

/// Why a source gave no series, for the reader.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceProblem(pub String);

/// Values by population, then year.
pub type PointsByPopulation = BTreeMap<String, BTreeMap<i32, f64>>;

/// The table `name` of an earlier result that ran.
pub fn table<'r>(result: &'r StepResult, name: &str) -> Result<&'r Table, SourceProblem> {
    if result.status == StepStatus::Failed {
        return Err(SourceProblem(format!("step \"{}\" ({}) failed, so it gives no values", result.id, result.uses)));
    }
    result
        .tables
        .get(name)
        .ok_or_else(|| SourceProblem(format!("step \"{}\" ({}) has no table `{name}`", result.id, result.uses)))
}

/// The index of `column` in `table` of `result`.
fn column(result: &StepResult, table_name: &str, table: &Table, column: &str) -> Result<usize, SourceProblem> {
    table.column(column).ok_or_else(|| {
        SourceProblem(format!(
            "table `{table_name}` of step \"{}\" ({}) has no column `{column}`",
            result.id, result.uses
        ))
    })
}

/// A year cell as an integer (years are integers in every contract table).
pub fn year_of(cell: &Cell) -> Option<i32> {
    match cell {
        Cell::Int(i) => i32::try_from(*i).ok(),
        Cell::Num(x) if x.fract() == 0.0 => Some(*x as i32),
        _ => None,
    }
}

/// `value_column` of `table_name` by (population, year-column); the first row of a repeated
/// (population, year) wins; rows failing `keep` are skipped.
fn points(
    result: &StepResult,
    table_name: &str,
    year_column: &str,
    value_column: &str,
    keep: impl Fn(&[Cell]) -> bool,
) -> Result<PointsByPopulation, SourceProblem> {
    let table = table(result, table_name)?;
    let population = column(result, table_name, table, "population")?;
    let year = column(result, table_name, table, year_column)?;
    let value = column(result, table_name, table, value_column)?;
    let mut by_population = PointsByPopulation::new();
    for row in table.rows.iter().filter(|row| keep(row)) {
        let (Some(name), Some(year), Some(value)) =
            (row[population].as_str(), year_of(&row[year]), row[value].as_f64())
        else {
            continue;
        };
        by_population.entry(name.to_string()).or_default().entry(year).or_insert(value);
    }
    Ok(by_population)
}

/// A column (`he`, `ho`, `ar`, `f`) of `diversity`/`by_group`.
pub fn diversity_points(result: &StepResult, value_column: &str) -> Result<PointsByPopulation, SourceProblem> {
    points(result, "by_group", "year", value_column, |_| true)
}

/// `ne` of an `ne-hetx` step by population and year.
pub fn hetx_points(result: &StepResult) -> Result<PointsByPopulation, SourceProblem> {
    points(result, "estimates", "year", "ne", |_| true)
}

/// The Pcrit of `ne-ld` rows `trend` follows: `wanted` when some row has it, otherwise the
/// Pcrit of the table's first row (the step's first requested Pcrit).
pub fn ld_pcrit_used(result: &StepResult, wanted: f64) -> Result<Option<Cell>, SourceProblem> {
    let table = table(result, "estimates")?;
    let pcrit = column(result, "estimates", table, "pcrit")?;
    let matches = |cell: &Cell| cell.as_f64().is_some_and(|p| (p - wanted).abs() < PCRIT_TOLERANCE);
    Ok(table
        .rows
        .iter()
        .map(|row| &row[pcrit])
        .find(|cell| matches(cell))
        .or_else(|| table.rows.first().map(|row| &row[pcrit]))
        .cloned())
}

/// `ne` of an `ne-ld` step at one Pcrit (see [`ld_pcrit_used`]) by population and year.
pub fn ld_points(result: &StepResult, pcrit: &Cell) -> Result<PointsByPopulation, SourceProblem> {
    let table = table(result, "estimates")?;
    let pcrit_column = column(result, "estimates", table, "pcrit")?;
    points(result, "estimates", "year", "ne", |row| same_pcrit(&row[pcrit_column], pcrit))
}

fn same_pcrit(a: &Cell, b: &Cell) -> bool {
    match (a.as_f64(), b.as_f64()) {
        (Some(x), Some(y)) => (x - y).abs() < PCRIT_TOLERANCE,
        _ => a == b,
    }
}

/// `ne_fs` of an `ne-temporal` step, placed at `year_end`; of several rows ending in the same
/// year, the one with the latest `year_start` (the shortest, most recent interval) is used.
pub fn temporal_points(result: &StepResult) -> Result<PointsByPopulation, SourceProblem> {
    let name = "estimates";
    let table = table(result, name)?;
    let population = column(result, name, table, "population")?;
    let start = column(result, name, table, "year_start")?;
    let end = column(result, name, table, "year_end")?;
    let value = column(result, name, table, "ne_fs")?;
    let mut best: BTreeMap<(String, i32), (i32, f64)> = BTreeMap::new();
    for row in &table.rows {
        let (Some(name), Some(start), Some(end), Some(value)) =
            (row[population].as_str(), year_of(&row[start]), year_of(&row[end]), row[value].as_f64())
        else {
            continue;
        };
        let slot = best.entry((name.to_string(), end)).or_insert((start, value));
        if start > slot.0 {
            *slot = (start, value);
        }
    }
    let mut by_population = PointsByPopulation::new();
    for ((name, end), (_, value)) in best {
        by_population.entry(name).or_default().insert(end, value);
    }
    Ok(by_population)
}

/// Per-locus values of `diversity`/`by_locus`: population → year → locus → value.
pub type LocusValues = BTreeMap<String, BTreeMap<i32, BTreeMap<String, f64>>>;

/// A column (`he`, `ho`) of `diversity`/`by_locus`; `null` cells are left out.
pub fn locus_values(result: &StepResult, value_column: &str) -> Result<LocusValues, SourceProblem> {
    let name = "by_locus";
    let table = table(result, name)?;
    let population = column(result, name, table, "population")?;
    let year = column(result, name, table, "year")?;
    let locus = column(result, name, table, "locus")?;
    let value = column(result, name, table, value_column)?;
    let mut values = LocusValues::new();
    for row in &table.rows {
        let (Some(name), Some(year), Some(locus), Some(value)) =
            (row[population].as_str(), year_of(&row[year]), row[locus].as_str(), row[value].as_f64())
        else {
            continue;
        };
        values.entry(name.to_string()).or_default().entry(year).or_default().insert(locus.to_string(), value);
    }
    Ok(values)
}
