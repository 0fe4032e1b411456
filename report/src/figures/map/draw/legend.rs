//! The legend, the scale bar, the north arrow and the caption.

use super::*;

/// Words of `text` in lines of at most `width` pixels.
fn wrap(text: &str, width: f64, size: f64) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        let candidate = if line.is_empty() { word.to_string() } else { format!("{line} {word}") };
        if !line.is_empty() && text_width(&candidate, size) > width {
            lines.push(std::mem::take(&mut line));
            line = word.to_string();
        } else {
            line = candidate;
        }
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

/// The legend right of the map (categories, groups, the grid cell); returns its bottom.
pub(super) fn legend(svg: &mut Svg, setting: &MapSetting, groups: &[String], cell: Option<&str>) -> f64 {
    let text_left = LEGEND_LEFT + 22.0;
    let text_width_max = WIDTH - 6.0 - text_left;
    let mut y = FRAME.top + 10.0;
    let heading = |svg: &mut Svg, y: &mut f64, text: &str| {
        for line in wrap(text, WIDTH - 6.0 - LEGEND_LEFT, LEGEND_SIZE) {
            svg.text((LEGEND_LEFT, *y), &line, TextStyle { bold: true, ..TextStyle::new(LEGEND_SIZE, Anchor::Start) });
            *y += LEGEND_SIZE * 1.3;
        }
        *y += 6.0;
    };
    let entry = |svg: &mut Svg, y: &mut f64, text: &str, shape: usize, fill: (u8, u8, u8)| {
        let lines = wrap(text, text_width_max, LEGEND_SIZE);
        draw_shape(svg, (LEGEND_LEFT + 9.0, *y), shape, fill);
        for (k, line) in lines.iter().enumerate() {
            svg.text((text_left, *y + k as f64 * LEGEND_SIZE * 1.2), line, TextStyle::new(LEGEND_SIZE, Anchor::Start));
        }
        *y += (lines.len().max(1) as f64 - 1.0) * LEGEND_SIZE * 1.2 + 21.0;
    };
    heading(svg, &mut y, &setting.categories_heading);
    for category in &setting.categories {
        entry(svg, &mut y, &category.legend, 0, fill_of(setting, &category.name));
    }
    if !groups.is_empty() {
        y += 8.0;
        heading(svg, &mut y, &setting.groups_heading);
        for (index, group) in groups.iter().enumerate() {
            entry(svg, &mut y, group, index, NEUTRAL[1]);
        }
    }
    if let Some(text) = cell {
        y += 8.0;
        svg.rect((LEGEND_LEFT + 1.0, y - 8.0), (16.0, 16.0), &hex(CELL), &hex(CELL_EDGE), 0.6);
        let lines = wrap(text, text_width_max, LEGEND_SIZE);
        for (k, line) in lines.iter().enumerate() {
            svg.text((text_left, y + k as f64 * LEGEND_SIZE * 1.2), line, TextStyle::new(LEGEND_SIZE, Anchor::Start));
        }
        y += (lines.len().max(1) as f64 - 1.0) * LEGEND_SIZE * 1.2 + 21.0;
    }
    y
}

/// A round length for the scale bar: the largest 1, 2 or 5 × 10ᵏ km at most `longest` km.
pub(in super::super) fn round_length(longest: f64) -> f64 {
    let decade = 10f64.powf(longest.log10().floor());
    [5.0, 2.0, 1.0].iter().map(|m| m * decade).find(|l| *l <= longest).unwrap_or(decade)
}

/// The scale bar (true at the centre of the projection) and a north arrow, under the legend
/// and level with the bottom of the map when there is room; returns their bottom.
pub(super) fn scale_and_north(svg: &mut Svg, view: &View, legend_bottom: f64) -> f64 {
    let bar_y = (FRAME.bottom - 14.0).max(legend_bottom + 64.0);
    let length = round_length(150.0 / view.scale);
    let bar = length * view.scale;
    let left = LEGEND_LEFT + 6.0;
    let black = hex((0, 0, 0));
    svg.rect((left, bar_y - 3.0), (bar / 2.0, 6.0), &black, &black, 0.8);
    svg.rect((left + bar / 2.0, bar_y - 3.0), (bar / 2.0, 6.0), "#FFFFFF", &black, 0.8);
    let style = TextStyle::new(LEGEND_SIZE, Anchor::Middle);
    svg.text((left, bar_y - 12.0), "0", style);
    svg.text((left + bar, bar_y - 12.0), &format!("{} km", kilometres(length)), style);
    // North at the centre of the projection is straight up.
    let north = (LEGEND_LEFT + 12.0, bar_y - 56.0);
    svg.polygon(
        &[
            (north.0, north.1 - 12.0),
            (north.0 + 6.0, north.1 + 6.0),
            (north.0, north.1 + 2.0),
            (north.0 - 6.0, north.1 + 6.0),
        ],
        &black,
        &black,
        0.8,
    );
    svg.text((north.0 + 14.0, north.1 - 3.0), "N", TextStyle::new(LEGEND_SIZE, Anchor::Start));
    bar_y + 4.0
}

/// The caption under the map: the projection and the generalisation; returns its bottom.
pub(super) fn caption(svg: &mut Svg, text: &MapText, top: f64) -> f64 {
    let mut y = top;
    for sentence in [&text.projection, &text.positions] {
        for line in wrap(sentence, WIDTH - 8.0 - FRAME.left, CAPTION_SIZE) {
            svg.text(
                (FRAME.left, y),
                &line,
                TextStyle { colour: (50, 50, 50), ..TextStyle::new(CAPTION_SIZE, Anchor::Start) },
            );
            y += CAPTION_SIZE * 1.35;
        }
    }
    y
}
