//! # popgauge-engine
//!
//! Everything popgauge does to one case short of typesetting: it reads an assessment recipe
//! (`case.toml`) and the genotype data it names, runs the recipe's steps (each a
//! [`popgauge_abi::Step`]) in order, and assembles `results.json`, one CSV per result table and
//! a provenance record. The document is made from these by `popgauge-report`; the command line,
//! the pipeline of one case and the audit are in `popgauge`. This crate does not depend on the
//! typesetting stack, so it builds and tests without it.
//!
//! Principal parts: [`recipe`] (strict parsing and resolution), [`data`] (readers into a
//! [`popgauge_abi::GenotypeMatrix`]), [`engine`] (running steps), [`results`] (the results
//! document), [`hash`] (SHA-256 and seeds), [`provenance`] (the record), [`host`] (external
//! plugin libraries), [`output`] (atomic folder writing) and [`pretty`] (the layout of the JSON
//! files).
#![warn(missing_docs)]

pub mod data;
pub mod dates;
pub mod engine;
pub mod hash;
pub mod host;
pub mod interrupt;
pub mod output;
pub mod pretty;
pub mod progress;
pub mod provenance;
pub mod recipe;
pub mod results;
pub mod schemas;
pub mod source;
