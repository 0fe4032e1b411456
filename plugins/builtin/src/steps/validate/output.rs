//! Assembling `validate`'s tables, filter and citations from the screen's decisions.

use popgauge_abi::{Cell, Exclusion, Filter, Finding, StepError, StepOutput, Table};

use super::Screen;
use crate::stats::heterozygosity::NEI_1978;
use crate::stats::null_allele::BROOKFIELD_1996;

impl Screen<'_> {
    pub(super) fn into_output(self, findings: Vec<Finding>) -> Result<StepOutput, StepError> {
        let mut output = StepOutput::default();
        output.tables.insert("loci".into(), self.loci_table()?);
        output.tables.insert("samples".into(), self.samples_table()?);
        output.tables.insert("groups".into(), self.groups_table()?);
        output.findings = findings;
        output.citations = vec![BROOKFIELD_1996.into(), NEI_1978.into()];
        output.filter = self.filter();
        Ok(output)
    }

    fn loci_table(&self) -> Result<Table, StepError> {
        let mut table =
            Table::new(&["locus", "missing", "alleles", "status", "reason", "typed", "bad_cells", "null_allele"]);
        for (l, locus) in self.loci.iter().enumerate() {
            table.push_row(vec![
                Cell::text(&self.view.locus(l).name),
                Cell::number(locus.missing),
                count_cell(locus.alleles),
                status_cell(&locus.exclusion),
                reason_cell(&locus.exclusion),
                count_cell(locus.typed),
                count_cell(locus.bad_cells),
                Cell::maybe(locus.null_allele),
            ])?;
        }
        Ok(table)
    }

    fn samples_table(&self) -> Result<Table, StepError> {
        let mut table = Table::new(&["sample", "population", "year", "missing", "status", "reason", "duplicate_of"]);
        for (s, sample) in self.samples.iter().enumerate() {
            let meta = self.view.sample(s);
            let duplicates: Vec<&str> = sample.duplicate_of.iter().map(|&d| self.sample_id(d)).collect();
            table.push_row(vec![
                Cell::text(&meta.id),
                Cell::text(&meta.population),
                Cell::Int(meta.year.into()),
                Cell::maybe(sample.missing),
                status_cell(&sample.exclusion),
                reason_cell(&sample.exclusion),
                if duplicates.is_empty() { Cell::Null } else { Cell::text(duplicates.join(", ")) },
            ])?;
        }
        Ok(table)
    }

    fn groups_table(&self) -> Result<Table, StepError> {
        let mut table = Table::new(&["population", "year", "n_total", "n_kept", "status", "n_passed_missingness"]);
        for group in &self.groups {
            let kept = group.samples.iter().filter(|&&s| self.samples[s].exclusion.is_none()).count();
            table.push_row(vec![
                Cell::text(&group.population),
                Cell::Int(group.year.into()),
                count_cell(group.samples.len()),
                count_cell(kept),
                Cell::text(if group.excluded || kept == 0 { "excluded" } else { "kept" }),
                count_cell(group.passed_missingness),
            ])?;
        }
        Ok(table)
    }

    fn filter(&self) -> Filter {
        let exclusion = |name: &str, reason: &Option<String>| {
            reason.as_ref().map(|r| Exclusion { name: name.to_string(), reason: r.clone() })
        };
        Filter {
            samples: (0..self.samples.len())
                .filter_map(|s| exclusion(self.sample_id(s), &self.samples[s].exclusion))
                .collect(),
            loci: (0..self.loci.len())
                .filter_map(|l| exclusion(&self.view.locus(l).name, &self.loci[l].exclusion))
                .collect(),
        }
    }
}

fn status_cell(exclusion: &Option<String>) -> Cell {
    Cell::text(if exclusion.is_some() { "excluded" } else { "kept" })
}

fn reason_cell(exclusion: &Option<String>) -> Cell {
    exclusion.as_ref().map_or(Cell::Null, Cell::text)
}

/// A count as a table integer (counts never approach `i64::MAX`).
fn count_cell(count: usize) -> Cell {
    Cell::Int(i64::try_from(count).unwrap_or(i64::MAX))
}
