//! The `status` step's tables (columns in the module doc of [`super`]).

use popgauge_abi::{Cell, StepError, Table};

use super::category::{interval_note, reached_text, thresholds_reached};
use super::{
    Assessed, COARSE_STEP_YEARS, LOSS_REPORTED, MAX_GENERATION_POINTS, Projection, RETAIN_TARGET, Setting,
    ne_to_retain, project,
};
use crate::stats::drift::generations_to_lose;

/// The columns of `populations`, in order.
pub(super) const POPULATION_COLUMNS: [&str; 32] = [
    "population",
    "year",
    "ne_year",
    "ne",
    "ne_low",
    "ne_high",
    "ne_method",
    "ci_method",
    "s",
    "category",
    "interval_reaches",
    "interval_note",
    "census_size",
    "census_year",
    "ne_nc",
    "fis",
    "fis_low",
    "fis_high",
    "generations",
    "h_retained",
    "h_retained_low",
    "h_retained_high",
    "f_drift",
    "f_drift_low",
    "f_drift_high",
    "generations_to_lose_10",
    "years_to_lose_10",
    "fitness_retained",
    "fitness_retained_low",
    "fitness_retained_high",
    "fitness_retained_b_low",
    "fitness_retained_b_high",
];

pub(super) fn populations_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table = Table::new(&POPULATION_COLUMNS);
    for a in assessed {
        let mut row = estimate_cells(a, setting);
        row.extend(census_and_fis_cells(a));
        row.extend(projection_cells(a, setting));
        table.push_row(row)?;
    }
    Ok(table)
}

/// population … interval_note.
fn estimate_cells(a: &Assessed, setting: &Setting) -> Vec<Cell> {
    let e = a.estimate.as_ref();
    let interval = a.interval();
    let reached = interval.map(|i| thresholds_reached(i, &setting.thresholds));
    vec![
        Cell::text(&a.population),
        Cell::Int(a.year.into()),
        e.map_or(Cell::Null, |e| Cell::Int(e.year.into())),
        Cell::maybe(e.map(|e| e.ne)),
        Cell::maybe(e.and_then(|e| e.low)),
        Cell::maybe(e.and_then(|e| e.high)),
        e.map_or(Cell::Null, |e| Cell::text(e.method())),
        e.and_then(|e| e.interval).map_or(Cell::Null, |i| Cell::text(i.as_str())),
        Cell::maybe(e.and_then(|e| e.samples)),
        Cell::text(a.category.label(&setting.labels)),
        reached.map_or(Cell::Null, |r| Cell::text(reached_text(&r, &setting.thresholds))),
        interval.filter(|_| e.is_some()).map_or(Cell::Null, |i| Cell::text(interval_note(i, &setting.thresholds))),
    ]
}

/// census_size … fis_high.
fn census_and_fis_cells(a: &Assessed) -> Vec<Cell> {
    vec![
        Cell::maybe(a.census.as_ref().and_then(|c| c.census_size)),
        a.census.as_ref().and_then(|c| c.census_year).map_or(Cell::Null, |y| Cell::Int(y.into())),
        Cell::maybe(a.ne_over_census()),
        Cell::maybe(a.fis.value),
        Cell::maybe(a.fis.low),
        Cell::maybe(a.fis.high),
    ]
}

/// generations … fitness_retained_b_high. The upper Ne bound gives the lower F_drift (and the
/// higher fitness) and vice versa; the range of lethal equivalents is taken at the point Ne.
fn projection_cells(a: &Assessed, setting: &Setting) -> Vec<Cell> {
    let generations = setting.horizon_generations();
    let e = a.estimable();
    let at = |ne: Option<f64>| Some(project(ne?, generations?));
    let (point, at_low, at_high) = (at(e.map(|e| e.ne)), at(e.and_then(|e| e.low)), at(e.and_then(|e| e.high)));
    let to_lose = e.map(|e| generations_to_lose(LOSS_REPORTED, e.ne));
    vec![
        Cell::maybe(generations),
        Cell::maybe(point.as_ref().map(|p| p.retained)),
        Cell::maybe(at_low.as_ref().map(|p| p.retained)),
        Cell::maybe(at_high.as_ref().map(|p| p.retained)),
        Cell::maybe(point.as_ref().map(|p| p.drift_inbreeding)),
        Cell::maybe(at_high.as_ref().map(|p| p.drift_inbreeding)),
        Cell::maybe(at_low.as_ref().map(|p| p.drift_inbreeding)),
        Cell::maybe(to_lose),
        Cell::maybe(to_lose.zip(setting.generation_time).map(|(t, g)| t * g)),
    ]
    .into_iter()
    .chain(fitness_cells(&point, &at_low, &at_high, setting))
    .collect()
}

/// fitness_retained … fitness_retained_b_high.
fn fitness_cells(
    point: &Option<Projection>,
    at_low: &Option<Projection>,
    at_high: &Option<Projection>,
    setting: &Setting,
) -> [Cell; 5] {
    let b = setting.lethal_equivalents;
    let fitness = |p: &Option<Projection>, b: f64| Cell::maybe(p.as_ref().map(|p| p.fitness_retained(b)));
    [
        fitness(point, b.point),
        fitness(at_low, b.point),
        fitness(at_high, b.point),
        fitness(point, b.low),
        fitness(point, b.high),
    ]
}

/// Generations at which the projection is drawn: every generation, or every 5 years when
/// the horizon spans more than 100 generations, and the horizon itself.
pub(super) fn projection_points(generations: f64, generation_time: f64) -> Vec<f64> {
    let step = if generations > MAX_GENERATION_POINTS { COARSE_STEP_YEARS / generation_time } else { 1.0 };
    let count = (generations / step).floor() as usize;
    let mut points: Vec<f64> = (0..=count).map(|i| i as f64 * step).collect();
    if points.last().is_some_and(|&last| generations - last > 1e-9) {
        points.push(generations);
    }
    points
}

pub(super) fn projection_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "generation", "years_ahead", "year", "h_retained", "f_drift"]);
    let (Some(generations), Some(generation_time)) = (setting.horizon_generations(), setting.generation_time) else {
        return Ok(table);
    };
    for a in assessed {
        let Some(e) = a.estimable() else { continue };
        for t in projection_points(generations, generation_time) {
            let p = project(e.ne, t);
            table.push_row(vec![
                Cell::text(&a.population),
                Cell::number(t),
                Cell::number(t * generation_time),
                Cell::number(f64::from(a.year) + t * generation_time),
                Cell::number(p.retained),
                Cell::number(p.drift_inbreeding),
            ])?;
        }
    }
    Ok(table)
}

pub(super) fn horizon_table(setting: &Setting) -> Result<Table, StepError> {
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

/// Whether `value` counts as above `threshold` for the indicator: strictly greater (the GBF
/// headline indicator A.4 counts populations with "an effective population size > 500").
fn above(value: f64, threshold: f64) -> bool {
    value > threshold
}

/// The columns of the `indicator` table.
pub(super) const INDICATOR_COLUMNS: [&str; 7] = [
    "threshold",
    "populations",
    "with_estimate",
    "above_point",
    "share_point",
    "above_lower_bound",
    "share_lower_bound",
];

pub(super) fn indicator_table(assessed: &[Assessed], setting: &Setting) -> Result<Table, StepError> {
    let mut table = Table::new(&INDICATOR_COLUMNS);
    let with_estimate = assessed.iter().filter(|a| a.estimable().is_some()).count();
    let share = |count: usize| (with_estimate > 0).then(|| count as f64 / with_estimate as f64);
    for &threshold in &setting.thresholds {
        let above_point = assessed.iter().filter(|a| a.estimable().is_some_and(|e| above(e.ne, threshold))).count();
        let above_low = assessed.iter().filter(|a| a.interval().is_some_and(|(low, _)| above(low, threshold))).count();
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
