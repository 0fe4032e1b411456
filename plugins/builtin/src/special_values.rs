//! Findings that explain the special values of a step's tables.
//!
//! DESIGN: no NaN or infinity reaches a table except as the documented `"inf"` or `null`, each
//! with a finding explaining why. The steps add these findings where their tables are
//! assembled, reading the tables themselves, so what a finding lists is exactly what a reader
//! sees. One finding per (step, reason) names the rows it concerns, at most [`LISTED`] of them
//! and then how many more, never one finding per cell. The table in DEVELOPERS.md ("Special
//! values") lists each column that can be `null` or `"inf"` and the finding that explains it.

use popgauge_abi::{Cell, Finding, FindingLevel, Table, Where};

/// How many rows a finding names before it says "and N more".
pub const LISTED: usize = 20;

/// One row of a table, read by column name.
#[derive(Debug, Clone, Copy)]
pub struct Row<'t> {
    table: &'t Table,
    cells: &'t [Cell],
}

impl<'t> Row<'t> {
    /// The cell of `column`; `None` when the table has no such column.
    pub fn cell(&self, column: &str) -> Option<&'t Cell> {
        self.table.column(column).and_then(|i| self.cells.get(i))
    }

    /// Whether `column` holds `null`.
    pub fn is_null(&self, column: &str) -> bool {
        matches!(self.cell(column), Some(Cell::Null))
    }

    /// Whether `column` holds `"inf"`.
    pub fn is_inf(&self, column: &str) -> bool {
        matches!(self.cell(column), Some(Cell::Inf))
    }

    /// Whether `column` holds a finite number.
    pub fn is_finite(&self, column: &str) -> bool {
        matches!(self.cell(column), Some(Cell::Num(_) | Cell::Int(_)))
    }

    /// The cell of `column` as the document prints it (empty for `null` or a missing column).
    pub fn text(&self, column: &str) -> String {
        self.cell(column).map_or_else(String::new, Cell::to_string)
    }

    /// The columns among `columns` whose cell satisfies `test`, joined with ", ".
    pub fn columns_where(&self, columns: &[&str], test: impl Fn(&Row<'t>, &str) -> bool) -> String {
        columns.iter().filter(|c| test(self, c)).copied().collect::<Vec<_>>().join(", ")
    }
}

/// The rows of `table` that `select` picks, each named by `name`.
pub fn rows_where(table: &Table, select: impl Fn(&Row<'_>) -> bool, name: impl Fn(&Row<'_>) -> String) -> Vec<String> {
    table.rows.iter().map(|cells| Row { table, cells }).filter(|row| select(row)).map(|row| name(&row)).collect()
}

/// "a, b, c and 4 more".
pub fn listing(items: &[String]) -> String {
    let shown = items.iter().take(LISTED).cloned().collect::<Vec<_>>().join(", ");
    if items.len() > LISTED { format!("{shown} and {} more", items.len() - LISTED) } else { shown }
}

/// One finding about `rows`, or none when there are none. `message` receives how many rows
/// there are and their capped [`listing`].
pub fn explain(
    level: FindingLevel,
    code: &str,
    rows: &[String],
    message: impl FnOnce(usize, &str) -> String,
) -> Option<Finding> {
    (!rows.is_empty()).then(|| Finding::new(level, code, message(rows.len(), &listing(rows)), Where::default()))
}

/// "population year", the usual name of a group row.
pub fn group_name(row: &Row<'_>) -> String {
    format!("{} {}", row.text("population"), row.text("year"))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> Table {
        let mut table = Table::new(&["population", "year", "ne", "ne_high"]);
        table.push_row(vec![Cell::text("North"), Cell::Int(2019), Cell::Num(40.0), Cell::Inf]).unwrap();
        table.push_row(vec![Cell::text("South"), Cell::Int(2019), Cell::Inf, Cell::Inf]).unwrap();
        table.push_row(vec![Cell::text("East"), Cell::Int(2020), Cell::Null, Cell::Null]).unwrap();
        table
    }

    #[test]
    fn rows_are_selected_by_their_cells_and_named() {
        let table = table();
        let upper = rows_where(&table, |r| r.is_finite("ne") && r.is_inf("ne_high"), group_name);
        assert_eq!(upper, vec!["North 2019"]);
        assert_eq!(rows_where(&table, |r| r.is_inf("ne"), group_name), vec!["South 2019"]);
        assert_eq!(rows_where(&table, |r| r.is_null("ne"), group_name), vec!["East 2020"]);
        assert!(rows_where(&table, |r| r.is_null("no such column"), group_name).is_empty());
        let first = Row { table: &table, cells: &table.rows[1] };
        assert_eq!(first.columns_where(&["ne", "ne_high", "year"], |r, c| r.is_inf(c)), "ne, ne_high");
    }

    #[test]
    fn one_finding_lists_the_rows_capped() {
        let rows: Vec<String> = (0..LISTED + 3).map(|i| format!("L{i}")).collect();
        let finding = explain(FindingLevel::Info, "some-code", &rows, |n, list| format!("{n} loci: {list}")).unwrap();
        assert_eq!(finding.code, "some-code");
        assert!(finding.message.starts_with("23 loci: L0, L1, "), "{}", finding.message);
        assert!(finding.message.ends_with(", L19 and 3 more"), "{}", finding.message);
        assert!(explain(FindingLevel::Info, "some-code", &[], |_, _| String::new()).is_none());
    }
}
