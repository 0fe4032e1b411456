//! The names of the results contract: the `uses` of the built-in steps, their table names and
//! their column names, spelled once for the steps that write them, the steps and plugins that
//! read earlier results ([`crate::TableRow`]) and the document.
//!
//! ```
//! use popgauge_abi::contract::{col, table, uses};
//! use popgauge_abi::{Cell, Table};
//!
//! let mut by_group = Table::new(&[col::POPULATION, col::YEAR, col::HO, col::HE]);
//! by_group.push_row(vec![Cell::text("North"), Cell::Int(2020), Cell::Num(0.61), Cell::Num(0.66)]).unwrap();
//! let row = by_group.named_rows().next().unwrap();
//! assert_eq!(row.number(col::HO), Some(0.61));
//! assert_eq!((uses::DIVERSITY, table::BY_GROUP), ("diversity", "by_group"));
//! ```

/// `uses` names of the built-in steps.
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
    pub const NE_LD: &str = crate::ne_steps::NE_LD;
    /// Temporal Ne.
    pub const NE_TEMPORAL: &str = crate::ne_steps::NE_TEMPORAL;
    /// Heterozygote-excess Ne.
    pub const NE_HETX: &str = crate::ne_steps::NE_HETX;
    /// Trends over years.
    pub const TREND: &str = "trend";
    /// Thresholds and projections.
    pub const STATUS: &str = "status";
    /// Inbreeding of individuals.
    pub const INBREEDING: &str = "inbreeding";
    /// Every name above: a step with another `uses` is a plugin (the document lists it under
    /// additional analyses).
    pub const KNOWN: [&str; 10] =
        [VALIDATE, DIVERSITY, HWE, DIFFERENTIATION, NE_LD, NE_TEMPORAL, NE_HETX, TREND, STATUS, INBREEDING];
}

/// Column names of the built-in steps' tables. The Ne estimate columns are documented in
/// [`crate::ne_columns`]; the others are the column's own name (`ho`, `fis_low`, `pop_a`),
/// described with each step in `docs/methods.md`.
pub mod col {
    #![allow(missing_docs)]
    pub use crate::ne_columns::{
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

/// Table names of the built-in steps.
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
