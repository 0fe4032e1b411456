//! The document's charts as SVG, drawn with plotters from values the document builder picked.
//!
//! Each chart is a [`Figure`]: the data it shows and nothing else. [`render`] turns it into an
//! SVG text that is both written to `figures/` and embedded in the PDF. Text in the SVG names
//! the document's serif face, so inside the PDF the charts are set in the same type as the
//! text. Colours are the Okabe–Ito palette (distinguishable with the common colour-vision
//! deficiencies), and every population also keeps its own marker shape, so the charts read in
//! grey print too. Drawing is deterministic: the same values give the same bytes.
//!
//! The map of populations ([`map`]) is written as SVG directly, without plotters, and is
//! public so that any document can draw one for its own set of populations.

use plotters::coord::Shift;
use plotters::coord::ranged1d::ValueFormatter;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Width and height of every chart in SVG pixels (shown 16 cm wide in the document).
const SIZE: (u32, u32) = (720, 400);
/// The face named in the SVG text (the document's own, embedded in the binary).
const FONT: &str = "Libertinus Serif";
/// Okabe–Ito colours, most distinct first.
const PALETTE: [(u8, u8, u8); 7] =
    [(0, 114, 178), (213, 94, 0), (0, 158, 115), (204, 121, 167), (230, 159, 0), (86, 180, 233), (0, 0, 0)];

/// Why a chart could not be drawn (a defect: the inputs are validated before drawing).
#[derive(Debug, thiserror::Error)]
#[error("figure {figure}: {message}")]
pub struct FigureError {
    /// Which figure.
    pub figure: String,
    /// What the drawing library said.
    pub message: String,
}

/// A point with an optional confidence interval, on a category axis.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalPoint {
    /// Category label (population).
    pub label: String,
    /// Colour and marker index of the population.
    pub style: usize,
    /// The estimate (+∞ allowed).
    pub value: f64,
    /// Lower bound.
    pub low: Option<f64>,
    /// Upper bound (+∞ allowed).
    pub high: Option<f64>,
}

/// One population's values over a numeric x axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend label.
    pub name: String,
    /// Colour and marker index of the population.
    pub style: usize,
    /// (x, y) points, in x order.
    pub points: Vec<(f64, f64)>,
    /// A slope per x unit to draw as a straight line through the mean point, when a trend
    /// test gave one (a least-squares line passes through the mean of its points).
    pub slope: Option<f64>,
    /// 95 % intervals to draw as vertical bars: (x, low, high), high may be +∞ (drawn to the
    /// top edge with an arrow).
    pub intervals: Vec<(f64, f64, f64)>,
}

/// One group's values for a strip chart.
#[derive(Debug, Clone, PartialEq)]
pub struct StripGroup {
    /// Category label (`population year`): the last word goes on a second line.
    pub label: String,
    /// Colour and marker index of the population.
    pub style: usize,
    /// One value per animal.
    pub values: Vec<f64>,
}

/// What a chart shows.
#[derive(Debug, Clone, PartialEq)]
pub enum Figure {
    /// Estimates with intervals per population on a log axis, with horizontal threshold lines.
    IntervalsAgainstThresholds {
        /// The estimates.
        points: Vec<IntervalPoint>,
        /// Threshold lines.
        thresholds: Vec<f64>,
        /// Y axis title.
        y_label: String,
    },
    /// Lines over a numeric x axis (years, or years ahead), one per population.
    Lines {
        /// The series.
        series: Vec<Series>,
        /// X axis title.
        x_label: String,
        /// Y axis title.
        y_label: String,
        /// Log y axis (effective sizes).
        log_y: bool,
        /// Y axis from 0 (proportions) rather than fitted to the data.
        y_from_zero: bool,
    },
    /// Every value of each group as a point, with the group mean as a bar.
    Strip {
        /// The groups, left to right.
        groups: Vec<StripGroup>,
        /// Y axis title.
        y_label: String,
    },
    /// Points (x, y) with a fitted line y = a + b·x, or y = a + b·ln x on a log x axis.
    Scatter {
        /// The points (x > 0 when `log_x`).
        points: Vec<(f64, f64)>,
        /// A label per point (the population pair), drawn beside it when there are few points.
        labels: Vec<String>,
        /// Intercept a and slope b of the fitted line, when a test gave them.
        fit: Option<(f64, f64)>,
        /// Logarithmic x axis, the line in ln x.
        log_x: bool,
        /// X axis title.
        x_label: String,
        /// Y axis title.
        y_label: String,
    },
    /// A map of populations ([`map::map_svg`]).
    Map {
        /// The populations with coordinates.
        points: Vec<map::MapPoint>,
        /// How positions are shown, and the categories.
        setting: map::MapSetting,
    },
}

/// Draws a figure as SVG text.
///
/// # Errors
/// A [`FigureError`] if the drawing library fails, which for validated inputs does not happen.
pub fn render(name: &str, figure: &Figure) -> Result<String, FigureError> {
    if let Figure::Map { points, setting } = figure {
        return map::map_svg(points, setting)
            .map(|m| m.svg)
            .map_err(|e| FigureError { figure: name.into(), message: e.message });
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        let drawn = root.fill(&WHITE).map_err(|e| e.to_string()).and_then(|()| match figure {
            Figure::IntervalsAgainstThresholds { points, thresholds, y_label } => {
                draw_intervals(&root, points, thresholds, y_label)
            }
            Figure::Lines { series, x_label, y_label, log_y, y_from_zero } => {
                draw_lines(&root, series, x_label, y_label, *log_y, *y_from_zero)
            }
            Figure::Scatter { points, labels, fit, log_x, x_label, y_label } => {
                draw_scatter(&root, points, labels, *fit, *log_x, x_label, y_label)
            }
            Figure::Strip { groups, y_label } => draw_strip(&root, groups, y_label),
            Figure::Map { .. } => Ok(()),
        });
        drawn
            .and_then(|()| root.present().map_err(|e| e.to_string()))
            .map_err(|message| FigureError { figure: name.into(), message })?;
    }
    Ok(svg)
}

impl Figure {
    /// How many data marks the chart draws: one per estimate or point, an infinite estimate
    /// included (it is drawn as ∞ at the top edge). `assessment.json` records it with the
    /// chart, so that a reader, and the tests, can check that no row of the table behind it
    /// was dropped.
    pub fn marks(&self) -> usize {
        match self {
            Figure::IntervalsAgainstThresholds { points, .. } => points.iter().filter(|p| !p.value.is_nan()).count(),
            Figure::Lines { series, .. } => {
                series.iter().map(|s| s.points.iter().filter(|p| !p.1.is_nan()).count()).sum()
            }
            Figure::Strip { groups, .. } => {
                groups.iter().map(|g| g.values.iter().filter(|v| v.is_finite()).count()).sum()
            }
            Figure::Scatter { points, log_x, .. } => {
                points.iter().filter(|p| p.0.is_finite() && p.1.is_finite() && (!log_x || p.0 > 0.0)).count()
            }
            Figure::Map { points, .. } => points.len(),
        }
    }
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;
/// A chart with a numeric x axis.
type NumericChart<'a, 'b, Y> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<plotters::coord::types::RangedCoordf64, Y>>;

fn colour(style: usize) -> RGBColor {
    let (r, g, b) = PALETTE[style % PALETTE.len()];
    RGBColor(r, g, b)
}

fn font(size: f64) -> TextStyle<'static> {
    (FONT, size).into_font().color(&BLACK)
}

/// Draws each point with the population's marker shape (circle, triangle, square, cross),
/// so that populations stay apart in grey print.
macro_rules! draw_markers {
    ($chart:expr, $points:expr, $style:expr) => {{
        let style: usize = $style;
        let fill = colour(style).filled();
        let points: Vec<_> = $points.into_iter().collect();
        match marker_shape(style) {
            0 => $chart
                .draw_series(points.into_iter().map(|p| EmptyElement::at(p) + Circle::new((0, 0), 6, fill)))
                .map(|_| ()),
            1 => $chart
                .draw_series(points.into_iter().map(|p| EmptyElement::at(p) + TriangleMarker::new((0, 0), 7, fill)))
                .map(|_| ()),
            2 => $chart
                .draw_series(points.into_iter().map(|p| EmptyElement::at(p) + Rectangle::new([(-5, -5), (5, 5)], fill)))
                .map(|_| ()),
            _ => $chart
                .draw_series(
                    points
                        .into_iter()
                        .map(|p| EmptyElement::at(p) + Cross::new((0, 0), 6, colour(style).stroke_width(3))),
                )
                .map(|_| ()),
        }
        .map_err(|e| e.to_string())
    }};
}

/// Nice round bounds of a log axis covering `values` and `thresholds`.
pub(crate) fn log_bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let finite: Vec<f64> = values.filter(|v| v.is_finite() && *v > 0.0).collect();
    let low = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let high = finite.iter().copied().fold(0.0_f64, f64::max);
    if !low.is_finite() || high <= 0.0 {
        return (1.0, 10_000.0);
    }
    let low = 10f64.powf(low.log10().floor()).max(1.0).min(low);
    let high = 10f64.powf(high.log10().ceil()).max(low * 10.0);
    (low, high)
}

fn plain_number(value: f64) -> String {
    if value.abs() >= 1.0 { format!("{value:.0}") } else { format!("{}", (value * 1000.0).round() / 1000.0) }
}

/// A label centred under an x position of the plotting area, drawn on the whole figure (the
/// plotting area itself clips text).
fn label_below<'a, Y>(
    root: &Area<'a>,
    chart: &NumericChart<'_, 'a, Y>,
    x: f64,
    y: f64,
    text: &str,
) -> Result<(), String>
where
    Y: Ranged<ValueType = f64>,
{
    let (px, py) = chart.backend_coord(&(x, y));
    let style = font(15.0).pos(Pos::new(HPos::Center, VPos::Top));
    root.draw(&Text::new(text.to_string(), (px, py + 8), style)).map_err(|e| e.to_string())
}

/// Decimals for axis labels of a linear axis spanning `span`.
fn decimals_for(span: f64) -> usize {
    if span >= 20.0 {
        0
    } else if span >= 2.0 {
        1
    } else if span >= 0.2 {
        2
    } else {
        3
    }
}

/// Width of the legend strip right of a line chart.
const LEGEND_WIDTH: u32 = 170;

/// The population's marker: 0 circle, 1 triangle, 2 square, 3 cross.
fn marker_shape(style: usize) -> usize {
    (style / PALETTE.len() + style) % 4
}

/// The range of `values` widened by `share` of its span on each side (a unit span when flat).
fn padded(values: &[f64], share: f64) -> (f64, f64) {
    let low = values.iter().copied().fold(f64::INFINITY, f64::min);
    let high = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !low.is_finite() || !high.is_finite() {
        return (0.0, 1.0);
    }
    let span = if high > low { high - low } else { low.abs().max(1.0) * 0.5 };
    (low - span * share, high + span * share)
}

mod key;
mod lines;
pub mod map;
mod points;
#[cfg(test)]
mod tests;

use key::{KeyEntry, draw_key};
use lines::draw_lines;
use points::{draw_intervals, draw_scatter, draw_strip};
