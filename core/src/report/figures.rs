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
            Figure::Scatter { points, labels, fit, log_x, x_label, y_label } => {
                draw_scatter(&root, points, labels, *fit, *log_x, x_label, y_label)
            }
            Figure::Strip { groups, y_label } => draw_strip(&root, groups, y_label),
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
            Figure::Strip { groups, .. } => groups.iter().map(|g| g.values.iter().filter(|v| v.is_finite()).count()).sum(),
            Figure::Scatter { points, log_x, .. } => {
                points.iter().filter(|p| p.0.is_finite() && p.1.is_finite() && (!log_x || p.0 > 0.0)).count()
            }
        }
    }
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

fn draw_intervals(root: &Area<'_>, points: &[IntervalPoint], thresholds: &[f64], y_label: &str) -> Result<(), String> {
    let all = points.iter().flat_map(|p| [Some(p.value), p.low, p.high]).flatten().chain(thresholds.iter().copied());
    let (low, high) = log_bounds(all);
    let count = points.len().max(1) as f64;
    let (plot, key) = root.split_horizontally(SIZE.0 - LEGEND_WIDTH);
    let open = points.iter().any(|p| p.high == Some(f64::INFINITY) && p.value.is_finite());
    let infinite = points.iter().any(|p| p.value == f64::INFINITY);
    let mut entries = vec![KeyEntry::Marker("estimate".into()), KeyEntry::Bar("95 % interval".into())];
    if open {
        entries.push(KeyEntry::Arrow("no finite upper bound".into()));
    }
    if infinite {
        entries.push(KeyEntry::Infinite("estimate ∞".into()));
    }
    if !thresholds.is_empty() {
        entries.push(KeyEntry::Dashed("threshold".into()));
    }
    draw_key(&key, &entries, 30)?;
    let root = &plot;
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
            if hi == f64::INFINITY && point.value.is_finite() {
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((x, high)) + TriangleMarker::new((0, 2), 7, colour(point.style).filled()),
                    ))
                    .map_err(|e| e.to_string())?;
            }
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
    let patterned = series.iter().all(|s| s.slope.is_none());
    draw_legend(&key, series, patterned)?;
    let mut entries = Vec::new();
    if series.iter().any(|s| !s.intervals.is_empty()) {
        entries.push(KeyEntry::Bar("95 % interval".into()));
    }
    if series.iter().any(|s| s.intervals.iter().any(|i| i.2 == f64::INFINITY)) {
        entries.push(KeyEntry::Arrow("no finite upper bound".into()));
    }
    if series.iter().any(|s| s.points.iter().any(|p| p.1 == f64::INFINITY)) {
        entries.push(KeyEntry::Infinite("estimate ∞".into()));
    }
    if series.iter().any(|s| s.slope.is_some()) {
        entries.push(KeyEntry::Dashed("least-squares trend".into()));
    }
    draw_key(&key, &entries, 30 + series.len() as i32 * 26 + 16)?;
    let xs: Vec<f64> = series.iter().flat_map(|s| s.points.iter().map(|p| p.0)).collect();
    let ys: Vec<f64> = series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.1).chain(s.intervals.iter().flat_map(|i| [i.1, i.2])))
        .filter(|y| y.is_finite())
        .collect();
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
        draw_series_set(&mut chart, series, |y| y.clamp(y_min, y_max), patterned, x_max - x_min)
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
        draw_series_set(&mut chart, series, |y| y.clamp(y_min, y_max), patterned, x_max - x_min)
    }
}

/// Dash and gap lengths of a population's line when lines are told apart by pattern
/// (`None`: solid).
fn dash_pattern(style: usize) -> Option<(u32, u32)> {
    match style % 4 {
        0 => None,
        1 => Some((14, 6)),
        2 => Some((4, 4)),
        _ => Some((22, 5)),
    }
}

/// A line from `from` to `to` in the population's colour, solid or in its dash pattern.
fn pattern_line(
    area: &Area<'_>,
    from: (i32, i32),
    to: (i32, i32),
    style: usize,
    patterned: bool,
) -> Result<(), String> {
    let stroke = colour(style).stroke_width(2);
    match dash_pattern(style).filter(|_| patterned) {
        None => area.draw(&PathElement::new(vec![from, to], stroke)).map_err(|e| e.to_string()),
        Some((dash, gap)) => {
            let mut x = from.0;
            while x < to.0 {
                let end = (x + dash as i32).min(to.0);
                area.draw(&PathElement::new(vec![(x, from.1), (end, to.1)], stroke)).map_err(|e| e.to_string())?;
                x = end + gap as i32;
            }
            Ok(())
        }
    }
}

/// One entry of a chart's key besides the populations.
enum KeyEntry {
    /// A population marker (grey): an estimate.
    Marker(String),
    /// A vertical bar: an interval.
    Bar(String),
    /// An arrow at the top edge: an interval open above.
    Arrow(String),
    /// The ∞ sign at the top edge: an infinite estimate.
    Infinite(String),
    /// A grey dashed line: a threshold or a trend.
    Dashed(String),
    /// A solid line in a palette colour: a fitted line.
    Line(usize, String),
}

/// Draws the key entries from height `top` down.
fn draw_key(area: &Area<'_>, entries: &[KeyEntry], top: i32) -> Result<(), String> {
    let grey = RGBColor(90, 90, 90);
    let text = |label: &str, y: i32| {
        area.draw(&Text::new(label.to_string(), (44, y), font(14.0).pos(Pos::new(HPos::Left, VPos::Center))))
            .map_err(|e| e.to_string())
    };
    for (index, entry) in entries.iter().enumerate() {
        let y = top + index as i32 * 24;
        let drawn = match entry {
            KeyEntry::Marker(label) => {
                area.draw(&(EmptyElement::at((20, y)) + Circle::new((0, 0), 5, grey.filled())))
                    .map_err(|e| e.to_string())?;
                label
            }
            KeyEntry::Bar(label) => {
                area.draw(&PathElement::new(vec![(20, y - 9), (20, y + 9)], grey.stroke_width(2)))
                    .map_err(|e| e.to_string())?;
                area.draw(&PathElement::new(vec![(14, y - 9), (26, y - 9)], grey.stroke_width(2)))
                    .map_err(|e| e.to_string())?;
                area.draw(&PathElement::new(vec![(14, y + 9), (26, y + 9)], grey.stroke_width(2)))
                    .map_err(|e| e.to_string())?;
                label
            }
            KeyEntry::Arrow(label) => {
                area.draw(&(EmptyElement::at((20, y)) + TriangleMarker::new((0, 0), 7, grey.filled())))
                    .map_err(|e| e.to_string())?;
                label
            }
            KeyEntry::Infinite(label) => {
                area.draw(&Text::new("∞", (20, y), font(20.0).color(&grey).pos(Pos::new(HPos::Center, VPos::Center))))
                    .map_err(|e| e.to_string())?;
                label
            }
            KeyEntry::Line(style, label) => {
                area.draw(&PathElement::new(vec![(4, y), (36, y)], colour(*style).stroke_width(2)))
                    .map_err(|e| e.to_string())?;
                label
            }
            KeyEntry::Dashed(label) => {
                for x in [4, 18] {
                    area.draw(&PathElement::new(vec![(x, y), (x + 10, y)], grey.stroke_width(2)))
                        .map_err(|e| e.to_string())?;
                }
                label
            }
        };
        text(drawn, y)?;
    }
    Ok(())
}

/// The legend: one line with the population's colour, line pattern and marker and its name
/// per series.
fn draw_legend(area: &Area<'_>, series: &[Series], patterned: bool) -> Result<(), String> {
    for (index, s) in series.iter().enumerate() {
        let y = 30 + index as i32 * 26;
        let style = colour(s.style);
        pattern_line(area, (4, y), (36, y), s.style, patterned)?;
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
    patterned: bool,
    x_span: f64,
) -> Result<(), String>
where
    Y: Ranged<ValueType = f64>,
{
    let count = series.len();
    for (index, s) in series.iter().enumerate() {
        let finite: Vec<(f64, f64)> = s.points.iter().copied().filter(|p| p.1.is_finite()).collect();
        let style = colour(s.style);
        let width = if s.slope.is_some() { 1 } else { 2 };
        let line = finite.iter().map(|&(x, y)| (x, clamp(y)));
        match dash_pattern(s.style).filter(|_| patterned) {
            None => chart.draw_series(LineSeries::new(line, style.stroke_width(width))).map(|_| ()),
            Some((dash, gap)) => {
                chart.draw_series(DashedLineSeries::new(line, dash, gap, style.stroke_width(width))).map(|_| ())
            }
        }
        .map_err(|e| e.to_string())?;
        // Intervals of several populations at one x are set side by side, a little apart.
        let shift = if count > 1 { (index as f64 - (count - 1) as f64 / 2.0) * x_span * 0.02 } else { 0.0 };
        for &(x, lo, hi) in &s.intervals {
            let middle = s.points.iter().find(|p| p.0 == x).map_or(lo, |p| p.1);
            chart
                .draw_series(std::iter::once(ErrorBar::new_vertical(
                    x + shift,
                    clamp(lo),
                    clamp(middle),
                    clamp(hi),
                    style.stroke_width(1),
                    8,
                )))
                .map_err(|e| e.to_string())?;
            if hi == f64::INFINITY {
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((x + shift, clamp(hi))) + TriangleMarker::new((0, 2), 5, style.filled()),
                    ))
                    .map_err(|e| e.to_string())?;
            }
        }
        // Dense curves (projections) carry a marker at a few points, staggered between
        // populations so that lines lying on top of each other are still told apart.
        if finite.len() <= 12 {
            draw_markers!(chart, finite.iter().map(|&(x, y)| (x, clamp(y))), s.style)?;
        } else {
            let every = finite.len() / 5;
            let offset = (index * every / count.max(1)).min(every.saturating_sub(1));
            draw_markers!(
                chart,
                finite.iter().skip(offset).step_by(every.max(1)).map(|&(x, y)| (x, clamp(y))),
                s.style
            )?;
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

fn draw_strip(root: &Area<'_>, groups: &[StripGroup], y_label: &str) -> Result<(), String> {
    let (plot, key) = root.split_horizontally(SIZE.0 - LEGEND_WIDTH);
    draw_key(&key, &[KeyEntry::Marker("one animal".into()), KeyEntry::Line(6, "group mean".into())], 30)?;
    let values: Vec<f64> = groups.iter().flat_map(|g| g.values.iter().copied()).filter(|v| v.is_finite()).collect();
    let (mut y_min, mut y_max) = padded(&values, 0.08);
    y_min = y_min.min(0.0);
    y_max = y_max.max(0.0);
    let count = groups.len().max(1) as f64;
    let decimals = decimals_for(y_max - y_min);
    let mut chart = ChartBuilder::on(&plot)
        .margin(14)
        .x_label_area_size(52)
        .y_label_area_size(64)
        .build_cartesian_2d(-0.5..count - 0.5, y_min..y_max)
        .map_err(|e| e.to_string())?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(225, 225, 225))
        .x_labels(0)
        .x_label_formatter(&|_| String::new())
        .y_labels(6)
        .y_label_formatter(&|v| format!("{v:.decimals$}"))
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())?;
    for (index, group) in groups.iter().enumerate() {
        let x = index as f64;
        let (first, last) = group.label.rsplit_once(' ').unwrap_or((group.label.as_str(), ""));
        let (px, py) = chart.backend_coord(&(x, y_min));
        let style = font(12.0).pos(Pos::new(HPos::Center, VPos::Top));
        plot.draw(&Text::new(first.to_string(), (px, py + 6), style.clone())).map_err(|e| e.to_string())?;
        plot.draw(&Text::new(last.to_string(), (px, py + 20), style)).map_err(|e| e.to_string())?;
        // A fixed spread by rank (golden-ratio steps), so the chart is the same on every run.
        let finite: Vec<f64> = group.values.iter().copied().filter(|v| v.is_finite()).collect();
        let placed = finite.iter().enumerate().map(|(k, &v)| (x + ((k as f64 * 0.618_034) % 1.0 - 0.5) * 0.5, v));
        draw_markers!(chart, placed, group.style)?;
        if !finite.is_empty() {
            let mean = finite.iter().sum::<f64>() / finite.len() as f64;
            chart
                .draw_series(std::iter::once(PathElement::new(vec![(x - 0.35, mean), (x + 0.35, mean)], colour(6).stroke_width(3))))
                .map_err(|e| e.to_string())?;
        }
    }
    Ok(())
}

/// Round values 1, 2, 5 × 10ᵏ within [low, high], for the ticks of a logarithmic axis.
fn round_log_ticks(low: f64, high: f64) -> Vec<f64> {
    if !(low > 0.0 && high > low) {
        return Vec::new();
    }
    let mut ticks = Vec::new();
    let mut decade = 10f64.powf(low.log10().floor());
    while decade <= high {
        for m in [1.0, 2.0, 5.0] {
            let v = m * decade;
            if v >= low && v <= high {
                ticks.push(v);
            }
        }
        decade *= 10.0;
    }
    ticks
}

/// Most point labels a scatter draws beside its points; with more they would hide the points.
const MAX_POINT_LABELS: usize = 15;

fn draw_scatter(
    root: &Area<'_>,
    points: &[(f64, f64)],
    labels: &[String],
    fit: Option<(f64, f64)>,
    log_x: bool,
    x_label: &str,
    y_label: &str,
) -> Result<(), String> {
    // A logarithmic x axis is drawn as ln x on a linear axis whose labels show x itself, so
    // that short ranges (less than a decade) still get several labels.
    let (plot, key) = root.split_horizontally(SIZE.0 - LEGEND_WIDTH);
    let mut entries = vec![KeyEntry::Marker("population pair".into())];
    if fit.is_some() {
        entries.push(KeyEntry::Line(1, "least-squares fit".into()));
    }
    draw_key(&key, &entries, 30)?;
    let root = &plot;
    let to_axis = |x: f64| if log_x { x.ln() } else { x };
    let placed: Vec<(f64, f64)> = points.iter().map(|&(x, y)| (to_axis(x), y)).collect();
    let (x_low, x_high) = padded(&placed.iter().map(|p| p.0).collect::<Vec<_>>(), 0.06);
    let (y_min, y_max) = padded(&placed.iter().map(|p| p.1).collect::<Vec<_>>(), 0.12);
    let decimals = decimals_for(y_max - y_min);
    let x_text = |v: &f64| if log_x { plain_number(v.exp()) } else { plain_number(*v) };
    let ticks = if log_x { round_log_ticks(x_low.exp(), x_high.exp()) } else { Vec::new() };
    let custom_ticks = ticks.len() >= 2;
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
        .x_labels(if custom_ticks { 0 } else { 8 })
        .y_labels(6)
        .x_label_formatter(&|v| if custom_ticks { String::new() } else { x_text(v) })
        .y_label_formatter(&|v| format!("{v:.decimals$}"))
        .x_desc(x_label)
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())?;
    if custom_ticks {
        for tick in &ticks {
            let x = tick.ln();
            chart
                .draw_series(std::iter::once(PathElement::new(vec![(x, y_min), (x, y_max)], RGBColor(225, 225, 225))))
                .map_err(|e| e.to_string())?;
            label_below(root, &chart, x, y_min, &plain_number(*tick))?;
        }
    }
    draw_markers!(chart, placed.iter().copied(), 0)?;
    if placed.len() <= MAX_POINT_LABELS {
        // Labels of points in the right half run leftwards, so that none is cut at the edge.
        let middle = (x_low + x_high) / 2.0;
        for (point, label) in placed.iter().zip(labels) {
            let (anchor, dx) = if point.0 > middle { (HPos::Right, -7) } else { (HPos::Left, 7) };
            let style = font(12.0).color(&RGBColor(60, 60, 60)).pos(Pos::new(anchor, VPos::Bottom));
            chart
                .draw_series(std::iter::once(EmptyElement::at(*point) + Text::new(label.clone(), (dx, -4), style)))
                .map_err(|e| e.to_string())?;
        }
    }
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
                    intervals: vec![],
                },
                Series {
                    name: "South & <co>".into(),
                    style: 1,
                    points: vec![(2018.0, 0.70), (2024.0, 0.71)],
                    slope: None,
                    intervals: vec![],
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
        let scatter = Figure::Scatter {
            points: vec![(10.0, 0.01), (30.0, 0.04), (50.0, 0.05)],
            labels: vec!["A–B".into(), "A–C".into(), "B–C".into()],
            fit: Some((-0.05, 0.025)),
            log_x: true,
            x_label: "km".into(),
            y_label: "FST/(1−FST)".into(),
        };
        for (name, figure) in [("ne", intervals), ("ibd", scatter)] {
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
                intervals: vec![(2018.0, 60.0, 400.0), (2024.0, 70.0, f64::INFINITY)],
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
