//! One row per population of every case, from the case's `status` step (its chosen Ne,
//! interval, category and projection) or, for populations of its sheet that were not
//! genotyped, from their census size.

use std::collections::{BTreeMap, BTreeSet};

use popgauge_abi::StepStatus;
use popgauge_abi::contract::{col, table, uses};

use super::cases::{CaseResults, CaseStep};
use super::{CaseOutput, PortfolioError};
use crate::report::format;
use crate::report::portfolio::{NeBasis, PortfolioPopulation};

/// The last `status` step that completed.
pub fn status_step(results: &CaseResults) -> Option<&CaseStep> {
    results.steps.iter().rev().find(|s| s.uses == uses::STATUS && s.status == StepStatus::Ok)
}

/// The category of an Ne against the thresholds 50 and 500, as the status step words them
/// (a band is met at equality).
pub fn category(ne: Option<f64>, low: Option<f64>, thresholds: &[f64]) -> String {
    let Some(ne) = ne else { return "no Ne".into() };
    if low == Some(f64::INFINITY) {
        return "not estimable".into();
    }
    let words: Vec<String> = thresholds.iter().map(|t| format::short(*t, 6)).collect();
    match thresholds.iter().position(|t| ne < *t) {
        Some(0) => format!("below {}", words[0]),
        Some(i) => format!("{}–{}", words[i - 1], words[i]),
        None => format!("{} or more", words.last().cloned().unwrap_or_default()),
    }
}

/// The rows of every case, sorted by species then population; the cases' order is kept in
/// each row's `case` index.
///
/// # Errors
/// [`PortfolioError::DuplicatePopulation`] when two cases assess one population of a species.
pub fn rows(cases: &[CaseOutput], ratio: f64) -> Result<Vec<PortfolioPopulation>, PortfolioError> {
    let mut rows: Vec<PortfolioPopulation> = Vec::new();
    let mut owner: BTreeMap<(String, String), usize> = BTreeMap::new();
    for (index, case) in cases.iter().enumerate() {
        for row in case_rows(case, index, ratio) {
            let key = (row.species.clone(), row.population.clone());
            if let Some(first) = owner.insert(key, index) {
                return Err(PortfolioError::DuplicatePopulation {
                    species: row.species,
                    population: row.population,
                    first: cases[first].shown(),
                    second: case.shown(),
                });
            }
            rows.push(row);
        }
    }
    rows.sort_by(|a, b| (&a.species, &a.population).cmp(&(&b.species, &b.population)));
    Ok(rows)
}

fn case_rows(case: &CaseOutput, index: usize, ratio: f64) -> Vec<PortfolioPopulation> {
    let results = &case.results;
    let sheet: BTreeMap<&str, &popgauge_abi::PopulationInfo> =
        results.assessment.populations.iter().map(|p| (p.population.as_str(), p)).collect();
    let genotyped: BTreeSet<&str> = results.data.groups.iter().map(|g| g.population.as_str()).collect();
    let thresholds = super::THRESHOLDS;
    let blank = |population: &str| {
        let info = sheet.get(population);
        PortfolioPopulation {
            species: results.assessment.species.clone(),
            species_group: case.reference.species_group.clone(),
            region: case.reference.region.clone(),
            case: index,
            population: population.to_string(),
            label: info.and_then(|i| i.label.clone()),
            year: None,
            ne: None,
            ne_low: None,
            ne_high: None,
            ne_method: None,
            basis: NeBasis::None,
            category: "no Ne".into(),
            census_size: info.and_then(|i| i.census_size),
            census_year: info.and_then(|i| i.census_year),
            horizon_years: None,
            h_retained: None,
            h_retained_low: None,
            h_retained_high: None,
            latitude: info.and_then(|i| i.latitude),
            longitude: info.and_then(|i| i.longitude),
        }
    };
    let mut rows = Vec::new();
    let status = status_step(results);
    let horizon = status
        .and_then(|s| s.tables.get(table::HORIZON))
        .and_then(|t| t.named_rows().next())
        .map(|row| (row.number("horizon_years"), row.number(col::GENERATIONS)));
    let mut listed: BTreeSet<String> = BTreeSet::new();
    if let Some(populations) = status.and_then(|s| s.tables.get(table::POPULATIONS)) {
        for row in populations.named_rows() {
            let Some(name) = row.label(col::POPULATION) else { continue };
            let mut out = blank(&name);
            out.basis = NeBasis::Genetic;
            out.year = row.year(col::YEAR);
            out.ne = row.number(col::NE);
            out.ne_low = row.number(col::NE_LOW);
            out.ne_high = row.number(col::NE_HIGH);
            out.ne_method = row.text(col::NE_METHOD).map(str::to_string);
            out.category = category(out.ne, out.ne_low, &thresholds);
            out.h_retained = row.number(col::H_RETAINED);
            out.h_retained_low = row.number(col::H_RETAINED_LOW);
            out.h_retained_high = row.number(col::H_RETAINED_HIGH);
            out.horizon_years = out.h_retained.and(horizon.and_then(|h| h.0));
            listed.insert(name);
            rows.push(out);
        }
    }
    for population in &genotyped {
        if !listed.contains(*population) {
            rows.push(blank(population));
        }
    }
    for (population, info) in &sheet {
        let census = info.census_size.filter(|n| n.is_finite() && *n > 0.0);
        if genotyped.contains(population) || listed.contains(*population) {
            continue;
        }
        let Some(census) = census else { continue };
        let mut out = blank(population);
        let ne = census * ratio;
        out.basis = NeBasis::Census;
        out.year = info.census_year;
        out.ne = Some(ne);
        out.ne_method = Some(format!("census × {}", format::short(ratio, 3)));
        out.category = category(Some(ne), None, &thresholds);
        if let Some((Some(years), Some(generations))) = horizon {
            out.horizon_years = Some(years);
            out.h_retained = Some((1.0 - 1.0 / (2.0 * ne)).powf(generations));
        }
        rows.push(out);
    }
    rows
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Bands as the status step words them (met at equality; common practice of reporting
    /// against the 50/500 rule, Frankham et al. 2014).
    #[test]
    fn categories_follow_the_thresholds() {
        let t = [50.0, 500.0];
        assert_eq!(category(Some(49.9), Some(10.0), &t), "below 50");
        assert_eq!(category(Some(50.0), Some(10.0), &t), "50–500");
        assert_eq!(category(Some(500.0), Some(100.0), &t), "500 or more");
        assert_eq!(category(Some(f64::INFINITY), Some(f64::INFINITY), &t), "not estimable");
        assert_eq!(category(Some(f64::INFINITY), Some(900.0), &t), "500 or more");
        assert_eq!(category(None, None, &t), "no Ne");
    }
}
