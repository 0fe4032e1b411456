//! Reading `results.json` by the results contract: step results by `uses`, tables
//! and columns by name. The column names the document relies on are spelled here once.
//!
//! A table that is absent, or a column a table lacks, reads as "not there" (`None`), never as
//! an error: the document shows what the recipe produced and says what it did not.

use popgauge_abi::{Cell, StepResult, StepStatus, Table};

use popgauge_engine::results::ResultsDocument;

/// Built-in `uses` names the document has a section for.
pub mod uses {
    /// Data checks.
    pub const VALIDATE: &str = "validate";
    /// Diversity and inbreeding.
    pub const DIVERSITY: &str = "diversity";
    /// Hardy–Weinberg tests.
    pub const HWE: &str = "hwe";
    /// FST and relatives.
    pub const DIFFERENTIATION: &str = "differentiation";
    /// Linkage-disequilibrium Ne.
    pub const NE_LD: &str = "ne-ld";
    /// Temporal Ne.
    pub const NE_TEMPORAL: &str = "ne-temporal";
    /// Heterozygote-excess Ne.
    pub const NE_HETX: &str = "ne-hetx";
    /// Trends over years.
    pub const TREND: &str = "trend";
    /// Thresholds and projections.
    pub const STATUS: &str = "status";
    /// Inbreeding of individuals.
    pub const INBREEDING: &str = "inbreeding";
    /// Every name above: a step with another `uses` is an additional analysis.
    pub const KNOWN: [&str; 10] =
        [VALIDATE, DIVERSITY, HWE, DIFFERENTIATION, NE_LD, NE_TEMPORAL, NE_HETX, TREND, STATUS, INBREEDING];
}

/// Contract column names.
pub mod col {
    #![allow(missing_docs)]
    // The Ne estimate columns are spelled once, in the SDK, for steps, plugins and the report.
    pub use popgauge_abi::ne_columns::{
        NE, NE_FS, NE_HIGH, NE_JACK_HIGH, NE_JACK_LOW, NE_LOW, NE_PARAM_HIGH, NE_PARAM_LOW, NE_RESAMPLE_HIGH,
        NE_RESAMPLE_LOW, PCRIT, POPULATION, S, YEAR, YEAR_END, YEAR_START,
    };
    pub const LOCUS: &str = "locus";
    pub const SAMPLE: &str = "sample";
    pub const STATUS: &str = "status";
    pub const REASON: &str = "reason";
    pub const N: &str = "n";
    pub const N_TOTAL: &str = "n_total";
    pub const N_KEPT: &str = "n_kept";
    pub const HO: &str = "ho";
    pub const HE: &str = "he";
    pub const F: &str = "f";
    pub const FIS: &str = "fis";
    pub const FIS_LOW: &str = "fis_low";
    pub const FIS_HIGH: &str = "fis_high";
    pub const ALLELES_MEAN: &str = "alleles_mean";
    pub const AR: &str = "ar";
    pub const PAR: &str = "par";
    pub const P_VALUE: &str = "p_value";
    pub const Q_VALUE: &str = "q_value";
    pub const DIRECTION: &str = "direction";
    pub const POP_A: &str = "pop_a";
    pub const POP_B: &str = "pop_b";
    pub const FST: &str = "fst";
    pub const FST_P: &str = "fst_p";
    pub const FST_LOW: &str = "fst_low";
    pub const FST_HIGH: &str = "fst_high";
    pub const JOST_D: &str = "jost_d";
    pub const GST_PP: &str = "gst_pp";
    pub const F_DRIFT: &str = "f_drift";
    pub const F_DRIFT_LOW: &str = "f_drift_low";
    pub const F_DRIFT_HIGH: &str = "f_drift_high";
    pub const H_RETAINED_LOW: &str = "h_retained_low";
    pub const H_RETAINED_HIGH: &str = "h_retained_high";
    pub const TREND_DIRECTION: &str = "direction";
    pub const NE_REQUIRED: &str = "ne_required";
    pub const RETAIN_TARGET: &str = "retain_target";
    pub const GENERATIONS: &str = "generations";
    pub const METRIC: &str = "metric";
    pub const POINTS: &str = "points";
    pub const MK_TAU: &str = "mk_tau";
    pub const MK_P: &str = "mk_p";
    pub const SEN_SLOPE: &str = "sen_slope";
    pub const OLS_SLOPE: &str = "ols_slope";
    pub const OLS_LOW: &str = "ols_low";
    pub const OLS_HIGH: &str = "ols_high";
    pub const NE_METHOD: &str = "ne_method";
    pub const NE_YEAR: &str = "ne_year";
    pub const VALUE: &str = "value";
    pub const INTERVAL_NOTE: &str = "interval_note";
    pub const CATEGORY: &str = "category";
    pub const CENSUS_SIZE: &str = "census_size";
    pub const NE_NC: &str = "ne_nc";
    pub const H_RETAINED: &str = "h_retained";
    pub const D: &str = "d";
}

/// Contract table names.
pub mod table {
    #![allow(missing_docs)]
    pub const LOCI: &str = "loci";
    pub const SAMPLES: &str = "samples";
    pub const GROUPS: &str = "groups";
    pub const BY_GROUP: &str = "by_group";
    pub const BY_LOCUS: &str = "by_locus";
    pub const PAIRWISE: &str = "pairwise";
    pub const GLOBAL: &str = "global";
    pub const IBD: &str = "ibd";
    pub const IBD_TEST: &str = "ibd_test";
    pub const ESTIMATES: &str = "estimates";
    pub const TESTS: &str = "tests";
    pub const SERIES: &str = "series";
    pub const PAIRED: &str = "paired";
    pub const POPULATIONS: &str = "populations";
    pub const PROJECTION: &str = "projection";
    pub const INDICATOR: &str = "indicator";
    pub const HORIZON: &str = "horizon";
}

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

    /// The rows.
    pub fn iter(&self) -> impl Iterator<Item = Row<'a>> + 'a {
        let table = self.table;
        table.rows.iter().map(move |cells| Row { table, cells })
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

/// One row read by column name.
#[derive(Debug, Clone, Copy)]
pub struct Row<'a> {
    table: &'a Table,
    cells: &'a [Cell],
}

impl<'a> Row<'a> {
    /// The cell of a column, `None` when the table has no such column.
    pub fn cell(&self, column: &str) -> Option<&'a Cell> {
        self.table.column(column).and_then(|i| self.cells.get(i))
    }

    /// A text column's value (numbers are not text).
    pub fn text(&self, column: &str) -> Option<&'a str> {
        self.cell(column).and_then(Cell::as_str)
    }

    /// A numeric column's value; `"inf"` is +∞, `null` is `None`.
    pub fn num(&self, column: &str) -> Option<f64> {
        self.cell(column).and_then(Cell::as_f64)
    }

    /// An integer column's value (years, counts).
    pub fn int(&self, column: &str) -> Option<i64> {
        match self.cell(column)? {
            Cell::Int(i) => Some(*i),
            Cell::Num(x) if x.fract() == 0.0 && x.abs() < 1e15 => Some(*x as i64),
            _ => None,
        }
    }

    /// A column as display text whatever its kind (text as is, numbers shortest).
    pub fn label(&self, column: &str) -> Option<String> {
        self.cell(column).filter(|c| !matches!(c, Cell::Null)).map(|c| c.to_string())
    }
}
