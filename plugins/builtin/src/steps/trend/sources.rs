//! Reading the series `trend` tests from earlier steps' tables (results contract):
//! `diversity`/`by_group` and `by_locus`, and the `estimates` of `ne-ld`, `ne-temporal` and
//! `ne-hetx` through the SDK's [`representative_ne`]. A table or column that is missing, or a step that failed, is a
//! [`SourceProblem`] the step reports as a finding; a `null` value is simply no point.

use std::collections::BTreeMap;

use popgauge_abi::contract::{col, table as tables};
use popgauge_abi::{
    Cell, LdChoice, LdCriterion, NeSource, RepresentativeNe, StepResult, StepStatus, Table, estimated_groups,
    ne_columns, ne_steps, representative_ne,
};

/// `uses` names of the steps whose `ne` estimates `trend` can follow.
pub const NE_STEP_USES: [&str; 3] = [ne_steps::NE_LD, ne_steps::NE_TEMPORAL, ne_steps::NE_HETX];

/// Why a source gave no series, for the reader.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceProblem(pub String);

/// Values by population, then year.
pub type PointsByPopulation = BTreeMap<String, BTreeMap<i32, f64>>;

/// Representative Ne estimates by population, then year.
pub type NePoints = BTreeMap<String, BTreeMap<i32, RepresentativeNe>>;

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
    let population = column(result, table_name, table, col::POPULATION)?;
    let year = column(result, table_name, table, year_column)?;
    let value = column(result, table_name, table, value_column)?;
    let mut by_population = PointsByPopulation::new();
    for row in table.rows.iter().filter(|row| keep(row)) {
        let (Some(name), Some(year), Some(value)) =
            (row[population].as_str(), row[year].as_year(), row[value].as_f64())
        else {
            continue;
        };
        by_population.entry(name.to_string()).or_default().entry(year).or_insert(value);
    }
    Ok(by_population)
}

/// A column (`he`, `ho`, `ar`, `f`) of `diversity`/`by_group`.
pub fn diversity_points(result: &StepResult, value_column: &str) -> Result<PointsByPopulation, SourceProblem> {
    points(result, tables::BY_GROUP, col::YEAR, value_column, |_| true)
}

/// The representative estimates of one Ne step by population and year: for each (population,
/// year) the step estimated (`year_end` for `ne-temporal`), the row [`representative_ne`]
/// chooses from that step alone, with `choice` deciding the `ne-ld` criterion. Status and the
/// document choose by the same function, so a trend point and a status row agree.
pub fn ne_points(result: &StepResult, choice: LdChoice) -> Result<NePoints, SourceProblem> {
    let source = NeSource::for_uses(&result.uses, choice)
        .ok_or_else(|| SourceProblem(format!("step \"{}\" ({}) is not an Ne step", result.id, result.uses)))?;
    check_ne_columns(result, source)?;
    let mut by_population = NePoints::new();
    for (population, year) in estimated_groups(result) {
        if let Some(chosen) = representative_ne(std::slice::from_ref(result), &population, year, &[source]) {
            by_population.entry(population).or_default().insert(year, chosen);
        }
    }
    Ok(by_population)
}

/// A `SourceProblem` when `estimates` lacks a column the source reads, or when a named `ne-ld`
/// criterion has no row.
fn check_ne_columns(result: &StepResult, source: NeSource) -> Result<(), SourceProblem> {
    let name = ne_steps::ESTIMATES;
    let table = table(result, name)?;
    let needed: &[&str] = match source {
        NeSource::Ld(_) => &[ne_columns::POPULATION, ne_columns::YEAR, ne_columns::PCRIT, ne_columns::NE],
        NeSource::Temporal => {
            &[ne_columns::POPULATION, ne_columns::YEAR_START, ne_columns::YEAR_END, ne_columns::NE_FS]
        }
        NeSource::Hetx => &[ne_columns::POPULATION, ne_columns::YEAR, ne_columns::NE],
    };
    for needed in needed {
        column(result, name, table, needed)?;
    }
    if let NeSource::Ld(LdChoice::Fixed(criterion)) = source {
        let criteria: Vec<String> = table
            .named_rows()
            .filter_map(|r| r.cell(ne_columns::PCRIT).and_then(LdCriterion::of_cell))
            .map(|c| c.spelling())
            .fold(Vec::new(), |mut seen, c| {
                if !seen.contains(&c) {
                    seen.push(c);
                }
                seen
            });
        if !table.named_rows().any(|r| r.cell(ne_columns::PCRIT).is_some_and(|c| criterion.matches(c))) {
            return Err(SourceProblem(format!(
                "step \"{}\" (ne-ld) has no rows at {} (`ld_pcrit`); its criteria are {}",
                result.id,
                criterion.label(),
                if criteria.is_empty() { "none".into() } else { criteria.join(", ") }
            )));
        }
    }
    Ok(())
}

/// Per-locus values of `diversity`/`by_locus`: population → year → locus → value.
pub type LocusValues = BTreeMap<String, BTreeMap<i32, BTreeMap<String, f64>>>;

/// A column (`he`, `ho`) of `diversity`/`by_locus`; `null` cells are left out.
pub fn locus_values(result: &StepResult, value_column: &str) -> Result<LocusValues, SourceProblem> {
    let name = tables::BY_LOCUS;
    let table = table(result, name)?;
    let population = column(result, name, table, col::POPULATION)?;
    let year = column(result, name, table, col::YEAR)?;
    let locus = column(result, name, table, col::LOCUS)?;
    let value = column(result, name, table, value_column)?;
    let mut values = LocusValues::new();
    for row in &table.rows {
        let (Some(name), Some(year), Some(locus), Some(value)) =
            (row[population].as_str(), row[year].as_year(), row[locus].as_str(), row[value].as_f64())
        else {
            continue;
        };
        values.entry(name.to_string()).or_default().entry(year).or_default().insert(locus.to_string(), value);
    }
    Ok(values)
}
