//! The document's charts as SVG, drawn with plotters from values the document builder picked.
//!
//! Each chart is a [`Figure`]: the data it shows and nothing else. [`render`] turns it into an
//! SVG text that is both written to `figures/` and embedded in the PDF. Text in the SVG names
//! the document's serif face, so inside the PDF the charts are set in the same type as the
//! text. Colours are the Okabe–Ito palette (distinguishable with the common colour-vision
//! deficiencies), and every population also keeps its own marker shape, so the charts read in
//! grey print too. Drawing is deterministic: the same values give the same bytes.

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
    /// A square matrix of values between populations (lower triangle shown).
    HeatMap {
        /// Row and column labels.
        labels: Vec<String>,
        /// values[i][j]; the chart shows i > j.
        values: Vec<Vec<Option<f64>>>,
        /// What the values are.
        value_label: String,
    },
    /// Points (x, y) with a fitted line y = a + b·x, or y = a + b·ln x on a log x axis.
    Scatter {
        /// The points (x > 0 when `log_x`).
        points: Vec<(f64, f64)>,
        /// Intercept a and slope b of the fitted line, when a test gave them.
        fit: Option<(f64, f64)>,
        /// Logarithmic x axis, the line in ln x.
        log_x: bool,
        /// X axis title.
        x_label: String,
        /// Y axis title.
        y_label: String,
    },
}

/// Draws a figure as SVG text.
///
/// # Errors
/// A [`FigureError`] if the drawing library fails, which for validated inputs does not happen.
pub fn render(name: &str, figure: &Figure) -> Result<String, FigureError> {
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
            Figure::HeatMap { labels, values, value_label } => draw_heat_map(&root, labels, values, value_label),
            Figure::Scatter { points, fit, log_x, x_label, y_label } => {
                draw_scatter(&root, points, *fit, *log_x, x_label, y_label)
            }
        });
        drawn
            .and_then(|()| root.present().map_err(|e| e.to_string()))
            .map_err(|message| FigureError { figure: name.into(), message })?;
    }
    Ok(svg)
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

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
fn log_bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
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

/// A label right-aligned beside a y position, left of the plotting area.
fn label_left<'a, Y>(root: &Area<'a>, chart: &NumericChart<'_, 'a, Y>, x: f64, y: f64, text: &str) -> Result<(), String>
where
    Y: Ranged<ValueType = f64>,
{
    let (px, py) = chart.backend_coord(&(x, y));
    let style = font(15.0).pos(Pos::new(HPos::Right, VPos::Center));
    root.draw(&Text::new(text.to_string(), (px - 8, py), style)).map_err(|e| e.to_string())
}

fn draw_intervals(root: &Area<'_>, points: &[IntervalPoint], thresholds: &[f64], y_label: &str) -> Result<(), String> {
    let all = points.iter().flat_map(|p| [Some(p.value), p.low, p.high]).flatten().chain(thresholds.iter().copied());
    let (low, high) = log_bounds(all);
    let count = points.len().max(1) as f64;
    let mut chart = ChartBuilder::on(root)
        .margin(14)
        .margin_right(24)
        .x_label_area_size(44)
        .y_label_area_size(64)
        .build_cartesian_2d(-0.5..count - 0.5, (low..high).log_scale())
        .map_err(|e| e.to_string())?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(225, 225, 225))
        .x_labels(0)
        .x_label_formatter(&|_| String::new())
        .y_label_formatter(&|v: &f64| plain_number(*v))
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())?;
    for (index, point) in points.iter().enumerate() {
        label_below(root, &chart, index as f64, low, &point.label)?;
    }
    for (index, threshold) in thresholds.iter().enumerate() {
        let style =
            ShapeStyle { color: RGBColor(110, 110, 110).to_rgba(), filled: false, stroke_width: 1 + index as u32 };
        chart
            .draw_series(DashedLineSeries::new([(-0.5, *threshold), (count - 0.5, *threshold)], 8, 5, style))
            .map_err(|e| e.to_string())?;
        let (px, py) = chart.backend_coord(&(count - 0.5, *threshold));
        let text = font(14.0).color(&RGBColor(80, 80, 80)).pos(Pos::new(HPos::Right, VPos::Bottom));
        root.draw(&Text::new(format!("Ne = {}", plain_number(*threshold)), (px - 4, py - 3), text))
            .map_err(|e| e.to_string())?;
    }
    let clamp = |v: f64| v.clamp(low, high);
    for (index, point) in points.iter().enumerate() {
        let x = index as f64;
        let stroke = colour(point.style).stroke_width(2);
        if let (Some(lo), Some(hi)) = (point.low, point.high) {
            chart
                .draw_series(std::iter::once(ErrorBar::new_vertical(
                    x,
                    clamp(lo),
                    clamp(point.value),
                    clamp(hi),
                    stroke,
                    14,
                )))
                .map_err(|e| e.to_string())?;
        }
        if point.value.is_finite() {
            draw_markers!(chart, [(x, clamp(point.value))], point.style)?;
        } else {
            let (px, py) = chart.backend_coord(&(x, high));
            root.draw(&Text::new("∞", (px, py + 4), font(22.0).pos(Pos::new(HPos::Center, VPos::Top))))
                .map_err(|e| e.to_string())?;
        }
    }
    Ok(())
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

fn draw_lines(
    root: &Area<'_>,
    series: &[Series],
    x_label: &str,
    y_label: &str,
    log_y: bool,
    y_from_zero: bool,
) -> Result<(), String> {
    let (plot, key) = root.split_horizontally(SIZE.0 - LEGEND_WIDTH);
    draw_legend(&key, series)?;
    let xs: Vec<f64> = series.iter().flat_map(|s| s.points.iter().map(|p| p.0)).collect();
    let ys: Vec<f64> = series.iter().flat_map(|s| s.points.iter().map(|p| p.1)).filter(|y| y.is_finite()).collect();
    let (x_min, x_max) = padded(&xs, 0.04);
    if log_y {
        let (y_min, y_max) = log_bounds(ys.iter().copied());
        let mut chart = ChartBuilder::on(&plot)
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x_min..x_max, (y_min..y_max).log_scale())
            .map_err(|e| e.to_string())?;
        configure_numeric(&mut chart, x_label, y_label, &|v| plain_number(*v))?;
        draw_series_set(&mut chart, series, |y| y.clamp(y_min, y_max))
    } else {
        let (mut y_min, y_max) = padded(&ys, 0.12);
        if y_from_zero {
            y_min = 0.0;
        }
        let decimals = decimals_for(y_max - y_min);
        let mut chart = ChartBuilder::on(&plot)
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x_min..x_max, y_min..y_max)
            .map_err(|e| e.to_string())?;
        configure_numeric(&mut chart, x_label, y_label, &|v| format!("{v:.decimals$}"))?;
        draw_series_set(&mut chart, series, |y| y)
    }
}

/// The legend: one line with the population's colour and marker and its name per series.
fn draw_legend(area: &Area<'_>, series: &[Series]) -> Result<(), String> {
    for (index, s) in series.iter().enumerate() {
        let y = 30 + index as i32 * 26;
        let style = colour(s.style);
        area.draw(&PathElement::new(vec![(4, y), (36, y)], style.stroke_width(2))).map_err(|e| e.to_string())?;
        let fill = style.filled();
        let at = (20, y);
        match marker_shape(s.style) {
            0 => area.draw(&(EmptyElement::at(at) + Circle::new((0, 0), 5, fill))),
            1 => area.draw(&(EmptyElement::at(at) + TriangleMarker::new((0, 0), 6, fill))),
            2 => area.draw(&(EmptyElement::at(at) + Rectangle::new([(-4, -4), (4, 4)], fill))),
            _ => area.draw(&(EmptyElement::at(at) + Cross::new((0, 0), 5, style.stroke_width(2)))),
        }
        .map_err(|e| e.to_string())?;
        area.draw(&Text::new(s.name.clone(), (44, y), font(15.0).pos(Pos::new(HPos::Left, VPos::Center))))
            .map_err(|e| e.to_string())?;
    }
    Ok(())
}

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

type NumericChart<'a, 'b, Y> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<plotters::coord::types::RangedCoordf64, Y>>;

fn configure_numeric<'a, 'b: 'a, Y>(
    chart: &mut NumericChart<'a, 'b, Y>,
    x_label: &str,
    y_label: &str,
    y_format: &dyn Fn(&f64) -> String,
) -> Result<(), String>
where
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(225, 225, 225))
        .x_labels(8)
        .y_labels(6)
        .x_label_formatter(&|v| if v.fract().abs() < 1e-9 { format!("{v:.0}") } else { String::new() })
        .y_label_formatter(y_format)
        .x_desc(x_label)
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())
}

fn draw_series_set<'a, 'b: 'a, Y>(
    chart: &mut NumericChart<'a, 'b, Y>,
    series: &[Series],
    clamp: impl Fn(f64) -> f64,
) -> Result<(), String>
where
    Y: Ranged<ValueType = f64>,
{
    for s in series {
        let finite: Vec<(f64, f64)> = s.points.iter().copied().filter(|p| p.1.is_finite()).collect();
        let style = colour(s.style);
        let width = if s.slope.is_some() { 1 } else { 2 };
        chart
            .draw_series(LineSeries::new(finite.iter().map(|&(x, y)| (x, clamp(y))), style.stroke_width(width)))
            .map_err(|e| e.to_string())?;
        // Dense curves (projections) are clearer without a marker at every point.
        if finite.len() <= 12 {
            draw_markers!(chart, finite.iter().map(|&(x, y)| (x, clamp(y))), s.style)?;
        }
        // An infinite estimate (a log axis clamps it to the top edge) is marked there with "∞",
        // never left out and never joined to the line.
        let infinite: Vec<(f64, f64)> = s
            .points
            .iter()
            .filter(|p| p.1 == f64::INFINITY)
            .map(|&(x, _)| (x, clamp(f64::INFINITY)))
            .filter(|p| p.1.is_finite())
            .collect();
        chart
            .draw_series(infinite.iter().map(|&at| {
                EmptyElement::at(at)
                    + TriangleMarker::new((0, 4), 6, style.filled())
                    + Text::new("∞", (-5, 10), font(18.0).color(&style))
            }))
            .map_err(|e| e.to_string())?;
        if let (Some(slope), Some((x_mean, y_mean))) = (s.slope, mean_point(&finite)) {
            let (first, last) = (finite[0].0, finite[finite.len() - 1].0);
            // Many points, so that a straight line in linear units also draws right on a log axis.
            let line: Vec<(f64, f64)> = (0..=24)
                .map(|k| first + (last - first) * f64::from(k) / 24.0)
                .map(|x| (x, y_mean + slope * (x - x_mean)))
                .map(|(x, y)| (x, clamp(y)))
                .collect();
            chart.draw_series(DashedLineSeries::new(line, 10, 5, style.stroke_width(3))).map_err(|e| e.to_string())?;
        }
    }
    Ok(())
}

fn mean_point(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    if points.is_empty() {
        return None;
    }
    let n = points.len() as f64;
    Some((points.iter().map(|p| p.0).sum::<f64>() / n, points.iter().map(|p| p.1).sum::<f64>() / n))
}

/// The lower triangle without its empty first row and last column: rows are populations 2…n,
/// columns populations 1…n−1.
fn draw_heat_map(
    root: &Area<'_>,
    labels: &[String],
    values: &[Vec<Option<f64>>],
    value_label: &str,
) -> Result<(), String> {
    let size = labels.len().saturating_sub(1).max(1) as f64;
    let max = values.iter().flatten().flatten().copied().filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    let (plot, key) = root.split_horizontally(SIZE.0 - 150);
    let mut chart = ChartBuilder::on(&plot)
        .margin(14)
        .x_label_area_size(44)
        .y_label_area_size(120)
        .build_cartesian_2d(0.0..size, 0.0..size)
        .map_err(|e| e.to_string())?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_labels(0)
        .y_labels(0)
        .x_label_formatter(&|_| String::new())
        .y_label_formatter(&|_| String::new())
        .draw()
        .map_err(|e| e.to_string())?;
    for (column, label) in labels.iter().enumerate().take(labels.len().saturating_sub(1)) {
        label_below(&plot, &chart, column as f64 + 0.5, 0.0, label)?;
    }
    for (row, label) in labels.iter().enumerate().skip(1) {
        // Row i (i ≥ 1) is drawn from the top: y runs from size − i to size − i + 1.
        label_left(&plot, &chart, 0.0, size - row as f64 + 0.5, label)?;
    }
    let centred = font(15.0).pos(Pos::new(HPos::Center, VPos::Center));
    for (i, row) in values.iter().enumerate().skip(1) {
        for (j, value) in row.iter().enumerate().take(i) {
            let Some(value) = value.filter(|v| v.is_finite()) else { continue };
            let shade = if max > 0.0 { (value / max).clamp(0.0, 1.0) } else { 0.0 };
            let (x, y) = (j as f64, size - i as f64);
            chart
                .draw_series(std::iter::once(Rectangle::new([(x, y + 1.0), (x + 1.0, y)], heat_colour(shade).filled())))
                .map_err(|e| e.to_string())?;
            let text_colour = if shade > 0.55 { WHITE } else { BLACK };
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("{value:.3}"),
                    (x + 0.5, y + 0.5),
                    centred.clone().color(&text_colour),
                )))
                .map_err(|e| e.to_string())?;
        }
    }
    draw_heat_key(&key, max, value_label)
}

/// White → dark blue.
fn heat_colour(shade: f64) -> RGBColor {
    let mix = |light: f64, dark: f64| (light + (dark - light) * shade).round() as u8;
    RGBColor(mix(255.0, 8.0), mix(255.0, 48.0), mix(255.0, 107.0))
}

fn draw_heat_key(area: &Area<'_>, max: f64, value_label: &str) -> Result<(), String> {
    let steps = 40;
    let (top, bottom, left) = (40, SIZE.1 as i32 - 70, 20);
    let height = bottom - top;
    for k in 0..steps {
        let shade = 1.0 - k as f64 / (steps - 1) as f64;
        let y0 = top + height * k / steps;
        let y1 = top + height * (k + 1) / steps;
        area.draw(&Rectangle::new([(left, y0), (left + 22, y1)], heat_colour(shade).filled()))
            .map_err(|e| e.to_string())?;
    }
    area.draw(&Rectangle::new([(left, top), (left + 22, bottom)], BLACK.stroke_width(1))).map_err(|e| e.to_string())?;
    let beside = |y: i32| (left + 30, y);
    let style = font(14.0).pos(Pos::new(HPos::Left, VPos::Center));
    area.draw(&Text::new(format!("{max:.3}"), beside(top), style.clone())).map_err(|e| e.to_string())?;
    area.draw(&Text::new("0", beside(bottom), style)).map_err(|e| e.to_string())?;
    area.draw(&Text::new(value_label.to_string(), (left, bottom + 16), font(15.0))).map_err(|e| e.to_string())
}

fn draw_scatter(
    root: &Area<'_>,
    points: &[(f64, f64)],
    fit: Option<(f64, f64)>,
    log_x: bool,
    x_label: &str,
    y_label: &str,
) -> Result<(), String> {
    // A logarithmic x axis is drawn as ln x on a linear axis whose labels show x itself, so
    // that short ranges (less than a decade) still get several labels.
    let to_axis = |x: f64| if log_x { x.ln() } else { x };
    let placed: Vec<(f64, f64)> = points.iter().map(|&(x, y)| (to_axis(x), y)).collect();
    let (x_low, x_high) = padded(&placed.iter().map(|p| p.0).collect::<Vec<_>>(), 0.06);
    let (y_min, y_max) = padded(&placed.iter().map(|p| p.1).collect::<Vec<_>>(), 0.12);
    let decimals = decimals_for(y_max - y_min);
    let x_text = |v: &f64| if log_x { plain_number(v.exp()) } else { plain_number(*v) };
    let mut chart = ChartBuilder::on(root)
        .margin(14)
        .margin_right(24)
        .x_label_area_size(44)
        .y_label_area_size(70)
        .build_cartesian_2d(x_low..x_high, y_min..y_max)
        .map_err(|e| e.to_string())?;
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(225, 225, 225))
        .x_labels(8)
        .y_labels(6)
        .x_label_formatter(&x_text)
        .y_label_formatter(&|v| format!("{v:.decimals$}"))
        .x_desc(x_label)
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())?;
    draw_markers!(chart, placed.iter().copied(), 0)?;
    if let Some((intercept, slope)) = fit {
        let first = placed.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
        let last = placed.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
        // The fit is in the axis's own units (ln x when logarithmic), so it is a straight line.
        let at = |v: f64| (v, intercept + slope * v);
        chart
            .draw_series(LineSeries::new([at(first), at(last)], colour(1).stroke_width(2)))
            .map_err(|e| e.to_string())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines() -> Figure {
        Figure::Lines {
            series: vec![
                Series {
                    name: "North".into(),
                    style: 0,
                    points: vec![(2018.0, 0.61), (2021.0, 0.60), (2024.0, 0.57)],
                    slope: Some(-0.0065),
                },
                Series {
                    name: "South & <co>".into(),
                    style: 1,
                    points: vec![(2018.0, 0.70), (2024.0, 0.71)],
                    slope: None,
                },
            ],
            x_label: "Year".into(),
            y_label: "He".into(),
            log_y: false,
            y_from_zero: false,
        }
    }

    #[test]
    fn charts_are_svg_in_the_document_face_and_deterministic() {
        let first = render("he", &lines()).unwrap();
        assert!(first.starts_with("<svg"), "{}", &first[..first.len().min(80)]);
        assert!(first.contains("Libertinus Serif"));
        assert!(first.contains("South &amp; &lt;co&gt;"), "labels are escaped as XML text");
        assert_eq!(first, render("he", &lines()).unwrap());
    }

    #[test]
    fn every_kind_draws_including_infinite_values() {
        let intervals = Figure::IntervalsAgainstThresholds {
            points: vec![
                IntervalPoint { label: "A".into(), style: 0, value: 48.0, low: Some(30.0), high: Some(95.0) },
                IntervalPoint {
                    label: "B".into(),
                    style: 1,
                    value: f64::INFINITY,
                    low: Some(800.0),
                    high: Some(f64::INFINITY),
                },
            ],
            thresholds: vec![50.0, 500.0],
            y_label: "Ne".into(),
        };
        let heat = Figure::HeatMap {
            labels: vec!["A".into(), "B".into(), "C".into()],
            values: vec![vec![None, None, None], vec![Some(0.05), None, None], vec![Some(0.1), Some(0.02), None]],
            value_label: "FST".into(),
        };
        let scatter = Figure::Scatter {
            points: vec![(10.0, 0.01), (30.0, 0.04), (50.0, 0.05)],
            fit: Some((-0.05, 0.025)),
            log_x: true,
            x_label: "km".into(),
            y_label: "FST/(1−FST)".into(),
        };
        for (name, figure) in [("ne", intervals), ("fst", heat), ("ibd", scatter)] {
            let svg = render(name, &figure).unwrap();
            assert!(svg.contains("</svg>"), "{name}");
        }
    }

    #[test]
    fn an_infinite_estimate_is_marked_at_the_top_edge_not_dropped() {
        let figure = |last: f64| Figure::Lines {
            series: vec![Series {
                name: "North".into(),
                style: 0,
                points: vec![(2018.0, 120.0), (2021.0, 90.0), (2024.0, last)],
                slope: None,
            }],
            x_label: "Sampling year".into(),
            y_label: "Ne (LD)".into(),
            log_y: true,
            y_from_zero: false,
        };
        let svg = render("ne-years", &figure(f64::INFINITY)).unwrap();
        assert!(svg.contains('∞'), "the infinite estimate is marked");
        assert!(!render("ne-years", &figure(60.0)).unwrap().contains('∞'), "a finite series has no mark");
    }

    #[test]
    fn log_bounds_cover_values_and_thresholds() {
        assert_eq!(log_bounds([48.0, 95.0, 500.0, f64::INFINITY].into_iter()), (10.0, 1000.0));
        assert_eq!(log_bounds(std::iter::empty()), (1.0, 10_000.0));
    }
}
