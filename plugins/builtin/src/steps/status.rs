//! `status`: where each population stands against the Ne thresholds, and what drift would do
//! to it over a horizon.
//!
//! # The Ne of a population
//! Per population, the year assessed is its latest sampling year (or `year` when given). Its Ne
//! is the first source in `prefer` that has an estimate for that population and year:
//!
//! - `"ld:<pcrit>"`: the `ne-ld` row at that Pcrit (`"ld:singletons"` for the no-singletons
//!   row); `"ld"` alone: the Pcrit of the step's first row. Its interval is the first complete
//!   one of `ne_resample_*` (loci and individuals resampled), `ne_jack_*`, `ne_param_*`;
//! - `"temporal"`: `ne_fs` of the `ne-temporal` row ending in the year assessed (of several,
//!   the latest starting), or else of the row ending latest before it, with `ne_low`/`ne_high`;
//! - `"hetx"`: the `ne-hetx` row of the year assessed (`ne_low`/`ne_high` when present).
//!
//! When several steps of one kind ran, the last one is read. `ne_method` names the source used
//! and `ci_method` its interval; `ne_year` is the year the estimate refers to.
//!
//! # Category (thresholds from `[report] thresholds`, default 50/500)
//! See [`category`]: `unknown` without an estimate; `straddles T` when the 95% interval reaches
//! both sides of a threshold T (low < T ≤ high); otherwise the band of the point estimate, by
//! the labels in `labels` (one per band, lowest first; by default `below 50`, `50–500`,
//! `above 500`). A value equal to a threshold meets it. 50/500: Franklin (1980), Soulé (1980);
//! 100/1000: Frankham, Bradshaw & Brook (2014). The thresholds are genetic guidance, not
//! minimum viable population sizes.
//!
//! # Ne/Nc
//! `ne_nc` = Ne / `census_size` of the population sheet. It is `null` when the sheet gives a
//! `census_year` other than the year the Ne refers to (a finding says so), and computed with a
//! warning when the census year is not given: the ratio compares like with like only when the
//! census and the Ne's generation match. An info finding gives the context: comprehensive
//! estimates average about 0.1 (Frankham 1995), with a spread of orders of magnitude (Palstra &
//! Fraser 2012).
//!
//! # Projection over `horizon_years` (METHODS §1 and §9; [`crate::stats::drift`])
//! With t = `horizon_years` / `generation_time_years` generations (not years) and the chosen Ne:
//!
//! - `h_retained` = H_t/H₀ = (1 − 1/(2Ne))ᵗ (Wright 1931), and `h_retained_low`/`_high` the
//!   same at the interval's bounds;
//! - `f_drift` = 1 − H_t/H₀: the inbreeding that accumulates from now on, relative to today's
//!   population (F_t with F₀ = 0);
//! - `f_projected` = 1 − (1 − F₀)(1 − 1/(2Ne))ᵗ: the total F reached, with F₀ = the `f` of that
//!   group in the `diversity` step's `by_group` (`null` without it);
//! - `generations_to_lose_10` (and `years_to_lose_10`): until 10% of today's heterozygosity is
//!   lost, ln 0.9 / ln(1 − 1/(2Ne));
//! - table `horizon`: the Ne that keeps 90% of heterozygosity over the horizon,
//!   1/{2[1 − 0.9^{L/T}]} (Soulé et al. 1986, who proposed 200 years; 100 years is the later
//!   captive-breeding convention, hence the parameter).
//!
//! An infinite Ne keeps everything (`h_retained` = 1). Without `generation_time_years` the
//! projection columns are `null` and a finding says how to set it.
//!
//! # Tables
//! - `populations`: population, year, ne_year, ne, ne_low, ne_high, ne_method, ci_method,
//!   category, census_size, census_year, ne_nc, f0, generations, h_retained, h_retained_low,
//!   h_retained_high, f_drift, f_projected, generations_to_lose_10, years_to_lose_10.
//! - `projection`: population, generation, years_ahead, year (sampling year + years ahead),
//!   h_retained, f_drift, f_projected — one point
//!   per generation from now to the horizon (one per 5 years when that would exceed 100
//!   generations), plus the horizon itself.
//! - `horizon`: horizon_years, generation_time_years, generations, retain_target, ne_required.
//! - `indicator` (Hoban et al. 2020): per threshold, populations assessed, with_estimate,
//!   above_point (point ≥ threshold), share_point, above_lower_bound (interval's lower bound ≥
//!   threshold; a population without an interval does not count), share_lower_bound. Shares
//!   are of the populations with an estimate.
//!
//! # Findings
//! One `decision-caution` (info) with the cautions every reader needs; `no-estimate`
//! (warning) per population without an Ne; `no-interval` (info) when an Ne has no interval;
//! `census-year-mismatch`, `census-year-unknown`, `ne-nc-context`; `no-generation-time`;
//! `thresholds` and `horizon` (info) naming the sources of the thresholds and the horizon.

mod category;
mod estimates;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    Cell, Descriptor, Finding, FindingLevel, ParamKind, PopulationInfo, Step, StepContext, StepError, StepOutput,
    Table, Where, format_number,
};
use serde::Deserialize;
use serde_json::{Value, json};

use crate::special_values::{explain, group_name, rows_where};
use crate::stats::drift::{generations_to_lose, heterozygosity_retained, inbreeding_after};
use crate::steps::trend::sources::{PointsByPopulation, diversity_points};
pub use category::{Category, categorise, default_labels};
use estimates::{ChosenNe, NeSource, choose};

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

/// Full references of the thresholds and rules of thumb, for the step's citations.
pub const CITATIONS: [&str; 9] = [
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
    "Soulé M, Gilpin M, Conway W, Foose T (1986) The millennium ark: how long a voyage, how many staterooms, how \
     many passengers? Zoo Biol 5:101–113.",
    "Hoban S et al. (2020) Genetic diversity targets and indicators in the CBD post-2020 Global Biodiversity \
     Framework must be improved. Biol Conserv 248:108654.",
    "Lande R (1995) Mutation and conservation. Conserv Biol 9:782–791.",
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
}

/// The descriptor of `status`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "status",
        "0.1.0",
        "Ne against the thresholds with its interval, Ne/Nc, projected loss of heterozygosity and rise of F over a \
         horizon, and the share of populations above each threshold",
    )
    .param(
        "prefer",
        ParamKind::TextList { choices: Vec::new() },
        json!(["ld:0.02", "temporal", "hetx"]),
        "Ne sources in order: \"ld:<pcrit>\" (ne-ld row at that Pcrit, or \"ld:singletons\"), \"ld\", \"temporal\", \"hetx\"",
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
        "one label per threshold band, lowest first; null = \"below 50\", \"50–500\", \"above 500\" for [50, 500]",
    )
    .param(
        "year",
        ParamKind::Integer { min: 0, max: 9999 },
        Value::Null,
        "sampling year assessed for every population; null = each population's latest sampling year",
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
}

impl Setting {
    fn resolve(ctx: &StepContext<'_>, params: &Params) -> Result<Setting, StepError> {
        let sources = params.prefer.iter().map(|w| NeSource::parse(w)).collect::<Result<Vec<_>, _>>()?;
        let thresholds = checked_thresholds(&ctx.assessment.thresholds)?;
        let labels = match &params.labels {
            Some(labels) => checked_labels(labels, &thresholds)?,
            None => default_labels(&thresholds),
        };
        let generation_time = ctx.assessment.generation_time_years.filter(|g| g.is_finite() && *g > 0.0);
        Ok(Setting {
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

/// One population's assessment.
struct Assessed {
    population: String,
    year: i32,
    estimate: Option<ChosenNe>,
    category: Category,
    census: Option<PopulationInfo>,
    initial_inbreeding: Option<f64>,
}

impl Assessed {
    fn interval(&self) -> Option<(f64, f64)> {
        let e = self.estimate.as_ref()?;
        Some((e.low?, e.high?))
    }

    /// Ne/Nc, unless the census year differs from the Ne's year.
    fn ne_over_census(&self) -> Option<f64> {
        let (estimate, census) = (self.estimate.as_ref()?, self.census.as_ref()?);
        let size = census.census_size.filter(|n| *n > 0.0)?;
        match census.census_year {
            Some(y) if y != estimate.year => None,
            _ => Some(estimate.ne / size),
        }
    }
}

fn assess_populations(ctx: &StepContext<'_>, setting: &Setting) -> Vec<Assessed> {
    let f_by_group: PointsByPopulation =
        ctx.earlier_by_uses("diversity").and_then(|d| diversity_points(d, "f").ok()).unwrap_or_default();
    let census: BTreeMap<&str, &PopulationInfo> =
        ctx.assessment.populations.iter().map(|p| (p.population.as_str(), p)).collect();
    ctx.view
        .populations()
        .into_iter()
        .map(|group| {
            let year = setting.year.unwrap_or(group.year);
            let estimate = choose(&setting.sources, ctx.earlier, &group.population, year);
            let interval = estimate.as_ref().and_then(|e| Some((e.low?, e.high?)));
            let category = categorise(estimate.as_ref().map(|e| e.ne), interval, &setting.thresholds);
            Assessed {
                initial_inbreeding: f_by_group.get(&group.population).and_then(|f| f.get(&year)).copied(),
                census: census.get(group.population.as_str()).map(|c| (*c).clone()),
                population: group.population,
                year,
                estimate,
                category,
            }
        })
        .collect()
}

/// Drift projections of one Ne over `generations`.
struct Projection {
    retained: f64,
    drift_inbreeding: f64,
    projected_inbreeding: Option<f64>,
}

fn project(ne: f64, generations: f64, initial_inbreeding: Option<f64>) -> Projection {
    let retained = heterozygosity_retained(ne, generations);
    Projection {
        retained,
        drift_inbreeding: 1.0 - retained,
        projected_inbreeding: initial_inbreeding.map(|f0| inbreeding_after(ne, generations, f0)),
    }
}

/// The Ne that keeps `target` of the heterozygosity for `horizon_years` with generations of
/// `generation_time` years: 1/{2[1 − target^{L/T}]} (Soulé et al. 1986; METHODS §9).
pub fn ne_to_retain(target: f64, horizon_years: f64, generation_time: f64) -> f64 {
    1.0 / (2.0 * (1.0 - target.powf(generation_time / horizon_years)))
}

fn populations_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "year",
        "ne_year",
        "ne",
        "ne_low",
        "ne_high",
        "ne_method",
        "ci_method",
        "category",
        "census_size",
        "census_year",
        "ne_nc",
        "f0",
        "generations",
        "h_retained",
        "h_retained_low",
        "h_retained_high",
        "f_drift",
        "f_projected",
        "generations_to_lose_10",
        "years_to_lose_10",
    ]);
    let generations = setting.horizon_generations();
    for a in assessed {
        let e = a.estimate.as_ref();
        let at = |ne: Option<f64>| Some(project(ne?, generations?, a.initial_inbreeding));
        let point = at(e.map(|e| e.ne));
        let to_lose = e.map(|e| generations_to_lose(LOSS_REPORTED, e.ne));
        table.push_row(vec![
            Cell::text(&a.population),
            Cell::Int(a.year.into()),
            e.map_or(Cell::Null, |e| Cell::Int(e.year.into())),
            Cell::maybe(e.map(|e| e.ne)),
            Cell::maybe(e.and_then(|e| e.low)),
            Cell::maybe(e.and_then(|e| e.high)),
            e.map_or(Cell::Null, |e| Cell::text(&e.method)),
            e.and_then(|e| e.interval).map_or(Cell::Null, Cell::text),
            Cell::text(a.category.label(&setting.thresholds, &setting.labels)),
            Cell::maybe(a.census.as_ref().and_then(|c| c.census_size)),
            a.census.as_ref().and_then(|c| c.census_year).map_or(Cell::Null, |y| Cell::Int(y.into())),
            Cell::maybe(a.ne_over_census()),
            Cell::maybe(a.initial_inbreeding),
            Cell::maybe(generations),
            Cell::maybe(point.as_ref().map(|p| p.retained)),
            Cell::maybe(at(e.and_then(|e| e.low)).map(|p| p.retained)),
            Cell::maybe(at(e.and_then(|e| e.high)).map(|p| p.retained)),
            Cell::maybe(point.as_ref().map(|p| p.drift_inbreeding)),
            Cell::maybe(point.as_ref().and_then(|p| p.projected_inbreeding)),
            Cell::maybe(to_lose),
            Cell::maybe(to_lose.zip(setting.generation_time).map(|(t, g)| t * g)),
        ])?;
    }
    Ok(table)
}

/// Generations at which the projection is drawn: every generation, or every 5 years when
/// the horizon spans more than 100 generations, and the horizon itself.
fn projection_points(generations: f64, generation_time: f64) -> Vec<f64> {
    let step = if generations > MAX_GENERATION_POINTS { COARSE_STEP_YEARS / generation_time } else { 1.0 };
    let count = (generations / step).floor() as usize;
    let mut points: Vec<f64> = (0..=count).map(|i| i as f64 * step).collect();
    if points.last().is_some_and(|&last| generations - last > 1e-9) {
        points.push(generations);
    }
    points
}

fn projection_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table =
        Table::new(&["population", "generation", "years_ahead", "year", "h_retained", "f_drift", "f_projected"]);
    let (Some(generations), Some(generation_time)) = (setting.horizon_generations(), setting.generation_time) else {
        return Ok(table);
    };
    for a in assessed {
        let Some(e) = a.estimate.as_ref() else { continue };
        for t in projection_points(generations, generation_time) {
            let p = project(e.ne, t, a.initial_inbreeding);
            table.push_row(vec![
                Cell::text(&a.population),
                Cell::number(t),
                Cell::number(t * generation_time),
                Cell::number(f64::from(a.year) + t * generation_time),
                Cell::number(p.retained),
                Cell::number(p.drift_inbreeding),
                Cell::maybe(p.projected_inbreeding),
            ])?;
        }
    }
    Ok(table)
}

fn horizon_table(setting: &Setting) -> Result<Table, StepError> {
    let mut table =
        Table::new(&["horizon_years", "generation_time_years", "generations", "retain_target", "ne_required"]);
    table.push_row(vec![
        Cell::number(setting.horizon_years),
        Cell::maybe(setting.generation_time),
        Cell::maybe(setting.horizon_generations()),
        Cell::number(RETAIN_TARGET),
        Cell::maybe(setting.generation_time.map(|g| ne_to_retain(RETAIN_TARGET, setting.horizon_years, g))),
    ])?;
    Ok(table)
}

fn indicator_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "threshold",
        "populations",
        "with_estimate",
        "above_point",
        "share_point",
        "above_lower_bound",
        "share_lower_bound",
    ]);
    let with_estimate = assessed.iter().filter(|a| a.estimate.is_some()).count();
    let share = |count: usize| (with_estimate > 0).then(|| count as f64 / with_estimate as f64);
    for &threshold in &setting.thresholds {
        let above_point = assessed.iter().filter(|a| a.estimate.as_ref().is_some_and(|e| e.ne >= threshold)).count();
        let above_low = assessed.iter().filter(|a| a.interval().is_some_and(|(low, _)| low >= threshold)).count();
        table.push_row(vec![
            Cell::number(threshold),
            Cell::Int(assessed.len() as i64),
            Cell::Int(with_estimate as i64),
            Cell::Int(above_point as i64),
            Cell::maybe(share(above_point)),
            Cell::Int(above_low as i64),
            Cell::maybe(share(above_low)),
        ])?;
    }
    Ok(table)
}

fn collect_findings(assessed: &[Assessed], setting: &Setting) -> Vec<Finding> {
    let mut findings = vec![caution_finding(), thresholds_finding(setting)];
    for a in assessed {
        findings.extend(population_findings(a, setting));
    }
    if assessed.iter().any(|a| a.ne_over_census().is_some()) {
        findings.push(Finding::info(
            "ne-nc-context",
            "Ne/Nc: comprehensive estimates across wildlife average about 0.1 (Frankham 1995), but the ratio varies \
             by orders of magnitude between species and years (Palstra & Fraser 2012); it compares like with like \
             only when the census year and the generation the Ne refers to match",
            Where::default(),
        ));
    }
    findings.push(horizon_finding(setting));
    findings
}

fn caution_finding() -> Finding {
    Finding::info(
        "decision-caution",
        "Every estimate here carries uncertainty: read the category with its confidence interval, not the point \
         alone. The thresholds are guidance on genetic risk, not minimum viable population sizes, and the \
         projections assume a constant Ne. Decisions about a population follow the local regulatory framework and \
         a review of these results by a qualified geneticist.",
        Where::default(),
    )
}

fn thresholds_finding(setting: &Setting) -> Finding {
    let text: Vec<String> = setting.thresholds.iter().map(|t| format_number(*t)).collect();
    let source = match setting.thresholds.as_slice() {
        [a, b] if (*a, *b) == (50.0, 500.0) => " (Franklin 1980; Soulé 1980; Lande 1995 argued for more)",
        [a, b] if (*a, *b) == (100.0, 1000.0) => " (Frankham, Bradshaw & Brook 2014)",
        _ => " (set in [report] thresholds)",
    };
    Finding::info(
        "thresholds",
        format!(
            "categories compare Ne with the thresholds {}{source}; a population whose 95% interval crosses a \
             threshold is reported as straddling it",
            text.join(" and ")
        ),
        Where::default(),
    )
}

fn population_findings(a: &Assessed, setting: &Setting) -> Vec<Finding> {
    let location = Where::group(&a.population, a.year);
    let mut findings = Vec::new();
    let Some(estimate) = a.estimate.as_ref() else {
        let sources: Vec<&str> = setting.sources.iter().map(NeSource::uses).collect();
        findings.push(Finding::warning(
            "no-estimate",
            format!(
                "{} {}: none of the Ne sources in `prefer` ({}) has an estimate for this population and year; its \
                 category is \"unknown\"",
                a.population,
                a.year,
                sources.join(", ")
            ),
            location,
        ));
        return findings;
    };
    if a.interval().is_none() {
        findings.push(Finding::info(
            "no-interval",
            format!(
                "{} {}: the Ne from {} has no confidence interval, so its category rests on the point alone",
                a.population, a.year, estimate.method
            ),
            location.clone(),
        ));
    }
    if let Some(census) = &a.census {
        findings.extend(census_finding(a, census, estimate, location));
    }
    findings
}

fn census_finding(a: &Assessed, census: &PopulationInfo, estimate: &ChosenNe, location: Where) -> Option<Finding> {
    census.census_size?;
    match census.census_year {
        Some(y) if y != estimate.year => Some(Finding::info(
            "census-year-mismatch",
            format!(
                "{}: the census is from {y} but the Ne refers to {}; ne_nc is left empty because the ratio compares \
                 like with like only when the years match",
                a.population, estimate.year
            ),
            location,
        )),
        None => Some(Finding::warning(
            "census-year-unknown",
            format!(
                "{}: the population sheet gives no census_year, so ne_nc assumes the census matches the Ne of {}; \
                 add census_year to check it",
                a.population, estimate.year
            ),
            location,
        )),
        _ => None,
    }
}

/// The columns of `populations` that carry an infinite Ne or a quantity derived from one.
const INFINITE_COLUMNS: [&str; 6] = ["ne", "ne_low", "ne_high", "ne_nc", "generations_to_lose_10", "years_to_lose_10"];

/// The findings for `"inf"` cells of `populations` (an infinite Ne or bound as its source step
/// gives it, and what follows from it) and for a projection without F₀.
fn special_value_findings(populations: &Table) -> Vec<Finding> {
    let infinite_columns = |r: &crate::special_values::Row<'_>| r.columns_where(&INFINITE_COLUMNS, |r, c| r.is_inf(c));
    let infinite = rows_where(
        populations,
        |r| !infinite_columns(r).is_empty(),
        |r| format!("{} ({})", group_name(r), infinite_columns(r)),
    );
    let without_f0 = rows_where(populations, |r| r.is_finite("h_retained") && r.is_null("f0"), group_name);
    let findings = [
        explain(FindingLevel::Info, "infinite-ne", &infinite, |n, list| {
            format!(
                "{n} population(s) have an Ne or a bound of \"inf\" as its source step gives it (that step's \
                 findings say why): an infinite Ne loses no heterozygosity, so h_retained is 1 there, \
                 generations_to_lose_10 and years_to_lose_10 are \"inf\" and ne_nc is \"inf\": {list}"
            )
        }),
        explain(FindingLevel::Info, "no-initial-inbreeding", &without_f0, |n, list| {
            format!(
                "{n} population(s) have no F for their sampling year in the results of a `diversity` step, so f0 and \
                 f_projected are null (h_retained and f_drift do not need it); add a diversity step to the recipe to \
                 project the total F: {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}

fn horizon_finding(setting: &Setting) -> Finding {
    let Some(generation_time) = setting.generation_time else {
        return Finding::warning(
            "no-generation-time",
            "the projection needs the generation time: set generation_time_years in [assessment] of case.toml; \
             the projection columns are empty",
            Where::default(),
        );
    };
    let required = ne_to_retain(RETAIN_TARGET, setting.horizon_years, generation_time);
    Finding::info(
        "horizon",
        format!(
            "over {} years ({} generations of {} years) an Ne of at least {} keeps 90% of today's heterozygosity \
             (Soulé et al. 1986, who proposed 200 years; 100 years is the later common convention)",
            format_number(setting.horizon_years),
            format_number((setting.horizon_years / generation_time * 100.0).round() / 100.0),
            format_number(generation_time),
            format_number((required * 100.0).round() / 100.0)
        ),
        Where::default(),
    )
}
