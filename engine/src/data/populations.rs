//! The optional population sheet: `population` plus any of `label`, `census_size`,
//! `census_year`, `latitude`, `longitude` (decimal degrees, WGS84) and `area_km2`.

use std::collections::BTreeMap;

use popgauge_abi::{Finding, PopulationInfo, Where};

use super::DataError;
use super::delimited::{decode, header_excerpt, split_records};
use super::limits::MAX_NAME_CHARS;
use crate::source::{Location, excerpt};

/// Columns the sheet understands besides `population`.
pub const KNOWN_COLUMNS: [&str; 6] = ["label", "census_size", "census_year", "latitude", "longitude", "area_km2"];

/// The sheet's rows and the findings made reading it.
#[derive(Debug)]
pub struct PopulationSheet {
    /// Rows sorted by population.
    pub populations: Vec<PopulationInfo>,
    /// Notes (ignored columns).
    pub findings: Vec<Finding>,
}

/// Reads a population sheet.
///
/// # Errors
/// A [`DataError`] for structural problems, a non-numeric or out-of-range number, or a
/// population listed twice.
pub fn read_population_sheet(bytes: &[u8], file: &str) -> Result<PopulationSheet, DataError> {
    let text = decode(file, bytes)?;
    let table = split_records(file, text)?;
    let column = |name: &str| table.header.iter().position(|h| h == name);
    let population_column = column("population").ok_or_else(|| DataError::MissingColumn {
        file: file.into(),
        column: "population".into(),
        found: header_excerpt(&table.header),
        help: "name the column of population names `population`, spelt as in the genotype table".into(),
    })?;
    let findings = ignored_columns(&table.header, file, "population", &KNOWN_COLUMNS);
    let mut rows: BTreeMap<String, (usize, PopulationInfo)> = BTreeMap::new();
    for (line, cells) in &table.records {
        let field = |name: &str| column(name).map(|i| cells[i].as_str()).filter(|t| !t.is_empty());
        let number = |name: &str, min: f64, max: f64| parse_number(file, *line, name, field(name), min, max);
        let population = cells[population_column].clone();
        if population.is_empty() {
            return Err(DataError::BadField {
                at: Location::line(file, *line),
                column: "population".into(),
                text: String::new(),
                problem: "the cell is empty".into(),
                help: "name the population as in the genotype table".into(),
            });
        }
        let too_long = [("population name", Some(population.as_str())), ("population label", field("label"))]
            .into_iter()
            .find_map(|(what, text)| text.filter(|t| t.chars().count() > MAX_NAME_CHARS).map(|t| (what, t)));
        if let Some((what, text)) = too_long {
            return Err(DataError::LongName { at: Location::line(file, *line), what, text: excerpt(text) });
        }
        let info = PopulationInfo {
            population: population.clone(),
            label: field("label").map(str::to_string),
            census_size: number("census_size", 0.0, 1e12)?,
            census_year: number("census_year", 1700.0, 2200.0)?.map(|y| y as i32),
            latitude: number("latitude", -90.0, 90.0)?,
            longitude: number("longitude", -180.0, 180.0)?,
            area_km2: number("area_km2", 0.0, 1e9)?,
        };
        if let Some((first_line, _)) = rows.get(&population) {
            return Err(DataError::DuplicatePopulation {
                at: Location::line(file, *line),
                population,
                first_line: *first_line,
            });
        }
        rows.insert(population, (*line, info));
    }
    Ok(PopulationSheet { populations: rows.into_values().map(|(_, info)| info).collect(), findings })
}

/// An informational finding for each column of a sheet that popgauge does not read: not
/// `key` (the sheet's name column) and not in `known`.
pub(super) fn ignored_columns(header: &[String], file: &str, key: &str, known: &[&str]) -> Vec<Finding> {
    header
        .iter()
        .filter(|h| h.as_str() != key && !known.contains(&h.as_str()))
        .map(|h| {
            Finding::info(
                "ignored-column",
                format!("{file}: column `{h}` is not one popgauge reads ({key}, {}); it is ignored", known.join(", ")),
                Where { file: Some(file.into()), column: Some(h.clone()), ..Where::default() },
            )
        })
        .collect()
}

fn parse_number(
    file: &str,
    line: usize,
    column: &str,
    text: Option<&str>,
    min: f64,
    max: f64,
) -> Result<Option<f64>, DataError> {
    let Some(text) = text else { return Ok(None) };
    let bad = |problem: String| DataError::BadField {
        at: Location::line(file, line),
        column: column.into(),
        text: excerpt(text),
        problem,
        help: format!("write a plain number from {min} to {max} with a decimal point, or leave the cell empty"),
    };
    let value: f64 = text.parse().map_err(|_| bad("not a number".into()))?;
    if !(value.is_finite() && value >= min && value <= max) {
        return Err(bad(format!("outside {min}–{max}")));
    }
    if column == "census_year" && value.fract() != 0.0 {
        return Err(bad("not a whole year".into()));
    }
    Ok(Some(value))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_known_columns_sorted() {
        let sheet = read_population_sheet(
            b"population,census_size,latitude,notes\nNorth,400,61.5,x\nEast,,62.0,\n",
            "pops.csv",
        )
        .unwrap();
        let names: Vec<_> = sheet.populations.iter().map(|p| p.population.as_str()).collect();
        assert_eq!(names, vec!["East", "North"]);
        assert_eq!(sheet.populations[1].census_size, Some(400.0));
        assert_eq!(sheet.populations[0].census_size, None);
        assert_eq!(sheet.findings.len(), 1);
        assert_eq!(sheet.findings[0].code, "ignored-column");
    }

    #[test]
    fn refuses_bad_numbers_and_duplicates() {
        let err = read_population_sheet(b"population,latitude\nNorth,95\n", "pops.csv").unwrap_err();
        assert_eq!(err.to_string().lines().next().unwrap(), "pops.csv:2: column `latitude` has \"95\": outside -90–90");
        let err = read_population_sheet(b"population,census_size\nNorth,many\n", "pops.csv").unwrap_err();
        assert!(err.to_string().starts_with("pops.csv:2: column `census_size` has \"many\": not a number"));
        let err = read_population_sheet(b"population\nNorth\nNorth\n", "pops.csv").unwrap_err();
        assert!(err.to_string().starts_with("pops.csv:3: population \"North\" is listed twice"));
        let err = read_population_sheet(b"site\nNorth\n", "pops.csv").unwrap_err();
        assert!(err.to_string().starts_with("pops.csv: required column `population` not found"));
    }

    mod properties {
        use proptest::prelude::*;

        use super::*;

        /// A refusal names the sheet on its first line and has a help line (errors
        /// name the file and say how to fix them).
        fn clean(result: Result<PopulationSheet, DataError>) -> Result<(), TestCaseError> {
            if let Err(e) = result {
                let text = e.to_string();
                prop_assert!(text.lines().next().unwrap_or_default().contains("pops.csv"), "no file: {}", text);
                prop_assert!(text.contains("\n  help: "), "{}", text);
            }
            Ok(())
        }

        proptest! {
            /// Any bytes give a sheet or a clean error.
            #[test]
            fn any_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..300)) {
                clean(read_population_sheet(&bytes, "pops.csv"))?;
            }

            #[test]
            fn sheet_like_text(body in "[a-zA-Z0-9,;\t\r\n\" .e+-]{0,300}") {
                clean(read_population_sheet(format!("population,census_size,latitude\n{body}").as_bytes(), "pops.csv"))?;
            }
        }
    }
}
