//! The sample sheet of a VCF file: `sample`, `population`, `year` (other columns are ignored).

use std::collections::HashMap;

use popgauge_abi::SampleMeta;

use super::DataError;
use super::delimited::{decode, split_records};
use super::wide_table::sample_meta;
use crate::source::Location;

/// The sheet's samples by id, with the line each came from.
#[derive(Debug)]
pub struct SampleSheet {
    /// Samples in sheet order.
    pub samples: Vec<SampleMeta>,
    /// Index into `samples` by sample id.
    pub index: HashMap<String, usize>,
}

/// Reads a sample sheet.
///
/// # Errors
/// A [`DataError`] for structural problems, a missing column, an empty cell, a bad year or a
/// sample listed twice.
pub fn read_sample_sheet(bytes: &[u8], file: &str) -> Result<SampleSheet, DataError> {
    let text = decode(file, bytes)?;
    let table = split_records(file, text)?;
    let column = |name: &str| {
        table.header.iter().position(|h| h == name).ok_or_else(|| DataError::MissingColumn {
            file: file.into(),
            column: name.into(),
            found: table.header.join(", "),
            help: format!("the sample sheet of a VCF file needs the columns sample, population and year; add `{name}` or fix the header row"),
        })
    };
    let columns = [column("sample")?, column("population")?, column("year")?];
    if table.records.is_empty() {
        return Err(DataError::NoSamples { file: file.into() });
    }
    let mut samples = Vec::with_capacity(table.records.len());
    let mut index = HashMap::new();
    let mut lines = HashMap::new();
    for (line, cells) in &table.records {
        let meta = sample_meta(file, *line, columns.map(|c| cells[c].as_str()))?;
        if let Some(first_line) = lines.insert(meta.id.clone(), *line) {
            return Err(DataError::DuplicateSample { at: Location::line(file, *line), id: meta.id, first_line });
        }
        index.insert(meta.id.clone(), samples.len());
        samples.push(meta);
    }
    Ok(SampleSheet { samples, index })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_rows_and_ignores_other_columns() {
        let sheet =
            read_sample_sheet(b"sample,notes,population,year\ns1,x,North,2020\ns2,,South,2021\n", "samples.csv")
                .unwrap();
        assert_eq!(sheet.samples.len(), 2);
        assert_eq!(
            sheet.samples[sheet.index["s2"]],
            SampleMeta { id: "s2".into(), population: "South".into(), year: 2021 }
        );
    }

    #[test]
    fn errors_name_file_line_and_fix() {
        let err = read_sample_sheet(b"sample,population\ns1,North\n", "samples.csv").unwrap_err().to_string();
        assert_eq!(
            err,
            "samples.csv: required column `year` not found (columns: sample, population)\n  help: the sample sheet of a VCF file needs the columns sample, population and year; add `year` or fix the header row"
        );
        let err = read_sample_sheet(b"sample,population,year\ns1,North,2020\ns1,North,2021\n", "samples.csv")
            .unwrap_err()
            .to_string();
        assert!(err.starts_with("samples.csv:3: sample id \"s1\" was already used on line 2"), "{err}");
        let err = read_sample_sheet(b"sample,population,year\ns1,North,20x0\n", "samples.csv").unwrap_err().to_string();
        assert!(err.starts_with("samples.csv:2: column `year` has \"20x0\": the year is not a whole number"), "{err}");
    }
}
