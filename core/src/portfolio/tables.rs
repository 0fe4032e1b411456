//! The portfolio's tables as CSV: `tables/populations.csv`, `tables/indicators.csv`,
//! `tables/cases.csv`. Numbers are written in full (as in the case tables); `inf` for +∞ and
//! an empty cell for none.

use crate::output::OutputFiles;
use crate::report::format;
use crate::report::portfolio::PortfolioSource;

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

fn number(value: Option<f64>) -> String {
    match value {
        Some(v) if v == f64::INFINITY => "inf".into(),
        Some(v) if v.is_finite() => v.to_string(),
        _ => String::new(),
    }
}

fn text(value: Option<&str>) -> String {
    value.unwrap_or_default().to_string()
}

fn csv_bytes(columns: &[String], rows: &[Vec<String>]) -> Vec<u8> {
    let mut writer = csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    // Writing to memory cannot fail.
    let _ = writer.write_record(columns);
    for row in rows {
        let _ = writer.write_record(row);
    }
    writer.into_inner().unwrap_or_default()
}

/// The three tables.
pub fn files(source: &PortfolioSource) -> OutputFiles {
    let populations: Vec<Vec<String>> = source
        .populations
        .iter()
        .map(|p| {
            let case = &source.cases[p.case];
            vec![
                p.species.clone(),
                text(p.species_group.as_deref()),
                text(p.region.as_deref()),
                case.output.clone(),
                p.population.clone(),
                text(p.label.as_deref()),
                p.year.map(|y| y.to_string()).unwrap_or_default(),
                number(p.ne),
                number(p.ne_low),
                number(p.ne_high),
                text(p.ne_method.as_deref()),
                p.basis.word().to_string(),
                p.category.clone(),
                number(p.census_size),
                p.census_year.map(|y| y.to_string()).unwrap_or_default(),
                number(p.horizon_years),
                number(p.h_retained),
                number(p.h_retained_low),
                number(p.h_retained_high),
                case.record_sha256.clone(),
            ]
        })
        .collect();
    let mut indicator_columns: Vec<String> =
        ["scope", "name", "species", "populations", "with_ne", "census_based", "without_ne"].map(String::from).to_vec();
    for threshold in &source.thresholds {
        let t = format::short(*threshold, 6);
        for what in [
            "above_{t}_point",
            "share_{t}_point",
            "above_{t}_lower",
            "share_{t}_lower",
            "species_mean_share_{t}_point",
            "species_mean_share_{t}_lower",
        ] {
            indicator_columns.push(what.replace("{t}", &t));
        }
    }
    indicator_columns.extend(["horizon_years", "projected", "h_retained_mean", "h_retained_min"].map(String::from));
    let indicators: Vec<Vec<String>> = source
        .indicators
        .iter()
        .map(|i| {
            let mut row = vec![
                i.scope.clone(),
                i.name.clone(),
                i.species.to_string(),
                i.populations.to_string(),
                i.with_ne.to_string(),
                i.census_based.to_string(),
                i.without_ne.to_string(),
            ];
            for c in &i.counts {
                row.extend([
                    c.above_point.to_string(),
                    number(c.share_point),
                    c.above_lower.to_string(),
                    number(c.share_lower),
                    number(c.species_mean_share_point),
                    number(c.species_mean_share_lower),
                ]);
            }
            row.extend([
                number(i.horizon_years),
                i.projected.to_string(),
                number(i.h_retained_mean),
                number(i.h_retained_min),
            ]);
            row
        })
        .collect();
    let cases: Vec<Vec<String>> = source
        .cases
        .iter()
        .map(|c| {
            vec![
                c.output.clone(),
                c.species.clone(),
                c.title.clone(),
                c.organisation.clone(),
                c.date.clone(),
                c.has_status.to_string(),
                c.populations.to_string(),
                c.record_sha256.clone(),
            ]
        })
        .collect();
    let case_columns: Vec<String> =
        ["output", "species", "title", "organisation", "date", "has_status", "populations", "record_sha256"]
            .map(String::from)
            .to_vec();
    let population_columns: Vec<String> = POPULATION_COLUMNS.iter().map(|c| c.to_string()).collect();
    vec![
        ("tables/populations.csv".into(), csv_bytes(&population_columns, &populations)),
        ("tables/indicators.csv".into(), csv_bytes(&indicator_columns, &indicators)),
        ("tables/cases.csv".into(), csv_bytes(&case_columns, &cases)),
    ]
}
