//! Assembling `validate`'s tables, filter and citations from the screen's decisions.

use popgauge_abi::{Cell, Exclusion, Filter, Finding, FindingLevel, StepError, StepOutput, Table};

use super::Screen;
use crate::special_values::{explain, rows_where};
use crate::stats::fdr::BENJAMINI_HOCHBERG_1995;
use crate::stats::heterozygosity::NEI_1978;
use crate::stats::hwe_exact;
use crate::stats::null_allele::BROOKFIELD_1996;

impl Screen<'_> {
    pub(super) fn into_output(self, findings: Vec<Finding>) -> Result<StepOutput, StepError> {
        let mut output = StepOutput::default();
        let loci = self.loci_table()?;
        output.findings = findings;
        output.findings.extend(undefined_null_allele_finding(&loci));
        output.tables.insert("loci".into(), loci);
        output.tables.insert("samples".into(), self.samples_table()?);
        output.tables.insert("groups".into(), self.groups_table()?);
        output.citations = vec![BROOKFIELD_1996.into(), NEI_1978.into(), BENJAMINI_HOCHBERG_1995.into()];
        output.citations.extend(hwe_exact::CITATIONS.iter().map(|c| c.to_string()));
        output.filter = self.filter();
        Ok(output)
    }

    fn loci_table(&self) -> Result<Table, StepError> {
        let mut table = Table::new(&[
            "locus",
            "missing",
            "alleles",
            "status",
            "reason",
            "typed",
            "bad_cells",
            "null_allele",
            "deficit_groups",
            "tested_groups",
        ]);
        for (l, locus) in self.loci.iter().enumerate() {
            table.push_row(vec![
                Cell::text(&self.view.locus(l).name),
                Cell::maybe(locus.missing),
                count_cell(locus.alleles),
                status_cell(&locus.exclusion),
                reason_cell(&locus.exclusion),
                count_cell(locus.typed),
                count_cell(locus.bad_cells),
                Cell::maybe(locus.null_allele),
                locus.deficit.map_or(Cell::Null, |(significant, _)| count_cell(significant)),
                locus.deficit.map_or(Cell::Null, |(_, tested)| count_cell(tested)),
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

/// One finding for the kept loci whose `null_allele` is null (an excluded locus has its
/// reason in the table).
fn undefined_null_allele_finding(loci: &Table) -> Option<Finding> {
    let undefined = rows_where(loci, |r| r.text("status") == "kept" && r.is_null("null_allele"), |r| r.text("locus"));
    explain(FindingLevel::Info, "null-allele-undefined", &undefined, |n, list| {
        format!(
            "{n} kept locus/loci have a null null_allele: Brookfield's r needs Ho and He, so a group where the locus \
             is typed in fewer than two individuals gives none, and here no group does: {list}"
        )
    })
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Common practice (every null in a table comes with a finding saying why), hand-made rows:
    /// the kept locus without an r is listed; the excluded one (its reason is in the table) and
    /// the kept one with an r are not.
    #[test]
    fn kept_loci_without_r_are_listed_once() {
        let mut loci = Table::new(&["locus", "status", "null_allele"]);
        loci.push_row(vec![Cell::text("L1"), Cell::text("kept"), Cell::Null]).unwrap();
        loci.push_row(vec![Cell::text("L2"), Cell::text("excluded"), Cell::Null]).unwrap();
        loci.push_row(vec![Cell::text("L3"), Cell::text("kept"), Cell::Num(0.02)]).unwrap();
        let finding = undefined_null_allele_finding(&loci).expect("L1 is listed");
        assert_eq!(finding.code, "null-allele-undefined");
        assert!(finding.message.starts_with("1 kept locus/loci") && finding.message.ends_with("no group does: L1"));
        loci.rows.remove(0);
        assert_eq!(undefined_null_allele_finding(&loci), None);
    }
}
