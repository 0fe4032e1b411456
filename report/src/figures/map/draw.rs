//! Laying out and drawing the map: the frame and its scale, the graticule, the markers (side
//! by side where crowded), the labels, the legend, the scale bar, the north arrow and the
//! caption.

use super::svg::{Anchor, Svg, TextStyle, hex, px, text_width};
use super::{LambertAzimuthal, MIN_EXTENT_KM, MapPoint, MapSetting, MapText, Positions, degrees, kilometres};

mod graticule;
mod legend;

use graticule::graticule;
#[cfg(test)]
pub(super) use legend::round_length;
use legend::{caption, legend, scale_and_north};

/// Width of the whole figure in SVG pixels (shown 16 cm wide, like the other charts).
const WIDTH: f64 = 720.0;
/// The map's frame: left, top, right, bottom.
const FRAME: Frame = Frame { left: 64.0, top: 12.0, right: 500.0, bottom: 392.0 };
/// Room kept between the frame and the outermost marker, for markers and their labels.
const PAD: (f64, f64) = (56.0, 36.0);
/// Left edge of the legend.
const LEGEND_LEFT: f64 = 516.0;
/// Marker radius in pixels.
const MARK: f64 = 6.5;
/// Markers closer than this (centre to centre) are set side by side.
const CROWDED: f64 = 2.0 * MARK + 2.0;
/// Distance between markers set side by side.
const ROW_STEP: f64 = 2.0 * MARK + 3.0;
/// Text sizes: labels, legend, graticule, caption.
const LABEL_SIZE: f64 = 12.5;
const LEGEND_SIZE: f64 = 12.0;
const GRATICULE_SIZE: f64 = 10.5;
const CAPTION_SIZE: f64 = 12.0;
/// Marker outline.
const OUTLINE: (u8, u8, u8) = (40, 40, 40);
/// Darkest blue of the ranked categories (the document's heat colour) and the greys of the
/// unranked ones.
const DARK_BLUE: (u8, u8, u8) = (8, 48, 107);
const NEUTRAL: [(u8, u8, u8); 4] = [(255, 255, 255), (190, 190, 190), (125, 125, 125), (80, 80, 80)];
/// Fill and edge of a grid cell that holds a population.
const CELL: (u8, u8, u8) = (226, 232, 240);
const CELL_EDGE: (u8, u8, u8) = (182, 194, 210);
/// Graticule steps in degrees, finest first (at most one decimal, so labels stay short).
const STEPS: [f64; 9] = [0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 15.0, 30.0];

#[derive(Debug, Clone, Copy)]
struct Frame {
    left: f64,
    top: f64,
    right: f64,
    bottom: f64,
}

impl Frame {
    fn width(&self) -> f64 {
        self.right - self.left
    }

    fn height(&self) -> f64 {
        self.bottom - self.top
    }

    fn holds(&self, (x, y): (f64, f64)) -> bool {
        (self.left..=self.right).contains(&x) && (self.top..=self.bottom).contains(&y)
    }
}

/// What [`draw`] needs: the points, their shown positions in the projected plane (km), the
/// setting, the projection and the caption sentences.
pub(super) struct MapInput<'a> {
    pub points: &'a [MapPoint],
    pub plane: &'a [(f64, f64)],
    pub setting: &'a MapSetting,
    pub projection: &'a LambertAzimuthal,
    pub text: &'a MapText,
}

/// The plane (km) to the figure (pixels): a uniform scale, y up in the plane and down on the
/// page, the middle of the shown positions at the middle of the frame.
struct View {
    scale: f64,
    middle: (f64, f64),
}

impl View {
    fn fit(plane: &[(f64, f64)], min_extent: f64) -> View {
        let xs = plane.iter().map(|p| p.0);
        let ys = plane.iter().map(|p| p.1);
        let (x_low, x_high) = (xs.clone().fold(f64::INFINITY, f64::min), xs.fold(f64::NEG_INFINITY, f64::max));
        let (y_low, y_high) = (ys.clone().fold(f64::INFINITY, f64::min), ys.fold(f64::NEG_INFINITY, f64::max));
        let span_x = (x_high - x_low).max(min_extent);
        let span_y = (y_high - y_low).max(min_extent);
        let scale = ((FRAME.width() - 2.0 * PAD.0) / span_x).min((FRAME.height() - 2.0 * PAD.1) / span_y);
        View { scale, middle: ((x_low + x_high) / 2.0, (y_low + y_high) / 2.0) }
    }

    fn to_page(&self, (x, y): (f64, f64)) -> (f64, f64) {
        let centre = ((FRAME.left + FRAME.right) / 2.0, (FRAME.top + FRAME.bottom) / 2.0);
        (centre.0 + (x - self.middle.0) * self.scale, centre.1 - (y - self.middle.1) * self.scale)
    }

    fn to_plane(&self, (px, py): (f64, f64)) -> (f64, f64) {
        let centre = ((FRAME.left + FRAME.right) / 2.0, (FRAME.top + FRAME.bottom) / 2.0);
        (self.middle.0 + (px - centre.0) / self.scale, self.middle.1 - (py - centre.1) / self.scale)
    }
}

/// A grid cell that holds a population, on the page.
struct Cell {
    centre: (f64, f64),
    width: f64,
}

/// The cells of a generalised map that hold a population, each once, when a cell is wide
/// enough on the page to be seen (8 pixels); none on a map of exact positions.
fn occupied_cells(input: &MapInput<'_>, view: &View) -> Vec<Cell> {
    let Positions::Grid { cell_km } = input.setting.positions else { return Vec::new() };
    let width = cell_km * view.scale;
    if width < 8.0 {
        return Vec::new();
    }
    let mut cells: Vec<Cell> = Vec::new();
    for centre in input.plane.iter().map(|p| view.to_page(*p)) {
        if !cells.iter().any(|c| (c.centre.0 - centre.0).hypot(c.centre.1 - centre.1) < 0.01) {
            cells.push(Cell { centre, width });
        }
    }
    cells
}

/// The largest distance in km between two positions of the projected plane (0 for one).
pub(super) fn span_km(plane: &[(f64, f64)]) -> f64 {
    let mut largest: f64 = 0.0;
    for (index, a) in plane.iter().enumerate() {
        for b in &plane[index + 1..] {
            largest = largest.max((a.0 - b.0).hypot(a.1 - b.1));
        }
    }
    largest
}

/// Draws the whole figure and returns the SVG text.
pub(super) fn draw(input: &MapInput<'_>) -> String {
    let min_extent = match input.setting.positions {
        Positions::Grid { cell_km } => MIN_EXTENT_KM.max(2.0 * cell_km),
        Positions::Exact => MIN_EXTENT_KM,
    };
    let view = View::fit(input.plane, min_extent);
    let cells = occupied_cells(input, &view);
    let mut svg = Svg::new();
    svg.rect((FRAME.left, FRAME.top), (FRAME.width(), FRAME.height()), "#F7F7F4", "none", 0.0);
    graticule(&mut svg, &view, input.projection, &cells);
    svg.rect((FRAME.left, FRAME.top), (FRAME.width(), FRAME.height()), "none", "#8C8C8C", 0.8);
    let placed: Vec<(f64, f64)> = input.plane.iter().map(|p| view.to_page(*p)).collect();
    let clusters = crowd(&placed);
    let markers = marker_places(&placed, &clusters);
    let groups = groups_of(input.points);
    for (index, point) in input.points.iter().enumerate() {
        site(
            &mut svg,
            placed[index],
            markers[index],
            fill_of(input.setting, &point.category),
            shape_of(&groups, point),
        );
    }
    if input.setting.labels {
        labels(&mut svg, input.points, &clusters, &markers);
    }
    let cell_legend = match input.setting.positions {
        Positions::Grid { cell_km } if !cells.is_empty() => {
            Some(format!("the grid cell ({} km) that holds it", kilometres(cell_km)))
        }
        _ => None,
    };
    let legend_bottom = legend(&mut svg, input.setting, &groups, cell_legend.as_deref());
    let tools_bottom = scale_and_north(&mut svg, &view, legend_bottom);
    let caption_top = FRAME.bottom.max(tools_bottom) + 34.0;
    let caption_bottom = caption(&mut svg, input.text, caption_top);
    svg.finish(WIDTH, caption_bottom + 10.0)
}

// ---------------------------------------------------------------------------------------
// Markers

/// Groups of points whose markers would overlap (single linkage), each sorted, in order of
/// their first point.
fn crowd(placed: &[(f64, f64)]) -> Vec<Vec<usize>> {
    let mut cluster: Vec<usize> = (0..placed.len()).collect();
    fn root(cluster: &mut [usize], mut i: usize) -> usize {
        while cluster[i] != i {
            cluster[i] = cluster[cluster[i]];
            i = cluster[i];
        }
        i
    }
    for a in 0..placed.len() {
        for b in a + 1..placed.len() {
            let distance = (placed[a].0 - placed[b].0).hypot(placed[a].1 - placed[b].1);
            if distance < CROWDED {
                let (ra, rb) = (root(&mut cluster, a), root(&mut cluster, b));
                cluster[ra.max(rb)] = ra.min(rb);
            }
        }
    }
    let mut clusters: Vec<Vec<usize>> = Vec::new();
    let mut index_of = vec![usize::MAX; placed.len()];
    for i in 0..placed.len() {
        let r = root(&mut cluster, i);
        if index_of[r] == usize::MAX {
            index_of[r] = clusters.len();
            clusters.push(Vec::new());
        }
        clusters[index_of[r]].push(i);
    }
    clusters
}

/// Where each point's marker is drawn: at its place, or in a row above or below its crowd,
/// the nearest row inside the frame that covers no other marker.
fn marker_places(placed: &[(f64, f64)], clusters: &[Vec<usize>]) -> Vec<(f64, f64)> {
    let mut markers = placed.to_vec();
    let mut taken: Vec<(f64, f64)> = clusters.iter().filter(|m| m.len() == 1).map(|m| placed[m[0]]).collect();
    for members in clusters.iter().filter(|m| m.len() > 1) {
        let count = members.len() as f64;
        let middle = members.iter().map(|&i| placed[i].0).sum::<f64>() / count;
        let top = members.iter().map(|&i| placed[i].1).fold(f64::INFINITY, f64::min);
        let bottom = members.iter().map(|&i| placed[i].1).fold(f64::NEG_INFINITY, f64::max);
        let row_at = |y: f64| -> Vec<(f64, f64)> {
            (0..members.len()).map(|k| (middle + (k as f64 - (count - 1.0) / 2.0) * ROW_STEP, y)).collect()
        };
        let inside = |m: &(f64, f64)| {
            m.0 > FRAME.left + MARK && m.0 < FRAME.right - MARK && m.1 > FRAME.top + MARK && m.1 < FRAME.bottom - MARK
        };
        let clear = |row: &Vec<(f64, f64)>| {
            row.iter().all(|m| inside(m) && taken.iter().all(|t| (m.0 - t.0).hypot(m.1 - t.1) >= CROWDED))
        };
        let rows = [top - 20.0, bottom + 20.0, top - 36.0, bottom + 36.0, top - 52.0, bottom + 52.0].map(row_at);
        let row = rows
            .iter()
            .find(|r| clear(r))
            .or_else(|| rows.iter().find(|r| r.iter().all(inside)))
            .unwrap_or(&rows[0])
            .clone();
        for (&i, marker) in members.iter().zip(&row) {
            markers[i] = *marker;
        }
        taken.extend(row);
    }
    markers
}

/// One point: a group at its shown place holding (when crowded) a dot there and a thin line
/// to its marker, then the marker.
fn site(svg: &mut Svg, place: (f64, f64), marker: (f64, f64), fill: (u8, u8, u8), shape: usize) {
    svg.raw(&format!("<g class=\"site\" transform=\"translate({} {})\">", px(place.0), px(place.1)));
    let offset = (marker.0 - place.0, marker.1 - place.1);
    if offset.0.hypot(offset.1) > 0.05 {
        svg.line((0.0, 0.0), offset, &hex(OUTLINE), 0.8);
        svg.circle((0.0, 0.0), 2.2, &hex(OUTLINE), "none", 0.0);
    }
    draw_shape(svg, offset, shape, fill);
    svg.raw("</g>");
}

/// A marker: 0 circle, 1 square, 2 triangle, 3 diamond, 4 inverted triangle (then again).
fn draw_shape(svg: &mut Svg, (x, y): (f64, f64), shape: usize, fill: (u8, u8, u8)) {
    let (fill, stroke) = (hex(fill), hex(OUTLINE));
    let m = MARK;
    match shape % 5 {
        0 => svg.circle((x, y), m, &fill, &stroke, 1.0),
        1 => svg.rect((x - m * 0.9, y - m * 0.9), (m * 1.8, m * 1.8), &fill, &stroke, 1.0),
        2 => svg.polygon(&[(x, y - m * 1.15), (x + m, y + m * 0.7), (x - m, y + m * 0.7)], &fill, &stroke, 1.0),
        3 => svg.polygon(
            &[(x, y - m * 1.15), (x + m * 1.15, y), (x, y + m * 1.15), (x - m * 1.15, y)],
            &fill,
            &stroke,
            1.0,
        ),
        _ => svg.polygon(&[(x, y + m * 1.15), (x + m, y - m * 0.7), (x - m, y - m * 0.7)], &fill, &stroke, 1.0),
    }
}

/// The fill of a category: ranked ones from light to dark blue in order, others white and
/// greys in order.
fn fill_of(setting: &MapSetting, category: &str) -> (u8, u8, u8) {
    let ranked: Vec<&str> = setting.categories.iter().filter(|c| c.ranked).map(|c| c.name.as_str()).collect();
    let unranked: Vec<&str> = setting.categories.iter().filter(|c| !c.ranked).map(|c| c.name.as_str()).collect();
    if let Some(rank) = ranked.iter().position(|c| *c == category) {
        let share = if ranked.len() == 1 { 0.65 } else { 0.3 + 0.7 * rank as f64 / (ranked.len() - 1) as f64 };
        let mix = |dark: u8| (255.0 - (255.0 - f64::from(dark)) * share).round() as u8;
        return (mix(DARK_BLUE.0), mix(DARK_BLUE.1), mix(DARK_BLUE.2));
    }
    let rank = unranked.iter().position(|c| *c == category).unwrap_or(0);
    NEUTRAL[rank % NEUTRAL.len()]
}

/// The groups in order of first appearance.
fn groups_of(points: &[MapPoint]) -> Vec<String> {
    let mut groups: Vec<String> = Vec::new();
    for group in points.iter().filter_map(|p| p.group.as_ref()) {
        if !groups.contains(group) {
            groups.push(group.clone());
        }
    }
    groups
}

fn shape_of(groups: &[String], point: &MapPoint) -> usize {
    point.group.as_ref().and_then(|g| groups.iter().position(|x| x == g)).unwrap_or(0)
}

// ---------------------------------------------------------------------------------------
// Labels

/// A box on the page: left, top, right, bottom.
type Area = (f64, f64, f64, f64);

fn overlaps(a: Area, b: Area) -> bool {
    a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
}

/// One label per crowd (the names in marker order), beside its markers: right, left, above or
/// below, the first place inside the frame that covers no other label or marker.
fn labels(svg: &mut Svg, points: &[MapPoint], clusters: &[Vec<usize>], markers: &[(f64, f64)]) {
    let marker_area = |p: (f64, f64)| (p.0 - MARK, p.1 - MARK, p.0 + MARK, p.1 + MARK);
    let mut taken: Vec<Area> = markers.iter().map(|m| marker_area(*m)).collect();
    for members in clusters {
        let text = members.iter().map(|&i| points[i].label.as_str()).collect::<Vec<_>>().join(", ");
        let areas: Vec<Area> = members.iter().map(|&i| marker_area(markers[i])).collect();
        let around = areas.iter().fold((f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY), |a, b| {
            (a.0.min(b.0), a.1.min(b.1), a.2.max(b.2), a.3.max(b.3))
        });
        let (width, height) = (text_width(&text, LABEL_SIZE), LABEL_SIZE);
        let middle = ((around.0 + around.2) / 2.0, (around.1 + around.3) / 2.0);
        let shifted = (middle.0 - width / 2.0).min(FRAME.right - 2.0 - width).max(FRAME.left + 2.0);
        let candidates = [
            ((around.2 + 4.0, middle.1), Anchor::Start, (around.2 + 4.0, middle.1 - height / 2.0)),
            ((around.0 - 4.0, middle.1), Anchor::End, (around.0 - 4.0 - width, middle.1 - height / 2.0)),
            (
                (middle.0, around.1 - 4.0 - height / 2.0),
                Anchor::Middle,
                (middle.0 - width / 2.0, around.1 - 4.0 - height),
            ),
            ((middle.0, around.3 + 4.0 + height / 2.0), Anchor::Middle, (middle.0 - width / 2.0, around.3 + 4.0)),
            // A long label (a crowd's names) below or above, moved sideways to stay in the frame.
            ((shifted, around.3 + 4.0 + height / 2.0), Anchor::Start, (shifted, around.3 + 4.0)),
            ((shifted, around.1 - 4.0 - height / 2.0), Anchor::Start, (shifted, around.1 - 4.0 - height)),
        ];
        let area_of = |corner: (f64, f64)| (corner.0, corner.1, corner.0 + width, corner.1 + height);
        let inside = |a: Area| {
            a.0 >= FRAME.left + 2.0 && a.2 <= FRAME.right - 2.0 && a.1 >= FRAME.top + 2.0 && a.3 <= FRAME.bottom - 2.0
        };
        let own = |a: Area| areas.contains(&a);
        let free = |a: Area| taken.iter().all(|t| own(*t) || !overlaps(a, *t));
        let chosen = candidates
            .iter()
            .find(|c| inside(area_of(c.2)) && free(area_of(c.2)))
            .or_else(|| candidates.iter().find(|c| inside(area_of(c.2))))
            .unwrap_or(&candidates[4]);
        svg.text(chosen.0, &text, TextStyle { halo: true, ..TextStyle::new(LABEL_SIZE, chosen.1) });
        taken.push(area_of(chosen.2));
    }
}
