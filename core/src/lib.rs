//! # popgauge
//!
//! The `popgauge` command line: [`cli`] (the commands), [`pipeline`] (all of one case: read,
//! run the steps, typeset, write the output folder with its provenance record), [`audit`]
//! (re-running a case from its record, for `verify`) and [`planning`] (sizing a sampling
//! design by simulation). The work itself is in two crates re-exported here:
//! `popgauge-engine` (recipe, readers, steps, results, provenance; no typesetting) and
//! `popgauge-report` (the document), so `popgauge::recipe`, `popgauge::report` and the other
//! modules below keep one path for users of the library.
//!
//! ```no_run
//! use popgauge::pipeline::{run_case, RunOptions};
//! use popgauge::progress::Silent;
//!
//! let options = RunOptions { out: None, force: false, allow_outside: false, operator: None, trust: Default::default() };
//! let summary = run_case(std::path::Path::new("demo-case"), &options, &mut Silent)?;
//! println!("{} steps", summary.results.steps.len());
//! # Ok::<(), popgauge::pipeline::RunError>(())
//! ```
#![warn(missing_docs)]

pub mod audit;
pub mod cli;
pub mod pipeline;
pub mod planning;
pub mod portfolio;

pub use popgauge_engine::{
    data, dates, engine, hash, host, interrupt, output, pretty, progress, provenance, recipe, results, schemas, source,
};
pub use popgauge_report as report;
