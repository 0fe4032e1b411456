//! Isolation by distance: haversine distances between located populations, the regression of
//! θ̂/(1 − θ̂) on ln(distance) (Rousset 1997) and a Mantel (1967) test.

use std::collections::BTreeMap;

use popgauge_abi::{Finding, PopulationInfo, Seed, Where};

use super::{Params, SetEstimates};
use crate::stats::bootstrap::rng;
use crate::stats::permutation::{Enumeration, PermutationOutcome, SymmetricMatrix, mantel_test, pearson_correlation};
use crate::stats::trend::least_squares;

/// Mean Earth radius R₁ of the Geodetic Reference System 1980 (IUGG; Moritz 1980), in km.
pub const MEAN_EARTH_RADIUS_KM: f64 = 6371.0088;
/// Fewest located populations for an isolation-by-distance analysis (docs/methods.md, "Isolation by
/// distance": a regression and a Mantel test need at least three pairs).
pub const MIN_LOCATED_POPULATIONS: usize = 3;
/// A Mantel p above this level leaves the fitted line descriptive only (the conventional 5 %
/// level; common practice).
pub const SIGNIFICANCE_LEVEL: f64 = 0.05;

/// Rousset (1997).
pub const ROUSSET_1997: &str = "Rousset F (1997) Genetic differentiation and estimation of gene flow from \
F-statistics under isolation by distance. Genetics 145:1219–1228.";
/// Sinnott (1984), the haversine formula.
pub const SINNOTT_1984: &str = "Sinnott RW (1984) Virtues of the haversine. Sky and Telescope 68(2):159.";
/// Moritz (1980), the mean Earth radius.
pub const MORITZ_1980: &str = "Moritz H (1980) Geodetic Reference System 1980. Bulletin Géodésique 54:395–405.";

/// A point in decimal degrees (WGS84).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coordinates {
    /// Latitude, −90 to 90.
    pub latitude: f64,
    /// Longitude, −180 to 180.
    pub longitude: f64,
}

/// Great-circle distance in km by the haversine formula on a sphere of radius
/// [`MEAN_EARTH_RADIUS_KM`]: d = 2R·asin √[sin²(Δφ/2) + cos φ₁ cos φ₂ sin²(Δλ/2)].
pub fn haversine_km(a: Coordinates, b: Coordinates) -> f64 {
    let (phi_a, phi_b) = (a.latitude.to_radians(), b.latitude.to_radians());
    let half_dphi = (phi_b - phi_a) / 2.0;
    let half_dlambda = (b.longitude - a.longitude).to_radians() / 2.0;
    let h = half_dphi.sin().powi(2) + phi_a.cos() * phi_b.cos() * half_dlambda.sin().powi(2);
    2.0 * MEAN_EARTH_RADIUS_KM * h.sqrt().min(1.0).asin()
}

/// One pair of located populations.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct IbdPair {
    pub year: Option<i32>,
    pub pop_a: String,
    pub pop_b: String,
    pub distance_km: f64,
    pub fst: Option<f64>,
    /// θ̂/(1 − θ̂); `None` when θ̂ is undefined or ≥ 1.
    pub linearised: Option<f64>,
}

/// The regression and Mantel test of one comparison set.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct IbdTest {
    pub year: Option<i32>,
    pub populations: usize,
    /// Pairs entering the regression (positive distance, defined θ̂/(1 − θ̂)).
    pub pairs: usize,
    pub slope: Option<f64>,
    pub intercept: Option<f64>,
    pub correlation: Option<f64>,
    pub mantel: Option<PermutationOutcome>,
}

/// Everything the isolation-by-distance analysis returns.
#[derive(Debug, Clone, Default, PartialEq)]
pub(super) struct IsolationByDistance {
    pub pairs: Vec<IbdPair>,
    pub tests: Vec<IbdTest>,
    pub findings: Vec<Finding>,
}

/// Runs the analysis for every comparison set with enough located populations.
pub(super) fn analyse(
    sets: &[SetEstimates<'_>],
    sheet: &[PopulationInfo],
    params: &Params,
    seed: Seed,
) -> IsolationByDistance {
    let mut result = IsolationByDistance::default();
    let located = located_populations(sheet, &mut result.findings);
    if located.is_empty() {
        result.findings.push(Finding::info(
            "ibd-not-tested",
            "isolation by distance not assessed: the population sheet gives no coordinates (add latitude and \
             longitude columns to assess it)",
            Where::default(),
        ));
        return result;
    }
    for set in sets {
        let in_set: Vec<usize> = (0..set.set.groups.len())
            .filter(|&g| located.contains_key(set.set.groups[g].population.as_str()))
            .collect();
        if in_set.len() < MIN_LOCATED_POPULATIONS {
            result.findings.push(not_tested(set.set.year, in_set.len()));
            continue;
        }
        let test = analyse_set(set, &in_set, &located, params, seed, &mut result);
        result.findings.extend(not_significant(&test));
        result.tests.push(test);
    }
    result
}

fn analyse_set(
    set: &SetEstimates<'_>,
    in_set: &[usize],
    located: &BTreeMap<&str, Coordinates>,
    params: &Params,
    seed: Seed,
    result: &mut IsolationByDistance,
) -> IbdTest {
    let year = set.set.year;
    let position = |group: usize| in_set.iter().position(|&g| g == group);
    let mut log_distance = SymmetricMatrix::missing(in_set.len());
    let mut linearised = SymmetricMatrix::missing(in_set.len());
    let mut points = Vec::new();
    for pair in &set.pairs {
        let (Some(i), Some(j)) = (position(pair.a), position(pair.b)) else { continue };
        let (pop_a, pop_b) = (&set.set.groups[pair.a].population, &set.set.groups[pair.b].population);
        let distance_km = haversine_km(located[pop_a.as_str()], located[pop_b.as_str()]);
        let fst = pair.estimate.theta;
        let linear = fst.filter(|&t| t < 1.0).map(|t| t / (1.0 - t));
        match linear.filter(|_| distance_km > 0.0) {
            Some(y) => {
                log_distance.set(i, j, distance_km.ln());
                linearised.set(i, j, y);
                points.push((distance_km.ln(), y));
            }
            None => result.findings.push(excluded_pair(year, pop_a, pop_b, distance_km, fst)),
        }
        result.pairs.push(IbdPair {
            year,
            pop_a: pop_a.clone(),
            pop_b: pop_b.clone(),
            distance_km,
            fst,
            linearised: linear,
        });
    }
    let (x, y): (Vec<f64>, Vec<f64>) = points.iter().copied().unzip();
    let line = least_squares(&x, &y, 0.95);
    let stream = format!("mantel/{}", year.map_or("pooled".to_string(), |y| y.to_string()));
    IbdTest {
        year,
        populations: in_set.len(),
        pairs: points.len(),
        slope: line.map(|l| l.slope),
        intercept: line.map(|l| l.intercept),
        correlation: pearson_correlation(|| points.iter().copied()),
        mantel: mantel_test(&log_distance, &linearised, params.mantel_permutations as usize, &mut rng(seed, &stream)),
    }
}

/// The populations of the sheet with valid coordinates; a warning for each with only one
/// coordinate or a value out of range.
fn located_populations<'s>(sheet: &'s [PopulationInfo], findings: &mut Vec<Finding>) -> BTreeMap<&'s str, Coordinates> {
    let mut located = BTreeMap::new();
    for row in sheet {
        let location = Where { population: Some(row.population.clone()), ..Where::default() };
        match (row.latitude, row.longitude) {
            (None, None) => {}
            (Some(latitude), Some(longitude))
                if (-90.0..=90.0).contains(&latitude) && (-180.0..=180.0).contains(&longitude) =>
            {
                located.insert(row.population.as_str(), Coordinates { latitude, longitude });
            }
            (latitude, longitude) => findings.push(Finding::warning(
                "bad-coordinates",
                format!(
                    "population sheet, population {}: latitude {} and longitude {} are not a valid WGS84 position \
                     (decimal degrees, latitude −90 to 90, longitude −180 to 180, both given); the population is \
                     left out of the isolation-by-distance analysis — correct the population sheet",
                    row.population,
                    describe(latitude),
                    describe(longitude)
                ),
                location,
            )),
        }
    }
    located
}

fn describe(value: Option<f64>) -> String {
    value.map_or("missing".to_string(), |v| v.to_string())
}

fn not_tested(year: Option<i32>, located: usize) -> Finding {
    let scope =
        year.map_or("the populations (years pooled)".to_string(), |y| format!("the populations sampled in {y}"));
    Finding::info(
        "ibd-not-tested",
        format!(
            "isolation by distance not assessed for {scope}: {located} population(s) with coordinates, at least \
             {MIN_LOCATED_POPULATIONS} are needed"
        ),
        Where { year, ..Where::default() },
    )
}

/// An info finding when the Mantel test ran and p is above [`SIGNIFICANCE_LEVEL`]: the document
/// shows the fitted line, which the data then do not support beyond description.
fn not_significant(test: &IbdTest) -> Option<Finding> {
    let mantel = test.mantel.filter(|m| m.p_value() > SIGNIFICANCE_LEVEL)?;
    let scope = test.year.map_or("years pooled".to_string(), |y| format!("populations sampled in {y}"));
    let how = match mantel.enumeration {
        Enumeration::Exact => {
            format!("exact, over all {} orders of the {} populations", mantel.replicates, test.populations)
        }
        Enumeration::Random => format!("{} random permutations", mantel.replicates),
    };
    let unattainable = if mantel.smallest_p_value() > SIGNIFICANCE_LEVEL {
        format!(
            "; with {} populations no order of the labels can give p ≤ {SIGNIFICANCE_LEVEL}, so the test cannot show \
             isolation by distance here",
            test.populations
        )
    } else {
        String::new()
    };
    Some(Finding::info(
        "ibd-not-significant",
        format!(
            "isolation by distance ({scope}): the Mantel test gives p = {:.3} ({how}; smallest attainable p = {:.3}), \
             above {SIGNIFICANCE_LEVEL}: the association of FST/(1 − FST) with ln(distance) is not statistically \
             supported and the fitted line is descriptive only{unattainable}",
            mantel.p_value(),
            mantel.smallest_p_value()
        ),
        Where { year: test.year, ..Where::default() },
    ))
}

fn excluded_pair(year: Option<i32>, pop_a: &str, pop_b: &str, distance_km: f64, fst: Option<f64>) -> Finding {
    let reason = if distance_km <= 0.0 {
        "the two populations have the same coordinates, so ln(distance) is undefined".to_string()
    } else {
        match fst {
            None => "its FST is undefined".to_string(),
            Some(t) => format!("its FST ({t:.4}) is 1 or more, so FST/(1 − FST) is undefined"),
        }
    };
    Finding::warning(
        "ibd-pair-excluded",
        format!("pair {pop_a}–{pop_b} is left out of the isolation-by-distance regression and Mantel test: {reason}"),
        Where { year, ..Where::default() },
    )
}
