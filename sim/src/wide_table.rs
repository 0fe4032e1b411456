//! The popgauge wide genotype table: one row per sample, `sample,population,year` then one
//! column per locus with cells `a/b`, untyped cells empty.

use std::borrow::Cow;
use std::io::{self, Write};

use crate::sample::SampleSet;

/// A table of text cells, ready to be edited (extra columns, deliberate faults) and written.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct WideTable {
    /// Column names.
    pub header: Vec<String>,
    /// Rows of cells, each as long as `header`.
    pub rows: Vec<Vec<String>>,
}

impl WideTable {
    /// The table of `samples`: `sample,population,year,<locus>…`.
    pub fn from_samples(samples: &SampleSet) -> Self {
        let mut header: Vec<String> = ["sample", "population", "year"].map(String::from).to_vec();
        header.extend(samples.loci.iter().map(|locus| locus.name.clone()));
        let rows = samples
            .individuals
            .iter()
            .enumerate()
            .map(|(index, individual)| {
                let mut row =
                    vec![individual.sample.clone(), individual.population.clone(), individual.year.to_string()];
                row.extend((0..samples.loci.len()).map(|locus| samples.cell(index, locus)));
                row
            })
            .collect();
        Self { header, rows }
    }

    /// The index of the column called `name`.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|column| column == name)
    }

    /// Appends a column called `name` whose cell in each row is `cell(row_index, row)`.
    pub fn add_column(&mut self, name: &str, mut cell: impl FnMut(usize, &[String]) -> String) {
        self.header.push(name.to_string());
        for (index, row) in self.rows.iter_mut().enumerate() {
            let value = cell(index, row);
            row.push(value);
        }
    }

    /// Writes the table as comma-separated values with `\n` line ends, quoting a cell (RFC 4180)
    /// only when it holds a comma, a quote or a line break.
    ///
    /// # Errors
    /// Any error of `out`.
    pub fn write_csv(&self, mut out: impl Write) -> io::Result<()> {
        for row in std::iter::once(&self.header).chain(&self.rows) {
            let line: Vec<Cow<'_, str>> = row.iter().map(|cell| quote(cell)).collect();
            writeln!(out, "{}", line.join(","))?;
        }
        Ok(())
    }
}

/// Writes `samples` as a popgauge wide genotype table (see [`WideTable::write_csv`]).
///
/// # Errors
/// Any error of `out`.
pub fn write_wide_table(samples: &SampleSet, out: impl Write) -> io::Result<()> {
    WideTable::from_samples(samples).write_csv(out)
}

fn quote(cell: &str) -> Cow<'_, str> {
    if cell.contains([',', '"', '\n', '\r']) {
        Cow::Owned(format!("\"{}\"", cell.replace('"', "\"\"")))
    } else {
        Cow::Borrowed(cell)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cohort::IndividualId;
    use crate::markers::{Locus, LocusKind};
    use crate::sample::SampledIndividual;

    fn samples() -> SampleSet {
        let locus = |name: &str| Locus {
            name: name.into(),
            kind: LocusKind::Microsatellite { repeat_length: 2, min_size: 140, max_size: 220 },
            mutation_rate: 0.0,
        };
        let individual = |sample: &str, genotype| SampledIndividual {
            sample: sample.into(),
            individual: IndividualId(0),
            population: "Brennmoor".into(),
            generation: 0,
            year: 2018,
            genotype,
        };
        SampleSet {
            loci: vec![locus("Tk01"), locus("Tk02")],
            individuals: vec![
                individual("BRM-2018-001", vec![Some([152, 156]), None]),
                individual("BRM-2018-002", vec![Some([148, 148]), Some([200, 196])]),
            ],
        }
    }

    #[test]
    fn writes_header_cells_and_empty_missing() {
        let mut bytes = Vec::new();
        write_wide_table(&samples(), &mut bytes).unwrap();
        let expected = "sample,population,year,Tk01,Tk02\n\
                        BRM-2018-001,Brennmoor,2018,152/156,\n\
                        BRM-2018-002,Brennmoor,2018,148/148,196/200\n";
        assert_eq!(String::from_utf8(bytes).unwrap(), expected);
    }

    #[test]
    fn added_columns_are_quoted_only_when_needed() {
        let mut table = WideTable::from_samples(&samples());
        table.add_column("notes", |index, _| if index == 0 { "said \"hi\", left".into() } else { "plain".into() });
        assert_eq!(table.column("notes"), Some(5));
        assert_eq!(table.column("Tk02"), Some(4));
        assert_eq!(table.column("nothing"), None);
        let mut bytes = Vec::new();
        table.write_csv(&mut bytes).unwrap();
        let text = String::from_utf8(bytes).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "sample,population,year,Tk01,Tk02,notes");
        assert!(lines[1].ends_with(",\"said \"\"hi\"\", left\""), "{}", lines[1]);
        assert!(lines[2].ends_with(",plain"));
    }
}
