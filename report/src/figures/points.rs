//! Point charts: estimates with intervals against thresholds, every animal of a group, and
//! a scatter with its fitted line.

use super::*;

pub(super) fn draw_intervals(
    root: &Area<'_>,
    points: &[IntervalPoint],
    thresholds: &[f64],
    y_label: &str,
) -> Result<(), String> {
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
    configure_categories(&mut chart, y_label, 10, &|v| plain_number(*v))?;
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

/// The mesh of a chart with one category per x position (labelled by the caller below the
/// axis): horizontal grid lines only, `y_labels` labels on the y axis.
fn configure_categories<'a, 'b: 'a, Y>(
    chart: &mut NumericChart<'a, 'b, Y>,
    y_label: &str,
    y_labels: usize,
    y_format: &dyn Fn(&f64) -> String,
) -> Result<(), String>
where
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    chart
        .configure_mesh()
        .disable_x_mesh()
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(225, 225, 225))
        .x_labels(0)
        .x_label_formatter(&|_| String::new())
        .y_labels(y_labels)
        .y_label_formatter(y_format)
        .y_desc(y_label)
        .label_style(font(15.0))
        .axis_desc_style(font(16.0))
        .draw()
        .map_err(|e| e.to_string())
}

pub(super) fn draw_strip(root: &Area<'_>, groups: &[StripGroup], y_label: &str) -> Result<(), String> {
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
    configure_categories(&mut chart, y_label, 6, &|v| format!("{v:.decimals$}"))?;
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
                .draw_series(std::iter::once(PathElement::new(
                    vec![(x - 0.35, mean), (x + 0.35, mean)],
                    colour(6).stroke_width(3),
                )))
                .map_err(|e| e.to_string())?;
        }
    }
    Ok(())
}

/// Round values 1, 2, 5 × 10ᵏ within [low, high], for the ticks of a logarithmic axis.
pub(super) fn round_log_ticks(low: f64, high: f64) -> Vec<f64> {
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
pub(super) const MAX_POINT_LABELS: usize = 15;

pub(super) fn draw_scatter(
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
