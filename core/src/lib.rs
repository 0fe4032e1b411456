//! # popgauge
//!
//! The core of popgauge: it reads an assessment recipe (`case.toml`) and the genotype data it
//! names, runs the recipe's steps (each a [`popgauge_abi::Step`]) in order, and writes
//! `results.json`, one CSV per result table and a provenance record into an output folder,
//! atomically.
//!
//! Principal parts: [`recipe`] (strict parsing and resolution), [`data`] (readers into a
//! [`popgauge_abi::GenotypeMatrix`]), [`engine`] (running steps), [`provenance`] (hashes and
//! the record), [`host`] (external plugin libraries), [`output`] (atomic folder writing), [`pretty`] (the layout of the JSON files), [`pipeline`] (all of it for one case) and
//! [`cli`] (the command line).
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

pub mod cli;
pub mod data;
pub mod dates;
pub mod engine;
pub mod host;
pub mod interrupt;
pub mod output;
pub mod pipeline;
pub mod planning;
pub mod pretty;
pub mod progress;
pub mod provenance;
pub mod recipe;
pub mod report;
pub mod results;
pub mod schemas;
pub mod source;
