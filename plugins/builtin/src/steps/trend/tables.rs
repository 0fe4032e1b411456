//! The `trend` step's tables (columns in the module doc of [`super`]).

use popgauge_abi::{Cell, StepError, Table};

use super::paired::PairedChange;
use super::{Series, TestedSeries};

pub(super) fn tests_table(tested: &[TestedSeries<'_>]) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "metric",
        "scale",
        "points",
        "first_year",
        "last_year",
        "mk_s",
        "mk_var",
        "mk_tau",
        "mk_z",
        "mk_p",
        "mk_method",
        "sen_slope",
        "sen_low",
        "sen_high",
        "ols_slope",
        "ols_se",
        "ols_low",
        "ols_high",
        "direction",
    ]);
    for t in tested {
        let years = t.series.analysed();
        let mk = t.mann_kendall.as_ref();
        let ols = t.least_squares.as_ref();
        table.push_row(vec![
            Cell::text(&t.series.population),
            Cell::text(&t.series.metric),
            Cell::text(t.series.scale.as_str()),
            Cell::Int(t.points as i64),
            years.first().map_or(Cell::Null, |p| Cell::Int(p.0 as i64)),
            years.last().map_or(Cell::Null, |p| Cell::Int(p.0 as i64)),
            mk.map_or(Cell::Null, |m| Cell::Int(m.s)),
            Cell::maybe(mk.map(|m| m.variance)),
            Cell::maybe(mk.map(|m| m.tau)),
            Cell::maybe(mk.map(|m| m.z)),
            Cell::maybe(mk.map(|m| m.p_value)),
            mk.map_or(Cell::Null, |m| Cell::text(m.method.as_str())),
            Cell::maybe(t.sen.map(|s| s.slope)),
            Cell::maybe(t.sen.and_then(|s| s.low)),
            Cell::maybe(t.sen.and_then(|s| s.high)),
            Cell::maybe(ols.map(|o| o.slope)),
            Cell::maybe(ols.map(|o| o.standard_error)),
            Cell::maybe(ols.map(|o| o.low)),
            Cell::maybe(ols.map(|o| o.high)),
            t.direction.map_or(Cell::Null, Cell::text),
        ])?;
    }
    Ok(table)
}

pub(super) fn series_table(series: &[Series]) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "metric", "year", "value", "analysed", "ne_method"]);
    for s in series {
        for (&year, &value) in &s.values {
            table.push_row(vec![
                Cell::text(&s.population),
                Cell::text(&s.metric),
                Cell::Int(year.into()),
                Cell::number(value),
                Cell::maybe(s.scale.transform(value)),
                s.methods.get(&year).map_or(Cell::Null, Cell::text),
            ])?;
        }
    }
    Ok(table)
}

pub(super) fn paired_table(changes: &[PairedChange]) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "metric",
        "year_start",
        "year_end",
        "loci",
        "zeros",
        "w_plus",
        "w_minus",
        "p_method",
        "p_value",
        "mean_change",
        "change_low",
        "change_high",
        "replicates",
    ]);
    for c in changes {
        let test = c.test.as_ref();
        table.push_row(vec![
            Cell::text(&c.population),
            Cell::text(c.metric),
            Cell::Int(c.year_start.into()),
            Cell::Int(c.year_end.into()),
            Cell::Int(c.loci as i64),
            test.map_or(Cell::Int(c.loci as i64), |t| Cell::Int(t.zeros as i64)),
            Cell::maybe(test.map(|t| t.w_plus)),
            Cell::maybe(test.map(|t| t.w_minus)),
            test.map_or(Cell::Null, |t| Cell::text(t.method.as_str())),
            Cell::maybe(test.map(|t| t.p_value)),
            Cell::maybe(c.mean_change),
            Cell::maybe(c.interval.map(|i| i.0)),
            Cell::maybe(c.interval.map(|i| i.1)),
            Cell::Int(c.replicates as i64),
        ])?;
    }
    Ok(table)
}
