//! Acceptance tests: the real `popgauge` binary run on case folders, as a user would.
//!
//! One binary, one module per concern. Fixtures live in `tests/fixtures/<name>/`; the harness
//! copies one into a temporary folder, runs the binary and compares stdout/stderr with paths
//! normalised.

mod bad_inputs;
mod check;
mod cli;
mod map;
mod plan;
mod plugins;
mod portfolio;
mod report;
mod run;
mod schemas;
mod support;
mod vcf;
mod verify;
