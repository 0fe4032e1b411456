//! Every Ne estimate of each population side by side: the one the `status` step chose, the
//! linkage-disequilibrium estimate of every sampling year (with the spread over the rare-allele
//! rules), the temporal estimate of every interval and the heterozygote-excess estimates, so
//! that a reader sees how much the choice of one value matters.

use popgauge_abi::{LdChoice, NeSource, StepResult, estimated_groups, representative_ne};

use super::super::contract::{Row, col, table, table_of, uses};
use super::super::format::{self, NumberStyle};
use super::sections::{Context, latest_rows};
use super::table::TableData;

/// The side-by-side table, when at least one Ne step ran.
pub(crate) fn ne_overview(ctx: &Context<'_>) -> Option<TableData> {
    let ld = ctx.results.step(uses::NE_LD);
    let temporal = ctx.results.step(uses::NE_TEMPORAL);
    let hetx = ctx.results.step(uses::NE_HETX);
    if ld.is_none() && temporal.is_none() && hetx.is_none() {
        return None;
    }
    let status_rows = ctx
        .results
        .step(uses::STATUS)
        .and_then(|s| table_of(s, table::POPULATIONS))
        .map(|t| latest_rows(&t))
        .unwrap_or_default();
    let mut t = TableData::new(&[
        ("Population", false),
        ("Chosen for the status", false),
        ("LD, each sample (range over rare-allele rules)", false),
        ("Temporal (Fs), each interval", false),
        ("Heterozygote excess", false),
    ]);
    let undefined = || format::UNDEFINED.to_string();
    for population in ctx.populations {
        let status = status_rows.iter().find(|r| r.text(col::POPULATION) == Some(population.as_str()));
        t.push(vec![
            population.clone(),
            status.and_then(status_cell).unwrap_or_else(undefined),
            ld.and_then(|step| ld_cell(step, population)).unwrap_or_else(undefined),
            temporal.and_then(|step| temporal_cell(step, population)).unwrap_or_else(undefined),
            hetx.and_then(|step| hetx_cell(step, population)).unwrap_or_else(undefined),
        ]);
    }
    t.drop_empty_columns(&["Population"]);
    Some(t)
}

/// "48 (26–110)" with the interval when there is one.
fn with_interval(ne: f64, low: Option<f64>, high: Option<f64>) -> String {
    let point = format::effective_size(ne);
    match (low, high) {
        (None, None) => point,
        (low, high) => format!("{point} ({})", format::interval(low, high, NumberStyle::EffectiveSize)),
    }
}

fn status_cell(row: &Row<'_>) -> Option<String> {
    let ne = row.num(col::NE)?;
    let method = row.text(col::NE_METHOD).map(format::ne_method_short).unwrap_or_default();
    let year = row.label(col::NE_YEAR).or_else(|| row.label(col::YEAR)).unwrap_or_default();
    Some(format!("{}\n{method}, {year}", with_interval(ne, row.num(col::NE_LOW), row.num(col::NE_HIGH))))
}

/// One line per sampling year: the estimate by the sample-size rule for rare alleles, and the
/// range of the point estimates over every rule the step applied.
fn ld_cell(step: &StepResult, population: &str) -> Option<String> {
    let by_size = [NeSource::Ld(LdChoice::BySampleSize)];
    let rows = table_of(step, table::ESTIMATES)?;
    let mut years: Vec<i32> =
        estimated_groups(step).into_iter().filter(|(p, _)| p == population).map(|(_, y)| y).collect();
    years.sort_unstable();
    let lines: Vec<String> = years
        .into_iter()
        .filter_map(|year| {
            let chosen = representative_ne(std::slice::from_ref(step), population, year, &by_size)?;
            let all: Vec<f64> = rows
                .iter()
                .filter(|r| r.text(col::POPULATION) == Some(population) && r.int(col::YEAR) == Some(i64::from(year)))
                .filter_map(|r| r.num(col::NE))
                .collect();
            let low = all.iter().copied().fold(f64::INFINITY, f64::min);
            let high = all.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let spread = if all.len() > 1 && low < high {
                format!("; {}–{}", format::effective_size(low), format::effective_size(high))
            } else {
                String::new()
            };
            let rule = chosen.criterion.map(|c| format!(", {}", c.label())).unwrap_or_default();
            Some(format!("{year}: {}{rule}{spread}", with_interval(chosen.ne, chosen.low, chosen.high)))
        })
        .collect();
    (!lines.is_empty()).then(|| lines.join("\n"))
}

fn temporal_cell(step: &StepResult, population: &str) -> Option<String> {
    estimate_lines(step, population, col::NE_FS, |r| {
        format!("{}–{}", r.label(col::YEAR_START).unwrap_or_default(), r.label(col::YEAR_END).unwrap_or_default())
    })
}

fn hetx_cell(step: &StepResult, population: &str) -> Option<String> {
    estimate_lines(step, population, col::NE, |r| r.label(col::YEAR).unwrap_or_default())
}

/// One line per row of the population in the step's `estimates`: "<when>: Ne (low–high)".
fn estimate_lines(
    step: &StepResult,
    population: &str,
    ne_column: &str,
    when: impl Fn(&Row<'_>) -> String,
) -> Option<String> {
    let rows = table_of(step, table::ESTIMATES)?;
    let lines: Vec<String> = rows
        .iter()
        .filter(|r| r.text(col::POPULATION) == Some(population))
        .filter_map(|r| {
            let ne = r.num(ne_column)?;
            Some(format!("{}: {}", when(&r), with_interval(ne, r.num(col::NE_LOW), r.num(col::NE_HIGH))))
        })
        .collect();
    (!lines.is_empty()).then(|| lines.join("\n"))
}
