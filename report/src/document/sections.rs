//! The science sections: data and validation, diversity, Hardy–Weinberg, differentiation,
//! effective size, trends and additional (plugin) analyses.

use std::collections::{BTreeMap, BTreeSet};

use serde::Serialize;

use popgauge_abi::{Finding, FindingLevel, LdChoice, NeSource, StepResult, estimated_groups, representative_ne};

use super::super::contract::{Results, Row, Rows, col, table, table_of, uses};
use super::super::figures::{Figure, IntervalPoint, Series};
use super::super::format::{self, NumberStyle};
use super::table::{HeatCell, HeatTable, TableData, generic, readable};
use super::{BODY_ROWS, Extras};
use popgauge_engine::engine::StepRun;
use popgauge_engine::results::{RESULTS_FILE, table_file};

/// What every section builder reads.
pub(crate) struct Context<'a> {
    /// The results.
    pub results: Results<'a>,
    /// Population names, sorted; a population's index is its colour and marker in charts.
    pub populations: &'a [String],
    /// Steps as they ran (parameters, seeds).
    pub runs: &'a [StepRun],
    /// Ne thresholds, ascending.
    pub thresholds: &'a [f64],
    /// Generation time in years.
    pub generation_time: Option<f64>,
}

impl Context<'_> {
    /// A population's chart style index.
    pub fn style_of(&self, population: &str) -> usize {
        self.populations.iter().position(|p| p == population).unwrap_or(self.populations.len())
    }

    /// A resolved parameter of the last step with this `uses`.
    pub fn param(&self, uses: &str, name: &str) -> Option<&serde_json::Value> {
        let step = self.results.step(uses)?;
        self.runs.iter().find(|r| r.id == step.id).and_then(|r| r.params.get(name))
    }
}

mod additional;
mod data;
mod differentiation;
mod diversity;
mod ne;
mod trend;

pub use additional::AdditionalStep;
pub(crate) use additional::additional_steps;
pub use data::DataSection;
pub(crate) use data::data_section;
use data::subject_and_reason;
pub use differentiation::DifferentiationSection;
pub(crate) use differentiation::differentiation_section;
pub use diversity::{DiversitySection, HweSection};
pub(crate) use diversity::{diversity_section, hwe_section};
pub use ne::NeSection;
pub(crate) use ne::ne_section;
pub use trend::TrendSection;
pub(crate) use trend::trend_section;

// ---------------------------------------------------------------------------------------------
// Shared by several sections

/// One series per population from (population, x, y) triples, points sorted by x.
fn series_by_population(
    ctx: &Context<'_>,
    values: impl Iterator<Item = (String, f64, f64)>,
    slopes: &BTreeMap<String, f64>,
) -> Vec<Series> {
    let mut by_population: BTreeMap<String, Vec<(f64, f64)>> = BTreeMap::new();
    for (population, x, y) in values {
        by_population.entry(population).or_default().push((x, y));
    }
    by_population
        .into_iter()
        .map(|(name, mut points)| {
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            Series {
                style: ctx.style_of(&name),
                slope: slopes.get(&name).copied(),
                name,
                points,
                intervals: Vec::new(),
            }
        })
        .collect()
}

/// Least-squares slopes per population for one trend metric, in the metric's own units per
/// year (a slope tested on another scale, such as 1/Ne, is not drawn).
fn trend_slopes(ctx: &Context<'_>, metric: &str) -> BTreeMap<String, f64> {
    ctx.results
        .table(uses::TREND, table::TESTS)
        .map(|t| {
            t.iter()
                .filter(|r| r.text(col::METRIC) == Some(metric))
                .filter(|r| r.text("scale").is_none_or(|scale| scale == "value"))
                .filter_map(|r| {
                    Some((r.text(col::POPULATION)?.to_string(), r.num(col::OLS_SLOPE).filter(|s| s.is_finite())?))
                })
                .collect()
        })
        .unwrap_or_default()
}

/// The row of each population with the latest year (or the only row when there is no year).
pub(crate) fn latest_rows<'a>(rows: &Rows<'a>) -> Vec<Row<'a>> {
    let mut latest: BTreeMap<String, Row<'a>> = BTreeMap::new();
    for row in rows.iter() {
        let Some(population) = row.text(col::POPULATION) else { continue };
        let newer = latest.get(population).is_none_or(|old| row.int(col::YEAR) >= old.int(col::YEAR));
        if newer {
            latest.insert(population.to_string(), row);
        }
    }
    latest.into_values().collect()
}

// ---------------------------------------------------------------------------------------------
// Cell helpers

pub(crate) fn text(row: &Row<'_>, column: &str) -> String {
    row.label(column).unwrap_or_else(|| format::UNDEFINED.into())
}

pub(crate) fn whole(row: &Row<'_>, column: &str) -> String {
    row.cell(column).map_or_else(|| format::UNDEFINED.into(), |c| format::cell(c, NumberStyle::Whole))
}

pub(crate) fn fixed3(row: &Row<'_>, column: &str) -> String {
    format::maybe(row.num(column), NumberStyle::Fixed(3))
}

pub(crate) fn ne(row: &Row<'_>, column: &str) -> String {
    format::maybe(row.num(column), NumberStyle::EffectiveSize)
}

pub(crate) fn ne_interval(row: &Row<'_>, low: &str, high: &str) -> String {
    format::interval(row.num(low), row.num(high), NumberStyle::EffectiveSize)
}
