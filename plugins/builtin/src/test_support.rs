//! Test data and helpers shared by the steps' unit tests: a genotype-matrix builder from cell
//! strings such as `"152/156"`, a runner that resolves parameters the way the engine does, and
//! table accessors.

pub(crate) mod accuracy;
pub(crate) mod sim;

use std::collections::{BTreeMap, BTreeSet};

use popgauge_abi::{
    AlleleCode, AssessmentInfo, Cell, Finding, GenotypeMatrix, LocusMeta, SampleMeta, Seed, Step, StepContext,
    StepError, StepOutput, Table,
};

/// The spelling of an untyped cell or allele in test data.
const UNTYPED: &str = ".";

/// Builds a [`GenotypeMatrix`] row by row from cells like `"1/2"`; `"./."` or `"."` is
/// untyped, `"1/."` has one allele untyped. Allele labels are coded in sorted order per locus.
pub(crate) struct MatrixBuilder {
    loci: Vec<String>,
    samples: Vec<SampleMeta>,
    cells: Vec<Vec<String>>,
}

impl MatrixBuilder {
    pub(crate) fn new(loci: &[&str]) -> MatrixBuilder {
        MatrixBuilder { loci: loci.iter().map(|l| l.to_string()).collect(), samples: Vec::new(), cells: Vec::new() }
    }

    /// Adds one sample with one cell per locus.
    pub(crate) fn sample(mut self, id: &str, population: &str, year: i32, cells: &[&str]) -> MatrixBuilder {
        assert_eq!(cells.len(), self.loci.len(), "sample {id}: one cell per locus");
        self.samples.push(SampleMeta { id: id.into(), population: population.into(), year });
        self.cells.push(cells.iter().map(|c| c.to_string()).collect());
        self
    }

    /// Adds `count` samples `{prefix}1…{prefix}{count}` with the same cells.
    pub(crate) fn samples(
        mut self,
        prefix: &str,
        population: &str,
        year: i32,
        count: usize,
        cells: &[&str],
    ) -> MatrixBuilder {
        for i in 1..=count {
            self = self.sample(&format!("{prefix}{i}"), population, year, cells);
        }
        self
    }

    pub(crate) fn build(self) -> GenotypeMatrix {
        let labels: Vec<Vec<String>> = (0..self.loci.len()).map(|l| self.labels_at(l)).collect();
        let mut codes = Vec::with_capacity(self.samples.len() * self.loci.len() * 2);
        for (l, locus_labels) in labels.iter().enumerate() {
            for row in &self.cells {
                let (a, b) = split_cell(&row[l]);
                codes.push(code_of(locus_labels, a));
                codes.push(code_of(locus_labels, b));
            }
        }
        let loci = self
            .loci
            .iter()
            .zip(labels)
            .map(|(name, alleles)| LocusMeta { name: name.clone(), alleles, chromosome: None, position: None })
            .collect();
        GenotypeMatrix::new(self.samples, loci, codes).expect("test matrix is well formed")
    }

    fn labels_at(&self, locus: usize) -> Vec<String> {
        let mut labels = BTreeSet::new();
        for row in &self.cells {
            let (a, b) = split_cell(&row[locus]);
            labels.extend([a, b].into_iter().filter(|x| *x != UNTYPED).map(str::to_string));
        }
        labels.into_iter().collect()
    }
}

fn split_cell(cell: &str) -> (&str, &str) {
    cell.split_once('/').unwrap_or((UNTYPED, UNTYPED))
}

fn code_of(labels: &[String], allele: &str) -> AlleleCode {
    match labels.iter().position(|l| l == allele) {
        Some(i) => AlleleCode(u16::try_from(i + 1).expect("few alleles in tests")),
        None => AlleleCode::UNTYPED,
    }
}

/// Resolves `params` (a JSON object) against the step's descriptor and runs it on the full view.
pub(crate) fn try_run_step(
    step: &dyn Step,
    matrix: &GenotypeMatrix,
    params: serde_json::Value,
    input_findings: &[Finding],
) -> Result<StepOutput, StepError> {
    let given: BTreeMap<String, serde_json::Value> = match params {
        serde_json::Value::Object(map) => map.into_iter().collect(),
        other => panic!("params must be a JSON object, not {other}"),
    };
    let resolved = step.descriptor().resolve(&given).expect("test parameters are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(20_261_130))
        .with_assessment(&assessment)
        .with_input_findings(input_findings);
    step.run(&ctx)
}

/// [`try_run_step`] for runs that must succeed.
pub(crate) fn run_step(step: &dyn Step, matrix: &GenotypeMatrix, params: serde_json::Value) -> StepOutput {
    try_run_step(step, matrix, params, &[]).expect("step runs")
}

/// The table of that name.
pub(crate) fn table<'o>(output: &'o StepOutput, name: &str) -> &'o Table {
    output.tables.get(name).unwrap_or_else(|| panic!("no table `{name}`"))
}

/// The cell at `row` in `column`.
pub(crate) fn cell<'t>(table: &'t Table, row: usize, column: &str) -> &'t Cell {
    let index = table.column(column).unwrap_or_else(|| panic!("no column `{column}` in {:?}", table.columns));
    &table.rows[row][index]
}

/// The numeric value at `row` in `column`, `None` for null.
pub(crate) fn number(table: &Table, row: usize, column: &str) -> Option<f64> {
    match cell(table, row, column) {
        Cell::Null => None,
        other => Some(other.as_f64().unwrap_or_else(|| panic!("`{column}` row {row} is not a number: {other:?}"))),
    }
}

/// The text at `row` in `column`, `None` for null.
pub(crate) fn text<'t>(table: &'t Table, row: usize, column: &str) -> Option<&'t str> {
    match cell(table, row, column) {
        Cell::Null => None,
        other => Some(other.as_str().unwrap_or_else(|| panic!("`{column}` row {row} is not text: {other:?}"))),
    }
}

/// Index of the first row whose `column` holds the text `value`.
pub(crate) fn row_with(table: &Table, column: &str, value: &str) -> usize {
    (0..table.rows.len())
        .find(|&r| text(table, r, column) == Some(value))
        .unwrap_or_else(|| panic!("no row with {column} = {value}"))
}

/// The findings with the given code.
pub(crate) fn findings_with<'o>(output: &'o StepOutput, code: &str) -> Vec<&'o Finding> {
    output.findings.iter().filter(|f| f.code == code).collect()
}

/// Asserts `|actual − expected| ≤ tolerance`, naming both values when it fails.
pub(crate) fn assert_close(actual: f64, expected: f64, tolerance: f64) {
    assert!((actual - expected).abs() <= tolerance, "expected {expected} ± {tolerance}, got {actual}");
}
