//! `status`: where each population stands against the Ne thresholds, and what drift would do
//! to it over a horizon.
//!
//! # The Ne of a population
//! Per population, the year assessed is its latest sampling year (or `year` when given). Its Ne
//! is chosen by the SDK's [`representative_ne`] (the same rule `trend` and the document use):
//! the first source in `prefer` with an estimate for that population and year, read from the
//! last earlier step of its kind:
//!
//! - `"ld"` (the default): the `ne-ld` row whose rare-allele criterion suits the harmonic-mean
//!   sample size S of the group, as Waples & Do (2010) recommend: the no-singletons row when
//!   S ≤ 25 (there a Pcrit of 0.02 would screen alleles with fewer than 0.04·S ≤ 1 copies, that
//!   is none), the Pcrit-0.02 row above. An `ld-criterion` finding names, per population, the
//!   year, S and the criterion; `ld-criterion-missing` when the step did not estimate the
//!   criterion the rule asks for (the group's first row is used then);
//! - `"ld:<pcrit>"`, `"ld:singletons"`: that `ne-ld` row, whatever S;
//! - `"temporal"`: `ne_fs` of the `ne-temporal` row ending in the year assessed (of several, the
//!   latest starting), or else of the row ending latest before it;
//! - `"hetx"`: the `ne-hetx` row of the year assessed.
//!
//! The interval of an LD row is the first complete one of `ne_resample_*` (loci and
//! individuals resampled), `ne_jack_*`, `ne_param_*`; otherwise `ne_low`/`ne_high`. `ne_method`
//! names the source with the criterion used (`ld:singletons`, `ld:0.02`, `temporal`, `hetx`),
//! `ci_method` its interval, `ne_year` the year the estimate refers to (`year_end` of a temporal
//! estimate) and `s` the harmonic-mean sample size of the LD row (`null` for other sources).
//!
//! # Category and interval (thresholds from `[report] thresholds`, default 50/500)
//! See [`category`]. `category` is the band of the **point estimate**: by the labels in
//! `labels` (one per band, lowest first; by default `below 50`, `50–500`, `500 or more`; a value
//! equal to a threshold meets it), `unknown` without an estimate, `not estimable` when the
//! interval is ∞–∞. Beside it, the interval **reaches** a threshold T when low < T ≤ high (Ne
//! values on both sides of T are compatible with the data): `interval_reaches` lists those
//! thresholds (`none` when it reaches none) and `interval_note` says it in words ("the 95%
//! interval 11–inf does not exclude 50 or 500: Ne may lie on either side"). Both are `null`
//! without a complete interval. 50/500: Franklin (1980), Soulé (1980); 100/1000: Frankham,
//! Bradshaw & Brook (2014). The thresholds are genetic guidance, not minimum viable population
//! sizes.
//!
//! # Ne/Nc
//! `ne_nc` = Ne / `census_size` of the population sheet. It is `null` when the sheet gives a
//! `census_year` other than the year the Ne refers to (a finding says so), and computed with a
//! warning when the census year is not given: the ratio compares like with like only when the
//! census and the Ne's generation match. An info finding gives the context: comprehensive
//! estimates average about 0.1 (Frankham 1995), with a spread of orders of magnitude (Palstra &
//! Fraser 2012).
//!
//! # Inbreeding: two quantities, reported apart
//! - `fis`, `fis_low`, `fis_high`: today's departure from random mating within the sample,
//!   read from the `diversity` step's `by_group` for the population and the year assessed
//!   (Weir & Cockerham's FIS with its bootstrap interval). It is a present state, not a start
//!   for a projection.
//! - `f_drift`: the inbreeding drift accumulates over the horizon **relative to today's
//!   population**, 1 − (1 − 1/(2Ne))ᵗ (Wright 1931). By construction it is the share of today's
//!   heterozygosity lost, so `h_retained` + `f_drift` = 1. The two differ as F_IS and F_ST do
//!   in 1 − F_IT = (1 − F_IS)(1 − F_ST) (Wright 1951); no column here adds them up.
//!
//! # Projection over `horizon_years` ([`crate::stats::drift`])
//! With t = `horizon_years` / `generation_time_years` generations (not years) and the chosen Ne:
//!
//! - `h_retained` = H_t/H₀ = (1 − 1/(2Ne))ᵗ (Wright 1931), and `h_retained_low`/`_high` the
//!   same at the interval's lower and upper Ne bounds;
//! - `f_drift` = 1 − H_t/H₀, with `f_drift_low` at the **upper** Ne bound and `f_drift_high` at
//!   the **lower** one (a smaller Ne drifts faster), so `f_drift_high` = 1 − `h_retained_low`;
//! - `generations_to_lose_10` (and `years_to_lose_10`): until 10% of today's heterozygosity is
//!   lost, ln 0.9 / ln(1 − 1/(2Ne));
//! - table `horizon`: the Ne that keeps 90% of heterozygosity over the horizon,
//!   1/{2[1 − 0.9^{T/L}]}, T the generation time and L the horizon in years (Soulé et al. 1986,
//!   who proposed 200 years; 100 years is a later variant of their rule, hence the parameter).
//!
//! # Cost of inbreeding (docs/methods.md, "Cost of inbreeding")
//! `fitness_retained` = W_t/W₀ = exp(−B·ΔF) (Morton, Crow & Muller 1956) with ΔF = `f_drift` and
//! B = `lethal_equivalents`/2, the lethal equivalents per gamete (the parameter counts them per
//! diploid genome, 2B; default 12, the mean over the life history in wild mammals and birds of
//! O'Grady et al. 2006). `fitness_retained_low`/`_high` use `f_drift_high`/`f_drift_low` (the
//! Ne interval's lower and upper bounds); `fitness_retained_b_low`/`_b_high` use
//! `lethal_equivalents_low` (default 3.1) and `lethal_equivalents_high` (default 30.3), the median
//! and the largest estimate for juvenile survival in 40 captive mammal populations (Ralls,
//! Ballou & Templeton 1988), at the point Ne. They are `null` exactly where `f_drift` (or the
//! bound used) is. Lethal equivalents vary among species, traits and environments, and purging
//! is not modelled: the `inbreeding-depression` finding says so.
//!
//! An infinite Ne keeps everything (`h_retained` = 1, `f_drift` = 0, `fitness_retained` = 1). A
//! population that is not estimable (interval ∞–∞) has no projection. Without `generation_time_years` the projection
//! columns are `null` and a finding says how to set it.
//!
//! # Tables
//! - `populations`: population, year, ne_year, ne, ne_low, ne_high, ne_method, ci_method, s,
//!   category, interval_reaches, interval_note, census_size, census_year, ne_nc, fis, fis_low,
//!   fis_high, generations, h_retained, h_retained_low, h_retained_high, f_drift, f_drift_low,
//!   f_drift_high, generations_to_lose_10, years_to_lose_10, fitness_retained,
//!   fitness_retained_low, fitness_retained_high, fitness_retained_b_low, fitness_retained_b_high.
//! - `projection`: population, generation, years_ahead, year (sampling year + years ahead),
//!   h_retained, f_drift — one point per generation from now to the horizon (one per 5 years
//!   when that would exceed 100 generations), plus the horizon itself.
//! - `horizon`: horizon_years, generation_time_years, generations, retain_target, ne_required.
//! - `indicator` (Hoban et al. 2020; the Kunming-Montreal Global Biodiversity Framework's
//!   headline indicator A.4, "the proportion of populations within species with an effective
//!   population size > 500"): per threshold T, populations assessed, with_estimate (an
//!   estimable Ne), above_point (Ne > T, strictly), share_point, above_lower_bound (the
//!   interval's lower bound > T; a population without an interval does not count),
//!   share_lower_bound. Shares are of the populations with an estimate. The count is strict
//!   as the indicator is defined, while a category band is met at equality (an Ne of exactly
//!   500 is in the top band but not "> 500").
//!
//! # Findings
//! One `decision-caution` (info) with the cautions every reader needs; `no-estimate`
//! (warning) per population without an Ne; `no-interval` (info) when an Ne has no interval;
//! `ld-criterion` (info) and `ld-criterion-missing` (warning) per population with an LD
//! estimate; `census-year-mismatch`, `census-year-unknown`, `ne-nc-context`;
//! `no-generation-time`; `thresholds` and `horizon` (info) naming the sources of the thresholds
//! and the horizon; `inbreeding-depression` (info) on the cost of inbreeding and its limits.
//! Special values, one finding per reason naming the rows and the columns concerned: `infinite-ne` (an infinite point), `infinite-upper-bound` (only `ne_high` is
//! `"inf"`), `not-estimable` (warning: interval ∞–∞), `no-fis`, `no-fis-interval`,
//! `s-not-applicable`.

mod category;
mod findings;
mod tables;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    Descriptor, NeSource, ParamKind, PopulationInfo, RepresentativeNe, Step, StepContext, StepError, StepOutput,
    StepResult, format_number, representative::DEFAULT_PREFERENCE, representative_ne,
};
use serde::Deserialize;
use serde_json::{Value, json};

use crate::stats::drift::{drift_inbreeding, fitness_retained, heterozygosity_retained};
use crate::steps::trend::sources::diversity_points;
pub use category::{Category, categorise, default_labels};
use findings::{collect_findings, special_value_findings};
use tables::{horizon_table, indicator_table, populations_table, projection_table};

/// Thresholds used when the recipe gives none (Franklin 1980; Soulé 1980).
pub const DEFAULT_THRESHOLDS: [f64; 2] = [50.0, 500.0];
/// Share of heterozygosity to keep over the horizon (Soulé et al. 1986).
pub const RETAIN_TARGET: f64 = 0.9;
/// The loss whose timing `generations_to_lose_10` reports.
const LOSS_REPORTED: f64 = 0.1;
/// Beyond this many generations over the horizon the projection has one point per 5 years.
const MAX_GENERATION_POINTS: f64 = 100.0;
/// Spacing of projection points in years when there are too many generations.
const COARSE_STEP_YEARS: f64 = 5.0;

/// Diploid lethal equivalents by default: 12, the mean over the life history in wild mammals
/// and birds of O'Grady et al. (2006).
pub const DEFAULT_LETHAL_EQUIVALENTS: f64 = 12.0;

/// Full references of the thresholds and rules of thumb, for the step's citations.
pub const CITATIONS: [&str; 15] = [
    "Franklin IR (1980) Evolutionary change in small populations. In Soulé ME, Wilcox BA (eds) Conservation \
     Biology: An Evolutionary-Ecological Perspective. Sinauer, Sunderland MA, 135–149.",
    "Soulé ME (1980) Thresholds for survival: maintaining fitness and evolutionary potential. Ibid., 151–169.",
    "Frankham R, Bradshaw CJA, Brook BW (2014) Genetics in conservation management: revised recommendations for \
     the 50/500 rules, Red List criteria and population viability analyses. Biol Conserv 170:56–63.",
    "Frankham R (1995) Effective population size/adult population size ratios in wildlife: a review. Genet Res \
     66:95–107.",
    "Palstra FP, Fraser DJ (2012) Effective/census population size ratio estimation: a compendium and appraisal. \
     Ecol Evol 2:2357–2365.",
    "Wright S (1931) Evolution in Mendelian populations. Genetics 16:97–159.",
    "Wright S (1951) The genetical structure of populations. Ann Eugen 15:323–354.",
    "Soulé M, Gilpin M, Conway W, Foose T (1986) The millennium ark: how long a voyage, how many staterooms, how \
     many passengers? Zoo Biol 5:101–113.",
    "Hoban S et al. (2020) Genetic diversity targets and indicators in the CBD post-2020 Global Biodiversity \
     Framework must be improved. Biol Conserv 248:108654.",
    "Lande R (1995) Mutation and conservation. Conserv Biol 9:782–791.",
    "Waples RS, Do C (2010) Linkage disequilibrium estimates of contemporary Ne using highly variable genetic \
     markers: a largely untapped resource for applied conservation and evolution. Evol Appl 3:244–262.",
    "Morton NE, Crow JF, Muller HJ (1956) An estimate of the mutational damage in man from data on consanguineous \
     marriages. Proc Natl Acad Sci USA 42:855–863.",
    "O'Grady JJ, Brook BW, Reed DH, Ballou JD, Tonkyn DW, Frankham R (2006) Realistic levels of inbreeding \
     depression strongly affect extinction risk in wild populations. Biol Conserv 133:42–51.",
    "Ralls K, Ballou JD, Templeton A (1988) Estimates of lethal equivalents and the cost of inbreeding in mammals. \
     Conserv Biol 2:185–193.",
    "Nietlisbach P, Muff S, Reid JM, Whitlock MC, Keller LF (2019) Nonequivalent lethal equivalents: models and \
     inbreeding metrics for unbiased estimation of inbreeding load. Evol Appl 12:266–279.",
];

/// Parameters of `status`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Ne sources in order of preference (see the module doc for the spelling).
    pub prefer: Vec<String>,
    /// Projection horizon in years.
    pub horizon_years: f64,
    /// One label per threshold band, lowest first; `None` for the default labels.
    pub labels: Option<Vec<String>>,
    /// The sampling year assessed for every population; `None` for each one's latest.
    pub year: Option<i32>,
    /// Diploid lethal equivalents (2B) for the cost of inbreeding.
    pub lethal_equivalents: f64,
    /// The low end of the range of diploid lethal equivalents shown beside it.
    pub lethal_equivalents_low: f64,
    /// The high end of that range.
    pub lethal_equivalents_high: f64,
}

/// The descriptor of `status`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "status",
        "0.3.0",
        "Ne against the thresholds with its interval, Ne/Nc, FIS, projected loss of heterozygosity and inbreeding \
         by drift over a horizon with its cost in fitness, and the share of populations above each threshold",
    )
    .param(
        "prefer",
        ParamKind::TextList { choices: Vec::new() },
        json!(DEFAULT_PREFERENCE),
        "Ne sources in order: \"ld\" (ne-ld, no singletons at S ≤ 25, else Pcrit 0.02), \"ld:<pcrit>\", \
         \"ld:singletons\", \"temporal\", \"hetx\"",
    )
    .param(
        "horizon_years",
        ParamKind::Number { min: 1.0, max: 10_000.0 },
        json!(100),
        "projection horizon in years (converted to generations with generation_time_years)",
    )
    .param(
        "labels",
        ParamKind::TextList { choices: Vec::new() },
        Value::Null,
        "one label per threshold band, lowest first; null = \"below 50\", \"50–500\", \"500 or more\" for [50, 500]",
    )
    .param(
        "year",
        ParamKind::Integer { min: 0, max: 9999 },
        Value::Null,
        "sampling year assessed for every population; null = each population's latest sampling year",
    )
    .param(
        "lethal_equivalents",
        ParamKind::Number { min: 0.0, max: 100.0 },
        json!(DEFAULT_LETHAL_EQUIVALENTS),
        "diploid lethal equivalents (2B) for the fitness cost of f_drift, exp(−(2B/2)·f_drift); 12 = mean over the \
         life history in wild mammals and birds (O'Grady et al. 2006)",
    )
    .param(
        "lethal_equivalents_low",
        ParamKind::Number { min: 0.0, max: 100.0 },
        json!(3.1),
        "low end of the range of diploid lethal equivalents shown (fitness_retained_b_low); 3.1 = median for \
         juvenile survival in 40 captive mammal populations (Ralls, Ballou & Templeton 1988)",
    )
    .param(
        "lethal_equivalents_high",
        ParamKind::Number { min: 0.0, max: 100.0 },
        json!(30.3),
        "high end of that range (fitness_retained_b_high); 30.3 = the largest of those 40 estimates (Ralls, Ballou \
         & Templeton 1988)",
    )
}

/// The `status` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Status;

impl Step for Status {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let setting = Setting::resolve(ctx, &params)?;
        let assessed = assess_populations(ctx, &setting);
        let mut output = StepOutput::default();
        output.tables.insert("populations".into(), populations_table(&assessed, &setting)?);
        output.tables.insert("projection".into(), projection_table(&assessed, &setting)?);
        output.tables.insert("horizon".into(), horizon_table(&setting)?);
        output.tables.insert("indicator".into(), indicator_table(&assessed, &setting)?);
        output.findings = collect_findings(&assessed, &setting);
        output.findings.extend(special_value_findings(&output.tables["populations"]));
        output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
        Ok(output)
    }
}

/// The step's resolved choices.
struct Setting {
    sources: Vec<NeSource>,
    thresholds: Vec<f64>,
    labels: Vec<String>,
    horizon_years: f64,
    generation_time: Option<f64>,
    year: Option<i32>,
    /// Diploid lethal equivalents: the value used and the range shown.
    lethal_equivalents: LethalEquivalents,
}

/// Diploid lethal equivalents (2B): the value used for `fitness_retained` and the range shown.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct LethalEquivalents {
    pub point: f64,
    pub low: f64,
    pub high: f64,
}

impl Setting {
    fn resolve(ctx: &StepContext<'_>, params: &Params) -> Result<Setting, StepError> {
        let sources = params
            .prefer
            .iter()
            .map(|w| NeSource::parse(w).map_err(|e| StepError::new(format!("parameter `prefer`: {e}"))))
            .collect::<Result<Vec<_>, _>>()?;
        let thresholds = checked_thresholds(&ctx.assessment.thresholds)?;
        let labels = match &params.labels {
            Some(labels) => checked_labels(labels, &thresholds)?,
            None => default_labels(&thresholds),
        };
        let generation_time = ctx.assessment.generation_time_years.filter(|g| g.is_finite() && *g > 0.0);
        let lethal_equivalents = LethalEquivalents {
            point: params.lethal_equivalents,
            low: params.lethal_equivalents_low,
            high: params.lethal_equivalents_high,
        };
        if !(lethal_equivalents.low <= lethal_equivalents.point && lethal_equivalents.point <= lethal_equivalents.high)
        {
            return Err(StepError::new(format!(
                "parameters `lethal_equivalents_low` = {}, `lethal_equivalents` = {} and `lethal_equivalents_high` = {} \
                 must be in ascending order\n  help: give a range around the value used, for example 3.1, 12 and 30.3",
                format_number(lethal_equivalents.low),
                format_number(lethal_equivalents.point),
                format_number(lethal_equivalents.high)
            )));
        }
        Ok(Setting {
            lethal_equivalents,
            sources,
            thresholds,
            labels,
            horizon_years: params.horizon_years,
            generation_time,
            year: params.year,
        })
    }

    /// Generations over the horizon, when the generation time is known.
    fn horizon_generations(&self) -> Option<f64> {
        self.generation_time.map(|g| self.horizon_years / g)
    }
}

fn checked_thresholds(given: &[f64]) -> Result<Vec<f64>, StepError> {
    if given.is_empty() {
        return Ok(DEFAULT_THRESHOLDS.to_vec());
    }
    let ascending = given.windows(2).all(|w| w[0] < w[1]);
    if !ascending || given.iter().any(|t| !t.is_finite() || *t <= 0.0) {
        let text: Vec<String> = given.iter().map(|t| format_number(*t)).collect();
        return Err(StepError::new(format!(
            "[report] thresholds = [{}] must be positive and ascending\n  help: for example thresholds = [50, 500] \
             or [100, 1000]",
            text.join(", ")
        )));
    }
    Ok(given.to_vec())
}

fn checked_labels(labels: &[String], thresholds: &[f64]) -> Result<Vec<String>, StepError> {
    let bands = thresholds.len() + 1;
    if labels.len() != bands {
        let example: Vec<String> = default_labels(thresholds).iter().map(|l| format!("\"{l}\"")).collect();
        return Err(StepError::new(format!(
            "parameter `labels` has {} text(s) but the thresholds make {bands} bands\n  help: give one label per \
             band, lowest first, for example [{}]",
            labels.len(),
            example.join(", ")
        )));
    }
    Ok(labels.to_vec())
}

/// FIS of a group with its bootstrap interval, as `diversity` gives it.
#[derive(Debug, Clone, Copy, Default)]
struct Fis {
    value: Option<f64>,
    low: Option<f64>,
    high: Option<f64>,
}

/// One population's assessment.
struct Assessed {
    population: String,
    year: i32,
    estimate: Option<RepresentativeNe>,
    category: Category,
    census: Option<PopulationInfo>,
    fis: Fis,
}

impl Assessed {
    /// The estimate, when it is estimable (its lower bound is not `"inf"`).
    fn estimable(&self) -> Option<&RepresentativeNe> {
        self.estimate.as_ref().filter(|e| e.is_estimable())
    }

    fn interval(&self) -> Option<(f64, f64)> {
        self.estimable()?.bounds()
    }

    /// Ne/Nc, unless the census year differs from the Ne's year.
    fn ne_over_census(&self) -> Option<f64> {
        let (estimate, census) = (self.estimable()?, self.census.as_ref()?);
        let size = census.census_size.filter(|n| *n > 0.0)?;
        match census.census_year {
            Some(y) if y != estimate.year => None,
            _ => Some(estimate.ne / size),
        }
    }
}

fn assess_populations(ctx: &StepContext<'_>, setting: &Setting) -> Vec<Assessed> {
    let fis_of = fis_reader(ctx.earlier_by_uses("diversity"));
    let census: BTreeMap<&str, &PopulationInfo> =
        ctx.assessment.populations.iter().map(|p| (p.population.as_str(), p)).collect();
    ctx.view
        .populations()
        .into_iter()
        .map(|group| {
            let year = setting.year.unwrap_or(group.year);
            let estimate = representative_ne(ctx.earlier, &group.population, year, &setting.sources);
            let estimable = estimate.as_ref().is_none_or(RepresentativeNe::is_estimable);
            let category = categorise(estimate.as_ref().map(|e| e.ne), estimable, &setting.thresholds);
            Assessed {
                fis: fis_of(&group.population, year),
                census: census.get(group.population.as_str()).map(|c| (*c).clone()),
                population: group.population,
                year,
                estimate,
                category,
            }
        })
        .collect()
}

/// FIS and its interval by population and year from a `diversity` result.
fn fis_reader(diversity: Option<&StepResult>) -> impl Fn(&str, i32) -> Fis {
    let column = |name: &str| diversity.and_then(|d| diversity_points(d, name).ok()).unwrap_or_default();
    let (value, low, high) = (column("fis"), column("fis_low"), column("fis_high"));
    move |population: &str, year: i32| {
        let at = |points: &BTreeMap<String, BTreeMap<i32, f64>>| points.get(population)?.get(&year).copied();
        Fis { value: at(&value), low: at(&low), high: at(&high) }
    }
}

/// Drift over `generations` at one Ne.
struct Projection {
    retained: f64,
    drift_inbreeding: f64,
}

impl Projection {
    /// W_t/W₀ = exp(−(2B/2)·F_drift) with `lethal_equivalents` diploid lethal equivalents
    /// (Morton, Crow & Muller 1956).
    fn fitness_retained(&self, lethal_equivalents: f64) -> f64 {
        fitness_retained(lethal_equivalents, self.drift_inbreeding)
    }
}

fn project(ne: f64, generations: f64) -> Projection {
    Projection {
        retained: heterozygosity_retained(ne, generations),
        drift_inbreeding: drift_inbreeding(ne, generations),
    }
}

/// The Ne that keeps `target` of the heterozygosity for `horizon_years` with generations of
/// `generation_time` years: 1/{2[1 − target^{L/T}]} (Soulé et al. 1986).
pub fn ne_to_retain(target: f64, horizon_years: f64, generation_time: f64) -> f64 {
    1.0 / (2.0 * (1.0 - target.powf(generation_time / horizon_years)))
}
