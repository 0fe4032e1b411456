//! The map of the populations: drawn only when the recipe asks (`[report.map] show = true`),
//! generalised to a grid unless exact positions are asked for, with the document's closing
//! caution following the setting.

use crate::report::{pdf_text, squeezed};
use crate::support::Case;

/// The demo case with `table` appended to its recipe, run into `out`: the PDF's text.
fn run_with(case: &Case, table: &str) -> String {
    let recipe = case.read("case.toml");
    case.write("case.toml", format!("{recipe}\n{table}"));
    let run = case.run(&["run", "case", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    squeezed(&pdf_text(&case.root().join("out/assessment.pdf")))
}

/// The exact coordinates of the demo's population sheet, as written there.
fn demo_coordinates(case: &Case) -> Vec<String> {
    let sheet = case.read("populations.csv");
    sheet
        .lines()
        .skip(1)
        .flat_map(|line| line.split(',').skip(4).take(2).map(str::to_string).collect::<Vec<_>>())
        .collect()
}

#[test]
fn a_map_generalised_to_a_grid_is_drawn_when_the_recipe_asks() {
    let case = Case::demo();
    let text = run_with(&case, "[report.map]\nshow = true\n");
    let svg = std::fs::read_to_string(case.root().join("out/figures/map.svg")).expect("figures/map.svg is written");
    assert!(svg.contains("Positions generalised to a 10 km grid"));
    let coordinates = demo_coordinates(&case);
    assert_eq!(coordinates.len(), 8, "four populations with latitude and longitude");
    let data = std::fs::read_to_string(case.root().join("out/assessment.json")).unwrap();
    for value in &coordinates {
        assert!(!svg.contains(value.as_str()), "map.svg holds the coordinate {value}");
        assert!(!data.contains(value.as_str()), "assessment.json holds the coordinate {value}");
    }
    for expected in [
        "Wherethepopulationsare",
        "Positionsgeneralisedtoa10kmgrid:eachpopulationisdrawnatthecentreofitsgridcell.",
        "onaLambertazimuthalequal-areaprojection",
        "printsnoexactcoordinates:itsmapshowspositionsgeneralisedtoa10kmgrid.",
    ] {
        assert!(text.contains(expected), "the PDF lacks \"{expected}\"");
    }
    assert!(!text.contains("Notonthemap"), "every demo population has coordinates");
}

#[test]
fn without_the_setting_there_is_no_map_and_the_caution_is_unchanged() {
    let case = Case::demo();
    let text = run_with(&case, "");
    assert!(!case.root().join("out/figures/map.svg").exists());
    assert!(!text.contains("Wherethepopulationsare"));
    assert!(text.contains(&squeezed(
        "This document names sites by the labels of the population sheet and prints no coordinates. Before it is \
         shared, generalise or withhold the locations of populations at risk from collection or disturbance."
    )));
    let data = std::fs::read_to_string(case.root().join("out/assessment.json")).unwrap();
    assert!(!data.contains("\"map\""), "the document data have no map member");
}

#[test]
fn exact_positions_make_the_document_sensitive() {
    let case = Case::demo();
    let text = run_with(&case, "[report.map]\nshow = true\npositions = \"exact\"\n");
    let svg = std::fs::read_to_string(case.root().join("out/figures/map.svg")).unwrap();
    assert!(svg.contains("Exact positions, as given (not generalised)."));
    assert!(text.contains(&squeezed(
        "This document shows the exact positions of the populations on its map and must be handled as sensitive"
    )));
    assert!(!text.contains("generalisedtoa"));
}

/// A population without coordinates is named under the map, not dropped silently; the grid
/// size is the recipe's.
#[test]
fn populations_without_coordinates_are_named_under_the_map() {
    let case = Case::demo();
    let sheet = case.read("populations.csv").replace(",61.921,10.853,", ",,,");
    case.write("populations.csv", sheet);
    let text = run_with(&case, "[report.map]\nshow = true\ngrid_km = 25\n");
    assert!(text.contains("Notonthemap,forwantofcoordinatesinthepopulationsheet:TarrowGlen."), "not named");
    assert!(text.contains("Positionsgeneralisedtoa25kmgrid"));
    let data: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(case.root().join("out/assessment.json")).unwrap()).unwrap();
    assert_eq!(data["figures"]["map"]["marks"], 3, "three populations are drawn");
}
