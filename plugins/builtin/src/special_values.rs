//! Findings that explain the special values of a step's tables.
//!
//! Results contract (report/src/contract.rs): no NaN or infinity reaches a table except as the
//! documented `"inf"` or `null`, each with a finding explaining why. The steps add these findings
//! where their tables are assembled, reading the tables themselves, so what a finding lists is
//! exactly what a reader sees. One finding per (step, reason) names the rows it concerns, at most
//! [`LISTED`] of them and then how many more, never one finding per cell. The table in
//! DEVELOPERS.md ("Special values") lists each column that can be `null` or `"inf"` and the finding
//! that explains it.

use popgauge_abi::{Cell, Finding, FindingLevel, Table, TableRow, Where};

/// How many rows a finding names before it says "and N more".
pub const LISTED: usize = 20;

/// One row of a table, read by column name: the SDK's [`TableRow`] with the tests and the
/// printed text a finding needs.
#[derive(Debug, Clone, Copy)]
pub struct Row<'t> {
    row: TableRow<'t>,
}

impl<'t> Row<'t> {
    /// The cell of `column`; `None` when the table has no such column.
    pub fn cell(&self, column: &str) -> Option<&'t Cell> {
        self.row.cell(column)
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
    table.named_rows().map(|row| Row { row }).filter(|row| select(row)).map(|row| name(&row)).collect()
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

/// What the lower confidence bound of an infinite estimate is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum LowerBound {
    /// A finite number.
    Finite,
    /// `"inf"` too.
    Infinite,
    /// There is no interval.
    Absent,
}

impl LowerBound {
    /// The lower bound as a value gives it (`None`: no interval).
    pub fn of(low: Option<f64>) -> LowerBound {
        match low {
            Some(x) if x.is_finite() => LowerBound::Finite,
            Some(_) => LowerBound::Infinite,
            None => LowerBound::Absent,
        }
    }
}

/// The sentence that closes a finding about an infinite point estimate of `quantity` ("Ne",
/// "Nb"): what its lower confidence bound (named `bound`, e.g. "ne_low") says. Only a finite
/// lower bound is informative; when it is `"inf"` too the interval is ∞–∞ and the size is not
/// estimable.
pub fn infinite_estimate_reading(lower: LowerBound, bound: &str, quantity: &str) -> String {
    match lower {
        LowerBound::Finite => {
            format!("Its lower confidence bound ({bound}) is informative: {quantity} is unlikely to be below it")
        }
        LowerBound::Infinite => format!(
            "Its lower confidence bound ({bound}) is \"inf\" as well, so the interval is ∞–∞ and {quantity} is not \
             estimable from these data: they set no bound on it, which does not show that the population is large; \
             more individuals or loci are needed"
        ),
        LowerBound::Absent => format!("There is no confidence interval, so nothing bounds {quantity} from below"),
    }
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
        let first = Row { row: TableRow::new(&table, 1).unwrap() };
        assert_eq!(first.columns_where(&["ne", "ne_high", "year"], |r, c| r.is_inf(c)), "ne, ne_high");
    }

    /// Only a finite lower bound is called informative (common practice: an interval ∞–∞
    /// bounds nothing).
    #[test]
    fn only_a_finite_lower_bound_is_called_informative() {
        let finite = infinite_estimate_reading(LowerBound::of(Some(120.0)), "ne_low", "Ne");
        assert!(finite.contains("(ne_low) is informative"), "{finite}");
        let infinite = infinite_estimate_reading(LowerBound::of(Some(f64::INFINITY)), "ne_low", "Ne");
        assert!(infinite.contains("not estimable") && !infinite.contains("informative"), "{infinite}");
        let absent = infinite_estimate_reading(LowerBound::of(None), "ne_low", "Ne");
        assert!(!absent.contains("informative"), "{absent}");
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
