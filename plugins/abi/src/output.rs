//! What a step returns: tables, findings, citations and a filter.

use std::collections::BTreeMap;
use std::fmt;

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use crate::number::format_number;

/// One value in a result table.
///
/// In JSON a number is a JSON number, an infinite estimate the string `"inf"`, an undefined
/// value `null`.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Undefined or not applicable.
    Null,
    /// A yes/no value.
    Bool(bool),
    /// An integer (counts, years).
    Int(i64),
    /// A finite real number.
    Num(f64),
    /// A positively infinite estimate (for example Ne when the drift signal is ≤ 0).
    Inf,
    /// Text (names, labels, categories).
    Text(String),
}

impl Cell {
    /// A text cell.
    pub fn text(value: impl Into<String>) -> Cell {
        Cell::Text(value.into())
    }

    /// A number cell: finite values as [`Cell::Num`], +∞ as [`Cell::Inf`], NaN and −∞ as
    /// [`Cell::Null`], so no NaN ever reaches a table.
    pub fn number(value: f64) -> Cell {
        if value.is_finite() {
            Cell::Num(value)
        } else if value == f64::INFINITY {
            Cell::Inf
        } else {
            Cell::Null
        }
    }

    /// [`Cell::number`] of `Some`, [`Cell::Null`] of `None`.
    pub fn maybe(value: Option<f64>) -> Cell {
        value.map_or(Cell::Null, Cell::number)
    }

    /// The value as `f64` when it is numeric (`Inf` gives +∞).
    pub fn as_f64(&self) -> Option<f64> {
        match self {
            Cell::Int(i) => Some(*i as f64),
            Cell::Num(x) => Some(*x),
            Cell::Inf => Some(f64::INFINITY),
            _ => None,
        }
    }

    /// The text when this is a text cell.
    pub fn as_str(&self) -> Option<&str> {
        match self {
            Cell::Text(t) => Some(t),
            _ => None,
        }
    }
}

impl fmt::Display for Cell {
    /// The CSV spelling: empty for null, `inf`, numbers through [`format_number`].
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Cell::Null => Ok(()),
            Cell::Bool(b) => write!(f, "{b}"),
            Cell::Int(i) => write!(f, "{i}"),
            Cell::Num(x) if x.is_finite() => f.write_str(&format_number(*x)),
            // A non-finite number built without `Cell::number` is written as that would write it.
            Cell::Num(x) => Cell::number(*x).fmt(f),
            Cell::Inf => f.write_str("inf"),
            Cell::Text(t) => f.write_str(t),
        }
    }
}

impl Serialize for Cell {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Cell::Null => serializer.serialize_none(),
            Cell::Bool(b) => serializer.serialize_bool(*b),
            Cell::Int(i) => serializer.serialize_i64(*i),
            Cell::Num(x) if x.is_finite() => serializer.serialize_f64(*x),
            Cell::Num(x) => Cell::number(*x).serialize(serializer),
            Cell::Inf => serializer.serialize_str("inf"),
            Cell::Text(t) => serializer.serialize_str(t),
        }
    }
}

impl<'de> Deserialize<'de> for Cell {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        use serde_json::Value;
        Ok(match Value::deserialize(deserializer)? {
            Value::Null => Cell::Null,
            Value::Bool(b) => Cell::Bool(b),
            Value::Number(n) => match n.as_i64() {
                Some(i) if !n.is_f64() => Cell::Int(i),
                _ => Cell::Num(n.as_f64().unwrap_or(f64::NAN)),
            },
            Value::String(s) if s == "inf" => Cell::Inf,
            Value::String(s) => Cell::Text(s),
            other => {
                return Err(serde::de::Error::custom(format!(
                    "a table cell must be a number, text, true/false, null or \"inf\", not {other}"
                )));
            }
        })
    }
}

/// Why a row could not be added to a table.
#[derive(Debug, thiserror::Error, PartialEq, Eq)]
pub enum TableError {
    /// The row has a different number of cells than the table has columns.
    #[error("row {row} has {found} cells but the table has {expected} columns")]
    Ragged {
        /// 0-based row index.
        row: usize,
        /// Number of columns.
        expected: usize,
        /// Number of cells in the row.
        found: usize,
    },
}

/// A rectangular result table: named columns and rows of cells.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Table {
    /// Column names, as in the results contract.
    pub columns: Vec<String>,
    /// Rows, each with one cell per column.
    pub rows: Vec<Vec<Cell>>,
}

impl Table {
    /// An empty table with the given columns.
    pub fn new(columns: &[&str]) -> Table {
        Table { columns: columns.iter().map(|c| c.to_string()).collect(), rows: Vec::new() }
    }

    /// Appends a row.
    ///
    /// # Errors
    /// [`TableError::Ragged`] when the row length differs from the column count.
    pub fn push_row(&mut self, row: Vec<Cell>) -> Result<(), TableError> {
        if row.len() != self.columns.len() {
            return Err(TableError::Ragged { row: self.rows.len(), expected: self.columns.len(), found: row.len() });
        }
        self.rows.push(row);
        Ok(())
    }

    /// Checks that every row has one cell per column (for tables that arrive as JSON).
    ///
    /// # Errors
    /// [`TableError::Ragged`] naming the first ragged row.
    pub fn check_rectangular(&self) -> Result<(), TableError> {
        match self.rows.iter().position(|r| r.len() != self.columns.len()) {
            Some(row) => Err(TableError::Ragged { row, expected: self.columns.len(), found: self.rows[row].len() }),
            None => Ok(()),
        }
    }

    /// Index of a column by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c == name)
    }

    /// The cells of one column, top to bottom, or `None` when there is no such column.
    pub fn column_values(&self, name: &str) -> Option<impl Iterator<Item = &Cell>> {
        let index = self.column(name)?;
        Some(self.rows.iter().map(move |r| &r[index]))
    }
}

/// How serious a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "lowercase")]
pub enum FindingLevel {
    /// Context worth knowing.
    Info,
    /// Something that weakens a result or needs a look.
    Warning,
    /// Something wrong with the data that a result should not rest on.
    Error,
}

impl fmt::Display for FindingLevel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FindingLevel::Info => "info",
            FindingLevel::Warning => "warning",
            FindingLevel::Error => "error",
        })
    }
}

/// Where a finding applies; every field is optional.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Where {
    /// Input file (relative to the case folder).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub file: Option<String>,
    /// 1-based physical line of the file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<u64>,
    /// Column name in the file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub column: Option<String>,
    /// Population.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub population: Option<String>,
    /// Sampling year.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub year: Option<i32>,
    /// Locus.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub locus: Option<String>,
    /// Sample id.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample: Option<String>,
}

impl Where {
    /// A location naming a group.
    pub fn group(population: &str, year: i32) -> Where {
        Where { population: Some(population.into()), year: Some(year), ..Where::default() }
    }

    /// A location naming a locus.
    pub fn locus(locus: &str) -> Where {
        Where { locus: Some(locus.into()), ..Where::default() }
    }

    /// A location naming a sample.
    pub fn sample(sample: &str) -> Where {
        Where { sample: Some(sample.into()), ..Where::default() }
    }
}

/// A data-quality or interpretation note that travels with the results.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Finding {
    /// How serious it is.
    pub level: FindingLevel,
    /// A stable kebab-case code, for example `low-sample-size`.
    pub code: String,
    /// A sentence for the reader saying what, where, and what follows.
    pub message: String,
    /// Where it applies.
    #[serde(default, rename = "where", skip_serializing_if = "is_default_where")]
    pub location: Where,
}

fn is_default_where(w: &Where) -> bool {
    *w == Where::default()
}

impl Finding {
    /// A finding at the given level.
    pub fn new(level: FindingLevel, code: &str, message: impl Into<String>, location: Where) -> Finding {
        Finding { level, code: code.into(), message: message.into(), location }
    }

    /// An informational finding.
    pub fn info(code: &str, message: impl Into<String>, location: Where) -> Finding {
        Finding::new(FindingLevel::Info, code, message, location)
    }

    /// A warning.
    pub fn warning(code: &str, message: impl Into<String>, location: Where) -> Finding {
        Finding::new(FindingLevel::Warning, code, message, location)
    }

    /// An error-level finding (the run goes on; `--strict` makes it fail).
    pub fn error(code: &str, message: impl Into<String>, location: Where) -> Finding {
        Finding::new(FindingLevel::Error, code, message, location)
    }
}

/// One sample or locus a step drops from later steps, with the reason.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Exclusion {
    /// Sample id or locus name.
    pub name: String,
    /// Why it is excluded, in words for the report.
    pub reason: String,
}

/// Samples and loci that later steps must not see.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Filter {
    /// Samples to drop, by id.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub samples: Vec<Exclusion>,
    /// Loci to drop, by name.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub loci: Vec<Exclusion>,
}

impl Filter {
    /// True when nothing is excluded.
    pub fn is_empty(&self) -> bool {
        self.samples.is_empty() && self.loci.is_empty()
    }
}

/// Everything a step returns.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct StepOutput {
    /// Named tables (names and columns as in the results contract).
    #[serde(default)]
    pub tables: BTreeMap<String, Table>,
    /// Findings, in the order found.
    #[serde(default)]
    pub findings: Vec<Finding>,
    /// Full references of the methods used.
    #[serde(default)]
    pub citations: Vec<String>,
    /// Samples and loci to drop from later steps.
    #[serde(default, skip_serializing_if = "Filter::is_empty")]
    pub filter: Filter,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_serialize_per_contract() {
        let row = vec![Cell::Null, Cell::Int(2019), Cell::Num(0.25), Cell::Inf, Cell::text("North"), Cell::number(f64::NAN)];
        let json = serde_json::to_string(&row).unwrap();
        assert_eq!(json, r#"[null,2019,0.25,"inf","North",null]"#);
        let back: Vec<Cell> = serde_json::from_str(&json).unwrap();
        assert_eq!(back[..5], row[..5]);
        assert_eq!(back[5], Cell::Null);
        assert_eq!(Cell::number(-f64::INFINITY), Cell::Null);
        assert_eq!(Cell::Num(1.5).to_string(), "1.5");
        assert_eq!(Cell::Null.to_string(), "");
    }

    /// The results contract (report/src/contract.rs): an infinite estimate is "inf", an
    /// undefined one null; no NaN or infinity reaches JSON or CSV even from a cell built without
    /// `Cell::number`.
    #[test]
    fn non_finite_numbers_never_reach_json_or_csv() {
        let raw = vec![Cell::Num(f64::NAN), Cell::Num(f64::INFINITY), Cell::Num(f64::NEG_INFINITY)];
        assert_eq!(serde_json::to_string(&raw).unwrap(), r#"[null,"inf",null]"#);
        let csv: Vec<String> = raw.iter().map(Cell::to_string).collect();
        assert_eq!(csv, vec!["", "inf", ""]);
    }

    #[test]
    fn ragged_rows_are_refused() {
        let mut t = Table::new(&["a", "b"]);
        assert!(t.push_row(vec![Cell::Int(1), Cell::Int(2)]).is_ok());
        let err = t.push_row(vec![Cell::Int(1)]).unwrap_err();
        assert_eq!(err.to_string(), "row 1 has 1 cells but the table has 2 columns");
        let parsed: Table = serde_json::from_str(r#"{"columns":["a"],"rows":[[1],[1,2]]}"#).unwrap();
        assert_eq!(parsed.check_rectangular(), Err(TableError::Ragged { row: 1, expected: 1, found: 2 }));
    }

    #[test]
    fn findings_serialize_with_where() {
        let f = Finding::warning("low-sample-size", "only 3 samples", Where::group("North", 2019));
        let json = serde_json::to_string(&f).unwrap();
        assert_eq!(
            json,
            r#"{"level":"warning","code":"low-sample-size","message":"only 3 samples","where":{"population":"North","year":2019}}"#
        );
    }
}

#[cfg(feature = "schema")]
impl schemars::JsonSchema for Cell {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Cell".into()
    }

    fn json_schema(_generator: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "A table cell: a number, text, true/false, null (undefined) or \"inf\" (an infinite estimate)",
            "type": ["number", "string", "boolean", "null"]
        })
    }
}
