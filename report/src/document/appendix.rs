//! The appendix tables and the collector that gathers them, with the charts, while the
//! sections are built: which tables print whole, in an excerpt, or as a column summary
//! that names the CSV file with every row, and how each is set.

use std::collections::BTreeSet;

use rayon::prelude::*;
use serde::Serialize;

use super::super::figures::Figure;
use super::super::format;
use super::table::{self, TableData};
use super::{APPENDIX_PAGE_ROWS, APPENDIX_ROWS, BODY_LIMIT, BODY_ROWS};

/// A table in the appendix.
#[derive(Debug, Clone, Serialize)]
pub struct AppendixTable {
    /// Short key the body refers to (`A1`, `A2`, …).
    pub key: String,
    /// Title.
    pub title: String,
    /// How to set it: `normal`, `two-columns` (many short rows) or `landscape` (many columns).
    pub layout: String,
    /// The table, at most [`APPENDIX_ROWS`] rows.
    pub table: TableData,
    /// Set when rows were left out because of [`APPENDIX_ROWS`].
    pub excerpt: Option<Excerpt>,
    /// Set instead of rows when a step's table is longer than a page: a summary of its
    /// columns and the CSV file with every row.
    pub summary: Option<AppendixSummary>,
}

/// A step's table too long for a page, summarised column by column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AppendixSummary {
    /// Rows in the table, display text.
    pub rows: String,
    /// The CSV file with every row.
    pub file: String,
    /// One row per column: its heading, how many values (or distinct texts), and the lowest,
    /// median and highest value as the table prints them.
    pub columns: TableData,
}

/// How many rows a table of this layout prints on about one page.
fn page_capacity(layout: &str) -> usize {
    match layout {
        "two-columns" => 2 * APPENDIX_PAGE_ROWS,
        "landscape" => APPENDIX_PAGE_ROWS * 2 / 3,
        _ => APPENDIX_PAGE_ROWS,
    }
}

/// A displayed number read back for ordering (`−0.082`, `1,234`, `∞`, `< 0.001`); `None`
/// for text.
fn display_value(text: &str) -> Option<f64> {
    let plain = text.trim();
    // Most cells are plain numbers: read them without the rewriting below (the same value).
    if plain.bytes().all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'-' | b'+' | b'e' | b'E')) {
        return plain.parse().ok();
    }
    let t = plain.replace('−', "-").replace(',', "").replace(" %", "");
    match t.as_str() {
        "∞" => Some(f64::INFINITY),
        "-∞" => Some(f64::NEG_INFINITY),
        _ => t.strip_prefix("< ").map_or_else(|| t.parse().ok(), |v| v.parse::<f64>().ok().map(|v| v / 2.0)),
    }
}

/// The column-by-column summary of a table (numbers: count, lowest, median, highest;
/// text: how many distinct values).
fn summarise(table: &TableData) -> TableData {
    let mut out =
        TableData::new(&[("Column", false), ("Values", true), ("Lowest", true), ("Median", true), ("Highest", true)]);
    let summaries: Vec<Vec<String>> =
        (0..table.columns.len()).into_par_iter().map(|c| summarise_column(table, c)).collect();
    for row in summaries {
        out.push(row);
    }
    out
}

/// One row of [`summarise`]: column `c`.
fn summarise_column(table: &TableData, c: usize) -> Vec<String> {
    let heading = table.columns[c].clone();
    let cells: Vec<&str> =
        table.rows.iter().map(|r| r[c].as_str()).filter(|v| *v != format::UNDEFINED && !v.is_empty()).collect();
    let numbers: Vec<(f64, &str)> = cells.iter().filter_map(|v| Some((display_value(v)?, *v))).collect();
    if table.numeric[c] && !numbers.is_empty() && numbers.len() == cells.len() {
        let [lowest, median, highest] = order_statistics(&numbers);
        return vec![
            heading,
            format::count(numbers.len()),
            lowest.to_string(),
            median.to_string(),
            highest.to_string(),
        ];
    }
    let distinct: BTreeSet<&str> = cells.iter().copied().collect();
    vec![
        heading,
        format!("{} distinct", format::count(distinct.len())),
        format::UNDEFINED.into(),
        format::UNDEFINED.into(),
        format::UNDEFINED.into(),
    ]
}

/// The texts of the lowest, median (the lower of the middle two) and highest of `numbers`, as
/// in their stable sort by value: ties go by position, so the lowest is the first of the least
/// values and the highest the last of the greatest. Found by selection, in linear time.
fn order_statistics<'a>(numbers: &[(f64, &'a str)]) -> [&'a str; 3] {
    let key = |&(value, _): &(f64, &str), position: usize| (value, position);
    let order = |a: &(f64, usize), b: &(f64, usize)| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1));
    let mut keyed: Vec<(f64, usize)> = numbers.iter().enumerate().map(|(i, number)| key(number, i)).collect();
    let lowest = keyed.iter().min_by(|a, b| order(a, b)).map_or(0, |k| k.1);
    let highest = keyed.iter().max_by(|a, b| order(a, b)).map_or(0, |k| k.1);
    let middle = (keyed.len() - 1) / 2;
    let median = keyed.select_nth_unstable_by(middle, order).1.1;
    [numbers[lowest].1, numbers[median].1, numbers[highest].1]
}

/// What an appendix table that prints only its first rows leaves out.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Excerpt {
    /// How many rows are not printed, as display text (`239,500`).
    pub omitted: String,
    /// The output file that holds every row (`tables/<step>.<table>.csv` or `results.json`).
    pub file: String,
}

/// How an appendix table is best set: on its side when it has many columns, in two columns
/// when its rows are many and short.
fn appendix_layout(table: &TableData) -> &'static str {
    // A heading wraps at its spaces, so its longest word is what it needs at the least.
    let heading_width = |h: &String| h.split_whitespace().map(|w| w.chars().count()).max().unwrap_or(0);
    let widths: Vec<usize> = (0..table.columns.len())
        .into_par_iter()
        .map(|c| {
            let cells = table.rows.iter().map(|r| r[c].chars().count()).max().unwrap_or(0);
            cells.max(heading_width(&table.columns[c])) + 2
        })
        .collect();
    let widest_row = widths.iter().sum::<usize>();
    if table.columns.len() > 14 {
        "landscape"
    } else if table.rows.len() > 30 && widest_row <= 64 {
        "two-columns"
    } else {
        "normal"
    }
}

/// Collects figures and appendix tables while the sections are built.
#[derive(Debug, Default)]
pub(crate) struct Extras {
    pub(super) figures: Vec<(String, Figure, String)>,
    pub(super) appendix: Vec<AppendixTable>,
}

impl Extras {
    /// Adds a chart under `key` with its text alternative.
    pub(crate) fn figure(&mut self, key: &str, figure: Figure, alt: String) {
        self.figures.push((key.to_string(), figure, alt));
    }

    /// Adds an appendix table and returns its key (`A1`, …), for the body to refer to. Of a
    /// table longer than [`APPENDIX_ROWS`] only the first rows are kept, and the document
    /// points to `full_table`, the output file with every row.
    pub(crate) fn appendix(&mut self, title: String, mut table: TableData, full_table: String) -> String {
        let key = format!("A{}", self.appendix.len() + 1);
        for heading in &mut table.columns {
            *heading = table::heading_for(&heading.replace('\u{200B}', ""));
        }
        let layout = appendix_layout(&table).to_string();
        if full_table.starts_with("tables/") && table.rows.len() > page_capacity(&layout) {
            let summary =
                AppendixSummary { rows: format::count(table.rows.len()), file: full_table, columns: summarise(&table) };
            let empty = TableData { rows: Vec::new(), ..table };
            self.appendix.push(AppendixTable {
                key: key.clone(),
                title,
                layout: "normal".into(),
                table: empty,
                excerpt: None,
                summary: Some(summary),
            });
            return key;
        }
        let excerpt = table
            .split_off(APPENDIX_ROWS)
            .map(|rest| Excerpt { omitted: format::count(rest.rows.len()), file: full_table });
        self.appendix.push(AppendixTable { key: key.clone(), title, layout, table, excerpt, summary: None });
        key
    }

    /// Keeps a table of up to [`BODY_LIMIT`] rows whole; of a longer one keeps the first
    /// [`BODY_ROWS`] rows in the body and moves the rest to the appendix under `title`
    /// (`full_table` as for [`Extras::appendix`]). Returns the appendix key when rows moved.
    pub(crate) fn overflow(&mut self, table: &mut TableData, title: String, full_table: String) -> Option<String> {
        if table.rows.len() <= BODY_LIMIT {
            return None;
        }
        table.split_off(BODY_ROWS).map(|rest| self.appendix(title, rest, full_table))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn displayed_numbers_read_back_in_order() {
        assert_eq!(display_value("−0.082"), Some(-0.082));
        assert_eq!(display_value("1,234"), Some(1234.0));
        assert_eq!(display_value("∞"), Some(f64::INFINITY));
        assert_eq!(display_value("12.5 %"), Some(12.5));
        assert!(display_value("< 0.001").is_some_and(|v| v < 0.001));
        assert_eq!(display_value("Brennmoor"), None);
        assert_eq!(display_value(" 2.5e-3 "), Some(0.0025));
        assert_eq!(display_value(""), None);
    }

    /// The lowest, median and highest texts are those of a stable sort by value (common
    /// practice: the lower median of an even count; ties by position).
    #[test]
    fn order_statistics_match_a_stable_sort() {
        let texts = ["0.30", "0.1", "0.10", "0.5", "0.3", "0.50", "-0", "0"];
        let numbers: Vec<(f64, &str)> = texts.iter().map(|t| (display_value(t).expect("a number"), *t)).collect();
        let mut sorted = numbers.clone();
        sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
        let expected = [sorted[0].1, sorted[(sorted.len() - 1) / 2].1, sorted[sorted.len() - 1].1];
        assert_eq!(order_statistics(&numbers), expected);
        assert_eq!(expected, ["-0", "0.10", "0.50"]);
        for n in 1..texts.len() {
            let part = &numbers[..n];
            let mut sorted = part.to_vec();
            sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
            assert_eq!(order_statistics(part), [sorted[0].1, sorted[(n - 1) / 2].1, sorted[n - 1].1], "first {n}");
        }
    }
}
