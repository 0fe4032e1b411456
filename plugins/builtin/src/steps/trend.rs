//! `trend`: per population, is a metric rising or falling over the sampling years?
//!
//! # Series
//! Each metric gives one value per (population, year), read from earlier results:
//!
//! - `he`, `ho`, `ar`, `f`: the columns of the `diversity` step's `by_group` table (the last
//!   `diversity` step in the recipe);
//! - `ne:<step id>`: per population and year, the estimate of that step the SDK's
//!   [`popgauge_abi::representative_ne`] chooses, the rule `status` and the document follow:
//!   `ne` of an `ne-ld` or `ne-hetx` row, `ne_fs` of an `ne-temporal` row placed at its
//!   `year_end` (of several ending in the same year, the one with the latest `year_start`: the
//!   intervals of successive points then share no sample). For `ne-ld` the rare-allele
//!   criterion follows each sample's harmonic-mean S by default (`ld_pcrit` null), as Waples &
//!   Do (2010) recommend: no singletons at S ≤ 25, Pcrit 0.02 above; a number in `ld_pcrit`
//!   fixes the Pcrit instead. The `ne_method` column of `series` and an `ld-criterion` finding
//!   name the criterion of every point.
//!
//! `null` values are not points. **Ne is analysed on the 1/Ne scale**, proportional to the
//! rate of inbreeding ΔF = 1/(2Ne) per generation: an infinite estimate becomes 1/Ne = 0 and
//! stays in the series, which ln Ne could not hold. S, τ, Z and the slopes of an `ne:` metric
//! are therefore those of 1/Ne (a positive slope means Ne falls), while `direction` speaks of
//! Ne itself. Other metrics are analysed as they are.
//!
//! # Tests (formulas and sources in [`crate::stats::trend`])
//! Mann–Kendall S, Var S, τ and a two-sided p (exact null distribution for at most 10 untied
//! points, otherwise the tie-corrected normal approximation with continuity correction),
//! Sen's slope with Gilbert's (1987) 95% interval, and the least-squares slope with a 95%
//! Student-t interval. Slopes are **per year** (per calendar year of sampling, not per
//! generation). A series needs at least 4 points for the Mann–Kendall test and Sen's interval
//! and 3 for the least-squares slope; shorter series get `null` there and a `too-few-points`
//! finding, never a p-value. `direction` is `increasing` or `decreasing` when the
//! Mann–Kendall p is below `alpha`, `no trend` otherwise, and `null` without a test.
//!
//! **Two sampling years.** For a population sampled in exactly two years, the per-locus `he`
//! and `ho` of `diversity`/`by_locus` (when those metrics are asked for) are compared across
//! the loci typed in both years: a Wilcoxon signed-rank test of the differences (later minus
//! earlier; zero differences dropped) and a percentile bootstrap interval of the mean change
//! over loci (`bootstrap` resamples of loci, seeded from the step seed).
//!
//! # Tables
//! - `tests`: population, metric, scale (`value` or `1/ne`), points, first_year, last_year,
//!   mk_s, mk_var, mk_tau, mk_z, mk_p, mk_method (`exact`/`normal`), sen_slope, sen_low,
//!   sen_high, ols_slope, ols_se, ols_low, ols_high, direction.
//! - `series`: population, metric, year, value (as the source gives it; an infinite Ne is
//!   `"inf"`), analysed (the value on the tested scale), ne_method (the Ne source with its
//!   criterion, e.g. `ld:singletons`; `null` for the diversity metrics).
//! - `paired`: population, metric, year_start, year_end, loci (typed in both years), zeros
//!   (loci without change, dropped from the test), w_plus, w_minus, p_method, p_value,
//!   mean_change, change_low, change_high, replicates.
//!
//! # Findings
//! `too-few-points` (info) per series too short for a test; `low-power` (info) for a series of
//! exactly 4 points, whose smallest two-sided p is 0.083; `missing-source` (warning) when a
//! metric's source step is absent, failed or lacks the table or column, and `no-values` (info)
//! when it gives only nulls; `ld-criterion` (info) naming the criterion and S of every LD
//! point, `ld-criterion-missing` (warning) for points whose rule criterion was not estimated;
//! `ne-trend-scale`
//! (info) on the 1/Ne scale; `trend-caution` (info) on the limits of short series.
//!
//! # Citations
//! Mann (1945); Kendall (1975); Sen (1968); Gilbert (1987); Wilcoxon (1945); Efron &
//! Tibshirani (1993) — full references in [`CITATIONS`].

mod findings;
mod paired;
pub(crate) mod sources;
mod tables;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    Descriptor, Finding, LdChoice, LdCriterion, ParamKind, Step, StepContext, StepError, StepOutput, StepResult, Where,
    did_you_mean,
};
use serde::Deserialize;
use serde_json::{Value, json};

use crate::stats::trend::{LeastSquares, MannKendall, SenSlope, least_squares, mann_kendall, sen_slope};
use findings::{criterion_findings, interpretation_findings, point_count_findings, special_value_findings};
use paired::paired_changes;
use sources::{NE_STEP_USES, NePoints, PointsByPopulation, SourceProblem};

/// Confidence level of every interval of this step.
pub const CONFIDENCE_LEVEL: f64 = 0.95;
/// The metrics `diversity` provides.
const DIVERSITY_METRICS: [&str; 4] = ["he", "ho", "ar", "f"];
/// The diversity metrics with per-locus values, compared by the two-point paired test.
const PAIRED_METRICS: [&str; 2] = ["he", "ho"];

/// Full references of the methods, for the step's citations.
pub const CITATIONS: [&str; 6] = [
    "Mann HB (1945) Nonparametric tests against trend. Econometrica 13:245–259.",
    "Kendall MG (1975) Rank Correlation Methods, 4th ed. Griffin, London.",
    "Sen PK (1968) Estimates of the regression coefficient based on Kendall's tau. J Am Stat Assoc 63:1379–1389.",
    "Gilbert RO (1987) Statistical Methods for Environmental Pollution Monitoring. Van Nostrand Reinhold, New York.",
    "Wilcoxon F (1945) Individual comparisons by ranking methods. Biometrics Bull 1:80–83.",
    "Efron B, Tibshirani RJ (1993) An Introduction to the Bootstrap. Chapman & Hall, New York.",
];

/// Parameters of `trend`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Metrics to test: `he`, `ho`, `ar`, `f`, `ne` (every earlier Ne step) or `ne:<step id>`.
    pub metrics: Vec<String>,
    /// The Pcrit whose `ne-ld` rows are followed; `None` follows each sample's size.
    pub ld_pcrit: Option<f64>,
    /// Significance level for `direction`.
    pub alpha: f64,
    /// Bootstrap resamples of loci for the two-point change interval.
    pub bootstrap: usize,
}

/// The descriptor of `trend`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "trend",
        "0.2.0",
        "Trends over sampling years per population: Mann–Kendall test, Sen's slope, least-squares slope; \
         paired test over loci for two sampling years",
    )
    .param(
        "metrics",
        ParamKind::TextList { choices: Vec::new() },
        json!(["he", "ho", "ar", "f", "ne"]),
        "metrics to test: he, ho, ar, f (from diversity), ne (every earlier Ne step) or ne:<step id>",
    )
    .param(
        "ld_pcrit",
        ParamKind::Number { min: 0.0, max: 0.5 },
        Value::Null,
        "Pcrit of the ne-ld rows to follow; null = per sample, no singletons at harmonic-mean S ≤ 25, else Pcrit 0.02 \
         (Waples & Do 2010)",
    )
    .param(
        "alpha",
        ParamKind::Number { min: 0.001, max: 0.5 },
        json!(0.05),
        "significance level at which `direction` reports a trend",
    )
    .param(
        "bootstrap",
        ParamKind::Integer { min: 2000, max: 1_000_000 },
        json!(2000),
        "bootstrap resamples of loci for the interval of the change between two sampling years",
    )
}

/// The `trend` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Trend;

impl Step for Trend {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let metrics = resolve_metrics(&params.metrics, ctx.earlier)?;
        let mut findings = Vec::new();
        let series = collect_series(ctx, &metrics, ld_choice(params.ld_pcrit), &mut findings);
        let tested: Vec<TestedSeries> = series.iter().map(|s| s.test(params.alpha)).collect();
        let paired = paired_changes(ctx, &metrics, &params, &mut findings);
        findings.extend(point_count_findings(&tested));
        findings.extend(interpretation_findings(&metrics));
        let mut output = StepOutput::default();
        let (tests, paired) = (tables::tests_table(&tested)?, tables::paired_table(&paired)?);
        findings.extend(special_value_findings(&tests, &paired));
        output.tables.insert("tests".into(), tests);
        output.tables.insert("series".into(), tables::series_table(&series)?);
        output.tables.insert("paired".into(), paired);
        output.findings = findings;
        output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
        Ok(output)
    }
}

/// Where a metric's values come from.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Metric {
    /// A column of `diversity`/`by_group`.
    Diversity(&'static str),
    /// The Ne of an earlier Ne step.
    Ne { step_id: String, uses: String },
}

impl Metric {
    /// The `metric` column: the source column name or `ne:<step id>`.
    fn name(&self) -> String {
        match self {
            Metric::Diversity(column) => column.to_string(),
            Metric::Ne { step_id, .. } => format!("ne:{step_id}"),
        }
    }

    fn scale(&self) -> Scale {
        match self {
            Metric::Diversity(_) => Scale::Value,
            Metric::Ne { .. } => Scale::InverseNe,
        }
    }
}

/// The scale a series is tested on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Scale {
    /// The value itself.
    Value,
    /// 1/Ne (an infinite Ne gives 0).
    InverseNe,
}

impl Scale {
    fn as_str(self) -> &'static str {
        match self {
            Scale::Value => "value",
            Scale::InverseNe => "1/ne",
        }
    }

    /// The value on this scale; `None` for an Ne that is not a positive size.
    fn transform(self, value: f64) -> Option<f64> {
        match self {
            Scale::Value => Some(value),
            Scale::InverseNe if value > 0.0 => Some(1.0 / value),
            Scale::InverseNe => None,
        }
    }
}

/// Turns the `metrics` parameter into sources, in the order given, without repeats.
fn resolve_metrics(requested: &[String], earlier: &[StepResult]) -> Result<Vec<Metric>, StepError> {
    let ne_steps: Vec<&StepResult> = earlier.iter().filter(|r| NE_STEP_USES.contains(&r.uses.as_str())).collect();
    let ne_metric = |r: &StepResult| Metric::Ne { step_id: r.id.clone(), uses: r.uses.clone() };
    let mut metrics: Vec<Metric> = Vec::new();
    for word in requested {
        let found: Vec<Metric> = if let Some(&column) = DIVERSITY_METRICS.iter().find(|&&m| m == word) {
            vec![Metric::Diversity(column)]
        } else if word == "ne" {
            ne_steps.iter().map(|r| ne_metric(r)).collect()
        } else if let Some(id) = word.strip_prefix("ne:") {
            let step = ne_steps.iter().find(|r| r.id == id).ok_or_else(|| unknown_ne_step(word, &ne_steps))?;
            vec![ne_metric(step)]
        } else {
            return Err(unknown_metric(word, &ne_steps));
        };
        for metric in found {
            if !metrics.contains(&metric) {
                metrics.push(metric);
            }
        }
    }
    Ok(metrics)
}

fn known_metric_names(ne_steps: &[&StepResult]) -> Vec<String> {
    let mut names: Vec<String> = DIVERSITY_METRICS.iter().map(|m| m.to_string()).collect();
    names.push("ne".into());
    names.extend(ne_steps.iter().map(|r| format!("ne:{}", r.id)));
    names
}

fn unknown_metric(word: &str, ne_steps: &[&StepResult]) -> StepError {
    let known = known_metric_names(ne_steps);
    let hint = did_you_mean(word, known.iter().map(String::as_str))
        .map(|s| format!("did you mean \"{s}\"? "))
        .unwrap_or_default();
    StepError::new(format!(
        "parameter `metrics`: unknown metric \"{word}\"\n  help: {hint}choose from {}",
        known.join(", ")
    ))
}

fn unknown_ne_step(word: &str, ne_steps: &[&StepResult]) -> StepError {
    let help = if ne_steps.is_empty() {
        "no Ne step runs before this one: add an ne-ld, ne-temporal or ne-hetx step earlier in the recipe, \
         or remove it from `metrics`"
            .to_string()
    } else {
        let ids: Vec<String> = ne_steps.iter().map(|r| format!("ne:{}", r.id)).collect();
        format!("the Ne steps before this one are {}", ids.join(", "))
    };
    StepError::new(format!("parameter `metrics`: \"{word}\" names no earlier Ne step\n  help: {help}"))
}

/// One (population, metric) series: raw values by year.
struct Series {
    population: String,
    metric: String,
    scale: Scale,
    values: BTreeMap<i32, f64>,
    /// The Ne source with its criterion per year (`ld:0.02`); empty for diversity metrics.
    methods: BTreeMap<i32, String>,
}

impl Series {
    /// (year, value on the tested scale) of the points that have one.
    fn analysed(&self) -> Vec<(f64, f64)> {
        self.values.iter().filter_map(|(&y, &v)| Some((f64::from(y), self.scale.transform(v)?))).collect()
    }

    fn test(&self, alpha: f64) -> TestedSeries<'_> {
        let points = self.analysed();
        let times: Vec<f64> = points.iter().map(|p| p.0).collect();
        let values: Vec<f64> = points.iter().map(|p| p.1).collect();
        let mann_kendall = mann_kendall(&values);
        let sen = mann_kendall.and_then(|mk| sen_slope(&times, &values, mk.variance, CONFIDENCE_LEVEL));
        let least_squares = least_squares(&times, &values, CONFIDENCE_LEVEL);
        let direction = mann_kendall.map(|mk| self.direction(&mk, alpha));
        TestedSeries { series: self, points: points.len(), mann_kendall, sen, least_squares, direction }
    }

    /// The direction of the metric itself (so of Ne, not of 1/Ne).
    fn direction(&self, mk: &MannKendall, alpha: f64) -> &'static str {
        let rising_on_scale = mk.s > 0;
        let rising = match self.scale {
            Scale::Value => rising_on_scale,
            Scale::InverseNe => !rising_on_scale,
        };
        match (mk.p_value < alpha && mk.s != 0, rising) {
            (false, _) => "no trend",
            (true, true) => "increasing",
            (true, false) => "decreasing",
        }
    }
}

/// A series with its tests.
struct TestedSeries<'s> {
    series: &'s Series,
    points: usize,
    mann_kendall: Option<MannKendall>,
    sen: Option<SenSlope>,
    least_squares: Option<LeastSquares>,
    direction: Option<&'static str>,
}

/// Every (population, metric) series, by population then metric in the order asked.
fn collect_series(
    ctx: &StepContext<'_>,
    metrics: &[Metric],
    ld_choice: LdChoice,
    findings: &mut Vec<Finding>,
) -> Vec<Series> {
    let mut series: Vec<(usize, Series)> = Vec::new();
    for (order, metric) in metrics.iter().enumerate() {
        let Some(points) = metric_points(ctx, metric, ld_choice, findings) else { continue };
        for (population, (values, methods)) in points {
            let scale = metric.scale();
            series.push((order, Series { population, metric: metric.name(), scale, values, methods }));
        }
    }
    series.sort_by(|a, b| a.1.population.cmp(&b.1.population).then(a.0.cmp(&b.0)));
    series.into_iter().map(|(_, s)| s).collect()
}

/// Values (and Ne methods) by year.
type ValuesAndMethods = (BTreeMap<i32, f64>, BTreeMap<i32, String>);

/// `ld_pcrit` as an `ne-ld` criterion choice.
fn ld_choice(ld_pcrit: Option<f64>) -> LdChoice {
    ld_pcrit.map_or(LdChoice::BySampleSize, |p| LdChoice::Fixed(LdCriterion::Pcrit(p)))
}

/// The values of one metric by population, or `None` (with a finding) when its source is
/// missing or unreadable.
fn metric_points(
    ctx: &StepContext<'_>,
    metric: &Metric,
    ld_choice: LdChoice,
    findings: &mut Vec<Finding>,
) -> Option<BTreeMap<String, ValuesAndMethods>> {
    let read = match metric {
        Metric::Diversity(column) => match ctx.earlier_by_uses("diversity") {
            Some(result) => sources::diversity_points(result, column).map(without_methods),
            None => Err(SourceProblem(
                "no diversity step runs before trend; add one earlier in the recipe or remove the metric from `metrics`"
                    .into(),
            )),
        },
        Metric::Ne { step_id, .. } => {
            let result = ctx.earlier.iter().find(|r| &r.id == step_id)?;
            sources::ne_points(result, ld_choice).map(|points| {
                findings.extend(criterion_findings(result, &points));
                with_methods(points)
            })
        }
    };
    match read {
        Ok(points) if points.is_empty() => {
            findings.push(Finding::info(
                "no-values",
                format!(
                    "trend of {}: the source step gives no values (every cell is null), so there is nothing to test",
                    metric.name()
                ),
                Where::default(),
            ));
            None
        }
        Ok(points) => Some(points),
        Err(SourceProblem(reason)) => {
            findings.push(Finding::warning(
                "missing-source",
                format!("trend of {} skipped: {reason}", metric.name()),
                Where::default(),
            ));
            None
        }
    }
}

fn without_methods(points: PointsByPopulation) -> BTreeMap<String, ValuesAndMethods> {
    points.into_iter().map(|(population, values)| (population, (values, BTreeMap::new()))).collect()
}

fn with_methods(points: NePoints) -> BTreeMap<String, ValuesAndMethods> {
    let split = |years: BTreeMap<i32, popgauge_abi::RepresentativeNe>| {
        let values = years.iter().map(|(&y, e)| (y, e.ne)).collect();
        let methods = years.iter().map(|(&y, e)| (y, e.method())).collect();
        (values, methods)
    };
    points.into_iter().map(|(population, years)| (population, split(years))).collect()
}
