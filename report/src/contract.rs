//! Reading `results.json` by the results contract: step results by `uses`, tables
//! and columns by name. The column names the document relies on are spelled here once.
//!
//! A table that is absent, or a column a table lacks, reads as "not there" (`None`), never as
//! an error: the document shows what the recipe produced and says what it did not.

/// One row read by column name: the SDK's reader, the same one steps and plugins use.
pub use popgauge_abi::TableRow as Row;
use popgauge_abi::{StepResult, StepStatus, Table};

use popgauge_engine::results::ResultsDocument;

pub use popgauge_abi::contract::{col, table, uses};

/// The results, looked up by `uses`.
#[derive(Debug, Clone, Copy)]
pub struct Results<'a> {
    doc: &'a ResultsDocument,
}

impl<'a> Results<'a> {
    /// Wraps a results document.
    pub fn new(doc: &'a ResultsDocument) -> Results<'a> {
        Results { doc }
    }

    /// The document.
    pub fn doc(&self) -> &'a ResultsDocument {
        self.doc
    }

    /// Every completed step with this `uses`, in recipe order.
    pub fn steps(&self, uses: &str) -> Vec<&'a StepResult> {
        self.doc.steps.iter().filter(|s| s.uses == uses && s.status == StepStatus::Ok).collect()
    }

    /// The last completed step with this `uses` (a later step supersedes an earlier one).
    pub fn step(&self, uses: &str) -> Option<&'a StepResult> {
        self.steps(uses).into_iter().last()
    }

    /// A table of the last completed step with this `uses`.
    pub fn table(&self, uses: &str, name: &str) -> Option<Rows<'a>> {
        self.step(uses).and_then(|s| table_of(s, name))
    }
}

/// A named table of a step.
pub fn table_of<'a>(step: &'a StepResult, name: &str) -> Option<Rows<'a>> {
    step.tables.get(name).map(|table| Rows { table })
}

/// A table read by column name.
#[derive(Debug, Clone, Copy)]
pub struct Rows<'a> {
    table: &'a Table,
}

impl<'a> Rows<'a> {
    /// The underlying table.
    pub fn table(&self) -> &'a Table {
        self.table
    }

    /// Whether the table has this column.
    pub fn has(&self, column: &str) -> bool {
        self.table.column(column).is_some()
    }

    /// The rows, each read by column name with the SDK's reader.
    pub fn iter(&self) -> impl Iterator<Item = Row<'a>> + 'a {
        self.table.named_rows()
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.table.rows.len()
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.table.rows.is_empty()
    }
}
