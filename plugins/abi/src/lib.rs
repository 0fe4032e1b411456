//! # popgauge-abi
//!
//! The contract between the popgauge engine and every step it runs, built-in or external.
//! A step is a type implementing [`Step`]: it publishes a [`Descriptor`] (its `uses` name,
//! version and typed parameters with defaults) and, given a [`StepContext`] (a read-only
//! [`GenotypeView`], its resolved parameters, a [`Seed`] and the results of earlier steps),
//! returns a [`StepOutput`] of tables, findings, citations and an optional [`Filter`].
//!
//! Principal types:
//! - [`GenotypeMatrix`] owns the samples × loci genotype codes (two allele codes per cell,
//!   code 0 = untyped); [`GenotypeView`] is a zero-copy subset of it (the samples and loci
//!   still in play after earlier filters).
//! - [`PackedGenotypes`] packs the loci of a view with at most two alleles into bit planes and
//!   counts genotypes of a [`SampleSet`] by popcount (SDK side only; not part of the C ABI).
//! - [`Table`] and [`Cell`] hold results exactly as they reach `results.json` and CSV;
//!   [`format_number`] is the one number formatter.
//! - [`TableRow`] reads one row of an earlier step's table by column name
//!   ([`Table::named_rows`]).
//! - [`representative_ne`] decides which Ne estimate represents a population in a year, from
//!   the earlier results and a preference list of [`NeSource`]s (one rule for every reader;
//!   column names of the Ne tables in [`ne_columns`]).
//! - [`Finding`] is a data-quality or interpretation note with a [`FindingLevel`].
//! - [`resampling`] holds the statistics the built-in steps share with plugins: the seeded
//!   random stream of a step ([`resampling::rng`]), the bootstrap over loci and its percentile
//!   interval, the delete-one jackknife, the median and quantiles.
//! - [`ffi`] is the versioned C ABI of external step libraries (`popgauge_plugin.h` mirrors
//!   it); [`sdk`] and [`export_step!`] turn a `Step` implementation into such a library.
//!
//! ```
//! use popgauge_abi::{Descriptor, ParamKind, ParamSpec, Step, StepContext, StepError, StepOutput, Table, Cell};
//!
//! struct CountSamples;
//! impl Step for CountSamples {
//!     fn descriptor(&self) -> Descriptor {
//!         Descriptor::new("count-samples", "0.1.0", "Counts samples per group")
//!     }
//!     fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
//!         let mut table = Table::new(&["population", "year", "n"]);
//!         for group in ctx.view.groups() {
//!             table.push_row(vec![
//!                 Cell::text(&group.population),
//!                 Cell::Int(group.year.into()),
//!                 Cell::Int(group.samples.len() as i64),
//!             ])?;
//!         }
//!         let mut output = StepOutput::default();
//!         output.tables.insert("counts".into(), table);
//!         Ok(output)
//!     }
//! }
//! ```
#![warn(missing_docs)]

pub mod contract;
pub mod ffi;
mod matrix;
mod number;
mod output;
mod packed;
mod params;
pub mod representative;
pub mod resampling;
pub mod sdk;
mod step;
mod suggest;
mod table_row;

pub use matrix::{
    AlleleCode, AlleleCounts, GenotypeMatrix, GenotypeView, Group, LocusIdx, LocusMeta, MatrixError, SampleIdx,
    SampleMeta,
};
pub use number::format_number;
pub use output::{Cell, Exclusion, Filter, Finding, FindingLevel, StepOutput, Table, TableError, Where};
pub use packed::{GenotypeCounts, PackedGenotypes, PackedLocus, SampleBits, SampleSet};
pub use params::{Descriptor, ParamError, ParamKind, ParamSpec, Params};
pub use representative::{
    CriterionReason, IntervalKind, LdChoice, LdCriterion, NeKind, NeSource, NeSourceError, RepresentativeNe,
    estimated_groups, ne_columns, ne_steps, representative_ne,
};
pub use step::{
    AssessmentInfo, Cohorts, PopulationInfo, SamplingInfo, Seed, Step, StepContext, StepError, StepResult, StepStatus,
};
pub use suggest::did_you_mean;
pub use table_row::TableRow;
