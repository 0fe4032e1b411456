//! Which Ne estimate represents a population in a year: one rule for every reader of the Ne
//! steps' results (the `status` and `trend` steps, the document, an external summary step).
//!
//! A step or report that needs "the Ne of population P in year Y" calls
//! [`representative_ne`] with the earlier results, P, Y and a preference list of
//! [`NeSource`]s; it gets a [`RepresentativeNe`] naming the estimate, its 95% interval, which
//! step, row and criterion it came from, and why.
//!
//! # The rule
//! The sources are tried in the order of the preference list; the first that has an estimate
//! (a numeric `ne`, `+∞` included) for the population and year is used. Each source reads the
//! `estimates` table of the last earlier step of its kind that ran ([`StepStatus::Ok`]).
//!
//! - **`ld`** (`ne-ld`, column `ne`; the row of that `year`). The rare-allele criterion follows
//!   the sample size, as Waples & Do (2010, Evol Appl 3:244–262) recommend: alleles below
//!   Pcrit = 0.02 are screened out when the harmonic-mean sample size S exceeds 25; at S ≤ 25 a
//!   Pcrit of 0.02 would screen alleles with fewer than 0.04·S ≤ 1 copies, that is none, and the
//!   rule drops the alleles seen once instead (any 1/(2S) < Pcrit ≤ 1/S does that: the
//!   no-singletons row, `pcrit = "singletons"`). S is the `s` of the group's Pcrit-0.02 row, else
//!   of its no-singletons row, else of its first row giving one (the criteria differ in S only
//!   through the weights of pairs with missing data). When the step did not estimate the
//!   criterion the rule asks for, the group's first row with an estimate is used and
//!   [`CriterionReason::RuleCriterionMissing`] says so.
//! - **`ld:<pcrit>`**, **`ld:singletons`**: that criterion, whatever the sample size.
//! - **`temporal`** (`ne-temporal`, column `ne_fs`): of the rows ending in the year, the one
//!   with the latest `year_start`; without one, the row ending latest before the year (again
//!   the latest-starting of those). The latest start gives the shortest, most recent interval:
//!   it describes the generations just before the year, and the intervals chosen for successive
//!   years do not share samples, so a series of them (`trend`) holds independent estimates.
//!   Ties keep the first row in table order.
//! - **`hetx`** (`ne-hetx`, column `ne`): the row of the year.
//!
//! The interval of an `ld` row is the first complete one (both bounds numeric) of
//! `ne_resample_*` (loci and individuals resampled, the recommended one), `ne_jack_*`,
//! `ne_param_*`; of a `temporal` or `hetx` row, `ne_low`/`ne_high`. Two Pcrit values are the same
//! when they differ by less than [`PCRIT_TOLERANCE`].
//!
//! An estimate whose lower bound is `+∞` is not an estimate of size at all: the data cannot
//! tell Ne from infinity at either end ([`RepresentativeNe::is_estimable`]).
//!
//! ```
//! use popgauge_abi::{Cell, NeSource, StepResult, StepStatus, Table, representative_ne};
//!
//! let mut estimates = Table::new(&["population", "year", "pcrit", "s", "ne"]);
//! estimates.push_row(vec![Cell::text("North"), Cell::Int(2020), Cell::Num(0.02), Cell::Num(18.0), Cell::Num(95.0)]).unwrap();
//! estimates.push_row(vec![Cell::text("North"), Cell::Int(2020), Cell::text("singletons"), Cell::Num(18.0), Cell::Num(60.0)]).unwrap();
//! let ld = StepResult {
//!     id: "ld".into(), uses: "ne-ld".into(), version: "0.1.0".into(), status: StepStatus::Ok, error: None,
//!     tables: [("estimates".to_string(), estimates)].into_iter().collect(),
//!     findings: vec![], citations: vec![], exclusions: Default::default(),
//! };
//! let chosen = representative_ne(&[ld], "North", 2020, &NeSource::default_preference()).unwrap();
//! assert_eq!((chosen.ne, chosen.method().as_str()), (60.0, "ld:singletons")); // S = 18 ≤ 25
//! ```

use std::fmt;

use crate::output::Cell;
use crate::step::{StepResult, StepStatus};
use crate::table_row::TableRow;

/// `uses` names of the built-in Ne steps and the name of their table.
pub mod ne_steps {
    /// Linkage-disequilibrium Ne.
    pub const NE_LD: &str = "ne-ld";
    /// Temporal Ne.
    pub const NE_TEMPORAL: &str = "ne-temporal";
    /// Heterozygote-excess Ne.
    pub const NE_HETX: &str = "ne-hetx";
    /// The table of estimates every Ne step writes.
    pub const ESTIMATES: &str = "estimates";
}

/// Column names of the Ne steps' `estimates` tables (results contract).
pub mod ne_columns {
    /// Population name (all three steps).
    pub const POPULATION: &str = "population";
    /// Sampling year of the group (`ne-ld`, `ne-hetx`).
    pub const YEAR: &str = "year";
    /// First sampling year of a comparison (`ne-temporal`).
    pub const YEAR_START: &str = "year_start";
    /// Second sampling year of a comparison (`ne-temporal`); the year its estimate refers to.
    pub const YEAR_END: &str = "year_end";
    /// Rare-allele criterion of an `ne-ld` row: a number, or [`SINGLETONS`].
    pub const PCRIT: &str = "pcrit";
    /// The `pcrit` text of the no-singletons row.
    pub const SINGLETONS: &str = "singletons";
    /// Harmonic-mean sample size of an `ne-ld` row.
    pub const S: &str = "s";
    /// The estimate (`ne-ld`, `ne-hetx`).
    pub const NE: &str = "ne";
    /// The F_s estimate of `ne-temporal`.
    pub const NE_FS: &str = "ne_fs";
    /// Lower bound of the 95% interval of `ne` (`ne-hetx`) or `ne_fs` (`ne-temporal`).
    pub const NE_LOW: &str = "ne_low";
    /// Upper bound of that interval.
    pub const NE_HIGH: &str = "ne_high";
    /// `ne-ld` parametric (χ²) interval, lower bound.
    pub const NE_PARAM_LOW: &str = "ne_param_low";
    /// `ne-ld` parametric (χ²) interval, upper bound.
    pub const NE_PARAM_HIGH: &str = "ne_param_high";
    /// `ne-ld` jackknife-over-loci interval, lower bound.
    pub const NE_JACK_LOW: &str = "ne_jack_low";
    /// `ne-ld` jackknife-over-loci interval, upper bound.
    pub const NE_JACK_HIGH: &str = "ne_jack_high";
    /// `ne-ld` resampling interval (loci and individuals), lower bound.
    pub const NE_RESAMPLE_LOW: &str = "ne_resample_low";
    /// `ne-ld` resampling interval (loci and individuals), upper bound.
    pub const NE_RESAMPLE_HIGH: &str = "ne_resample_high";
}

/// Two Pcrit values closer than this are the same Pcrit.
pub const PCRIT_TOLERANCE: f64 = 1e-9;
/// Largest harmonic-mean sample size at which the LD rule drops singletons rather than screening
/// at [`LARGE_SAMPLE_PCRIT`] (Waples & Do 2010).
pub const SINGLETONS_MAX_SAMPLE_SIZE: f64 = 25.0;
/// The Pcrit the LD rule uses above [`SINGLETONS_MAX_SAMPLE_SIZE`] (Waples & Do 2010).
pub const LARGE_SAMPLE_PCRIT: f64 = 0.02;
/// The default preference: LD by sample size, then temporal, then heterozygote excess.
pub const DEFAULT_PREFERENCE: [&str; 3] = ["ld", "temporal", "hetx"];

/// The rare-allele criterion of an `ne-ld` row.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LdCriterion {
    /// Alleles with frequency below this are dropped.
    Pcrit(f64),
    /// Alleles seen once are dropped.
    NoSingletons,
}

impl LdCriterion {
    /// The criterion the Waples & Do (2010) rule gives at harmonic-mean sample size `s`:
    /// no singletons at S ≤ 25, Pcrit 0.02 above.
    pub fn for_sample_size(s: f64) -> LdCriterion {
        if s <= SINGLETONS_MAX_SAMPLE_SIZE { LdCriterion::NoSingletons } else { LdCriterion::Pcrit(LARGE_SAMPLE_PCRIT) }
    }

    /// The criterion of a `pcrit` cell: a number or the text `"singletons"`.
    pub fn of_cell(cell: &Cell) -> Option<LdCriterion> {
        match cell {
            Cell::Text(t) if t == ne_columns::SINGLETONS => Some(LdCriterion::NoSingletons),
            _ => cell.as_f64().filter(|p| p.is_finite()).map(LdCriterion::Pcrit),
        }
    }

    /// Whether a `pcrit` cell holds this criterion (Pcrit within [`PCRIT_TOLERANCE`]).
    pub fn matches(&self, cell: &Cell) -> bool {
        match (self, LdCriterion::of_cell(cell)) {
            (LdCriterion::Pcrit(a), Some(LdCriterion::Pcrit(b))) => (a - b).abs() < PCRIT_TOLERANCE,
            (LdCriterion::NoSingletons, Some(LdCriterion::NoSingletons)) => true,
            _ => false,
        }
    }

    /// As written after `ld:` and in the `pcrit` column: `0.02`, `singletons`.
    pub fn spelling(&self) -> String {
        match self {
            LdCriterion::Pcrit(p) => Cell::number(*p).to_string(),
            LdCriterion::NoSingletons => ne_columns::SINGLETONS.into(),
        }
    }

    /// In words: `Pcrit 0.02`, `no singletons`.
    pub fn label(&self) -> String {
        match self {
            LdCriterion::Pcrit(_) => format!("Pcrit {}", self.spelling()),
            LdCriterion::NoSingletons => "no singletons".into(),
        }
    }
}

/// How an `ld` source picks its criterion.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LdChoice {
    /// By the sample size (`ld`): see the module doc.
    BySampleSize,
    /// This criterion (`ld:0.05`, `ld:singletons`).
    Fixed(LdCriterion),
}

/// One entry of a preference list.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NeSource {
    /// An `ne-ld` estimate.
    Ld(LdChoice),
    /// An `ne-temporal` estimate (`ne_fs`).
    Temporal,
    /// An `ne-hetx` estimate.
    Hetx,
}

/// A preference entry that is not an Ne source.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "\"{word}\" is not an Ne source\n  help: use \"ld\" (criterion by sample size), \"ld:<pcrit>\" (for example \
     \"ld:0.02\"), \"ld:singletons\", \"temporal\" or \"hetx\", in the order you trust them"
)]
pub struct NeSourceError {
    /// The entry as given.
    pub word: String,
}

impl NeSource {
    /// Parses one preference entry: `ld`, `ld:<pcrit>` (0 to 0.5), `ld:singletons`, `temporal`,
    /// `hetx`.
    ///
    /// # Errors
    /// [`NeSourceError`] naming the entry, with a `help:` line listing the spellings.
    pub fn parse(word: &str) -> Result<NeSource, NeSourceError> {
        let bad = || NeSourceError { word: word.into() };
        match word {
            "ld" => Ok(NeSource::Ld(LdChoice::BySampleSize)),
            "temporal" => Ok(NeSource::Temporal),
            "hetx" => Ok(NeSource::Hetx),
            _ => match word.strip_prefix("ld:") {
                Some(ne_columns::SINGLETONS) => Ok(NeSource::Ld(LdChoice::Fixed(LdCriterion::NoSingletons))),
                Some(number) => match number.parse::<f64>() {
                    Ok(p) if (0.0..=0.5).contains(&p) => Ok(NeSource::Ld(LdChoice::Fixed(LdCriterion::Pcrit(p)))),
                    _ => Err(bad()),
                },
                None => Err(bad()),
            },
        }
    }

    /// [`DEFAULT_PREFERENCE`], parsed.
    pub fn default_preference() -> Vec<NeSource> {
        vec![NeSource::Ld(LdChoice::BySampleSize), NeSource::Temporal, NeSource::Hetx]
    }

    /// The `uses` name of the step this source reads.
    pub fn uses(&self) -> &'static str {
        match self {
            NeSource::Ld(_) => ne_steps::NE_LD,
            NeSource::Temporal => ne_steps::NE_TEMPORAL,
            NeSource::Hetx => ne_steps::NE_HETX,
        }
    }

    /// The source that reads a step of this `uses` name (`ld` with `choice`), if it is an Ne step.
    pub fn for_uses(uses: &str, choice: LdChoice) -> Option<NeSource> {
        match uses {
            ne_steps::NE_LD => Some(NeSource::Ld(choice)),
            ne_steps::NE_TEMPORAL => Some(NeSource::Temporal),
            ne_steps::NE_HETX => Some(NeSource::Hetx),
            _ => None,
        }
    }
}

impl fmt::Display for NeSource {
    /// The spelling [`NeSource::parse`] reads.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NeSource::Ld(LdChoice::BySampleSize) => f.write_str("ld"),
            NeSource::Ld(LdChoice::Fixed(c)) => write!(f, "ld:{}", c.spelling()),
            NeSource::Temporal => f.write_str("temporal"),
            NeSource::Hetx => f.write_str("hetx"),
        }
    }
}

/// The kind of step an estimate came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NeKind {
    /// `ne-ld`.
    Ld,
    /// `ne-temporal`.
    Temporal,
    /// `ne-hetx`.
    Hetx,
}

/// Which columns the 95% interval came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IntervalKind {
    /// `ne_resample_*` of `ne-ld`.
    Resampling,
    /// `ne_jack_*` of `ne-ld`.
    Jackknife,
    /// `ne_param_*` of `ne-ld`.
    Parametric,
    /// `ne_low`/`ne_high` of `ne-temporal` or `ne-hetx`.
    NeLowHigh,
}

impl IntervalKind {
    /// The name used in result tables: `resampling`, `jackknife`, `parametric`, `ne_low/ne_high`.
    pub fn as_str(self) -> &'static str {
        match self {
            IntervalKind::Resampling => "resampling",
            IntervalKind::Jackknife => "jackknife",
            IntervalKind::Parametric => "parametric",
            IntervalKind::NeLowHigh => "ne_low/ne_high",
        }
    }
}

/// `ne-ld` interval columns, most trusted first.
const LD_INTERVALS: [(&str, IntervalKind); 3] = [
    ("ne_resample", IntervalKind::Resampling),
    ("ne_jack", IntervalKind::Jackknife),
    ("ne_param", IntervalKind::Parametric),
];

/// Why an `ld` estimate has its criterion.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CriterionReason {
    /// The preference named it (`ld:0.05`).
    Preferred,
    /// The sample-size rule chose it (`ld`).
    SampleSizeRule,
    /// The rule asked for this criterion but the step did not estimate it for the group; the
    /// group's first row with an estimate was used.
    RuleCriterionMissing(LdCriterion),
    /// No row of the group gives a sample size `s`; the Pcrit-0.02 row (else the first row with an
    /// estimate) was used.
    SampleSizeUnknown,
}

/// The estimate that represents a population in a year.
#[derive(Debug, Clone, PartialEq)]
pub struct RepresentativeNe {
    /// The kind of step.
    pub kind: NeKind,
    /// The id of the step whose row was read.
    pub step_id: String,
    /// The point estimate (`+∞` allowed).
    pub ne: f64,
    /// Lower bound of the 95% interval (`+∞` allowed), when there is a complete interval.
    pub low: Option<f64>,
    /// Upper bound of the 95% interval (`+∞` allowed), when there is a complete interval.
    pub high: Option<f64>,
    /// The columns the interval came from.
    pub interval: Option<IntervalKind>,
    /// The sampling year the estimate refers to (`year_end` for a temporal estimate).
    pub year: i32,
    /// The first sampling year of a temporal estimate.
    pub year_start: Option<i32>,
    /// The rare-allele criterion of an `ld` estimate.
    pub criterion: Option<LdCriterion>,
    /// Why the `ld` estimate has that criterion.
    pub criterion_reason: Option<CriterionReason>,
    /// The harmonic-mean sample size `s` of the `ld` row used.
    pub samples: Option<f64>,
    /// The sample size the `ld` rule decided by (see the module doc), when the rule decided.
    pub rule_samples: Option<f64>,
}

impl RepresentativeNe {
    /// The source as a preference entry names it, with the criterion used: `ld:0.02`,
    /// `ld:singletons`, `temporal`, `hetx`.
    pub fn method(&self) -> String {
        match (self.kind, self.criterion) {
            (NeKind::Ld, Some(c)) => format!("ld:{}", c.spelling()),
            (NeKind::Ld, None) => "ld".into(),
            (NeKind::Temporal, _) => "temporal".into(),
            (NeKind::Hetx, _) => "hetx".into(),
        }
    }

    /// Both bounds, when there is a complete interval.
    pub fn bounds(&self) -> Option<(f64, f64)> {
        Some((self.low?, self.high?))
    }

    /// False when the lower bound is `+∞`: the interval is ∞–∞ and the data say nothing about
    /// the size (neither that it is small nor that it is large).
    pub fn is_estimable(&self) -> bool {
        !self.low.is_some_and(|low| low == f64::INFINITY)
    }
}

/// The estimate that represents `population` in `year`: the first source in `preference` with
/// an estimate, read from the last earlier step of its kind that ran (rules in the module doc).
/// `earlier` may be a step's `StepContext::earlier`, the steps of `results.json`, or a single
/// result (`std::slice::from_ref`).
pub fn representative_ne(
    earlier: &[StepResult],
    population: &str,
    year: i32,
    preference: &[NeSource],
) -> Option<RepresentativeNe> {
    preference.iter().find_map(|source| {
        let result = earlier.iter().rev().find(|r| r.uses == source.uses() && r.status == StepStatus::Ok)?;
        let table = result.tables.get(ne_steps::ESTIMATES)?;
        let rows = table.named_rows().filter(|r| r.text(ne_columns::POPULATION) == Some(population));
        match source {
            NeSource::Ld(choice) => {
                let group: Vec<TableRow<'_>> = rows.filter(|r| r.year(ne_columns::YEAR) == Some(year)).collect();
                from_ld(&group, *choice, &result.id, year)
            }
            NeSource::Temporal => from_temporal(rows, &result.id, year),
            NeSource::Hetx => {
                let row = rows.into_iter().find(|r| r.year(ne_columns::YEAR) == Some(year))?;
                from_row(&row, NeKind::Hetx, ne_columns::NE, &result.id, year)
            }
        }
    })
}

/// The (population, year the estimate refers to) pairs of an Ne step's `estimates`, in table
/// order without repeats: `year` for `ne-ld` and `ne-hetx`, `year_end` for `ne-temporal`.
pub fn estimated_groups(result: &StepResult) -> Vec<(String, i32)> {
    let year_column = if result.uses == ne_steps::NE_TEMPORAL { ne_columns::YEAR_END } else { ne_columns::YEAR };
    let Some(table) = result.tables.get(ne_steps::ESTIMATES) else { return Vec::new() };
    let mut groups: Vec<(String, i32)> = Vec::new();
    for row in table.named_rows() {
        let (Some(population), Some(year)) = (row.text(ne_columns::POPULATION), row.year(year_column)) else {
            continue;
        };
        if !groups.iter().any(|(p, y)| p == population && *y == year) {
            groups.push((population.to_string(), year));
        }
    }
    groups
}

fn has_estimate(row: &TableRow<'_>) -> bool {
    row.number(ne_columns::NE).is_some()
}

fn criterion_row<'t>(group: &[TableRow<'t>], criterion: LdCriterion) -> Option<TableRow<'t>> {
    group.iter().find(|r| r.cell(ne_columns::PCRIT).is_some_and(|c| criterion.matches(c)) && has_estimate(r)).copied()
}

/// The sample size the rule decides by: the `s` of the Pcrit-0.02 row, else of the
/// no-singletons row, else of the group's first row that has one.
fn rule_sample_size(group: &[TableRow<'_>]) -> Option<f64> {
    let of = |criterion: LdCriterion| {
        group
            .iter()
            .filter(|r| r.cell(ne_columns::PCRIT).is_some_and(|c| criterion.matches(c)))
            .find_map(|r| r.number(ne_columns::S))
    };
    of(LdCriterion::Pcrit(LARGE_SAMPLE_PCRIT))
        .or_else(|| of(LdCriterion::NoSingletons))
        .or_else(|| group.iter().find_map(|r| r.number(ne_columns::S)))
}

fn from_ld(group: &[TableRow<'_>], choice: LdChoice, step_id: &str, year: i32) -> Option<RepresentativeNe> {
    let first_with_estimate = || group.iter().find(|r| has_estimate(r)).copied();
    let (row, reason, rule_samples) = match choice {
        LdChoice::Fixed(criterion) => (criterion_row(group, criterion)?, CriterionReason::Preferred, None),
        LdChoice::BySampleSize => match rule_sample_size(group) {
            Some(s) => {
                let wanted = LdCriterion::for_sample_size(s);
                match criterion_row(group, wanted) {
                    Some(row) => (row, CriterionReason::SampleSizeRule, Some(s)),
                    None => (first_with_estimate()?, CriterionReason::RuleCriterionMissing(wanted), Some(s)),
                }
            }
            None => {
                let row = criterion_row(group, LdCriterion::Pcrit(LARGE_SAMPLE_PCRIT)).or_else(first_with_estimate)?;
                (row, CriterionReason::SampleSizeUnknown, None)
            }
        },
    };
    let interval = LD_INTERVALS.iter().find_map(|(prefix, kind)| Some((row.interval(prefix)?, *kind)));
    Some(RepresentativeNe {
        kind: NeKind::Ld,
        step_id: step_id.into(),
        ne: row.number(ne_columns::NE)?,
        low: interval.map(|i| i.0.0),
        high: interval.map(|i| i.0.1),
        interval: interval.map(|i| i.1),
        year,
        year_start: None,
        criterion: row.cell(ne_columns::PCRIT).and_then(LdCriterion::of_cell),
        criterion_reason: Some(reason),
        samples: row.number(ne_columns::S),
        rule_samples,
    })
}

fn from_temporal<'t>(rows: impl Iterator<Item = TableRow<'t>>, step_id: &str, year: i32) -> Option<RepresentativeNe> {
    // The latest (year_end, year_start) not after `year`; a tie keeps the first row.
    let mut best: Option<(i32, i32, TableRow<'t>)> = None;
    for row in rows.filter(|r| r.number(ne_columns::NE_FS).is_some()) {
        let (Some(end), Some(start)) = (row.year(ne_columns::YEAR_END), row.year(ne_columns::YEAR_START)) else {
            continue;
        };
        if end <= year && best.as_ref().is_none_or(|(e, s, _)| (end, start) > (*e, *s)) {
            best = Some((end, start, row));
        }
    }
    let (end, start, row) = best?;
    let mut chosen = from_row(&row, NeKind::Temporal, ne_columns::NE_FS, step_id, end)?;
    chosen.year_start = Some(start);
    Some(chosen)
}

fn from_row(row: &TableRow<'_>, kind: NeKind, column: &str, step_id: &str, year: i32) -> Option<RepresentativeNe> {
    let interval = row.interval("ne");
    Some(RepresentativeNe {
        kind,
        step_id: step_id.into(),
        ne: row.number(column)?,
        low: interval.map(|i| i.0),
        high: interval.map(|i| i.1),
        interval: interval.map(|_| IntervalKind::NeLowHigh),
        year,
        year_start: None,
        criterion: None,
        criterion_reason: None,
        samples: None,
        rule_samples: None,
    })
}

#[cfg(test)]
mod tests;
