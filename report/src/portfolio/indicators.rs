//! The indicators over the populations of a portfolio (Hoban et al. 2020; the Kunming-Montreal
//! Global Biodiversity Framework's headline indicator A.4, "the proportion of populations
//! within species with an effective population size > 500").
//!
//! Per scope: populations, those with an Ne (a genetic estimate whose interval is not ∞–∞,
//! or a census-based one), and per threshold the count with Ne strictly above it by point
//! estimate and by the lower bound of the 95 % interval (a census-based Ne, which has no
//! interval, counts by its value in both). Shares are of the populations with an Ne. Scopes
//! of several species also give the mean over the species of each species' share, the way the
//! indicator is aggregated across species. Heterozygosity retained over the horizon is
//! averaged only when every projected population of the scope shares one horizon.

use std::collections::BTreeMap;

use super::model::{Indicator, NeBasis, PortfolioPopulation, ThresholdCount};

/// The indicators: `all`, then every species, species group and region (by name).
pub fn indicators(populations: &[PortfolioPopulation], thresholds: &[f64]) -> Vec<Indicator> {
    let mut out = vec![scope("all", "all", &populations.iter().collect::<Vec<_>>(), thresholds)];
    type Key = fn(&PortfolioPopulation) -> Option<&str>;
    let keys: [(&str, Key); 3] = [
        ("species", |p| Some(p.species.as_str())),
        ("species_group", |p| p.species_group.as_deref()),
        ("region", |p| p.region.as_deref()),
    ];
    for (name, key) in keys {
        let mut groups: BTreeMap<&str, Vec<&PortfolioPopulation>> = BTreeMap::new();
        for population in populations {
            if let Some(k) = key(population) {
                groups.entry(k).or_default().push(population);
            }
        }
        out.extend(groups.iter().map(|(k, members)| scope(name, k, members, thresholds)));
    }
    out
}

fn scope(scope: &str, name: &str, members: &[&PortfolioPopulation], thresholds: &[f64]) -> Indicator {
    let with_ne: Vec<&&PortfolioPopulation> = members.iter().filter(|p| p.has_ne()).collect();
    let mut species: BTreeMap<&str, Vec<&PortfolioPopulation>> = BTreeMap::new();
    for population in members {
        species.entry(population.species.as_str()).or_default().push(population);
    }
    let several = species.len() > 1;
    let counts = thresholds
        .iter()
        .map(|&threshold| {
            let (above_point, above_lower) = above(&with_ne, threshold);
            let share = |count: usize| (!with_ne.is_empty()).then(|| count as f64 / with_ne.len() as f64);
            let species_shares: Vec<(f64, f64)> = species
                .values()
                .filter_map(|members| {
                    let counted: Vec<&&PortfolioPopulation> = members.iter().filter(|p| p.has_ne()).collect();
                    let (point, lower) = above(&counted, threshold);
                    let n = counted.len() as f64;
                    (!counted.is_empty()).then(|| (point as f64 / n, lower as f64 / n))
                })
                .collect();
            let mean = |pick: fn(&(f64, f64)) -> f64| {
                (several && !species_shares.is_empty())
                    .then(|| species_shares.iter().map(pick).sum::<f64>() / species_shares.len() as f64)
            };
            ThresholdCount {
                threshold,
                above_point,
                above_lower,
                share_point: share(above_point),
                share_lower: share(above_lower),
                species_mean_share_point: mean(|s| s.0),
                species_mean_share_lower: mean(|s| s.1),
            }
        })
        .collect();
    let projected: Vec<&&PortfolioPopulation> = members.iter().filter(|p| p.h_retained.is_some()).collect();
    let horizon = projected.first().and_then(|p| p.horizon_years);
    let common = horizon.is_some() && projected.iter().all(|p| p.horizon_years == horizon);
    let retained: Vec<f64> = projected.iter().filter_map(|p| p.h_retained).collect();
    Indicator {
        scope: scope.to_string(),
        name: name.to_string(),
        species: species.len(),
        populations: members.len(),
        with_ne: with_ne.len(),
        census_based: with_ne.iter().filter(|p| p.basis == NeBasis::Census).count(),
        without_ne: members.len() - with_ne.len(),
        counts,
        horizon_years: if common { horizon } else { None },
        projected: projected.len(),
        h_retained_mean: (common && !retained.is_empty()).then(|| retained.iter().sum::<f64>() / retained.len() as f64),
        h_retained_min: retained.iter().copied().reduce(f64::min),
    }
}

/// Populations strictly above `threshold` by point estimate and by lower value.
fn above(populations: &[&&PortfolioPopulation], threshold: f64) -> (usize, usize) {
    let point = populations.iter().filter(|p| p.ne.is_some_and(|ne| ne > threshold)).count();
    let lower = populations.iter().filter(|p| p.lower_value().is_some_and(|low| low > threshold)).count();
    (point, lower)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn population(species: &str, basis: NeBasis, ne: Option<f64>, low: Option<f64>) -> PortfolioPopulation {
        PortfolioPopulation {
            species: species.into(),
            species_group: None,
            region: None,
            case: 0,
            population: format!("{species}-{ne:?}"),
            label: None,
            year: Some(2024),
            ne,
            ne_low: low,
            ne_high: None,
            ne_method: None,
            basis,
            category: String::new(),
            census_size: None,
            census_year: None,
            horizon_years: Some(100.0),
            h_retained: ne.map(|n| 1.0 - 1.0 / n),
            h_retained_low: None,
            h_retained_high: None,
            latitude: None,
            longitude: None,
        }
    }

    /// Counting rules of the GBF headline indicator A.4 (Hoban et al. 2020): Ne strictly
    /// above 500; shares of the populations with an Ne; the cross-species value is the mean
    /// of the species' shares. Hand-computed.
    #[test]
    fn counts_are_strict_shares_are_of_populations_with_ne_and_species_means_are_averaged() {
        let populations = vec![
            population("A", NeBasis::Genetic, Some(600.0), Some(400.0)),
            population("A", NeBasis::Genetic, Some(500.0), Some(200.0)),
            population("A", NeBasis::Genetic, Some(f64::INFINITY), Some(f64::INFINITY)),
            population("B", NeBasis::Census, Some(900.0), None),
            population("B", NeBasis::None, None, None),
        ];
        let all = &indicators(&populations, &[50.0, 500.0])[0];
        assert_eq!((all.populations, all.with_ne, all.census_based, all.without_ne), (5, 3, 1, 2));
        let c500 = &all.counts[1];
        // Above 500: 600 and the census-based 900 (500 itself is not above).
        assert_eq!((c500.above_point, c500.above_lower), (2, 1));
        assert_eq!(c500.share_point, Some(2.0 / 3.0));
        // Species A: 1 of 2; species B: 1 of 1 → mean 0.75.
        assert_eq!(c500.species_mean_share_point, Some(0.75));
        // Lower bound: A none of 2 (400, 200), B 1 of 1 by value → mean 0.5.
        assert_eq!(c500.species_mean_share_lower, Some(0.5));
        let by_species = indicators(&populations, &[500.0]);
        let species: Vec<&Indicator> = by_species.iter().filter(|i| i.scope == "species").collect();
        assert_eq!(species.len(), 2);
        assert_eq!(species[0].counts[0].species_mean_share_point, None);
    }

    #[test]
    fn retained_heterozygosity_is_averaged_only_over_one_horizon() {
        let mut populations = vec![
            population("A", NeBasis::Genetic, Some(100.0), Some(50.0)),
            population("A", NeBasis::Genetic, Some(50.0), Some(20.0)),
        ];
        let all = &indicators(&populations, &[500.0])[0];
        assert_eq!(all.horizon_years, Some(100.0));
        assert!((all.h_retained_mean.unwrap() - (0.99 + 0.98) / 2.0).abs() < 1e-12);
        assert_eq!(all.h_retained_min, Some(0.98));
        populations[1].horizon_years = Some(50.0);
        let all = &indicators(&populations, &[500.0])[0];
        assert_eq!((all.horizon_years, all.h_retained_mean), (None, None));
        assert_eq!(all.projected, 2);
    }
}
