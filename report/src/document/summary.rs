//! The executive summary (one status line and one table row per population) and the
//! projections of heterozygosity and inbreeding from the `status` step.

use serde::Serialize;

use super::super::contract::{Row, col, table, table_of, uses};
use super::super::format::{self, NumberStyle};
use super::sections::{Context, latest_rows};
use super::table::{TableData, readable};

/// The executive summary.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Id of the `status` step, when in the recipe.
    pub status_step: Option<String>,
    /// Ids of the Ne steps in the recipe.
    pub ne_steps: Vec<String>,
    /// Id of the `diversity` step, when in the recipe.
    pub diversity_step: Option<String>,
    /// Projection horizon in years (the status step's `horizon_years`).
    pub horizon_years: Option<String>,
    /// The horizon in generations.
    pub horizon_generations: Option<String>,
    /// One entry per population.
    pub populations: Vec<PopulationSummary>,
    /// The status table.
    pub table: TableData,
    /// Shares of populations above each threshold (the status step's `indicator`).
    pub indicator: Option<TableData>,
    /// How the status step chose each population's Ne (its `prefer` order), in words.
    pub ne_rule: Option<String>,
}

/// What the summary says about one population.
#[derive(Debug, Clone, Serialize)]
pub struct PopulationSummary {
    /// Name.
    pub name: String,
    /// Status from the `status` step.
    pub status: Option<StatusFacts>,
    /// Latest diversity.
    pub diversity: Option<DiversityFacts>,
    /// He trend in words, short (for the status table).
    pub trend: Option<String>,
    /// The same in a sentence with the data's direction, when the short form is only "no clear
    /// trend" (too few years for a test).
    pub trend_detail: Option<String>,
    /// Projected drift over the horizon.
    pub drift: Option<DriftFacts>,
    /// Census size with its year from the population sheet (`260 (2024)`), when given.
    pub census: Option<String>,
    /// The census year, when given.
    pub census_year: Option<i32>,
}

/// Ne and category of one population.
#[derive(Debug, Clone, Serialize)]
pub struct StatusFacts {
    /// Year the Ne refers to.
    pub year: Option<String>,
    /// Ne.
    pub ne: String,
    /// Its 95 % interval, when given.
    pub ne_ci: Option<String>,
    /// Which estimate the status step chose, in words.
    pub method: Option<String>,
    /// The same, short, for the table.
    pub method_short: Option<String>,
    /// Harmonic-mean sample size of an LD estimate.
    pub s: Option<String>,
    /// The band of the point estimate.
    pub category: String,
    /// What the interval does and does not exclude, in a sentence.
    pub interval_note: Option<String>,
    /// Ne/Nc.
    pub ne_nc: Option<String>,
    /// The estimating step found the estimate in the range where its method loses precision
    /// (Ne large relative to the sample).
    pub low_precision: bool,
}

/// Latest diversity of one population.
#[derive(Debug, Clone, Serialize)]
pub struct DiversityFacts {
    /// Sampling year.
    pub year: String,
    /// Samples.
    pub n: String,
    /// Ho.
    pub ho: String,
    /// He.
    pub he: String,
    /// F = 1 − Ho/He.
    pub f: String,
    /// FIS (Weir & Cockerham 1984) of the same sample: non-random mating now.
    pub fis: Option<String>,
    /// Its 95 % interval, when computed.
    pub fis_ci: Option<String>,
}

/// Heterozygosity kept over the horizon and the inbreeding that drift adds meanwhile. Both
/// are relative to today's population and neither starts from the sample's FIS.
#[derive(Debug, Clone, Serialize)]
pub struct DriftFacts {
    /// Ne used.
    pub ne: String,
    /// Share of today's heterozygosity retained.
    pub h_retained: String,
    /// Its range over the Ne interval, when given.
    pub h_retained_ci: Option<String>,
    /// Share lost.
    pub h_lost: String,
    /// Inbreeding accumulated by drift over the horizon, F_drift = 1 − (1 − 1/(2Ne))ᵗ: the
    /// share lost, as an inbreeding coefficient.
    pub f_drift: String,
    /// Its range over the Ne interval, when given.
    pub f_drift_ci: Option<String>,
    /// Expected fitness relative to today after that inbreeding, exp(−B·F_drift) (Morton,
    /// Crow & Muller 1956), when the status step gives it.
    pub fitness: Option<FitnessFacts>,
}

/// The cost of drift inbreeding in fitness, as the status step gives it.
#[derive(Debug, Clone, Serialize)]
pub struct FitnessFacts {
    /// Fitness retained at the point estimate and the lethal equivalents used.
    pub retained: String,
    /// Its range over the Ne interval.
    pub over_ne: Option<String>,
    /// Its range over the range of lethal equivalents.
    pub over_b: Option<String>,
}

pub(crate) fn summary(ctx: &Context<'_>) -> Summary {
    let status = ctx.results.step(uses::STATUS);
    let status_rows = status.and_then(|s| table_of(s, table::POPULATIONS)).map(|t| latest_rows(&t)).unwrap_or_default();
    let diversity_rows =
        ctx.results.table(uses::DIVERSITY, table::BY_GROUP).map(|t| latest_rows(&t)).unwrap_or_default();
    let (horizon_years, horizon_generations) = horizon(ctx);
    let populations: Vec<PopulationSummary> = ctx
        .populations
        .iter()
        .map(|name| {
            let status_row = status_rows.iter().find(|r| r.text(col::POPULATION) == Some(name.as_str()));
            let diversity_row = diversity_rows.iter().find(|r| r.text(col::POPULATION) == Some(name.as_str()));
            let census = ctx
                .results
                .doc()
                .assessment
                .populations
                .iter()
                .find(|p| &p.population == name)
                .and_then(|p| Some((p.census_size?, p.census_year)));
            PopulationSummary {
                name: name.clone(),
                status: status_row.map(|r| StatusFacts { low_precision: low_precision(ctx, r), ..status_facts(r) }),
                diversity: diversity_row.map(diversity_facts),
                trend: he_trend(ctx, name),
                trend_detail: he_trend_detail(ctx, name),
                drift: status_row.and_then(drift_facts),
                census: census.map(|(size, year)| match year {
                    Some(year) => format!("{} ({year})", format::effective_size(size)),
                    None => format::effective_size(size),
                }),
                census_year: census.and_then(|(_, year)| year),
            }
        })
        .collect();
    let ne_steps = [uses::NE_LD, uses::NE_TEMPORAL, uses::NE_HETX]
        .iter()
        .flat_map(|u| ctx.results.steps(u))
        .map(|s| s.id.clone())
        .collect();
    Summary {
        status_step: status.map(|s| s.id.clone()),
        ne_steps,
        diversity_step: ctx.results.step(uses::DIVERSITY).map(|s| s.id.clone()),
        horizon_years,
        horizon_generations,
        table: status_table(&populations),
        indicator: status.and_then(|s| table_of(s, table::INDICATOR)).filter(|t| !t.is_empty()).map(|t| readable(&t)),
        ne_rule: status.and_then(|_| ne_rule(ctx)),
        populations,
    }
}

/// The projection horizon in years and generations: the status step's `horizon` table when it
/// has one, else its `horizon_years` parameter and the generation time.
pub(super) fn horizon(ctx: &Context<'_>) -> (Option<String>, Option<String>) {
    let row = ctx.results.table(uses::STATUS, table::HORIZON).and_then(|t| t.iter().next());
    let years = row
        .and_then(|r| r.number("horizon_years"))
        .or_else(|| ctx.param(uses::STATUS, "horizon_years").and_then(serde_json::Value::as_f64));
    let generations =
        row.and_then(|r| r.number(col::GENERATIONS)).or_else(|| years.zip(ctx.generation_time).map(|(y, g)| y / g));
    (years.map(|y| format::number(y, NumberStyle::Whole)), generations.map(|g| format::short(g, 3)))
}

fn status_facts(row: &Row<'_>) -> StatusFacts {
    let method = row.text(col::NE_METHOD);
    StatusFacts {
        year: row.label(col::NE_YEAR).or_else(|| row.label(col::YEAR)),
        ne: format::maybe(row.number(col::NE), NumberStyle::EffectiveSize),
        ne_ci: interval_text(row, col::NE_LOW, col::NE_HIGH, NumberStyle::EffectiveSize),
        method: method.map(format::ne_method),
        method_short: method.map(format::ne_method_short),
        s: row.number(col::S).map(|s| format::short(s, 3)),
        category: row.label(col::CATEGORY).unwrap_or_else(|| format::UNDEFINED.into()),
        interval_note: row.text(col::INTERVAL_NOTE).map(str::to_string),
        ne_nc: row.number(col::NE_NC).map(|v| format::fixed(v, 2)),
        low_precision: false,
    }
}

/// Whether the step behind a status row's estimate flagged it as imprecise: an
/// `ld-precision-low` (LD) or `temporal-precision-low` (temporal) finding for the population
/// and the year the estimate refers to.
fn low_precision(ctx: &Context<'_>, row: &Row<'_>) -> bool {
    let (uses_name, code) = match row.text(col::NE_METHOD) {
        Some(m) if m.starts_with("ld") => (uses::NE_LD, "ld-precision-low"),
        Some("temporal") => (uses::NE_TEMPORAL, "temporal-precision-low"),
        _ => return false,
    };
    let population = row.text(col::POPULATION);
    let year = row.integer(col::NE_YEAR).and_then(|y| i32::try_from(y).ok());
    ctx.results
        .steps(uses_name)
        .iter()
        .flat_map(|s| &s.findings)
        .any(|f| f.code == code && f.location.population.as_deref() == population && f.location.year == year)
}

fn diversity_facts(row: &Row<'_>) -> DiversityFacts {
    let fixed = |c| format::maybe(row.number(c), NumberStyle::Fixed(3));
    DiversityFacts {
        year: row.label(col::YEAR).unwrap_or_default(),
        n: row.label(col::N).unwrap_or_default(),
        ho: fixed(col::HO),
        he: fixed(col::HE),
        f: fixed(col::F),
        fis: row.number(col::FIS).map(|v| format::fixed(v, 3)),
        fis_ci: interval_text(row, col::FIS_LOW, col::FIS_HIGH, NumberStyle::Fixed(3)),
    }
}

/// "low–high" when at least one bound is given.
pub(super) fn interval_text(row: &Row<'_>, low: &str, high: &str, style: NumberStyle) -> Option<String> {
    match (row.number(low), row.number(high)) {
        (None, None) => None,
        (low, high) => Some(format::interval(low, high, style)),
    }
}

pub(super) fn drift_facts(status: &Row<'_>) -> Option<DriftFacts> {
    let retained = status.number(col::H_RETAINED)?;
    // F_drift = 1 − H_t/H₀ by construction; the status step states it, older results may not.
    let f_drift = status.number(col::F_DRIFT).unwrap_or(1.0 - retained);
    Some(DriftFacts {
        ne: format::maybe(status.number(col::NE), NumberStyle::EffectiveSize),
        h_retained: format::percent(retained),
        h_retained_ci: interval_text(status, col::H_RETAINED_LOW, col::H_RETAINED_HIGH, NumberStyle::Percent),
        h_lost: format::percent(1.0 - retained),
        f_drift: format::fixed(f_drift, 3),
        f_drift_ci: interval_text(status, col::F_DRIFT_LOW, col::F_DRIFT_HIGH, NumberStyle::Fixed(3)),
        fitness: status.number(FITNESS_RETAINED).map(|w| FitnessFacts {
            retained: format::percent(w),
            over_ne: interval_text(status, FITNESS_RETAINED_LOW, FITNESS_RETAINED_HIGH, NumberStyle::Percent),
            over_b: interval_text(status, FITNESS_RETAINED_B_HIGH, FITNESS_RETAINED_B_LOW, NumberStyle::Percent),
        }),
    })
}

/// The status step's fitness columns (Morton, Crow & Muller 1956): at the point estimate, over
/// the Ne interval (its lower bound gives the lowest fitness), and over the range of lethal
/// equivalents (the high end gives the lowest fitness).
pub(super) const FITNESS_RETAINED: &str = "fitness_retained";
pub(super) const FITNESS_RETAINED_LOW: &str = "fitness_retained_low";
pub(super) const FITNESS_RETAINED_HIGH: &str = "fitness_retained_high";
pub(super) const FITNESS_RETAINED_B_LOW: &str = "fitness_retained_b_low";
pub(super) const FITNESS_RETAINED_B_HIGH: &str = "fitness_retained_b_high";

/// The He trend of a population in words, from the trend step's Mann–Kendall test, or from
/// the least-squares interval when there are too few points for it.
fn he_trend(ctx: &Context<'_>, population: &str) -> Option<String> {
    let tests = ctx.results.table(uses::TREND, table::TESTS)?;
    let row =
        tests.iter().find(|r| r.text(col::POPULATION) == Some(population) && r.text(col::METRIC) == Some("he"))?;
    let slope = row.number(col::SEN_SLOPE).or_else(|| row.number(col::OLS_SLOPE));
    let direction = |s: f64| if s < 0.0 { "declining" } else { "increasing" };
    let p_text = format::p_phrase;
    // The step's own verdict when it gives one (`increasing`, `decreasing`, `no trend`).
    if let (Some(verdict), Some(p)) = (row.text(col::TREND_DIRECTION), row.number(col::MK_P)) {
        return Some(match verdict {
            "decreasing" => format!("declining ({})", p_text(p)),
            "increasing" => format!("increasing ({})", p_text(p)),
            _ => format!("no significant trend ({})", p_text(p)),
        });
    }
    Some(match (row.number(col::MK_P), slope) {
        (Some(p), Some(s)) if p < 0.05 && s != 0.0 => format!("{} ({})", direction(s), p_text(p)),
        (Some(p), _) => format!("no significant trend ({})", p_text(p)),
        (None, _) => match (row.number(col::OLS_LOW), row.number(col::OLS_HIGH)) {
            (Some(low), Some(high)) if high < 0.0 || low > 0.0 => format!("{} (95 % CI excludes 0)", direction(low)),
            _ => {
                let series = he_series(ctx, population);
                let steps: Vec<f64> = series.windows(2).map(|w| w[1].1 - w[0].1).collect();
                if !steps.is_empty() && steps.iter().all(|d| *d < 0.0) {
                    "fell at each sampling (too few to test)".into()
                } else if !steps.is_empty() && steps.iter().all(|d| *d > 0.0) {
                    "rose at each sampling (too few to test)".into()
                } else {
                    "no clear trend".into()
                }
            }
        },
    })
}

/// For a population whose He series is too short for a test, what the data show in a
/// sentence: how many samples over how many years (and generations), whether He fell or rose
/// at every sampling, and the least-squares slope, so a reader sees a fall even where no test
/// can confirm it.
fn he_trend_detail(ctx: &Context<'_>, population: &str) -> Option<String> {
    let tests = ctx.results.table(uses::TREND, table::TESTS)?;
    let row =
        tests.iter().find(|r| r.text(col::POPULATION) == Some(population) && r.text(col::METRIC) == Some("he"))?;
    if row.number(col::MK_P).is_some() {
        return None;
    }
    let (low, high) = (row.number(col::OLS_LOW), row.number(col::OLS_HIGH));
    if low.zip(high).is_some_and(|(low, high)| high < 0.0 || low > 0.0) {
        return None;
    }
    let slope = row.number(col::OLS_SLOPE).filter(|s| s.is_finite() && *s != 0.0)?;
    let series = he_series(ctx, population);
    let (first, last) = (series.first()?.0, series.last()?.0);
    let span = last - first;
    let generations = ctx
        .generation_time
        .filter(|g| *g > 0.0)
        .map(|g| format!(", {} generations", format::short(span as f64 / g, 2)))
        .unwrap_or_default();
    let when = format!("{} samples over {span} years ({first}–{last}{generations})", series.len());
    let rate = format::maybe(Some(slope.abs()), NumberStyle::Significant(2));
    let steps: Vec<f64> = series.windows(2).map(|w| w[1].1 - w[0].1).collect();
    let direction = if slope < 0.0 { "fell" } else { "rose" };
    let every = if slope < 0.0 { steps.iter().all(|d| *d < 0.0) } else { steps.iter().all(|d| *d > 0.0) };
    Some(if every {
        format!(
            "{direction} at each sampling — {when}, by {rate} per year; {} points are too few for a trend test",
            series.len()
        )
    } else {
        format!(
            "no clear trend yet — {direction} by {rate} per year across {when}, too few to tell a trend from chance"
        )
    })
}

/// The He of each sampling year of a population, from the trend step's `series`, in year order.
fn he_series(ctx: &Context<'_>, population: &str) -> Vec<(i64, f64)> {
    let Some(series) = ctx.results.table(uses::TREND, table::SERIES) else { return Vec::new() };
    let mut points: Vec<(i64, f64)> = series
        .iter()
        .filter(|r| r.text(col::POPULATION) == Some(population) && r.text(col::METRIC) == Some("he"))
        .filter_map(|r| Some((r.integer(col::YEAR)?, r.number(col::VALUE)?)))
        .collect();
    points.sort_by_key(|p| p.0);
    points
}

fn status_table(populations: &[PopulationSummary]) -> TableData {
    let mut t = TableData::new(&[
        ("Population", false),
        ("Ne (95 % CI)", true),
        ("Estimate", false),
        ("S", true),
        ("Category", false),
        ("Nc (year)", true),
        ("Ne/Nc", true),
        ("Ho", true),
        ("He", true),
        ("F", true),
        ("He trend", false),
    ]);
    for p in populations {
        let undefined = || format::UNDEFINED.to_string();
        let status = p.status.as_ref();
        let ne = status.map_or_else(undefined, |s| {
            let mark = if s.low_precision { " †" } else { "" };
            match &s.ne_ci {
                Some(ci) => format!("{} ({ci}){mark}", s.ne),
                None => format!("{}{mark}", s.ne),
            }
        });
        let estimate = status.and_then(|s| {
            let method = s.method_short.clone()?;
            Some(match &s.year {
                Some(year) => format!("{method}, {year}"),
                None => method,
            })
        });
        let d = p.diversity.as_ref();
        t.push(vec![
            p.name.clone(),
            ne,
            estimate.unwrap_or_else(undefined),
            status.and_then(|s| s.s.clone()).unwrap_or_else(undefined),
            status.map_or_else(undefined, |s| s.category.clone()),
            p.census.clone().unwrap_or_else(undefined),
            ne_nc_cell(p),
            d.map_or_else(undefined, |d| d.ho.clone()),
            d.map_or_else(undefined, |d| d.he.clone()),
            d.map_or_else(undefined, |d| d.f.clone()),
            p.trend.clone().unwrap_or_else(undefined),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ho", "He", "F"]);
    t
}

/// Ne/Nc, or `—‡` when there is a census whose year differs from the year of the estimate
/// (the ratio compares like with like only when the years match).
fn ne_nc_cell(p: &PopulationSummary) -> String {
    let status = p.status.as_ref();
    if let Some(ratio) = status.and_then(|s| s.ne_nc.clone()) {
        return ratio;
    }
    let estimate_year = status.and_then(|s| s.year.as_deref()).and_then(|y| y.parse::<i32>().ok());
    match (p.census_year, estimate_year) {
        (Some(census), Some(estimate)) if census != estimate => format!("{}‡", format::UNDEFINED),
        _ => format::UNDEFINED.into(),
    }
}

/// The rule by which the status step chose each population's Ne, in a sentence.
fn ne_rule(ctx: &Context<'_>) -> Option<String> {
    let prefer = ctx.param(uses::STATUS, "prefer")?.as_array()?;
    let words: Vec<&str> = prefer.iter().filter_map(serde_json::Value::as_str).collect();
    (!words.is_empty()).then(|| format::ne_preference(&words))
}
