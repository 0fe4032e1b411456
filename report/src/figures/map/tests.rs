//! Tests of the map: the projection against Snyder's worked example, the grid, and where the
//! SVG draws each point.

use super::*;

fn point(label: &str, latitude: f64, longitude: f64, category: &str) -> MapPoint {
    MapPoint { label: label.into(), latitude, longitude, category: category.into(), group: None }
}

fn bands() -> Vec<MapCategory> {
    let ranked = |name: &str| MapCategory { name: name.into(), legend: name.into(), ranked: true };
    vec![
        ranked("below 50"),
        ranked("50–500"),
        ranked("500 or more"),
        MapCategory { name: "no Ne".into(), legend: "no Ne".into(), ranked: false },
    ]
}

fn setting(positions: Positions) -> MapSetting {
    MapSetting::new(positions, bands())
}

/// The drawn place of every point, in order: the translation of each `site` group.
fn sites(svg: &str) -> Vec<(f64, f64)> {
    svg.split("<g class=\"site\" transform=\"translate(")
        .skip(1)
        .map(|rest| {
            let inside = &rest[..rest.find(')').unwrap()];
            let mut numbers = inside.split(' ').map(|n| n.parse::<f64>().unwrap());
            (numbers.next().unwrap(), numbers.next().unwrap())
        })
        .collect()
}

fn distance(a: (f64, f64), b: (f64, f64)) -> f64 {
    (a.0 - b.0).hypot(a.1 - b.1)
}

/// Snyder (1987), *Map Projections — A Working Manual*, USGS Professional Paper 1395,
/// Appendix A, numerical example of the Lambert azimuthal equal-area projection, sphere,
/// forward equations (24-2, 22-4, 22-5): R = 3.0 units, centre φ₁ = 40° N, λ₀ = 100° W,
/// point φ = 20° S, λ = 100° E gives k′ = 4.3912175, x = −4.2339303, y = 4.0257775 units
/// (printed to 7 decimals, hence the tolerance). His inverse example returns φ = −19.9999993°,
/// λ = 100.0000004° (rounding in his hand computation); ours returns the point to 1e−9°.
#[test]
fn the_projection_reproduces_snyders_numerical_example_for_the_sphere() {
    let projection = LambertAzimuthal::new(40.0, -100.0, 3.0);
    let (x, y) = projection.forward(-20.0, 100.0).unwrap();
    assert!((x - -4.2339303).abs() < 5e-8, "x = {x}");
    assert!((y - 4.0257775).abs() < 5e-8, "y = {y}");
    let (latitude, longitude) = projection.inverse(x, y).unwrap();
    assert!((latitude - -20.0).abs() < 1e-9 && (longitude - 100.0).abs() < 1e-9, "{latitude}, {longitude}");
    assert!(projection.forward(-40.0, 80.0).is_none(), "the antipode of the centre has no single image");
}

/// Distances from the centre: ρ = 2R sin(c/2) for angular distance c (Snyder 1987, equation
/// 24-1), here along the central meridian, so 1° north of the centre lies straight up.
#[test]
fn distances_from_the_centre_follow_the_azimuthal_radius() {
    let projection = LambertAzimuthal::new(62.0, 10.0, EARTH_RADIUS_KM);
    let (x, y) = projection.forward(63.0, 10.0).unwrap();
    let expected = 2.0 * EARTH_RADIUS_KM * (1f64.to_radians() / 2.0).sin();
    assert!(x.abs() < 1e-9 && (y - expected).abs() < 1e-9, "({x}, {y}) vs {expected}");
    assert_eq!(projection.forward(62.0, 10.0), Some((0.0, 0.0)));
}

/// The centre of the extent: the middle of the latitudes and of the shortest arc of
/// longitudes, in whole degrees (common practice for an azimuthal map of a region).
#[test]
fn the_centre_is_the_middle_of_the_extent_in_whole_degrees() {
    assert_eq!(extent_centre(&[(61.742, 9.618), (61.468, 10.853)]), (62.0, 10.0));
    assert_eq!(extent_centre(&[(-33.9, 18.4)]), (-34.0, 18.0));
    let across = extent_centre(&[(-17.0, 178.2), (-16.0, -179.4)]);
    assert_eq!(across.0, -17.0);
    assert_eq!(across.1.abs(), 179.0, "either side of 180° the centre stays near it, not at 0°");
    assert_eq!(extent_centre(&[(0.2, -0.3)]), (0.0, 0.0), "never −0");
}

/// A position moves to the centre of its cell; two positions in one cell coincide; cells are
/// aligned on the projection's centre (common practice for a generalising grid).
#[test]
fn grid_snapping_moves_a_position_to_its_cell_centre() {
    assert_eq!(snap_to_grid(12.3, -4.1, 10.0), (15.0, -5.0));
    assert_eq!(snap_to_grid(0.0, 0.0, 10.0), (5.0, 5.0));
    assert_eq!(snap_to_grid(11.0, 19.9, 10.0), snap_to_grid(18.7, 10.2, 10.0));
    assert_ne!(snap_to_grid(9.9, 5.0, 10.0), snap_to_grid(10.1, 5.0, 10.0));
    assert_eq!(snap_to_grid(-0.5, 2.4, 2.5), (-1.25, 1.25));
}

/// Further east is further right, further north is higher, and the drawn distances keep the
/// projected distances' ratios to within a pixel (the map has one scale in x and y).
#[test]
fn drawn_positions_follow_the_projected_coordinates() {
    let points = [
        point("Middle", 61.50, 10.20, "below 50"),
        point("East", 61.47, 10.85, "50–500"),
        point("North", 61.92, 10.25, "500 or more"),
    ];
    for positions in [Positions::Exact, Positions::Grid { cell_km: 5.0 }] {
        let figure = map_svg(&points, &setting(positions)).unwrap();
        let drawn = sites(&figure.svg);
        assert_eq!(drawn.len(), 3);
        assert!(drawn[1].0 > drawn[0].0, "east is right");
        assert!(drawn[2].1 < drawn[0].1, "north is up");
        let (latitude, longitude) =
            extent_centre(&points.iter().map(|p| (p.latitude, p.longitude)).collect::<Vec<_>>());
        let projection = LambertAzimuthal::new(latitude, longitude, EARTH_RADIUS_KM);
        let plane: Vec<(f64, f64)> = points
            .iter()
            .map(|p| {
                let (x, y) = projection.forward(p.latitude, p.longitude).unwrap();
                match positions {
                    Positions::Grid { cell_km } => snap_to_grid(x, y, cell_km),
                    Positions::Exact => (x, y),
                }
            })
            .collect();
        let scale = distance(drawn[0], drawn[1]) / distance(plane[0], plane[1]);
        let expected = distance(plane[0], plane[2]) * scale;
        assert!((distance(drawn[0], drawn[2]) - expected).abs() < 1.0, "{positions:?}");
        let expected = distance(plane[1], plane[2]) * scale;
        assert!((distance(drawn[1], drawn[2]) - expected).abs() < 1.0, "{positions:?}");
    }
}

/// On a grid the SVG holds no coordinate of a point, to any number of decimals beyond one
/// (graticule labels print at most one), and depends on the cells alone: moving every point
/// within its cell leaves the bytes unchanged, while exact positions move.
#[test]
fn a_grid_map_holds_no_exact_coordinate_and_depends_only_on_the_cells() {
    let points = [point("Brennmoor", 61.742, 9.618, "below 50"), point("Tarrow Glen", 61.921, 10.853, "50–500")];
    let grid = setting(Positions::Grid { cell_km: 10.0 });
    let svg = map_svg(&points, &grid).unwrap().svg;
    for value in ["61.742", "61.74", "9.618", "9.62", "61.921", "61.92", "10.853", "10.85"] {
        assert!(!svg.contains(value), "{value} appears in the SVG");
    }
    assert!(svg.contains("Positions generalised to a 10 km grid"));
    let projection = LambertAzimuthal::new(62.0, 10.0, EARTH_RADIUS_KM);
    let nudged: Vec<MapPoint> = points
        .iter()
        .map(|p| {
            let (x, y) = projection.forward(p.latitude, p.longitude).unwrap();
            let (cx, cy) = snap_to_grid(x, y, 10.0);
            // A position 1 km from the cell centre towards the original, in the same cell.
            let (nx, ny) = (cx + (x - cx).signum() * 1.0, cy + (y - cy).signum() * 1.0);
            let (latitude, longitude) = projection.inverse(nx, ny).unwrap();
            MapPoint { latitude, longitude, ..p.clone() }
        })
        .collect();
    assert_eq!(map_svg(&nudged, &grid).unwrap().svg, svg, "the grid map depends only on the cells");
    let exact = setting(Positions::Exact);
    assert_ne!(map_svg(&nudged, &exact).unwrap().svg, map_svg(&points, &exact).unwrap().svg);
    assert!(map_svg(&points, &exact).unwrap().svg.contains("Exact positions, as given (not generalised)."));
}

/// One point, or several in one cell, still give a map with a scale bar: the extent is at
/// least 20 km; points at one place keep their place and get their markers side by side.
#[test]
fn one_place_still_gives_a_map_with_a_scale() {
    let single =
        map_svg(&[point("Alone", 45.123, 7.456, "no Ne")], &setting(Positions::Grid { cell_km: 10.0 })).unwrap();
    assert!(single.svg.contains(" km</text>"), "a scale bar");
    assert_eq!(single.marks, 1);
    let same = [point("A", 45.123, 7.456, "below 50"), point("B", 45.124, 7.457, "50–500")];
    let figure = map_svg(&same, &setting(Positions::Grid { cell_km: 10.0 })).unwrap();
    let drawn = sites(&figure.svg);
    assert_eq!(drawn[0], drawn[1], "both are drawn at their common cell centre");
    assert_eq!(figure.svg.matches("<line ").count(), 2, "each marker is joined to the common place");
    assert!(figure.svg.contains(">A, B</text>"), "one label names both");
}

#[test]
fn maps_are_deterministic_escape_labels_and_name_the_document_face() {
    let points = [point("North & <co>", 61.5, 10.2, "below 50"), point("South", 61.1, 10.4, "no Ne")];
    let first = map_svg(&points, &setting(Positions::Exact)).unwrap();
    assert_eq!(first, map_svg(&points, &setting(Positions::Exact)).unwrap());
    assert!(first.svg.starts_with("<svg"));
    assert!(first.svg.contains("North &amp; &lt;co&gt;"));
    assert!(first.svg.contains("font-family=\"Libertinus Serif\""));
    assert!(first.text.projection.starts_with("Lambert azimuthal equal-area projection"));
    assert!(first.text.projection.contains("centred on 61° N, 10° E"), "{}", first.text.projection);
}

/// A portfolio's map: many populations of several groups across a continent. Groups get a
/// legend of their own; the caption says the scale bar holds at the centre only.
#[test]
fn a_continental_map_with_groups_draws_and_says_where_the_scale_holds() {
    let mut points = Vec::new();
    for (k, (latitude, longitude)) in
        [(37.1, -8.0), (40.4, -3.7), (48.9, 2.3), (52.5, 13.4), (59.3, 18.1), (69.6, 18.9), (41.9, 12.5), (50.1, 14.4)]
            .into_iter()
            .enumerate()
    {
        let mut p = point(&format!("P{k}"), latitude, longitude, ["below 50", "50–500", "500 or more", "no Ne"][k % 4]);
        p.group = Some(["Case one", "Case two", "Case three"][k % 3].into());
        points.push(p);
    }
    let setting = MapSetting { groups_heading: "Case".into(), ..setting(Positions::Grid { cell_km: 50.0 }) };
    let figure = map_svg(&points, &setting).unwrap();
    assert_eq!(sites(&figure.svg).len(), 8);
    assert!(figure.svg.contains(">Case</text>") && figure.svg.contains(">Case three</text>"));
    assert!(figure.text.projection.contains("The scale bar holds at the centre"));
    assert!(figure.text.positions.contains("50 km grid"));
}

#[test]
fn bad_points_and_settings_are_refused() {
    let good = point("A", 61.0, 10.0, "below 50");
    let message = |points: &[MapPoint], setting: &MapSetting| map_svg(points, setting).unwrap_err().to_string();
    assert_eq!(message(&[], &setting(Positions::Exact)), "figure map: no point to draw");
    assert_eq!(
        message(&[point("A", 61.0, 10.0, "huge")], &setting(Positions::Exact)),
        "figure map: \"A\": category \"huge\" is not in the setting"
    );
    assert!(
        message(&[point("A", 95.0, 10.0, "below 50")], &setting(Positions::Exact)).contains("not a WGS 84 position")
    );
    assert!(message(&[point("A", f64::NAN, 10.0, "below 50")], &setting(Positions::Exact)).contains("not a WGS 84"));
    assert!(message(&[good], &setting(Positions::Grid { cell_km: 0.0 })).contains("positive number of km"));
}

/// The scale bar's length is a round 1, 2 or 5 × 10ᵏ km (common practice).
#[test]
fn scale_bars_have_round_lengths() {
    assert_eq!(draw::round_length(9.7), 5.0);
    assert_eq!(draw::round_length(150.0), 100.0);
    assert_eq!(draw::round_length(2.4), 2.0);
    assert_eq!(draw::round_length(0.75), 0.5);
}
