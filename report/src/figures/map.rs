//! A map of populations as SVG: positions in an equal-area projection, generalised to a grid
//! unless exact positions are asked for, each population filled by its category, with a
//! legend, a scale bar, a north arrow, a light graticule and a caption that states the
//! projection and the generalisation.
//!
//! The renderer knows nothing of the assessment document: a caller gives points (label,
//! latitude and longitude in WGS 84 decimal degrees, category, optionally a group) and a
//! [`MapSetting`] (how positions are shown, the categories in legend order with their
//! legend text). One case's populations or many cases' populations across a continent are
//! drawn the same way; a group (a case, a species) is shown by marker shape.
//!
//! - **Projection.** The spherical Lambert azimuthal equal-area projection (Snyder 1987, USGS
//!   Professional Paper 1395, §24) on a sphere of radius [`EARTH_RADIUS_KM`], centred on the
//!   middle of the points' extent rounded to whole degrees ([`extent_centre`]).
//! - **Generalisation.** With [`Positions::Grid`], each projected position is moved to the
//!   centre of its cell of a square grid in the projected plane ([`snap_to_grid`]); the map is
//!   laid out from those cell centres alone, so the SVG holds no exact coordinate, and two
//!   populations in one cell are drawn at the same place. With [`Positions::Exact`] the
//!   positions are drawn as given and the caption says so.
//! - **Crowding.** Markers closer than their size are set side by side in a row above their
//!   places, each joined by a thin line to a dot at its own position, and labelled together.
//! - **Extent.** At least [`MIN_EXTENT_KM`] (and two grid cells) in each direction, so that a
//!   single population, or several at one place, still give a map with a scale.
//!
//! Drawing is deterministic: the same points and setting give the same bytes.

mod draw;
mod projection;
mod svg;
#[cfg(test)]
mod tests;

pub use projection::{EARTH_RADIUS_KM, LambertAzimuthal, extent_centre, snap_to_grid, wrap_longitude};

use super::FigureError;

/// Smallest width and height of the area a map shows, in km.
pub const MIN_EXTENT_KM: f64 = 20.0;

/// One population (or site) on the map.
#[derive(Debug, Clone, PartialEq)]
pub struct MapPoint {
    /// Name printed beside the marker.
    pub label: String,
    /// Latitude, WGS 84 decimal degrees (−90 to 90).
    pub latitude: f64,
    /// Longitude, WGS 84 decimal degrees (−180 to 180).
    pub longitude: f64,
    /// The name of its category: one of [`MapSetting::categories`].
    pub category: String,
    /// A group (e.g. the case or species in a portfolio), shown by marker shape; `None` on a
    /// map without groups.
    pub group: Option<String>,
}

/// A category a point can have, with its fill and its line in the legend.
#[derive(Debug, Clone, PartialEq)]
pub struct MapCategory {
    /// The name points give as their [`MapPoint::category`].
    pub name: String,
    /// The legend's text for it.
    pub legend: String,
    /// Ranked categories (threshold bands, lowest first) are filled from light to dark blue
    /// in the order given; unranked ones (no estimate, not assessed) in white and greys.
    pub ranked: bool,
}

/// How positions are shown.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Positions {
    /// Each position at the centre of its cell of a square grid `cell_km` wide in the
    /// projected plane.
    Grid {
        /// Cell width in km (finite, > 0).
        cell_km: f64,
    },
    /// The positions as given.
    Exact,
}

/// What the map shows and how.
#[derive(Debug, Clone, PartialEq)]
pub struct MapSetting {
    /// Generalised or exact positions.
    pub positions: Positions,
    /// The categories in legend order; every point's category must be one of them.
    pub categories: Vec<MapCategory>,
    /// The legend's heading above the categories.
    pub categories_heading: String,
    /// The legend's heading above the groups (shown only when points have groups).
    pub groups_heading: String,
    /// Print each point's label beside it (turn off for maps of very many points).
    pub labels: bool,
}

impl MapSetting {
    /// A setting with labels on and plain headings ("Category", "Group").
    pub fn new(positions: Positions, categories: Vec<MapCategory>) -> MapSetting {
        MapSetting {
            positions,
            categories,
            categories_heading: "Category".into(),
            groups_heading: "Group".into(),
            labels: true,
        }
    }
}

/// The sentences that describe a map, printed in its caption and available to the caller for
/// the text beside it.
#[derive(Debug, Clone, PartialEq)]
pub struct MapText {
    /// The projection, its sphere and its centre, e.g. "Lambert azimuthal equal-area
    /// projection (sphere of radius 6,371.0072 km) centred on 62° N, 10° E."
    pub projection: String,
    /// How positions are shown, e.g. "Positions generalised to a 10 km grid: each population
    /// is drawn at the centre of its grid cell." or "Exact positions, as given (not generalised)."
    pub positions: String,
}

/// A drawn map.
#[derive(Debug, Clone, PartialEq)]
pub struct MapFigure {
    /// The SVG text (text set in the document's serif face).
    pub svg: String,
    /// The sentences stated in its caption.
    pub text: MapText,
    /// Points drawn (every point given).
    pub marks: usize,
}

/// Draws the map of `points`.
///
/// # Errors
/// A [`FigureError`] (figure `map`) when there is no point, a coordinate is not a WGS 84
/// position, a point's category is not in the setting, the grid cell is not a positive
/// number of km, or the points span more than a hemisphere (no centre projects them all).
pub fn map_svg(points: &[MapPoint], setting: &MapSetting) -> Result<MapFigure, FigureError> {
    check(points, setting)?;
    let projection = projection_of(points);
    let mut plane = Vec::with_capacity(points.len());
    for (point, shown) in points.iter().zip(shown_positions(points, setting, &projection)) {
        plane.push(shown.ok_or_else(|| {
            error(format!("\"{}\" lies opposite the map's centre: the points span more than a hemisphere", point.label))
        })?);
    }
    // From here on only the shown positions (cell centres on a grid) are used, so nothing
    // drawn depends on an exact coordinate.
    let text = describe(&plane, setting, &projection);
    let svg = draw::draw(&draw::MapInput { points, plane: &plane, setting, projection: &projection, text: &text });
    Ok(MapFigure { svg, text, marks: points.len() })
}

/// The sentences describing the map of `points` (as [`map_svg`] prints them), for the text
/// beside it. Points that are not WGS 84 positions are left out.
pub fn map_text(points: &[MapPoint], setting: &MapSetting) -> MapText {
    let projection = projection_of(points);
    let plane: Vec<(f64, f64)> = shown_positions(points, setting, &projection).into_iter().flatten().collect();
    describe(&plane, setting, &projection)
}

/// Each point's position as shown in the projected plane (km): projected, then moved to its
/// cell centre on a grid; `None` where it cannot be projected.
fn shown_positions(
    points: &[MapPoint],
    setting: &MapSetting,
    projection: &LambertAzimuthal,
) -> Vec<Option<(f64, f64)>> {
    points
        .iter()
        .map(|point| {
            let projected =
                valid_position(point).then(|| projection.forward(point.latitude, point.longitude)).flatten()?;
            Some(match setting.positions {
                Positions::Grid { cell_km } => snap_to_grid(projected.0, projected.1, cell_km),
                Positions::Exact => projected,
            })
        })
        .collect()
}

fn describe(plane: &[(f64, f64)], setting: &MapSetting, projection: &LambertAzimuthal) -> MapText {
    let mut sentence = format!(
        "Lambert azimuthal equal-area projection (sphere of radius {} km) centred on {}, {}.",
        "6,371.0072",
        degrees(projection.centre_latitude, 0, ('N', 'S')),
        degrees(projection.centre_longitude, 0, ('E', 'W'))
    );
    if draw::span_km(plane) > 1000.0 {
        sentence.push_str(" The scale bar holds at the centre; away from it distances are slightly distorted.");
    }
    let positions = match setting.positions {
        Positions::Grid { cell_km } => format!(
            "Positions generalised to a {} km grid: each population is drawn at the centre of its grid cell.",
            kilometres(cell_km)
        ),
        Positions::Exact => "Exact positions, as given (not generalised).".to_string(),
    };
    MapText { projection: sentence, positions }
}

fn projection_of(points: &[MapPoint]) -> LambertAzimuthal {
    let positions: Vec<(f64, f64)> =
        points.iter().filter(|p| valid_position(p)).map(|p| (p.latitude, p.longitude)).collect();
    let (latitude, longitude) = extent_centre(&positions);
    LambertAzimuthal::new(latitude, longitude, EARTH_RADIUS_KM)
}

fn valid_position(point: &MapPoint) -> bool {
    (-90.0..=90.0).contains(&point.latitude) && (-180.0..=180.0).contains(&point.longitude)
}

fn check(points: &[MapPoint], setting: &MapSetting) -> Result<(), FigureError> {
    if points.is_empty() {
        return Err(error("no point to draw".into()));
    }
    if let Positions::Grid { cell_km } = setting.positions
        && !(cell_km.is_finite() && cell_km > 0.0)
    {
        return Err(error(format!("grid cell of {cell_km} km: it must be a positive number of km")));
    }
    for point in points {
        if !valid_position(point) {
            return Err(error(format!(
                "\"{}\": latitude {} and longitude {} are not a WGS 84 position",
                point.label, point.latitude, point.longitude
            )));
        }
        if !setting.categories.iter().any(|c| c.name == point.category) {
            return Err(error(format!("\"{}\": category \"{}\" is not in the setting", point.label, point.category)));
        }
    }
    Ok(())
}

fn error(message: String) -> FigureError {
    FigureError { figure: "map".into(), message }
}

/// A whole or decimal number of km as printed: `10`, `2.5`, `0.25`.
fn kilometres(value: f64) -> String {
    let text = format!("{value:.3}");
    let text = text.trim_end_matches('0').trim_end_matches('.');
    // Thousands separated as elsewhere in the document (6,371).
    match text.split_once('.') {
        Some((whole, fraction)) => format!("{}.{fraction}", thousands(whole)),
        None => thousands(text),
    }
}

fn thousands(whole: &str) -> String {
    let digits: Vec<char> = whole.chars().collect();
    let mut out = String::new();
    for (index, digit) in digits.iter().enumerate() {
        if index > 0 && (digits.len() - index).is_multiple_of(3) {
            out.push(',');
        }
        out.push(*digit);
    }
    out
}

/// A latitude or longitude as a graticule or the caption prints it, to at most `decimals`
/// decimals: `62° N`, `9.5° E`, `0°`.
fn degrees(value: f64, decimals: usize, (positive, negative): (char, char)) -> String {
    let text = format!("{:.decimals$}", value.abs());
    let text = if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.') } else { &text };
    if text == "0" {
        return "0°".into();
    }
    if (value.abs() - 180.0).abs() < 1e-9 {
        return "180°".into();
    }
    format!("{text}° {}", if value > 0.0 { positive } else { negative })
}
