//! The portfolio's chart: every population's Ne with its 95 % interval on a log axis, one
//! row per population under its species' heading, with the thresholds as dashed lines.
//! Census-based values are drawn as open diamonds without an interval, so they are never
//! mistaken for genetic estimates. Written by hand as SVG (rows and headings vary in number,
//! which a fixed-size chart cannot hold); deterministic.

use std::fmt::Write;

use super::model::{NeBasis, PortfolioPopulation};
use crate::figures::log_bounds;

/// Chart width in SVG pixels (shown 16 cm wide).
const WIDTH: f64 = 720.0;
/// Left edge of the plotting area (labels to its left).
const PLOT_LEFT: f64 = 250.0;
/// Right edge of the plotting area.
const PLOT_RIGHT: f64 = 700.0;
/// Height of a population row and of a species heading.
const ROW: f64 = 18.0;
const HEADING: f64 = 24.0;
/// Space above the rows (threshold labels) and below (axis, key).
const TOP: f64 = 28.0;
const BOTTOM: f64 = 78.0;
/// The document's serif face (embedded in the binary).
const FONT: &str = "Libertinus Serif";
const GENETIC: &str = "#0b4f8a";
const CENSUS: &str = "#b35806";

/// The chart as SVG text, and how many populations it marks (those with an Ne value; the
/// others are written as words in their row).
pub fn ne_chart(populations: &[PortfolioPopulation], thresholds: &[f64]) -> (String, usize) {
    let values =
        populations.iter().flat_map(|p| [p.ne, p.ne_low, p.ne_high]).flatten().chain(thresholds.iter().copied());
    let (low, high) = log_bounds(values);
    let x = |v: f64| {
        PLOT_LEFT + (v.clamp(low, high).log10() - low.log10()) / (high.log10() - low.log10()) * (PLOT_RIGHT - PLOT_LEFT)
    };
    let species_count = count_species(populations);
    let rows_height = populations.len() as f64 * ROW + species_count as f64 * HEADING;
    let height = TOP + rows_height + BOTTOM;
    let bottom = TOP + rows_height;
    let mut svg = String::new();
    let _ = write!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height}" viewBox="0 0 {WIDTH} {height}" font-family="{FONT}">"#
    );
    let _ = write!(svg, r#"<rect width="{WIDTH}" height="{height}" fill="white"/>"#);
    // Decades on the axis, with light grid lines.
    let mut decade = low;
    while decade <= high * 1.0001 {
        let px = x(decade);
        let _ = write!(
            svg,
            r##"<line x1="{px:.1}" y1="{TOP}" x2="{px:.1}" y2="{bottom:.1}" stroke="#e4e4e4"/><line x1="{px:.1}" y1="{bottom:.1}" x2="{px:.1}" y2="{:.1}" stroke="black"/><text x="{px:.1}" y="{:.1}" font-size="13" text-anchor="middle">{}</text>"##,
            bottom + 5.0,
            bottom + 19.0,
            plain(decade)
        );
        decade *= 10.0;
    }
    let _ = write!(
        svg,
        r#"<line x1="{PLOT_LEFT}" y1="{bottom:.1}" x2="{PLOT_RIGHT}" y2="{bottom:.1}" stroke="black"/><text x="{:.1}" y="{:.1}" font-size="14" text-anchor="middle">Ne (log scale)</text>"#,
        (PLOT_LEFT + PLOT_RIGHT) / 2.0,
        bottom + 37.0
    );
    for threshold in thresholds {
        let px = x(*threshold);
        let _ = write!(
            svg,
            r##"<line x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{bottom:.1}" stroke="#6e6e6e" stroke-dasharray="6 4"/><text x="{px:.1}" y="{:.1}" font-size="13" text-anchor="middle" fill="#505050">Ne = {}</text>"##,
            TOP - 6.0,
            TOP - 10.0,
            plain(*threshold)
        );
    }
    let mut y = TOP;
    let mut marks = 0;
    let mut species: Option<&str> = None;
    for population in populations {
        if species != Some(population.species.as_str()) {
            species = Some(&population.species);
            let _ = write!(
                svg,
                r#"<text x="6" y="{:.1}" font-size="14" font-weight="bold">{}</text>"#,
                y + HEADING - 7.0,
                escape(&population.species)
            );
            y += HEADING;
        }
        let middle = y + ROW / 2.0;
        let label = match population.basis {
            NeBasis::Census => format!("{} (census)", population.population),
            _ => population.population.clone(),
        };
        let _ = write!(svg, r#"<text x="18" y="{:.1}" font-size="13">{}</text>"#, middle + 4.5, escape(&label));
        match (population.basis, population.ne) {
            (NeBasis::None, _) | (_, None) => {
                let _ = write!(
                    svg,
                    r##"<text x="{:.1}" y="{:.1}" font-size="12" fill="#505050" font-style="italic">no Ne</text>"##,
                    PLOT_LEFT + 6.0,
                    middle + 4.0
                );
            }
            (NeBasis::Genetic, Some(_)) if population.ne_low == Some(f64::INFINITY) => {
                let _ = write!(
                    svg,
                    r##"<text x="{:.1}" y="{:.1}" font-size="12" fill="#505050" font-style="italic">not estimable (interval ∞–∞)</text>"##,
                    PLOT_LEFT + 6.0,
                    middle + 4.0
                );
            }
            (NeBasis::Genetic, Some(ne)) => {
                marks += 1;
                if let (Some(lo), Some(hi)) = (population.ne_low, population.ne_high) {
                    let _ = write!(
                        svg,
                        r#"<line x1="{:.1}" y1="{middle:.1}" x2="{:.1}" y2="{middle:.1}" stroke="{GENETIC}" stroke-width="2"/>"#,
                        x(lo),
                        x(hi)
                    );
                    if hi == f64::INFINITY {
                        let _ = write!(
                            svg,
                            r#"<path d="M{:.1} {:.1} L{:.1} {middle:.1} L{:.1} {:.1} Z" fill="{GENETIC}"/>"#,
                            PLOT_RIGHT - 7.0,
                            middle - 4.5,
                            PLOT_RIGHT + 1.0,
                            PLOT_RIGHT - 7.0,
                            middle + 4.5
                        );
                    }
                }
                if ne.is_finite() {
                    let _ = write!(svg, r#"<circle cx="{:.1}" cy="{middle:.1}" r="4.5" fill="{GENETIC}"/>"#, x(ne));
                } else {
                    let _ = write!(
                        svg,
                        r#"<text x="{:.1}" y="{:.1}" font-size="15" text-anchor="end">∞</text>"#,
                        PLOT_RIGHT - 10.0,
                        middle + 5.0
                    );
                }
            }
            (NeBasis::Census, Some(ne)) => {
                marks += 1;
                let px = x(ne);
                let _ = write!(
                    svg,
                    r#"<path d="M{px:.1} {:.1} L{:.1} {middle:.1} L{px:.1} {:.1} L{:.1} {middle:.1} Z" fill="white" stroke="{CENSUS}" stroke-width="2"/>"#,
                    middle - 5.5,
                    px + 5.5,
                    middle + 5.5,
                    px - 5.5
                );
            }
        }
        y += ROW;
    }
    key(&mut svg, bottom + 50.0);
    svg.push_str("</svg>\n");
    (svg, marks)
}

/// The key under the axis: genetic estimate with interval, census-based value, threshold.
fn key(svg: &mut String, y: f64) {
    let _ = write!(
        svg,
        r##"<line x1="20" y1="{y:.1}" x2="56" y2="{y:.1}" stroke="{GENETIC}" stroke-width="2"/><circle cx="38" cy="{y:.1}" r="4.5" fill="{GENETIC}"/><text x="64" y="{:.1}" font-size="13">genetic estimate with 95 % interval (arrow: no finite upper bound)</text>"##,
        y + 4.5
    );
    let y2 = y + 18.0;
    let _ = write!(
        svg,
        r##"<path d="M38 {:.1} L43.5 {y2:.1} L38 {:.1} L32.5 {y2:.1} Z" fill="white" stroke="{CENSUS}" stroke-width="2"/><text x="64" y="{:.1}" font-size="13">census-based (census size × Ne/N ratio; no interval)</text><line x1="430" y1="{y2:.1}" x2="466" y2="{y2:.1}" stroke="#6e6e6e" stroke-dasharray="6 4"/><text x="474" y="{:.1}" font-size="13">threshold</text>"##,
        y2 - 5.5,
        y2 + 5.5,
        y2 + 4.5,
        y2 + 4.5
    );
}

fn count_species(populations: &[PortfolioPopulation]) -> usize {
    let mut count = 0;
    let mut last: Option<&str> = None;
    for p in populations {
        if last != Some(p.species.as_str()) {
            count += 1;
            last = Some(&p.species);
        }
    }
    count
}

fn plain(value: f64) -> String {
    if value >= 1.0 { format!("{value:.0}") } else { format!("{value}") }
}

/// Text for SVG character data.
pub(super) fn escape(text: &str) -> String {
    text.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn population(
        species: &str,
        name: &str,
        basis: NeBasis,
        ne: Option<f64>,
        interval: (f64, f64),
    ) -> PortfolioPopulation {
        PortfolioPopulation {
            species: species.into(),
            species_group: None,
            region: None,
            case: 0,
            population: name.into(),
            label: None,
            year: None,
            ne,
            ne_low: (basis == NeBasis::Genetic).then_some(interval.0),
            ne_high: (basis == NeBasis::Genetic).then_some(interval.1),
            ne_method: None,
            basis,
            category: String::new(),
            census_size: None,
            census_year: None,
            horizon_years: None,
            h_retained: None,
            h_retained_low: None,
            h_retained_high: None,
            latitude: None,
            longitude: None,
        }
    }

    /// Every population gets a row (marked or named as without Ne), under its species, and
    /// a larger Ne is drawn further right (a log axis keeps order).
    #[test]
    fn every_population_has_a_row_and_larger_ne_is_further_right() {
        let populations = vec![
            population("Newt & co", "North", NeBasis::Genetic, Some(30.0), (10.0, f64::INFINITY)),
            population("Newt & co", "South", NeBasis::Genetic, Some(450.0), (200.0, 900.0)),
            population("Mussel", "Ford", NeBasis::Census, Some(120.0), (0.0, 0.0)),
            population("Mussel", "Weir", NeBasis::None, None, (0.0, 0.0)),
        ];
        let (svg, marks) = ne_chart(&populations, &[50.0, 500.0]);
        assert_eq!(marks, 3);
        assert!(svg.contains("Newt &amp; co") && svg.contains(">Mussel<"));
        assert!(svg.contains("Ford (census)") && svg.contains("no Ne"));
        let circles: Vec<f64> =
            svg.split("<circle cx=\"").skip(1).map(|s| s.split('"').next().unwrap().parse().unwrap()).collect();
        // Two genetic points, then the key's marker.
        assert_eq!(circles.len(), 3);
        assert!(circles[0] < circles[1], "{circles:?}");
        assert!(svg.contains("Ne = 50") && svg.contains("Ne = 500"));
        assert_eq!(ne_chart(&populations, &[50.0, 500.0]).0, svg, "deterministic");
    }
}
