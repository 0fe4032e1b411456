//! Line charts over a numeric x axis: one series per population, with intervals and trends.

use super::key::{dash_pattern, draw_legend};
use super::*;

pub(super) fn draw_lines(
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

pub(super) fn configure_numeric<'a, 'b: 'a, Y>(
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

pub(super) fn draw_series_set<'a, 'b: 'a, Y>(
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

pub(super) fn mean_point(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    if points.is_empty() {
        return None;
    }
    let n = points.len() as f64;
    Some((points.iter().map(|p| p.0).sum::<f64>() / n, points.iter().map(|p| p.1).sum::<f64>() / n))
}
