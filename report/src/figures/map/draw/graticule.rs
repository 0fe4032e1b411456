//! The graticule: parallels and meridians at a round step, and the grid cells that hold a
//! population, clipped to the frame and labelled outside it.

use super::*;

/// The grid cells that hold a population (on a generalised map), then parallels and
/// meridians at a round step, all clipped to the frame; the graticule is labelled outside it.
pub(super) fn graticule(svg: &mut Svg, view: &View, projection: &LambertAzimuthal, cells: &[Cell]) {
    svg.raw(&format!(
        "<clipPath id=\"map-frame\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>",
        px(FRAME.left),
        px(FRAME.top),
        px(FRAME.width()),
        px(FRAME.height())
    ));
    svg.raw("<g clip-path=\"url(#map-frame)\">");
    for cell in cells {
        let half = cell.width / 2.0;
        svg.rect(
            (cell.centre.0 - half, cell.centre.1 - half),
            (cell.width, cell.width),
            &hex(CELL),
            &hex(CELL_EDGE),
            0.6,
        );
    }
    let Some(range) = frame_range(view, projection) else {
        svg.raw("</g>");
        return;
    };
    let step = STEPS
        .iter()
        .copied()
        .find(|s| (range.lat_high - range.lat_low) / s <= 5.0 && (range.dlon_high - range.dlon_low) / s <= 8.0)
        .unwrap_or(30.0);
    let decimals = if step < 1.0 { 1 } else { 0 };
    let grey = "#D2D2CC";
    let mut parallel_labels = Vec::new();
    for latitude in multiples(range.lat_low, range.lat_high, step).into_iter().filter(|l| l.abs() < 90.0) {
        let line: Vec<(f64, f64)> = (0..=64)
            .map(|i| range.dlon_low + (range.dlon_high - range.dlon_low) * f64::from(i) / 64.0)
            .filter_map(|dlon| projection.forward(latitude, projection.centre_longitude + dlon))
            .map(|p| view.to_page(p))
            .collect();
        svg.polyline(&line, grey, 0.8);
        if let Some(y) = crossing(&line, |p| p.0 - FRAME.left).map(|p| p.1) {
            parallel_labels.push((y, degrees(latitude, decimals, ('N', 'S'))));
        }
    }
    let mut meridian_labels = Vec::new();
    let lon_low = projection.centre_longitude + range.dlon_low;
    let lon_high = projection.centre_longitude + range.dlon_high;
    for longitude in multiples(lon_low, lon_high, step) {
        let line: Vec<(f64, f64)> = (0..=64)
            .map(|i| range.lat_low + (range.lat_high - range.lat_low) * f64::from(i) / 64.0)
            .filter_map(|lat| projection.forward(lat, longitude))
            .map(|p| view.to_page(p))
            .collect();
        svg.polyline(&line, grey, 0.8);
        if let Some(x) = crossing(&line, |p| p.1 - FRAME.bottom).map(|p| p.0) {
            meridian_labels.push((x, degrees(super::super::wrap_longitude(longitude), decimals, ('E', 'W'))));
        }
    }
    svg.raw("</g>");
    let style = |anchor| TextStyle { colour: (95, 95, 95), ..TextStyle::new(GRATICULE_SIZE, anchor) };
    for (y, text) in parallel_labels.into_iter().filter(|(y, _)| *y > FRAME.top + 8.0 && *y < FRAME.bottom - 12.0) {
        svg.text((FRAME.left - 4.0, y), &text, style(Anchor::End));
    }
    let mut last_right = f64::NEG_INFINITY;
    for (x, text) in meridian_labels {
        let half = text_width(&text, GRATICULE_SIZE) / 2.0;
        if x - half > last_right + 4.0 && x > FRAME.left && x < FRAME.right {
            svg.text((x, FRAME.bottom + 12.0), &text, style(Anchor::Middle));
            last_right = x + half;
        }
    }
}

/// Latitudes and longitudes (relative to the centre's) the frame shows.
struct FrameRange {
    lat_low: f64,
    lat_high: f64,
    dlon_low: f64,
    dlon_high: f64,
}

fn frame_range(view: &View, projection: &LambertAzimuthal) -> Option<FrameRange> {
    let mut border = Vec::new();
    for i in 0..=24 {
        let t = f64::from(i) / 24.0;
        border.push((FRAME.left + t * FRAME.width(), FRAME.top));
        border.push((FRAME.left + t * FRAME.width(), FRAME.bottom));
        border.push((FRAME.left, FRAME.top + t * FRAME.height()));
        border.push((FRAME.right, FRAME.top + t * FRAME.height()));
    }
    let positions: Vec<(f64, f64)> = border
        .into_iter()
        .filter_map(|p| {
            let (x, y) = view.to_plane(p);
            projection.inverse(x, y)
        })
        .collect();
    if positions.is_empty() {
        return None;
    }
    let relative = |lon: f64| super::super::wrap_longitude(lon - projection.centre_longitude);
    let mut range = FrameRange {
        lat_low: positions.iter().map(|p| p.0).fold(f64::INFINITY, f64::min),
        lat_high: positions.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max),
        dlon_low: positions.iter().map(|p| relative(p.1)).fold(f64::INFINITY, f64::min),
        dlon_high: positions.iter().map(|p| relative(p.1)).fold(f64::NEG_INFINITY, f64::max),
    };
    // A pole inside the frame: every meridian meets it.
    for pole in [90.0, -90.0] {
        if let Some(p) = projection.forward(pole, projection.centre_longitude)
            && FRAME.holds(view.to_page(p))
        {
            (range.dlon_low, range.dlon_high) = (-180.0, 180.0);
            if pole > 0.0 {
                range.lat_high = 90.0;
            } else {
                range.lat_low = -90.0;
            }
        }
    }
    Some(range)
}

/// Multiples of `step` from `low` to `high`.
fn multiples(low: f64, high: f64, step: f64) -> Vec<f64> {
    let first = (low / step).ceil() as i64;
    let last = (high / step).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// Where a polyline first crosses the line `distance(p) = 0`, by linear interpolation.
fn crossing(line: &[(f64, f64)], distance: impl Fn((f64, f64)) -> f64) -> Option<(f64, f64)> {
    line.windows(2).find_map(|pair| {
        let (a, b) = (distance(pair[0]), distance(pair[1]));
        if a == b || a * b > 0.0 {
            return None;
        }
        let t = a / (a - b);
        Some((pair[0].0 + t * (pair[1].0 - pair[0].0), pair[0].1 + t * (pair[1].1 - pair[0].1)))
    })
}
