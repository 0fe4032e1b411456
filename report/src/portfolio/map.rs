//! The portfolio's map: every population with coordinates in its case's population sheet,
//! filled by its Ne category against the thresholds, its species shown by marker shape, at
//! positions generalised to a grid unless exact ones are asked for. Populations without
//! coordinates are named, not dropped.

use super::model::{NeBasis, PortfolioPopulation};
use crate::ReportError;
pub use crate::document::map::MapSection as MapData;
use crate::figures::map::{MapCategory, MapPoint, MapSetting, Positions, map_svg};

/// Up to this many populations are named on the map.
const MAX_LABELLED: usize = 40;

/// The categories in legend order: the threshold bands (ranked), then the others.
const CATEGORIES: [(&str, &str, bool); 5] = [
    ("below 50", "Ne below 50", true),
    ("50–500", "Ne 50 to 500", true),
    ("500 or more", "Ne 500 or more", true),
    ("not estimable", "not estimable (interval ∞–∞)", false),
    ("no Ne", "no Ne (no status step)", false),
];

/// The map's data and, when some population has coordinates, its SVG.
///
/// # Errors
/// [`ReportError::Figure`] when the renderer refuses the points (for example positions
/// spanning more than a hemisphere).
pub fn map(
    populations: &[PortfolioPopulation],
    positions: Positions,
) -> Result<(MapData, Option<String>), ReportError> {
    let mut points = Vec::new();
    let mut not_on_map = Vec::new();
    for p in populations {
        match p.latitude.zip(p.longitude) {
            Some((latitude, longitude)) => points.push(MapPoint {
                label: if p.basis == NeBasis::Census {
                    format!("{} (census)", p.population)
                } else {
                    p.population.clone()
                },
                latitude,
                longitude,
                category: p.category.clone(),
                group: Some(p.species.clone()),
            }),
            None => not_on_map.push(format!("{}: {}", p.species, p.population)),
        }
    }
    let categories = CATEGORIES
        .iter()
        .filter(|(name, _, _)| points.iter().any(|p| p.category == *name))
        .map(|(name, legend, ranked)| MapCategory {
            name: name.to_string(),
            legend: legend.to_string(),
            ranked: *ranked,
        })
        .collect();
    let setting = MapSetting {
        categories_heading: "Ne category (point estimate)".into(),
        groups_heading: "Species".into(),
        // Names would cover a map of many populations; the population table lists them.
        labels: points.len() <= MAX_LABELLED,
        ..MapSetting::new(positions, categories)
    };
    let figure = if points.is_empty() { None } else { Some(map_svg(&points, &setting)?) };
    let data = MapData {
        positions: match positions {
            Positions::Grid { .. } => "grid".into(),
            Positions::Exact => "exact".into(),
        },
        grid_km: match positions {
            Positions::Grid { cell_km } => Some(crate::format::short(cell_km, 4)),
            Positions::Exact => None,
        },
        drawn: figure.is_some(),
        projection: figure.as_ref().map(|f| f.text.projection.clone()),
        shown: figure.as_ref().map(|f| f.text.positions.clone()),
        not_on_map,
        by_status: true,
    };
    Ok((data, figure.map(|f| f.svg)))
}
