//! Reading one row of a result [`Table`] by column name.
//!
//! Steps that read earlier results (`status`, `trend`, an external summary step) look cells up
//! by the column names of the results contract, never by position: a column added to a table
//! must not shift what a reader sees. [`TableRow`] is that reader, typed: `number`, `text` and
//! `year` give `None` for a missing column, a `null` cell or a cell of another kind.
//!
//! ```
//! use popgauge_abi::{Cell, Table};
//!
//! let mut table = Table::new(&["population", "year", "ne"]);
//! table.push_row(vec![Cell::text("North"), Cell::Int(2020), Cell::Inf]).unwrap();
//! let row = table.named_rows().next().unwrap();
//! assert_eq!(row.text("population"), Some("North"));
//! assert_eq!(row.year("year"), Some(2020));
//! assert_eq!(row.number("ne"), Some(f64::INFINITY));
//! assert_eq!(row.number("ne_low"), None);
//! ```

use crate::output::{Cell, Table};

/// One row of a [`Table`], read by column name.
#[derive(Debug, Clone, Copy)]
pub struct TableRow<'t> {
    table: &'t Table,
    cells: &'t [Cell],
}

impl<'t> TableRow<'t> {
    /// Row `index` of `table`, or `None` past the last row.
    pub fn new(table: &'t Table, index: usize) -> Option<TableRow<'t>> {
        table.rows.get(index).map(|cells| TableRow { table, cells })
    }

    /// The table the row belongs to.
    pub fn table(&self) -> &'t Table {
        self.table
    }

    /// The cell of `column`; `None` when the table has no such column.
    pub fn cell(&self, column: &str) -> Option<&'t Cell> {
        self.table.column(column).and_then(|i| self.cells.get(i))
    }

    /// The cell of `column` as a number (`"inf"` gives +∞); `None` for `null`, text or a
    /// missing column.
    pub fn number(&self, column: &str) -> Option<f64> {
        self.cell(column)?.as_f64()
    }

    /// The cell of `column` when it is text.
    pub fn text(&self, column: &str) -> Option<&'t str> {
        self.cell(column)?.as_str()
    }

    /// The cell of `column` as a year (see [`Cell::as_year`]).
    pub fn year(&self, column: &str) -> Option<i32> {
        self.cell(column)?.as_year()
    }

    /// The cell of `column` as an integer (counts, years): an integer, or a number without a
    /// fractional part below 10^15 in magnitude.
    pub fn integer(&self, column: &str) -> Option<i64> {
        match self.cell(column)? {
            Cell::Int(i) => Some(*i),
            Cell::Num(x) if x.fract() == 0.0 && x.abs() < 1e15 => Some(*x as i64),
            _ => None,
        }
    }

    /// The cell of `column` as display text whatever its kind (text as is, numbers in their
    /// shortest form, `"inf"`); `None` for `null` or a missing column.
    pub fn label(&self, column: &str) -> Option<String> {
        self.cell(column).filter(|c| !matches!(c, Cell::Null)).map(|c| c.to_string())
    }

    /// Both bounds of the interval `<prefix>_low`/`<prefix>_high`, when both are numbers.
    pub fn interval(&self, prefix: &str) -> Option<(f64, f64)> {
        Some((self.number(&format!("{prefix}_low"))?, self.number(&format!("{prefix}_high"))?))
    }
}

impl Table {
    /// The rows, each readable by column name, top to bottom.
    pub fn named_rows(&self) -> impl Iterator<Item = TableRow<'_>> {
        self.rows.iter().map(move |cells| TableRow { table: self, cells })
    }
}

impl Cell {
    /// The cell as a year: an integer, or a number without a fractional part, that fits `i32`
    /// (years are integers in every contract table).
    pub fn as_year(&self) -> Option<i32> {
        match self {
            Cell::Int(i) => i32::try_from(*i).ok(),
            Cell::Num(x) if x.fract() == 0.0 && (f64::from(i32::MIN)..=f64::from(i32::MAX)).contains(x) => {
                Some(*x as i32)
            }
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> Table {
        let mut table = Table::new(&["population", "year", "ne", "ne_low", "ne_high"]);
        table
            .push_row(vec![Cell::text("North"), Cell::Int(2020), Cell::Num(120.0), Cell::Num(80.0), Cell::Inf])
            .unwrap();
        table.push_row(vec![Cell::text("South"), Cell::Num(2019.0), Cell::Null, Cell::Null, Cell::Null]).unwrap();
        table
    }

    #[test]
    fn cells_are_read_by_column_name_and_kind() {
        let table = table();
        let rows: Vec<TableRow<'_>> = table.named_rows().collect();
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[0].text("population"), Some("North"));
        assert_eq!(rows[0].number("population"), None, "text is not a number");
        assert_eq!(rows[0].text("year"), None, "a year is not text");
        assert_eq!(rows[0].number("ne"), Some(120.0));
        assert_eq!(rows[0].interval("ne"), Some((80.0, f64::INFINITY)));
        assert_eq!(rows[1].year("year"), Some(2019));
        assert_eq!(rows[1].integer("year"), Some(2019));
        assert_eq!(rows[0].integer("ne"), Some(120));
        assert_eq!(rows[0].integer("population"), None, "text is no integer");
        assert_eq!(rows[0].label("ne_high").as_deref(), Some("inf"));
        assert_eq!(rows[0].label("population").as_deref(), Some("North"));
        assert_eq!(rows[1].label("ne"), None, "null has no label");
        assert_eq!(rows[1].number("ne"), None, "null is no number");
        assert_eq!(rows[1].interval("ne"), None);
        assert_eq!(rows[1].cell("no such column"), None);
        assert!(TableRow::new(&table, 2).is_none());
        assert_eq!(TableRow::new(&table, 1).and_then(|r| r.text("population")), Some("South"));
    }

    #[test]
    fn only_whole_numbers_are_years() {
        assert_eq!(Cell::Int(2020).as_year(), Some(2020));
        assert_eq!(Cell::Num(2020.0).as_year(), Some(2020));
        assert_eq!(Cell::Num(2020.5).as_year(), None);
        assert_eq!(Cell::Num(1e12).as_year(), None);
        assert_eq!(Cell::Int(i64::MAX).as_year(), None);
        assert_eq!(Cell::text("2020").as_year(), None);
        assert_eq!(Cell::Inf.as_year(), None);
    }
}
