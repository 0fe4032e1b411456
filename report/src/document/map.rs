//! The map of the populations, drawn only when the recipe asks for it (`[report.map]
//! show = true`): every population with coordinates in the population sheet, filled by the
//! category of its Ne from the status step (`populations` table, `category` column; "no Ne"
//! without one), at positions generalised to a grid unless the recipe asks for exact ones.
//! Populations without coordinates are named, not dropped.

use popgauge_builtin::steps::status::default_labels;
use popgauge_engine::recipe::MapPositions;
use serde::Serialize;

use super::super::contract::{col, table, table_of, uses};
use super::super::figures::Figure;
use super::super::figures::map::{MapCategory, MapPoint, MapSetting, Positions, map_text};
use super::appendix::Extras;
use super::sections::{Context, latest_rows};

/// The category of a population the status step did not place (or without a status step).
pub const NO_NE: &str = "no Ne";

/// The map's facts for the template.
#[derive(Debug, Clone, Serialize)]
pub struct MapSection {
    /// `grid` or `exact`.
    pub positions: String,
    /// The grid's cell width in km, display text (`grid` only).
    pub grid_km: Option<String>,
    /// Whether a map was drawn (at least one population has coordinates).
    pub drawn: bool,
    /// The projection, its sphere and centre, as a sentence (when drawn).
    pub projection: Option<String>,
    /// How positions are shown, as a sentence (when drawn).
    pub shown: Option<String>,
    /// Populations not on the map for want of coordinates, in order.
    pub not_on_map: Vec<String>,
    /// Whether the fills are the status step's categories.
    pub by_status: bool,
}

pub(crate) fn map_section(
    ctx: &Context<'_>,
    positions: Option<MapPositions>,
    extras: &mut Extras,
) -> Option<MapSection> {
    let positions = match positions? {
        MapPositions::Grid { cell_km } => Positions::Grid { cell_km },
        MapPositions::Exact => Positions::Exact,
    };
    let categories = status_categories(ctx);
    let sheet = &ctx.results.doc().assessment.populations;
    let mut points = Vec::new();
    let mut not_on_map = Vec::new();
    for name in ctx.populations {
        let row = sheet.iter().find(|p| &p.population == name);
        match row.and_then(|r| r.latitude.zip(r.longitude)) {
            Some((latitude, longitude)) => points.push(MapPoint {
                label: name.clone(),
                latitude,
                longitude,
                category: categories.of(name),
                group: None,
            }),
            None => not_on_map.push(name.clone()),
        }
    }
    let setting = MapSetting {
        categories_heading: if categories.by_status {
            "Ne category (point estimate)".into()
        } else {
            "Ne category".into()
        },
        ..MapSetting::new(positions, categories.legend(&points))
    };
    let drawn = !points.is_empty();
    let text = drawn.then(|| map_text(&points, &setting));
    let shown_words = match positions {
        Positions::Grid { cell_km } => format!("positions generalised to a {} km grid", km(cell_km)),
        Positions::Exact => "exact positions".into(),
    };
    if drawn {
        let alt = format!(
            "Map of {} population(s) with coordinates, {shown_words}, each marked by its Ne category: {}.",
            points.len(),
            points.iter().map(|p| format!("{} ({})", p.label, p.category)).collect::<Vec<_>>().join(", ")
        );
        extras.figure("map", Figure::Map { points, setting }, alt);
    }
    Some(MapSection {
        positions: match positions {
            Positions::Grid { .. } => "grid".into(),
            Positions::Exact => "exact".into(),
        },
        grid_km: match positions {
            Positions::Grid { cell_km } => Some(km(cell_km)),
            Positions::Exact => None,
        },
        drawn,
        projection: text.as_ref().map(|t| t.projection.clone()),
        shown: text.map(|t| t.positions),
        not_on_map,
        by_status: categories.by_status,
    })
}

/// A cell width as printed: `10`, `2.5`.
fn km(value: f64) -> String {
    let text = format!("{value:.3}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The status step's category per population and its bands in order.
struct StatusCategories {
    by_status: bool,
    /// Band labels, lowest first.
    bands: Vec<String>,
    /// (population, category) from the status step's table.
    rows: Vec<(String, String)>,
}

fn status_categories(ctx: &Context<'_>) -> StatusCategories {
    let Some(step) = ctx.results.step(uses::STATUS) else {
        return StatusCategories { by_status: false, bands: Vec::new(), rows: Vec::new() };
    };
    let bands = ctx
        .param(uses::STATUS, "labels")
        .and_then(|v| v.as_array())
        .map(|labels| labels.iter().filter_map(|l| l.as_str().map(str::to_string)).collect())
        .unwrap_or_else(|| default_labels(ctx.thresholds));
    let rows = table_of(step, table::POPULATIONS)
        .map(|t| latest_rows(&t))
        .unwrap_or_default()
        .iter()
        .filter_map(|r| Some((r.text(col::POPULATION)?.to_string(), r.text(col::CATEGORY)?.to_string())))
        .collect();
    StatusCategories { by_status: true, bands, rows }
}

impl StatusCategories {
    fn of(&self, population: &str) -> String {
        self.rows.iter().find(|(p, _)| p == population).map_or_else(|| NO_NE.to_string(), |(_, c)| c.clone())
    }

    /// The legend: every band (so the scale shows), then the other categories the points use,
    /// in a fixed order (not estimable, unknown, no Ne, any other), so that each keeps its fill
    /// from case to case.
    fn legend(&self, points: &[MapPoint]) -> Vec<MapCategory> {
        let mut categories: Vec<MapCategory> = self
            .bands
            .iter()
            .map(|band| MapCategory { name: band.clone(), legend: band.clone(), ranked: true })
            .collect();
        let order = |c: &str| ["not estimable", "unknown", NO_NE].iter().position(|k| *k == c).unwrap_or(3);
        let mut others: Vec<&MapPoint> = points.iter().collect();
        others.sort_by_key(|p| order(&p.category));
        for point in others {
            if categories.iter().any(|c| c.name == point.category) {
                continue;
            }
            let legend = match point.category.as_str() {
                "not estimable" => "not estimable (interval ∞–∞)".to_string(),
                "unknown" => "no estimate".to_string(),
                NO_NE if self.by_status => "no Ne (not placed by the status step)".to_string(),
                NO_NE => "no Ne (the recipe has no status step)".to_string(),
                other => other.to_string(),
            };
            categories.push(MapCategory { name: point.category.clone(), legend, ranked: false });
        }
        categories
    }
}
