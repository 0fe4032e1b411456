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

/// Defines each name as a `&str` constant and lists them all in `ALL`.
macro_rules! names {
    ($($name:ident = $value:literal;)*) => {
        $(pub const $name: &str = $value;)*
        /// Every name defined here, in order.
        pub const ALL: &[&str] = &[$($name),*];
    };
}

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
/// described with each step in `docs/methods.md`. `ALL` lists the names defined here (not the
/// Ne columns); a test checks that the built-in steps write every one of them.
pub mod col {
    #![allow(missing_docs)]
    pub use crate::ne_columns::{
        NE, NE_FS, NE_HIGH, NE_JACK_HIGH, NE_JACK_LOW, NE_LOW, NE_PARAM_HIGH, NE_PARAM_LOW, NE_RESAMPLE_HIGH,
        NE_RESAMPLE_LOW, PCRIT, POPULATION, S, YEAR, YEAR_END, YEAR_START,
    };
    names! {
        LOCUS = "locus";
        SAMPLE = "sample";
        STATUS = "status";
        REASON = "reason";
        N = "n";
        N_TOTAL = "n_total";
        N_KEPT = "n_kept";
        HO = "ho";
        HE = "he";
        F = "f";
        FIS = "fis";
        FIS_LOW = "fis_low";
        FIS_HIGH = "fis_high";
        ALLELES_MEAN = "alleles_mean";
        AR = "ar";
        PAR = "par";
        P_VALUE = "p_value";
        Q_VALUE = "q_value";
        DIRECTION = "direction";
        POP_A = "pop_a";
        POP_B = "pop_b";
        FST = "fst";
        FST_P = "fst_p";
        FST_LOW = "fst_low";
        FST_HIGH = "fst_high";
        JOST_D = "jost_d";
        GST_PP = "gst_pp";
        F_DRIFT = "f_drift";
        F_DRIFT_LOW = "f_drift_low";
        F_DRIFT_HIGH = "f_drift_high";
        H_RETAINED_LOW = "h_retained_low";
        H_RETAINED_HIGH = "h_retained_high";
        TREND_DIRECTION = "direction";
        NE_REQUIRED = "ne_required";
        RETAIN_TARGET = "retain_target";
        GENERATIONS = "generations";
        METRIC = "metric";
        POINTS = "points";
        MK_TAU = "mk_tau";
        MK_P = "mk_p";
        SEN_SLOPE = "sen_slope";
        OLS_SLOPE = "ols_slope";
        OLS_LOW = "ols_low";
        OLS_HIGH = "ols_high";
        NE_METHOD = "ne_method";
        NE_YEAR = "ne_year";
        VALUE = "value";
        INTERVAL_NOTE = "interval_note";
        CATEGORY = "category";
        CENSUS_SIZE = "census_size";
        NE_NC = "ne_nc";
        H_RETAINED = "h_retained";
    }
    pub const D: &str = "d";
}

/// Table names of the built-in steps.
pub mod table {
    #![allow(missing_docs)]
    names! {
        LOCI = "loci";
        SAMPLES = "samples";
        GROUPS = "groups";
        BY_GROUP = "by_group";
        BY_LOCUS = "by_locus";
        PAIRWISE = "pairwise";
        GLOBAL = "global";
        IBD = "ibd";
        IBD_TEST = "ibd_test";
        ESTIMATES = "estimates";
        TESTS = "tests";
        SERIES = "series";
        PAIRED = "paired";
        POPULATIONS = "populations";
        PROJECTION = "projection";
        INDICATOR = "indicator";
    }
    pub const HORIZON: &str = "horizon";
}
