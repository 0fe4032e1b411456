//! Where two results differ: the first differing table cell of two step results, named by its
//! row's identifying cells, and the first differing member of two JSON values.

use popgauge_abi::{Cell, StepResult, Table, format_number};

/// The path of the first member where two JSON values differ, e.g. `entity/popgauge:run`.
pub(super) fn first_json_difference(a: &Option<serde_json::Value>, b: &Option<serde_json::Value>) -> String {
    use serde_json::Value;
    fn walk(a: &Value, b: &Value, path: &mut Vec<String>) -> bool {
        match (a, b) {
            (Value::Object(x), Value::Object(y)) => {
                let keys: std::collections::BTreeSet<&String> = x.keys().chain(y.keys()).collect();
                for key in keys {
                    path.push(key.clone());
                    match (x.get(key), y.get(key)) {
                        (Some(u), Some(v)) if walk(u, v, path) => return true,
                        (Some(_), Some(_)) => {}
                        _ => return true,
                    }
                    path.pop();
                }
                false
            }
            _ => a != b,
        }
    }
    let mut path = Vec::new();
    match (a, b) {
        (Some(a), Some(b)) if walk(a, b, &mut path) => path.join("/"),
        _ => "the top level".into(),
    }
}

/// How the two sides of a comparison are named in messages.
#[derive(Debug, Clone, Copy)]
pub struct Sides {
    /// The reference side.
    pub reference: &'static str,
    /// The side compared with it.
    pub other: &'static str,
}

/// A recorded result against a recomputation.
pub const RECOMPUTED: Sides = Sides { reference: "recorded", other: "recomputed" };

/// The recorded (and reproduced) result against what results.json now holds.
pub const EDITED: Sides = Sides { reference: "recorded", other: "results.json has" };

/// The first difference between two step results, in words.
pub fn first_difference(recorded: &StepResult, recomputed: &StepResult, sides: Sides) -> Option<String> {
    let Sides { reference, other } = sides;
    let names: std::collections::BTreeSet<&String> = recorded.tables.keys().chain(recomputed.tables.keys()).collect();
    for name in names {
        match (recorded.tables.get(name), recomputed.tables.get(name)) {
            (Some(a), Some(b)) => {
                if let Some(d) = table_difference(name, a, b, sides) {
                    return Some(d);
                }
            }
            (Some(_), None) => return Some(format!("table {name} is {reference} but {other} lacks it")),
            (None, Some(_)) => return Some(format!("table {name} is in {other} but not {reference}")),
            (None, None) => {}
        }
    }
    if recorded.findings != recomputed.findings {
        let position = recorded
            .findings
            .iter()
            .zip(&recomputed.findings)
            .position(|(a, b)| a != b)
            .unwrap_or(recorded.findings.len().min(recomputed.findings.len()));
        return Some(format!(
            "findings differ from finding {} on ({} {reference}, {} {other})",
            position + 1,
            recorded.findings.len(),
            recomputed.findings.len()
        ));
    }
    if recorded.citations != recomputed.citations {
        return Some("citations differ".into());
    }
    if recorded.exclusions != recomputed.exclusions {
        return Some("exclusions differ".into());
    }
    (recorded.version != recomputed.version)
        .then(|| format!("step version {} {reference}, {} {other}", recorded.version, recomputed.version))
}

pub(super) fn table_difference(name: &str, a: &Table, b: &Table, sides: Sides) -> Option<String> {
    let Sides { reference, other } = sides;
    if a.columns != b.columns {
        return Some(format!("table {name} has columns {:?} {reference}, {:?} {other}", a.columns, b.columns));
    }
    for (r, (row_a, row_b)) in a.rows.iter().zip(&b.rows).enumerate() {
        for (c, (x, y)) in row_a.iter().zip(row_b).enumerate() {
            if !same_cell(x, y) {
                return Some(format!(
                    "table {name} row {}{} column {}: {reference} {}, {other} {}{}",
                    r + 1,
                    row_key(a, row_a),
                    a.columns[c],
                    show(x),
                    show(y),
                    by_how_much(x, y)
                ));
            }
        }
    }
    (a.rows.len() != b.rows.len())
        .then(|| format!("table {name} has {} rows {reference}, {} {other}", a.rows.len(), b.rows.len()))
}

pub(super) fn same_cell(x: &Cell, y: &Cell) -> bool {
    match (x.as_f64(), y.as_f64()) {
        (Some(a), Some(b)) => a.to_bits() == b.to_bits() || a == b,
        _ => x == y,
    }
}

/// The identifying text cells of a row (population, year, locus…), e.g. ` (Brennmoor, 2024)`.
pub(super) fn row_key(table: &Table, row: &[Cell]) -> String {
    let keys: Vec<String> = ["population", "pop_a", "pop_b", "year", "locus", "sample", "metric", "pcrit"]
        .iter()
        .filter_map(|k| table.column(k).map(|i| row[i].to_string()))
        .filter(|s| !s.is_empty())
        .collect();
    if keys.is_empty() { String::new() } else { format!(" ({})", keys.join(", ")) }
}

pub(super) fn show(cell: &Cell) -> String {
    match cell {
        Cell::Null => "null".into(),
        Cell::Text(t) => format!("\"{t}\""),
        other => other.to_string(),
    }
}

pub(super) fn by_how_much(x: &Cell, y: &Cell) -> String {
    match (x.as_f64(), y.as_f64()) {
        (Some(a), Some(b)) if a.is_finite() && b.is_finite() => format!(" (by {})", format_number(b - a)),
        _ => String::new(),
    }
}
