//! What a portfolio document is made from: one row per population of every case, the
//! indicators over them and the list of cases. The portfolio command builds these from the
//! case outputs; the document and the tables are written from them.

use serde::Serialize;

/// Where a population's Ne comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum NeBasis {
    /// The case's `status` step (a genetic estimate with its 95 % interval).
    Genetic,
    /// The census size times the portfolio's Ne/N ratio (no genotypes; no interval).
    Census,
    /// No Ne: the case has no `status` step.
    None,
}

impl NeBasis {
    /// The word used in tables (`genetic`, `census`, `none`).
    pub fn word(self) -> &'static str {
        match self {
            NeBasis::Genetic => "genetic",
            NeBasis::Census => "census",
            NeBasis::None => "none",
        }
    }
}

/// One population of one case.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PortfolioPopulation {
    /// Species (the case's `species`).
    pub species: String,
    /// Species group from the manifest.
    pub species_group: Option<String>,
    /// Region from the manifest.
    pub region: Option<String>,
    /// Index of its case in the portfolio's case list.
    pub case: usize,
    /// Population name.
    pub population: String,
    /// Label from the population sheet.
    pub label: Option<String>,
    /// The latest sampling year (genetic), or the census year.
    pub year: Option<i32>,
    /// Ne (point; +∞ possible for a genetic estimate).
    pub ne: Option<f64>,
    /// Lower bound of the 95 % interval.
    pub ne_low: Option<f64>,
    /// Upper bound (+∞ possible).
    pub ne_high: Option<f64>,
    /// The estimate's method as the case recorded it (`ld:0.02`), or `census × 0.1`.
    pub ne_method: Option<String>,
    /// Where the Ne comes from.
    pub basis: NeBasis,
    /// `below 50`, `50–500`, `500 or more`, `not estimable` or `no Ne`.
    pub category: String,
    /// Census size.
    pub census_size: Option<f64>,
    /// Census year.
    pub census_year: Option<i32>,
    /// The projection horizon in years.
    pub horizon_years: Option<f64>,
    /// Heterozygosity retained over the horizon at the point Ne.
    pub h_retained: Option<f64>,
    /// … at the interval's lower bound.
    pub h_retained_low: Option<f64>,
    /// … at the interval's upper bound.
    pub h_retained_high: Option<f64>,
    /// Latitude (WGS84), for the map.
    pub latitude: Option<f64>,
    /// Longitude (WGS84), for the map.
    pub longitude: Option<f64>,
}

impl PortfolioPopulation {
    /// Whether the population has an Ne the indicator counts: a genetic estimate whose
    /// interval is not ∞–∞, or a census-based one.
    pub fn has_ne(&self) -> bool {
        match self.basis {
            NeBasis::Genetic => self.ne.is_some() && self.ne_low != Some(f64::INFINITY),
            NeBasis::Census => self.ne.is_some(),
            NeBasis::None => false,
        }
    }

    /// The value the lower-bound count compares: the interval's lower bound of a genetic
    /// estimate, the value itself for a census-based one (which has no interval).
    pub fn lower_value(&self) -> Option<f64> {
        match self.basis {
            NeBasis::Genetic => self.ne_low,
            NeBasis::Census => self.ne,
            NeBasis::None => None,
        }
    }
}

/// Counts against one threshold.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThresholdCount {
    /// The threshold.
    pub threshold: f64,
    /// Populations with Ne > threshold (strictly).
    pub above_point: usize,
    /// Populations whose lower bound is > threshold.
    pub above_lower: usize,
    /// `above_point` / populations with an Ne.
    pub share_point: Option<f64>,
    /// `above_lower` / populations with an Ne.
    pub share_lower: Option<f64>,
    /// Mean over the species of each species' `share_point` (scopes of several species).
    pub species_mean_share_point: Option<f64>,
    /// Mean over the species of each species' `share_lower`.
    pub species_mean_share_lower: Option<f64>,
}

/// The indicators over one scope: everything, a species, a species group or a region.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Indicator {
    /// `all`, `species`, `species_group` or `region`.
    pub scope: String,
    /// The species, group or region (`all` for everything).
    pub name: String,
    /// Species in the scope.
    pub species: usize,
    /// Populations in the scope.
    pub populations: usize,
    /// Populations with an Ne the indicator counts.
    pub with_ne: usize,
    /// Of those, census-based.
    pub census_based: usize,
    /// Populations without an Ne (no status step, or not estimable).
    pub without_ne: usize,
    /// Counts per threshold, ascending.
    pub counts: Vec<ThresholdCount>,
    /// The horizon of the projections, when every projected population shares it.
    pub horizon_years: Option<f64>,
    /// Populations with a projection.
    pub projected: usize,
    /// Mean heterozygosity retained over the horizon (point Ne), with one common horizon.
    pub h_retained_mean: Option<f64>,
    /// Least heterozygosity retained over the horizon.
    pub h_retained_min: Option<f64>,
}

/// One case of the portfolio.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PortfolioCase {
    /// The output folder as given.
    pub output: String,
    /// Species.
    pub species: String,
    /// Document title.
    pub title: String,
    /// Organisation.
    pub organisation: String,
    /// Assessment date (`YYYY-MM-DD`).
    pub date: String,
    /// SHA-256 of its `provenance.json`.
    pub record_sha256: String,
    /// Whether its recipe has a `status` step.
    pub has_status: bool,
    /// Populations it contributes.
    pub populations: usize,
}

/// Everything the portfolio document is made from.
#[derive(Debug, Clone, PartialEq)]
pub struct PortfolioSource {
    /// Title.
    pub title: String,
    /// Organisation, when given or shared by every case.
    pub organisation: Option<String>,
    /// The portfolio's date (year, month, day).
    pub date: (i32, u32, u32),
    /// Thresholds the indicators count against, ascending.
    pub thresholds: Vec<f64>,
    /// The Ne/N ratio of census-based Ne.
    pub ne_nc_ratio: f64,
    /// The cases, in the order given.
    pub cases: Vec<PortfolioCase>,
    /// The populations, by species then population.
    pub populations: Vec<PortfolioPopulation>,
    /// The indicators: `all` first, then species, species groups and regions.
    pub indicators: Vec<Indicator>,
    /// A stable identifier (the first hex digits of a hash over the case records), printed on
    /// every page and hashed into the PDF's id.
    pub fingerprint: String,
    /// A map of the populations with coordinates, when asked for, and how positions are shown.
    pub map: Option<crate::figures::map::Positions>,
}
