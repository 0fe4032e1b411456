//! Keys and legends: line patterns, the population legend and the entries for marks.

use super::*;

/// Dash and gap lengths of a population's line when lines are told apart by pattern
/// (`None`: solid).
pub(super) fn dash_pattern(style: usize) -> Option<(u32, u32)> {
    match style % 4 {
        0 => None,
        1 => Some((14, 6)),
        2 => Some((4, 4)),
        _ => Some((22, 5)),
    }
}

/// A line from `from` to `to` in the population's colour, solid or in its dash pattern.
pub(super) fn pattern_line(
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
pub(super) enum KeyEntry {
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
pub(super) fn draw_key(area: &Area<'_>, entries: &[KeyEntry], top: i32) -> Result<(), String> {
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
pub(super) fn draw_legend(area: &Area<'_>, series: &[Series], patterned: bool) -> Result<(), String> {
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
