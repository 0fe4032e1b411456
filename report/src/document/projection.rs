//! The projections section: heterozygosity retained and inbreeding by drift over the horizon
//! for each population, from the `status` step, with the cost of inbreeding when computed.

use serde::Serialize;

use super::super::contract::{Row, col, table, table_of, uses};
use super::super::figures::{Figure, Series};
use super::super::format::{self, NumberStyle};
use super::Extras;
use super::sections::{Context, latest_rows};
use super::summary::*;
use super::table::TableData;

/// The projections section.
#[derive(Debug, Clone, Serialize)]
pub struct ProjectionSection {
    /// Step id.
    pub step: String,
    /// Horizon in years.
    pub horizon_years: Option<String>,
    /// Horizon in generations.
    pub horizon_generations: Option<String>,
    /// The share of heterozygosity a population should keep over the horizon (Soulé et al.
    /// 1986), when the step states it.
    pub retain_target: Option<String>,
    /// The Ne that keeps that share.
    pub ne_required: Option<String>,
    /// The diploid lethal equivalents the cost of inbreeding uses, and the range shown beside
    /// them (`12 (range 3.1–30.3)`), when the status step computes that cost.
    pub lethal_equivalents: Option<String>,
    /// Per population: Ne, heterozygosity retained, F now and projected.
    pub table: TableData,
}

/// The status step's diploid lethal equivalents and their range, when it computes the cost of
/// inbreeding (its table has a fitness column).
fn lethal_equivalents(ctx: &Context<'_>) -> Option<String> {
    let rows = ctx.results.table(uses::STATUS, table::POPULATIONS)?;
    if !rows.has(FITNESS_RETAINED) {
        return None;
    }
    let value =
        |name: &str| ctx.param(uses::STATUS, name).and_then(serde_json::Value::as_f64).map(|v| format::short(v, 3));
    let used = value("lethal_equivalents")?;
    Some(match (value("lethal_equivalents_low"), value("lethal_equivalents_high")) {
        (Some(low), Some(high)) => format!("{used} (range {low}–{high})"),
        _ => used,
    })
}

pub(crate) fn projection_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<ProjectionSection> {
    let step = ctx.results.step(uses::STATUS)?;
    let rows = table_of(step, table::POPULATIONS)?;
    let latest = latest_rows(&rows);
    let (horizon_years, horizon_generations) = horizon(ctx);
    let mut t = TableData::new(&[
        ("Population", false),
        ("Ne (95 % CI)", true),
        ("H retained (over the Ne CI)", true),
        ("H lost", true),
        ("F drift (over the Ne CI)", true),
        ("Fitness retained (over the Ne CI; over B)", true),
    ]);
    for row in &latest {
        let population = row.text(col::POPULATION).unwrap_or("");
        let drift = drift_facts(row);
        let undefined = || format::UNDEFINED.to_string();
        let with_range = |point: String, range: Option<String>| match range {
            Some(range) => format!("{point} ({range})"),
            None => point,
        };
        let ne = format::maybe(row.number(col::NE), NumberStyle::EffectiveSize);
        t.push(vec![
            population.to_string(),
            with_range(ne, interval_text(row, col::NE_LOW, col::NE_HIGH, NumberStyle::EffectiveSize)),
            drift.as_ref().map_or_else(undefined, |d| with_range(d.h_retained.clone(), d.h_retained_ci.clone())),
            drift.as_ref().map_or_else(undefined, |d| d.h_lost.clone()),
            drift.as_ref().map_or_else(undefined, |d| with_range(d.f_drift.clone(), d.f_drift_ci.clone())),
            drift.as_ref().and_then(|d| d.fitness.as_ref()).map_or_else(undefined, |w| match (&w.over_ne, &w.over_b) {
                (Some(ne), Some(b)) => format!("{} ({ne}; {b})", w.retained),
                (Some(ne), None) => format!("{} ({ne})", w.retained),
                (None, Some(b)) => format!("{} (B: {b})", w.retained),
                (None, None) => w.retained.clone(),
            }),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ne (95 % CI)", "H retained (over the Ne CI)"]);
    projection_figure(ctx, &latest, extras);
    let horizon_row = table_of(step, table::HORIZON)
        .and_then(|h| h.iter().next().map(|r| (r.number(col::RETAIN_TARGET), r.number(col::NE_REQUIRED))));
    let (retain_target, ne_required) = horizon_row.unwrap_or((None, None));
    Some(ProjectionSection {
        step: step.id.clone(),
        horizon_years,
        horizon_generations,
        retain_target: retain_target.map(format::percent),
        ne_required: ne_required.map(format::effective_size),
        lethal_equivalents: lethal_equivalents(ctx),
        table: t,
    })
}

/// Curves of heterozygosity retained over the years ahead: the status step's `projection`
/// table when it has a time column, otherwise H(t) = H_T^(t/T) from `h_retained` at the
/// horizon T, which is exactly Wright's (1 − 1/(2Ne))^(t/L) for the step's Ne (the step's
/// own result, not a new estimate).
fn projection_figure(ctx: &Context<'_>, latest: &[Row<'_>], extras: &mut Extras) {
    let from_table = ctx.results.table(uses::STATUS, table::PROJECTION).and_then(|t| {
        let time = ["years", "years_ahead", "year_offset", "t_years", "year", "generation", "generations"]
            .into_iter()
            .find(|c| t.has(c))?;
        t.has(col::H_RETAINED).then_some((t, time))
    });
    let series: Vec<Series> = match from_table {
        Some((t, time)) => {
            let mut by_population: std::collections::BTreeMap<String, Vec<(f64, f64)>> = Default::default();
            for row in t.iter() {
                if let (Some(p), Some(x), Some(h)) =
                    (row.text(col::POPULATION), row.number(time), row.number(col::H_RETAINED))
                {
                    by_population.entry(p.to_string()).or_default().push((x, h * 100.0));
                }
            }
            by_population
                .into_iter()
                .map(|(name, mut points)| {
                    points.sort_by(|a, b| a.0.total_cmp(&b.0));
                    Series { style: ctx.style_of(&name), name, points, slope: None, intervals: Vec::new() }
                })
                .collect()
        }
        None => {
            let Some(horizon) =
                ctx.param(uses::STATUS, "horizon_years").and_then(serde_json::Value::as_f64).filter(|h| *h > 0.0)
            else {
                return;
            };
            latest
                .iter()
                .filter_map(|row| {
                    let name = row.text(col::POPULATION)?;
                    let at_horizon = row.number(col::H_RETAINED).filter(|h| h.is_finite() && *h >= 0.0)?;
                    let points = (0..=20).map(|k| {
                        let t = horizon * k as f64 / 20.0;
                        (t, 100.0 * at_horizon.powf(t / horizon))
                    });
                    Some(Series {
                        name: name.to_string(),
                        style: ctx.style_of(name),
                        points: points.collect(),
                        slope: None,
                        intervals: Vec::new(),
                    })
                })
                .collect()
        }
    };
    if series.is_empty() {
        return;
    }
    let alt = "Projected share of today's heterozygosity retained per population over the years ahead, at each population's current Ne (Wright 1931).".to_string();
    extras.figure(
        "projection",
        Figure::Lines {
            series,
            x_label: "Years ahead".into(),
            y_label: "Heterozygosity retained (%)".into(),
            log_y: false,
            y_from_zero: false,
        },
        alt,
    );
}
