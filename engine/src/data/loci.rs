//! The optional locus sheet: `locus` plus any of `marker` (the marker type in words:
//! `microsatellite`, `SNP`), `motif` (the repeat motif of a microsatellite, e.g. `GATA`),
//! `chromosome` and `position` (base pairs). The document's data-quality table prints them
//! beside each locus; `chromosome` and `position` fill in those of a locus whose genotype file
//! does not give them (a wide table), so that `ne-ld` can leave out pairs on the same
//! chromosome and `inbreeding` can scan runs of homozygosity.

use std::collections::{BTreeMap, BTreeSet};

use popgauge_abi::{Finding, GenotypeMatrix, LocusMeta, Where};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use super::DataError;
use super::delimited::{decode, header_excerpt, split_records};
use super::limits::MAX_NAME_CHARS;
use crate::source::{Location, excerpt};

/// Columns the sheet understands besides `locus`.
pub const KNOWN_COLUMNS: [&str; 4] = ["marker", "motif", "chromosome", "position"];

/// One row of the locus sheet, as `results.json` records it.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LocusInfo {
    /// Locus name as in the genotype data.
    pub locus: String,
    /// Marker type in words (`microsatellite`, `SNP`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub marker: Option<String>,
    /// Repeat motif of a microsatellite (`GATA`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub motif: Option<String>,
    /// Chromosome or linkage group.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub chromosome: Option<String>,
    /// Position on the chromosome in base pairs.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub position: Option<u64>,
}

/// The sheet's rows (in file order) and the notes made reading it.
#[derive(Debug)]
pub struct LocusSheet {
    /// Rows in file order.
    pub loci: Vec<LocusInfo>,
    /// The file line of each row.
    pub lines: Vec<usize>,
    /// Notes (ignored columns).
    pub findings: Vec<Finding>,
}

/// Reads a locus sheet.
///
/// # Errors
/// A [`DataError`] for structural problems, a bad position, or a locus listed twice.
pub fn read_locus_sheet(bytes: &[u8], file: &str) -> Result<LocusSheet, DataError> {
    let text = decode(file, bytes)?;
    let table = split_records(file, &text)?;
    let column = |name: &str| table.header.iter().position(|h| h == name);
    let locus_column = column("locus").ok_or_else(|| DataError::MissingColumn {
        file: file.into(),
        column: "locus".into(),
        found: header_excerpt(&table.header),
        help: "name the column of locus names `locus`, spelt as in the genotype data".into(),
    })?;
    let findings = super::populations::ignored_columns(&table.header, file, "locus", &KNOWN_COLUMNS);
    let mut first_line: BTreeMap<String, usize> = BTreeMap::new();
    let mut loci = Vec::with_capacity(table.records.len());
    let mut lines = Vec::with_capacity(table.records.len());
    for (line, cells) in &table.records {
        let field = |name: &str| column(name).map(|i| cells[i].trim()).filter(|t| !t.is_empty());
        let locus = cells[locus_column].trim().to_string();
        if locus.is_empty() {
            return Err(DataError::BadField {
                at: Location::line(file, *line),
                column: "locus".into(),
                text: String::new(),
                problem: "the cell is empty".into(),
                help: "name the locus as in the genotype data".into(),
            });
        }
        let too_long = ["locus", "marker", "motif", "chromosome"]
            .into_iter()
            .map(|name| if name == "locus" { Some(locus.as_str()) } else { field(name) })
            .find_map(|text| text.filter(|t| t.chars().count() > MAX_NAME_CHARS));
        if let Some(text) = too_long {
            return Err(DataError::LongName {
                at: Location::line(file, *line),
                what: "locus sheet entry",
                text: excerpt(text),
            });
        }
        let position = match field("position") {
            None => None,
            Some(text) => Some(text.parse::<u64>().ok().filter(|p| *p > 0).ok_or_else(|| DataError::BadField {
                at: Location::line(file, *line),
                column: "position".into(),
                text: excerpt(text),
                problem: "not a whole number of base pairs from 1 up".into(),
                help: "write the position as a plain whole number (1-based, as in VCF), or leave the cell empty".into(),
            })?),
        };
        if let Some(first) = first_line.get(&locus) {
            return Err(DataError::BadField {
                at: Location::line(file, *line),
                column: "locus".into(),
                text: excerpt(&locus),
                problem: format!("the locus is listed twice (first on line {first})"),
                help: "keep one row per locus".into(),
            });
        }
        first_line.insert(locus.clone(), *line);
        lines.push(*line);
        loci.push(LocusInfo {
            locus,
            marker: field("marker").map(str::to_string),
            motif: field("motif").map(str::to_string),
            chromosome: field("chromosome").map(str::to_string),
            position,
        });
    }
    Ok(LocusSheet { loci, lines, findings })
}

/// Checks the sheet against the loci read and fills in the chromosomes the genotype file did
/// not give. A sheet locus absent from the data, or a data locus absent from the sheet, is a
/// warning; a chromosome that contradicts the genotype file's is an error.
///
/// # Errors
/// [`DataError::BadField`] naming the sheet line whose chromosome differs from the genotype
/// file's.
pub fn apply_locus_sheet(
    matrix: GenotypeMatrix,
    sheet: &LocusSheet,
    file: &str,
) -> Result<(GenotypeMatrix, Vec<Finding>), DataError> {
    let by_name: BTreeMap<&str, (usize, &LocusInfo)> =
        sheet.loci.iter().zip(&sheet.lines).map(|(l, line)| (l.locus.as_str(), (*line, l))).collect();
    let in_data: BTreeSet<&str> = matrix.loci().iter().map(|l| l.name.as_str()).collect();
    let mut findings = Vec::new();
    let unknown: Vec<&str> = sheet.loci.iter().map(|l| l.locus.as_str()).filter(|l| !in_data.contains(l)).collect();
    if !unknown.is_empty() {
        findings.push(Finding::warning(
            "unknown-locus",
            format!(
                "{file}: {} locus row(s) name no locus of the genotype data and are not used (check the spelling): {}",
                unknown.len(),
                listed(&unknown)
            ),
            Where { file: Some(file.into()), ..Where::default() },
        ));
    }
    let missing: Vec<&str> =
        matrix.loci().iter().map(|l| l.name.as_str()).filter(|l| !by_name.contains_key(l)).collect();
    if !missing.is_empty() {
        findings.push(Finding::warning(
            "locus-not-in-sheet",
            format!("{file}: {} locus/loci of the genotype data have no row in the locus sheet, so the document prints no marker type for them: {}", missing.len(), listed(&missing)),
            Where { file: Some(file.into()), ..Where::default() },
        ));
    }
    let mut changed = false;
    let mut loci: Vec<LocusMeta> = matrix.loci().to_vec();
    for meta in &mut loci {
        let Some((line, row)) = by_name.get(meta.name.as_str()) else { continue };
        if let Some(sheet_position) = row.position {
            match meta.position {
                None => {
                    meta.position = Some(sheet_position);
                    changed = true;
                }
                Some(read) if read != sheet_position => {
                    return Err(DataError::BadField {
                        at: Location::line(file, *line),
                        column: "position".into(),
                        text: sheet_position.to_string(),
                        problem: format!("locus {} is at position {read} in the genotype file", meta.name),
                        help: "correct the locus sheet, or leave its position cell empty to use the genotype file's".into(),
                    });
                }
                Some(_) => {}
            }
        }
        let Some(sheet_chromosome) = &row.chromosome else { continue };
        match &meta.chromosome {
            None => {
                meta.chromosome = Some(sheet_chromosome.clone());
                changed = true;
            }
            Some(read) if read != sheet_chromosome => {
                return Err(DataError::BadField {
                    at: Location::line(file, *line),
                    column: "chromosome".into(),
                    text: excerpt(sheet_chromosome),
                    problem: format!("locus {} is on chromosome \"{read}\" in the genotype file", meta.name),
                    help: "correct the locus sheet, or leave its chromosome cell empty to use the genotype file's"
                        .into(),
                });
            }
            Some(_) => {}
        }
    }
    if !changed {
        return Ok((matrix, findings));
    }
    let rebuilt = GenotypeMatrix::new(matrix.samples().to_vec(), loci, matrix.codes().to_vec())
        .map_err(|e| DataError::Csv { at: Location::file(file), message: format!("internal error: {e}") })?;
    Ok((rebuilt, findings))
}

fn listed(names: &[&str]) -> String {
    const SHOWN: usize = 20;
    let shown = names.iter().take(SHOWN).copied().collect::<Vec<_>>().join(", ");
    match names.len().saturating_sub(SHOWN) {
        0 => shown,
        more => format!("{shown} and {more} more"),
    }
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{AlleleCode, SampleMeta};

    use super::*;

    fn matrix(chromosomes: [Option<&str>; 2]) -> GenotypeMatrix {
        let samples = vec![SampleMeta { id: "s1".into(), population: "A".into(), year: 2020 }];
        let loci = ["L1", "L2"]
            .iter()
            .zip(chromosomes)
            .map(|(name, chromosome)| LocusMeta {
                name: (*name).into(),
                alleles: vec!["1".into()],
                chromosome: chromosome.map(String::from),
                position: None,
            })
            .collect();
        GenotypeMatrix::new(samples, loci, vec![AlleleCode(1); 4]).unwrap()
    }

    #[test]
    fn reads_rows_in_file_order_with_optional_columns() {
        let sheet = read_locus_sheet(
            b"locus,marker,motif,chromosome,position,notes\nL2,microsatellite,GATA,3,,x\nL1,SNP,,1,1200,\n",
            "loci.csv",
        )
        .unwrap();
        assert_eq!(sheet.loci.len(), 2);
        assert_eq!(sheet.loci[0].locus, "L2");
        assert_eq!(sheet.loci[0].motif.as_deref(), Some("GATA"));
        assert_eq!(sheet.loci[0].position, None);
        assert_eq!(sheet.loci[1].position, Some(1200));
        assert_eq!(sheet.findings.len(), 1, "the notes column is ignored with a note");
    }

    #[test]
    fn refuses_duplicates_bad_positions_and_a_missing_locus_column() {
        let err = read_locus_sheet(b"locus\nL1\nL1\n", "loci.csv").unwrap_err().to_string();
        assert!(err.starts_with("loci.csv:3: column `locus`"), "{err}");
        assert!(err.contains("listed twice (first on line 2)") && err.contains("help: "), "{err}");
        let err = read_locus_sheet(b"locus,position\nL1,12.5\n", "loci.csv").unwrap_err().to_string();
        assert!(err.starts_with("loci.csv:2: column `position` has \"12.5\""), "{err}");
        let err = read_locus_sheet(b"name\nL1\n", "loci.csv").unwrap_err().to_string();
        assert!(err.starts_with("loci.csv: required column `locus` not found"), "{err}");
    }

    #[test]
    fn fills_missing_chromosomes_and_reports_unmatched_rows() {
        let sheet = read_locus_sheet(b"locus,chromosome\nL1,4\nL9,2\n", "loci.csv").unwrap();
        let (m, findings) = apply_locus_sheet(matrix([None, None]), &sheet, "loci.csv").unwrap();
        assert_eq!(m.loci()[0].chromosome.as_deref(), Some("4"));
        assert_eq!(m.loci()[1].chromosome, None);
        let codes: Vec<&str> = findings.iter().map(|f| f.code.as_str()).collect();
        assert_eq!(codes, ["unknown-locus", "locus-not-in-sheet"]);
        assert!(findings[0].message.contains("L9") && findings[1].message.contains("L2"));
    }

    /// A wide table has no positions: the sheet's fill them in, so that runs of homozygosity
    /// can be scanned.
    #[test]
    fn fills_missing_positions() {
        let sheet = read_locus_sheet(b"locus,chromosome,position\nL1,1,1500\nL2,1,90000\n", "loci.csv").unwrap();
        let (m, _) = apply_locus_sheet(matrix([None, None]), &sheet, "loci.csv").unwrap();
        assert_eq!(m.loci()[0].position, Some(1500));
        assert_eq!(m.loci()[1].position, Some(90000));
    }

    #[test]
    fn a_chromosome_that_contradicts_the_genotype_file_is_refused_at_its_line() {
        let sheet = read_locus_sheet(b"locus,chromosome\nL1,chr1\nL2,chr9\n", "loci.csv").unwrap();
        let err = apply_locus_sheet(matrix([Some("chr1"), Some("chr2")]), &sheet, "loci.csv").unwrap_err().to_string();
        assert!(err.starts_with("loci.csv:3: column `chromosome` has \"chr9\""), "{err}");
        assert!(err.contains("\"chr2\""), "{err}");
    }
}
