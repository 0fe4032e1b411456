//! Tables as the template receives them: headings and cells already formatted as text.

use rayon::prelude::*;
use serde::Serialize;

use popgauge_abi::Cell;

use super::super::contract::Rows;
use super::super::format::{self, NumberStyle};

/// A table for the template: every cell is display text, `numeric` says which columns align
/// right.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct TableData {
    /// Column headings.
    pub columns: Vec<String>,
    /// Per column: right-aligned numbers (true) or left-aligned text.
    pub numeric: Vec<bool>,
    /// Rows of display text.
    pub rows: Vec<Vec<String>>,
}

impl TableData {
    /// An empty table with these headings; `numeric` per heading.
    pub fn new(columns: &[(&str, bool)]) -> TableData {
        TableData {
            columns: columns.iter().map(|(c, _)| c.to_string()).collect(),
            numeric: columns.iter().map(|(_, n)| *n).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends a row (it must have one cell per column; the builders in this module ensure it).
    pub fn push(&mut self, row: Vec<String>) {
        debug_assert_eq!(row.len(), self.columns.len(), "a row has one cell per column");
        self.rows.push(row);
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Drops the columns (by heading) whose every cell is undefined (`—`), keeping `keep`.
    pub fn drop_empty_columns(&mut self, keep: &[&str]) {
        let empty: Vec<bool> = (0..self.columns.len())
            .map(|c| {
                !keep.contains(&self.columns[c].as_str())
                    && !self.rows.is_empty()
                    && self.rows.iter().all(|r| r[c] == format::UNDEFINED)
            })
            .collect();
        let retain = |values: &mut Vec<String>| {
            let mut index = 0;
            values.retain(|_| {
                let keep = !empty[index];
                index += 1;
                keep
            });
        };
        retain(&mut self.columns);
        let mut index = 0;
        self.numeric.retain(|_| {
            let keep = !empty[index];
            index += 1;
            keep
        });
        for row in &mut self.rows {
            retain(row);
        }
    }

    /// Splits off the rows after the first `keep` (for a body table whose rest goes to the
    /// appendix); returns the rest as a table with the same headings.
    pub fn split_off(&mut self, keep: usize) -> Option<TableData> {
        if self.rows.len() <= keep {
            return None;
        }
        let rest = self.rows.split_off(keep);
        Some(TableData { columns: self.columns.clone(), numeric: self.numeric.clone(), rows: rest })
    }
}

/// A contract table as it is: every column, headed by its contract name, numbers styled by
/// [`format::style_for_column`] (appendix and plugin tables).
pub fn generic(rows: &Rows<'_>) -> TableData {
    let table = rows.table();
    let styles: Vec<NumberStyle> = table.columns.iter().map(|c| format::style_for_column(c)).collect();
    let numeric: Vec<bool> = (0..table.columns.len())
        .map(|c| {
            let mut values = table.rows.iter().map(|r| &r[c]).filter(|v| !matches!(v, Cell::Null));
            values.next().is_some_and(|v| v.as_f64().is_some())
                && table.rows.iter().all(|r| matches!(r[c], Cell::Null | Cell::Int(_) | Cell::Num(_) | Cell::Inf))
        })
        .collect();
    TableData {
        // A zero-width space after each underscore lets a long column name wrap in a narrow column.
        columns: table.columns.iter().map(|c| c.replace('_', "_\u{200B}")).collect(),
        numeric,
        rows: table
            .rows
            .par_iter()
            .map(|row| row.iter().zip(&styles).map(|(cell, style)| format::cell(cell, *style)).collect())
            .collect(),
    }
}

/// Headings a reader understands, for contract columns shown through [`generic`] in the body
/// and the appendix (the CSV files keep the contract names).
const READABLE_HEADINGS: &[(&str, &str)] = &[
    ("threshold", "Threshold Ne"),
    ("populations", "Populations"),
    ("with_estimate", "With an Ne estimate"),
    ("above_point", "Ne > threshold (estimate)"),
    ("share_point", "Share (estimate)"),
    ("above_lower_bound", "Ne > threshold (lower 95 % bound)"),
    ("share_lower_bound", "Share (lower bound)"),
    ("year", "Year"),
    ("pairs", "Pairs"),
    ("slope", "Slope"),
    ("intercept", "Intercept"),
    ("r", "r"),
    ("mantel_p", "Mantel p"),
    ("mantel_p_min", "Smallest attainable p"),
    ("mantel_method", "Orders"),
    ("jost_d", "D"),
    ("jost_d_low", "D low"),
    ("jost_d_high", "D high"),
    ("gst_pp", "G″ST"),
    ("gst_pp_low", "G″ST low"),
    ("gst_pp_high", "G″ST high"),
    ("permutations", "Permutations"),
    ("population", "Population"),
    ("metric", "Metric"),
    ("year_start", "From"),
    ("year_end", "To"),
    ("loci", "Loci"),
    ("zeros", "Zero changes"),
    ("w_plus", "W+"),
    ("w_minus", "W−"),
    ("p_method", "p from"),
    ("p_value", "p"),
    ("mean_change", "Mean change"),
    ("change_low", "95 % CI low"),
    ("change_high", "95 % CI high"),
    ("replicates", "Bootstrap replicates"),
    ("locus", "Locus"),
    ("n", "n"),
    ("alleles", "Alleles"),
    ("ho", "Ho"),
    ("he", "He"),
    ("f", "F"),
    ("fis", "FIS"),
    ("fis_low", "FIS low"),
    ("fis_high", "FIS high"),
    ("effective_alleles", "Effective alleles"),
    ("ar", "Ar"),
    ("par", "PAr"),
    ("rarefaction_copies", "Ar gene copies"),
    ("par_rarefaction_copies", "PAr gene copies"),
    ("method", "Method"),
    ("draws", "Random tables"),
    ("p_se", "p s.e."),
    ("p_mid", "mid-p"),
    ("p_deficit", "p (deficit)"),
    ("p_excess", "p (excess)"),
    ("q_value", "q"),
    ("direction", "Direction"),
    ("null_allele_r", "Null allele r"),
    ("pop_a", "Population A"),
    ("pop_b", "Population B"),
    ("fst", "FST"),
    ("fst_low", "FST low"),
    ("fst_high", "FST high"),
    ("fst_p", "FST p"),
    ("gst", "GST"),
    ("gst_p", "G′ST"),
    ("hs", "HS"),
    ("ht", "HT"),
    ("distance_km", "Distance (km)"),
    ("fst_linearised", "FST/(1 − FST)"),
    ("n_a", "n A"),
    ("n_b", "n B"),
    ("s_start", "S first"),
    ("s_end", "S second"),
    ("jack_df", "df (jackknife)"),
    ("resample_df", "df (resampling)"),
    ("census_size", "Census size"),
    ("plan", "Plan"),
    ("pcrit", "Pcrit"),
    ("s", "S"),
    ("ne", "Ne"),
    ("ne_low", "Ne low"),
    ("ne_high", "Ne high"),
    ("ne_param_low", "Ne low (parametric)"),
    ("ne_param_high", "Ne high (parametric)"),
    ("ne_jack_low", "Ne low (jackknife)"),
    ("ne_jack_high", "Ne high (jackknife)"),
    ("ne_resample_low", "Ne low (resampling)"),
    ("ne_resample_high", "Ne high (resampling)"),
    ("r2", "r²"),
    ("r2_sample", "E(r²) sampling"),
    ("r2_drift", "r² drift"),
    ("pairs_used", "Locus pairs"),
    ("comparisons", "Allele comparisons"),
    ("generations", "Generations"),
    ("ne_fs", "Ne (Fs)"),
    ("ne_fc", "Ne (Fc)"),
    ("ne_fk", "Ne (Fk)"),
    ("fs", "Fs"),
    ("fc", "Fc"),
    ("fk", "Fk"),
];

/// The heading a reader understands for a contract column (`gst_pp` → `G″ST`); a name not in
/// [`READABLE_HEADINGS`] keeps its words, spaced at underscores.
pub fn heading_for(column: &str) -> String {
    READABLE_HEADINGS
        .iter()
        .find(|(name, _)| *name == column)
        .map_or_else(|| column.replace('_', " "), |(_, label)| (*label).to_string())
}

/// [`generic`] with the readable headings of [`READABLE_HEADINGS`] (other columns keep their
/// contract names, spaced at underscores), for tables shown in the body.
pub fn readable(rows: &Rows<'_>) -> TableData {
    let mut data = generic(rows);
    for (heading, column) in data.columns.iter_mut().zip(&rows.table().columns) {
        *heading = heading_for(column);
    }
    data
}

/// One cell of a heat table: its text and, when it is coloured, its shade in [0, 1].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HeatCell {
    /// Display text.
    pub text: String,
    /// Shade in [0, 1] (0 = lightest), or `None` for an uncoloured cell.
    pub heat: Option<f64>,
}

/// A square matrix of populations with coloured cells.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HeatTable {
    /// Row and column labels.
    pub labels: Vec<String>,
    /// Rows of cells.
    pub cells: Vec<Vec<HeatCell>>,
    /// The value the darkest shade stands for, as display text.
    pub max: String,
}

#[cfg(test)]
mod tests {
    use super::*;
    use popgauge_abi::Table;

    #[test]
    fn generic_tables_format_by_column_name_and_align_numbers() {
        let mut table = Table::new(&["population", "year", "he", "ne", "note"]);
        table
            .push_row(vec![Cell::text("North #1"), Cell::Int(2019), Cell::Num(0.61234), Cell::Inf, Cell::Null])
            .unwrap();
        table
            .push_row(vec![Cell::text("South"), Cell::Int(2020), Cell::Null, Cell::Num(46.9), Cell::text("x")])
            .unwrap();
        let step = popgauge_abi::StepResult {
            id: "x".into(),
            uses: "x".into(),
            version: "1".into(),
            status: popgauge_abi::StepStatus::Ok,
            error: None,
            tables: [("t".to_string(), table)].into_iter().collect(),
            findings: vec![],
            citations: vec![],
            exclusions: Default::default(),
        };
        let rows = super::super::super::contract::table_of(&step, "t").unwrap();
        let data = generic(&rows);
        assert_eq!(data.numeric, vec![false, true, true, true, false]);
        assert_eq!(data.rows[0], vec!["North #1", "2019", "0.612", "∞", "—"]);
        assert_eq!(data.rows[1], vec!["South", "2020", "—", "47", "x"]);
    }

    #[test]
    fn empty_columns_are_dropped_and_long_tables_split() {
        let mut data = TableData::new(&[("a", false), ("b", true), ("c", true)]);
        data.push(vec!["1".into(), "—".into(), "—".into()]);
        data.push(vec!["2".into(), "—".into(), "3".into()]);
        data.push(vec!["3".into(), "—".into(), "—".into()]);
        data.drop_empty_columns(&[]);
        assert_eq!(data.columns, vec!["a", "c"]);
        assert_eq!(data.numeric, vec![false, true]);
        let rest = data.split_off(2).unwrap();
        assert_eq!(data.rows.len(), 2);
        assert_eq!(rest.rows, vec![vec!["3".to_string(), "—".to_string()]]);
        assert!(data.split_off(5).is_none());
    }
}
